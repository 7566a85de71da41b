//! `mwctl plot`: pictures, PNG or SVG, of what the core computes — the beam pattern on a
//! screen ([`mod@pattern`]), the in-plane tracks of every beam family against energy with
//! the arm's limits and zones ([`mod@tracks`]), and scan data with the predicted positions
//! overlaid ([`mod@scan`]). Each picture is one file here; `style.rs` holds what they share
//! (font, colours, output file, the data→pixel [`Frame`]). The library functions
//! ([`write_pattern`], [`write_tracks`], [`write_scan`]) let other commands write the same
//! pictures, and [`write_align`] the picture of an alignment ([`mod@align`], `mwctl align
//! --plot`); the commands below add only the command-line options and a summary.

pub mod align;
pub mod pattern;
pub mod scan;
pub mod scan_file;
pub mod style;
pub mod tracks;

pub use align::{AlignDrawn, AlignPlot};
pub use pattern::{PatternDrawn, PatternPlot};
pub use scan::{Marker, ScanPlot};
pub use style::{FileKind, Frame, Target};
pub use tracks::{Family, TracksPlot};

use crate::calc::{self, check_angle, check_max, crystal, face_fields, face_of, GunArgs};
use crate::error::{CliError, CliResult, Context};
use crate::gonio::RigArgs;
use crate::output::{Report, Value};
use matterwave_core::goniometer::{Screen, GUN_SHADOW_MAX_DEG};
use matterwave_core::surface::Face;
use matterwave_core::surface::{Incidence, SurfaceBeam, TILT_MAX_DEG};
use matterwave_core::table::Crystal;
use std::path::PathBuf;

/// `--out FILE --width PX --height PX`.
#[derive(Clone, Debug, clap::Args)]
pub struct OutArgs {
    /// The picture to write: FILE.png or FILE.svg (the extension picks the format).
    #[arg(long, value_name = "FILE")]
    pub out: PathBuf,
    /// Width, pixels (300 to 8000).
    #[arg(long, value_name = "PX", default_value_t = style::WIDTH_DEFAULT_PX)]
    pub width: u32,
    /// Height, pixels (300 to 8000).
    #[arg(long, value_name = "PX", default_value_t = style::HEIGHT_DEFAULT_PX)]
    pub height: u32,
}

impl OutArgs {
    /// The checked target.
    pub fn target(&self) -> CliResult<Target> {
        Target::new(&self.out, self.width, self.height)
    }
}

/// The pictures.
#[derive(Debug, clap::Subcommand)]
pub enum PlotCmd {
    /// The beam pattern at one energy on a hemispherical screen coaxial with the gun,
    /// seen from behind it: every spot labelled (h,k), the gun's shadow, and where the
    /// rig's detector arm can point.
    Pattern(Box<PatternArgs>),
    /// Arm angle against energy for every beam family in in-plane mode (both
    /// branches), the arm's soft limits and forbidden zones shaded, emergence energies
    /// marked.
    Tracks(Box<TracksArgs>),
    /// Scan data (two columns) with the predicted positions overlaid.
    Scan(Box<scan::ScanArgs>),
}

/// The options of `mwctl plot pattern`.
#[derive(Clone, Debug, clap::Args)]
pub struct PatternArgs {
    /// Crystal id (see `mwctl crystals`).
    #[arg(long, value_name = "ID")]
    pub crystal: String,
    /// Face: 111, 1-10, 1,1,0, (1 -1 0); hexagonal also 0001, 10-10.
    #[arg(long, value_name = "HKL", allow_hyphen_values = true)]
    pub face: String,
    /// Gun settings.
    #[command(flatten)]
    pub gun: GunArgs,
    /// Sample tilt α, degrees, within ±89.9 (0: normal incidence).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG", default_value_t = 0.0)]
    pub tilt: f32,
    /// Sample azimuth φ, degrees, within ±360 (0: a1 along e1, in the scattering plane).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG", default_value_t = 0.0)]
    pub azimuth: f32,
    /// Screen radius, mm (above 0, at most 100000).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "MM", default_value_t = 100.0)]
    pub radius: f32,
    /// The screen's rim: its polar angle from the screen axis, degrees (above 0, at
    /// most 90).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG", default_value_t = 90.0)]
    pub rim: f32,
    /// Half-angle of the gun's shadow about the direction back at the gun, degrees
    /// (0 to 45; 0 = no shadow).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG", default_value_t = 0.0)]
    pub gun_shadow: f32,
    /// Most spots to draw (smallest |g| first), 1 to 10000.
    #[arg(value_parser = crate::number::max_arg, long, value_name = "N", default_value_t = 500)]
    pub max: usize,
    /// The rig whose arm's reach is drawn.
    #[command(flatten)]
    pub rig: RigArgs,
    /// The file.
    #[command(flatten)]
    pub out: OutArgs,
}

