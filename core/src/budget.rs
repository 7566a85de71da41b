//! Angular error budget, in degrees.
//!
//! Each contribution is one standard deviation of the arm angle, in degrees, from one
//! named cause; independent causes combine as the root sum of squares. Helpers turn the
//! usual inputs into such standard deviations: step quantisation, detector acceptance,
//! and — for anything that enters through a model, such as the energy spread or the
//! lattice-constant uncertainty — a numerical sensitivity times the input's σ.
//!
//! ```
//! use matterwave_core::{beam, budget::{self, Budget}, math};
//! // First-order rows 2.2137 Å apart at 100 eV: arm = asin(λ(E)/d).
//! let arm = |e: f32| Ok(math::deg(math::asin(beam::wavelength_a(e)? / 2.2137)));
//! let de = budget::sensitivity(arm, 100.0, 0.5).unwrap(); // deg per eV
//! let b = Budget {
//!     energy_spread_deg: budget::propagate(de, 0.25), // σ_E = 0.25 eV
//!     lattice_constant_deg: 0.01,
//!     step_quantisation_deg: budget::quantisation_deg(200.0).unwrap(),
//!     detector_acceptance_deg: budget::acceptance_deg(0.5).unwrap(),
//!     arm_zero_deg: 0.02,
//! };
//! assert_eq!(b.contributions()[3].name, "detector acceptance");
//! assert!(b.total_deg() > b.detector_acceptance_deg && b.total_deg() < 0.5);
//! ```

use crate::constants::{ENERGY_MAX_EV, ENERGY_MIN_EV};
use crate::error::{finite, Error, Quantity, Result};
use crate::goniometer::{self, AimRequest, Branch, Mode, Position, Rig, Solution};
use crate::lattice::Cell;
use crate::math;
use crate::surface::Face;

/// One named term of a [`Budget`].
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Contribution {
    /// What causes it: one of "energy spread", "lattice constant", "step quantisation",
    /// "detector acceptance", "arm zero".
    pub name: &'static str,
    /// One standard deviation of the arm angle, degrees.
    pub deg: f32,
}

/// The angular error budget: each field is one standard deviation of the arm angle, in
/// degrees (non-negative), from one cause.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Budget {
    /// From the spread (or uncertainty) of the beam energy, degrees.
    pub energy_spread_deg: f32,
    /// From the uncertainty of the lattice constant, degrees.
    pub lattice_constant_deg: f32,
    /// From rounding the target to whole motor steps, degrees ([`quantisation_deg`]).
    pub step_quantisation_deg: f32,
    /// From the detector's finite acceptance cone, degrees ([`acceptance_deg`]).
    pub detector_acceptance_deg: f32,
    /// From the uncertainty of the arm zero, degrees (e.g. a fitted σ from
    /// [`crate::fit::arm_zero_and_energy_offset`]).
    pub arm_zero_deg: f32,
}

impl Budget {
    /// The five terms with their names, in the order of the fields.
    pub fn contributions(&self) -> [Contribution; 5] {
        [
            Contribution {
                name: "energy spread",
                deg: self.energy_spread_deg,
            },
            Contribution {
                name: "lattice constant",
                deg: self.lattice_constant_deg,
            },
            Contribution {
                name: "step quantisation",
                deg: self.step_quantisation_deg,
            },
            Contribution {
                name: "detector acceptance",
                deg: self.detector_acceptance_deg,
            },
            Contribution {
                name: "arm zero",
                deg: self.arm_zero_deg,
            },
        ]
    }

    /// Combined standard deviation, degrees: the root sum of squares of the terms
    /// (independent causes). Computed without intermediate overflow; a NaN term gives
    /// NaN.
    ///
    /// ```
    /// use matterwave_core::budget::Budget;
    /// let b = Budget {
    ///     energy_spread_deg: 0.03,
    ///     lattice_constant_deg: 0.04,
    ///     step_quantisation_deg: 0.0,
    ///     detector_acceptance_deg: 0.0,
    ///     arm_zero_deg: 0.0,
    /// };
    /// assert!((b.total_deg() - 0.05).abs() < 1e-7);
    /// ```
    pub fn total_deg(&self) -> f32 {
        let terms = self.contributions();
        let mut big = 0.0f32;
        for c in terms.iter() {
            if c.deg.is_nan() {
                return f32::NAN;
            }
            big = big.max(c.deg.abs());
        }
        if big == 0.0 || !big.is_finite() {
            return big;
        }
        let mut s = 0.0f32;
        for c in terms.iter() {
            let r = c.deg / big;
            s += r * r;
        }
        big * math::sqrt(s)
    }
}

