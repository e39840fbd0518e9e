//! The run of `lcgate check`: walk the library, judge every part in parallel
//! (read → view → figures → rules) and gather the verdicts into a [`RunReport`].
//!
//! Owns the per-part verdict rules (which checks fail a part, `--strict`), the summary
//! counts and the exit decision (`passed`). Streaming: a part's network lives only
//! while that part is judged, so memory grows with the largest file, not with the
//! library. The output is the same, byte for byte, for any thread count: parts are
//! judged independently and collected in path order.

use std::collections::VecDeque;
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::{Path, PathBuf};
use std::sync::mpsc;
use std::time::{Instant, SystemTime, UNIX_EPOCH};

use rayon::prelude::*;

use crate::baseline::{self, Baseline, Cache, Judged, Measure};
use crate::figures::{self, DataChecks, Kind, ViewFigures};
use crate::library::{self, PartFile, WalkError, WalkOptions};
use crate::network::{self, Network, PortMap, ViewName};
use crate::rules::{self, EvalContext, RuleSet};
use crate::verdict::{
    CheckOutcome, CheckStatus, PartReport, PartStatus, RunInfo, RunReport, Severity, Summary,
};

/// Format tag of `report.json`.
pub const REPORT_FORMAT: &str = "lcgate-report/1";

/// Where the content-hash cache lives.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub enum CacheChoice {
    /// under the library's `.lcgate-cache/`
    #[default]
    Default,
    /// `--no-cache`
    Off,
    /// `--cache DIR`
    Dir(PathBuf),
}

/// Everything a run needs, as the command line gave it.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct RunOptions {
    /// library root (a folder, or a single Touchstone file)
    pub library: PathBuf,
    /// rules files or folders
    pub rules: Vec<PathBuf>,
    /// baseline to compare against (`--baseline`)
    pub baseline: Option<PathBuf>,
    /// worker threads (`--jobs`); None: one per core
    pub jobs: Option<usize>,
    /// `--shard K/N` (1-based K)
    pub shard: Option<[usize; 2]>,
    /// cache use
    pub cache: CacheChoice,
    /// warnings fail the run
    pub strict: bool,
    /// follow symbolic links while walking
    pub follow_links: bool,
}

/// Told about progress while parts are judged (the command line draws a bar).
pub trait Progress: Sync {
    /// the walk is done and `parts` parts will be judged
    fn begin(&self, parts: usize) {
        let _ = parts;
    }
    /// one part is done
    fn part_done(&self, path: &str) {
        let _ = path;
    }
}

/// A [`Progress`] that ignores everything.
pub struct NoProgress;
impl Progress for NoProgress {}

