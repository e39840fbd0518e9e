//! Rule evaluation over a part's figures, one part judged end to end and a whole
//! 200-part run, and report writing (JSON, JUnit XML, Markdown, HTML, terminal) of a
//! 200-part run with a baseline.

use criterion::{criterion_group, criterion_main, Criterion, Throughput};
use lcgate::network;
use lcgate::pipeline::{self, CacheChoice, NoProgress, RunOptions};
use lcgate::rules::{self, EvalContext};
use lcgate::{figures, library, report, touchstone};
use std::hint::black_box;
use std::path::{Path, PathBuf};

mod common;

/// The RF front-end rules of `rules/` over one 2.4 GHz coil: every check of every
/// group that selects it, as `check` evaluates them.
fn rule_evaluation(c: &mut Criterion) {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("rules/rf-frontend.yaml");
    let set = rules::load(std::slice::from_ref(&path)).expect("the shipped rules load");
    let rel = "rf/inductors/lb/L2p0n_w6_n3.s2p";
    let freq = common::log_grid(300, 100e6, 40e9);
    let net = common::coil_network(&common::coil(), &freq);
    let data = figures::data_checks(&net);
    let mut prepared = Vec::new();
    for (file, group) in set.groups_for(rel) {
        let resolved = group
            .resolve(library::file_name(rel), None)
            .expect("values resolve");
        let view = group
            .view
            .unwrap_or_else(|| pipeline::default_view(net.ports));
        let v = network::view(&net, view, &group.ports).expect("view");
        let figs = figures::view_figures(&v, &net.freq, group.kind);
        prepared.push((file.path.clone(), group, resolved, figs));
    }
    let checks: usize = prepared.iter().map(|p| p.1.checks.len()).sum();
    assert!(checks > 0, "the bench part is selected by the rules");

    let mut g = c.benchmark_group("rules");
    g.throughput(Throughput::Elements(checks as u64));
    g.bench_function("evaluate_rf_frontend", |b| {
        b.iter(|| {
            let mut out = Vec::with_capacity(checks);
            for (label, group, resolved, figs) in &prepared {
                let ctx = EvalContext {
                    figures: figs,
                    data: &data,
                    band: resolved.band,
                    values: &resolved.values,
                };
                for check in &group.checks {
                    out.push(check.evaluate(black_box(&ctx), label));
                }
            }
            out
        })
    });
    g.bench_function("load_all_shipped", |b| {
        let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("rules");
        b.iter(|| rules::load(black_box(std::slice::from_ref(&dir))).expect("loads"))
    });
    g.finish();
}

const RULES: &str = r#"suite: bench run
parts:
  - select: ["**/*.s2p"]
    kind: inductor
    view: single_ended
    band: 2GHz .. 3GHz
    checks:
      srf-margin: srf >= 2 * band.hi
      q-in-band: q(band) >= 8
      l-flat: l(band.mid) within 10% of l_low
      fit-quality:
        expect: fit_error <= 5%
        severity: warning
drift:
  l(band.mid): 1%
  q_peak: 3%
"#;

fn write_library(root: &Path, parts: usize, seed: u64, changed_every: usize) {
    let mut rng = common::Lcg(seed);
    let freq = common::log_grid(300, 100e6, 40e9);
    for i in 0..parts {
        let mut m = common::spread_coil(&mut rng);
        if changed_every > 0 && i % changed_every == 0 {
            // a drifted part: 3 % more inductance than at the baseline
            m.ls *= 1.03;
        }
        let dir = root.join(format!("block{:02}", i / 50));
        std::fs::create_dir_all(&dir).expect("temp dir");
        let net = common::coil_network(&m, &freq);
        touchstone::write_path(
            &dir.join(format!("L{i:04}.s2p")),
            &net,
            &common::write_opts(),
        )
        .expect("write");
    }
}

/// A 200-part run against a baseline in which every tenth part has drifted, built
/// through the public pipeline (record, then check) in a temporary folder.
fn run_report(tmp: &Path) -> lcgate::verdict::RunReport {
    let lib = tmp.join("lib");
    let rules_path: PathBuf = tmp.join("rules.yaml");
    std::fs::write(&rules_path, RULES).expect("rules");
    write_library(&lib, 200, 0xbe7c, 0);
    let mut opts = RunOptions {
        library: lib.clone(),
        rules: vec![rules_path],
        cache: CacheChoice::Off,
        ..RunOptions::default()
    };
    let baseline = tmp.join("baseline.json");
    pipeline::record(&opts, &baseline, &NoProgress).expect("record");
    write_library(&lib, 200, 0xbe7c, 10);
    opts.baseline = Some(baseline);
    pipeline::run(&opts).expect("run")
}

fn reports(c: &mut Criterion) {
    let tmp = tempfile::tempdir().expect("temp dir");
    let r = run_report(tmp.path());
    let mut g = c.benchmark_group("report");
    type Render = fn(&lcgate::verdict::RunReport) -> String;
    let formats: [(&str, Render); 5] = [
        ("json", report::json),
        ("junit", report::junit),
        ("markdown", report::markdown),
        ("html", report::html),
        ("terminal", |r| report::terminal(r, false)),
    ];
    for (name, render) in formats {
        g.throughput(Throughput::Bytes(render(&r).len() as u64));
        g.bench_function(format!("{name}_200_parts"), |b| {
            b.iter(|| render(black_box(&r)))
        });
    }
    let out = tmp.path().join("out");
    let total: usize = [
        report::json(&r),
        report::junit(&r),
        report::markdown(&r),
        report::html(&r),
    ]
    .iter()
    .map(String::len)
    .sum();
    g.throughput(Throughput::Bytes(total as u64));
    g.bench_function("write_all_200_parts", |b| {
        b.iter(|| report::write_all(&out, black_box(&r)).expect("writes"))
    });
    g.finish();
}

/// One part read, viewed, fitted and judged (`pipeline::judge_part`), and a whole
/// uncached 200-part run (walk, judge in parallel, baseline comparison).
fn judging(c: &mut Criterion) {
    let tmp = tempfile::tempdir().expect("temp dir");
    let lib = tmp.path().join("lib");
    let rules_path = tmp.path().join("rules.yaml");
    std::fs::write(&rules_path, RULES).expect("rules");
    write_library(&lib, 200, 0x7a11, 0);
    let set = rules::load(std::slice::from_ref(&rules_path)).expect("rules load");
    let walk = library::walk(&lib, &library::WalkOptions::default()).expect("walk");
    let part = walk.parts.first().expect("a part").clone();
    let mut g = c.benchmark_group("pipeline");
    g.bench_function("judge_part_2port", |b| {
        b.iter(|| pipeline::judge_part(black_box(&part), &set, false))
    });
    let opts = RunOptions {
        library: lib,
        rules: vec![rules_path],
        cache: CacheChoice::Off,
        ..RunOptions::default()
    };
    g.sample_size(10);
    g.throughput(Throughput::Elements(walk.parts.len() as u64));
    g.bench_function("check_200_parts_uncached", |b| {
        b.iter(|| pipeline::run(black_box(&opts)).expect("run"))
    });
    g.finish();
}

criterion_group! {
    name = benches;
    config = common::quick();
    targets = rule_evaluation, judging, reports
}
criterion_main!(benches);
