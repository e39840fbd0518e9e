//! The catalogue of every figure name the rules language, the documents and the
//! reports may use, with its dimension, whether it is a curve (a function of
//! frequency) or a scalar, and the kinds of part it exists for.
//!
//! `mechanism(x)` and `q_drop_cause` are not listed: they are words, not numbers,
//! and the rules language handles them itself.

use super::Kind;
use crate::units::Dim;

/// One figure name.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FigureInfo {
    /// name as written in rules and documents
    pub name: &'static str,
    /// physical dimension of its value
    pub dim: Dim,
    /// a curve (called as `name(f)` or over a band) rather than a scalar
    pub curve: bool,
    /// kinds of part it is computed for
    pub kinds: &'static [Kind],
    /// one-line description
    pub doc: &'static str,
}

const I: &[Kind] = &[Kind::Inductor];
const C: &[Kind] = &[Kind::Capacitor];
const T: &[Kind] = &[Kind::Transformer];
const IC: &[Kind] = &[Kind::Inductor, Kind::Capacitor];
const ICT: &[Kind] = &[Kind::Inductor, Kind::Capacitor, Kind::Transformer];

const fn s(name: &'static str, dim: Dim, kinds: &'static [Kind], doc: &'static str) -> FigureInfo {
    FigureInfo {
        name,
        dim,
        curve: false,
        kinds,
        doc,
    }
}

const fn c(name: &'static str, dim: Dim, kinds: &'static [Kind], doc: &'static str) -> FigureInfo {
    FigureInfo {
        name,
        dim,
        curve: true,
        kinds,
        doc,
    }
}

/// Names of the data checks, which live in [`super::DataChecks`] rather than in a
/// view's figures.
pub const DATA_CHECK_NAMES: [&str; 6] = [
    "passivity_margin",
    "reciprocity_error",
    "points",
    "f_min",
    "f_max",
    "ports",
];

/// Names of the fitted π-model parameters (scalars set by `model::analyse`).
pub const MODEL_PARAM_NAMES: [&str; 10] = [
    "ls", "rdc", "rac", "cs", "cox1", "csi1", "rsi1", "cox2", "csi2", "rsi2",
];

