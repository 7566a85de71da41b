//! The motion-safety property suite of issue 13: random sequences of every kind of
//! request — moves by angle and by solution, `aim`, `enable`, `disable`, `stop`,
//! `reset`, calibration changes (`steps_per_deg`, `home_offset_deg`, `wrap`, `fitted`),
//! geometry changes (limits, zones, backlash, approach, speed, acceptance), `set`,
//! plans, dumps, interlock flips and garbage — sent to a console on simulated axes that
//! model the **physical** machine, with an independent checker.
//!
//! The physical machine (the "world" below) is fixed: each axis turns by Δsteps /
//! (its reference steps per degree) whatever the console believes, and has fixed
//! physical limits and forbidden zones — the factory geometry (arm ±165° with the gun's
//! shadow [−12°, 12°], tilt ±80°, a continuous azimuth, an elevation of ±60° when
//! fitted). Its reference calibration differs from the factory one on the arm (1422.2222
//! steps/deg, home −0.35°, as bench B in docs/rigs/bench-b.toml) and the tilt, so that
//! `reset` really swaps in a wrong calibration (issue 13, case 1).
//!
//! What a technician does is modelled as the one thing the controller must be told:
//! "home" means disable, clear the extra zones, enter the reference calibration and the
//! physical limits, and declare the axis where it physically stands (`home name=A
//! at=DEG`). Declarations are always true; the controller cannot check them (it is not
//! an interlock, docs/PROTOCOL.md "Safety model"). Every other request is random, and
//! geometry changes only add restrictions to the physical ones (extra zones in slots
//! 1–3, limits within the physical limits): loosening a real limit is the operator's
//! decision, not a safety property of the controller.
//!
//! Checked after every request (common practice, no source: these are the duties of a
//! motion controller that is told its machine's limits):
//!
//! * nothing moves unless a `move` was answered `ok` while enabled with the interlock
//!   safe — in particular nothing moves while disabled;
//! * an axis moves only from where the console believes it stands being where it
//!   physically stands (within half a reference step and f32 rounding): never from a
//!   position it does not know (after `reset` or a calibration change);
//! * no leg of any motion (backlash turn-round included) leaves the physical limits or
//!   meets the interior of a physical zone, by an f64 interval computation on the
//!   physical angles;
//! * every `ok` move lands within its reported residual of its target (raw angles,
//!   modulo 360° on the azimuth), and a move to a solution lands on the angles `aim`
//!   listed for it;
//! * nothing starts while an axis still travels (the world can be told a move has not
//!   arrived yet: `err 324`);
//! * a driver fault — injected as a stall, limit-switch hit or driver error part-way
//!   along the axis's last leg, so that the axis really stands short of its counter — is
//!   taken before the next request runs, stops motion, and leaves that axis's position
//!   unknown; the physical check above then proves no move starts from the stale counter.
//!
//! Size: 4 tests × 64 sessions × 4,000 steps, each step one or more requests (a
//! technician's homing is five to seven): each test sends at least 250,000 requests
//! (counted and asserted), over 10^6 in all — 1,264,896 at the last change, with 50,781
//! motions `ok`, 81,410 legs checked, 8,363 injected faults and 41,475 moves refused
//! while an axis travelled — in about 10 s of a debug build. The seeds are
//! fixed, so a failure is reproduced by running the test again; its message gives the
//! physical angles, the counters and the last 40 requests.

use matterwave_core::console::sim::{SimDetector, SimInterlock};
use matterwave_core::console::{AxisDriver, AxisFault, Console, FaultKind};
use matterwave_core::goniometer::axis_index;
use matterwave_core::AxisId;
use matterwave_tests::Rng;

/// Sessions per test, and random steps per session.
const SESSIONS: u64 = 64;
const STEPS: usize = 4_000;

/// Tolerance of the physical checks, degrees: half a reference step (at most 0.0005°
/// here), the six decimals a declaration is sent with, and f32 rounding of angles up to
/// a few thousand degrees (ulp 0.00024° at 3600°).
const EPS: f64 = 2e-3;

/// The physical machine.
#[derive(Clone, Copy)]
struct Axis {
    /// Reference microsteps per degree: what one step really turns.
    spd: f64,
    /// Reference home offset, degrees (the calibration a technician enters).
    home: f64,
    /// Whether the axis turns without end.
    wrap: bool,
    /// Physical soft limits, degrees (none when `wrap`).
    min: f64,
    max: f64,
    /// A physical forbidden zone, degrees.
    zone: Option<(f64, f64)>,
}

