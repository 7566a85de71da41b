//! Property tests of the serial console as a whole (`core/src/console/controller/`) on
//! a simulated controller (feature `sim`): random byte streams, and random request
//! lines built from the real command words and keys with random values.
//!
//! Every byte and every poll goes through the shared checking session,
//! `matterwave_tests::console::byte_stream::Session` (the fuzz target's checks, listed
//! there: one final line per request, `stop` in every state, printable replies within
//! `MAX_REPLY` with a checksum exactly when the request had one, checked against an
//! independent CRC-16/IBM-3740, nothing changed by an `err`, motion only when enabled
//! and safe, within the limits and out of every zone along the whole path — by
//! independent interval checks, not `check_angle` or `check_path`). The line-level test
//! also checks that the solution and point buffers `status` reports survive every
//! `err`. The random bytes come from the shared generator,
//! `matterwave_tests::console::serial_bytes`.
//!
//! The default home position (arm 0°) lies inside the default gun zone (±12°), so the
//! resting position of an axis the console never moved is not required to be allowed;
//! every position the console commands is.
//!
//! Sizes: 2,000 cases × 50 chunks = 100,000 random byte chunks (fixed seeds), and 2,000
//! cases × 50 lines = 100,000 request lines (proptest).

use matterwave_core::table;
use matterwave_tests::console::byte_stream::{Kind, Reach, Session};
use matterwave_tests::console::{crc16_ref, serial_bytes, with_crc};
use matterwave_tests::Rng;
use proptest::prelude::*;

/// Cases per property; each case carries `PER_CASE` chunks or lines.
const CASES: u32 = 2_000;
/// Chunks or lines per case.
const PER_CASE: usize = 50;
/// Polls before a still-running stream is stopped instead of polled out (plans may
/// hold up to 100,000 points; the lists end much sooner).
const STREAM_CAP: u32 = 300;
// ---------------------------------------------------------------------------------
// Generators
// ---------------------------------------------------------------------------------

/// The command words, as `help` lists them.
const COMMANDS: [&str; 24] = [
    "hello", "help", "status", "set", "get", "crystals", "faces", "beams", "energy", "aim", "move",
    "stop", "pos", "enable", "disable", "home", "axis", "zone", "plan", "pt", "fit", "read",
    "dump", "reset",
];

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
/// bytes (3 in 10 uniformly random, the rest likely serial bytes), then a line end — so that
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
    let n = rng.below(36);
    v.extend(serial_bytes(rng, n, 0.3, false));
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
                s.finish_stream(STREAM_CAP);
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
        s.finish_stream(STREAM_CAP);
    }
}

/// 100,000 random byte chunks (2,000 cases × 50): no panic, one final line per
/// request, failed requests change nothing, motion stays allowed. Polls per byte:
/// 0 (requests pile onto a running stream), 1, or to the end of the stream. The cases
/// come from fixed seeds (a failure names its case), and what they reach is counted.
#[test]
fn random_byte_streams() {
    let mut rng = Rng(0xb17e_5eed);
    let mut total = Reach::default();
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
            s.finish_stream(STREAM_CAP);
            s.reach
        }));
        let st = r.unwrap_or_else(|_| {
            panic!("case {case} (safe {safe}, polls {polls}, chunk seed {seed:#x}) failed")
        });
        // Every chunk ends at least one line.
        assert!(st.requests >= PER_CASE as u64, "case {case}: {st:?}");
        total.add(&st);
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
        s.finish_stream(STREAM_CAP);
        // A refused `aim` streams its refusals and ends with the err.
        if let Some(Kind::Err(c)) = s.stream_end.take() {
            codes.insert(c);
        }
    }
    let st = s.reach;
    assert!(st.ok > 300 && st.err > 300, "{st:?}");
    assert!(st.streams > 50, "{st:?}");
    assert!(st.moves > 20, "no moves generated: {st:?}");
    for c in [
        301, 302, 303, 320, 321, 402, 403, 404, 405, 406, 407, 408, 412,
    ] {
        assert!(codes.contains(&c), "no err {c} in {codes:?}");
    }
}
