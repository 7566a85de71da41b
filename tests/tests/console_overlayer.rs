//! The console's overlayer: `overlayer=`, `domains=`, fractional `beam=`, the `beams`
//! list of an overlayer, `aim` and `plan kind=track` at a fractional beam, what is
//! refused, and the dump that replays it all.
//!
//! Sources of the checks:
//! - Grating equation at normal incidence (textbook kinematics, e.g. any surface
//!   science text's LEED chapter): a beam with in-plane reciprocal vector g leaves at
//!   sin θ = |g|·λ; for a square mesh of side a_s, |g(h, k)| = √(h² + k²)/a_s. Computed
//!   here in f64 with the relativistic wavelength λ = h/√(2 m E (1 + E/2mc²)) from the
//!   CODATA 2018 constants (the independent f64 oracle of `mwctl verify`).
//! - Published patterns (common practice, no single source): p(2×2) on a square mesh
//!   adds the half-order beams (±1/2, 0), (0, ±1/2), (±1/2, ±1/2); c(2×2) adds only
//!   (±1/2, ±1/2); (√3×√3)R30° on a hexagonal mesh adds the third-order beams (1/3, 1/3)
//!   and its images; a (2×1) reconstruction of a square mesh shows (0, 1/2) only from
//!   its second domain, turned by 90°.
//! - The console and `mwctl calc beams --overlayer` share one core listing; that the
//!   console streams it exactly is the core's own test (surface::overlayer_list).

use matterwave_console::oracle;
use matterwave_tests::console::{last, request, sim_console, SimConsole};

/// The value of `key` in `line` (a reply's trailing newline left out).
fn field<'a>(line: &'a str, key: &str) -> Option<&'a str> {
    matterwave_tests::console::field(line.trim_end(), key)
}

/// The value of `key` on a reply's final line.
fn final_field(reply: &str, key: &str) -> Option<String> {
    field(last(reply).trim_end(), key).map(str::to_string)
}

fn ok(c: &mut SimConsole, line: &str) -> String {
    let r = request(c, line);
    assert!(last(&r).starts_with("ok"), "{line}: {r}");
    r
}

fn code(reply: &str) -> Option<u16> {
    last(reply)
        .strip_prefix("err ")?
        .split(' ')
        .next()?
        .parse()
        .ok()
}

/// The (h, k) labels of a `beams` reply.
fn labels(reply: &str) -> Vec<(String, String)> {
    reply
        .lines()
        .filter(|l| l.starts_with("- "))
        .map(|l| {
            (
                field(l, "h").unwrap().to_string(),
                field(l, "k").unwrap().to_string(),
            )
        })
        .collect()
}

/// Exit angle (degrees) at normal incidence of a beam with |g| = `g_inv_a` at `e_ev`.
fn exit_deg(g_inv_a: f64, e_ev: f64) -> f64 {
    (g_inv_a * oracle::wavelength_a(e_ev)).asin().to_degrees()
}

#[test]
fn p2x2_half_order_beams_leave_where_the_grating_equation_puts_them() {
    let mut c = sim_console();
    ok(
        &mut c,
        "set crystal=ni face=100 tilt=0 energy=80 overlayer=p(2x2)",
    );
    let r = ok(&mut c, "beams");
    let a_s = 3.524 / 2f64.sqrt(); // Ni a (crystal table), square mesh side a/√2
    for l in r.lines().filter(|l| l.starts_with("- ")) {
        let num = |t: &str| -> f64 {
            match t.split_once('/') {
                Some((n, d)) => n.parse::<f64>().unwrap() / d.parse::<f64>().unwrap(),
                None => t.parse().unwrap(),
            }
        };
        let (h, k) = (num(field(l, "h").unwrap()), num(field(l, "k").unwrap()));
        let want = exit_deg((h * h + k * k).sqrt() / a_s, 80.0);
        let got: f64 = field(l, "exit").unwrap().parse().unwrap();
        assert!((got - want).abs() < 2e-3, "{l}: want {want:.4}");
        // Whole positions are the integer-order beams, and say so.
        let whole = h.fract() == 0.0 && k.fract() == 0.0;
        assert_eq!(
            field(l, "integer"),
            Some(if whole { "1" } else { "0" }),
            "{l}"
        );
    }
    let l = labels(&r);
    for hk in [
        ("1/2", "0"),
        ("0", "1/2"),
        ("-1/2", "0"),
        ("1/2", "1/2"),
        ("3/2", "1/2"),
    ] {
        assert!(
            l.contains(&(hk.0.into(), hk.1.into())),
            "{hk:?} missing: {l:?}"
        );
    }
}

