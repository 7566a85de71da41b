//! Building reply lines and writing them to any [`embedded_io::Write`].
//!
//! A [`ReplyWriter`] assembles ONE outgoing line at a time in a fixed `N`-byte buffer
//! (no heap) from pieces separated by single spaces, then [`ReplyWriter::finish`] writes
//! it, with the `*XXXX` checksum suffix if checksums are on (they are when the request
//! carried one), and a `\n`. The writer can then build the next line (streamed items,
//! then the final status line).
//!
//! Line shapes started by the helpers: [`ReplyWriter::ok`] → `ok key=value …`,
//! [`ReplyWriter::err`] → `err <code> <message>`, [`ReplyWriter::item`] → `- key=value …`.
//!
//! # Length limit
//!
//! `N` (default [`MAX_LINE`] = 120) is the maximum line length on the wire without the
//! `\n` and *including* the checksum suffix, so the content may use `N − 5` bytes
//! whether or not checksums are on (a reply fits or not independently of the checksum
//! setting). Each piece is appended whole or not at all. Once a piece does not fit, the
//! line is marked overflowed, further pieces are ignored, and `finish` writes nothing
//! and returns [`ReplyError::TooLong`]; the caller should then send a short `err` line
//! instead. A reply is never silently truncated.
//!
//! # Character rules
//!
//! Replies are printable ASCII. Text is made safe as it is appended: letters common in
//! messages are spelt out (`Å`→`A`, `°`→`deg`, `λ`→`lambda`, `θ`→`theta`, `±`→`+-`, `·`→`.`,
//! …), any other non-ASCII character becomes one `?`, and `*` (reserved for the checksum)
//! becomes `?`. In words, keys and values, spaces, tabs and control characters become
//! `_`, so a value stays one token; in free text ([`ReplyWriter::text`], the message of
//! [`ReplyWriter::err`]) they become spaces.
//!
//! Request text quoted back in a reply (the key or value an error is about) is first
//! copied into an [`Echo`]: cut to a fixed length, printable ASCII only, with `"` and `*`
//! replaced, so that it can neither break the line nor pass for the reply's own text.
//! [`ReplyWriter::text_cut`] appends text that may be cut to fit, for details that must
//! never push a line over its limit.
//!
//! ```
//! use matterwave_core::console::reply::ReplyWriter;
//! let mut wire = [0u8; 64];
//! let mut port = &mut wire[..];
//! let mut rw = ReplyWriter::new(&mut port, false);
//! rw.item().field_str("axis", "arm").field_f32("pos", 12.5, 2);
//! rw.finish().unwrap();
//! rw.ok().field_i32("n", 1);
//! rw.finish().unwrap();
//! let left = port.len();
//! assert_eq!(&wire[..64 - left], b"- axis=arm pos=12.50\nok n=1\n");
//! ```

use embedded_io::Write;

use super::crc;
pub use super::line::MAX_LINE;
use super::num::{self, NumBuf};

/// Why a reply line was not (completely) sent.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum ReplyError<E> {
    /// The writer failed; part of the line may have been sent.
    Io(E),
    /// The writer accepted zero bytes of a non-empty write; part of the line may have
    /// been sent.
    WriteZero,
    /// The line did not fit the buffer; nothing was sent.
    TooLong,
}

impl<E> From<E> for ReplyError<E> {
    fn from(e: E) -> Self {
        ReplyError::Io(e)
    }
}

/// How a piece of text is made safe.
#[derive(Clone, Copy, PartialEq, Eq)]
enum Mode {
    /// One token: blanks and controls become `_`.
    Token,
    /// Free text: blanks and controls become spaces.
    Text,
}

/// ASCII spellings of non-ASCII characters found in messages.
const SPELLINGS: [(char, &str); 16] = [
    ('Å', "A"),
    ('°', "deg"),
    ('λ', "lambda"),
    ('θ', "theta"),
    ('±', "+-"),
    ('·', "."),
    ('×', "x"),
    ('−', "-"),
    ('µ', "u"),
    ('μ', "u"),
    ('δ', "delta"),
    ('ν', "nu"),
    ('α', "alpha"),
    ('φ', "phi"),
    ('≤', "<="),
    ('≥', ">="),
];

/// Write all of `bytes`, treating a zero-length write as an error (never panics, unlike
/// a `write_all` that meets a misbehaving writer).
fn send<W: Write>(out: &mut W, mut bytes: &[u8]) -> Result<(), ReplyError<W::Error>> {
    while !bytes.is_empty() {
        match out.write(bytes) {
            Ok(0) => return Err(ReplyError::WriteZero),
            Ok(n) => bytes = bytes.get(n..).unwrap_or(&[]),
            Err(e) => return Err(ReplyError::Io(e)),
        }
    }
    Ok(())
}

