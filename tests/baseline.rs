//! Baselines, drift, the cache and shards, end to end through the `lcgate` binary on a
//! small library generated in a temporary folder from the π-model of a spiral on
//! silicon (C. P. Yue, S. S. Wong, IEEE JSSC 33(5), 1998; `model::PiModel::y2`),
//! written as Touchstone files by the project's writer.

use std::fs;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};

use lcgate::model::PiModel;
use lcgate::network::Network;
use lcgate::touchstone::{self, WriteOptions};

/// A plausible 2-port spiral: values invented (of the order of a 1–2 nH coil on a
/// lossy substrate: common practice, no source).
fn coil(ls: f64) -> PiModel {
    PiModel {
        ls,
        rdc: 1.2,
        rac: 0.6,
        cs: 12e-15,
        cox1: 60e-15,
        csi1: 25e-15,
        rsi1: 400.0,
        cox2: 60e-15,
        csi2: 25e-15,
        rsi2: 400.0,
    }
}

/// The model sampled on 0.1–20 GHz (101 log-spaced points) as a network.
fn network(m: &PiModel) -> Network {
    let n = 101;
    let freq: Vec<f64> = (0..n)
        .map(|i| 1e8 * (200f64).powf(i as f64 / (n - 1) as f64))
        .collect();
    let y: Vec<_> = freq.iter().flat_map(|&f| m.y2(f)).collect();
    Network::from_y(freq, 2, vec![50.0, 50.0], &y).expect("π-model Y converts to S")
}

fn write_part(lib: &Path, rel: &str, m: &PiModel) {
    let path = lib.join(rel);
    fs::create_dir_all(path.parent().unwrap()).unwrap();
    touchstone::write_path(&path, &network(m), &WriteOptions::default()).unwrap();
}

const RULES: &str = "\
suite: test coils
parts:
  - select: [\"coils/**/*.s2p\"]
    kind: inductor
    view: single_ended
    band: 2GHz .. 3GHz
    checks:
      q-in-band: q(band) >= 1
drift:
  l(band.mid): 1%
  q_peak: 5%
";

/// Nine coils, 0.8 nH to 2.4 nH, in two folders.
const PARTS: [(&str, f64); 9] = [
    ("coils/a/L0p8n.s2p", 0.8e-9),
    ("coils/a/L1p0n.s2p", 1.0e-9),
    ("coils/a/L1p2n.s2p", 1.2e-9),
    ("coils/a/L1p4n.s2p", 1.4e-9),
    ("coils/b/L1p6n.s2p", 1.6e-9),
    ("coils/b/L1p8n.s2p", 1.8e-9),
    ("coils/b/L2p0n.s2p", 2.0e-9),
    ("coils/b/L2p2n.s2p", 2.2e-9),
    ("coils/b/L2p4n.s2p", 2.4e-9),
];

struct Setup {
    dir: tempfile::TempDir,
}

impl Setup {
    fn new() -> Setup {
        let dir = tempfile::tempdir().unwrap();
        let lib = dir.path().join("lib");
        for (rel, ls) in PARTS {
            write_part(&lib, rel, &coil(ls));
        }
        fs::write(dir.path().join("rules.yaml"), RULES).unwrap();
        Setup { dir }
    }
    fn path(&self, p: &str) -> PathBuf {
        self.dir.path().join(p)
    }
    fn lib(&self) -> PathBuf {
        self.path("lib")
    }
    /// Run lcgate in the setup's folder (paths relative to it).
    fn run(&self, args: &[&str]) -> Output {
        Command::new(env!("CARGO_BIN_EXE_lcgate"))
            .current_dir(self.dir.path())
            .env("NO_COLOR", "1")
            .args(args)
            .output()
            .unwrap()
    }
    fn record(&self, out: &str) {
        let o = self.run(&["record", "lib", "--rules", "rules.yaml", "-o", out, "-q"]);
        assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    }
    /// `check` with extra arguments, writing reports to `report_dir`; the exit code
    /// and the parsed report.json.
    fn check(&self, report_dir: &str, extra: &[&str]) -> (i32, serde_json::Value, Output) {
        let mut args = vec![
            "check",
            "lib",
            "--rules",
            "rules.yaml",
            "--report",
            report_dir,
        ];
        args.extend_from_slice(extra);
        let o = self.run(&args);
        let code = o.status.code().unwrap_or(-1);
        assert!(code == 0 || code == 1, "exit {code}: {}", stderr(&o));
        let json = fs::read_to_string(self.path(report_dir).join("report.json")).unwrap();
        (code, serde_json::from_str(&json).unwrap(), o)
    }
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

fn part<'a>(report: &'a serde_json::Value, path: &str) -> &'a serde_json::Value {
    report["parts"]
        .as_array()
        .unwrap()
        .iter()
        .find(|p| p["path"] == path)
        .unwrap_or_else(|| panic!("no part {path}"))
}

