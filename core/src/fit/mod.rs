//! Calibration fits and peak centring on fixed-size sample sets (fit rules).
//!
//! Everything works on caller-owned slices and fixed-size arrays: no allocation, f32
//! throughout, and every failure is an [`Error`] value:
//!
//! * NaN or infinite inputs → [`Error::NotFinite`] (angles [`Quantity::Angle`], detector
//!   currents [`Quantity::Count`], energies [`Quantity::Energy`]);
//! * too few usable points → [`Error::TooFewPoints`];
//! * points that do not fix the parameters (all at one energy, one order, flat data,
//!   maximum at the end of a scan) → [`Error::DegenerateFit`];
//! * an iteration that does not settle → [`Error::NoConvergence`];
//! * more than 65 535 points → [`Error::TooHigh`]`(`[`Quantity::Count`]`)`.
//!
//! Least squares is solved by Givens rotations, one row at a time (the normal equations
//! are never formed, so the condition number is not squared). A parameter is declared
//! undetermined when its column of the design matrix lies within a relative 1e-5 of the
//! span of the columns before it. Parameter uncertainties are one standard deviation
//! from the covariance s²·(JᵀJ)⁻¹ with s² = SSR/(n − p): they describe the scatter of
//! the data about the model, not systematic errors in the model itself.
//!
//! | function | model | parameters |
//! |---|---|---|
//! | [`centroid`] | weighted mean of (current − threshold) | peak angle |
//! | [`parabola_log`] | ln I = a + b·θ + c·θ² (Gaussian peak) | peak angle, FWHM |
//! | [`arm_zero_and_energy_offset`] | δ = model(E + ΔE) + δ0 | arm zero δ0, gun offset ΔE |
//! | [`arm_zero_in_plane_beams`] | the same, several beams in-plane | arm zero δ0, gun offset ΔE |
//! | [`row_spacing`] | sin θ = n·λ(E)/d | row spacing d |
//! | [`inner_potential_and_spacing`] | E_n = E_in(n/2d) − V0 | V0, layer spacing d |
//!
//! ```
//! use matterwave_core::fit::{parabola_log, Sample};
//! // A Gaussian peak at 31.37° with σ = 0.4°, sampled every 0.2°.
//! let mut s = [Sample { angle_deg: 0.0, current: 0.0 }; 21];
//! for (i, p) in s.iter_mut().enumerate() {
//!     let a = 29.4 + 0.2 * i as f32;
//!     *p = Sample { angle_deg: a, current: 500.0 * (-(a - 31.37f32).powi(2) / 0.32).exp() };
//! }
//! let c = parabola_log(&s).unwrap();
//! assert!((c.angle_deg - 31.37).abs() < 1e-3);
//! assert!((c.fwhm_deg - 2.3548 * 0.4).abs() < 2e-3);
//! ```

mod arm;
mod in_plane;
mod lattice_fits;
mod lsq;
mod peak;
pub use arm::{arm_zero_and_energy_offset, arm_zero_and_energy_offset_multi};
pub use in_plane::{
    arm_zero_in_plane, arm_zero_in_plane_beams, in_plane_arm_at_offsets_deg, BeamArm, InPlaneArmFit,
};
pub use lattice_fits::{inner_potential_and_spacing, row_spacing};
use lsq::{gauss_newton2, Lsq};
use peak::count_u16;
pub use peak::{centroid, centroid_background, parabola_log};

use crate::beam;
use crate::constants::{HC_EV_A, ME_C2_EV, TWO_ME_C2_EV};
use crate::error::{finite, Error, Quantity, Result};
use crate::math;

/// Largest |order| accepted by [`row_spacing`] and [`inner_potential_and_spacing`].
pub const MAX_ORDER: i32 = 100;

/// Most points [`parabola_log`] uses around the maximum.
pub const PARABOLA_MAX_POINTS: usize = 9;

/// [`parabola_log`] extends its run of points while the current stays at or above this
/// fraction of the maximum sample.
pub const PARABOLA_FRACTION: f32 = 0.25;

/// Most Gauss–Newton iterations [`arm_zero_and_energy_offset`] takes.
pub const ARM_FIT_MAX_ITERATIONS: u8 = 30;

/// Full width at half maximum of a Gaussian per standard deviation, 2·√(2·ln 2).
const FWHM_PER_SIGMA: f32 = 2.354_82;

/// Relative tolerance below which a least-squares column counts as dependent.
const DEGENERATE_TOL: f32 = 1e-5;

/// Central-difference step for the model derivative, relative to the energy.
const DERIV_REL_STEP: f32 = 5e-3;

/// One detector reading: arm (or scan) angle and the current there.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Sample {
    /// Scan angle, degrees.
    pub angle_deg: f32,
    /// Detector current. [`centroid`]'s uncertainty treats it as detected electrons
    /// (counts) per dwell; any unit works for the centre itself.
    pub current: f32,
}

/// A centred peak.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct PeakCentre {
    /// Peak centre, degrees.
    pub angle_deg: f32,
    /// One-standard-deviation uncertainty of the centre, degrees (how it is estimated
    /// depends on the method; `f32::INFINITY` when the data cannot tell).
    pub uncertainty_deg: f32,
    /// Peak current, in the unit of the samples.
    pub peak_current: f32,
    /// Full width at half maximum, degrees (Gaussian-equivalent).
    pub fwhm_deg: f32,
    /// Number of samples the estimate used.
    pub points_used: u16,
}

/// Result of a two-parameter fit.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Fit2 {
    /// Fitted parameters; their meaning and units are given by the fitting function.
    pub params: [f32; 2],
    /// One-standard-deviation uncertainties of `params`, same units.
    pub sigma: [f32; 2],
    /// Root-mean-square residual √(SSR/n), in the unit of the measured values.
    pub rms_residual: f32,
    /// Number of points fitted.
    pub points: u16,
    /// Gauss–Newton iterations taken.
    pub iterations: u8,
}

