//! Lexical layer of the reader: lines (LF, CRLF or CR) out of any `BufRead` with a
//! length cap, whitespace tokens, and the number scanner.
//!
//! Numbers follow the grammar `[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?`
//! (reference/touchstone.md §2.8). Rust's `f64::from_str` and fast-float also accept
//! `inf`, `NaN` and `infinity`, so the grammar is always ours and the conversion
//! theirs: fast-float (Eisel–Lemire, D. Lemire, "Number parsing at a gigabyte per
//! second", Software: Practice and Experience 51(8), 2021) is correctly rounded like
//! the standard library and needs no slow fallback for the 17–19-digit mantissas
//! that simulators write, which overflow 2^53 and defeat Clinger's exact path. The
//! data fast path reads its numbers with the `float` module's own conversion (the
//! same bits in fewer instructions), and with fast-float2 the few it declines.
//!
//! Two ways in: [`parse_number`] checks one token against the grammar and converts
//! it (option line, keywords, any line the fast path declines); [`scan_numbers`] is
//! the fast path for whole data lines, which reads and checks every number in one
//! pass and declines (returns `None`) on anything unusual, leaving the error and its
//! column to the careful path.

use std::io::{self, BufRead};

use super::float;

/// Longest line accepted (bytes, terminator excluded). Nothing in the specifications
/// bounds a line, but a reader must bound its memory; 64 MiB is far beyond any real
/// data line or comment.
pub const MAX_LINE: usize = 64 << 20;

/// Tokens longer than this are converted by the standard library: fast-float stops
/// accumulating exponent digits at 65536, which is exact unless a token has tens of
/// thousands of digits to make up for such an exponent.
const LONG_TOKEN: usize = 1000;

/// Why a line could not be read.
#[derive(Debug)]
pub enum LineError {
    /// the underlying reader failed
    Io(io::Error),
    /// the line at this 1-based number is longer than [`MAX_LINE`]
    TooLong(usize),
}

/// A line from [`LineReader::next_scanned`]: its number, its bytes, and where its
/// content ends when its values were scanned.
pub type ScannedLine<'a> = (usize, &'a [u8], Option<usize>);

