//! Loading rules files and sidecars: the schema of DESIGN §7 checked key by key,
//! every problem collected with its place in the file, expressions parsed and
//! type-checked against their group.

use std::collections::BTreeMap;
use std::io::Read;
use std::path::{Path, PathBuf};

use globset::{GlobBuilder, GlobSetBuilder};
use serde_saphyr::Spanned;

use super::expr::{self, ExprError};
use super::suggest::nearest;
use super::types::{self, Base, Scope, ValueTy};
use super::yaml::{self, Node, Problem, Source};
use super::{
    Band, Check, DriftLimit, DriftRule, Group, LoadError, RuleSet, RulesFile, Sidecar, Value,
    ValueSpec,
};
use crate::figures::{self, Kind};
use crate::network::{PortMap, ViewName};
use crate::units::{self, Dim};
use crate::verdict::Severity;

/// Largest rules or sidecar file read (bytes).
pub const MAX_FILE_BYTES: u64 = 4 * 1024 * 1024;
/// Longest `from_name` pattern.
const MAX_PATTERN: usize = 1024;

type N = Spanned<Node>;

/// Load rules from files and folders (a folder gives every `*.yaml` inside it, at
/// any depth, sorted). Every problem in every file is reported; the set is returned
/// only when there are none.
pub fn load(paths: &[PathBuf]) -> Result<RuleSet, LoadError> {
    let mut problems = Vec::new();
    let mut files = Vec::new();
    let mut found: Vec<PathBuf> = Vec::new();
    if paths.is_empty() {
        problems.push(whole("--rules", "no rules files given"));
    }
    for p in paths {
        let shown = p.display().to_string();
        if p.is_dir() {
            let mut here: Vec<PathBuf> = walkdir::WalkDir::new(p)
                .follow_links(false)
                .into_iter()
                .filter_map(|e| e.ok())
                .filter(|e| e.file_type().is_file())
                .map(|e| e.into_path())
                .filter(|q| q.extension().is_some_and(|x| x == "yaml"))
                .collect();
            here.sort();
            if here.is_empty() {
                problems.push(whole(&shown, "no *.yaml rules files in this folder"));
            }
            found.extend(here);
        } else if p.is_file() {
            found.push(p.clone());
        } else {
            problems.push(whole(&shown, "no such file or folder"));
        }
    }
    found.sort();
    found.dedup();
    for p in &found {
        let shown = p.display().to_string();
        match read_limited(p) {
            Err(e) => problems.push(whole(&shown, e)),
            Ok(bytes) => match std::str::from_utf8(&bytes) {
                Err(e) => problems.push(non_utf8(&shown, &bytes, e.valid_up_to())),
                Ok(text) => {
                    let hash = blake3::hash(&bytes).to_hex().to_string();
                    let src = Source::new(&shown, text);
                    match rules_file(&src, hash, p) {
                        Ok(f) => files.push(f),
                        Err(mut ps) => problems.append(&mut ps),
                    }
                }
            },
        }
    }
    if problems.is_empty() {
        Ok(RuleSet { files })
    } else {
        Err(LoadError { problems })
    }
}

/// Read a part's sidecar `NAME.part.yaml` (keys `band`, `values`).
pub fn load_sidecar(path: &Path) -> Result<Sidecar, LoadError> {
    let shown = path.display().to_string();
    let bytes = read_limited(path).map_err(|e| LoadError {
        problems: vec![whole(&shown, e)],
    })?;
    let text = std::str::from_utf8(&bytes).map_err(|e| LoadError {
        problems: vec![non_utf8(&shown, &bytes, e.valid_up_to())],
    })?;
    let src = Source::new(&shown, text);
    let mut ps = Vec::new();
    let root = match yaml::parse(&src) {
        Ok(r) => r,
        Err(p) => return Err(LoadError { problems: vec![p] }),
    };
    let mut car = Sidecar {
        path: shown.clone(),
        ..Sidecar::default()
    };
    if let Some(entries) = mapping(&src, &root, "a sidecar file", &mut ps) {
        for (k, v) in entries {
            match k.value.as_str() {
                "band" => car.band = band(&src, v, &mut ps),
                "values" => {
                    if let Some(vs) = mapping(&src, v, "`values:`", &mut ps) {
                        for (name, spec) in vs {
                            if let Some(val) = constant(&src, spec, &mut ps) {
                                car.values.insert(name.value.clone(), val);
                            }
                        }
                    }
                }
                other => ps.push(unknown_key(
                    &src,
                    k,
                    other,
                    &["band", "values"],
                    "a sidecar file",
                )),
            }
        }
    }
    if ps.is_empty() {
        Ok(car)
    } else {
        Err(LoadError { problems: ps })
    }
}

