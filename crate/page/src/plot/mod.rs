//! Plot layout: the pure geometry behind Polewright's canvases.
//!
//! Nothing here knows about the browser; the painter in `web.rs` (wasm32 only)
//! reads these values and issues canvas calls. Everything is tested natively.
//!
//! # Model
//!
//! * A [`Range`] is a closed data interval `[min, max]`. Data comes in any
//!   shape (NaN, ±inf, all-equal, empty); [`Range::new`] / [`Range::from_values`]
//!   sanitise it and [`Range::widened`] / [`Range::padded`] make it
//!   drawable: a degenerate range (zero span, or a span negligible next to the
//!   magnitude of the data) is widened *relative to the data scale*
//!   (`[5, 5]` becomes `[4.5, 5.5]`, `[0, 0]` becomes `[-1, 1]`).
//!   Finite magnitudes are clamped to [`MAX_MAGNITUDE`] so spans never overflow.
//! * [`Ticks`] are "nice" values `k · m · 10^e` with `m ∈ {1, 2, 5}` lying inside
//!   a range, roughly a target count of them (2 to [`MAX_TICK_TARGET`] + 1).
//!   Labels use just enough decimals for the step, switch to scientific
//!   notation for very large or very small magnitudes and never read "-0".
//!   [`Ticks::covering`] instead extends the range outward to whole steps.
//! * An [`Axis`] maps a data range linearly onto a pixel interval and back. A
//!   [`Frame`] is two axes over a pixel [`Rect`] (the canvas minus [`Margins`]):
//!   x grows to the right in both spaces, y grows *upward* in data and
//!   *downward* in pixels (canvas convention). All pixel values are CSS pixels.
//! * [`Frame::complex_plane`] lays out a pole map: equal scale on both axes,
//!   both the real and imaginary axes always visible, the imaginary range
//!   symmetric about the real axis (real systems have conjugate pairs), all
//!   finite points inside with padding, optionally the unit circle.
//!   [`Frame::complex_region`] fits the poles alone (a zoomed map: the origin may be
//!   out of view), still at equal scale.
//! * [`simplify_polyline`] / [`Simplifier`] reduce a signal's pixel polyline to what the
//!   pixels show: at most four points per pixel column (first, lowest, highest, last),
//!   then a corridor test that drops points within a tolerance of the line between the
//!   points kept around them; `O(n)`.
//! * [`hit_test`] finds the marker nearest to a pointer within a pixel radius.
//! * [`PoleMapScene`] and [`TimePlotScene`] are the plain serde descriptions the
//!   painter draws; their layout (`frame`, `pick`) lives here so it is tested
//!   natively and the painter stays thin.
//!
//! No function in this module panics on any input, NaN and infinities included.

use serde::{Deserialize, Serialize};

mod scenes;
mod simplify;
pub use scenes::*;
pub use simplify::*;
mod view;
pub use view::*;

/// Largest finite data magnitude the layout works with; larger finite data
/// values are clamped to it so that spans and paddings never overflow.
pub const MAX_MAGNITUDE: f64 = 1e300;

/// Largest magnitude a range end may reach (room for padding and aspect
/// expansion beyond [`MAX_MAGNITUDE`]).
pub const RANGE_LIMIT: f64 = 1e306;

/// Spans below this are treated as zero (avoids powers of ten that underflow).
pub const MIN_SPAN: f64 = 1e-280;

/// A span smaller than this fraction of the data magnitude is degenerate.
pub const RELATIVE_DEGENERACY: f64 = 1e-9;

/// Default number of ticks asked for.
pub const DEFAULT_TICK_TARGET: usize = 5;

/// Largest tick target honoured; a tick set holds at most this plus one ticks.
pub const MAX_TICK_TARGET: usize = 10;

/// A closed data interval `[min, max]` with `min <= max`, both finite.
///
/// The fields are public for convenience; every method first sanitises them,
/// so a hand-built `Range { min: f64::NAN, .. }` is still handled sanely.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Range {
    pub min: f64,
    pub max: f64,
}

impl Default for Range {
    fn default() -> Self {
        Range::UNIT
    }
}

