//! The energy-dependent inner potential on the console (`set v0_model=energy`): the
//! I-V plan's maxima, the simulated detector's reading, the refusals and the dump.
//!
//! References: copper's V0(E) = min(10.3, 76.6/√(E + 11.4) − 0.75) eV (Rundgren-type
//! form, J. Rundgren, Phys. Rev. B 68, 125405 (2003); copper parameters from memory),
//! evaluated here in f64; at normal incidence the specular maxima of Cu(100) sit where
//! the inside energy E + V0(E) meets the Bragg condition λ = a/n of the (2n 0 0)
//! planes (kinematic Bragg law, common practice, no source), a = 3.6149 Å (the crystal
//! table's); E = √((hc/λ)² + (mc²)²) − mc² with CODATA 2018 hc and mc² (from memory).

mod common;

use common::json;
use matterwave_console::talk::{exchange, sim_console};

/// The field `key=` of a reply line.
fn field<'a>(line: &'a str, key: &str) -> Option<&'a str> {
    line.split(' ')
        .find_map(|t| t.strip_prefix(key).and_then(|v| v.strip_prefix('=')))
}

/// `peak_sample=` of every marked point of `plan kind=iv`.
fn plan_peaks(c: &mut matterwave_console::talk::SimConsole, req: &str) -> Vec<f64> {
    let lines = exchange(c, req);
    assert!(lines.last().unwrap().starts_with("ok points="), "{lines:?}");
    lines
        .iter()
        .filter_map(|l| field(l, "peak_sample"))
        .map(|v| v.parse().unwrap())
        .collect()
}

#[test]
fn plan_maxima_with_energy_model_are_mwctls_and_satisfy_the_form() {
    let mut c = sim_console().unwrap();
    let ok = exchange(
        &mut c,
        "set crystal=cu face=100 tilt=0 beam=0,0 v0_model=energy",
    );
    assert_eq!(ok, ["ok"]);
    let console = plan_peaks(&mut c, "plan kind=iv from=20 to=400 step=1");
    let host = json(&[
        "calc",
        "ivpeaks",
        "--crystal",
        "cu",
        "--face",
        "100",
        "--beam",
        "0,0",
        "--from",
        "20",
        "--to",
        "400",
        "--inner-potential-model",
        "energy",
    ]);
    let host: Vec<f64> = host["peaks"]
        .as_array()
        .unwrap()
        .iter()
        .map(|p| p["energy_ev"].as_f64().unwrap())
        .collect();
    assert!(console.len() >= 4, "{console:?}");
    assert_eq!(console.len(), host.len(), "{console:?} vs {host:?}");
    for (&e, &h) in console.iter().zip(&host) {
        // The console prints 3 decimals, mwctl's table 2: equal to the coarser rounding.
        assert!((e - h).abs() <= 0.005 + 0.0005, "console {e} vs mwctl {h}");
        let v0 = 10.3f64.min(76.6 / (e + 11.4).sqrt() - 0.75);
        // The order n of the maximum nearest E + V0 (λ = a/n inside).
        let a = 3.6149f64;
        let inside_of = |n: f64| {
            let pc = 12398.419843320026 / (a / n);
            pc * pc / ((pc * pc + 510998.95f64.powi(2)).sqrt() + 510998.95)
        };
        let inside = (1..20)
            .map(|n| inside_of(n as f64))
            .min_by(|x, y| (x - e - v0).abs().total_cmp(&(y - e - v0).abs()))
            .unwrap();
        assert!(
            (e + v0 - inside).abs() < 0.02,
            "E {e} + V0 {v0} vs {inside}"
        );
    }
    // The constant model puts them elsewhere (the test tells the models apart).
    exchange(&mut c, "set v0_model=constant");
    let constant = plan_peaks(&mut c, "plan kind=iv from=20 to=400 step=1");
    assert!(constant
        .iter()
        .zip(&console)
        .all(|(a, b)| (a - b).abs() > 0.2));
}

/// The simulated detector, on the console, peaks at the V0(E) maximum: aimed at the
/// specular beam at the energy the plan predicts, it reads the beam current of an I-V
/// maximum (the simulator's 100 nA on 0.2 nA dark and ≤ 0.3 nA diffuse, noise 1 %;
/// docs/SIMULATOR.md), and well less with the constant model there.
#[test]
fn detector_reads_the_maximum_at_the_v0_of_e_energy() {
    let mut c = sim_console().unwrap();
    exchange(
        &mut c,
        "set crystal=cu face=100 tilt=10 beam=0,0 v0_model=energy",
    );
    let peaks = plan_peaks(&mut c, "plan kind=iv from=80 to=120 step=0.5");
    let e = peaks[0];
    assert_eq!(exchange(&mut c, &format!("set energy={e}")), ["ok"]);
    exchange(&mut c, "enable");
    exchange(&mut c, "aim");
    let moved = exchange(&mut c, "move sol=0");
    assert!(moved[0].starts_with("ok"), "{moved:?}");
    let read = |c: &mut matterwave_console::talk::SimConsole| -> f64 {
        let l = exchange(c, "read");
        field(&l[0], "current").unwrap().parse().unwrap()
    };
    let at_max = read(&mut c);
    assert!((at_max - 100.3).abs() < 5.0, "{at_max} nA at {e} eV");
    exchange(&mut c, "set v0_model=constant");
    let constant = read(&mut c);
    assert!(constant < 0.8 * at_max, "{constant} vs {at_max} nA");
}

