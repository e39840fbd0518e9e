//! Rules files end to end: loading, error locations, evaluation against hand-built
//! figures, DESIGN §7's null rules, drift, sidecars and hostile input.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use lcgate::figures::{DataChecks, Kind, ViewFigures};
use lcgate::model::{LossStory, Mechanism, PiModel};
use lcgate::network::ViewName;
use lcgate::rules::{self, Band, EvalContext};
use lcgate::verdict::{CheckStatus, Severity};

fn data(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/data/rules")
        .join(name)
}

/// An inductor's figures on 1..10 GHz in 1 GHz steps, invented but shaped like a
/// real coil: l rising slowly towards resonance, q peaking near 6 GHz.
fn coil() -> ViewFigures {
    let freq: Vec<f64> = (1..=10).map(|k| k as f64 * 1e9).collect();
    let l_nh = [1.20, 1.20, 1.21, 1.22, 1.23, 1.25, 1.28, 1.33, 1.42, 1.60];
    let q = [5.0, 8.0, 10.0, 11.5, 12.5, 13.0, 12.0, 10.0, 7.0, 3.0];
    let sg = [1.0, 1.01, 1.02, 1.03, 1.04, 1.10, 1.12, 1.12, 1.10, 1.05];
    let sf = [0.99, 0.98, 0.97, 0.95, 0.92, 0.90, 0.86, 0.80, 0.75, 0.70];
    let rf = [1.0, 0.99, 0.98, 0.97, 0.95, 0.93, 0.88, 0.70, 0.40, 0.10];
    let mut curves = BTreeMap::new();
    curves.insert(
        "l".to_string(),
        l_nh.iter().map(|x| Some(x * 1e-9)).collect(),
    );
    curves.insert("q".to_string(), q.iter().map(|x| Some(*x)).collect());
    curves.insert(
        "shield_gain".to_string(),
        sg.iter().map(|x| Some(*x)).collect(),
    );
    curves.insert(
        "substrate_factor".to_string(),
        sf.iter().map(|x| Some(*x)).collect(),
    );
    curves.insert(
        "resonance_factor".to_string(),
        rf.iter().map(|x| Some(*x)).collect(),
    );
    let mut scalars = BTreeMap::new();
    scalars.insert("srf".to_string(), Some(9.123e9));
    scalars.insert("q_peak".to_string(), Some(13.1));
    scalars.insert("f_q_peak".to_string(), Some(5.9e9));
    scalars.insert("f_q_half".to_string(), Some(9.4e9));
    scalars.insert("l_low".to_string(), Some(1.2e-9));
    let story = LossStory {
        model: PiModel {
            ls: 1.2e-9,
            rdc: 1.0,
            rac: 0.5,
            cs: 10e-15,
            cox1: 50e-15,
            csi1: 20e-15,
            rsi1: 500.0,
            cox2: 50e-15,
            csi2: 20e-15,
            rsi2: 500.0,
        },
        fit_error: 0.01,
        mechanism: vec![],
        q_drop_cause: Some(Mechanism::Resonance),
        loss_bands: vec![],
    };
    ViewFigures {
        view: ViewName::Differential,
        kind: Kind::Inductor,
        freq,
        scalars,
        curves,
        loss: Some(Ok(story)),
    }
}

fn checks() -> DataChecks {
    DataChecks {
        passivity_margin: Some(0.01),
        reciprocity_error: Some(1e-6),
        points: 10,
        f_min: 1e9,
        f_max: 10e9,
        ports: 2,
    }
}

fn front_end() -> rules::RuleSet {
    rules::load(&[data("front-end.yaml")]).unwrap_or_else(|e| panic!("{e}"))
}

