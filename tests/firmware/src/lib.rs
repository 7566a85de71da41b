//! Board support for running the core's console on QEMU `mps2-an386` (Cortex-M4F):
//! the CMSDK APB UART as an `embedded_io` port, the SysTick counter, stack painting,
//! semihosting exit, and the panic and hard-fault handlers that make QEMU exit with a
//! non-zero status.
//!
//! Memory map (AN386, as QEMU models it, the same as AN385): ZBT SSRAM1 at 0x0000_0000
//! (4 MiB, code: "FLASH" in `memory.x`), ZBT SSRAM2/3 at 0x2000_0000 (4 MiB, data),
//! UART0 at 0x4000_4000, 25 MHz system clock.
#![no_std]

use core::panic::PanicInfo;
use core::ptr::{read_volatile, write_volatile};

use cortex_m_rt::{exception, ExceptionFrame};
use cortex_m_semihosting::debug::{self, EXIT_FAILURE, EXIT_SUCCESS};
use cortex_m_semihosting::hprint;
use matterwave_core::console::sim::{SimAxes, SimDetector, SimInterlock};
use matterwave_core::console::Console;

pub mod sweep;

/// The console on the simulated board parts (axes that arrive at once, a safe
/// interlock, the synthetic detector).
pub type SimConsole = Console<SimAxes, SimDetector, SimInterlock>;

/// A console with factory settings on the simulated parts; exits QEMU on failure.
pub fn sim_console() -> SimConsole {
    match Console::new(
        SimAxes::default(),
        SimDetector::default(),
        SimInterlock { safe: true },
    ) {
        Ok(c) => c,
        Err(_) => fail("console: factory settings rejected"),
    }
}

/// The CMSDK APB UART (ARM DDI 0479): data, state, control and baud-divider registers.
pub struct Uart {
    base: usize,
}

const UART_DATA: usize = 0x00;
const UART_STATE: usize = 0x04;
const UART_CTRL: usize = 0x08;
const UART_BAUDDIV: usize = 0x10;
const STATE_TX_FULL: u32 = 1 << 0;
const STATE_RX_FULL: u32 = 1 << 1;
const CTRL_TX_EN: u32 = 1 << 0;
const CTRL_RX_EN: u32 = 1 << 1;

/// UART0's base address on the AN385/AN386 images.
pub const UART0_BASE: usize = 0x4000_4000;

impl Uart {
    /// UART0, transmitter and receiver enabled (the baud divider is the minimum, 16:
    /// QEMU ignores it).
    pub fn uart0() -> Uart {
        let u = Uart { base: UART0_BASE };
        u.reg_write(UART_BAUDDIV, 16);
        u.reg_write(UART_CTRL, CTRL_TX_EN | CTRL_RX_EN);
        u
    }

    fn reg_read(&self, off: usize) -> u32 {
        // SAFETY: `base` is the UART's MMIO block; these offsets are its registers.
        unsafe { read_volatile((self.base + off) as *const u32) }
    }

    fn reg_write(&self, off: usize, v: u32) {
        // SAFETY: as in `reg_read`.
        unsafe { write_volatile((self.base + off) as *mut u32, v) }
    }

    /// Sends one byte, waiting while the transmit buffer is full.
    pub fn put(&mut self, b: u8) {
        while self.reg_read(UART_STATE) & STATE_TX_FULL != 0 {}
        self.reg_write(UART_DATA, u32::from(b));
    }

    /// A received byte, if one is waiting.
    pub fn try_get(&mut self) -> Option<u8> {
        if self.reg_read(UART_STATE) & STATE_RX_FULL != 0 {
            Some((self.reg_read(UART_DATA) & 0xff) as u8)
        } else {
            None
        }
    }

    /// Sends a string.
    pub fn puts(&mut self, s: &str) {
        for b in s.bytes() {
            self.put(b);
        }
    }

    /// Sends an unsigned decimal number.
    pub fn put_u32(&mut self, n: u32) {
        let mut buf = [0u8; 10];
        self.puts(fmt_u32(n, &mut buf));
    }
}

impl embedded_io::ErrorType for Uart {
    type Error = core::convert::Infallible;
}

impl embedded_io::Write for Uart {
    fn write(&mut self, buf: &[u8]) -> Result<usize, Self::Error> {
        for &b in buf {
            self.put(b);
        }
        Ok(buf.len())
    }
    fn flush(&mut self) -> Result<(), Self::Error> {
        Ok(())
    }
}

impl embedded_io::Read for Uart {
    /// Blocks until at least one byte arrives, then returns what is waiting.
    fn read(&mut self, buf: &mut [u8]) -> Result<usize, Self::Error> {
        if buf.is_empty() {
            return Ok(0);
        }
        let mut n = 0;
        for slot in buf.iter_mut() {
            let b = if n == 0 {
                loop {
                    if let Some(b) = self.try_get() {
                        break b;
                    }
                }
            } else {
                match self.try_get() {
                    Some(b) => b,
                    None => break,
                }
            };
            *slot = b;
            n += 1;
        }
        Ok(n)
    }
}

impl embedded_io::ReadReady for Uart {
    fn read_ready(&mut self) -> Result<bool, Self::Error> {
        Ok(self.reg_read(UART_STATE) & STATE_RX_FULL != 0)
    }
}

