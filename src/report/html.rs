//! `report.html`: one self-contained page (inline CSS, inline SVG, a short inline script
//! for sorting and filtering; nothing is fetched). A verdict banner and the run's
//! facts, a sortable and filterable table of parts, what changed since the baseline,
//! then one section per part with its checks, plots and figures. Light and dark follow
//! the reader's colour preference; print hides the controls and keeps plots whole.
//!
//! The page is deterministic except for one element, `#run-time`, which carries the
//! run's start time and duration.

use std::collections::{BTreeMap, BTreeSet};
use std::fmt::Write as _;

use rayon::prelude::*;

use crate::units::{eng, push_eng, sig3};
use crate::verdict::{CheckStatus, PartReport, PartStatus, PlotData, RunReport, Severity};

use super::plot::{auto_range, svg_charts_into, Chart, Line, Mark};
use super::{check_word, count_line, drift_listed_of, is_failure, show_change, show_value};

/// The HTML page.
pub fn html(r: &RunReport) -> String {
    let mut out = Vec::with_capacity(64 * 1024 + r.parts.len() * 12 * 1024);
    // writing into a Vec cannot fail
    let _ = html_to(r, &mut out);
    String::from_utf8(out).unwrap_or_default()
}

/// Parts whose sections are drawn together (in parallel) before being written out:
/// enough to keep both cores busy, few enough that a large library's page is never
/// held whole in memory.
const SECTION_CHUNK: usize = 64;

/// Write the HTML page to `w`.
pub fn html_to(r: &RunReport, w: &mut dyn std::io::Write) -> std::io::Result<()> {
    let ids = part_ids(r);
    let mut kinds = BTreeSet::new();
    let mut folders = BTreeSet::new();
    let mut rows = Vec::new();
    let mut sections = Vec::new();
    // each part's row and section (three charts) depend on nothing but the part: a
    // chunk of them is drawn in parallel, then kept in path order, so the page is the
    // same for any thread count
    for (parts, ids) in r.parts.chunks(SECTION_CHUNK).zip(ids.chunks(SECTION_CHUNK)) {
        let drawn: Vec<PagePart> = parts
            .par_iter()
            .zip(ids.par_iter())
            .map(|(p, id)| page_part(r.strict, p, id))
            .collect();
        for d in drawn {
            kinds.insert(d.kind);
            folders.insert(d.folder);
            rows.extend_from_slice(d.row.as_bytes());
            sections.extend_from_slice(d.section.as_bytes());
        }
    }
    let id_of: BTreeMap<&str, &str> = r
        .parts
        .iter()
        .zip(&ids)
        .map(|(p, id)| (p.path.as_str(), id.as_str()))
        .collect();
    let page = Page {
        head: r,
        kept: &r.parts,
        id_of: &|path| id_of.get(path).map(|s| s.to_string()),
        kinds: &kinds,
        folders: &folders,
    };
    page.write(
        w,
        rows.len() as u64,
        |w| w.write_all(&rows),
        |w| w.write_all(&sections),
    )
}

/// What the page holds of one part: its row in the table of parts, its section, and
/// the kind and folder it adds to the table's filters.
pub(crate) struct PagePart {
    pub kind: String,
    pub folder: String,
    pub row: String,
    pub section: String,
}

/// Draw one part's row and section (`id`: its element id, see [`part_ids`]).
pub(crate) fn page_part(strict: bool, p: &PartReport, id: &str) -> PagePart {
    let mut row = String::with_capacity(512);
    part_row(&mut row, strict, p, id);
    let mut section = String::with_capacity(12 * 1024);
    part_section(&mut section, strict, p, id);
    PagePart {
        kind: p.kind.map(|k| k.as_str()).unwrap_or("unknown").to_string(),
        folder: folder_of(&p.path).to_string(),
        row,
        section,
    }
}

/// The page around its parts' rows and sections, which stream in from elsewhere.
pub(crate) struct Page<'a> {
    /// the report's header (its counts final)
    pub head: &'a RunReport,
    /// the parts the page lists beyond rows and sections: those with drift (every
    /// part whose drift moved must be here)
    pub kept: &'a [PartReport],
    /// a part's element id by path
    pub id_of: &'a dyn Fn(&str) -> Option<String>,
    /// every kind and folder of the table's rows, for its filters
    pub kinds: &'a BTreeSet<String>,
    pub folders: &'a BTreeSet<String>,
}

