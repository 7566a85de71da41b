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
use matterwave_tests::Rng;

/// Tolerances, in one place per float backend.
mod tol {
    /// The libm backend (default): the requirement values.
    #[cfg(not(feature = "fast-math"))]
    mod values {
        pub const WAVELENGTH_REL: f64 = 1e-6;
        pub const ROUND_TRIP_REL: f64 = 2e-6;
        pub const MESH_REL: f64 = 2e-5;
        pub const GAMMA_DEG: f64 = 2e-3;
        pub const IN_PLANE_A: f64 = 1e-4;
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
        pub const ROUND_TRIP_REL: f64 = 2e-6;
        pub const MESH_REL: f64 = 2e-5;
        pub const GAMMA_DEG: f64 = 2e-3;
        pub const IN_PLANE_A: f64 = 1e-4;
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

fn ocell(c: &table::Crystal) -> OCell {
    let s = oracle::structure_from_name(c.structure.name()).expect("oracle knows every structure");
    OCell {
        structure: s,
        a: c.a_a as f64,
        b: c.b_a as f64,
        c: c.c_a as f64,
    }
}

/// A mesh vector of the core (given in half conventional axes) rebuilt exactly in f64
/// from the oracle's cell vectors.
fn exact(oc: &OCell, half: [i32; 3]) -> [f64; 3] {
    let a = oc.direct_vectors();
    let mut v = [0.0; 3];
    for (i, vi) in v.iter_mut().enumerate() {
        *vi = (0..3).map(|j| a[j][i] * half[j] as f64 * 0.5).sum();
    }
    v
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
    let mut worst = 0.0f64;
    for _ in 0..200_000 {
        let e = rng.energy(1.0, 3.0e5);
        let core = beam::wavelength_a(e).unwrap() as f64;
        let refv = oracle::wavelength_a(e as f64);
        let rel = (core / refv - 1.0).abs();
        worst = worst.max(rel);
        assert!(
            rel <= tol::WAVELENGTH_REL,
            "E = {e} eV: core {core} oracle {refv}"
        );
        // The inverse must succeed over the whole range, edges included.
        let b = beam::energy_from_wavelength_ev(core as f32)
            .unwrap_or_else(|err| panic!("E = {e} eV: inverse of λ = {core} Å failed: {err}"));
        assert!(
            (b as f64 / e as f64 - 1.0).abs() < tol::ROUND_TRIP_REL,
            "{e} -> {b}"
        );
    }
    println!("wavelength: max relative error {worst:.3e} over 200000 energies");
}

#[test]
fn meshes_agree() {
    let mut rng = Rng(2);
    let mut worst = 0.0f64;
    let (mut worst_gamma, mut worst_plane) = (0.0f64, 0.0f64);
    let mut n = 0;
    for c in table::all() {
        let cell = c.cell().unwrap();
        let oc = ocell(c);
        let hex = c.structure.system() == matterwave_core::lattice::System::Hexagonal;
        for _ in 0..25 {
            let m = random_face(&mut rng, hex);
            let f = Face::new(&cell, m).unwrap_or_else(|e| panic!("{} {m:?}: {e:?}", c.id));
            let om = oracle::surface_mesh(&oc, f.miller);
            let mut g = f.gamma_deg() as f64;
            if g > 90.0 {
                g = 180.0 - g;
            }
            for (core, refv, what) in [
                (f.a1_len_a() as f64, om.a1_len_a, "|a1|"),
                (f.a2_len_a() as f64, om.a2_len_a, "|a2|"),
                (f.area_a2() as f64, om.area_a2, "area"),
                (
                    f.layer_spacing_a as f64,
                    om.layer_spacing_a,
                    "layer spacing",
                ),
            ] {
                let rel = (core / refv - 1.0).abs();
                worst = worst.max(rel);
                assert!(
                    rel < tol::MESH_REL,
                    "{} {m:?} {what}: core {core} oracle {refv}",
                    c.id
                );
            }
            worst_gamma = worst_gamma.max((g - om.gamma_deg).abs());
            assert!(
                (g - om.gamma_deg).abs() < tol::GAMMA_DEG,
                "{} {m:?} gamma {g} vs {}",
                c.id,
                om.gamma_deg
            );
            // The core's mesh vectors lie in the oracle's plane.
            let nrm = oracle::face_normal(&oc, f.miller);
            for v in &f.vectors_a[..2] {
                let d: f64 = (0..3).map(|i| v[i] as f64 * nrm[i]).sum();
                worst_plane = worst_plane.max(d.abs());
                assert!(
                    d.abs() < tol::IN_PLANE_A,
                    "{} {m:?}: mesh vector off the plane by {d}",
                    c.id
                );
            }
            n += 1;
        }
    }
    println!(
        "meshes: max relative error {worst:.3e} over {n} faces; max gamma error \
         {worst_gamma:.3e} deg; max distance of a mesh vector from the plane {worst_plane:.3e} Å"
    );
}

#[test]
fn exit_angles_and_emergence_agree() {
    let mut rng = Rng(3);
    let crystals = table::all();
    let (mut worst_exit, mut worst_lab, mut worst_em) = (0.0f64, 0.0f64, 0.0f64);
    let (mut compared, mut evanescent) = (0u32, 0u32);
    for case in 0..30_000 {
        let c = &crystals[case % crystals.len()];
        let hex = c.structure.system() == matterwave_core::lattice::System::Hexagonal;
        let m = random_face(&mut rng, hex);
        let f = Face::new(&c.cell().unwrap(), m).unwrap();
        let oc = ocell(c);
        let e = rng.energy(1.0, 3.0e5);
        let tilt = rng.range(-70.0, 70.0) as f32;
        let az = rng.range(-180.0, 180.0) as f32;
        let inc = Incidence::new(e, tilt, az).unwrap();
        let a1 = exact(&oc, f.a1_half);
        let a2 = exact(&oc, f.a2_half);
        let nrm = oracle::face_normal(&oc, f.miller);
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
                    if let (Some(ce), Some(oe)) = (
                        b.emergence_ev,
                        oracle::emergence_energy_ev(a1, a2, nrm, rod, tilt as f64, az as f64),
                    ) {
                        let rel = (ce as f64 / oe - 1.0).abs();
                        worst_em = worst_em.max(rel);
                        assert!(
                            rel < tol::EMERGENCE_REL,
                            "{} {m:?} rod {rod:?}: emergence {ce} vs {oe}",
                            c.id
                        );
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
    println!(
        "exit angles: {compared} beams compared ({evanescent} evanescent on both sides); \
         max exit-angle error {worst_exit:.2e} deg, max lab-direction error {worst_lab:.2e} deg, \
         max emergence relative error {worst_em:.2e}"
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
        let m = random_face(&mut rng, hex);
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
        let a1 = exact(&oc, f.a1_half);
        let a2 = exact(&oc, f.a2_half);
        let nrm = oracle::face_normal(&oc, f.miller);
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