/// Builds one reply line at a time in an `N`-byte buffer and writes it to `W`.
/// See the [module docs](self).
pub struct ReplyWriter<'w, W: Write, const N: usize = { MAX_LINE }> {
    out: &'w mut W,
    buf: [u8; N],
    len: usize,
    crc: bool,
    overflow: bool,
}

impl<'w, W: Write> ReplyWriter<'w, W> {
    /// A writer with the protocol's [`MAX_LINE`]; `with_crc` appends checksums.
    pub fn new(out: &'w mut W, with_crc: bool) -> Self {
        Self::with_line_length(out, with_crc)
    }
}

impl<'w, W: Write, const N: usize> ReplyWriter<'w, W, N> {
    /// A writer for lines of at most `N` bytes (content `N − 5`).
    ///
    /// ```
    /// # use matterwave_core::console::reply::ReplyWriter;
    /// let mut wire = [0u8; 32];
    /// let mut port = &mut wire[..];
    /// let mut rw = ReplyWriter::<_, 12>::with_line_length(&mut port, false);
    /// rw.ok().field_str("abc", "de"); // "ok abc=de" is 9 > 12 - 5 bytes
    /// assert!(rw.overflowed());
    /// ```
    pub fn with_line_length(out: &'w mut W, with_crc: bool) -> Self {
        Self {
            out,
            buf: [0; N],
            len: 0,
            crc: with_crc,
            overflow: false,
        }
    }

    /// Turn checksums on outgoing lines on or off.
    pub fn set_crc(&mut self, on: bool) {
        self.crc = on;
    }

    /// Whether outgoing lines get a checksum.
    pub fn crc_enabled(&self) -> bool {
        self.crc
    }

    /// Content bytes a line may hold (`N − 5`).
    pub const fn capacity(&self) -> usize {
        N.saturating_sub(crc::SUFFIX_LEN)
    }

    /// The line built so far (without suffix and `\n`).
    pub fn line(&self) -> &str {
        self.buf
            .get(..self.len)
            .and_then(|b| core::str::from_utf8(b).ok())
            .unwrap_or("")
    }

    /// Whether a piece of the current line did not fit.
    pub fn overflowed(&self) -> bool {
        self.overflow
    }

    /// Discard the line being built (and its overflow mark).
    pub fn clear(&mut self) -> &mut Self {
        self.len = 0;
        self.overflow = false;
        self
    }

    /// Discard the current line and start a new one with `first` (a word).
    pub fn begin(&mut self, first: &str) -> &mut Self {
        self.clear().word(first)
    }

    /// Start an `ok` status line.
    pub fn ok(&mut self) -> &mut Self {
        self.begin("ok")
    }

    /// Start an `err <code> <message>` status line; more pieces may follow.
    ///
    /// ```
    /// # use matterwave_core::console::reply::ReplyWriter;
    /// let mut wire = [0u8; 64];
    /// let mut port = &mut wire[..];
    /// let mut rw = ReplyWriter::new(&mut port, false);
    /// rw.err(202, "n·λ exceeds 2d");
    /// assert_eq!(rw.line(), "err 202 n.lambda exceeds 2d");
    /// ```
    pub fn err(&mut self, code: u16, message: &str) -> &mut Self {
        let mut nb: NumBuf = [0; num::NUM_BUF_LEN];
        let code = num::format_i32(i32::from(code), &mut nb);
        self.begin("err").word(code).text(message)
    }

    /// Start a streamed list item `- …`.
    pub fn item(&mut self) -> &mut Self {
        self.begin("-")
    }

    /// Append one token (blanks become `_`).
    pub fn word(&mut self, word: &str) -> &mut Self {
        self.piece(&[(word, Mode::Token)])
    }

    /// Append free text (blanks kept).
    pub fn text(&mut self, text: &str) -> &mut Self {
        self.piece(&[(text, Mode::Text)])
    }

