//! `dump`: the settings as requests that replay them onto a factory console — or onto
//! any console at rest (motion disabled) — in an order where every line is accepted on
//! its own, whatever state the console was in before:
//!
//! 1. `set acceptance=20`, the widest acceptance, so that no axis's step is too coarse
//!    on the way ([`Rig::validate`](crate::goniometer::Rig::validate));
//! 2. for each axis in protocol order ([`AxisId::ALL`]): for the elevation whether it is
//!    fitted; every zone slot off; steps per degree capped at [`REPLAY_STEPS_PER_DEG`]
//!    (with `wrap=1` for a wrapping axis); home and limits; steps per degree, backlash,
//!    approach and wrap; speed and acceleration; then the zones that are set, in slot
//!    order;
//! 3. the setting keys of [`SETTING_KEYS`] on three lines (the gun and inner potential;
//!    crystal, face, tilt, azimuth, beam and branch; the acceptance), each of which fits
//!    one request line with its checksum whatever the values
//!    (`tests/tests/reply_lengths.rs` checks every dump line with every number at its
//!    longest).
//!
//! Why each line is accepted (the checks of `AxisConfig::validate`): with the zones
//! cleared only home, limits, wrap and the counter's reach relate the fields. At the
//! capped steps per degree every home and limits the console accepts (|home| ≤ 360°,
//! |limit| ≤ 720°) lie within the counter's reach, so the capped line, and the home and
//! limits line after it, are accepted under the old home and limits, wrapping or not —
//! and a wrapping axis becomes one before its new home is set (a wrapping axis may keep
//! its home outside its limits). The third line then gives the axis its own
//! configuration without zones, which is valid as the whole configuration is; and adding
//! valid zones one by one in slot order never makes one invalid.

use embedded_io::Write;

use super::axes::axis_of;
use super::settings::{Settings, SETTING_DUMP_LINES, SETTING_KEYS};
use super::Rw;
use crate::axis::{keys, AxisConfig, MAX_ZONES, STEPS_MAX};
use crate::error::AxisId;
use crate::goniometer::ACCEPTANCE_MAX_DEG;

/// What [`Settings::dump_line`] produced.
pub(super) enum Dump {
    /// A line was written.
    Line,
    /// Nothing to write at this index (an absent axis, a free zone slot); go on.
    Skip,
    /// Past the last line.
    End,
}

/// Steps per degree the dump sets before an axis's home and limits: the most at which
/// every home (|home| ≤ 360°) and limit (|limit| ≤ 720°) lies within the counter's reach,
/// 2^24 / 1080, rounded down.
pub const REPLAY_STEPS_PER_DEG: f32 = 15534.0;

// 1080° × 15534 = 16 776 720 ≤ 2^24 (a wrapping axis needs only 360°).
const _: () = assert!(1080 * 15534 <= STEPS_MAX);

/// Dump lines per axis: whether fitted (the elevation only), a zone-off line per slot,
/// four configuration lines, a zone line per slot.
const AXIS_LINES: usize = 1 + MAX_ZONES + 4 + MAX_ZONES;

/// Lines before the axes: `set acceptance=20`.
const HEAD_LINES: usize = 1;

impl Settings {
    /// Line `i` of the dump into `rw`.
    pub(super) fn dump_line<W: Write>(&self, i: u8, rw: &mut Rw<'_, W>) -> Dump {
        let k = usize::from(i);
        if k < HEAD_LINES {
            rw.item()
                .word("set")
                .field_f32_rt("acceptance", ACCEPTANCE_MAX_DEG);
            return Dump::Line;
        }
        let k = k - HEAD_LINES;
        let axis_lines = AxisId::ALL.len() * AXIS_LINES;
        if let Some(&id) = AxisId::ALL.get(k / AXIS_LINES).filter(|_| k < axis_lines) {
            return self.axis_line(id, k % AXIS_LINES, rw);
        }
        let line = k - axis_lines;
        if line >= usize::from(SETTING_DUMP_LINES) {
            return Dump::End;
        }
        rw.item().word("set");
        for key in SETTING_KEYS
            .iter()
            .filter(|key| key.settable && usize::from(key.dump_line) == line)
        {
            if self.write_key(key, true, rw).is_err() {
                return Dump::Skip;
            }
        }
        Dump::Line
    }

    /// Line `slot` (0 to [`AXIS_LINES`] − 1) of axis `id`'s part of the dump.
    fn axis_line<W: Write>(&self, id: AxisId, slot: usize, rw: &mut Rw<'_, W>) -> Dump {
        let cfg = axis_of(&self.rig, id);
        if slot == 0 {
            if id != AxisId::Elevation {
                return Dump::Skip;
            }
            rw.item()
                .word("axis")
                .field_str("name", id.name())
                .field_i32("fitted", cfg.is_some() as i32);
            return Dump::Line;
        }
        let Some(c) = cfg else {
            return Dump::Skip;
        };
        let zone_off = 1..1 + MAX_ZONES;
        let config = zone_off.end..zone_off.end + 4;
        if zone_off.contains(&slot) {
            zone_head(rw, id, slot - zone_off.start).word("off");
        } else if config.contains(&slot) {
            rw.item().word("axis").field_str("name", id.name());
            config_line(rw, c, slot - config.start);
        } else {
            let i = slot - config.end;
            let Some(z) = c.zones.get(i).copied().flatten() else {
                return Dump::Skip;
            };
            zone_head(rw, id, i)
                .field_f32_rt("from", z.from_deg)
                .field_f32_rt("to", z.to_deg);
        }
        Dump::Line
    }
}

/// `- zone name=<id> i=<slot>`.
fn zone_head<'r, 'w, W: Write>(
    rw: &'r mut Rw<'w, W>,
    id: AxisId,
    slot: usize,
) -> &'r mut Rw<'w, W> {
    rw.item()
        .word("zone")
        .field_str("name", id.name())
        .field_i32("i", slot as i32)
}

/// The fields of configuration line `n` (0 to 3) of an axis, in the order of the module
/// docs, named as in rig files ([`keys`]).
fn config_line<W: Write>(rw: &mut Rw<'_, W>, c: &AxisConfig, n: usize) {
    match n {
        0 => {
            rw.field_f32_rt(
                keys::STEPS_PER_DEG,
                c.steps_per_deg.min(REPLAY_STEPS_PER_DEG),
            );
            if c.wrap {
                rw.field_i32(keys::WRAP, 1);
            }
        }
        1 => {
            rw.field_f32_rt(keys::HOME_OFFSET_DEG, c.home_offset_deg)
                .field_f32_rt(keys::MIN_DEG, c.min_deg)
                .field_f32_rt(keys::MAX_DEG, c.max_deg);
        }
        2 => {
            rw.field_f32_rt(keys::STEPS_PER_DEG, c.steps_per_deg)
                .field_f32_rt(keys::BACKLASH_DEG, c.backlash_deg)
                .field_str(keys::APPROACH, c.approach.word())
                .field_i32(keys::WRAP, c.wrap as i32);
        }
        _ => {
            rw.field_f32_rt(keys::MAX_SPEED_DEG_S, c.max_speed_deg_s)
                .field_f32_rt(keys::ACCEL_DEG_S2, c.accel_deg_s2);
        }
    }
}
