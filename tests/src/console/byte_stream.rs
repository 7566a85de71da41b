//! The checks of the fuzz target `console_bytes` (`fuzz/fuzz_targets/console_bytes.rs`,
//! which calls [`run`]): the raw input is a byte stream on the serial console of a fresh
//! simulated controller (`matterwave_core::console`, feature `sim`).
//!
//! The first byte configures the run; the rest is fed byte by byte:
//!
//! * bits 0–2: interlock — `000` = open (unsafe), anything else = safe (7 in 8 runs);
//! * bits 3–4: stream polls after each byte — 0, 1, 3 or up to 10 000 (that is: to the
//!   end of any stream), so that requests arrive both between and during streams.
//!
//! Invariants checked after every byte and every poll (axis rules, §10):
//!
//! 1. nothing panics, and writing a reply never fails;
//! 2. every reply line is printable ASCII, at most `MAX_REPLY` (256) bytes including an
//!    optional `*XXXX` suffix, and that suffix is the CRC-16 of the line; replies carry
//!    one exactly when the request did (a malformed-checksum request included);
//! 3. every line shape is `ok[ …]`, `err NNN …` or `- …`;
//! 4. a byte that completes a request line (non-blank, or overlong, or with a bad byte)
//!    gets exactly one final line, or starts a stream with no output; a byte that
//!    completes nothing, or a blank line, gets no output at all; `stop` during a
//!    stream gives exactly `err 411` (for the stream) then `ok`; any other request
//!    during a stream gets one `err` and leaves the stream running;
//! 5. a poll writes exactly one line: an item while more follow, a final `ok` last (a
//!    refused `aim` streams its refusals and ends with its `err`);
//!    every stream ends (at the end of input it is polled out or stopped);
//! 6. a request answered with `err` changes no settings, enable flag or axis position
//!    and starts no motion; `stop` changes nothing but the enable flag, which it clears
//!    (it latches: motion needs a new `enable`);
//! 7. every motion the console starts is enabled, interlock-safe, lands on an allowed
//!    angle (inside the limits, outside every forbidden zone) and its path, including
//!    the backlash turn-round, misses every zone that does not contain the start
//!    (independent interval checks, not `AxisConfig::check_angle` or `check_path`); no
//!    axis moves except through a started motion or a declared position (`home`, which only an `ok` request makes, with motion disabled).

use super::{crc16_ref, rec_console, Event, LineModel, RecConsole};
use matterwave_core::axis::AxisConfig;
use matterwave_core::console::controller::MAX_REPLY;
use matterwave_core::console::crc;
use matterwave_core::console::Settings;
use matterwave_core::goniometer::axis_index;
use matterwave_core::AxisId;

/// What one input reached: final lines by kind, streams, motions.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct Reach {
    /// Requests answered (final lines other than a stream's end).
    pub requests: u32,
    /// Of those, answered `ok`.
    pub ok: u32,
    /// Streams started.
    pub streams: u32,
    /// Requests that started motion.
    pub moves: u32,
}

/// Polls allowed after each byte, by configuration bits 3–4.
const POLL_BUDGETS: [u32; 4] = [0, 1, 3, 10_000];

/// Polls allowed at the end of input before the stream is stopped instead.
const FINAL_POLLS: u32 = 10_000;

type Con = RecConsole;

/// The shape of one reply line.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Kind {
    Ok,
    Err(u16),
    Item,
}

impl Kind {
    fn is_final(self) -> bool {
        self != Kind::Item
    }
}

/// Splits `out` into lines and checks each (invariants 2 and 3); `crc` is whether the
/// lines must carry a checksum.
fn lines(out: &[u8], crc: bool) -> Vec<Kind> {
    if out.is_empty() {
        return Vec::new();
    }
    assert_eq!(out.last(), Some(&b'\n'), "reply not LF-terminated: {out:?}");
    let mut kinds = Vec::new();
    for line in out[..out.len() - 1].split(|&b| b == b'\n') {
        let text = String::from_utf8_lossy(line);
        assert!(
            line.len() <= MAX_REPLY,
            "reply longer than {MAX_REPLY}: {text}"
        );
        assert!(
            line.iter().all(|b| (0x20..=0x7E).contains(b)),
            "reply not printable ASCII: {text:?}"
        );
        let content = if crc {
            assert!(line.len() >= 5, "reply without checksum: {text}");
            let (content, suffix) = line.split_at(line.len() - 5);
            let want = format!("*{:04X}", crc16_ref(content));
            assert_eq!(suffix, want.as_bytes(), "bad reply checksum: {text}");
            content
        } else {
            line
        };
        assert!(
            !content.contains(&b'*'),
            "stray * or unexpected checksum: {text}"
        );
        kinds.push(kind(content));
    }
    kinds
}

