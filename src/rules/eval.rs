//! Evaluation of type-checked expressions against one part's figures.
//!
//! Numbers are intervals: an exact value is `[x, x]`, and a figure known only by a
//! bound is open on one side. That is how DESIGN §7's null rule works: `srf` is null
//! when the sweep ends before resonance, and is then known to be above `f_max`, so
//! `srf >= X` still passes when `f_max ≥ X`; when a bound cannot decide, the check is
//! `undecided` and says why. Any other undefined value makes what depends on it
//! undecided too: a null figure is never a pass. Nothing here produces NaN or ∞ in
//! a result; infinite interval ends exist only inside and are printed as bounds.
//!
//! A comparison over a band holds when it holds at every sweep point inside the band
//! and at the band's interpolated edges. The point with the least margin (or the
//! worst violation) is reported as `worst_f`, and `shown` is rendered there.

use super::expr::{Agg, BinOp, Expr, ExprKind};
use super::types::{Dims, BAND_NAMES, MECHANISM_CURVE, Q_DROP_CAUSE};
use super::{EvalContext, Value};
use crate::figures;
use crate::model::Mechanism;
use crate::units::{eng, sig3, Dim};

/// A number known to lie in `[lo, hi]` (an exact value when lo == hi; an infinite
/// end means "unbounded on that side").
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Iv {
    pub lo: f64,
    pub hi: f64,
}

impl Iv {
    fn exact(x: f64) -> Iv {
        Iv { lo: x, hi: x }
    }
    fn is_exact(self) -> bool {
        self.lo == self.hi
    }
    fn above(x: f64) -> Iv {
        Iv {
            lo: x,
            hi: f64::INFINITY,
        }
    }
    fn from_ends(a: f64, b: f64) -> Option<Iv> {
        if a.is_nan() || b.is_nan() {
            return None;
        }
        let iv = Iv {
            lo: a.min(b),
            hi: a.max(b),
        };
        // an exact result must be finite
        if iv.is_exact() && !iv.lo.is_finite() {
            return None;
        }
        Some(iv)
    }
}

/// A value during evaluation.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) enum V {
    Num(Iv, Dims),
    Truth(bool),
    Mech(Mechanism),
    Band(f64, f64),
}

/// Result of a truth: decided or not, with the worst point and the rendered text.
#[derive(Debug, Clone)]
pub(crate) struct T {
    pub val: Option<bool>,
    pub worst_f: Option<f64>,
    pub shown: String,
    pub reason: Option<String>,
}

type R = Result<V, String>;

pub(crate) struct Ev<'a, 'c> {
    pub ctx: &'a EvalContext<'c>,
}

fn fmt_num(x: f64, d: Dims) -> String {
    let sym = d.symbol();
    if sym.is_empty() {
        sig3(x)
    } else {
        eng(x, sym)
    }
}

fn fmt_v(v: &R) -> String {
    match v {
        Ok(V::Num(iv, d)) => {
            if iv.is_exact() {
                fmt_num(iv.lo, *d)
            } else if iv.hi == f64::INFINITY && iv.lo.is_finite() {
                format!("> {}", fmt_num(iv.lo, *d))
            } else if iv.lo == f64::NEG_INFINITY && iv.hi.is_finite() {
                format!("< {}", fmt_num(iv.hi, *d))
            } else if iv.lo.is_finite() && iv.hi.is_finite() {
                format!("{} .. {}", fmt_num(iv.lo, *d), fmt_num(iv.hi, *d))
            } else {
                "unknown".into()
            }
        }
        Ok(V::Truth(b)) => if *b { "yes" } else { "no" }.into(),
        Ok(V::Mech(m)) => m.as_str().into(),
        Ok(V::Band(a, b)) => format!("{} .. {}", eng(*a, "Hz"), eng(*b, "Hz")),
        Err(_) => "undefined".into(),
    }
}

/// Frequencies where a band comparison is evaluated: the band's edges and every
/// sweep point strictly inside.
fn grid(freq: &[f64], lo: f64, hi: f64) -> Vec<f64> {
    let mut g = vec![lo];
    g.extend(freq.iter().copied().filter(|&f| f > lo && f < hi));
    if hi > lo {
        g.push(hi);
    }
    g
}

impl Ev<'_, '_> {
    fn band(&self) -> Result<(f64, f64), String> {
        self.ctx.band.map(|b| (b.lo, b.hi)).ok_or_else(|| {
            "the part has no band: give `band:` in its rules group or its sidecar file".to_string()
        })
    }

    fn sweep_text(&self) -> String {
        let f = &self.ctx.figures.freq;
        match (f.first(), f.last()) {
            (Some(a), Some(b)) => format!("{} .. {}", eng(*a, "Hz"), eng(*b, "Hz")),
            _ => "empty".into(),
        }
    }

