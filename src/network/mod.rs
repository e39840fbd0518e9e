//! Network math: the in-memory N-port ([`Network`], S-parameters with per-port real
//! reference impedances), S↔Z↔Y conversions by linear solves, and the views of
//! DESIGN §5 that reduce N ports to what a part's user drives.
//!
//! Knows nothing of files or rules.

use num_complex::Complex64;

pub mod convert;
mod views;

pub use views::{differential_y, view, views_for, ViewError};

/// Points one rayon job takes when a sweep's points are worked on in parallel: a
/// point costs well under a microsecond, so smaller jobs cost more to hand over
/// than they save.
pub(crate) const POINTS_PER_JOB: usize = 1024;

/// Whether a sweep of `points` is long enough for rayon to split into jobs of
/// [`POINTS_PER_JOB`]; a shorter one is taken point by point without its machinery
/// (the same points in the same order, so the same values).
pub(crate) fn splits(points: usize) -> bool {
    points >= 2 * POINTS_PER_JOB
}

/// `f` of every point index below `points`, in order: in parallel when the sweep
/// [`splits`], else point by point.
pub(crate) fn map_points<T: Send>(points: usize, f: impl Fn(usize) -> T + Sync + Send) -> Vec<T> {
    use rayon::prelude::*;
    if !splits(points) {
        return (0..points).map(f).collect();
    }
    (0..points)
        .into_par_iter()
        .with_min_len(POINTS_PER_JOB)
        .map(f)
        .collect()
}

/// Complex number type used throughout.
pub type C64 = Complex64;

/// An N-port network sampled on a frequency grid: S-parameters referred to real,
/// positive per-port reference impedances.
///
/// `s` is frequency-major and row-major within a frequency: entry (i, j) of point k
/// is `s[k * n * n + i * n + j]` (0-based ports).
#[derive(Debug, Clone, PartialEq)]
pub struct Network {
    /// Frequencies in Hz, strictly increasing.
    pub freq: Vec<f64>,
    /// Number of ports N.
    pub ports: usize,
    /// Reference impedance of each port in Ω (length N, each > 0).
    pub z0: Vec<f64>,
    /// S-parameters, `freq.len() * N * N` values.
    pub s: Vec<C64>,
}

impl Network {
    /// Number of frequency points.
    pub fn points(&self) -> usize {
        self.freq.len()
    }
    /// S(i, j) at point k (0-based).
    pub fn s_at(&self, k: usize, i: usize, j: usize) -> C64 {
        let n = self.ports;
        self.s[k * n * n + i * n + j]
    }
    /// The N×N S block of point k.
    #[inline]
    pub fn s_block(&self, k: usize) -> &[C64] {
        let n = self.ports;
        &self.s[k * n * n..(k + 1) * n * n]
    }
    /// The N×N Z block (Ω) of point k, None where Z does not exist.
    pub fn z_block(&self, k: usize) -> Option<Vec<C64>> {
        convert::s_to_z(self.s_block(k), self.ports, &self.z0)
    }
    /// The N×N Y block (S) of point k, None where Y does not exist.
    pub fn y_block(&self, k: usize) -> Option<Vec<C64>> {
        convert::s_to_y(self.s_block(k), self.ports, &self.z0)
    }
    /// Build a network from Y blocks (`y_flat`: frequency-major, row-major N×N per
    /// point, S). None when the sizes disagree or a block has no S.
    pub fn from_y(freq: Vec<f64>, ports: usize, z0: Vec<f64>, y_flat: &[C64]) -> Option<Network> {
        Self::from_blocks(freq, ports, z0, y_flat, convert::y_to_s)
    }
    /// Build a network from Z blocks (Ω), as [`Network::from_y`].
    pub fn from_z(freq: Vec<f64>, ports: usize, z0: Vec<f64>, z_flat: &[C64]) -> Option<Network> {
        Self::from_blocks(freq, ports, z0, z_flat, convert::z_to_s)
    }
    fn from_blocks(
        freq: Vec<f64>,
        ports: usize,
        z0: Vec<f64>,
        flat: &[C64],
        conv: convert::BlockFn,
    ) -> Option<Network> {
        let nn = ports * ports;
        if ports == 0 || z0.len() != ports || flat.len() != freq.len() * nn {
            return None;
        }
        let mut s = Vec::with_capacity(flat.len());
        for block in flat.chunks_exact(nn) {
            s.extend(conv(block, ports, &z0)?);
        }
        Some(Network { freq, ports, z0, s })
    }
}

