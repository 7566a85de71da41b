//! Stepped (vicinal) surfaces: a regular staircase of terraces of the face.
//!
//! ## The model (kinematic, regular step array)
//!
//! Terraces of width L (Å, measured along the step-down direction ŝ, in the surface
//! plane of the terraces) are separated by steps of height h (Å): each terrace is the
//! previous one moved by T = L·ŝ − h·n̂. The miscut angle is α = atan(h/L). A beam of the
//! terrace, rod g, splits into sub-beams at k∥ = k∥,in + g + δ·ŝ where the phase between
//! neighbouring terraces is whole, Q·T = j:
//!
//! L·(g·ŝ + δ) − q·h = j,  q = K⊥,in + K⊥,out (inside, with the inner potential V0),
//!
//! and the terrace's own diffraction (its envelope) is centred on δ = 0. The phase
//! u = q·h − L·(g·ŝ) (cycles, at δ = 0) decides the pattern: whole u is **in phase**
//! (one sharp spot at δ = 0), u = n + ½ is **out of phase** (two spots of equal weight at
//! δ = ±1/(2L)); in general the two sub-beams nearest the envelope lie at δ = f/L and
//! (f − 1)/L, f the fractional part of u, 1/L apart in k∥. Their weights are the terrace
//! envelope sinc²(π·δ·L) (a terrace of width L taken as continuous): sinc²(π·f) and
//! sinc²(π·(1 − f)), 4/π² each out of phase.
//! On the specular rod (g = 0) the in-phase condition is 2·h·K⊥ = n at normal incidence
//! (K⊥ = 1/λ inside): the in-phase energies are the kinematic Bragg energies of spacing
//! h, the out-of-phase ones those of order n + ½. Each sub-beam's own q (it leaves at a
//! slightly different angle) is used: δ is solved by fixed-point iteration.
//!
//! Conventions as the rest of [`crate::surface`]: ŝ is given by its azimuth in the
//! surface frame (from e1 toward e2, degrees), k∥ in the frame of the incidence, exit
//! angles from the terrace normal. The arm angles (δ, ν) of each sub-beam follow
//! [`crate::goniometer::surface_frame_lab`] (terraces at the sample tilt).
//!
//! ```
//! use matterwave_core::lattice::{Cell, Structure};
//! use matterwave_core::surface::{Face, Incidence, steps::Steps};
//! let cu = Cell::new(Structure::Fcc, 3.615, 0.0, 0.0).unwrap();
//! let f = Face::new(&cu, [1, 0, 0]).unwrap();
//! // Monatomic steps a/2 high, 2° miscut towards e1.
//! let st = Steps::from_miscut(2.0, 0.0, f.monatomic_step_a()).unwrap();
//! assert!((st.terrace_a - 1.8075 / 2f32.to_radians().tan()).abs() < 1e-2);
//! let e = f.step_phase_energy_ev(&st, &Incidence::normal(100.0).unwrap(), 0.0, 1.5).unwrap();
//! // Out of phase, n + ½ = 3/2: λ inside = 2h/1.5, E ≈ 150.4/λ² ≈ 25.9 eV.
//! assert!((e - 25.9).abs() < 0.1);
//! ```

use super::iv::{bisect_energy, perp_sum};
use super::{exit_deg_of, Face, Incidence};
use crate::beam;
use crate::error::{finite, Error, Quantity, Result};
use crate::goniometer;
use crate::listing::Listing;
use crate::math;

/// Largest miscut accepted, degrees.
pub const MISCUT_MAX_DEG: f32 = 45.0;
/// Largest step height accepted, Å.
pub const STEP_HEIGHT_MAX_A: f32 = 100.0;
/// Terrace widths accepted, Å.
pub const TERRACE_RANGE_A: (f32, f32) = (0.5, 1.0e5);

/// Fixed-point steps for a sub-beam's δ.
const ITERATIONS: usize = 8;

