//! Unit tests of superstructures, Wood notation and domains.
//!
//! Sources of the patterns (from memory): M. A. Van Hove, W. H. Weinberg, C.-M. Chan,
//! "Low-Energy Electron Diffraction" (Springer 1986), chapter on surface structures and
//! notation; K. Oura et al., "Surface Science: An Introduction" (Springer 2003),
//! chapters on surface structure (Wood and matrix notation) and LEED.

extern crate std;
use std::string::{String, ToString};
use std::vec;
use std::vec::Vec;

use super::super::domains::{self, Domain, MAX_DOMAINS};
use super::super::{Face, Incidence, Wood};
use super::*;
use crate::lattice::{Cell, Structure};

fn face(s: Structure, a: f32, c: f32, m: [i32; 3]) -> Face {
    Face::new(&Cell::new(s, a, a, c).unwrap(), m).unwrap()
}

fn square() -> Face {
    face(Structure::Fcc, 3.524, 3.524, [1, 0, 0])
}

fn hexagonal() -> Face {
    face(Structure::Fcc, 3.615, 3.615, [1, 1, 1])
}

fn wood(f: &Face, text: &str) -> Superstructure {
    Wood::parse(text).unwrap().to_matrix(f).unwrap()
}

fn label(f: &Face, s: &Superstructure, ascii: bool) -> String {
    let mut out = String::new();
    Wood::from_matrix(f, s)
        .unwrap()
        .write_to(&mut out, ascii)
        .unwrap();
    out
}

fn list(f: &Face, s: &[Superstructure], e: f32) -> Vec<SuperBeam> {
    let mut out = vec![SuperBeam::EMPTY; 400];
    let l = union_beams(f, &Incidence::normal(e).unwrap(), s, &mut out).unwrap();
    assert!(!l.truncated);
    out.truncate(l.stored);
    out
}

fn frac(h: (i32, i32), k: (i32, i32)) -> FracRod {
    FracRod {
        num: [h.0 * k.1, k.0 * h.1],
        den: h.1 * k.1,
    }
    .normalised()
}

fn has(beams: &[SuperBeam], p: FracRod) -> bool {
    beams.iter().any(|b| b.pos.same(&p))
}

#[test]
fn p2x2_on_a_square_mesh() {
    // p(2×2): half-order beams at (1/2, 0), (0, 1/2) and (1/2, 1/2) (Van Hove et al.
    // 1986; Oura et al. 2003 — from memory).
    let f = square();
    let s = wood(&f, "p(2x2)");
    assert_eq!(s.matrix(), [[2, 0], [0, 2]]);
    assert_eq!(label(&f, &s, false), "p(2×2)");
    let b = list(&f, &[s], 150.0);
    for p in [
        frac((1, 2), (0, 1)),
        frac((0, 1), (1, 2)),
        frac((1, 2), (1, 2)),
    ] {
        assert!(has(&b, p), "{p}");
    }
    assert!(!has(&b, frac((1, 3), (0, 1))));
    // Four times the beams of the 1×1 mesh in the same disk, less edge effects: at
    // least three quarters of them fractional.
    let frac_count = b.iter().filter(|x| !x.integer).count();
    let int_count = b.len() - frac_count;
    assert!(frac_count >= 2 * int_count, "{frac_count} {int_count}");
}

#[test]
fn c2x2_is_root2_r45_on_a_square_mesh() {
    // c(2×2) = (√2×√2)R45°: extra beams at (1/2, 1/2) only, none at (1/2, 0) (Oura et
    // al. 2003, from memory).
    let f = square();
    let c = wood(&f, "c(2x2)");
    let r = wood(&f, "(√2×√2)R45°");
    assert_eq!(c, r);
    assert_eq!(c.matrix(), [[1, 1], [-1, 1]]);
    assert_eq!(c.det_n(), 2);
    assert_eq!(label(&f, &r, true), "c(2x2)");
    let b = list(&f, &[c], 150.0);
    assert!(has(&b, frac((1, 2), (1, 2))));
    assert!(has(&b, frac((-1, 2), (1, 2))));
    assert!(!has(&b, frac((1, 2), (0, 1))));
    assert!(!has(&b, frac((0, 1), (1, 2))));
    // The nearest extra beams: |g| = |a*|/√2.
    let first = b.iter().find(|x| !x.integer).unwrap();
    let a_star = 1.0 / f.a1_len_a();
    assert!((first.beam.g_inv_a - a_star / 2f32.sqrt()).abs() < 1e-5);
}

