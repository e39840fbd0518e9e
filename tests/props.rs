//! Property tests of the figures (issue 9, item 2) on random π-model coils:
//!
//! - l, r, q and srf do not depend on the reference impedance the S-parameters are
//!   given in: Z and Y are properties of the network, S of the network *and* its
//!   reference, so renormalised S describes the same part (D. M. Pozar, *Microwave
//!   Engineering*, 4th ed., §4.3, generalised scattering parameters). Checked through
//!   a Touchstone file written at the new reference and read back.
//! - Renaming the ports changes nothing it should not: the differential view of a
//!   2-port is the same with its ports swapped, and the single-ended view driven at
//!   port 2 is the swapped network's view driven at port 1.
//! - q = q_conductor · substrate_factor · resonance_factor, the factorisation of
//!   C. P. Yue and S. S. Wong, "On-chip spiral inductors with patterned ground shields
//!   for Si-based RF ICs", IEEE JSSC 33(5), 1998, at every point where all four are
//!   defined, whatever the fit found.
//!
//! Case counts are modest: every case fits a π-model to two or more views.

use lcgate::figures::{view_figures, ViewFigures};
use lcgate::model::{loss, PiModel};
use lcgate::network::{self, Network, PortMap, ViewName, C64};
use lcgate::touchstone::WriteOptions;
use lcgate::touchstone::{read_bytes, write_string, Format, FreqUnit, Param, Version};
use proptest::prelude::*;

/// A log-uniform value between `lo` and `hi`.
fn log_range(lo: f64, hi: f64) -> impl Strategy<Value = f64> {
    (lo.ln()..hi.ln()).prop_map(f64::exp)
}

/// Invented on-chip coils: 0.3–8 nH, 0.3–8 Ω at DC with up to 4 Ω of skin effect at
/// 1 GHz, 2–40 fF across the coil, 20–250 fF of oxide, 5–80 fF and 50 Ω–5 kΩ of
/// substrate per port (asymmetric shunts). Their SRFs lie above 2.5 GHz, so a sweep
/// from 100 MHz keeps enough points below resonance for the fit.
fn coil() -> impl Strategy<Value = PiModel> {
    (
        (log_range(0.3e-9, 8e-9), log_range(0.3, 8.0), 0.0..4.0f64),
        log_range(2e-15, 40e-15),
        (
            log_range(20e-15, 250e-15),
            log_range(5e-15, 80e-15),
            log_range(50.0, 5000.0),
        ),
        (
            log_range(20e-15, 250e-15),
            log_range(5e-15, 80e-15),
            log_range(50.0, 5000.0),
        ),
    )
        .prop_map(
            |((ls, rdc, rac), cs, (cox1, csi1, rsi1), (cox2, csi2, rsi2))| PiModel {
                ls,
                rdc,
                rac,
                cs,
                cox1,
                csi1,
                rsi1,
                cox2,
                csi2,
                rsi2,
            },
        )
}

/// 48 points log-spaced from 100 MHz to 30 GHz.
fn sweep() -> Vec<f64> {
    let n = 48;
    (0..n)
        .map(|k| 1e8 * (300.0f64).powf(k as f64 / (n - 1) as f64))
        .collect()
}

/// The coil as 2-port S-parameters at reference `z0`.
fn network_of(m: &PiModel, z0: [f64; 2]) -> Network {
    let freq = sweep();
    let y: Vec<C64> = freq.iter().flat_map(|&f| m.y2(f)).collect();
    Network::from_y(freq, 2, z0.to_vec(), &y).expect("a π-model's Y has an S")
}

fn figures(net: &Network, view: ViewName, ports: &PortMap) -> ViewFigures {
    let v = network::view(net, view, ports).expect("the view applies");
    view_figures(&v, &net.freq, None)
}

/// `a` and `b` agree to `rel` of their size (plus `rel` absolute, for values that
/// cross zero, like q at the SRF); both undefined also agrees.
fn close(a: Option<f64>, b: Option<f64>, rel: f64) -> bool {
    match (a, b) {
        (Some(x), Some(y)) => (x - y).abs() <= rel * (x.abs().max(y.abs()) + 1.0),
        (None, None) => true,
        _ => false,
    }
}