/// Standard deviation (degrees) of the rounding error when an angle is set in whole
/// steps of 1/`steps_per_deg` degrees: a uniform error over one step, step/√12.
///
/// Errors: NaN/infinite → `NotFinite(Count)`; not positive, or so small that the result
/// overflows → `TooLow(Count)`.
///
/// ```
/// use matterwave_core::budget::quantisation_deg;
/// // 200 steps per degree: 0.005° steps, σ = 0.005/√12 ≈ 0.00144°.
/// assert!((quantisation_deg(200.0).unwrap() - 0.001_443_4).abs() < 1e-7);
/// ```
pub fn quantisation_deg(steps_per_deg: f32) -> Result<f32> {
    let s = finite(steps_per_deg, Quantity::Count)?;
    if s.is_nan() || s <= 0.0 {
        return Err(Error::TooLow(Quantity::Count));
    }
    let q = 1.0 / (s * math::sqrt(12.0));
    if q.is_finite() {
        Ok(q)
    } else {
        Err(Error::TooLow(Quantity::Count))
    }
}

/// Standard deviation (degrees), along one axis, of the direction of an electron
/// accepted by a detector with a circular acceptance cone of half-angle
/// `half_angle_deg` (0–90°), the directions being uniform in solid angle inside the
/// cone.
///
/// The deviation along one axis is θ·cos φ (θ from the cone axis, φ the azimuth), so
/// σ² = ⟨θ²⟩/2 = [2α·sin α − α²·cos α − 2(1 − cos α)] / [2(1 − cos α)] for half-angle α
/// (radians). For small cones σ ≈ α/2 (uniform over a disc of radius α: σ² = α²/4);
/// 0.04% below α/2 at α = 10°, 0.4% at 30°, 3.8% at 90°. Evaluated by its Taylor series
/// (to α¹⁴, better than 1e-7 relative up to 90°), free of the cancellation in the
/// closed form.
///
/// Errors: NaN/infinite → `NotFinite(Angle)`; negative → `TooLow(Angle)`; above 90° →
/// `TooHigh(Angle)`.
///
/// ```
/// use matterwave_core::budget::acceptance_deg;
/// assert!((acceptance_deg(1.0).unwrap() - 0.5).abs() < 1e-4);
/// // 90°: σ² = (π − 2)/2 rad².
/// let exact = ((core::f32::consts::PI - 2.0) / 2.0).sqrt().to_degrees();
/// assert!((acceptance_deg(90.0).unwrap() - exact).abs() < 1e-4);
/// ```
pub fn acceptance_deg(half_angle_deg: f32) -> Result<f32> {
    let h = finite(half_angle_deg, Quantity::Angle)?;
    if h < 0.0 {
        return Err(Error::TooLow(Quantity::Angle));
    }
    if h > 90.0 {
        return Err(Error::TooHigh(Quantity::Angle));
    }
    let a = math::rad(h);
    let x = a * a;
    // σ² = x/4 − x²/144 − x³/4320 − x⁴/134400 − x⁵/4354560 − 691x⁶/100590336000
    //      − x⁷/4981616640 − …  (series of the closed form above, x = α²)
    let c = [
        0.25f32,
        -1.0 / 144.0,
        -1.0 / 4320.0,
        -1.0 / 134_400.0,
        -1.0 / 4_354_560.0,
        -691.0 / 100_590_336_000.0,
        -1.0 / 4_981_616_640.0,
    ];
    let mut p = 0.0f32;
    for k in c.iter().rev() {
        p = p * x + k;
    }
    let var = p * x;
    Ok(math::deg(math::sqrt(var.max(0.0))))
}

/// Central-difference derivative (f(x + dx) − f(x − dx)) / (2·dx) of `f`, e.g. an arm
/// angle in degrees as a function of an energy (eV) or a lattice constant (Å): degrees
/// per unit of x. The denominator is the difference of the two abscissae as actually
/// rounded.
///
/// Errors: `x` or `dx` NaN/infinite → `NotFinite(Count)`; `dx` not positive or too small
/// to move x → `TooLow(Count)`; x ± dx overflowing → `TooHigh(Count)`; `f` returning a
/// NaN/infinite value → `NotFinite(Angle)`; errors of `f` are returned as is.
///
/// ```
/// use matterwave_core::budget::sensitivity;
/// let s = sensitivity(|x| Ok(3.0 * x * x), 2.0, 1e-2).unwrap();
/// assert!((s - 12.0).abs() < 1e-3);
/// ```
pub fn sensitivity<F: Fn(f32) -> Result<f32>>(f: F, x: f32, dx: f32) -> Result<f32> {
    let x = finite(x, Quantity::Count)?;
    let dx = finite(dx, Quantity::Count)?;
    if dx.is_nan() || dx <= 0.0 {
        return Err(Error::TooLow(Quantity::Count));
    }
    let (xp, xm) = (x + dx, x - dx);
    if !(xp.is_finite() && xm.is_finite()) {
        return Err(Error::TooHigh(Quantity::Count));
    }
    let span = xp - xm;
    if !(span > 0.0 && span.is_finite()) {
        return Err(Error::TooLow(Quantity::Count));
    }
    let fp = finite(f(xp)?, Quantity::Angle)?;
    let fm = finite(f(xm)?, Quantity::Angle)?;
    finite((fp - fm) / span, Quantity::Angle)
}