/// The run could not be made (exit status 2).
#[derive(Debug, thiserror::Error)]
pub enum RunError {
    /// the library does not exist or is not a folder
    #[error(transparent)]
    Library(#[from] WalkError),
    /// the library holds no Touchstone file: a gate that passes on nothing would hide a
    /// wrong path in a CI configuration
    #[error("no Touchstone files (*.sNp, *.ts) found under `{0}`")]
    Empty(String),
    /// a rules file does not load (the message names file, line and column)
    #[error("{0}")]
    Rules(#[from] rules::LoadError),
    /// no rules were given
    #[error("no rules given (pass --rules PATH)")]
    NoRules,
    /// the thread pool could not be built
    #[error("cannot start {jobs} worker threads: {message}")]
    Threads {
        /// threads asked for
        jobs: usize,
        /// why not
        message: String,
    },
    /// the baseline cannot be used
    #[error(transparent)]
    Baseline(#[from] baseline::BaselineError),
}

/// A run's report and the walk's notes (skipped links, FIFOs) for the user.
#[derive(Debug, Clone)]
pub struct Outcome {
    /// the report
    pub report: RunReport,
    /// one line per skipped entry
    pub notes: Vec<String>,
}

/// Run a check (see [`run_with`]) without progress reports.
pub fn run(opts: &RunOptions) -> Result<RunReport, RunError> {
    run_with(opts, &NoProgress).map(|o| o.report)
}

/// Every part of a library judged (through the cache), before any baseline.
pub struct Judging {
    /// the rules the parts were judged by
    pub rules: RuleSet,
    /// one per part of the run (the shard's parts with `--shard`), sorted by path
    pub judged: Vec<Judged>,
    /// the walk's and the cache's notes for the user
    pub notes: Vec<String>,
}

/// What a run is made of before any part is judged.
struct Prepared {
    rules: RuleSet,
    /// the run's parts (the shard's with `--shard`), sorted by path
    parts: Vec<PartFile>,
    cache: Option<Cache>,
    notes: Vec<String>,
    pool: Option<rayon::ThreadPool>,
    strict: bool,
    /// take each part's content hash even without a cache (a baseline is recorded)
    hash: bool,
}

impl Prepared {
    /// Load the rules, walk the library, take the shard's share, open the cache and
    /// build the thread pool `opts.jobs` asks for. `hash`: see [`Prepared::hash`].
    fn new(opts: &RunOptions, hash: bool) -> Result<Prepared, RunError> {
        if opts.rules.is_empty() {
            return Err(RunError::NoRules);
        }
        let rules = rules::load(&opts.rules)?;
        let walk = library::walk(
            &opts.library,
            &WalkOptions {
                follow_links: opts.follow_links,
            },
        )?;
        if walk.parts.is_empty() {
            return Err(RunError::Empty(opts.library.to_string_lossy().into_owned()));
        }
        let mut parts: Vec<PartFile> = match opts.shard {
            Some(shard) => walk
                .parts
                .into_iter()
                .filter(|p| baseline::in_shard(&p.rel, shard))
                .collect(),
            None => walk.parts,
        };
        parts.sort_by(|a, b| a.rel.cmp(&b.rel));
        let cache = match &opts.cache {
            CacheChoice::Off => None,
            CacheChoice::Default => Some(Cache::new(
                Cache::default_dir(&opts.library),
                &rules.infos(),
                opts.strict,
            )),
            CacheChoice::Dir(d) => Some(Cache::new(d.clone(), &rules.infos(), opts.strict)),
        };
        let pool = match opts.jobs {
            None => None,
            Some(jobs) => Some(
                rayon::ThreadPoolBuilder::new()
                    .num_threads(jobs)
                    .build()
                    .map_err(|e| RunError::Threads {
                        jobs,
                        message: e.to_string(),
                    })?,
            ),
        };
        Ok(Prepared {
            rules,
            parts,
            cache,
            notes: walk.notes,
            pool,
            strict: opts.strict,
            hash,
        })
    }

    /// Run `f` on this thread with a scope whose spawned jobs run on the run's pool.
    fn in_place_scope<'scope, T>(&self, f: impl FnOnce(&rayon::Scope<'scope>) -> T) -> T {
        match &self.pool {
            Some(pool) => pool.in_place_scope(f),
            None => rayon::in_place_scope(f),
        }
    }

    /// Run `f` on the run's thread pool.
    fn install<T: Send>(&self, f: impl FnOnce() -> T + Send) -> T {
        match &self.pool {
            Some(pool) => pool.install(f),
            None => f(),
        }
    }

    /// Judge one part through the cache; the notes are the cache's.
    fn judge(&self, part: &PartFile, progress: &dyn Progress) -> (Judged, Vec<String>) {
        let mut notes = Vec::new();
        let j = baseline::cache::judge(self.cache.as_ref(), part, &mut notes, self.hash, |bytes| {
            judge_part_guarded(part, bytes, &self.rules, self.strict)
        });
        progress.part_done(&part.rel);
        (j, notes)
    }
}

/// Load the rules, walk the library, take the shard's share, and judge every part
/// (in parallel on `opts.jobs` threads, through the content-hash cache unless it is
/// off). `opts.baseline` is not used here.
pub fn judge_library(opts: &RunOptions, progress: &dyn Progress) -> Result<Judging, RunError> {
    // the judged parts may be recorded as a baseline, which keeps their hashes
    let prep = Prepared::new(opts, true)?;
    progress.begin(prep.parts.len());
    let done: Vec<(Judged, Vec<String>)> = prep.install(|| {
        prep.parts
            .par_iter()
            .map(|part| prep.judge(part, progress))
            .collect()
    });
    let mut notes = prep.notes.clone();
    let mut judged = Vec::with_capacity(done.len());
    for (j, n) in done {
        notes.extend(n);
        judged.push(j);
    }
    Ok(Judging {
        rules: prep.rules,
        judged,
        notes,
    })
}

/// Draws parts for a [`PartSink`] on the worker threads, away from the run's order.
/// It is its own value, handed out by [`PartSink::begin`], so that the sink can take
/// drawn parts on the main thread while the workers draw the next ones.
pub trait Draw: Sync {
    /// What is made of one part.
    type Drawn: Send;
    /// Draw part `index` (its place in the run's order).
    fn draw(&self, part: &PartReport, index: usize) -> Self::Drawn;
}

/// Where a run's part reports go as they are made, in path order: the report writers
/// of `--report DIR` ([`crate::report::ReportStream`]), or nothing.
pub trait PartSink {
    /// The sink's drawing side.
    type Drawer: Draw;
    /// Told the run's header (no parts, no counts yet) and every part's path, in the
    /// order the parts will come, before the first part; gives the drawer.
    fn begin(&mut self, head: &RunReport, paths: &[&str]) -> Self::Drawer;
    /// Take the drawn part, in the run's order (on the main thread).
    fn take(&mut self, part: &PartReport, drawn: <Self::Drawer as Draw>::Drawn);
}

/// A [`PartSink`] that keeps nothing.
pub struct NoSink;

impl Draw for NoSink {
    type Drawn = ();
    fn draw(&self, _: &PartReport, _: usize) {}
}

impl PartSink for NoSink {
    type Drawer = NoSink;
    fn begin(&mut self, _: &RunReport, _: &[&str]) -> NoSink {
        NoSink
    }
    fn take(&mut self, _: &PartReport, _: ()) {}
}

/// Which parts a run's [`RunReport`] keeps once the sink has taken them.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Keep {
    /// every part, whole
    All,
    /// only the parts the terminal and Markdown summaries can name (see
    /// [`is_notable`]), without their figures and plot: the run's memory then grows
    /// with what needs attention, not with the library
    Notable,
}

