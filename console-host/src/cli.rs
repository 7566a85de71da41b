//! Command-line definitions (clap) and dispatch. Each command gives a report, text or a
//! [`CliError`]; [`run`] writes the output as it goes and `main` sets the exit status.

use crate::calc::{self, GunArgs, IvArgs};
use crate::error::{CliError, CliResult};
use crate::gonio::{self, AimArgs, BudgetArgs, FitArgs, RigArgs, SweepArgs, TrackArgs, ViewArgs};
use crate::output::{Format, Report};
use crate::rig;
use clap::{Parser, Subcommand};
use std::path::PathBuf;

/// Cautions shown by `mwctl safety`, in `--help` and in the README.
pub const CAUTIONS: &str = "\
CAUTION — electron guns run at high voltage; fast electrons striking matter make X-rays;
vacuum systems implode and motorised arms pinch and crush. Follow your local codes, your
laboratory's safety rules and licensed practice for high voltage, radiation and vacuum.
This software is not an interlock: it never replaces hardware interlocks, shielding,
radiation surveys or a trained operator.";

/// mwctl — bench console and offline calculator for electron-diffraction goniometers.
#[derive(Debug, Parser)]
#[command(name = "mwctl", version, about, after_help = CAUTIONS)]
pub struct Cli {
    /// Output format.
    #[arg(long, global = true, value_enum, default_value_t = Format::Table)]
    pub format: Format,
    /// Seed of the simulated controller's detector noise (links `sim` and `pty`, `mwctl
    /// serve --pty`; default 1). Real controllers and the QEMU image ignore it.
    #[arg(long, global = true, value_name = "N", help_heading = "Simulator")]
    pub sim_seed: Option<u32>,
    /// Calibration errors the simulated instrument hides from its console (links `sim`
    /// and `pty`, `mwctl serve --pty`): arm_zero=DEG (±360), energy=EV (±1e6),
    /// tilt=DEG (±90), comma-separated, any subset (absent ones 0). No console request
    /// reads or sets them (docs/SIMULATOR.md); `mwctl align` finds the arm zero and
    /// energy offset. Real controllers and the QEMU image ignore it.
    #[arg(
        long,
        global = true,
        value_name = "arm_zero=DEG,energy=EV,tilt=DEG",
        help_heading = "Simulator"
    )]
    pub sim_hidden: Option<String>,
    /// What to do.
    #[command(subcommand)]
    pub command: Command,
}

