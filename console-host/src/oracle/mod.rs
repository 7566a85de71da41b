//! Independent double-precision reference ("oracle") for the f32 core.
//!
//! Written from the physics only (the units, constants and geometry conventions stated
//! in the core's module docs), in a deliberately different formulation from the
//! controller code:
//!
//! * everything is built from explicit 3-vectors in f64: direct and reciprocal vectors
//!   come from cross products, never from closed-form d-spacing formulas;
//! * extinctions are decided by evaluating the structure factor of an explicit atom
//!   basis, never by parity rules;
//! * surface meshes come from a brute-force search over Bravais lattice points;
//! * the lab frame is assembled from rotation matrices, and emergence and I-V peak
//!   energies are found by bisection rather than closed forms.
//!
//! Units: eV, Å and degrees at every interface, radians inside. Crystallographer's
//! convention |k| = 1/λ, |g| = 1/d (no 2π). The functions are pure; they do not
//! validate their inputs beyond what is documented (non-physical inputs such as a
//! zero or negative energy give NaN or `None`, never a panic).

/// hc, CODATA 2018, in eV·Å.
pub const HC_EV_A: f64 = 12398.419843320;
/// Electron rest energy m_e c², CODATA 2018, in eV.
pub const MC2_EV: f64 = 510998.95000;
/// Speed of light in vacuum (exact), in m/s.
pub const C_M_S: f64 = 299792458.0;

mod beam;
mod iv;
mod lab;
mod lattice;
mod overlayer;
mod screen;
mod surface;
#[cfg(test)]
mod tests;
mod vec;
mod vicinal;

pub use beam::*;
pub use iv::*;
pub use lab::*;
pub use lattice::*;
pub use overlayer::*;
pub use screen::*;
pub use surface::*;
pub use vicinal::*;
