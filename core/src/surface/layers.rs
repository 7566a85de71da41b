//! Spacings along the normal: the period of the lattice planes and the atomic planes
//! within it.
//!
//! A face's lattice planes (planes of the Bravais lattice parallel to the face) are
//! [`Face::layer_spacing_a`] apart, and each is a lateral translate of the next: that
//! spacing is the **period along the normal**. When the structure has more than one atom
//! per lattice point, the atoms of one period can sit on several **atomic planes**:
//! hcp(0001) has two per period (c/2 apart), diamond(100) four (a/4 apart), diamond(111)
//! two, unevenly spaced (a√3/12 and a√3/4). [`Face::atomic_planes`] finds them from the
//! structure's motif ([`crate::lattice::Structure::motif`]), atoms of every species
//! counted alike.
//!
//! The termination: where the spacings are uneven, the surface is taken to be cut in the
//! widest gap between atomic planes (the top plane is the one below it; ties to the
//! highest such plane of the period) — common practice (fewest bonds cut), no source.
//! d12 is the spacing between the top plane and the next, d23 the next one, and so on,
//! cyclically.
//!
//! ```
//! use matterwave_core::lattice::{Cell, Structure};
//! use matterwave_core::surface::Face;
//! // Ru(0001): lattice planes c = 4.28 Å apart, atomic planes c/2.
//! let ru = Cell::new(Structure::Hcp, 2.706, 2.706, 4.282).unwrap();
//! let p = Face::new(&ru, [0, 0, 1]).unwrap().atomic_planes();
//! assert_eq!(p.count, 2);
//! assert!((p.period_a - 4.282).abs() < 1e-4);
//! assert!((p.d12_a() - 2.141).abs() < 1e-4);
//! ```

use super::Face;
use crate::math;

/// Most atomic planes one period can hold (the largest motif, graphite's four atoms).
pub const MAX_PLANES: usize = 4;

/// Relative tolerance (of the period) within which two atoms share an atomic plane.
const SAME_PLANE: f32 = 1.0e-4;

/// The atomic planes of one period along a face's normal.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct AtomicPlanes {
    /// Period along the normal: the spacing of the lattice planes, Å (equal to
    /// [`Face::layer_spacing_a`]).
    pub period_a: f32,
    /// Atomic planes per period, 1 to [`MAX_PLANES`].
    pub count: u8,
    /// Interlayer spacings going into the crystal from the top plane of the termination:
    /// d12, d23, … (the first `count` entries, summing to the period; the rest 0), Å.
    pub spacings_a: [f32; MAX_PLANES],
    /// Height of the top plane above a lattice plane, as a fraction of the period,
    /// [0, 1).
    pub top_frac: f32,
}

impl AtomicPlanes {
    /// d12: the spacing between the top atomic plane and the next, Å.
    pub fn d12_a(&self) -> f32 {
        self.spacings_a[0]
    }

    /// d23, Å (equal to the period's next spacing; d12 again with one plane per
    /// period).
    pub fn d23_a(&self) -> f32 {
        if self.count > 1 {
            self.spacings_a[1]
        } else {
            self.spacings_a[0]
        }
    }

    /// Mean interlayer spacing: the period over the number of planes, Å.
    pub fn mean_a(&self) -> f32 {
        self.period_a / f32::from(self.count.max(1))
    }

    /// Whether the planes are evenly spaced (within 1e-4 of the period), so that one
    /// interlayer spacing describes the stack.
    pub fn evenly_spaced(&self) -> bool {
        let m = self.mean_a();
        self.spacings_a
            .iter()
            .take(usize::from(self.count))
            .all(|d| (d - m).abs() <= SAME_PLANE * self.period_a)
    }
}

impl Face {
    /// Height of motif atom `x` (conventional fractional coordinates) above a lattice
    /// plane, as a fraction of the period, [0, 1).
    pub(crate) fn atom_height_frac(&self, x: [f32; 3]) -> f32 {
        let z = math::dot(self.cell.point(x), self.normal) / self.layer_spacing_a;
        let f = z - math::floor(z);
        if f >= 1.0 - SAME_PLANE {
            0.0
        } else {
            f
        }
    }

    /// Depth of motif atom `x` below the top atomic plane of the termination, as a
    /// fraction of the period, [0, 1).
    pub(crate) fn atom_depth_frac(&self, planes: &AtomicPlanes, x: [f32; 3]) -> f32 {
        let d = planes.top_frac - self.atom_height_frac(x);
        let d = d - math::floor(d);
        if !(SAME_PLANE..1.0 - SAME_PLANE).contains(&d) {
            0.0
        } else {
            d
        }
    }

    /// The atomic planes of one period along the normal, from the structure's motif;
    /// see the [module docs](self) for the termination.
    pub fn atomic_planes(&self) -> AtomicPlanes {
        // Distinct heights, sorted from the top of the period down.
        let mut h = [0.0f32; MAX_PLANES];
        let mut n = 0usize;
        for x in self.cell.structure.motif() {
            let z = self.atom_height_frac(*x);
            let dup = h.iter().take(n).any(|y| {
                let d = (y - z).abs();
                d <= SAME_PLANE || d >= 1.0 - SAME_PLANE
            });
            if !dup {
                if let Some(slot) = h.get_mut(n) {
                    *slot = z;
                    n += 1;
                }
            }
        }
        let n = n.max(1);
        let hs = h.get_mut(..n).unwrap_or(&mut []);
        hs.sort_unstable_by(|a, b| b.total_cmp(a));
        // Gap below plane i (to the next one down, the last wrapping to the first of the
        // period below).
        let gap = |i: usize| -> f32 {
            let a = hs.get(i).copied().unwrap_or(0.0);
            match hs.get(i + 1) {
                Some(b) => a - b,
                None => a - (hs.first().copied().unwrap_or(0.0) - 1.0),
            }
        };
        // The top plane: the one below the widest gap (the gap above plane j is the gap
        // below plane j − 1), ties to the highest plane.
        let mut top = 0usize;
        let mut widest = -1.0f32;
        for j in 0..n {
            let above = gap((j + n - 1) % n);
            if above > widest + SAME_PLANE {
                widest = above;
                top = j;
            }
        }
        let mut spacings_a = [0.0f32; MAX_PLANES];
        for (i, s) in spacings_a.iter_mut().take(n).enumerate() {
            *s = gap((top + i) % n) * self.layer_spacing_a;
        }
        AtomicPlanes {
            period_a: self.layer_spacing_a,
            count: n as u8,
            spacings_a,
            top_frac: hs.get(top).copied().unwrap_or(0.0),
        }
    }
}
