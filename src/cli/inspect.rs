//! `lcgate inspect FILE [--view NAME] [--at FREQ[,FREQ...]] [--sweep] [--json]`:
//! every figure of every view that applies to one Touchstone file, as a readable
//! table or as the `lcgate-figures/1` JSON document (DESIGN §8).
//!
//! The document: `{"format": "lcgate-figures/1", file, ports, points, f_min, f_max,
//! reference: [Ω per port], views: {NAME: {kind, <scalar figures>, q_drop_cause,
//! model: {ls, rdc, …} | null, fit_error, fit_note, loss_bands: [{from, to,
//! mechanism}], at: [{f, <every curve>, mechanism}]}}, view_errors: {NAME: message},
//! data_checks: {…}}`. SI base units; null where a figure is undefined. `at` holds
//! the values interpolated (linearly in f) at the `--at` frequencies, or every sweep
//! point with `--sweep`, or else a few representative frequencies (the 1-2-5 series
//! inside the sweep).

use std::collections::BTreeMap;
use std::path::PathBuf;

use rayon::prelude::*;
use serde_json::{json, Map, Value};

use crate::figures::{self, DataChecks, Kind, ViewFigures, MODEL_PARAM_NAMES};
use crate::network::{self, Network, PortMap, ViewName};
use crate::touchstone::Touchstone;
use crate::units::{eng, parse_frequency, sig3};

use super::{EXIT_ERROR, EXIT_PASS};

/// Arguments of `lcgate inspect`.
#[derive(Debug, Clone, clap::Args)]
pub struct InspectArgs {
    /// the Touchstone file (.s1p … .sNp, .ts)
    #[arg(value_name = "FILE")]
    pub file: PathBuf,
    /// only this view (one_port, single_ended, differential, centre_tapped, transformer)
    #[arg(long, value_name = "NAME")]
    pub view: Option<String>,
    /// report the curves at exactly these frequencies (e.g. 2.4GHz,5GHz)
    #[arg(long, value_name = "FREQ[,FREQ...]", value_delimiter = ',')]
    pub at: Vec<String>,
    /// report the curves at every sweep point
    #[arg(long, conflicts_with = "at")]
    pub sweep: bool,
    /// print the lcgate-figures/1 JSON document instead of the table
    #[arg(long)]
    pub json: bool,
}

/// Where the curves are reported.
#[derive(Debug, Clone, PartialEq)]
pub enum At {
    /// a few round frequencies inside the sweep
    Representative,
    /// exactly these (Hz), each inside the sweep
    List(Vec<f64>),
    /// every sweep point
    Sweep,
}

/// Every view of one file with its figures, and the data checks.
#[derive(Debug, Clone)]
pub struct Inspection {
    /// the file as named by the user
    pub file: String,
    /// the data
    pub network: Network,
    /// views in report order: figures, or why the view could not be made
    pub views: Vec<(ViewName, Result<ViewFigures, String>)>,
    /// data checks
    pub checks: DataChecks,
}

/// Figures of `views` (all that apply when None) of a network.
pub fn inspect(file: &str, net: Network, only: Option<ViewName>) -> Inspection {
    let names = match only {
        Some(v) => vec![v],
        None => network::views_for(net.ports),
    };
    // the views and the data checks depend only on the network: computed side by side
    // (a 60,000-point 4-port spends most of its time here), collected in view order
    let (views, checks) = rayon::join(
        || {
            names
                .into_par_iter()
                .map(|name| {
                    let r = network::view(&net, name, &PortMap::default())
                        .map(|v| figures::view_figures(&v, &net.freq, None))
                        .map_err(|e| e.to_string());
                    (name, r)
                })
                .collect()
        },
        || figures::data_checks(&net),
    );
    Inspection {
        file: file.to_string(),
        network: net,
        views,
        checks,
    }
}

/// Parse the `--at` list; every frequency must lie inside the sweep [f_min, f_max].
pub fn parse_at(texts: &[String], f_min: f64, f_max: f64) -> Result<Vec<f64>, String> {
    let mut out = Vec::new();
    for t in texts.iter().map(|t| t.trim()).filter(|t| !t.is_empty()) {
        let f = parse_frequency(t).map_err(|e| format!("--at: {e}"))?.0;
        if f < f_min || f > f_max {
            return Err(format!(
                "--at {t}: {} is outside the sweep ({} … {}); figures are not extrapolated",
                eng(f, "Hz"),
                eng(f_min, "Hz"),
                eng(f_max, "Hz")
            ));
        }
        out.push(f);
    }
    if out.is_empty() {
        return Err("--at: no frequency given".to_string());
    }
    Ok(out)
}

