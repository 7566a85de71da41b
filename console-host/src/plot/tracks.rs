//! `mwctl plot tracks`: where the arm must go for each beam as the energy changes, in
//! in-plane mode (the sample turned so the beam stays in the scattering plane): the arm
//! angle δ = α + θ_out of every beam family against the energy, both branches, with the
//! arm's soft limits and forbidden zones shaded and each branch's emergence energy
//! marked. The arm angles and emergence energies are the core's
//! (`goniometer::in_plane_arm_deg`, `in_plane_branch_emergence_ev`); this file draws.

use super::style::{self, Frame, Picture};
use crate::rig::RigFile;
use matterwave_core::goniometer;
use matterwave_core::surface::Face;
use plotters::coord::Shift;
use plotters::element::DashedPathElement;
use plotters::prelude::*;

/// Energies each track is sampled at (evenly over the range).
pub const SAMPLES: usize = 600;

/// One beam family of the tracks picture: the rods of one |g| share one in-plane track.
#[derive(Clone, Debug, PartialEq)]
pub struct Family {
    /// The first rod of the family in the one beam order (its label).
    pub rod: [i32; 2],
    /// |g|, 1/Å.
    pub g_inv_a: f32,
    /// How many rods of the face have this |g|.
    pub members: usize,
}

/// One branch's track: arm angle against energy, split where the beam does not exist.
#[derive(Clone, Debug, PartialEq)]
pub struct Track {
    /// Index into [`TracksPlot::families`].
    pub family: usize,
    /// +1 (g along +e1) or −1.
    pub branch: i8,
    /// Runs of (energy at the sample eV, arm angle deg) where the beam exists.
    pub runs: Vec<Vec<(f64, f64)>>,
    /// (energy eV, arm angle deg) where the branch emerges, when inside the range.
    pub emergence: Option<(f64, f64)>,
}

/// Everything the tracks picture shows, computed by the core before anything is drawn.
#[derive(Clone, Debug)]
pub struct TracksPlot {
    /// Title: crystal, face, tilt, rig.
    pub title: String,
    /// Energy range at the sample, eV.
    pub from_ev: f32,
    /// Upper end of the range, eV.
    pub to_ev: f32,
    /// The rig whose arm limits and zones are shaded.
    pub rig: RigFile,
    /// The families, lowest |g| first (the specular beam first).
    pub families: Vec<Family>,
    /// Their tracks.
    pub tracks: Vec<Track>,
}

impl TracksPlot {
    /// Samples every branch of every family over `from_ev..=to_ev` (at the sample) at
    /// tilt `tilt_deg`, with the core's in-plane arm angle and emergence energies.
    pub fn compute(
        title: String,
        face: &Face,
        tilt_deg: f32,
        from_ev: f32,
        to_ev: f32,
        families: Vec<Family>,
        rig: RigFile,
    ) -> TracksPlot {
        let mut tracks = Vec::new();
        for (i, fam) in families.iter().enumerate() {
            let branches: &[i8] = if fam.g_inv_a > 0.0 { &[1, -1] } else { &[1] };
            for &branch in branches {
                let mut runs = vec![Vec::new()];
                for j in 0..SAMPLES {
                    let e = from_ev + (to_ev - from_ev) * j as f32 / (SAMPLES - 1) as f32;
                    match goniometer::in_plane_arm_deg(face, fam.rod, tilt_deg, branch, e) {
                        Ok(arm) => {
                            if let Some(r) = runs.last_mut() {
                                r.push((f64::from(e), f64::from(arm)));
                            }
                        }
                        Err(_) => {
                            if runs.last().is_some_and(|r| !r.is_empty()) {
                                runs.push(Vec::new());
                            }
                        }
                    }
                }
                runs.retain(|r| !r.is_empty());
                let emergence =
                    goniometer::in_plane_branch_emergence_ev(face, fam.rod, tilt_deg, branch)
                        .filter(|e| (from_ev..=to_ev).contains(e))
                        .and_then(|e| {
                            // Just above it, where the beam exists (grazing exit, δ = α ± 90°).
                            let at = e * (1.0 + 1.0e-5);
                            goniometer::in_plane_arm_deg(face, fam.rod, tilt_deg, branch, at)
                                .ok()
                                .map(|arm| (f64::from(e), f64::from(arm)))
                        });
                // The curve starts at the emergence point, not at the first sample after it.
                let step = f64::from(to_ev - from_ev) / (SAMPLES - 1) as f64;
                if let Some(m) = emergence {
                    if let Some(r) = runs.iter_mut().find(|r| {
                        r.first()
                            .is_some_and(|p| p.0 >= m.0 && p.0 - m.0 <= step * 1.01)
                    }) {
                        r.insert(0, m);
                    }
                }
                tracks.push(Track {
                    family: i,
                    branch,
                    runs,
                    emergence,
                });
            }
        }
        TracksPlot {
            title,
            from_ev,
            to_ev,
            rig,
            families,
            tracks,
        }
    }
}

