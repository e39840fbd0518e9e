//! Computing the figures of DESIGN §6 from a view, and the data checks of a network.

use std::collections::BTreeMap;

use nalgebra::DMatrix;

use super::grid::{fin, finite_or_nan, first_fall, peak, rising_zero, Stencil};
use super::{DataChecks, Kind, ViewFigures};
use crate::network::convert::magnitude;
use crate::network::{map_points, Network, View, C64};

const TAU: f64 = 2.0 * std::f64::consts::PI;

type Curve = Vec<Option<f64>>;

/// The kind a view's data suggests (DESIGN §6): `transformer` for a winding view;
/// otherwise `inductor` if Im Z_in > 0 at the lowest frequency, `capacitor` if < 0.
/// Im Z_in has the sign of −Im Y_in, which is used so that a zero Y_in cannot
/// mislead. A view with no points, or Im Z_in exactly 0 there, counts as inductor.
pub fn infer_kind(view: &View) -> Kind {
    match view {
        View::Windings { .. } => Kind::Transformer,
        View::Driving { y_in, .. } => match y_in.first() {
            Some(y) if y.im > 0.0 => Kind::Capacitor,
            _ => Kind::Inductor,
        },
    }
}

/// All figures of one view on the grid `freq` (Hz). `kind` None → inferred
/// ([`infer_kind`]). A winding view always gets transformer figures; a driving view
/// declared `transformer` is treated as undeclared. Inductor views end with
/// `crate::model::analyse`, which adds the fit and loss curves.
pub fn view_figures(view: &View, freq: &[f64], kind: Option<Kind>) -> ViewFigures {
    let kind = match (view, kind) {
        (View::Windings { .. }, _) => Kind::Transformer,
        (View::Driving { .. }, Some(k)) if k != Kind::Transformer => k,
        _ => infer_kind(view),
    };
    let mut figs = ViewFigures {
        view: view.name(),
        kind,
        freq: freq.to_vec(),
        scalars: BTreeMap::new(),
        curves: BTreeMap::new(),
        loss: None,
    };
    match view {
        View::Driving { y_in, .. } => {
            let n = freq.len().min(y_in.len());
            let (f, y) = (&freq[..n], &y_in[..n]);
            figs.freq = f.to_vec();
            if kind == Kind::Capacitor {
                capacitor(&mut figs, f, y);
            } else {
                inductor(&mut figs, f, y);
                crate::model::analyse(view, &mut figs);
            }
        }
        View::Windings { z, .. } => {
            let n = freq.len().min(z.len());
            figs.freq = freq[..n].to_vec();
            transformer(&mut figs, &freq[..n], &z[..n]);
        }
    }
    figs
}

#[inline]
fn z_of(y: C64) -> Option<C64> {
    let z = C64::new(1.0, 0.0) / y;
    (z.re.is_finite() && z.im.is_finite()).then_some(z)
}

fn ratio(a: f64, b: f64) -> Option<f64> {
    if b == 0.0 {
        None
    } else {
        fin(a / b)
    }
}

/// Inductor figures from Y_in = G + jB, Z_in = 1/Y_in, ω = 2πf (DESIGN §6):
/// l = Im Z_in/ω, r = Re Z_in, q = Im Z_in/Re Z_in (signed),
/// q_tank = (ω·dB/dω − B)/(2G) where B < 0 — the slope-of-susceptance Q of a
/// parallel resonator (Pozar, *Microwave Engineering*, §6.1; methods.md §4.1).
/// See [`omega_db_domega`] for the slope.
fn inductor(figs: &mut ViewFigures, f: &[f64], y: &[C64]) {
    let z: Vec<Option<C64>> = y.iter().map(|&v| z_of(v)).collect();
    let w: Vec<f64> = f.iter().map(|&x| TAU * x).collect();
    let l: Curve = z
        .iter()
        .zip(&w)
        .map(|(z, &w)| z.and_then(|z| ratio(z.im, w)))
        .collect();
    let r: Curve = z.iter().map(|z| z.and_then(|z| fin(z.re))).collect();
    let q: Curve = z
        .iter()
        .map(|z| z.and_then(|z| ratio(z.im, z.re)))
        .collect();
    let b: Curve = y.iter().map(|v| fin(v.im)).collect();
    let slope = omega_db_domega(&w, y, &z);
    let q_tank: Curve = (0..f.len())
        .map(|i| {
            let (g, bi) = (y[i].re, y[i].im);
            if bi < 0.0 {
                ratio(slope[i]? - bi, 2.0 * g)
            } else {
                None
            }
        })
        .collect();
    let srf = rising_zero(f, &b);
    let end = match srf {
        Some(s) => f.partition_point(|&x| x < s),
        None => f.len(),
    };
    let pk = peak(f, &q, end).filter(|&(_, v)| v > 0.0);
    let f_q_half = pk.and_then(|(fp, qp)| {
        let i = f.partition_point(|&x| x <= fp).saturating_sub(1);
        first_fall(f, &q, i, qp / 2.0)
    });
    figs.scalars.insert("srf".into(), srf);
    figs.scalars.insert("q_peak".into(), pk.map(|p| p.1));
    figs.scalars.insert("f_q_peak".into(), pk.map(|p| p.0));
    figs.scalars.insert("f_q_half".into(), f_q_half);
    figs.scalars
        .insert("l_low".into(), l.first().copied().flatten());
    figs.curves.insert("l".into(), l);
    figs.curves.insert("r".into(), r);
    figs.curves.insert("q".into(), q);
    figs.curves.insert("q_tank".into(), q_tank);
}

