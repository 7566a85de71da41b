//! Helpers shared by the end-to-end tests of `mwctl`.

use std::process::Command;

/// Runs `mwctl` with `args`: exit status (-1 when killed by a signal), stdout, stderr.
pub fn mwctl(args: &[&str]) -> (i32, String, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_mwctl"))
        .args(args)
        .output()
        .expect("mwctl runs");
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

/// Runs `mwctl` with `args` and `--format json`; it must succeed. Returns the JSON.
pub fn json(args: &[&str]) -> serde_json::Value {
    let mut a = args.to_vec();
    a.extend(["--format", "json"]);
    let (code, out, err) = mwctl(&a);
    assert_eq!(code, 0, "{args:?}: {err}");
    serde_json::from_str(&out).unwrap_or_else(|e| panic!("{args:?}: {e}: {out}"))
}
