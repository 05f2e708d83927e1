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
                Some(r) => Range {
                    min: r.min.min(v),
                    max: r.max.max(v),
                },
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
            Some(v) => Range {
                min: r.min.min(v),
                max: r.max.max(v),
            },
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
            return Range {
                min: -1.0,
                max: 1.0,
            };
        }
        let c = r.center();
        let half = scale * 0.1;
        Range {
            min: c - half,
            max: c + half,
        }
    }

    /// [`Range::widened`], then extended on each side by `fraction` of its span
    /// (`fraction` is clamped to `[0, 10]`; NaN counts as 0).
    pub fn padded(self, fraction: f64) -> Range {
        let r = self.widened();
        let f = if fraction.is_finite() {
            fraction.clamp(0.0, 10.0)
        } else {
            0.0
        };
        let pad = r.span() * f;
        Range {
            min: r.min - pad,
            max: r.max + pad,
        }
    }

    /// The range extended about its centre to span at least `span`.
    pub fn with_min_span(self, span: f64) -> Range {
        let r = self.sanitized();
        match finite_end(span) {
            Some(s) if s > r.span() => {
                let c = r.center();
                Range {
                    min: c - s / 2.0,
                    max: c + s / 2.0,
                }
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
            return NiceStep {
                mantissa: 1,
                exponent: 0,
            };
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
        NiceStep {
            mantissa: m,
            exponent: e,
        }
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
        format!("{n}e{}", self.exponent)
            .parse::<f64>()
            .unwrap_or_else(|_| n as f64 * pow10(self.exponent))
    }

    /// The next smaller nice step (5 → 2 → 1 → 0.5 …).
    pub fn smaller(&self) -> NiceStep {
        match self.mantissa {
            5 => NiceStep {
                mantissa: 2,
                exponent: self.exponent,
            },
            2 => NiceStep {
                mantissa: 1,
                exponent: self.exponent,
            },
            _ => NiceStep {
                mantissa: 5,
                exponent: self.exponent - 1,
            },
        }
    }

    /// The next larger nice step (1 → 2 → 5 → 10 …).
    pub fn larger(&self) -> NiceStep {
        match self.mantissa {
            1 => NiceStep {
                mantissa: 2,
                exponent: self.exponent,
            },
            2 => NiceStep {
                mantissa: 5,
                exponent: self.exponent,
            },
            _ => NiceStep {
                mantissa: 1,
                exponent: self.exponent + 1,
            },
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
                Some((lo, hi)) if hi - lo + 1 > (MAX_TICK_TARGET + 1) as i64 => {
                    step = step.larger()
                }
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
            return Ticks {
                range: covered,
                step,
                ticks: make_ticks(lo, hi, step),
            };
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
            Some((lo, hi)) if hi - lo + 1 >= 2 && hi - lo < MAX_TICKS_WITH_STEP as i64 => Ticks {
                range,
                step,
                ticks: make_ticks(lo, hi, step),
            },
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
    values
        .into_iter()
        .zip(labels)
        .map(|(value, label)| Tick { value, label })
        .collect()
}

/// Only reachable for ranges the step arithmetic cannot represent; the two
/// ends are always a valid (if not nice) tick set.
fn make_ticks_fallback(range: Range) -> Vec<Tick> {
    [range.min, range.max]
        .into_iter()
        .map(|v| Tick {
            value: v,
            label: clean_negative_zero(format!("{v:.3e}")),
        })
        .collect()
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
        values
            .iter()
            .map(|&v| clean_negative_zero(format!("{v:.d$}")))
            .collect()
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
    let step = if xt.step.value() <= yt.step.value() {
        xt.step
    } else {
        yt.step
    };
    let x_target = tick_target(frame.x.pixel_length(), x_spacing);
    let y_target = tick_target(frame.y.pixel_length(), y_spacing);
    (
        Ticks::with_step(frame.x.range, step, x_target),
        Ticks::with_step(frame.y.range, step, y_target),
    )
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
        let p0 = if pixel_at_min.is_finite() {
            pixel_at_min
        } else {
            0.0
        };
        let p1 = if pixel_at_max.is_finite() {
            pixel_at_max
        } else {
            p0 + 1.0
        };
        Axis {
            range: range.widened(),
            pixel_at_min: p0,
            pixel_at_max: p1,
        }
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
            self.pixel_at_min
                + (v - self.range.min) / span * (self.pixel_at_max - self.pixel_at_min)
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
        Rect {
            x: 0.0,
            y: 0.0,
            width: positive_or_one(width),
            height: positive_or_one(height),
        }
    }

    /// The rectangle with margins removed; never smaller than 1×1.
    pub fn inset(&self, m: Margins) -> Rect {
        let fin = |v: f64| if v.is_finite() { v.max(0.0) } else { 0.0 };
        let x = if self.x.is_finite() { self.x } else { 0.0 };
        let y = if self.y.is_finite() { self.y } else { 0.0 };
        let w = positive_or_one(self.width);
        let h = positive_or_one(self.height);
        Rect {
            x: x + fin(m.left),
            y: y + fin(m.top),
            width: (w - fin(m.left) - fin(m.right)).max(1.0),
            height: (h - fin(m.top) - fin(m.bottom)).max(1.0),
        }
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
    pub const STANDARD: Margins = Margins {
        left: 60.0,
        right: 18.0,
        top: 30.0,
        bottom: 42.0,
    };
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
        Frame {
            plot,
            x: Axis::new(x_range, plot.x, plot.right()),
            y: Axis::new(y_range, plot.bottom(), plot.y),
        }
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
    pub fn complex_plane(
        outer: Rect,
        margins: Margins,
        points: &[[f64; 2]],
        unit_circle: bool,
        padding: f64,
    ) -> Frame {
        let plot = outer.inset(margins);
        let finite_points = points
            .iter()
            .filter(|p| p[0].is_finite() && p[1].is_finite());
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
        let mut im = Range {
            min: -im_max,
            max: im_max,
        };
        let extent = re.span().max(im.span());
        if extent < MIN_SPAN * 1e3 {
            // Nothing but the origin: show a unit neighbourhood.
            re = Range {
                min: -1.0,
                max: 1.0,
            };
            im = Range {
                min: -1.0,
                max: 1.0,
            };
        } else {
            // Tiny extents next to the data magnitude stay visible.
            let extent = extent.max(re.magnitude().max(im_max) * 1e-6);
            let pad = extent
                * if padding.is_finite() {
                    padding.clamp(0.0, 1.0)
                } else {
                    0.0
                };
            // A zero-height map (all poles real) still gets padding both ways.
            re = Range {
                min: re.min - pad,
                max: re.max + pad,
            };
            im = Range {
                min: im.min - pad,
                max: im.max + pad,
            };
        }
        // Equal scale: data units per pixel set by the tighter direction.
        let upp = (re.span() / plot.width).max(im.span() / plot.height);
        let re = re.with_min_span(upp * plot.width);
        let im = im.with_min_span(upp * plot.height);
        Frame {
            plot,
            x: Axis::new(re, plot.x, plot.right()),
            y: Axis::new(im, plot.bottom(), plot.y),
        }
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
        let finite: Vec<[f64; 2]> = points
            .iter()
            .filter(|p| p[0].is_finite() && p[1].is_finite())
            .map(|p| [p[0].clamp(-MAX_MAGNITUDE, MAX_MAGNITUDE), p[1].clamp(-MAX_MAGNITUDE, MAX_MAGNITUDE)])
            .collect();
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
        Frame {
            plot,
            x: Axis::new(re, plot.x, plot.right()),
            y: Axis::new(im, plot.bottom(), plot.y),
        }
    }
}

/// Simplifies a signal's polyline in pixels for drawing, in `O(n)`:
///
/// 1. at most four points per pixel column — the first, lowest, highest and last, in
///    their order — so that each column's ink is unchanged however dense the samples;
/// 2. then, while `x` increases, a point is dropped when the straight line between the
///    points kept around it passes within `tolerance` pixels (vertically) of it and of
///    every other point it replaces (a corridor of slopes narrowed point by point).
///
/// The first and last points are always kept; where `x` does not increase nothing is
/// dropped. Points must be finite (split a line at its gaps first). See [`Simplifier`]
/// for the same without collecting the input first.
pub fn simplify_polyline(points: &[[f64; 2]], tolerance: f64) -> Vec<[f64; 2]> {
    let mut s = Simplifier::new(tolerance);
    for p in points {
        s.push(*p);
    }
    s.finish()
}

/// A pixel column being binned: its x (floored) and its first, lowest, highest and last
/// points, each with its position in the input.
type ColumnBin = (f64, [(usize, [f64; 2]); 4]);

/// The streaming form of [`simplify_polyline`]: push the points one by one, then
/// [`Simplifier::finish`] returns the kept ones.
#[derive(Debug, Clone)]
pub struct Simplifier {
    tolerance: f64,
    /// The pixel column being binned: its first, lowest, highest and last points with
    /// their positions in the input (to keep their order).
    column: Option<ColumnBin>,
    seen: usize,
    /// Stage 2: the last kept point, the last point accepted after it, and the corridor.
    anchor: Option<[f64; 2]>,
    prev: [f64; 2],
    lo: f64,
    hi: f64,
    out: Vec<[f64; 2]>,
}

impl Simplifier {
    pub fn new(tolerance: f64) -> Simplifier {
        Simplifier { tolerance, column: None, seen: 0, anchor: None, prev: [0.0, 0.0], lo: f64::NEG_INFINITY, hi: f64::INFINITY, out: Vec::new() }
    }

    pub fn push(&mut self, p: [f64; 2]) {
        let k = self.seen;
        self.seen += 1;
        let col = p[0].floor();
        match &mut self.column {
            Some((c, bin)) if *c == col => {
                if p[1] < bin[1].1[1] {
                    bin[1] = (k, p);
                }
                if p[1] > bin[2].1[1] {
                    bin[2] = (k, p);
                }
                bin[3] = (k, p);
            }
            _ => {
                self.flush_column();
                self.column = Some((col, [(k, p); 4]));
            }
        }
    }

    fn flush_column(&mut self) {
        if let Some((_, mut bin)) = self.column.take() {
            bin.sort_by_key(|(k, _)| *k);
            let mut last = usize::MAX;
            for (k, p) in bin {
                if k != last {
                    self.corridor(p);
                    last = k;
                }
            }
        }
    }

    /// Stage 2 for one point.
    fn corridor(&mut self, p: [f64; 2]) {
        let Some(mut anchor) = self.anchor else {
            self.out.push(p);
            self.anchor = Some(p);
            self.prev = p;
            return;
        };
        if !(self.tolerance > 0.0) {
            self.out.push(p);
            self.prev = p;
            return;
        }
        loop {
            let dx = p[0] - anchor[0];
            if dx <= 0.0 {
                // x does not increase: keep the point and start again from it.
                if self.prev != anchor {
                    self.out.push(self.prev);
                }
                self.out.push(p);
                self.anchor = Some(p);
                self.prev = p;
                self.lo = f64::NEG_INFINITY;
                self.hi = f64::INFINITY;
                return;
            }
            let slope = (p[1] - anchor[1]) / dx;
            if slope >= self.lo && slope <= self.hi {
                // The line anchor → p passes every replaced point: p may end the segment.
                self.lo = self.lo.max((p[1] - self.tolerance - anchor[1]) / dx);
                self.hi = self.hi.min((p[1] + self.tolerance - anchor[1]) / dx);
                self.prev = p;
                return;
            }
            // p is outside: the previous point ends the segment and anchors the next
            // (from which p is always inside, so this runs at most twice).
            self.out.push(self.prev);
            anchor = self.prev;
            self.anchor = Some(anchor);
            self.lo = f64::NEG_INFINITY;
            self.hi = f64::INFINITY;
        }
    }

    /// The kept points, in order.
    pub fn finish(mut self) -> Vec<[f64; 2]> {
        self.flush_column();
        if self.anchor.is_some() && self.out.last() != Some(&self.prev) {
            self.out.push(self.prev);
        }
        self.out
    }
}

/// Index of the marker nearest to `pointer` within `radius` pixels (distance
/// `<= radius`); ties go to the lowest index. Markers and pointer are in
/// pixels; non-finite markers are skipped; a non-finite pointer or a negative
/// or NaN radius finds nothing.
pub fn hit_test(pointer: [f64; 2], markers: &[[f64; 2]], radius: f64) -> Option<usize> {
    if !(pointer[0].is_finite() && pointer[1].is_finite() && radius >= 0.0) {
        return None;
    }
    let r2 = radius * radius;
    let mut best: Option<(usize, f64)> = None;
    for (i, m) in markers.iter().enumerate() {
        let (dx, dy) = (m[0] - pointer[0], m[1] - pointer[1]);
        let d2 = dx * dx + dy * dy;
        if !d2.is_finite() || d2 > r2 {
            continue;
        }
        match best {
            Some((_, b)) if d2 >= b => {}
            _ => best = Some((i, d2)),
        }
    }
    best.map(|(i, _)| i)
}

// ---------------------------------------------------------------------------
// Scene descriptions: what the painter is asked to draw.
// ---------------------------------------------------------------------------

/// Padding around a pole map, as a fraction of its larger extent.
pub const POLE_MAP_PADDING: f64 = 0.12;

/// Hit radius for markers, in CSS pixels.
pub const HIT_RADIUS_PX: f64 = 8.0;

/// A pole map. Points are `[re, im]`. Every field may be omitted in JSON / JS.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct PoleMapScene {
    /// Poles of the plant `A` (or of `Φ` for a digital design).
    pub open_loop: Vec<[f64; 2]>,
    /// Poles of `A - B K`.
    pub closed_loop: Vec<[f64; 2]>,
    /// Closed-loop poles the design could not move (uncontrollable modes).
    pub not_assigned: Vec<[f64; 2]>,
    /// Poles of the observer `A − L C` (`Φ − L C`).
    pub observer: Vec<[f64; 2]>,
    /// Discrete-time map: the stable region is the unit disc, not the left half-plane.
    pub discrete: bool,
    /// Fit the view to the poles alone (the origin and the unit circle may be out of view).
    pub fit_poles: bool,
    /// A point to ring (the pole chosen by keyboard or pointer), if any.
    pub highlight: Option<[f64; 2]>,
    /// The requested closed-loop poles that can be edited on the map (drawn as open
    /// circles over the achieved poles), in the map's plane.
    pub requested: Vec<[f64; 2]>,
    /// Closed-loop poles of a pinned design, for comparison.
    pub pinned: Vec<[f64; 2]>,
    /// The admissible region of a specification, as boundary polylines in data units.
    pub region: Option<RegionShape>,
    /// A fixed view `[re min, re max, im min, im max]` (kept while a pole is dragged, so
    /// that the map does not rescale under the pointer); `None` fits the view to the poles.
    pub view: Option<[f64; 4]>,
}

/// The boundary of an admissible pole region, for drawing: each polyline is a list of
/// `[re, im]` points in the map's plane (lines may run far outside the view; the painter
/// clips them). The admissible side is described in `label`.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct RegionShape {
    pub boundaries: Vec<Vec<[f64; 2]>>,
    pub label: String,
}

/// Which list of a [`PoleMapScene`] a marker belongs to.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum PoleSet {
    OpenLoop,
    ClosedLoop,
    NotAssigned,
    Observer,
    /// A requested pole that can be edited on the map.
    Requested,
    /// A closed-loop pole of the pinned design.
    Pinned,
}

