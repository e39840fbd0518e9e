//! Arbitrary bytes into the Touchstone reader: it must return a network or an error,
//! never panic, never hang.
#![no_main]
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    // Alternate the extension hint so the .sNp port-count check is exercised too.
    let name = match data.first().map(|b| b % 4) {
        Some(0) => "fuzz.s1p",
        Some(1) => "fuzz.s2p",
        Some(2) => "fuzz.s4p",
        _ => "fuzz.ts",
    };
    if let Ok(ts) = lcgate::touchstone::read_bytes(name, data) {
        let net = &ts.network;
        assert_eq!(net.s.len(), net.points() * net.ports * net.ports);
        assert!(net.s.iter().all(|c| c.re.is_finite() && c.im.is_finite()));
    }
});
