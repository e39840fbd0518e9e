//! Test support for the `check` tests: the closed forms the small test library is
//! made from, and its generator. Everything here is written independently of the
//! crate's own network, model and Touchstone code, so that the end-to-end tests
//! compare the crate against formulas it does not share.
//!
//! Sources: the π-model of a spiral and its closed-form Q are those of C. P. Yue and
//! S. S. Wong, IEEE JSSC 33(5), 1998; S from Y for equal real reference impedances,
//! S = (I + z0·Y)⁻¹(I − z0·Y), is D. M. Pozar, "Microwave Engineering", table 4.2;
//! the file layout is the Touchstone 1.0 specification (IBIS Open Forum): `# Hz S RI
//! R 50`, 2-port records in the order 11 21 12 22, records of 3+ ports one matrix row
//! per line, at most four pairs per line.
#![allow(dead_code)]

use std::f64::consts::PI;
use std::fmt::Write as _;
use std::path::Path;

use nalgebra::DMatrix;
use num_complex::Complex64 as C;

/// Parameters of the π-model (SI). Rs(f) = rdc + rac·√(f / 1 GHz).
#[derive(Debug, Clone, Copy)]
pub struct Pi {
    pub ls: f64,
    pub rdc: f64,
    pub rac: f64,
    pub cs: f64,
    pub cox: f64,
    pub csi: f64,
    pub rsi: f64,
}

/// The reference vector of the project's `methods.md` §2.4: Ls = 2 nH, Rs = 3 Ω,
/// Cs = 20 fF, Cox = 150 fF, Csi = 40 fF, Rsi = 500 Ω at both ports.
pub const REF: Pi = Pi {
    ls: 2e-9,
    rdc: 3.0,
    rac: 0.0,
    cs: 20e-15,
    cox: 150e-15,
    csi: 40e-15,
    rsi: 500.0,
};

/// A good 1 nH coil on a high-resistivity substrate (invented).
pub const GOOD: Pi = Pi {
    ls: 1e-9,
    rdc: 0.5,
    rac: 0.3,
    cs: 10e-15,
    cox: 60e-15,
    csi: 20e-15,
    rsi: 1e5,
};

/// The same coil over a lossy substrate (invented): Rsi near 1/(ω(Cox+Csi)), where
/// the substrate takes the most, so a ground shield would help.
pub const LOSSY: Pi = Pi {
    ls: 1e-9,
    rdc: 0.5,
    rac: 0.3,
    cs: 10e-15,
    cox: 150e-15,
    csi: 50e-15,
    rsi: 330.0,
};

impl Pi {
    pub fn rs(&self, f: f64) -> f64 {
        self.rdc + self.rac * (f / 1e9).sqrt()
    }
    /// Admittance of the series branch (Rs + jωLs) ∥ Cs.
    pub fn y_series(&self, f: f64) -> C {
        let w = 2.0 * PI * f;
        C::new(1.0, 0.0) / C::new(self.rs(f), w * self.ls) + C::new(0.0, w * self.cs)
    }
    /// Admittance of one shunt branch: Cox in series with (Rsi ∥ Csi).
    pub fn y_shunt(&self, f: f64) -> C {
        let w = 2.0 * PI * f;
        let z = C::new(0.0, -1.0 / (w * self.cox))
            + C::new(1.0, 0.0) / C::new(1.0 / self.rsi, w * self.csi);
        C::new(1.0, 0.0) / z
    }
    /// 2×2 Y of the π (row-major).
    pub fn y2(&self, f: f64) -> [C; 4] {
        let ys = self.y_series(f);
        let ysh = self.y_shunt(f);
        [ys + ysh, -ys, -ys, ys + ysh]
    }
    /// Input admittance with port 2 grounded (the `single_ended` view): Y11.
    pub fn y_se(&self, f: f64) -> C {
        self.y2(f)[0]
    }
    /// q = Im Z_in / Re Z_in with port 2 grounded, straight from Y11.
    pub fn q_se(&self, f: f64) -> f64 {
        let z = C::new(1.0, 0.0) / self.y_se(f);
        z.im / z.re
    }
    /// l = Im Z_in / ω with port 2 grounded.
    pub fn l_se(&self, f: f64) -> f64 {
        let z = C::new(1.0, 0.0) / self.y_se(f);
        z.im / (2.0 * PI * f)
    }
    /// The closed-form Q of Yue and Wong (JSSC 1998) for port 2 grounded:
    /// Q = (ωLs/Rs) · Rp/(Rp + ((ωLs/Rs)² + 1)Rs) · (1 − Rs²(Cs+Cp)/Ls − ω²Ls(Cs+Cp)),
    /// Rp = 1/(ω²Cox²Rsi) + Rsi(Cox+Csi)²/Cox²,
    /// Cp = Cox(1 + ω²(Cox+Csi)CsiRsi²)/(1 + ω²(Cox+Csi)²Rsi²).
    pub fn q_yue_wong(&self, f: f64) -> f64 {
        let w = 2.0 * PI * f;
        let rs = self.rs(f);
        let (cox, csi, rsi) = (self.cox, self.csi, self.rsi);
        let rp = 1.0 / (w * w * cox * cox * rsi) + rsi * (cox + csi).powi(2) / (cox * cox);
        let cp = cox * (1.0 + w * w * (cox + csi) * csi * rsi * rsi)
            / (1.0 + w * w * (cox + csi).powi(2) * rsi * rsi);
        let qc = w * self.ls / rs;
        qc * rp / (rp + (qc * qc + 1.0) * rs)
            * (1.0 - rs * rs * (self.cs + cp) / self.ls - w * w * self.ls * (self.cs + cp))
    }
    /// q with port 2 grounded of the same coil over a grounded shield: each shunt is
    /// Cox alone (DESIGN §6.1's definition of `shield_gain`'s numerator).
    pub fn q_se_shielded(&self, f: f64) -> f64 {
        let w = 2.0 * PI * f;
        let y = self.y_series(f) + C::new(0.0, w * self.cox);
        let z = C::new(1.0, 0.0) / y;
        z.im / z.re
    }
    /// shield_gain(f) = q over a shield / q as is.
    pub fn shield_gain(&self, f: f64) -> f64 {
        self.q_se_shielded(f) / self.q_se(f)
    }
    /// Self-resonance with port 2 grounded: where Im Y11 crosses from − to +,
    /// found by bisection on the closed form in [lo, hi].
    pub fn srf_se(&self, lo: f64, hi: f64) -> Option<f64> {
        bisect(|f| self.y_se(f).im, lo, hi)
    }
}

