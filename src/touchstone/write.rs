//! Writing a [`Network`] as Touchstone 1.x or 2.x, in S, Y, Z (any port count) or
//! H, G (2-ports), any format and unit. Numbers are written in their shortest form
//! that reads back to the same `f64`, so `read(write(x))` reproduces x up to the
//! rounding of the format conversion itself (MA/DB trigonometry, frequency unit).
//!
//! Layout: version 1 puts a 1- or 2-port record on one line (2-port order
//! 11 21 12 22) and starts every matrix row of a ≥3-port on a new line with at most
//! four pairs per line (Touchstone 1.1 "Data Lines"); version 2 writes one matrix
//! row per line, `[Two-Port Data Order] 12_21`, and always a `[Reference]` line.
//! Version-1 Y/Z/H/G values are normalised to the reference resistances (the
//! inverse of the reader's rule); version-2 values are in ohms and siemens.

use std::fmt::Write as _;
use std::io;
use std::path::Path;

use super::{Format, Param, Version, WriteOptions};
use crate::network::{convert, Network, C64};

/// Smallest dB value written (a zero magnitude has no finite dB): 10^(−300).
const DB_FLOOR: f64 = -6000.0;

/// Why a network could not be written in the parameter asked for.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum WriteError {
    /// the parameter does not exist at a frequency (singular conversion)
    #[error("{param} parameters do not exist at point {point} ({f} Hz): the conversion from S is singular")]
    Singular {
        /// parameter letter
        param: &'static str,
        /// 0-based point
        point: usize,
        /// its frequency
        f: f64,
    },
    /// H or G asked for a network that is not a 2-port
    #[error("{param} parameters are defined for 2-ports only, this network has {ports} ports")]
    NeedsTwoPort {
        /// parameter letter
        param: &'static str,
        /// port count
        ports: usize,
    },
    /// the network's own arrays disagree in size
    #[error("the network is inconsistent: {0}")]
    Inconsistent(String),
}

/// Format a network; when the parameter asked for does not exist at some point
/// (e.g. Z of a series element), the file is written in S instead, with a comment
/// saying so — the data stay exact, only the parameter changes.
pub fn write_string(net: &Network, opts: &WriteOptions) -> String {
    match try_write_string(net, opts) {
        Ok(s) => s,
        Err(e) => {
            let mut o = opts.clone();
            o.param = Param::S;
            o.comments.push(format!("written as S: {e}"));
            try_write_string(net, &o).unwrap_or_else(|e| format!("! {e}\n"))
        }
    }
}

/// Write a network to `path` atomically (temporary file in the same folder, then
/// rename, through the project's one [`crate::report::atomic_write`]), as
/// [`write_string`] formats it.
pub fn write_path(path: &Path, net: &Network, opts: &WriteOptions) -> io::Result<()> {
    crate::report::atomic_write(path, write_string(net, opts).as_bytes())
}

/// Format a network, or say why it cannot be written in the parameter asked for.
pub fn try_write_string(net: &Network, opts: &WriteOptions) -> Result<String, WriteError> {
    let n = net.ports;
    let pts = net.freq.len();
    if n == 0 || net.z0.len() != n || net.s.len() != pts * n * n {
        return Err(WriteError::Inconsistent(format!(
            "{n} ports, {} reference impedances, {pts} frequencies, {} S values",
            net.z0.len(),
            net.s.len()
        )));
    }
    if matches!(opts.param, Param::H | Param::G) && n != 2 {
        return Err(WriteError::NeedsTwoPort {
            param: opts.param.letter(),
            ports: n,
        });
    }
    let v2 = opts.version.is_v2();
    let mut out = String::with_capacity(64 + pts * (n * n * 2 * 24 + 24));
    for c in &opts.comments {
        for line in c.lines() {
            let _ = writeln!(out, "! {line}");
        }
    }
    if v2 {
        let v = if opts.version == Version::V2_1 {
            "2.1"
        } else {
            "2.0"
        };
        let _ = writeln!(out, "[Version] {v}");
    }
    let same_r = net.z0.iter().all(|&r| r == net.z0[0]);
    let _ = write!(
        out,
        "# {} {} {} R",
        opts.unit.token(),
        opts.param.letter(),
        opts.format.token()
    );
    if v2 || same_r {
        let _ = write!(out, " {}", num(net.z0[0]));
    } else {
        for &r in &net.z0 {
            let _ = write!(out, " {}", num(r));
        }
    }
    out.push('\n');
    if v2 {
        let _ = writeln!(out, "[Number of Ports] {n}");
        if n == 2 {
            out.push_str("[Two-Port Data Order] 12_21\n");
        }
        let _ = writeln!(out, "[Number of Frequencies] {pts}");
        out.push_str("[Reference]");
        for &r in &net.z0 {
            let _ = write!(out, " {}", num(r));
        }
        out.push('\n');
        out.push_str("[Network Data]\n");
    }
    let div = opts.unit.multiplier();
    for k in 0..pts {
        let m = block(net, k, opts.param, v2)?;
        let _ = write!(out, "{}", num(net.freq[k] / div));
        if n == 1 || (n == 2 && !v2) {
            let order: &[usize] = if n == 1 { &[0] } else { &[0, 2, 1, 3] };
            for &i in order {
                push_pair(&mut out, m[i], opts.format);
            }
            out.push('\n');
        } else {
            for i in 0..n {
                for j in 0..n {
                    if j > 0 && !v2 && j % 4 == 0 {
                        out.push('\n');
                    }
                    if i > 0 && j == 0 {
                        out.push(' ');
                    }
                    push_pair(&mut out, m[i * n + j], opts.format);
                }
                out.push('\n');
            }
        }
    }
    if v2 {
        out.push_str("[End]\n");
    }
    Ok(out)
}

