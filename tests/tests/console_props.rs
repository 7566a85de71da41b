//! Property tests of the serial console as a whole (`core/src/console/exec.rs`) on a
//! simulated controller (feature `sim`): random byte streams, and random request lines
//! built from the real command words and keys with random values.
//!
//! Rules checked (protocol rules "Serial protocol principles", §8 "Axes and setpoints"):
//!
//! * the firmware never panics on input, and writing a reply never fails;
//! * every request gets exactly one final status line (`ok …` / `err NNN …`); a
//!   streaming request gets its items and then exactly one final line; `stop` during a
//!   stream ends the stream with `err 411` and answers `ok`; any other request during a
//!   stream gets one `err` and the stream goes on; blank lines get no reply;
//! * reply lines are printable ASCII, at most `MAX_REPLY` (256) bytes including the
//!   optional `*XXXX` checksum, which is present exactly when the request carried one
//!   and matches an independent CRC-16/IBM-3740;
//! * a request answered with `err` changes nothing: settings, the enable flag, axis
//!   positions, and (for the line-level test) the solution and point buffers that
//!   `status` reports;
//! * motion starts only when enabled and the interlock is safe, and never goes beyond
//!   the limits or into a forbidden zone: every target passes
//!   `check_angle(steps_to_deg(steps))` for the rig in force, and the path there
//!   (including the backlash turn-round) misses every zone that does not contain the
//!   start and leaves one that does only through its nearer edge — checked by an
//!   independent interval computation, not by `check_path`.
//!
//! The default home position (arm 0°) lies inside the default gun zone (±12°), so the
//! resting position of an axis the console never moved is not required to be allowed;
//! every position the console commands is.
//!
//! Sizes: 2,000 cases × 50 chunks = 100,000 random byte chunks (fixed seeds), and 2,000
//! cases × 50 lines = 100,000 request lines (proptest).

use matterwave_core::axis::AxisConfig;
use matterwave_core::console::controller::MAX_REPLY;
use matterwave_core::console::Settings;
use matterwave_core::goniometer::axis_index;
use matterwave_core::table;
use matterwave_core::AxisId;
use matterwave_tests::console::{crc16_ref, rec_console, with_crc, Event, LineModel, RecConsole};
use matterwave_tests::Rng;
use proptest::prelude::*;

/// Cases per property; each case carries `PER_CASE` chunks or lines.
const CASES: u32 = 2_000;
/// Chunks or lines per case.
const PER_CASE: usize = 50;
/// Polls before a still-running stream is stopped instead of polled out (plans may
/// hold up to 100,000 points; the lists end much sooner).
const STREAM_CAP: u32 = 300;
/// Angle tolerance of the independent zone and limit check, degrees (f32 rounding at
/// zone edges; a step of the default rig is 0.001°).
const EPS: f64 = 1e-4;

// ---------------------------------------------------------------------------------
// The harness: a console on recording sim axes, an independent line model, checks
// ---------------------------------------------------------------------------------

type Con = RecConsole;

/// Shape of a reply line.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Kind {
    Ok,
    Err(u16),
    Item,
}

/// Splits and checks reply bytes; `crc`: whether every line must carry a checksum.
fn reply_lines(out: &[u8], crc: bool) -> Vec<(Kind, String)> {
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
        let kind = if content == b"ok" || content.starts_with(b"ok ") {
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
        };
        v.push((kind, text));
    }
    v
}

/// What a failed request must leave unchanged.
#[derive(Clone, Copy, Debug, PartialEq)]
struct State {
    settings: Settings,
    enabled: bool,
    steps: [i32; 4],
}

/// Whether `x` lies inside zone [from, to] (any 360° copy on a wrapping axis), widened
/// by `pad` degrees on each side.
fn in_zone(from: f64, to: f64, x: f64, wrap: bool, pad: f64) -> bool {
    let (from, to) = (from - pad, to + pad);
    if !wrap {
        return x >= from && x <= to;
    }
    let k = ((x - from) / 360.0).floor();
    x <= to + 360.0 * k
}

/// Whether the closed interval [lo, hi] meets the interior of zone [from, to] (any
/// 360° copy on a wrapping axis), narrowed by `EPS`.
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

