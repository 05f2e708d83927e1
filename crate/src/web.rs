//! Browser front end (wasm32 only): panic hook, version, and thin canvas
//! painters that draw what [`crate::plot`] lays out.
//!
//! Every exported function returns `Result<_, JsValue>` with a readable
//! message instead of panicking; should a panic happen anyway, the hook
//! installed at start-up writes it into the page element
//! [`ERROR_ELEMENT_ID`] and to `console.error`.
//!
//! Inputs are plain JS objects deserialised with serde-wasm-bindgen into the
//! scene structs of [`crate::plot`] ([`PoleMapScene`], [`TimePlotScene`]);
//! every field may be omitted; unknown top-level keys are rejected.

use std::sync::Once;

use wasm_bindgen::prelude::*;
use wasm_bindgen::JsCast;
use web_sys::{CanvasRenderingContext2d, HtmlCanvasElement};

use crate::plot::{common_ticks, Frame, Rect, Ticks};
pub use crate::plot::{Band, LimitLine, PoleMapScene, PolePick, PoleSet, Series, TimePlotScene};

/// Id of the page element that receives internal-error messages.
pub const ERROR_ELEMENT_ID: &str = "pw-error";

/// Palette (kept in step with site/style.css).
mod colour {
    pub const BACKGROUND: &str = "#ffffff";
    pub const PLOT_EDGE: &str = "#9aa5ae";
    pub const GRID: &str = "#e4e8eb";
    pub const AXIS: &str = "#56636e";
    pub const TEXT: &str = "#2c3a45";
    pub const MUTED_TEXT: &str = "#5f6d78";
    pub const STABLE_FILL: &str = "rgba(17, 110, 106, 0.09)";
    pub const STABLE_EDGE: &str = "rgba(17, 110, 106, 0.55)";
    pub const OPEN_LOOP: &str = "#7b8794";
    pub const CLOSED_LOOP: &str = "#0e5f5c";
    pub const NOT_ASSIGNED: &str = "#c07a0c";
    pub const LIMIT: &str = "#9c3d2e";
    pub const BAND_FILL: &str = "rgba(192, 122, 12, 0.13)";
    pub const BAND_TEXT: &str = "#8a5a0c";
    /// Signal colours, in order.
    pub const SERIES: [&str; 6] = [
        "#0e5f5c", "#c07a0c", "#3f4f86", "#8b4a6e", "#5f7a2a", "#56636e",
    ];
}

const FONT: &str = "12px system-ui, -apple-system, \"Segoe UI\", Roboto, sans-serif";
const TITLE_FONT: &str = "600 12px system-ui, -apple-system, \"Segoe UI\", Roboto, sans-serif";
const X_TICK_SPACING_PX: f64 = 70.0;
const Y_TICK_SPACING_PX: f64 = 42.0;

/// Runs once when the module is instantiated (`initSync` calls it).
#[wasm_bindgen(start)]
fn on_instantiate() {
    install_panic_hook();
}

/// Install the panic hook (idempotent). Called automatically at start-up.
#[wasm_bindgen]
pub fn install_panic_hook() {
    static ONCE: Once = Once::new();
    ONCE.call_once(|| {
        std::panic::set_hook(Box::new(|info| {
            report_internal_error(&format!(
                "Polewright stopped because of an internal error: {info}. \
                 No result on this page can be trusted now; reload the page. \
                 Please report this message."
            ));
        }));
    });
}

/// Show `message` in the error element (as text, never HTML), unhide it, and
/// log it with `console.error`. Never fails: a missing element is skipped.
#[wasm_bindgen]
pub fn report_internal_error(message: &str) {
    web_sys::console::error_1(&JsValue::from_str(message));
    let element = web_sys::window()
        .and_then(|w| w.document())
        .and_then(|d| d.get_element_by_id(ERROR_ELEMENT_ID));
    if let Some(el) = element {
        el.set_text_content(Some(message));
        // Ignoring failure: the console already has the message.
        let _ = el.remove_attribute("hidden");
    }
}

