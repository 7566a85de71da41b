//! `mwctl plot`: the pictures are valid PNG and SVG files of the size asked for, and
//! what they show is where it must be — a beam's spot at the pixel that the core's
//! screen coordinates map to, background where nothing is, the gun's shadow, the arm's
//! reach, the forbidden zones of the tracks, and text that really renders.

mod common;

use clap::Parser;
use matterwave_console::cli::{Cli, Command};
use matterwave_console::plot::{self, PlotCmd, Target};
use matterwave_core::goniometer;
use std::path::PathBuf;

/// A decoded 8-bit RGB picture.
struct Rgb {
    w: u32,
    h: u32,
    px: Vec<u8>,
}

impl Rgb {
    fn read(path: &std::path::Path) -> Rgb {
        let file = std::fs::File::open(path).unwrap();
        let mut dec = png::Decoder::new(std::io::BufReader::new(file))
            .read_info()
            .expect("a valid PNG header");
        let mut px = vec![0u8; dec.output_buffer_size().unwrap()];
        let info = dec.next_frame(&mut px).expect("valid PNG data");
        assert_eq!(info.color_type, png::ColorType::Rgb);
        assert_eq!(info.bit_depth, png::BitDepth::Eight);
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

    /// Whether any pixel within `d` of `(c, r)` satisfies `f`.
    fn near(&self, (c, r): (i32, i32), d: i32, f: impl Fn([u8; 3]) -> bool) -> bool {
        (-d..=d).any(|dc| (-d..=d).any(|dr| f(self.at((c + dc, r + dr)))))
    }
}

/// White or the faint grid: nothing drawn there.
fn background(p: [u8; 3]) -> bool {
    p == [255, 255, 255] || p == [225, 225, 225]
}

/// The beam colour of a seen spot (0, 90, 200), within a little antialiasing.
fn beam_blue(p: [u8; 3]) -> bool {
    p[2] > 150 && p[0] < 60 && p[1] < 130
}

fn tmp(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("mwctl-plot-test-{}", std::process::id()));
    std::fs::create_dir_all(&d).unwrap();
    d.join(name)
}

fn repo(rel: &str) -> String {
    format!("{}/../{rel}", env!("CARGO_MANIFEST_DIR"))
}

/// The plot command of an `mwctl plot …` command line.
fn plot_cmd(args: &[&str]) -> PlotCmd {
    let mut all = vec!["mwctl", "plot"];
    all.extend(args);
    match Cli::try_parse_from(all).unwrap().command {
        Command::Plot(p) => p,
        _ => unreachable!(),
    }
}

/// Ag(100) at 95 eV, tilt 6°, azimuth 15° (no mirror symmetry left, so a flipped axis
/// shows), gun shadow 6°, on the one-circle default rig; 900 × 640 px.
fn silver_pattern(
    out: &std::path::Path,
    rig: Option<&str>,
) -> (plot::PatternPlot, plot::PatternDrawn) {
    let out = out.to_str().unwrap();
    let mut args = vec![
        "pattern",
        "--crystal",
        "ag",
        "--face",
        "100",
        "--energy",
        "95",
        "--tilt",
        "6",
        "--azimuth",
        "15",
        "--gun-shadow",
        "6",
        "--out",
        out,
        "--width",
        "900",
        "--height",
        "640",
    ];
    let rig_path = rig.map(repo);
    if let Some(r) = &rig_path {
        args.extend(["--rig", r.as_str()]);
    }
    let PlotCmd::Pattern(a) = plot_cmd(&args) else {
        unreachable!()
    };
    let (p, _) = plot::pattern_plot(&a).unwrap();
    let t = Target::new(&a.out.out, a.out.width, a.out.height).unwrap();
    let d = plot::write_pattern(&p, &t).unwrap();
    (p, d)
}

