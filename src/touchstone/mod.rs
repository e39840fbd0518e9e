//! Reading and writing Touchstone 1.0/1.1/2.0/2.1 files (IBIS Open Forum
//! specifications). Errors name `path:line:column`, what was expected and what was
//! found. Y and Z data are converted to S on reading.
//!
//! Knows nothing of figures or rules.

use crate::network::{Network, C64};

/// Touchstone version of a file.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
pub enum Version {
    /// original syntax
    V1_0,
    /// 1.0 with one R per port on the option line
    V1_1,
    /// keyword syntax, `[Version] 2.0`
    V2_0,
    /// `[Version] 2.1`
    V2_1,
}

/// One row of 2-port noise data, kept aside.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct NoiseRow {
    /// frequency (Hz)
    pub f: f64,
    /// minimum noise figure (dB)
    pub nf_min_db: f64,
    /// optimum source reflection coefficient
    pub gamma_opt: C64,
    /// effective noise resistance (Ω, de-normalized)
    pub rn: f64,
}

/// A warning found while reading (the file is still usable).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Warning {
    /// 1-based line
    pub line: usize,
    /// 1-based column
    pub column: usize,
    /// what was noticed
    pub message: String,
}

/// A file read into memory.
#[derive(Debug, Clone, PartialEq)]
pub struct Touchstone {
    /// version
    pub version: Version,
    /// the network data, converted to S with per-port reference impedances
    pub network: Network,
    /// noise rows, if any
    pub noise: Vec<NoiseRow>,
    /// warnings
    pub warnings: Vec<Warning>,
}
