//! S ↔ Z ↔ Y conversions against the textbook relations of D. M. Pozar, *Microwave
//! Engineering* (4th ed., §4.3 and Table 4.2), on random passive reciprocal N-ports.

use lcgate::network::convert::{self, general};
use lcgate::network::{Network, C64};
use proptest::prelude::*;

fn c(re: f64, im: f64) -> C64 {
    C64::new(re, im)
}

/// Z = R + jX with R = AAᵀ + 0.5·I (positive definite ⇒ passive, Hermitian part ⪰ 0:
/// methods.md §5.3) and X symmetric (reciprocal). Entries in ohms.
fn passive_z(n: usize, a: &[f64], x: &[f64]) -> Vec<C64> {
    let mut z = vec![c(0.0, 0.0); n * n];
    for i in 0..n {
        for j in 0..n {
            let mut r = if i == j { 0.5 } else { 0.0 };
            for k in 0..n {
                r += a[i * n + k] * a[j * n + k];
            }
            let xi = x[i.min(j) * n + i.max(j)];
            z[i * n + j] = c(r, xi);
        }
    }
    z
}

fn max_rel(a: &[C64], b: &[C64]) -> f64 {
    let scale = b.iter().map(|v| v.norm()).fold(1e-300, f64::max);
    a.iter()
        .zip(b)
        .map(|(x, y)| (x - y).norm() / scale)
        .fold(0.0, f64::max)
}

fn matmul(a: &[C64], b: &[C64], n: usize) -> Vec<C64> {
    let mut out = vec![c(0.0, 0.0); n * n];
    for i in 0..n {
        for j in 0..n {
            for k in 0..n {
                out[i * n + j] += a[i * n + k] * b[k * n + j];
            }
        }
    }
    out
}

fn arb_case() -> impl Strategy<Value = (usize, Vec<f64>, Vec<f64>, Vec<f64>)> {
    (1usize..=8).prop_flat_map(|n| {
        (
            Just(n),
            prop::collection::vec(-6.0f64..6.0, n * n),
            prop::collection::vec(-200.0f64..200.0, n * n),
            prop::collection::vec(10.0f64..120.0, n),
        )
    })
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(300))]

    /// Pozar §4.3: S = (Z − Z0)(Z + Z0)⁻¹ and its inverse relations; the round trips
    /// must reproduce the matrices, Y·Z = I, and the passive S must have σ_max ≤ 1.
    #[test]
    fn round_trips((n, a, x, z0) in arb_case()) {
        let z = passive_z(n, &a, &x);
        let s = convert::z_to_s(&z, n, &z0).expect("passive Z has S");
        // passivity survives the conversion (methods.md §5.3)
        let smax = lcgate::figures::sigma_max(&s, n).unwrap();
        prop_assert!(smax <= 1.0 + 1e-12, "sigma_max {smax}");
        // reciprocity survives with real references (methods.md §5.4)
        for i in 0..n { for j in 0..n {
            prop_assert!((s[i*n+j] - s[j*n+i]).norm() < 1e-12);
        }}
        let z2 = convert::s_to_z(&s, n, &z0).expect("Z exists");
        prop_assert!(max_rel(&z2, &z) < 1e-10, "Z round trip {}", max_rel(&z2, &z));
        let y = convert::s_to_y(&s, n, &z0).expect("Y exists");
        let eye = matmul(&y, &z, n);
        for i in 0..n { for j in 0..n {
            let want = if i == j { 1.0 } else { 0.0 };
            prop_assert!((eye[i*n+j] - c(want, 0.0)).norm() < 1e-9, "Y·Z ≠ I");
        }}
        let s2 = convert::y_to_s(&y, n, &z0).expect("S from Y");
        prop_assert!(max_rel(&s2, &s) < 1e-10);
        // fast paths (closed forms for n ≤ 2) agree with the general LU solver
        let pairs = [
            (convert::z_to_s(&z, n, &z0), general::z_to_s(&z, n, &z0)),
            (convert::s_to_z(&s, n, &z0), general::s_to_z(&s, n, &z0)),
            (convert::s_to_y(&s, n, &z0), general::s_to_y(&s, n, &z0)),
            (convert::y_to_s(&y, n, &z0), general::y_to_s(&y, n, &z0)),
        ];
        for (fast, gen) in pairs {
            let (fast, gen) = (fast.unwrap(), gen.unwrap());
            prop_assert!(max_rel(&fast, &gen) < 1e-11);
        }
    }
}

