//! Closed-form evaluation of the π-model (Yue & Wong, IEEE JSSC 33(5), 1998):
//! series branch (R_s(f) + jωL_s) ∥ C_s between the ports, and at each port a shunt
//! C_ox in series with R_si ∥ C_si to ground.

use super::PiModel;
use crate::network::C64;

const TAU: f64 = 2.0 * std::f64::consts::PI;

/// Reference frequency of the skin-effect law R_s(f) = R_dc + R_ac·√(f / F_REF).
pub const F_REF: f64 = 1e9;

/// Admittance of one shunt branch: C_ox in series with R_si ∥ C_si,
/// Y = 1 / (1/(jωC_ox) + 1/(1/R_si + jωC_si)).
///
/// `rsi` may be `f64::INFINITY` (no substrate conductance) and `csi` zero; a zero
/// `cox` gives an open branch (Y = 0).
pub fn shunt_y(w: f64, cox: f64, csi: f64, rsi: f64) -> C64 {
    if cox <= 0.0 || w <= 0.0 {
        return C64::new(0.0, 0.0);
    }
    let y_ox = C64::new(0.0, w * cox);
    let g_si = if rsi.is_finite() && rsi > 0.0 {
        1.0 / rsi
    } else if rsi == 0.0 {
        // a shorted substrate (an ideal shield): the branch is C_ox alone
        return y_ox;
    } else {
        0.0
    };
    let y_si = C64::new(g_si, w * csi);
    if y_si.norm_sqr() == 0.0 {
        return C64::new(0.0, 0.0);
    }
    y_ox * y_si / (y_ox + y_si)
}

impl PiModel {
    /// Series resistance with the skin-effect law R_s(f) = R_dc + R_ac·√(f / 1 GHz)
    /// (DESIGN §6.1; the empirical form of methods.md §3.3).
    pub fn rs(&self, f: f64) -> f64 {
        self.rdc + self.rac * (f.max(0.0) / F_REF).sqrt()
    }

    /// Admittance of the coil alone, 1/(R_s(f) + jωL_s), without C_s.
    pub fn coil_y(&self, f: f64) -> C64 {
        let z = C64::new(self.rs(f), TAU * f * self.ls);
        C64::new(1.0, 0.0) / z
    }

    /// Admittance of the series branch: 1/(R_s + jωL_s) + jωC_s (equals −Y12).
    pub fn series_y(&self, f: f64) -> C64 {
        self.coil_y(f) + C64::new(0.0, TAU * f * self.cs)
    }

    /// Admittance of the shunt branch at port 1 (equals Y11 + Y12).
    pub fn shunt1_y(&self, f: f64) -> C64 {
        shunt_y(TAU * f, self.cox1, self.csi1, self.rsi1)
    }

    /// Admittance of the shunt branch at port 2 (equals Y22 + Y21).
    pub fn shunt2_y(&self, f: f64) -> C64 {
        shunt_y(TAU * f, self.cox2, self.csi2, self.rsi2)
    }

    /// The 2-port admittance matrix, row-major [Y11, Y12, Y21, Y22]:
    /// Y11 = Y_ser + Y_sh1, Y22 = Y_ser + Y_sh2, Y12 = Y21 = −Y_ser
    /// (nodal analysis of the π; Pozar, *Microwave Engineering*, §4.3).
    pub fn y2(&self, f: f64) -> [C64; 4] {
        let ys = self.series_y(f);
        [ys + self.shunt1_y(f), -ys, -ys, ys + self.shunt2_y(f)]
    }

    /// Input admittance with port 1 driven and port 2 grounded: Y_in = Y11.
    pub fn y_one_port(&self, f: f64) -> C64 {
        self.series_y(f) + self.shunt1_y(f)
    }

    /// Input admittance of a floating drive between ports 1 and 2:
    /// Y_in = Y_ser + Y_sh1·Y_sh2/(Y_sh1 + Y_sh2) (the two shunts in series through
    /// ground), the inverse of Z11 − Z12 − Z21 + Z22 of [`PiModel::y2`].
    pub fn y_differential(&self, f: f64) -> C64 {
        self.series_y(f) + self.shunts_in_series(f)
    }

