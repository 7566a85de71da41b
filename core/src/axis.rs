//! Motor axes: microsteps ↔ degrees, home offset, soft limits, forbidden zones, backlash
//! with a fixed approach direction, wrap for continuous axes, and trapezoidal move
//! times (axis rules).
//!
//! The one promise of this module: **no function returns a setpoint outside the soft
//! limits or inside a forbidden zone.** An unreachable target is an [`Error`] naming the
//! axis and the limit or zone — never a clamped value.
//!
//! Angle of a step count: `angle = home_offset_deg + steps / steps_per_deg`. Step counts
//! are limited to ±2^24 so that every count is exact in f32.
//!
//! ```
//! use matterwave_core::axis::{AxisConfig, Zone};
//! use matterwave_core::AxisId;
//! let mut arm = AxisConfig::new(AxisId::Arm, 200.0 * 16.0 * 50.0 / 360.0);
//! arm.min_deg = -170.0;
//! arm.max_deg = 170.0;
//! arm.zones[0] = Some(Zone { from_deg: -10.0, to_deg: 10.0 }); // the gun's shadow
//! let sp = arm.setpoint(42.0, 0).unwrap();
//! assert_eq!(sp.steps, 18667);
//! assert!(sp.residual_deg.abs() <= 0.5 / arm.steps_per_deg);
//! assert!(arm.setpoint(5.0, 0).is_err()); // inside the zone: an error, not a clamp
//! ```

use crate::error::{AxisId, Error, Quantity, Result};
use crate::math;

/// Most forbidden zones per axis.
pub const MAX_ZONES: usize = 4;

/// Largest |step count| an axis accepts (2^24: exact in f32).
pub const STEPS_MAX: i32 = 1 << 24;

/// Fewest microsteps per degree any axis accepts: one step of 20°, the widest detector
/// acceptance a rig accepts ([`crate::goniometer::ACCEPTANCE_MAX_DEG`]).
/// [`crate::goniometer::Rig::validate`] then demands a step no coarser than the rig's
/// own acceptance.
pub const MIN_STEPS_PER_DEG: f32 = 1.0 / crate::goniometer::ACCEPTANCE_MAX_DEG;

/// How far from home a wrapping axis may turn, degrees (ten turns). Beyond that, angles
/// lose f32 precision; re-home the axis to reset its counter.
pub const WRAP_RANGE_DEG: f32 = 3600.0;

/// A forbidden interval [from_deg, to_deg] of axis angles (from < to). On a wrapping
/// axis it repeats every 360°.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Zone {
    /// Lower edge, degrees.
    pub from_deg: f32,
    /// Upper edge, degrees.
    pub to_deg: f32,
}

impl Zone {
    fn contains(&self, angle_deg: f32, wrap: bool) -> bool {
        if wrap {
            let t = self.from_deg + wrap_360(angle_deg - self.from_deg);
            t <= self.to_deg
        } else {
            angle_deg >= self.from_deg && angle_deg <= self.to_deg
        }
    }

    /// Whether the closed interval [lo, hi] (lo ≤ hi, unwrapped) meets the zone (on a
    /// wrapping axis, any 360° copy of it, however long the interval).
    fn meets(&self, lo: f32, hi: f32, wrap: bool) -> bool {
        if wrap {
            // Copy m is [from + 360m, to + 360m]; it meets [lo, hi] when
            // (lo − to)/360 ≤ m ≤ (hi − from)/360 for a whole m.
            let first = -math::floor((self.to_deg - lo) / 360.0);
            let last = math::floor((hi - self.from_deg) / 360.0);
            first <= last
        } else {
            self.from_deg <= hi && self.to_deg >= lo
        }
    }

    /// Whether the path from `from` to `to` (unwrapped) only leaves the zone: `from`
    /// lies in (a copy of) the zone, the path heads for that copy's nearer edge (either,
    /// from its middle), and beyond that edge it meets no other copy. The part of the
    /// path inside the zone is then the shortest way out.
    fn only_leaves(&self, from: f32, to: f32, wrap: bool) -> bool {
        let off = if wrap {
            360.0 * math::floor((from - self.from_deg) / 360.0)
        } else {
            0.0
        };
        let (lo_edge, hi_edge) = (self.from_deg + off, self.to_deg + off);
        if !(from >= lo_edge && from <= hi_edge) {
            return false;
        }
        let (below, above) = (from - lo_edge, hi_edge - from);
        if to <= from {
            // Out through the lower edge; the next copy down ends at hi_edge − 360.
            below <= above && !(wrap && to <= hi_edge - 360.0)
        } else {
            above <= below && !(wrap && to >= lo_edge + 360.0)
        }
    }
}

