//! `report.xml`: JUnit XML (through quick-junit) so that a CI system lists every check
//! of every part as a test. One testsuite per rules file with one testcase per part and
//! check (`path :: check-id`); a failing or undecided check is a `failure` whose message
//! carries the values put in and the hint. Files that could not be read are `error`s in
//! their own suite, parts that were read but could not be judged (a view that does not
//! exist, a sidecar that does not load) are `error`s in another, parts no rule selects are `skipped` in theirs, and drift against the
//! baseline and missing parts go in a suite of their own. No times or timestamps are
//! written: identical inputs give identical bytes.

use quick_junit::{NonSuccessKind, Property, Report, TestCase, TestCaseStatus, TestSuite};

use crate::units::eng;
use std::io;

use crate::verdict::{CheckOutcome, CheckStatus, PartReport, PartStatus, RunReport};

use super::{is_failure, is_warning, rules_order, show_change, show_value, suite_of};

/// Suite of the files that could not be read.
pub const SUITE_UNREADABLE: &str = "files that could not be read";
/// Suite of the parts read but not judged (their `error`: a view, a sidecar).
pub const SUITE_UNJUDGED: &str = "parts that could not be judged";
/// Suite of the parts no rule group selects.
pub const SUITE_UNCHECKED: &str = "parts no rule selects";
/// Suite of drift and missing parts.
pub const SUITE_BASELINE: &str = "changed since baseline";

/// The JUnit XML document.
pub fn junit(r: &RunReport) -> String {
    let plan = Plan::of(r);
    let mut bodies = vec![Body::default(); plan.slots()];
    for p in &r.parts {
        for (slot, body) in plan.part_bodies(p, r.strict) {
            bodies[slot].add(&body);
        }
    }
    let mut out = Vec::new();
    let written = plan.write(r, &bodies, &mut out, |slot, w| {
        w.write_all(&bodies[slot].text)
    });
    match written.ok().and_then(|()| String::from_utf8(out).ok()) {
        Some(s) => s,
        // quick-junit only fails on I/O, which memory cannot give; keep a valid file.
        None => "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n<testsuites name=\"lcgate\" tests=\"0\"><!-- not written --></testsuites>\n".to_string(),
    }
}

/// The suites of the document, in order: one per rules file, then those of the
/// unreadable, the unjudged and the unchecked parts, then drift and missing parts.
/// A part's test cases go to these slots; the document is written from the slots'
/// bodies, so it can be built as parts stream past (`report::stream`).
#[derive(Debug, Clone, Default)]
pub(crate) struct Plan {
    rules: Vec<String>,
}

const UNREADABLE: usize = 0;
const UNJUDGED: usize = 1;
const UNCHECKED: usize = 2;
const BASELINE: usize = 3;

/// Serialized test cases of one suite and their counts.
#[derive(Debug, Clone, Default)]
pub(crate) struct Body {
    /// the cases as quick-junit writes them inside their suite (each line starting
    /// with its line break and indentation)
    pub text: Vec<u8>,
    pub tests: usize,
    pub failures: usize,
    pub errors: usize,
    pub skipped: usize,
}

impl Body {
    pub(crate) fn add(&mut self, other: &Body) {
        self.text.extend_from_slice(&other.text);
        self.add_counts(other);
    }

    pub(crate) fn add_counts(&mut self, other: &Body) {
        self.tests += other.tests;
        self.failures += other.failures;
        self.errors += other.errors;
        self.skipped += other.skipped;
    }

    /// The cases serialized by quick-junit inside a suite of their own, cut out of
    /// that document: the same bytes they have in the whole one.
    fn of(cases: Vec<TestCase>) -> Body {
        let mut suite = TestSuite::new("cases");
        suite.add_test_cases(cases);
        let mut b = Body {
            tests: suite.tests,
            failures: suite.failures,
            errors: suite.errors,
            skipped: suite.skipped,
            ..Body::default()
        };
        let mut report = Report::new("cases");
        report.add_test_suite(suite);
        if let Ok(doc) = report.to_string() {
            let bytes = doc.as_bytes();
            // after the `<testsuite …>` line, up to the line that closes it
            let start = find(bytes, b"<testsuite ")
                .and_then(|i| bytes[i..].iter().position(|&c| c == b'\n').map(|j| i + j));
            let end = rfind(bytes, b"\n    </testsuite>");
            if let (Some(start), Some(end)) = (start, end) {
                if start <= end {
                    b.text = bytes[start..end].to_vec();
                }
            }
        }
        b
    }
}

