//! Argument readers and the small text helpers that replies share.

use embedded_io::Write;

use super::axes::axis_of;
use super::Rw;
use crate::console::wire::num;
use crate::console::wire::token::{Args, TokenError};
use crate::error::{AxisId, Error, Result};
use crate::goniometer::{Branch, Refusal, Rig};
use crate::lattice::Miller;

pub(super) fn tok_err(e: TokenError) -> Error {
    match e {
        TokenError::NoCommand | TokenError::BadCommand => Error::UnknownCommand,
        TokenError::EmptyValue => Error::MissingArgument,
        TokenError::Unused | TokenError::TooMany => Error::UnknownArgument,
        TokenError::BadKey | TokenError::DuplicateKey => Error::BadValue,
    }
}

pub(super) fn parse_num(s: &str) -> Result<f32> {
    num::parse_f32(s).map_err(|_| Error::BadNumber)
}

pub(super) fn opt_num(a: &mut Args<'_>, key: &str) -> Result<Option<f32>> {
    a.get(key).map(parse_num).transpose()
}

pub(super) fn req_num(a: &mut Args<'_>, key: &str) -> Result<f32> {
    opt_num(a, key)?.ok_or(Error::MissingArgument)
}

/// A branch preference word (`nearest`, `+1`, `-1`).
pub(super) fn parse_branch(s: &str) -> Result<Branch> {
    Branch::from_word(s).ok_or(Error::BadValue)
}

pub(super) fn parse_int(s: &str) -> Result<i32> {
    num::parse_i32(s).map_err(|_| Error::BadNumber)
}

pub(super) fn parse_rod(s: &str) -> Result<[i32; 2]> {
    let mut it = s.split(',');
    let h = parse_int(it.next().ok_or(Error::BadValue)?)?;
    let k = parse_int(it.next().ok_or(Error::BadValue)?)?;
    if it.next().is_some() {
        return Err(Error::BadValue);
    }
    if h.abs() > 99 || k.abs() > 99 {
        return Err(Error::IndicesTooLarge);
    }
    Ok([h, k])
}

pub(super) fn parse_bool(s: &str) -> Result<bool> {
    match s {
        "1" | "on" | "yes" => Ok(true),
        "0" | "off" | "no" => Ok(false),
        _ => Err(Error::BadValue),
    }
}

pub(super) fn axis_id(s: &str) -> Result<AxisId> {
    AxisId::from_name(s).ok_or(Error::BadValue)
}

/// `err <code> [<axis> <limit or zone>:] <message>`: axis errors name the axis, the
/// limit value or the zone and its range.
pub(super) fn write_err<W: Write>(rw: &mut Rw<'_, W>, e: Error, rig: &Rig) {
    let Some(id) = e.axis() else {
        rw.err(e.code(), e.message());
        return;
    };
    let mut nb = [0u8; num::NUM_BUF_LEN];
    let mut nc = [0u8; num::NUM_BUF_LEN];
    rw.err(e.code(), id.name());
    let cfg = axis_of(rig, id);
    match (e, cfg) {
        (Error::BelowLimit(_), Some(c)) => {
            rw.text("min")
                .text(num::format_f32_roundtrip(c.min_deg, &mut nb));
        }
        (Error::AboveLimit(_), Some(c)) => {
            rw.text("max")
                .text(num::format_f32_roundtrip(c.max_deg, &mut nb));
        }
        (Error::InZone(_, z) | Error::PathCrossesZone(_, z), Some(c)) => {
            rw.text("zone").text(num::format_i32(z as i32, &mut nb));
            if let Some(Some(zone)) = c.zones.get(z as usize) {
                rw.text("from")
                    .text(num::format_f32_roundtrip(zone.from_deg, &mut nc));
                let mut nd = [0u8; num::NUM_BUF_LEN];
                rw.text("to")
                    .text(num::format_f32_roundtrip(zone.to_deg, &mut nd));
            }
        }
        _ => {
            rw.text("axis");
        }
    }
    rw.text("-").text(e.message());
}

/// `- refused branch=… axis=… target=… err=… [min=|max=|zone= from= to=] [by=]`: one
/// axis of one pose that refuses an `aim`.
pub(super) fn write_refusal<W: Write>(rw: &mut Rw<'_, W>, r: &Refusal, rig: &Rig) {
    rw.item()
        .word("refused")
        .field_i32("branch", i32::from(r.branch))
        .field_str("axis", r.axis.name())
        .field_f32_rt("target", r.target_deg)
        .field_i32("err", i32::from(r.error.code()));
    let cfg = axis_of(rig, r.axis);
    match (r.error, cfg) {
        (Error::BelowLimit(_), Some(c)) => {
            rw.field_f32_rt("min", c.min_deg);
        }
        (Error::AboveLimit(_), Some(c)) => {
            rw.field_f32_rt("max", c.max_deg);
        }
        (Error::InZone(_, z) | Error::PathCrossesZone(_, z), c) => {
            rw.field_i32("zone", i32::from(z));
            if let Some(Some(zone)) = c.and_then(|c| c.zones.get(usize::from(z))) {
                rw.field_f32_rt("from", zone.from_deg)
                    .field_f32_rt("to", zone.to_deg);
            }
        }
        _ => {}
    }
    if let Some(d) = r.by_deg {
        rw.field_f32_rt("by", d);
    }
}

pub(super) fn write_point_error<W: Write>(rw: &mut Rw<'_, W>, e: Error) {
    rw.field_i32("err", e.code() as i32);
    if let Some(a) = e.axis() {
        rw.field_str("axis", a.name());
    }
    if let Error::InZone(_, z) | Error::PathCrossesZone(_, z) = e {
        rw.field_i32("zone", z as i32);
    }
}

/// Writes `h,k,l` into `buf`.
pub(super) fn miller_text(m: Miller, buf: &mut [u8; 40]) -> &str {
    join_ints(&m, buf)
}

/// Writes `h,k` into `buf`.
pub(super) fn rod_text(r: [i32; 2], buf: &mut [u8; 40]) -> &str {
    join_ints(&r, buf)
}

/// Comma-separated integers into `buf` (cut at its end).
fn join_ints<'b>(vals: &[i32], buf: &'b mut [u8; 40]) -> &'b str {
    let mut len = 0usize;
    let mut put = |b: u8, len: &mut usize| {
        if let Some(slot) = buf.get_mut(*len) {
            *slot = b;
            *len += 1;
        }
    };
    for (i, v) in vals.iter().enumerate() {
        if i > 0 {
            put(b',', &mut len);
        }
        let mut nb = [0u8; num::NUM_BUF_LEN];
        for b in num::format_i32(*v, &mut nb).bytes() {
            put(b, &mut len);
        }
    }
    buf.get(..len)
        .and_then(|b| core::str::from_utf8(b).ok())
        .unwrap_or("")
}