impl Page<'_> {
    /// Write the page: `rows` writes the table's rows (`rows_len` bytes) and
    /// `sections` the parts' sections, in path order.
    pub(crate) fn write(
        &self,
        w: &mut dyn std::io::Write,
        rows_len: u64,
        rows: impl FnOnce(&mut dyn std::io::Write) -> std::io::Result<()>,
        sections: impl FnOnce(&mut dyn std::io::Write) -> std::io::Result<()>,
    ) -> std::io::Result<()> {
        self.opening(rows_len).write(w, rows)?;
        sections(w)?;
        w.write_all(closing().as_bytes())
    }

    /// The page up to the parts' sections with rows of `rows_len` bytes. It takes a
    /// whole number of blocks, so that a streamed page's sections can stay where they
    /// were written (see [`super::BLOCK`]): the padding is spaces at the end of the
    /// `#run-time` element, the one place where the page varies from run to run anyway
    /// (the browser collapses them).
    pub(crate) fn opening(&self, rows_len: u64) -> Opening {
        let middle = self.middle();
        let unpadded = self.top(0).len() as u64 + rows_len + middle.len() as u64;
        Opening {
            top: self.top(super::block_pad(unpadded)),
            middle,
            rows_len,
        }
    }

    /// The page up to the table's rows, `pad` spaces in the run's time.
    fn top(&self, pad: u64) -> String {
        let r = self.head;
        let mut o = String::with_capacity(64 * 1024);
        let verdict = if r.passed { "PASS" } else { "FAIL" };
        let _ = writeln!(
            o,
            "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n<title>lcgate {verdict}: {}</title>\n<style>{CSS}</style>\n</head>\n<body>",
            esc(&r.library)
        );

        // Banner: the parts that are neither passed nor unchecked
        let s = &r.summary;
        let attention = s.fail + s.unreadable + s.missing;
        let _ = writeln!(
            o,
            "<header id=\"verdict\" class=\"banner {}\"><h1>{verdict}</h1><p>{}</p></header>\n<main>",
            if r.passed { "ok" } else { "bad" },
            if attention == 0 {
                format!("All {} parts pass.", s.parts)
            } else {
                format!(
                    "{attention} of {} {} need attention.",
                    s.parts,
                    if s.parts == 1 { "part" } else { "parts" }
                )
            }
        );

        summary(&mut o, r, pad);
        table_head(&mut o, self.kinds, self.folders);
        o
    }

    /// The page between the table's rows and the parts' sections (before the padding).
    fn middle(&self) -> String {
        let mut o = String::with_capacity(4096);
        let _ = writeln!(o, "</tbody></table>\n</section>");
        changed(&mut o, self.head.baseline.is_some(), self.kept, self.id_of);
        let _ = writeln!(o, "<h2 id=\"details\">Parts in detail</h2>");
        o
    }
}

/// The page up to the parts' sections, around the table's rows ([`Page::opening`]).
pub(crate) struct Opening {
    top: String,
    middle: String,
    rows_len: u64,
}

impl Opening {
    /// Its length in bytes, rows included: a whole number of blocks.
    pub(crate) fn len(&self) -> u64 {
        self.top.len() as u64 + self.rows_len + self.middle.len() as u64
    }

    /// Write it, `rows` writing the table's rows (of the length it was made for).
    pub(crate) fn write(
        &self,
        w: &mut dyn std::io::Write,
        rows: impl FnOnce(&mut dyn std::io::Write) -> std::io::Result<()>,
    ) -> std::io::Result<()> {
        w.write_all(self.top.as_bytes())?;
        let mut counted = super::Counted { w: &mut *w, n: 0 };
        rows(&mut counted)?;
        if counted.n != self.rows_len {
            return Err(std::io::Error::other("the table's rows changed length"));
        }
        w.write_all(self.middle.as_bytes())
    }
}

/// The page after the parts' sections.
pub(crate) fn closing() -> String {
    format!("</main>\n<script>{SCRIPT}</script>\n</body>\n</html>\n")
}

/// Element ids of the parts' sections: `part-` and the path with anything but letters,
/// digits, `-` and `_` replaced by `-`; a number is added if two paths collide.
pub fn part_ids(r: &RunReport) -> Vec<String> {
    let mut ids = PartIds::default();
    r.parts.iter().map(|p| ids.next(&p.path)).collect()
}

/// Hands out [`part_ids`] one path at a time, in the page's order.
#[derive(Default)]
pub(crate) struct PartIds {
    seen: BTreeSet<String>,
}

impl PartIds {
    /// The id of the next part, by its path.
    pub(crate) fn next(&mut self, path: &str) -> String {
        let base = format!("part-{}", slug(path));
        let mut id = base.clone();
        let mut k = 2;
        while !self.seen.insert(id.clone()) {
            id = format!("{base}-{k}");
            k += 1;
        }
        id
    }
}

/// A path with anything but letters, digits, `-` and `_` replaced by `-`.
pub(crate) fn slug(path: &str) -> String {
    path.chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '-' || c == '_' {
                c
            } else {
                '-'
            }
        })
        .collect()
}

fn esc(s: &str) -> String {
    let mut o = String::with_capacity(s.len() + 8);
    push_esc(&mut o, s);
    o
}

/// [`esc`] appended to `o`: the runs between special characters copied whole.
fn push_esc(o: &mut String, s: &str) {
    let mut rest = s;
    while let Some(i) = rest
        .bytes()
        .position(|b| matches!(b, b'&' | b'<' | b'>' | b'"' | b'\''))
    {
        o.push_str(&rest[..i]);
        o.push_str(match rest.as_bytes()[i] {
            b'&' => "&amp;",
            b'<' => "&lt;",
            b'>' => "&gt;",
            b'"' => "&quot;",
            _ => "&#39;",
        });
        rest = &rest[i + 1..];
    }
    o.push_str(rest);
}

