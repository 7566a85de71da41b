//! Assembling request lines from a byte stream.
//!
//! The protocol is line-based ASCII. A line ends at LF, at CR, or at CR LF (which ends
//! ONE line: the LF right after a CR is swallowed). The protocol's maximum line length
//! is [`MAX_LINE`] = 120 bytes, counted without the terminator and including any
//! `*XXXX` checksum suffix (see [`crate::console::crc`]).
//!
//! Feed bytes one at a time to [`LineAssembler::push`]; at each terminator it reports
//! exactly one [`LineEvent`]:
//!
//! * [`LineEvent::Line`] — a good line: 1..=N bytes of printable ASCII (0x20..=0x7E)
//!   and TAB, borrowed from the assembler's buffer until the next `push`;
//! * [`LineEvent::Empty`] — nothing but spaces and tabs (the protocol ignores these);
//! * [`LineEvent::TooLong`] — more than N bytes before the terminator;
//! * [`LineEvent::BadByte`] — the line held a byte ≥ 0x80, DEL, or a control character
//!   other than TAB (NUL included).
//!
//! A bad line is discarded whole and reported once, at its terminator; if a line is both
//! overlong and holds a bad byte, the problem seen first is reported. Nothing of a bad
//! line ever reaches the caller.
//!
//! ```
//! use matterwave_core::console::line::{LineAssembler, LineEvent, MAX_LINE};
//! let mut asm = LineAssembler::<MAX_LINE>::new();
//! let mut seen = 0;
//! for &b in b"pos arm=1.5\r\n\r\nst\x00op\n" {
//!     match asm.push(b) {
//!         Some(LineEvent::Line(text)) => { assert_eq!(text, "pos arm=1.5"); seen += 1 }
//!         Some(LineEvent::Empty) => seen += 10,
//!         Some(LineEvent::BadByte) => seen += 100,
//!         Some(LineEvent::TooLong) | None => {}
//!     }
//! }
//! assert_eq!(seen, 111);
//! ```

/// The protocol's maximum line length in bytes, without the terminator and including
/// any checksum suffix. Applies to requests and replies alike.
pub const MAX_LINE: usize = 120;

/// What a terminator (CR, LF or CR LF) completed.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum LineEvent<'a> {
    /// A good line (printable ASCII and TAB, not blank), without its terminator.
    Line(&'a str),
    /// A line of nothing but spaces and tabs, or no bytes at all.
    Empty,
    /// The line exceeded the maximum length; it was discarded.
    TooLong,
    /// The line held a byte ≥ 0x80 or a control character other than TAB; it was
    /// discarded.
    BadByte,
}

/// Whether the line being assembled is still good, and if not, why.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum State {
    Collecting,
    TooLong,
    BadByte,
}

/// Assembles lines of at most `N` bytes from single bytes. See the [module
/// docs](self) for the rules. Holds an `N`-byte buffer; never allocates or panics.
#[derive(Clone, Debug)]
pub struct LineAssembler<const N: usize> {
    buf: [u8; N],
    len: usize,
    state: State,
    /// The previous byte was a CR: a following LF belongs to it.
    after_cr: bool,
    /// The previous push completed a line: the next byte starts a new one.
    completed: bool,
}

impl<const N: usize> Default for LineAssembler<N> {
    fn default() -> Self {
        Self::new()
    }
}

impl<const N: usize> LineAssembler<N> {
    /// An empty assembler.
    pub const fn new() -> Self {
        Self {
            buf: [0; N],
            len: 0,
            state: State::Collecting,
            after_cr: false,
            completed: false,
        }
    }

    /// Forget the partial line and any pending CR, as after power-up.
    pub fn reset(&mut self) {
        self.len = 0;
        self.state = State::Collecting;
        self.after_cr = false;
        self.completed = false;
    }

    /// Bytes of the current, unfinished line held so far (0 while discarding).
    pub fn pending(&self) -> usize {
        if self.completed || self.state != State::Collecting {
            0
        } else {
            self.len
        }
    }

