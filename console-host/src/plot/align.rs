//! The picture of an alignment (`mwctl align --plot FILE`): the arm angle of every
//! centred peak against the nominal gun energy with its 1σ, over the model tracks of
//! those beams before the fit (arm zero 0, the controller's energy offset) and after it
//! (the fitted arm zero and energy offset applied), and below, the residuals in degrees.
//! The model values are the core's (`fit::in_plane_arm_at_offsets_deg`, the model the
//! fit itself uses); nothing here computes geometry.

use super::style::{self, Frame, Picture};
use crate::align::Alignment;
use crate::error::CliResult;
use matterwave_core::fit::{in_plane_arm_at_offsets_deg, BeamArm};
use plotters::coord::Shift;
use plotters::element::DashedPathElement;
use plotters::prelude::*;

/// Energies sampled along each model track.
const TRACK_SAMPLES: usize = 200;

/// One beam on one branch: its model track before and after the fit.
#[derive(Clone, Debug, PartialEq)]
pub struct AlignTrack {
    /// The beam's rod.
    pub rod: [i32; 2],
    /// The branch (+1, −1).
    pub branch: i8,
    /// (nominal energy eV, arm angle deg) of the model before the fit; a run breaks
    /// where the beam does not emerge.
    pub before: Vec<(f64, f64)>,
    /// The same after the fit.
    pub after: Vec<(f64, f64)>,
}

impl AlignTrack {
    /// "(1,0) branch +1".
    pub fn label(&self) -> String {
        format!("({},{}) branch {:+}", self.rod[0], self.rod[1], self.branch)
    }
}

/// One centred peak.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct AlignPoint {
    /// Index into [`AlignPlot::tracks`] of its beam and branch.
    pub track: usize,
    /// Nominal gun energy, eV.
    pub nominal_ev: f64,
    /// Centred arm angle, degrees.
    pub arm_deg: f64,
    /// Its 1σ, degrees.
    pub sigma_deg: f64,
    /// Measured minus the fitted model, degrees.
    pub residual_deg: f64,
}

/// Everything the alignment picture shows.
#[derive(Clone, Debug, PartialEq)]
pub struct AlignPlot {
    /// Title: crystal, face, tilt and the fitted values ± σ.
    pub title: String,
    /// The energy range drawn, nominal eV.
    pub energy_ev: (f64, f64),
    /// One per beam and branch measured, in the order first measured.
    pub tracks: Vec<AlignTrack>,
    /// The centred peaks.
    pub points: Vec<AlignPoint>,
    /// Key text of the model before the fit (lines split at `\n`).
    pub before_label: String,
    /// Key text of the model after the fit (lines split at `\n`).
    pub after_label: String,
}

/// What drawing the picture tells: the frames of its two panels.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct AlignDrawn {
    /// Arm angle (deg) against nominal energy (eV).
    pub arm: Frame,
    /// Residual (deg) against nominal energy (eV).
    pub residual: Frame,
}

