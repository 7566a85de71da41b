//! End-to-end tests of the goniometer commands of `mwctl`: `calc aim`, `track`,
//! `sweep`, `view`, `fit`, `budget` and `rig show` / `rig check`, in every format,
//! with exit status 2 and one line naming the axis, zone, field or CSV line on bad
//! input.
//!
//! Synthetic fit data are generated here in f64 from the formulas of beam rules, §6, §7
//! and §9 with parameters chosen in the test (said beside each); the fits must recover
//! them. Physical constants: CODATA 2018 (NIST), as in units rules.

mod common;

use std::path::PathBuf;

use common::{formats_agree, json, mwctl};

/// Runs a command that must fail: exit 2, one line on stderr, no panic. Returns stderr.
fn fails(args: &[&str]) -> String {
    let (code, out, err) = mwctl(args);
    assert_eq!(code, 2, "{args:?}: stdout {out} stderr {err}");
    assert!(
        !err.contains("panicked") && !err.contains("RUST_BACKTRACE"),
        "{args:?}: {err}"
    );
    assert_eq!(err.trim_end().lines().count(), 1, "{args:?}: {err}");
    assert!(err.starts_with("mwctl: error"), "{args:?}: {err}");
    err
}

fn num(v: &serde_json::Value) -> f64 {
    v.as_f64().unwrap_or_else(|| panic!("not a number: {v}"))
}

