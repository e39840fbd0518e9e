//! Report writers: the terminal summary, `report.json` (`lcgate-report/1`), JUnit XML,
//! the Markdown review comment and the self-contained HTML page with SVG plots, plus
//! [`atomic_write`], which every write that matters in the crate goes through.
//!
//! Every writer takes the finished [`RunReport`] and nothing else, so `merge` can redraw
//! all reports from joined `report.json` files. Output is deterministic: the same report
//! gives the same bytes. Only [`RunInfo`](crate::verdict::RunInfo) (the run's time)
//! varies between runs; it appears in the terminal line, the JSON and one separate
//! element of the HTML page, never in `report.xml` or `report.md`.

use std::fs;
use std::io::{self, Write};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};

use crate::verdict::{CheckOutcome, CheckStatus, DriftOutcome, PartReport, RunReport, Severity};

mod html;
mod json;
mod junit;
mod markdown;
pub mod plot;
mod stream;
mod terminal;

pub use html::{html, part_ids as html_part_ids};
pub use json::json;
pub use junit::junit;
pub use markdown::markdown;
pub use stream::{Drawn, ReportStream};
pub use terminal::terminal;

/// File names written by [`write_all`].
pub const REPORT_FILES: [&str; 4] = ["report.json", "report.xml", "report.md", "report.html"];

/// Write `report.json`, `report.xml`, `report.md` and `report.html` into `dir`
/// (created if needed), each atomically, through a [`ReportStream`] (the parts' pieces
/// drawn in parallel). An error names the path that failed.
pub fn write_all(dir: &Path, r: &RunReport) -> io::Result<()> {
    stream::write_report(dir, r)
}

pub(crate) fn with_path(path: &Path, e: io::Error) -> io::Error {
    io::Error::new(e.kind(), format!("{}: {e}", path.display()))
}

static TEMP_COUNTER: AtomicU64 = AtomicU64::new(0);

/// Write `bytes` to `path` so that readers see either the old file or the whole new
/// one, never a part (see [`atomic_write_stream`]). Errors name the path.
pub fn atomic_write(path: &Path, bytes: &[u8]) -> io::Result<()> {
    atomic_write_stream(path, |w| w.write_all(bytes))
}

/// Write what `fill` produces to `path` so that readers see either the old file or the
/// whole new one, never a part: stream it through a buffer into a temporary file in
/// the same folder, fsync it, rename it over `path` (rename is atomic within one file
/// system), then fsync the folder on Unix so the rename itself survives a crash. If
/// `fill` or any step fails, the temporary file is removed and `path` is untouched.
/// Errors name the path.
pub fn atomic_write_stream(
    path: &Path,
    fill: impl FnOnce(&mut dyn Write) -> io::Result<()>,
) -> io::Result<()> {
    replace_file(path, fill, true)
}

/// [`atomic_write_stream`] without the fsyncs, for files whose loss in a crash costs
/// only recomputation (cache entries: a torn one fails its own checks and is rebuilt).
/// Readers still see the old file or the whole new one while the system runs.
pub fn atomic_write_unsynced(
    path: &Path,
    fill: impl FnOnce(&mut dyn Write) -> io::Result<()>,
) -> io::Result<()> {
    replace_file(path, fill, false)
}

fn replace_file(
    path: &Path,
    fill: impl FnOnce(&mut dyn Write) -> io::Result<()>,
    durable: bool,
) -> io::Result<()> {
    let tmp = temp_beside(path)?;
    let result = (|| {
        let f = fs::File::create(&tmp)?;
        let mut w = io::BufWriter::with_capacity(256 * 1024, f);
        fill(&mut w)?;
        w.into_inner().map_err(|e| e.into_error())
    })();
    match result {
        Ok(f) => commit(f, &tmp, path, durable),
        Err(e) => {
            let _ = fs::remove_file(&tmp);
            Err(with_path(path, e))
        }
    }
}

/// A fresh name for a temporary file beside `path` (same folder, so that a rename
/// over `path` stays within one file system): `.NAME.tmp-PID-N`.
pub(crate) fn temp_beside(path: &Path) -> io::Result<PathBuf> {
    let name = path.file_name().ok_or_else(|| {
        io::Error::new(
            io::ErrorKind::InvalidInput,
            format!("{}: not a file path", path.display()),
        )
    })?;
    let n = TEMP_COUNTER.fetch_add(1, Ordering::Relaxed);
    let tmp = format!(".{}.tmp-{}-{n}", name.to_string_lossy(), std::process::id());
    Ok(folder_of(path).join(tmp))
}

