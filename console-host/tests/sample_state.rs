//! The sample's temperature and energy-dependent inner potential, through `mwctl` and
//! the console alike.
//!
//! Handbook values: copper's linear expansion coefficient near room temperature is
//! 16.5 × 10⁻⁶/K (CRC Handbook of Chemistry and Physics, 97th ed., "Thermal expansion of
//! metals and alloys", from memory), so from 293 K to 500 K a = 3.6149 Å grows by
//! 16.5e-6 × 207 (the linear model; the handbook's α(T) integrates to 0.360 %, within 5 %
//! of it). Cu(111)'s mesh vector is a/√2 (fcc close-packed plane, common practice, no
//! source).

mod common;

use common::{json, mwctl};
use matterwave_console::talk::{exchange, sim_console};

#[test]
fn temperature_scales_the_mesh_and_is_stated() {
    let room = json(&[
        "calc",
        "beams",
        "--crystal",
        "cu",
        "--face",
        "111",
        "--energy",
        "120",
    ]);
    assert_eq!(
        room["temperature_k"].as_f64(),
        Some(293.0),
        "the table's, stated"
    );
    let hot = json(&[
        "calc",
        "beams",
        "--crystal",
        "cu",
        "--face",
        "111",
        "--energy",
        "120",
        "--temperature",
        "500",
    ]);
    assert_eq!(hot["temperature_k"].as_f64(), Some(500.0));
    let a500 = 3.6149 * (1.0 + 16.5e-6 * 207.0);
    let a1 = hot["a1_a"].as_f64().unwrap();
    assert!(
        (a1 - a500 / 2f64.sqrt()).abs() < 2e-4,
        "{a1} vs {}",
        a500 / 2f64.sqrt()
    );
    // Refused outside the data's range, naming the option and the range.
    let (code, out, err) = mwctl(&[
        "calc",
        "aim",
        "--crystal",
        "k",
        "--face",
        "110",
        "--beam",
        "1,0",
        "--energy",
        "95",
        "--temperature",
        "400",
    ]);
    assert_eq!(code, 2, "{out}");
    assert!(
        err.contains("E160") && err.contains("--temperature 400") && err.contains("100 to 330 K"),
        "{err}"
    );
}

#[test]
fn console_temperature_matches_mwctl() {
    let mut c = sim_console().unwrap();
    let lines = exchange(&mut c, "set crystal=cu face=111 energy=120 temperature=500");
    assert_eq!(lines, ["ok"]);
    let beams = exchange(&mut c, "beams");
    let host = json(&[
        "calc",
        "beams",
        "--crystal",
        "cu",
        "--face",
        "111",
        "--energy",
        "120",
        "--temperature",
        "500",
    ]);
    // The (1,0) row spacing on both paths (the console prints it as row=).
    let row = host["beams"]
        .as_array()
        .unwrap()
        .iter()
        .find(|b| b["h"] == 1 && b["k"] == 0)
        .unwrap()["row_spacing_a"]
        .as_f64()
        .unwrap();
    let line = beams.iter().find(|l| l.contains("h=1 k=0 ")).unwrap();
    let dev: f64 = line
        .split_whitespace()
        .find_map(|w| w.strip_prefix("row="))
        .unwrap()
        .parse()
        .unwrap();
    assert!((dev - row).abs() < 1e-4, "{line} vs {row}");
    // A new crystal goes back to its table temperature and says so.
    let lines = exchange(&mut c, "set crystal=ag");
    assert!(
        lines[0].ends_with("temperature=293 temperature_from=table"),
        "{lines:?}"
    );
}

/// Copper's specular I-V maxima with V0(E): E + V0(E) at each peak is the inside
/// energy of the (2n 0 0) Bragg condition λ = a/n (normal incidence), with V0(E) =
/// min(10.3, 76.6/√(E + 11.4) − 0.75) (Rundgren-type form, J. Rundgren, Phys. Rev. B 68,
/// 125405 (2003); copper parameters from memory), evaluated here in f64.
#[test]
fn ivpeaks_with_energy_dependent_v0() {
    let v = json(&[
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
    assert_eq!(v["inner_potential_model"], "energy");
    let peaks = v["peaks"].as_array().unwrap();
    assert!(peaks.len() >= 4);
    let a = 3.6149f64;
    for p in peaks {
        let e = p["energy_ev"].as_f64().unwrap();
        let v0 = 10.3f64.min(76.6 / (e + 11.4).sqrt() - 0.75);
        assert!((p["v0_ev"].as_f64().unwrap() - v0).abs() < 0.01, "{p}");
        let n = (p["g_h"].as_i64().unwrap().abs() / 2) as f64;
        let lambda = a / n;
        // E = √((hc/λ)² + (mc²)²) − mc², CODATA 2018 (from memory).
        let pc = 12398.419843320026 / lambda;
        let inside = pc * pc / ((pc * pc + 510998.95f64.powi(2)).sqrt() + 510998.95);
        assert!(
            (e + v0 - inside).abs() < 0.02,
            "{p}: {} vs {inside}",
            e + v0
        );
    }
    // No form in the table: refused with a clear error.
    let (code, _, err) = mwctl(&[
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
        "400",
        "--inner-potential-model",
        "energy",
    ]);
    assert_eq!(code, 2);
    assert!(err.contains("E161"), "{err}");
}
