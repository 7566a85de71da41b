//! Instruction counts of the core's hot paths on the Cortex-M4F, for
//! tests/firmware/measure.sh. Run under QEMU with `-icount shift=0` (one instruction
//! per nanosecond): SysTick on the 25 MHz clock, 1 tick = 40 instructions, each
//! operation repeated N times and the same loop with an empty body subtracted. Prints
//! `key=value` lines on UART0, then exits 0.
//!
//! The operations (the same inputs as the plain C reference where it has one):
//! * `wavelength`: `beam::wavelength_a(20 + i)`;
//! * `inplane_steps`: in-plane aim → microsteps from core parts:
//!   `goniometer::in_plane_arm_deg` for Ni(111) (1,0) at tilt 10°, 50 + 0.1·i eV, then
//!   `AxisConfig::check_angle` and `steps_for_deg` on an arm with ±170° limits and a
//!   ±10° zone;
//! * `aim`: `goniometer::aim_checked` as the console calls it (the bench rig checked
//!   once, as the console holds it; in-plane, nearest
//!   branch, same beam and energies);
//! * `beam_list`: `Face::beams` for Ni(111), a = 3.524 Å, at 200 eV, normal incidence
//!   (the sorted list, specular beam included);
//! * `console_beams`: the request line `beams` (same crystal, energy and tilt 0) fed
//!   byte by byte, every streamed line written to a counting sink;
//! * `console_aim`: the request line `aim` (tilt 10°, beam 1,0) likewise;
//! * `format_roundtrip`, `format_fixed4`: one number near 37.93 in the console's shortest
//!   round-trip form, and with 4 fixed decimals;
//! * `worst_call`: the longest single `Console::push` or `Console::poll` call over a set
//!   of deliberately heavy requests (`HEAVY`: a (12,11,7) face of Cu at 300 keV for
//!   `beams`, `aim` and the plans, `budget`, fits over 64 points, `dump`, `help`, `set`
//!   lines of long numbers, an overlayer with twelve domains for `beams` and the sweep,
//!   a stepped face's longest phase list), each call timed alone — how long a `stop` waits at most
//!   for the call before it to finish. Built with `MW_WORST_EACH=1` in the environment,
//!   the image also prints the longest call of each of those requests.
#![no_std]
#![no_main]

use core::hint::black_box;

use cortex_m_rt::entry;
use embedded_io::{ErrorType, Write};
use matterwave_core::axis::{AxisConfig, Zone};
use matterwave_core::console::num::{self, NumBuf};
use matterwave_core::goniometer::{self, AimRequest, Mode, Rig, Solution};
use matterwave_core::surface::{Face, Incidence, SurfaceBeam};
use matterwave_core::{beam, table, AxisId};
use matterwave_firmware::{clock, fail, pass, sim_console, stack, sweep, Uart};

/// A sink that counts bytes and lines.
struct Count {
    bytes: u32,
    lines: u32,
}

impl ErrorType for Count {
    type Error = core::convert::Infallible;
}

impl Write for Count {
    fn write(&mut self, buf: &[u8]) -> Result<usize, Self::Error> {
        self.bytes += buf.len() as u32;
        self.lines += buf.iter().filter(|&&b| b == b'\n').count() as u32;
        Ok(buf.len())
    }
    fn flush(&mut self) -> Result<(), Self::Error> {
        Ok(())
    }
}

/// Ticks of `n` turns of a loop calling `f`.
#[inline(never)]
fn time<F: FnMut(u32)>(n: u32, mut f: F) -> u32 {
    let t0 = clock::now();
    for i in 0..n {
        f(black_box(i));
    }
    let t1 = clock::now();
    clock::ticks(t0, t1)
}

/// Instructions per call of `f`, the empty loop subtracted (rounded).
fn per_call<F: FnMut(u32)>(n: u32, f: F) -> u32 {
    let base = time(n, |i| {
        black_box(i);
    });
    let t = time(n, f);
    let instr = u64::from(t.saturating_sub(base)) * u64::from(clock::INSTR_PER_TICK);
    ((instr + u64::from(n) / 2) / u64::from(n)) as u32
}

fn report(uart: &mut Uart, key: &str, v: u32) {
    uart.puts(key);
    uart.puts("=");
    uart.put_u32(v);
    uart.puts("\n");
}

fn ni111() -> Face {
    let Ok(cell) = table::find("ni").and_then(|c| c.cell()) else {
        fail("no Ni in the table")
    };
    match Face::new(&cell, [1, 1, 1]) {
        Ok(f) => f,
        Err(_) => fail("Ni(111) rejected"),
    }
}

/// A request line of the heavy set, with its text built in place.
struct Line {
    buf: [u8; 120],
    len: usize,
}