#[test]
fn c2x2_and_root3_patterns_have_their_published_beams() {
    let mut c = sim_console();
    ok(
        &mut c,
        "set crystal=cu face=100 tilt=0 energy=120 overlayer=c(2x2)",
    );
    let l = labels(&ok(&mut c, "beams"));
    assert!(l.contains(&("1/2".into(), "1/2".into())), "{l:?}");
    assert!(l.contains(&("-1/2".into(), "1/2".into())), "{l:?}");
    assert!(!l.iter().any(|(h, k)| h == "1/2" && k == "0"), "{l:?}");
    ok(&mut c, "set crystal=cu face=111 overlayer=(sqrt3xsqrt3)R30");
    let l = labels(&ok(&mut c, "beams"));
    assert!(
        l.iter()
            .any(|(h, k)| h.ends_with("/3") && k.ends_with("/3")),
        "{l:?}"
    );
    assert!(!l.iter().any(|(h, _)| h.ends_with("/2")), "{l:?}");
}

#[test]
fn a_2x1_second_domain_beam_needs_domains_all() {
    let mut c = sim_console();
    ok(
        &mut c,
        "set crystal=ni face=100 tilt=0 energy=80 overlayer=2,0,0,1",
    );
    assert_eq!(code(&request(&mut c, "set beam=0,1/2")), Some(170));
    assert_eq!(code(&request(&mut c, "aim beam=0,1/2")), Some(170));
    let one = labels(&ok(&mut c, "beams"));
    assert!(!one.contains(&("0".into(), "1/2".into())), "{one:?}");
    ok(&mut c, "set domains=all beam=0,1/2");
    let r = ok(&mut c, "beams");
    let line = r
        .lines()
        .find(|l| field(l, "h") == Some("0") && field(l, "k") == Some("1/2"))
        .expect("(0,1/2) listed with domains=all");
    assert_eq!(field(line, "domains"), Some("1"), "{line}");
    let both = r
        .lines()
        .find(|l| field(l, "h") == Some("1") && field(l, "k") == Some("0"))
        .unwrap();
    assert_eq!(field(both, "domains"), Some("0,1"), "{both}");
    // The arm angle of (0, 1/2) is the grating equation's, on either branch.
    let aim = ok(&mut c, "aim");
    let want = exit_deg(0.5 / (3.524 / 2f64.sqrt()), 80.0);
    let arm: f64 = field(aim.lines().next().unwrap(), "arm")
        .unwrap()
        .parse()
        .unwrap();
    assert!((arm.abs() - want).abs() < 2e-3, "{aim}: want {want:.4}");
}

#[test]
fn a_fractional_beam_tracks_but_has_no_iv_maxima_or_budget() {
    let mut c = sim_console();
    ok(
        &mut c,
        "set crystal=ni face=100 tilt=0 energy=80 overlayer=p(2x2) beam=1/2,0",
    );
    let t = ok(&mut c, "plan kind=track from=40 to=200 step=40");
    assert!(t.contains("err=303"), "{t}");
    let a_s = 3.524 / 2f64.sqrt();
    for l in t.lines().filter(|l| l.starts_with("- ")) {
        let e: f64 = field(l, "nominal").unwrap().parse().unwrap();
        let want = exit_deg(0.5 / a_s, e);
        // Past 120 eV the beam is within 12.5° of the gun: the factory arm's gun zone
        // (±12°) refuses it, and the plan says so per point.
        match field(l, "arm") {
            Some(arm) => {
                let arm: f64 = arm.parse().unwrap();
                assert!((arm.abs() - want).abs() < 2e-3, "{l}: want {want:.4}");
            }
            None => assert!(want < 12.5 && field(l, "err") == Some("303"), "{l}"),
        }
    }
    assert_eq!(
        code(&request(&mut c, "plan kind=iv from=40 to=200 step=40")),
        Some(171)
    );
    assert_eq!(code(&request(&mut c, "budget")), Some(171));
    // An integer beam of the same overlayer has both.
    ok(&mut c, "set beam=1,0");
    ok(&mut c, "plan kind=iv from=40 to=200 step=40");
    ok(&mut c, "budget");
}

