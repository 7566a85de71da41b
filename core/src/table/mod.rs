//! The fixed crystal table, generated from `tables/crystals.toml`.
//!
//! `data.rs` is written by `cargo run -p matterwave-gen-tables`; never edit it by hand
//! (the `table_drift` test fails when it differs from the generator's output). Sources
//! for every number are in `tables/crystals.toml`; the firmware does not carry them.
//!
//! ```
//! use matterwave_core::table;
//! let cu = table::find("cu").unwrap();
//! assert_eq!(cu.name, "copper");
//! let cell = cu.cell().unwrap();
//! assert!((cell.a_a - 3.615).abs() < 0.01);
//! ```

use crate::error::{Error, Result};
use crate::lattice::{Cell, Miller, Structure};

pub use crate::inner::V0Form;
pub use thermal::Expansion;

mod data;
mod thermal;

/// Typical values for one common face of a crystal.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct FaceInfo {
    /// Three-index Miller indices of the face (conventional cell).
    pub miller: Miller,
    /// Typical inner potential V0 for this face, eV, where known.
    pub inner_potential_ev: Option<f32>,
    /// Work function of this face, eV, where known.
    pub work_function_ev: Option<f32>,
    /// Energy-dependent inner potential V0(E) of this face, where the table gives one.
    pub inner_potential_form: Option<V0Form>,
}

/// One crystal of the table.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Crystal {
    /// Lower-case id, e.g. `cu`.
    pub id: &'static str,
    /// Name, e.g. `copper`.
    pub name: &'static str,
    /// Structure type.
    pub structure: Structure,
    /// Lattice constant a, Å.
    pub a_a: f32,
    /// Lattice constant b, Å (= a unless orthorhombic).
    pub b_a: f32,
    /// Lattice constant c, Å (= a for cubic).
    pub c_a: f32,
    /// Standard uncertainty of a (and of b and c, relatively), Å.
    pub a_uncertainty_a: f32,
    /// Temperature the lattice constants hold at, K.
    pub temperature_k: f32,
    /// Polycrystalline work function, eV, where known.
    pub work_function_ev: Option<f32>,
    /// Typical inner potential when no face value is listed, eV.
    pub inner_potential_ev: Option<f32>,
    /// Energy-dependent inner potential V0(E) for faces without their own.
    pub inner_potential_form: Option<V0Form>,
    /// Linear thermal expansion about `temperature_k`.
    pub expansion: Expansion,
    /// Common faces with their typical values.
    pub faces: &'static [FaceInfo],
}

impl Crystal {
    /// The conventional cell of this crystal.
    pub fn cell(&self) -> Result<Cell> {
        Cell::new(self.structure, self.a_a, self.b_a, self.c_a)
    }

    /// Typical values for a face, if the table lists it (matching any of the face's
    /// symmetry-equivalent index orderings is left to the caller).
    pub fn face(&self, miller: Miller) -> Option<&'static FaceInfo> {
        self.faces.iter().find(|f| f.miller == miller)
    }

    /// Inner potential for a face: the face's value, else the crystal's typical value.
    pub fn inner_potential_for(&self, miller: Miller) -> Option<f32> {
        self.face(miller)
            .and_then(|f| f.inner_potential_ev)
            .or(self.inner_potential_ev)
    }

    /// Energy-dependent inner potential for a face: the face's V0(E) form, else the
    /// crystal's, where the table gives one.
    pub fn inner_potential_form_for(&self, miller: Miller) -> Option<V0Form> {
        self.face(miller)
            .and_then(|f| f.inner_potential_form)
            .or(self.inner_potential_form)
    }

    /// Work function for a face: the face's value, else the polycrystalline value.
    pub fn work_function_for(&self, miller: Miller) -> Option<f32> {
        self.face(miller)
            .and_then(|f| f.work_function_ev)
            .or(self.work_function_ev)
    }
}

/// Every crystal, sorted by id.
pub fn all() -> &'static [Crystal] {
    data::CRYSTALS
}

/// The crystal with this id (exact, lower-case), or `UnknownCrystal`.
pub fn find(id: &str) -> Result<&'static Crystal> {
    data::CRYSTALS
        .iter()
        .find(|c| c.id == id)
        .ok_or(Error::UnknownCrystal)
}
