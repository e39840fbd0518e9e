//! Views and figures on networks built from closed-form circuits: an ideal series
//! R-L, a parallel R-L-C, a series R-L-C capacitor, the spiral π-model of
//! methods.md §2.4 and the transformer test model of methods.md §5.2. Each check
//! names its source beside it.

use lcgate::figures::{self, Kind, ViewFigures};
use lcgate::network::{self, convert, Network, PortMap, View, ViewName, C64};
use std::f64::consts::PI;

fn c(re: f64, im: f64) -> C64 {
    C64::new(re, im)
}
fn j() -> C64 {
    c(0.0, 1.0)
}
fn one() -> C64 {
    c(1.0, 0.0)
}

/// 0.05 … 30 GHz in 50 MHz steps: hits 0.5, 1, 2, 5, 10 GHz exactly.
fn grid() -> Vec<f64> {
    (1..=600).map(|k| k as f64 * 5e7).collect()
}

fn one_port_from_z(freq: &[f64], z: impl Fn(f64) -> C64) -> Network {
    let flat: Vec<C64> = freq.iter().map(|&f| z(2.0 * PI * f)).collect();
    Network::from_z(freq.to_vec(), 1, vec![50.0], &flat).unwrap()
}

fn figs_of(net: &Network, v: ViewName, kind: Option<Kind>) -> ViewFigures {
    let view = network::view(net, v, &PortMap::default()).unwrap();
    figures::view_figures(&view, &net.freq, kind)
}

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs()
}

// ---------------------------------------------------------------- π-model

/// The π-model of methods.md §2.4 (Yue–Wong, IEEE JSSC 33(5), 1998): series
/// (Rs + jωLs) ∥ Cs; at each port Cox in series with Rsi ∥ Csi.
struct Pi {
    ls: f64,
    rs: f64,
    cs: f64,
    cox: f64,
    csi: f64,
    rsi: f64,
}

const PI_REF: Pi = Pi {
    ls: 2e-9,
    rs: 3.0,
    cs: 20e-15,
    cox: 150e-15,
    csi: 40e-15,
    rsi: 500.0,
};

impl Pi {
    fn y_series(&self, w: f64) -> C64 {
        one() / (self.rs + j() * w * self.ls) + j() * w * self.cs
    }
    fn y_shunt(&self, w: f64) -> C64 {
        let zox = one() / (j() * w * self.cox);
        let zsub = one() / (one() / self.rsi + j() * w * self.csi);
        one() / (zox + zsub)
    }
    fn y2(&self, w: f64) -> [C64; 4] {
        let (ys, ysh) = (self.y_series(w), self.y_shunt(w));
        [ys + ysh, -ys, -ys, ys + ysh]
    }
    /// d(Y11)/dω in closed form.
    fn dy11(&self, w: f64) -> C64 {
        let zl = self.rs + j() * w * self.ls;
        let d_series = -j() * self.ls / (zl * zl) + j() * self.cs;
        let zox = one() / (j() * w * self.cox);
        let ysub = one() / self.rsi + j() * w * self.csi;
        let zsub = one() / ysub;
        let dzox = -zox / w;
        let dzsub = -j() * self.csi / (ysub * ysub);
        let zsh = zox + zsub;
        d_series - (dzox + dzsub) / (zsh * zsh)
    }
    fn network(&self, freq: &[f64]) -> Network {
        let flat: Vec<C64> = freq.iter().flat_map(|&f| self.y2(2.0 * PI * f)).collect();
        Network::from_y(freq.to_vec(), 2, vec![50.0, 50.0], &flat).unwrap()
    }
}

