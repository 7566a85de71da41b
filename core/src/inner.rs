//! The inner potential V0 as a model: one constant, or an energy-dependent form.
//!
//! matterwave's V0 is positive: the depth of the crystal's mean potential below the
//! vacuum level, in eV, so that an electron of energy E outside has E + V0 inside.
//!
//! The energy-dependent form is the Rundgren type, written for a positive V0:
//!
//! V0(E) = min(max_ev, c_ev / √(E + d_ev) − b_ev), E the beam energy outside, eV.
//!
//! It is the form V0r(E) = max(β0, β1 + β2/√(E + β3)) of the real part of the optical
//! potential (negative in that convention) used in LEED I-V analyses following
//! J. Rundgren, Phys. Rev. B 68, 125405 (2003), with max_ev = −β0, b_ev = −β1,
//! c_ev = −β2 and d_ev = β3 (from memory). It falls with energy, as the exchange and
//! correlation part of the potential does, and is capped at low energy. The crystal
//! table gives its parameters per crystal or face, each with a source.

use crate::error::{Error, Result};
use crate::math;

/// Parameters of V0(E) = min(max_ev, c_ev/√(E + d_ev) − b_ev) (module docs).
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct V0Form {
    /// The cap at low energy, eV.
    pub max_ev: f32,
    /// The offset b, eV.
    pub b_ev: f32,
    /// The scale c, eV^(3/2).
    pub c_ev: f32,
    /// The energy shift d, eV.
    pub d_ev: f32,
}

impl V0Form {
    /// V0 at the beam energy `energy_ev` outside, eV: the form, never below 0 and
    /// never above the cap. A NaN or a negative E + d gives the cap (the form's
    /// low-energy end).
    ///
    /// ```
    /// use matterwave_core::inner::V0Form;
    /// let f = V0Form { max_ev: 10.3, b_ev: 0.75, c_ev: 76.6, d_ev: 11.4 };
    /// assert_eq!(f.value_ev(10.0), 10.3); // capped
    /// assert!((f.value_ev(100.0) - (76.6 / 111.4f32.sqrt() - 0.75)).abs() < 1e-5);
    /// ```
    pub fn value_ev(&self, energy_ev: f32) -> f32 {
        let x = energy_ev + self.d_ev;
        if x.is_nan() || x <= 0.0 {
            return self.max_ev.max(0.0);
        }
        let v = self.c_ev / math::sqrt(x) - self.b_ev;
        v.min(self.max_ev).max(0.0)
    }
}

/// Which inner potential a calculation uses.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum V0Model {
    /// One V0 at every energy, eV.
    Constant(f32),
    /// V0(E) of a [`V0Form`].
    Energy(V0Form),
}

impl V0Model {
    /// V0 at the beam energy `energy_ev` outside, eV.
    pub fn at_ev(&self, energy_ev: f32) -> f32 {
        match self {
            V0Model::Constant(v) => *v,
            V0Model::Energy(f) => f.value_ev(energy_ev),
        }
    }

    /// The model's name as the console and `mwctl` print it: `constant` or `energy`.
    pub const fn name(&self) -> &'static str {
        match self {
            V0Model::Constant(_) => "constant",
            V0Model::Energy(_) => "energy",
        }
    }
}

/// The inner-potential model chosen by name: `constant` or `energy`.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum V0ModelKind {
    /// One V0 at every energy.
    Constant,
    /// The table's V0(E) form for the face.
    Energy,
}

impl V0ModelKind {
    /// Every kind, in the order help lists them.
    pub const ALL: [V0ModelKind; 2] = [V0ModelKind::Constant, V0ModelKind::Energy];

    /// Its name: `constant` or `energy`.
    pub const fn name(self) -> &'static str {
        match self {
            V0ModelKind::Constant => "constant",
            V0ModelKind::Energy => "energy",
        }
    }

    /// Inverse of [`V0ModelKind::name`].
    pub fn from_name(name: &str) -> Option<V0ModelKind> {
        V0ModelKind::ALL.iter().copied().find(|k| k.name() == name)
    }
}

/// The model of `kind` for a face: `constant` uses `constant_ev`; `energy` needs the
/// table's form for the face (`form`), else [`Error::NoEnergyForm`].
pub fn model_for(kind: V0ModelKind, constant_ev: f32, form: Option<V0Form>) -> Result<V0Model> {
    match kind {
        V0ModelKind::Constant => Ok(V0Model::Constant(constant_ev)),
        V0ModelKind::Energy => form.map(V0Model::Energy).ok_or(Error::NoEnergyForm),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::table;

    /// The copper row's V0(E) against the published form evaluated independently in
    /// f64: V0r(E) = max(β0, β1 + β2/√(E + β3)), β = (−10.3, 0.75, −76.6, 11.4) eV
    /// (Rundgren-type form, J. Rundgren, Phys. Rev. B 68, 125405 (2003); the copper
    /// parameters from memory). At 100 eV: V0r = 0.75 − 76.6/√111.4 = −6.5075 eV; at
    /// 20 eV the cap −10.3 eV holds; at 400 eV, −3.0262 eV.
    #[test]
    fn copper_v0_of_e_matches_the_published_form() {
        let cu = table::find("cu").unwrap();
        let form = cu.inner_potential_form_for([1, 0, 0]).unwrap();
        let beta = [-10.3f64, 0.75, -76.6, 11.4];
        for e in [20.0f64, 50.0, 100.0, 400.0] {
            let v0r = beta[0].max(beta[1] + beta[2] / (e + beta[3]).sqrt());
            let ours = form.value_ev(e as f32) as f64;
            assert!((ours + v0r).abs() < 1e-4, "E = {e}: {ours} vs {}", -v0r);
        }
        assert!((form.value_ev(100.0) - 6.5075).abs() < 1e-3);
        assert_eq!(cu.inner_potential_form_for([1, 1, 1]), Some(form));
        assert_eq!(
            table::find("ag")
                .unwrap()
                .inner_potential_form_for([1, 0, 0]),
            None
        );
    }

    #[test]
    fn model_choice() {
        let f = V0Form {
            max_ev: 10.3,
            b_ev: 0.75,
            c_ev: 76.6,
            d_ev: 11.4,
        };
        assert_eq!(
            model_for(V0ModelKind::Constant, 9.0, Some(f)),
            Ok(V0Model::Constant(9.0))
        );
        assert_eq!(
            model_for(V0ModelKind::Energy, 9.0, Some(f)),
            Ok(V0Model::Energy(f))
        );
        assert_eq!(
            model_for(V0ModelKind::Energy, 9.0, None),
            Err(Error::NoEnergyForm)
        );
        assert_eq!(V0ModelKind::from_name("energy"), Some(V0ModelKind::Energy));
        assert_eq!(f.value_ev(f32::NAN), 10.3);
        // Falls with energy, never below zero.
        assert!(f.value_ev(1000.0) < f.value_ev(100.0));
        assert!(f.value_ev(300_000.0) >= 0.0);
    }
}
