//! Unit tests of the module.

use super::*;
use crate::lattice::Structure;

fn face(s: Structure, a: f32, c: f32, m: Miller) -> Face {
    Face::new(&Cell::new(s, a, a, c).unwrap(), m).unwrap()
}

fn close(a: f32, b: f32) -> bool {
    (a - b).abs() <= 1e-5 * b.abs().max(1.0)
}

#[test]
fn meshes_of_design_section_6() {
    // Bulk-terminated meshes (common practice, no source; surface rules).
    let a = 3.6;
    let r2 = 2f32.sqrt();
    let f = face(Structure::Fcc, a, a, [1, 0, 0]);
    assert_eq!(f.mesh_kind(), MeshKind::Square);
    assert!(close(f.a1_len_a(), a / r2));
    let f = face(Structure::Fcc, a, a, [1, 1, 1]);
    assert_eq!(f.mesh_kind(), MeshKind::Hexagonal);
    assert!(close(f.a1_len_a(), a / r2));
    let f = face(Structure::Fcc, a, a, [1, 1, 0]);
    assert_eq!(f.mesh_kind(), MeshKind::Rectangular);
    assert!(close(f.a1_len_a(), a / r2) && close(f.a2_len_a(), a));
    let f = face(Structure::Bcc, a, a, [1, 0, 0]);
    assert_eq!(f.mesh_kind(), MeshKind::Square);
    assert!(close(f.a1_len_a(), a));
    let f = face(Structure::Bcc, a, a, [1, 1, 0]);
    assert_eq!(f.mesh_kind(), MeshKind::CentredRectangular);
    assert!(close(f.a1_len_a(), a * 3f32.sqrt() / 2.0));
    let f = face(Structure::Bcc, a, a, [1, 1, 1]);
    assert_eq!(f.mesh_kind(), MeshKind::Hexagonal);
    assert!(close(f.a1_len_a(), a * r2));
    let f = face(Structure::Hcp, 2.5, 4.07, [0, 0, 1]);
    assert_eq!(f.mesh_kind(), MeshKind::Hexagonal);
    assert!(close(f.a1_len_a(), 2.5));
    assert!(close(f.layer_spacing_a, 4.07));
    let f = face(Structure::Diamond, 5.431, 5.431, [1, 1, 1]);
    assert_eq!(f.mesh_kind(), MeshKind::Hexagonal);
    assert!(close(f.a1_len_a(), 5.431 / r2));
}

#[test]
fn frame_is_right_handed_and_reciprocal() {
    let f = face(Structure::Fcc, 3.52, 3.52, [3, 1, 2]);
    assert!(math::dot(math::cross(f.vectors_a[0], f.vectors_a[1]), f.normal) > 0.0);
    for i in 0..2 {
        for j in 0..2 {
            let a = f.mesh_2d_a[i];
            let b = f.recip_2d_inv_a[j];
            let d = a[0] * b[0] + a[1] * b[1];
            assert!((d - if i == j { 1.0 } else { 0.0 }).abs() < 1e-5);
        }
    }
    // The conventional matrix maps (h, k, m) to a G whose rod is (h, k).
    let hkl = f.conventional([1, -2, 3]);
    let gv = f.cell.g_vector(hkl);
    assert!((math::dot(gv, f.vectors_a[0]) - 1.0).abs() < 1e-4);
    assert!((math::dot(gv, f.vectors_a[1]) + 2.0).abs() < 1e-4);
    assert!((math::dot(gv, f.vectors_a[2]) - 3.0).abs() < 1e-4);
}

#[test]
fn oblique_emergence_is_tangent() {
    let f = face(Structure::Fcc, 3.52, 3.52, [1, 1, 0]);
    for tilt in [-60.0f32, -20.0, 0.0, 35.0, 70.0] {
        let inc = Incidence::new(50.0, tilt, 17.0).unwrap();
        for rod in [[1, 0], [-1, 0], [0, 1], [1, -1], [-2, 1]] {
            let e = f.emergence_ev(rod, &inc).unwrap();
            if !(1.5..3.0e5).contains(&e) {
                continue;
            }
            let above = Incidence::new(e * 1.001, tilt, 17.0).unwrap();
            let below = Incidence::new(e * 0.999, tilt, 17.0).unwrap();
            assert!(f.beam(rod, &above).is_ok(), "{tilt} {rod:?}");
            assert_eq!(f.beam(rod, &below), Err(Error::Evanescent));
        }
    }
}