/// Single-ended Q at 0.5, 1, 2, 5, 10 GHz, SRF, L at 5 GHz: methods.md §2.4
/// (VERIFIED there numerically).
#[test]
fn pi_model_single_ended() {
    let net = PI_REF.network(&grid());
    let f = figs_of(&net, ViewName::SingleEnded, None);
    assert_eq!(f.kind, Kind::Inductor);
    for (ghz, q) in [
        (0.5, 2.0828),
        (1.0, 4.0662),
        (2.0, 7.0113),
        (5.0, 7.3891),
        (10.0, 3.2155),
    ] {
        let got = f.curve_at("q", ghz * 1e9).unwrap();
        assert!((got - q).abs() < 6e-5, "q({ghz} GHz) = {got}, want {q}");
    }
    let srf = f.scalar("srf").unwrap();
    assert!((srf - 15.4635e9).abs() < 1e5, "srf_se {srf}");
    let l5 = f.curve_at("l", 5e9).unwrap();
    assert!((l5 - 2.2515e-9).abs() < 6e-14, "L_se(5 GHz) {l5}");
    // peak Q lies below the SRF and is at least the largest sample
    let qp = f.scalar("q_peak").unwrap();
    let fp = f.scalar("f_q_peak").unwrap();
    assert!(fp < srf && qp >= 7.3891);
    let fh = f.scalar("f_q_half").unwrap();
    let qh = f.curve_at("q", fh).unwrap();
    assert!(fh > fp && fh < srf && (qh - qp / 2.0).abs() < 0.01 * qp);
    // l_low is l at the first point
    assert_eq!(f.scalar("l_low"), f.curves["l"][0]);
}

/// Differential view: SRF_diff 18.687 GHz, L_diff = 2.1674 nH, Q_diff = 11.048 at
/// 5 GHz (methods.md §2.4, VERIFIED there), and Z_diff = Z11 − Z12 − Z21 + Z22
/// from the Z matrix (methods.md §2.2).
#[test]
fn pi_model_differential() {
    let net = PI_REF.network(&grid());
    let f = figs_of(&net, ViewName::Differential, None);
    let srf = f.scalar("srf").unwrap();
    assert!((srf - 18.687e9).abs() < 1e6, "srf_diff {srf}");
    let l5 = f.curve_at("l", 5e9).unwrap();
    assert!((l5 - 2.1674e-9).abs() < 6e-14, "L_diff {l5}");
    let q5 = f.curve_at("q", 5e9).unwrap();
    assert!((q5 - 11.048).abs() < 6e-4, "Q_diff {q5}");
    let View::Driving { y_in, two_port, .. } =
        network::view(&net, ViewName::Differential, &PortMap::default()).unwrap()
    else {
        panic!("differential is a driving view")
    };
    assert!(two_port.is_some());
    for k in [0, 99, 299, 599] {
        let z = net.z_block(k).unwrap();
        let zd = z[0] - z[1] - z[2] + z[3];
        let got = one() / y_in[k];
        assert!((got - zd).norm() < 1e-9 * zd.norm(), "k={k}");
    }
}

/// The Yue–Wong closed-form Q (IEEE JSSC 33(5), 1998; as written in methods.md
/// §3.1) equals the analyser's single-ended q of the π-model data.
#[test]
fn yue_wong_closed_form_q() {
    let p = &PI_REF;
    let net = p.network(&grid());
    let f = figs_of(&net, ViewName::SingleEnded, None);
    for (k, &fr) in net.freq.iter().enumerate().step_by(7) {
        let w = 2.0 * PI * fr;
        let rp = 1.0 / (w * w * p.cox * p.cox * p.rsi)
            + p.rsi * (p.cox + p.csi).powi(2) / (p.cox * p.cox);
        let cp = p.cox * (1.0 + w * w * (p.cox + p.csi) * p.csi * p.rsi * p.rsi)
            / (1.0 + w * w * (p.cox + p.csi).powi(2) * p.rsi * p.rsi);
        let ql = w * p.ls / p.rs;
        // Yue–Wong omit Cs from the series branch's loss; with Cs the closed form
        // holds with Cs + Cp in the resonance factor, as methods.md §3.1 writes it.
        let q = ql * rp / (rp + (ql * ql + 1.0) * p.rs)
            * (1.0 - p.rs * p.rs * (p.cs + cp) / p.ls - w * w * p.ls * (p.cs + cp));
        let got = f.curves["q"][k].unwrap();
        assert!(
            (got - q).abs() < 1e-9 * (1.0 + q.abs()),
            "f={fr}: {got} vs {q}"
        );
    }
}

