//! Physical units at the edges: parsing quantities such as `2.4GHz`, `1.5nH`, `3%`
//! and printing values in engineering form (`9.12 GHz`). Everything inside the crate
//! is SI base units as `f64`.

use std::fmt;

/// A frequency in hertz. Used where a bare `f64` could be mistaken for ω or GHz.
#[derive(Debug, Clone, Copy, PartialEq, PartialOrd, serde::Serialize, serde::Deserialize)]
#[serde(transparent)]
pub struct Hz(pub f64);

impl Hz {
    /// Angular frequency ω = 2πf in rad/s.
    pub fn omega(self) -> f64 {
        2.0 * std::f64::consts::PI * self.0
    }
}

impl fmt::Display for Hz {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&eng(self.0, "Hz"))
    }
}

/// The physical dimension of a value, as the rules language types it.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Dim {
    /// Hz
    Frequency,
    /// H
    Inductance,
    /// F
    Capacitance,
    /// Ω
    Resistance,
    /// A plain number (Q, k, factors, percentages, counts).
    Ratio,
    /// s
    Time,
}

impl Dim {
    /// The SI unit symbol printed after a value of this dimension.
    pub fn symbol(self) -> &'static str {
        match self {
            Dim::Frequency => "Hz",
            Dim::Inductance => "H",
            Dim::Capacitance => "F",
            Dim::Resistance => "Ω",
            Dim::Ratio => "",
            Dim::Time => "s",
        }
    }
    /// Lower-case name used in messages ("frequency", "inductance", …).
    pub fn name(self) -> &'static str {
        match self {
            Dim::Frequency => "frequency",
            Dim::Inductance => "inductance",
            Dim::Capacitance => "capacitance",
            Dim::Resistance => "resistance",
            Dim::Ratio => "ratio",
            Dim::Time => "time",
        }
    }
}

/// Error from [`parse_quantity`] or [`parse_frequency`].
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum UnitError {
    /// The text does not start with a finite number.
    #[error("expected a number with an optional unit, found `{0}`")]
    NotANumber(String),
    /// The unit suffix is not one we know.
    #[error("unknown unit `{unit}` in `{text}` (known: Hz, H, F, ohm, s, % with SI prefixes f p n u m k M G T)")]
    UnknownUnit {
        /// the whole text
        text: String,
        /// the suffix that was not understood
        unit: String,
    },
    /// The value is not of the dimension asked for.
    #[error("`{text}` is a {found}, expected a {expected}")]
    WrongDim {
        /// the whole text
        text: String,
        /// dimension found
        found: &'static str,
        /// dimension expected
        expected: &'static str,
    },
}

fn prefix_factor(c: char) -> Option<f64> {
    Some(match c {
        'f' => 1e-15,
        'p' => 1e-12,
        'n' => 1e-9,
        'u' | 'µ' | 'μ' => 1e-6,
        'm' => 1e-3,
        'k' | 'K' => 1e3,
        'M' => 1e6,
        'G' => 1e9,
        'T' => 1e12,
        _ => return None,
    })
}

/// Split `text` into its leading number and the unit suffix. The number follows the
/// grammar `[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?` and must be finite.
pub fn split_number(text: &str) -> Option<(f64, &str)> {
    let b = text.as_bytes();
    let mut i = 0;
    if i < b.len() && (b[i] == b'+' || b[i] == b'-') {
        i += 1;
    }
    let int_start = i;
    while i < b.len() && b[i].is_ascii_digit() {
        i += 1;
    }
    let mut digits = i - int_start;
    if i < b.len() && b[i] == b'.' {
        i += 1;
        let fs = i;
        while i < b.len() && b[i].is_ascii_digit() {
            i += 1;
        }
        digits += i - fs;
    }
    if digits == 0 {
        return None;
    }
    if i < b.len() && (b[i] == b'e' || b[i] == b'E') {
        let mut j = i + 1;
        if j < b.len() && (b[j] == b'+' || b[j] == b'-') {
            j += 1;
        }
        let es = j;
        while j < b.len() && b[j].is_ascii_digit() {
            j += 1;
        }
        if j > es {
            i = j;
        }
    }
    let v: f64 = text[..i].parse().ok()?;
    if !v.is_finite() {
        return None;
    }
    Some((v, &text[i..]))
}

