//! The reader's fast paths give the same results as the straightforward ones
//! (issue 8): a data line read in one pass with fast-float, handed out in place from
//! the reader's buffer, against
//! - a plain reader written here (split on white space, `str::parse::<f64>`, the
//!   Touchstone 1.1 specification's pair formulas) on generated files of 1, 2, 4 and
//!   8 ports in RI, MA and DB, with comments, tabs and LF, CRLF or CR line ends:
//!   bit-identical values;
//! - the reader's own careful path (every line through the per-token checks,
//!   `read_bytes_careful`) on the fuzz corpus, on every prefix and byte flip of
//!   generated files and on hand-made bad lines: identical results, errors
//!   included (same message, line and column);
//! - the same reader fed block by block with the blocks' lines scanned in parallel
//!   (`read_blocks`, what `read_path` does for large files), at block sizes that cut
//!   lines and CR LF pairs anywhere: identical results;
//! - the standard library's `str::parse` on random grammar-valid numbers: the same
//!   bits.

use std::io::BufReader;
use std::path::PathBuf;

use lcgate::network::C64;
use lcgate::touchstone::{lex, read_blocks, read_bytes, read_bytes_careful, read_reader};
use proptest::prelude::*;

/// A small linear congruential generator: reproducible data without a dependency.
struct Lcg(u64);
impl Lcg {
    fn next(&mut self) -> u64 {
        self.0 = self
            .0
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        self.0 >> 11
    }
    fn one_in(&mut self, k: u64) -> bool {
        self.next().is_multiple_of(k)
    }
    fn unit(&mut self) -> f64 {
        self.next() as f64 / (1u64 << 53) as f64
    }
    fn pick<'a>(&mut self, xs: &[&'a str]) -> &'a str {
        xs[(self.next() % xs.len() as u64) as usize]
    }
}

/// A value written in one of the forms simulators and hand-edited files use.
fn number(rng: &mut Lcg, v: f64) -> String {
    match rng.next() % 7 {
        0 => format!("{v}"),        // shortest round trip: 16–17 digits
        1 => format!("{v:e}"),      // 1.2345e-5
        2 => format!("{v:E}"),      // 1.2345E-5
        3 => format!("{v:.6}"),     // fixed, 6 decimals
        4 => format!("{v:+.3e}"),   // explicit sign
        5 => format!("{:.19e}", v), // 20 significant digits: beyond 2^64 in the mantissa
        _ => {
            // a point without leading zero: .5, -.25
            let s = format!("{v:.4}");
            s.replacen("0.", ".", 1)
        }
    }
}

struct Generated {
    text: Vec<u8>,
    /// the values as written, per record: f, then pairs
    records: Vec<Vec<String>>,
}

/// A v1 file of `n` ports in `format`, `points` records, with the line end `eol`.
fn generate(seed: u64, n: usize, format: &str, points: usize, eol: &str) -> Generated {
    let mut rng = Lcg(seed);
    let mut text = String::new();
    let mut records = Vec::new();
    text.push_str(&format!("! generated {n}-port, {format}{eol}"));
    text.push_str(&format!(
        "# {} S {format} R 50{eol}",
        rng.pick(&["GHz", "MHz", "Hz"])
    ));
    text.push_str(&format!("!  freq  values{eol}{eol}"));
    let mut f = 0.5;
    for _ in 0..points {
        f += 0.25 + rng.unit();
        let mut rec = vec![format!("{f}")];
        for _ in 0..n * n {
            let (a, b) = match format {
                "RI" => (rng.unit() * 2.0 - 1.0, rng.unit() * 2.0 - 1.0),
                "MA" => (rng.unit(), rng.unit() * 360.0 - 180.0),
                _ => (-60.0 * rng.unit(), rng.unit() * 360.0 - 180.0),
            };
            rec.push(number(&mut rng, a));
            rec.push(number(&mut rng, b));
        }
        // one matrix row per line, at most four pairs a line (TS1.1 for N ≥ 3);
        // 1- and 2-ports on one line
        let mut line = rec[0].clone();
        let per_line = if n <= 2 { n * n } else { n.min(4) };
        for (k, pair) in rec[1..].chunks(2).enumerate() {
            for v in pair {
                line.push_str(if rng.one_in(4) { "\t" } else { " " });
                line.push_str(v);
            }
            if (k + 1) % per_line == 0 {
                if rng.one_in(5) {
                    line.push_str(" ! trailing comment");
                }
                text.push_str(&line);
                text.push_str(eol);
                line = String::from(if rng.one_in(2) { "  " } else { "\t" });
            }
        }
        if rng.one_in(9) {
            text.push_str(&format!("! a comment between records{eol}"));
        }
        records.push(rec);
    }
    Generated {
        text: text.into_bytes(),
        records,
    }
}

