//! Replays the fuzz corpus on stable Rust: every file under
//! `fuzz/corpus/<target>/` and `fuzz/regressions/<target>/` goes through the
//! same check the `cargo fuzz` target runs (`turnover_tests::fuzz_checks`).
//! The seed files are invented tables and deliberately broken ones; inputs
//! a fuzzing run found to fail belong in `fuzz/regressions/`.

use std::path::PathBuf;
use turnover_tests::fuzz_checks;

fn replay(target: &str, check: fn(&[u8])) -> usize {
    let root = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../fuzz");
    let mut count = 0;
    for folder in ["corpus", "regressions"] {
        let Ok(entries) = std::fs::read_dir(root.join(folder).join(target)) else { continue };
        for entry in entries {
            let path = entry.unwrap().path();
            let bytes = std::fs::read(&path).unwrap();
            let outcome = std::panic::catch_unwind(|| check(&bytes));
            assert!(outcome.is_ok(), "{} fails its check", path.display());
            count += 1;
        }
    }
    count
}

#[test]
fn corpus_replays_cleanly() {
    for (target, check) in [
        ("table", fuzz_checks::table as fn(&[u8])),
        ("traces", fuzz_checks::traces),
        ("layout", fuzz_checks::layout),
    ] {
        let count = replay(target, check);
        assert!(count >= 4, "only {count} inputs for {target}: the corpus is missing");
    }
}
