//! Replays every input a fuzz target once failed on (`tests/data/fuzz/<target>/`,
//! one file per case, named after the bug) through the target's own body
//! (`tests/fuzz_common`): each must now give a result or a refusal, with the
//! target's checks (no panic, no NaN, located errors) holding. The fuzzing itself
//! runs outside CI; see README.md, "Fuzzing".

mod fuzz_common;

use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::PathBuf;

fn replay(target: &str, body: fn(&[u8])) {
    let dir = PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests/data/fuzz")
        .join(target);
    // a target that never failed has no folder (git keeps no empty ones)
    let entries = match std::fs::read_dir(&dir) {
        Ok(entries) => entries,
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => return,
        Err(e) => panic!("{}: {e}", dir.display()),
    };
    let mut files: Vec<PathBuf> = entries
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.is_file())
        .collect();
    files.sort();
    let mut failed = Vec::new();
    for f in &files {
        let data = std::fs::read(f).unwrap_or_else(|e| panic!("{}: {e}", f.display()));
        if catch_unwind(AssertUnwindSafe(|| body(&data))).is_err() {
            failed.push(f.display().to_string());
        }
    }
    assert!(
        failed.is_empty(),
        "{target}: these inputs fail again: {failed:#?}"
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
