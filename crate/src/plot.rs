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
mod tests {
    use super::*;

    fn labels(t: &Ticks) -> Vec<&str> {
        t.ticks.iter().map(|t| t.label.as_str()).collect()
    }

    fn check_ticks(t: &Ticks) {
        let v = t.values();
        let brief = format!(
            "{:?} step {:?} n={} first={:?} last={:?}",
            t.range,
            t.step,
            v.len(),
            v.first(),
            v.last()
        );
        assert!(v.len() >= 2, "too few ticks: {brief}");
        assert!(v.len() <= MAX_TICK_TARGET + 1, "too many ticks: {brief}");
        let step = t.step.value();
        for w in v.windows(2) {
            assert!(w[1] > w[0], "not increasing: {brief}");
            let d = w[1] - w[0];
            assert!(
                (d - step).abs() <= step * 1e-9 + w[1].abs().max(w[0].abs()) * 1e-14,
                "uneven: {brief}"
            );
        }
        for x in &v {
            assert!(x.is_finite());
            assert!(t.range.contains(*x), "{x} outside {:?}", t.range);
        }
        for l in labels(t) {
            assert!(!l.is_empty());
            assert!(
                !l.starts_with("-0") || l.contains(|c: char| ('1'..='9').contains(&c)),
                "{l}"
            );
        }
        let mut ls: Vec<&str> = labels(t);
        ls.dedup();
        assert_eq!(ls.len(), v.len(), "duplicate labels {brief}");
    }

    #[test]
    fn ticks_unit_range() {
        let t = Ticks::new(Range::new(0.0, 1.0), 5);
        check_ticks(&t);
        assert_eq!(t.values(), vec![0.0, 0.2, 0.4, 0.6, 0.8, 1.0]);
        assert_eq!(labels(&t), vec!["0.0", "0.2", "0.4", "0.6", "0.8", "1.0"]);
    }

    #[test]
    fn ticks_mixed_sign() {
        let t = Ticks::new(Range::new(-3.7, 12.2), 5);
        check_ticks(&t);
        assert_eq!(t.values(), vec![0.0, 5.0, 10.0]);
        assert_eq!(
            t.step,
            NiceStep {
                mantissa: 5,
                exponent: 0
            }
        );
        assert_eq!(labels(&t), vec!["0", "5", "10"]);
        let t = Ticks::new(Range::new(-3.7, 12.2), 8);
        check_ticks(&t);
        assert_eq!(labels(&t), vec!["-2", "0", "2", "4", "6", "8", "10", "12"]);
    }

    #[test]
    fn ticks_small_magnitudes_use_scientific() {
        let t = Ticks::new(Range::new(1e-6, 3e-6), 5);
        check_ticks(&t);
        assert_eq!(labels(&t), vec!["1e-6", "1.5e-6", "2e-6", "2.5e-6", "3e-6"]);
    }

    #[test]
    fn ticks_large_magnitudes() {
        let t = Ticks::new(Range::new(-1e5, 2e5), 5);
        check_ticks(&t);
        assert_eq!(labels(&t), vec!["-100000", "0", "100000", "200000"]);
        let t = Ticks::new(Range::new(0.0, 3e7), 5);
        check_ticks(&t);
        assert_eq!(labels(&t), vec!["0", "1e7", "2e7", "3e7"]);
        let t = Ticks::new(Range::new(0.0, 3e7), 8);
        assert_eq!(
            labels(&t),
            vec!["0", "5e6", "1e7", "1.5e7", "2e7", "2.5e7", "3e7"]
        );
        let t = Ticks::new(Range::new(-4e250, -1e250), 4);
        check_ticks(&t);
        assert!(
            labels(&t)
                .iter()
                .all(|l| l.starts_with('-') && l.contains("e250")),
            "{t:?}"
        );
    }

    #[test]
    fn ticks_degenerate_ranges() {
        let t = Ticks::new(Range::new(5.0, 5.0), 5);
        check_ticks(&t);
        assert_eq!(t.range, Range::new(4.5, 5.5));
        assert!(t.values().contains(&5.0));
        let t = Ticks::new(Range::new(0.0, 0.0), 5);
        check_ticks(&t);
        assert_eq!(t.range, Range::new(-1.0, 1.0));
        assert_eq!(labels(&t), vec!["-1.0", "-0.5", "0.0", "0.5", "1.0"]);
        let t = Ticks::new(Range::new(-7e-12, -7e-12), 5);
        check_ticks(&t);
        let t = Ticks::new(Range::new(1e15, 1e15 + 1.0), 5);
        check_ticks(&t);
    }

