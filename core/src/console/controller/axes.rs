//! `axis` and `zone`: the rig as the controller holds it, and how its axes are printed.

use embedded_io::Write;

use super::args::{axis_id, opt_num, parse_bool, parse_int, tok_err};
use super::{Console, Rw, Stream};
use crate::axis::{Approach, AxisConfig, Zone, MAX_ZONES};
use crate::console::board::{AxisDriver, Detector, Interlock};
use crate::console::wire::token::Args;
use crate::error::{AxisId, Error, Result};
use crate::goniometer::Rig;

/// The configuration slot of an axis in a rig.
pub(super) fn axis_of(rig: &Rig, id: AxisId) -> Option<&AxisConfig> {
    match id {
        AxisId::Arm => Some(&rig.arm),
        AxisId::Elevation => rig.elevation.as_ref(),
        AxisId::Tilt => Some(&rig.tilt),
        AxisId::Azimuth => Some(&rig.azimuth),
    }
}

/// A default elevation axis for `axis name=elevation fitted=1`.
const fn default_elevation() -> AxisConfig {
    let mut e = AxisConfig::new(AxisId::Elevation, 200.0 * 16.0 * 100.0 / 360.0);
    e.min_deg = -60.0;
    e.max_deg = 60.0;
    e
}

fn set_axis(rig: &mut Rig, id: AxisId, cfg: Option<AxisConfig>) {
    match (id, cfg) {
        (AxisId::Arm, Some(c)) => rig.arm = c,
        (AxisId::Tilt, Some(c)) => rig.tilt = c,
        (AxisId::Azimuth, Some(c)) => rig.azimuth = c,
        (AxisId::Elevation, c) => rig.elevation = c,
        _ => {}
    }
}

impl<A: AxisDriver, D: Detector, I: Interlock> Console<A, D, I> {
    pub(super) fn cmd_axis<W: Write>(
        &mut self,
        a: &mut Args<'_>,
        rw: &mut Rw<'_, W>,
    ) -> Result<Option<Stream>> {
        let id = axis_id(a.get("name").ok_or(Error::MissingArgument)?)?;
        let mut rig = self.settings.rig;
        let fitted = a.get("fitted").map(parse_bool).transpose()?;
        let mut cfg = match (id, fitted) {
            (AxisId::Elevation, Some(false)) => None,
            (AxisId::Elevation, Some(true)) => Some(rig.elevation.unwrap_or(default_elevation())),
            (_, Some(_)) => return Err(Error::BadValue),
            _ => axis_of(&rig, id).copied(),
        };
        let fields = ["spd", "home", "min", "max", "backlash", "speed", "accel"];
        let mut changed = fitted.is_some();
        for f in fields {
            if let Some(v) = opt_num(a, f)? {
                let c = cfg.as_mut().ok_or(Error::NoSuchAxis(id))?;
                match f {
                    "spd" => c.steps_per_deg = v,
                    "home" => c.home_offset_deg = v,
                    "min" => c.min_deg = v,
                    "max" => c.max_deg = v,
                    "backlash" => c.backlash_deg = v,
                    "speed" => c.max_speed_deg_s = v,
                    _ => c.accel_deg_s2 = v,
                }
                changed = true;
            }
        }
        if let Some(v) = a.get("approach") {
            let c = cfg.as_mut().ok_or(Error::NoSuchAxis(id))?;
            c.approach = match v {
                "below" => Approach::FromBelow,
                "above" => Approach::FromAbove,
                _ => return Err(Error::BadValue),
            };
            changed = true;
        }
        if let Some(v) = a.get("wrap") {
            let c = cfg.as_mut().ok_or(Error::NoSuchAxis(id))?;
            c.wrap = parse_bool(v)?;
            changed = true;
        }
        a.check_all_used().map_err(tok_err)?;
        if changed {
            if self.enabled && self.axes.busy() {
                return Err(Error::Busy);
            }
            if let Some(c) = &cfg {
                c.validate()?;
            }
            set_axis(&mut rig, id, cfg);
            rig.validate()?;
            self.settings.rig = rig;
            self.solutions.clear();
        }
        rw.ok();
        match cfg {
            None => {
                rw.field_str("name", id.name()).field_i32("fitted", 0);
            }
            Some(c) => {
                axis_fields(rw, &c);
            }
        }
        Ok(None)
    }

    pub(super) fn cmd_zone<W: Write>(
        &mut self,
        a: &mut Args<'_>,
        rw: &mut Rw<'_, W>,
    ) -> Result<Option<Stream>> {
        let id = axis_id(a.get("name").ok_or(Error::MissingArgument)?)?;
        let i = parse_int(a.get("i").ok_or(Error::MissingArgument)?)?;
        let idx = usize::try_from(i)
            .ok()
            .filter(|&i| i < MAX_ZONES)
            .ok_or(Error::BadValue)?;
        let off = match a.positional(0) {
            Some("off") => true,
            Some(_) => return Err(Error::BadValue),
            None => false,
        };
        let from = opt_num(a, "from")?;
        let to = opt_num(a, "to")?;
        a.check_all_used().map_err(tok_err)?;
        let mut rig = self.settings.rig;
        let mut cfg = *axis_of(&rig, id).ok_or(Error::NoSuchAxis(id))?;
        let zone = match (off, from, to) {
            (true, None, None) => None,
            (false, Some(f), Some(t)) => Some(Zone {
                from_deg: f,
                to_deg: t,
            }),
            (true, _, _) => return Err(Error::UnknownArgument),
            _ => return Err(Error::MissingArgument),
        };
        *cfg.zones.get_mut(idx).ok_or(Error::BadValue)? = zone;
        cfg.validate()?;
        set_axis(&mut rig, id, Some(cfg));
        self.settings.rig = rig;
        self.solutions.clear();
        rw.ok().field_str("name", id.name()).field_i32("i", i);
        if let Some(z) = zone {
            rw.field_f32_rt("from", z.from_deg)
                .field_f32_rt("to", z.to_deg);
        }
        Ok(None)
    }
}

fn axis_fields<W: Write>(rw: &mut Rw<'_, W>, c: &AxisConfig) {
    axis_fields_geometry(rw, c);
    motion_fields(rw, c);
}

/// `name spd home min max`.
pub(super) fn axis_fields_geometry<W: Write>(rw: &mut Rw<'_, W>, c: &AxisConfig) {
    rw.field_str("name", c.id.name())
        .field_f32_rt("spd", c.steps_per_deg)
        .field_f32_rt("home", c.home_offset_deg)
        .field_f32_rt("min", c.min_deg)
        .field_f32_rt("max", c.max_deg);
}

/// `name backlash approach wrap speed accel`.
pub(super) fn axis_fields_motion<W: Write>(rw: &mut Rw<'_, W>, c: &AxisConfig) {
    rw.field_str("name", c.id.name());
    motion_fields(rw, c);
}

fn motion_fields<W: Write>(rw: &mut Rw<'_, W>, c: &AxisConfig) {
    rw.field_f32_rt("backlash", c.backlash_deg)
        .field_str(
            "approach",
            match c.approach {
                Approach::FromBelow => "below",
                Approach::FromAbove => "above",
            },
        )
        .field_i32("wrap", c.wrap as i32)
        .field_f32_rt("speed", c.max_speed_deg_s)
        .field_f32_rt("accel", c.accel_deg_s2);
}
