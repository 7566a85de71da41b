//! `axis` and `zone`: the rig as the controller holds it, and how its axes are printed.

use embedded_io::Write;

use super::args::{axis_id, keyed, missing, opt_num, parse_bool, parse_int};
use super::fault::{check_used, check_used_or, Accepted, Fault, Result};
use super::{Console, Rw, Stream};
use crate::axis::{keys, Approach, AxisConfig, Zone, MAX_ZONES};
use crate::console::board::{AxisDriver, Detector, Interlock};
use crate::console::wire::token::Args;
use crate::error::{AxisId, Error};
use crate::goniometer::{CheckedRig, Rig};

/// The numeric fields `axis` sets, named as in rig files ([`keys`]).
const NUMBER_FIELDS: [&str; 7] = [
    keys::STEPS_PER_DEG,
    keys::HOME_OFFSET_DEG,
    keys::MIN_DEG,
    keys::MAX_DEG,
    keys::BACKLASH_DEG,
    keys::MAX_SPEED_DEG_S,
    keys::ACCEL_DEG_S2,
];

/// Every key `axis` takes, in the order `help` and error replies list them.
pub(super) const AXIS_KEYS: [&str; 11] = [
    "name",
    keys::STEPS_PER_DEG,
    keys::HOME_OFFSET_DEG,
    keys::MIN_DEG,
    keys::MAX_DEG,
    keys::BACKLASH_DEG,
    keys::APPROACH,
    keys::WRAP,
    keys::MAX_SPEED_DEG_S,
    keys::ACCEL_DEG_S2,
    "fitted",
];

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

/// Whether going from `old` to `new` changes what a step count means — steps per
/// degree, home offset, wrap, or whether the axis is fitted: then where the axis stands
/// is no longer known from its counter.
fn calibration_changed(old: Option<&AxisConfig>, new: Option<&AxisConfig>) -> bool {
    match (old, new) {
        (Some(o), Some(n)) => {
            o.steps_per_deg.to_bits() != n.steps_per_deg.to_bits()
                || o.home_offset_deg.to_bits() != n.home_offset_deg.to_bits()
                || o.wrap != n.wrap
        }
        (None, None) => false,
        _ => true,
    }
}

/// The axis a required `name=` names.
fn read_axis_name(a: &mut Args<'_>) -> Result<AxisId> {
    keyed(a, "name", axis_id)?.ok_or_else(|| missing(a, "name"))
}

