//! Loss attribution (DESIGN §6.1): the three Yue–Wong factors of Q at every sweep
//! point from the data and the fitted series branch, the mechanism per point, the
//! loss bands, the cause of the Q drop and the ground-shield gain.

use super::fit::Drive;
use super::{mechanism_of, LossBand, Mechanism, PiModel};
use crate::network::C64;

const TAU: f64 = 2.0 * std::f64::consts::PI;

fn fin(x: f64) -> Option<f64> {
    x.is_finite().then_some(x)
}

/// The three factors of Q at one frequency.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Factors {
    /// ωL_s/R_s
    pub q_conductor: f64,
    /// R_p/(R_p + R_s(q_conductor² + 1))
    pub substrate_factor: f64,
    /// 1 − R_s²C/L_s − ω²L_sC
    pub resonance_factor: f64,
}

/// The factors of Q at `f` from the measured Y_in and the fitted coil (DESIGN §6.1;
/// Yue & Wong, IEEE JSSC 33(5), 1998):
///
/// ```text
/// Y_p = Y_in − 1/(R_s + jωL_s),  R_p = 1/Re Y_p,  C = Im Y_p/ω
/// q_conductor      = ωL_s/R_s
/// substrate_factor = R_p/(R_p + R_s(q_conductor² + 1))
/// resonance_factor = 1 − R_s²C/L_s − ω²L_sC
/// ```
///
/// so that q_conductor·substrate_factor·resonance_factor = Im Z_in/Re Z_in exactly.
/// The substrate factor is evaluated as 1/(1 + Re Y_p·(R_s² + ω²L_s²)/R_s), the same
/// value, which stays finite when Re Y_p = 0. None at f ≤ 0 or where undefined.
pub fn factors(model: &PiModel, f: f64, y_in: C64) -> Option<Factors> {
    factors_with_coil(model, f, y_in, model.coil_y(f))
}

/// [`factors`] with the coil's admittance `coil` = [`PiModel::coil_y`] at `f` given.
fn factors_with_coil(model: &PiModel, f: f64, y_in: C64, coil: C64) -> Option<Factors> {
    let w = TAU * f;
    let rs = model.rs(f);
    let ls = model.ls;
    if !(w > 0.0 && rs > 0.0 && ls > 0.0) {
        return None;
    }
    let yp = y_in - coil;
    let d = rs * rs + w * w * ls * ls;
    let c = yp.im / w;
    let q_conductor = fin(w * ls / rs)?;
    let substrate_factor = fin(1.0 / (1.0 + yp.re * d / rs))?;
    let resonance_factor = fin(1.0 - c * d / ls)?;
    Some(Factors {
        q_conductor,
        substrate_factor,
        resonance_factor,
    })
}

/// Q = Im Z/Re Z of an admittance; None where undefined.
pub fn q_of(y: C64) -> Option<f64> {
    // −Im Y/Re Y equals Im Z/Re Z and needs no division by Y
    if y.re == 0.0 {
        None
    } else {
        fin(-y.im / y.re)
    }
}

/// shield_gain(f) (DESIGN §6.1): Q of the fitted model with each shunt replaced by
/// C_ox alone, over Q of the model as fitted, both under the view's drive. None
/// where the fitted model's Q is not positive (at and above its self-resonance).
pub fn shield_gain(model: &PiModel, f: f64, drive: Drive) -> Option<f64> {
    shield_gain_with(model, &model.shielded(), f, drive, model.series_y(f))
}

/// [`shield_gain`] with the shielded model and the series branch (the same in both)
/// at `f` given.
fn shield_gain_with(
    model: &PiModel,
    shielded: &PiModel,
    f: f64,
    drive: Drive,
    series: C64,
) -> Option<f64> {
    let q0 = q_of(series + model.shunt_drive(f, drive))?;
    if q0 <= 0.0 {
        return None;
    }
    let q1 = q_of(series + shielded.shunt_drive(f, drive))?;
    fin(q1 / q0)
}

/// The sweep split into contiguous runs of one mechanism; a point without a
/// mechanism ends a run.
pub fn loss_bands(freq: &[f64], mech: &[Option<Mechanism>]) -> Vec<LossBand> {
    let mut out: Vec<LossBand> = Vec::new();
    let mut open = false;
    for (i, m) in mech.iter().enumerate() {
        match m {
            Some(m) => match out.last_mut() {
                Some(b) if open && b.mechanism == *m => b.to = freq[i],
                _ => {
                    out.push(LossBand {
                        from: freq[i],
                        to: freq[i],
                        mechanism: *m,
                    });
                    open = true;
                }
            },
            None => open = false,
        }
    }
    out
}

/// Per-point curves of the loss story.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Curves {
    /// ωL_s/R_s
    pub q_conductor: Vec<Option<f64>>,
    /// substrate-loss factor
    pub substrate_factor: Vec<Option<f64>>,
    /// self-resonance factor
    pub resonance_factor: Vec<Option<f64>>,
    /// shield gain
    pub shield_gain: Vec<Option<f64>>,
    /// mechanism per point
    pub mechanism: Vec<Option<Mechanism>>,
}

