//! One convention on both paths, the console's and `mwctl`'s: the order of the beams
//! list, the exit angle of a branch −1 solution, the background of the centroid fit,
//! and the peak fit saying that it subtracts none.
//!
//! References outside the code under test: the f64 oracle (`oracle::beam_exit` on the
//! oracle's own mesh, `oracle::mesh_by_rule`) for exit angles; for the order, |g| of each
//! rod from the oracle's mesh; for the background, the smallest current of the data, by
//! hand.

mod common;

use common::{json, mwctl};
use matterwave_console::oracle::{self, OCell};
use matterwave_console::talk::{exchange, sim_console};
use matterwave_core::table;

/// Invented scenarios: Pt(111) at 143 eV tilted 12°, W(110) at 212 eV at azimuth 35°,
/// Ag(100) at 95 eV tilted 6°, Ru(0001) at 61 eV tilted −20° at azimuth −70°.
const SCENES: [(&str, &str, &str, &str, &str); 4] = [
    ("pt", "111", "143", "12", "0"),
    ("w", "110", "212", "0", "35"),
    ("ag", "100", "95", "6", "0"),
    ("ru", "0001", "61", "-20", "-70"),
];

fn ocell(id: &str) -> OCell {
    let c = table::find(id).unwrap();
    OCell {
        structure: oracle::structure_from_name(c.structure.name()).unwrap(),
        a: c.a_a as f64,
        b: c.b_a as f64,
        c: c.c_a as f64,
    }
}

fn miller(id: &str, face: &str) -> [i32; 3] {
    let c = table::find(id).unwrap();
    let hex = c.structure.system() == matterwave_core::lattice::System::Hexagonal;
    matterwave_core::lattice::parse_miller(face, hex).unwrap()
}

/// The console's `beams` and `mwctl calc beams` list the same beams in the same order:
/// by |g| (from the oracle's own mesh, increasing), equal |g| by (h, k) descending.
#[test]
fn console_and_cli_list_beams_in_one_order() {
    for (id, face, energy, tilt, azimuth) in SCENES {
        let mut c = sim_console().unwrap();
        let set =
            format!("set crystal={id} face={face} energy={energy} tilt={tilt} azimuth={azimuth}");
        assert_eq!(exchange(&mut c, &set), ["ok"], "{set}");
        let reply = exchange(&mut c, "beams");
        let console: Vec<[i64; 2]> = reply
            .iter()
            .filter(|l| l.starts_with("- h="))
            .map(|l| {
                let v = |k: &str| -> i64 {
                    l.split(' ')
                        .find_map(|w| w.strip_prefix(k))
                        .unwrap()
                        .parse()
                        .unwrap()
                };
                [v("h="), v("k=")]
            })
            .collect();
        assert!(
            !reply.last().unwrap().contains("truncated"),
            "{set}: {reply:?}"
        );
        let v = json(&[
            "calc",
            "beams",
            "--crystal",
            id,
            "--face",
            face,
            "--energy",
            energy,
            "--tilt",
            tilt,
            "--azimuth",
            azimuth,
        ]);
        assert_eq!(v["truncated"], false);
        let cli: Vec<[i64; 2]> = v["beams"]
            .as_array()
            .unwrap()
            .iter()
            .map(|b| [b["h"].as_i64().unwrap(), b["k"].as_i64().unwrap()])
            .collect();
        assert!(cli.len() >= 7, "{set}: {cli:?}");
        assert_eq!(console, cli, "{set}");
        // The order itself, from the oracle's |g|.
        let m = oracle::mesh_by_rule(&ocell(id), miller(id, face)).unwrap();
        let g = |r: [i64; 2]| {
            let v = oracle::rod_vector(m.a1, m.a2, m.normal, [r[0] as i32, r[1] as i32]);
            (v[0] * v[0] + v[1] * v[1] + v[2] * v[2]).sqrt()
        };
        for w in cli.windows(2) {
            let (a, b) = (g(w[0]), g(w[1]));
            let tie = (a - b).abs() <= 1e-4 * a.max(b);
            assert!(
                if tie { w[0] > w[1] } else { a < b },
                "{set}: {:?} |g| {a} then {:?} |g| {b}",
                w[0],
                w[1]
            );
        }
    }
}

