//! `mwctl plot pattern`: the beam pattern at one energy on a hemispherical screen
//! coaxial with the gun, as a camera on the gun axis sees it from behind the screen —
//! every spot labelled (h,k), the gun's shadow, and where the detector arm can point.
//! Every position comes from the core (`goniometer::Screen`); this file only draws.

use super::style::{self, Frame, Picture};
use crate::error::{CliError, CliResult, Context};
use crate::rig::RigFile;
use matterwave_core::goniometer::{self, Screen, Spot};
use matterwave_core::surface::{Face, Incidence};
use plotters::coord::Shift;
use plotters::prelude::*;

/// At most this many spots are labelled (the lowest |g| first, each where its label
/// overlaps nothing drawn before it); the rest are drawn without their (h,k).
pub const LABELS_MAX: usize = 80;

/// Pixels between the centres of the cells the reachable region is sampled on.
const REACH_CELL_PX: i32 = 4;

/// Everything the pattern picture shows, computed by the core before anything is drawn.
#[derive(Clone, Debug)]
pub struct PatternPlot {
    /// Title: crystal, face, energy, tilt, azimuth.
    pub title: String,
    /// The screen (hemispherical).
    pub screen: Screen,
    /// The incidence the spots are for.
    pub inc: Incidence,
    /// Gun-shadow half-angle, degrees.
    pub gun_shadow_deg: f32,
    /// The rig whose arm's reach is shown.
    pub rig: RigFile,
    /// The spots, in the one beam order (increasing |g|).
    pub spots: Vec<Spot>,
    /// Whether more spots exist than were listed.
    pub truncated: bool,
}

/// What drawing the pattern tells the caller: the plot's mapping from screen mm to
/// pixels, and the radius of the gun's shadow on the screen, mm.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct PatternDrawn {
    /// Screen x, y (mm) → pixels.
    pub frame: Frame,
    /// Radius of the gun's shadow disk, mm (0 without a shadow).
    pub shadow_radius_mm: f64,
    /// Radius of the screen's rim in the picture, mm.
    pub rim_radius_mm: f64,
}

impl PatternPlot {
    /// The picture of `face` at `inc` on `screen` (a hemisphere; validated here), with
    /// the gun's shadow of `gun_shadow_deg` and the reach of `rig`'s arm: the spots are
    /// the core's (`Screen::list_spots`), at most `max_spots` of them (lowest |g| first).
    /// Other commands (scan, align, demo) write the same picture through this.
    pub fn compute(
        title: String,
        face: &Face,
        inc: Incidence,
        screen: Screen,
        gun_shadow_deg: f32,
        rig: RigFile,
        max_spots: usize,
    ) -> CliResult<PatternPlot> {
        if !matches!(screen, Screen::Hemisphere { .. }) {
            return Err(CliError::new(
                "the pattern picture is drawn for a hemispherical screen only",
            ));
        }
        screen.validate().ctx("screen")?;
        let mut buf = vec![Spot::EMPTY; max_spots.clamp(1, crate::number::MAX_ROWS)];
        let l = screen
            .list_spots(face, &inc, gun_shadow_deg, &mut buf)
            .ctx(format_args!(
                "spot listing (gun shadow {gun_shadow_deg} deg)"
            ))?;
        buf.truncate(l.stored);
        Ok(PatternPlot {
            title,
            screen,
            inc,
            gun_shadow_deg,
            rig,
            spots: buf,
            truncated: l.truncated,
        })
    }

    /// Where the direction at `angle_deg` from the screen axis (in the horizontal plane)
    /// lands, as a distance from the centre, mm — the core's landing of that direction.
    fn radius_at_mm(&self, angle_deg: f32) -> f64 {
        self.screen
            .landing(goniometer::detector_direction(angle_deg, 0.0))
            .map_or(0.0, |l| f64::from(l.x_mm.hypot(l.y_mm)))
    }

