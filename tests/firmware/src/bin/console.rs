//! The controller image: the core's console on UART0 (QEMU: `-serial stdio`), the
//! simulated axes, interlock and detector behind the board traits. Requests are read
//! byte by byte; while a stream runs, one item is written per idle turn of the loop, so
//! `stop` is read between items. Every turn of the loop is a control tick: the console
//! watches the interlock and the drivers' faults (`Console::tick`).
#![no_std]
#![no_main]

use cortex_m_rt::entry;
use embedded_io::{Read, ReadReady};
use matterwave_firmware::{sim_console, Uart};

#[entry]
fn main() -> ! {
    let mut uart = Uart::uart0();
    let mut console = sim_console();
    let mut byte = [0u8; 1];
    loop {
        // A real board calls this from its control-rate timer as well; here the loop
        // turns far faster than any axis moves.
        let _ = console.tick();
        if uart.read_ready() == Ok(true) && uart.read(&mut byte) == Ok(1) {
            // A failed write is a lost reply line; the UART cannot fail.
            let _ = console.push(byte[0], &mut uart);
        } else if console.streaming() {
            let _ = console.poll(&mut uart);
        }
    }
}
