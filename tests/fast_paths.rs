//! The fast paths give the same numbers as the straightforward ones (issue 8).
//!
//! - The reader's float conversion (Clinger's exact fast path in
//!   `touchstone::lex::parse_number`, with the standard parser as fallback) against
//!   `str::parse::<f64>`, which is correctly rounded (Rust's `core::num::dec2flt`, the
//!   Eisel–Lemire algorithm with an exact big-decimal fallback): bit for bit, on single
//!   tokens of the Touchstone number grammar and on whole files read against a naive
//!   `split_whitespace` + `parse::<f64>` of their data lines.
//! - The closed-form 1- and 2-port conversions and 2×2 solves, and every view on 1–8
//!   ports, against the general LU path and against a reference written here with
//!   nalgebra's general inverse (Pozar, *Microwave Engineering*, 4th ed., §4.3:
//!   Z = D (I − S)⁻¹ (I + S) D, Y = D⁻¹ (I + S)⁻¹ (I − S) D⁻¹, D = diag(√z0)).

use lcgate::network::convert::{self, general};
use lcgate::network::{self, Network, PortMap, View, ViewName, C64};
use lcgate::touchstone::lex::{parse_number, NumError};
use lcgate::touchstone::{self, Format, FreqUnit, Param, Version, WriteOptions};
use nalgebra::DMatrix;
use proptest::prelude::*;

// ------------------------------------------------------------------ numbers

/// One token of the grammar `[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?` (the reader's
/// module doc, after the Touchstone specification's number syntax), with exponents
/// −400..400 so both the fast path (≤ 19 digits, |e| ≤ 22) and the fallback, the
/// subnormal range, underflow to zero and overflow are reached.
fn arb_token() -> impl Strategy<Value = String> {
    let sign = prop_oneof![Just(""), Just("+"), Just("-")];
    // short mantissas hit the fast path; long ones (up to 30 digits) the fallback
    let digits = |max: usize| prop::collection::vec(0u8..10, 0..=max);
    let body = (digits(20), digits(12), 0u8..4).prop_filter_map(
        "a number has at least one digit",
        |(int, frac, dot)| {
            let s = |d: &[u8]| d.iter().map(|d| char::from(b'0' + d)).collect::<String>();
            let (i, f) = (s(&int), s(&frac));
            match dot {
                // no dot: the fraction digits join the integer part
                0 if !(i.is_empty() && f.is_empty()) => Some(format!("{i}{f}")),
                // leading dot (`.5`)
                1 if !f.is_empty() => Some(format!(".{f}")),
                // trailing dot (`5.`)
                2 if !i.is_empty() => Some(format!("{i}.")),
                3 if !(i.is_empty() && f.is_empty()) => Some(format!("{i}.{f}")),
                _ => None,
            }
        },
    );
    let exp = prop_oneof![
        1 => Just(String::new()),
        2 => (
            prop_oneof![Just("e"), Just("E")],
            prop_oneof![Just(""), Just("+"), Just("-")],
            -400i32..=400,
            0usize..3,
        )
            .prop_map(|(e, s, v, zeros)| {
                // a written sign only on non-negative values (`e+5`, `e5`); leading
                // zeros in the exponent are legal (`e-05`)
                let (sign, mag) = if v < 0 { ("-", -v) } else { (s, v) };
                format!("{e}{sign}{}{mag}", "0".repeat(zeros))
            }),
        // small exponents, the fast path's range
        2 => (-25i32..=25).prop_map(|v| format!("e{v}")),
    ];
    (sign, body, exp).prop_map(|(s, b, e)| format!("{s}{b}{e}"))
}

