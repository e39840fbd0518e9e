//! Type-checking of rule expressions at load: every name is known, every call is a
//! curve of the group's kind, and dimensions agree.
//!
//! Dimensions form a small algebra over two base units, the second and the ohm:
//! frequency = s⁻¹, inductance = Ω·s, capacitance = s/Ω, resistance = Ω, time = s,
//! ratio = 1. Products and quotients multiply and divide dimensions (`l * q` is an
//! inductance, `2 * band.hi` a frequency, `1 / srf` a time); sums, differences and
//! comparisons need equal dimensions; `within` takes a ratio (relative) or a
//! tolerance of the value's own dimension (absolute).
//!
//! A curve called with a band (`q(band)`, `q(24GHz .. 30GHz)`) is *swept*: it has a
//! value at every sweep point of the band, and so does arithmetic on it. A
//! comparison of swept values is a single truth (it must hold at every point);
//! `min`, `max`, `mean` turn a swept value into one number.

use std::collections::BTreeMap;

use super::expr::{BinOp, Expr, ExprError, ExprKind, Span};
use super::suggest::nearest;
use crate::figures::{self, Kind};
use crate::units::Dim;

/// Exponents of (second, ohm).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Dims(pub i8, pub i8);

impl Dims {
    /// The exponents of a named dimension.
    pub fn of(d: Dim) -> Dims {
        match d {
            Dim::Frequency => Dims(-1, 0),
            Dim::Inductance => Dims(1, 1),
            Dim::Capacitance => Dims(1, -1),
            Dim::Resistance => Dims(0, 1),
            Dim::Ratio => Dims(0, 0),
            Dim::Time => Dims(1, 0),
        }
    }
    /// The named dimension with these exponents, if there is one.
    pub fn named(self) -> Option<Dim> {
        [
            Dim::Frequency,
            Dim::Inductance,
            Dim::Capacitance,
            Dim::Resistance,
            Dim::Ratio,
            Dim::Time,
        ]
        .into_iter()
        .find(|d| Dims::of(*d) == self)
    }
    fn mul(self, o: Dims) -> Dims {
        Dims(self.0.saturating_add(o.0), self.1.saturating_add(o.1))
    }
    fn div(self, o: Dims) -> Dims {
        Dims(self.0.saturating_sub(o.0), self.1.saturating_sub(o.1))
    }
    /// Name for messages: "frequency", or "s^2·ohm^-1" for unnamed products.
    pub fn describe(self) -> String {
        if let Some(d) = self.named() {
            return d.name().to_string();
        }
        let mut parts = Vec::new();
        for (e, u) in [(self.0, "s"), (self.1, "ohm")] {
            match e {
                0 => {}
                1 => parts.push(u.to_string()),
                _ => parts.push(format!("{u}^{e}")),
            }
        }
        format!("quantity in {}", parts.join("·"))
    }
    /// Unit symbol for printing values (empty for ratios and unnamed products).
    pub fn symbol(self) -> &'static str {
        self.named().map(|d| d.symbol()).unwrap_or("")
    }
}

/// What an expression evaluates to.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Base {
    /// a number of the given dimension
    Quantity(Dims),
    /// true or false
    Truth,
    /// `conductor`, `substrate` or `resonance`
    Mechanism,
    /// a band of frequencies (`band`, `lo .. hi`), only as a call argument
    Band,
}

/// Type of an expression: its base and whether it varies over a band.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Ty {
    /// what
    pub base: Base,
    /// has one value per sweep point of a band
    pub swept: bool,
}

impl Ty {
    fn q(d: Dims) -> Ty {
        Ty {
            base: Base::Quantity(d),
            swept: false,
        }
    }
    fn truth() -> Ty {
        Ty {
            base: Base::Truth,
            swept: false,
        }
    }
    /// Description for messages.
    pub fn describe(self) -> String {
        let b = match self.base {
            Base::Quantity(d) => d.describe(),
            Base::Truth => "truth".into(),
            Base::Mechanism => "mechanism".into(),
            Base::Band => "band".into(),
        };
        if self.swept {
            format!("{b} over a band")
        } else {
            b
        }
    }
}

