//! Exports for the browser tests only (`--features test-exports`; the shipped page is built
//! without them): stand-alone drawing of a scene on any canvas, picking, and the whole form
//! evaluation as a plain object.

use wasm_bindgen::prelude::*;
use wasm_bindgen::JsCast;

use super::{find_canvas, js_err, paint_picture, pixel_ratio, to_js, Picture};
use crate::form::{evaluate_form, FormInput};
use crate::plot::{PoleMapScene, Rect, TimePlotScene};
use web_sys::HtmlCanvasElement;

/// serde-wasm-bindgen reads only the fields a struct declares, so
/// `deny_unknown_fields` has no effect on JS objects: check the top-level
/// keys here so that a misspelt key is an error, not silently ignored.
fn reject_unknown_keys(value: &JsValue, known: &[&str], context: &str) -> Result<(), JsValue> {
    if let Some(obj) = value.dyn_ref::<js_sys::Object>() {
        for key in js_sys::Object::keys(obj).iter() {
            let key = key.as_string().unwrap_or_default();
            if !known.contains(&key.as_str()) {
                return Err(js_err(context, format!("unknown field `{key}`, expected one of {}", known.join(", "))));
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
    let rect = css_rect(&find_canvas(canvas_id)?);
    paint_picture(canvas_id, rect, pixel_ratio(), &Picture::Poles(scene))
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
    let rect = css_rect(&find_canvas(canvas_id)?);
    paint_picture(canvas_id, rect, pixel_ratio(), &Picture::Time(scene))
}

// ---------------------------------------------------------------------------
// Design: form in, outcome out (no DOM)
// ---------------------------------------------------------------------------

/// Deserialise a [`FormInput`] from a plain JS object of strings (every field optional).
pub fn parse_form_input(value: &JsValue) -> Result<FormInput, JsValue> {
    reject_unknown_keys(value, &FormInput::FIELDS, "form")?;
    serde_wasm_bindgen::from_value(value.clone()).map_err(|e| js_err("form", e))
}

/// Evaluate a form: `{ a: "0 1\n0 0", b: "0\n1", poles: "-1, -2", … }` (strings; any
/// field may be omitted) → the [`FormOutcome`] as a plain object: `status`
/// (`"designed"`, `"invalid"`, `"infeasible"`), `errors: [{ field, message }]`,
/// `dimensions`, `sizes`, `design` (the result), `design_error`, `analysis`, `report`.
/// Missing values are `null`. Bad input comes back as field errors, never as an exception.
#[wasm_bindgen]
pub fn evaluate(form: JsValue) -> Result<JsValue, JsValue> {
    let input = parse_form_input(&form)?;
    to_js(&evaluate_form(&input), "design outcome")
}

/// The demonstrations: `[{ title, description }]`.
#[wasm_bindgen]
pub fn demo_list() -> Result<JsValue, JsValue> {
    to_js(&crate::demos::demo_list(), "demo list")
}

/// Demonstration `index` as form text (`{ a, b, …, duration }`).
#[wasm_bindgen]
pub fn demo(index: usize) -> Result<JsValue, JsValue> {
    let d = crate::demos::demo(index).ok_or_else(|| js_err("demo", format!("there is no demo {index}")))?;
    to_js(&d.form, "demo")
}

/// The canvas's CSS box (falls back to its bitmap size before layout). Reading it forces
/// a layout when the page changed since the last one: the page cycle uses cached sizes.
fn css_rect(canvas: &HtmlCanvasElement) -> Rect {
    let (w, h) = (canvas.client_width(), canvas.client_height());
    if w > 0 && h > 0 {
        Rect::sized(f64::from(w), f64::from(h))
    } else {
        Rect::sized(f64::from(canvas.width()), f64::from(canvas.height()))
    }
}
