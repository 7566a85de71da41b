//! `mwctl align`: finds the arm zero and the gun's energy offset on a controller from
//! known beams of a reference face, and applies them only when told to.
//!
//! * [`measure`] (`measure.rs`): on the device — the beams (`beams`), their kinematic
//!   I-V maxima (`plan kind=iv`), each aimed (`aim`), found by a coarse arm sweep and
//!   centred by a fine one (move + `read`, the core's `fit::parabola_log`), then the
//!   core's fit over all of them (`fit::arm_zero_in_plane_beams`);
//! * [`apply`] (`apply.rs`): the result onto the device (`set offset=`, the arm's
//!   `home_offset_deg`, its position declared again) and into a copy of a rig file;
//! * [`report`]: the result with 1σ uncertainties and per-beam residuals.
//!
//! It moves the arm, the tilt and the azimuth: the usual cautions hold (`mwctl safety`);
//! the software is not an interlock.

mod apply;
mod measure;

pub use apply::{apply, write_rig_copy, Applied};
pub use measure::measure;

use crate::error::{CliError, CliResult};
use crate::output::{col, List, Report, Value};
use matterwave_core::fit::Fit2;
use std::path::PathBuf;

/// `mwctl align` options (clap).
#[derive(Debug, clap::Args)]
pub struct AlignArgs {
    /// The link (as for talk).
    #[arg(long, value_name = "LINK", default_value = "sim")]
    pub link: String,
    /// Reference crystal, set on the controller first (default: the controller's).
    #[arg(long, value_name = "ID")]
    pub crystal: Option<String>,
    /// Reference face, set on the controller first (default: the controller's).
    #[arg(long, value_name = "HKL", allow_hyphen_values = true)]
    pub face: Option<String>,
    /// Sample tilt, degrees, set on the controller first (default: the controller's).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG", allow_hyphen_values = true)]
    pub tilt: Option<f32>,
    /// Beams to use, e.g. "1,0 1,1" (default: the controller's first beams of distinct
    /// row spacing, the specular beam left out).
    #[arg(long, value_name = "H,K …", allow_hyphen_values = true)]
    pub beams: Option<String>,
    /// Most beams chosen when --beams is not given.
    #[arg(long, value_name = "N", default_value_t = 4)]
    pub max_beams: usize,
    /// Lowest nominal energy whose I-V maxima are used, eV.
    #[arg(value_parser = crate::number::f32_arg, long = "from", value_name = "EV", default_value_t = 40.0)]
    pub from_ev: f32,
    /// Highest nominal energy whose I-V maxima are used, eV.
    #[arg(value_parser = crate::number::f32_arg, long = "to", value_name = "EV", default_value_t = 300.0)]
    pub to_ev: f32,
    /// Most I-V maxima used per beam and branch (evenly spread over the range).
    #[arg(long, value_name = "N", default_value_t = 6)]
    pub per_beam: usize,
    /// Also measure each beam this far and half as far below and above each I-V
    /// maximum, eV (five energies per maximum, still bright; 0: at the maxima only).
    #[arg(value_parser = crate::number::f32_arg, long = "around", value_name = "EV", default_value_t = 6.0)]
    pub around_ev: f32,
    /// Leave out a beam at an energy where its arm angle moves faster than this with the
    /// energy (near its emergence; the controller's `budget` d_arm_d_energy), °/eV.
    #[arg(value_parser = crate::number::f32_arg, long = "max-slope", value_name = "DEG_PER_EV", default_value_t = 0.5)]
    pub max_slope: f32,
    /// Half-width of the coarse arm sweep around where the controller aims, degrees.
    #[arg(value_parser = crate::number::f32_arg, long = "window", value_name = "DEG", default_value_t = 4.0)]
    pub window_deg: f32,
    /// Apply the result without asking (to the controller; with --rig, to --rig-out).
    #[arg(long)]
    pub yes: bool,
    /// The rig file whose arm home offset the result corrects (written to --rig-out;
    /// the file itself is never changed).
    #[arg(long, value_name = "FILE", requires = "rig_out")]
    pub rig: Option<PathBuf>,
    /// Where to write the corrected copy of --rig (must not exist yet).
    #[arg(long, value_name = "FILE", requires = "rig")]
    pub rig_out: Option<PathBuf>,
    /// Draw the alignment into FILE.png or FILE.svg: every centred peak against energy
    /// with its 1σ over the model before and after the fit, and the residuals.
    #[arg(long, value_name = "FILE")]
    pub plot: Option<PathBuf>,
}

