//! The data fast path's conversion of one number of the reader's grammar (the `lex`
//! module doc) to the nearest f64, in fewer instructions than fast-float2 on the
//! 15–19-digit numbers that EM solvers write.
//!
//! [`parse`] reads a sign, the integer digits, a point and the fraction digits, and an
//! exponent, into a mantissa `w` (every digit, so exact in a u64 while there are at
//! most 19 significant ones) and a decimal exponent `q`, the value being `w·10^q`.
//! The integer part goes one digit at a time (it is mostly a single `0`); the
//! fraction eight digits at a time (SWAR: one 8-byte load, one test for "all
//! digits", three multiplications), its first sixteen bytes tested together, a
//! shorter run from a word shifted so that only its digits count, and the few
//! digits beyond sixteen one at a time.
//!
//! Why the result is exact (the same bits as fast-float2 and the standard library):
//! - Clinger's fast path when `w ≤ 2^53` and `|q| ≤ 22`: `w` and `10^|q|` are both
//!   exact doubles, so one IEEE multiplication or division rounds once, correctly.
//! - Otherwise Eisel–Lemire on the exact `w` (lexical-parse-float's `compute_float`,
//!   the algorithm of D. Lemire, "Number parsing at a gigabyte per second", 2021):
//!   proven correctly rounded whenever it answers, and it says when it cannot.
//!
//! `None` — the caller then converts the token with fast-float2 — when there is no
//! digit at all, more than 19 significant digits (`w` would be cut), Eisel–Lemire
//! cannot decide the rounding, or the value overflows (which the caller refuses
//! anyway): a value given is always finite. The length given is fast-float2's: the
//! longest prefix of the grammar, an `e` without digits after it not taken.

use lexical_parse_float::float::extended_to_float;
use lexical_parse_float::lemire::compute_float;

use crate::units::EXACT_POW10;

/// 10^k for the k digits of a partial word.
const POW10_INT: [u64; 8] = [1, 10, 100, 1000, 10_000, 100_000, 1_000_000, 10_000_000];

/// The 0x80 bit set in the bytes of `v` that are not ASCII digits (bytes above the
/// lowest such one may be marked wrongly, by the borrow; only the lowest is used).
#[inline(always)]
fn non_digits(v: u64) -> u64 {
    (v.wrapping_add(0x4646_4646_4646_4646) | v.wrapping_sub(0x3030_3030_3030_3030))
        & 0x8080_8080_8080_8080
}

/// The number written by eight ASCII digits (the first byte the most significant;
/// bytes 0x00 count as 0): pairs, then quadruples, then the eight, one multiplication
/// each.
#[inline(always)]
fn eight(v: u64) -> u64 {
    let v = (v & 0x0F0F_0F0F_0F0F_0F0F).wrapping_mul(10 << 8 | 1) >> 8;
    let v = (v & 0x00FF_00FF_00FF_00FF).wrapping_mul(100 << 16 | 1) >> 16;
    (v & 0x0000_FFFF_0000_FFFF).wrapping_mul(10_000 << 32 | 1) >> 32
}

/// The first `k` (0–7) bytes of `v` (ASCII digits, the first byte the first digit)
/// moved to the top of the word with zero bytes under them, which [`eight`] reads as
/// the k-digit number. Two shifts, as 8·(8 − k) is 64 when k = 0.
#[inline(always)]
fn first_digits(v: u64, k: u32) -> u64 {
    (v << 8) << (56 - 8 * k)
}

/// The fraction digits at the start of `r` appended to `w` (`w·10 + digit` each,
/// wrapping: the caller counts the digits), `r` moved past them. Sixteen bytes are
/// looked at together: their first 16 digits take two [`eight`]s, fewer take one
/// and a shifted word; digits beyond 16 (usually 0–3) go one at a time. Within 16
/// bytes of the end of the input, words of 8 and single digits.
#[inline(always)]
fn fraction(r: &mut &[u8], w: &mut u64) {
    if let Some((c, rest)) = r.split_first_chunk::<16>() {
        let ab = u128::from_le_bytes(*c);
        let (a, b) = (ab as u64, (ab >> 64) as u64);
        let (na, nb) = (non_digits(a), non_digits(b));
        if na | nb == 0 {
            *w = w
                .wrapping_mul(10_000_000_000_000_000)
                .wrapping_add(eight(a) * 100_000_000 + eight(b));
            *r = rest;
        } else {
            // the first non-digit is in `a` or, `a` being all digits, in `b`
            let (mut v, mut nd) = (a, na);
            if na == 0 {
                *w = w.wrapping_mul(100_000_000).wrapping_add(eight(a));
                *r = &r[8..];
                (v, nd) = (b, nb);
            }
            let k = nd.trailing_zeros() / 8;
            *w = w
                .wrapping_mul(POW10_INT[k as usize])
                .wrapping_add(eight(first_digits(v, k)));
            *r = r.get(k as usize..).unwrap_or_default();
            return;
        }
    } else if let Some((c, rest)) = r.split_first_chunk::<8>() {
        let v = u64::from_le_bytes(*c);
        if non_digits(v) == 0 {
            *w = w.wrapping_mul(100_000_000).wrapping_add(eight(v));
            *r = rest;
        }
    }
    int_digits(r, w);
}

