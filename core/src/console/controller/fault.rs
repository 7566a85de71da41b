//! A failed request's fault — the core [`Error`] (its code) and what it is about — and the
//! one writer of `err` lines.
//!
//! The code says what kind of failure it was; the detail says where, so that a
//! technician can act on the line: the key (`tilt`), the value or token quoted back as
//! it was sent (cut to [`VALUE_ECHO`] characters, printable ASCII only, see [`Echo`]),
//! the reason (`not a decimal number`, `key given twice`, …), and what is accepted
//! instead, read from the tables the commands themselves read ([`SETTING_KEYS`], the
//! axis keys, [`COMMANDS`]). A fault is fixed-size and `Copy`: it carries copies, not
//! borrows of the request line.
//!
//! Line shapes:
//!
//! * `err <code> <message>` — no detail (the message of [`Error::message`]);
//! * `err <code> <axis> <limit or zone> - <message>` — axis errors;
//! * `err <code> <subject> - <reason>[; accepted: <word> …| ; usage: <usage>]`, where the
//!   subject is `key`, `key="value"` or `"token"`, and a value or token that was cut is
//!   followed by `...`.
//!
//! Detail never makes a reply too long: it is cut to the line ([`ReplyWriter::text_cut`]).
//!
//! [`ReplyWriter::text_cut`]: crate::console::wire::reply::ReplyWriter::text_cut

use embedded_io::Write;

use super::args::BOOL_WORDS;
use super::axes::{axis_of, AXIS_KEYS};
use super::settings::{DOMAIN_WORDS, SETTING_KEYS};
use super::{Rw, COMMANDS, MAX_REPLY};
use crate::axis::{Approach, MAX_ZONES};
use crate::console::wire::num::{self, NumError};
use crate::console::wire::reply::Echo;
use crate::console::wire::token::{Args, TokenError, TokenFault, MAX_ARGS};
use crate::error::{AxisId, Error};
use crate::goniometer::{Branch, Rig};
use crate::inner::V0ModelKind;

/// Longest key quoted back, characters (the longest key of the protocol has 15).
pub(super) const KEY_ECHO: usize = 16;

/// Longest value or token quoted back, characters.
pub(super) const VALUE_ECHO: usize = 24;

/// Room for a composed subject: `key...="value"...`.
const SUBJECT_LEN: usize = KEY_ECHO + VALUE_ECHO + 12;

/// Room for a reason with its `; accepted:` or `; usage:` joint: a whole line, so that
/// only the line's own limit ever cuts it.
const REASON_LEN: usize = MAX_REPLY;

/// The controller's result: the core's errors, with their detail.
pub(super) type Result<T> = core::result::Result<T, Fault>;

/// What a fault is about, as the request named it.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Subject {
    /// Nothing named.
    None,
    /// A key, without its value (`energy=` with nothing after it, a missing key).
    Key(Echo<KEY_ECHO>),
    /// A key and the value given for it.
    KeyValue(Echo<KEY_ECHO>, Echo<VALUE_ECHO>),
    /// A token that is no `key=value` (a command word, an extra word, a bad key).
    Token(Echo<VALUE_ECHO>),
}

/// What a fault line lists as accepted instead, from the tables the commands read.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(super) enum Accepted {
    /// Nothing listed.
    Nothing,
    /// The keys `set` takes (the settable [`SETTING_KEYS`]).
    SetKeys,
    /// The keys `get` names (every [`SETTING_KEYS`] entry).
    GetKeys,
    /// The keys `axis` takes ([`AXIS_KEYS`]).
    AxisKeys,
    /// The axis names ([`AxisId::name`]).
    AxisNames,
    /// The approach words ([`Approach::word`]).
    Approach,
    /// The words of a 0/1 switch ([`BOOL_WORDS`]).
    Bool,
    /// The branch preferences ([`Branch::word`]).
    Branch,
    /// The inner-potential models ([`V0ModelKind::name`]).
    V0Models,
    /// The words of `domains=` ([`DOMAIN_WORDS`]).
    Domains,
    /// A command's usage line from [`COMMANDS`].
    Usage(&'static str),
}

