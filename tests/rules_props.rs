//! Property test of the rules expression printer: printing any syntax tree and
//! parsing the text gives the same tree back.

use lcgate::model::Mechanism;
use lcgate::rules::expr::{self, Agg, BinOp, Expr, ExprKind};
use lcgate::units::Dim;
use proptest::prelude::*;

fn leaf() -> impl Strategy<Value = Expr> {
    let nums = [
        "1", "2.5", "3%", "2.4GHz", "1.5nH", "250fF", "50ohm", "1e3", "0.5", "1.5dB", ".5",
    ];
    let names = [
        "srf",
        "q_peak",
        "band.lo",
        "band.mid",
        "l_target",
        "shielded",
        "q_drop_cause",
        "f_max",
    ];
    prop_oneof![
        proptest::sample::select(nums.to_vec()).prop_map(|t| mk(ExprKind::Num {
            value: 1.0,
            dim: Dim::Ratio,
            text: t.to_string(),
        })),
        proptest::sample::select(names.to_vec()).prop_map(|n| mk(ExprKind::Name(n.to_string()))),
        proptest::sample::select(vec![
            Mechanism::Conductor,
            Mechanism::Substrate,
            Mechanism::Resonance
        ])
        .prop_map(|m| mk(ExprKind::Word(m))),
    ]
}

fn mk(kind: ExprKind) -> Expr {
    Expr { kind, span: (0, 0) }
}

fn tree() -> impl Strategy<Value = Expr> {
    let ops = vec![
        BinOp::Add,
        BinOp::Sub,
        BinOp::Mul,
        BinOp::Div,
        BinOp::Lt,
        BinOp::Le,
        BinOp::Gt,
        BinOp::Ge,
        BinOp::Eq,
        BinOp::Ne,
        BinOp::And,
        BinOp::Or,
    ];
    leaf().prop_recursive(6, 48, 3, move |inner| {
        let ops = ops.clone();
        let arg = prop_oneof![
            inner.clone(),
            (inner.clone(), inner.clone())
                .prop_map(|(a, b)| mk(ExprKind::Range(Box::new(a), Box::new(b)))),
        ];
        prop_oneof![
            (proptest::sample::select(ops), inner.clone(), inner.clone()).prop_map(
                |(op, l, r)| mk(ExprKind::Binary {
                    op,
                    lhs: Box::new(l),
                    rhs: Box::new(r)
                })
            ),
            inner.clone().prop_map(|e| mk(ExprKind::Neg(Box::new(e)))),
            inner.clone().prop_map(|e| mk(ExprKind::Not(Box::new(e)))),
            (inner.clone(), inner.clone(), inner.clone()).prop_map(|(v, t, g)| mk(
                ExprKind::Within {
                    value: Box::new(v),
                    tol: Box::new(t),
                    target: Box::new(g)
                }
            )),
            (
                proptest::sample::select(vec!["q", "l", "shield_gain", "mechanism"]),
                arg.clone()
            )
                .prop_map(|(f, a)| mk(ExprKind::Call {
                    func: f.to_string(),
                    func_span: (0, 0),
                    arg: Box::new(a)
                })),
            (
                proptest::sample::select(vec![Agg::Min, Agg::Max, Agg::Mean]),
                arg
            )
                .prop_map(|(op, a)| mk(ExprKind::Agg {
                    op,
                    arg: Box::new(a)
                })),
        ]
    })
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(2000))]
    #[test]
    fn print_then_parse_is_the_identity(e in tree()) {
        let text = expr::print(&e);
        let back = expr::parse(&text).map_err(|err| TestCaseError::fail(format!("{text}: {err:?}")))?;
        prop_assert!(back.same(&e), "{text}\nreprinted: {}", expr::print(&back));
        // and printing is stable
        prop_assert_eq!(expr::print(&back), text);
    }
}
