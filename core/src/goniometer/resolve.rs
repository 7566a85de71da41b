//! Aiming: one request ([`AimRequest`]) → the geometric poses that put the detector on
//! the beam → their resolution against the rig's axes.
//!
//! Every axis of a pose is checked in one fixed order — **tilt, azimuth, elevation,
//! arm** — and [`refusals`] lists every axis that refuses every pose, with the limit or
//! zone and by how much, so that a person is told everything that stands in the way at
//! once. [`aim`] returns the solutions, or on failure the first of those refusals, so the
//! error it names is always the head of the list [`refusals`] gives. A beam below its
//! emergence energy is never a refusal: it is `Evanescent`, and [`refusals`] gives the
//! energy where it emerges.

use heapless::Vec as HVec;

use super::{
    arm_elevation_deg, direction_lab, surface_frame_lab, wrap_180, CheckedRig, Mode, Position, Rig,
    Solution, Valid,
};
use crate::axis::AxisConfig;
use crate::beam;
use crate::error::{AxisId, Error, Result};
use crate::listing::{insert_sorted, Listing};
use crate::math;
use crate::surface::{exit_deg_of, Face, Incidence};

/// Which in-plane branch aiming may use: the rod g along +e1 (`Plus`), along −e1
/// (`Minus`), or whichever solution is nearest the current position (`Nearest`). The
/// specular beam has no branch and every preference accepts it; in two-circle mode
/// ([`Mode::AtAzimuth`]) only `Nearest` applies.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Branch {
    /// The nearest solution on either branch.
    Nearest,
    /// Only branch +1 (g along +e1).
    Plus,
    /// Only branch −1 (g along −e1).
    Minus,
}

impl Branch {
    /// Every preference, in the order help texts list them.
    pub const ALL: [Branch; 3] = [Branch::Nearest, Branch::Plus, Branch::Minus];

    /// The word the console and `mwctl` use: `nearest`, `+1` or `-1`.
    pub const fn word(self) -> &'static str {
        match self {
            Branch::Nearest => "nearest",
            Branch::Plus => "+1",
            Branch::Minus => "-1",
        }
    }

    /// The preference a word names ([`Branch::word`]; `1` is read as `+1`), if any.
    pub fn from_word(word: &str) -> Option<Branch> {
        match word {
            "1" => Some(Branch::Plus),
            w => Branch::ALL.into_iter().find(|b| b.word() == w),
        }
    }

    /// Whether a solution on `branch` (+1, −1, or 0 for none) is allowed.
    pub const fn allows(self, branch: i8) -> bool {
        match self {
            Branch::Nearest => true,
            Branch::Plus => branch >= 0,
            Branch::Minus => branch <= 0,
        }
    }
}

/// What to aim at: rod `rod` of `face` at kinetic energy `energy_ev` at the sample
/// (eV), sample tilt `tilt_deg` (degrees), aiming `mode` and branch preference.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct AimRequest<'a> {
    /// The face.
    pub face: &'a Face,
    /// The beam (rod indices h, k).
    pub rod: [i32; 2],
    /// Kinetic energy at the sample, eV.
    pub energy_ev: f32,
    /// Sample tilt α, degrees.
    pub tilt_deg: f32,
    /// In-plane or at a fixed azimuth.
    pub mode: Mode,
    /// Which branch may be used.
    pub branch: Branch,
}

impl<'a> AimRequest<'a> {
    /// In-plane aiming on the nearest branch.
    pub const fn new(face: &'a Face, rod: [i32; 2], energy_ev: f32, tilt_deg: f32) -> Self {
        AimRequest {
            face,
            rod,
            energy_ev,
            tilt_deg,
            mode: Mode::InPlane,
            branch: Branch::Nearest,
        }
    }

    /// The same request in `mode`.
    pub const fn with_mode(self, mode: Mode) -> Self {
        AimRequest { mode, ..self }
    }

