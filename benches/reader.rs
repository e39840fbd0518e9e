//! The Touchstone reader on 1-, 2-, 4- and 8-port files (bytes per second), and the
//! number conversion alone against `str::parse::<f64>` on the same tokens.

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

fn reader(c: &mut Criterion) {
    let mut g = c.benchmark_group("read");
    for (n, text) in files() {
        let name = format!("t.s{n}p");
        g.throughput(Throughput::Bytes(text.len() as u64));
        g.bench_with_input(BenchmarkId::new("ports", n), &text, |b, text| {
            b.iter(|| touchstone::read_bytes(&name, black_box(text.as_bytes())).expect("reads"))
        });
    }
    g.finish();
}

/// The data tokens of the 2-port file: what the number scanner sees.
fn numbers(c: &mut Criterion) {
    let (_, text) = files().swap_remove(1);
    let tokens: Vec<&str> = text
        .lines()
        .filter(|l| !l.starts_with(['!', '#']))
        .flat_map(str::split_whitespace)
        .collect();
    let bytes: usize = tokens.iter().map(|t| t.len() + 1).sum();
    let mut g = c.benchmark_group("numbers");
    g.throughput(Throughput::Bytes(bytes as u64));
    g.bench_function("lcgate_parse_number", |b| {
        b.iter(|| {
            let mut acc = 0.0;
            for t in &tokens {
                acc += lex::parse_number(black_box(t.as_bytes())).expect("a number");
            }
            acc
        })
    });
    g.bench_function("std_parse_f64", |b| {
        b.iter(|| {
            let mut acc = 0.0;
            for t in &tokens {
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
