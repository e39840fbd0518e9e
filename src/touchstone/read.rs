//! The streaming Touchstone parser: one pass over the lines, each read in place
//! from the input buffer, numbers scanned in place (no allocation per token or per
//! line), each record converted to S as soon as it is complete, so memory is the
//! result's size.
//!
//! Speed (issue 8): a data line is first tried by [`lex::scan_numbers`], which reads
//! and checks its numbers in one pass; only a line it declines goes through the
//! careful per-token path, which is the one that words the errors, so messages and
//! columns are those of the careful path (`read_bytes_careful` is the reference the
//! tests compare with). While data are expected, the line reader runs that scan on
//! the buffer itself ([`LineReader::next_scanned`]), so the scan also finds the
//! line's end. Large files go through [`read_blocks`], which runs that scan
//! over a block's lines in parallel and feeds the same parser in order.
//!
//! Rules follow `reference/touchstone.md` (section numbers below refer to it).
//! Decisions where the specifications are silent or ambiguous:
//! - A v1 record's end is found by counting values; the first record ends at the
//!   next line with an odd count (the parity rule of the IBIS checker, §5.4), and its
//!   length 1 + 2N² gives N. The `.sNp` extension must agree with it (error if not).
//! - A v1 2-port noise block starts at the first record start whose frequency is
//!   below the previous one, or equal to it on a 5-value line (the ≤ reading of §7).
//!   A line that cannot be read either way gets an error that names both readings.
//! - Frequencies must strictly increase (a repeat is an error: the checker must not
//!   guess which of two points is meant). Compared on the raw values in the file's unit.
//! - Per-port R on the option line (1.1) must give 1 or N values. With per-port
//!   references, v1 normalised data are de-normalised with D = diag(√R):
//!   Z = D z D, Y = D⁻¹ y D⁻¹, H11 = R1·h11, H12 = h12·√(R1/R2), H21 = h21·√(R1/R2),
//!   H22 = h22/R2 and the dual for G; with one R this is the spec's rule (§8).
//! - v1 noise Rn is de-normalised with the first port's R. v2 Rn is in ohms (§7).
//! - A second option line is an error in both versions (never silently applied, §4).
//! - `#MHz` (no blank) and blanks before `#` or a keyword are read, with a warning.
//! - v2: `[Number of Frequencies]` is required and must match; `[Two-Port Data
//!   Order]` is required for 2-ports and refused otherwise; keywords other than
//!   `[Version]` and the option line need `[Number of Ports]` first; `[End]` missing
//!   is a warning, anything but comments after it an error. `[Mixed-Mode Order]` is
//!   refused with a clear message. `[Begin Information]` blocks are skipped (bytes in
//!   them are treated like comments).
//! - Non-ASCII bytes are an error outside comments and a warning inside them; a
//!   UTF-8 byte-order mark is a warning. Control bytes other than tab are an error.

use std::fs::File;
use std::io::{self, BufRead, BufReader, Read};

use rayon::prelude::*;
use std::path::Path;

use super::lex::{self, LineError, LineReader, NumError, Tokens};
use super::{
    ErrorKind, Format, FreqUnit, NoiseRow, Param, ReadError, Touchstone, Version, Warning,
};
use crate::network::{convert, Network, C64};

/// Largest port count accepted (`[Number of Ports]`, `.sNp`, or inferred). A record
/// of this size is 2 million values; anything beyond is not an on-chip passive.
pub const MAX_PORTS: usize = 1000;
/// Warnings kept per file (the rest are counted in a last one).
const MAX_WARNINGS: usize = 100;
/// Complex values reserved ahead of the data at most (64 MiB), whatever a header claims.
const MAX_RESERVE: usize = 4 << 20;
const NONE: usize = usize::MAX;
const BOM: &[u8] = b"\xEF\xBB\xBF";

/// Read a Touchstone file (streaming, buffered).
pub fn read_path(path: &Path) -> Result<Touchstone, ReadError> {
    let name = path.display().to_string();
    let file = File::open(path).map_err(|e| ReadError {
        path: name.clone(),
        line: 1,
        column: 1,
        kind: ErrorKind::Io(e.to_string()),
    })?;
    let size = file.metadata().ok().map(|m| m.len());
    match size {
        Some(s) if s >= PARALLEL_MIN => read_blocks(&name, file, size, BLOCK),
        _ => read_reader(&name, BufReader::with_capacity(1 << 18, file), size),
    }
}

/// Read a Touchstone file held in memory; `name` is used for messages and for the
/// port count of an `.sNp` extension.
pub fn read_bytes(name: &str, bytes: &[u8]) -> Result<Touchstone, ReadError> {
    read_reader(name, bytes, Some(bytes.len() as u64))
}

/// Read from any buffered reader; `size` (bytes), when known, sizes the result.
pub fn read_reader<R: BufRead>(
    name: &str,
    reader: R,
    size: Option<u64>,
) -> Result<Touchstone, ReadError> {
    read_lines(name, reader, size, true)
}

/// [`read_bytes`] with the fast paths turned off: every line goes through the
/// per-token checks and every record through the general conversion loop. The
/// result is the same, errors included, only slower; tests compare the two
/// (tests/touchstone_fast.rs).
pub fn read_bytes_careful(name: &str, bytes: &[u8]) -> Result<Touchstone, ReadError> {
    read_lines(name, bytes, Some(bytes.len() as u64), false)
}

fn read_lines<R: BufRead>(
    name: &str,
    reader: R,
    size: Option<u64>,
    fast: bool,
) -> Result<Touchstone, ReadError> {
    let mut p = Parser::new(name, size)?;
    p.fast = fast;
    let last = p.run(LineReader::new(reader))?;
    p.finish(last)
}

/// Files at least this large are read by [`read_blocks`], smaller ones are not
/// worth a second thread.
const PARALLEL_MIN: u64 = 8 << 20;
/// Bytes [`read_path`] reads at a time for [`read_blocks`]: enough lines to share
/// out, little memory beside the result.
const BLOCK: usize = 4 << 20;
/// Lines per parallel task of [`read_blocks`].
const LINES_PER_TASK: usize = 2048;

/// The reader for large files: reads `block` bytes at a time, runs the fast path
/// ([`lex::scan_numbers`], most of the work) over the block's lines in parallel,
/// then hands the lines in order to the same parser as [`read_reader`]. The scan
/// is a function of a line's bytes alone, so the result is the line-by-line one,
/// errors included. While the parser takes one block's lines (which it must do in
/// order, on one thread), the next block is read, split and scanned beside it. A
/// line longer than a block (absurd in data) hands the rest of the input to the
/// line-by-line reader.
pub fn read_blocks<R: Read + Send>(
    name: &str,
    mut src: R,
    size: Option<u64>,
    block: usize,
) -> Result<Touchstone, ReadError> {
    let block = block.max(1);
    let mut p = Parser::new(name, size)?;
    let mut no = 0;
    let mut cur = Block::default();
    let mut next = Block::default();
    cur.load(&mut src, &[], false, block)
        .map_err(|e| p.err(1, 1, ErrorKind::Io(e.to_string())))?;
    loop {
        if cur.lines.is_empty() && !cur.eof {
            // no line end in a whole block: go on line by line from here
            let carried = cur.buf[cur.rest..].to_vec();
            let rest = io::Cursor::new(carried).chain(src);
            let reader = BufReader::with_capacity(1 << 18, rest);
            let last = p.run(LineReader::resume(reader, no, cur.skip_lf))?;
            return p.finish(last);
        }
        if cur.eof {
            cur.feed(&mut p, &mut no)?;
            return p.finish(no);
        }
        let (fed, loaded) = rayon::join(
            || cur.feed(&mut p, &mut no),
            || next.load(&mut src, &cur.buf[cur.rest..], cur.skip_lf, block),
        );
        fed?;
        loaded.map_err(|e| p.err(no + 1, 1, ErrorKind::Io(e.to_string())))?;
        std::mem::swap(&mut cur, &mut next);
    }
}

/// One block of [`read_blocks`]: its bytes, split into lines and scanned.
#[derive(Default)]
struct Block {
    buf: Vec<u8>,
    /// (start, end) of each whole line in `buf`, terminator excluded
    lines: Vec<(usize, usize)>,
    /// the scans of `lines`, [`LINES_PER_TASK`] lines each
    scans: Vec<Scanned>,
    /// where the bytes after the last whole line start (carried to the next block)
    rest: usize,
    /// the input ended in this block (its last line, unterminated, is in `lines`)
    eof: bool,
    /// the block ended in CR: an LF starting the next belongs to it
    skip_lf: bool,
}

