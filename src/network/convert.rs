//! S ↔ Z ↔ Y conversion of one N×N block (row-major) with real, positive per-port
//! reference impedances.
//!
//! With every reference real, power waves (Kurokawa, IEEE T-MTT 13(2), 1965),
//! pseudo-waves (Marks–Williams, J. Res. NIST 97(5), 1992) and travelling waves
//! coincide, so one set of formulas serves. Write D = diag(√z0_k) and the normalized
//! matrices Zn = D⁻¹ Z D⁻¹, Yn = D Y D. Then (Pozar, *Microwave Engineering*, §4.3,
//! generalised to per-port references):
//!
//! ```text
//! S  = (Zn + I)⁻¹ (Zn − I)      Zn = (I − S)⁻¹ (I + S)
//! S  = (I + Yn)⁻¹ (I − Yn)      Yn = (I + S)⁻¹ (I − S)
//! ```
//!
//! (the factors commute, so the order is free). Everything is done by LU solves,
//! never by explicit inverses; 1- and 2-ports take the closed forms of Pozar's
//! Table 4.2 (generalised to per-port references the same way). A block whose
//! solve matrix is singular (relative pivot below [`SINGULAR_TOL`]) gives `None`:
//! e.g. Z of a pure series element, whose I − S is singular.

use super::C64;

/// A solve matrix is treated as singular when its smallest LU pivot (or, for the
/// closed forms, its determinant) is below this fraction of its scale. The matrices
/// solved (I ± S, Zn + I, I + Yn) are dimensionless and of order one for passive
/// data, so a fixed relative tolerance is meaningful.
pub const SINGULAR_TOL: f64 = 1e-13;

/// Signature shared by the four block conversions.
pub type BlockFn = fn(&[C64], usize, &[f64]) -> Option<Vec<C64>>;

fn one() -> C64 {
    C64::new(1.0, 0.0)
}

/// |c| as √(re² + im²) where the squares can neither overflow nor lose precision to
/// underflow, else `norm` (hypot). Within an ulp or so of `norm` and several times
/// cheaper (glibc's hypot is a call that rescales); for thresholds and estimates,
/// where the last bit decides nothing. 0 exactly when c is 0 (without the call: exact
/// zeros are common, e.g. S12 − S21 of reciprocal data).
#[inline]
pub fn magnitude(c: C64) -> f64 {
    let m = c.re.abs().max(c.im.abs());
    if m > 1e-150 && m < 1e150 {
        (c.re * c.re + c.im * c.im).sqrt()
    } else if c.re == 0.0 && c.im == 0.0 {
        // (not `m == 0`: `max` drops a NaN, which must come out as NaN)
        0.0
    } else {
        c.norm()
    }
}

#[inline]
fn all_finite(v: &[C64]) -> bool {
    // `&`, not `&&`: no branch per value (a block is a few values, rarely not finite)
    v.iter()
        .fold(true, |ok, c| ok & c.re.is_finite() & c.im.is_finite())
}

/// `x.norm() > y.norm()`, decided on the squared magnitudes (no hypot) unless they
/// are within 1e-12 of each other or outside the range where squaring keeps their
/// precision: always the same answer, so the same pivots and the same digits.
#[inline]
fn larger(x: C64, y: C64) -> bool {
    let (u, v) = (x.norm_sqr(), y.norm_sqr());
    let safe = |w: f64| w > 1e-290 && w < 1e290;
    if safe(u) && safe(v) && (u - v).abs() > 1e-12 * u.max(v) {
        u > v
    } else {
        x.norm() > y.norm()
    }
}

/// Solve A X = B for N×N row-major A, B by Gaussian elimination with partial
/// pivoting (Golub & Van Loan, *Matrix Computations*, §3.4). None when A is
/// (numerically) singular: a pivot, i.e. a diagonal entry of U, at or below
/// `SINGULAR_TOL · max|a_ij|`. Written out rather than through a general matrix type
/// because it runs once per sweep point per conversion, and the blocks are small.
fn solve(a: &[C64], b: &[C64], n: usize) -> Option<Vec<C64>> {
    solve_owned(a.to_vec(), b.to_vec(), n)
}

/// [`solve`] taking its operands: no allocation but the ones given.
fn solve_owned(mut a: Vec<C64>, mut x: Vec<C64>, n: usize) -> Option<Vec<C64>> {
    solve_in_place(&mut a, &mut x, n, n).then_some(x)
}

/// [`solve`] in place for an N×M right-hand side X (row-major): A is scratch (it may be
/// overwritten), B is overwritten by X. False when A is singular or X is not finite (B
/// is then garbage). The columns of X are independent: a column comes out with the same
/// bits whatever M is, so a caller that needs only some columns solves only those.
fn solve_in_place(a: &mut [C64], x: &mut [C64], n: usize, m: usize) -> bool {
    // The sizes of the views (3- and 4-ports, their Y blocks, the two winding columns)
    // with n and m known: the compiler then unrolls the loops, drops the bounds checks
    // and keeps the matrices in registers. The operations and their order are the
    // same, so are the bits (`fixed_solve_has_the_bits_of_the_general_one`).
    match (n, m) {
        (3, 3) => solve_fixed::<3, 3>(a, x),
        (4, 4) => solve_fixed::<4, 4>(a, x),
        (4, 2) => solve_fixed::<4, 2>(a, x),
        _ => solve_body(a, x, n, m),
    }
}

