//! Numerics on a frequency grid: interpolation, derivatives on non-uniform grids,
//! zero crossings and the parabola refinement of a peak.
//!
//! Interpolation between sweep points is piecewise power law: between two samples
//! of the same sign (and f > 0) the curve is taken as y = a·f^b through both, i.e.
//! linear in (ln f, ln |y|); otherwise (a sign change, a zero) linear in f. Both
//! are exact on the sweep points and never overshoot (a value between two samples
//! lies between them, so a band check cannot invent a better or worse value than
//! the data shows). The power law is exact for the shapes these curves take away
//! from resonance — L and C flat, Q ∝ f (conductor-limited coil), Q ∝ 1/f
//! (capacitor), R ∝ √f (skin effect) — where plain linear interpolation errs by
//! tens of percent on a coarse grid (a capacitor's Q between 100 and 350 MHz).

/// `Some(x)` when x is finite.
pub fn fin(x: f64) -> Option<f64> {
    x.is_finite().then_some(x)
}

/// Index i such that f[i] ≤ x ≤ f[i+1] (f strictly increasing); None outside.
pub fn bracket(f: &[f64], x: f64) -> Option<usize> {
    if f.is_empty() || !x.is_finite() || x < f[0] || x > f[f.len() - 1] {
        return None;
    }
    if f.len() == 1 {
        return Some(0);
    }
    // partition_point: first index with f > x
    let p = f.partition_point(|&v| v <= x);
    Some(p.saturating_sub(1).min(f.len() - 2))
}

/// Piecewise power-law interpolation of `y` (on grid `f`) at x (see the module
/// doc); exact at sweep points; None outside the sweep or where a needed sample is
/// undefined.
pub fn interp(f: &[f64], y: &[Option<f64>], x: f64) -> Option<f64> {
    let i = bracket(f, x)?;
    if f.len() == 1 {
        return if x == f[0] { y[0] } else { None };
    }
    let (f0, f1) = (f[i], f[i + 1]);
    if x == f0 {
        return y[i];
    }
    if x == f1 {
        return y[i + 1];
    }
    let (y0, y1) = (y[i]?, y[i + 1]?);
    if f0 > 0.0 && y0 != 0.0 && y1 != 0.0 && (y0 > 0.0) == (y1 > 0.0) {
        let t = (x / f0).ln() / (f1 / f0).ln();
        let v = y0.signum() * (y0.abs().ln() + t * (y1.abs() / y0.abs()).ln()).exp();
        if let Some(v) = fin(v) {
            return Some(v);
        }
    }
    fin(y0 + (y1 - y0) * (x - f0) / (f1 - f0))
}

/// Derivative dy/dx at every grid point, second-order accurate on a non-uniform
/// grid: the derivative of the parabola through three neighbouring samples (central
/// at interior points, one-sided at the ends). Two points: the secant. None where
/// a needed sample is missing or the grid has fewer than two points.
pub fn derivative(x: &[f64], y: &[Option<f64>]) -> Vec<Option<f64>> {
    from_nan(&Stencil::new(x).apply(&to_nan(y)))
}

/// The same derivative from the neighbouring stencil (the parabola through the
/// samples centred one point further up, or down at the top end). Its difference
/// from [`derivative`] estimates the truncation error (both are O(h²·y‴)). None
/// for grids of fewer than four points.
pub fn derivative_alt(x: &[f64], y: &[Option<f64>]) -> Vec<Option<f64>> {
    from_nan(&Stencil::new_alt(x).apply(&to_nan(y)))
}

/// A curve with its undefined samples as NaN, the form [`Stencil::apply`] takes.
pub fn to_nan(y: &[Option<f64>]) -> Vec<f64> {
    y.iter().map(|v| v.unwrap_or(f64::NAN)).collect()
}

/// A curve from the NaN form, every sample that is not finite undefined.
pub fn from_nan(y: &[f64]) -> Vec<Option<f64>> {
    y.iter().map(|&v| fin(v)).collect()
}

/// x when finite, else NaN: [`fin`] in the NaN form.
#[inline]
pub fn finite_or_nan(x: f64) -> f64 {
    if x.is_finite() {
        x
    } else {
        f64::NAN
    }
}

