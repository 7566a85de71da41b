//! The beams of an overlayer (a superstructure and, optionally, its domains) streamed
//! one at a time in the order of [`union_beams`] — |g| increasing, equal |g| by position
//! descending — with a fixed window and no buffer the size of the list, so that a
//! controller can list them line by line.
//!
//! Every beam of the superstructures lies on the grid of 1/den in (h, k), den the least
//! common multiple of their |det N| ([`Superstructure::position`]). The list walks the
//! rods of that grid ([`Face::fractional_grid`]) in the sorted order of
//! [`SortedBeams`], keeping only the rods of the superstructures' reciprocal lattices
//! ([`BeamLattices`]). On the grid, rod indices descending is position descending, the
//! tie order of [`super_beam_before`]. Each beam kept is then computed again from its
//! exact position on the substrate's own mesh (the arithmetic of [`Face::frac_beam`]),
//! so a beam at a whole position is bit for bit the substrate's [`Face::beam`].

use super::domains::MAX_DOMAINS;
use super::superstructure::{domain_bits, frac_beam_on};
#[cfg(doc)]
use super::{super_beam_before, union_beams};
use super::{Face, FracRod, Incidence, SortedBeams, SuperBeam, Superstructure, MAX_BEAM_DEN};
use crate::error::{Error, Result};

/// Up to [`MAX_DOMAINS`] superstructure lattices as a filter on the rods of the grid of
/// 1/`den`: which of them hold a rod.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct BeamLattices {
    sups: [Superstructure; MAX_DOMAINS],
    len: u8,
    den: i32,
}

impl BeamLattices {
    /// The lattices of `sups` (1 to [`MAX_DOMAINS`] of them) on their common grid.
    /// Errors: `SuperstructureTooLarge` for none, too many, or a grid finer than
    /// 1/[`MAX_BEAM_DEN`].
    pub fn new(sups: &[Superstructure]) -> Result<BeamLattices> {
        if sups.is_empty() || sups.len() > MAX_DOMAINS {
            return Err(Error::SuperstructureTooLarge);
        }
        let mut out = [Superstructure::IDENTITY; MAX_DOMAINS];
        let mut den = 1i32;
        for (slot, s) in out.iter_mut().zip(sups) {
            *slot = *s;
            let d = s.det_n().abs().max(1);
            den = den / super::gcd(den, d).max(1) * d;
            if den > MAX_BEAM_DEN {
                return Err(Error::SuperstructureTooLarge);
            }
        }
        Ok(BeamLattices {
            sups: out,
            len: sups.len() as u8,
            den,
        })
    }

    /// The grid's denominator: rods of the grid are positions (n0, n1)/den.
    pub fn den(&self) -> i32 {
        self.den
    }

    /// Bit i set when lattice i holds the grid rod `rod` (position `rod`/den); 0 when
    /// none does.
    pub fn domains_of(&self, rod: [i32; 2]) -> u16 {
        self.domains_at(&FracRod {
            num: rod,
            den: self.den,
        })
    }

    /// Bit i set when lattice i holds the position `pos`; 0 when none does.
    pub fn domains_at(&self, pos: &FracRod) -> u16 {
        domain_bits(self.sups.get(..usize::from(self.len)).unwrap_or(&[]), pos)
    }
}

/// Iterator over the beams of [`BeamLattices`] at an incidence, in the order of
/// [`union_beams`] (see the module docs). Each `next` does at most one walk of the
/// search disk of the grid (as [`SortedBeams`]).
#[derive(Clone, Copy, Debug)]
pub struct OverlayerBeams {
    sorted: SortedBeams,
    lattices: BeamLattices,
    /// The substrate's reciprocal mesh, 1/Å: each beam is computed from it exactly.
    recip_2d_inv_a: [[f32; 2]; 2],
}

impl OverlayerBeams {
    /// The beams of `lattices` on `face` at `inc` with |g| up to `max_g_inv_a` (1/Å;
    /// `f32::INFINITY` for every propagating beam).
    ///
    /// ```
    /// use matterwave_core::lattice::{Cell, Structure};
    /// use matterwave_core::surface::{union_beams, BeamLattices, Face, Incidence};
    /// use matterwave_core::surface::{OverlayerBeams, SuperBeam, Superstructure};
    /// let f = Face::new(&Cell::new(Structure::Fcc, 3.524, 0.0, 0.0).unwrap(), [1, 0, 0]).unwrap();
    /// let c2x2 = Superstructure::new([[1, 1], [-1, 1]], 1).unwrap();
    /// let inc = Incidence::normal(80.0).unwrap();
    /// let l = BeamLattices::new(&[c2x2]).unwrap();
    /// let streamed: Vec<_> = OverlayerBeams::new(&f, &inc, l, f32::INFINITY)
    ///     .unwrap()
    ///     .map(|b| b.pos)
    ///     .collect();
    /// let mut out = [SuperBeam::EMPTY; 64];
    /// let n = union_beams(&f, &inc, &[c2x2], &mut out).unwrap().stored;
    /// assert_eq!(streamed, out[..n].iter().map(|b| b.pos).collect::<Vec<_>>());
    /// ```
    pub fn new(
        face: &Face,
        inc: &Incidence,
        lattices: BeamLattices,
        max_g_inv_a: f32,
    ) -> Result<OverlayerBeams> {
        let grid = face.fractional_grid(lattices.den)?;
        Ok(OverlayerBeams {
            sorted: grid.beams_within(inc, max_g_inv_a).sorted_in(lattices),
            lattices,
            recip_2d_inv_a: face.recip_2d_inv_a,
        })
    }
}