/// The digits at the start of `r` one at a time: the integer part (mostly a single
/// `0`, where this is cheaper than a word), or the last few bytes of the input.
#[inline(always)]
fn int_digits(r: &mut &[u8], w: &mut u64) {
    while let Some((&b, rest)) = r.split_first() {
        let d = b.wrapping_sub(b'0');
        if d > 9 {
            return;
        }
        *w = w.wrapping_mul(10).wrapping_add(u64::from(d));
        *r = rest;
    }
}

/// The number at the start of `s` (which the caller saw begin with a digit, a point
/// or a sign): its value and length, or `None` as the module doc says.
#[inline(always)]
pub(super) fn parse(s: &[u8]) -> Option<(f64, usize)> {
    let (sign, mut r) = match s {
        [b'-', rest @ ..] => (1 << 63, rest),
        [b'+', rest @ ..] => (0, rest),
        _ => (0u64, s),
    };
    let mantissa = r;
    let mut w = 0u64;
    // the usual integer part: one digit before the point
    if let [d @ b'0'..=b'9', b'.', ..] = r {
        w = u64::from(d - b'0');
        r = &r[1..];
    } else {
        int_digits(&mut r, &mut w);
    }
    let mut n = mantissa.len() - r.len();
    let mut q: i64 = 0;
    if let [b'.', rest @ ..] = r {
        r = rest;
        fraction(&mut r, &mut w);
        let f = rest.len() - r.len();
        n += f;
        q = -(f as i64);
    }
    if n == 0 {
        return None;
    }
    if n > 19 && n - leading_zeros(&mantissa[..mantissa.len() - r.len()]) > 19 {
        return None;
    }
    if let [b'e' | b'E', rest @ ..] = r {
        if let Some((e, after)) = exponent(rest) {
            q += e;
            r = after;
        }
    }
    let v = if w <= 1 << 53 && (-22..=22).contains(&q) {
        let x = w as f64;
        if q < 0 {
            x / EXACT_POW10[q.unsigned_abs() as usize]
        } else {
            x * EXACT_POW10[q as usize]
        }
    } else {
        let fp = compute_float::<f64>(q, w, false);
        // below 0: Eisel–Lemire cannot decide; 0x7FF: the value overflows
        if !(0..0x7FF).contains(&fp.exp) {
            return None;
        }
        extended_to_float::<f64>(fp)
    };
    Some((f64::from_bits(v.to_bits() | sign), s.len() - r.len()))
}

/// Zeros before the first significant digit of a mantissa (its digits and point).
#[cold]
fn leading_zeros(m: &[u8]) -> usize {
    m.iter()
        .take_while(|&&b| b == b'0' || b == b'.')
        .filter(|&&b| b == b'0')
        .count()
}

/// The exponent's sign and digits at the start of `r` (after the `e`): its value and
/// the rest, `None` when there is no digit. Like fast-float2 it stops growing at 2^16,
/// far beyond any exponent that does not give 0 or infinity.
#[inline]
fn exponent(r: &[u8]) -> Option<(i64, &[u8])> {
    let (neg, mut r) = match r.split_first() {
        Some((b'-', rest)) => (true, rest),
        Some((b'+', rest)) => (false, rest),
        _ => (false, r),
    };
    let from = r.len();
    let mut e: i64 = 0;
    while let Some((&b, rest)) = r.split_first() {
        let d = b.wrapping_sub(b'0');
        if d > 9 {
            break;
        }
        if e < 0x10000 {
            e = 10 * e + i64::from(d);
        }
        r = rest;
    }
    (r.len() < from).then_some((if neg { -e } else { e }, r))
}

#[cfg(test)]
pub(super) mod tests {
    use super::*;
    use crate::touchstone::lex::parse_number;

