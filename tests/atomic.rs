//! Atomic writes (issue 9, item 6): every file lcgate writes — the four reports of
//! `check` and of `merge`, the baseline of `record`, cache entries, and Touchstone
//! files through `touchstone::write_path` — replaces the previous file whole or not
//! at all. The write is cut off for real, not simulated: the writer runs under a file
//! size limit (`ulimit -f`, RLIMIT_FSIZE, which binds root too), either killed by
//! SIGXFSZ in the middle of the write (an interrupted run) or, with the signal
//! ignored, getting EFBIG from `write` (a full disk, as far as the writer can tell).

use std::path::{Path, PathBuf};
use std::process::Command;

use lcgate::network::{Network, C64};
use lcgate::touchstone::{read_path, write_path, FreqUnit, WriteOptions};

fn data(rel: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/data")
        .join(rel)
}

/// How the write is cut off.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Cut {
    /// SIGXFSZ kills the process mid-write
    Killed,
    /// SIGXFSZ ignored: `write` fails with EFBIG and the writer must give up cleanly
    Refused,
}

/// Files may grow to at most this many blocks (`ulimit -f`): 512 bytes each in POSIX
/// sh; [`LIMIT_BYTES`] takes the larger 1024-byte blocks some shells use, so that the
/// files the test cuts off are surely above the limit.
const LIMIT_BLOCKS: u64 = 2;
const LIMIT_BYTES: u64 = LIMIT_BLOCKS * 1024;