/// [`solve_body`] for N and M known, on copies in local arrays that the compiler can
/// keep in registers; only X is written back (A's factors are scratch to every
/// caller). The same operations in the same order, so the same bits, with two
/// exceptions that change no bit either: the reciprocal of a pivot is taken once
/// and reused by the back substitution (the pivot row is not touched again after its
/// step), and `a = a − b`, `a = a·b` replace `-=`, `*=` (the same IEEE operations;
/// num-complex's compound operators are not marked inline).
// the elimination reads and writes by index: indices say it plainest; `a = a − b`
// for `a -= b`: see above
#[allow(clippy::needless_range_loop, clippy::assign_op_pattern)]
fn solve_fixed<const N: usize, const M: usize>(a_in: &mut [C64], x_out: &mut [C64]) -> bool {
    if a_in.len() != N * N || x_out.len() != N * M {
        return false;
    }
    let zero = C64::new(0.0, 0.0);
    let mut a = [[zero; N]; N];
    let mut x = [[zero; M]; N];
    for r in 0..N {
        a[r].copy_from_slice(&a_in[r * N..(r + 1) * N]);
        x[r].copy_from_slice(&x_out[r * M..(r + 1) * M]);
    }
    if !solve_arrays(a, &mut x) {
        return false;
    }
    for r in 0..N {
        x_out[r * M..(r + 1) * M].copy_from_slice(&x[r]);
    }
    all_finite(x_out)
}

/// The body of [`solve_fixed`] on arrays: X is overwritten by the solution (not yet
/// tested for finiteness); false when A is singular.
#[inline(always)]
#[allow(clippy::needless_range_loop, clippy::assign_op_pattern)]
fn solve_arrays<const N: usize, const M: usize>(
    mut a: [[C64; N]; N],
    x: &mut [[C64; M]; N],
) -> bool {
    let zero = C64::new(0.0, 0.0);
    let mut scale = 0.0f64;
    for r in 0..N {
        for j in 0..N {
            scale = scale.max(magnitude(a[r][j]));
        }
    }
    if !(scale.is_finite()) || scale == 0.0 {
        return false;
    }
    let mut inv = [zero; N];
    for c in 0..N {
        let mut p = c;
        for r in c + 1..N {
            if larger(a[r][c], a[p][c]) {
                p = r;
            }
        }
        let pivot = magnitude(a[p][c]);
        if pivot.is_nan() || pivot <= SINGULAR_TOL * scale {
            return false;
        }
        if p != c {
            a.swap(p, c);
            x.swap(p, c);
        }
        inv[c] = one() / a[c][c];
        for r in c + 1..N {
            let f = a[r][c] * inv[c];
            if f == zero {
                continue;
            }
            for j in c + 1..N {
                a[r][j] = a[r][j] - f * a[c][j];
            }
            for j in 0..M {
                x[r][j] = x[r][j] - f * x[c][j];
            }
        }
    }
    for c in (0..N).rev() {
        for j in 0..M {
            x[c][j] = x[c][j] * inv[c];
        }
        for r in 0..c {
            let f = a[r][c];
            if f != zero {
                for j in 0..M {
                    x[r][j] = x[r][j] - f * x[c][j];
                }
            }
        }
    }
    true
}

#[inline(always)]
fn solve_body(a: &mut [C64], x: &mut [C64], n: usize, m: usize) -> bool {
    let scale = a.iter().map(|&c| magnitude(c)).fold(0.0, f64::max);
    if !(scale.is_finite()) || scale == 0.0 || a.len() != n * n || x.len() != n * m {
        return false;
    }
    let zero = C64::new(0.0, 0.0);
    for c in 0..n {
        let mut p = c;
        for r in c + 1..n {
            if larger(a[r * n + c], a[p * n + c]) {
                p = r;
            }
        }
        let pivot = magnitude(a[p * n + c]);
        if pivot.is_nan() || pivot <= SINGULAR_TOL * scale {
            return false;
        }
        if p != c {
            for j in 0..n {
                a.swap(p * n + j, c * n + j);
            }
            for j in 0..m {
                x.swap(p * m + j, c * m + j);
            }
        }
        let inv = one() / a[c * n + c];
        for r in c + 1..n {
            let f = a[r * n + c] * inv;
            if f == zero {
                continue;
            }
            for j in c + 1..n {
                let v = a[c * n + j];
                a[r * n + j] -= f * v;
            }
            for j in 0..m {
                let v = x[c * m + j];
                x[r * m + j] -= f * v;
            }
        }
    }
    for c in (0..n).rev() {
        let inv = one() / a[c * n + c];
        for j in 0..m {
            x[c * m + j] *= inv;
        }
        for r in 0..c {
            let f = a[r * n + c];
            if f != zero {
                for j in 0..m {
                    let v = x[c * m + j];
                    x[r * m + j] -= f * v;
                }
            }
        }
    }
    all_finite(x)
}

/// Squared magnitudes of the largest entry of a 2×2 matrix within which
/// [`det_2`] takes its short path: every |a_ij| is then below 1e70, so neither the
/// determinant's square nor a product of an entry with it can overflow, and the
/// determinant of a regular matrix is at least SINGULAR_TOL·1e-140, whose square
/// cannot underflow.
const ORDINARY_2: std::ops::RangeInclusive<f64> = 1e-140..=1e140;

/// Dividing by the determinant of a regular 2×2 matrix, as [`det_2`] found it.
#[derive(Debug, Clone, Copy)]
enum ByDet {
    /// 1/det, for a matrix of ordinary size: one real division for all entries
    Recip(C64),
    /// det itself, for extreme sizes, where dividing is kept as it always was
    Divide(C64),
}

