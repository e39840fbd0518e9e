//! Comparison with scikit-rf (PyPI, version pinned in tests/python/requirements.txt;
//! the version it reports is named in every failure message).
//!
//! Every file of `tests/data/skrf/` (1- to 4-port; Touchstone 1.0, 1.1, 2.0, 2.1; S
//! and Z data; RI/MA/DB; Hz/kHz/MHz/GHz; per-port references; a lower-triangular
//! matrix; a noise block) and every file of `sample-library/` except the one that is
//! corrupted on purpose is read by scikit-rf (`tests/python/skrf_dump.py`) and by
//! lcgate. They must agree on the frequencies, the reference impedances, S and Z at
//! every point, and the single-ended input figures l = Im Zin/ω and q = Im Zin/Re Zin
//! (Zin = 1/Y11, or Z11 for a 1-port) at sample frequencies.
//!
//! Version-1 Y/G/H files are not compared: scikit-rf 2.2.0 de-normalizes them wrongly
//! (shared reference notes, touchstone.md §8); the Touchstone tests check those
//! against the specification instead. `scripts/test` makes the virtual environment;
//! without it this test fails (it never skips).

use std::path::{Path, PathBuf};
use std::process::Command;

use lcgate::figures::{view_figures, Kind};
use lcgate::network::{view, Network, PortMap, ViewName, C64};
use serde_json::Value;

/// Files of the sample library that are broken on purpose (a truncated record): they
/// must be unreadable by both readers, and are not compared.
const CORRUPTED: &[&str] = &["rf/inductors/hb/L1p8n_w8_n3_pgs.s2p"];

fn repo() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn python() -> PathBuf {
    if let Some(p) = std::env::var_os("LCGATE_PYTHON") {
        return PathBuf::from(p);
    }
    let p = repo().join(".venv/bin/python");
    assert!(
        p.exists(),
        "no Python with scikit-rf: set LCGATE_PYTHON or run scripts/test (it makes .venv)"
    );
    p
}

fn touchstone_files(dir: &Path, out: &mut Vec<PathBuf>) {
    let mut entries: Vec<_> = std::fs::read_dir(dir)
        .unwrap_or_else(|e| panic!("{}: {e}", dir.display()))
        .map(|e| e.expect("directory entry").path())
        .collect();
    entries.sort();
    for p in entries {
        if p.is_dir() {
            touchstone_files(&p, out);
        } else if is_touchstone(&p) {
            out.push(p);
        }
    }
}

fn is_touchstone(p: &Path) -> bool {
    let ext = p
        .extension()
        .and_then(|e| e.to_str())
        .unwrap_or("")
        .to_ascii_lowercase();
    ext == "ts"
        || (ext.len() >= 3
            && ext.starts_with('s')
            && ext.ends_with('p')
            && ext[1..ext.len() - 1].chars().all(|c| c.is_ascii_digit()))
}

