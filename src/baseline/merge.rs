//! `lcgate merge`: join the `report.json` files of the shards of one run into one
//! report, as if the library had been judged in one go.
//!
//! Shards are joined only when they are provably parts of the same run: same tool
//! version, same rules (paths and hashes), same baseline and `--strict`, every shard
//! `K/N` of one `N` present exactly once, no part twice, and each part in the shard its
//! path hashes to. Anything else is refused with a message that names the files.

use std::collections::{BTreeMap, BTreeSet};
use std::path::Path;

use super::in_shard;
use crate::verdict::{RunInfo, RunReport};

/// Format tag of `report.json`.
const REPORT_FORMAT: &str = "lcgate-report/1";

/// Shards that cannot be joined, or a report that cannot be read (exit status 2).
#[derive(Debug, thiserror::Error)]
pub enum MergeError {
    /// nothing to merge
    #[error("no reports to merge")]
    Empty,
    /// a file cannot be read
    #[error("report `{path}` cannot be read: {message}")]
    Io {
        /// the file
        path: String,
        /// why
        message: String,
    },
    /// not JSON, or not of the report's shape
    #[error("report `{path}`:{line}:{column}: {message}")]
    Json {
        /// the file
        path: String,
        /// 1-based line
        line: usize,
        /// 1-based column
        column: usize,
        /// what is wrong
        message: String,
    },
    /// JSON but not a report
    #[error(
        "`{path}` is not a lcgate report: expected \"format\": \"{REPORT_FORMAT}\", found {found}"
    )]
    Format {
        /// the file
        path: String,
        /// the format field, quoted, or `no format field`
        found: String,
    },
    /// two inputs disagree on something all shards of one run share
    #[error("`{a}` and `{b}` are not shards of the same run: {what} differ ({va} vs {vb})")]
    Mismatch {
        /// first file
        a: String,
        /// second file
        b: String,
        /// what differs (`tool versions`, `rules`, …)
        what: &'static str,
        /// first file's value
        va: String,
        /// second file's value
        vb: String,
    },
    /// a report of a whole (unsharded) run among others
    #[error(
        "`{path}` is the report of an unsharded run: merge joins the reports of `check --shard K/N` runs"
    )]
    Unsharded {
        /// the file
        path: String,
    },
    /// the same shard twice
    #[error("shard {k}/{n} is given twice: `{a}` and `{b}`")]
    DoubleShard {
        /// shard
        k: usize,
        /// of
        n: usize,
        /// first file
        a: String,
        /// second file
        b: String,
    },
    /// shards missing
    #[error("shards missing: {missing} of {n} (given: {given})")]
    MissingShards {
        /// the missing shards, `2/4, 3/4`
        missing: String,
        /// N
        n: usize,
        /// the shards given
        given: String,
    },
    /// the same part in two shards
    #[error("part `{part}` is in two reports: `{a}` and `{b}`")]
    DoublePart {
        /// the part
        part: String,
        /// first file
        a: String,
        /// second file
        b: String,
    },
    /// a part in the wrong shard
    #[error("part `{part}` in `{path}` does not belong to shard {k}/{n}: the shards were not split by this version of lcgate")]
    WrongShard {
        /// the part
        part: String,
        /// the file
        path: String,
        /// shard
        k: usize,
        /// of
        n: usize,
    },
}

#[derive(serde::Deserialize)]
struct Probe {
    format: Option<serde_json::Value>,
}

/// Read a `report.json`; `name` is used in messages.
pub fn parse_report(name: &str, bytes: &[u8]) -> Result<RunReport, MergeError> {
    let json = |e: serde_json::Error| MergeError::Json {
        path: name.to_string(),
        line: e.line(),
        column: e.column(),
        message: e.to_string(),
    };
    let probe: Probe = serde_json::from_slice(bytes).map_err(json)?;
    match &probe.format {
        Some(serde_json::Value::String(s)) if s == REPORT_FORMAT => {}
        other => {
            return Err(MergeError::Format {
                path: name.to_string(),
                found: other
                    .as_ref()
                    .map_or("no format field".to_string(), |v| v.to_string()),
            })
        }
    }
    serde_json::from_slice(bytes).map_err(json)
}

/// Read a `report.json` file.
pub fn load_report(path: &Path) -> Result<RunReport, MergeError> {
    let name = path.to_string_lossy().into_owned();
    let bytes = std::fs::read(path).map_err(|e| MergeError::Io {
        path: name.clone(),
        message: e.to_string(),
    })?;
    parse_report(&name, &bytes)
}

fn rules_text(r: &RunReport) -> String {
    r.rules
        .iter()
        .map(|f| format!("{} {}", f.path, f.hash.get(..12).unwrap_or(&f.hash)))
        .collect::<Vec<_>>()
        .join(", ")
}

fn shards_text(shards: impl IntoIterator<Item = usize>, n: usize) -> String {
    shards
        .into_iter()
        .map(|k| format!("{k}/{n}"))
        .collect::<Vec<_>>()
        .join(", ")
}

