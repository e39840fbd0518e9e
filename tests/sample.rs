//! The sample library is honest and reproducible: re-running its generator
//! (`examples/sample_library/gen.rs`, shared with `cargo run --example
//! make-sample-library`) gives the committed files byte for byte, and the physics
//! the generator stands on agrees with its published sources.

use std::collections::BTreeSet;
use std::path::{Path, PathBuf};

#[path = "../examples/sample_library/gen.rs"]
mod gen;

use lcgate::model::PiModel;
use lcgate::network::C64;

fn repo() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// Files under `root`, relative, sorted; files written by lcgate itself (the
/// recorded baseline, caches) and notes for people are left out.
fn files_under(root: &Path) -> BTreeSet<String> {
    let mut out = BTreeSet::new();
    for e in walkdir::WalkDir::new(root).sort_by_file_name() {
        let e = e.expect("walk");
        if !e.file_type().is_file() {
            continue;
        }
        let rel = e
            .path()
            .strip_prefix(root)
            .expect("under root")
            .to_string_lossy()
            .replace('\\', "/");
        if rel == "baseline.json" || rel.starts_with(".lcgate-cache") || rel.ends_with(".md") {
            continue;
        }
        out.insert(rel);
    }
    out
}

#[test]
fn generator_reproduces_the_committed_library() {
    let tmp = tempfile::tempdir().expect("temp dir");
    gen::generate(tmp.path(), gen::Variant::Current).expect("generate");
    let committed = repo().join("sample-library");
    let want = files_under(&committed);
    let got = files_under(tmp.path());
    assert_eq!(
        want, got,
        "the committed sample library and the generator's output list different files; \
         re-run: cargo run --release --example make-sample-library -- sample-library"
    );
    assert!(
        want.len() >= 40,
        "fewer than 40 files in the sample library"
    );
    for rel in &want {
        let a = std::fs::read(committed.join(rel)).expect("read committed");
        let b = std::fs::read(tmp.path().join(rel)).expect("read generated");
        assert!(
            a == b,
            "{rel}: the committed file differs from the generator's output; \
             re-run: cargo run --release --example make-sample-library -- sample-library"
        );
    }
}

#[test]
fn baseline_variant_differs_only_in_the_drifted_part() {
    let a = tempfile::tempdir().expect("temp dir");
    let b = tempfile::tempdir().expect("temp dir");
    gen::generate(a.path(), gen::Variant::Current).expect("generate");
    gen::generate(b.path(), gen::Variant::Baseline).expect("generate");
    let mut differing = Vec::new();
    for rel in files_under(a.path()) {
        let x = std::fs::read(a.path().join(&rel)).expect("read");
        let y = std::fs::read(b.path().join(&rel)).expect("read");
        if x != y {
            differing.push(rel);
        }
    }
    assert_eq!(
        differing,
        vec!["mmwave/inductors/L120p_w5_n1.s2p".to_string()]
    );
}

/// Source: S. S. Mohan et al., IEEE JSSC 34(10), 1999, modified Wheeler with the
/// square coefficients K1 = 2.34, K2 = 2.75; the check values are the reference
/// notes' evaluation of the same expression (methods.md §6.3 table), which the
/// paper states is accurate to 2–3% against measurement.
#[test]
fn modified_wheeler_matches_the_reference_table() {
    let cases = [
        // n, w, s, d_out (µm), L (nH)
        (3.0, 10.0, 2.0, 200.0, 2.8103),
        (2.0, 10.0, 2.0, 100.0, 0.5167),
        (4.5, 15.0, 1.5, 300.0, 7.1964),
        (5.0, 10.0, 3.0, 250.0, 7.2476),
        (1.0, 10.0, 2.0, 100.0, 0.2027),
    ];
    for (n, w, s, d, l_nh) in cases {
        let sp = gen::Spiral {
            shape: gen::Shape::Square,
            n,
            w: w * 1e-6,
            s: s * 1e-6,
            d_out: d * 1e-6,
        };
        let l = sp.wheeler() * 1e9;
        assert!(
            (l - l_nh).abs() < 5e-4,
            "n {n} w {w} s {s} d {d}: {l} nH vs {l_nh} nH"
        );
    }
}