/// Independent check of one leg of a motion, `from` → `to` degrees: inside the limits
/// (unless wrap; from beyond a limit only back toward it), clear of the interior of
/// every zone that does not contain the start, and out of a zone that does contain it
/// only through its nearer edge, without reaching its next 360° copy.
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

/// A console session under test: the console, the line model and bookkeeping.
struct Session {
    c: Con,
    model: LineModel,
    out: Vec<u8>,
    stream_crc: bool,
    /// Whether the running stream is an `aim`'s (which may end with `err`).
    refusing: bool,
    /// The `err` a refused `aim`'s stream ended with, until taken.
    stream_end: Option<Kind>,
    /// The chunk being fed (for failure messages of the byte-stream test).
    last_input: Vec<u8>,
    /// Final lines seen, by class, for the report at the end of the test.
    stats: Stats,
}

#[derive(Default, Debug, Clone, Copy)]
struct Stats {
    requests: u64,
    ok: u64,
    err: u64,
    streams: u64,
    aborted: u64,
    moves: u64,
}

impl Session {
    fn new(safe: bool) -> Session {
        let c = rec_console(safe);
        Session {
            c,
            model: LineModel::default(),
            out: Vec::new(),
            stream_crc: false,
            refusing: false,
            stream_end: None,
            last_input: Vec::new(),
            stats: Stats::default(),
        }
    }

    fn state(&mut self) -> State {
        State {
            settings: *self.c.settings(),
            enabled: self.c.enabled(),
            steps: self.c.axes.sim.steps,
        }
    }

    /// Whether replies to `line` carry a checksum: when it has one, valid or not (a
    /// malformed or wrong one is answered `err 402` with a checksum).
    fn request_crc(line: &str) -> bool {
        split_crc(line).is_some()
    }

    /// Checks the motions started since `before` (axis rules, §10). `declared`: the
    /// request was a `home` answered `ok`, which sets a counter without motion
    /// (docs/PROTOCOL.md, `home`).
    fn check_motion(&mut self, before: &State, answered_ok: bool, declared: bool, what: &str) {
        let starts = std::mem::take(&mut self.c.axes.starts);
        let rig = self.c.settings().rig;
        if !starts.is_empty() {
            assert!(answered_ok, "motion by a request not answered ok: {what}");
            assert!(before.enabled, "motion while disabled: {what}");
            assert!(
                self.c.interlock.safe,
                "motion with the interlock open: {what}"
            );
            self.stats.moves += 1;
        }
        for &(id, from, via, target) in &starts {
            let cfg = rig
                .axis(id)
                .unwrap_or_else(|_| panic!("motion of missing axis {id:?}: {what}"));
            let deg = |s: i32| cfg.steps_to_deg(s);
            if let Err(e) = landing_ok(cfg, f64::from(deg(target))) {
                panic!("{id:?} sent to {target} steps: {e}: {what}");
            }
            let legs: Vec<(i32, i32)> = match via {
                Some(v) => vec![(from, v), (v, target)],
                None => vec![(from, target)],
            };
            if let Some(v) = via {
                let a = f64::from(deg(v));
                let lim = cfg.wrap
                    || (a >= f64::from(cfg.min_deg) - EPS && a <= f64::from(cfg.max_deg) + EPS);
                assert!(lim, "{id:?} turn-round at {a} deg beyond limits: {what}");
            }
            for (a, b) in legs {
                if let Err(e) = leg_ok(cfg, f64::from(deg(a)), f64::from(deg(b))) {
                    panic!("{id:?}: {e}: {what}");
                }
            }
        }
        for id in AxisId::ALL {
            let i = axis_index(id);
            if self.c.axes.sim.steps[i] != before.steps[i] {
                assert!(
                    declared || starts.iter().any(|s| s.0 == id),
                    "{id:?} moved without a start: {what}"
                );
            }
        }
    }

