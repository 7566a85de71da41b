//! Unit tests of the module.

/// Against the f64 inversion of λ = hc/√(E(E + 2mc²)) (CODATA 2018 hc and mc²) at
/// λ = (1 + sin α)/|g|, Cu(100) (a = 3.615 Å, from memory) rod (1,0): |g| = √2/a.
#[test]
fn in_plane_emergence_matches_the_f64_inverse() {
    let f = Face::new(
        &Cell::new(Structure::Fcc, 3.615, 0.0, 0.0).unwrap(),
        [1, 0, 0],
    )
    .unwrap();
    for tilt in [0.0f64, 10.0, -25.0, 60.0] {
        let lambda = (1.0 + tilt.to_radians().sin().abs()) * 3.615 / 2f64.sqrt();
        let (hc, mc2) = (12398.419843320f64, 510998.95f64);
        let want = ((hc / lambda).powi(2) + mc2 * mc2).sqrt() - mc2;
        let got = in_plane_emergence_ev(&f, [1, 0], tilt as f32).unwrap() as f64;
        assert!(
            (got / want - 1.0).abs() < 1e-5,
            "tilt {tilt}: {got} vs {want}"
        );
    }
    assert_eq!(in_plane_emergence_ev(&f, [0, 0], 10.0), None);
}

use super::*;
use crate::lattice::{Cell, Structure};

/// Each in-plane branch against the f64 inversion of the relativistic λ(E) (CODATA 2018
/// hc and mc², as above) at the grating equation's grazing exit λ·|g| = 1 − s·sin α
/// (any diffraction textbook's grating equation; the sign convention is
/// docs/CONVENTIONS.md's), Cu(100) rod (1,0); and the beam just above it exists while
/// just below it is evanescent, by the core's own in-plane arm angle.
#[test]
fn each_branch_emerges_where_the_grating_equation_says() {
    let f = cu([1, 0, 0]);
    let (hc, mc2) = (12398.419843320f64, 510998.95f64);
    for tilt in [0.0f64, 6.0, -25.0, 60.0] {
        for s in [1i8, -1] {
            let lambda = (1.0 - f64::from(s) * tilt.to_radians().sin()) * 3.615 / 2f64.sqrt();
            let want = ((hc / lambda).powi(2) + mc2 * mc2).sqrt() - mc2;
            let got = in_plane_branch_emergence_ev(&f, [1, 0], tilt as f32, s).unwrap();
            assert!(
                (f64::from(got) / want - 1.0).abs() < 1e-5,
                "tilt {tilt} branch {s}: {got} vs {want}"
            );
            let t = tilt as f32;
            assert!(in_plane_arm_deg(&f, [1, 0], t, s, got * 1.001).is_ok());
            assert_eq!(
                in_plane_arm_deg(&f, [1, 0], t, s, got * 0.999),
                Err(Error::Evanescent)
            );
        }
        // The branch that emerges first is the one `in_plane_emergence_ev` gives.
        let first = in_plane_emergence_ev(&f, [1, 0], tilt as f32).unwrap();
        let both =
            [1i8, -1].map(|s| in_plane_branch_emergence_ev(&f, [1, 0], tilt as f32, s).unwrap());
        assert!((first / both[0].min(both[1]) - 1.0).abs() < 1e-5);
    }
    assert_eq!(in_plane_branch_emergence_ev(&f, [0, 0], 10.0, 1), None);
    assert_eq!(in_plane_branch_emergence_ev(&f, [1, 0], 10.0, 0), None);
}

fn cu(m: [i32; 3]) -> Face {
    Face::new(&Cell::new(Structure::Fcc, 3.615, 0.0, 0.0).unwrap(), m).unwrap()
}

#[test]
fn specular_at_twice_tilt() {
    let rig = Rig::bench_default();
    let f = cu([1, 1, 1]);
    let mut out = [Solution::EMPTY; 8];
    for e in [20.0, 75.0, 300.0, 2000.0] {
        for t in [10.0f32, 25.0, 60.0] {
            aim(&rig, &AimRequest::new(&f, [0, 0], e, t), &[0; 4], &mut out).unwrap();
            assert!((out[0].arm.angle_deg - 2.0 * t).abs() < 1e-3);
        }
    }
}

#[test]
fn two_circle_agrees_with_in_plane() {
    let mut rig = Rig::bench_default();
    let mut el = AxisConfig::new(AxisId::Elevation, 1000.0);
    el.min_deg = -60.0;
    el.max_deg = 60.0;
    rig.elevation = Some(el);
    let f = cu([1, 0, 0]);
    let mut a = [Solution::EMPTY; 8];
    let mut b = [Solution::EMPTY; 8];
    let n = aim(
        &rig,
        &AimRequest::new(&f, [1, 1], 150.0, 15.0).with_mode(Mode::InPlane),
        &[0; 4],
        &mut a,
    )
    .unwrap()
    .stored;
    for s in &a[..n] {
        let m = aim(
            &rig,
            &AimRequest::new(&f, [1, 1], 150.0, 15.0)
                .with_mode(Mode::AtAzimuth(s.azimuth.angle_deg)),
            &[0; 4],
            &mut b,
        )
        .unwrap()
        .stored;
        assert!(m >= 1);
        assert!(
            (b[0].arm.angle_deg - s.arm.angle_deg).abs() < 0.01,
            "{:?} {:?}",
            b[0],
            s
        );
        assert!(b[0].elevation_deg().abs() < 0.01);
    }
}

