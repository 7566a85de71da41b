//! The console's `steps`: a stepped face's split spots and in/out-of-phase energies.
//!
//! Sources of the checks:
//! - The in/out-of-phase condition of a regular step array (textbook kinematics of
//!   vicinal surfaces, e.g. the LEED chapters of surface-science texts; common
//!   practice): at normal incidence the specular beams of neighbouring terraces are in
//!   phase when 2·h·K = n (K = 1/λ inside the crystal, h the step height) and out of
//!   phase at n + ½. Inside, the kinetic energy is E + V0. Computed here in f64 with the
//!   relativistic wavelength ↔ energy of the independent oracle (CODATA 2018).
//! - Spot splitting (same texts): the two sub-beams of a split spot lie 1/L apart in
//!   k∥, L the terrace width; at normal incidence, near the specular beam, they are
//!   about λ/L radians apart.
//! - The console and `mwctl calc steps` share the core's `surface::steps`; this file
//!   checks the console against the physics, not against the host.

use matterwave_console::oracle;
use matterwave_tests::console::{last, request, sim_console};

fn field<'a>(line: &'a str, key: &str) -> Option<&'a str> {
    matterwave_tests::console::field(line.trim_end(), key)
}

fn num(line: &str, key: &str) -> f64 {
    field(line, key)
        .unwrap_or_else(|| panic!("{key} in {line}"))
        .parse()
        .unwrap()
}

#[test]
fn in_and_out_of_phase_energies_follow_2hk_equal_n() {
    let mut c = sim_console();
    assert!(request(&mut c, "set crystal=cu face=100 energy=100 tilt=0 v0=10").starts_with("ok"));
    // Monatomic steps of Cu(100): a/2 (crystal table a = 3.6149 Å at 293 K).
    let h = 3.6149 / 2.0;
    let r = request(&mut c, "steps miscut=2 from=10 to=300");
    assert!(last(&r).starts_with("ok"), "{r}");
    assert!((num(last(&r), "height") - h).abs() < 1e-3, "{r}");
    let phases: Vec<&str> = r.lines().filter(|l| l.starts_with("- phase")).collect();
    assert!(phases.len() >= 8, "{r}");
    for l in phases {
        let n = num(l, "cycles");
        let lambda_inside = 2.0 * h / n;
        let want = oracle::energy_from_wavelength_ev(lambda_inside) - 10.0;
        let got = num(l, "energy");
        assert!(
            (got - want).abs() < 0.01 * want.max(1.0) + 0.01,
            "{l}: want {want:.3}"
        );
        let whole = n.fract() == 0.0;
        assert_eq!(
            field(l, "in_phase"),
            Some(if whole { "1" } else { "0" }),
            "{l}"
        );
    }
}

#[test]
fn the_split_spots_are_one_over_l_apart_and_the_arm_can_go_there() {
    let mut c = sim_console();
    assert!(
        request(&mut c, "set crystal=cu face=100 energy=61.935 tilt=0 v0=10").starts_with("ok")
    );
    // Out of phase (n = 2.5 at 61.9 eV): two spots of equal weight.
    let r = request(&mut c, "steps terrace=40");
    let subs: Vec<&str> = r.lines().filter(|l| l.starts_with("- sub")).collect();
    assert_eq!(subs.len(), 2, "{r}");
    let (a, b) = (num(subs[0], "offset"), num(subs[1], "offset"));
    assert!(((a - b).abs() - 1.0 / 40.0).abs() < 1e-6, "{r}");
    let (wa, wb) = (num(subs[0], "weight"), num(subs[1], "weight"));
    assert!((wa - wb).abs() < 0.02, "equal weights out of phase: {r}");
    let want = (oracle::wavelength_a(61.935) / 40.0).to_degrees();
    let split = num(last(&r), "splitting_deg");
    assert!((split - want).abs() < 0.01 * want, "{r}: want {want:.4}");
    // Each sub-beam's arm angle is one the arm takes (in the plane: ± its exit angle).
    for l in subs {
        let arm = num(l, "arm");
        assert!((arm.abs() - num(l, "exit")).abs() < 1e-3, "{l}");
        let go = request(&mut c, &format!("move arm={arm}"));
        // Motion is disabled at power-up: the move is refused for that reason only.
        assert!(go.starts_with("err 408"), "{go}");
    }
}

#[test]
fn bad_steps_requests_name_the_key() {
    let mut c = sim_console();
    for (req, code, key) in [
        ("steps", 405, "miscut"),
        ("steps miscut=2 terrace=40", 404, "terrace"),
        ("steps miscut=60", 103, "miscut"),
        ("steps terrace=0.1", 102, "terrace"),
        ("steps miscut=2 height=0", 102, "height"),
        ("steps miscut=2 from=100 to=50", 121, "to"),
    ] {
        let r = request(&mut c, req);
        assert!(r.starts_with(&format!("err {code} {key}")), "{req}: {r}");
    }
    // A fractional beam has no terrace model here.
    assert!(request(&mut c, "set overlayer=p(2x2) beam=1/2,0").starts_with("ok"));
    assert!(request(&mut c, "steps miscut=2").starts_with("err 171 beam"));
}
