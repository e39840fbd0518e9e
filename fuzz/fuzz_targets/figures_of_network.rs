//! Arbitrary finite networks through the whole `inspect` pipeline: views, figures,
//! the π-model fit, the loss story and the verdict line; undefined figures or
//! refusals, never a panic, never a NaN. Input layout: see the shared module.
//!
//! The body is `tests/fuzz_common` (shared with `tests/fuzz_regressions.rs`, which
//! replays the inputs that once failed).
#![no_main]
use libfuzzer_sys::fuzz_target;

#[path = "../../tests/fuzz_common/mod.rs"]
mod fuzz_common;

fuzz_target!(|data: &[u8]| fuzz_common::network(data));
