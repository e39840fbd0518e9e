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

use std::fmt::Write as _;

use crate::figures::{Kind, ViewFigures};
use crate::model::LossBand;
use crate::units::{eng, push_fixed, sig3, Fixed};
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
    let e = v.abs().log10().floor() as i32;
    let scale = 10f64.powi(digits - 1 - e);
    let r = (v * scale).round() / scale;
    if r.is_finite() {
        r
    } else {
        v
    }
}

/// Indices of the points to keep when drawing `series` (all on the grid `freq`, which
/// must be positive and increasing) with about `target` points.
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
    for s in series {
        let s = &s[..n.min(s.len())];
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
            keep[i] = true;
        }
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
    // Smooth curves keep about two points per bucket (their extremes sit at the bucket
    // ends); only noisy data fills a bucket's 1 + 2·series slots, so size the buckets
    // for the usual case and accept up to about twice the target for noise.
    let per_bucket = 1 + series.len();
    let buckets = (target / per_bucket).max(1);
    // each point's log frequency once (the bucket walk reads most of them twice)
    let lf: Vec<f64> = freq.iter().map(|f| f.ln()).collect();
    let (l0, l1) = (lf[0], lf[n - 1]);
    let width = (l1 - l0) / buckets as f64;
    let mut start = 0;
    while start < n {
        let b = if width > 0.0 {
            (((lf[start] - l0) / width).floor() as usize).min(buckets - 1)
        } else {
            buckets - 1
        };
        let edge = l0 + width * (b + 1) as f64;
        let mut end = start + 1;
        while end < n && (b == buckets - 1 || lf[end] < edge) {
            end += 1;
        }
        keep[start] = true;
        for s in series {
            let mut hi: Option<(usize, f64)> = None;
            let mut lo: Option<(usize, f64)> = None;
            for (i, v) in s.iter().enumerate().take(end.min(s.len())).skip(start) {
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
                keep[i] = true;
            }
        }
        start = end;
    }
    (0..n).filter(|&i| keep[i]).collect()
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
                self.keep[far.0] = true;
                self.stack.push((a, far.0));
                self.stack.push((far.0, b));
            }
        }
        &self.keep
    }
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

/// Text escaped for an attribute or element, written straight into the output.
struct Esc<'a>(&'a str);

impl std::fmt::Display for Esc<'_> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        let mut rest = self.0;
        while let Some(i) = rest.find(['&', '<', '>', '"']) {
            f.write_str(&rest[..i])?;
            f.write_str(match rest.as_bytes()[i] {
                b'&' => "&amp;",
                b'<' => "&lt;",
                b'>' => "&gt;",
                _ => "&quot;",
            })?;
            rest = &rest[i + 1..];
        }
        f.write_str(rest)
    }
}

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

/// A screen coordinate with one decimal: the text of `{:.1}` (see [`Fixed`]).
fn px(v: f64) -> Fixed {
    Fixed(v, 1)
}

