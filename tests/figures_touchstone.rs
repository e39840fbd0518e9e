//! The π-model of methods.md §2.4 (Yue–Wong, IEEE JSSC 33(5), 1998) written to
//! Touchstone in several versions, parameters, formats and units, read back, and
//! its figures checked against the closed-form values of methods.md §2.4 (VERIFIED
//! there): single-ended Q 7.3891 and L 2.2515 nH at 5 GHz, SRF_se 15.4635 GHz,
//! SRF_diff 18.687 GHz, Q_diff 11.048.

use lcgate::figures;
use lcgate::network::{self, Network, PortMap, ViewName, C64};
use lcgate::touchstone::{self, Format, FreqUnit, Param, Version, WriteOptions};
use std::f64::consts::PI;

fn pi_network() -> Network {
    let one = C64::new(1.0, 0.0);
    let j = C64::new(0.0, 1.0);
    let freq: Vec<f64> = (1..=300).map(|k| k as f64 * 1e8).collect();
    let flat: Vec<C64> = freq
        .iter()
        .flat_map(|&f| {
            let w = 2.0 * PI * f;
            let ys = one / (3.0 + j * w * 2e-9) + j * w * 20e-15;
            let ysh = one / (one / (j * w * 150e-15) + one / (one / 500.0 + j * w * 40e-15));
            [ys + ysh, -ys, -ys, ys + ysh]
        })
        .collect();
    Network::from_y(freq, 2, vec![50.0, 50.0], &flat).unwrap()
}

#[test]
fn written_and_read_back_in_every_form() {
    let net = pi_network();
    let cases = [
        (Version::V1_0, Param::S, Format::RI, FreqUnit::GHz),
        (Version::V1_0, Param::S, Format::MA, FreqUnit::MHz),
        (Version::V1_0, Param::S, Format::DB, FreqUnit::Hz),
        (Version::V1_0, Param::Z, Format::RI, FreqUnit::KHz),
        (Version::V1_0, Param::Y, Format::MA, FreqUnit::GHz),
        (Version::V2_0, Param::S, Format::DB, FreqUnit::GHz),
        (Version::V2_0, Param::Y, Format::RI, FreqUnit::MHz),
        (Version::V2_1, Param::Z, Format::MA, FreqUnit::Hz),
    ];
    for (version, param, format, unit) in cases {
        let opts = WriteOptions {
            version,
            param,
            format,
            unit,
            comments: vec!["invented π-model coil".into()],
        };
        let label = format!("{version:?} {param:?} {format:?} {unit:?}");
        let text = touchstone::write_string(&net, &opts);
        let ts = touchstone::read_bytes("pi.s2p", text.as_bytes())
            .unwrap_or_else(|e| panic!("{label}: {e}"));
        let back = ts.network;
        assert_eq!(back.points(), 300, "{label}");
        for (a, b) in back.freq.iter().zip(&net.freq) {
            assert!((a - b).abs() <= 1e-9 * b, "{label}: f {a} vs {b}");
        }
        let se = network::view(&back, ViewName::SingleEnded, &PortMap::default()).unwrap();
        let f = figures::view_figures(&se, &back.freq, None);
        let q5 = f.curve_at("q", 5e9).unwrap();
        let l5 = f.curve_at("l", 5e9).unwrap();
        let srf = f.scalar("srf").unwrap();
        assert!((q5 - 7.3891).abs() < 1e-4, "{label}: q {q5}");
        assert!((l5 - 2.2515e-9).abs() < 1e-13, "{label}: l {l5}");
        assert!((srf - 15.4635e9).abs() < 2e5, "{label}: srf {srf}");
        let d = network::view(&back, ViewName::Differential, &PortMap::default()).unwrap();
        let f = figures::view_figures(&d, &back.freq, None);
        let qd = f.curve_at("q", 5e9).unwrap();
        let srf = f.scalar("srf").unwrap();
        assert!((qd - 11.048).abs() < 1e-3, "{label}: q_diff {qd}");
        assert!((srf - 18.687e9).abs() < 2e6, "{label}: srf_diff {srf}");
    }
}
