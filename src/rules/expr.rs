//! The expression language of the rules (DESIGN §7): tokens, the syntax tree with
//! byte spans, the parser and the printer.
//!
//! Grammar, lowest precedence first (every binary operator is left-associative;
//! comparisons do not chain):
//!
//! ```text
//! expr    := or
//! or      := and ("or" and)*
//! and     := not ("and" not)*
//! not     := "not" not | compare
//! compare := sum (("<" | "<=" | ">" | ">=" | "==" | "!=") sum
//!                 | "within" sum "of" sum)?
//! sum     := product (("+" | "-") product)*
//! product := unary (("*" | "/") unary)*
//! unary   := "-" unary | primary
//! primary := NUMBER UNIT? | NAME | NAME "(" arg ")" | "(" expr ")"
//!          | "conductor" | "substrate" | "resonance"
//! arg     := sum (".." sum)?          (a frequency, `band`, or `lo .. hi`)
//! ```
//!
//! Names may contain dots (`band.lo`). The parser has no recursion that input can
//! drive beyond [`MAX_DEPTH`] levels, expressions are at most [`MAX_LEN`] bytes, and
//! trees are at most [`MAX_DEPTH`] high, so hostile text gives an error, never a
//! stack overflow. Nothing is ever executed: the tree is only type-checked and
//! evaluated by [`super::eval`].

use std::fmt::Write as _;

use crate::model::Mechanism;
use crate::units::{self, Dim};

/// Longest expression accepted, in bytes.
pub const MAX_LEN: usize = 4096;
/// Deepest nesting accepted (parentheses, `not`, unary minus, calls and the height
/// of the tree built from chains of operators).
pub const MAX_DEPTH: usize = 64;

/// Byte range `[start, end)` in the expression text.
pub type Span = (usize, usize);

/// A syntax error or type error at a byte range of the expression text.
#[derive(Debug, Clone, PartialEq)]
pub struct ExprError {
    /// where
    pub span: Span,
    /// what is wrong, and what was expected
    pub message: String,
}

impl ExprError {
    pub(crate) fn new(span: Span, message: impl Into<String>) -> ExprError {
        ExprError {
            span,
            message: articles(&message.into()),
        }
    }
}

/// Binary operators.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum BinOp {
    /// `+`
    Add,
    /// `-`
    Sub,
    /// `*`
    Mul,
    /// `/`
    Div,
    /// `<`
    Lt,
    /// `<=`
    Le,
    /// `>`
    Gt,
    /// `>=`
    Ge,
    /// `==`
    Eq,
    /// `!=`
    Ne,
    /// `and`
    And,
    /// `or`
    Or,
}

impl BinOp {
    /// The operator as written.
    pub fn as_str(self) -> &'static str {
        match self {
            BinOp::Add => "+",
            BinOp::Sub => "-",
            BinOp::Mul => "*",
            BinOp::Div => "/",
            BinOp::Lt => "<",
            BinOp::Le => "<=",
            BinOp::Gt => ">",
            BinOp::Ge => ">=",
            BinOp::Eq => "==",
            BinOp::Ne => "!=",
            BinOp::And => "and",
            BinOp::Or => "or",
        }
    }
    /// Binding strength: higher binds tighter.
    pub(crate) fn prec(self) -> u8 {
        match self {
            BinOp::Or => 1,
            BinOp::And => 2,
            BinOp::Lt | BinOp::Le | BinOp::Gt | BinOp::Ge | BinOp::Eq | BinOp::Ne => 4,
            BinOp::Add | BinOp::Sub => 5,
            BinOp::Mul | BinOp::Div => 6,
        }
    }
    /// A comparison operator.
    pub fn is_comparison(self) -> bool {
        self.prec() == 4
    }
}

/// `min`, `max`, `mean` of a curve over a band.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Agg {
    /// smallest value
    Min,
    /// largest value
    Max,
    /// trapezoidal mean over frequency
    Mean,
}

impl Agg {
    /// Name as written.
    pub fn as_str(self) -> &'static str {
        match self {
            Agg::Min => "min",
            Agg::Max => "max",
            Agg::Mean => "mean",
        }
    }
    fn parse(s: &str) -> Option<Agg> {
        match s {
            "min" => Some(Agg::Min),
            "max" => Some(Agg::Max),
            "mean" => Some(Agg::Mean),
            _ => None,
        }
    }
}

