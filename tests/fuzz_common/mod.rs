//! The fuzz targets' bodies, shared by the targets in `fuzz/` (each a one-line
//! `fuzz_target!` around a function here) and by `tests/fuzz_regressions.rs`, which
//! replays every input the fuzzers once crashed on (`tests/data/fuzz/<target>/`).
//! A panic here — an `assert!` or one inside lcgate — is a bug.
//!
//! - [`touchstone`]: bytes into the Touchstone reader: a network or an error.
//! - [`network`]: bytes decoded as an arbitrary finite network (layout below) through
//!   the whole `inspect` pipeline: views, figures, the π-model fit, the loss story, the
//!   verdict line, the table and the JSON document. Singular matrices, zero, negative
//!   or repeated frequencies, flat or non-monotonic curves must give undefined figures
//!   or refusals, never a panic and never a NaN.
//! - [`rules`]: bytes as a rules file, a sidecar and an expression: a rule set or
//!   located problems; a rule set that loads is evaluated on three small parts.
//!
//! Network layout (little-endian): byte 0 = ports − 1 (mod 4); byte 1 = flags; then
//! f64 values. With flag bit 7 the first `ports` values are the reference
//! impedances. Then one record per point: a frequency value and the n×n matrix as
//! (re, im) pairs, at most 64 points. Non-finite values read as 0.
//! Flags: bits 0–1 frequency mode (0 as given; 1 running sum of |value| — non-
//! decreasing, repeats where a value is 0; 2 running sum of values — any order;
//! 3 value of point 0 × (k + 1) — a grid from a possibly zero or negative step);
//! bits 2–3 the matrices are 0/3 S, 1 Y, 2 Z (converted to S as the reader does);
//! bits 4–5 the declared kind (0 inferred, 1 inductor, 2 capacitor, 3 transformer);
//! bit 6 every point reuses point 0's matrix (flat curves).
#![allow(dead_code)]

use std::path::PathBuf;
use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::{Mutex, OnceLock};

use lcgate::cli::inspect::{self, At};
use lcgate::figures::{self, DataChecks, Kind, ViewFigures};
use lcgate::network::{self, Network, PortMap, ViewName, C64};
use lcgate::rules::{self, expr, EvalContext};

// ------------------------------------------------------------------ touchstone

/// The read_touchstone target.
pub fn touchstone(data: &[u8]) {
    // Alternate the extension hint so the .sNp port-count check is exercised too.
    let name = match data.first().map(|b| b % 4) {
        Some(0) => "fuzz.s1p",
        Some(1) => "fuzz.s2p",
        Some(2) => "fuzz.s4p",
        _ => "fuzz.ts",
    };
    if let Ok(ts) = lcgate::touchstone::read_bytes(name, data) {
        let net = &ts.network;
        assert_eq!(net.s.len(), net.points() * net.ports * net.ports);
        assert!(net.s.iter().all(|c| c.re.is_finite() && c.im.is_finite()));
    }
}

// ------------------------------------------------------------------ network

const MAX_POINTS: usize = 64;