/// The reader's value against std's correctly rounded one: bit-identical when finite,
/// `NonFinite` exactly when std overflows to infinity.
fn agrees_with_std(t: &str) -> Result<(), String> {
    let want: f64 = t.parse().map_err(|e| format!("std refuses `{t}`: {e}"))?;
    match parse_number(t.as_bytes()) {
        Ok(v) if v.to_bits() == want.to_bits() => Ok(()),
        Ok(v) => Err(format!(
            "`{t}`: reader {v:e} ({:#x}), std {want:e} ({:#x})",
            v.to_bits(),
            want.to_bits()
        )),
        Err(NumError::NonFinite) if want.is_infinite() => Ok(()),
        Err(e) => Err(format!("`{t}`: reader {e:?}, std {want:e}")),
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(4000))]

    #[test]
    fn number_tokens_match_std(t in arb_token()) {
        if let Err(msg) = agrees_with_std(&t) {
            prop_assert!(false, "{}", msg);
        }
    }
}

/// Tokens at the edges of Clinger's fast path and of the f64 range. The expected
/// values are std's (correctly rounded); the comments say why each case is hard.
#[test]
fn number_edge_cases_match_std() {
    let cases = [
        "0",
        "-0",
        "+0",
        "0.",
        ".0",
        "-.0",
        "0e-400",
        "-0e400",
        // 2^53 and 2^53 + 1: the fast path's mantissa limit, and a halfway case
        "9007199254740992",
        "9007199254740993",
        "9007199254740993.0",
        "900719925474099.3e1",
        // 19 and 20 significant digits: the fast path stops at 19
        "1234567890123456789",
        "12345678901234567890",
        "1.234567890123456789e-5",
        "18446744073709551615",
        "18446744073709551616", // u64::MAX, and one above
        // 10^22 is the largest exact power of ten; 10^23 is not exact
        "1e22",
        "1e23",
        "1E+22",
        "1e-22",
        "1e-23",
        "4.5e22",
        "4.5e-22",
        // digits × power both exact, but the product is not (one rounding)
        "123456789e15",
        "0.1",
        "0.2",
        "0.3",
        "1.1",
        "2.675",
        "3.14159265358979323846",
        // the f64 range: largest finite, the first value that rounds to infinity,
        // smallest normal, smallest subnormal, below half of it (→ 0)
        "1.7976931348623157e308",
        "1.7976931348623158e308",
        "1.7976931348623159e308",
        "1e309",
        "-1e309",
        "2.2250738585072014e-308",
        "2.2250738585072011e-308",
        "4.9406564584124654e-324",
        "5e-324",
        "2.4703282292062327e-324",
        "2.4703282292062328e-324",
        "1e-400",
        // long mantissas that std must round through its slow path
        "0.10000000000000000555111512312578270211815834045410156250001",
        "7.2057594037927933e16",
        "7.2057594037927935e16",
        "000000000000000000000001",
        "1.00000000000000011102230246251565404236316680908203125",
        // typical Touchstone data, as tools write it
        "2.4000000000E+09",
        "-1.234567e-03",
        "9.87654321E-01",
        "5.0e+001",
        "1e0",
    ];
    for t in cases {
        agrees_with_std(t).unwrap();
    }
    // not numbers: the reader refuses what the grammar excludes
    for t in [
        ".", "+", "-", "e5", ".e5", "1e", "1e+", "1.2.3", "nan", "inf", "0x10", "1_0", "1e5.0",
        "--1", "",
    ] {
        assert_eq!(
            parse_number(t.as_bytes()),
            Err(NumError::Malformed),
            "`{t}`"
        );
    }
}

// --------------------------------------------------------------- whole files

/// Every number on the data lines of a version-1 file, read the naive way: drop
/// comments (`!` to the end of the line) and the option line, split on whitespace,
/// `str::parse::<f64>` each token.
fn naive_numbers(text: &str) -> Vec<f64> {
    text.lines()
        .map(|l| l.split('!').next().unwrap_or(""))
        .filter(|l| !l.trim_start().starts_with('#'))
        .flat_map(str::split_whitespace)
        .map(|t| t.parse::<f64>().expect("the test writes only numbers"))
        .collect()
}