/// The spec's pair formulas (Touchstone 1.1, option line: RI real/imaginary, MA
/// magnitude/angle in degrees, DB 20·log10|N|/angle in degrees).
fn pair(format: &str, a: f64, b: f64) -> C64 {
    match format {
        "RI" => C64::new(a, b),
        "MA" => {
            let (s, c) = b.to_radians().sin_cos();
            C64::new(a * c, a * s)
        }
        _ => {
            let m = 10f64.powf(a / 20.0);
            let (s, c) = b.to_radians().sin_cos();
            C64::new(m * c, m * s)
        }
    }
}

/// The straightforward reading of generated values: `str::parse`, pairs in file
/// order (for a v1 2-port 11 21 12 22, TS1.1), frequencies scaled by the unit.
fn expected(g: &Generated, n: usize, format: &str, unit: f64) -> (Vec<f64>, Vec<C64>) {
    let mut freq = Vec::new();
    let mut s = Vec::new();
    for rec in &g.records {
        let v: Vec<f64> = rec.iter().map(|t| t.parse::<f64>().unwrap()).collect();
        freq.push(v[0] * unit);
        let mut block = vec![C64::new(0.0, 0.0); n * n];
        for k in 0..n * n {
            let (i, j) = (k / n, k % n);
            let cell = if n == 2 { j * n + i } else { i * n + j };
            block[cell] = pair(format, v[1 + 2 * k], v[2 + 2 * k]);
        }
        s.extend(block);
    }
    (freq, s)
}

fn unit_of(text: &[u8]) -> f64 {
    let t = String::from_utf8_lossy(text);
    if t.contains("# GHz") {
        1e9
    } else if t.contains("# MHz") {
        1e6
    } else {
        1.0
    }
}

fn bits(s: &[C64]) -> Vec<(u64, u64)> {
    s.iter().map(|c| (c.re.to_bits(), c.im.to_bits())).collect()
}

#[test]
fn generated_files_read_bit_identical_to_a_plain_reader() {
    let mut seed = 1;
    for n in [1, 2, 4, 8] {
        for format in ["RI", "MA", "DB"] {
            for eol in ["\n", "\r\n", "\r"] {
                seed += 1;
                let points = if n == 8 { 12 } else { 40 };
                let g = generate(seed, n, format, points, eol);
                let name = format!("gen.s{n}p");
                let (freq, s) = expected(&g, n, format, unit_of(&g.text));
                let t = read_bytes(&name, &g.text).unwrap_or_else(|e| panic!("{e}"));
                assert_eq!(t.network.ports, n);
                let fb: Vec<u64> = freq.iter().map(|f| f.to_bits()).collect();
                let tb: Vec<u64> = t.network.freq.iter().map(|f| f.to_bits()).collect();
                assert_eq!(tb, fb, "{name} {format} {eol:?}");
                assert_eq!(bits(&t.network.s), bits(&s), "{name} {format} {eol:?}");
                // the careful path and the streaming reader (lines straddling
                // small buffer refills, so gathered rather than in place) agree
                assert_eq!(read_bytes_careful(&name, &g.text), Ok(t.clone()));
                for cap in [7, 64, 1000] {
                    let r = BufReader::with_capacity(cap, &g.text[..]);
                    let streamed = read_reader(&name, r, Some(g.text.len() as u64));
                    assert_eq!(streamed, Ok(t.clone()), "{name} capacity {cap}");
                }
                for block in [1, 3, 64, 1000, 1 << 20] {
                    let size = Some(g.text.len() as u64);
                    let blocks = read_blocks(&name, &g.text[..], size, block);
                    assert_eq!(blocks, Ok(t.clone()), "{name} block {block}");
                }
            }
        }
    }
}

/// Fast, careful and block readings of the same bytes: equal results, errors
/// included.
#[track_caller]
fn same_both_ways(name: &str, bytes: &[u8]) {
    let fast = read_bytes(name, bytes);
    let careful = read_bytes_careful(name, bytes);
    assert_eq!(
        fast,
        careful,
        "{name}: {:?}",
        String::from_utf8_lossy(bytes)
    );
    for block in [2, 17, 4096] {
        let blocks = read_blocks(name, bytes, Some(bytes.len() as u64), block);
        assert_eq!(blocks, fast, "{name} block {block}");
    }
}

