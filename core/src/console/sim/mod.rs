//! In-memory board parts for simulators and tests (feature `sim`): axes that arrive at
//! once, a switchable interlock, and a synthetic detector with a kinematic model of
//! beam positions, widths and I-V maxima, a background, seeded noise and hidden
//! calibration offsets ([`SimDetector`], docs/SIMULATOR.md).

use super::board::{AxisDriver, AxisFault, Interlock};
use crate::error::AxisId;
use crate::goniometer::axis_index;

mod detector;
mod rng;

pub use detector::{
    HiddenOffsets, SimDetector, ABSORPTION_MAX_EV, ABSORPTION_MIN_EV, DIVERGENCE_MAX_DEG,
    PEAKS_MAX, VIEW_MAX,
};
pub use rng::XorShift32;

/// Simulated axes. A move sets the counter to its target at once; with `slow` set it
/// then reports busy until [`SimAxes::arrive`] or a stop. Faults are injected by setting
/// `fault`, which the next [`AxisDriver::take_fault`] reports once.
#[derive(Clone, Debug, Default, PartialEq, Eq)]
pub struct SimAxes {
    /// Step counts (arm, elevation, tilt, azimuth).
    pub steps: [i32; 4],
    /// Number of moves started.
    pub moves: u32,
    /// Number of stop calls.
    pub stops: u32,
    /// Whether a started move stays in progress (busy) until [`SimAxes::arrive`].
    pub slow: bool,
    /// Whether a move is in progress.
    pub moving: bool,
    /// A fault to report at the next poll.
    pub fault: Option<AxisFault>,
}

impl SimAxes {
    /// Ends the move in progress (the axes have arrived).
    pub fn arrive(&mut self) {
        self.moving = false;
    }
}

impl AxisDriver for SimAxes {
    fn position(&mut self, axis: AxisId) -> i32 {
        self.steps.get(axis_index(axis)).copied().unwrap_or(0)
    }
    fn set_position(&mut self, axis: AxisId, steps: i32) {
        if let Some(s) = self.steps.get_mut(axis_index(axis)) {
            *s = steps;
        }
    }
    fn start(&mut self, axis: AxisId, _via: Option<i32>, target: i32) {
        if let Some(s) = self.steps.get_mut(axis_index(axis)) {
            *s = target;
        }
        self.moves = self.moves.saturating_add(1);
        self.moving = self.slow;
    }
    fn busy(&mut self) -> bool {
        self.moving
    }
    fn stop(&mut self) {
        self.stops = self.stops.saturating_add(1);
        self.moving = false;
    }
    fn take_fault(&mut self) -> Option<AxisFault> {
        self.fault.take()
    }
}

/// A switchable interlock input.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct SimInterlock {
    /// What the input reports.
    pub safe: bool,
}

impl Interlock for SimInterlock {
    fn safe(&mut self) -> bool {
        self.safe
    }
}
