//! `mwctl demo`: a day at the bench in an invented scenario, end to end on the
//! in-process simulator, writing its files into a folder.
//!
//! Scenario (ours, for demonstration only): a silver (100) crystal on the "bench B"
//! goniometer (`docs/rigs/bench-b.toml`, built in), a LaB6-cathode gun (work function
//! 2.7 eV, a typical value) set to 95 eV, the sample tilted 6° toward the arm. The
//! simulated instrument hides an arm zero and an energy offset that its console does not
//! know (docs/SIMULATOR.md). The demo lists the beams and I-V maxima offline, loads the
//! rig into the controller, aligns (finding the hidden offsets), runs a short tracking
//! scan written row by row to CSV, and draws the alignment, the pattern, the energy
//! tracks and the scan.
//! Every step is also a command of its own; the demo prints them.

use crate::calc::{self, GunArgs, IvArgs};
use crate::error::{CliError, CliResult};
use crate::link::device::SimConfig;
use crate::link::session::Session;
use crate::link::wire::{SimWire, Wire};
use crate::output::{Format, Report};
use matterwave_core::console::sim::HiddenOffsets;
use std::path::{Path, PathBuf};

/// The built-in rig of the scenario (the same file as `docs/rigs/bench-b.toml`).
const BENCH_B: &str = include_str!("../../docs/rigs/bench-b.toml");

/// What the simulated instrument hides (invented): its arm's true zero lies 0.52° from
/// where the uncalibrated step count puts it, and the gun delivers 1.3 eV less than its
/// setting says. Noise seed 2026.
const HIDDEN: HiddenOffsets = HiddenOffsets {
    arm_zero_deg: 0.52,
    energy_offset_ev: -1.3,
    tilt_error_deg: 0.0,
};
const SEED: u32 = 2026;

/// The controller's settings for the scenario.
const SETUP: &str = "set crystal=ag face=100 energy=95 cathode=2.7 sample=4.64 tilt=6 beam=1,0";

/// The scan: the (1,0) beam followed from 44 to 110 eV nominal, its I-V maxima marked
/// (above 110 eV its arm angle runs into bench B's gun zone, −11° to 11°).
const SCAN: [&str; 6] = ["--kind", "iv", "--from", "44", "--to", "110"];
const SCAN_STEP_EV: &str = "2";

/// Options of `mwctl demo`.
#[derive(Clone, Debug, Default)]
pub struct DemoArgs {
    /// The folder for the files; `None`: a new folder under the current directory.
    pub out: Option<PathBuf>,
}

/// A new folder `matterwave-demo-N` under `base` (the first N free).
fn new_folder(base: &Path) -> CliResult<PathBuf> {
    for n in 1..10_000 {
        let p = base.join(format!("matterwave-demo-{n}"));
        match std::fs::create_dir(&p) {
            Ok(()) => return Ok(p),
            Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => continue,
            Err(e) => {
                return Err(CliError::new(format!(
                    "demo: cannot make a folder in {}: {e}; give --out DIR",
                    base.display()
                )))
            }
        }
    }
    Err(CliError::new(format!(
        "demo: {} holds 9999 demo folders already; give --out DIR",
        base.display()
    )))
}

/// The folder to write into: `--out DIR` (made if missing; it may exist, the demo's
/// files in it are replaced) or a new one.
fn folder(out: Option<&Path>) -> CliResult<PathBuf> {
    match out {
        Some(d) => {
            std::fs::create_dir_all(d).map_err(|e| {
                CliError::new(format!(
                    "demo --out {}: cannot make the folder: {e}",
                    d.display()
                ))
            })?;
            Ok(d.to_path_buf())
        }
        None => new_folder(&std::env::current_dir().map_err(|e| {
            CliError::new(format!("demo: no current directory ({e}); give --out DIR"))
        })?),
    }
}

/// One request that must succeed.
fn ok<W: Wire>(s: &mut Session<W>, req: &str) -> CliResult<()> {
    crate::link::request_ok(s, "demo", req).map(|_| ())
}

/// Runs `mwctl` with `args` in this process (the same parser and dispatch as the
/// command line) and returns its report.
fn mwctl(args: &[String]) -> CliResult<Report> {
    use clap::Parser;
    let cli = crate::cli::Cli::try_parse_from(
        std::iter::once("mwctl".to_string()).chain(args.iter().cloned()),
    )
    .map_err(|e| CliError::new(format!("demo: `mwctl {}`: {e}", args.join(" "))))?;
    match &cli.command {
        crate::cli::Command::Plot(p) => crate::plot::run(p),
        _ => Err(CliError::new("demo: only plots run this way")),
    }
}

