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

use rayon::prelude::*;
use serde::{Deserialize, Serialize};

use crate::library::{PartFile, Walk};
use crate::verdict::RulesFileInfo;

/// Format tag of a memo file.
pub const MEMO_FORMAT: &str = "lcgate-run-memo/1";

/// A file whose modification time is this close to (or after) the start of
/// the run that measured it is not trusted by its times (coarse file-system clocks tick
/// every few milliseconds).
pub const RACY_MARGIN: Duration = Duration::from_millis(50);

/// Stats taken together on one thread: enough to outweigh handing the job over.
const STATS_PER_JOB: usize = 256;

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

/// The fields of the memo key, each length first (as [`field`] feeds them) so that no
/// two field lists read alike, gathered in one buffer and hashed once: the key takes
/// several fields for each of thousands of parts on every run, and one large update is
/// far cheaper than many small ones.
struct KeyBytes(Vec<u8>);

impl KeyBytes {
    fn field(&mut self, bytes: &[u8]) {
        self.0
            .extend_from_slice(&(bytes.len() as u64).to_le_bytes());
        self.0.extend_from_slice(bytes);
    }

    /// Feed a stamp taken by [`Stamp::of`].
    fn stamp(&mut self, s: &Stamp) {
        match s {
            Stamp::Absent => self.field(b"absent"),
            Stamp::Taken { bytes, .. } => self.field(bytes),
        }
    }
}

/// The stat stamp of one file: the fields [`stamp`] shows, as raw numbers (formatting
/// them as text cost more than the `stat` itself).
enum Stamp {
    /// the file cannot be read
    Absent,
    Taken {
        #[cfg(unix)]
        bytes: [u8; 7 * 8],
        #[cfg(not(unix))]
        bytes: [u8; 8 + 16],
        /// modified at or after the run's [`Fresh`] time: too fresh to be trusted by
        /// its times
        fresh: bool,
    },
}

impl Stamp {
    fn of(path: &Path, fresh: &Fresh) -> Stamp {
        let Ok(m) = fs::metadata(path) else {
            return Stamp::Absent;
        };
        #[cfg(unix)]
        {
            use std::os::unix::fs::MetadataExt;
            Stamp::unix(
                [
                    m.size(),
                    m.mtime() as u64,
                    m.mtime_nsec() as u64,
                    m.ino(),
                    m.dev(),
                    m.ctime() as u64,
                    m.ctime_nsec() as u64,
                ],
                fresh,
            )
        }
        #[cfg(not(unix))]
        {
            let modified = m.modified().ok();
            let since = modified
                .and_then(|t| t.duration_since(SystemTime::UNIX_EPOCH).ok())
                .map(|d| d.as_nanos())
                .unwrap_or(0);
            let mut bytes = [0u8; 8 + 16];
            bytes[..8].copy_from_slice(&m.len().to_le_bytes());
            bytes[8..].copy_from_slice(&since.to_le_bytes());
            Stamp::Taken {
                bytes,
                fresh: modified.is_none_or(|t| t >= fresh.at),
            }
        }
    }

    /// From size, modification time (s, ns), inode, device and change time (s, ns).
    #[cfg(unix)]
    fn unix(fields: [u64; 7], fresh: &Fresh) -> Stamp {
        let mut bytes = [0u8; 7 * 8];
        for (i, v) in fields.into_iter().enumerate() {
            bytes[i * 8..i * 8 + 8].copy_from_slice(&v.to_le_bytes());
        }
        let modified = (fields[1] as i64, fields[2] as i64);
        Stamp::Taken {
            bytes,
            fresh: modified >= (fresh.secs, fresh.nanos),
        }
    }

