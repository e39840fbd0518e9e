//! Plots for the reports: choosing and decimating a part's curves ([`plot_data`]), the
//! axis logic (log-frequency decades with minor ticks 2…9, linear value ticks, labels
//! with engineering prefixes) and a small SVG writer ([`svg_chart`]).
//!
//! Why an own SVG writer rather than a plotting crate: the output must be byte-stable
//! for snapshot tests and for identical reports from identical inputs; tick labels
//! must read the way designers write them ("1 GHz", "20 GHz", "L (nH)"); a log axis
//! needs minor ticks 2…9 and a sensible fallback when the sweep spans less than a
//! decade; and the charts take their colours from the page's CSS so that one SVG
//! serves light, dark and print. That is about as much code as configuring a general
//! library to do it, and it adds no dependency.

use std::cell::RefCell;
use std::fmt::Write as _;
use std::rc::Rc;

use crate::figures::{Kind, ViewFigures};
use crate::model::LossBand;
use crate::units::{eng, push_eng, push_fixed, push_sig3};
use crate::verdict::PlotData;

/// Points kept per part by [`plot_data`] (before the per-chart line simplification):
/// about one per 3.5 px of the 568 px wide plot area, with every peak, trough and zero
/// crossing kept besides, so nothing visible is lost and `report.json` stays small.
pub const PLOT_POINTS: usize = 160;

/// Curves plotted for each kind, in the order they are drawn.
pub fn series_for(kind: Kind) -> &'static [&'static str] {
    match kind {
        Kind::Inductor => &["l", "q", "q_tank"],
        Kind::Capacitor => &["c", "q"],
        Kind::Transformer => &["k", "q1", "q2", "il_min"],
    }
}

/// The plot data of one part: the curves of its kind (see [`series_for`]) decimated to
/// about [`PLOT_POINTS`] frequencies — keeping the ends, each curve's peak and trough,
/// every sign change (the SRF crossing of q), the edges of undefined stretches and the
/// points around the marks and band edges — the marks `srf` (and winding `srf1`,
/// `srf2`…), `f_q_peak`, `f_q_half` from the scalars, the band, and the loss bands.
/// Values are rounded to six significant digits: plenty for a plot, and it keeps
/// `report.json` small.
pub fn plot_data(figs: &ViewFigures, band: Option<[f64; 2]>) -> PlotData {
    let n = figs.freq.len();
    let names: Vec<&str> = series_for(figs.kind)
        .iter()
        .copied()
        .filter(|s| figs.curves.get(*s).is_some_and(|c| c.len() == n))
        .collect();
    let clean: Vec<Vec<Option<f64>>> = names
        .iter()
        .map(|s| {
            figs.curves
                .get(*s)
                .map(|c| c.iter().map(|v| v.filter(|x| x.is_finite())).collect())
                .unwrap_or_default()
        })
        .collect();

    let mut marks = std::collections::BTreeMap::new();
    for (name, v) in &figs.scalars {
        let is_mark = name == "f_q_peak" || name == "f_q_half" || name.starts_with("srf");
        if let Some(v) = v.filter(|v| is_mark && v.is_finite() && *v > 0.0) {
            marks.insert(name.clone(), round_sig(v, 6));
        }
    }
    let band = band.filter(|b| b[0].is_finite() && b[1].is_finite() && b[0] <= b[1]);

    let mut keep_f: Vec<f64> = marks.values().copied().collect();
    if let Some(b) = band {
        keep_f.extend(b);
    }
    let refs: Vec<&[Option<f64>]> = clean.iter().map(|c| c.as_slice()).collect();
    let idx = if n > 0 && figs.freq.iter().all(|f| f.is_finite() && *f > 0.0) {
        decimate(&figs.freq, &refs, &keep_f, PLOT_POINTS)
    } else {
        Vec::new()
    };

    let freq = idx.iter().map(|&i| round_sig(figs.freq[i], 9)).collect();
    let series = names
        .iter()
        .zip(&clean)
        .map(|(name, c)| {
            (
                name.to_string(),
                idx.iter().map(|&i| c[i].map(|v| round_sig(v, 6))).collect(),
            )
        })
        .collect();
    let loss_bands = match &figs.loss {
        Some(Ok(story)) => story.loss_bands.clone(),
        _ => Vec::new(),
    };
    PlotData {
        freq,
        series,
        marks,
        band,
        loss_bands,
    }
}

/// `v` rounded to `digits` significant digits (finite in, finite out).
pub fn round_sig(v: f64, digits: i32) -> f64 {
    if v == 0.0 || !v.is_finite() {
        return v;
    }
    let e = floor_log10(v.abs());
    let scale = pow10i(digits - 1 - e);
    let r = (v * scale).round() / scale;
    if r.is_finite() {
        r
    } else {
        v
    }
}

/// `10f64.powi(n)`, from a table for |n| ≤ 22: the same double (powi multiplies exact
/// powers of ten there and takes the reciprocal for n < 0) without its loop.
fn pow10i(n: i32) -> f64 {
    match crate::units::EXACT_POW10.get(n.unsigned_abs() as usize) {
        Some(p) if n >= 0 => *p,
        Some(p) => 1.0 / p,
        None => 10f64.powi(n),
    }
}

/// `a.log10().floor() as i32` for a finite `a` > 0, by comparing with powers of ten: a
/// plot's numbers are rounded by [`round_sig`] one by one, and `log10` was most of
/// that. Within 1e-12 (relative) of a power of ten it returns what `log10` gives,
/// which can differ from the exact answer there; elsewhere `log10`'s error (under an
/// ulp, below 1e-13 here) cannot move it across an integer, so both agree.
fn floor_log10(a: f64) -> i32 {
    /// 10^k for k = −40 … 40
    const P10: [f64; 81] = [
        1e-40, 1e-39, 1e-38, 1e-37, 1e-36, 1e-35, 1e-34, 1e-33, 1e-32, 1e-31, 1e-30, 1e-29, 1e-28,
        1e-27, 1e-26, 1e-25, 1e-24, 1e-23, 1e-22, 1e-21, 1e-20, 1e-19, 1e-18, 1e-17, 1e-16, 1e-15,
        1e-14, 1e-13, 1e-12, 1e-11, 1e-10, 1e-9, 1e-8, 1e-7, 1e-6, 1e-5, 1e-4, 1e-3, 1e-2, 1e-1,
        1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16,
        1e17, 1e18, 1e19, 1e20, 1e21, 1e22, 1e23, 1e24, 1e25, 1e26, 1e27, 1e28, 1e29, 1e30, 1e31,
        1e32, 1e33, 1e34, 1e35, 1e36, 1e37, 1e38, 1e39, 1e40,
    ];
    let by_log = |a: f64| a.log10().floor() as i32;
    if !(1e-38..=1e38).contains(&a) {
        return by_log(a);
    }
    // floor(e₂·log₁₀2), with 78913/2¹⁸ for log₁₀2 (exact for |e₂| < 1700): the answer
    // is this or one more, as a spans less than a factor of two
    let e2 = ((a.to_bits() >> 52) & 0x7ff) as i32 - 1023;
    let est = (e2 * 78913) >> 18;
    let at = |k: i32| P10[(k + 40) as usize];
    let e = if a >= at(est + 1) { est + 1 } else { est };
    if a < at(e) * (1.0 + 1e-12) || a > at(e + 1) * (1.0 - 1e-12) {
        return by_log(a);
    }
    e
}