/// A regular step array on a face.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Steps {
    /// Terrace width L along the step-down direction, Å.
    pub terrace_a: f32,
    /// Step height h, Å.
    pub height_a: f32,
    /// Azimuth of the step-down direction ŝ in the surface frame (from e1 toward e2),
    /// degrees.
    pub azimuth_deg: f32,
    /// ŝ in the surface frame (cos, sin of the azimuth).
    pub down: [f32; 2],
}

impl Steps {
    /// Steps from terrace width L (0.5 Å to 1e5 Å), step height h (0 < h ≤ 100 Å) and
    /// the step-down azimuth (finite, degrees). Errors: `NotFinite`/`TooLow`/`TooHigh`
    /// of `Length` or `Azimuth`.
    pub fn new(terrace_a: f32, height_a: f32, azimuth_deg: f32) -> Result<Steps> {
        let l = finite(terrace_a, Quantity::Length)?;
        if l < TERRACE_RANGE_A.0 {
            return Err(Error::TooLow(Quantity::Length));
        }
        if l > TERRACE_RANGE_A.1 {
            return Err(Error::TooHigh(Quantity::Length));
        }
        let h = check_height(height_a)?;
        let az = finite(azimuth_deg, Quantity::Azimuth)?;
        let (s, c) = math::sin_cos_deg(az);
        Ok(Steps {
            terrace_a: l,
            height_a: h,
            azimuth_deg: az,
            down: [c, s],
        })
    }

    /// Steps of height h (Å) from a miscut angle α (0 < α ≤ 45°) towards azimuth
    /// `azimuth_deg`: L = h / tan α. Errors as [`Steps::new`], and `TooLow`/`TooHigh`
    /// of `Angle` for the miscut.
    pub fn from_miscut(miscut_deg: f32, azimuth_deg: f32, height_a: f32) -> Result<Steps> {
        let a = finite(miscut_deg, Quantity::Angle)?;
        if a <= 0.0 {
            return Err(Error::TooLow(Quantity::Angle));
        }
        if a > MISCUT_MAX_DEG {
            return Err(Error::TooHigh(Quantity::Angle));
        }
        let h = check_height(height_a)?;
        Steps::new(h / math::tan(math::rad(a)), h, azimuth_deg)
    }

    /// The miscut angle atan(h/L), degrees.
    pub fn miscut_deg(&self) -> f32 {
        math::deg(math::atan2(self.height_a, self.terrace_a))
    }
}

/// A step height h checked: finite, 0 < h ≤ [`STEP_HEIGHT_MAX_A`] Å. Errors:
/// `NotFinite`/`TooLow`/`TooHigh` of `Length`.
pub fn check_height(h: f32) -> Result<f32> {
    let h = finite(h, Quantity::Length)?;
    if h <= 0.0 {
        Err(Error::TooLow(Quantity::Length))
    } else if h > STEP_HEIGHT_MAX_A {
        Err(Error::TooHigh(Quantity::Length))
    } else {
        Ok(h)
    }
}

/// An energy where the specular beam's terraces are in or out of phase.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct StepPhase {
    /// Outside energy, eV.
    pub energy_ev: f32,
    /// The phase q·h in cycles: whole = in phase, n + ½ = out of phase.
    pub phase_cycles: f32,
    /// Whether the terraces are in phase (one sharp spot).
    pub in_phase: bool,
}

impl StepPhase {
    /// A placeholder for initialising buffers.
    pub const EMPTY: StepPhase = StepPhase {
        energy_ev: 0.0,
        phase_cycles: 0.0,
        in_phase: false,
    };
}

/// The half-cycles of the specular phase within an energy range
/// ([`Face::step_phase_range`]).
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct StepPhaseRange {
    /// First half-cycle index 2·q·h to try (at least 1).
    pub first_half: i32,
    /// Last half-cycle index to try.
    pub last_half: i32,
    height_a: f32,
    sin_tilt: f32,
    v0_ev: f32,
    from_ev: f32,
    to_ev: f32,
    q_lo: f32,
    q_hi: f32,
}