/// A part a summary names: anything but a clean pass (a failing or warning check,
/// drift, an error, a new, missing, unreadable or unchecked part).
pub fn is_notable(p: &PartReport) -> bool {
    p.status != PartStatus::Pass
        || p.new
        || p.error.is_some()
        || !p.drift.is_empty()
        || p.checks.iter().any(|c| c.status != CheckStatus::Pass)
}

/// Parts judged together (one parallel job) before their reports are handed on:
/// enough to keep every core busy, few enough that only a handful of parts are ever
/// held whole.
const CHUNK: usize = 32;

/// Chunks judged ahead of the one being taken: the workers go on with the next
/// chunks while the main thread takes the last one, so neither waits for the other;
/// at most `AHEAD + 1` chunks are held.
const AHEAD: usize = 2;

/// One entry of the run, in path order: a file to judge or a baseline part that is
/// no longer in the library.
enum Entry<'a> {
    File(&'a PartFile),
    Missing(Box<PartReport>),
}

impl Entry<'_> {
    fn path(&self) -> &str {
        match self {
            Entry::File(p) => &p.rel,
            Entry::Missing(r) => &r.path,
        }
    }
}

/// Run a check: judge the library (see [`judge_library`]), compare with the
/// baseline if one is given, and sum up. The report keeps every part.
pub fn run_with(opts: &RunOptions, progress: &dyn Progress) -> Result<Outcome, RunError> {
    run_into(opts, progress, &mut NoSink, Keep::All)
}

