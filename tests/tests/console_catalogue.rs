//! A catalogue of malformed and refused requests for the serial console
//! (`core/src/console/controller/`), each with the error code it must get and the rule it
//! checks, on a fresh simulated controller (feature `sim`).
//!
//! A second table (`DETAILS`) checks the detail of the err line: every token and number
//! error kind gives its code and names the key, value or word at fault with the reason;
//! unknown keys list what the command reads; garbage is quoted back cut and escaped.
//!
//! For every case: the input's final lines carry exactly the expected codes; the state
//! a technician can see — `get`, `dump`, `pos` and `status` without its request/error
//! counters — is the same before and after; running the case again on a fresh console
//! gives byte-identical output (determinism); and sending the same input a second time
//! gives the same reply again.
//!
//! Codes are those of `core/src/error.rs` (1xx input values, 2xx physics, 3xx axes, 4xx
//! protocol). Each case names the project rule it checks: "protocol rules" are those of
//! docs/PROTOCOL.md, "axis rules" those of core/src/axis.rs, "geometry rules" those of
//! core/src/goniometer/, "fit rules" those of docs/CALIBRATION.md.

use matterwave_core::console::sim::{SimAxes, SimDetector, SimInterlock};
use matterwave_tests::console::{drain, feed, request, sim_console, SimConsole};

type Con = SimConsole;

/// `ok` as an expected "code".
const OK: u16 = 0;

/// One catalogue entry.
struct Case {
    /// What the case checks, with its source.
    rule: &'static str,
    /// Setup lines, each answered `ok` (streams polled to the end). Special steps:
    /// `!open` opens the interlock, `!safe` closes it, `!stream LINE` starts a stream and
    /// leaves it running (not polled).
    setup: &'static [&'static str],
    /// Whether the interlock is safe from the start.
    safe: bool,
    /// The malformed input, with its line end.
    input: &'static [u8],
    /// Codes of the final lines the input must produce, in order (`OK` = `ok`).
    want: &'static [u16],
}

const fn case(
    rule: &'static str,
    setup: &'static [&'static str],
    input: &'static [u8],
    want: &'static [u16],
) -> Case {
    Case {
        rule,
        setup,
        safe: true,
        input,
        want,
    }
}

const fn unsafe_case(
    rule: &'static str,
    setup: &'static [&'static str],
    input: &'static [u8],
    want: &'static [u16],
) -> Case {
    Case {
        rule,
        setup,
        safe: false,
        input,
        want,
    }
}

/// The 64 `pt` lines that fill the point buffer (`MAX_POINTS` = 64).
const FILL_POINTS: [&str; 64] = {
    const P: &str = "pt x=1 y=2 n=3";
    [P; 64]
};

