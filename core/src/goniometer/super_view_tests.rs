//! Tests of superstructure beams in view.
//!
//! Sources: the lattice constants are the crystal table's values (Ni a = 3.524 Å,
//! Cu a = 3.615 Å, Si a = 5.431 Å; tables/crystals.toml cites them); the patterns — Ni(100) p(2×2)-O with its half-order
//! beams, the two-domain (2×1) of Si(100) with (1/2, 0) from one domain and (0, 1/2)
//! from the other — as in M. A. Van Hove, W. H. Weinberg, C.-M. Chan, "Low-Energy
//! Electron Diffraction" (Springer 1986), and K. Oura et al., "Surface Science: An
//! Introduction" (Springer 2003), chapters on surface structures and LEED patterns;
//! λ(E) = hc/√(E(E + 2mc²)) with CODATA 2018 hc and mc².

extern crate std;
use std::string::ToString;
use std::vec;
use std::vec::Vec;

use crate::surface::FracRod;

use super::super::{beam_direction_lab, beams_in_view, detector_direction, InView};
use super::*;
use crate::lattice::{Cell, Structure};
use crate::surface::domains::{Overlayer, MAX_DOMAINS};
use crate::surface::union_beams;

fn face(s: Structure, a: f32, m: [i32; 3]) -> Face {
    Face::new(&Cell::new(s, a, a, 0.0).unwrap(), m).unwrap()
}

fn ni100() -> Face {
    face(Structure::Fcc, 3.524, [1, 0, 0])
}

fn si100() -> Face {
    face(Structure::Diamond, 5.431, [1, 0, 0])
}

/// λ in Å at kinetic energy `e` eV, in f64 from the textbook formula (not the core).
fn lambda_f64(e: f64) -> f64 {
    let (hc, mc2) = (12398.419843320f64, 510998.95f64);
    hc / (e * (e + 2.0 * mc2)).sqrt()
}

fn p2x2() -> Superstructure {
    Superstructure::new([[2, 0], [0, 2]], 1).unwrap()
}

fn supers_of(f: &Face, o: Overlayer) -> Vec<Superstructure> {
    let mut s = [Superstructure::IDENTITY; MAX_DOMAINS];
    let n = o.supers(f, &mut s);
    s[..n].to_vec()
}

fn all_in_view(
    f: &Face,
    s: &[Superstructure],
    inc: &Incidence,
    arm: f32,
    elev: f32,
    acc: f32,
) -> Vec<SuperInView> {
    let mut out = vec![SuperInView::EMPTY; 4096];
    let l = super_beams_in_view(f, s, inc, arm, elev, acc, &mut out).unwrap();
    assert!(!l.truncated);
    out.truncate(l.stored);
    out
}

/// Ni(100) p(2×2)-O at normal incidence: the half-order beam (1/2, 0) leaves at
/// sin θ = λ/(2·a_s), a_s = a/√2 the substrate's row period (the grating equation
/// with the doubled period), in the scattering plane at arm δ = θ; (−1/2, 0) at −θ.
/// The reference is f64 from the formula, the tolerance the oracle's 0.002°.
#[test]
fn ni100_p2x2_half_order_beam_where_the_grating_equation_puts_it() {
    let f = ni100();
    for e in [40.0f64, 60.0, 120.0, 250.0] {
        let a_s = 3.524f64 / 2f64.sqrt();
        let theta = (lambda_f64(e) / (2.0 * a_s)).asin().to_degrees();
        let inc = Incidence::normal(e as f32).unwrap();
        for (arm, label) in [(theta, "1/2,0"), (-theta, "-1/2,0")] {
            let near = super_nearest_in_view(&f, &[p2x2()], &inc, arm as f32, 0.0, 1.0)
                .unwrap()
                .unwrap();
            assert_eq!(near.beam.pos.to_string(), label, "{e} eV");
            assert!(!near.beam.integer && near.beam.domains == 1);
            assert!(
                (f64::from(near.arm_deg) - arm).abs() < 0.002,
                "{e} eV {label}: arm {} vs {arm}",
                near.arm_deg
            );
            assert!(near.elevation_deg.abs() < 0.002 && near.offset_deg < 0.002);
            assert!((f64::from(near.beam.beam.exit_deg) - theta).abs() < 0.002);
            let list = all_in_view(&f, &[p2x2()], &inc, arm as f32, 0.0, 1.0);
            assert_eq!(list.first(), Some(&near));
        }
    }
}

