//! `mwctl backup` / `mwctl restore` against a controller served on a pseudo-terminal
//! (which keeps its state between clients): exact round trip, read back; damaged,
//! foreign or refused files change nothing.

use std::path::PathBuf;
use std::process::Command;

mod common;
use common::{serve_pty, Served};

fn mwctl() -> Command {
    Command::new(env!("CARGO_BIN_EXE_mwctl"))
}

fn tmp(name: &str) -> PathBuf {
    std::env::temp_dir().join(format!("mwctl-backup-{}-{name}", std::process::id()))
}

/// Runs requests on the served controller; returns stdout and the exit code.
fn run(s: &Served, name: &str, script: &str) -> (String, i32) {
    let p = tmp(name);
    std::fs::write(&p, script).expect("script");
    let o = mwctl()
        .args(["run", "--keep-going", "--link", &s.link])
        .arg(&p)
        .output()
        .expect("runs");
    (
        String::from_utf8(o.stdout).expect("utf-8"),
        o.status.code().unwrap_or(-1),
    )
}

fn dump(s: &Served, name: &str) -> String {
    let (out, code) = run(s, name, "dump\n");
    assert_eq!(code, 0, "{out}");
    out
}

const CONFIG: &str = "axis name=arm steps_per_deg=1422.2222 home_offset_deg=-0.35\n\
zone name=arm i=1 from=120 to=128\nset crystal=pt face=111 energy=140 tilt=8 acceptance=0.8\n";

#[test]
fn backup_and_restore_round_trip_exactly() {
    let s = serve_pty(&[]);
    let (out, code) = run(&s, "cfg", CONFIG);
    assert_eq!(code, 0, "{out}");
    let configured = dump(&s, "d1");
    let file = tmp("rt.mwbackup");
    let o = mwctl()
        .args(["backup", "--link", &s.link])
        .arg(&file)
        .output()
        .expect("backup");
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let text = std::fs::read_to_string(&file).expect("file");
    assert!(
        text.contains("\nprotocol=1\n") && text.contains("\ndevice=matterwave\n"),
        "{text}"
    );
    assert!(text
        .trim_end()
        .rsplit('\n')
        .next()
        .unwrap_or("")
        .starts_with("crc32="));
    // Back to factory settings, then restore.
    let (_, code) = run(&s, "reset", "reset\n");
    assert_eq!(code, 0);
    assert_ne!(dump(&s, "d2"), configured);
    let o = mwctl()
        .args(["restore", "--link", &s.link])
        .arg(&file)
        .output()
        .expect("restore");
    let msg = String::from_utf8_lossy(&o.stdout);
    assert!(
        o.status.success(),
        "{msg}{}",
        String::from_utf8_lossy(&o.stderr)
    );
    assert!(msg.contains("read back: identical to the file"), "{msg}");
    assert!(msg.contains("positions now unknown"), "{msg}");
    assert_eq!(dump(&s, "d3"), configured);
}

#[test]
fn damaged_foreign_or_refused_files_change_nothing() {
    let s = serve_pty(&[]);
    let (_, code) = run(&s, "cfg2", CONFIG);
    assert_eq!(code, 0);
    let before = dump(&s, "e1");
    let good = tmp("good.mwbackup");
    assert!(mwctl()
        .args(["backup", "--link", &s.link])
        .arg(&good)
        .status()
        .expect("backup")
        .success());
    let text = std::fs::read_to_string(&good).expect("file");
    let recrc = |t: &str| {
        let body = &t[..t.trim_end().rfind('\n').expect("lines") + 1];
        format!(
            "{body}crc32={:08X}\n",
            matterwave_console::backup::crc32(body.as_bytes())
        )
    };
    let cases = [
        (
            "damaged",
            text.replacen("1422.2222", "1422.2223", 1),
            "the file is damaged",
        ),
        (
            "protocol",
            recrc(&text.replacen("protocol=1", "protocol=7", 1)),
            "speaks protocol 7",
        ),
        (
            "device",
            recrc(&text.replacen("device=matterwave", "device=toaster", 1)),
            "from a \"toaster\" device",
        ),
        (
            "count",
            recrc(&text.replacen("\nlines=", "\nlines=1", 1)),
            "request lines, the file has",
        ),
        // A line the controller refuses, after calibration lines that did run.
        (
            "refused",
            recrc(&text.replacen(
                "zone name=arm i=1 from=120 to=128",
                "zone name=arm i=1 from=120 to=999",
                1,
            )),
            "was refused (err 305",
        ),
    ];
    for (name, t, want) in cases {
        let f = tmp(&format!("{name}.mwbackup"));
        std::fs::write(&f, t).expect("file");
        let o = mwctl()
            .args(["restore", "--link", &s.link])
            .arg(&f)
            .output()
            .expect("restore");
        assert_eq!(o.status.code(), Some(2), "{name}");
        let err = String::from_utf8_lossy(&o.stderr);
        assert_eq!(err.lines().count(), 1, "{name}: {err}");
        assert!(err.contains(want), "{name}: {err}");
        assert_eq!(
            dump(&s, &format!("after-{name}")),
            before,
            "{name} changed the controller"
        );
    }
}

#[test]
fn restore_refuses_while_motion_is_enabled() {
    let s = serve_pty(&[]);
    let good = tmp("m.mwbackup");
    assert!(mwctl()
        .args(["backup", "--link", &s.link])
        .arg(&good)
        .status()
        .expect("backup")
        .success());
    let (_, code) = run(&s, "en", "enable\n");
    assert_eq!(code, 0);
    let o = mwctl()
        .args(["restore", "--link", &s.link])
        .arg(&good)
        .output()
        .expect("restore");
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("send disable"));
}
