//! The reports of `--report DIR` written while the parts are judged, so that a run's
//! memory grows with its largest file and with what needs attention, not with the
//! library (DESIGN §9).
//!
//! Each part is drawn on a worker thread as soon as it is judged: its `report.json`
//! element, its row and section of `report.html`, its JUnit test cases. The drawn
//! pieces are appended, in path order, and the part is dropped. The two big bodies,
//! the JSON parts and the page's sections (about 15 KiB a part between them), go
//! straight into the temporary files that become `report.json` and `report.html`
//! ([`Draft`]); the small ones (the table's rows, the JUnit cases) wait in unnamed
//! spill files. At the end each report is put in place atomically, its head (which
//! needs every count) in front of its body: inserted as whole blocks where the file
//! system can (Linux `fallocate` with `FALLOC_FL_INSERT_RANGE`: ext4, XFS), so that a
//! body is written once and never copied, and otherwise written to a new file
//! followed by a copy of the body. The writers build their whole documents from the
//! same pieces (`json::Frame`, `html::Page`, `junit::Plan`), so a streamed report has
//! the bytes of one written from a whole [`RunReport`].

use std::collections::{BTreeMap, BTreeSet};
use std::fs::File;
use std::io::{self, BufWriter, Read, Seek, SeekFrom, Write};
use std::path::{Path, PathBuf};

use rayon::prelude::*;

use super::html::{self, PagePart, PartIds};
use super::junit::{Body, Plan};
use super::{atomic_write, atomic_write_stream, head_of, json, markdown, REPORT_FILES};
use super::{commit, temp_beside};
use crate::pipeline::{Draw, PartSink};
use crate::verdict::{PartReport, RunReport};

/// A body waiting in an unnamed file in the report folder.
struct Spill {
    w: BufWriter<File>,
}

impl Spill {
    fn new(dir: &Path) -> io::Result<Spill> {
        Ok(Spill {
            w: BufWriter::with_capacity(64 * 1024, tempfile::tempfile_in(dir)?),
        })
    }

    /// Bytes written so far.
    fn len(&mut self) -> io::Result<u64> {
        self.w.flush()?;
        self.w.get_mut().stream_position()
    }

    /// Copy everything written so far into `out`.
    fn copy_into(&mut self, out: &mut dyn Write) -> io::Result<()> {
        self.w.flush()?;
        let f = self.w.get_mut();
        f.seek(SeekFrom::Start(0))?;
        io::copy(f, out)?;
        f.seek(SeekFrom::End(0))?;
        Ok(())
    }
}

/// A report's body, written into the temporary file that is to become the report
/// (see the module doc). On Linux the file has no name until [`Draft::place`] puts it
/// in place (`O_TMPFILE`), so a run that is killed leaves nothing behind; elsewhere it
/// is a named temporary file beside the report, removed unless it was put in place.
struct Draft {
    w: BufWriter<File>,
    /// the file's name; None while it has none
    tmp: Option<PathBuf>,
    /// bytes written
    len: u64,
    /// try to insert the head in front of the body (off: always copy, for tests)
    insert: bool,
    /// bytes handed to the system to write to disk so far
    started: u64,
    /// the thread that asks the system to write the body's ranges, once one is due
    behind: Option<Behind>,
}

/// Asks the system to start writing ranges of a file, on a thread of its own: the
/// request does the file system's block allocation in the caller, which would
/// otherwise hold up the thread that hands the workers their next chunks.
struct Behind {
    tx: std::sync::mpsc::Sender<(u64, u64)>,
    thread: std::thread::JoinHandle<()>,
}

impl Behind {
    fn start(f: &File) -> Option<Behind> {
        // elsewhere there is nothing to ask (see `start_writing`)
        if !cfg!(target_os = "linux") {
            return None;
        }
        let f = f.try_clone().ok()?;
        let (tx, rx) = std::sync::mpsc::channel::<(u64, u64)>();
        let thread = std::thread::Builder::new()
            .name("write-behind".into())
            .spawn(move || {
                for (offset, len) in rx {
                    start_writing(&f, offset, len);
                }
            })
            .ok()?;
        Some(Behind { tx, thread })
    }