/// All loss curves on the sweep.
pub fn curves(model: &PiModel, freq: &[f64], y_in: &[C64], drive: Drive) -> Curves {
    let n = freq.len().min(y_in.len());
    let mut c = Curves {
        q_conductor: Vec::with_capacity(n),
        substrate_factor: Vec::with_capacity(n),
        resonance_factor: Vec::with_capacity(n),
        shield_gain: Vec::with_capacity(n),
        mechanism: Vec::with_capacity(n),
    };
    let shielded = model.shielded();
    for (&f, &y) in freq.iter().zip(y_in) {
        // the coil once per point, for the factors and both Q of the shield gain
        let coil = model.coil_y(f);
        let fa = factors_with_coil(model, f, y, coil);
        c.q_conductor.push(fa.map(|x| x.q_conductor));
        c.substrate_factor.push(fa.map(|x| x.substrate_factor));
        c.resonance_factor.push(fa.map(|x| x.resonance_factor));
        c.mechanism
            .push(fa.map(|x| mechanism_of(x.substrate_factor, x.resonance_factor)));
        let series = coil + C64::new(0.0, TAU * f * model.cs); // = model.series_y(f)
        c.shield_gain
            .push(shield_gain_with(model, &shielded, f, drive, series));
    }
    c
}

#[cfg(test)]
mod tests {
    use super::*;

    fn reference() -> PiModel {
        // methods.md §2.4 reference π-model
        PiModel {
            ls: 2e-9,
            rdc: 3.0,
            rac: 0.0,
            cs: 20e-15,
            cox1: 150e-15,
            csi1: 40e-15,
            rsi1: 500.0,
            cox2: 150e-15,
            csi2: 40e-15,
            rsi2: 500.0,
        }
    }

    /// Yue–Wong closed-form Q (IEEE JSSC 33(5), 1998; methods.md §3.1) with
    /// R_p = 1/(ω²C_ox²R_si) + R_si(C_ox + C_si)²/C_ox² and
    /// C_p = C_ox[1 + ω²(C_ox + C_si)C_si R_si²]/[1 + ω²(C_ox + C_si)²R_si²].
    fn yue_wong(m: &PiModel, f: f64) -> (f64, f64, f64) {
        let w = TAU * f;
        let (ls, rs, cs) = (m.ls, m.rs(f), m.cs);
        let (cox, csi, rsi) = (m.cox1, m.csi1, m.rsi1);
        let rp = 1.0 / (w * w * cox * cox * rsi) + rsi * (cox + csi).powi(2) / (cox * cox);
        let cp = cox * (1.0 + w * w * (cox + csi) * csi * rsi * rsi)
            / (1.0 + w * w * (cox + csi).powi(2) * rsi * rsi);
        let ql = w * ls / rs;
        let sub = rp / (rp + (ql * ql + 1.0) * rs);
        let res = 1.0 - rs * rs * (cs + cp) / ls - w * w * ls * (cs + cp);
        (ql, sub, res)
    }

    #[test]
    fn factors_equal_yue_wong_closed_form_on_model_data() {
        // Source: Yue–Wong JSSC 1998 closed-form Q (via methods.md §3.1), exact for
        // the π-model with port 2 grounded.
        let m = reference();
        for f in [0.3e9, 1e9, 2e9, 5e9, 10e9, 14e9] {
            let fa = factors(&m, f, m.y_one_port(f)).expect("defined");
            let (ql, sub, res) = yue_wong(&m, f);
            assert!((fa.q_conductor - ql).abs() < 1e-9 * ql);
            assert!((fa.substrate_factor - sub).abs() < 1e-9);
            assert!((fa.resonance_factor - res).abs() < 1e-9);
            let q = q_of(m.y_one_port(f)).expect("q");
            let prod = fa.q_conductor * fa.substrate_factor * fa.resonance_factor;
            assert!((prod - q).abs() < 1e-9 * q.abs().max(1.0), "f {f}");
        }
    }

    #[test]
    fn bands_are_contiguous_runs() {
        use Mechanism::*;
        let f = [1.0, 2.0, 3.0, 4.0, 5.0, 6.0];
        let m = [
            Some(Conductor),
            Some(Conductor),
            Some(Substrate),
            None,
            Some(Substrate),
            Some(Resonance),
        ];
        let b = loss_bands(&f, &m);
        let got: Vec<(f64, f64, Mechanism)> =
            b.iter().map(|b| (b.from, b.to, b.mechanism)).collect();
        assert_eq!(
            got,
            vec![
                (1.0, 2.0, Conductor),
                (3.0, 3.0, Substrate),
                (5.0, 5.0, Substrate),
                (6.0, 6.0, Resonance)
            ]
        );
    }

    #[test]
    fn shield_gain_is_above_one_over_lossy_substrate() {
        // common practice, no source: a shield helps a coil whose substrate loss
        // dominates (Rsi near its worst case 1/(ω(Cox+Csi)))
        let m = PiModel {
            rsi1: 200.0,
            rsi2: 200.0,
            ..reference()
        };
        let g = shield_gain(&m, 3e9, Drive::Grounded).expect("below srf");
        assert!(g > 1.2, "{g}");
    }
}
