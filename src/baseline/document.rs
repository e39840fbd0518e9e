//! The baseline document (`"format": "lcgate-baseline/1"`): the accepted state of a
//! library, written by `lcgate record` and read by `check --baseline`.
//!
//! ```json
//! { "format": "lcgate-baseline/1", "tool_version": "0.1.0", "library": "lib",
//!   "rules": [{"path": "rules/coils.yaml", "hash": "…", "suite": "…"}],
//!   "parts": [{"path": "coils/L1p2n.s2p", "hash": "…", "view": "differential",
//!              "kind": "inductor", "figures": {"srf": 1.2e10, …},
//!              "drift": {"l(band.mid)": 1.2e-9, "q_peak": 14.1}}] }
//! ```
//!
//! Parts are sorted by path and every map is sorted, so the same library and rules give
//! the same bytes: the file can be kept under version control and reviewed as a diff.

use std::collections::BTreeMap;
use std::io::{self, Write};
use std::path::Path;

use serde::{Deserialize, Serialize};

use super::{write, Judged};
use crate::figures::Kind;
use crate::network::ViewName;
use crate::verdict::RulesFileInfo;

/// Format tag of the baseline document.
pub const BASELINE_FORMAT: &str = "lcgate-baseline/1";

/// The accepted state of a library.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Baseline {
    /// always [`BASELINE_FORMAT`]
    pub format: String,
    /// version of the tool that recorded it
    pub tool_version: String,
    /// library root as given to `record`
    pub library: String,
    /// rules files used, with their hashes (to tell when rules changed since)
    pub rules: Vec<RulesFileInfo>,
    /// parts, sorted by path
    pub parts: Vec<BaselinePart>,
}

/// One part as accepted.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BaselinePart {
    /// path relative to the library root, `/`-separated
    pub path: String,
    /// blake3 of the file's bytes (hex); None when it could not be read
    pub hash: Option<String>,
    /// view judged
    pub view: Option<ViewName>,
    /// kind judged
    pub kind: Option<Kind>,
    /// scalar figures of the judged view and the data checks (SI; null = undefined)
    pub figures: BTreeMap<String, Option<f64>>,
    /// value of every quantity named in a `drift` section that applies to the part
    pub drift: BTreeMap<String, Option<f64>>,
}

/// A baseline that cannot be used (exit status 2: the run cannot be made).
#[derive(Debug, thiserror::Error)]
pub enum BaselineError {
    /// the file cannot be read
    #[error("baseline `{path}` cannot be read: {source}")]
    Io {
        /// the file
        path: String,
        /// why
        #[source]
        source: io::Error,
    },
    /// not JSON, or JSON of the wrong shape
    #[error("baseline `{path}`:{line}:{column}: {message}")]
    Json {
        /// the file
        path: String,
        /// 1-based line
        line: usize,
        /// 1-based column
        column: usize,
        /// what serde_json found wrong
        message: String,
    },
    /// JSON, but not a baseline of a format this build reads
    #[error(
        "baseline `{path}` is not a lcgate baseline: expected \"format\": \"{BASELINE_FORMAT}\", \
         found {found} (write one with `lcgate record`)"
    )]
    Format {
        /// the file
        path: String,
        /// what the `format` field holds, quoted, or `no format field`
        found: String,
    },
    /// the same part twice
    #[error("baseline `{path}` lists part `{part}` twice")]
    Duplicate {
        /// the file
        path: String,
        /// the part
        part: String,
    },
}

/// Only the `format` field, read first so that a wrong document gets a clear message
/// rather than a complaint about its first unexpected field.
#[derive(Deserialize)]
struct Probe {
    format: Option<serde_json::Value>,
}

impl Baseline {
    /// The baseline of a run: its judged parts (in any order) and its rules files.
    pub fn from_judged(library: &str, rules: Vec<RulesFileInfo>, judged: &[Judged]) -> Baseline {
        let mut parts: Vec<BaselinePart> = judged
            .iter()
            .map(|j| {
                let mut drift = BTreeMap::new();
                for m in &j.measures {
                    drift.entry(m.quantity.clone()).or_insert(m.now);
                }
                BaselinePart {
                    path: j.report.path.clone(),
                    hash: j.hash.clone(),
                    view: j.report.view,
                    kind: j.report.kind,
                    figures: j.report.figures.clone(),
                    drift,
                }
            })
            .collect();
        parts.sort_by(|a, b| a.path.cmp(&b.path));
        Baseline {
            format: BASELINE_FORMAT.to_string(),
            tool_version: crate::TOOL_VERSION.to_string(),
            library: library.to_string(),
            rules,
            parts,
        }
    }

    /// The part at `path`, by binary search (parts are sorted).
    pub fn part(&self, path: &str) -> Option<&BaselinePart> {
        self.parts
            .binary_search_by(|p| p.path.as_str().cmp(path))
            .ok()
            .map(|i| &self.parts[i])
    }

    /// Write the document (pretty JSON with a final newline) to `w`.
    pub fn write_to(&self, w: &mut dyn Write) -> io::Result<()> {
        serde_json::to_writer_pretty(&mut *w, self).map_err(io::Error::other)?;
        w.write_all(b"\n")
    }

    /// The document as text.
    pub fn to_json(&self) -> String {
        let mut out = Vec::new();
        // writing to a Vec cannot fail, and every map key is a string
        let _ = self.write_to(&mut out);
        String::from_utf8_lossy(&out).into_owned()
    }