/// Clamp a finite data value into the working magnitude; `None` for NaN / ±inf.
fn finite(v: f64) -> Option<f64> {
    if v.is_finite() {
        Some(v.clamp(-MAX_MAGNITUDE, MAX_MAGNITUDE))
    } else {
        None
    }
}

/// Clamp a finite range end into [`RANGE_LIMIT`]; `None` for NaN / ±inf.
fn finite_end(v: f64) -> Option<f64> {
    if v.is_finite() {
        Some(v.clamp(-RANGE_LIMIT, RANGE_LIMIT))
    } else {
        None
    }
}

impl Range {
    /// `[0, 1]`, the fallback when there is no usable data at all.
    pub const UNIT: Range = Range { min: 0.0, max: 1.0 };

    /// Range spanning `a` and `b` in either order, ends clamped to
    /// ±[`RANGE_LIMIT`]. A non-finite end is dropped
    /// (the range collapses onto the other end); both non-finite gives [`Range::UNIT`].
    pub fn new(a: f64, b: f64) -> Range {
        match (finite_end(a), finite_end(b)) {
            (Some(a), Some(b)) if a <= b => Range { min: a, max: b },
            (Some(a), Some(b)) => Range { min: b, max: a },
            (Some(v), None) | (None, Some(v)) => Range { min: v, max: v },
            (None, None) => Range::UNIT,
        }
    }

    /// Smallest range holding every finite value; `None` when there is none.
    pub fn from_values<I: IntoIterator<Item = f64>>(values: I) -> Option<Range> {
        values.into_iter().filter_map(finite).fold(None, |acc, v| {
            Some(match acc {
                None => Range { min: v, max: v },
                Some(r) => Range { min: r.min.min(v), max: r.max.max(v) },
            })
        })
    }

    /// This range sanitised (see [`Range::new`]).
    pub fn sanitized(self) -> Range {
        Range::new(self.min, self.max)
    }

    /// The range extended to hold `v` (ignored when not finite).
    pub fn including(self, v: f64) -> Range {
        let r = self.sanitized();
        match finite(v) {
            Some(v) => Range { min: r.min.min(v), max: r.max.max(v) },
            None => r,
        }
    }

    /// Smallest range holding both.
    pub fn union(self, other: Range) -> Range {
        let o = other.sanitized();
        self.including(o.min).including(o.max)
    }

    /// `max - min` (never negative, never infinite).
    pub fn span(&self) -> f64 {
        let r = self.sanitized();
        r.max - r.min
    }

    /// Midpoint.
    pub fn center(&self) -> f64 {
        let r = self.sanitized();
        r.min / 2.0 + r.max / 2.0
    }

    /// Largest magnitude of either end.
    pub fn magnitude(&self) -> f64 {
        let r = self.sanitized();
        r.min.abs().max(r.max.abs())
    }

    /// Whether `v` lies in `[min, max]`.
    pub fn contains(&self, v: f64) -> bool {
        let r = self.sanitized();
        v >= r.min && v <= r.max
    }

    /// Zero span, or a span negligible next to the magnitude of the data
    /// (below [`RELATIVE_DEGENERACY`] of it, or below [`MIN_SPAN`]).
    pub fn is_degenerate(&self) -> bool {
        let span = self.span();
        span < MIN_SPAN || span <= self.magnitude() * RELATIVE_DEGENERACY
    }

    /// A drawable range: unchanged unless degenerate; a degenerate range is
    /// widened about its centre by ±10 % of the data magnitude, and a range
    /// at (or vanishingly near) zero becomes `[-1, 1]`.
    pub fn widened(self) -> Range {
        let r = self.sanitized();
        if !r.is_degenerate() {
            return r;
        }
        let scale = r.magnitude();
        if scale < MIN_SPAN * 1e3 {
            return Range { min: -1.0, max: 1.0 };
        }
        let c = r.center();
        let half = scale * 0.1;
        Range { min: c - half, max: c + half }
    }

    /// [`Range::widened`], then extended on each side by `fraction` of its span
    /// (`fraction` is clamped to `[0, 10]`; NaN counts as 0).
    pub fn padded(self, fraction: f64) -> Range {
        let r = self.widened();
        let f = if fraction.is_finite() { fraction.clamp(0.0, 10.0) } else { 0.0 };
        let pad = r.span() * f;
        Range { min: r.min - pad, max: r.max + pad }
    }

