//! Bulk reflections: families with multiplicity in order of decreasing d, Bragg angles
//! per order, and transmission rings on a flat screen.
//!
//! Families are orbits of (h k l) under the Laue group of the crystal system (m-3m
//! cubic, 4/mmm tetragonal, mmm orthorhombic, 6/mmm hexagonal). Each family is reported
//! by its representative with non-negative, descending-where-symmetric indices
//! (cubic h ≥ k ≥ l ≥ 0; tetragonal and hexagonal h ≥ k ≥ 0, l ≥ 0; orthorhombic all
//! ≥ 0). Higher orders are separate families: (200) is listed apart from (100).
//!
//! ```
//! use matterwave_core::lattice::{Cell, Structure};
//! use matterwave_core::reflections::{families, Reflection};
//! let ni = Cell::new(Structure::Fcc, 3.524, 0.0, 0.0).unwrap();
//! let mut buf = [Reflection::EMPTY; 4];
//! let list = families(&ni, 0.5, &mut buf).unwrap();
//! assert_eq!(buf[0].hkl, [1, 1, 1]);
//! assert_eq!(buf[0].multiplicity, 8);
//! assert_eq!(buf[1].hkl, [2, 0, 0]);
//! assert_eq!(buf[1].multiplicity, 6);
//! assert!(!list.complete());
//! ```

use crate::error::{finite, Error, Quantity, Result};
use crate::lattice::{Cell, System};
use crate::listing::insert_sorted;
use crate::math;

/// One reflection family.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Reflection {
    /// Representative indices (conventional cell).
    pub hkl: [i32; 3],
    /// Interplanar spacing, Å.
    pub d_a: f32,
    /// Number of symmetry-equivalent (h k l) in the family.
    pub multiplicity: u16,
}

impl Reflection {
    /// A placeholder for initialising buffers.
    pub const EMPTY: Reflection = Reflection {
        hkl: [0, 0, 0],
        d_a: 0.0,
        multiplicity: 0,
    };
}

pub use crate::listing::Listing;

/// Size of the Laue group of a crystal system.
const fn group_order(system: System) -> u16 {
    match system {
        System::Cubic => 48,
        System::Tetragonal => 16,
        System::Orthorhombic => 8,
        System::Hexagonal => 24,
    }
}

/// Calls `f` for every image of `hkl` under the system's Laue group (with repeats).
fn for_each_image(system: System, hkl: [i32; 3], mut f: impl FnMut([i32; 3])) {
    let [h, k, l] = hkl;
    match system {
        System::Cubic => {
            let perms = [
                [h, k, l],
                [h, l, k],
                [k, h, l],
                [k, l, h],
                [l, h, k],
                [l, k, h],
            ];
            for p in perms {
                for s in 0..8 {
                    f(signed(p, s));
                }
            }
        }
        System::Tetragonal => {
            for p in [[h, k, l], [k, h, l]] {
                for s in 0..8 {
                    f(signed(p, s));
                }
            }
        }
        System::Orthorhombic => {
            for s in 0..8 {
                f(signed(hkl, s));
            }
        }
        System::Hexagonal => {
            // Six-fold rotation in reciprocal indices: (h, k) → (h + k, −h).
            let mut hk = [h, k];
            for _ in 0..6 {
                for lz in [l, -l] {
                    f([hk[0], hk[1], lz]);
                    f([hk[1], hk[0], lz]);
                }
                hk = [hk[0] + hk[1], -hk[0]];
            }
        }
    }
}

fn signed(p: [i32; 3], s: u32) -> [i32; 3] {
    let sg = |bit: u32, v: i32| if s & bit != 0 { -v } else { v };
    [sg(1, p[0]), sg(2, p[1]), sg(4, p[2])]
}

/// Whether `hkl` is the representative of its family (see the module docs).
pub fn is_representative(system: System, hkl: [i32; 3]) -> bool {
    let [h, k, l] = hkl;
    match system {
        System::Cubic => h >= k && k >= l && l >= 0,
        System::Tetragonal | System::Hexagonal => h >= k && k >= 0 && l >= 0,
        System::Orthorhombic => h >= 0 && k >= 0 && l >= 0,
    }
}

/// Number of distinct (h k l) equivalent to `hkl` under the system's Laue group.
///
/// ```
/// use matterwave_core::lattice::System;
/// use matterwave_core::reflections::multiplicity;
/// assert_eq!(multiplicity(System::Cubic, [1, 1, 0]), 12);
/// assert_eq!(multiplicity(System::Hexagonal, [1, 0, 0]), 6);
/// assert_eq!(multiplicity(System::Hexagonal, [1, 0, 1]), 12);
/// ```
pub fn multiplicity(system: System, hkl: [i32; 3]) -> u16 {
    let mut fixed = 0u16;
    for_each_image(system, hkl, |img| {
        if img == hkl {
            fixed += 1;
        }
    });
    group_order(system) / fixed.max(1)
}

