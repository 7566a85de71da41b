//! `mwctl scan` end to end: clean scans over the in-process simulator and the
//! pseudo-terminal, scans over a faulty line (dropped and missed lines, garbage), a
//! controller that restarts mid-scan, Ctrl-C and `--resume`, a torn last row. Every
//! file is read back with the scan module's own reader; every point must be in it
//! exactly once, at the angles and step counts of a clean reference scan.

mod common;

use matterwave_console::scan::csv::{Row, ScanFile};
use std::path::PathBuf;
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

/// The scan every test runs: the (1,0) beam of Cu(100) at the factory tilt of 20°,
/// tracked from 40 to 150 eV in 5 eV (23 points; 40, 45 and 50 eV lie in the arm's
/// forbidden zone, so three rows are `unreachable`).
const PLAN: [&str; 10] = [
    "--kind", "track", "--beam", "1,0", "--from", "40", "--to", "150", "--step", "5",
];
const POINTS: usize = 23;
/// Of which unreachable, the first.
const UNREACHABLE: usize = 3;

fn tmp(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("mwctl-scan-test-{}", std::process::id()));
    std::fs::create_dir_all(&d).unwrap();
    let p = d.join(format!("{name}.csv"));
    let _ = std::fs::remove_file(&p);
    p
}

fn mwctl() -> Command {
    Command::new(env!("CARGO_BIN_EXE_mwctl"))
}

/// Runs a scan of [`PLAN`] (plus `extra`) into `out`: exit code, stdout, stderr.
fn scan(link: &str, out: &PathBuf, extra: &[&str]) -> (i32, String, String) {
    let o = mwctl()
        .arg("scan")
        .args(PLAN)
        .args(["--link", link, "--out"])
        .arg(out)
        .args(extra)
        .output()
        .unwrap();
    (
        o.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&o.stdout).into_owned(),
        String::from_utf8_lossy(&o.stderr).into_owned(),
    )
}

/// The clean reference: the plan on the in-process simulator.
fn reference() -> Vec<Row> {
    let p = tmp(&format!("reference-{:?}", std::thread::current().id()));
    let (code, _, err) = scan("sim", &p, &[]);
    assert_eq!(code, 0, "{err}");
    let f = ScanFile::read(&p).unwrap();
    assert_eq!(f.rows.len(), POINTS);
    f.rows
}

/// Every point of the plan exactly once, in order, each at the reference's energies,
/// angles, step counts and status; the readings equal (`exact`) or within the
/// simulator's noise: σ = √(0.02² + (0.01·I)²) nA per reading (docs/SIMULATOR.md), so
/// two independent readings differ by less than 6·√2·σ except with probability ~1e-9.
fn same_points(got: &[Row], want: &[Row], exact: bool, what: &str) {
    assert_eq!(got.len(), want.len(), "{what}: rows");
    for (i, (g, w)) in got.iter().zip(want).enumerate() {
        assert_eq!(g.index as usize, i, "{what}: row {i} has index {}", g.index);
        assert_eq!(
            (g.nominal_ev, g.sample_ev, g.angles_deg, g.steps, &g.status),
            (w.nominal_ev, w.sample_ev, w.angles_deg, w.steps, &w.status),
            "{what}: point {i}"
        );
        match (g.current, w.current) {
            (Some(a), Some(b)) if !exact => {
                let sigma = (0.02f64.powi(2) + (0.01 * b).powi(2)).sqrt();
                assert!(
                    (a - b).abs() < 6.0 * 2f64.sqrt() * sigma,
                    "{what}: point {i} reads {a}, the reference {b}"
                );
            }
            (a, b) => assert_eq!(a, b, "{what}: point {i} reading"),
        }
    }
}

