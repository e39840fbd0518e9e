//! Walking a library tree: which files are parts, what they are called, and what
//! becomes of the entries that cannot be parts (loops, unreadable folders, FIFOs).

use std::collections::HashSet;
use std::ffi::OsStr;
use std::path::{Component, Path, PathBuf};

use super::SIDECAR_SUFFIX;

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
    /// its `*.part.yaml`, as far as the walk's folder listings tell
    pub sidecar: Sidecar,
}

/// Where a part's sidecar file is, as far as the walk knows.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub enum Sidecar {
    /// not known (a single-file library, a part the walk could not reach, a part
    /// made by hand): asked of the file system ([`super::sidecar_path`])
    #[default]
    Ask,
    /// the part's folder was listed and holds none
    Absent,
    /// this file
    At(PathBuf),
}

impl PartFile {
    /// The part's sidecar file: the same answer as [`super::sidecar_path`], from the
    /// walk's listings where it has them (two `stat` calls a part saved).
    pub fn sidecar(&self) -> Option<PathBuf> {
        match &self.sidecar {
            Sidecar::Ask => super::sidecar_path(&self.path),
            Sidecar::Absent => None,
            Sidecar::At(p) => Some(p.clone()),
        }
    }
}

/// What the walk found.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct Walk {
    /// parts, sorted by `rel` (byte order), then by the raw path for lossy duplicates
    pub parts: Vec<PartFile>,
    /// entries skipped with a reason worth telling the user (not-followed links,
    /// FIFOs and devices with a Touchstone name), sorted
    pub notes: Vec<String>,
    /// every `*.part.yaml` that is (or leads to) a regular file in the folders the walk
    /// listed, as walked; None when no folder was listed (a single file as the root)
    sidecars: Option<HashSet<PathBuf>>,
}