/// q_tank against the parallel-resonator slope formula Q = (ω·dB/dω + |B|)/(2G)
/// (Pozar, Microwave Engineering §6.1; methods.md §4.1) with dB/dω taken in closed
/// form, and against the tabulated parallel-tuned Q of methods.md §4.2 (VERIFIED).
#[test]
fn pi_model_q_tank() {
    let p = &PI_REF;
    let net = p.network(&grid());
    let f = figs_of(&net, ViewName::SingleEnded, None);
    let srf = f.scalar("srf").unwrap();
    for (k, &fr) in net.freq.iter().enumerate() {
        let w = 2.0 * PI * fr;
        let y = p.y2(w)[0];
        let got = f.curves["q_tank"][k];
        if y.im < 0.0 {
            let want = (w * p.dy11(w).im + y.im.abs()) / (2.0 * y.re);
            let got = got.unwrap();
            assert!(rel(got, want) < 2e-3, "f={fr}: {got} vs {want}");
        } else {
            assert!(got.is_none() && fr > srf * 0.999);
        }
    }
    for (ghz, want) in [
        (1.0, 3.884),
        (2.0, 7.076),
        (5.0, 8.252),
        (8.0, 6.500),
        (10.0, 5.527),
        (12.0, 4.768),
        (13.5, 4.311),
    ] {
        let got = f.curve_at("q_tank", ghz * 1e9).unwrap();
        assert!(
            (got - want).abs() < 2e-3,
            "q_tank({ghz} GHz) = {got}, want {want}"
        );
    }
}

/// Single-ended and differential from a port map: swapping the ports of an
/// asymmetric π gives Y22 as the input (DESIGN §5 port renaming).
#[test]
fn port_map_swaps_driven_port() {
    let freq = vec![1e9, 2e9, 3e9];
    let a = &PI_REF;
    let b = Pi {
        rsi: 80.0,
        ..PI_REF
    };
    let flat: Vec<C64> = freq
        .iter()
        .flat_map(|&f| {
            let w = 2.0 * PI * f;
            let ys = a.y_series(w);
            [ys + a.y_shunt(w), -ys, -ys, ys + b.y_shunt(w)]
        })
        .collect();
    let net = Network::from_y(freq.clone(), 2, vec![50.0, 50.0], &flat).unwrap();
    let pm = PortMap {
        pair: [2, 1],
        ..PortMap::default()
    };
    let View::Driving { y_in, .. } = network::view(&net, ViewName::SingleEnded, &pm).unwrap()
    else {
        panic!()
    };
    for k in 0..3 {
        let want = flat[k * 4 + 3];
        assert!((y_in[k] - want).norm() < 1e-12 * want.norm());
    }
}

// ------------------------------------------------------- simple circuits

/// Ideal series R-L (1-port): l = L, r = R, q = ωL/R exactly (definition, DESIGN
/// §6); no SRF in the sweep; q_tank = Q³/(1 + Q²), the parallel-resonator slope
/// formula (Pozar §6.1) applied to Y = 1/(R + jωL) (methods.md §4.2).
#[test]
fn series_rl() {
    let (r, l) = (2.0, 1.5e-9);
    let freq: Vec<f64> = (0..60).map(|k| 1e8 * 1.1f64.powi(k)).collect();
    let net = one_port_from_z(&freq, |w| c(r, w * l));
    let f = figs_of(&net, ViewName::OnePort, None);
    assert_eq!(f.kind, Kind::Inductor);
    assert_eq!(f.scalar("srf"), None);
    for (k, &fr) in freq.iter().enumerate() {
        let q = 2.0 * PI * fr * l / r;
        assert!(rel(f.curves["l"][k].unwrap(), l) < 1e-10);
        assert!(rel(f.curves["r"][k].unwrap(), r) < 1e-10);
        assert!(rel(f.curves["q"][k].unwrap(), q) < 1e-10);
        let qt = f.curves["q_tank"][k].unwrap();
        assert!(rel(qt, q.powi(3) / (1.0 + q * q)) < 2e-3, "f={fr}");
    }
    // q rises to the end of the sweep: the peak is the last sample
    let last = *freq.last().unwrap();
    assert_eq!(f.scalar("f_q_peak"), Some(last));
    assert_eq!(f.scalar("f_q_half"), None);
    assert!(rel(f.scalar("l_low").unwrap(), l) < 1e-10);
}

