//! `mwctl scan`: runs a plan on the controller — track (follow a beam over energy),
//! `iv` (the same, I-V maxima marked), `sweep` (the arm over angles) — point by point:
//! set the energy, move, wait for arrival and the dwell, read the detector, write the
//! row. The points, angles and step counts are the controller's own (`plan`, `aim`,
//! `pos`); the host computes none of them.
//!
//! The options are resolved once into a [`Config`]; the file (docs/SCAN.md, [`csv`])
//! records them with the controller's configuration, and every row is flushed as it is
//! measured, so an interrupted scan loses nothing and `--resume` continues it.

pub mod csv;
mod prepare;
pub mod progress;
mod run;

use crate::error::{CliError, CliResult};
use crate::link::LinkSpec;
use std::path::PathBuf;

pub use run::{run, run_on, Summary};

/// `mwctl scan` options.
#[derive(Clone, Debug, clap::Args)]
pub struct ScanArgs {
    /// The plan: track (a beam followed over energy), iv (track, I-V maxima marked) or
    /// sweep (the arm over angles at the current energy).
    #[arg(long, value_name = "KIND")]
    pub kind: Option<String>,
    /// First point: nominal energy, eV (track, iv) or arm angle, deg (sweep).
    #[arg(long, value_name = "VALUE", allow_hyphen_values = true)]
    pub from: Option<f64>,
    /// Last point (same unit as --from).
    #[arg(long, value_name = "VALUE", allow_hyphen_values = true)]
    pub to: Option<f64>,
    /// Spacing of the points (same unit as --from).
    #[arg(long, value_name = "VALUE")]
    pub step: Option<f64>,
    /// Seconds to wait at each point after the axes arrived, before the reading.
    #[arg(long, value_name = "SECONDS", default_value_t = 0.0)]
    pub dwell: f64,
    /// Branch of the track: nearest, +1 or -1 (default: the controller's setting).
    #[arg(long, value_name = "BRANCH", allow_hyphen_values = true)]
    pub branch: Option<String>,
    /// The beam to follow, rod H,K (default: the controller's `beam` setting).
    #[arg(long, value_name = "H,K", allow_hyphen_values = true)]
    pub beam: Option<String>,
    /// A controller setting for the scan, KEY=VALUE as the console's `set` takes it
    /// (crystal=pt, face=111, tilt=8, cathode=2.7 …); repeat for several.
    #[arg(long = "set", value_name = "KEY=VALUE")]
    pub sets: Vec<String>,
    /// Load this rig file into the controller first, as talk --rig does.
    #[arg(long, value_name = "FILE")]
    pub rig: Option<PathBuf>,
    /// Declare every axis whose position the controller does not know (after loading a
    /// rig, or a restart) to stand at its home, step 0 — only when it truly does.
    #[arg(long)]
    pub declare_home: bool,
    /// The link (as for talk).
    #[arg(long, value_name = "LINK", default_value = "sim")]
    pub link: String,
    /// With --link pty: send no faster than a UART at this baud rate (8N1).
    #[arg(long, value_name = "BAUD")]
    pub baud: Option<u32>,
    /// The CSV file to write (refused when it exists, unless --force or --resume).
    #[arg(long, value_name = "FILE")]
    pub out: Option<PathBuf>,
    /// Overwrite --out if it exists.
    #[arg(long)]
    pub force: bool,
    /// Continue the interrupted scan in FILE: the same plan and settings (else refused,
    /// naming the one that differs), from the point after its last complete row.
    #[arg(long, value_name = "FILE", conflicts_with_all = ["out", "force"])]
    pub resume: Option<PathBuf>,
    /// Show the progress bar on stderr even when it is not a terminal.
    #[arg(long)]
    pub progress: bool,
    /// After the scan (complete or stopped early), draw its picture into FILE.png or
    /// FILE.svg: what was measured, with the predictions, as `mwctl plot scan` draws it.
    #[arg(long, value_name = "FILE")]
    pub plot: Option<PathBuf>,
}

