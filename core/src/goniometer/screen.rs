//! Spot positions on a screen or flat detector, the gun's shadow, and the inverse: which
//! beam is at a measured spot.
//!
//! Two detectors, both fixed in the lab frame (docs/CONVENTIONS.md):
//!
//! * a **hemispherical screen** of radius R (mm) centred on the sample and coaxial with
//!   the gun: its axis points from the sample back at the gun (−x, arm 0°, elevation 0°)
//!   and its rim lies at a polar angle `rim_deg` (at most 90°) from that axis. A beam
//!   along the unit direction k̂ strikes it at R·k̂; the spot's (x, y) is that point
//!   projected onto the plane normal to the axis — what a distant camera on the axis
//!   sees through the window behind the screen;
//! * a **flat detector** whose normal points from the sample along the lab direction
//!   d̂(arm, elevation) (the arm's own direction formula), its plane at distance L (mm)
//!   from the sample, with half-width and half-height (mm) about the foot of the normal.
//!   A beam strikes it at L·k̂/(k̂·d̂) when k̂·d̂ > 0.
//!
//! Both use the same in-plane axes: x along increasing arm angle,
//! u_x = (sin δ, −cos δ, 0), and y along increasing elevation,
//! u_y = (cos δ·sin ν, sin δ·sin ν, cos ν) (δ = ν = 0 for the screen). Seen from behind
//! the detector looking at the sample, x is to the right and y up; a beam at a small
//! positive arm angle lands at x > 0.
//!
//! The gun, in front of the screen's centre, hides every beam within `gun_shadow_deg` of
//! the direction back at the gun (−x); 0 means no shadow.

use super::view::view_disk;
use super::{beam_direction_lab, detector_direction, nearest_in_view, InView};
use crate::error::{finite, Error, Quantity, Result};
use crate::listing::{insert_sorted, Listing};
use crate::math::{self, Vec3};
use crate::surface::{beam_before, BeamIter, Face, Incidence, SortedBeams, SurfaceBeam};

/// Largest screen radius, detector distance or half-size accepted, mm.
pub const SCREEN_LENGTH_MAX_MM: f32 = 1.0e5;

/// Largest gun-shadow half-angle accepted, degrees.
pub const GUN_SHADOW_MAX_DEG: f32 = 45.0;

/// The detector a pattern is read from.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Screen {
    /// A hemispherical screen centred on the sample, coaxial with the gun.
    Hemisphere {
        /// Radius, mm (above 0, at most [`SCREEN_LENGTH_MAX_MM`]).
        radius_mm: f32,
        /// Polar angle of the rim from the screen axis, degrees (above 0, at most 90).
        rim_deg: f32,
    },
    /// A flat detector facing the sample.
    Flat {
        /// Distance from the sample to the detector plane along its normal, mm.
        distance_mm: f32,
        /// Arm angle δ of the detector normal, degrees.
        arm_deg: f32,
        /// Elevation ν of the detector normal, degrees (−90 to 90).
        elevation_deg: f32,
        /// Half-width along x, mm.
        half_width_mm: f32,
        /// Half-height along y, mm.
        half_height_mm: f32,
    },
}

/// Where a direction lands on a [`Screen`].
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Landing {
    /// Position along x (increasing arm angle), mm.
    pub x_mm: f32,
    /// Position along y (increasing elevation), mm.
    pub y_mm: f32,
    /// Angle between the direction and the detector's axis (its normal), degrees.
    pub from_axis_deg: f32,
}

/// A beam's spot on a [`Screen`].
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Spot {
    /// The beam.
    pub beam: SurfaceBeam,
    /// Where it lands.
    pub at: Landing,
    /// Whether the gun's shadow hides it.
    pub shadowed: bool,
}

impl Spot {
    /// A placeholder for initialising buffers.
    pub const EMPTY: Spot = Spot {
        beam: SurfaceBeam::EMPTY,
        at: Landing {
            x_mm: 0.0,
            y_mm: 0.0,
            from_axis_deg: 0.0,
        },
        shadowed: false,
    };
}

fn length(x: f32) -> Result<f32> {
    let v = finite(x, Quantity::Length)?;
    if v <= 0.0 {
        Err(Error::TooLow(Quantity::Length))
    } else if v > SCREEN_LENGTH_MAX_MM {
        Err(Error::TooHigh(Quantity::Length))
    } else {
        Ok(v)
    }
}

