//! Spot positions on a hemispherical screen and a flat detector (`goniometer::Screen`,
//! `mwctl calc screen`), checked against a worked example computed by hand and against
//! the independent f64 oracle (`oracle::beam_exit` for the beam directions,
//! `oracle::hemisphere_spot_mm` / `flat_spot_mm` / `angle_from_gun_deg` for where they
//! land, by rotating the lab into the detector's frame).

mod common;

use common::{formats_agree, mwctl};
use matterwave_console::oracle::{self, OCell};
use matterwave_core::goniometer::Screen;
use matterwave_core::lattice::{parse_miller, System};
use matterwave_core::surface::{Face, Incidence};
use matterwave_core::table;

fn ocell(id: &str) -> OCell {
    let c = table::find(id).unwrap();
    OCell {
        structure: oracle::structure_from_name(c.structure.name()).unwrap(),
        a: c.a_a as f64,
        b: c.b_a as f64,
        c: c.c_a as f64,
    }
}

fn face(id: &str, text: &str) -> (Face, [i32; 3]) {
    let c = table::find(id).unwrap();
    let m = parse_miller(text, c.structure.system() == System::Hexagonal).unwrap();
    (Face::new(&c.cell().unwrap(), m).unwrap(), m)
}

/// Worked example, by hand: Cu(100), a = 3.6149 Å (the table), so |a1| = a/√2 =
/// 2.556128 Å; at 150.38994 eV the wavelength is 1.000000 Å (the inverse relation
/// E = √((hc/λ)² + (mc²)²) − mc²). At normal incidence the (1,0) beam leaves at
/// sin θ = λ/|a1| = 0.391218 (θ = 23.0303°), along a1 = −ŷ at azimuth 0, i.e. toward
/// positive arm angles: x > 0, y = 0.
/// * Hemisphere R = 100 mm: x = R·sin θ = 39.1218 mm.
/// * Flat detector facing the gun (arm 0, elevation 0) at L = 100 mm: x = L·tan θ =
///   42.5099 mm.
/// * (1,1): sin θ = √2·λ/|a1| = 0.553265 (θ = 33.5913°): on the hemisphere
///   x = y = 39.1218 mm, on the flat detector x = y = L·(λ/|a1|)/cos θ = 46.9647 mm.
/// * The specular beam goes straight back at the gun: hidden by a 5° shadow.
#[test]
fn worked_example_cu100_at_one_angstrom() {
    let base = [
        "calc",
        "screen",
        "--crystal",
        "cu",
        "--face",
        "100",
        "--energy",
        "150.38994",
        "--gun-shadow",
        "5",
    ];
    let spot = |v: &serde_json::Value, h: i64, k: i64| -> (f64, f64, bool) {
        let s = v["spots"]
            .as_array()
            .unwrap()
            .iter()
            .find(|s| s["h"] == h && s["k"] == k)
            .unwrap_or_else(|| panic!("({h},{k}) in {v}"))
            .clone();
        (
            s["x_mm"].as_f64().unwrap(),
            s["y_mm"].as_f64().unwrap(),
            s["shadowed"].as_bool().unwrap(),
        )
    };
    let mut a = base.to_vec();
    a.extend(["--radius", "100"]);
    let hemi = formats_agree(&a);
    let close = |got: f64, want: f64| (got - want).abs() < 2e-3;
    let (x, y, hidden) = spot(&hemi, 1, 0);
    assert!(close(x, 39.1218) && close(y, 0.0) && !hidden, "{x} {y}");
    let (x, y, _) = spot(&hemi, 1, 1);
    assert!(close(x, 39.1218) && close(y, 39.1218), "{x} {y}");
    let (x, y, _) = spot(&hemi, 0, 1);
    assert!(close(x, 0.0) && close(y, 39.1218), "(0,1) is up: {x} {y}");
    let (_, _, hidden) = spot(&hemi, 0, 0);
    assert!(hidden, "the specular beam is in the gun's shadow");
    assert_eq!(hemi["shadowed_count"], 1);

    let mut a = base.to_vec();
    a.extend([
        "--distance",
        "100",
        "--half-width",
        "80",
        "--half-height",
        "80",
        "--spot",
        "42,1",
    ]);
    let flat = formats_agree(&a);
    let (x, y, _) = spot(&flat, 1, 0);
    assert!(close(x, 42.5099) && close(y, 0.0), "{x} {y}");
    let (x, y, _) = spot(&flat, 1, 1);
    assert!(close(x, 46.9647) && close(y, 46.9647), "{x} {y}");
    // The spot measured at (42, 1) mm is the (1,0) beam's.
    assert_eq!(flat["nearest_beam"], "1,0");
    assert!(close(flat["nearest_x_mm"].as_f64().unwrap(), 42.5099));
}