    fn loss_reason(&self) -> String {
        match &self.ctx.figures.loss {
            Some(Err(e)) => format!("no loss analysis for this part: {e}"),
            Some(Ok(_)) => "not computed for this part".into(),
            None => "there is no loss analysis for this view".into(),
        }
    }

    fn scalar(&self, n: &str) -> R {
        let d = self.ctx.data;
        let dc = match n {
            "passivity_margin" => Some(d.passivity_margin),
            "reciprocity_error" => Some(d.reciprocity_error),
            "points" => Some(Some(d.points as f64)),
            "f_min" => Some(Some(d.f_min)),
            "f_max" => Some(Some(d.f_max)),
            "ports" => Some(Some(d.ports as f64)),
            _ => None,
        };
        let Some(info) = figures::info(n) else {
            return Err(format!("`{n}` is not a figure"));
        };
        let dims = Dims::of(info.dim);
        if let Some(v) = dc {
            return match v.filter(|x| x.is_finite()) {
                Some(x) => Ok(V::Num(Iv::exact(x), dims)),
                None => Err(format!("`{n}` could not be computed for this file")),
            };
        }
        let figs = self.ctx.figures;
        if !info.kinds.contains(&figs.kind) {
            return Err(format!(
                "`{n}` is not a figure of {} parts",
                figs.kind.as_str()
            ));
        }
        if let Some(x) = figs.scalar(n).filter(|x| x.is_finite()) {
            return Ok(V::Num(Iv::exact(x), dims));
        }
        if !figs.scalars.contains_key(n) {
            return Err(format!("`{n}`: {}", self.loss_reason()));
        }
        let f_max = figs.freq.last().copied().filter(|f| f.is_finite());
        let beyond = matches!(n, "srf" | "srf1" | "srf2")
            || (n == "f_q_half" && figs.scalar("f_q_peak").is_some());
        match f_max {
            Some(fm) if beyond => Ok(V::Num(Iv::above(fm), dims)),
            _ => Err(format!("`{n}` is undefined for this part")),
        }
    }

    fn curve(&self, name: &str, f: f64) -> R {
        let figs = self.ctx.figures;
        // the catalogue entry and the curve looked up once each (this runs per point)
        let info = figures::info(name);
        let values = if name == MECHANISM_CURVE {
            if !figs.curves.contains_key("substrate_factor") {
                return Err(format!("`mechanism`: {}", self.loss_reason()));
            }
            None
        } else {
            if let Some(info) = info {
                if !info.kinds.contains(&figs.kind) {
                    return Err(format!(
                        "`{name}` is not a figure of {} parts",
                        figs.kind.as_str()
                    ));
                }
            }
            let values = figs.curves.get(name);
            if info.is_some() && values.is_none() {
                return Err(format!("`{name}`: {}", self.loss_reason()));
            }
            values
        };
        let inside = figs
            .freq
            .first()
            .zip(figs.freq.last())
            .is_some_and(|(a, b)| f >= *a && f <= *b);
        if !inside {
            return Err(format!(
                "`{name}` at {} is outside the sweep ({})",
                eng(f, "Hz"),
                self.sweep_text()
            ));
        }
        let got = if name == MECHANISM_CURVE {
            figs.mechanism_at(f).map(V::Mech)
        } else {
            values
                .and_then(|c| figures::grid::interp(&figs.freq, c, f))
                .filter(|x| x.is_finite())
                .zip(info.map(|i| Dims::of(i.dim)))
                .map(|(x, d)| V::Num(Iv::exact(x), d))
        };
        got.ok_or_else(|| format!("`{name}` is undefined at {}", eng(f, "Hz")))
    }