fn folder_of(path: &str) -> &str {
    path.rsplit_once('/').map(|(d, _)| d).unwrap_or(".")
}

/// `pad`: spaces at the end of the run's time (see [`Page::write_opening`]).
fn summary(o: &mut String, r: &RunReport, pad: u64) {
    let s = &r.summary;
    let _ = write!(
        o,
        "<section id=\"summary\"><h2>Summary</h2>\n<p class=\"counts-line\">{}.</p>\n<ul class=\"counts\">",
        esc(&count_line(r))
    );
    for (n, st) in [
        (s.pass, "pass"),
        (s.fail, "fail"),
        (s.unreadable, "unreadable"),
        (s.unchecked, "unchecked"),
        (s.missing, "missing"),
    ] {
        let _ = write!(
            o,
            "<li class=\"st-{st}\"><span class=\"n\">{n}</span> {st}</li>"
        );
    }
    if s.new > 0 {
        let _ = write!(
            o,
            "<li class=\"st-new\"><span class=\"n\">{}</span> new</li>",
            s.new
        );
    }
    let _ = write!(o, "</ul>\n<dl class=\"facts\">");
    let _ = write!(
        o,
        "<dt>Library</dt><dd><code>{}</code></dd>",
        esc(&r.library)
    );
    let _ = write!(o, "<dt>Rules</dt><dd><table class=\"rules\"><thead><tr><th>file</th><th>suite</th><th>hash (blake3)</th></tr></thead><tbody>");
    for i in &r.rules {
        let _ = write!(
            o,
            "<tr><td><code>{}</code></td><td>{}</td><td><code title=\"{}\">{}</code></td></tr>",
            esc(&i.path),
            esc(&i.suite),
            esc(&i.hash),
            esc(i.hash.get(..16).unwrap_or(&i.hash))
        );
    }
    let _ = write!(o, "</tbody></table></dd>");
    let _ = write!(
        o,
        "<dt>Baseline</dt><dd>{}</dd>",
        match &r.baseline {
            Some(b) => format!("<code>{}</code>", esc(b)),
            None => "none (no drift compared)".to_string(),
        }
    );
    if !r.rules_changed.is_empty() {
        let _ = write!(
            o,
            "<dt>Rules changed since baseline</dt><dd>{}</dd>",
            r.rules_changed
                .iter()
                .map(|p| format!("<code>{}</code>", esc(p)))
                .collect::<Vec<_>>()
                .join(", ")
        );
    }
    if let Some([k, n]) = r.shard {
        let _ = write!(o, "<dt>Shard</dt><dd>{k} of {n}</dd>");
    }
    let _ = write!(
        o,
        "<dt>Warnings</dt><dd>{}</dd>",
        if r.strict {
            "fail the run (strict)"
        } else {
            "reported, do not fail the run"
        }
    );
    let _ = writeln!(
        o,
        "<dt>Tool</dt><dd>lcgate {}</dd></dl>",
        esc(&r.tool_version)
    );
    let started = if r.run.started.is_empty() {
        "unknown".to_string()
    } else {
        esc(&r.run.started)
    };
    let secs = if r.run.seconds.is_finite() && r.run.seconds > 0.0 {
        eng(r.run.seconds, "s")
    } else {
        "unknown".to_string()
    };
    let _ = write!(
        o,
        "<p id=\"run-time\" class=\"run-time\">Run started {started}, took {secs}."
    );
    o.extend(std::iter::repeat_n(' ', pad as usize));
    let _ = writeln!(o, "</p>\n</section>");
}

fn first_failing_text(p: &PartReport, strict: bool) -> String {
    match p.status {
        PartStatus::Unreadable => p
            .error
            .as_deref()
            .and_then(|e| e.lines().next())
            .unwrap_or("could not be read")
            .to_string(),
        PartStatus::Missing => "no longer in the library".to_string(),
        PartStatus::Unchecked => "no rule selects it".to_string(),
        _ => p
            .checks
            .iter()
            .find(|c| is_failure(c, strict))
            .map(|c| format!("{}: {}", c.id, c.shown))
            .or_else(|| {
                p.drift
                    .iter()
                    .find(|d| d.status != CheckStatus::Pass)
                    .map(|d| format!("drift {} {}", d.quantity, show_change(d)))
            })
            .unwrap_or_default(),
    }
}