/// `program args` under the size limit, in `cwd`: (exit code, None when killed by a
/// signal; stderr).
fn limited(
    cut: Cut,
    cwd: &Path,
    program: &Path,
    args: &[&str],
    env: &[(&str, &str)],
) -> (Option<i32>, String) {
    // an ignored signal stays ignored across exec, so the writer sees EFBIG
    let trap = if cut == Cut::Refused {
        "trap '' XFSZ; "
    } else {
        ""
    };
    let script = format!("ulimit -f {LIMIT_BLOCKS}; {trap}exec \"$@\"");
    let mut cmd = Command::new("/bin/sh");
    cmd.current_dir(cwd)
        .arg("-c")
        .arg(script)
        .arg("sh")
        .arg(program)
        .args(args)
        .env("NO_COLOR", "1");
    for (k, v) in env {
        cmd.env(k, v);
    }
    let out = cmd.output().expect("run under sh");
    (
        out.status.code(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

fn lcgate(cwd: &Path, args: &[&str]) -> (Option<i32>, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_lcgate"))
        .current_dir(cwd)
        .args(args)
        .env("NO_COLOR", "1")
        .output()
        .expect("run lcgate");
    (
        out.status.code(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

fn exe() -> PathBuf {
    PathBuf::from(env!("CARGO_BIN_EXE_lcgate"))
}

/// Names in a folder that are temporary files of an atomic write.
fn temps(dir: &Path) -> Vec<String> {
    std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.contains(".tmp-"))
        .collect()
}

/// Three parts of the small library that pass, and its rules, in a fresh folder.
fn setup() -> tempfile::TempDir {
    let d = tempfile::tempdir().unwrap();
    for p in ["coils/L1p0n.s2p", "misc/extra.s2p", "caps/C0p5p.s1p"] {
        let to = d.path().join("lib").join(p);
        std::fs::create_dir_all(to.parent().unwrap()).unwrap();
        std::fs::copy(data("lib-small").join(p), to).unwrap();
    }
    std::fs::create_dir_all(d.path().join("rules")).unwrap();
    for f in ["coils.yaml", "xfmr.yaml"] {
        std::fs::copy(
            data("lib-small-rules").join(f),
            d.path().join("rules").join(f),
        )
        .unwrap();
    }
    d
}

/// Old contents no writer produces, below the limit, told apart from anything new.
fn old_text(name: &str) -> String {
    format!("previous {name}: left here by the last good run\n")
}

/// After a cut-off write: the process was killed by SIGXFSZ, or exited 2 naming
/// `named` and leaving no temporary file (a killed one cannot clean up, but its
/// temporary file is hidden and never read); every file of `files` in `dir` still
/// holds its old text.
fn assert_kept(cut: Cut, got: (Option<i32>, String), named: &str, dir: &Path, files: &[&str]) {
    let (code, stderr) = got;
    match cut {
        Cut::Killed => assert_eq!(code, None, "killed by SIGXFSZ: {stderr}"),
        Cut::Refused => {
            assert_eq!(code, Some(2), "{stderr}");
            assert!(stderr.contains(named), "names {named}: {stderr}");
            assert_eq!(temps(dir), Vec::<String>::new(), "temporary files left");
        }
    }
    for f in files {
        let now = std::fs::read_to_string(dir.join(f)).unwrap();
        assert_eq!(now, old_text(f), "{cut:?}: {f} was touched");
    }
}

const REPORTS: [&str; 4] = ["report.json", "report.xml", "report.md", "report.html"];

#[test]
fn check_and_merge_reports_survive_a_cut_off_write() {
    for cut in [Cut::Killed, Cut::Refused] {
        let d = setup();
        let p = d.path();
        let out = p.join("out");
        std::fs::create_dir_all(&out).unwrap();
        for f in REPORTS {
            std::fs::write(out.join(f), old_text(f)).unwrap();
        }
        let args = [
            "check",
            "lib",
            "--rules",
            "rules",
            "--no-cache",
            "-q",
            "--report",
            "out",
        ];
        // the new report.json is above the limit, so its write is cut off
        let got = limited(cut, p, &exe(), &args, &[]);
        assert_kept(cut, got, "out/report.json", &out, &REPORTS);

        // unlimited, the same run replaces them (so the limit is what stopped it)
        let (code, e) = lcgate(p, &args);
        assert_eq!(code, Some(0), "{e}");
        let json = std::fs::read(out.join("report.json")).unwrap();
        assert!(
            json.len() as u64 > LIMIT_BYTES,
            "the report must exceed the limit"
        );

        // `merge` of that result into a folder of old reports
        let merged = p.join("merged");
        std::fs::create_dir_all(&merged).unwrap();
        for f in REPORTS {
            std::fs::write(merged.join(f), old_text(f)).unwrap();
        }
        let margs = ["merge", "out/report.json", "--report", "merged"];
        let got = limited(cut, p, &exe(), &margs, &[]);
        assert_kept(cut, got, "merged/report.json", &merged, &REPORTS);
        let (code, e) = lcgate(p, &margs);
        assert_eq!(code, Some(0), "{e}");
        assert_eq!(
            std::fs::read(merged.join("report.xml")).unwrap(),
            std::fs::read(out.join("report.xml")).unwrap()
        );
    }
}

#[test]
fn a_baseline_survives_a_cut_off_record() {
    for cut in [Cut::Killed, Cut::Refused] {
        let d = setup();
        let p = d.path();
        std::fs::write(p.join("base.json"), old_text("base.json")).unwrap();
        let args = ["record", "lib", "--rules", "rules", "-o", "base.json", "-q"];
        let got = limited(cut, p, &exe(), &args, &[]);
        assert_kept(cut, got, "base.json", p, &["base.json"]);
        let (code, e) = lcgate(p, &args);
        assert_eq!(code, Some(0), "{e}");
        let len = std::fs::metadata(p.join("base.json")).unwrap().len();
        assert!(
            len > LIMIT_BYTES,
            "the baseline must exceed the limit: {len} bytes"
        );
    }
}

/// Every cache file under `dir` but the hidden temporaries.
fn cache_files(dir: &Path, out: &mut Vec<PathBuf>) {
    let Ok(rd) = std::fs::read_dir(dir) else {
        return;
    };
    for e in rd {
        let e = e.unwrap();
        if e.file_type().unwrap().is_dir() {
            cache_files(&e.path(), out);
        } else if !e.file_name().to_string_lossy().starts_with('.') {
            out.push(e.path());
        }
    }
}

#[test]
fn cache_entries_are_whole_after_a_cut_off_run() {
    for cut in [Cut::Killed, Cut::Refused] {
        let d = setup();
        let p = d.path();
        let args = ["check", "lib", "--rules", "rules", "--cache", "cache", "-q"];
        let (code, stderr) = limited(cut, p, &exe(), &args, &[]);
        match cut {
            Cut::Killed => assert_eq!(code, None, "{stderr}"),
            // a cache that cannot be written costs speed, not the verdict
            Cut::Refused => assert_eq!(code, Some(0), "{stderr}"),
        }
        // whatever is there under a final name is a whole entry: JSON that parses
        let mut files = Vec::new();
        cache_files(&p.join("cache"), &mut files);
        for f in &files {
            let text = std::fs::read_to_string(f).unwrap();
            assert!(
                serde_json::from_str::<serde_json::Value>(&text).is_ok(),
                "{cut:?}: {} is cut short ({} bytes)",
                f.display(),
                text.len()
            );
        }
        // the next run uses the cache without a warning about a damaged entry, and
        // fills it
        let (code, stderr) = lcgate(p, &["check", "lib", "--rules", "rules", "--cache", "cache"]);
        assert_eq!(code, Some(0), "{stderr}");
        assert!(!stderr.contains("warning"), "{cut:?}: {stderr}");
        let mut after = Vec::new();
        cache_files(&p.join("cache"), &mut after);
        assert!(after.len() >= 3, "{cut:?}: {after:?}");
    }
}

/// A 4-port of 64 points: its Touchstone text is far above the limit.
fn big_network() -> Network {
    let freq: Vec<f64> = (1..=64).map(|k| k as f64 * 1e8).collect();
    let s = (0..64 * 16)
        .map(|i| {
            let x = i as f64;
            C64::new(0.3 * (x * 0.37).sin(), 0.3 * (x * 0.11).cos())
        })
        .collect();
    Network {
        freq,
        ports: 4,
        z0: vec![50.0; 4],
        s,
    }
}

/// Hz, so that the frequencies read back bit for bit.
fn opts() -> WriteOptions {
    WriteOptions {
        unit: FreqUnit::Hz,
        ..WriteOptions::default()
    }
}

/// Set in the child copy of this test binary, which writes under the size limit.
const CHILD: &str = "LCGATE_ATOMIC_WRITE_PATH";

/// `touchstone::write_path` (a library call; no command writes Touchstone): this test
/// binary runs itself, filtered to this one test, under the size limit, with
/// [`CHILD`] naming the file to replace; the child writes and exits with the outcome.
#[test]
fn touchstone_write_path_survives_a_cut_off_write() {
    if let Some(target) = std::env::var_os(CHILD) {
        // the child: exit 0 if the write succeeded, 3 with the message if refused
        match write_path(Path::new(&target), &big_network(), &opts()) {
            Ok(()) => std::process::exit(0),
            Err(e) => {
                eprintln!("{e}");
                std::process::exit(3)
            }
        }
    }
    let me = std::env::current_exe().expect("test binary");
    for cut in [Cut::Killed, Cut::Refused] {
        let d = tempfile::tempdir().unwrap();
        let target = d.path().join("part.s4p");
        std::fs::write(&target, old_text("part.s4p")).unwrap();
        let (code, stderr) = limited(
            cut,
            d.path(),
            &me,
            &[
                "--exact",
                "touchstone_write_path_survives_a_cut_off_write",
                "--test-threads",
                "1",
                "--nocapture",
            ],
            &[(CHILD, target.to_str().unwrap())],
        );
        match cut {
            Cut::Killed => assert_eq!(code, None, "{code:?} {stderr}"),
            Cut::Refused => {
                assert_eq!(code, Some(3), "{stderr}");
                assert!(stderr.contains("part.s4p"), "{stderr}");
                assert_eq!(temps(d.path()), Vec::<String>::new());
            }
        }
        assert_eq!(
            std::fs::read_to_string(&target).unwrap(),
            old_text("part.s4p")
        );
    }
    // unlimited, the write replaces the file and reads back
    let d = tempfile::tempdir().unwrap();
    let target = d.path().join("part.s4p");
    std::fs::write(&target, old_text("part.s4p")).unwrap();
    write_path(&target, &big_network(), &opts()).unwrap();
    assert!(std::fs::metadata(&target).unwrap().len() > LIMIT_BYTES);
    assert!(
        read_path(&target).unwrap().network == big_network(),
        "reads back"
    );
}