/// The folder a file `path` is in ("." for a bare name).
pub(crate) fn folder_of(path: &Path) -> PathBuf {
    match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    }
}

/// Put the written temporary file `tmp` (open as `f`) in place of `path`: fsync it
/// (when `durable`), rename it over `path`, then fsync the folder on Unix so the
/// rename itself survives a crash. On failure `tmp` is removed and `path` untouched.
/// Errors name `path`.
pub(crate) fn commit(f: fs::File, tmp: &Path, path: &Path, durable: bool) -> io::Result<()> {
    let result = (|| {
        if durable {
            f.sync_all()?;
        }
        drop(f);
        fs::rename(tmp, path)
    })();
    if let Err(e) = result {
        let _ = fs::remove_file(tmp);
        return Err(with_path(path, e));
    }
    #[cfg(unix)]
    if durable {
        if let Ok(d) = fs::File::open(folder_of(path)) {
            // Best effort: some file systems refuse fsync on a directory.
            let _ = d.sync_all();
        }
    }
    Ok(())
}

/// The block the bodies of `report.json` and `report.html` are aligned to: the text
/// before a report's parts is padded with spaces to a multiple of it, so that a
/// streamed body can stay where it was written while that text is inserted in front
/// of it (file systems insert whole blocks only; see `stream::Draft`). 4 KiB is the
/// block of the usual Linux file systems; elsewhere the body is copied instead, and
/// the bytes are the same either way.
pub(crate) const BLOCK: u64 = 4096;

/// Spaces that take `len` bytes to the next multiple of [`BLOCK`] (0 on a boundary).
pub(crate) fn block_pad(len: u64) -> u64 {
    (BLOCK - len % BLOCK) % BLOCK
}

/// Write `n` spaces.
pub(crate) fn write_spaces(w: &mut dyn Write, mut n: u64) -> io::Result<()> {
    const SPACES: [u8; 256] = [b' '; 256];
    while n > 0 {
        let k = n.min(SPACES.len() as u64);
        w.write_all(&SPACES[..k as usize])?;
        n -= k;
    }
    Ok(())
}

/// A writer that counts what passes through.
pub(crate) struct Counted<'a> {
    pub w: &'a mut dyn Write,
    /// bytes written so far
    pub n: u64,
}

impl Write for Counted<'_> {
    fn write(&mut self, buf: &[u8]) -> io::Result<usize> {
        let n = self.w.write(buf)?;
        self.n += n as u64;
        Ok(n)
    }
    fn flush(&mut self) -> io::Result<()> {
        self.w.flush()
    }
}

// ---------------------------------------------------------------------------
// Helpers shared by the writers.

/// The report's header: everything but its parts (cheap to copy; the streamed
/// writers start from it).
pub(crate) fn head_of(r: &RunReport) -> RunReport {
    RunReport {
        format: r.format.clone(),
        tool_version: r.tool_version.clone(),
        library: r.library.clone(),
        rules: r.rules.clone(),
        baseline: r.baseline.clone(),
        rules_changed: r.rules_changed.clone(),
        shard: r.shard,
        strict: r.strict,
        summary: r.summary.clone(),
        passed: r.passed,
        parts: Vec::new(),
        run: r.run.clone(),
    }
}

/// A check that fails the run: not passed, and error-level (or any level with `--strict`).
pub(crate) fn is_failure(c: &CheckOutcome, strict: bool) -> bool {
    c.status != CheckStatus::Pass && (c.severity == Severity::Error || strict)
}

/// A check reported as a warning: not passed, warning-level, and not `--strict`.
pub(crate) fn is_warning(c: &CheckOutcome, strict: bool) -> bool {
    c.status != CheckStatus::Pass && c.severity == Severity::Warning && !strict
}