impl Accepted {
    /// Word `i` of the list (`None` past its end, and for [`Accepted::Usage`]).
    pub(super) fn word(self, i: usize) -> Option<&'static str> {
        match self {
            Accepted::Nothing | Accepted::Usage(_) => None,
            Accepted::SetKeys => SETTING_KEYS
                .iter()
                .filter(|k| k.settable)
                .nth(i)
                .map(|k| k.name),
            Accepted::GetKeys => SETTING_KEYS.get(i).map(|k| k.name),
            Accepted::AxisKeys => AXIS_KEYS.get(i).copied(),
            Accepted::AxisNames => AxisId::ALL.get(i).map(|a| a.name()),
            Accepted::Approach => Approach::ALL.get(i).map(|a| a.word()),
            Accepted::Bool => BOOL_WORDS.get(i).map(|w| w.0),
            Accepted::Branch => Branch::ALL.get(i).map(|b| b.word()),
            Accepted::V0Models => V0ModelKind::ALL.get(i).map(|k| k.name()),
            Accepted::Domains => DOMAIN_WORDS.get(i).map(|w| w.0),
        }
    }

    /// The keys a command takes where a table lists them: `set` and `axis` (`help`
    /// lists them after the usage line).
    pub(super) fn keys_of(command: &str) -> Option<Accepted> {
        match command {
            "set" => Some(Accepted::SetKeys),
            "axis" => Some(Accepted::AxisKeys),
            _ => None,
        }
    }

    /// What `command` accepts: its keys ([`Accepted::keys_of`]), else its usage line
    /// (nothing for a command not in [`COMMANDS`]).
    pub(super) fn usage_of(command: &str) -> Accepted {
        Accepted::keys_of(command).unwrap_or_else(|| {
            COMMANDS
                .iter()
                .find(|(c, _)| *c == command)
                .map_or(Accepted::Nothing, |(_, u)| Accepted::Usage(u))
        })
    }
}

/// A failed request: the [`Error`] that gives the code, and what it is about.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(super) struct Fault {
    /// The error; its code is the reply's.
    pub(super) error: Error,
    subject: Subject,
    /// Said instead of the error's message.
    reason: Option<&'static str>,
    accepted: Accepted,
}

impl From<Error> for Fault {
    fn from(error: Error) -> Self {
        Fault {
            error,
            subject: Subject::None,
            reason: None,
            accepted: Accepted::Nothing,
        }
    }
}

// The reasons below name these limits.
const _: () = assert!(MAX_ARGS == 12 && MAX_ZONES == 4);

impl Fault {
    /// The fault is about `key` and its `value` — unless it already names something.
    pub(super) fn at(mut self, key: &str, value: &str) -> Self {
        if self.subject == Subject::None {
            self.subject = Subject::KeyValue(Echo::new(key), Echo::new(value));
        }
        self
    }

    /// The fault is about `key` (given without a value, or not given).
    pub(super) fn on_key(mut self, key: &str) -> Self {
        if self.subject == Subject::None {
            self.subject = Subject::Key(Echo::new(key));
        }
        self
    }

    /// The fault is about `token` as the request wrote it.
    pub(super) fn quoting(mut self, token: &str) -> Self {
        if self.subject == Subject::None {
            self.subject = Subject::Token(Echo::new(token));
        }
        self
    }

    /// Say `reason` instead of the error's message.
    pub(super) fn because(mut self, reason: &'static str) -> Self {
        self.reason = Some(reason);
        self
    }

    /// List what is accepted instead.
    pub(super) fn accepting(mut self, accepted: Accepted) -> Self {
        self.accepted = accepted;
        self
    }

    /// A number that did not read (`integer`: an `i32` was wanted), code 406.
    pub(super) fn number(e: NumError, integer: bool) -> Self {
        let reason = match (e, integer) {
            (NumError::Empty, _) => "missing number",
            (NumError::Syntax, false) => "not a decimal number",
            (NumError::Syntax, true) => "not an integer",
            (NumError::NotFinite, _) => "NaN and infinity are not accepted; give a finite number",
            (NumError::OutOfRange, false) => "beyond the f32 range of +-3.4e38",
            (NumError::OutOfRange, true) => "integer beyond -2147483648 to 2147483647",
        };
        Fault::from(Error::BadNumber).because(reason)
    }

    /// A request line that did not split, with the token at fault.
    pub(super) fn token(f: TokenFault<'_>) -> Self {
        let key_value = |e: Error| match (f.key(), f.value()) {
            (Some(k), Some(v)) => Fault::from(e).at(k, v),
            _ => Fault::from(e).quoting(f.token),
        };
        match f.error {
            TokenError::NoCommand => Fault::from(Error::UnknownCommand)
                .because("no command word; send help for the list"),
            TokenError::BadCommand => Fault::from(Error::UnknownCommand)
                .quoting(f.token)
                .because("not a command word: commands are lower case; send help for the list"),
            TokenError::BadKey => Fault::from(Error::BadValue)
                .quoting(f.token)
                .because("bad key: keys are lower-case words, as in key=value"),
            TokenError::EmptyValue => Fault::from(Error::MissingArgument)
                .on_key(f.key().unwrap_or(f.token))
                .because("empty value: give one after the ="),
            TokenError::DuplicateKey => {
                key_value(Error::BadValue).because("key given twice; give each key once")
            }
            TokenError::TooMany => Fault::from(Error::UnknownArgument)
                .quoting(f.token)
                .because("too many arguments: at most 12"),
            TokenError::Unused => key_value(Error::UnknownArgument).because("unknown argument"),
        }
    }