    /// Wait until every range asked for has been handed to the system.
    fn finish(self) {
        drop(self.tx);
        let _ = self.thread.join();
    }
}

impl Draft {
    fn new(report: &Path) -> io::Result<Draft> {
        let (f, tmp) = match unnamed_beside(report) {
            Some(f) => (f, None),
            None => {
                let tmp = temp_beside(report)?;
                // read back when the body has to be copied after all
                let f = File::options()
                    .read(true)
                    .write(true)
                    .create(true)
                    .truncate(true)
                    .open(&tmp)?;
                (f, Some(tmp))
            }
        };
        Ok(Draft {
            w: BufWriter::with_capacity(64 * 1024, f),
            tmp,
            len: 0,
            insert: true,
            started: 0,
            behind: None,
        })
    }

    fn append(&mut self, bytes: &[u8]) -> io::Result<()> {
        self.w.write_all(bytes)?;
        self.len += bytes.len() as u64;
        if self.len - self.started >= WRITE_BEHIND {
            self.w.flush()?;
            let (offset, len) = (self.started, self.len - self.started);
            if self.behind.is_none() {
                self.behind = Behind::start(self.w.get_ref());
            }
            match &self.behind {
                Some(b) if b.tx.send((offset, len)).is_ok() => {}
                // no thread to be had: ask here
                _ => start_writing(self.w.get_ref(), offset, len),
            }
            self.started = self.len;
        }
        Ok(())
    }

    /// Make `path` the report: `prefix` (exactly `prefix_len` bytes, a whole number of
    /// blocks) written in front of the body and `suffix` after it, atomically and
    /// durably like [`atomic_write_stream`]. Errors name `path`.
    fn place(
        mut self,
        path: &Path,
        prefix_len: u64,
        prefix: impl FnOnce(&mut dyn Write) -> io::Result<()>,
        suffix: &[u8],
    ) -> io::Result<()> {
        let tmp = self.tmp.take();
        if let Some(b) = self.behind.take() {
            b.finish();
        }
        let forget = |tmp: &Option<PathBuf>| {
            if let Some(t) = tmp {
                let _ = std::fs::remove_file(t);
            }
        };
        let fail = |e: io::Error| {
            forget(&tmp);
            super::with_path(path, e)
        };
        let mut f = match self.w.flush().and_then(|()| self.w.get_ref().try_clone()) {
            Ok(f) => f,
            Err(e) => return Err(fail(e)),
        };
        // an empty body cannot take an insertion (it would be at the file's end)
        if self.insert && self.len > 0 && insert_front(&f, prefix_len) {
            let written = (|| {
                f.seek(SeekFrom::Start(0))?;
                let mut w = BufWriter::with_capacity(256 * 1024, &f);
                let mut counted = super::Counted { w: &mut w, n: 0 };
                prefix(&mut counted)?;
                if counted.n != prefix_len {
                    return Err(io::Error::other("report head of an unexpected length"));
                }
                w.flush()?;
                drop(w);
                f.seek(SeekFrom::End(0))?;
                f.write_all(suffix)
            })();
            if let Err(e) = written {
                return Err(fail(e));
            }
            return match tmp.or_else(|| name_beside(&f, path)) {
                Some(t) => commit(f, &t, path, true),
                // the finished report has no name and cannot be given one: copy it
                None => f
                    .seek(SeekFrom::Start(0))
                    .map_err(|e| super::with_path(path, e))
                    .and_then(|_| atomic_write_stream(path, |w| io::copy(&mut &f, w).map(drop))),
            };
        }
        let copied = f.seek(SeekFrom::Start(0)).map_err(&fail).and_then(|_| {
            let mut body = (&f).take(self.len);
            atomic_write_stream(path, |w| {
                prefix(w)?;
                io::copy(&mut body, w)?;
                w.write_all(suffix)
            })
        });
        forget(&tmp);
        copied
    }
}

impl Drop for Draft {
    fn drop(&mut self) {
        if let Some(t) = &self.tmp {
            let _ = std::fs::remove_file(t);
        }
    }
}