/// The naive numbers as a network: records of 1 + 2N² numbers (frequency, then RI
/// pairs row by row; a version-1 2-port is written 11 21 12 22, the Touchstone
/// specification's order), frequency times the unit's multiplier.
fn naive_network(nums: &[f64], n: usize, mult: f64) -> (Vec<f64>, Vec<C64>) {
    let rec = 1 + 2 * n * n;
    assert_eq!(nums.len() % rec, 0, "whole records");
    let mut freq = Vec::new();
    let mut s = Vec::new();
    for r in nums.chunks_exact(rec) {
        freq.push(r[0] * mult);
        let mut block = vec![C64::new(0.0, 0.0); n * n];
        for p in 0..n * n {
            let (i, j) = if n == 2 {
                (p % 2, p / 2)
            } else {
                (p / n, p % n)
            };
            block[i * n + j] = C64::new(r[1 + 2 * p], r[2 + 2 * p]);
        }
        s.extend(block);
    }
    (freq, s)
}

fn same_bits(a: &[f64], b: &[f64]) -> bool {
    a.len() == b.len() && a.iter().zip(b).all(|(x, y)| x.to_bits() == y.to_bits())
}

fn same_bits_c(a: &[C64], b: &[C64]) -> bool {
    a.len() == b.len()
        && a.iter()
            .zip(b)
            .all(|(x, y)| x.re.to_bits() == y.re.to_bits() && x.im.to_bits() == y.im.to_bits())
}

/// Files written by lcgate's own writer (shortest round-trip numbers) for 1, 2, 4
/// and 8 ports read back to exactly what a naive parse of their text gives.
#[test]
fn written_files_read_as_naive_parse() {
    let mut rng = Lcg(0x0fa5_7a7b);
    for n in [1usize, 2, 3, 4, 8] {
        let points = 97;
        let freq: Vec<f64> = (0..points)
            .map(|k| 1e8 * (1.0 + k as f64) * 1.013)
            .collect();
        let s: Vec<C64> = (0..points * n * n)
            .map(|_| C64::new(rng.between(-0.9, 0.9), rng.between(-0.9, 0.9)))
            .collect();
        let net = Network {
            freq,
            ports: n,
            z0: vec![50.0; n],
            s,
        };
        let opts = WriteOptions {
            version: Version::V1_1,
            param: Param::S,
            format: Format::RI,
            unit: FreqUnit::GHz,
            comments: vec!["fast-path check".into()],
        };
        let text = touchstone::write_string(&net, &opts);
        let got = touchstone::read_bytes(&format!("t.s{n}p"), text.as_bytes())
            .unwrap()
            .network;
        let (freq, s) = naive_network(&naive_numbers(&text), n, 1e9);
        assert!(same_bits(&got.freq, &freq), "{n}-port frequencies");
        assert!(same_bits_c(&got.s, &s), "{n}-port S");
    }
}

/// A 2-port file in the Touchstone specification's option-line syntax whose numbers
/// are random tokens of every shape the grammar allows (signs, leading and trailing
/// dots, exponent forms), separated by spaces and tabs, with comments.
fn arb_file() -> impl Strategy<Value = String> {
    // finite values only: an overflowing number is an error in a file
    let value = arb_token().prop_map(|t| {
        if t.parse::<f64>().map_or(true, f64::is_infinite) {
            "0".to_string()
        } else {
            t
        }
    });
    prop::collection::vec((prop::collection::vec(value, 8), 0u8..3), 1..12).prop_map(|rows| {
        let mut out = String::from("! random tokens\n# MHz S RI R 50\n");
        for (k, (vals, sep)) in rows.iter().enumerate() {
            let sep = ["  ", "\t", " \t "][usize::from(*sep)];
            // strictly increasing frequencies, in the forms tools write them
            let f = match k % 3 {
                0 => format!("{}", 100 + 10 * k),
                1 => format!("{}.0E+00", 100 + 10 * k),
                _ => format!("{}e-1", (100 + 10 * k) * 10),
            };
            out.push_str(&f);
            for v in vals {
                out.push_str(sep);
                out.push_str(v);
            }
            if k % 4 == 1 {
                out.push_str(" ! note");
            }
            out.push('\n');
        }
        out
    })
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(300))]

    #[test]
    fn random_token_files_read_as_naive_parse(text in arb_file()) {
        let got = touchstone::read_bytes("t.s2p", text.as_bytes()).map_err(|e| TestCaseError::fail(format!("{e}\n{text}")))?.network;
        let (freq, s) = naive_network(&naive_numbers(&text), 2, 1e6);
        prop_assert!(same_bits(&got.freq, &freq), "frequencies\n{}", text);
        prop_assert!(same_bits_c(&got.s, &s), "S\n{}", text);
    }
}