/// Lists the allowed reflection families with d ≥ `d_min_a` (Å) in order of decreasing
/// d (ties: larger indices first), into `out`.
///
/// When `out` is too small the largest-d families are kept and the listing says it is
/// truncated; the search stops as soon as no remaining family could enter the buffer,
/// so a short buffer is cheap even for a tiny `d_min_a`.
pub fn families(cell: &Cell, d_min_a: f32, out: &mut [Reflection]) -> Result<Listing> {
    let d_min = finite(d_min_a, Quantity::Length)?;
    if d_min <= 0.0 {
        return Err(Error::TooLow(Quantity::Length));
    }
    if out.is_empty() {
        return Err(Error::EmptyBuffer);
    }
    let system = cell.structure.system();
    let longest = cell.longest_axis_a();
    let mut stored = 0usize;
    let mut truncated = false;
    let mut s = 1i32;
    loop {
        // Every (hkl) with d ≥ d_cut has max |index| ≤ longest / d_cut.
        let d_cut = match out.last().filter(|_| stored == out.len()) {
            Some(last) => last.d_a.max(d_min),
            None => d_min,
        };
        if s as f32 > longest / d_cut || s > 4096 {
            break;
        }
        for h in 0..=s {
            for k in 0..=s {
                for l in 0..=s {
                    if h != s && k != s && l != s {
                        continue;
                    }
                    let hkl = [h, k, l];
                    if !is_representative(system, hkl) || !cell.allowed(hkl) {
                        continue;
                    }
                    let d = 1.0 / math::sqrt(cell.inv_d2(hkl));
                    if d < d_min {
                        continue;
                    }
                    let r = Reflection {
                        hkl,
                        d_a: d,
                        multiplicity: multiplicity(system, hkl),
                    };
                    if insert_sorted(out, &mut stored, r, before) {
                        truncated = true;
                    }
                }
            }
        }
        s += 1;
    }
    // The search stopped early because the buffer was full: the families it did not
    // reach all have d below the last one kept. Any of them with d ≥ d_min means the
    // listing is truncated; look for the first one.
    if !truncated && stored == out.len() {
        truncated = any_family_from_shell(cell, d_min, s, longest);
    }
    Ok(Listing { stored, truncated })
}

/// Whether an allowed family with d ≥ `d_min` has a largest index of `first_shell` or
/// more (the shells a full-buffer search did not reach).
fn any_family_from_shell(cell: &Cell, d_min: f32, first_shell: i32, longest: f32) -> bool {
    let system = cell.structure.system();
    let mut s = first_shell;
    while s as f32 <= longest / d_min && s <= 4096 {
        for h in 0..=s {
            for k in 0..=s {
                for l in 0..=s {
                    if h != s && k != s && l != s {
                        continue;
                    }
                    let hkl = [h, k, l];
                    if is_representative(system, hkl)
                        && cell.allowed(hkl)
                        && 1.0 / math::sqrt(cell.inv_d2(hkl)) >= d_min
                    {
                        return true;
                    }
                }
            }
        }
        s += 1;
    }
    false
}

/// Decreasing d; equal d: larger indices first.
fn before(a: &Reflection, b: &Reflection) -> bool {
    a.d_a > b.d_a || (a.d_a == b.d_a && a.hkl > b.hkl)
}

/// Bragg angle θ_B (degrees) for spacing `d_a` (Å), wavelength `lambda_a` (Å) and
/// order n ≥ 1: n·λ = 2d·sin θ_B.
///
/// ```
/// # use matterwave_core::reflections::bragg_deg;
/// assert!((bragg_deg(2.0, 1.0, 1).unwrap() - 14.4775).abs() < 1e-3);
/// assert!(bragg_deg(1.0, 1.5, 2).is_err());
/// ```
pub fn bragg_deg(d_a: f32, lambda_a: f32, order: u32) -> Result<f32> {
    let d = finite(d_a, Quantity::Length)?;
    let l = finite(lambda_a, Quantity::Wavelength)?;
    if d <= 0.0 {
        return Err(Error::TooLow(Quantity::Length));
    }
    if l <= 0.0 {
        return Err(Error::TooLow(Quantity::Wavelength));
    }
    if order == 0 {
        return Err(Error::TooLow(Quantity::Count));
    }
    let x = order as f32 * l / (2.0 * d);
    if x > 1.0 {
        return Err(Error::NoBraggAngle);
    }
    Ok(math::deg(math::asin(x)))
}

/// A transmission ring on a flat screen perpendicular to the beam.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Ring {
    /// Scattering angle 2θ_B, degrees.
    pub two_theta_deg: f32,
    /// Ring radius R = L·tan 2θ_B, in the unit of the screen distance.
    pub radius: f32,
}

