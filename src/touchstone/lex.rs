//! Lexical layer of the reader: lines (LF, CRLF or CR) out of any `BufRead` into one
//! reusable buffer with a length cap, the per-line character check, whitespace
//! tokens, and the number scanner.
//!
//! Numbers follow the grammar `[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?`
//! (reference/touchstone.md §2.8). The token is checked against it *before* any
//! float conversion, because Rust's `f64::from_str` also accepts `inf`, `NaN` and
//! `infinity`. Conversion takes Clinger's exact fast path (W. D. Clinger, "How to
//! read floating point numbers accurately", PLDI 1990: a mantissa below 2^53 times or
//! divided by an exact power of ten up to 10^22 is one correctly rounded IEEE
//! operation) and falls back to the standard library otherwise, so every value is
//! the correctly rounded one either way.

use std::io::{self, BufRead};

/// Longest line accepted (bytes, terminator excluded). Nothing in the specifications
/// bounds a line, but a reader must bound its memory; 64 MiB is far beyond any real
/// data line or comment.
pub const MAX_LINE: usize = 64 << 20;

/// Why a line could not be read.
#[derive(Debug)]
pub enum LineError {
    /// the underlying reader failed
    Io(io::Error),
    /// the line at this 1-based number is longer than [`MAX_LINE`]
    TooLong(usize),
}

/// Splits a byte stream into lines ended by LF, CRLF or CR (all three occur in real
/// files; reference/touchstone.md §2.4), reusing one buffer.
pub struct LineReader<R> {
    inner: R,
    /// the current line's bytes, without its terminator
    pub buf: Vec<u8>,
    /// 1-based number of the current line (0 before the first)
    pub line: usize,
    /// a CR ended the previous line: a LF right after it belongs to that terminator
    skip_lf: bool,
    done: bool,
    max: usize,
}

impl<R: BufRead> LineReader<R> {
    /// A reader with the default line cap.
    pub fn new(inner: R) -> Self {
        Self::with_cap(inner, MAX_LINE)
    }

    /// A reader with a given line cap (tests use small ones).
    pub fn with_cap(inner: R, max: usize) -> Self {
        LineReader {
            inner,
            buf: Vec::with_capacity(256),
            line: 0,
            skip_lf: false,
            done: false,
            max,
        }
    }

    /// Read the next line into `self.buf`. `Ok(false)` at end of input.
    pub fn next_line(&mut self) -> Result<bool, LineError> {
        self.buf.clear();
        if self.done {
            return Ok(false);
        }
        let mut got_any = false;
        loop {
            let avail = match self.inner.fill_buf() {
                Ok(b) => b,
                Err(e) if e.kind() == io::ErrorKind::Interrupted => continue,
                Err(e) => return Err(LineError::Io(e)),
            };
            if avail.is_empty() {
                self.done = true;
                if got_any {
                    self.line += 1;
                }
                return Ok(got_any);
            }
            let mut start = 0;
            if self.skip_lf {
                self.skip_lf = false;
                if avail[0] == b'\n' {
                    start = 1;
                }
            }
            let rest = &avail[start..];
            match rest.iter().position(|&b| b == b'\n' || b == b'\r') {
                Some(p) => {
                    if self.buf.len() + p > self.max {
                        return Err(LineError::TooLong(self.line + 1));
                    }
                    self.buf.extend_from_slice(&rest[..p]);
                    if rest[p] == b'\r' {
                        self.skip_lf = true;
                    }
                    let used = start + p + 1;
                    self.inner.consume(used);
                    self.line += 1;
                    return Ok(true);
                }
                None => {
                    let n = rest.len();
                    if self.buf.len() + n > self.max {
                        return Err(LineError::TooLong(self.line + 1));
                    }
                    self.buf.extend_from_slice(rest);
                    got_any |= n > 0;
                    let used = start + n;
                    self.inner.consume(used);
                }
            }
        }
    }
}

/// Blank for token splitting: space or tab (§2.5).
#[inline]
pub fn is_blank(b: u8) -> bool {
    b == b' ' || b == b'\t'
}

/// Iterator over whitespace-separated tokens of a line as `(0-based column, bytes)`.
pub struct Tokens<'a> {
    s: &'a [u8],
    i: usize,
}

impl<'a> Tokens<'a> {
    /// Tokens of `s`; columns are 0-based positions in `s`.
    pub fn new(s: &'a [u8]) -> Self {
        Tokens { s, i: 0 }
    }
}