#[test]
fn refusals_and_the_dump() {
    let mut c = sim_console().unwrap();
    // No form for Ag(100) in the table: err 161, naming the key.
    let l = exchange(&mut c, "set crystal=ag v0_model=energy");
    assert!(l[0].starts_with("err 161 v0_model=\"energy\""), "{l:?}");
    // A relaxation beside V0(E): err 162.
    let l = exchange(&mut c, "set v0_model=energy relax_d12=-5");
    assert!(l[0].starts_with("err 162 v0_model=\"energy\""), "{l:?}");
    assert_eq!(exchange(&mut c, "set v0_model=energy"), ["ok"]);
    let l = exchange(&mut c, "set relax_d23=2");
    assert!(l[0].starts_with("err 162 relax_d23"), "{l:?}");
    // The dump carries the model on its fourth settings line (the overlayer's comes
    // last), and replays.
    let dump = exchange(&mut c, "dump");
    let line = &dump[dump.len() - 3];
    assert_eq!(line, "- set relax_d12=0 relax_d23=0 v0_model=energy");
    let mut fresh = sim_console().unwrap();
    exchange(&mut fresh, "set crystal=ag");
    for l in &dump[..dump.len() - 1] {
        let r = exchange(&mut fresh, l.strip_prefix("- ").unwrap());
        assert!(r[0].starts_with("ok"), "{l}: {r:?}");
    }
    assert_eq!(exchange(&mut fresh, "get v0_model"), ["ok v0_model=energy"]);
    // A crystal without a form takes the model back, and says so.
    let l = exchange(&mut c, "set crystal=ag");
    assert!(
        l[0].ends_with("v0_model=constant v0_model_from=no_form"),
        "{l:?}"
    );
    assert_eq!(exchange(&mut c, "get v0_model"), ["ok v0_model=constant"]);
}

/// `mwctl calc track --inner-potential-model energy` marks the V0(E) maxima of `calc
/// ivpeaks` with the same model (the core's I-V plan and `Face::iv_peaks_model`), each
/// on the point within half a step of it; a face without a form is refused (E161).
#[test]
fn calc_track_marks_the_v0_of_e_maxima() {
    let args = |cmd: &'static str| {
        let mut a = vec![
            "calc",
            cmd,
            "--crystal",
            "cu",
            "--face",
            "100",
            "--beam",
            "0,0",
            "--from",
            "30",
            "--to",
            "200",
            "--tilt",
            "10",
        ];
        a.extend(["--inner-potential-model", "energy"]);
        a
    };
    let mut t = args("track");
    t.extend(["--step", "5"]);
    let track = json(&t);
    assert_eq!(track["inner_potential_model"], "energy");
    assert!(track["inner_potential_ev"].is_null());
    let marks: Vec<(f64, f64)> = track["points"]
        .as_array()
        .unwrap()
        .iter()
        .filter_map(|p| Some((p["energy_ev"].as_f64()?, p["iv_max_ev"].as_f64()?)))
        .collect();
    let peaks: Vec<f64> = json(&args("ivpeaks"))["peaks"]
        .as_array()
        .unwrap()
        .iter()
        .map(|p| p["energy_ev"].as_f64().unwrap())
        .collect();
    assert_eq!(marks.len(), peaks.len(), "{marks:?} vs {peaks:?}");
    assert_eq!(track["iv_maxima"].as_u64(), Some(peaks.len() as u64));
    for ((at, m), p) in marks.iter().zip(&peaks) {
        assert!((m - p).abs() <= 0.005 + 1e-6, "mark {m} vs ivpeaks {p}");
        assert!((at - m).abs() <= 2.5, "marked at {at} eV, maximum {m} eV");
    }
    let (code, _, err) = common::mwctl(&[
        "calc",
        "track",
        "--crystal",
        "ag",
        "--face",
        "100",
        "--beam",
        "0,0",
        "--from",
        "30",
        "--to",
        "200",
        "--step",
        "5",
        "--inner-potential-model",
        "energy",
    ]);
    assert_eq!(code, 2);
    assert!(err.contains("E161"), "{err}");
}

/// `mwctl calc ivpeaks` refuses V0(E) beside a relaxation with the core's error (E162),
/// as the console does.
#[test]
fn ivpeaks_refuses_v0_of_e_with_a_relaxation() {
    let (code, _, err) = common::mwctl(&[
        "calc",
        "ivpeaks",
        "--crystal",
        "cu",
        "--face",
        "100",
        "--beam",
        "0,0",
        "--from",
        "20",
        "--to",
        "400",
        "--inner-potential-model",
        "energy",
        "--relax-d12",
        "-5",
    ]);
    assert_eq!(code, 2);
    assert!(
        err.contains("E162") && err.contains("--relax-d12 -5"),
        "{err}"
    );
}