/// A node of the syntax tree.
#[derive(Debug, Clone)]
pub struct Expr {
    /// what it is
    pub kind: ExprKind,
    /// where it is in the expression text
    pub span: Span,
}

/// The kinds of node.
#[derive(Debug, Clone)]
pub enum ExprKind {
    /// A literal: SI value, its dimension and the text as written (kept for printing).
    Num {
        /// value in SI base units (3% is 0.03)
        value: f64,
        /// its dimension
        dim: Dim,
        /// as written
        text: String,
    },
    /// A figure, a group value, `band`, `band.lo`/`band.hi`/`band.mid`, `q_drop_cause`.
    Name(String),
    /// `conductor`, `substrate`, `resonance`
    Word(Mechanism),
    /// `lo .. hi` (only as the argument of a call)
    Range(Box<Expr>, Box<Expr>),
    /// `name(arg)`: a curve or `mechanism`
    Call {
        /// curve name
        func: String,
        /// span of the name
        func_span: Span,
        /// a frequency or a band
        arg: Box<Expr>,
    },
    /// `min(…)`, `max(…)`, `mean(…)`
    Agg {
        /// which
        op: Agg,
        /// a curve over a band
        arg: Box<Expr>,
    },
    /// `-x`
    Neg(Box<Expr>),
    /// `not x`
    Not(Box<Expr>),
    /// `a op b`
    Binary {
        /// operator
        op: BinOp,
        /// left operand
        lhs: Box<Expr>,
        /// right operand
        rhs: Box<Expr>,
    },
    /// `a within tol of b`
    Within {
        /// the value checked
        value: Box<Expr>,
        /// the tolerance: a ratio (relative) or a quantity of the value's dimension
        tol: Box<Expr>,
        /// the target
        target: Box<Expr>,
    },
}

impl Expr {
    /// Height of the tree (a leaf is 1). Bounded by [`MAX_DEPTH`] for parsed trees.
    pub fn height(&self) -> usize {
        1 + match &self.kind {
            ExprKind::Num { .. } | ExprKind::Name(_) | ExprKind::Word(_) => 0,
            ExprKind::Range(a, b) | ExprKind::Binary { lhs: a, rhs: b, .. } => {
                a.height().max(b.height())
            }
            ExprKind::Call { arg, .. } | ExprKind::Agg { arg, .. } => arg.height(),
            ExprKind::Neg(e) | ExprKind::Not(e) => e.height(),
            ExprKind::Within { value, tol, target } => {
                value.height().max(tol.height()).max(target.height())
            }
        }
    }

    /// Structural equality, ignoring spans (used by the print/parse property test).
    pub fn same(&self, other: &Expr) -> bool {
        use ExprKind as K;
        match (&self.kind, &other.kind) {
            (K::Num { text: a, .. }, K::Num { text: b, .. }) => a == b,
            (K::Name(a), K::Name(b)) => a == b,
            (K::Word(a), K::Word(b)) => a == b,
            (K::Range(a1, b1), K::Range(a2, b2)) => a1.same(a2) && b1.same(b2),
            (
                K::Call {
                    func: f1, arg: a1, ..
                },
                K::Call {
                    func: f2, arg: a2, ..
                },
            ) => f1 == f2 && a1.same(a2),
            (K::Agg { op: o1, arg: a1 }, K::Agg { op: o2, arg: a2 }) => o1 == o2 && a1.same(a2),
            (K::Neg(a), K::Neg(b)) | (K::Not(a), K::Not(b)) => a.same(b),
            (
                K::Binary {
                    op: o1,
                    lhs: l1,
                    rhs: r1,
                },
                K::Binary {
                    op: o2,
                    lhs: l2,
                    rhs: r2,
                },
            ) => o1 == o2 && l1.same(l2) && r1.same(r2),
            (
                K::Within {
                    value: v1,
                    tol: t1,
                    target: g1,
                },
                K::Within {
                    value: v2,
                    tol: t2,
                    target: g2,
                },
            ) => v1.same(v2) && t1.same(t2) && g1.same(g2),
            _ => false,
        }
    }
}

