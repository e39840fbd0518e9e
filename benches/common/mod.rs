//! Synthetic data shared by the benches: generated in-process and deterministically
//! (a seeded generator), so every run measures the same bytes.

#![allow(dead_code)] // each bench binary uses a different part of this module

use criterion::Criterion;
use lcgate::model::PiModel;
use lcgate::network::{Network, C64};
use lcgate::touchstone::{Format, FreqUnit, Param, Version, WriteOptions};
use std::time::Duration;

/// Criterion settings that keep the whole `cargo bench` within a few minutes on a
/// 2-core machine: few samples, short warm-up and measurement.
pub fn quick() -> Criterion {
    Criterion::default()
        .sample_size(20)
        .warm_up_time(Duration::from_millis(500))
        .measurement_time(Duration::from_secs(2))
        .configure_from_args()
}

/// A small linear congruential generator (Knuth's MMIX constants): reproducible
/// spreads without a dependency.
pub struct Lcg(pub u64);
impl Lcg {
    pub fn next(&mut self) -> f64 {
        self.0 = self
            .0
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        (self.0 >> 11) as f64 / (1u64 << 53) as f64
    }
    pub fn between(&mut self, lo: f64, hi: f64) -> f64 {
        lo + (hi - lo) * self.next()
    }
}

/// `n` log-spaced points from `lo` to `hi` (Hz).
pub fn log_grid(n: usize, lo: f64, hi: f64) -> Vec<f64> {
    (0..n)
        .map(|k| lo * (hi / lo).powf(k as f64 / (n - 1) as f64))
        .collect()
}

/// An N-port with random S of spectral norm ≤ 0.6 per point (well conditioned, so
/// every conversion and view exists), references 50 Ω.
pub fn random_network(seed: u64, ports: usize, points: usize) -> Network {
    let mut rng = Lcg(seed);
    let mut s = Vec::with_capacity(points * ports * ports);
    for _ in 0..points {
        let block: Vec<C64> = (0..ports * ports)
            .map(|_| C64::new(rng.between(-1.0, 1.0), rng.between(-1.0, 1.0)))
            .collect();
        let fro = block.iter().map(|c| c.norm_sqr()).sum::<f64>().sqrt();
        let scale = rng.between(0.05, 0.6) / fro;
        s.extend(block.iter().map(|c| c * scale));
    }
    Network {
        freq: log_grid(points, 100e6, 40e9),
        ports,
        z0: vec![50.0; ports],
        s,
    }
}

/// A 2 nH RF coil on a lossy substrate (element values invented, in the range of
/// Yue & Wong's examples).
pub fn coil() -> PiModel {
    PiModel {
        ls: 2.0e-9,
        rdc: 1.6,
        rac: 0.7,
        cs: 12e-15,
        cox1: 140e-15,
        csi1: 40e-15,
        rsi1: 600.0,
        cox2: 150e-15,
        csi2: 35e-15,
        rsi2: 700.0,
    }
}

/// The π-model coil `m` as a 2-port on `freq`.
pub fn coil_network(m: &PiModel, freq: &[f64]) -> Network {
    let y: Vec<C64> = freq.iter().flat_map(|&f| m.y2(f)).collect();
    Network::from_y(freq.to_vec(), 2, vec![50.0; 2], &y).expect("π-model Y is regular")
}

/// A coil with its element values spread by ±30 % around [`coil`].
pub fn spread_coil(rng: &mut Lcg) -> PiModel {
    let c = coil();
    let mut k = || rng.between(0.7, 1.3);
    PiModel {
        ls: c.ls * k(),
        rdc: c.rdc * k(),
        rac: c.rac * k(),
        cs: c.cs * k(),
        cox1: c.cox1 * k(),
        csi1: c.csi1 * k(),
        rsi1: c.rsi1 * k(),
        cox2: c.cox2 * k(),
        csi2: c.csi2 * k(),
        rsi2: c.rsi2 * k(),
    }
}

/// How the benches write Touchstone: version 1.1, S in RI, GHz (the writer prints
/// shortest round-trip numbers, about 20 characters each).
pub fn write_opts() -> WriteOptions {
    WriteOptions {
        version: Version::V1_1,
        param: Param::S,
        format: Format::RI,
        unit: FreqUnit::GHz,
        comments: vec!["synthetic network for cargo bench".into()],
    }
}
