//! The serial console protocol: ASCII request lines in, one final status line (plus
//! optional streamed items) out.
//!
//! It is split like a network stack: a wire layer that parses and never panics, kept
//! apart from the application that gives requests their meaning. Every piece is
//! allocation-free and never panics on any input:
//!
//! | module | owns |
//! |---|---|
//! | [`wire`] | the wire layer: [`line`](mod@line), [`crc`], [`num`], [`token`], [`reply`] |
//! | [`board`] | traits for what a board supplies: axes, detector, interlock |
//! | [`controller`] | the application: controller state, commands, streamed replies |
//! | `sim` | in-memory board parts for simulators (feature `sim`) |
//!
//! A request is handled in this order: [`line::LineAssembler`] yields a line,
//! [`crc::verify`] strips and checks an optional checksum, [`token::Args::parse`]
//! splits the body, the command reads its arguments (parsed with [`num`]), and a
//! [`reply::ReplyWriter`] sends the answer — with a checksum if the request had one.

pub mod board;
pub mod controller;
#[cfg(feature = "sim")]
pub mod sim;
pub mod wire;

pub use wire::{crc, line, num, reply, token};

pub use board::{AxisDriver, AxisFault, Detector, FaultKind, Interlock, Scene, Trip};
pub use controller::{Console, Settings};