fn strings(v: &[&str]) -> Vec<String> {
    v.iter().map(|s| s.to_string()).collect()
}

/// A section of the demo: its key in the JSON document, a title, the command that does
/// the same on its own, and its report.
struct Section {
    key: &'static str,
    title: String,
    command: String,
    report: Report,
}

/// Runs the demo and returns its text: sections with titles (`table`), or one JSON
/// document with every section (`json`). CSV is refused: the sections are different
/// tables.
pub fn run(format: Format, args: &DemoArgs) -> CliResult<String> {
    if format == Format::Csv {
        return Err(CliError::new(
            "demo --format csv: the demo has several tables; use --format table or json",
        ));
    }
    let t0 = std::time::Instant::now();
    let dir = folder(args.out.as_deref())?;
    let path = |name: &str| dir.join(name);
    let rig_in = path("bench-b.toml");
    std::fs::write(&rig_in, BENCH_B)
        .map_err(|e| CliError::new(format!("demo: cannot write {}: {e}", rig_in.display())))?;
    let rig_text = rig_in.display().to_string();

    // Offline, with the controller's own code.
    let gun = GunArgs {
        energy: 95.0,
        cathode_work_function: 2.7,
        sample_work_function: calc::EvOrFace::Ev(4.64),
        energy_offset: 0.0,
    };
    let iv = IvArgs {
        rod: [1, 0],
        from: 40.0,
        to: 400.0,
        tilt: 6.0,
        azimuth: 0.0,
        inner_potential: None,
        cathode_work_function: 2.7,
        sample_work_function: calc::EvOrFace::Ev(4.64),
        energy_offset: 0.0,
        sample: calc::SampleArgs::default(),
        v0_model: matterwave_core::inner::V0ModelKind::Constant,
        relax: [0.0, 0.0],
    };
    let gun_opts = "--energy 95 --cathode-work-function 2.7 --sample-work-function 4.64";
    let mut sections = vec![
        Section {
            key: "beam",
            title: "the beam: 95 eV nominal, LaB6 cathode 2.7 eV, Ag sample 4.64 eV".into(),
            command: format!("mwctl calc wavelength {gun_opts}"),
            report: calc::wavelength(&gun, Some(calc::EvOrFace::Ev(10.0)))?,
        },
        Section {
            key: "beams",
            title: "the beams of Ag(100) at tilt 6°".into(),
            command: format!("mwctl calc beams --crystal ag --face 100 {gun_opts} --tilt 6 --max 20"),
            report: calc::beams(
                "ag",
                &calc::SampleArgs::default(),
                "100",
                &gun,
                6.0,
                0.0,
                20,
            )?,
        },
        Section {
            key: "iv_peaks",
            title: "I-V maxima of the (1,0) beam, 40-400 eV nominal".into(),
            command: "mwctl calc ivpeaks --crystal ag --face 100 --beam 1,0 --from 40 --to 400 --tilt 6 --cathode-work-function 2.7 --sample-work-function 4.64".into(),
            report: calc::ivpeaks("ag", "100", &iv, 40)?,
        },
    ];

    // The controller: the in-process simulator with its hidden offsets.
    let wire: Box<dyn Wire> = Box::new(SimWire::with_config(SimConfig {
        seed: SEED,
        hidden: HIDDEN,
    })?);
    let mut s = Session::new(wire);
    let rf =
        crate::rig::parse(BENCH_B, "bench-b.toml").map_err(|e| CliError::new(e.to_string()))?;
    ok(&mut s, "disable")?;
    for req in crate::rig::console_requests(&rf) {
        ok(&mut s, &req)?;
    }
    // The rig's axes are new to the controller: declare them at home (the simulated
    // axes stand there; on a real bench, only when they truly do).
    for axis in ["arm", "elevation", "tilt", "azimuth"] {
        ok(&mut s, &format!("home name={axis}"))?;
    }
    ok(&mut s, SETUP)?;

    // Alignment: known beams found, centred and fitted; applied, with a corrected copy
    // of the rig file.
    let a = crate::align::measure(&mut s, &crate::align::AlignOptions::default())?;
    let rig_out = path("bench-b-aligned.toml");
    let _ = std::fs::remove_file(&rig_out);
    let applied = crate::align::apply(&mut s, &a, Some((&rig_in, &rig_out)))?;
    // Its picture, as align --plot draws it.
    let align_png = path("align.png");
    let align_target = crate::plot::plot_target(&align_png)?;
    crate::plot::write_align(&crate::plot::AlignPlot::compute(&a)?, &align_target)?;
    let align_cmd = format!(
        "mwctl --sim-seed {SEED} --sim-hidden arm_zero={},energy={} align --yes --rig {} --rig-out {} --plot {}",
        HIDDEN.arm_zero_deg,
        HIDDEN.energy_offset_ev,
        rig_text,
        rig_out.display(),
        align_png.display()
    );
    let ar = crate::align::report(&a, Some(&applied), Some(&align_png));
    let new_home = a.new_home_offset_deg();
    // The simulator's truth (docs/SIMULATOR.md): the arm reads true at home offset
    // −δ0_hidden, the gun at offset ΔE_hidden.
    let (true_home, true_de) = (-HIDDEN.arm_zero_deg, HIDDEN.energy_offset_ev);
    let (sd0, sde) = (a.fit.sigma[0], a.fit.sigma[1]);
    let within = (new_home - true_home).abs() <= 3.0 * sd0
        && (a.energy_offset_ev() - true_de).abs() <= 3.0 * sde;
    use crate::output::Value;
    let mut found = Report::default();
    found.field(
        "hidden_home_offset_deg",
        "the simulator's true arm home offset (deg)",
        Value::F32(true_home, 4),
    );
    found.field(
        "found_home_offset_deg",
        "arm home offset found (deg)",
        Value::F32(new_home, 4),
    );
    found.field("home_offset_sigma_deg", "its 1σ (deg)", Value::F32(sd0, 4));
    found.field(
        "hidden_energy_offset_ev",
        "the simulator's true energy offset (eV)",
        Value::F32(true_de, 3),
    );
    found.field(
        "found_energy_offset_ev",
        "energy offset found (eV)",
        Value::F32(a.energy_offset_ev(), 3),
    );
    found.field("energy_offset_sigma_ev", "its 1σ (eV)", Value::F32(sde, 3));
    found.field(
        "within_3_sigma",
        "both found within 3σ of the truth",
        Value::Bool(within),
    );
    sections.push(Section {
        key: "align",
        title: "alignment on the simulated bench B: arm zero and energy offset from known beams (applied)".into(),
        command: align_cmd.clone(),
        report: ar,
    });
    let mut apr = Report::default();
    crate::plot::file_fields(&mut apr, &align_target);
    apr.field(
        "points",
        "centred peaks",
        Value::Int(a.measured.len() as i64),
    );
    let align_plot_section = Section {
        key: "plot_align",
        title: "the alignment: centred peaks over the model before and after the fit, residuals"
            .into(),
        command: align_cmd,
        report: apr,
    };
    sections.push(Section {
        key: "recovered",
        title: "what the alignment found, against what the simulator hid (the demo alone can look)"
            .into(),
        command: "(none: a real instrument does not tell)".into(),
        report: found,
    });

    // A tracking scan, every point to the CSV as it is measured.
    let csv = path("iv-1-0.csv");
    let mut scan_args = strings(&SCAN);
    scan_args.extend(strings(&["--step", SCAN_STEP_EV, "--dwell", "0", "--out"]));
    scan_args.push(csv.display().to_string());
    scan_args.push("--force".into());
    let scan_cfg = {
        use clap::Parser;
        let cli = crate::cli::Cli::try_parse_from(
            ["mwctl", "scan"]
                .iter()
                .map(|s| s.to_string())
                .chain(scan_args.iter().cloned()),
        )
        .map_err(|e| CliError::new(format!("demo: scan options: {e}")))?;
        match &cli.command {
            crate::cli::Command::Scan(a) => {
                crate::scan::Config::resolve(a, format == Format::Json)?
            }
            _ => return Err(CliError::new("demo: scan options")),
        }
    };
    let (summary, err) = crate::scan::run_on(Some(&mut s), &scan_cfg);
    if let Some(e) = err {
        return Err(e);
    }
    let summary = summary.ok_or_else(|| CliError::new("demo: the scan gave no summary"))?;
    let mut sr = Report::default();
    sr.field("file", "file", Value::Text(summary.file.clone()));
    sr.field("kind", "plan", Value::Text(summary.kind.clone()));
    sr.field("points", "points", Value::Int(summary.points.into()));
    sr.field("measured", "measured", Value::Int(summary.measured.into()));
    sr.field("status", "status", Value::Text(summary.status.clone()));
    sr.field("seconds", "seconds", Value::F32(summary.seconds as f32, 2));
    sections.push(Section {
        key: "scan",
        title: "an I-V scan following the (1,0) beam, 44-110 eV nominal, after alignment".into(),
        command: format!("mwctl scan {}", scan_args.join(" ")),
        report: sr,
    });
    ok(&mut s, "disable")?;

    // The pictures.
    sections.push(align_plot_section);
    let pattern_png = path("pattern-95ev.png");
    let pattern_svg = path("pattern-95ev.svg");
    let tracks_png = path("tracks.png");
    let scan_png = path("iv-1-0.png");
    let pattern = |out: &Path| {
        vec![
            "plot",
            "pattern",
            "--crystal",
            "ag",
            "--face",
            "100",
            "--energy",
            "95",
            "--cathode-work-function",
            "2.7",
            "--sample-work-function",
            "4.64",
            "--tilt",
            "6",
            "--gun-shadow",
            "6",
            "--rig",
        ]
        .into_iter()
        .map(String::from)
        .chain([rig_text.clone(), "--out".into(), out.display().to_string()])
        .collect::<Vec<String>>()
    };
    let tracks: Vec<String> = strings(&[
        "plot",
        "tracks",
        "--crystal",
        "ag",
        "--face",
        "100",
        "--tilt",
        "6",
        "--from",
        "20",
        "--to",
        "300",
        "--rig",
    ])
    .into_iter()
    .chain([
        rig_text.clone(),
        "--out".into(),
        tracks_png.display().to_string(),
    ])
    .collect();
    let scan_plot: Vec<String> = strings(&["plot", "scan"])
        .into_iter()
        .chain([csv.display().to_string(), "--rig".into(), rig_text.clone()])
        .chain(["--out".into(), scan_png.display().to_string()])
        .collect();
    for (key, title, argv) in [
        (
            "plot_pattern",
            "the pattern at 95 eV on a hemispherical screen (PNG)",
            pattern(&pattern_png),
        ),
        (
            "plot_pattern_svg",
            "the same pattern as SVG",
            pattern(&pattern_svg),
        ),
        (
            "plot_tracks",
            "arm angle against energy for every beam, limits and zones shaded",
            tracks,
        ),
        (
            "plot_scan",
            "the scan with the I-V maxima the controller predicted",
            scan_plot,
        ),
    ] {
        let report = mwctl(&argv)?;
        sections.push(Section {
            key,
            title: title.into(),
            command: format!("mwctl {}", argv.join(" ")),
            report,
        });
    }
    let files: Vec<PathBuf> = vec![
        rig_in.clone(),
        rig_out.clone(),
        csv.clone(),
        align_png,
        pattern_png,
        pattern_svg,
        tracks_png,
        scan_png,
    ];
    let seconds = t0.elapsed().as_secs_f64();
    render(format, &sections, &dir, &files, seconds)
}

