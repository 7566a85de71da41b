//! The core's f32 results against the independent f64 oracle
//! (`matterwave_console::oracle`), over random energies 1 eV–300 keV, every table
//! crystal, faces with indices up to 3, tilts −70°..70° and random azimuths.
//!
//! Every tolerance is in [`tol`], one set for the default libm backend and one for the
//! `fast-math` backend (`cargo test -p matterwave-tests --features fast-math --test
//! oracle_agreement`). With libm: wavelength relative error ≤ 1e-6; exit-angle error
//! ≤ 0.002° wherever the exit angle is ≤ 85°. The largest errors seen are printed
//! (`-- --nocapture`).

use matterwave_console::oracle::{self, OCell};
use matterwave_core::goniometer;
use matterwave_core::lattice::Structure;
use matterwave_core::surface::{Face, Incidence, IvPeak};
use matterwave_core::{beam, table, Error};
use matterwave_tests::{ocell, Rng};

/// Tolerances, in one place per float backend.
mod tol {
    /// The libm backend (default): the requirement values.
    #[cfg(not(feature = "fast-math"))]
    mod values {
        pub const WAVELENGTH_REL: f64 = 1e-6;
        pub const VELOCITY_REL: f64 = 1e-6;
        pub const ROUND_TRIP_REL: f64 = 2e-6;
        pub const MESH_REL: f64 = 2e-5;
        pub const GAMMA_DEG: f64 = 2e-3;
        pub const IN_PLANE_A: f64 = 1e-4;
        pub const NORMAL_RAD: f64 = 1e-6;
        pub const EXIT_DEG: f64 = 0.002;
        pub const LAB_DEG: f64 = 0.002;
        pub const EMERGENCE_REL: f64 = 1e-4;
        pub const IV_REL: f64 = 2e-5;
        pub const IV_ABS_EV: f64 = 2e-3;
        pub const D_REL: f64 = 1e-6;
        /// Exit angle beyond which f32 rounding may decide evanescent or not, degrees.
        pub const GRAZING_DEG: f64 = 89.0;
    }
    /// The `fast-math` backend: the same requirement values (its square root is
    /// within one ulp, its sine, cosine and arcsine are the default backend's; largest
    /// seen over these cases: wavelength 1.8e-7, d-spacing 1.2e-7 relative, exit angle
    /// 2.5e-4°, lab direction 2.6e-4°, emergence 2.6e-6, meshes 3.7e-7, γ 1.7e-5°, I-V
    /// peaks 4.6e-6).
    #[cfg(feature = "fast-math")]
    mod values {
        pub const WAVELENGTH_REL: f64 = 1e-6;
        pub const VELOCITY_REL: f64 = 1e-6;
        pub const ROUND_TRIP_REL: f64 = 2e-6;
        pub const MESH_REL: f64 = 2e-5;
        pub const GAMMA_DEG: f64 = 2e-3;
        pub const IN_PLANE_A: f64 = 1e-4;
        pub const NORMAL_RAD: f64 = 1e-6;
        pub const EXIT_DEG: f64 = 0.002;
        pub const LAB_DEG: f64 = 0.002;
        pub const EMERGENCE_REL: f64 = 1e-4;
        pub const IV_REL: f64 = 2e-5;
        pub const IV_ABS_EV: f64 = 2e-3;
        pub const D_REL: f64 = 1e-6;
        pub const GRAZING_DEG: f64 = 89.0;
    }
    pub use values::*;
}

fn random_face(rng: &mut Rng, hex: bool) -> [i32; 3] {
    loop {
        let m = [rng.int(-3, 3), rng.int(-3, 3), rng.int(-3, 3)];
        if m != [0, 0, 0] && (!hex || rng.int(0, 2) > 0 || m == [0, 0, 1]) {
            return m;
        }
    }
}

