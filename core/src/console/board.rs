//! What a board supplies to the console: motor axes, a detector reading and the
//! interlock input. A firmware implements these over its drivers; the simulator
//! ([`crate::console::sim`], feature `sim`) implements them in memory.

use crate::error::AxisId;
use crate::goniometer::Rig;
use crate::surface::{Face, Incidence};

/// Motor axes. Step counts are the board's own microstep counters; the console only
/// ever commands targets that [`crate::axis::AxisConfig::setpoint`] accepted, and only
/// for axes whose position it knows (see [`crate::console::Console::position_known`]).
pub trait AxisDriver {
    /// Current microstep count of `axis`.
    fn position(&mut self, axis: AxisId) -> i32;
    /// Declares that `axis` stands at microstep count `steps`: the counter is set,
    /// nothing moves (the console calls it only while every axis is at rest, for
    /// `home`).
    fn set_position(&mut self, axis: AxisId, steps: i32);
    /// Starts a move of `axis` to `target` steps, visiting `via` first when given (the
    /// backlash turn-round point).
    fn start(&mut self, axis: AxisId, via: Option<i32>, target: i32);
    /// Whether any axis is still moving.
    fn busy(&mut self) -> bool;
    /// Stops every axis as fast as the hardware safely can.
    fn stop(&mut self);
}

/// What the instrument is set to, for detectors that model the scene (simulators). A
/// real detector ignores it.
#[derive(Clone, Copy, Debug)]
pub struct Scene<'a> {
    /// The face on the sample holder.
    pub face: &'a Face,
    /// Incidence now (energy at the sample, tilt, azimuth).
    pub incidence: Incidence,
    /// Arm angle now, degrees.
    pub arm_deg: f32,
    /// Elevation now, degrees.
    pub elevation_deg: f32,
    /// The rig (for the detector acceptance).
    pub rig: &'a Rig,
}

/// The detector (Faraday cup or channeltron behind its electronics).
pub trait Detector {
    /// One reading of the detector current, in the board's unit (document it; the
    /// simulator uses nA).
    fn read(&mut self, scene: &Scene<'_>) -> f32;
}

/// The interlock input (vacuum, high voltage, doors…). The software is not an interlock:
/// this only lets the console refuse motion when the hardware chain reports unsafe.
pub trait Interlock {
    /// True when the hardware reports it is safe to move.
    fn safe(&mut self) -> bool;
}
