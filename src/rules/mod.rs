//! YAML rules files and the expression language of DESIGN §7: loading with
//! `file:line:column` problems, parsing with source spans, dimension type-checking
//! at load, evaluation against a part's figures, drift limits, sidecar overrides and
//! the logic of `lcgate validate`.
//!
//! Layout: [`yaml`] reads YAML into located nodes; [`load`] checks the schema and
//! builds the types below; [`expr`] is the grammar, parser and printer; [`types`]
//! the type-checker and its dimension algebra; [`eval`] the evaluation with DESIGN
//! §7's null rules. Knows nothing of files on disk beyond the rules and sidecar
//! files it is asked to read, and nothing of reports.

use std::collections::BTreeMap;
use std::path::PathBuf;

use crate::figures::{DataChecks, Kind, ViewFigures};
use crate::network::{PortMap, ViewName};
use crate::units::{self, Dim};
use crate::verdict::{CheckOutcome, CheckStatus, DriftOutcome, RulesFileInfo, Severity};

pub mod eval;
pub mod expr;
mod load;
pub mod suggest;
pub mod types;
pub mod yaml;

pub use load::{load, load_sidecar, MAX_FILE_BYTES};
pub use yaml::Problem;

/// Every problem found while loading rules (or a sidecar). Display: one
/// `file:line:column: message` per problem, each with its source line and a caret.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("{}", render(.problems))]
pub struct LoadError {
    /// the problems, in file order
    pub problems: Vec<Problem>,
}

fn render(ps: &[Problem]) -> String {
    let mut out: Vec<String> = ps.iter().map(|p| p.to_string()).collect();
    if ps.len() > 1 {
        out.push(format!("{} problems", ps.len()));
    }
    out.join("\n")
}

/// A band of frequencies (Hz), `lo ≤ hi`.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Band {
    /// low edge (Hz)
    pub lo: f64,
    /// high edge (Hz)
    pub hi: f64,
}

impl Band {
    /// Arithmetic centre (lo + hi) / 2 — what `band.mid` means.
    pub fn mid(&self) -> f64 {
        0.5 * (self.lo + self.hi)
    }
    /// As `[lo, hi]`, the form the reports carry.
    pub fn as_array(&self) -> [f64; 2] {
        [self.lo, self.hi]
    }
}

/// A part's value, as used by its checks.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub enum Value {
    /// a number in SI units with its dimension
    Quantity {
        /// SI value
        value: f64,
        /// dimension
        dim: Dim,
    },
    /// a flag (`present:` specs, `true`/`false` constants)
    Truth(bool),
}

/// How a group gets a value for each part.
#[derive(Debug, Clone)]
pub enum ValueSpec {
    /// A number read from the file name: the first capture group (or the whole
    /// match) of `pattern`, with `p` read as a decimal point (`1p2` → 1.2), times
    /// the unit.
    FromName {
        /// the regular expression as written
        pattern: String,
        /// compiled
        regex: regex::Regex,
        /// SI factor of the unit (1 for none)
        scale: f64,
        /// dimension of the unit
        dim: Dim,
        /// the unit as written (`nH`)
        unit: String,
    },
    /// A flag: whether `pattern` matches the file name (`present: true`), or does
    /// not (`present: false`).
    Present {
        /// as written
        pattern: String,
        /// compiled
        regex: regex::Regex,
        /// the flag's value when the pattern matches
        when_found: bool,
    },
    /// The same value for every part.
    Constant(Value),
}

impl ValueSpec {
    /// The type the checks see.
    pub fn ty(&self) -> types::ValueTy {
        match self {
            ValueSpec::FromName { dim, .. } => types::ValueTy::Quantity(*dim),
            ValueSpec::Present { .. } => types::ValueTy::Truth,
            ValueSpec::Constant(v) => value_ty(v),
        }
    }
}

fn value_ty(v: &Value) -> types::ValueTy {
    match v {
        Value::Quantity { dim, .. } => types::ValueTy::Quantity(*dim),
        Value::Truth(_) => types::ValueTy::Truth,
    }
}

/// One check of a group.
#[derive(Debug, Clone)]
pub struct Check {
    /// id, unique in its group (the YAML key)
    pub id: String,
    /// the expression as written
    pub expr: String,
    /// error (default) or warning
    pub severity: Severity,
    /// shown when the check does not pass
    pub hint: Option<String>,
    /// line of the check in its rules file
    pub line: usize,
    ast: expr::Expr,
}

/// A drift limit: how far a quantity may move from the baseline.
#[derive(Debug, Clone)]
pub struct DriftRule {
    /// the quantity as written (`l(band.mid)`, `q_peak`)
    pub quantity: String,
    /// the limit as written (`1%`, `50pH`)
    pub limit_text: String,
    /// the limit
    pub limit: DriftLimit,
    ast: expr::Expr,
}

