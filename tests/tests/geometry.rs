//! Goniometer geometry (the lattice and geometry conventions) against its own invariants, the independent f64
//! oracle (`matterwave_console::oracle`) and published worked values.
//!
//! Every check value names its source beside it. "geometry rules invariant" marks the lab
//! frame conventions; "from memory" marks recalled handbook values; expectations derived
//! from a formula are computed here (in f64) and the number is stated in a comment.
//!
//! Random cases come from a fixed-seed SplitMix64, so a failure reproduces. The largest
//! errors seen are printed (`cargo test -p matterwave-tests --test geometry -- --nocapture`).

use matterwave_console::oracle;
use matterwave_core::axis::{Approach, AxisConfig};
use matterwave_core::goniometer::{self, AimRequest, InView, Mode, Rig, Solution};
use matterwave_core::lattice::{Cell, Structure, System};
use matterwave_core::reflections::{self, Reflection};
use matterwave_core::scan;
use matterwave_core::surface::{Face, Incidence};
use matterwave_core::{beam, table, AxisId, Error};
use matterwave_tests::{exact, ocell, Rng};

// ---------------------------------------------------------------------------------
// Helpers
// ---------------------------------------------------------------------------------

/// Difference of two angles reduced to (−180, 180], degrees.
fn ang_diff(a: f64, b: f64) -> f64 {
    let mut d = (a - b).rem_euclid(360.0);
    if d > 180.0 {
        d -= 360.0;
    }
    d
}

/// The target a setpoint was computed for: reached angle + residual.
fn target(sp: &matterwave_core::axis::Setpoint) -> f64 {
    sp.angle_deg as f64 + sp.residual_deg as f64
}

/// Row spacing 1/|g| of rod (h, k), Å, from the oracle's own mesh of the face (the
/// documented mesh rule, which `oracle_agreement.rs` holds the core to) — not from the
/// core's `row_spacing_a`.
fn oracle_row_spacing_a(c: &table::Crystal, f: &Face, rod: [i32; 2]) -> f64 {
    let om = oracle::mesh_by_rule(&ocell(c), f.miller).expect("oracle mesh");
    let g = oracle::rod_vector(om.a1, om.a2, om.normal, rod);
    1.0 / (g[0] * g[0] + g[1] * g[1] + g[2] * g[2]).sqrt()
}

/// Every face the crystal table lists, built once.
fn table_faces() -> Vec<(&'static table::Crystal, Face)> {
    let mut v = Vec::new();
    for c in table::all() {
        let cell = c.cell().unwrap();
        for fi in c.faces {
            let f = Face::new(&cell, fi.miller)
                .unwrap_or_else(|e| panic!("{} {:?}: {e:?}", c.id, fi.miller));
            v.push((c, f));
        }
    }
    v
}

/// `n` random faces (indices ≤ 3) of random table crystals.
fn random_faces(rng: &mut Rng, n: usize) -> Vec<(&'static table::Crystal, Face)> {
    let crystals = table::all();
    let mut v = Vec::with_capacity(n);
    while v.len() < n {
        let c = &crystals[rng.int(0, crystals.len() as i32 - 1) as usize];
        let hex = c.structure.system() == System::Hexagonal;
        let m = [rng.int(-3, 3), rng.int(-3, 3), rng.int(-3, 3)];
        if m == [0, 0, 0] || (hex && rng.int(0, 2) == 0 && m != [0, 0, 1]) {
            continue;
        }
        let f =
            Face::new(&c.cell().unwrap(), m).unwrap_or_else(|e| panic!("{} {m:?}: {e:?}", c.id));
        v.push((c, f));
    }
    v
}

/// The default rig with the gun zone removed and the arm free over ±179°, so that every
/// exit angle can be aimed at (for checks of the formulas, not of the zone).
fn open_rig() -> Rig {
    let mut rig = Rig::bench_default();
    rig.arm.zones = [None; 4];
    rig.arm.min_deg = -179.0;
    rig.arm.max_deg = 179.0;
    rig
}

/// The default rig with an elevation axis of ±60° (two-circle arm).
fn two_circle_rig() -> Rig {
    let mut rig = Rig::bench_default();
    let mut el = AxisConfig::new(AxisId::Elevation, 200.0 * 16.0 * 100.0 / 360.0);
    el.min_deg = -60.0;
    el.max_deg = 60.0;
    rig.elevation = Some(el);
    rig
}

fn step_deg(ax: &AxisConfig) -> f64 {
    1.0 / ax.steps_per_deg as f64
}

// ---------------------------------------------------------------------------------
// In-plane invariants
// ---------------------------------------------------------------------------------

