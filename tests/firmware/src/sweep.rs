//! The verify-style sweep: every `session` example of docs/PROTOCOL.md fed through the
//! console (a fresh console per example, as the host test
//! console-host/tests/protocol_doc.rs does), each reply line compared with the
//! documented one.
//!
//! With the default backend the lines must match byte for byte: the same code on the
//! host and on the Cortex-M4F gives the same numbers. With `fast-math` the documented
//! numbers (made with the default backend) may differ in the last digits, so only the
//! shape is compared: the number of lines, the first word and, for `err`, the code.

use embedded_io::{ErrorType, Write};

use crate::{sim_console, Uart};

const DOC: &str = include_str!("../../../docs/PROTOCOL.md");

/// What a sweep found.
#[derive(Clone, Copy, Debug, Default)]
pub struct Outcome {
    /// Example blocks run.
    pub blocks: u32,
    /// Requests sent.
    pub requests: u32,
    /// Reply lines compared.
    pub lines: u32,
    /// Lines that differ (missing and surplus lines included).
    pub mismatches: u32,
}

/// The expected reply lines of one block, in order.
struct Expected {
    rest: core::str::Lines<'static>,
}

impl Expected {
    fn next_line(&mut self) -> Option<&'static str> {
        for l in self.rest.by_ref() {
            if l.trim_start().starts_with("```") {
                // End of the block: no more expected lines.
                self.rest = "".lines();
                return None;
            }
            if let Some(r) = l.strip_prefix("< ") {
                return Some(r);
            }
        }
        None
    }
}

/// The reply sink: echoes to the UART (when `echo`), splits lines, compares each with
/// the next expected line.
struct Checker<'u> {
    uart: &'u mut Uart,
    echo: bool,
    line: [u8; 320],
    len: usize,
    expected: Expected,
    block: u32,
    lines: u32,
    mismatches: u32,
}

fn same(got: &str, want: &str) -> bool {
    if cfg!(feature = "fast-math") {
        let mut g = got.split(' ');
        let mut w = want.split(' ');
        let (g0, w0) = (g.next(), w.next());
        g0 == w0 && (g0 != Some("err") || g.next() == w.next())
    } else {
        got == want
    }
}

impl Checker<'_> {
    fn line_done(&mut self) {
        let got = core::str::from_utf8(&self.line[..self.len]).unwrap_or("<not UTF-8>");
        self.lines += 1;
        match self.expected.next_line() {
            Some(want) if same(got, want) => {}
            want => {
                self.mismatches += 1;
                self.uart.puts("MISMATCH in example block ");
                self.uart.put_u32(self.block);
                self.uart.puts("\n  got:      ");
                self.uart.puts(got);
                self.uart.puts("\n  expected: ");
                self.uart.puts(want.unwrap_or("(no more lines)"));
                self.uart.puts("\n");
            }
        }
        self.len = 0;
    }

    fn finish_block(&mut self) {
        while let Some(want) = self.expected.next_line() {
            self.mismatches += 1;
            self.uart.puts("MISSING in example block ");
            self.uart.put_u32(self.block);
            self.uart.puts(": ");
            self.uart.puts(want);
            self.uart.puts("\n");
        }
    }
}

impl ErrorType for Checker<'_> {
    type Error = core::convert::Infallible;
}

impl Write for Checker<'_> {
    fn write(&mut self, buf: &[u8]) -> Result<usize, Self::Error> {
        for &b in buf {
            if self.echo {
                self.uart.put(b);
            }
            if b == b'\n' {
                self.line_done();
            } else if self.len < self.line.len() {
                self.line[self.len] = b;
                self.len += 1;
            }
        }
        Ok(buf.len())
    }
    fn flush(&mut self) -> Result<(), Self::Error> {
        Ok(())
    }
}

/// Runs every example; requests and replies are echoed to `uart` when `echo`.
pub fn run(uart: &mut Uart, echo: bool) -> Outcome {
    let mut out = Outcome::default();
    let mut lines = DOC.lines();
    while let Some(l) = lines.next() {
        if l.trim() != "```session" {
            continue;
        }
        // One block, from a fresh controller.
        let mut console = sim_console();
        let mut ck = Checker {
            uart: &mut *uart,
            echo,
            line: [0; 320],
            len: 0,
            expected: Expected {
                rest: lines.clone(),
            },
            block: out.blocks,
            lines: 0,
            mismatches: 0,
        };
        for l in lines.by_ref() {
            if l.trim_start().starts_with("```") {
                break;
            }
            if let Some(req) = l.strip_prefix("> ") {
                if echo {
                    ck.uart.puts("> ");
                    ck.uart.puts(req);
                    ck.uart.puts("\n");
                }
                out.requests += 1;
                let _ = console.feed_all(req.as_bytes(), &mut ck);
                let _ = console.feed_all(b"\n", &mut ck);
            }
        }
        ck.finish_block();
        out.lines += ck.lines;
        out.mismatches += ck.mismatches;
        out.blocks += 1;
    }
    out
}
