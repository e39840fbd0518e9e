//! lcgate: a sign-off gate for libraries of on-chip passives (spiral inductors,
//! capacitors, transformers) characterised as Touchstone S-parameter files.
//!
//! Pipeline: walk → read → view → figures → fit/attribute → judge (rules, drift) → report.
//! Each stage is one module; see `DEVELOPERS.md` for the architecture.
//! Numbers inside are SI base units (Hz, H, F, Ω) as `f64`; units appear only at the
//! edges (rule parsing, printing), through [`units`].

pub mod baseline;
pub mod cli;
pub mod figures;
pub mod library;
pub mod model;
pub mod network;
pub mod pipeline;
pub mod report;
pub mod rules;
pub mod touchstone;
pub mod units;
pub mod verdict;

/// Version of the tool, written into every report and cache key.
pub const TOOL_VERSION: &str = env!("CARGO_PKG_VERSION");
