//! The pictures `mwctl scan --plot` and `mwctl align --plot` write: valid files of the
//! expected size; the scan's is the very picture `mwctl plot scan` draws of the same file
//! (byte for byte, also after `--resume` and after Ctrl-C); the alignment's shows every centred peak at
//! the pixel its frame maps it to, in its beam's colour, in both panels, and its model
//! tracks follow the grating equation computed here in f64; a bad `--plot` is refused
//! before the controller hears anything.
//!
//! References outside the project: the PNG signature and IHDR layout (ISO/IEC 15948,
//! §5.2 and §11.2.2); the in-plane grating equation sin θ = sin α + b·λ/d for a beam of
//! row spacing d on branch b at tilt α, the arm at α + θ (surface diffraction, any
//! textbook; the convention of docs/GEOMETRY.md); λ = hc/√(E(E + 2mc²)) with CODATA 2018
//! hc = 12398.419843320 eV·Å and mc² = 510998.95 eV (from memory); Cu lattice constant
//! 3.615 Å (CRC Handbook, from memory; the table's value is checked in the core's tests).

mod common;

use matterwave_console::align::{self, AlignOptions};
use matterwave_console::link::device::SimConfig;
use matterwave_console::link::session::Session;
use matterwave_console::link::wire::SimWire;
use matterwave_console::plot::{self, align::track_colour, AlignPlot};
use matterwave_core::console::sim::HiddenOffsets;
use std::path::{Path, PathBuf};

fn tmp(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("mwctl-plot-written-{}", std::process::id()));
    std::fs::create_dir_all(&d).unwrap();
    d.join(name)
}

/// A decoded 8-bit RGB PNG.
struct Rgb {
    w: u32,
    h: u32,
    px: Vec<u8>,
}

impl Rgb {
    fn read(path: &Path) -> Rgb {
        let bytes = std::fs::read(path).unwrap();
        // The PNG signature (ISO/IEC 15948, §5.2).
        assert_eq!(&bytes[..8], b"\x89PNG\r\n\x1a\n", "{}", path.display());
        let mut dec = png::Decoder::new(std::io::Cursor::new(bytes))
            .read_info()
            .expect("a valid PNG header");
        let mut px = vec![0u8; dec.output_buffer_size().unwrap()];
        let info = dec.next_frame(&mut px).expect("valid PNG data");
        assert_eq!(info.color_type, png::ColorType::Rgb);
        Rgb {
            w: info.width,
            h: info.height,
            px,
        }
    }

    fn at(&self, (c, r): (i32, i32)) -> [u8; 3] {
        assert!(c >= 0 && r >= 0 && (c as u32) < self.w && (r as u32) < self.h);
        let i = (r as usize * self.w as usize + c as usize) * 3;
        [self.px[i], self.px[i + 1], self.px[i + 2]]
    }
}