/// Package version, e.g. `0.1.0`.
#[wasm_bindgen]
pub fn version() -> String {
    env!("CARGO_PKG_VERSION").to_string()
}

fn js_err(context: &str, detail: impl std::fmt::Display) -> JsValue {
    JsValue::from_str(&format!("{context}: {detail}"))
}

/// serde-wasm-bindgen reads only the fields a struct declares, so
/// `deny_unknown_fields` has no effect on JS objects: check the top-level
/// keys here so that a misspelt key is an error, not silently ignored.
fn reject_unknown_keys(value: &JsValue, known: &[&str], context: &str) -> Result<(), JsValue> {
    if let Some(obj) = value.dyn_ref::<js_sys::Object>() {
        for key in js_sys::Object::keys(obj).iter() {
            let key = key.as_string().unwrap_or_default();
            if !known.contains(&key.as_str()) {
                return Err(js_err(
                    context,
                    format!(
                        "unknown field `{key}`, expected one of {}",
                        known.join(", ")
                    ),
                ));
            }
        }
    }
    Ok(())
}

/// Deserialise a [`PoleMapScene`] from a plain JS object.
pub fn parse_pole_map_scene(value: &JsValue) -> Result<PoleMapScene, JsValue> {
    reject_unknown_keys(value, PoleMapScene::FIELDS, "pole map scene")?;
    serde_wasm_bindgen::from_value(value.clone()).map_err(|e| js_err("pole map scene", e))
}

/// Deserialise a [`TimePlotScene`] from a plain JS object.
pub fn parse_time_plot_scene(value: &JsValue) -> Result<TimePlotScene, JsValue> {
    reject_unknown_keys(value, TimePlotScene::FIELDS, "time plot scene")?;
    serde_wasm_bindgen::from_value(value.clone()).map_err(|e| js_err("time plot scene", e))
}

/// Draw a pole map into the canvas with id `canvas_id`.
///
/// `scene`: `{ open_loop: [[re, im], …], closed_loop: […], not_assigned: […], discrete: bool }`.
#[wasm_bindgen]
pub fn draw_pole_map(canvas_id: &str, scene: JsValue) -> Result<(), JsValue> {
    let scene = parse_pole_map_scene(&scene)?;
    let surface = Surface::prepare(canvas_id)?;
    paint_pole_map(&surface, &scene)
}

/// The pole-map marker under a pointer at CSS pixel offset (`x`, `y`) inside
/// the canvas, as `{ set: "closed_loop" | "open_loop" | "not_assigned", index, re, im }`,
/// or `null`. Uses the same layout as [`draw_pole_map`].
#[wasm_bindgen]
pub fn pick_pole(canvas_id: &str, scene: JsValue, x: f64, y: f64) -> Result<JsValue, JsValue> {
    let scene = parse_pole_map_scene(&scene)?;
    let canvas = find_canvas(canvas_id)?;
    let pick = scene.pick(css_rect(&canvas), [x, y]);
    match pick {
        Some(p) => serde_wasm_bindgen::to_value(&p).map_err(|e| js_err("pick result", e)),
        None => Ok(JsValue::NULL),
    }
}

/// Draw signals versus time into the canvas with id `canvas_id`.
///
/// `scene`: `{ t: [...], series: [{ name, values: [...] }], limits: [{ value, label }],
/// band: { lower, upper, label } | null, x_label, y_label }`.
#[wasm_bindgen]
pub fn draw_time_plot(canvas_id: &str, scene: JsValue) -> Result<(), JsValue> {
    let scene = parse_time_plot_scene(&scene)?;
    let surface = Surface::prepare(canvas_id)?;
    paint_time_plot(&surface, &scene)
}

// ---------------------------------------------------------------------------
// Canvas plumbing
// ---------------------------------------------------------------------------