/// A file without a name in the folder of `report` (Linux `O_TMPFILE`, mode 0666 less
/// the umask, as a created report gets), or None where the system cannot make one.
#[cfg(target_os = "linux")]
fn unnamed_beside(report: &Path) -> Option<File> {
    use rustix::fs::{open, Mode, OFlags};
    let flags = OFlags::TMPFILE | OFlags::RDWR | OFlags::CLOEXEC;
    open(super::folder_of(report), flags, Mode::from_raw_mode(0o666))
        .ok()
        .map(File::from)
}

#[cfg(not(target_os = "linux"))]
fn unnamed_beside(_: &Path) -> Option<File> {
    None
}

/// Give the unnamed file `f` a temporary name beside `report` (a link through
/// `/proc/self/fd`); None where that fails.
#[cfg(target_os = "linux")]
fn name_beside(f: &File, report: &Path) -> Option<PathBuf> {
    use rustix::fs::{linkat, AtFlags, CWD};
    use std::os::fd::AsRawFd;
    let tmp = temp_beside(report).ok()?;
    let fd = format!("/proc/self/fd/{}", f.as_raw_fd());
    linkat(CWD, fd.as_str(), CWD, &tmp, AtFlags::SYMLINK_FOLLOW).ok()?;
    Some(tmp)
}

#[cfg(not(target_os = "linux"))]
fn name_beside(_: &File, _: &Path) -> Option<PathBuf> {
    None
}

/// How much of a body is written before the system is asked to start putting it on
/// disk: the final fsync (and the insertion, which waits for the body to be written)
/// then finds little left, instead of the whole body at the end of the run.
const WRITE_BEHIND: u64 = 4 << 20;

/// Ask the system to start writing `len` bytes of `f` from `offset` to disk, without
/// waiting (Linux: `posix_fadvise(DONTNEED)` starts the writeback of dirty pages; the
/// pages still being written stay cached). Best effort: the fsync makes it durable.
#[cfg(target_os = "linux")]
fn start_writing(f: &File, offset: u64, len: u64) {
    use rustix::fs::{fadvise, Advice};
    let _ = fadvise(f, offset, std::num::NonZeroU64::new(len), Advice::DontNeed);
}

#[cfg(not(target_os = "linux"))]
fn start_writing(_: &File, _: u64, _: u64) {}

/// Insert `len` bytes (whole blocks) of hole at the start of `f`, shifting its content;
/// false where the file system or the system cannot.
#[cfg(target_os = "linux")]
fn insert_front(f: &File, len: u64) -> bool {
    use rustix::fs::{fallocate, FallocateFlags};
    len.is_multiple_of(super::BLOCK) && fallocate(f, FallocateFlags::INSERT_RANGE, 0, len).is_ok()
}

#[cfg(not(target_os = "linux"))]
fn insert_front(_: &File, _: u64) -> bool {
    false
}

/// One part drawn for every report (see the module doc).
#[derive(Default)]
pub struct Drawn {
    json: Vec<u8>,
    page: Option<PagePart>,
    junit: Vec<(usize, Body)>,
}

/// Draws a run's parts for the four reports, on the worker threads (see the module
/// doc); made by [`ReportStream`]'s `begin`.
pub struct PartDrawer {
    strict: bool,
    plan: Plan,
    /// the element ids that are not their path's plain slug (paths that collide)
    renamed: BTreeMap<String, String>,
}

impl PartDrawer {
    fn draw_part(&self, p: &PartReport, index: usize) -> Drawn {
        let mut d = Drawn::default();
        // drawing into memory cannot fail
        let _ = json::part_fragment(p, index == 0, &mut d.json);
        d.page = Some(html::page_part(
            self.strict,
            p,
            &id_for(&self.renamed, &p.path),
        ));
        d.junit = self.plan.part_bodies(p, self.strict);
        d
    }
}

impl Draw for PartDrawer {
    type Drawn = Drawn;

    fn draw(&self, part: &PartReport, index: usize) -> Drawn {
        self.draw_part(part, index)
    }
}

