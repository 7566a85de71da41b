//! `mwctl plot scan`: measured points (one column against another) with the predicted
//! positions overlaid as labelled vertical lines — the beams an arm sweep crosses
//! (`scan::SweepPlan::beams_crossed`) or the kinematic I-V maxima of one beam
//! (`Face::iv_peaks`), both from the core.
//!
//! The picture takes a plain [`ScanPlot`] (points and markers), so that any reader —
//! the two-column CSV read here, or a scan file — feeds it the same way.

use super::style::{self, Frame, Picture};
use super::OutArgs;
use crate::calc::{self, check_angle, crystal, face_of, parse_rod};
use crate::error::{CliError, CliResult, Context};
use crate::gonio::{csv_f32, read_csv, RigArgs};
use crate::output::{Report, Value};
use matterwave_core::goniometer::InView;
use matterwave_core::scan::SweepPlan;
use matterwave_core::surface::{Incidence, IvPeak, TILT_MAX_DEG};
use plotters::coord::Shift;
use plotters::element::DashedPathElement;
use plotters::prelude::*;
use std::path::PathBuf;

/// A predicted position on the x axis, with its label.
#[derive(Clone, Debug, PartialEq)]
pub struct Marker {
    /// Position, in the unit of the x axis.
    pub x: f64,
    /// Label, e.g. `(1,0)` or `(0,0) m=3`.
    pub label: String,
}

/// Everything the scan picture shows.
#[derive(Clone, Debug, PartialEq)]
pub struct ScanPlot {
    /// Title: what was scanned, crystal, face, energy, tilt.
    pub title: String,
    /// x axis label with its unit.
    pub x_label: String,
    /// y axis label with its unit.
    pub y_label: String,
    /// The measured points (x, y), in file order.
    pub points: Vec<(f64, f64)>,
    /// The predicted positions.
    pub markers: Vec<Marker>,
    /// What the markers are, for the key (e.g. "predicted beam positions").
    pub marker_label: String,
}

impl ScanPlot {
    /// The data ranges: the points' extent (and the markers' along x), padded by 4 %.
    pub fn ranges(&self) -> ((f64, f64), (f64, f64)) {
        let xs = self.points.iter().map(|p| p.0);
        let ys = self.points.iter().map(|p| p.1);
        let span = |it: &mut dyn Iterator<Item = f64>| {
            let (lo, hi) = it.fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
                (a.min(v), b.max(v))
            });
            if !lo.is_finite() {
                (0.0, 1.0)
            } else if hi - lo <= 0.0 {
                (lo - 0.5, hi + 0.5)
            } else {
                let pad = 0.04 * (hi - lo);
                (lo - pad, hi + pad)
            }
        };
        let x = span(&mut xs.chain(self.markers.iter().map(|m| m.x)));
        let y = span(&mut ys.into_iter());
        (x, y)
    }
}