/// The SI unit symbol of a figure by name, for printing bare numbers (drift values,
/// figure tables). `l(band.mid)` is looked up as `l`. Ratios (Q, k, factors) give "".
pub(crate) fn unit_of(quantity: &str) -> &'static str {
    let mut q = quantity.trim();
    for agg in ["min(", "max(", "mean("] {
        if let Some(inner) = q.strip_prefix(agg) {
            q = inner;
        }
    }
    let name = q.split(['(', ' ', ')']).next().unwrap_or(q);
    if name == "il_min" {
        return "dB";
    }
    if let Some(info) = crate::figures::info(name) {
        return info.dim.symbol();
    }
    match name {
        "srf" | "f_q_peak" | "f_q_half" | "f_min" | "f_max" => "Hz",
        n if n.starts_with("srf") || n.starts_with("f_") => "Hz",
        "l" | "ls" | "l1" | "l2" | "m" | "l_low" | "l1_low" | "l2_low" => "H",
        "c" | "cs" | "c_low" => "F",
        n if n.starts_with("cox") || n.starts_with("csi") => "F",
        "r" | "esr" | "rdc" | "rac" => "Ω",
        n if n.starts_with("rsi") => "Ω",
        "il_min" => "dB",
        _ => "",
    }
}

/// A value of the named figure in engineering form (`9.12 GHz`), or `n/a` for null.
pub(crate) fn show_value(quantity: &str, v: Option<f64>) -> String {
    match v {
        None => "n/a".to_string(),
        Some(v) => {
            let unit = unit_of(quantity);
            if unit == "dB" {
                format!("{} dB", crate::units::sig3(v))
            } else {
                crate::units::eng(v, unit)
            }
        }
    }
}

/// The change of a drift entry as printed: `+3.2%` for a relative limit, else the
/// absolute change with the figure's unit.
pub(crate) fn show_change(d: &DriftOutcome) -> String {
    match d.change {
        None => "n/a".to_string(),
        Some(c) if d.limit.trim_end().ends_with('%') => {
            format!(
                "{}{}%",
                if c >= 0.0 { "+" } else { "" },
                crate::units::sig3(c * 100.0)
            )
        }
        Some(c) => format!(
            "{}{}",
            if c >= 0.0 { "+" } else { "" },
            show_value(&d.quantity, Some(c))
        ),
    }
}

/// Size of a drift move for ordering, comparable across entries: the relative change
/// when both values are known, else the magnitude of the recorded change.
pub(crate) fn drift_size(d: &DriftOutcome) -> f64 {
    let rel = match (d.baseline, d.now) {
        (Some(b), Some(n)) if b != 0.0 => Some(((n - b) / b).abs()),
        _ => None,
    };
    let s = rel.or(d.change.map(f64::abs)).unwrap_or(f64::INFINITY);
    if s.is_nan() {
        f64::INFINITY
    } else {
        s
    }
}

/// Drift entries of these parts, failing (or undecided) first, then largest move first,
/// then by path and quantity so that ties are ordered the same way every time.
pub(crate) fn drift_moves_of(parts: &[PartReport]) -> Vec<(&PartReport, &DriftOutcome)> {
    let mut v: Vec<(&PartReport, &DriftOutcome)> = parts
        .iter()
        .flat_map(|p| p.drift.iter().map(move |d| (p, d)))
        .collect();
    v.sort_by(|a, b| {
        let fa = a.1.status != CheckStatus::Pass;
        let fb = b.1.status != CheckStatus::Pass;
        fb.cmp(&fa)
            .then(drift_size(b.1).total_cmp(&drift_size(a.1)))
            .then(a.0.path.cmp(&b.0.path))
            .then(a.1.quantity.cmp(&b.1.quantity))
    });
    v
}

/// Moves worth listing: failing ones, and passing ones that moved at all.
pub(crate) fn drift_listed(r: &RunReport) -> Vec<(&PartReport, &DriftOutcome)> {
    drift_listed_of(&r.parts)
}

/// [`drift_listed`] of some parts.
pub(crate) fn drift_listed_of(parts: &[PartReport]) -> Vec<(&PartReport, &DriftOutcome)> {
    drift_moves_of(parts)
        .into_iter()
        .filter(|(_, d)| d.status != CheckStatus::Pass || d.change.is_some_and(|c| c != 0.0))
        .collect()
}

/// Rules-file paths in report order: those listed in `r.rules`, then any path a check
/// names that is not listed (so nothing is dropped), sorted.
pub(crate) fn rules_order(r: &RunReport) -> Vec<String> {
    let mut v: Vec<String> = r.rules.iter().map(|i| i.path.clone()).collect();
    let mut extra: Vec<String> = r
        .parts
        .iter()
        .flat_map(|p| p.checks.iter().map(|c| c.rules_file.clone()))
        .filter(|f| !v.contains(f))
        .collect();
    extra.sort();
    extra.dedup();
    v.extend(extra);
    v
}

