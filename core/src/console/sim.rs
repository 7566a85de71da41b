//! In-memory board parts for simulators and tests (feature `sim`): axes that arrive at
//! once, a switchable interlock, and a synthetic detector that sees the beams the
//! geometry puts into its acceptance cone.

use super::board::{AxisDriver, AxisFault, Detector, Interlock, Scene};
use crate::error::AxisId;
use crate::goniometer::{self, axis_index, InView};
use crate::math;

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

/// Synthetic detector, nA: a background plus, for every beam within the acceptance,
/// a Gaussian in the angle between detector axis and beam (σ = acceptance / 2).
/// Deterministic, for demos and tests; not a model of real intensities.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct SimDetector {
    /// Background current, nA.
    pub background_na: f32,
    /// Peak current of a beam centred on the detector, nA.
    pub beam_na: f32,
}

impl Default for SimDetector {
    fn default() -> Self {
        SimDetector {
            background_na: 0.5,
            beam_na: 100.0,
        }
    }
}

impl Detector for SimDetector {
    fn read(&mut self, scene: &Scene<'_>) -> f32 {
        let acc = scene.rig.acceptance_deg;
        let mut view = [InView::EMPTY; 8];
        let n = goniometer::beams_in_view(
            scene.face,
            &scene.incidence,
            scene.arm_deg,
            scene.elevation_deg,
            acc,
            &mut view,
        )
        .map_or(0, |l| l.stored);
        let sigma = 0.5 * acc;
        let mut i = self.background_na;
        for v in view.iter().take(n) {
            let x = v.offset_deg / sigma;
            i += self.beam_na * math::exp(-0.5 * x * x);
        }
        i
    }
}
