//! A run against a baseline: each part's drift quantities compared with their limits,
//! parts that are new since the baseline, parts that have gone, rules that changed.
//!
//! The limits belong to the rules: the caller hands in the comparison (for a
//! [`Measure`] and the baseline's value, the outcome), normally
//! `rules::DriftRule::compare` of the rule that named the quantity.

use std::collections::BTreeSet;

use super::{in_shard, Baseline, Judged, Measure};
use crate::units;
use crate::verdict::{CheckStatus, DriftOutcome, PartReport, PartStatus, RulesFileInfo};

/// The reports of a run judged against `baseline`, sorted by path: drift outcomes
/// filled in (a drift that does not pass fails its part; a quantity undefined both
/// then and now passes; one the baseline does not hold is not compared), parts not in
/// the baseline
/// marked `new` (they fail only with `strict`), and a `missing` report for every part
/// of the baseline that is no longer in the library. In a sharded run only the
/// baseline's parts of the same shard can be missing.
pub fn apply(
    judged: Vec<Judged>,
    baseline: &Baseline,
    shard: Option<[usize; 2]>,
    strict: bool,
    compare: impl Fn(&Measure, Option<f64>) -> Option<DriftOutcome>,
) -> Vec<PartReport> {
    let present: BTreeSet<String> = judged.iter().map(|j| j.report.path.clone()).collect();
    let mut parts: Vec<PartReport> = judged
        .into_iter()
        .map(|j| apply_one(j, baseline, strict, &compare))
        .collect();
    parts.extend(missing(baseline, shard, |p| present.contains(p)));
    parts.sort_by(|a, b| a.path.cmp(&b.path));
    parts
}

/// [`apply`] for one judged part: its drift outcomes, or `new` when the baseline does
/// not hold it.
pub fn apply_one(
    j: Judged,
    baseline: &Baseline,
    strict: bool,
    compare: impl Fn(&Measure, Option<f64>) -> Option<DriftOutcome>,
) -> PartReport {
    let mut r = j.report;
    match baseline.part(&r.path) {
        None => {
            r.new = true;
            if strict && matches!(r.status, PartStatus::Pass | PartStatus::Unchecked) {
                r.status = PartStatus::Fail;
                r.error.get_or_insert_with(|| {
                    "new part, not in the baseline (a failure with --strict)".to_string()
                });
            }
        }
        Some(base) => {
            for m in &j.measures {
                // a quantity named after the baseline was recorded has nothing to be
                // compared with (the changed rules are named in the report header)
                let Some(&before) = base.drift.get(&m.quantity) else {
                    continue;
                };
                let Some(mut outcome) = compare(m, before) else {
                    continue;
                };
                // undefined then and undefined now (an srf above the sweep both
                // times): nothing moved
                if before.is_none() && m.now.is_none() {
                    outcome.status = CheckStatus::Pass;
                }
                r.drift.push(outcome);
            }
            let drifted = r.drift.iter().any(|d| d.status != CheckStatus::Pass);
            if drifted && matches!(r.status, PartStatus::Pass | PartStatus::Unchecked) {
                r.status = PartStatus::Fail;
            }
        }
    }
    r
}

/// A `missing` report for every part of the baseline (of the shard) that `present`
/// does not know, in the baseline's order.
pub fn missing(
    baseline: &Baseline,
    shard: Option<[usize; 2]>,
    present: impl Fn(&str) -> bool,
) -> Vec<PartReport> {
    baseline
        .parts
        .iter()
        .filter(|base| !present(&base.path) && shard.is_none_or(|s| in_shard(&base.path, s)))
        .map(|base| PartReport {
            path: base.path.clone(),
            status: PartStatus::Missing,
            kind: base.kind,
            view: base.view,
            figures: Default::default(),
            q_drop_cause: None,
            checks: Vec::new(),
            drift: Vec::new(),
            new: false,
            error: Some("in the baseline but no longer in the library".to_string()),
            plot: None,
        })
        .collect()
}

/// Rules files that differ from the baseline's: changed hash, added or dropped (by
/// path as given), sorted.
pub fn rules_changed(now: &[RulesFileInfo], baseline: &Baseline) -> Vec<String> {
    let then: BTreeSet<(&str, &str)> = baseline
        .rules
        .iter()
        .map(|r| (r.path.as_str(), r.hash.as_str()))
        .collect();
    let now_set: BTreeSet<(&str, &str)> = now
        .iter()
        .map(|r| (r.path.as_str(), r.hash.as_str()))
        .collect();
    let changed: BTreeSet<String> = then
        .symmetric_difference(&now_set)
        .map(|(p, _)| p.to_string())
        .collect();
    changed.into_iter().collect()
}

