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
    // 100 eV: λ = 1.2264 Å (textbook value, from memory).
    assert!((beam::wavelength_a(100.0).unwrap() - 1.2264).abs() < 2e-4);
}

/// β = √(1 − 1/γ²), γ = 1 + E/mc², in f64 with CODATA 2018 mc² = 510998.95 eV.
fn beta_f64(e_ev: f64) -> f64 {
    let gamma = 1.0 + e_ev / 510_998.95;
    (1.0 - 1.0 / (gamma * gamma)).sqrt()
}

#[test]
fn velocity_and_beta_are_relativistic() {
    // Computed here from CODATA 2018 (mc² = 510998.95 eV, c = 299792458 m/s exact):
    // 100 eV: γ = 1.000195695, β = 0.0197807, v = 5.930099e6 m/s (the non-relativistic
    // √(2E/m) gives 5.930970e6, 1.5e-4 higher); 300 keV: γ = 1.587085, β = 0.7765255,
    // v = 2.327965e8 m/s (non-relativistic: 3.25e8, faster than light).
    const C: f64 = 299_792_458.0;
    for (e, beta, v) in [
        (100.0f32, 0.019_780_68, 5.930_099e6),
        (300.0e3, 0.776_525_5, 2.327_965e8),
    ] {
        assert!((beta_f64(e as f64) / beta - 1.0).abs() < 1e-6, "{e}");
        assert!((beta_f64(e as f64) * C / v - 1.0).abs() < 1e-6, "{e}");
        let b = beam::beta(e).unwrap() as f64;
        let got = beam::velocity_m_s(e).unwrap() as f64;
        // f32: a few ulps (6e-8 relative each); the non-relativistic error at 100 eV is
        // 1.5e-4, so 1e-5 separates the two.
        assert!((b / beta - 1.0).abs() < 1e-5, "{e} eV: β {b} vs {beta}");
        assert!((got / v - 1.0).abs() < 1e-5, "{e} eV: v {got} vs {v}");
    }
    // And over the whole range, against the f64 formula (the formula, not a table).
    let mut e = 1.0f64;
    while e <= 3.0e5 {
        let got = beam::velocity_m_s(e as f32).unwrap() as f64;
        let want = beta_f64(e as f32 as f64) * C;
        assert!((got / want - 1.0).abs() < 1e-5, "{e} eV: {got} vs {want}");
        e *= 1.07;
    }
}

#[test]
fn nonrelativistic_error_grows_with_energy() {
    // Relativistic correction factor (1 + E/2mc²)^(-1/2): about 4.7 % at 100 keV
    // (International Tables Vol. C, 4.3.1; from memory).
    let r = beam::wavelength_nonrel_a(1e5).unwrap() / beam::wavelength_a(1e5).unwrap();
    assert!((r - 1.0477).abs() < 5e-4, "{r}");
}

#[test]
fn inner_wavelength_is_the_wavelength_at_e_plus_v0() {
    // Inside the crystal the electron has gained the inner potential: λ_in = λ(E + V0),
    // relativistic λ = hc/√(E(E + 2mc²)) in f64 with CODATA 2018 hc = 12398.419843320
    // eV·Å, mc² = 510998.95 eV (the beam conventions of README "Energies"). Cases: a
    // LEED energy with a typical V0 (10 eV, common practice, no source), the lowest
    // energy with the largest V0 accepted (100 eV), and 300 keV.
    let lambda = |e: f64| 12_398.419_843_320 / (e * (e + 2.0 * 510_998.95)).sqrt();
    for (e, v0) in [
        (150.0f32, 10.0f32),
        (1.0, 100.0),
        (3.0e5, 12.5),
        (40.0, 0.0),
    ] {
        let got = beam::inner_wavelength_a(e, v0).unwrap() as f64;
        let want = lambda(e as f64 + v0 as f64);
        // f32: a few ulps; V0 moves λ by 3 % at 150 eV and by half at 1 eV.
        assert!(
            (got / want - 1.0).abs() < 1e-6,
            "{e} eV, V0 {v0}: {got} vs {want}"
        );
    }
    // Checked like the energy: V0 outside 0–100 eV is refused.
    assert!(beam::inner_wavelength_a(150.0, -1.0).is_err());
    assert!(beam::inner_wavelength_a(150.0, 100.5).is_err());
}