/// Run a check, handing each part's report to `sink` in path order as soon as its
/// chunk is judged (and compared with the baseline), while the next chunks are judged
/// on the workers, and keeping in the returned report the parts `keep` says. The
/// summary counts every part.
pub fn run_into<S: PartSink>(
    opts: &RunOptions,
    progress: &dyn Progress,
    sink: &mut S,
    keep: Keep,
) -> Result<Outcome, RunError> {
    let started = SystemTime::now();
    let clock = Instant::now();
    // a baseline that cannot be used is found before any part is judged
    let base = opts.baseline.as_deref().map(Baseline::load).transpose()?;
    // a check keeps no hash (only a recorded baseline does); the cache takes its own
    let prep = Prepared::new(opts, false)?;
    let infos = prep.rules.infos();
    let rules_changed = match &base {
        Some(b) => baseline::rules_changed(&infos, b),
        None => Vec::new(),
    };
    let mut entries: Vec<Entry> = prep.parts.iter().map(Entry::File).collect();
    if let Some(b) = &base {
        let present: std::collections::BTreeSet<&str> =
            prep.parts.iter().map(|p| p.rel.as_str()).collect();
        entries.extend(
            baseline::missing(b, opts.shard, |p| present.contains(p))
                .into_iter()
                .map(|r| Entry::Missing(Box::new(r))),
        );
        entries.sort_by(|a, b| a.path().cmp(b.path()));
    }
    let mut report = RunReport {
        format: REPORT_FORMAT.to_string(),
        tool_version: crate::TOOL_VERSION.to_string(),
        library: opts.library.to_string_lossy().into_owned(),
        rules: infos,
        baseline: opts
            .baseline
            .as_ref()
            .map(|p| p.to_string_lossy().into_owned()),
        rules_changed,
        shard: opts.shard,
        strict: opts.strict,
        passed: true,
        summary: Summary::default(),
        parts: Vec::new(),
        run: RunInfo::default(),
    };
    let paths: Vec<&str> = entries.iter().map(Entry::path).collect();
    let drawer = sink.begin(&report, &paths);
    drop(paths);
    progress.begin(prep.parts.len());

    // one entry, judged, compared with the baseline and drawn (on a worker)
    let judge_entry = |index: usize, entry: &Entry| -> Done<<S::Drawer as Draw>::Drawn> {
        let (part, notes, was_cached) = match entry {
            Entry::File(file) => {
                let (j, notes) = prep.judge(file, progress);
                let was_cached = j.cached;
                let part = match &base {
                    None => j.report,
                    Some(b) => baseline::apply_one(j, b, opts.strict, |m, before| {
                        compare_drift(&prep.rules, m, before)
                    }),
                };
                (part, notes, Some(was_cached))
            }
            // a missing part's report is small: no figures, no plot
            Entry::Missing(r) => ((**r).clone(), Vec::new(), None),
        };
        let drawn = drawer.draw(&part, index);
        (part, drawn, notes, was_cached)
    };
    let chunks: Vec<&[Entry]> = entries.chunks(CHUNK).collect();

    let mut notes = prep.notes.clone();
    let (mut computed, mut cached) = (0, 0);
    prep.in_place_scope(|scope| {
        // chunk c judged in parallel on the pool; its parts come back in order
        let launch = |c: usize| {
            let (tx, rx) = mpsc::sync_channel(1);
            let (chunk, judge_entry) = (chunks[c], &judge_entry);
            scope.spawn(move |_| {
                let done: Vec<_> = chunk
                    .par_iter()
                    .enumerate()
                    .map(|(i, entry)| judge_entry(c * CHUNK + i, entry))
                    .collect();
                // the receiver is gone only when the main thread is unwinding
                let _ = tx.send(done);
            });
            rx
        };
        let mut pending: VecDeque<mpsc::Receiver<_>> =
            (0..chunks.len().min(AHEAD)).map(launch).collect();
        let mut next = pending.len();
        while let Some(rx) = pending.pop_front() {
            if next < chunks.len() {
                pending.push_back(launch(next));
                next += 1;
            }
            // a chunk that never comes panicked on a worker: the scope raises it
            let Ok(done) = rx.recv() else { break };
            for (part, drawn, n, was_cached) in done {
                notes.extend(n);
                match was_cached {
                    Some(true) => cached += 1,
                    Some(false) => computed += 1,
                    None => {}
                }
                count(&mut report.summary, &part);
                report.passed &= part_passes(&part);
                sink.take(&part, drawn);
                match keep {
                    Keep::All => report.parts.push(part),
                    Keep::Notable if is_notable(&part) => report.parts.push(PartReport {
                        figures: Default::default(),
                        plot: None,
                        ..part
                    }),
                    Keep::Notable => {}
                }
            }
        }
    });
    report.run = RunInfo {
        started: rfc3339_utc(started),
        seconds: clock.elapsed().as_secs_f64(),
        computed,
        cached,
    };
    Ok(Outcome { report, notes })
}

