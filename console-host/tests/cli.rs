//! End-to-end tests of the `mwctl` binary: every calc command in every format, JSON
//! keys, exit status 2 with one helpful line for bad input, no panics.

mod common;

use common::{formats_agree, json, mwctl};

const COMMANDS: &[&[&str]] = &[
    &["crystals"],
    &[
        "calc",
        "wavelength",
        "--energy",
        "150",
        "--inner-potential",
        "10",
    ],
    &[
        "calc",
        "reflections",
        "--crystal",
        "si",
        "--energy",
        "100000",
        "--max",
        "8",
    ],
    &[
        "calc",
        "rings",
        "--crystal",
        "au",
        "--energy",
        "200000",
        "--screen-distance",
        "500",
    ],
    &[
        "calc",
        "beams",
        "--crystal",
        "cu",
        "--face",
        "111",
        "--energy",
        "120",
        "--tilt",
        "8",
    ],
    &[
        "calc",
        "ivpeaks",
        "--crystal",
        "ni",
        "--face",
        "100",
        "--beam",
        "0,0",
        "--from",
        "20",
        "--to",
        "400",
    ],
];

#[test]
fn every_command_answers_in_every_format() {
    for cmd in COMMANDS {
        for fmt in ["table", "json", "csv"] {
            let mut a = cmd.to_vec();
            a.extend(["--format", fmt]);
            let (code, out, err) = mwctl(&a);
            assert_eq!(code, 0, "{a:?}: {err}");
            assert!(!out.trim().is_empty(), "{a:?} printed nothing");
            if fmt == "csv" {
                let lines: Vec<&str> = out.lines().collect();
                let cols = lines[0].split(',').count();
                assert!(lines.len() >= 2, "{a:?}");
                for l in &lines[1..] {
                    // Quoted fields may contain commas; count only unquoted rows.
                    if !l.contains('"') {
                        assert_eq!(l.split(',').count(), cols, "{a:?}: {l}");
                    }
                }
            }
        }
        formats_agree(cmd);
    }
}

#[test]
fn json_keys_are_stable() {
    let w = json(COMMANDS[1]);
    for k in [
        "energy_ev",
        "wavelength_a",
        "wavelength_nonrel_a",
        "velocity_m_s",
        "inner_wavelength_a",
    ] {
        assert!(w.get(k).is_some(), "wavelength lacks {k}");
    }
    let r = json(COMMANDS[2]);
    for k in ["h", "k", "l", "d_a", "bragg_deg", "multiplicity"] {
        assert!(r["reflections"][0].get(k).is_some(), "reflections lack {k}");
    }
    let r = json(COMMANDS[3]);
    for k in ["h", "k", "l", "d_a", "two_theta_deg", "radius_mm"] {
        assert!(r["rings"][0].get(k).is_some(), "rings lack {k}");
    }
    let b = json(COMMANDS[4]);
    for k in ["h", "k", "row_spacing_a", "exit_deg", "emergence_ev"] {
        assert!(b["beams"][1].get(k).is_some(), "beams lack {k}");
    }
    let p = json(COMMANDS[5]);
    assert!(p["peaks"][0].get("energy_ev").is_some());
    let c = json(COMMANDS[0]);
    assert!(c["crystals"].as_array().is_some_and(|a| a.len() >= 30));
    assert!(c["crystals"][0].get("id").is_some());
    // Every crystal shows its lattice source, from the compiled citation table.
    for row in c["crystals"].as_array().unwrap() {
        let source = row["source"].as_str().unwrap_or_default();
        assert!(!source.trim().is_empty(), "no lattice source: {row}");
    }
}

#[test]
fn reflections_and_rings_come_in_decreasing_d() {
    for cmd in [COMMANDS[2], COMMANDS[3]] {
        let v = json(cmd);
        let key = if cmd[1] == "reflections" {
            "reflections"
        } else {
            "rings"
        };
        let d: Vec<f64> = v[key]
            .as_array()
            .unwrap()
            .iter()
            .map(|r| r["d_a"].as_f64().unwrap())
            .collect();
        assert!(d.windows(2).all(|w| w[0] >= w[1]), "{key}: {d:?}");
    }
}

#[test]
fn work_functions_correct_the_energy() {
    // E = e·V + φ_cathode − φ_sample (beam rules).
    let v = json(&[
        "calc",
        "wavelength",
        "--energy",
        "100",
        "--cathode-work-function",
        "2.5",
        "--sample-work-function",
        "4.5",
    ]);
    assert_eq!(v["nominal_ev"].as_f64(), Some(100.0));
    assert!((v["energy_ev"].as_f64().unwrap() - 98.0).abs() < 1e-4);
}

