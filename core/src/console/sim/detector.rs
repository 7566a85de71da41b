//! The synthetic detector: a kinematic model of what a Faraday cup on the arm reads,
//! for simulators, demos and tests (docs/SIMULATOR.md states the model).
//!
//! A reading, nA, is
//!
//! ```text
//! I = dark + diffuse·max(0, d̂·n̂) + Σ_beams peak·A(θ)·L(E) + noise
//! ```
//!
//! * beam positions from the goniometer ([`goniometer::beams_in_view`]) at the *true*
//!   geometry: the console's angles and energy corrected by the [`HiddenOffsets`];
//! * A(θ) = exp(−θ²/2σ²), θ the angle between detector axis and beam, σ² = (a/2)² +
//!   σ_div²: a uniform disk of half-angle a (the acceptance) has an rms of a/2 along
//!   each axis, added in quadrature to the beam's divergence σ_div (the Gaussian
//!   approximation of their convolution; common practice, no source); cut at 3σ and
//!   lowered by its value there so that it is continuous: A = (g − g₃)/(1 − g₃) with
//!   g = exp(−θ²/2σ²), g₃ = exp(−9/2);
//! * L(E) = Σ_n ℓ(E − E_n), E_n the kinematic I-V maxima of the beam's rod
//!   with the console's inner-potential model ([`crate::surface::Face::iv_peaks_model`]:
//!   a constant V0, or V0(E) when the console's `v0_model=energy`) and ℓ a Lorentzian of half-width Vi, the
//!   imaginary inner potential (absorption), so of full width 2·Vi in energy (common
//!   practice, no source), cut at ±10·Vi and lowered by its value there so that it is
//!   continuous: ℓ(x) = (1/(1 + x²/Vi²) − 1/101)·101/100 for |x| < 10·Vi, else 0;
//! * with an overlayer on the face, its fractional-order beams
//!   ([`goniometer::super_beams_in_view`], with its domains when the console counts
//!   them) at a constant `superstructure_na`·A(θ) each: their I-V maxima are not
//!   modelled (they need the overlayer's layer, not the bulk), so their current does
//!   not change with energy; its integer-order beams are the substrate's above;
//! * a smooth background: a dark current plus a diffuse part ∝ the cosine of the
//!   detector's angle from the surface normal (Lambert-like; common practice, no
//!   source);
//! * noise: normal, σ = √(noise² + (noise_fraction·I)²), from a seeded
//!   [`XorShift32`], so a sequence of reads is reproducible from its seed.
//!
//! The work of one read is bounded whatever the input: at most [`VIEW_MAX`] beams and
//! [`PEAKS_MAX`] maxima per beam, each parameter clamped to its stated range, the view
//! cone at most 3σ ≤ 3·√(10² + 2²)° wide (the rig's acceptance is at most 20°).

use super::rng::XorShift32;
use crate::console::board::{Detector, Scene};
use crate::goniometer::{self, InView, SuperInView};
use crate::inner::V0Model;
use crate::math;
use crate::surface::domains::MAX_DOMAINS;
use crate::surface::Superstructure;
use crate::surface::{Incidence, IvPeak};

/// Most beams one read sums (the nearest first).
pub const VIEW_MAX: usize = 8;
/// Most I-V maxima per beam within ±10·Vi of the energy (the lowest first).
pub const PEAKS_MAX: usize = 16;
/// Beam divergence accepted, σ in degrees: 0 to this (larger values are clamped).
pub const DIVERGENCE_MAX_DEG: f32 = 2.0;
/// Imaginary inner potential Vi accepted, eV: from [`ABSORPTION_MIN_EV`] to this.
pub const ABSORPTION_MAX_EV: f32 = 20.0;
/// Smallest imaginary inner potential Vi, eV.
pub const ABSORPTION_MIN_EV: f32 = 0.1;
/// The Lorentzian's cut, in half-widths Vi.
const CUT_HALF_WIDTHS: f32 = 10.0;
/// The view cone, in σ of the angular profile.
const VIEW_SIGMAS: f32 = 3.0;

/// Calibration errors of the simulated instrument that the console does not know and
/// cannot read: tests and demos set them, alignment has to find them. Signs follow the
/// core's arm-zero fit ([`crate::fit::arm_zero_and_energy_offset`]: measured arm δ =
/// model(E + ΔE) + δ0).
///
/// They are properties of the hardware, not of the console's calibration: each is
/// measured from the uncalibrated reading (arm and tilt angles with their axis's
/// `home_offset_deg` taken out, the energy without the console's `offset`). So a
/// console calibrated with home offset −δ0 and energy offset ΔE sees the true geometry,
/// and a second alignment finds nothing left.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct HiddenOffsets {
    /// Arm zero δ0, degrees: a beam at true arm angle δ is seen when the arm's angle
    /// with home offset 0 (steps / steps per degree) is δ + δ0.
    pub arm_zero_deg: f32,
    /// Energy offset ΔE, eV: the true kinetic energy at the sample is the console's
    /// without its `offset` setting, plus ΔE.
    pub energy_offset_ev: f32,
    /// Sample tilt error, degrees: the true tilt is the tilt axis's angle with home
    /// offset 0, plus this.
    pub tilt_error_deg: f32,
}