/// A file in a per-process temporary directory.
fn temp_file(name: &str, body: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("mwctl-gonio-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let p = dir.join(name);
    std::fs::write(&p, body).unwrap();
    p
}

const BENCH_B: &str = concat!(env!("CARGO_MANIFEST_DIR"), "/../docs/rigs/bench-b.toml");

/// Bench B with the arm's upper limit lowered to `max` degrees (and the flange zone,
/// which would then lie beyond it, removed).
fn bench_b_with_arm_max(max: u32) -> PathBuf {
    let text = std::fs::read_to_string(BENCH_B)
        .unwrap()
        .replace("max_deg = 168", &format!("max_deg = {max}"))
        .replace("zones = [[-11, 11], [120, 128]]", "zones = [[-11, 11]]");
    temp_file(&format!("arm-max-{max}.toml"), &text)
}

// --- f64 physics for synthetic data (CODATA 2018, the units and beam conventions) ---------------------

const HC_EV_A: f64 = 12398.419843320;
const MC2_EV: f64 = 510998.95000;

/// Relativistic wavelength, Å (beam rules).
fn lambda(e: f64) -> f64 {
    HC_EV_A / (e * (e + 2.0 * MC2_EV)).sqrt()
}

/// Kinetic energy of wavenumber k = 1/λ, eV.
fn energy_of_k(k: f64) -> f64 {
    ((HC_EV_A * k).powi(2) + MC2_EV * MC2_EV).sqrt() - MC2_EV
}

/// In-plane arm angle (geometry rules): δ = α + asin(sin α + s·λ/d_row), degrees.
fn arm_in_plane(tilt: f64, s: f64, e: f64, d_row: f64) -> f64 {
    let a = tilt.to_radians();
    tilt + (a.sin() + s * lambda(e) / d_row).asin().to_degrees()
}

const AIM: &[&str] = &[
    "calc",
    "aim",
    "--crystal",
    "cu",
    "--face",
    "100",
    "--beam",
    "1,0",
    "--energy",
    "100",
    "--tilt",
    "10",
];
const TRACK: &[&str] = &[
    "calc",
    "track",
    "--crystal",
    "cu",
    "--face",
    "100",
    "--beam",
    "1,0",
    "--from",
    "20",
    "--to",
    "200",
    "--step",
    "20",
    "--tilt",
    "10",
];
const SWEEP: &[&str] = &[
    "calc",
    "sweep",
    "--crystal",
    "cu",
    "--face",
    "100",
    "--energy",
    "100",
    "--tilt",
    "10",
    "--arm-from",
    "15",
    "--arm-to",
    "80",
    "--step",
    "0.5",
];
const WHERE: &[&str] = &[
    "calc",
    "view",
    "--crystal",
    "cu",
    "--face",
    "100",
    "--energy",
    "100",
    "--tilt",
    "10",
    "--azimuth",
    "0",
    "--arm",
    "50.8",
];
const BUDGET: &[&str] = &[
    "calc",
    "budget",
    "--crystal",
    "cu",
    "--face",
    "100",
    "--beam",
    "1,0",
    "--energy",
    "100",
    "--tilt",
    "10",
];

/// Synthetic peak scan: Gaussian centre 31.37°, σ 0.4°, height 500, sampled every 0.1°
/// from 28° to 35° (values chosen in the test).
fn peak_csv() -> PathBuf {
    let mut s = String::from(
        "# synthetic Gaussian peak, centre 31.37 deg, sigma 0.4 deg\nangle_deg,current\n",
    );
    for i in 0..=70 {
        let a = 28.0 + 0.1 * i as f64;
        let c = 500.0 * (-(a - 31.37f64).powi(2) / (2.0 * 0.16)).exp();
        s.push_str(&format!("{a},{c}\n"));
    }
    temp_file("peak.csv", &s)
}

/// Synthetic arm positions of Cu(100) beam (1,0) at tilt 10°, branch +1, with arm zero
/// δ0 = 0.3° and gun offset ΔE = −2 eV (chosen in the test). Row spacing of the (1,0)
/// rod of fcc(100): the square mesh a/√2 (surface rules), a = 3.6149 Å as in the table
/// (CRC Handbook, from memory), which the fit's model uses.
fn arm_zero_csv() -> PathBuf {
    let d_row = 3.6149 / 2f64.sqrt();
    let mut s = String::from("nominal_ev,arm_deg,note\n");
    for e in [60.0, 80.0, 100.0, 130.0, 160.0, 200.0, 250.0] {
        let arm = arm_in_plane(10.0, 1.0, e - 2.0, d_row) + 0.3;
        s.push_str(&format!("{e},{arm},synthetic\n"));
    }
    temp_file("arm-zero.csv", &s)
}

/// Synthetic exit angles at normal incidence, sin θ = n·λ/d with d = 2.5562 Å (chosen in
/// the test).
fn row_csv() -> PathBuf {
    let mut s = String::from("energy_ev,order,exit_deg\n");
    for (e, n) in [(60.0, 1), (150.0, 1), (150.0, 2), (250.0, 2), (300.0, -1)] {
        let th = (n as f64 * lambda(e) / 2.5562).asin().to_degrees();
        s.push_str(&format!("{e},{n},{th}\n"));
    }
    temp_file("rows.csv", &s)
}

/// Synthetic specular I-V peaks: E_n = E(k = n/2d) − V0 with d = 1.762 Å, V0 = 11 eV
/// (chosen in the test).
fn iv_csv() -> PathBuf {
    let mut s = String::from("order,energy_ev\n");
    for n in 2..=6 {
        let e = energy_of_k(n as f64 / (2.0 * 1.762)) - 11.0;
        s.push_str(&format!("{n},{e}\n"));
    }
    temp_file("iv.csv", &s)
}

#[test]
fn every_command_answers_in_every_format() {
    let peak = peak_csv();
    let arm = arm_zero_csv();
    let rows = row_csv();
    let iv = iv_csv();
    let (peak, arm, rows, iv) = (
        peak.to_str().unwrap(),
        arm.to_str().unwrap(),
        rows.to_str().unwrap(),
        iv.to_str().unwrap(),
    );
    let mut sweep_points = SWEEP.to_vec();
    sweep_points.push("--points");
    let commands: Vec<Vec<&str>> = vec![
        AIM.to_vec(),
        TRACK.to_vec(),
        SWEEP.to_vec(),
        sweep_points,
        WHERE.to_vec(),
        BUDGET.to_vec(),
        vec!["calc", "fit", "peak", "--input", peak],
        vec![
            "calc", "fit", "peak", "--input", peak, "--method", "centroid",
        ],
        vec![
            "calc",
            "fit",
            "arm-zero",
            "--input",
            arm,
            "--crystal",
            "cu",
            "--face",
            "100",
            "--beam",
            "1,0",
            "--tilt",
            "10",
        ],
        vec!["calc", "fit", "row-spacing", "--input", rows],
        vec!["calc", "fit", "iv", "--input", iv],
        vec!["rig", "show"],
        vec!["rig", "show", "--rig", BENCH_B],
        vec!["rig", "check", "--rig", BENCH_B],
    ];
    for cmd in &commands {
        for fmt in ["table", "json", "csv"] {
            let mut a = cmd.clone();
            a.extend(["--format", fmt]);
            let (code, out, err) = mwctl(&a);
            assert_eq!(code, 0, "{a:?}: {err}");
            assert!(!out.trim().is_empty(), "{a:?} printed nothing");
            match fmt {
                "json" => {
                    let v: serde_json::Value =
                        serde_json::from_str(&out).unwrap_or_else(|e| panic!("{a:?}: {e}: {out}"));
                    assert!(v.is_object(), "{a:?}");
                }
                "csv" => {
                    let lines: Vec<&str> = out.lines().collect();
                    assert!(lines.len() >= 2, "{a:?}: {out}");
                    let cols = lines[0].split(',').count();
                    for l in &lines[1..] {
                        if !l.contains('"') {
                            assert_eq!(l.split(',').count(), cols, "{a:?}: {l}");
                        }
                    }
                }
                _ => {}
            }
        }
        formats_agree(cmd);
    }
}

#[test]
fn aim_lists_setpoints_with_stable_keys() {
    let v = json(AIM);
    let s = &v["solutions"][0];
    for k in [
        "azimuth_deg",
        "arm_deg",
        "elevation_deg",
        "tilt_deg",
        "azimuth_steps",
        "arm_steps",
        "elevation_steps",
        "tilt_steps",
        "arm_residual_deg",
        "branch",
        "exit_deg",
        "travel_deg",
    ] {
        assert!(s.get(k).is_some(), "solution lacks {k}: {s}");
    }
    // δ = α + asin(sin α + λ/d_row) on branch +1 (geometry rules), Cu a = 3.615 Å, fcc(100)
    // mesh a/√2 (surface rules); f32 against f64, and the step of the built-in arm
    // (888.9 steps/deg) bounds the reached angle.
    let want = arm_in_plane(10.0, 1.0, 100.0, 3.615 / 2f64.sqrt());
    assert!((num(&s["arm_deg"]) - want).abs() < 2e-3, "{s} vs {want}");
    // Steps and angle agree on the built-in arm: angle = steps / steps_per_deg.
    let spd = 200.0 * 16.0 * 100.0 / 360.0;
    assert!((num(&s["arm_steps"]) / spd - num(&s["arm_deg"])).abs() < 1e-4);
    // Nearest first.
    let sols = v["solutions"].as_array().unwrap();
    let travel: Vec<f64> = sols.iter().map(|s| num(&s["travel_deg"])).collect();
    assert!(travel.windows(2).all(|w| w[0] <= w[1]), "{travel:?}");
}

#[test]
fn aim_specular_sits_at_twice_the_tilt() {
    // geometry rules invariant: the specular beam is at δ = 2α at every energy.
    for (e, t) in [("40", "20"), ("150", "20"), ("500", "35"), ("120", "-25")] {
        let v = json(&[
            "calc",
            "aim",
            "--crystal",
            "ni",
            "--face",
            "111",
            "--beam",
            "0,0",
            "--energy",
            e,
            "--tilt",
            t,
        ]);
        let tilt: f64 = t.parse().unwrap();
        let s = &v["solutions"][0];
        let arm = num(&s["arm_deg"]) + num(&s["arm_residual_deg"]);
        assert!((arm - 2.0 * tilt).abs() < 1e-3, "{e} eV {t}: {s}");
        assert!((num(&s["arm_deg"]) - 2.0 * tilt).abs() < 1.0 / 888.0, "{s}");
    }
}

#[test]
fn aim_into_the_gun_shadow_names_the_zone() {
    // Specular at tilt 3°: δ = 6°, inside the built-in arm's zone 0, [-12, 12]°.
    let err = fails(&[
        "calc",
        "aim",
        "--crystal",
        "cu",
        "--face",
        "100",
        "--beam",
        "0,0",
        "--energy",
        "100",
        "--tilt",
        "3",
    ]);
    // The whole line: the code, the request quoted back, the pose (twice the tilt,
    // 3° to within a step of the built-in tilt axis) and how deep it lies in the zone.
    assert_eq!(
        err.trim_end(),
        "mwctl: error: E303: --beam 0,0 at 100 eV (100 eV at the sample), tilt 3 deg: \
         no reachable solution: branch +1: arm 6.000 deg: inside arm forbidden zone 0 \
         [-12, 12] deg (by 6.000 deg)"
    );
}

/// `x` with three decimals, as the refusal messages print angles; the value must not
/// lie within 1e-4 of a rounding boundary, where the f32 core and this f64 formula could
/// round apart.
fn deg3(x: f64) -> String {
    let frac = (x.abs() * 1e3).fract();
    assert!(
        (frac - 0.5).abs() > 0.1,
        "{x} is too near a rounding boundary"
    );
    format!("{x:.3}")
}

#[test]
fn aim_beyond_a_limit_names_the_limit() {
    let rig = bench_b_with_arm_max(40);
    // Cu(100) (1,0) at 100 eV, tilt 10°: δ = 50.8° on the +1 branch, above 40°; the
    // −1 branch at −7.8° lies in the gun's shadow.
    let err = fails(&[
        "calc",
        "aim",
        "--crystal",
        "cu",
        "--face",
        "100",
        "--beam",
        "1,0",
        "--energy",
        "100",
        "--tilt",
        "10",
        "--rig",
        rig.to_str().unwrap(),
    ]);
    // The whole line, with both poses from the f64 formula δ = α + asin(sin α ± λ/d_row)
    // (geometry rules), d_row = a/√2 with the table's a = 3.6149 Å: the +1 pose above
    // the 40° limit by δ − 40°, the −1 pose inside the gun zone [-11, 11]° by its
    // distance from the nearer edge, −11°.
    let d_row = 3.6149 / 2f64.sqrt();
    let (plus, minus) = (
        arm_in_plane(10.0, 1.0, 100.0, d_row),
        arm_in_plane(10.0, -1.0, 100.0, d_row),
    );
    assert_eq!(
        err.trim_end(),
        format!(
            "mwctl: error: E302: --beam 1,0 at 100 eV (100 eV at the sample), tilt 10 deg: \
             no reachable solution: branch +1: arm {} deg: above the arm upper limit 40 deg \
             (by {} deg); branch -1: arm {} deg: inside arm forbidden zone 0 [-11, 11] deg \
             (by {} deg)",
            deg3(plus),
            deg3(plus - 40.0),
            deg3(minus),
            deg3(minus + 11.0)
        )
    );
}

#[test]
fn aim_names_every_refusal_and_honours_the_branch() {
    let rig = bench_b_with_arm_max(40);
    let base = [
        "calc",
        "aim",
        "--crystal",
        "cu",
        "--face",
        "100",
        "--beam",
        "1,0",
        "--energy",
        "100",
        "--tilt",
        "10",
        "--rig",
    ];
    let mut args: Vec<&str> = base.to_vec();
    args.push(rig.to_str().unwrap());
    // Both poses of the example above, each with its axis and amount: +1 at 50.8° is
    // 10.8° above 40°; −1 at −7.8° lies 3.2° inside [-11, 11] from its nearer edge.
    let err = fails(&args);
    let plus = err
        .find("branch +1: arm 50.")
        .unwrap_or_else(|| panic!("{err}"));
    let minus = err
        .find("branch -1: arm -7.")
        .unwrap_or_else(|| panic!("{err}"));
    assert!(plus < minus, "{err}");
    assert!(err.contains("(by 10.8"), "{err}");
    assert!(err.contains("(by 3.1") || err.contains("(by 3.2"), "{err}");
    // Held on one branch, only that branch is named.
    let mut one = args.clone();
    one.extend(["--branch", "-1"]);
    let err = fails(&one);
    assert!(
        err.contains("branch -1: arm -7.") && !err.contains("branch +1"),
        "{err}"
    );
    // On the built-in rig each branch gives its own solution: δ = α + asin(sin α ± λ|g|)
    // (geometry rules), λ from the f64 relation above, |g| = √2/a, a = 3.615 Å.
    for (b, sign) in [("+1", 1.0), ("-1", -1.0)] {
        let v = json(&[
            "calc",
            "aim",
            "--crystal",
            "cu",
            "--face",
            "100",
            "--beam",
            "1,0",
            "--energy",
            "150",
            "--tilt",
            "20",
            "--branch",
            b,
        ]);
        let sols = v["solutions"].as_array().unwrap();
        assert!(!sols.is_empty(), "{v}");
        let s = (20f64.to_radians().sin() + sign * lambda(150.0) * 2f64.sqrt() / 3.615).asin();
        let want = 20.0 + s.to_degrees();
        for sol in sols {
            assert_eq!(num(&sol["branch"]), sign, "{v}");
            let arm = num(&sol["arm_deg"]) + num(&sol["arm_residual_deg"]);
            assert!((arm - want).abs() < 0.01, "branch {b}: {arm} vs {want}");
        }
        assert_eq!(v["branch_preference"], b, "{v}");
    }
    // A branch in two-circle mode is refused, not ignored.
    let err = fails(&[
        "calc",
        "aim",
        "--crystal",
        "cu",
        "--face",
        "100",
        "--beam",
        "1,0",
        "--energy",
        "150",
        "--tilt",
        "20",
        "--azimuth",
        "0",
        "--branch",
        "+1",
    ]);
    assert!(err.contains("E131") && err.contains("--branch +1"), "{err}");
}

#[test]
fn aim_at_an_evanescent_beam_says_evanescent() {
    let err = fails(&[
        "calc",
        "aim",
        "--crystal",
        "cu",
        "--face",
        "100",
        "--beam",
        "3,0",
        "--energy",
        "20",
        "--tilt",
        "10",
    ]);
    assert!(err.contains("E201") && err.contains("evanescent"), "{err}");
    // In-plane, the beam first emerges on the branch against k∥: λ = (1 + sin α)·d_row
    // (the surface and geometry conventions), d_row = a/(3√2) for rod (3,0) of fcc(100), a = 3.615 Å.
    let d_row = 3.615 / (3.0 * 2f64.sqrt());
    let l = (1.0 + 10f64.to_radians().sin()) * d_row;
    let e = energy_of_k(1.0 / l);
    let got: f64 = err
        .split("emerges only above ")
        .nth(1)
        .and_then(|t| t.split(' ').next())
        .and_then(|t| t.parse().ok())
        .unwrap_or_else(|| panic!("no emergence energy in {err}"));
    // f32 core against this f64 formula, printed to 0.01 eV.
    assert!((got - e).abs() < 0.02, "{err} (want {e:.3})");
}

#[test]
fn two_circle_aim_uses_the_elevation() {
    let v = json(&[
        "calc",
        "aim",
        "--crystal",
        "cu",
        "--face",
        "100",
        "--beam",
        "1,1",
        "--energy",
        "150",
        "--tilt",
        "15",
        "--azimuth",
        "0",
        "--rig",
        BENCH_B,
        // Parked at 20°: at home (−0.35°, inside the gun zone [−11°, 11°], nearer its
        // lower edge) the arm may only leave the zone downward (docs/PROTOCOL.md).
        "--position",
        "20,0,0,0",
    ]);
    let s = &v["solutions"][0];
    assert!(num(&s["elevation_deg"]).abs() > 5.0, "{s}");
    assert!(s["elevation_steps"].is_i64(), "{s}");
    // The same beam without an elevation axis: exit 2, naming the missing axis.
    let err = fails(&[
        "calc",
        "aim",
        "--crystal",
        "cu",
        "--face",
        "100",
        "--beam",
        "1,1",
        "--energy",
        "150",
        "--tilt",
        "15",
        "--azimuth",
        "0",
    ]);
    // The elevation the beam needs: asin of the out-of-plane component of the exit
    // direction, |k| sin θ_y = |g_y| for rod (1,1) of Cu(100) at azimuth 0 (a1 along
    // e1): g_y = 1/|a2| = √2/a (the surface and lab conventions), so sin ε = λ√2/a.
    let eps = (lambda(150.0) * 2f64.sqrt() / 3.6149).asin().to_degrees();
    assert_eq!(
        err.trim_end(),
        format!(
            "mwctl: error: E307: --beam 1,1 at 150 eV (150 eV at the sample), tilt 15 deg: \
             no reachable solution: elevation {} deg: out of the scattering plane, and this \
             rig has no elevation axis; omit --azimuth for in-plane mode, or give a rig \
             file with an [elevation] axis",
            deg3(eps)
        )
    );
}

#[test]
fn view_inverts_aim() {
    for (face, beam, e, t) in [
        ("100", "1,0", "100", "10"),
        ("110", "1,0", "120", "20"),
        ("111", "1,-1", "200", "25"),
    ] {
        let a = json(&[
            "calc",
            "aim",
            "--crystal",
            "cu",
            "--face",
            face,
            "--beam",
            beam,
            "--energy",
            e,
            "--tilt",
            t,
        ]);
        let (h, k) = beam.split_once(',').unwrap();
        let (h, k): (i64, i64) = (h.parse().unwrap(), k.parse().unwrap());
        for s in a["solutions"].as_array().unwrap() {
            let arg = |key: &str| num(&s[key]).to_string();
            let (az, arm, tilt) = (arg("azimuth_deg"), arg("arm_deg"), arg("tilt_deg"));
            let w = json(&[
                "calc",
                "view",
                "--crystal",
                "cu",
                "--face",
                face,
                "--energy",
                e,
                "--tilt",
                &tilt,
                "--azimuth",
                &az,
                "--arm",
                &arm,
            ]);
            let first = &w["beams"][0];
            assert_eq!(
                (first["h"].as_i64(), first["k"].as_i64()),
                (Some(h), Some(k)),
                "{w}"
            );
            assert!(num(&first["offset_deg"]) < 0.01, "{w}");
        }
    }
}

#[test]
fn view_with_nothing_in_view_is_an_empty_list() {
    let v = json(&[
        "calc",
        "view",
        "--crystal",
        "cu",
        "--face",
        "100",
        "--energy",
        "100",
        "--tilt",
        "10",
        "--azimuth",
        "0",
        "--arm",
        "100",
    ]);
    assert_eq!(v["beams"].as_array().map(Vec::len), Some(0), "{v}");
}

#[test]
fn track_reports_status_per_point() {
    let v = json(TRACK);
    let pts = v["points"].as_array().unwrap();
    assert_eq!(pts.len(), 10);
    for p in pts {
        for k in [
            "energy_ev",
            "nominal_ev",
            "azimuth_deg",
            "arm_deg",
            "elevation_deg",
            "arm_steps",
            "status",
        ] {
            assert!(p.get(k).is_some(), "point lacks {k}: {p}");
        }
        let reachable = p["status"] == "reachable";
        assert_eq!(reachable, p["arm_deg"].is_f64(), "{p}");
        assert_eq!(reachable, p["arm_steps"].is_i64(), "{p}");
    }
    // From home the −1 branch is followed (arm below the gun's shadow) until it runs
    // into the shadow: λ(80 eV) puts it at −11.3°, inside [-12, 12]°. Each point from
    // the f64 formula δ = α + asin(sin α − λ/d_row), d_row = a/√2 with the table's
    // a = 3.6149 Å: in the ±12° zone, or reached within 0.002° plus a step.
    let d_row = 3.6149 / 2f64.sqrt();
    let status: Vec<&str> = pts.iter().map(|p| p["status"].as_str().unwrap()).collect();
    assert_eq!(&status[..3], &["reachable"; 3], "{status:?}");
    assert!(status[3..].iter().all(|s| *s == "arm zone 0"), "{status:?}");
    for p in pts {
        let want = arm_in_plane(10.0, -1.0, num(&p["energy_ev"]), d_row);
        if want.abs() <= 12.0 {
            assert_eq!(p["status"], "arm zone 0", "{p} vs {want}");
        } else {
            assert_eq!(p["status"], "reachable", "{p} vs {want}");
            assert!(
                (num(&p["arm_deg"]) - want).abs() < 2e-3 + 1.2e-3,
                "{p} vs {want}"
            );
        }
    }
    assert!(num(&v["estimate_s"]) > 0.0);

    // Starting at arm 30°: (2,0) is evanescent at 40 eV, and beyond an upper limit of
    // 60° until δ drops below it.
    let rig = bench_b_with_arm_max(60);
    let v = json(&[
        "calc",
        "track",
        "--crystal",
        "cu",
        "--face",
        "100",
        "--beam",
        "1,0",
        "--from",
        "20",
        "--to",
        "200",
        "--step",
        "20",
        "--tilt",
        "10",
        "--position",
        "30,0,10,0",
        "--rig",
        rig.to_str().unwrap(),
    ]);
    // Each point from the f64 formula on branch +1, δ = α + asin(sin α + λ/d_row): no
    // such beam at 20 eV (and the −1 branch lies across the [-11, 11]° zone from 30°),
    // above 60° at 40 and 60 eV, reached from 80 eV on.
    let mut status = Vec::new();
    for p in v["points"].as_array().unwrap() {
        let e = num(&p["energy_ev"]);
        let x = 10f64.to_radians().sin() + lambda(e) / d_row;
        let st = p["status"].as_str().unwrap();
        if x > 1.0 {
            assert_eq!(st, "arm path crosses zone 0", "{p}");
        } else if arm_in_plane(10.0, 1.0, e, d_row) > 60.0 {
            assert_eq!(st, "arm max", "{p}");
        } else {
            assert_eq!(st, "reachable", "{p}");
            let want = arm_in_plane(10.0, 1.0, e, d_row);
            assert!((num(&p["arm_deg"]) - want).abs() < 0.01, "{p} vs {want}");
        }
        status.push(st.to_string());
    }
    assert_eq!(
        &status[..4],
        ["arm path crosses zone 0", "arm max", "arm max", "reachable"],
        "{status:?}"
    );
    let v = json(&[
        "calc",
        "track",
        "--crystal",
        "cu",
        "--face",
        "100",
        "--beam",
        "2,0",
        "--from",
        "40",
        "--to",
        "200",
        "--step",
        "40",
        "--tilt",
        "10",
        "--position",
        "30,0,0,0",
    ]);
    assert_eq!(v["points"][0]["status"], "evanescent", "{v}");
    assert!(v["points"][0]["arm_deg"].is_null());
}

#[test]
fn track_estimate_adds_the_dwell() {
    let mut a = TRACK.to_vec();
    let t0 = num(&json(&a)["estimate_s"]);
    a.extend(["--dwell", "2"]);
    let v = json(&a);
    let n = num(&v["reachable"]);
    assert!((num(&v["estimate_s"]) - t0 - 2.0 * n).abs() < 1e-3, "{v}");
}

#[test]
fn sweep_lists_the_beams_crossed() {
    let v = json(SWEEP);
    // Cu(100) at 100 eV, tilt 10°: the specular beam at 2α = 20° and (1,0) at 50.8°
    // (geometry rules) lie in 15–80°.
    let beams = v["beams"].as_array().unwrap();
    let rods: Vec<(i64, i64)> = beams
        .iter()
        .map(|b| (b["h"].as_i64().unwrap(), b["k"].as_i64().unwrap()))
        .collect();
    assert_eq!(rods, vec![(0, 0), (1, 0)], "{v}");
    assert!((num(&beams[0]["arm_deg"]) - 20.0).abs() < 1e-3);
    for k in ["h", "k", "arm_deg", "elevation_deg", "exit_deg"] {
        assert!(beams[1].get(k).is_some(), "beam lacks {k}");
    }
    assert_eq!(v["points"].as_i64(), Some(131));
    assert!(num(&v["estimate_s"]) > 0.0);
    let mut a = SWEEP.to_vec();
    a.push("--points");
    let p = json(&a);
    let pts = p["sweep_points"].as_array().unwrap();
    assert_eq!(pts.len(), 131);
    let seen: Vec<&serde_json::Value> = pts.iter().filter(|q| q["h"].is_i64()).collect();
    assert!(
        seen.iter().any(|q| q["arm_deg"] == 20.0 && q["h"] == 0),
        "{seen:?}"
    );
    // Each point lists the nearest beam within the 1° acceptance (built-in rig), with
    // its offset: from the f64 arm angles of the two in-plane beams (specular at 2α,
    // (1,0) at α + asin(sin α + λ/d_row)) and the arm angle the point's steps reach
    // (888.9 steps/deg). Points near neither list none.
    let spd = 200.0 * 16.0 * 100.0 / 360.0;
    let beams_f64 = [
        ((0, 0), 20.0),
        ((1, 0), arm_in_plane(10.0, 1.0, 100.0, 3.615 / 2f64.sqrt())),
    ];
    let (mut in_view, mut empty) = (0, 0);
    for q in pts {
        let arm = num(&q["arm_steps"]) / spd;
        let ((h, k), off) = beams_f64
            .iter()
            .map(|(r, b)| (*r, (arm - b).abs()))
            .min_by(|a, b| a.1.total_cmp(&b.1))
            .unwrap();
        if off <= 1.0 - 2e-3 {
            assert_eq!(
                (q["h"].as_i64(), q["k"].as_i64()),
                (Some(h), Some(k)),
                "{q}"
            );
            assert!(
                (num(&q["offset_deg"]) - off).abs() < 2e-3,
                "{q}: want {off}"
            );
            in_view += 1;
        } else if off > 1.0 + 2e-3 {
            assert!(
                q["h"].is_null() && q["offset_deg"].is_null(),
                "{q}: nearest {off}"
            );
            empty += 1;
        }
    }
    // 4 points of 0.5° within ±1° of each beam (the edges excluded), the rest empty.
    assert!(in_view >= 6 && empty >= 120, "{in_view} {empty}");
}

#[test]
fn budget_total_is_the_root_sum_of_squares() {
    for extra in [
        &[][..],
        &["--energy-spread", "0.5", "--arm-zero-sigma", "0.1"][..],
    ] {
        let mut a = BUDGET.to_vec();
        a.extend_from_slice(extra);
        let v = json(&a);
        let c = v["contributions"].as_array().unwrap();
        let names: Vec<&str> = c.iter().map(|x| x["name"].as_str().unwrap()).collect();
        assert_eq!(
            names,
            [
                "energy spread",
                "lattice constant",
                "step quantisation",
                "detector acceptance",
                "arm zero"
            ]
        );
        let rss = c.iter().map(|x| num(&x["deg"]).powi(2)).sum::<f64>().sqrt();
        assert!(
            (num(&v["total_deg"]) - rss).abs() < 1e-6 * rss.max(1.0),
            "{v}"
        );
        // Acceptance half-angle 1° (built-in rig): σ ≈ α/2 (core budget docs).
        assert!((num(&c[3]["deg"]) - 0.5).abs() < 1e-3);
        // Step 1/888.9° over √12 (uniform rounding error).
        assert!((num(&c[2]["deg"]) - 360.0 / 320000.0 / 12f64.sqrt()).abs() < 1e-7);
    }
    // Energy spread: dδ/dE of δ = α + asin(sin α + λ(E)/d_row) at 100 eV times 0.3 eV,
    // by a central difference of the f64 formula.
    let d_row = 3.615 / 2f64.sqrt();
    let slope =
        (arm_in_plane(10.0, 1.0, 100.01, d_row) - arm_in_plane(10.0, 1.0, 99.99, d_row)) / 0.02;
    let v = json(BUDGET);
    let got = num(&v["contributions"][0]["deg"]);
    assert!(
        (got - 0.3 * slope.abs()).abs() < 1e-3 * got,
        "{got} vs {}",
        0.3 * slope.abs()
    );
    // Lattice constant: dδ/da of the same formula (d_row = a/√2) times the table's
    // σa = 1e-4 Å (Cu, CRC Handbook, from memory), a = 3.6149 Å.
    let arm_at = |a: f64| arm_in_plane(10.0, 1.0, 100.0, a / 2f64.sqrt());
    let da = (arm_at(3.6149 + 1e-4) - arm_at(3.6149 - 1e-4)) / 2e-4;
    let got = num(&v["contributions"][1]["deg"]);
    assert!(
        (got - 1e-4 * da.abs()).abs() < 1e-3 * got,
        "{got} vs {}",
        1e-4 * da.abs()
    );
    assert!(
        (num(&v["d_arm_d_lattice_deg_per_a"]) - da).abs() < 1e-3 * da.abs(),
        "{v}"
    );
    assert!((num(&v["d_arm_d_energy_deg_per_ev"]) - slope).abs() < 1e-3 * slope.abs());
    // Arm zero: the default --arm-zero-sigma, 0.02°.
    assert_eq!(num(&v["contributions"][4]["deg"]), 0.02);
    // The aimed arm angle itself.
    assert!((num(&v["arm_deg"]) - arm_at(3.6149)).abs() < 2e-3, "{v}");
}

#[test]
fn fits_recover_synthetic_parameters() {
    let peak = peak_csv();
    for method in ["parabola", "centroid"] {
        let v = json(&[
            "calc",
            "fit",
            "peak",
            "--input",
            peak.to_str().unwrap(),
            "--method",
            method,
        ]);
        // Synthetic: centre 31.37° (chosen in the test).
        assert!((num(&v["angle_deg"]) - 31.37).abs() < 2e-3, "{method}: {v}");
        assert!(v.get("angle_sigma_deg").is_some());
    }
    let v = json(&[
        "calc",
        "fit",
        "arm-zero",
        "--input",
        arm_zero_csv().to_str().unwrap(),
        "--crystal",
        "cu",
        "--face",
        "100",
        "--beam",
        "1,0",
        "--tilt",
        "10",
    ]);
    // Synthetic: δ0 = 0.3°, ΔE = −2 eV (chosen in the test), noise-free: recovered to
    // the f32 rounding of the data and the model (the core's own test allows 5e-3 eV).
    assert!((num(&v["arm_zero_deg"]) - 0.3).abs() < 5e-4, "{v}");
    assert!((num(&v["energy_offset_ev"]) + 2.0).abs() < 5e-3, "{v}");
    assert!(num(&v["rms_residual_deg"]) < 1e-3, "{v}");
    assert_eq!(v["branch"].as_i64(), Some(1));
    assert!(v["residuals"].as_array().is_some_and(|r| r.len() == 7));
    let v = json(&[
        "calc",
        "fit",
        "row-spacing",
        "--input",
        row_csv().to_str().unwrap(),
    ]);
    // Synthetic: d = 2.5562 Å.
    assert!((num(&v["row_spacing_a"]) - 2.5562).abs() < 1e-3, "{v}");
    assert!(v.get("row_spacing_sigma_a").is_some() && v.get("rms_residual_deg").is_some());
    let v = json(&["calc", "fit", "iv", "--input", iv_csv().to_str().unwrap()]);
    // Synthetic: V0 = 11 eV, d = 1.762 Å.
    assert!((num(&v["inner_potential_ev"]) - 11.0).abs() < 0.05, "{v}");
    assert!((num(&v["layer_spacing_a"]) - 1.762).abs() < 1e-3, "{v}");
    assert_eq!(v["points"].as_i64(), Some(5));
}

#[test]
fn bad_csv_rows_name_the_line_and_column() {
    let p = temp_file(
        "bad.csv",
        "# a comment\nangle_deg,current\n10,1\n10.5,abc\n11,2\n",
    );
    let err = fails(&["calc", "fit", "peak", "--input", p.to_str().unwrap()]);
    assert!(err.contains("line 4, column \"current\""), "{err}");
    let p = temp_file("short.csv", "angle_deg,current\n10,1\n10.5\n");
    let err = fails(&["calc", "fit", "peak", "--input", p.to_str().unwrap()]);
    assert!(err.contains("line 3"), "{err}");
    let p = temp_file("nohead.csv", "angle,current\n10,1\n");
    let err = fails(&["calc", "fit", "peak", "--input", p.to_str().unwrap()]);
    assert!(err.contains("lacks column \"angle_deg\""), "{err}");
    let p = temp_file("order.csv", "order,energy_ev\n1.5,100\n");
    let err = fails(&["calc", "fit", "iv", "--input", p.to_str().unwrap()]);
    assert!(err.contains("line 2, column \"order\""), "{err}");
    fails(&["calc", "fit", "peak", "--input", "/nonexistent/scan.csv"]);
    // arm-zero without its model.
    fails(&[
        "calc",
        "fit",
        "arm-zero",
        "--input",
        arm_zero_csv().to_str().unwrap(),
    ]);
}

#[test]
fn bad_rig_files_name_the_field() {
    let good = std::fs::read_to_string(BENCH_B).unwrap();
    let cases = [
        (
            good.replace("[120, 128]", "[128, 120]"),
            "axis \"arm\": field \"zones\"[1]: from must be below to, got [128, 120]",
        ),
        (
            good.replace("backlash_deg = 0.04", "backlash = 0.04"),
            "axis \"arm\": field \"backlash\": unknown field; accepted: full_steps, microsteps, \
             gear, steps_per_deg, home_offset_deg, min_deg, max_deg, zones, backlash_deg, \
             approach, wrap, max_speed_deg_s, accel_deg_s2",
        ),
        (
            good.replace("acceptance_deg = 0.8", "acceptance_deg = -1"),
            "[detector]: field \"acceptance_deg\": must be above 0 up to 20 degrees \
             (half-angle), got -1",
        ),
        (
            good.replace("steps_per_deg = 400", "steps_per_deg = 0"),
            "axis \"elevation\": field \"steps_per_deg\": must be above 0 up to 1000000 \
             microsteps per degree, got 0",
        ),
        (
            good.replace("[tilt]", "[tilted]"),
            "unknown section [tilted]; accepted: name, detector, arm, elevation, tilt, azimuth",
        ),
        (
            good.replace("max_deg = 168", ""),
            "axis \"arm\": field \"max_deg\": missing; an axis that does not wrap needs \
             min_deg and max_deg",
        ),
    ];
    for (i, (text, want)) in cases.iter().enumerate() {
        assert_ne!(text, &good, "case {i} changed nothing");
        let p = temp_file(&format!("bad-rig-{i}.toml"), text);
        let ps = p.to_str().unwrap();
        for args in [
            vec!["rig", "check", "--rig", ps],
            vec![
                "calc",
                "aim",
                "--crystal",
                "cu",
                "--face",
                "100",
                "--beam",
                "0,0",
                "--energy",
                "100",
                "--tilt",
                "20",
                "--rig",
                ps,
            ],
        ] {
            // The whole line: the file, the section, the field, what is wrong and what
            // is accepted.
            let err = fails(&args);
            assert_eq!(
                err.trim_end(),
                format!("mwctl: error: rig file {ps}: {want}")
            );
        }
    }
    assert_eq!(
        fails(&["rig", "check", "--rig", "/nonexistent/rig.toml"]).trim_end(),
        "mwctl: error: rig file /nonexistent/rig.toml: cannot read it: No such file or \
         directory (os error 2)"
    );
}

#[test]
fn rig_show_dumps_a_file_that_reads_back() {
    for rig in [None, Some(BENCH_B)] {
        let mut show = vec!["rig", "show"];
        if let Some(r) = rig {
            show.extend(["--rig", r]);
        }
        let before = json(&show);
        let mut dump = show.clone();
        dump.push("--toml");
        let (code, text, err) = mwctl(&dump);
        assert_eq!(code, 0, "{err}");
        let p = temp_file("dump.toml", &text);
        let again = json(&["rig", "show", "--rig", p.to_str().unwrap()]);
        assert_eq!(before["axes"], again["axes"]);
        assert_eq!(before["name"], again["name"]);
        let (code, _, err) = mwctl(&["rig", "check", "--rig", p.to_str().unwrap()]);
        assert_eq!(code, 0, "{err}");
    }
    let b = json(&["rig", "show", "--rig", BENCH_B]);
    let axes: Vec<&str> = b["axes"]
        .as_array()
        .unwrap()
        .iter()
        .map(|a| a["axis"].as_str().unwrap())
        .collect();
    assert_eq!(axes, ["arm", "elevation", "tilt", "azimuth"]);
    // 200 full steps × 32 microsteps × 80:1 gear / 360 (the example file's numbers).
    assert!((num(&b["axes"][0]["steps_per_deg"]) - 200.0 * 32.0 * 80.0 / 360.0).abs() < 1e-3);
}

#[test]
fn bad_goniometer_input_exits_2() {
    let bad: &[&[&str]] = &[
        &[
            "calc",
            "aim",
            "--crystal",
            "cu",
            "--face",
            "100",
            "--beam",
            "x",
            "--energy",
            "100",
        ],
        &[
            "calc",
            "aim",
            "--crystal",
            "cu",
            "--face",
            "100",
            "--beam",
            "1,0",
            "--energy",
            "0",
        ],
        &[
            "calc",
            "aim",
            "--crystal",
            "cu",
            "--face",
            "100",
            "--beam",
            "1,0",
            "--energy",
            "100",
            "--tilt",
            "95",
        ],
        &[
            "calc",
            "aim",
            "--crystal",
            "cu",
            "--face",
            "100",
            "--beam",
            "1,0",
            "--energy",
            "100",
            "--position",
            "1,2",
        ],
        &[
            "calc",
            "aim",
            "--crystal",
            "cu",
            "--face",
            "100",
            "--beam",
            "1,0",
            "--energy",
            "100",
            "--position",
            "170,0,0,0",
        ],
        &[
            "calc",
            "aim",
            "--crystal",
            "cu",
            "--face",
            "100",
            "--beam",
            "1,0",
            "--energy",
            "100",
            "--position",
            "30,5,0,0",
        ],
        &[
            "calc",
            "track",
            "--crystal",
            "cu",
            "--face",
            "100",
            "--beam",
            "1,0",
            "--from",
            "200",
            "--to",
            "20",
            "--step",
            "10",
        ],
        &[
            "calc",
            "track",
            "--crystal",
            "cu",
            "--face",
            "100",
            "--beam",
            "1,0",
            "--from",
            "20",
            "--to",
            "200",
            "--step",
            "0",
        ],
        &[
            "calc",
            "track",
            "--crystal",
            "cu",
            "--face",
            "100",
            "--beam",
            "1,0",
            "--from",
            "20",
            "--to",
            "200",
            "--step",
            "10",
            "--dwell",
            "-1",
        ],
        &[
            "calc",
            "sweep",
            "--crystal",
            "cu",
            "--face",
            "100",
            "--energy",
            "100",
            "--arm-from",
            "20",
            "--arm-to",
            "80",
            "--step",
            "1",
            "--elevation",
            "5",
        ],
        &[
            "calc",
            "sweep",
            "--crystal",
            "cu",
            "--face",
            "100",
            "--energy",
            "100",
            "--arm-from",
            "20",
            "--arm-to",
            "80",
            "--step",
            "1",
            "--tilt",
            "85",
        ],
        &[
            "calc",
            "view",
            "--crystal",
            "cu",
            "--face",
            "100",
            "--energy",
            "100",
            "--arm",
            "20",
            "--azimuth",
            "0",
            "--tilt",
            "10",
            "--acceptance",
            "0",
        ],
        &[
            "calc",
            "budget",
            "--crystal",
            "cu",
            "--face",
            "100",
            "--beam",
            "1,0",
            "--energy",
            "100",
            "--tilt",
            "10",
            "--energy-spread",
            "nan",
        ],
    ];
    for args in bad {
        fails(args);
    }
}

/// The controller's `budget` request and `mwctl calc budget` run the same core function:
/// on the same crystal, face, beam, energy, tilt, rig (the built-in one) and position
/// (home) they give the same contributions, arm angle and total.
#[test]
fn console_budget_equals_mwctl_budget() {
    use matterwave_core::console::sim::{SimAxes, SimDetector, SimInterlock};
    use matterwave_core::console::Console;
    let mut c = Console::new(
        SimAxes::default(),
        SimDetector::default(),
        SimInterlock { safe: true },
    )
    .unwrap();
    let mut out = Vec::new();
    for line in [
        "set crystal=cu face=100 beam=1,0 energy=100 tilt=10\n",
        "budget energy_spread=0.5 arm_zero_sigma=0.1\n",
    ] {
        for &b in line.as_bytes() {
            c.push(b, &mut out).unwrap();
            while c.poll(&mut out).unwrap() {}
        }
    }
    let text = String::from_utf8(out).unwrap();
    let field = |line: &str, key: &str| -> f64 {
        line.split(' ')
            .find_map(|t| t.strip_prefix(key).and_then(|v| v.strip_prefix('=')))
            .unwrap_or_else(|| panic!("{key} missing in {line}"))
            .parse()
            .unwrap()
    };
    let items: Vec<&str> = text.lines().filter(|l| l.starts_with("- ")).collect();
    let last = text.lines().last().unwrap();
    let mut a = BUDGET.to_vec();
    a.extend_from_slice(&["--energy-spread", "0.5", "--arm-zero-sigma", "0.1"]);
    let v = json(&a);
    let contributions = v["contributions"].as_array().unwrap();
    assert_eq!(items.len(), contributions.len(), "{text}");
    for (item, want) in items.iter().zip(contributions) {
        let name = want["name"].as_str().unwrap().replace(' ', "_");
        assert!(item.contains(&format!("contribution={name} ")), "{item}");
        // mwctl prints 5 decimals.
        assert!(
            (field(item, "deg") - num(&want["deg"])).abs() <= 5e-6,
            "{item} {want}"
        );
    }
    assert!(
        (field(last, "arm") - num(&v["arm_deg"])).abs() <= 5e-5,
        "{last} {v}"
    );
    assert!(
        (field(last, "total") - num(&v["total_deg"])).abs() <= 5e-6,
        "{last} {v}"
    );
}

/// The core's axis checks refuse, through `mwctl rig check`, a home outside the limits
/// and overlapping zones, each with its own code (common practice, no source: a rig
/// whose step 0 lies outside its limits starts every move from a forbidden place).
#[test]
fn rig_check_refuses_home_outside_limits_and_overlapping_zones() {
    let bench = std::fs::read_to_string(BENCH_B).unwrap();
    let cases = [
        (
            "home-outside.toml",
            bench.replace("home_offset_deg = -0.35", "home_offset_deg = -170"),
            "E315",
        ),
        (
            "zones-overlap.toml",
            bench.replace(
                "zones = [[-11, 11], [120, 128]]",
                "zones = [[-11, 11], [5, 20]]",
            ),
            "E318",
        ),
    ];
    for (name, body, code) in cases {
        assert_ne!(
            body, bench,
            "{name}: the example rig file changed; update the test"
        );
        let p = temp_file(name, &body);
        let (status, _, err) = mwctl(&["rig", "check", "--rig", p.to_str().unwrap()]);
        assert_eq!(status, 2, "{name}: {err}");
        assert!(err.contains(code), "{name}: {err}");
    }
}

/// A sweep beyond the arm's limits, or across the gun zone, says why its points are
/// unreachable, with counts that add up (bench default: arm ±165°, zone 0 [-12, 12]°).
#[test]
fn sweep_says_why_points_are_unreachable() {
    let v = json(&[
        "calc",
        "sweep",
        "--crystal",
        "cu",
        "--face",
        "100",
        "--energy",
        "100",
        "--arm-from",
        "0",
        "--arm-to",
        "500",
        "--step",
        "1",
        "--tilt",
        "10",
        "--azimuth",
        "0",
    ]);
    // 166..=500 lie above 165: 335 points; 0..=12 inside the zone: 13 points.
    assert_eq!(v["unreachable_points"], 348, "{v}");
    let why: Vec<&str> = v["unreachable_because"]
        .as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_str().unwrap())
        .collect();
    assert_eq!(
        why,
        [
            "13 points: inside arm forbidden zone 0 [-12, 12] deg",
            "335 points: above the arm upper limit 165 deg"
        ],
        "{v}"
    );
    // An unclosed bracket is not a face.
    let err = fails(&[
        "calc",
        "beams",
        "--crystal",
        "cu",
        "--face",
        "(1,1,1",
        "--energy",
        "100",
    ]);
    assert!(
        err.contains("E116") && err.contains("--face '(1,1,1'"),
        "{err}"
    );
}

