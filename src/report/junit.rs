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
use crate::verdict::{CheckOutcome, CheckStatus, PartStatus, RunReport};

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
    let mut report = Report::new("lcgate");
    for file in rules_order(r) {
        let name = match suite_of(r, &file) {
            Some(s) => format!("{file} ({s})"),
            None => file.clone(),
        };
        let mut suite = TestSuite::new(name);
        suite.add_property(Property::new("rules_file", file.as_str()));
        if let Some(info) = r.rules.iter().find(|i| i.path == file) {
            suite.add_property(Property::new("hash", info.hash.as_str()));
        }
        for p in &r.parts {
            for c in p.checks.iter().filter(|c| c.rules_file == file) {
                suite.add_test_case(check_case(&p.path, c, r.strict));
            }
        }
        report.add_test_suite(suite);
    }

    let unreadable: Vec<_> = r
        .parts
        .iter()
        .filter(|p| p.status == PartStatus::Unreadable)
        .collect();
    if !unreadable.is_empty() {
        let mut suite = TestSuite::new(SUITE_UNREADABLE);
        for p in unreadable {
            let mut st = TestCaseStatus::non_success(NonSuccessKind::Error);
            let why = p.error.as_deref().unwrap_or("unknown error");
            st.set_message(first_line(why));
            st.set_type("unreadable");
            st.set_description(why);
            let mut tc = TestCase::new(format!("{} :: read", p.path), st);
            tc.set_classname(p.path.as_str());
            suite.add_test_case(tc);
        }
        report.add_test_suite(suite);
    }

    // a part that was read but whose view or sidecar failed may have no check at all;
    // without its own case it would fail the run and appear nowhere in the XML
    let unjudged: Vec<_> = r
        .parts
        .iter()
        .filter(|p| p.status != PartStatus::Unreadable)
        .filter_map(|p| Some((p, p.error.as_deref()?)))
        .collect();
    if !unjudged.is_empty() {
        let mut suite = TestSuite::new(SUITE_UNJUDGED);
        for (p, why) in unjudged {
            let mut st = TestCaseStatus::non_success(NonSuccessKind::Error);
            st.set_message(first_line(why));
            st.set_type("error");
            st.set_description(why);
            let mut tc = TestCase::new(format!("{} :: judge", p.path), st);
            tc.set_classname(p.path.as_str());
            suite.add_test_case(tc);
        }
        report.add_test_suite(suite);
    }

    let unchecked: Vec<_> = r
        .parts
        .iter()
        .filter(|p| p.status == PartStatus::Unchecked)
        .collect();
    if !unchecked.is_empty() {
        let mut suite = TestSuite::new(SUITE_UNCHECKED);
        for p in unchecked {
            let mut st = TestCaseStatus::skipped();
            st.set_message("no rule group selects this part; data checks only");
            let mut tc = TestCase::new(format!("{} :: rules", p.path), st);
            tc.set_classname(p.path.as_str());
            suite.add_test_case(tc);
        }
        report.add_test_suite(suite);
    }

    let has_drift = r.parts.iter().any(|p| !p.drift.is_empty());
    let missing: Vec<_> = r
        .parts
        .iter()
        .filter(|p| p.status == PartStatus::Missing)
        .collect();
    if has_drift || !missing.is_empty() {
        let mut suite = TestSuite::new(SUITE_BASELINE);
        if let Some(b) = &r.baseline {
            suite.add_property(Property::new("baseline", b.as_str()));
        }
        for p in &r.parts {
            if p.status == PartStatus::Missing {
                let mut st = TestCaseStatus::non_success(NonSuccessKind::Failure);
                st.set_message("in the baseline but no longer in the library");
                st.set_type("missing");
                let mut tc = TestCase::new(format!("{} :: present", p.path), st);
                tc.set_classname(p.path.as_str());
                suite.add_test_case(tc);
            }
            for d in &p.drift {
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
                let mut tc = TestCase::new(format!("{} :: drift {}", p.path, d.quantity), st);
                tc.set_classname(p.path.as_str());
                if d.status == CheckStatus::Pass {
                    tc.set_system_out(text);
                }
                suite.add_test_case(tc);
            }
        }
        report.add_test_suite(suite);
    }

    match report.to_string() {
        Ok(s) => s + "\n",
        // quick-junit only fails on I/O, which a String cannot give; keep a valid file.
        Err(e) => format!(
            "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n<testsuites name=\"lcgate\" tests=\"0\"><!-- {} --></testsuites>\n",
            xml_comment_safe(&e.to_string())
        ),
    }
}

fn xml_comment_safe(s: &str) -> String {
    s.replace("--", "- -")
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
    let status = if is_failure(c, strict) {
        let mut st = TestCaseStatus::non_success(NonSuccessKind::Failure);
        st.set_message(message.as_str());
        st.set_type(match c.status {
            CheckStatus::Undecided => "undecided",
            _ => "fail",
        });
        st.set_description(detail.as_str());
        st
    } else {
        TestCaseStatus::success()
    };
    let mut tc = TestCase::new(format!("{path} :: {}", c.id), status);
    tc.set_classname(path);
    if is_warning(c, strict) {
        // JUnit has no warning status; a CI reader still sees it in the case's output.
        tc.set_system_out(format!("warning: {message}"));
    }
    tc
}