/// The weights of [`derivative`] (or [`derivative_alt`]) on one grid, for
/// differentiating several curves on it: they depend on the grid alone, and are
/// most of the work (three divisions a point). The one-off functions are built on
/// [`Stencil::apply`], so they have its bits.
#[derive(Debug, Clone)]
pub struct Stencil {
    kind: StencilKind,
}

#[derive(Debug, Clone)]
enum StencilKind {
    /// every derivative undefined
    None(usize),
    /// two points: the secant's denominator x₁ − x₀
    Secant(f64),
    /// per point: the centre j of the three samples and their weights
    Three(Vec<(usize, [f64; 3])>),
}

impl Stencil {
    /// The stencil of [`derivative`] on grid `x`.
    pub fn new(x: &[f64]) -> Stencil {
        Stencil::build(x, |i, n| i.clamp(1, n - 2))
    }

    /// The stencil of [`derivative_alt`] on grid `x`.
    pub fn new_alt(x: &[f64]) -> Stencil {
        if x.len() < 4 {
            return Stencil {
                kind: StencilKind::None(x.len()),
            };
        }
        Stencil::build(x, |i, n| {
            let j = i.clamp(1, n - 2);
            if j < n - 2 {
                j + 1
            } else {
                j - 1
            }
        })
    }

    fn build(x: &[f64], centre: impl Fn(usize, usize) -> usize) -> Stencil {
        let n = x.len();
        let kind = match n {
            0 | 1 => StencilKind::None(n),
            2 => StencilKind::Secant(x[1] - x[0]),
            _ => StencilKind::Three(
                (0..n)
                    .map(|i| {
                        // the three samples used, and the point at which the parabola
                        // is differentiated
                        let j = centre(i, n);
                        let (xa, xb, xc) = (x[j - 1], x[j], x[j + 1]);
                        let t = x[i];
                        // derivative of the Lagrange parabola at t
                        let da = (2.0 * t - xb - xc) / ((xa - xb) * (xa - xc));
                        let db = (2.0 * t - xa - xc) / ((xb - xa) * (xb - xc));
                        let dc = (2.0 * t - xa - xb) / ((xc - xa) * (xc - xb));
                        (j, [da, db, dc])
                    })
                    .collect(),
            ),
        };
        Stencil { kind }
    }

    /// dy/dx at every grid point of `y` (on the stencil's grid), undefined samples and
    /// results as NaN ([`to_nan`]): a NaN sample makes the weighted sum NaN, as an
    /// undefined one made the result undefined, and the sums of defined samples are
    /// the same operations, so the same bits, as on `Option`s, at a fraction of the
    /// cost (no tags to test, half the memory).
    pub fn apply(&self, y: &[f64]) -> Vec<f64> {
        match &self.kind {
            StencilKind::None(n) => vec![f64::NAN; *n],
            StencilKind::Secant(dx) => {
                let d = finite_or_nan((y[1] - y[0]) / dx);
                vec![d, d]
            }
            StencilKind::Three(w) => w
                .iter()
                .map(|&(j, [da, db, dc])| {
                    let s = &y[j - 1..j + 2];
                    finite_or_nan(s[0] * da + s[1] * db + s[2] * dc)
                })
                .collect(),
        }
    }
}

/// The lowest frequency where `y` crosses from negative to non-negative, located
/// between the bracketing samples by linear interpolation of `w(f)·y` against `f²`
/// (`w` a positive weight, ω for susceptance): for B = ωC − 1/(ωL), ω·B is linear
/// in ω², so the crossing of an ideal L‖C is exact on any grid.
pub fn rising_zero(f: &[f64], y: &[Option<f64>]) -> Option<f64> {
    for i in 0..f.len().saturating_sub(1) {
        let (Some(y0), Some(y1)) = (y[i], y[i + 1]) else {
            continue;
        };
        if y0 < 0.0 && y1 >= 0.0 {
            if y1 == 0.0 {
                return Some(f[i + 1]);
            }
            let (p0, p1) = (f[i] * y0, f[i + 1] * y1);
            let (u0, u1) = (f[i] * f[i], f[i + 1] * f[i + 1]);
            let u = u0 + (u1 - u0) * (-p0) / (p1 - p0);
            let x = fin(u.sqrt())?;
            // min/max: a grid that is not increasing (bad input) must not panic clamp
            return Some(x.clamp(f[i].min(f[i + 1]), f[i].max(f[i + 1])));
        }
    }
    None
}