/// The type of a group value (from the `values:` section).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ValueTy {
    /// a number of this dimension
    Quantity(Dim),
    /// a flag
    Truth,
}

/// What the checker knows about the place an expression is used.
pub struct Scope<'a> {
    /// the group's declared kind (None: inferred per part, so any kind's figure is allowed)
    pub kind: Option<Kind>,
    /// the group's values and their types
    pub values: &'a BTreeMap<String, ValueTy>,
}

/// Names that are not figures but may appear in expressions.
pub const BAND_NAMES: [&str; 4] = ["band", "band.lo", "band.hi", "band.mid"];
/// Mechanism-valued names.
pub const MECHANISM_CURVE: &str = "mechanism";
/// Mechanism at f_q_half.
pub const Q_DROP_CAUSE: &str = "q_drop_cause";

fn kinds_text(kinds: &[Kind]) -> String {
    let v: Vec<_> = kinds.iter().map(|k| k.as_str()).collect();
    v.join(" and ")
}

fn kind_ok(name: &str, kinds: &[Kind], scope: &Scope, span: Span) -> Result<(), ExprError> {
    if let Some(k) = scope.kind {
        if !kinds.contains(&k) {
            return Err(ExprError::new(
                span,
                format!(
                    "`{name}` is not defined for a {}: it is a figure of {} parts",
                    k.as_str(),
                    kinds_text(kinds)
                ),
            ));
        }
    }
    Ok(())
}

/// Every name usable as a scalar in this scope, for suggestions.
fn scalar_names(scope: &Scope) -> Vec<String> {
    let mut v: Vec<String> = figures::CATALOGUE
        .iter()
        .filter(|f| !f.curve)
        .map(|f| f.name.to_string())
        .collect();
    v.extend(BAND_NAMES.iter().map(|s| s.to_string()));
    v.push(Q_DROP_CAUSE.into());
    v.extend(["conductor", "substrate", "resonance"].map(String::from));
    v.extend(scope.values.keys().cloned());
    v
}

fn curve_names() -> Vec<String> {
    let mut v: Vec<String> = figures::CATALOGUE
        .iter()
        .filter(|f| f.curve)
        .map(|f| f.name.to_string())
        .collect();
    v.extend(["min", "max", "mean", MECHANISM_CURVE].map(String::from));
    v
}

fn did_you_mean(word: &str, names: &[String]) -> String {
    match nearest(word, names.iter().map(|s| s.as_str())) {
        Some(n) => format!("; did you mean `{n}`?"),
        None => String::new(),
    }
}

