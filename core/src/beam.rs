//! The electron beam: gun settings → kinetic energy at the sample → wavelength, momentum,
//! velocity and wavevector, outside and inside the crystal.
//!
//! Kinetic energy at the sample (contact-potential correction, beam rules):
//! E = e·V_acc + φ_cathode − φ_sample + ΔE_cal. Wavelength, relativistic:
//! λ = hc / √(E(E + 2mc²)). Inside the crystal the electron gains the inner potential:
//! E_in = E + V0.
//!
//! Accepted kinetic energies: 1 eV to 300 keV. Everything outside, and every NaN or
//! infinity, is an [`Error`], never a NaN result.
//!
//! ```
//! use matterwave_core::beam;
//! // 100 kV: 0.037014 Å (International Tables Vol. C, Table 4.3.1.1).
//! let l = beam::wavelength_a(100_000.0).unwrap();
//! assert!((l - 0.037014).abs() < 2e-6);
//! assert!(beam::wavelength_a(0.5).is_err());
//! ```

use crate::constants::{
    C_M_S, ENERGY_MAX_EV, ENERGY_MIN_EV, HC_EV_A, INNER_POTENTIAL_MAX_EV, ME_C2_EV, TWO_ME_C2_EV,
    WORK_FUNCTION_MAX_EV,
};
use crate::error::{finite, Error, Quantity, Result};
use crate::math;

/// Largest gun energy offset accepted, eV.
pub const OFFSET_MAX_EV: f32 = 1000.0;

/// Checks a kinetic energy: finite and within 1 eV–300 keV.
pub fn check_energy(energy_ev: f32) -> Result<f32> {
    let e = finite(energy_ev, Quantity::Energy)?;
    if e < ENERGY_MIN_EV {
        Err(Error::TooLow(Quantity::Energy))
    } else if e > ENERGY_MAX_EV {
        Err(Error::TooHigh(Quantity::Energy))
    } else {
        Ok(e)
    }
}

/// Checks an inner potential V0: finite, 0–100 eV.
pub fn check_inner_potential(v0_ev: f32) -> Result<f32> {
    let v = finite(v0_ev, Quantity::InnerPotential)?;
    if v < 0.0 {
        Err(Error::TooLow(Quantity::InnerPotential))
    } else if v > INNER_POTENTIAL_MAX_EV {
        Err(Error::TooHigh(Quantity::InnerPotential))
    } else {
        Ok(v)
    }
}

/// Checks a work function: finite, 0–10 eV (0 means "no correction").
pub fn check_work_function(phi_ev: f32) -> Result<f32> {
    let v = finite(phi_ev, Quantity::WorkFunction)?;
    if v < 0.0 {
        Err(Error::TooLow(Quantity::WorkFunction))
    } else if v > WORK_FUNCTION_MAX_EV {
        Err(Error::TooHigh(Quantity::WorkFunction))
    } else {
        Ok(v)
    }
}

/// Kinetic energy at the sample, eV: `nominal_ev + cathode_wf_ev − sample_wf_ev + offset_ev`.
///
/// `nominal_ev` is e·V_acc; the work functions (0–10 eV; 0 = no correction) correct for
/// the contact potential between cathode and sample; `offset_ev` is a fitted gun offset
/// (±1000 eV). The result must be 1 eV–300 keV.
///
/// ```
/// use matterwave_core::beam::kinetic_energy_ev;
/// // Oxide cathode 2.0 eV, copper sample 4.65 eV: the beam lands 2.65 eV slower.
/// let e = kinetic_energy_ev(100.0, 2.0, 4.65, 0.0).unwrap();
/// assert!((e - 97.35).abs() < 1e-4);
/// ```
pub fn kinetic_energy_ev(
    nominal_ev: f32,
    cathode_wf_ev: f32,
    sample_wf_ev: f32,
    offset_ev: f32,
) -> Result<f32> {
    Gun {
        nominal_ev,
        cathode_work_function_ev: cathode_wf_ev,
        sample_work_function_ev: sample_wf_ev,
        offset_ev,
    }
    .kinetic_energy_at()
    .map_err(|(_, e)| e)
}