fn whole(file: &str, msg: impl Into<String>) -> Problem {
    Problem {
        file: file.to_string(),
        line: 0,
        column: 0,
        message: msg.into(),
        source_line: None,
        width: 0,
    }
}

fn non_utf8(file: &str, bytes: &[u8], at: usize) -> Problem {
    let before = &bytes[..at];
    let line = before.iter().filter(|b| **b == b'\n').count() + 1;
    let ls = before
        .iter()
        .rposition(|b| *b == b'\n')
        .map_or(0, |i| i + 1);
    let column = String::from_utf8_lossy(&bytes[ls..at]).chars().count() + 1;
    Problem {
        file: file.to_string(),
        line,
        column,
        message: "the file is not UTF-8 text".into(),
        source_line: None,
        width: 1,
    }
}

fn read_limited(p: &Path) -> Result<Vec<u8>, String> {
    let f = std::fs::File::open(p).map_err(|e| format!("cannot read: {e}"))?;
    let mut bytes = Vec::new();
    f.take(MAX_FILE_BYTES + 1)
        .read_to_end(&mut bytes)
        .map_err(|e| format!("cannot read: {e}"))?;
    if bytes.len() as u64 > MAX_FILE_BYTES {
        return Err(format!(
            "the file is larger than {} MiB, the limit for rules files",
            MAX_FILE_BYTES / (1024 * 1024)
        ));
    }
    Ok(bytes)
}

fn unknown_key(
    src: &Source,
    k: &Spanned<String>,
    word: &str,
    known: &[&str],
    place: &str,
) -> Problem {
    let hint = match nearest(word, known.iter().copied()) {
        Some(n) => format!("; did you mean `{n}`?"),
        None => format!(" (known: {})", known.join(", ")),
    };
    src.at(k, format!("unknown key `{word}` in {place}{hint}"))
}

fn mapping<'n>(
    src: &Source,
    n: &'n N,
    what: &str,
    ps: &mut Vec<Problem>,
) -> Option<&'n Vec<(Spanned<String>, N)>> {
    match &n.value {
        Node::Map(m) => Some(m),
        other => {
            ps.push(src.at(
                n,
                format!(
                    "{what} should be a mapping (`key: value` lines), found {}",
                    other.what()
                ),
            ));
            None
        }
    }
}

fn string<'n>(src: &Source, n: &'n N, what: &str, ps: &mut Vec<Problem>) -> Option<&'n str> {
    match &n.value {
        Node::Str(s) => Some(s),
        other => {
            ps.push(src.at(
                n,
                format!("{what} should be a text, found {}", other.what()),
            ));
            None
        }
    }
}

