//! `report.md`: a short summary to paste into a review comment: the verdict and counts,
//! a table of the parts that need attention with their first failing check, and what
//! changed since the baseline. Long lists are cut with a count of what was left out;
//! the full story is in the other reports.

use std::fmt::Write as _;

use crate::verdict::{CheckStatus, PartReport, PartStatus, RunReport};

use super::{
    check_word, count_line, drift_listed, is_failure, is_warning, show_change, show_value,
};

/// Most rows per table.
const ROWS: usize = 50;

/// The Markdown summary.
pub fn markdown(r: &RunReport) -> String {
    let mut o = String::new();
    let verdict = if r.passed { "PASS" } else { "FAIL" };
    let _ = writeln!(o, "## lcgate: {verdict}\n");
    let _ = writeln!(o, "{}.\n", count_line(r));
    let _ = writeln!(o, "- library: `{}`", code(&r.library));
    for info in &r.rules {
        let _ = writeln!(
            o,
            "- rules: `{}`{} (hash `{}`)",
            code(&info.path),
            if info.suite.is_empty() {
                String::new()
            } else {
                format!(" — {}", cell(&info.suite))
            },
            short_hash(&info.hash)
        );
    }
    if let Some(b) = &r.baseline {
        let _ = writeln!(o, "- baseline: `{}`", code(b));
    }
    if !r.rules_changed.is_empty() {
        let list: Vec<String> = r
            .rules_changed
            .iter()
            .map(|p| format!("`{}`", code(p)))
            .collect();
        let _ = writeln!(o, "- rules changed since the baseline: {}", list.join(", "));
    }
    if let Some([k, n]) = r.shard {
        let _ = writeln!(o, "- shard {k} of {n}");
    }
    if r.strict {
        let _ = writeln!(o, "- strict: warnings fail the run");
    }

    let attention: Vec<&PartReport> = r
        .parts
        .iter()
        .filter(|p| p.status != PartStatus::Pass && p.status != PartStatus::Unchecked)
        .collect();
    if !attention.is_empty() {
        let _ = writeln!(o, "\n### Parts that need attention\n");
        let _ = writeln!(o, "| part | status | first failing check | values | hint |");
        let _ = writeln!(o, "| --- | --- | --- | --- | --- |");
        for p in attention.iter().take(ROWS) {
            let (id, shown, hint) = first_problem(p, r.strict);
            let _ = writeln!(
                o,
                "| `{}` | {} | {} | {} | {} |",
                code(&p.path),
                p.status.as_str(),
                id,
                shown,
                hint
            );
        }
        more(&mut o, attention.len());
    }

    let warnings: Vec<(&PartReport, &crate::verdict::CheckOutcome)> = r
        .parts
        .iter()
        .flat_map(|p| p.checks.iter().map(move |c| (p, c)))
        .filter(|(_, c)| is_warning(c, r.strict))
        .collect();
    if !warnings.is_empty() {
        let _ = writeln!(o, "\n### Warnings\n");
        let _ = writeln!(o, "| part | check | values |");
        let _ = writeln!(o, "| --- | --- | --- |");
        for (p, c) in warnings.iter().take(ROWS) {
            let _ = writeln!(
                o,
                "| `{}` | `{}` | {} |",
                code(&p.path),
                code(&c.id),
                cell(&c.shown)
            );
        }
        more(&mut o, warnings.len());
    }

    if r.baseline.is_some() {
        let moves = drift_listed(r);
        if !moves.is_empty() {
            let _ = writeln!(o, "\n### Changed since baseline\n");
            let _ = writeln!(o, "| part | quantity | baseline | now | change | limit | |");
            let _ = writeln!(o, "| --- | --- | --- | --- | --- | --- | --- |");
            for (p, d) in moves.iter().take(ROWS) {
                let _ = writeln!(
                    o,
                    "| `{}` | `{}` | {} | {} | {} | {} | {} |",
                    code(&p.path),
                    code(&d.quantity),
                    show_value(&d.quantity, d.baseline),
                    show_value(&d.quantity, d.now),
                    show_change(d),
                    cell(&d.limit),
                    match d.status {
                        CheckStatus::Pass => "within limit",
                        CheckStatus::Fail => "**over limit**",
                        CheckStatus::Undecided => "**cannot compare**",
                    }
                );
            }
            more(&mut o, moves.len());
        }
    }

    let unchecked = r
        .parts
        .iter()
        .filter(|p| p.status == PartStatus::Unchecked)
        .count();
    if unchecked > 0 {
        let _ = writeln!(
            o,
            "\n{unchecked} {} no rule group selects (data checks only).",
            if unchecked == 1 { "part" } else { "parts" }
        );
    }
    o
}

/// id, values and hint of the part's first problem, each already escaped for a cell.
fn first_problem(p: &PartReport, strict: bool) -> (String, String, String) {
    match p.status {
        PartStatus::Unreadable => (
            "—".into(),
            cell(p.error.as_deref().unwrap_or("could not be read")),
            String::new(),
        ),
        PartStatus::Missing => (
            "—".into(),
            "in the baseline, no longer in the library".into(),
            String::new(),
        ),
        _ => {
            if let Some(c) = p.checks.iter().find(|c| is_failure(c, strict)) {
                let mut shown = cell(&c.shown);
                if c.status == CheckStatus::Undecided {
                    shown = format!(
                        "{} ({}{})",
                        shown,
                        check_word(c.status),
                        c.reason
                            .as_deref()
                            .map(|w| format!(": {}", cell(w)))
                            .unwrap_or_default()
                    );
                }
                (
                    format!("`{}`", code(&c.id)),
                    shown,
                    cell(c.hint.as_deref().unwrap_or("")),
                )
            } else if let Some(d) = p.drift.iter().find(|d| d.status != CheckStatus::Pass) {
                (
                    format!("drift `{}`", code(&d.quantity)),
                    format!(
                        "{} -> {} ({}, limit {})",
                        show_value(&d.quantity, d.baseline),
                        show_value(&d.quantity, d.now),
                        show_change(d),
                        cell(&d.limit)
                    ),
                    String::new(),
                )
            } else {
                (
                    "—".into(),
                    cell(p.error.as_deref().unwrap_or("")),
                    String::new(),
                )
            }
        }
    }
}

fn more(o: &mut String, n: usize) {
    if n > ROWS {
        let _ = writeln!(o, "\n… and {} more (see report.html).", n - ROWS);
    }
}

/// Text for a table cell: one line, pipes escaped.
fn cell(s: &str) -> String {
    s.lines()
        .collect::<Vec<_>>()
        .join(" ")
        .replace('|', "\\|")
        .replace('<', "&lt;")
}

/// Text inside backticks: one line, no backticks, pipes escaped.
fn code(s: &str) -> String {
    cell(s).replace('`', "'")
}

fn short_hash(h: &str) -> &str {
    h.get(..12).unwrap_or(h)
}