/// Reduces an angle to [0, 360).
fn wrap_360(x: f32) -> f32 {
    let r = x - 360.0 * math::floor(x / 360.0);
    if r >= 360.0 {
        0.0
    } else {
        r
    }
}

/// Direction from which every move finishes, to take up backlash.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Approach {
    /// Final motion is toward increasing angle.
    FromBelow,
    /// Final motion is toward decreasing angle.
    FromAbove,
}

impl Approach {
    /// Every approach, in the order rig files and the console list their words.
    pub const ALL: [Approach; 2] = [Approach::FromBelow, Approach::FromAbove];

    /// The word rig files and the console use: `from-below` or `from-above`.
    pub const fn word(self) -> &'static str {
        match self {
            Approach::FromBelow => "from-below",
            Approach::FromAbove => "from-above",
        }
    }

    /// The approach a word names ([`Approach::word`]), if any.
    pub fn from_word(word: &str) -> Option<Approach> {
        Approach::ALL.into_iter().find(|a| a.word() == word)
    }
}

/// The names of an axis's settings, one vocabulary for rig files (`[arm]` tables) and
/// the console's `axis` request.
pub mod keys {
    /// Microsteps per degree.
    pub const STEPS_PER_DEG: &str = "steps_per_deg";
    /// Angle at step count 0, degrees.
    pub const HOME_OFFSET_DEG: &str = "home_offset_deg";
    /// Lower soft limit, degrees.
    pub const MIN_DEG: &str = "min_deg";
    /// Upper soft limit, degrees.
    pub const MAX_DEG: &str = "max_deg";
    /// Backlash take-up, degrees.
    pub const BACKLASH_DEG: &str = "backlash_deg";
    /// Final approach direction ([`super::Approach::word`]).
    pub const APPROACH: &str = "approach";
    /// Whether the axis turns without end.
    pub const WRAP: &str = "wrap";
    /// Top speed, degrees per second.
    pub const MAX_SPEED_DEG_S: &str = "max_speed_deg_s";
    /// Acceleration, degrees per second squared.
    pub const ACCEL_DEG_S2: &str = "accel_deg_s2";
}

/// Configuration of one motor axis.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct AxisConfig {
    /// Which axis (named in errors).
    pub id: AxisId,
    /// Microsteps per degree = full steps × microsteps × gear ÷ 360.
    pub steps_per_deg: f32,
    /// Axis angle at step count 0, degrees.
    pub home_offset_deg: f32,
    /// Lower soft limit, degrees (ignored by motion when `wrap`, but still below
    /// `max_deg`, within ±720°).
    pub min_deg: f32,
    /// Upper soft limit, degrees (ignored by motion when `wrap`, but still above
    /// `min_deg`, within ±720°).
    pub max_deg: f32,
    /// Forbidden zones.
    pub zones: [Option<Zone>; MAX_ZONES],
    /// Backlash, degrees (0–10).
    pub backlash_deg: f32,
    /// Approach direction for the final part of every move.
    pub approach: Approach,
    /// Continuous axis: angles repeat every 360°, no soft limits.
    pub wrap: bool,
    /// Maximum speed, degrees per second.
    pub max_speed_deg_s: f32,
    /// Acceleration (and deceleration), degrees per second².
    pub accel_deg_s2: f32,
}

/// A reachable target: the microstep count, the angle it really reaches and the
/// residual target − reached.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Setpoint {
    /// Which axis.
    pub id: AxisId,
    /// Target microstep count.
    pub steps: i32,
    /// Angle reached at `steps`, degrees.
    pub angle_deg: f32,
    /// Requested − reached, degrees.
    pub residual_deg: f32,
    /// Where the move turns round to take up backlash, when the axis starts on the
    /// wrong side of the target; `None` for a direct move.
    pub approach_steps: Option<i32>,
}