fn rules_file(src: &Source, hash: String, path: &Path) -> Result<RulesFile, Vec<Problem>> {
    let mut ps = Vec::new();
    let root = yaml::parse(src).map_err(|p| vec![p])?;
    let mut suite = None;
    let mut groups = Vec::new();
    let mut drift = Vec::new();
    let mut saw_parts = false;
    if let Some(entries) = mapping(src, &root, "a rules file", &mut ps) {
        for (k, v) in entries {
            match k.value.as_str() {
                "suite" => match &v.value {
                    Node::Str(s) if !s.trim().is_empty() => suite = Some(s.trim().to_string()),
                    Node::Number(x) => suite = Some(x.to_string()),
                    other => ps.push(src.at(
                        v,
                        format!(
                            "`suite:` is the title of these rules, a text; found {}",
                            other.what()
                        ),
                    )),
                },
                "parts" => {
                    saw_parts = true;
                    match &v.value {
                        Node::Seq(items) => {
                            for item in items {
                                if let Some(g) = group(src, item, &mut ps) {
                                    groups.push(g);
                                }
                            }
                        }
                        other => ps.push(src.at(v, format!("`parts:` is a list of groups (lines starting with `- select:`), found {}", other.what()))),
                    }
                }
                "drift" => drift = drift_rules(src, v, &mut ps),
                other => ps.push(unknown_key(
                    src,
                    k,
                    other,
                    &["suite", "parts", "drift"],
                    "a rules file",
                )),
            }
        }
        if !saw_parts && ps.is_empty() {
            ps.push(src.at(
                &root,
                "a rules file needs `parts:`, a list of groups of parts and their checks",
            ));
        }
    }
    if !ps.is_empty() {
        return Err(ps);
    }
    let stem = path
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_default();
    Ok(RulesFile {
        path: src.name.clone(),
        hash,
        suite: suite.unwrap_or(stem),
        groups,
        drift,
    })
}

const GROUP_KEYS: [&str; 8] = [
    "select", "kind", "view", "ports", "windings", "band", "values", "checks",
];

fn group(src: &Source, n: &N, ps: &mut Vec<Problem>) -> Option<Group> {
    let before = ps.len();
    let entries = mapping(src, n, "a group of `parts:`", ps)?;
    let mut select = Vec::new();
    let mut builder = GlobSetBuilder::new();
    let mut saw_select = false;
    let mut kind = None;
    let mut view = None;
    let mut ports = PortMap::default();
    let mut band_v = None;
    let mut values = BTreeMap::new();
    let mut checks_node = None;
    for (k, v) in entries {
        match k.value.as_str() {
            "select" => {
                saw_select = true;
                let items: Vec<&N> = match &v.value {
                    Node::Seq(xs) => xs.iter().collect(),
                    Node::Str(_) => vec![v],
                    other => {
                        ps.push(src.at(v, format!("`select:` is a glob or a list of globs such as [\"coils/**/*.s2p\"], found {}", other.what())));
                        vec![]
                    }
                };
                if items.is_empty() && matches!(v.value, Node::Seq(_)) {
                    ps.push(src.at(v, "`select:` is empty: it would select no part"));
                }
                for it in items {
                    let Some(g) = string(src, it, "a glob", ps) else {
                        continue;
                    };
                    match GlobBuilder::new(g).literal_separator(true).build() {
                        Ok(glob) => {
                            builder.add(glob);
                            select.push(g.to_string());
                        }
                        Err(e) => ps.push(src.at(it, format!("bad glob: {}", e.kind()))),
                    }
                }
            }
            "kind" => {
                if let Some(s) = string(src, v, "`kind:`", ps) {
                    let all = [Kind::Inductor, Kind::Capacitor, Kind::Transformer];
                    match all.into_iter().find(|k| k.as_str() == s) {
                        Some(k) => kind = Some(k),
                        None => ps.push(choice(src, v, "kind", s, &all.map(|k| k.as_str()))),
                    }
                }
            }
            "view" => {
                if let Some(s) = string(src, v, "`view:`", ps) {
                    match ViewName::parse(s) {
                        Some(x) => view = Some(x),
                        None => ps.push(choice(
                            src,
                            v,
                            "view",
                            s,
                            &ViewName::ALL.map(|x| x.as_str()),
                        )),
                    }
                }
            }
            "ports" => {
                if let Some(m) = mapping(src, v, "`ports:`", ps) {
                    for (pk, pv) in m {
                        match pk.value.as_str() {
                            "tap" => {
                                if let Some(t) = port(src, pv, ps) {
                                    ports.tap = t;
                                }
                            }
                            "pair" => {
                                if let Some(pr) = port_pair(src, pv, ps) {
                                    ports.pair = pr;
                                }
                            }
                            "windings" => {
                                if let Some(w) = windings(src, pv, ps) {
                                    ports.windings = w;
                                }
                            }
                            other => ps.push(unknown_key(
                                src,
                                pk,
                                other,
                                &["tap", "pair", "windings"],
                                "`ports:`",
                            )),
                        }
                    }
                }
            }
            "windings" => {
                if let Some(w) = windings(src, v, ps) {
                    ports.windings = w;
                }
            }
            "band" => band_v = band(src, v, ps),
            "values" => {
                if let Some(m) = mapping(src, v, "`values:`", ps) {
                    for (name, spec) in m {
                        if let Some(p) = bad_value_name(&name.value) {
                            ps.push(src.at(name, p));
                            continue;
                        }
                        if let Some(s) = value_spec(src, spec, ps) {
                            values.insert(name.value.clone(), s);
                        }
                    }
                }
            }
            "checks" => checks_node = Some(v),
            other => ps.push(unknown_key(src, k, other, &GROUP_KEYS, "a group")),
        }
    }
    if !saw_select {
        ps.push(src.at(n, "a group needs `select:`, the globs of the parts it checks (relative to the library root)"));
    }
    match (kind, view) {
        (Some(Kind::Transformer), Some(v)) if v != ViewName::Transformer => ps.push(src.at(
            n,
            format!(
                "a transformer group uses the `transformer` view, not `{}`",
                v.as_str()
            ),
        )),
        (Some(k), Some(ViewName::Transformer)) if k != Kind::Transformer => ps.push(src.at(
            n,
            format!(
                "the `transformer` view is for transformers, not a {}",
                k.as_str()
            ),
        )),
        _ => {}
    }
    let vtypes: BTreeMap<String, ValueTy> = values
        .iter()
        .map(|(k, v): (&String, &ValueSpec)| (k.clone(), v.ty()))
        .collect();
    let scope = Scope {
        kind,
        values: &vtypes,
    };
    let mut checks = Vec::new();
    if let Some(cn) = checks_node {
        if let Some(m) = mapping(src, cn, "`checks:`", ps) {
            for (id, body) in m {
                if let Some(c) = check(src, id, body, &scope, ps) {
                    checks.push(c);
                }
            }
        }
    }
    let matcher = builder.build().ok();
    if ps.len() > before {
        return None;
    }
    Some(Group {
        select,
        kind,
        view,
        ports,
        band: band_v,
        values,
        checks,
        line: n.defined.line() as usize,
        matcher: matcher?,
    })
}