/// The synthetic detector, nA (see the module documentation for the model). Every
/// parameter is clamped to its stated range when used; a non-finite value counts as 0.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct SimDetector {
    /// Dark current, nA (0 to 1e6), present at any geometry.
    pub dark_na: f32,
    /// Diffuse background with the detector along the surface normal, nA (0 to 1e6);
    /// it falls as the cosine of the detector's angle from the normal, to 0 at 90°.
    pub diffuse_na: f32,
    /// Current of a beam centred on the detector at an I-V maximum, nA (0 to 1e6).
    pub beam_na: f32,
    /// Current of a fractional-order beam of an overlayer centred on the detector, nA
    /// (0 to 1e6), at every energy.
    pub superstructure_na: f32,
    /// Beam divergence σ, degrees (0 to [`DIVERGENCE_MAX_DEG`]).
    pub divergence_deg: f32,
    /// Imaginary inner potential Vi, eV ([`ABSORPTION_MIN_EV`] to
    /// [`ABSORPTION_MAX_EV`]): the half-width of each I-V maximum.
    pub absorption_ev: f32,
    /// Noise σ at zero current, nA (0 to 1e6).
    pub noise_na: f32,
    /// Noise σ per unit current (0 to 1).
    pub noise_fraction: f32,
    /// The instrument's hidden calibration errors.
    pub hidden: HiddenOffsets,
    rng: XorShift32,
}

impl Default for SimDetector {
    /// Seed 1, no hidden offsets, and: dark 0.2 nA, diffuse 0.3 nA, beam 100 nA,
    /// divergence 0.2°, Vi 4 eV, an overlayer's fractional beams 15 nA, noise 0.02 nA +
    /// 1 % of the current.
    fn default() -> Self {
        SimDetector::with_seed(1)
    }
}

/// `x` clamped to \[lo, hi\]; a non-finite `x` counts as 0 (then clamped).
fn param(x: f32, lo: f32, hi: f32) -> f32 {
    math::clamp(if x.is_finite() { x } else { 0.0 }, lo, hi)
}

impl SimDetector {
    /// The default detector (see [`Default`]) with its noise drawn from `seed`.
    pub const fn with_seed(seed: u32) -> SimDetector {
        SimDetector {
            dark_na: 0.2,
            diffuse_na: 0.3,
            beam_na: 100.0,
            superstructure_na: 15.0,
            divergence_deg: 0.2,
            absorption_ev: 4.0,
            noise_na: 0.02,
            noise_fraction: 0.01,
            hidden: HiddenOffsets {
                arm_zero_deg: 0.0,
                energy_offset_ev: 0.0,
                tilt_error_deg: 0.0,
            },
            rng: XorShift32::new(seed),
        }
    }

    /// Restarts the noise from `seed` (the next reads repeat those after
    /// [`SimDetector::with_seed`] with the same seed).
    pub fn reseed(&mut self, seed: u32) {
        self.rng = XorShift32::new(seed);
    }

    /// σ of the angular profile, degrees: √((acceptance/2)² + divergence²), at least
    /// 0.001°.
    pub fn angular_sigma_deg(&self, acceptance_deg: f32) -> f32 {
        let a = 0.5 * param(acceptance_deg, 0.0, goniometer::ACCEPTANCE_MAX_DEG);
        let d = param(self.divergence_deg, 0.0, DIVERGENCE_MAX_DEG);
        // Never 0: a zero acceptance and divergence would see nothing anyway.
        math::sqrt(a * a + d * d).max(1.0e-3)
    }

    /// The energy profile of one maximum at `x_ev` from it, 0 to 1 (1 at the maximum,
    /// ½ at ±Vi to within 1 %, 0 beyond ±10·Vi).
    pub fn lorentzian(&self, x_ev: f32) -> f32 {
        let vi = param(self.absorption_ev, ABSORPTION_MIN_EV, ABSORPTION_MAX_EV);
        let u = x_ev / vi;
        // Also NaN (x non-finite): no contribution.
        if u.is_nan() || u.abs() >= CUT_HALF_WIDTHS {
            return 0.0;
        }
        let edge = 1.0 / (1.0 + CUT_HALF_WIDTHS * CUT_HALF_WIDTHS);
        (1.0 / (1.0 + u * u) - edge) / (1.0 - edge)
    }

