//! Helpers shared by the end-to-end tests of `mwctl`.
// Each test binary uses some of the shared helpers, not all.
#![allow(dead_code)]

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

/// The unit a key's suffix names (units in names: `energy_ev`, `arm_deg`), as the table
/// writes it in a label or header, longest suffix first; `None` for a key without one.
fn unit_of_key(key: &str) -> Option<&'static str> {
    const UNITS: &[(&str, &str)] = &[
        ("deg_per_ev", "deg/eV"),
        ("deg_per_a", "deg/Å"),
        ("mm_a", "mm·Å"),
        ("inv_a", "1/Å"),
        ("m_s", "m/s"),
        ("deg_s2", "deg/s²"),
        ("deg_s", "deg/s"),
        ("ev", "eV"),
        ("deg", "deg"),
        ("mm", "mm"),
        ("a", "Å"),
        ("s", "s"),
    ];
    UNITS
        .iter()
        .find(|(suffix, _)| key == *suffix || key.ends_with(&format!("_{suffix}")))
        .map(|(_, unit)| *unit)
}

/// A table label or column header must name the unit of its key: `(eV)` for `…_ev`,
/// `/deg` for `…_per_deg` (units in names; the table has units in the headers, README
/// "Every command takes --format").
fn check_unit(key: &str, label: &str, what: &str) {
    if key.ends_with("_per_deg") {
        assert!(label.contains("/deg"), "{what}: label {label:?} of {key}");
    } else if let Some(u) = unit_of_key(key) {
        assert!(
            label.contains(&format!("({u})")),
            "{what}: label {label:?} of {key} lacks ({u})"
        );
    }
}

/// The scalars of a JSON value, flattened (an array's items in order).
fn scalars(v: &serde_json::Value) -> Vec<&serde_json::Value> {
    match v {
        serde_json::Value::Array(items) => items.iter().flat_map(scalars).collect(),
        other => vec![other],
    }
}

/// Whether the text `shown` of one table or CSV cell is JSON value `v`: text and
/// booleans exactly, null as `missing`, arrays item by item (tokens split at spaces,
/// commas, brackets and semicolons), numbers within half a unit of the last decimal
/// the cell prints plus the f32 rounding of the value (a relative 1e-7: the table rounds
/// the f32 itself, JSON shows its shortest decimal) — `exact`: equal as f64, for CSV's
/// shortest round-trip form.
fn cell_is(shown: &str, v: &serde_json::Value, missing: &str, exact: bool) -> bool {
    let number = |s: &str, x: f64| {
        let Ok(t) = s.parse::<f64>() else {
            return false;
        };
        if exact {
            return t == x;
        }
        let decimals = s.split_once('.').map_or(0, |(_, d)| d.len());
        (t - x).abs() <= 0.5 * 10f64.powi(-(decimals as i32)) * (1.0 + 1e-9) + 1e-7 * x.abs()
    };
    match v {
        serde_json::Value::Null => shown == missing,
        serde_json::Value::Bool(b) => shown == b.to_string(),
        serde_json::Value::String(s) => shown == s,
        serde_json::Value::Number(n) => number(shown, n.as_f64().unwrap()),
        serde_json::Value::Array(_) => {
            let items = scalars(v);
            // Items split at commas too, or — for text items that hold commas or spaces
            // of their own (`calc beams --overlayer`'s domain matrices `2,0,0,1` and
            // operations `rotate 90`, joined by `; `) — not.
            let split = |seps: &[char]| -> Vec<&str> {
                shown
                    .split(seps)
                    .map(str::trim)
                    .filter(|t| !t.is_empty())
                    .collect()
            };
            [
                split(&[' ', ',', '[', ']', ';']),
                split(&[' ', '[', ']', ';']),
                split(&[';']),
            ]
            .iter()
            .any(|tokens| {
                tokens.len() == items.len()
                    && tokens
                        .iter()
                        .zip(&items)
                        .all(|(t, x)| cell_is(t, x, missing, exact))
            })
        }
        serde_json::Value::Object(_) => false,
    }
}

/// One CSV line split into fields (RFC 4180 quoting: `"…"` with `""` for a quote).
fn csv_fields(line: &str) -> Vec<String> {
    let mut fields = vec![String::new()];
    let (mut quoted, mut chars) = (false, line.chars().peekable());
    while let Some(c) = chars.next() {
        match (c, quoted) {
            ('"', true) if chars.peek() == Some(&'"') => {
                chars.next();
                fields.last_mut().unwrap().push('"');
            }
            ('"', _) => quoted = !quoted,
            (',', false) => fields.push(String::new()),
            (c, _) => fields.last_mut().unwrap().push(c),
        }
    }
    fields
}