#[test]
fn lattice_constants_against_handbooks() {
    // Room-temperature lattice constants, Å, as the handbooks print them, rounded to
    // 0.001 Å (values from memory): metals from the CRC Handbook of Chemistry and Physics,
    // 97th ed. (2016), 'Crystal structures and lattice parameters of allotropes of the
    // elements'; salts from Wyckoff, Crystal Structures, 2nd ed., vol. 1 (1963);
    // semiconductors and diamond from Madelung, Semiconductors: Data Handbook, 3rd ed.
    // (2004). The table states 1e-4 Å; the largest deviation from these rounded values
    // is 7e-4 Å (Ag), so the tolerance is 0.001 Å.
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
    let mut worst = 0.0f32;
    for (id, a) in refs {
        let c = table::find(id).unwrap_or_else(|_| panic!("table lacks {id}"));
        worst = worst.max((c.a_a - a).abs());
        assert!(
            (c.a_a - a).abs() <= 0.001,
            "{id}: table {} vs handbook {a}",
            c.a_a
        );
    }
    // hcp a and c: Mg 3.209/5.211, Zn 2.665/4.947, Ti 2.951/4.686 (CRC Handbook, as
    // above, from memory).
    for (id, a, c) in [
        ("mg", 3.209f32, 5.211f32),
        ("zn", 2.665, 4.947),
        ("ti", 2.951, 4.686),
    ] {
        let x = table::find(id).unwrap();
        assert_eq!(x.structure, Structure::Hcp, "{id}");
        worst = worst.max((x.a_a - a).abs()).max((x.c_a - c).abs());
        assert!(
            (x.a_a - a).abs() <= 0.001 && (x.c_a - c).abs() <= 0.001,
            "{id}: table {} {} vs handbook {a} {c}",
            x.a_a,
            x.c_a
        );
    }
    println!("lattice constants: largest deviation from the handbooks {worst:.1e} Å");
}

#[test]
fn powder_d_spacings() {
    // Powder diffraction reference spacings, Å (card numbers and values from memory):
    // Si(111) 3.1356 (NIST SRM 640 silicon); Cu(111) 2.088 (PDF 04-0836), Al(111) 2.338
    // (PDF 04-0787), NaCl(200) 2.821 (PDF 05-0628), W(110) 2.238 (PDF 04-0806), the
    // JCPDS/ICDD cards from Swanson et al., NBS Circular 539.
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
    // a/√3, fcc(110) a/(2√2), bcc(110) a/√2. hcp(0001): the lattice planes are c apart
    // (the hexagonal Bravais lattice); the two atomic layers in between make the
    // structure factor vanish for odd l on the specular rod, so its I-V peaks are those
    // of spacing c/2 (checked below in `hcp0001_specular_peaks_have_even_l`).
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
    let mg = table::find("mg").unwrap();
    let f = Face::new(&mg.cell().unwrap(), [0, 0, 1]).unwrap();
    assert!((f.layer_spacing_a - mg.c_a).abs() < 1e-4, "{f:?}");
}

/// Kinematic specular peak at normal incidence, f64: the inside wavenumber K = 1/λ_in
/// with 2K = G, relativistic E_in(K) = √((hcK)² + (mc²)²) − mc², minus V0 (CODATA 2018
/// hc = 12398.419843320 eV·Å, mc² = 510998.95 eV).
fn specular_peak_ev(g_inv_a: f64, v0: f64) -> f64 {
    let (hc, mc2) = (12_398.419_843_320f64, 510_998.95f64);
    let pc = hc * g_inv_a / 2.0;
    (pc * pc + mc2 * mc2).sqrt() - mc2 - v0
}