impl StepPhaseRange {
    /// The in- or out-of-phase energy of half-cycle `half` (phase `half`/2), or `None`
    /// when it lies outside the range. One bisection.
    pub fn phase(&self, half: i32) -> Option<StepPhase> {
        let phase = half as f32 * 0.5;
        let target = phase / self.height_a;
        if target < self.q_lo || target > self.q_hi {
            return None;
        }
        Some(StepPhase {
            energy_ev: bisect_energy(
                [0.0, 0.0],
                self.sin_tilt,
                self.v0_ev,
                target,
                self.from_ev,
                self.to_ev,
            ),
            phase_cycles: phase,
            in_phase: half % 2 == 0,
        })
    }
}

/// One sub-beam of a split spot.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct SubBeam {
    /// Terrace-phase index j (Q·T = j).
    pub index: i32,
    /// Offset δ along ŝ from the terrace beam, 1/Å.
    pub offset_inv_a: f32,
    /// k∥ in the surface frame of the incidence, 1/Å.
    pub k_par_inv_a: [f32; 2],
    /// Polar exit angle from the terrace normal, degrees.
    pub exit_deg: f32,
    /// Exit azimuth in the surface frame, degrees.
    pub exit_azimuth_deg: f32,
    /// In-plane arm angle δ and elevation ν that look along it, degrees.
    pub arm_deg: f32,
    /// Elevation ν, degrees.
    pub elevation_deg: f32,
    /// Relative weight from the terrace envelope, sinc²(π·δ·L), 0 to 1.
    pub weight: f32,
}

/// The split of one beam at one energy.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Split {
    /// u = q·h − L·(g·ŝ) at δ = 0, cycles.
    pub phase_cycles: f32,
    /// The two sub-beams nearest the terrace beam (δ ≥ 0 first); `None` where evanescent.
    pub beams: [Option<SubBeam>; 2],
    /// Their k∥ separation 1/L, 1/Å.
    pub splitting_inv_a: f32,
}

impl Split {
    /// The angle between the two sub-beams' directions, degrees (the spot splitting an
    /// arm or screen sees at this energy: about λ/(L·cos θ) near the terrace beam);
    /// `None` unless both propagate.
    pub fn angle_deg(&self) -> Option<f32> {
        let [Some(a), Some(b)] = self.beams else {
            return None;
        };
        let dir = |x: &SubBeam| {
            let (st, ct) = math::sin_cos_deg(x.exit_deg);
            let (sp, cp) = math::sin_cos_deg(x.exit_azimuth_deg);
            [st * cp, st * sp, ct]
        };
        let (u, v) = (dir(&a), dir(&b));
        let c = math::cross(u, v);
        Some(math::deg(math::atan2(math::norm(c), math::dot(u, v))))
    }
}

impl Face {
    /// The height of a monatomic step, Å: the spacing of the atomic planes when they
    /// are evenly spaced (Cu(100) a/2, Ru(0001) c/2, Si(100) a/4), else the period
    /// along the normal (Si(111): the bilayer, a/√3) — common practice, no source.
    pub fn monatomic_step_a(&self) -> f32 {
        let p = self.atomic_planes();
        if p.evenly_spaced() {
            p.mean_a()
        } else {
            p.period_a
        }
    }

