//! matterwave-console: the bench side of matterwave.
//!
//! A library with a thin CLI (`mwctl`): the crystal table's sources, the independent
//! f64 oracle, output formats and the command implementations. Every computation goes
//! through `matterwave-core`, the same f32 code the controller runs; only [`oracle`] is
//! a separate, double-precision formulation used to check it.

pub mod align;
pub mod backup;
pub mod calc;
pub mod cli;
pub mod demo;
pub mod docgen;
pub mod error;
pub mod gonio;
pub mod link;
pub mod number;
pub mod oracle;
pub mod output;
pub mod plot;
pub mod remote;
pub mod repl;
pub mod rig;
pub mod scan;
pub mod screen;
mod table_sources;
pub mod tables;
pub mod talk;
mod toml_value;
pub mod verify;