    /// Whether the fault carries nothing beyond its error.
    fn is_bare(&self) -> bool {
        self.subject == Subject::None && self.reason.is_none() && self.accepted == Accepted::Nothing
    }
}

/// `Err` naming the first argument `a` has not read: an unknown key, or an extra word,
/// with what is `accepted`.
pub(super) fn check_used_or(a: &Args<'_>, accepted: Accepted) -> Result<()> {
    let Some(token) = a.first_unused() else {
        return Ok(());
    };
    let f = Fault::from(Error::UnknownArgument).accepting(accepted);
    Err(match token.split_once('=') {
        Some((k, v)) => f.at(k, v).because("unknown key"),
        None => f.quoting(token).because("extra argument"),
    })
}

/// [`check_used_or`] with the command's usage line as what is accepted.
pub(super) fn check_used(a: &Args<'_>) -> Result<()> {
    check_used_or(a, Accepted::usage_of(a.command()))
}

/// `Err` naming the first argument of a command that takes none.
pub(super) fn no_args(a: &Args<'_>) -> Result<()> {
    check_used_or(a, Accepted::Nothing).map_err(|f| f.because("this command takes no arguments"))
}

/// `parts` joined into `buf`, cut at a character boundary where `buf` ends.
fn join<'b>(parts: &[&str], buf: &'b mut [u8]) -> &'b str {
    let mut n = 0;
    'parts: for part in parts {
        for ch in part.chars() {
            let mut c = [0u8; 4];
            let c = ch.encode_utf8(&mut c).as_bytes();
            match buf.get_mut(n..n + c.len()) {
                Some(dst) => dst.copy_from_slice(c),
                None => break 'parts,
            }
            n += c.len();
        }
    }
    buf.get(..n)
        .and_then(|b| core::str::from_utf8(b).ok())
        .unwrap_or("")
}

/// `...` after text that was cut.
fn more<const N: usize>(e: &Echo<N>) -> &'static str {
    if e.is_cut() {
        "..."
    } else {
        ""
    }
}

/// Writes the `err` line of `f` (see the [module docs](self)); `rig` gives the limits and
/// zones that axis errors name. The line always fits: detail is cut, never the line
/// refused.
pub(super) fn write_err<W: Write>(rw: &mut Rw<'_, W>, f: &Fault, rig: &Rig) {
    let e = f.error;
    if f.is_bare() {
        write_bare(rw, e, rig);
        return;
    }
    let mut nb = [0u8; num::NUM_BUF_LEN];
    rw.begin("err")
        .word(num::format_i32(i32::from(e.code()), &mut nb));
    let mut sb = [0u8; SUBJECT_LEN];
    let subject = match &f.subject {
        Subject::None => "",
        Subject::Key(k) => join(&[k.as_str(), more(k)], &mut sb),
        Subject::KeyValue(k, v) => join(
            &[k.as_str(), more(k), "=\"", v.as_str(), "\"", more(v)],
            &mut sb,
        ),
        Subject::Token(t) => join(&["\"", t.as_str(), "\"", more(t)], &mut sb),
    };
    if !subject.is_empty() {
        rw.text_cut(subject);
        rw.text_cut("-");
    }
    let reason = f.reason.unwrap_or(e.message());
    let mut rb = [0u8; REASON_LEN];
    match f.accepted {
        Accepted::Nothing => {
            rw.text_cut(reason);
        }
        Accepted::Usage(usage) => {
            if rw.text_cut(join(&[reason, "; usage:"], &mut rb)) {
                rw.text_cut(usage);
            }
        }
        list => {
            if rw.text_cut(join(&[reason, "; accepted:"], &mut rb)) {
                // Room is kept for ` ...` until the last word, so that a cut list
                // always says so.
                let mut i = 0;
                while let Some(w) = list.word(i) {
                    let last = list.word(i + 1).is_none();
                    if rw.remaining() < w.len() + if last { 1 } else { 5 } {
                        rw.text_cut("...");
                        break;
                    }
                    rw.text_cut(w);
                    i += 1;
                }
            }
        }
    }
}

