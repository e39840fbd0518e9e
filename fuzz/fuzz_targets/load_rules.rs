//! Arbitrary text as a rules file and as an expression: a rule set or located
//! problems, never a panic, never a hang (depth and size limits hold).
#![no_main]
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    let _ = lcgate::rules::expr::parse(text);
    // The loader reads files: one scratch file per fuzzing process.
    let path = std::env::temp_dir().join(format!("lcgate-fuzz-{}.yaml", std::process::id()));
    if std::fs::write(&path, data).is_ok() {
        if let Err(e) = lcgate::rules::load(&[path.clone()]) {
            let _ = e.to_string();
        }
    }
});