/// Which gun input an error is about (see [`Gun::kinetic_energy_at`]).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum GunInput {
    /// The nominal energy.
    Nominal,
    /// The cathode work function.
    CathodeWorkFunction,
    /// The sample work function.
    SampleWorkFunction,
    /// The energy offset.
    Offset,
    /// Their sum, the kinetic energy at the sample.
    Sum,
}

/// Gun settings: nominal energy and the corrections that turn it into the kinetic
/// energy at the sample.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Gun {
    /// Nominal beam energy e·V_acc, eV.
    pub nominal_ev: f32,
    /// Cathode work function, eV (0 = no contact-potential correction).
    pub cathode_work_function_ev: f32,
    /// Sample work function, eV (0 = no contact-potential correction).
    pub sample_work_function_ev: f32,
    /// Fitted gun energy offset ΔE_cal, eV.
    pub offset_ev: f32,
}

impl Gun {
    /// A gun at `nominal_ev` with no corrections.
    pub const fn plain(nominal_ev: f32) -> Gun {
        Gun {
            nominal_ev,
            cathode_work_function_ev: 0.0,
            sample_work_function_ev: 0.0,
            offset_ev: 0.0,
        }
    }

    /// Kinetic energy at the sample, eV (see [`kinetic_energy_ev`]).
    pub fn kinetic_energy_ev(&self) -> Result<f32> {
        self.kinetic_energy_at().map_err(|(_, e)| e)
    }

    /// Kinetic energy at the sample, eV, or the error with the input it is about. The
    /// inputs are checked in the order nominal energy (finite, above 0, at most
    /// 300 keV), cathode and sample work functions (0–10 eV), offset (±1000 eV), then
    /// their sum (1 eV–300 keV).
    pub fn kinetic_energy_at(&self) -> core::result::Result<f32, (GunInput, Error)> {
        let at = |i: GunInput| move |e: Error| (i, e);
        let n = finite(self.nominal_ev, Quantity::Energy).map_err(at(GunInput::Nominal))?;
        if n <= 0.0 {
            return Err((GunInput::Nominal, Error::TooLow(Quantity::Energy)));
        }
        if n > ENERGY_MAX_EV {
            return Err((GunInput::Nominal, Error::TooHigh(Quantity::Energy)));
        }
        let c = check_work_function(self.cathode_work_function_ev)
            .map_err(at(GunInput::CathodeWorkFunction))?;
        let s = check_work_function(self.sample_work_function_ev)
            .map_err(at(GunInput::SampleWorkFunction))?;
        let o = finite(self.offset_ev, Quantity::EnergyOffset).map_err(at(GunInput::Offset))?;
        if o.abs() > OFFSET_MAX_EV {
            return Err((GunInput::Offset, Error::TooHigh(Quantity::EnergyOffset)));
        }
        let e = n + c - s + o;
        if e < ENERGY_MIN_EV {
            // Without corrections the nominal energy itself is too low.
            return Err(if c == 0.0 && s == 0.0 && o == 0.0 {
                (GunInput::Nominal, Error::TooLow(Quantity::Energy))
            } else {
                (GunInput::Sum, Error::KineticEnergyTooLow)
            });
        }
        check_energy(e).map_err(at(GunInput::Sum))
    }
}