/// The options of `mwctl plot tracks`.
#[derive(Clone, Debug, clap::Args)]
pub struct TracksArgs {
    /// Crystal id (see `mwctl crystals`).
    #[arg(long, value_name = "ID")]
    pub crystal: String,
    /// Face: 111, 1-10, 1,1,0, (1 -1 0); hexagonal also 0001, 10-10.
    #[arg(long, value_name = "HKL", allow_hyphen_values = true)]
    pub face: String,
    /// Sample tilt α, degrees, within ±89.9.
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG", default_value_t = 0.0)]
    pub tilt: f32,
    /// Lowest kinetic energy at the sample, eV (1 to 300000).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "EV", default_value_t = 10.0)]
    pub from: f32,
    /// Highest kinetic energy at the sample, eV (above --from, at most 300000).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "EV", default_value_t = 300.0)]
    pub to: f32,
    /// Beam families to draw (rods of equal |g| share a track), lowest |g| first,
    /// the specular beam included: 1 to 8.
    #[arg(long, value_name = "N", default_value_t = 5)]
    pub families: usize,
    /// The rig whose arm limits and zones are shaded.
    #[command(flatten)]
    pub rig: RigArgs,
    /// The file.
    #[command(flatten)]
    pub out: OutArgs,
}

/// The file fields every plot summary starts with.
pub(crate) fn file_fields(r: &mut Report, t: &Target) {
    r.field("file", "file", Value::Text(t.path.display().to_string()));
    r.field("file_format", "format", Value::Text(t.kind.word().into()));
    r.field("width_px", "width (px)", Value::Int(t.width_px.into()));
    r.field("height_px", "height (px)", Value::Int(t.height_px.into()));
}

/// "Ag (100)" style context: crystal id and face as `calc` prints them.
pub(crate) fn crystal_face(c: &Crystal, face: &Face) -> String {
    let mut r = Report::default();
    calc::crystal_face_fields(&mut r, c, face);
    let face_text = r
        .fields
        .iter()
        .find(|f| f.0 == "face")
        .map_or(String::new(), |f| match &f.2 {
            Value::Text(t) => t.clone(),
            _ => String::new(),
        });
    format!("{} {}", c.name, face_text)
}

/// The pattern picture for `a`, computed (not yet drawn).
pub fn pattern_plot(a: &PatternArgs) -> CliResult<(PatternPlot, Report)> {
    let c = crystal(&a.crystal)?;
    let (_, face) = face_of(c, &a.face)?;
    let g = a.gun.at_face(c, &face)?;
    let e = g.kinetic_ev()?;
    let tilt = check_angle(a.tilt, "tilt", TILT_MAX_DEG)?;
    let azimuth = check_angle(a.azimuth, "azimuth", 360.0)?;
    let inc = Incidence::new(e, tilt, azimuth).ctx("incidence")?;
    let screen = Screen::Hemisphere {
        radius_mm: a.radius,
        rim_deg: a.rim,
    };
    screen.validate().ctx(format_args!(
        "--radius {} --rim {} (accepted: radius above 0 and at most 100000 mm, rim above 0 and at most 90 deg)",
        a.radius, a.rim
    ))?;
    let shadow = matterwave_core::goniometer::check_gun_shadow(a.gun_shadow).ctx(format_args!(
        "--gun-shadow {} (accepted 0 to {GUN_SHADOW_MAX_DEG} deg)",
        a.gun_shadow
    ))?;
    let rig = a.rig.load()?;
    let title = format!(
        "{} · {} eV at the sample · tilt {}° · azimuth {}° · hemispherical screen",
        crystal_face(c, &face),
        e,
        tilt,
        azimuth
    );
    let plot = PatternPlot::compute(title, &face, inc, screen, shadow, rig, check_max(a.max)?)?;
    let mut r = Report::default();
    face_fields(&mut r, c, &face);
    g.fields(&mut r, e);
    calc::incidence_fields(&mut r, &inc);
    r.field("radius_mm", "screen radius (mm)", Value::F32(a.radius, 2));
    r.field("rim_deg", "rim (deg)", Value::F32(a.rim, 2));
    r.field("gun_shadow_deg", "gun shadow (deg)", Value::F32(shadow, 2));
    r.field("rig", "rig", Value::Text(plot.rig.name.clone()));
    r.field("count", "spots", Value::Int(plot.spots.len() as i64));
    r.field(
        "shadowed_count",
        "hidden by the gun",
        Value::Int(plot.spots.iter().filter(|s| s.shadowed).count() as i64),
    );
    calc::truncated_field(&mut r, plot.truncated);
    Ok((plot, r))
}

/// Writes the pattern picture to `t`.
pub fn write_pattern(p: &PatternPlot, t: &Target) -> CliResult<PatternDrawn> {
    style::render(p, t)
}

/// `mwctl plot pattern`: writes the picture, reports what it shows.
pub fn pattern(a: &PatternArgs) -> CliResult<Report> {
    let t = a.out.target()?;
    let (p, body) = pattern_plot(a)?;
    write_pattern(&p, &t)?;
    let mut r = Report::default();
    file_fields(&mut r, &t);
    r.fields.extend(body.fields);
    Ok(r)
}

