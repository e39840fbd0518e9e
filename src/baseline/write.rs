//! Crash-safe replacement of a file for the baseline and the cache, on top of
//! [`crate::report::atomic_write`] (the project's one temp-file + fsync + rename
//! implementation): the new content is produced in full first, so a writer that fails
//! midway never touches the file, and the replacement itself is atomic.

use std::io::{self, Write};
use std::path::Path;

/// Replace `path` with what `fill` writes. If `fill` fails, `path` is not touched; if
/// the replacement fails, `path` is left as it was.
pub fn atomic_write_with(
    path: &Path,
    fill: impl FnOnce(&mut dyn Write) -> io::Result<()>,
) -> io::Result<()> {
    let mut bytes = Vec::new();
    fill(&mut bytes)?;
    crate::report::atomic_write(path, &bytes)
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::fs;

    #[test]
    fn replaces_the_file_whole() {
        let d = tempfile::tempdir().unwrap();
        let p = d.path().join("x.json");
        fs::write(&p, "old").unwrap();
        atomic_write_with(&p, |w| w.write_all(b"new content")).unwrap();
        assert_eq!(fs::read_to_string(&p).unwrap(), "new content");
        assert_eq!(fs::read_dir(d.path()).unwrap().count(), 1, "no temp left");
    }

    #[test]
    fn a_failure_midway_leaves_the_old_file_and_no_temp() {
        let d = tempfile::tempdir().unwrap();
        let p = d.path().join("x.json");
        fs::write(&p, "old").unwrap();
        let err = atomic_write_with(&p, |w| {
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
        assert!(atomic_write_with(&p, |w| w.write_all(b"x")).is_err());
    }
}
