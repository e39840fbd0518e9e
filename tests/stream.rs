//! Streamed reports (performance issue: memory of a run grows with its largest file,
//! not with the library). `check --report` draws every part's pieces as it is judged
//! and keeps only the parts a summary names; these tests hold that run to the
//! straightforward one, which keeps every part whole and writes the reports from the
//! finished report: the same four files byte for byte, the same terminal summary,
//! the same counts.

use std::path::{Path, PathBuf};

use lcgate::pipeline::{self, CacheChoice, Keep, NoProgress, RunOptions};
use lcgate::report::{self, ReportStream, REPORT_FILES};

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// `copying`: the streamed run puts the reports' heads in front of their bodies by
/// copying the bodies, as on a file system that cannot insert blocks.
fn compare_runs(opts: &RunOptions, copying: bool) {
    let whole = pipeline::run_with(opts, &NoProgress).expect("run").report;
    let a = tempfile::tempdir().unwrap();
    report::write_all(a.path(), &whole).expect("reports written");
    // the reports written whole, in memory: no stream, no temporary files
    let json = std::fs::read(a.path().join("report.json")).unwrap();
    assert!(
        json == report::json(&whole).into_bytes(),
        "report.json differs from json()"
    );
    let html = std::fs::read(a.path().join("report.html")).unwrap();
    assert!(
        html == report::html(&whole).into_bytes(),
        "report.html differs from html()"
    );

    let b = tempfile::tempdir().unwrap();
    let mut stream = ReportStream::new(b.path()).expect("stream");
    if copying {
        stream = stream.copying_bodies();
    }
    let mut kept = pipeline::run_into(opts, &NoProgress, &mut stream, Keep::Notable)
        .expect("run")
        .report;
    // the run's time is the one thing that differs between two runs
    kept.run = whole.run.clone();
    stream.finish(&kept).expect("streamed reports written");

    assert_eq!(kept.summary, whole.summary);
    assert_eq!(kept.passed, whole.passed);
    assert!(kept.parts.len() <= whole.parts.len());
    assert!(kept.parts.iter().all(|p| p.plot.is_none()));
    for name in REPORT_FILES {
        let x = std::fs::read(a.path().join(name)).unwrap();
        let y = std::fs::read(b.path().join(name)).unwrap();
        assert!(
            x == y,
            "{name} differs between the streamed and the whole run"
        );
    }
    for colour in [false, true] {
        assert_eq!(
            report::terminal(&kept, colour),
            report::terminal(&whole, colour)
        );
    }
    assert_eq!(report::markdown(&kept), report::markdown(&whole));
    // nothing but the four reports is left in the folder (the spills are unnamed)
    let mut left: Vec<String> = std::fs::read_dir(b.path())
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    left.sort();
    let mut want: Vec<String> = REPORT_FILES.iter().map(|s| s.to_string()).collect();
    want.sort();
    assert_eq!(left, want);
}

fn opts(library: &Path, rules: &Path) -> RunOptions {
    RunOptions {
        library: library.to_path_buf(),
        rules: vec![rules.to_path_buf()],
        cache: CacheChoice::Off,
        ..RunOptions::default()
    }
}

/// The sample library against its baseline: failures, warnings, drift, new and
/// missing parts.
#[test]
fn sample_library_with_its_baseline_streams_to_the_same_reports() {
    let r = root();
    let mut o = opts(&r.join("sample-library"), &r.join("rules"));
    o.baseline = Some(r.join("sample-library/baseline.json"));
    compare_runs(&o, false);
    o.strict = true;
    o.jobs = Some(1);
    compare_runs(&o, false);
}

/// The small test library: unreadable files, parts no rule selects, undecided checks;
/// with the reports' heads inserted in front of their bodies and with the bodies copied.
#[test]
fn small_library_streams_to_the_same_reports() {
    let r = root();
    let o = opts(
        &r.join("tests/data/lib-small"),
        &r.join("tests/data/lib-small-rules"),
    );
    compare_runs(&o, false);
    compare_runs(&o, true);
}