#[test]
fn bad_input_exits_2_with_one_line() {
    // Each case: the arguments and the whole stderr line after `mwctl: error: ` — the
    // core's code (E1xx bad input, E2xx no physical solution) where the core found the
    // error, none where mwctl's own checks or the argument parser did. `None`: checked
    // below.
    let bad: &[(&[&str], Option<&str>)] = &[
        (&["calc", "wavelength", "--energy", "0"], Some("E102: --energy 0: energy below 1 eV; accepted 1 eV to 300000 eV")),
        (&["calc", "wavelength", "--energy", "-5"], Some("E102: --energy -5: energy below 1 eV; accepted 1 eV to 300000 eV")),
        (&["calc", "wavelength", "--energy", "nan"], Some("invalid value 'nan' for '--energy <EV>': 'nan' is not a finite number; give plain digits such as 100, -2.5 or 1.5e3; --energy <EV>: Nominal beam energy e·V_acc, eV (1 to 300000)")),
        (&["calc", "wavelength", "--energy", "inf"], Some("invalid value 'inf' for '--energy <EV>': 'inf' is not a finite number; give plain digits such as 100, -2.5 or 1.5e3; --energy <EV>: Nominal beam energy e·V_acc, eV (1 to 300000)")),
        // Echoed as typed, not as the f32 infinity it would round to.
        (&["calc", "wavelength", "--energy", "1e39"], Some("invalid value '1e39' for '--energy <EV>': '1e39' is beyond the f32 range (magnitude at most 3.4028235e38), far beyond what any option accepts; --energy <EV>: Nominal beam energy e·V_acc, eV (1 to 300000)")),
        (&["calc", "wavelength", "--energy", "100eV"], Some("invalid value '100eV' for '--energy <EV>': '100eV' is not a number; give plain digits such as 100, -2.5 or 1.5e3, without a unit; --energy <EV>: Nominal beam energy e·V_acc, eV (1 to 300000)")),
        (&["calc", "wavelength", "--energy", "abc"], Some("invalid value 'abc' for '--energy <EV>': 'abc' is not a number; give plain digits such as 100, -2.5 or 1.5e3, without a unit; --energy <EV>: Nominal beam energy e·V_acc, eV (1 to 300000)")),
        (&["calc", "wavelength", "--energy", "400000"], Some("E103: --energy 400000: energy above 300 keV; accepted 1 eV to 300000 eV")),
        (&["calc", "wavelength", "--energy", "100", "--inner-potential", "-3"], Some("E102: --inner-potential -3: inner potential negative; accepted 0 to 100 eV")),
        (&["calc", "wavelength", "--energy", "2", "--sample-work-function", "5"], Some("E104: --energy 2 --sample-work-function 5: kinetic energy at the sample below 1 eV after work-function and offset corrections; raise the gun energy")),
        (&["calc", "reflections", "--crystal", "unobtainium", "--energy", "100"], None),
        (&["calc", "reflections", "--crystal", "cu", "--energy", "100", "--max", "0"], Some("invalid value '0' for '--max <N>': '0' is not a count from 1 to 10000; give a whole number such as 20; --max <N>: Most families to list, 1 to 10000")),
        (&["calc", "reflections", "--crystal", "cu", "--energy", "100", "--max", "-1"], Some("invalid value '-1' for '--max <N>': '-1' is not a count from 1 to 10000; give a whole number such as 20; --max <N>: Most families to list, 1 to 10000")),
        (&["calc", "rings", "--crystal", "cu", "--energy", "1e5", "--screen-distance", "0"], Some("--screen-distance 0: give a distance in mm, above 0 and at most 100000")),
        (&["calc", "beams", "--crystal", "cu", "--face", "11", "--energy", "100"], Some("E116: --face '11': indices must be three integers (four, h k i l, for hexagonal crystals); write e.g. 111, 1-10, 1,1,0 or (1 -1 0)")),
        (&["calc", "beams", "--crystal", "cu", "--face", "000", "--energy", "100"], Some("E110: --face '000': indices (0,0,0) name no plane; write e.g. 111, 1-10, 1,1,0 or (1 -1 0)")),
        (&["calc", "beams", "--crystal", "cu", "--face", "1.5,0,0", "--energy", "100"], Some("E116: --face '1.5,0,0': indices must be three integers (four, h k i l, for hexagonal crystals); write e.g. 111, 1-10, 1,1,0 or (1 -1 0)")),
        (&["calc", "beams", "--crystal", "cu", "--face", "0001", "--energy", "100"], Some("E113: --face '0001': four-index indices only apply to hexagonal crystals; write e.g. 111, 1-10, 1,1,0 or (1 -1 0)")),
        (&["calc", "beams", "--crystal", "zn", "--face", "1,1,1,1", "--energy", "100"], Some("E112: --face '1,1,1,1': four-index (hkil) needs i = -(h+k); write e.g. 111, 1-10, 1,1,0 or (1 -1 0); four-index 0001 or 10-10")),
        (&["calc", "beams", "--crystal", "cu", "--face", "111", "--energy", "100", "--tilt", "95"], Some("--tilt 95: give a finite angle in degrees within ±89.9")),
        (&["calc", "beams", "--crystal", "cu", "--face", "111", "--energy", "100", "--tilt", "nan"], Some("invalid value 'nan' for '--tilt <DEG>': 'nan' is not a finite number; give plain digits such as 100, -2.5 or 1.5e3; --tilt <DEG>: Sample tilt α, degrees, within ±89.9 (0: normal incidence)")),
        (&["calc", "ivpeaks", "--crystal", "cu", "--face", "111", "--beam", "3,0", "--from", "10", "--to", "20"], Some("E201: --beam 3,0: the beam emerges only at 276.17 eV at the sample (276.17 eV nominal), above --to 20: beam is evanescent at this energy and incidence; raise the energy or change the tilt")),
        (&["calc", "ivpeaks", "--crystal", "cu", "--face", "111", "--beam", "x", "--from", "10", "--to", "20"], Some("--beam 'x': give two integers H,K such as 1,0 or -1,1 (compact 10 or -11 also works)")),
        (&["calc", "ivpeaks", "--crystal", "cu", "--face", "111", "--beam", "0,0", "--from", "200", "--to", "20"], Some("--from 200 --to 20: 'from' must be below 'to'")),
        (&["calc", "ivpeaks", "--crystal", "gaas", "--face", "100", "--beam", "0,0", "--from", "20", "--to", "200"], Some("E132: --inner-potential face: the crystal table has no inner potential for gaas (100); give it in eV (`mwctl crystals --crystal gaas` lists the table's values)")),
        (&["calc", "nonsense"], Some("unknown command 'nonsense' for `mwctl calc`: accepted: wavelength, reflections, rings, beams, ivpeaks, steps, screen, aim, track, sweep, view, fit, budget")),
        (&["calc"], Some("`mwctl calc` needs a command: one of wavelength, reflections, rings, beams, ivpeaks, steps, screen, aim, track, sweep, view, fit, budget")),
        (&[], Some("`mwctl` needs a command: one of crystals, calc, demo, rig, plot, safety, talk, run, align, verify, scan, backup, restore, serve, completions, man")),
        (&["calc", "wavelength"], Some("the following required arguments were not provided: --energy <EV>; usage: mwctl calc wavelength --energy <EV>")),
        (&["calc", "wavelength", "--energy", "100", "--bogus"], Some("unexpected argument '--bogus' found; usage: mwctl calc wavelength --energy <EV>")),
        (&["--format", "xml", "crystals"], Some("invalid value 'xml' for '--format <FORMAT>' [possible values: table, json, csv]; --format <FORMAT>: Output format")),
        (&["calc", "wavelength", "--energy"], Some("a value is required for '--energy <EV>' but none was supplied; --energy <EV>: Nominal beam energy e·V_acc, eV (1 to 300000)")),
        (&["calc", "fit", "nonsense"], Some("invalid value 'nonsense' for '<KIND>' [possible values: peak, arm-zero, row-spacing, iv]")),
    ];
    for (args, want) in bad {
        let (code, out, err) = mwctl(args);
        assert_eq!(code, 2, "{args:?}: stdout {out} stderr {err}");
        assert!(out.is_empty(), "{args:?}: stdout {out}");
        assert_eq!(err.lines().count(), 1, "{args:?}: not one line: {err}");
        let line = err.trim_end();
        let msg = line
            .strip_prefix("mwctl: error: ")
            .unwrap_or_else(|| panic!("{args:?}: {line}"));
        match want {
            Some(w) => assert_eq!(msg, *w, "{args:?}"),
            None => {
                // The unknown crystal: E115 and every id the table knows.
                let ids: Vec<&str> = matterwave_core::table::all().iter().map(|c| c.id).collect();
                assert_eq!(
                    msg,
                    format!(
                        "E115: unknown crystal 'unobtainium'; known ids: {}",
                        ids.join(", ")
                    ),
                    "{args:?}"
                );
            }
        }
    }
    // Help and version are no errors: stdout, status 0.
    for a in [&["--help"][..], &["calc", "--help"], &["--version"]] {
        let (code, out, err) = mwctl(a);
        assert_eq!(code, 0, "{a:?}: {err}");
        assert!(err.is_empty() && !out.is_empty(), "{a:?}: {err}");
    }
}

