//! The rig inside the controller: `mwctl rig show --console` and `mwctl talk --rig FILE`
//! send the same requests (`matterwave_console::rig::console_requests`); fed to a
//! factory console they are all accepted, the console's `dump` then prints the same axis
//! lines and replays onto another console to the same configuration, and `aim` there
//! gives the step counts of `mwctl calc aim --rig FILE`.
//!
//! The reference for each check is outside the code under test: the console's own
//! `dump` (whose replay property is checked by tests/tests/console_catalogue.rs and the
//! motion-safety suite), and the independent path of `mwctl calc aim`, which reads the
//! rig file straight into the core's `Rig` without any console request.

mod common;

use std::io::Write;
use std::path::Path;
use std::process::{Command, Stdio};

use common::{json, mwctl};
use matterwave_console::rig::{console_requests, load};
use matterwave_console::talk::{exchange, load_rig, sim_console, SimConsole};

const BENCH_B: &str = concat!(env!("CARGO_MANIFEST_DIR"), "/../docs/rigs/bench-b.toml");

/// A one-circle rig with a wrapping azimuth, written for this test (invented numbers).
const ONE_CIRCLE: &str = r#"
name = "rig-console test stand"
[detector]
acceptance_deg = 1.5
[arm]
steps_per_deg = 2000
home_offset_deg = 1.25
min_deg = -150
max_deg = 160
zones = [[-14, 13], [100, 105.5]]
backlash_deg = 0.2
approach = "from-above"
[tilt]
steps_per_deg = 600
min_deg = -60
max_deg = 70
[azimuth]
steps_per_deg = 250
home_offset_deg = -30
wrap = true
zones = [[40, 50]]
"#;