impl Picture for ScanPlot {
    type Drawn = Frame;

    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<Frame, String> {
        let e = |x: DrawingAreaErrorKind<DB::ErrorType>| x.to_string();
        let (_, h) = root.dim_in_pixel();
        let title_px = (h / 28).clamp(14, 30);
        let body = root.titled(&self.title, style::text(title_px)).map_err(e)?;
        let label_px = (h / 45).clamp(10, 18);
        let (x, y) = self.ranges();
        let mut chart = ChartBuilder::on(&body)
            .margin(12)
            .margin_top(2 * label_px + 8)
            .x_label_area_size(2 * label_px + 16)
            .y_label_area_size(3 * label_px + 30)
            .build_cartesian_2d(x.0..x.1, y.0..y.1)
            .map_err(e)?;
        chart
            .configure_mesh()
            .max_light_lines(0)
            .bold_line_style(style::GRID)
            .x_desc(self.x_label.as_str())
            .y_desc(self.y_label.as_str())
            .label_style(style::text(label_px))
            .axis_desc_style(style::text(label_px))
            .draw()
            .map_err(e)?;
        let frame = Frame::of(chart.plotting_area(), x, y);
        let area = chart.plotting_area();
        let small = style::text(label_px.saturating_sub(2).max(9)).color(&style::PREDICTED);
        for m in &self.markers {
            area.draw(&DashedPathElement::new(
                vec![(m.x, y.0), (m.x, y.1)],
                6,
                4,
                style::PREDICTED.stroke_width(2),
            ))
            .map_err(e)?;
            area.draw(
                &(EmptyElement::at((m.x, y.0))
                    + Text::new(m.label.clone(), (3, -(label_px as i32) - 6), small.clone())),
            )
            .map_err(e)?;
        }
        chart
            .draw_series(std::iter::once(PathElement::new(
                self.points.clone(),
                style::BEAM.stroke_width(1),
            )))
            .map_err(e)?
            .label("measured")
            .legend(|(x, y)| Circle::new((x + 10, y), 3, style::BEAM.filled()));
        chart
            .draw_series(
                self.points
                    .iter()
                    .map(|&p| Circle::new(p, 3, style::BEAM.filled())),
            )
            .map_err(e)?;
        if !self.markers.is_empty() {
            chart
                .draw_series(std::iter::empty::<PathElement<(f64, f64)>>())
                .map_err(e)?
                .label(self.marker_label.as_str())
                .legend(|(x, y)| {
                    PathElement::new(vec![(x, y), (x + 20, y)], style::PREDICTED.stroke_width(2))
                });
        }
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::UpperRight)
            .background_style(style::BACKGROUND.mix(0.85))
            .border_style(style::GRID)
            .label_font(style::text(label_px))
            .draw()
            .map_err(e)?;
        Ok(frame)
    }
}

/// The beams an arm sweep from `from_deg` to `to_deg` at `elevation_deg` crosses
/// (within the rig's acceptance of the sweep's elevation), as markers at their arm
/// angles labelled (h,k): the core's `SweepPlan::beams_crossed`, at most 512.
pub fn beam_markers(
    rig: &matterwave_core::goniometer::Rig,
    face: &matterwave_core::surface::Face,
    inc: Incidence,
    elevation_deg: f32,
    from_deg: f32,
    to_deg: f32,
) -> matterwave_core::Result<Vec<Marker>> {
    let step = ((to_deg - from_deg) / 1000.0).max(1.0e-3);
    let plan = SweepPlan::new(*rig, *face, inc, elevation_deg, from_deg, to_deg, step)?;
    let mut buf = vec![InView::EMPTY; 512];
    let l = plan.beams_crossed(&mut buf)?;
    Ok(buf
        .iter()
        .take(l.stored)
        .map(|v| Marker {
            x: f64::from(v.arm_deg),
            label: format!("({},{})", v.beam.rod[0], v.beam.rod[1]),
        })
        .collect())
}

/// The kinematic I-V maxima of rod `rod` from `from_ev` to `to_ev` (outside, eV) with
/// inner potential `v0_ev` at the tilt and azimuth of `inc`, as markers labelled with
/// their order m: the core's `Face::iv_peaks`, at most 256.
pub fn iv_markers(
    face: &matterwave_core::surface::Face,
    rod: [i32; 2],
    inc: &Incidence,
    v0_ev: f32,
    from_ev: f32,
    to_ev: f32,
) -> matterwave_core::Result<Vec<Marker>> {
    let mut buf = vec![IvPeak::EMPTY; 256];
    let l = face.iv_peaks(rod, inc, v0_ev, from_ev, to_ev, &mut buf)?;
    Ok(buf
        .iter()
        .take(l.stored)
        .map(|p| Marker {
            x: f64::from(p.energy_ev),
            label: format!("m={}", p.order),
        })
        .collect())
}

/// What to predict on a scan.
#[derive(Clone, Copy, Debug, PartialEq, Eq, clap::ValueEnum)]
pub enum Predict {
    /// Nothing: the points only.
    None,
    /// The beams an arm sweep over the x range crosses (x: arm angle, degrees).
    Beams,
    /// The kinematic I-V maxima of --beam over the x range (x: energy at the sample, eV).
    Iv,
}

