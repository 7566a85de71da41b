//! The QEMU self-test: every documented console session (docs/PROTOCOL.md) runs on the
//! target through the console's byte intake, replies go out on UART0 and are compared
//! with the documented lines; exit status 0 (semihosting) when all match, 1 otherwise.
//! Also prints the deepest stack use over the sweep and the static RAM.
#![no_std]
#![no_main]

use cortex_m_rt::entry;
use matterwave_firmware::{fail, pass, stack, sweep, Uart};

#[entry]
fn main() -> ! {
    let mut uart = Uart::uart0();
    uart.puts("selftest: docs/PROTOCOL.md sessions on the target (");
    uart.puts(if cfg!(feature = "fast-math") {
        "fast-math: line shapes compared"
    } else {
        "libm: lines compared byte for byte"
    });
    uart.puts(")\n");
    stack::paint();
    let sp = stack::sp();
    let r = sweep::run(&mut uart, true);
    let depth = stack::used_below(sp);
    uart.puts("selftest: blocks=");
    uart.put_u32(r.blocks);
    uart.puts(" requests=");
    uart.put_u32(r.requests);
    uart.puts(" lines=");
    uart.put_u32(r.lines);
    uart.puts(" mismatches=");
    uart.put_u32(r.mismatches);
    uart.puts(" stack_bytes=");
    uart.put_u32(depth as u32);
    uart.puts(" static_ram_bytes=");
    uart.put_u32(stack::static_ram() as u32);
    uart.puts("\n");
    if r.blocks < 10 || r.requests < 30 {
        fail("selftest: too few documented sessions found");
    }
    if r.mismatches != 0 {
        fail("selftest: replies differ from docs/PROTOCOL.md");
    }
    uart.puts("selftest: PASS\n");
    pass()
}
