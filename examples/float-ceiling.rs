//! The physical limit for reading ASCII data, measured beside lcgate's reader in one run.
//!
//! `cargo run --release --example float-ceiling -- FILE` times (best of 5, file already
//! in memory) a fast-float class parser (the `fast-float2` crate) over every bare
//! number of FILE — no structure, no checks, just splitting on white space and parsing —
//! and then lcgate's Touchstone reader on the same bytes, and prints both in MB/s and
//! the reader's share of the ceiling (the performance target is ≥ 30 %).

use std::time::Instant;

fn ceiling(bytes: &[u8]) -> (f64, usize) {
    let mut sum = 0.0;
    let mut n = 0;
    for line in bytes.split(|&b| b == b'\n') {
        if matches!(line.first(), Some(b'!' | b'#' | b'[')) {
            continue;
        }
        for tok in line
            .split(|b| b.is_ascii_whitespace())
            .filter(|t| !t.is_empty())
        {
            if let Ok(v) = fast_float2::parse::<f64, _>(tok) {
                sum += v;
                n += 1;
            }
        }
    }
    (sum, n)
}

fn best_of<F: FnMut()>(mut f: F) -> f64 {
    (0..5)
        .map(|_| {
            let t = Instant::now();
            f();
            t.elapsed().as_secs_f64()
        })
        .fold(f64::INFINITY, f64::min)
}

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let path = std::env::args().nth(1).ok_or("usage: float-ceiling FILE")?;
    let bytes = std::fs::read(&path)?;
    let mb = bytes.len() as f64 / 1e6;
    let mut numbers = 0;
    let t_ceiling = best_of(|| {
        let (s, n) = ceiling(&bytes);
        numbers = n;
        std::hint::black_box(s);
    });
    let mut err = None;
    let t_reader = best_of(|| match lcgate::touchstone::read_bytes(&path, &bytes) {
        Ok(ts) => {
            std::hint::black_box(ts.network.s.len());
        }
        Err(e) => err = Some(e.to_string()),
    });
    if let Some(e) = err {
        return Err(e.into());
    }
    let c = mb / t_ceiling;
    let r = mb / t_reader;
    println!(
        "bare float parsing (fast-float2, {numbers} numbers): {c:.0} MB/s; lcgate reader: {r:.0} MB/s → {:.0} % of the ceiling (target ≥ 30 %)",
        100.0 * r / c
    );
    Ok(())
}