/// The options of `mwctl plot scan`.
#[derive(Clone, Debug, clap::Args)]
pub struct ScanArgs {
    /// A scan file written by `mwctl scan` (docs/SCAN.md): its current against the arm
    /// angle (sweep) or the energy at the sample (track, iv), with the predictions of
    /// the plan it records. Or give --input with --x and --y instead.
    #[arg(value_name = "SCAN_FILE", required_unless_present = "input", conflicts_with_all = ["input", "x", "y", "predict"])]
    pub file: Option<PathBuf>,
    /// Any CSV with a header row naming the columns (`#` lines skipped), with --x, --y.
    #[arg(long, value_name = "FILE", requires_all = ["x", "y"])]
    pub input: Option<PathBuf>,
    /// With --input: the column along x.
    #[arg(long, value_name = "COLUMN")]
    pub x: Option<String>,
    /// With --input: the column along y.
    #[arg(long, value_name = "COLUMN")]
    pub y: Option<String>,
    /// What to overlay: `beams` (x is the arm angle, deg) or `iv` (x is the energy at
    /// the sample, eV); both need --crystal and --face.
    #[arg(long, value_enum, default_value_t = Predict::None)]
    pub predict: Predict,
    /// Crystal id, for the prediction.
    #[arg(long, value_name = "ID")]
    pub crystal: Option<String>,
    /// Face, for the prediction.
    #[arg(long, value_name = "HKL", allow_hyphen_values = true)]
    pub face: Option<String>,
    /// Energy at the sample of an arm sweep, eV (with --predict beams).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "EV")]
    pub energy: Option<f32>,
    /// Sample tilt α, degrees.
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG", default_value_t = 0.0)]
    pub tilt: f32,
    /// Sample azimuth φ, degrees.
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG", default_value_t = 0.0)]
    pub azimuth: f32,
    /// Detector elevation during an arm sweep, degrees.
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG", default_value_t = 0.0)]
    pub elevation: f32,
    /// The beam H,K whose I-V maxima are marked (with --predict iv).
    #[arg(long, value_name = "H,K", allow_hyphen_values = true)]
    pub beam: Option<String>,
    /// Inner potential V0 for the I-V maxima, eV; default the table's value for the face.
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "EV")]
    pub inner_potential: Option<f32>,
    /// The rig (its detector acceptance decides which beams an arm sweep crosses).
    #[command(flatten)]
    pub rig: RigArgs,
    /// The file.
    #[command(flatten)]
    pub out: OutArgs,
}

/// Reads the two columns `x`, `y` of the CSV at `input`.
fn read_points(input: &std::path::Path, x: &str, y: &str) -> CliResult<Vec<(f64, f64)>> {
    let (xc, yc) = (x.to_ascii_lowercase(), y.to_ascii_lowercase());
    let rows = read_csv(input, &[xc.as_str(), yc.as_str()])?;
    let mut pts = Vec::with_capacity(rows.len());
    for r in &rows {
        let x = csv_f32(input, r, 0, &xc)?;
        let y = csv_f32(input, r, 1, &yc)?;
        pts.push((f64::from(x), f64::from(y)));
    }
    if pts.is_empty() {
        return Err(CliError::new(format!(
            "--input {}: no data rows under the header",
            input.display()
        )));
    }
    Ok(pts)
}

