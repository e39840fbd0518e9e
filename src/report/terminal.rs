//! The summary `lcgate check` prints on stdout: what failed and why first (grouped by
//! rules file, each check with its values put in and its hint), then warnings, files
//! that could not be read, what changed since the baseline, missing and new parts,
//! parts no rule selects, and one closing line with the counts.

use std::fmt::Write as _;

use crate::units::eng;
use crate::verdict::{CheckOutcome, CheckStatus, PartReport, PartStatus, RunReport};

use super::{
    count_line, drift_listed, is_failure, is_warning, plural, rules_order, show_change, show_value,
    suite_of,
};

/// Most drift moves listed before "… and N more".
const DRIFT_LINES: usize = 20;

/// ANSI styles, or nothing when colour is off.
struct Style {
    on: bool,
}

impl Style {
    fn paint(&self, code: &str, text: &str) -> String {
        if self.on {
            format!("\x1b[{code}m{text}\x1b[0m")
        } else {
            text.to_string()
        }
    }
    fn bad(&self, t: &str) -> String {
        self.paint("1;31", t)
    }
    fn warn(&self, t: &str) -> String {
        self.paint("33", t)
    }
    fn good(&self, t: &str) -> String {
        self.paint("1;32", t)
    }
    fn head(&self, t: &str) -> String {
        self.paint("1", t)
    }
    fn dim(&self, t: &str) -> String {
        self.paint("2", t)
    }
}

/// The terminal summary. `colour` adds ANSI colours (the caller decides: only on a TTY).
pub fn terminal(r: &RunReport, colour: bool) -> String {
    let st = Style { on: colour };
    let mut o = String::new();

    let mut title = format!(
        "lcgate {} checked {} against {} {}",
        r.tool_version,
        r.library,
        r.rules.len(),
        plural(r.rules.len(), "rules file", "rules files")
    );
    if let Some(b) = &r.baseline {
        let _ = write!(title, ", baseline {b}");
    }
    if let Some([k, n]) = r.shard {
        let _ = write!(title, " (shard {k} of {n})");
    }
    if r.strict {
        title.push_str(" (strict: warnings fail)");
    }
    let _ = writeln!(o, "{}", st.head(&title));

    // Failures, grouped by rules file.
    for file in rules_order(r) {
        let rows = checks_of(r, &file, |c| is_failure(c, r.strict));
        if rows.is_empty() {
            continue;
        }
        section(
            &mut o,
            &st,
            &file_title("Failed", &file, suite_of(r, &file)),
        );
        write_rows(&mut o, &st, &rows, true);
    }

    for file in rules_order(r) {
        let rows = checks_of(r, &file, |c| is_warning(c, r.strict));
        if rows.is_empty() {
            continue;
        }
        section(
            &mut o,
            &st,
            &file_title("Warnings", &file, suite_of(r, &file)),
        );
        write_rows(&mut o, &st, &rows, false);
    }

    let unreadable: Vec<&PartReport> = r
        .parts
        .iter()
        .filter(|p| p.status == PartStatus::Unreadable)
        .collect();
    if !unreadable.is_empty() {
        section(&mut o, &st, "Could not be read");
        for p in unreadable {
            let why = p.error.as_deref().unwrap_or("unknown error");
            let _ = writeln!(o, "  {}", st.bad(&p.path));
            for line in why.lines() {
                let _ = writeln!(o, "      {line}");
            }
        }
    }

    // read, but a view or sidecar failed: such a part may have no failing check to
    // be listed under, yet it fails the run
    let unjudged: Vec<(&PartReport, &str)> = r
        .parts
        .iter()
        .filter(|p| p.status != PartStatus::Unreadable)
        .filter_map(|p| Some((p, p.error.as_deref()?)))
        .collect();
    if !unjudged.is_empty() {
        section(&mut o, &st, "Could not be judged");
        for (p, why) in unjudged {
            let _ = writeln!(o, "  {}", st.bad(&p.path));
            for line in why.lines() {
                let _ = writeln!(o, "      {line}");
            }
        }
    }

    if r.baseline.is_some() {
        let moves = drift_listed(r);
        if !moves.is_empty() {
            section(&mut o, &st, "Changed since baseline (largest first)");
            for (p, d) in moves.iter().take(DRIFT_LINES) {
                let verdict = match d.status {
                    CheckStatus::Pass => st.dim("within limit"),
                    CheckStatus::Fail => st.bad("over limit"),
                    CheckStatus::Undecided => st.bad("cannot compare"),
                };
                let _ = writeln!(
                    o,
                    "  {}  {}: {} -> {} ({}, limit {})  {}",
                    p.path,
                    d.quantity,
                    show_value(&d.quantity, d.baseline),
                    show_value(&d.quantity, d.now),
                    show_change(d),
                    d.limit,
                    verdict
                );
            }
            if moves.len() > DRIFT_LINES {
                let _ = writeln!(
                    o,
                    "  … and {} more (see report.json)",
                    moves.len() - DRIFT_LINES
                );
            }
        }
        if !r.rules_changed.is_empty() {
            let _ = writeln!(
                o,
                "  {} {}",
                st.warn("rules changed since the baseline:"),
                r.rules_changed.join(", ")
            );
        }
    }

    list_parts(
        &mut o,
        &st,
        r,
        "Missing (in the baseline, no longer in the library)",
        |p| p.status == PartStatus::Missing,
    );
    list_parts(&mut o, &st, r, "New since the baseline", |p| p.new);
    list_parts(
        &mut o,
        &st,
        r,
        "Not checked (no rule group selects them; data checks only)",
        |p| p.status == PartStatus::Unchecked,
    );

    o.push('\n');
    let verdict = if r.passed {
        st.good("PASS")
    } else {
        st.bad("FAIL")
    };
    let _ = write!(o, "{verdict}  {}", count_line(r));
    if r.run.seconds > 0.0 && r.run.seconds.is_finite() {
        let _ = write!(o, " ({})", eng(r.run.seconds, "s"));
    }
    o.push('\n');
    o
}