/// The 1-2-5 series of round frequencies inside [lo, hi]; thinned to decades when
/// there are more than ten; the sweep ends when fewer than three.
pub fn representative(lo: f64, hi: f64) -> Vec<f64> {
    if !(lo.is_finite() && hi.is_finite()) || hi <= 0.0 {
        return vec![];
    }
    if lo >= hi {
        return vec![lo];
    }
    let mut out = Vec::new();
    let start = lo.max(1.0).log10().floor() as i32;
    let end = hi.log10().ceil() as i32;
    for e in start..=end {
        for m in [1.0, 2.0, 5.0] {
            let f = m * 10f64.powi(e);
            if f >= lo * (1.0 - 1e-12) && f <= hi * (1.0 + 1e-12) {
                out.push(f.clamp(lo, hi));
            }
        }
    }
    if out.len() > 10 {
        out.retain(|f| {
            let m = f / 10f64.powf(f.log10().floor());
            (m - 1.0).abs() < 1e-9
        });
    }
    if out.len() < 3 {
        out = vec![lo, (lo * hi).sqrt(), hi];
        if lo <= 0.0 {
            out[1] = (lo + hi) / 2.0;
        }
    }
    out
}

fn frequencies(at: &At, net: &Network) -> Vec<f64> {
    match at {
        At::List(v) => v.clone(),
        At::Sweep => net.freq.clone(),
        At::Representative => match (net.freq.first(), net.freq.last()) {
            (Some(&lo), Some(&hi)) => representative(lo, hi),
            _ => vec![],
        },
    }
}

fn num(v: Option<f64>) -> Value {
    v.filter(|x| x.is_finite()).map_or(Value::Null, Value::from)
}

/// The `lcgate-figures/1` document.
pub fn to_json(ins: &Inspection, at: &At) -> Value {
    let net = &ins.network;
    let fs = frequencies(at, net);
    let mut views = Map::new();
    let mut errors = Map::new();
    for (name, r) in &ins.views {
        match r {
            Ok(figs) => {
                views.insert(name.as_str().to_string(), view_json(figs, &fs));
            }
            Err(e) => {
                errors.insert(name.as_str().to_string(), Value::from(e.clone()));
            }
        }
    }
    json!({
        "format": "lcgate-figures/1",
        "file": ins.file,
        "ports": net.ports,
        "points": net.points(),
        "f_min": num(net.freq.first().copied()),
        "f_max": num(net.freq.last().copied()),
        "reference": net.z0,
        "views": views,
        "view_errors": errors,
        "data_checks": serde_json::to_value(&ins.checks).unwrap_or(Value::Null),
    })
}

fn view_json(figs: &ViewFigures, fs: &[f64]) -> Value {
    let mut m = Map::new();
    m.insert("kind".into(), Value::from(figs.kind.as_str()));
    for (k, v) in &figs.scalars {
        if !MODEL_PARAM_NAMES.contains(&k.as_str()) && k != "fit_error" {
            m.insert(k.clone(), num(*v));
        }
    }
    let mut model = Value::Null;
    let mut fit_error = Value::Null;
    let mut fit_note = Value::Null;
    let mut bands = Value::Array(vec![]);
    let mut cause = Value::Null;
    match &figs.loss {
        Some(Ok(story)) => {
            model = serde_json::to_value(story.model).unwrap_or(Value::Null);
            fit_error = num(Some(story.fit_error));
            bands = serde_json::to_value(&story.loss_bands).unwrap_or(Value::Null);
            cause = story
                .q_drop_cause
                .map_or(Value::Null, |c| Value::from(c.as_str()));
        }
        Some(Err(e)) => fit_note = Value::from(e.clone()),
        None => {}
    }
    if figs.kind == Kind::Inductor {
        m.insert("q_drop_cause".into(), cause);
        m.insert("model".into(), model);
        m.insert("fit_error".into(), fit_error);
        m.insert("fit_note".into(), fit_note);
        m.insert("loss_bands".into(), bands);
    }
    let at: Vec<Value> = fs
        .iter()
        .map(|&f| {
            let mut p = Map::new();
            p.insert("f".into(), Value::from(f));
            for name in figs.curves.keys() {
                p.insert(name.clone(), num(figs.curve_at(name, f)));
            }
            if figs.kind == Kind::Inductor {
                p.insert(
                    "mechanism".into(),
                    figs.mechanism_at(f)
                        .map_or(Value::Null, |m| Value::from(m.as_str())),
                );
            }
            Value::Object(p)
        })
        .collect();
    m.insert("at".into(), Value::Array(at));
    Value::Object(m)
}