/// The maximum of a sampled curve, refined by the parabola through the largest
/// sample and its two neighbours (when they exist, are defined and the parabola
/// opens downward with its vertex between them). Only indices < `end` are searched.
/// Returns (f at peak, peak value).
pub fn peak(f: &[f64], y: &[Option<f64>], end: usize) -> Option<(f64, f64)> {
    let end = end.min(f.len());
    let (i, yi) = (0..end).filter_map(|i| y[i].map(|v| (i, v))).fold(
        None,
        |best: Option<(usize, f64)>, (i, v)| match best {
            Some((_, b)) if b >= v => best,
            _ => Some((i, v)),
        },
    )?;
    if i == 0 || i + 1 >= end {
        return Some((f[i], yi));
    }
    let (Some(ya), Some(yc)) = (y[i - 1], y[i + 1]) else {
        return Some((f[i], yi));
    };
    let (xa, xb, xc) = (f[i - 1], f[i], f[i + 1]);
    // Newton form: y = ya + d1 (x − xa) + d2 (x − xa)(x − xb)
    let d1 = (yi - ya) / (xb - xa);
    let d2 = ((yc - yi) / (xc - xb) - d1) / (xc - xa);
    if d2 >= 0.0 {
        return Some((xb, yi));
    }
    // dy/dx = d1 + d2 (2x − xa − xb) = 0
    let xv = (xa + xb) / 2.0 - d1 / (2.0 * d2);
    if !(xv > xa && xv < xc) {
        return Some((xb, yi));
    }
    let yv = ya + d1 * (xv - xa) + d2 * (xv - xa) * (xv - xb);
    match (fin(xv), fin(yv)) {
        (Some(x), Some(v)) if v >= yi => Some((x, v)),
        _ => Some((xb, yi)),
    }
}