    /// The range extended about its centre to span at least `span`.
    pub fn with_min_span(self, span: f64) -> Range {
        let r = self.sanitized();
        match finite_end(span) {
            Some(s) if s > r.span() => {
                let c = r.center();
                Range { min: c - s / 2.0, max: c + s / 2.0 }
            }
            _ => r,
        }
    }
}

/// A tick step `mantissa · 10^exponent` with `mantissa ∈ {1, 2, 5}`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct NiceStep {
    pub mantissa: u8,
    pub exponent: i32,
}

impl NiceStep {
    /// Smallest nice step that is at least `raw` (relative tolerance 1e-9).
    /// Non-positive or non-finite `raw` gives 1.
    pub fn at_least(raw: f64) -> NiceStep {
        if !(raw.is_finite() && raw > 0.0) {
            return NiceStep { mantissa: 1, exponent: 0 };
        }
        let raw = raw.clamp(1e-300, 1e307);
        let mut e = raw.log10().floor() as i32;
        // log10 may be off by one near exact powers of ten: correct it.
        let mut f = raw / pow10(e);
        if f < 1.0 {
            e -= 1;
            f = raw / pow10(e);
        } else if f >= 10.0 {
            e += 1;
            f = raw / pow10(e);
        }
        let tol = 1.0 + 1e-9;
        let (m, e) = if f <= tol {
            (1, e)
        } else if f <= 2.0 * tol {
            (2, e)
        } else if f <= 5.0 * tol {
            (5, e)
        } else {
            (1, e + 1)
        };
        NiceStep { mantissa: m, exponent: e }
    }

    /// The step as a number.
    pub fn value(&self) -> f64 {
        self.multiple(1)
    }

    /// `k · step` as the double nearest to the exact decimal value (so that
    /// `0.1 · 3` is `0.3`, and labels print exactly).
    pub fn multiple(&self, k: i64) -> f64 {
        let n = k.saturating_mul(i64::from(self.mantissa));
        // Decimal parsing rounds correctly for every exponent; the arithmetic
        // fallback is only for the (unreachable) parse failure.
        format!("{n}e{}", self.exponent).parse::<f64>().unwrap_or_else(|_| n as f64 * pow10(self.exponent))
    }

    /// The next smaller nice step (5 → 2 → 1 → 0.5 …).
    pub fn smaller(&self) -> NiceStep {
        match self.mantissa {
            5 => NiceStep { mantissa: 2, exponent: self.exponent },
            2 => NiceStep { mantissa: 1, exponent: self.exponent },
            _ => NiceStep { mantissa: 5, exponent: self.exponent - 1 },
        }
    }

    /// The next larger nice step (1 → 2 → 5 → 10 …).
    pub fn larger(&self) -> NiceStep {
        match self.mantissa {
            1 => NiceStep { mantissa: 2, exponent: self.exponent },
            2 => NiceStep { mantissa: 5, exponent: self.exponent },
            _ => NiceStep { mantissa: 1, exponent: self.exponent + 1 },
        }
    }

    /// Decimals needed to print multiples of this step in fixed notation.
    pub fn decimals(&self) -> usize {
        if self.exponent < 0 {
            (-self.exponent) as usize
        } else {
            0
        }
    }
}

fn pow10(e: i32) -> f64 {
    10f64.powi(e)
}

/// One tick: its data value and its label.
#[derive(Debug, Clone, PartialEq)]
pub struct Tick {
    pub value: f64,
    pub label: String,
}

/// A set of evenly spaced nice ticks.
#[derive(Debug, Clone, PartialEq)]
pub struct Ticks {
    /// The data range the ticks were chosen for (after widening / covering).
    pub range: Range,
    pub step: NiceStep,
    /// Strictly increasing values, all inside `range`.
    pub ticks: Vec<Tick>,
}

/// Integer multiples `k` of `step` with `k · step` inside `range`.
fn multiples_inside(range: Range, step: NiceStep) -> Option<(i64, i64)> {
    let s = step.value();
    if !(s.is_finite() && s > 0.0) {
        return None;
    }
    let lo = (range.min / s).ceil();
    let hi = (range.max / s).floor();
    // Keep k far from where f64 stops representing integers exactly.
    if !(lo.abs() < 4e15 && hi.abs() < 4e15) {
        return None;
    }
    let mut lo = lo as i64 - 1;
    let mut hi = hi as i64 + 1;
    while step.multiple(lo) < range.min {
        lo += 1;
    }
    while step.multiple(hi) > range.max {
        hi -= 1;
    }
    Some((lo, hi))
}