const CATALOGUE: &[Case] = &[
    // ---- 4xx: the line itself -------------------------------------------------------
    case("protocol rules: overlong lines (130 bytes > 120) get a clear error (400)", &[],
        b"get xxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxx\n",
        &[400]),
    case("protocol rules: the documented maximum is 120 bytes: 121 is too long (400)", &[],
        b"get                                                                                                                      \n",
        &[400]),
    case("protocol rules: non-ASCII bytes (UTF-8 e-acute) are refused (401)", &[], b"set crystal=\xc3\xa9\n", &[401]),
    case("protocol rules: a NUL byte is refused (401)", &[], b"get\x00 energy\n", &[401]),
    case("protocol rules: control bytes (ESC, DEL) are refused (401)", &[], b"get \x1b[A\x7f\n", &[401]),
    case("protocol rules: 0xFF is refused (401); the first problem in a line wins over length", &[],
        b"\xffxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxx\n",
        &[401]),
    case("protocol rules: optional per-line checksum: a wrong one is refused (402)", &[], b"get*0000\n", &[402]),
    case("protocol rules: a malformed checksum (*12) is refused (402)", &[], b"get*12\n", &[402]),
    case("protocol rules: a checksum of non-hex digits is refused (402)", &[], b"get energy*zz1G\n", &[402]),
    case("protocol rules: a bare star is a malformed checksum (402)", &[], b"set energy=120*\n", &[402]),
    case("protocol rules: unknown words: unknown command (403)", &[], b"frobnicate\n", &[403]),
    case("protocol rules: command words are lower case: HELP is unknown (403)", &[], b"HELP\n", &[403]),
    case("protocol rules: a line without a command word (=5) is unknown (403)", &[], b"=5 energy\n", &[403]),
    case("protocol rules: unknown words: unknown key (404)", &[], b"set colour=red\n", &[404]),
    case("protocol rules: unknown words: unknown get key (404)", &[], b"get nonsense\n", &[404]),
    case("protocol rules: an extra positional argument is refused (404)", &[], b"hello there\n", &[404]),
    case("protocol rules: stop with an argument is refused (404), nothing stopped", &[], b"stop now\n", &[404]),
    case("protocol rules: more than 12 arguments are refused (404)", &[],
        b"set a=1 b=2 c=3 d=4 e=5 f=6 g=7 h=8 i=9 j=10 k=11 l=12 m=13\n", &[404]),
    case("protocol rules: move takes sol= or angles, not both (404)", &["enable"], b"move sol=0 arm=40\n", &[404]),
    case("protocol rules: peak fits take no threshold (404)", &["pt x=1 y=1"], b"fit kind=peak threshold=1\n", &[404]),
    case("protocol rules: zone off takes no from/to (404)", &[], b"zone name=arm i=1 off from=3\n", &[404]),
    case("protocol rules: missing argument: set with nothing to set (405)", &[], b"set\n", &[405]),
    case("protocol rules: missing argument: move with no target (405)", &["enable"], b"move\n", &[405]),
    case("protocol rules: missing argument: plan without step (405)", &[], b"plan kind=track from=50 to=60\n", &[405]),
    case("protocol rules: missing argument: key= with an empty value (405)", &[], b"set energy=\n", &[405]),
    case("protocol rules: missing argument: pt without y (405)", &[], b"pt x=1\n", &[405]),
    case("protocol rules: missing argument: zone without i (405)", &[], b"zone name=arm from=1 to=2\n", &[405]),
    case("protocol rules: NaN gets a clear error (406)", &[], b"set energy=nan\n", &[406]),
    case("protocol rules: inf gets a clear error (406)", &[], b"set energy=inf\n", &[406]),
    case("protocol rules: -Infinity gets a clear error (406)", &[], b"set tilt=-Infinity\n", &[406]),
    case("protocol rules: out-of-range numbers: 1e39 overflows f32 (406)", &[], b"set energy=1e39\n", &[406]),
    case("protocol rules: text where a number goes (406)", &[], b"set tilt=abc\n", &[406]),
    case("protocol rules: hex is not a decimal number (406)", &[], b"set energy=0x10\n", &[406]),
    case("protocol rules: NaN as a move target (406), nothing moves", &["enable"], b"move arm=nan\n", &[406]),
    case("protocol rules: an index beyond i32 (406)", &[], b"pt x=1 y=2 n=2147483648\n", &[406]),
    case("protocol rules: a fractional index (406)", &[], b"zone name=arm i=1.5 from=1 to=2\n", &[406]),
    case("protocol rules: dwell beyond an hour (406)", &[], b"plan kind=sweep from=20 to=30 step=5 dwell=5000\n", &[406]),
    case("protocol rules: unknown words: approach=sideways (407)", &[], b"axis name=arm approach=sideways\n", &[407]),
    case("protocol rules: beam=1 is not h,k (169)", &[], b"set beam=1\n", &[169]),
    case("protocol rules: unknown words: axis name=gun (407)", &[], b"axis name=gun steps_per_deg=100\n", &[407]),
    case("protocol rules: unknown words: fit kind=foo (407)", &[], b"fit kind=foo\n", &[407]),
    case("protocol rules: unknown words: plan kind=bar (407)", &[], b"plan kind=bar from=1 to=2 step=1\n", &[407]),
    case("protocol rules: unknown words: wrap=maybe (407)", &[], b"axis name=azimuth wrap=maybe\n", &[407]),
    case("protocol rules: the same key twice (407)", &[], b"set energy=100 energy=200\n", &[407]),
    case("axis rules: zone index beyond the 4 slots (407)", &[], b"zone name=arm i=4 from=1 to=2\n", &[407]),
    case("axis rules: only the elevation axis can be fitted or removed (407)", &[], b"axis name=tilt fitted=0\n", &[407]),
    case("protocol rules: motion only when enabled (408)", &[], b"move arm=40\n", &[408]),
    case("protocol rules: motion only when enabled: disable forbids it again (408)", &["enable", "disable"], b"move tilt=10\n", &[408]),
    unsafe_case("protocol rules: enable refuses while the interlock reports unsafe (409)", &[], b"enable\n", &[409]),
    case("protocol rules: motion only when the interlock reports safe (409)", &["enable", "!open"], b"move arm=40\n", &[409]),
    case("protocol rules: interlock open, move by solution refused (409)", &["enable", "aim", "!open"], b"move sol=0\n", &[409]),
    case("protocol rules: a request while a stream runs is busy (410); the stream goes on", &["!stream help"], b"get\n", &[410]),
    case("protocol rules: busy even for a valid move (410), nothing moves", &["enable", "!stream dump"], b"move arm=40\n", &[410]),
    case("protocol rules: stop works in every state: mid-stream, 411 ends the stream, then ok", &["!stream help"], b"stop\n", &[411, OK]),
    case("protocol rules: stop mid-stream keeps the stream request's checksum setting", &["!stream dump*27FA"], b"stop\n", &[411, OK]),
    case("geometry rules: move sol=N needs a stored solution (412)", &["enable"], b"move sol=9\n", &[412]),
    case("geometry rules: a negative solution index (412)", &["enable", "aim"], b"move sol=-1\n", &[412]),
    case("geometry rules: solutions are forgotten when settings change (412)", &["enable", "aim", "set energy=120"], b"move sol=0\n", &[412]),
    case("fit rules: the fixed-size point buffer: 65th point refused (413)", &FILL_POINTS, b"pt x=1 y=1\n", &[413]),
    // ---- 1xx: values out of range ---------------------------------------------------
    case("protocol rules: out-of-range numbers: energy 0 (102)", &[], b"set energy=0\n", &[102]),
    case("protocol rules: out-of-range numbers: energy -5 (102)", &[], b"set energy=-5\n", &[102]),
    case("protocol rules: out-of-range numbers: energy 4e5 > 300 keV (103)", &[], b"set energy=4e5\n", &[103]),
    case("beam rules: energy below 1 eV without corrections (102)", &[], b"set energy=0.5\n", &[102]),
    case("beam rules: kinetic energy below 1 eV after corrections (104)", &[], b"set energy=3 sample=4.5\n", &[104]),
    case("beam rules: negative cathode work function (102)", &[], b"set cathode=-1\n", &[102]),
    case("beam rules: inner potential above 100 eV (103)", &[], b"set v0=150\n", &[103]),
    case("geometry rules: tilt 95 deg beyond +-89.9 (103)", &[], b"set tilt=95\n", &[103]),
    case("geometry rules: azimuth beyond +-360 deg (103)", &[], b"set azimuth=400\n", &[103]),
    case("geometry rules: detector acceptance 0 (102)", &[], b"set acceptance=0\n", &[102]),
    case("lattice rules: face 0,0,0 names no plane (110)", &[], b"set face=0,0,0\n", &[110]),
    case("lattice rules: beam indices beyond the supported range (111)", &[], b"set beam=100,0\n", &[111]),
    case("lattice rules: bad hex indices 1,1,1,1 on ru: i != -(h+k) (112)", &[], b"set crystal=ru face=1,1,1,1\n", &[112]),
    case("lattice rules: four-index face on a cubic crystal (113)", &[], b"set face=1,1,-2,0\n", &[113]),
    case("lattice rules: unknown crystal id (115)", &[], b"set crystal=unobtainium\n", &[115]),
    case("lattice rules: face 1.5,0,0 is not integer indices (116)", &[], b"set face=1.5,0,0\n", &[116]),
    case("lattice rules: two indices are not a face (116)", &[], b"set face=1,0\n", &[116]),
    case("axis rules: plan step 0 (102)", &[], b"plan kind=sweep from=20 to=30 step=0\n", &[102]),
    case("fit rules: a peak fit needs points (250)", &[], b"fit kind=peak\n", &[250]),
    case("table rules: no table work function for this face (132)", &["set crystal=kcl"], b"set sample=table\n", &[132]),
    case("aim rules: a branch is +1, -1 or nearest (407)", &[], b"set branch=left\n", &[407]),
    case("aim rules: ... also as an aim argument (407)", &[], b"aim branch=2\n", &[407]),
    case("aim rules: a branch needs in-plane aiming (131)", &[], b"set azimuth=30 branch=+1\n", &[131]),
    case("aim rules: ... in either order (131)", &["set azimuth=30"], b"set branch=-1\n", &[131]),
    case("aim rules: ... and in plans (131)", &["set azimuth=30"], b"plan kind=track from=50 to=60 step=5 branch=+1\n", &[131]),
    case("aim rules: every refusal, then the first: specular at tilt 3 in the gun zone (303)", &["set tilt=3"], b"aim beam=0,0\n", &[303]),
    // ---- 2xx: physics ---------------------------------------------------------------
    case("surface rules: aim at an evanescent beam (201)", &["set energy=5"], b"aim beam=3,0\n", &[201]),
    // ---- 3xx: axes ------------------------------------------------------------------
    case("axis rules: the arm never enters the gun's shadow: move into the zone (303)", &["enable"], b"move arm=5\n", &[303]),
    case("axis rules: ... nor crosses it: 40 -> -40 (304)", &["enable", "move arm=40"], b"move arm=-40\n", &[304]),
    case("axis rules: soft limits: arm 170 > 165 (302)", &["enable"], b"move arm=170\n", &[302]),
    case("axis rules: soft limits: arm -170 < -165 (301)", &["enable", "move arm=-40"], b"move arm=-170\n", &[301]),
    case("axis rules: soft limits: tilt 85 > 80 (302)", &["enable"], b"move tilt=85\n", &[302]),
    case("axis rules: a move is all or nothing: a good arm target with a bad tilt moves nothing (302)",
        &["enable"], b"move arm=40 tilt=85\n", &[302]),
    case("axis rules: a one-circle arm has no elevation axis (307)", &["enable"], b"move elevation=10\n", &[307]),
    case("axis rules: configuring the unfitted elevation axis (307)", &[], b"axis name=elevation min_deg=-10\n", &[307]),
    case("axis rules: with a zone set over the resting position, a move within it is refused (303)",
        &["enable", "move arm=40", "disable", "zone name=arm i=1 from=30 to=50", "enable"], b"move arm=45\n", &[303]),
    case("axis rules: ... and leaving it through the farther edge too (304)",
        &["enable", "move arm=42", "disable", "zone name=arm i=1 from=30 to=50", "enable"], b"move arm=20\n", &[304]),
    case("protocol rules: after reset no axis moves until its position is declared (320)",
        &["reset", "enable"], b"move tilt=10\n", &[320]),
    case("protocol rules: a calibration change forgets that axis's position (320)",
        &["axis name=arm home_offset_deg=1", "enable"], b"move arm=40\n", &[320]),
    case("protocol rules: axis configuration only while motion is disabled (321)",
        &["enable"], b"axis name=arm backlash_deg=0.1\n", &[321]),
    case("protocol rules: zones only while motion is disabled (321)",
        &["enable"], b"zone name=arm i=1 off\n", &[321]),
    case("protocol rules: the detector acceptance only while motion is disabled (321)",
        &["enable"], b"set acceptance=2\n", &[321]),
    case("protocol rules: positions are declared only while motion is disabled (321)",
        &["enable"], b"home name=arm\n", &[321]),
    case("axis rules: bad axis config: steps per degree 0 (305)", &[], b"axis name=arm steps_per_deg=0\n", &[305]),
    case("axis rules: bad axis config: min above max (305)", &[], b"axis name=arm min_deg=10 max_deg=5\n", &[305]),
    case("axis rules: bad axis config: backlash beyond 10 deg (305)", &[], b"axis name=tilt backlash_deg=20\n", &[305]),
    case("axis rules: bad axis config: zone with from > to (305)", &[], b"zone name=arm i=1 from=30 to=20\n", &[305]),
    case("axis rules: bad axis config: negative speed (305)", &[], b"axis name=arm max_speed_deg_s=-1\n", &[305]),
];