/// ω·dB/dω at every point, with the derivative taken on whichever of two smooth
/// representations is locally smoother:
/// - the susceptance form: ω·dB/dω = dP/dω − B with P = ω·B, which is a quadratic
///   in ω for any parallel R‖L‖C (exact there, and good near self-resonance);
/// - the impedance form: dY/dω = −Z′/Z², so ω·dB/dω = −ω·Im(Z′/Z²), where Z of a
///   coil well below resonance is nearly R + jωL (exact for a series R-L).
///
/// Both use the three-point non-uniform derivative ([`super::grid::derivative`]); at
/// each point the form with the smaller estimated truncation error (the disagreement
/// with the neighbouring stencil, [`super::grid::derivative_alt`], carried to ω·dB/dω)
/// is used. This matters where q is small and the numerator cancels, e.g. the first
/// points of a sweep that starts low with a coarse step.
fn omega_db_domega(w: &[f64], y: &[C64], z: &[Option<C64>]) -> Curve {
    // the curves differentiated, and their derivatives, in the NaN form of
    // [`Stencil::apply`]
    let p: Vec<f64> = y
        .iter()
        .zip(w)
        .map(|(v, &w)| finite_or_nan(w * v.im))
        .collect();
    let zr: Vec<f64> = z.iter().map(|z| z.map_or(f64::NAN, |z| z.re)).collect();
    let zi: Vec<f64> = z.iter().map(|z| z.map_or(f64::NAN, |z| z.im)).collect();
    // the stencils' weights depend on the grid only: once for the three curves
    let (st, st2) = (Stencil::new(w), Stencil::new_alt(w));
    let (dp, dp2) = (st.apply(&p), st2.apply(&p));
    let (dr, dr2) = (st.apply(&zr), st2.apply(&zr));
    let (di, di2) = (st.apply(&zi), st2.apply(&zi));
    // the choice of form per point, on NaN-coded values throughout (NaN: undefined,
    // as `None` was; an infinite value stays a value): every undefined input makes
    // its form or error NaN, and a comparison with NaN is false
    // every slice cut to the sweep's length: the indexing below then needs no checks
    let n = w.len();
    let (y, z) = (&y[..n], &z[..n]);
    let (dp, dp2, dr, dr2, di, di2) = (
        &dp[..n],
        &dp2[..n],
        &dr[..n],
        &dr2[..n],
        &di[..n],
        &di2[..n],
    );
    (0..n)
        .map(|i| {
            let y_form = dp[i] - finite_or_nan(y[i].im);
            let y_err = (dp[i] - dp2[i]).abs();
            let (z_form, z_err) = match z[i] {
                Some(zz) => (
                    finite_or_nan(-w[i] * (C64::new(dr[i], di[i]) / (zz * zz)).im),
                    finite_or_nan(
                        w[i] * magnitude(C64::new(dr[i] - dr2[i], di[i] - di2[i])) / zz.norm_sqr(),
                    ),
                ),
                None => (f64::NAN, f64::NAN),
            };
            // (the impedance form's error counts only where the form is defined)
            let v = if y_form.is_nan() || (!z_form.is_nan() && z_err < y_err) {
                z_form
            } else {
                y_form
            };
            (!v.is_nan()).then_some(v)
        })
        .collect()
}

/// Capacitor figures from Z_in (DESIGN §6; methods.md §5.1): c = −1/(ω·Im Z_in),
/// esr = Re Z_in, q = −Im Z_in/Re Z_in, srf where Im Z_in crosses from − to +
/// (series resonance), c_low = c at the lowest frequency.
fn capacitor(figs: &mut ViewFigures, f: &[f64], y: &[C64]) {
    let z: Vec<Option<C64>> = y.iter().map(|&v| z_of(v)).collect();
    let c: Curve = z
        .iter()
        .zip(f)
        .map(|(z, &f)| z.and_then(|z| ratio(-1.0, TAU * f * z.im)))
        .collect();
    let esr: Curve = z.iter().map(|z| z.and_then(|z| fin(z.re))).collect();
    let q: Curve = z
        .iter()
        .map(|z| z.and_then(|z| ratio(-z.im, z.re)))
        .collect();
    let x: Curve = z.iter().map(|z| z.and_then(|z| fin(z.im))).collect();
    figs.scalars.insert("srf".into(), rising_zero(f, &x));
    figs.scalars
        .insert("c_low".into(), c.first().copied().flatten());
    figs.curves.insert("c".into(), c);
    figs.curves.insert("esr".into(), esr);
    figs.curves.insert("q".into(), q);
}

/// Transformer figures from the 2×2 winding Z (DESIGN §6; methods.md §5.2):
/// l1 = Im Z11/ω, l2 = Im Z22/ω, m = Im Z12/ω, k = Im Z12/√(Im Z11·Im Z22),
/// q1 = Im Z11/Re Z11, q2 = Im Z22/Re Z22, and il_min = −10·log10 G_max with
/// G_max = K − √(K² − 1), K = (2 Re z11 Re z22 − Re(z12 z21))/|z12 z21| (the
/// Rollett factor in Z form; reciprocal case of M. S. Gupta, IEEE T-MTT 40(5),
/// 1992). Winding srf: the − → + crossing of Im(1/Z_ii), the other winding open;
/// `srf` is the lower of the two.
fn transformer(figs: &mut ViewFigures, f: &[f64], z: &[[C64; 4]]) {
    let w: Vec<f64> = f.iter().map(|&x| TAU * x).collect();
    // generic, not `&dyn Fn`: one direct, inlined call per point and curve
    fn per(z: &[[C64; 4]], w: &[f64], g: impl Fn(&[C64; 4], f64) -> Option<f64>) -> Curve {
        z.iter().zip(w).map(|(z, &w)| g(z, w)).collect()
    }
    let l1 = per(z, &w, |z, w| ratio(z[0].im, w));
    let l2 = per(z, &w, |z, w| ratio(z[3].im, w));
    let m = per(z, &w, |z, w| ratio(z[1].im, w));
    let k = per(z, &w, |z, _| {
        let p = z[0].im * z[3].im;
        if p > 0.0 {
            ratio(z[1].im, p.sqrt())
        } else {
            None
        }
    });
    let q1 = per(z, &w, |z, _| ratio(z[0].im, z[0].re));
    let q2 = per(z, &w, |z, _| ratio(z[3].im, z[3].re));
    let il = per(z, &w, |z, _| il_min_db(z));
    let b1: Curve = z
        .iter()
        .map(|z| z_of(z[0]).and_then(|y| fin(y.im)))
        .collect();
    let b2: Curve = z
        .iter()
        .map(|z| z_of(z[3]).and_then(|y| fin(y.im)))
        .collect();
    let (s1, s2) = (rising_zero(f, &b1), rising_zero(f, &b2));
    let srf = match (s1, s2) {
        (Some(a), Some(b)) => Some(a.min(b)),
        (a, b) => a.or(b),
    };
    figs.scalars.insert("srf".into(), srf);
    figs.scalars.insert("srf1".into(), s1);
    figs.scalars.insert("srf2".into(), s2);
    for (name, c) in [
        ("l1", l1),
        ("l2", l2),
        ("m", m),
        ("k", k),
        ("q1", q1),
        ("q2", q2),
        ("il_min", il),
    ] {
        figs.curves.insert(name.into(), c);
    }
}

/// Rollett's K of a 2×2 immittance matrix p (Z or Y; K is representation-invariant):
/// K = (2 Re p11 Re p22 − Re(p12 p21)) / |p12 p21| (methods.md §5.2).
pub fn rollett_k(p: &[C64; 4]) -> Option<f64> {
    let pp = p[1] * p[2];
    ratio(2.0 * p[0].re * p[3].re - pp.re, pp.norm())
}