/// What [`measure`] does, resolved from [`AlignArgs`].
#[derive(Clone, Debug, PartialEq)]
pub struct AlignOptions {
    /// Crystal to set first.
    pub crystal: Option<String>,
    /// Face to set first.
    pub face: Option<String>,
    /// Tilt to set first, degrees.
    pub tilt_deg: Option<f32>,
    /// The beams, or `None`: chosen from the device's list.
    pub beams: Option<Vec<[i32; 2]>>,
    /// Most beams chosen.
    pub max_beams: usize,
    /// Energy range of the I-V maxima used, nominal eV.
    pub from_ev: f32,
    /// See `from_ev`.
    pub to_ev: f32,
    /// Step of the `plan kind=iv` that lists the maxima, eV (every maximum is listed
    /// whatever the step: a plan point within half a step carries it).
    pub plan_step_ev: f32,
    /// Most maxima per beam and branch.
    pub per_beam: usize,
    /// Energies measured around each maximum: it, and this far and half as far below
    /// and above, eV (0: the maximum only).
    pub around_ev: f32,
    /// Largest |∂arm/∂E| of a point used, degrees per eV.
    pub max_slope_deg_per_ev: f32,
    /// Half-width of the coarse sweep, degrees.
    pub window_deg: f32,
    /// A peak is found when the largest coarse reading is this many times the median.
    pub contrast: f32,
}

impl Default for AlignOptions {
    fn default() -> Self {
        AlignOptions {
            crystal: None,
            face: None,
            tilt_deg: None,
            beams: None,
            max_beams: 4,
            from_ev: 40.0,
            to_ev: 300.0,
            plan_step_ev: 5.0,
            per_beam: 6,
            around_ev: 6.0,
            max_slope_deg_per_ev: 0.5,
            window_deg: 4.0,
            contrast: 3.0,
        }
    }
}

impl AlignArgs {
    /// The options, checked.
    pub fn options(&self) -> CliResult<AlignOptions> {
        let beams = match &self.beams {
            None => None,
            Some(t) => Some(
                t.split_whitespace()
                    .map(crate::calc::parse_rod)
                    .collect::<CliResult<Vec<_>>>()?,
            ),
        };
        if !(self.from_ev.is_finite() && self.to_ev.is_finite() && self.from_ev < self.to_ev) {
            return Err(CliError::new(format!(
                "--from {} --to {}: give an energy range with --from below --to, eV",
                self.from_ev, self.to_ev
            )));
        }
        if !(self.window_deg > 0.0 && self.window_deg <= 30.0) {
            return Err(CliError::new(format!(
                "--window {}: accepted more than 0 up to 30 degrees",
                self.window_deg
            )));
        }
        if !(self.around_ev >= 0.0 && self.around_ev <= 50.0) {
            return Err(CliError::new(format!(
                "--around {}: accepted 0 to 50 eV",
                self.around_ev
            )));
        }
        if !(self.max_slope > 0.0 && self.max_slope.is_finite()) {
            return Err(CliError::new(format!(
                "--max-slope {}: accepted a positive number of degrees per eV",
                self.max_slope
            )));
        }
        if self.max_beams == 0 || self.per_beam == 0 {
            return Err(CliError::new(
                "--max-beams and --per-beam: accepted 1 or more",
            ));
        }
        Ok(AlignOptions {
            crystal: self.crystal.clone(),
            face: self.face.clone(),
            tilt_deg: self.tilt,
            beams,
            max_beams: self.max_beams,
            from_ev: self.from_ev,
            to_ev: self.to_ev,
            per_beam: self.per_beam,
            around_ev: self.around_ev,
            max_slope_deg_per_ev: self.max_slope,
            window_deg: self.window_deg,
            ..AlignOptions::default()
        })
    }
}

/// One centred peak.
#[derive(Clone, Debug, PartialEq)]
pub struct Measured {
    /// The beam's rod.
    pub rod: [i32; 2],
    /// The branch it was aimed on (+1, −1).
    pub branch: i8,
    /// Nominal gun energy, eV.
    pub nominal_ev: f32,
    /// Where the controller aimed the arm, degrees.
    pub aimed_arm_deg: f32,
    /// The centred peak, degrees.
    pub arm_deg: f32,
    /// Its 1σ uncertainty from the peak fit, degrees.
    pub sigma_deg: f32,
    /// Fitted peak reading (the detector's unit).
    pub peak: f32,
    /// Fitted FWHM, degrees.
    pub fwhm_deg: f32,
    /// The tilt axis's angle reached at this point (whole steps), degrees.
    pub tilt_deg: f32,
    /// Measured minus the fitted model, degrees.
    pub residual_deg: f32,
}

/// A beam align looked for and did not use.
#[derive(Clone, Debug, PartialEq)]
pub struct Missed {
    /// The beam's rod.
    pub rod: [i32; 2],
    /// The branch.
    pub branch: i8,
    /// The nominal energy, eV (`None`: no energy was tried).
    pub nominal_ev: Option<f32>,
    /// Why, in words.
    pub why: String,
}