/// Final lines of a reply (not `- ` items), checksum suffix removed.
fn finals(reply: &str) -> Vec<&str> {
    reply
        .lines()
        .filter(|l| !l.starts_with("- "))
        .map(|l| match l.len().checked_sub(5) {
            Some(i) if l.as_bytes()[i] == b'*' => &l[..i],
            _ => l,
        })
        .collect()
}

fn code_of(line: &str) -> u16 {
    if line == "ok" || line.starts_with("ok ") {
        return OK;
    }
    line.strip_prefix("err ")
        .and_then(|r| r.get(..3))
        .and_then(|c| c.parse().ok())
        .unwrap_or_else(|| panic!("not a final line: {line:?}"))
}

/// What a technician can see of the state: get, dump, pos, and status without its
/// request and error counters.
fn observe(c: &mut Con) -> String {
    let status: String = request(c, "status")
        .split(' ')
        .filter(|f| !f.starts_with("requests=") && !f.starts_with("errors="))
        .collect::<Vec<_>>()
        .join(" ");
    format!(
        "{}{}{}{status}",
        request(c, "get"),
        request(c, "dump"),
        request(c, "pos")
    )
}

/// Runs the setup of a case on a fresh console. Returns the console, whether a stream
/// was left running and the state observed before that stream started.
fn prepare(k: &Case) -> (Con, String) {
    let mut c = Con::new(
        SimAxes::default(),
        SimDetector::default(),
        SimInterlock { safe: k.safe },
    )
    .expect("factory settings");
    let mut seen = None;
    for step in k.setup {
        match *step {
            "!open" => c.interlock.safe = false,
            "!safe" => c.interlock.safe = true,
            s if s.starts_with("!stream ") => {
                seen = Some(observe(&mut c));
                let r = feed(&mut c, format!("{}\n", &s[8..]).as_bytes());
                assert!(
                    r.is_empty() && c.streaming(),
                    "{}: setup {s} did not stream",
                    k.rule
                );
            }
            s => {
                let r = request(&mut c, s);
                let f = finals(&r);
                assert_eq!(f.len(), 1, "{}: setup {s}: {r}", k.rule);
                assert_eq!(code_of(f[0]), OK, "{}: setup {s}: {r}", k.rule);
            }
        }
    }
    let seen = seen.unwrap_or_else(|| observe(&mut c));
    (c, seen)
}

