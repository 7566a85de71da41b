//! `dump`: the settings as requests that replay them onto a factory console — the
//! setting keys from [`SETTING_KEYS`], then four lines per axis (steps and home, limits,
//! backlash and approach, speed),
//! then one line per zone slot of every fitted axis.

use embedded_io::Write;

use super::axes::{axis_of, axis_part, AXIS_PARTS};
use super::settings::{Settings, SETTING_DUMP_LINES, SETTING_KEYS};
use super::Rw;
use crate::axis::MAX_ZONES;
use crate::error::AxisId;

/// What [`Settings::dump_line`] produced.
pub(super) enum Dump {
    /// A line was written.
    Line,
    /// Nothing to write at this index (an absent axis); go on.
    Skip,
    /// Past the last line.
    End,
}

/// Dump lines per axis: one per field group, so that each fits the request limit.
const AXIS_LINES: usize = AXIS_PARTS as usize;

impl Settings {
    /// Line `i` of the dump into `rw`.
    pub(super) fn dump_line<W: Write>(&self, i: u8, rw: &mut Rw<'_, W>) -> Dump {
        if i < SETTING_DUMP_LINES {
            rw.item().word("set");
            for key in SETTING_KEYS
                .iter()
                .filter(|k| k.settable && k.dump_line == i)
            {
                if self.write_key(key, true, rw).is_err() {
                    return Dump::Skip;
                }
            }
            return Dump::Line;
        }
        let k = usize::from(i - SETTING_DUMP_LINES);
        let axis_lines = AxisId::ALL.len() * AXIS_LINES;
        if let Some(&id) = AxisId::ALL.get(k / AXIS_LINES).filter(|_| k < axis_lines) {
            let part = (k % AXIS_LINES) as u8;
            match (axis_of(&self.rig, id), part) {
                (Some(c), _) => {
                    rw.item().word("axis").field_str("name", id.name());
                    if id == AxisId::Elevation && part == 0 {
                        rw.field_i32("fitted", 1);
                    }
                    axis_part(rw, c, part);
                }
                (None, 0) => {
                    rw.item()
                        .word("axis")
                        .field_str("name", id.name())
                        .field_i32("fitted", 0);
                }
                (None, _) => return Dump::Skip,
            }
            return Dump::Line;
        }
        let z = k - axis_lines;
        let Some(&id) = AxisId::ALL.get(z / MAX_ZONES) else {
            return Dump::End;
        };
        let slot = z % MAX_ZONES;
        let Some(c) = axis_of(&self.rig, id) else {
            return Dump::Skip;
        };
        rw.item()
            .word("zone")
            .field_str("name", id.name())
            .field_i32("i", slot as i32);
        match c.zones.get(slot).copied().flatten() {
            Some(zone) => {
                rw.field_f32_rt("from", zone.from_deg)
                    .field_f32_rt("to", zone.to_deg);
            }
            None => {
                rw.word("off");
            }
        }
        Dump::Line
    }
}