/// The demo's output in `format` (table or JSON).
fn render(
    format: Format,
    sections: &[Section],
    dir: &Path,
    files: &[PathBuf],
    seconds: f64,
) -> CliResult<String> {
    let scenario = format!(
        "Invented scenario: Ag(100) on the bench B goniometer (its rig built in), a LaB6 gun at 95 eV, tilt 6°. The simulated instrument hides an arm zero of {}° and an energy offset of {} eV (noise seed {SEED}); alignment has to find them.",
        HIDDEN.arm_zero_deg, HIDDEN.energy_offset_ev
    );
    match format {
        Format::Json => {
            let mut doc = serde_json::Map::new();
            doc.insert("cautions".into(), crate::cli::CAUTIONS.into());
            doc.insert("scenario".into(), scenario.into());
            let mut commands = serde_json::Map::new();
            for s in sections {
                doc.insert(s.key.into(), s.report.to_json());
                commands.insert(s.key.into(), s.command.clone().into());
            }
            doc.insert("commands".into(), serde_json::Value::Object(commands));
            doc.insert("out_dir".into(), dir.display().to_string().into());
            doc.insert(
                "files".into(),
                files
                    .iter()
                    .map(|f| serde_json::Value::from(f.display().to_string()))
                    .collect::<Vec<_>>()
                    .into(),
            );
            doc.insert("seconds".into(), seconds.into());
            Ok(crate::output::json_text(&serde_json::Value::Object(doc)))
        }
        _ => {
            let mut out = format!(
                "== safety\n{}\n\n== scenario\n{scenario}\n\n",
                crate::cli::CAUTIONS
            );
            for s in sections {
                // A picture's summary repeats the face: its file is what matters here.
                let body = if s.key.starts_with("plot_") {
                    let file = s.report.fields.iter().find(|f| f.0 == "file");
                    match file.map(|f| &f.2) {
                        Some(crate::output::Value::Text(t)) => format!("wrote {t}\n"),
                        _ => s.report.render(Format::Table),
                    }
                } else {
                    s.report.render(Format::Table)
                };
                out.push_str(&format!("== {}\n$ {}\n{}\n", s.title, s.command, body));
            }
            out.push_str(&format!("== files, in {}\n", dir.display()));
            for f in files {
                out.push_str(&format!("  {}\n", f.display()));
            }
            out.push_str(&format!("demo done in {seconds:.1} s\n"));
            Ok(out)
        }
    }
}
