//! Kinematic I-V maxima with an inner-potential model: a constant V0, or V0(E) of
//! [`crate::inner`]. The peak condition itself is [`Face::iv_peaks`]'s; this file only
//! finds, for each peak, the energy at which the constant V0 it is computed with equals
//! V0(E) there.

use super::*;
use crate::constants::{ENERGY_MAX_EV, ENERGY_MIN_EV};
use crate::inner::V0Model;

/// Most fixed-point steps per peak.
const MAX_STEPS: usize = 32;
/// The fixed point is reached when a step moves the peak by less than this, eV.
const TOLERANCE_EV: f32 = 1e-4;
/// Room for the peaks of one narrow window while one peak is refined.
const WINDOW_PEAKS: usize = 8;

impl Face {
    /// Kinematic I-V peak energies (outside, eV) on rod (h, k) between `from_ev` and
    /// `to_ev` with the inner-potential model `v0`, in increasing energy, into `out`.
    ///
    /// With [`V0Model::Constant`] this is [`Face::iv_peaks`]. With [`V0Model::Energy`]
    /// each peak E solves E = E_G(V0(E)), where E_G(v) is the peak of the same bulk G
    /// with the constant inner potential v: candidates come from the largest V0 in the
    /// window (V0(E) falls with E) over the window widened by V0's spread, then each is
    /// refined by fixed-point steps (at most 32, to 1e-4 eV; the step contracts when
    /// |dV0/dE| < 1, true of every tabulated form above its cap) and kept when it lies
    /// in the window. `out` also serves as the candidate list: when it is too small for
    /// the candidates, the listing is marked truncated.
    ///
    /// ```
    /// use matterwave_core::inner::{V0Form, V0Model};
    /// use matterwave_core::lattice::{Cell, Structure};
    /// use matterwave_core::surface::{Face, Incidence, IvPeak};
    /// let f = Face::new(&Cell::new(Structure::Fcc, 3.6149, 0.0, 0.0).unwrap(), [1, 0, 0]).unwrap();
    /// let form = V0Form { max_ev: 10.3, b_ev: 0.75, c_ev: 76.6, d_ev: 11.4 };
    /// let inc = Incidence::normal(100.0).unwrap();
    /// let mut out = [IvPeak::EMPTY; 16];
    /// let n = f.iv_peaks_model([0, 0], &inc, &V0Model::Energy(form), 20.0, 400.0, &mut out).unwrap().stored;
    /// for p in &out[..n] {
    ///     // Inside the crystal the peak sits at E + V0(E), wherever E lands.
    ///     let mut one = [IvPeak::EMPTY; 16];
    ///     let v = form.value_ev(p.energy_ev);
    ///     let m = f.iv_peaks([0, 0], &inc, v, 1.0, 500.0, &mut one).unwrap().stored;
    ///     assert!(one[..m].iter().any(|q| q.g_hkl == p.g_hkl && (q.energy_ev - p.energy_ev).abs() < 0.01));
    /// }
    /// ```
    pub fn iv_peaks_model(
        &self,
        rod: [i32; 2],
        inc: &Incidence,
        v0: &V0Model,
        from_ev: f32,
        to_ev: f32,
        out: &mut [IvPeak],
    ) -> Result<Listing> {
        let form = match v0 {
            V0Model::Constant(v) => return self.iv_peaks(rod, inc, *v, from_ev, to_ev, out),
            V0Model::Energy(form) => *form,
        };
        let from = beam::check_energy(from_ev)?;
        let to = beam::check_energy(to_ev)?;
        if from >= to {
            return Err(Error::EmptyRange);
        }
        let v_hi = beam::check_inner_potential(form.value_ev(from))?;
        let v_lo = beam::check_inner_potential(form.value_ev(to))?;
        let spread = (v_hi - v_lo).max(0.0);
        let lo = (from - spread - 1.0).max(ENERGY_MIN_EV);
        let candidates = self.iv_peaks(rod, inc, v_hi, lo, to, out)?;
        let mut kept = 0usize;
        for i in 0..candidates.stored {
            let Some(start) = out.get(i).copied() else {
                break;
            };
            let peak = self.refine(rod, inc, &form, start, spread)?;
            if peak.energy_ev >= from && peak.energy_ev <= to {
                if let Some(slot) = out.get_mut(kept) {
                    *slot = peak;
                    kept += 1;
                }
            }
        }
        Ok(Listing {
            stored: kept,
            truncated: candidates.truncated,
        })
    }

    /// The peak of `start`'s G where the constant V0 it is computed with is V0(E) at
    /// its energy (fixed-point steps E ← E_G(V0(E))).
    fn refine(
        &self,
        rod: [i32; 2],
        inc: &Incidence,
        form: &crate::inner::V0Form,
        start: IvPeak,
        spread: f32,
    ) -> Result<IvPeak> {
        let mut peak = start;
        let mut window = [IvPeak::EMPTY; WINDOW_PEAKS];
        for _ in 0..MAX_STEPS {
            let v = beam::check_inner_potential(form.value_ev(peak.energy_ev))?;
            let lo = (peak.energy_ev - spread - 1.0).max(ENERGY_MIN_EV);
            let hi = (peak.energy_ev + spread + 1.0).min(ENERGY_MAX_EV);
            if lo >= hi {
                break;
            }
            let found = self.iv_peaks(rod, inc, v, lo, hi, &mut window)?;
            let next = window
                .iter()
                .take(found.stored)
                .find(|p| p.g_hkl == peak.g_hkl)
                .copied();
            let Some(next) = next else {
                // The beam does not exist at that energy with this V0: keep the last.
                return Ok(peak);
            };
            let moved = (next.energy_ev - peak.energy_ev).abs();
            peak = next;
            if moved < TOLERANCE_EV {
                return Ok(peak);
            }
        }
        Err(Error::NoConvergence)
    }
}

impl Face {
    /// Kinematic I-V peak energies with an inner-potential model and a top-layer
    /// relaxation, the one choice the console's I-V plan and `mwctl` make: with
    /// [`V0Model::Constant`] the relaxed maxima of [`Face::iv_peaks_relaxed`]; with
    /// [`V0Model::Energy`] the maxima of [`Face::iv_peaks_model`], for the
    /// bulk-terminated face only — a relaxation beside it is
    /// [`Error::RelaxationNeedsConstantV0`] (its shifts are modelled with one V0).
    #[allow(clippy::too_many_arguments)]
    #[inline(never)]
    pub fn iv_peaks_with(
        &self,
        rod: [i32; 2],
        inc: &Incidence,
        v0: &V0Model,
        from_ev: f32,
        to_ev: f32,
        relax: &super::Relaxation,
        out: &mut [IvPeak],
    ) -> Result<Listing> {
        match v0 {
            V0Model::Constant(v) => self.iv_peaks_relaxed(rod, inc, *v, from_ev, to_ev, relax, out),
            V0Model::Energy(_) if !relax.is_none() => Err(Error::RelaxationNeedsConstantV0),
            V0Model::Energy(_) => self.iv_peaks_model(rod, inc, v0, from_ev, to_ev, out),
        }
    }
}
