//! Goniometer commands of `mwctl calc`: `aim`, `track`, `sweep`, `where`, `fit` and
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
use matterwave_core::goniometer::{self, axis_index, InView, Mode, Position, Rig, Solution};
use matterwave_core::lattice::Cell;
use matterwave_core::scan::{self, SweepPlan, TrackPlan};
use matterwave_core::surface::{Face, Incidence, TILT_MAX_DEG};
use matterwave_core::table::Crystal;
use matterwave_core::{budget, fit, math, AxisId, Error};

use crate::calc::{self, check_angle, crystal_face_fields, GunArgs};
use crate::error::{CliError, CliResult, Context};
use crate::output::{col, json_text, Format, List, Report, Value};
use crate::rig::{self, RigFile};

/// Most aim solutions listed (two branches × three copies of azimuth and arm).
const MAX_SOLUTIONS: usize = 32;

/// Most beams listed by `sweep` and `where`.
const MAX_BEAMS: usize = 2000;

/// Longest accepted dwell per point, seconds.
const DWELL_MAX_S: f32 = 3600.0;

// ---------------------------------------------------------------------------------------
// Shared arguments.

/// `--rig FILE`.
#[derive(Clone, Debug, clap::Args)]
pub struct RigArgs {
    /// Rig file (TOML; see docs/RIG.md). Default: the built-in rig (`mwctl rig show`).
    #[arg(long, value_name = "FILE")]
    pub rig: Option<PathBuf>,
}

impl RigArgs {
    /// The rig file, or the built-in rig.
    pub fn load(&self) -> CliResult<RigFile> {
        rig::load_or_default(self.rig.as_deref())
    }
}

/// `--position ARM,ELEV,TILT,AZ`.
#[derive(Clone, Debug, clap::Args)]
pub struct PositionArgs {
    /// Current position ARM,ELEV,TILT,AZ in degrees (ELEV 0 on a one-circle arm).
    /// Default: every axis at step count 0, i.e. at its home offset.
    #[arg(long, value_name = "ARM,ELEV,TILT,AZ", allow_hyphen_values = true)]
    pub position: Option<String>,
}

/// `--crystal ID --face HKL --beam H,K`.
#[derive(Clone, Debug, clap::Args)]
pub struct TargetArgs {
    /// Crystal id (see `mwctl crystals`).
    #[arg(long, value_name = "ID")]
    pub crystal: String,
    /// Face: 111, 1-10, 1,1,0, (1 -1 0); hexagonal also 0001, 10-10.
    #[arg(long, value_name = "HKL", allow_hyphen_values = true)]
    pub face: String,
    /// Beam (rod) indices H,K, e.g. 1,0 or -1,1.
    #[arg(long, value_name = "H,K", allow_hyphen_values = true)]
    pub beam: String,
}

/// Work-function and offset corrections without an energy (for energy ranges).
#[derive(Clone, Copy, Debug, clap::Args)]
pub struct CorrectionArgs {
    /// Cathode work function, eV (adds to the energy at the sample; 0 = no correction).
    #[arg(long, value_name = "EV", default_value_t = 0.0)]
    pub cathode_work_function: f32,
    /// Sample work function, eV (subtracts from the energy at the sample; 0 = none).
    #[arg(long, value_name = "EV", default_value_t = 0.0)]
    pub sample_work_function: f32,
    /// Fitted gun energy offset, eV (added to the energy at the sample).
    #[arg(long, value_name = "EV", default_value_t = 0.0)]
    pub energy_offset: f32,
}

impl CorrectionArgs {
    fn gun(&self, nominal_ev: f32) -> Gun {
        Gun {
            nominal_ev,
            cathode_work_function_ev: self.cathode_work_function,
            sample_work_function_ev: self.sample_work_function,
            offset_ev: self.energy_offset,
        }
    }

    fn correction_ev(&self) -> f32 {
        self.cathode_work_function - self.sample_work_function + self.energy_offset
    }
}

// ---------------------------------------------------------------------------------------
// Command arguments.

/// Arguments of `mwctl calc aim`.
#[derive(Clone, Debug, clap::Args)]
pub struct AimArgs {
    /// Crystal, face and beam.
    #[command(flatten)]
    pub target: TargetArgs,
    /// Gun settings.
    #[command(flatten)]
    pub gun: GunArgs,
    /// Sample tilt α, degrees (0 = normal incidence).
    #[arg(long, value_name = "DEG", default_value_t = 0.0)]
    pub tilt: f32,
    /// Two-circle mode: keep this sample azimuth φ (degrees) and use the elevation axis.
    /// Without it: in-plane mode (the azimuth turns the beam into the scattering plane).
    #[arg(long, value_name = "DEG")]
    pub azimuth: Option<f32>,
    /// The rig.
    #[command(flatten)]
    pub rig: RigArgs,
    /// The current position.
    #[command(flatten)]
    pub position: PositionArgs,
}

/// Arguments of `mwctl calc track`.
#[derive(Clone, Debug, clap::Args)]
pub struct TrackArgs {
    /// Crystal, face and beam.
    #[command(flatten)]
    pub target: TargetArgs,
    /// First nominal energy, eV.
    #[arg(long, value_name = "EV")]
    pub from: f32,
    /// Last nominal energy, eV (included when the steps land on it).
    #[arg(long, value_name = "EV")]
    pub to: f32,
    /// Nominal energy step, eV.
    #[arg(long, value_name = "EV")]
    pub step: f32,
    /// Gun corrections.
    #[command(flatten)]
    pub corrections: CorrectionArgs,
    /// Sample tilt α, degrees.
    #[arg(long, value_name = "DEG", default_value_t = 0.0)]
    pub tilt: f32,
    /// Two-circle mode at this azimuth, degrees (default: in-plane mode).
    #[arg(long, value_name = "DEG")]
    pub azimuth: Option<f32>,
    /// Dwell at every reachable point, seconds, for the time estimate.
    #[arg(long, value_name = "S", default_value_t = 0.0)]
    pub dwell: f32,
    /// The rig.
    #[command(flatten)]
    pub rig: RigArgs,
    /// The starting position.
    #[command(flatten)]
    pub position: PositionArgs,
}

/// Arguments of `mwctl calc sweep`.
#[derive(Clone, Debug, clap::Args)]
pub struct SweepArgs {
    /// Crystal id.
    #[arg(long, value_name = "ID")]
    pub crystal: String,
    /// Face (as for `beams`).
    #[arg(long, value_name = "HKL", allow_hyphen_values = true)]
    pub face: String,
    /// Gun settings.
    #[command(flatten)]
    pub gun: GunArgs,
    /// First arm angle, degrees.
    #[arg(long, value_name = "DEG")]
    pub arm_from: f32,
    /// Last arm angle, degrees.
    #[arg(long, value_name = "DEG")]
    pub arm_to: f32,
    /// Arm step, degrees.
    #[arg(long, value_name = "DEG")]
    pub step: f32,
    /// Sample tilt α, degrees.
    #[arg(long, value_name = "DEG", default_value_t = 0.0)]
    pub tilt: f32,
    /// Sample azimuth φ, degrees.
    #[arg(long, value_name = "DEG", default_value_t = 0.0)]
    pub azimuth: f32,
    /// Detector elevation during the sweep, degrees (needs an elevation axis unless 0).
    #[arg(long, value_name = "DEG", default_value_t = 0.0)]
    pub elevation: f32,
    /// Dwell at every reachable point, seconds, for the time estimate.
    #[arg(long, value_name = "S", default_value_t = 0.0)]
    pub dwell: f32,
    /// Also list every sweep point with its arm setpoint and the beam in view.
    #[arg(long)]
    pub points: bool,
    /// The rig.
    #[command(flatten)]
    pub rig: RigArgs,
    /// The starting position (its arm angle is where the sweep starts from).
    #[command(flatten)]
    pub position: PositionArgs,
}