    /// Feeds one byte and checks what it caused. Returns the final line's kind when the
    /// byte completed a request answered at once.
    fn push(&mut self, b: u8) -> Option<Kind> {
        if b != b'\n' && b != b'\r' {
            // Only a line end completes a request: any other byte writes nothing and
            // changes nothing visible (checked cheaply: this runs for every byte).
            let (streaming, steps) = (self.c.streaming(), self.c.axes.sim.steps);
            self.out.clear();
            self.c
                .push(b, &mut self.out)
                .expect("writing a reply failed");
            assert_eq!(self.model.push(b).map(|_| ()), None);
            assert!(
                self.out.is_empty(),
                "reply before the line end: {:?}",
                self.out
            );
            assert!(self.c.axes.starts.is_empty() && steps == self.c.axes.sim.steps);
            assert_eq!(streaming, self.c.streaming());
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
            "{ev:?} (chunk {:?})",
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
                self.stats.requests += 1;
                self.stats.err += 1;
                answered = Some(k[0].0);
            }
            Some(Event::Line(ref line)) => {
                self.stats.requests += 1;
                let crc_on = Self::request_crc(line);
                if was_streaming && is_stop(line) {
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
                    self.stats.aborted += 1;
                    self.stats.ok += 1;
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
                    self.stats.err += 1;
                    answered = Some(k[0].0);
                } else if self.c.streaming() {
                    assert!(self.out.is_empty(), "stream start wrote output: {line}");
                    self.stream_crc = crc_on;
                    self.refusing = line.starts_with("aim");
                    self.stats.streams += 1;
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
                        self.stats.err += 1;
                    } else {
                        self.stats.ok += 1;
                    }
                    answered = Some(k[0].0);
                }
            }
        }
        let declared = answered == Some(Kind::Ok)
            && matches!(&ev, Some(Event::Line(l)) if l.trim_start().starts_with("home"));
        self.check_motion(&before, answered == Some(Kind::Ok), declared, &what);
        answered
    }

    /// Polls at most `budget` times; true when no stream is running afterwards.
    fn poll(&mut self, budget: u32) -> bool {
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
                assert!(self.refusing, "a stream ended with err: {}", k[0].1);
                assert!(!self.c.streaming());
                self.stats.err += 1;
                self.stream_end = Some(k[0].0);
            } else {
                assert_eq!(k[0].0, Kind::Ok, "a stream ends with ok: {}", k[0].1);
                assert!(!self.c.streaming());
                self.stats.ok += 1;
            }

            assert_eq!(before, self.state(), "a stream line changed state");
            self.check_motion(&before, false, false, "poll");
        }
        !self.c.streaming()
    }

    /// Ends any running stream: polled out within `STREAM_CAP`, else stopped.
    fn finish_stream(&mut self) {
        if !self.poll(STREAM_CAP) {
            for &b in b"\nstop\n" {
                self.push(b);
            }
            assert!(!self.c.streaming(), "stop did not end the stream");
        }
    }

    /// Feeds a whole line (with its terminator); returns the kind of the final line it
    /// got at once (`None` when it started a stream: poll or `finish_stream` next).
    fn line(&mut self, bytes: &[u8]) -> Option<Kind> {
        let mut last = None;
        for &b in bytes {
            if let Some(k) = self.push(b) {
                last = Some(k);
            }
        }
        last
    }

    /// The `solutions=` and `points=` fields of `status` (buffers `err` must not touch).
    fn buffers(&mut self) -> (String, String) {
        let was = self.stats;
        assert_eq!(self.line(b"status\n"), Some(Kind::Ok));
        // `push` left status's own reply in `out`.
        let text = String::from_utf8(self.out.clone()).unwrap();
        self.stats = was;
        let field = |k: &str| {
            text.split([' ', '\n'])
                .find_map(|t| t.strip_prefix(k))
                .unwrap_or_else(|| panic!("status lacks {k}: {text}"))
                .to_string()
        };
        (field("solutions="), field("points="))
    }
}

