//! docs/JSON.md is the reference of every `mwctl` JSON output, and this test reads it:
//! every command that prints JSON has a section; every example command of a section is
//! run with `--format json`; its output must parse (one document, or one object per line
//! where the section says JSON Lines) and hold exactly the documented keys, each of the
//! documented type, the `always` ones in every object; and every documented key must
//! appear in at least one example. So the page and the program cannot drift apart.
//! A section that says "Prints no JSON" (a command printing a script or a page for
//! another program) has no keys, and its examples must be refused with `--format json`:
//! status 2, nothing on stdout, one line on stderr naming `--format json`.

use std::collections::{BTreeMap, BTreeSet};
use std::path::Path;
use std::process::Command;

use serde_json::Value;

const DOC: &str = include_str!("../../docs/JSON.md");

#[derive(Debug)]
struct Key {
    ty: String,
    always: bool,
}

#[derive(Debug)]
struct Section {
    examples: Vec<String>,
    lines: bool,
    no_json: bool,
    keys: BTreeMap<String, Key>,
}

fn sections() -> BTreeMap<String, Section> {
    let mut out = BTreeMap::new();
    for part in DOC.split("\n## `").skip(1) {
        let (name, body) = part.split_once('`').expect("a section name in backticks");
        let body = body.split("\n## ").next().unwrap_or(body);
        let examples: Vec<String> = body
            .lines()
            .filter_map(|l| l.strip_prefix("    "))
            .filter(|l| l.starts_with("mwctl ") || l.starts_with("printf "))
            .map(str::to_string)
            .collect();
        let mut keys = BTreeMap::new();
        for row in body.lines().filter(|l| l.starts_with("| `")) {
            let cells: Vec<&str> = row.trim_matches('|').split(" | ").map(str::trim).collect();
            assert!(cells.len() >= 4, "{name}: table row {row:?}");
            let path = cells[0].trim_matches('`').to_string();
            let key = Key {
                ty: cells[1].to_string(),
                always: cells[2] == "always",
            };
            assert!(
                keys.insert(path.clone(), key).is_none(),
                "{name}: {path} twice"
            );
        }
        let s = Section {
            examples,
            lines: body.contains("JSON Lines"),
            no_json: body.contains("Prints no JSON"),
            keys,
        };
        assert!(
            out.insert(name.to_string(), s).is_none(),
            "section {name} twice"
        );
    }
    out
}

/// Whether `v` is of documented type `ty` (alternatives joined by " or "); nested
/// sections (`object as \`mwctl …\``) are checked by the caller.
fn type_ok(v: &Value, ty: &str) -> bool {
    ty.split(" or ").any(|t| one_type_ok(v, t.trim()))
}

fn one_type_ok(v: &Value, t: &str) -> bool {
    if let Some(inner) = t.strip_prefix("array of ") {
        let Some(items) = v.as_array() else {
            return false;
        };
        let elem = match inner {
            "integers" => "integer",
            "numbers" => "number",
            "strings" => "string",
            "arrays of numbers" => "array of numbers",
            x if x.starts_with("objects") => "object",
            x => panic!("unknown array type {x}"),
        };
        return items.iter().all(|i| one_type_ok(i, elem));
    }
    match t.split(' ').next().unwrap_or("") {
        "null" => v.is_null(),
        "string" => v.is_string(),
        "number" => v.is_number(),
        "integer" => v.is_i64() || v.is_u64(),
        "boolean" => v.is_boolean(),
        "object" => v.is_object(),
        x => panic!("unknown type {x}"),
    }
}

/// The section a type refers to: `object as \`mwctl calc beams\``.
fn nested(ty: &str) -> Option<&str> {
    ty.split_once(" as `").map(|(_, r)| r.trim_end_matches('`'))
}