impl Screen {
    /// Checks every field: lengths finite, above 0 and at most
    /// [`SCREEN_LENGTH_MAX_MM`]; the rim above 0° and at most 90°; the arm angle finite;
    /// the elevation within ±90°.
    pub fn validate(&self) -> Result<()> {
        self.check_fields().map_err(|(_, e)| e)
    }

    /// As [`Screen::validate`], naming the first field at fault (`radius_mm`,
    /// `rim_deg`, `distance_mm`, `half_width_mm`, `half_height_mm`, `arm_deg`,
    /// `elevation_deg`) with its error.
    pub fn check_fields(&self) -> core::result::Result<(), (&'static str, Error)> {
        let angle = |name, x: f32, lo: f32, hi: f32, lo_open: bool| {
            let v = finite(x, Quantity::Angle).map_err(|e| (name, e))?;
            if v < lo || (lo_open && v <= lo) {
                return Err((name, Error::TooLow(Quantity::Angle)));
            }
            if v > hi {
                return Err((name, Error::TooHigh(Quantity::Angle)));
            }
            Ok(())
        };
        let len = |name, x: f32| length(x).map(|_| ()).map_err(|e| (name, e));
        match *self {
            Screen::Hemisphere { radius_mm, rim_deg } => {
                len("radius_mm", radius_mm)?;
                angle("rim_deg", rim_deg, 0.0, 90.0, true)?;
            }
            Screen::Flat {
                distance_mm,
                arm_deg,
                elevation_deg,
                half_width_mm,
                half_height_mm,
            } => {
                len("distance_mm", distance_mm)?;
                len("half_width_mm", half_width_mm)?;
                len("half_height_mm", half_height_mm)?;
                angle("arm_deg", arm_deg, f32::NEG_INFINITY, f32::INFINITY, false)?;
                angle("elevation_deg", elevation_deg, -90.0, 90.0, false)?;
            }
        }
        Ok(())
    }

    /// The detector's axis d̂ and in-plane axes u_x, u_y (lab, unit).
    fn frame(&self) -> [Vec3; 3] {
        let (arm, elev) = match *self {
            Screen::Hemisphere { .. } => (0.0, 0.0),
            Screen::Flat {
                arm_deg,
                elevation_deg,
                ..
            } => (arm_deg, elevation_deg),
        };
        let (sd, cd) = math::sin_cos_deg(arm);
        let (sn, cn) = math::sin_cos_deg(elev);
        [
            detector_direction(arm, elev),
            [sd, -cd, 0.0],
            [cd * sn, sd * sn, cn],
        ]
    }

    /// Half-angle of the cone about the axis that holds every direction landing on the
    /// detector, degrees (the rim; for a flat detector the angle to its corner).
    pub fn cone_deg(&self) -> f32 {
        match *self {
            Screen::Hemisphere { rim_deg, .. } => rim_deg,
            Screen::Flat {
                distance_mm,
                half_width_mm,
                half_height_mm,
                ..
            } => {
                let r = math::sqrt(half_width_mm * half_width_mm + half_height_mm * half_height_mm);
                math::deg(math::atan2(r, distance_mm))
            }
        }
    }

    /// Where the direction `dir` (lab, need not be unit length) lands, or `None` when it
    /// misses the detector (beyond the rim or the edges, or pointing away from it). The
    /// screen must be valid ([`Screen::validate`]).
    pub fn landing(&self, dir: Vec3) -> Option<Landing> {
        let k = math::unit(dir)?;
        let [d, ux, uy] = self.frame();
        let c = math::dot(k, d);
        if c <= 0.0 {
            return None;
        }
        let (kx, ky) = (math::dot(k, ux), math::dot(k, uy));
        let from_axis_deg = math::deg(math::atan2(math::sqrt(kx * kx + ky * ky), c));
        match *self {
            Screen::Hemisphere { radius_mm, rim_deg } => {
                (from_axis_deg <= rim_deg).then_some(Landing {
                    x_mm: radius_mm * kx,
                    y_mm: radius_mm * ky,
                    from_axis_deg,
                })
            }
            Screen::Flat {
                distance_mm,
                half_width_mm,
                half_height_mm,
                ..
            } => {
                let (x, y) = (distance_mm * kx / c, distance_mm * ky / c);
                (x.abs() <= half_width_mm && y.abs() <= half_height_mm).then_some(Landing {
                    x_mm: x,
                    y_mm: y,
                    from_axis_deg,
                })
            }
        }
    }