fn show(v: Option<f64>, unit: &str) -> String {
    match v {
        // a tiny ratio (a passivity margin, a reciprocity error) reads better in
        // scientific notation than as a row of zeros
        Some(x) if unit.is_empty() && x != 0.0 && x.abs() < 1e-3 => format!("{x:.2e}"),
        Some(x) if unit.is_empty() => sig3(x),
        Some(x) => eng(x, unit),
        None => "—".to_string(),
    }
}

/// Columns of the table per kind: (curve, header, unit).
fn columns(figs: &ViewFigures) -> Vec<(&'static str, &'static str, &'static str)> {
    let mut cols = match figs.kind {
        Kind::Inductor => vec![
            ("l", "L", "H"),
            ("r", "R", "Ω"),
            ("q", "Q", ""),
            ("q_tank", "tank Q", ""),
        ],
        Kind::Capacitor => vec![("c", "C", "F"), ("esr", "ESR", "Ω"), ("q", "Q", "")],
        Kind::Transformer => vec![
            ("l1", "L1", "H"),
            ("l2", "L2", "H"),
            ("m", "M", "H"),
            ("k", "k", ""),
            ("q1", "Q1", ""),
            ("q2", "Q2", ""),
            ("il_min", "IL min dB", ""),
        ],
    };
    for (c, h) in [
        ("substrate_factor", "substrate f."),
        ("resonance_factor", "resonance f."),
        ("shield_gain", "shield gain"),
    ] {
        if figs.curves.contains_key(c) {
            cols.push((c, h, ""));
        }
    }
    cols
}

/// The readable table.
pub fn to_table(ins: &Inspection, at: &At) -> String {
    let net = &ins.network;
    let fs = frequencies(at, net);
    let mut out = String::new();
    let refs: Vec<String> = {
        let mut r: Vec<String> = net.z0.iter().map(|z| eng(*z, "Ω")).collect();
        r.dedup();
        r
    };
    out.push_str(&format!(
        "{}: {} port{}, {} points, {} … {}, reference {}\n",
        ins.file,
        net.ports,
        if net.ports == 1 { "" } else { "s" },
        net.points(),
        show(net.freq.first().copied(), "Hz"),
        show(net.freq.last().copied(), "Hz"),
        refs.join(" / ")
    ));
    for (name, r) in &ins.views {
        out.push('\n');
        let figs = match r {
            Ok(f) => f,
            Err(e) => {
                out.push_str(&format!("view {name}: not available: {e}\n"));
                continue;
            }
        };
        out.push_str(&format!("view {name} ({})\n", figs.kind.as_str()));
        out.push_str(&scalar_lines(figs));
        let cols = columns(figs);
        let mut rows: Vec<Vec<String>> = Vec::new();
        let mut head = vec!["f".to_string()];
        head.extend(cols.iter().map(|c| c.1.to_string()));
        if figs.kind == Kind::Inductor && figs.curves.contains_key("substrate_factor") {
            head.push("mechanism".into());
        }
        rows.push(head);
        for &f in &fs {
            let mut row = vec![eng(f, "Hz")];
            row.extend(cols.iter().map(|c| show(figs.curve_at(c.0, f), c.2)));
            if figs.kind == Kind::Inductor && figs.curves.contains_key("substrate_factor") {
                row.push(
                    figs.mechanism_at(f)
                        .map_or("—".to_string(), |m| m.as_str().to_string()),
                );
            }
            rows.push(row);
        }
        out.push_str(&render_rows(&rows));
        out.push_str(&loss_lines(figs));
    }
    let c = &ins.checks;
    out.push_str(&format!(
        "\ndata checks: passivity margin {}{}, reciprocity error {}\n",
        show(c.passivity_margin, ""),
        match c.passivity_margin {
            Some(m) if m < 0.0 => " (active: σ_max(S) > 1 somewhere)",
            _ => "",
        },
        show(c.reciprocity_error, ""),
    ));
    out
}

