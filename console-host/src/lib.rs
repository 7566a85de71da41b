//! matterwave-console: the bench side of matterwave.
//!
//! A library with a thin CLI (`mwctl`): crystal-table parsing, the independent f64
//! oracle, output formatting and the command implementations.

pub mod oracle;
pub mod tables;