    /// The lab direction (unit) that lands at (`x_mm`, `y_mm`): the inverse of
    /// [`Screen::landing`]. Errors: a non-finite coordinate; `TooHigh(Length)` for a
    /// point off the hemisphere's disk (x² + y² > R²) or beyond its rim, or off the flat
    /// detector's edges.
    pub fn direction_at(&self, x_mm: f32, y_mm: f32) -> Result<Vec3> {
        let x = finite(x_mm, Quantity::Length)?;
        let y = finite(y_mm, Quantity::Length)?;
        let [d, ux, uy] = self.frame();
        let along = match *self {
            Screen::Hemisphere { radius_mm, rim_deg } => {
                let (kx, ky) = (x / radius_mm, y / radius_mm);
                let s2 = kx * kx + ky * ky;
                let rim = math::sin(math::rad(rim_deg));
                if s2 > rim * rim * (1.0 + 1.0e-6) {
                    return Err(Error::TooHigh(Quantity::Length));
                }
                let c = math::sqrt((1.0 - s2).max(0.0));
                math::add(
                    math::scale(d, c),
                    math::add(math::scale(ux, kx), math::scale(uy, ky)),
                )
            }
            Screen::Flat {
                distance_mm,
                half_width_mm,
                half_height_mm,
                ..
            } => {
                if x.abs() > half_width_mm || y.abs() > half_height_mm {
                    return Err(Error::TooHigh(Quantity::Length));
                }
                math::add(
                    math::scale(d, distance_mm),
                    math::add(math::scale(ux, x), math::scale(uy, y)),
                )
            }
        };
        math::unit(along).ok_or(Error::TooHigh(Quantity::Length))
    }

    /// The spot of beam `b` of a sample at `inc`, or `None` when it misses the
    /// detector; hidden when within `gun_shadow_deg` of the direction back at the gun.
    pub fn spot(&self, b: &SurfaceBeam, inc: &Incidence, gun_shadow_deg: f32) -> Option<Spot> {
        let k = beam_direction_lab(b, inc);
        let at = self.landing(k)?;
        Some(Spot {
            beam: *b,
            at,
            shadowed: gun_shadowed(k, gun_shadow_deg),
        })
    }

    /// Iterator over the spots of every beam of `face` at `inc` that lands on the
    /// detector, in rod-index order. It visits only the rods whose beams can lie within
    /// the detector's cone ([`Screen::cone_deg`]), each `next` bounded by one row of
    /// that disk (as [`Face::beams_near`]). Errors: those of [`Screen::validate`] and
    /// a gun shadow beyond 0–[`GUN_SHADOW_MAX_DEG`].
    pub fn spots(&self, face: &Face, inc: &Incidence, gun_shadow_deg: f32) -> Result<Spots> {
        let (shadow, empty, beams) = self.search(face, inc, gun_shadow_deg)?;
        Ok(Spots {
            screen: *self,
            inc: *inc,
            shadow,
            empty,
            beams,
        })
    }

    /// The search behind [`Screen::spots`] and [`Screen::sorted_spots`]: the checked
    /// gun shadow, whether no beam can reach the detector (a negative radius: it faces
    /// into the sample), and the rods of the disk of k∥ its cone can see.
    fn search(
        &self,
        face: &Face,
        inc: &Incidence,
        gun_shadow_deg: f32,
    ) -> Result<(f32, bool, BeamIter)> {
        self.validate()?;
        let shadow = check_gun_shadow(gun_shadow_deg)?;
        let [d, _, _] = self.frame();
        let (centre, radius) = view_disk(inc, d, self.cone_deg());
        Ok((
            shadow,
            radius < 0.0,
            face.beams_near(inc, centre, radius.max(0.0)),
        ))
    }

