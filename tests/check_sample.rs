//! `lcgate check` on the sample library with the scenario's rules and baseline gives
//! the verdicts the scenario was built for (an insta snapshot of every part's
//! status and of each check or drift that did not pass), and exit status 1.

use std::path::PathBuf;
use std::process::Command;

use serde_json::{json, Map, Value};

fn repo() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

#[test]
fn sample_library_verdicts() {
    let out_dir = tempfile::tempdir().expect("temp dir");
    let out = Command::new(env!("CARGO_BIN_EXE_lcgate"))
        .current_dir(repo())
        .args([
            "check",
            "sample-library",
            "--rules",
            "rules",
            "--no-cache",
            "--quiet",
        ])
        .args(["--baseline", "sample-library/baseline.json", "--report"])
        .arg(out_dir.path())
        .output()
        .expect("run lcgate");
    assert_eq!(
        out.status.code(),
        Some(1),
        "the sample library has deliberate faults: exit 1\nstdout:\n{}\nstderr:\n{}",
        String::from_utf8_lossy(&out.stdout),
        String::from_utf8_lossy(&out.stderr)
    );
    let text = std::fs::read_to_string(out_dir.path().join("report.json")).expect("report.json");
    let doc: Value = serde_json::from_str(&text).expect("JSON");
    let mut verdicts = Map::new();
    for p in doc["parts"].as_array().expect("parts") {
        let mut not_passed = Vec::new();
        for c in p["checks"].as_array().into_iter().flatten() {
            if c["status"] != "pass" {
                not_passed.push(format!(
                    "{} {} ({})",
                    c["id"].as_str().unwrap_or("?"),
                    c["status"].as_str().unwrap_or("?"),
                    c["severity"].as_str().unwrap_or("?")
                ));
            }
        }
        for d in p["drift"].as_array().into_iter().flatten() {
            if d["status"] != "pass" {
                not_passed.push(format!(
                    "drift {} {}",
                    d["quantity"].as_str().unwrap_or("?"),
                    d["status"].as_str().unwrap_or("?")
                ));
            }
        }
        verdicts.insert(
            p["path"].as_str().expect("path").to_string(),
            json!({ "status": p["status"], "not_passed": not_passed }),
        );
    }
    insta::assert_json_snapshot!("sample_library_verdicts", Value::Object(verdicts));
}
