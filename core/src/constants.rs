//! Physical constants, CODATA 2018 (NIST), in the units the crate uses.
//!
//! This is the one place the crate keeps them. h, e and c are exact in SI since 2019;
//! the electron rest energy is the CODATA 2018 recommended value.

/// Planck constant times speed of light, in eV·Å (CODATA 2018: 12398.419843320 eV·Å, exact).
pub const HC_EV_A: f32 = 12_398.42;

/// Electron rest energy m_e·c², in eV (CODATA 2018: 510998.95000 eV).
pub const ME_C2_EV: f32 = 510_998.95;

/// Twice the electron rest energy, 2·m_e·c², in eV.
pub const TWO_ME_C2_EV: f32 = 1_021_997.9;

/// Speed of light in vacuum, in m/s (exact).
pub const C_M_S: f32 = 299_792_458.0;

/// Lowest kinetic energy the beam functions accept, in eV.
pub const ENERGY_MIN_EV: f32 = 1.0;

/// Highest kinetic energy the beam functions accept, in eV (300 keV).
pub const ENERGY_MAX_EV: f32 = 300_000.0;

/// Largest inner potential accepted, in eV (metals are typically 5–20 eV).
pub const INNER_POTENTIAL_MAX_EV: f32 = 100.0;

/// Largest work function accepted, in eV (real surfaces lie between about 1.5 and 7 eV).
pub const WORK_FUNCTION_MAX_EV: f32 = 10.0;
