//! The one checking harness for byte streams on the console: a [`Session`] feeds bytes
//! to a simulated controller on recording axes and checks every reply and motion. The
//! fuzz target `console_bytes` (`fuzz/fuzz_targets/console_bytes.rs`) calls [`run`];
//! the property tests (`tests/tests/console_props.rs`) drive a [`Session`] directly.
//!
//! For [`run`], the raw input is a byte stream on the serial console of a fresh
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
//!    the backlash turn-round, stays within the limits (from beyond one, only back
//!    toward it), misses every zone that does not contain the start and leaves one that
//!    does only through its nearer edge (independent interval checks, not
//!    `AxisConfig::check_angle` or `check_path`); no axis moves except through a
//!    started motion or a declared position (`home`, which only an `ok` request makes,
//!    with motion disabled).

use super::{crc16_ref, rec_console, Event, LineModel, RecConsole};
use matterwave_core::axis::AxisConfig;
use matterwave_core::console::controller::MAX_REPLY;
use matterwave_core::console::Settings;
use matterwave_core::goniometer::axis_index;
use matterwave_core::AxisId;

/// What a session reached: final lines by kind, streams, motions.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct Reach {
    /// Requests answered (a streaming request by its stream's final line).
    pub requests: u64,
    /// Final lines `ok`.
    pub ok: u64,
    /// Final lines `err`.
    pub err: u64,
    /// Streams started.
    pub streams: u64,
    /// Streams ended by `stop`.
    pub aborted: u64,
    /// Requests that started motion.
    pub moves: u64,
}

impl Reach {
    /// Adds `other`'s counts to these.
    pub fn add(&mut self, other: &Reach) {
        self.requests += other.requests;
        self.ok += other.ok;
        self.err += other.err;
        self.streams += other.streams;
        self.aborted += other.aborted;
        self.moves += other.moves;
    }
}

/// Polls allowed after each byte, by configuration bits 3–4.
const POLL_BUDGETS: [u32; 4] = [0, 1, 3, 10_000];

/// Polls allowed at the end of input before the stream is stopped instead.
const FINAL_POLLS: u32 = 10_000;

/// The shape of one reply line.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Kind {
    /// `ok …`.
    Ok,
    /// `err NNN …`.
    Err(u16),
    /// `- …`.
    Item,
}

/// Splits `out` into lines and checks each (invariants 2 and 3); `crc` is whether the
/// lines must carry a checksum.
pub fn reply_lines(out: &[u8], crc: bool) -> Vec<(Kind, String)> {
    if out.is_empty() {
        return Vec::new();
    }
    assert_eq!(out.last(), Some(&b'\n'), "reply not LF-terminated: {out:?}");
    let mut v = Vec::new();
    for line in out[..out.len() - 1].split(|&b| b == b'\n') {
        let text = String::from_utf8_lossy(line).into_owned();
        assert!(
            line.len() <= MAX_REPLY,
            "reply over {MAX_REPLY} bytes: {text}"
        );
        assert!(
            line.iter().all(|b| (0x20..=0x7E).contains(b)),
            "reply not printable ASCII: {text:?}"
        );
        let content = if crc {
            assert!(line.len() > 5, "reply lacks its checksum: {text}");
            let (content, suffix) = line.split_at(line.len() - 5);
            let want = format!("*{:04X}", crc16_ref(content));
            assert_eq!(suffix, want.as_bytes(), "reply checksum wrong: {text}");
            content
        } else {
            line
        };
        assert!(!content.contains(&b'*'), "unexpected checksum or *: {text}");
        v.push((kind(content, &text), text));
    }
    v
}

fn kind(content: &[u8], text: &str) -> Kind {
    if content == b"ok" || content.starts_with(b"ok ") {
        Kind::Ok
    } else if content.starts_with(b"- ") && content.len() > 2 {
        Kind::Item
    } else if let Some(rest) = content.strip_prefix(b"err ") {
        assert!(
            rest.len() > 4 && rest[..3].iter().all(u8::is_ascii_digit) && rest[3] == b' ',
            "malformed err line: {text}"
        );
        let code: u16 = std::str::from_utf8(&rest[..3]).unwrap().parse().unwrap();
        assert!((100..500).contains(&code), "code outside 1xx-4xx: {text}");
        Kind::Err(code)
    } else {
        panic!("reply of unknown shape: {text}");
    }
}