    /// Feed one byte. Returns an event when the byte ends a line, else `None`.
    ///
    /// A returned [`LineEvent::Line`] borrows the assembler until the event is dropped;
    /// the next `push` starts a new line.
    pub fn push(&mut self, byte: u8) -> Option<LineEvent<'_>> {
        if self.completed {
            self.len = 0;
            self.state = State::Collecting;
            self.completed = false;
        }
        let after_cr = self.after_cr;
        self.after_cr = false;
        match byte {
            b'\n' if after_cr => None,
            b'\n' | b'\r' => {
                self.after_cr = byte == b'\r';
                self.completed = true;
                Some(self.finish_line())
            }
            _ => {
                self.take(byte);
                None
            }
        }
    }

    /// Store one non-terminator byte, or mark the line bad.
    fn take(&mut self, byte: u8) {
        if self.state != State::Collecting {
            return;
        }
        let allowed = byte == b'\t' || (0x20..=0x7E).contains(&byte);
        if !allowed {
            self.state = State::BadByte;
            return;
        }
        match self.buf.get_mut(self.len) {
            Some(slot) => {
                *slot = byte;
                self.len = self.len.saturating_add(1);
            }
            None => self.state = State::TooLong,
        }
    }

    /// The event for the line just terminated.
    fn finish_line(&self) -> LineEvent<'_> {
        match self.state {
            State::TooLong => LineEvent::TooLong,
            State::BadByte => LineEvent::BadByte,
            State::Collecting => {
                let bytes = self.buf.get(..self.len).unwrap_or(&[]);
                if bytes.iter().all(|&b| b == b' ' || b == b'\t') {
                    return LineEvent::Empty;
                }
                // Only printable ASCII and TAB were stored, so this always succeeds.
                match core::str::from_utf8(bytes) {
                    Ok(text) => LineEvent::Line(text),
                    Err(_) => LineEvent::BadByte,
                }
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Feed `input`, collecting a compact description of each event.
    fn events<const N: usize>(input: &[u8]) -> ([[u8; 16]; 8], usize) {
        let mut asm = LineAssembler::<N>::new();
        let mut out = [[0u8; 16]; 8];
        let mut n = 0;
        for &b in input {
            if let Some(ev) = asm.push(b) {
                let mut rec = [0u8; 16];
                match ev {
                    LineEvent::Line(s) => {
                        rec[0] = b'L';
                        rec[1..1 + s.len()].copy_from_slice(s.as_bytes());
                    }
                    LineEvent::Empty => rec[0] = b'E',
                    LineEvent::TooLong => rec[0] = b'T',
                    LineEvent::BadByte => rec[0] = b'B',
                }
                out[n] = rec;
                n += 1;
            }
        }
        (out, n)
    }

    fn rec(s: &[u8]) -> [u8; 16] {
        let mut r = [0u8; 16];
        r[..s.len()].copy_from_slice(s);
        r
    }

    #[test]
    fn terminators() {
        let (ev, n) = events::<16>(b"a\nb\rc\r\nd\n\re\r\r");
        assert_eq!(n, 7);
        assert_eq!(ev[0], rec(b"La"));
        assert_eq!(ev[1], rec(b"Lb"));
        assert_eq!(ev[2], rec(b"Lc"));
        assert_eq!(ev[3], rec(b"Ld"));
        // LF then CR: the CR ends an empty line.
        assert_eq!(ev[4], rec(b"E"));
        assert_eq!(ev[5], rec(b"Le"));
        assert_eq!(ev[6], rec(b"E"));
    }

    #[test]
    fn crlf_split_over_pushes_gives_one_line() {
        let mut asm = LineAssembler::<8>::new();
        assert_eq!(asm.push(b'x'), None);
        assert_eq!(asm.push(b'\r'), Some(LineEvent::Line("x")));
        assert_eq!(asm.push(b'\n'), None);
        assert_eq!(asm.push(b'\n'), Some(LineEvent::Empty));
    }

    #[test]
    fn blank_lines_are_empty() {
        let (ev, n) = events::<8>(b"\n \t \nq\n");
        assert_eq!(n, 3);
        assert_eq!(ev[0], rec(b"E"));
        assert_eq!(ev[1], rec(b"E"));
        assert_eq!(ev[2], rec(b"Lq"));
    }

    #[test]
    fn length_limit() {
        let (ev, n) = events::<4>(b"abcd\nabcde\nabcdefghij\nok\n");
        assert_eq!(n, 4);
        assert_eq!(ev[0], rec(b"Labcd"));
        assert_eq!(ev[1], rec(b"T"));
        assert_eq!(ev[2], rec(b"T"));
        assert_eq!(ev[3], rec(b"Lok"));
    }

    #[test]
    fn bad_bytes() {
        for bad in [0x00u8, 0x01, 0x1B, 0x7F, 0x80, 0xC3, 0xFF] {
            let input = [b'a', bad, b'b', b'\n', b'o', b'k', b'\n'];
            let (ev, n) = events::<8>(&input);
            assert_eq!(n, 2, "byte {bad:#x}");
            assert_eq!(ev[0], rec(b"B"));
            assert_eq!(ev[1], rec(b"Lok"));
        }
        let (ev, n) = events::<8>(b"a\tb\n");
        assert_eq!(n, 1);
        assert_eq!(ev[0], rec(b"La\tb"));
    }

    #[test]
    fn first_problem_wins() {
        let (ev, _) = events::<2>(b"abc\xff\n");
        assert_eq!(ev[0], rec(b"T"));
        let (ev, _) = events::<2>(b"\xffabc\n");
        assert_eq!(ev[0], rec(b"B"));
    }

    #[test]
    fn zero_capacity_never_panics() {
        let (ev, n) = events::<0>(b"a\n\n");
        assert_eq!(n, 2);
        assert_eq!(ev[0], rec(b"T"));
        assert_eq!(ev[1], rec(b"E"));
    }

    #[test]
    fn reset_forgets_partial_line_and_cr() {
        let mut asm = LineAssembler::<8>::new();
        for &b in b"par" {
            asm.push(b);
        }
        assert_eq!(asm.pending(), 3);
        asm.reset();
        assert_eq!(asm.pending(), 0);
        assert_eq!(asm.push(b'z'), None);
        assert_eq!(asm.push(b'\r'), Some(LineEvent::Line("z")));
        asm.reset();
        // The pending CR was forgotten: this LF ends a (blank) line of its own.
        assert_eq!(asm.push(b'\n'), Some(LineEvent::Empty));
    }
}
