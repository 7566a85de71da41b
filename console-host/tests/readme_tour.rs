//! The README's Tour runs as written: every `mwctl` line of its `sh` block, from the
//! repository root, exits 0 (the interactive `mwctl talk` line gets an empty stdin).

use std::path::Path;
use std::process::{Command, Stdio};

const README: &str = include_str!("../../README.md");

/// The Tour's command lines: continuation lines joined, comments after `  #` cut.
fn tour_lines() -> Vec<String> {
    let tour = README.split("## Tour").nth(1).expect("README has a Tour");
    let block = tour
        .split("```sh")
        .nth(1)
        .and_then(|b| b.split("```").next())
        .expect("the Tour has an sh block");
    let mut lines = Vec::new();
    let mut cur = String::new();
    for raw in block.lines() {
        let l = raw.trim();
        if let Some(head) = l.strip_suffix('\\') {
            cur.push_str(head);
            cur.push(' ');
            continue;
        }
        cur.push_str(l);
        let line = match cur.find("  #") {
            Some(i) => cur[..i].trim().to_string(),
            None => cur.trim().to_string(),
        };
        if !line.is_empty() {
            lines.push(line);
        }
        cur.clear();
    }
    lines
}

#[test]
fn every_tour_line_runs() {
    let bin = Path::new(env!("CARGO_BIN_EXE_mwctl"));
    let dir = bin.parent().expect("binary directory");
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("..");
    let path = format!(
        "{}:{}",
        dir.display(),
        std::env::var("PATH").unwrap_or_default()
    );
    let lines = tour_lines();
    assert!(lines.len() >= 15, "{lines:?}");
    for line in &lines {
        assert!(line.contains("mwctl"), "not an mwctl line: {line}");
        let out = Command::new("sh")
            .arg("-c")
            .arg(line)
            .current_dir(&root)
            .env("PATH", &path)
            .stdin(Stdio::null())
            .output()
            .expect("sh runs");
        assert!(
            out.status.success(),
            "{line}: exit {:?}\n{}",
            out.status.code(),
            String::from_utf8_lossy(&out.stderr)
        );
        // A session with nothing to say (empty stdin) answers nothing.
        if line != "mwctl talk" {
            assert!(!out.stdout.is_empty(), "{line}: no output");
        }
    }
}
