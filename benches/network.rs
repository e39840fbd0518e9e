//! Conversions (S→Z, S→Y) and views on 1–8 ports, and the figures of a view
//! (points per second).

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion, Throughput};
use lcgate::figures::{self, Kind};
use lcgate::network::{self, convert, Network, PortMap, C64};
use std::hint::black_box;

mod common;

const POINTS: usize = 300;

fn nets() -> Vec<Network> {
    (1..=8)
        .map(|n| common::random_network(0xc0de + n as u64, n, POINTS))
        .collect()
}

fn conversions(c: &mut Criterion) {
    let nets = nets();
    for (what, conv) in [
        ("s_to_z", convert::s_to_z as convert::BlockFn),
        ("s_to_y", convert::s_to_y),
    ] {
        let mut g = c.benchmark_group(format!("convert/{what}"));
        g.throughput(Throughput::Elements(POINTS as u64));
        for net in &nets {
            g.bench_with_input(BenchmarkId::new("ports", net.ports), net, |b, net| {
                b.iter(|| {
                    let mut acc = C64::new(0.0, 0.0);
                    for k in 0..net.points() {
                        let m =
                            conv(black_box(net.s_block(k)), net.ports, &net.z0).expect("exists");
                        acc += m[0];
                    }
                    acc
                })
            });
        }
        g.finish();
    }
}

fn views(c: &mut Criterion) {
    let nets = nets();
    let mut g = c.benchmark_group("view");
    g.throughput(Throughput::Elements(POINTS as u64));
    for net in &nets {
        for name in network::views_for(net.ports) {
            let id = BenchmarkId::new(name.as_str(), format!("{}port", net.ports));
            g.bench_with_input(id, net, |b, net| {
                b.iter(|| network::view(black_box(net), name, &PortMap::default()).expect("view"))
            });
        }
    }
    g.finish();
}

/// A MIM capacitor as a 1-port: 1 pF with 20 pH and 0.5 Ω in series (invented values).
fn capacitor(freq: &[f64]) -> Network {
    let z: Vec<C64> = freq
        .iter()
        .map(|&f| {
            let w = 2.0 * std::f64::consts::PI * f;
            C64::new(0.5, w * 20e-12 - 1.0 / (w * 1e-12))
        })
        .collect();
    Network::from_z(freq.to_vec(), 1, vec![50.0], &z).expect("regular")
}

/// Figures of a view. The inductor's include the π-model fit (`figures` calls
/// `model::analyse`; the fit alone is in the `fit` bench); the capacitor's and the
/// transformer's have no fit.
fn figures_of_views(c: &mut Criterion) {
    let freq = common::log_grid(POINTS, 100e6, 40e9);
    let coil = common::coil_network(&common::coil(), &freq);
    let cap = capacitor(&freq);
    let four = common::random_network(0x4444, 4, POINTS);
    let cases = [
        (
            "inductor_single_ended",
            &coil,
            network::ViewName::SingleEnded,
            None,
        ),
        (
            "capacitor_one_port",
            &cap,
            network::ViewName::OnePort,
            Some(Kind::Capacitor),
        ),
        ("transformer", &four, network::ViewName::Transformer, None),
    ];
    let mut g = c.benchmark_group("figures");
    g.throughput(Throughput::Elements(POINTS as u64));
    for (label, net, name, kind) in cases {
        let v = network::view(net, name, &PortMap::default()).expect("view");
        g.bench_function(label, |b| {
            b.iter(|| figures::view_figures(black_box(&v), &net.freq, kind))
        });
    }
    g.bench_function("data_checks_2port", |b| {
        b.iter(|| figures::data_checks(black_box(&coil)))
    });
    g.finish();
}

criterion_group! {
    name = benches;
    config = common::quick();
    targets = conversions, views, figures_of_views
}
criterion_main!(benches);