/// "a inductance" → "an inductance": messages put dimension and kind names after
/// "a", and some of those start with a vowel.
pub(crate) fn articles(m: &str) -> String {
    let mut out = String::with_capacity(m.len() + 8);
    let mut rest = m;
    while let Some(i) = rest.find("a ") {
        let at_word_start = i == 0
            || !rest.as_bytes()[i - 1].is_ascii_alphanumeric() && rest.as_bytes()[i - 1] != b'`';
        let next = rest[i + 2..].chars().next();
        out.push_str(&rest[..i]);
        if at_word_start && next.is_some_and(|c| "aeio".contains(c)) {
            out.push_str("an ");
        } else {
            out.push_str("a ");
        }
        rest = &rest[i + 2..];
    }
    out.push_str(rest);
    out
}

// ---------------------------------------------------------------- tokens

#[derive(Debug, Clone, PartialEq)]
enum Tok {
    Num { value: f64, dim: Dim, text: String },
    Ident(String),
    Op(&'static str),
    LParen,
    RParen,
    DotDot,
    End,
}

fn describe(t: &Tok) -> String {
    match t {
        Tok::Num { text, .. } => format!("the number `{text}`"),
        Tok::Ident(s) => format!("`{s}`"),
        Tok::Op(s) => format!("`{s}`"),
        Tok::LParen => "`(`".into(),
        Tok::RParen => "`)`".into(),
        Tok::DotDot => "`..`".into(),
        Tok::End => "the end of the expression".into(),
    }
}

fn is_ident_start(c: char) -> bool {
    c.is_ascii_alphabetic() || c == '_'
}
fn is_ident_char(c: char) -> bool {
    c.is_ascii_alphanumeric() || c == '_'
}

fn lex(src: &str) -> Result<Vec<(Tok, Span)>, ExprError> {
    let b = src.as_bytes();
    let mut out = Vec::new();
    let mut i = 0;
    while i < b.len() {
        let c = src[i..].chars().next().unwrap_or(' ');
        if c.is_whitespace() {
            i += c.len_utf8();
            continue;
        }
        let start = i;
        if c.is_ascii_digit() || (c == '.' && b.get(i + 1).is_some_and(|d| d.is_ascii_digit())) {
            // number: digits [. digits] [e[+-]digits]; a '.' followed by '.' is a range
            while i < b.len() && b[i].is_ascii_digit() {
                i += 1;
            }
            if i < b.len() && b[i] == b'.' && b.get(i + 1) != Some(&b'.') {
                i += 1;
                while i < b.len() && b[i].is_ascii_digit() {
                    i += 1;
                }
            }
            if i < b.len() && (b[i] == b'e' || b[i] == b'E') {
                let mut j = i + 1;
                if j < b.len() && (b[j] == b'+' || b[j] == b'-') {
                    j += 1;
                }
                if j < b.len() && b[j].is_ascii_digit() {
                    while j < b.len() && b[j].is_ascii_digit() {
                        j += 1;
                    }
                    i = j;
                }
            }
            let num_end = i;
            // unit: letters, %, Ω, µ written right after the number
            while i < b.len() {
                let u = src[i..].chars().next().unwrap_or(' ');
                if u.is_ascii_alphabetic() || u == '%' || u == 'Ω' || u == 'µ' || u == 'μ' {
                    i += u.len_utf8();
                } else {
                    break;
                }
            }
            let text = &src[start..i];
            let unit = &src[num_end..i];
            let (value, dim) = if unit == "dB" {
                let v: f64 = src[start..num_end]
                    .parse()
                    .map_err(|_| ExprError::new((start, i), format!("`{text}` is not a number")))?;
                (v, Dim::Ratio)
            } else {
                units::parse_quantity(text)
                    .map_err(|e| ExprError::new((start, i), e.to_string()))?
            };
            if !value.is_finite() {
                return Err(ExprError::new(
                    (start, i),
                    format!("`{text}` is not finite"),
                ));
            }
            out.push((
                Tok::Num {
                    value,
                    dim,
                    text: text.to_string(),
                },
                (start, i),
            ));
            continue;
        }
        if is_ident_start(c) {
            // name, with dotted parts (`band.lo`) but not a range `..`
            loop {
                while i < b.len() && is_ident_char(b[i] as char) {
                    i += 1;
                }
                if i + 1 < b.len() && b[i] == b'.' && is_ident_start(b[i + 1] as char) {
                    i += 1;
                    continue;
                }
                break;
            }
            out.push((Tok::Ident(src[start..i].to_string()), (start, i)));
            continue;
        }
        let two = src.get(i..i + 2).unwrap_or("");
        let (tok, len) = match two {
            "<=" => (Tok::Op("<="), 2),
            ">=" => (Tok::Op(">="), 2),
            "==" => (Tok::Op("=="), 2),
            "!=" => (Tok::Op("!="), 2),
            ".." => (Tok::DotDot, 2),
            _ => match c {
                '<' => (Tok::Op("<"), 1),
                '>' => (Tok::Op(">"), 1),
                '+' => (Tok::Op("+"), 1),
                '-' => (Tok::Op("-"), 1),
                '*' | '×' => (Tok::Op("*"), c.len_utf8()),
                '/' => (Tok::Op("/"), 1),
                '(' => (Tok::LParen, 1),
                ')' => (Tok::RParen, 1),
                '=' => {
                    return Err(ExprError::new(
                        (i, i + 1),
                        "`=` is not an operator here; write `==` to compare",
                    ))
                }
                '&' | '|' | '!' => {
                    return Err(ExprError::new(
                        (i, i + c.len_utf8()),
                        format!("`{c}` is not an operator here; write `and`, `or`, `not`"),
                    ))
                }
                _ => {
                    return Err(ExprError::new(
                        (i, i + c.len_utf8()),
                        format!("unexpected character `{c}`"),
                    ))
                }
            },
        };
        out.push((tok, (i, i + len)));
        i += len;
    }
    out.push((Tok::End, (src.len(), src.len())));
    Ok(out)
}

// ---------------------------------------------------------------- parser

struct Parser {
    toks: Vec<(Tok, Span)>,
    pos: usize,
    depth: usize,
}

const KEYWORDS: [&str; 5] = ["and", "or", "not", "within", "of"];

fn word(s: &str) -> Option<Mechanism> {
    match s {
        "conductor" => Some(Mechanism::Conductor),
        "substrate" => Some(Mechanism::Substrate),
        "resonance" => Some(Mechanism::Resonance),
        _ => None,
    }
}

fn join(a: Span, b: Span) -> Span {
    (a.0.min(b.0), a.1.max(b.1))
}

impl Parser {
    fn peek(&self) -> &Tok {
        &self.toks[self.pos.min(self.toks.len() - 1)].0
    }
    fn span(&self) -> Span {
        self.toks[self.pos.min(self.toks.len() - 1)].1
    }
    fn bump(&mut self) -> (Tok, Span) {
        let t = self.toks[self.pos.min(self.toks.len() - 1)].clone();
        if self.pos < self.toks.len() - 1 {
            self.pos += 1;
        }
        t
    }
    fn is_kw(&self, kw: &str) -> bool {
        matches!(self.peek(), Tok::Ident(s) if s == kw)
    }
    /// One level deeper; `at` is the token that opened the level.
    fn enter(&mut self, at: Span) -> Result<(), ExprError> {
        self.depth += 1;
        if self.depth > MAX_DEPTH {
            return Err(ExprError::new(
                at,
                format!("the expression nests more than {MAX_DEPTH} levels deep"),
            ));
        }
        Ok(())
    }
    fn leave(&mut self) {
        self.depth -= 1;
    }
    fn node(&self, kind: ExprKind, span: Span) -> Result<Expr, ExprError> {
        let e = Expr { kind, span };
        // chains of operators build tall trees without recursion in the parser; keep
        // them within the same bound so that every later walk of the tree is bounded
        if e.height() > MAX_DEPTH {
            return Err(ExprError::new(
                span,
                format!("the expression nests more than {MAX_DEPTH} levels deep (split it into several checks)"),
            ));
        }
        Ok(e)
    }

