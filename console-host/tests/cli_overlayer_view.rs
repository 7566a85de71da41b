//! End-to-end tests of `mwctl calc view` and `calc sweep` with `--overlayer TEXT
//! [--domains]`: the superstructure's beams in view, crossed and per sweep point, in
//! every format, labelled as `calc beams --overlayer` labels them.
//!
//! Sources: Ni a = 3.524 Å and Si a = 5.431 Å, the crystal table's values; the
//! patterns — Ni(100) p(2×2)-O with its half-order beams, Si(100) (2×1) with (1/2, 0)
//! from one domain and (0, 1/2) from the other — as in M. A. Van Hove, W. H. Weinberg,
//! C.-M. Chan, "Low-Energy Electron Diffraction" (Springer 1986); the half-order beam
//! at normal incidence at sin θ = λ/(2·a_s), a_s = a/√2 the substrate's row period
//! (the grating equation), with λ = hc/√(E(E + 2mc²)), CODATA 2018 hc and mc², in f64
//! here.

mod common;

use common::{formats_agree, json, mwctl};
use serde_json::Value;

const BENCH_B: &str = concat!(env!("CARGO_MANIFEST_DIR"), "/../docs/rigs/bench-b.toml");

fn lambda(e: f64) -> f64 {
    let (hc, mc2) = (12398.419843320f64, 510998.95f64);
    hc / (e * (e + 2.0 * mc2)).sqrt()
}

/// The half-order exit angle at normal incidence, degrees: sin θ = λ/(2·a/√2).
fn half_order_deg(a: f64, e: f64) -> f64 {
    (lambda(e) / (2.0 * a / 2f64.sqrt())).asin().to_degrees()
}

fn num(v: &Value) -> f64 {
    v.as_f64().unwrap_or_else(|| panic!("not a number: {v}"))
}

fn s(x: f64) -> String {
    format!("{x}")
}

fn view(extra: &[&str]) -> Vec<String> {
    let mut a: Vec<String> = [
        "calc",
        "view",
        "--crystal",
        "ni",
        "--face",
        "100",
        "--energy",
        "60",
    ]
    .map(String::from)
    .to_vec();
    a.extend(extra.iter().map(|x| x.to_string()));
    a
}

fn refs(a: &[String]) -> Vec<&str> {
    a.iter().map(String::as_str).collect()
}

/// Ni(100) p(2×2) at 60 eV, normal incidence: at arm θ the detector sees (1/2, 0)
/// where the grating equation puts it, listed as `calc beams --overlayer` lists it;
/// the three formats agree.
#[test]
fn view_finds_the_half_order_beam_of_ni100_p2x2() {
    let theta = half_order_deg(3.524, 60.0);
    let t = s(theta);
    let a = view(&["--arm", &t, "--overlayer", "p(2x2)"]);
    let v = formats_agree(&refs(&a));
    assert_eq!(v["overlayer_matrix"], "2,0,0,2");
    assert_eq!(v["domain_count"], 1);
    let beams = v["beams"].as_array().unwrap();
    assert_eq!(beams.len(), 1, "{v}");
    let b = &beams[0];
    assert_eq!(b["hk"], "1/2,0");
    assert_eq!(b["integer_order"], false);
    assert_eq!(b["domains"], serde_json::json!([0]));
    assert_eq!((num(&b["h"]), num(&b["k"])), (0.5, 0.0));
    assert!((num(&b["arm_deg"]) - theta).abs() < 2e-3, "{b} vs {theta}");
    assert!((num(&b["exit_deg"]) - theta).abs() < 2e-3);
    assert!(num(&b["offset_deg"]) < 2e-3);
    assert_eq!(v["fractional"], 1);
    // The same beam in `calc beams --overlayer`, at the same exit angle.
    let all = json(&[
        "calc",
        "beams",
        "--crystal",
        "ni",
        "--face",
        "100",
        "--energy",
        "60",
        "--overlayer",
        "p(2x2)",
    ]);
    let same = all["beams"]
        .as_array()
        .unwrap()
        .iter()
        .find(|x| x["hk"] == "1/2,0")
        .unwrap();
    assert!((num(&same["exit_deg"]) - num(&b["exit_deg"])).abs() < 1e-3);
}

/// At integer positions the overlayer's view is the substrate's, digit for digit, and
/// with an integer matrix every substrate beam in view is listed.
#[test]
fn integer_order_beams_in_view_are_the_substrates() {
    let common = [
        "--tilt",
        "10",
        "--azimuth",
        "15",
        "--arm",
        "50",
        "--acceptance",
        "20",
    ];
    let plain = json(&refs(&view(&common)));
    let mut a = common.to_vec();
    a.extend(["--overlayer", "c(2x2)"]);
    let sup = json(&refs(&view(&a)));
    let sub = plain["beams"].as_array().unwrap();
    let ints: Vec<&Value> = sup["beams"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|b| b["integer_order"] == true)
        .collect();
    assert_eq!(ints.len(), sub.len(), "{sup}");
    assert!(!sub.is_empty());
    for p in sub {
        let q = ints
            .iter()
            .find(|b| b["h"] == p["h"] && b["k"] == p["k"])
            .unwrap_or_else(|| panic!("{p} missing"));
        for k in [
            "offset_deg",
            "arm_deg",
            "elevation_deg",
            "exit_deg",
            "exit_azimuth_deg",
        ] {
            assert_eq!(q[k], p[k], "{k} of {p}");
        }
    }
    assert!(num(&sup["fractional"]) >= 1.0, "{sup}");
}