/// Every spot's pixel, from the core's screen coordinates and the plot's mapping, is
/// the spot colour; and the core's coordinates themselves agree with an independent f64
/// calculation: on a hemisphere of radius R the spot of a beam leaving along k̂ lies at
/// R·k̂ projected on the screen plane, so at normal incidence its distance from the
/// centre is R·sin θ with sin θ = λ·|g| (the grating equation; λ from the relativistic
/// de Broglie relation with CODATA 2018 hc = 12398.419843320 eV·Å and
/// mc² = 510998.95 eV; Ag a = 4.0853 Å, from memory, so |g(1,0)| = √2/a).
#[test]
fn pattern_spots_are_where_the_core_puts_them() {
    let path = tmp("pattern.png");
    let (p, d) = silver_pattern(&path, None);
    let img = Rgb::read(&path);
    assert_eq!((img.w, img.h), (900, 640));
    assert!(p.spots.len() >= 13, "{} spots", p.spots.len());
    for s in &p.spots {
        let at = d.frame.to_px(f64::from(s.at.x_mm), f64::from(s.at.y_mm));
        assert!(
            img.near(at, 1, beam_blue),
            "spot ({},{}) at {:?} px: {:?}",
            s.beam.rod[0],
            s.beam.rod[1],
            at,
            img.at(at)
        );
    }

    // The core's spot positions against the f64 grating equation, at normal incidence.
    let PlotCmd::Pattern(a) = plot_cmd(&[
        "pattern",
        "--crystal",
        "ag",
        "--face",
        "100",
        "--energy",
        "95",
        "--out",
        "x.png",
    ]) else {
        unreachable!()
    };
    let (normal, _) = plot::pattern_plot(&a).unwrap();
    let (hc, mc2, e) = (12398.419843320f64, 510998.95f64, 95.0f64);
    let lambda = hc / (e * (e + 2.0 * mc2)).sqrt();
    let g10 = 2f64.sqrt() / 4.0853;
    let s10 = normal.spots.iter().find(|s| s.beam.rod == [1, 0]).unwrap();
    let r = f64::from(s10.at.x_mm).hypot(f64::from(s10.at.y_mm));
    assert!(
        (r - 100.0 * lambda * g10).abs() < 0.01,
        "(1,0) at {r} mm, want {}",
        100.0 * lambda * g10
    );
}

/// Where no spot, label, line or region was drawn the picture is background; the gun's
/// shadow is grey at its drawn radius, which is R·sin(shadow) (f64, R = 100 mm, 6°).
#[test]
fn pattern_background_and_gun_shadow() {
    let path = tmp("pattern-bg.png");
    let (p, d) = silver_pattern(&path, None);
    let img = Rgb::read(&path);
    let f = d.frame;
    // Equal scales: a circle on the screen is a circle in the picture.
    assert!(
        ((f.px_x.1 - f.px_x.0) - (f.px_y.1 - f.px_y.0)).abs() <= 1,
        "{f:?}"
    );
    let centre = f.to_px(0.0, 0.0);
    let rim_px = f64::from(f.to_px(d.rim_radius_mm, 0.0).0 - centre.0);
    let spots: Vec<(i32, i32)> = p
        .spots
        .iter()
        .map(|s| f.to_px(f64::from(s.at.x_mm), f64::from(s.at.y_mm)))
        .collect();
    let mut checked = 0;
    for i in 1..60 {
        for j in 1..60 {
            let c = f.px_x.0 + (f.px_x.1 - f.px_x.0) * i / 60;
            let r = f.px_y.0 + (f.px_y.1 - f.px_y.0) * j / 60;
            let from_centre = f64::from(c - centre.0).hypot(f64::from(r - centre.1));
            let clear = spots.iter().all(|&(sc, sr)| {
                let (dc, dr) = (c - sc, r - sr);
                // the dot, and its label up and to the right
                dc * dc + dr * dr > 14 * 14 && !((-4..90).contains(&dc) && (-40..6).contains(&dr))
            }) && (from_centre - rim_px).abs() > 5.0
                && (r - centre.1).abs() > 8 // the one-circle arm's line
                && from_centre > rim_px * 0.12 + 8.0; // the shadow and the centre mark
            if clear {
                checked += 1;
                assert!(
                    background(img.at((c, r))),
                    "pixel {c},{r}: {:?}",
                    img.at((c, r))
                );
            }
        }
    }
    assert!(checked > 1000, "{checked} background pixels checked");

    let want = 100.0 * 6f64.to_radians().sin();
    assert!(
        (d.shadow_radius_mm - want).abs() < 1e-3,
        "{}",
        d.shadow_radius_mm
    );
    let half = f.to_px(0.0, -d.shadow_radius_mm * 0.6);
    let g = img.at(half);
    assert!(
        g[0] == g[1] && g[1] == g[2] && g[0] < 240 && g[0] > 150,
        "shadow {g:?}"
    );
    let outside = f.to_px(0.0, -d.shadow_radius_mm * 1.6);
    assert!(background(img.at(outside)), "{:?}", img.at(outside));
}

