//! The outcome of a run: statuses, per-check and per-drift outcomes, per-part results
//! and the whole run's report (the `lcgate-report/1` document of DESIGN §8). Produced
//! by the pipeline, consumed by every report writer and by `merge`.

use std::collections::BTreeMap;

use serde::{Deserialize, Serialize};

use crate::figures::Kind;
use crate::model::{LossBand, Mechanism};
use crate::network::ViewName;

/// Verdict of one part.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum PartStatus {
    /// every error-level check passed, no drift
    Pass,
    /// a check failed or was undecided, or a drift limit was exceeded
    Fail,
    /// the file could not be read
    Unreadable,
    /// no rule group selects the part (data checks still ran)
    Unchecked,
    /// in the baseline but gone from the library
    Missing,
}

impl PartStatus {
    /// Word used in reports.
    pub fn as_str(self) -> &'static str {
        match self {
            PartStatus::Pass => "pass",
            PartStatus::Fail => "fail",
            PartStatus::Unreadable => "unreadable",
            PartStatus::Unchecked => "unchecked",
            PartStatus::Missing => "missing",
        }
    }
}

/// Outcome of one check or drift comparison.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum CheckStatus {
    /// holds
    Pass,
    /// does not hold
    Fail,
    /// could not be decided (a figure is undefined); fails the run
    Undecided,
}

/// How much a failing check matters.
#[derive(
    Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, Deserialize, Default,
)]
#[serde(rename_all = "snake_case")]
pub enum Severity {
    /// fails the part
    #[default]
    Error,
    /// reported; fails the run only with `--strict`
    Warning,
}

/// Outcome of one check of one part.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CheckOutcome {
    /// the check's id in its rules file
    pub id: String,
    /// rules file the check comes from (as given on the command line)
    pub rules_file: String,
    /// outcome
    pub status: CheckStatus,
    /// severity
    pub severity: Severity,
    /// the expression as written
    pub expr: String,
    /// the expression with values put in
    pub shown: String,
    /// frequency of the worst point for a check over a band (Hz)
    pub worst_f: Option<f64>,
    /// the rule's hint, shown when the check does not pass
    pub hint: Option<String>,
    /// why the check is undecided
    pub reason: Option<String>,
}

/// Outcome of one drift comparison against the baseline.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DriftOutcome {
    /// the quantity as written in the `drift` section (`l(band.mid)`, `q_peak`)
    pub quantity: String,
    /// value in the baseline (SI)
    pub baseline: Option<f64>,
    /// value now (SI)
    pub now: Option<f64>,
    /// relative change (now − baseline)/|baseline| for % limits, else absolute change
    pub change: Option<f64>,
    /// the limit as written (`1%`, `50pH`)
    pub limit: String,
    /// outcome
    pub status: CheckStatus,
}

/// Decimated curves and marks for the plots of a part (carried in `report.json` so
/// that `merge` can redraw the HTML report).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, Default)]
pub struct PlotData {
    /// frequencies (Hz)
    pub freq: Vec<f64>,
    /// curves by figure name (`l`, `q`, `q_tank`, `c`, `k`, …), SI units
    pub series: BTreeMap<String, Vec<Option<f64>>>,
    /// marked frequencies by name (`srf`, `f_q_peak`, `f_q_half`)
    pub marks: BTreeMap<String, f64>,
    /// the band the part is used in (Hz)
    pub band: Option<[f64; 2]>,
    /// loss bands for the strip under the Q plot
    pub loss_bands: Vec<LossBand>,
}

/// Result of one part.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PartReport {
    /// path relative to the library root, `/`-separated
    pub path: String,
    /// verdict
    pub status: PartStatus,
    /// kind judged
    pub kind: Option<Kind>,
    /// view judged
    pub view: Option<ViewName>,
    /// scalar figures of the judged view and the data checks (SI; null = undefined)
    pub figures: BTreeMap<String, Option<f64>>,
    /// mechanism at f_q_half
    pub q_drop_cause: Option<Mechanism>,
    /// check outcomes, in rules-file then check order
    pub checks: Vec<CheckOutcome>,
    /// drift outcomes
    pub drift: Vec<DriftOutcome>,
    /// true when the part is not in the baseline
    #[serde(default)]
    pub new: bool,
    /// read error or other reason the part could not be judged
    pub error: Option<String>,
    /// curves for the plots
    #[serde(default)]
    pub plot: Option<PlotData>,
}

/// A rules file used by the run.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct RulesFileInfo {
    /// path as given
    pub path: String,
    /// blake3 hash of its bytes (hex)
    pub hash: String,
    /// its `suite:` title
    pub suite: String,
}

/// Counts per status.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize, Default)]
pub struct Summary {
    /// parts in the report
    pub parts: usize,
    /// per status
    pub pass: usize,
    /// per status
    pub fail: usize,
    /// per status
    pub unreadable: usize,
    /// per status
    pub unchecked: usize,
    /// per status
    pub missing: usize,
    /// parts not in the baseline
    pub new: usize,
    /// failing error-level checks
    pub failed_checks: usize,
    /// failing warning-level checks
    pub warnings: usize,
}

/// The whole run (`lcgate-report/1`). Everything but `run` is deterministic: the same
/// inputs give the same bytes for any thread count.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RunReport {
    /// always `lcgate-report/1`
    pub format: String,
    /// tool version
    pub tool_version: String,
    /// library root as given
    pub library: String,
    /// rules files
    pub rules: Vec<RulesFileInfo>,
    /// baseline file used, if any
    pub baseline: Option<String>,
    /// rules files whose hash differs from the baseline's
    #[serde(default)]
    pub rules_changed: Vec<String>,
    /// shard `K/N` this report covers, if sharded
    pub shard: Option<[usize; 2]>,
    /// `--strict` was given
    pub strict: bool,
    /// counts
    pub summary: Summary,
    /// exit status the run maps to (0 or 1)
    pub passed: bool,
    /// parts sorted by path
    pub parts: Vec<PartReport>,
    /// non-deterministic facts of the run (time), kept apart from the rest
    pub run: RunInfo,
}

/// When, how long and how much came from the cache: the only non-deterministic part
/// of a report (a warm rerun takes parts from the cache that a cold run computed,
/// with the same verdicts, so the counts live here rather than in `summary`).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, Default)]
pub struct RunInfo {
    /// start time, RFC 3339 UTC
    pub started: String,
    /// wall time in seconds
    pub seconds: f64,
    /// parts computed in this run (not taken from the cache)
    #[serde(default)]
    pub computed: usize,
    /// parts taken from the cache
    #[serde(default)]
    pub cached: usize,
}