// ------------------------------------------------------- conversions, views

/// A small linear congruential generator (Knuth's MMIX constants): the networks are
/// the same on every run, so a tolerance is never met by luck.
struct Lcg(u64);
impl Lcg {
    fn next(&mut self) -> f64 {
        self.0 = self
            .0
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        (self.0 >> 11) as f64 / (1u64 << 53) as f64
    }
    fn between(&mut self, lo: f64, hi: f64) -> f64 {
        lo + (hi - lo) * self.next()
    }
}

/// A random N×N S with spectral norm ≤ 0.6 (scaled by its Frobenius norm, an upper
/// bound): I ± S then have condition numbers ≤ 1.6/0.4 = 4, so every matrix solved
/// is well conditioned and 1e-12 is a fair relative tolerance. References 20–120 Ω.
fn random_network(rng: &mut Lcg, n: usize, points: usize) -> Network {
    let mut s = Vec::with_capacity(points * n * n);
    for _ in 0..points {
        let block: Vec<C64> = (0..n * n)
            .map(|_| C64::new(rng.between(-1.0, 1.0), rng.between(-1.0, 1.0)))
            .collect();
        let fro = block.iter().map(|c| c.norm_sqr()).sum::<f64>().sqrt();
        let scale = rng.between(0.05, 0.6) / fro;
        s.extend(block.iter().map(|c| c * scale));
    }
    Network {
        freq: (0..points).map(|k| 1e9 * (1.0 + k as f64)).collect(),
        ports: n,
        z0: (0..n).map(|_| rng.between(20.0, 120.0)).collect(),
        s,
    }
}

fn dm(m: &[C64], n: usize) -> DMatrix<C64> {
    DMatrix::from_row_slice(n, n, m)
}

fn row_major(m: &DMatrix<C64>) -> Vec<C64> {
    let mut out = Vec::with_capacity(m.nrows() * m.ncols());
    for i in 0..m.nrows() {
        for j in 0..m.ncols() {
            out.push(m[(i, j)]);
        }
    }
    out
}

/// Pozar §4.3 with per-port references, by explicit inverses:
/// Z = D (I − S)⁻¹ (I + S) D and Y = D⁻¹ (I + S)⁻¹ (I − S) D⁻¹, D = diag(√z0).
fn reference_z_y(s: &[C64], n: usize, z0: &[f64]) -> (Vec<C64>, Vec<C64>) {
    let s = dm(s, n);
    let eye = DMatrix::<C64>::identity(n, n);
    let d = DMatrix::<C64>::from_diagonal(&nalgebra::DVector::from_iterator(
        n,
        z0.iter().map(|z| C64::new(z.sqrt(), 0.0)),
    ));
    let d_inv = DMatrix::<C64>::from_diagonal(&nalgebra::DVector::from_iterator(
        n,
        z0.iter().map(|z| C64::new(1.0 / z.sqrt(), 0.0)),
    ));
    let z = &d * (&eye - &s).try_inverse().expect("I − S regular") * (&eye + &s) * &d;
    let y = &d_inv * (&eye + &s).try_inverse().expect("I + S regular") * (&eye - &s) * &d_inv;
    (row_major(&z), row_major(&y))
}

/// Largest entry error relative to the largest entry of the reference.
fn max_rel(a: &[C64], b: &[C64]) -> f64 {
    assert_eq!(a.len(), b.len());
    let scale = b.iter().map(|v| v.norm()).fold(f64::MIN_POSITIVE, f64::max);
    a.iter()
        .zip(b)
        .map(|(x, y)| (x - y).norm() / scale)
        .fold(0.0, f64::max)
}

