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
    if !value.is_finite() {
        return "n/a".to_string();
    }
    if unit.is_empty() {
        return sig3(value);
    }
    if value == 0.0 {
        return format!("0 {unit}");
    }
    let a = value.abs();
    let (k, p) = SI_PREFIXES
        .iter()
        .copied()
        .find(|(k, _)| a >= *k * 0.9995)
        .unwrap_or((1e-15, "f"));
    format!("{} {p}{unit}", sig3(value / k))
}

/// Three significant digits, trailing zeros trimmed: 9.123 → "9.12", 12.0 → "12".
pub fn sig3(v: f64) -> String {
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
}