fn decode(data: &[u8]) -> Option<(Network, Option<Kind>)> {
    let (&head, rest) = data.split_first()?;
    let (&flags, rest) = rest.split_first()?;
    let ports = 1 + (head % 4) as usize;
    let mut values = rest.chunks_exact(8).map(|c| {
        let v = f64::from_le_bytes([c[0], c[1], c[2], c[3], c[4], c[5], c[6], c[7]]);
        if v.is_finite() {
            v
        } else {
            0.0
        }
    });
    let z0: Vec<f64> = if flags & 0x80 != 0 {
        (0..ports)
            .map(|_| {
                let z = values.next().unwrap_or(50.0).abs();
                // the reader refuses a reference that is not > 0
                if z > 0.0 {
                    z
                } else {
                    50.0
                }
            })
            .collect()
    } else {
        vec![50.0; ports]
    };
    let values: Vec<f64> = values.collect();
    let per_point = 1 + 2 * ports * ports;
    let points = (values.len() / per_point).min(MAX_POINTS);
    if points == 0 {
        return None;
    }
    let mut freq = Vec::with_capacity(points);
    let mut m = Vec::with_capacity(points * ports * ports);
    let mut acc = 0.0f64;
    for (k, p) in values.chunks_exact(per_point).take(points).enumerate() {
        let f = match flags & 3 {
            0 => p[0],
            1 => {
                acc += p[0].abs();
                acc
            }
            2 => {
                acc += p[0];
                acc
            }
            _ => values[0] * (k + 1) as f64,
        };
        freq.push(if f.is_finite() { f } else { 0.0 });
        let block = if flags & 0x40 != 0 {
            &values[1..per_point]
        } else {
            &p[1..]
        };
        m.extend(block.chunks_exact(2).map(|c| C64::new(c[0], c[1])));
    }
    let net = match (flags >> 2) & 3 {
        1 => Network::from_y(freq, ports, z0, &m)?,
        2 => Network::from_z(freq, ports, z0, &m)?,
        _ => Network {
            freq,
            ports,
            z0,
            s: m,
        },
    };
    let kind = match (flags >> 4) & 3 {
        1 => Some(Kind::Inductor),
        2 => Some(Kind::Capacitor),
        3 => Some(Kind::Transformer),
        _ => None,
    };
    Some((net, kind))
}

fn finite_figures(figs: &ViewFigures) {
    for (name, v) in &figs.scalars {
        assert!(v.is_none_or(f64::is_finite), "scalar {name} = {v:?}");
    }
    for (name, c) in &figs.curves {
        assert_eq!(c.len(), figs.freq.len(), "curve {name} length");
        assert!(
            c.iter().flatten().all(|v| v.is_finite()),
            "curve {name} not finite"
        );
    }
    if let Some(Ok(story)) = &figs.loss {
        assert!(story.fit_error.is_finite(), "fit_error {}", story.fit_error);
        assert_eq!(story.mechanism.len(), figs.freq.len());
        for b in &story.loss_bands {
            assert!(b.from.is_finite() && b.to.is_finite());
        }
    }
    if let Some(line) = lcgate::model::verdict_line(figs) {
        assert!(!line.contains("NaN") && !line.contains("inf"), "{line}");
    }
}

/// The figures_of_network target: decode, then every check.
pub fn network(data: &[u8]) {
    let Some((net, kind)) = decode(data) else {
        return;
    };
    assert!(net.s.iter().all(|c| c.re.is_finite() && c.im.is_finite()));
    let checks = figures::data_checks(&net);
    assert!(checks.passivity_margin.is_none_or(f64::is_finite));
    assert!(checks.reciprocity_error.is_none_or(f64::is_finite));

    match kind {
        // `inspect` itself: inferred kinds, then every rendering of it
        None => {
            let ins = inspect::inspect("fuzz.snp", net, None);
            for (_, r) in &ins.views {
                if let Ok(figs) = r {
                    finite_figures(figs);
                }
            }
            for at in [At::Sweep, At::Representative] {
                let doc = inspect::to_json(&ins, &at);
                let text = serde_json::to_string(&doc).expect("the document serialises");
                assert!(serde_json::from_str::<serde_json::Value>(&text).is_ok());
                let table = inspect::to_table(&ins, &at);
                assert!(!table.contains("NaN"), "{table}");
            }
        }
        // a kind declared by a rules group, as `check` computes it
        Some(k) => {
            for name in network::views_for(net.ports) {
                if let Ok(view) = network::view(&net, name, &PortMap::default()) {
                    finite_figures(&figures::view_figures(&view, &net.freq, Some(k)));
                }
            }
        }
    }
}

// ------------------------------------------------------------------ rules

/// The parts the rules are evaluated on (paths under the repository's tests/data).
const PARTS: [&str; 3] = [
    "lib-small/coils/L1p0n.s2p",
    "lib-small/caps/C0p5p.s1p",
    "lib-small/xfmr/T1n2n.s4p",
];

struct Parts {
    nets: Vec<(String, Network, DataChecks)>,
}

