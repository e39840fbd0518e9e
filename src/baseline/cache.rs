//! The content-hash cache of judged parts (DESIGN §9).
//!
//! Key: blake3 over the tool version and build, `--strict`, every rules file (path as
//! given and hash), the part's path, the hash of its bytes, and its sidecar file (path
//! and bytes) if any. Value: the whole judged part ([`Judged`]: report with plot data,
//! content hash, drift measures), as JSON in `DIR/ab/abcdef….json` (the first two hex
//! digits of the key make a subfolder, so no folder grows huge). A warm run of an
//! unchanged library therefore only hashes files and reads entries: no figure, fit or
//! plot is recomputed.
//!
//! An entry is trusted only if it parses, carries this format, this tool version and
//! its own key, and describes the part asked for; anything else (a truncated write, a
//! foreign or older cache, a hand edit) is reported as a warning and recomputed.
//! Baseline comparison happens after the cache, so a new baseline never needs a cold
//! run.

use std::fs::{self, File};
use std::io::{self, Write};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::OnceLock;

use serde::{Deserialize, Serialize};

use super::{Judged, Measure};
use crate::library::{self, PartFile};
use crate::verdict::{PartReport, RulesFileInfo};

/// Format tag of a cache entry.
pub const CACHE_FORMAT: &str = "lcgate-cache/1";

/// A cache folder and the parts of the key shared by every part of one run.
#[derive(Debug)]
pub struct Cache {
    dir: PathBuf,
    salt: blake3::Hash,
    /// set after the first failed write, so a read-only folder warns once, not per part
    write_failed: AtomicBool,
}

/// What the cache holds for a key.
#[derive(Debug)]
pub enum Lookup {
    /// a valid entry
    Hit(Box<Judged>),
    /// no entry
    Miss,
    /// an entry that cannot be trusted, and why
    Bad(String),
}

#[derive(Serialize)]
struct EntryOut<'a> {
    format: &'a str,
    tool_version: &'a str,
    key: &'a str,
    part: &'a Judged,
}

#[derive(Deserialize)]
struct EntryIn {
    format: String,
    tool_version: String,
    key: String,
    part: Judged,
}

/// The identity of the running executable, so that a rebuilt tool with the same
/// version number (a developer's build) never trusts results of the previous build:
/// its path, size and modification time. Hashing the bytes would be surer against a
/// forged time stamp but costs a full read of a large file on every run, which the
/// warm run cannot afford. Empty when the executable cannot be found (the version alone
/// then keys the build).
pub(crate) fn build_id() -> &'static str {
    static ID: OnceLock<String> = OnceLock::new();
    ID.get_or_init(|| {
        std::env::current_exe()
            .ok()
            .and_then(|p| {
                let m = std::fs::metadata(&p).ok()?;
                let t = m
                    .modified()
                    .ok()?
                    .duration_since(std::time::UNIX_EPOCH)
                    .ok()?;
                Some(format!("{}:{}:{}", p.display(), m.len(), t.as_nanos()))
            })
            .unwrap_or_default()
    })
}

/// Feed one field, length first, so that no two field lists hash alike.
fn field(h: &mut blake3::Hasher, bytes: &[u8]) {
    h.update(&(bytes.len() as u64).to_le_bytes());
    h.update(bytes);
}

/// blake3 of a file's bytes, read in a stream.
pub fn hash_file(path: &Path) -> io::Result<blake3::Hash> {
    let f = File::open(path)?;
    Ok(blake3::Hasher::new().update_reader(f)?.finalize())
}

/// Parts smaller than this are read into memory once, hashed there, and the same bytes
/// handed to the reader; larger ones are hashed in a stream and read again by the
/// reader, which takes them in blocks (`touchstone::read_path` does so from 8 MiB on,
/// so below this size it would read the whole file at once anyway).
pub const SINGLE_READ_MAX: u64 = 8 << 20;

/// A part's file opened and, when it is smaller than [`SINGLE_READ_MAX`], its bytes.
fn open_part(path: &Path) -> io::Result<(File, Option<Vec<u8>>)> {
    let f = File::open(path)?;
    let n = f.metadata()?.len();
    let bytes = if n < SINGLE_READ_MAX {
        Some(read_sized(&f, n)?)
    } else {
        None
    };
    Ok((f, bytes))
}