/// The four reports of a run, written as its parts come (see the module doc).
pub struct ReportStream {
    dir: PathBuf,
    plan: Plan,
    /// the element ids that are not their path's plain slug (paths that collide)
    renamed: BTreeMap<String, String>,
    json: Draft,
    rows: Spill,
    sections: Draft,
    junit: Vec<Spill>,
    counts: Vec<Body>,
    kinds: BTreeSet<String>,
    folders: BTreeSet<String>,
    /// the first write that failed; the run goes on, and [`finish`](Self::finish)
    /// reports it without touching the old reports
    error: Option<io::Error>,
}

impl ReportStream {
    /// Open a stream into `dir` (created if needed). The reports themselves are only
    /// replaced by [`finish`](Self::finish).
    pub fn new(dir: &Path) -> io::Result<ReportStream> {
        std::fs::create_dir_all(dir).map_err(|e| super::with_path(dir, e))?;
        // a spill that cannot be made is named after the report it was for
        let spill =
            |report: &str| Spill::new(dir).map_err(|e| super::with_path(&dir.join(report), e));
        let draft = |report: &str| {
            let path = dir.join(report);
            Draft::new(&path).map_err(|e| super::with_path(&path, e))
        };
        Ok(ReportStream {
            dir: dir.to_path_buf(),
            plan: Plan::default(),
            renamed: BTreeMap::new(),
            json: draft(REPORT_FILES[0])?,
            rows: spill(REPORT_FILES[3])?,
            sections: draft(REPORT_FILES[3])?,
            junit: Vec::new(),
            counts: Vec::new(),
            kinds: BTreeSet::new(),
            folders: BTreeSet::new(),
            error: None,
        })
    }

    /// Put the heads in front of the bodies by copying the bodies, as on a file system
    /// that cannot insert blocks (for tests: both ways give the same bytes).
    #[doc(hidden)]
    pub fn copying_bodies(mut self) -> ReportStream {
        self.json.insert = false;
        self.sections.insert = false;
        self
    }

    /// Make the slots for `plan` and the element ids of `paths`; give the drawer.
    fn start(&mut self, head: &RunReport, plan: Plan, paths: &[&str]) -> PartDrawer {
        let mut ids = PartIds::default();
        for p in paths {
            let id = ids.next(p);
            if id != format!("part-{}", html::slug(p)) {
                self.renamed.insert(p.to_string(), id);
            }
        }
        self.counts = vec![Body::default(); plan.slots()];
        self.junit.clear();
        for _ in 0..plan.slots() {
            match Spill::new(&self.dir) {
                Ok(s) => self.junit.push(s),
                Err(e) => {
                    if self.error.is_none() {
                        self.error = Some(super::with_path(&self.dir.join(REPORT_FILES[1]), e));
                    }
                    break;
                }
            }
        }
        self.plan = plan.clone();
        PartDrawer {
            strict: head.strict,
            plan,
            renamed: self.renamed.clone(),
        }
    }

    fn fail(&mut self, e: io::Error) {
        if self.error.is_none() {
            self.error = Some(super::with_path(&self.dir, e));
        }
    }

    fn take_part(&mut self, d: Drawn) {
        if self.error.is_some() {
            return;
        }
        let write = || -> io::Result<()> {
            self.json.append(&d.json)?;
            if let Some(page) = d.page {
                self.rows.w.write_all(page.row.as_bytes())?;
                self.sections.append(page.section.as_bytes())?;
                self.kinds.insert(page.kind);
                self.folders.insert(page.folder);
            }
            for (slot, body) in &d.junit {
                if let (Some(spill), Some(count)) =
                    (self.junit.get_mut(*slot), self.counts.get_mut(*slot))
                {
                    spill.w.write_all(&body.text)?;
                    count.add_counts(body);
                }
            }
            Ok(())
        };
        if let Err(e) = write() {
            self.fail(e);
        }
    }