#[test]
fn a_clean_scan_is_the_same_on_every_link_and_follows_the_grating_equation() {
    let want = reference();
    // The three points in the gun's shadow (the arm's zone from -12 to 12 deg would be
    // crossed): no motion, no reading, the controller's reason kept.
    for r in &want[..UNREACHABLE] {
        assert_eq!(r.status, "unreachable", "{r:?}");
        assert!(r.note.contains("err=303"), "{r:?}");
        assert!(r.current.is_none() && r.angles_deg[0].is_none());
    }
    // In-plane diffraction by the surface mesh, k·sin(out) = k·sin(in) + 2π/a_s
    // (the 2D grating condition on the parallel momentum: e.g. Ertl & Küppers, "Low
    // Energy Electrons and Surface Chemistry", ch. on LEED — from memory): with tilt
    // 20° the arm stands at in + out. λ = 12.2643/√E Å (E in eV, non-relativistic: the
    // relativistic correction is 5e-5 relative at 150 eV), a_s = a/√2 for fcc(100),
    // a(Cu) = 3.615 Å (CRC Handbook, from memory). Tolerance 0.01°: the arm's step is
    // 0.0011°, the lattice constant's last digit moves the angle by < 0.003°.
    let a_s = 3.615 / 2f64.sqrt();
    for r in &want[UNREACHABLE..] {
        let e = r.sample_ev.unwrap();
        let lambda = 12.2643 / e.sqrt();
        let tilt = 20f64.to_radians();
        let out = (tilt.sin() + lambda / a_s).asin().to_degrees();
        let arm = r.angles_deg[0].unwrap();
        assert!(
            (arm - (20.0 + out)).abs() < 0.01,
            "{e} eV: arm {arm}, grating equation {}",
            20.0 + out
        );
        assert_eq!(r.angles_deg[2], Some(20.00025), "tilt axis at the setting");
        assert!(r.current.unwrap() > 0.0);
    }
    // Over the pseudo-terminal: the same rows, readings included (the same seeded
    // detector read the same number of times).
    let server = common::serve_pty(&[]);
    let p = tmp("clean-pty");
    let (code, out, err) = scan(&server.link, &p, &["--format", "json"]);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!(v["status"], "complete");
    assert_eq!(v["rows"], POINTS);
    assert_eq!(v["measured"], POINTS - UNREACHABLE);
    let f = ScanFile::read(&p).unwrap();
    same_points(&f.rows, &want, true, "clean pty");
    assert_eq!(f.last_end(), Some("complete"));
    assert!(!f.torn);
    // The header says what the file is.
    assert_eq!(f.get("kind"), Some("track"));
    assert_eq!(f.get("beam"), Some("1,0"));
    assert_eq!(f.get("plan_points"), Some("23"));
    assert!(f.get("device_get").unwrap().contains("crystal=cu"));
    assert!(f.all("device_dump").len() > 20);
    assert!(f.get("caution").unwrap().contains("not an interlock"));
    assert!(err.contains("Ctrl-C"), "{err}");
}

#[test]
fn a_faulty_line_loses_and_repeats_no_point() {
    let want = reference();
    for fault in [
        ["--fault", "drop:70", "--fault", "garbage:40"],
        ["--fault", "silent:45", "--fault", "flip:3000"],
    ] {
        let server = common::serve_pty(&fault);
        let p = tmp(&format!("faulty-{}", fault[1].replace(':', "")));
        let t = Instant::now();
        let (code, _, err) = scan(&server.link, &p, &[]);
        assert_eq!(code, 0, "{fault:?}: {err}");
        let f = ScanFile::read(&p).unwrap();
        same_points(&f.rows, &want, false, &format!("{fault:?}"));
        assert_eq!(f.last_end(), Some("complete"));
        eprintln!("{fault:?}: {:.1} s", t.elapsed().as_secs_f64());
    }
}

/// The indices of a file's rows.
fn indices(f: &ScanFile) -> Vec<u32> {
    f.rows.iter().map(|r| r.index).collect()
}