#[test]
fn wavelengths_agree() {
    let mut rng = Rng(1);
    let (mut worst, mut worst_v) = (0.0f64, 0.0f64);
    for i in 0..200_000 {
        // The edges of the range first (their inverse once failed at 1 eV), then
        // log-uniform energies.
        let e = match i {
            0 => 1.0,
            1 => 3.0e5,
            _ => rng.energy(1.0, 3.0e5),
        };
        let core = beam::wavelength_a(e).unwrap() as f64;
        let refv = oracle::wavelength_a(e as f64);
        let rel = (core / refv - 1.0).abs();
        worst = worst.max(rel);
        assert!(
            rel <= tol::WAVELENGTH_REL,
            "E = {e} eV: core {core} oracle {refv}"
        );
        // Speed and β: relativistic over the whole range (at 100 eV the non-relativistic
        // speed is 1.5e-4 off, at 300 keV 40 %).
        let v = beam::velocity_m_s(e).unwrap() as f64;
        let ov = oracle::velocity_m_s(e as f64);
        let rel_v = (v / ov - 1.0).abs();
        worst_v = worst_v.max(rel_v);
        assert!(
            rel_v <= tol::VELOCITY_REL,
            "E = {e} eV: v core {v} oracle {ov}"
        );
        let b = beam::beta(e).unwrap() as f64;
        assert!(
            (b / (ov / oracle::C_M_S) - 1.0).abs() <= tol::VELOCITY_REL,
            "E = {e} eV: β core {b} oracle {}",
            ov / oracle::C_M_S
        );
        // The inverse must succeed over the whole range, edges included.
        let b = beam::energy_from_wavelength_ev(core as f32)
            .unwrap_or_else(|err| panic!("E = {e} eV: inverse of λ = {core} Å failed: {err}"));
        assert!(
            (b as f64 / e as f64 - 1.0).abs() < tol::ROUND_TRIP_REL,
            "{e} -> {b}"
        );
    }
    println!(
        "wavelength: max relative error {worst:.3e} over 200000 energies; speed: {worst_v:.3e}"
    );
}

/// A random face as a user might type it: indices ≤ 3, half the time multiplied by a
/// common factor 2–4 (so that the core's reduction is exercised).
fn random_raw_face(rng: &mut Rng, hex: bool) -> [i32; 3] {
    let m = random_face(rng, hex);
    if rng.chance(0.5) {
        let k = rng.int(2, 4);
        m.map(|x| x * k)
    } else {
        m
    }
}

/// The oracle's own mesh of the raw face, under the documented rule.
fn rule_mesh(oc: &OCell, raw: [i32; 3]) -> oracle::ORuleMesh {
    oracle::mesh_by_rule(oc, raw).unwrap_or_else(|| panic!("oracle: no mesh for {raw:?}"))
}