    #[test]
    fn ticks_huge_and_non_finite() {
        for r in [
            Range::new(-f64::MAX, f64::MAX),
            Range::new(f64::NAN, f64::NAN),
            Range::new(f64::NEG_INFINITY, f64::INFINITY),
            Range::new(f64::NAN, 3.0),
            Range {
                min: f64::NAN,
                max: f64::INFINITY,
            },
            Range {
                min: 2.0,
                max: -2.0,
            },
            Range::new(-1e-300, 1e-300),
            Range::new(1e-310, 2e-310),
            Range::new(-1e300, -1e300),
        ] {
            for target in [0, 1, 2, 5, 10, 1000] {
                let t = Ticks::new(r, target);
                check_ticks(&t);
                let c = Ticks::covering(r, target);
                check_ticks(&c);
            }
        }
        assert_eq!(Range::new(f64::NAN, 3.0), Range::new(3.0, 3.0));
        assert_eq!(Range::new(f64::NAN, f64::INFINITY), Range::UNIT);
    }

    #[test]
    fn no_negative_zero_labels() {
        let t = Ticks::new(Range::new(-0.3, 0.3), 6);
        check_ticks(&t);
        assert!(labels(&t).contains(&"0.0"));
        assert!(!labels(&t).iter().any(|l| *l == "-0.0" || *l == "-0"));
        assert_eq!(clean_negative_zero("-0.000".into()), "0.000");
        assert_eq!(clean_negative_zero("-0e0".into()), "0e0");
        assert_eq!(clean_negative_zero("-0.01".into()), "-0.01");
    }

    #[test]
    fn covering_ticks_enclose_range() {
        let c = Ticks::covering(Range::new(-3.7, 12.2), 5);
        check_ticks(&c);
        assert_eq!(c.range, Range::new(-5.0, 15.0));
        assert!(c.values().first() <= Some(&-3.7));
        assert!(c.values().last() >= Some(&12.2));
        let c = Ticks::covering(Range::new(0.0, 1.0), 5);
        assert_eq!(c.values(), vec![0.0, 0.2, 0.4, 0.6, 0.8, 1.0]);
    }

    #[test]
    fn nice_step_selection() {
        let s = |m, e| NiceStep {
            mantissa: m,
            exponent: e,
        };
        assert_eq!(NiceStep::at_least(0.2), s(2, -1));
        assert_eq!(NiceStep::at_least(0.21), s(5, -1));
        assert_eq!(NiceStep::at_least(1000.0), s(1, 3));
        assert_eq!(NiceStep::at_least(7.0), s(1, 1));
        assert_eq!(NiceStep::at_least(f64::NAN), s(1, 0));
        assert_eq!(NiceStep::at_least(-1.0), s(1, 0));
        assert_eq!(s(5, 0).smaller(), s(2, 0));
        assert_eq!(s(1, 0).smaller(), s(5, -1));
        assert_eq!(s(5, 0).larger(), s(1, 1));
        assert_eq!(s(2, -3).multiple(3), 0.006);
        assert_eq!(s(1, -1).multiple(3), 0.3);
    }

    #[test]
    fn range_padding_and_widening() {
        assert_eq!(Range::new(3.0, 1.0), Range { min: 1.0, max: 3.0 });
        assert_eq!(Range::new(0.0, 10.0).padded(0.1), Range::new(-1.0, 11.0));
        assert_eq!(Range::new(-2.0, -2.0).widened(), Range::new(-2.2, -1.8));
        assert_eq!(Range::new(0.0, 0.0).padded(0.5), Range::new(-2.0, 2.0));
        assert!(Range::new(1.0, 1.0 + 1e-12).is_degenerate());
        assert!(!Range::new(1.0, 1.001).is_degenerate());
        assert_eq!(Range::new(1.0, 2.0).padded(f64::NAN), Range::new(1.0, 2.0));
        assert_eq!(
            Range::from_values([f64::NAN, 2.0, -1.0, f64::INFINITY]),
            Some(Range::new(-1.0, 2.0))
        );
        assert_eq!(Range::from_values([f64::NAN]), None);
        assert_eq!(Range::from_values(Vec::new()), None);
        let big = Range::new(-f64::MAX, f64::MAX).padded(10.0);
        assert!(big.min.is_finite() && big.max.is_finite() && big.span().is_finite());
        assert_eq!(Range::new(0.0, 1.0).including(f64::NAN), Range::UNIT);
        assert_eq!(
            Range::new(0.0, 1.0).union(Range::new(-1.0, 0.5)),
            Range::new(-1.0, 1.0)
        );
    }