/// Runs one case; returns every line exchanged (for the determinism check).
fn run(k: &Case) -> String {
    let (mut c, before) = prepare(k);
    let steps_before = c.axes.steps;
    let moves_before = c.axes.moves;
    let streamed_setup = k.setup.iter().any(|s| s.starts_with("!stream"));
    // A refused request may stream its reasons before its `err` line (`aim` lists its
    // refusals): its own stream is part of the reply.
    let answer = |c: &mut Con| {
        let mut r = feed(c, k.input);
        if !streamed_setup {
            r.push_str(&drain(c));
        }
        r
    };
    let reply = answer(&mut c);
    let got: Vec<u16> = finals(&reply).iter().map(|l| code_of(l)).collect();
    assert_eq!(
        got,
        k.want,
        "{}\n  input {:?}\n  reply {reply}",
        k.rule,
        String::from_utf8_lossy(k.input)
    );
    // Any stream the setup left running goes on to its own final line.
    let rest = drain(&mut c);
    if !rest.is_empty() {
        let f = finals(&rest);
        assert_eq!(f.len(), 1, "{}: stream end {rest}", k.rule);
        assert_eq!(code_of(f[0]), OK, "{}: stream end {rest}", k.rule);
    }
    assert_eq!(c.axes.steps, steps_before, "{}: axes moved", k.rule);
    assert_eq!(c.axes.moves, moves_before, "{}: a move was started", k.rule);
    let after = observe(&mut c);
    assert_eq!(
        before,
        after,
        "{}: state changed by {:?}",
        k.rule,
        String::from_utf8_lossy(k.input)
    );
    // The same input again: the same answer (nothing changed). Streams do not apply:
    // the setup's stream has ended.
    let again = if streamed_setup {
        String::new()
    } else {
        let again = answer(&mut c);
        assert_eq!(
            again, reply,
            "{}: a second identical request answered differently",
            k.rule
        );
        again
    };
    format!("{reply}{rest}{after}{again}")
}

#[test]
fn catalogue_has_at_least_40_cases_with_distinct_inputs() {
    assert!(CATALOGUE.len() >= 40, "{}", CATALOGUE.len());
    let mut codes: Vec<u16> = CATALOGUE
        .iter()
        .flat_map(|k| k.want.iter().copied())
        .collect();
    codes.sort_unstable();
    codes.dedup();
    for c in [
        102, 103, 104, 110, 112, 113, 115, 116, 201, 301, 302, 303, 304, 305, 400, 401, 402, 403,
        404, 405, 406, 407, 408, 409, 410, 411, 412, 413,
    ] {
        assert!(codes.contains(&c), "no case for {c}");
    }
}

#[test]
fn every_malformed_input_gets_its_code_and_changes_nothing() {
    let mut failures = Vec::new();
    for k in CATALOGUE {
        if let Err(e) = std::panic::catch_unwind(|| run(k)) {
            let msg = e
                .downcast_ref::<String>()
                .cloned()
                .or_else(|| e.downcast_ref::<&str>().map(|s| s.to_string()))
                .unwrap_or_default();
            failures.push(msg);
        }
    }
    assert!(
        failures.is_empty(),
        "{} of {} cases failed:\n{}",
        failures.len(),
        CATALOGUE.len(),
        failures.join("\n")
    );
}