#[test]
fn meshes_agree() {
    let mut rng = Rng(2);
    let mut worst = 0.0f64;
    let (mut worst_gamma, mut worst_plane, mut worst_normal) = (0.0f64, 0.0f64, 0.0f64);
    let (mut n, mut reduced, mut obtuse) = (0, 0, 0);
    for c in table::all() {
        let cell = c.cell().unwrap();
        let oc = ocell(c);
        let hex = c.structure.system() == matterwave_core::lattice::System::Hexagonal;
        for _ in 0..25 {
            let raw = random_raw_face(&mut rng, hex);
            let f = Face::new(&cell, raw).unwrap_or_else(|e| panic!("{} {raw:?}: {e:?}", c.id));
            // The oracle reduces the raw indices and picks the mesh itself: index
            // reduction, the choice of a1 and a2, their handedness and the tie rule
            // must all come out the same.
            let om = rule_mesh(&oc, raw);
            if om.miller != raw {
                reduced += 1;
            }
            assert_eq!(f.miller, om.miller, "{} {raw:?}: reduced indices", c.id);
            assert_eq!(
                (f.a1_half, f.a2_half),
                (om.a1_half, om.a2_half),
                "{} {raw:?}: mesh vectors (half axes), core vs oracle",
                c.id
            );
            let g = f.gamma_deg() as f64;
            if om.gamma_deg > 90.0 + 1e-6 {
                obtuse += 1;
            }
            // Lengths, area and spacing from the oracle's own search.
            let o = oracle::surface_mesh(&oc, om.miller);
            let area = {
                let (u, v) = (om.a1, om.a2);
                let x = [
                    u[1] * v[2] - u[2] * v[1],
                    u[2] * v[0] - u[0] * v[2],
                    u[0] * v[1] - u[1] * v[0],
                ];
                (x[0] * x[0] + x[1] * x[1] + x[2] * x[2]).sqrt()
            };
            let len = |v: [f64; 3]| (v[0] * v[0] + v[1] * v[1] + v[2] * v[2]).sqrt();
            for (core, refv, what) in [
                (f.a1_len_a() as f64, len(om.a1), "|a1|"),
                (f.a2_len_a() as f64, len(om.a2), "|a2|"),
                (f.area_a2() as f64, area, "area"),
                (f.layer_spacing_a as f64, o.layer_spacing_a, "layer spacing"),
            ] {
                let rel = (core / refv - 1.0).abs();
                worst = worst.max(rel);
                assert!(
                    rel < tol::MESH_REL,
                    "{} {raw:?} {what}: core {core} oracle {refv}",
                    c.id
                );
            }
            // The lengths are those of the oracle's independent (sign-folded) search too.
            assert!(
                (len(om.a1) / o.a1_len_a - 1.0).abs() < 1e-9,
                "{} {raw:?}",
                c.id
            );
            assert!(
                (len(om.a2) / o.a2_len_a - 1.0).abs() < 1e-9,
                "{} {raw:?}",
                c.id
            );
            // γ unfolded: acute or obtuse as the rule makes it.
            worst_gamma = worst_gamma.max((g - om.gamma_deg).abs());
            assert!(
                (g - om.gamma_deg).abs() < tol::GAMMA_DEG,
                "{} {raw:?} gamma {g} vs {}",
                c.id,
                om.gamma_deg
            );
            // The core's mesh vectors lie in the oracle's plane, and its normal is the
            // oracle's.
            for v in &f.vectors_a[..2] {
                let d: f64 = (0..3).map(|i| v[i] as f64 * om.normal[i]).sum();
                worst_plane = worst_plane.max(d.abs());
                assert!(
                    d.abs() < tol::IN_PLANE_A,
                    "{} {raw:?}: mesh vector off the plane by {d}",
                    c.id
                );
            }
            // Normal: the angle between the two (from |a × b| and a·b, so that the
            // length of the f32 unit vector does not enter).
            let (a, b) = (f.normal.map(f64::from), om.normal);
            let cr = [
                a[1] * b[2] - a[2] * b[1],
                a[2] * b[0] - a[0] * b[2],
                a[0] * b[1] - a[1] * b[0],
            ];
            let sn = (cr[0] * cr[0] + cr[1] * cr[1] + cr[2] * cr[2]).sqrt();
            let cs: f64 = (0..3).map(|i| a[i] * b[i]).sum();
            let ang = sn.atan2(cs);
            worst_normal = worst_normal.max(ang);
            assert!(
                ang < tol::NORMAL_RAD,
                "{} {raw:?}: normal {:?} vs {:?}",
                c.id,
                f.normal,
                om.normal
            );
            n += 1;
        }
    }
    assert!(
        reduced > n / 4,
        "only {reduced} of {n} faces not in lowest terms"
    );
    assert!(obtuse > n / 20, "only {obtuse} of {n} meshes obtuse");
    println!(
        "meshes: {n} faces ({reduced} not in lowest terms, {obtuse} with γ > 90°), \
         max relative error {worst:.3e}; max gamma error {worst_gamma:.3e} deg; max distance \
         of a mesh vector from the plane {worst_plane:.3e} Å; max normal direction error \
         {worst_normal:.2e} rad"
    );
}