impl AxisConfig {
    /// An axis with `steps_per_deg`, home at 0°, limits ±180°, no zones, no backlash,
    /// approach from below, 10°/s, 20°/s².
    pub const fn new(id: AxisId, steps_per_deg: f32) -> AxisConfig {
        AxisConfig {
            id,
            steps_per_deg,
            home_offset_deg: 0.0,
            min_deg: -180.0,
            max_deg: 180.0,
            zones: [None; MAX_ZONES],
            backlash_deg: 0.0,
            approach: Approach::FromBelow,
            wrap: false,
            max_speed_deg_s: 10.0,
            accel_deg_s2: 20.0,
        }
    }

    /// Checks every field; `BadAxisConfig(id)` names the axis, `StepTooCoarse(id)` a
    /// step coarser than 1 / [`MIN_STEPS_PER_DEG`] degrees.
    pub fn validate(&self) -> Result<()> {
        let bad = Err(Error::BadAxisConfig(self.id));
        let spd = self.steps_per_deg;
        if !(spd.is_finite() && spd > 0.0 && spd <= 1.0e6) {
            return bad;
        }
        if spd < MIN_STEPS_PER_DEG {
            return Err(Error::StepTooCoarse(self.id));
        }
        if !(self.home_offset_deg.is_finite() && self.home_offset_deg.abs() <= 360.0) {
            return bad;
        }
        // Ordered even on a wrapping axis, which does not use them: they apply again
        // when `wrap` is switched off, and `dump` replays them onto axes that do not
        // wrap.
        let limits_ok = self.min_deg.is_finite()
            && self.max_deg.is_finite()
            && self.min_deg < self.max_deg
            && self.min_deg >= -720.0
            && self.max_deg <= 720.0;
        if !limits_ok {
            return bad;
        }
        if !(self.backlash_deg.is_finite() && self.backlash_deg >= 0.0 && self.backlash_deg <= 10.0)
        {
            return bad;
        }
        if !(self.max_speed_deg_s.is_finite() && self.max_speed_deg_s > 0.0) {
            return bad;
        }
        if !(self.accel_deg_s2.is_finite() && self.accel_deg_s2 > 0.0) {
            return bad;
        }
        for z in self.zones.iter().flatten() {
            if !(z.from_deg.is_finite()
                && z.to_deg.is_finite()
                && z.from_deg < z.to_deg
                && z.from_deg >= -720.0
                && z.to_deg <= 720.0)
            {
                return bad;
            }
            if self.wrap && z.to_deg - z.from_deg >= 360.0 {
                return bad;
            }
        }
        self.validate_layout()
    }

    /// The checks that relate the fields to each other (after each is valid alone):
    /// home within the limits, the limits within the step counter's reach, zones
    /// within the limits, no two zones overlapping, and not the whole range forbidden.
    fn validate_layout(&self) -> Result<()> {
        let id = self.id;
        let spd = self.steps_per_deg;
        if self.wrap {
            if 360.0 * spd > STEPS_MAX as f32 {
                return Err(Error::ReachBeyondCounter(id));
            }
        } else {
            let home = self.home_offset_deg;
            if home < self.min_deg || home > self.max_deg {
                return Err(Error::HomeOutsideLimits(id));
            }
            let reach = (self.max_deg - home).max(home - self.min_deg) * spd;
            if reach > STEPS_MAX as f32 {
                return Err(Error::ReachBeyondCounter(id));
            }
        }
        let mut forbidden_deg = 0.0f32;
        for (i, z) in self.zones.iter().enumerate() {
            let Some(z) = z else { continue };
            let index = i as u8;
            if !self.wrap && (z.from_deg < self.min_deg || z.to_deg > self.max_deg) {
                return Err(Error::ZoneOutsideLimits(id, index));
            }
            let earlier = self.zones.iter().take(i).flatten();
            if earlier
                .clone()
                .any(|e| e.meets(z.from_deg, z.to_deg, self.wrap))
            {
                return Err(Error::ZonesOverlap(id, index));
            }
            forbidden_deg += z.to_deg - z.from_deg;
        }
        // Zones do not overlap, so they cover the range only if their lengths add up to
        // it and they leave no gap: walk from the lower limit across touching zones.
        let covered = if self.wrap {
            forbidden_deg >= 360.0
        } else {
            let mut at = self.min_deg;
            for _ in 0..MAX_ZONES {
                if let Some(z) = self
                    .zones
                    .iter()
                    .flatten()
                    .find(|z| z.from_deg <= at && z.to_deg > at)
                {
                    at = z.to_deg;
                }
            }
            at >= self.max_deg
        };
        if covered {
            return Err(Error::RangeForbidden(id));
        }
        Ok(())
    }