impl Walk {
    /// The sidecar of `part`, the same answer as [`super::sidecar_path`] gives, taken
    /// from the folder listings the walk already read instead of two `stat` calls per
    /// part (the run memo asks this of every part on every run). A part the walk
    /// could not reach (its `error` is set) and a single-file library are asked of the
    /// file system.
    pub fn sidecar_of(&self, part: &PartFile) -> Option<PathBuf> {
        let listed = match &self.sidecars {
            Some(set) if part.error.is_none() => set,
            _ => return super::sidecar_path(&part.path),
        };
        if listed.is_empty() {
            // the part's folder was listed, and no folder held a sidecar
            return None;
        }
        // the candidates of `sidecar_path`, built the same way (for a name that is not
        // UTF-8 it looks for the lossy name: ask the file system that same question)
        let Some(name) = part.path.file_name().and_then(OsStr::to_str) else {
            return super::sidecar_path(&part.path);
        };
        let mut file = String::with_capacity(name.len() + SIDECAR_SUFFIX.len());
        file.push_str(name);
        file.push_str(SIDECAR_SUFFIX);
        let mut candidate = part.path.with_file_name(&file);
        if listed.contains(&candidate) {
            return Some(candidate);
        }
        let dot = name.rfind('.').filter(|&d| d > 0)?;
        file.truncate(dot);
        file.push_str(SIDECAR_SUFFIX);
        candidate.set_file_name(&file);
        listed.contains(&candidate).then_some(candidate)
    }
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
    // on the bytes, without a lossy copy: the extension must be ASCII to match, and a
    // `.` byte is a `.` in the lossy name too
    let name = name.as_encoded_bytes();
    let Some(dot) = name.iter().rposition(|&b| b == b'.') else {
        return false;
    };
    if dot == 0 {
        // `.s2p` alone is a hidden file with no stem, not a part
        return false;
    }
    let ext = &name[dot + 1..];
    if ext.eq_ignore_ascii_case(b"ts") {
        return true;
    }
    let [s, mid @ .., p] = ext else {
        return false;
    };
    s.eq_ignore_ascii_case(&b's')
        && p.eq_ignore_ascii_case(&b'p')
        && !mid.is_empty()
        && mid.iter().all(u8::is_ascii_digit)
        && mid.iter().any(|&b| b != b'0')
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
            sidecar: Sidecar::Ask,
        });
        return Ok(out);
    }
    if !meta.is_dir() {
        return Err(WalkError::NotALibrary(shown_root));
    }

    // not sorted by walkdir: the parts and notes are sorted below, and which entry of a
    // link loop is reported does not depend on the order (only ancestors make loops)
    let mut sidecars = HashSet::new();
    let walker = walkdir::WalkDir::new(root)
        .follow_links(opts.follow_links)
        .into_iter()
        .filter_entry(|e| {
            // `file_name` parses the path: once per entry
            e.depth() == 0 || {
                let name = e.file_name();
                !(hidden(name) || name == CACHE_DIR)
            }
        });
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
                    sidecar: Sidecar::Ask,
                });
                continue;
            }
        };
        let ft = entry.file_type();
        if ft.is_dir() {
            continue;
        }
        let name = entry.file_name();
        if name.as_encoded_bytes().ends_with(SIDECAR_SUFFIX.as_bytes()) {
            // a link counts as its target, as `Path::is_file` has it
            if ft.is_file() || (ft.is_symlink() && entry.path().is_file()) {
                sidecars.insert(entry.into_path());
            }
            continue;
        }
        if !is_touchstone_name(name) {
            continue;
        }
        let rel = walked_rel(root, entry.path());
        if ft.is_file() {
            out.parts.push(PartFile {
                rel,
                path: entry.into_path(),
                error: None,
                // filled in from the listings once the walk is done
                sidecar: Sidecar::Ask,
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
    // no two parts have the same path, so an unstable sort gives the one order
    out.parts
        .sort_unstable_by(|a, b| a.rel.cmp(&b.rel).then_with(|| a.path.cmp(&b.path)));
    out.notes.sort();
    out.sidecars = Some(sidecars);
    let found: Vec<Sidecar> = out
        .parts
        .iter()
        .map(|p| match (&p.error, out.sidecar_of(p)) {
            (Some(_), _) => Sidecar::Ask,
            (None, Some(s)) => Sidecar::At(s),
            (None, None) => Sidecar::Absent,
        })
        .collect();
    for (p, s) in out.parts.iter_mut().zip(found) {
        p.sidecar = s;
    }
    Ok(out)
}

/// [`rel_name`] of a path the walk made by joining file names onto `root`: the bytes
/// after the root's, without the separators between, converted lossily. The same string
/// (a name holds no `/`, and a lossy conversion never merges bytes across a `/`), made
/// without parsing the path into components; any other path goes through `rel_name`.
fn walked_rel(root: &Path, path: &Path) -> String {
    #[cfg(unix)]
    {
        let r = root.as_os_str().as_encoded_bytes();
        let p = path.as_os_str().as_encoded_bytes();
        if let Some(rest) = p.strip_prefix(r) {
            let joined = r.last() == Some(&b'/') || rest.first() == Some(&b'/');
            let mut rest = rest;
            while let [b'/', tail @ ..] = rest {
                rest = tail;
            }
            let plain = rest
                .split(|&b| b == b'/')
                .all(|c| !c.is_empty() && c != b"." && c != b"..");
            if joined && plain {
                return String::from_utf8_lossy(rest).into_owned();
            }
        }
    }
    rel_name(root, path)
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

    /// `Walk::sidecar_of` answers from the walk's folder listings what
    /// `sidecar_path` asks the file system: the same answer for every part.
    #[test]
    fn sidecars_from_the_listings_are_those_on_disk() {
        let d = tempfile::tempdir().unwrap();
        let r = d.path();
        let same = |opts: &WalkOptions, want: usize| {
            let w = walk(r, opts).unwrap();
            let mut found = 0;
            for p in &w.parts {
                let fast = w.sidecar_of(p);
                assert_eq!(fast, crate::library::sidecar_path(&p.path), "{}", p.rel);
                assert_eq!(p.sidecar(), fast, "{}", p.rel);
                found += usize::from(fast.is_some());
            }
            assert_eq!(found, want);
        };
        touch(&r.join("a/stem.s2p"));
        touch(&r.join("a/full.s2p"));
        touch(&r.join("a/both.s2p"));
        touch(&r.join("a/none.s2p"));
        touch(&r.join("b/c/deep.s4p"));
        touch(&r.join("b/dir.s2p"));
        touch(&r.join("noext.ts"));
        same(&WalkOptions::default(), 0);
        fs::write(r.join("a/stem.part.yaml"), "x").unwrap();
        fs::write(r.join("a/full.s2p.part.yaml"), "x").unwrap();
        fs::write(r.join("a/both.part.yaml"), "x").unwrap();
        fs::write(r.join("a/both.s2p.part.yaml"), "x").unwrap();
        fs::write(r.join("b/c/deep.part.yaml"), "x").unwrap();
        fs::write(r.join("b/c/other.part.yaml"), "x").unwrap();
        // a folder with a sidecar's name is no sidecar
        fs::create_dir_all(r.join("b/dir.part.yaml")).unwrap();
        same(&WalkOptions::default(), 4);
        #[cfg(unix)]
        {
            use std::os::unix::fs::symlink;
            // a link to a sidecar counts as its target; a dangling one does not
            touch(&r.join("l/linked.s2p"));
            touch(&r.join("l/dangling.s2p"));
            symlink(r.join("a/stem.part.yaml"), r.join("l/linked.part.yaml")).unwrap();
            symlink(r.join("l/gone"), r.join("l/dangling.part.yaml")).unwrap();
            same(&WalkOptions::default(), 5);
            same(&WalkOptions { follow_links: true }, 5);
        }
    }

    /// `walked_rel` is `rel_name` for every path the walk makes (a root joined with
    /// names), however the root is written.
    #[test]
    fn walked_names_are_rel_names() {
        for root in [
            "lib", "lib/", "lib//", "./lib", ".", "./", "/abs/lib", "lib/.", "../lib", "a/../lib",
        ] {
            let root = Path::new(root);
            for names in [&["x.s2p"][..], &["b", "x.s2p"], &["b", "c", "\u{e9}.ts"]] {
                let mut path = root.to_path_buf();
                for n in names {
                    path.push(n);
                }
                assert_eq!(
                    walked_rel(root, &path),
                    rel_name(root, &path),
                    "{}",
                    path.display()
                );
            }
        }
        // not a path the walk makes: the general rule
        assert_eq!(
            walked_rel(Path::new("a"), Path::new("ab/x.s2p")),
            "ab/x.s2p"
        );
    }
}
