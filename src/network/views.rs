//! The views of DESIGN §5: reductions of an N-port to what the part's user drives.
//!
//! Every reduction starts from Y with the unused ports grounded (V = 0 there), so a
//! view on ports (a, b) of an N-port sees the Y submatrix over (a, b). Formulas:
//!
//! - `one_port`: Y_in = (1 − S11)/(z0·(1 + S11)).
//! - `single_ended`: Y_in = Y_aa (port b and all others grounded).
//! - `differential`: floating drive between a and b,
//!   Z_in = Z11 − Z12 − Z21 + Z22 = (Y11 + Y12 + Y21 + Y22)/det Y (methods.md §2.2;
//!   the Y form is used because it stays finite when the 2-port Z is ill-conditioned).
//!   A pair with no path to ground (ΣY ≈ 0) has Y11 = −Y12 = −Y21 = Y22 and then
//!   Z_in = 4/(Y11 − Y12 − Y21 + Y22), its exact limit.
//! - `centre_tapped`: tap grounded, Y' = the 2×2 block of Y over the ends, then
//!   `differential` (methods.md §2.3).
//! - `transformer`: windings (a, b) and (c, d) each driven differentially: with the
//!   incidence T = [e_a − e_b, e_c − e_d], Z_w = Tᵀ Y₄⁻¹ T where Y₄ is the Y block
//!   over the four winding ports (solved, not inverted); for a 4-port whose Y is
//!   singular, Z_w = Tᵀ Z T from the Z matrix.

use rayon::prelude::*;

use super::convert::{self, magnitude, BlockConverter};
use super::{Network, PortMap, View, ViewName, C64};

/// Why a view cannot be made from a network.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ViewError {
    /// The view needs a different number of ports.
    #[error("view `{view}` needs {needs}, the data has {found}")]
    WrongPorts {
        /// the view asked for
        view: ViewName,
        /// what it needs, in words ("1 port", "at least 2 ports", …)
        needs: &'static str,
        /// ports in the data
        found: usize,
    },
    /// A port map names a port the data does not have, or uses one twice.
    #[error("view `{view}`: port map {detail} (the data has {ports} ports)")]
    BadPort {
        /// the view asked for
        view: ViewName,
        /// what is wrong
        detail: String,
        /// ports in the data
        ports: usize,
    },
    /// The reduction is singular at a frequency (e.g. a port shorted through).
    #[error("view `{view}` does not exist at {f} Hz: the network matrix is singular there")]
    Singular {
        /// the view asked for
        view: ViewName,
        /// the frequency (Hz)
        f: f64,
    },
    /// The data has no frequency points.
    #[error("view `{view}`: the data has no frequency points")]
    Empty {
        /// the view asked for
        view: ViewName,
    },
}

/// The views that apply to data with `ports` ports, in the order reports list them:
/// 1 → one_port; 2 → single_ended, differential; 3 → single_ended, centre_tapped;
/// 4 → transformer; 5 or more → single_ended.
pub fn views_for(ports: usize) -> Vec<ViewName> {
    match ports {
        0 => vec![],
        1 => vec![ViewName::OnePort],
        2 => vec![ViewName::SingleEnded, ViewName::Differential],
        3 => vec![ViewName::SingleEnded, ViewName::CentreTapped],
        4 => vec![ViewName::Transformer],
        _ => vec![ViewName::SingleEnded],
    }
}

fn check_ports(view: ViewName, list: &[usize], n: usize) -> Result<Vec<usize>, ViewError> {
    let mut idx = Vec::with_capacity(list.len());
    for &p in list {
        if p == 0 || p > n {
            return Err(ViewError::BadPort {
                view,
                detail: format!("names port {p}"),
                ports: n,
            });
        }
        if idx.contains(&(p - 1)) {
            return Err(ViewError::BadPort {
                view,
                detail: format!("uses port {p} twice"),
                ports: n,
            });
        }
        idx.push(p - 1);
    }
    Ok(idx)
}

