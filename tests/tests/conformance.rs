//! Conformance of the core (the controller's f32 code) against published values.
//!
//! Every check names its source beside it. "from memory" marks values recalled rather
//! than read off the page at the time of writing; "common practice, no source" marks
//! trade facts.

use matterwave_core::beam;
use matterwave_core::lattice::{Cell, Structure};
use matterwave_core::reflections::{self, Reflection};
use matterwave_core::surface::{Face, Incidence, IvPeak, MeshKind};
use matterwave_core::table;

fn cell(id: &str) -> Cell {
    table::find(id).unwrap().cell().unwrap()
}

#[test]
fn relativistic_wavelengths_international_tables() {
    // International Tables for Crystallography Vol. C, Table 4.3.1.1 (values from memory).
    for (kv, lambda) in [
        (100.0f32, 0.037014f32),
        (200.0, 0.025079),
        (300.0, 0.019687),
    ] {
        let got = beam::wavelength_a(kv * 1e3).unwrap();
        assert!((got - lambda).abs() <= 1.5e-6, "{kv} kV: {got} vs {lambda}");
    }
}

#[test]
fn low_energy_rule_of_thumb() {
    // λ[Å] ≈ √(150.4/E[eV]) (common practice, no source); relativistic correction is
    // below 0.1 % up to 1 keV.
    for e in [10.0f32, 50.0, 100.0, 300.0, 1000.0] {
        let got = beam::wavelength_a(e).unwrap();
        let rule = (150.4 / e).sqrt();
        assert!((got / rule - 1.0).abs() < 1e-3, "{e} eV: {got} vs {rule}");
    }
    // 100 eV: λ = 1.2264 Å (textbook value, from memory), v ≈ 5.9e6 m/s (common practice,
    // no source).
    assert!((beam::wavelength_a(100.0).unwrap() - 1.2264).abs() < 2e-4);
    assert!((beam::velocity_m_s(100.0).unwrap() - 5.93e6).abs() < 0.01e6);
}

#[test]
fn nonrelativistic_error_grows_with_energy() {
    // Relativistic correction factor (1 + E/2mc²)^(-1/2): about 4.7 % at 100 keV
    // (International Tables Vol. C, 4.3.1; from memory).
    let r = beam::wavelength_nonrel_a(1e5).unwrap() / beam::wavelength_a(1e5).unwrap();
    assert!((r - 1.0477).abs() < 5e-4, "{r}");
}

#[test]
fn lattice_constants_against_handbooks() {
    // Room-temperature lattice constants, Å. Kittel, Introduction to Solid State Physics,
    // 8th ed., Table 1.3/1.4, and CRC Handbook of Chemistry and Physics, "Lattice
    // structures of the elements" / "Crystal structures of inorganic compounds" (values
    // from memory). Tolerance 0.006 Å covers the spread between handbooks and
    // temperatures.
    let refs = [
        ("cu", 3.615f32),
        ("ni", 3.524),
        ("ag", 4.086),
        ("au", 4.078),
        ("al", 4.050),
        ("pt", 3.924),
        ("w", 3.165),
        ("mo", 3.147),
        ("fe", 2.867),
        ("si", 5.431),
        ("ge", 5.658),
        ("c", 3.567),
        ("nacl", 5.640),
        ("kcl", 6.293),
        ("lif", 4.027),
        ("mgo", 4.212),
        ("gaas", 5.653),
    ];
    for (id, a) in refs {
        let c = table::find(id).unwrap_or_else(|_| panic!("table lacks {id}"));
        assert!(
            (c.a_a - a).abs() < 0.006,
            "{id}: table {} vs handbook {a}",
            c.a_a
        );
    }
    // hcp a and c: Mg 3.209/5.211, Zn 2.665/4.947, Ti 2.951/4.686 (Kittel Table 1.4 and
    // CRC, from memory).
    for (id, a, c) in [
        ("mg", 3.209f32, 5.211f32),
        ("zn", 2.665, 4.947),
        ("ti", 2.951, 4.686),
    ] {
        let x = table::find(id).unwrap();
        assert_eq!(x.structure, Structure::Hcp, "{id}");
        assert!(
            (x.a_a - a).abs() < 0.006 && (x.c_a - c).abs() < 0.01,
            "{id}"
        );
    }
}

#[test]
fn powder_d_spacings() {
    // Powder diffraction reference spacings, Å (ICDD PDF cards and NIST SRM 640 silicon;
    // values from memory): Si(111) 3.1356, Cu(111) 2.088, Al(111) 2.338, NaCl(200) 2.821,
    // W(110) 2.238.
    let checks = [
        ("si", [1, 1, 1], 3.1356f32, 5e-4),
        ("cu", [1, 1, 1], 2.088, 2e-3),
        ("al", [1, 1, 1], 2.338, 2e-3),
        ("nacl", [2, 0, 0], 2.821, 2e-3),
        ("w", [1, 1, 0], 2.238, 2e-3),
    ];
    for (id, hkl, d, tol) in checks {
        let got = cell(id).d_spacing_a(hkl).unwrap();
        assert!((got - d).abs() < tol, "{id} {hkl:?}: {got} vs {d}");
    }
}

