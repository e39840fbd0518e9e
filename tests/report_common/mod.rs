//! A hand-built run report for the report tests: an invented library of a made-up
//! team ("Saltmarsh RF", process "SM22"). Every status and check outcome appears once
//! or more: a pass, a fail with a band check and a hint, a warning, an undecided, an
//! unreadable file, an unchecked part, a missing part, a new part and drift entries.
//!
//! The plotted curves come from a closed form computed here, not from the crate's
//! figures code, so the report tests do not move when the analysis does: a coil L in
//! series with R, shunted by C and a substrate conductance G, so
//! Y = 1/(R + jωL) + jωC + G = G_t + jB, l = Im Z/ω, q = Im Z/Re Z, and the tank Q
//! (ω·dB/dω − B)/(2·G_t) = ω³L³/(G_t·D²) with D = R² + ω²L² (R, L, C, G constant).
#![allow(dead_code)]

use std::collections::BTreeMap;

use lcgate::figures::{Kind, ViewFigures};
use lcgate::model::{LossBand, LossStory, Mechanism, PiModel};
use lcgate::network::ViewName;
use lcgate::report::plot::plot_data;
use lcgate::verdict::*;

pub struct Coil {
    pub l: f64,
    pub r: f64,
    pub c: f64,
    pub g: f64,
}

pub fn log_grid(lo: f64, hi: f64, n: usize) -> Vec<f64> {
    (0..n)
        .map(|i| lo * (hi / lo).powf(i as f64 / (n - 1) as f64))
        .collect()
}

/// Figures of the closed-form coil on `freq`, as the figures module would hand them.
pub fn coil_figures(k: &Coil, freq: &[f64], bands: Vec<LossBand>) -> ViewFigures {
    let mut l = Vec::new();
    let mut q = Vec::new();
    let mut qt = Vec::new();
    let mut b_prev: Option<(f64, f64)> = None;
    let mut srf = None;
    for &f in freq {
        let w = 2.0 * std::f64::consts::PI * f;
        let d = k.r * k.r + w * w * k.l * k.l;
        let gt = k.r / d + k.g;
        let b = -w * k.l / d + w * k.c;
        let mag = gt * gt + b * b;
        let (re_z, im_z) = (gt / mag, -b / mag);
        l.push(Some(im_z / w));
        q.push(Some(im_z / re_z));
        qt.push(if b < 0.0 {
            Some(w.powi(3) * k.l.powi(3) / (gt * d * d))
        } else {
            None
        });
        if let Some((fp, bp)) = b_prev {
            if srf.is_none() && bp < 0.0 && b >= 0.0 {
                srf = Some(fp + (f - fp) * (-bp) / (b - bp));
            }
        }
        b_prev = Some((f, b));
    }
    let (ipk, qpk) = q
        .iter()
        .enumerate()
        .filter_map(|(i, v)| v.map(|v| (i, v)))
        .fold((0, f64::MIN), |a, b| if b.1 > a.1 { b } else { a });
    let f_half = (ipk..freq.len())
        .find(|&i| q[i].unwrap_or(0.0) <= qpk / 2.0)
        .map(|i| freq[i]);
    let mut scalars = BTreeMap::new();
    scalars.insert("srf".to_string(), srf);
    scalars.insert("q_peak".to_string(), Some(qpk));
    scalars.insert("f_q_peak".to_string(), Some(freq[ipk]));
    scalars.insert("f_q_half".to_string(), f_half);
    scalars.insert("l_low".to_string(), l[0]);
    let mut curves = BTreeMap::new();
    curves.insert("l".to_string(), l);
    curves.insert("q".to_string(), q);
    curves.insert("q_tank".to_string(), qt);
    let story = LossStory {
        model: PiModel {
            ls: k.l,
            rdc: k.r,
            rac: 0.0,
            cs: 0.0,
            cox1: k.c,
            csi1: 0.0,
            rsi1: 1.0 / k.g,
            cox2: k.c,
            csi2: 0.0,
            rsi2: 1.0 / k.g,
        },
        fit_error: 0.01,
        mechanism: vec![None; freq.len()],
        q_drop_cause: Some(Mechanism::Resonance),
        loss_bands: bands,
    };
    ViewFigures {
        view: ViewName::Differential,
        kind: Kind::Inductor,
        freq: freq.to_vec(),
        scalars,
        curves,
        loss: Some(Ok(story)),
    }
}

