//! Goniometer commands of `mwctl calc`: `aim`, `track`, `sweep`, `view`, `fit` and
//! `budget`. Every number comes from the core's f32 code (goniometer, axis, scan, fit
//! and budget modules), the same code the controller runs; this module reads the
//! command line, the rig and the CSV files, and turns core errors into one line that
//! names the axis, the limit or zone, or the file line and column.
//!
//! Positions: `--position ARM,ELEV,TILT,AZ` is the current position in degrees (ELEV is
//! 0 on a one-circle arm); without it every axis is at step count 0, i.e. at its home
//! offset. Aiming picks, among the solutions within the limits and outside the
//! forbidden zones, the one with the least total travel from there.

use std::fmt::Write as _;
use std::path::{Path, PathBuf};

use matterwave_core::axis::{AxisConfig, STEPS_MAX};
use matterwave_core::beam::{self, Gun};
use matterwave_core::goniometer::{
    self, axis_index, AimRequest, Branch, InView, Mode, Position, Refusal, Refusals, Rig, Solution,
};
use matterwave_core::lattice::Cell;
use matterwave_core::scan::{self, IvPlan, SweepPlan, TrackPlan};
use matterwave_core::surface::{Face, Incidence, TILT_MAX_DEG};
use matterwave_core::table::Crystal;
use matterwave_core::{budget, math, AxisId, Error};

use crate::calc::{self, check_angle, crystal_face_fields, GunArgs};
use crate::error::{CliError, CliResult, Context};
use crate::output::{col, Format, List, Report, Value};
use crate::rig::{self, RigFile};

/// Most aim solutions listed (two branches × three copies of azimuth and arm).
const MAX_SOLUTIONS: usize = 32;

/// Most beams listed by `sweep` and `view`.
const MAX_BEAMS: usize = 2000;

/// Longest accepted dwell per point, seconds.
const DWELL_MAX_S: f32 = 3600.0;

mod aim;
mod args;
mod calib;
mod sweep;
mod track;

pub use aim::{add_reach, aim, budget_cmd};
pub use args::*;
pub use calib::fit_cmd;
pub(crate) use calib::{csv_f32, read_csv};
pub use sweep::{sweep, view, SweepOutput};
pub use track::track;

/// The beam aimed at: `rod` is a whole rod of `grid`, which is the face itself for an
/// integer-order beam and the core's [`Face::fractional_grid`] for a fractional one
/// (`--beam 1/2,0`), so that the whole-rod aiming and plans serve both; `pos` labels it.
pub(super) struct TargetBeam {
    pub(super) grid: Face,
    pub(super) rod: [i32; 2],
    pub(super) pos: matterwave_core::surface::FracRod,
}

pub(super) type Target = (Crystal, Cell, Face, TargetBeam);

pub(super) fn target(t: &TargetArgs) -> CliResult<Target> {
    let c = calc::crystal_at(&t.crystal, &t.sample)?;
    let (cell, face) = calc::face_of(&c, &t.face)?;
    let beam = match calc::parse_rod(&t.beam) {
        Ok(rod) => TargetBeam {
            grid: face,
            rod,
            pos: matterwave_core::surface::FracRod::whole(rod),
        },
        Err(e) if !t.beam.contains('/') => return Err(e),
        Err(_) => {
            let pos = calc::parse_frac_rod(&t.beam)?;
            TargetBeam {
                grid: face
                    .fractional_grid(pos.den)
                    .ctx(format_args!("--beam {pos}"))?,
                rod: pos.num,
                pos,
            }
        }
    };
    Ok((c, cell, face, beam))
}

// ---------------------------------------------------------------------------------------
// Helpers.

pub(super) fn f(x: f32, dec: usize) -> Value {
    Value::F32(x, dec)
}

pub(super) fn text(s: impl Into<String>) -> Value {
    Value::Text(s.into())
}

pub(super) fn check_dwell(x: f32) -> CliResult<f32> {
    if x.is_finite() && (0.0..=DWELL_MAX_S).contains(&x) {
        Ok(x)
    } else {
        Err(CliError::new(format!(
            "--dwell {x}: give a time in seconds from 0 to {DWELL_MAX_S}"
        )))
    }
}

pub(super) fn rod_text(rod: [i32; 2]) -> String {
    format!("{},{}", rod[0], rod[1])
}

/// A scan plan's refusal of its range `--FROM x --TO y --step s`, with a hint.
pub(super) fn plan_error(
    e: Error,
    (from, x): (&str, f32),
    (to, y): (&str, f32),
    step: f32,
) -> CliError {
    let hint = match e {
        Error::EmptyRange => format!("; give --{from} below --{to}"),
        Error::TooHigh(_) => "; at most 100000 points: use a larger --step".to_string(),
        // The core's words say "count or step"; here it is the step, and only that.
        Error::TooLow(_) => {
            return CliError {
                code: Some(e.code()),
                message: format!(
                    "--step {step}: the step must be above 0 (the range --{from} {x} --{to} {y} is walked in steps of this size, at most 100000 points)"
                ),
            }
        }
        _ => String::new(),
    };
    CliError {
        code: Some(e.code()),
        message: format!(
            "--{from} {x} --{to} {y} --step {step}: {}{hint}",
            e.message()
        ),
    }
}

/// `--elevation` other than 0 on a rig without an elevation axis.
pub(super) fn no_elevation_axis(elevation: f32) -> CliError {
    CliError::new(format!(
        "--elevation {elevation}: this rig has no elevation axis; omit --elevation or give a rig file with an [elevation] axis"
    ))
}