/// By hand: the specular beam of a sample tilted by α leaves at arm 2α in the
/// scattering plane (docs/CONVENTIONS.md), so a flat detector whose normal is at arm
/// 2α shows it at its centre, on its axis.
#[test]
fn tilted_specular_lands_at_the_centre_of_a_detector_at_twice_the_tilt() {
    let v = formats_agree(&[
        "calc",
        "screen",
        "--crystal",
        "ni",
        "--face",
        "111",
        "--energy",
        "90",
        "--tilt",
        "15",
        "--distance",
        "120",
        "--detector-arm",
        "30",
        "--half-width",
        "40",
        "--half-height",
        "40",
    ]);
    let s = v["spots"]
        .as_array()
        .unwrap()
        .iter()
        .find(|s| s["h"] == 0 && s["k"] == 0)
        .unwrap()
        .clone();
    for key in ["x_mm", "y_mm", "from_axis_deg"] {
        assert!(s[key].as_f64().unwrap().abs() < 2e-3, "{key}: {s}");
    }
}

/// Every scene: the core's spots against the oracle's, both ways (every beam the oracle
/// lands on the detector is listed, and nothing else), positions within 1e-4 of the
/// detector's size, the shadow flag where the oracle's angle is not within 1e-3° of the
/// cone; then each spot's own position, given back as a measured spot, names its beam.
#[test]
fn spots_agree_with_the_oracle_and_invert() {
    let hemi = Screen::Hemisphere {
        radius_mm: 66.0,
        rim_deg: 55.0,
    };
    let flat = Screen::Flat {
        distance_mm: 150.0,
        arm_deg: 40.0,
        elevation_deg: 12.0,
        half_width_mm: 70.0,
        half_height_mm: 45.0,
    };
    let scenes = [
        ("cu", "111", 120.0, 8.0, 0.0),
        ("ag", "100", 95.0, 6.0, 17.0),
        ("w", "110", 212.0, -8.0, 33.0),
        ("ru", "0001", 80.0, 20.0, -12.0),
        ("si", "111", 160.0, 35.0, 5.0),
        ("pt", "111", 143.0, 0.0, 0.0),
    ];
    let shadow = 6.0f32;
    let mut compared = 0;
    for (id, face_text, e, tilt, az) in scenes {
        let (f, m) = face(id, face_text);
        let inc = Incidence::new(e, tilt, az).unwrap();
        let mesh = oracle::mesh_by_rule(&ocell(id), m).unwrap();
        for scr in [hemi, flat] {
            let scale_mm = match scr {
                Screen::Hemisphere { radius_mm, .. } => radius_mm as f64,
                Screen::Flat { distance_mm, .. } => distance_mm as f64,
            };
            let core: Vec<_> = scr.spots(&f, &inc, shadow).unwrap().collect();
            // The oracle over a box of rods larger than any beam that exists.
            let mut expected = Vec::new();
            for h in -40..=40 {
                for k in -40..=40 {
                    let Some(b) = oracle::beam_exit(
                        mesh.a1,
                        mesh.a2,
                        mesh.normal,
                        [h, k],
                        e as f64,
                        tilt as f64,
                        az as f64,
                    ) else {
                        continue;
                    };
                    let at = match scr {
                        Screen::Hemisphere { radius_mm, rim_deg } => oracle::hemisphere_spot_mm(
                            b.k_out_lab,
                            radius_mm as f64,
                            rim_deg as f64,
                        ),
                        Screen::Flat {
                            distance_mm,
                            arm_deg,
                            elevation_deg,
                            half_width_mm,
                            half_height_mm,
                        } => oracle::flat_spot_mm(
                            b.k_out_lab,
                            distance_mm as f64,
                            arm_deg as f64,
                            elevation_deg as f64,
                            half_width_mm as f64,
                            half_height_mm as f64,
                        ),
                    };
                    if let Some(xy) = at {
                        expected.push(([h, k], xy, oracle::angle_from_gun_deg(b.k_out_lab)));
                    }
                }
            }
            assert!(!expected.is_empty(), "{id} {face_text}: a scene with spots");
            for (rod, (x, y), gun_deg) in &expected {
                let Some(s) = core.iter().find(|s| s.beam.rod == *rod) else {
                    // A beam at the very edge may fall either side in f32.
                    panic!("{id} {face_text} {scr:?}: {rod:?} at ({x}, {y}) not listed");
                };
                let tol = 1e-4 * scale_mm;
                assert!(
                    (s.at.x_mm as f64 - x).abs() < tol && (s.at.y_mm as f64 - y).abs() < tol,
                    "{id} {face_text} {rod:?}: core ({}, {}) oracle ({x}, {y})",
                    s.at.x_mm,
                    s.at.y_mm
                );
                if (gun_deg - shadow as f64).abs() > 1e-3 {
                    assert_eq!(
                        s.shadowed,
                        *gun_deg < shadow as f64,
                        "{id} {rod:?}: {gun_deg}"
                    );
                }
                // The inverse: the spot's own position names its beam.
                let near = scr
                    .nearest_beam(&f, &inc, s.at.x_mm, s.at.y_mm, 0.5)
                    .unwrap()
                    .unwrap_or_else(|| panic!("{id} {rod:?}: nothing near its own spot"));
                assert_eq!(near.beam.rod, *rod, "{id} {face_text}");
                assert!(near.offset_deg < 0.01, "{id} {rod:?}: {}", near.offset_deg);
                compared += 1;
            }
            assert_eq!(
                core.len(),
                expected.len(),
                "{id} {face_text} {scr:?}: core lists beams the oracle does not land"
            );
        }
    }
    assert!(compared > 100, "compared {compared} spots");
}

