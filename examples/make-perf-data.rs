//! Synthetic data for the side-by-side performance comparison (`benches/compare.sh`).
//!
//! `cargo run --release --example make-perf-data -- DIR PARTS [BIG_POINTS] [--exact]`
//! writes `DIR/lib/…/part_NNNN.s2p` (PARTS two-port π-model coils, 300 log-spaced
//! points from 100 MHz to 40 GHz, element values spread over an RF range),
//! `DIR/rules/perf.yaml`
//! (a rules file that exercises bands, curves and a drift section), and, when
//! BIG_POINTS is given, `DIR/big.s4p`: a 4-port of two coupled π-model windings on
//! BIG_POINTS points (60,000 gives a file of about 60 MB).
//!
//! Each coil's branch admittances carry a small ripple (±0.3 %, a few periods over
//! the sweep, seeded per part), the kind of wobble an EM solver's meshing leaves: the
//! data are then not exactly a π-model and the fit has to iterate, as it does on real
//! EM data. `--exact` leaves the ripple out (exact π-model data, where the fit's
//! analytic starting values already match).
//!
//! Deterministic: the same arguments write the same bytes.

use std::path::Path;

use lcgate::model::PiModel;
use lcgate::network::{Network, C64};
use lcgate::touchstone::{write_path, Format, FreqUnit, Param, Version, WriteOptions};

/// A small linear congruential generator: reproducible spreads without a dependency.
struct Lcg(u64);
impl Lcg {
    fn next(&mut self) -> f64 {
        self.0 = self
            .0
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        (self.0 >> 11) as f64 / (1u64 << 53) as f64
    }
    fn between(&mut self, lo: f64, hi: f64) -> f64 {
        lo + (hi - lo) * self.next()
    }
}

fn coil(rng: &mut Lcg) -> PiModel {
    let ls = rng.between(0.5e-9, 8e-9);
    PiModel {
        ls,
        rdc: ls / 1e-9 * rng.between(0.6, 1.2),
        rac: ls / 1e-9 * rng.between(0.2, 0.6),
        cs: rng.between(5e-15, 25e-15),
        cox1: rng.between(60e-15, 250e-15),
        csi1: rng.between(20e-15, 60e-15),
        rsi1: rng.between(200.0, 1500.0),
        cox2: rng.between(60e-15, 250e-15),
        csi2: rng.between(20e-15, 60e-15),
        rsi2: rng.between(200.0, 1500.0),
    }
}

fn log_grid(n: usize, lo: f64, hi: f64) -> Vec<f64> {
    (0..n)
        .map(|k| lo * (hi / lo).powf(k as f64 / (n - 1) as f64))
        .collect()
}

/// Amplitude of the relative ripple on each branch admittance.
const RIPPLE: f64 = 0.003;

/// A ripple factor per point, 1 + RIPPLE·e^{jθ_k}, θ running over 3 to 8 periods
/// across the sweep from a seeded phase.
fn ripple(rng: &mut Lcg, n: usize) -> Vec<C64> {
    let periods = rng.between(3.0, 8.0);
    let phase = rng.between(0.0, 1.0);
    (0..n)
        .map(|k| {
            let t = std::f64::consts::TAU * (phase + periods * k as f64 / (n - 1) as f64);
            C64::new(1.0 + RIPPLE * t.cos(), RIPPLE * t.sin())
        })
        .collect()
}