    /// Append free text as far as it fits on the line: when it does not fit whole, it is
    /// cut after the last character that leaves room for `...`, which ends it. Never
    /// marks the line overflowed. Returns whether all of `text` was appended; on an
    /// overflowed line, or one without room for even a space and `...`, nothing is.
    ///
    /// ```
    /// # use matterwave_core::console::reply::ReplyWriter;
    /// let mut wire = [0u8; 32];
    /// let mut port = &mut wire[..];
    /// let mut rw = ReplyWriter::<_, 30>::with_line_length(&mut port, false);
    /// rw.err(404, "x");
    /// assert!(rw.text_cut("ok"));
    /// assert!(!rw.text_cut("accepted: a b c d e f"));
    /// assert_eq!(rw.line(), "err 404 x ok accepted:..."); // 25 = 30 - 5 bytes
    /// assert!(!rw.overflowed());
    /// assert_eq!(rw.remaining(), 0);
    /// ```
    pub fn text_cut(&mut self, text: &str) -> bool {
        const ELLIPSIS: &[u8] = b"...";
        if self.overflow {
            return false;
        }
        if text.is_empty() {
            return true;
        }
        let cap = self.capacity();
        let start = self.len;
        if self.len > 0 && !self.push(b' ', cap) {
            return false;
        }
        // The last place to cut: after a whole character, with room for the ellipsis.
        let room = |len: usize| len + ELLIPSIS.len() <= cap;
        let mut cut = room(self.len).then_some(self.len);
        for ch in text.chars() {
            if !self.push_char(ch, Mode::Text, cap) {
                match cut {
                    Some(at) => {
                        self.len = at;
                        for &b in ELLIPSIS {
                            self.push(b, cap);
                        }
                    }
                    None => self.len = start,
                }
                return false;
            }
            if room(self.len) {
                cut = Some(self.len);
            }
        }
        true
    }

    /// Content bytes still free on the line (0 once it is full).
    pub fn remaining(&self) -> usize {
        self.capacity().saturating_sub(self.len)
    }

    /// Append `key=value`.
    pub fn field_str(&mut self, key: &str, value: &str) -> &mut Self {
        self.piece(&[(key, Mode::Token), ("=", Mode::Token), (value, Mode::Token)])
    }

    /// Append `key=<x with decimals places>` (see [`num::format_f32`]).
    pub fn field_f32(&mut self, key: &str, x: f32, decimals: u8) -> &mut Self {
        self.field_with(key, |dst| num::write_f32(x, decimals, dst))
    }

    /// Append `key=<x, round-trip exact>` (see [`num::format_f32_roundtrip`]).
    pub fn field_f32_rt(&mut self, key: &str, x: f32) -> &mut Self {
        self.field_with(key, |dst| num::write_f32_roundtrip(x, dst))
    }

    /// Append `key=<x>`.
    pub fn field_i32(&mut self, key: &str, x: i32) -> &mut Self {
        self.field_with(key, |dst| num::write_i32(x, dst))
    }

    /// Append `key=` and a number that `value` writes (printable ASCII, no `*`)
    /// straight into the line, as one piece: whole or not at all.
    fn field_with(
        &mut self,
        key: &str,
        value: impl FnOnce(&mut [u8]) -> Option<usize>,
    ) -> &mut Self {
        if self.overflow {
            return self;
        }
        let start = self.len;
        let cap = self.capacity();
        let mut ok = (self.len == 0 || self.push(b' ', cap))
            && self.push_str(key, Mode::Token, cap)
            && self.push(b'=', cap);
        if ok {
            let end = cap.max(self.len);
            match self.buf.get_mut(self.len..end).and_then(value) {
                Some(n) => self.len += n,
                None => ok = false,
            }
        }
        if !ok {
            self.len = start;
            self.overflow = true;
        }
        self
    }

    /// Append the parts as one piece (preceded by a space unless the line is empty),
    /// whole or not at all.
    fn piece(&mut self, parts: &[(&str, Mode)]) -> &mut Self {
        if self.overflow {
            return self;
        }
        let start = self.len;
        let cap = self.capacity();
        let mut ok = true;
        if self.len > 0 {
            ok &= self.push(b' ', cap);
        }
        for &(s, mode) in parts {
            ok = ok && self.push_str(s, mode, cap);
        }
        if !ok {
            self.len = start;
            self.overflow = true;
        }
        self
    }

    /// Appends `s` made safe in `mode`; false when it does not fit (the line is then
    /// cut back by the caller). Printable ASCII other than `*` — every number, key and
    /// command word — is copied byte by byte without decoding characters; the rest
    /// goes through [`ReplyWriter::push_char`].
    fn push_str(&mut self, s: &str, mode: Mode, cap: usize) -> bool {
        let bytes = s.as_bytes();
        let room = cap.saturating_sub(self.len);
        let mut n = 0;
        if let Some(dst) = self.buf.get_mut(self.len..) {
            for (&b, slot) in bytes.iter().zip(dst.iter_mut()) {
                if !b.is_ascii_graphic() || b == b'*' {
                    break;
                }
                if n >= room {
                    return false;
                }
                *slot = b;
                n += 1;
            }
        }
        self.len += n;
        if n == bytes.len() {
            return true;
        }
        // The copied bytes are ASCII, so `n` is a character boundary.
        s.get(n..)
            .is_some_and(|rest| rest.chars().all(|ch| self.push_char(ch, mode, cap)))
    }

    fn push(&mut self, b: u8, cap: usize) -> bool {
        if self.len >= cap {
            return false;
        }
        match self.buf.get_mut(self.len) {
            Some(slot) => {
                *slot = b;
                self.len += 1;
                true
            }
            None => false,
        }
    }