/// A judged entry: its report, what the sink drew of it, the cache's notes, and
/// whether the cache served it (None: a missing part, nothing was judged).
type Done<D> = (PartReport, D, Vec<String>, Option<bool>);

/// What `lcgate record` did.
#[derive(Debug, Clone)]
pub struct Recorded {
    /// the baseline written
    pub baseline: Baseline,
    /// notes for the user
    pub notes: Vec<String>,
}

/// `lcgate record`: judge the library and write today's figures and drift
/// quantities to `output` as the baseline (crash-safely).
pub fn record(
    opts: &RunOptions,
    output: &Path,
    progress: &dyn Progress,
) -> Result<Recorded, RecordError> {
    let j = judge_library(opts, progress)?;
    let b = Baseline::from_judged(&opts.library.to_string_lossy(), j.rules.infos(), &j.judged);
    b.save(output).map_err(|source| RecordError::Write {
        path: output.to_string_lossy().into_owned(),
        source,
    })?;
    Ok(Recorded {
        baseline: b,
        notes: j.notes,
    })
}

/// `lcgate record` could not be made.
#[derive(Debug, thiserror::Error)]
pub enum RecordError {
    /// the run could not be made
    #[error(transparent)]
    Run(#[from] RunError),
    /// the baseline cannot be written
    #[error("cannot write the baseline `{path}`: {source}")]
    Write {
        /// the file
        path: String,
        /// why
        #[source]
        source: std::io::Error,
    },
}

/// The drift outcome of one measured quantity: the limit of the rules file that
/// named it.
fn compare_drift(
    rules: &RuleSet,
    m: &Measure,
    before: Option<f64>,
) -> Option<crate::verdict::DriftOutcome> {
    let file = rules.files.iter().find(|f| f.path == m.rules_file)?;
    let rule = file.drift.iter().find(|d| d.quantity == m.quantity)?;
    Some(rule.compare(before, m.now))
}

/// The view judged when a rule group names none: the one the port count suggests
/// (1-port `one_port`, 2-port `single_ended`, 3-port `centre_tapped`, 4-port
/// `transformer`; more ports: port 1 driven, the rest grounded).
pub fn default_view(ports: usize) -> ViewName {
    match ports {
        1 => ViewName::OnePort,
        3 => ViewName::CentreTapped,
        4 => ViewName::Transformer,
        _ => ViewName::SingleEnded,
    }
}

/// Does this check outcome fail its part? Error-level failures and every undecided
/// check do (a null figure is not a pass); warnings only with `--strict`.
pub fn fails_part(check: &CheckOutcome, strict: bool) -> bool {
    match (check.status, check.severity) {
        (CheckStatus::Pass, _) => false,
        (CheckStatus::Undecided, _) => true,
        (CheckStatus::Fail, Severity::Error) => true,
        (CheckStatus::Fail, Severity::Warning) => strict,
    }
}

/// Counts per status and of failing checks (`failed_checks`: checks that fail their
/// part at error level or undecided; `warnings`: warning-level checks that fail).
/// (How many were computed or cached is a fact of the run: `RunInfo`.)
pub fn summarise(parts: &[PartReport]) -> Summary {
    let mut s = Summary::default();
    for p in parts {
        count(&mut s, p);
    }
    s
}

/// Add one part to the counts (see [`summarise`]).
pub fn count(s: &mut Summary, p: &PartReport) {
    s.parts += 1;
    match p.status {
        PartStatus::Pass => s.pass += 1,
        PartStatus::Fail => s.fail += 1,
        PartStatus::Unreadable => s.unreadable += 1,
        PartStatus::Unchecked => s.unchecked += 1,
        PartStatus::Missing => s.missing += 1,
    }
    if p.new {
        s.new += 1;
    }
    for c in &p.checks {
        match (c.status, c.severity) {
            (CheckStatus::Pass, _) => {}
            (CheckStatus::Fail, Severity::Warning) => s.warnings += 1,
            _ => s.failed_checks += 1,
        }
    }
}

/// The run passes (exit 0) when every part passed or is unchecked: any failure,
/// unreadable or missing part fails it (exit 1).
pub fn passed(parts: &[PartReport]) -> bool {
    parts.iter().all(part_passes)
}

/// Does this part let the run pass (see [`passed`])?
pub fn part_passes(p: &PartReport) -> bool {
    matches!(p.status, PartStatus::Pass | PartStatus::Unchecked)
}

/// [`judge_part`], with a panic (a bug) turned into a failing part so one bad part
/// cannot take the nightly run down with it.
fn judge_part_guarded(
    part: &PartFile,
    bytes: Option<&[u8]>,
    rules: &RuleSet,
    strict: bool,
) -> (PartReport, Vec<Measure>) {
    match catch_unwind(AssertUnwindSafe(|| {
        judge_part_from(part, bytes, rules, strict)
    })) {
        Ok(r) => r,
        Err(payload) => {
            let what = payload
                .downcast_ref::<&str>()
                .map(|s| s.to_string())
                .or_else(|| payload.downcast_ref::<String>().cloned())
                .unwrap_or_default();
            let mut r = bare(part, PartStatus::Fail);
            r.error = Some(format!(
                "internal error (a bug) while judging this part: {what}"
            ));
            (r, Vec::new())
        }
    }
}

fn bare(part: &PartFile, status: PartStatus) -> PartReport {
    PartReport {
        path: part.rel.clone(),
        status,
        kind: None,
        view: None,
        figures: Default::default(),
        q_drop_cause: None,
        checks: Vec::new(),
        drift: Vec::new(),
        new: false,
        error: None,
        plot: None,
    }
}

/// The figures of one (view, ports, kind) of a part, or why the view does not apply.
type Computed = (ViewName, PortMap, Option<Kind>, Result<ViewFigures, String>);

/// The figures of one (view, ports, kind) of a part, computed once however many
/// groups ask for them.
struct FigureCache<'n> {
    net: &'n Network,
    done: Vec<Computed>,
}