/// `Some((body, true))` for a valid checksum, `Some((line, false))` for a malformed or
/// wrong one (the reply still carries a checksum: the line contains `*`), `None` for a
/// line without `*`.
fn split_crc(line: &str) -> Option<(&str, bool)> {
    let star = line.find('*')?;
    let (body, suffix) = line.split_at(star);
    let ok = suffix.len() == 5
        && suffix[1..].bytes().all(|b| b.is_ascii_hexdigit())
        && u16::from_str_radix(&suffix[1..], 16).ok() == Some(crc16_ref(body.as_bytes()));
    Some(if ok { (body, true) } else { (line, false) })
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

// ---------------------------------------------------------------------------------
// Generators
// ---------------------------------------------------------------------------------

/// The command words, as `help` lists them.
const COMMANDS: [&str; 23] = [
    "hello", "help", "status", "set", "get", "crystals", "faces", "beams", "aim", "move", "stop",
    "pos", "enable", "disable", "home", "axis", "zone", "plan", "pt", "fit", "read", "dump",
    "reset",
];

/// Bytes likely on a serial line (line ends, letters, digits, `=`, `*`, blanks, NUL,
/// 0xFF, separators), mixed below with uniformly random ones.
const LIKELY: &[u8] = b"\n\r\n\r\n\rabcdefghijklmnopqrstuvwxyz0123456789====****  \t\x00\xff-.,";

/// Well-formed requests mixed into the random byte streams.
const VALID: &[&str] = &[
    "enable",
    "enable",
    "move arm=40",
    "move arm=-30 tilt=5",
    "move tilt=-10 azimuth=90",
    "aim",
    "move sol=0",
    "move sol=1",
    "set energy=150 beam=1,1",
    "plan kind=track from=50 to=150 step=10",
    "beams",
    "read",
    "pos",
    "stop",
    "disable",
];

/// A chunk of a random byte stream: sometimes a real command word first, then up to 35
/// bytes (3 in 10 uniformly random, the rest from `LIKELY`), then a line end — so that
/// each chunk ends at least one request.
fn chunk(rng: &mut Rng) -> Vec<u8> {
    const ENDS: [&[u8]; 4] = [b"\n", b"\r", b"\r\n", b"\n\n"];
    let mut v = Vec::with_capacity(48);
    // One chunk in six is a well-formed request, so that random streams also reach
    // motion, streams and their interruption.
    if rng.below(6) == 0 {
        v.extend_from_slice(VALID[rng.below(VALID.len())].as_bytes());
        v.extend_from_slice(ENDS[rng.below(ENDS.len())]);
        return v;
    }
    if rng.below(5) < 2 {
        v.extend_from_slice(COMMANDS[rng.below(COMMANDS.len())].as_bytes());
        v.push(b' ');
    }
    for _ in 0..rng.below(36) {
        let r = rng.next();
        v.push(if r % 10 < 3 {
            (r >> 40) as u8
        } else {
            LIKELY[(r >> 40) as usize % LIKELY.len()]
        });
    }
    v.extend_from_slice(ENDS[rng.below(ENDS.len())]);
    v
}

/// Numbers as text, mostly plain decimals in `lo..hi`, sometimes special.
fn num(lo: f32, hi: f32) -> BoxedStrategy<String> {
    prop_oneof![
        10 => (lo..hi).prop_map(|x| format!("{x:.2}")),
        2 => ((lo as i32)..=(hi as i32)).prop_map(|i| i.to_string()),
        1 => special_number(),
    ]
    .boxed()
}

/// Text that is hard for a number parser: NaN, infinities, out-of-range, −0, empty,
/// syntax near misses, huge integers.
fn special_number() -> BoxedStrategy<String> {
    prop::sample::select(
        &[
            "nan",
            "NaN",
            "-nan",
            "inf",
            "-inf",
            "Infinity",
            "1e39",
            "-1e39",
            "3.4028235e38",
            "3.4028236e38",
            "1e-46",
            "-0",
            "-0.0",
            "0",
            "+0",
            "0x10",
            "1_0",
            "+",
            "-",
            ".",
            "1.2.3",
            "5.",
            ".5",
            "+1E2",
            "1e",
            "e5",
            "abc",
            "2147483648",
            "-2147483649",
            "99999999999999999999",
            "1e308",
            "0.000000000000000000000000000000000000000001",
        ][..],
    )
    .prop_map(String::from)
    .boxed()
}

fn int(lo: i32, hi: i32) -> BoxedStrategy<String> {
    prop_oneof![
        8 => (lo..=hi).prop_map(|i| i.to_string()),
        1 => special_number(),
    ]
    .boxed()
}

fn words(ws: &'static [&'static str]) -> BoxedStrategy<String> {
    prop::sample::select(ws).prop_map(String::from).boxed()
}

fn crystal_id() -> BoxedStrategy<String> {
    let ids: Vec<String> = table::all().iter().map(|c| c.id.to_string()).collect();
    prop_oneof![
        8 => prop::sample::select(ids),
        1 => words(&["xx", "CU", "copper", "cu1", "-"]),
    ]
    .boxed()
}