fn table_head(o: &mut String, kinds: &BTreeSet<String>, folders: &BTreeSet<String>) {
    let _ = write!(
        o,
        "<section id=\"parts\"><h2>Parts</h2>\n<form id=\"filters\" class=\"filters\" onsubmit=\"return false\">"
    );
    let _ = write!(o, "<label>Status <select id=\"f-status\"><option value=\"\">any</option><option value=\"attention\">needs attention</option>");
    for st in ["pass", "fail", "unreadable", "unchecked", "missing"] {
        let _ = write!(o, "<option value=\"{st}\">{st}</option>");
    }
    let _ = write!(
        o,
        "</select></label><label>Kind <select id=\"f-kind\"><option value=\"\">any</option>"
    );
    for k in kinds {
        let _ = write!(o, "<option value=\"{0}\">{0}</option>", esc(k));
    }
    let _ = write!(
        o,
        "</select></label><label>Folder <select id=\"f-folder\"><option value=\"\">any</option>"
    );
    for f in folders {
        let _ = write!(o, "<option value=\"{0}\">{0}</option>", esc(f));
    }
    let _ = writeln!(o, "</select></label><label>Name <input id=\"f-text\" type=\"search\" placeholder=\"part of the path\"></label><span id=\"shown-count\" class=\"muted\"></span></form>");
    let _ = writeln!(o, "<table id=\"part-table\" class=\"parts\"><thead><tr><th data-sort=\"text\">part</th><th data-sort=\"text\">status</th><th data-sort=\"text\">kind</th><th data-sort=\"text\">folder</th><th data-sort=\"num\">checks failed</th><th data-sort=\"num\">Q peak</th><th data-sort=\"num\">SRF</th><th data-sort=\"text\">first problem</th></tr></thead><tbody>");
}

fn part_row(o: &mut String, strict: bool, p: &PartReport, id: &str) {
    let st = p.status.as_str();
    let kind = p.kind.map(|k| k.as_str()).unwrap_or("unknown");
    let folder = folder_of(&p.path);
    let failed = p.checks.iter().filter(|c| is_failure(c, strict)).count()
        + p.drift
            .iter()
            .filter(|d| d.status != CheckStatus::Pass)
            .count();
    let q_peak = p.figures.get("q_peak").copied().flatten();
    let srf = p.figures.get("srf").copied().flatten();
    let num = |v: Option<f64>| v.map(|v| format!("{v:e}")).unwrap_or_default();
    let _ = writeln!(
        o,
        "<tr class=\"st-{st}\" data-status=\"{st}\" data-kind=\"{}\" data-folder=\"{}\"><td><a href=\"#{id}\">{}</a></td><td><span class=\"badge st-{st}\">{st}</span></td><td>{}</td><td>{}</td><td data-v=\"{failed}\">{failed}</td><td data-v=\"{}\">{}</td><td data-v=\"{}\">{}</td><td class=\"problem\">{}</td></tr>",
        esc(kind),
        esc(folder),
        esc(&p.path),
        esc(kind),
        esc(folder),
        num(q_peak),
        q_peak.map(sig3).unwrap_or_default(),
        num(srf),
        srf.map(|f| eng(f, "Hz")).unwrap_or_default(),
        esc(&first_failing_text(p, strict))
    );
}

fn changed(
    o: &mut String,
    baseline: bool,
    parts: &[PartReport],
    id_of: &dyn Fn(&str) -> Option<String>,
) {
    if !baseline {
        return;
    }
    let moves = drift_listed_of(parts);
    let _ = writeln!(o, "<section id=\"changed\"><h2>Changed since baseline</h2>");
    if moves.is_empty() {
        let _ = writeln!(o, "<p>Nothing moved.</p></section>");
        return;
    }
    let _ = writeln!(o, "<table class=\"drift\"><thead><tr><th>part</th><th>quantity</th><th>baseline</th><th>now</th><th>change</th><th>limit</th><th></th></tr></thead><tbody>");
    for (p, d) in moves {
        let (cls, word) = drift_word(d.status);
        let _ = writeln!(
            o,
            "<tr class=\"{cls}\"><td><a href=\"#{}\">{}</a></td><td><code>{}</code></td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{word}</td></tr>",
            id_of(&p.path).unwrap_or_default(),
            esc(&p.path),
            esc(&d.quantity),
            esc(&show_value(&d.quantity, d.baseline)),
            esc(&show_value(&d.quantity, d.now)),
            esc(&show_change(d)),
            esc(&d.limit)
        );
    }
    let _ = writeln!(o, "</tbody></table></section>");
}

fn drift_word(s: CheckStatus) -> (&'static str, &'static str) {
    match s {
        CheckStatus::Pass => ("ok", "within limit"),
        CheckStatus::Fail => ("bad", "over limit"),
        CheckStatus::Undecided => ("bad", "cannot compare"),
    }
}

/// Figures shown first, in this order, with their labels.
const KEY_FIGURES: [(&str, &str); 12] = [
    ("srf", "SRF"),
    ("q_peak", "Q peak"),
    ("f_q_peak", "Q peak at"),
    ("f_q_half", "Q half at"),
    ("l_low", "L at lowest f"),
    ("c_low", "C at lowest f"),
    ("k", "k"),
    ("fit_error", "π-model fit error"),
    ("passivity_margin", "passivity margin"),
    ("reciprocity_error", "reciprocity error"),
    ("points", "points"),
    ("ports", "ports"),
];