/// Parallel R-L-C (1-port): SRF = 1/(2π√(LC)), and q_tank = R/(ωL), the Q of a
/// parallel resonant circuit (Pozar, Microwave Engineering §6.1); here
/// B = ωC − 1/(ωL), so the three-point slope is exact.
#[test]
fn parallel_rlc() {
    let (r, l, cap) = (800.0, 2e-9, 100e-15);
    let freq: Vec<f64> = (1..=40).map(|k| k as f64 * 0.7e9).collect();
    let flat: Vec<C64> = freq
        .iter()
        .map(|&f| {
            let w = 2.0 * PI * f;
            one() / r + one() / (j() * w * l) + j() * w * cap
        })
        .collect();
    let net = Network::from_y(freq.clone(), 1, vec![50.0], &flat).unwrap();
    let f = figs_of(&net, ViewName::OnePort, None);
    let f0 = 1.0 / (2.0 * PI * (l * cap).sqrt());
    let srf = f.scalar("srf").unwrap();
    assert!(rel(srf, f0) < 1e-9, "srf {srf} vs {f0}");
    for (k, &fr) in freq.iter().enumerate() {
        let qt = f.curves["q_tank"][k];
        if fr < f0 {
            assert!(rel(qt.unwrap(), r / (2.0 * PI * fr * l)) < 1e-9);
        } else {
            assert_eq!(qt, None);
        }
    }
    // above the SRF the impedance Q is negative (signed, DESIGN §6)
    assert!(f.curves["q"].last().unwrap().unwrap() < 0.0);
}

/// Series R-L-C capacitor (1-port): c = C/(1 − ω²LC) (methods.md §5.1: ESL raises
/// the effective C), esr = R, q = −X/R, srf = 1/(2π√(LC)) (Pozar §6.1), c_low.
#[test]
fn series_rlc_capacitor() {
    let (r, l, cap) = (0.5, 50e-12, 2e-12);
    let freq: Vec<f64> = (1..=50).map(|k| k as f64 * 1e9).collect();
    let net = one_port_from_z(&freq, |w| c(r, w * l - 1.0 / (w * cap)));
    let f = figs_of(&net, ViewName::OnePort, None);
    assert_eq!(f.kind, Kind::Capacitor);
    let f0 = 1.0 / (2.0 * PI * (l * cap).sqrt());
    assert!(rel(f.scalar("srf").unwrap(), f0) < 1e-9);
    for (k, &fr) in freq.iter().enumerate() {
        let w = 2.0 * PI * fr;
        let ceff = cap / (1.0 - w * w * l * cap);
        assert!(rel(f.curves["c"][k].unwrap(), ceff) < 1e-9);
        assert!(rel(f.curves["esr"][k].unwrap(), r) < 1e-9);
        let x = w * l - 1.0 / (w * cap);
        assert!(rel(f.curves["q"][k].unwrap(), -x / r) < 1e-9);
    }
    assert_eq!(f.scalar("c_low"), f.curves["c"][0]);
}

// ---------------------------------------------------------- centre tap

/// Two symmetric coupled halves (Zh = R + jωL each, mutual M, node capacitance C)
/// with the tap grounded: Z_d = 2/(1/(Zh + jωM) + jωC) (series-aiding coupled
/// coils, common practice, no source; methods.md §2.3 notes L ≈ 2(L + M)). The tap
/// is placed at port 2 to exercise the port map.
#[test]
fn centre_tapped_symmetric() {
    let (r, l, m, cn) = (2.0, 1e-9, 0.35e-9, 30e-15);
    let freq: Vec<f64> = (1..=20).map(|k| k as f64 * 1e9).collect();
    // node order: 0 = end A, 1 = tap, 2 = end B; branch 1 A→tap, branch 2 tap→B
    let mut flat = Vec::new();
    for &f in &freq {
        let w = 2.0 * PI * f;
        let zh = r + j() * w * l;
        let zm = j() * w * m;
        let det = zh * zh - zm * zm;
        let yb = [zh / det, -zm / det, -zm / det, zh / det];
        let a = [[1.0, 0.0], [-1.0, 1.0], [0.0, -1.0]]; // nodes × branches
        for n1 in 0..3 {
            for n2 in 0..3 {
                let mut v = c(0.0, 0.0);
                for b1 in 0..2 {
                    for b2 in 0..2 {
                        v += a[n1][b1] * yb[b1 * 2 + b2] * a[n2][b2];
                    }
                }
                if n1 == n2 {
                    v += j() * w * cn;
                }
                flat.push(v);
            }
        }
    }
    let net = Network::from_y(freq.clone(), 3, vec![50.0; 3], &flat).unwrap();
    let pm = PortMap {
        pair: [1, 3],
        tap: 2,
        ..PortMap::default()
    };
    let View::Driving { y_in, two_port, .. } =
        network::view(&net, ViewName::CentreTapped, &pm).unwrap()
    else {
        panic!()
    };
    assert!(two_port.is_some());
    for (k, &f) in freq.iter().enumerate() {
        let w = 2.0 * PI * f;
        let zd = 2.0 / (one() / (r + j() * w * (l + m)) + j() * w * cn);
        let got = one() / y_in[k];
        assert!((got - zd).norm() < 1e-9 * zd.norm(), "f={f}: {got} vs {zd}");
    }
    // the tap named twice is refused
    let bad = PortMap {
        pair: [1, 2],
        tap: 2,
        ..PortMap::default()
    };
    assert!(network::view(&net, ViewName::CentreTapped, &bad).is_err());
}