impl Gun {
    /// The gun with the corrections of `self` (its `nominal_ev` ignored) whose kinetic
    /// energy at the sample is `kinetic_ev`: nominal = E − φ_cathode + φ_sample − ΔE_cal,
    /// the inverse of [`Gun::kinetic_energy_at`]. `kinetic_ev` must be 1 eV–300 keV and
    /// the nominal energy it needs above 0 and at most 300 keV; an error says which input
    /// is at fault ([`GunInput::Sum`] for the nominal energy the corrections would need).
    ///
    /// ```
    /// use matterwave_core::beam::Gun;
    /// // Oxide cathode 2.0 eV, copper sample 4.65 eV: 97.35 eV at the sample needs 100 eV.
    /// let g = Gun { cathode_work_function_ev: 2.0, sample_work_function_ev: 4.65, ..Gun::plain(0.0) };
    /// let n = g.for_kinetic_energy(97.35).unwrap().nominal_ev;
    /// assert!((n - 100.0).abs() < 1e-4);
    /// ```
    pub fn for_kinetic_energy(
        &self,
        kinetic_ev: f32,
    ) -> core::result::Result<Gun, (GunInput, Error)> {
        let e = check_energy(kinetic_ev).map_err(|e| (GunInput::Sum, e))?;
        let probe = Gun {
            nominal_ev: 1.0,
            ..*self
        };
        // The corrections are checked as the forward direction checks them.
        if let Err((i, err)) = probe.kinetic_energy_at() {
            if i != GunInput::Sum {
                return Err((i, err));
            }
        }
        let n = e - self.cathode_work_function_ev + self.sample_work_function_ev - self.offset_ev;
        if n <= 0.0 {
            return Err((GunInput::Sum, Error::TooLow(Quantity::Energy)));
        }
        if n > ENERGY_MAX_EV {
            return Err((GunInput::Sum, Error::TooHigh(Quantity::Energy)));
        }
        Ok(Gun {
            nominal_ev: n,
            ..*self
        })
    }
}

/// Momentum times c, eV: pc = √(E(E + 2mc²)). No range check (internal use).
#[inline]
pub fn pc_ev_unchecked(energy_ev: f32) -> f32 {
    math::sqrt(energy_ev * (energy_ev + TWO_ME_C2_EV))
}

/// Wavenumber 1/λ (1/Å) of a kinetic energy, no range check (internal use).
#[inline]
pub fn wavenumber_unchecked_inv_a(energy_ev: f32) -> f32 {
    pc_ev_unchecked(energy_ev) / HC_EV_A
}

/// Kinetic energy (eV) of an electron with wavenumber `k_inv_a` = 1/λ (1/Å), no range
/// check. Uses the cancellation-free form E = (pc)² / (√((pc)² + (mc²)²) + mc²).
#[inline]
pub fn energy_from_wavenumber_ev(k_inv_a: f32) -> f32 {
    let pc = HC_EV_A * k_inv_a;
    let pc2 = pc * pc;
    pc2 / (math::sqrt(pc2 + ME_C2_EV * ME_C2_EV) + ME_C2_EV)
}

/// Relativistic de Broglie wavelength λ = hc/√(E(E + 2mc²)), Å, for kinetic energy
/// `energy_ev` (1 eV–300 keV).
///
/// ```
/// # use matterwave_core::beam::wavelength_a;
/// // λ ≈ √(150.4/E) Å at low energy (common practice, no source).
/// assert!((wavelength_a(150.4).unwrap() - 1.0).abs() < 1e-3);
/// ```
pub fn wavelength_a(energy_ev: f32) -> Result<f32> {
    let e = check_energy(energy_ev)?;
    Ok(HC_EV_A / pc_ev_unchecked(e))
}

/// Non-relativistic wavelength hc/√(2mc²E), Å — for comparison only.
pub fn wavelength_nonrel_a(energy_ev: f32) -> Result<f32> {
    let e = check_energy(energy_ev)?;
    Ok(HC_EV_A / math::sqrt(TWO_ME_C2_EV * e))
}

/// Wavenumber |k| = 1/λ, 1/Å (crystallographer's convention, no 2π).
pub fn wavenumber_inv_a(energy_ev: f32) -> Result<f32> {
    let e = check_energy(energy_ev)?;
    Ok(wavenumber_unchecked_inv_a(e))
}

/// Momentum as p·c, eV (divide by c for eV/c).
pub fn momentum_ev(energy_ev: f32) -> Result<f32> {
    let e = check_energy(energy_ev)?;
    Ok(pc_ev_unchecked(e))
}

/// β = v/c = pc / (E + mc²) (cancellation-free at low energy).
pub fn beta(energy_ev: f32) -> Result<f32> {
    let e = check_energy(energy_ev)?;
    Ok(pc_ev_unchecked(e) / (e + ME_C2_EV))
}