impl Picture for TracksPlot {
    type Drawn = Frame;

    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<Frame, String> {
        let e = |x: DrawingAreaErrorKind<DB::ErrorType>| x.to_string();
        let (w, h) = root.dim_in_pixel();
        let title_px = (h / 28).clamp(14, 30);
        let body = root.titled(&self.title, style::text(title_px)).map_err(e)?;
        let (bw, _) = body.dim_in_pixel();
        let (plot, panel) = body.split_horizontally(bw - (w / 4).clamp(150, 320));
        let label_px = (h / 45).clamp(10, 18);
        let x = (f64::from(self.from_ev), f64::from(self.to_ev));
        let y = (-180.0, 180.0);
        let mut chart = ChartBuilder::on(&plot)
            .margin(10)
            .x_label_area_size(2 * label_px + 16)
            .y_label_area_size(3 * label_px + 24)
            .build_cartesian_2d(x.0..x.1, y.0..y.1)
            .map_err(e)?;
        chart
            .configure_mesh()
            .max_light_lines(0)
            .bold_line_style(style::GRID)
            .y_labels(13)
            .x_desc("kinetic energy at the sample (eV)")
            .y_desc("arm angle δ (deg) = tilt + exit angle")
            .x_label_formatter(&style::whole)
            .y_label_formatter(&style::whole)
            .label_style(style::text(label_px))
            .axis_desc_style(style::text(label_px))
            .draw()
            .map_err(e)?;
        let frame = Frame::of(chart.plotting_area(), x, y);
        let area = chart.plotting_area();

        // Beyond the soft limits and inside the zones: no resting place for the arm.
        let arm = &self.rig.rig.arm;
        let bad = style::FORBIDDEN.mix(0.22).filled();
        let mut bands: Vec<(f64, f64)> = Vec::new();
        if !arm.wrap {
            bands.push((y.0, f64::from(arm.min_deg).max(y.0)));
            bands.push((f64::from(arm.max_deg).min(y.1), y.1));
        }
        bands.extend(
            arm.zones
                .iter()
                .flatten()
                .map(|z| (f64::from(z.from_deg), f64::from(z.to_deg))),
        );
        for (lo, hi) in bands.into_iter().filter(|(lo, hi)| hi > lo) {
            area.draw(&Rectangle::new([(x.0, lo), (x.1, hi)], bad))
                .map_err(e)?;
        }

        let colour = |f: usize| {
            style::CURVES
                .get(f % style::CURVES.len())
                .copied()
                .unwrap_or(style::BEAM)
        };
        // Emergence labels staggered in energy order on each side of the plot, so that
        // close ones do not overlap.
        let mut order: Vec<(bool, f64, usize)> = self
            .tracks
            .iter()
            .enumerate()
            .filter_map(|(i, t)| t.emergence.map(|m| (m.1 > 0.0, m.0, i)))
            .collect();
        order.sort_by(|a, b| a.0.cmp(&b.0).then(a.1.total_cmp(&b.1)));
        let stagger = |i: usize| {
            let Some(me) = order.iter().find(|o| o.2 == i) else {
                return 0;
            };
            order
                .iter()
                .filter(|o| o.0 == me.0)
                .position(|o| o.2 == i)
                .unwrap_or(0) as i32
                % 2
        };
        for (ti, t) in self.tracks.iter().enumerate() {
            let c = colour(t.family);
            for r in &t.runs {
                if t.branch > 0 {
                    area.draw(&PathElement::new(r.clone(), c.stroke_width(2)))
                        .map_err(e)?;
                } else {
                    area.draw(&DashedPathElement::new(
                        r.iter().copied(),
                        7,
                        4,
                        c.stroke_width(2),
                    ))
                    .map_err(e)?;
                }
            }
            if let Some(m) = t.emergence {
                area.draw(&TriangleMarker::new(m, 6, style::PREDICTED.filled()))
                    .map_err(e)?;
                area.draw(
                    &(EmptyElement::at(m)
                        + Text::new(
                            format!("{:.1} eV", m.0),
                            // Away from the curves: above a marker at the top end of
                            // the tracks, below one at the bottom end.
                            (
                                -4,
                                if m.1 > 0.0 { -(label_px as i32) - 8 } else { 8 }
                                    + if m.1 > 0.0 { -1 } else { 1 }
                                        * stagger(ti)
                                        * label_px as i32,
                            ),
                            style::text(label_px.saturating_sub(2).max(9)),
                        )),
                )
                .map_err(e)?;
            }
        }

        // The key.
        let line = (label_px as i32 * 17) / 10;
        let (x0, mut yy) = (10, 20);
        let t = style::text(label_px);
        let key = |y: &mut i32, text: String| {
            let r = panel.draw(&Text::new(
                text,
                (x0 + 34, *y - label_px as i32 / 2),
                t.clone(),
            ));
            *y += line;
            r
        };
        for (i, f) in self.families.iter().enumerate() {
            let c = colour(i);
            panel
                .draw(&PathElement::new(
                    vec![(x0, yy), (x0 + 26, yy)],
                    c.stroke_width(3),
                ))
                .map_err(e)?;
            let name = if f.g_inv_a > 0.0 {
                format!(
                    "({},{}) ×{}, |g| {:.3} 1/Å",
                    f.rod[0], f.rod[1], f.members, f.g_inv_a
                )
            } else {
                "(0,0) specular: δ = 2α".into()
            };
            key(&mut yy, name).map_err(e)?;
        }
        yy += line / 2;
        panel
            .draw(&PathElement::new(
                vec![(x0, yy), (x0 + 26, yy)],
                style::INK.stroke_width(2),
            ))
            .map_err(e)?;
        key(&mut yy, "branch +1 (g along +e1)".into()).map_err(e)?;
        panel
            .draw(&DashedPathElement::new(
                vec![(x0, yy), (x0 + 26, yy)],
                7,
                4,
                style::INK.stroke_width(2),
            ))
            .map_err(e)?;
        key(&mut yy, "branch −1".into()).map_err(e)?;
        panel
            .draw(&TriangleMarker::new(
                (x0 + 13, yy),
                6,
                style::PREDICTED.filled(),
            ))
            .map_err(e)?;
        key(&mut yy, "emergence energy".into()).map_err(e)?;
        panel
            .draw(&Rectangle::new([(x0, yy - 7), (x0 + 26, yy + 7)], bad))
            .map_err(e)?;
        key(&mut yy, "arm: beyond limits, zones".into()).map_err(e)?;
        yy += line / 2;
        let zones: Vec<String> = arm
            .zones
            .iter()
            .flatten()
            .map(|z| format!("{}..{}°", z.from_deg, z.to_deg))
            .collect();
        let mut lines = vec![format!("rig: {}", self.rig.name)];
        if !arm.wrap {
            lines.push(format!("arm limits {}..{}°", arm.min_deg, arm.max_deg));
        }
        if !zones.is_empty() {
            lines.push(format!("zones {}", zones.join(", ")));
        }
        lines.push("in-plane: the sample turned".into());
        lines.push("so each beam stays level".into());
        for l in lines {
            panel
                .draw(&Text::new(l, (x0, yy - label_px as i32 / 2), t.clone()))
                .map_err(e)?;
            yy += line;
        }
        Ok(frame)
    }
}