/// Source: handbook resistivity of copper, 1.68e-8 Ω·m, and δ = √(ρ/(π f μ0)):
/// 2.063 µm at 1 GHz and 0.6523 µm at 10 GHz (methods.md §6.1, checked there against
/// the textbook value of about 8.5 mm at 60 Hz). Yue–Wong's one-face skin ratio for a
/// 3 µm copper strip: 1.897 at 1 GHz and 4.646 at 10 GHz (methods.md §3.3).
#[test]
fn skin_effect_matches_the_handbook() {
    let rho = 1.68e-8;
    assert!((gen::skin_depth(rho, 1e9) * 1e6 - 2.063).abs() < 5e-4);
    assert!((gen::skin_depth(rho, 10e9) * 1e6 - 0.6523).abs() < 5e-5);
    assert!((gen::skin_depth(rho, 60.0) * 1e3 - 8.42).abs() < 0.01);
    assert!((gen::skin_ratio(rho, 3e-6, 1e9) - 1.897).abs() < 1e-3);
    assert!((gen::skin_ratio(rho, 3e-6, 10e9) - 4.646).abs() < 1e-3);
}

/// The centre-tapped coil's nodal model, checked against circuit theory (common
/// practice, no source): with the tap grounded and no parasitics, the drive between
/// the ends sees the two coupled halves in series, Z = 2(R_h + jωL_h(1 + k)).
#[test]
fn centre_tap_model_is_two_coupled_halves() {
    let pi = PiModel {
        ls: 3e-9,
        rdc: 2.0,
        rac: 0.0,
        cs: 0.0,
        cox1: 0.0,
        csi1: 0.0,
        rsi1: f64::INFINITY,
        cox2: 0.0,
        csi2: 0.0,
        rsi2: f64::INFINITY,
    };
    let k = 0.5;
    let f = 2e9;
    let y = gen::centre_tap_y(&pi, k, f, 1.0);
    let (a, b, c, d) = (y[0], y[1], y[3], y[4]);
    let z = (a + b + c + d) / (a * d - b * c);
    let w = 2.0 * std::f64::consts::PI * f;
    let l_h = pi.ls / (2.0 * (1.0 + k));
    let want = C64::new(2.0 * 1.0, 2.0 * w * l_h * (1.0 + k));
    assert!((z - want).norm() < 1e-9 * want.norm(), "{z} vs {want}");
    // and L_diff equals the π-model's L_s by construction
    assert!((z.im / w - pi.ls).abs() < 1e-18);
}

/// Frequencies are written exactly from the 1 kHz grid (no binary-float tails).
#[test]
fn frequencies_are_written_exactly() {
    assert_eq!(gen::freq_text(2_450_000_000.0, gen::Unit::GHz), "2.45");
    assert_eq!(gen::freq_text(100_000_000.0, gen::Unit::GHz), "0.1");
    assert_eq!(
        gen::freq_text(19_924_618_000.0, gen::Unit::MHz),
        "19924.618"
    );
    assert_eq!(gen::freq_text(5_000_000_000.0, gen::Unit::KHz), "5000000");
    assert_eq!(gen::freq_text(123_000.0, gen::Unit::Hz), "123000");
}

/// The scenario's rules files load and type-check (what `lcgate validate --rules
/// rules` does), and every rule group selects at least one part of the library.
#[test]
fn scenario_rules_load_and_select_parts() {
    let set = lcgate::rules::load(&[repo().join("rules")]).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(set.files.len(), 4, "one rules file per block of the chip");
    let lib = repo().join("sample-library");
    let parts: Vec<String> = files_under(&lib)
        .into_iter()
        .filter(|p| !p.ends_with(".yaml"))
        .collect();
    for rf in &set.files {
        for (gi, g) in rf.groups.iter().enumerate() {
            let n = parts
                .iter()
                .filter(|p| {
                    set.groups_for(p)
                        .iter()
                        .any(|(f, h)| std::ptr::eq(*f, rf) && std::ptr::eq(*h, g))
                })
                .count();
            assert!(n > 0, "{}: group {} selects no part", rf.path, gi + 1);
        }
    }
    // the trial coil is matched by no group (reported unchecked)
    assert!(set.groups_for("rf/scratch/L1p6n_trial_w7.s2p").is_empty());
}