/// The suite title of a rules file, if the report lists it.
pub(crate) fn suite_of<'a>(r: &'a RunReport, path: &str) -> Option<&'a str> {
    r.rules
        .iter()
        .find(|i| i.path == path)
        .map(|i| i.suite.as_str())
        .filter(|s| !s.is_empty())
}

/// One-line count of the run, shared by the terminal and Markdown reports.
pub(crate) fn count_line(r: &RunReport) -> String {
    let s = &r.summary;
    let mut parts = vec![format!("{} pass", s.pass), format!("{} fail", s.fail)];
    for (n, w) in [
        (s.unreadable, "unreadable"),
        (s.unchecked, "unchecked"),
        (s.missing, "missing"),
        (s.new, "new"),
    ] {
        if n > 0 {
            parts.push(format!("{n} {w}"));
        }
    }
    let mut line = format!(
        "{} {}: {}",
        s.parts,
        plural(s.parts, "part", "parts"),
        parts.join(", ")
    );
    line.push_str(&format!(
        "; {} failed {}",
        s.failed_checks,
        plural(s.failed_checks, "check", "checks")
    ));
    if s.warnings > 0 {
        line.push_str(&format!(
            ", {} {}",
            s.warnings,
            plural(s.warnings, "warning", "warnings")
        ));
    }
    line
}

pub(crate) fn plural<'a>(n: usize, one: &'a str, many: &'a str) -> &'a str {
    if n == 1 {
        one
    } else {
        many
    }
}

/// Word for a check status in reports.
pub(crate) fn check_word(s: CheckStatus) -> &'static str {
    match s {
        CheckStatus::Pass => "pass",
        CheckStatus::Fail => "fail",
        CheckStatus::Undecided => "undecided",
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn block_pad_reaches_the_next_block_boundary() {
        for len in [0, 1, 100, 4095, 4096, 4097, 12_287, 12_288, 1_000_000] {
            let pad = block_pad(len);
            assert!(pad < BLOCK, "{len}");
            assert_eq!((len + pad) % BLOCK, 0, "{len}");
        }
        let mut out = Vec::new();
        write_spaces(&mut out, 1000).unwrap();
        assert_eq!(out, vec![b' '; 1000]);
    }

    #[test]
    fn units_by_figure_name() {
        assert_eq!(unit_of("srf"), "Hz");
        assert_eq!(unit_of("l(band.mid)"), "H");
        assert_eq!(unit_of("q_peak"), "");
        assert_eq!(unit_of("min(q(band))"), "");
        assert_eq!(unit_of("max(l(band))"), "H");
        assert_eq!(unit_of("rsi1"), "Ω");
        assert_eq!(unit_of("cox2"), "F");
        assert_eq!(show_value("srf", Some(9.123e9)), "9.12 GHz");
        assert_eq!(show_value("srf", None), "n/a");
    }

    #[test]
    fn change_printing() {
        let mut d = DriftOutcome {
            quantity: "q_peak".into(),
            baseline: Some(10.0),
            now: Some(9.5),
            change: Some(-0.05),
            limit: "3%".into(),
            status: CheckStatus::Fail,
        };
        assert_eq!(show_change(&d), "-5%");
        d.quantity = "l(band.mid)".into();
        d.limit = "50pH".into();
        d.change = Some(20e-12);
        assert_eq!(show_change(&d), "+20 pH");
        assert!((drift_size(&d) - 0.05).abs() < 1e-12);
    }

    #[test]
    fn atomic_write_replaces_and_names_path() {
        let dir = tempfile::tempdir().expect("tempdir");
        let p = dir.path().join("a.txt");
        atomic_write(&p, b"one").expect("write");
        atomic_write(&p, b"two").expect("write");
        assert_eq!(fs::read(&p).expect("read"), b"two");
        // no temporary files left behind
        let names: Vec<_> = fs::read_dir(dir.path())
            .expect("list")
            .map(|e| e.expect("entry").file_name())
            .collect();
        assert_eq!(names.len(), 1);
        let bad = dir.path().join("no-such-dir").join("x.txt");
        let e = atomic_write(&bad, b"x").expect_err("must fail");
        assert!(e.to_string().contains("no-such-dir"), "{e}");
    }
}