fn kind(content: &[u8]) -> Kind {
    let text = String::from_utf8_lossy(content);
    if content == b"ok" || content.starts_with(b"ok ") {
        Kind::Ok
    } else if content.starts_with(b"- ") && content.len() > 2 {
        Kind::Item
    } else if let Some(rest) = content.strip_prefix(b"err ") {
        assert!(
            rest.len() > 4 && rest[..3].iter().all(u8::is_ascii_digit) && rest[3] == b' ',
            "malformed err line: {text}"
        );
        let code = std::str::from_utf8(&rest[..3]).unwrap().parse().unwrap();
        assert!(
            (100..500).contains(&code),
            "err code outside 1xx–4xx: {text}"
        );
        Kind::Err(code)
    } else {
        panic!("reply of unknown shape: {text}")
    }
}

/// What a failed request must leave unchanged (invariant 6).
#[derive(Clone, Copy, Debug, PartialEq)]
struct State {
    settings: Settings,
    enabled: bool,
    steps: [i32; 4],
}

fn state(c: &mut Con) -> State {
    State {
        settings: *c.settings(),
        enabled: c.enabled(),
        steps: c.axes.sim.steps,
    }
}

/// Angle tolerance of the independent zone and limit check, degrees (f32 rounding at
/// zone edges; a step of the default rig is 0.001 deg).
const EPS: f64 = 1e-4;

/// Whether `x` lies inside zone [from, to] (any 360 deg copy on a wrapping axis),
/// widened by `EPS` on each side.
fn in_zone(from: f64, to: f64, x: f64, wrap: bool) -> bool {
    let (from, to) = (from - EPS, to + EPS);
    if !wrap {
        return x >= from && x <= to;
    }
    let k = ((x - from) / 360.0).floor();
    x <= to + 360.0 * k
}

/// Whether [lo, hi] meets the interior of zone [from, to] (any 360 deg copy on a
/// wrapping axis), narrowed by `EPS`.
fn meets_zone(from: f64, to: f64, lo: f64, hi: f64, wrap: bool) -> bool {
    let (from, to) = (from + EPS, to - EPS);
    if from > to {
        return false;
    }
    if !wrap {
        return from <= hi && to >= lo;
    }
    let k = ((lo - to) / 360.0).ceil();
    from + 360.0 * k <= hi
}

/// Independent check of one leg `from` -> `to` (degrees), not using `check_path`:
/// inside the limits unless the axis starts beyond one (it may be driven back) or
/// wraps; clear of every zone that does not contain the start.
fn leg_ok(cfg: &AxisConfig, from: f64, to: f64) -> Result<(), String> {
    let (lo, hi) = (from.min(to), from.max(to));
    let (min, max) = (f64::from(cfg.min_deg), f64::from(cfg.max_deg));
    let start_inside = from >= min - EPS && from <= max + EPS;
    if !cfg.wrap && start_inside && (lo < min - EPS || hi > max + EPS) {
        return Err(format!("path {from}..{to} leaves the limits {min}..{max}"));
    }
    for z in cfg.zones.iter().flatten() {
        let (zf, zt) = (f64::from(z.from_deg), f64::from(z.to_deg));
        if !in_zone(zf, zt, from, cfg.wrap) && meets_zone(zf, zt, lo, hi, cfg.wrap) {
            return Err(format!("path {from}..{to} crosses the zone {zf}..{zt}"));
        }
    }
    Ok(())
}