impl<'a> Iterator for Tokens<'a> {
    type Item = (usize, &'a [u8]);
    #[inline]
    fn next(&mut self) -> Option<Self::Item> {
        let s = self.s;
        let mut i = self.i;
        while i < s.len() && is_blank(s[i]) {
            i += 1;
        }
        if i >= s.len() {
            self.i = i;
            return None;
        }
        let start = i;
        while i < s.len() && !is_blank(s[i]) {
            i += 1;
        }
        self.i = i;
        Some((start, &s[start..i]))
    }
}

/// Why a token is not a number.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum NumError {
    /// does not follow the grammar
    Malformed,
    /// follows the grammar but overflows to infinity (e.g. `1e999`)
    NonFinite,
}

const POW10: [f64; 23] = [
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16,
    1e17, 1e18, 1e19, 1e20, 1e21, 1e22,
];

/// Scan and convert one number token (grammar in the module doc).
#[inline]
pub fn parse_number(t: &[u8]) -> Result<f64, NumError> {
    let n = t.len();
    let mut i = 0;
    let neg = match t.first() {
        Some(b'-') => {
            i = 1;
            true
        }
        Some(b'+') => {
            i = 1;
            false
        }
        _ => false,
    };
    // Digits accumulate with wrapping arithmetic; the value is used only when there
    // are at most 19 of them (no overflow possible below 10^19 < 2^64).
    let mut mant: u64 = 0;
    let int_start = i;
    while i < n && t[i].is_ascii_digit() {
        mant = mant.wrapping_mul(10).wrapping_add(u64::from(t[i] - b'0'));
        i += 1;
    }
    let int_digits = i - int_start;
    let mut frac_digits = 0;
    if i < n && t[i] == b'.' {
        i += 1;
        let fs = i;
        while i < n && t[i].is_ascii_digit() {
            mant = mant.wrapping_mul(10).wrapping_add(u64::from(t[i] - b'0'));
            i += 1;
        }
        frac_digits = i - fs;
    }
    if int_digits == 0 && frac_digits == 0 {
        return Err(NumError::Malformed);
    }
    let mut exp10: i64 = 0;
    if i < n && (t[i] == b'e' || t[i] == b'E') {
        i += 1;
        let mut eneg = false;
        if i < n && (t[i] == b'+' || t[i] == b'-') {
            eneg = t[i] == b'-';
            i += 1;
        }
        let es = i;
        while i < n && t[i].is_ascii_digit() {
            exp10 = (exp10 * 10 + i64::from(t[i] - b'0')).min(1 << 40);
            i += 1;
        }
        if i == es {
            return Err(NumError::Malformed);
        }
        if eneg {
            exp10 = -exp10;
        }
    }
    if i != n {
        return Err(NumError::Malformed);
    }
    let exp10 = exp10 - frac_digits as i64;
    let v = if int_digits + frac_digits <= 19 && mant < (1u64 << 53) && (-22..=22).contains(&exp10)
    {
        // Clinger's fast path: both operands exact, one rounding.
        let m = mant as f64;
        if exp10 >= 0 {
            m * POW10[exp10 as usize]
        } else {
            m / POW10[(-exp10) as usize]
        }
    } else {
        // The token is plain ASCII by the scan above; the standard parser is correct
        // for every grammar-conforming input.
        let body = match t[0] {
            b'+' | b'-' => &t[1..],
            _ => t,
        };
        let s = std::str::from_utf8(body).map_err(|_| NumError::Malformed)?;
        let v: f64 = s.parse().map_err(|_| NumError::Malformed)?;
        v
    };
    if !v.is_finite() {
        return Err(NumError::NonFinite);
    }
    Ok(if neg { -v } else { v })
}

/// Parse a token as a positive decimal integer (counts such as `[Number of Ports]`).
/// `None` when it is not all digits or overflows u64.
pub fn parse_count(t: &[u8]) -> Option<u64> {
    if t.is_empty() || !t.iter().all(u8::is_ascii_digit) {
        return None;
    }
    let mut v: u64 = 0;
    for &b in t {
        v = v.checked_mul(10)?.checked_add(u64::from(b - b'0'))?;
    }
    Some(v)
}