fn drift<'a>(p: &'a serde_json::Value, quantity: &str) -> &'a serde_json::Value {
    p["drift"]
        .as_array()
        .unwrap()
        .iter()
        .find(|d| d["quantity"] == quantity)
        .unwrap_or_else(|| panic!("no drift {quantity} in {p}"))
}

#[test]
fn record_then_check_unchanged_shows_no_drift() {
    let s = Setup::new();
    s.record("base.json");
    let base: serde_json::Value =
        serde_json::from_str(&fs::read_to_string(s.path("base.json")).unwrap()).unwrap();
    assert_eq!(base["format"], "lcgate-baseline/1");
    let parts = base["parts"].as_array().unwrap();
    assert_eq!(parts.len(), PARTS.len());
    let first = &parts[0];
    assert_eq!(first["path"], "coils/a/L0p8n.s2p");
    assert_eq!(first["view"], "single_ended");
    assert_eq!(first["kind"], "inductor");
    // the hash is the blake3 of the file's bytes
    let bytes = fs::read(s.lib().join("coils/a/L0p8n.s2p")).unwrap();
    assert_eq!(first["hash"], blake3::hash(&bytes).to_hex().as_str());
    // l at band.mid of a 0.8 nH coil whose srf is far above 2.5 GHz: close to L_s
    let l = first["drift"]["l(band.mid)"].as_f64().unwrap();
    assert!((l / 0.8e-9 - 1.0).abs() < 0.05, "{l}");
    assert!(first["drift"]["q_peak"].as_f64().is_some());

    let (code, r, _) = s.check("out", &["--baseline", "base.json", "--no-cache"]);
    assert_eq!(code, 0, "{r:#}");
    assert_eq!(r["summary"]["new"], 0);
    assert_eq!(r["summary"]["missing"], 0);
    assert_eq!(r["rules_changed"].as_array().unwrap().len(), 0);
    for p in r["parts"].as_array().unwrap() {
        assert_eq!(p["status"], "pass", "{p:#}");
        assert_eq!(p["drift"].as_array().unwrap().len(), 2);
        for d in p["drift"].as_array().unwrap() {
            assert_eq!(d["status"], "pass");
            assert_eq!(d["change"], 0.0, "same file, same numbers");
        }
    }
}

#[test]
fn a_three_percent_larger_coil_drifts_and_fails_alone() {
    let s = Setup::new();
    s.record("base.json");
    // re-extracted with L_s 3 % higher, everything else equal
    write_part(&s.lib(), "coils/b/L1p8n.s2p", &coil(1.8e-9 * 1.03));
    let (code, r, o) = s.check("out", &["--baseline", "base.json"]);
    assert_eq!(code, 1, "drift fails the run");
    let moved = part(&r, "coils/b/L1p8n.s2p");
    assert_eq!(moved["status"], "fail");
    let d = drift(moved, "l(band.mid)");
    assert_eq!(d["status"], "fail");
    assert_eq!(d["limit"], "1%");
    let change = d["change"].as_f64().unwrap();
    // l = Im Z_in/ω tracks L_s closely far below srf: ≈ +3 % (slightly more, as the
    // shunt capacitance lifts the apparent inductance in proportion)
    assert!((0.029..0.033).contains(&change), "{change}");
    for (rel, _) in PARTS.iter().filter(|(p, _)| *p != "coils/b/L1p8n.s2p") {
        let p = part(&r, rel);
        assert_eq!(p["status"], "pass", "{p:#}");
        assert_eq!(drift(p, "l(band.mid)")["change"], 0.0);
    }
    assert!(String::from_utf8_lossy(&o.stdout).contains("L1p8n"));
}

#[test]
fn deleted_parts_are_missing_and_added_parts_new() {
    let s = Setup::new();
    s.record("base.json");
    fs::remove_file(s.lib().join("coils/a/L1p0n.s2p")).unwrap();
    write_part(&s.lib(), "coils/c/L3p0n.s2p", &coil(3.0e-9));
    let (code, r, _) = s.check("out", &["--baseline", "base.json"]);
    assert_eq!(code, 1, "a missing part fails the run");
    let gone = part(&r, "coils/a/L1p0n.s2p");
    assert_eq!(gone["status"], "missing");
    let added = part(&r, "coils/c/L3p0n.s2p");
    assert_eq!(added["new"], true);
    assert_eq!(added["status"], "pass");
    assert_eq!(r["summary"]["missing"], 1);
    assert_eq!(r["summary"]["new"], 1);

    // a new part alone passes, unless --strict
    write_part(&s.lib(), "coils/a/L1p0n.s2p", &coil(1.0e-9));
    let (code, r, _) = s.check("out2", &["--baseline", "base.json"]);
    assert_eq!(code, 0, "{r:#}");
    let (code, r, _) = s.check("out3", &["--baseline", "base.json", "--strict"]);
    assert_eq!(code, 1);
    assert_eq!(part(&r, "coils/c/L3p0n.s2p")["status"], "fail");
}