/// The hash of a part's file and, when it is smaller than [`SINGLE_READ_MAX`], its
/// bytes (hashed in memory; a larger file is hashed in a stream).
fn hash_part(path: &Path) -> io::Result<(blake3::Hash, Option<Vec<u8>>)> {
    let (f, bytes) = open_part(path)?;
    let h = match &bytes {
        Some(b) => blake3::hash(b),
        None => blake3::Hasher::new().update_reader(f)?.finalize(),
    };
    Ok((h, bytes))
}

/// All of `f`, whose size `metadata` gave as `n`: read into room for one byte more,
/// so that two reads find the end. `File`'s own `read_to_end` would ask for the size
/// and position again (a `statx` and an `lseek` per part), and std's generic one reads
/// in growing 8 KiB steps. A file that grew since is still read whole.
fn read_sized(mut f: &File, n: u64) -> io::Result<Vec<u8>> {
    let mut bytes = vec![0; n as usize + 1];
    let mut len = 0;
    loop {
        match io::Read::read(&mut f, &mut bytes[len..]) {
            Ok(0) => break,
            Ok(k) => {
                len += k;
                if len == bytes.len() {
                    bytes.resize(2 * len, 0);
                }
            }
            Err(e) if e.kind() == io::ErrorKind::Interrupted => {}
            Err(e) => return Err(e),
        }
    }
    bytes.truncate(len);
    Ok(bytes)
}

impl Cache {
    /// The cache in `dir` for a run with these rules and `--strict` setting. Nothing is
    /// created until the first entry is stored.
    pub fn new(dir: PathBuf, rules: &[RulesFileInfo], strict: bool) -> Cache {
        let mut h = blake3::Hasher::new();
        field(&mut h, CACHE_FORMAT.as_bytes());
        field(&mut h, crate::TOOL_VERSION.as_bytes());
        field(&mut h, build_id().as_bytes());
        field(&mut h, &[u8::from(strict)]);
        field(&mut h, &(rules.len() as u64).to_le_bytes());
        for r in rules {
            field(&mut h, r.path.as_bytes());
            field(&mut h, r.hash.as_bytes());
        }
        Cache {
            dir,
            salt: h.finalize(),
            write_failed: AtomicBool::new(false),
        }
    }

    /// The default cache folder of a library: `LIBRARY/.lcgate-cache` (beside a
    /// single-file library).
    pub fn default_dir(library: &Path) -> PathBuf {
        if library.is_file() {
            library
                .parent()
                .unwrap_or(Path::new("."))
                .join(library::CACHE_DIR)
        } else {
            library.join(library::CACHE_DIR)
        }
    }

    /// The cache folder.
    pub fn dir(&self) -> &Path {
        &self.dir
    }

    /// The key of one part (hex).
    pub fn key(
        &self,
        part: &PartFile,
        content: &blake3::Hash,
        sidecar: Option<(&Path, &[u8])>,
    ) -> String {
        let mut h = blake3::Hasher::new();
        h.update(self.salt.as_bytes());
        field(&mut h, part.rel.as_bytes());
        // the path as walked appears in read-error messages
        field(&mut h, part.path.to_string_lossy().as_bytes());
        h.update(content.as_bytes());
        match sidecar {
            None => field(&mut h, b""),
            Some((p, bytes)) => {
                field(&mut h, b"sidecar");
                field(&mut h, p.to_string_lossy().as_bytes());
                field(&mut h, bytes);
            }
        }
        h.finalize().to_hex().to_string()
    }

    /// Where the entry of `key` lives.
    pub fn entry_path(&self, key: &str) -> PathBuf {
        let prefix = key.get(..2).unwrap_or("00");
        self.dir.join(prefix).join(format!("{key}.json"))
    }

    /// The entry of `key` for the part at `rel`.
    pub fn get(&self, key: &str, rel: &str) -> Lookup {
        let path = self.entry_path(key);
        let bytes = match fs::read(&path) {
            Ok(b) => b,
            Err(e)
                if matches!(
                    e.kind(),
                    io::ErrorKind::NotFound | io::ErrorKind::NotADirectory
                ) =>
            {
                return Lookup::Miss
            }
            Err(e) => return Lookup::Bad(format!("cannot read cache entry: {e}")),
        };
        let entry: EntryIn = match serde_json::from_slice(&bytes) {
            Ok(e) => e,
            Err(e) => return Lookup::Bad(format!("cache entry is damaged ({e})")),
        };
        if entry.format != CACHE_FORMAT {
            return Lookup::Bad(format!(
                "cache entry has format `{}`, not `{CACHE_FORMAT}`",
                entry.format
            ));
        }
        if entry.tool_version != crate::TOOL_VERSION {
            return Lookup::Bad(format!(
                "cache entry is from lcgate {}, this is {}",
                entry.tool_version,
                crate::TOOL_VERSION
            ));
        }
        if entry.key != key || entry.part.report.path != rel {
            return Lookup::Bad("cache entry belongs to another part".to_string());
        }
        let mut judged = entry.part;
        judged.cached = true;
        Lookup::Hit(Box::new(judged))
    }