impl Iterator for OverlayerBeams {
    type Item = SuperBeam;

    fn next(&mut self) -> Option<SuperBeam> {
        loop {
            let b = self.sorted.next()?;
            let pos = FracRod {
                num: b.rod,
                den: self.lattices.den,
            }
            .normalised();
            // Computed again on the substrate's own mesh (`Face::frac_beam`'s
            // arithmetic): a whole position is exactly `Face::beam` of its rod. A beam at
            // the very edge of the disk may round to evanescent there; it is skipped, as
            // `union_beams` skips it.
            let inc = self.sorted.incidence();
            if let Ok(beam) = frac_beam_on(&self.recip_2d_inv_a, &pos, inc) {
                return Some(SuperBeam {
                    pos,
                    integer: pos.integer().is_some(),
                    beam,
                    domains: self.lattices.domains_at(&pos),
                });
            }
        }
    }
}

#[cfg(test)]
mod tests {
    extern crate std;
    use super::*;
    use crate::lattice::{Cell, Structure};
    use crate::surface::domains::{domains, Domain};
    use crate::surface::union_beams;

    /// The streamed list is `union_beams`' list (the one the host's `calc beams
    /// --overlayer` prints), beam for beam and bit for bit, for single superstructures
    /// and domain unions on square, hexagonal and rectangular meshes, over lists many
    /// windows long.
    #[test]
    fn streamed_list_is_the_union_listing() {
        // (structure, a Å, face, N, q, with domains, energy eV, tilt °)
        type Case = (Structure, f32, [i32; 3], [[i32; 2]; 2], i32, bool, f32, f32);
        let cases: [Case; 6] = [
            (
                Structure::Fcc,
                3.524,
                [1, 0, 0],
                [[2, 0], [0, 2]],
                1,
                false,
                60.0,
                0.0,
            ),
            (
                Structure::Fcc,
                3.524,
                [1, 0, 0],
                [[1, 1], [-1, 1]],
                1,
                false,
                140.0,
                7.0,
            ),
            (
                Structure::Fcc,
                3.615,
                [1, 0, 0],
                [[2, 0], [0, 1]],
                1,
                true,
                90.0,
                0.0,
            ),
            (
                Structure::Fcc,
                3.9242,
                [1, 1, 1],
                [[2, 1], [-1, 1]],
                1,
                true,
                120.0,
                3.0,
            ),
            (
                Structure::Fcc,
                4.0782,
                [1, 1, 0],
                [[3, 0], [0, 1]],
                1,
                true,
                75.0,
                -5.0,
            ),
            (
                Structure::Bcc,
                3.1652,
                [1, 1, 0],
                [[2, 0], [0, 2]],
                1,
                false,
                200.0,
                12.0,
            ),
        ];
        for (s, a, m, n, q, with_domains, e, tilt) in cases {
            let f = Face::new(&Cell::new(s, a, a, a).unwrap(), m).unwrap();
            let sup = Superstructure::new(n, q).unwrap();
            let inc = Incidence::new(e, tilt, 0.0).unwrap();
            let mut doms = [Domain::EMPTY; MAX_DOMAINS];
            let k = if with_domains {
                domains(&f, &sup, &mut doms)
            } else {
                doms[0].sup = sup;
                1
            };
            let sups: std::vec::Vec<Superstructure> = doms[..k].iter().map(|d| d.sup).collect();
            let mut out = std::vec![SuperBeam::EMPTY; 2000];
            let l = union_beams(&f, &inc, &sups, &mut out).unwrap();
            assert!(!l.truncated && l.stored > 20, "{m:?} {n:?}: {}", l.stored);
            let lat = BeamLattices::new(&sups).unwrap();
            let got: std::vec::Vec<SuperBeam> = OverlayerBeams::new(&f, &inc, lat, f32::INFINITY)
                .unwrap()
                .collect();
            assert_eq!(got.len(), l.stored, "{m:?} {n:?} {e} eV");
            for (i, (g, w)) in got.iter().zip(&out[..l.stored]).enumerate() {
                assert_eq!(g, w, "{m:?} {n:?} {e} eV: beam {i}");
            }
        }
    }

    /// Beams at whole positions are exactly the substrate's beams.
    #[test]
    fn whole_positions_are_the_substrate_beams() {
        let f = Face::new(
            &Cell::new(Structure::Fcc, 3.524, 0.0, 0.0).unwrap(),
            [1, 1, 1],
        )
        .unwrap();
        let sup = Superstructure::new([[2, 1], [-1, 1]], 1).unwrap();
        let inc = Incidence::new(150.0, 9.0, 21.0).unwrap();
        let lat = BeamLattices::new(&[sup]).unwrap();
        let mut whole = 0;
        for b in OverlayerBeams::new(&f, &inc, lat, f32::INFINITY).unwrap() {
            if let Some(r) = b.pos.integer() {
                assert_eq!(b.beam, f.beam(r, &inc).unwrap());
                whole += 1;
            }
        }
        assert!(whole > 5);
    }

    #[test]
    fn bounds_are_refused() {
        assert_eq!(BeamLattices::new(&[]), Err(Error::SuperstructureTooLarge));
        let big = Superstructure::new([[8, 0], [0, 8]], 1).unwrap();
        let odd = Superstructure::new([[7, 0], [0, 7]], 1).unwrap();
        assert!(BeamLattices::new(&[big]).is_ok());
        // lcm(64, 49) is beyond the grid of 1/99.
        assert_eq!(
            BeamLattices::new(&[big, odd]),
            Err(Error::SuperstructureTooLarge)
        );
    }
}
