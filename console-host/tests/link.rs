//! The link layer end to end: every docs/PROTOCOL.md example over a pseudo-terminal with
//! real termios (checksums on), and the session's behaviour under injected faults —
//! bytes flipped, a line dropped, garbage inserted, a silent device, a device that
//! restarts — on the in-process simulator.
//!
//! Expectations are the protocol reference itself (its documented reply lines) and the
//! rules of docs/PROTOCOL.md; "a retry never repeats motion" is common practice, no
//! source.

use matterwave_console::link::session::{LinkError, Session};
use matterwave_console::link::wire::{PortWire, SimWire, Wire};
use std::io;
use std::time::Duration;

const DOC: &str = include_str!("../../docs/PROTOCOL.md");

/// The `session` blocks of the protocol reference: (request, documented reply lines).
fn doc_blocks() -> Vec<Vec<(String, Vec<String>)>> {
    let mut blocks = Vec::new();
    let mut cur: Option<Vec<(String, Vec<String>)>> = None;
    for line in DOC.lines() {
        let t = line.trim();
        if t == "```session" {
            cur = Some(Vec::new());
        } else if t.starts_with("```") {
            if let Some(b) = cur.take() {
                blocks.push(b);
            }
        } else if let Some(b) = cur.as_mut() {
            if let Some(r) = line.strip_prefix("> ") {
                b.push((r.to_string(), Vec::new()));
            } else if let Some(r) = line.strip_prefix("< ") {
                if let Some(last) = b.last_mut() {
                    last.1.push(r.to_string());
                }
            }
        }
    }
    blocks
}

/// A documented reply line without its checksum (the session checks and strips them).
fn body(line: &str) -> &str {
    match line.rsplit_once('*') {
        Some((b, c)) if c.len() == 4 && c.bytes().all(|x| x.is_ascii_hexdigit()) => b,
        _ => line,
    }
}

#[test]
fn every_protocol_example_runs_over_a_pty_with_checksums() {
    let mut requests = 0;
    for block in doc_blocks() {
        // Requests that carry their own checksum, or test malformed input, are about
        // the wire, not a session: the session adds its own checksum.
        if block
            .iter()
            .any(|(r, _)| r.contains('*') || r.is_empty() || !r.is_ascii() || r.len() > 120)
        {
            continue;
        }
        let mut s = Session::new(PortWire::pty(None).expect("a pseudo-terminal"));
        for (req, want) in &block {
            let reply = s.request(req).unwrap_or_else(|e| panic!("{req}: {e}"));
            let mut got: Vec<String> = reply.items.clone();
            got.push(reply.last.clone());
            let want: Vec<String> = want.iter().map(|l| body(l).to_string()).collect();
            assert_eq!(got, want, "{req}");
            requests += 1;
        }
    }
    assert!(requests >= 50, "only {requests} documented requests ran");
}

/// What the fault wire does to the device's output.
#[derive(Clone, Copy, Debug, PartialEq)]
enum Fault {
    /// Flip one bit of the `n`th reply byte.
    Flip(usize),
    /// Drop the `n`th reply line.
    DropLine(usize),
    /// Insert garbage before the `n`th reply line.
    Garbage(usize),
    /// Say nothing for the first `n` receives after the next request.
    Silent(usize),
}

/// A wire around the simulator that injects one fault into what the device sends.
struct FaultWire {
    inner: SimWire,
    fault: Option<Fault>,
    bytes: usize,
    lines: usize,
    held: Vec<u8>,
}

impl FaultWire {
    fn new(fault: Fault) -> Self {
        FaultWire {
            inner: SimWire::new().expect("simulator"),
            fault: Some(fault),
            bytes: 0,
            lines: 0,
            held: Vec::new(),
        }
    }
}

impl Wire for FaultWire {
    fn send(&mut self, bytes: &[u8]) -> io::Result<()> {
        self.inner.send(bytes)
    }
    fn recv(&mut self, buf: &mut [u8], timeout: Duration) -> io::Result<usize> {
        if let Some(Fault::Silent(n)) = self.fault {
            // The device's replies to the request are lost on the way.
            let mut sink = [0u8; 1024];
            while self.inner.recv(&mut sink, timeout)? > 0 {}
            self.fault = (n > 1).then(|| Fault::Silent(n - 1));
            std::thread::sleep(timeout.min(Duration::from_millis(5)));
            return Ok(0);
        }
        let mut tmp = [0u8; 1];
        let mut n = 0;
        while n < buf.len() {
            if self.inner.recv(&mut tmp, timeout)? == 0 {
                break;
            }
            let mut b = tmp[0];
            match self.fault {
                Some(Fault::Flip(k)) if k == self.bytes => {
                    b ^= 0x04;
                    self.fault = None;
                }
                Some(Fault::Garbage(k)) if k == self.lines && self.held.is_empty() => {
                    self.held.extend_from_slice(b"\x07#!garbage ~~~\r\n");
                    self.fault = None;
                }
                _ => {}
            }
            self.bytes += 1;
            let drop = matches!(self.fault, Some(Fault::DropLine(k)) if k == self.lines);
            if b == b'\n' {
                self.lines += 1;
                if drop {
                    self.fault = None;
                    continue;
                }
            }
            if drop {
                continue;
            }
            self.held.push(b);
            for x in self.held.drain(..) {
                if n < buf.len() {
                    buf[n] = x;
                    n += 1;
                }
            }
        }
        Ok(n)
    }
    fn describe(&self) -> String {
        "fault wire".into()
    }
}