    /// Store the entry of `key`, atomically (a torn entry would fail the checks of
    /// [`Cache::get`] and be recomputed anyway).
    pub fn put(&self, key: &str, judged: &Judged) -> io::Result<()> {
        let path = self.entry_path(key);
        if let Some(dir) = path.parent() {
            fs::create_dir_all(dir)?;
        }
        let entry = EntryOut {
            format: CACHE_FORMAT,
            tool_version: crate::TOOL_VERSION,
            key,
            part: judged,
        };
        // not fsynced: 2,000 fsyncs would dominate a cold run, and an entry lost or torn
        // in a crash is detected by `get` and recomputed
        crate::report::atomic_write_unsynced(&path, |w: &mut dyn Write| {
            serde_json::to_writer(w, &entry).map_err(io::Error::other)
        })
    }

    /// Judge `part` through the cache: hash it, take a valid entry if there is one,
    /// else `compute` and store the result. `compute` is given the part's bytes when
    /// they were read for the hash (a file below [`SINGLE_READ_MAX`]), so that it need
    /// not read the file again; with None it reads the file itself. Warnings (an entry
    /// ignored, a folder that cannot be written) are pushed to `notes`.
    pub fn judge(
        &self,
        part: &PartFile,
        notes: &mut Vec<String>,
        compute: impl FnOnce(Option<&[u8]>) -> (PartReport, Vec<Measure>),
    ) -> Judged {
        judge(Some(self), part, notes, true, compute)
    }
}

/// Judge `part` with or without a cache (see [`Cache::judge`]). The content hash is
/// taken when there is a cache or `hash` asks for it (a baseline is recorded);
/// otherwise the part is only read, and [`Judged::hash`] is None.
pub fn judge(
    cache: Option<&Cache>,
    part: &PartFile,
    notes: &mut Vec<String>,
    hash: bool,
    compute: impl FnOnce(Option<&[u8]>) -> (PartReport, Vec<Measure>),
) -> Judged {
    // a file that cannot be hashed cannot be read either: the reader says why
    let (content, bytes) = match &part.error {
        None if cache.is_some() || hash => match hash_part(&part.path) {
            Ok((h, bytes)) => (Some(h), bytes),
            Err(_) => (None, None),
        },
        // unhashed (a check that keeps no cache)
        None => (None, open_part(&part.path).map_or(None, |(_, b)| b)),
        Some(_) => (None, None),
    };
    let keyed = match (cache, &content) {
        (Some(cache), Some(content)) => cache_key(cache, part, content).map(|k| (cache, k)),
        _ => None,
    };
    if let Some((cache, key)) = &keyed {
        match cache.get(key, &part.rel) {
            Lookup::Hit(j) => return *j,
            Lookup::Miss => {}
            Lookup::Bad(why) => notes.push(format!(
                "{}: {why}; ignored and recomputed ({})",
                part.rel,
                cache.entry_path(key).display()
            )),
        }
    }
    let (report, measures) = compute(bytes.as_deref());
    drop(bytes);
    let judged = Judged {
        report,
        hash: content.map(|h| h.to_hex().to_string()),
        measures,
        cached: false,
    };
    if let Some((cache, key)) = &keyed {
        if let Err(e) = cache.put(key, &judged) {
            if !cache.write_failed.swap(true, Ordering::Relaxed) {
                notes.push(format!(
                    "cache folder `{}` cannot be written ({e}); results are not kept for the next run",
                    cache.dir.display()
                ));
            }
        }
    }
    judged
}