/// The 2×2 Y submatrix over `idx` (0-based, two ports) at point k, row-major. A
/// 2-port takes the stack path [`convert::s_to_y_2`] with its factors `y2` (from
/// [`convert::Refs::y2`]); larger networks convert the whole block in `conv`. Both give
/// the bits of [`Network::y_block`].
fn y_sub2(
    net: &Network,
    k: usize,
    idx: &[usize],
    y2: Option<&[f64; 4]>,
    conv: &mut Option<BlockConverter>,
) -> Option<[C64; 4]> {
    let n = net.ports;
    let (a, b) = (*idx.first()?, *idx.get(1)?);
    if n == 2 {
        let s: &[C64; 4] = net.s_block(k).try_into().ok()?;
        let y = convert::s_to_y_2(s, y2?)?;
        // the pair is (1, 2) or (2, 1)
        Some(if a == 0 { y } else { [y[3], y[2], y[1], y[0]] })
    } else {
        let y = conv.as_mut()?.y(net.s_block(k))?;
        Some([y[a * n + a], y[a * n + b], y[b * n + a], y[b * n + b]])
    }
}

/// Differential input admittance of a 2×2 Y (floating drive), see the module doc.
pub fn differential_y(y: &[C64; 4]) -> Option<C64> {
    let sum = y[0] + y[1] + y[2] + y[3];
    // `magnitude`, not hypot: a 1e-12 threshold has no use for the last bit, and its
    // careful fallback keeps huge entries finite, so the test on the scale stands
    let scale = y.iter().map(|&c| magnitude(c)).fold(0.0, f64::max);
    if !scale.is_finite() {
        return None;
    }
    let yd = if magnitude(sum) <= 1e-12 * scale {
        (y[0] - y[1] - y[2] + y[3]) / 4.0
    } else {
        (y[0] * y[3] - y[1] * y[2]) / sum
    };
    (yd.re.is_finite() && yd.im.is_finite()).then_some(yd)
}

/// `f` at every point of `net`, or the first point where it gives None. The points
/// are independent and a long sweep's solves dominate a view, so they run in
/// parallel; the failing point is found again in order, so the error is the same for
/// any thread count. `f` gets a block converter of its own thread (None when the
/// references are bad, and then no block converts), so that no point allocates.
fn per_point<T: Send>(
    net: &Network,
    f: impl Fn(&mut Option<BlockConverter>, usize) -> Option<T> + Sync,
) -> Result<Vec<T>, usize> {
    let init = || BlockConverter::new(&net.z0);
    if !super::splits(net.points()) {
        let mut conv = init();
        // sized up front: collecting through `Result` knows no length, and grew the
        // vector by doubling
        let mut out = Vec::with_capacity(net.points());
        for k in 0..net.points() {
            out.push(f(&mut conv, k).ok_or(k)?);
        }
        return Ok(out);
    }
    let all: Option<Vec<T>> = (0..net.points())
        .into_par_iter()
        .with_min_len(super::POINTS_PER_JOB)
        .map_init(init, &f)
        .collect();
    all.ok_or_else(|| {
        let mut conv = init();
        (0..net.points())
            .find(|&k| f(&mut conv, k).is_none())
            .unwrap_or(0)
    })
}

/// Reduce `net` to the view `name`, with `ports` naming which ports play which role.
pub fn view(net: &Network, name: ViewName, ports: &PortMap) -> Result<View, ViewError> {
    let n = net.ports;
    if net.points() == 0 {
        return Err(ViewError::Empty { view: name });
    }
    let singular = |k: usize| ViewError::Singular {
        view: name,
        f: net.freq[k],
    };
    match name {
        ViewName::OnePort => {
            if n != 1 {
                return Err(ViewError::WrongPorts {
                    view: name,
                    needs: "1 port",
                    found: n,
                });
            }
            let y_in = per_point(net, |conv, k| {
                conv.as_mut()?.y(net.s_block(k)).map(|y| y[0])
            })
            .map_err(singular)?;
            Ok(View::Driving {
                name,
                y_in,
                two_port: None,
            })
        }
        ViewName::SingleEnded | ViewName::Differential | ViewName::CentreTapped => {
            let min = if name == ViewName::CentreTapped { 3 } else { 2 };
            if n < min {
                return Err(ViewError::WrongPorts {
                    view: name,
                    needs: if min == 3 {
                        "at least 3 ports"
                    } else {
                        "at least 2 ports"
                    },
                    found: n,
                });
            }
            let idx = if name == ViewName::CentreTapped {
                // the tap only has to be distinct from the ends; it is grounded like
                // every other port outside the pair
                check_ports(name, &[ports.pair[0], ports.pair[1], ports.tap], n)?[..2].to_vec()
            } else {
                check_ports(name, &ports.pair, n)?
            };
            let y2 = convert::Refs::new(&net.z0).and_then(|r| r.y2());
            let both = per_point(net, |conv, k| {
                let y = y_sub2(net, k, &idx, y2.as_ref(), conv)?;
                let yin = if name == ViewName::SingleEnded {
                    y[0]
                } else {
                    differential_y(&y)?
                };
                Some((yin, y))
            })
            .map_err(singular)?;
            // two copies from a slice: cheaper than `unzip`'s element-wise pushes
            let y_in = both.iter().map(|p| p.0).collect();
            let two = both.iter().map(|p| p.1).collect();
            Ok(View::Driving {
                name,
                y_in,
                two_port: Some(two),
            })
        }
        ViewName::Transformer => {
            if n < 4 {
                return Err(ViewError::WrongPorts {
                    view: name,
                    needs: "at least 4 ports",
                    found: n,
                });
            }
            let w = ports.windings;
            let idx = check_ports(name, &[w[0][0], w[0][1], w[1][0], w[1][1]], n)?;
            let z = per_point(net, |conv, k| winding_z(net, k, &idx, conv.as_mut()?))
                .map_err(singular)?;
            Ok(View::Windings { name, z })
        }
    }
}

