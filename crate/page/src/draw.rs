//! Painting as data: a plot scene ([`crate::plot`]) becomes a display list of [`DrawOp`]s in
//! CSS pixels, which native tests inspect and the browser only replays on a canvas
//! (`web.rs`). The one thing the browser knows better is how wide a text is: it is asked
//! through [`TextMeasure`] while the list is built (natively, [`ApproximateText`]).
//!
//! The list sets a style only when it changes (each canvas setter parses its text), clips with
//! `Save`/`ClipRect`…`Restore` (after which styles are set again), and keeps every coordinate
//! finite and within ±1e6 pixels, whatever the scene holds.

use crate::plot::{common_ticks, flow_legend, Frame, PoleMapScene, PoleSet, Rect, Simplifier, Ticks, TimePlotScene, LEGEND_ROW_PX, LEGEND_SWATCH_PX};

/// Palette (kept in step with site/style.css).
pub mod colour {
    pub const BACKGROUND: &str = "#ffffff";
    pub const PLOT_EDGE: &str = "#9aa5ae";
    pub const GRID: &str = "#e4e8eb";
    pub const AXIS: &str = "#56636e";
    pub const TEXT: &str = "#2c3a45";
    pub const MUTED_TEXT: &str = "#5f6d78";
    pub const STABLE_FILL: &str = "rgba(17, 110, 106, 0.09)";
    pub const STABLE_EDGE: &str = "rgba(17, 110, 106, 0.8)";
    pub const OPEN_LOOP: &str = "#7b8794";
    pub const CLOSED_LOOP: &str = "#0e5f5c";
    pub const NOT_ASSIGNED: &str = "#c07a0c";
    /// Observer poles (the slate blue of the signal palette).
    pub const OBSERVER: &str = "#3f4f86";
    /// Reference and load step markers on the time plots.
    pub const EVENT: &str = "#7b8794";
    pub const LIMIT: &str = "#9c3d2e";
    pub const BAND_FILL: &str = "rgba(192, 122, 12, 0.13)";
    pub const BAND_TEXT: &str = "#8a5a0c";
    /// Ring around the pole chosen by keyboard.
    pub const FOCUS: &str = "#2c3a45";
    /// Open circles on the requested poles that can be dragged.
    pub const REQUESTED: &str = "#0e5f5c";
    /// The pinned design's poles and signals (plum).
    pub const PINNED: &str = "#8b4a6e";
    /// Poles of the sampled uncertain plants (dots).
    pub const UNCERTAIN: &str = "#6e6a9a";
    /// A plant zero (○, smaller and darker than the teal ring of a requested pole).
    pub const ZERO: &str = "#3b4752";
    /// Boundary of a specification's admissible region (dark amber).
    pub const REGION: &str = "#8a5a0c";
    /// Signal colours, in order.
    pub const SERIES: [&str; 6] = ["#0e5f5c", "#c07a0c", "#3f4f86", "#8b4a6e", "#5f7a2a", "#56636e"];
}

pub const FONT: &str = "12px system-ui, -apple-system, \"Segoe UI\", Roboto, sans-serif";
pub const TITLE_FONT: &str = "600 12px system-ui, -apple-system, \"Segoe UI\", Roboto, sans-serif";
const X_TICK_SPACING_PX: f64 = 70.0;
const Y_TICK_SPACING_PX: f64 = 42.0;
/// How far (CSS pixels) a simplified line may stray from the samples it stands for.
const SIMPLIFY_TOLERANCE_PX: f64 = 0.2;
/// Largest coordinate written (the clip hides the rest).
const BOUND_PX: f64 = 1e6;

/// Text alignment, as the canvas names it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Align {
    Left,
    Center,
    Right,
}

/// Text baseline, as the canvas names it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Baseline {
    Top,
    Middle,
    Bottom,
}

/// Line ends.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Cap {
    Butt,
    Round,
}