const WORLD: [Axis; 4] = [
    // Arm: bench B's calibration, the factory limits and gun shadow.
    Axis {
        spd: 1422.2222,
        home: -0.35,
        wrap: false,
        min: -165.0,
        max: 165.0,
        zone: Some((-12.0, 12.0)),
    },
    // Elevation: the default fitted axis.
    Axis {
        spd: 888.8889,
        home: 0.0,
        wrap: false,
        min: -60.0,
        max: 60.0,
        zone: None,
    },
    // Tilt: a finer gear than the factory's and a home off zero.
    Axis {
        spd: 1000.0,
        home: 0.5,
        wrap: false,
        min: -80.0,
        max: 80.0,
        zone: None,
    },
    // Azimuth: the factory's.
    Axis {
        spd: 444.44446,
        home: 0.0,
        wrap: true,
        min: -180.0,
        max: 180.0,
        zone: None,
    },
];

/// One leg of a physical motion: axis, from and to, degrees.
type Leg = (AxisId, f64, f64);

/// Simulated axes as the physical machine: counters the console reads and sets, and
/// the physical angle each axis really stands at.
struct World {
    counter: [i32; 4],
    phys: [f64; 4],
    legs: Vec<Leg>,
    /// Each axis's last leg (from, to), for a stall part-way along it.
    last: [Option<(f64, f64)>; 4],
    /// A fault the drivers report at the next poll.
    fault: Option<AxisFault>,
    /// Whether an axis is still travelling (a slow arrival the suite sets).
    moving: bool,
}

impl AxisDriver for World {
    fn position(&mut self, axis: AxisId) -> i32 {
        self.counter[axis_index(axis)]
    }
    fn set_position(&mut self, axis: AxisId, steps: i32) {
        // A declaration sets the counter; nothing turns.
        self.counter[axis_index(axis)] = steps;
    }
    fn start(&mut self, axis: AxisId, via: Option<i32>, target: i32) {
        let i = axis_index(axis);
        for to in via.into_iter().chain([target]) {
            let from = self.phys[i];
            let d = f64::from(to) - f64::from(self.counter[i]);
            self.phys[i] = from + d / WORLD[i].spd;
            self.counter[i] = to;
            self.legs.push((axis, from, self.phys[i]));
            self.last[i] = Some((from, self.phys[i]));
        }
    }
    fn busy(&mut self) -> bool {
        self.moving
    }
    fn stop(&mut self) {
        self.moving = false;
    }
    fn take_fault(&mut self) -> Option<AxisFault> {
        self.fault.take()
    }
}

type Con = Console<World, SimDetector, SimInterlock>;

/// What the suite saw, for the coverage asserts and the printout.
#[derive(Default, Debug, Clone, Copy)]
struct Stats {
    requests: u64,
    ok_moves: u64,
    legs: u64,
    refused_unknown: u64,
    refused_at_rest: u64,
    refused_coarse: u64,
    refused_residual: u64,
    resets: u64,
    declared: u64,
    calibration_changes: u64,
    sol_moves: u64,
    faults: u64,
    refused_moving: u64,
}

impl Stats {
    fn add(&mut self, o: &Stats) {
        self.requests += o.requests;
        self.ok_moves += o.ok_moves;
        self.legs += o.legs;
        self.refused_unknown += o.refused_unknown;
        self.refused_at_rest += o.refused_at_rest;
        self.refused_coarse += o.refused_coarse;
        self.refused_residual += o.refused_residual;
        self.resets += o.resets;
        self.declared += o.declared;
        self.calibration_changes += o.calibration_changes;
        self.sol_moves += o.sol_moves;
        self.faults += o.faults;
        self.refused_moving += o.refused_moving;
    }
}

/// The angles `aim` listed for one solution: (axis, degrees).
type Listed = Vec<(AxisId, f64)>;

struct Session {
    c: Con,
    rng: Rng,
    stats: Stats,
    /// The last `aim` listing, by solution index.
    listed: Vec<Listed>,
    /// The latest requests, for failure messages.
    history: Vec<String>,
}

/// The number a reply line gives for `key`.
fn field(line: &str, key: &str) -> Option<f64> {
    line.split(' ')
        .find_map(|t| t.strip_prefix(key)?.strip_prefix('='))
        .and_then(|v| v.parse().ok())
}