impl Ticks {
    /// Nice ticks inside `range` (widened first if degenerate), about `target`
    /// of them (`target` clamped to `2..=MAX_TICK_TARGET`); always at least two.
    pub fn new(range: Range, target: usize) -> Ticks {
        let range = range.widened();
        let target = target.clamp(2, MAX_TICK_TARGET);
        let mut step = NiceStep::at_least(range.span() / target as f64);
        // At most a few adjustments: the first guess gives between
        // span/(2.5·step) and target + 1 ticks.
        for _ in 0..8 {
            match multiples_inside(range, step) {
                Some((lo, hi)) if hi - lo + 1 < 2 => step = step.smaller(),
                Some((lo, hi)) if hi - lo + 1 > (MAX_TICK_TARGET + 1) as i64 => step = step.larger(),
                Some(_) => break,
                None => break,
            }
        }
        let ticks = match multiples_inside(range, step) {
            Some((lo, hi)) if hi >= lo => make_ticks(lo, hi, step),
            _ => make_ticks_fallback(range),
        };
        Ticks { range, step, ticks }
    }

    /// Nice ticks whose first and last values enclose `range` (widened first):
    /// the returned [`Ticks::range`] is extended outward to whole steps.
    pub fn covering(range: Range, target: usize) -> Ticks {
        let range = range.widened();
        let target = target.clamp(2, MAX_TICK_TARGET);
        let mut step = NiceStep::at_least(range.span() / target as f64);
        for _ in 0..8 {
            let s = step.value();
            let lo = (range.min / s).floor();
            let hi = (range.max / s).ceil();
            if !(lo.abs() < 4e15 && hi.abs() < 4e15) {
                break;
            }
            let (mut lo, mut hi) = (lo as i64 + 1, hi as i64 - 1);
            while step.multiple(lo) > range.min {
                lo -= 1;
            }
            while step.multiple(hi) < range.max {
                hi += 1;
            }
            if hi - lo + 1 > (MAX_TICK_TARGET + 1) as i64 {
                step = step.larger();
                continue;
            }
            let covered = Range::new(step.multiple(lo), step.multiple(hi));
            return Ticks { range: covered, step, ticks: make_ticks(lo, hi, step) };
        }
        Ticks::new(range, target)
    }

    /// Ticks at multiples of a given `step` inside `range` (widened first);
    /// used to give both axes of a pole map the same grid. Falls back to
    /// [`Ticks::new`] when that would give fewer than 2 or more than
    /// [`MAX_TICKS_WITH_STEP`] ticks.
    pub fn with_step(range: Range, step: NiceStep, fallback_target: usize) -> Ticks {
        let range = range.widened();
        match multiples_inside(range, step) {
            Some((lo, hi)) if hi - lo + 1 >= 2 && hi - lo < MAX_TICKS_WITH_STEP as i64 => Ticks { range, step, ticks: make_ticks(lo, hi, step) },
            _ => Ticks::new(range, fallback_target),
        }
    }

    /// Tick values only.
    pub fn values(&self) -> Vec<f64> {
        self.ticks.iter().map(|t| t.value).collect()
    }
}

fn make_ticks(lo: i64, hi: i64, step: NiceStep) -> Vec<Tick> {
    let values: Vec<f64> = (lo..=hi).map(|k| step.multiple(k) + 0.0).collect();
    let labels = format_tick_labels(&values, step);
    values.into_iter().zip(labels).map(|(value, label)| Tick { value, label }).collect()
}

/// Only reachable for ranges the step arithmetic cannot represent; the two
/// ends are always a valid (if not nice) tick set.
fn make_ticks_fallback(range: Range) -> Vec<Tick> {
    [range.min, range.max].into_iter().map(|v| Tick { value: v, label: clean_negative_zero(format!("{v:.3e}")) }).collect()
}

