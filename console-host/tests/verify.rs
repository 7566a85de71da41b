//! `mwctl verify`: passes on an honest controller over the pseudo-terminal link (its
//! JSON report typed and complete), keeps a throttled wire busy, and fails on a
//! controller whose arithmetic is off by a little — with valid checksums, so only the
//! comparison with the host's core and the oracle can catch it.

use matterwave_console::link::session::Session;
use matterwave_console::link::wire::{SimWire, Wire};
use matterwave_console::verify::{self, Extent};
use matterwave_core::console::crc;
use std::io;
use std::process::Command;
use std::time::Duration;

#[test]
fn verify_passes_over_a_pty_and_writes_a_typed_report() {
    let report = std::env::temp_dir().join(format!("mwctl-verify-{}.json", std::process::id()));
    let o = Command::new(env!("CARGO_BIN_EXE_mwctl"))
        .args(["verify", "--quick", "--link", "pty", "--report"])
        .arg(&report)
        .output()
        .expect("runs");
    let text = String::from_utf8_lossy(&o.stdout);
    assert!(
        o.status.success(),
        "{text}{}",
        String::from_utf8_lossy(&o.stderr)
    );
    assert!(text.contains("verify: PASS"), "{text}");
    let v: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&report).expect("report")).expect("JSON");
    assert_eq!(v["pass"], serde_json::Value::Bool(true));
    assert_eq!(v["link"], "pty");
    assert_eq!(v["lines_differing_from_host"], 0);
    assert!(v["requests"].as_u64().expect("number") > 500, "{v}");
    assert!(v["requests_per_s"].as_f64().expect("number") > 0.0);
    for q in [
        "exit_deg",
        "exit_azimuth_deg",
        "emergence_rel",
        "aim_arm_deg",
    ] {
        let e = &v["oracle"][q];
        assert!(e["n"].as_u64().expect("n") > 100, "{q}: {e}");
        assert!(e["max"].as_f64().expect("max") <= e["tolerance"].as_f64().expect("tol"));
        assert_eq!(e["within"], serde_json::Value::Bool(true));
    }
}

#[test]
fn a_throttled_pty_is_throttled_and_its_busy_share_reported() {
    // How busy the wire is kept is a speed figure (measured, not asserted: README); what
    // is checked here is that the throttle holds — the run takes at least its bytes at
    // the line rate — and that the share is reported as a number.
    let report =
        std::env::temp_dir().join(format!("mwctl-verify-busy-{}.json", std::process::id()));
    let o = Command::new(env!("CARGO_BIN_EXE_mwctl"))
        .args([
            "verify", "--quick", "--link", "pty", "--baud", "921600", "--report",
        ])
        .arg(&report)
        .output()
        .expect("runs");
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let v: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&report).expect("report")).expect("JSON");
    let busy = v["wire_busy_fraction"]
        .as_f64()
        .expect("a number on a throttled link");
    assert!(busy > 0.0 && busy <= 1.0, "{busy}");
    let bytes = v["bytes_in"].as_f64().expect("n") + v["bytes_out"].as_f64().expect("n");
    let seconds = v["seconds"].as_f64().expect("s");
    assert!(
        seconds >= 0.95 * bytes / 92_160.0,
        "{bytes} bytes in {seconds} s: not throttled"
    );
}

/// A controller that is wrong by a little: every `exit=` it sends is 0.01° larger, and
/// its lines carry valid checksums for the altered text.
struct OffByALittle {
    inner: SimWire,
    line: Vec<u8>,
    out: Vec<u8>,
}

impl Wire for OffByALittle {
    fn send(&mut self, bytes: &[u8]) -> io::Result<()> {
        self.inner.send(bytes)
    }
    fn recv(&mut self, buf: &mut [u8], timeout: Duration) -> io::Result<usize> {
        while self.out.is_empty() {
            let mut b = [0u8; 256];
            let n = self.inner.recv(&mut b, timeout)?;
            if n == 0 {
                return Ok(0);
            }
            for &x in &b[..n] {
                if x != b'\n' {
                    self.line.push(x);
                    continue;
                }
                let text = String::from_utf8_lossy(&self.line).to_string();
                self.line.clear();
                let (body, crc_on) = crc::verify(&text).expect("the simulator's own line");
                let altered: Vec<String> = body
                    .split(' ')
                    .map(
                        |w| match w.strip_prefix("exit=").and_then(|v| v.parse::<f64>().ok()) {
                            Some(v) => format!("exit={}", v + 0.01),
                            None => w.to_string(),
                        },
                    )
                    .collect();
                let mut line = altered.join(" ").into_bytes();
                if crc_on {
                    let sfx = crc::suffix_for(&line);
                    line.extend_from_slice(&sfx);
                }
                line.push(b'\n');
                self.out.extend(line);
            }
        }
        let n = buf.len().min(self.out.len());
        buf[..n].copy_from_slice(&self.out[..n]);
        self.out.drain(..n);
        Ok(n)
    }
    fn describe(&self) -> String {
        "a controller off by 0.01°".into()
    }
}

#[test]
fn verify_fails_on_a_controller_off_by_a_hundredth_of_a_degree() {
    let mut s = Session::new(OffByALittle {
        inner: SimWire::new().expect("simulator"),
        line: Vec::new(),
        out: Vec::new(),
    });
    let mut out = Vec::new();
    let o = verify::run_session(&mut s, "off", None, Extent::Quick, &mut out).expect("runs");
    let text = String::from_utf8(out).expect("text");
    assert!(!o.pass, "{text}");
    assert!(text.contains("verify: FAIL"), "{text}");
    assert!(
        o.report["lines_differing_from_host"].as_u64().expect("n") > 100,
        "{text}"
    );
    assert_eq!(
        o.report["oracle"]["exit_deg"]["within"],
        serde_json::Value::Bool(false)
    );
    let max = o.report["oracle"]["exit_deg"]["max"].as_f64().expect("max");
    assert!(
        (max - 0.01).abs() < 1e-3,
        "the 0.01° offset is what verify sees: {max}"
    );
}
