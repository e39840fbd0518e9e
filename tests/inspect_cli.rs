//! `lcgate inspect` end to end, on invented π-model data written as Touchstone
//! (tests/data/inspect/pi_coil.s2p: Ls = 2 nH, Rs = 3 Ω, Cs = 20 fF, Cox = 150 fF,
//! Csi = 40 fF, Rsi = 500 Ω, 0.1–30 GHz in 100 MHz steps).

use std::process::{Command, Output};

fn lcgate(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_lcgate"))
        .args(args)
        .current_dir(env!("CARGO_MANIFEST_DIR"))
        .output()
        .expect("run lcgate")
}

const COIL: &str = "tests/data/inspect/pi_coil.s2p";

#[test]
fn table_shows_both_views() {
    let out = lcgate(&["inspect", COIL]);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = String::from_utf8(out.stdout).unwrap();
    for want in [
        "view single_ended (inductor)",
        "view differential (inductor)",
        "SRF 15.5 GHz", // methods.md §2.4: 15.4635 GHz
        "SRF 18.7 GHz", // methods.md §2.4: 18.687 GHz
        "tank Q",
        "peak Q",
        "data checks",
    ] {
        assert!(text.contains(want), "missing `{want}` in\n{text}");
    }
}

/// Values at exactly the asked frequencies (methods.md §2.4, VERIFIED there:
/// single-ended Q 7.3891 and L 2.2515 nH at 5 GHz; differential Q 11.048).
#[test]
fn json_at_frequencies() {
    let out = lcgate(&["inspect", COIL, "--json", "--at", "5GHz,2.45GHz"]);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["format"], "lcgate-figures/1");
    assert_eq!(v["ports"], 2);
    assert_eq!(v["points"], 300);
    let se = &v["views"]["single_ended"];
    assert_eq!(se["kind"], "inductor");
    let at = se["at"].as_array().unwrap();
    assert_eq!(at.len(), 2);
    assert_eq!(at[0]["f"], 5e9);
    assert_eq!(at[1]["f"], 2.45e9);
    let q = at[0]["q"].as_f64().unwrap();
    assert!((q - 7.3891).abs() < 1e-4, "{q}");
    let l = at[0]["l"].as_f64().unwrap();
    assert!((l - 2.2515e-9).abs() < 1e-13, "{l}");
    let srf = se["srf"].as_f64().unwrap();
    assert!((srf - 15.4635e9).abs() < 2e5, "{srf}");
    let qd = v["views"]["differential"]["at"][0]["q"].as_f64().unwrap();
    assert!((qd - 11.048).abs() < 1e-3, "{qd}");
    assert!(v["data_checks"]["passivity_margin"].as_f64().unwrap() >= 0.0);
}

#[test]
fn sweep_and_view_filter() {
    let out = lcgate(&[
        "inspect",
        COIL,
        "--json",
        "--sweep",
        "--view",
        "differential",
    ]);
    assert_eq!(out.status.code(), Some(0));
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert!(v["views"]["single_ended"].is_null());
    assert_eq!(
        v["views"]["differential"]["at"].as_array().unwrap().len(),
        300
    );
}

#[test]
fn refusals_exit_2() {
    // a frequency outside the sweep
    let out = lcgate(&["inspect", COIL, "--at", "40GHz"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("outside the sweep"));
    // a view that does not apply
    let out = lcgate(&["inspect", COIL, "--view", "transformer"]);
    assert_eq!(out.status.code(), Some(2));
    let out = lcgate(&["inspect", COIL, "--view", "sideways"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("unknown view"));
    // a missing file
    let out = lcgate(&["inspect", "tests/data/inspect/no_such_file.s2p"]);
    assert_eq!(out.status.code(), Some(2));
}

/// A malformed number on line 7 (`0.4x`): exit 2 and the message names file:line.
#[test]
fn malformed_file_names_line() {
    let out = lcgate(&["inspect", "tests/data/inspect/bad_number.s2p"]);
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("bad_number.s2p:7:"), "{err}");
    assert!(!err.contains("panicked"), "{err}");
}