/// Top-level commands.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// List the crystal table (ids, structures, lattice constants, typical V0 and φ);
    /// with --crystal, that crystal's faces with their own V0 and φ and the sources.
    Crystals {
        /// One crystal: its faces, each with its work function and inner potential.
        #[arg(long, value_name = "ID")]
        crystal: Option<String>,
    },
    /// Offline calculations with the controller's own f32 code.
    #[command(subcommand)]
    Calc(Calc),
    /// A day at the bench in an invented scenario (Ag(100) at 95 eV on the simulated
    /// bench B): beams and I-V maxima, the rig loaded, an alignment that finds the
    /// simulator's hidden arm zero and energy offset, a tracking scan to CSV, and the
    /// pictures, all written into a folder.
    Demo {
        /// The folder for the files (made if missing; the demo's files in it are
        /// replaced). Default: a new folder matterwave-demo-N in the current directory.
        #[arg(long, value_name = "DIR")]
        out: Option<PathBuf>,
    },
    /// The goniometer's rig: axes, limits, forbidden zones, detector (docs/RIG.md).
    #[command(subcommand)]
    Rig(RigCmd),
    /// Pictures (PNG or SVG): the beam pattern on a screen, the beam tracks against
    /// energy with the arm's limits and zones, scan data with predicted positions.
    #[command(subcommand)]
    Plot(crate::plot::PlotCmd),
    /// Print the safety cautions.
    Safety,
    /// Talk to a controller console: requests from stdin, replies to stdout.
    Talk {
        /// The link: `sim` (in-process simulator), `pty` (the simulator behind a
        /// pseudo-terminal), `serial:PATH[@BAUD]`, `qemu[:IMAGE]`.
        #[arg(long, value_name = "LINK", default_value = "sim")]
        link: String,
        /// Load this rig file into the controller first, with the console's own `axis`,
        /// `zone` and `set acceptance=` requests (the lines `mwctl rig show --console`
        /// prints). Default: the controller's factory rig.
        #[arg(long, value_name = "FILE")]
        rig: Option<PathBuf>,
    },
    /// Run a file of requests (one per line, `#` comments) on a controller, every reply
    /// echoed with its request; stops at the first err unless --keep-going.
    Run {
        /// The script.
        script: std::path::PathBuf,
        /// The link (as for talk).
        #[arg(long, value_name = "LINK", default_value = "sim")]
        link: String,
        /// Go on after a request answered err (the exit status is still 2).
        #[arg(long)]
        keep_going: bool,
        /// With --link pty: send no faster than a UART at this baud rate (8N1).
        #[arg(long, value_name = "BAUD")]
        baud: Option<u32>,
    },
    /// Find the arm zero and the gun's energy offset from known beams of a reference
    /// face on a controller (moves the arm, tilt and azimuth), show them with 1σ and
    /// per-beam residuals, and apply them only on confirmation or --yes.
    #[command(allow_negative_numbers = true, after_help = CAUTIONS)]
    Align(Box<crate::align::AlignArgs>),
    /// Check a controller's math: a sweep of beams and aims over the link, every reply
    /// compared with the host's own core (identical lines) and with the f64 oracle.
    Verify {
        /// The link (as for talk).
        #[arg(long, value_name = "LINK", default_value = "sim")]
        link: String,
        /// A short sweep (one face per crystal, four energies).
        #[arg(long)]
        quick: bool,
        /// Write the report as JSON to this file.
        #[arg(long, value_name = "FILE")]
        report: Option<std::path::PathBuf>,
        /// With --link pty: send no faster than a UART at this baud rate (8N1).
        #[arg(long, value_name = "BAUD")]
        baud: Option<u32>,
    },
    /// Run a plan on a controller — track, iv or sweep: per point set the energy, move,
    /// wait, read the detector — writing every point to a CSV file as it is measured;
    /// Ctrl-C stops the axes and keeps the file, --resume continues it (docs/SCAN.md).
    Scan(Box<crate::scan::ScanArgs>),
    /// Save a controller's whole configuration (settings, axes, zones) to a file.
    Backup {
        /// The file to write.
        file: std::path::PathBuf,
        /// The link (as for talk).
        #[arg(long, value_name = "LINK", default_value = "sim")]
        link: String,
    },
    /// Put a configuration saved by backup onto a controller: all or nothing, read back
    /// and compared.
    Restore {
        /// The backup file.
        file: std::path::PathBuf,
        /// The link (as for talk).
        #[arg(long, value_name = "LINK", default_value = "sim")]
        link: String,
    },
    /// Serve the simulated controller on a pseudo-terminal for any serial client: prints
    /// the device path on its first line, then serves until interrupted or --for.
    Serve {
        /// Serve on a pseudo-terminal (the one kind of port served now).
        #[arg(long, required = true)]
        pty: bool,
        /// Stop after this many seconds.
        #[arg(long = "for", value_name = "SECONDS")]
        for_s: Option<f64>,
        /// Reply no faster than a UART at this baud rate (8N1).
        #[arg(long, value_name = "BAUD")]
        baud: Option<u32>,
        /// Inject a fault one time in N, at random from a fixed seed: flip:N (a bit of
        /// a reply byte), drop:N (a reply line), garbage:N (a line of garbage before a
        /// reply line), silent:N (a request missed); reset:N restarts the controller
        /// after N requests. Repeat for several.
        #[arg(long = "fault", value_name = "KIND:N")]
        faults: Vec<String>,
    },
    /// Print a shell completion script for mwctl (README: Shell completions and man page).
    Completions {
        /// The shell: bash, zsh, fish, elvish or powershell.
        #[arg(value_enum, value_name = "SHELL")]
        shell: clap_complete::Shell,
    },
    /// Print mwctl's man page (roff) to stdout; with --dir, one page per command into a
    /// folder.
    Man {
        /// Write mwctl.1 and one page per command and subcommand into this folder
        /// (created if missing), and print the files' paths.
        #[arg(long, value_name = "DIR")]
        dir: Option<PathBuf>,
    },
}