impl Block {
    /// `carry` (the previous block's unfinished line) and up to `block` new bytes of
    /// `src`; `skip_lf`: the previous block ended in CR.
    fn load<R: Read>(
        &mut self,
        src: &mut R,
        carry: &[u8],
        skip_lf: bool,
        block: usize,
    ) -> io::Result<()> {
        self.buf.clear();
        self.buf.extend_from_slice(carry);
        self.eof = fill(src, &mut self.buf, block)?;
        let buf = &self.buf;
        let mut i = 0;
        if skip_lf && buf.first() == Some(&b'\n') {
            i = 1;
        }
        self.skip_lf = false;
        self.lines.clear();
        while let Some(q) = memchr::memchr2(b'\n', b'\r', &buf[i..]) {
            let end = i + q;
            self.lines.push((i, end));
            i = end + 1;
            if buf[end] == b'\r' {
                match buf.get(i) {
                    Some(b'\n') => i += 1,
                    None => self.skip_lf = true,
                    _ => {}
                }
            }
        }
        if self.eof && i < buf.len() {
            self.lines.push((i, buf.len()));
            i = buf.len();
        }
        self.rest = i;
        self.scans = self
            .lines
            .par_chunks(LINES_PER_TASK)
            .map(|chunk| Scanned::of(buf, chunk))
            .collect();
        Ok(())
    }

    /// Hand the block's lines to the parser in order; `no` counts the lines.
    fn feed(&self, p: &mut Parser, no: &mut usize) -> Result<(), ReadError> {
        for (chunk, scanned) in self.lines.chunks(LINES_PER_TASK).zip(&self.scans) {
            for (&(s, e), pre) in chunk.iter().zip(&scanned.lines) {
                *no += 1;
                let raw = &self.buf[s..e];
                if raw.len() > lex::MAX_LINE {
                    return Err(p.err(
                        *no,
                        1,
                        ErrorKind::LineTooLong {
                            limit: lex::MAX_LINE,
                        },
                    ));
                }
                let pre = pre
                    .as_ref()
                    .map(|(end, r)| (*end, &scanned.vals[r.clone()]));
                p.feed(*no, raw, pre)?;
            }
        }
        Ok(())
    }
}

/// [`lex::scan_numbers`] over some lines of a block: per line, where its content
/// ends and which of `vals` are its values, or `None` where the scan declined.
struct Scanned {
    vals: Vec<f64>,
    lines: Vec<Option<(usize, std::ops::Range<usize>)>>,
}

impl Scanned {
    fn of(buf: &[u8], lines: &[(usize, usize)]) -> Scanned {
        let mut vals = Vec::new();
        let lines = lines
            .iter()
            .map(|&(s, e)| {
                let before = vals.len();
                match lex::scan_numbers(&buf[s..e], &mut vals) {
                    Some(end) => Some((end, before..vals.len())),
                    None => {
                        vals.truncate(before);
                        None
                    }
                }
            })
            .collect();
        Scanned { vals, lines }
    }
}

/// Append up to `n` bytes of `src` to `buf`; `Ok(true)` when the input ended first.
fn fill<R: Read>(src: &mut R, buf: &mut Vec<u8>, n: usize) -> io::Result<bool> {
    let got = src.take(n as u64).read_to_end(buf)?;
    Ok(got < n)
}

/// Read arbitrary bytes under several file names and report how many readings
/// succeeded. Used by fuzzing and robustness tests: it must return for any input.
pub fn check_bytes(bytes: &[u8]) -> usize {
    ["data.s1p", "data.s2p", "data.s4p", "data.ts"]
        .iter()
        .filter(|n| read_bytes(n, bytes).is_ok())
        .count()
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Stage {
    /// nothing but comments and blank lines so far
    Start,
    /// version-1 data after the option line
    V1,
    /// version-2 header
    V2Head,
    /// inside `[Begin Information]` (opened at this line)
    V2Info(usize),
    /// after `[Network Data]`
    V2Net,
    /// after `[Noise Data]`
    V2Noise,
    /// after `[End]` (at this line)
    V2End(usize),
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Order {
    O12_21,
    O21_12,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Matrix {
    Full,
    Lower,
    Upper,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Kw {
    Version,
    NumberOfPorts,
    TwoPortDataOrder,
    NumberOfFrequencies,
    NumberOfNoiseFrequencies,
    Reference,
    MatrixFormat,
    MixedModeOrder,
    BeginInformation,
    EndInformation,
    NetworkData,
    NoiseData,
    End,
}

impl Kw {
    const ALL: [Kw; 13] = [
        Kw::Version,
        Kw::NumberOfPorts,
        Kw::TwoPortDataOrder,
        Kw::NumberOfFrequencies,
        Kw::NumberOfNoiseFrequencies,
        Kw::Reference,
        Kw::MatrixFormat,
        Kw::MixedModeOrder,
        Kw::BeginInformation,
        Kw::EndInformation,
        Kw::NetworkData,
        Kw::NoiseData,
        Kw::End,
    ];
    fn name(self) -> &'static str {
        match self {
            Kw::Version => "Version",
            Kw::NumberOfPorts => "Number of Ports",
            Kw::TwoPortDataOrder => "Two-Port Data Order",
            Kw::NumberOfFrequencies => "Number of Frequencies",
            Kw::NumberOfNoiseFrequencies => "Number of Noise Frequencies",
            Kw::Reference => "Reference",
            Kw::MatrixFormat => "Matrix Format",
            Kw::MixedModeOrder => "Mixed-Mode Order",
            Kw::BeginInformation => "Begin Information",
            Kw::EndInformation => "End Information",
            Kw::NetworkData => "Network Data",
            Kw::NoiseData => "Noise Data",
            Kw::End => "End",
        }
    }
    /// Match a keyword name: case-insensitive, runs of blanks equal one space.
    fn find(raw: &[u8]) -> Option<Kw> {
        Kw::ALL
            .into_iter()
            .find(|k| same_words(raw, k.name().as_bytes()))
    }
}

/// `a` equals `b` ignoring ASCII case, with runs of blanks in `a` read as one space
/// and blanks at its ends ignored.
fn same_words(a: &[u8], b: &[u8]) -> bool {
    let mut words_a = Tokens::new(a).map(|(_, t)| t);
    let mut words_b = b.split(|&c| c == b' ');
    loop {
        match (words_a.next(), words_b.next()) {
            (None, None) => return true,
            (Some(x), Some(y)) if x.eq_ignore_ascii_case(y) => {}
            _ => return false,
        }
    }
}

/// Where a line's tokens are, for messages. Columns are found again only when an
/// error needs one, so the data path keeps no column per value.
#[derive(Clone, Copy)]
struct At<'l> {
    /// the line's content (before any comment)
    content: &'l [u8],
    /// 0-based column of `content[0]` in the line
    off: usize,
}

impl At<'_> {
    /// 1-based column of the `k`-th token.
    fn col(self, k: usize) -> usize {
        Tokens::new(self.content)
            .nth(k)
            .map_or(self.off + 1, |(c, _)| self.off + c + 1)
    }
}

struct OptionLine {
    unit: FreqUnit,
    param: Param,
    format: Format,
    r: Vec<f64>,
    line: usize,
    r_col: usize,
}

struct Parser<'a> {
    name: &'a str,
    /// the fast paths: data lines through [`lex::scan_numbers`], a record held
    /// whole by one line stored without a copy, 2-port S records by [`place_2x2`]
    fast: bool,
    ext: Option<(usize, String)>,
    size: Option<u64>,
    /// bytes consumed so far and at the start of the current line
    bytes: u64,
    line_start: u64,
    stage: Stage,
    version: Version,
    version_line: usize,
    opt: Option<OptionLine>,
    warnings: Vec<Warning>,
    dropped: usize,
    warned_comment_bytes: bool,
    warned_indent: bool,
    // version-2 header
    ports_kw: Option<(usize, usize)>,
    order_kw: Option<(Order, usize)>,
    nfreq_kw: Option<(u64, usize)>,
    nnoise_kw: Option<(u64, usize)>,
    ref_kw: Option<usize>,
    reference: Vec<f64>,
    ref_pending: bool,
    matrix_kw: Option<(Matrix, usize)>,
    info_line: Option<usize>,
    netdata_line: Option<usize>,
    noisedata_line: Option<usize>,
    // data
    n: Option<usize>,
    rec_len: usize,
    map: Vec<usize>,
    mirror: Vec<usize>,
    /// `map` is the identity (a full matrix in row-major order, no mirrored cells)
    in_order: bool,
    /// a full 2×2 matrix: four pairs, each written once (either order)
    full_2x2: bool,
    z0: Vec<f64>,
    /// v1 normalising resistances (per port), empty for v2
    norm: Vec<f64>,
    rec: Vec<f64>,
    rec_line: usize,
    first_rec_start: u64,
    /// the current line's values (reused)
    vals: Vec<f64>,
    prev_f: Option<(f64, usize)>,
    freq: Vec<f64>,
    s: Vec<C64>,
    block: Vec<C64>,
    noise: Vec<NoiseRow>,
    prev_noise: Option<(f64, usize)>,
    noise_v1_line: Option<usize>,
}

/// Port count from an `.sNp` name: `Ok(None)` for other names (`.ts`, no extension).
fn ports_from_extension(name: &str) -> Result<Option<(usize, String)>, String> {
    let file = name.rsplit(['/', '\\']).next().unwrap_or(name);
    let Some(dot) = file.rfind('.') else {
        return Ok(None);
    };
    let ext = &file[dot + 1..];
    let b = ext.as_bytes();
    if b.len() < 3
        || !b[0].eq_ignore_ascii_case(&b's')
        || !b[b.len() - 1].eq_ignore_ascii_case(&b'p')
        || !b[1..b.len() - 1].iter().all(u8::is_ascii_digit)
    {
        return Ok(None);
    }
    match lex::parse_count(&b[1..b.len() - 1]) {
        Some(n) if n >= 1 && n <= MAX_PORTS as u64 => Ok(Some((n as usize, format!(".{ext}")))),
        _ => Err(format!(".{ext}")),
    }
}