/// Arguments of `mwctl calc where`.
#[derive(Clone, Debug, clap::Args)]
pub struct WhereArgs {
    /// Crystal id.
    #[arg(long, value_name = "ID")]
    pub crystal: String,
    /// Face (as for `beams`).
    #[arg(long, value_name = "HKL", allow_hyphen_values = true)]
    pub face: String,
    /// Gun settings.
    #[command(flatten)]
    pub gun: GunArgs,
    /// Arm angle δ, degrees.
    #[arg(long, value_name = "DEG")]
    pub arm: f32,
    /// Elevation ν, degrees (needs an elevation axis unless 0).
    #[arg(long, value_name = "DEG", default_value_t = 0.0)]
    pub elevation: f32,
    /// Sample azimuth φ, degrees.
    #[arg(long, value_name = "DEG")]
    pub azimuth: f32,
    /// Sample tilt α, degrees.
    #[arg(long, value_name = "DEG")]
    pub tilt: f32,
    /// Acceptance half-angle, degrees (above 0, up to 90; default: the rig's detector).
    #[arg(long, value_name = "DEG")]
    pub acceptance: Option<f32>,
    /// The rig.
    #[command(flatten)]
    pub rig: RigArgs,
}

/// What `mwctl calc fit` fits.
#[derive(Clone, Copy, Debug, PartialEq, Eq, clap::ValueEnum)]
pub enum FitKind {
    /// Peak centre from a scan: columns angle_deg,current.
    Peak,
    /// Arm zero and gun energy offset: columns nominal_ev,arm_deg.
    ArmZero,
    /// Row spacing: columns energy_ev,order,exit_deg.
    RowSpacing,
    /// Inner potential and layer spacing: columns order,energy_ev.
    Iv,
}

impl FitKind {
    fn name(self) -> &'static str {
        match self {
            FitKind::Peak => "peak",
            FitKind::ArmZero => "arm-zero",
            FitKind::RowSpacing => "row-spacing",
            FitKind::Iv => "iv",
        }
    }

    fn columns(self) -> &'static [&'static str] {
        match self {
            FitKind::Peak => &["angle_deg", "current"],
            FitKind::ArmZero => &["nominal_ev", "arm_deg"],
            FitKind::RowSpacing => &["energy_ev", "order", "exit_deg"],
            FitKind::Iv => &["order", "energy_ev"],
        }
    }
}

/// Peak-centring method of `fit peak`.
#[derive(Clone, Copy, Debug, PartialEq, Eq, clap::ValueEnum)]
pub enum PeakMethod {
    /// Current-weighted centroid above `--threshold`.
    Centroid,
    /// Parabola through ln(current) around the maximum (exact for a Gaussian peak).
    Parabola,
}

/// The CSV columns of `mwctl calc fit`, shown in its `--help`.
pub const FIT_HELP: &str = "\
Input: a CSV file with a header row naming the columns (any order; other columns are
ignored). Lines starting with # and blank lines are skipped. No quoting: plain numbers.

  peak         angle_deg,current          scan angle (deg) and detector current (any
                                          unit; counts per dwell for the centroid σ)
  arm-zero     nominal_ev,arm_deg         gun setting (eV) and measured arm angle of
                                          one beam (deg); needs --crystal --face --beam
                                          (and --tilt); fits arm zero δ0 and gun offset
                                          ΔE in  arm = δ(nominal + φc − φs + ΔE) + δ0
  row-spacing  energy_ev,order,exit_deg   energy at the sample (eV), order n, exit angle
                                          (deg) at normal incidence: sin θ = n·λ/d
  iv           order,energy_ev            specular I-V peak order n and energy (eV) at
                                          normal incidence: fits V0 and layer spacing d

See docs/FITS.md.";

/// Arguments of `mwctl calc fit`.
#[derive(Clone, Debug, clap::Args)]
pub struct FitArgs {
    /// What to fit.
    #[arg(value_enum)]
    pub kind: FitKind,
    /// The measurements, CSV (columns in --help).
    #[arg(long, value_name = "FILE.csv")]
    pub input: PathBuf,
    /// peak: centring method.
    #[arg(long, value_enum, default_value_t = PeakMethod::Parabola)]
    pub method: PeakMethod,
    /// peak, centroid: background level subtracted from every current (default: the
    /// smallest current in the file).
    #[arg(long, value_name = "CURRENT")]
    pub threshold: Option<f32>,
    /// arm-zero: crystal id.
    #[arg(long, value_name = "ID")]
    pub crystal: Option<String>,
    /// arm-zero: face.
    #[arg(long, value_name = "HKL", allow_hyphen_values = true)]
    pub face: Option<String>,
    /// arm-zero: the beam measured, H,K.
    #[arg(long, value_name = "H,K", allow_hyphen_values = true)]
    pub beam: Option<String>,
    /// arm-zero: sample tilt α, degrees.
    #[arg(long, value_name = "DEG", default_value_t = 0.0)]
    pub tilt: f32,
    /// arm-zero: cathode work function, eV (the fitted ΔE is then the offset beyond the
    /// contact-potential correction).
    #[arg(long, value_name = "EV", default_value_t = 0.0)]
    pub cathode_work_function: f32,
    /// arm-zero: sample work function, eV.
    #[arg(long, value_name = "EV", default_value_t = 0.0)]
    pub sample_work_function: f32,
}

/// Arguments of `mwctl calc budget`.
#[derive(Clone, Debug, clap::Args)]
pub struct BudgetArgs {
    /// Crystal, face and beam.
    #[command(flatten)]
    pub target: TargetArgs,
    /// Gun settings.
    #[command(flatten)]
    pub gun: GunArgs,
    /// Sample tilt α, degrees.
    #[arg(long, value_name = "DEG", default_value_t = 0.0)]
    pub tilt: f32,
    /// Two-circle mode at this azimuth, degrees (default: in-plane mode).
    #[arg(long, value_name = "DEG")]
    pub azimuth: Option<f32>,
    /// One standard deviation of the beam energy, eV (default 0.3: a thermionic
    /// cathode's spread is a few tenths of an eV, common practice).
    #[arg(long, value_name = "EV", default_value_t = 0.3)]
    pub energy_spread: f32,
    /// One standard deviation of the arm zero, degrees (e.g. the σ of `fit arm-zero`).
    #[arg(long, value_name = "DEG", default_value_t = 0.02)]
    pub arm_zero_sigma: f32,
    /// The rig.
    #[command(flatten)]
    pub rig: RigArgs,
    /// The current position (selects the solution, as for `aim`).
    #[command(flatten)]
    pub position: PositionArgs,
}