/// `mwctl rig …`
#[derive(Debug, Subcommand)]
pub enum RigCmd {
    /// Print the effective rig: the built-in one, or the one in --rig FILE.
    Show {
        /// The rig.
        #[command(flatten)]
        rig: RigArgs,
        /// Print it as a rig file (TOML) that `rig check` and `--rig` read back.
        #[arg(long, conflicts_with = "console")]
        toml: bool,
        /// Print it as the console requests that load it into a controller (`axis`,
        /// `zone`, `set acceptance=`: the rig's lines of the console's `dump`), one per
        /// line, for `mwctl talk` or a serial terminal.
        #[arg(long)]
        console: bool,
    },
    /// Check a rig file: every field, then the controller's own validation.
    Check {
        /// The rig file (TOML; see docs/RIG.md).
        #[arg(long, value_name = "FILE")]
        rig: PathBuf,
    },
}

/// `mwctl calc …`
#[derive(Debug, Subcommand)]
pub enum Calc {
    /// Wavelength, momentum and speed for a beam energy, with contact-potential
    /// correction, and the wavelength inside a crystal; or, with --wavelength, the
    /// energy (nominal and at the sample) that gives a wavelength.
    #[command(allow_negative_numbers = true)]
    Wavelength {
        /// Gun settings, from the nominal energy or from the wavelength wanted.
        #[command(flatten)]
        gun: calc::WavelengthGunArgs,
        /// Inner potential V0, eV (0 to 100), for the wavelength inside the crystal.
        #[arg(value_parser = calc::ev_or_face, long, value_name = "EV")]
        inner_potential: Option<calc::EvOrFace>,
    },
    /// Bulk reflection families in order of decreasing d, with Bragg angles.
    #[command(allow_negative_numbers = true)]
    Reflections {
        /// Crystal id (see `mwctl crystals`).
        #[arg(long, value_name = "ID")]
        crystal: String,
        /// Sample temperature.
        #[command(flatten)]
        sample: calc::SampleArgs,
        /// Gun settings.
        #[command(flatten)]
        gun: GunArgs,
        /// Most families to list, 1 to 10000.
        #[arg(value_parser = crate::number::max_arg, long, value_name = "N", default_value_t = 20)]
        max: usize,
    },
    /// Transmission rings on a flat screen at a distance.
    #[command(allow_negative_numbers = true)]
    Rings {
        /// Crystal id.
        #[arg(long, value_name = "ID")]
        crystal: String,
        /// Sample temperature.
        #[command(flatten)]
        sample: calc::SampleArgs,
        /// Gun settings.
        #[command(flatten)]
        gun: GunArgs,
        /// Sample-to-screen distance, mm.
        #[arg(value_parser = crate::number::f32_arg, long, value_name = "MM")]
        screen_distance: f32,
        /// Most rings to list, 1 to 10000.
        #[arg(value_parser = crate::number::max_arg, long, value_name = "N", default_value_t = 20)]
        max: usize,
    },
    /// Diffracted beams of a face at an energy: row spacings, exit angles, emergence
    /// energies.
    #[command(allow_negative_numbers = true)]
    Beams {
        /// Crystal id.
        #[arg(long, value_name = "ID")]
        crystal: String,
        /// Sample temperature.
        #[command(flatten)]
        sample: calc::SampleArgs,
        /// Face: 111, 1-10, 1,1,0, (1 -1 0); hexagonal also 0001, 10-10.
        #[arg(long, value_name = "HKL", allow_hyphen_values = true)]
        face: String,
        /// Gun settings.
        #[command(flatten)]
        gun: GunArgs,
        /// Sample tilt α, degrees, within ±89.9 (0: normal incidence).
        #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG", default_value_t = 0.0)]
        tilt: f32,
        /// Sample azimuth φ, degrees, within ±360 (0: a1 along e1, in the scattering plane).
        #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG", default_value_t = 0.0)]
        azimuth: f32,
        /// Most beams to list (smallest |g| first), 1 to 10000.
        #[arg(value_parser = crate::number::max_arg, long, value_name = "N", default_value_t = 500)]
        max: usize,
        /// With a rig file: say for each beam whether the arm can be put on it from home
        /// (in-plane, turning the azimuth, on a one-circle arm; at this azimuth with the
        /// elevation axis on a two-circle arm) and, when not, what refuses it.
        #[arg(long, value_name = "FILE")]
        rig: Option<PathBuf>,
        /// Only the beams the rig can reach (needs --rig).
        #[arg(long, requires = "rig")]
        reachable: bool,
        /// A superstructure on the face's mesh: Wood notation (p(2x2), c(2x2),
        /// (sqrt3xsqrt3)R30, also with √ and ×) or a matrix m11,m12,m21,m22 whose rows are
        /// its mesh vectors in substrate units (2,0,0,2; fractions such as 3/2 allowed):
        /// lists its beams, fractional-order ones labelled h,k in substrate units.
        #[arg(
            long,
            value_name = "WOOD|MATRIX",
            allow_hyphen_values = true,
            conflicts_with = "rig"
        )]
        overlayer: Option<String>,
        /// With --overlayer: the union of the rotational and mirror domains from the
        /// mesh's point group, each beam with the domains it belongs to.
        #[arg(long, requires = "overlayer")]
        domains: bool,
    },
    /// Kinematic I-V peak energies on one beam, with refraction by the inner potential.
    #[command(allow_negative_numbers = true)]
    Ivpeaks {
        /// Crystal id.
        #[arg(long, value_name = "ID")]
        crystal: String,
        /// Sample temperature.
        #[command(flatten)]
        sample: calc::SampleArgs,
        /// Face (as for `beams`).
        #[arg(long, value_name = "HKL", allow_hyphen_values = true)]
        face: String,
        /// Beam (rod) indices H,K, e.g. 0,0 or -1,1.
        #[arg(long, value_name = "H,K", allow_hyphen_values = true)]
        beam: String,
        /// Start of the nominal energy range, eV.
        #[arg(value_parser = crate::number::f32_arg, long, value_name = "EV")]
        from: f32,
        /// End of the nominal energy range, eV.
        #[arg(value_parser = crate::number::f32_arg, long, value_name = "EV")]
        to: f32,
        /// Sample tilt α, degrees, within ±89.9 (0: normal incidence).
        #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG", default_value_t = 0.0)]
        tilt: f32,
        /// Sample azimuth φ, degrees, within ±360 (0: a1 along e1, in the scattering plane).
        #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG", default_value_t = 0.0)]
        azimuth: f32,
        /// Inner potential V0, eV (0 to 100), or `face`: the crystal table's value for the
        /// face (the default).
        #[arg(value_parser = calc::ev_or_face, long, value_name = "EV|face")]
        inner_potential: Option<calc::EvOrFace>,
        /// Inner-potential model: `constant` (the one V0 of --inner-potential) or
        /// `energy` (the crystal table's V0(E) for the face, where it has one).
        #[arg(value_parser = calc::v0_model_kind, long, value_name = "constant|energy", default_value = "constant")]
        inner_potential_model: matterwave_core::inner::V0ModelKind,
        /// Cathode work function, eV.
        #[arg(value_parser = crate::number::f32_arg, long, value_name = "EV", default_value_t = 0.0)]
        cathode_work_function: f32,
        /// Sample work function, eV (subtracts from the energy at the sample; 0 = none), or
        /// `face`: the crystal table's value for the face.
        #[arg(value_parser = calc::ev_or_face, long, value_name = "EV|face", default_value = "0")]
        sample_work_function: calc::EvOrFace,
        /// Gun energy offset, eV.
        #[arg(value_parser = crate::number::f32_arg, long, value_name = "EV", default_value_t = 0.0)]
        energy_offset: f32,
        /// Top-layer relaxation Δd12, percent of the bulk interlayer spacing d12
        /// (negative = contraction), within ±50: the kinematic maxima move (see the
        /// notes of the output).
        #[arg(value_parser = crate::number::f32_arg, long, value_name = "PCT", default_value_t = 0.0)]
        relax_d12: f32,
        /// Relaxation Δd23 of the second spacing, percent, within ±50.
        #[arg(value_parser = crate::number::f32_arg, long, value_name = "PCT", default_value_t = 0.0)]
        relax_d23: f32,
        /// Most peaks to list, 1 to 10000.
        #[arg(value_parser = crate::number::max_arg, long, value_name = "N", default_value_t = 100)]
        max: usize,
    },
    /// A stepped (vicinal) face: how a beam splits at an energy, where its sub-beams
    /// go (exit and arm angles), and the specular beam's in-phase and out-of-phase
    /// energies.
    #[command(allow_negative_numbers = true)]
    Steps(calc::steps::StepsArgs),
    /// Where every beam lands on a hemispherical screen or a flat detector (x, y in mm),
    /// which the gun's shadow hides; with --spot, the beam nearest a measured spot.
    #[command(allow_negative_numbers = true)]
    Screen(crate::screen::ScreenArgs),
    /// Point the arm (and turn the sample) at a beam: setpoints of every axis, nearest
    /// the current position first.
    #[command(allow_negative_numbers = true)]
    Aim(AimArgs),
    /// Follow a beam over an energy range: setpoints at every step, the limit or zone
    /// where it is unreachable, and a time estimate.
    #[command(allow_negative_numbers = true)]
    Track(TrackArgs),
    /// Sweep the arm at one energy: the beams crossed, and a time estimate.
    #[command(allow_negative_numbers = true)]
    Sweep(SweepArgs),
    /// What the detector sees at an arm (and elevation) angle: beams within the
    /// acceptance, nearest first.
    #[command(allow_negative_numbers = true)]
    View(ViewArgs),
    /// Calibration fits from a CSV file: peak centre, arm zero and gun offset, row
    /// spacing, inner potential and layer spacing.
    #[command(allow_negative_numbers = true, after_help = gonio::FIT_HELP)]
    Fit(FitArgs),
    /// Angular error budget of the aimed arm angle: energy spread, lattice constant,
    /// step quantisation, detector acceptance, arm zero.
    #[command(allow_negative_numbers = true)]
    Budget(BudgetArgs),
}

