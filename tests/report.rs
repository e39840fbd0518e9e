//! The report writers on a hand-built run report (tests/report_common): snapshots of
//! the terminal summary, Markdown, JSON and JUnit XML; the JUnit file read back with
//! quick-junit's own reader (its counts checked against the report); the HTML page's
//! structure; determinism; atomic writing of all four files.

mod report_common;

use lcgate::report::{self, plot};
use lcgate::verdict::{CheckStatus, PartStatus, RunReport, Severity};
use report_common::sample_report;

fn small() -> RunReport {
    sample_report(41)
}

#[test]
fn terminal_summary() {
    let r = small();
    let plain = report::terminal(&r, false);
    assert!(!plain.contains('\x1b'));
    insta::assert_snapshot!("terminal", plain);
    // colour adds ANSI codes and nothing else
    let coloured = report::terminal(&r, true);
    assert!(coloured.contains("\x1b[1;31m"));
    let re = regex::Regex::new("\x1b\\[[0-9;]*m").expect("regex");
    assert_eq!(re.replace_all(&coloured, ""), plain);
}

#[test]
fn terminal_order_failures_first() {
    let t = report::terminal(&small(), false);
    let at = |s: &str| t.find(s).unwrap_or_else(|| panic!("missing {s:?} in\n{t}"));
    assert!(at("Failed: rules/mm-coils.yaml") < at("Warnings:"));
    assert!(at("Failed: rules/rf-coils.yaml") < at("Warnings:"));
    assert!(at("Warnings:") < at("Could not be read"));
    assert!(at("Could not be read") < at("Changed since baseline"));
    // the biggest move (q_peak −8.2 %, over its limit) comes before the small ones
    assert!(at("q_peak: 11 -> 10.1") < at("srf: 8.95 GHz -> 8.9 GHz"));
    assert!(t
        .trim_end()
        .lines()
        .last()
        .is_some_and(|l| l.starts_with("FAIL")));
}

#[test]
fn markdown_summary() {
    insta::assert_snapshot!("markdown", report::markdown(&small()));
}

#[test]
fn json_document() {
    let r = small();
    let j = report::json(&r);
    insta::assert_snapshot!("json", j);
    let back: RunReport = serde_json::from_str(&j).expect("report.json reads back");
    assert_eq!(back, r);
    let v: serde_json::Value = serde_json::from_str(&j).expect("json");
    assert_eq!(v["format"], "lcgate-report/1");
}

#[test]
fn junit_xml() {
    let r = small();
    let x = report::junit(&r);
    insta::assert_snapshot!("junit", x);
    assert!(!x.contains("timestamp") && !x.contains("time="));
    let parsed = quick_junit::Report::deserialize_from_str(&x).expect("JUnit XML parses");

    // one failing testcase per failing check (error level, or any level with --strict),
    // per drift entry over its limit and per missing part
    let failing_checks = r
        .parts
        .iter()
        .flat_map(|p| &p.checks)
        .filter(|c| c.status != CheckStatus::Pass && c.severity == Severity::Error)
        .count();
    let failing_drift = r
        .parts
        .iter()
        .flat_map(|p| &p.drift)
        .filter(|d| d.status != CheckStatus::Pass)
        .count();
    let missing = r
        .parts
        .iter()
        .filter(|p| p.status == PartStatus::Missing)
        .count();
    assert_eq!(failing_checks, 3);
    assert_eq!(parsed.failures, failing_checks + failing_drift + missing);
    assert_eq!(parsed.errors, 1, "the unreadable file");
    assert_eq!(parsed.skipped, 1, "the unchecked part");

    // per rules file: one testcase per part and check, named `path :: id`
    for info in &r.rules {
        let suite = parsed
            .test_suites
            .iter()
            .find(|s| s.name.as_str().starts_with(info.path.as_str()))
            .expect("a suite per rules file");
        let expected: Vec<String> = r
            .parts
            .iter()
            .flat_map(|p| {
                p.checks
                    .iter()
                    .filter(|c| c.rules_file == info.path)
                    .map(move |c| format!("{} :: {}", p.path, c.id))
            })
            .collect();
        let names: Vec<&str> = suite.test_cases.iter().map(|t| t.name.as_str()).collect();
        assert_eq!(names, expected);
    }
    // failure messages carry the values put in and the hint
    let case = parsed
        .test_suites
        .iter()
        .flat_map(|s| &s.test_cases)
        .find(|t| t.name.as_str() == "coils/rf/L2p0n_w6.s2p :: srf-margin")
        .expect("case");
    match &case.status {
        quick_junit::TestCaseStatus::NonSuccess { message, .. } => {
            let m = message.as_ref().map(|m| m.as_str()).unwrap_or("");
            assert!(m.contains("srf 8.9 GHz >= 2 × 5.9 GHz = 11.8 GHz"), "{m}");
            assert!(m.contains("hint: fewer turns"), "{m}");
        }
        other => panic!("expected a failure, got {other:?}"),
    }
    // with --strict the warning becomes a failure too
    let mut strict = r.clone();
    strict.strict = true;
    let p = quick_junit::Report::deserialize_from_str(&report::junit(&strict)).expect("parses");
    assert_eq!(p.failures, parsed.failures + 1);
}