    /// The same request with branch preference `branch`.
    pub const fn with_branch(self, branch: Branch) -> Self {
        AimRequest { branch, ..self }
    }

    /// The same request at another energy at the sample, eV.
    pub const fn at_energy(self, energy_ev: f32) -> Self {
        AimRequest { energy_ev, ..self }
    }
}

/// One axis of one geometric pose that the rig refuses.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Refusal {
    /// The pose's branch (+1, −1; 0 in two-circle mode and for the specular beam).
    pub branch: i8,
    /// The axis that refuses.
    pub axis: AxisId,
    /// The angle the pose needs on that axis, degrees.
    pub target_deg: f32,
    /// Why: `BelowLimit`, `AboveLimit`, `InZone`, `PathCrossesZone`, `StepOverflow`, or
    /// `NoSuchAxis(Elevation)` for a pose out of the plane on a one-circle arm.
    pub error: Error,
    /// How far the target lies beyond the limit, or inside the zone from its nearer
    /// edge, degrees; `None` where no single distance applies (a path that crosses a
    /// zone, the step counter, a missing axis, a turn-round point beyond a limit).
    pub by_deg: Option<f32>,
}

/// Most refusals one request can have: two poses × four axes.
pub const MAX_REFUSALS: usize = 8;

/// Everything that stands between a request and the beam.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Refusals {
    /// The geometric poses considered (0 when the beam has not emerged on any allowed
    /// branch).
    pub poses: u8,
    /// Every refusal, pose by pose in branch order (+1 before −1), axes in the fixed
    /// order tilt, azimuth, elevation, arm.
    pub list: HVec<Refusal, MAX_REFUSALS>,
    /// When no pose exists: the kinetic energy at the sample, eV, above which the beam
    /// emerges on an allowed branch at this tilt (and azimuth, in two-circle mode), if
    /// that energy is within 1 eV to 300 keV.
    pub emerges_ev: Option<f32>,
}

impl Refusals {
    /// Forgets every refusal.
    pub fn clear(&mut self) {
        *self = Refusals::default();
    }

    /// The error [`aim`] reports: `Evanescent` when no pose exists, else the first
    /// refusal, else `NoReachableSolution` (every pose passes its axes one by one but no
    /// combination of the reached angles does).
    pub fn first_error(&self) -> Error {
        if self.poses == 0 {
            return Error::Evanescent;
        }
        self.list
            .first()
            .map_or(Error::NoReachableSolution, |r| r.error)
    }
}

/// A wanted pose before the rig: azimuth, branch and signed in-plane exit angle.
#[derive(Clone, Copy)]
struct Wanted {
    azimuth_deg: f32,
    branch: i8,
    exit_deg: f32,
}

/// Checks the inputs and returns the checked energy.
fn check_request(req: &AimRequest<'_>) -> Result<f32> {
    let e = beam::check_energy(req.energy_ev)?;
    crate::surface::check_tilt(req.tilt_deg)?;
    if req.rod[0].abs() > 4096 || req.rod[1].abs() > 4096 {
        return Err(Error::IndicesTooLarge);
    }
    if matches!(req.mode, Mode::AtAzimuth(_)) && req.branch != Branch::Nearest {
        return Err(Error::BranchNeedsInPlane);
    }
    Ok(e)
}

