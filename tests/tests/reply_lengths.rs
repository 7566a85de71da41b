//! No stream line can outgrow its buffer: the `skipped=too-long` branch of
//! `Console::poll` (core/src/console/controller/mod.rs) is unreachable for every
//! configuration the console accepts, and every `dump` line replays as one request line.
//!
//! The argument. A stream line is a fixed sequence of keys and words (its shape) with
//! values of three kinds: numbers, written by `format_f32_roundtrip` (at most 15 bytes:
//! sign, `0.000` and nine significant digits, or sign, nine digits, point and a
//! two-digit exponent — its docs: "at most 9" significant digits, fixed point for
//! 1e-4 ≤ |x| < 1e7), `format_i32` (at most 11) or, for `estimate_s` only,
//! `format_f32` with one decimal (at most 21: the fixed form is used below 10^19 / 10
//! and the round-trip form above); words from fixed vocabularies (axis, structure and
//! crystal names, approach words, budget causes); and the face and beam texts, bounded
//! by the index limits the console accepts. So the longest line of a shape is the line
//! with every number widened to its longest text.
//!
//! The test reaches every stream (help, crystals, faces, beams with its truncated end,
//! aim solutions, aim refusals with both the limit and the zone form and the evanescent
//! end, the three plan kinds with reachable and refused points and I-V peaks, budget,
//! dump) with every optional field present (an elevation axis, four zones on every
//! axis, a wrapping azimuth, the longest crystal id and face text), widens every number
//! of every line it sees to the longest its formatter writes (15 bytes; 21 for
//! `estimate_s`) — numbers in free text too, such as error codes — and requires the
//! result to fit: a reply line within `MAX_REPLY` (256) with room for the 5-byte
//! checksum, and a dump line, without its `- `, within one request line, `MAX_LINE`
//! (120), checksum room included (docs/PROTOCOL.md: lines and replies).

use matterwave_core::console::controller::MAX_REPLY;
use matterwave_core::console::line::MAX_LINE;
use matterwave_core::table;
use matterwave_tests::console::{request, sim_console, SimConsole};

/// The widest text of a number written by `format_f32_roundtrip` (15 bytes) or
/// `format_i32` (11), bytes (see the module docs).
const NUMBER_MAX: usize = 15;

/// The widest text of `format_f32` with one decimal, bytes: `estimate_s` only (the
/// one fixed-decimal field of a stream line, core/src/console/controller/plan.rs).
const FIXED_MAX: usize = 21;

/// Checksum suffix `*XXXX`, bytes.
const CRC_SUFFIX: usize = 5;

/// Fields whose values have a known widest text, bytes: flags (0 or 1), the branch (−1,
/// 0, +1), zone slots (0 to 3), error codes (three digits), `estimate_s`, and the face
/// and beam texts at the limits `set` accepts (|index| ≤ 12 for a face: `-12,-12,-12`;
/// a beam of two fractions, |h|, |k| ≤ 99 with denominators up to 99 in lowest terms:
/// `-9800/99,-9799/99`, 17 bytes; an overlayer matrix of four entries ±24 over a
/// denominator up to 4 in lowest terms: `-23/4,-23/4,-23/4,-23/4`, 23 bytes; the
/// domains of an overlayer beam, `0,1,…,11`, 26 bytes).
const SMALL: [(&str, usize); 10] = [
    ("wrap=", 1),
    ("fitted=", 1),
    ("branch=", 2),
    ("zone=", 1),
    ("err=", 3),
    ("estimate_s=", FIXED_MAX),
    ("face=", 11),
    ("beam=", 17),
    ("overlayer=", 23),
    // The domain indices 0 to 11 of an overlayer beam, comma-separated.
    ("domains=", 26),
];

/// `line` with every number (optional sign, digits, point, exponent) counted at
/// `NUMBER_MAX` bytes, and the value of a `SMALL` key at its width: the longest line
/// of its shape.
fn widened_len(line: &str) -> usize {
    let tokens: Vec<usize> = line
        .split(' ')
        .map(|t| match SMALL.iter().find(|(key, _)| t.starts_with(key)) {
            Some((key, w)) => key.len() + w,
            None => widened_token(t),
        })
        .collect();
    tokens.iter().sum::<usize>() + tokens.len().saturating_sub(1)
}