/// Decimal text of `n` in `buf`.
pub fn fmt_u32(mut n: u32, buf: &mut [u8; 10]) -> &str {
    let mut i = buf.len();
    loop {
        i -= 1;
        buf[i] = b'0' + (n % 10) as u8;
        n /= 10;
        if n == 0 {
            break;
        }
    }
    core::str::from_utf8(&buf[i..]).unwrap_or("?")
}

/// SysTick as a free-running 24-bit down-counter on the processor clock (25 MHz: with
/// QEMU's `-icount shift=0`, one instruction per nanosecond, so 1 tick = 40
/// instructions). QEMU does not model the DWT cycle counter.
pub mod clock {
    use core::ptr::{read_volatile, write_volatile};

    const SYST_CSR: usize = 0xE000_E010;
    const SYST_RVR: usize = 0xE000_E014;
    const SYST_CVR: usize = 0xE000_E018;

    /// Instructions per SysTick tick under `-icount shift=0` at 25 MHz.
    pub const INSTR_PER_TICK: u32 = 40;

    /// Starts the counter (reload 0xFF_FFFF, processor clock, no interrupt).
    pub fn start() {
        // SAFETY: the SysTick registers of the Cortex-M system control space.
        unsafe {
            write_volatile(SYST_RVR as *mut u32, 0x00FF_FFFF);
            write_volatile(SYST_CVR as *mut u32, 0);
            write_volatile(SYST_CSR as *mut u32, 0b101);
        }
    }

    /// The counter now.
    #[inline(always)]
    pub fn now() -> u32 {
        // SAFETY: as in `start`.
        unsafe { read_volatile(SYST_CVR as *const u32) }
    }

    /// Ticks from `t0` to `t1` (the counter counts down; one wrap at most).
    pub fn ticks(t0: u32, t1: u32) -> u32 {
        t0.wrapping_sub(t1) & 0x00FF_FFFF
    }
}

/// Stack painting: fill the unused stack with a pattern, later find how deep it was
/// used.
pub mod stack {
    extern "C" {
        static mut _stack_end: u32;
        static mut _stack_start: u32;
        static mut __sdata: u32;
        static mut __ebss: u32;
    }

    /// The paint pattern.
    pub const PAINT: u32 = 0xCCCC_CCCC;

    /// The stack pointer now.
    #[inline(always)]
    pub fn sp() -> usize {
        cortex_m::register::msp::read() as usize
    }

    /// Lowest address of the stack region (end of static RAM).
    pub fn bottom() -> usize {
        core::ptr::addr_of!(_stack_end) as usize
    }

    /// Top of the stack region (initial stack pointer).
    pub fn top() -> usize {
        core::ptr::addr_of!(_stack_start) as usize
    }

    /// Bytes of static RAM (.data + .bss + .uninit).
    pub fn static_ram() -> usize {
        let start = core::ptr::addr_of!(__sdata) as usize;
        bottom() - start
    }

    /// Paints the stack from its bottom to 256 bytes below the caller's frame.
    #[inline(never)]
    pub fn paint() {
        let end = (sp() - 256) & !3;
        let mut p = bottom();
        while p < end {
            // SAFETY: [bottom, sp − 256) is unused stack: nothing lives there.
            unsafe { core::ptr::write_volatile(p as *mut u32, PAINT) };
            p += 4;
        }
    }

    /// Deepest stack use since the last [`paint`], bytes below the top.
    #[inline(never)]
    pub fn high_water() -> usize {
        top() - deepest()
    }

    /// The lowest stack address written since the last [`paint`].
    #[inline(never)]
    pub fn deepest() -> usize {
        let mut p = bottom();
        let t = top();
        // SAFETY: reads of the stack region, word by word.
        while p < t && unsafe { core::ptr::read_volatile(p as *const u32) } == PAINT {
            p += 4;
        }
        p
    }

    /// Bytes of stack used below `sp_then` (a [`sp`] taken before a call) since the
    /// last [`paint`]: what the call needed.
    pub fn used_below(sp_then: usize) -> usize {
        sp_then.saturating_sub(deepest())
    }
}

/// Ends the QEMU run with exit status 0 (semihosting).
pub fn pass() -> ! {
    debug::exit(EXIT_SUCCESS);
    #[allow(clippy::empty_loop)]
    loop {}
}

/// Reports `msg` on the semihosting console and ends the QEMU run with status 1.
pub fn fail(msg: &str) -> ! {
    hprint!("firmware: FAIL: ");
    hprint!(msg);
    hprint!("\n");
    debug::exit(EXIT_FAILURE);
    #[allow(clippy::empty_loop)]
    loop {}
}

#[panic_handler]
fn panic(info: &PanicInfo) -> ! {
    // No `core::fmt` here: the location only, so the handler costs little flash.
    hprint!("firmware: panic");
    if let Some(loc) = info.location() {
        let mut buf = [0u8; 10];
        hprint!(" at ");
        hprint!(loc.file());
        hprint!(":");
        hprint!(fmt_u32(loc.line(), &mut buf));
    }
    hprint!("\n");
    debug::exit(EXIT_FAILURE);
    #[allow(clippy::empty_loop)]
    loop {}
}

#[exception]
unsafe fn HardFault(_ef: &ExceptionFrame) -> ! {
    fail("hard fault")
}