impl ByDet {
    /// x / det (by the reciprocal within an ulp or two of the quotient).
    #[inline]
    fn of(self, x: C64) -> C64 {
        match self {
            ByDet::Recip(r) => x * r,
            ByDet::Divide(d) => x / d,
        }
    }
}

/// The determinant of the 2×2 row-major `a`, to divide by; None when `a` is singular:
/// its scale max|a_ij| is not finite and positive, or |det| ≤ SINGULAR_TOL·scale².
///
/// For a matrix of ordinary size ([`ORDINARY_2`]) the scale is √ of the largest
/// squared magnitude, one root instead of four: √ is monotonic and each of those
/// entries' `magnitude` is √ of its squared magnitude, so it is the same number, bit
/// for bit, and so is the decision. (An entry too small for that form of `magnitude`
/// is below 1.5e-150, far below the largest.) Always inlined: its answer then stays in
/// registers and the caller's branch on it is taken once.
#[inline(always)]
fn det_2(a: &[C64; 4]) -> Option<ByDet> {
    let det = a[0] * a[3] - a[1] * a[2];
    let mut m2 = 0.0f64;
    for c in a {
        let v = c.norm_sqr();
        if v > m2 {
            m2 = v;
        }
    }
    if ORDINARY_2.contains(&m2) {
        let scale = m2.sqrt();
        if magnitude(det) <= SINGULAR_TOL * scale * scale {
            return None;
        }
        return Some(ByDet::Recip(det.conj() * (1.0 / det.norm_sqr())));
    }
    let scale = a.iter().map(|&c| magnitude(c)).fold(0.0, f64::max);
    if !(scale.is_finite()) || scale == 0.0 || magnitude(det) <= SINGULAR_TOL * scale * scale {
        return None;
    }
    Some(ByDet::Divide(det))
}

/// Solve A X = B for 2×2 row-major by Cramer's rule.
fn solve2(a: &[C64], b: &[C64]) -> Option<Vec<C64>> {
    let det = a[0] * a[3] - a[1] * a[2];
    let scale = a.iter().map(|&c| magnitude(c)).fold(0.0, f64::max);
    if !(scale.is_finite()) || scale == 0.0 || magnitude(det) <= SINGULAR_TOL * scale * scale {
        return None;
    }
    let inv = [a[3] / det, -a[1] / det, -a[2] / det, a[0] / det];
    let out = vec![
        inv[0] * b[0] + inv[1] * b[2],
        inv[0] * b[1] + inv[1] * b[3],
        inv[2] * b[0] + inv[3] * b[2],
        inv[2] * b[1] + inv[3] * b[3],
    ];
    all_finite(&out).then_some(out)
}

fn check(m: &[C64], n: usize, z0: &[f64]) -> bool {
    refs_ok(z0, n) && m.len() == n * n && all_finite(m)
}

/// `n` ports with finite, positive references.
fn refs_ok(z0: &[f64], n: usize) -> bool {
    n > 0 && z0.len() == n && z0.iter().all(|z| z.is_finite() && *z > 0.0)
}

/// I + sign·M
fn eye_plus(m: &[C64], n: usize, sign: f64) -> Vec<C64> {
    let mut out = vec![C64::new(0.0, 0.0); m.len()];
    eye_plus_into(m, n, sign, &mut out);
    out
}

/// [`eye_plus`] into `out` (same length as `m`).
// `a = a + b`: num-complex's `+=` is not marked inline, and this runs per point
#[allow(clippy::assign_op_pattern)]
fn eye_plus_into(m: &[C64], n: usize, sign: f64, out: &mut [C64]) {
    for (o, c) in out.iter_mut().zip(m) {
        *o = c * sign;
    }
    for i in 0..n {
        out[i * n + i] = out[i * n + i] + one();
    }
}

/// d_i · d_j where d = √z0 (`pow` = 1) or 1/√z0 (`pow` = −1): the factor entry (i, j)
/// is scaled by. One expression for [`scale_dd`] and [`Refs`], so both give the same bits.
fn dd(z0i: f64, z0j: f64, pow: f64) -> f64 {
    let d = (z0i * z0j).sqrt();
    if pow > 0.0 {
        d
    } else {
        1.0 / d
    }
}

/// Scale entry (i, j) by d_i · d_j where d = √z0 (`pow` = 1) or 1/√z0 (`pow` = −1).
fn scale_dd(m: &mut [C64], n: usize, z0: &[f64], pow: f64) {
    for i in 0..n {
        for j in 0..n {
            m[i * n + j] *= dd(z0[i], z0[j], pow);
        }
    }
}

/// S = (P + I)⁻¹ (P − I) for P = Zn (sign +1) or S = (I + P)⁻¹ (I − P) for P = Yn
/// (sign −1): both are (I + P)⁻¹ · sign·(P − I).
fn to_s_general(p: &[C64], n: usize, sign: f64) -> Option<Vec<C64>> {
    let a = eye_plus(p, n, 1.0);
    let mut b: Vec<C64> = p.iter().map(|c| c * sign).collect();
    for i in 0..n {
        b[i * n + i] -= one() * sign;
    }
    solve_owned(a, b, n)
}