fn find(hay: &[u8], needle: &[u8]) -> Option<usize> {
    hay.windows(needle.len()).position(|w| w == needle)
}

fn rfind(hay: &[u8], needle: &[u8]) -> Option<usize> {
    hay.windows(needle.len()).rposition(|w| w == needle)
}

impl Plan {
    /// The plan of a report: its rules files (see `rules_order`).
    pub(crate) fn of(r: &RunReport) -> Plan {
        Plan {
            rules: rules_order(r),
        }
    }

    /// How many slots a part's cases can go to.
    pub(crate) fn slots(&self) -> usize {
        self.rules.len() + 4
    }

    fn fixed(&self, k: usize) -> usize {
        self.rules.len() + k
    }

    /// A part's test cases, serialized, by slot (slots without cases left out).
    pub(crate) fn part_bodies(&self, p: &PartReport, strict: bool) -> Vec<(usize, Body)> {
        let mut out = Vec::new();
        for (i, file) in self.rules.iter().enumerate() {
            let cases: Vec<TestCase> = p
                .checks
                .iter()
                .filter(|c| &c.rules_file == file)
                .map(|c| check_case(&p.path, c, strict))
                .collect();
            if !cases.is_empty() {
                out.push((i, Body::of(cases)));
            }
        }
        if p.status == PartStatus::Unreadable {
            let mut st = TestCaseStatus::non_success(NonSuccessKind::Error);
            let why = p.error.as_deref().unwrap_or("unknown error");
            st.set_message(first_line(why));
            st.set_type("unreadable");
            st.set_description(why);
            let mut tc = TestCase::new(format!("{} :: read", p.path), st);
            tc.set_classname(p.path.as_str());
            out.push((self.fixed(UNREADABLE), Body::of(vec![tc])));
        }
        // a part that was read but whose view or sidecar failed may have no check at
        // all; without its own case it would fail the run and appear nowhere in the XML
        if let (false, Some(why)) = (p.status == PartStatus::Unreadable, p.error.as_deref()) {
            let mut st = TestCaseStatus::non_success(NonSuccessKind::Error);
            st.set_message(first_line(why));
            st.set_type("error");
            st.set_description(why);
            let mut tc = TestCase::new(format!("{} :: judge", p.path), st);
            tc.set_classname(p.path.as_str());
            out.push((self.fixed(UNJUDGED), Body::of(vec![tc])));
        }
        if p.status == PartStatus::Unchecked {
            let mut st = TestCaseStatus::skipped();
            st.set_message("no rule group selects this part; data checks only");
            let mut tc = TestCase::new(format!("{} :: rules", p.path), st);
            tc.set_classname(p.path.as_str());
            out.push((self.fixed(UNCHECKED), Body::of(vec![tc])));
        }
        let mut baseline = Vec::new();
        if p.status == PartStatus::Missing {
            let mut st = TestCaseStatus::non_success(NonSuccessKind::Failure);
            st.set_message("in the baseline but no longer in the library");
            st.set_type("missing");
            let mut tc = TestCase::new(format!("{} :: present", p.path), st);
            tc.set_classname(p.path.as_str());
            baseline.push(tc);
        }
        for d in &p.drift {
            baseline.push(drift_case(&p.path, d));
        }
        if !baseline.is_empty() {
            out.push((self.fixed(BASELINE), Body::of(baseline)));
        }
        out
    }