/// A picked marker.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct PolePick {
    pub set: PoleSet,
    pub index: usize,
    pub re: f64,
    pub im: f64,
}

impl PoleMapScene {
    /// Field names, for front ends that must reject unknown keys themselves.
    pub const FIELDS: &'static [&'static str] =
        &["open_loop", "closed_loop", "not_assigned", "observer", "discrete", "fit_poles", "highlight", "requested", "pinned", "region", "view"];

    /// Every finite marker in keyboard order: editable requested poles, closed-loop poles,
    /// observer poles, requested poles that could not be assigned, open-loop poles, then the
    /// pinned design's poles; within each set by increasing real part, then decreasing
    /// imaginary part. `index` is the position in the scene's own list.
    pub fn markers(&self) -> Vec<PolePick> {
        let mut out = Vec::new();
        for (set, pts) in [
            (PoleSet::Requested, &self.requested),
            (PoleSet::ClosedLoop, &self.closed_loop),
            (PoleSet::Observer, &self.observer),
            (PoleSet::NotAssigned, &self.not_assigned),
            (PoleSet::OpenLoop, &self.open_loop),
            (PoleSet::Pinned, &self.pinned),
        ] {
            let mut picks: Vec<PolePick> = pts
                .iter()
                .enumerate()
                .filter(|(_, p)| p[0].is_finite() && p[1].is_finite())
                .map(|(index, p)| PolePick {
                    set,
                    index,
                    re: p[0],
                    im: p[1],
                })
                .collect();
            picks.sort_by(|a, b| a.re.total_cmp(&b.re).then(b.im.total_cmp(&a.im)));
            out.extend(picks);
        }
        out
    }

    /// The lists in drawing order (bottom first) with their set tag.
    pub fn layers(&self) -> [(PoleSet, &[[f64; 2]]); 6] {
        [
            (PoleSet::Pinned, &self.pinned),
            (PoleSet::OpenLoop, &self.open_loop),
            (PoleSet::NotAssigned, &self.not_assigned),
            (PoleSet::Observer, &self.observer),
            (PoleSet::ClosedLoop, &self.closed_loop),
            (PoleSet::Requested, &self.requested),
        ]
    }

    /// The frame the painter uses for a canvas of `outer` size: the fixed [`view`](Self::view)
    /// when set (with equal scale restored for this canvas), else fitted to every layer.
    pub fn frame(&self, outer: Rect) -> Frame {
        if let Some([x0, x1, y0, y1]) = self.view.filter(|v| v.iter().all(|x| x.is_finite()) && v[1] > v[0] && v[3] > v[2]) {
            let plot = outer.inset(Margins::STANDARD);
            let (re, im) = (Range { min: x0, max: x1 }, Range { min: y0, max: y1 });
            let upp = (re.span() / plot.width).max(im.span() / plot.height);
            if upp.is_finite() && upp > 0.0 {
                return Frame::new(outer, Margins::STANDARD, re.with_min_span(upp * plot.width), im.with_min_span(upp * plot.height));
            }
        }
        let all: Vec<[f64; 2]> = self
            .layers()
            .iter()
            .flat_map(|(_, pts)| pts.iter().copied())
            .collect();
        if self.fit_poles && all.iter().any(|p| p[0].is_finite() && p[1].is_finite()) {
            return Frame::complex_region(outer, Margins::STANDARD, &all, POLE_MAP_PADDING);
        }
        Frame::complex_plane(
            outer,
            Margins::STANDARD,
            &all,
            self.discrete,
            POLE_MAP_PADDING,
        )
    }

    /// The unit circle in pixels (`[centre x, centre y, radius]`) for a discrete map.
    pub fn unit_circle(&self, outer: Rect) -> Option<[f64; 3]> {
        if !self.discrete {
            return None;
        }
        let f = self.frame(outer);
        let c = f.to_pixel([0.0, 0.0]);
        Some([c[0], c[1], f.x.scale().abs()])
    }

    /// The marker under `pointer` (pixels) within [`HIT_RADIUS_PX`]; the top
    /// layer (closed loop) wins exact ties because it is drawn last.
    pub fn pick(&self, outer: Rect, pointer: [f64; 2]) -> Option<PolePick> {
        let frame = self.frame(outer);
        let mut flat: Vec<(PoleSet, usize, [f64; 2])> = Vec::new();
        for (set, pts) in self.layers().iter().rev() {
            for (i, p) in pts.iter().enumerate() {
                flat.push((*set, i, *p));
            }
        }
        let pixels: Vec<[f64; 2]> = flat.iter().map(|(_, _, p)| frame.to_pixel(*p)).collect();
        let hit = hit_test(pointer, &pixels, HIT_RADIUS_PX)?;
        let (set, index, p) = *flat.get(hit)?;
        Some(PolePick {
            set,
            index,
            re: p[0],
            im: p[1],
        })
    }
}

