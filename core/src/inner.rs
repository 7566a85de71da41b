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
        if !(x > 0.0) {
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