/// Miller indices: three or four small integers, sometimes malformed.
fn face_text() -> BoxedStrategy<String> {
    prop_oneof![
        6 => prop::collection::vec(-3i32..=3, 3).prop_map(|v| join(&v)),
        3 => (-2i32..=2, -2i32..=2, -2i32..=2).prop_map(|(h, k, l)| join(&[h, k, -(h + k), l])),
        1 => prop::collection::vec(-3i32..=3, 4).prop_map(|v| join(&v)),
        1 => words(&["1.5,0,0", "1,0", "1,0,0,0,0", "a,b,c", "13,0,0", "0,0,0", ",,", "1,,0"]),
    ]
    .boxed()
}

fn rod_text() -> BoxedStrategy<String> {
    prop_oneof![
        8 => (-3i32..=3, -3i32..=3).prop_map(|(h, k)| format!("{h},{k}")),
        1 => words(&["1", "1,0,0", "100,0", "a,b", "1.5,0", ","]),
    ]
    .boxed()
}

fn join(v: &[i32]) -> String {
    v.iter().map(i32::to_string).collect::<Vec<_>>().join(",")
}

/// A value for `key` (of the command `cmd`).
fn value(cmd: &str, key: &str) -> BoxedStrategy<String> {
    match key {
        "energy" => num(0.5, 500.0),
        "cathode" | "sample" => num(-1.0, 11.0),
        "offset" => num(-30.0, 30.0),
        "v0" => prop_oneof![4 => num(-1.0, 40.0), 1 => Just("table".to_string())].boxed(),
        "crystal" => crystal_id(),
        "face" => face_text(),
        "tilt" if cmd == "set" => num(-95.0, 95.0),
        "tilt" => num(-85.0, 85.0),
        "azimuth" if cmd == "set" => {
            prop_oneof![4 => num(-400.0, 400.0), 1 => Just("free".to_string())].boxed()
        }
        "azimuth" => num(-800.0, 800.0),
        "beam" => rod_text(),
        "acceptance" => num(-1.0, 25.0),
        "sol" => prop_oneof![6 => int(0, 1), 1 => int(-1, 9)].boxed(),
        "arm" => num(-180.0, 180.0),
        "elevation" => num(-70.0, 70.0),
        "name" if cmd == "home" => words(&[
            "arm",
            "tilt",
            "azimuth",
            "arm",
            "tilt",
            "azimuth",
            "elevation",
            "gun",
        ]),
        "name" => words(&["arm", "arm", "elevation", "tilt", "azimuth", "gun"]),
        "steps_per_deg" => num(-1.0, 3000.0),
        "home_offset_deg" => num(-30.0, 30.0),
        "min_deg" => num(-200.0, 50.0),
        "max_deg" => num(-50.0, 200.0),
        "backlash_deg" => num(-0.5, 2.0),
        "max_speed_deg_s" | "accel_deg_s2" => num(-1.0, 60.0),
        "approach" => words(&["from-below", "from-above", "sideways"]),
        "wrap" | "fitted" => words(&["0", "1", "on", "off", "yes", "no", "2", "true"]),
        "i" => int(-1, 5),
        "from" | "to" if cmd == "zone" => num(-200.0, 200.0),
        "from" | "to" => num(-20.0, 320.0),
        "step" => prop_oneof![8 => num(4.0, 80.0), 1 => words(&["0", "-5", "0.5", "1e-9"])].boxed(),
        "dwell" => num(-1.0, 5.0),
        "x" | "y" => num(-100.0, 100.0),
        "n" => int(-5, 12),
        "threshold" => num(-1.0, 10.0),
        "kind" if cmd == "plan" => words(&["track", "iv", "sweep", "sweep", "peak"]),
        "kind" => words(&["peak", "centroid", "armzero", "rows", "iv", "track"]),
        _ => prop_oneof![special_number(), words(&["x", "on", "1,2"])].boxed(),
    }
}