    /// Write the four reports, each atomically. `report` is the run's report: its
    /// counts final, its parts at least those a summary names (the pipeline's
    /// `Keep::Notable`), which is all the Markdown summary and the page's list of
    /// what changed need. An error names the path that failed (the first in the
    /// order of [`REPORT_FILES`]); the old report of a failed write is left whole.
    ///
    /// The reports are written at the same time, on three threads: each is mostly a
    /// copy of its spill and an fsync, which one after the other were the run's
    /// serial tail.
    pub fn finish(mut self, report: &RunReport) -> io::Result<()> {
        if let Some(e) = self.error.take() {
            return Err(e);
        }
        let dir = self.dir.clone();
        let head = head_of(report);
        let ReportStream {
            plan,
            renamed,
            json: json_body,
            mut rows,
            sections,
            mut junit,
            counts,
            kinds,
            folders,
            ..
        } = self;
        let write_json = || {
            let path = dir.join(REPORT_FILES[0]);
            let frame = json::Frame::of(&head).map_err(|e| super::with_path(&path, e))?;
            let suffix = frame.suffix(json_body.len > 0);
            json_body.place(
                &path,
                frame.prefix.len() as u64,
                |w| w.write_all(&frame.prefix),
                &suffix,
            )
        };
        let write_junit_and_summary = || {
            atomic_write_stream(&dir.join(REPORT_FILES[1]), |w| {
                plan.write(&head, &counts, w, |slot, w| match junit.get_mut(slot) {
                    Some(s) => s.copy_into(w),
                    None => Ok(()),
                })
            })
            .and_then(|()| atomic_write(&dir.join(REPORT_FILES[2]), markdown(report).as_bytes()))
        };
        let write_page = || {
            let id_of = |path: &str| Some(id_for(&renamed, path));
            let page = html::Page {
                head: report,
                kept: &report.parts,
                id_of: &id_of,
                kinds: &kinds,
                folders: &folders,
            };
            let path = dir.join(REPORT_FILES[3]);
            let rows_len = rows.len().map_err(|e| super::with_path(&path, e))?;
            let opening = page.opening(rows_len);
            sections.place(
                &path,
                opening.len(),
                |w| opening.write(w, |w| rows.copy_into(w)),
                html::closing().as_bytes(),
            )
        };
        let (json_done, junit_done, page_done) = std::thread::scope(|s| {
            let json_done = s.spawn(write_json);
            let junit_done = s.spawn(write_junit_and_summary);
            let page_done = write_page();
            (join(json_done), join(junit_done), page_done)
        });
        json_done.and(junit_done).and(page_done)
    }
}

/// A writer thread's result; its panic is the caller's.
fn join<T>(h: std::thread::ScopedJoinHandle<'_, T>) -> T {
    match h.join() {
        Ok(v) => v,
        Err(panic) => std::panic::resume_unwind(panic),
    }
}

impl PartSink for ReportStream {
    type Drawer = PartDrawer;

    fn begin(&mut self, head: &RunReport, paths: &[&str]) -> PartDrawer {
        // the run's checks all come from the rules files of its head
        self.start(head, Plan::of(head), paths)
    }

    fn take(&mut self, _: &PartReport, drawn: Drawn) {
        self.take_part(drawn);
    }
}

/// A part's element id: its path's slug, unless it collided with another's.
fn id_for(renamed: &BTreeMap<String, String>, path: &str) -> String {
    renamed
        .get(path)
        .cloned()
        .unwrap_or_else(|| format!("part-{}", html::slug(path)))
}

/// Parts drawn together in parallel by [`write_all`](super::write_all).
const CHUNK: usize = 64;

/// Stream a whole report's parts (as `merge` has them) into `dir`.
pub(crate) fn write_report(dir: &Path, r: &RunReport) -> io::Result<()> {
    let mut s = ReportStream::new(dir)?;
    let paths: Vec<&str> = r.parts.iter().map(|p| p.path.as_str()).collect();
    // a joined report may hold checks of rules files its header does not list
    let drawer = s.start(r, Plan::of(r), &paths);
    for (c, chunk) in r.parts.chunks(CHUNK).enumerate() {
        let drawn: Vec<Drawn> = chunk
            .par_iter()
            .enumerate()
            .map(|(i, p)| drawer.draw_part(p, c * CHUNK + i))
            .collect();
        for d in drawn {
            s.take_part(d);
        }
    }
    s.finish(r)
}

#[cfg(test)]
mod tests {
    use super::super::BLOCK;
    use super::*;