fn rig_files() -> Vec<String> {
    // Written once for the whole test binary: tests run in parallel, and one reading
    // the file while another rewrites it saw it half written.
    static ONE: std::sync::OnceLock<String> = std::sync::OnceLock::new();
    let one = ONE.get_or_init(|| {
        let dir = std::env::temp_dir().join(format!("mwctl-rig-console-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let p = dir.join("rig-console-one-circle.toml");
        std::fs::write(&p, ONE_CIRCLE).unwrap();
        p.display().to_string()
    });
    vec![BENCH_B.to_string(), one.clone()]
}

/// The items of a `dump`, without their `- `.
fn dump(c: &mut SimConsole) -> Vec<String> {
    let reply = exchange(c, "dump");
    assert_eq!(reply.last().map(String::as_str), Some("ok"), "{reply:?}");
    reply[..reply.len() - 1]
        .iter()
        .map(|l| l.strip_prefix("- ").expect("a dump item").to_string())
        .collect()
}

#[test]
fn the_requests_load_the_rig_and_dump_replays_it() {
    for file in rig_files() {
        let rf = load(Path::new(&file)).unwrap();
        let lines = console_requests(&rf);
        // `rig show --console` prints exactly these lines.
        let (code, out, err) = mwctl(&["rig", "show", "--rig", &file, "--console"]);
        assert_eq!(code, 0, "{err}");
        assert_eq!(out.lines().collect::<Vec<_>>(), lines, "{file}");
        // Each is accepted by a factory console.
        let mut c = sim_console().unwrap();
        for l in &lines {
            let r = exchange(&mut c, l);
            assert!(r.last().unwrap().starts_with("ok"), "{file}: {l}: {r:?}");
        }
        // The console's dump prints the same rig lines, then its settings with the rig's
        // acceptance.
        let d = dump(&mut c);
        let rig_part = lines.len() - 1;
        assert_eq!(d[..rig_part], lines[..rig_part], "{file}");
        let acceptance = lines.last().unwrap().strip_prefix("set ").unwrap();
        assert_eq!(acceptance, format!("acceptance={}", rf.rig.acceptance_deg));
        assert!(
            d[rig_part..].iter().any(|l| l.contains(acceptance)),
            "{file}: {d:?}"
        );
        // The dump replays onto another factory console to the same configuration.
        let mut other = sim_console().unwrap();
        for l in &d {
            let r = exchange(&mut other, l);
            assert!(r.last().unwrap().starts_with("ok"), "{file}: {l}: {r:?}");
        }
        assert_eq!(dump(&mut other), d, "{file}");
        // And the library's loader sends the same lines.
        let mut third = sim_console().unwrap();
        assert_eq!(load_rig(&mut third, &rf).unwrap(), lines.len());
        assert_eq!(dump(&mut third), d);
    }
}

/// `aim` on a console loaded with the rig gives every solution with the arm, tilt and
/// azimuth angles and the arm step count of `mwctl calc aim --rig FILE` (the same core
/// code, reached without the console).
#[test]
fn aim_on_the_loaded_console_matches_calc_aim() {
    // Invented scenarios: Ag(100) at 95 eV, Pt(111) at 143 eV, W(110) at 212 eV.
    let cases = [
        ("ag", "100", "1,0", "95", "6"),
        ("pt", "111", "1,1", "143", "12"),
        ("w", "110", "-1,0", "212", "-8"),
    ];
    for file in rig_files() {
        let rf = load(Path::new(&file)).unwrap();
        let mut c = sim_console().unwrap();
        load_rig(&mut c, &rf).unwrap();
        let mut compared = 0;
        for (crystal, face, beam, energy, tilt) in cases {
            let set = format!(
                "set crystal={crystal} face={face} energy={energy} tilt={tilt} beam={beam}"
            );
            assert_eq!(exchange(&mut c, &set), ["ok"], "{set}");
            let reply = exchange(&mut c, "aim");
            let cli = mwctl(&[
                "calc",
                "aim",
                "--crystal",
                crystal,
                "--face",
                face,
                "--beam",
                beam,
                "--energy",
                energy,
                "--tilt",
                tilt,
                "--rig",
                &file,
                "--format",
                "json",
            ]);
            if !reply.last().unwrap().starts_with("ok") {
                // Refused on both paths.
                assert_eq!(cli.0, 2, "{file} {set}: {reply:?} vs {}", cli.1);
                continue;
            }
            assert_eq!(cli.0, 0, "{}", cli.2);
            let v: serde_json::Value = serde_json::from_str(&cli.1).unwrap();
            let sols = v["solutions"].as_array().unwrap();
            let items: Vec<&String> = reply.iter().filter(|l| l.starts_with("- sol=")).collect();
            assert_eq!(items.len(), sols.len(), "{file} {set}: {reply:?}");
            for (item, s) in items.iter().zip(sols) {
                let field = |k: &str| -> f64 {
                    item.split(' ')
                        .find_map(|w| w.strip_prefix(&format!("{k}=")))
                        .unwrap()
                        .parse()
                        .unwrap()
                };
                assert_eq!(field("arm_steps") as i64, s["arm_steps"].as_i64().unwrap());
                for (k, j) in [
                    ("arm", "arm_deg"),
                    ("tilt", "tilt_deg"),
                    ("azimuth", "azimuth_deg"),
                ] {
                    // The console streams angles with 4 decimals (docs/PROTOCOL.md,
                    // Numbers), the CLI the f32 shortest round trip: equal to the
                    // console's rounding.
                    let (c, h) = (field(k), s[j].as_f64().unwrap());
                    assert!(
                        (c - h).abs() <= 0.5e-4 + 1e-9,
                        "{file} {set}: {k}: {c} vs {h}"
                    );
                }
                compared += 1;
            }
        }
        assert!(compared >= 2, "{file}: too few solutions compared");
    }
}

/// `mwctl talk --rig FILE` loads the rig before the session: the session's dump shows it,
/// and stderr says how many requests were sent.
#[test]
fn talk_with_a_rig_runs_on_that_rig() {
    let rf = load(Path::new(BENCH_B)).unwrap();
    let lines = console_requests(&rf);
    let mut child = Command::new(env!("CARGO_BIN_EXE_mwctl"))
        .args(["talk", "--rig", BENCH_B])
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    child.stdin.take().unwrap().write_all(b"dump\n").unwrap();
    let out = child.wait_with_output().unwrap();
    assert_eq!(out.status.code(), Some(0));
    let text = String::from_utf8(out.stdout).unwrap();
    let items: Vec<&str> = text.lines().filter_map(|l| l.strip_prefix("- ")).collect();
    assert_eq!(items[..lines.len() - 1], lines[..lines.len() - 1]);
    let err = String::from_utf8(out.stderr).unwrap();
    assert!(
        err.contains(&format!(
            "loaded into the simulator with {} requests",
            lines.len()
        )),
        "{err}"
    );
    // A rig file that does not parse stops before the session, naming the file.
    let (code, _, err) = mwctl(&["talk", "--rig", "/nonexistent/rig.toml"]);
    assert_eq!(code, 2);
    assert!(
        err.starts_with("mwctl: error: rig file /nonexistent/rig.toml"),
        "{err}"
    );
    // rig check takes --rig like every other command; the positional is gone.
    assert_eq!(json(&["rig", "check", "--rig", BENCH_B])["check"], "ok");
    let (code, _, err) = mwctl(&["rig", "check", BENCH_B]);
    assert_eq!(code, 2, "{err}");
    // --console prints text: another format is refused.
    let (code, _, err) = mwctl(&["rig", "show", "--console", "--format", "json"]);
    assert_eq!(code, 2);
    assert!(err.contains("--format json"), "{err}");
}
