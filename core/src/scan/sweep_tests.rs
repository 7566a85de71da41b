//! Tests of the arm sweep with an overlayer.
//!
//! Sources: Ni a = 3.524 Å and Si a = 5.431 Å (the crystal table's values,
//! tables/crystals.toml cites them); the p(2×2)-O pattern on Ni(100) with its
//! half-order beams as in M. A. Van Hove, W. H. Weinberg, C.-M. Chan, "Low-Energy
//! Electron Diffraction" (Springer 1986); λ(E) = hc/√(E(E + 2mc²)) with CODATA 2018
//! hc and mc².

extern crate std;
use std::string::{String, ToString};
use std::vec::Vec;

use super::*;
use crate::lattice::{Cell, Structure};

fn ni100() -> Face {
    Face::new(
        &Cell::new(Structure::Fcc, 3.524, 0.0, 0.0).unwrap(),
        [1, 0, 0],
    )
    .unwrap()
}

fn p2x2(with_domains: bool) -> Option<Overlayer> {
    Some(Overlayer::new(
        Superstructure::new([[2, 0], [0, 2]], 1).unwrap(),
        with_domains,
    ))
}

/// The controller's RAM is nearly full: an overlayer may add at most 16 bytes to a
/// sweep plan. Before it, `size_of::<SweepPlan>()` was 656 bytes on the host (measured
/// on the parent commit e799157); the overlayer is a 5-byte matrix and a flag.
#[test]
fn an_overlayer_adds_at_most_16_bytes_to_a_sweep_plan() {
    let size = core::mem::size_of::<SweepPlan>();
    std::println!(
        "size_of SweepPlan {size}, Option<Overlayer> {}, SweepPoint {}, IvPlan {}",
        core::mem::size_of::<Option<Overlayer>>(),
        core::mem::size_of::<SweepPoint>(),
        core::mem::size_of::<crate::scan::IvPlan>()
    );
    assert!(size <= 656 + 16, "{size}");
    assert!(core::mem::size_of::<Option<Overlayer>>() <= 8);
}