    /// Whether the detector arm can point along the lab direction through screen point
    /// (`x_mm`, `y_mm`): its arm angle and elevation allowed by the rig's axes (a
    /// one-circle arm: elevation 0 only).
    fn reachable(&self, x_mm: f32, y_mm: f32) -> bool {
        let Ok(d) = self.screen.direction_at(x_mm, y_mm) else {
            return false;
        };
        let (arm, elev) = goniometer::arm_elevation_deg(d);
        let rig = &self.rig.rig;
        rig.arm.check_angle(arm).is_ok()
            && rig
                .elevation
                .as_ref()
                .is_some_and(|e| e.check_angle(elev).is_ok())
    }
}

impl Picture for PatternPlot {
    type Drawn = PatternDrawn;

    fn draw<DB: DrawingBackend>(
        &self,
        root: &DrawingArea<DB, Shift>,
    ) -> Result<PatternDrawn, String> {
        let e = |x: DrawingAreaErrorKind<DB::ErrorType>| x.to_string();
        let (_, h) = root.dim_in_pixel();
        let title_px = (h / 28).clamp(14, 30);
        let body = root.titled(&self.title, style::text(title_px)).map_err(e)?;
        let (bw, bh) = body.dim_in_pixel();
        let side = bh.min(bw.saturating_sub(bw / 4));
        let (square, panel) = body.split_horizontally(side);
        let label_px = (side / 45).clamp(10, 18);
        let rim_mm = self.radius_at_mm(rim_deg(&self.screen) - 1.0e-3);
        let lim = rim_mm * 1.06;
        let (xl, yl) = (2 * label_px + 16, 3 * label_px + 24);
        // Equal scales on both axes: the plotting area is square (the y labels are
        // wider than the x labels are tall, so the difference goes above the plot).
        let mut chart = ChartBuilder::on(&square)
            .margin_left(8)
            .margin_right(8)
            .margin_top(8 + yl - xl)
            .margin_bottom(8)
            .x_label_area_size(xl)
            .y_label_area_size(yl)
            .build_cartesian_2d(-lim..lim, -lim..lim)
            .map_err(e)?;
        chart
            .configure_mesh()
            .max_light_lines(0)
            .bold_line_style(style::GRID)
            .x_desc("x on the screen (mm), toward increasing arm angle")
            .y_desc("y (mm), up")
            .x_label_formatter(&style::whole)
            .y_label_formatter(&style::whole)
            .label_style(style::text(label_px))
            .axis_desc_style(style::text(label_px))
            .draw()
            .map_err(e)?;
        let frame = Frame::of(chart.plotting_area(), (-lim, lim), (-lim, lim));
        let area = chart.plotting_area();

        // The arm's reach: a one-circle arm points only in the horizontal plane (a line
        // on the screen); a two-circle arm covers a region, sampled cell by cell and
        // drawn as one rectangle per run of reachable cells along a row.
        let reach = style::REACH.mix(0.30);
        if self.rig.rig.elevation.is_none() {
            let mut run: Vec<(f64, f64)> = Vec::new();
            let mut runs = Vec::new();
            for i in -720..=720 {
                let arm = i as f32 * 0.25;
                let at = self.rig.rig.arm.check_angle(arm).ok().and_then(|_| {
                    self.screen
                        .landing(goniometer::detector_direction(arm, 0.0))
                });
                match at {
                    Some(l) => run.push((f64::from(l.x_mm), f64::from(l.y_mm))),
                    None => runs.push(std::mem::take(&mut run)),
                }
            }
            runs.push(run);
            for r in runs.into_iter().filter(|r| r.len() > 1) {
                area.draw(&PathElement::new(r, reach.stroke_width(7)))
                    .map_err(e)?;
            }
        } else {
            let step = frame.x_per_px() * f64::from(REACH_CELL_PX);
            let half = step / 2.0;
            let n = (2.0 * lim / step).ceil() as i32;
            for row in 0..n {
                let y = -lim + half + f64::from(row) * step;
                let mut start: Option<f64> = None;
                for col in 0..=n {
                    let x = -lim + half + f64::from(col) * step;
                    let ok = col < n && self.reachable(x as f32, y as f32);
                    match (ok, start) {
                        (true, None) => start = Some(x - half),
                        (false, Some(x0)) => {
                            area.draw(&Rectangle::new(
                                [(x0, y - half), (x - half, y + half)],
                                reach.filled(),
                            ))
                            .map_err(e)?;
                            start = None;
                        }
                        _ => {}
                    }
                }
            }
        }

        // The screen's rim and centre.
        let circle = |r: f64| -> Vec<(f64, f64)> {
            (0..=360)
                .map(|i| {
                    let t = f64::from(i).to_radians();
                    (r * t.cos(), r * t.sin())
                })
                .collect()
        };
        area.draw(&PathElement::new(
            circle(rim_mm),
            style::INK.stroke_width(2),
        ))
        .map_err(e)?;

        // The gun's shadow: the disk of directions within its half-angle of the gun.
        let shadow_mm = if self.gun_shadow_deg > 0.0 {
            self.radius_at_mm(self.gun_shadow_deg)
        } else {
            0.0
        };
        if shadow_mm > 0.0 {
            area.draw(&Polygon::new(
                circle(shadow_mm),
                style::HIDDEN.mix(0.45).filled(),
            ))
            .map_err(e)?;
        }
        let tick = frame.x_per_px() * 6.0;
        for seg in [[(-tick, 0.0), (tick, 0.0)], [(0.0, -tick), (0.0, tick)]] {
            area.draw(&PathElement::new(seg.to_vec(), style::INK.stroke_width(1)))
                .map_err(e)?;
        }

        // The spots: filled where seen, hollow grey where the gun hides them. Labels go
        // up and to the right of their spot, lowest |g| first, each only where it
        // overlaps no spot and no label already placed (so a dense pattern stays
        // readable), at most LABELS_MAX.
        let dot_px = (side / 130).clamp(3, 8) as i32;
        let spot_label_px = (side / 48).clamp(9, 16);
        let pixels: Vec<(i32, i32)> = self
            .spots
            .iter()
            .map(|s| frame.to_px(f64::from(s.at.x_mm), f64::from(s.at.y_mm)))
            .collect();
        let mut boxes: Vec<[i32; 4]> = Vec::new();
        let mut labelled = 0usize;
        for (s, &(c, r)) in self.spots.iter().zip(&pixels) {
            let at = (f64::from(s.at.x_mm), f64::from(s.at.y_mm));
            if s.shadowed {
                area.draw(&Circle::new(at, dot_px, style::HIDDEN.stroke_width(2)))
                    .map_err(e)?;
            } else {
                area.draw(&Circle::new(at, dot_px, style::BEAM.filled()))
                    .map_err(e)?;
            }
            let label = format!("({},{})", s.beam.rod[0], s.beam.rod[1]);
            let (dx, dy) = (dot_px + 2, -(dot_px + 2) - spot_label_px as i32);
            let wide = (label.chars().count() as i32 * spot_label_px as i32 * 6) / 10;
            let b = [c + dx, r + dy, c + dx + wide, r + dy + spot_label_px as i32];
            let overlaps = |o: &[i32; 4]| b[0] < o[2] && o[0] < b[2] && b[1] < o[3] && o[1] < b[3];
            let hits_spot = pixels
                .iter()
                .any(|&(pc, pr)| overlaps(&[pc - dot_px, pr - dot_px, pc + dot_px, pr + dot_px]));
            if labelled < LABELS_MAX && !hits_spot && !boxes.iter().any(overlaps) {
                boxes.push(b);
                labelled += 1;
                let colour = if s.shadowed {
                    style::HIDDEN
                } else {
                    style::INK
                };
                area.draw(
                    &(EmptyElement::at(at)
                        + Text::new(label, (dx, dy), style::text(spot_label_px).color(&colour))),
                )
                .map_err(e)?;
            }
        }

        legend(self, &panel, label_px, dot_px, shadow_mm, labelled).map_err(e)?;
        Ok(PatternDrawn {
            frame,
            shadow_radius_mm: shadow_mm,
            rim_radius_mm: rim_mm,
        })
    }
}

