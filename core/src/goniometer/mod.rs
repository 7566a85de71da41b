//! Instrument geometry in the lab frame (geometry rules): where a beam goes, how to point
//! the arm (and turn the sample) at it, and what the detector is looking at.
//!
//! Lab frame: origin at the beam spot, z vertical (the axis of the arm and of the sample
//! tilt), gun on −x firing along +x. Tilt α turns the surface normal n̂ = R_z(α)(−x̂);
//! e1 = R_z(α)(−ŷ) lies in the scattering plane, e2 = ẑ. The detector direction is
//! d̂(δ, ν) = (−cos δ cos ν, −sin δ cos ν, sin ν): arm δ = 0 looks back at the gun,
//! δ = 180° straight through; ν is the elevation.
//!
//! In-plane mode (one-circle arm, or a two-circle arm kept at ν = 0): the azimuth is
//! chosen so that the rod g lies along ±e1; then sin θ_out = sin α + s·λ·|g| and
//! δ = α + θ_out. The specular beam sits at δ = 2α at every energy. Two-circle mode: the
//! azimuth is given and (δ, ν) follow from k̂_out.
//!
//! ```
//! use matterwave_core::goniometer::{self, AimRequest, Rig, Solution};
//! use matterwave_core::lattice::{Cell, Structure};
//! use matterwave_core::surface::Face;
//! let face = Face::new(&Cell::new(Structure::Fcc, 3.615, 0.0, 0.0).unwrap(), [1, 0, 0]).unwrap();
//! let rig = Rig::bench_default();
//! let mut out = [Solution::EMPTY; 8];
//! let req = AimRequest::new(&face, [0, 0], 100.0, 20.0); // in-plane, nearest branch
//! let n = goniometer::aim(&rig, &req, &[0; 4], &mut out).unwrap().stored;
//! assert!(n >= 1);
//! assert!((out[0].arm.angle_deg - 40.0).abs() < 0.01); // specular at 2α
//! ```

use crate::axis::{Approach, AxisConfig, Setpoint, Zone};
use crate::beam;
use crate::error::{finite, AxisId, Error, Quantity, Result};

mod resolve;
mod screen;
pub(crate) mod super_view;
mod view;

use crate::math::{self, Vec3};
use crate::surface::{Face, Incidence, SurfaceBeam};
pub use resolve::{
    aim, aim_checked, refusals, refusals_checked, AimRequest, Branch, Refusal, Refusals,
    MAX_REFUSALS,
};
pub use screen::{
    check_gun_shadow, gun_shadowed, Landing, Screen, SortedSpots, Spot, Spots, GUN_SHADOW_MAX_DEG,
    SCREEN_LENGTH_MAX_MM,
};
pub use super_view::{super_beams_in_view, super_nearest_in_view, SuperInView};
pub use view::{beams_in_view, nearest_in_view, InView};

/// Index of each axis in a step-count array `[i32; 4]`.
pub const fn axis_index(id: AxisId) -> usize {
    match id {
        AxisId::Arm => 0,
        AxisId::Elevation => 1,
        AxisId::Tilt => 2,
        AxisId::Azimuth => 3,
    }
}

/// Widest detector acceptance half-angle a rig accepts, degrees.
pub const ACCEPTANCE_MAX_DEG: f32 = 20.0;

/// Step counts of all four axes (arm, elevation, tilt, azimuth); an absent elevation
/// axis stays at 0.
pub type Position = [i32; 4];

/// The instrument: its axes and detector.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Rig {
    /// Detector arm δ.
    pub arm: AxisConfig,
    /// Detector elevation ν; `None` for a one-circle arm.
    pub elevation: Option<AxisConfig>,
    /// Sample tilt α.
    pub tilt: AxisConfig,
    /// Sample azimuth φ.
    pub azimuth: AxisConfig,
    /// Detector acceptance half-angle, degrees.
    pub acceptance_deg: f32,
}

