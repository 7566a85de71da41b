//! One operation, for tests/firmware/profile.sh: QEMU logs every translation block
//! executed between [`mark_start`] and [`mark_end`], and the script adds up the
//! instructions per function. The operation is chosen when the image is built, by the
//! environment variable `MW_PROFILE`:
//!
//! * `aim`: `goniometer::aim` as `measure` calls it (Ni(111), beam 1,0, tilt 10°);
//! * `beam_list`: `Face::beams` for Ni(111) at 200 eV, normal incidence;
//! * `console:R1;R2;…;Rn`: requests R1 … Rn−1 fed to a fresh console, then Rn profiled
//!   (byte by byte, every streamed line to a counting sink).
//!
//! `MW_PROFILE_N` (default 1) repeats the profiled operation.
#![no_std]
#![no_main]

use core::hint::black_box;

use cortex_m_rt::entry;
use embedded_io::{ErrorType, Write};
use matterwave_core::goniometer::{self, AimRequest, Mode, Rig, Solution};
use matterwave_core::surface::{Face, Incidence, SurfaceBeam};
use matterwave_core::table;
use matterwave_firmware::{fail, pass, sim_console, Uart};

struct Count(u32);

impl ErrorType for Count {
    type Error = core::convert::Infallible;
}

impl Write for Count {
    fn write(&mut self, buf: &[u8]) -> Result<usize, Self::Error> {
        self.0 += buf.len() as u32;
        Ok(buf.len())
    }
    fn flush(&mut self) -> Result<(), Self::Error> {
        Ok(())
    }
}

/// The profiled region starts when this runs (profile.sh looks for its name).
#[inline(never)]
#[no_mangle]
pub extern "C" fn mark_start() {
    black_box(0);
}

/// The profiled region ends when this runs.
#[inline(never)]
#[no_mangle]
pub extern "C" fn mark_end() {
    black_box(1);
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

#[entry]
fn main() -> ! {
    let mut uart = Uart::uart0();
    let what = option_env!("MW_PROFILE").unwrap_or("aim");
    let n: u32 = option_env!("MW_PROFILE_N")
        .and_then(|s| s.parse().ok())
        .unwrap_or(1);
    if what == "aim" {
        let face = ni111();
        let Ok(rig) = black_box(Rig::bench_default()).checked() else {
        fail("the bench rig is invalid")
    };
        let mut out = [Solution::EMPTY; 8];
        mark_start();
        for i in 0..n {
            let e = black_box(50.0 + i as f32 * 0.1);
            let req = AimRequest::new(&face, [1, 0], e, 10.0).with_mode(Mode::InPlane);
            black_box(goniometer::aim_checked(&rig, &req, &[0; 4], &mut out).ok());
        }
        mark_end();
    } else if what == "beam_list" {
        let face = ni111();
        let Ok(inc) = Incidence::normal(200.0) else {
            fail("incidence")
        };
        let mut beams = [SurfaceBeam::EMPTY; 64];
        mark_start();
        for _ in 0..n {
            black_box(face.beams(black_box(&inc), &mut beams).ok());
        }
        mark_end();
    } else if let Some(reqs) = what.strip_prefix("console:") {
        let mut console = sim_console();
        let mut sink = Count(0);
        let mut parts = reqs.split(';').peekable();
        while let Some(r) = parts.next() {
            let last = parts.peek().is_none();
            if last {
                mark_start();
                for _ in 0..n {
                    let _ = console.feed_all(r.as_bytes(), &mut sink);
                    let _ = console.feed_all(b"\n", &mut sink);
                }
                mark_end();
            } else {
                let _ = console.feed_all(r.as_bytes(), &mut sink);
                let _ = console.feed_all(b"\n", &mut sink);
            }
        }
        uart.puts("bytes=");
        uart.put_u32(sink.0);
        uart.puts("\n");
    } else {
        fail("MW_PROFILE: aim, beam_list or console:R1;...;Rn");
    }
    uart.puts("profile done\n");
    pass()
}
