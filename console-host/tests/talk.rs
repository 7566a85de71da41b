//! End-to-end test of `mwctl talk --link sim`: requests on stdin, replies on stdout
//! (`console-host/src/talk.rs`), against the same bytes fed to the core's console
//! in-process.

use std::io::Write;
use std::process::{Command, Stdio};

use matterwave_core::console::sim::{SimAxes, SimDetector, SimInterlock};
use matterwave_core::console::Console;

/// Runs `mwctl talk` with `args`, `input` on its stdin: status, stdout, stderr.
fn talk(args: &[&str], input: &[u8]) -> (i32, Vec<u8>, String) {
    let mut child = Command::new(env!("CARGO_BIN_EXE_mwctl"))
        .arg("talk")
        .args(args)
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("mwctl runs");
    // mwctl may exit before it reads (an unknown link): a broken pipe is no failure.
    let _ = child.stdin.take().unwrap().write_all(input);
    let out = child.wait_with_output().expect("mwctl ends");
    (
        out.status.code().unwrap_or(-1),
        out.stdout,
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

#[test]
fn piped_requests_get_the_consoles_replies_in_order() {
    // A session with a stream (aim), an error, a bad byte, a checksum and a last line
    // without its line end (taken as ended at end of input).
    let input: &[u8] = b"hello\nget energy\nset energy=150\nget energy\nbogus\n\
        set tilt=20\naim\nget \xff\nget tilt*0000\nstatus";
    let (code, out, err) = talk(&["--link", "sim"], input);
    // Three of the ten requests are refused (bogus, the bad byte, the checksum): the
    // exit status says so, in one line.
    assert_eq!(code, 2, "{err}");
    assert_eq!(
        err.trim_end(),
        "mwctl: error: talk: 3 of 10 requests answered err"
    );
    // The reference: the core's console on the simulated board, fed the same bytes.
    let mut c = Console::new(
        SimAxes::default(),
        SimDetector::default(),
        SimInterlock { safe: true },
    )
    .unwrap();
    let mut want = Vec::new();
    let mut bytes = input.to_vec();
    bytes.push(b'\n');
    c.feed_all(&bytes, &mut want).unwrap();
    let text = String::from_utf8(out.clone()).expect("ASCII replies");
    assert_eq!(text, String::from_utf8(want).unwrap());
    // No prompt and no cautions when piped: every line is a reply.
    let lines: Vec<&str> = text.lines().collect();
    assert!(
        lines
            .iter()
            .all(|l| l.starts_with("ok") || l.starts_with("err ") || l.starts_with("- ")),
        "{text}"
    );
    // One final line per request (10 requests), and the values asked for.
    let finals: Vec<&str> = lines
        .iter()
        .copied()
        .filter(|l| !l.starts_with("- "))
        .collect();
    assert_eq!(finals.len(), 10, "{text}");
    assert!(finals[0].starts_with("ok name=matterwave "), "{text}");
    assert_eq!(finals[1], "ok energy=100");
    assert_eq!(finals[3], "ok energy=150");
    assert!(finals[4].starts_with("err 403 "), "{text}");
    assert!(finals[6].starts_with("ok count="), "{text}");
    assert!(finals[7].starts_with("err 401 "), "{text}");
    assert!(
        finals[8].starts_with("err 402 ") && finals[8].contains('*'),
        "{text}"
    );
    assert!(finals[9].starts_with("ok enabled=0 "), "{text}");
    assert!(finals[9].contains(" requests=10 errors=3"), "{text}");
}

#[test]
fn talk_over_a_pty_answers_as_the_simulator() {
    let input = b"hello\nset crystal=cu face=111 energy=120\nbeams\nquit\nstatus\n";
    let (code_sim, sim, _) = talk(&["--link", "sim"], input);
    let (code_pty, pty, err) = talk(&["--link", "pty"], input);
    assert_eq!((code_sim, code_pty), (0, 0), "{err}");
    assert_eq!(sim, pty);
    let sim = String::from_utf8(sim).expect("ASCII replies");
    assert!(
        sim.lines().last().unwrap_or("").starts_with("ok count="),
        "{sim}"
    );
}

#[test]
fn a_rig_loads_the_same_over_a_pty_as_into_the_simulator() {
    let rig = concat!(env!("CARGO_MANIFEST_DIR"), "/../docs/rigs/bench-b.toml");
    let (code_sim, sim, _) = talk(&["--link", "sim", "--rig", rig], b"dump\n");
    let (code_pty, pty, err) = talk(&["--link", "pty", "--rig", rig], b"dump\n");
    assert_eq!((code_sim, code_pty), (0, 0), "{err}");
    assert_eq!(sim, pty);
    let text = String::from_utf8(sim).expect("ASCII");
    assert!(
        text.contains("axis name=arm steps_per_deg=1422.2222"),
        "{text}"
    );
}

#[test]
fn a_stop_piped_while_a_stream_runs_over_a_pty_stops_it() {
    let mut child = Command::new(env!("CARGO_BIN_EXE_mwctl"))
        .args(["talk", "--link", "pty"])
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .spawn()
        .expect("mwctl runs");
    let mut stdin = child.stdin.take().expect("stdin");
    // 60,001 points; the stop follows while they stream.
    stdin
        .write_all(b"plan kind=sweep from=-150 to=150 step=0.005\n")
        .expect("written");
    stdin.flush().expect("flushed");
    std::thread::sleep(std::time::Duration::from_millis(300));
    stdin.write_all(b"stop\nstatus\n").expect("written");
    drop(stdin);
    let out = child.wait_with_output().expect("ends");
    let text = String::from_utf8(out.stdout).expect("ASCII");
    let finals: Vec<&str> = text.lines().filter(|l| !l.starts_with("- ")).collect();
    assert_eq!(finals.len(), 3, "{finals:?}");
    assert!(finals[0].starts_with("err 411"), "{finals:?}");
    assert_eq!(finals[1], "ok stopped=stream");
    assert!(finals[2].starts_with("ok enabled=0"), "{finals:?}");
    let points = text.lines().filter(|l| l.starts_with("- i=")).count();
    assert!(points < 60_001, "the stream ran to its end: {points}");
    assert_eq!(out.status.code(), Some(2), "the aborted plan counts as err");
}

#[test]
fn unknown_link_is_one_line() {
    let (code, out, err) = talk(&["--link", "serial"], b"hello\n");
    assert_eq!(code, 2);
    assert!(out.is_empty());
    assert_eq!(
        err,
        "mwctl: error: --link serial: unknown link; accepted: sim, pty, serial:PATH[@BAUD] (e.g. serial:/dev/ttyUSB0@115200), qemu[:IMAGE]\n"
    );
}