    /// Value of a non-truth node; `at` is the frequency at which swept parts are taken.
    pub(crate) fn val(&self, e: &Expr, at: Option<f64>) -> R {
        match &e.kind {
            ExprKind::Num { value, dim, .. } => Ok(V::Num(Iv::exact(*value), Dims::of(*dim))),
            ExprKind::Word(m) => Ok(V::Mech(*m)),
            ExprKind::Name(n) => self.name(n),
            ExprKind::Range(a, b) => {
                let lo = self.exact(a, at)?;
                let hi = self.exact(b, at)?;
                if lo > hi {
                    return Err(format!(
                        "the band {} .. {} is empty",
                        eng(lo, "Hz"),
                        eng(hi, "Hz")
                    ));
                }
                Ok(V::Band(lo, hi))
            }
            ExprKind::Call { func, arg, .. } => match self.val(arg, at)? {
                V::Band(..) => match at {
                    Some(f) => self.curve(func, f),
                    None => Err(format!(
                        "`{func}` over a band needs a comparison or min/max/mean"
                    )),
                },
                V::Num(iv, _) if iv.is_exact() => self.curve(func, iv.lo),
                V::Num(..) => Err(format!(
                    "the frequency given to `{func}` is only known by a bound"
                )),
                _ => Err(format!("`{func}` takes a frequency")),
            },
            ExprKind::Agg { op, arg } => self.agg(*op, arg).map(|(v, _)| v),
            ExprKind::Neg(x) => match self.val(x, at)? {
                V::Num(iv, d) => Ok(V::Num(
                    Iv {
                        lo: -iv.hi,
                        hi: -iv.lo,
                    },
                    d,
                )),
                _ => Err("`-` needs a number".into()),
            },
            ExprKind::Binary { op, lhs, rhs }
                if matches!(op, BinOp::Add | BinOp::Sub | BinOp::Mul | BinOp::Div) =>
            {
                let (V::Num(a, da), V::Num(b, db)) = (self.val(lhs, at)?, self.val(rhs, at)?)
                else {
                    return Err(format!("`{}` needs numbers", op.as_str()));
                };
                arith(*op, a, da, b, db)
            }
            ExprKind::Not(_) | ExprKind::Binary { .. } | ExprKind::Within { .. } => {
                let t = self.truth(e, at);
                match t.val {
                    Some(b) => Ok(V::Truth(b)),
                    None => Err(t.reason.unwrap_or_else(|| "undecided".into())),
                }
            }
        }
    }

    fn exact(&self, e: &Expr, at: Option<f64>) -> Result<f64, String> {
        match self.val(e, at)? {
            V::Num(iv, _) if iv.is_exact() => Ok(iv.lo),
            V::Num(..) => Err(format!(
                "`{}` is only known by a bound",
                super::expr::print(e)
            )),
            _ => Err(format!("`{}` is not a number", super::expr::print(e))),
        }
    }

    fn name(&self, n: &str) -> R {
        if BAND_NAMES.contains(&n) {
            let (lo, hi) = self.band()?;
            return Ok(match n {
                "band" => V::Band(lo, hi),
                "band.lo" => V::Num(Iv::exact(lo), Dims::of(Dim::Frequency)),
                "band.hi" => V::Num(Iv::exact(hi), Dims::of(Dim::Frequency)),
                _ => V::Num(Iv::exact(0.5 * (lo + hi)), Dims::of(Dim::Frequency)),
            });
        }
        if n == Q_DROP_CAUSE {
            return match &self.ctx.figures.loss {
                Some(Ok(story)) => story.q_drop_cause.map(V::Mech).ok_or_else(|| {
                    "q_drop_cause is undefined: q does not fall to half its peak within the sweep"
                        .to_string()
                }),
                _ => Err(format!("q_drop_cause: {}", self.loss_reason())),
            };
        }
        if let Some(v) = self.ctx.values.get(n) {
            return match v {
                Value::Quantity { value, dim } if value.is_finite() => {
                    Ok(V::Num(Iv::exact(*value), Dims::of(*dim)))
                }
                Value::Quantity { .. } => Err(format!("value `{n}` is not finite")),
                Value::Truth(b) => Ok(V::Truth(*b)),
            };
        }
        if figures::info(n).is_some() {
            return self.scalar(n);
        }
        Err(format!("value `{n}` is not set for this part"))
    }

    /// The band a swept expression runs over (the first band argument found outside
    /// any min/max/mean), or None when nothing in it is swept.
    fn band_of(&self, e: &Expr) -> Option<Result<(f64, f64), String>> {
        match &e.kind {
            ExprKind::Call { arg, .. } => match self.val(arg, None) {
                Ok(V::Band(a, b)) => Some(Ok((a, b))),
                Err(r) if is_band_expr(arg) => Some(Err(r)),
                _ => None,
            },
            ExprKind::Agg { .. }
            | ExprKind::Num { .. }
            | ExprKind::Name(_)
            | ExprKind::Word(_)
            | ExprKind::Range(..) => None,
            ExprKind::Neg(x) | ExprKind::Not(x) => self.band_of(x),
            ExprKind::Binary { lhs, rhs, .. } => self.band_of(lhs).or_else(|| self.band_of(rhs)),
            ExprKind::Within { value, tol, target } => self
                .band_of(value)
                .or_else(|| self.band_of(tol))
                .or_else(|| self.band_of(target)),
        }
    }

