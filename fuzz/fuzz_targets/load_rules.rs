//! Arbitrary bytes as a rules file, a sidecar and an expression: a rule set or
//! located problems, never a panic, never a hang; rule sets that load are evaluated.
//!
//! The body is `tests/fuzz_common` (shared with `tests/fuzz_regressions.rs`, which
//! replays the inputs that once failed).
#![no_main]
use libfuzzer_sys::fuzz_target;

#[path = "../../tests/fuzz_common/mod.rs"]
mod fuzz_common;

fuzz_target!(|data: &[u8]| fuzz_common::rules(data));