#[test]
fn the_demo_file_loads_with_every_part() {
    let set = front_end();
    assert_eq!(set.files.len(), 1);
    let f = &set.files[0];
    assert_eq!(f.suite, "Kestrel 5 GHz front-end coils");
    let bytes = std::fs::read(data("front-end.yaml")).unwrap();
    assert_eq!(f.hash, blake3::hash(&bytes).to_hex().to_string());
    assert_eq!(f.groups.len(), 2);
    let g = &f.groups[0];
    assert_eq!(g.kind, Some(Kind::Inductor));
    assert_eq!(g.view, Some(ViewName::Differential));
    assert_eq!(
        g.band,
        Some(Band {
            lo: 4.9e9,
            hi: 5.9e9
        })
    );
    let ids: Vec<_> = g.checks.iter().map(|c| c.id.as_str()).collect();
    assert_eq!(
        ids,
        ["srf-margin", "q-in-band", "l-on-target", "shield-useful"]
    );
    assert_eq!(g.checks[3].severity, Severity::Warning);
    assert!(g.checks[3]
        .hint
        .as_deref()
        .unwrap()
        .contains("ground shield"));
    assert_eq!(f.drift.len(), 4);
    assert_eq!(f.drift[0].quantity, "l(band.mid)");
    assert_eq!(set.groups_for("coils/rf/lna/L1p2n_pgs.s2p").len(), 1);
    assert_eq!(set.groups_for("coils/rf/L1p2n.s2p").len(), 1);
    assert_eq!(set.groups_for("caps/a/b/C250f.s1p").len(), 1);
    assert_eq!(set.groups_for("coils/lo/L1p2n.s2p").len(), 0);
    assert_eq!(set.infos()[0].suite, f.suite);
    let summary = rules::validate(&[data("front-end.yaml")]).unwrap();
    assert!(
        summary.contains("2 groups, 6 checks, 4 drift limits"),
        "{summary}"
    );
}

fn eval_all(figs: &ViewFigures, file_name: &str) -> Vec<lcgate::verdict::CheckOutcome> {
    let set = front_end();
    let g = &set.files[0].groups[0];
    let r = g.resolve(file_name, None).unwrap();
    let d = checks();
    let ctx = EvalContext {
        figures: figs,
        data: &d,
        band: r.band,
        values: &r.values,
    };
    g.checks
        .iter()
        .map(|c| c.evaluate(&ctx, "front-end.yaml"))
        .collect()
}

#[test]
fn checks_evaluate_with_values_put_in() {
    let out = eval_all(&coil(), "L1p2n.s2p");
    // srf 9.123 GHz < 2 × 5.9 GHz
    assert_eq!(out[0].status, CheckStatus::Fail);
    assert_eq!(out[0].shown, "srf 9.12 GHz >= 2 × 5.9 GHz = 11.8 GHz");
    assert_eq!(out[0].rules_file, "front-end.yaml");
    // q over 4.9..5.9 GHz: edge 4.9 GHz interpolates 11.5 + 0.9·(12.5 − 11.5) = 12.4,
    // 5 GHz 12.5, edge 5.9 GHz 12.5 + 0.9·0.5 = 12.95: all ≥ 12, the least at 4.9 GHz
    assert_eq!(out[1].status, CheckStatus::Pass, "{:?}", out[1]);
    assert_eq!(out[1].worst_f, Some(4.9e9));
    assert_eq!(out[1].shown, "q(band) min 12.4 at 4.9 GHz >= 12");
    // l at 5.4 GHz: 1.23 + 0.4·0.02 = 1.238 nH vs 1.2 nH ± 3 % (1.164..1.236): fails
    assert_eq!(out[2].status, CheckStatus::Fail, "{:?}", out[2]);
    assert_eq!(
        out[2].shown,
        "l(band.mid) 1.24 nH within 3% of l_target 1.2 nH"
    );
    // shield_gain over the band reaches 1.04 + 0.9·0.06 = 1.094 at 5.9 GHz; not shielded
    assert_eq!(out[3].status, CheckStatus::Fail);
    assert_eq!(out[3].severity, Severity::Warning);
    assert_eq!(out[3].worst_f, Some(5.9e9));
    assert!(
        out[3]
            .shown
            .starts_with("shield_gain(band) max 1.09 at 5.9 GHz <= 1.05 or shielded no"),
        "{}",
        out[3].shown
    );
    // with the shield flag from the name the warning passes
    let out = eval_all(&coil(), "L1p24n_pgs.s2p");
    assert_eq!(out[3].status, CheckStatus::Pass, "{:?}", out[3]);
    assert_eq!(out[2].status, CheckStatus::Pass, "{:?}", out[2]);
    for o in &out {
        assert!(
            !o.shown.contains("NaN") && !o.shown.contains("inf"),
            "{}",
            o.shown
        );
    }
}