/// The outcome of reading the command line.
// Made once per run and matched at once: boxing the command line would save nothing.
#[allow(clippy::large_enum_variant)]
#[derive(Debug)]
pub enum Parsed {
    /// A command to run.
    Run(Cli),
    /// `--help` or `--version`: print as clap prints it (exit status 0).
    Print(clap::Error),
    /// A usage error, as one line naming what is accepted (without the `mwctl: error: `
    /// prefix); exit status 2.
    Usage(String),
}

/// Reads the command line (`args` includes the program name). Usage errors become one
/// line, like every other error of `mwctl`: clap's message, what the argument accepts
/// (its help, or the commands there are) and the usage of the command.
pub fn parse<I, T>(args: I) -> Parsed
where
    I: IntoIterator<Item = T>,
    T: Into<std::ffi::OsString> + Clone,
{
    let args: Vec<std::ffi::OsString> = args.into_iter().map(Into::into).collect();
    match Cli::try_parse_from(&args) {
        Ok(c) => Parsed::Run(c),
        Err(e) => match e.kind() {
            clap::error::ErrorKind::DisplayHelp | clap::error::ErrorKind::DisplayVersion => {
                Parsed::Print(e)
            }
            _ => Parsed::Usage(usage_line(&e, &args)),
        },
    }
}

