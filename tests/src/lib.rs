//! Cross-crate conformance and end-to-end tests; see tests/tests/.