/// Z_w = Tᵀ Y₄⁻¹ T over the four winding ports (a, b, c, d), the other ports grounded.
/// For a 4-port Y₄⁻¹ is Z itself, so Tᵀ Z T is taken directly: one solve per point
/// instead of two (S → Y, then Y₄ X = T), and defined wherever Y₄⁻¹ is (Z needs I − S
/// invertible only; the Y route also needed I + S). Y is the fallback for a 4-port
/// whose Z does not exist, where the result is singular anyway.
fn winding_z(
    net: &Network,
    k: usize,
    idx: &[usize],
    conv: &mut BlockConverter,
) -> Option<[C64; 4]> {
    // T in the local order (a, b, c, d): columns e_a − e_b and e_c − e_d (4×2)
    let one = C64::new(1.0, 0.0);
    let zero = C64::new(0.0, 0.0);
    let t = [[one, zero], [-one, zero], [zero, one], [zero, -one]];
    let n = net.ports;
    // the 4×4 block of `m` (N×N) over the winding ports, in the local order
    let local = |m: &[C64]| -> [C64; 16] {
        let mut out = [zero; 16];
        for (a, &i) in idx.iter().enumerate() {
            for (b, &j) in idx.iter().enumerate() {
                out[a * 4 + b] = m[i * n + j];
            }
        }
        out
    };
    // Tᵀ Z T: winding r's ports (2r, 2r + 1) in the local order, so each entry is
    // z_pq − z_pq' − z_p'q + z_p'q'
    let tzt = |z: &[C64; 16]| {
        let mut out = [zero; 4];
        for r in 0..2 {
            for c in 0..2 {
                let (p, p1, q, q1) = (2 * r, 2 * r + 1, 2 * c, 2 * c + 1);
                out[r * 2 + c] = z[p * 4 + q] - z[p * 4 + q1] - z[p1 * 4 + q] + z[p1 * 4 + q1];
            }
        }
        out
    };
    if n == 4 {
        if let Some(z) = conv.z(net.s_block(k)) {
            return Some(tzt(&local(z)));
        }
    }
    if let Some(y) = conv.y(net.s_block(k)) {
        let mut y4 = local(y);
        // X = Y₄⁻¹ T, row-major 4×2
        let mut x = [zero; 8];
        for i in 0..4 {
            x[i * 2] = t[i][0];
            x[i * 2 + 1] = t[i][1];
        }
        if convert::solve_block_in_place(&mut y4, &mut x, 4) {
            // Tᵀ X
            let mut out = [zero; 4];
            for r in 0..2 {
                for c in 0..2 {
                    out[r * 2 + c] = (0..4).map(|i| t[i][r] * x[i * 2 + c]).sum();
                }
            }
            return Some(out);
        }
    }
    None
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn views_by_port_count() {
        assert_eq!(views_for(1), vec![ViewName::OnePort]);
        assert_eq!(
            views_for(2),
            vec![ViewName::SingleEnded, ViewName::Differential]
        );
        assert_eq!(views_for(4), vec![ViewName::Transformer]);
    }

    #[test]
    fn floating_series_element() {
        // A series impedance between ports 1 and 2 with no path to ground: the
        // differential input impedance is the element itself (common practice, no source).
        let zs = C64::new(3.0, 40.0);
        let ys = C64::new(1.0, 0.0) / zs;
        let y = [ys, -ys, -ys, ys];
        let zd = C64::new(1.0, 0.0) / differential_y(&y).unwrap();
        assert!((zd - zs).norm() < 1e-12);
    }

    /// A network of `points` random passive-sized blocks (a small LCG).
    fn random_net(n: usize, points: usize, seed: u64) -> Network {
        let mut state = seed;
        let mut next = || {
            state = state
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            (state >> 11) as f64 / (1u64 << 53) as f64 - 0.5
        };
        Network {
            freq: (1..=points).map(|k| k as f64 * 1e7).collect(),
            ports: n,
            z0: vec![50.0; n],
            s: (0..points * n * n)
                .map(|_| C64::new(next(), next()) * 0.5)
                .collect(),
        }
    }

    #[test]
    fn long_sweeps_in_parallel_match_short_ones_in_order() {
        // 3,000 points go through rayon, each half of them (1,500) point by point:
        // the concatenated views must have the same bits, and a singular point must
        // be found at the same frequency
        for (n, names) in [
            (2, vec![ViewName::SingleEnded, ViewName::Differential]),
            (4, vec![ViewName::Transformer]),
        ] {
            let mut net = random_net(n, 3000, 0x7e57 + n as u64);
            let half = |net: &Network, lo: usize| Network {
                freq: net.freq[lo..lo + 1500].to_vec(),
                ports: n,
                z0: net.z0.clone(),
                s: net.s[lo * n * n..(lo + 1500) * n * n].to_vec(),
            };
            for &name in &names {
                let whole = view(&net, name, &PortMap::default()).expect("a view");
                let a = view(&half(&net, 0), name, &PortMap::default()).expect("a view");
                let b = view(&half(&net, 1500), name, &PortMap::default()).expect("a view");
                // per field: y_in and the 2×2 Y of a drive, or the winding Z
                let fields = |v: &View| -> [Vec<u64>; 2] {
                    let bits = |c: &[C64]| -> Vec<u64> {
                        c.iter()
                            .flat_map(|c| [c.re.to_bits(), c.im.to_bits()])
                            .collect()
                    };
                    match v {
                        View::Driving { y_in, two_port, .. } => {
                            let y2: Vec<C64> =
                                two_port.iter().flatten().flatten().copied().collect();
                            [bits(y_in), bits(&y2)]
                        }
                        View::Windings { z, .. } => {
                            let z: Vec<C64> = z.iter().flatten().copied().collect();
                            [bits(&z), Vec::new()]
                        }
                    }
                };
                let (w, fa, fb) = (fields(&whole), fields(&a), fields(&b));
                for f in 0..2 {
                    let joined: Vec<u64> = fa[f].iter().chain(&fb[f]).copied().collect();
                    assert_eq!(w[f], joined, "{n} ports, {name:?}, field {f}");
                }
                assert!(!w[0].is_empty());
            }
            // I + S singular at point 2,500 (S = −I): no Y there, so no view
            for i in 0..n {
                for j in 0..n {
                    net.s[2500 * n * n + i * n + j] =
                        C64::new(if i == j { -1.0 } else { 0.0 }, 0.0);
                }
            }
            if n == 2 {
                let err = view(&net, ViewName::SingleEnded, &PortMap::default());
                assert_eq!(
                    err,
                    Err(ViewError::Singular {
                        view: ViewName::SingleEnded,
                        f: net.freq[2500]
                    })
                );
            }
        }
    }

    #[test]
    fn wrong_ports() {
        let net = Network {
            freq: vec![1e9],
            ports: 1,
            z0: vec![50.0],
            s: vec![C64::new(0.2, 0.1)],
        };
        assert!(matches!(
            view(&net, ViewName::Differential, &PortMap::default()),
            Err(ViewError::WrongPorts { .. })
        ));
        assert!(view(&net, ViewName::OnePort, &PortMap::default()).is_ok());
        let pm = PortMap {
            pair: [1, 1],
            ..Default::default()
        };
        let net2 = Network {
            freq: vec![1e9],
            ports: 2,
            z0: vec![50.0; 2],
            s: vec![C64::new(0.1, 0.0); 4],
        };
        assert!(matches!(
            view(&net2, ViewName::SingleEnded, &pm),
            Err(ViewError::BadPort { .. })
        ));
    }
}