/// The wanted poses at the tilt of `base` (the angle the tilt axis reaches, or the
/// requested one; `base` at azimuth 0), branch +1 first. `current_az` is the azimuth the
/// specular beam keeps.
fn wanted(req: &AimRequest<'_>, base: &Incidence, current_az: f32) -> Result<HVec<Wanted, 2>> {
    let mut out = HVec::new();
    match req.mode {
        Mode::InPlane => {
            let lambda = 1.0 / base.k_inv_a;
            let g = req.face.rod_inv_a(req.rod);
            let g_len = math::sqrt(g[0] * g[0] + g[1] * g[1]);
            let psi = math::deg(math::atan2(g[1], g[0]));
            let s_alpha = math::sin(math::rad(base.tilt_deg));
            let branches: &[i8] = if g_len == 0.0 { &[1] } else { &[1, -1] };
            for &br in branches {
                if g_len != 0.0 && !req.branch.allows(br) {
                    continue;
                }
                let sin_out = s_alpha + f32::from(br) * lambda * g_len;
                if sin_out.abs() > 1.0 {
                    continue;
                }
                let az = if g_len == 0.0 {
                    current_az
                } else if br > 0 {
                    wrap_180(-psi)
                } else {
                    wrap_180(180.0 - psi)
                };
                let w = Wanted {
                    azimuth_deg: az,
                    branch: br,
                    exit_deg: math::deg(math::asin(sin_out)),
                };
                // Two slots, at most two branches.
                let _ = out.push(w);
            }
        }
        Mode::AtAzimuth(az) => {
            let inc = base.at_azimuth(az)?;
            if let Some((_, q)) = req.face.k_par_of(req.rod, &inc) {
                let _ = out.push(Wanted {
                    azimuth_deg: inc.azimuth_deg,
                    branch: 0,
                    exit_deg: exit_deg_of(math::sqrt(q), inc.k_inv_a),
                });
            }
        }
    }
    Ok(out)
}

/// Every way to put the detector on the requested beam within the rig's limits and
/// zones, nearest to `current` (least total travel) first, written to `out`.
///
/// The tilt is set first; the geometry then uses the tilt the axis really reaches, and
/// the arm (and elevation) follow from the beam direction at the azimuth the azimuth
/// axis really reaches, so quantisation of the sample axes does not throw the detector
/// off the beam. In-plane mode tries the branches the preference allows and, on
/// non-wrapping axes, the ±360° copies of azimuth and arm. The specular beam has one
/// branch and keeps the current azimuth.
///
/// Errors: bad inputs (energy, tilt, indices beyond ±4096, `BranchNeedsInPlane`,
/// `EmptyBuffer`); when no solution survives, [`Refusals::first_error`] of
/// [`refusals`] — `Evanescent` when the beam has not emerged, else the first refusal in
/// the fixed axis order.
pub fn aim(
    rig: &Rig,
    req: &AimRequest<'_>,
    current: &Position,
    out: &mut [Solution],
) -> Result<Listing> {
    aim_valid(Valid::check(rig)?, req, current, out)
}

/// [`aim`] on a rig checked beforehand (no validation per call): what the console
/// calls with the rig it holds.
pub fn aim_checked(
    rig: &CheckedRig,
    req: &AimRequest<'_>,
    current: &Position,
    out: &mut [Solution],
) -> Result<Listing> {
    aim_valid(Valid(rig.rig()), req, current, out)
}