/// First f after index `from` where `y` has fallen to `level` or below, linearly
/// interpolated between the samples around the fall.
pub fn first_fall(f: &[f64], y: &[Option<f64>], from: usize, level: f64) -> Option<f64> {
    for j in from + 1..f.len() {
        let y1 = y[j]?;
        if y1 <= level {
            let y0 = y[j - 1]?;
            if y0 <= level {
                return Some(f[j - 1]);
            }
            return fin(f[j - 1] + (f[j] - f[j - 1]) * (y0 - level) / (y0 - y1));
        }
    }
    None
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn derivative_exact_for_parabola() {
        // The three-point formula is exact for quadratics on any grid
        // (Lagrange interpolation; common practice, no source).
        let x = [0.0, 0.3, 1.0, 1.2, 2.5];
        let y: Vec<_> = x
            .iter()
            .map(|&t| Some(3.0 * t * t - 2.0 * t + 1.0))
            .collect();
        let d = derivative(&x, &y);
        for (t, di) in x.iter().zip(d) {
            assert!((di.unwrap() - (6.0 * t - 2.0)).abs() < 1e-12);
        }
    }

    /// The three-point derivative written out per call, as it was before the weights
    /// were shared: the reference for [`Stencil`].
    fn derivative_by_hand(x: &[f64], y: &[Option<f64>], alt: bool) -> Vec<Option<f64>> {
        let n = x.len();
        if n < 2 || (alt && n < 4) {
            return vec![None; n];
        }
        if n == 2 {
            let d = match (y[0], y[1]) {
                (Some(a), Some(b)) => fin((b - a) / (x[1] - x[0])),
                _ => None,
            };
            return vec![d, d];
        }
        (0..n)
            .map(|i| {
                let mut j = i.clamp(1, n - 2);
                if alt {
                    j = if j < n - 2 { j + 1 } else { j - 1 };
                }
                let (xa, xb, xc) = (x[j - 1], x[j], x[j + 1]);
                let (ya, yb, yc) = (y[j - 1]?, y[j]?, y[j + 1]?);
                let t = x[i];
                let da = (2.0 * t - xb - xc) / ((xa - xb) * (xa - xc));
                let db = (2.0 * t - xa - xc) / ((xb - xa) * (xb - xc));
                let dc = (2.0 * t - xa - xb) / ((xc - xa) * (xc - xb));
                fin(ya * da + yb * db + yc * dc)
            })
            .collect()
    }

    #[test]
    fn shared_stencils_give_the_bits_of_one_derivative_each() {
        let mut state = 0xd1ffu64;
        let mut next = || {
            state = state
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            (state >> 11) as f64 / (1u64 << 53) as f64
        };
        for n in [0, 1, 2, 3, 4, 5, 7, 300] {
            // a log-like grid with random steps, and curves with gaps
            let mut x = Vec::with_capacity(n);
            let mut t = 1e8;
            for _ in 0..n {
                t *= 1.0 + 0.05 * next() + 1e-3;
                x.push(t);
            }
            let (plain, alt) = (Stencil::new(&x), Stencil::new_alt(&x));
            for _ in 0..3 {
                let y: Vec<Option<f64>> = (0..n)
                    .map(|_| (next() > 0.05).then(|| (next() - 0.5) * 1e-3))
                    .collect();
                let bits = |v: Vec<Option<f64>>| -> Vec<Option<u64>> {
                    v.into_iter().map(|d| d.map(f64::to_bits)).collect()
                };
                let apply = |st: &Stencil| from_nan(&st.apply(&to_nan(&y)));
                assert_eq!(
                    bits(apply(&plain)),
                    bits(derivative_by_hand(&x, &y, false)),
                    "n={n}"
                );
                assert_eq!(
                    bits(apply(&alt)),
                    bits(derivative_by_hand(&x, &y, true)),
                    "n={n} alt"
                );
            }
        }
    }

    #[test]
    fn interpolation_and_bracket() {
        let f = [1.0, 2.0, 4.0];
        let y = [Some(-1.0), Some(3.0), None];
        // a sign change: linear
        assert_eq!(interp(&f, &y, 1.5), Some(1.0));
        assert_eq!(interp(&f, &y, 2.0), Some(3.0));
        assert_eq!(interp(&f, &y, 3.0), None);
        assert_eq!(interp(&f, &y, 0.5), None);
        assert_eq!(bracket(&f, 4.0), Some(1));
    }

    #[test]
    fn power_law_interpolation_is_exact_for_power_laws() {
        // y = 5/f and y = 2·√f between coarse samples (common practice, no source)
        let f = [1e8, 3.5e8, 6e8];
        for (g, name) in [
            (Box::new(|x: f64| 5e9 / x) as Box<dyn Fn(f64) -> f64>, "1/f"),
            (Box::new(|x: f64| 2.0 * x.sqrt()), "sqrt f"),
            (Box::new(|x: f64| -3.0 * x), "-f"),
        ] {
            let y: Vec<_> = f.iter().map(|&x| Some(g(x))).collect();
            for x in [1.2e8, 2e8, 5e8] {
                let got = interp(&f, &y, x).unwrap();
                assert!((got - g(x)).abs() < 1e-12 * g(x).abs(), "{name} at {x}");
            }
        }
    }

    #[test]
    fn peak_refined() {
        let f = [1.0, 2.0, 3.0, 4.0];
        let y: Vec<_> = f
            .iter()
            .map(|&t: &f64| Some(5.0 - (t - 2.4).powi(2)))
            .collect();
        let (fp, yp) = peak(&f, &y, 4).unwrap();
        assert!((fp - 2.4).abs() < 1e-12 && (yp - 5.0).abs() < 1e-12);
    }

    #[test]
    fn rising_zero_of_lc() {
        // B = ωC − 1/(ωL) has its zero at 1/(2π√(LC)) (Pozar §6.1); exact on a coarse grid.
        let (l, c) = (2e-9, 100e-15);
        let f: Vec<f64> = (1..=30).map(|k| k as f64 * 1e9).collect();
        let b: Vec<_> = f
            .iter()
            .map(|&x| {
                let w = 2.0 * std::f64::consts::PI * x;
                Some(w * c - 1.0 / (w * l))
            })
            .collect();
        let f0 = 1.0 / (2.0 * std::f64::consts::PI * (l * c).sqrt());
        let z = rising_zero(&f, &b).unwrap();
        assert!((z - f0).abs() / f0 < 1e-12, "{z} vs {f0}");
    }
}
