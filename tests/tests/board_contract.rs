//! The board contract (docs/PROTOCOL.md "Safety model", core/src/console/board.rs): an
//! interlock that opens stops motion at the next tick and says why; a driver fault
//! (stall, limit switch, driver error) stops every axis, disables motion and makes the
//! faulted axis's position unknown; `move` while an axis still moves is refused; `stop`
//! is answered in every state. Run on the simulated board with faults injected.
//!
//! Common practice, no source: a motion controller stops all axes on an interlock or a
//! drive fault, and does not trust the step counter of an axis that stalled or hit a
//! limit switch until it is homed again.

use matterwave_core::console::sim::SimAxes;
use matterwave_core::console::{AxisFault, FaultKind, Trip};
use matterwave_core::AxisId;
use matterwave_tests::console::{field, last, request, sim_console, SimConsole};

/// Sends `line`; asserts its final line starts with `want`; returns that line.
fn expect(c: &mut SimConsole, line: &str, want: &str) -> String {
    let r = last(&request(c, line)).to_string();
    assert!(r.starts_with(want), "{line}: want {want}, got {r}");
    r
}

/// A console with motion enabled and the arm moved to 40°.
fn moving_console() -> SimConsole {
    let mut c = sim_console();
    expect(&mut c, "enable", "ok enabled=1");
    expect(&mut c, "move arm=40", "ok arm_steps=");
    c
}

#[test]
fn an_interlock_that_opens_stops_motion_at_the_next_tick() {
    let mut c = moving_console();
    let stops = c.axes.stops;
    c.interlock.safe = false;
    assert_eq!(c.tick(), Some(Trip::Interlock));
    assert!(!c.enabled(), "the trip disables motion");
    assert_eq!(c.axes.stops, stops + 1, "the trip stops every axis");
    // Latched, reported, and a second tick does not report it again.
    assert_eq!(c.tick(), None);
    assert_eq!(c.trip(), Some(Trip::Interlock));
    let s = expect(&mut c, "status", "ok enabled=0 interlock=open");
    assert_eq!(field(&s, "trip"), Some("interlock"), "{s}");
    let m = expect(&mut c, "move arm=50", "err 409");
    assert!(m.contains("stopped when it opened"), "{m}");
    // No enable while the interlock is open; once safe, enable clears the trip.
    expect(&mut c, "enable", "err 409");
    c.interlock.safe = true;
    expect(&mut c, "enable", "ok enabled=1 cleared=interlock");
    let s = expect(&mut c, "status", "ok enabled=1");
    assert_eq!(field(&s, "trip"), None, "{s}");
    expect(&mut c, "move arm=50", "ok arm_steps=");
}

#[test]
fn an_interlock_that_opens_is_seen_before_the_next_request_without_a_tick() {
    // A firmware that never calls tick still gets the check before every request.
    let mut c = moving_console();
    c.interlock.safe = false;
    let m = expect(&mut c, "move arm=60", "err 409");
    assert!(m.contains("stopped when it opened"), "{m}");
    assert_eq!(c.trip(), Some(Trip::Interlock));
    // Closed again, the move still waits for a new enable.
    c.interlock.safe = true;
    let m = expect(&mut c, "move arm=60", "err 408");
    assert!(m.contains("the interlock opened"), "{m}");
}

#[test]
fn an_open_interlock_while_disabled_and_at_rest_is_no_trip() {
    let mut c = sim_console();
    c.interlock.safe = false;
    assert_eq!(c.tick(), None);
    let s = expect(&mut c, "status", "ok enabled=0 interlock=open");
    assert_eq!(field(&s, "trip"), None, "{s}");
}

#[test]
fn a_driver_fault_stops_every_axis_and_forgets_that_axis() {
    for kind in [FaultKind::Stall, FaultKind::LimitSwitch, FaultKind::Driver] {
        let mut c = moving_console();
        let stops = c.axes.stops;
        let f = AxisFault {
            axis: AxisId::Arm,
            kind,
        };
        c.axes.fault = Some(f);
        assert_eq!(c.tick(), Some(Trip::Axis(f)));
        assert_eq!(c.axes.stops, stops + 1);
        assert!(!c.enabled());
        assert!(!c.position_known(AxisId::Arm), "{kind:?}");
        assert!(
            c.position_known(AxisId::Tilt),
            "{kind:?}: only the faulted axis"
        );
        let s = expect(&mut c, "status", "ok enabled=0");
        assert_eq!(field(&s, "trip"), Some(kind.name()), "{s}");
        assert_eq!(field(&s, "trip_axis"), Some("arm"), "{s}");
        assert_eq!(field(&s, "unknown"), Some("arm"), "{s}");
        let m = expect(&mut c, "move tilt=5", "err 408");
        assert!(m.contains("axis fault"), "{m}");
        // After enable, the other axes move; the faulted one waits for `home`.
        expect(
            &mut c,
            "enable",
            &format!("ok enabled=1 cleared={}", kind.name()),
        );
        expect(&mut c, "move tilt=5", "ok tilt_steps=");
        expect(&mut c, "move arm=50", "err 320");
        expect(&mut c, "disable", "ok");
        expect(&mut c, "home name=arm at=35", "ok name=arm");
        expect(&mut c, "enable", "ok enabled=1");
        expect(&mut c, "move arm=50", "ok arm_steps=");
    }
}

#[test]
fn a_fault_during_a_stream_is_seen_at_the_next_line() {
    let mut c = moving_console();
    let mut out = Vec::new();
    for &b in b"plan kind=track from=50 to=150 step=1\n" {
        c.push(b, &mut out).expect("written");
    }
    assert!(c.poll(&mut out).expect("written"));
    c.axes.fault = Some(AxisFault {
        axis: AxisId::Tilt,
        kind: FaultKind::Stall,
    });
    c.poll(&mut out).expect("written");
    assert!(!c.enabled());
    assert!(!c.position_known(AxisId::Tilt));
    assert!(c.axes.fault.is_none(), "taken at the poll");
}

#[test]
fn the_first_trip_is_the_one_reported() {
    let mut c = moving_console();
    c.interlock.safe = false;
    c.tick();
    c.interlock.safe = true;
    c.axes.fault = Some(AxisFault {
        axis: AxisId::Azimuth,
        kind: FaultKind::Driver,
    });
    c.tick();
    assert_eq!(c.trip(), Some(Trip::Interlock));
    assert!(
        !c.position_known(AxisId::Azimuth),
        "the later fault still forgets"
    );
}

#[test]
fn a_move_while_an_axis_moves_is_refused_and_stop_is_answered() {
    let mut c = sim_console();
    c.axes = SimAxes {
        slow: true,
        ..SimAxes::default()
    };
    expect(&mut c, "enable", "ok enabled=1");
    expect(&mut c, "move arm=40", "ok arm_steps=");
    let moves = c.axes.moves;
    expect(&mut c, "move arm=60", "err 324");
    assert_eq!(c.axes.moves, moves, "nothing started");
    let s = expect(&mut c, "status", "ok enabled=1");
    assert_eq!(field(&s, "moving"), Some("1"), "{s}");
    // Configuration waits for rest too; stop is answered while moving and latches.
    expect(&mut c, "stop", "ok stopped=motion");
    expect(&mut c, "move arm=60", "err 408");
    expect(&mut c, "enable", "ok enabled=1");
    expect(&mut c, "move arm=60", "ok arm_steps=");
    c.axes.arrive();
    expect(&mut c, "move arm=70", "ok arm_steps=");
}