fn section(o: &mut String, st: &Style, title: &str) {
    let _ = writeln!(o, "\n{}", st.head(title));
}

fn file_title(what: &str, file: &str, suite: Option<&str>) -> String {
    match suite {
        Some(s) => format!("{what}: {file} ({s})"),
        None => format!("{what}: {file}"),
    }
}

/// The checks of one rules file that `keep` selects, per part, parts in path order.
fn checks_of<'a>(
    r: &'a RunReport,
    file: &str,
    keep: impl Fn(&CheckOutcome) -> bool,
) -> Vec<(&'a PartReport, Vec<&'a CheckOutcome>)> {
    r.parts
        .iter()
        .filter_map(|p| {
            let cs: Vec<&CheckOutcome> = p
                .checks
                .iter()
                .filter(|c| c.rules_file == file && keep(c))
                .collect();
            (!cs.is_empty()).then_some((p, cs))
        })
        .collect()
}

fn part_label(p: &PartReport) -> String {
    let mut what = Vec::new();
    if let Some(k) = p.kind {
        what.push(k.as_str().to_string());
    }
    if let Some(v) = p.view {
        what.push(v.as_str().to_string());
    }
    if what.is_empty() {
        p.path.clone()
    } else {
        format!("{} ({})", p.path, what.join(", "))
    }
}

fn write_rows(
    o: &mut String,
    st: &Style,
    rows: &[(&PartReport, Vec<&CheckOutcome>)],
    failing: bool,
) {
    for (p, cs) in rows {
        let _ = writeln!(o, "  {}", st.head(&part_label(p)));
        for c in cs {
            let word = match (failing, c.status) {
                (true, CheckStatus::Undecided) => st.bad("UNDECIDED"),
                (true, _) => st.bad("FAIL     "),
                (false, CheckStatus::Undecided) => st.warn("undecided"),
                (false, _) => st.warn("warning  "),
            };
            let shown = if c.shown.is_empty() {
                &c.expr
            } else {
                &c.shown
            };
            let _ = write!(o, "    {word} {}: {shown}", c.id);
            if let Some(f) = c.worst_f {
                let _ = write!(o, "  (worst at {})", eng(f, "Hz"));
            }
            o.push('\n');
            if let Some(why) = &c.reason {
                let _ = writeln!(o, "              {} {why}", st.dim("why:"));
            }
            if let Some(h) = &c.hint {
                let _ = writeln!(o, "              {} {h}", st.dim("hint:"));
            }
        }
    }
}

fn list_parts(
    o: &mut String,
    st: &Style,
    r: &RunReport,
    title: &str,
    keep: impl Fn(&PartReport) -> bool,
) {
    let ps: Vec<&PartReport> = r.parts.iter().filter(|p| keep(p)).collect();
    if ps.is_empty() {
        return;
    }
    section(o, st, title);
    for p in ps {
        let _ = writeln!(o, "  {}", p.path);
    }
}
