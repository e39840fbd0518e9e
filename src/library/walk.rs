//! Walking a library tree: which files are parts, what they are called, and what
//! becomes of the entries that cannot be parts (loops, unreadable folders, FIFOs).

use std::ffi::OsStr;
use std::path::{Component, Path, PathBuf};

/// Name of the cache folder inside a library; never walked.
pub const CACHE_DIR: &str = ".lcgate-cache";

/// How to walk.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct WalkOptions {
    /// follow symbolic links (loops are detected and reported per entry)
    pub follow_links: bool,
}

/// One part found by the walk.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct PartFile {
    /// path relative to the library root, `/`-separated, lossy UTF-8: the part's name
    pub rel: String,
    /// the file on disk
    pub path: PathBuf,
    /// set when the walk itself could not reach the entry (a link loop, an
    /// unreadable folder); such a part is reported `unreadable` with this message
    pub error: Option<String>,
}

/// What the walk found.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct Walk {
    /// parts, sorted by `rel` (byte order), then by the raw path for lossy duplicates
    pub parts: Vec<PartFile>,
    /// entries skipped with a reason worth telling the user (not-followed links,
    /// FIFOs and devices with a Touchstone name), sorted
    pub notes: Vec<String>,
}

/// The walk could not start.
#[derive(Debug, thiserror::Error)]
pub enum WalkError {
    /// the library root does not exist or cannot be read
    #[error("library `{path}` cannot be read: {source}")]
    Root {
        /// the root as given
        path: String,
        /// why
        #[source]
        source: std::io::Error,
    },
    /// the root is neither a folder nor a Touchstone file
    #[error("library `{0}` is neither a folder nor a Touchstone file (*.sNp, *.ts)")]
    NotALibrary(String),
}

/// True for a Touchstone file name: `*.sNp` for any port count N ≥ 1, or `*.ts`,
/// extension compared without regard to case (`.S2P` is common on some systems).
pub fn is_touchstone_name(name: &OsStr) -> bool {
    let name = name.to_string_lossy();
    let Some(dot) = name.rfind('.') else {
        return false;
    };
    if dot == 0 {
        // `.s2p` alone is a hidden file with no stem, not a part
        return false;
    }
    let ext = name[dot + 1..].to_ascii_lowercase();
    if ext == "ts" {
        return true;
    }
    let Some(mid) = ext.strip_prefix('s').and_then(|e| e.strip_suffix('p')) else {
        return false;
    };
    !mid.is_empty() && mid.bytes().all(|b| b.is_ascii_digit()) && mid.bytes().any(|b| b != b'0')
}

/// The port count a `*.sNp` name announces (None for `*.ts` and other names).
pub fn ports_from_name(name: &str) -> Option<usize> {
    let dot = name.rfind('.')?;
    let ext = name[dot + 1..].to_ascii_lowercase();
    ext.strip_prefix('s')?.strip_suffix('p')?.parse().ok()
}

/// A path relative to `root`, `/`-separated, each component converted lossily to
/// UTF-8 (so a non-UTF-8 file name is shown with U+FFFD, never a panic).
pub fn rel_name(root: &Path, path: &Path) -> String {
    let rel = path.strip_prefix(root).unwrap_or(path);
    let mut out = String::new();
    for c in rel.components() {
        let s = match c {
            Component::Normal(s) => s.to_string_lossy(),
            Component::ParentDir => "..".into(),
            Component::CurDir => continue,
            Component::RootDir | Component::Prefix(_) => continue,
        };
        if !out.is_empty() {
            out.push('/');
        }
        out.push_str(&s);
    }
    if out.is_empty() {
        // the root itself is the part (a single file given as the library)
        out = path
            .file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_else(|| path.to_string_lossy().into_owned());
    }
    out
}

fn hidden(name: &OsStr) -> bool {
    name.as_encoded_bytes().first() == Some(&b'.')
}