#[test]
fn specular_beam_sits_at_twice_the_tilt() {
    // geometry rules invariant: in in-plane mode the specular beam sits at δ = 2α at every
    // energy. Tilts with |2α| beyond the default rig's ±12° gun zone.
    let rig = Rig::bench_default();
    let faces = table_faces();
    let mut rng = Rng(0x5be0);
    let mut out = [Solution::EMPTY; 8];
    let mut worst = 0.0f64;
    let n_cases = 4000;
    for i in 0..n_cases {
        let (c, f) = &faces[i % faces.len()];
        let e = rng.energy(5.0, 3.0e5);
        // |α| ≤ 79.9°: the tilt's 0.05° backlash turn-round must stay inside its ±80° limits.
        let tilt = (rng.sign() * rng.range(6.05, 79.9)) as f32;
        let az_steps = rng.int(-200_000, 200_000);
        let cur = [0, 0, 0, az_steps];
        let l = goniometer::aim(
            &rig,
            &AimRequest::new(f, [0, 0], e, tilt).with_mode(Mode::InPlane),
            &cur,
            &mut out,
        )
        .unwrap_or_else(|err| panic!("{} {:?} E={e} tilt={tilt}: {err:?}", c.id, f.miller));
        // One branch; the azimuth wraps; the arm's ±360° copies lie beyond ±165°.
        assert_eq!(l.stored, 1, "{} {:?} E={e} tilt={tilt}", c.id, f.miller);
        let s = &out[0];
        // The geometry uses the tilt the axis really reaches.
        let want = 2.0 * s.tilt.angle_deg as f64;
        let err = (target(&s.arm) - want).abs();
        worst = worst.max(err);
        assert!(
            err < 2e-4,
            "{} {:?} E={e} tilt={tilt}: {s:?}",
            c.id,
            f.miller
        );
        assert!((s.arm.angle_deg as f64 - want).abs() <= 0.5 * step_deg(&rig.arm) + 2e-4);
        assert_eq!(s.branch, 1);
        assert!((s.exit_deg - s.tilt.angle_deg).abs() < 2e-4, "{s:?}");
        assert!(s.elevation.is_none());
        // The specular beam keeps the current azimuth.
        assert_eq!(s.azimuth.steps, az_steps, "{s:?}");
    }
    println!("specular: {n_cases} cases, max |δ − 2α| {worst:.2e} deg");
}

#[test]
fn normal_incidence_exit_is_asin_lambda_over_row_spacing() {
    // surface rules: at normal incidence sin θ = λ/d_row, d_row = 1/|g| (the oracle's);
    // geometry rules: in-plane δ = α + θ_out, so at α = 0 the arm sits at ±θ (branch s).
    let faces = table_faces();
    let open = open_rig();
    let bench = Rig::bench_default();
    let mut out = [Solution::EMPTY; 8];
    let (mut worst, mut n, mut evanescent, mut shadowed) = (0.0f64, 0u32, 0u32, 0u32);
    for (c, f) in &faces {
        for h in -3..=3 {
            for k in -3..=3 {
                let rod = [h, k];
                if rod == [0, 0] {
                    continue;
                }
                let d_row = oracle_row_spacing_a(c, f, rod);
                let core_d = f.row_spacing_a(rod).unwrap() as f64;
                assert!((core_d / d_row - 1.0).abs() < 2e-6, "{} {rod:?}", c.id);
                for e in [15.0f32, 40.0, 100.0, 250.0, 600.0, 2000.0, 2.0e4] {
                    let lam = oracle::wavelength_a(e as f64);
                    let x = lam / d_row;
                    let b = f.beam(rod, &Incidence::normal(e).unwrap());
                    if x > 1.0 + 1e-5 {
                        assert_eq!(b, Err(Error::Evanescent), "{} {rod:?} {e}", c.id);
                        evanescent += 1;
                        continue;
                    }
                    if x > 0.996 {
                        continue; // exit beyond ~85°: f32 rounding decides
                    }
                    let theta = x.asin().to_degrees();
                    let b = b.unwrap();
                    let err = (b.exit_deg as f64 - theta).abs();
                    worst = worst.max(err);
                    assert!(
                        err <= 0.002,
                        "{} {:?} {rod:?} E={e}: {} vs {theta}",
                        c.id,
                        f.miller,
                        b.exit_deg
                    );
                    // In-plane at tilt 0: both branches, arm = exit angle = s·θ.
                    let l = goniometer::aim(
                        &open,
                        &AimRequest::new(f, rod, e, 0.0).with_mode(Mode::InPlane),
                        &[0; 4],
                        &mut out,
                    )
                    .unwrap();
                    assert_eq!(l.stored, 2, "{} {rod:?} E={e}", c.id);
                    for s in &out[..l.stored] {
                        let want = s.branch as f64 * theta;
                        assert!((s.exit_deg as f64 - want).abs() <= 0.002, "{s:?} {want}");
                        assert!((target(&s.arm) - want).abs() <= 0.002, "{s:?} {want}");
                        assert!(
                            (s.arm.angle_deg as f64 - want).abs() <= 0.002 + step_deg(&open.arm)
                        );
                    }
                    assert_ne!(out[0].branch, out[1].branch);
                    // The default rig: the ±12° gun zone refuses small exit angles.
                    let r = goniometer::aim(
                        &bench,
                        &AimRequest::new(f, rod, e, 0.0).with_mode(Mode::InPlane),
                        &[0; 4],
                        &mut out,
                    );
                    if theta > 12.01 {
                        assert_eq!(r.map(|l| l.stored), Ok(2), "{} {rod:?} E={e}", c.id);
                    } else if theta < 11.99 {
                        assert_eq!(r, Err(Error::InZone(AxisId::Arm, 0)));
                        shadowed += 1;
                    }
                    n += 1;
                }
            }
        }
    }
    assert!(n > 10_000, "{n}");
    println!(
        "normal incidence: {n} beams, {evanescent} evanescent, {shadowed} in the gun zone; \
         max exit error {worst:.2e} deg"
    );
}