/// `calc beams --rig` marks each beam reachable or names what refuses it, agreeing with
/// `calc aim` beam by beam; `--reachable` keeps only the reachable ones.
#[test]
fn beams_with_a_rig_say_which_the_arm_reaches() {
    let rig = bench_b_with_arm_max(40);
    let r = rig.to_str().unwrap();
    let base = [
        "calc",
        "beams",
        "--crystal",
        "ag",
        "--face",
        "100",
        "--energy",
        "95",
        "--tilt",
        "6",
        "--rig",
        r,
    ];
    let v = json(&base);
    let beams = v["beams"].as_array().unwrap();
    let (mut yes, mut no) = (0, 0);
    for b in beams {
        let rod = format!("{},{}", b["h"], b["k"]);
        let (code, _, err) = mwctl(&[
            "calc",
            "aim",
            "--crystal",
            "ag",
            "--face",
            "100",
            "--energy",
            "95",
            "--tilt",
            "6",
            "--azimuth",
            "0",
            "--beam",
            &rod,
            "--rig",
            r,
        ]);
        if b["reachable"] == serde_json::Value::Bool(true) {
            yes += 1;
            assert_eq!(code, 0, "{rod}: listed reachable, aim says {err}");
            assert!(b["refused_by"].is_null(), "{b}");
        } else {
            no += 1;
            assert_eq!(code, 2, "{rod}: listed unreachable, aim succeeds");
            let why = b["refused_by"].as_str().unwrap();
            assert!(
                ["arm", "elevation", "tilt", "azimuth", "evanescent"]
                    .iter()
                    .any(|a| why.starts_with(a)),
                "{why}"
            );
        }
    }
    assert!(yes >= 1 && no >= 1, "{yes} reachable, {no} not");
    assert_eq!(v["reachable"], yes, "{v}");
    let mut only = base.to_vec();
    only.push("--reachable");
    let v = json(&only);
    let listed = v["beams"].as_array().unwrap();
    assert_eq!(listed.len(), yes as usize, "{v}");
    assert!(listed
        .iter()
        .all(|b| b["reachable"] == serde_json::Value::Bool(true)));
    let (code, _, err) = mwctl(&[
        "calc",
        "beams",
        "--crystal",
        "ag",
        "--face",
        "100",
        "--energy",
        "95",
        "--reachable",
    ]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("--rig"), "{err}");
}