    /// The stamps of `parts` (the walk's, in path order, so that a folder's files come
    /// together), in order. On Linux each folder is opened once and its files are
    /// looked up by name in it: a `stat` by full path walks every folder of the path
    /// again, which was a good part of an unchanged run's time in the kernel.
    fn of_parts(parts: &[PartFile], fresh: &Fresh) -> Vec<Stamp> {
        #[cfg(target_os = "linux")]
        {
            use rustix::fs::{open, statat, AtFlags, Mode, OFlags};
            let mut folder: Option<(&Path, Option<rustix::fd::OwnedFd>)> = None;
            parts
                .iter()
                .map(|p| {
                    // a bare file name has no folder to open
                    let parent = p.path.parent().filter(|d| !d.as_os_str().is_empty());
                    let (Some(parent), Some(name)) = (parent, p.path.file_name()) else {
                        return Stamp::of(&p.path, fresh);
                    };
                    if folder.as_ref().is_none_or(|(f, _)| *f != parent) {
                        let flags = OFlags::PATH | OFlags::DIRECTORY | OFlags::CLOEXEC;
                        folder = Some((parent, open(parent, flags, Mode::empty()).ok()));
                    }
                    match &folder {
                        // follows a link to its target, as `fs::metadata` does
                        Some((_, Some(fd))) => match statat(fd, name, AtFlags::empty()) {
                            // the fields' types differ between architectures
                            #[allow(clippy::unnecessary_cast)]
                            Ok(st) => Stamp::unix(
                                [
                                    st.st_size as u64,
                                    st.st_mtime as u64,
                                    st.st_mtime_nsec as u64,
                                    st.st_ino as u64,
                                    st.st_dev as u64,
                                    st.st_ctime as u64,
                                    st.st_ctime_nsec as u64,
                                ],
                                fresh,
                            ),
                            Err(_) => Stamp::Absent,
                        },
                        _ => Stamp::of(&p.path, fresh),
                    }
                })
                .collect()
        }
        #[cfg(not(target_os = "linux"))]
        parts.iter().map(|p| Stamp::of(&p.path, fresh)).collect()
    }

    fn is_fresh(&self) -> bool {
        matches!(self, Stamp::Taken { fresh: true, .. })
    }
}

/// The time from which a file is too fresh to be trusted by its times.
struct Fresh {
    #[cfg(unix)]
    secs: i64,
    #[cfg(unix)]
    nanos: i64,
    #[cfg(not(unix))]
    at: SystemTime,
}