/// Type of `e` in `scope`, or the first error found.
pub fn check(e: &Expr, scope: &Scope) -> Result<Ty, ExprError> {
    match &e.kind {
        ExprKind::Num { dim, .. } => Ok(Ty::q(Dims::of(*dim))),
        ExprKind::Word(_) => Ok(Ty {
            base: Base::Mechanism,
            swept: false,
        }),
        ExprKind::Name(n) => name_type(n, e.span, scope),
        ExprKind::Range(a, b) => {
            for x in [a, b] {
                let t = check(x, scope)?;
                if t != Ty::q(Dims::of(Dim::Frequency)) {
                    return Err(ExprError::new(
                        x.span,
                        format!("a band's edges are frequencies; this is a {}", t.describe()),
                    ));
                }
            }
            Ok(Ty {
                base: Base::Band,
                swept: false,
            })
        }
        ExprKind::Call {
            func,
            func_span,
            arg,
        } => {
            let at = check(arg, scope)?;
            let swept = match at {
                Ty {
                    base: Base::Band,
                    swept: false,
                } => true,
                Ty {
                    base: Base::Quantity(d),
                    swept: false,
                } if d == Dims::of(Dim::Frequency) => false,
                t => {
                    return Err(ExprError::new(
                        arg.span,
                        format!(
                            "`{func}(…)` takes a frequency or a band (`band`, `24GHz .. 30GHz`); this is a {}",
                            t.describe()
                        ),
                    ))
                }
            };
            if func == MECHANISM_CURVE {
                kind_ok(func, &[Kind::Inductor], scope, *func_span)?;
                return Ok(Ty {
                    base: Base::Mechanism,
                    swept,
                });
            }
            match figures::info(func) {
                Some(info) if info.curve => {
                    kind_ok(func, info.kinds, scope, *func_span)?;
                    Ok(Ty {
                        base: Base::Quantity(Dims::of(info.dim)),
                        swept,
                    })
                }
                Some(_) => Err(ExprError::new(
                    *func_span,
                    format!(
                        "`{func}` is a single number, not a curve: write `{func}` without `(…)`"
                    ),
                )),
                None => Err(ExprError::new(
                    *func_span,
                    format!(
                        "unknown curve `{func}`{}",
                        did_you_mean(func, &curve_names())
                    ),
                )),
            }
        }
        ExprKind::Agg { op, arg } => {
            let t = check(arg, scope)?;
            match t {
                Ty {
                    base: Base::Quantity(d),
                    swept: true,
                } => Ok(Ty::q(d)),
                t => Err(ExprError::new(
                    arg.span,
                    format!(
                        "`{}(…)` takes a curve over a band, e.g. `{}(q(band))`; this is a {}",
                        op.as_str(),
                        op.as_str(),
                        t.describe()
                    ),
                )),
            }
        }
        ExprKind::Neg(x) => {
            let t = check(x, scope)?;
            match t.base {
                Base::Quantity(_) => Ok(t),
                _ => Err(ExprError::new(
                    x.span,
                    format!("`-` needs a number; this is a {}", t.describe()),
                )),
            }
        }
        ExprKind::Not(x) => {
            let t = check(x, scope)?;
            if t.base != Base::Truth {
                return Err(ExprError::new(
                    x.span,
                    format!("`not` needs a truth; this is a {}", t.describe()),
                ));
            }
            Ok(t)
        }
        ExprKind::Binary { op, lhs, rhs } => {
            let (lt, rt) = (check(lhs, scope)?, check(rhs, scope)?);
            binary_type(*op, lhs, lt, rhs, rt, e.span)
        }
        ExprKind::Within { value, tol, target } => {
            let vt = check(value, scope)?;
            let tt = check(tol, scope)?;
            let gt = check(target, scope)?;
            let Base::Quantity(vd) = vt.base else {
                return Err(ExprError::new(
                    value.span,
                    format!("`within` compares numbers; this is a {}", vt.describe()),
                ));
            };
            if gt.base != Base::Quantity(vd) {
                return Err(ExprError::new(
                    target.span,
                    format!(
                        "`{}` is a {} but its target is a {}",
                        super::expr::print(value),
                        vt.describe(),
                        gt.describe()
                    ),
                ));
            }
            match tt {
                Ty {
                    base: Base::Quantity(td),
                    swept: false,
                } if td == Dims(0, 0) || td == vd => {}
                t => {
                    return Err(ExprError::new(
                        tol.span,
                        format!(
                            "the tolerance of `within` is a ratio (`3%`, relative) or a {} (absolute); this is a {}",
                            vd.describe(),
                            t.describe()
                        ),
                    ))
                }
            }
            Ok(Ty::truth())
        }
    }
}

fn name_type(n: &str, span: Span, scope: &Scope) -> Result<Ty, ExprError> {
    if n == "band" {
        return Ok(Ty {
            base: Base::Band,
            swept: false,
        });
    }
    if BAND_NAMES.contains(&n) {
        return Ok(Ty::q(Dims::of(Dim::Frequency)));
    }
    if n == Q_DROP_CAUSE {
        kind_ok(n, &[Kind::Inductor], scope, span)?;
        return Ok(Ty {
            base: Base::Mechanism,
            swept: false,
        });
    }
    if let Some(v) = scope.values.get(n) {
        return Ok(match v {
            ValueTy::Quantity(d) => Ty::q(Dims::of(*d)),
            ValueTy::Truth => Ty::truth(),
        });
    }
    if let Some(info) = figures::info(n) {
        if info.curve {
            return Err(ExprError::new(
                span,
                format!("`{n}` is a curve: give it a frequency or a band, e.g. `{n}(band.mid)` or `{n}(band)`"),
            ));
        }
        kind_ok(n, info.kinds, scope, span)?;
        return Ok(Ty::q(Dims::of(info.dim)));
    }
    if n == MECHANISM_CURVE {
        return Err(ExprError::new(
            span,
            "`mechanism` is a curve: write `mechanism(band.mid)` or `mechanism(band)`",
        ));
    }
    if n.starts_with("band.") {
        return Err(ExprError::new(
            span,
            format!(
                "unknown name `{n}`; a band has `band.lo`, `band.hi` and `band.mid`{}",
                did_you_mean(n, &BAND_NAMES.map(String::from))
            ),
        ));
    }
    let mut all = scalar_names(scope);
    all.extend(curve_names());
    Err(ExprError::new(
        span,
        format!("unknown name `{n}`{}", did_you_mean(n, &all)),
    ))
}

