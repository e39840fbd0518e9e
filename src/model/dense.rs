//! A small dense Levenberg–Marquardt solver for least-squares problems of at most
//! [`N_MAX`] parameters, the size of every π-model branch fit.
//!
//! The problem is min F(p) = ½‖r(p)‖² over p ∈ ℝⁿ with n ≤ 6 and many residuals
//! (two per sweep point). Instead of factorising the tall Jacobian J (m × n), each
//! iteration accumulates the normal equations A = JᵀJ and g = Jᵀr (n × n and n) in the
//! same pass over the points that computes F, in fixed-size arrays: no heap work per
//! iteration, one model evaluation per point per iteration.
//!
//! The step h solves Marquardt's damped system (Marquardt 1963, "An algorithm for
//! least-squares estimation of nonlinear parameters", SIAM J. Appl. Math. 11(2))
//!
//! ```text
//! (A + μ·D) h = −g,    D = diag(d_k),  d_k = max over the iterations so far of A_kk
//! ```
//!
//! (the diagonal scaling keeps the damping invariant to the units of each parameter;
//! the running maximum, as in MINPACK, stops a parameter whose sensitivity fades from
//! taking huge steps). It is solved as Â ĥ = −ĝ with Â = S A S + μ I, ĝ = S g,
//! h = S ĥ, S = D^(−½), by a Cholesky factorisation; a parameter the data do not
//! touch at all (d_k = 0) is held (h_k = 0). The gain ratio compares the actual
//! reduction with the one the linear model predicts,
//!
//! ```text
//! ϱ = (F(p) − F(p + h)) / (L(0) − L(h)),   L(0) − L(h) = ½ ĥᵀ(μ ĥ − ĝ),
//! ```
//!
//! (a step longer than [`STEP_MAX`] in any parameter is shortened along its direction
//! first, and the prediction is then −hᵀg − ½hᵀAh of the shortened step),
//! and the damping follows Nielsen's update (H. B. Nielsen, "Damping parameter in
//! Marquardt's method", IMM-REP-1999-05, DTU): on ϱ > 0 the step is taken and
//! μ ← μ·max(⅓, 1 − (2ϱ − 1)³), ν ← 2; otherwise μ ← μ·ν, ν ← 2ν. Start μ = 10⁻⁶
//! (see [`MU_START`]). This is Algorithm 3.16 of K. Madsen,
//! H. B. Nielsen and O. Tingleff, "Methods for non-linear least squares problems",
//! 2nd ed., IMM DTU 2004, with Marquardt's scaling.
//!
//! It stops ([`Stop`]) when the rms residual is below a floor (the data are met to
//! their own precision: nothing left to polish; this is also the early exit when the
//! start is already exact), when the Newton decrement ½ĝᵀÂ⁻¹ĝ (the gain a full
//! Gauss–Newton step predicts; S. Boyd and L. Vandenberghe, "Convex Optimization",
//! 2004, §9.5.1) is below `ftol`·F, which saves the evaluation of a last step that
//! cannot pay, or when a taken step reduced F and predicted to reduce it by
//! less than `ftol`·F (MINPACK's test), when the step is below `xtol`·(‖p‖ + `xtol`),
//! when every column of J is orthogonal to r to within `gtol` (cosine
//! |J_kᵀr| / (‖J_k‖‖r‖), MINPACK's test), or after `max_evals` evaluations.

use super::fit::{Form, Lanes, Solver, LANES, P_MAX};
use crate::network::C64;

/// Most parameters a problem may have.
pub const N_MAX: usize = 6;

/// Longest move of one parameter in one iteration. The parameters of the fits are
/// logarithms, so this is a factor e² ≈ 7.4: an ill-determined parameter (a tiny
/// column of J, hence a huge scaled step) cannot leap into a far, flat region in one
/// step, the guard MINPACK gets from its trust region.
const STEP_MAX: f64 = 2.0;

/// Damping of the Gauss–Newton step whose predicted gain is the convergence test: just
/// enough to factorise a semi-definite Â.
const DECREMENT_DAMPING: f64 = 1e-12;