impl AlignPlot {
    /// The picture of `a`: its peaks, and the core's model of each beam and branch at
    /// the offsets before ([0, the controller's offset]) and after the fit.
    pub fn compute(a: &Alignment) -> CliResult<AlignPlot> {
        let (lo, hi) = a
            .measured
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), m| {
                let e = f64::from(m.nominal_ev);
                (l.min(e), h.max(e))
            });
        let (lo, hi) = if lo.is_finite() {
            let pad = (0.05 * (hi - lo)).max(5.0);
            (lo - pad, hi + pad)
        } else {
            (0.0, 1.0)
        };
        let before_params = [0.0, a.offset_ev];
        let model = |rod: [i32; 2], branch: i8, params: [f32; 2]| -> Vec<(f64, f64)> {
            (0..=TRACK_SAMPLES)
                .filter_map(|i| {
                    let e = lo + (hi - lo) * i as f64 / TRACK_SAMPLES as f64;
                    let p = BeamArm {
                        rod,
                        branch,
                        nominal_ev: e as f32,
                        arm_deg: 0.0,
                    };
                    in_plane_arm_at_offsets_deg(&a.surface, a.tilt_deg, a.contact_ev, params, &p)
                        .ok()
                        .map(|v| (e, f64::from(v)))
                })
                .collect()
        };
        let mut tracks: Vec<AlignTrack> = Vec::new();
        let mut points = Vec::new();
        for m in &a.measured {
            let i = match tracks
                .iter()
                .position(|t| t.rod == m.rod && t.branch == m.branch)
            {
                Some(i) => i,
                None => {
                    tracks.push(AlignTrack {
                        rod: m.rod,
                        branch: m.branch,
                        before: model(m.rod, m.branch, before_params),
                        after: model(m.rod, m.branch, a.fit.params),
                    });
                    tracks.len() - 1
                }
            };
            points.push(AlignPoint {
                track: i,
                nominal_ev: f64::from(m.nominal_ev),
                arm_deg: f64::from(m.arm_deg),
                sigma_deg: f64::from(m.sigma_deg),
                residual_deg: f64::from(m.residual_deg),
            });
        }
        let name = crate::calc::crystal(&a.crystal)
            .map(|c| super::crystal_face(c, &a.surface))
            .unwrap_or_else(|_| format!("{} ({})", a.crystal, a.face));
        let title = format!(
            "{name} · alignment · tilt {:.3}° · arm zero {:+.4} ± {:.4}° · energy offset {:+.3} ± {:.3} eV",
            a.tilt_deg,
            a.arm_zero_deg(),
            a.fit.sigma[0],
            a.energy_offset_ev(),
            a.fit.sigma[1]
        );
        Ok(AlignPlot {
            title,
            energy_ev: (lo, hi),
            tracks,
            points,
            before_label: format!(
                "model before the fit\n(arm zero 0°, offset {:+.3} eV)",
                a.offset_ev
            ),
            after_label: "model after the fit\n(fitted arm zero, offset)".into(),
        })
    }

    /// The arm-angle range: the peaks ± σ and the model tracks within the energy range,
    /// padded by 6 %.
    pub fn arm_range(&self) -> (f64, f64) {
        let vals = self
            .points
            .iter()
            .flat_map(|p| [p.arm_deg - p.sigma_deg, p.arm_deg + p.sigma_deg])
            .chain(
                self.tracks
                    .iter()
                    .flat_map(|t| t.before.iter().chain(&t.after).map(|q| q.1)),
            );
        pad(vals, 0.06)
    }

    /// The residual range: symmetric about 0, covering every residual ± σ with 20 %
    /// to spare.
    pub fn residual_range(&self) -> (f64, f64) {
        let m = self
            .points
            .iter()
            .map(|p| p.residual_deg.abs() + p.sigma_deg)
            .filter(|v| v.is_finite())
            .fold(0.0f64, f64::max);
        let m = if m > 0.0 { 1.2 * m } else { 0.01 };
        (-m, m)
    }
}

impl AlignPlot {
    /// The key, in its own strip `area`: the two models, then each beam and branch in
    /// its colour.
    fn draw_key<DB: DrawingBackend>(
        &self,
        area: &DrawingArea<DB, Shift>,
        label_px: u32,
    ) -> Result<(), DrawingAreaErrorKind<DB::ErrorType>> {
        let size = label_px.saturating_sub(2).max(9);
        let line = (size + 8) as i32;
        let font = style::text(size);
        let mut y = 3 * line;
        let row = |y: &mut i32, text: &str| -> Result<(), DrawingAreaErrorKind<DB::ErrorType>> {
            area.draw(&Text::new(
                text.to_string(),
                (34, *y - (size as i32) / 2),
                font.clone(),
            ))?;
            *y += line;
            Ok(())
        };
        area.draw(&DashedPathElement::new(
            vec![(6, y), (28, y)],
            5,
            3,
            style::HIDDEN.stroke_width(2),
        ))?;
        for t in self.before_label.split('\n') {
            row(&mut y, t)?;
        }
        area.draw(&PathElement::new(
            vec![(6, y), (28, y)],
            style::INK.stroke_width(2),
        ))?;
        for t in self.after_label.split('\n') {
            row(&mut y, t)?;
        }
        y += line / 2;
        for (i, t) in self.tracks.iter().enumerate() {
            area.draw(&Circle::new((17, y), 4, track_colour(i).filled()))?;
            row(&mut y, &t.label())?;
        }
        y += line / 2;
        area.draw(&PathElement::new(
            vec![(17, y - 7), (17, y + 7)],
            style::INK.stroke_width(1),
        ))?;
        row(&mut y, "centred peak ± 1σ")?;
        Ok(())
    }
}

/// The extent of `vals` (finite ones), padded by `frac` of it (±0.5 when flat).
fn pad(vals: impl Iterator<Item = f64>, frac: f64) -> (f64, f64) {
    let (lo, hi) = vals
        .filter(|v| v.is_finite())
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
            (a.min(v), b.max(v))
        });
    if !lo.is_finite() {
        (0.0, 1.0)
    } else if hi - lo <= 0.0 {
        (lo - 0.5, hi + 0.5)
    } else {
        let p = frac * (hi - lo);
        (lo - p, hi + p)
    }
}

/// The colour of track `i`.
pub fn track_colour(i: usize) -> RGBColor {
    style::CURVES
        .get(i % style::CURVES.len())
        .copied()
        .unwrap_or(style::BEAM)
}

impl Picture for AlignPlot {
    type Drawn = AlignDrawn;