/// The ways a part's ports can be driven (DESIGN §5).
#[derive(
    Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, serde::Serialize, serde::Deserialize,
)]
#[serde(rename_all = "snake_case")]
pub enum ViewName {
    /// 1-port: Z_in from S11.
    OnePort,
    /// Port 1 driven, port 2 (and others) grounded: Y_in = Y11.
    SingleEnded,
    /// Floating drive between ports 1 and 2: Z_in = Z11 − Z12 − Z21 + Z22.
    Differential,
    /// 3-port with the tap grounded, then differential.
    CentreTapped,
    /// 4-port: two windings, each driven differentially; a 2×2 winding Z.
    Transformer,
}

impl ViewName {
    /// All views, in the order reports list them.
    pub const ALL: [ViewName; 5] = [
        ViewName::OnePort,
        ViewName::SingleEnded,
        ViewName::Differential,
        ViewName::CentreTapped,
        ViewName::Transformer,
    ];
    /// The name used on the command line, in rules and in documents.
    pub fn as_str(self) -> &'static str {
        match self {
            ViewName::OnePort => "one_port",
            ViewName::SingleEnded => "single_ended",
            ViewName::Differential => "differential",
            ViewName::CentreTapped => "centre_tapped",
            ViewName::Transformer => "transformer",
        }
    }
    /// Parse a view name as written on the command line or in rules.
    pub fn parse(s: &str) -> Option<ViewName> {
        ViewName::ALL.into_iter().find(|v| v.as_str() == s)
    }
}

impl std::fmt::Display for ViewName {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.as_str())
    }
}

/// Port assignment for the views (1-based port numbers, as users write them).
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
pub struct PortMap {
    /// Driven ports of a one-winding view (`single_ended`: [driven, grounded]).
    pub pair: [usize; 2],
    /// The centre tap of a 3-port (grounded in `centre_tapped`).
    pub tap: usize,
    /// The two windings of a 4-port transformer.
    pub windings: [[usize; 2]; 2],
}

impl Default for PortMap {
    fn default() -> Self {
        PortMap {
            pair: [1, 2],
            tap: 3,
            windings: [[1, 2], [3, 4]],
        }
    }
}

/// A view: the part reduced to what its user drives, on the network's grid.
#[derive(Debug, Clone, PartialEq)]
pub enum View {
    /// A one-port seen at the drive: Y_in per point. `two_port` carries the 2×2 Y
    /// (row-major [Y11, Y12, Y21, Y22]) the view was reduced from, when there is one,
    /// so that the π-model fit can use its series and shunt branches.
    Driving {
        /// which view
        name: ViewName,
        /// input admittance per point (S)
        y_in: Vec<C64>,
        /// 2×2 Y the drive was taken from (None for 1-port data)
        two_port: Option<Vec<[C64; 4]>>,
    },
    /// Two windings: 2×2 Z per point (row-major [Z11, Z12, Z21, Z22]).
    Windings {
        /// which view
        name: ViewName,
        /// winding impedance matrix per point (Ω)
        z: Vec<[C64; 4]>,
    },
}

impl View {
    /// Which view this is.
    pub fn name(&self) -> ViewName {
        match self {
            View::Driving { name, .. } | View::Windings { name, .. } => *name,
        }
    }
}