impl Rig {
    /// The built-in default rig: one-circle arm ±165° with a ±12° gun shadow, tilt ±80°,
    /// continuous azimuth, 200-step motors at 16 microsteps through 100:1 gears on arm
    /// and tilt (and 50:1 on azimuth), detector acceptance 1°. A starting point for a
    /// real rig file, not a description of any particular instrument.
    pub const fn bench_default() -> Rig {
        let mut arm = AxisConfig::new(AxisId::Arm, 200.0 * 16.0 * 100.0 / 360.0);
        arm.min_deg = -165.0;
        arm.max_deg = 165.0;
        arm.zones[0] = Some(Zone {
            from_deg: -12.0,
            to_deg: 12.0,
        });
        arm.backlash_deg = 0.05;
        arm.max_speed_deg_s = 15.0;
        arm.accel_deg_s2 = 30.0;
        let mut tilt = AxisConfig::new(AxisId::Tilt, 200.0 * 16.0 * 100.0 / 360.0);
        tilt.min_deg = -80.0;
        tilt.max_deg = 80.0;
        tilt.backlash_deg = 0.05;
        tilt.max_speed_deg_s = 5.0;
        tilt.accel_deg_s2 = 10.0;
        let mut azimuth = AxisConfig::new(AxisId::Azimuth, 200.0 * 16.0 * 50.0 / 360.0);
        azimuth.wrap = true;
        azimuth.approach = Approach::FromBelow;
        azimuth.max_speed_deg_s = 20.0;
        azimuth.accel_deg_s2 = 40.0;
        Rig {
            arm,
            elevation: None,
            tilt,
            azimuth,
            acceptance_deg: 1.0,
        }
    }

    /// The configuration of an axis, or `NoSuchAxis`.
    pub fn axis(&self, id: AxisId) -> Result<&AxisConfig> {
        match id {
            AxisId::Arm => Ok(&self.arm),
            AxisId::Elevation => self.elevation.as_ref().ok_or(Error::NoSuchAxis(id)),
            AxisId::Tilt => Ok(&self.tilt),
            AxisId::Azimuth => Ok(&self.azimuth),
        }
    }

    /// Checks every axis and the acceptance (0 < acceptance ≤ 20°), and that no axis's
    /// step (1 / steps_per_deg, degrees) is coarser than the acceptance
    /// (`StepTooCoarse`): a detector that cannot be put within its own acceptance of a
    /// beam is no pointing instrument.
    pub fn validate(&self) -> Result<()> {
        self.arm.validate()?;
        if let Some(e) = &self.elevation {
            e.validate()?;
        }
        self.tilt.validate()?;
        self.azimuth.validate()?;
        let a = finite(self.acceptance_deg, Quantity::Angle)?;
        if a <= 0.0 {
            return Err(Error::TooLow(Quantity::Angle));
        }
        if a > ACCEPTANCE_MAX_DEG {
            return Err(Error::TooHigh(Quantity::Angle));
        }
        for ax in [
            Some(&self.arm),
            self.elevation.as_ref(),
            Some(&self.tilt),
            Some(&self.azimuth),
        ]
        .into_iter()
        .flatten()
        {
            if ax.steps_per_deg * a < 1.0 {
                return Err(Error::StepTooCoarse(ax.id));
            }
        }
        Ok(())
    }

    /// The setpoint of axis `id` for `target_deg` from step count `current_steps`:
    /// [`AxisConfig::setpoint`], refused with `ResidualTooLarge` when the step it reaches
    /// misses the target by more than the detector acceptance. Every setpoint the
    /// console commands and every aiming solution comes from here.
    pub fn setpoint(&self, id: AxisId, target_deg: f32, current_steps: i32) -> Result<Setpoint> {
        let sp = self.axis(id)?.setpoint(target_deg, current_steps)?;
        self.check_residual(sp)
    }

    /// [`AxisConfig::setpoint_to_steps`] on axis `id`, with the residual bound of
    /// [`Rig::setpoint`]: how `move sol=N` drives to the step counts `aim` listed.
    pub fn setpoint_to_steps(
        &self,
        id: AxisId,
        target: &Setpoint,
        current_steps: i32,
    ) -> Result<Setpoint> {
        let sp = self.axis(id)?.setpoint_to_steps(target, current_steps)?;
        self.check_residual(sp)
    }

    /// The rig checked once ([`Rig::validate`]), as a [`CheckedRig`] whose setpoints do
    /// not validate the axes again.
    pub fn checked(&self) -> Result<CheckedRig> {
        CheckedRig::new(*self)
    }

    fn check_residual(&self, sp: Setpoint) -> Result<Setpoint> {
        let miss = sp.residual_deg.abs();
        if miss.is_nan() || miss > self.acceptance_deg {
            return Err(Error::ResidualTooLarge(sp.id));
        }
        Ok(sp)
    }