/// The data figures (not the fit's) of two views agree at every point.
fn same_data_figures(a: &ViewFigures, b: &ViewFigures, rel: f64) -> Result<(), TestCaseError> {
    // the same sweep (a file in GHz may move a frequency by its last bit)
    prop_assert_eq!(a.freq.len(), b.freq.len());
    for (x, y) in a.freq.iter().zip(&b.freq) {
        prop_assert!((x - y).abs() <= 1e-12 * x, "{} vs {} Hz", x, y);
    }
    for name in ["l", "r", "q"] {
        let (ca, cb) = (&a.curves[name], &b.curves[name]);
        for (i, (x, y)) in ca.iter().zip(cb).enumerate() {
            // l is in henries: compare relative to its own size only
            let ok = if name == "l" {
                match (x, y) {
                    (Some(x), Some(y)) => (x - y).abs() <= rel * x.abs().max(y.abs()),
                    (None, None) => true,
                    _ => false,
                }
            } else {
                close(*x, *y, rel)
            };
            prop_assert!(ok, "{} at {} Hz: {:?} vs {:?}", name, a.freq[i], x, y);
        }
    }
    let (sa, sb) = (a.scalar("srf"), b.scalar("srf"));
    prop_assert!(
        match (sa, sb) {
            (Some(x), Some(y)) => (x - y).abs() <= rel * x,
            (None, None) => true,
            _ => false,
        },
        "srf {:?} vs {:?}",
        sa,
        sb
    );
    // the data must have had something to compare
    prop_assert!(a.curves["q"].iter().filter(|v| v.is_some()).count() > 40);
    Ok(())
}