#[test]
fn the_same_input_gives_the_same_output() {
    // protocol rules (a firmware is a deterministic machine): every case, run twice on fresh
    // consoles, writes byte-identical transcripts.
    for k in CATALOGUE {
        let a = std::panic::catch_unwind(|| run(k));
        let b = std::panic::catch_unwind(|| run(k));
        if let (Ok(a), Ok(b)) = (a, b) {
            assert_eq!(a, b, "{}", k.rule);
        }
    }
}

#[test]
fn minus_zero_is_accepted_as_zero() {
    // protocol rules (numbers): -0 is a number, read as 0, and never shown as "-0".
    let mut c = sim_console();
    for (line, field) in [
        ("set tilt=-0", "tilt=0"),
        ("set offset=-0", "offset=0"),
        ("set azimuth=-0.0", "azimuth=0"),
        ("set v0=-0", "v0=0"),
    ] {
        let r = request(&mut c, line);
        assert_eq!(r, "ok\n", "{line}");
        let key = field.split('=').next().unwrap();
        let g = request(&mut c, &format!("get {key}"));
        assert_eq!(g, format!("ok {field}\n"), "{line}");
    }
    let d = request(&mut c, "dump");
    assert!(
        d.contains(" tilt=0 ") && d.contains(" offset=0 ") && !d.contains("=-0"),
        "{d}"
    );
    // And as an angle: the arm to -0 degrees is the gun zone like 0.
    request(&mut c, "enable");
    assert_eq!(code_of(finals(&request(&mut c, "move arm=-0"))[0]), 303);
}

#[test]
fn boundary_controls_are_accepted() {
    // The positive side of the boundaries above, so that the catalogue does not pass
    // by refusing everything.
    let mut c = sim_console();
    // protocol rules: exactly 120 bytes is accepted ("get" and 117 blanks).
    let line = format!("get{}", " ".repeat(117));
    assert_eq!(line.len(), 120);
    let r = request(&mut c, &line);
    assert!(
        r.starts_with("- energy=") && r.ends_with("ok count=20\n"),
        "{r}"
    );
    // protocol rules: CR, CRLF and LF all end a line; tabs separate.
    assert_eq!(
        feed(&mut c, b"get\tenergy\r\nget energy\rget energy\n")
            .lines()
            .count(),
        3
    );
    // protocol rules: a correct checksum (lower-case hex too) is accepted and answered with one.
    let r = request(&mut c, "get energy*0c3b");
    assert!(r.starts_with("ok energy=100*"), "{r}");
    // Energy and tilt at the edges of their ranges.
    assert_eq!(request(&mut c, "set energy=300000"), "ok\n");
    assert_eq!(request(&mut c, "set energy=1"), "ok\n");
    assert_eq!(request(&mut c, "set tilt=89.9"), "ok\n");
    assert_eq!(request(&mut c, "reset"), "ok enabled=0\n");
    // 64 points fit.
    for _ in 0..64 {
        assert!(request(&mut c, "pt x=1 y=2").starts_with("ok points="));
    }
    // A move just outside the gun zone and inside the limits; after `reset` the arm's
    // position is unknown until it is declared (docs/PROTOCOL.md, `home`).
    assert!(request(&mut c, "home name=arm").starts_with("ok name=arm"));
    request(&mut c, "enable");
    assert!(request(&mut c, "move arm=12.01").starts_with("ok"));
    assert!(request(&mut c, "move arm=165").starts_with("ok"));
}

/// Replays the items of `dump` (without their `- `) on a fresh console; returns the
/// problems found: lines over the request limit, lines not answered `ok`, and a
/// different dump afterwards.
fn replay_problems(dump: &str) -> Vec<String> {
    let mut problems = Vec::new();
    let mut fresh = sim_console();
    for item in dump.lines().filter_map(|l| l.strip_prefix("- ")) {
        if item.len() > 120 {
            problems.push(format!(
                "{} bytes, over the 120-byte request limit: {item}",
                item.len()
            ));
        }
        let r = request(&mut fresh, item);
        if !r.starts_with("ok") {
            problems.push(format!("{item} -> {}", r.trim_end()));
        }
    }
    let again = request(&mut fresh, "dump");
    if again != dump {
        problems.push(format!("replayed dump differs:\n{again}"));
    }
    problems
}

