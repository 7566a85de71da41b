//! The command-line arguments of the goniometer commands.

use super::*;

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
    /// Sample temperature.
    #[command(flatten)]
    pub sample: crate::calc::SampleArgs,
    /// Face: 111, 1-10, 1,1,0, (1 -1 0); hexagonal also 0001, 10-10.
    #[arg(long, value_name = "HKL", allow_hyphen_values = true)]
    pub face: String,
    /// Beam (rod) indices H,K, e.g. 1,0 or -1,1; a fractional-order beam of a
    /// superstructure in substrate units, e.g. 1/2,0 or 1/3,1/3 (denominators to 99).
    #[arg(long, value_name = "H,K", allow_hyphen_values = true)]
    pub beam: String,
}

/// Work-function and offset corrections without an energy (for energy ranges).
#[derive(Clone, Copy, Debug, clap::Args)]
pub struct CorrectionArgs {
    /// Cathode work function, eV (adds to the energy at the sample; 0 = no correction).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "EV", default_value_t = 0.0)]
    pub cathode_work_function: f32,
    /// Sample work function, eV (subtracts from the energy at the sample; 0 = none), or
    /// `face`: the crystal table's value for the face.
    #[arg(value_parser = crate::calc::ev_or_face, long, value_name = "EV|face", default_value = "0")]
    pub sample_work_function: crate::calc::EvOrFace,
    /// Fitted gun energy offset, eV (added to the energy at the sample).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "EV", default_value_t = 0.0)]
    pub energy_offset: f32,
}

impl CorrectionArgs {
    /// These corrections with `--sample-work-function face` replaced by the table's value
    /// for `face` of `c`.
    pub(super) fn at_face(&self, c: &Crystal, face: &Face) -> CliResult<CorrectionArgs> {
        let g = self.gun_args(0.0).at_face(c, face)?;
        Ok(CorrectionArgs {
            sample_work_function: g.sample_work_function,
            ..*self
        })
    }

    /// The corrections with a nominal energy, as [`GunArgs`].
    pub(super) fn gun_args(&self, nominal_ev: f32) -> GunArgs {
        GunArgs {
            energy: nominal_ev,
            cathode_work_function: self.cathode_work_function,
            sample_work_function: self.sample_work_function,
            energy_offset: self.energy_offset,
        }
    }

    pub(super) fn gun(&self, nominal_ev: f32) -> Gun {
        self.gun_args(nominal_ev).gun()
    }

    pub(super) fn correction_ev(&self) -> f32 {
        self.gun_args(0.0).correction_ev()
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
    /// Sample tilt α, degrees, within ±89.9 (0: normal incidence).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG", default_value_t = 0.0)]
    pub tilt: f32,
    /// Sample azimuth φ, degrees, within ±360: aim two-circle at this azimuth (with the
    /// elevation axis unless the beam stays in the plane). Without it, in-plane aiming: the
    /// azimuth axis turns the beam into the scattering plane.
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG")]
    pub azimuth: Option<f32>,
    /// Branch preference in in-plane mode: `+1` (g along +e1), `-1`, or `nearest`
    /// (whichever solution is nearest the current position).
    #[arg(long, value_name = "+1|-1|nearest", default_value = "nearest",
          value_parser = parse_branch, allow_hyphen_values = true)]
    pub branch: Branch,
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
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "EV")]
    pub from: f32,
    /// Last nominal energy, eV (included when the steps land on it).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "EV")]
    pub to: f32,
    /// Nominal energy step, eV.
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "EV")]
    pub step: f32,
    /// Gun corrections.
    #[command(flatten)]
    pub corrections: CorrectionArgs,
    /// Sample tilt α, degrees, within ±89.9 (0: normal incidence).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG", default_value_t = 0.0)]
    pub tilt: f32,
    /// Sample azimuth φ, degrees, within ±360: aim two-circle at this azimuth (with the
    /// elevation axis unless the beam stays in the plane). Without it, in-plane aiming: the
    /// azimuth axis turns the beam into the scattering plane.
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG")]
    pub azimuth: Option<f32>,
    /// Branch preference in in-plane mode: `+1` or `-1` holds the track on that branch
    /// over the whole range; `nearest` follows the solution nearest the previous point.
    #[arg(long, value_name = "+1|-1|nearest", default_value = "nearest",
          value_parser = parse_branch, allow_hyphen_values = true)]
    pub branch: Branch,
    /// Dwell at every reachable point, seconds, for the time estimate.
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "S", default_value_t = 0.0)]
    pub dwell: f32,
    /// Inner potential V0, eV (0 to 100), for marking the points nearest the predicted
    /// kinematic I-V maxima, or `face`: the crystal table's value (the default; no marks
    /// when the table has none).
    #[arg(value_parser = crate::calc::ev_or_face, long, value_name = "EV|face")]
    pub inner_potential: Option<crate::calc::EvOrFace>,
    /// Inner-potential model of the I-V marks: `constant` (the one V0 of
    /// --inner-potential) or `energy` (the crystal table's V0(E) for the face, where it
    /// has one).
    #[arg(value_parser = crate::calc::v0_model_kind, long, value_name = "constant|energy", default_value = "constant")]
    pub inner_potential_model: matterwave_core::inner::V0ModelKind,
    /// The rig.
    #[command(flatten)]
    pub rig: RigArgs,
    /// The starting position.
    #[command(flatten)]
    pub position: PositionArgs,
}