/// Starting damping, relative to the unit scaled diagonal: small, since the fits start
/// from analytic values close to the optimum (Madsen et al. suggest 10⁻⁶ then).
const MU_START: f64 = 1e-6;

/// The least-squares problem at one point: F = ½‖r‖² and the normal equations.
#[derive(Debug, Clone, Copy)]
pub struct Normal {
    /// F = ½‖r‖²
    pub cost: f64,
    /// number of (complex) points the residual counts, for the rms
    pub points: usize,
    /// JᵀJ, full (symmetric)
    pub jtj: [[f64; N_MAX]; N_MAX],
    /// Jᵀr
    pub jtr: [f64; N_MAX],
}

impl Normal {
    const ZERO: Normal = Normal {
        cost: 0.0,
        points: 0,
        jtj: [[0.0; N_MAX]; N_MAX],
        jtr: [0.0; N_MAX],
    };

    /// rms relative residual per point, sqrt(‖r‖² / points).
    fn rms(&self) -> f64 {
        if self.points == 0 {
            f64::INFINITY
        } else {
            (2.0 * self.cost / self.points as f64).sqrt()
        }
    }
}

/// A problem the dense solver can minimise.
pub trait Problem {
    /// number of parameters (≤ [`N_MAX`])
    fn n(&self) -> usize;
    /// Evaluate at `p`: always `cost` and `points`; `jtj` and `jtr` too when `full`.
    /// False where the residual is undefined (not finite).
    fn eval(&self, p: &[f64], full: bool, out: &mut Normal) -> bool;
    /// Whether the normal equations come at about the cost of F alone (an analytic
    /// gradient): then every trial point is evaluated in full, in one pass.
    fn full_is_cheap(&self) -> bool {
        true
    }
}

/// Why the solver stopped.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Stop {
    /// the rms residual is below the floor
    Fits,
    /// the relative reduction of F fell below `ftol`
    Converged,
    /// the step fell below `xtol`
    SmallStep,
    /// the gradient is orthogonal to the residual to within `gtol`
    SmallGradient,
    /// `max_evals` evaluations were spent; the best point so far is returned
    Budget,
}

/// Where [`minimise`] stopped.
#[derive(Debug, Clone, Copy)]
pub struct Outcome {
    /// the parameters (the first `n` entries)
    pub p: [f64; N_MAX],
    /// why it stopped there
    pub stop: Stop,
    /// evaluations of the problem spent
    pub evals: usize,
    /// rms residual per point at `p` (NaN when the solver stopped without it)
    pub rms: f64,
}

/// Tolerances and budget of [`minimise`].
#[derive(Debug, Clone, Copy)]
pub struct Options {
    /// stop when the rms residual per point is at most this
    pub floor: f64,
    /// relative reduction of F
    pub ftol: f64,
    /// step size relative to ‖p‖
    pub xtol: f64,
    /// cosine between r and each column of J
    pub gtol: f64,
    /// evaluations of the problem allowed
    pub max_evals: usize,
}

impl Default for Options {
    fn default() -> Self {
        Options {
            floor: 1e-10,
            ftol: 1e-10,
            xtol: 1e-10,
            gtol: 1e-10,
            max_evals: 200,
        }
    }
}

/// Solve M h = b in place for the symmetric n × n M (lower triangle read) by
/// Cholesky; false when M is not positive definite in floating point.
// index loops: the textbook form of the factorisation reads best
#[allow(clippy::needless_range_loop)]
fn cholesky_solve(m: &mut [[f64; N_MAX]; N_MAX], b: &mut [f64; N_MAX], n: usize) -> bool {
    for j in 0..n {
        let mut s = m[j][j];
        for k in 0..j {
            s -= m[j][k] * m[j][k];
        }
        if !(s > 0.0 && s.is_finite()) {
            return false;
        }
        let d = s.sqrt();
        m[j][j] = d;
        for i in j + 1..n {
            let mut s = m[i][j];
            for k in 0..j {
                s -= m[i][k] * m[j][k];
            }
            m[i][j] = s / d;
        }
    }
    for i in 0..n {
        let mut s = b[i];
        for k in 0..i {
            s -= m[i][k] * b[k];
        }
        b[i] = s / m[i][i];
    }
    for i in (0..n).rev() {
        let mut s = b[i];
        for k in i + 1..n {
            s -= m[k][i] * b[k];
        }
        b[i] = s / m[i][i];
    }
    true
}

