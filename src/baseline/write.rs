//! Crash-safe replacement of a file: the new content goes to a temporary file in the
//! same folder, which is renamed over the old one only once it is complete. A rename
//! within one file system is atomic, so a reader (or the next run after a crash) sees
//! either the old file or the new one, never a mix.

use std::fs::{self, File};
use std::io::{self, BufWriter, Write};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};

/// Temporary names must differ between threads and processes writing the same folder.
static COUNTER: AtomicU64 = AtomicU64::new(0);

fn temp_path(path: &Path) -> PathBuf {
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default();
    let n = COUNTER.fetch_add(1, Ordering::Relaxed);
    path.with_file_name(format!(".{name}.tmp-{}-{n}", std::process::id()))
}

/// Replace `path` with what `fill` writes. If `fill` or any later step fails, the
/// temporary file is removed and `path` is left as it was.
///
/// `durable` also flushes the data and the folder entry to the disk (fsync) before and
/// after the rename, so that the new file survives a power cut; files that are
/// checked on every read and can be rebuilt (cache entries) skip that cost.
pub fn atomic_write_with(
    path: &Path,
    durable: bool,
    fill: impl FnOnce(&mut dyn Write) -> io::Result<()>,
) -> io::Result<()> {
    let tmp = temp_path(path);
    let result = (|| {
        let file = File::create(&tmp)?;
        let mut w = BufWriter::new(file);
        fill(&mut w)?;
        let file = w.into_inner().map_err(|e| e.into_error())?;
        if durable {
            file.sync_all()?;
        }
        drop(file);
        fs::rename(&tmp, path)?;
        if durable {
            sync_parent(path);
        }
        Ok(())
    })();
    if result.is_err() {
        let _ = fs::remove_file(&tmp);
    }
    result
}

/// Flush the folder entry of a renamed file. Best effort: not every platform lets a
/// folder be opened for this (and the rename itself has already happened).
fn sync_parent(path: &Path) {
    let dir = match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d,
        _ => Path::new("."),
    };
    if let Ok(d) = File::open(dir) {
        let _ = d.sync_all();
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn replaces_the_file_whole() {
        let d = tempfile::tempdir().unwrap();
        let p = d.path().join("x.json");
        fs::write(&p, "old").unwrap();
        atomic_write_with(&p, true, |w| w.write_all(b"new content")).unwrap();
        assert_eq!(fs::read_to_string(&p).unwrap(), "new content");
        assert_eq!(fs::read_dir(d.path()).unwrap().count(), 1, "no temp left");
    }

    #[test]
    fn a_failure_midway_leaves_the_old_file_and_no_temp() {
        let d = tempfile::tempdir().unwrap();
        let p = d.path().join("x.json");
        fs::write(&p, "old").unwrap();
        let err = atomic_write_with(&p, true, |w| {
            w.write_all(b"half of the new")?;
            Err(io::Error::other("disk on fire"))
        })
        .unwrap_err();
        assert_eq!(err.to_string(), "disk on fire");
        assert_eq!(fs::read_to_string(&p).unwrap(), "old");
        assert_eq!(fs::read_dir(d.path()).unwrap().count(), 1, "no temp left");
    }

    #[test]
    fn a_missing_folder_is_an_error_not_a_panic() {
        let d = tempfile::tempdir().unwrap();
        let p = d.path().join("no/such/x.json");
        assert!(atomic_write_with(&p, false, |w| w.write_all(b"x")).is_err());
    }
}
