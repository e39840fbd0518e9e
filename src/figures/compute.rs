//! Computing the figures of DESIGN §6 from a view, and the data checks of a network.

use std::collections::BTreeMap;

use nalgebra::DMatrix;
use rayon::prelude::*;

use super::grid::{derivative, derivative_alt, fin, first_fall, peak, rising_zero};
use super::{DataChecks, Kind, ViewFigures};
use crate::network::{Network, View, C64};

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
/// Both use the three-point non-uniform derivative ([`derivative`]); at each point
/// the form with the smaller estimated truncation error (the disagreement with the
/// neighbouring stencil, [`derivative_alt`], carried to ω·dB/dω) is used. This
/// matters where q is small and the numerator cancels, e.g. the first points of a
/// sweep that starts low with a coarse step.
fn omega_db_domega(w: &[f64], y: &[C64], z: &[Option<C64>]) -> Curve {
    let b: Curve = y.iter().map(|v| fin(v.im)).collect();
    let p: Curve = y.iter().zip(w).map(|(v, &w)| fin(w * v.im)).collect();
    let (dp, dp2) = (derivative(w, &p), derivative_alt(w, &p));
    let zr: Curve = z.iter().map(|z| z.map(|z| z.re)).collect();
    let zi: Curve = z.iter().map(|z| z.map(|z| z.im)).collect();
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
                    fin(w[i] * C64::new(r - r2, x - x2).norm() / zz.norm_sqr())
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
    let per = |g: &dyn Fn(&[C64; 4], f64) -> Option<f64>| -> Curve {
        z.iter().zip(&w).map(|(z, &w)| g(z, w)).collect()
    };
    let l1 = per(&|z, w| ratio(z[0].im, w));
    let l2 = per(&|z, w| ratio(z[3].im, w));
    let m = per(&|z, w| ratio(z[1].im, w));
    let k = per(&|z, _| {
        let p = z[0].im * z[3].im;
        if p > 0.0 {
            ratio(z[1].im, p.sqrt())
        } else {
            None
        }
    });
    let q1 = per(&|z, _| ratio(z[0].im, z[0].re));
    let q2 = per(&|z, _| ratio(z[3].im, z[3].re));
    let il = per(&|z, _| il_min_db(z));
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

/// Largest singular value of an N×N row-major block (closed form for N ≤ 2:
/// σ² = (‖S‖²_F ± √(‖S‖⁴_F − 4|det S|²))/2).
pub fn sigma_max(s: &[C64], n: usize) -> Option<f64> {
    // Scaled by the largest entry so that squares cannot overflow (huge but finite
    // data gave inf, and NaN singular values that nalgebra's sort panics on).
    let scale = s.iter().map(|c| c.norm()).fold(0.0, f64::max);
    if !scale.is_finite() || s.len() < n * n {
        return None;
    }
    if scale == 0.0 {
        return Some(0.0);
    }
    let s: Vec<C64> = s.iter().map(|c| c / scale).collect();
    let v = match n {
        1 => s[0].norm(),
        2 => {
            let fro: f64 = s.iter().map(|c| c.norm_sqr()).sum();
            let det = (s[0] * s[3] - s[1] * s[2]).norm();
            let disc = (fro * fro - 4.0 * det * det).max(0.0);
            ((fro + disc.sqrt()) / 2.0).sqrt()
        }
        _ => {
            let sv = DMatrix::from_row_slice(n, n, &s).singular_values_unordered();
            if sv.iter().any(|x| !x.is_finite()) {
                return None;
            }
            sv.iter().copied().fold(0.0, f64::max)
        }
    };
    fin(v * scale)
}

/// The data checks of every file (DESIGN §6): passivity_margin = 1 − max_f σ_max(S)
/// (power-wave S with real references: passive iff σ_max ≤ 1, methods.md §5.3),
/// reciprocity_error = max_f max_ij |S_ij − S_ji| (§5.4), points, f_min, f_max, ports.
pub fn data_checks(net: &Network) -> DataChecks {
    let n = net.ports;
    // per point: σ_max (None when it cannot be had) and the worst |S_ij − S_ji|; the
    // points are independent and a large N-port's SVDs dominate, so they run in
    // parallel; max is order-free, so any thread count gives the same result
    let per_point: Vec<(Option<f64>, f64)> = (0..net.points())
        .into_par_iter()
        .with_min_len(1024)
        .map(|k| {
            let s = net.s_block(k);
            let mut r = 0.0f64;
            for i in 0..n {
                for j in i + 1..n {
                    r = r.max((s[i * n + j] - s[j * n + i]).norm());
                }
            }
            (sigma_max(s, n), r)
        })
        .collect();
    let mut ok = n > 0 && net.points() > 0;
    let mut smax: Option<f64> = None;
    let mut recip: Option<f64> = None;
    for (v, r) in per_point {
        match v {
            Some(v) => smax = Some(smax.map_or(v, |m| m.max(v))),
            None => ok = false,
        }
        recip = Some(recip.map_or(r, |m| m.max(r)));
    }
    DataChecks {
        passivity_margin: if ok {
            smax.and_then(|m| fin(1.0 - m))
        } else {
            None
        },
        reciprocity_error: if ok { recip.and_then(fin) } else { None },
        points: net.points(),
        f_min: net.freq.first().copied().unwrap_or(0.0),
        f_max: net.freq.last().copied().unwrap_or(0.0),
        ports: n,
    }
}