/// `key=value` pairs for some of `keys`, in random order: each key is present with
/// probability `p`. Every strategy is built once (per-value construction would make
/// generation dominate the run time).
fn keyed(cmd: &'static str, keys: &'static [&'static str], p: f64) -> BoxedStrategy<Vec<String>> {
    keys.iter()
        .map(|&k| prop::option::weighted(p, value(cmd, k).prop_map(move |v| format!("{k}={v}"))))
        .collect::<Vec<_>>()
        .prop_map(|v| v.into_iter().flatten().collect::<Vec<_>>())
        .prop_shuffle()
        .boxed()
}

const SET_KEYS: &[&str] = &[
    "energy",
    "cathode",
    "sample",
    "offset",
    "v0",
    "crystal",
    "face",
    "tilt",
    "azimuth",
    "beam",
    "acceptance",
];
const AXIS_KEYS: &[&str] = &[
    "steps_per_deg",
    "home_offset_deg",
    "min_deg",
    "max_deg",
    "backlash_deg",
    "approach",
    "wrap",
    "max_speed_deg_s",
    "accel_deg_s2",
    "fitted",
];
const GET_KEYS: &[&str] = &[
    "energy",
    "kinetic",
    "wavelength",
    "cathode",
    "sample",
    "offset",
    "v0",
    "crystal",
    "face",
    "tilt",
    "azimuth",
    "beam",
    "acceptance",
    "nonsense",
];

/// The arguments of a request for `cmd`, built from its real keys.
fn args(cmd: &'static str) -> BoxedStrategy<Vec<String>> {
    let none = Just(Vec::<String>::new()).boxed();
    match cmd {
        "set" => keyed("set", SET_KEYS, 0.18),
        "get" => prop_oneof![
            Just(Vec::new()),
            prop::sample::select(GET_KEYS).prop_map(|k| vec![k.to_string()]),
        ]
        .boxed(),
        "aim" => prop_oneof![
            2 => Just(Vec::new()),
            2 => (-1i32..=1, -1i32..=1).prop_map(|(h, k)| vec![format!("beam={h},{k}")]),
            1 => rod_text().prop_map(|r| vec![format!("beam={r}")]),
        ]
        .boxed(),
        "move" => prop_oneof![
            3 => int(-1, 8).prop_map(|n| vec![format!("sol={n}")]),
            4 => (
                keyed("move", &["arm", "tilt", "azimuth"], 0.5),
                prop::option::weighted(0.08, value("move", "elevation")),
            )
                .prop_map(|(mut v, e)| {
                    v.extend(e.map(|e| format!("elevation={e}")));
                    v
                }),
        ]
        .boxed(),
        "axis" => (value("axis", "name"), keyed("axis", AXIS_KEYS, 0.15))
            .prop_map(|(n, mut v)| {
                v.insert(0, format!("name={n}"));
                v
            })
            .boxed(),
        "zone" => (
            value("zone", "name"),
            value("zone", "i"),
            prop_oneof![
                3 => (-200.0f32..200.0, prop_oneof![6 => 0.5f32..40.0, 1 => -10.0f32..0.5])
                    .prop_map(|(f, w)| vec![format!("from={f:.2}"), format!("to={:.2}", f + w)]),
                1 => (value("zone", "from"), value("zone", "to"))
                    .prop_map(|(f, t)| vec![format!("from={f}"), format!("to={t}")]),
                1 => Just(vec!["off".to_string()]),
            ],
        )
            .prop_map(|(n, i, mut rest)| {
                rest.insert(0, format!("i={i}"));
                rest.insert(0, format!("name={n}"));
                rest
            })
            .boxed(),
        "plan" => (
            value("plan", "kind"),
            keyed("plan", &["from", "to", "step", "dwell"], 0.85),
        )
            .prop_map(|(k, mut v)| {
                v.insert(0, format!("kind={k}"));
                v
            })
            .boxed(),
        "pt" => prop_oneof![
            6 => keyed("pt", &["x", "y", "n"], 0.8),
            1 => Just(vec!["clear".to_string()]),
        ]
        .boxed(),
        "fit" => keyed("fit", &["kind", "threshold"], 0.6),
        "home" => (
            value("home", "name"),
            prop::option::weighted(0.3, value("move", "arm")),
        )
            .prop_map(|(n, at)| {
                let mut v = vec![format!("name={n}")];
                v.extend(at.map(|d| format!("at={d}")));
                v
            })
            .boxed(),
        _ => none,
    }
}

/// A command word with its arguments, weighted towards the stateful and motion
/// commands; a few unknown or mis-cased words.
fn command_with_args() -> BoxedStrategy<(&'static str, Vec<String>)> {
    let c = |w: &'static str| args(w).prop_map(move |a| (w, a)).boxed();
    let unknown = prop::sample::select(&["frobnicate", "HELP", "Set", "mov", "x1", "-"][..]);
    prop_oneof![
        14 => c("set"),
        4 => c("get"),
        8 => c("aim"),
        14 => c("move"),
        9 => c("enable"),
        3 => c("disable"),
        10 => c("home"),
        7 => c("axis"),
        6 => c("zone"),
        3 => c("plan"),
        7 => c("pt"),
        4 => c("fit"),
        1 => c("beams"),
        1 => c("dump"),
        1 => c("help"),
        1 => c("faces"),
        1 => c("stop"),
        1 => c("pos"),
        1 => c("status"),
        1 => c("read"),
        1 => c("reset"),
        1 => c("hello"),
        1 => c("crystals"),
        2 => (unknown, args("set")).boxed(),
    ]
    .boxed()
}

/// A well-formed-looking request line with its terminator: a command, its arguments,
/// sometimes an extra token, random blanks, and a valid, wrong or malformed checksum.
fn request() -> impl Strategy<Value = Vec<u8>> {
    let extra = prop_oneof![
        12 => Just(None),
        1 => words(&["extra", "off", "clear", "x=1", "energy=5", "sol=0", "k=", "=3", "A=1"]).prop_map(Some),
    ];
    let sep = prop_oneof![8 => Just(" "), 1 => Just("  "), 1 => Just("\t")];
    let crc = prop_oneof![12 => Just(0u8), 4 => Just(1), 1 => Just(2), 1 => Just(3)];
    let end = prop::sample::select(&["\n", "\n", "\r", "\r\n"][..]);
    (command_with_args(), extra, sep, crc, end).prop_map(|((c, mut a), extra, sep, crc, end)| {
        if let Some(x) = extra {
            a.push(x);
        }
        let mut line = c.to_string();
        for t in a {
            line.push_str(sep);
            line.push_str(&t);
        }
        let line = match crc {
            1 => with_crc(&line),
            2 => format!("{line}*{:04X}", crc16_ref(line.as_bytes()) ^ 0x0100),
            3 => format!("{line}*12"),
            _ => line,
        };
        let mut v = line.into_bytes();
        v.extend_from_slice(end.as_bytes());
        v
    })
}

// ---------------------------------------------------------------------------------
// Properties
// ---------------------------------------------------------------------------------

proptest! {
    #![proptest_config(ProptestConfig { cases: CASES, ..ProptestConfig::default() })]

    /// 100,000 generated request lines (2,000 cases × 50): as above, plus the buffers
    /// `status` reports are unchanged by every `err`; the interlock flips between lines
    /// now and then; one case in five leaves streams running between lines (so that
    /// requests meet a running stream: `err 410`, and `stop`: `err 411` then `ok`).
    #[test]
    fn random_request_lines(
        safe in prop::bool::weighted(0.85),
        interleave in prop::bool::weighted(0.2),
        prelude in prop::sample::select(&[0u8, 1, 1, 1, 2, 2][..]),
        flips in prop::collection::vec(prop::bool::weighted(0.03), PER_CASE),
        lines in prop::collection::vec(request(), PER_CASE),
    ) {
        let mut s = Session::new(safe);
        // Most cases start enabled, some with the elevation axis fitted (the lines
        // still disable, reset and reconfigure at random).
        let start: &[&[u8]] = match prelude {
            0 => &[],
            1 => &[b"enable\n"],
            _ => &[b"enable\n", b"axis name=elevation fitted=1\n"],
        };
        for l in start {
            s.line(l);
        }
        // The buffers just before the current line, when known (not while streaming).
        let mut buffers = Some(s.buffers());
        for (line, flip) in lines.iter().zip(&flips) {
            if *flip {
                s.c.interlock.safe = !s.c.interlock.safe;
                // The board's control tick sees the interlock before the next request
                // (as the firmware's loop does): the trip is the board's doing, not
                // the request's.
                s.c.tick();
            }
            let idle_before = !s.c.streaming();
            let kind = s.line(line);
            prop_assert!(kind.is_some() || s.c.streaming(),
                "no final line and no stream: {:?}", String::from_utf8_lossy(line));
            if interleave {
                s.poll(2);
            } else {
                s.finish_stream();
            }
            if s.c.streaming() {
                buffers = None;
                continue;
            }
            let now = s.buffers();
            if let (true, Some(Kind::Err(code)), Some(b)) = (idle_before, kind, &buffers) {
                // A failed `aim` clears the stored solutions (so that no `move sol=`
                // drives to an older beam); nothing else changes.
                let is_aim = line.trim_ascii_start().starts_with(b"aim");
                let cleared = (String::from("0"), b.1.clone());
                prop_assert!(&now == b || (is_aim && now == cleared),
                    "err {} changed the buffers: {:?} -> {:?}: {:?}",
                    code, b, now, String::from_utf8_lossy(line));
            }
            buffers = Some(now);
        }
        s.finish_stream();
    }
}

/// 100,000 random byte chunks (2,000 cases × 50): no panic, one final line per
/// request, failed requests change nothing, motion stays allowed. Polls per byte:
/// 0 (requests pile onto a running stream), 1, or to the end of the stream. The cases
/// come from fixed seeds (a failure names its case), and what they reach is counted.
#[test]
fn random_byte_streams() {
    let mut rng = Rng(0xb17e_5eed);
    let mut total = Stats::default();
    for case in 0..CASES {
        let safe = rng.chance(0.8);
        let polls = rng.select(&[0u32, 1, STREAM_CAP]);
        let seed = rng.next();
        let mut chunks = Rng(seed);
        let mut s = Session::new(safe);
        let r = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
            for _ in 0..PER_CASE {
                let ch = chunk(&mut chunks);
                s.last_input = ch.clone();
                for &b in &ch {
                    s.push(b);
                    s.poll(polls);
                }
            }
            s.finish_stream();
            s.stats
        }));
        let st = r.unwrap_or_else(|_| {
            panic!("case {case} (safe {safe}, polls {polls}, chunk seed {seed:#x}) failed")
        });
        // Every chunk ends at least one line.
        assert!(st.requests >= PER_CASE as u64, "case {case}: {st:?}");
        total.requests += st.requests;
        total.ok += st.ok;
        total.err += st.err;
        total.streams += st.streams;
        total.aborted += st.aborted;
        total.moves += st.moves;
    }
    println!("random byte streams: {CASES} cases × {PER_CASE} chunks: {total:?}");
    // Most random bytes make errors; enough make valid requests, streams and moves
    // (measured at the time of writing: 11,233 ok of 189,312 requests, 3,507 streams,
    // 214 stopped, 592 requests that moved).
    let n = (CASES as usize * PER_CASE) as u64;
    assert!(total.ok > n / 50, "{total:?}");
    assert!(total.err > n / 2, "{total:?}");
    assert!(total.streams > n / 500, "{total:?}");
    assert!(total.aborted > 100, "{total:?}");
    assert!(total.moves > 300, "{total:?}");
}

/// The generators reach what they are meant to: a fixed sample of lines (a
/// deterministic runner) produces every class of reply (catches a generator that
/// silently stopped producing, say, moves).
#[test]
fn generators_reach_every_outcome() {
    use proptest::strategy::ValueTree;
    use proptest::test_runner::TestRunner;
    let mut runner = TestRunner::deterministic();
    let mut s = Session::new(true);
    let mut codes = std::collections::BTreeSet::new();
    for _ in 0..6_000 {
        let line = request().new_tree(&mut runner).unwrap().current();
        if let Some(Kind::Err(c)) = s.line(&line) {
            codes.insert(c);
        }
        s.finish_stream();
        // A refused `aim` streams its refusals and ends with the err.
        if let Some(Kind::Err(c)) = s.stream_end.take() {
            codes.insert(c);
        }
    }
    let st = s.stats;
    assert!(st.ok > 300 && st.err > 300, "{st:?}");
    assert!(st.streams > 50, "{st:?}");
    assert!(st.moves > 20, "no moves generated: {st:?}");
    for c in [
        301, 302, 303, 320, 321, 402, 403, 404, 405, 406, 407, 408, 412,
    ] {
        assert!(codes.contains(&c), "no err {c} in {codes:?}");
    }
}
