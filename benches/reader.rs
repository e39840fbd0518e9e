//! The Touchstone reader on 1-, 2-, 4- and 8-port files (bytes per second), and the
//! number conversion alone against `str::parse::<f64>` on the same tokens.
//!
//! Two number styles: lcgate's writer prints shortest round-trip numbers (about 17
//! significant digits, mostly beyond Clinger's fast path), while solvers commonly
//! print a fixed 10 significant digits (`1.234567890e-01`), all inside it.

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion, Throughput};
use lcgate::touchstone::{self, lex};
use std::hint::black_box;

mod common;

/// Points per port count: about 0.1–1.2 MB of text each.
const CASES: [(usize, usize); 4] = [(1, 2000), (2, 2000), (4, 1000), (8, 300)];

fn files() -> Vec<(usize, String)> {
    CASES
        .iter()
        .map(|&(n, points)| {
            let net = common::random_network(0x7ead + n as u64, n, points);
            (n, touchstone::write_string(&net, &common::write_opts()))
        })
        .collect()
}

/// The same 2-port as `files()` writes, in the 10-significant-digit style of a
/// solver: `# GHz S RI R 50`, one point per line, 11 21 12 22.
fn fixed_digits_2port() -> String {
    let net = common::random_network(0x7ead + 2, 2, 2000);
    let mut out = String::from("! fixed 10-digit numbers\n# GHz S RI R 50\n");
    for k in 0..net.points() {
        out.push_str(&format!("{:.9e}", net.freq[k] / 1e9));
        for (i, j) in [(0, 0), (1, 0), (0, 1), (1, 1)] {
            let s = net.s_at(k, i, j);
            out.push_str(&format!(" {:.9e} {:.9e}", s.re, s.im));
        }
        out.push('\n');
    }
    out
}

fn reader(c: &mut Criterion) {
    let mut g = c.benchmark_group("read");
    for (n, text) in files() {
        let name = format!("t.s{n}p");
        g.throughput(Throughput::Bytes(text.len() as u64));
        g.bench_with_input(BenchmarkId::new("ports", n), &text, |b, text| {
            b.iter(|| touchstone::read_bytes(&name, black_box(text.as_bytes())).expect("reads"))
        });
    }
    let text = fixed_digits_2port();
    g.throughput(Throughput::Bytes(text.len() as u64));
    g.bench_function("fixed_digits_2port", |b| {
        b.iter(|| touchstone::read_bytes("t.s2p", black_box(text.as_bytes())).expect("reads"))
    });
    g.finish();
}

/// The data tokens of a file: what the number scanner sees.
fn tokens(text: &str) -> Vec<&str> {
    text.lines()
        .filter(|l| !l.starts_with(['!', '#']))
        .flat_map(str::split_whitespace)
        .collect()
}

/// `parse_number` against std on the tokens of the 2-port files, in both styles.
fn numbers(c: &mut Criterion) {
    let (_, shortest) = files().swap_remove(1);
    let fixed = fixed_digits_2port();
    for (style, text) in [("shortest", &shortest), ("fixed_digits", &fixed)] {
        numbers_of(c, style, &tokens(text));
    }
}

fn numbers_of(c: &mut Criterion, style: &str, tokens: &[&str]) {
    let bytes: usize = tokens.iter().map(|t| t.len() + 1).sum();
    let mut g = c.benchmark_group(format!("numbers/{style}"));
    g.throughput(Throughput::Bytes(bytes as u64));
    g.bench_function("lcgate_parse_number", |b| {
        b.iter(|| {
            let mut acc = 0.0;
            for t in tokens {
                acc += lex::parse_number(black_box(t.as_bytes())).expect("a number");
            }
            acc
        })
    });
    g.bench_function("std_parse_f64", |b| {
        b.iter(|| {
            let mut acc = 0.0;
            for t in tokens {
                acc += black_box(*t).parse::<f64>().expect("a number");
            }
            acc
        })
    });
    g.finish();
}

criterion_group! {
    name = benches;
    config = common::quick();
    targets = reader, numbers
}
criterion_main!(benches);