/// The arm's reach on the two-circle bench B (arm −168..168° with zones −11..11° and
/// 120..128°, elevation −30..45°): tinted where the core lands a direction the arm can
/// take (arm 50°, elevation 20°), not where it cannot (arm 3°: a zone; elevation 60°:
/// beyond the limit).
#[test]
fn pattern_shows_the_arms_reach() {
    let path = tmp("pattern-reach.png");
    let (p, d) = silver_pattern(&path, Some("docs/rigs/bench-b.toml"));
    let img = Rgb::read(&path);
    let px = |arm: f32, elev: f32| {
        let l = p
            .screen
            .landing(goniometer::detector_direction(arm, elev))
            .unwrap();
        d.frame.to_px(f64::from(l.x_mm), f64::from(l.y_mm))
    };
    let green = |q: [u8; 3]| {
        let [r, g, b] = q.map(i32::from);
        g > r + 30 && g > b + 20 && g < 250
    };
    for (arm, elev) in [(50.0, 20.0), (-40.0, -25.0), (70.0, 40.0)] {
        assert!(
            green(img.at(px(arm, elev))),
            "arm {arm} elev {elev}: {:?}",
            img.at(px(arm, elev))
        );
    }
    for (arm, elev) in [(3.0, 25.0), (40.0, 60.0), (-40.0, -40.0)] {
        assert!(
            !green(img.at(px(arm, elev))),
            "arm {arm} elev {elev}: {:?}",
            img.at(px(arm, elev))
        );
    }
}

/// The title and labels are drawn with the embedded font (no system font needed): the
/// title band holds dark text pixels, and a spot's label appears beside the spot.
#[test]
fn text_renders_in_the_png() {
    let path = tmp("pattern-text.png");
    let (p, d) = silver_pattern(&path, None);
    let img = Rgb::read(&path);
    let dark = |q: [u8; 3]| q[0] < 110 && q[1] < 110 && q[2] < 110;
    let title: usize = (0..20)
        .flat_map(|r| (0..img.w as i32).map(move |c| (c, r)))
        .filter(|&q| dark(img.at(q)))
        .count();
    assert!(title > 300, "{title} dark pixels in the title band");
    let s = p.spots.iter().find(|s| s.beam.rod == [1, 1]).unwrap();
    let (c, r) = d.frame.to_px(f64::from(s.at.x_mm), f64::from(s.at.y_mm));
    let label: usize = (r - 30..r)
        .flat_map(|rr| (c + 4..c + 60).map(move |cc| (cc, rr)))
        .filter(|&q| dark(img.at(q)))
        .count();
    assert!(label > 20, "{label} dark pixels in the (1,1) label");
}

