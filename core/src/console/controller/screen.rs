//! `screen`: where the beams at the current settings land on a hemispherical screen or a
//! flat detector, which the gun's shadow hides, or which beam is at a measured spot —
//! the core's `goniometer::Screen`, as `mwctl calc screen` gives it.

use embedded_io::Write;

use super::args::opt_num;
use super::fault::{check_used, Accepted, Fault, Result};
use super::{Console, Rw, Stream, ANGLE_DECIMALS};
use crate::console::board::{AxisDriver, Detector, Interlock};
use crate::console::wire::token::Args;
use crate::error::Error;
use crate::goniometer::{Screen, SortedSpots};
use crate::surface::Incidence;

/// Decimals of the spot positions (mm) in the items: 1 µm.
pub const MM_DECIMALS: u8 = 3;

/// Default tolerance of a spot's nearest beam, degrees (as `mwctl calc screen`).
pub const SPOT_TOLERANCE_DEG: f32 = 2.0;

/// A running `screen` list: its spots and the count so far.
#[derive(Clone, Copy, Debug)]
pub(super) struct ScreenRun {
    spots: SortedSpots,
    count: u32,
    cone_deg: f32,
}

impl<A: AxisDriver, D: Detector, I: Interlock> Console<A, D, I> {
    /// `screen radius=MM [rim=DEG] | screen distance=MM half_width=MM half_height=MM
    /// [arm=DEG] [elevation=DEG]`, with `[shadow=DEG]` and `[x=MM y=MM [tolerance=DEG]]`.
    #[inline(never)]
    pub(super) fn cmd_screen<W: Write>(
        &mut self,
        a: &mut Args<'_>,
        rw: &mut Rw<'_, W>,
    ) -> Result<Option<Stream>> {
        let radius = opt_num(a, "radius")?;
        let rim = opt_num(a, "rim")?;
        let distance = opt_num(a, "distance")?;
        let half_width = opt_num(a, "half_width")?;
        let half_height = opt_num(a, "half_height")?;
        let arm = opt_num(a, "arm")?;
        let elevation = opt_num(a, "elevation")?;
        let shadow = opt_num(a, "shadow")?.unwrap_or(0.0);
        let x = opt_num(a, "x")?;
        let y = opt_num(a, "y")?;
        let tolerance = opt_num(a, "tolerance")?;
        check_used(a)?;
        let usage = || Accepted::usage_of("screen");
        let screen = match (radius, distance) {
            (Some(r), None) if half_width.is_none() && half_height.is_none() && arm.is_none() && elevation.is_none() => {
                Screen::Hemisphere {
                    radius_mm: r,
                    rim_deg: rim.unwrap_or(90.0),
                }
            }
            (None, Some(d)) if rim.is_none() => Screen::Flat {
                distance_mm: d,
                arm_deg: arm.unwrap_or(0.0),
                elevation_deg: elevation.unwrap_or(0.0),
                half_width_mm: half_width
                    .ok_or_else(|| Fault::from(Error::MissingArgument).on_key("half_width").accepting(usage()))?,
                half_height_mm: half_height
                    .ok_or_else(|| Fault::from(Error::MissingArgument).on_key("half_height").accepting(usage()))?,
            },
            (None, None) => {
                return Err(Fault::from(Error::MissingArgument)
                    .on_key("radius")
                    .because("give radius= (a hemispherical screen) or distance= (a flat detector)")
                    .accepting(usage()))
            }
            _ => {
                return Err(Fault::from(Error::UnknownArgument)
                    .on_key(if radius.is_some() && distance.is_some() { "distance" } else if radius.is_some() { "half_width" } else { "rim" })
                    .because("a hemispherical screen takes radius= rim=, a flat detector distance= half_width= half_height= arm= elevation=")
                    .accepting(usage()))
            }
        };
        screen.check_fields().map_err(|(field, e)| {
            let (key, accepted) = match field {
                "rim_deg" => ("rim", "rim accepted above 0 and at most 90 deg"),
                "arm_deg" => ("arm", "a finite arm angle in degrees"),
                "elevation_deg" => ("elevation", "elevation accepted -90 to 90 deg"),
                "distance_mm" => ("distance", "lengths accepted above 0 and at most 100000 mm"),
                "half_width_mm" => (
                    "half_width",
                    "lengths accepted above 0 and at most 100000 mm",
                ),
                "half_height_mm" => (
                    "half_height",
                    "lengths accepted above 0 and at most 100000 mm",
                ),
                _ => ("radius", "lengths accepted above 0 and at most 100000 mm"),
            };
            Fault::from(e).on_key(key).because(accepted)
        })?;
        let s = &self.settings;
        let e = s.gun.kinetic_energy_ev()?;
        let inc = Incidence::new(e, s.tilt_deg, s.azimuth_deg.unwrap_or(0.0))?;
        match (x, y) {
            (Some(x), Some(y)) => {
                let tol = tolerance.unwrap_or(SPOT_TOLERANCE_DEG);
                let v = screen.nearest_beam(&s.face, &inc, x, y, tol).map_err(|e| {
                    Fault::from(e)
                        .on_key("x")
                        .because("the spot must lie on the screen; tolerance 0 to 90 deg")
                })?;
                rw.ok();
                match v {
                    Some(v) => {
                        rw.field_i32("found", 1)
                            .field_i32("h", v.beam.rod[0])
                            .field_i32("k", v.beam.rod[1])
                            .field_f32_rt("offset", v.offset_deg);
                    }
                    None => {
                        rw.field_i32("found", 0).field_f32_rt("tolerance", tol);
                    }
                }
                Ok(None)
            }
            (None, None) if tolerance.is_none() => {
                let spots = screen.sorted_spots(&s.face, &inc, shadow).map_err(|e| {
                    Fault::from(e)
                        .on_key("shadow")
                        .because("gun shadow accepted 0 to 45 deg")
                })?;
                Ok(Some(Stream::Screen(ScreenRun {
                    spots,
                    count: 0,
                    cone_deg: screen.cone_deg(),
                })))
            }
            _ => Err(Fault::from(Error::MissingArgument)
                .on_key(if x.is_some() { "y" } else { "x" })
                .because("a measured spot takes both x= and y= (mm); tolerance= goes with them")
                .accepting(usage())),
        }
    }
}

impl ScreenRun {
    /// Writes the next line into `rw`; false when that line is the final one.
    pub(super) fn step<W: Write>(&mut self, rw: &mut Rw<'_, W>) -> bool {
        match self.spots.next() {
            Some(sp) => {
                rw.item()
                    .field_i32("h", sp.beam.rod[0])
                    .field_i32("k", sp.beam.rod[1])
                    .field_f32("x", sp.at.x_mm, MM_DECIMALS)
                    .field_f32("y", sp.at.y_mm, MM_DECIMALS)
                    .field_f32("from_axis", sp.at.from_axis_deg, ANGLE_DECIMALS)
                    .field_i32("shadowed", sp.shadowed as i32);
                self.count += 1;
                true
            }
            None => {
                rw.ok()
                    .field_i32("count", self.count as i32)
                    .field_f32_rt("cone", self.cone_deg);
                false
            }
        }
    }
}
