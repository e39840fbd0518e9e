//! Arbitrary finite networks through every view and figure: singular matrices, zero
//! or negative frequencies, flat or non-monotonic curves give undefined figures, never
//! a panic and never a NaN.
#![no_main]
use libfuzzer_sys::fuzz_target;
use lcgate::network::{self, Network, PortMap, C64};

fuzz_target!(|data: &[u8]| {
    let Some((&head, rest)) = data.split_first() else {
        return;
    };
    let ports = 1 + (head % 4) as usize;
    let values: Vec<f64> = rest
        .chunks_exact(4)
        .map(|c| f32::from_le_bytes([c[0], c[1], c[2], c[3]]) as f64)
        .filter(|v| v.is_finite())
        .collect();
    let per_point = 1 + 2 * ports * ports;
    let points = (values.len() / per_point).min(64);
    if points == 0 {
        return;
    }
    let mut freq = Vec::with_capacity(points);
    let mut s = Vec::with_capacity(points * ports * ports);
    for p in values.chunks_exact(per_point).take(points) {
        freq.push(p[0]);
        s.extend(p[1..].chunks_exact(2).map(|c| C64::new(c[0], c[1])));
    }
    let net = Network {
        freq,
        ports,
        z0: vec![50.0; ports],
        s,
    };
    let checks = lcgate::figures::data_checks(&net);
    assert!(checks.passivity_margin.is_none_or(f64::is_finite));
    for name in network::views_for(ports) {
        if let Ok(view) = network::view(&net, name, &PortMap::default()) {
            let figs = lcgate::figures::view_figures(&view, &net.freq, None);
            for v in figs.scalars.values().flatten() {
                assert!(v.is_finite());
            }
            for c in figs.curves.values() {
                assert!(c.iter().flatten().all(|v| v.is_finite()));
            }
        }
    }
});