/// Minimise `prob` from `p0`; the point where it stopped and why, or Err when the
/// problem is undefined at `p0`.
pub fn minimise(prob: &dyn Problem, p0: &[f64], opt: &Options) -> Result<Outcome, String> {
    let n = prob.n();
    if n == 0 || n > N_MAX || p0.len() != n {
        return Err(format!("the dense solver takes 1 to {N_MAX} parameters"));
    }
    let cheap = prob.full_is_cheap();
    let mut p = [0.0; N_MAX];
    p[..n].copy_from_slice(p0);
    let mut at = Normal::ZERO;
    if !prob.eval(&p[..n], true, &mut at) || !at.cost.is_finite() {
        return Err("the residual is not finite at the start".into());
    }
    let mut evals = 1;
    let done = |p, stop, evals, rms| {
        Ok(Outcome {
            p,
            stop,
            evals,
            rms,
        })
    };
    let mut diag = [0.0f64; N_MAX];
    let mut mu = MU_START;
    let mut nu = 2.0;
    let mut trial = Normal::ZERO;
    loop {
        if at.rms() <= opt.floor {
            return done(p, Stop::Fits, evals, at.rms());
        }
        let mut s = [0.0; N_MAX];
        let mut cos_max: f64 = 0.0;
        for k in 0..n {
            diag[k] = diag[k].max(at.jtj[k][k]);
            s[k] = if diag[k] > 0.0 {
                1.0 / diag[k].sqrt()
            } else {
                0.0
            };
            if at.jtj[k][k] > 0.0 {
                let c = at.jtr[k].abs() / (at.jtj[k][k] * 2.0 * at.cost).sqrt();
                cos_max = cos_max.max(c);
            }
        }
        if cos_max <= opt.gtol {
            return done(p, Stop::SmallGradient, evals, at.rms());
        }
        let mut g = [0.0; N_MAX];
        for k in 0..n {
            g[k] = s[k] * at.jtr[k];
        }
        // (Â + μI) ĥ = −ĝ
        let damped = |mu: f64| {
            let mut m = [[0.0; N_MAX]; N_MAX];
            let mut h = [0.0; N_MAX];
            for i in 0..n {
                for j in 0..=i {
                    m[i][j] = s[i] * at.jtj[i][j] * s[j];
                }
                m[i][i] += mu;
                h[i] = -g[i];
            }
            cholesky_solve(&mut m, &mut h, n).then_some(h)
        };
        // the Newton decrement: what a full Gauss–Newton step would gain at most
        if let Some(h) = damped(DECREMENT_DAMPING) {
            let gain: f64 = (0..n).map(|k| -0.5 * h[k] * g[k]).sum();
            if gain <= opt.ftol * at.cost {
                return done(p, Stop::Converged, evals, at.rms());
            }
        }
        // the damped step, damping raised until the system is positive definite
        let h = loop {
            if let Some(h) = damped(mu) {
                break h;
            }
            mu *= nu;
            nu *= 2.0;
            if !mu.is_finite() {
                return done(p, Stop::SmallStep, evals, at.rms());
            }
        };
        // no parameter moves by more than STEP_MAX in one iteration
        let longest = (0..n).map(|k| (s[k] * h[k]).abs()).fold(0.0, f64::max);
        let t = if longest > STEP_MAX {
            STEP_MAX / longest
        } else {
            1.0
        };
        let mut p_new = p;
        let (mut step2, mut p2, mut pred) = (0.0, 0.0, 0.0);
        for k in 0..n {
            let hk = t * s[k] * h[k];
            p_new[k] += hk;
            step2 += hk * hk;
            p2 += p[k] * p[k];
            // L(0) − L(h) = −hᵀg − ½hᵀAh, scaled
            let ah: f64 = (0..n).map(|l| s[k] * at.jtj[k][l] * s[l] * h[l]).sum();
            pred -= t * h[k] * (g[k] + 0.5 * t * ah);
        }
        if step2.sqrt() <= opt.xtol * (p2.sqrt() + opt.xtol) {
            return done(p, Stop::SmallStep, evals, at.rms());
        }
        if evals >= opt.max_evals {
            return done(p, Stop::Budget, evals, at.rms());
        }
        evals += 1;
        let ok = prob.eval(&p_new[..n], cheap, &mut trial) && trial.cost.is_finite();
        let actual = if ok { at.cost - trial.cost } else { -1.0 };
        let rho = if pred > 0.0 { actual / pred } else { -1.0 };
        if rho > 0.0 {
            let old = at.cost;
            p = p_new;
            if cheap {
                at = trial;
            } else {
                if evals >= opt.max_evals || !prob.eval(&p[..n], true, &mut at) {
                    // F at p is not known here
                    return done(p, Stop::Budget, evals, f64::NAN);
                }
                evals += 1;
            }
            if actual <= opt.ftol * old && pred <= opt.ftol * old {
                return done(p, Stop::Converged, evals, at.rms());
            }
            mu *= (1.0 - (2.0 * rho - 1.0).powi(3)).max(1.0 / 3.0);
            nu = 2.0;
        } else {
            mu *= nu;
            nu *= 2.0;
        }
    }
}