/// Bisection for a − → + sign change of `g` in [lo, hi] (scanning 1000 steps first).
pub fn bisect(g: impl Fn(f64) -> f64, lo: f64, hi: f64) -> Option<f64> {
    let n = 1000;
    let mut a = lo;
    for k in 1..=n {
        let b = lo + (hi - lo) * k as f64 / n as f64;
        if g(a) < 0.0 && g(b) >= 0.0 {
            let (mut x, mut y) = (a, b);
            for _ in 0..200 {
                let m = 0.5 * (x + y);
                if g(m) < 0.0 {
                    x = m
                } else {
                    y = m
                }
            }
            return Some(0.5 * (x + y));
        }
        a = b;
    }
    None
}

/// A one-port tank: L with series R, in parallel with C (invented: 1 nH, 0.5 Ω, 1 pF).
/// Its B crosses zero at f = √(1/(LC) − R²/L²)/(2π), ≈ 1/(2π√(LC)) for small R.
#[derive(Debug, Clone, Copy)]
pub struct Tank {
    pub l: f64,
    pub r: f64,
    pub c: f64,
}
pub const TANK: Tank = Tank {
    l: 1e-9,
    r: 0.5,
    c: 1e-12,
};
impl Tank {
    pub fn y(&self, f: f64) -> C {
        let w = 2.0 * PI * f;
        C::new(1.0, 0.0) / C::new(self.r, w * self.l) + C::new(0.0, w * self.c)
    }
    pub fn srf(&self) -> f64 {
        (1.0 / (self.l * self.c) - (self.r / self.l).powi(2)).sqrt() / (2.0 * PI)
    }
}

/// A capacitor one-port: series R, L, C (invented values per part).
#[derive(Debug, Clone, Copy)]
pub struct Cap {
    pub c: f64,
    pub l: f64,
    pub r: f64,
}
pub const CAP_SMALL: Cap = Cap {
    c: 0.5e-12,
    l: 20e-12,
    r: 0.3,
};
pub const CAP_BIG: Cap = Cap {
    c: 2e-12,
    l: 50e-12,
    r: 0.3,
};
impl Cap {
    pub fn z(&self, f: f64) -> C {
        let w = 2.0 * PI * f;
        C::new(self.r, w * self.l - 1.0 / (w * self.c))
    }
    /// c(f) = −1/(ω Im Z) = C/(1 − ω²LC)
    pub fn c_at(&self, f: f64) -> f64 {
        let w = 2.0 * PI * f;
        self.c / (1.0 - w * w * self.l * self.c)
    }
    /// q(f) = −Im Z / Re Z
    pub fn q_at(&self, f: f64) -> f64 {
        let z = self.z(f);
        -z.im / z.re
    }
    /// series resonance 1/(2π√(LC))
    pub fn srf(&self) -> f64 {
        1.0 / (2.0 * PI * (self.l * self.c).sqrt())
    }
}

