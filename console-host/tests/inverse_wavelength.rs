//! The inverse wavelength, wavelength → energy, on both paths (`mwctl calc wavelength
//! --wavelength` and the console's `energy lambda=`), checked against the relativistic
//! de Broglie relation written out here in f64 with CODATA 2018 constants:
//! λ = hc/pc, (pc)² = E(E + 2mc²), so E = √((hc/λ)² + (mc²)²) − mc²
//! (hc = 12398.419843320026 eV·Å, mc² = 510998.95000 eV: CODATA 2018, from memory).

mod common;

use common::{json, mwctl};
use matterwave_console::talk::{exchange, sim_console};

/// E(λ) from the relativistic de Broglie relation, f64.
fn energy_ev(lambda_a: f64) -> f64 {
    const HC_EV_A: f64 = 12398.419843320026;
    const MC2_EV: f64 = 510998.95;
    let pc = HC_EV_A / lambda_a;
    // (pc)² / (√((pc)² + (mc²)²) + mc²): the same value without cancellation.
    pc * pc / ((pc * pc + MC2_EV * MC2_EV).sqrt() + MC2_EV)
}

/// Wavelengths over the accepted range: LEED, RHEED and TEM values (invented, not
/// special), both edges near 12.26 Å (1 eV) and 0.0197 Å (300 keV).
const LAMBDAS_A: [f64; 8] = [12.2, 3.0, 1.5, 1.0, 0.55, 0.12, 0.0251, 0.0197];

#[test]
fn mwctl_gives_the_energy_of_a_wavelength() {
    for l in LAMBDAS_A {
        let want = energy_ev(l);
        let v = json(&["calc", "wavelength", "--wavelength", &l.to_string()]);
        let e = v["energy_ev"].as_f64().unwrap();
        assert!((e / want - 1.0).abs() < 2e-6, "{l} Å: {e} eV, want {want}");
        // No corrections: the nominal energy is the energy at the sample, and the
        // report's wavelength is the one asked for.
        assert_eq!(v["nominal_ev"], v["energy_ev"]);
        let back = v["wavelength_a"].as_f64().unwrap();
        assert!((back / l - 1.0).abs() < 2e-6, "{l} Å came back as {back}");
    }
}

#[test]
fn mwctl_wavelength_applies_the_gun_corrections() {
    // Oxide cathode 2.7 eV, sample 4.65 eV, offset -0.4 eV (invented bench values): the
    // gun must be set 4.65 − 2.7 + 0.4 = 2.35 eV above the energy at the sample.
    let v = json(&[
        "calc",
        "wavelength",
        "--wavelength",
        "1.5",
        "--cathode-work-function",
        "2.7",
        "--sample-work-function",
        "4.65",
        "--energy-offset",
        "-0.4",
    ]);
    let want = energy_ev(1.5);
    let e = v["energy_ev"].as_f64().unwrap();
    let n = v["nominal_ev"].as_f64().unwrap();
    assert!((e / want - 1.0).abs() < 2e-6, "{e} vs {want}");
    assert!((n - (want + 2.35)).abs() < 1e-4, "nominal {n}");
}

#[test]
fn mwctl_wavelength_refuses_what_it_cannot_do() {
    for (args, says) in [
        (
            &["--wavelength", "13"][..],
            "E103: --wavelength 13: wavelength too long: energy would be below 1 eV; accepted 0.0197 to 12.26 Å",
        ),
        (
            &["--wavelength", "0.01"][..],
            "E102: --wavelength 0.01: wavelength too short or not positive",
        ),
        (
            &["--wavelength", "-1"][..],
            "E102: --wavelength -1: wavelength too short or not positive",
        ),
        (
            &["--wavelength", "12", "--cathode-work-function", "5"][..],
            "needs 1.044",
        ),
        (&["--wavelength", "1", "--energy", "150"][..], "cannot be used with"),
        (&["--wavelength", "1", "--sample-work-function", "face"][..], "face"),
    ] {
        let mut a = vec!["calc", "wavelength"];
        a.extend_from_slice(args);
        let (code, _, err) = mwctl(&a);
        assert_eq!(code, 2, "{args:?}");
        assert!(err.contains(says), "{args:?}: {err}");
    }
}

#[test]
fn console_energy_request_gives_the_energy_of_a_wavelength() {
    let mut c = sim_console().expect("simulator starts");
    for l in LAMBDAS_A {
        let got = exchange(&mut c, &format!("energy lambda={l}"));
        assert_eq!(got.len(), 1, "{got:?}");
        let e: f64 = got[0]
            .strip_prefix("ok energy=")
            .unwrap_or_else(|| panic!("{l}: {got:?}"))
            .parse()
            .unwrap();
        let want = energy_ev(l);
        assert!((e / want - 1.0).abs() < 2e-6, "{l} Å: {e} eV, want {want}");
        // The same core function as `mwctl`: the same f32, printed round-trip.
        let m = json(&["calc", "wavelength", "--wavelength", &l.to_string()]);
        assert_eq!(m["energy_ev"].as_f64().unwrap() as f32, e as f32, "{l}");
    }
    let bad = exchange(&mut c, "energy lambda=0");
    assert!(bad[0].starts_with("err 102 lambda=\"0\""), "{bad:?}");
    let extra = exchange(&mut c, "energy lambda=1 energy=3");
    assert!(extra[0].starts_with("err "), "{extra:?}");
}