/// A drift limit's meaning.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum DriftLimit {
    /// |now − baseline| / |baseline| ≤ this (written with `%`)
    Relative(f64),
    /// |now − baseline| ≤ this, in SI units of the quantity
    Absolute(f64),
}

/// One group of `parts:`.
#[derive(Debug, Clone)]
pub struct Group {
    /// globs as written, relative to the library root
    pub select: Vec<String>,
    /// the declared kind, else inferred per part
    pub kind: Option<Kind>,
    /// the declared view, else the pipeline's default for the port count
    pub view: Option<ViewName>,
    /// port assignment for the views
    pub ports: PortMap,
    /// where the parts are used
    pub band: Option<Band>,
    /// values by name
    pub values: BTreeMap<String, ValueSpec>,
    /// checks, in file order
    pub checks: Vec<Check>,
    /// line of the group in its rules file
    pub line: usize,
    matcher: globset::GlobSet,
}

/// One rules file.
#[derive(Debug, Clone)]
pub struct RulesFile {
    /// path as given (or found in a folder given)
    pub path: String,
    /// blake3 of its bytes, hex
    pub hash: String,
    /// `suite:` title (the file stem when absent)
    pub suite: String,
    /// part groups in file order
    pub groups: Vec<Group>,
    /// drift limits in file order
    pub drift: Vec<DriftRule>,
}

/// Every rules file of a run, sorted by path.
#[derive(Debug, Clone, Default)]
pub struct RuleSet {
    /// the files
    pub files: Vec<RulesFile>,
}

/// A part's sidecar `NAME.part.yaml`: overrides of the band and values.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Sidecar {
    /// path as read
    pub path: String,
    /// the part's band, overriding its group's
    pub band: Option<Band>,
    /// values overriding (or adding to) the group's
    pub values: BTreeMap<String, Value>,
}

/// A group's band and values for one part.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Resolved {
    /// the band (sidecar first, then group)
    pub band: Option<Band>,
    /// values by name
    pub values: BTreeMap<String, Value>,
}

/// What a check is evaluated against.
pub struct EvalContext<'a> {
    /// the judged view's figures
    pub figures: &'a ViewFigures,
    /// the file's data checks
    pub data: &'a DataChecks,
    /// the part's band
    pub band: Option<Band>,
    /// the part's values
    pub values: &'a BTreeMap<String, Value>,
}

impl RuleSet {
    /// Every (file, group) whose `select` matches the part's relative path
    /// (`/`-separated), in file then group order.
    pub fn groups_for(&self, rel_path: &str) -> Vec<(&RulesFile, &Group)> {
        let mut out = Vec::new();
        for f in &self.files {
            for g in &f.groups {
                if g.matches(rel_path) {
                    out.push((f, g));
                }
            }
        }
        out
    }

    /// Path, hash and suite of every file, for the reports.
    pub fn infos(&self) -> Vec<RulesFileInfo> {
        self.files
            .iter()
            .map(|f| RulesFileInfo {
                path: f.path.clone(),
                hash: f.hash.clone(),
                suite: f.suite.clone(),
            })
            .collect()
    }

    /// Number of checks in all files.
    pub fn check_count(&self) -> usize {
        self.files
            .iter()
            .flat_map(|f| &f.groups)
            .map(|g| g.checks.len())
            .sum()
    }
}

impl Group {
    /// Whether the group selects this part (relative path, `/`-separated).
    pub fn matches(&self, rel_path: &str) -> bool {
        self.matcher.is_match(rel_path)
    }

    /// The band and values of one part: the group's specs applied to its file name,
    /// then the sidecar's overrides. Errors name the value and say what went wrong.
    pub fn resolve(&self, file_name: &str, sidecar: Option<&Sidecar>) -> Result<Resolved, String> {
        let mut values = BTreeMap::new();
        let overridden = |n: &str| sidecar.is_some_and(|s| s.values.contains_key(n));
        for (name, spec) in &self.values {
            if overridden(name) {
                continue;
            }
            let v = match spec {
                ValueSpec::Constant(v) => *v,
                ValueSpec::Present {
                    regex, when_found, ..
                } => Value::Truth(regex.is_match(file_name) == *when_found),
                ValueSpec::FromName {
                    pattern,
                    regex,
                    scale,
                    dim,
                    unit,
                } => {
                    let caps = regex.captures(file_name).ok_or_else(|| {
                        format!("value `{name}`: the pattern '{pattern}' does not match the file name `{file_name}`")
                    })?;
                    let text = caps
                        .get(1)
                        .or_else(|| caps.get(0))
                        .map(|m| m.as_str())
                        .unwrap_or("");
                    let x = read_name_number(text).ok_or_else(|| {
                        format!("value `{name}`: `{text}` (from `{file_name}`) is not a number like `1p2` or `1.2`")
                    })?;
                    let value = x * scale;
                    if !value.is_finite() {
                        return Err(format!("value `{name}`: `{text}{unit}` is out of range"));
                    }
                    Value::Quantity { value, dim: *dim }
                }
            };
            values.insert(name.clone(), v);
        }
        if let Some(s) = sidecar {
            for (name, v) in &s.values {
                if let Some(spec) = self.values.get(name) {
                    if spec.ty() != value_ty(v) {
                        return Err(format!(
                            "{}: value `{name}` is {} but its rules group makes it {}",
                            s.path,
                            describe_vt(value_ty(v)),
                            describe_vt(spec.ty())
                        ));
                    }
                }
                values.insert(name.clone(), *v);
            }
        }
        Ok(Resolved {
            band: sidecar.and_then(|s| s.band).or(self.band),
            values,
        })
    }
}