/// A transformer (invented): windings L1 = 1 nH (R1 = 1 Ω) between ports 1–2 and
/// L2 = 2 nH (R2 = 1.5 Ω) between ports 3–4, coupling k0 = 0.8, and 5 fF from every
/// port to ground (so that the 4-port Z exists).
#[derive(Debug, Clone, Copy)]
pub struct Xfmr {
    pub l1: f64,
    pub r1: f64,
    pub l2: f64,
    pub r2: f64,
    pub k0: f64,
    pub cg: f64,
}
pub const XFMR: Xfmr = Xfmr {
    l1: 1e-9,
    r1: 1.0,
    l2: 2e-9,
    r2: 1.5,
    k0: 0.8,
    cg: 5e-15,
};
impl Xfmr {
    /// 4-port nodal Y: A·Zw⁻¹·Aᵀ (A maps winding currents to port currents,
    /// +i1 into port 1, −i1 into port 2, +i2 into 3, −i2 into 4) plus jωCg per port.
    pub fn y4(&self, f: f64) -> DMatrix<C> {
        let w = 2.0 * PI * f;
        let m = self.k0 * (self.l1 * self.l2).sqrt();
        let zw = DMatrix::from_row_slice(
            2,
            2,
            &[
                C::new(self.r1, w * self.l1),
                C::new(0.0, w * m),
                C::new(0.0, w * m),
                C::new(self.r2, w * self.l2),
            ],
        );
        let yw = zw.try_inverse().expect("winding Z is regular");
        let (one, zero) = (C::new(1.0, 0.0), C::new(0.0, 0.0));
        #[rustfmt::skip]
        let a = DMatrix::from_row_slice(4, 2, &[
            one, zero,
            -one, zero,
            zero, one,
            zero, -one,
        ]);
        let mut y = &a * yw * a.transpose();
        for i in 0..4 {
            y[(i, i)] += C::new(0.0, w * self.cg);
        }
        y
    }
    /// The 2×2 winding Z of the `transformer` view, by its definition: invert the
    /// 4-port Y to Z, drive each winding differentially:
    /// Zw_ab = Z[a+,b+] − Z[a+,b−] − Z[a−,b+] + Z[a−,b−].
    pub fn z_windings(&self, f: f64) -> [C; 4] {
        let z = self.y4(f).try_inverse().expect("4-port Y is regular");
        let wd = [(0usize, 1usize), (2, 3)];
        let mut out = [C::new(0.0, 0.0); 4];
        for (a, &(ap, an)) in wd.iter().enumerate() {
            for (b, &(bp, bn)) in wd.iter().enumerate() {
                out[a * 2 + b] = z[(ap, bp)] - z[(ap, bn)] - z[(an, bp)] + z[(an, bn)];
            }
        }
        out
    }
    /// k(f) = Im Z12 / √(Im Z11 · Im Z22)
    pub fn k_at(&self, f: f64) -> f64 {
        let z = self.z_windings(f);
        z[1].im / (z[0].im * z[3].im).sqrt()
    }
    pub fn l1_at(&self, f: f64) -> f64 {
        self.z_windings(f)[0].im / (2.0 * PI * f)
    }
    pub fn q2_at(&self, f: f64) -> f64 {
        let z = self.z_windings(f)[3];
        z.im / z.re
    }
}

/// S from Y for reference impedance z0 at every port: S = (I + z0·Y)⁻¹(I − z0·Y)
/// (Pozar, table 4.2).
pub fn s_from_y(y: &DMatrix<C>, z0: f64) -> DMatrix<C> {
    let n = y.nrows();
    let id = DMatrix::<C>::identity(n, n);
    let yz = y * C::new(z0, 0.0);
    (&id + &yz)
        .try_inverse()
        .expect("I + z0·Y is regular for passive Y")
        * (&id - &yz)
}

/// One value in the files: 10 significant digits, enough for the checks and short.
fn num(v: f64) -> String {
    format!("{v:.9e}")
}

/// A Touchstone 1.0 file, `# Hz S RI R 50`, from S blocks per frequency.
pub fn touchstone(comment: &[&str], freq: &[f64], s: &[DMatrix<C>]) -> String {
    let n = s[0].nrows();
    let mut t = String::new();
    for c in comment {
        let _ = writeln!(t, "! {c}");
    }
    t.push_str("# Hz S RI R 50\n");
    for (f, m) in freq.iter().zip(s) {
        let _ = write!(t, "{}", f.round() as u64);
        if n <= 2 {
            // 2-port order of version 1: 11 21 12 22
            let order: &[(usize, usize)] = if n == 1 {
                &[(0, 0)]
            } else {
                &[(0, 0), (1, 0), (0, 1), (1, 1)]
            };
            for &(i, j) in order {
                let _ = write!(t, " {} {}", num(m[(i, j)].re), num(m[(i, j)].im));
            }
            t.push('\n');
        } else {
            for i in 0..n {
                if i > 0 {
                    t.push(' ');
                }
                for j in 0..n {
                    if j > 0 && j % 4 == 0 {
                        t.push('\n');
                    }
                    let _ = write!(t, " {} {}", num(m[(i, j)].re), num(m[(i, j)].im));
                }
                t.push('\n');
            }
        }
    }
    t
}