    /// The energy (outside, eV) where the specular phase q·h equals `phase_cycles`
    /// (> 0) at the incidence's tilt (its energy unused) with inner potential V0: 2h·K
    /// = phase at normal incidence. Errors: the energy outside 1 eV–300 keV →
    /// `TooLow`/`TooHigh(Energy)`; a bad V0 → its error; phase ≤ 0 → `TooLow(Count)`.
    pub fn step_phase_energy_ev(
        &self,
        steps: &Steps,
        inc: &Incidence,
        v0_ev: f32,
        phase_cycles: f32,
    ) -> Result<f32> {
        let v0 = beam::check_inner_potential(v0_ev)?;
        let p = finite(phase_cycles, Quantity::Count)?;
        if p <= 0.0 {
            return Err(Error::TooLow(Quantity::Count));
        }
        let target = p / steps.height_a;
        let (lo, hi) = (
            crate::constants::ENERGY_MIN_EV,
            crate::constants::ENERGY_MAX_EV,
        );
        if perp_sum([0.0, 0.0], inc.sin_tilt, v0, lo) > target {
            return Err(Error::TooLow(Quantity::Energy));
        }
        if perp_sum([0.0, 0.0], inc.sin_tilt, v0, hi) < target {
            return Err(Error::TooHigh(Quantity::Energy));
        }
        Ok(bisect_energy([0.0, 0.0], inc.sin_tilt, v0, target, lo, hi))
    }

    /// The in-phase and out-of-phase energies of the specular beam between `from_ev`
    /// and `to_ev` (phases n/2, increasing), at the incidence's tilt, into `out`.
    /// Work: one bisection per listed energy. Errors: bad energies or V0 → theirs;
    /// `from ≥ to` → `EmptyRange`; empty `out` → `EmptyBuffer`.
    pub fn step_phases(
        &self,
        steps: &Steps,
        inc: &Incidence,
        v0_ev: f32,
        from_ev: f32,
        to_ev: f32,
        out: &mut [StepPhase],
    ) -> Result<Listing> {
        if out.is_empty() {
            return Err(Error::EmptyBuffer);
        }
        let range = self.step_phase_range(steps, inc, v0_ev, from_ev, to_ev)?;
        let mut stored = 0usize;
        let mut truncated = false;
        for half in range.first_half..=range.last_half {
            let Some(p) = range.phase(half) else {
                continue;
            };
            let Some(slot) = out.get_mut(stored) else {
                truncated = true;
                break;
            };
            *slot = p;
            stored += 1;
        }
        Ok(Listing { stored, truncated })
    }

    /// The half-cycles of the specular phase q·h that the energies `from_ev` to `to_ev`
    /// span, to list them one at a time ([`StepPhaseRange::phase`]) as
    /// [`Face::step_phases`] lists them. Errors: as [`Face::step_phases`].
    pub fn step_phase_range(
        &self,
        steps: &Steps,
        inc: &Incidence,
        v0_ev: f32,
        from_ev: f32,
        to_ev: f32,
    ) -> Result<StepPhaseRange> {
        let v0 = beam::check_inner_potential(v0_ev)?;
        let lo = beam::check_energy(from_ev)?;
        let hi = beam::check_energy(to_ev)?;
        if lo >= hi {
            return Err(Error::EmptyRange);
        }
        let h = steps.height_a;
        let s = inc.sin_tilt;
        let q_lo = perp_sum([0.0, 0.0], s, v0, lo);
        let q_hi = perp_sum([0.0, 0.0], s, v0, hi);
        // Half-cycles 2·q·h from just below the range to just above it.
        Ok(StepPhaseRange {
            first_half: (math::floor(2.0 * q_lo * h) as i32).max(1),
            last_half: math::floor(2.0 * q_hi * h) as i32 + 1,
            height_a: h,
            sin_tilt: s,
            v0_ev: v0,
            from_ev: lo,
            to_ev: hi,
            q_lo,
            q_hi,
        })
    }

