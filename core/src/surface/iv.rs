//! Kinematic I-V maxima: where the perpendicular wavevectors inside the crystal add up
//! to a bulk reciprocal-lattice vector.

use super::*;

impl Face {
    /// Kinematic I-V peak energies (outside, eV) on rod (h, k) between `from_ev` and
    /// `to_ev` at tilt/azimuth of `inc` with inner potential `v0_ev`, in increasing
    /// energy, into `out`.
    ///
    /// Inside, K = 1/λ(E + V0) and K⊥ = √(K² − k∥²) for the incoming and the outgoing
    /// beam; a peak sits where K⊥,in + K⊥,out = G·n̂ for an allowed bulk G on this rod.
    /// Only energies where the beam exists outside are reported. Each peak's
    /// [`IvPeak::order`] is ⌈G⊥·d⌉ with d the period along the normal (see there). Normal incidence uses
    /// the closed form; oblique incidence bisects (the sum grows monotonically with E
    /// wherever the beam exists).
    ///
    /// ```
    /// use matterwave_core::lattice::{Cell, Structure};
    /// use matterwave_core::surface::{Face, Incidence, IvPeak};
    /// let a = 3.524;
    /// let f = Face::new(&Cell::new(Structure::Fcc, a, 0.0, 0.0).unwrap(), [1, 0, 0]).unwrap();
    /// let mut out = [IvPeak::EMPTY; 8];
    /// let inc = Incidence::normal(100.0).unwrap();
    /// let n = f.iv_peaks([0, 0], &inc, 0.0, 20.0, 400.0, &mut out).unwrap().stored;
    /// // Specular fcc(100): λ = 2d/n with d = a/2, i.e. λ = a/n.
    /// let e1 = matterwave_core::beam::energy_from_wavelength_ev(a / 2.0).unwrap();
    /// assert!(out[..n].iter().any(|p| (p.energy_ev - e1).abs() < 1e-3));
    /// ```
    pub fn iv_peaks(
        &self,
        rod: [i32; 2],
        inc: &Incidence,
        v0_ev: f32,
        from_ev: f32,
        to_ev: f32,
        out: &mut [IvPeak],
    ) -> Result<Listing> {
        let v0 = beam::check_inner_potential(v0_ev)?;
        let lo_in = beam::check_energy(from_ev)?;
        let hi = beam::check_energy(to_ev)?;
        if lo_in >= hi {
            return Err(Error::EmptyRange);
        }
        if out.is_empty() {
            return Err(Error::EmptyBuffer);
        }
        if rod[0].abs() > 4096 || rod[1].abs() > 4096 {
            return Err(Error::IndicesTooLarge);
        }
        let g = self.rod_turned(rod, inc);
        let g2 = g[0] * g[0] + g[1] * g[1];
        let s = inc.sin_tilt;
        // The beam must exist outside: start at its emergence energy.
        let lo = match emergence_from(g, g2, s) {
            Some(e) if e > lo_in => e,
            _ => lo_in,
        };
        if lo >= hi {
            return Ok(Listing {
                stored: 0,
                truncated: false,
            });
        }
        let sum_lo = perp_sum(g, s, v0, lo);
        let sum_hi = perp_sum(g, s, v0, hi);
        let inv_d = 1.0 / self.layer_spacing_a;
        let off =
            rod[0] as f32 * self.recip_normal_inv_a[0] + rod[1] as f32 * self.recip_normal_inv_a[1];
        // The order of G⊥ = off + m/d is ⌈G⊥·d⌉ = m + ⌈off·d⌉ (see `IvPeak::order`).
        let shift = order_shift(off * self.layer_spacing_a);
        let m_lo = math::floor((sum_lo - off) / inv_d) as i32 - 1;
        let m_hi = math::floor((sum_hi - off) / inv_d) as i32 + 1;
        let mut stored = 0usize;
        let mut truncated = false;
        let mut m = m_lo;
        while m <= m_hi {
            let gp = off + m as f32 * inv_d;
            let hkl = self.conventional([rod[0], rod[1], m]);
            m += 1;
            if gp <= 0.0 || !self.cell.allowed(hkl) {
                continue;
            }
            let e = if s == 0.0 {
                // Closed form: K² = q + ((G² − q)/2G)² with q = |g|².
                let x = (gp * gp - g2) / (2.0 * gp);
                if x < 0.0 {
                    continue;
                }
                beam::energy_from_wavenumber_ev(math::sqrt(g2 + x * x)) - v0
            } else {
                if gp < sum_lo || gp > sum_hi {
                    continue;
                }
                bisect_energy(g, s, v0, gp, lo, hi)
            };
            if !(e >= lo && e <= hi) {
                continue;
            }
            let Some(slot) = out.get_mut(stored) else {
                truncated = true;
                break;
            };
            *slot = IvPeak {
                energy_ev: e,
                order: m - 1 + shift,
                g_hkl: hkl,
                g_perp_inv_a: gp,
            };
            stored += 1;
        }
        Ok(Listing { stored, truncated })
    }
}

/// ⌈x − 0.001⌉: the whole part of a rod's orders, from its offset x = off·d (the
/// fraction of a period by which its first G⊥ lies above a whole multiple of 1/d).
pub(crate) fn order_shift(x: f32) -> i32 {
    -(math::floor(-(x - ORDER_TOLERANCE)) as i32)
}

/// How close (in periods) G⊥·d may come above a whole number and still count as it.
pub(crate) const ORDER_TOLERANCE: f32 = 1.0e-3;

/// K⊥,in + K⊥,out (1/Å) at outside energy `e` for rod vector `g`, sin(tilt) `s` and V0.
/// Returns −1 where the outgoing beam is evanescent inside.
pub(crate) fn perp_sum(g: [f32; 2], s: f32, v0: f32, e: f32) -> f32 {
    let u = beam::wavenumber_unchecked_inv_a(e);
    let k = beam::wavenumber_unchecked_inv_a(e + v0);
    let k2 = k * k;
    let kin = s * u;
    let kx = kin + g[0];
    let q_out = kx * kx + g[1] * g[1];
    let a = k2 - kin * kin;
    let b = k2 - q_out;
    if a < 0.0 || b < 0.0 {
        return -1.0;
    }
    math::sqrt(a) + math::sqrt(b)
}

pub(crate) fn bisect_energy(g: [f32; 2], s: f32, v0: f32, target: f32, lo: f32, hi: f32) -> f32 {
    let (mut a, mut b) = (lo, hi);
    for _ in 0..64 {
        let mid = 0.5 * (a + b);
        if mid <= a || mid >= b {
            break;
        }
        if perp_sum(g, s, v0, mid) < target {
            a = mid;
        } else {
            b = mid;
        }
    }
    0.5 * (a + b)
}