    fn expr(&mut self) -> Result<Expr, ExprError> {
        self.binary_level(BinOp::Or.prec())
    }

    /// or / and levels, left-associative loops.
    fn binary_level(&mut self, prec: u8) -> Result<Expr, ExprError> {
        if prec == BinOp::Or.prec() {
            let mut lhs = self.binary_level(BinOp::And.prec())?;
            while self.is_kw("or") {
                self.bump();
                let rhs = self.binary_level(BinOp::And.prec())?;
                let span = join(lhs.span, rhs.span);
                lhs = self.node(
                    ExprKind::Binary {
                        op: BinOp::Or,
                        lhs: Box::new(lhs),
                        rhs: Box::new(rhs),
                    },
                    span,
                )?;
            }
            Ok(lhs)
        } else {
            let mut lhs = self.not()?;
            while self.is_kw("and") {
                self.bump();
                let rhs = self.not()?;
                let span = join(lhs.span, rhs.span);
                lhs = self.node(
                    ExprKind::Binary {
                        op: BinOp::And,
                        lhs: Box::new(lhs),
                        rhs: Box::new(rhs),
                    },
                    span,
                )?;
            }
            Ok(lhs)
        }
    }

    fn not(&mut self) -> Result<Expr, ExprError> {
        if self.is_kw("not") {
            let (_, s) = self.bump();
            self.enter(s)?;
            let e = self.not()?;
            self.leave();
            let span = join(s, e.span);
            return self.node(ExprKind::Not(Box::new(e)), span);
        }
        self.compare()
    }