/// The scan's settings, resolved once from the options.
#[derive(Clone, Debug)]
pub struct Config {
    /// The `--link` text and its parsed form.
    pub link_text: String,
    /// The parsed link.
    pub link: LinkSpec,
    /// `track`, `iv` or `sweep` (checked by the controller's `plan`).
    pub kind: String,
    /// Plan range and spacing, as given.
    pub from: f64,
    /// Last point.
    pub to: f64,
    /// Spacing.
    pub step: f64,
    /// Dwell at each point, s.
    pub dwell_s: f64,
    /// `branch=` for the plan and `aim`, when given.
    pub branch: Option<String>,
    /// `beam=` to set, when given.
    pub beam: Option<String>,
    /// `set` arguments, in order.
    pub sets: Vec<String>,
    /// The rig file, when given: its path and its console requests.
    pub rig: Option<(String, Vec<String>)>,
    /// `--declare-home`.
    pub declare_home: bool,
    /// The file.
    pub out: PathBuf,
    /// Continue `out` instead of creating it.
    pub resume: bool,
    /// Overwrite `out`.
    pub force: bool,
    /// Draw the progress bar.
    pub progress: bool,
    /// `--format json`.
    pub json: bool,
    /// `--plot`: the picture to draw after the scan.
    pub plot: Option<crate::plot::Target>,
}

/// The options a resumed scan must share with the file, as header keys: the plan, its
/// settings and the rig's requests (one place: [`Config::plan_header`] writes them, the
/// resume check compares them).
pub const PLAN_KEYS: [&str; 9] = [
    "kind", "from", "to", "step", "dwell_s", "branch", "beam", "set", "rig_line",
];

fn need<T>(v: Option<T>, what: &str, resume: bool) -> CliResult<T> {
    v.ok_or_else(|| {
        CliError::new(if resume {
            format!("scan --resume: give --{what} as in the interrupted scan (its header lists the options: kind, from, to, step …)")
        } else {
            format!("scan: --{what} is required; e.g. mwctl scan --kind track --from 40 --to 200 --step 2 --out scan.csv")
        })
    })
}

impl Config {
    /// Resolves the options; a missing or contradictory one is an error naming it.
    pub fn resolve(a: &ScanArgs, json: bool) -> CliResult<Config> {
        let resume = a.resume.is_some();
        let out =
            match (&a.resume, &a.out) {
                (Some(r), _) => r.clone(),
                (None, Some(o)) => o.clone(),
                (None, None) => return Err(CliError::new(
                    "scan: give --out FILE (the CSV to write), or --resume FILE to continue one",
                )),
            };
        let num = |v: f64, what: &str| -> CliResult<f64> {
            if v.is_finite() {
                Ok(v)
            } else {
                Err(CliError::new(format!(
                    "scan --{what} {v}: give a finite number"
                )))
            }
        };
        if !(0.0..=3600.0).contains(&a.dwell) {
            return Err(CliError::new(format!(
                "scan --dwell {}: accepted 0 to 3600 s",
                a.dwell
            )));
        }
        for s in &a.sets {
            if !s.contains('=') || s.contains(char::is_whitespace) {
                return Err(CliError::new(format!(
                    "scan --set {s:?}: give one KEY=VALUE without spaces (the keys of the console's set: send help set, or see docs/PROTOCOL.md)"
                )));
            }
        }
        // Checked here, before the controller is asked anything.
        let plot = a
            .plot
            .as_deref()
            .map(crate::plot::plot_target)
            .transpose()?;
        let rig = match &a.rig {
            Some(p) => {
                let rf = crate::rig::load(p)?;
                Some((p.display().to_string(), crate::rig::console_requests(&rf)))
            }
            None => None,
        };
        Ok(Config {
            link_text: a.link.clone(),
            link: LinkSpec::parse(&a.link, a.baud)?,
            kind: need(a.kind.clone(), "kind", resume)?,
            from: num(need(a.from, "from", resume)?, "from")?,
            to: num(need(a.to, "to", resume)?, "to")?,
            step: num(need(a.step, "step", resume)?, "step")?,
            dwell_s: a.dwell,
            branch: a.branch.clone(),
            beam: a.beam.clone(),
            sets: a.sets.clone(),
            rig,
            declare_home: a.declare_home,
            out,
            resume,
            force: a.force,
            progress: a.progress,
            json,
            plot,
        })
    }