#[test]
fn cautions_are_shown() {
    let (code, out, _) = mwctl(&["safety"]);
    assert_eq!(code, 0);
    assert!(out.contains("not an interlock") && out.contains("X-rays"));
    let (_, help, _) = mwctl(&["--help"]);
    assert!(help.contains("not an interlock"));
}

/// The value after `label` on a `label:   value` line of a table report.
fn labelled(out: &str, label: &str) -> f64 {
    out.lines()
        .find_map(|l| l.strip_prefix(label))
        .and_then(|r| r.trim_start_matches(':').split_whitespace().next())
        .and_then(|v| v.parse().ok())
        .unwrap_or_else(|| panic!("no {label:?} in {out}"))
}

#[test]
fn demo_runs() {
    let dir = std::env::temp_dir().join(format!("mwctl-cli-demo-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    let (code, out, err) = mwctl(&["demo", "--out", dir.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
    // stderr carries only the scan's cautions and its start line.
    assert!(!err.contains("error"), "{err}");
    // The scenario (demo.rs): 95 eV nominal, LaB6 cathode 2.7 eV, Ag(100) 4.64 eV, tilt 6°.
    // At the sample E = 95 + 2.7 − 4.64 = 93.06 eV (beam rules); λ from the f64 formula
    // with CODATA 2018 hc = 12398.419843320 eV·Å, mc² = 510998.95 eV.
    let e = 95.0 + 2.7 - 4.64;
    let lambda = 12_398.419_843_320 / (e * (e + 2.0 * 510_998.95f64)).sqrt();
    assert!(
        (labelled(&out, "energy at sample (eV)") - e).abs() < 1e-3,
        "{out}"
    );
    assert!(
        (labelled(&out, "wavelength (Å)") - lambda).abs() < 2e-6,
        "{out}"
    );
    // Ag(100): square mesh a/√2 with the table's a = 4.0853 Å (CRC Handbook, from
    // memory); the (1,0) beam at tilt 6° leaves at sin θ = sin 6° + λ/|a1| (surface rules).
    let a1 = 4.0853 / 2f64.sqrt();
    assert!((labelled(&out, "|a1| (Å)") - a1).abs() < 1e-4, "{out}");
    let theta = (6f64.to_radians().sin() + lambda / a1).asin().to_degrees();
    let row = out
        .lines()
        .find(|l| l.split_whitespace().take(2).eq(["1", "0"]))
        .unwrap_or_else(|| panic!("no (1,0) beam: {out}"));
    let exit: f64 = row.split_whitespace().nth(3).unwrap().parse().unwrap();
    assert!((exit - theta).abs() < 2e-3, "{row} vs {theta}");
    assert_eq!(labelled(&out, "beams"), 17.0, "{out}");
    // The bench part (demo.rs): the rig loaded, the alignment applied, the scan written,
    // the pictures drawn — each a section naming its command, each file where it says.
    for title in [
        "== alignment on the simulated bench B",
        "== what the alignment found",
        "== an I-V scan following the (1,0) beam",
        "== the alignment: centred peaks",
        "== the pattern at 95 eV",
        "== the scan with the I-V maxima",
    ] {
        assert!(out.contains(title), "no {title:?}: {out}");
    }
    assert!(
        out.contains("both found within 3σ of the truth:  true")
            || out
                .lines()
                .any(|l| l.starts_with("both found within 3σ") && l.ends_with("true")),
        "{out}"
    );
    for f in [
        "bench-b.toml",
        "bench-b-aligned.toml",
        "iv-1-0.csv",
        "pattern-95ev.svg",
    ] {
        assert!(dir.join(f).is_file(), "{f} not written: {out}");
    }
    for f in ["align.png", "pattern-95ev.png", "tracks.png", "iv-1-0.png"] {
        let bytes = std::fs::read(dir.join(f)).unwrap();
        // The PNG signature (ISO/IEC 15948, §5.2).
        assert_eq!(&bytes[..8], b"\x89PNG\r\n\x1a\n", "{f}");
    }
    // The corrected rig copy differs from the input in the arm's home offset only.
    let a = std::fs::read_to_string(dir.join("bench-b.toml")).unwrap();
    let b = std::fs::read_to_string(dir.join("bench-b-aligned.toml")).unwrap();
    let changed: Vec<(&str, &str)> = a.lines().zip(b.lines()).filter(|(x, y)| x != y).collect();
    assert!(
        changed.len() == 1 && changed[0].1.starts_with("home_offset_deg"),
        "{changed:?}"
    );
    // Every scan point measured: 44 to 110 eV nominal in 2 eV steps.
    let csv = std::fs::read_to_string(dir.join("iv-1-0.csv")).unwrap();
    let ok_rows = csv
        .lines()
        .filter(|l| !l.starts_with('#') && l.contains(",ok,"))
        .count();
    assert_eq!(ok_rows, 34, "{csv}");
    assert!(
        csv.lines()
            .last()
            .unwrap()
            .starts_with("# end status=complete"),
        "{csv}"
    );
}

/// Machine output is typed: flags are JSON booleans, lists are arrays (common practice
/// for JSON consumers, no source).
#[test]
fn json_flags_are_booleans_and_lists_are_arrays() {
    let v = json(&[
        "calc",
        "reflections",
        "--crystal",
        "cu",
        "--energy",
        "100",
        "--max",
        "1",
    ]);
    assert_eq!(v["truncated"], serde_json::Value::Bool(true), "{v}");
    let v = json(&[
        "calc",
        "reflections",
        "--crystal",
        "cu",
        "--energy",
        "100",
        "--max",
        "10000",
    ]);
    assert_eq!(v["truncated"], serde_json::Value::Bool(false), "{v}");
    let v = json(&["rig", "show"]);
    let arm = &v["axes"][0];
    assert_eq!(arm["axis"], "arm", "{v}");
    assert_eq!(arm["wrap"], serde_json::Value::Bool(false), "{v}");
    assert_eq!(arm["zones"], serde_json::json!([[-12.0, 12.0]]), "{v}");
    let az = v["axes"]
        .as_array()
        .unwrap()
        .iter()
        .find(|a| a["axis"] == "azimuth")
        .unwrap();
    assert_eq!(az["wrap"], serde_json::Value::Bool(true), "{v}");
    let v = json(&["crystals"]);
    let cu = v["crystals"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["id"] == "cu")
        .unwrap();
    let faces: Vec<&str> = cu["faces"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| f.as_str().unwrap())
        .collect();
    assert!(faces.contains(&"(100)") && faces.contains(&"(111)"), "{cu}");
}

/// A bad gun input is reported against its own option, and the sum names every
/// correction that went into it.
#[test]
fn gun_errors_name_the_option_at_fault() {
    let cases: [(&[&str], &str, &str); 5] = [
        (
            &["--energy", "100", "--sample-work-function=-3"],
            "E102",
            "--sample-work-function -3:",
        ),
        (
            &["--energy", "100", "--cathode-work-function", "50"],
            "E103",
            "--cathode-work-function 50:",
        ),
        (
            &["--energy", "100", "--energy-offset", "1e6"],
            "E103",
            "--energy-offset 1000000:",
        ),
        (
            &["--energy", "0.5"],
            "E102",
            "--energy 0.5: energy below 1 eV",
        ),
        (
            &["--energy", "3", "--sample-work-function", "4.5"],
            "E104",
            "--energy 3 --sample-work-function 4.5:",
        ),
    ];
    for (args, code, text) in cases {
        let mut a = vec!["calc", "wavelength"];
        a.extend_from_slice(args);
        let (rc, _, err) = mwctl(&a);
        assert_eq!(rc, 2, "{a:?}: {err}");
        assert!(
            err.starts_with(&format!("mwctl: error: {code}: {text}")),
            "{a:?}: {err}"
        );
        assert_eq!(err.trim_end().lines().count(), 1, "{a:?}: {err}");
    }
}

/// The mesh directions lie in the face: h·u + k·v + l·w = 0 for both (the Weiss zone
/// law, any crystallography text), for cubic and hexagonal faces (four-index [uvtw]
/// turned back to [UVW] = [u − t, v − t, w]).
#[test]
fn mesh_directions_lie_in_the_face() {
    for (id, face, hkl) in [
        ("cu", "100", [1, 0, 0]),
        ("cu", "111", [1, 1, 1]),
        ("cu", "110", [1, 1, 0]),
        ("w", "110", [1, 1, 0]),
        ("cu", "3,2,1", [3, 2, 1]),
        ("ru", "0001", [0, 0, 1]),
        ("ru", "10-10", [1, 0, 0]),
    ] {
        let v = json(&[
            "calc",
            "beams",
            "--crystal",
            id,
            "--face",
            face,
            "--energy",
            "100",
        ]);
        for key in ["a1_uvw", "a2_uvw"] {
            let d: Vec<i64> = v[key]
                .as_array()
                .unwrap()
                .iter()
                .map(|x| x.as_i64().unwrap())
                .collect();
            let uvw = if d.len() == 4 {
                [d[0] - d[2], d[1] - d[2], d[3]]
            } else {
                [d[0], d[1], d[2]]
            };
            let dot: i64 = uvw.iter().zip(hkl).map(|(a, b)| a * b).sum();
            assert_eq!(dot, 0, "{id} {face} {key} {d:?}");
            assert!(uvw.iter().any(|&x| x != 0), "{id} {face} {key}");
        }
    }
}

/// `--format` is honoured or refused, never ignored: `demo` and `safety` give one JSON
/// document, `talk` one JSON object per reply line; CSV is refused where no table exists.
#[test]
fn format_is_honoured_or_refused() {
    let dir = std::env::temp_dir().join(format!("mwctl-cli-demo-json-{}", std::process::id()));
    let v = json(&["demo", "--out", dir.to_str().unwrap()]);
    for key in [
        "cautions",
        "scenario",
        "beam",
        "beams",
        "iv_peaks",
        "align",
        "recovered",
        "scan",
        "plot_align",
        "plot_pattern",
        "plot_tracks",
        "plot_scan",
        "commands",
        "files",
        "out_dir",
    ] {
        assert!(v.get(key).is_some(), "demo JSON lacks {key}: {v}");
    }
    // Typed: the check is a boolean, counts are integers, the files an array of paths
    // that exist.
    assert_eq!(
        v["recovered"]["within_3_sigma"],
        serde_json::Value::Bool(true),
        "{v}"
    );
    assert_eq!(v["scan"]["measured"].as_i64(), Some(34), "{v}");
    let files = v["files"].as_array().unwrap();
    assert_eq!(files.len(), 8, "{v}");
    assert!(files
        .iter()
        .all(|f| std::path::Path::new(f.as_str().unwrap()).is_file()));
    assert!(
        v["commands"]["align"]
            .as_str()
            .unwrap()
            .starts_with("mwctl "),
        "{v}"
    );
    let v = json(&["safety"]);
    assert!(
        v["cautions"].as_str().unwrap().contains("not an interlock"),
        "{v}"
    );
    for cmd in ["safety", "demo", "talk"] {
        let (code, _, err) = mwctl(&["--format", "csv", cmd]);
        assert_eq!(code, 2, "{cmd}: {err}");
        assert!(
            err.starts_with("mwctl: error:") && err.contains("--format csv"),
            "{cmd}: {err}"
        );
    }
    let mut child = std::process::Command::new(env!("CARGO_BIN_EXE_mwctl"))
        .args(["--format", "json", "talk"])
        .stdin(std::process::Stdio::piped())
        .stdout(std::process::Stdio::piped())
        .spawn()
        .unwrap();
    use std::io::Write as _;
    child
        .stdin
        .take()
        .unwrap()
        .write_all(b"hello\nset tilt=99\n")
        .unwrap();
    let out = child.wait_with_output().unwrap();
    let lines: Vec<serde_json::Value> = String::from_utf8(out.stdout)
        .unwrap()
        .lines()
        .map(|l| serde_json::from_str(l).unwrap())
        .collect();
    assert_eq!(lines.len(), 2, "{lines:?}");
    assert_eq!(lines[0]["kind"], "ok");
    assert_eq!(lines[0]["fields"]["protocol"], 1);
    assert_eq!(lines[1]["kind"], "err");
    assert_eq!(lines[1]["code"], 103);
    assert_eq!(lines[1]["request"], "set tilt=99");
}

/// CSV rows carry what they were computed for: every row of `calc track` starts with the
/// report's fields (crystal, face, beam, tilt, mode, rig, …).
#[test]
fn csv_rows_carry_their_context() {
    let (code, out, err) = mwctl(&[
        "--format",
        "csv",
        "calc",
        "track",
        "--crystal",
        "cu",
        "--face",
        "100",
        "--beam",
        "1,0",
        "--from",
        "100",
        "--to",
        "110",
        "--step",
        "5",
        "--tilt",
        "20",
    ]);
    assert_eq!(code, 0, "{err}");
    let mut lines = out.lines();
    let head: Vec<&str> = lines.next().unwrap().split(',').collect();
    for key in [
        "crystal",
        "face",
        "temperature_k",
        "beam",
        "tilt_deg",
        "mode",
        "branch_preference",
        "rig",
        "nominal_ev",
        "arm_deg",
    ] {
        assert!(head.contains(&key), "{key} missing from {head:?}");
    }
    let rows: Vec<&str> = lines.collect();
    assert_eq!(rows.len(), 3, "{out}");
    for r in rows {
        assert!(
            // crystal, face, sample temperature (the table's), beam, tilt, V0 model, V0
            // and I-V maxima in range, mode, branch
            r.starts_with("cu,(1 0 0),293,\"1,0\",20,constant,10,1,in-plane,nearest,"),
            "{r}"
        );
    }
}

/// `talk` tells a script whether every request succeeded (exit 2 and one line when any
/// answered `err`), and `quit` ends the session.
#[test]
fn talk_exit_status_reflects_the_replies() {
    let run = |input: &[u8]| {
        let mut child = std::process::Command::new(env!("CARGO_BIN_EXE_mwctl"))
            .arg("talk")
            .stdin(std::process::Stdio::piped())
            .stdout(std::process::Stdio::piped())
            .stderr(std::process::Stdio::piped())
            .spawn()
            .unwrap();
        use std::io::Write as _;
        child.stdin.take().unwrap().write_all(input).unwrap();
        let out = child.wait_with_output().unwrap();
        (
            out.status.code(),
            String::from_utf8(out.stdout).unwrap(),
            String::from_utf8(out.stderr).unwrap(),
        )
    };
    let (code, out, err) = run(b"hello\nget tilt\n");
    assert_eq!(code, Some(0), "{out} {err}");
    let (code, out, err) = run(b"hello\nset tilt=99\nquit\nhello\n");
    assert_eq!(code, Some(2), "{out}");
    assert_eq!(out.lines().count(), 2, "quit must end the session: {out}");
    assert_eq!(
        err.trim_end(),
        "mwctl: error: talk: 1 of 2 requests answered err"
    );
}

/// `talk` runs each request when its line ends, CR included; a `stop` that follows a
/// streaming request stops the stream at once; a long unterminated line gets its error
/// without being held whole.
#[test]
fn talk_runs_each_line_as_it_ends() {
    let run = |input: &[u8]| {
        let mut child = std::process::Command::new(env!("CARGO_BIN_EXE_mwctl"))
            .arg("talk")
            .stdin(std::process::Stdio::piped())
            .stdout(std::process::Stdio::piped())
            .stderr(std::process::Stdio::piped())
            .spawn()
            .unwrap();
        let mut stdin = child.stdin.take().unwrap();
        let input = input.to_vec();
        let writer = std::thread::spawn(move || {
            use std::io::Write as _;
            let _ = stdin.write_all(&input);
        });
        let out = child.wait_with_output().unwrap();
        writer.join().unwrap();
        String::from_utf8(out.stdout).unwrap()
    };
    let out = run(b"hello\rget tilt\r");
    let lines: Vec<&str> = out.lines().collect();
    assert_eq!(lines.len(), 2, "{out}");
    assert!(
        lines[0].starts_with("ok name=matterwave") && lines[1] == "ok tilt=20",
        "{out}"
    );
    let out = run(b"plan kind=sweep from=-160 to=160 step=0.01\nstop\nhello\n");
    let lines: Vec<&str> = out.lines().collect();
    // The stream (32,001 points) is cut short; stop answers right after its err line.
    let at = lines
        .iter()
        .position(|l| *l == "err 411 aborted by stop")
        .unwrap_or_else(|| panic!("no abort in {} lines", lines.len()));
    assert!(at < 32_001, "the whole stream ran first");
    assert_eq!(lines.get(at + 1), Some(&"ok stopped=stream"));
    assert!(lines.get(at + 2).is_some_and(|l| l.starts_with("ok name=")));
    let mut long = vec![b'a'; 5_000_000];
    long.extend_from_slice(b"\nhello\n");
    let out = run(&long);
    let lines: Vec<&str> = out.lines().collect();
    assert_eq!(lines.len(), 2, "{}", &out[..out.len().min(500)]);
    assert!(lines[0].starts_with("err 400 "), "{}", lines[0]);
    assert!(lines[1].starts_with("ok name="), "{}", lines[1]);
}

/// `crystals --crystal` gives each face the work function and inner potential the
/// controller uses for it (the core's `work_function_for`/`inner_potential_for`), with
/// a source for each.
#[test]
fn crystal_faces_show_the_values_the_controller_uses() {
    for id in ["cu", "ag", "ru", "kcl"] {
        let v = json(&["crystals", "--crystal", id]);
        let c = matterwave_core::table::find(id).unwrap();
        let faces = v["faces"].as_array().unwrap();
        assert_eq!(faces.len(), c.faces.len(), "{v}");
        for (f, cf) in faces.iter().zip(c.faces) {
            for (key, want) in [
                ("work_function_ev", c.work_function_for(cf.miller)),
                ("inner_potential_ev", c.inner_potential_for(cf.miller)),
            ] {
                match want {
                    Some(w) => {
                        let got = f[key].as_f64().unwrap();
                        assert!((got - f64::from(w)).abs() < 1e-6, "{id} {f}");
                        let src = key.replace("_ev", "_source");
                        assert!(!f[src.as_str()].as_str().unwrap().is_empty(), "{id} {f}");
                    }
                    None => assert!(f[key].is_null(), "{id} {f}"),
                }
            }
        }
    }
}

/// `--tilt` and `--azimuth` mean the same and default the same on every command: the
/// tilt always 0 (normal incidence) with one help text; the azimuth 0 with one help text
/// where it is fixed (beams, ivpeaks, steps, screen, sweep, view), and absent — in-plane aiming — with
/// one other help text where it selects two-circle aiming (aim, track, budget).
#[test]
fn tilt_and_azimuth_have_one_default_and_one_meaning_everywhere() {
    use clap::CommandFactory;
    let root = matterwave_console::cli::Cli::command();
    let calc = root.find_subcommand("calc").unwrap();
    let (mut tilts, mut fixed, mut aiming) = (Vec::new(), Vec::new(), Vec::new());
    for sc in calc.get_subcommands() {
        let name = sc.get_name().to_string();
        for a in sc.get_arguments() {
            let help = a.get_help().map(|h| h.to_string()).unwrap_or_default();
            let default: Vec<String> = a
                .get_default_values()
                .iter()
                .map(|v| v.to_string_lossy().into_owned())
                .collect();
            match a.get_long() {
                Some("tilt") => tilts.push((name.clone(), help, default)),
                Some("azimuth") if default.is_empty() => aiming.push((name.clone(), help)),
                Some("azimuth") => fixed.push((name.clone(), help, default)),
                _ => {}
            }
        }
    }
    let names = |v: &[(String, String, Vec<String>)]| -> Vec<String> {
        v.iter().map(|x| x.0.clone()).collect()
    };
    assert_eq!(
        names(&tilts),
        ["beams", "ivpeaks", "steps", "screen", "aim", "track", "sweep", "view", "fit", "budget"]
    );
    for (n, help, default) in &tilts {
        assert_eq!(default, &["0"], "{n}");
        let h = help
            .trim_start_matches("arm-zero: s")
            .trim_start_matches('S');
        assert_eq!(
            h, "ample tilt α, degrees, within ±89.9 (0: normal incidence)",
            "{n}"
        );
    }
    assert_eq!(
        names(&fixed),
        ["beams", "ivpeaks", "steps", "screen", "sweep", "view"]
    );
    for (n, help, default) in &fixed {
        assert_eq!(default, &["0"], "{n}");
        assert_eq!(help, &fixed[0].1, "{n}");
    }
    let aim: Vec<&str> = aiming.iter().map(|x| x.0.as_str()).collect();
    assert_eq!(aim, ["aim", "track", "budget"]);
    for (n, help) in &aiming {
        assert_eq!(help, &aiming[0].1, "{n}");
        assert!(help.contains("Without it, in-plane aiming"), "{n}: {help}");
    }
    // The tilt's accepted range in the help is the core's.
    assert!(tilts[0]
        .1
        .contains(&format!("±{}", matterwave_core::surface::TILT_MAX_DEG)));
}

/// `--sample-work-function face` and `--inner-potential face` take the crystal table's
/// value for the face: the source is tables/crystals.toml itself (read here, not through
/// the core), the face's own value where it has one, else the crystal's. A face without
/// one, or a command without a face, is refused naming the option.
#[test]
fn face_takes_the_tables_value_for_the_face() {
    let toml: toml::Table = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/../tables/crystals.toml"
    ))
    .unwrap()
    .parse()
    .unwrap();
    let crystal = |id: &str| -> toml::Table {
        toml["crystal"]
            .as_array()
            .unwrap()
            .iter()
            .find(|c| c["id"].as_str() == Some(id))
            .unwrap()
            .as_table()
            .unwrap()
            .clone()
    };
    let num = |v: &toml::Value| v.as_float().or(v.as_integer().map(|i| i as f64)).unwrap();
    let table = |id: &str, miller: [i64; 3], key: &str| -> Option<f64> {
        let c = crystal(id);
        let own = c.get("face").and_then(|f| {
            f.as_array().unwrap().iter().find_map(|f| {
                let m: Vec<i64> = f["miller"]
                    .as_array()
                    .unwrap()
                    .iter()
                    .map(|x| x.as_integer().unwrap())
                    .collect();
                (m == miller).then(|| f.get(key).map(num)).flatten()
            })
        });
        own.or_else(|| c.get(key).map(num))
    };
    // Invented scenarios: W(110) at 80 eV with a 2.7 eV cathode; Pt(111) and Pt(100).
    for (id, face, m) in [
        ("w", "110", [1, 1, 0]),
        ("pt", "111", [1, 1, 1]),
        ("pt", "100", [1, 0, 0]),
    ] {
        let want = table(id, m, "work_function_ev").unwrap();
        let base = [
            "calc",
            "beams",
            "--crystal",
            id,
            "--face",
            face,
            "--energy",
            "80",
            "--cathode-work-function",
            "2.7",
        ];
        let mut args = base.to_vec();
        args.extend(["--sample-work-function", "face"]);
        let v = json(&args);
        let got = v["sample_work_function_ev"].as_f64().unwrap();
        assert!((got - want).abs() < 1e-5, "{id} {face}: {got} vs {want}");
        // The same as giving the number.
        let typed = format!("{want}");
        let mut by_hand = base.to_vec();
        by_hand.extend(["--sample-work-function", &typed]);
        assert_eq!(json(&by_hand)["energy_ev"], v["energy_ev"], "{id} {face}");
        // aim, sweep, view, track, budget and ivpeaks take it too.
        let aim = json(&[
            "calc",
            "aim",
            "--crystal",
            id,
            "--face",
            face,
            "--beam",
            "1,0",
            "--energy",
            "80",
            "--tilt",
            "10",
            "--sample-work-function",
            "face",
        ]);
        assert!((aim["sample_work_function_ev"].as_f64().unwrap() - want).abs() < 1e-5);
        let iv = json(&[
            "calc",
            "ivpeaks",
            "--crystal",
            id,
            "--face",
            face,
            "--beam",
            "0,0",
            "--from",
            "30",
            "--to",
            "200",
            "--sample-work-function",
            "face",
            "--inner-potential",
            "face",
        ]);
        assert!((iv["sample_work_function_ev"].as_f64().unwrap() - want).abs() < 1e-5);
        let v0 = table(id, m, "inner_potential_ev").unwrap();
        assert!((iv["inner_potential_ev"].as_f64().unwrap() - v0).abs() < 1e-5);
        for cmd in [
            vec![
                "calc",
                "sweep",
                "--crystal",
                id,
                "--face",
                face,
                "--energy",
                "80",
                "--arm-from",
                "20",
                "--arm-to",
                "60",
                "--step",
                "1",
                "--sample-work-function",
                "face",
            ],
            vec![
                "calc",
                "view",
                "--crystal",
                id,
                "--face",
                face,
                "--energy",
                "80",
                "--arm",
                "40",
                "--sample-work-function",
                "face",
            ],
            vec![
                "calc",
                "budget",
                "--crystal",
                id,
                "--face",
                face,
                "--beam",
                "1,0",
                "--energy",
                "80",
                "--tilt",
                "10",
                "--sample-work-function",
                "face",
            ],
        ] {
            let v = json(&cmd);
            assert!(
                (v["sample_work_function_ev"].as_f64().unwrap() - want).abs() < 1e-5,
                "{cmd:?}"
            );
        }
        let tr = json(&[
            "calc",
            "track",
            "--crystal",
            id,
            "--face",
            face,
            "--beam",
            "1,0",
            "--from",
            "60",
            "--to",
            "100",
            "--step",
            "20",
            "--tilt",
            "10",
            "--sample-work-function",
            "face",
        ]);
        assert!(
            (tr["correction_ev"].as_f64().unwrap() + want).abs() < 1e-5,
            "{tr}"
        );
    }
    // No value in the table: refused, naming the option (GaAs has no work function).
    assert_eq!(table("gaas", [1, 0, 0], "work_function_ev"), None);
    let (code, _, err) = mwctl(&[
        "calc",
        "beams",
        "--crystal",
        "gaas",
        "--face",
        "100",
        "--energy",
        "80",
        "--sample-work-function",
        "face",
    ]);
    assert_eq!(code, 2);
    assert_eq!(err.trim_end(), "mwctl: error: E132: --sample-work-function face: the crystal table has no work function for gaas (100); give it in eV (`mwctl crystals --crystal gaas` lists the table's values)");
    // A command without a face cannot look it up.
    for (opt, cmd) in [
        (
            "--sample-work-function",
            vec!["calc", "wavelength", "--energy", "80"],
        ),
        (
            "--inner-potential",
            vec!["calc", "wavelength", "--energy", "80"],
        ),
        (
            "--sample-work-function",
            vec!["calc", "reflections", "--crystal", "cu", "--energy", "8000"],
        ),
    ] {
        let mut a = cmd.clone();
        a.extend([opt, "face"]);
        let (code, _, err) = mwctl(&a);
        assert_eq!(code, 2, "{a:?}");
        assert!(
            err.starts_with(&format!("mwctl: error: {opt} face: `calc ")),
            "{err}"
        );
        assert!(err.contains("give it in eV"), "{err}");
    }
    // `mwctl crystals --crystal ID` shows each face's value and where it came from.
    let v = json(&["crystals", "--crystal", "pt"]);
    let faces = v["faces"].as_array().unwrap();
    let f111 = faces.iter().find(|f| f["face"] == "(111)").unwrap();
    assert_eq!(f111["work_function_from"], "face");
    assert!(
        (f111["work_function_ev"].as_f64().unwrap()
            - table("pt", [1, 1, 1], "work_function_ev").unwrap())
        .abs()
            < 1e-9
    );
    let f100 = faces.iter().find(|f| f["face"] == "(100)").unwrap();
    assert_eq!(f100["work_function_from"], "crystal");
}