/// One line for a clap error.
fn usage_line(e: &clap::Error, args: &[std::ffi::OsString]) -> String {
    use clap::error::{ContextKind, ContextValue, ErrorKind};
    use clap::CommandFactory;
    let root = Cli::command();
    // The (sub)command the arguments reached.
    let mut cur = &root;
    let mut path = vec![root.get_name().to_string()];
    for a in args.iter().skip(1).filter_map(|a| a.to_str()) {
        if let Some(sc) = cur.find_subcommand(a) {
            cur = sc;
            path.push(a.to_string());
        }
    }
    let path = path.join(" ");
    let subs: Vec<&str> = cur
        .get_subcommands()
        .map(|s| s.get_name())
        .filter(|n| *n != "help")
        .collect();
    let context = |k: ContextKind| match e.get(k) {
        Some(ContextValue::String(s)) => Some(s.clone()),
        _ => None,
    };
    match e.kind() {
        ErrorKind::InvalidSubcommand => format!(
            "unknown command '{}' for `{path}`: accepted: {}",
            context(ContextKind::InvalidSubcommand).unwrap_or_default(),
            subs.join(", ")
        ),
        ErrorKind::MissingSubcommand | ErrorKind::DisplayHelpOnMissingArgumentOrSubcommand
            if !subs.is_empty() =>
        {
            format!("`{path}` needs a command: one of {}", subs.join(", "))
        }
        kind => {
            let text = e.render().to_string();
            let (mut parts, mut usage) = (Vec::new(), None);
            for l in text.lines().map(str::trim) {
                if l.is_empty() || l.starts_with("For more information") {
                    continue;
                }
                match l.strip_prefix("Usage: ") {
                    Some(u) => usage = Some(u.to_string()),
                    None => parts.push(l.strip_prefix("error: ").unwrap_or(l).to_string()),
                }
            }
            let mut line = parts.join(" ");
            // What a rejected value should have been: the argument's own help.
            if matches!(kind, ErrorKind::InvalidValue | ErrorKind::ValueValidation) {
                if let Some(a) = context(ContextKind::InvalidArg) {
                    let long = a
                        .split_whitespace()
                        .next()
                        .unwrap_or("")
                        .trim_start_matches('-');
                    let help = cur
                        .get_arguments()
                        .chain(root.get_arguments())
                        .find(|x| x.get_long() == Some(long))
                        .and_then(|x| x.get_help())
                        .map(|h| h.to_string());
                    if let Some(h) = help {
                        line.push_str(&format!("; {a}: {}", h.trim_end_matches('.')));
                    }
                }
            }
            if let Some(u) = usage {
                line.push_str(&format!("; usage: {u}"));
            }
            line
        }
    }
}