/// A library whose paths collide once made into element ids (`a b` and `a-b`): the
/// streamed page numbers them as the whole one does.
#[test]
fn colliding_element_ids_stream_the_same() {
    let tmp = tempfile::tempdir().unwrap();
    let lib = tmp.path().join("lib");
    std::fs::create_dir_all(&lib).unwrap();
    let text = coil_one_port();
    for name in ["a b.s1p", "a-b.s1p", "a_b.s1p", "a.b.s1p"] {
        std::fs::write(lib.join(name), &text).unwrap();
    }
    let rules = tmp.path().join("rules.yaml");
    std::fs::write(
        &rules,
        "suite: ids\nparts:\n  - select: [\"*.s1p\"]\n    kind: inductor\n    checks:\n      l-set: l(1GHz) >= 1nH\n",
    )
    .unwrap();
    compare_runs(&opts(&lib, &rules), false);
}

/// A series 2 nH + 1 Ω as a one-port, in Touchstone 1.0 RI form (Z = R + jωL,
/// S11 = (Z − 50)/(Z + 50), Pozar §4.3), 1–20 GHz.
fn coil_one_port() -> String {
    let mut text = String::from("# GHz S RI R 50\n");
    for i in 1..=20 {
        let f = i as f64 * 1e9;
        let z = num_complex::Complex64::new(1.0, 2.0 * std::f64::consts::PI * f * 2e-9);
        let s = (z - 50.0) / (z + 50.0);
        text.push_str(&format!("{} {} {}\n", i, s.re, s.im));
    }
    text
}

/// A library of `n` one-ports ([`coil_one_port`]) and its rules file, in `tmp`.
fn many_parts(tmp: &Path, n: usize) -> (PathBuf, PathBuf) {
    let lib = tmp.join("lib");
    std::fs::create_dir_all(&lib).unwrap();
    let text = coil_one_port();
    for k in 0..n {
        std::fs::write(lib.join(format!("coil-{k:04}.s1p")), &text).unwrap();
    }
    let rules = tmp.join("rules.yaml");
    std::fs::write(
        &rules,
        "suite: many\nparts:\n  - select: [\"*.s1p\"]\n    kind: inductor\n    checks:\n      l-set: l(1GHz) >= 1nH\n",
    )
    .unwrap();
    (lib, rules)
}

/// Records what it is handed: the pipeline judges chunks ahead on the workers while
/// the main thread takes, and must still hand every part over once, in path order.
struct Recorder {
    taken: Vec<(usize, String)>,
    panic_at: Option<usize>,
}

struct IndexDrawer;

impl pipeline::Draw for IndexDrawer {
    type Drawn = usize;
    fn draw(&self, _: &lcgate::verdict::PartReport, index: usize) -> usize {
        index
    }
}

impl pipeline::PartSink for Recorder {
    type Drawer = IndexDrawer;
    fn begin(&mut self, _: &lcgate::verdict::RunReport, _: &[&str]) -> IndexDrawer {
        IndexDrawer
    }
    fn take(&mut self, part: &lcgate::verdict::PartReport, index: usize) {
        if self.panic_at == Some(self.taken.len()) {
            panic!("the sink fails on purpose");
        }
        self.taken.push((index, part.path.clone()));
    }
}

#[test]
fn parts_judged_ahead_are_taken_once_in_path_order() {
    let tmp = tempfile::tempdir().unwrap();
    // several of the pipeline's chunks (32 parts) and a partial last one
    let n = 300;
    let (lib, rules) = many_parts(tmp.path(), n);
    for jobs in [1, 2, 3] {
        let mut o = opts(&lib, &rules);
        o.jobs = Some(jobs);
        let mut sink = Recorder {
            taken: Vec::new(),
            panic_at: None,
        };
        let out = pipeline::run_into(&o, &NoProgress, &mut sink, Keep::Notable).expect("run");
        assert_eq!(out.report.summary.parts, n);
        let want: Vec<(usize, String)> = (0..n).map(|k| (k, format!("coil-{k:04}.s1p"))).collect();
        assert_eq!(sink.taken, want, "jobs {jobs}");
    }
    // and the streamed reports of such a run are the whole run's
    let mut o = opts(&lib, &rules);
    o.jobs = Some(2);
    compare_runs(&o, false);
}

#[test]
fn a_sink_that_panics_stops_the_run_without_hanging() {
    let tmp = tempfile::tempdir().unwrap();
    let (lib, rules) = many_parts(tmp.path(), 200);
    let mut o = opts(&lib, &rules);
    o.jobs = Some(2);
    let mut sink = Recorder {
        taken: Vec::new(),
        panic_at: Some(70),
    };
    let r = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
        pipeline::run_into(&o, &NoProgress, &mut sink, Keep::Notable)
    }));
    assert!(r.is_err(), "the sink's panic reaches the caller");
    assert_eq!(sink.taken.len(), 70);
}