/// Si(100) (2×1) at 90 eV: (0, 1/2) leaves along e2 at normal incidence, at arm 0 and
/// elevation θ. Alone the (2×1) has no beam there; with `--domains` the (1×2) domain
/// (domain 1) shows it. Bench B has an elevation axis.
#[test]
fn domains_show_the_second_domains_half_order_beam() {
    let theta = s(half_order_deg(5.431, 90.0));
    let a = |domains: bool| {
        let mut a: Vec<&str> = vec![
            "calc",
            "view",
            "--crystal",
            "si",
            "--face",
            "100",
            "--energy",
            "90",
            "--arm",
            "0",
            "--elevation",
            &theta,
            "--acceptance",
            "1",
            "--rig",
            BENCH_B,
            "--overlayer",
            "(2x1)",
        ];
        if domains {
            a.push("--domains");
        }
        a.iter().map(|x| x.to_string()).collect::<Vec<String>>()
    };
    let alone = json(&refs(&a(false)));
    assert_eq!(alone["count"], 0, "{alone}");
    let both = formats_agree(&refs(&a(true)));
    assert_eq!(both["domain_count"], 2);
    let b = &both["beams"][0];
    assert_eq!(b["hk"], "0,1/2", "{both}");
    assert_eq!(b["domains"], serde_json::json!([1]));
    assert!(num(&b["offset_deg"]) < 2e-3);
}

/// A sweep across Ni(100) p(2×2) at 60 eV: the beams crossed hold (1/2, 0) and
/// (3/2, 0) at their f64 arm angles, and every sweep point that lists a fractional
/// beam lists the one `calc view --overlayer` finds first at that point's arm angle.
#[test]
fn sweep_lists_the_half_order_beams_the_view_finds() {
    let sweep = [
        "calc",
        "sweep",
        "--crystal",
        "ni",
        "--face",
        "100",
        "--energy",
        "60",
        "--arm-from",
        "12.5",
        "--arm-to",
        "80",
        "--step",
        "0.25",
        "--overlayer",
        "p(2x2)",
        "--points",
    ];
    let v = formats_agree(&sweep);
    let crossed = v["beams"].as_array().unwrap();
    let arm_of = |hk: &str| {
        crossed
            .iter()
            .find(|b| b["hk"] == hk)
            .map(|b| num(&b["arm_deg"]))
            .unwrap_or_else(|| panic!("{hk} not crossed: {v}"))
    };
    let a_s = 3.524 / 2f64.sqrt();
    let arm_f64 = |n: f64| (n * lambda(60.0) / a_s).asin().to_degrees();
    assert!((arm_of("1/2,0") - arm_f64(0.5)).abs() < 2e-3);
    assert!((arm_of("3/2,0") - arm_f64(1.5)).abs() < 2e-3);
    assert!((arm_of("1,0") - arm_f64(1.0)).abs() < 2e-3);
    let points = v["sweep_points"].as_array().unwrap();
    let fractional: Vec<&Value> = points
        .iter()
        .filter(|p| p["integer_order"] == false)
        .collect();
    assert!(fractional.len() >= 4, "{fractional:?}");
    let mut labels: Vec<&str> = fractional
        .iter()
        .map(|p| p["hk"].as_str().unwrap())
        .collect();
    labels.dedup();
    assert_eq!(labels, ["1/2,0", "3/2,0"]);
    for p in fractional {
        let arm = s(num(&p["arm_deg"]));
        let w = json(&refs(&view(&["--arm", &arm, "--overlayer", "p(2x2)"])));
        assert_eq!(w["beams"][0]["hk"], p["hk"], "{p}");
        assert!((num(&w["beams"][0]["offset_deg"]) - num(&p["offset_deg"])).abs() < 1e-4);
    }
}

#[test]
fn bad_overlayer_input_exits_2_with_one_line() {
    for a in [
        view(&["--arm", "20", "--domains"]),
        view(&["--arm", "20", "--overlayer", "p(0x2)"]),
        view(&["--arm", "20", "--overlayer", "1,2,2,4"]),
    ] {
        let (code, out, err) = mwctl(&refs(&a));
        assert_eq!(code, 2, "{a:?}: {out} {err}");
        assert!(!err.contains("panicked"), "{err}");
    }
    let (code, _, err) = mwctl(&refs(&view(&["--arm", "20", "--overlayer", "1,2,2,4"])));
    assert_eq!(code, 2);
    assert_eq!(err.trim_end().lines().count(), 1, "{err}");
    assert!(err.contains("--overlayer"), "{err}");
}