    /// The same rig with geometry only: limits opened to ±720° on non-wrapping axes, no
    /// zones, no backlash, and — when `need_elevation` — an elevation axis (1000
    /// steps/deg) if the rig has none. Its [`aim`] solutions are the geometric poses,
    /// near a given position; for models and sensitivities, never for motion.
    pub fn geometry_only(&self, need_elevation: bool) -> Rig {
        let open = |ax: &AxisConfig| {
            let mut a = *ax;
            a.zones = [None; crate::axis::MAX_ZONES];
            a.backlash_deg = 0.0;
            if !a.wrap {
                a.min_deg = -720.0;
                a.max_deg = 720.0;
            }
            a
        };
        let elevation = match &self.elevation {
            Some(e) => Some(open(e)),
            None if need_elevation => {
                let mut e = AxisConfig::new(AxisId::Elevation, 1000.0);
                e.min_deg = -720.0;
                e.max_deg = 720.0;
                Some(e)
            }
            None => None,
        };
        Rig {
            arm: open(&self.arm),
            elevation,
            tilt: open(&self.tilt),
            azimuth: open(&self.azimuth),
            acceptance_deg: self.acceptance_deg,
        }
    }

    /// Angles of a position, degrees: (arm, elevation, tilt, azimuth).
    pub fn angles(&self, p: &Position) -> [f32; 4] {
        [
            self.arm.steps_to_deg(p[0]),
            self.elevation.map_or(0.0, |e| e.steps_to_deg(p[1])),
            self.tilt.steps_to_deg(p[2]),
            self.azimuth.steps_to_deg(p[3]),
        ]
    }
}

/// A rig that has passed [`Rig::validate`]. Its fields can be read (it dereferences to
/// the [`Rig`]) but not changed: a changed rig is checked again by [`CheckedRig::new`].
/// So its setpoints skip the validation [`Rig::setpoint`] repeats on every call — the
/// console holds its rig this way, checked when an `axis`, `zone` or `set acceptance=`
/// request changes it, and aiming checks a plain rig once per call, not per setpoint.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct CheckedRig {
    rig: Rig,
}

impl CheckedRig {
    /// `rig`, once [`Rig::validate`] accepts it (its error otherwise).
    pub fn new(rig: Rig) -> Result<CheckedRig> {
        rig.validate()?;
        Ok(CheckedRig { rig })
    }

    /// The rig.
    pub const fn rig(&self) -> &Rig {
        &self.rig
    }

    /// [`Rig::setpoint`] without validating the axis again.
    pub fn setpoint(&self, id: AxisId, target_deg: f32, current_steps: i32) -> Result<Setpoint> {
        Valid(&self.rig).setpoint(id, target_deg, current_steps)
    }

    /// [`Rig::setpoint_to_steps`] without validating the axis again.
    pub fn setpoint_to_steps(
        &self,
        id: AxisId,
        target: &Setpoint,
        current_steps: i32,
    ) -> Result<Setpoint> {
        let sp = self
            .rig
            .axis(id)?
            .setpoint_to_steps_of_valid(target, current_steps)?;
        self.rig.check_residual(sp)
    }
}

/// A borrowed rig that has passed [`Rig::validate`] (what [`CheckedRig`] holds, or a
/// plain rig checked at the start of one [`aim`] call): setpoints without validation.
#[derive(Clone, Copy)]
struct Valid<'a>(&'a Rig);

impl<'a> Valid<'a> {
    /// `rig`, once [`Rig::validate`] accepts it.
    fn check(rig: &'a Rig) -> Result<Valid<'a>> {
        rig.validate()?;
        Ok(Valid(rig))
    }

    fn setpoint(self, id: AxisId, target_deg: f32, current_steps: i32) -> Result<Setpoint> {
        let sp = self
            .0
            .axis(id)?
            .setpoint_of_valid(target_deg, current_steps)?;
        self.0.check_residual(sp)
    }
}

impl core::ops::Deref for Valid<'_> {
    type Target = Rig;

    fn deref(&self) -> &Rig {
        self.0
    }
}

impl core::ops::Deref for CheckedRig {
    type Target = Rig;