#[test]
fn dump_replays_as_commands_on_a_fresh_console() {
    // protocol rules: "a config dump that replays as commands"; docs/PROTOCOL.md `dump`:
    // each item without its leading `- ` is a request, and sending them in order
    // restores the settings. A controller restoring its configuration after power-up
    // (axes at home, step count 0) is the fresh console here.
    let setups: [(&str, &[&str]); 6] = [
        ("factory settings", &[]),
        (
            // Realistic values over three of the configuration lines of an axis.
            "azimuth home, backlash, speed and acceleration",
            &["axis name=azimuth home_offset_deg=-123.45679 backlash_deg=0.05 max_speed_deg_s=20.5 accel_deg_s2=40.25"],
        ),
        (
            // A zone over the home position, set while the axis was elsewhere.
            "azimuth zone over home",
            &[
                "enable",
                "move azimuth=90",
                "disable",
                "zone name=azimuth i=0 from=-5 to=5",
            ],
        ),
        (
            // Extreme but valid (Rig::validate accepts it): the longest numbers the
            // formatter writes (steps per degree just above 1, the least a step no
            // coarser than the 1° acceptance allows); every dump line still fits one
            // request line.
            "extreme elevation axis",
            &[
                "axis name=elevation fitted=1",
                "axis name=elevation steps_per_deg=1.00000012 home_offset_deg=-0.000100002115",
                "axis name=elevation min_deg=-0.000100002115 max_deg=0.000100002115",
                "axis name=elevation backlash_deg=0.000100002115 max_speed_deg_s=0.000100002115",
                "axis name=elevation accel_deg_s2=0.000100002115",
            ],
        ),
        (
            // The longest settings lines `set` accepts (every number nine digits below
            // 1e-3, the longest crystal id, face and beam indices at their limits): each
            // dump line still fits one request line (once 129 bytes, refused with 400).
            "longest settings",
            &[
                "set acceptance=1.23456789",
                "set crystal=graphite face=-12,-12,-11 tilt=-0.000123456789 azimuth=-0.000123456789 beam=-99,-99",
                "set energy=100.123457 cathode=0.000123456789 sample=0.000123456789",
                "set offset=-0.000123456789 v0=0.000123456789",
            ],
        ),
        (
            // Hexagonal face, two-circle mode, fitted elevation, extra arm zone.
            "ruthenium two-circle",
            &[
                "set crystal=ru face=0,0,0,1 azimuth=30 beam=1,0 v0=12.5 energy=150",
                "axis name=elevation fitted=1 min_deg=-45 max_deg=45",
                "zone name=arm i=1 from=150 to=165",
            ],
        ),
    ];
    let mut failures = Vec::new();
    for (name, lines) in setups {
        let mut c = sim_console();
        for l in lines {
            let r = request(&mut c, l);
            assert!(r.starts_with("ok"), "{name}: setup {l}: {r}");
        }
        let dump = request(&mut c, "dump");
        for p in replay_problems(&dump) {
            failures.push(format!("{name}: {p}"));
        }
    }
    assert!(
        failures.is_empty(),
        "dump does not replay:\n{}",
        failures.join("\n")
    );
}

// ---------------------------------------------------------------------------------
// Error detail: the err line names what is wrong, not only its kind
// ---------------------------------------------------------------------------------

/// One failing request: its code, and what the err line says after `err <code> `: the
/// subject it starts with (the key, `key="value"` or the quoted word) and a word of the
/// reason.
struct Detail {
    /// Which error kind the case is (the token or number error of the wire layer).
    kind: &'static str,
    /// Setup lines (each answered `ok`).
    setup: &'static [&'static str],
    input: &'static str,
    code: u16,
    /// The start of the text after `err <code> `.
    subject: &'static str,
    /// Part of the reason.
    reason: &'static str,
}

const fn detail(
    kind: &'static str,
    input: &'static str,
    code: u16,
    subject: &'static str,
    reason: &'static str,
) -> Detail {
    Detail {
        kind,
        setup: &[],
        input,
        code,
        subject,
        reason,
    }
}