/// Ring of a reflection with spacing `d_a` (Å) at wavelength `lambda_a` (Å) on a flat
/// screen at distance `screen` (any unit; the radius comes back in the same unit).
/// First order only (higher orders are their own families).
///
/// ```
/// # use matterwave_core::reflections::ring;
/// // Camera constant: R·d ≈ λ·L at small angles.
/// let r = ring(2.0, 0.037, 500.0).unwrap();
/// assert!((r.radius * 2.0 - 0.037 * 500.0).abs() < 0.01);
/// ```
pub fn ring(d_a: f32, lambda_a: f32, screen: f32) -> Result<Ring> {
    let l = finite(screen, Quantity::Length)?;
    if l <= 0.0 {
        return Err(Error::TooLow(Quantity::Length));
    }
    let theta = bragg_deg(d_a, lambda_a, 1)?;
    let two_theta = 2.0 * theta;
    if two_theta >= 90.0 {
        return Err(Error::BeyondScreen);
    }
    Ok(Ring {
        two_theta_deg: two_theta,
        radius: l * math::tan(math::rad(two_theta)),
    })
}

#[cfg(test)]
mod tests {

    /// A short buffer keeps the first families of the full list, and says it is
    /// truncated exactly when the full list is longer — for every buffer size.
    #[test]
    fn short_buffers_keep_the_head_and_flag_truncation() {
        for (structure, a, c, d_min) in [
            (Structure::Fcc, 3.615f32, 0.0f32, 0.8f32),
            (Structure::Bcc, 3.165, 0.0, 0.9),
            (Structure::Diamond, 5.431, 0.0, 1.0),
            (Structure::Hcp, 2.706, 4.282, 0.9),
        ] {
            let cell = Cell::new(structure, a, a, c).unwrap();
            let mut all = [Reflection::EMPTY; 256];
            let full = families(&cell, d_min, &mut all).unwrap();
            assert!(!full.truncated && full.stored > 3, "{structure:?}");
            for n in 1..=full.stored + 1 {
                let mut buf = [Reflection::EMPTY; 256];
                let l = families(&cell, d_min, &mut buf[..n]).unwrap();
                assert_eq!(l.stored, n.min(full.stored), "{structure:?} n={n}");
                assert_eq!(buf[..l.stored], all[..l.stored], "{structure:?} n={n}");
                assert_eq!(l.truncated, full.stored > n, "{structure:?} n={n}");
            }
        }
    }

    use super::*;
    use crate::lattice::Structure;

    #[test]
    fn multiplicities() {
        // Standard powder multiplicities (common practice, no source).
        let c = System::Cubic;
        assert_eq!(multiplicity(c, [1, 0, 0]), 6);
        assert_eq!(multiplicity(c, [1, 1, 1]), 8);
        assert_eq!(multiplicity(c, [2, 1, 0]), 24);
        assert_eq!(multiplicity(c, [3, 2, 1]), 48);
        let h = System::Hexagonal;
        assert_eq!(multiplicity(h, [0, 0, 2]), 2);
        assert_eq!(multiplicity(h, [1, 1, 0]), 6);
        assert_eq!(multiplicity(h, [2, 1, 0]), 12);
        assert_eq!(multiplicity(h, [2, 1, 1]), 24);
        assert_eq!(multiplicity(System::Tetragonal, [1, 1, 0]), 4);
        assert_eq!(multiplicity(System::Orthorhombic, [1, 1, 1]), 8);
    }

    #[test]
    fn multiplicities_sum_to_shell_count() {
        // Sum of multiplicities = number of allowed (hkl) with d ≥ d_min, by brute force.
        let cell = Cell::new(Structure::Hcp, 3.21, 0.0, 5.21).unwrap();
        let mut buf = [Reflection::EMPTY; 200];
        let list = families(&cell, 0.9, &mut buf).unwrap();
        assert!(list.complete());
        let total: u32 = buf[..list.stored]
            .iter()
            .map(|r| r.multiplicity as u32)
            .sum();
        let mut brute = 0u32;
        for h in -8..=8 {
            for k in -8..=8 {
                for l in -8..=8 {
                    if cell.allowed([h, k, l]) && 1.0 / libm::sqrtf(cell.inv_d2([h, k, l])) >= 0.9 {
                        brute += 1;
                    }
                }
            }
        }
        assert_eq!(total, brute);
    }

    #[test]
    fn short_buffer_keeps_largest_d() {
        let cell = Cell::new(Structure::Bcc, 3.165, 0.0, 0.0).unwrap();
        let mut long = [Reflection::EMPTY; 64];
        let all = families(&cell, 0.4, &mut long).unwrap();
        let mut short = [Reflection::EMPTY; 5];
        let some = families(&cell, 0.4, &mut short).unwrap();
        assert!(all.complete() && !some.complete());
        assert_eq!(&short[..], &long[..5]);
        assert_eq!(short[0].hkl, [1, 1, 0]);
    }
}