fn scalars_of(f: &ViewFigures) -> BTreeMap<String, Option<f64>> {
    let mut m = f.scalars.clone();
    m.insert("points".into(), Some(f.freq.len() as f64));
    m.insert("ports".into(), Some(2.0));
    m.insert("passivity_margin".into(), Some(0.012));
    m
}

fn check(
    id: &str,
    file: &str,
    status: CheckStatus,
    severity: Severity,
    expr: &str,
    shown: &str,
) -> CheckOutcome {
    CheckOutcome {
        id: id.into(),
        rules_file: file.into(),
        status,
        severity,
        expr: expr.into(),
        shown: shown.into(),
        worst_f: None,
        hint: None,
        reason: None,
    }
}

pub const RF: &str = "rules/rf-coils.yaml";
pub const MM: &str = "rules/mm-coils.yaml";

fn inductor_part(path: &str, coil: &Coil, freq: &[f64], band: [f64; 2]) -> PartReport {
    let bands = vec![
        LossBand {
            from: freq[0],
            to: 2.0e9,
            mechanism: Mechanism::Conductor,
        },
        LossBand {
            from: 2.0e9,
            to: 6.0e9,
            mechanism: Mechanism::Substrate,
        },
        LossBand {
            from: 6.0e9,
            to: freq[freq.len() - 1],
            mechanism: Mechanism::Resonance,
        },
    ];
    let figs = coil_figures(coil, freq, bands);
    PartReport {
        path: path.into(),
        status: PartStatus::Pass,
        kind: Some(Kind::Inductor),
        view: Some(ViewName::Differential),
        figures: scalars_of(&figs),
        q_drop_cause: Some(Mechanism::Resonance),
        checks: Vec::new(),
        drift: Vec::new(),
        new: false,
        error: None,
        plot: Some(plot_data(&figs, Some(band))),
    }
}