/// Invariant 7 for the motions started since `before`; whether any started.
fn check_motion(c: &mut Con, before: &State, answered_ok: bool) -> bool {
    let starts = core::mem::take(&mut c.axes.starts);
    let rig = c.settings().rig;
    if !starts.is_empty() {
        assert!(
            answered_ok,
            "motion started by a failed request: {starts:?}"
        );
        assert!(before.enabled, "motion while disabled: {starts:?}");
        assert!(
            c.interlock.safe,
            "motion with the interlock open: {starts:?}"
        );
    }
    for &(id, from, via, target) in &starts {
        let cfg = rig.axis(id).expect("motion of an axis the rig lacks");
        let deg = |s: i32| f64::from(cfg.steps_to_deg(s));
        // Where it lands, independently of `check_angle`: inside the limits (unless
        // wrap), outside every zone.
        let t = deg(target);
        let (min, max) = (f64::from(cfg.min_deg), f64::from(cfg.max_deg));
        assert!(
            cfg.wrap || (t >= min - EPS && t <= max + EPS),
            "{id:?} sent to {target} steps = {t} deg, beyond the limits {min}..{max}"
        );
        for z in cfg.zones.iter().flatten() {
            let (zf, zt) = (f64::from(z.from_deg), f64::from(z.to_deg));
            assert!(
                !in_zone(zf + 2.0 * EPS, zt - 2.0 * EPS, t, cfg.wrap),
                "{id:?} sent to {target} steps = {t} deg, inside the zone {zf}..{zt}"
            );
        }
        let legs = match via {
            Some(v) => {
                let a = deg(v);
                assert!(
                    cfg.wrap
                        || (a >= f64::from(cfg.min_deg) - EPS && a <= f64::from(cfg.max_deg) + EPS),
                    "{id:?} turn-round at {a} deg beyond the limits"
                );
                vec![(from, v), (v, target)]
            }
            None => vec![(from, target)],
        };
        for (a, b) in legs {
            if let Err(e) = leg_ok(cfg, deg(a), deg(b)) {
                panic!("{id:?}: {e}");
            }
        }
    }
    let declared = core::mem::take(&mut c.axes.declared);
    if !declared.is_empty() {
        assert!(answered_ok, "position declared by a failed request");
        assert!(!before.enabled, "position declared while enabled");
    }
    for id in AxisId::ALL {
        let i = axis_index(id);
        if c.axes.sim.steps[i] != before.steps[i] {
            assert!(
                starts.iter().any(|s| s.0 == id) || declared.contains(&id),
                "{id:?} moved without a start or a declared position"
            );
        }
    }
    !starts.is_empty()
}

/// A fuzzed session: the console, the line model and the running stream's checksum flag.
struct Session {
    c: Con,
    model: LineModel,
    out: Vec<u8>,
    stream_crc: bool,
    /// Whether the running stream is an `aim`'s: a refused aim streams its refusals and
    /// ends with the `err`.
    stream_aim: bool,
    reach: Reach,
}

impl Session {
    /// Whether a request line carries (or claims) a checksum, so replies do too.
    fn request_crc(line: &str) -> bool {
        match crc::verify(line) {
            Ok((_, on)) => on,
            Err(_) => line.contains('*'),
        }
    }

    /// The command word of a line with a valid (or no) checksum.
    fn word(line: &str) -> Option<&str> {
        match crc::verify(line) {
            Ok((body, _)) => body.split([' ', '\t']).find(|t| !t.is_empty()),
            Err(_) => None,
        }
    }

    /// Whether a line is a valid `stop` with no arguments.
    fn is_stop(line: &str) -> bool {
        match crc::verify(line) {
            Ok((body, _)) => {
                let mut t = body.split([' ', '\t']).filter(|t| !t.is_empty());
                t.next() == Some("stop") && t.next().is_none()
            }
            Err(_) => false,
        }
    }