/// Mark in `keep` the points on either side of a sign change or a gap of any series,
/// and the two points around each frequency of `keep_f`.
fn keep_crossings(freq: &[f64], series: &[&[Option<f64>]], keep_f: &[f64], keep: &mut [bool]) {
    let n = keep.len();
    for s in series {
        let s = &s[..n.min(s.len())];
        for i in 0..s.len().saturating_sub(1) {
            let change = match (s[i], s[i + 1]) {
                (Some(a), Some(b)) => (a < 0.0) != (b < 0.0),
                (None, None) => false,
                _ => true,
            };
            if change {
                keep[i] = true;
                keep[i + 1] = true;
            }
        }
    }
    for &f in keep_f {
        let j = freq.partition_point(|&x| x < f);
        if j < n {
            keep[j] = true;
        }
        if j > 0 {
            keep[j - 1] = true;
        }
    }
}

/// Indices of the points to keep when drawing `series` (all on the grid `freq`, which
/// must be positive and increasing; values not NaN) with about `target` points.
///
/// Kept always: both ends; each series' largest and smallest value; both points around
/// every sign change (so the zero crossing at SRF is drawn where it is) and around every
/// switch between defined and undefined; the points around each frequency in `keep_f`.
/// The rest of the budget goes to equal-width buckets in log frequency, each keeping
/// its first point and each series' extremes within it (so no peak is flattened).
pub fn decimate(
    freq: &[f64],
    series: &[&[Option<f64>]],
    keep_f: &[f64],
    target: usize,
) -> Vec<usize> {
    let n = freq.len();
    if n <= target.max(2) {
        return (0..n).collect();
    }
    let mut keep = vec![false; n];
    keep[0] = true;
    keep[n - 1] = true;
    // (each series' largest and smallest value need no pass of their own: the buckets
    // below cover every point, and the first extreme of the whole series is the first
    // extreme of its bucket, which the bucket walk keeps)
    keep_crossings(freq, series, keep_f, &mut keep);
    // Smooth curves keep about two points per bucket (their extremes sit at the bucket
    // ends); only noisy data fills a bucket's 1 + 2·series slots, so size the buckets
    // for the usual case and accept up to about twice the target for noise.
    let per_bucket = 1 + series.len();
    let buckets = (target / per_bucket).max(1);
    for b in log_buckets(freq, buckets) {
        keep[b.start] = true;
        for s in series {
            let bucket = s.get(b.start..b.end.min(s.len())).unwrap_or_default();
            if let Some((hi, lo)) = extremes(bucket) {
                keep[b.start + hi] = true;
                keep[b.start + lo] = true;
            }
        }
    }
    (0..n).filter(|&i| keep[i]).collect()
}

/// `freq` (positive, increasing, at least one point) cut into `count` ≥ 1 equal-width
/// buckets in log frequency: the index ranges of the non-empty ones, in order, covering
/// every point.
fn log_buckets(freq: &[f64], count: usize) -> impl Iterator<Item = std::ops::Range<usize>> {
    let n = freq.len();
    // each point's log frequency once (the walk reads most of them twice)
    let lf: Vec<f64> = freq.iter().map(|f| f.ln()).collect();
    let (l0, l1) = (lf[0], lf[n - 1]);
    let width = (l1 - l0) / count as f64;
    let mut start = 0;
    std::iter::from_fn(move || {
        if start >= n {
            return None;
        }
        let b = if width > 0.0 {
            (((lf[start] - l0) / width).floor() as usize).min(count - 1)
        } else {
            count - 1
        };
        let edge = l0 + width * (b + 1) as f64;
        let mut end = start + 1;
        while end < n && (b == count - 1 || lf[end] < edge) {
            end += 1;
        }
        let range = start..end;
        start = end;
        Some(range)
    })
}

/// The indices of the first largest and the first smallest defined value of `s`; None
/// when it has none.
fn extremes(s: &[Option<f64>]) -> Option<(usize, usize)> {
    let mut best: Option<((usize, f64), (usize, f64))> = None;
    for (i, v) in s.iter().enumerate() {
        let Some(v) = *v else { continue };
        match &mut best {
            None => best = Some(((i, v), (i, v))),
            Some((hi, lo)) => {
                if v > hi.1 {
                    *hi = (i, v);
                }
                if v < lo.1 {
                    *lo = (i, v);
                }
            }
        }
    }
    best.map(|(hi, lo)| (hi.0, lo.0))
}

/// Ticks of a log-frequency axis.
#[derive(Debug, Clone, PartialEq)]
pub struct LogTicks {
    /// ticks with a label and a grid line: the decades, or when the range holds fewer
    /// than two decades, the 1-2-5 steps (or failing that every step 1…9) inside it
    pub major: Vec<f64>,
    /// the other steps 2…9 of each decade inside the range (short ticks, faint grid)
    pub minor: Vec<f64>,
}

/// Ticks for a log axis over `[lo, hi]` (both > 0).
pub fn log_ticks(lo: f64, hi: f64) -> LogTicks {
    let mut steps: Vec<(f64, u32)> = Vec::new();
    if !(lo > 0.0 && hi >= lo && hi.is_finite()) {
        return LogTicks {
            major: Vec::new(),
            minor: Vec::new(),
        };
    }
    let tol = 1e-9;
    let d0 = lo.log10().floor() as i32;
    let d1 = hi.log10().ceil() as i32;
    for d in d0..=d1 {
        let p = 10f64.powi(d);
        for m in 1..=9u32 {
            let v = round_sig(m as f64 * p, 12);
            if v >= lo * (1.0 - tol) && v <= hi * (1.0 + tol) {
                steps.push((v, m));
            }
        }
    }
    let pick = |want: &dyn Fn(u32) -> bool| -> Vec<f64> {
        steps
            .iter()
            .filter(|(_, m)| want(*m))
            .map(|(v, _)| *v)
            .collect()
    };
    let mut major = pick(&|m| m == 1);
    if major.len() < 2 {
        major = pick(&|m| m == 1 || m == 2 || m == 5);
    }
    if major.len() < 2 {
        major = pick(&|_| true);
    }
    let minor = steps
        .iter()
        .map(|(v, _)| *v)
        .filter(|v| !major.contains(v))
        .collect();
    LogTicks { major, minor }
}

/// A frequency tick label: `1 GHz`, `10 GHz`, `500 MHz`.
pub fn freq_label(f: f64) -> String {
    eng(f, "Hz")
}

