//! Command-line parsing (clap), progress and exit codes. Thin: each command hands
//! over to the library modules; errors are printed here, at the edge, with context.

use std::io::{IsTerminal, Write};
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::{Path, PathBuf};
use std::process::ExitCode;

use clap::{Args, Parser, Subcommand};

use crate::baseline::memo::{Remembered, RunInputs, RunMemo};
use crate::pipeline::{self, CacheChoice, Keep, NoSink, Progress, RunOptions};

pub mod inspect;

/// Exit status: every part passed every error-level check, no drift.
pub const EXIT_PASS: u8 = 0;
/// Exit status: a failure, undecided check, unreadable or missing part, or drift.
pub const EXIT_FAIL: u8 = 1;
/// Exit status: the run itself could not be made.
pub const EXIT_ERROR: u8 = 2;

/// Library folder used when none is given and it exists here.
pub const DEFAULT_LIBRARY: &str = "sample-library";
/// Rules folder used when `--rules` is not given and it exists here.
pub const DEFAULT_RULES: &str = "rules";

/// Sign-off gate for libraries of on-chip passives characterised as Touchstone files.
#[derive(Debug, Parser)]
#[command(name = "lcgate", version, about, long_about = None, propagate_version = true)]
pub struct Cli {
    /// what to do
    #[command(subcommand)]
    pub command: Command,
}

/// The commands of DESIGN §3.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Judge every part of a library against the rules and report pass/fail.
    Check(CheckArgs),
    /// Print every figure of every view of one Touchstone file.
    Inspect(inspect::InspectArgs),
    /// Accept today's figures as the baseline for later drift checks.
    Record(RecordArgs),
    /// Join the report.json files of shards into one verdict and one set of reports.
    Merge(MergeArgs),
    /// Load and type-check rules files; run nothing.
    Validate(ValidateArgs),
}

/// Options shared by the commands that walk a library.
#[derive(Debug, Clone, Args)]
pub struct WalkArgs {
    /// rules files or folders (every *.yaml inside, sorted) [default: ./rules if it exists]
    #[arg(long, value_name = "PATH", num_args = 1..)]
    pub rules: Vec<PathBuf>,
    /// worker threads [default: one per core]
    #[arg(long, short = 'j', value_name = "N", value_parser = parse_jobs)]
    pub jobs: Option<usize>,
    /// follow symbolic links while walking the library (loops are reported)
    #[arg(long)]
    pub follow_links: bool,
    /// no progress bar
    #[arg(long, short = 'q')]
    pub quiet: bool,
}

/// `lcgate check`.
#[derive(Debug, Clone, Args)]
pub struct CheckArgs {
    /// library folder (or one Touchstone file) [default: ./sample-library if it exists]
    #[arg(value_name = "LIBRARY")]
    pub library: Option<PathBuf>,
    #[command(flatten)]
    pub walk: WalkArgs,
    /// compare figures against this baseline (from `lcgate record`)
    #[arg(long, value_name = "FILE")]
    pub baseline: Option<PathBuf>,
    /// write report.json, report.xml (JUnit XML), report.md and report.html here
    #[arg(long, value_name = "DIR")]
    pub report: Option<PathBuf>,
    /// judge only the K-th of N stable shares of the parts (K from 1)
    #[arg(long, value_name = "K/N", value_parser = parse_shard)]
    pub shard: Option<[usize; 2]>,
    /// do not read or write the content-hash cache
    #[arg(long)]
    pub no_cache: bool,
    /// cache folder [default: LIBRARY/.lcgate-cache]
    #[arg(long, value_name = "DIR", conflicts_with = "no_cache")]
    pub cache: Option<PathBuf>,
    /// warnings fail the run too
    #[arg(long)]
    pub strict: bool,
}