#[test]
fn exit_angles_and_emergence_agree() {
    let mut rng = Rng(3);
    let crystals = table::all();
    let (mut worst_exit, mut worst_lab, mut worst_em) = (0.0f64, 0.0f64, 0.0f64);
    let (mut compared, mut evanescent, mut emergence_compared) = (0u32, 0u32, 0u32);
    for case in 0..30_000 {
        let c = &crystals[case % crystals.len()];
        let hex = c.structure.system() == matterwave_core::lattice::System::Hexagonal;
        let m = random_raw_face(&mut rng, hex);
        let f = Face::new(&c.cell().unwrap(), m).unwrap();
        let oc = ocell(c);
        let e = rng.energy(1.0, 3.0e5);
        let tilt = rng.range(-70.0, 70.0) as f32;
        let az = rng.range(-180.0, 180.0) as f32;
        let inc = Incidence::new(e, tilt, az).unwrap();
        // The oracle's own mesh of the raw face (equal to the core's: `meshes_agree`).
        let om = rule_mesh(&oc, m);
        let (a1, a2, nrm) = (om.a1, om.a2, om.normal);
        for _ in 0..4 {
            let rod = [rng.int(-3, 3), rng.int(-3, 3)];
            let o = oracle::beam_exit(a1, a2, nrm, rod, e as f64, tilt as f64, az as f64);
            match (f.beam(rod, &inc), o) {
                (Ok(b), Some(ob)) => {
                    if ob.exit_polar_deg <= 85.0 {
                        let err = (b.exit_deg as f64 - ob.exit_polar_deg).abs();
                        worst_exit = worst_exit.max(err);
                        assert!(
                            err <= tol::EXIT_DEG,
                            "{} {m:?} rod {rod:?} E={e} tilt={tilt} az={az}: core {} oracle {}",
                            c.id,
                            b.exit_deg,
                            ob.exit_polar_deg
                        );
                        // Lab direction: angle between core and oracle unit vectors.
                        let d = goniometer::beam_direction_lab(&b, &inc);
                        let ko = ob.k_out_lab;
                        let kn = (ko[0] * ko[0] + ko[1] * ko[1] + ko[2] * ko[2]).sqrt();
                        // Angle from |a × b| and a·b (acos near 1 would amplify rounding).
                        let a = [d[0] as f64, d[1] as f64, d[2] as f64];
                        let b = [ko[0] / kn, ko[1] / kn, ko[2] / kn];
                        let cr = [
                            a[1] * b[2] - a[2] * b[1],
                            a[2] * b[0] - a[0] * b[2],
                            a[0] * b[1] - a[1] * b[0],
                        ];
                        let sn = (cr[0] * cr[0] + cr[1] * cr[1] + cr[2] * cr[2]).sqrt();
                        let cs: f64 = (0..3).map(|i| a[i] * b[i]).sum();
                        let ang = sn.atan2(cs).to_degrees();
                        worst_lab = worst_lab.max(ang);
                        assert!(
                            ang <= tol::LAB_DEG,
                            "{} {m:?} rod {rod:?} E={e} tilt={tilt} az={az}: lab direction off by {ang}°: core {d:?} {b:?} oracle {ob:?}",
                            c.id
                        );
                        compared += 1;
                    }
                    // Emergence: both sides name one for every rod but the specular.
                    match (
                        b.emergence_ev,
                        oracle::emergence_energy_ev(a1, a2, nrm, rod, tilt as f64, az as f64),
                    ) {
                        (Some(ce), Some(oe)) => {
                            let rel = (ce as f64 / oe - 1.0).abs();
                            worst_em = worst_em.max(rel);
                            assert!(
                                rel < tol::EMERGENCE_REL,
                                "{} {m:?} rod {rod:?}: emergence {ce} vs {oe}",
                                c.id
                            );
                            emergence_compared += 1;
                        }
                        (None, None) => assert_eq!(rod, [0, 0], "{} {m:?}", c.id),
                        (ce, oe) => panic!(
                            "{} {m:?} rod {rod:?} tilt={tilt} az={az}: emergence core {ce:?} \
                             oracle {oe:?}",
                            c.id
                        ),
                    }
                }
                (Err(Error::Evanescent), None) => evanescent += 1,
                (Err(Error::Evanescent), Some(ob)) => {
                    // Only at grazing exit, where f32 rounding decides.
                    assert!(
                        ob.exit_polar_deg > tol::GRAZING_DEG,
                        "{} {m:?} rod {rod:?}: core says evanescent, oracle {ob:?}",
                        c.id
                    );
                }
                (Ok(b), None) => {
                    assert!(
                        b.exit_deg as f64 > tol::GRAZING_DEG,
                        "{} {m:?} rod {rod:?}: oracle says evanescent, core {b:?}",
                        c.id
                    );
                }
                (Err(other), _) => panic!("unexpected error {other:?}"),
            }
        }
    }
    assert!(compared > 10_000, "too few beams compared: {compared}");
    assert!(
        emergence_compared > 10_000,
        "too few emergence energies compared: {emergence_compared}"
    );
    println!(
        "exit angles: {compared} beams compared ({evanescent} evanescent on both sides); \
         max exit-angle error {worst_exit:.2e} deg, max lab-direction error {worst_lab:.2e} deg; \
         {emergence_compared} emergence energies compared, max relative error {worst_em:.2e}"
    );
}