#[test]
fn a_controller_restart_stops_the_scan_without_a_row_it_did_not_measure() {
    let want = reference();
    // Restart after request 60: about the 8th point (7 requests a point after 15 of
    // preparation).
    let server = common::serve_pty(&["--fault", "reset:60"]);
    let p = tmp("reset");
    let (code, _, err) = scan(&server.link, &p, &[]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("the controller restarted"), "{err}");
    assert!(err.contains("--resume"), "{err}");
    let f = ScanFile::read(&p).unwrap();
    assert_eq!(f.last_end(), Some("device-reset"));
    let n = f.rows.len();
    assert!((2..POINTS).contains(&n), "{n} rows");
    // Every row kept is a point measured where the plan put it: none at the factory
    // position the restarted controller reports.
    same_points(&f.rows, &want[..n], true, "before the restart");
    // The restarted controller (factory settings again, which is what the scan ran
    // on) continues the file from the first point without a row.
    let (code, out, err) = mwctl()
        .arg("scan")
        .args(PLAN)
        .args(["--link", &server.link, "--resume"])
        .arg(&p)
        .args(["--format", "json"])
        .output()
        .map(|o| {
            (
                o.status.code().unwrap_or(-1),
                String::from_utf8_lossy(&o.stdout).into_owned(),
                String::from_utf8_lossy(&o.stderr).into_owned(),
            )
        })
        .unwrap();
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!(v["resumed_from"], n);
    let f = ScanFile::read(&p).unwrap();
    same_points(&f.rows, &want, false, "restart, then resume");
    assert_eq!(f.last_end(), Some("complete"));
    assert_eq!(indices(&f), (0..POINTS as u32).collect::<Vec<_>>());
}

/// The command after "to go on: " in a message.
fn resume_command(err: &str) -> Vec<String> {
    let cmd = err
        .split("to go on: ")
        .nth(1)
        .unwrap_or_else(|| panic!("no resume command in {err}"));
    cmd.split_whitespace().map(str::to_string).collect()
}

#[test]
fn ctrl_c_stops_keeps_the_file_valid_and_the_printed_command_resumes_it() {
    let want = reference();
    let server = common::serve_pty(&[]);
    let p = tmp("ctrl-c");
    // 0.1 s at each point: the scan takes about 2.3 s, Ctrl-C comes after 5 rows.
    let child = mwctl()
        .arg("scan")
        .args(PLAN)
        .args(["--link", &server.link, "--dwell", "0.1", "--out"])
        .arg(&p)
        .stderr(Stdio::piped())
        .stdout(Stdio::null())
        .spawn()
        .unwrap();
    let t = Instant::now();
    loop {
        let rows = std::fs::read_to_string(&p)
            .map(|t| {
                t.lines()
                    .filter(|l| l.as_bytes().first().is_some_and(u8::is_ascii_digit))
                    .count()
            })
            .unwrap_or(0);
        if rows >= 5 {
            break;
        }
        assert!(t.elapsed() < Duration::from_secs(20), "no rows coming");
        std::thread::sleep(Duration::from_millis(10));
    }
    // SIGINT, as the terminal sends on Ctrl-C.
    let pid = child.id() as i32;
    assert_eq!(unsafe { libc::kill(pid, libc::SIGINT) }, 0);
    let o = child.wait_with_output().unwrap();
    let err = String::from_utf8_lossy(&o.stderr).into_owned();
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(
        err.contains("interrupted (Ctrl-C): stop sent and answered"),
        "{err}"
    );
    let f = ScanFile::read(&p).unwrap();
    assert_eq!(f.last_end(), Some("interrupted"));
    assert!(
        f.events.last().unwrap().contains("motion_off=yes"),
        "stop answered: {:?}",
        f.events
    );
    let n = f.rows.len();
    assert!((5..POINTS).contains(&n), "{n} rows: stopped mid-scan");
    same_points(&f.rows, &want[..n], true, "before Ctrl-C");
    // The controller heard the stop: motion is latched off.
    let st = mwctl()
        .args(["run", "--link", &server.link])
        .arg(script("status"))
        .output()
        .unwrap();
    assert!(
        String::from_utf8_lossy(&st.stdout).contains("enabled=0"),
        "{}",
        String::from_utf8_lossy(&st.stdout)
    );
    // The command the message gives continues the file.
    let cmd = resume_command(&err);
    assert_eq!(cmd[0], "mwctl");
    let o = mwctl().args(&cmd[1..]).output().unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let f = ScanFile::read(&p).unwrap();
    same_points(&f.rows, &want, false, "Ctrl-C, then resume");
    assert_eq!(f.last_end(), Some("complete"));
    assert!(f.events.iter().any(|e| e.starts_with("resume ")));
}