fn find_canvas(canvas_id: &str) -> Result<HtmlCanvasElement, JsValue> {
    let document = web_sys::window()
        .and_then(|w| w.document())
        .ok_or_else(|| JsValue::from_str("no document"))?;
    let element = document
        .get_element_by_id(canvas_id)
        .ok_or_else(|| js_err("no element with id", canvas_id))?;
    element
        .dyn_into::<HtmlCanvasElement>()
        .map_err(|_| js_err("not a canvas", canvas_id))
}

/// The canvas's CSS box (falls back to its bitmap size before layout).
fn css_rect(canvas: &HtmlCanvasElement) -> Rect {
    let (w, h) = (canvas.client_width(), canvas.client_height());
    if w > 0 && h > 0 {
        Rect::sized(f64::from(w), f64::from(h))
    } else {
        Rect::sized(f64::from(canvas.width()), f64::from(canvas.height()))
    }
}

/// A canvas sized for the device pixel ratio, drawing in CSS pixels.
struct Surface {
    ctx: CanvasRenderingContext2d,
    rect: Rect,
}

impl Surface {
    fn prepare(canvas_id: &str) -> Result<Surface, JsValue> {
        let canvas = find_canvas(canvas_id)?;
        let rect = css_rect(&canvas);
        let dpr = web_sys::window()
            .map(|w| w.device_pixel_ratio())
            .filter(|d| d.is_finite() && *d > 0.0)
            .unwrap_or(1.0)
            .clamp(1.0, 4.0);
        canvas.set_width((rect.width * dpr).round().clamp(1.0, 16384.0) as u32);
        canvas.set_height((rect.height * dpr).round().clamp(1.0, 16384.0) as u32);
        let ctx = canvas
            .get_context("2d")?
            .ok_or_else(|| js_err("no 2d context", canvas_id))?
            .dyn_into::<CanvasRenderingContext2d>()
            .map_err(|_| js_err("no 2d context", canvas_id))?;
        ctx.set_transform(dpr, 0.0, 0.0, dpr, 0.0, 0.0)?;
        ctx.set_fill_style_str(colour::BACKGROUND);
        ctx.fill_rect(0.0, 0.0, rect.width, rect.height);
        Ok(Surface { ctx, rect })
    }

    fn line(&self, a: [f64; 2], b: [f64; 2]) {
        self.ctx.begin_path();
        self.ctx.move_to(a[0], a[1]);
        self.ctx.line_to(b[0], b[1]);
        self.ctx.stroke();
    }

    fn dash(&self, pattern: &[f64]) -> Result<(), JsValue> {
        let arr = js_sys::Array::new();
        for v in pattern {
            arr.push(&JsValue::from_f64(*v));
        }
        self.ctx.set_line_dash(&arr)
    }

    fn text(&self, s: &str, x: f64, y: f64, align: &str, baseline: &str) -> Result<(), JsValue> {
        self.ctx.set_text_align(align);
        self.ctx.set_text_baseline(baseline);
        self.ctx.fill_text(s, x, y)
    }

    fn text_width(&self, s: &str) -> f64 {
        self.ctx
            .measure_text(s)
            .map(|m| m.width())
            .unwrap_or(7.0 * s.chars().count() as f64)
    }

    fn clip_to(&self, r: Rect) {
        self.ctx.save();
        self.ctx.begin_path();
        self.ctx.rect(r.x, r.y, r.width, r.height);
        self.ctx.clip();
    }
}

/// Typographic minus for labels.
fn pretty(label: &str) -> String {
    label.replace('-', "\u{2212}")
}

/// Ticks chosen independently for each axis.
fn own_ticks(f: &Frame) -> (Ticks, Ticks) {
    (f.x.ticks(X_TICK_SPACING_PX), f.y.ticks(Y_TICK_SPACING_PX))
}

