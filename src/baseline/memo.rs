//! The run memo: a whole `check` run remembered, so that rerunning it on an unchanged
//! library repeats the verdict without reading a single part.
//!
//! The per-part [cache](super::cache) makes a warm run skip every figure and fit, but it
//! still hashes every file and reads every entry. The nightly gate most often runs on a
//! library where nothing at all changed; for that case the memo keys the *whole run*:
//! the tool build, every option that shapes the output, each rules file's hash, the
//! baseline's bytes, and the walk itself — each part's (and sidecar's) path, size,
//! modification and change times, inode and device, as `make` and `git` judge files
//! unchanged. A hit prints the stored output and returns the stored exit status.
//!
//! Safe by construction:
//! - a part whose modification time is not clearly older than the run that measured
//!   it (within [`RACY_MARGIN`]: a second write in the same clock tick would not move
//!   the time) keeps the run from being memoised at all, so the next run recomputes;
//! - reports written by the run are part of the memo by their own size, times and
//!   inode; a report touched, removed or rewritten since makes the memo miss;
//! - the memo file carries its format, tool version and key, and anything unreadable
//!   is a miss, never an error.

use std::fs;
use std::path::{Path, PathBuf};
use std::time::{Duration, SystemTime};

use serde::{Deserialize, Serialize};

use crate::library::{self, Walk};
use crate::verdict::RulesFileInfo;

/// Format tag of a memo file.
pub const MEMO_FORMAT: &str = "lcgate-run-memo/1";

/// A file whose modification time is this close to (or after) the start of
/// the run that measured it is not trusted by its times (coarse file-system clocks tick
/// every few milliseconds).
pub const RACY_MARGIN: Duration = Duration::from_millis(50);

/// Everything that shapes a check run's output apart from the parts' contents.
#[derive(Debug, Clone)]
pub struct RunInputs<'a> {
    /// the library as given
    pub library: &'a Path,
    /// the rules files loaded (path as given and content hash)
    pub rules: &'a [RulesFileInfo],
    /// `--baseline` as given
    pub baseline: Option<&'a Path>,
    /// `--shard K/N`
    pub shard: Option<[usize; 2]>,
    /// `--strict`
    pub strict: bool,
    /// `--follow-links`
    pub follow_links: bool,
    /// `--report DIR` as given
    pub report_dir: Option<&'a Path>,
    /// anything else the caller's output depends on (colour, `--quiet`, …)
    pub presentation: &'a str,
}

/// The stored result of a run.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Remembered {
    /// what the run printed on stdout
    pub stdout: String,
    /// the notes it printed on stderr
    pub notes: Vec<String>,
    /// its exit status
    pub exit: u8,
    /// when it started (RFC 3339, UTC)
    pub started: String,
}

#[derive(Serialize, Deserialize)]
struct MemoFile {
    format: String,
    tool_version: String,
    key: String,
    /// stat stamps of the reports the run wrote, by file name
    reports: Vec<(String, String)>,
    run: Remembered,
}

/// The memo of one set of run inputs: its key and where it lives.
#[derive(Debug, Clone)]
pub struct RunMemo {
    file: PathBuf,
    key: String,
    /// false when some part is too fresh to be trusted by its times
    trustworthy: bool,
    /// `--report DIR`
    reports_dir: Option<PathBuf>,
}

/// A stat stamp: size, modification and change times (ns), inode and device, and the
/// modification time alone (what a content write moves). Two equal stamps mean the
/// file was not rewritten (short of deliberate forgery).
fn stamp(path: &Path) -> Option<(String, SystemTime)> {
    let m = fs::metadata(path).ok()?;
    let modified = m.modified().ok()?;
    let since = |t: SystemTime| {
        t.duration_since(SystemTime::UNIX_EPOCH)
            .map(|d| d.as_nanos())
            .unwrap_or(0)
    };
    #[cfg(unix)]
    let extra = {
        use std::os::unix::fs::MetadataExt;
        format!("{}:{}:{}.{}", m.ino(), m.dev(), m.ctime(), m.ctime_nsec())
    };
    #[cfg(not(unix))]
    let extra = String::new();
    Some((format!("{}:{}:{extra}", m.len(), since(modified)), modified))
}

fn field(h: &mut blake3::Hasher, bytes: &[u8]) {
    h.update(&(bytes.len() as u64).to_le_bytes());
    h.update(bytes);
}