    /// The noiseless reading, nA, of the scene the console describes, seen through the
    /// hidden offsets (applied to the uncalibrated readings, [`HiddenOffsets`]).
    pub fn expected_na(&self, scene: &Scene<'_>) -> f32 {
        let big = 1.0e6;
        let dark = param(self.dark_na, 0.0, big);
        let h = &self.hidden;
        let inc0 = &scene.incidence;
        // What the hardware alone gives: the console's calibration taken out. Its
        // values are checked (finite, ±360°, ±1e6 eV) where the console accepts them.
        let e_raw = inc0.energy_ev - param(scene.energy_offset_ev, -big, big);
        let tilt_raw = inc0.tilt_deg - param(scene.rig.tilt.home_offset_deg, -360.0, 360.0);
        let arm_raw = scene.arm_deg - param(scene.rig.arm.home_offset_deg, -360.0, 360.0);
        let e = e_raw + param(h.energy_offset_ev, -big, big);
        let tilt = tilt_raw + param(h.tilt_error_deg, -90.0, 90.0);
        let arm = arm_raw - param(h.arm_zero_deg, -360.0, 360.0);
        let Ok(inc) = Incidence::new(e, tilt, inc0.azimuth_deg) else {
            // No beam at the sample (below 1 eV, say): only the dark current.
            return dark;
        };
        let d = goniometer::detector_direction(arm, scene.elevation_deg);
        let normal = goniometer::surface_frame_lab(inc.tilt_deg)[2];
        let mut i = dark + param(self.diffuse_na, 0.0, big) * math::dot(d, normal).max(0.0);
        let sigma = self.angular_sigma_deg(scene.rig.acceptance_deg);
        let mut view = [InView::EMPTY; VIEW_MAX];
        let n = goniometer::beams_in_view(
            scene.face,
            &inc,
            arm,
            scene.elevation_deg,
            VIEW_SIGMAS * sigma,
            &mut view,
        )
        .map_or(0, |l| l.stored);
        let peak = param(self.beam_na, 0.0, big);
        let vi = param(self.absorption_ev, ABSORPTION_MIN_EV, ABSORPTION_MAX_EV);
        let v0 = match scene.inner_potential {
            V0Model::Constant(v) => {
                V0Model::Constant(param(v, 0.0, crate::constants::INNER_POTENTIAL_MAX_EV))
            }
            // The form's values lie in [0, its cap], checked where the console uses them.
            m @ V0Model::Energy(_) => m,
        };
        let lo = (e - CUT_HALF_WIDTHS * vi).max(1.0);
        let hi = (e + CUT_HALF_WIDTHS * vi).min(crate::constants::ENERGY_MAX_EV);
        let edge = math::exp(-0.5 * VIEW_SIGMAS * VIEW_SIGMAS);
        for v in view.iter().take(n) {
            let x = v.offset_deg / sigma;
            let angular = ((math::exp(-0.5 * x * x) - edge) / (1.0 - edge)).max(0.0);
            let mut peaks = [IvPeak::EMPTY; PEAKS_MAX];
            let m = scene
                .face
                .iv_peaks_model(v.beam.rod, &inc, &v0, lo, hi, &mut peaks)
                .map_or(0, |l| l.stored);
            let energy: f32 = peaks
                .iter()
                .take(m)
                .map(|p| self.lorentzian(e - p.energy_ev))
                .sum();
            i += peak * angular * energy;
        }
        if let Some(o) = scene.overlayer {
            let mut sups = [Superstructure::IDENTITY; MAX_DOMAINS];
            let k = o.supers(scene.face, &mut sups);
            let mut sv = [SuperInView::EMPTY; VIEW_MAX];
            let m = goniometer::super_beams_in_view(
                scene.face,
                sups.get(..k).unwrap_or(&[]),
                &inc,
                arm,
                scene.elevation_deg,
                VIEW_SIGMAS * sigma,
                &mut sv,
            )
            .map_or(0, |l| l.stored);
            let frac = param(self.superstructure_na, 0.0, big);
            for v in sv.iter().take(m).filter(|v| !v.beam.integer) {
                let x = v.offset_deg / sigma;
                i += frac * ((math::exp(-0.5 * x * x) - edge) / (1.0 - edge)).max(0.0);
            }
        }
        i
    }
}

impl Detector for SimDetector {
    /// [`SimDetector::expected_na`] plus normal noise of σ = √(noise² +
    /// (noise_fraction·I)²); each read draws the next deviate of the seeded sequence.
    fn read(&mut self, scene: &Scene<'_>) -> f32 {
        let i = self.expected_na(scene);
        let a = param(self.noise_na, 0.0, 1.0e6);
        let b = param(self.noise_fraction, 0.0, 1.0) * i;
        i + math::sqrt(a * a + b * b) * self.rng.normal()
    }
}
