//! Deterministic output (issue 9, item 5): `check` on the sample library writes
//! byte-identical `report.json`, `report.xml`, `report.md` and `report.html` for
//! `--jobs 1/2/8`, across repeated runs and with a cold or a warm cache. The run's
//! start time and duration are the only things allowed to differ, and only in their
//! own places: the `run` field of `report.json`, the `#run-time` element of the
//! page and the duration at the end of the terminal summary (DEVELOPERS.md, report).

use std::path::{Path, PathBuf};
use std::process::Command;

const FILES: [&str; 4] = ["report.json", "report.xml", "report.md", "report.html"];

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// Run the README's first command (sample library, its rules and baseline) with
/// `extra` arguments, reports into `out`; returns the terminal summary.
fn check(out: &Path, extra: &[&str]) -> String {
    let o = Command::new(env!("CARGO_BIN_EXE_lcgate"))
        .current_dir(root())
        .args([
            "check",
            "sample-library",
            "--rules",
            "rules",
            "--baseline",
            "sample-library/baseline.json",
            "-q",
            "--report",
        ])
        .arg(out)
        .args(extra)
        .env("NO_COLOR", "1")
        .output()
        .expect("run lcgate");
    // the sample library has failures by design: exit 1, never 2 or a panic
    assert_eq!(
        o.status.code(),
        Some(1),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    String::from_utf8(o.stdout).expect("UTF-8 summary")
}

/// The run header masked, and nothing else: the `run` object of the JSON (start,
/// duration and the cache counters), the `#run-time` element of the page, `(… ms)` / `(… s)` at the
/// end of the summary line. Each mask must find exactly its one place.
fn masked(name: &str, text: &str) -> String {
    let (re, with) = match name {
        "report.json" => (
            r#""run": \{\s*"started": "[^"]*",\s*"seconds": [0-9.e+-]+,\s*"computed": \d+,\s*"cached": \d+\s*\}"#,
            r#""run": {}"#,
        ),
        "report.html" => (
            r#"<p id="run-time" class="run-time">[^<]*</p>"#,
            r#"<p id="run-time" class="run-time"></p>"#,
        ),
        "terminal" => (r"\(\d+(\.\d+)? (ms|s)\)\n$", "()\n"),
        _ => return text.to_string(),
    };
    let re = regex::Regex::new(re).expect("regex");
    assert_eq!(re.find_iter(text).count(), 1, "{name}: the run time, once");
    re.replace(text, with).into_owned()
}

fn reports(dir: &Path) -> Vec<(String, String)> {
    FILES
        .iter()
        .map(|n| {
            let text = std::fs::read_to_string(dir.join(n)).expect("report written");
            (n.to_string(), masked(n, &text))
        })
        .collect()
}

#[test]
fn reports_are_byte_identical_for_any_jobs_repeat_and_cache_state() {
    let tmp = tempfile::tempdir().unwrap();
    let cache = tmp.path().join("cache");
    let cache_s = cache.to_str().unwrap();
    let runs: [(&str, Vec<&str>); 6] = [
        ("jobs 1", vec!["--jobs", "1", "--no-cache"]),
        ("jobs 2", vec!["--jobs", "2", "--no-cache"]),
        ("jobs 8", vec!["--jobs", "8", "--no-cache"]),
        ("jobs 2 again", vec!["--jobs", "2", "--no-cache"]),
        (
            "cold cache, jobs 8",
            vec!["--jobs", "8", "--cache", cache_s],
        ),
        (
            "warm cache, jobs 1",
            vec!["--jobs", "1", "--cache", cache_s],
        ),
    ];
    let mut first: Option<(Vec<(String, String)>, String)> = None;
    for (what, extra) in runs {
        let out = tmp.path().join(what.replace([' ', ','], "_"));
        let terminal = masked("terminal", &check(&out, &extra));
        let got = reports(&out);
        match &first {
            None => first = Some((got, terminal)),
            Some((want, want_terminal)) => {
                for ((name, a), (_, b)) in want.iter().zip(&got) {
                    // report a differing line, not 600 kB of text
                    if a != b {
                        let line = a
                            .lines()
                            .zip(b.lines())
                            .position(|(x, y)| x != y)
                            .unwrap_or(0);
                        panic!(
                            "{what}: {name} differs from jobs 1 at line {}:\n{}\n{}",
                            line + 1,
                            a.lines().nth(line).unwrap_or(""),
                            b.lines().nth(line).unwrap_or("")
                        );
                    }
                }
                assert_eq!(want_terminal, &terminal, "{what}: terminal summary");
            }
        }
    }
    // the cache was really used: the warm run computed nothing
    assert!(walk_count(&cache) > 0, "the cache was written");
    let warm: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(tmp.path().join("warm_cache__jobs_1/report.json")).unwrap(),
    )
    .unwrap();
    assert_eq!(warm["run"]["computed"], 0, "{}", warm["run"]);
    assert!(warm["run"]["cached"].as_u64() > Some(40), "{}", warm["run"]);
}

fn walk_count(dir: &Path) -> usize {
    let Ok(rd) = std::fs::read_dir(dir) else {
        return 0;
    };
    rd.map(|e| {
        let e = e.expect("entry");
        if e.file_type().expect("type").is_dir() {
            walk_count(&e.path())
        } else {
            1
        }
    })
    .sum()
}

/// The masks take out the run time and nothing else: two reports with different
/// run headers become equal, two that differ in any other byte stay different.
#[test]
fn the_masks_remove_only_the_run_time() {
    let a = "{\n  \"parts\": [1],\n  \"run\": {\n    \"started\": \"2026-01-01T00:00:00Z\",\n    \"seconds\": 0.5,\n    \"computed\": 3,\n    \"cached\": 0\n  }\n}\n";
    let b = a
        .replace("00:00:00Z", "11:11:11Z")
        .replace("0.5", "12.25")
        .replace("3,", "0,")
        .replace("0\n  }", "3\n  }");
    assert_eq!(masked("report.json", a), masked("report.json", &b));
    let c = a.replace("[1]", "[2]");
    assert_ne!(masked("report.json", a), masked("report.json", &c));
    let h = "<p id=\"run-time\" class=\"run-time\">Run started X, took 1 ms.</p><td>1</td>";
    let h2 = h.replace("1 ms", "9 s");
    assert_eq!(masked("report.html", h), masked("report.html", &h2));
    assert_ne!(
        masked("report.html", h),
        masked("report.html", &h.replace("<td>1", "<td>2"))
    );
    // XML and Markdown are compared unmasked
    assert_eq!(masked("report.xml", "<x time=\"1\"/>"), "<x time=\"1\"/>");
}
