//! The console test harness, one of each: a simulated controller (feature `sim`), the
//! request/feed/poll helpers, an independent CRC-16 and line model, the random serial
//! byte generator ([`serial_bytes`]), and [`byte_stream`] — the checking session the
//! property tests drive and the fuzz target `fuzz/fuzz_targets/console_bytes.rs` runs
//! on every input, which `tests/tests/fuzz_corpus.rs` also runs on every committed
//! corpus file.

use matterwave_core::console::line::MAX_LINE;
use matterwave_core::console::sim::{SimAxes, SimDetector, SimInterlock};
use matterwave_core::console::{AxisDriver, AxisFault, Console, Detector, Interlock};
use matterwave_core::AxisId;

use crate::Rng;

pub mod byte_stream;

/// Bytes likely on a serial line: line ends, letters, digits, `=`, `*`, blanks, NUL,
/// 0xFF, separators.
pub const LIKELY_BYTES: &[u8] =
    b"\n\r\n\r\n\rabcdefghijklmnopqrstuvwxyz0123456789====****  \t\x00\xff-.,";

/// `len` random bytes of a serial stream: a fraction `uniform` of them uniformly random,
/// the rest drawn from [`LIKELY_BYTES`]. With `sparse`, only 1 in 8 line ends and 1 in 64
/// bytes outside printable ASCII and tab are kept (the others become `x` and `y`), so
/// that lines around the 120-byte limit are common.
pub fn serial_bytes(rng: &mut Rng, len: usize, uniform: f64, sparse: bool) -> Vec<u8> {
    (0..len)
        .map(|_| {
            let b = if rng.chance(uniform) {
                rng.next() as u8
            } else {
                rng.select(LIKELY_BYTES)
            };
            if !sparse {
                return b;
            }
            let terminator = b == b'\n' || b == b'\r';
            let bad = !(terminator || b == b'\t' || (0x20..=0x7E).contains(&b));
            match (terminator, bad) {
                (true, _) if rng.below(8) != 0 => b'x',
                (_, true) if rng.below(64) != 0 => b'y',
                _ => b,
            }
        })
        .collect()
}

/// One started motion: axis, steps before, backlash turn-round, target.
pub type Start = (AxisId, i32, Option<i32>, i32);

/// `SimAxes` that also records every motion the console starts and every position it
/// declares (`home`).
#[derive(Default)]
pub struct RecordingAxes {
    /// The simulated axes.
    pub sim: SimAxes,
    /// Every motion started, in order (take them to check them).
    pub starts: Vec<Start>,
    /// Every axis whose position was declared, in order (take them to check them).
    pub declared: Vec<AxisId>,
}

impl AxisDriver for RecordingAxes {
    fn position(&mut self, axis: AxisId) -> i32 {
        self.sim.position(axis)
    }
    fn set_position(&mut self, axis: AxisId, steps: i32) {
        self.declared.push(axis);
        self.sim.set_position(axis, steps);
    }
    fn start(&mut self, axis: AxisId, via: Option<i32>, target: i32) {
        let from = self.sim.position(axis);
        self.starts.push((axis, from, via, target));
        self.sim.start(axis, via, target);
    }
    fn busy(&mut self) -> bool {
        self.sim.busy()
    }
    fn stop(&mut self) {
        self.sim.stop();
    }
    fn take_fault(&mut self) -> Option<AxisFault> {
        self.sim.take_fault()
    }
}

/// A simulated controller's console.
pub type SimConsole = Console<SimAxes, SimDetector, SimInterlock>;

/// A simulated controller's console whose axes record every motion.
pub type RecConsole = Console<RecordingAxes, SimDetector, SimInterlock>;

/// A console with factory settings, the interlock safe, motion disabled.
pub fn sim_console() -> SimConsole {
    Console::new(
        SimAxes::default(),
        SimDetector::default(),
        SimInterlock { safe: true },
    )
    .expect("factory settings are valid")
}

/// A recording console with factory settings and the interlock `safe` or open.
pub fn rec_console(safe: bool) -> RecConsole {
    Console::new(
        RecordingAxes::default(),
        SimDetector::default(),
        SimInterlock { safe },
    )
    .expect("factory settings are valid")
}

/// Polls before a stream is taken for one that never ends.
const POLL_CAP: u32 = 200_000;