fn is_number_start(t: &[u8]) -> bool {
    matches!(t.first(), Some(b'0'..=b'9' | b'.' | b'+' | b'-'))
}

/// A value pair of the file as a complex number (§11).
#[inline]
fn pair(format: Format, a: f64, b: f64) -> C64 {
    match format {
        Format::RI => C64::new(a, b),
        Format::MA => {
            let (s, c) = b.to_radians().sin_cos();
            C64::new(a * c, a * s)
        }
        Format::DB => {
            let m = 10f64.powf(a / 20.0);
            let (s, c) = b.to_radians().sin_cos();
            C64::new(m * c, m * s)
        }
    }
}

/// The four value pairs of a 2-port record as the row-major matrix: pair `k` goes
/// to cell `map[k]`. `convert` is one format's [`pair`], so the format is matched
/// once per record, not once per pair.
#[inline(always)]
fn place_2x2(map: &[usize], p: &[f64; 8], convert: impl Fn(f64, f64) -> C64) -> [C64; 4] {
    let mut m = [C64::new(0.0, 0.0); 4];
    for (k, &t) in map.iter().enumerate().take(4) {
        m[t] = convert(p[2 * k], p[2 * k + 1]);
    }
    m
}

impl<'a> Parser<'a> {
    fn new(name: &'a str, size: Option<u64>) -> Result<Self, ReadError> {
        let ext = ports_from_extension(name).map_err(|e| ReadError {
            path: name.to_string(),
            line: 1,
            column: 1,
            kind: ErrorKind::BadExtension(e),
        })?;
        Ok(Parser {
            name,
            fast: true,
            ext,
            size,
            bytes: 0,
            line_start: 0,
            stage: Stage::Start,
            version: Version::V1_0,
            version_line: 0,
            opt: None,
            warnings: Vec::new(),
            dropped: 0,
            warned_comment_bytes: false,
            warned_indent: false,
            ports_kw: None,
            order_kw: None,
            nfreq_kw: None,
            nnoise_kw: None,
            ref_kw: None,
            reference: Vec::new(),
            ref_pending: false,
            matrix_kw: None,
            info_line: None,
            netdata_line: None,
            noisedata_line: None,
            n: None,
            rec_len: 0,
            map: Vec::new(),
            mirror: Vec::new(),
            in_order: false,
            full_2x2: false,
            z0: Vec::new(),
            norm: Vec::new(),
            rec: Vec::new(),
            rec_line: 0,
            first_rec_start: 0,
            vals: Vec::new(),
            prev_f: None,
            freq: Vec::new(),
            s: Vec::new(),
            block: Vec::new(),
            noise: Vec::new(),
            prev_noise: None,
            noise_v1_line: None,
        })
    }

    fn err(&self, line: usize, column: usize, kind: ErrorKind) -> ReadError {
        ReadError {
            path: self.name.to_string(),
            line: line.max(1),
            column: column.max(1),
            kind,
        }
    }

    fn warn(&mut self, line: usize, column: usize, message: impl Into<String>) {
        if self.warnings.len() < MAX_WARNINGS {
            self.warnings.push(Warning {
                line,
                column,
                message: message.into(),
            });
        } else {
            self.dropped += 1;
        }
    }

    fn is_v2(&self) -> bool {
        self.version.is_v2()
    }

    /// Feed every line of `lines` to the parser; the number of the last line.
    fn run<R: BufRead>(&mut self, mut lines: LineReader<R>) -> Result<usize, ReadError> {
        // the values of a data line scanned while its end was being found
        let mut vals = Vec::new();
        loop {
            let next = if self.takes_fast_path() {
                lines.next_scanned(&mut vals)
            } else {
                lines
                    .next_line()
                    .map(|l| l.map(|(no, raw)| (no, raw, None)))
            };
            match next {
                Ok(Some((no, raw, end))) => self.feed(no, raw, end.map(|e| (e, &vals[..])))?,
                Ok(None) => return Ok(lines.line),
                Err(LineError::Io(e)) => {
                    return Err(self.err(lines.line + 1, 1, ErrorKind::Io(e.to_string())))
                }
                Err(LineError::TooLong(l)) => {
                    return Err(self.err(
                        l,
                        1,
                        ErrorKind::LineTooLong {
                            limit: lex::MAX_LINE,
                        },
                    ))
                }
            }
        }
    }

    /// One line with its number and, when [`lex::scan_numbers`] has already read
    /// it, the result of that scan.
    fn feed(
        &mut self,
        no: usize,
        raw: &[u8],
        scanned: Option<(usize, &[f64])>,
    ) -> Result<(), ReadError> {
        let start = self.bytes;
        self.line_start = start;
        self.bytes = start + raw.len() as u64 + 1;
        match scanned {
            Some((end, vals)) if self.takes_fast_path() => self.scanned_line(no, raw, end, vals),
            _ => self.line(no, raw),
        }
    }

    /// Data lines take the fast path; a line it declines (anything but numbers,
    /// blanks and a comment) is read again the careful way.
    fn takes_fast_path(&self) -> bool {
        self.fast && matches!(self.stage, Stage::V1 | Stage::V2Net | Stage::V2Noise)
    }

    /// One line, terminator removed.
    fn line(&mut self, no: usize, raw: &[u8]) -> Result<(), ReadError> {
        if self.takes_fast_path() {
            let mut vals = std::mem::take(&mut self.vals);
            vals.clear();
            if let Some(end) = lex::scan_numbers(raw, &mut vals) {
                let res = self.scanned_line(no, raw, end, &vals);
                self.vals = vals;
                return res;
            }
            self.vals = vals;
        }
        self.careful_line(no, raw)
    }

    /// A line of numbers read by [`lex::scan_numbers`], its content ending at `end`.
    fn scanned_line(
        &mut self,
        no: usize,
        raw: &[u8],
        end: usize,
        vals: &[f64],
    ) -> Result<(), ReadError> {
        if end < raw.len() {
            self.check_comment(no, end + 1, &raw[end + 1..])?;
        }
        if vals.is_empty() {
            return Ok(());
        }
        let at = At {
            content: &raw[..end],
            off: 0,
        };
        self.data_line(no, vals, at)
    }

    /// Any line: the character checks, then a dispatch on its first character.
    fn careful_line(&mut self, no: usize, raw: &[u8]) -> Result<(), ReadError> {
        let mut off = 0;
        let mut bytes = raw;
        if no == 1 && bytes.starts_with(BOM) {
            self.warn(
                1,
                1,
                "UTF-8 byte-order mark at the start of the file (ignored)",
            );
            bytes = &bytes[3..];
            off = 3;
        }
        if let Stage::V2Info(_) = self.stage {
            return self.info_line(no, bytes, off);
        }
        // Content ends at `!`; only ASCII text before it.
        let mut cut = bytes.len();
        // Fast skip over 16-byte blocks of plain text (vectorises); the exact scan
        // starts at the first block holding anything special.
        let mut from = 0;
        for chunk in bytes.chunks_exact(16) {
            let special = chunk.iter().fold(false, |acc, &b| {
                acc | (b == b'!') | (b > 0x7E) | ((b < 0x20) & (b != b'\t'))
            });
            if special {
                break;
            }
            from += 16;
        }
        for (i, &b) in bytes.iter().enumerate().skip(from) {
            if b == b'!' {
                cut = i;
                break;
            }
            if b > 0x7E {
                return Err(self.err(no, off + i + 1, ErrorKind::NonAscii(b)));
            }
            if b < 0x20 && b != b'\t' {
                return Err(self.err(no, off + i + 1, ErrorKind::ControlByte(b)));
            }
        }
        if cut < bytes.len() {
            self.check_comment(no, off + cut + 1, &bytes[cut + 1..])?;
        }
        let content = &bytes[..cut];
        let Some(start) = content.iter().position(|&b| !lex::is_blank(b)) else {
            return Ok(());
        };
        match content[start] {
            b'#' => self.option_line(no, content, start, off),
            b'[' => self.keyword(no, content, start, off),
            _ => self.values(no, content, start, off),
        }
    }

    /// Bytes of a comment (or an information block) starting at 0-based column `col0`.
    fn check_comment(&mut self, no: usize, col0: usize, c: &[u8]) -> Result<(), ReadError> {
        for (i, &b) in c.iter().enumerate() {
            if b < 0x20 && b != b'\t' || b == 0x7F {
                return Err(self.err(no, col0 + i + 1, ErrorKind::ControlByte(b)));
            }
            if b > 0x7F && !self.warned_comment_bytes {
                self.warned_comment_bytes = true;
                self.warn(
                    no,
                    col0 + i + 1,
                    "non-ASCII characters in a comment (the specification asks for ASCII; read anyway)",
                );
            }
        }
        Ok(())
    }