    /// Angle reached at a microstep count, degrees.
    pub fn steps_to_deg(&self, steps: i32) -> f32 {
        self.home_offset_deg + steps as f32 / self.steps_per_deg
    }

    /// The step count of a position given as an angle (e.g. where an axis is known to
    /// stand): within the limits unless the axis wraps (zones are not checked: an axis
    /// may stand in one), then [`AxisConfig::steps_for_deg`]. Errors: `NotFinite`,
    /// `BelowLimit`, `AboveLimit`, `StepOverflow`.
    pub fn position_steps(&self, angle_deg: f32) -> Result<i32> {
        if !angle_deg.is_finite() {
            return Err(Error::NotFinite(Quantity::Angle));
        }
        if !self.wrap && angle_deg < self.min_deg {
            return Err(Error::BelowLimit(self.id));
        }
        if !self.wrap && angle_deg > self.max_deg {
            return Err(Error::AboveLimit(self.id));
        }
        self.steps_for_deg(angle_deg)
    }

    /// Whether an angle is allowed as a resting position: within limits (unless wrap)
    /// and outside every zone. Returns the error naming the limit or zone.
    pub fn check_angle(&self, angle_deg: f32) -> Result<()> {
        if !angle_deg.is_finite() {
            return Err(Error::NotFinite(Quantity::Angle));
        }
        if !self.wrap {
            if angle_deg < self.min_deg {
                return Err(Error::BelowLimit(self.id));
            }
            if angle_deg > self.max_deg {
                return Err(Error::AboveLimit(self.id));
            }
        }
        for (i, z) in self.zones.iter().enumerate() {
            if let Some(z) = z {
                if z.contains(angle_deg, self.wrap) {
                    return Err(Error::InZone(self.id, i as u8));
                }
            }
        }
        Ok(())
    }

    /// Whether the straight path between two angles (unwrapped) is clear of zones and
    /// limits. An axis found in a zone (e.g. homed there, or a zone set over it) may be
    /// driven out of it through the zone's nearer edge (either edge from its middle),
    /// and the path must not cross the rest of that zone, nor, on a wrapping axis, meet
    /// another copy of it. An axis that starts beyond a soft
    /// limit may only be driven back inside, toward that limit, and no farther than
    /// the other limit; every other path lies within the limits.
    pub fn check_path(&self, from_deg: f32, to_deg: f32) -> Result<()> {
        let (lo, hi) = if from_deg <= to_deg {
            (from_deg, to_deg)
        } else {
            (to_deg, from_deg)
        };
        if !self.wrap {
            // Beyond a limit, the only allowed direction is back toward it; otherwise
            // the whole path lies within the limits.
            if from_deg > self.max_deg {
                if to_deg >= from_deg {
                    return Err(Error::AboveLimit(self.id));
                }
            } else if hi > self.max_deg {
                return Err(Error::AboveLimit(self.id));
            }
            if from_deg < self.min_deg {
                if to_deg <= from_deg {
                    return Err(Error::BelowLimit(self.id));
                }
            } else if lo < self.min_deg {
                return Err(Error::BelowLimit(self.id));
            }
        }
        for (i, z) in self.zones.iter().enumerate() {
            if let Some(z) = z {
                if z.meets(lo, hi, self.wrap) && !z.only_leaves(from_deg, to_deg, self.wrap) {
                    return Err(Error::PathCrossesZone(self.id, i as u8));
                }
            }
        }
        Ok(())
    }

    /// The step count (from home) nearest `angle_deg`, in f32 like every setpoint — the
    /// one angle → steps conversion. Errors: `StepOverflow` beyond ±[`STEPS_MAX`] or for
    /// a non-finite angle.
    pub fn steps_for_deg(&self, angle_deg: f32) -> Result<i32> {
        let x = (angle_deg - self.home_offset_deg) * self.steps_per_deg;
        if !x.is_finite() || math::round(x).abs() > STEPS_MAX as f32 {
            return Err(Error::StepOverflow(self.id));
        }
        Ok(math::round(x) as i32)
    }

