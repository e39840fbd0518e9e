//! The physical limit for reading ASCII data, measured beside lcgate's reader in one run.
//!
//! `cargo run --release --example float-ceiling -- FILE [RUNS]` times (best of RUNS,
//! default 5, file already in memory) a fast-float class parser (the `fast-float2`
//! crate) over every bare number of FILE — no structure, no checks, just splitting on
//! white space and parsing — and then lcgate's Touchstone reader on the same bytes,
//! line by line (`read_bytes`) and block by block with the blocks' lines scanned in
//! parallel (`read_blocks`, what `read_path` does for files of 8 MiB and more), and
//! prints all in MB/s with the reader's share of the ceiling (the performance target
//! is ≥ 30 %). `RUNS` = 1 suits instruction counting (callgrind).

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

fn best_of<F: FnMut()>(runs: usize, mut f: F) -> f64 {
    (0..runs.max(1))
        .map(|_| {
            let t = Instant::now();
            f();
            t.elapsed().as_secs_f64()
        })
        .fold(f64::INFINITY, f64::min)
}

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let usage = "usage: float-ceiling FILE [RUNS]";
    let path = std::env::args().nth(1).ok_or(usage)?;
    let runs = match std::env::args().nth(2) {
        Some(r) => r.parse().map_err(|_| usage)?,
        None => 5,
    };
    let bytes = std::fs::read(&path)?;
    let mb = bytes.len() as f64 / 1e6;
    let mut numbers = 0;
    let t_ceiling = best_of(runs, || {
        let (s, n) = ceiling(&bytes);
        numbers = n;
        std::hint::black_box(s);
    });
    let mut err = None;
    let mut keep = |r: Result<lcgate::touchstone::Touchstone, _>| match r {
        Ok(ts) => {
            std::hint::black_box(ts.network.s.len());
        }
        Err(e) => err = Some(e),
    };
    let t_reader = best_of(runs, || keep(lcgate::touchstone::read_bytes(&path, &bytes)));
    let size = Some(bytes.len() as u64);
    let t_blocks = best_of(runs, || {
        keep(lcgate::touchstone::read_blocks(
            &path,
            &bytes[..],
            size,
            4 << 20,
        ))
    });
    if let Some(e) = err {
        return Err(e.to_string().into());
    }
    let c = mb / t_ceiling;
    let r = mb / t_reader;
    let b = mb / t_blocks;
    println!(
        "bare float parsing (fast-float2, {numbers} numbers): {c:.0} MB/s; lcgate reader: {r:.0} MB/s line by line ({:.0} % of the ceiling), {b:.0} MB/s in parallel blocks ({:.0} %; target ≥ 30 %)",
        100.0 * r / c,
        100.0 * b / c
    );
    Ok(())
}