/// The dense Levenberg–Marquardt ([`minimise`]) as a [`Solver`] of a [`Form`]: the
/// relative residual (Y(x, f_i) − d_i)/|d_i| with x_k = x0_k·exp(p_k), p_k clamped to
/// ±[`P_MAX`] (a clamped parameter is flat), from p = 0.
#[derive(Debug, Clone, Copy, Default)]
pub struct Dense {
    /// tolerances and budget
    pub options: Options,
}

struct FormProblem<'a> {
    form: &'a dyn Form,
    f: &'a [f64],
    data: &'a [C64],
    weight: Vec<f64>,
    points: usize,
    scale: &'a [f64],
}

impl FormProblem<'_> {
    fn x_of(&self, p: &[f64]) -> [f64; N_MAX] {
        let mut x = [0.0; N_MAX];
        for k in 0..p.len() {
            x[k] = self.scale[k] * p[k].clamp(-P_MAX, P_MAX).exp();
        }
        x
    }
}

impl Problem for FormProblem<'_> {
    fn n(&self) -> usize {
        self.scale.len()
    }

    fn eval(&self, p: &[f64], _full: bool, out: &mut Normal) -> bool {
        let n = p.len();
        let x = self.x_of(p);
        // ∂r/∂p_k = x_k·w_i·∂Y/∂x_k (log space); zero where p_k is clamped
        let mut dx = [0.0; N_MAX];
        for k in 0..n {
            if p[k].abs() < P_MAX {
                dx[k] = x[k];
            }
        }
        let pass = Pass {
            x: &x[..n],
            dx: &dx[..n],
            f: self.f,
            data: self.data,
            weight: &self.weight,
        };
        let ok = self.form.normal_equations(&pass, out);
        out.points = self.points;
        ok
    }
}

/// One pass of [`normal_equations`]: the relative residual r_i = w_i·(Y(x, f_i) − d_i)
/// and its derivatives dx_k·w_i·∂Y/∂x_k.
pub struct Pass<'a> {
    /// physical parameters
    pub x: &'a [f64],
    /// factor of each column of J (x_k in log space; 0 for a held parameter)
    pub dx: &'a [f64],
    /// frequencies
    pub f: &'a [f64],
    /// data
    pub data: &'a [C64],
    /// weight of each point
    pub weight: &'a [f64],
}

/// F, JᵀJ and Jᵀr of a [`Form`] for one [`Pass`]; `points` is left to the caller.
/// False when anything is not finite.
pub fn normal_equations<F: Form + ?Sized>(form: &F, pass: &Pass, out: &mut Normal) -> bool {
    // the loops over parameters with a size known at compile time, unrolled
    match pass.x.len() {
        3 => accumulate::<F, 3>(form, pass, out),
        4 => accumulate::<F, 4>(form, pass, out),
        6 => accumulate::<F, 6>(form, pass, out),
        _ => accumulate::<F, N_MAX>(form, pass, out),
    }
}