fn scan_args<'a>(csv: &'a str, extra: &[&'a str]) -> Vec<&'a str> {
    let mut v = vec![
        "scan",
        "--kind",
        "sweep",
        "--from",
        "30",
        "--to",
        "46",
        "--step",
        "0.5",
        "--set",
        "crystal=ag",
        "--set",
        "face=100",
        "--set",
        "energy=95",
        "--set",
        "tilt=6",
        "--out",
        csv,
        "--force",
    ];
    v.extend(extra);
    v
}

/// `scan --plot FILE.png` draws, after the scan, exactly what `mwctl plot scan` draws of
/// the file it wrote; the JSON summary names the picture.
#[test]
fn scan_plot_is_plot_scan_of_the_file_byte_for_byte() {
    let csv = tmp("sweep.csv");
    let (pic, again) = (tmp("sweep-scan.png"), tmp("sweep-plot.png"));
    let c = csv.to_str().unwrap();
    let v = common::json(&scan_args(c, &["--plot", pic.to_str().unwrap()]));
    assert_eq!(v["status"], "complete", "{v}");
    assert_eq!(v["plot"].as_str(), Some(pic.to_str().unwrap()), "{v}");
    let (code, _, err) = common::mwctl(&["plot", "scan", c, "--out", again.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
    let (a, b) = (std::fs::read(&pic).unwrap(), std::fs::read(&again).unwrap());
    assert!(a == b, "the --plot picture differs from mwctl plot scan's");
    let img = Rgb::read(&pic);
    assert_eq!((img.w, img.h), (1000, 700));
    // Not blank: the measured points (the beam colour, 0 90 200) are drawn.
    assert!(img.px.chunks(3).filter(|p| p == &[0, 90, 200]).count() > 100);
    // Without --plot the summary says null.
    let v = common::json(&scan_args(c, &[]));
    assert!(v["plot"].is_null(), "{v}");
}

/// A scan resumed with `--plot` draws the whole file, as `mwctl plot scan` does.
#[test]
fn a_resumed_scan_draws_the_whole_file() {
    let csv = tmp("resumed.csv");
    let c = csv.to_str().unwrap();
    let (code, _, err) = common::mwctl(&scan_args(c, &[]));
    assert_eq!(code, 0, "{err}");
    // Cut it as an interruption would: the last 6 rows and the end line gone.
    let text = std::fs::read_to_string(&csv).unwrap();
    let lines: Vec<&str> = text.lines().collect();
    let end = lines.iter().rposition(|l| l.starts_with("# end")).unwrap();
    let mut cut: Vec<&str> = lines[..end].to_vec();
    cut.truncate(cut.len() - 6);
    std::fs::write(&csv, cut.join("\n") + "\n").unwrap();
    let (pic, again) = (tmp("resumed-scan.svg"), tmp("resumed-plot.svg"));
    let mut args = scan_args(c, &[]);
    let at = args.iter().position(|a| *a == "--out").unwrap();
    args.drain(at..at + 3);
    args.extend(["--resume", c, "--plot", pic.to_str().unwrap()]);
    let v = common::json(&args);
    assert_eq!(v["status"], "complete", "{v}");
    assert_eq!(v["resumed_from"].as_i64(), Some(27), "{v}");
    assert_eq!(v["rows"].as_i64(), Some(33), "{v}");
    let (code, _, err) = common::mwctl(&["plot", "scan", c, "--out", again.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
    let svg = std::fs::read_to_string(&pic).unwrap();
    assert_eq!(svg, std::fs::read_to_string(&again).unwrap());
    // SVG 1.1 (W3C) root element of the size asked for; all 33 points drawn as circles.
    assert!(
        svg.contains("<svg") && svg.contains("width=\"1000\"") && svg.contains("height=\"700\"")
    );
    assert!(
        svg.matches("<circle").count() >= 33,
        "{}",
        svg.matches("<circle").count()
    );
}

/// A scan stopped early by Ctrl-C still draws what it measured (the same bytes as
/// `mwctl plot scan` of the file), and the command it prints to go on keeps `--plot`.
#[test]
fn an_interrupted_scan_draws_what_it_measured() {
    use std::process::Stdio;
    use std::time::{Duration, Instant};
    let served = common::serve_pty(&[]);
    let csv = tmp("interrupted.csv");
    let (pic, again) = (tmp("interrupted-scan.svg"), tmp("interrupted-plot.svg"));
    let c = csv.to_str().unwrap();
    let mut args = scan_args(
        c,
        &["--dwell", "0.1", "--plot", pic.to_str().unwrap(), "--link"],
    );
    args.push(&served.link);
    let child = std::process::Command::new(env!("CARGO_BIN_EXE_mwctl"))
        .args(&args)
        .stderr(Stdio::piped())
        .stdout(Stdio::null())
        .spawn()
        .unwrap();
    let t = Instant::now();
    while std::fs::read_to_string(&csv)
        .map(|t| {
            t.lines()
                .filter(|l| l.as_bytes().first().is_some_and(u8::is_ascii_digit))
                .count()
        })
        .unwrap_or(0)
        < 5
    {
        assert!(t.elapsed() < Duration::from_secs(20), "no rows coming");
        std::thread::sleep(Duration::from_millis(10));
    }
    // SIGINT, as the terminal sends on Ctrl-C.
    assert_eq!(unsafe { libc::kill(child.id() as i32, libc::SIGINT) }, 0);
    let o = child.wait_with_output().unwrap();
    let err = String::from_utf8_lossy(&o.stderr).into_owned();
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(err.contains("interrupted (Ctrl-C)"), "{err}");
    assert!(err.contains(&format!("--plot {}", pic.display())), "{err}");
    let text = std::fs::read_to_string(&csv).unwrap();
    let rows = text
        .lines()
        .filter(|l| l.as_bytes().first().is_some_and(u8::is_ascii_digit))
        .count();
    assert!((5..33).contains(&rows), "{rows} rows");
    let (code, _, e) = common::mwctl(&["plot", "scan", c, "--out", again.to_str().unwrap()]);
    assert_eq!(code, 0, "{e}");
    let svg = std::fs::read_to_string(&pic).unwrap();
    assert_eq!(svg, std::fs::read_to_string(&again).unwrap());
    assert!(svg.matches("<circle").count() >= rows);
}

/// `requests=` of the controller's `status`, asked by `mwctl talk`.
fn requests(link: &str) -> (i64, String) {
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_mwctl"))
        .args(["talk", "--link", link])
        .stdin(std::process::Stdio::piped())
        .stdout(std::process::Stdio::piped())
        .spawn()
        .and_then(|mut c| {
            use std::io::Write;
            c.stdin.take().unwrap().write_all(b"get\npos\nstatus\n")?;
            c.wait_with_output()
        })
        .unwrap();
    let text = String::from_utf8(out.stdout).unwrap();
    let n = text
        .split_whitespace()
        .find_map(|w| w.strip_prefix("requests="))
        .unwrap_or_else(|| panic!("{text}"))
        .parse()
        .unwrap();
    // The settings and positions, without the status line (its counters move).
    let state = text.lines().take(2).collect::<Vec<_>>().join("\n");
    (n, state)
}

/// A `--plot` that is neither .png nor .svg is refused before the controller is asked
/// anything: exit 2, one line naming `--plot` and what is accepted, no CSV written, and
/// the served controller counts no request from either command.
#[test]
fn a_bad_plot_extension_refuses_before_any_motion() {
    let served = common::serve_pty(&[]);
    let (r1, s1) = requests(&served.link);
    let (r2, s2) = requests(&served.link);
    let per_talk = r2 - r1;
    let csv = tmp("never.csv");
    let _ = std::fs::remove_file(&csv);
    let c = csv.to_str().unwrap();
    let mut args = scan_args(c, &["--plot", "/tmp/picture.jpg", "--link"]);
    args.push(&served.link);
    let (code, out, err) = common::mwctl(&args);
    assert_eq!(code, 2, "{out}{err}");
    assert!(
        err.starts_with("mwctl: error: --plot /tmp/picture.jpg") && err.contains(".png or .svg"),
        "{err}"
    );
    assert!(!csv.exists(), "the CSV was written");
    let (code, _, err) = common::mwctl(&[
        "align",
        "--yes",
        "--link",
        &served.link,
        "--plot",
        "/tmp/picture",
    ]);
    assert_eq!(code, 2, "{err}");
    assert!(
        err.contains("--plot /tmp/picture:") && err.contains(".png or .svg"),
        "{err}"
    );
    let (r3, s3) = requests(&served.link);
    assert_eq!(r3 - r2, per_talk, "the refused commands sent requests");
    assert_eq!((s1.as_str(), s2.as_str()), (s3.as_str(), s3.as_str()));
}

/// λ (Å) at kinetic energy `e` (eV), relativistic (CODATA 2018, from memory).
fn lambda_a(e: f64) -> f64 {
    12_398.419_843_320 / (e * (e + 2.0 * 510_998.95)).sqrt()
}

/// The in-plane arm angle of a beam of row spacing `d_a` on `branch` at tilt `alpha`
/// (deg) and energy `e` (eV at the sample): α + asin(sin α + b·λ/d); `None` near
/// grazing exit (|sin θ| > 0.95), where 1/cos θ would amplify the rounding of the
/// lattice constant and of f32 beyond the test's tolerance.
fn arm_deg(alpha: f64, d_a: f64, branch: f64, e: f64) -> Option<f64> {
    let s = alpha.to_radians().sin() + branch * lambda_a(e) / d_a;
    (s.abs() <= 0.95).then(|| alpha + s.asin().to_degrees())
}

/// The alignment picture of a simulated Cu(100) at tilt 20° (beams (1,0) and (1,1))
/// with hidden offsets: PNG of the default size; every centred peak in its beam's
/// colour at the pixel the arm frame maps (nominal energy, arm angle) to, and its
/// residual at the residual frame's pixel; the model tracks before and after the fit
/// equal the grating equation with the offsets the picture says (0.01°).
#[test]
fn align_picture_shows_the_peaks_where_the_frames_put_them() {
    let hidden = HiddenOffsets {
        arm_zero_deg: 0.8,
        energy_offset_ev: -2.0,
        tilt_error_deg: 0.0,
    };
    let wire = SimWire::with_config(SimConfig { seed: 11, hidden }).unwrap();
    let mut s = Session::new(wire);
    let o = AlignOptions {
        beams: Some(vec![[1, 0], [1, 1]]),
        ..AlignOptions::default()
    };
    let a = align::measure(&mut s, &o).unwrap();
    assert!(a.measured.len() >= 6, "{a:?}");
    let p = AlignPlot::compute(&a).unwrap();
    assert_eq!(p.points.len(), a.measured.len());
    assert!(
        p.title.contains(&format!("{:+.4}", a.arm_zero_deg())),
        "{}",
        p.title
    );
    assert!(
        p.title.contains(&format!("{:+.3}", a.energy_offset_ev())),
        "{}",
        p.title
    );

    // Row spacings of Cu(100): square mesh |a1| = a/√2; (1,0): d = a/√2, (1,1): d = a/2.
    let a_cu = 3.615f64;
    let d_of = |rod: [i32; 2]| match rod {
        [1, 0] => a_cu / 2f64.sqrt(),
        [1, 1] => a_cu / 2.0,
        r => panic!("rod {r:?}"),
    };
    let contact = f64::from(a.contact_ev);
    let alpha = f64::from(a.tilt_deg);
    let (d0, de) = (f64::from(a.fit.params[0]), f64::from(a.fit.params[1]));
    let before_de = f64::from(a.offset_ev);
    for t in &p.tracks {
        let d = d_of(t.rod);
        let b = f64::from(t.branch);
        assert!(t.after.len() > 50 && t.before.len() > 50, "{}", t.label());
        let mut checked = 0;
        for &(e, v) in &t.after {
            if let Some(want) = arm_deg(alpha, d, b, e + contact + de) {
                let want = want + d0;
                assert!(
                    (v - want).abs() < 0.01,
                    "{} after at {e}: {v} vs {want}",
                    t.label()
                );
                checked += 1;
            }
        }
        for &(e, v) in &t.before {
            if let Some(want) = arm_deg(alpha, d, b, e + contact + before_de) {
                assert!(
                    (v - want).abs() < 0.01,
                    "{} before at {e}: {v} vs {want}",
                    t.label()
                );
                checked += 1;
            }
        }
        assert!(checked > 100, "{}: {checked} samples checked", t.label());
    }

    let path = tmp("align.png");
    let t = plot::plot_target(&path).unwrap();
    let drawn = plot::write_align(&p, &t).unwrap();
    let img = Rgb::read(&path);
    assert_eq!((img.w, img.h), (1000, 700));
    // The upper panel sits above the lower one, both within the picture.
    assert!(drawn.arm.px_y.1 < drawn.residual.px_y.0, "{drawn:?}");
    // A marker is a disc of radius 4 px (about 50 px of its colour); its 1σ bar is a
    // line 1 px wide and its track a line 2 px wide, which fill at most about 30 of the
    // 81 px within 4 px of the centre: a disc drawn there fills most of them (50 to 55
    // seen; a disc missing or drawn 10 px off leaves about 20).
    let count = |(x, y): (i32, i32), c: [u8; 3]| {
        (-4..=4)
            .flat_map(|dx| (-4..=4).map(move |dy| (x + dx, y + dy)))
            .filter(|&q| img.at(q) == c)
            .count()
    };
    let disc = |at: (i32, i32), c: [u8; 3]| count(at, c) >= 40;
    for (name, frame) in [("arm", drawn.arm), ("residual", drawn.residual)] {
        let px: Vec<(i32, i32)> = p
            .points
            .iter()
            .map(|q| {
                let v = if name == "arm" {
                    q.arm_deg
                } else {
                    q.residual_deg
                };
                frame.to_px(q.nominal_ev, v)
            })
            .collect();
        let mut checked = 0;
        for (i, q) in p.points.iter().enumerate() {
            let at = px[i];
            let covered = (i + 1..px.len()).any(|j| {
                let b = px[j];
                p.points[j].track != q.track && (b.0 - at.0).pow(2) + (b.1 - at.1).pow(2) < 100
            });
            if covered {
                continue;
            }
            let tc = track_colour(q.track);
            assert!(
                disc(at, [tc.0, tc.1, tc.2]),
                "{name}: peak {q:?} not drawn at {at:?}"
            );
            checked += 1;
        }
        assert!(
            2 * checked > p.points.len(),
            "{name}: only {checked} of {} checked",
            p.points.len()
        );
    }
}