#[test]
fn screen_refusals_name_the_option_and_what_is_accepted() {
    let base = [
        "calc",
        "screen",
        "--crystal",
        "cu",
        "--face",
        "100",
        "--energy",
        "150",
    ];
    for (extra, says) in [
        (
            &["--radius", "0"][..],
            "E102: --radius 0 --rim 90 (accepted: radius above 0",
        ),
        (&["--radius", "100", "--rim", "95"][..], "--rim 95"),
        (
            &[
                "--distance",
                "100",
                "--half-width",
                "10",
                "--half-height",
                "-1",
            ][..],
            "--half-height -1",
        ),
        (
            &["--radius", "100", "--gun-shadow", "50"][..],
            "--gun-shadow 50 (accepted 0 to 45 deg)",
        ),
        (
            &["--radius", "100", "--spot", "200,0"][..],
            "the spot must lie on the screen",
        ),
        (
            &["--radius", "100", "--spot", "12"][..],
            "--spot '12': give two numbers X,Y",
        ),
        (
            &["--radius", "100", "--distance", "50"][..],
            "cannot be used with",
        ),
        (&["--distance", "50"][..], "--half-width"),
    ] {
        let mut a = base.to_vec();
        a.extend_from_slice(extra);
        let (code, _, err) = mwctl(&a);
        assert_eq!(code, 2, "{extra:?}");
        assert!(err.contains(says), "{extra:?}: {err}");
    }
}
