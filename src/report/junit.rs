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

    /// The cases serialized as quick-junit writes them inside a suite, with the
    /// suite's counts.
    fn of(cases: Vec<Case>) -> Body {
        let mut b = Body::default();
        for c in &cases {
            b.tests += 1;
            match &c.status {
                Status::Success => {}
                Status::Failure { .. } => b.failures += 1,
                Status::Error { .. } => b.errors += 1,
                Status::Skipped { .. } => b.skipped += 1,
            }
        }
        if cases.iter().all(Case::is_clean) {
            for c in &cases {
                c.write(&mut b.text);
            }
        } else {
            b.text = Body::by_quick_junit(cases).text;
        }
        b
    }

    /// The cases serialized by quick-junit inside a suite of their own, cut out of
    /// that document: the same bytes they have in the whole one. Used where a text
    /// holds something quick-junit takes out (escape sequences, control characters).
    fn by_quick_junit(cases: Vec<Case>) -> Body {
        let mut suite = TestSuite::new("cases");
        suite.add_test_cases(cases.into_iter().map(Case::into_test_case));
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

/// One test case: the part of quick-junit's `TestCase` the report uses. The report
/// writes it itself, byte for byte as quick-junit would: building quick-junit's case
/// passes every text through an ANSI-escape parser (`strip-ansi-escapes`) and a
/// character filter, which cost more than the rest of the JUnit report, and the texts
/// here (paths, check ids, values) almost never hold anything either would remove.
/// When one does, [`Body::of`] hands the cases to quick-junit.
#[derive(Debug, Clone)]
pub(crate) struct Case {
    name: String,
    classname: String,
    status: Status,
    system_out: Option<String>,
}

/// How a [`Case`] ended; the texts are the `message`, `type` and body of its element.
#[derive(Debug, Clone)]
enum Status {
    Success,
    Failure {
        message: String,
        ty: &'static str,
        description: Option<String>,
    },
    Error {
        message: String,
        ty: &'static str,
        description: Option<String>,
    },
    Skipped {
        message: String,
    },
}

impl Case {
    fn new(name: String, classname: &str, status: Status) -> Case {
        Case {
            name,
            classname: classname.to_string(),
            status,
            system_out: None,
        }
    }

    /// The texts of the case, as they go into the XML.
    fn texts(&self) -> impl Iterator<Item = &str> {
        let (message, ty, description) = match &self.status {
            Status::Success => (None, None, None),
            Status::Failure {
                message,
                ty,
                description,
            }
            | Status::Error {
                message,
                ty,
                description,
            } => (Some(message.as_str()), Some(*ty), description.as_deref()),
            Status::Skipped { message } => (Some(message.as_str()), None, None),
        };
        [
            Some(self.name.as_str()),
            Some(self.classname.as_str()),
            message,
            ty,
            description,
            self.system_out.as_deref(),
        ]
        .into_iter()
        .flatten()
    }

    /// Whether quick-junit would keep every text as it is.
    fn is_clean(&self) -> bool {
        self.texts().all(kept_by_quick_junit)
    }

    /// The case as quick-junit writes it inside a suite: each line starting with its
    /// line break and indentation.
    fn write(&self, o: &mut Vec<u8>) {
        o.extend_from_slice(b"\n        <testcase name=\"");
        push_xml(o, &self.name);
        o.extend_from_slice(b"\" classname=\"");
        push_xml(o, &self.classname);
        let (tag, message, ty, description) = match &self.status {
            Status::Success => ("", None, None, None),
            Status::Failure {
                message,
                ty,
                description,
            } => ("failure", Some(message), Some(*ty), description.as_ref()),
            Status::Error {
                message,
                ty,
                description,
            } => ("error", Some(message), Some(*ty), description.as_ref()),
            Status::Skipped { message } => ("skipped", Some(message), None, None),
        };
        if tag.is_empty() && self.system_out.is_none() {
            o.extend_from_slice(b"\"/>");
            return;
        }
        o.extend_from_slice(b"\">");
        if !tag.is_empty() {
            o.extend_from_slice(b"\n            <");
            o.extend_from_slice(tag.as_bytes());
            if let Some(m) = message {
                o.extend_from_slice(b" message=\"");
                push_xml(o, m);
                o.push(b'"');
            }
            if let Some(t) = ty {
                o.extend_from_slice(b" type=\"");
                push_xml(o, t);
                o.push(b'"');
            }
            match description {
                Some(d) => {
                    o.push(b'>');
                    push_xml(o, d);
                    o.extend_from_slice(b"</");
                    o.extend_from_slice(tag.as_bytes());
                    o.push(b'>');
                }
                None => o.extend_from_slice(b"/>"),
            }
        }
        if let Some(out) = &self.system_out {
            o.extend_from_slice(b"\n            <system-out>");
            push_xml(o, out);
            o.extend_from_slice(b"</system-out>");
        }
        o.extend_from_slice(b"\n        </testcase>");
    }

    /// The same case as quick-junit's.
    fn into_test_case(self) -> TestCase {
        let status = match self.status {
            Status::Success => TestCaseStatus::success(),
            Status::Failure {
                message,
                ty,
                description,
            } => non_success(NonSuccessKind::Failure, message, ty, description),
            Status::Error {
                message,
                ty,
                description,
            } => non_success(NonSuccessKind::Error, message, ty, description),
            Status::Skipped { message } => {
                let mut st = TestCaseStatus::skipped();
                st.set_message(message);
                st
            }
        };
        let mut tc = TestCase::new(self.name, status);
        tc.set_classname(self.classname);
        if let Some(out) = self.system_out {
            tc.set_system_out(out);
        }
        tc
    }
}

fn non_success(
    kind: NonSuccessKind,
    message: String,
    ty: &str,
    description: Option<String>,
) -> TestCaseStatus {
    let mut st = TestCaseStatus::non_success(kind);
    st.set_message(message);
    st.set_type(ty);
    if let Some(d) = description {
        st.set_description(d);
    }
    st
}

/// Whether quick-junit's `XmlString` keeps `s` as it is. It runs the text through an
/// ANSI parser that drops every C0 control but the line feed (so ESC sequences, tabs
/// and CRs), and C1 controls (U+0080–U+009F), then drops the remaining C0 controls;
/// everything else is kept.
fn kept_by_quick_junit(s: &str) -> bool {
    let b = s.as_bytes();
    // U+0080–U+009F are 0xC2 0x80–0x9F in UTF-8
    !b.iter().enumerate().any(|(i, &c)| {
        (c < 0x20 && c != b'\n') || (c == 0xC2 && b.get(i + 1).is_some_and(|&n| n <= 0x9F))
    })
}

/// Text escaped as quick-xml escapes attribute values and text (`& < > ' "`).
fn push_xml(o: &mut Vec<u8>, s: &str) {
    let mut rest = s.as_bytes();
    while let Some(i) = rest
        .iter()
        .position(|b| matches!(b, b'&' | b'<' | b'>' | b'\'' | b'"'))
    {
        o.extend_from_slice(&rest[..i]);
        o.extend_from_slice(match rest[i] {
            b'&' => b"&amp;",
            b'<' => b"&lt;",
            b'>' => b"&gt;",
            b'\'' => b"&apos;",
            _ => b"&quot;",
        });
        rest = &rest[i + 1..];
    }
    o.extend_from_slice(rest);
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
            let cases: Vec<Case> = p
                .checks
                .iter()
                .filter(|c| &c.rules_file == file)
                .map(|c| check_case(&p.path, c, strict))
                .collect();
            if !cases.is_empty() {
                out.push((i, Body::of(cases)));
            }
        }
        let error = |ty: &'static str, why: &str| Status::Error {
            message: first_line(why).to_string(),
            ty,
            description: Some(why.to_string()),
        };
        if p.status == PartStatus::Unreadable {
            let why = p.error.as_deref().unwrap_or("unknown error");
            let tc = Case::new(
                format!("{} :: read", p.path),
                &p.path,
                error("unreadable", why),
            );
            out.push((self.fixed(UNREADABLE), Body::of(vec![tc])));
        }
        // a part that was read but whose view or sidecar failed may have no check at
        // all; without its own case it would fail the run and appear nowhere in the XML
        if let (false, Some(why)) = (p.status == PartStatus::Unreadable, p.error.as_deref()) {
            let tc = Case::new(format!("{} :: judge", p.path), &p.path, error("error", why));
            out.push((self.fixed(UNJUDGED), Body::of(vec![tc])));
        }
        if p.status == PartStatus::Unchecked {
            let st = Status::Skipped {
                message: "no rule group selects this part; data checks only".to_string(),
            };
            let tc = Case::new(format!("{} :: rules", p.path), &p.path, st);
            out.push((self.fixed(UNCHECKED), Body::of(vec![tc])));
        }
        let mut baseline = Vec::new();
        if p.status == PartStatus::Missing {
            let st = Status::Failure {
                message: "in the baseline but no longer in the library".to_string(),
                ty: "missing",
                description: None,
            };
            baseline.push(Case::new(format!("{} :: present", p.path), &p.path, st));
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

fn drift_case(path: &str, d: &crate::verdict::DriftOutcome) -> Case {
    let text = format!(
        "{}: {} -> {} ({}, limit {})",
        d.quantity,
        show_value(&d.quantity, d.baseline),
        show_value(&d.quantity, d.now),
        show_change(d),
        d.limit
    );
    let name = format!("{path} :: drift {}", d.quantity);
    if d.status == CheckStatus::Pass {
        let mut tc = Case::new(name, path, Status::Success);
        tc.system_out = Some(text);
        tc
    } else {
        let st = Status::Failure {
            message: text,
            ty: if d.status == CheckStatus::Fail {
                "drift"
            } else {
                "undecided"
            },
            description: None,
        };
        Case::new(name, path, st)
    }
}

fn first_line(s: &str) -> &str {
    s.lines().next().unwrap_or(s)
}

fn check_case(path: &str, c: &CheckOutcome, strict: bool) -> Case {
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
        Status::Failure {
            message: message(),
            ty: match c.status {
                CheckStatus::Undecided => "undecided",
                _ => "fail",
            },
            description: Some(detail),
        }
    } else {
        Status::Success
    };
    let mut tc = Case::new(format!("{path} :: {}", c.id), path, status);
    if is_warning(c, strict) {
        // JUnit has no warning status; a CI reader still sees it in the case's output.
        tc.system_out = Some(format!("warning: {}", message()));
    }
    tc
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Texts with everything the XML writer must treat like quick-junit: the five
    /// escaped characters, line breaks, non-ASCII text, and what quick-junit strips
    /// (ESC sequences, tabs, CRs, other C0 and C1 controls).
    fn texts() -> Vec<String> {
        let mut v: Vec<String> = [
            "",
            "plain",
            "caps/C100f_w10.s1p :: c-in-band",
            "q(band) min 2.46 at 3 GHz >= 3 & srf > 2 × band.hi",
            "<tag attr=\"x\" other='y'>&amp;</tag>",
            "line one\nline two\n",
            "µ Ω – π ±",
            "\u{1b}[31mred\u{1b}[0m",
            "tab\there",
            "cr\r\nlf",
            "bell\u{7}",
            "c1 \u{85} \u{9b}31m",
            "del \u{7f}",
            "\u{a0} no-break space (0xC2 0xA0 is kept)",
        ]
        .iter()
        .map(|s| s.to_string())
        .collect();
        // every pair, so escapes sit next to each other and at both ends
        let base = v.clone();
        for a in &base {
            for b in &base {
                v.push(format!("{a}{b}"));
            }
        }
        v
    }

    fn cases_of(t: &str, u: &str) -> Vec<Case> {
        let mut out = vec![
            Case::new(t.to_string(), u, Status::Success),
            Case::new(
                u.to_string(),
                t,
                Status::Failure {
                    message: t.to_string(),
                    ty: "fail",
                    description: Some(u.to_string()),
                },
            ),
            Case::new(
                t.to_string(),
                t,
                Status::Failure {
                    message: u.to_string(),
                    ty: "drift",
                    description: None,
                },
            ),
            Case::new(
                t.to_string(),
                u,
                Status::Error {
                    message: u.to_string(),
                    ty: "unreadable",
                    description: Some(t.to_string()),
                },
            ),
            Case::new(
                u.to_string(),
                u,
                Status::Skipped {
                    message: t.to_string(),
                },
            ),
        ];
        let mut with_out = Case::new(t.to_string(), u, Status::Success);
        with_out.system_out = Some(u.to_string());
        out.push(with_out);
        let mut failed_out = out[1].clone();
        failed_out.system_out = Some(t.to_string());
        out.push(failed_out);
        out
    }

    #[test]
    fn own_case_writer_gives_quick_junits_bytes() {
        let texts = texts();
        let mut own = 0;
        for (i, t) in texts.iter().enumerate() {
            // a spread of partners keeps the run short but mixes every kind of text
            for u in texts.iter().skip(i % 7).step_by(13) {
                let cases = cases_of(t, u);
                let want = Body::by_quick_junit(cases.clone());
                let got = Body::of(cases.clone());
                assert_eq!(
                    String::from_utf8_lossy(&got.text),
                    String::from_utf8_lossy(&want.text),
                    "{t:?} / {u:?}"
                );
                assert_eq!(
                    (got.tests, got.failures, got.errors, got.skipped),
                    (want.tests, want.failures, want.errors, want.skipped)
                );
                // the cases quick-junit keeps as they are: the own writer alone
                for c in cases.into_iter().filter(Case::is_clean) {
                    let mut text = Vec::new();
                    c.write(&mut text);
                    assert_eq!(text, Body::by_quick_junit(vec![c]).text, "{t:?} / {u:?}");
                    own += 1;
                }
            }
        }
        assert!(own > 1000, "the own writer was checked on {own} cases");
    }

    #[test]
    fn clean_means_quick_junit_keeps_the_text() {
        for t in texts() {
            let kept = quick_junit::XmlString::new(&t).as_str() == t;
            assert_eq!(kept_by_quick_junit(&t), kept, "{t:?}");
        }
        for c in (0u32..0x800).filter_map(char::from_u32) {
            let t = format!("a{c}b");
            let kept = quick_junit::XmlString::new(&t).as_str() == t;
            assert_eq!(kept_by_quick_junit(&t), kept, "U+{:04X}", c as u32);
        }
    }
}