/// A sweep whose range runs past the arm's limits says so (a boolean in JSON, a note in
/// the table naming the option and the limit), and a zero step names the step alone.
/// The limits are the built-in rig's, ±165° (`mwctl rig show`).
#[test]
fn sweep_beyond_the_limits_and_a_zero_step_say_what_is_wrong() {
    let base = [
        "calc",
        "sweep",
        "--crystal",
        "ag",
        "--face",
        "100",
        "--energy",
        "95",
        "--arm-from",
        "12",
        "--step",
        "1",
    ];
    let mut a = base.to_vec();
    a.extend(["--arm-to", "500"]);
    let v = json(&a);
    assert_eq!(v["beyond_limits"], true);
    let (code, out, _) = mwctl(&a);
    assert_eq!(code, 0);
    assert!(
        out.contains("The range runs past the arm's soft limits (--arm-to 500: above the arm upper limit 165 deg)"),
        "{out}"
    );
    let mut a = base.to_vec();
    a.extend(["--arm-to", "110"]);
    assert_eq!(json(&a)["beyond_limits"], false);
    let (code, _, err) = mwctl(&[
        "calc",
        "sweep",
        "--crystal",
        "ag",
        "--face",
        "100",
        "--energy",
        "95",
        "--arm-from",
        "12",
        "--arm-to",
        "110",
        "--step",
        "0",
    ]);
    assert_eq!(code, 2);
    assert_eq!(
        err.trim_end(),
        "mwctl: error: E102: --step 0: the step must be above 0 (the range --arm-from 12 --arm-to 110 is walked in steps of this size, at most 100000 points)"
    );
}