/// The screen's rim angle, degrees (90 for a flat detector, which is never drawn here).
fn rim_deg(s: &Screen) -> f32 {
    match *s {
        Screen::Hemisphere { rim_deg, .. } => rim_deg,
        Screen::Flat { .. } => 90.0,
    }
}

/// The key and the context beside the plot.
fn legend<DB: DrawingBackend>(
    p: &PatternPlot,
    panel: &DrawingArea<DB, Shift>,
    label_px: u32,
    dot_px: i32,
    shadow_mm: f64,
    labelled: usize,
) -> Result<(), DrawingAreaErrorKind<DB::ErrorType>> {
    let line = (label_px as i32 * 17) / 10;
    let x0 = 12;
    let mut y = 24;
    let t = style::text(label_px);
    let row = |panel: &DrawingArea<DB, Shift>, y: &mut i32, text: String| {
        let r = panel.draw(&Text::new(
            text,
            (x0 + 26, *y - label_px as i32 / 2),
            t.clone(),
        ));
        *y += line;
        r
    };
    panel.draw(&Circle::new((x0 + 8, y), dot_px, style::BEAM.filled()))?;
    row(panel, &mut y, "beam (h,k), seen".into())?;
    panel.draw(&Circle::new(
        (x0 + 8, y),
        dot_px,
        style::HIDDEN.stroke_width(2),
    ))?;
    row(panel, &mut y, "beam hidden by the gun".into())?;
    if shadow_mm > 0.0 {
        panel.draw(&Rectangle::new(
            [(x0, y - 6), (x0 + 16, y + 6)],
            style::HIDDEN.mix(0.45).filled(),
        ))?;
        row(
            panel,
            &mut y,
            format!("gun's shadow ({}°)", p.gun_shadow_deg),
        )?;
    }
    panel.draw(&Rectangle::new(
        [(x0, y - 6), (x0 + 16, y + 6)],
        style::REACH.mix(0.30).filled(),
    ))?;
    row(panel, &mut y, "the arm can point here".into())?;
    y += line / 2;
    let count = p.spots.len();
    let hidden = p.spots.iter().filter(|s| s.shadowed).count();
    let (radius, rim) = match p.screen {
        Screen::Hemisphere { radius_mm, rim_deg } => (radius_mm, rim_deg),
        Screen::Flat { .. } => (0.0, 0.0),
    };
    let arm = &p.rig.rig.arm;
    let zones: Vec<String> = arm
        .zones
        .iter()
        .flatten()
        .map(|z| format!("{}..{}°", z.from_deg, z.to_deg))
        .collect();
    let mut lines = vec![
        format!(
            "{count} spots{}, {hidden} hidden",
            if p.truncated { " (more exist)" } else { "" }
        ),
        format!("screen: radius {radius} mm, rim {rim}°"),
        "seen from behind the screen,".into(),
        "gun at the centre".into(),
        format!("rig: {}", p.rig.name),
        format!("arm {}..{}°", arm.min_deg, arm.max_deg),
    ];
    if !zones.is_empty() {
        lines.push(format!("arm zones {}", zones.join(", ")));
    }
    lines.push(match &p.rig.rig.elevation {
        Some(e) => format!("elevation {}..{}°", e.min_deg, e.max_deg),
        None => "one-circle arm (elevation 0)".into(),
    });
    if labelled < count {
        lines.push(format!("{labelled} of {count} labelled (no room for more)"));
    }
    for l in lines {
        panel.draw(&Text::new(l, (x0, y - label_px as i32 / 2), t.clone()))?;
        y += line;
    }
    Ok(())
}