/// `lcgate record`.
#[derive(Debug, Clone, Args)]
pub struct RecordArgs {
    /// library folder [default: ./sample-library if it exists]
    #[arg(value_name = "LIBRARY")]
    pub library: Option<PathBuf>,
    #[command(flatten)]
    pub walk: WalkArgs,
    /// baseline file to write
    #[arg(long, short = 'o', value_name = "FILE")]
    pub output: PathBuf,
}

/// `lcgate merge`.
#[derive(Debug, Clone, Args)]
pub struct MergeArgs {
    /// report.json files of the shards
    #[arg(value_name = "RESULT.json", required = true, num_args = 1..)]
    pub results: Vec<PathBuf>,
    /// write the joined reports here
    #[arg(long, value_name = "DIR")]
    pub report: Option<PathBuf>,
}

/// `lcgate validate`.
#[derive(Debug, Clone, Args)]
pub struct ValidateArgs {
    /// rules files or folders [default: ./rules if it exists]
    #[arg(long, value_name = "PATH", num_args = 1..)]
    pub rules: Vec<PathBuf>,
}

fn parse_jobs(s: &str) -> Result<usize, String> {
    match s.trim().parse::<usize>() {
        Ok(n) if n >= 1 => Ok(n),
        _ => Err(format!(
            "expected a whole number of threads ≥ 1, found `{s}`"
        )),
    }
}

/// `K/N` with 1 ≤ K ≤ N.
pub fn parse_shard(s: &str) -> Result<[usize; 2], String> {
    let bad = || format!("expected K/N with 1 ≤ K ≤ N (like 2/4), found `{s}`");
    let (k, n) = s.split_once('/').ok_or_else(bad)?;
    let k: usize = k.trim().parse().map_err(|_| bad())?;
    let n: usize = n.trim().parse().map_err(|_| bad())?;
    if k == 0 || n == 0 || k > n {
        return Err(bad());
    }
    Ok([k, n])
}

/// An error that ends the command with exit status 2, printed once at the edge.
#[derive(Debug)]
pub struct Fatal(pub String);

impl<E: std::fmt::Display> From<E> for Fatal {
    fn from(e: E) -> Self {
        Fatal(e.to_string())
    }
}

/// Entry point of the binary: parse, run, and map the outcome to an exit code.
/// A panic is a bug: it is caught here as a last resort and ends with status 2,
/// never 101.
pub fn main() -> ExitCode {
    let args: Vec<std::ffi::OsString> = std::env::args_os().collect();
    match catch_unwind(AssertUnwindSafe(|| run_args(args))) {
        Ok(code) => ExitCode::from(code),
        Err(_) => {
            eprintln!(
                "lcgate: internal error (a bug): please report it with the command line and input"
            );
            ExitCode::from(EXIT_ERROR)
        }
    }
}

/// Parse `args` (with the program name first) and run; returns the exit status.
pub fn run_args(args: Vec<std::ffi::OsString>) -> u8 {
    let cli = match Cli::try_parse_from(args) {
        Ok(c) => c,
        Err(e) => {
            let code = if e.use_stderr() {
                EXIT_ERROR
            } else {
                EXIT_PASS
            };
            let _ = e.print();
            return code;
        }
    };
    let result = match cli.command {
        Command::Check(a) => check(&a),
        Command::Inspect(a) => Ok(inspect::run(&a)),
        Command::Record(a) => record(&a),
        Command::Merge(a) => merge(&a),
        Command::Validate(a) => validate(&a),
    };
    match result {
        Ok(code) => code,
        Err(Fatal(msg)) => {
            eprintln!("lcgate: error: {msg}");
            EXIT_ERROR
        }
    }
}

/// The library as given, or `sample-library` when it exists here.
fn library_or_default(given: &Option<PathBuf>) -> Result<PathBuf, Fatal> {
    if let Some(p) = given {
        return Ok(p.clone());
    }
    let d = Path::new(DEFAULT_LIBRARY);
    if d.is_dir() {
        Ok(d.to_path_buf())
    } else {
        Err(Fatal(format!(
            "no library given, and there is no `{DEFAULT_LIBRARY}` folder here: \
             name the library folder (lcgate check LIBRARY --rules PATH)"
        )))
    }
}

