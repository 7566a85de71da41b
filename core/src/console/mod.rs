//! The serial console protocol: ASCII request lines in, one final status line (plus
//! optional streamed items) out.
//!
//! This module holds the protocol's foundation; every piece is allocation-free and
//! never panics on any input:
//!
//! | module | owns |
//! |---|---|
//! | [`line`](mod@line) | byte stream → complete lines (length limit, byte filter, CR/LF/CRLF) |
//! | [`crc`] | CRC-16/IBM-3740 and the optional `*XXXX` line checksum |
//! | [`num`] | exact number parsing and formatting without `core::fmt` floats |
//! | [`token`] | a request line → command word, positional and `key=value` arguments |
//! | [`board`] | traits for what a board supplies: axes, detector, interlock |
//! | [`exec`] | the console: controller state, commands, streamed replies |
//! | `sim` | in-memory board parts for simulators (feature `sim`) |
//! | [`reply`] | building reply lines (`ok …`, `err …`, `- …`) onto an `embedded_io::Write` |
//!
//! A request is handled in this order: [`line::LineAssembler`] yields a line,
//! [`crc::verify`] strips and checks an optional checksum, [`token::Args::parse`]
//! splits the body, the command reads its arguments (parsed with [`num`]), and a
//! [`reply::ReplyWriter`] sends the answer — with a checksum if the request had one.

pub mod board;
pub mod crc;
pub mod exec;
pub mod line;
pub mod num;
pub mod reply;
#[cfg(feature = "sim")]
pub mod sim;
pub mod token;

pub use board::{AxisDriver, Detector, Interlock, Scene};
pub use exec::{Console, Settings};