#[test]
fn oblique_in_plane_both_branches() {
    // geometry rules in-plane mode: sin θ_out = sin α + s·λ·|g| (s = ±1), δ = α + θ_out, and
    // the chosen azimuth turns g onto s·e1 (the beam stays in the scattering plane).
    let rig = open_rig();
    let faces = table_faces();
    let mut rng = Rng(0x0b11);
    let mut out = [Solution::EMPTY; 8];
    let (mut worst_exit, mut worst_arm, mut worst_plane) = (0.0f64, 0.0f64, 0.0f64);
    let mut checked = 0u32;
    for i in 0..8000 {
        let (c, f) = &faces[i % faces.len()];
        let rod = rng.rod();
        let e = if i % 10 == 0 {
            rng.energy(2000.0, 3.0e5)
        } else {
            rng.energy(5.0, 2000.0)
        };
        // |α| ≤ 79.9°: the tilt's 0.05° backlash turn-round must stay inside its ±80° limits.
        let tilt = rng.range(-79.9, 79.9) as f32;
        let lam = oracle::wavelength_a(e as f64);
        let g = 1.0 / oracle_row_spacing_a(c, f, rod);
        let sa = (tilt as f64).to_radians().sin();
        let r = goniometer::aim(
            &rig,
            &AimRequest::new(f, rod, e, tilt).with_mode(Mode::InPlane),
            &[0; 4],
            &mut out,
        );
        let sols: &[Solution] = match &r {
            Ok(l) => &out[..l.stored],
            Err(Error::Evanescent) => &[],
            Err(err) => panic!("{} {rod:?} E={e} tilt={tilt}: {err:?}", c.id),
        };
        for s in [1i8, -1] {
            let x = sa + s as f64 * lam * g;
            let found: Vec<&Solution> = sols.iter().filter(|q| q.branch == s).collect();
            if x.abs() > 1.0 + 1e-5 {
                assert!(
                    found.is_empty(),
                    "{} {rod:?} E={e} tilt={tilt} s={s}: {found:?}",
                    c.id
                );
                continue;
            }
            if x.abs() > 0.996 {
                continue; // grazing exit: f32 rounding decides
            }
            assert_eq!(
                found.len(),
                1,
                "{} {rod:?} E={e} tilt={tilt} s={s}: {sols:?}",
                c.id
            );
            let q = found[0];
            // Expectation at the tilt the axis really reaches.
            let tr = q.tilt.angle_deg as f64;
            let theta = (tr.to_radians().sin() + s as f64 * lam * g)
                .clamp(-1.0, 1.0)
                .asin()
                .to_degrees();
            let e_exit = (q.exit_deg as f64 - theta).abs();
            let e_arm = ang_diff(target(&q.arm), tr + theta).abs();
            worst_exit = worst_exit.max(e_exit);
            worst_arm = worst_arm.max(e_arm);
            assert!(
                e_exit <= 0.002,
                "{} {rod:?} E={e} tilt={tilt}: {q:?} want {theta}",
                c.id
            );
            assert!(
                e_arm <= 0.002,
                "{} {rod:?} E={e} tilt={tilt}: {q:?} want {}",
                c.id,
                tilt as f64 + theta
            );
            // At the chosen azimuth g lies along s·e1: k∥,out = (sin α/λ + s|g|, 0).
            let inc = Incidence::new(e, tilt, target(&q.azimuth) as f32).unwrap();
            let b = f.beam(rod, &inc).unwrap();
            let k = inc.k_inv_a as f64;
            let off_plane = (b.k_par_inv_a[1] as f64 / k).abs();
            worst_plane = worst_plane.max(off_plane);
            assert!(off_plane < 2e-5, "{b:?}");
            assert!((b.k_par_inv_a[0] as f64 / k - x).abs() < 2e-5, "{b:?} {x}");
            checked += 1;
        }
    }
    assert!(checked > 6000, "{checked}");
    println!(
        "oblique in-plane: {checked} branch solutions; max exit error {worst_exit:.2e} deg, \
         max arm error {worst_arm:.2e} deg, max out-of-plane k∥ {worst_plane:.2e} (units of 1/λ)"
    );
}

// ---------------------------------------------------------------------------------
// Bulk Bragg reflections and transmission rings
// ---------------------------------------------------------------------------------

/// Angle between a detector direction and the incident beam (+x), degrees.
fn scattering_angle_deg(arm: f32, elev: f32) -> f64 {
    let d = goniometer::detector_direction(arm, elev);
    let (x, y, z) = (d[0] as f64, d[1] as f64, d[2] as f64);
    (y * y + z * z).sqrt().atan2(x).to_degrees()
}