impl Missed {
    /// "beam 1,1 branch +1 at 182.4 eV: why".
    pub fn describe(&self) -> String {
        let at = self
            .nominal_ev
            .map_or(String::new(), |e| format!(" at {e} eV"));
        format!(
            "beam {},{} branch {:+}{at}: {}",
            self.rod[0], self.rod[1], self.branch, self.why
        )
    }
}

/// The result of [`measure`].
#[derive(Clone, Debug, PartialEq)]
pub struct Alignment {
    /// Crystal id.
    pub crystal: String,
    /// Face as the controller prints it.
    pub face: String,
    /// The face the fit used (the core's, from the controller's crystal and face).
    pub surface: matterwave_core::surface::Face,
    /// Tilt reached, degrees (the setting to within a step): the one fitted.
    pub tilt_deg: f32,
    /// Cathode minus sample work function, eV.
    pub contact_ev: f32,
    /// The controller's energy offset before, eV.
    pub offset_ev: f32,
    /// The controller's arm home offset before, degrees.
    pub home_offset_deg: f32,
    /// The fit: params = [arm zero δ0 (deg), energy offset ΔE (eV)] with σ.
    pub fit: Fit2,
    /// The peaks used.
    pub measured: Vec<Measured>,
    /// The beams not used, and why.
    pub missed: Vec<Missed>,
}

impl Alignment {
    /// The arm zero δ0, degrees: the controller's arm angle minus the true one.
    pub fn arm_zero_deg(&self) -> f32 {
        self.fit.params[0]
    }
    /// The gun's energy offset ΔE, eV: the energy at the sample is nominal + contact +
    /// ΔE (what `set offset=` takes).
    pub fn energy_offset_ev(&self) -> f32 {
        self.fit.params[1]
    }
    /// The arm home offset that makes the controller's arm angle the true one, degrees.
    pub fn new_home_offset_deg(&self) -> f32 {
        self.home_offset_deg - self.arm_zero_deg()
    }
}

/// The report: the fit with 1σ uncertainties, what would change, and one row per
/// centred peak with its residual; `plot` is the picture drawn of it, if one was.
pub fn report(a: &Alignment, applied: Option<&Applied>, plot: Option<&std::path::Path>) -> Report {
    let mut r = Report::default();
    let f32v = |x: f32, d: usize| Value::F32(x, d);
    r.field("crystal", "crystal", Value::Text(a.crystal.clone()));
    r.field("face", "face", Value::Text(a.face.clone()));
    r.field("tilt_deg", "tilt reached (deg)", f32v(a.tilt_deg, 5));
    r.field(
        "contact_potential_ev",
        "contact potential (eV)",
        f32v(a.contact_ev, 3),
    );
    r.field("arm_zero_deg", "arm zero (deg)", f32v(a.arm_zero_deg(), 4));
    r.field(
        "arm_zero_sigma_deg",
        "arm zero 1σ (deg)",
        f32v(a.fit.sigma[0], 4),
    );
    r.field(
        "energy_offset_ev",
        "energy offset (eV)",
        f32v(a.energy_offset_ev(), 3),
    );
    r.field(
        "energy_offset_sigma_ev",
        "energy offset 1σ (eV)",
        f32v(a.fit.sigma[1], 3),
    );
    r.field(
        "rms_residual_deg",
        "rms residual (deg)",
        f32v(a.fit.rms_residual, 4),
    );
    r.field("points", "peaks used", Value::Int(i64::from(a.fit.points)));
    r.field(
        "offset_ev_before",
        "controller offset before (eV)",
        f32v(a.offset_ev, 3),
    );
    r.field(
        "home_offset_deg_before",
        "arm home offset before (deg)",
        f32v(a.home_offset_deg, 4),
    );
    r.field(
        "home_offset_deg_after",
        "arm home offset after (deg)",
        f32v(a.new_home_offset_deg(), 4),
    );
    r.field(
        "applied",
        "applied to the controller",
        Value::Bool(applied.is_some_and(|x| x.device)),
    );
    r.field(
        "rig_out",
        "corrected rig copy",
        applied
            .and_then(|x| x.rig_out.as_ref())
            .map_or(Value::Missing, |p| Value::Text(p.display().to_string())),
    );
    r.field(
        "missed",
        "beams not used",
        Value::List(a.missed.iter().map(|m| Value::Text(m.describe())).collect()),
    );
    r.field(
        "plot",
        "picture",
        plot.map_or(Value::Missing, |p| Value::Text(p.display().to_string())),
    );
    r.list = Some(List {
        key: "peaks",
        columns: vec![
            col("h", "h"),
            col("k", "k"),
            col("branch", "branch"),
            col("nominal_ev", "E nominal (eV)"),
            col("aimed_arm_deg", "aimed arm (deg)"),
            col("arm_deg", "centred arm (deg)"),
            col("sigma_deg", "1σ (deg)"),
            col("peak_current", "peak"),
            col("fwhm_deg", "FWHM (deg)"),
            col("residual_deg", "residual (deg)"),
        ],
        rows: a
            .measured
            .iter()
            .map(|m| {
                vec![
                    Value::Int(i64::from(m.rod[0])),
                    Value::Int(i64::from(m.rod[1])),
                    Value::Int(i64::from(m.branch)),
                    f32v(m.nominal_ev, 3),
                    f32v(m.aimed_arm_deg, 4),
                    f32v(m.arm_deg, 4),
                    f32v(m.sigma_deg, 4),
                    f32v(m.peak, 2),
                    f32v(m.fwhm_deg, 3),
                    f32v(m.residual_deg, 4),
                ]
            })
            .collect(),
    });
    if applied.is_none_or(|x| !x.device) {
        r.notes
            .push("not applied: run again with --yes (or answer y at the prompt) to apply".into());
    }
    r
}