fn part_section(o: &mut String, strict: bool, p: &PartReport, id: &str) {
    let st = p.status.as_str();
    let _ = writeln!(
        o,
        "<section class=\"part st-{st}\" id=\"{id}\"><h3><span class=\"badge st-{st}\">{st}</span> <span class=\"path\">{}</span>{}</h3>",
        esc(&p.path),
        if p.new { " <span class=\"tag\">new</span>" } else { "" }
    );
    let mut meta = Vec::new();
    if let Some(k) = p.kind {
        meta.push(k.as_str().to_string());
    }
    if let Some(v) = p.view {
        meta.push(format!("{} view", v.as_str()));
    }
    meta.push(format!("folder {}", folder_of(&p.path)));
    if let Some(m) = p.q_drop_cause {
        meta.push(format!("Q drop caused by {}", mechanism_words(m.as_str())));
    }
    let _ = writeln!(o, "<p class=\"meta\">{}</p>", esc(&meta.join(" · ")));
    if let Some(e) = &p.error {
        let _ = writeln!(o, "<pre class=\"error\">{}</pre>", esc(e));
    }
    if p.status == PartStatus::Missing {
        let _ = writeln!(
            o,
            "<p>In the baseline, but no file of this name is in the library any more.</p>"
        );
    }
    if p.status == PartStatus::Unchecked {
        let _ = writeln!(
            o,
            "<p>No rule group selects this part; only the data checks ran.</p>"
        );
    }

    if !p.checks.is_empty() {
        let _ = writeln!(o, "<table class=\"checks\"><thead><tr><th>check</th><th>result</th><th>values</th><th>worst at</th><th>notes</th></tr></thead><tbody>");
        for c in &p.checks {
            let word = check_word(c.status);
            let cls = if c.status == CheckStatus::Pass {
                "ok"
            } else if is_failure(c, strict) {
                "bad"
            } else {
                "warn"
            };
            let sev = if c.severity == Severity::Warning && c.status != CheckStatus::Pass {
                " (warning)"
            } else {
                ""
            };
            let mut notes = String::new();
            if c.status != CheckStatus::Pass {
                if let Some(w) = &c.reason {
                    let _ = write!(notes, "<div class=\"why\">why: {}</div>", esc(w));
                }
                if let Some(h) = &c.hint {
                    let _ = write!(notes, "<div class=\"hint\">hint: {}</div>", esc(h));
                }
            }
            for piece in ["<tr class=\"", cls, "\"><td><code title=\""] {
                o.push_str(piece);
            }
            push_esc(o, &c.rules_file);
            o.push_str(": ");
            push_esc(o, &c.expr);
            o.push_str("\">");
            push_esc(o, &c.id);
            for piece in ["</code></td><td>", word, sev, "</td><td class=\"shown\">"] {
                o.push_str(piece);
            }
            push_esc(
                o,
                if c.shown.is_empty() {
                    &c.expr
                } else {
                    &c.shown
                },
            );
            o.push_str("</td><td>");
            if let Some(f) = c.worst_f {
                push_eng(o, f, "Hz");
            }
            for piece in ["</td><td>", &notes, "</td></tr>\n"] {
                o.push_str(piece);
            }
        }
        let _ = writeln!(o, "</tbody></table>");
    }

    if let Some(plot) = &p.plot {
        plots(o, plot, id);
    }

    if !p.drift.is_empty() {
        let _ = writeln!(o, "<table class=\"drift\"><caption>Baseline and today</caption><thead><tr><th>quantity</th><th>baseline</th><th>today</th><th>change</th><th>limit</th><th></th></tr></thead><tbody>");
        for d in &p.drift {
            let (cls, word) = drift_word(d.status);
            let _ = writeln!(
                o,
                "<tr class=\"{cls}\"><td><code>{}</code></td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{word}</td></tr>",
                esc(&d.quantity),
                esc(&show_value(&d.quantity, d.baseline)),
                esc(&show_value(&d.quantity, d.now)),
                esc(&show_change(d)),
                esc(&d.limit)
            );
        }
        let _ = writeln!(o, "</tbody></table>");
    }

    let known: Vec<(&str, &str, Option<f64>)> = KEY_FIGURES
        .iter()
        .filter_map(|(k, label)| p.figures.get(*k).map(|v| (*k, *label, *v)))
        .collect();
    if !known.is_empty() {
        o.push_str("<dl class=\"figs\">");
        for (k, label, v) in &known {
            let text = match (k, v) {
                (&"srf", None) => "above the sweep".to_string(),
                (&"points", Some(v)) | (&"ports", Some(v)) => format!("{v}"),
                _ => show_value(k, *v),
            };
            o.push_str("<div><dt>");
            push_esc(o, label);
            o.push_str("</dt><dd>");
            push_esc(o, &text);
            o.push_str("</dd></div>");
        }
        o.push_str("</dl>\n");
    }
    let rest: Vec<(&String, &Option<f64>)> = p
        .figures
        .iter()
        .filter(|(k, _)| !KEY_FIGURES.iter().any(|(n, _)| n == k))
        .collect();
    if !rest.is_empty() {
        o.push_str("<details><summary>all figures</summary><dl class=\"figs small\">");
        for (k, v) in rest {
            o.push_str("<div><dt>");
            push_esc(o, k);
            o.push_str("</dt><dd>");
            push_esc(o, &show_value(k, *v));
            o.push_str("</dd></div>");
        }
        o.push_str("</dl></details>\n");
    }
    let _ = writeln!(
        o,
        "<p class=\"top\"><a href=\"#parts\">back to the table</a></p></section>"
    );
}

