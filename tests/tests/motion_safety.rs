//! Named regressions of issue 13, "Motion safety": each test is one sequence that once
//! moved an axis where it must not go (or answered `ok` for a move that lands far from
//! its target), run on the simulated board, with the rule it checks.
//!
//! The rules are those of docs/PROTOCOL.md ("Safety model") and core/src/axis.rs. The
//! physical expectations come from the sequences themselves: an axis stands where its
//! step counter put it in the calibration that was in force when it moved. Common
//! practice, no source: a motion controller that does not know where an axis stands
//! must not move it, and a soft limit or forbidden zone holds for every point of a path.

use matterwave_core::axis::{AxisConfig, Zone};
use matterwave_core::console::sim::{SimAxes, SimDetector, SimInterlock};
use matterwave_core::console::Console;
use matterwave_core::{AxisId, Error};

type Con = Console<SimAxes, SimDetector, SimInterlock>;

fn console() -> Con {
    Console::new(
        SimAxes::default(),
        SimDetector::default(),
        SimInterlock { safe: true },
    )
    .expect("factory settings")
}

/// One request, its stream polled out; the whole reply.
fn request(c: &mut Con, line: &str) -> String {
    let mut out = Vec::new();
    for &b in format!("{line}\n").as_bytes() {
        c.push(b, &mut out).expect("reply written");
        while c.poll(&mut out).expect("stream line written") {}
    }
    String::from_utf8(out).expect("ASCII reply")
}

/// The final line of a reply.
fn last(reply: &str) -> String {
    reply.lines().last().unwrap_or("").to_string()
}

/// Sends `line` and asserts that its final line starts with `want`; returns it.
fn expect(c: &mut Con, line: &str, want: &str) -> String {
    let r = last(&request(c, line));
    assert!(r.starts_with(want), "{line}: want {want}, got {r}");
    r
}

/// Issue 13 case 1: `reset` swapped in the factory calibration under the step counters
/// of a re-calibrated arm (1422.2222 steps/deg, home −0.35°): `pos` then showed 224.56°
/// for an arm standing at 140°, and `move arm=60` drove it through a zone. After
/// `reset` every position is unknown: `pos` says so and moves are refused (err 320)
/// until the axis is homed or its position declared.
#[test]
fn reset_forgets_where_the_axes_stand() {
    let mut c = console();
    expect(
        &mut c,
        "axis name=arm steps_per_deg=1422.2222 home_offset_deg=-0.35",
        "ok",
    );
    // Declared at 20° (its home, −0.35°, lies in the gun zone nearer its lower edge).
    expect(&mut c, "home name=arm at=20", "ok name=arm");
    expect(&mut c, "enable", "ok");
    expect(&mut c, "move arm=140", "ok");
    expect(&mut c, "disable", "ok");
    expect(&mut c, "zone name=arm i=1 from=120 to=128", "ok");
    let steps = c.axes.steps;
    expect(&mut c, "reset", "ok");
    for id in AxisId::ALL {
        assert!(!c.position_known(id), "{id:?} still known after reset");
    }
    let pos = expect(&mut c, "pos", "ok");
    assert!(
        pos.ends_with(" unknown=arm,tilt,azimuth"),
        "pos does not flag the unknown axes: {pos}"
    );
    expect(&mut c, "enable", "ok");
    let r = expect(&mut c, "move arm=60", "err 320");
    assert!(r.contains("arm") && r.contains("home"), "{r}");
    expect(&mut c, "move tilt=10", "err 320");
    assert_eq!(c.axes.steps, steps, "a refused move moved an axis");
    // Declared where it really stands (140°), in the calibration now in force.
    expect(&mut c, "disable", "ok");
    let r = expect(&mut c, "home name=arm at=140", "ok name=arm at=");
    assert!(c.position_known(AxisId::Arm));
    assert!(!c.position_known(AxisId::Tilt));
    let steps = (140.0f64 * f64::from(c.settings().rig.arm.steps_per_deg)).round() as i32;
    assert!(r.ends_with(&format!(" steps={steps}")), "{r}");
    assert_eq!(c.axes.steps[0], steps);
    expect(&mut c, "enable", "ok");
    expect(&mut c, "move arm=60", "ok arm_steps=");
    expect(&mut c, "move tilt=10", "err 320");
}

/// `home` only declares a position while motion is disabled (err 321), within the soft
/// limits (err 302), on a fitted axis (err 307); a refused `home` changes nothing.
#[test]
fn home_declares_a_position_only_while_disabled() {
    let mut c = console();
    expect(&mut c, "enable", "ok");
    expect(&mut c, "home name=arm at=40", "err 321");
    expect(&mut c, "disable", "ok");
    expect(&mut c, "home name=arm at=170", "err 302");
    expect(&mut c, "home name=elevation", "err 307");
    assert_eq!(c.axes.steps, [0; 4]);
    // Inside the gun zone is allowed: an axis may stand in one (and leave it).
    expect(&mut c, "home name=arm at=5", "ok name=arm at=");
    assert_eq!(c.axes.steps[0], 4444);
}