#[test]
fn bad_data_lines_give_the_careful_paths_errors() {
    let head = "# GHz S RI R 50\n1 0.5 0.25\n";
    for bad in [
        "2 inf 0",
        "2 0.5 NaN",
        "2 1e999 0",
        "2 0.5 -1e400",
        "2 0,5 0",
        "2 0.5 1e",
        "2 0.5e5x 0",
        "2 0.5 0 !\u{1} control byte in a comment",
        "2 0.5 0 ! caf\u{e9} in a comment",
        "2 0.5 \u{e9}",
        "2 0.5\u{b}0",
        "2 0.5",
        "2 0.5 0 3",
        "1 0.5 0",
        "0.5 0.5 0",
        "-3 0.5 0",
        "2 0.5 0 ! fine",
        "[End]",
        "# GHz S RI R 50",
        "  2\t0.5\t+.25",
        "2 .5. 0",
    ] {
        for eol in ["\n", "\r\n", "\r", ""] {
            let text = format!("{head}{bad}{eol}3 0.5 0{eol}");
            same_both_ways("bad.s1p", text.as_bytes());
        }
    }
    // a 2-port with a record spread over lines, and v2 keyword files
    let v2 = "[Version] 2.0\n# GHz S RI R 50\n[Number of Ports] 2\n\
        [Two-Port Data Order] 12_21\n[Number of Frequencies] 2\n[Network Data]\n\
        1 0.1 0 0.2 0\n  0.3 0 0.4 0\n2 0.1 0 0.2 0 0.3 0 0.4 0 0.5 0\n[End]\n";
    same_both_ways("v2.ts", v2.as_bytes());
    let e = read_bytes("v2.ts", v2.as_bytes()).unwrap_err();
    // the tenth value of the second record, `0.5` at column 27, is one more than
    // 1 + 2·2² (TS2.0 [Network Data])
    assert_eq!((e.line, e.column), (9, 27), "{e}");
}

#[test]
fn two_port_records_read_the_same_both_ways() {
    // the 2-port S record path (four pairs placed on the stack, a record held by one
    // line stored without a copy) against the general loop of the careful path
    let rows = [
        "1 0.1 0.2 0.3 0.4 0.5 0.6 0.7 0.8",
        "2\t.9  -.1 +0.25e1 3E-2   -0 0.  1 -1e-300 ! comment",
        "3 0.5 10 0.5 20\n 0.5 30 0.5 40",
        "4 0.5 10\n0.5 20 0.5 30\n0.5 40",
        "5 -3 170 -6 -179.5 ! mid-record comment\n -6 -179.5 -0.5 0",
    ];
    for format in ["RI", "MA", "DB"] {
        for eol in ["\n", "\r\n", "\r"] {
            let body = rows.join("\n").replace('\n', eol);
            let v1 = format!("! v1{eol}# MHz S {format} R 50{eol}{body}{eol}");
            same_both_ways("two.s2p", v1.as_bytes());
            assert!(read_bytes("two.s2p", v1.as_bytes()).is_ok(), "{v1}");
            for order in ["12_21", "21_12"] {
                let v2 = format!(
                    "[Version] 2.0{eol}# MHz S {format} R 50{eol}[Number of Ports] 2{eol}\
                     [Two-Port Data Order] {order}{eol}[Number of Frequencies] 5{eol}\
                     [Network Data]{eol}{body}{eol}[End]{eol}"
                );
                same_both_ways("two.ts", v2.as_bytes());
                let t = read_bytes("two.ts", v2.as_bytes()).unwrap_or_else(|e| panic!("{e}"));
                // the second pair of a row is S12 in 12_21 order, S21 in 21_12 order
                let s12 = t.network.s[1];
                let second = lex::parse_number(b"0.3").unwrap();
                if format == "RI" {
                    assert_eq!(s12.re == second, order == "12_21", "{order}");
                }
            }
            // bad values and bad record lengths: the same errors, with line and column
            for bad in [
                "6 0.1 0.2 0.3 0.4 0.5 0.6 0.7 x",
                "6 0.1 0.2 0.3 0.4 0.5 0.6 0.7",
                "6 0.1 0.2 0.3 0.4 0.5 0.6 0.7 0.8 0.9",
                "6 9999 0 0.3 0.4 0.5 0.6 0.7 0.8",
                "6 0.1 0.2 0.3 0.4 0.5 0.6 0.7 1e999",
                "6 0.1 0.2 0.3 0.4 0.5 0.6 0.7 inf",
                "5 0.1 0.2 0.3 0.4 0.5 0.6 0.7 0.8",
                "6 0.1 0.2 0.3 0.4 0.5 0.6 0.7 0.8\u{1}",
            ] {
                let text = format!("# GHz S {format} R 50{eol}{body}{eol}{bad}{eol}");
                same_both_ways("two.s2p", text.as_bytes());
                // 9999 overflows as a DB magnitude only
                let fails = format == "DB" || !bad.contains("9999");
                assert_eq!(
                    read_bytes("two.s2p", text.as_bytes()).is_err(),
                    fails,
                    "{text}"
                );
            }
        }
    }
    // a DB magnitude that overflows: the error names the pair, at the record's line
    let text = "# GHz S DB R 50\n1 0 0 0 0 0 0 0 0\n2 0 0 9999 0 0 0 0 0\n";
    let e = read_bytes("db.s2p", text.as_bytes()).unwrap_err();
    assert_eq!((e.line, e.column), (3, 1), "{e}");
    assert!(e.to_string().contains("value pair 2"), "{e}");
}