#[test]
fn changed_rules_are_named_and_bad_baselines_refused() {
    let s = Setup::new();
    s.record("base.json");
    fs::write(
        s.path("rules.yaml"),
        RULES.replace("q_peak: 5%", "q_peak: 6%"),
    )
    .unwrap();
    let (code, r, _) = s.check("out", &["--baseline", "base.json"]);
    assert_eq!(code, 0);
    assert_eq!(r["rules_changed"], serde_json::json!(["rules.yaml"]));

    fs::write(
        s.path("bad.json"),
        "{\"format\": \"lcgate-baseline/1\", \"parts\": [}",
    )
    .unwrap();
    let o = s.run(&[
        "check",
        "lib",
        "--rules",
        "rules.yaml",
        "--baseline",
        "bad.json",
    ]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("bad.json`:1:"), "{}", stderr(&o));
    fs::write(s.path("other.json"), "{\"format\": \"something/2\"}").unwrap();
    let o = s.run(&[
        "check",
        "lib",
        "--rules",
        "rules.yaml",
        "--baseline",
        "other.json",
    ]);
    assert_eq!(o.status.code(), Some(2));
    assert!(
        stderr(&o).contains("not a lcgate baseline"),
        "{}",
        stderr(&o)
    );
}

/// report.json without the one non-deterministic field.
fn without_run(mut r: serde_json::Value) -> serde_json::Value {
    r.as_object_mut().unwrap().remove("run");
    r
}

#[test]
fn shards_merged_equal_the_whole_run() {
    let s = Setup::new();
    s.record("base.json");
    write_part(&s.lib(), "coils/b/L1p8n.s2p", &coil(1.8e-9 * 1.03));
    let (code_all, all, _) = s.check("all", &["--baseline", "base.json", "--no-cache"]);
    let mut sizes = Vec::new();
    for k in 1..=3 {
        let shard = format!("{k}/3");
        let (_, r, _) = s.check(
            &format!("shard{k}"),
            &["--baseline", "base.json", "--shard", &shard],
        );
        assert_eq!(r["shard"], serde_json::json!([k, 3]));
        sizes.push(r["parts"].as_array().unwrap().len());
    }
    assert_eq!(sizes.iter().sum::<usize>(), PARTS.len());
    let o = s.run(&[
        "merge",
        "shard1/report.json",
        "shard2/report.json",
        "shard3/report.json",
        "--report",
        "merged",
    ]);
    assert_eq!(o.status.code(), Some(code_all), "{}", stderr(&o));
    let merged: serde_json::Value =
        serde_json::from_str(&fs::read_to_string(s.path("merged/report.json")).unwrap()).unwrap();
    assert_eq!(merged["parts"], all["parts"]);
    assert_eq!(merged["passed"], all["passed"]);
    assert_eq!(merged["shard"], serde_json::Value::Null);
    assert_eq!(merged["summary"], all["summary"]);
    // the cache counters are facts of each run, summed over the shards
    let counted = |k: &str| merged["run"][k].as_u64().unwrap_or(0) as usize;
    assert_eq!(counted("computed") + counted("cached"), PARTS.len());
    for f in ["report.xml", "report.md", "report.html"] {
        assert!(s.path("merged").join(f).is_file(), "{f}");
    }
}

#[test]
fn missing_doubled_and_foreign_shards_are_refused() {
    let s = Setup::new();
    for k in 1..=3 {
        let shard = format!("{k}/3");
        s.check(&format!("shard{k}"), &["--shard", &shard]);
    }
    s.check("whole", &[]);
    let merge = |inputs: &[&str]| {
        let mut args = vec!["merge"];
        args.extend_from_slice(inputs);
        let o = s.run(&args);
        assert_eq!(o.status.code(), Some(2), "{inputs:?}");
        stderr(&o)
    };
    let e = merge(&["shard1/report.json", "shard3/report.json"]);
    assert!(e.contains("shards missing: 2/3"), "{e}");
    let e = merge(&[
        "shard1/report.json",
        "shard2/report.json",
        "shard2/report.json",
    ]);
    assert!(e.contains("shard 2/3 is given twice"), "{e}");
    let e = merge(&["shard1/report.json", "whole/report.json"]);
    assert!(e.contains("unsharded"), "{e}");

    // a shard judged against other rules
    fs::write(
        s.path("rules.yaml"),
        RULES.replace("q(band) >= 1", "q(band) >= 2"),
    )
    .unwrap();
    s.check("shard3b", &["--shard", "3/3"]);
    let e = merge(&[
        "shard1/report.json",
        "shard2/report.json",
        "shard3b/report.json",
    ]);
    assert!(e.contains("rules differ"), "{e}");
    // not a report at all
    fs::write(s.path("junk.json"), "[]").unwrap();
    let e = merge(&["junk.json"]);
    assert!(e.contains("junk.json"), "{e}");
}