#[test]
fn fcc100_specular_iv_example() {
    // Worked example of the surface rules: fcc(100), specular beam, normal incidence,
    // peaks where λ_in = 2d/n with d = a/2 (kinematic Bragg condition on the specular
    // rod), i.e. G = n/d.
    let a = 3.524f32; // Ni, CRC Handbook (from memory)
    let f = Face::new(&Cell::new(Structure::Fcc, a, a, a).unwrap(), [1, 0, 0]).unwrap();
    let v0 = 12.0;
    let mut out = [IvPeak::EMPTY; 16];
    let inc = Incidence::normal(100.0).unwrap();
    let l = f
        .iv_peaks([0, 0], &inc, v0, 10.0, 1000.0, &mut out)
        .unwrap();
    assert!(!l.truncated);
    let d = a as f64 / 2.0;
    // Expected: every order whose peak lies in the window, from the f64 formula.
    // (n = 1 lands at 0.1 eV, below the window; n = 2..=9 are inside, n = 9 at 968 eV.)
    let want: Vec<(i32, f64)> = (1..50)
        .map(|n| (n, specular_peak_ev(n as f64 / d, v0 as f64)))
        .filter(|(_, e)| (10.0..=1000.0).contains(e))
        .collect();
    assert_eq!(
        want.iter().map(|w| w.0).collect::<Vec<_>>(),
        (2..=9).collect::<Vec<_>>()
    );
    let got: Vec<(i32, f32)> = out[..l.stored]
        .iter()
        .map(|p| (p.order, p.energy_ev))
        .collect();
    assert_eq!(got.len(), want.len(), "{got:?} vs {want:?}");
    for ((n, e), (wn, we)) in got.iter().zip(&want) {
        assert_eq!(n, wn, "{got:?} vs {want:?}");
        assert!(
            (*e as f64 - we).abs() <= 1e-5 * we + 1e-3,
            "order {n}: {e} vs {we}"
        );
    }
}

#[test]
fn hcp0001_specular_peaks_have_even_l() {
    // hcp(0001) (Mg, table values): the specular rod's bulk reflections are (0 0 l) with
    // l even only (structure factor 1 + e^{iπl}; common practice, no source), at
    // G = l/c, i.e. the spacing of the atomic layers c/2.
    let mg = table::find("mg").unwrap();
    let c = mg.c_a as f64;
    let f = Face::new(&mg.cell().unwrap(), [0, 0, 1]).unwrap();
    let v0 = 10.0;
    let mut out = [IvPeak::EMPTY; 32];
    let inc = Incidence::normal(100.0).unwrap();
    let l = f.iv_peaks([0, 0], &inc, v0, 5.0, 1500.0, &mut out).unwrap();
    assert!(!l.truncated);
    let want: Vec<(i32, f64)> = (1..80)
        .filter(|l| l % 2 == 0)
        .map(|l| (l, specular_peak_ev(l as f64 / c, v0 as f64)))
        .filter(|(_, e)| (5.0..=1500.0).contains(e))
        .collect();
    assert!(want.len() >= 5, "{want:?}");
    let got: Vec<(i32, f32)> = out[..l.stored]
        .iter()
        .map(|p| (p.g_hkl[2], p.energy_ev))
        .collect();
    assert_eq!(got.len(), want.len(), "{got:?} vs {want:?}");
    for ((gl, e), (wl, we)) in got.iter().zip(&want) {
        assert_eq!(gl, wl, "{got:?} vs {want:?}");
        assert!(
            (*e as f64 - we).abs() <= 1e-5 * we + 1e-3,
            "l = {gl}: {e} vs {we}"
        );
    }
    for p in &out[..l.stored] {
        assert_eq!([p.g_hkl[0], p.g_hkl[1]], [0, 0], "{p:?}");
    }
}