/// −10·log10 G_max with G_max = K − √(K² − 1) (reciprocal passive 2-port; methods.md
/// §5.2); None when K < 1 (not passive) or undefined (uncoupled windings).
pub fn il_min_db(z: &[C64; 4]) -> Option<f64> {
    let k = rollett_k(z)?;
    if k < 1.0 {
        return None;
    }
    // K − √(K²−1) = 1/(K + √(K²−1)) avoids cancellation at large K
    let g = 1.0 / (k + (k * k - 1.0).sqrt());
    fin(-10.0 * g.log10())
}

/// Largest singular value of an N×N row-major block. Closed form for N ≤ 2: √λ_max of
/// G = S Sᴴ, λ_max = (g₁₁ + g₂₂)/2 + √(((g₁₁ − g₂₂)/2)² + |g₁₂|²). (The textbook
/// σ² = (‖S‖²_F + √(‖S‖⁴_F − 4|det S|²))/2 loses the gap between two nearly equal
/// singular values to cancellation, about 1e-8 relative for nearly lossless data,
/// which is a few per cent of a passivity margin of 1e-7.)
pub fn sigma_max(s: &[C64], n: usize) -> Option<f64> {
    // Scaled by the largest entry so that squares cannot overflow (huge but finite
    // data gave inf, and NaN singular values that nalgebra's sort panics on).
    let s = s.get(..n * n)?;
    let scale = s.iter().map(|c| c.norm()).fold(0.0, f64::max);
    if !scale.is_finite() {
        return None;
    }
    if scale == 0.0 {
        return Some(0.0);
    }
    let v = match n {
        0 => 0.0,
        1 => s[0].norm() / scale,
        2 => {
            let inv = 1.0 / scale;
            let [a, b, c, d] = [s[0] * inv, s[1] * inv, s[2] * inv, s[3] * inv];
            // rows (a, b) and (c, d): g₁₁ = |a|² + |b|², g₂₂ = |c|² + |d|², g₁₂ = a c̄ + b d̄
            let g11 = a.norm_sqr() + b.norm_sqr();
            let g22 = c.norm_sqr() + d.norm_sqr();
            let g12 = a * c.conj() + b * d.conj();
            let half = 0.5 * (g11 - g22);
            let lambda = 0.5 * (g11 + g22) + (half * half + g12.norm_sqr()).sqrt();
            lambda.sqrt()
        }
        _ => {
            let scaled: Vec<C64> = s.iter().map(|c| c / scale).collect();
            let sv = DMatrix::from_row_slice(n, n, &scaled).singular_values_unordered();
            if sv.iter().any(|x| !x.is_finite()) {
                return None;
            }
            sv.iter().copied().fold(0.0, f64::max)
        }
    };
    fin(v * scale)
}

/// σ_max of an N×N row-major block for N = 3, 4 as √λ_max of the Gram matrix
/// G = Sᴴ S, by cyclic Jacobi rotations (Golub & Van Loan, *Matrix Computations*,
/// §8.5): quadratic convergence even when the singular values cluster, as they do
/// for nearly lossless data (all near 1, where power iteration would crawl). Forming G
/// loses nothing for the largest singular value; the result agrees with the SVD's to
/// about 1e-15 relative. None for other N and for non-finite, huge (> 1e300), tiny
/// (< 1e-300) or unconverged blocks: the caller then uses [`sigma_max`].
fn sigma_max_gram(s: &[C64], n: usize) -> Option<f64> {
    match n {
        3 => gram_jacobi::<3>(s),
        4 => gram_jacobi::<4>(s),
        _ => None,
    }
}

/// [`sigma_max_gram`] for a fixed N (arrays on the stack, loops the compiler unrolls).
// the rotations read and write g[r][p], g[p][r] together: indices say it plainest
#[allow(clippy::needless_range_loop)]
fn gram_jacobi<const N: usize>(s: &[C64]) -> Option<f64> {
    const SWEEPS: usize = 30;
    let zero = C64::new(0.0, 0.0);
    let s = s.get(..N * N)?;
    if !s.iter().all(|c| c.re.is_finite() && c.im.is_finite()) {
        return None;
    }
    // scaled by the largest component so that G can neither overflow nor underflow
    let scale = s
        .iter()
        .map(|c| c.re.abs().max(c.im.abs()))
        .fold(0.0, f64::max);
    if scale == 0.0 {
        return Some(0.0);
    }
    // (1/scale would overflow below 1e-300)
    if !(1e-300..=1e300).contains(&scale) {
        return None;
    }
    let inv = 1.0 / scale;
    let mut a = [[zero; N]; N];
    for (k, row) in a.iter_mut().enumerate() {
        for (j, v) in row.iter_mut().enumerate() {
            *v = s[k * N + j] * inv;
        }
    }
    let mut g = [[zero; N]; N];
    for i in 0..N {
        for j in i..N {
            let acc: C64 = (0..N).map(|k| a[k][i].conj() * a[k][j]).sum();
            g[i][j] = acc;
            g[j][i] = acc.conj();
        }
    }
    for _ in 0..SWEEPS {
        let trace: f64 = (0..N).map(|i| g[i][i].re).sum();
        let mut off = 0.0;
        for i in 0..N {
            for j in i + 1..N {
                off += g[i][j].norm_sqr();
            }
        }
        // |λ_max − max g_ii| ≤ ‖off-diagonal part‖₂ (Weyl) ≤ √(2·off); 1e-13 of the
        // trace is ≤ 4e-13 of λ_max, well inside ESTIMATE_REL
        if 2.0 * off <= (1e-13 * trace).powi(2) {
            let l = (0..N).map(|i| g[i][i].re).fold(0.0, f64::max);
            return fin(l.sqrt() * scale);
        }
        for p in 0..N - 1 {
            for q in p + 1..N {
                let b = magnitude(g[p][q]);
                if b == 0.0 {
                    continue;
                }
                // a phase on column q makes g_pq real (= b), then a real rotation
                // zeroes it (the symmetric Jacobi step, Golub & Van Loan Alg. 8.5.1)
                let w = g[p][q].conj() * (1.0 / b);
                let (gp, gq) = (g[p][p].re, g[q][q].re);
                let theta = (gq - gp) / (2.0 * b);
                let t = if theta.abs() > 1e150 {
                    0.5 / theta
                } else {
                    theta.signum() / (theta.abs() + (theta * theta + 1.0).sqrt())
                };
                let c = 1.0 / (t * t + 1.0).sqrt();
                let sn = t * c;
                for r in 0..N {
                    if r == p || r == q {
                        continue;
                    }
                    let (x, y) = (g[r][p], g[r][q] * w);
                    let (xp, yq) = (x * c - y * sn, x * sn + y * c);
                    g[r][p] = xp;
                    g[r][q] = yq;
                    g[p][r] = xp.conj();
                    g[q][r] = yq.conj();
                }
                g[p][p] = C64::new(gp - t * b, 0.0);
                g[q][q] = C64::new(gq + t * b, 0.0);
                g[p][q] = zero;
                g[q][p] = zero;
            }
        }
    }
    None
}