    fn deref(&self) -> &Rig {
        &self.rig
    }
}

/// How to aim.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Mode {
    /// Turn the azimuth so the beam lies in the scattering plane (elevation 0).
    InPlane,
    /// Keep this azimuth (degrees) and use the elevation axis.
    AtAzimuth(f32),
}

/// One way to put the detector on a beam, as setpoints of every axis.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Solution {
    /// Sample azimuth φ.
    pub azimuth: Setpoint,
    /// Detector arm δ.
    pub arm: Setpoint,
    /// Detector elevation ν (`None` on a one-circle arm; the elevation is then 0).
    pub elevation: Option<Setpoint>,
    /// Sample tilt α.
    pub tilt: Setpoint,
    /// Branch: +1 when g points along +e1, −1 along −e1 (in-plane mode); 0 otherwise.
    pub branch: i8,
    /// Exit angle from the surface normal, degrees (signed along e1 in-plane; polar in
    /// two-circle mode).
    pub exit_deg: f32,
    /// Sum of |angle change| over the axes from the current position, degrees.
    pub travel_deg: f32,
}

impl Solution {
    /// A placeholder for initialising buffers.
    pub const EMPTY: Solution = Solution {
        azimuth: EMPTY_SP,
        arm: EMPTY_SP,
        elevation: None,
        tilt: EMPTY_SP,
        branch: 0,
        exit_deg: 0.0,
        travel_deg: 0.0,
    };

    /// Elevation angle, degrees (0 without an elevation axis).
    pub fn elevation_deg(&self) -> f32 {
        self.elevation.map_or(0.0, |e| e.angle_deg)
    }

    /// Step counts of this solution.
    pub fn position(&self) -> Position {
        [
            self.arm.steps,
            self.elevation.map_or(0, |e| e.steps),
            self.tilt.steps,
            self.azimuth.steps,
        ]
    }
}

const EMPTY_SP: Setpoint = Setpoint {
    id: AxisId::Arm,
    steps: 0,
    angle_deg: 0.0,
    residual_deg: 0.0,
    approach_steps: None,
};

/// Lab-frame unit vectors (e1, e2, n̂) of the surface at tilt α (degrees).
pub fn surface_frame_lab(tilt_deg: f32) -> [Vec3; 3] {
    let (s, c) = math::sin_cos_deg(tilt_deg);
    [[s, -c, 0.0], [0.0, 0.0, 1.0], [-c, -s, 0.0]]
}

/// Detector direction d̂(δ, ν) for arm and elevation in degrees.
pub fn detector_direction(arm_deg: f32, elevation_deg: f32) -> Vec3 {
    let (sd, cd) = math::sin_cos_deg(arm_deg);
    let (sn, cn) = math::sin_cos_deg(elevation_deg);
    [-cd * cn, -sd * cn, sn]
}

/// (arm δ, elevation ν), degrees, of a lab direction (need not be unit length).
pub fn arm_elevation_deg(d: Vec3) -> (f32, f32) {
    let n = math::norm(d);
    let z = if n > 0.0 { d[2] / n } else { 0.0 };
    (
        math::deg(math::atan2(-d[1], -d[0])),
        math::deg(math::asin_clamped(z)),
    )
}

/// Lab direction (unit) of a surface beam leaving a sample at tilt α.
pub fn beam_direction_lab(b: &SurfaceBeam, inc: &Incidence) -> Vec3 {
    direction_lab(&surface_frame_lab(inc.tilt_deg), b.k_par_inv_a, inc.k_inv_a)
}

/// Lab direction (unit) of a beam with k∥ `k_par` (surface frame, 1/Å) at 1/λ = `u`
/// from a surface with lab frame `frame` ([`surface_frame_lab`]).
fn direction_lab(frame: &[Vec3; 3], k_par: [f32; 2], u: f32) -> Vec3 {
    let [e1, e2, n] = *frame;
    let kx = k_par[0] / u;
    let ky = k_par[1] / u;
    let kz = math::sqrt((1.0 - kx * kx - ky * ky).max(0.0));
    math::add(
        math::add(math::scale(e1, kx), math::scale(e2, ky)),
        math::scale(n, kz),
    )
}