/// Parse a quantity with an optional SI-prefixed unit: `2.4GHz`, `1.5nH`, `250fF`,
/// `50ohm`, `3%` (→ 0.03, ratio), `77e9` (plain number, ratio).
pub fn parse_quantity(text: &str) -> Result<(f64, Dim), UnitError> {
    let t = text.trim();
    let (v, rest) = split_number(t).ok_or_else(|| UnitError::NotANumber(t.to_string()))?;
    let unit = rest.trim();
    if unit.is_empty() {
        return Ok((v, Dim::Ratio));
    }
    if unit == "%" {
        return Ok((v / 100.0, Dim::Ratio));
    }
    let bases: [(&str, Dim); 7] = [
        ("Hz", Dim::Frequency),
        ("ohm", Dim::Resistance),
        ("Ohm", Dim::Resistance),
        ("Ω", Dim::Resistance),
        ("H", Dim::Inductance),
        ("F", Dim::Capacitance),
        ("s", Dim::Time),
    ];
    for (base, dim) in bases {
        if let Some(pre) = unit.strip_suffix(base) {
            let mut cs = pre.chars();
            match (cs.next(), cs.next()) {
                (None, _) => return Ok((v, dim)),
                (Some(c), None) => {
                    if let Some(k) = prefix_factor(c) {
                        return Ok((v * k, dim));
                    }
                }
                _ => {}
            }
        }
    }
    Err(UnitError::UnknownUnit {
        text: t.to_string(),
        unit: unit.to_string(),
    })
}

/// Parse a frequency for the command line: `2.4GHz`, `500MHz`, `2.4e9Hz`, or a plain
/// number in Hz (`77e9`).
pub fn parse_frequency(text: &str) -> Result<Hz, UnitError> {
    match parse_quantity(text)? {
        (v, Dim::Frequency) | (v, Dim::Ratio) if !text.trim().ends_with('%') => Ok(Hz(v)),
        (_, d) => Err(UnitError::WrongDim {
            text: text.trim().to_string(),
            found: d.name(),
            expected: "frequency",
        }),
    }
}

/// The SI prefixes engineering notation uses, largest first.
pub const SI_PREFIXES: [(f64, &str); 9] = [
    (1e12, "T"),
    (1e9, "G"),
    (1e6, "M"),
    (1e3, "k"),
    (1.0, ""),
    (1e-3, "m"),
    (1e-6, "µ"),
    (1e-9, "n"),
    (1e-12, "p"),
];

/// Format `value` in engineering notation with three significant digits and an SI
/// prefix: `eng(9.123e9, "Hz")` → `"9.12 GHz"`. A ratio (empty unit) prints without a
/// prefix unless it is very large or small.
pub fn eng(value: f64, unit: &str) -> String {
    let mut s = String::with_capacity(16 + unit.len());
    push_eng(&mut s, value, unit);
    s
}

/// [`eng`] appended to `out`.
pub fn push_eng(out: &mut String, value: f64, unit: &str) {
    if !value.is_finite() {
        out.push_str("n/a");
        return;
    }
    if unit.is_empty() {
        push_sig3(out, value);
        return;
    }
    if value == 0.0 {
        out.push_str("0 ");
        out.push_str(unit);
        return;
    }
    let a = value.abs();
    let (k, p) = SI_PREFIXES
        .iter()
        .copied()
        .find(|(k, _)| a >= *k * 0.9995)
        .unwrap_or((1e-15, "f"));
    push_sig3_finite(out, value / k);
    out.push(' ');
    out.push_str(p);
    out.push_str(unit);
}

/// Three significant digits, trailing zeros trimmed: 9.123 → "9.12", 12.0 → "12".
pub fn sig3(v: f64) -> String {
    let mut s = String::with_capacity(24);
    push_sig3(&mut s, v);
    s
}

/// [`sig3`] appended to `out`.
pub fn push_sig3(out: &mut String, v: f64) {
    if !v.is_finite() {
        out.push_str("n/a");
    } else if v == 0.0 {
        out.push('0');
    } else {
        push_sig3_finite(out, v);
    }
}

/// [`sig3`] of a finite, non-zero `v`, appended to `out`.
fn push_sig3_finite(out: &mut String, v: f64) {
    let a = v.abs();
    let decimals = if a >= 100.0 {
        0
    } else if a >= 10.0 {
        1
    } else if a >= 1.0 {
        2
    } else {
        (2.0 - a.log10().floor()) as usize
    }
    .min(15);
    let start = out.len();
    push_fixed(out, v, decimals);
    if out[start..].contains('.') {
        let keep = out.trim_end_matches('0').trim_end_matches('.').len();
        out.truncate(keep);
    }
}

