//! Figures of merit from a view (DESIGN §6): inductor `l, r, q, q_tank, srf, q_peak,
//! f_q_peak, f_q_half, l_low`; capacitor `c, esr, q, srf, c_low`; transformer `l1, l2,
//! m, k, q1, q2, il_min` and winding srfs; kind inference; the data checks of every file.
//!
//! Knows nothing of files, rules or reports.

use std::collections::BTreeMap;

use crate::model::{LossStory, Mechanism};
use crate::network::ViewName;

mod catalogue;
mod compute;
pub mod grid;

pub use catalogue::{info, FigureInfo, CATALOGUE, DATA_CHECK_NAMES, MODEL_PARAM_NAMES};
pub use compute::{data_checks, il_min_db, infer_kind, rollett_k, sigma_max, view_figures};

/// What a part is, as declared by a rule group or inferred from the data.
#[derive(
    Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, serde::Serialize, serde::Deserialize,
)]
#[serde(rename_all = "snake_case")]
pub enum Kind {
    /// A spiral or other coil.
    Inductor,
    /// A MIM/MOM or other capacitor.
    Capacitor,
    /// A 4-port transformer or balun.
    Transformer,
}

impl Kind {
    /// Name as written in rules and documents.
    pub fn as_str(self) -> &'static str {
        match self {
            Kind::Inductor => "inductor",
            Kind::Capacitor => "capacitor",
            Kind::Transformer => "transformer",
        }
    }
}

/// All figures of one view of one file.
///
/// Scalars and curves are kept by name so that the rules language, the JSON
/// documents and the reports can treat every figure alike. `None` marks a value that
/// is undefined (never NaN): e.g. `srf` when the sweep ends below resonance.
#[derive(Debug, Clone, PartialEq)]
pub struct ViewFigures {
    /// Which view.
    pub view: ViewName,
    /// Kind the figures were computed for.
    pub kind: Kind,
    /// Sweep frequencies (Hz), the grid of every curve.
    pub freq: Vec<f64>,
    /// Scalar figures by name (`srf`, `q_peak`, `l_low`, …), SI units.
    pub scalars: BTreeMap<String, Option<f64>>,
    /// Curves on the sweep grid by name (`l`, `q`, `q_tank`, …), SI units.
    pub curves: BTreeMap<String, Vec<Option<f64>>>,
    /// Equivalent-circuit fit and loss attribution (inductor views), or why not.
    pub loss: Option<Result<LossStory, String>>,
}

impl ViewFigures {
    /// A scalar figure by name; None when unknown or undefined.
    pub fn scalar(&self, name: &str) -> Option<f64> {
        self.scalars.get(name).copied().flatten()
    }

    /// A curve by name at frequency `f` (Hz), linearly interpolated between sweep
    /// points (see [`grid`]); None outside the sweep, for an unknown curve or where
    /// the curve is undefined.
    pub fn curve_at(&self, name: &str, f: f64) -> Option<f64> {
        let c = self.curves.get(name)?;
        grid::interp(&self.freq, c, f)
    }

    /// The curve over the band [lo, hi]: every sweep point inside it plus the
    /// interpolated values at lo and hi (None there when outside the sweep), sorted
    /// by frequency without repeats. Empty for an unknown curve or lo > hi.
    pub fn curve_points(&self, name: &str, lo: f64, hi: f64) -> Vec<(f64, Option<f64>)> {
        let Some(c) = self.curves.get(name) else {
            return Vec::new();
        };
        if lo.is_nan() || hi.is_nan() || lo > hi {
            return Vec::new();
        }
        let mut out = vec![(lo, grid::interp(&self.freq, c, lo))];
        for (i, &f) in self.freq.iter().enumerate() {
            if f > lo && f < hi {
                out.push((f, c.get(i).copied().flatten()));
            }
        }
        if hi > lo {
            out.push((hi, grid::interp(&self.freq, c, hi)));
        }
        out
    }

    /// What limits Q at `f`: [`crate::model::mechanism_of`] of the interpolated
    /// `substrate_factor` and `resonance_factor` curves; None where they are not
    /// defined (no fit, or outside the sweep).
    pub fn mechanism_at(&self, f: f64) -> Option<Mechanism> {
        let sf = self.curve_at("substrate_factor", f)?;
        let rf = self.curve_at("resonance_factor", f)?;
        Some(crate::model::mechanism_of(sf, rf))
    }
}

/// Data checks of every file (DESIGN §6).
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct DataChecks {
    /// 1 − max over f of σ_max(S); ≥ 0 for passive data.
    pub passivity_margin: Option<f64>,
    /// max over f of max |S_ij − S_ji|.
    pub reciprocity_error: Option<f64>,
    /// number of frequency points
    pub points: usize,
    /// lowest frequency (Hz)
    pub f_min: f64,
    /// highest frequency (Hz)
    pub f_max: f64,
    /// number of ports
    pub ports: usize,
}

#[cfg(test)]
mod tests {
    use super::*;

    fn figs() -> ViewFigures {
        let mut curves = BTreeMap::new();
        curves.insert("q".to_string(), vec![Some(1.0), Some(3.0), Some(2.0), None]);
        curves.insert(
            "substrate_factor".to_string(),
            vec![Some(1.0), Some(0.95), Some(0.5), Some(0.5)],
        );
        curves.insert(
            "resonance_factor".to_string(),
            vec![Some(1.0), Some(0.99), Some(0.8), Some(-0.1)],
        );
        ViewFigures {
            view: ViewName::SingleEnded,
            kind: Kind::Inductor,
            freq: vec![1e9, 2e9, 3e9, 4e9],
            scalars: BTreeMap::from([("srf".to_string(), None), ("q_peak".to_string(), Some(3.0))]),
            curves,
            loss: None,
        }
    }

    #[test]
    fn curve_points_include_edges() {
        let f = figs();
        let pts = f.curve_points("q", 1.5e9, 3e9);
        // power law through (1 GHz, 1) and (2 GHz, 3) at 1.5 GHz: 3^(ln 1.5 / ln 2)
        let edge = 3f64.powf(1.5f64.ln() / 2f64.ln());
        assert_eq!(pts.len(), 3);
        assert!((pts[0].1.unwrap() - edge).abs() < 1e-12);
        assert_eq!(&pts[1..], &[(2e9, Some(3.0)), (3e9, Some(2.0))]);
        // outside the sweep the edge is unknown, which a band check must not pass
        let pts = f.curve_points("q", 0.5e9, 1e9);
        assert_eq!(pts, vec![(0.5e9, None), (1e9, Some(1.0))]);
        assert!(f.curve_points("nope", 1e9, 2e9).is_empty());
        assert_eq!(f.curve_at("q", 3.5e9), None);
        assert_eq!(f.scalar("srf"), None);
        assert_eq!(f.scalar("q_peak"), Some(3.0));
    }

    #[test]
    fn mechanism_follows_design_rule() {
        // DESIGN §6.1: conductor when sf·rf ≥ 0.9, else the smaller factor, resonance if rf ≤ 0
        let f = figs();
        assert_eq!(f.mechanism_at(1e9), Some(Mechanism::Conductor));
        assert_eq!(f.mechanism_at(3e9), Some(Mechanism::Substrate));
        assert_eq!(f.mechanism_at(4e9), Some(Mechanism::Resonance));
        assert_eq!(f.mechanism_at(5e9), None);
    }
}