impl<'n> FigureCache<'n> {
    fn get(&mut self, view: ViewName, ports: &PortMap, kind: Option<Kind>) -> usize {
        if let Some(i) = self
            .done
            .iter()
            .position(|(v, p, k, _)| *v == view && p == ports && *k == kind)
        {
            return i;
        }
        let figs = network::view(self.net, view, ports)
            .map(|v| figures::view_figures(&v, &self.net.freq, kind))
            .map_err(|e| format!("view `{view}`: {e}"));
        self.done.push((view, ports.clone(), kind, figs));
        self.done.len() - 1
    }
}

/// Judge one part: read it, take the view each matching rule group asks for, compute
/// the figures, evaluate the checks, measure the drift quantities of the rules files
/// that select it. The network is dropped on return.
pub fn judge_part(part: &PartFile, rules: &RuleSet, strict: bool) -> (PartReport, Vec<Measure>) {
    judge_part_from(part, None, rules, strict)
}

/// [`judge_part`] with the file's `bytes` when the caller already read them (the cache
/// reads a small file once to hash it), so that the file is not read twice. Gives the
/// same result as `judge_part` for the same bytes (tests/single_read.rs).
pub fn judge_part_from(
    part: &PartFile,
    bytes: Option<&[u8]>,
    rules: &RuleSet,
    strict: bool,
) -> (PartReport, Vec<Measure>) {
    if let Some(e) = &part.error {
        let mut r = bare(part, PartStatus::Unreadable);
        r.error = Some(e.clone());
        return (r, Vec::new());
    }
    let read = match bytes {
        // named as read_path names the file in its messages
        Some(b) => crate::touchstone::read_bytes(&part.path.display().to_string(), b),
        None => crate::touchstone::read_path(&part.path),
    };
    let net = match read {
        Ok(ts) => ts.network,
        Err(e) => {
            let mut r = bare(part, PartStatus::Unreadable);
            r.error = Some(e.to_string());
            return (r, Vec::new());
        }
    };
    let data = figures::data_checks(&net);
    let groups = rules.groups_for(&part.rel);
    let mut errors: Vec<String> = Vec::new();
    let sidecar = match part.sidecar() {
        None => None,
        Some(p) => match rules::load_sidecar(&p) {
            Ok(s) => Some(s),
            Err(e) => {
                errors.push(e.to_string());
                None
            }
        },
    };
    let file_name = library::file_name(&part.rel);
    let mut cache = FigureCache {
        net: &net,
        done: Vec::new(),
    };
    let mut checks: Vec<CheckOutcome> = Vec::new();
    let mut measures: Vec<Measure> = Vec::new();
    // (index into the cache, band) of the first group that could be judged
    let mut judged: Option<(usize, Option<rules::Band>)> = None;

    if groups.is_empty() {
        let i = cache.get(default_view(net.ports), &PortMap::default(), None);
        judged = Some((i, None));
    }
    if errors.is_empty() {
        for (file, group) in &groups {
            let label = file.path.clone();
            let resolved = match group.resolve(file_name, sidecar.as_ref()) {
                Ok(r) => r,
                Err(msg) => {
                    errors.push(format!("{label}: {msg}"));
                    continue;
                }
            };
            let view = group.view.unwrap_or_else(|| default_view(net.ports));
            let i = cache.get(view, &group.ports, group.kind);
            let figs = match &cache.done[i].3 {
                Ok(f) => f,
                Err(msg) => {
                    errors.push(format!("{label}: {msg}"));
                    continue;
                }
            };
            let ctx = EvalContext {
                figures: figs,
                data: &data,
                band: resolved.band,
                values: &resolved.values,
            };
            for check in &group.checks {
                checks.push(check.evaluate(&ctx, &label));
            }
            for d in &file.drift {
                baseline::add_measure(&mut measures, &label, &d.quantity, || d.measure(&ctx));
            }
            if judged.is_none() {
                judged = Some((i, resolved.band));
            }
        }
    }

    let status = if !errors.is_empty() || checks.iter().any(|c| fails_part(c, strict)) {
        PartStatus::Fail
    } else if groups.is_empty() {
        PartStatus::Unchecked
    } else {
        PartStatus::Pass
    };
    let mut r = bare(part, status);
    r.checks = checks;
    r.figures = data_figures(&data);
    if !errors.is_empty() {
        r.error = Some(errors.join("; "));
    }
    if let Some((i, band)) = judged {
        match &cache.done[i].3 {
            Ok(figs) => {
                r.kind = Some(figs.kind);
                r.view = Some(figs.view);
                for (k, v) in &figs.scalars {
                    r.figures.insert(k.clone(), v.filter(|x| x.is_finite()));
                }
                r.q_drop_cause = figs
                    .loss
                    .as_ref()
                    .and_then(|l| l.as_ref().ok())
                    .and_then(|s| s.q_drop_cause);
                r.plot = Some(crate::report::plot::plot_data(
                    figs,
                    band.map(|b| [b.lo, b.hi]),
                ));
            }
            Err(msg) if groups.is_empty() => {
                // an unchecked part whose default view does not apply: say why, keep
                // the data checks
                r.error = Some(msg.clone());
            }
            Err(_) => {}
        }
    }
    (r, measures)
}