/// `v` with `decimals` digits after the point: the same text as std's `{:.N}` (the
/// exact value of the double rounded half to even, the sign from the sign bit, so
/// `-0.01` → `-0.0`), by integer arithmetic on the double's bits. Std's precision
/// formatting falls back to arbitrary-precision arithmetic for most values and is
/// the slow path of `core::fmt`; a report prints hundreds of thousands of these.
pub fn push_fixed(out: &mut String, v: f64, decimals: usize) {
    // the usual case, straight into `out`
    if let Some(q) = rounded_by_float(v, decimals) {
        if v.is_sign_negative() {
            out.push('-');
        }
        let mut ints = itoa::Buffer::new();
        if decimals == 0 {
            out.push_str(ints.format(q));
            return;
        }
        if decimals == 1 {
            // the charts' coordinates: two pieces
            const TENTHS: [&str; 10] = [".0", ".1", ".2", ".3", ".4", ".5", ".6", ".7", ".8", ".9"];
            out.push_str(ints.format(q / 10));
            out.push_str(TENTHS[(q % 10) as usize]);
            return;
        }
        let unit = POW10[decimals];
        out.push_str(ints.format(q / unit));
        out.push('.');
        let frac = ints.format(q % unit);
        for _ in frac.len()..decimals {
            out.push('0');
        }
        out.push_str(frac);
        return;
    }
    let mut buf = [0u8; 48];
    match fixed_digits(v, decimals, &mut buf) {
        Some(s) => out.push_str(s),
        None => {
            use std::fmt::Write as _;
            let _ = write!(out, "{v:.decimals$}");
        }
    }
}

/// 10^k for k = 0 … 22: the powers of ten that are exact as doubles (the reader's
/// exact conversion path and the plots' rounding use them).
pub(crate) const EXACT_POW10: [f64; 23] = [
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16,
    1e17, 1e18, 1e19, 1e20, 1e21, 1e22,
];

/// 10^d for the decimals the integer path covers.
const POW10: [u64; 18] = [
    1,
    10,
    100,
    1_000,
    10_000,
    100_000,
    1_000_000,
    10_000_000,
    100_000_000,
    1_000_000_000,
    10_000_000_000,
    100_000_000_000,
    1_000_000_000_000,
    10_000_000_000_000,
    100_000_000_000_000,
    1_000_000_000_000_000,
    10_000_000_000_000_000,
    100_000_000_000_000_000,
];

/// [`push_fixed`] as a `Display` value, for `write!`: `Fixed(v, 1)` prints as `{v:.1}`.
#[derive(Debug, Clone, Copy)]
pub struct Fixed(pub f64, pub usize);

impl fmt::Display for Fixed {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let mut buf = [0u8; 48];
        match fixed_digits(self.0, self.1, &mut buf) {
            Some(s) => f.write_str(s),
            None => write!(f, "{:.*}", self.1, self.0),
        }
    }
}

/// The text of [`push_fixed`] written into the end of `buf`; None for what the integer
/// path does not cover (not finite, |v| ≥ 2⁵³, more than 17 decimals, a rounded value
/// of 2⁶⁴ or more), which the callers leave to std.
fn fixed_digits(v: f64, decimals: usize, buf: &mut [u8; 48]) -> Option<&str> {
    // written so that NaN, too, takes the std path
    if decimals >= POW10.len() || v.is_nan() || v.abs() >= 9_007_199_254_740_992.0 {
        return None;
    }
    if let Some(q) = rounded_by_float(v, decimals) {
        return Some(write_fixed(q, v.is_sign_negative(), decimals, buf));
    }
    // |v| = m·2^e exactly; below 2⁵³ the exponent e is ≤ 0
    let bits = v.to_bits();
    let biased = ((bits >> 52) & 0x7ff) as i32;
    let frac = bits & ((1u64 << 52) - 1);
    let (m, e) = if biased == 0 {
        (frac, -1074)
    } else {
        (frac | (1u64 << 52), biased - 1075)
    };
    // |v|·10^d = p·2^e exactly (p < 2¹¹⁰); round p/2^-e half to even
    let p = m as u128 * POW10[decimals] as u128;
    let shift = (-e) as u32;
    let q = if shift == 0 {
        p
    } else if shift > 120 {
        0 // p < 2¹¹⁰ is below half of 2^shift
    } else {
        let q = p >> shift;
        let r = p & ((1u128 << shift) - 1);
        let half = 1u128 << (shift - 1);
        if r > half || (r == half && q & 1 == 1) {
            q + 1
        } else {
            q
        }
    };
    let q = u64::try_from(q).ok()?;
    Some(write_fixed(q, v.is_sign_negative(), decimals, buf))
}