#[test]
fn bragg_arm_and_ring_points() {
    // geometry rules: a bulk Bragg reflection in the scattering plane has 2θ_B = 180° − δ.
    // lattice rules: nλ = 2d sin θ_B. Detector direction d̂(δ, ν) = (−cos δ cos ν,
    // −sin δ cos ν, sin ν) (geometry rules invariant): the scattering angle of a detector
    // direction is its angle from k_in = +x, and the +y side of the plane has δ < 0.
    let mut buf = [Reflection::EMPTY; 48];
    let mut rng = Rng(0xb7a9);
    let (mut n, mut worst) = (0u32, 0.0f64);
    for c in table::all() {
        let cell = c.cell().unwrap();
        let l = reflections::families(&cell, 0.6, &mut buf).unwrap();
        for r in &buf[..l.stored] {
            for e in [150.0f32, 1.0e3, 1.0e4, 1.0e5, 2.0e5, 3.0e5] {
                let lam = beam::wavelength_a(e).unwrap();
                let th = match reflections::bragg_deg(r.d_a, lam, 1) {
                    Ok(t) => t,
                    Err(Error::NoBraggAngle) => {
                        assert!(
                            oracle::bragg_deg(r.d_a as f64, e as f64, 1).is_none_or(|t| t > 89.0)
                        );
                        continue;
                    }
                    Err(err) => panic!("{err:?}"),
                };
                let want = oracle::bragg_deg(r.d_a as f64, e as f64, 1).unwrap();
                if want < 85.0 {
                    assert!(
                        (th as f64 - want).abs() < 2e-3,
                        "{} {:?} {e}: {th} {want}",
                        c.id,
                        r.hkl
                    );
                }
                let two = 2.0 * th as f64;
                let arm = goniometer::bragg_arm_deg(th);
                assert!((two - (180.0 - arm as f64)).abs() < 1e-4, "{arm} {th}");
                assert!(arm >= 0.0);
                // The arm direction really scatters by 2θ_B.
                let sa = scattering_angle_deg(arm, 0.0);
                worst = worst.max((sa - two).abs());
                assert!((sa - two).abs() < 1e-3, "{sa} {two}");
                // Ring points: every azimuth scatters by 2θ.
                let psis = [0.0f32, 90.0, 180.0, 270.0, rng.range(-180.0, 180.0) as f32];
                for psi in psis {
                    let (pa, pe) = goniometer::ring_point_deg(two as f32, psi);
                    let sa = scattering_angle_deg(pa, pe);
                    // Near the pole (ν → 90°) asin in f32 loses digits: ~1e-6 rad / cos ν.
                    let tol = 1e-3 + (1e-6 / (pe as f64).to_radians().cos()).to_degrees();
                    if pe.abs() < 85.0 {
                        worst = worst.max((sa - two).abs());
                    }
                    assert!((sa - two).abs() < tol, "ψ={psi}: {pa} {pe} {sa} {two}");
                }
                // ψ = 0 is in the scattering plane on the side of positive arm angles:
                // elevation 0 and δ = 180° − 2θ, the arm angle bragg_arm_deg returns.
                // ψ = 180° is the mirror point, δ = −(180° − 2θ).
                let (a0, e0) = goniometer::ring_point_deg(two as f32, 0.0);
                assert!(e0.abs() < 1e-4, "{e0}");
                assert!((a0 - arm).abs() < 1e-3, "{a0} {arm}");
                let (a180, e180) = goniometer::ring_point_deg(two as f32, 180.0);
                assert!(e180.abs() < 1e-4, "{e180}");
                assert!((a180 as f64 + (180.0 - two)).abs() < 1e-3, "{a180} {two}");
                // ψ = 90° is straight up: elevation 2θ (for 2θ < 90°), arm at ±180°.
                if two < 89.0 {
                    let (a90, e90) = goniometer::ring_point_deg(two as f32, 90.0);
                    assert!((e90 as f64 - two).abs() < 1e-3, "{e90} {two}");
                    assert!(ang_diff(a90 as f64, 180.0).abs() < 1e-3, "{a90}");
                }
                n += 1;
            }
        }
    }
    assert!(n > 1000, "{n}");
    println!("bragg: {n} reflections × energies, max scattering-angle error {worst:.2e} deg");
}

// ---------------------------------------------------------------------------------
// What the detector sees inverts aim
// ---------------------------------------------------------------------------------

/// Looks from the solution's (tilt, azimuth) along (arm, elevation) and returns the
/// entry for `rod`, if any, with the largest offset over the listing.
fn seen(face: &Face, e: f32, s: &Solution, rod: [i32; 2]) -> Option<InView> {
    let inc = Incidence::new(e, s.tilt.angle_deg, s.azimuth.angle_deg).unwrap();
    let mut v = [InView::EMPTY; 32];
    let l = goniometer::beams_in_view(face, &inc, s.arm.angle_deg, s.elevation_deg(), 0.5, &mut v)
        .unwrap();
    v[..l.stored].iter().copied().find(|b| b.beam.rod == rod)
}