/// Pozar Table 4.2 (equal real Z0), written out here term by term:
/// Z11 = Z0[(1+S11)(1−S22) + S12S21]/Δ, Z12 = 2Z0S12/Δ, Z21 = 2Z0S21/Δ,
/// Z22 = Z0[(1−S11)(1+S22) + S12S21]/Δ, Δ = (1−S11)(1−S22) − S12S21, and the Y
/// column with Δ' = (1+S11)(1+S22) − S12S21.
#[test]
fn two_port_closed_forms_pozar() {
    let one = c(1.0, 0.0);
    let z0 = 50.0;
    let s = [c(0.3, -0.4), c(0.5, 0.2), c(0.45, 0.25), c(-0.1, 0.35)];
    let (s11, s12, s21, s22) = (s[0], s[1], s[2], s[3]);
    let d = (one - s11) * (one - s22) - s12 * s21;
    let zp = [
        z0 * ((one + s11) * (one - s22) + s12 * s21) / d,
        2.0 * z0 * s12 / d,
        2.0 * z0 * s21 / d,
        z0 * ((one - s11) * (one + s22) + s12 * s21) / d,
    ];
    let dp = (one + s11) * (one + s22) - s12 * s21;
    let y0 = 1.0 / z0;
    let yp = [
        y0 * ((one - s11) * (one + s22) + s12 * s21) / dp,
        -2.0 * y0 * s12 / dp,
        -2.0 * y0 * s21 / dp,
        y0 * ((one + s11) * (one - s22) + s12 * s21) / dp,
    ];
    for f in [convert::s_to_z, general::s_to_z] {
        assert!(max_rel(&f(&s, 2, &[z0, z0]).unwrap(), &zp) < 1e-14);
    }
    for f in [convert::s_to_y, general::s_to_y] {
        assert!(max_rel(&f(&s, 2, &[z0, z0]).unwrap(), &yp) < 1e-14);
    }
    assert!(max_rel(&convert::z_to_s(&zp, 2, &[z0, z0]).unwrap(), &s) < 1e-14);
    assert!(max_rel(&convert::y_to_s(&yp, 2, &[z0, z0]).unwrap(), &s) < 1e-14);
}

/// Network::from_z / from_y / z_block / y_block agree with the block functions.
#[test]
fn network_blocks() {
    let n = 3;
    let a: Vec<f64> = (0..9).map(|k| ((k * 7 % 5) as f64 - 2.0) * 0.8).collect();
    let x: Vec<f64> = (0..9).map(|k| (k as f64 - 4.0) * 13.0).collect();
    let z = passive_z(n, &a, &x);
    let mut flat = z.clone();
    flat.extend(z.iter().map(|v| v * 2.0));
    let net = Network::from_z(vec![1e9, 2e9], n, vec![50.0, 25.0, 75.0], &flat).unwrap();
    assert!(max_rel(&net.z_block(1).unwrap(), &flat[9..]) < 1e-12);
    let y = net.y_block(0).unwrap();
    let mut yflat = y.clone();
    yflat.extend(net.y_block(1).unwrap());
    let back = Network::from_y(net.freq.clone(), n, net.z0.clone(), &yflat).unwrap();
    assert!(max_rel(&back.s, &net.s) < 1e-12);
    assert!(Network::from_z(vec![1e9], n, vec![50.0; 3], &flat).is_none());
}