impl Line {
    fn new() -> Line {
        Line {
            buf: [0; 120],
            len: 0,
        }
    }
    fn push(&mut self, s: &str) -> &mut Line {
        for &b in s.as_bytes() {
            if let Some(slot) = self.buf.get_mut(self.len) {
                *slot = b;
                self.len += 1;
            }
        }
        self
    }
    fn num(&mut self, x: f32) -> &mut Line {
        let mut nb: NumBuf = [0; 24];
        let t = num::format_f32_roundtrip(x, &mut nb);
        self.push(t)
    }
    fn bytes(&self) -> &[u8] {
        &self.buf[..self.len]
    }
}

/// The requests `worst_call` feeds, in order, each followed by its line end: a face of
/// high indices at 300 keV (the largest beam list and the slowest aim), plans stepping
/// a few points at 300 keV, the error budget, fits over a full point buffer, the dump,
/// help, and a `set` whose numbers all need the parser's exact path. `None` marks where
/// the 64 `pt` points of a fit go.
const HEAVY: [Option<&str>; 28] = [
    Some("set crystal=cu face=12,11,7 energy=300000 tilt=0"),
    Some("beams"),
    Some("set beam=1,0 tilt=10"),
    Some("aim"),
    Some("aim beam=0,0"),
    Some("aim beam=3,-2 branch=-1"),
    Some("set azimuth=33"),
    Some("aim"),
    Some("set azimuth=free"),
    Some("plan kind=track from=299000 to=300000 step=250"),
    Some("plan kind=iv from=299000 to=300000 step=250"),
    Some("plan kind=sweep from=20 to=160 step=35"),
    Some("budget"),
    Some("set crystal=cu face=100 energy=100 tilt=10 beam=1,0"),
    None,
    Some("fit kind=armzero"),
    Some("fit kind=peak"),
    Some("fit kind=centroid"),
    Some("dump"),
    Some("help"),
    Some("crystals"),
    Some("set energy=123.456789 cathode=1.23456789 sample=4.56789012 offset=0.123456789"),
    Some("set v0=12.3456789 tilt=10.1234567 acceptance=0.987654321 azimuth=123.456789"),
    Some("faces"),
    // An oblique overlayer with all twelve domains of a hexagonal mesh at 300 keV: its
    // beam list, the sweep that looks for its beams at every point, and a stepped face
    // with the longest phase list.
    Some("set crystal=cu face=111 energy=300000 tilt=0 overlayer=3,1,-1,2 domains=all beam=0,0"),
    Some("beams"),
    Some("plan kind=sweep from=20 to=160 step=35"),
    Some("steps miscut=0.5 height=100 from=1000 to=300000"),
];

/// The longest single `Console::push` (of any byte, the line end included) or
/// `Console::poll` over the heavy requests, instructions: how long a `stop` can wait
/// for the call before it. Reports `worst_call`, `worst_call_request` (which request)
/// and `worst_call_calls` (how many calls were timed).
fn worst_call(uart: &mut Uart) {
    let mut console = sim_console();
    let mut sink = Count { bytes: 0, lines: 0 };
    let (mut worst, mut worst_at, mut calls) = (0u32, 0usize, 0u32);
    let mut per = [0u32; HEAVY.len()];
    let mut timed = |console: &mut matterwave_firmware::SimConsole, line: &[u8], at: usize| {
        for &b in line.iter().chain(b"\n") {
            let t0 = clock::now();
            let _ = console.push(b, &mut sink);
            let t = clock::ticks(t0, clock::now());
            calls += 1;
            if let Some(p) = per.get_mut(at) {
                *p = (*p).max(t);
            }
            if t > worst {
                (worst, worst_at) = (t, at);
            }
            loop {
                let t0 = clock::now();
                let more = console.poll(&mut sink);
                let t = clock::ticks(t0, clock::now());
                calls += 1;
                if let Some(p) = per.get_mut(at) {
                    *p = (*p).max(t);
                }
                if t > worst {
                    (worst, worst_at) = (t, at);
                }
                if !matches!(more, Ok(true)) {
                    break;
                }
            }
        }
    };
    for (at, req) in HEAVY.iter().enumerate() {
        match req {
            Some(r) => timed(&mut console, r.as_bytes(), at),
            None => {
                // 64 points (the buffer's size) on the arm-zero model of Cu(100), beam
                // (1,0), tilt 10°, branch +1, 40 to 229 eV, the arm 0.25° off.
                let Ok(face) = table::find("cu")
                    .and_then(|c| c.cell())
                    .and_then(|c| Face::new(&c, [1, 0, 0]))
                else {
                    fail("no Cu(100)")
                };
                for i in 0..64 {
                    let e = 40.0 + 3.0 * i as f32;
                    let arm = goniometer::in_plane_arm_deg(&face, [1, 0], 10.0, 1, e)
                        .unwrap_or(0.0)
                        + 0.25;
                    let mut l = Line::new();
                    l.push("pt x=").num(e).push(" y=").num(arm);
                    timed(&mut console, l.bytes(), at);
                }
            }
        }
    }
    if option_env!("MW_WORST_EACH").is_some() {
        for (r, p) in HEAVY.iter().zip(per) {
            uart.puts(r.unwrap_or("pt"));
            uart.puts(" : ");
            uart.put_u32(p * clock::INSTR_PER_TICK);
            uart.puts("\n");
        }
    }
    report(uart, "worst_call", worst * clock::INSTR_PER_TICK);
    report(uart, "worst_call_calls", calls);
    uart.puts("worst_call_request=");
    uart.puts(match HEAVY.get(worst_at).copied().flatten() {
        Some(r) => r,
        None => "pt (64 points)",
    });
    uart.puts("\n");
}