fn describe_vt(t: types::ValueTy) -> String {
    match t {
        types::ValueTy::Quantity(d) => format!("a {}", d.name()),
        types::ValueTy::Truth => "a true/false flag".into(),
    }
}

/// `1p2` → 1.2, `1.2` → 1.2, `15` → 15; None for anything else.
fn read_name_number(text: &str) -> Option<f64> {
    let t = text.replacen('p', ".", 1);
    let (v, rest) = units::split_number(&t)?;
    rest.is_empty().then_some(v)
}

impl Check {
    /// Evaluate against one part. `rules_file` is recorded in the outcome.
    pub fn evaluate(&self, ctx: &EvalContext, rules_file: &str) -> CheckOutcome {
        let t = eval::Ev { ctx }.truth(&self.ast, None);
        let status = match t.val {
            Some(true) => CheckStatus::Pass,
            Some(false) => CheckStatus::Fail,
            None => CheckStatus::Undecided,
        };
        CheckOutcome {
            id: self.id.clone(),
            rules_file: rules_file.to_string(),
            status,
            severity: self.severity,
            expr: self.expr.clone(),
            shown: t.shown,
            worst_f: t.worst_f.filter(|f| f.is_finite()),
            hint: self.hint.clone(),
            reason: if status == CheckStatus::Undecided {
                Some(t.reason.unwrap_or_else(|| "undecided".into()))
            } else {
                None
            },
        }
    }

    /// The parsed expression.
    pub fn ast(&self) -> &expr::Expr {
        &self.ast
    }
}

impl DriftRule {
    /// The quantity's value for one part (SI), None when it cannot be computed
    /// exactly (undefined, or known only by a bound).
    pub fn measure(&self, ctx: &EvalContext) -> Option<f64> {
        match (eval::Ev { ctx }).val(&self.ast, None) {
            Ok(eval::V::Num(iv, _)) if iv.lo == iv.hi && iv.lo.is_finite() => Some(iv.lo),
            _ => None,
        }
    }

    /// Compare a value now with its baseline: the change is relative for a `%`
    /// limit ((now − baseline)/|baseline|) and absolute otherwise; either side
    /// missing (or a zero baseline under a relative limit) is undecided.
    pub fn compare(&self, baseline: Option<f64>, now: Option<f64>) -> DriftOutcome {
        let b = baseline.filter(|x| x.is_finite());
        let n = now.filter(|x| x.is_finite());
        let (change, limit) = match (b, n, self.limit) {
            (Some(b), Some(n), DriftLimit::Relative(l)) if b != 0.0 => (Some((n - b) / b.abs()), l),
            (Some(b), Some(n), DriftLimit::Absolute(l)) => (Some(n - b), l),
            _ => (None, 0.0),
        };
        let change = change.filter(|c| c.is_finite());
        let status = match change {
            // a tiny allowance for rounding in the baseline file
            Some(c) if c.abs() <= limit * (1.0 + 1e-12) => CheckStatus::Pass,
            Some(_) => CheckStatus::Fail,
            None => CheckStatus::Undecided,
        };
        DriftOutcome {
            quantity: self.quantity.clone(),
            baseline: b,
            now: n,
            change,
            limit: self.limit_text.clone(),
            status,
        }
    }
}

/// `lcgate validate`: load and type-check, run nothing. Returns a short summary.
pub fn validate(paths: &[PathBuf]) -> Result<String, LoadError> {
    let set = load(paths)?;
    let mut out = String::new();
    for f in &set.files {
        let checks: usize = f.groups.iter().map(|g| g.checks.len()).sum();
        out.push_str(&format!(
            "{}: \"{}\": {} group{}, {} check{}, {} drift limit{}\n",
            f.path,
            f.suite,
            f.groups.len(),
            plural(f.groups.len()),
            checks,
            plural(checks),
            f.drift.len(),
            plural(f.drift.len())
        ));
    }
    let n = set.files.len();
    out.push_str(&format!(
        "ok: {n} rules file{} load and type-check ({} check{})\n",
        plural(n),
        set.check_count(),
        plural(set.check_count())
    ));
    Ok(out)
}

fn plural(n: usize) -> &'static str {
    if n == 1 {
        ""
    } else {
        "s"
    }
}