/// Closed 2-port form of Xn = (I + sa·S)⁻¹ (I + sb·S) with sa = −sb (Pozar Table 4.2:
/// Z11 = [(1+S11)(1−S22) + S12S21]/Δ, Z12 = 2S12/Δ, Δ = (1−S11)(1−S22) − S12S21, and
/// the Y column likewise with Δ' = (1+S11)(1+S22) − S12S21).
///
/// Not tested for finiteness: every caller scales the result by the reference factors
/// (finite, positive) and tests that, which a non-finite entry fails too. Always
/// inlined: with `sb` a constant the products by ±1 fold away (a fat-LTO build left it
/// a call, with `sb` a variable).
#[inline(always)]
fn from_s_2(s: &[C64], sb: f64) -> Option<[C64; 4]> {
    let (s11, s12, s21, s22) = (s[0], s[1], s[2], s[3]);
    let a = [one() - s11 * sb, -s12 * sb, -s21 * sb, one() - s22 * sb];
    let det = det_2(&a)?;
    let p = s12 * s21;
    Some([
        det.of((one() + s11 * sb) * (one() - s22 * sb) + p),
        det.of(s12 * (2.0 * sb)),
        det.of(s21 * (2.0 * sb)),
        det.of((one() - s11 * sb) * (one() + s22 * sb) + p),
    ])
}

/// Closed 2-port form of S from P = Zn (sign +1) or P = Yn (sign −1):
/// Δ = (1+p11)(1+p22) − p12p21, S11 = sign·[(p11−1)(p22+1) − p12p21]/Δ,
/// S12 = 2·sign·p12/Δ, S22 = sign·[(p11+1)(p22−1) − p12p21]/Δ.
fn to_s_2(p: &[C64], sign: f64) -> Option<Vec<C64>> {
    let (p11, p12, p21, p22) = (p[0], p[1], p[2], p[3]);
    let a = [one() + p11, p12, p21, one() + p22];
    let det = a[0] * a[3] - a[1] * a[2];
    let scale = a.iter().map(|&c| magnitude(c)).fold(0.0, f64::max);
    if !(scale.is_finite()) || scale == 0.0 || magnitude(det) <= SINGULAR_TOL * scale * scale {
        return None;
    }
    let q = p12 * p21;
    let out = vec![
        ((p11 - one()) * (p22 + one()) - q) * sign / det,
        p12 * (2.0 * sign) / det,
        p21 * (2.0 * sign) / det,
        ((p11 + one()) * (p22 - one()) - q) * sign / det,
    ];
    all_finite(&out).then_some(out)
}

fn from_s(s: &[C64], n: usize, z0: &[f64], to_z: bool, general: bool) -> Option<Vec<C64>> {
    if !check(s, n, z0) {
        return None;
    }
    let pow = if to_z { 1.0 } else { -1.0 };
    let scale: Vec<f64> = (0..n * n).map(|k| dd(z0[k / n], z0[k % n], pow)).collect();
    let zero = C64::new(0.0, 0.0);
    let mut work = if general || n > 2 {
        vec![zero; n * n]
    } else {
        Vec::new()
    };
    let mut out = vec![zero; n * n];
    from_s_into(s, n, &scale, to_z, general, &mut work, &mut out).then_some(out)
}

/// The body of [`from_s`] on a checked block and references, into `out` (N×N), with
/// `work` (N×N) as the LU path's scratch and `scale` the N×N factors [`dd`] of Z = D Zn D
/// (`to_z`) or Y = D⁻¹ Yn D⁻¹. False where [`from_s`] gives None. The one body behind
/// every S→Z/Y path, allocating or not, so that all give the same bits.
// `a = a·b`: num-complex's `*=` is not marked inline, and this runs per point
#[allow(clippy::assign_op_pattern)]
fn from_s_into(
    s: &[C64],
    n: usize,
    scale: &[f64],
    to_z: bool,
    general: bool,
    work: &mut [C64],
    out: &mut [C64],
) -> bool {
    let (sa, sb) = if to_z { (-1.0, 1.0) } else { (1.0, -1.0) };
    match (n, general) {
        (1, false) => {
            let den = one() + s[0] * sa;
            if den.norm() <= SINGULAR_TOL {
                return false;
            }
            out[0] = (one() + s[0] * sb) / den;
        }
        (2, false) => match from_s_2(s, sb) {
            Some(x) => out.copy_from_slice(&x),
            None => return false,
        },
        (3, false) => return from_s_fixed::<3>(s, scale, sa, sb, out),
        (4, false) => return from_s_fixed::<4>(s, scale, sa, sb, out),
        _ => {
            eye_plus_into(s, n, sa, work);
            eye_plus_into(s, n, sb, out);
            if !solve_in_place(work, out, n, n) {
                return false;
            }
        }
    }
    for (o, f) in out.iter_mut().zip(scale) {
        *o = *o * *f;
    }
    all_finite(out)
}

/// [`from_s_into`]'s LU arm for N known, on arrays from the start (no scratch
/// slices, no copies in and out of the solve): I + sa·S and I + sb·S as
/// [`eye_plus_into`] forms them, [`solve_arrays`], the factors, the finiteness tests,
/// so the bits of the slice path (`fixed_s_to_z_y_have_the_bits_of_the_slice_path`).
#[allow(clippy::needless_range_loop, clippy::assign_op_pattern)]
fn from_s_fixed<const N: usize>(
    s: &[C64],
    scale: &[f64],
    sa: f64,
    sb: f64,
    out: &mut [C64],
) -> bool {
    if s.len() != N * N || scale.len() != N * N || out.len() != N * N {
        return false;
    }
    let zero = C64::new(0.0, 0.0);
    let (mut a, mut x) = ([[zero; N]; N], [[zero; N]; N]);
    for r in 0..N {
        for j in 0..N {
            a[r][j] = s[r * N + j] * sa;
            x[r][j] = s[r * N + j] * sb;
        }
        a[r][r] = a[r][r] + one();
        x[r][r] = x[r][r] + one();
    }
    if !solve_arrays(a, &mut x) {
        return false;
    }
    // the solve's finiteness test, then the factors' (as the slice path does)
    if !x.iter().all(|row| all_finite(row)) {
        return false;
    }
    for r in 0..N {
        for j in 0..N {
            out[r * N + j] = x[r][j] * scale[r * N + j];
        }
    }
    all_finite(out)
}