impl<A: AxisDriver, D: Detector, I: Interlock> Console<A, D, I> {
    pub(super) fn cmd_axis<W: Write>(
        &mut self,
        a: &mut Args<'_>,
        rw: &mut Rw<'_, W>,
    ) -> Result<Option<Stream>> {
        let id = read_axis_name(a)?;
        let mut rig = *self.settings.rig.rig();
        let fitted = keyed(a, "fitted", |v| match (parse_bool(v)?, id) {
            (f, AxisId::Elevation) => Ok(f),
            _ => Err(Fault::from(Error::BadValue)
                .because("only the elevation axis can be fitted or removed")),
        })?;
        let mut cfg = match fitted {
            Some(false) => None,
            Some(true) => Some(rig.elevation.unwrap_or(default_elevation())),
            None => axis_of(&rig, id).copied(),
        };
        let mut changed = fitted.is_some();
        for (i, f) in NUMBER_FIELDS.into_iter().enumerate() {
            if let Some(v) = opt_num(a, f)? {
                let c = cfg.as_mut().ok_or(Error::NoSuchAxis(id))?;
                let slot = match i {
                    0 => &mut c.steps_per_deg,
                    1 => &mut c.home_offset_deg,
                    2 => &mut c.min_deg,
                    3 => &mut c.max_deg,
                    4 => &mut c.backlash_deg,
                    5 => &mut c.max_speed_deg_s,
                    _ => &mut c.accel_deg_s2,
                };
                *slot = v;
                changed = true;
            }
        }
        let approach = keyed(a, keys::APPROACH, |v| {
            Approach::from_word(v).ok_or_else(|| {
                Fault::from(Error::BadValue)
                    .because("no such approach")
                    .accepting(Accepted::Approach)
            })
        })?;
        if let Some(ap) = approach {
            let c = cfg.as_mut().ok_or(Error::NoSuchAxis(id))?;
            c.approach = ap;
            changed = true;
        }
        if let Some(w) = keyed(a, keys::WRAP, parse_bool)? {
            let c = cfg.as_mut().ok_or(Error::NoSuchAxis(id))?;
            c.wrap = w;
            changed = true;
        }
        check_used_or(a, Accepted::AxisKeys)?;
        if changed {
            // Nothing of an axis changes under a moving or enabled machine.
            self.require_at_rest()?;
            if let Some(c) = &cfg {
                c.validate()?;
            }
            let recalibrated = calibration_changed(axis_of(&rig, id), cfg.as_ref());
            set_axis(&mut rig, id, cfg);
            self.settings.rig = CheckedRig::new(rig)?;
            self.solutions.clear();
            if recalibrated {
                self.forget_position(id);
            }
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
        let id = read_axis_name(a)?;
        let idx = keyed(a, "i", |v| {
            usize::try_from(parse_int(v)?)
                .ok()
                .filter(|&i| i < MAX_ZONES)
                .ok_or_else(|| Fault::from(Error::BadValue).because("zone slots are 0 to 3"))
        })?
        .ok_or_else(|| missing(a, "i"))?;
        let off = match a.positional(0) {
            Some("off") => true,
            Some(w) => {
                return Err(Fault::from(Error::BadValue)
                    .quoting(w)
                    .because("the only word zone takes is off")
                    .accepting(Accepted::usage_of("zone")))
            }
            None => false,
        };
        let from = opt_num(a, "from")?;
        let to = opt_num(a, "to")?;
        check_used(a)?;
        let mut rig = *self.settings.rig.rig();
        let mut cfg = *axis_of(&rig, id).ok_or(Error::NoSuchAxis(id))?;
        let zone = match (off, from, to) {
            (true, None, None) => None,
            (false, Some(f), Some(t)) => Some(Zone {
                from_deg: f,
                to_deg: t,
            }),
            (true, _, _) => {
                return Err(Fault::from(Error::UnknownArgument)
                    .on_key(if from.is_some() { "from" } else { "to" })
                    .because("zone off takes no from= or to="))
            }
            (false, None, _) => return Err(missing(a, "from")),
            (false, Some(_), None) => return Err(missing(a, "to")),
        };
        *cfg.zones.get_mut(idx).ok_or(Error::BadValue)? = zone;
        self.require_at_rest()?;
        cfg.validate()?;
        set_axis(&mut rig, id, Some(cfg));
        self.settings.rig = CheckedRig::new(rig)?;
        self.solutions.clear();
        rw.ok()
            .field_str("name", id.name())
            .field_i32("i", idx as i32);
        if let Some(z) = zone {
            rw.field_f32_rt("from", z.from_deg)
                .field_f32_rt("to", z.to_deg);
        }
        Ok(None)
    }
}

fn axis_fields<W: Write>(rw: &mut Rw<'_, W>, c: &AxisConfig) {
    rw.field_str("name", c.id.name());
    for part in 0..AXIS_PARTS {
        axis_part(rw, c, part);
    }
}

/// Groups of axis fields in the `axis` reply.
const AXIS_PARTS: u8 = 4;

/// Fields of group `part` (0: steps and home, 1: limits, 2: backlash, approach, wrap,
/// 3: speed and acceleration), named as in rig files ([`keys`]).
fn axis_part<W: Write>(rw: &mut Rw<'_, W>, c: &AxisConfig, part: u8) {
    match part {
        0 => {
            rw.field_f32_rt(keys::STEPS_PER_DEG, c.steps_per_deg)
                .field_f32_rt(keys::HOME_OFFSET_DEG, c.home_offset_deg);
        }
        1 => {
            rw.field_f32_rt(keys::MIN_DEG, c.min_deg)
                .field_f32_rt(keys::MAX_DEG, c.max_deg);
        }
        2 => {
            rw.field_f32_rt(keys::BACKLASH_DEG, c.backlash_deg)
                .field_str(keys::APPROACH, c.approach.word())
                .field_i32(keys::WRAP, c.wrap as i32);
        }
        _ => {
            rw.field_f32_rt(keys::MAX_SPEED_DEG_S, c.max_speed_deg_s)
                .field_f32_rt(keys::ACCEL_DEG_S2, c.accel_deg_s2);
        }
    }
}