    /// xorshift64*: a reproducible stream of cases without a dependency.
    pub(in crate::touchstone) struct Rng(pub u64);
    impl Rng {
        pub fn next(&mut self) -> u64 {
            self.0 ^= self.0 >> 12;
            self.0 ^= self.0 << 25;
            self.0 ^= self.0 >> 27;
            self.0.wrapping_mul(0x2545_F491_4F6C_DD1D)
        }
        pub fn below(&mut self, n: u64) -> u64 {
            self.next() % n
        }
        pub fn pick<'a>(&mut self, of: &[&'a str]) -> &'a str {
            of[self.below(of.len() as u64) as usize]
        }
        fn digits(&mut self, n: u64) -> String {
            (0..n)
                .map(|_| char::from(b'0' + self.below(10) as u8))
                .collect()
        }
    }

    /// `parse` against fast-float2 on `s` (a number, maybe followed by other bytes):
    /// the same bits and length when it answers, and then also the same bits as the
    /// general path and the standard library on the number alone. A `None` is the
    /// caller's fallback to fast-float2; it must come only where fast-float2 gives a
    /// non-finite value, fails, or the module doc says so. `true` when it answered.
    fn agrees(s: &str) -> bool {
        let want = fast_float2::parse_partial::<f64, _>(s);
        let Some((v, n)) = parse(s.as_bytes()) else {
            return false;
        };
        let (fv, fn_) =
            want.unwrap_or_else(|_| panic!("{s:?}: fast-float2 fails, parse gives {v:e}"));
        assert_eq!(
            (v.to_bits(), n),
            (fv.to_bits(), fn_),
            "{s:?}: parse {v:e} over {n} bytes, fast-float2 {fv:e} over {fn_}"
        );
        assert!(v.is_finite(), "{s:?}: {v}");
        let token = &s[..n];
        assert_eq!(
            parse_number(token.as_bytes()).map(f64::to_bits),
            Ok(v.to_bits()),
            "{token:?}"
        );
        let std: f64 = token.parse().unwrap();
        assert_eq!(std.to_bits(), v.to_bits(), "{token:?}");
        true
    }

    /// Significant digits of a mantissa (leading zeros not counted).
    fn significant(mantissa: &str) -> usize {
        let d: String = mantissa.chars().filter(char::is_ascii_digit).collect();
        d.trim_start_matches('0').len()
    }

    /// A random number of the grammar as a mantissa and an exponent part.
    pub(in crate::touchstone) fn random_number(rng: &mut Rng) -> (String, String) {
        let sign = rng.pick(&["", "", "-", "+"]);
        let mantissa = match rng.below(6) {
            // a random double, shortest, fixed with a digit count, or scientific
            0..=2 => {
                let x = loop {
                    let x = f64::from_bits(rng.next());
                    if x.is_finite() {
                        break x.abs();
                    }
                };
                let p = rng.below(26) as usize;
                return (
                    match rng.below(6) {
                        0 => format!("{sign}{x:e}"),
                        1 => format!("{sign}{x:E}"),
                        2 => format!("{sign}{x:.p$e}"),
                        3 if x < 1e30 => format!("{sign}{x:.p$}"),
                        4 if x < 1e30 => format!("{sign}{x}"),
                        _ => format!("{sign}{x:.p$e}"),
                    },
                    String::new(),
                );
            }
            // digits: leading zeros, up to and beyond 19 significant ones, a point
            // before, between or after them
            _ => {
                let zeros = "0".repeat(rng.pick(&["", "", "0", "00000", "0000000000000"]).len());
                let int = match rng.below(4) {
                    0 => String::new(),
                    1 => rng.digits(1),
                    _ => {
                        let n = rng.below(22);
                        rng.digits(n)
                    }
                };
                let n = rng.below(26);
                let frac = rng.digits(n);
                match rng.below(4) {
                    0 if !(int.is_empty() && frac.is_empty()) => {
                        format!("{sign}{zeros}{int}{frac}")
                    }
                    1 if !frac.is_empty() => format!("{sign}.{zeros}{frac}"),
                    2 if !int.is_empty() => format!("{sign}{int}."),
                    _ => format!("{sign}{int}.{zeros}{frac}1"),
                }
            }
        };
        let exponent = match rng.below(8) {
            0..=2 => String::new(),
            3 => format!("e{}", rng.below(51) as i64 - 25),
            4 => format!("E-{}", 20 + rng.below(5)),
            5 => format!("e+{}", rng.below(400)),
            6 => format!("e-{}", 290 + rng.below(80)),
            _ => format!(
                "{}{}{}{}",
                rng.pick(&["e", "E"]),
                rng.pick(&["", "+", "-"]),
                "0".repeat(rng.below(3) as usize),
                rng.below(100_000)
            ),
        };
        (mantissa, exponent)
    }

    #[test]
    fn random_numbers_agree_with_fast_float2_and_std() {
        let mut rng = Rng(0x1c6a_7e5d_93b1_0f27);
        let (mut short, mut answered) = (0, 0);
        for _ in 0..300_000 {
            let (m, e) = random_number(&mut rng);
            // what may follow a number, in a line or in the reader's buffer
            let after = rng.pick(&[
                "", " ", " 0.5", "\t", "!c", "\r\n", "\n1", "x", "e", "e+", ".5", "5",
            ]);
            let s = format!("{m}{e}{after}");
            let ok = agrees(&s);
            // at most 19 significant digits and a finite, non-zero value: declined
            // only where Eisel–Lemire cannot decide the rounding
            let Ok((v, n)) = fast_float2::parse_partial::<f64, _>(&s) else {
                continue;
            };
            let mantissa = s[..n].split(['e', 'E']).next().unwrap_or_default();
            if significant(mantissa) <= 19 && v.is_finite() && v != 0.0 {
                short += 1;
                answered += usize::from(ok);
            }
        }
        // none of these happens to be a rounding Eisel–Lemire leaves undecided
        assert!(short > 100_000, "{short}");
        assert_eq!(answered, short);
    }

    #[test]
    fn edges_agree() {
        let cases = [
            "0",
            "-0",
            "+0",
            "0.",
            ".0",
            "-.0",
            "0e-400",
            "-0e400",
            "00000000000000000000000",
            "0.000000000000000000000000",
            "1",
            "9",
            "9.",
            ".9",
            "1e22",
            "1e23",
            "9007199254740992",
            "9007199254740993",
            "9007199254740993.0",
            "900719925474099.3e1",
            "1234567890123456789",
            "12345678901234567890",
            "0.1234567890123456789",
            "0.12345678901234567890",
            "0.0026474637655868783",
            "0.00043973831776830067",
            "18446744073709551615",
            "18446744073709551616",
            "4.9e-324",
            "2.4703282292062327e-324",
            "2.4703282292062328e-324",
            "2.2250738585072011e-308",
            "2.2250738585072014e-308",
            "1.7976931348623157e308",
            "1.7976931348623158e308",
            "1.7976931348623159e308",
            "1e308",
            "1e309",
            "1e-400",
            "123456789012345678e-10",
            "12345678.12345678",
            "1234567.123456789012",
            "0.052095361475938885",
            "-0.03728016090881438",
            "4.210359858832988e-6",
            "1.5e+3",
            "1.5E-03",
            "1e00000000000000000000007",
            "1e99999",
            "1e-99999",
            "1.e5",
            ".5e5",
            "5e",
            "5e+",
            "5e-x",
            "5ee5",
            "1.2.3",
            "+.5",
            "-.",
            ".",
            "+",
            "-",
            "",
            "e5",
            "inf",
            "nan",
        ];
        for c in cases {
            agrees(c);
            for after in [" ", "\n", "!", "x"] {
                agrees(&format!("{c}{after}"));
            }
        }
        // the grammar's prefix only: fast-float2's length
        assert_eq!(parse(b"5e+x"), Some((5.0, 1)));
        assert_eq!(parse(b"1.5.5"), Some((1.5, 3)));
        // declined: no digit, more than 19 significant digits, overflow
        for c in [
            "",
            ".",
            "-.",
            "+",
            "12345678901234567890",
            "1e309",
            "-1e400",
            "x",
        ] {
            assert_eq!(parse(c.as_bytes()), None, "{c:?}");
        }
        // 19 significant digits after many zeros are read here
        assert!(parse(b"0.0000000000001234567890123456789").is_some());
    }

    #[test]
    fn every_number_of_a_written_file_agrees() {
        use crate::model::PiModel;
        use crate::network::Network;
        let m = PiModel {
            ls: 2.3e-9,
            rdc: 2.1,
            rac: 0.9,
            cs: 12e-15,
            cox1: 140e-15,
            csi1: 35e-15,
            rsi1: 700.0,
            cox2: 150e-15,
            csi2: 40e-15,
            rsi2: 900.0,
        };
        let freq: Vec<f64> = (0..300)
            .map(|k| 1e8 * 400f64.powf(k as f64 / 299.0))
            .collect();
        let y: Vec<_> = freq.iter().flat_map(|&f| m.y2(f)).collect();
        let net = Network::from_y(freq, 2, vec![50.0; 2], &y).unwrap();
        let mut count = 0;
        for format in [
            crate::touchstone::Format::RI,
            crate::touchstone::Format::MA,
            crate::touchstone::Format::DB,
        ] {
            let opts = crate::touchstone::WriteOptions {
                format,
                ..Default::default()
            };
            let text = crate::touchstone::write_string(&net, &opts);
            for line in text.lines().filter(|l| !l.starts_with(['!', '#'])) {
                for t in line.split_ascii_whitespace() {
                    // shortest forms have at most 17 significant digits: all read here
                    assert!(agrees(t), "{t}");
                    count += 1;
                }
            }
        }
        assert_eq!(count, 3 * 300 * 9);
    }
}