/// A network's per-port reference factors, computed once rather than per block:
/// entry (i, j) of Y = D⁻¹ Yn D⁻¹ is Yn_ij·y_ij and of Z = D Zn D is Zn_ij·z_ij.
#[derive(Debug, Clone, PartialEq)]
pub struct Refs {
    n: usize,
    y: Vec<f64>,
    z: Vec<f64>,
}

impl Refs {
    /// The factors of references `z0`; None when there are none or one is not finite
    /// and positive (then [`s_to_y`] and [`s_to_z`] give None for every block too).
    pub fn new(z0: &[f64]) -> Option<Refs> {
        let n = z0.len();
        if !refs_ok(z0, n) {
            return None;
        }
        let f = |pow: f64| (0..n * n).map(|k| dd(z0[k / n], z0[k % n], pow)).collect();
        Some(Refs {
            n,
            y: f(-1.0),
            z: f(1.0),
        })
    }

    /// The Y factors of a 2-port, for [`s_to_y_2`]; None for other port counts.
    pub fn y2(&self) -> Option<[f64; 4]> {
        (self.n == 2).then(|| [self.y[0], self.y[1], self.y[2], self.y[3]])
    }
}

/// [`s_to_y`] of a 2-port on the stack, with the factors of [`Refs::y2`]: the same
/// operations, so the same bits, without the allocation and the per-block reference
/// checks (the 2-port path of every `check`).
#[inline]
pub fn s_to_y_2(s: &[C64; 4], scale: &[f64; 4]) -> Option<[C64; 4]> {
    // [`from_s_into`]'s 2-port arm written out on arrays: the closed form, the factors,
    // the finiteness test, in its order
    if !all_finite(s) {
        return None;
    }
    let x = from_s_2(s, -1.0)?;
    let out = [
        x[0] * scale[0],
        x[1] * scale[1],
        x[2] * scale[2],
        x[3] * scale[3],
    ];
    all_finite(&out).then_some(out)
}

/// Converts the blocks of one network into buffers it owns: [`s_to_y`] and
/// [`s_to_z`] for a long sweep without two or three allocations per point (one per
/// thread instead), through the same body, so with the same bits.
#[derive(Debug, Clone)]
pub struct BlockConverter {
    refs: Refs,
    work: Vec<C64>,
    out: Vec<C64>,
}

impl BlockConverter {
    /// A converter for references `z0`; None when [`Refs::new`] is.
    pub fn new(z0: &[f64]) -> Option<BlockConverter> {
        let refs = Refs::new(z0)?;
        let nn = refs.n * refs.n;
        Some(BlockConverter {
            refs,
            work: vec![C64::new(0.0, 0.0); nn],
            out: vec![C64::new(0.0, 0.0); nn],
        })
    }

    fn convert(&mut self, s: &[C64], to_z: bool) -> Option<&[C64]> {
        let n = self.refs.n;
        let scale = if to_z { &self.refs.z } else { &self.refs.y };
        (s.len() == n * n
            && all_finite(s)
            && from_s_into(s, n, scale, to_z, false, &mut self.work, &mut self.out))
        .then_some(&self.out[..])
    }

    /// [`s_to_y`] of block `s`, valid until the next call.
    pub fn y(&mut self, s: &[C64]) -> Option<&[C64]> {
        self.convert(s, false)
    }

    /// [`s_to_z`] of block `s`, valid until the next call.
    pub fn z(&mut self, s: &[C64]) -> Option<&[C64]> {
        self.convert(s, true)
    }
}

fn to_s(m: &[C64], n: usize, z0: &[f64], from_z: bool, general: bool) -> Option<Vec<C64>> {
    if !check(m, n, z0) {
        return None;
    }
    // Zn = D⁻¹ Z D⁻¹;  Yn = D Y D
    let mut p = m.to_vec();
    scale_dd(&mut p, n, z0, if from_z { -1.0 } else { 1.0 });
    let sign = if from_z { 1.0 } else { -1.0 };
    let out = match (n, general) {
        (1, false) => {
            let den = one() + p[0];
            if den.norm() <= SINGULAR_TOL * p[0].norm().max(1.0) {
                return None;
            }
            vec![(p[0] - one()) * sign / den]
        }
        (2, false) => to_s_2(&p, sign)?,
        _ => to_s_general(&p, n, sign)?,
    };
    all_finite(&out).then_some(out)
}

/// Z (Ω) from S: Z = D (I − S)⁻¹ (I + S) D, D = diag(√z0) (Pozar §4.3). None when
/// I − S is singular (Z does not exist, e.g. a pure series element) or input is bad.
pub fn s_to_z(s: &[C64], n: usize, z0: &[f64]) -> Option<Vec<C64>> {
    from_s(s, n, z0, true, false)
}