/// Grid lines, plot edge and tick labels.
fn paint_grid(s: &Surface, f: &Frame, (xt, yt): (Ticks, Ticks)) -> Result<(), JsValue> {
    let p = f.plot;
    s.ctx.set_stroke_style_str(colour::GRID);
    s.ctx.set_line_width(1.0);
    for t in &xt.ticks {
        let x = snap(f.x.to_pixel(t.value));
        s.line([x, p.y], [x, p.bottom()]);
    }
    for t in &yt.ticks {
        let y = snap(f.y.to_pixel(t.value));
        s.line([p.x, y], [p.right(), y]);
    }
    s.ctx.set_stroke_style_str(colour::PLOT_EDGE);
    s.ctx
        .stroke_rect(snap(p.x), snap(p.y), p.width.round(), p.height.round());

    s.ctx.set_font(FONT);
    s.ctx.set_fill_style_str(colour::MUTED_TEXT);
    for t in &xt.ticks {
        s.text(
            &pretty(&t.label),
            f.x.to_pixel(t.value),
            p.bottom() + 5.0,
            "center",
            "top",
        )?;
    }
    for t in &yt.ticks {
        s.text(
            &pretty(&t.label),
            p.x - 6.0,
            f.y.to_pixel(t.value),
            "right",
            "middle",
        )?;
    }
    Ok(())
}

/// Align a 1-px line to the pixel grid.
fn snap(v: f64) -> f64 {
    v.round() + 0.5
}

fn axis_titles(s: &Surface, f: &Frame, x_title: &str, y_title: &str) -> Result<(), JsValue> {
    s.ctx.set_font(TITLE_FONT);
    s.ctx.set_fill_style_str(colour::TEXT);
    let p = f.plot;
    s.text(
        x_title,
        p.x + p.width / 2.0,
        p.bottom() + 22.0,
        "center",
        "top",
    )?;
    s.text(y_title, 8.0, p.y - 8.0, "left", "bottom")
}

/// Paints a legend swatch centred on a point.
type Swatch<'a> = Box<dyn Fn(&Surface, [f64; 2]) + 'a>;

/// Legend entries (label, swatch), right-aligned in the top margin.
fn legend(s: &Surface, f: &Frame, entries: &[(&str, Swatch)]) -> Result<(), JsValue> {
    s.ctx.set_font(FONT);
    let y = f.plot.y - 12.0;
    let mut x = f.plot.right();
    for (label, swatch) in entries.iter().rev() {
        let w = s.text_width(label);
        s.ctx.set_fill_style_str(colour::TEXT);
        s.text(label, x, y, "right", "middle")?;
        x -= w + 14.0;
        swatch(s, [x, y]);
        x -= 18.0;
    }
    Ok(())
}

fn cross(s: &Surface, c: [f64; 2], half: f64, width: f64, stroke: &str) {
    s.ctx.set_stroke_style_str(stroke);
    s.ctx.set_line_width(width);
    s.ctx.set_line_cap("round");
    s.line([c[0] - half, c[1] - half], [c[0] + half, c[1] + half]);
    s.line([c[0] - half, c[1] + half], [c[0] + half, c[1] - half]);
    s.ctx.set_line_cap("butt");
}

struct MarkerStyle {
    half: f64,
    width: f64,
    stroke: &'static str,
}

fn marker_style(set: PoleSet) -> MarkerStyle {
    match set {
        PoleSet::OpenLoop => MarkerStyle {
            half: 4.5,
            width: 1.5,
            stroke: colour::OPEN_LOOP,
        },
        PoleSet::NotAssigned => MarkerStyle {
            half: 6.0,
            width: 2.5,
            stroke: colour::NOT_ASSIGNED,
        },
        PoleSet::ClosedLoop => MarkerStyle {
            half: 5.5,
            width: 2.25,
            stroke: colour::CLOSED_LOOP,
        },
    }
}

fn set_label(set: PoleSet) -> &'static str {
    match set {
        PoleSet::OpenLoop => "open loop",
        PoleSet::NotAssigned => "not assignable",
        PoleSet::ClosedLoop => "closed loop",
    }
}