    fn draw<DB: DrawingBackend>(
        &self,
        root: &DrawingArea<DB, Shift>,
    ) -> Result<AlignDrawn, String> {
        let e = |x: DrawingAreaErrorKind<DB::ErrorType>| x.to_string();
        let (_, h) = root.dim_in_pixel();
        let title_px = (h / 36).clamp(12, 24);
        let body = root.titled(&self.title, style::text(title_px)).map_err(e)?;
        let label_px = (h / 45).clamp(10, 18);
        let (bw, bh) = body.dim_in_pixel();
        // The key in a strip of its own on the right: nothing drawn under it.
        let key_w = (bw * 24 / 100).clamp(150, 360);
        let (panels, key) = body.split_horizontally(bw.saturating_sub(key_w));
        let (upper, lower) = panels.split_vertically(bh * 68 / 100);
        let x = self.energy_ev;
        let y = self.arm_range();
        let y_area = 3 * label_px + 30;
        let mut chart = ChartBuilder::on(&upper)
            .margin(12)
            .x_label_area_size(label_px + 10)
            .y_label_area_size(y_area)
            .build_cartesian_2d(x.0..x.1, y.0..y.1)
            .map_err(e)?;
        chart
            .configure_mesh()
            .max_light_lines(0)
            .bold_line_style(style::GRID)
            .y_desc("arm angle (deg)")
            .x_label_formatter(&style::whole)
            .y_label_formatter(&style::whole)
            .label_style(style::text(label_px))
            .axis_desc_style(style::text(label_px))
            .draw()
            .map_err(e)?;
        let arm = Frame::of(chart.plotting_area(), x, y);
        // Every run of a track: a break where the beam does not emerge.
        let runs = |pts: &[(f64, f64)]| -> Vec<Vec<(f64, f64)>> {
            let step = (x.1 - x.0) / TRACK_SAMPLES as f64;
            let mut out: Vec<Vec<(f64, f64)>> = Vec::new();
            for &p in pts {
                match out.last_mut() {
                    Some(r) if r.last().is_some_and(|q| p.0 - q.0 < 1.5 * step) => r.push(p),
                    _ => out.push(vec![p]),
                }
            }
            out
        };
        for (i, t) in self.tracks.iter().enumerate() {
            for r in runs(&t.before) {
                chart
                    .plotting_area()
                    .draw(&DashedPathElement::new(
                        r,
                        7,
                        5,
                        style::HIDDEN.stroke_width(2),
                    ))
                    .map_err(e)?;
            }
            let c = track_colour(i);
            for r in runs(&t.after) {
                chart
                    .plotting_area()
                    .draw(&PathElement::new(r, c.stroke_width(2)))
                    .map_err(e)?;
            }
        }
        self.draw_key(&key, label_px).map_err(e)?;
        // The peaks last, over the tracks: none hidden.
        for p in &self.points {
            let c = track_colour(p.track);
            let area = chart.plotting_area();
            area.draw(&PathElement::new(
                vec![
                    (p.nominal_ev, p.arm_deg - p.sigma_deg),
                    (p.nominal_ev, p.arm_deg + p.sigma_deg),
                ],
                c.stroke_width(1),
            ))
            .map_err(e)?;
            area.draw(&Circle::new((p.nominal_ev, p.arm_deg), 4, c.filled()))
                .map_err(e)?;
        }

        let ry = self.residual_range();
        let mut res = ChartBuilder::on(&lower)
            .margin(12)
            .margin_top(4)
            .x_label_area_size(2 * label_px + 16)
            .y_label_area_size(y_area)
            .build_cartesian_2d(x.0..x.1, ry.0..ry.1)
            .map_err(e)?;
        res.configure_mesh()
            .max_light_lines(0)
            .bold_line_style(style::GRID)
            .x_desc("nominal gun energy (eV)")
            .y_desc("residual (deg)")
            .x_label_formatter(&style::whole)
            .label_style(style::text(label_px))
            .axis_desc_style(style::text(label_px))
            .draw()
            .map_err(e)?;
        let residual = Frame::of(res.plotting_area(), x, ry);
        res.plotting_area()
            .draw(&PathElement::new(
                vec![(x.0, 0.0), (x.1, 0.0)],
                style::INK.stroke_width(1),
            ))
            .map_err(e)?;
        for p in &self.points {
            let c = track_colour(p.track);
            res.plotting_area()
                .draw(&PathElement::new(
                    vec![
                        (p.nominal_ev, p.residual_deg - p.sigma_deg),
                        (p.nominal_ev, p.residual_deg + p.sigma_deg),
                    ],
                    c.stroke_width(1),
                ))
                .map_err(e)?;
            res.plotting_area()
                .draw(&Circle::new((p.nominal_ev, p.residual_deg), 4, c.filled()))
                .map_err(e)?;
        }
        Ok(AlignDrawn { arm, residual })
    }
}