/// [`normal_equations`] for N ≥ `x.len()` parameters (the ones past it are zero).
///
/// The points are taken [`LANES`] at a time ([`Form::eval_lanes`]), each lane with its
/// own partial sums, added up lane by lane at the end: every loop below runs over the
/// lanes, which the compiler turns into vector instructions (about 3× faster than one
/// point at a time). A last block that is not full repeats the last point with weight
/// zero, which adds exact zeros.
// index loops over the triangle of JᵀJ and over the lanes read best as such
#[allow(clippy::needless_range_loop)]
fn accumulate<F: Form + ?Sized, const N: usize>(form: &F, pass: &Pass, out: &mut Normal) -> bool {
    let n = pass.x.len();
    let m = pass.f.len();
    if m == 0 {
        *out = Normal::ZERO;
        return true;
    }
    let mut dx = [0.0; N];
    dx[..n].copy_from_slice(pass.dx);
    let mut cost = [0.0; LANES];
    let mut jtj = [[[0.0; LANES]; N]; N];
    let mut jtr = [[0.0; LANES]; N];
    let mut y = Lanes::ZERO;
    let mut grad = [Lanes::ZERO; N];
    for start in (0..m).step_by(LANES) {
        let mut f = [pass.f[m - 1]; LANES];
        let (mut w, mut d) = ([0.0; LANES], Lanes::ZERO);
        for l in 0..LANES.min(m - start) {
            f[l] = pass.f[start + l];
            w[l] = pass.weight[start + l];
            d.set(l, pass.data[start + l]);
        }
        form.eval_lanes(pass.x, &f, &mut y, &mut grad[..n]);
        let (mut er, mut ei) = ([0.0; LANES], [0.0; LANES]);
        for l in 0..LANES {
            er[l] = (y.re[l] - d.re[l]) * w[l];
            ei[l] = (y.im[l] - d.im[l]) * w[l];
            cost[l] += er[l] * er[l] + ei[l] * ei[l];
        }
        let mut jr = [[0.0; LANES]; N];
        let mut ji = [[0.0; LANES]; N];
        for k in 0..N {
            for l in 0..LANES {
                let c = dx[k] * w[l];
                jr[k][l] = grad[k].re[l] * c;
                ji[k][l] = grad[k].im[l] * c;
            }
        }
        for k in 0..N {
            for l in 0..LANES {
                jtr[k][l] += jr[k][l] * er[l] + ji[k][l] * ei[l];
            }
            for j in 0..=k {
                for l in 0..LANES {
                    jtj[k][j][l] += jr[k][l] * jr[j][l] + ji[k][l] * ji[j][l];
                }
            }
        }
    }
    let total = |v: &[f64; LANES]| v.iter().fold(0.0, |a, b| a + b);
    let cost = total(&cost);
    // a non-finite term anywhere makes its sums non-finite
    if !cost.is_finite() {
        return false;
    }
    *out = Normal::ZERO;
    out.cost = 0.5 * cost;
    for k in 0..n {
        let (r, kk) = (total(&jtr[k]), total(&jtj[k][k]));
        if !(r.is_finite() && kk.is_finite()) {
            return false;
        }
        out.jtr[k] = r;
        for j in 0..=k {
            let v = total(&jtj[k][j]);
            out.jtj[k][j] = v;
            out.jtj[j][k] = v;
        }
    }
    true
}

/// 1/|d_i|, zero where d_i is zero or not finite (the point then does not count).
pub(crate) fn weights(data: &[C64]) -> Vec<f64> {
    data.iter()
        .map(|d| {
            let a = d.norm_sqr().sqrt();
            if a > 0.0 && a.is_finite() {
                1.0 / a
            } else {
                0.0
            }
        })
        .collect()
}

impl Solver for Dense {
    fn solve(
        &self,
        form: &dyn Form,
        f: &[f64],
        data: &[C64],
        x0: &[f64],
    ) -> Result<Vec<f64>, String> {
        self.solve_rms(form, f, data, x0).map(|(x, _)| x)
    }