    #[test]
    fn axis_round_trip() {
        let x = Axis::new(Range::new(-3.0, 7.0), 50.0, 550.0);
        assert_eq!(x.to_pixel(-3.0), 50.0);
        assert_eq!(x.to_pixel(7.0), 550.0);
        assert_eq!(x.to_pixel(2.0), 300.0);
        let y = Axis::new(Range::new(0.0, 10.0), 400.0, 20.0);
        assert_eq!(y.to_pixel(0.0), 400.0);
        assert_eq!(y.to_pixel(10.0), 20.0);
        assert!(y.to_pixel(7.0) < y.to_pixel(3.0), "y grows upward in data");
        assert!(y.scale() < 0.0);
        for v in [-3.0, -1.234, 0.0, 5.5, 7.0, 100.0] {
            let back = x.to_data(x.to_pixel(v));
            assert!((back - v).abs() < 1e-12 * (1.0 + v.abs()), "{v} → {back}");
            let back = y.to_data(y.to_pixel(v));
            assert!((back - v).abs() < 1e-12 * (1.0 + v.abs()));
        }
        for p in [0.0, 50.0, 123.4, 550.0] {
            assert!((x.to_pixel(x.to_data(p)) - p).abs() < 1e-9);
        }
        let flat = Axis::new(Range::new(0.0, 1.0), 10.0, 10.0);
        assert_eq!(flat.to_data(42.0), 0.0);
        let bad = Axis::new(Range::new(0.0, 1.0), f64::NAN, f64::INFINITY);
        assert!(bad.to_pixel(0.5).is_finite());
        assert!(Axis::new(Range::new(2.0, 2.0), 0.0, 100.0)
            .to_pixel(2.0)
            .is_finite());
    }

    #[test]
    fn frame_maps_y_upward() {
        let f = Frame::new(
            Rect::sized(400.0, 300.0),
            Margins {
                left: 40.0,
                right: 10.0,
                top: 10.0,
                bottom: 30.0,
            },
            Range::new(0.0, 10.0),
            Range::new(-1.0, 1.0),
        );
        assert_eq!(
            f.plot,
            Rect {
                x: 40.0,
                y: 10.0,
                width: 350.0,
                height: 260.0
            }
        );
        assert_eq!(f.to_pixel([0.0, -1.0]), [40.0, 270.0]);
        assert_eq!(f.to_pixel([10.0, 1.0]), [390.0, 10.0]);
        let d = f.to_data(f.to_pixel([3.3, 0.25]));
        assert!((d[0] - 3.3).abs() < 1e-12 && (d[1] - 0.25).abs() < 1e-12);
        // A canvas smaller than its margins still gives a usable frame.
        let tiny = Frame::new(
            Rect::sized(10.0, f64::NAN),
            Margins::STANDARD,
            Range::UNIT,
            Range::UNIT,
        );
        assert!(tiny.plot.width >= 1.0 && tiny.plot.height >= 1.0);
        assert!(tiny.to_pixel([0.5, 0.5])[0].is_finite());
    }

    fn assert_equal_scale(f: &Frame) {
        let sx = f.x.scale();
        let sy = -f.y.scale();
        assert!(
            (sx - sy).abs() <= 1e-9 * sx.abs(),
            "unequal scale {sx} vs {sy}"
        );
    }