fn bad_value_name(n: &str) -> Option<String> {
    let ok = n
        .chars()
        .next()
        .is_some_and(|c| c.is_ascii_alphabetic() || c == '_')
        && n.chars().all(|c| c.is_ascii_alphanumeric() || c == '_');
    if !ok {
        return Some(format!(
            "`{n}` cannot be a value name: use letters, digits and `_`"
        ));
    }
    let reserved = [
        "and",
        "or",
        "not",
        "within",
        "of",
        "min",
        "max",
        "mean",
        "conductor",
        "substrate",
        "resonance",
        "band",
    ];
    if reserved.contains(&n)
        || figures::info(n).is_some()
        || n == types::Q_DROP_CAUSE
        || n == types::MECHANISM_CURVE
    {
        return Some(format!(
            "`{n}` is already a name of the rules language; pick another value name"
        ));
    }
    None
}

fn choice(src: &Source, n: &N, key: &str, word: &str, known: &[&str]) -> Problem {
    let hint = match nearest(word, known.iter().copied()) {
        Some(x) => format!("did you mean `{x}`?"),
        None => format!("one of: {}", known.join(", ")),
    };
    src.at(n, format!("unknown {key} `{word}`; {hint}"))
}

fn port(src: &Source, n: &N, ps: &mut Vec<Problem>) -> Option<usize> {
    match &n.value {
        Node::Number(x) if x.fract() == 0.0 && *x >= 1.0 && *x <= 64.0 => Some(*x as usize),
        _ => {
            ps.push(src.at(n, "a port is a number from 1 to the file's port count"));
            None
        }
    }
}

