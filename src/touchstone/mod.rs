//! Reading and writing Touchstone 1.0/1.1/2.0/2.1 files (IBIS Open Forum
//! specifications). Errors name `path:line:column`, what was expected and what was
//! found. Y, Z, H and G data are converted to S on reading.
//!
//! Layout: [`lex`] splits lines (LF, CRLF, CR) and scans numbers, with a one-pass
//! fast path for data lines; `read` is the streaming parser (one pass, lines read in
//! place from the input buffer, no allocation per token or line; files of 8 MiB and
//! more are read in blocks whose data lines are scanned in parallel); `write`
//! formats a [`Network`] back into either version. The rules and their
//! sources are in `reference/touchstone.md`; decisions where the specifications are
//! silent or ambiguous are listed in the `read` module's documentation.
//!
//! Knows nothing of figures or rules.

mod error;
mod float;
pub mod lex;
mod read;
mod write;

pub use error::{ErrorKind, ReadError};
pub use read::{
    check_bytes, read_blocks, read_bytes, read_bytes_careful, read_path, read_reader, MAX_PORTS,
};
pub use write::{try_write_string, write_path, write_string, WriteError};

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

impl Version {
    /// Keyword syntax (2.x)?
    pub fn is_v2(self) -> bool {
        matches!(self, Version::V2_0 | Version::V2_1)
    }
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
    /// the parameter the file was written in (before conversion to S)
    pub param: Param,
    /// the number format of the file
    pub format: Format,
    /// the frequency unit of the file
    pub unit: FreqUnit,
}

/// Network parameter of a file's data.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Param {
    /// scattering
    S,
    /// admittance
    Y,
    /// impedance
    Z,
    /// hybrid-h (2-port only)
    H,
    /// hybrid-g (2-port only)
    G,
}

impl Param {
    /// The letter used on the option line.
    pub fn letter(self) -> &'static str {
        match self {
            Param::S => "S",
            Param::Y => "Y",
            Param::Z => "Z",
            Param::H => "H",
            Param::G => "G",
        }
    }
}

/// Number pair format.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
#[allow(clippy::upper_case_acronyms)]
pub enum Format {
    /// real, imaginary
    RI,
    /// magnitude, angle in degrees
    MA,
    /// 20·log10|N| in dB, angle in degrees
    DB,
}

impl Format {
    /// The token used on the option line.
    pub fn token(self) -> &'static str {
        match self {
            Format::RI => "RI",
            Format::MA => "MA",
            Format::DB => "DB",
        }
    }
}

/// Frequency unit of a file.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum FreqUnit {
    /// hertz
    Hz,
    /// kilohertz
    KHz,
    /// megahertz
    MHz,
    /// gigahertz
    GHz,
}

impl FreqUnit {
    /// Hz per unit.
    pub fn multiplier(self) -> f64 {
        match self {
            FreqUnit::Hz => 1.0,
            FreqUnit::KHz => 1e3,
            FreqUnit::MHz => 1e6,
            FreqUnit::GHz => 1e9,
        }
    }
    /// The token used on the option line.
    pub fn token(self) -> &'static str {
        match self {
            FreqUnit::Hz => "Hz",
            FreqUnit::KHz => "kHz",
            FreqUnit::MHz => "MHz",
            FreqUnit::GHz => "GHz",
        }
    }
}

/// How [`write_string`] formats a file.
#[derive(Debug, Clone, PartialEq)]
pub struct WriteOptions {
    /// V1_0/V1_1 write the option-line syntax (per-port R when the references
    /// differ); V2_0/V2_1 the keyword syntax.
    pub version: Version,
    /// the parameter to write (H and G for 2-ports only)
    pub param: Param,
    /// number format
    pub format: Format,
    /// frequency unit
    pub unit: FreqUnit,
    /// comment lines written at the top (`! ` is added)
    pub comments: Vec<String>,
}

impl Default for WriteOptions {
    fn default() -> Self {
        WriteOptions {
            version: Version::V1_0,
            param: Param::S,
            format: Format::RI,
            unit: FreqUnit::GHz,
            comments: Vec::new(),
        }
    }
}
