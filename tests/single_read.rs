//! A part is read once: the cache reads a small file to hash it and hands the same
//! bytes to the judge (`pipeline::judge_part_from`), instead of the judge reading the
//! file again (`pipeline::judge_part`). Both must give the same report and measures,
//! errors and warnings included, for good and bad files alike.

use std::path::{Path, PathBuf};

use lcgate::library::{self, WalkOptions};
use lcgate::pipeline;

fn data(rel: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/data")
        .join(rel)
}

#[test]
fn judging_the_bytes_read_for_the_hash_is_judging_the_file() {
    let rules = lcgate::rules::load(&[data("lib-small-rules")]).unwrap();
    let mut judged = 0;
    for lib in ["lib-small", "touchstone"] {
        let walk = library::walk(&data(lib), &WalkOptions::default()).unwrap();
        assert!(!walk.parts.is_empty());
        for part in &walk.parts {
            let bytes = std::fs::read(&part.path).unwrap();
            for strict in [false, true] {
                let from_file = pipeline::judge_part(part, &rules, strict);
                let from_bytes = pipeline::judge_part_from(part, Some(&bytes), &rules, strict);
                // compared as JSON: the report format is what must not change
                assert_eq!(
                    serde_json::to_string(&from_bytes.0).unwrap(),
                    serde_json::to_string(&from_file.0).unwrap(),
                    "{}",
                    part.rel
                );
                assert_eq!(from_bytes.1, from_file.1, "{}", part.rel);
            }
            judged += 1;
        }
    }
    assert!(judged > 100, "{judged}");
}