    fn info_line(&mut self, no: usize, bytes: &[u8], off: usize) -> Result<(), ReadError> {
        let start = bytes.iter().position(|&b| !lex::is_blank(b));
        if let Some(st) = start {
            if bytes[st] == b'[' {
                if let Some(close) = bytes[st..].iter().position(|&b| b == b']') {
                    if Kw::find(&bytes[st + 1..st + close]) == Some(Kw::EndInformation) {
                        self.stage = Stage::V2Head;
                        let rest = &bytes[st + close + 1..];
                        return self.no_args(no, Kw::EndInformation, rest, off + st + close + 1);
                    }
                }
            }
        }
        self.check_comment(no, off, bytes)
    }

    // ---------------------------------------------------------------- option line

    fn option_line(
        &mut self,
        no: usize,
        content: &[u8],
        start: usize,
        off: usize,
    ) -> Result<(), ReadError> {
        let col = off + start + 1;
        if let Some(o) = &self.opt {
            return Err(self.err(no, col, ErrorKind::SecondOptionLine { first_line: o.line }));
        }
        match self.stage {
            Stage::Start => self.stage = Stage::V1,
            Stage::V2Head if self.ports_kw.is_none() => {}
            Stage::V2Head => {
                return Err(self.err(
                    no,
                    col,
                    ErrorKind::MisplacedOptionLine("after [Number of Ports]"),
                ))
            }
            _ => {
                return Err(self.err(
                    no,
                    col,
                    ErrorKind::MisplacedOptionLine("after [Network Data]"),
                ))
            }
        }
        if start > 0 {
            self.warn(
                no,
                col,
                "blanks before `#` on the option line (read anyway)",
            );
        }
        let rest = &content[start + 1..];
        if rest.first().is_some_and(|&b| !lex::is_blank(b)) {
            self.warn(
                no,
                col + 1,
                "no blank after `#` on the option line (read as if there were one)",
            );
        }
        let base = off + start + 1; // 0-based column of rest[0]
        let mut unit: Option<(FreqUnit, &[u8])> = None;
        let mut param: Option<(Param, &[u8])> = None;
        let mut format: Option<(Format, &[u8])> = None;
        let mut r: Option<(Vec<f64>, usize)> = None;
        let mut toks = Tokens::new(rest).peekable();
        while let Some((c, t)) = toks.next() {
            let tcol = base + c + 1;
            let lower = |s: &str| t.eq_ignore_ascii_case(s.as_bytes());
            macro_rules! set {
                ($slot:ident, $v:expr, $field:expr) => {{
                    if let Some((_, first)) = $slot {
                        return Err(self.err(
                            no,
                            tcol,
                            ErrorKind::DuplicateOption {
                                field: $field,
                                first: lex::show(first),
                                found: lex::show(t),
                            },
                        ));
                    }
                    $slot = Some(($v, t));
                }};
            }
            if lower("hz") {
                set!(unit, FreqUnit::Hz, "frequency unit")
            } else if lower("khz") {
                set!(unit, FreqUnit::KHz, "frequency unit")
            } else if lower("mhz") {
                set!(unit, FreqUnit::MHz, "frequency unit")
            } else if lower("ghz") {
                set!(unit, FreqUnit::GHz, "frequency unit")
            } else if lower("s") {
                set!(param, Param::S, "parameter")
            } else if lower("y") {
                set!(param, Param::Y, "parameter")
            } else if lower("z") {
                set!(param, Param::Z, "parameter")
            } else if lower("h") {
                set!(param, Param::H, "parameter")
            } else if lower("g") {
                set!(param, Param::G, "parameter")
            } else if lower("ri") {
                set!(format, Format::RI, "format")
            } else if lower("ma") {
                set!(format, Format::MA, "format")
            } else if lower("db") {
                set!(format, Format::DB, "format")
            } else if lower("r") {
                if r.is_some() {
                    return Err(self.err(
                        no,
                        tcol,
                        ErrorKind::DuplicateOption {
                            field: "reference resistance",
                            first: "R".into(),
                            found: "R".into(),
                        },
                    ));
                }
                let mut values = Vec::new();
                while let Some(&(c2, t2)) = toks.peek() {
                    if !is_number_start(t2) {
                        break;
                    }
                    let vcol = base + c2 + 1;
                    let v = self.number(no, vcol, t2)?;
                    if v <= 0.0 {
                        return Err(self.err(no, vcol, ErrorKind::BadResistance(lex::show(t2))));
                    }
                    values.push(v);
                    toks.next();
                }
                if values.is_empty() {
                    let found = match toks.peek() {
                        Some((_, t2)) => format!("`{}`", lex::show(t2)),
                        None => "the end of the line".into(),
                    };
                    let at = toks.peek().map_or(tcol + 1, |(c2, _)| base + c2 + 1);
                    return Err(self.err(no, at, ErrorKind::MissingResistance(found)));
                }
                r = Some((values, tcol));
            } else {
                return Err(self.err(no, tcol, ErrorKind::UnknownOption(lex::show(t))));
            }
        }
        let (r, r_col) = r.unwrap_or((vec![50.0], col));
        self.opt = Some(OptionLine {
            unit: unit.map_or(FreqUnit::GHz, |u| u.0),
            param: param.map_or(Param::S, |p| p.0),
            format: format.map_or(Format::MA, |f| f.0),
            r,
            line: no,
            r_col,
        });
        Ok(())
    }

    fn number(&self, no: usize, col: usize, t: &[u8]) -> Result<f64, ReadError> {
        lex::parse_number(t).map_err(|e| {
            let kind = match e {
                NumError::Malformed => ErrorKind::BadNumber(lex::show(t)),
                NumError::NonFinite => ErrorKind::NonFinite(lex::show(t)),
            };
            self.err(no, col, kind)
        })
    }

    // ---------------------------------------------------------------- keywords