fn mechanism_words(m: &str) -> &'static str {
    match m {
        "conductor" => "conductor loss",
        "substrate" => "substrate loss",
        _ => "self-resonance",
    }
}

/// Labels and classes of the series.
fn series_style(name: &str) -> (&'static str, &'static str) {
    match name {
        "l" => ("L", "s-l"),
        "q" => ("Q", "s-q"),
        "q_tank" => ("tank Q", "s-qt"),
        "c" => ("C", "s-l"),
        "k" => ("k", "s-l"),
        "q1" => ("Q winding 1", "s-q"),
        "q2" => ("Q winding 2", "s-qt"),
        "il_min" => ("least insertion loss", "s-il"),
        _ => ("", "s-q"),
    }
}

fn line(p: &PlotData, name: &str) -> Option<Line> {
    let v = p.series.get(name)?;
    let (label, class) = series_style(name);
    Some(Line {
        label: if label.is_empty() {
            name.to_string()
        } else {
            label.to_string()
        },
        class: class.to_string(),
        values: v.clone(),
    })
}

fn marks(p: &PlotData) -> Vec<Mark> {
    p.marks
        .iter()
        .map(|(name, f)| {
            let (label, class) = match name.as_str() {
                "srf" => ("SRF".to_string(), "mk-srf"),
                "f_q_peak" => ("Q peak".to_string(), "mk-peak"),
                "f_q_half" => ("Q/2".to_string(), "mk-half"),
                n => (n.replace("srf", "SRF "), "mk-srf"),
            };
            Mark {
                label: format!("{label} {}", eng(*f, "Hz")),
                f: *f,
                class: class.to_string(),
            }
        })
        .collect()
}

fn plots(o: &mut String, p: &PlotData, id: &str) {
    if p.freq.len() < 2 {
        return;
    }
    let srf = p.marks.get("srf").copied();
    // Below resonance is what a designer reads L, C and Q from; the values near it shoot
    // off, so the value range is taken from well below SRF (the curves are clipped).
    let cutoff = srf.map(|f| 0.8 * f);
    let mut charts: Vec<Chart> = Vec::new();
    // the same marks on every chart: their labels worked out once
    let all_marks = marks(p);
    let chart =
        |suffix: &str, title: &str, unit: &str, lines: Vec<Line>, strip: bool, cut: Option<f64>| {
            let vals: Vec<&[Option<f64>]> = lines.iter().map(|l| l.values.as_slice()).collect();
            let y_range =
                auto_range(&p.freq, &vals, cut).or_else(|| auto_range(&p.freq, &vals, None));
            Chart {
                id: format!("{id}-{suffix}"),
                title: title.to_string(),
                unit: unit.to_string(),
                freq: p.freq.clone(),
                lines,
                band: p.band,
                marks: all_marks.clone(),
                y_range,
                strip: if strip {
                    p.loss_bands.clone()
                } else {
                    Vec::new()
                },
            }
        };
    if let Some(l) = line(p, "l") {
        charts.push(chart("l", "Inductance", "H", vec![l], false, cutoff));
    }
    if let Some(c) = line(p, "c") {
        charts.push(chart("c", "Capacitance", "F", vec![c], false, cutoff));
    }
    if let Some(k) = line(p, "k") {
        charts.push(chart("k", "Coupling factor k", "", vec![k], false, None));
    }
    let qs: Vec<Line> = ["q", "q_tank", "q1", "q2"]
        .iter()
        .filter_map(|n| line(p, n))
        .collect();
    if !qs.is_empty() {
        // Q is plotted up to its peak and a little below zero, not to the tank Q's
        // extremes right at resonance.
        let mut chart_q = chart("q", "Quality factor", "", qs, true, None);
        if let Some((lo, hi)) = chart_q.y_range {
            let lo = lo.max(-0.25 * hi.abs());
            chart_q.y_range = Some((lo, hi));
        }
        charts.push(chart_q);
    }
    if let Some(il) = line(p, "il_min") {
        charts.push(chart(
            "il",
            "Least insertion loss",
            "dB",
            vec![il],
            false,
            None,
        ));
    }
    o.push_str("<div class=\"plots\">");
    svg_charts_into(o, &charts, "<figure class=\"plot\">", "</figure>");
    o.push_str("</div>\n");
}

