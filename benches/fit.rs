//! The π-model fit on a 300-point 2-port made from a known π-model, in the
//! single-ended and differential views (branch fits) and as a 1-port (whole fit).

use criterion::{criterion_group, criterion_main, Criterion};
use lcgate::figures;
use lcgate::model::{self, fit, Dense};
use lcgate::network::{self, Network, PortMap, ViewName, C64};
use std::hint::black_box;

mod common;

fn fits(c: &mut Criterion) {
    let m = common::coil();
    let freq = common::log_grid(300, 100e6, 40e9);
    let two = common::coil_network(&m, &freq);
    let y1: Vec<C64> = freq.iter().map(|&f| m.y_one_port(f)).collect();
    let one = Network::from_y(freq.clone(), 1, vec![50.0], &y1).expect("regular");
    let mut g = c.benchmark_group("fit");
    for (label, net, name) in [
        ("single_ended_2port", &two, ViewName::SingleEnded),
        ("differential_2port", &two, ViewName::Differential),
        ("one_port", &one, ViewName::OnePort),
    ] {
        let v = network::view(net, name, &PortMap::default()).expect("view");
        // the figures once, for the SRF that bounds the fitted band
        let figs = figures::view_figures(&v, &net.freq, None);
        let srf = figs.scalar("srf");
        g.bench_function(format!("fit_view/{label}"), |b| {
            b.iter(|| {
                fit::fit_view(black_box(&v), &net.freq, srf, &Dense::default()).expect("fits")
            })
        });
        // the fit plus the loss factors and mechanism, as the figures run it
        g.bench_function(format!("analyse/{label}"), |b| {
            b.iter_batched_ref(
                || figs.clone(),
                |f| model::analyse(black_box(&v), f),
                criterion::BatchSize::SmallInput,
            )
        });
    }
    g.finish();
}

criterion_group! {
    name = benches;
    config = common::quick();
    targets = fits
}
criterion_main!(benches);
