//! What a valid table holds: crystal and face rows, and the error naming where a table
//! is wrong.

use std::fmt;

use crate::structure::{Miller, Structure};

/// Typical values for one face of a crystal, as read from the table.
#[derive(Clone, Debug, PartialEq)]
pub struct FaceRow {
    /// Three-index Miller indices (conventional cell; (0001) of a hexagonal crystal is
    /// `[0, 0, 1]`).
    pub miller: Miller,
    /// Work function of this face, eV.
    pub work_function_ev: Option<f64>,
    /// Where `work_function_ev` comes from (present exactly when the value is).
    pub work_function_source: Option<String>,
    /// Typical inner potential V0 of this face, eV.
    pub inner_potential_ev: Option<f64>,
    /// Where `inner_potential_ev` comes from (present exactly when the value is).
    pub inner_potential_source: Option<String>,
    /// Energy-dependent inner potential V0(E) of this face, with its source.
    pub inner_potential_form: Option<V0FormRow>,
}

/// Linear thermal expansion of a crystal about the table temperature, with its source.
#[derive(Clone, Debug, PartialEq)]
pub struct ExpansionRow {
    /// Linear expansion coefficient of a (and b), 10⁻⁶/K, at the table temperature.
    pub alpha_a_ppm_per_k: f64,
    /// Linear expansion coefficient of c, 10⁻⁶/K (structures with a c of their own).
    pub alpha_c_ppm_per_k: Option<f64>,
    /// Temperatures the linear model is accepted at, K: [lowest, highest].
    pub range_k: [f64; 2],
    /// Where the coefficients and the range come from.
    pub source: String,
}

/// An energy-dependent inner potential V0(E) = min(max_ev, c_ev/√(E + d_ev) − b_ev),
/// E the beam energy outside in eV, with its source.
#[derive(Clone, Debug, PartialEq)]
pub struct V0FormRow {
    /// The cap of V0 at low energy, eV.
    pub max_ev: f64,
    /// Offset b, eV.
    pub b_ev: f64,
    /// Scale c, eV^(3/2).
    pub c_ev: f64,
    /// Energy shift d, eV.
    pub d_ev: f64,
    /// Where the form and its parameters come from.
    pub source: String,
}

/// One crystal, as read from the table.
#[derive(Clone, Debug, PartialEq)]
pub struct CrystalRow {
    /// Lower-case id, `[a-z0-9_]`, starting with a letter.
    pub id: String,
    /// Name, e.g. `copper`.
    pub name: String,
    /// Structure type.
    pub structure: &'static Structure,
    /// Lattice constant a, Å.
    pub a_a: f64,
    /// Lattice constant b, Å (orthorhombic only).
    pub b_a: Option<f64>,
    /// Lattice constant c, Å (tetragonal, hexagonal, hcp, graphite, orthorhombic).
    pub c_a: Option<f64>,
    /// Standard uncertainty of a, Å.
    pub a_uncertainty_a: f64,
    /// Temperature the lattice constants hold at, K.
    pub temperature_k: f64,
    /// Where the lattice constants come from.
    pub lattice_source: String,
    /// Polycrystalline work function, eV.
    pub work_function_ev: Option<f64>,
    /// Where `work_function_ev` comes from (present exactly when the value is).
    pub work_function_source: Option<String>,
    /// Typical inner potential V0, eV, used for faces without their own value.
    pub inner_potential_ev: Option<f64>,
    /// Where `inner_potential_ev` comes from (present exactly when the value is).
    pub inner_potential_source: Option<String>,
    /// Energy-dependent inner potential V0(E) for faces without their own.
    pub inner_potential_form: Option<V0FormRow>,
    /// Linear thermal expansion about `temperature_k`.
    pub expansion: ExpansionRow,
    /// Common faces, in file order.
    pub faces: Vec<FaceRow>,
}

impl CrystalRow {
    /// b as the core stores it: the table's b for orthorhombic cells, else a.
    pub fn b_or_a(&self) -> f64 {
        self.b_a.unwrap_or(self.a_a)
    }

    /// c as the core stores it: the table's c where the structure has one, else a.
    pub fn c_or_a(&self) -> f64 {
        self.c_a.unwrap_or(self.a_a)
    }

    /// The face with exactly these indices, if listed.
    pub fn face(&self, miller: Miller) -> Option<&FaceRow> {
        self.faces.iter().find(|f| f.miller == miller)
    }
}

/// What is wrong with the table and where.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct TableError {
    /// 1-based position of the `[[crystal]]` block, if the error is inside one.
    pub row: Option<usize>,
    /// The row's id as written, if it has a string id.
    pub id: Option<String>,
    /// 1-based position of the `[[crystal.face]]` block within the row, if any.
    pub face: Option<usize>,
    /// The field (key) at fault, if any.
    pub field: Option<String>,
    /// What is wrong and what is accepted.
    pub message: String,
}

impl fmt::Display for TableError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self.row {
            Some(row) => {
                write!(f, "crystal #{row}")?;
                match &self.id {
                    Some(id) => write!(f, " (id {id:?})")?,
                    None => write!(f, " (no id)")?,
                }
            }
            None => write!(f, "crystal table")?,
        }
        if let Some(face) = self.face {
            write!(f, ": face #{face}")?;
        }
        if let Some(field) = &self.field {
            write!(f, ": field {field:?}")?;
        }
        write!(f, ": {}", self.message)
    }
}

impl std::error::Error for TableError {}