/// The in-plane arm angle δ = α + θ_out, degrees in (−180°, 180°], of rod `rod` of
/// `face` at tilt `tilt_deg` and kinetic energy `energy_ev` at the sample, on `branch`
/// (+1: g along +e1, −1: along −e1): sin θ_out = sin α + branch·λ·|g|. The model of the
/// arm-zero fit. Errors: those of [`beam::wavelength_a`]; `Evanescent` when
/// |sin θ_out| > 1.
pub fn in_plane_arm_deg(
    face: &Face,
    rod: [i32; 2],
    tilt_deg: f32,
    branch: i8,
    energy_ev: f32,
) -> Result<f32> {
    let lambda = beam::wavelength_a(energy_ev)?;
    let g = face.rod_inv_a(rod);
    let g_len = math::sqrt(g[0] * g[0] + g[1] * g[1]);
    let sin_out = math::sin(math::rad(tilt_deg)) + f32::from(branch) * lambda * g_len;
    if sin_out.abs() > 1.0 {
        return Err(Error::Evanescent);
    }
    Ok(wrap_180(tilt_deg + math::deg(math::asin(sin_out))))
}

/// The kinetic energy at the sample, eV, above which rod `rod` of `face` emerges in
/// in-plane mode at tilt `tilt_deg` on the branch that emerges first (at the lowest
/// energy): where λ·|g| = 1 + |sin α|. `None` for the specular rod (it always exists)
/// or when that energy is below 1 eV or above 300 keV.
pub fn in_plane_emergence_ev(face: &Face, rod: [i32; 2], tilt_deg: f32) -> Option<f32> {
    let g = face.rod_inv_a(rod);
    let g_len = math::sqrt(g[0] * g[0] + g[1] * g[1]);
    if g_len <= 0.0 {
        return None;
    }
    let s = math::sin(math::rad(tilt_deg)).abs();
    beam::energy_from_wavelength_ev((1.0 + s) / g_len).ok()
}

/// The kinetic energy at the sample, eV, above which rod `rod` of `face` exists in
/// in-plane mode at tilt `tilt_deg` on `branch` (+1: g along +e1, −1: along −e1, as
/// [`in_plane_arm_deg`]): where |sin α + branch·λ·|g|| reaches 1, i.e.
/// λ·|g| = 1 − branch·sin α (the grating equation at grazing exit). `None` for the
/// specular rod, a branch other than ±1, or when that energy is below 1 eV or above
/// 300 keV. The branch that emerges first gives [`in_plane_emergence_ev`].
pub fn in_plane_branch_emergence_ev(
    face: &Face,
    rod: [i32; 2],
    tilt_deg: f32,
    branch: i8,
) -> Option<f32> {
    if branch != 1 && branch != -1 {
        return None;
    }
    let g = face.rod_inv_a(rod);
    let g_len = math::sqrt(g[0] * g[0] + g[1] * g[1]);
    if g_len <= 0.0 {
        return None;
    }
    let s = math::sin(math::rad(tilt_deg));
    let lambda = (1.0 - f32::from(branch) * s) / g_len;
    if lambda <= 0.0 {
        return None;
    }
    beam::energy_from_wavelength_ev(lambda).ok()
}

/// Reduces an angle to (−180, 180].
pub fn wrap_180(x: f32) -> f32 {
    let r = x - 360.0 * math::floor((x + 180.0) / 360.0);
    if r <= -180.0 {
        r + 360.0
    } else {
        r
    }
}

/// Arm angle (degrees) of a bulk Bragg reflection in the scattering plane:
/// 2θ_B = 180° − δ, on the +δ side.
pub fn bragg_arm_deg(bragg_deg: f32) -> f32 {
    180.0 - 2.0 * bragg_deg
}

/// (arm, elevation) in degrees of the point at ring azimuth ψ (degrees) of a
/// transmission ring with scattering angle 2θ. ψ = 0 lies in the scattering plane on
/// the side of positive arm angles (the point [`bragg_arm_deg`] gives), ψ = 90° straight
/// up, ψ = 180° in the plane at negative arm angles.
pub fn ring_point_deg(two_theta_deg: f32, ring_azimuth_deg: f32) -> (f32, f32) {
    let (s2, c2) = math::sin_cos_deg(two_theta_deg);
    let (sp, cp) = math::sin_cos_deg(ring_azimuth_deg);
    arm_elevation_deg([c2, -s2 * cp, s2 * sp])
}

#[cfg(test)]
mod tests;