/// The scan picture for `a`, computed (not yet drawn), and its summary.
pub fn scan_plot(a: &ScanArgs) -> CliResult<(ScanPlot, Report)> {
    if let Some(f) = &a.file {
        return super::scan_file::plot_of(f, &a.rig);
    }
    let (Some(input), Some(ax), Some(ay)) = (&a.input, &a.x, &a.y) else {
        return Err(CliError::new(
            "give a scan file of mwctl scan, or --input FILE --x COLUMN --y COLUMN",
        ));
    };
    let points = read_points(input, ax, ay)?;
    let (lo, hi) = points
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), p| {
            (l.min(p.0), h.max(p.0))
        });
    let mut r = Report::default();
    r.field("input", "input", Value::Text(input.display().to_string()));
    r.field("points", "points", Value::Int(points.len() as i64));
    let word = match a.predict {
        Predict::Beams => "beams",
        Predict::Iv => "iv",
        Predict::None => "none",
    };
    let need = |v: &Option<String>, name: &str, meta: &str| {
        v.clone().ok_or_else(|| {
            CliError::new(format!(
                "--predict {word} needs --{name} {meta} (--predict beams: --crystal, --face, --energy; iv: --crystal, --face, --beam)"
            ))
        })
    };
    let mut title = format!("{ay} against {ax}");
    let (markers, marker_label) = match a.predict {
        Predict::None => (Vec::new(), String::new()),
        Predict::Beams | Predict::Iv => {
            let c = crystal(&need(&a.crystal, "crystal", "ID")?)?;
            let (_, face) = face_of(c, &need(&a.face, "face", "HKL")?)?;
            let tilt = check_angle(a.tilt, "tilt", TILT_MAX_DEG)?;
            let azimuth = check_angle(a.azimuth, "azimuth", 360.0)?;
            title = format!(
                "{} · {title} · tilt {tilt}° · azimuth {azimuth}°",
                super::crystal_face(c, &face)
            );
            calc::crystal_face_fields(&mut r, c, &face);
            r.field("tilt_deg", "tilt (deg)", Value::F32(tilt, 3));
            r.field("azimuth_deg", "azimuth (deg)", Value::F32(azimuth, 3));
            if a.predict == Predict::Beams {
                let e = a.energy.ok_or_else(|| {
                    CliError::new("--predict beams needs --energy EV (the energy of the sweep, at the sample)")
                })?;
                let inc = Incidence::new(e, tilt, azimuth).ctx(format_args!("--energy {e}"))?;
                let rig = a.rig.load()?;
                let m = beam_markers(&rig.rig, &face, inc, a.elevation, lo as f32, hi as f32)
                    .map_err(|e| {
                        CliError::core(
                            e,
                            format_args!("--x {ax} from {lo} to {hi} (arm angles, deg)"),
                        )
                    })?;
                title = format!("{title} · {e} eV");
                r.field("energy_ev", "energy at sample (eV)", Value::F32(e, 3));
                r.field("rig", "rig", Value::Text(rig.name));
                (m, "predicted beam arm angles".to_string())
            } else {
                let rod = parse_rod(&need(&a.beam, "beam", "H,K")?)?;
                let v0 = match a.inner_potential {
                    Some(v) => v,
                    None => c.inner_potential_for(face.miller).ok_or_else(|| {
                        CliError::new("--predict iv: the table has no inner potential for this face; give --inner-potential EV")
                    })?,
                };
                let inc = Incidence::new(hi as f32, tilt, azimuth).ctx("incidence")?;
                let m =
                    iv_markers(&face, rod, &inc, v0, lo as f32, hi as f32).ctx(format_args!(
                        "--beam {},{} --inner-potential {v0} over {lo} to {hi} eV",
                        rod[0], rod[1]
                    ))?;
                title = format!("{title} · beam ({},{}) · V0 {v0} eV", rod[0], rod[1]);
                r.field(
                    "beam",
                    "beam",
                    Value::Text(format!("{},{}", rod[0], rod[1])),
                );
                r.field(
                    "inner_potential_ev",
                    "inner potential (eV)",
                    Value::F32(v0, 2),
                );
                (m, "predicted kinematic I-V maxima".to_string())
            }
        }
    };
    r.field(
        "predicted",
        "predicted positions",
        Value::List(markers.iter().map(|m| Value::F32(m.x as f32, 3)).collect()),
    );
    let plot = ScanPlot {
        title,
        x_label: with_unit(ax),
        y_label: with_unit(ay),
        points,
        markers,
        marker_label,
    };
    Ok((plot, r))
}

/// A column name with the unit its suffix names (units in names: `energy_ev`,
/// `arm_deg`), for an axis label.
pub(crate) fn with_unit(column: &str) -> String {
    let c = column.to_ascii_lowercase();
    let unit = [("_ev", "eV"), ("_deg", "deg"), ("_mm", "mm"), ("_s", "s")]
        .iter()
        .find(|(suffix, _)| c.ends_with(suffix))
        .map(|(_, u)| *u);
    match unit {
        Some(u) => format!("{column} ({u})"),
        None => column.to_string(),
    }
}

/// `mwctl plot scan`.
pub fn command(a: &ScanArgs) -> CliResult<Report> {
    let t = a.out.target()?;
    let (p, body) = scan_plot(a)?;
    super::write_scan(&p, &t)?;
    let mut r = Report::default();
    super::file_fields(&mut r, &t);
    r.fields.extend(body.fields);
    Ok(r)
}