#[test]
fn beams_in_view_inverts_aim_in_plane() {
    // geometry rules: looking at (δ, 0) from the solution's tilt and azimuth shows the beam
    // that was aimed at. Exit angles ≤ 80°: beyond, the quantised tilt and azimuth
    // (≤ half a step from the request) move a grazing beam by more than 0.01°.
    let rig = Rig::bench_default();
    let mut rng = Rng(0x71e3);
    let faces = random_faces(&mut rng, 40);
    let mut out = [Solution::EMPTY; 8];
    let (mut checked, mut worst) = (0u32, 0.0f64);
    for i in 0..2500 {
        let (c, f) = &faces[i % faces.len()];
        let rod = rng.rod();
        let e = rng.energy(5.0, 1500.0);
        let tilt = rng.range(-75.0, 75.0) as f32;
        let Ok(l) = goniometer::aim(
            &rig,
            &AimRequest::new(f, rod, e, tilt).with_mode(Mode::InPlane),
            &[0; 4],
            &mut out,
        ) else {
            continue;
        };
        for s in &out[..l.stored] {
            if s.exit_deg.abs() > 80.0 {
                continue;
            }
            let v = seen(f, e, s, rod).unwrap_or_else(|| {
                panic!(
                    "{} {:?} {rod:?} E={e} tilt={tilt}: not in view {s:?}",
                    c.id, f.miller
                )
            });
            worst = worst.max(v.offset_deg as f64);
            assert!(
                v.offset_deg < 0.01,
                "{} {:?} {rod:?} E={e} tilt={tilt}: {v:?} {s:?}",
                c.id,
                f.miller
            );
            assert!(v.elevation_deg.abs() < 0.01, "{v:?}");
            checked += 1;
        }
    }
    assert!(checked > 1500, "{checked}");
    println!("in view (in-plane): {checked} solutions, max offset {worst:.2e} deg");
}

#[test]
fn beams_in_view_inverts_aim_two_circle() {
    // As above, two-circle mode (geometry rules): azimuth given, δ and ν from k̂_out.
    let rig = two_circle_rig();
    let mut rng = Rng(0x2c1c);
    let faces = random_faces(&mut rng, 40);
    let mut out = [Solution::EMPTY; 8];
    let (mut checked, mut worst) = (0u32, 0.0f64);
    for i in 0..2500 {
        let (c, f) = &faces[i % faces.len()];
        let rod = rng.rod();
        let e = rng.energy(5.0, 1500.0);
        let tilt = rng.range(-75.0, 75.0) as f32;
        let az = rng.range(-180.0, 180.0) as f32;
        let Ok(l) = goniometer::aim(
            &rig,
            &AimRequest::new(f, rod, e, tilt).with_mode(Mode::AtAzimuth(az)),
            &[0; 4],
            &mut out,
        ) else {
            continue;
        };
        for s in &out[..l.stored] {
            assert!(s.elevation.is_some());
            if s.exit_deg > 80.0 {
                continue;
            }
            let v = seen(f, e, s, rod).unwrap_or_else(|| {
                panic!(
                    "{} {:?} {rod:?} E={e} tilt={tilt} az={az}: not in view {s:?}",
                    c.id, f.miller
                )
            });
            worst = worst.max(v.offset_deg as f64);
            assert!(
                v.offset_deg < 0.01,
                "{} {:?} {rod:?} E={e} tilt={tilt} az={az}: {v:?} {s:?}",
                c.id,
                f.miller
            );
            assert!(
                (v.elevation_deg - s.elevation_deg()).abs() < 0.01,
                "{v:?} {s:?}"
            );
            checked += 1;
        }
    }
    assert!(checked > 1000, "{checked}");
    println!("in view (two-circle): {checked} solutions, max offset {worst:.2e} deg");
}

// ---------------------------------------------------------------------------------
// aim against the oracle
// ---------------------------------------------------------------------------------