/// Tracks on bench B: the zones (−11..11°, 120..128°) and beyond the limits (±168°) are
/// shaded red at every energy, free angles are not; the (1,0) track passes through the
/// pixel of the core's in-plane arm angle; and the emergence of its first branch sits at
/// λ·|g| = 1 + sin α (f64, as in the core's own test: Ag a = 4.0853 Å from memory).
#[test]
fn tracks_shade_the_zones_and_follow_the_core() {
    let path = tmp("tracks.png");
    let PlotCmd::Tracks(a) = plot_cmd(&[
        "tracks",
        "--crystal",
        "ag",
        "--face",
        "100",
        "--tilt",
        "6",
        "--from",
        "10",
        "--to",
        "300",
        "--rig",
        &repo("docs/rigs/bench-b.toml"),
        "--out",
        path.to_str().unwrap(),
    ]) else {
        unreachable!()
    };
    let (p, r) = plot::tracks_plot(&a).unwrap();
    let t = Target::new(&a.out.out, a.out.width, a.out.height).unwrap();
    let f = plot::write_tracks(&p, &t).unwrap();
    let img = Rgb::read(&path);
    assert_eq!((img.w, img.h), (1000, 700));
    let red = |q: [u8; 3]| q[0] > 230 && q[1] < 225 && q[2] < 225 && q[1] > 150;
    for e in [40.0, 160.0, 290.0] {
        for deg in [4.0, 7.0, 124.0, 174.0, -174.0] {
            let at = f.to_px(e, deg);
            assert!(red(img.at(at)), "{e} eV {deg}°: {:?}", img.at(at));
        }
        for deg in [140.0, -140.0, 115.0] {
            let at = f.to_px(e, deg);
            assert!(background(img.at(at)), "{e} eV {deg}°: {:?}", img.at(at));
        }
    }
    // The (1,0) family's branch +1 at 250 eV.
    let c = matterwave_console::calc::crystal("ag").unwrap();
    let (_, face) = matterwave_console::calc::face_of(c, "100").unwrap();
    let arm = goniometer::in_plane_arm_deg(&face, [1, 0], 6.0, 1, 250.0).unwrap();
    let at = f.to_px(250.0, f64::from(arm));
    assert!(img.near(at, 2, |q| !background(q)), "track at {at:?}");
    // Its first emergence against the f64 grating equation.
    let (hc, mc2) = (12398.419843320f64, 510998.95f64);
    let lambda = (1.0 + 6f64.to_radians().sin()) * 4.0853 / 2f64.sqrt();
    let want = ((hc / lambda).powi(2) + mc2 * mc2).sqrt() - mc2;
    let em: Vec<f64> = p
        .tracks
        .iter()
        .filter(|t| p.families[t.family].rod == [1, 0])
        .filter_map(|t| t.emergence.map(|m| m.0))
        .collect();
    assert!(
        em.iter().any(|e| (e / want - 1.0).abs() < 1e-4),
        "{em:?} vs {want}"
    );
    assert!(r.fields.iter().any(|f| f.0 == "emergence_ev"));
}