fn scalar_lines(figs: &ViewFigures) -> String {
    let s = |n: &str| figs.scalar(n);
    let f_max = figs.freq.last().copied();
    let srf_of = |name: &str| match s(name) {
        Some(v) => eng(v, "Hz"),
        None => match f_max {
            Some(fm) => format!("above {} (not in the sweep)", eng(fm, "Hz")),
            None => "—".into(),
        },
    };
    let srf = srf_of("srf");
    match figs.kind {
        Kind::Inductor => {
            let peak = match (s("q_peak"), s("f_q_peak")) {
                (Some(q), Some(f)) => format!("{} at {}", sig3(q), eng(f, "Hz")),
                _ => "—".into(),
            };
            let half = match s("f_q_half") {
                Some(f) => eng(f, "Hz"),
                None => "not in the sweep".into(),
            };
            format!(
                "  SRF {srf}   peak Q {peak}   Q at half peak: {half}   L at f_min {}\n",
                show(s("l_low"), "H")
            )
        }
        Kind::Capacitor => format!("  SRF {srf}   C at f_min {}\n", show(s("c_low"), "F")),
        Kind::Transformer => format!(
            "  SRF winding 1 {}   winding 2 {}\n",
            srf_of("srf1"),
            srf_of("srf2")
        ),
    }
}

fn loss_lines(figs: &ViewFigures) -> String {
    if figs.kind != Kind::Inductor {
        return String::new();
    }
    match &figs.loss {
        Some(Ok(story)) => {
            let p = &story.model;
            let mut out = format!(
                "  π-model: Ls {}, Rdc {}, Rac {}, Cs {}, Cox {}/{}, Csi {}/{}, Rsi {}/{}; fit error {}\n",
                eng(p.ls, "H"),
                eng(p.rdc, "Ω"),
                eng(p.rac, "Ω"),
                eng(p.cs, "F"),
                eng(p.cox1, "F"),
                eng(p.cox2, "F"),
                eng(p.csi1, "F"),
                eng(p.csi2, "F"),
                eng(p.rsi1, "Ω"),
                eng(p.rsi2, "Ω"),
                percent(story.fit_error),
            );
            let bands: Vec<String> = story
                .loss_bands
                .iter()
                .map(|b| {
                    format!(
                        "{} {} … {}",
                        b.mechanism.as_str(),
                        eng(b.from, "Hz"),
                        eng(b.to, "Hz")
                    )
                })
                .collect();
            if !bands.is_empty() {
                out.push_str(&format!("  loss: {}\n", bands.join("; ")));
            }
            let verdict = crate::model::verdict_line(figs)
                .map(|v| format!("  {v}\n"))
                .unwrap_or_default();
            out.push_str(&verdict);
            out
        }
        Some(Err(e)) => format!("  π-model: not fitted: {e}\n"),
        None => String::new(),
    }
}

/// A small ratio as a percentage, without printing noise digits.
fn percent(x: f64) -> String {
    if x.abs() < 1e-6 {
        "< 0.0001%".to_string()
    } else {
        format!("{}%", sig3(100.0 * x))
    }
}

fn render_rows(rows: &[Vec<String>]) -> String {
    let ncol = rows.iter().map(|r| r.len()).max().unwrap_or(0);
    let widths: Vec<usize> = (0..ncol)
        .map(|c| {
            rows.iter()
                .filter_map(|r| r.get(c))
                .map(|s| s.chars().count())
                .max()
                .unwrap_or(0)
        })
        .collect();
    let mut out = String::new();
    for r in rows {
        out.push_str("  ");
        let cells: Vec<String> = r
            .iter()
            .enumerate()
            .map(|(i, s)| format!("{}{s}", " ".repeat(widths[i] - s.chars().count())))
            .collect();
        out.push_str(cells.join("  ").trim_end());
        out.push('\n');
    }
    out
}

/// Run `lcgate inspect` on the file named in `args`; returns the exit status (0, or
/// 2 with the error, `path:line:column: message` for a bad file, on stderr).
pub fn run(args: &InspectArgs) -> u8 {
    run_with(args, |p| {
        crate::touchstone::read_path(p).map_err(|e| e.to_string())
    })
}

