//! Replays every input a fuzz target once failed on (`tests/data/fuzz/<target>/`,
//! one file per case, named after the bug; a folder appears when its target first
//! finds something) and the target's committed, minimised corpus
//! (`fuzz/corpus/<target>/`) through the target's own body (`tests/fuzz_common`):
//! each must give a result or a refusal, with the target's checks (no panic, no NaN,
//! print → parse, located errors) holding. The fuzzing itself runs outside CI; see
//! README.md, "Fuzzing".

mod fuzz_common;

use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::PathBuf;

fn replay(target: &str, body: fn(&[u8])) {
    let root = PathBuf::from(env!("CARGO_MANIFEST_DIR"));
    let mut files: Vec<PathBuf> = Vec::new();
    for dir in [
        root.join("tests/data/fuzz").join(target),
        root.join("fuzz/corpus").join(target),
    ] {
        if let Ok(entries) = std::fs::read_dir(&dir) {
            files.extend(
                entries
                    .filter_map(|e| e.ok().map(|e| e.path()))
                    .filter(|p| p.is_file()),
            );
        }
    }
    files.sort();
    assert!(
        files.len() > 10,
        "{target}: only {} inputs found",
        files.len()
    );
    let mut failed = Vec::new();
    for f in &files {
        let data = std::fs::read(f).unwrap_or_else(|e| panic!("{}: {e}", f.display()));
        if catch_unwind(AssertUnwindSafe(|| body(&data))).is_err() {
            failed.push(f.display().to_string());
        }
    }
    assert!(
        failed.is_empty(),
        "{target}: these inputs fail: {failed:#?}"
    );
}

#[test]
fn figures_of_network_regressions() {
    replay("figures_of_network", fuzz_common::network);
}

#[test]
fn load_rules_regressions() {
    replay("load_rules", fuzz_common::rules);
}

#[test]
fn read_touchstone_regressions() {
    replay("read_touchstone", fuzz_common::touchstone);
}
