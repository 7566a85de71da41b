//! A small valid table that the tests break one thing at a time.

/// Two valid rows; tests break one thing at a time.
pub(crate) const GOOD: &str = r#"
[[crystal]]
id = "aa"
name = "test fcc"
structure = "fcc"
a_a = 3.6
a_uncertainty_a = 0.001
temperature_k = 293
lattice_source = "test"
expansion_a_ppm_per_k = 16.5
expansion_range_k = [100, 700]
expansion_source = "test"
work_function_ev = 4.5
work_function_source = "test"
inner_potential_ev = 10.0
inner_potential_source = "test"
[[crystal.face]]
miller = [1, 1, 1]
work_function_ev = 4.9
work_function_source = "test"

[[crystal]]
id = "bb"
name = "test hcp"
structure = "hcp"
a_a = 2.5
c_a = 4.1
a_uncertainty_a = 0.001
temperature_k = 293
lattice_source = "test"
expansion_a_ppm_per_k = -1.5
expansion_c_ppm_per_k = 27
expansion_range_k = [150, 600]
expansion_source = "test"
inner_potential_form = { max_ev = 10.3, b_ev = 0.75, c_ev = 76.6, d_ev = 11.4 }
inner_potential_form_source = "test"
[[crystal.face]]
miller = [0, 0, 1]
"#;

/// GOOD with the first occurrence of `from` replaced by `to`.
pub(crate) fn with(from: &str, to: &str) -> String {
    assert!(GOOD.contains(from), "test setup: {from:?} not in GOOD");
    GOOD.replacen(from, to, 1)
}
