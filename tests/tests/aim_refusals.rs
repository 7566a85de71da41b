//! Aiming in one place: every refusal of every pose, the fixed axis order, branch
//! preference, and "not emerged" instead of a limit.
//!
//! Expected angles come from the in-plane relation sin θ_out = sin α + b·λ·|g|,
//! δ = α + θ_out (kinematic surface diffraction; any LEED text states it), evaluated
//! here in f64 with λ = hc/√(E(E + 2mc²)), CODATA 2018 hc = 12398.419843320 eV·Å and
//! mc² = 510998.95 eV. Cu a = 3.615 Å (from memory); its (100) face has a square mesh
//! of side a/√2, so rod (1,0) has |g| = √2/a.

use matterwave_core::axis::Zone;
use matterwave_core::beam::Gun;
use matterwave_core::goniometer::{self, AimRequest, Branch, Mode, Rig, Solution};
use matterwave_core::lattice::{Cell, Structure};
use matterwave_core::scan::TrackPlan;
use matterwave_core::surface::Face;
use matterwave_core::{AxisId, Error};

const HC: f64 = 12398.419843320;
const MC2: f64 = 510998.95;
const A_CU: f64 = 3.615;

fn lambda(e: f64) -> f64 {
    HC / (e * (e + 2.0 * MC2)).sqrt()
}

fn energy_of(lambda_a: f64) -> f64 {
    ((HC / lambda_a).powi(2) + MC2 * MC2).sqrt() - MC2
}

/// δ for rod (1,0) of Cu(100) on branch `b`, f64.
fn arm_deg(e: f64, tilt: f64, b: f64) -> f64 {
    let g = 2f64.sqrt() / A_CU;
    let s = tilt.to_radians().sin() + b * lambda(e) * g;
    tilt + s.asin().to_degrees()
}

fn cu100() -> Face {
    Face::new(
        &Cell::new(Structure::Fcc, A_CU as f32, 0.0, 0.0).unwrap(),
        [1, 0, 0],
    )
    .unwrap()
}

/// Both poses refused, by different axes: every refusal is listed, pose by pose, with
/// the amount, and `aim` reports the first one.
#[test]
fn every_refusal_of_every_pose_is_listed_with_its_amount() {
    let f = cu100();
    let (e, tilt) = (120.0, 20.0);
    let plus = arm_deg(e, tilt, 1.0); // ≈ 71.26°
    let minus = arm_deg(e, tilt, -1.0); // ≈ 14.49°
    let mut rig = Rig::bench_default();
    rig.arm.max_deg = 60.0;
    rig.arm.zones[1] = Some(Zone {
        from_deg: 13.0,
        to_deg: 20.0,
    });
    rig.validate().unwrap();
    let req = AimRequest::new(&f, [1, 0], e as f32, tilt as f32);
    let r = goniometer::refusals(&rig, &req, &[0; 4]).unwrap();
    assert_eq!(r.poses, 2, "{r:?}");
    assert_eq!(r.list.len(), 2, "{r:?}");
    let (a, b) = (r.list[0], r.list[1]);
    assert_eq!(
        (a.branch, a.axis, a.error),
        (1, AxisId::Arm, Error::AboveLimit(AxisId::Arm))
    );
    assert!(
        (f64::from(a.target_deg) - plus).abs() < 0.01,
        "{a:?} vs {plus}"
    );
    assert!(
        (f64::from(a.by_deg.unwrap()) - (plus - 60.0)).abs() < 0.01,
        "{a:?}"
    );
    assert_eq!(
        (b.branch, b.axis, b.error),
        (-1, AxisId::Arm, Error::InZone(AxisId::Arm, 1))
    );
    let inside = (minus - 13.0).min(20.0 - minus);
    assert!(
        (f64::from(b.by_deg.unwrap()) - inside).abs() < 0.01,
        "{b:?} vs {inside}"
    );
    let mut out = [Solution::EMPTY; 8];
    assert_eq!(goniometer::aim(&rig, &req, &[0; 4], &mut out), Err(a.error));
}

/// Several axes of one pose refuse it: all of them, in the order tilt, azimuth,
/// elevation, arm — and the tilt comes first in `aim`'s error too.
#[test]
fn axes_are_checked_in_one_fixed_order() {
    let f = cu100();
    let mut rig = Rig::bench_default();
    rig.tilt.max_deg = 10.0;
    rig.azimuth.wrap = false;
    rig.azimuth.min_deg = -90.0;
    rig.azimuth.max_deg = 90.0;
    rig.arm.max_deg = 60.0;
    rig.validate().unwrap();
    let req = AimRequest::new(&f, [1, 0], 120.0, 20.0);
    let r = goniometer::refusals(&rig, &req, &[0; 4]).unwrap();
    let axes: Vec<(i8, AxisId)> = r.list.iter().map(|x| (x.branch, x.axis)).collect();
    // Branch +1: tilt 20 > 10, arm 71 > 60 (azimuth 0 is fine). Branch −1: tilt, and
    // azimuth ±180 beyond ±90 (arm 14.5 is fine).
    assert_eq!(
        axes,
        [
            (1, AxisId::Tilt),
            (1, AxisId::Arm),
            (-1, AxisId::Tilt),
            (-1, AxisId::Azimuth)
        ],
        "{r:?}"
    );
    let mut out = [Solution::EMPTY; 8];
    assert_eq!(
        goniometer::aim(&rig, &req, &[0; 4], &mut out),
        Err(Error::AboveLimit(AxisId::Tilt))
    );
}