    fn solve_rms(
        &self,
        form: &dyn Form,
        f: &[f64],
        data: &[C64],
        x0: &[f64],
    ) -> Result<(Vec<f64>, Option<f64>), String> {
        if x0.len() != form.n_params() || x0.iter().any(|&v| !(v.is_finite() && v > 0.0)) {
            return Err("no usable starting values".into());
        }
        let weight = weights(data);
        let points = weight.iter().filter(|&&w| w > 0.0).count();
        let prob = FormProblem {
            form,
            f,
            data,
            weight,
            points,
            scale: x0,
        };
        let out = minimise(&prob, &vec![0.0; x0.len()], &self.options)?;
        let x = prob.x_of(&out.p[..x0.len()])[..x0.len()].to_vec();
        Ok((x, out.rms.is_finite().then_some(out.rms)))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// r_i = a·exp(b·t_i) − y_i with y from a = 2, b = −0.7 (+ a deterministic ripple).
    struct Exp {
        t: Vec<f64>,
        y: Vec<f64>,
    }

    impl Problem for Exp {
        fn n(&self) -> usize {
            2
        }
        fn eval(&self, p: &[f64], _full: bool, out: &mut Normal) -> bool {
            *out = Normal::ZERO;
            for (&t, &y) in self.t.iter().zip(&self.y) {
                let e = (p[1] * t).exp();
                let r = p[0] * e - y;
                let j = [e, p[0] * t * e];
                out.cost += 0.5 * r * r;
                out.points += 1;
                for k in 0..2 {
                    out.jtr[k] += j[k] * r;
                    for l in 0..2 {
                        out.jtj[k][l] += j[k] * j[l];
                    }
                }
            }
            true
        }
    }

    fn exp_problem(ripple: f64) -> Exp {
        let t: Vec<f64> = (0..40).map(|i| i as f64 * 0.1).collect();
        let y = t
            .iter()
            .enumerate()
            .map(|(i, &t)| 2.0 * (-0.7 * t).exp() * (1.0 + ripple * (i as f64 * 1.3).sin()))
            .collect();
        Exp { t, y }
    }

    #[test]
    fn recovers_an_exponential_from_far_away() {
        let Outcome { p, stop, .. } = minimise(&exp_problem(0.0), &[0.3, 0.5], &Options::default())
            .expect("defined at the start");
        assert!(
            (p[0] - 2.0).abs() < 1e-8 && (p[1] + 0.7).abs() < 1e-8,
            "{p:?} {stop:?}"
        );
        assert_eq!(stop, Stop::Fits);
    }

    #[test]
    fn meets_the_normal_equations_on_rippled_data() {
        // at the least-squares optimum the gradient Jᵀr vanishes (first-order condition)
        let prob = exp_problem(0.01);
        let Outcome { p, stop, .. } =
            minimise(&prob, &[1.0, -0.1], &Options::default()).expect("defined at the start");
        assert_ne!(stop, Stop::Budget);
        let mut at = Normal::ZERO;
        assert!(prob.eval(&p[..2], true, &mut at));
        for k in 0..2 {
            let c = at.jtr[k].abs() / (at.jtj[k][k] * 2.0 * at.cost).sqrt();
            assert!(c < 1e-6, "k {k}: cosine {c}");
        }
        assert!(
            (p[0] - 2.0).abs() < 0.02 && (p[1] + 0.7).abs() < 0.02,
            "{p:?}"
        );
    }

    #[test]
    fn an_exact_start_costs_one_evaluation() {
        struct Counting<'a>(&'a Exp, std::cell::Cell<usize>);
        impl Problem for Counting<'_> {
            fn n(&self) -> usize {
                2
            }
            fn eval(&self, p: &[f64], full: bool, out: &mut Normal) -> bool {
                self.1.set(self.1.get() + 1);
                self.0.eval(p, full, out)
            }
        }
        let exp = exp_problem(0.0);
        let c = Counting(&exp, std::cell::Cell::new(0));
        let Outcome { p, stop, evals, .. } =
            minimise(&c, &[2.0, -0.7], &Options::default()).expect("defined");
        assert_eq!((stop, evals, c.1.get()), (Stop::Fits, 1, 1));
        assert_eq!((p[0], p[1]), (2.0, -0.7));
    }

    /// The normal equations one point at a time, in point order: the straightforward
    /// form of [`accumulate`].
    fn point_by_point(form: &dyn Form, pass: &Pass) -> Option<Normal> {
        let n = pass.x.len();
        let mut out = Normal::ZERO;
        let mut g = [C64::new(0.0, 0.0); N_MAX];
        for (i, &f) in pass.f.iter().enumerate() {
            let w = pass.weight[i];
            let e = (form.eval(pass.x, f, &mut g[..n]) - pass.data[i]) * w;
            out.cost += 0.5 * e.norm_sqr();
            let j: Vec<C64> = (0..n).map(|k| g[k] * (pass.dx[k] * w)).collect();
            for k in 0..n {
                out.jtr[k] += j[k].re * e.re + j[k].im * e.im;
                for l in 0..n {
                    out.jtj[k][l] += j[k].re * j[l].re + j[k].im * j[l].im;
                }
            }
        }
        out.cost.is_finite().then_some(out)
    }

    #[test]
    fn lane_sums_match_point_by_point_sums() {
        use super::super::fit::{OnePortForm, SeriesForm, ShuntForm};
        let forms: [(&dyn Form, &[f64]); 3] = [
            (&SeriesForm, &[2e-9, 3.0, 1.0, 150e-15]),
            (&ShuntForm, &[150e-15, 40e-15, 500.0]),
            (&OnePortForm, &[2e-9, 3.0, 1.0, 150e-15, 40e-15, 500.0]),
        ];
        // every length of a last block, and one point of zero weight
        for m in [1, 2, 3, 4, 5, 7, 8, 11, 300] {
            let f: Vec<f64> = (0..m).map(|i| 1e8 * 1.02f64.powi(i as i32)).collect();
            for (form, x) in forms {
                let n = x.len();
                // data off the model by a ripple, so that r and J are both non-zero
                let data: Vec<C64> = f
                    .iter()
                    .enumerate()
                    .map(|(i, &fi)| {
                        let mut g = [C64::new(0.0, 0.0); N_MAX];
                        form.eval(x, fi, &mut g[..n]) * (1.0 + 0.01 * (i as f64).sin())
                    })
                    .collect();
                let mut weight = weights(&data);
                weight[m / 2] = 0.0;
                let dx: Vec<f64> = x.iter().map(|v| v * 1.5).collect();
                let pass = Pass {
                    x,
                    dx: &dx,
                    f: &f,
                    data: &data,
                    weight: &weight,
                };
                let want = point_by_point(form, &pass).expect("finite");
                let mut got = Normal::ZERO;
                assert!(normal_equations(form, &pass, &mut got));
                let close = |a: f64, b: f64| (a - b).abs() <= 1e-12 * a.abs().max(b.abs());
                assert!(close(got.cost, want.cost), "m {m} n {n}");
                for k in 0..n {
                    assert!(close(got.jtr[k], want.jtr[k]), "m {m} n {n} k {k}");
                    for l in 0..n {
                        assert!(close(got.jtj[k][l], want.jtj[k][l]), "m {m} n {n} {k},{l}");
                    }
                }
                // a point that is not finite makes the whole pass fail
                let mut bad = data.clone();
                // (its weight stays as it was: NaN times any weight is NaN)
                bad[m - 1] = C64::new(f64::NAN, 0.0);
                let pass = Pass { data: &bad, ..pass };
                assert!(!normal_equations(form, &pass, &mut got), "m {m} n {n}");
            }
        }
    }

    #[test]
    fn cholesky_solves_a_damped_system() {
        let mut m = [[0.0; N_MAX]; N_MAX];
        m[0][0] = 4.0;
        m[1][0] = 2.0;
        m[1][1] = 3.0;
        let mut b = [0.0; N_MAX];
        b[0] = 2.0;
        b[1] = 1.0;
        assert!(cholesky_solve(&mut m, &mut b, 2));
        // 4x + 2y = 2, 2x + 3y = 1 → x = 0.5, y = 0
        assert!((b[0] - 0.5).abs() < 1e-15 && b[1].abs() < 1e-15);
        let mut z = [[0.0; N_MAX]; N_MAX];
        assert!(!cholesky_solve(&mut z, &mut [1.0; N_MAX], 2));
    }
}