/// Every figure name, in a stable order (scalars of §6, model, data checks, curves).
pub const CATALOGUE: &[FigureInfo] = &[
    // scalars of DESIGN §6
    s(
        "srf",
        Dim::Frequency,
        ICT,
        "self-resonance: lowest f where B (inductor) or Im Z_in (capacitor) crosses from − to +; \
         for a transformer the lower winding srf; null when the sweep ends first",
    ),
    s(
        "q_peak",
        Dim::Ratio,
        I,
        "largest q below srf, refined by a parabola through three samples",
    ),
    s("f_q_peak", Dim::Frequency, I, "frequency of q_peak"),
    s(
        "f_q_half",
        Dim::Frequency,
        I,
        "first f above f_q_peak where q has fallen to q_peak/2; null if not in the sweep",
    ),
    s(
        "l_low",
        Dim::Inductance,
        I,
        "l at the lowest sweep frequency",
    ),
    s(
        "c_low",
        Dim::Capacitance,
        C,
        "c at the lowest sweep frequency",
    ),
    s(
        "srf1",
        Dim::Frequency,
        T,
        "self-resonance of winding 1 (winding 2 open)",
    ),
    s(
        "srf2",
        Dim::Frequency,
        T,
        "self-resonance of winding 2 (winding 1 open)",
    ),
    // π-model (DESIGN §6.1)
    s("ls", Dim::Inductance, I, "π-model series inductance"),
    s("rdc", Dim::Resistance, I, "π-model series resistance at DC"),
    s(
        "rac",
        Dim::Resistance,
        I,
        "π-model skin-effect coefficient: R_s = rdc + rac·√(f/1 GHz)",
    ),
    s(
        "cs",
        Dim::Capacitance,
        I,
        "π-model feed-through capacitance",
    ),
    s(
        "cox1",
        Dim::Capacitance,
        I,
        "π-model oxide capacitance, port 1",
    ),
    s(
        "csi1",
        Dim::Capacitance,
        I,
        "π-model substrate capacitance, port 1",
    ),
    s(
        "rsi1",
        Dim::Resistance,
        I,
        "π-model substrate resistance, port 1",
    ),
    s(
        "cox2",
        Dim::Capacitance,
        I,
        "π-model oxide capacitance, port 2",
    ),
    s(
        "csi2",
        Dim::Capacitance,
        I,
        "π-model substrate capacitance, port 2",
    ),
    s(
        "rsi2",
        Dim::Resistance,
        I,
        "π-model substrate resistance, port 2",
    ),
    s(
        "fit_error",
        Dim::Ratio,
        I,
        "rms relative error of the fitted Y_in over the fitted band",
    ),
    // data checks
    s(
        "passivity_margin",
        Dim::Ratio,
        ICT,
        "1 − max over f of the largest singular value of S (≥ 0 for passive data)",
    ),
    s(
        "reciprocity_error",
        Dim::Ratio,
        ICT,
        "max over f of max |S_ij − S_ji|",
    ),
    s("points", Dim::Ratio, ICT, "number of frequency points"),
    s("f_min", Dim::Frequency, ICT, "lowest sweep frequency"),
    s("f_max", Dim::Frequency, ICT, "highest sweep frequency"),
    s("ports", Dim::Ratio, ICT, "number of ports"),
    // curves
    c("l", Dim::Inductance, I, "Im Z_in / ω"),
    c("r", Dim::Resistance, I, "Re Z_in"),
    c(
        "q",
        Dim::Ratio,
        IC,
        "inductor Im Z_in / Re Z_in, capacitor −Im Z_in / Re Z_in (signed)",
    ),
    c(
        "q_tank",
        Dim::Ratio,
        I,
        "(ω·dB/dω − B)/(2G) where B < 0: Q of the tank made with an ideal capacitor",
    ),
    c("c", Dim::Capacitance, C, "−1/(ω·Im Z_in)"),
    c("esr", Dim::Resistance, C, "Re Z_in"),
    c("k", Dim::Ratio, T, "Im Z12 / √(Im Z11 · Im Z22)"),
    c("m", Dim::Inductance, T, "Im Z12 / ω"),
    c("l1", Dim::Inductance, T, "Im Z11 / ω"),
    c("l2", Dim::Inductance, T, "Im Z22 / ω"),
    c("q1", Dim::Ratio, T, "Im Z11 / Re Z11 (winding 2 open)"),
    c("q2", Dim::Ratio, T, "Im Z22 / Re Z22 (winding 1 open)"),
    c(
        "il_min",
        Dim::Ratio,
        T,
        "least insertion loss in dB with lossless matching: −10·log10(K − √(K² − 1))",
    ),
    c(
        "q_conductor",
        Dim::Ratio,
        I,
        "ω L_s / R_s of the fitted series branch",
    ),
    c(
        "substrate_factor",
        Dim::Ratio,
        I,
        "R_p / (R_p + R_s (q_conductor² + 1)) (Yue–Wong substrate loss factor)",
    ),
    c(
        "resonance_factor",
        Dim::Ratio,
        I,
        "1 − R_s² C / L_s − ω² L_s C (Yue–Wong self-resonance factor)",
    ),
    c(
        "shield_gain",
        Dim::Ratio,
        I,
        "q of the fitted model with a ground shield (shunts → C_ox) over q as fitted",
    ),
];

/// The catalogue entry of `name`.
pub fn info(name: &str) -> Option<&'static FigureInfo> {
    CATALOGUE.iter().find(|f| f.name == name)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn names_are_unique_and_complete() {
        let mut names: Vec<_> = CATALOGUE.iter().map(|f| f.name).collect();
        names.sort_unstable();
        let before = names.len();
        names.dedup();
        assert_eq!(before, names.len());
        for n in DATA_CHECK_NAMES.iter().chain(MODEL_PARAM_NAMES.iter()) {
            assert!(info(n).is_some(), "{n}");
        }
        assert!(info("fit_error").is_some());
    }
}