fn binary_type(
    op: BinOp,
    lhs: &Expr,
    lt: Ty,
    rhs: &Expr,
    rt: Ty,
    span: Span,
) -> Result<Ty, ExprError> {
    let swept = lt.swept || rt.swept;
    let need_quantity = |x: &Expr, t: Ty| -> Result<Dims, ExprError> {
        match t.base {
            Base::Quantity(d) => Ok(d),
            _ => Err(ExprError::new(
                x.span,
                format!(
                    "`{}` needs numbers; this is a {}",
                    op.as_str(),
                    t.describe()
                ),
            )),
        }
    };
    match op {
        BinOp::Add | BinOp::Sub => {
            let (a, b) = (need_quantity(lhs, lt)?, need_quantity(rhs, rt)?);
            if a != b {
                return Err(ExprError::new(
                    span,
                    format!(
                        "cannot {} a {} and a {}",
                        if op == BinOp::Add { "add" } else { "subtract" },
                        a.describe(),
                        b.describe()
                    ),
                ));
            }
            Ok(Ty {
                base: Base::Quantity(a),
                swept,
            })
        }
        BinOp::Mul | BinOp::Div => {
            let (a, b) = (need_quantity(lhs, lt)?, need_quantity(rhs, rt)?);
            let d = if op == BinOp::Mul { a.mul(b) } else { a.div(b) };
            Ok(Ty {
                base: Base::Quantity(d),
                swept,
            })
        }
        BinOp::Lt | BinOp::Le | BinOp::Gt | BinOp::Ge | BinOp::Eq | BinOp::Ne => {
            let ordered = !matches!(op, BinOp::Eq | BinOp::Ne);
            match (lt.base, rt.base) {
                (Base::Quantity(a), Base::Quantity(b)) if a == b => Ok(Ty::truth()),
                (Base::Quantity(a), Base::Quantity(b)) => Err(ExprError::new(
                    span,
                    format!(
                        "cannot compare a {} with a {}: `{}` is a {}, `{}` is a {}",
                        a.describe(),
                        b.describe(),
                        super::expr::print(lhs),
                        a.describe(),
                        super::expr::print(rhs),
                        b.describe()
                    ),
                )),
                (Base::Mechanism, Base::Mechanism) if !ordered => Ok(Ty::truth()),
                (Base::Truth, Base::Truth) if !ordered && !swept => Ok(Ty::truth()),
                (Base::Mechanism, Base::Mechanism) => Err(ExprError::new(
                    span,
                    "mechanisms have no order: compare them with `==` or `!=`",
                )),
                (a, b) => Err(ExprError::new(
                    span,
                    format!(
                        "cannot compare a {} with a {}",
                        Ty {
                            base: a,
                            swept: lt.swept
                        }
                        .describe(),
                        Ty {
                            base: b,
                            swept: rt.swept
                        }
                        .describe()
                    ),
                )),
            }
        }
        BinOp::And | BinOp::Or => {
            for (x, t) in [(lhs, lt), (rhs, rt)] {
                if t.base != Base::Truth {
                    return Err(ExprError::new(
                        x.span,
                        format!(
                            "`{}` joins truths (comparisons); this is a {}",
                            op.as_str(),
                            t.describe()
                        ),
                    ));
                }
            }
            Ok(Ty::truth())
        }
    }
}

#[cfg(test)]
mod tests {
    use super::super::expr::parse;
    use super::*;