/// Property: at integer positions the superstructure's view is the substrate's,
/// bit for bit (beam, offset, arm, elevation), and for an integer matrix every
/// substrate beam in view is among the superstructure's; every beam listed is within
/// the acceptance and is one of the union's beams (against `union_beams`, the
/// superstructure listing of `calc beams --overlayer`, filtered by the cone one by one).
#[test]
fn integer_positions_are_the_substrates_view_exactly() {
    let cu = |m| face(Structure::Fcc, 3.615, m);
    let mut integers = 0;
    let mut fractional = 0;
    for (f, text) in [
        (ni100(), "p(2x2)"),
        (ni100(), "c(2x2)"),
        (cu([1, 1, 1]), "(sqrt3xsqrt3)R30"),
        (cu([1, 1, 0]), "2,1,0,3"),
        (si100(), "(2x1)"),
    ] {
        let sup = Superstructure::parse(text, &f).unwrap();
        for with_domains in [false, true] {
            let supers = supers_of(&f, Overlayer::new(sup, with_domains));
            for (e, tilt, az) in [(80.0, 0.0, 0.0), (150.0, 12.0, 20.0), (400.0, -30.0, 100.0)] {
                let inc = Incidence::new(e, tilt, az).unwrap();
                let mut every = vec![SuperBeam::EMPTY; 4000];
                let l = union_beams(&f, &inc, &supers, &mut every).unwrap();
                assert!(!l.truncated);
                every.truncate(l.stored);
                for (arm, elev, acc) in [(25.0, 0.0, 6.0), (-40.0, 8.0, 10.0), (70.0, -5.0, 20.0)] {
                    let got = all_in_view(&f, &supers, &inc, arm, elev, acc);
                    let mut sub = [InView::EMPTY; 2000];
                    let ls = beams_in_view(&f, &inc, arm, elev, acc, &mut sub).unwrap();
                    let sub = &sub[..ls.stored];
                    for v in &got {
                        if let Some(rod) = v.beam.pos.integer() {
                            assert!(v.beam.integer);
                            let s = sub.iter().find(|s| s.beam.rod == rod).unwrap();
                            assert_eq!(v.beam.beam, s.beam, "{text} {rod:?}");
                            assert_eq!(
                                (v.offset_deg, v.arm_deg, v.elevation_deg),
                                (s.offset_deg, s.arm_deg, s.elevation_deg)
                            );
                            integers += 1;
                        } else {
                            fractional += 1;
                        }
                    }
                    if sup.den == 1 {
                        for s in sub {
                            let p = FracRod::whole(s.beam.rod);
                            assert!(got.iter().any(|v| v.beam.pos.same(&p)), "{text} {s:?}");
                        }
                    }
                    // Against the full union, one beam at a time.
                    let d = detector_direction(arm, elev);
                    let cos_acc = math::cos(math::rad(acc));
                    let mut want: Vec<(FracRod, u16)> = every
                        .iter()
                        .filter(|b| math::dot(beam_direction_lab(&b.beam, &inc), d) >= cos_acc)
                        .map(|b| (b.pos, b.domains))
                        .collect();
                    let mut have: Vec<(FracRod, u16)> =
                        got.iter().map(|v| (v.beam.pos, v.beam.domains)).collect();
                    let key = |x: &(FracRod, u16)| (x.0.num, x.0.den);
                    want.sort_by_key(key);
                    have.sort_by_key(key);
                    assert_eq!(have, want, "{text} domains {with_domains} {e} eV arm {arm}");
                    // Nearest first.
                    assert!(got.windows(2).all(|w| w[0].offset_deg <= w[1].offset_deg));
                }
            }
        }
    }
    assert!(integers > 50 && fractional > 100, "{integers} {fractional}");
}