/// A branch −1 solution of `aim` (and the same point of `track`) gives its exit as
/// `beams`, `sweep` and `view` do: the polar angle from the normal (never negative) and
/// its azimuth in the surface frame — the oracle's for the reached tilt and azimuth.
#[test]
fn branch_minus_one_exit_is_polar_with_an_azimuth_everywhere() {
    for (id, face, beam, energy, tilt) in [
        ("ag", "100", "1,0", "95", "6"),
        ("pt", "111", "1,0", "143", "30"),
        ("w", "110", "1,1", "212", "-8"),
    ] {
        let base = [
            "calc",
            "aim",
            "--crystal",
            id,
            "--face",
            face,
            "--beam",
            beam,
            "--energy",
            energy,
            "--tilt",
            tilt,
            "--branch",
            "-1",
        ];
        let v = json(&base);
        let s = &v["solutions"][0];
        assert_eq!(s["branch"], -1, "{v}");
        let exit = s["exit_deg"].as_f64().unwrap();
        let exit_az = s["exit_azimuth_deg"].as_f64().unwrap();
        assert!(exit >= 0.0, "{id}: {exit}");
        let (tilt_r, az_r) = (
            s["tilt_deg"].as_f64().unwrap(),
            s["azimuth_deg"].as_f64().unwrap(),
        );
        // The oracle at the reached angles.
        let m = oracle::mesh_by_rule(&ocell(id), miller(id, face)).unwrap();
        let rod: Vec<i32> = beam.split(',').map(|x| x.parse().unwrap()).collect();
        let e: f64 = energy.parse().unwrap();
        let o = oracle::beam_exit(m.a1, m.a2, m.normal, [rod[0], rod[1]], e, tilt_r, az_r).unwrap();
        let daz = |a: f64, b: f64| ((a - b + 540.0).rem_euclid(360.0) - 180.0).abs();
        assert!(
            (exit - o.exit_polar_deg).abs() < 2e-3,
            "{id}: {exit} vs {}",
            o.exit_polar_deg
        );
        assert!(
            daz(exit_az, o.exit_azimuth_deg) < 2e-3,
            "{id}: {exit_az} vs {}",
            o.exit_azimuth_deg
        );
        // sweep and view at that tilt and azimuth show the beam the same way.
        let (ts, azs, arm) = (
            tilt_r.to_string(),
            az_r.to_string(),
            s["arm_deg"].as_f64().unwrap(),
        );
        let view = json(&[
            "calc",
            "view",
            "--crystal",
            id,
            "--face",
            face,
            "--energy",
            energy,
            "--tilt",
            &ts,
            "--azimuth",
            &azs,
            "--arm",
            &arm.to_string(),
            "--acceptance",
            "2",
        ]);
        let seen = view["beams"]
            .as_array()
            .unwrap()
            .iter()
            .find(|b| format!("{},{}", b["h"], b["k"]) == beam)
            .unwrap_or_else(|| panic!("{id}: {view}"));
        assert!(
            (seen["exit_deg"].as_f64().unwrap() - exit).abs() < 2e-3,
            "{seen}"
        );
        assert!(
            daz(seen["exit_azimuth_deg"].as_f64().unwrap(), exit_az) < 2e-3,
            "{seen}"
        );
        let (lo, hi) = ((arm - 1.0).to_string(), (arm + 1.0).to_string());
        let sw = json(&[
            "calc",
            "sweep",
            "--crystal",
            id,
            "--face",
            face,
            "--energy",
            energy,
            "--tilt",
            &ts,
            "--azimuth",
            &azs,
            "--arm-from",
            &lo,
            "--arm-to",
            &hi,
            "--step",
            "0.1",
        ]);
        let crossed = sw["beams"]
            .as_array()
            .unwrap()
            .iter()
            .find(|b| format!("{},{}", b["h"], b["k"]) == beam)
            .unwrap_or_else(|| panic!("{id}: {sw}"));
        assert!(
            (crossed["exit_deg"].as_f64().unwrap() - exit).abs() < 2e-3,
            "{crossed}"
        );
        assert!(daz(crossed["exit_azimuth_deg"].as_f64().unwrap(), exit_az) < 2e-3);
        // track on branch −1 at that one energy: the same exit.
        let tr = json(&[
            "calc",
            "track",
            "--crystal",
            id,
            "--face",
            face,
            "--beam",
            beam,
            "--from",
            energy,
            "--to",
            energy,
            "--step",
            "1",
            "--tilt",
            tilt,
            "--branch",
            "-1",
        ]);
        let p = &tr["points"][0];
        assert!((p["exit_deg"].as_f64().unwrap() - exit).abs() < 1e-6, "{p}");
        assert!(
            daz(p["exit_azimuth_deg"].as_f64().unwrap(), exit_az) < 1e-6,
            "{p}"
        );
    }
}