#[entry]
fn main() -> ! {
    let mut uart = Uart::uart0();
    clock::start();
    report(&mut uart, "fast_math", cfg!(feature = "fast-math") as u32);
    let face = ni111();

    let v = per_call(2000, |i| {
        black_box(beam::wavelength_a(black_box(20.0 + i as f32)).ok());
    });
    report(&mut uart, "wavelength", v);

    let mut arm = AxisConfig::new(AxisId::Arm, 14222.2);
    arm.min_deg = -170.0;
    arm.max_deg = 170.0;
    arm.zones[0] = Some(Zone {
        from_deg: -10.0,
        to_deg: 10.0,
    });
    let arm = black_box(arm);
    let v = per_call(2000, |i| {
        let e = black_box(50.0 + i as f32 * 0.1);
        let steps = goniometer::in_plane_arm_deg(&face, [1, 0], 10.0, 1, e)
            .and_then(|d| arm.check_angle(d).map(|()| d))
            .and_then(|d| arm.steps_for_deg(d));
        black_box(steps.ok());
    });
    report(&mut uart, "inplane_steps", v);

    let Ok(rig) = black_box(Rig::bench_default()).checked() else {
        fail("the bench rig is invalid")
    };
    let pos = [0i32; 4];
    let mut out = [Solution::EMPTY; 8];
    let v = per_call(500, |i| {
        let e = black_box(50.0 + i as f32 * 0.1);
        let req = AimRequest::new(&face, [1, 0], e, 10.0).with_mode(Mode::InPlane);
        black_box(goniometer::aim_checked(&rig, &req, &pos, &mut out).ok());
    });
    report(&mut uart, "aim", v);

    let Ok(inc) = Incidence::normal(200.0) else {
        fail("incidence")
    };
    let mut beams = [SurfaceBeam::EMPTY; 64];
    let mut count = 0;
    let v = per_call(50, |_| {
        count = face
            .beams(black_box(&inc), &mut beams)
            .map_or(0, |l| l.stored);
        black_box(&beams);
    });
    report(&mut uart, "beam_list", v);
    report(&mut uart, "beam_list_beams", count as u32);

    // One number in the console's shortest round-trip form, and in fixed point.
    let mut nb: NumBuf = [0; 24];
    let v = per_call(500, |i| {
        black_box(
            num::format_f32_roundtrip(black_box(37.931_923 + i as f32 * 1e-3), &mut nb).len(),
        );
    });
    report(&mut uart, "format_roundtrip", v);
    let v = per_call(500, |i| {
        black_box(num::format_f32(black_box(37.931_923 + i as f32 * 1e-3), 4, &mut nb).len());
    });
    report(&mut uart, "format_fixed4", v);

    // The console, from factory settings.
    let mut console = sim_console();
    let mut sink = Count { bytes: 0, lines: 0 };
    let setup = b"set crystal=ni face=111 energy=200 tilt=0\n";
    let _ = console.feed_all(setup, &mut sink);
    for (key, req) in [
        ("console_beams", &b"beams\n"[..]),
        ("console_aim", &b"aim\n"[..]),
    ] {
        if key == "console_aim" {
            let _ = console.feed_all(b"set tilt=10 beam=1,0\n", &mut sink);
        }
        sink = Count { bytes: 0, lines: 0 };
        stack::paint();
        let sp = stack::sp();
        let _ = console.feed_all(req, &mut sink);
        let depth = stack::used_below(sp);
        let lines = sink.lines;
        let v = per_call(20, |_| {
            let _ = console.feed_all(black_box(req), &mut sink);
        });
        report(&mut uart, key, v);
        uart.puts(key);
        report(&mut uart, "_lines", lines);
        uart.puts(key);
        report(&mut uart, "_stack", depth as u32);
    }

    drop(console);
    worst_call(&mut uart);

    // RAM: the deepest stack over the documented sessions, a fresh console (on the
    // stack) for each, measured from the call.
    stack::paint();
    let sp = stack::sp();
    let r = sweep::run(&mut uart, false);
    report(&mut uart, "sweep_stack", stack::used_below(sp) as u32);
    report(&mut uart, "sweep_mismatches", r.mismatches);
    report(&mut uart, "static_ram", stack::static_ram() as u32);
    report(
        &mut uart,
        "console_size",
        core::mem::size_of_val(&sim_console()) as u32,
    );
    uart.puts("done\n");
    pass()
}