/// Standard deviation of the angle from an input with standard deviation `sigma`:
/// |sens|·σ (first-order propagation; units of `sens` times units of σ, normally
/// degrees). Returns |sens·σ|, so a negative σ is taken by its magnitude.
///
/// ```
/// use matterwave_core::budget::propagate;
/// assert_eq!(propagate(-0.2, 0.5), 0.1);
/// ```
pub fn propagate(sens: f32, sigma: f32) -> f32 {
    (sens * sigma).abs()
}

/// What the arm budget of one aimed beam is computed from, besides the geometry.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct ArmBudgetInputs {
    /// One standard deviation of the beam energy, eV (0 to 100).
    pub energy_spread_ev: f32,
    /// One standard deviation of the arm zero, degrees (0 to 10).
    pub arm_zero_sigma_deg: f32,
    /// One standard deviation of the lattice constant a, Å (the crystal table's).
    pub lattice_sigma_a: f32,
}

/// The arm budget of one aimed beam: where the arm goes, the model's sensitivities and
/// the named contributions.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct ArmBudget {
    /// The nearest reachable solution, as `aim` gives it.
    pub solution: Solution,
    /// Arm angle of the beam (the solution's target before step rounding), degrees.
    pub arm_deg: f32,
    /// ∂arm/∂E at the sample energy, degrees per eV.
    pub d_arm_d_energy_deg_per_ev: f32,
    /// ∂arm/∂a (lattice constant), degrees per Å.
    pub d_arm_d_lattice_deg_per_a: f32,
    /// The contributions.
    pub budget: Budget,
}

/// The angular budget of the arm aimed as `req` asks (its face, beam, energy at the
/// sample, tilt, mode and branch), from the position `current` — the one function
/// behind the console's `budget` request and `mwctl calc budget`.
///
/// The solution is [`goniometer::aim`]'s nearest on the real rig. Sensitivities are
/// central differences of the arm angle on the rig's [`Rig::geometry_only`] copy, aimed
/// from that solution, so that a small change keeps the same branch: ∂arm/∂E with a step
/// of max(0.5 % E, 0.05 eV), shrunk tenfold (down to 1 meV) while the beam would not
/// exist on one side (within `de` of the ends of the 1 eV–300 keV range the difference
/// is centred `de` inside it); ∂arm/∂a with a step of 0.1 % of the face's lattice
/// constant a.
///
/// Errors: inputs outside their ranges (`TooLow`/`TooHigh` of `EnergySpread`,
/// `ArmZeroSigma`, `Length` for the lattice σ); whatever `aim` refuses; a beam so close
/// to its emergence energy that no energy step fits (`Evanescent`).
pub fn arm_budget(
    rig: &Rig,
    req: &AimRequest<'_>,
    current: &Position,
    inputs: &ArmBudgetInputs,
) -> Result<ArmBudget> {
    let spread = finite(inputs.energy_spread_ev, Quantity::EnergySpread)?;
    range(spread, 100.0, Quantity::EnergySpread)?;
    let zero = finite(inputs.arm_zero_sigma_deg, Quantity::ArmZeroSigma)?;
    range(zero, 10.0, Quantity::ArmZeroSigma)?;
    let sigma_a = finite(inputs.lattice_sigma_a, Quantity::Length)?;
    let cell = &req.face.cell;
    let miller = req.face.miller;
    let energy_ev = req.energy_ev;
    range(sigma_a, cell.a_a, Quantity::Length)?;
    let mut one = [Solution::EMPTY; 1];
    goniometer::aim(rig, req, current, &mut one)?;
    let [solution] = one;
    let target = |s: &Solution| s.arm.angle_deg + s.arm.residual_deg;
    let open = rig.geometry_only(matches!(req.mode, Mode::AtAzimuth(_)));
    let from = solution.position();
    // Near the solution, on its branch.
    let branch = match solution.branch {
        1 => Branch::Plus,
        -1 => Branch::Minus,
        _ => req.branch,
    };
    let arm_at = |face: &Face, e: f32| -> Result<f32> {
        let mut one = [Solution::EMPTY; 1];
        let r = AimRequest {
            face,
            energy_ev: e,
            branch,
            ..*req
        };
        goniometer::aim(&open, &r, &from, &mut one)?;
        one.first().map(target).ok_or(Error::NoReachableSolution)
    };
    let mut de = (0.005 * energy_ev).max(0.05);
    let d_energy = loop {
        // At the ends of the energy range the difference is taken just inside it.
        let centre = math::clamp(energy_ev, ENERGY_MIN_EV + de, ENERGY_MAX_EV - de);
        match sensitivity(|x| arm_at(req.face, x), centre, de) {
            Ok(s) => break s,
            Err(_) if de > 1e-3 => de *= 0.1,
            Err(_) => return Err(Error::Evanescent),
        }
    };
    let a0 = cell.a_a;
    let d_lattice = sensitivity(
        |x| {
            let cell_x = Cell::new(cell.structure, x, cell.b_a, cell.c_a)?;
            arm_at(&Face::new(&cell_x, miller)?, energy_ev)
        },
        a0,
        1e-3 * a0,
    )?;
    let budget = Budget {
        energy_spread_deg: propagate(d_energy, spread),
        lattice_constant_deg: propagate(d_lattice, sigma_a),
        step_quantisation_deg: quantisation_deg(rig.arm.steps_per_deg)?,
        detector_acceptance_deg: acceptance_deg(rig.acceptance_deg)?,
        arm_zero_deg: zero,
    };
    Ok(ArmBudget {
        solution,
        arm_deg: target(&solution),
        d_arm_d_energy_deg_per_ev: d_energy,
        d_arm_d_lattice_deg_per_a: d_lattice,
        budget,
    })
}

