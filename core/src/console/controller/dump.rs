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
//! 3. the setting keys of [`SETTING_KEYS`] on four lines (the gun and inner potential;
//!    crystal, face, tilt, azimuth, beam and branch; the temperature and acceptance; the
//!    relaxation and the inner-potential model, after the face that may take the model
//!    back to `constant`), each of which fits
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
use crate::console::wire::reply::ReplyWriter;
use crate::error::AxisId;
use crate::goniometer::{Rig, ACCEPTANCE_MAX_DEG};

/// What one line of the console's `dump` or of a rig's requests
/// ([`rig_request`]) came to.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Dump {
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

/// Lines of the rig's part of the dump: the head and every axis's lines.
const RIG_LINES: usize = HEAD_LINES + AxisId::ALL.len() * AXIS_LINES;

/// Starts a line with `word`: as a dump item (`- word …`) or as a request (`word …`).
fn start<'r, 'w, W: Write, const N: usize>(
    rw: &'r mut ReplyWriter<'w, W, N>,
    item: bool,
    word: &str,
) -> &'r mut ReplyWriter<'w, W, N> {
    if item {
        rw.item().word(word)
    } else {
        rw.begin(word)
    }
}

/// Line `i` of the rig's part of the dump (the head and the axes), or `None` past it.
fn rig_line<W: Write, const N: usize>(
    rig: &Rig,
    i: usize,
    item: bool,
    rw: &mut ReplyWriter<'_, W, N>,
) -> Option<Dump> {
    if i < HEAD_LINES {
        start(rw, item, "set").field_f32_rt("acceptance", ACCEPTANCE_MAX_DEG);
        return Some(Dump::Line);
    }
    let k = i - HEAD_LINES;
    let id = AxisId::ALL.get(k / AXIS_LINES).filter(|_| i < RIG_LINES)?;
    Some(axis_line(rig, *id, k % AXIS_LINES, item, rw))
}

/// Line `i` of the requests that load `rig` — its axes, zones and detector acceptance —
/// onto a console with motion disabled: the rig's lines of `dump` (the widest
/// acceptance, then for each axis its zone slots off, its configuration lines and its
/// zones, in the order docs/PROTOCOL.md gives for `dump`), as requests
/// without the leading `- `, then `set acceptance=` with the rig's own acceptance. The
/// line is built in `rw` (send it with [`ReplyWriter::finish`]); [`Dump::Skip`] means
/// nothing to send at this index (an absent axis, a free zone slot), [`Dump::End`]
/// that `i` is past the last line. Sent in order, every line is accepted, whatever the
/// console's configuration was, and the console then holds `rig` exactly (its `dump`
/// prints the same axis lines); axes whose calibration changed must be declared with
/// `home` before they move. At most 256 indices; each call does bounded work.
///
/// ```
/// use matterwave_core::console::controller::{rig_request, Dump};
/// use matterwave_core::console::reply::ReplyWriter;
/// use matterwave_core::goniometer::Rig;
/// let rig = Rig::bench_default();
/// let mut wire = [0u8; 128];
/// let mut port = &mut wire[..];
/// let mut rw = ReplyWriter::new(&mut port, false);
/// assert_eq!(rig_request(&rig, 0, &mut rw), Dump::Line);
/// assert_eq!(rw.line(), "set acceptance=20");
/// assert_eq!(rig_request(&rig, 255, &mut rw), Dump::End);
/// ```
pub fn rig_request<W: Write, const N: usize>(
    rig: &Rig,
    i: u8,
    rw: &mut ReplyWriter<'_, W, N>,
) -> Dump {
    let i = usize::from(i);
    if let Some(d) = rig_line(rig, i, false, rw) {
        return d;
    }
    if i == RIG_LINES {
        rw.begin("set")
            .field_f32_rt("acceptance", rig.acceptance_deg);
        return Dump::Line;
    }
    Dump::End
}

// Every index of the rig's requests fits a u8.
const _: () = assert!(RIG_LINES < u8::MAX as usize);

impl Settings {
    /// Line `i` of the dump into `rw`.
    pub(super) fn dump_line<W: Write>(&self, i: u8, rw: &mut Rw<'_, W>) -> Dump {
        let k = usize::from(i);
        if let Some(d) = rig_line(&self.rig, k, true, rw) {
            return d;
        }
        let line = k - RIG_LINES;
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
}

/// Line `slot` (0 to [`AXIS_LINES`] − 1) of axis `id`'s part of the dump (`item`) or of
/// the rig's requests.
fn axis_line<W: Write, const N: usize>(
    rig: &Rig,
    id: AxisId,
    slot: usize,
    item: bool,
    rw: &mut ReplyWriter<'_, W, N>,
) -> Dump {
    let cfg = axis_of(rig, id);
    if slot == 0 {
        if id != AxisId::Elevation {
            return Dump::Skip;
        }
        start(rw, item, "axis")
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
        zone_head(rw, item, id, slot - zone_off.start).word("off");
    } else if config.contains(&slot) {
        start(rw, item, "axis").field_str("name", id.name());
        config_line(rw, c, slot - config.start);
    } else {
        let i = slot - config.end;
        let Some(z) = c.zones.get(i).copied().flatten() else {
            return Dump::Skip;
        };
        zone_head(rw, item, id, i)
            .field_f32_rt("from", z.from_deg)
            .field_f32_rt("to", z.to_deg);
    }
    Dump::Line
}

/// `- zone name=<id> i=<slot>` (a request without the `- `).
fn zone_head<'r, 'w, W: Write, const N: usize>(
    rw: &'r mut ReplyWriter<'w, W, N>,
    item: bool,
    id: AxisId,
    slot: usize,
) -> &'r mut ReplyWriter<'w, W, N> {
    start(rw, item, "zone")
        .field_str("name", id.name())
        .field_i32("i", slot as i32)
}

/// The fields of configuration line `n` (0 to 3) of an axis, in the order of the module
/// docs, named as in rig files ([`keys`]).
fn config_line<W: Write, const N: usize>(rw: &mut ReplyWriter<'_, W, N>, c: &AxisConfig, n: usize) {
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