/// The rules as given, or `rules` when it exists here.
fn rules_or_default(given: &[PathBuf]) -> Result<Vec<PathBuf>, Fatal> {
    if !given.is_empty() {
        return Ok(given.to_vec());
    }
    let d = Path::new(DEFAULT_RULES);
    if d.is_dir() {
        Ok(vec![d.to_path_buf()])
    } else {
        Err(Fatal(format!(
            "no rules given, and there is no `{DEFAULT_RULES}` folder here: pass --rules PATH"
        )))
    }
}

/// Colour on stdout only for a terminal, and never when `NO_COLOR` is set
/// (no-color.org: any non-empty value).
fn stdout_colour() -> bool {
    std::io::stdout().is_terminal() && std::env::var_os("NO_COLOR").is_none_or(|v| v.is_empty())
}

/// Write to stdout; a closed pipe (`lcgate check | head`) is not an error.
fn print_out(text: &str) -> Result<(), Fatal> {
    let mut out = std::io::stdout().lock();
    match out.write_all(text.as_bytes()).and_then(|_| out.flush()) {
        Ok(()) => Ok(()),
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => Ok(()),
        Err(e) => Err(Fatal(format!("cannot write to stdout: {e}"))),
    }
}

/// A progress bar on stderr, drawn only on a terminal and without `--quiet`.
struct Bar(indicatif::ProgressBar);

impl Bar {
    fn new(quiet: bool) -> Bar {
        if quiet || !std::io::stderr().is_terminal() {
            return Bar(indicatif::ProgressBar::hidden());
        }
        let pb = indicatif::ProgressBar::new(0);
        if let Ok(style) = indicatif::ProgressStyle::with_template(
            "{spinner} judging parts {bar:30} {pos}/{len} {elapsed} {wide_msg}",
        ) {
            pb.set_style(style);
        }
        Bar(pb)
    }
}

impl Progress for Bar {
    fn begin(&self, parts: usize) {
        self.0.set_length(parts as u64);
    }
    fn part_done(&self, path: &str) {
        self.0.set_message(path.to_string());
        self.0.inc(1);
    }
}