    /// min/max/mean over the band of `arg`; also the frequency of the min or max.
    fn agg(&self, op: Agg, arg: &Expr) -> Result<(V, Option<f64>), String> {
        let (lo, hi) = match self.band_of(arg) {
            Some(b) => b?,
            None => return Err(format!("`{}` needs a curve over a band", op.as_str())),
        };
        let pts = grid(&self.ctx.figures.freq, lo, hi);
        let mut ys = Vec::with_capacity(pts.len());
        let mut dims = Dims(0, 0);
        for &f in &pts {
            match self.val(arg, Some(f))? {
                V::Num(iv, d) if iv.is_exact() => {
                    ys.push(iv.lo);
                    dims = d;
                }
                V::Num(..) => {
                    return Err(format!(
                        "`{}` is only known by a bound at {}",
                        super::expr::print(arg),
                        eng(f, "Hz")
                    ))
                }
                _ => return Err(format!("`{}` takes numbers", op.as_str())),
            }
        }
        let pick = |better: fn(f64, f64) -> bool| {
            let mut k = 0;
            for i in 1..ys.len() {
                if better(ys[i], ys[k]) {
                    k = i;
                }
            }
            k
        };
        let (v, where_f) = match op {
            Agg::Min => {
                let k = pick(|a, b| a < b);
                (ys[k], Some(pts[k]))
            }
            Agg::Max => {
                let k = pick(|a, b| a > b);
                (ys[k], Some(pts[k]))
            }
            Agg::Mean => {
                if pts.len() == 1 {
                    (ys[0], None)
                } else {
                    // trapezoidal mean over frequency: (1/(hi−lo)) ∫ y df
                    let mut s = 0.0;
                    for i in 1..pts.len() {
                        s += 0.5 * (ys[i] + ys[i - 1]) * (pts[i] - pts[i - 1]);
                    }
                    (s / (hi - lo), None)
                }
            }
        };
        if !v.is_finite() {
            return Err(format!("`{}` is not finite", op.as_str()));
        }
        Ok((V::Num(Iv::exact(v), dims), where_f))
    }

    // ------------------------------------------------------------ truths

    /// Evaluate a truth-typed node.
    pub(crate) fn truth(&self, e: &Expr, at: Option<f64>) -> T {
        match &e.kind {
            ExprKind::Binary {
                op: BinOp::And,
                lhs,
                rhs,
            }
            | ExprKind::Binary {
                op: BinOp::Or,
                lhs,
                rhs,
            } => {
                let is_and = matches!(e.kind, ExprKind::Binary { op: BinOp::And, .. });
                let (a, b) = (self.truth(lhs, at), self.truth(rhs, at));
                let shown = format!(
                    "{} {} {}",
                    wrap(lhs, &a.shown, 2),
                    if is_and { "and" } else { "or" },
                    wrap(rhs, &b.shown, 3)
                );
                let decisive = !is_and; // value that decides alone: false for and, true for or
                let val = if a.val == Some(decisive) || b.val == Some(decisive) {
                    Some(decisive)
                } else if a.val.is_none() || b.val.is_none() {
                    None
                } else {
                    Some(!decisive)
                };
                // the worst point comes from the operand that settled the outcome
                let from = if a.val == val { &a } else { &b };
                let reason = match val {
                    None => [a.reason.clone(), b.reason.clone()]
                        .into_iter()
                        .flatten()
                        .next(),
                    _ => None,
                };
                T {
                    val,
                    worst_f: from.worst_f.or(a.worst_f).or(b.worst_f),
                    shown,
                    reason,
                }
            }
            ExprKind::Not(x) => {
                let t = self.truth(x, at);
                T {
                    val: t.val.map(|b| !b),
                    worst_f: t.worst_f,
                    shown: format!("not {}", wrap(x, &t.shown, 3)),
                    reason: t.reason,
                }
            }
            ExprKind::Binary { .. } | ExprKind::Within { .. } => self.comparison(e, at),
            _ => {
                let v = self.val(e, at);
                let shown = format!("{} {}", super::expr::print(e), fmt_v(&v));
                match v {
                    Ok(V::Truth(b)) => T {
                        val: Some(b),
                        worst_f: None,
                        shown,
                        reason: None,
                    },
                    Ok(_) => T {
                        val: None,
                        worst_f: None,
                        shown,
                        reason: Some("not a truth".into()),
                    },
                    Err(r) => T {
                        val: None,
                        worst_f: None,
                        shown,
                        reason: Some(r),
                    },
                }
            }
        }
    }