/// Ticks of a linear value axis: "nice" steps (1, 2 or 5 × 10ᵏ) covering `[lo, hi]`
/// with about `target` intervals; the first tick ≤ lo and the last ≥ hi.
pub fn linear_ticks(lo: f64, hi: f64, target: usize) -> Vec<f64> {
    if !(lo.is_finite() && hi.is_finite()) {
        return Vec::new();
    }
    let (lo, hi) = if hi > lo {
        (lo, hi)
    } else {
        let pad = if lo == 0.0 { 1.0 } else { lo.abs() * 0.1 };
        (lo - pad, lo + pad)
    };
    let raw = (hi - lo) / target.max(1) as f64;
    let p = 10f64.powf(raw.log10().floor());
    let step = [1.0, 2.0, 5.0, 10.0]
        .iter()
        .map(|m| m * p)
        .find(|s| *s >= raw * (1.0 - 1e-9))
        .unwrap_or(10.0 * p);
    let first = (lo / step + 1e-9).floor() as i64;
    let last = (hi / step - 1e-9).ceil() as i64;
    (first..=last)
        .map(|k| {
            let v = round_sig(k as f64 * step, 12);
            if v.abs() < step * 1e-9 {
                0.0
            } else {
                v
            }
        })
        .collect()
}

/// The scale for a value axis: the factor to divide by and the prefixed unit, chosen
/// from the largest tick magnitude: (1e-9, "nH") for ticks up to a few nH. A ratio
/// (empty unit) or dB is never scaled.
pub fn axis_scale(max_abs: f64, unit: &str) -> (f64, String) {
    if unit.is_empty() || unit == "dB" || !(max_abs.is_finite() && max_abs > 0.0) {
        return (1.0, unit.to_string());
    }
    let (k, p) = crate::units::SI_PREFIXES
        .iter()
        .copied()
        .find(|(k, _)| max_abs >= *k * 0.9995)
        .unwrap_or((1e-15, "f"));
    (k, format!("{p}{unit}"))
}

/// Simplify a polyline (screen coordinates) with the Ramer–Douglas–Peucker algorithm:
/// drop points closer than `eps` to the chord of their neighbours. Ends are kept.
pub fn simplify(points: &[(f64, f64)], eps: f64) -> Vec<(f64, f64)> {
    let keep = Rdp::default().keep(points, eps).to_vec();
    points
        .iter()
        .zip(keep)
        .filter(|(_, k)| *k)
        .map(|(p, _)| *p)
        .collect()
}

/// The work buffers of [`simplify`], kept to serve many polylines.
#[derive(Default)]
struct Rdp {
    keep: Vec<bool>,
    stack: Vec<(usize, usize)>,
}

impl Rdp {
    /// Which points of `points` [`simplify`] keeps.
    fn keep(&mut self, points: &[(f64, f64)], eps: f64) -> &[bool] {
        let n = points.len();
        self.keep.clear();
        self.keep.resize(n, n <= 2);
        if n <= 2 {
            return &self.keep;
        }
        self.keep[0] = true;
        self.keep[n - 1] = true;
        self.stack.clear();
        self.stack.push((0usize, n - 1));
        while let Some((a, b)) = self.stack.pop() {
            if b <= a + 1 {
                continue;
            }
            let (x0, y0) = points[a];
            let (x1, y1) = points[b];
            let (dx, dy) = (x1 - x0, y1 - y0);
            let len = (dx * dx + dy * dy).sqrt();
            let inner = &points[a + 1..b];
            let far = if len > 0.0 {
                farthest_from_chord(inner, (x0, y0), (dx, dy), len)
            } else {
                // both ends at one spot: the distance to it
                let mut far = (0, 0.0);
                for (i, &(x, y)) in inner.iter().enumerate() {
                    let d = ((x - x0).powi(2) + (y - y0).powi(2)).sqrt();
                    if d > far.1 {
                        far = (i, d);
                    }
                }
                far
            };
            let far = (a + 1 + far.0, far.1);
            if far.1 > eps {
                self.keep[far.0] = true;
                self.stack.push((a, far.0));
                self.stack.push((far.0, b));
            }
        }
        &self.keep
    }
}

/// The first point of `inner` farthest from the chord from `p0` along `(dx, dy)` (of
/// length `len` > 0) and its distance |cross| / len, or (0, 0.0) when none is off the
/// chord. The distance needs a division, but a point can only be farther than the
/// farthest so far when its cross product is larger, so only those are divided: the
/// same point and distance as dividing every one.
fn farthest_from_chord(
    inner: &[(f64, f64)],
    (x0, y0): (f64, f64),
    (dx, dy): (f64, f64),
    len: f64,
) -> (usize, f64) {
    let mut far = (0, 0.0);
    let mut far_cross = 0.0;
    for (i, &(x, y)) in inner.iter().enumerate() {
        let cross = ((x - x0) * dy - (y - y0) * dx).abs();
        if cross > far_cross {
            let d = cross / len;
            if d > far.1 {
                far = (i, d);
                far_cross = cross;
            }
        }
    }
    far
}

// ---------------------------------------------------------------------------
// The SVG writer.

/// One curve of a chart.
#[derive(Debug, Clone)]
pub struct Line {
    /// legend text (`Q`, `tank Q`)
    pub label: String,
    /// CSS class giving its colour and dash (`s-l`, `s-q`, …)
    pub class: String,
    /// values on the chart's frequency grid; `None` breaks the line
    pub values: Vec<Option<f64>>,
}

/// A vertical mark at a frequency (SRF, Q peak, …).
#[derive(Debug, Clone)]
pub struct Mark {
    /// text beside the mark
    pub label: String,
    /// frequency (Hz)
    pub f: f64,
    /// CSS class
    pub class: String,
}

/// Everything one chart shows.
#[derive(Debug, Clone)]
pub struct Chart {
    /// element id (unique in the page; also prefixes the clip path's id)
    pub id: String,
    /// heading inside the chart
    pub title: String,
    /// SI unit of the values ("H", "F", "dB" or "" for ratios)
    pub unit: String,
    /// frequencies (Hz), positive and increasing
    pub freq: Vec<f64>,
    /// curves
    pub lines: Vec<Line>,
    /// shaded band (Hz)
    pub band: Option<[f64; 2]>,
    /// vertical marks
    pub marks: Vec<Mark>,
    /// value range to show (None: from the data)
    pub y_range: Option<(f64, f64)>,
    /// loss bands drawn as a strip under the chart
    pub strip: Vec<LossBand>,
}

const W: f64 = 640.0;
const PLOT_H: f64 = 200.0;
const LEFT: f64 = 58.0;
const RIGHT: f64 = 14.0;
const TOP: f64 = 30.0;
const STRIP_H: f64 = 14.0;