impl Session {
    fn new(seed: u64) -> Session {
        let mut c = Console::new(
            World {
                counter: [0; 4],
                phys: [20.0, 0.0, 0.0, 0.0],
                legs: Vec::new(),
                last: [None; 4],
                fault: None,
                moving: false,
            },
            SimDetector::default(),
            SimInterlock { safe: true },
        )
        .expect("factory settings");
        // At power-up the counters mean nothing: the firmware forgets them.
        c.forget_positions();
        let mut s = Session {
            c,
            rng: Rng::seeded(seed),
            stats: Stats::default(),
            listed: Vec::new(),
            history: Vec::new(),
        };
        for id in [AxisId::Arm, AxisId::Tilt, AxisId::Azimuth] {
            s.technician_homes(id);
        }
        s
    }

    fn fail(&self, what: &str) -> ! {
        panic!(
            "{what}\nworld {:?} counters {:?}\nlast requests:\n{}",
            self.c.axes.phys,
            self.c.axes.counter,
            self.history.join("\n")
        );
    }

    /// Sends one request (streams polled to their end); returns its final line, after
    /// checking every motion it caused.
    fn send(&mut self, line: &str) -> String {
        if self.history.len() >= 40 {
            self.history.remove(0);
        }
        self.history.push(line.to_string());
        self.stats.requests += 1;
        let enabled = self.c.enabled();
        let safe = self.c.interlock.safe;
        let moving = self.c.axes.moving;
        let fault = self.c.axes.fault;
        let counters = self.c.axes.counter;
        let phys = self.c.axes.phys;
        let settings = *self.c.settings();
        let mut out = Vec::new();
        self.c
            .feed_all(format!("{line}\n").as_bytes(), &mut out)
            .expect("reply written");
        let text = String::from_utf8(out).expect("ASCII reply");
        let last = text.lines().last().unwrap_or("").to_string();
        let legs = std::mem::take(&mut self.c.axes.legs);
        let is_move = line.starts_with("move ");
        if !legs.is_empty() {
            if !(is_move && last.starts_with("ok") && enabled && safe) {
                self.fail(&format!(
                    "motion by {line} -> {last} (enabled {enabled}, safe {safe})"
                ));
            }
            if moving || fault.is_some() {
                self.fail(&format!(
                    "motion by {line} -> {last} while an axis moved ({moving}) or a fault was pending ({fault:?})"
                ));
            }
            self.stats.ok_moves += 1;
        }
        // A fault is seen before the request runs: motion is stopped and disabled (an
        // `enable` may follow at once), and the faulted axis's position is unknown.
        if let Some(f) = fault {
            self.stats.faults += 1;
            if self.c.axes.fault.is_some() || self.c.axes.moving {
                self.fail(&format!(
                    "fault {f:?} not taken, or motion not stopped, by {line}"
                ));
            }
            if (self.c.enabled() && !line.starts_with("enable")) || self.c.position_known(f.axis) {
                self.fail(&format!(
                    "after fault {f:?} and {line} -> {last}: enabled {}, position known {}",
                    self.c.enabled(),
                    self.c.position_known(f.axis)
                ));
            }
        }
        // Where the console believed each moved axis stood, against where it stood.
        for id in AxisId::ALL {
            let i = axis_index(id);
            if !legs.iter().any(|l| l.0 == id) {
                continue;
            }
            let Ok(cfg) = settings.rig.axis(id) else {
                self.fail(&format!("{id:?} moved without being fitted: {line}"));
            };
            let belief = f64::from(cfg.home_offset_deg)
                + f64::from(counters[i]) / f64::from(cfg.steps_per_deg);
            if (belief - phys[i]).abs() > EPS {
                self.fail(&format!(
                    "{id:?} moved from a position the console did not know: believed {belief}, stood at {}: {line}",
                    phys[i]
                ));
            }
        }
        for &(id, from, to) in &legs {
            self.stats.legs += 1;
            if let Err(e) = leg_ok(&WORLD[axis_index(id)], from, to) {
                self.fail(&format!("{id:?}: {e}: {line} -> {last}"));
            }
        }
        if is_move && last.starts_with("ok") {
            self.check_landing(line, &last);
        }
        if line.starts_with("aim") {
            self.listed = text
                .lines()
                .filter(|l| l.starts_with("- sol="))
                .map(|l| {
                    let mut v = vec![
                        (AxisId::Arm, field(l, "arm").unwrap_or(f64::NAN)),
                        (AxisId::Tilt, field(l, "tilt").unwrap_or(f64::NAN)),
                        (AxisId::Azimuth, field(l, "azimuth").unwrap_or(f64::NAN)),
                    ];
                    if settings.rig.elevation.is_some() {
                        v.push((AxisId::Elevation, field(l, "elevation").unwrap_or(f64::NAN)));
                    }
                    v
                })
                .collect();
        }
        let code = last.strip_prefix("err ").and_then(|r| r.get(..3));
        match code {
            Some("320") => self.stats.refused_unknown += 1,
            Some("321") => self.stats.refused_at_rest += 1,
            Some("322") => self.stats.refused_coarse += 1,
            Some("323") => self.stats.refused_residual += 1,
            Some("324") => self.stats.refused_moving += 1,
            _ => {}
        }
        last
    }

