//! # matterwave-core
//!
//! Electron-diffraction and goniometer math for the controller of a motorised detector
//! arm: `#![no_std]`, no allocation, no `unsafe`, f32 throughout, fixed tables.
//!
//! Units: energies in eV, lengths in Å, angles in degrees at every public interface
//! (radians only inside functions). Reciprocal vectors follow the crystallographer's
//! convention |k| = 1/λ, |g| = 1/d (no 2π). Constants are CODATA 2018.
//!
//! Modules, one concern each:
//!
//! | module | owns |
//! |---|---|
//! | [`constants`] | CODATA values |
//! | [`math`] | the float backend (libm, or micromath with `fast-math`) and vector helpers |
//! | [`error`] | error values with stable codes |
//! | [`console`] | the serial protocol's foundation: lines, checksums, numbers, tokens, replies |
//! | [`beam`] | gun settings → kinetic energy → wavelength, velocity, wavevector |
//! | [`lattice`] | structures, conventional cells, d-spacings, extinctions, face notation |
//! | [`listing`] | results into caller buffers: `Listing` and sorted insertion |
//! | [`reflections`] | bulk reflection families, Bragg angles, transmission rings |
//! | [`surface`] | surface meshes, rods, beams at an energy, emergence and I-V energies |
//! | [`table`] | the fixed crystal table |
//! | [`goniometer`] | lab-frame geometry: aiming the arm at a beam, what the detector sees |
//! | [`scan`] | scan plans as iterators (track, arm sweep, I-V) and time estimates |
//! | [`axis`] | motor axes: microsteps, limits, forbidden zones, backlash, wrap, move times |
//! | [`fit`] | peak centring and calibration fits (arm zero, gun offset, row and layer spacing, V0) |
//! | [`budget`] | the angular error budget: named contributions and their combination |
//!
//! ```
//! use matterwave_core::{beam, table, surface::{Face, Incidence}};
//! let e = beam::kinetic_energy_ev(150.0, 0.0, 0.0, 0.0).unwrap();
//! let lambda = beam::wavelength_a(e).unwrap();
//! assert!((lambda - 1.0013).abs() < 1e-3);
//! let face = Face::new(&table::find("cu").unwrap().cell().unwrap(), [1, 1, 1]).unwrap();
//! let b = face.beam([1, 0], &Incidence::normal(e).unwrap()).unwrap();
//! assert!(b.exit_deg > 20.0 && b.exit_deg < 30.0);
//! ```
#![no_std]
#![forbid(unsafe_code)]
#![deny(missing_docs)]
#![cfg_attr(
    not(test),
    deny(
        clippy::unwrap_used,
        clippy::expect_used,
        clippy::panic,
        clippy::indexing_slicing
    )
)]

pub mod axis;
pub mod beam;
pub mod budget;
pub mod console;
pub mod constants;
pub mod error;
pub mod fit;
pub mod goniometer;
pub mod inner;
pub mod lattice;
pub mod listing;
pub mod math;
pub mod reflections;
pub mod scan;
pub mod surface;
pub mod table;

pub use error::{AxisId, Error, Quantity, Result};

/// Crate version, as in Cargo.toml.
pub const VERSION: &str = env!("CARGO_PKG_VERSION");