/// What a failed request must leave unchanged (invariant 6).
#[derive(Clone, Copy, Debug, PartialEq)]
struct State {
    settings: Settings,
    enabled: bool,
    steps: [i32; 4],
}

/// Angle tolerance of the independent zone and limit check, degrees (f32 rounding at
/// zone edges; a step of the default rig is 0.001 deg).
const EPS: f64 = 1e-4;

/// Whether `x` lies inside zone [from, to] (any 360 deg copy on a wrapping axis),
/// widened by `pad` degrees on each side.
fn in_zone(from: f64, to: f64, x: f64, wrap: bool, pad: f64) -> bool {
    let (from, to) = (from - pad, to + pad);
    if !wrap {
        return x >= from && x <= to;
    }
    let k = ((x - from) / 360.0).floor();
    x <= to + 360.0 * k
}

/// Whether the closed interval [lo, hi] meets the interior of zone [from, to] (any
/// 360 deg copy on a wrapping axis), narrowed by `EPS`.
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

/// Independent check of one leg of a motion, `from` -> `to` degrees: inside the limits
/// (unless wrap; from beyond a limit only back toward it), clear of the interior of
/// every zone that does not contain the start, and out of a zone that does contain it
/// only through its nearer edge, without reaching its next 360 deg copy.
fn leg_ok(cfg: &AxisConfig, from: f64, to: f64) -> Result<(), String> {
    let (lo, hi) = (from.min(to), from.max(to));
    let (min, max) = (f64::from(cfg.min_deg), f64::from(cfg.max_deg));
    if !cfg.wrap {
        let inside = if from > max + EPS {
            to <= from && lo >= min - EPS
        } else if from < min - EPS {
            to >= from && hi <= max + EPS
        } else {
            lo >= min - EPS && hi <= max + EPS
        };
        if !inside {
            return Err(format!("path {from}..{to} leaves limits {min}..{max}"));
        }
    }
    for z in cfg.zones.iter().flatten() {
        let (zf, zt) = (f64::from(z.from_deg), f64::from(z.to_deg));
        if in_zone(zf, zt, from, cfg.wrap, EPS) {
            let (mut a, mut b) = (zf, zt);
            if cfg.wrap {
                let k = ((from - 0.5 * (a + b)) / 360.0).round();
                a += 360.0 * k;
                b += 360.0 * k;
            }
            let (below, above) = (from - a, b - from);
            let out = (to <= from + EPS && below <= above + EPS)
                || (to >= from - EPS && above <= below + EPS);
            let next = cfg.wrap
                && (meets_zone(a - 360.0, b - 360.0, lo, hi, false)
                    || meets_zone(a + 360.0, b + 360.0, lo, hi, false));
            if !out || next {
                return Err(format!(
                    "path {from}..{to} from inside zone {zf}..{zt} not by its nearer edge"
                ));
            }
        } else if meets_zone(zf, zt, lo, hi, cfg.wrap) {
            return Err(format!("path {from}..{to} crosses zone {zf}..{zt}"));
        }
    }
    Ok(())
}

/// Independent check of where a motion ends, not using `check_angle`: inside the limits
/// (unless wrap) and outside every zone (narrowed by `EPS` for f32 rounding at edges).
fn landing_ok(cfg: &AxisConfig, x: f64) -> Result<(), String> {
    let (min, max) = (f64::from(cfg.min_deg), f64::from(cfg.max_deg));
    if !cfg.wrap && (x < min - EPS || x > max + EPS) {
        return Err(format!("{x} deg beyond the limits {min}..{max}"));
    }
    for z in cfg.zones.iter().flatten() {
        let (zf, zt) = (f64::from(z.from_deg), f64::from(z.to_deg));
        if in_zone(zf, zt, x, cfg.wrap, -EPS) {
            return Err(format!("{x} deg inside the zone {zf}..{zt}"));
        }
    }
    Ok(())
}