    fn compare(&mut self) -> Result<Expr, ExprError> {
        let lhs = self.sum()?;
        let op = match self.peek() {
            Tok::Op("<") => Some(BinOp::Lt),
            Tok::Op("<=") => Some(BinOp::Le),
            Tok::Op(">") => Some(BinOp::Gt),
            Tok::Op(">=") => Some(BinOp::Ge),
            Tok::Op("==") => Some(BinOp::Eq),
            Tok::Op("!=") => Some(BinOp::Ne),
            _ => None,
        };
        let e = if let Some(op) = op {
            self.bump();
            let rhs = self.sum()?;
            let span = join(lhs.span, rhs.span);
            self.node(
                ExprKind::Binary {
                    op,
                    lhs: Box::new(lhs),
                    rhs: Box::new(rhs),
                },
                span,
            )?
        } else if self.is_kw("within") {
            self.bump();
            let tol = self.sum()?;
            if !self.is_kw("of") {
                return Err(ExprError::new(
                    self.span(),
                    format!(
                        "expected `of` after the tolerance of `within`, found {}",
                        describe(self.peek())
                    ),
                ));
            }
            self.bump();
            let target = self.sum()?;
            let span = join(lhs.span, target.span);
            self.node(
                ExprKind::Within {
                    value: Box::new(lhs),
                    tol: Box::new(tol),
                    target: Box::new(target),
                },
                span,
            )?
        } else {
            return Ok(lhs);
        };
        if matches!(self.peek(), Tok::Op("<" | "<=" | ">" | ">=" | "==" | "!="))
            || self.is_kw("within")
        {
            return Err(ExprError::new(
                self.span(),
                "comparisons do not chain: join them with `and`",
            ));
        }
        Ok(e)
    }

    fn sum(&mut self) -> Result<Expr, ExprError> {
        let mut lhs = self.product()?;
        loop {
            let op = match self.peek() {
                Tok::Op("+") => BinOp::Add,
                Tok::Op("-") => BinOp::Sub,
                _ => return Ok(lhs),
            };
            self.bump();
            let rhs = self.product()?;
            let span = join(lhs.span, rhs.span);
            lhs = self.node(
                ExprKind::Binary {
                    op,
                    lhs: Box::new(lhs),
                    rhs: Box::new(rhs),
                },
                span,
            )?;
        }
    }

    fn product(&mut self) -> Result<Expr, ExprError> {
        let mut lhs = self.unary()?;
        loop {
            let op = match self.peek() {
                Tok::Op("*") => BinOp::Mul,
                Tok::Op("/") => BinOp::Div,
                _ => return Ok(lhs),
            };
            self.bump();
            let rhs = self.unary()?;
            let span = join(lhs.span, rhs.span);
            lhs = self.node(
                ExprKind::Binary {
                    op,
                    lhs: Box::new(lhs),
                    rhs: Box::new(rhs),
                },
                span,
            )?;
        }
    }

    fn unary(&mut self) -> Result<Expr, ExprError> {
        if matches!(self.peek(), Tok::Op("-")) {
            let (_, s) = self.bump();
            self.enter(s)?;
            let e = self.unary()?;
            self.leave();
            let span = join(s, e.span);
            return self.node(ExprKind::Neg(Box::new(e)), span);
        }
        self.primary()
    }