/// A branch preference keeps aiming on that branch; `nearest` offers both.
#[test]
fn branch_preference_selects_the_branch() {
    let f = cu100();
    let rig = Rig::bench_default();
    let mut out = [Solution::EMPTY; 8];
    for (pref, want) in [(Branch::Plus, 1.0), (Branch::Minus, -1.0)] {
        // Below ~110 eV branch −1 at tilt 20° lies in the gun zone ±12°.
        for e in [150.0, 200.0, 300.0] {
            let req = AimRequest::new(&f, [1, 0], e as f32, 20.0).with_branch(pref);
            let n = goniometer::aim(&rig, &req, &[0; 4], &mut out)
                .unwrap()
                .stored;
            assert!(n >= 1);
            for s in &out[..n] {
                assert_eq!(f64::from(s.branch), want, "{pref:?} {e} eV: {s:?}");
                let target = f64::from(s.arm.angle_deg + s.arm.residual_deg);
                let want_arm = arm_deg(e, 20.0, want);
                assert!(
                    (target - want_arm).abs() < 0.01,
                    "{e} eV: {target} vs {want_arm}"
                );
            }
        }
    }
    let req = AimRequest::new(&f, [1, 0], 120.0, 20.0);
    let n = goniometer::aim(&rig, &req, &[0; 4], &mut out)
        .unwrap()
        .stored;
    let mut branches: Vec<i8> = out[..n].iter().map(|s| s.branch).collect();
    branches.dedup();
    branches.sort();
    branches.dedup();
    assert_eq!(branches, [-1, 1]);
    // In two-circle mode the azimuth decides: a branch is refused, not ignored.
    let two = req
        .with_mode(Mode::AtAzimuth(0.0))
        .with_branch(Branch::Minus);
    assert_eq!(
        goniometer::aim(&rig, &two, &[0; 4], &mut out),
        Err(Error::BranchNeedsInPlane)
    );
}

/// Below a branch's emergence energy the beam is "not emerged" with that energy —
/// whatever the rig would refuse — never a limit or zone.
#[test]
fn not_emerged_is_never_a_refusal() {
    let f = cu100();
    let g = 2f64.sqrt() / A_CU;
    let tilt = 20f64;
    let s = tilt.to_radians().sin();
    // Branch +1 emerges where λ|g| = 1 − sin α, branch −1 where λ|g| = 1 + sin α.
    let e_plus = energy_of((1.0 - s) / g);
    let e_minus = energy_of((1.0 + s) / g);
    assert!(e_minus < e_plus);
    // A rig that refuses everything in reach: the arm confined to [150, 165].
    let mut rig = Rig::bench_default();
    rig.arm.min_deg = 150.0;
    rig.arm.zones = [None; 4];
    rig.arm.home_offset_deg = 155.0;
    rig.validate().unwrap();
    let mut out = [Solution::EMPTY; 8];
    let e_between = 0.5 * (e_plus + e_minus);
    let cases = [
        (Branch::Plus, e_between, Some(e_plus)),
        (Branch::Nearest, e_minus * 0.98, Some(e_minus)),
        (Branch::Minus, e_minus * 0.98, Some(e_minus)),
    ];
    for (pref, e, emerges) in cases {
        let req = AimRequest::new(&f, [1, 0], e as f32, tilt as f32).with_branch(pref);
        assert_eq!(
            goniometer::aim(&rig, &req, &[0; 4], &mut out),
            Err(Error::Evanescent),
            "{pref:?} at {e} eV"
        );
        let r = goniometer::refusals(&rig, &req, &[0; 4]).unwrap();
        assert_eq!((r.poses, r.list.len()), (0, 0), "{r:?}");
        let got = f64::from(r.emerges_ev.unwrap());
        let want = emerges.unwrap();
        assert!((got / want - 1.0).abs() < 1e-4, "{pref:?}: {got} vs {want}");
    }
    // Above it, the same rig refuses the arm: a limit, not "evanescent".
    let req = AimRequest::new(&f, [1, 0], (e_plus * 1.5) as f32, tilt as f32);
    let err = goniometer::aim(&rig, &req, &[0; 4], &mut out).unwrap_err();
    assert_eq!(err.axis(), Some(AxisId::Arm), "{err:?}");
}

/// A track held on one branch stays on it over the whole range, where the nearest
/// solution would change branch.
#[test]
fn a_track_can_be_held_on_one_branch() {
    let f = cu100();
    let rig = Rig::bench_default();
    let track = |b: Branch| {
        TrackPlan::new(
            rig,
            f,
            [1, 0],
            Gun::plain(0.0),
            40.0,
            400.0,
            20.0,
            20.0,
            Mode::InPlane,
            b,
        )
        .unwrap()
    };
    for (pref, want) in [(Branch::Plus, 1i8), (Branch::Minus, -1)] {
        let plan = track(pref);
        let mut reached = 0;
        for p in plan.iter([0; 4]) {
            if let Ok(s) = p.result {
                assert_eq!(s.branch, want, "{pref:?} at {} eV", p.nominal_ev);
                let target = f64::from(s.arm.angle_deg + s.arm.residual_deg);
                let w = arm_deg(f64::from(p.energy_ev), 20.0, f64::from(want));
                assert!(
                    (target - w).abs() < 0.01,
                    "{} eV: {target} vs {w}",
                    p.nominal_ev
                );
                reached += 1;
            }
        }
        assert!(reached >= 10, "{pref:?}: {reached} reachable points");
    }
}