fn script(name: &str) -> PathBuf {
    let p = tmp(name).with_extension("txt");
    std::fs::write(&p, "status\n").unwrap();
    p
}

#[test]
fn a_torn_last_row_is_dropped_and_measured_again() {
    let want = reference();
    let p = tmp("torn");
    let (code, _, err) = scan("sim", &p, &[]);
    assert_eq!(code, 0, "{err}");
    // As if the power went while row 10 was being written: rows 0–9 whole, half of
    // row 10, no end line.
    let text = std::fs::read_to_string(&p).unwrap();
    let row10 = text.find("\n10,").unwrap() + 1;
    let cut = &text[..row10 + 12];
    std::fs::write(&p, cut).unwrap();
    let f = ScanFile::read(&p).unwrap();
    assert!(f.torn);
    assert_eq!(f.rows.len(), 10);
    let (code, _, err) = {
        let o = mwctl()
            .arg("scan")
            .args(PLAN)
            .args(["--link", "sim", "--resume"])
            .arg(&p)
            .output()
            .unwrap();
        (
            o.status.code().unwrap_or(-1),
            String::from_utf8_lossy(&o.stdout).into_owned(),
            String::from_utf8_lossy(&o.stderr).into_owned(),
        )
    };
    assert_eq!(code, 0, "{err}");
    let f = ScanFile::read(&p).unwrap();
    assert!(!f.torn);
    same_points(&f.rows, &want, false, "torn, then resumed");
    assert!(
        f.events.iter().any(|e| e.contains("dropped_torn_row=1")),
        "{:?}",
        f.events
    );
}

#[test]
fn resume_refuses_another_plan_or_configuration_naming_what_differs() {
    let p = tmp("refuse");
    // A scan cut short: the first 10 rows of a complete one.
    let (code, _, err) = scan("sim", &p, &[]);
    assert_eq!(code, 0, "{err}");
    let text = std::fs::read_to_string(&p).unwrap();
    let cut = text.find("\n10,").unwrap() + 1;
    std::fs::write(&p, &text[..cut]).unwrap();
    let before = std::fs::read(&p).unwrap();
    let resume = |args: &[&str]| {
        let o = mwctl()
            .args(["scan", "--resume"])
            .arg(&p)
            .args(args)
            .output()
            .unwrap();
        assert_eq!(o.status.code(), Some(2));
        String::from_utf8_lossy(&o.stderr).into_owned()
    };
    let mut other = PLAN.to_vec();
    other[7] = "160";
    let e = resume(&other);
    assert!(e.contains("`to` differs") && e.contains("\"150\""), "{e}");
    let mut other = PLAN.to_vec();
    other[3] = "0,1";
    let e = resume(&other);
    assert!(e.contains("`beam` differs"), "{e}");
    let mut other = PLAN.to_vec();
    other.extend(["--set", "tilt=10"]);
    let e = resume(&other);
    assert!(e.contains("`set` differs") && e.contains("tilt=10"), "{e}");
    // The same options, on a controller configured otherwise than the file says.
    let server = common::serve_pty(&[]);
    let setup = tmp("setup").with_extension("txt");
    std::fs::write(&setup, "set sample=4.6\n").unwrap();
    assert!(mwctl()
        .args(["run", "--link", &server.link])
        .arg(&setup)
        .status()
        .unwrap()
        .success());
    let mut other = PLAN.to_vec();
    other.extend(["--link", &server.link]);
    let e = resume(&other);
    assert!(
        e.contains("configuration (dump) differs") && e.contains("sample=4.6"),
        "{e}"
    );
    // Refusals leave the file as it was.
    assert_eq!(std::fs::read(&p).unwrap(), before);
    // And a new scan onto an existing file needs --force.
    let (code, _, err) = scan("sim", &p, &[]);
    assert_eq!(code, 2);
    assert!(
        err.contains("the file exists") && err.contains("--resume"),
        "{err}"
    );
    assert_eq!(std::fs::read(&p).unwrap(), before);
    let (code, _, err) = scan("sim", &p, &["--force"]);
    assert_eq!(code, 0, "{err}");
}