/// Without a threshold the centroid subtracts the smallest current on both paths (the
/// core's `fit::centroid_background`), and the two give the same centre; the parabola
/// says it subtracts nothing.
#[test]
fn centroid_background_is_the_same_rule_on_both_paths() {
    // An invented scan: a peak near 31.2° on a background of about 4.
    let pts = [
        (30.0, 4.3),
        (30.4, 5.1),
        (30.8, 9.0),
        (31.2, 15.2),
        (31.6, 10.4),
        (32.0, 5.6),
        (32.4, 4.1),
        (32.8, 4.6),
    ];
    let lowest = pts.iter().map(|p| p.1).fold(f64::INFINITY, f64::min);
    let dir = std::env::temp_dir().join(format!("mwctl-one-convention-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let file = dir.join("one-convention-centroid.csv");
    let mut csv = String::from("angle_deg,current\n");
    for (a, c) in pts {
        csv.push_str(&format!("{a},{c}\n"));
    }
    std::fs::write(&file, csv).unwrap();
    let f = file.to_str().unwrap();
    let cli = json(&["calc", "fit", "peak", "--input", f, "--method", "centroid"]);
    assert_eq!(cli["threshold"].as_f64().unwrap() as f32, lowest as f32);
    assert_eq!(cli["background_subtracted"], true);
    let mut c = sim_console().unwrap();
    for (a, i) in pts {
        assert!(exchange(&mut c, &format!("pt x={a} y={i}"))[0].starts_with("ok"));
    }
    let reply = exchange(&mut c, "fit kind=centroid").join(" ");
    let field = |k: &str| -> f64 {
        reply
            .split(' ')
            .find_map(|w| w.strip_prefix(&format!("{k}=")))
            .unwrap_or_else(|| panic!("{reply}"))
            .parse()
            .unwrap()
    };
    assert_eq!(field("background") as f32, lowest as f32, "{reply}");
    assert_eq!(
        field("angle"),
        cli["angle_deg"].as_f64().unwrap(),
        "{reply}"
    );
    assert_eq!(field("used") as i64, cli["points_used"].as_i64().unwrap());
    // The parabola subtracts nothing, and both paths say so.
    let par = json(&["calc", "fit", "peak", "--input", f]);
    assert_eq!(par["background_subtracted"], false);
    assert!(par["threshold"].is_null());
    let (code, table, _) = mwctl(&["calc", "fit", "peak", "--input", f]);
    assert_eq!(code, 0);
    assert!(table.contains("no background is subtracted"), "{table}");
    let reply = exchange(&mut c, "fit kind=peak").join(" ");
    assert!(reply.ends_with("background=none"), "{reply}");
}

/// Every column header of every table carries its unit or says it is a count, index or
/// word (a list of the unitless ones, each checked by name).
#[test]
fn every_numeric_column_header_has_a_unit() {
    let rig = concat!(env!("CARGO_MANIFEST_DIR"), "/../docs/rigs/bench-b.toml");
    let runs: Vec<Vec<&str>> = vec![
        vec![
            "calc",
            "aim",
            "--crystal",
            "ag",
            "--face",
            "100",
            "--beam",
            "1,0",
            "--energy",
            "95",
            "--tilt",
            "6",
            "--rig",
            rig,
        ],
        vec![
            "calc",
            "track",
            "--crystal",
            "ag",
            "--face",
            "100",
            "--beam",
            "1,0",
            "--from",
            "60",
            "--to",
            "100",
            "--step",
            "20",
            "--tilt",
            "6",
        ],
        vec![
            "calc",
            "sweep",
            "--crystal",
            "ag",
            "--face",
            "100",
            "--energy",
            "95",
            "--arm-from",
            "20",
            "--arm-to",
            "60",
            "--step",
            "1",
            "--points",
        ],
        vec![
            "calc",
            "beams",
            "--crystal",
            "ag",
            "--face",
            "100",
            "--energy",
            "95",
            "--rig",
            rig,
        ],
        vec![
            "calc",
            "ivpeaks",
            "--crystal",
            "ag",
            "--face",
            "100",
            "--beam",
            "0,0",
            "--from",
            "20",
            "--to",
            "200",
        ],
        vec!["rig", "show", "--rig", rig],
    ];
    // Headers without a unit in brackets: counts, indices, words, step counts.
    let unitless = [
        "#",
        "h",
        "k",
        "l",
        "order n",
        "G h",
        "G k",
        "G l",
        "mult",
        "branch",
        "status",
        "sweep status",
        "axis",
        "wrap",
        "zones (deg)",
        "approach",
        "reachable",
        "refused by",
        "azimuth steps",
        "arm steps",
        "elevation steps",
        "tilt steps",
    ];
    for args in runs {
        let (code, out, err) = mwctl(&args);
        assert_eq!(code, 0, "{args:?}: {err}");
        // The header is the line after the first blank line.
        let head = out
            .split("\n\n")
            .nth(1)
            .and_then(|t| t.lines().next())
            .unwrap_or("");
        assert!(
            head.split("  ").filter(|h| !h.trim().is_empty()).count() >= 5,
            "{args:?}: {out}"
        );
        for h in head.split("  ").map(str::trim).filter(|h| !h.is_empty()) {
            assert!(
                h.contains('(') || h.contains('/') || unitless.contains(&h),
                "{args:?}: header {h:?} has no unit"
            );
        }
    }
}

/// `calc track` marks the points nearest each predicted I-V maximum, in both energy
/// frames, labelled: the maxima are the oracle's kinematic ones (f64 bisection) for the
/// table's V0, each marked on the points within half a step of it, and the nominal mark
/// is the gun setting (energy at the sample − the correction).
#[test]
fn track_marks_the_points_nearest_each_iv_maximum() {
    // Invented: the specular beam of Ag(100), 6° tilt, a 2.7 eV cathode, the table's φ.
    let tr = json(&[
        "calc",
        "track",
        "--crystal",
        "ag",
        "--face",
        "100",
        "--beam",
        "0,0",
        "--from",
        "40",
        "--to",
        "300",
        "--step",
        "10",
        "--tilt",
        "6",
        "--cathode-work-function",
        "2.7",
        "--sample-work-function",
        "face",
    ]);
    let v0 = tr["inner_potential_ev"].as_f64().unwrap();
    let corr = tr["correction_ev"].as_f64().unwrap();
    let c = table::find("ag").unwrap();
    assert!((v0 - c.inner_potential_for([1, 0, 0]).unwrap() as f64).abs() < 1e-6);
    let m = oracle::mesh_by_rule(&ocell("ag"), [1, 0, 0]).unwrap();
    let peaks = oracle::iv_peaks(
        &ocell("ag"),
        m.a1,
        m.a2,
        m.normal,
        [0, 0],
        6.0,
        0.0,
        v0,
        40.0 + corr,
        300.0 + corr,
    );
    assert!(peaks.len() >= 3, "{peaks:?}");
    assert_eq!(tr["iv_maxima"].as_i64().unwrap() as usize, peaks.len());
    let mut marked = 0;
    for p in tr["points"].as_array().unwrap() {
        let e = p["energy_ev"].as_f64().unwrap();
        let near = peaks.iter().find(|q| (q.energy_ev - e).abs() <= 5.0 + 1e-3);
        match (near, p["iv_max_ev"].as_f64()) {
            (Some(q), Some(got)) => {
                assert!(
                    (got - q.energy_ev).abs() < 0.05,
                    "{p}: oracle {}",
                    q.energy_ev
                );
                let nominal = p["iv_max_nominal_ev"].as_f64().unwrap();
                assert!((nominal - (got - corr)).abs() < 1e-3, "{p}");
                marked += 1;
            }
            (None, None) => assert!(p["iv_max_nominal_ev"].is_null()),
            other => panic!("{p}: {other:?}"),
        }
    }
    assert!(marked >= peaks.len(), "{marked}");
    // A V0 given by hand moves the maxima; `face` is the table's.
    let by_hand = json(&[
        "calc",
        "track",
        "--crystal",
        "ag",
        "--face",
        "100",
        "--beam",
        "0,0",
        "--from",
        "40",
        "--to",
        "300",
        "--step",
        "10",
        "--tilt",
        "6",
        "--inner-potential",
        "face",
    ]);
    assert_eq!(by_hand["inner_potential_ev"].as_f64(), Some(v0));
}