    /// The setpoint for `target_deg`, moving from step count `current_steps`.
    ///
    /// On a wrapping axis the target is first replaced by its 360° copy nearest the
    /// current angle; of two copies equally near (half a turn away) the higher one, so
    /// that a half turn always goes toward increasing angle, whichever copy the target
    /// names. If the path to that copy crosses a zone, or the copy lies beyond
    /// [`WRAP_RANGE_DEG`] from home, the copy the other way round is taken. This is the
    /// one rule for which way a wrapping axis turns: aiming, plans and the console's
    /// moves all come through here. The target and the angle really reached must both be allowed (see
    /// [`AxisConfig::check_angle`]); when rounding to a whole step would leave the
    /// allowed range, the neighbouring step inside it is used. The path, including the
    /// backlash turn-round point, must be clear of zones ([`AxisConfig::check_path`]).
    pub fn setpoint(&self, target_deg: f32, current_steps: i32) -> Result<Setpoint> {
        self.validate()?;
        self.setpoint_of_valid(target_deg, current_steps)
    }

    /// [`AxisConfig::setpoint`] of an axis that has passed [`AxisConfig::validate`]
    /// (the caller holds the proof: a [`crate::goniometer::CheckedRig`]), without
    /// validating it again.
    pub(crate) fn setpoint_of_valid(
        &self,
        target_deg: f32,
        current_steps: i32,
    ) -> Result<Setpoint> {
        if !target_deg.is_finite() {
            return Err(Error::NotFinite(Quantity::Angle));
        }
        if current_steps.unsigned_abs() > STEPS_MAX as u32 {
            return Err(Error::StepOverflow(self.id));
        }
        let current_deg = self.steps_to_deg(current_steps);
        if !self.wrap {
            return self.setpoint_exact(target_deg, current_steps, current_deg);
        }
        if target_deg.abs() > 1.0e6 {
            return Err(Error::TooHigh(Quantity::Angle));
        }
        // The copy nearest the current angle (a tie goes to the higher copy); if its
        // path crosses a zone or it lies beyond the counter's range, the copy the
        // other way round.
        let k = math::floor((current_deg - target_deg) / 360.0 + 0.5);
        let near = target_deg + 360.0 * k;
        match self.setpoint_exact(near, current_steps, current_deg) {
            Err(e @ (Error::PathCrossesZone(..) | Error::StepOverflow(_))) => {
                let other = if near > current_deg {
                    near - 360.0
                } else {
                    near + 360.0
                };
                self.setpoint_exact(other, current_steps, current_deg)
                    .map_err(|_| e)
            }
            r => r,
        }
    }

    /// [`AxisConfig::setpoint`] for one exact target angle (no 360° copies).
    fn setpoint_exact(
        &self,
        target: f32,
        current_steps: i32,
        current_deg: f32,
    ) -> Result<Setpoint> {
        if self.wrap && (target - self.home_offset_deg).abs() > WRAP_RANGE_DEG {
            return Err(Error::StepOverflow(self.id));
        }
        self.check_angle(target)?;
        let s0 = self.steps_for_deg(target)?;
        // When rounding lands on a forbidden step, try the nearer neighbour first.
        let exact = (target - self.home_offset_deg) * self.steps_per_deg;
        let up = exact >= s0 as f32;
        let (n1, n2) = if up {
            (s0.saturating_add(1), s0.saturating_sub(1))
        } else {
            (s0.saturating_sub(1), s0.saturating_add(1))
        };
        let mut chosen = None;
        for s in [s0, n1, n2] {
            if s.abs() <= STEPS_MAX && self.check_angle(self.steps_to_deg(s)).is_ok() {
                chosen = Some(s);
                break;
            }
        }
        let steps = match chosen {
            Some(s) => s,
            None => {
                return Err(self
                    .check_angle(self.steps_to_deg(s0))
                    .err()
                    .unwrap_or(Error::NoReachableSolution))
            }
        };
        self.finish(steps, target, current_steps, current_deg)
    }