/// `err <code> [<axis> <limit or zone> -] <message>`: axis errors name the axis, the
/// limit value or the zone and its range.
fn write_bare<W: Write>(rw: &mut Rw<'_, W>, e: Error, rig: &Rig) {
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

#[cfg(test)]
mod tests {
    extern crate std;

    use super::*;
    use crate::console::wire::reply::ReplyWriter;
    use std::string::String;

    /// The line `f` gives, as sent.
    fn line(f: Fault) -> String {
        let mut wire = [0u8; 2 * MAX_REPLY];
        let mut port = &mut wire[..];
        let rig = Rig::bench_default();
        let mut rw = ReplyWriter::<_, MAX_REPLY>::with_line_length(&mut port, false);
        write_err(&mut rw, &f, &rig);
        assert!(!rw.overflowed());
        rw.finish().unwrap();
        let left = port.len();
        String::from_utf8(wire[..wire.len() - left].to_vec()).unwrap()
    }

    #[test]
    fn shapes() {
        assert_eq!(
            line(Error::Busy.into()),
            "err 410 a list is still streaming; wait or send stop\n"
        );
        assert_eq!(
            line(Fault::number(NumError::Syntax, false).at("tilt", "abc")),
            "err 406 tilt=\"abc\" - not a decimal number\n"
        );
        assert_eq!(
            line(Fault::from(Error::MissingArgument).on_key("step")),
            "err 405 step - a required argument is missing; send help for the arguments\n"
        );
        assert_eq!(
            line(
                Fault::from(Error::BadValue)
                    .at("wrap", "maybe")
                    .because("not a switch")
                    .accepting(Accepted::Bool)
            ),
            "err 407 wrap=\"maybe\" - not a switch; accepted: 1 on yes 0 off no\n"
        );
        // The first subject given stays.
        assert_eq!(
            line(Fault::from(Error::BadValue).quoting("x").at("k", "v")),
            "err 407 \"x\" - value not accepted; send help for the accepted words\n"
        );
        // Axis errors keep their own shape.
        assert_eq!(
            line(Error::AboveLimit(AxisId::Arm).into()),
            "err 302 arm max 165 - target above the axis's upper soft limit\n"
        );
    }

    #[test]
    fn a_200_byte_garbage_value_is_cut_and_made_safe() {
        let mut garbage = String::from("\"*\t\u{1b}é☃");
        while garbage.len() < 200 {
            garbage.push_str("x*\"~ ");
        }
        let l = line(Fault::number(NumError::Syntax, false).at("energy", &garbage));
        assert_eq!(
            l,
            "err 406 energy=\"??????x??~?x??~?x??~?x??\"... - not a decimal number\n"
        );
        // A key too long for its echo is cut too.
        let key = "k".repeat(200);
        let l = line(Fault::from(Error::UnknownArgument).at(&key, "1"));
        assert!(l.starts_with("err 404 kkkkkkkkkkkkkkkk...=\"1\" - "), "{l}");
    }

    #[test]
    fn detail_never_makes_the_line_too_long() {
        // Every subject and list at its longest still gives a line within the limit.
        let long = "z".repeat(300);
        for accepted in [
            Accepted::SetKeys,
            Accepted::GetKeys,
            Accepted::AxisKeys,
            Accepted::AxisNames,
            Accepted::Usage(COMMANDS[9].1),
        ] {
            let f = Fault::from(Error::UnknownArgument)
                .at(&long, &long)
                .because("unknown key")
                .accepting(accepted);
            assert!(line(f).len() <= MAX_REPLY);
        }
        // A reason that leaves no room for the whole list: the list is cut with `...`.
        const LONG: &str = "a reason of two hundred bytes .................................................................................................................................................................";
        let f = Fault::from(Error::UnknownArgument)
            .at("colour", "red")
            .because(LONG)
            .accepting(Accepted::SetKeys);
        let l = line(f);
        assert!(l.len() <= MAX_REPLY - 5 + 1, "{l}");
        assert!(
            l.ends_with("; accepted: energy cathode sample ...\n"),
            "{l}"
        );
    }

    #[test]
    fn joins_cut_at_characters() {
        let mut b = [0u8; 4];
        assert_eq!(join(&["ab", "±"], &mut b), "ab±");
        assert_eq!(join(&["abc", "±"], &mut b), "abc");
        let mut b = [0u8; 0];
        assert_eq!(join(&["a"], &mut b), "");
    }
}