/// The network with ports 1 and 2 swapped: S'ij = S(3−i)(3−j), references swapped.
fn swapped(net: &Network) -> Network {
    let s = net
        .s
        .chunks(4)
        .flat_map(|b| [b[3], b[2], b[1], b[0]])
        .collect();
    Network {
        freq: net.freq.clone(),
        ports: 2,
        z0: vec![net.z0[1], net.z0[0]],
        s,
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(24))]

    /// Pozar §4.3: Z (hence l, r, q, srf) does not depend on the reference. The coil
    /// at 50 Ω and the same coil written at other per-port references (version 2,
    /// any number format) and read back give the same figures to 1e-9.
    #[test]
    fn figures_do_not_depend_on_the_reference_impedance(
        m in coil(),
        z1 in log_range(5.0, 500.0),
        z2 in log_range(5.0, 500.0),
        format in prop::sample::select(vec![Format::RI, Format::MA, Format::DB]),
    ) {
        let at50 = network_of(&m, [50.0, 50.0]);
        let renorm = network_of(&m, [z1, z2]);
        // the S-parameters really changed
        prop_assert!((renorm.s[0] - at50.s[0]).norm() > 1e-6 || (z1 - 50.0).abs() < 0.5);
        let opts = WriteOptions {
            version: Version::V2_0,
            param: Param::S,
            format,
            unit: FreqUnit::GHz,
            comments: vec![],
        };
        let text = write_string(&renorm, &opts);
        let back = read_bytes("renorm.s2p", text.as_bytes())
            .map_err(|e| TestCaseError::fail(e.to_string()))?
            .network;
        prop_assert_eq!(&back.z0, &vec![z1, z2]);
        for view in [ViewName::SingleEnded, ViewName::Differential] {
            let a = figures(&at50, view, &PortMap::default());
            let b = figures(&back, view, &PortMap::default());
            same_data_figures(&a, &b, 1e-9)?;
        }
    }

    /// Port renaming: the differential view is symmetric in its two ports, and the
    /// single-ended view driven at port 2 (port 1 grounded) is the swapped network's
    /// single-ended view driven at port 1. For an asymmetric coil the two drives
    /// differ, so the check is not vacuous.
    #[test]
    fn views_follow_port_renaming(m in coil(), z0 in log_range(20.0, 100.0)) {
        let net = network_of(&m, [50.0, z0]);
        let sw = swapped(&net);
        let fwd = PortMap::default();
        let rev = PortMap { pair: [2, 1], ..PortMap::default() };
        let d = figures(&net, ViewName::Differential, &fwd);
        let d_sw = figures(&sw, ViewName::Differential, &fwd);
        same_data_figures(&d, &d_sw, 1e-9)?;
        let se2 = figures(&net, ViewName::SingleEnded, &rev);
        let se2_sw = figures(&sw, ViewName::SingleEnded, &fwd);
        same_data_figures(&se2, &se2_sw, 1e-9)?;
        let se1 = figures(&net, ViewName::SingleEnded, &fwd);
        let se1_sw = figures(&sw, ViewName::SingleEnded, &rev);
        same_data_figures(&se1, &se1_sw, 1e-9)?;
        // the fits see the same data, so they find the same coil (loosely: a fit is
        // an iteration, not an identity)
        for (a, b) in [(&d, &d_sw), (&se2, &se2_sw)] {
            let (la, lb) = (a.scalar("ls"), b.scalar("ls"));
            prop_assert!(close(la.map(|x| x * 1e9), lb.map(|x| x * 1e9), 1e-6), "ls {:?} vs {:?}", la, lb);
        }
    }

    /// Yue–Wong's factorisation holds at every point of both views of every coil:
    /// q = q_conductor · substrate_factor · resonance_factor.
    #[test]
    fn q_is_the_product_of_the_three_factors(m in coil()) {
        let net = network_of(&m, [50.0, 50.0]);
        for view in [ViewName::SingleEnded, ViewName::Differential] {
            let f = figures(&net, view, &PortMap::default());
            prop_assert!(
                matches!(f.loss, Some(Ok(_))),
                "{}: the fit of π-model data was refused: {:?}",
                view,
                f.loss.as_ref().and_then(|l| l.as_ref().err())
            );
            let mut checked = 0;
            for i in 0..f.freq.len() {
                let q = f.curves["q"][i];
                let qc = f.curves["q_conductor"][i];
                let sf = f.curves["substrate_factor"][i];
                let rf = f.curves["resonance_factor"][i];
                if let (Some(q), Some(qc), Some(sf), Some(rf)) = (q, qc, sf, rf) {
                    let p = qc * sf * rf;
                    prop_assert!(
                        (p - q).abs() <= 1e-9 * (q.abs() + 1.0),
                        "{} at {} Hz: q {} but {} · {} · {} = {}",
                        view, f.freq[i], q, qc, sf, rf, p
                    );
                    checked += 1;
                }
            }
            prop_assert!(checked > 40, "{}: only {} points had all four", view, checked);
        }
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(256))]

    /// The same identity on the factors alone (no fit): for any coil (R_s, L_s) and
    /// any measured admittance with a positive real part, the factors of
    /// `loss::factors` multiply to Im Z/Re Z of that admittance (Yue–Wong 1998: Y_p =
    /// Y_in − 1/(R_s + jωL_s) carries whatever the coil does not).
    #[test]
    fn factors_multiply_to_q_for_any_admittance(
        m in coil(),
        f in log_range(1e8, 3e10),
        g in log_range(1e-6, 10.0),
        b in -10.0..10.0f64,
    ) {
        let y = C64::new(g, b);
        // f > 0, R_s > 0, L_s > 0 and G > 0: every factor is defined (a factor's
        // denominator vanishes only on a set of measure zero)
        let fa = loss::factors(&m, f, y).expect("defined");
        let q = loss::q_of(y).expect("G > 0");
        let p = fa.q_conductor * fa.substrate_factor * fa.resonance_factor;
        prop_assert!((p - q).abs() <= 1e-9 * (q.abs() + 1.0), "{} vs {}", p, q);
        // on the coil's own one-port admittance the factors are always defined
        let own = m.y_one_port(f);
        let fa = loss::factors(&m, f, own).expect("defined on π data");
        let q = loss::q_of(own).expect("defined on π data");
        let p = fa.q_conductor * fa.substrate_factor * fa.resonance_factor;
        prop_assert!((p - q).abs() <= 1e-9 * (q.abs() + 1.0), "{} vs {}", p, q);
    }
}