/// Point k in the parameter asked for, normalised for version 1.
fn block(net: &Network, k: usize, param: Param, v2: bool) -> Result<Vec<C64>, WriteError> {
    let n = net.ports;
    let s = net.s_block(k);
    let z0 = &net.z0;
    let singular = || WriteError::Singular {
        param: param.letter(),
        point: k,
        f: net.freq[k],
    };
    let mut m = match param {
        Param::S => return Ok(s.to_vec()),
        Param::Z => convert::s_to_z(s, n, z0).ok_or_else(singular)?,
        Param::Y => convert::s_to_y(s, n, z0).ok_or_else(singular)?,
        Param::H => {
            // H from Z: H11 = ΔZ/Z22, H12 = Z12/Z22, H21 = −Z21/Z22, H22 = 1/Z22
            let z = convert::s_to_z(s, n, z0).ok_or_else(singular)?;
            let d = z[0] * z[3] - z[1] * z[2];
            if z[3].norm() == 0.0 {
                return Err(singular());
            }
            vec![d / z[3], z[1] / z[3], -z[2] / z[3], 1.0 / z[3]]
        }
        Param::G => {
            // G from Y: G11 = ΔY/Y22, G12 = Y12/Y22, G21 = −Y21/Y22, G22 = 1/Y22
            let y = convert::s_to_y(s, n, z0).ok_or_else(singular)?;
            let d = y[0] * y[3] - y[1] * y[2];
            if y[3].norm() == 0.0 {
                return Err(singular());
            }
            vec![d / y[3], y[1] / y[3], -y[2] / y[3], 1.0 / y[3]]
        }
    };
    if !v2 {
        let r = z0;
        match param {
            Param::Z => {
                for i in 0..n {
                    for j in 0..n {
                        m[i * n + j] /= (r[i] * r[j]).sqrt();
                    }
                }
            }
            Param::Y => {
                for i in 0..n {
                    for j in 0..n {
                        m[i * n + j] *= (r[i] * r[j]).sqrt();
                    }
                }
            }
            Param::H => {
                let q = (r[0] / r[1]).sqrt();
                m[0] /= r[0];
                m[1] /= q;
                m[2] /= q;
                m[3] *= r[1];
            }
            Param::G => {
                let q = (r[1] / r[0]).sqrt();
                m[0] *= r[0];
                m[1] /= q;
                m[2] /= q;
                m[3] /= r[1];
            }
            Param::S => {}
        }
    }
    if m.iter().all(|c| c.is_finite()) {
        Ok(m)
    } else {
        Err(singular())
    }
}

fn push_pair(out: &mut String, c: C64, format: Format) {
    let (a, b) = match format {
        Format::RI => (c.re, c.im),
        Format::MA => (c.norm(), angle(c)),
        Format::DB => {
            let m = c.norm();
            let db = if m > 0.0 {
                (20.0 * m.log10()).max(DB_FLOOR)
            } else {
                DB_FLOOR
            };
            (db, angle(c))
        }
    };
    let _ = write!(out, " {} {}", num(a), num(b));
}

fn angle(c: C64) -> f64 {
    if c.re == 0.0 && c.im == 0.0 {
        0.0
    } else {
        c.arg().to_degrees()
    }
}

/// Shortest text that reads back to the same f64: plain decimals for ordinary
/// magnitudes, exponent form for very large or small ones.
struct Num(f64);

impl std::fmt::Display for Num {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        let v = self.0;
        if v == 0.0 {
            f.write_str("0")
        } else if (1e-4..1e15).contains(&v.abs()) {
            write!(f, "{v}")
        } else {
            write!(f, "{v:e}")
        }
    }
}

fn num(v: f64) -> Num {
    Num(v)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_are_shortest_and_read_back() {
        for v in [
            0.0,
            1.0,
            -0.5,
            0.1,
            1e-5,
            123456.789,
            1e15,
            5e-324,
            f64::MAX,
            2.4e9,
        ] {
            let s = num(v).to_string();
            assert_eq!(s.parse::<f64>().unwrap(), v, "{s}");
            assert_eq!(
                crate::touchstone::lex::parse_number(s.as_bytes()),
                Ok(v),
                "{s}"
            );
        }
        assert_eq!(num(0.25).to_string(), "0.25");
        assert_eq!(num(1e-7).to_string(), "1e-7");
    }

    #[test]
    fn zero_magnitude_in_db_is_finite() {
        let mut out = String::new();
        push_pair(&mut out, C64::new(0.0, 0.0), Format::DB);
        assert_eq!(out, " -6000 0");
    }

    #[test]
    fn h_and_g_need_two_ports() {
        let net = Network {
            freq: vec![1.0],
            ports: 1,
            z0: vec![50.0],
            s: vec![C64::new(0.1, 0.0)],
        };
        let opts = WriteOptions {
            param: Param::H,
            ..WriteOptions::default()
        };
        assert!(matches!(
            try_write_string(&net, &opts),
            Err(WriteError::NeedsTwoPort { .. })
        ));
    }
}