#[test]
fn a_warm_run_gives_the_same_report_and_recomputes_only_what_changed() {
    let s = Setup::new();
    let (_, cold, _) = s.check("cold", &[]);
    assert_eq!(cold["run"]["computed"], PARTS.len());
    assert_eq!(cold["run"]["cached"], 0);
    assert!(s.lib().join(".lcgate-cache").is_dir());
    let (_, warm, _) = s.check("warm", &[]);
    assert_eq!(warm["run"]["computed"], 0);
    assert_eq!(warm["run"]["cached"], PARTS.len());
    let (_, warm2, _) = s.check("warm2", &[]);
    // byte-identical reports, but for the run header (time, cache counters)
    // the HTML page says when the run started and how long it took: that line aside
    let page = |d: &str| -> String {
        fs::read_to_string(s.path(d).join("report.html"))
            .unwrap()
            .lines()
            .filter(|l| !l.contains("id=\"run-time\""))
            .collect::<Vec<_>>()
            .join("\n")
    };
    assert_eq!(page("warm"), page("warm2"));
    for f in ["report.xml", "report.md"] {
        let a = fs::read(s.path("warm").join(f)).unwrap();
        let b = fs::read(s.path("warm2").join(f)).unwrap();
        assert!(a == b, "{f} differs between warm runs");
    }
    assert_eq!(without_run(warm.clone()), without_run(warm2));
    // cold and warm differ only in the run header
    assert_eq!(without_run(cold), without_run(warm));

    // one file changes: only it is recomputed
    write_part(&s.lib(), "coils/a/L1p2n.s2p", &coil(1.25e-9));
    let (_, r, _) = s.check("one", &[]);
    assert_eq!(r["run"]["computed"], 1);
    assert_eq!(r["run"]["cached"], PARTS.len() - 1);

    // --no-cache computes everything
    let (_, r, _) = s.check("nocache", &["--no-cache"]);
    assert_eq!(r["run"]["computed"], PARTS.len());
}

#[test]
fn a_truncated_cache_entry_is_survived() {
    let s = Setup::new();
    let (_, cold, _) = s.check("cold", &["--cache", "c"]);
    // cut every entry in half
    let mut entries = 0;
    for e in walk(&s.path("c")) {
        let bytes = fs::read(&e).unwrap();
        fs::write(&e, &bytes[..bytes.len() / 2]).unwrap();
        entries += 1;
    }
    assert_eq!(entries, PARTS.len());
    let (code, r, o) = s.check("again", &["--cache", "c"]);
    assert_eq!(r["run"]["computed"], PARTS.len());
    assert_eq!(r["parts"], cold["parts"]);
    assert_eq!(code, if cold["passed"] == true { 0 } else { 1 });
    assert!(stderr(&o).contains("recomputed"), "{}", stderr(&o));
    // and rebuilt
    let (_, r, _) = s.check("third", &["--cache", "c"]);
    assert_eq!(r["run"]["cached"], PARTS.len());
}

fn walk(dir: &Path) -> Vec<PathBuf> {
    let mut out = Vec::new();
    for e in fs::read_dir(dir).unwrap() {
        let p = e.unwrap().path();
        if p.is_dir() {
            out.extend(walk(&p));
        } else {
            out.push(p);
        }
    }
    out.sort();
    out
}

#[test]
fn an_interrupted_baseline_write_keeps_the_old_baseline() {
    let s = Setup::new();
    s.record("base.json");
    let before = fs::read(s.path("base.json")).unwrap();
    let old = lcgate::baseline::Baseline::load(&s.path("base.json")).unwrap();
    let mut new = old.clone();
    new.parts.truncate(2);
    // a writer that stops after 100 bytes, as a full disk or a killed process would
    let r = lcgate::baseline::document::save_with(&s.path("base.json"), |w| {
        let text = new.to_json();
        w.write_all(&text.as_bytes()[..100])?;
        Err(std::io::Error::new(
            std::io::ErrorKind::StorageFull,
            "no space left on device",
        ))
    });
    assert!(r.is_err());
    assert_eq!(fs::read(s.path("base.json")).unwrap(), before);
    let names: Vec<_> = fs::read_dir(s.dir.path())
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    assert!(names.iter().all(|n| !n.contains(".tmp-")), "{names:?}");
    // and the old one still loads and checks clean
    let (code, _, _) = s.check("out", &["--baseline", "base.json"]);
    assert_eq!(code, 0);
}