/// `--overlayer TEXT [--domains]` of `calc sweep` and `calc view` (as for `calc beams`).
#[derive(Clone, Debug, Default, clap::Args)]
pub struct OverlayerFlags {
    /// A superstructure on the face's mesh (as for `calc beams --overlayer`: Wood
    /// notation or a matrix m11,m12,m21,m22): its beams, fractional-order ones labelled
    /// h,k in substrate units, instead of the substrate's.
    #[arg(long, value_name = "WOOD|MATRIX", allow_hyphen_values = true)]
    pub overlayer: Option<String>,
    /// With --overlayer: the union of its rotational and mirror domains, each beam with
    /// the domains it belongs to.
    #[arg(long, requires = "overlayer")]
    pub domains: bool,
}

/// Arguments of `mwctl calc sweep`.
#[derive(Clone, Debug, clap::Args)]
pub struct SweepArgs {
    /// Crystal id.
    #[arg(long, value_name = "ID")]
    pub crystal: String,
    /// Sample temperature.
    #[command(flatten)]
    pub sample: crate::calc::SampleArgs,
    /// Face (as for `beams`).
    #[arg(long, value_name = "HKL", allow_hyphen_values = true)]
    pub face: String,
    /// Gun settings.
    #[command(flatten)]
    pub gun: GunArgs,
    /// First arm angle, degrees.
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG")]
    pub arm_from: f32,
    /// Last arm angle, degrees.
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG")]
    pub arm_to: f32,
    /// Arm step, degrees.
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG")]
    pub step: f32,
    /// Sample tilt α, degrees, within ±89.9 (0: normal incidence).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG", default_value_t = 0.0)]
    pub tilt: f32,
    /// Sample azimuth φ, degrees, within ±360 (0: a1 along e1, in the scattering plane).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG", default_value_t = 0.0)]
    pub azimuth: f32,
    /// Detector elevation during the sweep, degrees (needs an elevation axis unless 0).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG", default_value_t = 0.0)]
    pub elevation: f32,
    /// Dwell at every reachable point, seconds, for the time estimate.
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "S", default_value_t = 0.0)]
    pub dwell: f32,
    /// Also list every sweep point with its arm setpoint and the beam in view.
    #[arg(long)]
    pub points: bool,
    /// A superstructure's beams instead of the substrate's.
    #[command(flatten)]
    pub overlayer: OverlayerFlags,
    /// The rig.
    #[command(flatten)]
    pub rig: RigArgs,
    /// The starting position (its arm angle is where the sweep starts from).
    #[command(flatten)]
    pub position: PositionArgs,
}