/// Inputs too large to be what they claim are refused early and named, and what is
/// echoed of a bad file is cut: a fit CSV beyond the 16-bit point count, a CSV line of
/// 10 kB, a rig file of 5 MB.
#[test]
fn oversized_inputs_are_refused_with_a_short_message() {
    let mut big = String::from("angle_deg,current\n");
    for i in 0..65_536 {
        big.push_str(&format!("{},{}\n", f64::from(i) * 1e-3, i % 7));
    }
    let p = temp_file("oversized-rows.csv", &big);
    let err = fails(&["calc", "fit", "peak", "--input", p.to_str().unwrap()]);
    assert!(
        err.contains("line 65537: more than 65535 data rows"),
        "{err}"
    );
    let p = temp_file(
        "oversized-line.csv",
        &format!("angle_deg,current\n{},2\n", "1".repeat(10_000)),
    );
    let err = fails(&["calc", "fit", "peak", "--input", p.to_str().unwrap()]);
    assert!(err.contains("line 2: longer than 4096 bytes"), "{err}");
    let p = temp_file(
        "huge-rig.toml",
        &format!(
            "name = \"x\"\n[arm]\nsteps_per_deg = {}\n",
            "x".repeat(5_000_000)
        ),
    );
    let err = fails(&["rig", "check", "--rig", p.to_str().unwrap()]);
    assert!(
        err.len() < 400 && err.contains("a rig file is at most"),
        "{err}"
    );
    let p = temp_file(
        "bad-rig-long.toml",
        &format!(
            "name = \"x\"\n[arm]\nsteps_per_deg = {}\u{1b}[31m\n",
            "x".repeat(500_000)
        ),
    );
    let err = fails(&["rig", "check", "--rig", p.to_str().unwrap()]);
    assert!(
        err.len() < 400 && !err.contains('\u{1b}'),
        "{} bytes: {}",
        err.len(),
        &err[..err.len().min(300)]
    );
}