    fn push(&mut self, b: u8) {
        let was_streaming = self.c.streaming();
        let before = state(&mut self.c);
        self.out.clear();
        self.c
            .push(b, &mut self.out)
            .expect("writing a reply failed");
        let ev = self.model.push(b);
        let mut answered_ok = false;
        match ev {
            None | Some(Event::Blank) => {
                assert!(
                    self.out.is_empty(),
                    "reply without a request: {:?}",
                    self.out
                );
                assert_eq!(was_streaming, self.c.streaming());
            }
            Some(Event::TooLong) | Some(Event::BadByte) => {
                let want = if matches!(ev, Some(Event::TooLong)) {
                    400
                } else {
                    401
                };
                assert_eq!(lines(&self.out, false), [Kind::Err(want)]);
                self.reach.requests += 1;
                assert_eq!(was_streaming, self.c.streaming());
                assert_eq!(before, state(&mut self.c), "rejected line changed state");
            }
            Some(Event::Line(line)) => {
                let crc_on = Self::request_crc(&line);
                if was_streaming && Self::is_stop(&line) {
                    // The stream's final line, then stop's own answer.
                    let text = self.out.clone();
                    let n = text
                        .iter()
                        .position(|&b| b == b'\n')
                        .expect("no stream end");
                    assert_eq!(lines(&text[..=n], self.stream_crc), [Kind::Err(411)]);
                    assert_eq!(lines(&text[n + 1..], crc_on), [Kind::Ok]);
                    assert!(!self.c.streaming(), "stop left the stream running");
                    let mut want = before;
                    want.enabled = false;
                    assert_eq!(want, state(&mut self.c), "stop changed more than `enabled`");
                    self.reach.requests += 1;
                    self.reach.ok += 1;
                } else if was_streaming {
                    let k = lines(&self.out, crc_on);
                    assert_eq!(k.len(), 1, "one final line per request: {k:?}");
                    assert!(matches!(k[0], Kind::Err(_)), "request accepted mid-stream");
                    assert!(self.c.streaming(), "a request ended the stream");
                    assert_eq!(before, state(&mut self.c), "busy request changed state");
                    self.reach.requests += 1;
                } else if self.c.streaming() {
                    assert!(self.out.is_empty(), "stream start wrote output");
                    self.stream_crc = crc_on;
                    self.stream_aim = Self::word(&line) == Some("aim");
                    self.reach.streams += 1;
                } else {
                    let k = lines(&self.out, crc_on);
                    assert_eq!(k.len(), 1, "one final line per request, got {k:?}: {line}");
                    assert!(k[0].is_final(), "item without a stream: {line}");
                    answered_ok = k[0] == Kind::Ok;
                    self.reach.requests += 1;
                    self.reach.ok += u32::from(answered_ok);
                    if let Kind::Err(code) = k[0] {
                        assert_ne!(code, 411, "411 without a stream");
                        assert_eq!(
                            before,
                            state(&mut self.c),
                            "failed request changed state: {line}"
                        );
                    }
                }
            }
        }
        if check_motion(&mut self.c, &before, answered_ok) {
            self.reach.moves += 1;
        }
    }

    /// Polls up to `budget` times; false if the stream is still running.
    fn poll(&mut self, budget: u32) -> bool {
        for _ in 0..budget {
            if !self.c.streaming() {
                return true;
            }
            let before = state(&mut self.c);
            self.out.clear();
            let more = self
                .c
                .poll(&mut self.out)
                .expect("writing a stream line failed");
            let k = lines(&self.out, self.stream_crc);
            assert_eq!(k.len(), 1, "a poll writes one line: {k:?}");
            if more {
                assert_eq!(k[0], Kind::Item);
                assert!(self.c.streaming());
            } else {
                // Streams end with ok; only a refused aim's ends with its err.
                assert!(
                    k[0] == Kind::Ok || (self.stream_aim && matches!(k[0], Kind::Err(_))),
                    "a stream ended with {:?}",
                    k[0]
                );
                assert_ne!(k[0], Kind::Err(411), "411 without a stop");
                assert!(!self.c.streaming());
            }
            assert_eq!(before, state(&mut self.c), "a stream changed state");
            assert!(
                !check_motion(&mut self.c, &before, false),
                "a stream started motion"
            );
        }
        !self.c.streaming()
    }
}

/// Runs the checks on one input (the fuzz target's whole body); returns what the input
/// reached.
pub fn run(data: &[u8]) -> Reach {
    let Some((&config, bytes)) = data.split_first() else {
        return Reach::default();
    };
    let safe = config & 0b111 != 0;
    let budget = POLL_BUDGETS[usize::from((config >> 3) & 0b11)];
    let mut s = Session {
        c: rec_console(safe),
        model: LineModel::default(),
        out: Vec::new(),
        stream_crc: false,
        stream_aim: false,
        reach: Reach::default(),
    };
    // An idle poll writes nothing.
    s.out.clear();
    assert_eq!(s.c.poll(&mut s.out).ok(), Some(false));
    assert!(s.out.is_empty());
    for &b in bytes {
        s.push(b);
        s.poll(budget);
    }
    // Every stream ends: polled out, or stopped (at the start of a fresh line).
    if !s.poll(FINAL_POLLS) {
        for &b in b"\nstop\n" {
            s.push(b);
        }
        assert!(!s.c.streaming(), "stop did not end the stream");
    }
    s.reach
}