/// One signal on the shared time grid.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct Series {
    pub name: String,
    /// Samples at `TimePlotScene::t`; extra samples beyond `t` are ignored.
    pub values: Vec<f64>,
    /// Palette slot (default: the series' position), so that related signals share a colour.
    pub colour: Option<usize>,
    /// Dash pattern slot: 0 solid, 1 dashed, 2 dotted, 3 dash-dot (default: from the position).
    pub dash: Option<usize>,
}

/// A vertical marker at a moment of interest (a reference or load step).
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct EventLine {
    pub time: f64,
    pub label: String,
}

/// A horizontal limit line (e.g. an actuator limit).
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct LimitLine {
    pub value: f64,
    pub label: String,
}

/// A shaded horizontal band (e.g. a settling tolerance around the target).
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct Band {
    pub lower: f64,
    pub upper: f64,
    pub label: String,
}

/// Signals versus time. Every field may be omitted in JSON / JS.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct TimePlotScene {
    /// Sample times, increasing.
    pub t: Vec<f64>,
    pub series: Vec<Series>,
    pub limits: Vec<LimitLine>,
    pub band: Option<Band>,
    /// Vertical markers (drawn when inside the time range).
    pub events: Vec<EventLine>,
    pub x_label: String,
    pub y_label: String,
    /// Signals of a pinned design, each on its own time grid, drawn thin and dashed under
    /// the current ones.
    pub pinned: Vec<PinnedSeries>,
}

