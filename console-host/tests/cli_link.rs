//! `mwctl run`, `mwctl serve --pty` and the `--link` errors, through the binary.
//! Expectations: docs/PROTOCOL.md (replies) and the README's promise of one-line
//! errors with exit status 2.

use std::process::Command;

mod common;

fn mwctl() -> Command {
    Command::new(env!("CARGO_BIN_EXE_mwctl"))
}

fn script(name: &str, text: &str) -> std::path::PathBuf {
    let p = std::env::temp_dir().join(format!("mwctl-cli-link-{}-{name}.txt", std::process::id()));
    std::fs::write(&p, text).expect("script written");
    p
}

const SCRIPT: &str = "# invented scenario: Cu(111) at 120 eV\nhello\n\nset crystal=cu face=111 energy=120 tilt=10\naim beam=1,0\n";

#[test]
fn run_echoes_every_request_with_its_reply_on_sim_and_pty() {
    let p = script("ok", SCRIPT);
    let mut outs = Vec::new();
    for link in ["sim", "pty"] {
        let o = mwctl()
            .args(["run", "--link", link])
            .arg(&p)
            .output()
            .expect("runs");
        assert!(
            o.status.success(),
            "{link}: {}",
            String::from_utf8_lossy(&o.stderr)
        );
        let text = String::from_utf8(o.stdout).expect("utf-8");
        let lines: Vec<&str> = text.lines().collect();
        assert_eq!(lines[0], "> hello", "{link}");
        assert!(
            lines[1].starts_with("< ok name=matterwave "),
            "{link}: {}",
            lines[1]
        );
        assert_eq!(lines[2], "> set crystal=cu face=111 energy=120 tilt=10");
        assert_eq!(lines[3], "< ok");
        assert_eq!(lines[4], "> aim beam=1,0");
        assert!(
            lines[5].starts_with("< - sol=0 arm="),
            "{link}: {}",
            lines[5]
        );
        assert!(
            lines.last().expect("lines").starts_with("< ok count="),
            "{link}"
        );
        outs.push(text);
    }
    assert_eq!(
        outs[0], outs[1],
        "the pty link answers as the in-process simulator"
    );
}

#[test]
fn run_stops_at_the_first_err_unless_keep_going() {
    let p = script("err", "hello\nfrobnicate\nstatus\n");
    let o = mwctl().args(["run"]).arg(&p).output().expect("runs");
    assert_eq!(o.status.code(), Some(2));
    let text = String::from_utf8(o.stdout).expect("utf-8");
    assert!(text.contains("< err 403"), "{text}");
    assert!(!text.contains("> status"), "went on after err: {text}");
    let err = String::from_utf8(o.stderr).expect("utf-8");
    assert_eq!(
        err.trim(),
        "mwctl: error: run: 1 of 2 requests answered err"
    );
    let o = mwctl()
        .args(["run", "--keep-going"])
        .arg(&p)
        .output()
        .expect("runs");
    assert_eq!(o.status.code(), Some(2));
    let text = String::from_utf8(o.stdout).expect("utf-8");
    assert!(text.contains("> status\n< ok enabled=0"), "{text}");
}

#[test]
fn a_missing_port_and_a_file_that_is_no_terminal_are_one_line_errors() {
    let p = script("hello", "hello\n");
    let not_tty = script("plain", "not a terminal\n");
    for (link, want) in [
        (
            "serial:/dev/mwctl-no-such-port".to_string(),
            "no such file or directory",
        ),
        (
            format!("serial:{}", not_tty.display()),
            "not a terminal device",
        ),
        ("serial:/dev/null@12".to_string(), "baud rate \"12\""),
        (
            "carrier-pigeon".to_string(),
            "unknown link; accepted: sim, pty",
        ),
    ] {
        let o = mwctl()
            .args(["run", "--link", &link])
            .arg(&p)
            .output()
            .expect("runs");
        assert_eq!(o.status.code(), Some(2), "{link}");
        let err = String::from_utf8(o.stderr).expect("utf-8");
        assert_eq!(err.lines().count(), 1, "{link}: {err}");
        assert!(err.starts_with("mwctl: error: --link "), "{link}: {err}");
        assert!(err.contains(want), "{link}: {err}");
    }
}

#[test]
fn serve_pty_serves_any_serial_client() {
    let server = common::serve_pty(&[]);
    let path = server.link.trim_start_matches("serial:").to_string();
    let p = script("serve", SCRIPT);
    // Two clients one after the other: the device keeps its state between them.
    let o = mwctl()
        .args(["run", "--link", &format!("serial:{path}@115200")])
        .arg(&p)
        .output()
        .expect("client runs");
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let o = mwctl()
        .args(["run", "--link", &format!("serial:{path}")])
        .arg(script("serve2", "get tilt\n"))
        .output()
        .expect("second client runs");
    let text = String::from_utf8(o.stdout).expect("utf-8");
    assert!(text.contains("< ok tilt=10"), "{text}");
    drop(server);
}

const IDEMPOTENT: &str = "set crystal=pt face=111 energy=140 tilt=8\nbeams\naim beam=1,0\nget tilt\nset crystal=w face=110 energy=85 tilt=4\nbeams\nplan kind=track from=60 to=160 step=20\n";

#[test]
fn a_faulty_line_loses_and_duplicates_nothing() {
    let p = script("faulty", IDEMPOTENT);
    let clean = mwctl().args(["run"]).arg(&p).output().expect("runs");
    assert!(clean.status.success());
    let server = common::serve_pty(&[
        "--fault",
        "flip:20000",
        "--fault",
        "drop:300",
        "--fault",
        "garbage:200",
        "--fault",
        "silent:8",
    ]);
    let o = mwctl()
        .args(["run", "--link", &server.link])
        .arg(&p)
        .output()
        .expect("client runs");
    drop(server);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert_eq!(
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&clean.stdout),
        "every reply, once, as on a clean line"
    );
}

#[test]
fn a_controller_that_restarts_mid_session_is_reported() {
    let p = script("restart", IDEMPOTENT);
    let server = common::serve_pty(&["--fault", "reset:5"]);
    let o = mwctl()
        .args(["run", "--link", &server.link])
        .arg(&p)
        .output()
        .expect("client runs");
    drop(server);
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(err.lines().count(), 1, "{err}");
    assert!(
        err.contains("the controller restarted during the session"),
        "{err}"
    );
    // Nothing the restarted controller said from factory settings was taken for a
    // reply to the script.
    let out = String::from_utf8_lossy(&o.stdout);
    assert!(!out.contains("crystal=cu"), "{out}");
}

#[test]
fn a_bad_fault_option_says_what_is_accepted() {
    let o = mwctl()
        .args(["serve", "--pty", "--for", "1", "--fault", "melt:3"])
        .output()
        .expect("runs");
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.contains("--fault melt:3: give KIND:N") && err.contains("silent"),
        "{err}"
    );
}