    /// The setpoint that drives to the step count of `target` (a setpoint computed
    /// earlier, such as a stored aiming solution) from `current_steps`: that exact step
    /// count, whichever 360° copy it is on a wrapping axis, with every check of
    /// [`AxisConfig::setpoint`] — the angle reached allowed, within the counter's range,
    /// and the path and backlash turn-round clear from where the axis stands now. The
    /// residual is `target`'s.
    pub fn setpoint_to_steps(&self, target: &Setpoint, current_steps: i32) -> Result<Setpoint> {
        self.validate()?;
        self.setpoint_to_steps_of_valid(target, current_steps)
    }

    /// [`AxisConfig::setpoint_to_steps`] of an axis that has passed
    /// [`AxisConfig::validate`], without validating it again.
    pub(crate) fn setpoint_to_steps_of_valid(
        &self,
        target: &Setpoint,
        current_steps: i32,
    ) -> Result<Setpoint> {
        if current_steps.unsigned_abs() > STEPS_MAX as u32
            || target.steps.unsigned_abs() > STEPS_MAX as u32
        {
            return Err(Error::StepOverflow(self.id));
        }
        let reached = self.steps_to_deg(target.steps);
        if self.wrap && (reached - self.home_offset_deg).abs() > WRAP_RANGE_DEG {
            return Err(Error::StepOverflow(self.id));
        }
        self.check_angle(reached)?;
        self.finish(
            target.steps,
            reached + target.residual_deg,
            current_steps,
            self.steps_to_deg(current_steps),
        )
    }

    /// The setpoint at an allowed step count `steps` for `target` degrees, from
    /// `current_steps` (at `current_deg`): the backlash turn-round, and the path (both
    /// legs) checked.
    fn finish(
        &self,
        steps: i32,
        target: f32,
        current_steps: i32,
        current_deg: f32,
    ) -> Result<Setpoint> {
        let reached = self.steps_to_deg(steps);
        let backlash_steps = self.backlash_steps();
        let approach_steps = match self.approach {
            Approach::FromBelow if current_steps > steps && backlash_steps > 0 => {
                Some(steps.saturating_sub(backlash_steps))
            }
            Approach::FromAbove if current_steps < steps && backlash_steps > 0 => {
                Some(steps.saturating_add(backlash_steps))
            }
            _ => None,
        };
        match approach_steps {
            Some(a) => {
                if a.abs() > STEPS_MAX {
                    return Err(Error::StepOverflow(self.id));
                }
                let turn = self.steps_to_deg(a);
                if !self.wrap && turn < self.min_deg {
                    return Err(Error::BelowLimit(self.id));
                }
                if !self.wrap && turn > self.max_deg {
                    return Err(Error::AboveLimit(self.id));
                }
                self.check_path(current_deg, turn)?;
                self.check_path(turn, reached)?;
            }
            None => self.check_path(current_deg, reached)?,
        }
        Ok(Setpoint {
            id: self.id,
            steps,
            angle_deg: reached,
            residual_deg: target - reached,
            approach_steps,
        })
    }

    /// Backlash in whole microsteps (rounded up).
    pub fn backlash_steps(&self) -> i32 {
        let b = self.backlash_deg * self.steps_per_deg;
        if b.is_finite() && b > 0.0 {
            (math::floor(b) as i32).saturating_add(if b > math::floor(b) { 1 } else { 0 })
        } else {
            0
        }
    }

    /// Time for a point-to-point move of `distance_deg` with a trapezoidal (or, for
    /// short moves, triangular) speed profile, seconds.
    ///
    /// ```
    /// use matterwave_core::axis::AxisConfig;
    /// use matterwave_core::AxisId;
    /// let a = AxisConfig::new(AxisId::Arm, 100.0); // 10 deg/s, 20 deg/s²
    /// assert!((a.move_time_s(90.0) - 9.5).abs() < 1e-5); // 90/10 + 10/20
    /// assert!((a.move_time_s(1.0) - 2.0 * (1.0f32 / 20.0).sqrt()).abs() < 1e-5);
    /// ```
    pub fn move_time_s(&self, distance_deg: f32) -> f32 {
        let d = distance_deg.abs();
        let v = self.max_speed_deg_s;
        let a = self.accel_deg_s2;
        if !(d.is_finite() && v > 0.0 && a > 0.0) {
            return 0.0;
        }
        if d >= v * v / a {
            d / v + v / a
        } else {
            2.0 * math::sqrt(d / a)
        }
    }