/// protocol rules (docs/PROTOCOL.md, Replies): an error about one argument names the key,
/// the value as sent or the word at fault, the reason, and what is accepted; the code is
/// the same as before (the error code table).
const DETAILS: &[Detail] = &[
    // TokenError::NoCommand: an empty body with a correct checksum (CRC of nothing).
    detail(
        "token: no command",
        "*FFFF",
        403,
        "no command word",
        "send help",
    ),
    detail(
        "token: bad command word",
        "HELP",
        403,
        "\"HELP\" - ",
        "lower case",
    ),
    detail(
        "token: bad command word",
        "=5 energy",
        403,
        "\"=5\" - ",
        "not a command word",
    ),
    detail(
        "unknown command word",
        "jump",
        403,
        "\"jump\" - ",
        "unknown command",
    ),
    detail(
        "token: bad key",
        "set Tilt=3",
        407,
        "\"Tilt=3\" - ",
        "bad key",
    ),
    detail(
        "token: bad key",
        "set tilt=1 =2",
        407,
        "\"=2\" - ",
        "bad key",
    ),
    detail(
        "token: empty value",
        "set tilt=",
        405,
        "tilt - ",
        "empty value",
    ),
    detail(
        "token: empty value",
        "plan kind=sweep from=",
        405,
        "from - ",
        "empty value",
    ),
    detail(
        "token: duplicate key",
        "set tilt=1 tilt=2",
        407,
        "tilt=\"2\" - ",
        "key given twice",
    ),
    detail(
        "token: too many",
        "set a=1 b=2 c=3 d=4 e=5 f=6 g=7 h=8 i=9 j=10 k=11 l=12 m=13 n=14",
        404,
        "\"m=13\" - ",
        "at most 12",
    ),
    detail(
        "token: unused key",
        "set colour=red",
        404,
        "colour=\"red\" - ",
        "unknown key; accepted: energy ",
    ),
    detail(
        "token: unused key",
        "axis name=arm spd=15",
        404,
        "spd=\"15\" - ",
        "accepted: name steps_per_deg ",
    ),
    detail(
        "token: unused key",
        "plan kind=sweep from=1 to=2 step=1 speed=2",
        404,
        "speed=\"2\" - ",
        "usage: plan kind=",
    ),
    detail(
        "token: unused key, read only",
        "set kinetic=90",
        404,
        "kinetic=\"90\" - ",
        "read-only",
    ),
    detail(
        "token: unused word",
        "hello there",
        404,
        "\"there\" - ",
        "takes no arguments",
    ),
    detail(
        "token: unused word",
        "get tilt energy",
        404,
        "\"energy\" - ",
        "extra argument; usage: get",
    ),
    detail(
        "unknown setting",
        "get colour",
        404,
        "\"colour\" - ",
        "unknown setting; accepted: energy kinetic",
    ),
    detail(
        "missing key",
        "plan kind=track from=50 to=60",
        405,
        "step - ",
        "required argument missing",
    ),
    detail("missing key", "pt x=1", 405, "y - ", "usage: pt x="),
    detail(
        "number: syntax",
        "set tilt=abc",
        406,
        "tilt=\"abc\" - ",
        "not a decimal number",
    ),
    detail(
        "number: syntax (hex)",
        "set energy=0x10",
        406,
        "energy=\"0x10\" - ",
        "not a decimal number",
    ),
    detail(
        "number: syntax (integer)",
        "pt x=1 y=2 n=2.5",
        406,
        "n=\"2.5\" - ",
        "not an integer",
    ),
    detail(
        "number: syntax (integer)",
        "zone name=arm i=one from=1 to=2",
        406,
        "i=\"one\" - ",
        "not an integer",
    ),
    detail(
        "beam: not a fraction (beam index)",
        "set beam=1.5,0",
        169,
        "beam=\"1.5,0\" - ",
        "integers or fractions such as 1/2,0",
    ),
    detail(
        "number: not finite",
        "set energy=nan",
        406,
        "energy=\"nan\" - ",
        "NaN and infinity",
    ),
    detail(
        "number: not finite",
        "move arm=-Infinity",
        406,
        "arm=\"-Infinity\" - ",
        "NaN and infinity",
    ),
    detail(
        "number: out of f32 range",
        "set energy=1e39",
        406,
        "energy=\"1e39\" - ",
        "f32 range",
    ),
    detail(
        "number: out of i32 range",
        "pt x=1 y=2 n=2147483648",
        406,
        "n=\"2147483648\" - ",
        "integer beyond",
    ),
    detail(
        "number: out of i32 range",
        "move sol=-2147483649",
        406,
        "sol=\"-2147483649\" - ",
        "integer beyond",
    ),
    detail(
        "number: dwell range",
        "plan kind=sweep from=20 to=30 step=5 dwell=5000",
        406,
        "dwell=\"5000\" - ",
        "0 to 3600",
    ),
    detail("value range", "set tilt=95", 103, "tilt=\"95\" - ", "89.9"),
    detail(
        "value range",
        "set v0=150",
        103,
        "v0=\"150\" - ",
        "inner potential above 100 eV",
    ),
    detail(
        "word value",
        "axis name=gun",
        407,
        "name=\"gun\" - ",
        "accepted: arm elevation tilt azimuth",
    ),
    detail(
        "word value",
        "axis name=arm approach=sideways",
        407,
        "approach=\"sideways\" - ",
        "accepted: from-below from-above",
    ),
    detail(
        "word value",
        "axis name=azimuth wrap=maybe",
        407,
        "wrap=\"maybe\" - ",
        "accepted: 1 on yes 0 off no",
    ),
    detail(
        "word value",
        "fit kind=foo",
        407,
        "kind=\"foo\" - ",
        "usage: fit kind=peak|",
    ),
    detail(
        "beam: one index",
        "set beam=1",
        169,
        "beam=\"1\" - ",
        "two numbers h,k",
    ),
    detail(
        "beam: fractional without the overlayer",
        "set beam=1/2,0",
        170,
        "beam=\"1/2,0\" - ",
        "not a beam of the overlayer",
    ),
    detail(
        "word value",
        "set domains=both",
        407,
        "domains=\"both\" - ",
        "accepted: one all",
    ),
    detail(
        "table value",
        "set crystal=unobtainium",
        115,
        "crystal=\"unobtainium\" - ",
        "unknown crystal id",
    ),
];

/// The final line of a reply, checksum suffix removed; panics unless there is exactly one.
fn final_line(reply: &str) -> String {
    let f = finals(reply);
    assert_eq!(f.len(), 1, "{reply}");
    f[0].to_string()
}

fn fresh() -> Con {
    sim_console()
}

#[test]
fn every_token_and_number_error_gives_its_code_and_names_what_is_wrong() {
    let mut failures = Vec::new();
    for d in DETAILS {
        let mut c = fresh();
        for s in d.setup {
            assert_eq!(code_of(&final_line(&request(&mut c, s))), OK, "{s}");
        }
        let before = observe(&mut c);
        let reply = request(&mut c, d.input);
        let line = final_line(&reply);
        let want_start = format!("err {} {}", d.code, d.subject);
        if !line.starts_with(&want_start) || !line.contains(d.reason) {
            failures.push(format!(
                "{}: {:?}\n  got  {line}\n  want {want_start}… with {:?}",
                d.kind, d.input, d.reason
            ));
        }
        assert!(reply.len() <= matterwave_core::console::controller::MAX_REPLY + 1);
        assert!(reply.trim_end().bytes().all(|b| (0x20..0x7F).contains(&b)));
        assert_eq!(before, observe(&mut c), "{}: state changed", d.input);
    }
    assert!(failures.is_empty(), "{}", failures.join("\n"));
    // Every kind of the wire layer's token and number errors has a case.
    for kind in [
        "token: no command",
        "token: bad command word",
        "token: bad key",
        "token: empty value",
        "token: duplicate key",
        "token: too many",
        "token: unused key",
        "token: unused word",
        "number: syntax",
        "number: not finite",
        "number: out of f32 range",
        "number: out of i32 range",
    ] {
        assert!(DETAILS.iter().any(|d| d.kind == kind), "no case for {kind}");
    }
}