const TOL: f64 = 1e-12;

/// S→Z, S→Y, Z→S and Y→S (closed forms for N ≤ 2, LU beyond) against the general LU
/// path and against Pozar §4.3 by nalgebra's inverse, N = 1..8.
#[test]
fn conversions_match_general_and_reference() {
    let mut rng = Lcg(0x51a7_e5ed);
    for n in 1..=8 {
        let net = random_network(&mut rng, n, 200);
        for k in 0..net.points() {
            let s = net.s_block(k);
            let z0 = &net.z0;
            let (z_ref, y_ref) = reference_z_y(s, n, z0);
            let z = convert::s_to_z(s, n, z0).unwrap();
            let y = convert::s_to_y(s, n, z0).unwrap();
            for (what, fast, slow, reference) in [
                ("S→Z", &z, general::s_to_z(s, n, z0).unwrap(), &z_ref),
                ("S→Y", &y, general::s_to_y(s, n, z0).unwrap(), &y_ref),
            ] {
                assert!(
                    max_rel(fast, &slow) < TOL,
                    "{what} N={n} k={k}: fast vs LU {:e}",
                    max_rel(fast, &slow)
                );
                assert!(
                    max_rel(fast, reference) < TOL,
                    "{what} N={n} k={k}: vs Pozar {:e}",
                    max_rel(fast, reference)
                );
            }
            for (what, fast, slow) in [
                (
                    "Z→S",
                    convert::z_to_s(&z, n, z0).unwrap(),
                    general::z_to_s(&z, n, z0).unwrap(),
                ),
                (
                    "Y→S",
                    convert::y_to_s(&y, n, z0).unwrap(),
                    general::y_to_s(&y, n, z0).unwrap(),
                ),
            ] {
                assert!(
                    max_rel(&fast, &slow) < TOL,
                    "{what} N={n} k={k}: fast vs LU {:e}",
                    max_rel(&fast, &slow)
                );
                assert!(
                    max_rel(&fast, s) < TOL,
                    "{what} N={n} k={k}: round trip {:e}",
                    max_rel(&fast, s)
                );
            }
        }
    }
}

/// `solve_block` (division for N = 1, Cramer's rule for N = 2, LU beyond) against
/// nalgebra's inverse times B.
#[test]
fn solve_block_matches_inverse() {
    let mut rng = Lcg(0x0b10_c4ed);
    for n in 1..=8 {
        for _ in 0..100 {
            // I + a small random matrix: well conditioned
            let net = random_network(&mut rng, n, 2);
            let mut a = net.s_block(0).to_vec();
            for i in 0..n {
                a[i * n + i] += C64::new(1.0, 0.0);
            }
            let b = net.s_block(1);
            let x = convert::solve_block(&a, b, n).unwrap();
            let want = row_major(&(dm(&a, n).try_inverse().unwrap() * dm(b, n)));
            assert!(max_rel(&x, &want) < TOL, "N={n}: {:e}", max_rel(&x, &want));
        }
    }
}

/// Y_in of a floating drive across a 2×2 Y, the straightforward way: invert Y to Z
/// and take Z11 − Z12 − Z21 + Z22 (methods.md §2.2), then 1/Z.
fn reference_differential(y2: &[C64]) -> C64 {
    let z = dm(y2, 2).try_inverse().expect("Y regular");
    C64::new(1.0, 0.0) / (z[(0, 0)] - z[(0, 1)] - z[(1, 0)] + z[(1, 1)])
}

fn sub(m: &[C64], n: usize, idx: &[usize]) -> Vec<C64> {
    let mut out = Vec::new();
    for &i in idx {
        for &j in idx {
            out.push(m[i * n + j]);
        }
    }
    out
}

fn close(a: C64, b: C64) -> bool {
    (a - b).norm() <= TOL * b.norm()
}