/// Splits a byte stream into lines ended by LF, CRLF or CR (all three occur in real
/// files; reference/touchstone.md §2.4).
///
/// A line that lies whole in the reader's buffer is handed out in place (no copy);
/// only a line that straddles a refill is gathered into an own buffer. The bytes of
/// the line handed out are consumed on the next call.
pub struct LineReader<R> {
    inner: R,
    /// a line gathered across refills, without its terminator
    buf: Vec<u8>,
    /// bytes of the reader's buffer taken by the line handed out in place
    pending: usize,
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
            buf: Vec::new(),
            pending: 0,
            line: 0,
            skip_lf: false,
            done: false,
            max,
        }
    }

    /// Go on reading `inner` after `line` lines were read elsewhere; `skip_lf`:
    /// the last of them ended in CR, so an LF first belongs to it.
    pub fn resume(inner: R, line: usize, skip_lf: bool) -> Self {
        LineReader {
            line,
            skip_lf,
            ..Self::new(inner)
        }
    }

    /// The next line without its terminator, with its 1-based number; `Ok(None)` at
    /// the end of the input.
    pub fn next_line(&mut self) -> Result<Option<(usize, &[u8])>, LineError> {
        self.inner.consume(std::mem::take(&mut self.pending));
        self.buf.clear();
        if self.done {
            return Ok(None);
        }
        loop {
            let avail = match self.inner.fill_buf() {
                Ok(b) => b,
                Err(e) if e.kind() == io::ErrorKind::Interrupted => continue,
                Err(e) => return Err(LineError::Io(e)),
            };
            if avail.is_empty() {
                self.done = true;
                if self.buf.is_empty() {
                    return Ok(None);
                }
                self.line += 1;
                return Ok(Some((self.line, &self.buf)));
            }
            let mut start = 0;
            if self.skip_lf {
                self.skip_lf = false;
                if avail[0] == b'\n' {
                    start = 1;
                }
            }
            let rest = &avail[start..];
            // memchr2 looks at 16 or 32 bytes a step; a byte loop costs ~9 instructions a byte
            match memchr::memchr2(b'\n', b'\r', rest) {
                Some(p) => {
                    if self.buf.len() + p > self.max {
                        return Err(LineError::TooLong(self.line + 1));
                    }
                    self.skip_lf = rest[p] == b'\r';
                    self.line += 1;
                    if self.buf.is_empty() {
                        self.pending = start + p + 1;
                        return self.in_place(start, start + p);
                    }
                    self.buf.extend_from_slice(&rest[..p]);
                    self.inner.consume(start + p + 1);
                    return Ok(Some((self.line, &self.buf)));
                }
                None => {
                    let n = rest.len();
                    if self.buf.len() + n > self.max {
                        return Err(LineError::TooLong(self.line + 1));
                    }
                    self.buf.extend_from_slice(rest);
                    self.inner.consume(start + n);
                }
            }
        }
    }

    /// The next line, for a parser expecting data: when the line lies whole in the
    /// reader's buffer and [`scan_line`] reads it, its values are in `out` and its
    /// content end comes third, and the line's end was found by that scan, not by
    /// a search of its own. Otherwise (a line off the fast path, one that straddles
    /// a refill, the end of the input) this is [`next_line`](Self::next_line) with
    /// `None` third and `out` empty.
    pub fn next_scanned(
        &mut self,
        out: &mut Vec<f64>,
    ) -> Result<Option<ScannedLine<'_>>, LineError> {
        self.inner.consume(std::mem::take(&mut self.pending));
        out.clear();
        if !self.done {
            let avail = match self.inner.fill_buf() {
                Ok(b) => b,
                // nothing to scan: `next_line` retries
                Err(e) if e.kind() == io::ErrorKind::Interrupted => &[],
                Err(e) => return Err(LineError::Io(e)),
            };
            let start = usize::from(self.skip_lf && avail.first() == Some(&b'\n'));
            match scan_line(&avail[start..], out) {
                Some((end, len)) if len <= self.max => {
                    self.skip_lf = avail[start + len] == b'\r';
                    self.line += 1;
                    self.pending = start + len + 1;
                    return Ok(self
                        .in_place(start, start + len)?
                        .map(|(no, l)| (no, l, Some(end))));
                }
                _ => out.clear(),
            }
        }
        Ok(self.next_line()?.map(|(no, l)| (no, l, None)))
    }

    /// Bytes `from..to` of the reader's buffer, which holds the current line. A
    /// second `fill_buf` without `consume` returns the same bytes without reading
    /// (the `BufRead` contract); it stands in for returning the first borrow, which
    /// the borrow checker refuses on a path that goes on to use the reader.
    fn in_place(&mut self, from: usize, to: usize) -> Result<Option<(usize, &[u8])>, LineError> {
        let line = self.line;
        let avail = self.inner.fill_buf().map_err(LineError::Io)?;
        match avail.get(from..to) {
            Some(l) => Ok(Some((line, l))),
            None => Err(LineError::Io(io::Error::other(
                "the reader's buffer changed between two reads",
            ))),
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

/// Does the whole token follow the number grammar (module doc)?
fn follows_grammar(t: &[u8]) -> bool {
    let digits = |mut i: usize| {
        while i < t.len() && t[i].is_ascii_digit() {
            i += 1;
        }
        i
    };
    let mut i = usize::from(matches!(t.first(), Some(b'+' | b'-')));
    let int_end = digits(i);
    let mut mantissa_digits = int_end - i;
    i = int_end;
    if t.get(i) == Some(&b'.') {
        let frac_end = digits(i + 1);
        mantissa_digits += frac_end - (i + 1);
        i = frac_end;
    }
    if mantissa_digits == 0 {
        return false;
    }
    if matches!(t.get(i), Some(b'e' | b'E')) {
        i += 1;
        if matches!(t.get(i), Some(b'+' | b'-')) {
            i += 1;
        }
        let exp_end = digits(i);
        if exp_end == i {
            return false;
        }
        i = exp_end;
    }
    i == t.len()
}

/// Check one number token against the grammar (module doc) and convert it.
pub fn parse_number(t: &[u8]) -> Result<f64, NumError> {
    if !follows_grammar(t) {
        return Err(NumError::Malformed);
    }
    let v = if t.len() <= LONG_TOKEN {
        fast_float2::parse::<f64, _>(t).map_err(|_| NumError::Malformed)?
    } else {
        // plain ASCII by the grammar check
        let s = std::str::from_utf8(t).map_err(|_| NumError::Malformed)?;
        s.parse().map_err(|_| NumError::Malformed)?
    };
    if v.is_finite() {
        Ok(v)
    } else {
        Err(NumError::NonFinite)
    }
}

/// The fast path for a data line: blanks and numbers, and optionally a `!` comment
/// after them. Appends the values to `out` and returns where the content ends (the
/// `!`, or the line's length).
///
/// `None` when the line holds anything else — a token off the grammar, a value that
/// overflows, a keyword or option line, a non-ASCII or control byte before the `!`.
/// `out` may then hold some values; the caller discards them and reads the line
/// with [`Tokens`] and [`parse_number`], which find the error and its column.
///
/// One pass: the longest number at the start of the rest of the line is read
/// (`float::parse`, else fast-float2), and must then end at a blank, a `!` or the
/// line's end. fast-float2's grammar is the Touchstone one plus
/// `inf`/`nan`/`infinity`, which are refused up front: after the sign the grammar
/// allows only a digit or a point.
#[inline]
pub fn scan_numbers(line: &[u8], out: &mut Vec<f64>) -> Option<usize> {
    scan(line, out, false).map(|(end, _)| end)
}

/// [`scan_numbers`] on the line at the start of `text` (a data line and whatever
/// follows it in the input), finding the line's end on the way: the bytes between
/// the numbers are looked at anyway, so a LF or CR there ends the line without a
/// separate search for it. `Some((content end, line end))`, the line end being the
/// index of its terminator; the values are those `scan_numbers` gives for
/// `text[..line end]`. `None` when `scan_numbers` would decline that line, or when
/// `text` ends before a terminator (the caller then takes the line the ordinary
/// way).
#[inline]
pub fn scan_line(text: &[u8], out: &mut Vec<f64>) -> Option<(usize, usize)> {
    scan(text, out, true)
}

/// Both scans: `eol` tells whether a LF or CR ends the line (and the end of `text`
/// is not known to be one) or `text` is the line.
#[inline(always)]
fn scan(text: &[u8], out: &mut Vec<f64>, eol: bool) -> Option<(usize, usize)> {
    let n = text.len();
    let mut i = 0;
    loop {
        // between numbers: blanks, then a number, a comment or the line's end
        let b = loop {
            match text.get(i) {
                Some(b' ' | b'\t') => i += 1,
                Some(&b) => break b,
                None if eol => return None,
                None => return Some((n, n)),
            }
        };
        match b {
            b'0'..=b'9' | b'.' => {}
            // after a sign only a digit or a point (no `inf`, `nan`)
            b'+' | b'-' if matches!(text.get(i + 1), Some(b'0'..=b'9' | b'.')) => {}
            b'!' if eol => return memchr::memchr2(b'\n', b'\r', &text[i..]).map(|t| (i, i + t)),
            b'!' => return Some((i, n)),
            b'\n' | b'\r' if eol => return Some((i, i)),
            _ => return None,
        }
        // `float::parse` gives finite values only
        let (v, used) = match float::parse(&text[i..]) {
            Some(r) => r,
            None => fast_float2_at(&text[i..]).filter(|(v, _)| v.is_finite())?,
        };
        if used > LONG_TOKEN {
            return None;
        }
        i += used;
        // the number must end at a blank, a comment or the line's end
        match text.get(i) {
            None | Some(b' ' | b'\t' | b'!') => {}
            Some(b'\n' | b'\r') if eol => {}
            Some(_) => return None,
        }
        out.push(v);
    }
}

/// fast-float2 on the number at the start of `text`: the tokens [`float::parse`]
/// leaves (more than 19 significant digits, a rounding Eisel–Lemire cannot decide,
/// no digit).
#[inline(never)]
fn fast_float2_at(text: &[u8]) -> Option<(f64, usize)> {
    fast_float2::parse_partial::<f64, _>(text).ok()
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
        while let Some((no, l)) = r.next_line().unwrap() {
            out.push(l.to_vec());
            assert_eq!(no, out.len());
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
        while let Some((_, l)) = lr.next_line().unwrap() {
            got.push(String::from_utf8(l.to_vec()).unwrap());
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
    fn conversion_agrees_with_std() {
        // both ways in must give the standard library's bits
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
            let mut out = Vec::new();
            assert_eq!(scan_numbers(c.as_bytes(), &mut out), Some(c.len()));
            assert_eq!(out.len(), 1);
            assert_eq!(out[0].to_bits(), want.to_bits(), "{c}");
        }
    }

    #[test]
    fn long_tokens_go_to_the_standard_library() {
        // 0.000…01e2001 is exactly 1; fast-float's exponent cap is not reached here,
        // but the path for long tokens must still be exact
        let t = format!("0.{}1e2001", "0".repeat(2000));
        assert_eq!(parse_number(t.as_bytes()), Ok(1.0));
        assert_eq!(scan_numbers(t.as_bytes(), &mut Vec::new()), None);
    }

    #[test]
    fn scan_numbers_reads_data_lines() {
        let scan = |l: &str| {
            let mut out = Vec::new();
            scan_numbers(l.as_bytes(), &mut out).map(|end| (end, out))
        };
        assert_eq!(scan("1 2.5\t-3e2"), Some((10, vec![1.0, 2.5, -300.0])));
        assert_eq!(scan("  1 .5 ! a comment"), Some((7, vec![1.0, 0.5])));
        assert_eq!(scan("1!x"), Some((1, vec![1.0])));
        assert_eq!(scan(""), Some((0, vec![])));
        assert_eq!(scan(" \t "), Some((3, vec![])));
        assert_eq!(scan("! only a comment"), Some((0, vec![])));
        assert_eq!(scan("+1. -0"), Some((6, vec![1.0, -0.0])));
        // declined: the careful path finds the error and its column
        for l in [
            "inf",
            "1 nan",
            "-Infinity",
            "+inf",
            "1e999",
            "1 -1e400",
            "1,5",
            "1e",
            "1e5x",
            "1ee5",
            "-",
            ".",
            "+",
            "1.2.3",
            "# GHz",
            "[End]",
            "1 \u{e9}",
            "1\u{1}",
            "1\x0b2",
            "0x10",
            "1_000",
            "e5",
        ] {
            assert_eq!(scan(l), None, "{l:?}");
        }
    }

    #[test]
    fn scan_line_finds_the_line_end_and_agrees_with_scan_numbers() {
        let lines = [
            "1 2.5\t-3e2",
            "  1 .5 ! a comment",
            "1!x",
            "",
            " \t ",
            "! only a comment",
            "+1. -0",
            "1 -",
            "1 2 ",
            "inf",
            "1 nan",
            "1e999",
            "1,5",
            "1e",
            "1e5x",
            "# GHz",
            "[End]",
            "1 \u{e9}",
            "1\u{1}",
            "1 ! caf\u{e9}",
        ];
        for line in lines {
            let mut want = Vec::new();
            let want = scan_numbers(line.as_bytes(), &mut want).map(|end| (end, want));
            for eol in ["\n", "\r\n", "\r"] {
                // what follows the terminator is not looked at
                for after in ["", "2 3\n", "x"] {
                    let text = format!("{line}{eol}{after}");
                    let mut got = vec![9.0];
                    let got = scan_line(text.as_bytes(), &mut got).map(|(end, len)| {
                        assert_eq!(len, line.len(), "{text:?}");
                        (end, got)
                    });
                    let mut want = want.clone();
                    if let Some((_, v)) = &mut want {
                        v.insert(0, 9.0); // appended after what `out` held
                    }
                    assert_eq!(got, want, "{text:?}");
                }
            }
            // no terminator: the line may go on beyond the buffer, so no answer
            assert_eq!(
                scan_line(line.as_bytes(), &mut Vec::new()),
                None,
                "{line:?}"
            );
        }
    }

    #[test]
    fn next_scanned_gives_the_lines_of_next_line() {
        let text = b"# GHz S RI\r\n1 2 3\r\n4 5 6 ! c\n\n7 8 9\r10 x\n11 12 13\r\n14 15";
        for cap in [1, 2, 3, 5, 7, 64] {
            let mut plain = LineReader::new(std::io::BufReader::with_capacity(cap, &text[..]));
            let mut want = Vec::new();
            while let Some((no, l)) = plain.next_line().unwrap() {
                let mut v = Vec::new();
                let scanned = scan_numbers(l, &mut v).map(|end| (end, v));
                want.push((no, l.to_vec(), scanned));
            }
            let mut fused = LineReader::new(std::io::BufReader::with_capacity(cap, &text[..]));
            let mut got = Vec::new();
            let mut v = Vec::new();
            while let Some((no, l, end)) = fused.next_scanned(&mut v).unwrap() {
                // a line the fused scan did not take is scanned as the parser would
                let scanned = match end {
                    Some(end) => Some((end, v.clone())),
                    None => {
                        assert!(v.is_empty());
                        let mut v = Vec::new();
                        scan_numbers(l, &mut v).map(|end| (end, v))
                    }
                };
                got.push((no, l.to_vec(), scanned));
            }
            assert_eq!(got, want, "capacity {cap}");
            assert_eq!(fused.line, plain.line);
        }
    }

    #[test]
    fn scanned_random_lines_read_as_token_by_token() {
        // lines of numbers and of tokens off the grammar: the fast scan gives the
        // general path's values, or declines exactly when a token is not a finite
        // number (tokens here are far below LONG_TOKEN)
        use crate::touchstone::float::tests::{random_number, Rng};
        let mut rng = Rng(0x5eed_0f11_e5a7);
        let junk = [
            "inf", "-nan", "1e", "1e+", "1.2.3", "--1", "+", ".", "1,5", "0x1", "1e5x", "5.e",
            "1e999", "-1e400", "\u{e9}", "[End]", "#",
        ];
        for _ in 0..30_000 {
            let mut line = String::new();
            for k in 0..rng.below(9) {
                let blank = rng.pick(&[" ", "  ", "\t", " \t "]);
                if k > 0 || rng.below(4) == 0 {
                    line.push_str(blank);
                }
                if rng.below(40) == 0 {
                    line.push_str(rng.pick(&junk));
                } else {
                    let (m, e) = random_number(&mut rng);
                    line.push_str(&m);
                    line.push_str(&e);
                }
            }
            let want: Option<Vec<u64>> = Tokens::new(line.as_bytes())
                .map(|(_, t)| parse_number(t).ok().map(f64::to_bits))
                .collect();
            let mut got = Vec::new();
            let end = scan_numbers(line.as_bytes(), &mut got);
            let got = end.map(|_| got.iter().map(|v| v.to_bits()).collect::<Vec<_>>());
            assert_eq!(got, want, "{line:?}");
            assert!(end.is_none() || end == Some(line.len()), "{line:?}");
            let mut fused = Vec::new();
            let text = format!("{line}\n");
            let fused = scan_line(text.as_bytes(), &mut fused)
                .map(|_| fused.iter().map(|v| v.to_bits()).collect::<Vec<_>>());
            assert_eq!(fused, want, "{line:?}");
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
                let mut out = Vec::new();
                proptest::prop_assert_eq!(scan_numbers(s.as_bytes(), &mut out), Some(s.len()));
                proptest::prop_assert_eq!(out[0].to_bits(), x.to_bits(), "{}", s);
            }
        }
    }
}