const CSS: &str = r#"
:root{--bg:#f7f6f2;--card:#fffefb;--ink:#1e2430;--muted:#5d6470;--line:#d8d4ca;--grid:#e4e0d6;--accent:#0d6b6b;
--pass:#2c7a4b;--fail:#b42318;--unreadable:#7645a8;--unchecked:#6b7280;--missing:#9a5b00;--new:#0d6b6b;
--band:rgba(226,178,40,.22);--s-l:#0d7c78;--s-q:#3349b0;--s-qt:#d2691e;--s-il:#a23d6e;
--m-conductor:#7f9cc8;--m-substrate:#c9a24a;--m-resonance:#cf5b73;color-scheme:light dark}
@media (prefers-color-scheme:dark){:root{--bg:#15181d;--card:#1c2027;--ink:#e4e6ea;--muted:#9aa1ad;--line:#343a44;--grid:#2a2f38;--accent:#4fb8b0;
--pass:#5cc48a;--fail:#ff7a6b;--unreadable:#b793e6;--unchecked:#9aa1ad;--missing:#e0a54a;--new:#4fb8b0;
--band:rgba(226,178,40,.16);--s-l:#4fc6bf;--s-q:#8fa2ff;--s-qt:#f0a05a;--s-il:#e07aa8;
--m-conductor:#5f7fae;--m-substrate:#a98a3c;--m-resonance:#b64d63}}
*{box-sizing:border-box}
body{margin:0;background:var(--bg);color:var(--ink);font:15px/1.45 system-ui,-apple-system,"Segoe UI",Roboto,sans-serif}
main{max-width:1180px;margin:0 auto;padding:0 18px 40px}
code,.path,.shown,pre{font-family:ui-monospace,"DejaVu Sans Mono",Menlo,Consolas,monospace;font-size:.92em}
a{color:var(--accent)}
h2{margin:28px 0 10px;font-size:1.25em;border-bottom:2px solid var(--line);padding-bottom:4px}
h3{margin:0 0 4px;font-size:1.05em;word-break:break-all}
.banner{padding:18px 24px;color:#fff;display:flex;align-items:baseline;gap:18px}
.banner h1{margin:0;font-size:2em;letter-spacing:.08em}
.banner p{margin:0;font-size:1.1em}
.banner.ok{background:var(--pass)}.banner.bad{background:var(--fail)}
@media (prefers-color-scheme:dark){.banner{color:#111}}
.counts{list-style:none;display:flex;flex-wrap:wrap;gap:10px;padding:0;margin:10px 0}
.counts li{background:var(--card);border:1px solid var(--line);border-left:6px solid var(--unchecked);padding:6px 14px;border-radius:4px}
.counts .n{font-size:1.5em;font-weight:700;margin-right:4px}
li.st-pass{border-left-color:var(--pass)}li.st-fail{border-left-color:var(--fail)}li.st-unreadable{border-left-color:var(--unreadable)}
li.st-missing{border-left-color:var(--missing)}li.st-new{border-left-color:var(--new)}
.facts{display:grid;grid-template-columns:max-content 1fr;gap:4px 16px;margin:12px 0}
.facts dt{color:var(--muted)}.facts dd{margin:0}
.run-time{color:var(--muted);border-top:1px dashed var(--line);padding-top:6px;font-size:.9em}
table{border-collapse:collapse;width:100%;background:var(--card)}
th,td{border-bottom:1px solid var(--line);padding:4px 8px;text-align:left;vertical-align:top}
th{font-weight:600;color:var(--muted);font-size:.9em}
table.rules{width:auto}
.parts th[data-sort]{cursor:pointer;user-select:none}
.parts th[data-dir="asc"]::after{content:" \25B2"}.parts th[data-dir="desc"]::after{content:" \25BC"}
.parts td.problem{font-size:.9em;color:var(--muted);max-width:380px}.parts td[data-v]{white-space:nowrap}
.filters{display:flex;flex-wrap:wrap;gap:14px;align-items:center;margin:8px 0 10px}
.filters select,.filters input{font:inherit;background:var(--card);color:var(--ink);border:1px solid var(--line);border-radius:3px;padding:2px 6px}
.muted{color:var(--muted)}
.badge{display:inline-block;min-width:78px;text-align:center;border-radius:3px;padding:0 6px;font-size:.85em;font-weight:700;color:#fff;background:var(--unchecked)}
.badge.st-pass{background:var(--pass)}.badge.st-fail{background:var(--fail)}.badge.st-unreadable{background:var(--unreadable)}.badge.st-missing{background:var(--missing)}
@media (prefers-color-scheme:dark){.badge{color:#111}}
.tag{font-size:.8em;border:1px solid var(--new);color:var(--new);border-radius:3px;padding:0 4px}
section.part{background:var(--card);border:1px solid var(--line);border-left:6px solid var(--unchecked);border-radius:4px;padding:12px 16px;margin:14px 0}
section.part.st-pass{border-left-color:var(--pass)}section.part.st-fail{border-left-color:var(--fail)}
section.part.st-unreadable{border-left-color:var(--unreadable)}section.part.st-missing{border-left-color:var(--missing)}
.meta{color:var(--muted);margin:0 0 8px}
pre.error{white-space:pre-wrap;background:var(--bg);border:1px solid var(--line);padding:8px;color:var(--fail)}
table.checks tr.bad td:nth-child(2){color:var(--fail);font-weight:700}table.checks tr.warn td:nth-child(2){color:var(--missing);font-weight:700}
table.checks tr.ok td:nth-child(2){color:var(--pass)}
table.drift tr.bad td:last-child{color:var(--fail);font-weight:700}
.why,.hint{font-size:.9em}.hint{color:var(--accent)}
caption{text-align:left;font-weight:600;padding:8px 0 4px;color:var(--muted)}
.plots{display:flex;flex-wrap:wrap;gap:8px 18px;margin:10px 0}
figure.plot{margin:0;flex:1 1 520px;max-width:640px}
svg.chart{width:100%;height:auto;display:block;font:11px system-ui,sans-serif}
svg .ctitle{font-weight:700;font-size:12px;fill:var(--ink)}
svg text{fill:var(--muted)}
svg .xlabels text{text-anchor:middle}svg .ylabels text{text-anchor:end}
svg .grid{stroke:var(--grid);stroke-width:1;fill:none}
svg .grid-minor{stroke:var(--grid);stroke-width:.5;stroke-dasharray:2 3;fill:none}
svg .frame{fill:none;stroke:var(--line)}
svg .zero{stroke:var(--muted);stroke-width:.8;fill:none}
svg .band{fill:var(--band)}
svg .curve{fill:none;stroke-width:2;stroke-linejoin:round}
svg .legend line{stroke-width:3}svg .legend text{stroke:none;fill:var(--ink)}
svg .s-l{stroke:var(--s-l)}svg .s-q{stroke:var(--s-q)}svg .s-qt{stroke:var(--s-qt);stroke-dasharray:6 3}svg .s-il{stroke:var(--s-il)}
svg .mark path{stroke:var(--ink);stroke-width:1;stroke-dasharray:3 3;fill:none;opacity:.7}
svg .mark.mk-srf path{stroke:var(--fail);stroke-width:1.6;stroke-dasharray:5 2;opacity:1}
svg .mark text{fill:var(--ink);font-size:10.5px}
svg .m-conductor{fill:var(--m-conductor)}svg .m-substrate{fill:var(--m-substrate)}svg .m-resonance{fill:var(--m-resonance)}
svg .slabel{font-size:10.5px}
.figs{display:flex;flex-wrap:wrap;gap:4px 18px;margin:8px 0}
.figs div{display:flex;gap:6px}.figs dt{color:var(--muted)}.figs dd{margin:0;font-weight:600}
.figs.small{font-size:.88em}.figs.small dd{font-weight:400}
details summary{cursor:pointer;color:var(--muted);font-size:.9em}
.top{margin:6px 0 0;font-size:.85em}
@media print{body{background:#fff;color:#000;font-size:11pt}.filters,.top{display:none}
section.part{break-inside:avoid-page;border-color:#999}figure.plot{break-inside:avoid}
.banner{color:#000;background:none!important;border-bottom:3px solid #000}
.parts tr[hidden]{display:table-row}}
"#;

const SCRIPT: &str = r#"
(function(){
try{
var table=document.getElementById('part-table');
var rows=Array.prototype.slice.call(table.tBodies[0].rows);
var fs=document.getElementById('f-status'),fk=document.getElementById('f-kind'),
ff=document.getElementById('f-folder'),ft=document.getElementById('f-text'),
count=document.getElementById('shown-count');
function apply(){
var s=fs.value,k=fk.value,f=ff.value,t=ft.value.toLowerCase(),n=0;
rows.forEach(function(r){
var st=r.getAttribute('data-status');
var ok=(!s||(s==='attention'?(st!=='pass'&&st!=='unchecked'):st===s))&&
(!k||r.getAttribute('data-kind')===k)&&(!f||r.getAttribute('data-folder')===f)&&
(!t||r.cells[0].textContent.toLowerCase().indexOf(t)>=0);
r.hidden=!ok;if(ok)n++;});
count.textContent=n+' of '+rows.length+' parts shown';}
[fs,fk,ff].forEach(function(e){e.addEventListener('change',apply);});
ft.addEventListener('input',apply);
var heads=table.tHead.rows[0].cells;
Array.prototype.forEach.call(heads,function(th,i){
th.addEventListener('click',function(){
var num=th.getAttribute('data-sort')==='num';
var dir=th.getAttribute('data-dir')==='asc'?'desc':'asc';
Array.prototype.forEach.call(heads,function(h){h.removeAttribute('data-dir');});
th.setAttribute('data-dir',dir);
var key=function(r){var c=r.cells[i];
if(num){var v=parseFloat(c.getAttribute('data-v'));return isNaN(v)?-Infinity:v;}
return c.textContent.toLowerCase();};
rows.sort(function(a,b){var x=key(a),y=key(b);var o=x<y?-1:x>y?1:0;return dir==='asc'?o:-o;});
var tb=table.tBodies[0];rows.forEach(function(r){tb.appendChild(r);});});});
apply();
document.body.setAttribute('data-ready','1');
}catch(e){document.body.setAttribute('data-error',String(e&&e.stack||e));}
})();
"#;