/// Every view on 1–8 ports against the same reduction done straightforwardly from the
/// reference Y (Pozar §4.3 by inverse): one_port Y_in = Y11; single_ended Y_in = Y_aa
/// over the pair with the others grounded; differential and centre_tapped the floating
/// drive across the pair's (or the ends') 2×2 Y block; transformer Z_w = Tᵀ Y₄⁻¹ T,
/// T = [e_a − e_b, e_c − e_d]. Port maps other than the default are included.
#[test]
fn views_match_reference_on_1_to_8_ports() {
    let mut rng = Lcg(0x7ea0_f1e5);
    for n in 1..=8usize {
        let net = random_network(&mut rng, n, 60);
        let y_ref: Vec<Vec<C64>> = (0..net.points())
            .map(|k| reference_z_y(net.s_block(k), n, &net.z0).1)
            .collect();
        let mut maps = vec![PortMap::default()];
        if n >= 3 {
            maps.push(PortMap {
                pair: [n, 2],
                tap: 1,
                windings: [[1, 2], [3, 4]],
            });
        }
        if n >= 5 {
            maps.push(PortMap {
                pair: [3, 5],
                tap: 2,
                windings: [[5, 1], [2, 4]],
            });
        }
        let mut checked = 0;
        for name in ViewName::ALL {
            for pm in &maps {
                let v = match network::view(&net, name, pm) {
                    Ok(v) => v,
                    // a view that does not apply to N ports (counted below)
                    Err(network::ViewError::WrongPorts { .. }) => continue,
                    Err(e) => panic!("{name} N={n} {pm:?}: {e}"),
                };
                checked += 1;
                let [a, b] = [pm.pair[0] - 1, pm.pair[1] - 1];
                for (k, y) in y_ref.iter().enumerate() {
                    match (&v, name) {
                        (View::Driving { y_in, two_port, .. }, _) => {
                            let want = match name {
                                ViewName::OnePort => y[0],
                                ViewName::SingleEnded => y[a * n + a],
                                _ => reference_differential(&sub(y, n, &[a, b])),
                            };
                            assert!(
                                close(y_in[k], want),
                                "{name} N={n} {pm:?} k={k}: {} vs {want}",
                                y_in[k]
                            );
                            if let Some(tp) = two_port {
                                let want2 = sub(y, n, &[a, b]);
                                assert!(max_rel(&tp[k], &want2) < TOL, "{name} N={n} 2×2 Y k={k}");
                            }
                        }
                        (View::Windings { z, .. }, _) => {
                            let w = pm.windings;
                            let idx = [w[0][0] - 1, w[0][1] - 1, w[1][0] - 1, w[1][1] - 1];
                            let z4 = dm(&sub(y, n, &idx), 4).try_inverse().expect("Y₄ regular");
                            let t = |i: usize, c: usize| -> f64 {
                                match (i, c) {
                                    (0, 0) | (2, 1) => 1.0,
                                    (1, 0) | (3, 1) => -1.0,
                                    _ => 0.0,
                                }
                            };
                            let mut want = [C64::new(0.0, 0.0); 4];
                            for r in 0..2 {
                                for c in 0..2 {
                                    for i in 0..4 {
                                        for j in 0..4 {
                                            want[r * 2 + c] += z4[(i, j)] * (t(i, r) * t(j, c));
                                        }
                                    }
                                }
                            }
                            assert!(
                                max_rel(&z[k], &want) < TOL,
                                "transformer N={n} {pm:?} k={k}: {:e}",
                                max_rel(&z[k], &want)
                            );
                        }
                    }
                }
            }
        }
        // every view the port count allows was made
        let expected_views = match n {
            1 => 1,
            2 => 2,
            3 => 3,
            _ => 4,
        };
        assert!(checked >= expected_views, "N={n}: {checked} views checked");
        for name in network::views_for(n) {
            assert!(
                network::view(&net, name, &PortMap::default()).is_ok(),
                "{name} on {n} ports"
            );
        }
    }
}