/// One quantity of one part that moved since the baseline.
#[derive(Debug, Clone, PartialEq)]
pub struct Move<'a> {
    /// the part
    pub path: &'a str,
    /// the comparison
    pub drift: &'a DriftOutcome,
    /// |change| as a fraction of the limit (1.0 = at the limit); None when the limit
    /// or the change is not a number
    pub of_limit: Option<f64>,
}

/// Every drift that moved (a change other than zero, or an outcome other than pass),
/// largest first: by the share of its limit used, failures first among equals, then
/// by path and quantity. This is the order of a "changed since baseline" section.
pub fn moves(parts: &[PartReport]) -> Vec<Move<'_>> {
    let mut out: Vec<Move> = parts
        .iter()
        .flat_map(|p| p.drift.iter().map(move |d| (p.path.as_str(), d)))
        .filter(|(_, d)| d.status != CheckStatus::Pass || d.change.is_some_and(|c| c != 0.0))
        .map(|(path, d)| {
            let limit = units::parse_quantity(&d.limit).ok().map(|(v, _)| v.abs());
            let of_limit = match (d.change, limit) {
                (Some(c), Some(l)) if l > 0.0 => Some(c.abs() / l),
                _ => None,
            };
            Move {
                path,
                drift: d,
                of_limit,
            }
        })
        .collect();
    out.sort_by(|a, b| {
        let failed = |m: &Move| m.drift.status == CheckStatus::Pass;
        b.of_limit
            .unwrap_or(f64::INFINITY)
            .total_cmp(&a.of_limit.unwrap_or(f64::INFINITY))
            .then(failed(a).cmp(&failed(b)))
            .then(a.path.cmp(b.path))
            .then(a.drift.quantity.cmp(&b.drift.quantity))
    });
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::baseline::{BaselinePart, BASELINE_FORMAT};
    use std::collections::BTreeMap;

    fn report(path: &str, status: PartStatus) -> PartReport {
        PartReport {
            path: path.into(),
            status,
            kind: None,
            view: None,
            figures: BTreeMap::new(),
            q_drop_cause: None,
            checks: vec![],
            drift: vec![],
            new: false,
            error: None,
            plot: None,
        }
    }

    fn judged(path: &str, l: f64) -> Judged {
        Judged {
            report: report(path, PartStatus::Pass),
            hash: Some("h".into()),
            measures: vec![Measure {
                rules_file: "r.yaml".into(),
                quantity: "l(band.mid)".into(),
                now: Some(l),
            }],
            cached: false,
        }
    }

    fn baseline(paths: &[&str]) -> Baseline {
        Baseline::from_judged(
            "lib",
            vec![],
            &paths.iter().map(|p| judged(p, 1e-9)).collect::<Vec<_>>(),
        )
    }

    /// A 1 % relative limit, standing in for the rules' comparison.
    fn one_percent(m: &Measure, before: Option<f64>) -> Option<DriftOutcome> {
        let change = match (before, m.now) {
            (Some(b), Some(n)) if b != 0.0 => Some((n - b) / b.abs()),
            _ => None,
        };
        Some(DriftOutcome {
            quantity: m.quantity.clone(),
            baseline: before,
            now: m.now,
            change,
            limit: "1%".into(),
            status: match change {
                Some(c) if c.abs() <= 0.01 => CheckStatus::Pass,
                Some(_) => CheckStatus::Fail,
                None => CheckStatus::Undecided,
            },
        })
    }

    #[test]
    fn drift_new_and_missing() {
        let base = baseline(&["a.s2p", "b.s2p", "gone.s2p"]);
        let now = vec![
            judged("b.s2p", 1.03e-9),
            judged("a.s2p", 1.0e-9),
            judged("c.s2p", 1.0e-9),
        ];
        let parts = apply(now, &base, None, false, one_percent);
        let paths: Vec<&str> = parts.iter().map(|p| p.path.as_str()).collect();
        assert_eq!(paths, ["a.s2p", "b.s2p", "c.s2p", "gone.s2p"]);
        assert_eq!(parts[0].status, PartStatus::Pass);
        assert_eq!(parts[0].drift[0].change, Some(0.0));
        assert_eq!(parts[1].status, PartStatus::Fail);
        let c = parts[1].drift[0].change.unwrap();
        assert!((c - 0.03).abs() < 1e-12, "{c}");
        assert!(parts[2].new && parts[2].status == PartStatus::Pass);
        assert!(parts[2].drift.is_empty());
        assert_eq!(parts[3].status, PartStatus::Missing);
        assert!(parts[3].error.as_deref().unwrap().contains("no longer"));
    }

    #[test]
    fn undefined_then_and_now_has_not_moved() {
        let mut base = baseline(&["a.s2p", "b.s2p"]);
        base.parts[0].drift.insert("srf".into(), None);
        let mut a = judged("a.s2p", 1e-9);
        let mut b = judged("b.s2p", 1e-9);
        for j in [&mut a, &mut b] {
            j.measures.push(Measure {
                rules_file: "r.yaml".into(),
                quantity: "srf".into(),
                now: None,
            });
        }
        let parts = apply(vec![a, b], &base, None, false, one_percent);
        // a: recorded as undefined and still undefined
        let srf = parts[0].drift.iter().find(|d| d.quantity == "srf").unwrap();
        assert_eq!(srf.status, CheckStatus::Pass);
        assert_eq!(parts[0].status, PartStatus::Pass);
        // b: the baseline predates the quantity: not compared
        assert_eq!(parts[1].drift.len(), 1);
        assert_eq!(parts[1].status, PartStatus::Pass);
        // defined then, undefined now: undecided, fails
        let mut c = judged("a.s2p", 1e-9);
        c.measures[0].now = None;
        let parts = apply(vec![c], &base, None, false, one_percent);
        assert_eq!(parts[0].drift[0].status, CheckStatus::Undecided);
        assert_eq!(parts[0].status, PartStatus::Fail);
    }

    #[test]
    fn new_parts_fail_only_when_strict() {
        let base = baseline(&["a.s2p"]);
        let parts = apply(vec![judged("n.s2p", 1e-9)], &base, None, true, one_percent);
        let n = parts.iter().find(|p| p.path == "n.s2p").unwrap();
        assert!(n.new);
        assert_eq!(n.status, PartStatus::Fail);
        assert!(n.error.as_deref().unwrap().contains("--strict"));
    }

    #[test]
    fn a_failing_part_stays_failed_and_an_unreadable_one_unreadable() {
        let base = baseline(&["a.s2p", "u.s2p"]);
        let mut a = judged("a.s2p", 1.0e-9);
        a.report.status = PartStatus::Fail;
        let mut u = judged("u.s2p", 1.5e-9);
        u.report.status = PartStatus::Unreadable;
        let parts = apply(vec![a, u], &base, None, false, one_percent);
        assert_eq!(parts[0].status, PartStatus::Fail);
        assert_eq!(parts[1].status, PartStatus::Unreadable);
    }

    #[test]
    fn a_shard_misses_only_its_own_parts() {
        let names: Vec<String> = (0..30).map(|i| format!("p{i}.s2p")).collect();
        let refs: Vec<&str> = names.iter().map(|s| s.as_str()).collect();
        let base = baseline(&refs);
        let mut missing = 0;
        for k in 1..=3 {
            let parts = apply(vec![], &base, Some([k, 3]), false, one_percent);
            assert!(parts.iter().all(|p| in_shard(&p.path, [k, 3])));
            missing += parts.len();
        }
        assert_eq!(missing, 30);
    }

    #[test]
    fn largest_moves_first() {
        let base = baseline(&["a.s2p", "b.s2p", "c.s2p", "d.s2p"]);
        let now = vec![
            judged("a.s2p", 1.005e-9),
            judged("b.s2p", 0.97e-9),
            judged("c.s2p", 1.0e-9),
            judged("d.s2p", 1.002e-9),
        ];
        let parts = apply(now, &base, None, false, one_percent);
        let m = moves(&parts);
        let order: Vec<&str> = m.iter().map(|m| m.path).collect();
        assert_eq!(
            order,
            ["b.s2p", "a.s2p", "d.s2p"],
            "unchanged c is left out"
        );
        let share = m[0].of_limit.unwrap();
        assert!((share - 3.0).abs() < 1e-9, "{share}");
        assert!(m[0].drift.status == CheckStatus::Fail);
    }

    #[test]
    fn changed_rules_by_path_and_hash() {
        let info = |p: &str, h: &str| RulesFileInfo {
            path: p.into(),
            hash: h.into(),
            suite: String::new(),
        };
        let base = Baseline {
            format: BASELINE_FORMAT.into(),
            tool_version: "x".into(),
            library: "lib".into(),
            rules: vec![
                info("a.yaml", "1"),
                info("b.yaml", "2"),
                info("c.yaml", "3"),
            ],
            parts: Vec::<BaselinePart>::new(),
        };
        let now = [
            info("a.yaml", "1"),
            info("b.yaml", "9"),
            info("d.yaml", "4"),
        ];
        assert_eq!(rules_changed(&now, &base), ["b.yaml", "c.yaml", "d.yaml"]);
        assert!(rules_changed(&base.rules, &base).is_empty());
    }
}