/// Arguments of `mwctl calc view`.
#[derive(Clone, Debug, clap::Args)]
pub struct ViewArgs {
    /// Crystal id.
    #[arg(long, value_name = "ID")]
    pub crystal: String,
    /// Sample temperature.
    #[command(flatten)]
    pub sample: crate::calc::SampleArgs,
    /// Face (as for `beams`).
    #[arg(long, value_name = "HKL", allow_hyphen_values = true)]
    pub face: String,
    /// Gun settings.
    #[command(flatten)]
    pub gun: GunArgs,
    /// Arm angle δ, degrees.
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG")]
    pub arm: f32,
    /// Elevation ν, degrees (needs an elevation axis unless 0).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG", default_value_t = 0.0)]
    pub elevation: f32,
    /// Sample azimuth φ, degrees, within ±360 (0: a1 along e1, in the scattering plane).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG", default_value_t = 0.0)]
    pub azimuth: f32,
    /// Sample tilt α, degrees, within ±89.9 (0: normal incidence).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG", default_value_t = 0.0)]
    pub tilt: f32,
    /// Acceptance half-angle, degrees (above 0, up to 90; default: the rig's detector).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG")]
    pub acceptance: Option<f32>,
    /// A superstructure's beams instead of the substrate's.
    #[command(flatten)]
    pub overlayer: OverlayerFlags,
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
    pub(super) fn name(self) -> &'static str {
        match self {
            FitKind::Peak => "peak",
            FitKind::ArmZero => "arm-zero",
            FitKind::RowSpacing => "row-spacing",
            FitKind::Iv => "iv",
        }
    }

    pub(super) fn columns(self) -> &'static [&'static str] {
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
                                          normal incidence: fits V0 and the spacing d the
                                          orders count (λ inside = 2d/n; with calc
                                          ivpeaks orders, the period along the normal)

See docs/CALIBRATION.md.";

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
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "CURRENT")]
    pub threshold: Option<f32>,
    /// arm-zero: crystal id.
    #[arg(long, value_name = "ID")]
    pub crystal: Option<String>,
    /// arm-zero: sample temperature.
    #[command(flatten)]
    pub sample: crate::calc::SampleArgs,
    /// arm-zero: face.
    #[arg(long, value_name = "HKL", allow_hyphen_values = true)]
    pub face: Option<String>,
    /// arm-zero: the beam measured, H,K.
    #[arg(long, value_name = "H,K", allow_hyphen_values = true)]
    pub beam: Option<String>,
    /// arm-zero: sample tilt α, degrees, within ±89.9 (0: normal incidence).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG", default_value_t = 0.0)]
    pub tilt: f32,
    /// arm-zero: cathode work function, eV (the fitted ΔE is then the offset beyond the
    /// contact-potential correction).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "EV", default_value_t = 0.0)]
    pub cathode_work_function: f32,
    /// arm-zero: sample work function, eV, or `face`: the crystal table's value for the
    /// face.
    #[arg(value_parser = crate::calc::ev_or_face, long, value_name = "EV|face", default_value = "0")]
    pub sample_work_function: crate::calc::EvOrFace,
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
    /// Sample tilt α, degrees, within ±89.9 (0: normal incidence).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG", default_value_t = 0.0)]
    pub tilt: f32,
    /// Sample azimuth φ, degrees, within ±360: aim two-circle at this azimuth (with the
    /// elevation axis unless the beam stays in the plane). Without it, in-plane aiming: the
    /// azimuth axis turns the beam into the scattering plane.
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG")]
    pub azimuth: Option<f32>,
    /// Branch preference in in-plane mode: `+1` (g along +e1), `-1`, or `nearest`
    /// (whichever solution is nearest the current position).
    #[arg(long, value_name = "+1|-1|nearest", default_value = "nearest",
          value_parser = parse_branch, allow_hyphen_values = true)]
    pub branch: Branch,
    /// One standard deviation of the beam energy, eV (default 0.3: a thermionic
    /// cathode's spread is a few tenths of an eV, common practice).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "EV", default_value_t = 0.3)]
    pub energy_spread: f32,
    /// One standard deviation of the arm zero, degrees (e.g. the σ of `fit arm-zero`).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG", default_value_t = 0.02)]
    pub arm_zero_sigma: f32,
    /// The rig.
    #[command(flatten)]
    pub rig: RigArgs,
    /// The current position (selects the solution, as for `aim`).
    #[command(flatten)]
    pub position: PositionArgs,
}

/// A `--branch` value.
fn parse_branch(s: &str) -> Result<Branch, String> {
    Branch::from_word(s).ok_or_else(|| format!("'{s}' is not a branch; accepted: nearest, +1, -1"))
}