/// A table's list block (header, then rows) split into cells: columns are the spans
/// between runs of two or more positions blank in every line (columns are padded to a
/// common width and joined by two spaces; a cell may be empty).
fn table_block(lines: &[&str]) -> Vec<Vec<String>> {
    let chars: Vec<Vec<char>> = lines.iter().map(|l| l.chars().collect()).collect();
    let width = chars.iter().map(Vec::len).max().unwrap_or(0);
    let blank = |i: usize| chars.iter().all(|l| l.get(i).is_none_or(|c| *c == ' '));
    let mut spans = Vec::new();
    let mut i = 0;
    while i < width {
        while i < width && blank(i) {
            i += 1;
        }
        let start = i;
        // A column ends at two blank positions in a row (or the end of the lines).
        while i < width && !(blank(i) && (i + 1 >= width || blank(i + 1))) {
            i += 1;
        }
        if i > start {
            spans.push((start, i));
        }
    }
    chars
        .iter()
        .map(|l| {
            spans
                .iter()
                .map(|&(a, b)| {
                    let cell: String = l.iter().skip(a).take(b - a).collect();
                    cell.trim().to_string()
                })
                .collect()
        })
        .collect()
}

/// Runs `args` in the three formats and checks that they say the same thing (README:
/// every command takes `--format table|json|csv`; DEVELOPERS.md: one report, three
/// renderings):
///
/// * CSV: the header is the JSON keys — the report's fields as leading context columns,
///   then the list's columns — and every row carries the same context and the JSON row's
///   values, equal as numbers (both are the shortest decimal that reads back to the f32);
///   without a list, one row of the fields;
/// * table: one `label: value` line per JSON field, in order, then the list with one
///   header per column and one row per JSON row; every number within half a unit of
///   the last decimal the table prints, `-` for null; each label and header names the
///   unit of its key.
///
/// Returns the JSON.
pub fn formats_agree(args: &[&str]) -> serde_json::Value {
    type Row = serde_json::Map<String, serde_json::Value>;
    let run = |fmt: &str| {
        let mut a = args.to_vec();
        a.extend(["--format", fmt]);
        let (code, out, err) = mwctl(&a);
        assert_eq!(code, 0, "{a:?}: {err}");
        out
    };
    let v: serde_json::Value = serde_json::from_str(&run("json")).unwrap();
    let obj = v.as_object().unwrap_or_else(|| panic!("{args:?}: {v}"));
    // The lists: arrays of objects, and an empty array in the last place (where a
    // report puts its list); `sweep --points` has two. The other keys are the fields.
    let last = obj.keys().next_back().cloned();
    let is_list = |k: &String, x: &serde_json::Value| {
        x.as_array().is_some_and(|a| {
            a.first().is_some_and(|r| r.is_object()) || (a.is_empty() && Some(k) == last.as_ref())
        })
    };
    let lists: Vec<(&String, Vec<&Row>)> = obj
        .iter()
        .filter(|(k, x)| is_list(k, x))
        .map(|(k, x)| {
            let rows = x.as_array().unwrap().iter().map(|r| r.as_object().unwrap());
            (k, rows.collect())
        })
        .collect();
    let fields: Vec<(&String, &serde_json::Value)> =
        obj.iter().filter(|(k, x)| !is_list(k, x)).collect();
    let columns = |rows: &[&Row]| -> Vec<String> {
        rows.first()
            .map(|r| r.keys().cloned().collect())
            .unwrap_or_default()
    };

    // CSV against JSON: the last list (the sweep points of `sweep --points`).
    let csv = run("csv");
    let mut lines = csv.lines();
    let head = csv_fields(lines.next().unwrap());
    let csv_rows: Vec<Vec<String>> = lines.map(csv_fields).collect();
    match lists.last() {
        Some((_, rows)) => {
            let cols = columns(rows);
            let context: Vec<&(&String, &serde_json::Value)> =
                fields.iter().filter(|(k, _)| !cols.contains(k)).collect();
            let want: Vec<&str> = context
                .iter()
                .map(|(k, _)| k.as_str())
                .chain(cols.iter().map(String::as_str))
                .collect();
            if !rows.is_empty() {
                assert_eq!(head, want, "{args:?}: CSV header");
            }
            assert_eq!(csv_rows.len(), rows.len(), "{args:?}: CSV rows\n{csv}");
            for (cr, jr) in csv_rows.iter().zip(rows) {
                assert_eq!(cr.len(), head.len(), "{args:?}: {cr:?}");
                let values = context.iter().map(|(_, x)| *x).chain(jr.values());
                for ((cell, key), x) in cr.iter().zip(&head).zip(values) {
                    assert!(
                        cell_is(cell, x, "", true),
                        "{args:?}: CSV {key} {cell:?} vs JSON {x}"
                    );
                }
            }
        }
        None => {
            let want: Vec<&str> = fields.iter().map(|(k, _)| k.as_str()).collect();
            assert_eq!(head, want, "{args:?}: CSV header");
            assert_eq!(csv_rows.len(), 1, "{args:?}: {csv}");
            for ((cell, key), (_, x)) in csv_rows[0].iter().zip(&head).zip(&fields) {
                assert!(
                    cell_is(cell, x, "", true),
                    "{args:?}: CSV {key} {cell:?} vs JSON {x}"
                );
            }
        }
    }

    // Table against JSON: the fields, then each list (a later one under its title).
    let table = run("table");
    let mut lines = table.lines();
    for (key, x) in &fields {
        let line = lines
            .next()
            .unwrap_or_else(|| panic!("{args:?}: table ends before {key}"));
        let (label, shown) = line
            .split_once(':')
            .unwrap_or_else(|| panic!("{args:?}: no label in {line:?}"));
        check_unit(key, label, &format!("{args:?}"));
        assert!(
            cell_is(shown.trim(), x, "-", false),
            "{args:?}: table {label:?} = {:?} vs JSON {key} = {x}",
            shown.trim()
        );
    }
    for (i, (lk, rows)) in lists.iter().enumerate() {
        if i > 0 {
            let title = format!("{}:", lk.replace('_', " "));
            assert!(
                lines.any(|l| l == title),
                "{args:?}: no {title:?} in the table"
            );
        } else if !fields.is_empty() {
            assert_eq!(
                lines.next(),
                Some(""),
                "{args:?}: no blank line before {lk}"
            );
        }
        if rows.is_empty() {
            lines.next();
            assert_eq!(lines.next(), Some("(none)"), "{args:?}: empty {lk}");
            continue;
        }
        let block: Vec<&str> = lines.by_ref().take(rows.len() + 1).collect();
        assert_eq!(
            block.len(),
            rows.len() + 1,
            "{args:?}: rows of {lk} missing"
        );
        let cells = table_block(&block);
        let cols = columns(rows);
        assert_eq!(
            cells[0].len(),
            cols.len(),
            "{args:?}: headers {:?}",
            cells[0]
        );
        for (h, k) in cells[0].iter().zip(&cols) {
            check_unit(k, h, &format!("{args:?}"));
        }
        for (row, jr) in cells[1..].iter().zip(rows) {
            for ((cell, k), x) in row.iter().zip(&cols).zip(jr.values()) {
                assert!(
                    cell_is(cell, x, "-", false),
                    "{args:?}: table {k} {cell:?} vs JSON {x}"
                );
            }
        }
    }
    v
}

/// The simulated controller served by `mwctl serve --pty` for the test's lifetime (it
/// keeps its state between clients); killed when dropped.
pub struct Served {
    child: std::process::Child,
    /// `serial:/dev/pts/N`, for `--link`.
    pub link: String,
}

impl Drop for Served {
    fn drop(&mut self) {
        let _ = self.child.kill();
        let _ = self.child.wait();
    }
}

/// Starts `mwctl serve --pty --for 60` with the extra `args` (faults, baud) and reads
/// the device path from its first line.
pub fn serve_pty(args: &[&str]) -> Served {
    use std::io::BufRead;
    let mut child = Command::new(env!("CARGO_BIN_EXE_mwctl"))
        .args(["serve", "--pty", "--for", "60"])
        .args(args)
        .stdout(std::process::Stdio::piped())
        .spawn()
        .expect("serve starts");
    let mut first = String::new();
    std::io::BufReader::new(child.stdout.take().expect("stdout"))
        .read_line(&mut first)
        .expect("device path");
    let path = first.trim();
    assert!(path.starts_with("/dev/"), "{path}");
    Served {
        child,
        link: format!("serial:{path}"),
    }
}