    fn keyword(
        &mut self,
        no: usize,
        content: &[u8],
        start: usize,
        off: usize,
    ) -> Result<(), ReadError> {
        let col = off + start + 1;
        let Some(close) = content[start..].iter().position(|&b| b == b']') else {
            return Err(self.err(
                no,
                col,
                ErrorKind::UnclosedKeyword(lex::show(&content[start..])),
            ));
        };
        let raw = &content[start + 1..start + close];
        let shown = || {
            let words: Vec<String> = Tokens::new(raw).map(|(_, t)| lex::show(t)).collect();
            words.join(" ")
        };
        let args = &content[start + close + 1..];
        let args_col0 = off + start + close + 1;
        let Some(kw) = Kw::find(raw) else {
            if self.stage == Stage::V1 {
                return Err(self.err(no, col, ErrorKind::KeywordInV1(shown())));
            }
            return Err(self.err(no, col, ErrorKind::UnknownKeyword(shown())));
        };
        match self.stage {
            Stage::Start if kw != Kw::Version => {
                return Err(self.err(
                    no,
                    col,
                    ErrorKind::MisplacedKeyword {
                        keyword: kw.name().into(),
                        expected: "`[Version]` (or an option line) as the first line of the file",
                    },
                ));
            }
            Stage::V1 => return Err(self.err(no, col, ErrorKind::KeywordInV1(kw.name().into()))),
            Stage::V2End(l) => return Err(self.err(no, col, ErrorKind::ContentAfterEnd(l))),
            _ => {}
        }
        if start > 0 && !self.warned_indent {
            self.warned_indent = true;
            self.warn(no, col, "blanks before a keyword (read anyway)");
        }
        if self.ref_pending {
            return Err(self.reference_short(no, col));
        }
        let misplaced = |expected: &'static str| ErrorKind::MisplacedKeyword {
            keyword: kw.name().into(),
            expected,
        };
        let dup = |first_line: usize| ErrorKind::DuplicateKeyword {
            keyword: kw.name(),
            first_line,
        };
        let header = matches!(
            kw,
            Kw::TwoPortDataOrder
                | Kw::NumberOfFrequencies
                | Kw::NumberOfNoiseFrequencies
                | Kw::Reference
                | Kw::MatrixFormat
                | Kw::MixedModeOrder
                | Kw::BeginInformation
        );
        if header || kw == Kw::NumberOfPorts {
            if self.stage != Stage::V2Head {
                return Err(self.err(
                    no,
                    col,
                    misplaced("header keywords before `[Network Data]`"),
                ));
            }
            if header && self.ports_kw.is_none() {
                return Err(self.err(
                    no,
                    col,
                    misplaced("`[Number of Ports]` before this keyword"),
                ));
            }
        }
        let n = self.ports_kw.map_or(0, |p| p.0);
        match kw {
            Kw::Version => {
                if self.stage != Stage::Start {
                    return Err(self.err(no, col, dup(self.version_line)));
                }
                let toks: Vec<(usize, &[u8])> = Tokens::new(args).collect();
                let v = match toks.as_slice() {
                    [(_, t)] => lex::parse_number(t).ok(),
                    _ => None,
                };
                self.version = match v {
                    Some(2.0) => Version::V2_0,
                    Some(2.1) => Version::V2_1,
                    _ => {
                        let found = if toks.is_empty() {
                            "nothing".to_string()
                        } else {
                            format!("`{}`", lex::show(args.trim_ascii()))
                        };
                        let c = toks
                            .first()
                            .map_or(args_col0 + 1, |(c, _)| args_col0 + c + 1);
                        return Err(self.err(no, c, ErrorKind::UnsupportedVersion(found)));
                    }
                };
                self.version_line = no;
                self.stage = Stage::V2Head;
            }
            Kw::NumberOfPorts => {
                if let Some((_, l)) = self.ports_kw {
                    return Err(self.err(no, col, dup(l)));
                }
                if self.opt.is_none() {
                    return Err(self.err(
                        no,
                        col,
                        misplaced("the option line (`# GHz S MA R 50`) before `[Number of Ports]`"),
                    ));
                }
                let (v, c) = self.one_count(no, kw, args, args_col0)?;
                if v == 0 || v > MAX_PORTS as u64 {
                    return Err(self.err(no, c, ErrorKind::BadPortCount(v.to_string())));
                }
                let v = v as usize;
                if let Some((e, name)) = &self.ext {
                    if *e != v {
                        return Err(self.err(
                            no,
                            c,
                            ErrorKind::PortCountMismatch {
                                expected: *e,
                                found: v,
                                name: name.clone(),
                            },
                        ));
                    }
                }
                self.ports_kw = Some((v, no));
            }
            Kw::TwoPortDataOrder => {
                if let Some((_, l)) = self.order_kw {
                    return Err(self.err(no, col, dup(l)));
                }
                if n != 2 {
                    return Err(self.err(
                        no,
                        col,
                        misplaced("`[Two-Port Data Order]` only in a 2-port file"),
                    ));
                }
                let (t, c) = self.one_token(no, kw, args, args_col0, "`12_21` or `21_12`")?;
                let order = if t == b"12_21" {
                    Order::O12_21
                } else if t == b"21_12" {
                    Order::O21_12
                } else {
                    return Err(self.err(
                        no,
                        c,
                        ErrorKind::BadKeywordValue {
                            keyword: kw.name(),
                            expected: "`12_21` or `21_12`",
                            found: format!("`{}`", lex::show(t)),
                        },
                    ));
                };
                self.order_kw = Some((order, no));
            }
            Kw::NumberOfFrequencies | Kw::NumberOfNoiseFrequencies => {
                let slot = if kw == Kw::NumberOfFrequencies {
                    self.nfreq_kw
                } else {
                    self.nnoise_kw
                };
                if let Some((_, l)) = slot {
                    return Err(self.err(no, col, dup(l)));
                }
                let (v, c) = self.one_count(no, kw, args, args_col0)?;
                if v == 0 {
                    return Err(self.err(
                        no,
                        c,
                        ErrorKind::BadKeywordValue {
                            keyword: kw.name(),
                            expected: "a positive integer",
                            found: "`0`".into(),
                        },
                    ));
                }
                if kw == Kw::NumberOfFrequencies {
                    self.nfreq_kw = Some((v, no));
                } else {
                    self.nnoise_kw = Some((v, no));
                }
            }
            Kw::Reference => {
                if let Some(l) = self.ref_kw {
                    return Err(self.err(no, col, dup(l)));
                }
                self.ref_kw = Some(no);
                self.ref_pending = true;
                self.reference_values(no, args, args_col0)?;
            }
            Kw::MatrixFormat => {
                if let Some((_, l)) = self.matrix_kw {
                    return Err(self.err(no, col, dup(l)));
                }
                let (t, c) =
                    self.one_token(no, kw, args, args_col0, "`Full`, `Lower` or `Upper`")?;
                let m = if t.eq_ignore_ascii_case(b"full") {
                    Matrix::Full
                } else if t.eq_ignore_ascii_case(b"lower") {
                    Matrix::Lower
                } else if t.eq_ignore_ascii_case(b"upper") {
                    Matrix::Upper
                } else {
                    return Err(self.err(
                        no,
                        c,
                        ErrorKind::BadKeywordValue {
                            keyword: kw.name(),
                            expected: "`Full`, `Lower` or `Upper`",
                            found: format!("`{}`", lex::show(t)),
                        },
                    ));
                };
                self.matrix_kw = Some((m, no));
            }
            Kw::MixedModeOrder => return Err(self.err(no, col, ErrorKind::MixedMode)),
            Kw::BeginInformation => {
                if let Some(l) = self.info_line {
                    return Err(self.err(no, col, dup(l)));
                }
                self.no_args(no, kw, args, args_col0)?;
                self.info_line = Some(no);
                self.stage = Stage::V2Info(no);
            }
            Kw::EndInformation => {
                return Err(self.err(
                    no,
                    col,
                    misplaced("`[Begin Information]` before `[End Information]`"),
                ))
            }
            Kw::NetworkData => {
                if let Some(l) = self.netdata_line {
                    return Err(self.err(no, col, dup(l)));
                }
                self.no_args(no, kw, args, args_col0)?;
                self.start_network_data(no, col)?;
            }
            Kw::NoiseData => {
                if let Some(l) = self.noisedata_line {
                    return Err(self.err(no, col, dup(l)));
                }
                if self.stage != Stage::V2Net {
                    return Err(self.err(
                        no,
                        col,
                        ErrorKind::MissingKeyword {
                            keyword: "Network Data",
                            why: "before the noise data",
                            found: "`[Noise Data]`".into(),
                        },
                    ));
                }
                self.no_args(no, kw, args, args_col0)?;
                self.end_network_data(no, col, "`[Noise Data]`")?;
                let n = self.n.unwrap_or(0);
                if n != 2 {
                    return Err(self.err(no, col, ErrorKind::NoiseNotTwoPort(n)));
                }
                if self.nnoise_kw.is_none() {
                    return Err(self.err(
                        no,
                        col,
                        ErrorKind::MissingKeyword {
                            keyword: "Number of Noise Frequencies",
                            why: "in the header when `[Noise Data]` is present",
                            found: "`[Noise Data]` without it".into(),
                        },
                    ));
                }
                self.noisedata_line = Some(no);
                self.stage = Stage::V2Noise;
            }
            Kw::End => {
                self.no_args(no, kw, args, args_col0)?;
                match self.stage {
                    Stage::V2Net => self.end_network_data(no, col, "`[End]`")?,
                    Stage::V2Noise => self.end_noise_data(no, col, "`[End]`")?,
                    _ => {
                        return Err(self.err(
                            no,
                            col,
                            ErrorKind::MissingKeyword {
                                keyword: "Network Data",
                                why: "before `[End]`",
                                found: "`[End]`".into(),
                            },
                        ))
                    }
                }
                self.stage = Stage::V2End(no);
            }
        }
        Ok(())
    }

    fn no_args(&self, no: usize, kw: Kw, args: &[u8], col0: usize) -> Result<(), ReadError> {
        if let Some((c, t)) = Tokens::new(args).next() {
            return Err(self.err(
                no,
                col0 + c + 1,
                ErrorKind::BadKeywordValue {
                    keyword: kw.name(),
                    expected: "nothing on the same line",
                    found: format!("`{}`", lex::show(t)),
                },
            ));
        }
        Ok(())
    }

    fn one_token<'t>(
        &self,
        no: usize,
        kw: Kw,
        args: &'t [u8],
        col0: usize,
        expected: &'static str,
    ) -> Result<(&'t [u8], usize), ReadError> {
        let mut toks = Tokens::new(args);
        match (toks.next(), toks.next()) {
            (Some((c, t)), None) => Ok((t, col0 + c + 1)),
            (None, _) => Err(self.err(
                no,
                col0 + 1,
                ErrorKind::BadKeywordValue {
                    keyword: kw.name(),
                    expected,
                    found: "nothing".into(),
                },
            )),
            (Some(_), Some((c, t))) => Err(self.err(
                no,
                col0 + c + 1,
                ErrorKind::BadKeywordValue {
                    keyword: kw.name(),
                    expected,
                    found: format!("a second value `{}`", lex::show(t)),
                },
            )),
        }
    }

    fn one_count(
        &self,
        no: usize,
        kw: Kw,
        args: &[u8],
        col0: usize,
    ) -> Result<(u64, usize), ReadError> {
        let (t, c) = self.one_token(no, kw, args, col0, "a positive integer")?;
        match lex::parse_count(t) {
            Some(v) => Ok((v, c)),
            None if !t.is_empty()
                && t.iter().all(u8::is_ascii_digit)
                && kw == Kw::NumberOfPorts =>
            {
                Err(self.err(no, c, ErrorKind::BadPortCount(lex::show(t))))
            }
            None => Err(self.err(
                no,
                c,
                ErrorKind::BadKeywordValue {
                    keyword: kw.name(),
                    expected: "a positive integer",
                    found: format!("`{}`", lex::show(t)),
                },
            )),
        }
    }

    fn reference_values(
        &mut self,
        no: usize,
        content: &[u8],
        col0: usize,
    ) -> Result<(), ReadError> {
        let n = self.ports_kw.map_or(0, |p| p.0);
        for (c, t) in Tokens::new(content) {
            let col = col0 + c + 1;
            if self.reference.len() == n {
                return Err(self.err(
                    no,
                    col,
                    ErrorKind::ResistanceCount {
                        expected: n.to_string(),
                        what: "`[Reference]`: one per port",
                        found: n + 1,
                    },
                ));
            }
            let v = self.number(no, col, t)?;
            if v <= 0.0 {
                return Err(self.err(no, col, ErrorKind::BadResistance(lex::show(t))));
            }
            self.reference.push(v);
        }
        if self.reference.len() == n {
            self.ref_pending = false;
        }
        Ok(())
    }

    fn reference_short(&self, no: usize, col: usize) -> ReadError {
        let n = self.ports_kw.map_or(0, |p| p.0);
        self.err(
            no,
            col,
            ErrorKind::ResistanceCount {
                expected: n.to_string(),
                what: "`[Reference]`: one per port",
                found: self.reference.len(),
            },
        )
    }

    /// `[Network Data]`: the header is complete; set up records.
    fn start_network_data(&mut self, no: usize, col: usize) -> Result<(), ReadError> {
        let Some((n, _)) = self.ports_kw else {
            return Err(self.err(
                no,
                col,
                ErrorKind::MissingKeyword {
                    keyword: "Number of Ports",
                    why: "before `[Network Data]`",
                    found: "`[Network Data]`".into(),
                },
            ));
        };
        if self.nfreq_kw.is_none() {
            return Err(self.err(
                no,
                col,
                ErrorKind::MissingKeyword {
                    keyword: "Number of Frequencies",
                    why: "before `[Network Data]` (required in version 2)",
                    found: "`[Network Data]`".into(),
                },
            ));
        }
        if n == 2 && self.order_kw.is_none() {
            return Err(self.err(
                no,
                col,
                ErrorKind::MissingKeyword {
                    keyword: "Two-Port Data Order",
                    why: "in a 2-port version-2 file (`12_21` or `21_12`)",
                    found: "`[Network Data]`".into(),
                },
            ));
        }
        let order = self.order_kw.map_or(Order::O12_21, |o| o.0);
        let matrix = self.matrix_kw.map_or(Matrix::Full, |m| m.0);
        self.set_ports(n, order, matrix)?;
        self.netdata_line = Some(no);
        self.stage = Stage::V2Net;
        let want = self.nfreq_kw.map_or(0, |f| f.0);
        let by_size = self
            .size
            .map_or(u64::MAX, |s| s / (2 * self.rec_len as u64));
        self.reserve(want.min(by_size));
        Ok(())
    }

    /// Fix the port count: record layout, reference impedances, checks of the option line.
    fn set_ports(&mut self, n: usize, order: Order, matrix: Matrix) -> Result<(), ReadError> {
        let Some(opt) = &self.opt else {
            return Ok(());
        };
        let (opt_line, r_col, param) = (opt.line, opt.r_col, opt.param);
        if matches!(param, Param::H | Param::G) && n != 2 {
            return Err(self.err(
                opt_line,
                1,
                ErrorKind::ParamNeedsTwoPort {
                    param: param.letter(),
                    ports: n,
                },
            ));
        }
        let r = opt.r.clone();
        let r_ports = match r.len() {
            1 => vec![r[0]; n],
            k if k == n => r,
            k => {
                return Err(self.err(
                    opt_line,
                    r_col,
                    ErrorKind::ResistanceCount {
                        expected: if n == 1 {
                            "1".into()
                        } else {
                            format!("1 or {n}")
                        },
                        what: "R on the option line: one, or one per port",
                        found: k,
                    },
                ))
            }
        };
        if !self.is_v2() && opt.r.len() > 1 {
            self.version = Version::V1_1;
        }
        self.z0 = if self.ref_kw.is_some() {
            self.reference.clone()
        } else {
            r_ports.clone()
        };
        self.norm = if self.is_v2() { Vec::new() } else { r_ports };
        self.n = Some(n);
        let cells = match matrix {
            Matrix::Full => n * n,
            _ => n * (n + 1) / 2,
        };
        self.rec_len = 1 + 2 * cells;
        self.map.clear();
        self.mirror.clear();
        for i in 0..n {
            let cols = match matrix {
                Matrix::Full => 0..n,
                Matrix::Lower => 0..i + 1,
                Matrix::Upper => i..n,
            };
            for j in cols {
                let (a, b) = if n == 2 && order == Order::O21_12 && matrix == Matrix::Full {
                    (j, i) // file order 11 21 12 22: column-major
                } else {
                    (i, j)
                };
                self.map.push(a * n + b);
                self.mirror.push(if matrix == Matrix::Full || a == b {
                    NONE
                } else {
                    b * n + a
                });
            }
        }
        self.in_order =
            self.map.len() == n * n && self.map.iter().enumerate().all(|(k, &t)| k == t);
        self.full_2x2 = n == 2 && matrix == Matrix::Full;
        Ok(())
    }

    fn reserve(&mut self, points: u64) {
        let n2 = self.n.map_or(1, |n| n * n).max(1);
        let pts = (points.min((MAX_RESERVE / n2) as u64)) as usize;
        self.freq.reserve_exact(pts);
        self.s.reserve_exact(pts * n2);
    }

    /// The network block ends (at a keyword or the end of the file): counts must agree.
    fn end_network_data(
        &mut self,
        no: usize,
        col: usize,
        before: &'static str,
    ) -> Result<(), ReadError> {
        if !self.rec.is_empty() {
            return Err(self.err(
                no,
                col,
                ErrorKind::RecordCutShort {
                    before,
                    expected: self.rec_len,
                    found: self.rec.len(),
                    start_line: self.rec_line,
                },
            ));
        }
        if let Some((want, l)) = self.nfreq_kw {
            if self.freq.len() as u64 != want {
                return Err(self.err(
                    no,
                    col,
                    ErrorKind::CountMismatch {
                        keyword: "Number of Frequencies",
                        what: "network data records",
                        expected: want,
                        found: format!("{} before {before}", self.freq.len()),
                        keyword_line: l,
                    },
                ));
            }
        }
        if before != "`[Noise Data]`" {
            if let Some((_, l)) = self.nnoise_kw {
                return Err(self.err(
                    no,
                    col,
                    ErrorKind::MissingKeyword {
                        keyword: "Noise Data",
                        why: "because `[Number of Noise Frequencies]` is given",
                        found: format!("{before} (the count is at line {l})"),
                    },
                ));
            }
        }
        Ok(())
    }

    fn end_noise_data(
        &mut self,
        no: usize,
        col: usize,
        before: &'static str,
    ) -> Result<(), ReadError> {
        if let Some((want, l)) = self.nnoise_kw {
            if self.noise.len() as u64 != want {
                return Err(self.err(
                    no,
                    col,
                    ErrorKind::CountMismatch {
                        keyword: "Number of Noise Frequencies",
                        what: "noise rows",
                        expected: want,
                        found: format!("{} before {before}", self.noise.len()),
                        keyword_line: l,
                    },
                ));
            }
        }
        Ok(())
    }

    // ---------------------------------------------------------------- data

    fn values(
        &mut self,
        no: usize,
        content: &[u8],
        start: usize,
        off: usize,
    ) -> Result<(), ReadError> {
        match self.stage {
            Stage::Start => {
                let t = Tokens::new(&content[start..])
                    .next()
                    .map_or(&b""[..], |t| t.1);
                return Err(self.err(
                    no,
                    off + start + 1,
                    ErrorKind::MissingOptionLine(lex::show(t)),
                ));
            }
            Stage::V2Head => {
                if self.ref_pending {
                    return self.reference_values(no, content, off);
                }
                let t = Tokens::new(&content[start..])
                    .next()
                    .map_or(&b""[..], |t| t.1);
                return Err(self.err(
                    no,
                    off + start + 1,
                    ErrorKind::DataBeforeNetworkData(lex::show(t)),
                ));
            }
            Stage::V2End(l) => {
                return Err(self.err(no, off + start + 1, ErrorKind::ContentAfterEnd(l)))
            }
            Stage::V2Info(_) | Stage::V1 | Stage::V2Net | Stage::V2Noise => {}
        }
        // scan the line's numbers into the reusable buffer
        let mut vals = std::mem::take(&mut self.vals);
        vals.clear();
        let mut res = Ok(());
        for (c, t) in Tokens::new(content) {
            match self.number(no, off + c + 1, t) {
                Ok(v) => vals.push(v),
                Err(e) => {
                    res = Err(e);
                    break;
                }
            }
        }
        if res.is_ok() {
            res = self.data_line(no, &vals, At { content, off });
        }
        self.vals = vals;
        res
    }

    fn data_line(&mut self, no: usize, vals: &[f64], at: At) -> Result<(), ReadError> {
        let k = vals.len();
        if self.noise_v1_line.is_some() || self.stage == Stage::V2Noise {
            return self.noise_row(no, vals, at);
        }
        if !self.rec.is_empty() {
            if k.is_multiple_of(2) {
                let before = self.rec.len();
                self.rec.extend_from_slice(vals);
                return self.check_record(no, at, before);
            }
            // an odd count starts a record: the current one must be complete
            match self.n {
                None => self.finish_first_record(no)?,
                Some(n) => {
                    return Err(self.err(
                        no,
                        at.col(0),
                        ErrorKind::TooFewValues {
                            expected: self.rec_len,
                            found: self.rec.len(),
                            ports: n,
                            start_line: self.rec_line,
                        },
                    ))
                }
            }
        }
        // a record starts here
        if k.is_multiple_of(2) {
            return Err(self.err(no, at.col(0), ErrorKind::RecordStartEven(k)));
        }
        let f = vals[0];
        if f < 0.0 {
            return Err(self.err(no, at.col(0), ErrorKind::NegativeFrequency(fmt_raw(f))));
        }
        if let Some((pf, pl)) = self.prev_f {
            if f <= pf {
                let v1_two_port = !self.is_v2() && self.n == Some(2);
                if v1_two_port && (f < pf || k == 5) {
                    if k == 5 {
                        self.noise_v1_line = Some(no);
                        return self.noise_row(no, vals, at);
                    }
                    return Err(self.err(
                        no,
                        at.col(0),
                        ErrorKind::NoiseRowLength {
                            found: k,
                            hint: format!(
                                " (the frequency {} falls below {} at line {pl}, which starts a noise block in a version-1 2-port file; if this line is network data, frequencies must increase)",
                                fmt_raw(f),
                                fmt_raw(pf)
                            ),
                        },
                    ));
                }
                let hint = if v1_two_port {
                    " (a repeated frequency; a noise block would start with a 5-value row)"
                } else if self.is_v2() && self.n == Some(2) {
                    " (version-2 noise data go after `[Noise Data]`)"
                } else if !self.is_v2() && f < pf {
                    " (noise data, which start with a falling frequency, exist only in 2-port files)"
                } else {
                    ""
                };
                return Err(self.err(
                    no,
                    at.col(0),
                    ErrorKind::FrequencyNotIncreasing {
                        prev: fmt_raw(pf),
                        prev_line: pl,
                        found: fmt_raw(f),
                        hint,
                    },
                ));
            }
        }
        if let Some((want, l)) = self.nfreq_kw {
            if self.freq.len() as u64 >= want {
                return Err(self.err(
                    no,
                    at.col(0),
                    ErrorKind::CountMismatch {
                        keyword: "Number of Frequencies",
                        what: "network data records",
                        expected: want,
                        found: format!("more: record {} starts here", self.freq.len() + 1),
                        keyword_line: l,
                    },
                ));
            }
        }
        self.rec_line = no;
        if self.freq.is_empty() {
            self.first_rec_start = self.line_start;
        }
        if self.fast && self.n.is_some() && k == self.rec_len {
            // the whole record on this line (the common layout): no copy into `rec`
            return self.store_record(vals);
        }
        self.rec.extend_from_slice(vals);
        self.check_record(no, at, 0)
    }

    /// After values were appended (`before` values were there already): overflow and
    /// completion.
    fn check_record(&mut self, no: usize, at: At, before: usize) -> Result<(), ReadError> {
        match self.n {
            Some(n) => {
                let len = self.rec.len();
                if len > self.rec_len {
                    let idx = self.rec_len - before;
                    return Err(self.err(
                        no,
                        at.col(idx.min(len - before - 1)),
                        ErrorKind::TooManyValues {
                            expected: self.rec_len,
                            ports: n,
                            found: self.rec_len + 1,
                        },
                    ));
                }
                if len == self.rec_len {
                    self.complete_record()?;
                }
            }
            None => {
                let max = 1 + 2 * MAX_PORTS * MAX_PORTS;
                if self.rec.len() > max {
                    return Err(self.err(
                        no,
                        at.col(0),
                        ErrorKind::RecordTooLong {
                            max,
                            ports: MAX_PORTS,
                        },
                    ));
                }
            }
        }
        Ok(())
    }

    /// v1: the first record is complete (a new record starts at `no`, or the file
    /// ends): its length gives the port count.
    fn finish_first_record(&mut self, no: usize) -> Result<(), ReadError> {
        let len = self.rec.len();
        let cells = (len - 1) / 2;
        let n = (cells as f64).sqrt().round() as usize;
        if len.is_multiple_of(2) || n == 0 || n * n != cells {
            return Err(self.err(
                self.rec_line,
                1,
                ErrorKind::RecordLength {
                    found: len,
                    start_line: self.rec_line,
                },
            ));
        }
        if let Some((e, name)) = &self.ext {
            if *e != n {
                return Err(self.err(
                    self.rec_line,
                    1,
                    ErrorKind::PortCountMismatch {
                        expected: *e,
                        found: n,
                        name: name.clone(),
                    },
                ));
            }
        }
        self.set_ports(n, Order::O21_12, Matrix::Full)?;
        // size the result from the first record's bytes and the file size
        let rec_bytes = if no == 0 { self.bytes } else { self.line_start }
            .saturating_sub(self.first_rec_start)
            .max(1);
        if let Some(size) = self.size {
            let rest = size.saturating_sub(self.first_rec_start);
            let estimate = rest / rec_bytes + rest / rec_bytes / 50 + 8;
            let bound = size / (2 * self.rec_len as u64) + 1;
            self.reserve(estimate.min(bound));
        }
        self.complete_record()
    }

    /// Convert the record in `self.rec` to S and append it.
    fn complete_record(&mut self) -> Result<(), ReadError> {
        let mut rec = std::mem::take(&mut self.rec);
        let res = self.store_record(&rec);
        rec.clear();
        self.rec = rec;
        res
    }

    /// Convert one whole record (frequency, then the value pairs in file order) to S
    /// and append it; the record started at line `self.rec_line`.
    fn store_record(&mut self, rec: &[f64]) -> Result<(), ReadError> {
        let n = self.n.unwrap_or(1);
        let Some(opt) = &self.opt else {
            return Ok(());
        };
        let (format, param, mult) = (opt.format, opt.param, opt.unit.multiplier());
        let f_raw = rec[0];
        let line = self.rec_line;
        let pairs = rec[1..].chunks_exact(2);
        // S data of a 2-port with four pairs (nearly every file): the matrix is built
        // on the stack and appended, no zero fill and no per-cell lookups. The values
        // are finite (both ways of reading a line refuse anything else), so RI and MA
        // cells are too (|a·cos b| ≤ |a|); a DB magnitude can overflow, which leaves
        // the record to the general loop, which names the pair
        let two_port = self.fast && self.full_2x2 && param == Param::S;
        if let (true, Ok(p)) = (two_port, <&[f64; 8]>::try_from(&rec[1..])) {
            let m = match format {
                Format::RI => place_2x2(&self.map, p, C64::new),
                Format::MA => place_2x2(&self.map, p, |a, b| pair(Format::MA, a, b)),
                Format::DB => place_2x2(&self.map, p, |a, b| pair(Format::DB, a, b)),
            };
            if format != Format::DB || m.iter().all(|c| c.is_finite()) {
                self.s.extend_from_slice(&m);
                self.freq.push(f_raw * mult);
                self.prev_f = Some((f_raw, line));
                return Ok(());
            }
        }
        let cells = self.map.iter().zip(&self.mirror);
        let zero = C64::new(0.0, 0.0);
        // S data go straight into place in the result; other parameters through
        // `block` and a conversion
        let direct = param == Param::S;
        let base = self.s.len();
        let out = if direct {
            self.s.resize(base + n * n, zero);
            &mut self.s[base..]
        } else {
            self.block.clear();
            self.block.resize(n * n, zero);
            &mut self.block[..]
        };
        let mut bad = None;
        if direct && format == Format::RI && self.in_order && rec.iter().all(|v| v.is_finite()) {
            // a pair per cell in order (the values are finite, as the lexer gives
            // nothing else, but that is checked, and cheap)
            for (o, v) in out.iter_mut().zip(pairs) {
                *o = C64::new(v[0], v[1]);
            }
        } else {
            for (p, (v, (&t, &m))) in pairs.zip(cells).enumerate() {
                let c = pair(format, v[0], v[1]);
                if !c.is_finite() {
                    bad = Some((p, v[0], v[1]));
                    break;
                }
                out[t] = c;
                if m != NONE {
                    out[m] = c;
                }
            }
        }
        if let Some((p, a, b)) = bad {
            self.s.truncate(base);
            return Err(self.err(
                line,
                1,
                ErrorKind::NonFinite(format!("{a} {b} (value pair {} of the record)", p + 1)),
            ));
        }
        if !direct {
            let s = self
                .block_to_s(param, n)
                .ok_or_else(|| self.err(line, 1, ErrorKind::Singular(param.letter())))?;
            self.s.extend_from_slice(&s);
        }
        self.freq.push(f_raw * mult);
        self.prev_f = Some((f_raw, line));
        Ok(())
    }

    /// Y/Z/H/G block (de-normalised in v1) to S.
    fn block_to_s(&mut self, param: Param, n: usize) -> Option<Vec<C64>> {
        let b = &mut self.block;
        if !self.norm.is_empty() {
            let r = &self.norm;
            match param {
                Param::Z => {
                    for i in 0..n {
                        for j in 0..n {
                            b[i * n + j] *= (r[i] * r[j]).sqrt();
                        }
                    }
                }
                Param::Y => {
                    for i in 0..n {
                        for j in 0..n {
                            b[i * n + j] /= (r[i] * r[j]).sqrt();
                        }
                    }
                }
                Param::H => {
                    let k = (r[0] / r[1]).sqrt();
                    b[0] *= r[0];
                    b[1] *= k;
                    b[2] *= k;
                    b[3] /= r[1];
                }
                Param::G => {
                    let k = (r[1] / r[0]).sqrt();
                    b[0] /= r[0];
                    b[1] *= k;
                    b[2] *= k;
                    b[3] *= r[1];
                }
                Param::S => {}
            }
        }
        let z0 = &self.z0;
        let out = match param {
            Param::S => Some(b.clone()),
            Param::Z => convert::z_to_s(b, n, z0),
            Param::Y => convert::y_to_s(b, n, z0),
            Param::H => {
                // V1 = H11 I1 + H12 V2, I2 = H21 I1 + H22 V2 → Z (or Y when H22 = 0)
                let (h11, h12, h21, h22) = (b[0], b[1], b[2], b[3]);
                let det = h11 * h22 - h12 * h21;
                if h22.norm() > 0.0 {
                    convert::z_to_s(&[det / h22, h12 / h22, -h21 / h22, 1.0 / h22], 2, z0)
                } else if h11.norm() > 0.0 {
                    convert::y_to_s(&[1.0 / h11, -h12 / h11, h21 / h11, det / h11], 2, z0)
                } else {
                    None
                }
            }
            Param::G => {
                // I1 = G11 V1 + G12 I2, V2 = G21 V1 + G22 I2 → Y (or Z when G22 = 0)
                let (g11, g12, g21, g22) = (b[0], b[1], b[2], b[3]);
                let det = g11 * g22 - g12 * g21;
                if g22.norm() > 0.0 {
                    convert::y_to_s(&[det / g22, g12 / g22, -g21 / g22, 1.0 / g22], 2, z0)
                } else if g11.norm() > 0.0 {
                    convert::z_to_s(&[1.0 / g11, -g12 / g11, g21 / g11, det / g11], 2, z0)
                } else {
                    None
                }
            }
        };
        out.filter(|s| s.iter().all(|c| c.is_finite()))
    }

    fn noise_row(&mut self, no: usize, vals: &[f64], at: At) -> Result<(), ReadError> {
        if vals.len() != 5 {
            let hint = match self.noise_v1_line {
                Some(l) => format!(
                    " (the noise block started at line {l}, where the frequency stopped increasing; if that line is network data, its frequency must be above the one before)"
                ),
                None => String::new(),
            };
            return Err(self.err(
                no,
                at.col(0),
                ErrorKind::NoiseRowLength {
                    found: vals.len(),
                    hint,
                },
            ));
        }
        let f = vals[0];
        if f < 0.0 {
            return Err(self.err(no, at.col(0), ErrorKind::NegativeFrequency(fmt_raw(f))));
        }
        if let Some((pf, pl)) = self.prev_noise {
            if f <= pf {
                return Err(self.err(
                    no,
                    at.col(0),
                    ErrorKind::FrequencyNotIncreasing {
                        prev: fmt_raw(pf),
                        prev_line: pl,
                        found: fmt_raw(f),
                        hint: " in the noise data",
                    },
                ));
            }
        }
        if let Some((want, l)) = self.nnoise_kw {
            if self.noise.len() as u64 >= want {
                return Err(self.err(
                    no,
                    at.col(0),
                    ErrorKind::CountMismatch {
                        keyword: "Number of Noise Frequencies",
                        what: "noise rows",
                        expected: want,
                        found: format!("more: row {} starts here", self.noise.len() + 1),
                        keyword_line: l,
                    },
                ));
            }
        }
        let mult = self.opt.as_ref().map_or(1e9, |o| o.unit.multiplier());
        let rn = match self.norm.first() {
            Some(r) => vals[4] * r,
            None => vals[4],
        };
        self.noise.push(NoiseRow {
            f: f * mult,
            nf_min_db: vals[1],
            gamma_opt: pair(Format::MA, vals[2], vals[3]),
            rn,
        });
        self.prev_noise = Some((f, no));
        Ok(())
    }

    fn finish(mut self, last_line: usize) -> Result<Touchstone, ReadError> {
        let eof = last_line.max(1);
        match self.stage {
            Stage::Start => {
                let what = if self.bytes == 0 {
                    "an empty file"
                } else {
                    "only comments and blank lines"
                };
                return Err(self.err(eof, 1, ErrorKind::EmptyFile(what)));
            }
            Stage::V1 => {
                if !self.rec.is_empty() {
                    match self.n {
                        None => self.finish_first_record(0)?,
                        Some(_) => {
                            return Err(self.err(
                                eof,
                                1,
                                ErrorKind::RecordCutShort {
                                    before: "the end of the file",
                                    expected: self.rec_len,
                                    found: self.rec.len(),
                                    start_line: self.rec_line,
                                },
                            ))
                        }
                    }
                }
            }
            Stage::V2Head => {
                if self.ref_pending {
                    return Err(self.reference_short(eof, 1));
                }
                return Err(self.err(
                    eof,
                    1,
                    ErrorKind::MissingKeyword {
                        keyword: "Network Data",
                        why: "in a version-2 file",
                        found: "the end of the file".into(),
                    },
                ));
            }
            Stage::V2Info(l) => return Err(self.err(eof, 1, ErrorKind::UnclosedInformation(l))),
            Stage::V2Net | Stage::V2Noise => {
                if self.stage == Stage::V2Net {
                    self.end_network_data(eof, 1, "the end of the file")?;
                } else {
                    self.end_noise_data(eof, 1, "the end of the file")?;
                }
                self.warn(
                    eof,
                    1,
                    "no `[End]` keyword at the end of a version-2 file (required since 2.0; read anyway)",
                );
            }
            Stage::V2End(_) => {}
        }
        if self.freq.is_empty() {
            return Err(self.err(eof, 1, ErrorKind::NoData));
        }
        if self.dropped > 0 {
            let d = self.dropped;
            self.warnings.push(Warning {
                line: eof,
                column: 1,
                message: format!("{d} more warnings not shown"),
            });
        }
        let opt = self.opt.take();
        let (param, format, unit) = opt
            .as_ref()
            .map_or((Param::S, Format::MA, FreqUnit::GHz), |o| {
                (o.param, o.format, o.unit)
            });
        let ports = self.n.unwrap_or(1);
        // drop a generous over-reservation; the result should be its own size
        if self.s.capacity() > self.s.len() + self.s.len() / 8 + 64 {
            self.s.shrink_to_fit();
            self.freq.shrink_to_fit();
        }
        Ok(Touchstone {
            version: self.version,
            network: Network {
                freq: self.freq,
                ports,
                z0: self.z0,
                s: self.s,
            },
            noise: self.noise,
            warnings: self.warnings,
            param,
            format,
            unit,
        })
    }
}

