//! The structure types a crystal row may name, as the core knows them.
//!
//! The generator does not link `matterwave-core` (it writes part of it, and must build
//! when the core's table is stale or broken), so it keeps its own list of structures:
//! each one's name in the table, its variant in `matterwave_core::lattice::Structure`
//! and its crystal system. The `table_drift` test in `tests/` checks this list against
//! the core's `Structure::ALL`, entry by entry.

/// Crystal system: which of the lattice constants b and c a row gives.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum System {
    /// a = b = c: the row gives a only.
    Cubic,
    /// a = b ≠ c: the row gives a and c.
    Tetragonal,
    /// a ≠ b ≠ c: the row gives a, b and c.
    Orthorhombic,
    /// a = b ≠ c, γ = 120°: the row gives a and c.
    Hexagonal,
}

impl System {
    /// Lower-case name, e.g. `cubic`, for messages.
    pub const fn name(self) -> &'static str {
        match self {
            System::Cubic => "cubic",
            System::Tetragonal => "tetragonal",
            System::Orthorhombic => "orthorhombic",
            System::Hexagonal => "hexagonal",
        }
    }

    /// Whether a row of this system gives b (only orthorhombic cells do; else b = a).
    pub const fn has_b(self) -> bool {
        matches!(self, System::Orthorhombic)
    }

    /// Whether a row of this system gives c (all but cubic cells do; else c = a).
    pub const fn has_c(self) -> bool {
        !matches!(self, System::Cubic)
    }
}

/// One structure type.
#[derive(Debug, PartialEq, Eq)]
pub struct Structure {
    /// Name in the table, the CLI and the protocol, e.g. `fcc`.
    pub name: &'static str,
    /// Variant of `matterwave_core::lattice::Structure`, e.g. `Fcc`.
    pub variant: &'static str,
    /// Crystal system.
    pub system: System,
}

/// Every structure, in the order of the core's `Structure::ALL`.
pub static STRUCTURES: [Structure; 12] = [
    structure("sc", "SimpleCubic", System::Cubic),
    structure("bcc", "Bcc", System::Cubic),
    structure("fcc", "Fcc", System::Cubic),
    structure("diamond", "Diamond", System::Cubic),
    structure("rocksalt", "RockSalt", System::Cubic),
    structure("zincblende", "ZincBlende", System::Cubic),
    structure("cscl", "CsCl", System::Cubic),
    structure("hcp", "Hcp", System::Hexagonal),
    structure("graphite", "Graphite", System::Hexagonal),
    structure("tetragonal", "Tetragonal", System::Tetragonal),
    structure("hexagonal", "Hexagonal", System::Hexagonal),
    structure("orthorhombic", "Orthorhombic", System::Orthorhombic),
];

const fn structure(name: &'static str, variant: &'static str, system: System) -> Structure {
    Structure {
        name,
        variant,
        system,
    }
}

impl Structure {
    /// The structure with this name (exact, lower-case).
    pub fn from_name(name: &str) -> Option<&'static Structure> {
        STRUCTURES.iter().find(|s| s.name == name)
    }
}

/// Largest accepted |Miller index| of a face (the core's `lattice::MAX_INDEX`).
pub const MAX_INDEX: i32 = 12;

/// Three-index Miller indices (h, k, l) of the conventional cell.
pub type Miller = [i32; 3];

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn names_and_variants_are_unique() {
        for (i, s) in STRUCTURES.iter().enumerate() {
            assert_eq!(Structure::from_name(s.name), Some(s));
            for t in &STRUCTURES[i + 1..] {
                assert_ne!(s.name, t.name);
                assert_ne!(s.variant, t.variant);
            }
        }
        assert_eq!(Structure::from_name("FCC"), None);
    }

    #[test]
    fn systems_say_which_constants_a_row_gives() {
        assert!(!System::Cubic.has_b() && !System::Cubic.has_c());
        assert!(!System::Tetragonal.has_b() && System::Tetragonal.has_c());
        assert!(!System::Hexagonal.has_b() && System::Hexagonal.has_c());
        assert!(System::Orthorhombic.has_b() && System::Orthorhombic.has_c());
    }
}