/// Si(100) (2×1) on the square mesh: without its domains, the detector where (0, 1/2)
/// would be sees nothing there; with them, (0, 1/2) comes from the second domain
/// (the (1×2), turned by 90°) only, while (1/2, 0) is the first domain's. At normal
/// incidence (0, 1/2) leaves along e2, at arm 0 and elevation θ = asin(λ/(2·a_s)).
#[test]
fn the_second_domain_of_a_2x1_shows_the_other_half_order_beam() {
    let f = si100();
    let sup = Superstructure::parse("(2x1)", &f).unwrap();
    let e = 90.0f64;
    let a_s = 5.431f64 / 2f64.sqrt();
    let theta = (lambda_f64(e) / (2.0 * a_s)).asin().to_degrees() as f32;
    let inc = Incidence::normal(e as f32).unwrap();
    let one = supers_of(&f, Overlayer::new(sup, false));
    let both = supers_of(&f, Overlayer::new(sup, true));
    assert_eq!(both.len(), 2);
    let alone = super_nearest_in_view(&f, &one, &inc, 0.0, theta, 1.0).unwrap();
    assert!(alone.is_none(), "{alone:?}");
    let v = super_nearest_in_view(&f, &both, &inc, 0.0, theta, 1.0)
        .unwrap()
        .unwrap();
    assert_eq!(v.beam.pos.to_string(), "0,1/2");
    assert_eq!(v.beam.domains, 0b10);
    assert!((v.elevation_deg - theta).abs() < 0.002 && v.offset_deg < 0.002);
    let h = super_nearest_in_view(&f, &both, &inc, theta, 0.0, 1.0)
        .unwrap()
        .unwrap();
    assert_eq!(
        (h.beam.pos.to_string().as_str(), h.beam.domains),
        ("1/2,0", 0b01)
    );
    // The specular belongs to both.
    let s = super_nearest_in_view(&f, &both, &inc, 0.0, 0.0, 1.0)
        .unwrap()
        .unwrap();
    assert_eq!((s.beam.pos, s.beam.domains), (FracRod::whole([0, 0]), 0b11));
}

/// The bounded nearest search against the first of the full list, sparse to dense
/// (a (7×7)-sized cell at 3 keV: many beams within a degree), with and without domains.
#[test]
fn super_nearest_is_the_first_in_view() {
    let mut found = 0;
    for (f, text) in [
        (ni100(), "p(2x2)"),
        (face(Structure::Fcc, 3.615, [1, 1, 1]), "(7x7)"),
        (si100(), "c(4x2)"),
    ] {
        let sup = Superstructure::parse(text, &f).unwrap();
        for with_domains in [false, true] {
            let supers = supers_of(&f, Overlayer::new(sup, with_domains));
            for (e, tilt, az) in [(100.0, 10.0, 0.0), (3000.0, 40.0, 25.0)] {
                let inc = Incidence::new(e, tilt, az).unwrap();
                for i in 0..30 {
                    let arm = -150.0 + 9.7 * i as f32;
                    let elev = 0.3 * (i % 5) as f32;
                    let mut first = [SuperInView::EMPTY; 1];
                    let l =
                        super_beams_in_view(&f, &supers, &inc, arm, elev, 1.0, &mut first).unwrap();
                    let want = (l.stored > 0).then_some(first[0]);
                    let got = super_nearest_in_view(&f, &supers, &inc, arm, elev, 1.0).unwrap();
                    assert_eq!(got, want, "{text} {e} eV arm {arm} elev {elev}");
                    found += usize::from(got.is_some());
                }
            }
        }
    }
    assert!(found >= 60, "{found} points with a beam in view");
}

#[test]
fn bad_input_is_refused() {
    let f = ni100();
    let inc = Incidence::normal(60.0).unwrap();
    let mut out = [SuperInView::EMPTY; 2];
    assert_eq!(
        super_beams_in_view(&f, &[], &inc, 0.0, 0.0, 1.0, &mut out),
        Err(Error::SuperstructureTooLarge)
    );
    assert_eq!(
        super_beams_in_view(&f, &[p2x2()], &inc, 0.0, 0.0, 1.0, &mut []),
        Err(Error::EmptyBuffer)
    );
    assert!(super_nearest_in_view(&f, &[p2x2(); 17], &inc, 0.0, 0.0, 1.0).is_err());
    assert!(super_nearest_in_view(&f, &[p2x2()], &inc, f32::NAN, 0.0, 1.0).is_err());
}