/// |v|·10^d rounded to an integer by one floating-point product, when that is surely
/// the exact rounding: the product is within half an ulp (at most 2⁻¹⁷ below 10¹¹) of the
/// exact |v|·10^d, so when it lies clearly inside (not within 0.001 of the midpoint
/// between two integers) the exact value is nearer the same integer and no tie rule
/// is involved. None for the rest (ties, near-ties, large values), which the integer
/// path decides; this one costs a few instructions where that costs hundreds.
fn rounded_by_float(v: f64, decimals: usize) -> Option<u64> {
    const POW10F: [f64; 16] = [
        1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15,
    ];
    let p = v.abs() * *POW10F.get(decimals)?;
    if p.is_nan() || p >= 1e11 {
        return None;
    }
    // exact below 2⁵²: the whole part, and the fraction of a double is a double (by
    // way of i64, which converts in one instruction where u64 takes several)
    let whole = p as i64;
    let frac = p - whole as f64;
    let whole = whole as u64;
    if frac < 0.499 {
        Some(whole)
    } else if frac > 0.501 {
        Some(whole + 1)
    } else {
        None
    }
}

/// The text of the rounded |v|·10^d `q` with `decimals` digits after the point and a
/// minus sign when `negative`, written into the end of `buf`.
fn write_fixed(mut q: u64, negative: bool, decimals: usize, buf: &mut [u8; 48]) -> &str {
    // digits from the right: the decimals, the point, the integer part, the sign
    let mut i = buf.len();
    for _ in 0..decimals {
        i -= 1;
        buf[i] = b'0' + (q % 10) as u8;
        q /= 10;
    }
    if decimals > 0 {
        i -= 1;
        buf[i] = b'.';
    }
    loop {
        i -= 1;
        buf[i] = b'0' + (q % 10) as u8;
        q /= 10;
        if q == 0 {
            break;
        }
    }
    if negative {
        i -= 1;
        buf[i] = b'-';
    }
    // only ASCII digits, a point and a sign were written
    std::str::from_utf8(&buf[i..]).unwrap_or_default()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parses_units() {
        assert_eq!(parse_quantity("2.4GHz").unwrap(), (2.4e9, Dim::Frequency));
        let (v, d) = parse_quantity("250fF").unwrap();
        assert!((v - 250e-15).abs() < 1e-27 && d == Dim::Capacitance);
        assert_eq!(parse_quantity("3%").unwrap(), (0.03, Dim::Ratio));
        assert_eq!(parse_quantity("50ohm").unwrap(), (50.0, Dim::Resistance));
        assert_eq!(parse_frequency("77e9").unwrap(), Hz(77e9));
        assert!(parse_frequency("1nH").is_err());
        assert!(parse_quantity("inf").is_err());
        assert!(parse_quantity("nan").is_err());
        assert!(parse_quantity("1e999Hz").is_err());
    }

    #[test]
    fn prints_engineering() {
        assert_eq!(eng(9.123e9, "Hz"), "9.12 GHz");
        assert_eq!(eng(1.2e-9, "H"), "1.2 nH");
        assert_eq!(eng(11.8e9, "Hz"), "11.8 GHz");
        assert_eq!(eng(250e-15, "F"), "250 fF");
        assert_eq!(sig3(12.0), "12");
        assert_eq!(sig3(0.01234), "0.0123");
    }

    /// Values that stress a fixed-precision formatter: ties, carries, powers of ten,
    /// extremes and random doubles over the whole range (a deterministic generator).
    fn hard_values() -> Vec<f64> {
        let mut v = vec![
            0.0,
            -0.0,
            0.5,
            1.5,
            2.5,
            0.25,
            0.35,
            0.125,
            9.995,
            9.9995,
            99.95,
            0.995,
            0.0995,
            999.5,
            125.25,
            -125.25,
            -0.01,
            -0.05,
            0.05,
            1e-300,
            -1e-300,
            5e-324,
            f64::MIN_POSITIVE,
            4503599627370495.5,
            9007199254740991.0,
            9007199254740992.0,
            1e15,
            1e16,
            1e17,
            1e20,
            1e300,
            f64::MAX,
            f64::INFINITY,
            f64::NEG_INFINITY,
            f64::NAN,
        ];
        for e in -30..=30 {
            let p = 10f64.powi(e);
            v.extend([p, -p, p * (1.0 - f64::EPSILON), p * (1.0 + f64::EPSILON)]);
        }
        // exact binary ties k/2^j, and decimal "ties" x.xx5 (a hair off in binary)
        for k in -2000..2000 {
            v.push(k as f64 / 8.0);
            v.push(k as f64 / 1024.0);
            v.push(k as f64 * 0.005);
            v.push(k as f64 * 0.0005 + 9.0);
            v.push((k as f64 + 0.5) / 1000.0);
        }
        let mut state = 0x9e37_79b9_7f4a_7c15u64;
        let mut next = || {
            // splitmix64
            state = state.wrapping_add(0x9e37_79b9_7f4a_7c15);
            let mut z = state;
            z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
            z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
            z ^ (z >> 31)
        };
        for _ in 0..20_000 {
            let bits = next();
            v.push(f64::from_bits(bits)); // anywhere in the range, NaNs included
            let u = (bits >> 11) as f64 / (1u64 << 53) as f64;
            let scale = 10f64.powi((next() % 40) as i32 - 20);
            v.push((u - 0.5) * scale); // moderate magnitudes, both signs
            v.push((u * 2000.0).round() / 2000.0); // near decimal ties
        }
        v
    }

    #[test]
    fn fixed_matches_std_format_exactly() {
        // the reference is std's own `{:.N}`, over every precision the reports use
        let mut s = String::new();
        for v in hard_values() {
            for d in 0..=17 {
                s.clear();
                push_fixed(&mut s, v, d);
                assert_eq!(s, format!("{v:.d$}"), "{v:e} with {d} decimals");
                assert_eq!(Fixed(v, d).to_string(), s);
            }
        }
    }

    #[test]
    fn float_rounding_path_matches_std_at_its_edges() {
        // the one-product path decides everything but near-ties below 10¹¹: probe the
        // decimal midpoints x.xx5 (never exact in binary) and their neighbouring
        // doubles, exact binary ties, both signs, zero, and the 10¹¹ limit
        let mut s = String::new();
        let mut check = |v: f64, d: usize| {
            s.clear();
            push_fixed(&mut s, v, d);
            assert_eq!(s, format!("{v:.d$}"), "{v:e} with {d} decimals");
        };
        for d in 0..=6usize {
            let unit = 10f64.powi(-(d as i32));
            for k in -3000i64..3000 {
                for base in [0.0, 1.0, 99.0, 1e4, 123_456.0, 9.9e5] {
                    let mid = base + (k as f64 + 0.5) * unit;
                    for v in [mid, mid.next_up(), mid.next_down(), base + k as f64 * unit] {
                        check(v, d);
                        check(-v, d);
                    }
                }
            }
            let top = 1e11 * unit;
            for v in [
                top,
                top.next_down(),
                top.next_up(),
                top * 0.999_999,
                top - 0.5 * unit,
            ] {
                check(v, d);
                check(-v, d);
            }
        }
        for v in [
            0.0, -0.0, 5e-324, -5e-324, 0.05, -0.05, 0.15, 0.25, 2.5, -2.5,
        ] {
            for d in 0..=17 {
                check(v, d);
            }
        }
        assert_eq!(
            rounded_by_float(0.25, 1),
            None,
            "an exact tie is left to the integers"
        );
        assert_eq!(rounded_by_float(123.44, 1), Some(1234));
    }

    #[test]
    fn sig3_matches_the_std_formatting_it_replaced() {
        // the former body of sig3, on std's `{:.N}`
        fn by_std(v: f64) -> String {
            if !v.is_finite() {
                return "n/a".to_string();
            }
            if v == 0.0 {
                return "0".to_string();
            }
            let a = v.abs();
            let decimals = if a >= 100.0 {
                0
            } else if a >= 10.0 {
                1
            } else if a >= 1.0 {
                2
            } else {
                (2.0 - a.log10().floor()) as usize
            }
            .min(15);
            let s = format!("{v:.decimals$}");
            if s.contains('.') {
                s.trim_end_matches('0').trim_end_matches('.').to_string()
            } else {
                s
            }
        }
        for v in hard_values() {
            assert_eq!(sig3(v), by_std(v), "{v:e}");
            for unit in ["Hz", "H", ""] {
                let want = if !v.is_finite() {
                    "n/a".to_string()
                } else if unit.is_empty() {
                    by_std(v)
                } else if v == 0.0 {
                    format!("0 {unit}")
                } else {
                    let (k, p) = SI_PREFIXES
                        .iter()
                        .copied()
                        .find(|(k, _)| v.abs() >= *k * 0.9995)
                        .unwrap_or((1e-15, "f"));
                    format!("{} {p}{unit}", by_std(v / k))
                };
                assert_eq!(eng(v, unit), want, "{v:e} {unit}");
            }
        }
    }
}