/// The data checks as named figures (DESIGN §6), non-finite values as null.
fn data_figures(d: &DataChecks) -> std::collections::BTreeMap<String, Option<f64>> {
    let finite = |v: f64| v.is_finite().then_some(v);
    [
        (
            "passivity_margin",
            d.passivity_margin.filter(|v| v.is_finite()),
        ),
        (
            "reciprocity_error",
            d.reciprocity_error.filter(|v| v.is_finite()),
        ),
        ("points", Some(d.points as f64)),
        ("f_min", finite(d.f_min)),
        ("f_max", finite(d.f_max)),
        ("ports", Some(d.ports as f64)),
    ]
    .into_iter()
    .map(|(k, v)| (k.to_string(), v))
    .collect()
}

/// A time as RFC 3339 UTC with whole seconds (`2026-12-02T12:34:56Z`), by the
/// days-from-civil inverse of H. Hinnant's "chrono-compatible low-level date
/// algorithms" (public domain), to avoid a date crate for one timestamp.
pub fn rfc3339_utc(t: SystemTime) -> String {
    let secs = t
        .duration_since(UNIX_EPOCH)
        .map(|d| d.as_secs() as i64)
        .unwrap_or(0);
    let days = secs.div_euclid(86_400);
    let rem = secs.rem_euclid(86_400);
    let z = days + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z.rem_euclid(146_097);
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = doy - (153 * mp + 2) / 5 + 1;
    let m = if mp < 10 { mp + 3 } else { mp - 9 };
    let y = yoe + era * 400 + i64::from(m <= 2);
    format!(
        "{y:04}-{m:02}-{d:02}T{:02}:{:02}:{:02}Z",
        rem / 3600,
        rem % 3600 / 60,
        rem % 60
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::time::Duration;

    #[test]
    fn timestamps_in_rfc3339() {
        // reference instants computed by hand from the Unix epoch: 951782400 s is
        // 2000-02-29T00:00:00Z (a leap day in a century leap year), 0 is the epoch
        assert_eq!(rfc3339_utc(UNIX_EPOCH), "1970-01-01T00:00:00Z");
        let t = UNIX_EPOCH + Duration::from_secs(951_782_400);
        assert_eq!(rfc3339_utc(t), "2000-02-29T00:00:00Z");
        let t = UNIX_EPOCH + Duration::from_secs(1_798_761_599);
        assert_eq!(rfc3339_utc(t), "2026-12-31T23:59:59Z");
    }

    #[test]
    fn default_views_by_port_count() {
        assert_eq!(default_view(1), ViewName::OnePort);
        assert_eq!(default_view(2), ViewName::SingleEnded);
        assert_eq!(default_view(3), ViewName::CentreTapped);
        assert_eq!(default_view(4), ViewName::Transformer);
        assert_eq!(default_view(6), ViewName::SingleEnded);
    }

    fn outcome(status: CheckStatus, severity: Severity) -> CheckOutcome {
        CheckOutcome {
            id: "c".into(),
            rules_file: "r.yaml".into(),
            status,
            severity,
            expr: "x".into(),
            shown: "x".into(),
            worst_f: None,
            hint: None,
            reason: None,
        }
    }

    #[test]
    fn which_outcomes_fail_a_part() {
        use CheckStatus::*;
        use Severity::*;
        assert!(!fails_part(&outcome(Pass, Error), false));
        assert!(fails_part(&outcome(Fail, Error), false));
        assert!(!fails_part(&outcome(Fail, Warning), false));
        assert!(fails_part(&outcome(Fail, Warning), true));
        assert!(fails_part(&outcome(Undecided, Warning), false));
        assert!(fails_part(&outcome(Undecided, Error), false));
    }

    #[test]
    fn summary_counts_and_the_exit_decision() {
        let part = |status| PartReport {
            path: "p".into(),
            status,
            kind: None,
            view: None,
            figures: Default::default(),
            q_drop_cause: None,
            checks: vec![
                outcome(CheckStatus::Fail, Severity::Warning),
                outcome(CheckStatus::Undecided, Severity::Error),
            ],
            drift: vec![],
            new: false,
            error: None,
            plot: None,
        };
        let parts = vec![part(PartStatus::Pass), part(PartStatus::Unchecked)];
        assert!(passed(&parts));
        let s = summarise(&parts);
        assert_eq!((s.parts, s.pass, s.unchecked), (2, 1, 1));
        assert_eq!((s.warnings, s.failed_checks), (2, 2));
        for bad in [
            PartStatus::Fail,
            PartStatus::Unreadable,
            PartStatus::Missing,
        ] {
            assert!(!passed(&[part(PartStatus::Pass), part(bad)]));
        }
    }
}
