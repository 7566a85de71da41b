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

/// A backup in the format of a controller older than the newest setting keys: the
/// factory backup of this one with `temperature=`, `relax_d12=`, `relax_d23=` and
/// `v0_model=` taken out of its settings lines (the last line, which then holds none,
/// dropped) and the header's count and CRC-32 (IEEE 802.3, the project's
/// `backup::crc32`) written again.
fn old_format(factory: &str) -> String {
    let mut body = String::new();
    let mut lines = 0usize;
    let mut in_body = false;
    for l in factory.lines() {
        if l.starts_with("crc32=") {
            break;
        }
        if l.starts_with("lines=") {
            in_body = true;
            continue;
        }
        if !in_body {
            body.push_str(l);
            body.push('\n');
            continue;
        }
        let kept: Vec<&str> = l
            .split(' ')
            .filter(|t| {
                !["temperature=", "relax_d12=", "relax_d23=", "v0_model="]
                    .iter()
                    .any(|k| t.starts_with(k))
            })
            .collect();
        if kept == ["set"] {
            continue;
        }
        lines += 1;
        body.push_str(&kept.join(" "));
        body.push('\n');
    }
    // The header's count goes before the request lines.
    let (head, req) = body.split_at(body.find("\nset acceptance=20\n").unwrap() + 1);
    let body = format!("{head}lines={lines}\n{req}");
    format!(
        "{body}crc32={:08X}\n",
        matterwave_console::backup::crc32(body.as_bytes())
    )
}

#[test]
fn an_older_backup_without_the_newest_keys_restores_when_they_are_at_factory_values() {
    let s = serve_pty(&[]);
    let factory = tmp("factory-now.mwbackup");
    assert!(mwctl()
        .args(["backup", "--link", &s.link])
        .arg(&factory)
        .status()
        .expect("backup")
        .success());
    let old = old_format(&std::fs::read_to_string(&factory).expect("file"));
    assert!(
        !old.contains("temperature=") && !old.contains("v0_model="),
        "{old}"
    );
    assert!(old.contains("\nset acceptance=1\n"), "{old}");
    let f = tmp("old.mwbackup");
    std::fs::write(&f, &old).expect("file");
    // A configured controller: the file's keys change, the absent ones are at factory.
    let (out, code) = run(&s, "cfg3", CONFIG);
    assert_eq!(code, 0, "{out}");
    let o = mwctl()
        .args(["restore", "--format", "json", "--link", &s.link])
        .arg(&f)
        .output()
        .expect("restore");
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).expect("json");
    assert_eq!(v["read_back_identical"], false, "{v}");
    assert_eq!(
        v["absent_keys"],
        serde_json::json!(["temperature", "relax_d12", "relax_d23", "v0_model"]),
        "{v}"
    );
    let (now, _) = run(&s, "d-old", "dump\n");
    let (_, code) = run(&s, "reset3", "reset\n");
    assert_eq!(code, 0);
    let (fresh, _) = run(&s, "d-fresh", "dump\n");
    assert_eq!(
        now, fresh,
        "the old file restored the factory configuration"
    );
    // The text says which keys took factory values.
    let o = mwctl()
        .args(["restore", "--link", &s.link])
        .arg(&f)
        .output()
        .expect("restore");
    let msg = String::from_utf8_lossy(&o.stdout);
    assert!(
        msg.contains("each at its factory value: temperature=table relax_d12=0 relax_d23=0 v0_model=constant"),
        "{msg}"
    );
    // A missing key the controller holds at another value: refused, put back.
    let (_, code) = run(&s, "relax", "set relax_d12=-5\n");
    assert_eq!(code, 0);
    let before = dump(&s, "before-relax");
    let o = mwctl()
        .args(["restore", "--link", &s.link])
        .arg(&f)
        .output()
        .expect("restore");
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.contains("controller has relax_d12=-5, not its factory value 0")
            && err.contains("put back (read back: identical)"),
        "{err}"
    );
    assert_eq!(dump(&s, "after-relax"), before);
    // Any other difference is still refused: a value that reads back otherwise.
    let (_, code) = run(&s, "relax0", "set relax_d12=0\n");
    assert_eq!(code, 0);
    let t = old.replacen("set energy=100 ", "set energy=100.0 ", 1);
    let body = &t[..t.trim_end().rfind('\n').unwrap() + 1];
    let t = format!(
        "{body}crc32={:08X}\n",
        matterwave_console::backup::crc32(body.as_bytes())
    );
    let g = tmp("old-other.mwbackup");
    std::fs::write(&g, t).expect("file");
    let o = mwctl()
        .args(["restore", "--link", &s.link])
        .arg(&g)
        .output()
        .expect("restore");
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("settings read back differ"), "{err}");
}