/// The key of `part`, or None when its sidecar exists but cannot be read (the rules
/// module reports that; such a part is never cached).
fn cache_key(cache: &Cache, part: &PartFile, content: &blake3::Hash) -> Option<String> {
    match part.sidecar() {
        None => Some(cache.key(part, content, None)),
        Some(p) => {
            let bytes = fs::read(&p).ok()?;
            Some(cache.key(part, content, Some((&p, &bytes))))
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::verdict::PartStatus;

    fn report(rel: &str, q: f64) -> PartReport {
        PartReport {
            path: rel.into(),
            status: PartStatus::Pass,
            kind: None,
            view: None,
            figures: [("q_peak".to_string(), Some(q))].into_iter().collect(),
            q_drop_cause: None,
            checks: vec![],
            drift: vec![],
            new: false,
            error: None,
            plot: None,
        }
    }

    fn rules(hash: &str) -> Vec<RulesFileInfo> {
        vec![RulesFileInfo {
            path: "r.yaml".into(),
            hash: hash.into(),
            suite: "s".into(),
        }]
    }

    struct Lib {
        dir: tempfile::TempDir,
    }
    impl Lib {
        fn new() -> Lib {
            let dir = tempfile::tempdir().unwrap();
            fs::write(dir.path().join("a.s1p"), "# GHz S RI R 50\n1 0.5 0\n").unwrap();
            Lib { dir }
        }
        fn part(&self) -> PartFile {
            PartFile {
                rel: "a.s1p".into(),
                path: self.dir.path().join("a.s1p"),
                error: None,
                sidecar: Default::default(),
            }
        }
        fn cache(&self, hash: &str) -> Cache {
            Cache::new(Cache::default_dir(self.dir.path()), &rules(hash), false)
        }
    }

    fn run(cache: Option<&Cache>, part: &PartFile, q: f64) -> (Judged, Vec<String>, usize) {
        let mut notes = Vec::new();
        let mut calls = 0;
        let j = judge(cache, part, &mut notes, true, |bytes| {
            // the bytes handed over are the file's
            if let Some(b) = bytes {
                assert_eq!(b, fs::read(&part.path).unwrap());
            }
            calls += 1;
            (report(&part.rel, q), vec![])
        });
        (j, notes, calls)
    }

    #[test]
    fn a_second_run_is_served_from_the_cache() {
        let lib = Lib::new();
        let c = lib.cache("h1");
        let part = lib.part();
        let (cold, notes, calls) = run(Some(&c), &part, 1.0 / 3.0);
        assert_eq!((calls, cold.cached), (1, false));
        assert!(notes.is_empty(), "{notes:?}");
        let (warm, notes, calls) = run(Some(&c), &part, 99.0);
        assert_eq!((calls, warm.cached), (0, true));
        assert!(notes.is_empty());
        // floats come back bit for bit (serde_json float_roundtrip)
        assert_eq!(warm.report, cold.report);
        assert_eq!(warm.hash, cold.hash);
        assert_eq!(
            cold.hash.as_deref(),
            Some(
                blake3::hash(b"# GHz S RI R 50\n1 0.5 0\n")
                    .to_hex()
                    .as_str()
            )
        );
    }

    #[test]
    fn content_rules_and_sidecars_are_in_the_key() {
        let lib = Lib::new();
        let part = lib.part();
        run(Some(&lib.cache("h1")), &part, 1.0);
        // other rules: recomputed
        assert_eq!(run(Some(&lib.cache("h2")), &part, 1.0).2, 1);
        // a sidecar appears: recomputed, then cached
        fs::write(lib.dir.path().join("a.part.yaml"), "band: 1GHz .. 2GHz\n").unwrap();
        assert_eq!(run(Some(&lib.cache("h1")), &part, 1.0).2, 1);
        assert_eq!(run(Some(&lib.cache("h1")), &part, 1.0).2, 0);
        // the file changes: recomputed
        fs::write(&part.path, "# GHz S RI R 50\n1 0.25 0\n").unwrap();
        assert_eq!(run(Some(&lib.cache("h1")), &part, 1.0).2, 1);
        // strict changes verdicts: its own key
        let strict = Cache::new(Cache::default_dir(lib.dir.path()), &rules("h1"), true);
        assert_eq!(run(Some(&strict), &part, 1.0).2, 1);
        // without a cache: always computed, still hashed
        let (j, _, calls) = run(None, &part, 1.0);
        assert_eq!(calls, 1);
        assert!(j.hash.is_some());
    }

    #[test]
    fn damaged_and_foreign_entries_are_recomputed_with_a_warning() {
        let lib = Lib::new();
        let c = lib.cache("h1");
        let part = lib.part();
        run(Some(&c), &part, 2.0);
        let content = hash_file(&part.path).unwrap();
        let entry = c.entry_path(&c.key(&part, &content, None));
        let good = fs::read(&entry).unwrap();

        // truncated
        fs::write(&entry, &good[..good.len() / 2]).unwrap();
        let (j, notes, calls) = run(Some(&c), &part, 2.0);
        assert_eq!((calls, j.cached), (1, false));
        assert!(notes[0].contains("damaged"), "{notes:?}");
        // rewritten whole by the recompute
        assert_eq!(fs::read(&entry).unwrap(), good);

        // another tool version
        let text = String::from_utf8(good.clone()).unwrap();
        let foreign = text.replacen(
            &format!("\"tool_version\":\"{}\"", crate::TOOL_VERSION),
            "\"tool_version\":\"0.0.0-other\"",
            1,
        );
        assert_ne!(foreign, text);
        fs::write(&entry, foreign).unwrap();
        let (_, notes, calls) = run(Some(&c), &part, 2.0);
        assert_eq!(calls, 1);
        assert!(notes[0].contains("0.0.0-other"), "{notes:?}");

        // another format, and an entry copied from another part
        fs::write(&entry, text.replacen(CACHE_FORMAT, "lcgate-cache/0", 1)).unwrap();
        assert!(run(Some(&c), &part, 2.0).1[0].contains("lcgate-cache/0"));
        fs::write(
            &entry,
            text.replacen("\"path\":\"a.s1p\"", "\"path\":\"b.s1p\"", 1),
        )
        .unwrap();
        assert!(run(Some(&c), &part, 2.0).1[0].contains("another part"));
        // empty file
        fs::write(&entry, "").unwrap();
        assert_eq!(run(Some(&c), &part, 2.0).2, 1);
        assert_eq!(run(Some(&c), &part, 2.0).2, 0);
    }

    #[test]
    fn an_unwritable_cache_warns_once_and_still_judges() {
        let lib = Lib::new();
        // the cache folder's place is taken by a file
        let blocked = lib.dir.path().join("blocked");
        fs::write(&blocked, "x").unwrap();
        let c = Cache::new(blocked, &rules("h"), false);
        let part = lib.part();
        let (j, notes, calls) = run(Some(&c), &part, 1.0);
        assert_eq!((calls, j.report.figures["q_peak"]), (1, Some(1.0)));
        assert_eq!(notes.len(), 1);
        assert!(notes[0].contains("cannot be written"));
        assert!(run(Some(&c), &part, 1.0).1.is_empty(), "warned once");
    }

    #[test]
    fn a_small_part_is_read_once_and_hashed_from_memory() {
        let lib = Lib::new();
        let part = lib.part();
        let (h, bytes) = hash_part(&part.path).unwrap();
        assert_eq!(h, hash_file(&part.path).unwrap());
        assert_eq!(bytes.unwrap(), fs::read(&part.path).unwrap());
        let mut handed = None;
        judge(None, &part, &mut Vec::new(), true, |b| {
            handed = b.map(<[u8]>::to_vec);
            (report(&part.rel, 1.0), vec![])
        });
        assert_eq!(handed.unwrap(), fs::read(&part.path).unwrap());
    }

    #[test]
    fn a_file_is_read_whole_whatever_size_was_given() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("grown.s1p");
        let text: Vec<u8> = (0..20_000u32).map(|i| b'0' + (i % 10) as u8).collect();
        fs::write(&path, &text).unwrap();
        // the size as stat gave it, one byte short, and far too small (the file grew)
        for n in [20_000, 19_999, 3, 0] {
            let f = File::open(&path).unwrap();
            assert_eq!(read_sized(&f, n).unwrap(), text, "n = {n}");
        }
        fs::write(&path, b"").unwrap();
        assert!(read_sized(&File::open(&path).unwrap(), 0)
            .unwrap()
            .is_empty());
    }

    #[test]
    fn without_cache_or_baseline_a_part_is_only_read() {
        let lib = Lib::new();
        let part = lib.part();
        let mut handed = None;
        let j = judge(None, &part, &mut Vec::new(), false, |b| {
            handed = b.map(<[u8]>::to_vec);
            (report(&part.rel, 1.0), vec![])
        });
        assert_eq!(j.hash, None);
        assert_eq!(handed.unwrap(), fs::read(&part.path).unwrap());
        // a cache needs the hash for its key, whatever `hash` says
        let c = lib.cache("h");
        let j = judge(Some(&c), &part, &mut Vec::new(), false, |_| {
            (report(&part.rel, 1.0), vec![])
        });
        assert_eq!(
            j.hash.as_deref(),
            Some(hash_file(&part.path).unwrap().to_hex().as_str())
        );
    }

    #[test]
    fn unreadable_parts_are_never_cached() {
        let lib = Lib::new();
        let c = lib.cache("h");
        let mut part = lib.part();
        part.path = lib.dir.path().join("gone.s1p");
        let (j, _, calls) = run(Some(&c), &part, 1.0);
        assert_eq!((calls, j.hash.clone()), (1, None));
        assert!(!c.dir().exists());
    }
}