    /// A comparison or `within`, over its band when it has one.
    fn comparison(&self, e: &Expr, at: Option<f64>) -> T {
        let band = if at.is_none() { self.band_of(e) } else { None };
        let Some(band) = band else {
            let (val, _, reason) = self.decide(e, at);
            return T {
                val,
                worst_f: at,
                shown: self.show_cmp(e, at),
                reason,
            };
        };
        let (lo, hi) = match band {
            Ok(b) => b,
            Err(r) => {
                return T {
                    val: None,
                    worst_f: None,
                    shown: self.show_cmp(e, None),
                    reason: Some(r),
                }
            }
        };
        let mut worst_fail: Option<(f64, f64)> = None; // (margin, f)
        let mut worst_pass: Option<(f64, f64)> = None;
        let mut undecided: Option<(f64, String)> = None;
        for f in grid(&self.ctx.figures.freq, lo, hi) {
            let (val, margin, reason) = self.decide(e, Some(f));
            let m = margin.unwrap_or(0.0);
            match val {
                Some(false) => {
                    if worst_fail.is_none_or(|(wm, _)| m < wm) {
                        worst_fail = Some((m, f));
                    }
                }
                Some(true) => {
                    if worst_pass.is_none_or(|(wm, _)| m < wm) {
                        worst_pass = Some((m, f));
                    }
                }
                None => {
                    if undecided.is_none() {
                        undecided = Some((f, reason.unwrap_or_else(|| "undecided".into())));
                    }
                }
            }
        }
        let (val, f, reason) = if let Some((_, f)) = worst_fail {
            (Some(false), f, None)
        } else if let Some((f, r)) = undecided {
            (None, f, Some(r))
        } else if let Some((_, f)) = worst_pass {
            (Some(true), f, None)
        } else {
            (None, lo, Some("the band has no points".into()))
        };
        T {
            val,
            worst_f: Some(f),
            shown: self.show_cmp(e, Some(f)),
            reason,
        }
    }

    /// Decide a comparison at one point: (outcome, margin, reason when undecided).
    /// The margin is positive when the comparison holds with room to spare and
    /// negative by how much it fails (in the compared quantity's units).
    fn decide(&self, e: &Expr, at: Option<f64>) -> (Option<bool>, Option<f64>, Option<String>) {
        match &e.kind {
            ExprKind::Within { value, tol, target } => {
                let (a, b, t) = (self.val(value, at), self.val(target, at), self.val(tol, at));
                let (a, b, t) = match (a, b, t) {
                    (Ok(V::Num(a, _)), Ok(V::Num(b, _)), Ok(V::Num(t, td))) => (a, b, (t, td)),
                    (a, b, t) => return (None, None, first_err([a, b, t])),
                };
                let (t, td) = t;
                if !t.is_exact() || !b.is_exact() {
                    return (
                        None,
                        None,
                        Some("the tolerance or target is only known by a bound".into()),
                    );
                }
                // relative tolerance (a ratio): |a − b| ≤ t·|b|; absolute: |a − b| ≤ t
                let tol_abs = if td == Dims(0, 0) {
                    t.lo * b.lo.abs()
                } else {
                    t.lo
                };
                let (dlo, dhi) = (a.lo - b.lo, a.hi - b.lo);
                if dlo >= -tol_abs && dhi <= tol_abs {
                    let m = tol_abs - dlo.abs().max(dhi.abs());
                    (Some(true), Some(m), None)
                } else if dlo > tol_abs || dhi < -tol_abs {
                    let m = tol_abs - dlo.abs().min(dhi.abs());
                    (Some(false), Some(m), None)
                } else {
                    (None, None, Some(bound_reason(&self.notes(e))))
                }
            }
            ExprKind::Binary { op, lhs, rhs } => {
                let (a, b) = (self.val(lhs, at), self.val(rhs, at));
                match (a, b) {
                    (Ok(V::Num(a, _)), Ok(V::Num(b, _))) => {
                        let r = cmp_iv(*op, a, b);
                        match r {
                            Some((v, m)) => (Some(v), Some(m), None),
                            None => (None, None, Some(bound_reason(&self.notes(e)))),
                        }
                    }
                    (Ok(V::Mech(a)), Ok(V::Mech(b))) => {
                        let eq = a == b;
                        let v = if *op == BinOp::Eq { eq } else { !eq };
                        (Some(v), Some(if v { 1.0 } else { -1.0 }), None)
                    }
                    (Ok(V::Truth(a)), Ok(V::Truth(b))) => {
                        let eq = a == b;
                        let v = if *op == BinOp::Eq { eq } else { !eq };
                        (Some(v), Some(if v { 1.0 } else { -1.0 }), None)
                    }
                    (a, b) => (None, None, first_err([a, b])),
                }
            }
            _ => (None, None, Some("not a comparison".into())),
        }
    }

    /// Why bounds could not decide: which figures are known only by a bound.
    fn notes(&self, e: &Expr) -> Vec<String> {
        let mut out = Vec::new();
        walk_names(e, &mut |n| {
            if let Ok(V::Num(iv, d)) = self.name(n) {
                if !iv.is_exact() {
                    let s = format!(
                        "{n} is beyond the sweep, known only to be {}",
                        fmt_v(&Ok(V::Num(iv, d)))
                    );
                    if !out.contains(&s) {
                        out.push(s);
                    }
                }
            }
        });
        out
    }

    // ------------------------------------------------------------ shown