    fn ty(src: &str, kind: Option<Kind>) -> Result<Ty, ExprError> {
        let mut values = BTreeMap::new();
        values.insert("l_target".to_string(), ValueTy::Quantity(Dim::Inductance));
        values.insert("shielded".to_string(), ValueTy::Truth);
        let scope = Scope {
            kind,
            values: &values,
        };
        let e = parse(src).unwrap_or_else(|e| panic!("{src}: {e:?}"));
        check(&e, &scope)
    }

    #[test]
    fn good_expressions_type_as_truths() {
        for src in [
            "srf >= 2 * band.hi",
            "q(band) >= 12",
            "l(band.mid) within 3% of l_target",
            "l(band.mid) within 50pH of l_target",
            "shield_gain(band) <= 1.05 or shielded",
            "mechanism(band) != substrate",
            "q_drop_cause == resonance",
            "min(q(band)) * 2 > q_peak",
            "l(band) * q(band) > 10nH",
            "1 / srf < 1ns",
            "not shielded",
            "srf - band.hi > 1GHz and f_q_peak < band.lo",
            "q(24GHz .. 30GHz) > 5",
            "passivity_margin >= 0 and points >= 101",
            "mean(r(band)) < 5ohm",
        ] {
            assert_eq!(
                ty(src, Some(Kind::Inductor)).map_err(|e| format!("{src}: {e:?}")),
                Ok(Ty::truth())
            );
        }
    }

    #[test]
    fn dimension_errors_point_at_the_expression() {
        let e = ty("srf >= 1nH", Some(Kind::Inductor)).unwrap_err();
        assert_eq!(e.span, (0, 10));
        assert!(
            e.message
                .contains("cannot compare a frequency with an inductance"),
            "{}",
            e.message
        );
        let e = ty("srf + 1nH > 1GHz", None).unwrap_err();
        assert!(
            e.message
                .contains("cannot add a frequency and an inductance"),
            "{}",
            e.message
        );
        let e = ty("l(band.mid) within 3GHz of l_target", None).unwrap_err();
        assert_eq!(e.span.0, 19);
        let e = ty("q(1nH) > 3", None).unwrap_err();
        assert_eq!(e.span, (2, 5));
        let e = ty("min(q(band.mid)) > 3", None).unwrap_err();
        assert!(e.message.contains("curve over a band"), "{}", e.message);
        let e = ty("mechanism(band) < substrate", None).unwrap_err();
        assert!(e.message.contains("no order"));
        let e = ty("srf and shielded", None).unwrap_err();
        assert_eq!(e.span, (0, 3));
    }

    #[test]
    fn unknown_names_suggest_the_nearest() {
        let e = ty("sfr >= 1GHz", None).unwrap_err();
        assert!(e.message.contains("did you mean `srf`"), "{}", e.message);
        let e = ty("qtank(band) > 1", None).unwrap_err();
        assert!(e.message.contains("did you mean `q_tank`"), "{}", e.message);
        let e = ty("l(band.middle) > 1nH", None).unwrap_err();
        assert!(e.message.contains("band.mid"), "{}", e.message);
        let e = ty("l_targte > 1nH", None).unwrap_err();
        assert!(e.message.contains("`l_target`"), "{}", e.message);
        let e = ty("q > 1", None).unwrap_err();
        assert!(e.message.contains("is a curve"), "{}", e.message);
        let e = ty("srf(band) > 1GHz", None).unwrap_err();
        assert!(e.message.contains("single number"), "{}", e.message);
    }

    #[test]
    fn figures_of_another_kind_are_refused() {
        let e = ty("c(band.mid) > 1pF", Some(Kind::Inductor)).unwrap_err();
        assert!(
            e.message.contains("not defined for an inductor"),
            "{}",
            e.message
        );
        assert!(ty("c(band.mid) > 1pF", Some(Kind::Capacitor)).is_ok());
        assert!(ty("c(band.mid) > 1pF", None).is_ok());
        assert!(ty("k(band) > 0.7", Some(Kind::Transformer)).is_ok());
        assert!(ty("q_drop_cause == resonance", Some(Kind::Capacitor)).is_err());
    }

    #[test]
    fn dims_describe_products() {
        assert_eq!(Dims(2, 0).describe(), "quantity in s^2");
        assert_eq!(
            Dims::of(Dim::Inductance).mul(Dims::of(Dim::Frequency)),
            Dims::of(Dim::Resistance)
        );
    }
}