/// Runs a parsed command, writing what it prints to `out` as it goes (a long list is
/// never held as one string). A write error (e.g. a closed pipe) ends the output
/// quietly.
pub fn run(cli: &Cli, out: &mut dyn std::io::Write) -> CliResult<()> {
    // What the simulated instrument is: resolved once, before any link opens.
    crate::link::device::set_sim_config(crate::link::device::SimConfig::from_args(
        cli.sim_seed,
        cli.sim_hidden.as_deref(),
    )?);
    // Commands that write as they talk to a controller.
    let f = cli.format;
    match &cli.command {
        Command::Run {
            script,
            link,
            keep_going,
            baud,
        } => {
            no_csv(f, "run")?;
            let spec = crate::link::LinkSpec::parse(link, *baud)?;
            crate::remote::run_script(
                script,
                &spec,
                *keep_going,
                f == crate::output::Format::Json,
                out,
            )?;
            return Ok(());
        }
        Command::Backup { file, link } => {
            no_csv(f, "backup")?;
            let spec = crate::link::LinkSpec::parse(link, None)?;
            crate::backup::backup(file, &spec, f == crate::output::Format::Json, out)?;
            return Ok(());
        }
        Command::Restore { file, link } => {
            no_csv(f, "restore")?;
            let spec = crate::link::LinkSpec::parse(link, None)?;
            crate::backup::restore(file, &spec, f == crate::output::Format::Json, out)?;
            return Ok(());
        }
        Command::Verify {
            link,
            quick,
            report,
            baud,
        } => {
            let spec = crate::link::LinkSpec::parse(link, *baud)?;
            let extent = if *quick {
                crate::verify::Extent::Quick
            } else {
                crate::verify::Extent::Full
            };
            no_csv(f, "verify")?;
            let json = f == crate::output::Format::Json;
            let mut sink = std::io::sink();
            let text_out: &mut dyn std::io::Write = if json { &mut sink } else { out };
            let o = crate::verify::run(&spec, extent, text_out)?;
            if json {
                // A closed pipe ends the output quietly, as for every report.
                let _ = writeln!(out, "{}", o.report);
            }
            if let Some(path) = report {
                let text = serde_json::to_string_pretty(&o.report)
                    .map_err(|e| CliError::new(format!("--report: {e}")))?;
                std::fs::write(path, text + "\n")
                    .map_err(|e| CliError::new(format!("--report {}: {e}", path.display())))?;
            }
            if !o.pass {
                return Err(CliError::new(
                    "verify: the controller's replies differ from the host's core or lie beyond the oracle tolerances (see above)",
                ));
            }
            return Ok(());
        }
        Command::Serve {
            pty: _,
            for_s,
            baud,
            faults,
        } => {
            no_csv(f, "serve")?;
            crate::remote::serve_pty(*for_s, *baud, faults, f == crate::output::Format::Json, out)?;
            return Ok(());
        }
        Command::Scan(a) => {
            no_csv(f, "scan")?;
            let json = f == crate::output::Format::Json;
            let cfg = crate::scan::Config::resolve(a, json)?;
            let (summary, err) = crate::scan::run(&cfg);
            if let Some(s) = summary {
                // A closed pipe ends the output quietly, as for every report.
                let _ = if json {
                    writeln!(out, "{}", s.json())
                } else {
                    writeln!(
                        out,
                        "scan {}: {} of {} points in {} ({} measured), {:.1} s{}",
                        s.status,
                        s.rows,
                        s.points,
                        s.file,
                        s.measured,
                        s.seconds,
                        s.plot
                            .as_ref()
                            .map_or(String::new(), |p| format!("; picture {p}"))
                    )
                };
                let _ = out.flush();
            }
            return err.map_or(Ok(()), Err);
        }
        Command::Completions { shell } => {
            crate::docgen::text_only(f, "completions", "a shell script")?;
            crate::docgen::completions(*shell, out)?;
            let _ = out.flush();
            return Ok(());
        }
        Command::Man { dir } => {
            crate::docgen::text_only(f, "man", "a roff page")?;
            crate::docgen::man(dir.as_deref(), out)?;
            let _ = out.flush();
            return Ok(());
        }
        _ => {}
    }
    let text = match run_report(cli)? {
        Output::Text(t) => out.write_all(t.as_bytes()),
        Output::Report(r) => r.write_to(cli.format, out),
        Output::Sweep(s) => s.write_to(cli.format, out),
    };
    let _ = text.and_then(|()| out.flush());
    Ok(())
}