    #[test]
    fn complex_plane_layout() {
        let outer = Rect::sized(500.0, 400.0);
        let pts = [[-3.0, 2.0], [-3.0, -2.0], [-0.5, 0.0]];
        let f = Frame::complex_plane(outer, Margins::STANDARD, &pts, false, 0.1);
        assert_equal_scale(&f);
        assert!(f.x.range.contains(0.0) && f.y.range.contains(0.0));
        for p in pts {
            let px = f.to_pixel(p);
            assert!(f.plot.contains(px), "{p:?} → {px:?} outside {:?}", f.plot);
        }
        assert!(
            (f.y.range.min + f.y.range.max).abs() < 1e-12,
            "symmetric imaginary range"
        );
        // Right of the imaginary axis there is some room (padding).
        assert!(f.x.range.max > 0.0);

        // Only real, far-left poles: origin still shown.
        let f = Frame::complex_plane(
            outer,
            Margins::STANDARD,
            &[[-100.0, 0.0], [-120.0, 0.0]],
            false,
            0.1,
        );
        assert_equal_scale(&f);
        assert!(f.x.range.contains(0.0) && f.x.range.contains(-120.0));
        assert!(f.y.range.span() > 0.0);

        // Discrete: unit circle included even for poles near the origin.
        let f = Frame::complex_plane(outer, Margins::STANDARD, &[[0.1, 0.1]], true, 0.1);
        assert_equal_scale(&f);
        for p in [[1.0, 0.0], [-1.0, 0.0], [0.0, 1.0], [0.0, -1.0]] {
            assert!(f.plot.contains(f.to_pixel(p)));
        }

        // Nothing, only origin, NaN/inf, huge.
        for pts in [
            vec![],
            vec![[0.0, 0.0]],
            vec![[f64::NAN, 1.0], [f64::INFINITY, 0.0]],
            vec![[-1e300, 1e300], [f64::MAX, 0.0]],
            vec![[1e-200, 0.0]],
            vec![[5.0, 0.0], [5.0, 0.0]],
        ] {
            let f = Frame::complex_plane(outer, Margins::STANDARD, &pts, false, POLE_MAP_PADDING);
            assert_equal_scale(&f);
            assert!(f.x.range.span().is_finite() && f.x.range.span() > 0.0);
            assert!(f.y.range.span().is_finite() && f.y.range.span() > 0.0);
            assert!(f.x.range.contains(0.0) && f.y.range.contains(0.0));
            check_ticks(&f.x.ticks(70.0));
            check_ticks(&f.y.ticks(45.0));
            for p in pts.iter().filter(|p| p[0].is_finite() && p[1].is_finite()) {
                let q = [
                    p[0].clamp(-MAX_MAGNITUDE, MAX_MAGNITUDE),
                    p[1].clamp(-MAX_MAGNITUDE, MAX_MAGNITUDE),
                ];
                let px = f.to_pixel(q);
                assert!(
                    f.plot.contains(px) || (px[0] - f.plot.right()).abs() < 1e-6,
                    "{q:?} {px:?} {f:?}"
                );
            }
        }
    }

    #[test]
    fn hit_testing() {
        let m = [[10.0, 10.0], [20.0, 10.0], [14.0, 10.0], [16.0, 10.0]];
        assert_eq!(hit_test([10.0, 10.0], &m, 5.0), Some(0));
        assert_eq!(hit_test([19.0, 10.0], &m, 5.0), Some(1));
        // Equidistant from markers 2 and 3: the lower index wins.
        assert_eq!(hit_test([15.0, 10.0], &m, 5.0), Some(2));
        // Exactly on the radius counts; just beyond does not.
        assert_eq!(hit_test([10.0, 15.0], &m[..1], 5.0), Some(0));
        assert_eq!(hit_test([10.0, 15.0001], &m[..1], 5.0), None);
        assert_eq!(hit_test([100.0, 100.0], &m, 5.0), None);
        assert_eq!(hit_test([10.0, 10.0], &[], 5.0), None);
        assert_eq!(hit_test([f64::NAN, 10.0], &m, 5.0), None);
        assert_eq!(hit_test([10.0, 10.0], &m, -1.0), None);
        assert_eq!(hit_test([10.0, 10.0], &m, f64::NAN), None);
        assert_eq!(hit_test([10.0, 10.0], &m, 0.0), Some(0));
        // Duplicates: first one.
        assert_eq!(
            hit_test([5.0, 5.0], &[[5.0, 5.0], [5.0, 5.0]], 1.0),
            Some(0)
        );
        // Non-finite markers are skipped.
        assert_eq!(
            hit_test(
                [5.0, 5.0],
                &[[f64::NAN, 5.0], [f64::INFINITY, 5.0], [6.0, 5.0]],
                2.0
            ),
            Some(2)
        );
        // Infinite radius: everything finite is in reach.
        assert_eq!(hit_test([0.0, 0.0], &[[1e6, 0.0]], f64::INFINITY), Some(0));
    }

