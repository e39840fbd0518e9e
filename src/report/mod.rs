//! Report writers: terminal summary, `report.json`, JUnit XML, Markdown and the
//! self-contained HTML page with plots. All file writes are atomic.