/// A raw value as shown in messages (shortest form that reads back).
fn fmt_raw(v: f64) -> String {
    format!("{v}")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn keyword_names_match_case_and_blanks() {
        // TS1.1/TS2.0 rule 1: case-insensitive
        assert_eq!(Kw::find(b"number of ports"), Some(Kw::NumberOfPorts));
        assert_eq!(Kw::find(b" Network   DATA "), Some(Kw::NetworkData));
        assert_eq!(Kw::find(b"two-port data order"), Some(Kw::TwoPortDataOrder));
        assert_eq!(Kw::find(b"NumberofPorts"), None);
        assert_eq!(Kw::find(b"Binary"), None);
        assert_eq!(Kw::find(b""), None);
    }

    #[test]
    fn port_count_from_extension() {
        // TS1.1 rule 4: `.sNp`; `.ts` carries no count
        assert_eq!(
            ports_from_extension("a/b/x.s2p"),
            Ok(Some((2, ".s2p".into())))
        );
        assert_eq!(
            ports_from_extension("X.S12P"),
            Ok(Some((12, ".S12P".into())))
        );
        assert_eq!(ports_from_extension("x.ts"), Ok(None));
        assert_eq!(ports_from_extension("x"), Ok(None));
        assert_eq!(ports_from_extension("x.sp"), Ok(None));
        assert_eq!(ports_from_extension("x.y2p"), Ok(None));
        assert_eq!(ports_from_extension("x.s0p"), Err(".s0p".into()));
        assert_eq!(
            ports_from_extension("x.s99999999999999999999999p"),
            Err(".s99999999999999999999999p".into())
        );
    }

    #[test]
    fn pair_formats() {
        // TS1.1 Option Line: RI, MA (degrees), DB (20·log10|N|)
        assert_eq!(pair(Format::RI, 0.5, -0.25), C64::new(0.5, -0.25));
        let m = pair(Format::MA, 2.0, 90.0);
        assert!((m - C64::new(0.0, 2.0)).norm() < 1e-15);
        let d = pair(Format::DB, 20.0, 180.0);
        assert!((d - C64::new(-10.0, 0.0)).norm() < 1e-13);
    }

    #[test]
    fn v1_record_length_gives_port_count() {
        // reference notes §5.4: 1 + 2N² values per record
        for n in 1..=6usize {
            let mut text = String::from("# RI\n1");
            for k in 0..n * n {
                text.push_str(&format!(" {k} 0"));
                if k % n == n - 1 {
                    text.push('\n');
                }
            }
            let t = read_bytes("x", text.as_bytes()).unwrap();
            assert_eq!(t.network.ports, n);
            assert_eq!(t.network.s[n * n - 1], C64::new((n * n - 1) as f64, 0.0));
        }
    }
}