/// A token shown in a message: lossy text, cut to a readable length.
pub fn show(t: &[u8]) -> String {
    const MAX: usize = 40;
    let s = String::from_utf8_lossy(&t[..t.len().min(MAX)]).into_owned();
    if t.len() > MAX {
        format!("{s}…")
    } else {
        s
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn lines(input: &[u8]) -> Vec<Vec<u8>> {
        let mut r = LineReader::new(input);
        let mut out = Vec::new();
        while r.next_line().unwrap() {
            out.push(r.buf.clone());
        }
        out
    }

    #[test]
    fn line_ends_lf_crlf_cr() {
        // reference/touchstone.md §2.4: LF, CR+LF and CR all end a line.
        let want: Vec<Vec<u8>> = vec![b"a".to_vec(), b"b".to_vec(), b"".to_vec(), b"c".to_vec()];
        assert_eq!(lines(b"a\nb\n\nc\n"), want);
        assert_eq!(lines(b"a\r\nb\r\n\r\nc\r\n"), want);
        assert_eq!(lines(b"a\rb\r\rc\r"), want);
        assert_eq!(lines(b"a\rb\n\r\nc"), want);
        assert!(lines(b"").is_empty());
    }

    #[test]
    fn crlf_split_across_buffer_refills() {
        // a CR at the end of one BufReader fill and LF at the start of the next
        let data = b"ab\r\ncd\r\nef";
        let r = std::io::BufReader::with_capacity(3, &data[..]);
        let mut lr = LineReader::new(r);
        let mut got = Vec::new();
        while lr.next_line().unwrap() {
            got.push(String::from_utf8(lr.buf.clone()).unwrap());
        }
        assert_eq!(got, ["ab", "cd", "ef"]);
        assert_eq!(lr.line, 3);
    }

    #[test]
    fn long_line_refused_with_bounded_buffer() {
        let data = vec![b'1'; 10_000];
        let mut lr = LineReader::with_cap(&data[..], 100);
        match lr.next_line() {
            Err(LineError::TooLong(1)) => {}
            other => panic!("{other:?}"),
        }
        assert!(lr.buf.capacity() < 1000);
    }

    #[test]
    fn numbers_grammar() {
        // reference/touchstone.md §2.8 (spec examples use `2`, `.95`, `10.000`,
        // exponent forms; `inf`, `nan`, `1_000` are not numbers).
        for (t, v) in [
            ("2", 2.0),
            (".95", 0.95),
            ("-.04", -0.04),
            ("+.5", 0.5),
            ("1.", 1.0),
            ("10.000", 10.0),
            ("3.24898499146609E-05", 3.24898499146609e-5),
            ("1.0e9", 1e9),
            ("-0", -0.0),
            ("0.1", 0.1),
            ("123456789012345678901234567890", 1.2345678901234568e29),
            ("1e-320", 1e-320),
            ("0.000000000000000000000000000001234", 1.234e-30),
            ("2.2250738585072014e-308", 2.2250738585072014e-308),
        ] {
            assert_eq!(parse_number(t.as_bytes()), Ok(v), "{t}");
        }
        for t in [
            "inf", "-inf", "NaN", "nan", "Infinity", "1_000", "1,5", "1d3", "0x10", "1e", ".", "",
            "+", "-", "e5", "1e+", "--1", "1.2.3", "1e5.0", "١",
        ] {
            assert_eq!(parse_number(t.as_bytes()), Err(NumError::Malformed), "{t}");
        }
        assert_eq!(parse_number(b"1e999"), Err(NumError::NonFinite));
        assert_eq!(parse_number(b"-1e400"), Err(NumError::NonFinite));
    }

    #[test]
    fn fast_path_agrees_with_std() {
        // the exact path must give the same bits as the standard library
        let cases = [
            "0.3926",
            "-0.1211",
            "161.24",
            "0.874020294860635",
            "9007199254740991",
            "9007199254740993",
            "1.7976931348623157e308",
            "4.9e-324",
            "123.456e-7",
            "0.00000123",
            "99999999999999999999e-5",
        ];
        for c in cases {
            let want: f64 = c.parse().unwrap();
            assert_eq!(
                parse_number(c.as_bytes()).unwrap().to_bits(),
                want.to_bits(),
                "{c}"
            );
        }
    }

    #[test]
    fn counts() {
        assert_eq!(parse_count(b"4"), Some(4));
        assert_eq!(parse_count(b"99999999999"), Some(99_999_999_999));
        assert_eq!(parse_count(b"999999999999999999999999"), None);
        assert_eq!(parse_count(b"4.0"), None);
        assert_eq!(parse_count(b"-1"), None);
    }

    proptest::proptest! {
        #[test]
        fn any_f64_round_trips_through_display(x in proptest::num::f64::NORMAL | proptest::num::f64::SUBNORMAL | proptest::num::f64::ZERO) {
            for s in [format!("{x:e}"), format!("{x}"), format!("{x:E}")] {
                proptest::prop_assert_eq!(parse_number(s.as_bytes()).map(f64::to_bits), Ok(x.to_bits()), "{}", s);
            }
        }
    }
}