/// σ_max(S) of a block: [`sigma_max_gram`] where it applies, the unscaled closed form
/// for a 2-port of ordinary size ([`sigma_max_2_unscaled`]), else [`sigma_max`].
/// Agrees with [`sigma_max`] to within [`ESTIMATE_REL`], and is 0 exactly when it is.
#[inline]
fn sigma_max_estimate(s: &[C64], n: usize) -> Option<f64> {
    match n {
        2 => sigma_max_2_unscaled(s).or_else(|| sigma_max(s, n)),
        0..=2 => sigma_max(s, n),
        _ => sigma_max_gram(s, n).or_else(|| sigma_max(s, n)),
    }
}

/// Squared Frobenius norms ‖S‖²_F of the 2-port blocks whose squares are summed as they
/// are: no component then exceeds 1e75, so neither a square nor a square of the sums
/// (below 1e300) can overflow, and the largest component exceeds 1e-76, so the squares
/// that matter keep their precision. A NaN or infinite component makes ‖S‖²_F NaN or
/// infinite, outside the range.
const UNSCALED_F2: std::ops::RangeInclusive<f64> = 1e-150..=1e150;

/// [`sigma_max`]'s 2-port closed form without its scaling by the largest entry (four
/// `hypot` calls and four divisions per point): the same sums of squares, unscaled,
/// for blocks of ordinary size ([`UNSCALED_F2`], tested on the sums themselves); None
/// otherwise. Within a few ulps of [`sigma_max`] (the terms are all sums of
/// non-negative numbers but for the half-difference, whose error is damped by the
/// square root), so an estimate.
#[inline]
fn sigma_max_2_unscaled(s: &[C64]) -> Option<f64> {
    let s = s.get(..4)?;
    let [a, b, c, d] = [s[0], s[1], s[2], s[3]];
    let g11 = a.norm_sqr() + b.norm_sqr();
    let g22 = c.norm_sqr() + d.norm_sqr();
    if !UNSCALED_F2.contains(&(g11 + g22)) {
        return None;
    }
    let g12 = a * c.conj() + b * d.conj();
    let half = 0.5 * (g11 - g22);
    let lambda = 0.5 * (g11 + g22) + (half * half + g12.norm_sqr()).sqrt();
    fin(lambda.sqrt())
}

/// The largest squared column norm of an N×N block, a lower bound of σ_max² (a
/// column norm is ‖S e_j‖ ≤ σ_max); None unless the block is finite with
/// ‖S‖²_F ≤ [`GRAM_MAX`], the blocks [`gram_below`] may decide.
fn column_bound<const N: usize>(s: &[C64]) -> Option<f64> {
    let s = s.get(..N * N)?;
    let mut cols = [0.0f64; N];
    for (k, c) in s.iter().enumerate() {
        cols[k % N] += c.re * c.re + c.im * c.im;
    }
    let total: f64 = cols.iter().sum();
    if total.is_nan() || total > GRAM_MAX {
        return None;
    }
    Some(cols.iter().copied().fold(0.0, f64::max))
}

/// Largest ‖S‖²_F of a block [`gram_below`] decides: no entry of SᴴS can overflow.
const GRAM_MAX: f64 = 1e200;

/// Smallest bound t [`gram_below`] is asked about: squares that underflow (below
/// 1e-300) are then far below t's rounding.
const GRAM_T_MIN: f64 = 1e-200;

/// Whether λ_max(SᴴS) < t for an N×N block with ‖S‖²_F ≤ [`GRAM_MAX`] and
/// t ≥ [`GRAM_T_MIN`], decided by an LDLᴴ factorisation of t·I − SᴴS (Golub & Van
/// Loan, *Matrix Computations*, §4.1): true only when every pivot comes out positive.
/// Far cheaper than Jacobi. A computed factorisation with positive pivots is exact for
/// t·I − SᴴS + E with ‖E‖ ≤ about 4N·u·t (u the unit roundoff; Higham, *Accuracy and
/// Stability of Numerical Algorithms*, §10.1), and forming SᴴS adds about N·u·‖S‖²_F,
/// so a true answer means λ_max < t·(1 + 1e-13) — the caller leaves a far wider margin.
// the factorisation reads and writes by index: indices say it plainest
#[allow(clippy::needless_range_loop)]
fn gram_below<const N: usize>(s: &[C64], t: f64) -> bool {
    let Some(s) = s.get(..N * N) else {
        return false;
    };
    if t.is_nan() || t < GRAM_T_MIN {
        return false;
    }
    // the columns of S, real and imaginary parts apart (plain real arithmetic)
    let (mut re, mut im) = ([[0.0f64; N]; N], [[0.0f64; N]; N]);
    for (k, c) in s.iter().enumerate() {
        re[k % N][k / N] = c.re;
        im[k % N][k / N] = c.im;
    }
    // M = t·I − G, G = SᴴS: g_ij = Σ_k conj(s_ki)·s_kj; lower triangle only
    let (mut mr, mut mi) = ([[0.0f64; N]; N], [[0.0f64; N]; N]);
    for i in 0..N {
        for j in 0..i {
            let (mut gr, mut gi) = (0.0, 0.0);
            for k in 0..N {
                gr += re[i][k] * re[j][k] + im[i][k] * im[j][k];
                gi += re[i][k] * im[j][k] - im[i][k] * re[j][k];
            }
            mr[i][j] = -gr;
            mi[i][j] = -gi;
        }
        let mut gii = 0.0;
        for k in 0..N {
            gii += re[i][k] * re[i][k] + im[i][k] * im[i][k];
        }
        mr[i][i] = t - gii;
    }
    // M = L D Lᴴ, unit lower L: d_j = m_jj − Σ_k |l_jk|² d_k and
    // l_ij = (m_ij − Σ_k l_ik d_k conj(l_jk)) / d_j; pivots d_j must be > 0
    let mut d = [0.0f64; N];
    let (mut lr, mut li) = ([[0.0f64; N]; N], [[0.0f64; N]; N]);
    for j in 0..N {
        let mut dj = mr[j][j];
        for k in 0..j {
            dj -= (lr[j][k] * lr[j][k] + li[j][k] * li[j][k]) * d[k];
        }
        if dj.is_nan() || dj <= 0.0 {
            return false;
        }
        d[j] = dj;
        let inv = 1.0 / dj;
        for i in j + 1..N {
            let (mut vr, mut vi) = (mr[i][j], mi[i][j]);
            for k in 0..j {
                // l_ik·conj(l_jk)·d_k
                let (a, b) = (lr[i][k] * d[k], li[i][k] * d[k]);
                vr -= a * lr[j][k] + b * li[j][k];
                vi -= b * lr[j][k] - a * li[j][k];
            }
            lr[i][j] = vr * inv;
            li[i][j] = vi * inv;
        }
    }
    true
}