#[test]
fn first_powder_lines_follow_extinction_rules() {
    // First lines of cubic powder patterns (common practice, no source): fcc 111, 200,
    // 220, 311, 222; bcc 110, 200, 211, 220; diamond 111, 220, 311, 400, 331.
    let first = |id: &str, n: usize| -> Vec<[i32; 3]> {
        let mut buf = [Reflection::EMPTY; 8];
        let l = reflections::families(&cell(id), 0.3, &mut buf).unwrap();
        buf[..l.stored.min(n)].iter().map(|r| r.hkl).collect()
    };
    assert_eq!(
        first("cu", 5),
        [[1, 1, 1], [2, 0, 0], [2, 2, 0], [3, 1, 1], [2, 2, 2]]
    );
    assert_eq!(first("w", 4), [[1, 1, 0], [2, 0, 0], [2, 1, 1], [2, 2, 0]]);
    assert_eq!(
        first("si", 5),
        [[1, 1, 1], [2, 2, 0], [3, 1, 1], [4, 0, 0], [3, 3, 1]]
    );
}

#[test]
fn surface_meshes() {
    // 1×1 surface mesh constants, Å, from the bulk lattice constant (surface rules relations;
    // commonly quoted values, from memory): Cu(100) 2.556, Ni(111) 2.49, W(110) 2.74,
    // W(100) 3.165, Fe(111) 4.05, Si(111) 3.84, Ru(0001) 2.706.
    let checks = [
        ("cu", [1, 0, 0], MeshKind::Square, 2.556f32),
        ("ni", [1, 1, 1], MeshKind::Hexagonal, 2.49),
        ("w", [1, 1, 0], MeshKind::CentredRectangular, 2.74),
        ("w", [1, 0, 0], MeshKind::Square, 3.165),
        ("fe", [1, 1, 1], MeshKind::Hexagonal, 4.05),
        ("si", [1, 1, 1], MeshKind::Hexagonal, 3.84),
        ("ru", [0, 0, 1], MeshKind::Hexagonal, 2.706),
    ];
    for (id, m, kind, a1) in checks {
        let f = Face::new(&cell(id), m).unwrap();
        assert_eq!(f.mesh_kind(), kind, "{id} {m:?}");
        assert!(
            (f.a1_len_a() - a1).abs() < 0.01,
            "{id} {m:?}: {}",
            f.a1_len_a()
        );
    }
    // fcc(110): rectangular a/√2 × a.
    let f = Face::new(&cell("cu"), [1, 1, 0]).unwrap();
    assert_eq!(f.mesh_kind(), MeshKind::Rectangular);
    assert!((f.a2_len_a() - 3.615).abs() < 0.01);
    // bcc(110) primitive mesh angle: acos(1/3) = 70.53° (common practice, no source).
    let f = Face::new(&cell("w"), [1, 1, 0]).unwrap();
    let g = f.gamma_deg();
    assert!(
        (g - 70.529).abs() < 0.01 || (g - 109.471).abs() < 0.01,
        "{g}"
    );
}

#[test]
fn interlayer_spacings() {
    // Bulk interlayer spacings (common practice, no source): fcc(100) a/2, fcc(111)
    // a/√3, fcc(110) a/(2√2), bcc(110) a/√2, hcp(0001) c/2 for the atomic layers
    // (lattice-plane spacing c; the hcp extinction leaves only even l on the specular rod).
    let a = 3.615f32;
    let cu = cell("cu");
    for (m, d) in [
        ([1, 0, 0], a / 2.0),
        ([1, 1, 1], a / 3f32.sqrt()),
        ([1, 1, 0], a / 8f32.sqrt()),
    ] {
        let f = Face::new(&cu, m).unwrap();
        assert!((f.layer_spacing_a - d).abs() < 1e-4, "{m:?}");
    }
    let w = table::find("w").unwrap();
    let f = Face::new(&w.cell().unwrap(), [1, 1, 0]).unwrap();
    assert!((f.layer_spacing_a - w.a_a / 2f32.sqrt()).abs() < 1e-4);
}

#[test]
fn fcc100_specular_iv_example() {
    // surface rules worked example: fcc(100), specular beam, normal incidence, peaks where
    // λ_in = 2d/n with d = a/2 (kinematic Bragg condition on the specular rod).
    let a = 3.524f32; // Ni, Kittel Table 1.3 (from memory)
    let f = Face::new(&Cell::new(Structure::Fcc, a, a, a).unwrap(), [1, 0, 0]).unwrap();
    let v0 = 12.0;
    let mut out = [IvPeak::EMPTY; 16];
    let inc = Incidence::normal(100.0).unwrap();
    let l = f
        .iv_peaks([0, 0], &inc, v0, 10.0, 1000.0, &mut out)
        .unwrap();
    let d = a / 2.0;
    let mut n_found = Vec::new();
    for p in &out[..l.stored] {
        let lambda_in = beam::inner_wavelength_a(p.energy_ev, v0).unwrap();
        let n = (2.0 * d / lambda_in).round();
        assert!((lambda_in - 2.0 * d / n).abs() < 1e-5, "{p:?}");
        n_found.push(n as i32);
    }
    // Every order from the first inside the window up to ~1 keV.
    let e1 = beam::energy_from_wavelength_ev(2.0 * d).unwrap() - v0;
    assert!(e1 < 10.0);
    assert_eq!(n_found, (2..=n_found.len() as i32 + 1).collect::<Vec<_>>());
}