/// `Ok` when 0 ≤ x ≤ max.
fn range(x: f32, max: f32, q: Quantity) -> Result<()> {
    if x < 0.0 {
        Err(Error::TooLow(q))
    } else if x > max {
        Err(Error::TooHigh(q))
    } else {
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Relative tolerance `t`, widened under `fast-math` (micromath's sqrt is good to
    /// a few per cent).
    fn tol(t: f64) -> f64 {
        if cfg!(feature = "fast-math") {
            0.1
        } else {
            t
        }
    }

    #[test]
    fn budget_names_and_total() {
        let b = Budget {
            energy_spread_deg: 1.0,
            lattice_constant_deg: 2.0,
            step_quantisation_deg: 2.0,
            detector_acceptance_deg: 4.0,
            arm_zero_deg: 0.0,
        };
        let names = b.contributions().map(|c| c.name);
        assert_eq!(
            names,
            [
                "energy spread",
                "lattice constant",
                "step quantisation",
                "detector acceptance",
                "arm zero"
            ]
        );
        assert!((b.total_deg() as f64 - 5.0).abs() < 5.0 * tol(2e-7));
        let huge = Budget {
            energy_spread_deg: 3e30,
            lattice_constant_deg: 4e30,
            ..b
        };
        assert!((huge.total_deg() as f64 / 5e30 - 1.0).abs() < tol(1e-5));
    }

    #[test]
    fn acceptance_matches_closed_form() {
        // Closed form in f64 (derived in the doc comment above).
        for h in [0.0f64, 0.1, 1.0, 5.0, 20.0, 45.0, 70.0, 90.0] {
            let a = h.to_radians();
            let exact = if a == 0.0 {
                0.0
            } else {
                let v = (2.0 * a * a.sin() - a * a * a.cos() - 2.0 * (1.0 - a.cos()))
                    / (2.0 * (1.0 - a.cos()));
                v.sqrt().to_degrees()
            };
            let got = acceptance_deg(h as f32).unwrap() as f64;
            assert!(
                (got - exact).abs() <= tol(1e-6) * (1.0 + exact),
                "{h}: {got} {exact}"
            );
        }
        assert_eq!(acceptance_deg(-1.0), Err(Error::TooLow(Quantity::Angle)));
        assert_eq!(acceptance_deg(91.0), Err(Error::TooHigh(Quantity::Angle)));
        assert_eq!(
            acceptance_deg(f32::NAN),
            Err(Error::NotFinite(Quantity::Angle))
        );
    }

    #[test]
    fn helpers_reject_bad_inputs() {
        assert_eq!(quantisation_deg(0.0), Err(Error::TooLow(Quantity::Count)));
        assert_eq!(quantisation_deg(1e-45), Err(Error::TooLow(Quantity::Count)));
        assert_eq!(
            quantisation_deg(f32::INFINITY),
            Err(Error::NotFinite(Quantity::Count))
        );
        assert_eq!(
            sensitivity(Ok, 1e8, 1e-3),
            Err(Error::TooLow(Quantity::Count))
        );
        assert_eq!(
            sensitivity(|_| Ok(f32::NAN), 1.0, 1e-3),
            Err(Error::NotFinite(Quantity::Angle))
        );
        assert_eq!(
            sensitivity(|_| Err(Error::NoBraggAngle), 1.0, 1e-3),
            Err(Error::NoBraggAngle)
        );
        assert_eq!(
            sensitivity(Ok, f32::MAX, f32::MAX),
            Err(Error::TooHigh(Quantity::Count))
        );
    }
}