/// Walk `root` and list its parts.
///
/// Rules: every regular file named `*.sNp` / `*.ts` (see [`is_touchstone_name`]) is a
/// part; hidden folders and files (name starting with `.`) and the cache folder are
/// skipped; links are not followed unless asked, and a link loop becomes an
/// `unreadable` entry; a folder that cannot be read becomes an `unreadable` entry
/// named after the folder, so the run fails rather than silently losing parts;
/// FIFOs, sockets and devices with a Touchstone name are skipped with a note (opening
/// a FIFO would block the run). A single Touchstone file may be given as the root.
pub fn walk(root: &Path, opts: &WalkOptions) -> Result<Walk, WalkError> {
    let shown_root = root.to_string_lossy().into_owned();
    let meta = std::fs::metadata(root).map_err(|source| WalkError::Root {
        path: shown_root.clone(),
        source,
    })?;
    let mut out = Walk::default();
    if meta.is_file() {
        if !root.file_name().is_some_and(is_touchstone_name) {
            return Err(WalkError::NotALibrary(shown_root));
        }
        out.parts.push(PartFile {
            rel: rel_name(root, root),
            path: root.to_path_buf(),
            error: None,
        });
        return Ok(out);
    }
    if !meta.is_dir() {
        return Err(WalkError::NotALibrary(shown_root));
    }

    let walker = walkdir::WalkDir::new(root)
        .follow_links(opts.follow_links)
        .sort_by_file_name()
        .into_iter()
        .filter_entry(|e| e.depth() == 0 || !(hidden(e.file_name()) || e.file_name() == CACHE_DIR));
    for item in walker {
        let entry = match item {
            Ok(e) => e,
            Err(err) => {
                let path = err
                    .path()
                    .map(Path::to_path_buf)
                    .unwrap_or_else(|| root.to_path_buf());
                let rel = rel_name(root, &path);
                let message = if let Some(anc) = err.loop_ancestor() {
                    format!(
                        "{rel}: link loop: this link leads back to `{}`",
                        rel_name(root, anc)
                    )
                } else if let Some(io) = err.io_error() {
                    format!("{rel}: cannot be read: {io}")
                } else {
                    format!("{rel}: {err}")
                };
                out.parts.push(PartFile {
                    rel,
                    path,
                    error: Some(message),
                });
                continue;
            }
        };
        let ft = entry.file_type();
        if ft.is_dir() {
            continue;
        }
        if !is_touchstone_name(entry.file_name()) {
            continue;
        }
        let rel = rel_name(root, entry.path());
        if ft.is_file() {
            out.parts.push(PartFile {
                rel,
                path: entry.path().to_path_buf(),
                error: None,
            });
        } else if ft.is_symlink() {
            // only reached when links are not followed (or a link is dangling)
            let note = if opts.follow_links {
                format!("{rel}: skipped: the link leads nowhere")
            } else {
                format!("{rel}: skipped: symbolic link not followed (give --follow-links)")
            };
            out.notes.push(note);
        } else {
            out.notes.push(format!(
                "{rel}: skipped: not a regular file (a FIFO, socket or device)"
            ));
        }
    }
    out.parts
        .sort_by(|a, b| a.rel.cmp(&b.rel).then_with(|| a.path.cmp(&b.path)));
    out.notes.sort();
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::fs;

    fn touch(p: &Path) {
        if let Some(d) = p.parent() {
            fs::create_dir_all(d).unwrap();
        }
        fs::write(p, "# GHz S RI R 50\n1 0 0\n").unwrap();
    }

    #[test]
    fn names_of_touchstone_files() {
        for yes in [
            "a.s1p", "a.S2P", "x.s4p", "big.s12p", "b.ts", "c.TS", "d.s2P",
        ] {
            assert!(is_touchstone_name(OsStr::new(yes)), "{yes}");
        }
        for no in [
            "a.sp",
            "a.s0p",
            "a.s2",
            "a.txt",
            ".s2p",
            "a.s2p.bak",
            "a.sxp",
            "ts",
        ] {
            assert!(!is_touchstone_name(OsStr::new(no)), "{no}");
        }
        assert_eq!(ports_from_name("coil.S3P"), Some(3));
        assert_eq!(ports_from_name("coil.ts"), None);
    }

    #[test]
    fn walk_lists_sorted_relative_parts_and_skips_hidden_and_cache() {
        let d = tempfile::tempdir().unwrap();
        let r = d.path();
        touch(&r.join("b/z.s2p"));
        touch(&r.join("a.s1p"));
        touch(&r.join("b/A.S4P"));
        touch(&r.join("c/d/e.ts"));
        touch(&r.join(".hidden/x.s2p"));
        touch(&r.join(".lcgate-cache/y.s2p"));
        touch(&r.join("b/.x.s2p"));
        touch(&r.join("notes.txt"));
        let w = walk(r, &WalkOptions::default()).unwrap();
        let names: Vec<_> = w.parts.iter().map(|p| p.rel.as_str()).collect();
        assert_eq!(names, ["a.s1p", "b/A.S4P", "b/z.s2p", "c/d/e.ts"]);
        assert!(w.parts.iter().all(|p| p.error.is_none()));
    }

    #[test]
    fn a_single_file_is_a_library_of_one() {
        let d = tempfile::tempdir().unwrap();
        let f = d.path().join("one.s2p");
        touch(&f);
        let w = walk(&f, &WalkOptions::default()).unwrap();
        assert_eq!(w.parts.len(), 1);
        assert_eq!(w.parts[0].rel, "one.s2p");
        let t = d.path().join("x.txt");
        fs::write(&t, "x").unwrap();
        assert!(matches!(
            walk(&t, &WalkOptions::default()),
            Err(WalkError::NotALibrary(_))
        ));
    }

    #[test]
    fn a_missing_root_is_an_error() {
        let d = tempfile::tempdir().unwrap();
        let e = walk(&d.path().join("nope"), &WalkOptions::default()).unwrap_err();
        assert!(e.to_string().contains("nope"), "{e}");
    }

    #[cfg(unix)]
    #[test]
    fn links_are_noted_unless_followed_and_loops_become_entries() {
        use std::os::unix::fs::symlink;
        let d = tempfile::tempdir().unwrap();
        let r = d.path();
        touch(&r.join("real/a.s2p"));
        symlink(r.join("real/a.s2p"), r.join("link.s2p")).unwrap();
        symlink(r.join("real"), r.join("real/back")).unwrap();
        let w = walk(r, &WalkOptions::default()).unwrap();
        let names: Vec<_> = w.parts.iter().map(|p| p.rel.as_str()).collect();
        assert_eq!(names, ["real/a.s2p"]);
        assert_eq!(w.notes.len(), 1, "{:?}", w.notes);
        assert!(w.notes[0].starts_with("link.s2p: skipped"));

        let w = walk(r, &WalkOptions { follow_links: true }).unwrap();
        let names: Vec<_> = w.parts.iter().map(|p| p.rel.as_str()).collect();
        assert_eq!(names, ["link.s2p", "real/a.s2p", "real/back"]);
        let looped = &w.parts[2];
        assert!(
            looped.error.as_deref().unwrap().contains("link loop"),
            "{looped:?}"
        );
    }

    #[cfg(unix)]
    #[test]
    fn fifos_are_skipped_with_a_note() {
        let d = tempfile::tempdir().unwrap();
        let fifo = d.path().join("pipe.s2p");
        let ok = std::process::Command::new("mkfifo").arg(&fifo).status();
        if !ok.is_ok_and(|s| s.success()) {
            // no mkfifo on this machine: nothing to test
            return;
        }
        let w = walk(d.path(), &WalkOptions::default()).unwrap();
        assert!(w.parts.is_empty());
        assert!(w.notes[0].contains("not a regular file"), "{:?}", w.notes);
    }

    #[cfg(target_os = "linux")]
    #[test]
    fn non_utf8_names_are_shown_lossily() {
        use std::os::unix::ffi::OsStrExt;
        let d = tempfile::tempdir().unwrap();
        let name = OsStr::from_bytes(b"coil_\xff.s2p");
        let p = d.path().join(name);
        if fs::write(&p, "x").is_err() {
            // the file system refuses such names: nothing to test
            return;
        }
        let w = walk(d.path(), &WalkOptions::default()).unwrap();
        assert_eq!(w.parts[0].rel, "coil_\u{fffd}.s2p");
    }
}