/// Issue 13 case 1, second part: an axis that starts beyond a soft limit may only be
/// driven back inside, toward the limit; every other path stays checked against the
/// limits (core/src/axis.rs `check_path` once skipped the limits for the whole path).
#[test]
fn a_path_from_beyond_a_limit_only_goes_back_inside() {
    let mut a = AxisConfig::new(AxisId::Arm, 100.0);
    a.min_deg = -165.0;
    a.max_deg = 165.0;
    // Beyond the upper limit: further out is refused, back inside is allowed, and a
    // path back that overshoots the lower limit is refused.
    assert_eq!(
        a.check_path(200.0, 300.0),
        Err(Error::AboveLimit(AxisId::Arm))
    );
    assert_eq!(
        a.check_path(200.0, 201.0),
        Err(Error::AboveLimit(AxisId::Arm))
    );
    assert_eq!(a.check_path(200.0, 100.0), Ok(()));
    assert_eq!(
        a.check_path(200.0, -170.0),
        Err(Error::BelowLimit(AxisId::Arm))
    );
    // Below the lower limit, the same mirrored.
    assert_eq!(
        a.check_path(-200.0, -300.0),
        Err(Error::BelowLimit(AxisId::Arm))
    );
    assert_eq!(a.check_path(-200.0, -100.0), Ok(()));
    assert_eq!(
        a.check_path(-200.0, 170.0),
        Err(Error::AboveLimit(AxisId::Arm))
    );
    // On the console: the arm at 140° with the upper limit lowered to 130° under it.
    let mut c = console();
    expect(&mut c, "enable", "ok");
    expect(&mut c, "move arm=140", "ok");
    expect(&mut c, "disable", "ok");
    expect(&mut c, "axis name=arm max_deg=130", "ok");
    expect(&mut c, "enable", "ok");
    expect(&mut c, "move arm=135", "err 302");
    expect(&mut c, "move arm=100", "ok");
}

/// Issue 13 case 2: from inside a zone the whole zone could be crossed — at −20° in a
/// widened gun zone [−25°, 12°], `move arm=20` swept across the gun axis; at 40° inside
/// [30°, 160°], `move arm=162` crossed 120° of zone. Only the way out through the nearer
/// edge is allowed.
#[test]
fn a_zone_is_left_only_through_its_nearer_edge() {
    let mut c = console();
    expect(&mut c, "zone name=arm i=0 from=-25 to=12", "ok");
    expect(&mut c, "home name=arm at=-20", "ok");
    expect(&mut c, "enable", "ok");
    let steps = c.axes.steps;
    expect(&mut c, "move arm=20", "err 304 arm zone 0 from -25 to 12");
    assert_eq!(c.axes.steps, steps);
    expect(&mut c, "move arm=-30", "ok");
    let mut c = console();
    expect(&mut c, "home name=arm at=40", "ok");
    expect(&mut c, "zone name=arm i=1 from=30 to=160", "ok");
    expect(&mut c, "enable", "ok");
    expect(&mut c, "move arm=162", "err 304 arm zone 1 from 30 to 160");
    expect(&mut c, "move arm=20", "ok");
    // The factory home (0°) is the middle of the gun zone [−12°, 12°]: both edges are
    // nearest, either way out is allowed.
    let mut c = console();
    expect(&mut c, "enable", "ok");
    expect(&mut c, "move arm=20", "ok");
    let mut c = console();
    expect(&mut c, "enable", "ok");
    expect(&mut c, "move arm=-20", "ok");
}

/// The same rule on a wrapping axis, where a zone repeats every 360°: leaving through
/// the nearer edge, the path must not reach the zone's next copy either.
#[test]
fn a_wrapping_zone_is_left_only_through_its_nearer_edge() {
    let mut z = AxisConfig::new(AxisId::Azimuth, 100.0);
    z.wrap = true;
    z.zones[0] = Some(Zone {
        from_deg: 170.0,
        to_deg: 180.0,
    });
    let crosses = Err(Error::PathCrossesZone(AxisId::Azimuth, 0));
    // At 172°, 170° is the nearer edge.
    assert_eq!(z.check_path(172.0, 100.0), Ok(()));
    assert_eq!(z.check_path(172.0, -175.0), Ok(()));
    assert_eq!(z.check_path(172.0, 185.0), crosses);
    // Down through 170° and on into the copy [−190°, −180°].
    assert_eq!(z.check_path(172.0, -185.0), crosses);
    // At 178° (the copy at 538° too), 180° is the nearer edge.
    assert_eq!(z.check_path(178.0, 300.0), Ok(()));
    assert_eq!(z.check_path(178.0, 100.0), crosses);
    assert_eq!(z.check_path(538.0, 600.0), Ok(()));
    assert_eq!(z.check_path(538.0, 520.0), crosses);
    // Up through 180° and on into the copy [530°, 540°].
    assert_eq!(z.check_path(178.0, 531.0), crosses);
    // A path of more than a turn from outside meets a copy however far it is.
    assert_eq!(z.check_path(0.0, 700.0), crosses);
    assert_eq!(z.check_path(-100.0, -720.0), crosses);
}