    /// An `ok` move landed where it said: raw targets within the reported residual,
    /// solutions on the listed angles.
    fn check_landing(&mut self, line: &str, reply: &str) {
        let phys = self.c.axes.phys;
        if let Some(n) = field(line, "sol") {
            self.stats.sol_moves += 1;
            let Some(listed) = self.listed.get(n as usize).cloned() else {
                self.fail(&format!("{line} answered ok without a listed solution"));
            };
            for (id, angle) in listed {
                let p = phys[axis_index(id)];
                if (p - angle).abs() > EPS {
                    self.fail(&format!(
                        "{id:?} landed at {p}, listed {angle}: {line} -> {reply}"
                    ));
                }
            }
            return;
        }
        for id in AxisId::ALL {
            let Some(target) = field(line, id.name()) else {
                continue;
            };
            let residual = field(reply, &format!("{}_residual", id.name()))
                .unwrap_or_else(|| self.fail(&format!("no residual for {id:?}: {reply}")));
            let p = phys[axis_index(id)];
            let mut d = target - residual - p;
            if WORLD[axis_index(id)].wrap {
                d -= 360.0 * (d / 360.0).round();
            }
            if d.abs() > EPS {
                self.fail(&format!(
                    "{id:?} landed at {p}, {d} from target {target} less residual {residual}: {line} -> {reply}"
                ));
            }
        }
    }

    /// What a technician does to make an axis movable: stop motion, clear the extra
    /// zones, enter the reference calibration and the physical limits, and declare
    /// where the axis physically stands. A step refused on the way (say, an
    /// acceptance too narrow for the reference step) ends it: no false declaration.
    fn technician_homes(&mut self, id: AxisId) {
        let w = WORLD[axis_index(id)];
        let name = id.name();
        self.send("disable");
        let fitted = if id == AxisId::Elevation {
            " fitted=1"
        } else {
            ""
        };
        if id == AxisId::Elevation && !self.send("axis name=elevation fitted=1").starts_with("ok") {
            return;
        }
        for i in 1..4 {
            self.send(&format!("zone name={name} i={i} off"));
        }
        let cal = format!(
            "axis name={name}{fitted} steps_per_deg={} home_offset_deg={} min_deg={} max_deg={} wrap={}",
            w.spd, w.home, w.min, w.max, w.wrap as i32
        );
        if !self.send(&cal).starts_with("ok") {
            return;
        }
        let at = self.c.axes.phys[axis_index(id)];
        if self
            .send(&format!("home name={name} at={at:.6}"))
            .starts_with("ok")
        {
            self.stats.declared += 1;
        }
    }