/// Whether labels for these tick values should use scientific notation.
fn use_scientific(values: &[f64]) -> bool {
    let max_abs = values.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    max_abs >= 1e6 || (max_abs > 0.0 && max_abs < 1e-3)
}

/// Labels for multiples of `step`: fixed notation with the step's decimals, or
/// scientific notation with just enough mantissa digits per value. Never "-0".
pub fn format_tick_labels(values: &[f64], step: NiceStep) -> Vec<String> {
    if use_scientific(values) {
        values.iter().map(|&v| format_scientific(v)).collect()
    } else {
        let d = step.decimals().min(17);
        values.iter().map(|&v| clean_negative_zero(format!("{v:.d$}"))).collect()
    }
}

/// Tick values are the doubles nearest to short decimals (see
/// [`NiceStep::multiple`]), so the shortest round-trip form prints exactly
/// the digits needed: `1.5e-6`, `2e7`.
fn format_scientific(v: f64) -> String {
    if v == 0.0 {
        return "0".to_string();
    }
    clean_negative_zero(format!("{v:e}"))
}

/// "-0", "-0.00", "-0e0" → without the sign.
fn clean_negative_zero(s: String) -> String {
    match s.strip_prefix('-') {
        Some(rest) => {
            let mant = rest.split('e').next().unwrap_or(rest);
            if mant.chars().all(|c| c == '0' || c == '.') {
                rest.to_string()
            } else {
                s
            }
        }
        None => s,
    }
}

/// Tick target for an axis `pixels` long with ticks at least `spacing` apart.
pub fn tick_target(pixels: f64, spacing: f64) -> usize {
    if !(pixels.is_finite() && spacing.is_finite() && spacing > 0.0 && pixels > 0.0) {
        return 2;
    }
    ((pixels / spacing).floor() as usize).clamp(2, MAX_TICK_TARGET)
}

/// Largest tick count [`Ticks::with_step`] accepts.
pub const MAX_TICKS_WITH_STEP: usize = 40;

/// Ticks for both axes of an equal-scale frame with one common step (the
/// finer of the two axes' own choices), so that the grid is square.
pub fn common_ticks(frame: &Frame, x_spacing: f64, y_spacing: f64) -> (Ticks, Ticks) {
    let xt = frame.x.ticks(x_spacing);
    let yt = frame.y.ticks(y_spacing);
    let step = if xt.step.value() <= yt.step.value() { xt.step } else { yt.step };
    let x_target = tick_target(frame.x.pixel_length(), x_spacing);
    let y_target = tick_target(frame.y.pixel_length(), y_spacing);
    (Ticks::with_step(frame.x.range, step, x_target), Ticks::with_step(frame.y.range, step, y_target))
}

/// A linear map between a data range and a pixel interval.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Axis {
    /// The data range shown (widened, never degenerate).
    pub range: Range,
    /// Pixel coordinate of `range.min`.
    pub pixel_at_min: f64,
    /// Pixel coordinate of `range.max`; smaller than `pixel_at_min` for a y axis.
    pub pixel_at_max: f64,
}

impl Axis {
    /// Axis mapping `range` (widened if degenerate) onto the given pixels.
    /// Non-finite pixel ends become 0 and 1.
    pub fn new(range: Range, pixel_at_min: f64, pixel_at_max: f64) -> Axis {
        let p0 = if pixel_at_min.is_finite() { pixel_at_min } else { 0.0 };
        let p1 = if pixel_at_max.is_finite() { pixel_at_max } else { p0 + 1.0 };
        Axis { range: range.widened(), pixel_at_min: p0, pixel_at_max: p1 }
    }

    /// Pixels per data unit (negative for an upward y axis).
    pub fn scale(&self) -> f64 {
        let span = self.range.span();
        if span > 0.0 {
            (self.pixel_at_max - self.pixel_at_min) / span
        } else {
            0.0
        }
    }

    /// Data value → pixel coordinate (NaN stays NaN; the painter skips it).
    pub fn to_pixel(&self, v: f64) -> f64 {
        let span = self.range.span();
        if span > 0.0 {
            self.pixel_at_min + (v - self.range.min) / span * (self.pixel_at_max - self.pixel_at_min)
        } else {
            self.pixel_at_min
        }
    }