/// The words after `; accepted: ` in an err line.
fn accepted(line: &str) -> Vec<String> {
    line.split_once("; accepted: ")
        .unwrap_or_else(|| panic!("no accepted list: {line}"))
        .1
        .split(' ')
        .map(str::to_string)
        .collect()
}

#[test]
fn unknown_keys_list_the_keys_the_command_reads() {
    use matterwave_core::console::controller::SETTING_KEYS;
    let mut c = fresh();
    // set: the settable keys of the one setting table, in its order...
    let listed = accepted(&final_line(&request(&mut c, "set colour=red")));
    let settable: Vec<String> = SETTING_KEYS
        .iter()
        .filter(|k| k.settable)
        .map(|k| k.name.to_string())
        .collect();
    assert_eq!(listed, settable);
    // ...each of which set reads: a bad value is refused for its value, never as unknown.
    for k in &listed {
        let line = final_line(&request(&mut c, &format!("set {k}=zz")));
        assert_ne!(code_of(&line), 404, "{line}");
        assert!(line.contains(&format!("{k}=\"zz\"")), "{line}");
    }
    // get: every setting key, each of which get answers.
    let listed = accepted(&final_line(&request(&mut c, "get colour")));
    assert_eq!(listed.len(), SETTING_KEYS.len());
    for k in &listed {
        let r = request(&mut c, &format!("get {k}"));
        assert!(r.starts_with(&format!("ok {k}=")), "{r}");
    }
    // axis: the rig file's keys, each of which axis reads (a bad value is refused for
    // its value; name= twice is a duplicate).
    let listed = accepted(&final_line(&request(&mut c, "axis name=arm colour=red")));
    assert!(listed.len() >= 10, "{listed:?}");
    for k in &listed {
        let line = final_line(&request(&mut c, &format!("axis name=arm {k}=zz")));
        assert_ne!(code_of(&line), 404, "{line}");
        assert!(line.contains(&format!("{k}=\"zz\"")), "{line}");
    }
    // help lists the same keys for set and axis.
    let help = request(&mut c, "help");
    let axis_help = help
        .lines()
        .find(|l| l.starts_with("- cmd=axis "))
        .unwrap_or_default();
    assert!(
        axis_help.ends_with(&format!(": {}", listed.join(" "))),
        "{axis_help}"
    );
}

/// Printable garbage that is one token: every printable ASCII byte but space and `*`
/// (which the wire would take for a checksum), cycled, `n` bytes.
fn printable_garbage(n: usize) -> String {
    (b'!'..=b'~')
        .filter(|&b| b != b'*')
        .map(char::from)
        .cycle()
        .take(n)
        .collect()
}

#[test]
fn garbage_values_are_cut_and_escaped() {
    use matterwave_core::console::reply::Echo;
    let mut c = fresh();
    // The longest value a request line can carry: 109 bytes after `set energy=`.
    let value = format!("\"{}", printable_garbage(108));
    let line = format!("set energy={value}");
    assert_eq!(line.len(), 120);
    let got = final_line(&request(&mut c, &line));
    // 24 characters quoted back, `"` as `?`, then `...` for the rest.
    let shown: String = value
        .chars()
        .take(24)
        .map(|ch| if ch == '"' { '?' } else { ch })
        .collect();
    assert_eq!(
        got,
        format!("err 406 energy=\"{shown}\"... - not a decimal number")
    );
    assert_eq!(got.matches('"').count(), 2, "{got}");
    // A key as long as a line allows is cut the same way.
    let key = format!("k{}", "x".repeat(100));
    let got = final_line(&request(&mut c, &format!("set {key}=1")));
    assert!(
        got.starts_with("err 404 kxxxxxxxxxxxxxxx...=\"1\" - unknown key"),
        "{got}"
    );
    // The same with a checksum: the reply carries one, and no stray `*`.
    let body = "set tilt=\"abc\"";
    let sum = matterwave_core::console::crc::suffix_for(body.as_bytes());
    let r = request(
        &mut c,
        &format!("{body}{}", std::str::from_utf8(&sum).unwrap()),
    );
    assert!(
        r.starts_with("err 406 tilt=\"?abc?\" - not a decimal number*"),
        "{r}"
    );
    assert_eq!(r.matches('*').count(), 1, "{r}");

    // A 200-byte garbage value: no request line holds one (120 bytes at most), so the
    // line is refused whole and nothing of it is quoted back...
    let mut g200 = String::from("set energy=");
    g200.push_str(&printable_garbage(200));
    let r = feed(&mut c, format!("{g200}\n").as_bytes());
    assert_eq!(
        r,
        "err 400 line too long; at most 120 bytes before the line end\n"
    );
    let mut bytes = g200.clone().into_bytes();
    bytes[20] = 0xC3; // é, as UTF-8
    bytes[21] = 0xA9;
    bytes.push(b'\n');
    let r = feed(&mut c, &bytes);
    assert!(r.starts_with("err 401 ") && !r.contains("energy"), "{r}");
    // ...and the echo the err writer quotes through cuts and escapes one all the same:
    // blanks, controls, non-ASCII characters (one `?` each), `"` and `*`.
    let nasty: String = "é\t\u{0}\u{1b}☃\"*x".chars().cycle().take(200).collect();
    assert!(nasty.len() >= 200);
    let e = Echo::<24>::new(&nasty);
    assert!(e.is_cut());
    assert_eq!(e.as_str(), "???????x???????x???????x");
    let e = Echo::<24>::new(&printable_garbage(200));
    assert!(e.is_cut());
    assert_eq!(e.as_str(), &printable_garbage(24).replace('"', "?"));
}