/// A value range for values that may shoot off near a resonance: the extremes of the
/// values below `cutoff` (Hz, when given), widened a little, with 0 included when the
/// data come near it.
pub fn auto_range(
    freq: &[f64],
    lines: &[&[Option<f64>]],
    cutoff: Option<f64>,
) -> Option<(f64, f64)> {
    let mut lo = f64::INFINITY;
    let mut hi = f64::NEG_INFINITY;
    for l in lines {
        for (f, v) in freq.iter().zip(l.iter()) {
            if let Some(v) = v.filter(|v| v.is_finite()) {
                if cutoff.is_none_or(|c| *f <= c) {
                    lo = lo.min(v);
                    hi = hi.max(v);
                }
            }
        }
    }
    if !(lo.is_finite() && hi.is_finite()) {
        return None;
    }
    if lo > 0.0 && lo < 0.5 * hi {
        lo = 0.0;
    }
    if hi < 0.0 && hi > 0.5 * lo {
        hi = 0.0;
    }
    let pad = (hi - lo).abs() * 0.06;
    let pad = if pad > 0.0 {
        pad
    } else {
        hi.abs().max(1e-30) * 0.1
    };
    Some((if lo == 0.0 { 0.0 } else { lo - pad }, hi + pad))
}

/// A screen coordinate with one decimal, appended to `o`: the text of `{:.1}`.
fn push_px(o: &mut String, v: f64) {
    push_fixed(o, v, 1);
}

/// A layout constant (a whole number of px), appended as `{}` prints it.
fn push_whole(o: &mut String, v: f64) {
    if v.fract() == 0.0 && v.abs() < 1e15 {
        // `{:.0}` of a whole number is its `{}`
        push_fixed(o, v, 0);
    } else {
        let _ = write!(o, "{v}");
    }
}

/// Text escaped for an attribute or element (`& < > "`), appended to `o`.
fn push_esc(o: &mut String, s: &str) {
    let mut rest = s;
    while let Some(i) = rest
        .bytes()
        .position(|b| matches!(b, b'&' | b'<' | b'>' | b'"'))
    {
        o.push_str(&rest[..i]);
        o.push_str(match rest.as_bytes()[i] {
            b'&' => "&amp;",
            b'<' => "&lt;",
            b'>' => "&gt;",
            _ => "&quot;",
        });
        rest = &rest[i + 1..];
    }
    o.push_str(rest);
}

/// Appends the pieces of an element: literal text and numbers, so that a chart is
/// written without `core::fmt`.
macro_rules! put {
    ($o:expr; $($piece:expr),+ $(,)?) => {{
        let o: &mut String = $o;
        $( Piece::put($piece, o); )+
    }};
}

/// One piece of [`put!`]: text as it is, an [`Px`] coordinate, a [`Whole`] constant
/// or [`Esc`]aped text.
trait Piece {
    fn put(self, o: &mut String);
}

impl Piece for &str {
    fn put(self, o: &mut String) {
        o.push_str(self);
    }
}

impl Piece for &String {
    fn put(self, o: &mut String) {
        o.push_str(self);
    }
}

/// A screen coordinate, one decimal.
struct Px(f64);

impl Piece for Px {
    fn put(self, o: &mut String) {
        push_px(o, self.0);
    }
}

/// A layout constant, printed as `{}` prints it.
struct Whole(f64);

impl Piece for Whole {
    fn put(self, o: &mut String) {
        push_whole(o, self.0);
    }
}

/// Text escaped for an attribute or element.
struct Esc<'a>(&'a str);

impl Piece for Esc<'_> {
    fn put(self, o: &mut String) {
        push_esc(o, self.0);
    }
}

/// A frequency in engineering notation (`2.4 GHz`).
struct Hz(f64);

impl Piece for Hz {
    fn put(self, o: &mut String) {
        push_eng(o, self.0, "Hz");
    }
}

/// What the charts on one frequency grid share: the log axis's mapping, the x of
/// every point and the ticks with their grid lines and labels. A part's charts are
/// all on its plot grid, so this is worked out once per part, not once per chart.
struct XAxis {
    fl: f64,
    fh: f64,
    ll: f64,
    lh: f64,
    /// the x of every frequency
    xs: Vec<f64>,
    /// the grid lines and labels, which depend on the ends alone
    grid: Rc<Grid>,
}

/// The ticks of an axis with their grid lines and labels, as SVG text.
struct Grid {
    /// the minor grid element, or nothing when there are no minor ticks
    minor: String,
    /// the major grid lines' part of the grid path
    major: String,
    /// each major tick's x and its label, escaped
    labels: Vec<(f64, String)>,
}

/// The bits of a span's two ends, as [`LAST_GRID`] knows it by.
type SpanBits = (u64, u64);

thread_local! {
    /// The grid of the span this thread drew last, by the bits of its ends: the parts
    /// of a library mostly share their sweep's span, and the grid is most of the cost
    /// of an axis.
    static LAST_GRID: RefCell<Option<(SpanBits, Rc<Grid>)>> = const { RefCell::new(None) };
}

impl XAxis {
    /// The axis of `freq`; None when it cannot be plotted (fewer than two points, or
    /// not positive and increasing at its ends).
    fn of(freq: &[f64]) -> Option<XAxis> {
        let n = freq.len();
        if n < 2 || freq[0] <= 0.0 || freq[n - 1] <= freq[0] {
            return None;
        }
        let (fl, fh) = (freq[0], freq[n - 1]);
        let (ll, lh) = (fl.log10(), fh.log10());
        let x = |f: f64| x_of(f, ll, lh);
        let key = (fl.to_bits(), fh.to_bits());
        let grid = LAST_GRID.with_borrow_mut(|last| match last {
            Some((k, g)) if *k == key => g.clone(),
            _ => {
                let g = Rc::new(Grid::of(fl, fh, x));
                *last = Some((key, g.clone()));
                g
            }
        });
        Some(XAxis {
            fl,
            fh,
            ll,
            lh,
            xs: freq.iter().map(|&f| x(f)).collect(),
            grid,
        })
    }

    /// The x of frequency `f`.
    fn x(&self, f: f64) -> f64 {
        x_of(f, self.ll, self.lh)
    }
}

impl Grid {
    /// The grid of an axis from `fl` to `fh`, `x` giving a frequency's x.
    fn of(fl: f64, fh: f64, x: impl Fn(f64) -> f64) -> Grid {
        let mut g = Grid {
            minor: String::new(),
            major: String::new(),
            labels: Vec::new(),
        };
        let ticks = log_ticks(fl, fh);
        if !ticks.minor.is_empty() {
            g.minor.push_str("<path class=\"grid-minor\" d=\"");
            for f in &ticks.minor {
                put!(&mut g.minor; "M", Px(x(*f)), VLINE);
            }
            g.minor.push_str("\"/>");
        }
        for f in &ticks.major {
            let x = x(*f);
            put!(&mut g.major; "M", Px(x), VLINE);
            let mut label = String::new();
            push_esc(&mut label, &freq_label(*f));
            g.labels.push((x, label));
        }
        g
    }
}