fn parts() -> &'static Parts {
    static P: OnceLock<Parts> = OnceLock::new();
    P.get_or_init(|| {
        // the main crate's tests, or the fuzz crate one folder down
        let here = PathBuf::from(env!("CARGO_MANIFEST_DIR"));
        let root = [here.join("tests/data"), here.join("../tests/data")]
            .into_iter()
            .find(|p| p.join(PARTS[0]).is_file())
            .expect("tests/data is found");
        let nets = PARTS
            .iter()
            .map(|p| {
                let ts = lcgate::touchstone::read_path(&root.join(p)).expect("a seed part reads");
                let checks = figures::data_checks(&ts.network);
                let name = p.rsplit('/').next().unwrap_or(p).to_string();
                (name, ts.network, checks)
            })
            .collect();
        Parts { nets }
    })
}

type Key = (usize, ViewName, PortMap, Option<Kind>);

/// Figures already computed (the fit is slow); bounded so that arbitrary port maps
/// cannot grow it without end.
fn figures_of(key: Key) -> Option<ViewFigures> {
    static CACHE: Mutex<Vec<(Key, Option<ViewFigures>)>> = Mutex::new(Vec::new());
    let mut cache = CACHE.lock().unwrap_or_else(|e| e.into_inner());
    if let Some((_, f)) = cache.iter().find(|(k, _)| *k == key) {
        return f.clone();
    }
    let net = &parts().nets[key.0].1;
    let figs = network::view(net, key.1, &key.2)
        .ok()
        .map(|v| figures::view_figures(&v, &net.freq, key.3));
    if cache.len() >= 64 {
        cache.clear();
    }
    cache.push((key, figs.clone()));
    figs
}

/// A scratch file name unique to this process and call (tests run in parallel).
fn scratch(ext: &str) -> PathBuf {
    static N: AtomicUsize = AtomicUsize::new(0);
    let n = N.fetch_add(1, Ordering::Relaxed);
    std::env::temp_dir().join(format!("lcgate-fuzz-{}-{n}.{ext}", std::process::id()))
}

fn evaluate(set: &rules::RuleSet) {
    for (i, (name, net, data)) in parts().nets.iter().enumerate() {
        for file in &set.files {
            for group in &file.groups {
                let _ = group.matches(name);
                let Ok(resolved) = group.resolve(name, None) else {
                    continue;
                };
                let view = group
                    .view
                    .unwrap_or_else(|| lcgate::pipeline::default_view(net.ports));
                let Some(figs) = figures_of((i, view, group.ports.clone(), group.kind)) else {
                    continue;
                };
                let ctx = EvalContext {
                    figures: &figs,
                    data,
                    band: resolved.band,
                    values: &resolved.values,
                };
                for check in &group.checks {
                    let out = check.evaluate(&ctx, &file.path);
                    assert!(out.worst_f.is_none_or(f64::is_finite));
                    assert!(!out.shown.contains("NaN"), "{}", out.shown);
                }
                for d in &file.drift {
                    let now = d.measure(&ctx);
                    assert!(now.is_none_or(f64::is_finite));
                    let out = d.compare(Some(1.0), now);
                    assert!(out.change.is_none_or(f64::is_finite));
                }
            }
        }
    }
}

/// The load_rules target.
pub fn rules(data: &[u8]) {
    let text = String::from_utf8_lossy(data);
    if let Ok(e) = expr::parse(&text) {
        assert!(e.height() <= expr::MAX_DEPTH);
        let printed = expr::print(&e);
        match expr::parse(&printed) {
            Ok(back) => assert!(
                back.same(&e),
                "{text:?} printed as {printed:?} parses differently"
            ),
            Err(err) => panic!("{text:?} printed as {printed:?} does not parse: {err:?}"),
        }
    }
    if let Ok((lo, hi)) = expr::parse_band(&text) {
        assert!(lo <= hi && lo.is_finite() && hi.is_finite());
    }

    let path = scratch("yaml");
    if std::fs::write(&path, data).is_err() {
        return;
    }
    let loaded = rules::load(std::slice::from_ref(&path));
    let sidecar = rules::load_sidecar(&path);
    let _ = std::fs::remove_file(&path);
    match loaded {
        Ok(set) => {
            let _ = set.check_count();
            evaluate(&set);
        }
        Err(e) => {
            assert!(!e.problems.is_empty());
            let _ = e.to_string();
        }
    }
    if let Err(e) = sidecar {
        let _ = e.to_string();
    }
}