/// The worst |S_ij − S_ji| of a block, by [`crate::network::convert::magnitude`]
/// (agrees with the one by `norm`, to within [`ESTIMATE_REL`], 0 exactly when it is).
// inline: [`skipping_estimates`] calls it with N known, and the loops then unroll
#[inline(always)]
fn reciprocity_estimate(s: &[C64], n: usize) -> f64 {
    let mut r = 0.0f64;
    for i in 0..n {
        for j in i + 1..n {
            r = r.max(magnitude(s[i * n + j] - s[j * n + i]));
        }
    }
    r
}

/// The worst |S_ij − S_ji| of a block, with `norm` (hypot).
fn reciprocity_exact(s: &[C64], n: usize) -> f64 {
    let mut r = 0.0f64;
    for i in 0..n {
        for j in i + 1..n {
            r = r.max((s[i * n + j] - s[j * n + i]).norm());
        }
    }
    r
}

/// The estimates above agree with the exact values to a few ulps; this is the
/// relative error allowed for them, with a wide margin.
const ESTIMATE_REL: f64 = 1e-10;

/// max over points of `exact(k)`, from estimates `est[k]` that agree with `exact(k)`
/// to within [`ESTIMATE_REL`] and are 0 exactly when it is. Only points whose estimate
/// lies within the error band of the largest can hold the maximum (if exact(j) ≥
/// exact(k) then est(j) ≥ est(k)·(1 − 2·ESTIMATE_REL)), so only those are evaluated
/// exactly: the result is the exact maximum, bit for bit, at the cost of the estimates.
/// None when an exact value cannot be had.
fn refined_max(est: &[f64], exact: impl Fn(usize) -> Option<f64>) -> Option<f64> {
    let top = est.iter().copied().fold(0.0, f64::max);
    if top == 0.0 {
        return Some(0.0);
    }
    let floor = top * (1.0 - 4.0 * ESTIMATE_REL);
    let mut best: Option<f64> = None;
    for (k, _) in est.iter().enumerate().filter(|(_, &e)| e >= floor) {
        let v = exact(k)?;
        best = Some(best.map_or(v, |b| b.max(v)));
    }
    best
}

/// A block's σ_max estimate and reciprocity estimate.
#[inline(always)]
fn estimates(s: &[C64], n: usize) -> (Option<f64>, f64) {
    (sigma_max_estimate(s, n), reciprocity_estimate(s, n))
}

/// The per-point estimates of [`data_checks`] for N known, the loops unrolled. The
/// closure is written here, generic over N, so that [`map_points`] gets one copy per
/// N: one written in a function of a run-time `n` is one type for every N, and left
/// `n` a variable.
fn plain_estimates<const N: usize>(net: &Network) -> Vec<(Option<f64>, f64)> {
    map_points(net.points(), |k| estimates(net.s_block(k), N))
}

/// The per-point estimates for any N.
fn plain_estimates_n(net: &Network, n: usize) -> Vec<(Option<f64>, f64)> {
    map_points(net.points(), |k| estimates(net.s_block(k), n))
}

/// Relative margin below the best known σ_max² under which [`skipping_estimates`]
/// skips a point: far above the errors of [`gram_below`] (~1e-13) and of the
/// estimates (2·[`ESTIMATE_REL`] in σ²), far below any gap that matters.
const SKIP_MARGIN: f64 = 1e-9;

/// The per-point estimates of [`data_checks`] for N = 3, 4, where Jacobi costs some
/// thousand instructions a point: a point that cannot hold the maximum gets 0 instead
/// of its σ_max estimate. The best lower bound of the maximum comes from the point with
/// the largest column norm (its estimate, less the estimate's error and
/// [`SKIP_MARGIN`]); a point whose σ_max² is certainly below it ([`gram_below`]) is
/// skipped. A skipped point's exact σ_max is below that point's, so the maximum and
/// the points [`refined_max`] evaluates exactly are the same, bit for bit. Points
/// [`column_bound`] declines (not finite, or huge) are never skipped.
fn skipping_estimates<const N: usize>(net: &Network) -> Vec<(Option<f64>, f64)> {
    let bounds: Vec<Option<f64>> = map_points(net.points(), |k| column_bound::<N>(net.s_block(k)));
    // the first point of the largest bound
    let mut top: Option<(usize, f64)> = None;
    for (k, b) in bounds.iter().enumerate() {
        if let Some(b) = *b {
            if top.is_none_or(|(_, t)| b > t) {
                top = Some((k, b));
            }
        }
    }
    let below = top
        .and_then(|(k, _)| sigma_max_estimate(net.s_block(k), N))
        .map(|e| {
            let low = e * (1.0 - 2.0 * ESTIMATE_REL);
            low * low * (1.0 - SKIP_MARGIN)
        })
        .unwrap_or(0.0);
    map_points(net.points(), |k| {
        let s = net.s_block(k);
        let skip = bounds[k].is_some_and(|b| b < below) && gram_below::<N>(s, below);
        let est = if skip {
            Some(0.0)
        } else {
            sigma_max_estimate(s, N)
        };
        (est, reciprocity_estimate(s, N))
    })
}