    /// The `plan` request.
    pub fn plan_request(&self) -> String {
        let mut r = format!(
            "plan kind={} from={} to={} step={} dwell={}",
            self.kind, self.from, self.to, self.step, self.dwell_s
        );
        if let Some(b) = &self.branch {
            r.push_str(&format!(" branch={b}"));
        }
        r
    }

    /// The header lines of [`PLAN_KEYS`], in that order.
    pub fn plan_header(&self) -> Vec<(String, String)> {
        let mut h: Vec<(String, String)> = vec![
            ("kind".into(), self.kind.clone()),
            ("from".into(), self.from.to_string()),
            ("to".into(), self.to.to_string()),
            ("step".into(), self.step.to_string()),
            ("dwell_s".into(), self.dwell_s.to_string()),
            ("branch".into(), self.branch.clone().unwrap_or_default()),
            ("beam".into(), self.beam.clone().unwrap_or_default()),
        ];
        h.extend(self.sets.iter().map(|s| ("set".to_string(), s.clone())));
        if let Some((_, lines)) = &self.rig {
            h.extend(lines.iter().map(|l| ("rig_line".to_string(), l.clone())));
        }
        h
    }

    /// The command that continues this scan.
    pub fn resume_command(&self) -> String {
        let mut c = format!(
            "mwctl scan --resume {} --link {} --kind {} --from {} --to {} --step {}",
            self.out.display(),
            self.link_text,
            self.kind,
            self.from,
            self.to,
            self.step
        );
        if self.dwell_s != 0.0 {
            c.push_str(&format!(" --dwell {}", self.dwell_s));
        }
        if let Some(b) = &self.branch {
            c.push_str(&format!(" --branch {b}"));
        }
        if let Some(b) = &self.beam {
            c.push_str(&format!(" --beam {b}"));
        }
        for s in &self.sets {
            c.push_str(&format!(" --set {s}"));
        }
        if let Some((p, _)) = &self.rig {
            c.push_str(&format!(" --rig {p}"));
        }
        if let Some(t) = &self.plot {
            c.push_str(&format!(" --plot {}", t.path.display()));
        }
        c
    }
}

/// The first difference between the plan keys of a file's header and this run's, as
/// a message naming the setting; `None` when they agree.
pub fn plan_difference(file: &csv::ScanFile, cfg: &Config) -> Option<String> {
    let now = cfg.plan_header();
    for key in PLAN_KEYS {
        let had = file.all(key);
        let has: Vec<&str> = now
            .iter()
            .filter(|(k, _)| k == key)
            .map(|(_, v)| v.as_str())
            .collect();
        if had != has {
            let show = |v: &[&str]| {
                if v.is_empty() || v == [""] {
                    "nothing".to_string()
                } else {
                    format!("{:?}", v.join(" "))
                }
            };
            let opt = match key {
                "dwell_s" => "--dwell",
                "set" => "--set",
                "rig_line" => "--rig (the rig's requests)",
                other => return Some(format!(
                    "the setting `{other}` differs: the file has {}, this run has {}; give --{other} as in the interrupted scan (its header lists it)",
                    show(&had),
                    show(&has)
                )),
            };
            return Some(format!(
                "the setting `{key}` differs: the file has {}, this run has {}; give {opt} as in the interrupted scan (its header lists it)",
                show(&had),
                show(&has)
            ));
        }
    }
    None
}