/// Feeds `bytes` without polling; returns what was written.
pub fn feed<A: AxisDriver, D: Detector, I: Interlock>(
    c: &mut Console<A, D, I>,
    bytes: &[u8],
) -> String {
    let mut out = Vec::new();
    for &b in bytes {
        c.push(b, &mut out).expect("reply written");
    }
    String::from_utf8(out).expect("ASCII reply")
}

/// Polls a running stream to its end; returns what was written.
pub fn drain<A: AxisDriver, D: Detector, I: Interlock>(c: &mut Console<A, D, I>) -> String {
    let mut out = Vec::new();
    let mut n = 0;
    while c.poll(&mut out).expect("stream line written") {
        n += 1;
        assert!(n < POLL_CAP, "stream never ends");
    }
    String::from_utf8(out).expect("ASCII reply")
}

/// Feeds `bytes`, polling any stream out after every byte; returns the whole reply.
pub fn feed_polled<A: AxisDriver, D: Detector, I: Interlock>(
    c: &mut Console<A, D, I>,
    bytes: &[u8],
) -> String {
    let mut r = String::new();
    for &b in bytes {
        r.push_str(&feed(c, &[b]));
        r.push_str(&drain(c));
    }
    r
}

/// One request line (LF added), its stream polled out; returns the whole reply.
pub fn request<A: AxisDriver, D: Detector, I: Interlock>(
    c: &mut Console<A, D, I>,
    line: &str,
) -> String {
    let mut r = feed(c, format!("{line}\n").as_bytes());
    r.push_str(&drain(c));
    r
}

/// The final line of a reply.
pub fn last(reply: &str) -> &str {
    reply.lines().last().unwrap_or("")
}

/// The value of `key=` on a reply line, if present.
pub fn field<'a>(line: &'a str, key: &str) -> Option<&'a str> {
    line.split(' ')
        .find_map(|t| t.strip_prefix(key).and_then(|v| v.strip_prefix('=')))
}

/// CRC-16/IBM-3740 (poly 0x1021, init 0xFFFF, no reflection), bit by bit: an
/// independent reference for the `*XXXX` checksums (check value of "123456789" is
/// 0x29B1, per the CRC catalogue entry for CRC-16/IBM-3740).
pub fn crc16_ref(data: &[u8]) -> u16 {
    let mut crc: u16 = 0xFFFF;
    for &b in data {
        crc ^= u16::from(b) << 8;
        for _ in 0..8 {
            crc = if crc & 0x8000 != 0 {
                (crc << 1) ^ 0x1021
            } else {
                crc << 1
            };
        }
    }
    crc
}

/// `line*XXXX` with the correct checksum.
pub fn with_crc(line: &str) -> String {
    format!("{line}*{:04X}", crc16_ref(line.as_bytes()))
}

/// How a completed input line should be treated (protocol rules: LF, CR or CRLF ends a
/// line; a documented maximum length, `MAX_LINE`; printable ASCII and tab only; the
/// first problem in a line wins).
#[derive(Debug)]
pub enum Event {
    /// Nothing but spaces and tabs: no reply.
    Blank,
    /// More than `MAX_LINE` bytes: `err 400`.
    TooLong,
    /// A byte outside tab and 0x20–0x7E: `err 401`.
    BadByte,
    /// A request line.
    Line(String),
}

/// A plain model of the line rules, written independently of `LineAssembler`.
#[derive(Default)]
pub struct LineModel {
    buf: Vec<u8>,
    problem: Option<Event>,
    after_cr: bool,
}

impl LineModel {
    /// Takes one byte; the event when it completes a line.
    pub fn push(&mut self, b: u8) -> Option<Event> {
        let after_cr = std::mem::replace(&mut self.after_cr, false);
        match b {
            b'\n' if after_cr => None,
            b'\n' | b'\r' => {
                self.after_cr = b == b'\r';
                let line = std::mem::take(&mut self.buf);
                Some(match self.problem.take() {
                    Some(p) => p,
                    None if line.iter().all(|&c| c == b' ' || c == b'\t') => Event::Blank,
                    None => Event::Line(String::from_utf8(line).expect("ASCII")),
                })
            }
            _ => {
                if self.problem.is_none() {
                    if !(b == b'\t' || (0x20..=0x7E).contains(&b)) {
                        self.problem = Some(Event::BadByte);
                    } else if self.buf.len() >= MAX_LINE {
                        self.problem = Some(Event::TooLong);
                    } else {
                        self.buf.push(b);
                    }
                }
                None
            }
        }
    }
}
