//! The HTML report in a real browser: Debian's chromium, headless, renders the report
//! of the hand-built run (tests/report_common) to a PNG screenshot and dumps the DOM
//! after the page's script ran. Every part's section and every plot must be in the
//! DOM, the script must have finished (`data-ready="1"` on body) without an error
//! (`data-error`), and chromium must not log an uncaught script error.
//!
//! No browser is not a reason to skip: the test fails and says how to get one
//! (`scripts/test` installs it with apt). `LCGATE_KEEP_REPORT=DIR` keeps the page and
//! the screenshot for a look.

mod report_common;

use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

use lcgate::report;

fn chromium() -> PathBuf {
    let candidates = [
        std::env::var_os("LCGATE_CHROMIUM").map(PathBuf::from),
        Some(PathBuf::from("/usr/bin/chromium")),
        Some(PathBuf::from("/usr/bin/chromium-browser")),
    ];
    for c in candidates.into_iter().flatten() {
        if c.is_file() {
            return c;
        }
    }
    panic!(
        "no chromium found (looked at $LCGATE_CHROMIUM, /usr/bin/chromium, /usr/bin/chromium-browser); \
         run scripts/test, which installs Debian's chromium (apt-get install -y chromium)"
    );
}

/// Run chromium headless on `page` with `extra` arguments; (stdout, stderr).
fn run_browser(page: &Path, profile: &Path, extra: &[String]) -> (String, String) {
    let mut cmd = Command::new(chromium());
    cmd.args([
        "--headless",
        "--no-sandbox",
        "--disable-gpu",
        "--disable-quic",
        "--no-first-run",
        "--disable-background-networking",
        "--disable-component-update",
        "--disable-sync",
        "--disable-dev-shm-usage",
        "--hide-scrollbars",
    ])
    .arg(format!("--user-data-dir={}", profile.display()))
    .args(extra)
    .arg(format!("file://{}", page.display()))
    .stdin(Stdio::null())
    .stdout(Stdio::piped())
    .stderr(Stdio::piped());
    let mut child = cmd.spawn().expect("chromium starts");
    // Read both pipes on threads so a full pipe cannot stall the browser.
    let mut out = child.stdout.take().expect("stdout");
    let mut err = child.stderr.take().expect("stderr");
    let t_out = std::thread::spawn(move || {
        let mut s = String::new();
        let _ = std::io::Read::read_to_string(&mut out, &mut s);
        s
    });
    let t_err = std::thread::spawn(move || {
        let mut s = String::new();
        let _ = std::io::Read::read_to_string(&mut err, &mut s);
        s
    });
    let start = Instant::now();
    loop {
        match child.try_wait().expect("wait") {
            Some(_) => break,
            None if start.elapsed() > Duration::from_secs(120) => {
                let _ = child.kill();
                let _ = child.wait();
                panic!("chromium did not finish within 120 s");
            }
            None => std::thread::sleep(Duration::from_millis(100)),
        }
    }
    (
        t_out.join().unwrap_or_default(),
        t_err.join().unwrap_or_default(),
    )
}

#[test]
fn report_renders_in_chromium() {
    let r = report_common::sample_report(401);
    let dir = tempfile::tempdir().expect("tempdir");
    report::write_all(dir.path(), &r).expect("reports written");
    let page = dir.path().join("report.html");
    let profile = dir.path().join("profile");

    let (dom, err) = run_browser(&page, &profile, &["--dump-dom".to_string()]);
    assert!(
        !err.contains("Uncaught"),
        "script error in chromium's log:\n{err}"
    );
    let body = dom
        .find("<body")
        .map(|i| &dom[i..dom[i..].find('>').map_or(dom.len(), |j| i + j)])
        .unwrap_or_else(|| panic!("no <body> in the DOM dump; chromium said:\n{err}"));
    assert!(
        !body.contains("data-error"),
        "the page's script failed: {body}"
    );
    assert!(
        body.contains("data-ready=\"1\""),
        "the page's script did not finish: {body}\n{err}"
    );
    // the filter line the script fills in
    let n = r.parts.len();
    assert!(
        dom.contains(&format!("{n} of {n} parts shown")),
        "filter count missing"
    );

    let ids = report::html_part_ids(&r);
    for (p, id) in r.parts.iter().zip(&ids) {
        assert!(
            dom.contains(&format!("id=\"{id}\"")),
            "section of {} missing",
            p.path
        );
        if let Some(plot) = &p.plot {
            for chart in ["l", "q"] {
                let cid = format!("id=\"{id}-{chart}\"");
                let at = dom
                    .find(&cid)
                    .unwrap_or_else(|| panic!("plot {cid} missing"));
                // the chart was parsed as SVG with its curves inside
                let svg = &dom[at..at + dom[at..].find("</svg>").expect("svg closed")];
                assert!(svg.contains("class=\"curve "), "{cid} has no curve");
            }
            if !plot.loss_bands.is_empty() {
                assert!(dom.contains(&format!("id=\"{id}-q\"")));
            }
        }
    }

    let shot = dir.path().join("report.png");
    let (_, err) = run_browser(
        &page,
        &profile,
        &[
            format!("--screenshot={}", shot.display()),
            "--window-size=1400,3000".to_string(),
        ],
    );
    assert!(
        !err.contains("Uncaught"),
        "script error in chromium's log:\n{err}"
    );
    let png = std::fs::read(&shot)
        .unwrap_or_else(|e| panic!("no screenshot ({e}); chromium said:\n{err}"));
    assert!(png.starts_with(b"\x89PNG\r\n\x1a\n"), "not a PNG");
    // a blank page compresses to a few kB; the rendered report does not
    assert!(png.len() > 50_000, "screenshot is only {} bytes", png.len());
    // To look at the result: LCGATE_KEEP_REPORT=DIR keeps the page and its screenshot.
    if let Some(keep) = std::env::var_os("LCGATE_KEEP_REPORT") {
        let keep = PathBuf::from(keep);
        let _ = std::fs::create_dir_all(&keep);
        let _ = std::fs::copy(&shot, keep.join("report.png"));
        let _ = std::fs::copy(&page, keep.join("report.html"));
    }
}