fn check(a: &CheckArgs) -> Result<u8, Fatal> {
    let opts = RunOptions {
        library: library_or_default(&a.library)?,
        rules: rules_or_default(&a.walk.rules)?,
        baseline: a.baseline.clone(),
        jobs: a.walk.jobs,
        shard: a.shard,
        cache: match (&a.cache, a.no_cache) {
            (_, true) => CacheChoice::Off,
            (Some(d), false) => CacheChoice::Dir(d.clone()),
            (None, false) => CacheChoice::Default,
        },
        strict: a.strict,
        follow_links: a.walk.follow_links,
    };
    let colour = stdout_colour();
    let started = std::time::SystemTime::now();
    let memo = run_memo(&opts, a, colour, started);
    if let Some(hit) = memo.as_ref().and_then(RunMemo::lookup) {
        if !a.walk.quiet {
            for n in &hit.notes {
                eprintln!("lcgate: note: {n}");
            }
            eprintln!(
                "lcgate: note: nothing the run depends on changed since the run of {}; its verdict is repeated (--no-cache recomputes)",
                hit.started
            );
        }
        print_out(&hit.stdout)?;
        return Ok(hit.exit);
    }
    // the reports are drawn while the parts are judged (report::ReportStream), so
    // only the parts a summary names stay in memory
    let cannot_write = |dir: &std::path::Path, e: std::io::Error| {
        Fatal(format!(
            "cannot write the reports to `{}`: {e}",
            dir.display()
        ))
    };
    let mut stream = match &a.report {
        None => None,
        Some(dir) => {
            std::fs::create_dir_all(dir).map_err(|e| {
                Fatal(format!(
                    "cannot create the report folder `{}`: {e}",
                    dir.display()
                ))
            })?;
            // a folder that cannot be written fails the command after the verdict
            // is printed, as a failed write at the end does
            Some(crate::report::ReportStream::new(dir))
        }
    };
    let bar = Bar::new(a.walk.quiet);
    let outcome = match &mut stream {
        Some(Ok(s)) => pipeline::run_into(&opts, &bar, s, Keep::Notable),
        _ => pipeline::run_into(&opts, &bar, &mut NoSink, Keep::Notable),
    };
    bar.0.finish_and_clear();
    let outcome = outcome?;
    if !a.walk.quiet {
        for n in &outcome.notes {
            eprintln!("lcgate: note: {n}");
        }
    }
    let report = &outcome.report;
    let stdout = crate::report::terminal(report, colour);
    print_out(&stdout)?;
    if let (Some(dir), Some(stream)) = (&a.report, stream) {
        stream
            .and_then(|s| s.finish(report))
            .map_err(|e| cannot_write(dir, e))?;
    }
    let exit = if report.passed { EXIT_PASS } else { EXIT_FAIL };
    if let Some(memo) = &memo {
        let run = Remembered {
            stdout,
            notes: outcome.notes.clone(),
            exit,
            started: report.run.started.clone(),
        };
        // a memo that cannot be stored only costs the next run its shortcut
        let _ = memo.store(&run, &crate::report::REPORT_FILES);
    }
    Ok(exit)
}

/// The memo of this run (see [`crate::baseline::memo`]), unless the cache is off or the
/// rules or the library cannot be read (the run itself then says why).
fn run_memo(
    opts: &RunOptions,
    a: &CheckArgs,
    colour: bool,
    started: std::time::SystemTime,
) -> Option<RunMemo> {
    let dir = match &opts.cache {
        CacheChoice::Off => return None,
        CacheChoice::Default => crate::baseline::Cache::default_dir(&opts.library),
        CacheChoice::Dir(d) => d.clone(),
    };
    let rules = crate::rules::load(&opts.rules).ok()?;
    let walk = crate::library::walk(
        &opts.library,
        &crate::library::WalkOptions {
            follow_links: opts.follow_links,
        },
    )
    .ok()?;
    let infos = rules.infos();
    let presentation = format!("colour={colour} quiet={}", a.walk.quiet);
    let inputs = RunInputs {
        library: &opts.library,
        rules: &infos,
        baseline: opts.baseline.as_deref(),
        shard: opts.shard,
        strict: opts.strict,
        follow_links: opts.follow_links,
        report_dir: a.report.as_deref(),
        presentation: &presentation,
    };
    // the memo's stats run on as many threads as the parts are judged on
    let memo = || RunMemo::new(&dir, &inputs, &walk, started);
    match opts.jobs {
        Some(jobs) => rayon::ThreadPoolBuilder::new()
            .num_threads(jobs)
            .build()
            .ok()
            .map(|pool| pool.install(memo)),
        None => Some(memo()),
    }
}

fn record(a: &RecordArgs) -> Result<u8, Fatal> {
    let opts = RunOptions {
        library: library_or_default(&a.library)?,
        rules: rules_or_default(&a.walk.rules)?,
        jobs: a.walk.jobs,
        follow_links: a.walk.follow_links,
        ..RunOptions::default()
    };
    let bar = Bar::new(a.walk.quiet);
    let done = pipeline::record(&opts, &a.output, &bar);
    bar.0.finish_and_clear();
    let done = done?;
    if !a.walk.quiet {
        for n in &done.notes {
            eprintln!("lcgate: note: {n}");
        }
    }
    print_out(&format!(
        "recorded {} parts of `{}` as the baseline `{}`\n",
        done.baseline.parts.len(),
        opts.library.display(),
        a.output.display()
    ))?;
    Ok(EXIT_PASS)
}