/// The exit of beam `rod` at the energy at the sample `energy_ev` (eV) as solution `s`
/// really sets the sample: the core's beam at the reached tilt and azimuth, as the polar
/// exit angle from the surface normal and its azimuth in the surface frame (degrees) —
/// the convention of `beams`, `sweep` and `view`, so a branch −1 beam is (θ, 180°) on
/// every command, never a negative angle.
pub(super) fn exit_of(face: &Face, rod: [i32; 2], energy_ev: f32, s: &Solution) -> [Value; 2] {
    match Incidence::new(energy_ev, s.tilt.angle_deg, s.azimuth.angle_deg)
        .and_then(|inc| face.beam(rod, &inc))
    {
        Ok(b) => [f(b.exit_deg, 4), f(b.exit_azimuth_deg, 3)],
        Err(_) => [Value::Missing, Value::Missing],
    }
}

pub(super) fn rig_field(r: &mut Report, rf: &RigFile) {
    r.field("rig", "rig", text(rf.name.clone()));
}

pub(super) fn mode_of(azimuth: Option<f32>) -> CliResult<Mode> {
    match azimuth {
        None => Ok(Mode::InPlane),
        Some(a) => Ok(Mode::AtAzimuth(check_angle(a, "azimuth", 360.0)?)),
    }
}

pub(super) fn mode_text(mode: Mode) -> String {
    match mode {
        Mode::InPlane => "in-plane".to_string(),
        Mode::AtAzimuth(a) => format!("two-circle at azimuth {a} deg"),
    }
}

/// Parses `--position ARM,ELEV,TILT,AZ` (degrees) into step counts; `None` = all 0.
pub fn parse_position(text: Option<&str>, rig: &Rig) -> CliResult<Position> {
    let Some(t) = text else {
        return Ok([0; 4]);
    };
    let bad = |why: String| CliError::new(format!("--position '{t}': {why}"));
    let parts: Vec<&str> = t
        .split([',', ' '])
        .map(str::trim)
        .filter(|p| !p.is_empty())
        .collect();
    if parts.len() != 4 {
        return Err(bad(
            "give four angles ARM,ELEV,TILT,AZ in degrees, e.g. 30,0,15,0 (ELEV 0 on a one-circle arm)"
                .to_string(),
        ));
    }
    let mut pos = [0i32; 4];
    for (id, p) in AxisId::ALL.into_iter().zip(&parts) {
        let x: f32 = p
            .parse()
            .ok()
            .filter(|x: &f32| x.is_finite())
            .ok_or_else(|| bad(format!("{} angle '{p}' is not a finite number", id.name())))?;
        let Ok(ax) = rig.axis(id) else {
            if x != 0.0 {
                return Err(bad(format!(
                    "this rig has no elevation axis; give 0 for ELEV, not {x}"
                )));
            }
            continue;
        };
        let s = ax.position_steps(x).map_err(|e| match e {
            Error::StepOverflow(_) => bad(format!(
                "{} {x} deg needs more than ±{STEPS_MAX} microsteps from home",
                id.name()
            )),
            _ => bad(format!(
                "{} {x} deg lies outside its limits [{}, {}] deg",
                id.name(),
                ax.min_deg,
                ax.max_deg
            )),
        })?;
        pos[axis_index(id)] = s;
    }
    Ok(pos)
}

pub(super) fn zone_range(ax: Option<&AxisConfig>, i: u8) -> String {
    ax.and_then(|a| a.zones.get(i as usize).copied().flatten())
        .map_or_else(String::new, |z| {
            format!(" [{}, {}] deg", z.from_deg, z.to_deg)
        })
}

/// Short status of an unreachable point: `evanescent`, `arm min`, `arm max`,
/// `arm zone 0`, `arm path crosses zone 0`, `no elevation axis`, ….
pub fn status_word(e: Error) -> String {
    match e {
        Error::Evanescent => "evanescent".to_string(),
        Error::BelowLimit(a) => format!("{} min", a.name()),
        Error::AboveLimit(a) => format!("{} max", a.name()),
        Error::InZone(a, i) => format!("{} zone {i}", a.name()),
        Error::PathCrossesZone(a, i) => format!("{} path crosses zone {i}", a.name()),
        Error::NoSuchAxis(a) => format!("no {} axis", a.name()),
        Error::StepOverflow(a) => format!("{} step overflow", a.name()),
        Error::KineticEnergyTooLow => "energy below 1 eV".to_string(),
        other => format!("E{}", other.code()),
    }
}

/// Why an axis refuses a target, naming the axis and the limit value or the zone with
/// its index and range.
pub fn axis_reason(rig: &Rig, e: Error) -> String {
    let ax = |a: AxisId| rig.axis(a).ok();
    match e {
        Error::BelowLimit(a) => format!(
            "below the {} lower limit {} deg",
            a.name(),
            ax(a).map_or(f32::NAN, |x| x.min_deg)
        ),
        Error::AboveLimit(a) => format!(
            "above the {} upper limit {} deg",
            a.name(),
            ax(a).map_or(f32::NAN, |x| x.max_deg)
        ),
        Error::InZone(a, i) => format!(
            "inside {} forbidden zone {i}{}",
            a.name(),
            zone_range(ax(a), i)
        ),
        Error::PathCrossesZone(a, i) => format!(
            "the {} path from the current position crosses forbidden zone {i}{}",
            a.name(),
            zone_range(ax(a), i)
        ),
        Error::NoSuchAxis(AxisId::Elevation) => {
            "out of the scattering plane, and this rig has no elevation axis".to_string()
        }
        Error::StepOverflow(a) => format!("beyond the {} microstep counter", a.name()),
        other => other.message().to_string(),
    }
}