/// One drawing operation, in CSS pixels.
#[derive(Debug, Clone, PartialEq)]
pub enum DrawOp {
    /// Fill the whole surface with the background.
    Clear {
        width: f64,
        height: f64,
    },
    Save,
    /// Clip to a rectangle (after a `Save`).
    ClipRect(Rect),
    /// Undo to the last `Save` (styles are then set again before use).
    Restore,
    /// Move the origin by (dx, dy) until the next `Restore` (after a `Save`).
    Translate {
        dx: f64,
        dy: f64,
    },
    Font(&'static str),
    Fill(&'static str),
    Stroke(&'static str),
    LineWidth(f64),
    /// Empty: solid.
    Dash(Vec<f64>),
    LineCap(Cap),
    RoundJoin,
    Alpha(f64),
    FillRect(Rect),
    StrokeRect(Rect),
    /// An SVG path string (`M x y L x y …`), stroked.
    StrokePath(String),
    FillCircle {
        centre: [f64; 2],
        radius: f64,
    },
    StrokeCircle {
        centre: [f64; 2],
        radius: f64,
    },
    Text {
        text: String,
        at: [f64; 2],
        align: Align,
        baseline: Baseline,
    },
}

/// How wide a text is in a font (CSS pixels).
pub trait TextMeasure {
    fn width(&self, font: &'static str, text: &str) -> f64;
}

/// 7 pixels a character: for native tests and for a browser that cannot measure.
#[derive(Debug, Clone, Copy, Default)]
pub struct ApproximateText;

impl TextMeasure for ApproximateText {
    fn width(&self, _font: &'static str, text: &str) -> f64 {
        7.0 * text.chars().count() as f64
    }
}

fn bounded(v: f64) -> f64 {
    if v.is_nan() {
        0.0
    } else {
        v.clamp(-BOUND_PX, BOUND_PX)
    }
}

fn bounded_point(p: [f64; 2]) -> [f64; 2] {
    [bounded(p[0]), bounded(p[1])]
}

/// A display list being built, with the styles last set.
pub struct DisplayList<'m> {
    pub ops: Vec<DrawOp>,
    pub rect: Rect,
    measure: &'m dyn TextMeasure,
    font: Option<&'static str>,
    fill: Option<&'static str>,
    stroke: Option<&'static str>,
    width: Option<f64>,
    dash: Option<Vec<f64>>,
}

impl<'m> DisplayList<'m> {
    /// A cleared surface of CSS size `rect`.
    pub fn new(rect: Rect, measure: &'m dyn TextMeasure) -> Self {
        let mut d = DisplayList { ops: Vec::with_capacity(256), rect, measure, font: None, fill: None, stroke: None, width: None, dash: None };
        d.ops.push(DrawOp::Clear { width: rect.width, height: rect.height });
        d
    }

    fn font(&mut self, f: &'static str) {
        if self.font != Some(f) {
            self.ops.push(DrawOp::Font(f));
            self.font = Some(f);
        }
    }
    fn fill(&mut self, c: &'static str) {
        if self.fill != Some(c) {
            self.ops.push(DrawOp::Fill(c));
            self.fill = Some(c);
        }
    }
    fn stroke(&mut self, c: &'static str) {
        if self.stroke != Some(c) {
            self.ops.push(DrawOp::Stroke(c));
            self.stroke = Some(c);
        }
    }
    fn line_width(&mut self, w: f64) {
        if self.width != Some(w) {
            self.ops.push(DrawOp::LineWidth(w));
            self.width = Some(w);
        }
    }
    fn dash(&mut self, pattern: &[f64]) {
        if self.dash.as_deref() != Some(pattern) {
            self.ops.push(DrawOp::Dash(pattern.to_vec()));
            self.dash = Some(pattern.to_vec());
        }
    }
    fn clip_to(&mut self, r: Rect) {
        self.ops.push(DrawOp::Save);
        self.ops.push(DrawOp::ClipRect(r));
    }
    /// Ends a clip: the canvas restores its saved styles, so every cached style is forgotten.
    fn restore(&mut self) {
        self.ops.push(DrawOp::Restore);
        self.font = None;
        self.fill = None;
        self.stroke = None;
        self.width = None;
        self.dash = None;
    }
    fn text_width(&mut self, font: &'static str, s: &str) -> f64 {
        self.measure.width(font, s)
    }
    fn text(&mut self, s: &str, x: f64, y: f64, align: Align, baseline: Baseline) {
        self.ops.push(DrawOp::Text { text: s.to_string(), at: bounded_point([x, y]), align, baseline });
    }
    fn path(&mut self, d: String) {
        if !d.is_empty() {
            self.ops.push(DrawOp::StrokePath(d));
        }
    }
    fn segments(&mut self, segs: &[([f64; 2], [f64; 2])]) {
        let mut d = String::with_capacity(segs.len() * 24);
        for (a, b) in segs {
            push_point(&mut d, 'M', *a);
            push_point(&mut d, 'L', *b);
        }
        self.path(d);
    }
    fn line(&mut self, a: [f64; 2], b: [f64; 2]) {
        self.segments(&[(a, b)]);
    }
}

/// Appends `Mx y` (or `Lx y`) to an SVG path, each coordinate rounded to a hundredth of a
/// CSS pixel and written as digits directly (float formatting is slow in the size-tuned build).
fn push_point(d: &mut String, command: char, p: [f64; 2]) {
    d.push(command);
    push_hundredths(d, bounded(p[0]));
    d.push(' ');
    push_hundredths(d, bounded(p[1]));
}

fn push_hundredths(d: &mut String, v: f64) {
    use std::fmt::Write;
    // Bounded by the caller to ±1e6 pixels, so the count of hundredths fits an i64.
    let c = (v.clamp(-1e9, 1e9) * 100.0).round() as i64;
    if c < 0 {
        d.push('-');
    }
    let c = c.unsigned_abs();
    // Writing to a String cannot fail.
    let _ = write!(d, "{}", c / 100);
    let frac = (c % 100) as u8;
    d.push('.');
    d.push(char::from(b'0' + frac / 10));
    d.push(char::from(b'0' + frac % 10));
}

/// Typographic minus for labels.
fn pretty(label: &str) -> String {
    label.replace('-', "\u{2212}")
}

/// Align a 1-px line to the pixel grid.
fn snap(v: f64) -> f64 {
    bounded(v).round() + 0.5
}

fn snapped_rect(p: Rect) -> Rect {
    Rect { x: snap(p.x), y: snap(p.y), width: p.width.round(), height: p.height.round() }
}

/// Grid lines, plot edge and tick labels.
fn grid(s: &mut DisplayList, f: &Frame, (xt, yt): (Ticks, Ticks)) {
    let p = f.plot;
    s.stroke(colour::GRID);
    s.line_width(1.0);
    let mut segs = Vec::with_capacity(xt.ticks.len() + yt.ticks.len());
    for t in &xt.ticks {
        let x = snap(f.x.to_pixel(t.value));
        segs.push(([x, p.y], [x, p.bottom()]));
    }
    for t in &yt.ticks {
        let y = snap(f.y.to_pixel(t.value));
        segs.push(([p.x, y], [p.right(), y]));
    }
    s.segments(&segs);
    s.stroke(colour::PLOT_EDGE);
    s.ops.push(DrawOp::StrokeRect(snapped_rect(p)));
    s.font(FONT);
    s.fill(colour::MUTED_TEXT);
    for t in &xt.ticks {
        s.text(&pretty(&t.label), f.x.to_pixel(t.value), p.bottom() + 5.0, Align::Center, Baseline::Top);
    }
    for t in &yt.ticks {
        s.text(&pretty(&t.label), p.x - 6.0, f.y.to_pixel(t.value), Align::Right, Baseline::Middle);
    }
}

fn axis_titles(s: &mut DisplayList, f: &Frame, x_title: &str, y_title: &str) {
    s.font(TITLE_FONT);
    s.fill(colour::TEXT);
    let p = f.plot;
    s.text(x_title, p.x + p.width / 2.0, p.bottom() + 22.0, Align::Center, Baseline::Top);
    s.text(y_title, 8.0, p.y - 8.0, Align::Left, Baseline::Bottom);
}

// ---------------------------------------------------------------------------------------------
// Pole-map markers.

struct MarkerStyle {
    half: f64,
    width: f64,
    stroke: &'static str,
}

fn marker_style(set: PoleSet) -> MarkerStyle {
    let (half, width, stroke) = match set {
        PoleSet::OpenLoop => (4.5, 1.5, colour::OPEN_LOOP),
        PoleSet::NotAssigned => (7.0, 2.0, colour::NOT_ASSIGNED),
        PoleSet::ClosedLoop => (5.5, 2.25, colour::CLOSED_LOOP),
        PoleSet::Observer => (6.0, 1.75, colour::OBSERVER),
        PoleSet::Requested => (8.5, 1.5, colour::REQUESTED),
        PoleSet::Pinned => (6.0, 2.0, colour::PINNED),
        PoleSet::Uncertain => (1.75, 0.0, colour::UNCERTAIN),
        PoleSet::Zero => (4.5, 1.75, colour::ZERO),
    };
    MarkerStyle { half, width, stroke }
}

/// A pole's marker: × closed loop and open loop, a hollow diamond for a pole that could not
/// be assigned, a boxed × for an observer pole, a ring for a requested (draggable) pole, + for
/// the pinned design. Shapes differ, not only colours, so the map reads in grey print too.
fn marker(s: &mut DisplayList, set: PoleSet, c: [f64; 2]) {
    let st = marker_style(set);
    let h = st.half;
    s.stroke(st.stroke);
    let cross = |h: f64| {
        let mut d = String::new();
        push_point(&mut d, 'M', [c[0] - h, c[1] - h]);
        push_point(&mut d, 'L', [c[0] + h, c[1] + h]);
        push_point(&mut d, 'M', [c[0] - h, c[1] + h]);
        push_point(&mut d, 'L', [c[0] + h, c[1] - h]);
        d
    };
    match set {
        PoleSet::Uncertain => {
            s.fill(st.stroke);
            s.ops.push(DrawOp::FillCircle { centre: bounded_point(c), radius: h });
        }
        PoleSet::NotAssigned => {
            s.line_width(st.width);
            let mut d = String::new();
            for (k, q) in [[c[0], c[1] - h], [c[0] + h, c[1]], [c[0], c[1] + h], [c[0] - h, c[1]], [c[0], c[1] - h]].iter().enumerate() {
                push_point(&mut d, if k == 0 { 'M' } else { 'L' }, *q);
            }
            s.path(d);
        }
        PoleSet::Requested | PoleSet::Zero => {
            s.line_width(st.width);
            s.ops.push(DrawOp::StrokeCircle { centre: bounded_point(c), radius: h });
        }
        PoleSet::Pinned | PoleSet::OpenLoop | PoleSet::ClosedLoop | PoleSet::Observer => {
            s.line_width(st.width);
            s.ops.push(DrawOp::LineCap(Cap::Round));
            let d = match set {
                PoleSet::Pinned => {
                    let mut d = String::new();
                    push_point(&mut d, 'M', [c[0] - h, c[1]]);
                    push_point(&mut d, 'L', [c[0] + h, c[1]]);
                    push_point(&mut d, 'M', [c[0], c[1] - h]);
                    push_point(&mut d, 'L', [c[0], c[1] + h]);
                    d
                }
                PoleSet::Observer => cross(h * 0.62),
                _ => cross(h),
            };
            s.path(d);
            s.ops.push(DrawOp::LineCap(Cap::Butt));
            if set == PoleSet::Observer {
                s.line_width(st.width * 0.6);
                s.ops.push(DrawOp::StrokeRect(Rect { x: bounded(c[0] - h), y: bounded(c[1] - h), width: 2.0 * h, height: 2.0 * h }));
            }
        }
    }
}

/// A legend swatch.
#[derive(Clone, Copy)]
enum Swatch {
    StableRegion,
    RegionBoundary,
    Marker(PoleSet),
}

/// A legend swatch centred at `c`.
fn legend_swatch(s: &mut DisplayList, swatch: Swatch, c: [f64; 2]) {
    match swatch {
        Swatch::StableRegion => {
            let r = Rect { x: c[0] - 6.0, y: c[1] - 6.0, width: 12.0, height: 12.0 };
            s.fill(colour::STABLE_FILL);
            s.ops.push(DrawOp::FillRect(r));
            s.stroke(colour::STABLE_EDGE);
            s.line_width(1.0);
            s.ops.push(DrawOp::StrokeRect(r));
        }
        Swatch::RegionBoundary => {
            s.stroke(colour::REGION);
            s.line_width(1.5);
            s.segments(&[([c[0] - 8.0, c[1]], [c[0] - 2.0, c[1]]), ([c[0] + 1.0, c[1]], [c[0] + 3.0, c[1]]), ([c[0] + 6.0, c[1]], [c[0] + 8.0, c[1]])]);
        }
        Swatch::Marker(set) => marker(s, set, c),
    }
}

/// The pole map's legend above the plot, flowed into rows as the scene's frame reserved them
/// ([`PoleMapScene::legend_flow`]).
fn pole_map_legend(s: &mut DisplayList, scene: &PoleMapScene, rect: Rect) {
    let labels = scene.legend_labels();
    let mut swatches = vec![Swatch::StableRegion];
    if scene.region.is_some() {
        swatches.push(Swatch::RegionBoundary);
    }
    swatches.extend(scene.layers().iter().filter(|(_, pts)| !pts.is_empty()).map(|(set, _)| Swatch::Marker(*set)));
    let left = scene.legend_left(rect);
    s.font(FONT);
    for ((label, swatch), (row, x)) in labels.iter().zip(&swatches).zip(scene.legend_flow(rect)) {
        let y = rect.y + 18.0 + row as f64 * LEGEND_ROW_PX;
        legend_swatch(s, *swatch, [left + x + 10.0, y]);
        s.fill(colour::TEXT);
        s.text(label, left + x + LEGEND_SWATCH_PX - 8.0, y, Align::Left, Baseline::Middle);
    }
}

/// The display list of a pole map.
pub fn pole_map(scene: &PoleMapScene, rect: Rect, measure: &dyn TextMeasure) -> Vec<DrawOp> {
    let mut s = DisplayList::new(rect, measure);
    let f = scene.frame(rect);
    let p = f.plot;
    let origin = f.to_pixel([0.0, 0.0]);
    let radius = f.x.scale().abs();
    let circle = scene.discrete && radius.is_finite() && radius < 1e7;
    // Stable region first, under the grid.
    s.clip_to(p);
    s.fill(colour::STABLE_FILL);
    if circle {
        s.ops.push(DrawOp::FillCircle { centre: bounded_point(origin), radius });
    } else if !scene.discrete {
        let right = bounded(origin[0]).clamp(p.x, p.right());
        s.ops.push(DrawOp::FillRect(Rect { x: p.x, y: p.y, width: right - p.x, height: p.height }));
    }
    s.restore();
    // Equal scale: one step on both axes keeps the grid square.
    grid(&mut s, &f, common_ticks(&f, X_TICK_SPACING_PX, Y_TICK_SPACING_PX));
    s.clip_to(p);
    s.stroke(colour::AXIS);
    s.line_width(1.0);
    let (ox, oy) = (snap(origin[0]), snap(origin[1]));
    s.segments(&[([p.x, oy], [p.right(), oy]), ([ox, p.y], [ox, p.bottom()])]);
    if circle {
        s.stroke(colour::STABLE_EDGE);
        s.line_width(1.5);
        s.dash(&[5.0, 4.0]);
        s.ops.push(DrawOp::StrokeCircle { centre: bounded_point(origin), radius });
        s.dash(&[]);
    }
    if let Some(region) = &scene.region {
        s.stroke(colour::REGION);
        s.line_width(1.5);
        s.dash(&[8.0, 3.0, 2.0, 3.0]);
        for line in &region.boundaries {
            let pts: Vec<[f64; 2]> = line.iter().filter(|q| q[0].is_finite() && q[1].is_finite()).map(|q| f.to_pixel(*q)).collect();
            if pts.len() >= 2 {
                let mut d = String::new();
                for (k, q) in pts.iter().enumerate() {
                    push_point(&mut d, if k == 0 { 'M' } else { 'L' }, *q);
                }
                s.path(d);
            }
        }
        s.dash(&[]);
    }
    for (set, points) in scene.layers() {
        for pt in points.iter().filter(|q| q[0].is_finite() && q[1].is_finite()) {
            marker(&mut s, set, bounded_point(f.to_pixel(*pt)));
        }
    }
    if let Some(h) = scene.highlight.filter(|h| h[0].is_finite() && h[1].is_finite()) {
        s.stroke(colour::FOCUS);
        s.line_width(2.0);
        s.ops.push(DrawOp::StrokeCircle { centre: bounded_point(f.to_pixel(h)), radius: 11.0 });
    }
    s.restore();
    let var = if scene.discrete { "z" } else { "s" };
    axis_titles(&mut s, &f, &format!("Re {var}"), &format!("Im {var}"));
    pole_map_legend(&mut s, scene, rect);
    let hidden = scene.layers().iter().flat_map(|(_, pts)| pts.iter()).filter(|q| !(q[0].is_finite() && q[1].is_finite())).count();
    if hidden > 0 {
        s.fill(colour::LIMIT);
        s.text(&format!("{hidden} non-finite pole(s) not shown"), p.x + 6.0, p.bottom() - 6.0, Align::Left, Baseline::Bottom);
    }
    s.ops
}

// ---------------------------------------------------------------------------------------------
// Time plots.

/// Dash patterns by slot: solid, dashed, dotted, dash-dot.
const DASHES: [&[f64]; 4] = [&[], &[7.0, 3.5], &[2.0, 3.0], &[9.0, 3.0, 2.0, 3.0]];

/// Colour and dash of series `i`: its own slots, or by position (solid for the first
/// colour cycle, then dashed, dotted…).
fn series_style(scene: &TimePlotScene, i: usize) -> (&'static str, &'static [f64]) {
    let ser = scene.series.get(i);
    let c = ser.and_then(|s| s.colour).unwrap_or(i) % colour::SERIES.len();
    let d = ser.and_then(|s| s.dash).unwrap_or(i / colour::SERIES.len()) % DASHES.len();
    (colour::SERIES[c], DASHES[d])
}

/// A blank plot area with a centred message (no data to show).
pub fn message(text: &str, rect: Rect, measure: &dyn TextMeasure) -> Vec<DrawOp> {
    let mut s = DisplayList::new(rect, measure);
    let p = rect.inset(crate::plot::Margins::STANDARD);
    s.stroke(colour::PLOT_EDGE);
    s.line_width(1.0);
    s.ops.push(DrawOp::StrokeRect(snapped_rect(p)));
    s.font(TITLE_FONT);
    s.fill(colour::MUTED_TEXT);
    s.text(text, p.x + p.width / 2.0, p.y + p.height / 2.0, Align::Center, Baseline::Middle);
    s.ops
}

/// `(t, y)` samples as an SVG-style path in pixels: a non-finite sample breaks the line, and
/// each finite run is simplified to what its pixels show ([`Simplifier`]).
/// The path through `samples` (gaps at non-finite values); with `hold`, a staircase: each
/// value held until the next sample time (zero-order hold).
fn polyline_path(samples: impl Iterator<Item = (f64, f64)>, f: &Frame, hold: bool) -> String {
    let mut d = String::new();
    let mut run: Option<Simplifier> = None;
    let flush = |run: &mut Option<Simplifier>, d: &mut String| {
        if let Some(s) = run.take() {
            for (k, q) in s.finish().iter().enumerate() {
                push_point(d, if k == 0 { 'M' } else { 'L' }, *q);
            }
        }
    };
    let mut held: Option<f64> = None;
    for (t, y) in samples {
        if t.is_finite() && y.is_finite() {
            let line = run.get_or_insert_with(|| Simplifier::new(SIMPLIFY_TOLERANCE_PX));
            if let Some(previous) = held.filter(|_| hold) {
                line.push(bounded_point(f.to_pixel([t, previous])));
            }
            line.push(bounded_point(f.to_pixel([t, y])));
            held = Some(y);
        } else {
            flush(&mut run, &mut d);
            held = None;
        }
    }
    flush(&mut run, &mut d);
    d
}

/// The display list of signals versus time.
pub fn time_plot(scene: &TimePlotScene, rect: Rect, measure: &dyn TextMeasure) -> Vec<DrawOp> {
    let mut s = DisplayList::new(rect, measure);
    // Legend rows first: they set the top margin.
    let title_width = s.text_width(TITLE_FONT, &scene.y_label);
    let base = scene.frame(rect);
    let left = 8.0 + title_width + 16.0;
    let available = (base.plot.right() - left).max(LEGEND_SWATCH_PX + 40.0);
    let widths: Vec<f64> = scene.series.iter().map(|ser| measure.width(FONT, &ser.name)).collect();
    let flow = flow_legend(&widths, available);
    let rows = flow.iter().map(|(r, _)| r + 1).max().unwrap_or(1);
    let f = scene.frame_with_legend_rows(rect, rows);
    let p = f.plot;
    if let Some(b) = scene.band.as_ref().filter(|b| b.lower.is_finite() && b.upper.is_finite()) {
        let (y0, y1) = (bounded(f.y.to_pixel(b.lower.max(b.upper))), bounded(f.y.to_pixel(b.lower.min(b.upper))));
        s.clip_to(p);
        s.fill(colour::BAND_FILL);
        s.ops.push(DrawOp::FillRect(Rect { x: p.x, y: y0, width: p.width, height: (y1 - y0).max(1.0) }));
        s.restore();
    }
    grid(&mut s, &f, (f.x.ticks(X_TICK_SPACING_PX), f.y.ticks(Y_TICK_SPACING_PX)));
    s.clip_to(p);
    let events = plot_lines(&mut s, scene, &f);
    signals(&mut s, scene, &f);
    s.restore();
    labels(&mut s, scene, &f, &events);
    axis_titles(&mut s, &f, if scene.x_label.is_empty() { "t" } else { scene.x_label.as_str() }, &scene.y_label);
    // Legend: swatch (colour and dash of the line) and name, flowed into rows.
    s.font(FONT);
    for (i, ser) in scene.series.iter().enumerate() {
        let Some((row, x)) = flow.get(i).copied() else {
            continue;
        };
        let y = 18.0 + row as f64 * LEGEND_ROW_PX;
        let x = left + x;
        let (stroke, dash) = series_style(scene, i);
        s.stroke(stroke);
        s.line_width(2.0);
        s.dash(dash);
        s.line([x + 4.0, y], [x + 22.0, y]);
        s.dash(&[]);
        s.fill(colour::TEXT);
        s.text(&ser.name, x + LEGEND_SWATCH_PX - 4.0, y, Align::Left, Baseline::Middle);
    }
    if !scene.pinned.is_empty() {
        s.fill(colour::PINNED);
        s.text("faint dashed: the pinned design", p.x + 6.0, p.bottom() - 6.0, Align::Left, Baseline::Bottom);
    }
    s.ops
}

/// Panels stacked top to bottom in `rect`, each a [`time_plot`] of its own scene (its own
/// axis title, unit and limit lines) on the shared time range, in equal shares of the height.
/// One panel is [`time_plot`] itself.
pub fn stacked_time_plots(panels: &[TimePlotScene], rect: Rect, measure: &dyn TextMeasure) -> Vec<DrawOp> {
    match panels {
        [] => message("Nothing to show.", rect, measure),
        [one] => time_plot(one, rect, measure),
        _ => {
            let mut ops = vec![DrawOp::Clear { width: rect.width, height: rect.height }];
            let share = rect.height / panels.len() as f64;
            for (k, panel) in panels.iter().enumerate() {
                let sub = Rect { x: 0.0, y: 0.0, width: rect.width, height: share };
                ops.push(DrawOp::Save);
                ops.push(DrawOp::Translate { dx: rect.x, dy: rect.y + share * k as f64 });
                ops.extend(time_plot(panel, sub, measure).into_iter().filter(|op| !matches!(op, DrawOp::Clear { .. })));
                ops.push(DrawOp::Restore);
            }
            ops
        }
    }
}

/// The zero line, the event lines and the limit lines; returns the events shown.
fn plot_lines<'a>(s: &mut DisplayList, scene: &'a TimePlotScene, f: &Frame) -> Vec<&'a crate::plot::EventLine> {
    let p = f.plot;
    if f.y.range.contains(0.0) {
        s.stroke(colour::AXIS);
        s.line_width(1.0);
        let y = snap(f.y.to_pixel(0.0));
        s.line([p.x, y], [p.right(), y]);
    }
    let events: Vec<&crate::plot::EventLine> = scene.events.iter().filter(|e| e.time.is_finite() && f.x.range.contains(e.time)).collect();
    if !events.is_empty() {
        s.stroke(colour::EVENT);
        s.line_width(1.0);
        s.dash(&[2.0, 3.0]);
        let segs: Vec<([f64; 2], [f64; 2])> = events.iter().map(|e| snap(f.x.to_pixel(e.time))).map(|x| ([x, p.y], [x, p.bottom()])).collect();
        s.segments(&segs);
        s.dash(&[]);
    }
    let limits: Vec<([f64; 2], [f64; 2])> = scene.limits.iter().filter(|l| l.value.is_finite()).map(|l| bounded(f.y.to_pixel(l.value))).map(|y| ([p.x, y], [p.right(), y])).collect();
    if !limits.is_empty() {
        s.stroke(colour::LIMIT);
        s.line_width(1.25);
        s.dash(&[6.0, 4.0]);
        s.segments(&limits);
        s.dash(&[]);
    }
    events
}

/// The pinned design's signals (faint, dashed) and the current ones.
fn signals(s: &mut DisplayList, scene: &TimePlotScene, f: &Frame) {
    if !scene.pinned.is_empty() {
        s.line_width(1.25);
        s.ops.push(DrawOp::Alpha(0.6));
        s.dash(&[4.0, 3.0]);
        for ser in &scene.pinned {
            s.stroke(colour::SERIES[ser.colour.unwrap_or(0) % colour::SERIES.len()]);
            // Its own time grid, cut to the plot's time range.
            let shown = ser.t.iter().copied().zip(ser.values.iter().copied()).map(|(t, y)| if f.x.range.contains(t) { (t, y) } else { (t, f64::NAN) });
            s.path(polyline_path(shown, f, false));
        }
        s.dash(&[]);
        s.ops.push(DrawOp::Alpha(1.0));
    }
    s.line_width(1.75);
    s.ops.push(DrawOp::RoundJoin);
    for (i, ser) in scene.series.iter().enumerate() {
        let (stroke, dash) = series_style(scene, i);
        s.stroke(stroke);
        s.dash(dash);
        s.path(polyline_path(scene.t.iter().copied().zip(ser.values.iter().copied()), f, ser.hold));
    }
    s.dash(&[]);
}

/// Labels of limits, events and the band, inside the plot.
fn labels(s: &mut DisplayList, scene: &TimePlotScene, f: &Frame, events: &[&crate::plot::EventLine]) {
    let p = f.plot;
    s.font(FONT);
    for l in scene.limits.iter().filter(|l| l.value.is_finite() && !l.label.is_empty()) {
        s.fill(colour::LIMIT);
        let y = f.y.to_pixel(l.value);
        if y >= p.y && y <= p.bottom() {
            s.text(&l.label, p.right() - 6.0, y - 3.0, Align::Right, Baseline::Bottom);
        }
    }
    s.fill(colour::MUTED_TEXT);
    for (k, e) in events.iter().enumerate().filter(|(_, e)| !e.label.is_empty()) {
        // Stagger the labels of neighbouring events.
        s.text(&e.label, f.x.to_pixel(e.time) + 4.0, p.y + 4.0 + 14.0 * (k % 2) as f64, Align::Left, Baseline::Top);
    }
    if let Some(b) = scene.band.as_ref().filter(|b| !b.label.is_empty() && b.upper.is_finite()) {
        s.fill(colour::BAND_TEXT);
        let y = f.y.to_pixel(b.upper.max(b.lower));
        if y >= p.y && y <= p.bottom() {
            s.text(&b.label, p.x + 6.0, y - 3.0, Align::Left, Baseline::Bottom);
        }
    }
}

#[cfg(test)]
#[path = "tests/draw.rs"]
mod tests;