    /// The two shunts in series through ground, Y_sh1·Y_sh2/(Y_sh1 + Y_sh2).
    pub fn shunts_in_series(&self, f: f64) -> C64 {
        let (a, b) = (self.shunt1_y(f), self.shunt2_y(f));
        let s = a + b;
        if s.norm_sqr() == 0.0 {
            C64::new(0.0, 0.0)
        } else {
            a * b / s
        }
    }

    /// The same coil over an ideal grounded shield: each shunt replaced by C_ox
    /// alone (R_si → 0), as DESIGN §6.1 defines for `shield_gain`.
    pub fn shielded(&self) -> PiModel {
        PiModel {
            csi1: 0.0,
            rsi1: 0.0,
            csi2: 0.0,
            rsi2: 0.0,
            ..*self
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The reference π-model of methods.md §2.4 (Ls 2 nH, Rs 3 Ω, Cs 20 fF,
    /// Cox 150 fF, Csi 40 fF, Rsi 500 Ω at both ports).
    pub(crate) fn reference() -> PiModel {
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

    fn q_of(y: C64) -> f64 {
        let z = C64::new(1.0, 0.0) / y;
        z.im / z.re
    }

    #[test]
    fn single_ended_q_matches_the_published_test_vector() {
        // Source: methods.md §2.4 table (Q = Im(1/Y11)/Re(1/Y11) of the reference π),
        // itself checked against the Yue–Wong JSSC 1998 closed-form Q.
        let m = reference();
        for (f, q) in [
            (0.5e9, 2.0828),
            (1e9, 4.0662),
            (2e9, 7.0113),
            (5e9, 7.3891),
            (10e9, 3.2155),
        ] {
            let got = q_of(m.y_one_port(f));
            assert!((got - q).abs() < 6e-5, "f {f}: {got} vs {q}");
        }
    }

    #[test]
    fn differential_matches_z_form_and_test_vector() {
        // Source: methods.md §2.2/§2.4: Q_diff 11.048 and L_diff 2.1674 nH at 5 GHz;
        // Zdiff = Z11 − Z12 − Z21 + Z22 (Pozar-style port algebra).
        let m = reference();
        let f = 5e9;
        let y = m.y2(f);
        let det = y[0] * y[3] - y[1] * y[2];
        let zd = (y[0] + y[1] + y[2] + y[3]) / det;
        let yd = m.y_differential(f);
        assert!((C64::new(1.0, 0.0) / yd - zd).norm() < 1e-9 * zd.norm());
        assert!((q_of(yd) - 11.048).abs() < 1e-3);
        let l = (C64::new(1.0, 0.0) / yd).im / (TAU * f);
        assert!((l - 2.1674e-9).abs() < 1e-13);
    }

    #[test]
    fn shunt_limits() {
        // Source: methods.md §3.1 limits: Cp(0) = Cox; Cp(∞) = Cox·Csi/(Cox + Csi).
        let (cox, csi, rsi) = (150e-15, 40e-15, 500.0);
        let lo = shunt_y(TAU * 1e6, cox, csi, rsi).im / (TAU * 1e6);
        assert!((lo - cox).abs() < 1e-4 * cox);
        let w = TAU * 1e14;
        let hi = shunt_y(w, cox, csi, rsi).im / w;
        let ser = cox * csi / (cox + csi);
        assert!((hi - ser).abs() < 1e-4 * ser);
        // shield: C_ox alone
        let s = shunt_y(TAU * 1e9, cox, 0.0, 0.0);
        assert_eq!(s, C64::new(0.0, TAU * 1e9 * cox));
        // open substrate: Cox and Csi in series, lossless
        let o = shunt_y(TAU * 1e9, cox, csi, f64::INFINITY);
        assert!(o.re.abs() < 1e-18 && (o.im / (TAU * 1e9) - ser).abs() < 1e-6 * ser);
    }

    #[test]
    fn skin_law() {
        let m = PiModel {
            rac: 2.0,
            ..reference()
        };
        assert_eq!(m.rs(0.0), 3.0);
        assert!((m.rs(4e9) - 7.0).abs() < 1e-12);
    }
}