    /// The spots of [`Screen::spots`] streamed in the one beam order (increasing |g|,
    /// [`beam_before`]; the order of [`Screen::list_spots`]) with a fixed window
    /// ([`crate::surface::SortedBeams`]), for a controller that lists them line by
    /// line. Errors: those of [`Screen::spots`].
    pub fn sorted_spots(
        &self,
        face: &Face,
        inc: &Incidence,
        gun_shadow_deg: f32,
    ) -> Result<SortedSpots> {
        let (shadow, empty, beams) = self.search(face, inc, gun_shadow_deg)?;
        Ok(SortedSpots {
            screen: *self,
            shadow,
            empty,
            beams: beams.sorted(),
        })
    }

    /// The spots of [`Screen::spots`] into `out` in the one beam order (increasing |g|,
    /// [`beam_before`]): the first `out.len()` of them, `truncated` when more exist.
    /// Errors: those of [`Screen::spots`]; `EmptyBuffer` for an empty `out`.
    pub fn list_spots(
        &self,
        face: &Face,
        inc: &Incidence,
        gun_shadow_deg: f32,
        out: &mut [Spot],
    ) -> Result<Listing> {
        if out.is_empty() {
            return Err(Error::EmptyBuffer);
        }
        let mut stored = 0usize;
        let mut truncated = false;
        for s in self.spots(face, inc, gun_shadow_deg)? {
            truncated |= insert_sorted(out, &mut stored, s, |a, b| beam_before(&a.beam, &b.beam));
        }
        Ok(Listing { stored, truncated })
    }

    /// The beam nearest a spot measured at (`x_mm`, `y_mm`): the beam of `face` at `inc`
    /// whose direction is nearest (in angle) the direction to that point, within
    /// `tolerance_deg` (0 to 90), with that angle ([`InView::offset_deg`]); `None` when no
    /// beam is that near. The search is the bounded one of [`nearest_in_view`]. Errors:
    /// those of [`Screen::validate`] and [`Screen::direction_at`].
    pub fn nearest_beam(
        &self,
        face: &Face,
        inc: &Incidence,
        x_mm: f32,
        y_mm: f32,
        tolerance_deg: f32,
    ) -> Result<Option<InView>> {
        self.validate()?;
        let tol = finite(tolerance_deg, Quantity::Angle)?;
        if tol < 0.0 {
            return Err(Error::TooLow(Quantity::Angle));
        }
        if tol > 90.0 {
            return Err(Error::TooHigh(Quantity::Angle));
        }
        let (arm, elev) = super::arm_elevation_deg(self.direction_at(x_mm, y_mm)?);
        nearest_in_view(face, inc, arm, elev, tol)
    }
}

/// Checks a gun-shadow half-angle: finite, 0 to [`GUN_SHADOW_MAX_DEG`] degrees.
pub fn check_gun_shadow(gun_shadow_deg: f32) -> Result<f32> {
    let s = finite(gun_shadow_deg, Quantity::Angle)?;
    if s < 0.0 {
        Err(Error::TooLow(Quantity::Angle))
    } else if s > GUN_SHADOW_MAX_DEG {
        Err(Error::TooHigh(Quantity::Angle))
    } else {
        Ok(s)
    }
}

/// Whether the direction `dir` (lab) lies within `gun_shadow_deg` of the direction back
/// at the gun (−x): strictly inside the cone; never for a shadow of 0°.
pub fn gun_shadowed(dir: Vec3, gun_shadow_deg: f32) -> bool {
    let Some(k) = math::unit(dir) else {
        return false;
    };
    // Angle from −x via atan2 of the perpendicular and parallel parts (accurate near 0).
    let perp = math::sqrt(k[1] * k[1] + k[2] * k[2]);
    math::deg(math::atan2(perp, -k[0])) < gun_shadow_deg
}

/// The spots on a detector in the one beam order: see [`Screen::sorted_spots`].
#[derive(Clone, Copy, Debug)]
pub struct SortedSpots {
    screen: Screen,
    shadow: f32,
    empty: bool,
    beams: SortedBeams,
}

impl Iterator for SortedSpots {
    type Item = Spot;

    fn next(&mut self) -> Option<Spot> {
        if self.empty {
            return None;
        }
        loop {
            let b = self.beams.next()?;
            if let Some(s) = self.screen.spot(&b, self.beams.incidence(), self.shadow) {
                return Some(s);
            }
        }
    }
}