/// Element ids, headings and SVG charts of the page, in order: the page's skeleton.
fn html_structure(h: &str) -> String {
    let re =
        regex::Regex::new(r#"<(h[1-3]|section|svg|table|form)\b[^>]*?(?:id="([^"]+)")?[^>]*>"#)
            .expect("regex");
    let heading = regex::Regex::new(r"<(h[1-3])[^>]*>(.*?)</h[1-3]>").expect("regex");
    let tags = regex::Regex::new(r"<[^>]+>").expect("regex");
    let mut out = String::new();
    let mut headings = heading
        .captures_iter(h)
        .map(|c| tags.replace_all(&c[2], "").to_string());
    for c in re.captures_iter(h) {
        let tag = &c[1];
        let id = c.get(2).map(|m| m.as_str()).unwrap_or("");
        if tag.starts_with('h') {
            let text = headings.next().unwrap_or_default();
            out.push_str(&format!("{tag} {text}\n"));
        } else {
            out.push_str(&format!("  <{tag}> {id}\n"));
        }
    }
    out
}

#[test]
fn html_page_structure() {
    let r = small();
    let h = report::html(&r);
    insta::assert_snapshot!("html_structure", html_structure(&h));
    // self-contained: nothing fetched
    for bad in ["http://", "https://", "src=", "@import", "url(http"] {
        let hits: Vec<_> = h
            .match_indices(bad)
            .map(|(i, _)| &h[i.saturating_sub(30)..i + 40])
            .collect();
        // the SVG namespace is an identifier, not a fetch
        assert!(
            hits.iter()
                .all(|s| s.contains("xmlns=\"http://www.w3.org/2000/svg\"")),
            "{bad}: {hits:?}"
        );
    }
    // balanced elements that matter for rendering
    for tag in ["svg", "section", "table", "figure", "script", "style"] {
        let open = h.matches(&format!("<{tag}")).count();
        let close = h.matches(&format!("</{tag}>")).count();
        assert_eq!(open, close, "<{tag}>");
    }
    // every part has a section the table links to, and every plotted part its charts
    let ids = report::html_part_ids(&r);
    for (p, id) in r.parts.iter().zip(&ids) {
        assert!(h.contains(&format!(
            "<section class=\"part st-{}\" id=\"{id}\"",
            p.status.as_str()
        )));
        assert!(h.contains(&format!("href=\"#{id}\"")));
        if p.plot.is_some() {
            assert!(h.contains(&format!("id=\"{id}-l\"")), "{id}");
            assert!(h.contains(&format!("id=\"{id}-q\"")), "{id}");
        }
    }
    // run time in its own element, the only place it appears (its trailing spaces
    // take the page's opening to whole 4 KiB blocks, see report::BLOCK)
    let run_time = regex::Regex::new(
        r#"<p id="run-time" class="run-time">Run started 2026-03-04T05:06:07Z, took 1\.25 s\. *</p>"#,
    )
    .expect("regex");
    assert!(run_time.is_match(&h));
    let first_section = h.find("<section class=\"part").expect("a part section");
    assert_eq!(
        first_section % 4096,
        0,
        "sections start on a block boundary"
    );
    let mut later = r.clone();
    later.run.started = "2027-01-01T00:00:00Z".into();
    later.run.seconds = 99.0;
    let h2 = report::html(&later);
    let strip = |s: &str| {
        let re = regex::Regex::new(r#"<p id="run-time"[^<]*</p>"#).expect("regex");
        re.replace(s, "").to_string()
    };
    assert_ne!(h, h2);
    assert_eq!(strip(&h), strip(&h2));
}

#[test]
fn html_plots_show_band_marks_and_loss_strip() {
    let r = sample_report(401);
    let h = report::html(&r);
    let part = r
        .parts
        .iter()
        .find(|p| p.path == "coils/rf/L2p0n_w6.s2p")
        .expect("part");
    let pd = part.plot.as_ref().expect("plot");
    assert!(
        pd.freq.len() <= plot::PLOT_POINTS + 40 && pd.freq.len() > plot::PLOT_POINTS / 2,
        "{}",
        pd.freq.len()
    );
    let srf = pd.marks.get("srf").copied().expect("srf mark");
    // the mark label reads in engineering units
    assert!(h.contains(&format!("SRF {}", lcgate::units::eng(srf, "Hz"))));
    assert!(h.contains("class=\"band\""));
    for m in ["m-conductor", "m-substrate", "m-resonance"] {
        assert!(h.contains(&format!("<rect class=\"{m}\"")), "{m}");
    }
    assert!(h.contains(">1 GHz<") && h.contains(">10 GHz<"));
    assert!(h.contains("Q limited by:"));
}

#[test]
fn outputs_are_deterministic() {
    let a = sample_report(201);
    let b = sample_report(201);
    assert_eq!(report::json(&a), report::json(&b));
    assert_eq!(report::junit(&a), report::junit(&b));
    assert_eq!(report::markdown(&a), report::markdown(&b));
    assert_eq!(report::html(&a), report::html(&b));
    // JUnit and Markdown do not carry the run time
    let mut c = a.clone();
    c.run.seconds = 42.0;
    c.run.started = "2030-01-01T00:00:00Z".into();
    assert_eq!(report::junit(&a), report::junit(&c));
    assert_eq!(report::markdown(&a), report::markdown(&c));
}

#[test]
fn write_all_writes_four_files() {
    let dir = tempfile::tempdir().expect("tempdir");
    let out = dir.path().join("out");
    let r = small();
    report::write_all(&out, &r).expect("write");
    for name in report::REPORT_FILES {
        let bytes = std::fs::read(out.join(name)).expect(name);
        assert!(!bytes.is_empty(), "{name}");
    }
    assert_eq!(
        std::fs::read_to_string(out.join("report.xml")).expect("xml"),
        report::junit(&r)
    );
    // a folder that cannot be made: the error names it
    let blocker = dir.path().join("a-file");
    std::fs::write(&blocker, b"x").expect("file");
    let e = report::write_all(&blocker.join("sub"), &r).expect_err("must fail");
    assert!(e.to_string().contains("a-file"), "{e}");
}

#[test]
fn large_library_page_stays_small() {
    // 2,000 plotted parts of 1,001 points each (the design's scale target): the page must
    // stay well under 30 MB.
    let one = sample_report(1001);
    let mut r = one.clone();
    r.parts.clear();
    let template: Vec<_> = one
        .parts
        .iter()
        .filter(|p| p.plot.is_some())
        .cloned()
        .collect();
    for i in 0..2000 {
        let mut p = template[i % template.len()].clone();
        p.path = format!("bulk/{:04}/{}", i, p.path);
        r.parts.push(p);
    }
    r.summary.parts = r.parts.len();
    let h = report::html(&r);
    let mb = h.len() as f64 / 1e6;
    eprintln!("2,000-part report.html: {mb:.1} MB");
    assert!(mb < 30.0, "{mb} MB");
}