/// `[[1, 3], [2, 4]]`: the two windings of a transformer.
fn windings(src: &Source, v: &N, ps: &mut Vec<Problem>) -> Option<[[usize; 2]; 2]> {
    match &v.value {
        Node::Seq(ws) if ws.len() == 2 => {
            let a = port_pair(src, &ws[0], ps);
            let b = port_pair(src, &ws[1], ps);
            let (a, b) = (a?, b?);
            if a.iter().any(|p| b.contains(p)) {
                ps.push(src.at(v, "the two windings share a port"));
                return None;
            }
            Some([a, b])
        }
        _ => {
            ps.push(src.at(v, "`windings:` is two port pairs, e.g. [[1, 3], [2, 4]]"));
            None
        }
    }
}

fn port_pair(src: &Source, n: &N, ps: &mut Vec<Problem>) -> Option<[usize; 2]> {
    match &n.value {
        Node::Seq(xs) if xs.len() == 2 => {
            let a = port(src, &xs[0], ps)?;
            let b = port(src, &xs[1], ps)?;
            if a == b {
                ps.push(src.at(n, "the two ports of a pair must differ"));
                return None;
            }
            Some([a, b])
        }
        _ => {
            ps.push(src.at(n, "a port pair is two port numbers, e.g. [1, 3]"));
            None
        }
    }
}

/// Map an expression error (byte span in the scalar's text) to the file.
fn expr_problem(src: &Source, n: &N, text: &str, e: &ExprError) -> Problem {
    match src.scalar_text_start(n, text) {
        Some(start) => src.at_byte(
            start + e.span.0,
            (e.span.1 - e.span.0).max(1),
            e.message.clone(),
        ),
        None => src.at(n, e.message.clone()),
    }
}

fn band(src: &Source, n: &N, ps: &mut Vec<Problem>) -> Option<Band> {
    let Node::Str(text) = &n.value else {
        ps.push(src.at(
            n,
            "`band:` is a band such as `4.9GHz .. 5.9GHz` (or one frequency), with units",
        ));
        return None;
    };
    match expr::parse_band(text) {
        Ok((lo, hi)) => Some(Band { lo, hi }),
        Err(e) => {
            ps.push(expr_problem(src, n, text, &e));
            None
        }
    }
}

fn quantity(src: &Source, n: &N, text: &str, ps: &mut Vec<Problem>) -> Option<Value> {
    match units::parse_quantity(text) {
        Ok((value, dim)) => Some(Value::Quantity { value, dim }),
        Err(e) => {
            ps.push(src.at(n, e.to_string()));
            None
        }
    }
}

/// A constant value: `1.2nH`, `12`, `true`, or `{value: 1.2nH}`.
fn constant(src: &Source, n: &N, ps: &mut Vec<Problem>) -> Option<Value> {
    match &n.value {
        Node::Bool(b) => Some(Value::Truth(*b)),
        Node::Number(x) if x.is_finite() => Some(Value::Quantity {
            value: *x,
            dim: Dim::Ratio,
        }),
        Node::Str(s) => quantity(src, n, s, ps),
        Node::Map(m) => {
            let mut out = None;
            for (k, v) in m {
                if k.value == "value" {
                    out = constant(src, v, ps);
                } else {
                    ps.push(unknown_key(
                        src,
                        k,
                        &k.value,
                        &["value"],
                        "a constant value",
                    ));
                }
            }
            if out.is_none() && m.iter().all(|(k, _)| k.value != "value") {
                ps.push(src.at(n, "a constant value needs `value:`"));
            }
            out
        }
        other => {
            ps.push(src.at(n, format!("a value is a quantity such as `1.2nH`, a true/false, or a mapping with `from_name:`; found {}", other.what())));
            None
        }
    }
}