#[test]
fn a_rig_with_new_calibration_needs_declared_homes_and_is_recorded() {
    let rig = concat!(env!("CARGO_MANIFEST_DIR"), "/../docs/rigs/bench-b.toml");
    let plan = [
        "--kind",
        "track",
        "--beam",
        "1,0",
        "--set",
        "crystal=ag",
        "--set",
        "tilt=6",
        "--from",
        "40",
        "--to",
        "120",
        "--step",
        "20",
        "--rig",
        rig,
    ];
    let p = tmp("rig");
    let o = mwctl()
        .arg("scan")
        .args(plan)
        .arg("--out")
        .arg(&p)
        .output()
        .unwrap();
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(
        err.contains("does not know where these axes stand") && err.contains("--declare-home"),
        "{err}"
    );
    assert!(!p.exists(), "no file for a scan that could not start");
    let o = mwctl()
        .arg("scan")
        .args(plan)
        .args(["--declare-home", "--out"])
        .arg(&p)
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let f = ScanFile::read(&p).unwrap();
    // The rig's requests, as `mwctl rig show --console` prints them, are in the header.
    let (code, console, _) = common::mwctl(&["rig", "show", "--rig", rig, "--console"]);
    assert_eq!(code, 0);
    assert_eq!(f.all("rig_line"), console.lines().collect::<Vec<_>>());
    assert_eq!(f.all("set"), ["crystal=ag", "tilt=6"]);
    assert!(f.get("device_get").unwrap().contains("crystal=ag"));
    assert_eq!(f.rows.len(), 5);
    assert_eq!(f.rows[0].status, "ok");
}

#[test]
fn a_lost_link_keeps_every_row_and_a_new_controller_continues_the_file() {
    let want = reference();
    let server = common::serve_pty(&[]);
    let p = tmp("link-lost");
    let child = mwctl()
        .arg("scan")
        .args(PLAN)
        .args(["--link", &server.link, "--dwell", "0.1", "--out"])
        .arg(&p)
        .stderr(Stdio::piped())
        .stdout(Stdio::null())
        .spawn()
        .unwrap();
    let t = Instant::now();
    while ScanFile::read(&p).map_or(0, |f| f.rows.len()) < 6 {
        assert!(t.elapsed() < Duration::from_secs(20), "no rows coming");
        std::thread::sleep(Duration::from_millis(10));
    }
    // The controller goes away (its process killed: the cable pulled).
    drop(server);
    let o = child.wait_with_output().unwrap();
    let err = String::from_utf8_lossy(&o.stderr).into_owned();
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(err.contains("link lost"), "{err}");
    let f = ScanFile::read(&p).unwrap();
    assert_eq!(f.last_end(), Some("link-lost"));
    let n = f.rows.len();
    assert!((6..POINTS).contains(&n), "{n} rows");
    same_points(&f.rows, &want[..n], true, "before the link went");
    // Another controller (factory settings, as the scan's options assume), another
    // port: the file goes on.
    let server = common::serve_pty(&[]);
    let o = mwctl()
        .arg("scan")
        .args(PLAN)
        .args(["--link", &server.link, "--dwell", "0.1", "--resume"])
        .arg(&p)
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let f = ScanFile::read(&p).unwrap();
    same_points(&f.rows, &want, false, "link lost, then resumed");
    assert_eq!(f.last_end(), Some("complete"));
}