/// The SVG pictures parse as XML, have the size asked for, and carry their labels as
/// text.
#[test]
fn svg_parses_and_holds_the_labels() {
    let path = tmp("pattern.svg");
    let (code, _, err) = common::mwctl(&[
        "plot",
        "pattern",
        "--crystal",
        "ag",
        "--face",
        "100",
        "--energy",
        "95",
        "--tilt",
        "6",
        "--gun-shadow",
        "6",
        "--out",
        path.to_str().unwrap(),
        "--width",
        "800",
        "--height",
        "600",
    ]);
    assert_eq!(code, 0, "{err}");
    let text = std::fs::read_to_string(&path).unwrap();
    let doc = roxmltree::Document::parse(&text).expect("well-formed XML");
    let root = doc.root_element();
    assert_eq!(root.tag_name().name(), "svg");
    assert_eq!(root.attribute("width"), Some("800"));
    assert_eq!(root.attribute("height"), Some("600"));
    let texts: Vec<String> = doc
        .descendants()
        .filter(|n| n.has_tag_name("text"))
        .filter_map(|n| n.text().map(|t| t.trim().to_string()))
        .collect();
    for want in [
        "(1,0)",
        "(-1,-1)",
        "(0,0)",
        "x on the screen (mm), toward increasing arm angle",
        "gun's shadow (6°)",
    ] {
        assert!(
            texts.iter().any(|t| t == want),
            "no text {want:?} in {texts:?}"
        );
    }
    assert!(texts
        .iter()
        .any(|t| t.starts_with("silver (1 0 0) · 95 eV")));

    // A rig name with XML's special characters still gives well-formed XML.
    let rig = tmp("odd-name.toml");
    let toml = std::fs::read_to_string(repo("docs/rigs/bench-b.toml")).unwrap();
    let odd = toml.replace("name = \"bench B\"", "name = 'bench <B> & \"C\"'");
    assert_ne!(odd, toml);
    std::fs::write(&rig, odd).unwrap();
    let tracks = tmp("tracks.svg");
    let (code, _, err) = common::mwctl(&[
        "plot",
        "tracks",
        "--crystal",
        "cu",
        "--face",
        "111",
        "--tilt",
        "8",
        "--out",
        tracks.to_str().unwrap(),
        "--rig",
        rig.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{err}");
    let text = std::fs::read_to_string(&tracks).unwrap();
    let doc = roxmltree::Document::parse(&text).expect("well-formed XML");
    let texts: Vec<&str> = doc
        .descendants()
        .filter_map(|n| n.text().map(str::trim))
        .collect();
    assert!(
        texts.contains(&"kinetic energy at the sample (eV)"),
        "{texts:?}"
    );
    assert!(texts.contains(&"rig: bench <B> & \"C\""), "{texts:?}");
}

/// An unknown extension is refused naming --out and what is accepted; a size out of
/// range names the option; and nothing is written.
#[test]
fn bad_output_options_are_named() {
    let jpg = tmp("pattern.jpg");
    let (code, out, err) = common::mwctl(&[
        "plot",
        "pattern",
        "--crystal",
        "ag",
        "--face",
        "100",
        "--energy",
        "95",
        "--out",
        jpg.to_str().unwrap(),
    ]);
    assert_eq!(code, 2);
    assert!(out.is_empty());
    assert!(
        err.contains("--out") && err.contains(".png or .svg"),
        "{err}"
    );
    assert!(!jpg.exists());
    let png = tmp("small.png");
    let (code, _, err) = common::mwctl(&[
        "plot",
        "tracks",
        "--crystal",
        "ag",
        "--face",
        "100",
        "--out",
        png.to_str().unwrap(),
        "--width",
        "100",
    ]);
    assert_eq!(code, 2);
    assert!(
        err.contains("--width 100") && err.contains("300 to 8000"),
        "{err}"
    );
    assert!(!png.exists());
}

/// `plot scan`: the measured points are drawn where the mapping puts them, and the
/// predicted beam of an arm sweep (the core's `beams_crossed`) is marked at its arm
/// angle — docs/examples/peak-scan.csv is an invented scan across one beam near
/// 38.6° of Ag(100) at 95 eV, tilt 6°.
#[test]
fn scan_points_and_predictions() {
    let path = tmp("scan.png");
    let PlotCmd::Scan(a) = plot_cmd(&[
        "scan",
        "--input",
        &repo("docs/examples/peak-scan.csv"),
        "--x",
        "angle_deg",
        "--y",
        "current",
        "--predict",
        "beams",
        "--crystal",
        "ag",
        "--face",
        "100",
        "--energy",
        "95",
        "--tilt",
        "6",
        "--out",
        path.to_str().unwrap(),
    ]) else {
        unreachable!()
    };
    let (p, _) = plot::scan::scan_plot(&a).unwrap();
    let t = Target::new(&a.out.out, a.out.width, a.out.height).unwrap();
    let f = plot::write_scan(&p, &t).unwrap();
    let img = Rgb::read(&path);
    assert!(p.points.len() > 10);
    for &(x, y) in &p.points {
        assert!(img.near(f.to_px(x, y), 1, beam_blue), "point {x},{y}");
    }
    assert_eq!(p.markers.len(), 1, "{:?}", p.markers);
    let m = &p.markers[0];
    assert_eq!(m.label, "(1,0)");
    let orange = |q: [u8; 3]| q[0] > 180 && q[1] > 80 && q[1] < 150 && q[2] < 60;
    let (_, y) = p.ranges();
    let mid = f.to_px(m.x, y.0 + 0.1 * (y.1 - y.0));
    assert!(img.near(mid, 6, orange), "marker at {mid:?}");
}

/// `plot scan --predict iv`: the markers are the kinematic I-V maxima of the specular
/// beam of Cu(100) at normal incidence, against the f64 Bragg condition inside the
/// crystal, λ_in = 2d/m with d = a/2 (a = 3.615 Å, from memory), E_out = E(λ_in) − V0
/// (relativistic de Broglie relation, CODATA 2018 hc and mc² as above; the
/// inner-potential correction as in any LEED textbook's kinematic I-V).
#[test]
fn scan_iv_maxima_follow_the_bragg_condition() {
    let path = tmp("iv.svg");
    let PlotCmd::Scan(a) = plot_cmd(&[
        "scan",
        "--input",
        &repo("docs/examples/iv-curve.csv"),
        "--x",
        "energy_ev",
        "--y",
        "current",
        "--predict",
        "iv",
        "--crystal",
        "cu",
        "--face",
        "100",
        "--beam",
        "0,0",
        "--inner-potential",
        "10",
        "--out",
        path.to_str().unwrap(),
    ]) else {
        unreachable!()
    };
    let (p, _) = plot::scan::scan_plot(&a).unwrap();
    let (hc, mc2) = (12398.419843320f64, 510998.95f64);
    let (lo, hi) = (20.0, 300.0);
    let want: Vec<f64> = (1..20)
        .map(|m| {
            let lambda = 2.0 * (3.615 / 2.0) / f64::from(m);
            ((hc / lambda).powi(2) + mc2 * mc2).sqrt() - mc2 - 10.0
        })
        .filter(|e| (lo..=hi).contains(e))
        .collect();
    assert_eq!(p.markers.len(), want.len(), "{:?} vs {want:?}", p.markers);
    for (m, w) in p.markers.iter().zip(&want) {
        assert!((m.x / w - 1.0).abs() < 1e-4, "{} vs {w}", m.x);
    }
    let t = Target::new(&a.out.out, a.out.width, a.out.height).unwrap();
    plot::write_scan(&p, &t).unwrap();
    let text = std::fs::read_to_string(&path).unwrap();
    roxmltree::Document::parse(&text).expect("well-formed XML");
    assert!(text.contains("energy_ev (eV)") && text.contains("m=3"));
}

/// `plot scan SCAN_FILE`: a sweep written by `mwctl scan` on the simulator (Ag(100),
/// 95 eV, tilt 6°) is read by the scan file's reader; every measured row is drawn, and
/// the (1,0) beam is marked at the in-plane arm angle of the grating equation,
/// δ = α + asin(sin α + λ·|g|) (f64; λ and Ag a = 4.0853 Å, from memory, as above).
#[test]
fn scan_file_of_mwctl_scan() {
    let csv = tmp("sweep-scan.csv");
    let (code, _, err) = common::mwctl(&[
        "scan",
        "--kind",
        "sweep",
        "--from",
        "30",
        "--to",
        "46",
        "--step",
        "0.25",
        "--set",
        "crystal=ag",
        "--set",
        "face=100",
        "--set",
        "energy=95",
        "--set",
        "tilt=6",
        "--out",
        csv.to_str().unwrap(),
        "--force",
    ]);
    assert_eq!(code, 0, "{err}");
    let path = tmp("sweep-scan.png");
    let PlotCmd::Scan(a) = plot_cmd(&[
        "scan",
        csv.to_str().unwrap(),
        "--out",
        path.to_str().unwrap(),
    ]) else {
        unreachable!()
    };
    let (p, r) = plot::scan::scan_plot(&a).unwrap();
    assert_eq!(p.points.len(), 65);
    let (hc, mc2, e) = (12398.419843320f64, 510998.95f64, 95.0f64);
    let lambda = hc / (e * (e + 2.0 * mc2)).sqrt();
    let alpha = 6f64.to_radians();
    let want = (alpha + (alpha.sin() + lambda * 2f64.sqrt() / 4.0853).asin()).to_degrees();
    assert_eq!(p.markers.len(), 1, "{:?}", p.markers);
    assert!(
        (p.markers[0].x - want).abs() < 0.01,
        "{} vs {want}",
        p.markers[0].x
    );
    assert_eq!(p.markers[0].label, "(1,0)");
    assert!(r.fields.iter().any(|f| f.0 == "kind"));
    let t = Target::new(&a.out.out, a.out.width, a.out.height).unwrap();
    let f = plot::write_scan(&p, &t).unwrap();
    let img = Rgb::read(&path);
    for &(x, y) in &p.points {
        assert!(img.near(f.to_px(x, y), 1, beam_blue), "point {x},{y}");
    }
    // The peak of the simulated detector lies at the predicted beam (within its width).
    let top = p
        .points
        .iter()
        .copied()
        .fold((0.0, f64::MIN), |b, q| if q.1 > b.1 { q } else { b });
    assert!((top.0 - want).abs() < 1.0, "peak at {} vs {want}", top.0);
}