    #[test]
    fn common_ticks_share_a_step() {
        let outer = Rect::sized(560.0, 440.0);
        let pts = [[-4.0, 0.8], [-4.0, -0.8], [-2.0, 1.5], [3.1, 0.0]];
        let f = Frame::complex_plane(outer, Margins::STANDARD, &pts, false, POLE_MAP_PADDING);
        let (xt, yt) = common_ticks(&f, 70.0, 42.0);
        check_ticks(&xt);
        check_ticks(&yt);
        assert_eq!(xt.step, yt.step);
        // Odd inputs still give valid ticks.
        let t = Ticks::with_step(
            Range::new(0.0, 1.0),
            NiceStep {
                mantissa: 1,
                exponent: -5,
            },
            5,
        );
        check_ticks(&t);
        assert_eq!(
            t.step,
            NiceStep {
                mantissa: 2,
                exponent: -1
            },
            "fell back"
        );
        let t = Ticks::with_step(
            Range::new(0.0, 1.0),
            NiceStep {
                mantissa: 5,
                exponent: 3,
            },
            5,
        );
        check_ticks(&t);
    }

    #[test]
    fn tick_targets() {
        assert_eq!(tick_target(400.0, 80.0), 5);
        assert_eq!(tick_target(10.0, 80.0), 2);
        assert_eq!(tick_target(1e9, 80.0), MAX_TICK_TARGET);
        assert_eq!(tick_target(f64::NAN, 80.0), 2);
        assert_eq!(tick_target(400.0, 0.0), 2);
    }

    /// Small deterministic generator (SplitMix64) for the property test.
    struct SplitMix(u64);
    impl SplitMix {
        fn next_u64(&mut self) -> u64 {
            self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
            let mut z = self.0;
            z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
            z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
            z ^ (z >> 31)
        }
        fn unit(&mut self) -> f64 {
            (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64
        }
        /// A value with random sign and magnitude over many decades.
        fn wide(&mut self) -> f64 {
            let decade = (self.unit() * 40.0 - 20.0).round() as i32;
            let sign = if self.next_u64() & 1 == 0 { 1.0 } else { -1.0 };
            sign * self.unit() * 10f64.powi(decade)
        }
    }

    #[test]
    fn property_ticks_are_nice() {
        let mut rng = SplitMix(0x5eed_2024);
        for case in 0..20_000 {
            let a = rng.wide();
            let b = match case % 4 {
                0 => a,                           // degenerate
                1 => a + rng.wide().abs() * 1e-3, // narrow
                _ => rng.wide(),                  // anything
            };
            let target = (rng.next_u64() % 12) as usize;
            let padded = Range::new(a, b).padded(0.05);
            let t = Ticks::new(padded, target);
            check_ticks(&t);
            assert!(t.range.min >= padded.widened().min && t.range.max <= padded.widened().max);
            let c = Ticks::covering(padded, target);
            check_ticks(&c);
            assert!(
                c.range.min <= padded.min && c.range.max >= padded.max,
                "{padded:?} {c:?}"
            );
        }
    }