#[test]
fn iv_closed_form_matches_bisection() {
    let f = face(Structure::Fcc, 3.52, 3.52, [1, 1, 1]);
    let mut a = [IvPeak::EMPTY; 16];
    let mut b = [IvPeak::EMPTY; 16];
    let inc0 = Incidence::new(100.0, 0.0, 0.0).unwrap();
    let inc1 = Incidence::new(100.0, 1e-4, 0.0).unwrap();
    let na = f
        .iv_peaks([1, 0], &inc0, 10.0, 20.0, 600.0, &mut a)
        .unwrap()
        .stored;
    let nb = f
        .iv_peaks([1, 0], &inc1, 10.0, 20.0, 600.0, &mut b)
        .unwrap()
        .stored;
    assert!(na > 2);
    assert_eq!(na, nb);
    for i in 0..na {
        assert!(
            (a[i].energy_ev - b[i].energy_ev).abs() < 0.01,
            "{:?} {:?}",
            a[i],
            b[i]
        );
    }
}

/// I-V maxima with V0(E): every peak satisfies the constant-V0 condition with V0 taken
/// at its own energy, and lies between the peaks of the extreme constant V0s. Oracle:
/// the specular fcc(100) closed form λ_inside = a/n (Bragg's law on the (200)
/// planes, d = a/2, at normal incidence), E + V0(E) = h²n²/(2 m a²).
#[test]
fn iv_peaks_with_energy_dependent_v0() {
    use crate::inner::{V0Form, V0Model};
    let a = 3.6149;
    let f = Face::new(&Cell::new(Structure::Fcc, a, 0.0, 0.0).unwrap(), [1, 0, 0]).unwrap();
    let form = V0Form {
        max_ev: 10.3,
        b_ev: 0.75,
        c_ev: 76.6,
        d_ev: 11.4,
    };
    let inc = Incidence::normal(100.0).unwrap();
    let mut out = [IvPeak::EMPTY; 32];
    let l = f
        .iv_peaks_model([0, 0], &inc, &V0Model::Energy(form), 20.0, 500.0, &mut out)
        .unwrap();
    assert!(l.stored >= 4 && !l.truncated, "{l:?}");
    for p in &out[..l.stored] {
        let n = p.g_hkl.iter().map(|x| x.abs()).sum::<i32>() as f32 / 2.0; // (2n 0 0): λ_in = a/n
        let inside = crate::beam::energy_from_wavelength_ev(a / n).unwrap();
        let v = form.value_ev(p.energy_ev);
        assert!(
            (p.energy_ev + v - inside).abs() < 0.02,
            "{p:?}: {} vs {inside}",
            p.energy_ev + v
        );
        assert!((20.0..=500.0).contains(&p.energy_ev));
    }
    // Oblique incidence and a side rod: each peak is the constant-V0 peak at V0(E).
    let inc = Incidence::new(100.0, 12.0, 0.0).unwrap();
    let l = f
        .iv_peaks_model([1, 0], &inc, &V0Model::Energy(form), 30.0, 400.0, &mut out)
        .unwrap();
    assert!(l.stored >= 3);
    for p in &out[..l.stored] {
        let mut one = [IvPeak::EMPTY; 32];
        let m = f
            .iv_peaks(
                [1, 0],
                &inc,
                form.value_ev(p.energy_ev),
                1.0,
                500.0,
                &mut one,
            )
            .unwrap()
            .stored;
        assert!(
            one[..m]
                .iter()
                .any(|q| q.g_hkl == p.g_hkl && (q.energy_ev - p.energy_ev).abs() < 0.01),
            "{p:?}"
        );
    }
    // A constant model is iv_peaks itself.
    let mut a1 = [IvPeak::EMPTY; 32];
    let mut a2 = [IvPeak::EMPTY; 32];
    let n1 = f.iv_peaks([1, 0], &inc, 8.0, 30.0, 400.0, &mut a1).unwrap();
    let n2 = f
        .iv_peaks_model([1, 0], &inc, &V0Model::Constant(8.0), 30.0, 400.0, &mut a2)
        .unwrap();
    assert_eq!((n1, &a1[..n1.stored]), (n2, &a2[..n2.stored]));
}
