//! Replays every input that once crashed, hung or exhausted memory in a fuzz
//! target (`scripts/fuzz.sh`) through the same entry point. Each file lives
//! under `tests/fuzz-regressions/<target>/`; the test passes when every
//! entry point returns, which is the property the fuzzer checks.

use std::path::Path;

#[test]
fn every_saved_fuzz_input_is_handled() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fuzz-regressions");
    let mut replayed = 0;
    for (target, run) in sliceplan::fuzzing::TARGETS {
        let dir = root.join(target);
        let Ok(entries) = std::fs::read_dir(&dir) else {
            continue;
        };
        let mut files: Vec<_> = entries.map(|e| e.unwrap().path()).collect();
        files.sort();
        for file in files {
            let data = std::fs::read(&file).unwrap();
            let outcome = std::panic::catch_unwind(|| run(&data));
            assert!(outcome.is_ok(), "{} panicked", file.display());
            replayed += 1;
        }
    }
    // Directories without a matching target would be silently skipped.
    for entry in std::fs::read_dir(&root).unwrap() {
        let name = entry.unwrap().file_name().to_string_lossy().into_owned();
        assert!(
            name == "README.md" || sliceplan::fuzzing::TARGETS.iter().any(|(t, _)| *t == name),
            "tests/fuzz-regressions/{name} matches no fuzz target"
        );
    }
    eprintln!("replayed {replayed} saved fuzz inputs");
}