/// Runs scikit-rf on `files`; returns (its version, per-file documents).
fn skrf_dump(files: &[PathBuf]) -> (String, serde_json::Map<String, Value>) {
    let out = Command::new(python())
        .arg(repo().join("tests/python/skrf_dump.py"))
        .args(files)
        .output()
        .expect("could not start Python: run scripts/test (it makes .venv with scikit-rf)");
    assert!(
        out.status.success(),
        "skrf_dump.py failed (run scripts/test to install scikit-rf):\n{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let doc: Value = serde_json::from_slice(&out.stdout).expect("skrf_dump.py prints JSON");
    let version = doc["skrf_version"].as_str().unwrap_or("?").to_string();
    let files = doc["files"].as_object().cloned().expect("files object");
    (version, files)
}

fn c64(v: &Value) -> C64 {
    C64::new(v[0].as_f64().expect("re"), v[1].as_f64().expect("im"))
}

fn rel_close(a: f64, b: f64, rel: f64) -> bool {
    (a - b).abs() <= rel * a.abs().max(b.abs())
}

/// Compares one block entry by entry: 1e-9 relative to the entry, with entries
/// smaller than a millionth of the block's largest compared against that floor (the
/// conversions' rounding scales with the block, not with a tiny entry).
fn compare_block(what: &str, ours: &[C64], theirs: &[C64], ctx: &str) {
    assert_eq!(ours.len(), theirs.len(), "{ctx}: {what} block size");
    let big = theirs.iter().map(|x| x.norm()).fold(0.0, f64::max);
    for (i, (a, b)) in ours.iter().zip(theirs).enumerate() {
        let scale = b.norm().max(a.norm()).max(1e-6 * big);
        assert!(
            (a - b).norm() <= 1e-9 * scale,
            "{ctx}: {what}[{i}] lcgate {a} vs scikit-rf {b} (tolerance 1e-9 relative)"
        );
    }
}

fn compare_file(path: &Path, doc: &Value, skrf_version: &str) {
    let name = path
        .strip_prefix(repo())
        .unwrap_or(path)
        .display()
        .to_string();
    let ctx = format!("{name} (against scikit-rf {skrf_version})");
    if let Some(e) = doc.get("error") {
        panic!("{ctx}: scikit-rf could not read it: {e}");
    }
    let ts = lcgate::touchstone::read_path(path)
        .unwrap_or_else(|e| panic!("{ctx}: lcgate could not read it: {e}"));
    let net: &Network = &ts.network;
    let n = net.ports;
    assert_eq!(
        n as u64,
        doc["ports"].as_u64().expect("ports"),
        "{ctx}: ports"
    );

    // frequencies (Hz) and reference impedances
    let f: Vec<f64> = doc["f"]
        .as_array()
        .expect("f")
        .iter()
        .map(|x| x.as_f64().expect("f value"))
        .collect();
    assert_eq!(net.freq.len(), f.len(), "{ctx}: number of points");
    for (k, (a, b)) in net.freq.iter().zip(&f).enumerate() {
        assert!(rel_close(*a, *b, 1e-12), "{ctx}: f[{k}] {a} vs {b}");
    }
    let z0: Vec<f64> = doc["z0"]
        .as_array()
        .expect("z0")
        .iter()
        .map(|x| x.as_f64().expect("z0 value"))
        .collect();
    assert_eq!(net.z0.len(), z0.len(), "{ctx}: reference count");
    for (p, (a, b)) in net.z0.iter().zip(&z0).enumerate() {
        assert!(
            rel_close(*a, *b, 1e-12),
            "{ctx}: z0 of port {}: {a} vs {b}",
            p + 1
        );
    }

    // S and Z at every point
    for k in 0..net.points() {
        let s: Vec<C64> = doc["s"][k].as_array().expect("s").iter().map(c64).collect();
        compare_block(
            "S",
            net.s_block(k),
            &s,
            &format!("{ctx} at f = {} Hz", f[k]),
        );
        let z: Vec<C64> = doc["z"][k].as_array().expect("z").iter().map(c64).collect();
        let ours = net
            .z_block(k)
            .unwrap_or_else(|| panic!("{ctx}: lcgate finds no Z at f = {} Hz", f[k]));
        compare_block("Z", &ours, &z, &format!("{ctx} at f = {} Hz", f[k]));
    }

    // l and q of the single-ended input (one_port for 1-port data) at five sweep
    // points spread over the sweep, through lcgate's view and figures
    let vname = if n == 1 {
        ViewName::OnePort
    } else {
        ViewName::SingleEnded
    };
    let v = view(net, vname, &PortMap::default())
        .unwrap_or_else(|e| panic!("{ctx}: view {vname}: {e}"));
    let figs = view_figures(&v, &net.freq, Some(Kind::Inductor));
    let m = f.len();
    let mut picks = vec![0, m / 4, m / 2, (3 * m) / 4, m - 1];
    picks.dedup();
    for k in picks {
        for curve in ["l", "q"] {
            let theirs = doc[curve][k].as_f64().expect("l/q value");
            let ours = figs
                .curve_at(curve, f[k])
                .unwrap_or_else(|| panic!("{ctx}: lcgate has no {curve} at {} Hz", f[k]));
            // q = Im Zin / Re Zin: Re Zin is |q| times smaller than |Zin|, so the
            // rounding of either reader grows with |q| (a 250 fF capacitor at
            // 100 MHz has q ≈ 2e4); l has no such loss
            let rel = if curve == "q" {
                1e-9 * (ours.abs() / 10.0).max(1.0)
            } else {
                1e-9
            };
            assert!(
                rel_close(ours, theirs, rel),
                "{ctx}: {curve}({} Hz) lcgate {ours} vs scikit-rf {theirs}",
                f[k]
            );
        }
    }
}

fn run_over(files: &[PathBuf]) {
    assert!(!files.is_empty(), "no files to compare");
    let (version, docs) = skrf_dump(files);
    for p in files {
        let key = p.to_string_lossy().to_string();
        let doc = docs
            .get(&key)
            .unwrap_or_else(|| panic!("{key}: missing from the scikit-rf output"));
        compare_file(p, doc, &version);
    }
}

/// Source: scikit-rf (version pinned in tests/python/requirements.txt), reading the
/// hand-made comparison cases of tests/data/skrf.
#[test]
fn comparison_cases_agree_with_scikit_rf() {
    let mut files = Vec::new();
    touchstone_files(&repo().join("tests/data/skrf"), &mut files);
    assert!(files.len() >= 12, "expected the twelve comparison cases");
    run_over(&files);
}

/// Source: scikit-rf, reading every file of the sample library but the corrupted one
/// (the library must be readable by a general-purpose RF library, issue 6).
#[test]
fn sample_library_agrees_with_scikit_rf() {
    let root = repo().join("sample-library");
    let mut files = Vec::new();
    touchstone_files(&root, &mut files);
    let corrupted: Vec<PathBuf> = CORRUPTED.iter().map(|c| root.join(c)).collect();
    for c in &corrupted {
        assert!(
            files.contains(c),
            "{}: the corrupted part is missing",
            c.display()
        );
        assert!(
            lcgate::touchstone::read_path(c).is_err(),
            "{}: the corrupted part reads without error",
            c.display()
        );
    }
    files.retain(|p| !corrupted.contains(p));
    assert!(
        files.len() >= 40,
        "the sample library has fewer than 40 parts"
    );
    run_over(&files);
}