fn aim_valid(
    rig: Valid<'_>,
    req: &AimRequest<'_>,
    current: &Position,
    out: &mut [Solution],
) -> Result<Listing> {
    if out.is_empty() {
        return Err(Error::EmptyBuffer);
    }
    let e = check_request(req)?;
    let Ok(tilt_sp) = rig.setpoint(AxisId::Tilt, req.tilt_deg, current[2]) else {
        return Err(refusals_valid(rig, req, current)?.first_error());
    };
    let tilt = tilt_sp.angle_deg;
    let current_az = rig.azimuth.steps_to_deg(current[3]);
    // The energy and the reached tilt, once: each pose only turns the azimuth.
    let base = Incidence::new(e, tilt, 0.0)?;
    let frame = surface_frame_lab(tilt);
    let poses = wanted(req, &base, current_az)?;
    let mut stored = 0usize;
    let mut truncated = false;
    let cur = rig.angles(current);
    // The ±360° copies of a target on an axis that does not wrap, those within its
    // limits only (a setpoint beyond them is refused anyway).
    let copies = |ax: &AxisConfig, target: f32| {
        let offsets: &'static [f32] = if ax.wrap {
            &[0.0]
        } else {
            &[0.0, 360.0, -360.0]
        };
        let (lo, hi, wrap) = (ax.min_deg, ax.max_deg, ax.wrap);
        offsets
            .iter()
            .map(move |off| target + off)
            .filter(move |t| wrap || (lo..=hi).contains(t))
    };
    for w in &poses {
        for az_target in copies(&rig.azimuth, w.azimuth_deg) {
            let Ok(az_sp) = rig.setpoint(AxisId::Azimuth, az_target, current[3]) else {
                continue;
            };
            // The beam as the sample really sits.
            let inc = base.at_azimuth(az_sp.angle_deg)?;
            let Some((k_par, q)) = req.face.k_par_of(req.rod, &inc) else {
                continue;
            };
            let (arm_deg, elev_deg) = arm_elevation_deg(direction_lab(&frame, k_par, inc.k_inv_a));
            let elev_sp = match &rig.elevation {
                Some(_) => match rig.setpoint(AxisId::Elevation, elev_deg, current[1]) {
                    Ok(s) => Some(s),
                    Err(_) => continue,
                },
                None if elev_deg.abs() > rig.acceptance_deg => continue,
                None => None,
            };
            // Two-circle: the polar exit at the reached azimuth.
            let exit_deg = if w.branch == 0 {
                exit_deg_of(math::sqrt(q), inc.k_inv_a)
            } else {
                w.exit_deg
            };
            for arm_target in copies(&rig.arm, arm_deg) {
                let Ok(arm_sp) = rig.setpoint(AxisId::Arm, arm_target, current[0]) else {
                    continue;
                };
                let travel = (arm_sp.angle_deg - cur[0]).abs()
                    + elev_sp.map_or(0.0, |s| (s.angle_deg - cur[1]).abs())
                    + (tilt_sp.angle_deg - cur[2]).abs()
                    + (az_sp.angle_deg - cur[3]).abs();
                let sol = Solution {
                    azimuth: az_sp,
                    arm: arm_sp,
                    elevation: elev_sp,
                    tilt: tilt_sp,
                    branch: w.branch,
                    exit_deg,
                    travel_deg: travel,
                };
                truncated |=
                    insert_sorted(out, &mut stored, sol, |a, b| a.travel_deg < b.travel_deg);
            }
        }
    }
    if stored == 0 {
        return Err(refusals_valid(rig, req, current)?.first_error());
    }
    Ok(Listing { stored, truncated })
}

/// Everything that refuses the request on `rig` from `current`: the geometric poses
/// (each allowed branch at the requested tilt, with arm and azimuth in (−180°, 180°]
/// on axes that do not wrap), and for each pose every axis whose setpoint
/// fails, checked in the fixed order tilt, azimuth, elevation, arm. An empty list with
/// poses means every pose is reachable axis by axis.
///
/// Errors: the same bad inputs as [`aim`].
pub fn refusals(rig: &Rig, req: &AimRequest<'_>, current: &Position) -> Result<Refusals> {
    refusals_valid(Valid::check(rig)?, req, current)
}

/// [`refusals`] on a rig checked beforehand.
pub fn refusals_checked(
    rig: &CheckedRig,
    req: &AimRequest<'_>,
    current: &Position,
) -> Result<Refusals> {
    refusals_valid(Valid(rig.rig()), req, current)
}