/// The spots on a detector: see [`Screen::spots`].
#[derive(Clone, Copy, Debug)]
pub struct Spots {
    screen: Screen,
    inc: Incidence,
    shadow: f32,
    empty: bool,
    beams: BeamIter,
}

impl Iterator for Spots {
    type Item = Spot;

    fn next(&mut self) -> Option<Spot> {
        if self.empty {
            return None;
        }
        loop {
            let b = self.beams.next()?;
            if let Some(s) = self.screen.spot(&b, &self.inc, self.shadow) {
                return Some(s);
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const HEMI: Screen = Screen::Hemisphere {
        radius_mm: 100.0,
        rim_deg: 60.0,
    };
    const FLAT: Screen = Screen::Flat {
        distance_mm: 80.0,
        arm_deg: 35.0,
        elevation_deg: -10.0,
        half_width_mm: 50.0,
        half_height_mm: 30.0,
    };

    #[test]
    fn validation_refuses_each_bad_field() {
        assert_eq!(HEMI.validate(), Ok(()));
        assert_eq!(FLAT.validate(), Ok(()));
        let h = |radius_mm, rim_deg| Screen::Hemisphere { radius_mm, rim_deg }.validate();
        assert_eq!(h(0.0, 60.0), Err(Error::TooLow(Quantity::Length)));
        assert_eq!(h(2.0e5, 60.0), Err(Error::TooHigh(Quantity::Length)));
        assert_eq!(h(f32::NAN, 60.0), Err(Error::NotFinite(Quantity::Length)));
        assert_eq!(h(100.0, 0.0), Err(Error::TooLow(Quantity::Angle)));
        assert_eq!(h(100.0, 90.5), Err(Error::TooHigh(Quantity::Angle)));
        let f = |elevation_deg, half_height_mm| {
            Screen::Flat {
                distance_mm: 80.0,
                arm_deg: 35.0,
                elevation_deg,
                half_width_mm: 50.0,
                half_height_mm,
            }
            .validate()
        };
        assert_eq!(f(91.0, 30.0), Err(Error::TooHigh(Quantity::Angle)));
        assert_eq!(f(-10.0, -1.0), Err(Error::TooLow(Quantity::Length)));
        assert_eq!(check_gun_shadow(46.0), Err(Error::TooHigh(Quantity::Angle)));
        assert_eq!(check_gun_shadow(-1.0), Err(Error::TooLow(Quantity::Angle)));
    }

    #[test]
    fn landing_and_direction_at_are_inverse() {
        for scr in [HEMI, FLAT] {
            for (x, y) in [(0.0f32, 0.0f32), (20.0, -5.0), (-30.0, 25.0), (49.0, 29.0)] {
                let Ok(d) = scr.direction_at(x, y) else {
                    continue;
                };
                let l = scr.landing(d).unwrap();
                assert!(
                    (l.x_mm - x).abs() < 1e-3 && (l.y_mm - y).abs() < 1e-3,
                    "{scr:?}"
                );
            }
        }
        // Off the detector: refused, and a direction away from it lands nowhere.
        assert_eq!(
            FLAT.direction_at(60.0, 0.0),
            Err(Error::TooHigh(Quantity::Length))
        );
        assert_eq!(
            HEMI.direction_at(90.0, 0.0),
            Err(Error::TooHigh(Quantity::Length))
        );
        assert_eq!(HEMI.landing([1.0, 0.0, 0.0]), None);
        assert_eq!(HEMI.landing([0.0, 0.0, 0.0]), None);
    }

    #[test]
    fn the_gun_shadow_is_a_cone_about_minus_x() {
        // 3° off −x, in the horizontal plane and straight up.
        let (s, c) = math::sin_cos_deg(3.0);
        for d in [[-c, s, 0.0], [-c, 0.0, s]] {
            assert!(gun_shadowed(d, 3.5));
            assert!(!gun_shadowed(d, 2.5));
        }
        assert!(!gun_shadowed([-1.0, 0.0, 0.0], 0.0));
        assert!(!gun_shadowed([1.0, 0.0, 0.0], 45.0));
    }
}
