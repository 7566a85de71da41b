//! The wire layer: bytes in, checked request parts out, reply lines back. Nothing here
//! knows what a command means; every piece parses without allocating and never panics
//! on any input.
//!
//! | module | owns |
//! |---|---|
//! | [`line`](mod@line) | byte stream → complete lines (length limit, byte filter, CR/LF/CRLF) |
//! | [`crc`] | CRC-16/IBM-3740 and the optional `*XXXX` line checksum |
//! | [`num`] | exact number parsing and formatting without `core::fmt` floats |
//! | [`token`] | a request line → command word, positional and `key=value` arguments |
//! | [`reply`] | building reply lines (`ok …`, `err …`, `- …`) onto an `embedded_io::Write` |

pub mod crc;
pub mod line;
pub mod num;
pub mod reply;
pub mod token;