// ---------------------------------------------------------- transformer

/// The transformer test model of methods.md §5.2 (L1 = 1 nH, L2 = 1.5 nH, k = 0.7,
/// R1 = 2 Ω, R2 = 3 Ω, 20 fF between the windings' hot ends, a 30 fF + 200 Ω series
/// shunt at each hot end): its ground-referenced 2-port Y.
fn xfmr_y2(w: f64) -> [C64; 4] {
    let (l1, l2, k, r1, r2): (f64, f64, f64, f64, f64) = (1e-9, 1.5e-9, 0.7, 2.0, 3.0);
    let zm = j() * w * k * (l1 * l2).sqrt();
    let z = [r1 + j() * w * l1, zm, zm, r2 + j() * w * l2];
    let det = z[0] * z[3] - z[1] * z[2];
    let yc = j() * w * 20e-15;
    let ysh = one() / (200.0 + one() / (j() * w * 30e-15));
    [
        z[3] / det + yc + ysh,
        -z[1] / det - yc,
        -z[2] / det - yc,
        z[0] / det + yc + ysh,
    ]
}

/// A 4-port whose cold ends (ports 2, 4) go to ground through `r_cold` (0 = an ideal
/// short): winding Z = 2-port Z + r_cold·I exactly.
fn xfmr_net(freq: &[f64], r_cold: f64) -> Network {
    let mut s = Vec::new();
    for &f in freq {
        let y2 = xfmr_y2(2.0 * PI * f);
        let s2 = convert::y_to_s(&y2, 2, &[50.0, 50.0]).unwrap();
        let sc = c((r_cold - 50.0) / (r_cold + 50.0), 0.0);
        let zero = c(0.0, 0.0);
        // port order 1 = hot 1, 2 = cold 1, 3 = hot 2, 4 = cold 2
        s.extend([
            s2[0], zero, s2[1], zero, //
            zero, sc, zero, zero, //
            s2[2], zero, s2[3], zero, //
            zero, zero, zero, sc,
        ]);
    }
    Network {
        freq: freq.to_vec(),
        ports: 4,
        z0: vec![50.0; 4],
        s,
    }
}

/// k_Z 0.7007 / 0.7098 and G_max 0.41420 / 0.80878 (IL_min 3.828 / 0.922 dB) at
/// 1 / 5 GHz: methods.md §5.2 (VERIFIED there). Cold ends shorted: the Z route.
#[test]
fn transformer_test_model() {
    let freq: Vec<f64> = (1..=10).map(|k| k as f64 * 1e9).collect();
    for r_cold in [0.0, 1.0] {
        let net = xfmr_net(&freq, r_cold);
        let f = figs_of(&net, ViewName::Transformer, None);
        assert_eq!(f.kind, Kind::Transformer);
        assert!((f.curve_at("k", 1e9).unwrap() - 0.7007).abs() < 6e-5);
        assert!((f.curve_at("k", 5e9).unwrap() - 0.7098).abs() < 6e-5);
        let View::Windings { z, .. } =
            network::view(&net, ViewName::Transformer, &PortMap::default()).unwrap()
        else {
            panic!()
        };
        for (k, &fr) in freq.iter().enumerate() {
            let y2 = xfmr_y2(2.0 * PI * fr);
            let det = y2[0] * y2[3] - y2[1] * y2[2];
            let z2 = [
                y2[3] / det + r_cold,
                -y2[1] / det,
                -y2[2] / det,
                y2[0] / det + r_cold,
            ];
            for i in 0..4 {
                assert!((z[k][i] - z2[i]).norm() < 1e-9 * z2[i].norm().max(1.0));
            }
        }
        if r_cold == 0.0 {
            let g1 = 10f64.powf(-f.curve_at("il_min", 1e9).unwrap() / 10.0);
            let g5 = 10f64.powf(-f.curve_at("il_min", 5e9).unwrap() / 10.0);
            assert!((g1 - 0.41420).abs() < 6e-6, "G_max(1 GHz) {g1}");
            assert!((g5 - 0.80878).abs() < 6e-6, "G_max(5 GHz) {g5}");
            let l1 = f.curve_at("l1", 1e9).unwrap();
            assert!(l1 > 0.9e-9 && l1 < 1.1e-9);
        }
    }
}