    fn primary(&mut self) -> Result<Expr, ExprError> {
        let (tok, span) = self.bump();
        match tok {
            Tok::Num { value, dim, text } => {
                // `2.4 GHz`: a unit written apart from its number
                if let Tok::Ident(u) = self.peek() {
                    if units::parse_quantity(&format!("1{u}")).is_ok() || u == "dB" {
                        let u = u.clone();
                        return Err(ExprError::new(
                            join(span, self.span()),
                            format!("write the unit right after the number: `{text}{u}`"),
                        ));
                    }
                }
                Ok(Expr {
                    kind: ExprKind::Num { value, dim, text },
                    span,
                })
            }
            Tok::LParen => {
                self.enter(span)?;
                let e = self.expr()?;
                self.leave();
                self.expect_rparen(span)?;
                Ok(e)
            }
            Tok::Ident(name) => {
                if let Some(m) = word(&name) {
                    return Ok(Expr {
                        kind: ExprKind::Word(m),
                        span,
                    });
                }
                if KEYWORDS.contains(&name.as_str()) {
                    return Err(ExprError::new(
                        span,
                        format!("expected a value, found the keyword `{name}`"),
                    ));
                }
                if matches!(self.peek(), Tok::LParen) {
                    let (_, open) = self.bump();
                    self.enter(open)?;
                    let arg = self.call_arg()?;
                    self.leave();
                    let close = self.expect_rparen(open)?;
                    let full = join(span, close);
                    let kind = match Agg::parse(&name) {
                        Some(op) => ExprKind::Agg {
                            op,
                            arg: Box::new(arg),
                        },
                        None => ExprKind::Call {
                            func: name,
                            func_span: span,
                            arg: Box::new(arg),
                        },
                    };
                    return self.node(kind, full);
                }
                Ok(Expr {
                    kind: ExprKind::Name(name),
                    span,
                })
            }
            other => Err(ExprError::new(
                span,
                format!("expected a value, found {}", describe(&other)),
            )),
        }
    }

    /// The argument of a call: an expression, or a frequency range `lo .. hi`.
    fn call_arg(&mut self) -> Result<Expr, ExprError> {
        if self.peek() == &Tok::RParen {
            return Err(ExprError::new(
                self.span(),
                "expected a frequency or a band between the parentheses",
            ));
        }
        let lo = self.expr()?;
        if self.peek() == &Tok::DotDot {
            self.bump();
            let hi = self.sum()?;
            let span = join(lo.span, hi.span);
            return self.node(ExprKind::Range(Box::new(lo), Box::new(hi)), span);
        }
        Ok(lo)
    }