/// The x of frequency `f` on a log axis from 10^`ll` to 10^`lh`.
fn x_of(f: f64, ll: f64, lh: f64) -> f64 {
    let (x0, x1) = (LEFT, W - RIGHT);
    x0 + (f.log10() - ll) / (lh - ll) * (x1 - x0)
}

/// The rest of a vertical line from the top of the plot area to its bottom.
const VLINE: &str = " 30V230";

/// Render a chart as an `<svg>` element (no XML prolog; meant to sit inline in HTML).
/// Colours come from CSS classes: `.s-*` curves, `.band`, `.mark`, `.m-conductor`,
/// `.m-substrate`, `.m-resonance`, `.grid`, `.grid-minor`, `.frame`.
pub fn svg_chart(c: &Chart) -> String {
    let mut o = String::with_capacity(8 * 1024);
    chart_into(&mut o, c, XAxis::of(&c.freq).as_ref());
    o
}

/// [`svg_chart`] of each chart appended to `o`, each between `before` and `after`. A
/// chart on the same frequencies as the one before reuses its axis.
pub fn svg_charts_into(o: &mut String, charts: &[Chart], before: &str, after: &str) {
    let mut axis: Option<(&[f64], Option<XAxis>)> = None;
    for c in charts {
        if axis.as_ref().is_none_or(|(f, _)| *f != c.freq.as_slice()) {
            axis = Some((&c.freq, XAxis::of(&c.freq)));
        }
        o.push_str(before);
        chart_into(o, c, axis.as_ref().and_then(|(_, a)| a.as_ref()));
        o.push_str(after);
    }
}