    /// `srf 9.12 GHz >= 2 × 5.9 GHz = 11.8 GHz`: each side with its values put in.
    fn show_cmp(&self, e: &Expr, at: Option<f64>) -> String {
        match &e.kind {
            ExprKind::Within { value, tol, target } => format!(
                "{} within {} of {}",
                self.side(value, at, None),
                self.subst(tol, at),
                self.side(target, at, None)
            ),
            ExprKind::Binary { op, lhs, rhs } => format!(
                "{} {} {}",
                self.side(lhs, at, Some(*op)),
                op.as_str(),
                self.side(rhs, at, Some(flip(*op)))
            ),
            _ => self.subst(e, at),
        }
    }

    /// One side of a comparison: `srf 9.12 GHz`, `q(band) min 10.3 at 5.9 GHz`,
    /// `12`, or `2 × 5.9 GHz = 11.8 GHz`.
    fn side(&self, e: &Expr, at: Option<f64>, op: Option<BinOp>) -> String {
        let v = self.val(e, at);
        match &e.kind {
            ExprKind::Num { text, .. } => text.clone(),
            ExprKind::Word(m) => m.as_str().into(),
            ExprKind::Name(_) => format!("{} {}", super::expr::print(e), fmt_v(&v)),
            ExprKind::Call { arg, .. } => {
                let swept = matches!(self.val(arg, None), Ok(V::Band(..)));
                match (swept, at) {
                    (true, Some(f)) => {
                        let word = match op {
                            Some(BinOp::Ge | BinOp::Gt) => "min ",
                            Some(BinOp::Le | BinOp::Lt) => "max ",
                            _ => "",
                        };
                        format!(
                            "{} {word}{} at {}",
                            super::expr::print(e),
                            fmt_v(&v),
                            eng(f, "Hz")
                        )
                    }
                    _ => format!("{} {}", super::expr::print(e), fmt_v(&v)),
                }
            }
            ExprKind::Agg { op: a, arg } => match self.agg(*a, arg) {
                Ok((v, Some(f))) => format!(
                    "{} {} at {}",
                    super::expr::print(e),
                    fmt_v(&Ok(v)),
                    eng(f, "Hz")
                ),
                Ok((v, None)) => format!("{} {}", super::expr::print(e), fmt_v(&Ok(v))),
                Err(r) => format!("{} {}", super::expr::print(e), fmt_v(&Err(r))),
            },
            _ => {
                let s = self.subst(e, at);
                format!("{s} = {}", fmt_v(&v))
            }
        }
    }

    /// The expression with every leaf replaced by its value, `×` for products.
    fn subst(&self, e: &Expr, at: Option<f64>) -> String {
        let mut s = String::new();
        self.subst_into(&mut s, e, at, 0);
        s
    }

    fn subst_into(&self, s: &mut String, e: &Expr, at: Option<f64>, min_prec: u8) {
        let p = prec(e);
        let paren = p < min_prec;
        if paren {
            s.push('(');
        }
        match &e.kind {
            ExprKind::Num { text, .. } => s.push_str(text),
            ExprKind::Word(m) => s.push_str(m.as_str()),
            ExprKind::Name(_) | ExprKind::Call { .. } | ExprKind::Agg { .. } => {
                let v = self.val(e, at);
                if let Ok(V::Num(iv, _)) = v {
                    if !iv.is_exact() {
                        s.push_str(&format!("{} ({})", super::expr::print(e), fmt_v(&v)));
                    } else {
                        s.push_str(&fmt_v(&v));
                    }
                } else if v.is_err() {
                    s.push_str(&format!("{} (undefined)", super::expr::print(e)));
                } else {
                    s.push_str(&fmt_v(&v));
                }
            }
            ExprKind::Range(a, b) => {
                self.subst_into(s, a, at, 5);
                s.push_str(" .. ");
                self.subst_into(s, b, at, 5);
            }
            ExprKind::Neg(x) => {
                s.push('-');
                self.subst_into(s, x, at, 7);
            }
            ExprKind::Not(x) => {
                s.push_str("not ");
                self.subst_into(s, x, at, 3);
            }
            ExprKind::Binary { op, lhs, rhs } => {
                let q = op.prec();
                let (lp, rp) = if op.is_comparison() {
                    (q + 1, q + 1)
                } else {
                    (q, q + 1)
                };
                self.subst_into(s, lhs, at, lp);
                let sym = if *op == BinOp::Mul { "×" } else { op.as_str() };
                s.push_str(&format!(" {sym} "));
                self.subst_into(s, rhs, at, rp);
            }
            ExprKind::Within { value, tol, target } => {
                self.subst_into(s, value, at, 5);
                s.push_str(" within ");
                self.subst_into(s, tol, at, 5);
                s.push_str(" of ");
                self.subst_into(s, target, at, 5);
            }
        }
        if paren {
            s.push(')');
        }
    }
}

fn prec(e: &Expr) -> u8 {
    match &e.kind {
        ExprKind::Binary { op, .. } => op.prec(),
        ExprKind::Within { .. } => 4,
        ExprKind::Not(_) => 3,
        ExprKind::Neg(_) => 7,
        ExprKind::Range(..) => 0,
        _ => 8,
    }
}