/// Run `lcgate inspect` with `load` reading the file; returns the exit status (0,
/// or 2 with the error on stderr).
pub fn run_with(
    args: &InspectArgs,
    load: impl Fn(&std::path::Path) -> Result<Touchstone, String>,
) -> u8 {
    match run_inner(args, load) {
        Ok(text) => {
            print!("{text}");
            EXIT_PASS
        }
        Err(e) => {
            eprintln!("lcgate inspect: {e}");
            EXIT_ERROR
        }
    }
}

fn run_inner(
    args: &InspectArgs,
    load: impl Fn(&std::path::Path) -> Result<Touchstone, String>,
) -> Result<String, String> {
    let only = match &args.view {
        Some(v) => Some(ViewName::parse(v).ok_or_else(|| {
            let known: Vec<&str> = ViewName::ALL.iter().map(|v| v.as_str()).collect();
            format!("unknown view `{v}` (known: {})", known.join(", "))
        })?),
        None => None,
    };
    let ts = load(&args.file)?;
    let net = ts.network;
    if net.points() == 0 {
        return Err(format!("{}: no frequency points", args.file.display()));
    }
    let at = if args.sweep {
        At::Sweep
    } else if !args.at.is_empty() {
        At::List(parse_at(&args.at, net.freq[0], net.freq[net.points() - 1])?)
    } else {
        At::Representative
    };
    let ins = inspect(&args.file.display().to_string(), net, only);
    if only.is_some() {
        if let Some((_, Err(e))) = ins.views.first() {
            return Err(e.clone());
        }
    }
    let mut warnings = String::new();
    for w in &ts.warnings {
        warnings.push_str(&format!(
            "warning: {}:{}:{}: {}\n",
            args.file.display(),
            w.line,
            w.column,
            w.message
        ));
    }
    if !warnings.is_empty() {
        eprint!("{warnings}");
    }
    if args.json {
        let v = to_json(&ins, &at);
        let mut s = serde_json::to_string_pretty(&v).map_err(|e| e.to_string())?;
        s.push('\n');
        Ok(s)
    } else {
        Ok(to_table(&ins, &at))
    }
}

/// Figures by view name, for callers that want the map (tests, tools).
pub fn figures_by_view(ins: &Inspection) -> BTreeMap<ViewName, &ViewFigures> {
    ins.views
        .iter()
        .filter_map(|(n, r)| r.as_ref().ok().map(|f| (*n, f)))
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::network::C64;

    fn series_rl() -> Network {
        let freq: Vec<f64> = (1..=100).map(|k| k as f64 * 1e8).collect();
        let z: Vec<C64> = freq
            .iter()
            .map(|&f| C64::new(2.0, 2.0 * std::f64::consts::PI * f * 1e-9))
            .collect();
        Network::from_z(freq, 1, vec![50.0], &z).unwrap()
    }

    #[test]
    fn representative_points() {
        assert_eq!(
            representative(1e8, 1e10),
            vec![1e8, 2e8, 5e8, 1e9, 2e9, 5e9, 1e10]
        );
        assert_eq!(
            representative(1e6, 1e11),
            vec![1e6, 1e7, 1e8, 1e9, 1e10, 1e11]
        );
        assert_eq!(representative(3e9, 4e9).len(), 3);
    }

    #[test]
    fn at_outside_sweep_is_refused() {
        assert!(parse_at(&["20GHz".into()], 1e8, 1e10).is_err());
        assert!(parse_at(&["1nH".into()], 1e8, 1e10).is_err());
        assert_eq!(
            parse_at(&["2.4GHz".into(), "5e9".into()], 1e8, 1e10).unwrap(),
            vec![2.4e9, 5e9]
        );
    }

    #[test]
    fn document_shape() {
        let ins = inspect("rl.s1p", series_rl(), None);
        let v = to_json(&ins, &At::List(vec![1e9, 2.45e9]));
        assert_eq!(v["format"], "lcgate-figures/1");
        assert_eq!(v["ports"], 1);
        let view = &v["views"]["one_port"];
        assert_eq!(view["kind"], "inductor");
        assert!(view["srf"].is_null());
        let at = view["at"].as_array().unwrap();
        assert_eq!(at.len(), 2);
        // l = 1 nH exactly for a series R-L (definition, DESIGN §6)
        let l = at[1]["l"].as_f64().unwrap();
        assert!((l - 1e-9).abs() < 1e-18);
        let table = to_table(&ins, &At::Representative);
        assert!(table.contains("view one_port (inductor)"), "{table}");
        assert!(table.contains("1 nH"), "{table}");
    }
}