/// The hand-built report; `points` sets the sweep length of the plotted parts.
pub fn sample_report(points: usize) -> RunReport {
    let freq = log_grid(0.1e9, 40e9, points);
    let band = [4.9e9, 5.9e9];

    let mut good = inductor_part(
        "coils/rf/L1p2n_w8_pgs.s2p",
        &Coil {
            l: 1.2e-9,
            r: 2.0,
            c: 60e-15,
            g: 1e-4,
        },
        &freq,
        band,
    );
    good.checks = vec![
        check(
            "srf-margin",
            RF,
            CheckStatus::Pass,
            Severity::Error,
            "srf >= 2 * band.hi",
            "srf 18.8 GHz >= 2 × 5.9 GHz = 11.8 GHz",
        ),
        check(
            "q-in-band",
            RF,
            CheckStatus::Pass,
            Severity::Error,
            "q(band) >= 12",
            "q(band) 14.1 >= 12",
        ),
    ];
    good.drift = vec![DriftOutcome {
        quantity: "l(band.mid)".into(),
        baseline: Some(1.21e-9),
        now: Some(1.215e-9),
        change: Some(0.005 / 1.21),
        limit: "1%".into(),
        status: CheckStatus::Pass,
    }];

    let mut bad = inductor_part(
        "coils/rf/L2p0n_w6.s2p",
        &Coil {
            l: 2.0e-9,
            r: 3.0,
            c: 160e-15,
            g: 3e-4,
        },
        &freq,
        band,
    );
    bad.status = PartStatus::Fail;
    let mut srf = check(
        "srf-margin",
        RF,
        CheckStatus::Fail,
        Severity::Error,
        "srf >= 2 * band.hi",
        "srf 8.9 GHz >= 2 × 5.9 GHz = 11.8 GHz",
    );
    srf.hint = Some("fewer turns or a narrower trace moves the self-resonance up".into());
    let mut qb = check(
        "q-in-band",
        RF,
        CheckStatus::Fail,
        Severity::Error,
        "q(band) >= 12",
        "q(band) 9.4 >= 12",
    );
    qb.worst_f = Some(5.9e9);
    qb.hint = Some("Q falls through the band: check the loss strip under the Q plot".into());
    let mut shield = check(
        "shield-useful",
        RF,
        CheckStatus::Fail,
        Severity::Warning,
        "shield_gain(band) <= 1.05 or shielded",
        "shield_gain(band) 1.31 <= 1.05 or shielded false",
    );
    shield.worst_f = Some(4.9e9);
    shield.hint = Some("substrate loss dominates here; a ground shield would raise Q".into());
    bad.checks = vec![srf, qb, shield];
    bad.drift = vec![
        DriftOutcome {
            quantity: "q_peak".into(),
            baseline: Some(11.0),
            now: Some(10.1),
            change: Some(-0.9 / 11.0),
            limit: "3%".into(),
            status: CheckStatus::Fail,
        },
        DriftOutcome {
            quantity: "srf".into(),
            baseline: Some(8.95e9),
            now: Some(8.9e9),
            change: Some(-0.05 / 8.95),
            limit: "2%".into(),
            status: CheckStatus::Pass,
        },
    ];

    let mut mm = inductor_part(
        "coils/mm/L150p_w4.s2p",
        &Coil {
            l: 150e-12,
            r: 1.0,
            c: 12e-15,
            g: 2e-4,
        },
        &freq,
        [24e9, 30e9],
    );
    mm.status = PartStatus::Fail;
    mm.figures.insert("srf".into(), None);
    if let Some(p) = mm.plot.as_mut() {
        p.marks.remove("srf");
    }
    let mut und = check(
        "srf-margin",
        MM,
        CheckStatus::Undecided,
        Severity::Error,
        "srf >= 2 * band.hi",
        "srf n/a >= 2 × 30 GHz = 60 GHz",
    );
    und.reason = Some("srf is above the sweep (f_max 40 GHz), which is below 60 GHz".into());
    und.hint = Some("extend the sweep to 60 GHz".into());
    mm.checks = vec![
        und,
        check(
            "q-in-band",
            MM,
            CheckStatus::Pass,
            Severity::Error,
            "q(band) >= 15",
            "q(band) 21.7 >= 15",
        ),
    ];
    mm.new = true;

    let broken = PartReport {
        path: "coils/rf/L1p0n_draft.s2p".into(),
        status: PartStatus::Unreadable,
        kind: None,
        view: None,
        figures: BTreeMap::new(),
        q_drop_cause: None,
        checks: Vec::new(),
        drift: Vec::new(),
        new: false,
        error: Some("coils/rf/L1p0n_draft.s2p:14:23: expected a number, found `1.2.3`".into()),
        plot: None,
    };

    let mut test_struct = inductor_part(
        "misc/open_pad.s2p",
        &Coil {
            l: 0.3e-9,
            r: 0.5,
            c: 30e-15,
            g: 1e-4,
        },
        &freq,
        band,
    );
    test_struct.status = PartStatus::Unchecked;
    test_struct.plot = None;

    let missing = PartReport {
        path: "coils/rf/L0p8n_w10.s2p".into(),
        status: PartStatus::Missing,
        kind: Some(Kind::Inductor),
        view: Some(ViewName::Differential),
        figures: BTreeMap::new(),
        q_drop_cause: None,
        checks: Vec::new(),
        drift: Vec::new(),
        new: false,
        error: None,
        plot: None,
    };

    let mut parts = vec![good, bad, mm, broken, test_struct, missing];
    parts.sort_by(|a, b| a.path.cmp(&b.path));
    let summary = Summary {
        parts: parts.len(),
        pass: 1,
        fail: 2,
        unreadable: 1,
        unchecked: 1,
        missing: 1,
        new: 1,
        failed_checks: 3,
        warnings: 1,
    };
    RunReport {
        format: "lcgate-report/1".into(),
        tool_version: "0.1.0".into(),
        library: "coil-lib".into(),
        rules: vec![
            RulesFileInfo {
                path: MM.into(),
                hash: "5b1f0e4c2d9a8b7c6d5e4f3a2b1c0d9e8f7a6b5c4d3e2f1a0b9c8d7e6f5a4b3c".into(),
                suite: "SM22 mm-wave coils".into(),
            },
            RulesFileInfo {
                path: RF.into(),
                hash: "0a1b2c3d4e5f60718293a4b5c6d7e8f90a1b2c3d4e5f60718293a4b5c6d7e8f9".into(),
                suite: "SM22 5 GHz front-end coils".into(),
            },
        ],
        baseline: Some("baselines/nightly.json".into()),
        rules_changed: Vec::new(),
        shard: None,
        strict: false,
        summary,
        passed: false,
        parts,
        run: RunInfo {
            started: "2026-03-04T05:06:07Z".into(),
            seconds: 1.25,
            computed: 5,
            cached: 0,
        },
    }
}