    /// One random step: a request (or a technician's homing, or an interlock flip).
    fn step(&mut self) {
        const AXES: [&str; 4] = ["arm", "tilt", "azimuth", "elevation"];
        if !self.c.interlock.safe && self.rng.below(4) == 0 {
            self.c.interlock.safe = true;
        }
        let kind = self.rng.weighted(&[
            40, // 0 move by angle
            5,  // 1 move by solution
            5,  // 2 aim
            30, // 3 enable
            3,  // 4 disable
            2,  // 5 stop
            1,  // 6 reset
            6,  // 7 technician homes an axis
            5,  // 8 calibration change
            5,  // 9 limits or zones
            3,  // 10 backlash, approach, speed
            5,  // 11 set
            2,  // 12 interlock flip
            3,  // 13 queries
            1,  // 14 plan
            1,  // 15 garbage and refused forms
            1,  // 16 a driver fault (a stall part-way along the axis's last leg)
            3,  // 17 a move still travelling, or arriving
        ]);
        let r = &mut self.rng;
        let line = match kind {
            0 => {
                let n = 1 + r.below(2);
                let mut l = String::from("move");
                let mut used = Vec::new();
                for _ in 0..n {
                    let a = r.weighted(&[6, 3, 3, 1]);
                    if used.contains(&a) {
                        continue;
                    }
                    used.push(a);
                    let x = match a {
                        0 => r.range(-175.0, 175.0),
                        1 => r.range(-90.0, 90.0),
                        2 => r.range(-400.0, 400.0),
                        _ => r.range(-70.0, 70.0),
                    };
                    l.push_str(&format!(" {}={x:.3}", AXES[a]));
                }
                l
            }
            1 => {
                // Mostly right after an `aim`, as a technician would.
                let n = r.below(3);
                if r.below(3) > 0 {
                    self.send("aim");
                }
                format!("move sol={n}")
            }
            2 => match r.below(3) {
                0 => "aim".to_string(),
                _ => format!(
                    "aim beam={},{}",
                    r.below(5) as i32 - 2,
                    r.below(5) as i32 - 2
                ),
            },
            3 => "enable".to_string(),
            4 => "disable".to_string(),
            5 => "stop".to_string(),
            6 => {
                self.stats.resets += 1;
                "reset".to_string()
            }
            7 => {
                let id = [
                    AxisId::Arm,
                    AxisId::Tilt,
                    AxisId::Azimuth,
                    AxisId::Elevation,
                ][r.weighted(&[4, 3, 3, 1])];
                self.technician_homes(id);
                return;
            }
            8 => {
                self.stats.calibration_changes += 1;
                let a = r.weighted(&[4, 3, 3, 1]);
                let w = WORLD[[0, 2, 3, 1][a]];
                let name = AXES[a];
                match r.below(4) {
                    0 => {
                        let v = match r.below(3) {
                            0 => w.spd,
                            1 => w.spd * r.range(0.5, 2.0),
                            _ => r.range(0.01, 3.0),
                        };
                        format!("axis name={name} steps_per_deg={v}")
                    }
                    1 => {
                        let v = if r.below(3) == 0 {
                            w.home
                        } else {
                            r.range(-40.0, 40.0)
                        };
                        format!("axis name={name} home_offset_deg={v:.3}")
                    }
                    2 => format!("axis name={name} wrap={}", r.below(2)),
                    _ => format!("axis name=elevation fitted={}", r.below(2)),
                }
            }
            9 => {
                let a = r.weighted(&[4, 3, 3, 1]);
                let w = WORLD[[0, 2, 3, 1][a]];
                let name = AXES[a];
                match r.below(4) {
                    0 => format!("axis name={name} min_deg={:.2}", r.range(w.min, w.max)),
                    1 => format!("axis name={name} max_deg={:.2}", r.range(w.min, w.max)),
                    2 => format!("zone name={name} i={} off", 1 + r.below(3)),
                    _ => {
                        let from = r.range(w.min, w.max);
                        let to = from + r.range(0.5, 40.0);
                        format!(
                            "zone name={name} i={} from={from:.2} to={to:.2}",
                            1 + r.below(3)
                        )
                    }
                }
            }
            10 => {
                let name = AXES[r.weighted(&[4, 3, 3, 1])];
                match r.below(3) {
                    0 => format!("axis name={name} backlash_deg={:.3}", r.range(0.0, 2.0)),
                    1 => format!(
                        "axis name={name} approach={}",
                        r.select(&["from-below", "from-above"])
                    ),
                    _ => format!("axis name={name} max_speed_deg_s={:.1}", r.range(1.0, 30.0)),
                }
            }
            11 => match r.below(6) {
                0 => format!("set acceptance={:.4}", r.range(0.003, 5.0)),
                1 => format!("set tilt={:.2}", r.range(-60.0, 60.0)),
                2 => format!("set energy={:.1}", r.range(20.0, 300.0)),
                3 => format!(
                    "set beam={},{}",
                    r.below(5) as i32 - 2,
                    r.below(5) as i32 - 2
                ),
                4 => format!(
                    "set azimuth={}",
                    r.select(&["free", "free", "0", "30", "-45", "90"])
                ),
                _ => format!("set branch={}", r.select(&["nearest", "+1", "-1"])),
            },
            12 => {
                // The interlock opens (a door, the vacuum); it closes again a few steps
                // later (see the start of `step`).
                self.c.interlock.safe = false;
                return;
            }
            13 => r
                .select(&["pos", "status", "get", "hello", "axis name=arm"])
                .to_string(),
            14 => match r.below(3) {
                0 => {
                    let from = r.range(-150.0, 130.0);
                    format!(
                        "plan kind=sweep from={from:.1} to={:.1} step=5",
                        from + 20.0
                    )
                }
                1 => "plan kind=track from=50 to=110 step=20".to_string(),
                _ => "dump".to_string(),
            },
            16 => {
                // The motor stalls part-way along its last leg (or the limit switch or
                // the driver trips there): the axis stands short of where its counter
                // says, and the drivers report it.
                if self.c.axes.fault.is_some() {
                    return; // one fault at a time: the drivers report each one
                }
                let id = AxisId::ALL[r.below(4)];
                let kind =
                    [FaultKind::Stall, FaultKind::LimitSwitch, FaultKind::Driver][r.below(3)];
                let f = r.range(0.2, 0.9);
                let i = axis_index(id);
                if let Some((from, to)) = self.c.axes.last[i] {
                    self.c.axes.phys[i] = from + f * (to - from);
                    self.c.axes.last[i] = None;
                }
                self.c.axes.fault = Some(AxisFault { axis: id, kind });
                return;
            }
            17 => {
                // Moves take time: the axes are still travelling, or arrive.
                self.c.axes.moving =
                    !self.c.axes.moving && self.c.axes.last.iter().any(Option::is_some);
                return;
            }
            _ => r
                .select(&[
                    "move arm=nan",
                    "move sol=-1",
                    "move",
                    "home",
                    "home name=gun",
                    "home name=arm at=nan",
                    "axis name=arm steps_per_deg=1e-45",
                    "axis name=azimuth min_deg=170 max_deg=-170",
                    "zone name=arm i=0 from=1 to=0",
                    "frobnicate",
                ])
                .to_string(),
        };
        self.send(&line);
    }
}

