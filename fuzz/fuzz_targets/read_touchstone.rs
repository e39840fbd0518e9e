//! Arbitrary bytes into the Touchstone reader: a network or an error, never a panic,
//! never a hang.
//!
//! The body is `tests/fuzz_common` (shared with `tests/fuzz_regressions.rs`, which
//! replays the inputs that once failed).
#![no_main]
use libfuzzer_sys::fuzz_target;

#[path = "../../tests/fuzz_common/mod.rs"]
mod fuzz_common;

fuzz_target!(|data: &[u8]| fuzz_common::touchstone(data));