    /// Time to go from `current_steps` to a setpoint, including the backlash
    /// turn-round, seconds.
    pub fn time_to_s(&self, current_steps: i32, sp: &Setpoint) -> f32 {
        let spd = self.steps_per_deg;
        let leg = |a: i32, b: i32| self.move_time_s((b as f32 - a as f32) / spd);
        match sp.approach_steps {
            Some(t) => leg(current_steps, t) + leg(t, sp.steps),
            None => leg(current_steps, sp.steps),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Angle → steps against the f64 definition round((x − home)·steps/deg), with the
    /// limits checked (zones not: an axis may stand in one).
    #[test]
    fn position_steps_matches_the_f64_definition() {
        let mut a = AxisConfig::new(AxisId::Arm, 888.888_9);
        a.home_offset_deg = -0.35;
        a.min_deg = -170.0;
        a.max_deg = 170.0;
        for x in [-170.0f32, -12.5, -0.35, 0.0, 0.001, 40.0, 123.456, 170.0] {
            let want = ((x as f64 - a.home_offset_deg as f64) * a.steps_per_deg as f64).round();
            assert_eq!(a.position_steps(x), Ok(want as i32), "{x}");
        }
        assert_eq!(
            a.position_steps(170.01),
            Err(Error::AboveLimit(AxisId::Arm))
        );
        assert_eq!(
            a.position_steps(-171.0),
            Err(Error::BelowLimit(AxisId::Arm))
        );
        assert_eq!(
            a.position_steps(f32::NAN),
            Err(Error::NotFinite(Quantity::Angle))
        );
        a.steps_per_deg = 1.0e6;
        assert_eq!(
            a.position_steps(100.0),
            Err(Error::StepOverflow(AxisId::Arm))
        );
    }

    fn arm() -> AxisConfig {
        let mut a = AxisConfig::new(AxisId::Arm, 100.0);
        a.min_deg = -170.0;
        a.max_deg = 170.0;
        a.zones[0] = Some(Zone {
            from_deg: -10.0,
            to_deg: 10.0,
        });
        a
    }

    #[test]
    fn limits_and_zones_are_errors() {
        let a = arm();
        assert_eq!(a.setpoint(171.0, 2000), Err(Error::AboveLimit(AxisId::Arm)));
        assert_eq!(
            a.setpoint(-171.0, -2000),
            Err(Error::BelowLimit(AxisId::Arm))
        );
        assert_eq!(a.setpoint(3.0, 2000), Err(Error::InZone(AxisId::Arm, 0)));
        // Crossing the gun's shadow from one side to the other is refused.
        assert_eq!(
            a.setpoint(-30.0, 3000),
            Err(Error::PathCrossesZone(AxisId::Arm, 0))
        );
        assert!(a.setpoint(f32::NAN, 0).is_err());
    }

    #[test]
    fn rounding_never_enters_a_zone() {
        let mut a = arm();
        a.steps_per_deg = 3.0; // 1/3 degree steps: 10.0 rounds to 10.0 exactly? 30 steps
        a.zones[0] = Some(Zone {
            from_deg: -10.0,
            to_deg: 10.1,
        });
        let sp = a.setpoint(10.15, 100).unwrap();
        assert!(sp.angle_deg > 10.1, "{sp:?}");
    }

    #[test]
    fn backlash_turns_round_below() {
        let mut a = arm();
        a.backlash_deg = 0.5;
        let sp = a.setpoint(40.0, 6000).unwrap();
        assert_eq!(sp.approach_steps, Some(4000 - 50));
        let sp = a.setpoint(40.0, 2000).unwrap();
        assert_eq!(sp.approach_steps, None);
    }

    #[test]
    fn wrap_takes_nearest_copy() {
        let mut z = AxisConfig::new(AxisId::Azimuth, 10.0);
        z.wrap = true;
        let sp = z.setpoint(-170.0, 1750).unwrap(); // current 175°, target ≡ 190°
        assert!((sp.angle_deg - 190.0).abs() < 1e-4, "{sp:?}");
        z.zones[0] = Some(Zone {
            from_deg: 170.0,
            to_deg: 180.0,
        });
        assert_eq!(
            z.setpoint(-185.0, 0),
            Err(Error::InZone(AxisId::Azimuth, 0))
        );
    }
}