#[test]
fn a_new_face_takes_the_overlayer_and_its_beam_back() {
    let mut c = sim_console();
    ok(
        &mut c,
        "set crystal=ni face=100 overlayer=p(2x2) beam=1/2,1/2",
    );
    let r = ok(&mut c, "set face=110");
    assert_eq!(field(&r, "overlayer_from"), Some("new_face"), "{r}");
    assert_eq!(field(&r, "beam_from"), Some("overlayer"), "{r}");
    assert_eq!(field(&ok(&mut c, "get beam"), "beam"), Some("0,0"));
    assert_eq!(
        field(&ok(&mut c, "get overlayer"), "overlayer"),
        Some("none")
    );
    // Given with the face, it is read on the new face; a Wood label with no matrix on
    // a mesh is refused (err 167) and nothing changes.
    ok(
        &mut c,
        "set face=111 overlayer=(sqrt3xsqrt3)R30 beam=1/3,1/3",
    );
    assert_eq!(
        code(&request(&mut c, "set face=100 overlayer=(sqrt3xsqrt3)R30")),
        Some(167)
    );
    assert_eq!(
        final_field(&ok(&mut c, "get beam"), "beam").as_deref(),
        Some("1/3,1/3")
    );
    // Overlayer none, with a fractional beam in place: refused when the beam is given
    // again, taken back to 0,0 otherwise.
    assert_eq!(
        code(&request(&mut c, "set overlayer=none beam=1/3,1/3")),
        Some(170)
    );
    let r = ok(&mut c, "set overlayer=none");
    assert_eq!(
        final_field(&r, "beam_from").as_deref(),
        Some("overlayer"),
        "{r}"
    );
}

#[test]
fn the_dump_replays_an_overlayer_and_a_fractional_beam() {
    let mut c = sim_console();
    ok(
        &mut c,
        "set crystal=si face=100 energy=64 tilt=3 overlayer=2,0,0,1 domains=all beam=-1/2,1",
    );
    let dump = ok(&mut c, "dump");
    let mut fresh = sim_console();
    for l in dump.lines().filter_map(|l| l.strip_prefix("- ")) {
        ok(&mut fresh, l);
    }
    assert_eq!(ok(&mut fresh, "dump"), dump);
    assert_eq!(ok(&mut fresh, "get"), ok(&mut c, "get"));
    assert_eq!(
        field(&ok(&mut fresh, "get domains"), "domains"),
        Some("all")
    );
}

#[test]
fn an_arm_sweep_names_the_half_order_beam_where_it_crosses() {
    let mut c = sim_console();
    ok(
        &mut c,
        "set crystal=ni face=100 tilt=0 energy=80 overlayer=p(2x2)",
    );
    let r = ok(&mut c, "plan kind=sweep from=13 to=40 step=0.5");
    let want = exit_deg(0.5 / (3.524 / 2f64.sqrt()), 80.0);
    let seen: Vec<&str> = r
        .lines()
        .filter(|l| field(l, "h") == Some("1/2") && field(l, "k") == Some("0"))
        .collect();
    assert!(!seen.is_empty(), "{r}");
    for l in seen {
        let arm: f64 = field(l, "arm").unwrap().parse().unwrap();
        let offset: f64 = field(l, "offset").unwrap().parse().unwrap();
        // In the scattering plane the offset is the arm's distance from the beam.
        assert!(
            ((arm - want).abs() - offset).abs() < 2e-3,
            "{l}: beam at {want:.4}"
        );
        assert!(offset <= 1.0, "{l}: within the factory acceptance of 1°");
    }
    // The integer-order (1, 0) at 33.38° is named as before.
    assert!(
        r.lines()
            .any(|l| field(l, "h") == Some("1") && field(l, "k") == Some("0")),
        "{r}"
    );
}