/// Asks on the terminal whether to apply; `false` unless the answer starts with y.
fn confirm(a: &Alignment, rig_out: Option<&std::path::Path>) -> bool {
    use std::io::{BufRead, Write};
    let mut err = std::io::stderr();
    let _ = write!(
        err,
        "Apply to the controller: set offset={} and arm home_offset_deg={} (arm zero {:+.4}° ± {:.4}°, energy offset {:+.3} ± {:.3} eV){}? [y/N] ",
        a.energy_offset_ev(),
        a.new_home_offset_deg(),
        a.arm_zero_deg(),
        a.fit.sigma[0],
        a.energy_offset_ev(),
        a.fit.sigma[1],
        rig_out.map_or(String::new(), |p| format!(", and write {}", p.display()))
    );
    let _ = err.flush();
    let mut line = String::new();
    let _ = std::io::stdin().lock().read_line(&mut line);
    line.trim_start().starts_with(['y', 'Y'])
}

/// `mwctl align`: measure, report, and apply on `--yes` or a yes at the prompt (a
/// terminal); without either, nothing changes.
pub fn run(args: &AlignArgs) -> CliResult<Report> {
    use std::io::IsTerminal;
    let o = args.options()?;
    // Checked before anything moves.
    let plot = args
        .plot
        .as_deref()
        .map(crate::plot::plot_target)
        .transpose()?;
    if let (Some(i), Some(out)) = (&args.rig, &args.rig_out) {
        // Checked before anything moves.
        apply::check_rig_paths(i, out)?;
    }
    let spec = crate::link::LinkSpec::parse(&args.link, None)?;
    eprintln!(
        "mwctl: align moves the arm, the tilt and the azimuth of the controller on {} (the software is not an interlock: mwctl safety)",
        args.link
    );
    let mut s = crate::link::connect(&spec)?;
    {
        // Ctrl-C: `stop` at once (also in the middle of a request), then the
        // measurement ends cleanly between requests.
        let flag = s.stop_flag.clone();
        let _ = ctrlc::set_handler(move || {
            flag.store(true, std::sync::atomic::Ordering::SeqCst);
            measure::INTERRUPTED.store(true, std::sync::atomic::Ordering::SeqCst);
        });
    }
    let a = measure(&mut s, &o)?;
    let go = args.yes
        || (std::io::stdin().is_terminal()
            && std::io::stderr().is_terminal()
            && confirm(&a, args.rig_out.as_deref()));
    let applied = if go {
        Some(apply(
            &mut s,
            &a,
            args.rig.as_deref().zip(args.rig_out.as_deref()),
        )?)
    } else {
        None
    };
    // The result stands (and may be applied) whatever becomes of the picture.
    let mut unwritten = None;
    let drawn = plot.as_ref().and_then(|t| {
        match crate::plot::AlignPlot::compute(&a).and_then(|p| crate::plot::write_align(&p, t)) {
            Ok(_) => Some(t.path.as_path()),
            Err(e) => {
                unwritten = Some(format!("the picture was not written: {e}"));
                None
            }
        }
    });
    let mut r = report(&a, applied.as_ref(), drawn);
    r.notes.extend(unwritten);
    if let Some(i) = &args.rig {
        if let Ok(rf) = crate::rig::load(i) {
            let file = rf.rig.arm.home_offset_deg;
            if file.to_bits() != a.home_offset_deg.to_bits() {
                r.notes.push(format!(
                    "the rig file's arm home offset ({file}°) is not the controller's ({}°): the copy gets the file's less δ0, {}°",
                    a.home_offset_deg,
                    file - a.arm_zero_deg()
                ));
            }
        }
    }
    Ok(r)
}