/// Frequencies k·step for k in lo_k..=hi_k (exact integers in Hz).
pub fn grid(lo_k: u64, hi_k: u64, step: f64) -> Vec<f64> {
    (lo_k..=hi_k).map(|k| k as f64 * step).collect()
}

fn two_port(p: &Pi, freq: &[f64]) -> Vec<DMatrix<C>> {
    freq.iter()
        .map(|&f| s_from_y(&DMatrix::from_row_slice(2, 2, &p.y2(f)), 50.0))
        .collect()
}

fn one_port(y: impl Fn(f64) -> C, freq: &[f64]) -> Vec<DMatrix<C>> {
    freq.iter()
        .map(|&f| s_from_y(&DMatrix::from_element(1, 1, y(f)), 50.0))
        .collect()
}

/// Coil sweep: 100 MHz … 40 GHz in 100 MHz steps (the bands' edges are on the grid).
pub fn coil_grid() -> Vec<f64> {
    grid(1, 400, 1e8)
}

/// Every file of the small library: (relative path, contents).
pub fn library_files() -> Vec<(String, String)> {
    let mut out = Vec::new();
    let coil = coil_grid();
    let pi_note = |p: &Pi| {
        format!(
            "pi-model: Ls {:e} H, Rs {:e} + {:e}*sqrt(f/1GHz) ohm, Cs {:e} F, Cox {:e} F, Csi {:e} F, Rsi {:e} ohm",
            p.ls, p.rdc, p.rac, p.cs, p.cox, p.csi, p.rsi
        )
    };
    let gen = "invented test part, made by tests/support/mod.rs (do not edit; regenerate)";
    for (name, p, freq) in [
        ("coils/L1p0n.s2p", GOOD, coil.clone()),
        ("coils/L1p0n_lossy.s2p", LOSSY, coil.clone()),
        ("coils/L2p0n_ref.s2p", REF, coil.clone()),
        ("coils/L1p0n_short.s2p", GOOD, grid(1, 40, 1e8)),
        ("misc/extra.s2p", GOOD, coil.clone()),
    ] {
        out.push((
            name.to_string(),
            touchstone(&[gen, &pi_note(&p)], &freq, &two_port(&p, &freq)),
        ));
    }
    let tank_f = grid(1, 100, 1e8);
    out.push((
        "tanks/tank.s1p".to_string(),
        touchstone(
            &[
                gen,
                "tank: 1 nH with 0.5 ohm in series, in parallel with 1 pF",
            ],
            &tank_f,
            &one_port(|f| TANK.y(f), &tank_f),
        ),
    ));
    let cap_f = grid(1, 600, 1e8);
    for (name, c) in [("caps/C0p5p.s1p", CAP_SMALL), ("caps/C2p0p.s1p", CAP_BIG)] {
        let note = format!("series R {:e} ohm, L {:e} H, C {:e} F", c.r, c.l, c.c);
        out.push((
            name.to_string(),
            touchstone(
                &[gen, &note],
                &cap_f,
                &one_port(|f| C::new(1.0, 0.0) / c.z(f), &cap_f),
            ),
        ));
    }
    let xf = grid(1, 200, 1e8);
    let s: Vec<_> = xf.iter().map(|&f| s_from_y(&XFMR.y4(f), 50.0)).collect();
    out.push((
        "xfmr/T1n2n.s4p".to_string(),
        touchstone(
            &[
                gen,
                "windings 1-2: 1 nH, 1 ohm; 3-4: 2 nH, 1.5 ohm; k 0.8; 5 fF per port to ground",
            ],
            &xf,
            &s,
        ),
    ));
    // a file cut short by a bad number on its third data line
    out.push((
        "broken/bad.s2p".to_string(),
        "! invented broken part\n# GHz S RI R 50\n1.0 0.1 0 0.9 0 0.9 0 0.1 0\n2.0 0.1 0 0.9 0 0.9 0 0.1 0\n3.0 0.1 0 0.9 0 0.9 0 0.1 0.x\n".to_string(),
    ));
    out.sort();
    out
}

/// Write the library under `root`.
pub fn write_library(root: &Path) {
    for (rel, text) in library_files() {
        let p = root.join(&rel);
        std::fs::create_dir_all(p.parent().unwrap()).unwrap();
        std::fs::write(p, text).unwrap();
    }
}