/// The beam families of `face`: the beams at normal incidence at `energy_ev`, in the
/// one beam order, grouped by equal |g| (relative 1e-5), the first `n` groups.
pub fn families(face: &Face, energy_ev: f32, n: usize) -> CliResult<Vec<Family>> {
    let inc = Incidence::normal(energy_ev).ctx(format_args!("--to {energy_ev}"))?;
    let mut buf = vec![SurfaceBeam::EMPTY; 4096];
    let l = face.beams(&inc, &mut buf).ctx("beam listing")?;
    let mut out: Vec<Family> = Vec::new();
    for b in buf.iter().take(l.stored) {
        match out.last_mut() {
            Some(f) if (b.g_inv_a - f.g_inv_a).abs() <= 1.0e-5 * f.g_inv_a.max(1.0e-6) => {
                f.members += 1;
            }
            _ => {
                if out.len() == n {
                    break;
                }
                out.push(Family {
                    rod: b.rod,
                    g_inv_a: b.g_inv_a,
                    members: 1,
                });
            }
        }
    }
    Ok(out)
}

/// The tracks picture for `a`, computed (not yet drawn).
pub fn tracks_plot(a: &TracksArgs) -> CliResult<(TracksPlot, Report)> {
    let c = crystal(&a.crystal)?;
    let (_, face) = face_of(c, &a.face)?;
    let tilt = check_angle(a.tilt, "tilt", TILT_MAX_DEG)?;
    for (name, x) in [("from", a.from), ("to", a.to)] {
        matterwave_core::beam::wavelength_a(x)
            .ctx(format_args!("--{name} {x} (accepted 1 to 300000 eV)"))?;
    }
    if a.to <= a.from {
        return Err(CliError::new(format!(
            "--from {} --to {}: --to must be above --from",
            a.from, a.to
        )));
    }
    if !(1..=style::CURVES.len()).contains(&a.families) {
        return Err(CliError::new(format!(
            "--families {}: give 1 to {}",
            a.families,
            style::CURVES.len()
        )));
    }
    let rig = a.rig.load()?;
    let fams = families(&face, a.to, a.families)?;
    let title = format!(
        "{} · in-plane beam tracks · tilt {}° · rig {}",
        crystal_face(c, &face),
        tilt,
        rig.name
    );
    let mut r = Report::default();
    calc::crystal_face_fields(&mut r, c, &face);
    r.field("tilt_deg", "tilt (deg)", Value::F32(tilt, 3));
    r.field("from_ev", "from, at the sample (eV)", Value::F32(a.from, 3));
    r.field("to_ev", "to, at the sample (eV)", Value::F32(a.to, 3));
    r.field("rig", "rig", Value::Text(rig.name.clone()));
    let p = TracksPlot::compute(title, &face, tilt, a.from, a.to, fams, rig);
    r.field(
        "families",
        "beam families drawn",
        Value::Int(p.families.len() as i64),
    );
    r.field(
        "emergence_ev",
        "emergence energies in range (eV)",
        Value::List(
            p.tracks
                .iter()
                .filter_map(|t| t.emergence.map(|m| Value::F32(m.0 as f32, 3)))
                .collect(),
        ),
    );
    Ok((p, r))
}

/// Writes the tracks picture to `t`.
pub fn write_tracks(p: &TracksPlot, t: &Target) -> CliResult<Frame> {
    style::render(p, t)
}

/// `mwctl plot tracks`: writes the picture, reports what it shows.
pub fn tracks(a: &TracksArgs) -> CliResult<Report> {
    let t = a.out.target()?;
    let (p, body) = tracks_plot(a)?;
    write_tracks(&p, &t)?;
    let mut r = Report::default();
    file_fields(&mut r, &t);
    r.fields.extend(body.fields);
    Ok(r)
}

/// Writes the scan picture to `t`.
pub fn write_scan(p: &ScanPlot, t: &Target) -> CliResult<Frame> {
    style::render(p, t)
}

/// Writes the alignment picture to `t`.
pub fn write_align(p: &AlignPlot, t: &Target) -> CliResult<AlignDrawn> {
    style::render(p, t)
}

/// The target of a `--plot FILE` option of `scan` or `align` (default size), checked
/// before anything moves: an error names `--plot` and the extensions accepted.
pub fn plot_target(path: &std::path::Path) -> CliResult<Target> {
    FileKind::of(path, "--plot")?;
    Target::new(path, style::WIDTH_DEFAULT_PX, style::HEIGHT_DEFAULT_PX)
}

/// `mwctl plot …`.
pub fn run(cmd: &PlotCmd) -> CliResult<Report> {
    match cmd {
        PlotCmd::Pattern(a) => pattern(a),
        PlotCmd::Tracks(a) => tracks(a),
        PlotCmd::Scan(a) => scan::command(a),
    }
}