#[test]
fn two_circle_aim_agrees_with_oracle() {
    // The core's two-circle (δ, ν) against the oracle's beam_exit arm/elevation, fed the
    // same mesh vectors rebuilt exactly in f64. Tolerance 0.002° (issue requirement, as
    // in oracle_agreement.rs), exit angles ≤ 85°.
    let mut rig = Rig::bench_default();
    rig.arm.zones = [None; 4];
    rig.arm.min_deg = -180.0;
    rig.arm.max_deg = 180.0;
    let mut el = AxisConfig::new(AxisId::Elevation, 200.0 * 16.0 * 100.0 / 360.0);
    el.min_deg = -60.0;
    el.max_deg = 60.0;
    rig.elevation = Some(el);
    let mut rng = Rng(0x0ac1e);
    let faces = random_faces(&mut rng, 60);
    let mut out = [Solution::EMPTY; 8];
    let (mut n, mut worst_arm, mut worst_el) = (0u32, 0.0f64, 0.0f64);
    for i in 0..20_000 {
        let (c, f) = &faces[i % faces.len()];
        let oc = ocell(c);
        let (a1, a2) = (exact(&oc, f.a1_half), exact(&oc, f.a2_half));
        let nrm = oracle::face_normal(&oc, f.miller);
        let rod = if i % 17 == 0 { [0, 0] } else { rng.rod() };
        let e = rng.energy(5.0, 3.0e5);
        let tilt = rng.range(-70.0, 70.0) as f32;
        let az = rng.range(-180.0, 180.0) as f32;
        let o = oracle::beam_exit(a1, a2, nrm, rod, e as f64, tilt as f64, az as f64);
        let r = goniometer::aim(
            &rig,
            &AimRequest::new(f, rod, e, tilt).with_mode(Mode::AtAzimuth(az)),
            &[0; 4],
            &mut out,
        );
        let (l, ob) = match (r, o) {
            (Ok(l), Some(ob)) => (l, ob),
            (Err(Error::Evanescent), None) => continue,
            (Err(Error::Evanescent), Some(ob)) | (Err(_), Some(ob)) if ob.exit_polar_deg > 89.0 => {
                continue
            }
            (
                Err(Error::BelowLimit(AxisId::Elevation) | Error::AboveLimit(AxisId::Elevation)),
                Some(ob),
            ) => {
                assert!(ob.elevation_deg.abs() > 59.99, "{ob:?}");
                continue;
            }
            (Ok(l), None) => {
                assert!(
                    out[0].exit_deg > 89.0,
                    "{} {rod:?}: oracle evanescent, core {:?}",
                    c.id,
                    &out[..l.stored]
                );
                continue;
            }
            (r, o) => panic!(
                "{} {:?} {rod:?} E={e} tilt={tilt} az={az}: {r:?} vs {o:?}",
                c.id, f.miller
            ),
        };
        if ob.exit_polar_deg > 85.0 {
            continue;
        }
        for s in &out[..l.stored] {
            // The oracle at the tilt and azimuth the axes really reach.
            let Some(ob) = oracle::beam_exit(
                a1,
                a2,
                nrm,
                rod,
                e as f64,
                s.tilt.angle_deg as f64,
                s.azimuth.angle_deg as f64,
            ) else {
                continue;
            };
            let ea = ang_diff(target(&s.arm), ob.arm_deg).abs();
            let ee = (target(s.elevation.as_ref().unwrap()) - ob.elevation_deg).abs();
            worst_arm = worst_arm.max(ea);
            worst_el = worst_el.max(ee);
            assert!(
                ea <= 0.002,
                "{} {:?} {rod:?} E={e} tilt={tilt} az={az}: {s:?} vs {ob:?}",
                c.id,
                f.miller
            );
            assert!(
                ee <= 0.002,
                "{} {:?} {rod:?} E={e} tilt={tilt} az={az}: {s:?} vs {ob:?}",
                c.id,
                f.miller
            );
            // The reached angles: within one more step.
            assert!(
                ang_diff(s.arm.angle_deg as f64, ob.arm_deg).abs() <= 0.002 + step_deg(&rig.arm)
            );
            assert!((s.elevation_deg() as f64 - ob.elevation_deg).abs() <= 0.002 + step_deg(&el));
            assert!((s.exit_deg as f64 - ob.exit_polar_deg).abs() <= 0.002);
            n += 1;
        }
    }
    assert!(n > 10_000, "{n}");
    println!("two-circle vs oracle: {n} solutions, max arm error {worst_arm:.2e} deg, max elevation error {worst_el:.2e} deg");
}

// ---------------------------------------------------------------------------------
// Published worked values
// ---------------------------------------------------------------------------------

