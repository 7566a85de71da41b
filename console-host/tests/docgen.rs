//! `mwctl completions SHELL` and `mwctl man`: the generated script and page cover every
//! command of the clap definitions, and any `--format` is refused with one line.
//! The roff checks follow man(7)'s and groff(7)'s request syntax (from memory): a
//! control line starts with `.`, `.TH` is the title line, `\-` is a hyphen, `\fB`/`\fR`
//! switch fonts.

use clap::CommandFactory;
use std::path::Path;
use std::process::Command;

fn mwctl(args: &[&str]) -> (i32, String, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_mwctl"))
        .args(args)
        .output()
        .unwrap();
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

/// Every command path of the definitions: ("calc", ["calc"]), ("aim", ["calc", "aim"]) …
fn command_paths() -> Vec<Vec<String>> {
    fn walk(c: &clap::Command, path: Vec<String>, out: &mut Vec<Vec<String>>) {
        for s in c.get_subcommands().filter(|s| s.get_name() != "help") {
            let mut p = path.clone();
            p.push(s.get_name().to_string());
            out.push(p.clone());
            walk(s, p, out);
        }
    }
    let mut out = Vec::new();
    walk(
        &matterwave_console::cli::Cli::command(),
        Vec::new(),
        &mut out,
    );
    out
}

#[test]
fn bash_completion_mentions_every_subcommand() {
    let paths = command_paths();
    assert!(paths.len() >= 25, "{paths:?}");
    let (code, script, err) = mwctl(&["completions", "bash"]);
    assert_eq!(code, 0, "{err}");
    assert!(
        script.contains("complete -F _mwctl"),
        "not a bash completion script"
    );
    for p in &paths {
        let name = p.last().unwrap();
        // Each command is offered as a word in some `opts="…"` list of its parent.
        let offered = script.lines().any(|l| {
            l.trim_start().starts_with("opts=\"") && l.split(['"', ' ']).any(|w| w == name)
        });
        assert!(offered, "bash completion never offers `{}`", p.join(" "));
    }
    // And the values of an enum option: the shells of `completions` itself.
    assert!(script.contains("bash elvish fish powershell zsh"));
}

#[test]
fn every_shell_gets_a_script() {
    for shell in ["bash", "zsh", "fish", "elvish", "powershell"] {
        let (code, script, err) = mwctl(&["completions", shell]);
        assert_eq!(code, 0, "{shell}: {err}");
        for name in ["calc", "completions", "talk"] {
            assert!(script.contains(name), "{shell}: no `{name}`");
        }
    }
    let (code, _, err) = mwctl(&["completions", "tcsh"]);
    assert_eq!(code, 2);
    assert!(err.contains("bash, elvish, fish, powershell, zsh"), "{err}");
}

/// The words of a roff page's text: control lines' arguments and text lines, with the
/// escapes the generated page uses undone.
fn roff_text(page: &str) -> String {
    page.lines()
        .map(|l| match l.strip_prefix('.') {
            Some(req) => req.split_once(' ').map(|(_, a)| a).unwrap_or(""),
            None => l,
        })
        .map(|l| {
            l.replace("\\-", "-")
                .replace("\\fB", "")
                .replace("\\fI", "")
                .replace("\\fR", "")
                .replace("\\*(Aq", "'")
        })
        .collect::<Vec<_>>()
        .join("\n")
}

#[test]
fn man_page_is_roff_with_every_subcommand() {
    let (code, page, err) = mwctl(&["man"]);
    assert_eq!(code, 0, "{err}");
    let th = page
        .lines()
        .find(|l| l.starts_with(".TH "))
        .expect("a .TH title line");
    assert!(th.starts_with(".TH mwctl 1"), "{th}");
    for sh in ["NAME", "SYNOPSIS", "OPTIONS", "SUBCOMMANDS"] {
        assert!(
            page.lines().any(|l| l == format!(".SH {sh}")),
            "no .SH {sh}"
        );
    }
    // Every line is a control line, a text line or empty: none starts with a stray `'`
    // (the other control character), which would be read as a request.
    assert!(page.lines().all(|l| !l.starts_with('\'')));
    let text = roff_text(&page);
    for p in command_paths().iter().filter(|p| p.len() == 1) {
        assert!(
            text.contains(&format!("mwctl-{}(1)", p[0])),
            "the man page does not list `{}`",
            p[0]
        );
    }
}

#[test]
fn man_dir_writes_a_page_for_every_command() {
    let dir = std::env::temp_dir().join(format!("mwctl-docgen-man-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    let (code, listing, err) = mwctl(&["man", "--dir", dir.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
    for p in command_paths() {
        let file = dir.join(format!("mwctl-{}.1", p.join("-")));
        assert!(
            listing.lines().any(|l| Path::new(l) == file),
            "{} not listed",
            file.display()
        );
        let page = std::fs::read_to_string(&file).unwrap();
        let th = format!(".TH mwctl-{} 1", p.join("-"));
        assert!(
            page.lines().any(|l| l.starts_with(&th)),
            "{}: no {th}",
            file.display()
        );
    }
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn json_and_csv_are_refused_in_one_line() {
    for args in [
        &["completions", "bash"][..],
        &["man"][..],
        &["man", "--dir", "/nonexistent-unused"][..],
    ] {
        for f in ["json", "csv"] {
            let mut a = args.to_vec();
            a.extend(["--format", f]);
            let (code, out, err) = mwctl(&a);
            assert_eq!(code, 2, "{a:?}");
            assert!(out.is_empty(), "{a:?}: {out}");
            assert_eq!(err.lines().count(), 1, "{a:?}: {err}");
            assert!(
                err.contains(&format!("--format {f}")) && err.contains("leave out --format"),
                "{a:?}: {err}"
            );
        }
    }
    assert!(!Path::new("/nonexistent-unused").exists());
}