fn refusals_valid(rig: Valid<'_>, req: &AimRequest<'_>, current: &Position) -> Result<Refusals> {
    let e = check_request(req)?;
    let mut r = Refusals {
        poses: 0,
        list: HVec::new(),
        emerges_ev: None,
    };
    let current_az = rig.azimuth.steps_to_deg(current[3]);
    let base = Incidence::new(e, req.tilt_deg, 0.0)?;
    let frame = surface_frame_lab(req.tilt_deg);
    let poses = wanted(req, &base, current_az)?;
    if poses.is_empty() {
        r.emerges_ev = emergence_ev(req);
        return Ok(r);
    }
    // The tilt's refusal is the same for every pose.
    let tilt_refusal = rig.setpoint(AxisId::Tilt, req.tilt_deg, current[2]).err();
    for w in &poses {
        let az = if rig.azimuth.wrap {
            w.azimuth_deg
        } else {
            wrap_180(w.azimuth_deg)
        };
        let inc = base.at_azimuth(az)?;
        let Some((k_par, _)) = req.face.k_par_of(req.rod, &inc) else {
            continue;
        };
        r.poses = r.poses.saturating_add(1);
        let (arm, elev) = arm_elevation_deg(direction_lab(&frame, k_par, inc.k_inv_a));
        let arm = wrap_180(arm);
        let refusal = |axis: &AxisConfig, target: f32, err: Error| Refusal {
            branch: w.branch,
            axis: axis.id,
            target_deg: target,
            error: err,
            by_deg: by_deg(axis, target, err),
        };
        let refuse = |axis: &AxisConfig, target: f32, from: i32| {
            rig.setpoint(axis.id, target, from)
                .err()
                .map(|err| refusal(axis, target, err))
        };
        let elevation = match &rig.elevation {
            Some(ax) => refuse(ax, elev, current[1]),
            None if elev.abs() > rig.acceptance_deg => Some(Refusal {
                branch: w.branch,
                axis: AxisId::Elevation,
                target_deg: elev,
                error: Error::NoSuchAxis(AxisId::Elevation),
                by_deg: None,
            }),
            None => None,
        };
        // The fixed order: tilt, azimuth, elevation, arm.
        for x in [
            tilt_refusal.map(|err| refusal(&rig.tilt, req.tilt_deg, err)),
            refuse(&rig.azimuth, az, current[3]),
            elevation,
            refuse(&rig.arm, arm, current[0]),
        ]
        .into_iter()
        .flatten()
        {
            // Two poses × four axes fit.
            let _ = r.list.push(x);
        }
    }
    if r.poses == 0 {
        r.emerges_ev = emergence_ev(req);
    }
    Ok(r)
}

/// How far `target` lies beyond the limit or inside the zone `err` names, degrees.
fn by_deg(axis: &AxisConfig, target: f32, err: Error) -> Option<f32> {
    let d = match err {
        Error::BelowLimit(_) => axis.min_deg - target,
        Error::AboveLimit(_) => target - axis.max_deg,
        Error::InZone(_, i) => {
            let z = axis.zones.get(usize::from(i)).copied().flatten()?;
            (target - z.from_deg).min(z.to_deg - target)
        }
        _ => return None,
    };
    (d >= 0.0).then_some(d)
}

/// The energy at the sample, eV, above which the beam emerges on a branch the request
/// allows (in-plane), or at its azimuth (two-circle).
fn emergence_ev(req: &AimRequest<'_>) -> Option<f32> {
    match req.mode {
        Mode::InPlane => {
            let g = req.face.rod_inv_a(req.rod);
            let g_len = math::sqrt(g[0] * g[0] + g[1] * g[1]);
            if g_len <= 0.0 {
                return None;
            }
            // Branch b emerges where λ·|g| = 1 − b·sin α.
            let s = math::sin(math::rad(req.tilt_deg));
            let need = match req.branch {
                Branch::Nearest => 1.0 + s.abs(),
                Branch::Plus => 1.0 - s,
                Branch::Minus => 1.0 + s,
            };
            beam::energy_from_wavelength_ev(need / g_len).ok()
        }
        Mode::AtAzimuth(az) => {
            let inc = Incidence::new(req.energy_ev, req.tilt_deg, az).ok()?;
            req.face.emergence_ev(req.rod, &inc)
        }
    }
}