#[test]
fn gun_shadow_is_reported() {
    let rig = Rig::bench_default();
    let f = cu([1, 0, 0]);
    let mut out = [Solution::EMPTY; 4];
    // Specular at tilt 3°: δ = 6°, inside the ±12° shadow.
    let e = aim(
        &rig,
        &AimRequest::new(&f, [0, 0], 100.0, 3.0).with_mode(Mode::InPlane),
        &[0; 4],
        &mut out,
    );
    assert_eq!(e, Err(Error::InZone(AxisId::Arm, 0)));
}

/// The bounded search of `beams_in_view` against every beam of the face tested
/// one by one (the angle between the beam's and the detector's directions).
#[test]
fn beams_in_view_finds_every_beam_within_the_acceptance() {
    extern crate std;
    use std::vec::Vec;
    let mut n_seen = 0;
    for m in [[1, 0, 0], [1, 1, 1], [3, 2, 1]] {
        let f = cu(m);
        for (e, tilt, az) in [
            (120.0, 10.0, 0.0),
            (900.0, 40.0, 25.0),
            (5000.0, -20.0, 100.0),
        ] {
            let inc = Incidence::new(e, tilt, az).unwrap();
            for (arm, elev, acc) in [(30.0, 0.0, 2.0), (-50.0, 10.0, 5.0), (95.0, -3.0, 20.0)] {
                let d = detector_direction(arm, elev);
                let mut want: Vec<[i32; 2]> = f
                    .beams_iter(&inc)
                    .filter(|b| {
                        let k = beam_direction_lab(b, &inc);
                        math::dot(k, d) >= math::cos(math::rad(acc))
                    })
                    .map(|b| b.rod)
                    .collect();
                let mut out = [InView::EMPTY; 4096];
                let l = beams_in_view(&f, &inc, arm, elev, acc, &mut out).unwrap();
                assert!(!l.truncated);
                let mut got: Vec<[i32; 2]> = out[..l.stored].iter().map(|v| v.beam.rod).collect();
                want.sort();
                got.sort();
                assert_eq!(got, want, "{m:?} {e} eV arm {arm} elev {elev} acc {acc}");
                n_seen += got.len();
            }
        }
    }
    assert!(n_seen >= 50, "{n_seen} beams in view over all cases");
}

/// The bounded nearest search against the first of the full list, at energies
/// from sparse (100 eV) to dense (300 keV: thousands of beams within a degree).
#[test]
fn nearest_in_view_is_the_first_in_view() {
    let mut found = 0;
    for m in [[1, 0, 0], [3, 2, 1], [7, 5, 3]] {
        let f = cu(m);
        for (e, tilt, az) in [
            (100.0, 10.0, 0.0),
            (3000.0, 40.0, 25.0),
            (300_000.0, 30.0, 0.0),
        ] {
            let inc = Incidence::new(e, tilt, az).unwrap();
            for i in 0..40 {
                let arm = -150.0 + 7.3 * i as f32;
                let elev = 0.3 * (i % 5) as f32;
                let mut one = [InView::EMPTY; 1];
                let l = beams_in_view(&f, &inc, arm, elev, 1.0, &mut one).unwrap();
                let want = (l.stored > 0).then_some(one[0]);
                let got = nearest_in_view(&f, &inc, arm, elev, 1.0).unwrap();
                assert_eq!(
                    got.map(|v| v.beam.rod),
                    want.map(|v| v.beam.rod),
                    "{m:?} {e} eV arm {arm} elev {elev}: {got:?} vs {want:?}"
                );
                found += usize::from(got.is_some());
            }
        }
    }
    assert!(found >= 60, "{found} points with a beam in view");
}

#[test]
fn beams_in_view_inverts_aim() {
    let rig = Rig::bench_default();
    let f = cu([1, 1, 0]);
    let mut out = [Solution::EMPTY; 8];
    let n = aim(
        &rig,
        &AimRequest::new(&f, [1, 0], 120.0, 20.0).with_mode(Mode::InPlane),
        &[0; 4],
        &mut out,
    )
    .unwrap()
    .stored;
    for s in &out[..n] {
        let inc = Incidence::new(120.0, s.tilt.angle_deg, s.azimuth.angle_deg).unwrap();
        let mut v = [InView::EMPTY; 4];
        let k = beams_in_view(&f, &inc, s.arm.angle_deg, 0.0, 0.5, &mut v)
            .unwrap()
            .stored;
        assert!(k >= 1 && v[0].beam.rod == [1, 0], "{:?}", &v[..k]);
        assert!(v[0].offset_deg < 0.01);
    }
}

/// A detector pointed exactly along a beam sees that beam: with the offset near zero
/// the search disk shrinks to the rounding of k∥, and the seed beam found first must not
/// be lost (it was, for W(110) (2,2) at 212 eV, tilt −8°, azimuth 33°: `None`).
/// W a = 3.1652 Å (the crystal table's value).
#[test]
fn nearest_in_view_on_the_beam_itself() {
    let f = Face::new(
        &Cell::new(Structure::Bcc, 3.1652, 0.0, 0.0).unwrap(),
        [1, 1, 0],
    )
    .unwrap();
    let inc = Incidence::new(212.0, -8.0, 33.0).unwrap();
    let mut n = 0;
    for b in f.beams_iter(&inc) {
        let (arm, elev) = arm_elevation_deg(beam_direction_lab(&b, &inc));
        let got = nearest_in_view(&f, &inc, arm, elev, 0.5).unwrap();
        assert_eq!(got.map(|v| v.beam.rod), Some(b.rod), "{b:?}");
        n += 1;
    }
    assert!(n > 10);
}