fn session(fault: Fault) -> Session<FaultWire> {
    let mut s = Session::new(FaultWire::new(fault));
    s.timeout = Duration::from_millis(100);
    s
}

/// The replies a clean link gives to `requests`.
fn clean(requests: &[&str]) -> Vec<Vec<String>> {
    let mut s = Session::new(SimWire::new().expect("simulator"));
    requests
        .iter()
        .map(|r| {
            let rep = s.request(r).expect("clean link");
            let mut v = rep.items;
            v.push(rep.last);
            v
        })
        .collect()
}

const SCRIPT: [&str; 4] = [
    "set crystal=cu face=111 energy=120 tilt=10",
    "beams",
    "aim beam=1,0",
    "status",
];

#[test]
fn idempotent_requests_survive_every_fault_without_loss_or_duplication() {
    let want = clean(&SCRIPT);
    let faults = [
        Fault::Flip(3),
        Fault::Flip(60),
        Fault::Flip(400),
        Fault::DropLine(0),
        Fault::DropLine(2),
        Fault::DropLine(5),
        Fault::Garbage(0),
        Fault::Garbage(3),
        Fault::Silent(1),
        Fault::Silent(2),
    ];
    for f in faults {
        let mut s = session(f);
        for (req, w) in SCRIPT.iter().zip(&want) {
            let rep = s
                .request(req)
                .unwrap_or_else(|e| panic!("{f:?}: {req}: {e}"));
            let mut got = rep.items;
            got.push(rep.last);
            if *req == "status" {
                // The device counted the retried requests (and any garbage line): only
                // the request count may differ.
                let strip = |l: &str| {
                    l.split(' ')
                        .filter(|w| !w.starts_with("requests=") && !w.starts_with("errors="))
                        .collect::<Vec<_>>()
                        .join(" ")
                };
                assert_eq!(strip(&got[0]), strip(&w[0]), "{f:?}");
            } else {
                assert_eq!(&got, w, "{f:?}: {req}: lost or duplicated reply lines");
            }
        }
    }
}

#[test]
fn a_move_is_never_sent_twice() {
    for f in [Fault::Flip(2), Fault::DropLine(0), Fault::Silent(1)] {
        let mut s = session(f);
        // Setup without faults: the fault counts only the move's reply.
        s.wire().fault = None;
        s.request("enable").expect("enable");
        s.wire().fault = Some(f);
        s.wire().bytes = 0;
        s.wire().lines = 0;
        let before = s.wire().inner.console_mut().axes.moves;
        let r = s.request("move arm=40");
        let after = s.wire().inner.console_mut().axes.moves;
        assert!(
            after - before <= 1,
            "{f:?}: the move ran {} times",
            after - before
        );
        match r {
            Err(LinkError::Unsure { .. }) => {}
            other => panic!("{f:?}: a damaged reply to a move must be reported, got {other:?}"),
        }
        assert_eq!(s.stats().retries, 0, "{f:?}");
    }
}

#[test]
fn a_point_is_never_added_twice() {
    let mut s = session(Fault::DropLine(0));
    assert!(matches!(
        s.request("pt x=1 y=2"),
        Err(LinkError::Unsure { .. })
    ));
    s.wire().fault = None;
    let st = s.request("status").expect("status");
    assert!(st.last.contains(" points=1 "), "{}", st.last);
}

#[test]
fn a_silent_device_is_reported_after_the_tries() {
    let mut s = session(Fault::Silent(100));
    match s.request("hello") {
        Err(e @ LinkError::Silent { tries: 3, .. }) => {
            assert!(
                e.to_string().contains("check the cable, the baud rate"),
                "{e}"
            );
        }
        other => panic!("{other:?}"),
    }
}

#[test]
fn a_device_restart_mid_session_is_noticed() {
    let mut s = Session::new(SimWire::new().expect("simulator"));
    for r in SCRIPT {
        s.request(r).expect("clean");
    }
    s.wire().power_cycle().expect("restart");
    match s.check_alive() {
        Err(e @ LinkError::DeviceReset { .. }) => {
            assert!(e.to_string().contains("homed again"), "{e}");
        }
        other => panic!("{other:?}"),
    }
}

#[test]
fn a_stream_cut_by_a_restart_is_not_taken_for_a_whole_reply() {
    let mut s = Session::new(SimWire::new().expect("simulator"));
    s.timeout = Duration::from_millis(100);
    s.request("set crystal=cu face=111 energy=120")
        .expect("set");
    s.check_alive().expect("first status");
    // Start the stream by hand, take two lines, then power-cycle the device.
    s.wire().send(b"beams\n").expect("sent");
    let mut buf = [0u8; 64];
    let _ = s.wire().recv(&mut buf, Duration::from_millis(10));
    s.wire().power_cycle().expect("restart");
    // The next request gets its own, complete reply; the restart is noticed.
    let r = s.request("hello").expect("hello after restart");
    assert!(r.ok() && r.items.is_empty(), "{r:?}");
    assert!(matches!(
        s.check_alive(),
        Err(LinkError::DeviceReset { .. })
    ));
}