/// `Some((body, true))` for a valid checksum, `Some((line, false))` for a malformed or
/// wrong one (the reply still carries a checksum: the line contains `*`), `None` for a
/// line without `*`. Checked with the independent [`crc16_ref`].
fn split_crc(line: &str) -> Option<(&str, bool)> {
    let star = line.find('*')?;
    let (body, suffix) = line.split_at(star);
    let ok = suffix.len() == 5
        && suffix[1..].bytes().all(|b| b.is_ascii_hexdigit())
        && u16::from_str_radix(&suffix[1..], 16).ok() == Some(crc16_ref(body.as_bytes()));
    Some(if ok { (body, true) } else { (line, false) })
}

/// The command word of a line with a valid (or no) checksum.
fn word(line: &str) -> Option<&str> {
    let body = match split_crc(line) {
        None => line,
        Some((body, true)) => body,
        Some((_, false)) => return None,
    };
    body.split([' ', '\t']).find(|t| !t.is_empty())
}

/// Whether a request line is a well-formed `stop` with no arguments.
fn is_stop(line: &str) -> bool {
    let body = match split_crc(line) {
        None => line,
        Some((body, true)) => body,
        Some((_, false)) => return false,
    };
    let mut t = body.split([' ', '\t']).filter(|t| !t.is_empty());
    t.next() == Some("stop") && t.next().is_none()
}

/// A console session under test: the console on recording axes, the line model and
/// the bookkeeping; every byte fed and every poll is checked (the invariants above).
pub struct Session {
    /// The console.
    pub c: RecConsole,
    model: LineModel,
    out: Vec<u8>,
    stream_crc: bool,
    /// Whether the running stream is an `aim`'s (which may end with `err`).
    stream_aim: bool,
    /// The `err` a refused `aim`'s stream ended with, until taken.
    pub stream_end: Option<Kind>,
    /// The input being fed, for failure messages.
    pub last_input: Vec<u8>,
    /// What the session reached so far.
    pub reach: Reach,
}

impl Session {
    /// A fresh console with the interlock `safe` or open.
    pub fn new(safe: bool) -> Session {
        Session {
            c: rec_console(safe),
            model: LineModel::default(),
            out: Vec::new(),
            stream_crc: false,
            stream_aim: false,
            stream_end: None,
            last_input: Vec::new(),
            reach: Reach::default(),
        }
    }

    fn state(&mut self) -> State {
        State {
            settings: *self.c.settings(),
            enabled: self.c.enabled(),
            steps: self.c.axes.sim.steps,
        }
    }

    /// Invariant 7 for the motions started since `before`; counts a request that moved.
    fn check_motion(&mut self, before: &State, answered_ok: bool, what: &str) {
        let starts = std::mem::take(&mut self.c.axes.starts);
        let declared = std::mem::take(&mut self.c.axes.declared);
        let rig = self.c.settings().rig;
        if !starts.is_empty() {
            assert!(answered_ok, "motion by a request not answered ok: {what}");
            assert!(before.enabled, "motion while disabled: {what}");
            assert!(
                self.c.interlock.safe,
                "motion with the interlock open: {what}"
            );
            self.reach.moves += 1;
        }
        if !declared.is_empty() {
            assert!(answered_ok, "position declared by a failed request: {what}");
            assert!(!before.enabled, "position declared while enabled: {what}");
        }
        for &(id, from, via, target) in &starts {
            let cfg = rig
                .axis(id)
                .unwrap_or_else(|_| panic!("motion of missing axis {id:?}: {what}"));
            let deg = |s: i32| f64::from(cfg.steps_to_deg(s));
            if let Err(e) = landing_ok(cfg, deg(target)) {
                panic!("{id:?} sent to {target} steps: {e}: {what}");
            }
            let legs: Vec<(i32, i32)> = match via {
                Some(v) => {
                    let a = deg(v);
                    let lim = cfg.wrap
                        || (a >= f64::from(cfg.min_deg) - EPS && a <= f64::from(cfg.max_deg) + EPS);
                    assert!(lim, "{id:?} turn-round at {a} deg beyond limits: {what}");
                    vec![(from, v), (v, target)]
                }
                None => vec![(from, target)],
            };
            for (a, b) in legs {
                if let Err(e) = leg_ok(cfg, deg(a), deg(b)) {
                    panic!("{id:?}: {e}: {what}");
                }
            }
        }
        for id in AxisId::ALL {
            let i = axis_index(id);
            if self.c.axes.sim.steps[i] != before.steps[i] {
                assert!(
                    starts.iter().any(|s| s.0 == id) || declared.contains(&id),
                    "{id:?} moved without a start or a declared position: {what}"
                );
            }
        }
    }