#[test]
fn every_prefix_and_byte_flip_reads_the_same_both_ways() {
    for (seed, n, format) in [(3, 1, "MA"), (4, 2, "RI"), (5, 4, "DB")] {
        let g = generate(seed, n, format, 4, "\r\n");
        let name = format!("gen.s{n}p");
        for cut in 0..g.text.len() {
            same_both_ways(&name, &g.text[..cut]);
        }
        let mut rng = Lcg(seed);
        for k in 0..g.text.len() {
            let mut b = g.text.clone();
            b[k] = match rng.next() % 6 {
                0 => b' ',
                1 => b'!',
                2 => b'\n',
                3 => b'e',
                4 => b'-',
                _ => (rng.next() % 256) as u8,
            };
            same_both_ways(&name, &b);
        }
    }
}

#[test]
fn fuzz_corpus_reads_the_same_both_ways() {
    let dir = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("fuzz/corpus/read_touchstone");
    let mut count = 0;
    for entry in std::fs::read_dir(&dir).unwrap() {
        let path = entry.unwrap().path();
        let bytes = std::fs::read(&path).unwrap();
        for name in ["data.s1p", "data.s2p", "data.s4p", "data.ts"] {
            same_both_ways(name, &bytes);
        }
        count += 1;
    }
    assert!(
        count > 100,
        "only {count} corpus files in {}",
        dir.display()
    );
}

/// A grammar-valid number (reference/touchstone.md §2.8):
/// `[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?`.
fn grammar_number() -> impl Strategy<Value = String> {
    let sign = prop::sample::select(vec!["", "+", "-"]);
    let mantissa = prop_oneof![
        ("[0-9]{1,25}", prop::option::of("[0-9]{0,25}")).prop_map(|(i, f)| match f {
            Some(f) => format!("{i}.{f}"),
            None => i,
        }),
        "[0-9]{1,25}".prop_map(|f| format!(".{f}")),
    ];
    let exponent = prop::option::of((
        prop::sample::select(vec!["e", "E"]),
        prop::sample::select(vec!["", "+", "-"]),
        "[0-9]{1,3}",
    ));
    (sign, mantissa, exponent).prop_map(|(s, m, e)| match e {
        Some((e, es, d)) => format!("{s}{m}{e}{es}{d}"),
        None => format!("{s}{m}"),
    })
}

proptest! {
    #[test]
    fn conversion_equals_std_bit_for_bit(t in grammar_number()) {
        let want: f64 = t.parse().unwrap();
        let mut out = Vec::new();
        if want.is_finite() {
            prop_assert_eq!(lex::parse_number(t.as_bytes()).map(f64::to_bits), Ok(want.to_bits()));
            prop_assert_eq!(lex::scan_numbers(t.as_bytes(), &mut out), Some(t.len()));
            prop_assert_eq!(out[0].to_bits(), want.to_bits());
        } else {
            prop_assert_eq!(lex::parse_number(t.as_bytes()), Err(lex::NumError::NonFinite));
            prop_assert_eq!(lex::scan_numbers(t.as_bytes(), &mut out), None);
        }
    }

    /// Lines of near-numbers: the fast path reads exactly the lines whose every
    /// token the careful path accepts, with the same values, and declines the rest.
    #[test]
    fn scan_accepts_what_the_careful_path_accepts(line in "[0-9.eE+\\-inaf ! \t,x]{0,40}") {
        let content = &line.as_bytes()[..line.find('!').unwrap_or(line.len())];
        let careful: Result<Vec<f64>, _> = lex::Tokens::new(content)
            .map(|(_, t)| lex::parse_number(t))
            .collect();
        let mut out = Vec::new();
        let fast = lex::scan_numbers(line.as_bytes(), &mut out);
        match careful {
            Ok(vals) => {
                prop_assert_eq!(fast, Some(content.len()));
                let a: Vec<u64> = vals.iter().map(|v| v.to_bits()).collect();
                let b: Vec<u64> = out.iter().map(|v| v.to_bits()).collect();
                prop_assert_eq!(a, b);
            }
            Err(_) => prop_assert_eq!(fast, None),
        }
    }
}