#[test]
fn cu100_first_order_beam_at_100_ev() {
    // Cu a = 3.615 Å (CRC Handbook of Chemistry and Physics — from memory); fcc(100)
    // rows a/√2 = 2.5562 Å (surface rules). λ(100 eV) = 1.2264 Å (textbook value — from
    // memory; CODATA 2018 gives 1.22637 Å). Expectation computed here from
    // sin θ = λ/d_row: asin(1.22637 / 2.55619) = 28.670°.
    let f = Face::new(
        &Cell::new(Structure::Fcc, 3.615, 0.0, 0.0).unwrap(),
        [1, 0, 0],
    )
    .unwrap();
    let lam = beam::wavelength_a(100.0).unwrap();
    assert!((lam - 1.2264).abs() < 1e-4, "{lam}");
    for rod in [[1, 0], [0, 1], [-1, 0], [0, -1]] {
        let d = f.row_spacing_a(rod).unwrap();
        assert!((d - 2.5562).abs() < 1e-4, "{rod:?} {d}");
        let b = f.beam(rod, &Incidence::normal(100.0).unwrap()).unwrap();
        assert!((b.exit_deg - 28.670).abs() < 2e-3, "{rod:?} {b:?}");
    }
    // Default rig, tilt 0: the arm goes to ±28.670° (geometry rules, δ = α + θ_out).
    let rig = Rig::bench_default();
    let mut out = [Solution::EMPTY; 8];
    let l = goniometer::aim(
        &rig,
        &AimRequest::new(&f, [1, 0], 100.0, 0.0).with_mode(Mode::InPlane),
        &[0; 4],
        &mut out,
    )
    .unwrap();
    assert_eq!(l.stored, 2);
    for s in &out[..2] {
        assert!(
            (target(&s.arm) - s.branch as f64 * 28.670).abs() < 2e-3,
            "{s:?}"
        );
    }
    // Tilt 20° (computed here): s = +1: sin θ = sin 20° + 0.47977 = 0.82178, θ = 55.264°,
    // δ = 75.264°; s = −1: sin θ = −0.13774, θ = −7.917°, δ = 12.083° — just outside the
    // default ±12° gun zone, so the reached arm must be above 12°.
    let l = goniometer::aim(
        &rig,
        &AimRequest::new(&f, [1, 0], 100.0, 20.0).with_mode(Mode::InPlane),
        &[0; 4],
        &mut out,
    )
    .unwrap();
    assert_eq!(l.stored, 2);
    for s in &out[..2] {
        let (th, arm) = if s.branch > 0 {
            (55.264, 75.264)
        } else {
            (-7.917, 12.083)
        };
        assert!((s.exit_deg as f64 - th).abs() < 2e-3, "{s:?}");
        assert!((target(&s.arm) - arm).abs() < 2e-3, "{s:?}");
        assert!(s.arm.angle_deg > 12.0);
    }
}