fn value_spec(src: &Source, n: &N, ps: &mut Vec<Problem>) -> Option<ValueSpec> {
    let Node::Map(m) = &n.value else {
        return constant(src, n, ps).map(ValueSpec::Constant);
    };
    if m.iter().any(|(k, _)| k.value == "value") && !m.iter().any(|(k, _)| k.value == "from_name") {
        return constant(src, n, ps).map(ValueSpec::Constant);
    }
    let mut pattern: Option<(&str, &N)> = None;
    let mut unit: Option<(String, f64, Dim)> = None;
    let mut present: Option<bool> = None;
    for (k, v) in m {
        match k.value.as_str() {
            "from_name" => {
                if let Some(s) = string(src, v, "`from_name:` (a regular expression)", ps) {
                    pattern = Some((s, v));
                }
            }
            "unit" => {
                if let Some(s) = string(src, v, "`unit:`", ps) {
                    match units::parse_quantity(&format!("1{s}")) {
                        Ok((scale, dim)) if !s.contains('%') => {
                            unit = Some((s.to_string(), scale, dim))
                        }
                        _ => ps
                            .push(src.at(v, format!("unknown unit `{s}` (e.g. nH, pF, GHz, ohm)"))),
                    }
                }
            }
            "present" => match &v.value {
                Node::Bool(b) => present = Some(*b),
                other => ps.push(src.at(
                    v,
                    format!("`present:` is true or false, found {}", other.what()),
                )),
            },
            other => ps.push(unknown_key(
                src,
                k,
                other,
                &["from_name", "unit", "present", "value"],
                "a value",
            )),
        }
    }
    let Some((pat, pnode)) = pattern else {
        ps.push(src.at(
            n,
            "a value read from the file name needs `from_name:` (a regular expression)",
        ));
        return None;
    };
    if pat.len() > MAX_PATTERN {
        ps.push(src.at(
            pnode,
            format!("the pattern is longer than {MAX_PATTERN} bytes"),
        ));
        return None;
    }
    let regex = match regex::RegexBuilder::new(pat).size_limit(1 << 20).build() {
        Ok(r) => r,
        Err(e) => {
            let msg = e.to_string();
            let last = msg
                .lines()
                .rev()
                .find(|l| !l.trim().is_empty())
                .unwrap_or("")
                .trim()
                .to_string();
            ps.push(src.at(pnode, format!("bad regular expression: {last}")));
            return None;
        }
    };
    match (present, unit) {
        (Some(_), Some(_)) => {
            ps.push(src.at(n, "a value has either `unit:` (a number from the name) or `present:` (a flag), not both"));
            None
        }
        (Some(when_found), None) => Some(ValueSpec::Present {
            pattern: pat.to_string(),
            regex,
            when_found,
        }),
        (None, u) => {
            let (unit, scale, dim) = u.unwrap_or((String::new(), 1.0, Dim::Ratio));
            Some(ValueSpec::FromName {
                pattern: pat.to_string(),
                regex,
                scale,
                dim,
                unit,
            })
        }
    }
}

/// Parse and type-check one expression scalar; problems point into the file.
fn expression(
    src: &Source,
    n: &N,
    scope: &Scope,
    ps: &mut Vec<Problem>,
) -> Option<(String, expr::Expr, types::Ty)> {
    let text = match &n.value {
        Node::Str(s) => s.clone(),
        Node::Number(_) | Node::Bool(_) => {
            ps.push(src.at(n, "a check is an expression such as `q(band) >= 12`"));
            return None;
        }
        other => {
            ps.push(src.at(n, format!("expected an expression, found {}", other.what())));
            return None;
        }
    };
    if text.contains('\n') || text.contains('\r') {
        ps.push(src.at(n, "write the expression on one line"));
        return None;
    }
    let ast = match expr::parse(&text) {
        Ok(a) => a,
        Err(e) => {
            ps.push(expr_problem(src, n, &text, &e));
            return None;
        }
    };
    match types::check(&ast, scope) {
        Ok(t) => Some((text, ast, t)),
        Err(e) => {
            ps.push(expr_problem(src, n, &text, &e));
            None
        }
    }
}

