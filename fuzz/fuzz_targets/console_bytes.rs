//! Fuzz target: the raw input is a byte stream on the serial console of a fresh
//! simulated controller (`matterwave_core::console`, feature `sim`).
//!
//! The checks live in the test helpers crate, `matterwave_tests::console::byte_stream`
//! (`tests/src/console/byte_stream.rs`, where the input format and the seven invariants
//! are described), so that `cargo test` replays every committed corpus file through the
//! very same checks (`tests/tests/fuzz_corpus.rs`).
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    matterwave_tests::console::byte_stream::run(data);
});
