//! `mwctl plot scan SCAN_FILE`: a file of `mwctl scan` (docs/SCAN.md, read by its one
//! reader, `scan::csv::ScanFile`) as a [`ScanPlot`]: the current of every measured row
//! against the arm angle (a sweep) or the energy at the sample (a track or I-V run),
//! with the predictions of the plan the file records — the beams the sweep crosses (the
//! core's `beam_markers` at the crystal, face, energy, tilt and azimuth of the header)
//! or the I-V maxima the controller marked on the rows (`peak_ev`, moved from the gun
//! setting to the energy at the sample by each row's own correction).

use super::scan::{beam_markers, with_unit, Marker, ScanPlot};
use crate::calc::{crystal, face_of};
use crate::error::{CliError, CliResult};
use crate::gonio::RigArgs;
use crate::link::session::reply_field;
use crate::output::{Report, Value};
use crate::scan::csv::ScanFile;
use matterwave_core::surface::Incidence;
use std::path::Path;

/// A number of header line `device_get`, e.g. `tilt`.
fn setting(f: &ScanFile, key: &str) -> Option<f32> {
    f.get("device_get")
        .and_then(|g| reply_field(g, key))
        .and_then(|v| v.parse::<f32>().ok())
}

/// The picture of the scan file at `path`, and its summary. `rig` gives the detector
/// acceptance for the beams a sweep crosses (default: the built-in rig's).
pub fn plot_of(path: &Path, rig: &RigArgs) -> CliResult<(ScanPlot, Report)> {
    let f = ScanFile::read(path)?;
    let kind = f.get("kind").unwrap_or("").to_string();
    let sweep = kind == "sweep";
    let xcol = if sweep { "arm_deg" } else { "sample_ev" };
    let points: Vec<(f64, f64)> = f
        .rows
        .iter()
        .filter_map(|r| {
            let x = if sweep { r.angles_deg[0] } else { r.sample_ev };
            x.zip(r.current)
        })
        .collect();
    if points.is_empty() {
        return Err(CliError::new(format!(
            "{}: no measured rows (every point unreachable or refused, or none yet)",
            path.display()
        )));
    }
    let get = |k: &str| f.get("device_get").and_then(|g| reply_field(g, k));
    let crystal_id = get("crystal").unwrap_or("").to_string();
    let face_text = get("face").unwrap_or("").to_string();
    let tilt = setting(&f, "tilt").unwrap_or(0.0);
    let mut title = format!("{kind} scan · current against {xcol}");
    let mut r = Report::default();
    r.field("input", "input", Value::Text(path.display().to_string()));
    r.field("points", "points", Value::Int(points.len() as i64));
    r.field("kind", "scan kind", Value::Text(kind.clone()));
    let mut markers = Vec::new();
    let mut marker_label = String::new();
    if let (Ok(c), false) = (crystal(&crystal_id), face_text.is_empty()) {
        let (_, face) = face_of(c, &face_text)?;
        title = format!("{} · {title} · tilt {tilt}°", super::crystal_face(c, &face));
        if sweep {
            let e = setting(&f, "kinetic").unwrap_or(f32::NAN);
            let azimuth = f.rows.iter().find_map(|r| r.angles_deg[3]).unwrap_or(0.0) as f32;
            let elevation = f.rows.iter().find_map(|r| r.angles_deg[1]).unwrap_or(0.0) as f32;
            let (lo, hi) = points
                .iter()
                .fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), p| {
                    (l.min(p.0), h.max(p.0))
                });
            let mut rg = rig.load()?.rig;
            if let Some(acc) = setting(&f, "acceptance") {
                rg.acceptance_deg = acc;
            }
            if let Ok(inc) = Incidence::new(e, tilt, azimuth) {
                markers = beam_markers(&rg, &face, inc, elevation, lo as f32, hi as f32).map_err(
                    |er| CliError::core(er, format_args!("{}: the sweep's beams", path.display())),
                )?;
                title = format!("{title} · {e} eV");
                marker_label = "predicted beam arm angles".into();
            }
        } else {
            // The controller's own marks: the I-V maxima at the points it lies at.
            for row in &f.rows {
                let (Some(p), Some(n), Some(s)) = (row.peak_ev, row.nominal_ev, row.sample_ev)
                else {
                    continue;
                };
                let x = p + (s - n);
                if !markers.iter().any(|m: &Marker| (m.x - x).abs() < 1e-6) {
                    markers.push(Marker {
                        x,
                        label: format!("{x:.1} eV"),
                    });
                }
            }
            if let Some(b) = get("beam") {
                title = format!("{title} · beam ({b})");
            }
            marker_label = "predicted kinematic I-V maxima".into();
        }
    }
    r.field(
        "predicted",
        "predicted positions",
        Value::List(markers.iter().map(|m| Value::F32(m.x as f32, 3)).collect()),
    );
    Ok((
        ScanPlot {
            title,
            x_label: with_unit(xcol),
            y_label: format!(
                "current ({})",
                f.get("current_unit").unwrap_or("board's unit")
            ),
            points,
            markers,
            marker_label,
        },
        r,
    ))
}