    /// Pixel coordinate → data value. A zero-length pixel interval maps
    /// everything to `range.min`.
    pub fn to_data(&self, p: f64) -> f64 {
        let len = self.pixel_at_max - self.pixel_at_min;
        if len != 0.0 {
            self.range.min + (p - self.pixel_at_min) / len * self.range.span()
        } else {
            self.range.min
        }
    }

    /// Length of the axis in pixels (non-negative).
    pub fn pixel_length(&self) -> f64 {
        (self.pixel_at_max - self.pixel_at_min).abs()
    }

    /// Nice ticks inside the axis range, spaced at least `spacing` pixels.
    pub fn ticks(&self, spacing: f64) -> Ticks {
        Ticks::new(self.range, tick_target(self.pixel_length(), spacing))
    }
}

/// A pixel rectangle; `x`, `y` is the top-left corner.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Rect {
    pub x: f64,
    pub y: f64,
    pub width: f64,
    pub height: f64,
}

impl Rect {
    /// Rectangle at the origin (a canvas of that size). Non-finite or
    /// non-positive sizes become 1.
    pub fn sized(width: f64, height: f64) -> Rect {
        Rect { x: 0.0, y: 0.0, width: positive_or_one(width), height: positive_or_one(height) }
    }

    /// The rectangle with margins removed; never smaller than 1×1.
    pub fn inset(&self, m: Margins) -> Rect {
        let fin = |v: f64| if v.is_finite() { v.max(0.0) } else { 0.0 };
        let x = if self.x.is_finite() { self.x } else { 0.0 };
        let y = if self.y.is_finite() { self.y } else { 0.0 };
        let w = positive_or_one(self.width);
        let h = positive_or_one(self.height);
        Rect { x: x + fin(m.left), y: y + fin(m.top), width: (w - fin(m.left) - fin(m.right)).max(1.0), height: (h - fin(m.top) - fin(m.bottom)).max(1.0) }
    }

    pub fn right(&self) -> f64 {
        self.x + self.width
    }

    pub fn bottom(&self) -> f64 {
        self.y + self.height
    }

    /// Whether the point lies inside (edges included).
    pub fn contains(&self, p: [f64; 2]) -> bool {
        p[0] >= self.x && p[0] <= self.right() && p[1] >= self.y && p[1] <= self.bottom()
    }
}

fn positive_or_one(v: f64) -> f64 {
    if v.is_finite() && v >= 1.0 {
        v
    } else {
        1.0
    }
}

/// Space around the plot area for tick labels, titles and legend (pixels).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Margins {
    pub left: f64,
    pub right: f64,
    pub top: f64,
    pub bottom: f64,
}

impl Margins {
    /// Room for y labels on the left, x labels and title below, legend on top.
    pub const STANDARD: Margins = Margins { left: 60.0, right: 18.0, top: 30.0, bottom: 42.0 };
}

/// Two axes over a plot rectangle.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Frame {
    /// The plot area in pixels (inside the margins).
    pub plot: Rect,
    pub x: Axis,
    /// Data `y.range.min` sits at the bottom of `plot`, `max` at the top.
    pub y: Axis,
}

impl Frame {
    /// Frame for `x_range` × `y_range` (each widened if degenerate) in the part
    /// of `outer` left by `margins`.
    pub fn new(outer: Rect, margins: Margins, x_range: Range, y_range: Range) -> Frame {
        let plot = outer.inset(margins);
        Frame { plot, x: Axis::new(x_range, plot.x, plot.right()), y: Axis::new(y_range, plot.bottom(), plot.y) }
    }

    /// Data point → pixel point.
    pub fn to_pixel(&self, p: [f64; 2]) -> [f64; 2] {
        [self.x.to_pixel(p[0]), self.y.to_pixel(p[1])]
    }

    /// Pixel point → data point.
    pub fn to_data(&self, p: [f64; 2]) -> [f64; 2] {
        [self.x.to_data(p[0]), self.y.to_data(p[1])]
    }

    /// The visible data region `[x min, x max, y min, y max]` (for [`PoleMapScene::view`]).
    pub fn view(&self) -> [f64; 4] {
        [self.x.range.min, self.x.range.max, self.y.range.min, self.y.range.max]
    }