#[test]
fn root3_r30_on_a_hexagonal_mesh() {
    // (√3×√3)R30°: beams at (1/3, 1/3)-type positions, six at |g| = |a*|/√3 (Van Hove
    // et al. 1986, from memory). Which sign pattern depends on γ = 60° or 120°.
    let f = hexagonal();
    let s = wood(&f, "(sqrt3xsqrt3)R30");
    assert_eq!(s.det_n(), 3);
    let mut txt = String::new();
    Wood::from_matrix(&f, &s)
        .unwrap()
        .write_to(&mut txt, false)
        .unwrap();
    assert!(txt == "(√3×√3)R30°" || txt == "(√3×√3)R-30°", "{txt}");
    let b = list(&f, &[s], 200.0);
    let third = if f.gamma_deg() > 90.0 {
        frac((1, 3), (1, 3))
    } else {
        frac((1, 3), (-1, 3))
    };
    assert!(has(&b, third), "γ = {}", f.gamma_deg());
    assert!(b.iter().all(|x| x.pos.den == 1 || x.pos.den == 3));
    let a_star = f.row_spacing_a([1, 0]).map(|d| 1.0 / d).unwrap();
    let ring = b
        .iter()
        .filter(|x| !x.integer && (x.beam.g_inv_a - a_star / 3f32.sqrt()).abs() < 1e-4)
        .count();
    assert_eq!(ring, 6);
    // The √3 lattice is kept by every operation of p6mm: one domain.
    let mut d = [Domain::EMPTY; MAX_DOMAINS];
    assert_eq!(domains::domains(&f, &s, &mut d), 1);
}

#[test]
fn two_domain_2x1_on_a_square_mesh() {
    // Si(100)-(2×1): two domains turned by 90°, half-order beams along both directions,
    // none at (1/2, 1/2) (Oura et al. 2003, from memory).
    let f = face(Structure::Diamond, 5.431, 5.431, [1, 0, 0]);
    let s = Superstructure::parse_matrix("2,0,0,1").unwrap();
    assert_eq!(label(&f, &s, true), "p(2x1)");
    let mut d = [Domain::EMPTY; MAX_DOMAINS];
    let n = domains::domains(&f, &s, &mut d);
    assert_eq!(n, 2);
    assert_eq!(label(&f, &d[1].sup, true), "p(1x2)");
    assert!((d[1].op.angle_deg - 90.0).abs() < 1e-3 && !d[1].op.mirror);
    let sups: Vec<Superstructure> = d[..n].iter().map(|x| x.sup).collect();
    let b = list(&f, &sups, 100.0);
    let find = |p: FracRod| b.iter().find(|x| x.pos.same(&p)).map(|x| x.domains);
    assert_eq!(find(frac((1, 2), (0, 1))), Some(0b01));
    assert_eq!(find(frac((0, 1), (1, 2))), Some(0b10));
    assert_eq!(find(frac((0, 1), (0, 1))), Some(0b11));
    assert_eq!(find(frac((1, 2), (1, 2))), None);
}

#[test]
fn point_groups_of_the_five_meshes() {
    // Orders of the 2D lattice point groups: 4mm 8, 6mm 12, 2mm 4, 2 2 (International
    // Tables for Crystallography, Vol. A, plane groups — from memory).
    let mut ops = [domains::MeshOp::IDENTITY; MAX_DOMAINS];
    assert_eq!(domains::point_group(&square(), &mut ops), 8);
    assert_eq!(domains::point_group(&hexagonal(), &mut ops), 12);
    let rect = face(Structure::Fcc, 3.6, 3.6, [1, 1, 0]);
    assert_eq!(domains::point_group(&rect, &mut ops), 4);
    let centred = face(Structure::Bcc, 3.16, 3.16, [1, 1, 0]);
    assert_eq!(domains::point_group(&centred, &mut ops), 4);
    let oblique = Face::new(
        &Cell::new(Structure::Orthorhombic, 3.0, 4.0, 5.0).unwrap(),
        [1, 1, 1],
    )
    .unwrap();
    assert_eq!(domains::point_group(&oblique, &mut ops), 2);
}

#[test]
fn integer_positions_are_the_substrate_beams_bit_for_bit() {
    let f = hexagonal();
    let inc = Incidence::new(180.0, 12.0, 7.0).unwrap();
    let s = wood(&f, "p(2x2)");
    let mut out = vec![SuperBeam::EMPTY; 400];
    let l = s.beams(&f, &inc, &mut out).unwrap();
    let mut n = 0;
    for b in &out[..l.stored] {
        if let Some(r) = b.pos.integer() {
            assert!(b.integer);
            assert_eq!(b.beam, f.beam(r, &inc).unwrap());
            n += 1;
        }
    }
    let mut plain = [super::super::SurfaceBeam::EMPTY; 400];
    assert_eq!(f.beams(&inc, &mut plain).unwrap().stored, n);
}