    /// Write the document: `head` gives the suites' names and properties, `bodies` the
    /// counts of each slot, and `body(slot, w)` writes a slot's cases.
    pub(crate) fn write(
        &self,
        head: &RunReport,
        bodies: &[Body],
        w: &mut dyn io::Write,
        mut body: impl FnMut(usize, &mut dyn io::Write) -> io::Result<()>,
    ) -> io::Result<()> {
        let mut report = Report::new("lcgate");
        let mut slots = Vec::new();
        let empty = Body::default();
        let mut suite_for = |slot: usize, mut suite: TestSuite, report: &mut Report| {
            // a stand-in case marks where the slot's cases go; the counts are theirs
            suite.add_test_case(TestCase::new(marker(slot), TestCaseStatus::success()));
            let b = bodies.get(slot).unwrap_or(&empty);
            suite.tests = b.tests;
            suite.failures = b.failures;
            suite.errors = b.errors;
            suite.skipped = b.skipped;
            report.add_test_suite(suite);
            slots.push(slot);
        };
        for (i, file) in self.rules.iter().enumerate() {
            let name = match suite_of(head, file) {
                Some(s) => format!("{file} ({s})"),
                None => file.clone(),
            };
            let mut suite = TestSuite::new(name);
            suite.add_property(Property::new("rules_file", file.as_str()));
            if let Some(info) = head.rules.iter().find(|i| &i.path == file) {
                suite.add_property(Property::new("hash", info.hash.as_str()));
            }
            suite_for(i, suite, &mut report);
        }
        let has = |k: usize| bodies.get(self.fixed(k)).is_some_and(|b| b.tests > 0);
        for (k, name) in [
            (UNREADABLE, SUITE_UNREADABLE),
            (UNJUDGED, SUITE_UNJUDGED),
            (UNCHECKED, SUITE_UNCHECKED),
        ] {
            if has(k) {
                suite_for(self.fixed(k), TestSuite::new(name), &mut report);
            }
        }
        if has(BASELINE) {
            let mut suite = TestSuite::new(SUITE_BASELINE);
            if let Some(b) = &head.baseline {
                suite.add_property(Property::new("baseline", b.as_str()));
            }
            suite_for(self.fixed(BASELINE), suite, &mut report);
        }
        let doc = report.to_string().map_err(io::Error::other)?;
        let mut rest = doc.as_bytes();
        for slot in slots {
            let mark = format!("\n        <testcase name=\"{}\"/>", marker(slot));
            let at = find(rest, mark.as_bytes())
                .ok_or_else(|| io::Error::other("JUnit document without its marker"))?;
            w.write_all(&rest[..at])?;
            body(slot, w)?;
            rest = &rest[at + mark.len()..];
        }
        w.write_all(rest)?;
        w.write_all(b"\n")
    }
}

/// The stand-in case of a slot (no real case is named without ` :: `).
fn marker(slot: usize) -> String {
    format!("lcgate-cases-{slot}")
}

fn drift_case(path: &str, d: &crate::verdict::DriftOutcome) -> TestCase {
    let text = format!(
        "{}: {} -> {} ({}, limit {})",
        d.quantity,
        show_value(&d.quantity, d.baseline),
        show_value(&d.quantity, d.now),
        show_change(d),
        d.limit
    );
    let st = if d.status == CheckStatus::Pass {
        TestCaseStatus::success()
    } else {
        let mut st = TestCaseStatus::non_success(NonSuccessKind::Failure);
        st.set_message(text.as_str());
        st.set_type(if d.status == CheckStatus::Fail {
            "drift"
        } else {
            "undecided"
        });
        st
    };
    let mut tc = TestCase::new(format!("{path} :: drift {}", d.quantity), st);
    tc.set_classname(path);
    if d.status == CheckStatus::Pass {
        tc.set_system_out(text);
    }
    tc
}

fn first_line(s: &str) -> &str {
    s.lines().next().unwrap_or(s)
}

fn check_case(path: &str, c: &CheckOutcome, strict: bool) -> TestCase {
    let shown = if c.shown.is_empty() {
        c.expr.as_str()
    } else {
        c.shown.as_str()
    };
    // the message and detail are only written for a failure or a warning: most cases
    // of a library pass, and building text they do not show would be most of their cost
    let message = || {
        let mut message = shown.to_string();
        if let Some(f) = c.worst_f {
            message.push_str(&format!(" (worst at {})", eng(f, "Hz")));
        }
        if let Some(why) = &c.reason {
            message.push_str(&format!("; why: {why}"));
        }
        if let Some(h) = &c.hint {
            message.push_str(&format!("; hint: {h}"));
        }
        message
    };
    let status = if is_failure(c, strict) {
        let mut detail = format!("rule: {}\nvalues: {shown}", c.expr);
        if let Some(f) = c.worst_f {
            detail.push_str(&format!("\nworst at: {}", eng(f, "Hz")));
        }
        if let Some(why) = &c.reason {
            detail.push_str(&format!("\nwhy: {why}"));
        }
        if let Some(h) = &c.hint {
            detail.push_str(&format!("\nhint: {h}"));
        }
        let mut st = TestCaseStatus::non_success(NonSuccessKind::Failure);
        st.set_message(message());
        st.set_type(match c.status {
            CheckStatus::Undecided => "undecided",
            _ => "fail",
        });
        st.set_description(detail);
        st
    } else {
        TestCaseStatus::success()
    };
    let mut tc = TestCase::new(format!("{path} :: {}", c.id), status);
    tc.set_classname(path);
    if is_warning(c, strict) {
        // JUnit has no warning status; a CI reader still sees it in the case's output.
        tc.set_system_out(format!("warning: {}", message()));
    }
    tc
}