/// A signal of a pinned design with its own sample times.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct PinnedSeries {
    pub name: String,
    pub t: Vec<f64>,
    pub values: Vec<f64>,
    /// Palette slot of the current signal it corresponds to.
    pub colour: Option<usize>,
}

/// Vertical padding of a time plot, as a fraction of the value span.
pub const TIME_PLOT_PADDING: f64 = 0.06;

impl TimePlotScene {
    /// Field names, for front ends that must reject unknown keys themselves.
    pub const FIELDS: &'static [&'static str] =
        &["t", "series", "limits", "band", "events", "x_label", "y_label", "pinned"];

    /// Samples of series `i` paired with their times (`[t, y]`), truncated to
    /// the shorter of the two; non-finite samples are kept (they break lines).
    pub fn points(&self, i: usize) -> Vec<[f64; 2]> {
        match self.series.get(i) {
            Some(s) => self
                .t
                .iter()
                .zip(&s.values)
                .map(|(&t, &y)| [t, y])
                .collect(),
            None => Vec::new(),
        }
    }

    /// Time range (exact, widened if degenerate) and value range (holding all
    /// samples, limits and band, padded).
    pub fn data_ranges(&self) -> (Range, Range) {
        let x = Range::from_values(self.t.iter().copied()).unwrap_or(Range::UNIT);
        let samples = (0..self.series.len()).flat_map(|i| {
            self.points(i)
                .into_iter()
                .filter(|p| p[0].is_finite())
                .map(|p| p[1])
        });
        let pinned = self.pinned.iter().flat_map(|p| p.t.iter().zip(&p.values).filter(|(t, _)| t.is_finite() && x.contains(**t)).map(|(_, v)| *v));
        let extra = self
            .limits
            .iter()
            .map(|l| l.value)
            .chain(self.band.iter().flat_map(|b| [b.lower, b.upper]))
            .chain(pinned);
        let y = Range::from_values(samples.chain(extra)).unwrap_or(Range {
            min: -1.0,
            max: 1.0,
        });
        (x.widened(), y.padded(TIME_PLOT_PADDING))
    }

    /// The frame the painter uses for a canvas of `outer` size.
    pub fn frame(&self, outer: Rect) -> Frame {
        self.frame_with_legend_rows(outer, 1)
    }

    /// The frame when the legend above the plot takes `rows` rows
    /// ([`LEGEND_ROW_PX`] each beyond the first, which fits the standard margin).
    pub fn frame_with_legend_rows(&self, outer: Rect, rows: usize) -> Frame {
        let (x, y) = self.data_ranges();
        let extra = rows.clamp(1, 12).saturating_sub(1) as f64 * LEGEND_ROW_PX;
        let margins = Margins {
            top: Margins::STANDARD.top + extra,
            ..Margins::STANDARD
        };
        Frame::new(outer, margins, x, y)
    }
}