/// Y (S) from S: Y = D⁻¹ (I + S)⁻¹ (I − S) D⁻¹ (Pozar §4.3). None when I + S is
/// singular (Y does not exist, e.g. a pure shunt element at one port pair).
pub fn s_to_y(s: &[C64], n: usize, z0: &[f64]) -> Option<Vec<C64>> {
    from_s(s, n, z0, false, false)
}

/// S from Z (Ω): S = (Zn + I)⁻¹ (Zn − I), Zn = D⁻¹ Z D⁻¹ (Pozar §4.3).
pub fn z_to_s(z: &[C64], n: usize, z0: &[f64]) -> Option<Vec<C64>> {
    to_s(z, n, z0, true, false)
}

/// S from Y (S): S = (I + Yn)⁻¹ (I − Yn), Yn = D Y D (Pozar §4.3).
pub fn y_to_s(y: &[C64], n: usize, z0: &[f64]) -> Option<Vec<C64>> {
    to_s(y, n, z0, false, false)
}

/// The same conversions forced through the general LU path (no closed forms); used
/// by tests that compare the fast paths against it.
pub mod general {
    use super::*;

    /// [`super::s_to_z`] through the LU solver for every N.
    pub fn s_to_z(s: &[C64], n: usize, z0: &[f64]) -> Option<Vec<C64>> {
        from_s(s, n, z0, true, true)
    }
    /// [`super::s_to_y`] through the LU solver for every N.
    pub fn s_to_y(s: &[C64], n: usize, z0: &[f64]) -> Option<Vec<C64>> {
        from_s(s, n, z0, false, true)
    }
    /// [`super::z_to_s`] through the LU solver for every N.
    pub fn z_to_s(z: &[C64], n: usize, z0: &[f64]) -> Option<Vec<C64>> {
        to_s(z, n, z0, true, true)
    }
    /// [`super::y_to_s`] through the LU solver for every N.
    pub fn y_to_s(y: &[C64], n: usize, z0: &[f64]) -> Option<Vec<C64>> {
        to_s(y, n, z0, false, true)
    }
}

/// Solve A X = B for an N×N row-major A (LU for N > 2, Cramer for N ≤ 2); None when
/// A is singular. Shared with the views.
pub fn solve_block(a: &[C64], b: &[C64], n: usize) -> Option<Vec<C64>> {
    match n {
        1 => {
            if a[0].norm() == 0.0 {
                None
            } else {
                let x = b[0] / a[0];
                x.is_finite().then(|| vec![x])
            }
        }
        2 => solve2(a, b),
        _ => solve(a, b, n),
    }
}