#[test]
fn wood_text_forms_and_errors() {
    let w = Wood::parse("(sqrt7xsqrt7)R19.1").unwrap();
    assert_eq!(w.squares, [7, 7]);
    assert_eq!(
        Wood::parse("p(2×1)").unwrap(),
        Wood::parse("(2x1)").unwrap()
    );
    assert_eq!(
        Wood::parse("(√3×√3)R30°").unwrap(),
        Wood::parse("(SQRT3 X sqrt3) r30").unwrap()
    );
    for bad in ["", "p2x2", "(2x)", "(2x2)Q30", "c(0x2)", "(2x2)R400"] {
        assert_eq!(Wood::parse(bad), Err(Error::BadSuperstructureText), "{bad}");
    }
    assert_eq!(Wood::parse("(9x9)"), Err(Error::SuperstructureTooLarge));
    // √3 R30° does not map the square mesh onto itself, nor √2 R45° the hexagonal one.
    assert_eq!(
        Wood::parse("(sqrt3xsqrt3)R30")
            .unwrap()
            .to_matrix(&square()),
        Err(Error::WoodNotOnMesh)
    );
    assert_eq!(
        Wood::parse("(sqrt2xsqrt2)R45")
            .unwrap()
            .to_matrix(&hexagonal()),
        Err(Error::WoodNotOnMesh)
    );
    // (√7×√7)R19.1° on a hexagonal mesh (common practice, no source): 7 cells.
    let s7 = Wood::parse("(sqrt7xsqrt7)R19.1")
        .unwrap()
        .to_matrix(&hexagonal());
    let s7 = s7.or_else(|_| {
        Wood::parse("(sqrt7xsqrt7)R-19.1")
            .unwrap()
            .to_matrix(&hexagonal())
    });
    assert_eq!(s7.unwrap().det_n(), 7);
    assert_eq!(
        Superstructure::parse_matrix("1,2,2,4"),
        Err(Error::SingularSuperstructure)
    );
    assert_eq!(
        Superstructure::parse_matrix("2,0,0"),
        Err(Error::BadSuperstructureText)
    );
    assert_eq!(
        Superstructure::parse_matrix("30,0,0,1"),
        Err(Error::SuperstructureTooLarge)
    );
    let half = Superstructure::parse_matrix("3/2,0,0,3/2").unwrap();
    assert_eq!((half.matrix(), half.den), ([[3, 0], [0, 3]], 2));
    assert!((half.cells() - 2.25).abs() < 1e-6);
    // Its beams at (2/3, 0): M⁻¹·(1, 0) = (2/3, 0).
    let b = list(&square(), &[half], 150.0);
    assert!(has(&b, frac((2, 3), (0, 1))));
    assert!(!has(&b, frac((1, 1), (0, 1))));
    assert!(has(&b, frac((2, 1), (0, 1))));
}

#[test]
fn fractional_beam_text() {
    let p = FracRod::parse("1/2,0").unwrap();
    assert_eq!((p.num, p.den), ([1, 0], 2));
    let p = FracRod::parse("-1/3 2/3").unwrap();
    assert_eq!(p.to_string(), "-1/3,2/3");
    assert_eq!(FracRod::parse("2/4,1").unwrap().to_string(), "1/2,1");
    assert_eq!(FracRod::parse("1,0").unwrap().integer(), Some([1, 0]));
    for bad in ["1/0,0", "1/2", "a,b", "1/2,0,0", "1/100,0"] {
        assert_eq!(FracRod::parse(bad), Err(Error::BadFractionalBeam), "{bad}");
    }
}

#[test]
fn fractional_grid_serves_whole_rod_functions() {
    let f = square();
    let inc = Incidence::new(90.0, 8.0, 20.0).unwrap();
    let p = FracRod::parse("1/2,-1/3").unwrap();
    let g = f.fractional_grid(p.den).unwrap();
    let a = g.beam(p.num, &inc).unwrap();
    let b = f.frac_beam(&p, &inc).unwrap();
    assert!((a.exit_deg - b.exit_deg).abs() < 1e-4);
    assert!((a.exit_azimuth_deg - b.exit_azimuth_deg).abs() < 1e-3);
    assert_eq!(f.fractional_grid(1).unwrap(), f);
    assert_eq!(
        Superstructure::parse("c(2x2)", &f).unwrap().to_string(),
        "1,1,-1,1"
    );
    assert_eq!(
        Superstructure::parse("3/2,0,0,1", &f).unwrap().to_string(),
        "3/2,0,0,1"
    );
}

#[test]
fn root7_has_two_mirror_domains_on_a_hexagonal_mesh() {
    // (√7×√7)R19.1° on a hexagonal mesh has two domains, R+19.1° and R−19.1°, mirror
    // images of each other (Van Hove et al. 1986, from memory).
    let f = hexagonal();
    let s = Superstructure::parse_matrix("3,1,-1,2").unwrap();
    assert_eq!(s.det_n(), 7);
    let mut d = [Domain::EMPTY; MAX_DOMAINS];
    assert_eq!(domains::domains(&f, &s, &mut d), 2);
    assert!(d[1].op.mirror);
    let labels: Vec<String> = d[..2].iter().map(|x| label(&f, &x.sup, true)).collect();
    let mut sorted = labels.clone();
    sorted.sort();
    assert_eq!(
        sorted,
        ["(sqrt7xsqrt7)R-19.1", "(sqrt7xsqrt7)R19.1"],
        "{labels:?}"
    );
}