fn paint_pole_map(s: &Surface, scene: &PoleMapScene) -> Result<(), JsValue> {
    let f = scene.frame(s.rect);
    let p = f.plot;
    let origin = f.to_pixel([0.0, 0.0]);

    // Stable region first, under the grid.
    s.clip_to(p);
    s.ctx.set_fill_style_str(colour::STABLE_FILL);
    if scene.discrete {
        let r = f.x.scale().abs();
        s.ctx.begin_path();
        s.ctx
            .arc(origin[0], origin[1], r, 0.0, std::f64::consts::TAU)?;
        s.ctx.fill();
    } else {
        let right = origin[0].clamp(p.x, p.right());
        s.ctx.fill_rect(p.x, p.y, right - p.x, p.height);
    }
    s.ctx.restore();

    // Equal scale: one step on both axes keeps the grid square.
    paint_grid(
        s,
        &f,
        common_ticks(&f, X_TICK_SPACING_PX, Y_TICK_SPACING_PX),
    )?;

    s.clip_to(p);
    // Real and imaginary axes.
    s.ctx.set_stroke_style_str(colour::AXIS);
    s.ctx.set_line_width(1.0);
    s.line([p.x, snap(origin[1])], [p.right(), snap(origin[1])]);
    s.line([snap(origin[0]), p.y], [snap(origin[0]), p.bottom()]);
    if scene.discrete {
        s.ctx.set_stroke_style_str(colour::STABLE_EDGE);
        s.dash(&[5.0, 4.0])?;
        s.ctx.begin_path();
        s.ctx.arc(
            origin[0],
            origin[1],
            f.x.scale().abs(),
            0.0,
            std::f64::consts::TAU,
        )?;
        s.ctx.stroke();
        s.dash(&[])?;
    }
    for (set, points) in scene.layers() {
        let st = marker_style(set);
        for pt in points
            .iter()
            .filter(|q| q[0].is_finite() && q[1].is_finite())
        {
            cross(s, f.to_pixel(*pt), st.half, st.width, st.stroke);
        }
    }
    s.ctx.restore();

    let var = if scene.discrete { "z" } else { "s" };
    axis_titles(s, &f, &format!("Re {var}"), &format!("Im {var}"))?;

    let region = if scene.discrete {
        "stable: |z| < 1"
    } else {
        "stable: Re s < 0"
    };
    let fill_swatch = |s: &Surface, c: [f64; 2]| {
        s.ctx.set_fill_style_str(colour::STABLE_FILL);
        s.ctx.fill_rect(c[0] - 6.0, c[1] - 6.0, 12.0, 12.0);
        s.ctx.set_stroke_style_str(colour::STABLE_EDGE);
        s.ctx.set_line_width(1.0);
        s.ctx.stroke_rect(c[0] - 6.0, c[1] - 6.0, 12.0, 12.0);
    };
    let mut entries: Vec<(&str, Swatch)> = vec![(region, Box::new(fill_swatch))];
    for (set, points) in scene.layers() {
        if !points.is_empty() {
            let st = marker_style(set);
            entries.push((
                set_label(set),
                Box::new(move |s: &Surface, c: [f64; 2]| cross(s, c, st.half, st.width, st.stroke)),
            ));
        }
    }
    legend(s, &f, &entries)?;

    let hidden = scene
        .layers()
        .iter()
        .flat_map(|(_, pts)| pts.iter())
        .filter(|q| !(q[0].is_finite() && q[1].is_finite()))
        .count();
    if hidden > 0 {
        s.ctx.set_fill_style_str(colour::LIMIT);
        s.text(
            &format!("{hidden} non-finite pole(s) not shown"),
            p.x + 6.0,
            p.bottom() - 6.0,
            "left",
            "bottom",
        )?;
    }
    Ok(())
}