/// [`solve_block`] for N > 2 without allocating, for an N×M right-hand side `b`
/// (row-major, M = `b.len()` / N): A is scratch and B is overwritten by X.
/// False when A is singular (B is then garbage). Each column of X has the
/// bits it has in a solve with any other M.
pub fn solve_block_in_place(a: &mut [C64], b: &mut [C64], n: usize) -> bool {
    n > 2 && b.len().is_multiple_of(n) && solve_in_place(a, b, n, b.len() / n)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Repeatable test data: uniform in [−1, 1) from a 64-bit LCG (Knuth's MMIX
    /// multiplier and increment).
    fn uniform(seed: u64) -> impl FnMut() -> f64 {
        let mut state = seed;
        move || {
            state = state
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            (state >> 11) as f64 / (1u64 << 53) as f64 * 2.0 - 1.0
        }
    }

    /// The bits of complex values, for comparisons that must be exact.
    fn bits(v: &[C64]) -> Vec<(u64, u64)> {
        v.iter().map(|c| (c.re.to_bits(), c.im.to_bits())).collect()
    }

    fn close(a: &[C64], b: &[C64], tol: f64) -> bool {
        a.len() == b.len()
            && a.iter()
                .zip(b)
                .all(|(x, y)| (x - y).norm() <= tol * (1.0 + y.norm()))
    }

    fn c(re: f64, im: f64) -> C64 {
        C64::new(re, im)
    }

    #[test]
    fn one_port_resistor() {
        // Γ = (R − Z0)/(R + Z0): 100 Ω on 50 Ω gives 1/3 (Pozar eq. 2.35).
        let s = z_to_s(&[c(100.0, 0.0)], 1, &[50.0]).unwrap();
        assert!((s[0] - c(1.0 / 3.0, 0.0)).norm() < 1e-15);
        let z = s_to_z(&s, 1, &[50.0]).unwrap();
        assert!((z[0] - c(100.0, 0.0)).norm() < 1e-12);
        let y = s_to_y(&s, 1, &[50.0]).unwrap();
        assert!((y[0] - c(0.01, 0.0)).norm() < 1e-15);
        // open circuit: Z does not exist
        assert!(s_to_z(&[c(1.0, 0.0)], 1, &[50.0]).is_none());
        assert!(s_to_y(&[c(-1.0, 0.0)], 1, &[50.0]).is_none());
    }

    #[test]
    fn series_element_has_no_z() {
        // A series impedance Zs between the ports: S11 = Zs/(Zs + 2Z0), S21 = 2Z0/(Zs + 2Z0)
        // (Pozar Table 4.1 / worked S of a series element).
        let zs = c(10.0, 30.0);
        let d = zs + 100.0;
        let s = [zs / d, c(100.0, 0.0) / d, c(100.0, 0.0) / d, zs / d];
        assert!(s_to_z(&s, 2, &[50.0, 50.0]).is_none());
        assert!(general::s_to_z(&s, 2, &[50.0, 50.0]).is_none());
        let y = s_to_y(&s, 2, &[50.0, 50.0]).unwrap();
        let ys = one() / zs;
        assert!(close(&y, &[ys, -ys, -ys, ys], 1e-12));
        let yg = general::s_to_y(&s, 2, &[50.0, 50.0]).unwrap();
        assert!(close(&y, &yg, 1e-12));
    }

    #[test]
    fn per_port_reference() {
        // A 2-port with different references: round trip Z→S→Z and against general.
        let z = [c(30.0, 5.0), c(10.0, 1.0), c(10.0, 1.0), c(80.0, -20.0)];
        let z0 = [25.0, 75.0];
        let s = z_to_s(&z, 2, &z0).unwrap();
        let sg = general::z_to_s(&z, 2, &z0).unwrap();
        assert!(close(&s, &sg, 1e-13));
        assert!(close(&s_to_z(&s, 2, &z0).unwrap(), &z, 1e-12));
        // S11 with port 2 loaded by its own reference equals Γ of Z_in against z0_1
        let zl = z0[1];
        let zin = z[0] - z[1] * z[2] / (z[3] + zl);
        let g = (zin - z0[0]) / (zin + z0[0]);
        assert!((s[0] - g).norm() < 1e-13);
    }

    #[test]
    fn fixed_solve_has_the_bits_of_the_general_one() {
        // random blocks, blocks with exact zeros (the skipped updates), a column
        // needing a row swap at every step, and a singular one
        let mut next = uniform(0x5017u64);
        let mut cases: Vec<(usize, usize, Vec<C64>, Vec<C64>)> = Vec::new();
        for (n, m) in [(3, 3), (4, 4), (4, 2)] {
            for t in 0..200 {
                let mut a: Vec<C64> = (0..n * n).map(|_| c(next(), next())).collect();
                let b: Vec<C64> = (0..n * m).map(|_| c(next(), next())).collect();
                if t % 4 == 1 {
                    for k in (0..n * n).step_by(3) {
                        a[k] = c(0.0, 0.0);
                    }
                }
                if t % 4 == 2 {
                    // growing down the first column: every step swaps
                    for r in 0..n {
                        a[r * n] = c(10f64.powi(r as i32), 0.0);
                    }
                }
                if t % 50 == 3 {
                    let row: Vec<C64> = a[..n].to_vec();
                    a[n..2 * n].copy_from_slice(&row);
                }
                cases.push((n, m, a, b));
            }
        }
        let fixed = |n: usize, m: usize, a: &mut [C64], x: &mut [C64]| match (n, m) {
            (3, 3) => solve_fixed::<3, 3>(a, x),
            (4, 4) => solve_fixed::<4, 4>(a, x),
            _ => solve_fixed::<4, 2>(a, x),
        };
        let mut singular = 0;
        for (i, (n, m, a, b)) in cases.iter().enumerate() {
            let (mut a1, mut x1) = (a.clone(), b.clone());
            let (mut a2, mut x2) = (a.clone(), b.clone());
            let ok1 = fixed(*n, *m, &mut a1, &mut x1);
            let ok2 = solve_body(&mut a2, &mut x2, *n, *m);
            assert_eq!(ok1, ok2, "case {i}");
            if ok1 {
                assert_eq!(bits(&x1), bits(&x2), "case {i}");
            } else {
                singular += 1;
            }
        }
        assert!(singular >= 6, "{singular} singular cases");
    }

    #[test]
    fn fixed_s_to_z_y_have_the_bits_of_the_slice_path() {
        let mut next = uniform(0x3f4u64);
        for n in [3usize, 4] {
            let z0: Vec<f64> = (0..n).map(|k| 25.0 * (k + 1) as f64).collect();
            let refs = Refs::new(&z0).expect("references");
            let mut blocks: Vec<Vec<C64>> = (0..300)
                .map(|_| (0..n * n).map(|_| c(next(), next()) * 0.6).collect())
                .collect();
            // I − S singular (no Z) and I + S singular (no Y)
            let mut eye = vec![c(0.0, 0.0); n * n];
            for i in 0..n {
                eye[i * n + i] = c(1.0, 0.0);
            }
            blocks.push(eye.clone());
            blocks.push(eye.iter().map(|v| -v).collect());
            let mut none = 0;
            for (i, s) in blocks.iter().enumerate() {
                for to_z in [false, true] {
                    let (sa, sb) = if to_z { (-1.0, 1.0) } else { (1.0, -1.0) };
                    let f = if to_z { &refs.z } else { &refs.y };
                    let mut fixed = vec![c(0.0, 0.0); n * n];
                    let ok1 = match n {
                        3 => from_s_fixed::<3>(s, f, sa, sb, &mut fixed),
                        _ => from_s_fixed::<4>(s, f, sa, sb, &mut fixed),
                    };
                    // the slice path: eye_plus_into twice, the general solve body
                    let (mut work, mut slow) = (vec![c(0.0, 0.0); n * n], vec![c(0.0, 0.0); n * n]);
                    eye_plus_into(s, n, sa, &mut work);
                    eye_plus_into(s, n, sb, &mut slow);
                    let mut ok2 = solve_body(&mut work, &mut slow, n, n);
                    if ok2 {
                        for (o, v) in slow.iter_mut().zip(f) {
                            *o *= *v;
                        }
                        ok2 = all_finite(&slow);
                    }
                    assert_eq!(ok1, ok2, "n={n} block {i} to_z {to_z}");
                    if ok1 {
                        assert_eq!(bits(&fixed), bits(&slow), "n={n} block {i} to_z {to_z}");
                    } else {
                        none += 1;
                    }
                }
            }
            assert!(none >= 2, "n={n}: {none}");
        }
    }

    /// [`det_2`]'s decision the straightforward way: the scale from every entry's
    /// `magnitude`, as before the short path.
    fn singular_by_magnitudes(a: &[C64; 4]) -> bool {
        let det = a[0] * a[3] - a[1] * a[2];
        let scale = a.iter().map(|&c| magnitude(c)).fold(0.0, f64::max);
        !(scale.is_finite()) || scale == 0.0 || magnitude(det) <= SINGULAR_TOL * scale * scale
    }

    #[test]
    fn det_2_decides_as_the_magnitudes_do() {
        // random matrices at sizes from 1e-200 to 1e200 (both paths), exact zeros,
        // tiny entries beside ordinary ones, and determinants on either side of the
        // threshold: the same decision every time, and a quotient within a few ulps
        let mut next = uniform(0xde72u64);
        let mut cases: Vec<[C64; 4]> = Vec::new();
        for e in (-200..=200).step_by(10) {
            let k = 10f64.powi(e);
            for _ in 0..40 {
                cases.push([(); 4].map(|_| c(next(), next()) * k));
            }
            let (u, v) = (c(next(), next()) * k, c(next(), next()));
            // rank one, then nudged across SINGULAR_TOL relative to the scale²
            for t in [0.0, 0.5e-13, 2e-13, 1e-10] {
                let mut a = [u, u * v, c(1.0, 0.5) * k, c(1.0, 0.5) * v * k];
                a[3] += c(t, 0.0) * k;
                cases.push(a);
            }
        }
        cases.push([c(0.0, 0.0); 4]);
        cases.push([c(1.0, 0.0), c(0.0, 0.0), c(0.0, 0.0), c(1e-160, 0.0)]);
        cases.push([c(1e-160, 1e-160), c(0.0, 0.0), c(0.0, 0.0), c(1e-160, 0.0)]);
        cases.push([c(1e100, 0.0), c(1e-200, 0.0), c(0.0, 0.0), c(1e100, 0.0)]);
        let (mut regular, mut singular) = (0, 0);
        for (i, a) in cases.iter().enumerate() {
            let got = det_2(a);
            assert_eq!(got.is_none(), singular_by_magnitudes(a), "case {i}: {a:?}");
            let Some(by) = got else {
                singular += 1;
                continue;
            };
            regular += 1;
            let det = a[0] * a[3] - a[1] * a[2];
            for x in [a[0], a[1], c(1.0, -2.0)] {
                let (q, want) = (by.of(x), x / det);
                if want.is_finite() && want.norm() > 1e-290 {
                    assert!(
                        (q - want).norm() <= 1e-15 * want.norm(),
                        "case {i}: {q} vs {want}"
                    );
                }
            }
        }
        assert!(
            regular > 1000 && singular > 60,
            "{regular} regular, {singular} singular"
        );
    }

    #[test]
    fn magnitude_is_norm_to_an_ulp() {
        let mut next = uniform(0x3a9u64);
        for e in (-320..=300).step_by(5) {
            let k = 10f64.powi(e);
            for _ in 0..20 {
                let v = c(next(), next()) * k;
                let (m, n) = (magnitude(v), v.norm());
                assert!((m - n).abs() <= 3e-16 * n, "{v}: {m:e} vs {n:e}");
            }
        }
        assert_eq!(magnitude(c(0.0, -0.0)).to_bits(), 0f64.to_bits());
        assert!(magnitude(c(0.0, f64::NAN)).is_nan());
        assert!(magnitude(c(f64::NAN, 0.5)).is_nan());
        assert_eq!(magnitude(c(f64::INFINITY, 1.0)), f64::INFINITY);
        assert_eq!(magnitude(c(1e300, 1e300)), c(1e300, 1e300).norm());
    }

    #[test]
    fn stack_two_port_y_has_the_bits_of_s_to_y() {
        let mut next = uniform(0x2b0u64);
        let z0 = [50.0, 75.0];
        let scale = Refs::new(&z0).and_then(|r| r.y2()).expect("2-port factors");
        let mut cases: Vec<[C64; 4]> = (0..500)
            .map(|_| {
                [
                    c(next(), next()),
                    c(next(), next()),
                    c(next(), next()),
                    c(next(), next()),
                ]
            })
            .collect();
        // I + S singular (a shunt short), a NaN, and a zero block
        cases.push([c(-1.0, 0.0), c(0.0, 0.0), c(0.0, 0.0), c(0.3, 0.0)]);
        cases.push([c(f64::NAN, 0.0), c(0.1, 0.0), c(0.1, 0.0), c(0.2, 0.0)]);
        cases.push([c(0.0, 0.0); 4]);
        let mut none = 0;
        for (i, s) in cases.iter().enumerate() {
            let stack = s_to_y_2(s, &scale);
            let heap = s_to_y(s, 2, &z0);
            assert_eq!(stack.map(|v| bits(&v)), heap.map(|v| bits(&v)), "case {i}");
            none += usize::from(stack.is_none());
        }
        assert_eq!(none, 2);
    }

    #[test]
    fn bad_input_is_none() {
        assert!(s_to_z(&[c(0.0, 0.0)], 1, &[0.0]).is_none());
        assert!(s_to_z(&[c(f64::NAN, 0.0)], 1, &[50.0]).is_none());
        assert!(s_to_z(&[c(0.0, 0.0); 3], 2, &[50.0, 50.0]).is_none());
    }
}