    fn expect_rparen(&mut self, open: Span) -> Result<Span, ExprError> {
        if self.peek() == &Tok::RParen {
            return Ok(self.bump().1);
        }
        let found = describe(self.peek());
        Err(ExprError::new(
            if matches!(self.peek(), Tok::End) {
                open
            } else {
                self.span()
            },
            format!("expected `)` to close this `(`, found {found}"),
        ))
    }
}

/// Parse an expression. Errors carry byte spans into `src`.
pub fn parse(src: &str) -> Result<Expr, ExprError> {
    check_size(src)?;
    let toks = lex(src)?;
    let mut p = Parser {
        toks,
        pos: 0,
        depth: 0,
    };
    if p.peek() == &Tok::End {
        return Err(ExprError::new((0, src.len()), "the expression is empty"));
    }
    let e = p.expr()?;
    match p.peek() {
        Tok::End => Ok(e),
        Tok::DotDot => Err(ExprError::new(
            p.span(),
            "a band `lo .. hi` goes inside a call, e.g. `q(24GHz .. 30GHz)`",
        )),
        t => {
            let found = describe(t);
            Err(ExprError::new(
                p.span(),
                format!("expected an operator or the end of the expression, found {found}"),
            ))
        }
    }
}

/// Parse a band or a single frequency as written after `band:`: `4.9GHz .. 5.9GHz`,
/// or `5.4GHz` (a band of zero width). Returns (lo, hi) in Hz.
pub fn parse_band(src: &str) -> Result<(f64, f64), ExprError> {
    check_size(src)?;
    let toks = lex(src)?;
    let freq = |t: &(Tok, Span)| -> Result<f64, ExprError> {
        match &t.0 {
            Tok::Num {
                value,
                dim: Dim::Frequency,
                ..
            } => Ok(*value),
            other => Err(ExprError::new(
                t.1,
                format!(
                    "expected a frequency with its unit (e.g. `4.9GHz`), found {}",
                    describe(other)
                ),
            )),
        }
    };
    match toks.as_slice() {
        [a, (Tok::End, _)] => {
            let f = freq(a)?;
            Ok((f, f))
        }
        [a, (Tok::DotDot, _), b, (Tok::End, _)] => {
            let (lo, hi) = (freq(a)?, freq(b)?);
            if lo > hi {
                return Err(ExprError::new(
                    (a.1 .0, b.1 .1),
                    "the band's low edge is above its high edge",
                ));
            }
            if lo <= 0.0 {
                return Err(ExprError::new(a.1, "a band starts above 0 Hz"));
            }
            Ok((lo, hi))
        }
        _ => Err(ExprError::new(
            (0, src.len()),
            "expected a band `lo .. hi` (e.g. `4.9GHz .. 5.9GHz`) or one frequency",
        )),
    }
}

fn check_size(src: &str) -> Result<(), ExprError> {
    if src.len() > MAX_LEN {
        return Err(ExprError::new(
            (0, 0),
            format!(
                "the expression is {} bytes long; the limit is {MAX_LEN}",
                src.len()
            ),
        ));
    }
    Ok(())
}

// ---------------------------------------------------------------- printer

/// Print an expression with the fewest parentheses that keep its meaning; parsing
/// the result gives the same tree.
pub fn print(e: &Expr) -> String {
    let mut s = String::new();
    write_expr(&mut s, e, 0);
    s
}

/// Binding strength of a node as an operand (higher binds tighter).
fn node_prec(e: &Expr) -> u8 {
    match &e.kind {
        ExprKind::Binary { op, .. } => op.prec(),
        ExprKind::Within { .. } => 4,
        ExprKind::Not(_) => 3,
        ExprKind::Neg(_) => 7,
        ExprKind::Range(..) => 0,
        _ => 8,
    }
}

fn write_expr(s: &mut String, e: &Expr, min_prec: u8) {
    let p = node_prec(e);
    let paren = p < min_prec;
    if paren {
        s.push('(');
    }
    match &e.kind {
        ExprKind::Num { text, .. } => s.push_str(text),
        ExprKind::Name(n) => s.push_str(n),
        ExprKind::Word(m) => s.push_str(m.as_str()),
        ExprKind::Range(a, b) => {
            write_expr(s, a, 5);
            s.push_str(" .. ");
            write_expr(s, b, 5);
        }
        ExprKind::Call { func, arg, .. } => {
            let _ = write!(s, "{func}(");
            write_expr(s, arg, 0);
            s.push(')');
        }
        ExprKind::Agg { op, arg } => {
            let _ = write!(s, "{}(", op.as_str());
            write_expr(s, arg, 0);
            s.push(')');
        }
        ExprKind::Neg(x) => {
            s.push('-');
            write_expr(s, x, 7);
        }
        ExprKind::Not(x) => {
            s.push_str("not ");
            write_expr(s, x, 3);
        }
        ExprKind::Binary { op, lhs, rhs } => {
            let q = op.prec();
            // comparisons do not chain: both operands must bind tighter
            let (lp, rp) = if op.is_comparison() {
                (q + 1, q + 1)
            } else {
                (q, q + 1)
            };
            write_expr(s, lhs, lp);
            let _ = write!(s, " {} ", op.as_str());
            write_expr(s, rhs, rp);
        }
        ExprKind::Within { value, tol, target } => {
            write_expr(s, value, 5);
            s.push_str(" within ");
            write_expr(s, tol, 5);
            s.push_str(" of ");
            write_expr(s, target, 5);
        }
    }
    if paren {
        s.push(')');
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn p(s: &str) -> Expr {
        match parse(s) {
            Ok(e) => e,
            Err(e) => panic!("{s}: {e:?}"),
        }
    }

    #[test]
    fn every_operator_parses_with_precedence() {
        let cases = [
            ("srf >= 2 * band.hi", "srf >= 2 * band.hi"),
            ("a + b * c", "a + b * c"),
            ("(a + b) * c", "(a + b) * c"),
            ("a - (b - c)", "a - (b - c)"),
            ("a - b - c", "a - b - c"),
            ("a / b / c", "a / b / c"),
            ("a / (b * c)", "a / (b * c)"),
            ("-a * b", "-a * b"),
            ("-(a + b)", "-(a + b)"),
            ("a < b", "a < b"),
            ("a <= b", "a <= b"),
            ("a > b", "a > b"),
            ("a == b", "a == b"),
            ("a != b", "a != b"),
            ("a < b and c > d or e == f", "a < b and c > d or e == f"),
            ("a < b and (c > d or e == f)", "a < b and (c > d or e == f)"),
            ("not a < b", "not a < b"),
            ("not (a or b)", "not (a or b)"),
            (
                "l(band.mid) within 3% of l_target",
                "l(band.mid) within 3% of l_target",
            ),
            ("q(24GHz .. 30GHz) >= 12", "q(24GHz .. 30GHz) >= 12"),
            ("min(q(band)) > 10", "min(q(band)) > 10"),
            (
                "mechanism(band.mid) != substrate",
                "mechanism(band.mid) != substrate",
            ),
            ("q_drop_cause == resonance", "q_drop_cause == resonance"),
            ("srf>=2.4GHz", "srf >= 2.4GHz"),
            ("x × 2 > 1", "x * 2 > 1"),
            ("il_min(band) <= 1.5dB", "il_min(band) <= 1.5dB"),
        ];
        for (src, want) in cases {
            assert_eq!(print(&p(src)), want, "{src}");
        }
    }

    #[test]
    fn literals_carry_si_values() {
        for (src, v, d) in [
            ("2.4GHz", 2.4e9, Dim::Frequency),
            ("1.5nH", 1.5e-9, Dim::Inductance),
            ("250fF", 250e-15, Dim::Capacitance),
            ("50ohm", 50.0, Dim::Resistance),
            ("3%", 0.03, Dim::Ratio),
            ("12", 12.0, Dim::Ratio),
            ("1e3", 1000.0, Dim::Ratio),
            (".5", 0.5, Dim::Ratio),
        ] {
            match p(src).kind {
                ExprKind::Num { value, dim, .. } => {
                    assert!((value - v).abs() <= 1e-12 * v.abs(), "{src}");
                    assert_eq!(dim, d, "{src}");
                }
                k => panic!("{src}: {k:?}"),
            }
        }
    }

    #[test]
    fn syntax_errors_point_at_the_problem() {
        let cases = [
            ("srf >= ", 7, "expected a value"),
            ("srf >= 2 *", 10, "expected a value"),
            ("(srf >= 1GHz", 0, "expected `)`"),
            ("srf = 1GHz", 4, "write `==`"),
            ("a < b < c", 6, "do not chain"),
            ("srf >= 2.4 GHz", 7, "right after the number"),
            ("srf >= 2.4Gz", 7, "unknown unit"),
            ("x within 3%", 11, "expected `of`"),
            ("a && b", 2, "`and`"),
            ("q() > 1", 2, "frequency or a band"),
            ("1GHz .. 2GHz", 5, "inside a call"),
            ("", 0, "empty"),
            ("a $ b", 2, "unexpected character"),
            ("a b", 2, "expected an operator"),
        ];
        for (src, col, msg) in cases {
            let e = parse(src).expect_err(src);
            assert_eq!(e.span.0, col, "{src}: {e:?}");
            assert!(e.message.contains(msg), "{src}: {}", e.message);
        }
    }

    #[test]
    fn bands_parse() {
        assert_eq!(parse_band("4.9GHz .. 5.9GHz").unwrap(), (4.9e9, 5.9e9));
        assert_eq!(parse_band("5GHz").unwrap(), (5e9, 5e9));
        assert!(parse_band("5.9GHz .. 4.9GHz").is_err());
        assert!(parse_band("5nH .. 6nH").is_err());
        assert!(parse_band("5GHz 6GHz").is_err());
    }

    #[test]
    fn hostile_input_is_refused_quickly() {
        let deep = format!("{}1{}", "(".repeat(5000), ")".repeat(5000));
        let e = parse(&deep).expect_err("deep");
        assert!(
            e.message.contains("limit") || e.message.contains("nests"),
            "{}",
            e.message
        );
        let deep = format!("{}1{}", "(".repeat(1000), ")".repeat(1000));
        assert!(parse(&deep).expect_err("deep").message.contains("nests"));
        let nots = format!("{}a", "not ".repeat(500));
        assert!(parse(&nots).expect_err("nots").message.contains("nests"));
        let negs = format!("{}a", "-".repeat(1000));
        assert!(parse(&negs).expect_err("negs").message.contains("nests"));
        let long = vec!["q"; 20_000].join(" + ");
        assert!(parse(&long).expect_err("long").message.contains("limit"));
        let chain = vec!["q"; 1000].join("+");
        assert!(parse(&chain).expect_err("chain").message.contains("nests"));
        // within the limits a long chain is fine
        assert!(parse(&vec!["q"; 60].join(" + ")).is_ok());
    }
}