fn merge(a: &MergeArgs) -> Result<u8, Fatal> {
    // the joining and its refusals live in baseline::merge; here only files and output
    let mut inputs = Vec::with_capacity(a.results.len());
    for p in &a.results {
        let report = crate::baseline::merge::load_report(p)?;
        inputs.push((p.to_string_lossy().into_owned(), report));
    }
    let report = crate::baseline::merge(inputs)?;
    print_out(&crate::report::terminal(&report, stdout_colour()))?;
    if let Some(dir) = &a.report {
        crate::report::write_all(dir, &report).map_err(|e| {
            Fatal(format!(
                "cannot write the reports to `{}`: {e}",
                dir.display()
            ))
        })?;
    }
    Ok(if report.passed { EXIT_PASS } else { EXIT_FAIL })
}

fn validate(a: &ValidateArgs) -> Result<u8, Fatal> {
    let rules = rules_or_default(&a.rules)?;
    match crate::rules::validate(&rules) {
        Ok(summary) => {
            print_out(&summary)?;
            if !summary.ends_with('\n') {
                print_out("\n")?;
            }
            Ok(EXIT_PASS)
        }
        Err(e) => {
            eprintln!("{e}");
            eprintln!("lcgate: error: the rules do not load");
            Ok(EXIT_ERROR)
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use clap::CommandFactory;

    #[test]
    fn the_command_line_is_consistent() {
        Cli::command().debug_assert();
    }

    #[test]
    fn shards_and_jobs_are_checked() {
        assert_eq!(parse_shard("2/4"), Ok([2, 4]));
        assert_eq!(parse_shard("1/1"), Ok([1, 1]));
        for bad in ["0/4", "5/4", "2", "a/b", "2/0", ""] {
            assert!(parse_shard(bad).is_err(), "{bad}");
        }
        assert_eq!(parse_jobs("3"), Ok(3));
        assert!(parse_jobs("0").is_err());
        assert!(parse_jobs("-1").is_err());
    }

    #[test]
    fn check_takes_every_option_of_the_design() {
        let cli = Cli::try_parse_from([
            "lcgate",
            "check",
            "lib",
            "--rules",
            "a.yaml",
            "b",
            "--baseline",
            "base.json",
            "--report",
            "out",
            "--jobs",
            "4",
            "--shard",
            "1/2",
            "--strict",
            "--quiet",
            "--follow-links",
            "--cache",
            "c",
        ])
        .unwrap();
        let Command::Check(a) = cli.command else {
            panic!("not check");
        };
        assert_eq!(a.library, Some(PathBuf::from("lib")));
        assert_eq!(a.walk.rules, [PathBuf::from("a.yaml"), PathBuf::from("b")]);
        assert_eq!(a.walk.jobs, Some(4));
        assert_eq!(a.shard, Some([1, 2]));
        assert!(a.strict && a.walk.quiet && a.walk.follow_links && !a.no_cache);
        assert!(Cli::try_parse_from(["lcgate", "check", "--no-cache", "--cache", "x"]).is_err());
        assert!(Cli::try_parse_from(["lcgate", "merge"]).is_err());
        assert!(Cli::try_parse_from(["lcgate", "record", "lib"]).is_err());
    }

    #[test]
    fn usage_errors_exit_2_and_help_exits_0() {
        assert_eq!(
            run_args(vec!["lcgate".into(), "frobnicate".into()]),
            EXIT_ERROR
        );
        assert_eq!(
            run_args(vec![
                "lcgate".into(),
                "check".into(),
                "--jobs".into(),
                "0".into()
            ]),
            EXIT_ERROR
        );
        assert_eq!(
            run_args(vec!["lcgate".into(), "--version".into()]),
            EXIT_PASS
        );
    }
}
