//! Regression against an accepted state of the library, and the machinery that makes
//! nightly runs fast and spreadable:
//!
//! - [`document`]: the baseline file (`lcgate-baseline/1`) that `lcgate record` writes
//!   and `check --baseline` reads;
//! - [`compare`]: drift of each part against it, new and missing parts, changed rules;
//! - [`cache`]: the content-hash cache of judged parts (DESIGN §9);
//! - [`shard`]: the stable share of the parts a `--shard K/N` run takes;
//! - [`memo`]: a whole run remembered, repeated when nothing it depends on changed;
//! - [`merge`]: joining shard reports into one verdict;
//! - [`write`]: crash-safe file replacement used by all of the above.
//!
//! Knows nothing of the rules syntax: drift limits are applied through a comparison
//! function the caller hands in.

pub mod cache;
pub mod compare;
pub mod document;
pub mod memo;
pub mod merge;
pub mod shard;
pub mod write;

use serde::{Deserialize, Serialize};

use crate::verdict::PartReport;

pub use cache::{Cache, Lookup};
pub use compare::{apply, apply_one, missing, moves, rules_changed, Move};
pub use document::{Baseline, BaselineError, BaselinePart, BASELINE_FORMAT};
pub use merge::{merge, MergeError};
pub use shard::{in_shard, shard_index};

/// The value now of one quantity named in a `drift` section, for one part.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Measure {
    /// rules file whose `drift` section names the quantity (as in `RulesFileInfo::path`)
    pub rules_file: String,
    /// the quantity as written (`l(band.mid)`, `q_peak`)
    pub quantity: String,
    /// its value now (SI); None when undefined for this part
    pub now: Option<f64>,
}

/// Add the measure of `quantity` for `rules_file`, measuring it only if no earlier
/// rules file already named the same quantity for this part: a quantity is recorded
/// once per part (the first rules file that names it sets the context), and every
/// rules file naming it compares that one value with its own limit.
pub fn add_measure(
    measures: &mut Vec<Measure>,
    rules_file: &str,
    quantity: &str,
    measure: impl FnOnce() -> Option<f64>,
) {
    if measures
        .iter()
        .any(|m| m.rules_file == rules_file && m.quantity == quantity)
    {
        return;
    }
    let now = match measures.iter().find(|m| m.quantity == quantity) {
        Some(m) => m.now,
        None => measure().filter(|v| v.is_finite()),
    };
    measures.push(Measure {
        rules_file: rules_file.to_string(),
        quantity: quantity.to_string(),
        now,
    });
}

/// One judged part with what the baseline and the cache need beside its report.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Judged {
    /// the part's report before any baseline comparison
    pub report: PartReport,
    /// blake3 of the file's bytes (hex); None when the file could not be read, or was
    /// not hashed (a check without a cache, `cache::judge`)
    pub hash: Option<String>,
    /// drift quantities measured now, in rules-file then `drift` order
    pub measures: Vec<Measure>,
    /// true when taken from the cache (not stored in it)
    #[serde(skip)]
    pub cached: bool,
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_quantity_is_measured_once_per_part() {
        let mut m = Vec::new();
        let mut calls = 0;
        add_measure(&mut m, "a.yaml", "q_peak", || {
            calls += 1;
            Some(12.0)
        });
        add_measure(&mut m, "b.yaml", "q_peak", || {
            calls += 1;
            Some(99.0)
        });
        add_measure(&mut m, "b.yaml", "q_peak", || Some(1.0));
        add_measure(&mut m, "b.yaml", "srf", || Some(f64::NAN));
        assert_eq!(calls, 1);
        assert_eq!(m.len(), 3);
        assert_eq!(m[1].now, Some(12.0));
        assert_eq!(m[2].now, None, "non-finite values are undefined");
    }
}