/// Write chart `c` into `o`; `axis` is the axis of `c.freq` (None: not plottable).
fn chart_into(o: &mut String, c: &Chart, axis: Option<&XAxis>) {
    let strip = !c.strip.is_empty();
    let plot_bottom = TOP + PLOT_H;
    let axis_y = plot_bottom + if strip { STRIP_H + 4.0 } else { 0.0 };
    let legend_y = axis_y + 34.0;
    let height = if strip { legend_y + 8.0 } else { axis_y + 30.0 };
    let (x0, x1) = (LEFT, W - RIGHT);

    put!(o; "<svg xmlns=\"http://www.w3.org/2000/svg\" id=\"", Esc(&c.id),
        "\" class=\"chart\" viewBox=\"0 0 ", Whole(W), " ", Whole(height),
        "\" role=\"img\" aria-label=\"", Esc(&c.title), "\"><title>", Esc(&c.title), "</title>");
    let Some(axis) = axis else {
        put!(o; "<text class=\"note\" x=\"", Whole(LEFT), "\" y=\"", Whole(TOP + 20.0),
            "\">not enough points to plot</text></svg>");
        return;
    };
    let (fl, fh) = (axis.fl, axis.fh);
    let xf = |f: f64| axis.x(f);

    let vals: Vec<&[Option<f64>]> = c.lines.iter().map(|l| l.values.as_slice()).collect();
    let (mut yl, mut yh) = c
        .y_range
        .or_else(|| auto_range(&c.freq, &vals, None))
        .unwrap_or((0.0, 1.0));
    let yt = linear_ticks(yl, yh, 5);
    if let (Some(a), Some(b)) = (yt.first(), yt.last()) {
        yl = *a;
        yh = *b;
    }
    if yh <= yl {
        yh = yl + 1.0;
    }
    let yv = |v: f64| (plot_bottom - (v - yl) / (yh - yl) * PLOT_H).clamp(-1e4, 1e4);

    // title and legend on the top row
    put!(o; "<text class=\"ctitle\" x=\"", Whole(x0), "\" y=\"18\">", Esc(&c.title), "</text>");
    let mut lx = x1;
    for l in c.lines.iter().rev() {
        let w = 30.0 + 7.0 * l.label.chars().count() as f64;
        lx -= w;
        put!(o; "<g class=\"legend ", Esc(&l.class), "\"><line x1=\"", Px(lx),
            "\" y1=\"14\" x2=\"", Px(lx + 18.0), "\" y2=\"14\"/><text x=\"", Px(lx + 22.0),
            "\" y=\"18\">", Esc(&l.label), "</text></g>");
    }

    // band
    if let Some([b0, b1]) = c.band {
        let a = xf(b0.max(fl).min(fh));
        let b = xf(b1.max(fl).min(fh));
        if b > a {
            put!(o; "<rect class=\"band\" x=\"", Px(a), "\" y=\"", Whole(TOP), "\" width=\"",
                Px(b - a), "\" height=\"", Whole(PLOT_H), "\"><title>band ", Hz(b0), " – ",
                Hz(b1), "</title></rect>");
        }
    }

    // grid and ticks
    o.push_str(&axis.grid.minor);
    put!(o; "<path class=\"grid\" d=\"", &axis.grid.major);
    for v in &yt {
        put!(o; "M", Whole(x0), " ", Px(yv(*v)), "H", Whole(x1));
    }
    o.push_str("\"/><g class=\"xlabels\">");
    for (x, label) in &axis.grid.labels {
        put!(o; "<text x=\"", Px(*x), "\" y=\"", Px(axis_y + 16.0), "\">", label, "</text>");
    }
    o.push_str("</g>");
    let max_abs = yt.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    let (k, unit) = axis_scale(max_abs, &c.unit);
    o.push_str("<g class=\"ylabels\">");
    for v in &yt {
        put!(o; "<text x=\"", Px(x0 - 5.0), "\" y=\"", Px(yv(*v) + 4.0), "\">");
        push_sig3(o, *v / k);
        o.push_str("</text>");
    }
    o.push_str("</g>");
    if !unit.is_empty() {
        put!(o; "<text class=\"yunit\" x=\"8\" y=\"", Px(TOP - 6.0), "\">", Esc(&unit), "</text>");
    }

    // curves, clipped to the plot area
    put!(o; "<clipPath id=\"", Esc(&c.id), "-clip\"><rect x=\"", Whole(x0), "\" y=\"", Whole(TOP),
        "\" width=\"", Px(x1 - x0), "\" height=\"", Whole(PLOT_H),
        "\"/></clipPath><g clip-path=\"url(#", Esc(&c.id), "-clip)\">");
    if yl < 0.0 && yh > 0.0 {
        put!(o; "<path class=\"zero\" d=\"M", Whole(x0), " ", Px(yv(0.0)), "H", Whole(x1), "\"/>");
    }
    // each curve's path goes straight into `o` (taken back when it has no point);
    // the buffers serve every curve
    let mut seg: Vec<(f64, f64)> = Vec::with_capacity(axis.xs.len());
    let mut rdp = Rdp::default();
    for l in &c.lines {
        let mark = o.len();
        put!(o; "<path class=\"curve ", Esc(&l.class), "\" d=\"");
        let path = o.len();
        let mut flush = |seg: &mut Vec<(f64, f64)>, o: &mut String| {
            let keep = rdp.keep(seg, 0.3);
            for (j, &(x, y)) in seg
                .iter()
                .zip(keep)
                .filter(|(_, k)| **k)
                .map(|(p, _)| p)
                .enumerate()
            {
                put!(o; if j == 0 { "M" } else { " " }, Px(x), " ", Px(y));
            }
            seg.clear();
        };
        for (&x, v) in axis.xs.iter().zip(l.values.iter()) {
            match v {
                Some(v) if v.is_finite() => seg.push((x, yv(*v))),
                _ => flush(&mut seg, o),
            }
        }
        flush(&mut seg, o);
        if o.len() == path {
            o.truncate(mark);
        } else {
            o.push_str("\"/>");
        }
    }
    o.push_str("</g>");

    // marks; each label goes right of its line when it fits (else left), in the first
    // of four rows where it overlaps no other label
    let mut marks: Vec<&Mark> = c.marks.iter().filter(|m| m.f >= fl && m.f <= fh).collect();
    marks.sort_by(|a, b| a.f.total_cmp(&b.f));
    let mut rows: Vec<Vec<(f64, f64)>> = vec![Vec::new(); 4];
    for m in marks {
        let x = xf(m.f);
        // about 5.8 px per character at the marks' 10.5 px font
        let w = 5.8 * m.label.chars().count() as f64 + 4.0;
        let (anchor, a, b) = if x + w <= x1 {
            ("start", x, x + w)
        } else {
            ("end", x - w, x)
        };
        let row = (0..rows.len())
            .find(|&r| rows[r].iter().all(|&(p, q)| b < p || a > q))
            .unwrap_or(rows.len() - 1);
        rows[row].push((a, b));
        let ty = TOP + 11.0 + 12.0 * row as f64;
        let tx = if anchor == "end" { x - 3.0 } else { x + 3.0 };
        put!(o; "<g class=\"mark ", Esc(&m.class), "\"><path d=\"M", Px(x), VLINE,
            "\"/><text x=\"", Px(tx), "\" y=\"", Px(ty), "\" text-anchor=\"", anchor, "\">",
            Esc(&m.label), "</text></g>");
    }

    // loss strip
    if strip {
        let sy = plot_bottom + 3.0;
        o.push_str("<g class=\"strip\">");
        for b in &c.strip {
            let a = xf(b.from.max(fl).min(fh));
            let e = xf(b.to.max(fl).min(fh));
            let w = (e - a).max(1.0);
            let mech = b.mechanism.as_str();
            put!(o; "<rect class=\"m-", mech, "\" x=\"", Px(a), "\" y=\"", Px(sy), "\" width=\"",
                Px(w), "\" height=\"", Whole(STRIP_H), "\"><title>", mech, ": ", Hz(b.from),
                " – ", Hz(b.to), "</title></rect>");
        }
        o.push_str("</g>");
        let mut lx = x0;
        put!(o; "<text class=\"slabel\" x=\"", Px(lx), "\" y=\"", Px(legend_y),
            "\">Q limited by:</text>");
        lx += 96.0;
        for (m, word) in [
            ("conductor", "conductor loss"),
            ("substrate", "substrate loss"),
            ("resonance", "self-resonance"),
        ] {
            put!(o; "<rect class=\"m-", m, "\" x=\"", Px(lx), "\" y=\"", Px(legend_y - 9.0),
                "\" width=\"12\" height=\"10\"/><text class=\"slabel\" x=\"", Px(lx + 16.0),
                "\" y=\"", Px(legend_y), "\">", word, "</text>");
            lx += 124.0;
        }
    }
    put!(o; "<rect class=\"frame\" x=\"", Whole(x0), "\" y=\"", Whole(TOP), "\" width=\"",
        Px(x1 - x0), "\" height=\"", Whole(PLOT_H), "\"/></svg>");
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn coordinates_print_as_one_decimal_like_std() {
        // the same text as std's `{:.1}`, ties included (units::tests covers the rest)
        let px = |v: f64| {
            let mut s = String::new();
            push_px(&mut s, v);
            s
        };
        for i in -20_000..20_000 {
            for v in [i as f64 * 0.0137 + 0.003, i as f64 * 0.05, i as f64 / 64.0] {
                assert_eq!(px(v), format!("{v:.1}"), "{v}");
            }
        }
        assert_eq!(px(1e300), format!("{:.1}", 1e300));
        assert_eq!(px(-3.96), "-4.0");
    }

    #[test]
    fn layout_constants_and_escapes_print_like_std() {
        for v in [
            0.0, -0.0, 8.0, 30.0, 58.0, 626.0, 260.0, 290.0, 1e14, -3.0, 0.5, 1e300,
        ] {
            let mut s = String::new();
            push_whole(&mut s, v);
            assert_eq!(s, format!("{v}"), "{v}");
        }
        assert_eq!(VLINE, format!(" {TOP}V{}", TOP + PLOT_H));
        let mut s = String::new();
        push_esc(&mut s, "a&b<c>d\"e'f µ");
        assert_eq!(s, "a&amp;b&lt;c&gt;d&quot;e'f µ");
    }

    #[test]
    fn decades_and_minor_ticks() {
        let t = log_ticks(1e8, 1e11);
        assert_eq!(t.major, vec![1e8, 1e9, 1e10, 1e11]);
        // 2..9 in each of three decades
        assert_eq!(t.minor.len(), 24);
        assert!(t.minor.contains(&2e8) && t.minor.contains(&9e10));
        let labels: Vec<String> = t.major.iter().map(|f| freq_label(*f)).collect();
        assert_eq!(labels, ["100 MHz", "1 GHz", "10 GHz", "100 GHz"]);
    }

    #[test]
    fn partial_decades() {
        // 0.5 GHz … 40 GHz: two decades inside, minors from 5e8 up to 4e10
        let t = log_ticks(5e8, 40e9);
        assert_eq!(t.major, vec![1e9, 1e10]);
        assert_eq!(t.minor.first(), Some(&5e8));
        assert_eq!(t.minor.last(), Some(&4e10));
        // less than a decade: 1-2-5 labels
        let t = log_ticks(1.5e9, 6e9);
        assert_eq!(t.major, vec![2e9, 5e9]);
        assert_eq!(t.minor, vec![3e9, 4e9, 6e9]);
        // very narrow: every step
        let t = log_ticks(2.5e9, 4.5e9);
        assert_eq!(t.major, vec![3e9, 4e9]);
        assert!(t.minor.is_empty());
        assert!(log_ticks(0.0, 1.0).major.is_empty());
    }

    #[test]
    fn engineering_labels_and_scale() {
        assert_eq!(freq_label(2.4e9), "2.4 GHz");
        assert_eq!(freq_label(5e8), "500 MHz");
        assert_eq!(freq_label(77e9), "77 GHz");
        assert_eq!(axis_scale(2e-9, "H"), (1e-9, "nH".to_string()));
        assert_eq!(axis_scale(500e-15, "F"), (1e-15, "fF".to_string()));
        assert_eq!(axis_scale(25.0, ""), (1.0, String::new()));
        assert_eq!(axis_scale(3.0, "dB"), (1.0, "dB".to_string()));
    }

    #[test]
    fn nice_linear_ticks() {
        assert_eq!(
            linear_ticks(0.0, 1.0, 5),
            vec![0.0, 0.2, 0.4, 0.6, 0.8, 1.0]
        );
        assert_eq!(
            linear_ticks(-3.0, 17.0, 5),
            vec![-5.0, 0.0, 5.0, 10.0, 15.0, 20.0]
        );
        let t = linear_ticks(0.0, 1.37e-9, 5);
        // step 0.5 nH (the next nice step above 1.37/5 nH), last tick covers the top
        assert_eq!(t.len(), 4, "{t:?}");
        assert!((t[3] - 1.5e-9).abs() < 1e-21, "{t:?}");
        // degenerate range still gives ticks around the value
        assert!(linear_ticks(2.0, 2.0, 5).len() >= 2);
    }

    fn grid(n: usize) -> Vec<f64> {
        (0..n)
            .map(|i| 1e8 * 10f64.powf(3.0 * i as f64 / (n - 1) as f64))
            .collect()
    }

    #[test]
    fn decimation_keeps_peak_crossing_and_ends() {
        let f = grid(5001);
        // a Q-like curve: rises, peaks near 3 GHz, crosses zero at 9.1 GHz
        let srf = 9.1e9;
        let q: Vec<Option<f64>> = f
            .iter()
            .map(|&f| {
                Some(20.0 * (f / 3e9) * (1.0 - (f / srf).powi(2)) / (1.0 + (f / 3e9).powi(2)))
            })
            .collect();
        let peak = (0..f.len())
            .max_by(|&a, &b| q[a].unwrap_or(0.0).total_cmp(&q[b].unwrap_or(0.0)))
            .expect("non-empty");
        let cross = (0..f.len() - 1)
            .find(|&i| q[i].unwrap_or(0.0) > 0.0 && q[i + 1].unwrap_or(0.0) <= 0.0)
            .expect("crosses");
        let idx = decimate(&f, &[&q], &[srf], 300);
        assert!(idx.len() <= 330, "{}", idx.len());
        assert!(idx.len() >= 100, "{}", idx.len());
        assert_eq!(idx.first(), Some(&0));
        assert_eq!(idx.last(), Some(&5000));
        assert!(idx.contains(&peak));
        assert!(idx.contains(&cross) && idx.contains(&(cross + 1)));
        assert!(idx.windows(2).all(|w| w[0] < w[1]));
        // a narrow spike survives too
        let mut spiky = q.clone();
        spiky[1234] = Some(1e3);
        let idx = decimate(&f, &[&spiky], &[], 300);
        assert!(idx.contains(&1234));
        // a short sweep is kept whole
        assert_eq!(decimate(&f[..50], &[&q[..50]], &[], 300).len(), 50);
    }

    #[test]
    fn decimation_keeps_gaps() {
        let f = grid(2000);
        let v: Vec<Option<f64>> = (0..2000)
            .map(|i| {
                if (700..900).contains(&i) {
                    None
                } else {
                    Some(i as f64)
                }
            })
            .collect();
        let idx = decimate(&f, &[&v], &[], 100);
        for i in [699, 700, 899, 900] {
            assert!(idx.contains(&i), "{i}");
        }
    }

    /// A small xorshift64 generator for the comparisons below.
    struct Rng(u64);

    impl Rng {
        fn next(&mut self) -> u64 {
            self.0 ^= self.0 << 13;
            self.0 ^= self.0 >> 7;
            self.0 ^= self.0 << 17;
            self.0
        }
        /// uniform in [0, 1)
        fn unit(&mut self) -> f64 {
            (self.next() >> 11) as f64 / (1u64 << 53) as f64
        }
    }

    /// [`decimate`] as first written: a pass for each series' extremes of its own.
    fn decimate_plain(
        freq: &[f64],
        series: &[&[Option<f64>]],
        keep_f: &[f64],
        target: usize,
    ) -> Vec<usize> {
        let n = freq.len();
        if n <= target.max(2) {
            return (0..n).collect();
        }
        let extremes = |s: &[Option<f64>], from: usize, keep: &mut [bool]| {
            let mut hi: Option<(usize, f64)> = None;
            let mut lo: Option<(usize, f64)> = None;
            for (i, v) in s.iter().enumerate() {
                if let Some(v) = *v {
                    if hi.is_none_or(|(_, h)| v > h) {
                        hi = Some((i, v));
                    }
                    if lo.is_none_or(|(_, l)| v < l) {
                        lo = Some((i, v));
                    }
                }
            }
            for (i, _) in hi.into_iter().chain(lo) {
                keep[from + i] = true;
            }
        };
        let mut keep = vec![false; n];
        keep[0] = true;
        keep[n - 1] = true;
        for s in series {
            extremes(&s[..n.min(s.len())], 0, &mut keep);
        }
        keep_crossings(freq, series, keep_f, &mut keep);
        let buckets = (target / (1 + series.len())).max(1);
        for b in log_buckets(freq, buckets) {
            keep[b.start] = true;
            for s in series {
                let bucket = s.get(b.start..b.end.min(s.len())).unwrap_or_default();
                extremes(bucket, b.start, &mut keep);
            }
        }
        (0..n).filter(|&i| keep[i]).collect()
    }

    #[test]
    fn decimation_equals_the_plain_one() {
        let mut rng = Rng(0x2545_f491_4f6c_dd1d);
        for case in 0..2_000 {
            let n = 2 + (rng.next() % 700) as usize;
            let f = grid(n.max(2));
            let n_series = 1 + (rng.next() % 4) as usize;
            let series: Vec<Vec<Option<f64>>> = (0..n_series)
                .map(|_| {
                    // smooth, noisy, flat, with gaps and ties, infinite, and short ones
                    // (no NaN: it has no order, and plot_data passes none)
                    let style = rng.next() % 6;
                    let len = if style == 5 { n / 2 } else { n };
                    (0..len)
                        .map(|i| {
                            let r = rng.unit();
                            match style {
                                0 => Some((i as f64 * 0.01).sin() * 5.0 - 1.0),
                                1 => Some(r - 0.5),
                                2 => Some(3.0),
                                3 => (r > 0.2).then_some((r * 4.0).round() - 2.0),
                                4 => Some(if r < 0.05 {
                                    f64::INFINITY
                                } else if r < 0.1 {
                                    f64::NEG_INFINITY
                                } else {
                                    r
                                }),
                                _ => (r > 0.5).then_some(r * 1e-9),
                            }
                        })
                        .collect()
                })
                .collect();
            let refs: Vec<&[Option<f64>]> = series.iter().map(|s| s.as_slice()).collect();
            let keep_f: Vec<f64> = (0..rng.next() % 4)
                .map(|_| 1e8 * 10f64.powf(3.5 * rng.unit() - 0.2))
                .collect();
            let target = [2, 10, 160, 300, 1000][case % 5];
            assert_eq!(
                decimate(&f, &refs, &keep_f, target),
                decimate_plain(&f, &refs, &keep_f, target),
                "case {case}"
            );
        }
    }

    /// [`Rdp::keep`] with the distance of every point worked out by division.
    fn rdp_plain(points: &[(f64, f64)], eps: f64) -> Vec<bool> {
        let n = points.len();
        let mut keep = vec![n <= 2; n];
        if n <= 2 {
            return keep;
        }
        keep[0] = true;
        keep[n - 1] = true;
        let mut stack = vec![(0usize, n - 1)];
        while let Some((a, b)) = stack.pop() {
            if b <= a + 1 {
                continue;
            }
            let (x0, y0) = points[a];
            let (x1, y1) = points[b];
            let (dx, dy) = (x1 - x0, y1 - y0);
            let len = (dx * dx + dy * dy).sqrt();
            let mut far = (a, 0.0);
            for (i, &(x, y)) in points.iter().enumerate().take(b).skip(a + 1) {
                let d = if len > 0.0 {
                    ((x - x0) * dy - (y - y0) * dx).abs() / len
                } else {
                    ((x - x0).powi(2) + (y - y0).powi(2)).sqrt()
                };
                if d > far.1 {
                    far = (i, d);
                }
            }
            if far.1 > eps {
                keep[far.0] = true;
                stack.push((a, far.0));
                stack.push((far.0, b));
            }
        }
        keep
    }

    #[test]
    fn line_simplification_equals_the_plain_one() {
        let mut rng = Rng(0x9e37_79b9_7f4a_7c15);
        let mut rdp = Rdp::default();
        for case in 0..5_000 {
            let n = (rng.next() % 300) as usize;
            let style = rng.next() % 5;
            let pts: Vec<(f64, f64)> = (0..n)
                .map(|i| {
                    let x = 58.0 + i as f64 * 568.0 / n.max(1) as f64;
                    let r = rng.unit();
                    match style {
                        // a curve, noise, a flat line, screen pixels (many equal
                        // distances), a closed loop (both ends at one spot)
                        0 => (x, 130.0 + 90.0 * (i as f64 * 0.05).sin()),
                        1 => (x, 30.0 + 200.0 * r),
                        2 => (x, 100.0),
                        3 => (x.round(), (30.0 + 200.0 * r).round()),
                        _ => {
                            let t = std::f64::consts::TAU * i as f64 / (n.max(2) - 1) as f64;
                            (300.0 + 80.0 * t.cos(), 130.0 + 80.0 * t.sin())
                        }
                    }
                })
                .collect();
            let eps = [0.3, 0.0, 1.0, 5.0][case % 4];
            assert_eq!(
                rdp.keep(&pts, eps),
                rdp_plain(&pts, eps).as_slice(),
                "case {case}"
            );
        }
    }

    #[test]
    fn simplify_drops_collinear() {
        let pts: Vec<(f64, f64)> = (0..100).map(|i| (i as f64, 2.0 * i as f64)).collect();
        assert_eq!(simplify(&pts, 0.1), vec![(0.0, 0.0), (99.0, 198.0)]);
        let mut bent = pts.clone();
        bent[50].1 += 5.0;
        assert!(simplify(&bent, 0.1).contains(&bent[50]));
    }

    #[test]
    fn floor_log10_is_the_floor_of_log10() {
        let mut vals = vec![
            5e-324,
            f64::MIN_POSITIVE,
            1e-300,
            1e-39,
            1e-38,
            1e38,
            1e39,
            1e300,
        ];
        for k in -45..=45 {
            let p = 10f64.powi(k);
            for q in [
                p,
                10f64.powf(k as f64),
                format!("1e{k}").parse().unwrap_or(p),
            ] {
                let mut v = q;
                for _ in 0..4 {
                    v = v.next_up();
                    vals.push(v);
                }
                v = q;
                for _ in 0..4 {
                    v = v.next_down();
                    vals.push(v);
                }
                for r in [1e-13, 1e-12, 2e-12, 1e-11, 1e-6, 0.5, 2.0, 3.0, 9.99] {
                    vals.extend([q, q * (1.0 + r), q * (1.0 - r.min(0.5))]);
                }
            }
        }
        let mut state = 0x2545_f491_4f6c_dd1du64;
        for _ in 0..200_000 {
            // xorshift64: magnitudes over the whole range, and over the plots' range
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            let v = f64::from_bits(state >> 1);
            if v.is_finite() && v > 0.0 {
                vals.push(v);
            }
            let u = (state >> 11) as f64 / (1u64 << 53) as f64;
            vals.push(10f64.powf(u * 80.0 - 40.0));
        }
        for v in vals {
            assert_eq!(floor_log10(v), v.log10().floor() as i32, "{v:e}");
        }
    }

    #[test]
    fn pow10i_is_powi() {
        for n in -400..=400 {
            assert_eq!(pow10i(n).to_bits(), 10f64.powi(n).to_bits(), "{n}");
        }
    }

    #[test]
    fn rounding() {
        assert_eq!(round_sig(1.23456789e-9, 6), 1.23457e-9);
        assert_eq!(round_sig(-987654.321, 3), -988000.0);
        assert_eq!(round_sig(0.0, 3), 0.0);
    }

    #[test]
    fn chart_is_stable_and_clipped() {
        let f = grid(50);
        let l: Vec<Option<f64>> = f.iter().map(|_| Some(1.2e-9)).collect();
        let c = Chart {
            id: "p1-l".into(),
            title: "Inductance".into(),
            unit: "H".into(),
            freq: f.clone(),
            lines: vec![Line {
                label: "L".into(),
                class: "s-l".into(),
                values: l,
            }],
            band: Some([4.9e9, 5.9e9]),
            marks: vec![Mark {
                label: "SRF 9.1 GHz".into(),
                f: 9.1e9,
                class: "srf".into(),
            }],
            y_range: None,
            strip: vec![],
        };
        let a = svg_chart(&c);
        assert_eq!(a, svg_chart(&c));
        assert!(a.starts_with("<svg") && a.ends_with("</svg>"));
        assert!(a.contains("clip-path=\"url(#p1-l-clip)\""));
        assert!(a.contains(">1 GHz<") && a.contains(">10 GHz<"));
        assert!(a.contains(">nH<"));
        assert!(a.contains("SRF 9.1 GHz"));
        // a flat line simplifies to its two ends
        let curve = a
            .split("class=\"curve s-l\" d=\"")
            .nth(1)
            .and_then(|s| s.split('"').next())
            .expect("curve path");
        assert_eq!(curve.matches(' ').count(), 3, "{curve}");
    }
}