fn check(
    src: &Source,
    id: &Spanned<String>,
    body: &N,
    scope: &Scope,
    ps: &mut Vec<Problem>,
) -> Option<Check> {
    if id.value.trim().is_empty() {
        ps.push(src.at(id, "a check needs an id"));
        return None;
    }
    let mut severity = Severity::Error;
    let mut hint = None;
    let expr_node = match &body.value {
        Node::Map(m) => {
            let mut e = None;
            for (k, v) in m {
                match k.value.as_str() {
                    "expect" => e = Some(v),
                    "severity" => {
                        if let Some(s) = string(src, v, "`severity:`", ps) {
                            match s {
                                "error" => severity = Severity::Error,
                                "warning" => severity = Severity::Warning,
                                w => ps.push(choice(src, v, "severity", w, &["error", "warning"])),
                            }
                        }
                    }
                    "hint" => {
                        if let Some(s) = string(src, v, "`hint:`", ps) {
                            hint = Some(s.trim().to_string());
                        }
                    }
                    other => ps.push(unknown_key(
                        src,
                        k,
                        other,
                        &["expect", "severity", "hint"],
                        "a check",
                    )),
                }
            }
            match e {
                Some(e) => e,
                None => {
                    ps.push(src.at(
                        body,
                        format!(
                            "check `{}` needs `expect:`, the expression that must hold",
                            id.value
                        ),
                    ));
                    return None;
                }
            }
        }
        _ => body,
    };
    let (text, ast, ty) = expression(src, expr_node, scope, ps)?;
    if ty.base != Base::Truth {
        let e = ExprError::new(
            ast.span,
            format!(
                "a check must be a comparison that holds or not; this is a {} (add e.g. `>= 12`)",
                ty.describe()
            ),
        );
        ps.push(expr_problem(src, expr_node, &text, &e));
        return None;
    }
    Some(Check {
        id: id.value.clone(),
        expr: text,
        severity,
        hint,
        line: id.defined.line() as usize,
        ast,
    })
}

fn drift_rules(src: &Source, n: &N, ps: &mut Vec<Problem>) -> Vec<DriftRule> {
    let mut out = Vec::new();
    let Some(m) = mapping(src, n, "`drift:`", ps) else {
        return out;
    };
    let no_values = BTreeMap::new();
    let scope = Scope {
        kind: None,
        values: &no_values,
    };
    for (k, v) in m {
        // the key is the quantity: parse it as a located string node
        let key_node: N = Spanned {
            value: Node::Str(k.value.clone()),
            referenced: k.referenced,
            defined: k.defined,
        };
        let Some((text, ast, ty)) = expression(src, &key_node, &scope, ps) else {
            continue;
        };
        let dims = match ty {
            types::Ty {
                base: Base::Quantity(d),
                swept: false,
            } => d,
            t => {
                let e = ExprError::new(ast.span, format!(
                    "a drift quantity is one number, such as `q_peak` or `l(band.mid)` (use min/max/mean over a band); this is a {}",
                    t.describe()
                ));
                ps.push(expr_problem(src, &key_node, &text, &e));
                continue;
            }
        };
        let limit_text = match &v.value {
            Node::Str(s) => s.trim().to_string(),
            Node::Number(x) => x.to_string(),
            other => {
                ps.push(src.at(v, format!("a drift limit is `1%` (relative) or a quantity such as `50pH` (absolute); found {}", other.what())));
                continue;
            }
        };
        let limit = match units::parse_quantity(&limit_text) {
            Ok((x, _)) if x < 0.0 => {
                ps.push(src.at(v, "a drift limit cannot be negative"));
                continue;
            }
            Ok((x, Dim::Ratio)) if limit_text.ends_with('%') => DriftLimit::Relative(x),
            Ok((x, d)) if types::Dims::of(d) == dims => DriftLimit::Absolute(x),
            Ok((_, d)) => {
                ps.push(src.at(v, format!(
                    "`{text}` is a {} but the limit `{limit_text}` is a {}; write a percentage or a {}",
                    dims.describe(),
                    d.name(),
                    dims.describe()
                )));
                continue;
            }
            Err(e) => {
                ps.push(src.at(v, e.to_string()));
                continue;
            }
        };
        out.push(DriftRule {
            quantity: text,
            limit_text,
            limit,
            ast,
        });
    }
    out
}
