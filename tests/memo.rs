//! The run memo (src/baseline/memo.rs) end to end through the binary: an unchanged
//! library repeats the last verdict without judging a part; any change to a part, a
//! rules file, the baseline or the reports written makes the run judge again; files
//! too fresh to be trusted by their times are never memoised.

use std::fs;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};
use std::time::{Duration, SystemTime};

const REPLAYED: &str = "nothing the run depends on changed";

fn data(rel: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/data")
        .join(rel)
}

fn copy_tree(from: &Path, to: &Path) {
    fs::create_dir_all(to).unwrap();
    for e in fs::read_dir(from).unwrap() {
        let e = e.unwrap();
        let t = to.join(e.file_name());
        if e.file_type().unwrap().is_dir() {
            copy_tree(&e.path(), &t);
        } else {
            fs::copy(e.path(), &t).unwrap();
        }
    }
}

/// Set every file's modification time an hour back, as a library checked out long
/// before the run is.
fn age(dir: &Path) {
    let then = SystemTime::now() - Duration::from_secs(3600);
    for e in fs::read_dir(dir).unwrap() {
        let e = e.unwrap();
        if e.file_type().unwrap().is_dir() {
            age(&e.path());
        } else {
            let f = fs::OpenOptions::new().write(true).open(e.path()).unwrap();
            f.set_modified(then).unwrap();
        }
    }
}

struct Setup {
    dir: tempfile::TempDir,
}

impl Setup {
    fn new() -> Setup {
        let dir = tempfile::tempdir().unwrap();
        copy_tree(&data("lib-small"), &dir.path().join("lib"));
        copy_tree(&data("lib-small-rules"), &dir.path().join("rules"));
        age(&dir.path().join("lib"));
        age(&dir.path().join("rules"));
        Setup { dir }
    }
    fn path(&self, rel: &str) -> PathBuf {
        self.dir.path().join(rel)
    }
    fn check(&self, extra: &[&str]) -> Output {
        Command::new(env!("CARGO_BIN_EXE_lcgate"))
            .current_dir(self.dir.path())
            .args(["check", "lib", "--rules", "rules", "--report", "out"])
            .args(extra)
            .output()
            .unwrap()
    }
}

fn replayed(o: &Output) -> bool {
    String::from_utf8_lossy(&o.stderr).contains(REPLAYED)
}

#[test]
fn an_unchanged_library_repeats_the_verdict_without_judging() {
    let s = Setup::new();
    let cold = s.check(&[]);
    assert!(!replayed(&cold));
    let report = fs::read(s.path("out/report.json")).unwrap();
    // the per-part cache entries are not needed: remove all but the memo
    for e in fs::read_dir(s.path("lib/.lcgate-cache")).unwrap() {
        let e = e.unwrap();
        if e.file_name() != "runs" {
            fs::remove_dir_all(e.path()).unwrap();
        }
    }
    let warm = s.check(&[]);
    assert!(replayed(&warm), "{}", String::from_utf8_lossy(&warm.stderr));
    assert_eq!(warm.stdout, cold.stdout);
    assert_eq!(warm.status.code(), cold.status.code());
    assert_eq!(fs::read(s.path("out/report.json")).unwrap(), report);
    // other output options are another run
    assert!(!replayed(&s.check(&["--strict"])));
}

#[test]
fn a_change_to_a_part_rules_baseline_or_reports_judges_again() {
    let s = Setup::new();
    s.check(&[]);
    assert!(replayed(&s.check(&[])));

    // a part rewritten (same length, one digit changed), even with an old time
    let part = s.path("lib/coils/L1p0n.s2p");
    let text = fs::read_to_string(&part).unwrap();
    let pos = text
        .rfind(|c: char| c.is_ascii_digit() && c != '9')
        .unwrap();
    let mut bytes = text.into_bytes();
    bytes[pos] += 1;
    fs::write(&part, &bytes).unwrap();
    age(&s.path("lib/coils"));
    let o = s.check(&[]);
    assert!(!replayed(&o));
    let r: serde_json::Value =
        serde_json::from_slice(&fs::read(s.path("out/report.json")).unwrap()).unwrap();
    assert_eq!(r["run"]["computed"], 1, "only the changed part is judged");
    assert!(replayed(&s.check(&[])));

    // a rules file edited
    let rules = s.path("rules/coils.yaml");
    let mut y = fs::read_to_string(&rules).unwrap();
    y.push_str("\n# reviewed\n");
    fs::write(&rules, y).unwrap();
    assert!(!replayed(&s.check(&[])));
    assert!(replayed(&s.check(&[])));

    // a report removed: judged again and written again
    fs::remove_file(s.path("out/report.md")).unwrap();
    assert!(!replayed(&s.check(&[])));
    assert!(s.path("out/report.md").is_file());
    assert!(replayed(&s.check(&[])));

    // a baseline given, then changed
    let rec = Command::new(env!("CARGO_BIN_EXE_lcgate"))
        .current_dir(s.dir.path())
        .args(["record", "lib", "--rules", "rules", "-o", "base.json"])
        .output()
        .unwrap();
    assert!(
        rec.status.success(),
        "{}",
        String::from_utf8_lossy(&rec.stderr)
    );
    assert!(!replayed(&s.check(&["--baseline", "base.json"])));
    assert!(replayed(&s.check(&["--baseline", "base.json"])));
    let b = fs::read_to_string(s.path("base.json")).unwrap();
    fs::write(
        s.path("base.json"),
        b.replacen("\"parts\"", "\"parts\" ", 1),
    )
    .unwrap();
    assert!(!replayed(&s.check(&["--baseline", "base.json"])));

    // a part added
    fs::copy(&part, s.path("lib/coils/copy.s2p")).unwrap();
    age(&s.path("lib/coils"));
    assert!(!replayed(&s.check(&["--baseline", "base.json"])));
}

