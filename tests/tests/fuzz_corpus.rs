//! Every committed seed of the fuzz target `console_bytes` (`fuzz/corpus/console_bytes/`)
//! through the target's own checks (`matterwave_tests::console::byte_stream::run`), so
//! that `cargo test` keeps the corpus green without nightly or cargo-fuzz.

use matterwave_tests::console::byte_stream::{run, Reach};
use std::path::PathBuf;

#[test]
fn every_committed_seed_passes_the_targets_checks() {
    let dir = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../fuzz/corpus/console_bytes");
    let mut files: Vec<PathBuf> = std::fs::read_dir(&dir)
        .unwrap_or_else(|e| panic!("{}: {e}", dir.display()))
        .map(|e| e.expect("directory entry").path())
        .filter(|p| p.is_file())
        .collect();
    files.sort();
    // The hand-written seeds (fuzz/README.md): 22 of them at the time of writing.
    assert!(
        files.len() >= 22,
        "only {} seeds in {}",
        files.len(),
        dir.display()
    );
    let mut total = Reach::default();
    for f in &files {
        let data = std::fs::read(f).unwrap_or_else(|e| panic!("{}: {e}", f.display()));
        let r = std::panic::catch_unwind(|| run(&data))
            .unwrap_or_else(|_| panic!("seed {} fails the target's checks", f.display()));
        println!("{}: {r:?}", f.file_name().unwrap().to_string_lossy());
        // A seed exists to lead the fuzzer somewhere: each answers requests.
        assert!(r.requests > 0, "{}: reaches no request", f.display());
        total.add(&r);
    }
    println!("{} seeds: {total:?}", files.len());
    // Together they reach answers of both kinds, streams and motion.
    assert!(total.ok > 0 && total.ok < total.requests, "{total:?}");
    assert!(total.streams > 0, "{total:?}");
    assert!(total.moves > 0, "{total:?}");
}
