//! Argument readers and the small text helpers that replies share.

use embedded_io::Write;

use super::axes::axis_of;
use super::fault::{Accepted, Fault, Result};
use super::Rw;
use crate::console::wire::num;
use crate::console::wire::token::Args;
use crate::error::{AxisId, Error};
use crate::goniometer::{Branch, Refusal, Rig};
use crate::lattice::Miller;
use crate::surface::FracRod;
use core::fmt::Write as _;

/// The words of a 0/1 switch (`wrap=`, `fitted=`) and what they mean.
pub(super) const BOOL_WORDS: [(&str, bool); 6] = [
    ("1", true),
    ("on", true),
    ("yes", true),
    ("0", false),
    ("off", false),
    ("no", false),
];

/// The value of `key` read with `parse`, marking it used; a fault names the key and
/// value.
pub(super) fn keyed<'a, T>(
    a: &mut Args<'a>,
    key: &str,
    parse: impl FnOnce(&'a str) -> Result<T>,
) -> Result<Option<T>> {
    a.get(key)
        .map(|v| parse(v).map_err(|f| f.at(key, v)))
        .transpose()
}

/// `Err` for a required `key` that was not given: names it, with the usage line.
pub(super) fn missing(a: &Args<'_>, key: &str) -> Fault {
    Fault::from(Error::MissingArgument)
        .on_key(key)
        .because("required argument missing")
        .accepting(Accepted::usage_of(a.command()))
}

/// The value of a required `key`.
pub(super) fn req_word<'a>(a: &mut Args<'a>, key: &str) -> Result<&'a str> {
    a.get(key).ok_or_else(|| missing(a, key))
}

pub(super) fn parse_num(s: &str) -> Result<f32> {
    num::parse_f32(s).map_err(|e| Fault::number(e, false))
}

pub(super) fn opt_num(a: &mut Args<'_>, key: &str) -> Result<Option<f32>> {
    keyed(a, key, parse_num)
}

pub(super) fn req_num(a: &mut Args<'_>, key: &str) -> Result<f32> {
    opt_num(a, key)?.ok_or_else(|| missing(a, key))
}

/// A branch preference word (`nearest`, `+1`, `-1`).
pub(super) fn parse_branch(s: &str) -> Result<Branch> {
    Branch::from_word(s).ok_or_else(|| {
        Fault::from(Error::BadValue)
            .because("not a branch")
            .accepting(Accepted::Branch)
    })
}

pub(super) fn parse_int(s: &str) -> Result<i32> {
    num::parse_i32(s).map_err(|e| Fault::number(e, true))
}

pub(super) fn opt_int(a: &mut Args<'_>, key: &str) -> Result<Option<i32>> {
    keyed(a, key, parse_int)
}

pub(super) fn parse_bool(s: &str) -> Result<bool> {
    BOOL_WORDS
        .iter()
        .find(|(w, _)| *w == s)
        .map(|(_, b)| *b)
        .ok_or_else(|| {
            Fault::from(Error::BadValue)
                .because("not a switch")
                .accepting(Accepted::Bool)
        })
}

pub(super) fn axis_id(s: &str) -> Result<AxisId> {
    AxisId::from_name(s).ok_or_else(|| {
        Fault::from(Error::BadValue)
            .because("no such axis")
            .accepting(Accepted::AxisNames)
    })
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

/// Writes `name=` component `i` (0 = h, 1 = k) of `pos`: a whole number or a reduced
/// fraction (`1/2`).
pub(super) fn write_frac<W: Write>(rw: &mut Rw<'_, W>, name: &str, pos: &FracRod, i: usize) {
    let mut t: heapless::String<24> = heapless::String::new();
    // 24 bytes hold any reduced component (±9801/99 at most).
    let _ = match pos.reduced(i) {
        (v, 1) => write!(t, "{v}"),
        (v, d) => write!(t, "{v}/{d}"),
    };
    rw.field_str(name, &t);
}