/// The data checks of every file (DESIGN §6): passivity_margin = 1 − max_f σ_max(S)
/// (power-wave S with real references: passive iff σ_max ≤ 1, methods.md §5.3),
/// reciprocity_error = max_f max_ij |S_ij − S_ji| (§5.4), points, f_min, f_max, ports.
///
/// Both maxima are found from cheap per-point estimates and then evaluated exactly
/// ([`sigma_max`] by SVD, `norm`) at the few points that can hold them
/// ([`refined_max`]): the same numbers as evaluating every point exactly. For 3- and
/// 4-ports most points need no estimate at all ([`skipping_estimates`]).
pub fn data_checks(net: &Network) -> DataChecks {
    let n = net.ports;
    // per point: the σ_max estimate (None when it cannot be had; 0 for a skipped
    // point) and the worst |S_ij − S_ji| estimate; the points are independent, so a
    // long sweep runs in parallel
    let per_point: Vec<(Option<f64>, f64)> = match n {
        2 => plain_estimates::<2>(net),
        3 => skipping_estimates::<3>(net),
        4 => skipping_estimates::<4>(net),
        _ => plain_estimates_n(net, n),
    };
    let ok = n > 0 && net.points() > 0 && per_point.iter().all(|p| p.0.is_some());
    let (smax, recip) = if ok {
        let sig: Vec<f64> = per_point.iter().map(|p| p.0.unwrap_or(0.0)).collect();
        let rec: Vec<f64> = per_point.iter().map(|p| p.1).collect();
        (
            refined_max(&sig, |k| sigma_max(net.s_block(k), n)),
            refined_max(&rec, |k| Some(reciprocity_exact(net.s_block(k), n))),
        )
    } else {
        (None, None)
    };
    DataChecks {
        // an SVD that failed where the estimate did not counts as not had
        passivity_margin: smax.and_then(|m| fin(1.0 - m)),
        reciprocity_error: if smax.is_some() {
            recip.and_then(fin)
        } else {
            None
        },
        points: net.points(),
        f_min: net.freq.first().copied().unwrap_or(0.0),
        f_max: net.freq.last().copied().unwrap_or(0.0),
        ports: n,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A small linear congruential generator: reproducible matrices without a dependency.
    struct Lcg(u64);
    impl Lcg {
        fn next(&mut self) -> f64 {
            self.0 = self
                .0
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            (self.0 >> 11) as f64 / (1u64 << 53) as f64 * 2.0 - 1.0
        }
        fn c(&mut self) -> C64 {
            C64::new(self.next(), self.next())
        }
    }

    /// A unitary n×n block (row-major): Gram–Schmidt on the columns of a random one.
    fn random_unitary(rng: &mut Lcg, n: usize) -> Vec<C64> {
        let mut q: Vec<C64> = (0..n * n).map(|_| rng.c()).collect();
        for j in 0..n {
            for i in 0..j {
                let d: C64 = (0..n).map(|r| q[r * n + i].conj() * q[r * n + j]).sum();
                for r in 0..n {
                    let v = q[r * n + i];
                    q[r * n + j] -= d * v;
                }
            }
            let nr = (0..n).map(|r| q[r * n + j].norm_sqr()).sum::<f64>().sqrt();
            for r in 0..n {
                q[r * n + j] /= nr;
            }
        }
        q
    }

    /// Blocks of the shapes that stress a σ_max method: random, rank one (nearly
    /// singular), nearly unitary (all singular values clustered near 1, as for
    /// lossless data), diagonal with repeated values, entries spread over 200 decades,
    /// and all of these scaled to huge, tiny and subnormal sizes.
    fn blocks(seed: u64, n: usize) -> Vec<Vec<C64>> {
        let mut rng = Lcg(seed);
        let mut out = Vec::new();
        for _ in 0..20 {
            out.push((0..n * n).map(|_| rng.c()).collect::<Vec<_>>());
            // u vᴴ plus a 1e-14 perturbation
            let (u, v): (Vec<C64>, Vec<C64>) = ((0..n).map(|_| rng.c()).collect(), {
                (0..n).map(|_| rng.c()).collect()
            });
            out.push(
                (0..n * n)
                    .map(|k| u[k / n] * v[k % n].conj() + rng.c() * 1e-14)
                    .collect(),
            );
            // Gram–Schmidt on random columns: a unitary Q, times 0.9996, plus ripple
            let q = random_unitary(&mut rng, n);
            out.push(q.iter().map(|c| c * 0.9996 + rng.c() * 1e-9).collect());
            // spread magnitudes
            out.push(
                (0..n * n)
                    .map(|_| rng.c() * 10f64.powf(100.0 * rng.next()))
                    .collect(),
            );
        }
        let mut diag = vec![C64::new(0.0, 0.0); n * n];
        for i in 0..n {
            diag[i * n + i] = C64::new(0.5, if i % 2 == 0 { 0.0 } else { 0.5 });
        }
        out.push(diag);
        let base = out.clone();
        for scale in [1e200, 1e-200, 1e-300, 1e-310] {
            out.extend(base.iter().map(|b| b.iter().map(|c| c * scale).collect()));
        }
        out
    }

    #[test]
    fn gram_jacobi_matches_svd() {
        // the reference: nalgebra's SVD (Golub–Kahan), as `sigma_max` uses it
        for n in 3..=4 {
            for (i, s) in blocks(0x5eed + n as u64, n).iter().enumerate() {
                let want = sigma_max(s, n).expect("SVD of a finite block");
                let gram = sigma_max_gram(s, n);
                let big = s
                    .iter()
                    .map(|c| c.re.abs().max(c.im.abs()))
                    .fold(0.0, f64::max);
                // only the subnormal blocks are left to the SVD
                assert_eq!(gram.is_some(), big >= 1e-300, "n={n} block {i}");
                let got = sigma_max_estimate(s, n).expect("an estimate");
                let rel = (got - want).abs() / want.max(f64::MIN_POSITIVE);
                assert!(rel <= 1e-12, "n={n} block {i}: {got:e} vs SVD {want:e}");
            }
        }
    }

    /// U·diag(σ₁, σ₂)·V for unitary U, V (rotations with phases): σ_max = σ₁ exactly, by
    /// the definition of the SVD (Golub & Van Loan, *Matrix Computations*, §2.4).
    fn two_port_with(s1: f64, s2: f64, a: f64, b: f64) -> [C64; 4] {
        let rot = |t: f64, ph: f64| {
            let e = C64::from_polar(1.0, ph);
            [
                C64::new(t.cos(), 0.0),
                -e.conj() * t.sin(),
                e * t.sin(),
                C64::new(t.cos(), 0.0),
            ]
        };
        let (u, v) = (rot(a, 0.7), rot(b, -1.9));
        let mul = |x: [C64; 4], y: [C64; 4]| {
            [
                x[0] * y[0] + x[1] * y[2],
                x[0] * y[1] + x[1] * y[3],
                x[2] * y[0] + x[3] * y[2],
                x[2] * y[1] + x[3] * y[3],
            ]
        };
        let d = [
            C64::new(s1, 0.0),
            C64::new(0.0, 0.0),
            C64::new(0.0, 0.0),
            C64::new(s2, 0.0),
        ];
        mul(mul(u, d), v)
    }

    #[test]
    fn two_port_sigma_max_keeps_a_tiny_gap() {
        // nearly lossless: both singular values within 1e-7 of 1, where the
        // ‖S‖_F/det form lost about 1e-8 of σ_max (a few per cent of the margin 1 − σ)
        for (s1, s2) in [
            (1.0 - 1e-7, 1.0 - 1.5e-7),
            (1.0 - 2e-7, 1.0 - 2e-7),
            (0.9, 0.3),
        ] {
            for (a, b) in [(0.3, 1.1), (0.0, 0.0), (1.2, -0.4)] {
                let s = two_port_with(s1, s2, a, b);
                let got = sigma_max(&s, 2).expect("finite");
                assert!((got - s1).abs() <= 4e-16, "{s1} {s2} {a} {b}: {got:e}");
                let margin = 1.0 - got;
                assert!(((margin - (1.0 - s1)) / (1.0 - s1)).abs() < 1e-8);
            }
        }
        // one port, and a scaled 2-port (no overflow in the squares)
        assert_eq!(sigma_max(&[C64::new(0.0, -0.5)], 1), Some(0.5));
        let big: Vec<C64> = two_port_with(0.9, 0.3, 0.3, 1.1)
            .iter()
            .map(|c| c * 1e300)
            .collect();
        let got = sigma_max(&big, 2).expect("finite");
        assert!((got / 0.9e300 - 1.0).abs() < 1e-14);
        assert_eq!(sigma_max(&[C64::new(0.1, 0.0); 3], 2), None);
    }

    #[test]
    fn gram_jacobi_declines_what_it_cannot_do() {
        // N ≤ 2 is left to the closed forms, N > 4 to the SVD
        assert_eq!(sigma_max_gram(&[C64::new(0.1, 0.0); 4], 2), None);
        assert_eq!(sigma_max_gram(&[C64::new(0.1, 0.0); 25], 5), None);
        let mut s = vec![C64::new(0.1, 0.0); 9];
        // (a NaN block is not given to the SVD here: nalgebra's iteration does not end)
        s[4] = C64::new(f64::NAN, 0.0);
        assert_eq!(sigma_max_gram(&s, 3), None);
        s[4] = C64::new(1e305, 1e305);
        assert_eq!(sigma_max_gram(&s, 3), None);
        assert_eq!(sigma_max_estimate(&s, 3), sigma_max(&s, 3));
        assert_eq!(sigma_max_gram(&[C64::new(0.0, 0.0); 16], 4), Some(0.0));
    }

    #[test]
    fn gram_below_never_claims_a_bound_it_cannot_hold() {
        // the reference: nalgebra's SVD. Just below σ_max² the answer must be false (a
        // true one would let a point that can hold the maximum be skipped); just above
        // it, true (else nothing is saved)
        for n in 3..=4 {
            let mut tested = 0;
            for (i, s) in blocks(0xb0 + n as u64, n).iter().enumerate() {
                let bound = match n {
                    3 => column_bound::<3>(s),
                    _ => column_bound::<4>(s),
                };
                let Some(bound) = bound else {
                    continue;
                };
                let sv = sigma_max(s, n).expect("SVD of a finite block");
                let l = sv * sv;
                let (lo, hi) = (l * (1.0 - 1e-9), l * (1.0 + 1e-9));
                let (below_lo, below_hi) = match n {
                    3 => (gram_below::<3>(s, lo), gram_below::<3>(s, hi)),
                    _ => (gram_below::<4>(s, lo), gram_below::<4>(s, hi)),
                };
                assert!(
                    bound <= l * (1.0 + 1e-15),
                    "n={n} block {i}: bound {bound:e}"
                );
                if lo < GRAM_T_MIN {
                    continue;
                }
                assert!(
                    !below_lo,
                    "n={n} block {i}: λ_max {l:e} claimed below {lo:e}"
                );
                {
                    assert!(
                        below_hi,
                        "n={n} block {i}: λ_max {l:e} not found below {hi:e}"
                    );
                }
                tested += 1;
            }
            assert!(tested >= 80, "n={n}: {tested} blocks");
        }
    }

    /// A smooth sweep of nearly lossless N-ports (a unitary times σ(k)) whose σ_max
    /// peaks in a plateau flat to 1e-9 over many points: the skipping must keep every
    /// point of the plateau and still find the one exact maximum.
    fn plateau_sweep(n: usize, seed: u64) -> Network {
        let mut rng = Lcg(seed);
        let points = 400;
        let mut s = Vec::with_capacity(points * n * n);
        for k in 0..points {
            // a unitary from Gram–Schmidt of a random block
            let mut q = random_unitary(&mut rng, n);
            let x = (k as f64 - 200.0) / 200.0;
            // flat to 1e-9 within |x| < 0.1 (about 40 points), 0.9986 at the ends
            let sigma = 0.9996 - 1e-3 * x.powi(6);
            // one column a little smaller: the singular values split
            for r in 0..n {
                q[r * n] *= 0.98;
            }
            s.extend(q.iter().map(|c| c * sigma));
        }
        Network {
            freq: (1..=points).map(|k| k as f64 * 1e8).collect(),
            ports: n,
            z0: vec![50.0; n],
            s,
        }
    }

    #[test]
    fn skipping_keeps_the_exact_maximum_and_skips() {
        for n in 3..=4 {
            for seed in 0..4 {
                let net = plateau_sweep(n, 0x91a + seed);
                let d = data_checks(&net);
                let (m, r) = checks_by_every_point(&net);
                let bits = |v: Option<f64>| v.map(f64::to_bits);
                assert_eq!(bits(d.passivity_margin), bits(m), "n={n} seed {seed}");
                assert_eq!(bits(d.reciprocity_error), bits(r), "n={n} seed {seed}");
                // the fast path ran: most points were skipped, the plateau was not
                let est = match n {
                    3 => skipping_estimates::<3>(&net),
                    _ => skipping_estimates::<4>(&net),
                };
                let skipped = est.iter().filter(|e| e.0 == Some(0.0)).count();
                assert!(
                    skipped > 300 && skipped < 400,
                    "n={n} seed {seed}: {skipped}"
                );
            }
        }
    }

    #[test]
    fn two_port_estimate_is_close_and_declines_extremes() {
        for (i, s) in blocks(0x22, 2).iter().enumerate() {
            let Some(want) = sigma_max(s, 2) else {
                // σ_max itself overflows: so does the estimate
                assert_eq!(sigma_max_estimate(s, 2), None, "block {i}");
                continue;
            };
            let got = sigma_max_estimate(s, 2).expect("an estimate");
            let rel = (got - want).abs() / want.max(f64::MIN_POSITIVE);
            assert!(rel <= 1e-13, "block {i}: {got:e} vs {want:e}");
            assert_eq!(got == 0.0, want == 0.0, "block {i}");
        }
        let huge = [C64::new(1e150, 0.0); 4];
        assert_eq!(sigma_max_2_unscaled(&huge), None);
        assert_eq!(sigma_max_estimate(&huge, 2), sigma_max(&huge, 2));
        assert_eq!(sigma_max_2_unscaled(&[C64::new(f64::NAN, 0.0); 4]), None);
    }

    /// The data checks the straightforward way: every point exactly.
    fn checks_by_every_point(net: &Network) -> (Option<f64>, Option<f64>) {
        let n = net.ports;
        let mut smax: Option<f64> = None;
        let mut recip = 0.0f64;
        for k in 0..net.points() {
            let s = net.s_block(k);
            match sigma_max(s, n) {
                Some(v) => smax = Some(smax.map_or(v, |m| m.max(v))),
                None => return (None, None),
            }
            recip = recip.max(reciprocity_exact(s, n));
        }
        (smax.and_then(|m| fin(1.0 - m)), fin(recip))
    }

    #[test]
    fn long_sweeps_in_parallel_check_the_same() {
        // 3,000 points go through rayon (shorter sweeps point by point)
        for n in [1, 2, 3, 4, 5] {
            let mut rng = Lcg(0x10f + n as u64);
            let net = Network {
                freq: (1..=3000).map(|k| k as f64 * 1e7).collect(),
                ports: n,
                z0: vec![50.0; n],
                s: (0..3000 * n * n).map(|_| rng.c() * 0.4).collect(),
            };
            let d = data_checks(&net);
            let (m, r) = checks_by_every_point(&net);
            let bits = |v: Option<f64>| v.map(f64::to_bits);
            assert_eq!(bits(d.passivity_margin), bits(m), "n={n}");
            assert_eq!(bits(d.reciprocity_error), bits(r), "n={n}");
            assert!(m.is_some());
        }
    }

    /// [`omega_db_domega`] written out on `Option` curves, as it was before the NaN
    /// form: the reference for it.
    fn omega_db_domega_by_options(w: &[f64], y: &[C64], z: &[Option<C64>]) -> Curve {
        use super::super::grid::{derivative, derivative_alt};
        let b: Curve = y.iter().map(|v| fin(v.im)).collect();
        let p: Curve = y.iter().zip(w).map(|(v, &w)| fin(w * v.im)).collect();
        let zr: Curve = z.iter().map(|z| z.map(|z| z.re)).collect();
        let zi: Curve = z.iter().map(|z| z.map(|z| z.im)).collect();
        let (dp, dp2) = (derivative(w, &p), derivative_alt(w, &p));
        let (dr, dr2) = (derivative(w, &zr), derivative_alt(w, &zr));
        let (di, di2) = (derivative(w, &zi), derivative_alt(w, &zi));
        (0..w.len())
            .map(|i| {
                let y_form = dp[i].zip(b[i]).map(|(d, b)| d - b);
                let y_err = dp[i].zip(dp2[i]).map(|(a, b)| (a - b).abs());
                let z_form = match (z[i], dr[i], di[i]) {
                    (Some(zz), Some(r), Some(x)) => {
                        fin(-w[i] * (C64::new(r, x) / (zz * zz)).im).map(|v| (v, zz))
                    }
                    _ => None,
                };
                let z_err = match (z_form, dr[i], dr2[i], di[i], di2[i]) {
                    (Some((_, zz)), Some(r), Some(r2), Some(x), Some(x2)) => {
                        fin(w[i] * magnitude(C64::new(r - r2, x - x2)) / zz.norm_sqr())
                    }
                    _ => None,
                };
                match (y_form, z_form.map(|v| v.0)) {
                    (Some(yv), Some(zv)) => match (y_err, z_err) {
                        (Some(ey), Some(ez)) if ez < ey => Some(zv),
                        _ => Some(yv),
                    },
                    (a, b) => a.or(b),
                }
            })
            .collect()
    }

    #[test]
    fn slope_on_nan_coded_curves_has_the_bits_of_the_option_form() {
        let mut rng = Lcg(0x510e);
        let mut both_forms = 0;
        for n in [0, 1, 2, 3, 4, 5, 9, 300] {
            for case in 0..7 {
                let mut t = 1e8;
                let w: Vec<f64> = (0..n)
                    .map(|_| {
                        t *= 1.0 + 0.05 * rng.next().abs() + 1e-3;
                        TAU * t
                    })
                    .collect();
                // coil-like admittances with holes: zeros (no Z), NaN, huge and tiny
                // values (products that overflow or underflow)
                let y: Vec<C64> = (0..n)
                    .map(|i| {
                        let v = C64::new(1e-3 * rng.next().abs(), -0.02 * (1.0 + rng.next()));
                        match (case, i % 7) {
                            (1, 3) => C64::new(0.0, 0.0),
                            (2, 5) => C64::new(f64::NAN, 0.01),
                            (3, 2) => v * 1e300,
                            (4, 4) => v * 1e-300,
                            // |Z|⁴ underflows: the impedance form overflows where its
                            // error estimate does not
                            (5, _) => v * 1e100,
                            _ => v,
                        }
                    })
                    .collect();
                let z: Vec<Option<C64>> = y.iter().map(|&v| z_of(v)).collect();
                let bits = |c: Curve| -> Vec<Option<u64>> {
                    c.into_iter().map(|v| v.map(f64::to_bits)).collect()
                };
                let fast = omega_db_domega(&w, &y, &z);
                both_forms += fast.iter().filter(|v| v.is_some()).count();
                assert_eq!(
                    bits(fast),
                    bits(omega_db_domega_by_options(&w, &y, &z)),
                    "n={n} case {case}"
                );
            }
        }
        assert!(both_forms > 1000, "{both_forms} defined slopes");
    }

    #[test]
    fn data_checks_equal_every_point_exactly() {
        for n in 1..=6 {
            let mut rng = Lcg(0xdada + n as u64);
            let mut nets = Vec::new();
            // random passive-sized blocks; a plateau (one block repeated); reciprocal
            // blocks (reciprocity error exactly 0); a zero network
            let rand: Vec<C64> = (0..300 * n * n).map(|_| rng.c() * 0.4).collect();
            let one: Vec<C64> = (0..n * n).map(|_| rng.c() * 0.4).collect();
            let plateau: Vec<C64> = (0..300).flat_map(|_| one.clone()).collect();
            let mut sym = rand.clone();
            for b in sym.chunks_mut(n * n) {
                for i in 0..n {
                    for j in 0..i {
                        b[i * n + j] = b[j * n + i];
                    }
                }
            }
            let mut huge = rand.clone();
            huge.iter_mut().for_each(|c| *c *= 1e250);
            for s in [
                rand,
                plateau,
                sym,
                huge,
                vec![C64::new(0.0, 0.0); 300 * n * n],
            ] {
                nets.push(Network {
                    freq: (1..=300).map(|k| k as f64 * 1e8).collect(),
                    ports: n,
                    z0: vec![50.0; n],
                    s,
                });
            }
            for (i, net) in nets.iter().enumerate() {
                let d = data_checks(net);
                let (m, r) = checks_by_every_point(net);
                let bits = |v: Option<f64>| v.map(f64::to_bits);
                assert_eq!(bits(d.passivity_margin), bits(m), "n={n} net {i}");
                assert_eq!(bits(d.reciprocity_error), bits(r), "n={n} net {i}");
            }
        }
    }
}