// ----------------------------------------------------- views vs general

/// Views computed from S with the fast paths agree with the general LU conversions
/// (single-ended Y_in = Y11 on 2…8 ports; differential Z11 − Z12 − Z21 + Z22).
#[test]
fn views_agree_with_general_solver() {
    for n in 2..=8usize {
        // a passive reciprocal Z: R = AAᵀ + I, X symmetric
        let mut z = vec![c(0.0, 0.0); n * n];
        for i in 0..n {
            for k in 0..n {
                let mut r = if i == k { 1.0 } else { 0.0 };
                for t in 0..n {
                    r += ((i * 3 + t * 5) % 7) as f64 * ((k * 3 + t * 5) % 7) as f64 * 0.3;
                }
                let x = ((i + k) as f64 * 17.0) % 40.0 - 20.0;
                z[i * n + k] = c(r, x);
            }
        }
        let z0: Vec<f64> = (0..n).map(|i| 30.0 + 10.0 * i as f64).collect();
        let s = convert::general::z_to_s(&z, n, &z0).unwrap();
        let net = Network {
            freq: vec![1e9],
            ports: n,
            z0: z0.clone(),
            s: s.clone(),
        };
        let View::Driving { y_in, .. } =
            network::view(&net, ViewName::SingleEnded, &PortMap::default()).unwrap()
        else {
            panic!()
        };
        let yg = convert::general::s_to_y(&s, n, &z0).unwrap();
        assert!((y_in[0] - yg[0]).norm() < 1e-12 * yg[0].norm(), "n={n}");
        if n == 2 {
            let View::Driving { y_in, .. } =
                network::view(&net, ViewName::Differential, &PortMap::default()).unwrap()
            else {
                panic!()
            };
            let zg = convert::general::s_to_z(&s, n, &z0).unwrap();
            let zd = zg[0] - zg[1] - zg[2] + zg[3];
            assert!((one() / y_in[0] - zd).norm() < 1e-10 * zd.norm());
        }
    }
}

/// Data checks: a lossless network has σ_max = 1 (margin 0), a matched attenuator
/// has margin 1 − |S21| (Pozar §4.3, unitary S of lossless networks); an
/// asymmetric S shows its reciprocity error.
#[test]
fn data_checks_basic() {
    // lossless series inductor 2-port
    let freq = vec![1e9, 2e9];
    let net = Network::from_z(freq.clone(), 1, vec![50.0], &[c(0.0, 10.0), c(0.0, 20.0)]).unwrap();
    let d = figures::data_checks(&net);
    assert!(d.passivity_margin.unwrap().abs() < 1e-12);
    assert_eq!((d.points, d.ports, d.f_min, d.f_max), (2, 1, 1e9, 2e9));
    let zero = c(0.0, 0.0);
    let net = Network {
        freq: vec![1e9],
        ports: 2,
        z0: vec![50.0; 2],
        s: vec![zero, c(0.5, 0.0), c(0.4, 0.0), zero],
    };
    let d = figures::data_checks(&net);
    assert!((d.passivity_margin.unwrap() - 0.5).abs() < 1e-12);
    assert!((d.reciprocity_error.unwrap() - 0.1).abs() < 1e-12);
    // 3-port through the general SVD
    let net = Network {
        freq: vec![1e9],
        ports: 3,
        z0: vec![50.0; 3],
        s: vec![
            zero,
            c(0.0, 0.9),
            zero,
            c(0.0, 0.9),
            zero,
            zero,
            zero,
            zero,
            c(0.3, 0.0),
        ],
    };
    let d = figures::data_checks(&net);
    assert!((d.passivity_margin.unwrap() - 0.1).abs() < 1e-12);
}