impl RunMemo {
    /// The memo of a run with `inputs` over the walked parts, stored in `cache_dir`.
    /// `started` is when the measuring run began (parts changed after
    /// `started − RACY_MARGIN` make the memo untrustworthy).
    pub fn new(
        cache_dir: &Path,
        inputs: &RunInputs<'_>,
        walk: &Walk,
        started: SystemTime,
    ) -> RunMemo {
        let mut h = blake3::Hasher::new();
        field(&mut h, MEMO_FORMAT.as_bytes());
        field(&mut h, crate::TOOL_VERSION.as_bytes());
        field(&mut h, super::cache::build_id().as_bytes());
        field(&mut h, inputs.library.to_string_lossy().as_bytes());
        field(&mut h, &(inputs.rules.len() as u64).to_le_bytes());
        for r in inputs.rules {
            field(&mut h, r.path.as_bytes());
            field(&mut h, r.hash.as_bytes());
        }
        let mut trustworthy = true;
        match inputs.baseline {
            None => field(&mut h, b"no baseline"),
            Some(b) => {
                field(&mut h, b.to_string_lossy().as_bytes());
                match super::cache::hash_file(b) {
                    Ok(x) => field(&mut h, x.as_bytes()),
                    // the run itself will say why; never memoise it
                    Err(_) => trustworthy = false,
                }
            }
        }
        field(&mut h, format!("{:?}", inputs.shard).as_bytes());
        field(
            &mut h,
            &[u8::from(inputs.strict), u8::from(inputs.follow_links)],
        );
        match inputs.report_dir {
            None => field(&mut h, b"no reports"),
            Some(d) => field(&mut h, d.to_string_lossy().as_bytes()),
        }
        field(&mut h, inputs.presentation.as_bytes());
        field(&mut h, &(walk.parts.len() as u64).to_le_bytes());
        let fresh = started.checked_sub(RACY_MARGIN).unwrap_or(started);
        let mut add = |h: &mut blake3::Hasher, path: &Path| match stamp(path) {
            Some((s, modified)) => {
                if modified >= fresh {
                    trustworthy = false;
                }
                field(h, s.as_bytes());
            }
            None => field(h, b"absent"),
        };
        for p in &walk.parts {
            field(&mut h, p.rel.as_bytes());
            field(&mut h, p.path.to_string_lossy().as_bytes());
            field(&mut h, p.error.as_deref().unwrap_or("").as_bytes());
            add(&mut h, &p.path);
            // a sidecar appearing, changing or going away changes the run
            match library::sidecar_path(&p.path) {
                Some(s) => {
                    field(&mut h, s.to_string_lossy().as_bytes());
                    add(&mut h, &s);
                }
                None => field(&mut h, b"no sidecar"),
            }
        }
        for n in &walk.notes {
            field(&mut h, n.as_bytes());
        }
        let key = h.finalize().to_hex().to_string();
        RunMemo {
            file: cache_dir.join("runs").join(format!("{}.json", &key[..32])),
            key,
            trustworthy,
            reports_dir: inputs.report_dir.map(Path::to_path_buf),
        }
    }

    /// The remembered run, if there is one for exactly these inputs and the reports it
    /// wrote are still as it left them.
    pub fn lookup(&self) -> Option<Remembered> {
        if !self.trustworthy {
            return None;
        }
        let bytes = fs::read(&self.file).ok()?;
        let m: MemoFile = serde_json::from_slice(&bytes).ok()?;
        if m.format != MEMO_FORMAT || m.tool_version != crate::TOOL_VERSION || m.key != self.key {
            return None;
        }
        if self.reports_dir.is_some() == m.reports.is_empty() {
            return None;
        }
        for (name, want) in &m.reports {
            let (now, _) = stamp(&self.reports_dir.as_deref()?.join(name))?;
            if &now != want {
                return None;
            }
        }
        Some(m.run)
    }

    /// Remember a finished run; with `--report`, the reports it wrote are `report_files`.
    /// Nothing is stored when the inputs are not trustworthy. Errors are the caller's
    /// to ignore: a memo that cannot be written only costs the next run its shortcut.
    pub fn store(&self, run: &Remembered, report_files: &[&str]) -> std::io::Result<()> {
        if !self.trustworthy {
            return Ok(());
        }
        let mut stamps = Vec::new();
        if let Some(dir) = &self.reports_dir {
            for name in report_files {
                match stamp(&dir.join(name)) {
                    Some((s, _)) => stamps.push((name.to_string(), s)),
                    None => return Ok(()),
                }
            }
        }
        let m = MemoFile {
            format: MEMO_FORMAT.to_string(),
            tool_version: crate::TOOL_VERSION.to_string(),
            key: self.key.clone(),
            reports: stamps,
            run: run.clone(),
        };
        if let Some(d) = self.file.parent() {
            fs::create_dir_all(d)?;
        }
        super::write::atomic_write_with(&self.file, |w| {
            serde_json::to_writer(w, &m).map_err(std::io::Error::other)
        })
    }
}
