//! The equivalent circuit of a spiral on silicon (the π-model of Yue and Wong, IEEE
//! JSSC 33(5), 1998), its fit to data, and the loss attribution of DESIGN §6.1:
//! conductor, substrate and self-resonance factors, the mechanism per frequency, the
//! cause of the Q drop and the gain a ground shield would bring.
//!
//! Knows nothing of files or rules.

pub mod circuit;
pub mod dense;
pub mod fit;
pub mod loss;

pub use circuit::shunt_y;
pub use dense::Dense;
pub use fit::{Drive, Fitted, Solver};

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
use crate::units::{eng, sig3};

/// Names of the model scalars, in the order of [`PiModel`]'s fields.
pub const PARAM_NAMES: [&str; 10] = [
    "ls", "rdc", "rac", "cs", "cox1", "csi1", "rsi1", "cox2", "csi2", "rsi2",
];

/// Names of the loss curves [`analyse`] adds.
pub const CURVE_NAMES: [&str; 4] = [
    "q_conductor",
    "substrate_factor",
    "resonance_factor",
    "shield_gain",
];

impl PiModel {
    /// The parameters in the order of [`PARAM_NAMES`].
    pub fn values(&self) -> [f64; 10] {
        [
            self.ls, self.rdc, self.rac, self.cs, self.cox1, self.csi1, self.rsi1, self.cox2,
            self.csi2, self.rsi2,
        ]
    }
}

/// Fit the π-model to an inductor view and add the loss figures to `figs`
/// (curves `q_conductor`, `substrate_factor`, `resonance_factor`, `shield_gain`;
/// the model parameters and `fit_error` as scalars; `figs.loss`). Uses the view's
/// `srf` scalar as the top of the fitted band and `f_q_half` for `q_drop_cause`.
/// When the fit is refused the scalars and curves are present but null and
/// `figs.loss` carries the reason.
pub fn analyse(view: &View, figs: &mut ViewFigures) {
    analyse_with(view, figs, &Dense::default());
}

/// [`analyse`] with a chosen least-squares solver.
pub fn analyse_with(view: &View, figs: &mut ViewFigures, solver: &dyn Solver) {
    let n = figs.freq.len();
    let outcome = match view {
        View::Driving { name, y_in, .. } => {
            fit::fit_view(view, &figs.freq, figs.scalar("srf"), solver)
                .map(|fitted| (fitted, Drive::of(*name), y_in))
        }
        View::Windings { .. } => Err("the π-model fits inductor views only".to_string()),
    };
    match outcome {
        Err(reason) => {
            for name in PARAM_NAMES.iter().chain(&["fit_error"]) {
                figs.scalars.insert(name.to_string(), None);
            }
            for name in CURVE_NAMES {
                figs.curves.insert(name.to_string(), vec![None; n]);
            }
            figs.loss = Some(Err(reason));
        }
        Ok((fitted, drive, y_in)) => {
            let m = fitted.model;
            for (name, v) in PARAM_NAMES.iter().zip(m.values()) {
                figs.scalars
                    .insert(name.to_string(), v.is_finite().then_some(v));
            }
            figs.scalars
                .insert("fit_error".into(), Some(fitted.fit_error));
            let k = n.min(y_in.len());
            let mut c = loss::curves(&m, &figs.freq[..k], &y_in[..k], drive);
            for v in [
                &mut c.q_conductor,
                &mut c.substrate_factor,
                &mut c.resonance_factor,
                &mut c.shield_gain,
            ] {
                v.resize(n, None);
            }
            c.mechanism.resize(n, None);
            figs.curves.insert("q_conductor".into(), c.q_conductor);
            figs.curves
                .insert("substrate_factor".into(), c.substrate_factor);
            figs.curves
                .insert("resonance_factor".into(), c.resonance_factor);
            figs.curves.insert("shield_gain".into(), c.shield_gain);
            let q_drop_cause = figs.scalar("f_q_half").and_then(|f| figs.mechanism_at(f));
            let loss_bands = loss::loss_bands(&figs.freq, &c.mechanism);
            figs.loss = Some(Ok(LossStory {
                model: m,
                fit_error: fitted.fit_error,
                mechanism: c.mechanism,
                q_drop_cause,
                loss_bands,
            }));
        }
    }
}

/// One line in plain words on why Q falls and whether a ground shield would pay,
/// for an inductor view that has been through [`analyse`]; None for other views.
///
/// E.g. "Q peaks 9.1 at 2.3 GHz; falls by half at 6.1 GHz because of substrate loss;
/// a ground shield would raise Q by 1.4× there".
pub fn verdict_line(figs: &ViewFigures) -> Option<String> {
    let story = match figs.loss.as_ref()? {
        Err(reason) => return Some(format!("no π-model fit: {reason}")),
        Ok(s) => s,
    };
    let mut out = match (figs.scalar("q_peak"), figs.scalar("f_q_peak")) {
        (Some(q), Some(f)) => format!("Q peaks {} at {}", sig3(q), eng(f, "Hz")),
        _ => "Q has no peak below the SRF".to_string(),
    };
    let srf = figs.scalar("srf");
    let shield = |f: f64| -> String {
        match figs.curve_at("shield_gain", f) {
            Some(g) if g > 1.05 => format!("a ground shield would raise Q by {}× there", sig3(g)),
            Some(g) if g > 0.0 => format!("a ground shield would not help (×{})", sig3(g)),
            Some(_) => "a ground shield would not help: its extra capacitance would put the \
                        SRF below this frequency"
                .to_string(),
            None => "the shield gain is undefined there".to_string(),
        }
    };
    match (figs.scalar("f_q_half"), story.q_drop_cause) {
        (Some(fh), Some(cause)) => {
            let why = match cause {
                Mechanism::Conductor => "because of conductor (skin-effect) loss".to_string(),
                Mechanism::Substrate => "because of substrate loss".to_string(),
                Mechanism::Resonance => match srf {
                    Some(s) => format!("because it nears self-resonance (SRF {})", eng(s, "Hz")),
                    None => "because it nears self-resonance".to_string(),
                },
            };
            out.push_str(&format!(
                "; falls by half at {} {why}; {}",
                eng(fh, "Hz"),
                shield(fh)
            ));
        }
        _ => {
            let f_end = figs.freq.last().copied()?;
            let top = srf.map(|s| s.min(f_end)).unwrap_or(f_end);
            let at = figs
                .freq
                .iter()
                .rev()
                .copied()
                .find(|&f| f < top)
                .unwrap_or(top);
            out.push_str(&format!(
                "; stays above half of that up to {}",
                eng(top, "Hz")
            ));
            if let Some(m) = figs.mechanism_at(at) {
                out.push_str(&format!(
                    "; {} loss rules there; {}",
                    m.as_str(),
                    shield(at)
                ));
            }
        }
    }
    if story.fit_error > 0.05 {
        out.push_str(&format!(
            " (the π-model fits these data only to {}%: read the loss split with care)",
            sig3(100.0 * story.fit_error)
        ));
    }
    Some(out)
}