/// Result of a one-parameter fit.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Fit1 {
    /// Fitted value; unit given by the fitting function.
    pub value: f32,
    /// One-standard-deviation uncertainty of `value`, same unit.
    pub sigma: f32,
    /// Root-mean-square residual √(SSR/n), in the unit of the measured values.
    pub rms_residual: f32,
    /// Number of points fitted.
    pub points: u16,
}

/// Inner potential and layer spacing from specular I-V peak energies.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct IvFit {
    /// Inner potential V0, eV.
    pub inner_potential_ev: f32,
    /// One-standard-deviation uncertainty of V0, eV.
    pub inner_potential_sigma_ev: f32,
    /// Layer spacing d, Å.
    pub layer_spacing_a: f32,
    /// One-standard-deviation uncertainty of d, Å.
    pub layer_spacing_sigma_a: f32,
    /// Root-mean-square residual of the peak energies, eV.
    pub rms_residual_ev: f32,
    /// Number of peaks fitted.
    pub points: u16,
}

// ---------------------------------------------------------------------------------------
// Least squares by Givens rotations.

#[cfg(test)]
mod tests {
    use super::*;

    /// Tolerance `t`, widened under `fast-math` (micromath's ln/exp/sqrt are good to
    /// roughly 1e-3..1e-2 relative).
    fn tol(t: f32, fast: f32) -> f32 {
        if cfg!(feature = "fast-math") {
            fast
        } else {
            t
        }
    }

    fn gauss(a: f32, centre: f32, sigma: f32) -> f32 {
        1000.0 * libm::expf(-(a - centre) * (a - centre) / (2.0 * sigma * sigma))
    }

    #[test]
    fn lsq_fits_a_line_exactly() {
        // Synthetic data, truth chosen in the test: y = 2 + 3x.
        let mut l = Lsq::<2>::new();
        for x in [0.0f32, 1.0, 2.0, 5.0] {
            l.add([1.0, x], 2.0 + 3.0 * x);
        }
        let p = l.solve().unwrap();
        assert!((p[0] - 2.0).abs() < 1e-5 && (p[1] - 3.0).abs() < 1e-5);
        assert!(l.rss < 1e-9);
    }

    #[test]
    fn lsq_detects_dependent_columns() {
        let mut l = Lsq::<2>::new();
        for x in [1.0f32, 2.0, 3.0] {
            l.add([x, 2.0 * x], x);
        }
        assert_eq!(l.solve(), Err(Error::DegenerateFit));
    }

    #[test]
    fn parabola_log_is_exact_for_gaussian() {
        // Synthetic data, truth chosen in the test: centre 12.34°, σ 0.5°, step 0.25°.
        let mut s = [Sample {
            angle_deg: 0.0,
            current: 0.0,
        }; 40];
        for (i, p) in s.iter_mut().enumerate() {
            let a = 8.0 + 0.25 * i as f32;
            *p = Sample {
                angle_deg: a,
                current: gauss(a, 12.34, 0.5),
            };
        }
        let c = parabola_log(&s).unwrap();
        assert!((c.angle_deg - 12.34).abs() < tol(1e-4, 0.02), "{c:?}");
        assert!(
            (c.fwhm_deg - FWHM_PER_SIGMA * 0.5).abs() < tol(1e-3, 0.02),
            "{c:?}"
        );
        assert!((c.peak_current - 1000.0).abs() < tol(0.5, 60.0), "{c:?}");
        // Reversed order gives the same answer.
        s.reverse();
        let r = parabola_log(&s).unwrap();
        assert!((r.angle_deg - c.angle_deg).abs() < tol(1e-5, 1e-3));
    }

    #[test]
    fn centring_errors() {
        let flat = [1.0f32, 2.0, 3.0, 4.0].map(|a| Sample {
            angle_deg: a,
            current: 5.0,
        });
        assert_eq!(parabola_log(&flat), Err(Error::DegenerateFit));
        assert_eq!(centroid(&flat, 1.0), Err(Error::DegenerateFit));
        assert_eq!(parabola_log(&flat[..2]), Err(Error::TooFewPoints));
        let nan = [Sample {
            angle_deg: f32::NAN,
            current: 1.0,
        }];
        assert_eq!(centroid(&nan, 0.0), Err(Error::NotFinite(Quantity::Angle)));
        assert_eq!(
            centroid(&flat, f32::NAN),
            Err(Error::NotFinite(Quantity::Count))
        );
    }

    #[test]
    fn fit_iv_exact() {
        // Synthetic data, truth chosen in the test, from an f64 formula of its own (not
        // the model's `energy_from_wavenumber_ev`): the order-n peak at inside wavenumber
        // k = n/(2d), E = √((hc·k)² + (mc²)²) − mc² − V0 with CODATA 2018
        // hc = 12398.419843320 eV·Å and mc² = 510998.95 eV.
        let (d, v0) = (2.0f32, 8.0f32);
        let pts = [2, 3, 4, 5, 6].map(|n| {
            let pc = 12_398.419_843_320f64 * n as f64 / (2.0 * d as f64);
            let mc2 = 510_998.95f64;
            (n, ((pc * pc + mc2 * mc2).sqrt() - mc2 - v0 as f64) as f32)
        });
        let f = inner_potential_and_spacing(&pts).unwrap();
        assert!((f.inner_potential_ev - v0).abs() < 0.02, "{f:?}");
        assert!((f.layer_spacing_a - d).abs() < 1e-4, "{f:?}");
    }
}