/// Commands whose output is lines or one document, not a table, refuse CSV.
fn no_csv(f: crate::output::Format, what: &str) -> CliResult<()> {
    if f == crate::output::Format::Csv {
        return Err(CliError::new(format!(
            "{what} --format csv: its output is not a table; use --format table or json"
        )));
    }
    Ok(())
}

/// What a command prints.
enum Output {
    Text(String),
    Report(Report),
    Sweep(gonio::SweepOutput),
}

fn run_report(cli: &Cli) -> CliResult<Output> {
    let f = cli.format;
    let report = match &cli.command {
        Command::Crystals { crystal: None } => calc::crystals()?,
        Command::Crystals { crystal: Some(id) } => calc::crystal_faces(id)?,
        Command::Safety => {
            return match f {
                Format::Table => Ok(Output::Text(format!("{CAUTIONS}\n"))),
                Format::Json => Ok(Output::Text(crate::output::json_text(&serde_json::json!({
                    "cautions": CAUTIONS.split('\n').collect::<Vec<_>>().join(" "),
                })))),
                Format::Csv => Err(CliError::new(
                    "safety --format csv: the cautions are text; use --format table or json",
                )),
            }
        }
        Command::Demo { out } => {
            return crate::demo::run(f, &crate::demo::DemoArgs { out: out.clone() })
                .map(Output::Text)
        }
        Command::Align(a) => crate::align::run(a)?,
        Command::Rig(RigCmd::Show {
            rig: r,
            toml,
            console,
        }) => {
            let rf = r.load()?;
            if *toml || *console {
                if f != Format::Table {
                    return Err(CliError::new(format!(
                        "rig show --{} --format {}: that prints a file's text; leave out --format, or use rig show --format json for the rig as JSON",
                        if *toml { "toml" } else { "console" },
                        if f == Format::Json { "json" } else { "csv" }
                    )));
                }
                let text = if *toml {
                    rig::to_toml(&rf)
                } else {
                    let mut t = rig::console_requests(&rf).join("\n");
                    t.push('\n');
                    t
                };
                return Ok(Output::Text(text));
            }
            rig::report(&rf)
        }
        Command::Rig(RigCmd::Check { rig: file }) => {
            let rf = rig::load(file)?;
            let mut r = rig::report(&rf);
            r.fields.insert(
                0,
                ("check", "check", crate::output::Value::Text("ok".into())),
            );
            r
        }
        Command::Talk { link, rig: file } => {
            let rf = match file {
                Some(p) => Some(rig::load(p)?),
                None => None,
            };
            crate::talk::run(link, f, rf.as_ref())?;
            return Ok(Output::Text(String::new()));
        }
        // Handled in `run`, which writes as it goes.
        Command::Run { .. }
        | Command::Serve { .. }
        | Command::Verify { .. }
        | Command::Backup { .. }
        | Command::Restore { .. }
        | Command::Scan(_)
        | Command::Completions { .. }
        | Command::Man { .. } => return Ok(Output::Text(String::new())),
        Command::Plot(p) => crate::plot::run(p)?,
        Command::Calc(c) => match c {
            Calc::Wavelength {
                gun,
                inner_potential,
            } => calc::wavelength(&gun.gun_args()?, *inner_potential)?,
            Calc::Reflections {
                crystal,
                sample,
                gun,
                max,
            } => calc::reflections(crystal, sample, gun, *max)?,
            Calc::Rings {
                crystal,
                sample,
                gun,
                screen_distance,
                max,
            } => calc::rings(crystal, sample, gun, *screen_distance, *max)?,
            Calc::Beams {
                crystal,
                sample,
                face,
                gun,
                tilt,
                azimuth,
                max,
                rig,
                reachable,
                overlayer: Some(o),
                domains,
            } if rig.is_none() && !*reachable => calc::overlayer_beams(
                crystal,
                face,
                gun,
                *tilt,
                *azimuth,
                *max,
                calc::OverlayerArgs {
                    text: o,
                    domains: *domains,
                    sample,
                },
            )?,
            Calc::Beams {
                crystal,
                face,
                gun,
                sample,
                tilt,
                azimuth,
                max,
                rig,
                reachable,
                ..
            } => {
                let rf = match rig {
                    Some(p) => Some(rig::load(p)?),
                    None => None,
                };
                let mut r = calc::beams(crystal, sample, face, gun, *tilt, *azimuth, *max)?;
                if let Some(rf) = &rf {
                    let c = calc::crystal_at(crystal, sample)?;
                    gonio::add_reach(&mut r, rf, &c, face, gun, *tilt, *azimuth, *reachable)?;
                }
                r
            }
            Calc::Ivpeaks {
                crystal,
                sample,
                face,
                beam,
                from,
                to,
                tilt,
                azimuth,
                inner_potential,
                inner_potential_model,
                cathode_work_function,
                sample_work_function,
                energy_offset,
                relax_d12,
                relax_d23,
                max,
            } => {
                let a = IvArgs {
                    relax: [*relax_d12, *relax_d23],
                    rod: calc::parse_rod(beam)?,
                    from: *from,
                    to: *to,
                    tilt: *tilt,
                    azimuth: *azimuth,
                    inner_potential: *inner_potential,
                    cathode_work_function: *cathode_work_function,
                    sample_work_function: *sample_work_function,
                    energy_offset: *energy_offset,
                    sample: *sample,
                    v0_model: *inner_potential_model,
                };
                calc::ivpeaks(crystal, face, &a, *max)?
            }
            Calc::Screen(a) => crate::screen::screen(a)?,
            Calc::Steps(a) => calc::steps::steps(a)?,
            Calc::Aim(a) => gonio::aim(a)?,
            Calc::Track(a) => gonio::track(a)?,
            Calc::Sweep(a) => return Ok(Output::Sweep(gonio::sweep(a)?)),
            Calc::View(a) => gonio::view(a)?,
            Calc::Fit(a) => gonio::fit_cmd(a)?,
            Calc::Budget(a) => gonio::budget_cmd(a)?,
        },
    };
    Ok(Output::Report(report))
}