fn paint_time_plot(s: &Surface, scene: &TimePlotScene) -> Result<(), JsValue> {
    let f = scene.frame(s.rect);
    let p = f.plot;

    if let Some(b) = &scene.band {
        if b.lower.is_finite() && b.upper.is_finite() {
            let (y0, y1) = (
                f.y.to_pixel(b.lower.max(b.upper)),
                f.y.to_pixel(b.lower.min(b.upper)),
            );
            s.clip_to(p);
            s.ctx.set_fill_style_str(colour::BAND_FILL);
            s.ctx.fill_rect(p.x, y0, p.width, (y1 - y0).max(1.0));
            s.ctx.restore();
        }
    }

    paint_grid(s, &f, own_ticks(&f))?;

    s.clip_to(p);
    if f.y.range.contains(0.0) {
        s.ctx.set_stroke_style_str(colour::AXIS);
        s.ctx.set_line_width(1.0);
        let y = snap(f.y.to_pixel(0.0));
        s.line([p.x, y], [p.right(), y]);
    }
    s.ctx.set_stroke_style_str(colour::LIMIT);
    s.ctx.set_line_width(1.25);
    s.dash(&[6.0, 4.0])?;
    for l in scene.limits.iter().filter(|l| l.value.is_finite()) {
        let y = f.y.to_pixel(l.value);
        s.line([p.x, y], [p.right(), y]);
    }
    s.dash(&[])?;

    s.ctx.set_line_width(1.75);
    s.ctx.set_line_join("round");
    for (i, _) in scene.series.iter().enumerate() {
        s.ctx
            .set_stroke_style_str(colour::SERIES[i % colour::SERIES.len()]);
        s.ctx.begin_path();
        let mut pen_down = false;
        for pt in scene.points(i) {
            if pt[0].is_finite() && pt[1].is_finite() {
                let q = f.to_pixel(pt);
                // Keep coordinates bounded for the canvas; the clip hides the rest.
                let q = [q[0].clamp(-1e6, 1e6), q[1].clamp(-1e6, 1e6)];
                if pen_down {
                    s.ctx.line_to(q[0], q[1]);
                } else {
                    s.ctx.move_to(q[0], q[1]);
                    pen_down = true;
                }
            } else {
                pen_down = false;
            }
        }
        s.ctx.stroke();
    }
    s.ctx.restore();

    // Labels for limits and band, inside the plot at the right edge.
    s.ctx.set_font(FONT);
    for l in scene
        .limits
        .iter()
        .filter(|l| l.value.is_finite() && !l.label.is_empty())
    {
        s.ctx.set_fill_style_str(colour::LIMIT);
        let y = f.y.to_pixel(l.value);
        if y >= p.y && y <= p.bottom() {
            s.text(&l.label, p.right() - 6.0, y - 3.0, "right", "bottom")?;
        }
    }
    if let Some(b) = scene
        .band
        .as_ref()
        .filter(|b| !b.label.is_empty() && b.upper.is_finite())
    {
        s.ctx.set_fill_style_str(colour::BAND_TEXT);
        let y = f.y.to_pixel(b.upper.max(b.lower));
        if y >= p.y && y <= p.bottom() {
            s.text(&b.label, p.x + 6.0, y - 3.0, "left", "bottom")?;
        }
    }

    let x_title = if scene.x_label.is_empty() {
        "t"
    } else {
        scene.x_label.as_str()
    };
    axis_titles(s, &f, x_title, &scene.y_label)?;

    let entries: Vec<(&str, Swatch)> = scene
        .series
        .iter()
        .enumerate()
        .map(|(i, ser)| {
            let c = colour::SERIES[i % colour::SERIES.len()];
            let swatch: Swatch = Box::new(move |s: &Surface, at: [f64; 2]| {
                s.ctx.set_stroke_style_str(c);
                s.ctx.set_line_width(2.0);
                s.line([at[0] - 8.0, at[1]], [at[0] + 6.0, at[1]]);
            });
            (ser.name.as_str(), swatch)
        })
        .collect();
    legend(s, &f, &entries)
}