/// Speed, m/s.
///
/// ```
/// # use matterwave_core::beam::velocity_m_s;
/// // 100 eV: γ = 1 + E/mc² = 1.000195695, v = c·√(1 − 1/γ²) = 5.930099e6 m/s
/// // (computed from CODATA 2018; the non-relativistic √(2E/m) is 870 m/s faster).
/// assert!((velocity_m_s(100.0).unwrap() - 5.930099e6).abs() < 60.0);
/// // 300 keV: β = 0.7765255, v = 2.327965e8 m/s (computed the same way).
/// assert!((velocity_m_s(3.0e5).unwrap() / 2.327965e8 - 1.0).abs() < 1e-5);
/// ```
pub fn velocity_m_s(energy_ev: f32) -> Result<f32> {
    Ok(beta(energy_ev)? * C_M_S)
}

/// Kinetic energy (eV) for a wavelength `lambda_a` (Å); the inverse of [`wavelength_a`].
/// The result must lie in 1 eV–300 keV; one within a relative [`EDGE_REL`] of an edge
/// (the f32 rounding of a round trip) is that edge, so the wavelength of every accepted
/// energy has an inverse.
pub fn energy_from_wavelength_ev(lambda_a: f32) -> Result<f32> {
    let l = finite(lambda_a, Quantity::Wavelength)?;
    if l <= 0.0 {
        return Err(Error::TooLow(Quantity::Wavelength));
    }
    let e = energy_from_wavenumber_ev(1.0 / l);
    if e < ENERGY_MIN_EV * (1.0 - EDGE_REL) {
        Err(Error::TooHigh(Quantity::Wavelength))
    } else if e > ENERGY_MAX_EV * (1.0 + EDGE_REL) {
        Err(Error::TooLow(Quantity::Wavelength))
    } else {
        Ok(e.clamp(ENERGY_MIN_EV, ENERGY_MAX_EV))
    }
}

/// Relative slack at the edges of the energy range in [`energy_from_wavelength_ev`]: a
/// few f32 ulps (1.2e-7 each), more than a round trip λ(E) → E loses (at 1 eV it gave
/// 0.99999994 eV).
pub const EDGE_REL: f32 = 1.0e-6;

/// Wavelength inside the crystal, Å: λ(E + V0), with V0 the inner potential (0–100 eV).
pub fn inner_wavelength_a(energy_ev: f32, v0_ev: f32) -> Result<f32> {
    let e = check_energy(energy_ev)?;
    let v = check_inner_potential(v0_ev)?;
    Ok(HC_EV_A / pc_ev_unchecked(e + v))
}

/// Every beam quantity for one kinetic energy.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Beam {
    /// Kinetic energy at the sample, eV.
    pub energy_ev: f32,
    /// Relativistic wavelength, Å.
    pub wavelength_a: f32,
    /// Non-relativistic wavelength (comparison only), Å.
    pub wavelength_nonrel_a: f32,
    /// Wavenumber 1/λ, 1/Å.
    pub wavenumber_inv_a: f32,
    /// p·c, eV.
    pub momentum_ev: f32,
    /// v/c.
    pub beta: f32,
    /// Speed, m/s.
    pub velocity_m_s: f32,
}