/// The π's 2-port Y from its branches (Y11 = Y_ser + Y_sh1, Y12 = Y21 = −Y_ser,
/// Y22 = Y_ser + Y_sh2), each branch times its ripple factor when `seed` is given.
fn two_port(m: &PiModel, freq: &[f64], seed: Option<u64>) -> Network {
    let n = freq.len();
    let one = vec![C64::new(1.0, 0.0); n];
    let [rs, r1, r2] = match seed {
        Some(s) => {
            let mut rng = Lcg(s);
            [0; 3].map(|_| ripple(&mut rng, n))
        }
        None => [one.clone(), one.clone(), one],
    };
    let y: Vec<C64> = (0..n)
        .flat_map(|k| {
            let f = freq[k];
            let ys = m.series_y(f) * rs[k];
            let (a, b) = (m.shunt1_y(f) * r1[k], m.shunt2_y(f) * r2[k]);
            [ys + a, -ys, -ys, ys + b]
        })
        .collect();
    Network::from_y(freq.to_vec(), 2, vec![50.0; 2], &y).expect("π-model Y is regular")
}

/// Two π-model windings, ports (1,2) and (3,4), coupled by a small capacitance
/// between ports 1 and 3 and between ports 2 and 4.
fn four_port(a: &PiModel, b: &PiModel, freq: &[f64]) -> Network {
    let cc = 15e-15;
    let mut y = Vec::with_capacity(freq.len() * 16);
    for &f in freq {
        let ya = a.y2(f);
        let yb = b.y2(f);
        let yc = C64::new(0.0, 2.0 * std::f64::consts::PI * f * cc);
        let mut m = [C64::new(0.0, 0.0); 16];
        m[0] = ya[0] + yc;
        m[1] = ya[1];
        m[4] = ya[2];
        m[5] = ya[3] + yc;
        m[10] = yb[0] + yc;
        m[11] = yb[1];
        m[14] = yb[2];
        m[15] = yb[3] + yc;
        m[2] = -yc;
        m[8] = -yc;
        m[7] = -yc;
        m[13] = -yc;
        y.extend_from_slice(&m);
    }
    Network::from_y(freq.to_vec(), 4, vec![50.0; 4], &y).expect("coupled Y is regular")
}

const RULES: &str = r#"suite: performance run
parts:
  - select: ["**/*.s2p"]
    kind: inductor
    view: single_ended
    band: 2GHz .. 3GHz
    checks:
      srf-margin: srf >= 2 * band.hi
      q-in-band: q(band) >= 3
      l-flat: l(band.mid) within 20% of l_low
drift:
  l(band.mid): 1%
  q_peak: 3%
"#;

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let mut args: Vec<String> = std::env::args().skip(1).collect();
    let exact = args.iter().any(|a| a == "--exact");
    args.retain(|a| a != "--exact");
    let usage = "usage: make-perf-data DIR PARTS [BIG_POINTS] [--exact]";
    let dir = Path::new(args.first().ok_or(usage)?);
    let parts: usize = args.get(1).ok_or(usage)?.parse()?;
    let big: Option<usize> = args.get(2).map(|s| s.parse()).transpose()?;

    let mut rng = Lcg(0x5eed_2026);
    let freq = log_grid(300, 100e6, 40e9);
    let opts = WriteOptions {
        version: Version::V1_0,
        param: Param::S,
        format: Format::RI,
        unit: FreqUnit::GHz,
        comments: vec!["synthetic π-model coil for the performance comparison".into()],
    };
    for i in 0..parts {
        let sub = dir.join("lib").join(format!("block{:02}", i / 100));
        std::fs::create_dir_all(&sub)?;
        let seed = (!exact).then_some(0x7269_7070_u64 ^ ((i as u64) << 20));
        let net = two_port(&coil(&mut rng), &freq, seed);
        write_path(&sub.join(format!("part_{i:04}.s2p")), &net, &opts)?;
    }
    std::fs::create_dir_all(dir.join("rules"))?;
    std::fs::write(dir.join("rules").join("perf.yaml"), RULES)?;

    if let Some(n) = big {
        let grid = log_grid(n, 100e6, 110e9);
        let net = four_port(&coil(&mut rng), &coil(&mut rng), &grid);
        let opts = WriteOptions {
            comments: vec!["synthetic coupled windings, large sweep".into()],
            ..opts
        };
        write_path(&dir.join("big.s4p"), &net, &opts)?;
    }
    Ok(())
}