    /// Aspect-preserving frame for a complex-plane (pole) map: one data unit is
    /// the same number of pixels on both axes; the visible region holds the
    /// origin, the real and imaginary axes, every finite point and (with
    /// `unit_circle`) the unit circle, with `padding` (fraction of the larger
    /// extent, clamped to `[0, 1]`) around it. The imaginary range is symmetric
    /// about zero. Points are `[re, im]`; non-finite ones are ignored.
    pub fn complex_plane(outer: Rect, margins: Margins, points: &[[f64; 2]], unit_circle: bool, padding: f64) -> Frame {
        let plot = outer.inset(margins);
        let finite_points = points.iter().filter(|p| p[0].is_finite() && p[1].is_finite());
        let mut re = Range { min: 0.0, max: 0.0 };
        let mut im_max = 0.0f64;
        for p in finite_points {
            re = re.including(p[0]);
            im_max = im_max.max(p[1].abs().min(MAX_MAGNITUDE));
        }
        if unit_circle {
            re = re.including(-1.0).including(1.0);
            im_max = im_max.max(1.0);
        }
        let mut im = Range { min: -im_max, max: im_max };
        let extent = re.span().max(im.span());
        if extent < MIN_SPAN * 1e3 {
            // Nothing but the origin: show a unit neighbourhood.
            re = Range { min: -1.0, max: 1.0 };
            im = Range { min: -1.0, max: 1.0 };
        } else {
            // Tiny extents next to the data magnitude stay visible.
            let extent = extent.max(re.magnitude().max(im_max) * 1e-6);
            let pad = extent * if padding.is_finite() { padding.clamp(0.0, 1.0) } else { 0.0 };
            // A zero-height map (all poles real) still gets padding both ways.
            re = Range { min: re.min - pad, max: re.max + pad };
            im = Range { min: im.min - pad, max: im.max + pad };
        }
        // Equal scale: data units per pixel set by the tighter direction.
        let upp = (re.span() / plot.width).max(im.span() / plot.height);
        let re = re.with_min_span(upp * plot.width);
        let im = im.with_min_span(upp * plot.height);
        Frame { plot, x: Axis::new(re, plot.x, plot.right()), y: Axis::new(im, plot.bottom(), plot.y) }
    }
}

impl Frame {
    /// Aspect-preserving frame around `points` alone (a zoomed pole map): equal scale on
    /// both axes, every finite point inside with `padding` (fraction of the larger extent,
    /// clamped to `[0, 1]`). Coincident points get a neighbourhood relative to their
    /// magnitude. Non-finite points are ignored; with none left it is the unit square
    /// around the origin.
    pub fn complex_region(outer: Rect, margins: Margins, points: &[[f64; 2]], padding: f64) -> Frame {
        let plot = outer.inset(margins);
        let finite: Vec<[f64; 2]> =
            points.iter().filter(|p| p[0].is_finite() && p[1].is_finite()).map(|p| [p[0].clamp(-MAX_MAGNITUDE, MAX_MAGNITUDE), p[1].clamp(-MAX_MAGNITUDE, MAX_MAGNITUDE)]).collect();
        let re = Range::from_values(finite.iter().map(|p| p[0])).unwrap_or(Range { min: -1.0, max: 1.0 });
        let im = Range::from_values(finite.iter().map(|p| p[1])).unwrap_or(Range { min: -1.0, max: 1.0 });
        let magnitude = re.magnitude().max(im.magnitude());
        let extent = re.span().max(im.span()).max(magnitude * 1e-6).max(MIN_SPAN * 1e3);
        let pad = extent * if padding.is_finite() { padding.clamp(0.0, 1.0) } else { 0.0 };
        // Centre each direction on its data with at least `extent` of room.
        let around = |r: Range| {
            let half = r.span().max(extent) / 2.0 + pad;
            Range { min: r.center() - half, max: r.center() + half }
        };
        let (re, im) = (around(re), around(im));
        let upp = (re.span() / plot.width).max(im.span() / plot.height);
        let re = re.with_min_span(upp * plot.width);
        let im = im.with_min_span(upp * plot.height);
        Frame { plot, x: Axis::new(re, plot.x, plot.right()), y: Axis::new(im, plot.bottom(), plot.y) }
    }
}

#[cfg(test)]
#[path = "../tests/plot.rs"]
mod tests;