/// Parenthesise a shown operand of `and`/`or` when its node binds looser.
fn wrap(e: &Expr, shown: &str, min_prec: u8) -> String {
    if prec(e) < min_prec {
        format!("({shown})")
    } else {
        shown.to_string()
    }
}

fn flip(op: BinOp) -> BinOp {
    match op {
        BinOp::Lt => BinOp::Gt,
        BinOp::Le => BinOp::Ge,
        BinOp::Gt => BinOp::Lt,
        BinOp::Ge => BinOp::Le,
        o => o,
    }
}

fn is_band_expr(e: &Expr) -> bool {
    matches!(&e.kind, ExprKind::Range(..)) || matches!(&e.kind, ExprKind::Name(n) if n == "band")
}

fn walk_names(e: &Expr, f: &mut dyn FnMut(&str)) {
    match &e.kind {
        ExprKind::Name(n) => f(n),
        ExprKind::Num { .. } | ExprKind::Word(_) => {}
        ExprKind::Range(a, b) | ExprKind::Binary { lhs: a, rhs: b, .. } => {
            walk_names(a, f);
            walk_names(b, f);
        }
        ExprKind::Call { arg, .. } | ExprKind::Agg { arg, .. } => walk_names(arg, f),
        ExprKind::Neg(x) | ExprKind::Not(x) => walk_names(x, f),
        ExprKind::Within { value, tol, target } => {
            walk_names(value, f);
            walk_names(tol, f);
            walk_names(target, f);
        }
    }
}

fn bound_reason(notes: &[String]) -> String {
    if notes.is_empty() {
        "a value is known only by a bound, which does not decide the check".into()
    } else {
        format!("{}, which does not decide the check", notes.join("; "))
    }
}

fn first_err<const N: usize>(vs: [R; N]) -> Option<String> {
    vs.into_iter()
        .find_map(|v| v.err())
        .or(Some("a value is not a number".into()))
}

fn arith(op: BinOp, a: Iv, da: Dims, b: Iv, db: Dims) -> R {
    let (iv, d) = match op {
        BinOp::Add => (Iv::from_ends(a.lo + b.lo, a.hi + b.hi), da),
        BinOp::Sub => (Iv::from_ends(a.lo - b.hi, a.hi - b.lo), da),
        BinOp::Mul => (mul(a, b), Dims(da.0 + db.0, da.1 + db.1)),
        BinOp::Div => {
            if b.lo <= 0.0 && b.hi >= 0.0 {
                return Err(if b.is_exact() {
                    "division by zero".into()
                } else {
                    "division by a value that may be zero".into()
                });
            }
            (
                mul(
                    a,
                    Iv {
                        lo: 1.0 / b.hi,
                        hi: 1.0 / b.lo,
                    },
                ),
                Dims(da.0 - db.0, da.1 - db.1),
            )
        }
        _ => return Err("not arithmetic".into()),
    };
    match iv {
        Some(iv) => Ok(V::Num(iv, d)),
        None => Err("the arithmetic overflows".into()),
    }
}

fn mul(a: Iv, b: Iv) -> Option<Iv> {
    let ps = [a.lo * b.lo, a.lo * b.hi, a.hi * b.lo, a.hi * b.hi];
    if ps.iter().any(|p| p.is_nan()) {
        return None;
    }
    let lo = ps.iter().copied().fold(f64::INFINITY, f64::min);
    let hi = ps.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    Iv::from_ends(lo, hi)
}

/// Compare two intervals: Some((holds, margin)) when the bounds decide. An open
/// bound (an inexact interval) is strict: `srf` known above f_max satisfies
/// `srf > f_max`.
fn cmp_iv(op: BinOp, a: Iv, b: Iv) -> Option<(bool, f64)> {
    let exact = a.is_exact() && b.is_exact();
    let gt = |x: Iv, y: Iv, strict: bool| -> Option<(bool, f64)> {
        // x > y (strict) or x >= y
        let m = x.lo - y.hi;
        let holds = if strict {
            m > 0.0 || (m == 0.0 && !exact)
        } else {
            m >= 0.0
        };
        if holds {
            return Some((true, fin(m)));
        }
        let m2 = x.hi - y.lo;
        let fails = if strict { m2 <= 0.0 } else { m2 < 0.0 };
        if fails {
            return Some((false, fin(m2)));
        }
        None
    };
    match op {
        BinOp::Ge => gt(a, b, false),
        BinOp::Gt => gt(a, b, true),
        BinOp::Le => gt(b, a, false),
        BinOp::Lt => gt(b, a, true),
        BinOp::Eq | BinOp::Ne => {
            if exact {
                let eq = a.lo == b.lo;
                let d = (a.lo - b.lo).abs();
                let holds = if op == BinOp::Eq { eq } else { !eq };
                Some((holds, if op == BinOp::Eq { -d } else { d }))
            } else if a.hi < b.lo || b.hi < a.lo {
                Some((op == BinOp::Ne, 0.0))
            } else {
                None
            }
        }
        _ => None,
    }
}