    #[test]
    fn pole_map_scene_json_and_pick() {
        let json = r#"{"open_loop":[[1.0,0.0],[-2.0,3.0],[-2.0,-3.0]],"closed_loop":[[-4.0,1.0],[-4.0,-1.0]],"discrete":false}"#;
        let s: PoleMapScene = serde_json::from_str(json).expect("valid scene");
        assert_eq!(s.open_loop.len(), 3);
        assert_eq!(s.closed_loop.len(), 2);
        assert!(s.not_assigned.is_empty());
        assert!(
            serde_json::from_str::<PoleMapScene>(r#"{"closed":[]}"#).is_err(),
            "unknown field rejected"
        );
        let outer = Rect::sized(480.0, 360.0);
        let f = s.frame(outer);
        let target = f.to_pixel([-4.0, 1.0]);
        let pick = s.pick(outer, [target[0] + 2.0, target[1] - 1.0]);
        assert_eq!(
            pick,
            Some(PolePick {
                set: PoleSet::ClosedLoop,
                index: 0,
                re: -4.0,
                im: 1.0
            })
        );
        let pick = s.pick(outer, f.to_pixel([1.0, 0.0]));
        assert_eq!(pick.map(|p| (p.set, p.index)), Some((PoleSet::OpenLoop, 0)));
        assert_eq!(s.pick(outer, [0.0, 0.0]), None);
        // Same location in two layers: closed loop (drawn on top) wins.
        let both = PoleMapScene {
            open_loop: vec![[-1.0, 0.0]],
            closed_loop: vec![[-1.0, 0.0]],
            ..Default::default()
        };
        let p = both.frame(outer).to_pixel([-1.0, 0.0]);
        assert_eq!(
            both.pick(outer, p).map(|p| p.set),
            Some(PoleSet::ClosedLoop)
        );
    }

    fn serialized_keys<T: Serialize>(v: &T) -> Vec<String> {
        match serde_json::to_value(v) {
            Ok(serde_json::Value::Object(m)) => m.keys().cloned().collect(),
            other => panic!("not an object: {other:?}"),
        }
    }

    #[test]
    fn legend_flows_into_right_aligned_rows() {
        let w = LEGEND_SWATCH_PX;
        let flow = flow_legend(&[50.0, 50.0, 50.0], 2.0 * (w + 50.0) + 1.0);
        assert_eq!(flow.iter().map(|f| f.0).collect::<Vec<_>>(), [0, 0, 1]);
        // Right-aligned: the first row ends at the right edge.
        assert!((flow[1].1 + w + 50.0 - (2.0 * (w + 50.0) + 1.0)).abs() < 1e-9);
        assert!(flow[0].1 < flow[1].1);
        let wide = flow_legend(&[500.0, 10.0], 100.0);
        assert_eq!(wide.iter().map(|f| f.0).collect::<Vec<_>>(), [0, 1]);
        assert_eq!(wide[0].1, 0.0);
        assert!(flow_legend(&[], 100.0).is_empty());
        assert_eq!(flow_legend(&[f64::NAN, f64::INFINITY], f64::NAN).len(), 2);
        let one_row = TimePlotScene::default().frame(Rect::sized(400.0, 300.0));
        let three = TimePlotScene::default().frame_with_legend_rows(Rect::sized(400.0, 300.0), 3);
        assert!((three.plot.y - one_row.plot.y - 2.0 * LEGEND_ROW_PX).abs() < 1e-9);
    }

    #[test]
    fn pole_markers_come_in_keyboard_order() {
        let scene = PoleMapScene {
            open_loop: vec![[1.0, 0.0], [-3.0, 0.0]],
            closed_loop: vec![[-2.0, -1.0], [-5.0, 0.0], [-2.0, 1.0], [f64::NAN, 0.0]],
            not_assigned: vec![[-1.0, 0.0]],
            ..Default::default()
        };
        let order: Vec<(PoleSet, usize)> = scene.markers().iter().map(|p| (p.set, p.index)).collect();
        assert_eq!(
            order,
            [
                (PoleSet::ClosedLoop, 1),
                (PoleSet::ClosedLoop, 2),
                (PoleSet::ClosedLoop, 0),
                (PoleSet::NotAssigned, 0),
                (PoleSet::OpenLoop, 1),
                (PoleSet::OpenLoop, 0),
            ]
        );
    }

    /// Vertical distance from `q` to the polyline `line` at `q`'s x (x increasing).
    fn vertical_gap(line: &[[f64; 2]], q: [f64; 2]) -> f64 {
        for w in line.windows(2) {
            let (a, b) = (w[0], w[1]);
            if q[0] >= a[0] && q[0] <= b[0] {
                let y = if b[0] > a[0] { a[1] + (b[1] - a[1]) * (q[0] - a[0]) / (b[0] - a[0]) } else { a[1] };
                return (q[1] - y).abs();
            }
        }
        f64::INFINITY
    }

    #[test]
    fn simplified_lines_stay_within_the_tolerance() {
        // A decaying oscillation, 2000 samples over 1000 px: every sample stays within
        // the tolerance of the simplified line, which is much shorter.
        for &(n, width) in &[(2000usize, 1000.0f64), (600, 900.0), (5000, 300.0)] {
            let pts: Vec<[f64; 2]> = (0..n)
                .map(|i| {
                    let t = i as f64 / (n - 1) as f64;
                    [10.0 + width * t, 150.0 + 120.0 * (-3.0 * t).exp() * (25.0 * t).cos()]
                })
                .collect();
            let tol = 0.2;
            let out = simplify_polyline(&pts, tol);
            assert_eq!(out.first(), pts.first());
            assert_eq!(out.last(), pts.last());
            assert!(out.len() * 4 < pts.len(), "{n}: {} of {} kept", out.len(), pts.len());
            // Beyond one pixel column per sample, the column bins decide; check the corridor
            // where samples are at least a pixel apart.
            if width / n as f64 >= 1.0 {
                for q in &pts {
                    let gap = vertical_gap(&out, *q);
                    assert!(gap <= tol + 1e-9, "{n}: {q:?} is {gap} px off");
                }
            }
            // Every kept point is an original sample, in order.
            let mut k = 0;
            for q in &out {
                while k < pts.len() && pts[k] != *q {
                    k += 1;
                }
                assert!(k < pts.len(), "{q:?} is not a sample (or out of order)");
            }
        }
    }

    #[test]
    fn simplification_keeps_each_columns_extremes_and_odd_input() {
        // Ten samples in one pixel column with a spike: first, lowest, highest and last stay.
        let col: Vec<[f64; 2]> = (0..10).map(|i| [5.0 + 0.05 * i as f64, if i == 4 { 90.0 } else if i == 6 { -20.0 } else { 10.0 }]).collect();
        let out = simplify_polyline(&col, 0.0);
        assert_eq!(out, vec![col[0], col[4], col[6], col[9]]);
        // Too short to simplify, a straight line, and x going backwards.
        assert_eq!(simplify_polyline(&[[0.0, 0.0], [1.0, 1.0]], 0.2).len(), 2);
        let line: Vec<[f64; 2]> = (0..100).map(|i| [i as f64 * 3.0, i as f64 * 2.0]).collect();
        assert_eq!(simplify_polyline(&line, 0.2), vec![line[0], line[99]]);
        let back = [[0.0, 0.0], [10.0, 5.0], [4.0, 9.0], [20.0, 1.0]];
        let out = simplify_polyline(&back, 0.2);
        assert_eq!(out.len(), 4, "{out:?}");
        assert!(simplify_polyline(&[], 1.0).is_empty());
    }

    #[test]
    fn zoomed_pole_maps_fit_the_poles_at_equal_scale() {
        let pts = [[0.98, 0.03], [0.98, -0.03], [0.99, 0.0], [f64::NAN, 1.0]];
        let outer = Rect::sized(560.0, 440.0);
        let f = Frame::complex_region(outer, Margins::STANDARD, &pts, POLE_MAP_PADDING);
        for p in &pts[..3] {
            let q = f.to_pixel(*p);
            assert!(f.plot.contains(q), "{p:?} at {q:?}");
        }
        assert!((f.x.scale().abs() - f.y.scale().abs()).abs() < 1e-9 * f.x.scale().abs());
        assert!(!f.x.range.contains(0.0), "the origin is not forced into view");
        assert!(f.x.range.span() < 0.2, "{:?}", f.x.range);
        // One point, or none: still a drawable frame.
        let one = Frame::complex_region(outer, Margins::STANDARD, &[[5.0, 0.0]], 0.1);
        assert!(one.x.range.span() > 0.0 && one.x.range.contains(5.0));
        let none = Frame::complex_region(outer, Margins::STANDARD, &[], 0.1);
        assert!(none.x.range.contains(0.0));
        // The scene switches to it with fit_poles, and keeps the unit circle otherwise.
        let scene = PoleMapScene { closed_loop: pts[..3].to_vec(), discrete: true, ..Default::default() };
        let full = scene.frame(outer);
        assert!(full.x.range.contains(-1.0) && full.x.range.contains(1.0));
        let [cx, cy, r] = scene.unit_circle(outer).unwrap();
        assert!((full.to_pixel([1.0, 0.0])[0] - (cx + r)).abs() < 1e-9 && (cy - full.to_pixel([0.0, 0.0])[1]).abs() < 1e-9);
        let zoomed = PoleMapScene { fit_poles: true, ..scene.clone() };
        assert!(zoomed.frame(outer).x.range.span() < 0.2);
        assert!(PoleMapScene::default().unit_circle(outer).is_none());
    }

    #[test]
    fn observer_poles_are_their_own_layer() {
        let scene = PoleMapScene {
            closed_loop: vec![[-2.0, 0.0]],
            observer: vec![[-8.0, 1.0], [-8.0, -1.0]],
            open_loop: vec![[1.0, 0.0]],
            ..Default::default()
        };
        let order: Vec<PoleSet> = scene.markers().iter().map(|p| p.set).collect();
        assert_eq!(order, [PoleSet::ClosedLoop, PoleSet::Observer, PoleSet::Observer, PoleSet::OpenLoop]);
        let outer = Rect::sized(480.0, 360.0);
        let at = scene.frame(outer).to_pixel([-8.0, -1.0]);
        assert_eq!(scene.pick(outer, at).map(|p| (p.set, p.index)), Some((PoleSet::Observer, 1)));
        let json = r#"{"observer": [[-3, 0]], "fit_poles": true}"#;
        let s: PoleMapScene = serde_json::from_str(json).expect("valid scene");
        assert!(s.fit_poles && s.observer.len() == 1);
        let t: TimePlotScene = serde_json::from_str(r#"{"series": [{"name": "r", "values": [1], "colour": 2, "dash": 1}], "events": [{"time": 0.5, "label": "step"}]}"#).expect("valid scene");
        assert_eq!((t.series[0].colour, t.series[0].dash), (Some(2), Some(1)));
        assert_eq!(t.events[0].time, 0.5);
    }

    #[test]
    fn scene_field_lists_match_the_structs() {
        let mut want = serialized_keys(&PoleMapScene::default());
        let mut have: Vec<String> = PoleMapScene::FIELDS.iter().map(|s| s.to_string()).collect();
        want.sort();
        have.sort();
        assert_eq!(have, want);
        let mut want = serialized_keys(&TimePlotScene::default());
        let mut have: Vec<String> = TimePlotScene::FIELDS
            .iter()
            .map(|s| s.to_string())
            .collect();
        want.sort();
        have.sort();
        assert_eq!(have, want);
    }

    #[test]
    fn time_plot_scene_ranges() {
        let s = TimePlotScene {
            t: vec![0.0, 0.5, 1.0, 1.5, 2.0],
            series: vec![
                Series {
                    name: "x1".into(),
                    values: vec![1.0, 0.5, 0.2, f64::NAN, 0.0],
                    ..Default::default()
                },
                Series {
                    name: "u".into(),
                    values: vec![-3.0, -1.0, 0.0],
                    ..Default::default()
                },
            ],
            limits: vec![LimitLine {
                value: 4.0,
                label: "u max".into(),
            }],
            band: Some(Band {
                lower: -0.02,
                upper: 0.02,
                label: "±2 %".into(),
            }),
            ..Default::default()
        };
        let (x, y) = s.data_ranges();
        assert_eq!(x, Range::new(0.0, 2.0));
        assert!(y.contains(-3.0) && y.contains(4.0) && y.min < -3.0 && y.max > 4.0);
        assert_eq!(s.points(1).len(), 3);
        assert!(s.points(7).is_empty());
        let empty = TimePlotScene::default();
        let (x, y) = empty.data_ranges();
        assert!(x.span() > 0.0 && y.span() > 0.0);
        let s2: TimePlotScene = serde_json::from_str(r#"{"t":[0,1],"series":[{"name":"y","values":[0,1]}],"band":{"lower":0.9,"upper":1.1}}"#)
            .expect("valid scene");
        assert_eq!(s2.series.len(), 1);
        assert_eq!(s2.band.as_ref().map(|b| b.upper), Some(1.1));
    }
}