    /// Feeds one byte and checks what it caused. Returns the final line's kind when the
    /// byte completed a request answered at once.
    pub fn push(&mut self, b: u8) -> Option<Kind> {
        if b != b'\n' && b != b'\r' {
            // Only a line end completes a request: any other byte writes nothing and
            // changes nothing visible (checked cheaply: this runs for every byte).
            let (streaming, steps) = (self.c.streaming(), self.c.axes.sim.steps);
            self.out.clear();
            self.c
                .push(b, &mut self.out)
                .expect("writing a reply failed");
            assert!(self.model.push(b).is_none());
            assert!(
                self.out.is_empty(),
                "reply before the line end: {:?}",
                self.out
            );
            assert!(self.c.axes.starts.is_empty() && self.c.axes.declared.is_empty());
            assert!(steps == self.c.axes.sim.steps && streaming == self.c.streaming());
            return None;
        }
        let was_streaming = self.c.streaming();
        let before = self.state();
        self.out.clear();
        self.c
            .push(b, &mut self.out)
            .expect("writing a reply failed");
        let ev = self.model.push(b);
        let mut answered = None;
        let what = format!(
            "{ev:?} (input {:?})",
            String::from_utf8_lossy(&self.last_input)
        );
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
                let code = if matches!(ev, Some(Event::TooLong)) {
                    400
                } else {
                    401
                };
                let k = reply_lines(&self.out, false);
                assert_eq!(k.len(), 1, "one final line: {k:?}");
                assert_eq!(k[0].0, Kind::Err(code), "{what}: {}", k[0].1);
                assert_eq!(was_streaming, self.c.streaming());
                assert_eq!(before, self.state(), "rejected line changed state");
                self.reach.requests += 1;
                self.reach.err += 1;
                answered = Some(k[0].0);
            }
            Some(Event::Line(ref line)) => {
                self.reach.requests += 1;
                // Replies carry a checksum when the request has one, valid or not (a
                // malformed or wrong one is answered `err 402` with a checksum).
                let crc_on = split_crc(line).is_some();
                if was_streaming && is_stop(line) {
                    // The stream's final line, then stop's own answer.
                    let text = self.out.clone();
                    let n = text.iter().position(|&b| b == b'\n').expect("stream end");
                    let end = reply_lines(&text[..=n], self.stream_crc);
                    let own = reply_lines(&text[n + 1..], crc_on);
                    assert_eq!(end.len(), 1);
                    assert_eq!(end[0].0, Kind::Err(411), "{line}");
                    assert_eq!(own.len(), 1);
                    assert_eq!(own[0].0, Kind::Ok, "{line}");
                    assert!(!self.c.streaming(), "stop left the stream running");
                    // `stop` latches: motion is disabled until a new `enable`;
                    // nothing else changes.
                    let mut want = before;
                    want.enabled = false;
                    assert_eq!(want, self.state(), "stop changed more than `enabled`");
                    self.reach.aborted += 1;
                    self.reach.ok += 1;
                    answered = Some(Kind::Ok);
                } else if was_streaming {
                    let k = reply_lines(&self.out, crc_on);
                    assert_eq!(k.len(), 1, "one final line per request: {k:?}: {line}");
                    assert!(
                        matches!(k[0].0, Kind::Err(_)),
                        "accepted mid-stream: {line}"
                    );
                    assert!(self.c.streaming(), "a request ended the stream: {line}");
                    assert_eq!(before, self.state(), "busy request changed state: {line}");
                    self.reach.err += 1;
                    answered = Some(k[0].0);
                } else if self.c.streaming() {
                    assert!(self.out.is_empty(), "stream start wrote output: {line}");
                    self.stream_crc = crc_on;
                    self.stream_aim = word(line) == Some("aim");
                    self.reach.streams += 1;
                } else {
                    let k = reply_lines(&self.out, crc_on);
                    assert_eq!(k.len(), 1, "one final line per request, got {k:?}: {line}");
                    assert_ne!(k[0].0, Kind::Item, "item without a stream: {line}");
                    if let Kind::Err(code) = k[0].0 {
                        assert_ne!(code, 411, "411 without a stream: {line}");
                        assert_eq!(
                            before,
                            self.state(),
                            "failed request changed state: {line} -> {}",
                            k[0].1
                        );
                        self.reach.err += 1;
                    } else {
                        self.reach.ok += 1;
                    }
                    answered = Some(k[0].0);
                }
            }
        }
        self.check_motion(&before, answered == Some(Kind::Ok), &what);
        answered
    }

    /// Polls at most `budget` times; true when no stream is running afterwards.
    pub fn poll(&mut self, budget: u32) -> bool {
        for _ in 0..budget {
            if !self.c.streaming() {
                break;
            }
            let before = self.state();
            self.out.clear();
            let more = self
                .c
                .poll(&mut self.out)
                .expect("writing a stream line failed");
            let k = reply_lines(&self.out, self.stream_crc);
            assert_eq!(k.len(), 1, "a poll writes one line: {k:?}");
            if more {
                assert_eq!(k[0].0, Kind::Item, "{}", k[0].1);
                assert!(self.c.streaming());
            } else if matches!(k[0].0, Kind::Err(_)) {
                // Only a refused `aim` ends its stream (of `- refused` items) with `err`.
                assert!(self.stream_aim, "a stream ended with err: {}", k[0].1);
                assert_ne!(k[0].0, Kind::Err(411), "411 without a stop");
                assert!(!self.c.streaming());
                self.reach.err += 1;
                self.stream_end = Some(k[0].0);
            } else {
                assert_eq!(k[0].0, Kind::Ok, "a stream ends with ok: {}", k[0].1);
                assert!(!self.c.streaming());
                self.reach.ok += 1;
            }
            assert_eq!(before, self.state(), "a stream line changed state");
            self.check_motion(&before, false, "poll");
        }
        !self.c.streaming()
    }

    /// Ends any running stream: polled out within `cap` polls, else stopped.
    pub fn finish_stream(&mut self, cap: u32) {
        if !self.poll(cap) {
            for &b in b"\nstop\n" {
                self.push(b);
            }
            assert!(!self.c.streaming(), "stop did not end the stream");
        }
    }

    /// Feeds a whole line (with its terminator); returns the kind of the final line it
    /// got at once (`None` when it started a stream: poll or `finish_stream` next).
    pub fn line(&mut self, bytes: &[u8]) -> Option<Kind> {
        let mut last = None;
        for &b in bytes {
            if let Some(k) = self.push(b) {
                last = Some(k);
            }
        }
        last
    }

    /// The `solutions=` and `points=` fields of `status` (buffers `err` must not touch);
    /// the `status` request itself is not counted.
    pub fn buffers(&mut self) -> (String, String) {
        let was = self.reach;
        assert_eq!(self.line(b"status\n"), Some(Kind::Ok));
        // `push` left status's own reply in `out`.
        let text = String::from_utf8(self.out.clone()).unwrap();
        self.reach = was;
        let field = |k: &str| {
            text.split([' ', '\n'])
                .find_map(|t| t.strip_prefix(k))
                .unwrap_or_else(|| panic!("status lacks {k}: {text}"))
                .to_string()
        };
        (field("solutions="), field("points="))
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
    let mut s = Session::new(safe);
    // An idle poll writes nothing.
    s.out.clear();
    assert_eq!(s.c.poll(&mut s.out).ok(), Some(false));
    assert!(s.out.is_empty());
    for &b in bytes {
        s.push(b);
        s.poll(budget);
    }
    // Every stream ends: polled out, or stopped (at the start of a fresh line).
    s.finish_stream(FINAL_POLLS);
    s.reach
}