    /// How beam (h, k) of the terraces splits at `inc` with inner potential V0: the
    /// phase u and the two sub-beams nearest the terrace beam, with their exit angles
    /// and arm angles. Errors: V0 → its error; |h|, |k| > 4096 → `IndicesTooLarge`;
    /// the terrace beam itself evanescent inside → `Evanescent`.
    pub fn split(
        &self,
        steps: &Steps,
        rod: [i32; 2],
        inc: &Incidence,
        v0_ev: f32,
    ) -> Result<Split> {
        let v0 = beam::check_inner_potential(v0_ev)?;
        if rod[0].abs() > 4096 || rod[1].abs() > 4096 {
            return Err(Error::IndicesTooLarge);
        }
        let g = self.rod_inv_a(rod);
        let (l, h) = (steps.terrace_a, steps.height_a);
        let gs = g[0] * steps.down[0] + g[1] * steps.down[1];
        let q0 = self.q_at(g, steps, 0.0, inc, v0).ok_or(Error::Evanescent)?;
        let u = q0 * h - l * gs;
        let whole = math::floor(u);
        let frac = u - whole;
        let j_a = -(whole as i32);
        let mut beams = [None, None];
        for (slot, (j, start)) in beams
            .iter_mut()
            .zip([(j_a, frac / l), (j_a - 1, (frac - 1.0) / l)])
        {
            // δ = (j + q(δ)·h)/L − g·ŝ, iterated from the δ of the terrace beam's q.
            let mut d = start;
            let mut ok = true;
            for _ in 0..ITERATIONS {
                match self.q_at(g, steps, d, inc, v0) {
                    Some(q) => d = (j as f32 + q * h) / l - gs,
                    None => {
                        ok = false;
                        break;
                    }
                }
            }
            if ok {
                *slot = self.sub_beam(g, steps, d, j, inc);
            }
        }
        Ok(Split {
            phase_cycles: u,
            beams,
            splitting_inv_a: 1.0 / l,
        })
    }

    /// Face-frame vector g + δ·ŝ turned by the incidence's azimuth.
    fn turned(&self, g: [f32; 2], steps: &Steps, d: f32, inc: &Incidence) -> [f32; 2] {
        let v = [g[0] + d * steps.down[0], g[1] + d * steps.down[1]];
        [
            v[0] * inc.cos_az - v[1] * inc.sin_az,
            v[0] * inc.sin_az + v[1] * inc.cos_az,
        ]
    }

    /// q = K⊥,in + K⊥,out inside for the sub-beam at δ, at the incidence's energy.
    fn q_at(&self, g: [f32; 2], steps: &Steps, d: f32, inc: &Incidence, v0: f32) -> Option<f32> {
        let q = perp_sum(
            self.turned(g, steps, d, inc),
            inc.sin_tilt,
            v0,
            inc.energy_ev,
        );
        (q >= 0.0).then_some(q)
    }

    fn sub_beam(
        &self,
        g: [f32; 2],
        steps: &Steps,
        d: f32,
        j: i32,
        inc: &Incidence,
    ) -> Option<SubBeam> {
        let t = self.turned(g, steps, d, inc);
        let u = inc.k_inv_a;
        let kx = inc.sin_tilt * u + t[0];
        let ky = t[1];
        let k2 = kx * kx + ky * ky;
        if k2.is_nan() || k2 > u * u || !d.is_finite() {
            return None;
        }
        let k_par = math::sqrt(k2);
        let lab = goniometer::surface_frame_lab(inc.tilt_deg);
        let [e1, e2, n] = lab;
        let kz = math::sqrt((1.0 - k2 / (u * u)).max(0.0));
        let dir = math::add(
            math::add(math::scale(e1, kx / u), math::scale(e2, ky / u)),
            math::scale(n, kz),
        );
        let (arm_deg, elevation_deg) = goniometer::arm_elevation_deg(dir);
        let x = core::f32::consts::PI * d * steps.terrace_a;
        let weight = if x.abs() < 1.0e-6 {
            1.0
        } else {
            let s = math::sin(x) / x;
            s * s
        };
        Some(SubBeam {
            index: j,
            offset_inv_a: d,
            k_par_inv_a: [kx, ky],
            exit_deg: exit_deg_of(k_par, u),
            exit_azimuth_deg: if k2 > 0.0 {
                math::deg(math::atan2(ky, kx))
            } else {
                0.0
            },
            arm_deg,
            elevation_deg,
            weight,
        })
    }
}
