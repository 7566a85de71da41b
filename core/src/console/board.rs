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
    /// The next fault the drivers detected since the last call (a stall, a limit switch
    /// hit, a driver error), or `None`. Each fault is reported once. The console polls it
    /// on every [`crate::console::Console::tick`] and before every request; a fault stops
    /// every axis, disables motion and makes the faulted axis's position unknown.
    fn take_fault(&mut self) -> Option<AxisFault>;
}

/// What an axis driver detected.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum FaultKind {
    /// The motor stalled (lost steps): the counter no longer tells where the axis is.
    Stall,
    /// A hardware limit switch was hit.
    LimitSwitch,
    /// The driver reported an error (over-temperature, over-current, supply).
    Driver,
}

impl FaultKind {
    /// The word used in replies: `stall`, `limit_switch`, `driver`.
    pub const fn name(self) -> &'static str {
        match self {
            FaultKind::Stall => "stall",
            FaultKind::LimitSwitch => "limit_switch",
            FaultKind::Driver => "driver",
        }
    }
}

/// A fault of one axis, as [`AxisDriver::take_fault`] reports it.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct AxisFault {
    /// The axis at fault.
    pub axis: AxisId,
    /// What happened.
    pub kind: FaultKind,
}

/// Why the console stopped motion on its own: latched until the next `enable` that
/// succeeds, and reported by `status` as `trip=`.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Trip {
    /// The interlock input reported unsafe while motion was enabled or an axis moved.
    Interlock,
    /// An axis driver reported a fault.
    Axis(AxisFault),
}

impl Trip {
    /// The word used in replies: `interlock`, or the fault's name.
    pub const fn name(self) -> &'static str {
        match self {
            Trip::Interlock => "interlock",
            Trip::Axis(f) => f.kind.name(),
        }
    }
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
    /// The inner-potential model in use (`v0_model`): the constant V0 (the set value,
    /// else the table's), or the face's V0(E) form.
    pub inner_potential: crate::inner::V0Model,
    /// The gun's energy offset the console applies (its `offset` setting), eV: part of
    /// `incidence.energy_ev`. A simulator takes it out to find what the hardware alone
    /// delivers.
    pub energy_offset_ev: f32,
    /// The overlayer on the face (`overlayer=`, with its domains when `domains=all`),
    /// or `None`: a simulator adds its fractional-order beams.
    pub overlayer: Option<crate::surface::domains::Overlayer>,
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