    fn placed(insert: bool, body: &[u8], prefix: &[u8]) -> (io::Result<()>, tempfile::TempDir) {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("r.txt");
        std::fs::write(&path, b"old").unwrap();
        let mut d = Draft::new(&path).unwrap();
        d.insert = insert;
        d.append(body).unwrap();
        let head = [b'h'; 4096];
        let done = d.place(&path, head.len() as u64, |w| w.write_all(prefix), b"tail");
        (done, dir)
    }

    #[test]
    fn a_draft_takes_its_head_in_front_and_leaves_no_temporary_file() {
        let body: Vec<u8> = (0..100_000u32).map(|i| (i % 251) as u8).collect();
        let head = [b'h'; 4096];
        for insert in [true, false] {
            let (done, dir) = placed(insert, &body, &head);
            done.unwrap();
            let got = std::fs::read(dir.path().join("r.txt")).unwrap();
            let want = [&head[..], &body, b"tail"].concat();
            assert!(got == want, "insert {insert}: wrong bytes");
            let names: Vec<_> = std::fs::read_dir(dir.path()).unwrap().collect();
            assert_eq!(names.len(), 1, "insert {insert}: a temporary file is left");
        }
    }

    #[test]
    fn a_body_past_the_write_behind_mark_comes_out_whole() {
        // appended in pieces, so that writing to disk starts twice during the body
        let piece: Vec<u8> = (0..65_536u32).map(|i| (i % 253) as u8).collect();
        let pieces = (2 * WRITE_BEHIND as usize) / piece.len() + 3;
        let head = [b'h'; 4096];
        for insert in [true, false] {
            let dir = tempfile::tempdir().unwrap();
            let path = dir.path().join("r.txt");
            let mut d = Draft::new(&path).unwrap();
            d.insert = insert;
            for _ in 0..pieces {
                d.append(&piece).unwrap();
            }
            assert!(
                d.started >= 2 * WRITE_BEHIND,
                "writing behind did not start"
            );
            d.place(&path, head.len() as u64, |w| w.write_all(&head), b"tail")
                .unwrap();
            let got = std::fs::read(&path).unwrap();
            assert_eq!(got.len(), head.len() + pieces * piece.len() + 4);
            assert!(got[..head.len()] == head[..]);
            assert!(got[head.len()..got.len() - 4]
                .chunks(piece.len())
                .all(|c| c == &piece[..]));
            assert!(got.ends_with(b"tail"));
        }
    }

    #[test]
    fn a_head_of_the_wrong_length_fails_and_leaves_the_old_report() {
        for insert in [true, false] {
            let (done, dir) = placed(insert, b"body", b"short head");
            if insert && can_insert(dir.path()) {
                // an insertion needs the promised length (the copy does not depend on it)
                let e = done.expect_err("the head is shorter than promised");
                assert!(e.to_string().contains("r.txt"), "{e}");
                let old = std::fs::read(dir.path().join("r.txt")).unwrap();
                assert_eq!(old, b"old");
            }
            let names: Vec<_> = std::fs::read_dir(dir.path()).unwrap().collect();
            assert_eq!(names.len(), 1, "insert {insert}: a temporary file is left");
        }
    }

    /// Whether the file system of `dir` takes insertions (ext4 and XFS do, tmpfs not).
    fn can_insert(dir: &Path) -> bool {
        let p = dir.join("probe");
        let mut f = File::options()
            .create(true)
            .truncate(true)
            .read(true)
            .write(true)
            .open(&p)
            .unwrap();
        f.write_all(b"x").unwrap();
        let ok = insert_front(&f, BLOCK);
        drop(f);
        std::fs::remove_file(p).unwrap();
        ok
    }

    #[test]
    fn an_unplaced_draft_removes_its_file() {
        let dir = tempfile::tempdir().unwrap();
        let mut d = Draft::new(&dir.path().join("r.txt")).unwrap();
        d.append(b"body").unwrap();
        // on Linux the draft has no name while it is written: a killed run leaves
        // nothing in the report folder
        #[cfg(target_os = "linux")]
        assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 0);
        drop(d);
        assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 0);
    }
}
