//! The reports of `--report DIR` written while the parts are judged, so that a run's
//! memory grows with its largest file and with what needs attention, not with the
//! library (DESIGN §9).
//!
//! Each part is drawn on a worker thread as soon as it is judged: its `report.json`
//! element, its row and section of `report.html`, its JUnit test cases. The drawn
//! pieces are appended, in path order, to unnamed spill files beside the reports and
//! the part is dropped. At the end each report is written atomically: the head (which
//! needs every count) and then the spilled body, copied. The writers build their whole
//! documents from the same pieces (`json::document`, `html::Page`, `junit::Plan`), so a
//! streamed report has the bytes of one written from a whole [`RunReport`].

use std::collections::{BTreeMap, BTreeSet};
use std::fs::File;
use std::io::{self, BufWriter, Seek, SeekFrom, Write};
use std::path::{Path, PathBuf};

use rayon::prelude::*;

use super::html::{self, PagePart, PartIds};
use super::junit::{Body, Plan};
use super::{atomic_write, atomic_write_stream, head_of, json, markdown, REPORT_FILES};
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
    json: Spill,
    rows: Spill,
    sections: Spill,
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
        Ok(ReportStream {
            dir: dir.to_path_buf(),
            plan: Plan::default(),
            renamed: BTreeMap::new(),
            json: spill(REPORT_FILES[0])?,
            rows: spill(REPORT_FILES[3])?,
            sections: spill(REPORT_FILES[3])?,
            junit: Vec::new(),
            counts: Vec::new(),
            kinds: BTreeSet::new(),
            folders: BTreeSet::new(),
            error: None,
        })
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
            self.json.w.write_all(&d.json)?;
            if let Some(page) = d.page {
                self.rows.w.write_all(page.row.as_bytes())?;
                self.sections.w.write_all(page.section.as_bytes())?;
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
            json: mut json_body,
            mut rows,
            mut sections,
            mut junit,
            counts,
            kinds,
            folders,
            ..
        } = self;
        let write_json = || {
            atomic_write_stream(&dir.join(REPORT_FILES[0]), |w| {
                json::document(&head, w, |w| json_body.copy_into(w))
            })
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
        let mut write_page = || {
            let id_of = |path: &str| Some(id_for(&renamed, path));
            let page = html::Page {
                head: report,
                kept: &report.parts,
                id_of: &id_of,
                kinds: &kinds,
                folders: &folders,
            };
            atomic_write_stream(&dir.join(REPORT_FILES[3]), |w| {
                page.write(w, |w| rows.copy_into(w), |w| sections.copy_into(w))
            })
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
