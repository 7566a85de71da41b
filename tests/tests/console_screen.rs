//! The console's `screen`: spots on a hemispherical screen or a flat detector, and the
//! beam at a measured spot.
//!
//! Sources of the checks (textbook LEED geometry, common practice):
//! - a hemispherical screen of radius R centred on the sample, seen along its axis: at
//!   normal incidence the axis is the surface normal, and a beam with in-plane
//!   reciprocal vector g lands at r = R·sin θ = R·λ·|g| from the centre (the grating
//!   equation sin θ = λ|g|);
//! - a flat detector facing the sample at distance L along the normal: r = L·tan θ;
//! - λ from the independent f64 oracle (relativistic, CODATA 2018); |g(h, k)| of the
//!   Cu(100) square mesh = √(h² + k²)/a_s, a_s = a/√2 (a from the crystal table).

use matterwave_console::oracle;
use matterwave_tests::console::{last, request, sim_console};

fn field<'a>(line: &'a str, key: &str) -> Option<&'a str> {
    matterwave_tests::console::field(line.trim_end(), key)
}

fn num(line: &str, key: &str) -> f64 {
    field(line, key)
        .unwrap_or_else(|| panic!("{key} in {line}"))
        .parse()
        .unwrap()
}

fn spots(reply: &str) -> Vec<&str> {
    reply.lines().filter(|l| l.starts_with("- ")).collect()
}

const A_S: f64 = 3.6149 / std::f64::consts::SQRT_2;

#[test]
fn spots_on_a_hemispherical_screen_lie_at_r_lambda_g() {
    let mut c = sim_console();
    assert!(request(&mut c, "set crystal=cu face=100 energy=100 tilt=0").starts_with("ok"));
    let r = request(&mut c, "screen radius=66");
    assert!(last(&r).starts_with("ok count="), "{r}");
    let lambda = oracle::wavelength_a(100.0);
    let list = spots(&r);
    assert!(list.len() >= 9, "{r}");
    for l in list {
        let (h, k) = (num(l, "h"), num(l, "k"));
        let want = 66.0 * lambda * (h * h + k * k).sqrt() / A_S;
        let got = num(l, "x").hypot(num(l, "y"));
        assert!((got - want).abs() < 2e-3, "{l}: r = {want:.3} mm");
    }
    // The specular beam goes straight back at the gun: the centre, hidden by a shadow.
    let r = request(&mut c, "screen radius=66 shadow=5");
    let spec = spots(&r)
        .into_iter()
        .find(|l| l.starts_with("- h=0 k=0 "))
        .unwrap();
    assert_eq!(field(spec, "shadowed"), Some("1"), "{spec}");
    assert!(
        num(spec, "x").abs() < 1e-3 && num(spec, "y").abs() < 1e-3,
        "{spec}"
    );
}

#[test]
fn a_flat_detector_shows_r_l_tan_theta_and_names_the_beam_at_a_spot() {
    let mut c = sim_console();
    assert!(request(&mut c, "set crystal=cu face=100 energy=150 tilt=0").starts_with("ok"));
    let r = request(&mut c, "screen distance=100 half_width=80 half_height=60");
    let lambda = oracle::wavelength_a(150.0);
    let list = spots(&r);
    assert!(!list.is_empty(), "{r}");
    for l in &list {
        let (h, k) = (num(l, "h"), num(l, "k"));
        let theta = (lambda * (h * h + k * k).sqrt() / A_S).asin();
        let want = 100.0 * theta.tan();
        let got = num(l, "x").hypot(num(l, "y"));
        assert!((got - want).abs() < 2e-3, "{l}: r = {want:.3} mm");
        assert!(
            num(l, "x").abs() <= 80.0 && num(l, "y").abs() <= 60.0,
            "{l}"
        );
    }
    // Each listed spot, measured back, is its own beam.
    for l in list {
        let q = format!(
            "screen distance=100 half_width=80 half_height=60 x={} y={}",
            num(l, "x"),
            num(l, "y")
        );
        let a = request(&mut c, &q);
        assert_eq!(field(&a, "found"), Some("1"), "{q}: {a}");
        assert_eq!(
            (field(&a, "h"), field(&a, "k")),
            (field(l, "h"), field(l, "k")),
            "{q}: {a}"
        );
        assert!(num(&a, "offset") < 0.01, "{a}");
    }
    // Far from every beam: none within the tolerance.
    let a = request(
        &mut c,
        "screen distance=100 half_width=80 half_height=60 x=79 y=59 tolerance=0.5",
    );
    assert_eq!(field(&a, "found"), Some("0"), "{a}");
}

#[test]
fn bad_screens_name_the_key() {
    let mut c = sim_console();
    for (req, code, key) in [
        ("screen", 405, "radius"),
        ("screen radius=-1", 102, "radius"),
        ("screen radius=66 rim=95", 103, "rim"),
        ("screen radius=66 distance=100", 404, "distance"),
        ("screen distance=100 half_width=80", 405, "half_height"),
        (
            "screen distance=100 half_width=80 half_height=60 elevation=100",
            103,
            "elevation",
        ),
        ("screen radius=66 x=3", 405, "y"),
        ("screen radius=66 shadow=50", 103, "shadow"),
    ] {
        let r = request(&mut c, req);
        assert!(r.starts_with(&format!("err {code} {key}")), "{req}: {r}");
    }
}