/// Join shard reports (`(name, report)`, names used in messages) into one report:
/// parts sorted by path, summary and verdict recomputed, `shard` cleared. A single
/// unsharded report is accepted alone (it is rewritten as it is).
pub fn merge(inputs: Vec<(String, RunReport)>) -> Result<RunReport, MergeError> {
    let Some((first_name, first)) = inputs.first() else {
        return Err(MergeError::Empty);
    };
    for (name, r) in &inputs[1..] {
        let mismatch = |what, va: String, vb: String| MergeError::Mismatch {
            a: first_name.clone(),
            b: name.clone(),
            what,
            va,
            vb,
        };
        if r.tool_version != first.tool_version {
            return Err(mismatch(
                "tool versions",
                first.tool_version.clone(),
                r.tool_version.clone(),
            ));
        }
        if r.rules != first.rules {
            return Err(mismatch("rules", rules_text(first), rules_text(r)));
        }
        if r.baseline != first.baseline {
            let show = |b: &Option<String>| b.clone().unwrap_or_else(|| "none".to_string());
            return Err(mismatch(
                "baselines",
                show(&first.baseline),
                show(&r.baseline),
            ));
        }
        if r.strict != first.strict {
            return Err(mismatch(
                "--strict settings",
                first.strict.to_string(),
                r.strict.to_string(),
            ));
        }
    }

    // shards: all of one N, each K once
    if inputs.len() > 1 || first.shard.is_some() {
        let mut by_k: BTreeMap<usize, &str> = BTreeMap::new();
        let mut n_first: Option<(usize, &str)> = None;
        for (name, r) in &inputs {
            let Some([k, n]) = r.shard else {
                return Err(MergeError::Unsharded { path: name.clone() });
            };
            match n_first {
                None => n_first = Some((n, name)),
                Some((n0, name0)) if n0 != n => {
                    return Err(MergeError::Mismatch {
                        a: name0.to_string(),
                        b: name.clone(),
                        what: "shard counts",
                        va: n0.to_string(),
                        vb: n.to_string(),
                    })
                }
                Some(_) => {}
            }
            if let Some(a) = by_k.insert(k, name) {
                return Err(MergeError::DoubleShard {
                    k,
                    n,
                    a: a.to_string(),
                    b: name.clone(),
                });
            }
            if let Some(p) = r.parts.iter().find(|p| !in_shard(&p.path, [k, n])) {
                return Err(MergeError::WrongShard {
                    part: p.path.clone(),
                    path: name.clone(),
                    k,
                    n,
                });
            }
        }
        if let Some((n, _)) = n_first {
            let missing: Vec<usize> = (1..=n).filter(|k| !by_k.contains_key(k)).collect();
            if !missing.is_empty() {
                return Err(MergeError::MissingShards {
                    missing: shards_text(missing, n),
                    n,
                    given: shards_text(by_k.keys().copied(), n),
                });
            }
        }
    }

    let mut owner: BTreeMap<&str, &str> = BTreeMap::new();
    for (name, r) in &inputs {
        for p in &r.parts {
            if let Some(a) = owner.insert(&p.path, name) {
                return Err(MergeError::DoublePart {
                    part: p.path.clone(),
                    a: a.to_string(),
                    b: name.clone(),
                });
            }
        }
    }

    let (computed, cached) = inputs.iter().fold((0, 0), |(c, k), (_, r)| {
        (c + r.run.computed, k + r.run.cached)
    });
    let started = inputs
        .iter()
        .map(|(_, r)| r.run.started.clone())
        .min()
        .unwrap_or_default();
    let seconds = inputs
        .iter()
        .map(|(_, r)| r.run.seconds)
        .fold(0.0, f64::max);
    let rules_changed: BTreeSet<String> = inputs
        .iter()
        .flat_map(|(_, r)| r.rules_changed.iter().cloned())
        .collect();
    let mut inputs = inputs;
    let mut joined = inputs.swap_remove(0).1;
    for (_, r) in inputs {
        joined.parts.extend(r.parts);
    }
    joined.parts.sort_by(|a, b| a.path.cmp(&b.path));
    joined.summary = crate::pipeline::summarise(&joined.parts);
    joined.passed = crate::pipeline::passed(&joined.parts);
    joined.rules_changed = rules_changed.into_iter().collect();
    joined.shard = None;
    joined.run = RunInfo {
        started,
        seconds,
        computed,
        cached,
    };
    Ok(joined)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::verdict::{PartReport, PartStatus, RulesFileInfo};

    fn part(path: &str, status: PartStatus) -> PartReport {
        PartReport {
            path: path.into(),
            status,
            kind: None,
            view: None,
            figures: Default::default(),
            q_drop_cause: None,
            checks: vec![],
            drift: vec![],
            new: false,
            error: None,
            plot: None,
        }
    }

    fn names(n: usize) -> Vec<String> {
        (0..n).map(|i| format!("lib/p{i:02}.s2p")).collect()
    }

    fn report(shard: Option<[usize; 2]>, paths: &[String], fail: &str) -> RunReport {
        let parts: Vec<PartReport> = paths
            .iter()
            .filter(|p| shard.is_none_or(|s| in_shard(p, s)))
            .map(|p| {
                let status = if p == fail {
                    PartStatus::Fail
                } else {
                    PartStatus::Pass
                };
                part(p, status)
            })
            .collect();
        let summary = crate::pipeline::summarise(&parts);
        let computed = parts.len();
        RunReport {
            format: REPORT_FORMAT.into(),
            tool_version: crate::TOOL_VERSION.into(),
            library: "lib".into(),
            rules: vec![RulesFileInfo {
                path: "r.yaml".into(),
                hash: "abc".into(),
                suite: "s".into(),
            }],
            baseline: None,
            rules_changed: vec![],
            shard,
            strict: false,
            passed: crate::pipeline::passed(&parts),
            summary,
            parts,
            run: RunInfo {
                started: format!("2026-01-0{}T00:00:00Z", shard.map_or(1, |s| s[0])),
                seconds: shard.map_or(1.0, |s| s[0] as f64),
                computed,
                cached: 0,
            },
        }
    }

    fn shards(n: usize, paths: &[String], fail: &str) -> Vec<(String, RunReport)> {
        (1..=n)
            .map(|k| (format!("s{k}.json"), report(Some([k, n]), paths, fail)))
            .collect()
    }

    #[test]
    fn shards_join_into_the_whole_run() {
        let paths = names(20);
        let whole = report(None, &paths, "lib/p07.s2p");
        let mut inputs = shards(3, &paths, "lib/p07.s2p");
        inputs.reverse();
        let joined = merge(inputs).unwrap();
        assert_eq!(joined.parts, whole.parts);
        assert_eq!(joined.summary, whole.summary);
        assert!(!joined.passed);
        assert_eq!(joined.shard, None);
        assert_eq!(joined.run.started, "2026-01-01T00:00:00Z");
        assert_eq!(joined.run.seconds, 3.0);
        // and through JSON, as the command reads them
        let text = serde_json::to_string(&whole).unwrap();
        assert_eq!(parse_report("w.json", text.as_bytes()).unwrap(), whole);
        // one whole report alone is taken as it is
        assert_eq!(
            merge(vec![("w".into(), whole.clone())]).unwrap().parts,
            whole.parts
        );
    }

    #[test]
    fn what_is_refused() {
        let paths = names(20);
        let err = |inputs: Vec<(String, RunReport)>| merge(inputs).unwrap_err().to_string();

        let mut two = shards(3, &paths, "");
        two.remove(1);
        assert_eq!(err(two), "shards missing: 2/3 of 3 (given: 1/3, 3/3)");

        let mut double = shards(3, &paths, "");
        double.push(("again.json".into(), double[1].1.clone()));
        assert_eq!(
            err(double),
            "shard 2/3 is given twice: `s2.json` and `again.json`"
        );

        let mut mixed = shards(2, &paths, "");
        mixed.push(("w.json".into(), report(None, &paths, "")));
        assert!(err(mixed).contains("`w.json` is the report of an unsharded run"));

        let mut counts = shards(2, &paths, "");
        counts.push(("t.json".into(), report(Some([3, 3]), &paths, "")));
        assert!(err(counts).contains("shard counts differ (2 vs 3)"));

        let mut rules = shards(2, &paths, "");
        rules[1].1.rules[0].hash = "def".into();
        assert!(err(rules)
            .contains("`s1.json` and `s2.json` are not shards of the same run: rules differ"));

        let mut version = shards(2, &paths, "");
        version[0].1.tool_version = "0.0.1".into();
        assert!(err(version).contains("tool versions differ"));

        let mut base = shards(2, &paths, "");
        base[1].1.baseline = Some("b.json".into());
        assert!(err(base).contains("baselines differ (none vs b.json)"));

        let mut overlap = shards(2, &paths, "");
        let stray = overlap[0].1.parts[0].clone();
        overlap[1].1.parts.push(stray.clone());
        assert!(err(overlap).contains("does not belong to shard 2/2"));

        assert_eq!(err(vec![]), "no reports to merge");
        let mut twice = report(None, &paths, "");
        let p = twice.parts[3].clone();
        twice.parts.push(p);
        assert!(
            err(vec![("w.json".into(), twice)]).contains("part `lib/p03.s2p` is in two reports")
        );
    }

    #[test]
    fn unreadable_inputs_are_named() {
        let e = parse_report("x.json", b"{\"format\": \"lcgate-baseline/1\"}").unwrap_err();
        assert!(
            e.to_string().contains("`x.json` is not a lcgate report"),
            "{e}"
        );
        let e = parse_report("x.json", b"{\n\"format\": 3}").unwrap_err();
        assert!(e.to_string().contains("found 3"), "{e}");
        let e = parse_report("x.json", b"{\n  \"format\": \"lcgate-report/1\"\n}").unwrap_err();
        assert!(e.to_string().starts_with("report `x.json`:3:1:"), "{e}");
        let e = load_report(Path::new("/no/such/report.json")).unwrap_err();
        assert!(e.to_string().contains("cannot be read"), "{e}");
    }
}
