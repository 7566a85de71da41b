//! The crystal table as the console sees it: every number of `tables/crystals.toml` as
//! f64, beside where it comes from.
//!
//! The firmware's table ([`matterwave_core::table`]) holds the values as f32 and no
//! sources; this one holds what the firmware leaves out. Both are generated from
//! `tables/crystals.toml` by `cargo run -p matterwave-gen-tables` (the data of this one
//! is `console-host/src/table_sources.rs`, never edited by hand), so the console reads
//! no TOML for them at run time. The `table_drift` test in `tests/` fails when either
//! generated file or either compiled table disagrees with the TOML.
//!
//! ```
//! use matterwave_console::tables;
//! let cu = tables::find("cu").unwrap();
//! assert_eq!(cu.name, "copper");
//! assert!((cu.a_a - 3.615).abs() < 0.01);
//! assert!(cu.lattice_source.contains("from memory"));
//! let phi = cu.face([1, 1, 1]).and_then(|f| f.work_function_ev).unwrap();
//! assert!(phi.value > 4.0 && !phi.source.is_empty());
//! ```

use matterwave_core::lattice::{Miller, Structure};

use crate::table_sources::CRYSTALS;

/// A value from the table with where it comes from.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Sourced {
    /// The value, as written in the table.
    pub value: f64,
    /// Where it comes from: a handbook or paper, "from memory" for a recalled value, or
    /// how an estimate was made.
    pub source: &'static str,
}

/// Typical values for one face of a crystal, with their sources.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct FaceSources {
    /// Three-index Miller indices (conventional cell; (0001) of a hexagonal crystal is
    /// `[0, 0, 1]`).
    pub miller: Miller,
    /// Work function of this face, eV.
    pub work_function_ev: Option<Sourced>,
    /// Typical inner potential V0 of this face, eV.
    pub inner_potential_ev: Option<Sourced>,
    /// Energy-dependent inner potential V0(E) of this face.
    pub inner_potential_form: Option<V0FormSources>,
}

/// A crystal's linear thermal expansion, as the table gives it, with its source.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct ExpansionSources {
    /// Linear expansion coefficient of a (and b) at the table temperature, 10⁻⁶/K.
    pub alpha_a_ppm_per_k: f64,
    /// Linear expansion coefficient of c, 10⁻⁶/K, where the structure has a c of its own.
    pub alpha_c_ppm_per_k: Option<f64>,
    /// Temperatures the linear model is accepted at, K: [lowest, highest].
    pub range_k: [f64; 2],
    /// Where the coefficients and the range come from.
    pub source: &'static str,
}

/// An energy-dependent inner potential V0(E) = min(max_ev, c_ev/√(E + d_ev) − b_ev)
/// (see [`matterwave_core::inner`]), with its source.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct V0FormSources {
    /// The cap at low energy, eV.
    pub max_ev: f64,
    /// Offset b, eV.
    pub b_ev: f64,
    /// Scale c, eV^(3/2).
    pub c_ev: f64,
    /// Energy shift d, eV.
    pub d_ev: f64,
    /// Where the form and its parameters come from.
    pub source: &'static str,
}

/// One crystal of the table, with its sources.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CrystalSources {
    /// Lower-case id, e.g. `cu` (the same as in [`matterwave_core::table`]).
    pub id: &'static str,
    /// Name, e.g. `copper`.
    pub name: &'static str,
    /// Structure type.
    pub structure: Structure,
    /// Lattice constant a, Å.
    pub a_a: f64,
    /// Lattice constant b, Å, where the table gives one (orthorhombic cells only).
    pub b_a: Option<f64>,
    /// Lattice constant c, Å, where the table gives one (every cell but the cubic ones).
    pub c_a: Option<f64>,
    /// Standard uncertainty of a, Å.
    pub a_uncertainty_a: f64,
    /// Temperature the lattice constants hold at, K.
    pub temperature_k: f64,
    /// Where the lattice constants, their uncertainty and temperature come from.
    pub lattice_source: &'static str,
    /// Polycrystalline work function, eV.
    pub work_function_ev: Option<Sourced>,
    /// Typical inner potential V0, eV, used for faces without their own value.
    pub inner_potential_ev: Option<Sourced>,
    /// Energy-dependent inner potential V0(E) for faces without their own.
    pub inner_potential_form: Option<V0FormSources>,
    /// Linear thermal expansion about `temperature_k`.
    pub expansion: ExpansionSources,
    /// Common faces, in table order.
    pub faces: &'static [FaceSources],
}

impl CrystalSources {
    /// b as the core stores it: the table's b for orthorhombic cells, else a.
    pub fn b_or_a(&self) -> f64 {
        self.b_a.unwrap_or(self.a_a)
    }

    /// c as the core stores it: the table's c where the structure has one, else a.
    pub fn c_or_a(&self) -> f64 {
        self.c_a.unwrap_or(self.a_a)
    }

    /// The face with exactly these indices, if listed.
    pub fn face(&self, miller: Miller) -> Option<&'static FaceSources> {
        self.faces.iter().find(|f| f.miller == miller)
    }
}

/// Every crystal, sorted by id, in the order of [`matterwave_core::table::all`].
pub fn all() -> &'static [CrystalSources] {
    CRYSTALS
}

/// The crystal with this id (exact, lower-case), if the table has it.
pub fn find(id: &str) -> Option<&'static CrystalSources> {
    CRYSTALS.iter().find(|c| c.id == id)
}

#[cfg(test)]
mod tests {
    use super::*;
    use matterwave_core::table;

    #[test]
    fn same_crystals_as_the_core() {
        let ids: Vec<&str> = all().iter().map(|c| c.id).collect();
        let core: Vec<&str> = table::all().iter().map(|c| c.id).collect();
        assert_eq!(ids, core);
        for c in table::all() {
            let s = find(c.id).unwrap();
            assert_eq!(s.structure, c.structure, "{}", c.id);
            assert_eq!(s.faces.len(), c.faces.len(), "{}", c.id);
        }
        assert_eq!(find("unobtainium"), None);
    }

    #[test]
    fn every_number_has_a_source() {
        for c in all() {
            assert!(!c.lattice_source.trim().is_empty(), "{}", c.id);
            let faces = c.faces.iter();
            let values = [c.work_function_ev, c.inner_potential_ev]
                .into_iter()
                .chain(faces.flat_map(|f| [f.work_function_ev, f.inner_potential_ev]));
            for s in values.flatten() {
                assert!(!s.source.trim().is_empty(), "{}: {}", c.id, s.value);
                assert!(s.value.is_finite() && s.value > 0.0, "{}", c.id);
            }
        }
    }

    #[test]
    fn b_and_c_as_the_core_stores_them() {
        let cu = find("cu").unwrap();
        assert_eq!((cu.b_a, cu.c_a), (None, None));
        assert_eq!((cu.b_or_a(), cu.c_or_a()), (cu.a_a, cu.a_a));
        let zn = find("zn").unwrap();
        assert_eq!(zn.b_or_a(), zn.a_a);
        assert!(zn.c_or_a() > zn.a_a);
        assert!(zn.face([0, 0, 1]).is_some());
    }
}