// ---------------------------------------------------------------------------------------
// Helpers.

fn f(x: f32, dec: usize) -> Value {
    Value::F32(x, dec)
}

fn text(s: impl Into<String>) -> Value {
    Value::Text(s.into())
}

fn check_dwell(x: f32) -> CliResult<f32> {
    if x.is_finite() && (0.0..=DWELL_MAX_S).contains(&x) {
        Ok(x)
    } else {
        Err(CliError::new(format!(
            "--dwell {x}: give a time in seconds from 0 to {DWELL_MAX_S}"
        )))
    }
}

fn rod_text(rod: [i32; 2]) -> String {
    format!("{},{}", rod[0], rod[1])
}

/// A scan plan's refusal of its range `--FROM x --TO y --step s`, with a hint.
fn plan_error(e: Error, (from, x): (&str, f32), (to, y): (&str, f32), step: f32) -> CliError {
    let hint = match e {
        Error::EmptyRange => format!("; --{from} must not be above --{to}"),
        Error::TooHigh(_) => "; at most 100000 points: use a larger --step".to_string(),
        Error::TooLow(_) => "; --step must be positive".to_string(),
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
fn no_elevation_axis(elevation: f32) -> CliError {
    CliError::new(format!(
        "--elevation {elevation}: this rig has no elevation axis; omit --elevation or give a rig file with an [elevation] axis"
    ))
}

fn rig_field(r: &mut Report, rf: &RigFile) {
    r.field("rig", "rig", text(rf.name.clone()));
}

fn mode_of(azimuth: Option<f32>) -> CliResult<Mode> {
    match azimuth {
        None => Ok(Mode::InPlane),
        Some(a) => Ok(Mode::AtAzimuth(check_angle(a, "azimuth", 360.0)?)),
    }
}

fn mode_text(mode: Mode) -> String {
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

fn zone_range(ax: Option<&AxisConfig>, i: u8) -> String {
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

fn target_deg(sp: &matterwave_core::axis::Setpoint) -> f32 {
    sp.angle_deg + sp.residual_deg
}

/// A geometric pose and what refuses it.
struct Pose {
    branch: i8,
    arm: f32,
    elevation: f32,
    azimuth: f32,
    refusal: Option<Error>,
}

/// What aim is asked for, for messages and re-evaluation.
struct AimQuery<'a> {
    rig: &'a Rig,
    face: Face,
    rod: [i32; 2],
    tilt: f32,
    mode: Mode,
    current: Position,
}

impl AimQuery<'_> {
    fn solve(&self, energy: f32, out: &mut [Solution]) -> matterwave_core::Result<usize> {
        goniometer::aim(
            self.rig,
            &self.face,
            self.rod,
            energy,
            self.tilt,
            self.mode,
            &self.current,
            out,
        )
        .map(|l| l.stored)
    }

    /// The emergence energy (at the sample) of the beam, for the evanescent message.
    fn emergence_ev(&self, energy: f32) -> Option<f32> {
        match self.mode {
            Mode::InPlane => goniometer::in_plane_emergence_ev(&self.face, self.rod, self.tilt),
            Mode::AtAzimuth(az) => {
                let inc = Incidence::new(energy, self.tilt, az).ok()?;
                self.face.emergence_ev(self.rod, &inc)
            }
        }
    }

    /// The geometric poses (one per branch, arm and azimuth in (−180°, 180°]) and, for
    /// each, the first axis error that refuses it on the real rig (`None`: reachable).
    fn poses(&self, energy: f32) -> Vec<Pose> {
        let need_elev = matches!(self.mode, Mode::AtAzimuth(_));
        let open = self.rig.geometry_only(need_elev);
        let mut buf = [Solution::EMPTY; MAX_SOLUTIONS];
        let q = AimQuery {
            rig: &open,
            ..*self
        };
        let Ok(n) = q.solve(energy, &mut buf) else {
            return Vec::new();
        };
        let mut out: Vec<Pose> = Vec::new();
        for s in &buf[..n] {
            let arm = target_deg(&s.arm);
            let az = target_deg(&s.azimuth);
            if arm.abs() > 180.001 || (!self.rig.azimuth.wrap && az.abs() > 180.001) {
                continue;
            }
            if out.iter().any(|p| p.branch == s.branch) {
                continue;
            }
            let elev = s.elevation.map_or(0.0, |e| target_deg(&e));
            out.push(Pose {
                branch: s.branch,
                arm,
                elevation: elev,
                azimuth: az,
                refusal: self.refusal(s, arm, elev, az),
            });
        }
        out
    }

    /// One line saying why no solution is reachable: for each geometric pose, the
    /// first axis that refuses it.
    fn explain(&self, energy: f32) -> String {
        let mut parts: Vec<String> = Vec::new();
        for p in self.poses(energy) {
            let what = match self.mode {
                Mode::InPlane => format!(
                    "arm {:.3} deg (branch {:+}, azimuth {:.3} deg)",
                    p.arm, p.branch, p.azimuth
                ),
                Mode::AtAzimuth(_) => {
                    format!("arm {:.3} deg, elevation {:.3} deg", p.arm, p.elevation)
                }
            };
            let why = match p.refusal {
                Some(e @ Error::NoSuchAxis(_)) => axis_reason(self.rig, e),
                Some(e) => match e.axis() {
                    Some(a @ (AxisId::Tilt | AxisId::Azimuth)) => {
                        format!("refused by the {}: {}", a.name(), axis_reason(self.rig, e))
                    }
                    _ => axis_reason(self.rig, e),
                },
                None => "unreachable".to_string(),
            };
            parts.push(format!("{what}: {why}"));
        }
        parts.join("; ")
    }

    fn refusal(&self, s: &Solution, arm: f32, elev: f32, az: f32) -> Option<Error> {
        let rig = self.rig;
        let c = &self.current;
        if let Err(e) = rig.tilt.setpoint(target_deg(&s.tilt), c[2]) {
            return Some(e);
        }
        match &rig.elevation {
            Some(ax) => {
                if let Err(e) = ax.setpoint(elev, c[1]) {
                    return Some(e);
                }
            }
            None if elev.abs() > rig.acceptance_deg => {
                return Some(Error::NoSuchAxis(AxisId::Elevation))
            }
            None => {}
        }
        if let Err(e) = rig.azimuth.setpoint(az, c[3]) {
            return Some(e);
        }
        rig.arm.setpoint(arm, c[0]).err()
    }

    /// The nearest reachable solutions, or the error a person can act on.
    fn reachable(
        &self,
        energy: f32,
        nominal: f32,
        correction: f32,
        out: &mut [Solution],
    ) -> CliResult<usize> {
        let ctx = format!(
            "--beam {} at {} eV ({} eV at the sample), tilt {} deg",
            rod_text(self.rod),
            nominal,
            energy,
            self.tilt
        );
        match self.solve(energy, out) {
            Ok(n) => Ok(n),
            Err(Error::Evanescent) => {
                let em = match self.emergence_ev(energy) {
                    Some(e) => format!(
                        "; it emerges only above {e:.2} eV at the sample ({:.2} eV nominal)",
                        e - correction
                    ),
                    None => String::new(),
                };
                Err(CliError {
                    code: Some(Error::Evanescent.code()),
                    message: format!(
                        "{ctx}: the beam is evanescent (it does not leave the surface){em}; raise the energy or change the tilt"
                    ),
                })
            }
            Err(Error::NoSuchAxis(AxisId::Elevation)) if self.rig.elevation.is_none() => {
                let why = self.explain(energy);
                Err(CliError {
                    code: Some(Error::NoSuchAxis(AxisId::Elevation).code()),
                    message: format!(
                        "{ctx}: no reachable solution: {why}; omit --azimuth for in-plane mode, or give a rig file with an [elevation] axis"
                    ),
                })
            }
            Err(e) if e.axis().is_some() || e == Error::NoReachableSolution => {
                let why = self.explain(energy);
                let why = if why.is_empty() {
                    axis_reason(self.rig, e)
                } else {
                    why
                };
                Err(CliError {
                    code: Some(e.code()),
                    message: format!("{ctx}: no reachable solution: {why}"),
                })
            }
            Err(e) => Err(CliError::core(e, ctx)),
        }
    }
}

fn solution_columns() -> Vec<crate::output::Column> {
    vec![
        col("azimuth_deg", "azimuth (deg)"),
        col("arm_deg", "arm (deg)"),
        col("elevation_deg", "elevation (deg)"),
        col("tilt_deg", "tilt (deg)"),
        col("azimuth_steps", "azimuth steps"),
        col("arm_steps", "arm steps"),
        col("elevation_steps", "elevation steps"),
        col("tilt_steps", "tilt steps"),
        col("arm_residual_deg", "arm residual (deg)"),
        col("arm_approach_steps", "arm turn-round"),
        col("branch", "branch"),
        col("exit_deg", "exit (deg)"),
        col("travel_deg", "travel (deg)"),
    ]
}

fn solution_row(s: &Solution) -> Vec<Value> {
    vec![
        f(s.azimuth.angle_deg, 4),
        f(s.arm.angle_deg, 4),
        f(s.elevation_deg(), 4),
        f(s.tilt.angle_deg, 4),
        Value::Int(s.azimuth.steps.into()),
        Value::Int(s.arm.steps.into()),
        s.elevation
            .map_or(Value::Missing, |e| Value::Int(e.steps.into())),
        Value::Int(s.tilt.steps.into()),
        f(s.arm.residual_deg, 6),
        s.arm
            .approach_steps
            .map_or(Value::Missing, |a| Value::Int(a.into())),
        Value::Int(s.branch.into()),
        f(s.exit_deg, 4),
        f(s.travel_deg, 3),
    ]
}

type Target = (&'static Crystal, Cell, Face, [i32; 2]);

fn target(t: &TargetArgs) -> CliResult<Target> {
    let c = calc::crystal(&t.crystal)?;
    let (cell, face) = calc::face_of(c, &t.face)?;
    let rod = calc::parse_rod(&t.beam)?;
    Ok((c, cell, face, rod))
}

/// What `aim` and `budget` start from: the crystal and its cell, the energy at the
/// sample, and the aim query on `rf`'s rig from the current position.
fn aim_query<'a>(
    rf: &'a RigFile,
    target_args: &TargetArgs,
    gun: &GunArgs,
    tilt: f32,
    azimuth: Option<f32>,
    position: &PositionArgs,
) -> CliResult<(&'static Crystal, Cell, f32, AimQuery<'a>)> {
    let (c, cell, face, rod) = target(target_args)?;
    let e = gun.kinetic_ev()?;
    let q = AimQuery {
        rig: &rf.rig,
        face,
        rod,
        tilt: check_angle(tilt, "tilt", TILT_MAX_DEG)?,
        mode: mode_of(azimuth)?,
        current: parse_position(position.position.as_deref(), &rf.rig)?,
    };
    Ok((c, cell, e, q))
}

// ---------------------------------------------------------------------------------------
// aim

/// `mwctl calc aim`.
pub fn aim(a: &AimArgs) -> CliResult<Report> {
    let rf = a.rig.load()?;
    let (c, _, e, q) = aim_query(&rf, &a.target, &a.gun, a.tilt, a.azimuth, &a.position)?;
    let mut buf = [Solution::EMPTY; MAX_SOLUTIONS];
    let n = q.reachable(e, a.gun.energy, a.gun.correction_ev(), &mut buf)?;
    let mut r = Report::default();
    crystal_face_fields(&mut r, c, &q.face);
    r.field("beam", "beam", text(rod_text(q.rod)));
    a.gun.fields(&mut r, e);
    r.field(
        "wavelength_a",
        "wavelength (Å)",
        f(beam::wavelength_a(e).ctx("energy at the sample")?, 6),
    );
    r.field("tilt_deg", "tilt (deg)", f(q.tilt, 3));
    r.field("mode", "mode", text(mode_text(q.mode)));
    rig_field(&mut r, &rf);
    r.field("count", "solutions", Value::Int(n as i64));
    r.list = Some(List {
        key: "solutions",
        columns: solution_columns(),
        rows: buf[..n].iter().map(solution_row).collect(),
    });
    r.notes
        .push("Solutions nearest the current position (least total travel) first.".into());
    Ok(r)
}

// ---------------------------------------------------------------------------------------
// track

/// `mwctl calc track`.
pub fn track(a: &TrackArgs) -> CliResult<Report> {
    let rf = a.rig.load()?;
    let (c, _, face, rod) = target(&a.target)?;
    let tilt = check_angle(a.tilt, "tilt", TILT_MAX_DEG)?;
    let mode = mode_of(a.azimuth)?;
    let dwell = check_dwell(a.dwell)?;
    let start = parse_position(a.position.position.as_deref(), &rf.rig)?;
    let corr = &a.corrections;
    for (name, x) in [("from", a.from), ("to", a.to)] {
        corr.gun(x)
            .kinetic_energy_ev()
            .ctx(format_args!("--{name} {x}"))?;
    }
    let plan = TrackPlan::new(
        rf.rig,
        face,
        rod,
        corr.gun(a.from),
        a.from,
        a.to,
        a.step,
        tilt,
        mode,
    )
    .map_err(|e| plan_error(e, ("from", a.from), ("to", a.to), a.step))?;
    let mut rows = Vec::new();
    let mut reachable = 0i64;
    let mut at = start;
    let mut branch: Option<i8> = None;
    for p in plan.iter(start) {
        let (status, sol) = match &p.result {
            Ok(s) => {
                reachable += 1;
                at = s.position();
                branch = Some(s.branch);
                ("reachable".to_string(), Some(s))
            }
            Err(e) => {
                // Once a branch is being followed, say what stops that branch.
                let q = AimQuery {
                    rig: &rf.rig,
                    face,
                    rod,
                    tilt,
                    mode,
                    current: at,
                };
                let tracked = branch.and_then(|b| {
                    q.poses(p.energy_ev)
                        .into_iter()
                        .find(|x| x.branch == b)
                        .and_then(|x| x.refusal)
                });
                (status_word(tracked.unwrap_or(*e)), None)
            }
        };
        let opt = |g: &dyn Fn(&Solution) -> Value| sol.map_or(Value::Missing, g);
        rows.push(vec![
            Value::Int(p.index.into()),
            f(p.nominal_ev, 3),
            f(p.energy_ev, 3),
            text(status),
            opt(&|s| f(s.azimuth.angle_deg, 4)),
            opt(&|s| f(s.arm.angle_deg, 4)),
            opt(&|s| f(s.elevation_deg(), 4)),
            opt(&|s| Value::Int(s.azimuth.steps.into())),
            opt(&|s| Value::Int(s.arm.steps.into())),
            opt(&|s| {
                s.elevation
                    .map_or(Value::Missing, |e| Value::Int(e.steps.into()))
            }),
            opt(&|s| Value::Int(s.branch.into())),
            opt(&|s| f(s.exit_deg, 4)),
        ]);
    }
    let est = scan::estimate_s(
        &rf.rig,
        start,
        plan.iter(start).map(|p| p.result.ok()),
        dwell,
    );
    let mut r = Report::default();
    crystal_face_fields(&mut r, c, &face);
    r.field("beam", "beam", text(rod_text(rod)));
    if corr.correction_ev() != 0.0 {
        r.field(
            "correction_ev",
            "energy at sample − nominal (eV)",
            f(corr.correction_ev(), 3),
        );
    }
    r.field("tilt_deg", "tilt (deg)", f(tilt, 3));
    r.field("mode", "mode", text(mode_text(mode)));
    rig_field(&mut r, &rf);
    r.field("count", "points", Value::Int(plan.len().into()));
    r.field("reachable", "reachable points", Value::Int(reachable));
    r.field("dwell_s", "dwell per point (s)", f(dwell, 3));
    r.field("estimate_s", "estimated time (s)", f(est, 1));
    r.list = Some(List {
        key: "points",
        columns: vec![
            col("index", "#"),
            col("nominal_ev", "nominal (eV)"),
            col("energy_ev", "energy (eV)"),
            col("status", "status"),
            col("azimuth_deg", "azimuth (deg)"),
            col("arm_deg", "arm (deg)"),
            col("elevation_deg", "elevation (deg)"),
            col("azimuth_steps", "azimuth steps"),
            col("arm_steps", "arm steps"),
            col("elevation_steps", "elevation steps"),
            col("branch", "branch"),
            col("exit_deg", "exit (deg)"),
        ],
        rows,
    });
    r.notes.push(
        "Each point follows on from the previous reachable one; the estimate is moves (slowest axis, trapezoidal) plus dwell."
            .into(),
    );
    Ok(r)
}

// ---------------------------------------------------------------------------------------
// sweep

/// The output of `sweep`: the beams crossed, and optionally the sweep points.
#[derive(Clone, Debug)]
pub struct SweepOutput {
    /// Fields and the beams crossed.
    pub beams: Report,
    /// The sweep points (with `--points`).
    pub points: Option<List>,
}

impl SweepOutput {
    /// Renders: JSON holds both lists (`beams`, `sweep_points`); CSV prints the sweep
    /// points when they were asked for, else the beams; the table prints both.
    pub fn render(&self, format: Format) -> String {
        let Some(points) = &self.points else {
            return self.beams.render(format);
        };
        let extra = Report {
            list: Some(points.clone()),
            ..Report::default()
        };
        match format {
            Format::Json => {
                let mut j = self.beams.to_json();
                if let (Some(m), serde_json::Value::Object(e)) =
                    (j.as_object_mut(), extra.to_json())
                {
                    m.extend(e);
                }
                json_text(&j)
            }
            Format::Csv => extra.render(format),
            Format::Table => {
                let mut s = self.beams.render(format);
                let _ = write!(s, "\nsweep points:\n{}", extra.render(format));
                s
            }
        }
    }
}

/// `mwctl calc sweep`.
pub fn sweep(a: &SweepArgs) -> CliResult<SweepOutput> {
    let rf = a.rig.load()?;
    let rig = &rf.rig;
    let c = calc::crystal(&a.crystal)?;
    let (_, face) = calc::face_of(c, &a.face)?;
    let e = a.gun.kinetic_ev()?;
    let tilt = check_angle(a.tilt, "tilt", TILT_MAX_DEG)?;
    let azimuth = check_angle(a.azimuth, "azimuth", 360.0)?;
    let elevation = check_angle(a.elevation, "elevation", 90.0)?;
    let dwell = check_dwell(a.dwell)?;
    let start = parse_position(a.position.position.as_deref(), rig)?;
    let within = |name: &str, ax: &AxisConfig, x: f32| {
        ax.check_angle(x).map_err(|er| CliError {
            code: Some(er.code()),
            message: format!("--{name} {x}: {}", axis_reason(rig, er)),
        })
    };
    match &rig.elevation {
        None if elevation != 0.0 => return Err(no_elevation_axis(elevation)),
        Some(ax) => within("elevation", ax, elevation)?,
        None => {}
    }
    within("tilt", &rig.tilt, tilt)?;
    within("azimuth", &rig.azimuth, azimuth)?;
    let inc = Incidence::new(e, tilt, azimuth).ctx("incidence")?;
    let plan = SweepPlan::new(*rig, face, inc, elevation, a.arm_from, a.arm_to, a.step)
        .map_err(|er| plan_error(er, ("arm-from", a.arm_from), ("arm-to", a.arm_to), a.step))?;
    let mut unreachable = 0i64;
    let mut statuses: Vec<String> = Vec::with_capacity(plan.len() as usize);
    let mut point_rows = Vec::new();
    for p in plan.iter(start[0]) {
        let status = match &p.setpoint {
            Ok(_) => "reachable".to_string(),
            Err(er) => {
                unreachable += 1;
                status_word(*er)
            }
        };
        if a.points {
            let iv = p.in_view;
            point_rows.push(vec![
                Value::Int(p.index.into()),
                f(p.arm_deg, 4),
                p.setpoint
                    .as_ref()
                    .map_or(Value::Missing, |s| Value::Int(s.steps.into())),
                text(status.clone()),
                iv.map_or(Value::Missing, |v| Value::Int(v.beam.rod[0].into())),
                iv.map_or(Value::Missing, |v| Value::Int(v.beam.rod[1].into())),
                iv.map_or(Value::Missing, |v| f(v.offset_deg, 4)),
            ]);
        }
        statuses.push(status);
    }
    let mut buf = vec![InView::EMPTY; MAX_BEAMS];
    let l = plan.beams_crossed(&mut buf).ctx("beams crossed")?;
    let mut beam_rows = Vec::new();
    for b in &buf[..l.stored] {
        // The status of the sweep point nearest the beam: can the sweep get there?
        let i = ((b.arm_deg - plan.from_deg) / plan.step_deg)
            .round()
            .max(0.0) as usize;
        let status = statuses
            .get(i.min(statuses.len().saturating_sub(1)))
            .cloned()
            .unwrap_or_default();
        beam_rows.push(vec![
            Value::Int(b.beam.rod[0].into()),
            Value::Int(b.beam.rod[1].into()),
            f(b.arm_deg, 4),
            f(b.elevation_deg, 4),
            f(b.beam.exit_deg, 4),
            f(b.beam.exit_azimuth_deg, 3),
            text(status),
        ]);
    }
    let est = scan::estimate_sweep_s(&plan, start[0], dwell);
    let mut r = Report::default();
    crystal_face_fields(&mut r, c, &face);
    a.gun.fields(&mut r, e);
    r.field("tilt_deg", "tilt (deg)", f(tilt, 3));
    r.field("azimuth_deg", "azimuth (deg)", f(azimuth, 3));
    r.field("elevation_deg", "elevation (deg)", f(elevation, 3));
    rig_field(&mut r, &rf);
    r.field("points", "sweep points", Value::Int(plan.len().into()));
    r.field(
        "unreachable_points",
        "unreachable points",
        Value::Int(unreachable),
    );
    r.field("dwell_s", "dwell per point (s)", f(dwell, 3));
    r.field("estimate_s", "estimated time (s)", f(est, 1));
    r.field(
        "truncated",
        "more beams than listed",
        text(l.truncated.to_string()),
    );
    r.list = Some(List {
        key: "beams",
        columns: vec![
            col("h", "h"),
            col("k", "k"),
            col("arm_deg", "arm (deg)"),
            col("elevation_deg", "elevation (deg)"),
            col("exit_deg", "exit (deg)"),
            col("exit_azimuth_deg", "exit azimuth (deg)"),
            col("status", "sweep status"),
        ],
        rows: beam_rows,
    });
    let points = a.points.then(|| List {
        key: "sweep_points",
        columns: vec![
            col("index", "#"),
            col("arm_deg", "arm (deg)"),
            col("arm_steps", "arm steps"),
            col("status", "status"),
            col("h", "h"),
            col("k", "k"),
            col("offset_deg", "offset (deg)"),
        ],
        rows: point_rows,
    });
    Ok(SweepOutput { beams: r, points })
}

// ---------------------------------------------------------------------------------------
// where

/// `mwctl calc where`.
pub fn where_(a: &WhereArgs) -> CliResult<Report> {
    let rf = a.rig.load()?;
    let rig = &rf.rig;
    let c = calc::crystal(&a.crystal)?;
    let (_, face) = calc::face_of(c, &a.face)?;
    let e = a.gun.kinetic_ev()?;
    let tilt = check_angle(a.tilt, "tilt", TILT_MAX_DEG)?;
    let azimuth = check_angle(a.azimuth, "azimuth", 360.0)?;
    let arm = check_angle(a.arm, "arm", 360.0)?;
    let elevation = check_angle(a.elevation, "elevation", 90.0)?;
    if rig.elevation.is_none() && elevation != 0.0 {
        return Err(no_elevation_axis(elevation));
    }
    let acceptance = match a.acceptance {
        None => rig.acceptance_deg,
        Some(x) if x.is_finite() && x > 0.0 && x <= 90.0 => x,
        Some(x) => {
            return Err(CliError::new(format!(
                "--acceptance {x}: give a half-angle in degrees above 0, up to 90"
            )))
        }
    };
    let inc = Incidence::new(e, tilt, azimuth).ctx("incidence")?;
    let mut buf = vec![InView::EMPTY; MAX_BEAMS];
    let l = goniometer::beams_in_view(&face, &inc, arm, elevation, acceptance, &mut buf)
        .ctx("beams in view")?;
    let arm_status = match rig.arm.check_angle(arm) {
        Ok(()) => "allowed".to_string(),
        Err(er) => status_word(er),
    };
    let mut r = Report::default();
    crystal_face_fields(&mut r, c, &face);
    a.gun.fields(&mut r, e);
    r.field("tilt_deg", "tilt (deg)", f(tilt, 3));
    r.field("azimuth_deg", "azimuth (deg)", f(azimuth, 3));
    r.field("arm_deg", "arm (deg)", f(arm, 4));
    r.field("elevation_deg", "elevation (deg)", f(elevation, 4));
    r.field(
        "acceptance_deg",
        "acceptance half-angle (deg)",
        f(acceptance, 3),
    );
    rig_field(&mut r, &rf);
    r.field("arm_status", "arm position on this rig", text(arm_status));
    r.field("count", "beams in view", Value::Int(l.stored as i64));
    r.list = Some(List {
        key: "beams",
        columns: vec![
            col("h", "h"),
            col("k", "k"),
            col("offset_deg", "offset (deg)"),
            col("arm_deg", "arm (deg)"),
            col("elevation_deg", "elevation (deg)"),
            col("exit_deg", "exit (deg)"),
            col("exit_azimuth_deg", "exit azimuth (deg)"),
        ],
        rows: buf[..l.stored]
            .iter()
            .map(|b| {
                vec![
                    Value::Int(b.beam.rod[0].into()),
                    Value::Int(b.beam.rod[1].into()),
                    f(b.offset_deg, 4),
                    f(b.arm_deg, 4),
                    f(b.elevation_deg, 4),
                    f(b.beam.exit_deg, 4),
                    f(b.beam.exit_azimuth_deg, 3),
                ]
            })
            .collect(),
    });
    Ok(r)
}

// ---------------------------------------------------------------------------------------
// fit

/// One data line of a CSV file: its 1-based line number and the required columns' text.
struct CsvRow {
    line: usize,
    cells: Vec<String>,
}

/// Reads a CSV with a header row, keeping the `required` columns in that order.
fn read_csv(path: &Path, required: &[&str]) -> CliResult<Vec<CsvRow>> {
    let name = path.display();
    let body = std::fs::read_to_string(path)
        .map_err(|e| CliError::new(format!("--input {name}: cannot read it: {e}")))?;
    let mut lines = body
        .lines()
        .enumerate()
        .map(|(i, l)| (i + 1, l.trim()))
        .filter(|(_, l)| !l.is_empty() && !l.starts_with('#'));
    let want = required.join(",");
    let Some((hline, header)) = lines.next() else {
        return Err(CliError::new(format!(
            "--input {name}: no header row; the first line must name the columns {want}"
        )));
    };
    let heads: Vec<String> = header
        .split(',')
        .map(|h| h.trim().trim_start_matches('\u{feff}').to_ascii_lowercase())
        .collect();
    let mut idx = Vec::new();
    for r in required {
        let found: Vec<usize> = heads
            .iter()
            .enumerate()
            .filter(|(_, h)| h == r)
            .map(|(i, _)| i)
            .collect();
        match found.as_slice() {
            [i] => idx.push(*i),
            [] => {
                return Err(CliError::new(format!(
                    "--input {name} line {hline}: the header lacks column \"{r}\"; this fit needs the columns {want}"
                )))
            }
            _ => {
                return Err(CliError::new(format!(
                    "--input {name} line {hline}: column \"{r}\" appears twice in the header"
                )))
            }
        }
    }
    let mut rows = Vec::new();
    for (line, l) in lines {
        let cells: Vec<&str> = l.split(',').map(str::trim).collect();
        if cells.len() != heads.len() {
            return Err(CliError::new(format!(
                "--input {name} line {line}: {} fields, but the header has {}",
                cells.len(),
                heads.len()
            )));
        }
        rows.push(CsvRow {
            line,
            cells: idx.iter().map(|&i| cells[i].to_string()).collect(),
        });
    }
    Ok(rows)
}

fn csv_f32(path: &Path, row: &CsvRow, i: usize, column: &str) -> CliResult<f32> {
    let t = &row.cells[i];
    match t.parse::<f32>() {
        Ok(x) if x.is_finite() => Ok(x),
        _ => Err(CliError::new(format!(
            "--input {} line {}, column \"{column}\": not a finite number: {t:?}",
            path.display(),
            row.line
        ))),
    }
}

fn csv_i32(path: &Path, row: &CsvRow, i: usize, column: &str) -> CliResult<i32> {
    let t = &row.cells[i];
    t.parse::<i32>().map_err(|_| {
        CliError::new(format!(
            "--input {} line {}, column \"{column}\": not a whole number: {t:?}",
            path.display(),
            row.line
        ))
    })
}

/// `mwctl calc fit`.
pub fn fit_cmd(a: &FitArgs) -> CliResult<Report> {
    let cols = a.kind.columns();
    let rows = read_csv(&a.input, cols)?;
    let p = a.input.as_path();
    let mut r = Report::default();
    r.field("kind", "fit", text(a.kind.name()));
    r.field("input", "input", text(p.display().to_string()));
    let ctx = format!("fit {} (--input {})", a.kind.name(), p.display());
    match a.kind {
        FitKind::Peak => {
            let mut samples = Vec::with_capacity(rows.len());
            for row in &rows {
                samples.push(fit::Sample {
                    angle_deg: csv_f32(p, row, 0, cols[0])?,
                    current: csv_f32(p, row, 1, cols[1])?,
                });
            }
            let (c, threshold) = match a.method {
                PeakMethod::Parabola => (fit::parabola_log(&samples).ctx(&ctx)?, None),
                PeakMethod::Centroid => {
                    let t = match a.threshold {
                        Some(t) => t,
                        None => samples
                            .iter()
                            .map(|s| s.current)
                            .fold(f32::INFINITY, f32::min),
                    };
                    (fit::centroid(&samples, t).ctx(&ctx)?, Some(t))
                }
            };
            r.field(
                "method",
                "method",
                text(match a.method {
                    PeakMethod::Parabola => "parabola",
                    PeakMethod::Centroid => "centroid",
                }),
            );
            r.field("threshold", "threshold", Value::opt(threshold, 4));
            r.field("angle_deg", "peak angle (deg)", f(c.angle_deg, 4));
            r.field("angle_sigma_deg", "σ angle (deg)", f(c.uncertainty_deg, 4));
            r.field("fwhm_deg", "FWHM (deg)", f(c.fwhm_deg, 4));
            r.field("peak_current", "peak current", f(c.peak_current, 4));
            r.field(
                "points_used",
                "points used",
                Value::Int(c.points_used.into()),
            );
            r.field("points", "points", Value::Int(samples.len() as i64));
        }
        FitKind::ArmZero => fit_arm_zero(a, &rows, &ctx, &mut r)?,
        FitKind::RowSpacing => {
            let mut pts = Vec::with_capacity(rows.len());
            for row in &rows {
                pts.push((
                    csv_f32(p, row, 0, cols[0])?,
                    csv_i32(p, row, 1, cols[1])?,
                    csv_f32(p, row, 2, cols[2])?,
                ));
            }
            let fit = fit::row_spacing(&pts).ctx(&ctx)?;
            r.field("row_spacing_a", "row spacing d (Å)", f(fit.value, 5));
            r.field("row_spacing_sigma_a", "σ d (Å)", f(fit.sigma, 5));
            r.field(
                "rms_residual_deg",
                "rms exit-angle residual (deg)",
                f(fit.rms_residual, 4),
            );
            r.field("points", "points", Value::Int(fit.points.into()));
            let mut list = List {
                key: "residuals",
                columns: vec![
                    col("energy_ev", "energy (eV)"),
                    col("order", "n"),
                    col("exit_deg", "exit (deg)"),
                    col("fitted_deg", "fitted (deg)"),
                    col("residual_deg", "residual (deg)"),
                ],
                rows: Vec::new(),
            };
            for &(e, n, exit) in &pts {
                let lambda = beam::wavelength_a(e).ctx(&ctx)?;
                let pred = math::deg(math::asin_clamped(n as f32 * lambda / fit.value));
                list.rows.push(vec![
                    f(e, 3),
                    Value::Int(n.into()),
                    f(exit, 4),
                    f(pred, 4),
                    f(exit - pred, 4),
                ]);
            }
            r.list = Some(list);
        }
        FitKind::Iv => {
            let mut pts = Vec::with_capacity(rows.len());
            for row in &rows {
                pts.push((csv_i32(p, row, 0, cols[0])?, csv_f32(p, row, 1, cols[1])?));
            }
            let fit = fit::inner_potential_and_spacing(&pts).ctx(&ctx)?;
            r.field(
                "inner_potential_ev",
                "inner potential V0 (eV)",
                f(fit.inner_potential_ev, 3),
            );
            r.field(
                "inner_potential_sigma_ev",
                "σ V0 (eV)",
                f(fit.inner_potential_sigma_ev, 3),
            );
            r.field(
                "layer_spacing_a",
                "layer spacing d (Å)",
                f(fit.layer_spacing_a, 5),
            );
            r.field(
                "layer_spacing_sigma_a",
                "σ d (Å)",
                f(fit.layer_spacing_sigma_a, 5),
            );
            r.field(
                "rms_residual_ev",
                "rms energy residual (eV)",
                f(fit.rms_residual_ev, 3),
            );
            r.field("points", "points", Value::Int(fit.points.into()));
            let mut list = List {
                key: "residuals",
                columns: vec![
                    col("order", "n"),
                    col("energy_ev", "energy (eV)"),
                    col("fitted_ev", "fitted (eV)"),
                    col("residual_ev", "residual (eV)"),
                ],
                rows: Vec::new(),
            };
            for &(n, e) in &pts {
                let pred = beam::energy_from_wavenumber_ev(n as f32 / (2.0 * fit.layer_spacing_a))
                    - fit.inner_potential_ev;
                list.rows.push(vec![
                    Value::Int(n.into()),
                    f(e, 3),
                    f(pred, 3),
                    f(e - pred, 3),
                ]);
            }
            r.list = Some(list);
        }
    }
    Ok(r)
}

fn fit_arm_zero(a: &FitArgs, rows: &[CsvRow], ctx: &str, r: &mut Report) -> CliResult<()> {
    let p = a.input.as_path();
    let (Some(crystal), Some(face_t), Some(beam_t)) = (&a.crystal, &a.face, &a.beam) else {
        return Err(CliError::new(
            "fit arm-zero needs the beam's model: give --crystal ID --face HKL --beam H,K (and --tilt DEG)",
        ));
    };
    let c = calc::crystal(crystal)?;
    let (_, face) = calc::face_of(c, face_t)?;
    let rod = calc::parse_rod(beam_t)?;
    let tilt = check_angle(a.tilt, "tilt", TILT_MAX_DEG)?;
    for (name, x) in [
        ("cathode-work-function", a.cathode_work_function),
        ("sample-work-function", a.sample_work_function),
    ] {
        beam::check_work_function(x).ctx(format_args!("--{name} {x}"))?;
    }
    let wf = a.cathode_work_function - a.sample_work_function;
    if face.rod_inv_a(rod) == [0.0, 0.0] {
        return Err(CliError::new(format!(
            "fit arm-zero --beam {}: the specular beam sits at twice the tilt at every energy, so it cannot fix the gun offset; measure a diffracted beam",
            rod_text(rod)
        )));
    }
    let cols = a.kind.columns();
    let mut pts = Vec::with_capacity(rows.len());
    for row in rows {
        pts.push((csv_f32(p, row, 0, cols[0])?, csv_f32(p, row, 1, cols[1])?));
    }
    let model_fit = fit::arm_zero_in_plane(&face, rod, tilt, wf, &pts).map_err(|e| match e {
        Error::Evanescent => CliError {
            code: Some(e.code()),
            message: format!(
                "{ctx}: the beam {} is evanescent at some of the energies; check --crystal, --face, --beam and --tilt",
                rod_text(rod)
            ),
        },
        other => CliError::core(other, ctx),
    })?;
    let (fit, s) = (model_fit.fit, f32::from(model_fit.branch));
    let model = |e: f32| goniometer::in_plane_arm_deg(&face, rod, tilt, model_fit.branch, e + wf);
    let [zero, offset] = fit.params;
    crystal_face_fields(r, c, &face);
    r.field("beam", "beam", text(rod_text(rod)));
    r.field("tilt_deg", "tilt (deg)", f(tilt, 3));
    r.field("branch", "branch", Value::Int(s as i64));
    if wf != 0.0 {
        r.field("contact_potential_ev", "φcathode − φsample (eV)", f(wf, 3));
    }
    r.field("arm_zero_deg", "arm zero δ0 (deg)", f(zero, 4));
    r.field("arm_zero_sigma_deg", "σ δ0 (deg)", f(fit.sigma[0], 4));
    r.field("energy_offset_ev", "gun offset ΔE (eV)", f(offset, 3));
    r.field("energy_offset_sigma_ev", "σ ΔE (eV)", f(fit.sigma[1], 3));
    r.field(
        "rms_residual_deg",
        "rms arm residual (deg)",
        f(fit.rms_residual, 4),
    );
    r.field("points", "points", Value::Int(fit.points.into()));
    r.field(
        "iterations",
        "iterations",
        Value::Int(fit.iterations.into()),
    );
    let mut list = List {
        key: "residuals",
        columns: vec![
            col("nominal_ev", "nominal (eV)"),
            col("arm_deg", "arm (deg)"),
            col("fitted_deg", "fitted (deg)"),
            col("residual_deg", "residual (deg)"),
        ],
        rows: Vec::new(),
    };
    for &(e, arm) in &pts {
        let pred = model(e + offset).ctx(ctx)? + zero;
        list.rows
            .push(vec![f(e, 3), f(arm, 4), f(pred, 4), f(arm - pred, 4)]);
    }
    r.list = Some(list);
    Ok(())
}

// ---------------------------------------------------------------------------------------
// budget

/// `mwctl calc budget`.
pub fn budget_cmd(a: &BudgetArgs) -> CliResult<Report> {
    let rf = a.rig.load()?;
    let rig = &rf.rig;
    let (c, cell, e, q) = aim_query(&rf, &a.target, &a.gun, a.tilt, a.azimuth, &a.position)?;
    let (face, rod, tilt, mode) = (q.face, q.rod, q.tilt, q.mode);
    let spread = a.energy_spread;
    let zero_sigma = a.arm_zero_sigma;
    let inputs = budget::ArmBudgetInputs {
        energy_spread_ev: spread,
        arm_zero_sigma_deg: zero_sigma,
        lattice_sigma_a: c.a_uncertainty_a,
    };
    let ab = budget::arm_budget(
        rig,
        &cell,
        face.miller,
        rod,
        e,
        tilt,
        mode,
        &q.current,
        &inputs,
    )
    .or_else(|er| {
        let flag = match er.quantity() {
            Some(matterwave_core::Quantity::EnergySpread) => {
                Some(format!("--energy-spread {spread}"))
            }
            Some(matterwave_core::Quantity::ArmZeroSigma) => {
                Some(format!("--arm-zero-sigma {zero_sigma}"))
            }
            _ => None,
        };
        if let Some(flag) = flag {
            return Err(CliError::core(er, flag));
        }
        // Refused by the rig: say which axis refuses each geometric pose.
        let mut buf = [Solution::EMPTY; MAX_SOLUTIONS];
        q.reachable(e, a.gun.energy, a.gun.correction_ev(), &mut buf)?;
        Err(CliError::core(
            er,
            "energy sensitivity (the beam is too close to its emergence energy)",
        ))
    })?;
    let (arm0, d_energy, d_lattice, b) = (
        ab.arm_deg,
        ab.d_arm_d_energy_deg_per_ev,
        ab.d_arm_d_lattice_deg_per_a,
        ab.budget,
    );
    let basis = [
        format!("σE {spread} eV × {:.5} deg/eV", d_energy.abs()),
        format!(
            "σa {} Å (table) × {:.4} deg/Å",
            c.a_uncertainty_a,
            d_lattice.abs()
        ),
        format!("step {:.6} deg / √12", 1.0 / rig.arm.steps_per_deg),
        format!("acceptance half-angle {} deg", rig.acceptance_deg),
        format!("--arm-zero-sigma {zero_sigma} deg"),
    ];
    let mut r = Report::default();
    crystal_face_fields(&mut r, c, &face);
    r.field("beam", "beam", text(rod_text(rod)));
    a.gun.fields(&mut r, e);
    r.field("tilt_deg", "tilt (deg)", f(tilt, 3));
    r.field("mode", "mode", text(mode_text(mode)));
    rig_field(&mut r, &rf);
    r.field("arm_deg", "aimed arm angle (deg)", f(arm0, 4));
    r.field(
        "d_arm_d_energy_deg_per_ev",
        "∂arm/∂E (deg/eV)",
        f(d_energy, 6),
    );
    r.field(
        "d_arm_d_lattice_deg_per_a",
        "∂arm/∂a (deg/Å)",
        f(d_lattice, 4),
    );
    r.field(
        "total_deg",
        "total, root sum of squares (deg)",
        f(b.total_deg(), 5),
    );
    r.list = Some(List {
        key: "contributions",
        columns: vec![
            col("name", "contribution"),
            col("deg", "σ arm (deg)"),
            col("basis", "from"),
        ],
        rows: b
            .contributions()
            .iter()
            .zip(basis)
            .map(|(ct, why)| vec![text(ct.name), f(ct.deg, 5), text(why)])
            .collect(),
    });
    r.notes.push(
        "One standard deviation each; independent causes combine as the root sum of squares."
            .into(),
    );
    Ok(r)
}