fn fin(x: f64) -> f64 {
    if x.is_finite() {
        x
    } else if x > 0.0 {
        f64::MAX
    } else {
        f64::MIN
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const F: Dims = Dims(-1, 0);

    #[test]
    fn bounds_decide_only_when_they_can() {
        let above10 = Iv::above(10.0);
        assert_eq!(
            cmp_iv(BinOp::Ge, above10, Iv::exact(9.0)).map(|x| x.0),
            Some(true)
        );
        assert_eq!(
            cmp_iv(BinOp::Ge, above10, Iv::exact(10.0)).map(|x| x.0),
            Some(true)
        );
        // the bound is strict: known above 10 satisfies > 10
        assert_eq!(
            cmp_iv(BinOp::Gt, above10, Iv::exact(10.0)).map(|x| x.0),
            Some(true)
        );
        assert_eq!(cmp_iv(BinOp::Ge, above10, Iv::exact(11.0)), None);
        assert_eq!(
            cmp_iv(BinOp::Lt, above10, Iv::exact(10.0)).map(|x| x.0),
            Some(false)
        );
        assert_eq!(cmp_iv(BinOp::Le, above10, Iv::exact(11.0)), None);
        assert_eq!(
            cmp_iv(BinOp::Eq, above10, Iv::exact(5.0)).map(|x| x.0),
            Some(false)
        );
        assert_eq!(
            cmp_iv(BinOp::Ne, above10, Iv::exact(5.0)).map(|x| x.0),
            Some(true)
        );
        assert_eq!(cmp_iv(BinOp::Eq, above10, Iv::exact(50.0)), None);
        // exact values: margins in the compared units
        assert_eq!(
            cmp_iv(BinOp::Ge, Iv::exact(12.0), Iv::exact(10.0)),
            Some((true, 2.0))
        );
        assert_eq!(
            cmp_iv(BinOp::Le, Iv::exact(12.0), Iv::exact(10.0)),
            Some((false, -2.0))
        );
        assert_eq!(
            cmp_iv(BinOp::Gt, Iv::exact(10.0), Iv::exact(10.0)).map(|x| x.0),
            Some(false)
        );
    }

    #[test]
    fn interval_arithmetic_keeps_bounds_and_refuses_nan() {
        let a = Iv::above(10.0);
        let two = Iv::exact(2.0);
        assert_eq!(
            arith(BinOp::Mul, a, F, two, Dims(0, 0)),
            Ok(V::Num(Iv::above(20.0), F))
        );
        let neg = arith(BinOp::Mul, a, F, Iv::exact(-1.0), Dims(0, 0));
        assert_eq!(
            neg,
            Ok(V::Num(
                Iv {
                    lo: f64::NEG_INFINITY,
                    hi: -10.0
                },
                F
            ))
        );
        assert_eq!(
            arith(BinOp::Sub, a, F, Iv::exact(4.0), F),
            Ok(V::Num(Iv::above(6.0), F))
        );
        // ∞ · 0 would be NaN: refused
        assert!(arith(BinOp::Mul, a, F, Iv::exact(0.0), Dims(0, 0)).is_err());
        assert!(arith(BinOp::Div, two, F, Iv::exact(0.0), F).is_err());
        assert!(arith(
            BinOp::Mul,
            Iv::exact(1e308),
            F,
            Iv::exact(1e308),
            Dims(0, 0)
        )
        .is_err());
        // dimensions multiply: 1/f is a time
        assert_eq!(
            arith(BinOp::Div, Iv::exact(1.0), Dims(0, 0), Iv::exact(1e9), F),
            Ok(V::Num(Iv::exact(1e-9), Dims(1, 0)))
        );
    }

    #[test]
    fn values_print_without_nan() {
        assert_eq!(fmt_v(&Ok(V::Num(Iv::exact(9.123e9), F))), "9.12 GHz");
        assert_eq!(fmt_v(&Ok(V::Num(Iv::above(1e10), F))), "> 10 GHz");
        assert_eq!(
            fmt_v(&Ok(V::Num(
                Iv {
                    lo: f64::NEG_INFINITY,
                    hi: 2.0
                },
                Dims(0, 0)
            ))),
            "< 2"
        );
        assert_eq!(fmt_v(&Err("x".into())), "undefined");
        assert_eq!(grid(&[1.0, 2.0, 3.0, 4.0], 1.5, 3.0), vec![1.5, 2.0, 3.0]);
        assert_eq!(grid(&[1.0, 2.0], 1.5, 1.5), vec![1.5]);
    }
}