/// A peak fit with too few usable points says how many it could use of how many and why
/// the others were dropped (non-positive currents for the parabola of ln(current),
/// currents at or below the threshold for the centroid), and the minimum.
#[test]
fn too_few_points_says_which_were_dropped_and_the_minimum() {
    let dir = std::env::temp_dir().join(format!("mwctl-cli-few-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let p = dir.join("cli-too-few-points.csv");
    std::fs::write(&p, "angle_deg,current\n1,5\n2,9\n3,-1\n4,0\n").unwrap();
    let f = p.to_str().unwrap();
    let (code, _, err) = mwctl(&["calc", "fit", "peak", "--input", f]);
    assert_eq!(code, 2);
    assert!(err.contains("E250"), "{err}");
    assert!(
        err.contains("too few usable points: 2 of 4 have a positive current"),
        "{err}"
    );
    assert!(
        err.contains("zero and negative currents are dropped"),
        "{err}"
    );
    assert!(err.contains("at least 3"), "{err}");
    let (code, _, err) = mwctl(&[
        "calc",
        "fit",
        "peak",
        "--input",
        f,
        "--method",
        "centroid",
        "--threshold",
        "4",
    ]);
    assert_eq!(code, 2);
    assert!(
        err.contains("2 of 4 have a current above the threshold 4"),
        "{err}"
    );
    assert!(err.contains("give a lower --threshold"), "{err}");
}
