//! The equivalent circuit of a spiral on silicon (the π-model of Yue and Wong, IEEE
//! JSSC 33(5), 1998), its fit to data, and the loss attribution of DESIGN §6.1:
//! conductor, substrate and self-resonance factors, the mechanism per frequency, the
//! cause of the Q drop and the gain a ground shield would bring.
//!
//! Knows nothing of files or rules.

pub mod circuit;

pub use circuit::shunt_y;

/// What limits Q at a frequency (DESIGN §6.1).
#[derive(
    Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, serde::Serialize, serde::Deserialize,
)]
#[serde(rename_all = "snake_case")]
pub enum Mechanism {
    /// Series (metal, skin-effect) loss rules.
    Conductor,
    /// Loss in the substrate under the coil rules.
    Substrate,
    /// The coil nears its self-resonance.
    Resonance,
}

impl Mechanism {
    /// The word used in rules and reports.
    pub fn as_str(self) -> &'static str {
        match self {
            Mechanism::Conductor => "conductor",
            Mechanism::Substrate => "substrate",
            Mechanism::Resonance => "resonance",
        }
    }
}

/// Parameters of the fitted π-model, SI units. Port 2 values equal port 1 for 1-port fits.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct PiModel {
    /// series inductance (H)
    pub ls: f64,
    /// series resistance at DC (Ω)
    pub rdc: f64,
    /// skin-effect coefficient: R_s(f) = rdc + rac·√(f / 1 GHz) (Ω)
    pub rac: f64,
    /// feed-through capacitance across the series branch (F)
    pub cs: f64,
    /// oxide capacitance at port 1 (F)
    pub cox1: f64,
    /// substrate capacitance at port 1 (F)
    pub csi1: f64,
    /// substrate resistance at port 1 (Ω)
    pub rsi1: f64,
    /// oxide capacitance at port 2 (F)
    pub cox2: f64,
    /// substrate capacitance at port 2 (F)
    pub csi2: f64,
    /// substrate resistance at port 2 (Ω)
    pub rsi2: f64,
}

/// A contiguous run of sweep points where one mechanism rules.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct LossBand {
    /// first frequency of the run (Hz)
    pub from: f64,
    /// last frequency of the run (Hz)
    pub to: f64,
    /// the mechanism
    pub mechanism: Mechanism,
}

/// The fit and the loss story of one inductor view.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct LossStory {
    /// fitted parameters
    pub model: PiModel,
    /// rms relative error of the fitted Y_in over the fitted band
    pub fit_error: f64,
    /// mechanism at each sweep point (None where undefined, e.g. q ≤ 0 region handled as resonance)
    pub mechanism: Vec<Option<Mechanism>>,
    /// mechanism at f_q_half, None when f_q_half is not in the sweep
    pub q_drop_cause: Option<Mechanism>,
    /// the sweep split into runs of one mechanism
    pub loss_bands: Vec<LossBand>,
}

/// The mechanism that limits Q (DESIGN §6.1): `resonance` if resonance_factor ≤ 0;
/// else `conductor` if substrate_factor·resonance_factor ≥ 0.9; else whichever
/// factor is smaller (`substrate` or `resonance`).
pub fn mechanism_of(substrate_factor: f64, resonance_factor: f64) -> Mechanism {
    if resonance_factor <= 0.0 {
        Mechanism::Resonance
    } else if substrate_factor * resonance_factor >= 0.9 {
        Mechanism::Conductor
    } else if substrate_factor < resonance_factor {
        Mechanism::Substrate
    } else {
        Mechanism::Resonance
    }
}

use crate::figures::ViewFigures;
use crate::network::View;

/// Fit the π-model to an inductor view and add the loss figures to `figs`
/// (curves `q_conductor`, `substrate_factor`, `resonance_factor`, `shield_gain`;
/// the model parameters and `fit_error` as scalars; `figs.loss`).
pub fn analyse(view: &View, figs: &mut ViewFigures) {
    let _ = view;
    figs.loss = Some(Err("the π-model fit is not built yet".to_string()));
}
