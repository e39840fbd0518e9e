//! The π-model fit's reference solver: the Levenberg–Marquardt of the
//! `levenberg-marquardt` crate (a port of MINPACK's `lmder`), on the same problem as
//! lcgate's own dense solver (`lcgate::model::Dense`): the relative error of a
//! [`Form`], every parameter in log space scaled by its start and clamped to ±12
//! (as `model::fit::P_MAX`). The tests check that both solvers give the same elements.
#![allow(dead_code)]

use levenberg_marquardt::{LeastSquaresProblem, LevenbergMarquardt, TerminationReason};
use nalgebra::{storage::Owned, DMatrix, DVector, Dyn};

use lcgate::model::fit::{Form, Solver};
use lcgate::network::C64;

/// The log-space bound of `model::fit::P_MAX` (a factor e¹² either way).
const P_MAX: f64 = 12.0;

/// The Levenberg–Marquardt solver of the `levenberg-marquardt` crate.
#[derive(Debug, Clone, Copy)]
pub struct Lm {
    /// evaluations allowed per parameter (+1), the crate's "patience"
    pub patience: usize,
}

impl Default for Lm {
    fn default() -> Self {
        Lm { patience: 30 }
    }
}

struct Problem<'a> {
    form: &'a dyn Form,
    f: &'a [f64],
    data: &'a [C64],
    weight: Vec<f64>,
    scale: Vec<f64>,
    p: DVector<f64>,
    x: Vec<f64>,
}

impl Problem<'_> {
    fn update_x(&mut self) {
        for k in 0..self.scale.len() {
            self.x[k] = self.scale[k] * self.p[k].clamp(-P_MAX, P_MAX).exp();
        }
    }
}

impl LeastSquaresProblem<f64, Dyn, Dyn> for Problem<'_> {
    type ResidualStorage = Owned<f64, Dyn>;
    type JacobianStorage = Owned<f64, Dyn, Dyn>;
    type ParameterStorage = Owned<f64, Dyn>;

    fn set_params(&mut self, p: &DVector<f64>) {
        self.p.copy_from(p);
        self.update_x();
    }

    fn params(&self) -> DVector<f64> {
        self.p.clone()
    }

    fn residuals(&self) -> Option<DVector<f64>> {
        let n = self.f.len();
        let mut r = DVector::zeros(2 * n);
        let mut g = vec![C64::new(0.0, 0.0); self.form.n_params()];
        for i in 0..n {
            let y = self.form.eval(&self.x, self.f[i], &mut g);
            let e = (y - self.data[i]) * self.weight[i];
            if !(e.re.is_finite() && e.im.is_finite()) {
                return None;
            }
            r[2 * i] = e.re;
            r[2 * i + 1] = e.im;
        }
        Some(r)
    }

    fn jacobian(&self) -> Option<DMatrix<f64>> {
        let n = self.f.len();
        let m = self.form.n_params();
        let mut j = DMatrix::zeros(2 * n, m);
        let mut g = vec![C64::new(0.0, 0.0); m];
        for i in 0..n {
            self.form.eval(&self.x, self.f[i], &mut g);
            for k in 0..m {
                // ∂r/∂p_k = x_k ∂r/∂x_k (log space); p clamped ⇒ flat
                let d = if self.p[k].abs() >= P_MAX {
                    C64::new(0.0, 0.0)
                } else {
                    g[k] * (self.x[k] * self.weight[i])
                };
                if !(d.re.is_finite() && d.im.is_finite()) {
                    return None;
                }
                j[(2 * i, k)] = d.re;
                j[(2 * i + 1, k)] = d.im;
            }
        }
        Some(j)
    }
}

impl Solver for Lm {
    fn solve(
        &self,
        form: &dyn Form,
        f: &[f64],
        data: &[C64],
        x0: &[f64],
    ) -> Result<Vec<f64>, String> {
        if x0.iter().any(|&v| !(v.is_finite() && v > 0.0)) {
            return Err("no usable starting values".into());
        }
        let weight = data
            .iter()
            .map(|d| {
                let a = d.norm();
                if a > 0.0 && a.is_finite() {
                    1.0 / a
                } else {
                    0.0
                }
            })
            .collect();
        let mut prob = Problem {
            form,
            f,
            data,
            weight,
            scale: x0.to_vec(),
            p: DVector::zeros(x0.len()),
            x: x0.to_vec(),
        };
        prob.update_x();
        let (prob, report) = LevenbergMarquardt::new()
            .with_ftol(1e-12)
            .with_xtol(1e-10)
            .with_gtol(1e-12)
            .with_patience(self.patience)
            .minimize(prob);
        match report.termination {
            TerminationReason::ResidualsZero
            | TerminationReason::Orthogonal
            | TerminationReason::Converged { .. }
            | TerminationReason::NoImprovementPossible(_)
            // the best point found so far: the fit error the caller reports says
            // whether it is good enough, and fit_view refuses one that is not
            | TerminationReason::LostPatience => Ok(prob.x),
            other => Err(format!("the least-squares fit failed ({other:?})")),
        }
    }
}