#[test]
fn iv_peaks_agree() {
    let mut rng = Rng(4);
    let mut worst = 0.0f64;
    let mut peaks = 0;
    let ids = [
        "cu", "ni", "ag", "w", "fe", "si", "ru", "mg", "gaas", "nacl",
    ];
    for case in 0..600 {
        let c = table::find(ids[case % ids.len()]).unwrap();
        let hex = c.structure == Structure::Hcp;
        let m = random_raw_face(&mut rng, hex);
        let f = Face::new(&c.cell().unwrap(), m).unwrap();
        let oc = ocell(c);
        let tilt = if case % 3 == 0 {
            0.0
        } else {
            rng.range(-50.0, 50.0) as f32
        };
        let az = rng.range(-180.0, 180.0) as f32;
        let v0 = rng.range(0.0, 20.0) as f32;
        let rod = [rng.int(-2, 2), rng.int(-2, 2)];
        let inc = Incidence::new(100.0, tilt, az).unwrap();
        let mut out = [IvPeak::EMPTY; 64];
        let l = f.iv_peaks(rod, &inc, v0, 20.0, 600.0, &mut out).unwrap();
        let om = rule_mesh(&oc, m);
        let (a1, a2, nrm) = (om.a1, om.a2, om.normal);
        let o = oracle::iv_peaks(
            &oc,
            a1,
            a2,
            nrm,
            rod,
            tilt as f64,
            az as f64,
            v0 as f64,
            20.0,
            600.0,
        );
        let core: Vec<f64> = out[..l.stored].iter().map(|p| p.energy_ev as f64).collect();
        // Peaks within 0.01 eV of the window edges may fall either side.
        let inner = |x: &f64| *x > 20.01 && *x < 599.99;
        let core_in: Vec<f64> = core.iter().copied().filter(inner).collect();
        let mut or_in: Vec<f64> = o.iter().map(|p| p.energy_ev).filter(inner).collect();
        or_in.sort_by(|a, b| a.total_cmp(b));
        let mut core_sorted = core_in.clone();
        core_sorted.sort_by(|a, b| a.total_cmp(b));
        assert_eq!(
            core_sorted.len(),
            or_in.len(),
            "{} {m:?} rod {rod:?} tilt {tilt} az {az} V0 {v0}: core {core_sorted:?} oracle {or_in:?}",
            c.id
        );
        for (a, b) in core_sorted.iter().zip(&or_in) {
            let err = (a - b).abs();
            worst = worst.max(err / b);
            assert!(
                err <= tol::IV_REL * b + tol::IV_ABS_EV,
                "{} {m:?} rod {rod:?}: {a} vs {b}",
                c.id
            );
            peaks += 1;
        }
    }
    assert!(peaks > 1000, "too few peaks compared: {peaks}");
    println!("I-V peaks: {peaks} compared, max relative error {worst:.2e}");
}

#[test]
fn d_spacings_and_extinctions_agree() {
    let mut worst = 0.0f64;
    for c in table::all() {
        let cell = c.cell().unwrap();
        let oc = ocell(c);
        for h in -4..=4 {
            for k in -4..=4 {
                for l in -4..=4 {
                    if [h, k, l] == [0, 0, 0] {
                        continue;
                    }
                    let hkl = [h, k, l];
                    let d = cell.d_spacing_a(hkl).unwrap() as f64;
                    let od = oc.d_spacing_a(hkl);
                    worst = worst.max((d / od - 1.0).abs());
                    assert!(
                        (d / od - 1.0).abs() < tol::D_REL,
                        "{} {hkl:?}: {d} vs {od}",
                        c.id
                    );
                    assert_eq!(cell.allowed(hkl), oc.allowed(hkl), "{} {hkl:?}", c.id);
                }
            }
        }
    }
    println!("d-spacings: max relative error {worst:.3e}");
}