/// One token with every number in it counted at `NUMBER_MAX` bytes.
fn widened_token(t: &str) -> usize {
    let b = t.as_bytes();
    let (mut len, mut i) = (0, 0);
    while i < b.len() {
        let start = i;
        if b[i] == b'-' && b.get(i + 1).is_some_and(u8::is_ascii_digit) {
            i += 1;
        }
        if b.get(i).is_some_and(u8::is_ascii_digit)
            && (start == 0 || !b[start - 1].is_ascii_alphabetic())
        {
            while i < b.len() && (b[i].is_ascii_digit() || b[i] == b'.') {
                i += 1;
            }
            if b.get(i) == Some(&b'e') {
                i += 1;
                if b.get(i) == Some(&b'-') {
                    i += 1;
                }
                while i < b.len() && b[i].is_ascii_digit() {
                    i += 1;
                }
            }
            len += NUMBER_MAX;
        } else {
            i = start + 1;
            len += 1;
        }
    }
    len
}

/// Sends `line`, polls its stream out and returns the stream's lines (the items and
/// the final line), checking each against the reply limit.
fn stream(c: &mut SimConsole, line: &str, seen: &mut Seen) -> Vec<String> {
    let reply = request(c, line);
    let lines: Vec<String> = reply.lines().map(str::to_string).collect();
    for l in &lines {
        assert!(!l.contains("skipped=too-long"), "{line}: {l}");
        let w = widened_len(l);
        assert!(
            w + CRC_SUFFIX <= MAX_REPLY,
            "{line}: {l}: {w} bytes with every number at its longest"
        );
        if w > seen.longest.0 {
            seen.longest = (w, l.clone());
        }
    }
    seen.lines += lines.len();
    lines
}

#[derive(Default)]
struct Seen {
    lines: usize,
    longest: (usize, String),
    shapes: std::collections::BTreeSet<String>,
}

impl Seen {
    /// Records the shape of each item line: its first word and keys.
    fn shapes_of(&mut self, lines: &[String]) {
        for l in lines {
            let keys: Vec<&str> = l
                .split(' ')
                .map(|t| t.split('=').next().unwrap_or(""))
                .collect();
            self.shapes.insert(keys.join(" "));
        }
    }
}

fn ok(c: &mut SimConsole, line: &str) {
    let r = request(c, line);
    assert!(r.starts_with("ok"), "{line}: {r}");
}

/// A console with every optional field of every line present: the elevation axis
/// fitted, four zones on every axis (the gun zone of the arm kept), the azimuth
/// wrapping; returned with its settings at the longest crystal id.
fn worst_case_console() -> SimConsole {
    let mut c = sim_console();
    ok(
        &mut c,
        "axis name=elevation fitted=1 min_deg=-80.123457 max_deg=80.123457",
    );
    for (axis, zones) in [
        (
            "arm",
            [
                (-12.0, 12.0),
                (140.125, 141.375),
                (150.5, 151.25),
                (160.0625, 161.0),
            ],
        ),
        (
            "elevation",
            [(30.0, 31.5), (40.0, 41.5), (50.0, 51.5), (60.0, 61.5)],
        ),
        (
            "tilt",
            [(60.0, 61.0), (65.0, 66.0), (70.0, 71.0), (75.0, 76.0)],
        ),
        (
            "azimuth",
            [
                (100.0, 101.0),
                (120.0, 121.0),
                (140.0, 141.0),
                (160.0, 161.0),
            ],
        ),
    ] {
        for (i, (from, to)) in zones.iter().enumerate() {
            ok(
                &mut c,
                &format!("zone name={axis} i={i} from={from} to={to}"),
            );
        }
    }
    ok(
        &mut c,
        "axis name=azimuth wrap=1 backlash_deg=0.0123457 approach=from-above",
    );
    ok(
        &mut c,
        "axis name=tilt home_offset_deg=-0.000123457 backlash_deg=0.0123457 max_speed_deg_s=12.3456789",
    );
    c
}