/// Independent check of one physical leg: within the physical limits (unless the axis
/// wraps) and clear of the interior of the physical zone. The physical machine never
/// stands in a zone or beyond a limit, so no exemption is needed.
fn leg_ok(w: &Axis, from: f64, to: f64) -> Result<(), String> {
    let (lo, hi) = (from.min(to), from.max(to));
    if !w.wrap && (lo < w.min - EPS || hi > w.max + EPS) {
        return Err(format!(
            "path {from}..{to} leaves the physical limits {}..{}",
            w.min, w.max
        ));
    }
    if let Some((zf, zt)) = w.zone {
        if zf + EPS <= hi && zt - EPS >= lo {
            return Err(format!(
                "path {from}..{to} crosses the physical zone {zf}..{zt}"
            ));
        }
    }
    Ok(())
}

/// Runs `SESSIONS` sessions from seeds `first..`; returns what they saw.
fn run(first: u64) -> Stats {
    let mut total = Stats::default();
    for seed in first..first + SESSIONS {
        let mut s = Session::new(seed);
        for _ in 0..STEPS {
            s.step();
        }
        total.add(&s.stats);
    }
    total
}

/// Every run covers what it is meant to: moves that happened, and each new refusal.
fn check_coverage(st: &Stats) {
    eprintln!("motion safety: {st:?}");
    assert!(st.requests >= 250_000, "{st:?}");
    assert!(st.ok_moves >= 10_000 && st.sol_moves >= 100, "{st:?}");
    assert!(
        st.refused_unknown >= 1_000 && st.refused_at_rest >= 1_000,
        "{st:?}"
    );
    assert!(st.refused_coarse >= 100 && st.resets >= 100, "{st:?}");
    assert!(
        st.declared >= 1_000 && st.calibration_changes >= 1_000,
        "{st:?}"
    );
    assert!(st.faults >= 1_000 && st.refused_moving >= 500, "{st:?}");
}

#[test]
fn motion_stays_physically_safe_a() {
    check_coverage(&run(1_000));
}

#[test]
fn motion_stays_physically_safe_b() {
    check_coverage(&run(2_000));
}

#[test]
fn motion_stays_physically_safe_c() {
    check_coverage(&run(3_000));
}

#[test]
fn motion_stays_physically_safe_d() {
    check_coverage(&run(4_000));
}