/// Height of one legend row, in CSS pixels.
pub const LEGEND_ROW_PX: f64 = 17.0;

/// Width of a legend entry's swatch plus the gaps around it, in CSS pixels.
pub const LEGEND_SWATCH_PX: f64 = 32.0;

/// Flows legend entries of the given label widths into right-aligned rows no wider
/// than `available`. Returns, per entry, its row (0 = top) and the x offset of the
/// entry's left edge (swatch included) from the left end of `available`, in entry
/// order; entries keep their order left to right, top to bottom. An entry wider
/// than `available` gets a row of its own.
pub fn flow_legend(label_widths: &[f64], available: f64) -> Vec<(usize, f64)> {
    let avail = if available.is_finite() { available.max(0.0) } else { 0.0 };
    let width = |w: f64| LEGEND_SWATCH_PX + if w.is_finite() { w.max(0.0) } else { 0.0 };
    // Rows of entry indices, filled left to right.
    let mut rows: Vec<Vec<usize>> = Vec::new();
    let mut used = 0.0;
    for (i, w) in label_widths.iter().enumerate() {
        let w = width(*w);
        match rows.last_mut() {
            Some(row) if used + w <= avail => {
                row.push(i);
                used += w;
            }
            _ => {
                rows.push(vec![i]);
                used = w;
            }
        }
    }
    let mut out = vec![(0, 0.0); label_widths.len()];
    for (r, row) in rows.iter().enumerate() {
        let total: f64 = row.iter().filter_map(|i| label_widths.get(*i)).map(|w| width(*w)).sum();
        let mut x = (avail - total).max(0.0);
        for i in row {
            if let (Some(slot), Some(w)) = (out.get_mut(*i), label_widths.get(*i)) {
                *slot = (r, x);
                x += width(*w);
            }
        }
    }
    out
}

#[cfg(test)]
#[path = "tests/plot.rs"]
mod tests;