/// A sweep across the scattering plane of Ni(100) p(2×2) at normal incidence: the
/// points that see a fractional beam see exactly what the view finds at their arm
/// angles, the half-order beams (±1/2, 0) are among them near δ = ±θ with
/// sin θ = λ/(2·a/√2) (f64 from the formula), and `super_beams_crossed` lists them at
/// those arm angles. Without an overlayer the points are those of the plain plan.
#[test]
fn a_sweep_lists_the_half_order_beams_the_view_finds() {
    let f = ni100();
    let e = 60.0f64;
    let (hc, mc2) = (12398.419843320f64, 510998.95f64);
    let lambda = hc / (e * (e + 2.0 * mc2)).sqrt();
    let theta = (lambda / (2.0 * 3.524 / 2f64.sqrt())).asin().to_degrees();
    let inc = Incidence::normal(e as f32).unwrap();
    let rig = Rig::bench_default();
    let plain = SweepPlan::new(rig, f, inc, 0.0, 12.5, 80.0, 0.25).unwrap();
    let plan = plain.with_overlayer(p2x2(false));
    let mut seen: Vec<(String, f32)> = Vec::new();
    for (p, q) in plan.iter(0).zip(plain.iter(0)) {
        assert_eq!(p.in_view, q.in_view);
        assert_eq!(q.super_in_view, None);
        let want = goniometer::super_nearest_in_view(
            &f,
            &[plan.overlayer.unwrap().sup],
            &inc,
            p.arm_deg,
            0.0,
            rig.acceptance_deg,
        )
        .unwrap();
        assert_eq!(p.super_in_view, want, "arm {}", p.arm_deg);
        if let Some(v) = p.super_in_view.filter(|v| !v.beam.integer) {
            seen.push((v.beam.pos.to_string(), p.arm_deg));
        }
    }
    let at = |label: &str| -> Vec<f32> {
        seen.iter()
            .filter(|(l, _)| l == label)
            .map(|(_, a)| *a)
            .collect()
    };
    let half = at("1/2,0");
    assert!(!half.is_empty(), "{seen:?}");
    assert!(half.iter().all(|a| (f64::from(*a) - theta).abs() <= 1.0));
    assert!(!at("3/2,0").is_empty(), "{seen:?}");
    let mut crossed = [SuperInView::EMPTY; 64];
    let l = plan.super_beams_crossed(&mut crossed).unwrap();
    assert!(!l.truncated);
    let crossed = &crossed[..l.stored];
    assert!(crossed.windows(2).all(|w| w[0].arm_deg <= w[1].arm_deg));
    let h = crossed
        .iter()
        .find(|c| c.beam.pos.to_string() == "1/2,0")
        .unwrap();
    assert!((f64::from(h.arm_deg) - theta).abs() < 0.002);
    // Every fractional beam crossed is what the view sees at its own arm angle.
    for c in crossed.iter().filter(|c| !c.beam.integer) {
        let v = goniometer::super_nearest_in_view(
            &f,
            &[plan.overlayer.unwrap().sup],
            &inc,
            c.arm_deg,
            0.0,
            0.01,
        )
        .unwrap()
        .unwrap();
        assert_eq!(v.beam.pos, c.beam.pos);
    }
    // The integer-order beams crossed are the plain plan's, bit for bit.
    let mut sub = [InView::EMPTY; 64];
    let ls = plain.beams_crossed(&mut sub).unwrap();
    let ints: Vec<&SuperInView> = crossed.iter().filter(|c| c.beam.integer).collect();
    assert_eq!(ints.len(), ls.stored);
    for s in &sub[..ls.stored] {
        let c = ints
            .iter()
            .find(|c| c.beam.pos.integer() == Some(s.beam.rod))
            .unwrap();
        assert_eq!(
            (c.beam.beam, c.arm_deg, c.offset_deg),
            (s.beam, s.arm_deg, s.offset_deg)
        );
    }
    let mut none = [SuperInView::EMPTY; 4];
    assert_eq!(plain.super_beams_crossed(&mut none).unwrap().stored, 0);
}

/// With domains, a sweep at the elevation of (0, 1/2) of Si(100) (2×1) finds it from
/// the second domain only (the first domain's points see none there).
#[test]
fn a_sweep_with_domains_sees_the_second_domains_beam() {
    let si = Face::new(
        &Cell::new(Structure::Diamond, 5.431, 0.0, 0.0).unwrap(),
        [1, 0, 0],
    )
    .unwrap();
    let e = 90.0f64;
    let (hc, mc2) = (12398.419843320f64, 510998.95f64);
    let lambda = hc / (e * (e + 2.0 * mc2)).sqrt();
    let theta = (lambda / (2.0 * 5.431 / 2f64.sqrt())).asin().to_degrees() as f32;
    let mut rig = Rig::bench_default();
    let mut el = crate::axis::AxisConfig::new(crate::error::AxisId::Elevation, 100.0);
    el.min_deg = -80.0;
    el.max_deg = 80.0;
    rig.elevation = Some(el);
    let sup = Superstructure::new([[2, 0], [0, 1]], 1).unwrap();
    let inc = Incidence::normal(e as f32).unwrap();
    let plan = SweepPlan::new(rig, si, inc, theta, -2.0, 2.0, 0.5).unwrap();
    let one = plan.with_overlayer(Some(Overlayer::new(sup, false)));
    let both = plan.with_overlayer(Some(Overlayer::new(sup, true)));
    let mid = 4; // arm 0
    assert!(one.point(mid, 0).super_in_view.is_none());
    let v = both.point(mid, 0).super_in_view.unwrap();
    assert_eq!(
        (v.beam.pos.to_string().as_str(), v.beam.domains),
        ("0,1/2", 0b10)
    );
}