    fn push_char(&mut self, ch: char, mode: Mode, cap: usize) -> bool {
        let blank = match mode {
            Mode::Token => b'_',
            Mode::Text => b' ',
        };
        match ch {
            '*' => self.push(b'?', cap),
            ' ' | '\t' => self.push(blank, cap),
            c if c.is_ascii_graphic() => self.push(c as u8, cap),
            c if c.is_ascii() => self.push(blank, cap),
            c => match SPELLINGS.iter().find(|(k, _)| *k == c) {
                Some((_, spelt)) => spelt.bytes().all(|b| self.push(b, cap)),
                None => self.push(b'?', cap),
            },
        }
    }

    /// Write the line (content, checksum suffix if on, `\n`) and clear it for the next.
    ///
    /// Nothing is written for an empty line. An overflowed line is discarded unsent with
    /// [`ReplyError::TooLong`]. The line is cleared in every case. Does not flush.
    ///
    /// ```
    /// # use matterwave_core::console::{crc, reply::ReplyWriter};
    /// let mut wire = [0u8; 32];
    /// let mut port = &mut wire[..];
    /// let mut rw = ReplyWriter::new(&mut port, true);
    /// rw.ok();
    /// rw.finish().unwrap();
    /// let sent = core::str::from_utf8(&wire[..8]).unwrap();
    /// assert_eq!(crc::verify(sent.trim_end()), Ok(("ok", true)));
    /// ```
    pub fn finish(&mut self) -> Result<(), ReplyError<W::Error>> {
        let len = self.len;
        let overflow = self.overflow;
        self.clear();
        if overflow {
            return Err(ReplyError::TooLong);
        }
        if len == 0 {
            return Ok(());
        }
        let content = self.buf.get(..len).unwrap_or(&[]);
        let mut tail = [0u8; crc::SUFFIX_LEN + 1];
        let tail_len = if self.crc {
            let suffix = crc::suffix_for(content);
            for (dst, src) in tail.iter_mut().zip(suffix.iter()) {
                *dst = *src;
            }
            crc::SUFFIX_LEN
        } else {
            0
        };
        if let Some(slot) = tail.get_mut(tail_len) {
            *slot = b'\n';
        }
        send(self.out, content)?;
        send(self.out, tail.get(..tail_len + 1).unwrap_or(&[]))
    }

    /// Flush the underlying writer.
    pub fn flush(&mut self) -> Result<(), ReplyError<W::Error>> {
        self.out.flush().map_err(ReplyError::Io)
    }

    /// Give back the underlying writer.
    pub fn into_inner(self) -> &'w mut W {
        self.out
    }
}

/// Request text held for a reply: at most `N` characters of it, made safe to quote.
///
/// Printable ASCII (`!` to `~`) is kept, except `"` (which would end a quotation) and
/// `*` (reserved for the checksum); every other character — blanks, controls, each
/// non-ASCII character — becomes one `?`. Text longer than `N` characters is cut, and
/// [`Echo::is_cut`] says so. Fixed-size and `Copy`: it outlives the request line it was
/// taken from.
///
/// ```
/// use matterwave_core::console::reply::Echo;
/// let e = Echo::<8>::new("ab\"c*d\tλ");
/// assert_eq!((e.as_str(), e.is_cut()), ("ab?c?d??", false));
/// let e = Echo::<4>::new("0x10abc");
/// assert_eq!((e.as_str(), e.is_cut()), ("0x10", true));
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Echo<const N: usize> {
    buf: [u8; N],
    len: usize,
    cut: bool,
}

impl<const N: usize> Echo<N> {
    /// No text.
    pub const EMPTY: Self = Echo {
        buf: [0; N],
        len: 0,
        cut: false,
    };

    /// The first `N` characters of `text`, made safe (see the [type docs](Echo)).
    pub fn new(text: &str) -> Self {
        let mut e = Self::EMPTY;
        for ch in text.chars() {
            let Some(slot) = e.buf.get_mut(e.len) else {
                e.cut = true;
                break;
            };
            *slot = match ch {
                '"' | '*' => b'?',
                c if c.is_ascii_graphic() => c as u8,
                _ => b'?',
            };
            e.len += 1;
        }
        e
    }

    /// The text kept.
    pub fn as_str(&self) -> &str {
        self.buf
            .get(..self.len)
            .and_then(|b| core::str::from_utf8(b).ok())
            .unwrap_or("")
    }

    /// Whether the text was longer than `N` characters and cut.
    pub fn is_cut(&self) -> bool {
        self.cut
    }

    /// Whether no text is held.
    pub fn is_empty(&self) -> bool {
        self.len == 0
    }
}

#[cfg(test)]
mod tests;