impl Beam {
    /// All quantities for kinetic energy `energy_ev` (1 eV–300 keV).
    pub fn new(energy_ev: f32) -> Result<Beam> {
        let e = check_energy(energy_ev)?;
        let pc = pc_ev_unchecked(e);
        let beta = pc / (e + ME_C2_EV);
        Ok(Beam {
            energy_ev: e,
            wavelength_a: HC_EV_A / pc,
            wavelength_nonrel_a: HC_EV_A / math::sqrt(TWO_ME_C2_EV * e),
            wavenumber_inv_a: pc / HC_EV_A,
            momentum_ev: pc,
            beta,
            velocity_m_s: beta * C_M_S,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn international_tables_values() {
        // International Tables for Crystallography Vol. C, Table 4.3.1.1 (values from memory).
        for (kv, l) in [(100.0, 0.037014), (200.0, 0.025079), (300.0, 0.019687)] {
            let got = wavelength_a(kv * 1000.0).unwrap();
            assert!((got - l).abs() < 2e-6, "{kv} kV: {got}");
        }
    }

    #[test]
    fn rejects_bad_energies() {
        assert_eq!(
            wavelength_a(f32::NAN),
            Err(Error::NotFinite(Quantity::Energy))
        );
        assert_eq!(wavelength_a(0.0), Err(Error::TooLow(Quantity::Energy)));
        assert_eq!(wavelength_a(3.1e5), Err(Error::TooHigh(Quantity::Energy)));
        assert_eq!(
            kinetic_energy_ev(1.0, 0.0, 4.0, 0.0),
            Err(Error::KineticEnergyTooLow)
        );
        assert!(kinetic_energy_ev(-5.0, 0.0, 0.0, 0.0).is_err());
        assert!(kinetic_energy_ev(100.0, 11.0, 0.0, 0.0).is_err());
        assert!(inner_wavelength_a(100.0, -1.0).is_err());
    }

    #[test]
    fn inverse_round_trips() {
        // The inverse must succeed over the whole range, the 1 eV and 300 keV edges
        // included, and give the energy back to a few f32 ulps.
        for e in [1.0f32, 3.7, 54.0, 150.0, 2000.0, 1.0e5, 3.0e5] {
            let l = wavelength_a(e).unwrap();
            let back = energy_from_wavelength_ev(l)
                .unwrap_or_else(|err| panic!("{e} eV: inverse of {l} Å failed: {err:?}"));
            assert!((back - e).abs() <= 4e-7 * e, "{e} -> {back}");
        }
        // Beyond the range, the error says which way: a wavelength too long is an energy
        // below 1 eV (λ(1 eV) = 12.264 Å, λ(300 keV) = 0.019687 Å: the beam rules).
        assert_eq!(
            energy_from_wavelength_ev(12.5),
            Err(Error::TooHigh(Quantity::Wavelength))
        );
        assert_eq!(
            energy_from_wavelength_ev(0.019),
            Err(Error::TooLow(Quantity::Wavelength))
        );
        assert_eq!(
            energy_from_wavelength_ev(0.0),
            Err(Error::TooLow(Quantity::Wavelength))
        );
        assert!(matches!(
            energy_from_wavelength_ev(f32::NAN),
            Err(Error::NotFinite(_))
        ));
    }

    #[test]
    fn nominal_for_a_kinetic_energy_inverts_the_gun_sum() {
        let g = Gun {
            nominal_ev: 0.0,
            cathode_work_function_ev: 2.7,
            sample_work_function_ev: 4.65,
            offset_ev: -0.4,
        };
        for e in [1.0f32, 54.0, 150.0, 2.0e5] {
            let n = g.for_kinetic_energy(e).unwrap();
            let back = n.kinetic_energy_ev().unwrap();
            assert!((back - e).abs() <= 1e-6 * e + 1e-5, "{e} -> {back}");
        }
        // The corrections are checked; a nominal energy at or below 0 is refused.
        let bad = Gun {
            cathode_work_function_ev: 11.0,
            ..g
        };
        assert_eq!(
            bad.for_kinetic_energy(100.0).map_err(|(i, _)| i),
            Err(GunInput::CathodeWorkFunction)
        );
        let fast_cathode = Gun {
            cathode_work_function_ev: 5.0,
            ..Gun::plain(0.0)
        };
        assert_eq!(
            fast_cathode.for_kinetic_energy(3.0),
            Err((GunInput::Sum, Error::TooLow(Quantity::Energy)))
        );
        assert_eq!(
            Gun::plain(0.0).for_kinetic_energy(0.5).map_err(|(i, _)| i),
            Err(GunInput::Sum)
        );
    }

    #[test]
    fn beta_is_accurate_at_low_energy() {
        // Non-relativistic limit β ≈ √(2E/mc²) to first order.
        let b = beta(1.0).unwrap();
        let nr = libm::sqrtf(2.0 / ME_C2_EV);
        assert!((b / nr - 1.0).abs() < 2e-6);
    }
}