    /// Replace `path` with this baseline, crash-safely (see [`save_with`]).
    pub fn save(&self, path: &Path) -> io::Result<()> {
        save_with(path, |w| self.write_to(w))
    }

    /// Read a baseline document from bytes; `name` is used in messages.
    pub fn parse(name: &str, bytes: &[u8]) -> Result<Baseline, BaselineError> {
        let json_error = |e: serde_json::Error| BaselineError::Json {
            path: name.to_string(),
            line: e.line(),
            column: e.column(),
            message: e.to_string(),
        };
        let probe: Probe = serde_json::from_slice(bytes).map_err(json_error)?;
        match &probe.format {
            Some(serde_json::Value::String(s)) if s == BASELINE_FORMAT => {}
            other => {
                return Err(BaselineError::Format {
                    path: name.to_string(),
                    found: match other {
                        None => "no format field".to_string(),
                        Some(v) => v.to_string(),
                    },
                })
            }
        }
        let mut b: Baseline = serde_json::from_slice(bytes).map_err(json_error)?;
        b.parts.sort_by(|a, b| a.path.cmp(&b.path));
        if let Some(w) = b.parts.windows(2).find(|w| w[0].path == w[1].path) {
            return Err(BaselineError::Duplicate {
                path: name.to_string(),
                part: w[0].path.clone(),
            });
        }
        Ok(b)
    }

    /// Read a baseline file.
    pub fn load(path: &Path) -> Result<Baseline, BaselineError> {
        let name = path.to_string_lossy();
        let bytes = std::fs::read(path).map_err(|source| BaselineError::Io {
            path: name.to_string(),
            source,
        })?;
        Baseline::parse(&name, &bytes)
    }
}

/// Replace the baseline at `path` with what `fill` writes, durably: an interrupted or
/// failed write leaves the old baseline as it was. Split from [`Baseline::save`] so the
/// failure path can be tested with a writer that fails midway.
pub fn save_with(
    path: &Path,
    fill: impl FnOnce(&mut dyn Write) -> io::Result<()>,
) -> io::Result<()> {
    write::atomic_write_with(path, fill)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn sample() -> Baseline {
        Baseline {
            format: BASELINE_FORMAT.into(),
            tool_version: "0.1.0".into(),
            library: "lib".into(),
            rules: vec![RulesFileInfo {
                path: "rules/a.yaml".into(),
                hash: "ab".into(),
                suite: "s".into(),
            }],
            parts: vec![
                BaselinePart {
                    path: "a.s2p".into(),
                    hash: Some("00".into()),
                    view: Some(ViewName::Differential),
                    kind: Some(Kind::Inductor),
                    figures: [
                        ("srf".to_string(), Some(1.25e10)),
                        ("f_q_half".into(), None),
                    ]
                    .into_iter()
                    .collect(),
                    drift: [("l(band.mid)".to_string(), Some(1.2e-9))]
                        .into_iter()
                        .collect(),
                },
                BaselinePart {
                    path: "b.s1p".into(),
                    hash: None,
                    view: None,
                    kind: None,
                    figures: BTreeMap::new(),
                    drift: BTreeMap::new(),
                },
            ],
        }
    }

    #[test]
    fn round_trips_exactly() {
        let b = sample();
        let text = b.to_json();
        assert!(text.ends_with("}\n"));
        let back = Baseline::parse("x", text.as_bytes()).unwrap();
        assert_eq!(back, b);
        assert_eq!(back.to_json(), text);
        assert_eq!(back.part("b.s1p").map(|p| p.hash.is_none()), Some(true));
        assert!(back.part("c.s2p").is_none());
    }

    #[test]
    fn bad_documents_say_what_is_wrong() {
        let e = Baseline::parse("base.json", b"{\n  \"format\": \"lcgate-baseline/1\",\n  x")
            .unwrap_err();
        assert!(
            e.to_string().starts_with("baseline `base.json`:3:3: "),
            "{e}"
        );
        let e = Baseline::parse("r.json", br#"{"format": "lcgate-report/1", "parts": []}"#)
            .unwrap_err();
        assert!(e.to_string().contains("found \"lcgate-report/1\""), "{e}");
        let e = Baseline::parse("r.json", b"[1, 2]").unwrap_err();
        assert!(matches!(e, BaselineError::Json { .. }), "{e}");
        let e = Baseline::parse("r.json", b"{}").unwrap_err();
        assert!(e.to_string().contains("no format field"), "{e}");
        let mut b = sample();
        b.parts[1].path = "a.s2p".into();
        let e = Baseline::parse("d.json", b.to_json().as_bytes()).unwrap_err();
        assert!(e.to_string().contains("lists part `a.s2p` twice"), "{e}");
        let e = Baseline::load(Path::new("/no/such/baseline.json")).unwrap_err();
        assert!(e.to_string().contains("cannot be read"), "{e}");
    }

    #[test]
    fn a_failed_save_keeps_the_old_baseline() {
        let d = tempfile::tempdir().unwrap();
        let p = d.path().join("baseline.json");
        let old = sample();
        old.save(&p).unwrap();
        let before = std::fs::read(&p).unwrap();
        let mut new = sample();
        new.parts.pop();
        // a writer that gives out after the first 40 bytes, as a full disk would
        let r = save_with(&p, |w| {
            let text = new.to_json();
            w.write_all(&text.as_bytes()[..40])?;
            Err(io::Error::new(io::ErrorKind::StorageFull, "no space left"))
        });
        assert!(r.is_err());
        assert_eq!(std::fs::read(&p).unwrap(), before);
        assert_eq!(Baseline::load(&p).unwrap(), old);
    }
}