#[test]
fn transmission_rings_au_al() {
    // Au a = 4.0782 Å, Al a = 4.0495 Å (CRC Handbook — from memory). λ(100 kV) =
    // 0.037014 Å, λ(200 kV) = 0.025079 Å (International Tables Vol. C, Table 4.3.1.1 —
    // from memory). Camera length L = 1000 mm. Expectations computed here (f64, CODATA
    // 2018 λ) from R = L·tan 2θ_B, nλ = 2d sin θ_B (lattice rules). The camera-constant
    // approximation R·d ≈ λL (Williams & Carter, Transmission Electron Microscopy, ch. 9
    // — from memory) holds to (3/2)θ_B² relative, < 5e-4 here.
    // (crystal, a Å, energy eV, hkl, 2θ_B deg, R mm)
    type RingCase = (&'static str, f32, f32, [i32; 3], f64, f64);
    let cases: [RingCase; 8] = [
        ("au", 4.0782, 1.0e5, [1, 1, 1], 0.90072, 15.7218),
        ("au", 4.0782, 1.0e5, [2, 0, 0], 1.04006, 18.1545),
        ("au", 4.0782, 1.0e5, [2, 2, 0], 1.47089, 25.6776),
        ("au", 4.0782, 2.0e5, [1, 1, 1], 0.61029, 10.6519),
        ("al", 4.0495, 1.0e5, [1, 1, 1], 0.90710, 15.8333),
        ("al", 4.0495, 1.0e5, [2, 0, 0], 1.04744, 18.2832),
        ("al", 4.0495, 2.0e5, [1, 1, 1], 0.61461, 10.7274),
        ("al", 4.0495, 2.0e5, [2, 2, 0], 1.00366, 17.5190),
    ];
    for (id, a, e, hkl, two_theta, radius_mm) in cases {
        let cell = Cell::new(Structure::Fcc, a, 0.0, 0.0).unwrap();
        assert!(cell.allowed(hkl));
        let d = cell.d_spacing_a(hkl).unwrap();
        let lam = beam::wavelength_a(e).unwrap();
        let ring = reflections::ring(d, lam, 1000.0).unwrap();
        assert!(
            (ring.two_theta_deg as f64 - two_theta).abs() < 2e-5,
            "{id} {hkl:?} {ring:?}"
        );
        assert!(
            (ring.radius as f64 - radius_mm).abs() < 2e-3,
            "{id} {hkl:?} {ring:?}"
        );
        let camera = lam as f64 * 1000.0 / d as f64;
        assert!(
            (ring.radius as f64 * d as f64 / (lam as f64 * 1000.0) - 1.0).abs() < 5e-4,
            "{id} {hkl:?} {} {camera}",
            ring.radius
        );
        // The arm of the in-plane reflection: δ = 180° − 2θ_B (geometry rules).
        let th = reflections::bragg_deg(d, lam, 1).unwrap();
        assert!((goniometer::bragg_arm_deg(th) as f64 - (180.0 - two_theta)).abs() < 1e-4);
    }
    // The table's Au and Al carry the same constants (tables/crystals.toml).
    assert!((table::find("au").unwrap().a_a - 4.0782).abs() < 1e-4);
    assert!((table::find("al").unwrap().a_a - 4.0495).abs() < 1e-4);
}

// ---------------------------------------------------------------------------------
// Scan time estimate
// ---------------------------------------------------------------------------------

#[test]
fn scan_estimate_sums_trapezoidal_moves() {
    // Trapezoidal profile (common practice kinematics, no source): a move of d with
    // speed v and acceleration a takes d/v + v/a when d ≥ v²/a, else 2√(d/a). Per point
    // the slowest axis counts; a backlash turn-round is two legs; unreachable points are
    // skipped; dwell at each reachable point.
    let mut rig = Rig::bench_default();
    let mut arm = AxisConfig::new(AxisId::Arm, 100.0); // 10 °/s, 20 °/s²
    arm.min_deg = -170.0;
    arm.max_deg = 170.0;
    arm.backlash_deg = 0.5;
    arm.approach = Approach::FromBelow;
    let mut tilt = AxisConfig::new(AxisId::Tilt, 100.0);
    tilt.max_speed_deg_s = 5.0;
    tilt.accel_deg_s2 = 10.0;
    let mut az = AxisConfig::new(AxisId::Azimuth, 100.0);
    az.wrap = true;
    az.max_speed_deg_s = 20.0;
    az.accel_deg_s2 = 40.0;
    rig.arm = arm;
    rig.tilt = tilt;
    rig.azimuth = az;
    rig.elevation = None;
    rig.validate().unwrap();
    let sol = |a: f32, a_from: i32, t: f32, t_from: i32, z: f32, z_from: i32| Solution {
        arm: arm.setpoint(a, a_from).unwrap(),
        tilt: tilt.setpoint(t, t_from).unwrap(),
        azimuth: az.setpoint(z, z_from).unwrap(),
        elevation: None,
        branch: 1,
        exit_deg: 0.0,
        travel_deg: 0.0,
    };
    let start = [2000, 0, 0, 0]; // arm 20°
    let s1 = sol(60.0, 2000, 10.0, 0, 0.0, 0);
    let s2 = sol(61.0, 6000, 10.0, 1000, 90.0, 0);
    let s3 = sol(50.0, 6100, 12.0, 1000, 90.0, 9000);
    assert_eq!(s3.arm.approach_steps, Some(4950)); // 50° − 0.5° backlash, from above
                                                   // Hand computation:
                                                   //  1: arm 20→60 (40° ≥ 5°): 40/10 + 10/20 = 4.5 s; tilt 0→10 (10° ≥ 2.5°): 10/5 + 5/10
                                                   //     = 2.5 s; azimuth still. Slowest 4.5 s.
                                                   //  2: arm 60→61 (1° < 5°): 2√(1/20) = 0.447214 s; azimuth 0→90 (90° ≥ 10°): 90/20 +
                                                   //     20/40 = 5.0 s. Slowest 5.0 s.
                                                   //  3: arm 61→49.5 (11.5°): 1.15 + 0.5 = 1.65 s, then 49.5→50 (0.5°): 2√(0.5/20) =
                                                   //     0.316228 s, together 1.966228 s; tilt 10→12 (2° < 2.5°): 2√(2/10) = 0.894427 s.
                                                   //     Slowest 1.966228 s.
    let moves = 4.5 + 5.0 + 1.966228;
    let pts = || [Some(s1), None, Some(s2), Some(s3)].into_iter();
    let t0 = scan::estimate_s(&rig, start, pts(), 0.0);
    assert!((t0 as f64 - moves).abs() < 1e-4, "{t0} vs {moves}");
    let t1 = scan::estimate_s(&rig, start, pts(), 1.5);
    assert!((t1 as f64 - (moves + 3.0 * 1.5)).abs() < 1e-4, "{t1}");
    // Per-axis legs, for the record.
    assert!((arm.time_to_s(6100, &s3.arm) - 1.966228).abs() < 1e-5);
    assert!((tilt.move_time_s(10.0) - 2.5).abs() < 1e-6);
}

// ---------------------------------------------------------------------------------
// Regression tests for core findings (fixed)
// ---------------------------------------------------------------------------------

#[test]
fn aim_uses_the_reached_tilt() {
    // A coarse tilt axis (1 step per degree): 20.4° is reached as 20°. The specular
    // beam is then at 2 × 20° = 40° (geometry rules invariant), but aim puts the arm at
    // 40.8°, and the detector (acceptance 0.5°) sees nothing there.
    let mut rig = Rig::bench_default();
    rig.tilt.steps_per_deg = 1.0;
    let f = Face::new(
        &Cell::new(Structure::Fcc, 3.615, 0.0, 0.0).unwrap(),
        [1, 0, 0],
    )
    .unwrap();
    let mut out = [Solution::EMPTY; 4];
    let l = goniometer::aim(
        &rig,
        &AimRequest::new(&f, [0, 0], 100.0, 20.4).with_mode(Mode::InPlane),
        &[0; 4],
        &mut out,
    )
    .unwrap();
    let s = &out[..l.stored][0];
    assert_eq!(s.tilt.angle_deg, 20.0);
    assert!(
        (s.arm.angle_deg - 2.0 * s.tilt.angle_deg).abs() <= 0.5 / rig.arm.steps_per_deg + 1e-4,
        "{s:?}"
    );
    assert!(seen(&f, 100.0, s, [0, 0]).is_some_and(|v| v.offset_deg < 0.01));
}