/// Checks one object against a section; records the paths seen.
fn check_object(
    all: &BTreeMap<String, Section>,
    name: &str,
    o: &Value,
    seen: &mut BTreeSet<String>,
    ctx: &str,
) {
    let sec = &all[name];
    let obj = o
        .as_object()
        .unwrap_or_else(|| panic!("{ctx}: not an object: {o}"));
    for (k, v) in obj {
        let key = sec
            .keys
            .get(k)
            .unwrap_or_else(|| panic!("{ctx}: key {k:?} is not in docs/JSON.md `{name}`"));
        assert!(type_ok(v, &key.ty), "{ctx}: {k} = {v} is not {}", key.ty);
        seen.insert(k.clone());
        if let Some(other) = nested(&key.ty) {
            let items: Vec<&Value> = match v.as_array() {
                Some(a) => a.iter().collect(),
                None => vec![v],
            };
            let mut inner = BTreeSet::new();
            for i in items {
                check_object(all, other, i, &mut inner, &format!("{ctx}: {k}"));
            }
            continue;
        }
        let sub_prefix = if v.is_array() {
            format!("{k}[].")
        } else {
            format!("{k}.")
        };
        let subs: Vec<(&String, &Key)> = sec
            .keys
            .iter()
            .filter(|(p, _)| p.starts_with(&sub_prefix))
            .collect();
        if subs.is_empty() {
            continue;
        }
        let items: Vec<&Value> = match v.as_array() {
            Some(a) => a.iter().collect(),
            None => vec![v],
        };
        for item in items {
            let io = item
                .as_object()
                .unwrap_or_else(|| panic!("{ctx}: {k}: {item}"));
            for (c, cv) in io {
                let path = format!("{sub_prefix}{c}");
                let key = sec.keys.get(&path).unwrap_or_else(|| {
                    panic!("{ctx}: key {path:?} is not in docs/JSON.md `{name}`")
                });
                assert!(
                    type_ok(cv, &key.ty),
                    "{ctx}: {path} = {cv} is not {}",
                    key.ty
                );
                seen.insert(path);
            }
            for (p, key) in &subs {
                let c = &p[sub_prefix.len()..];
                assert!(
                    !key.always || io.contains_key(c),
                    "{ctx}: {p} is documented as always present, missing in {item}"
                );
            }
        }
    }
    for (p, key) in &sec.keys {
        if key.always && !p.contains('.') {
            assert!(
                obj.contains_key(p),
                "{ctx}: {p} documented as always present, missing"
            );
        }
    }
}

fn run(example: &str) -> (i32, String, String) {
    let bin = Path::new(env!("CARGO_BIN_EXE_mwctl"));
    let path = format!(
        "{}:{}",
        bin.parent().unwrap().display(),
        std::env::var("PATH").unwrap_or_default()
    );
    let out = Command::new("sh")
        .arg("-c")
        .arg(format!("{example} --format json"))
        .current_dir(Path::new(env!("CARGO_MANIFEST_DIR")).join(".."))
        .env("PATH", path)
        .output()
        .unwrap();
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

#[test]
fn every_documented_example_has_exactly_the_documented_keys() {
    let all = sections();
    for (name, sec) in &all {
        let mut seen = BTreeSet::new();
        if sec.examples.is_empty() {
            // Described only as part of another section (the demo's embedded reports
            // are full sections with their own examples).
            panic!("{name}: no example to run");
        }
        if sec.no_json {
            assert!(
                sec.keys.is_empty(),
                "{name}: prints no JSON, yet lists keys"
            );
            for ex in &sec.examples {
                let (code, out, err) = run(ex);
                assert_eq!(code, 2, "{ex} --format json: not refused: {out}");
                assert!(out.is_empty(), "{ex} --format json printed {out}");
                assert_eq!(err.lines().count(), 1, "{ex} --format json: {err}");
                assert!(err.contains("--format json"), "{ex}: {err}");
            }
            continue;
        }
        for ex in &sec.examples {
            let (code, out, err) = run(ex);
            let objects: Vec<Value> = if sec.lines {
                out.lines()
                    .map(|l| serde_json::from_str(l).unwrap_or_else(|e| panic!("{ex}: {e}: {l}")))
                    .collect()
            } else {
                vec![serde_json::from_str(&out).unwrap_or_else(|e| panic!("{ex}: {e}: {out}"))]
            };
            // talk exits 2 when a request was answered err, and only then.
            let any_err = objects.iter().any(|o| o["kind"] == "err");
            assert_eq!(
                code,
                if sec.lines && any_err { 2 } else { 0 },
                "{ex}: {err}"
            );
            assert!(!objects.is_empty(), "{ex}: no output");
            for o in &objects {
                check_object(&all, name, o, &mut seen, ex);
            }
        }
        for p in sec.keys.keys() {
            assert!(
                seen.contains(p),
                "docs/JSON.md `{name}`: key {p} appears in none of its examples"
            );
        }
    }
}

/// Every command of `mwctl` (every leaf of the command tree, and every kind of `calc
/// fit`) has a section.
#[test]
fn every_command_has_a_section() {
    use clap::CommandFactory;
    let all = sections();
    let root = matterwave_console::cli::Cli::command();
    let mut leaves = Vec::new();
    fn walk(c: &clap::Command, path: String, out: &mut Vec<String>) {
        let subs: Vec<&clap::Command> = c
            .get_subcommands()
            .filter(|s| s.get_name() != "help")
            .collect();
        if subs.is_empty() {
            if path.ends_with("calc fit") {
                let kind = c.get_arguments().find(|a| a.get_id() == "kind").unwrap();
                for v in kind.get_possible_values() {
                    out.push(format!("{path} {}", v.get_name()));
                }
            } else {
                out.push(path.clone());
            }
        }
        for s in subs {
            walk(s, format!("{path} {}", s.get_name()), out);
        }
    }
    walk(&root, "mwctl".into(), &mut leaves);
    assert!(leaves.len() >= 20, "{leaves:?}");
    for l in &leaves {
        assert!(
            all.keys()
                .any(|s| s == l || s.starts_with(&format!("{l} "))),
            "docs/JSON.md has no section for `{l}`"
        );
    }
}