/// Render a chart as an `<svg>` element (no XML prolog; meant to sit inline in HTML).
/// Colours come from CSS classes: `.s-*` curves, `.band`, `.mark`, `.m-conductor`,
/// `.m-substrate`, `.m-resonance`, `.grid`, `.grid-minor`, `.frame`.
pub fn svg_chart(c: &Chart) -> String {
    let n = c.freq.len();
    let strip = !c.strip.is_empty();
    let plot_bottom = TOP + PLOT_H;
    let axis_y = plot_bottom + if strip { STRIP_H + 4.0 } else { 0.0 };
    let legend_y = axis_y + 34.0;
    let height = if strip { legend_y + 8.0 } else { axis_y + 30.0 };
    let (x0, x1) = (LEFT, W - RIGHT);

    let mut o = String::with_capacity(8 * 1024);
    let _ = write!(
        o,
        "<svg xmlns=\"http://www.w3.org/2000/svg\" id=\"{}\" class=\"chart\" viewBox=\"0 0 {W} {height}\" role=\"img\" aria-label=\"{}\">",
        Esc(&c.id),
        Esc(&c.title)
    );
    let _ = write!(o, "<title>{}</title>", Esc(&c.title));
    if n < 2 || c.freq[0] <= 0.0 || c.freq[n - 1] <= c.freq[0] {
        let _ = write!(
            o,
            "<text class=\"note\" x=\"{LEFT}\" y=\"{}\">not enough points to plot</text></svg>",
            TOP + 20.0
        );
        return o;
    }
    let (fl, fh) = (c.freq[0], c.freq[n - 1]);
    let (ll, lh) = (fl.log10(), fh.log10());
    let xf = |f: f64| x0 + (f.log10() - ll) / (lh - ll) * (x1 - x0);

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
    let _ = write!(
        o,
        "<text class=\"ctitle\" x=\"{x0}\" y=\"18\">{}</text>",
        Esc(&c.title)
    );
    let mut lx = x1;
    for l in c.lines.iter().rev() {
        let w = 30.0 + 7.0 * l.label.chars().count() as f64;
        lx -= w;
        let _ = write!(
            o,
            "<g class=\"legend {}\"><line x1=\"{}\" y1=\"14\" x2=\"{}\" y2=\"14\"/><text x=\"{}\" y=\"18\">{}</text></g>",
            Esc(&l.class),
            px(lx),
            px(lx + 18.0),
            px(lx + 22.0),
            Esc(&l.label)
        );
    }

    // band
    if let Some([b0, b1]) = c.band {
        let a = xf(b0.max(fl).min(fh));
        let b = xf(b1.max(fl).min(fh));
        if b > a {
            let _ = write!(
                o,
                "<rect class=\"band\" x=\"{}\" y=\"{TOP}\" width=\"{}\" height=\"{PLOT_H}\"><title>band {} – {}</title></rect>",
                px(a),
                px(b - a),
                eng(b0, "Hz"),
                eng(b1, "Hz")
            );
        }
    }

    // grid and ticks
    let ticks = log_ticks(fl, fh);
    // the constant parts of the grid lines, formatted once
    let vline = format!(" {TOP}V{plot_bottom}");
    let (hline_start, hline_end) = (format!("M{x0} "), format!("H{x1}"));
    let mut minor = String::new();
    for f in &ticks.minor {
        minor.push('M');
        push_fixed(&mut minor, xf(*f), 1);
        minor.push_str(&vline);
    }
    if !minor.is_empty() {
        let _ = write!(o, "<path class=\"grid-minor\" d=\"{minor}\"/>");
    }
    let mut major = String::new();
    for f in &ticks.major {
        major.push('M');
        push_fixed(&mut major, xf(*f), 1);
        major.push_str(&vline);
    }
    for v in &yt {
        major.push_str(&hline_start);
        push_fixed(&mut major, yv(*v), 1);
        major.push_str(&hline_end);
    }
    let _ = write!(o, "<path class=\"grid\" d=\"{major}\"/>");
    let _ = write!(o, "<g class=\"xlabels\">");
    for f in &ticks.major {
        let _ = write!(
            o,
            "<text x=\"{}\" y=\"{}\">{}</text>",
            px(xf(*f)),
            px(axis_y + 16.0),
            Esc(&freq_label(*f))
        );
    }
    let _ = write!(o, "</g>");
    let max_abs = yt.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    let (k, unit) = axis_scale(max_abs, &c.unit);
    let _ = write!(o, "<g class=\"ylabels\">");
    for v in &yt {
        let _ = write!(
            o,
            "<text x=\"{}\" y=\"{}\">{}</text>",
            px(x0 - 5.0),
            px(yv(*v) + 4.0),
            sig3(*v / k)
        );
    }
    let _ = write!(o, "</g>");
    if !unit.is_empty() {
        let _ = write!(
            o,
            "<text class=\"yunit\" x=\"8\" y=\"{}\">{}</text>",
            px(TOP - 6.0),
            Esc(&unit)
        );
    }

    // curves, clipped to the plot area
    let clip = format!("{}-clip", c.id);
    let _ = write!(
        o,
        "<clipPath id=\"{}\"><rect x=\"{x0}\" y=\"{TOP}\" width=\"{}\" height=\"{PLOT_H}\"/></clipPath><g clip-path=\"url(#{})\">",
        Esc(&clip),
        px(x1 - x0),
        Esc(&clip)
    );
    if yl < 0.0 && yh > 0.0 {
        let _ = write!(o, "<path class=\"zero\" d=\"M{x0} {}H{x1}\"/>", px(yv(0.0)));
    }
    // each curve's path goes straight into `o` (taken back when it has no point);
    // the buffers serve every curve
    let xs: Vec<f64> = c.freq.iter().map(|&f| xf(f)).collect();
    let mut seg: Vec<(f64, f64)> = Vec::with_capacity(n);
    let mut rdp = Rdp::default();
    for l in &c.lines {
        let mark = o.len();
        let _ = write!(o, "<path class=\"curve {}\" d=\"", Esc(&l.class));
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
                o.push_str(if j == 0 { "M" } else { " " });
                push_fixed(o, x, 1);
                o.push(' ');
                push_fixed(o, y, 1);
            }
            seg.clear();
        };
        for (&x, v) in xs.iter().zip(l.values.iter()) {
            match v {
                Some(v) if v.is_finite() => seg.push((x, yv(*v))),
                _ => flush(&mut seg, &mut o),
            }
        }
        flush(&mut seg, &mut o);
        if o.len() == path {
            o.truncate(mark);
        } else {
            o.push_str("\"/>");
        }
    }
    let _ = write!(o, "</g>");

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
        let _ = write!(
            o,
            "<g class=\"mark {}\"><path d=\"M{}{vline}\"/><text x=\"{}\" y=\"{}\" text-anchor=\"{anchor}\">{}</text></g>",
            Esc(&m.class),
            px(x),
            px(tx),
            px(ty),
            Esc(&m.label)
        );
    }

    // loss strip
    if strip {
        let sy = plot_bottom + 3.0;
        let _ = write!(o, "<g class=\"strip\">");
        for b in &c.strip {
            let a = xf(b.from.max(fl).min(fh));
            let e = xf(b.to.max(fl).min(fh));
            let w = (e - a).max(1.0);
            let _ = write!(
                o,
                "<rect class=\"m-{}\" x=\"{}\" y=\"{}\" width=\"{}\" height=\"{STRIP_H}\"><title>{}: {} – {}</title></rect>",
                b.mechanism.as_str(),
                px(a),
                px(sy),
                px(w),
                b.mechanism.as_str(),
                eng(b.from, "Hz"),
                eng(b.to, "Hz")
            );
        }
        let _ = write!(o, "</g>");
        let mut lx = x0;
        let _ = write!(
            o,
            "<text class=\"slabel\" x=\"{}\" y=\"{}\">Q limited by:</text>",
            px(lx),
            px(legend_y)
        );
        lx += 96.0;
        for (m, word) in [
            ("conductor", "conductor loss"),
            ("substrate", "substrate loss"),
            ("resonance", "self-resonance"),
        ] {
            let _ = write!(
                o,
                "<rect class=\"m-{m}\" x=\"{}\" y=\"{}\" width=\"12\" height=\"10\"/><text class=\"slabel\" x=\"{}\" y=\"{}\">{word}</text>",
                px(lx),
                px(legend_y - 9.0),
                px(lx + 16.0),
                px(legend_y)
            );
            lx += 124.0;
        }
    }
    let _ = write!(
        o,
        "<rect class=\"frame\" x=\"{x0}\" y=\"{TOP}\" width=\"{}\" height=\"{PLOT_H}\"/>",
        px(x1 - x0)
    );
    o.push_str("</svg>");
    o
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn coordinates_print_as_one_decimal_like_std() {
        // the same text as std's `{:.1}`, ties included (units::tests covers the rest)
        for i in -20_000..20_000 {
            for v in [i as f64 * 0.0137 + 0.003, i as f64 * 0.05, i as f64 / 64.0] {
                assert_eq!(px(v).to_string(), format!("{v:.1}"), "{v}");
            }
        }
        assert_eq!(px(1e300).to_string(), format!("{:.1}", 1e300));
        assert_eq!(px(-3.96).to_string(), "-4.0");
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

    #[test]
    fn simplify_drops_collinear() {
        let pts: Vec<(f64, f64)> = (0..100).map(|i| (i as f64, 2.0 * i as f64)).collect();
        assert_eq!(simplify(&pts, 0.1), vec![(0.0, 0.0), (99.0, 198.0)]);
        let mut bent = pts.clone();
        bent[50].1 += 5.0;
        assert!(simplify(&bent, 0.1).contains(&bent[50]));
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
