//! Four-index (Miller–Bravais) labels (h k i l) of hexagonal crystals in `mwctl calc
//! reflections`, `calc rings` and `calc ivpeaks`, checked against facts outside the
//! project:
//! * the first ten powder lines of an hcp metal with c/a near 1.6 are, by decreasing d,
//!   (10-10), (0002), (10-11), (10-12), (11-20), (10-13), (20-20), (11-22), (20-21),
//!   (0004) (the standard hcp powder pattern, e.g. of Mg or Ru; from memory);
//! * the Miller–Bravais form of the hexagonal d-spacing, which uses i itself:
//!   1/d² = 2(h² + k² + i²)/(3a²) + l²/c² (from memory; it equals the three-index
//!   4(h² + hk + k²)/(3a²) + l²/c² only when i = −(h + k)).

mod common;

use common::{formats_agree, json};
use serde_json::Value;

fn int(v: &Value, key: &str) -> i64 {
    v[key]
        .as_i64()
        .unwrap_or_else(|| panic!("{key} missing: {v}"))
}

/// A 6/mmm family as a comparable key: the sorted |h|, |k|, |i| and |l|.
fn family(h: i64, k: i64, i: i64, l: i64) -> ([i64; 3], i64) {
    let mut a = [h.abs(), k.abs(), i.abs()];
    a.sort();
    (a, l.abs())
}

/// `a` and `c` of a crystal from `mwctl crystals`.
fn a_c(id: &str) -> (f64, f64) {
    let v = json(&["crystals"]);
    let c = v["crystals"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["id"] == id)
        .unwrap_or_else(|| panic!("{id} in the table"));
    (c["a_a"].as_f64().unwrap(), c["c_a"].as_f64().unwrap())
}

#[test]
fn hcp_reflections_carry_their_miller_bravais_labels() {
    let standard = [
        (1, 0, -1, 0),
        (0, 0, 0, 2),
        (1, 0, -1, 1),
        (1, 0, -1, 2),
        (1, 1, -2, 0),
        (1, 0, -1, 3),
        (2, 0, -2, 0),
        (1, 1, -2, 2),
        (2, 0, -2, 1),
        (0, 0, 0, 4),
    ];
    for id in ["ru", "mg"] {
        let (a, c) = a_c(id);
        let v = formats_agree(&[
            "calc",
            "reflections",
            "--crystal",
            id,
            "--energy",
            "100000",
            "--max",
            "10",
        ]);
        let rows = v["reflections"].as_array().unwrap();
        assert_eq!(rows.len(), 10, "{id}");
        for (row, &(h, k, i, l)) in rows.iter().zip(&standard) {
            let (rh, rk, ri, rl) = (int(row, "h"), int(row, "k"), int(row, "i"), int(row, "l"));
            assert_eq!(
                family(rh, rk, ri, rl),
                family(h, k, i, l),
                "{id}: row ({rh} {rk} {ri} {rl})"
            );
            assert_eq!(rh + rk + ri, 0, "{id}: ({rh} {rk} {ri} {rl})");
            let inv_d2 = 2.0 * (rh * rh + rk * rk + ri * ri) as f64 / (3.0 * a * a)
                + (rl * rl) as f64 / (c * c);
            let d = row["d_a"].as_f64().unwrap();
            assert!(
                (d * inv_d2.sqrt() - 1.0).abs() < 1e-5,
                "{id} ({rh} {rk} {ri} {rl}): d {d}, Miller–Bravais {}",
                1.0 / inv_d2.sqrt()
            );
        }
    }
}

#[test]
fn rings_of_a_hexagonal_crystal_have_i_and_cubic_ones_do_not() {
    let hex = formats_agree(&[
        "calc",
        "rings",
        "--crystal",
        "mg",
        "--energy",
        "200000",
        "--screen-distance",
        "500",
        "--max",
        "5",
    ]);
    for row in hex["rings"].as_array().unwrap() {
        assert_eq!(int(row, "h") + int(row, "k") + int(row, "i"), 0, "{row}");
    }
    let cubic = formats_agree(&[
        "calc",
        "reflections",
        "--crystal",
        "cu",
        "--energy",
        "100000",
        "--max",
        "5",
    ]);
    for row in cubic["reflections"].as_array().unwrap() {
        assert!(row.get("i").is_none(), "a cubic crystal has no i: {row}");
    }
}

#[test]
fn iv_peak_g_vectors_of_a_hexagonal_face_are_four_index() {
    // Ru(0001), rod (1,0): every G has i = −(h + k); its component along the normal is
    // l/c for the basal face, and its in-plane length, from the Miller–Bravais metric,
    // is the rod's |g| = 2/(√3·a) (the basal mesh, hexagonal with side a).
    let (a, c) = a_c("ru");
    let v = formats_agree(&[
        "calc",
        "ivpeaks",
        "--crystal",
        "ru",
        "--face",
        "0001",
        "--beam",
        "1,0",
        "--from",
        "20",
        "--to",
        "300",
    ]);
    let peaks = v["peaks"].as_array().unwrap();
    assert!(peaks.len() >= 5, "{v}");
    for p in peaks {
        let (h, k, i, l) = (int(p, "g_h"), int(p, "g_k"), int(p, "g_i"), int(p, "g_l"));
        assert_eq!(h + k + i, 0, "{p}");
        let g_par = (2.0 * (h * h + k * k + i * i) as f64 / (3.0 * a * a)).sqrt();
        assert!((g_par * a * 3f64.sqrt() / 2.0 - 1.0).abs() < 1e-9, "{p}");
        let g_perp = p["g_perp_inv_a"].as_f64().unwrap();
        assert!(
            (g_perp - l as f64 / c).abs() < 2e-5 * g_perp.abs().max(1.0),
            "{p}"
        );
    }
    // A cubic face keeps three indices.
    let cubic = json(&[
        "calc",
        "ivpeaks",
        "--crystal",
        "ir",
        "--face",
        "100",
        "--beam",
        "0,0",
        "--from",
        "20",
        "--to",
        "200",
    ]);
    for p in cubic["peaks"].as_array().unwrap() {
        assert!(p.get("g_i").is_none(), "{p}");
    }
}