impl Fresh {
    fn new(started: SystemTime) -> Fresh {
        let at = started.checked_sub(RACY_MARGIN).unwrap_or(started);
        #[cfg(unix)]
        {
            // seconds and nanoseconds as `stat` gives them (nanoseconds never
            // negative, also before 1970)
            let (secs, nanos) = match at.duration_since(SystemTime::UNIX_EPOCH) {
                Ok(d) => (d.as_secs() as i64, i64::from(d.subsec_nanos())),
                Err(e) => {
                    let d = e.duration();
                    let (s, n) = (d.as_secs() as i64, i64::from(d.subsec_nanos()));
                    if n == 0 {
                        (-s, 0)
                    } else {
                        (-s - 1, 1_000_000_000 - n)
                    }
                }
            };
            Fresh { secs, nanos }
        }
        #[cfg(not(unix))]
        Fresh { at }
    }
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
        let mut k = KeyBytes(Vec::with_capacity(4096 + 160 * walk.parts.len()));
        k.field(MEMO_FORMAT.as_bytes());
        k.field(crate::TOOL_VERSION.as_bytes());
        k.field(super::cache::build_id().as_bytes());
        k.field(inputs.library.as_os_str().as_encoded_bytes());
        k.field(&(inputs.rules.len() as u64).to_le_bytes());
        for r in inputs.rules {
            k.field(r.path.as_bytes());
            k.field(r.hash.as_bytes());
        }
        let mut trustworthy = true;
        match inputs.baseline {
            None => k.field(b"no baseline"),
            Some(b) => {
                k.field(b.as_os_str().as_encoded_bytes());
                match super::cache::hash_file(b) {
                    Ok(x) => k.field(x.as_bytes()),
                    // the run itself will say why; never memoise it
                    Err(_) => trustworthy = false,
                }
            }
        }
        k.field(format!("{:?}", inputs.shard).as_bytes());
        k.field(&[u8::from(inputs.strict), u8::from(inputs.follow_links)]);
        match inputs.report_dir {
            None => k.field(b"no reports"),
            Some(d) => k.field(d.as_os_str().as_encoded_bytes()),
        }
        k.field(inputs.presentation.as_bytes());
        k.field(&(walk.parts.len() as u64).to_le_bytes());
        let fresh = Fresh::new(started);
        // the stats are most of an unchanged run's time, nearly all of it in the
        // kernel: take them on the run's threads, feed them in the parts' order
        let stamps: Vec<(Stamp, Option<(PathBuf, Stamp)>)> = walk
            .parts
            .par_chunks(STATS_PER_JOB)
            .flat_map_iter(|chunk| {
                let parts = Stamp::of_parts(chunk, &fresh);
                parts.into_iter().zip(chunk).map(|(part, p)| {
                    // a sidecar appearing, changing or going away changes the run
                    let sidecar = p.sidecar().map(|s| {
                        let st = Stamp::of(&s, &fresh);
                        (s, st)
                    });
                    (part, sidecar)
                })
            })
            .collect();
        for (p, (part, sidecar)) in walk.parts.iter().zip(&stamps) {
            k.field(p.rel.as_bytes());
            k.field(p.path.as_os_str().as_encoded_bytes());
            k.field(p.error.as_deref().unwrap_or("").as_bytes());
            k.stamp(part);
            trustworthy &= !part.is_fresh();
            match sidecar {
                Some((s, st)) => {
                    k.field(s.as_os_str().as_encoded_bytes());
                    k.stamp(st);
                    trustworthy &= !st.is_fresh();
                }
                None => k.field(b"no sidecar"),
            }
        }
        k.field(&(walk.notes.len() as u64).to_le_bytes());
        for n in &walk.notes {
            k.field(n.as_bytes());
        }
        let key = blake3::hash(&k.0).to_hex().to_string();
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::library::Sidecar;

    fn bytes(s: &Stamp) -> Option<Vec<u8>> {
        match s {
            Stamp::Absent => None,
            Stamp::Taken { bytes, .. } => Some(bytes.to_vec()),
        }
    }

    /// The stamps taken folder by folder are those of a `stat` by full path, a missing
    /// file included.
    #[test]
    fn stamps_by_folder_equal_stamps_by_path() {
        let d = tempfile::tempdir().unwrap();
        let mut parts = Vec::new();
        for (folder, name) in [
            ("a", "x.s2p"),
            ("a", "y.s2p"),
            ("b", "x.s2p"),
            ("b", "gone.s2p"),
        ] {
            let dir = d.path().join(folder);
            std::fs::create_dir_all(&dir).unwrap();
            let path = dir.join(name);
            if name != "gone.s2p" {
                std::fs::write(&path, name.repeat(3)).unwrap();
            }
            parts.push(PartFile {
                rel: format!("{folder}/{name}"),
                path,
                error: None,
                sidecar: Sidecar::Absent,
            });
        }
        let fresh = Fresh::new(SystemTime::now());
        let by_folder = Stamp::of_parts(&parts, &fresh);
        assert_eq!(by_folder.len(), parts.len());
        for (p, s) in parts.iter().zip(&by_folder) {
            let by_path = Stamp::of(&p.path, &fresh);
            assert_eq!(bytes(s), bytes(&by_path), "{}", p.rel);
            assert_eq!(s.is_fresh(), by_path.is_fresh(), "{}", p.rel);
        }
        assert!(
            bytes(&by_folder[3]).is_none(),
            "a missing file has no stamp"
        );
    }
}