#[test]
fn fresh_files_are_never_memoised() {
    let s = Setup::new();
    // one part written just now: its time cannot vouch for its content
    let part = s.path("lib/coils/L1p0n.s2p");
    let bytes = fs::read(&part).unwrap();
    fs::write(&part, bytes).unwrap();
    s.check(&[]);
    assert!(!replayed(&s.check(&[])));
    // --no-cache never repeats a verdict
    age(&s.path("lib"));
    s.check(&["--no-cache"]);
    assert!(!replayed(&s.check(&["--no-cache"])));
}

/// Write `text` to `path` and set its modification time an hour back.
fn write_old(path: &Path, text: &str) {
    fs::write(path, text).unwrap();
    let f = fs::OpenOptions::new().write(true).open(path).unwrap();
    f.set_modified(SystemTime::now() - Duration::from_secs(3600))
        .unwrap();
}

#[test]
fn a_sidecar_appearing_changing_or_going_away_judges_again() {
    // the memo finds sidecars in the folder listings of its walk, not by asking the
    // file system per part: each of these must still be seen. Only the sidecar itself
    // is aged (aging a folder would change its parts' change times, a miss anyway).
    let s = Setup::new();
    s.check(&[]);
    assert!(replayed(&s.check(&[])));

    // the first sidecar of the whole library, by the part's stem
    let stem = s.path("lib/coils/L1p0n.part.yaml");
    write_old(&stem, "band: 1GHz .. 2GHz\n");
    assert!(!replayed(&s.check(&[])));
    assert!(replayed(&s.check(&[])));

    // its content changed, with an old time
    write_old(&stem, "band: 1GHz .. 3GHz\n");
    assert!(!replayed(&s.check(&[])));
    assert!(replayed(&s.check(&[])));

    // one by the full name appears beside it and wins
    let full = s.path("lib/coils/L1p0n.s2p.part.yaml");
    write_old(&full, "band: 1GHz .. 3GHz\n");
    assert!(!replayed(&s.check(&[])));
    assert!(replayed(&s.check(&[])));

    // a sidecar in another folder, for a part there
    write_old(&s.path("lib/caps/C0p5p.part.yaml"), "band: 1GHz .. 2GHz\n");
    assert!(!replayed(&s.check(&[])));
    assert!(replayed(&s.check(&[])));

    // one that belongs to no part changes nothing
    write_old(
        &s.path("lib/caps/nothing.part.yaml"),
        "band: 1GHz .. 2GHz\n",
    );
    assert!(replayed(&s.check(&[])));

    // the winning one removed, then the last of that part
    fs::remove_file(&full).unwrap();
    assert!(!replayed(&s.check(&[])));
    assert!(replayed(&s.check(&[])));
    fs::remove_file(&stem).unwrap();
    assert!(!replayed(&s.check(&[])));
    assert!(replayed(&s.check(&[])));
}

/// The memo's stats are taken on several threads in libraries of more than a few
/// hundred parts: the key must not depend on how many, nor on which part changed.
#[test]
fn a_large_library_replays_on_any_thread_count_and_sees_one_changed_part() {
    let s = Setup::new();
    // 600 copies of one part of the small library, beside a sidecar for some
    let lib = s.path("lib");
    let one = fs::read_dir(lib.join("coils"))
        .unwrap()
        .map(|e| e.unwrap().path())
        .find(|p| p.extension().is_some_and(|x| x == "s2p"))
        .expect("a 2-port in lib-small");
    let many = lib.join("many");
    fs::create_dir_all(&many).unwrap();
    for k in 0..600 {
        fs::copy(&one, many.join(format!("copy-{k:03}.s2p"))).unwrap();
    }
    fs::write(many.join("copy-123.part.yaml"), "band: 1GHz .. 2GHz\n").unwrap();
    age(&lib);
    let cold = s.check(&["--jobs", "1"]);
    assert!(!replayed(&cold));
    for jobs in ["1", "2", "3"] {
        let warm = s.check(&["--jobs", jobs]);
        assert!(
            replayed(&warm),
            "jobs {jobs}: {}",
            String::from_utf8_lossy(&warm.stderr)
        );
        assert_eq!(warm.stdout, cold.stdout);
    }
    // a rewrite of one part far down the list (its stat falls to another thread)
    let f = fs::OpenOptions::new()
        .write(true)
        .open(many.join("copy-517.s2p"))
        .unwrap();
    f.set_modified(SystemTime::now() - Duration::from_secs(1800))
        .unwrap();
    assert!(!replayed(&s.check(&["--jobs", "2"])));
}