#[test]
fn no_stream_line_outgrows_its_buffer() {
    let mut seen = Seen::default();
    let mut c = sim_console();
    let help = stream(&mut c, "help", &mut seen);
    seen.shapes_of(&help);
    let crystals = stream(&mut c, "crystals", &mut seen);
    seen.shapes_of(&crystals);
    // Every crystal's faces; its beams at a low and the highest energy (the list cut at
    // about 400 rods, ending `truncated=1 g_max=`), at a tilt and azimuth.
    for cr in table::all() {
        ok(
            &mut c,
            &format!(
                "set crystal={} energy=95.123457 tilt=-7.123457 azimuth=-33.123457",
                cr.id
            ),
        );
        let f = stream(&mut c, "faces", &mut seen);
        seen.shapes_of(&f);
        let b = stream(&mut c, "beams", &mut seen);
        seen.shapes_of(&b);
    }
    ok(
        &mut c,
        "set crystal=cu face=1,0,0 energy=300000 tilt=0.000123457 azimuth=free",
    );
    let b = stream(&mut c, "beams", &mut seen);
    assert!(
        b.last().unwrap().contains(" truncated=1 g_max="),
        "{:?}",
        b.last()
    );
    seen.shapes_of(&b);

    // The worst-case console: aim solutions (in-plane and two-circle), refusals of
    // both forms and the evanescent end, plans of every kind, the budget, the dump.
    let mut c = worst_case_console();
    ok(
        &mut c,
        "set crystal=cu face=1,0,0 energy=150.123457 tilt=20.123457 beam=1,0 v0=12.3456789",
    );
    ok(
        &mut c,
        "set cathode=2.71234567 sample=4.61234567 offset=-1.23456789 acceptance=1.23456789",
    );
    let mut scripts: Vec<String> = vec![
        "aim".into(),
        "set azimuth=0.123456789".into(),
        "aim".into(),
        "set beam=1,1 azimuth=-170.123457".into(),
        "aim".into(),
        "set azimuth=free beam=0,0 tilt=5.1234567".into(),
        // Specular at 2·tilt ≈ 10.2°: inside the arm's gun zone.
        "aim".into(),
        "set tilt=80.123456 beam=3,3".into(),
        "aim".into(),
        "set tilt=-85.123457 beam=1,0".into(),
        "aim".into(),
        // Evanescent: (7,7) at 20 eV.
        "set energy=20.1234567 beam=7,7 tilt=-10.123457".into(),
        "aim".into(),
        "set energy=150.123457 beam=1,0 tilt=20.123457".into(),
        "plan kind=track from=20.123457 to=300.123457 step=9.87654321".into(),
        "plan kind=iv from=20.123457 to=300.123457 step=9.87654321".into(),
        "plan kind=sweep from=-170.123457 to=170.123457 step=1.23456789".into(),
        "budget".into(),
        "set azimuth=-33.123457 beam=1,1".into(),
        "plan kind=track from=20.123457 to=300.123457 step=9.87654321".into(),
        "plan kind=iv from=20.123457 to=300.123457 step=9.87654321".into(),
        "budget".into(),
        // A stepped face: both sub-beams and the phase list, then one sub-beam
        // evanescent.
        "steps miscut=2.12345678 height=1.23456789 direction=-33.123457 from=5.12345678 to=300.123457".into(),
        "steps terrace=0.5 height=99.123457".into(),
        // Spots on a hemispherical screen with the gun's shadow, on a flat detector,
        // and the beam at a measured spot (found, and not).
        "screen radius=66.1234567 rim=55.1234567 shadow=6.12345678".into(),
        "screen distance=100.123457 half_width=80.1234567 half_height=60.1234567 arm=-3.12345678 elevation=-2.12345678".into(),
        "screen distance=100.123457 half_width=80.1234567 half_height=60.1234567 x=40.1234567 y=-1.12345678 tolerance=20.1234567".into(),
        "screen radius=66 x=-65.1234567 y=0.123456789 tolerance=0.000123457".into(),
        // The inverse wavelength at both edges of the range, and refused.
        "energy lambda=0.0196875123".into(),
        "energy lambda=12.2643123".into(),
        "energy lambda=-12.2643123".into(),
    ];
    // The dump of the longest settings: the longest crystal id, a face with the
    // longest indices accepted (|index| ≤ 12), a beam of two-digit indices.
    let longest_id = table::all()
        .iter()
        .map(|c| c.id)
        .max_by_key(|id| id.len())
        .unwrap();
    scripts.push(format!(
        "set crystal={longest_id} face=-12,-11,-10 beam=-10,-11 azimuth=-170.123457"
    ));
    // An overlayer with its domains on the longest face, and a fractional beam of it;
    // the overlayer's beams; aim, plans and the two refusals of a fractional beam.
    scripts.push("set crystal=cu face=1,0,0 energy=150.123457 tilt=20.123457 azimuth=free".into());
    scripts.push("set overlayer=2,1,-1,3 domains=all beam=3/7,-1/7".into());
    scripts.push("beams".into());
    scripts.push("aim".into());
    scripts.push("plan kind=track from=20.123457 to=300.123457 step=9.87654321".into());
    scripts.push("plan kind=iv from=20.123457 to=300.123457 step=9.87654321".into());
    scripts.push("budget".into());
    scripts.push("plan kind=sweep from=-170.123457 to=170.123457 step=1.23456789".into());
    scripts.push("get".into());
    scripts.push("get overlayer".into());
    scripts.push(format!(
        "set crystal={longest_id} face=-12,-11,-10 beam=-10,-11 azimuth=-170.123457"
    ));
    scripts.push("set overlayer=-23/4,-11/2,-21/4,-5".into());
    scripts.push("dump".into());
    for s in &scripts {
        let lines = stream(&mut c, s, &mut seen);
        seen.shapes_of(&lines);
        if s == "dump" {
            for l in &lines[..lines.len() - 1] {
                let req = l.strip_prefix("- ").unwrap_or_else(|| panic!("{l}"));
                let w = widened_len(req);
                assert!(
                    w + CRC_SUFFIX <= MAX_LINE,
                    "dump line {req}: {w} bytes with every number at its longest"
                );
            }
        }
    }
    // Every stream and every optional field was reached (the shapes' first words and
    // keys; the values are what the widening covers).
    let all: Vec<&str> = seen.shapes.iter().map(String::as_str).collect();
    let text = all.join("\n");
    for needle in [
        // Help, crystals and faces come from fixed tables (no orthorhombic crystal,
        // no face with both values), so the lines seen are all there are.
        "- cmd",
        "- id structure a name",
        "- id structure a c name",
        "- face work_function",
        "- h k exit exit_azimuth row emerge",
        "ok count truncated g_max",
        "- sol arm elevation tilt azimuth arm_steps residual branch travel",
        "- refused branch axis target err min",
        "- refused branch axis target err max",
        "- refused branch axis target err zone from to by",
        "- i nominal arm elevation azimuth arm_steps",
        "- i nominal arm elevation azimuth arm_steps peak peak_sample",
        "- i nominal err axis zone",
        "- i arm arm_steps h k offset",
        "- i arm err axis zone",
        "ok points reachable estimate_s",
        "- contribution deg",
        "ok arm d_arm_d_energy d_arm_d_lattice total",
        "- set acceptance",
        "- axis name fitted",
        "- zone name i off",
        "- axis name steps_per_deg wrap",
        "- axis name home_offset_deg min_deg max_deg",
        "- axis name steps_per_deg backlash_deg approach wrap",
        "- axis name max_speed_deg_s accel_deg_s2",
        "- zone name i from to",
        "- h k exit exit_azimuth row emerge integer domains",
        "- energy",
        "- overlayer",
        "- beam",
        "ok count",
        "- set overlayer domains beam",
        "- sub j offset exit exit_azimuth arm elevation weight",
        "- h k x y from_axis shadowed",
        "ok count cone",
        "ok found h k offset",
        "ok found tolerance",
        "- phase energy cycles in_phase",
        "ok terrace height miscut direction phase splitting splitting_deg phases",
    ] {
        assert!(
            all.iter().any(|s| s.starts_with(needle)),
            "no line of shape {needle:?} reached; shapes:\n{text}"
        );
    }
    // The evanescent end of a refused aim names where the beam emerges.
    assert!(text.contains("(emerges above"), "{text}");
    println!(
        "{} stream lines in {} shapes; the longest, widened: {} bytes: {}",
        seen.lines,
        seen.shapes.len(),
        seen.longest.0,
        seen.longest.1
    );
}
