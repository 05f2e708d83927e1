//! Browser front end (wasm32 only): panic hook, version, the design page
//! (form → [`crate::form::evaluate_form`] → result DOM and canvases, built here
//! with `createElement`/`textContent` only), and thin canvas painters that draw
//! what [`crate::plot`] lays out.
//!
//! # The page cycle
//! [`update_page`] reads the form controls (`pw-<key>` for each key of
//! [`FormInput::FIELDS`]), evaluates them, writes each field's size
//! (`pw-<key>-size`) and error (`pw-<key>-error`; the control gets
//! `aria-invalid`), never touching the text the user typed, then fills the
//! results (gain, poles, controllability, warnings, response tables) and paints
//! the pole map and the two response plots. On invalid input the previous
//! results stay and are marked stale. It measures its own duration with
//! `performance.now()` and leaves it in `data-cycle-ms` of the status line.
//!
//! Every exported function returns `Result<_, JsValue>` with a readable
//! message instead of panicking; should a panic happen anyway, the hook
//! installed at start-up writes it into the page element
//! [`ERROR_ELEMENT_ID`] and to `console.error`.
//!
//! Inputs are plain JS objects deserialised with serde-wasm-bindgen into the
//! scene structs of [`crate::plot`] ([`PoleMapScene`], [`TimePlotScene`]);
//! every field may be omitted; unknown top-level keys are rejected.

use std::cell::RefCell;
use std::sync::Once;

use num_complex::Complex64;
use serde::Serialize;
use wasm_bindgen::prelude::*;
use wasm_bindgen::JsCast;
use web_sys::{CanvasRenderingContext2d, Document, Element, HtmlCanvasElement, HtmlInputElement, HtmlSelectElement, HtmlTextAreaElement};

use crate::design::DesignResult;
use crate::form::{self, evaluate_form, FieldError, FormInput, FormOutcome, FormStatus, OpenLoopAnalysis, Report, StructureReport};
use crate::plot::{common_ticks, flow_legend, Frame, Rect, Ticks, LEGEND_ROW_PX, LEGEND_SWATCH_PX};
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
    /// Ring around the pole chosen by keyboard.
    pub const FOCUS: &str = "#2c3a45";
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
// Design: form in, outcome out (no DOM)
// ---------------------------------------------------------------------------

fn to_js<T: Serialize>(value: &T, context: &str) -> Result<JsValue, JsValue> {
    value
        .serialize(&serde_wasm_bindgen::Serializer::json_compatible())
        .map_err(|e| js_err(context, e))
}

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

// ---------------------------------------------------------------------------
// The page
// ---------------------------------------------------------------------------

/// Ids of the page's output elements.
mod ids {
    pub const STATUS: &str = "pw-status";
    pub const DEMO_SELECT: &str = "pw-demo";
    pub const DEMO_DESCRIPTION: &str = "pw-demo-description";
    pub const RESULTS_NOTE: &str = "pw-results-note";
    pub const GAIN_TABLE: &str = "pw-gain-table";
    pub const GAIN_TEXT: &str = "pw-gain-text";
    pub const POLE_TABLE: &str = "pw-pole-table";
    pub const OPEN_LOOP: &str = "pw-open-loop";
    pub const CONTROLLABILITY: &str = "pw-controllability";
    pub const OBSERVABILITY: &str = "pw-observability";
    pub const ROBUSTNESS: &str = "pw-robustness";
    pub const WARNINGS: &str = "pw-warnings";
    pub const STATE_TABLE: &str = "pw-state-table";
    pub const INPUT_TABLE: &str = "pw-input-table";
    pub const SIMULATION: &str = "pw-simulation";
    pub const POLE_MAP: &str = "pw-pole-map";
    pub const POLE_PICK: &str = "pw-pole-pick";
    pub const STATE_PLOT: &str = "pw-state-plot";
    pub const INPUT_PLOT: &str = "pw-input-plot";
    /// Sections marked stale when the input is invalid.
    pub const OUTPUT_SECTIONS: [&str; 3] = ["pw-results", "pw-pole-section", "pw-response-section"];
}

const POLE_HINT: &str = "Point at a pole, or focus the map (Tab) and use the arrow keys, to read a pole's value.";

#[derive(Clone, Copy, PartialEq, Eq)]
enum Shown {
    Nothing,
    Design,
    Infeasible,
}

struct PageState {
    shown: Shown,
    design: Option<DesignResult>,
    analysis: Option<OpenLoopAnalysis>,
    pole_scene: PoleMapScene,
    /// Position in `pole_scene.markers()` chosen by keyboard.
    focus: Option<usize>,
    normalised: bool,
    gain_text: String,
}

thread_local! {
    static PAGE: RefCell<PageState> = RefCell::new(PageState {
        shown: Shown::Nothing,
        design: None,
        analysis: None,
        pole_scene: PoleMapScene::default(),
        focus: None,
        normalised: true,
        gain_text: String::new(),
    });
}

/// Runs `f` with the page state (calls from JS never nest, so the state is free).
fn with_page<T>(f: impl FnOnce(&mut PageState) -> Result<T, JsValue>) -> Result<T, JsValue> {
    PAGE.with(|cell| match cell.try_borrow_mut() {
        Ok(mut state) => f(&mut state),
        Err(_) => Err(JsValue::from_str("page state is busy (nested call)")),
    })
}

fn document() -> Result<Document, JsValue> {
    web_sys::window()
        .and_then(|w| w.document())
        .ok_or_else(|| JsValue::from_str("no document"))
}

fn by_id(doc: &Document, id: &str) -> Result<Element, JsValue> {
    doc.get_element_by_id(id).ok_or_else(|| js_err("no element with id", id))
}

fn now_ms() -> f64 {
    web_sys::window().and_then(|w| w.performance()).map_or(0.0, |p| p.now())
}

fn set_text(doc: &Document, id: &str, text: &str) -> Result<(), JsValue> {
    by_id(doc, id)?.set_text_content(Some(text));
    Ok(())
}

fn set_hidden(el: &Element, hidden: bool) -> Result<(), JsValue> {
    el.toggle_attribute_with_force("hidden", hidden).map(|_| ())
}

/// A new element with optional text (always as text, never markup).
fn make(doc: &Document, tag: &str, text: Option<&str>) -> Result<Element, JsValue> {
    let el = doc.create_element(tag)?;
    if let Some(t) = text {
        el.set_text_content(Some(t));
    }
    Ok(el)
}

fn make_class(doc: &Document, tag: &str, text: Option<&str>, class: &str) -> Result<Element, JsValue> {
    let el = make(doc, tag, text)?;
    el.set_class_name(class);
    Ok(el)
}

/// A table: optional caption, a header row, and rows whose first cell is a row header
/// when `row_headers` is set. Cells from column `numeric_from` on are numeric (right-aligned).
fn table(doc: &Document, caption: Option<&str>, head: &[String], rows: &[Vec<String>], row_headers: bool, numeric_from: usize) -> Result<Element, JsValue> {
    // Columns empty in every row (e.g. "note" when nothing needs a note) are left out.
    let keep: Vec<bool> = (0..head.len()).map(|j| j == 0 || rows.iter().any(|r| r.get(j).is_some_and(|c| !c.is_empty()))).collect();
    let kept = |j: usize| keep.get(j).copied().unwrap_or(true);
    let t = make(doc, "table", None)?;
    if let Some(c) = caption {
        let cap = make(doc, "caption", Some(c))?;
        t.append_child(&cap)?;
    }
    let thead = make(doc, "thead", None)?;
    let tr = make(doc, "tr", None)?;
    for h in head.iter().enumerate().filter(|(j, _)| kept(*j)).map(|(_, h)| h) {
        let th = make(doc, "th", Some(h))?;
        th.set_attribute("scope", "col")?;
        tr.append_child(&th)?;
    }
    thead.append_child(&tr)?;
    t.append_child(&thead)?;
    let tbody = make(doc, "tbody", None)?;
    for row in rows {
        let tr = make(doc, "tr", None)?;
        for (j, cell) in row.iter().enumerate().filter(|(j, _)| kept(*j)) {
            let el = if row_headers && j == 0 {
                let th = make(doc, "th", Some(cell))?;
                th.set_attribute("scope", "row")?;
                th
            } else {
                make(doc, "td", Some(cell))?
            };
            if j >= numeric_from && !(row_headers && j == 0) {
                el.set_class_name("num");
            }
            tr.append_child(&el)?;
        }
        tbody.append_child(&tr)?;
    }
    t.append_child(&tbody)?;
    Ok(t)
}

/// Replaces the children of element `id` with `children`.
fn fill(doc: &Document, id: &str, children: &[Element]) -> Result<(), JsValue> {
    let host = by_id(doc, id)?;
    host.set_text_content(None);
    for c in children {
        host.append_child(c)?;
    }
    Ok(())
}

/// The text of control `pw-<key>` (a textarea or an input).
fn control_value(doc: &Document, key: &str) -> Result<String, JsValue> {
    let el = by_id(doc, &format!("pw-{key}"))?;
    if let Some(t) = el.dyn_ref::<HtmlTextAreaElement>() {
        Ok(t.value())
    } else if let Some(i) = el.dyn_ref::<HtmlInputElement>() {
        Ok(i.value())
    } else {
        Err(js_err("not a text control", key))
    }
}

fn set_control_value(doc: &Document, key: &str, text: &str) -> Result<(), JsValue> {
    let el = by_id(doc, &format!("pw-{key}"))?;
    if let Some(t) = el.dyn_ref::<HtmlTextAreaElement>() {
        t.set_value(text);
        fit_rows(t);
        Ok(())
    } else if let Some(i) = el.dyn_ref::<HtmlInputElement>() {
        i.set_value(text);
        Ok(())
    } else {
        Err(js_err("not a text control", key))
    }
}

/// Grows a text area with its content (2 to 12 rows); never changes the text.
fn fit_rows(t: &HtmlTextAreaElement) {
    let lines = t.value().lines().count().clamp(2, 12) as u32;
    if t.rows() != lines {
        t.set_rows(lines);
    }
}

fn read_form(doc: &Document) -> Result<FormInput, JsValue> {
    let mut form = FormInput::default();
    for key in FormInput::FIELDS {
        form.set(key, control_value(doc, key)?);
    }
    Ok(form)
}

/// Fill the demo selector and load the first demo (on first open).
#[wasm_bindgen]
pub fn init_page() -> Result<(), JsValue> {
    let doc = document()?;
    let select = by_id(&doc, ids::DEMO_SELECT)?;
    select.set_text_content(None);
    for (i, d) in crate::demos::demo_list().iter().enumerate() {
        let option = make(&doc, "option", Some(d.title))?;
        option.set_attribute("value", &i.to_string())?;
        select.append_child(&option)?;
    }
    load_demo(0)
}

/// Show the description of demo `index` beside the selector.
#[wasm_bindgen]
pub fn show_demo_description(index: usize) -> Result<(), JsValue> {
    let doc = document()?;
    let d = crate::demos::demo(index).ok_or_else(|| js_err("demo", format!("there is no demo {index}")))?;
    set_text(&doc, ids::DEMO_DESCRIPTION, d.description)
}

/// Write demo `index` into the form controls (the caller then runs [`update_page`]).
#[wasm_bindgen]
pub fn load_demo(index: usize) -> Result<(), JsValue> {
    let doc = document()?;
    let d = crate::demos::demo(index).ok_or_else(|| js_err("demo", format!("there is no demo {index}")))?;
    for key in FormInput::FIELDS {
        set_control_value(&doc, key, d.form.get(key).unwrap_or(""))?;
    }
    if let Some(sel) = doc.get_element_by_id(ids::DEMO_SELECT).and_then(|e| e.dyn_into::<HtmlSelectElement>().ok()) {
        sel.set_value(&index.to_string());
    }
    set_text(&doc, ids::DEMO_DESCRIPTION, d.description)
}

/// Per-field size and error; the typed text is left exactly as it is.
fn show_field_feedback(doc: &Document, outcome: &FormOutcome) -> Result<(), JsValue> {
    let dims = &outcome.dimensions;
    let sizes = &outcome.sizes;
    for key in FormInput::FIELDS {
        let size = match key {
            "a" => dims.a.as_deref(),
            "b" => dims.b.as_deref(),
            "c" => dims.c.as_deref(),
            "d" => dims.d.as_deref(),
            "state_names" => sizes.state_names.as_deref(),
            "state_units" => sizes.state_units.as_deref(),
            "input_names" => sizes.input_names.as_deref(),
            "input_units" => sizes.input_units.as_deref(),
            "poles" => sizes.poles.as_deref(),
            "limits" => sizes.limits.as_deref(),
            "initial_state" => sizes.initial_state.as_deref(),
            _ => None,
        };
        if let Some(el) = doc.get_element_by_id(&format!("pw-{key}-size")) {
            el.set_text_content(Some(size.unwrap_or("")));
        }
        let error = outcome.error_for(key);
        if let Some(el) = doc.get_element_by_id(&format!("pw-{key}-error")) {
            el.set_text_content(Some(error.unwrap_or("")));
            set_hidden(&el, error.is_none())?;
        }
        let control = by_id(doc, &format!("pw-{key}"))?;
        if error.is_some() {
            control.set_attribute("aria-invalid", "true")?;
        } else {
            control.remove_attribute("aria-invalid")?;
        }
        if let Some(t) = control.dyn_ref::<HtmlTextAreaElement>() {
            fit_rows(t);
        }
    }
    Ok(())
}

fn field_label(key: &str) -> &'static str {
    match key {
        "a" => "A",
        "b" => "B",
        "c" => "C",
        "d" => "D",
        "state_names" => "state names",
        "state_units" => "state units",
        "input_names" => "input names",
        "input_units" => "input units",
        "poles" => "desired poles",
        "limits" => "actuator limits",
        "initial_state" => "initial state",
        "duration" => "simulated time",
        _ => "a field",
    }
}

fn error_list(errors: &[FieldError]) -> String {
    errors.iter().map(|e| field_label(e.field)).collect::<Vec<_>>().join(", ")
}

fn mark_stale(doc: &Document, stale: bool) -> Result<(), JsValue> {
    for id in ids::OUTPUT_SECTIONS {
        if let Some(el) = doc.get_element_by_id(id) {
            el.class_list().toggle_with_force("is-stale", stale)?;
        }
    }
    Ok(())
}

fn note(doc: &Document, text: Option<&str>, class: &str) -> Result<(), JsValue> {
    let el = by_id(doc, ids::RESULTS_NOTE)?;
    el.set_text_content(Some(text.unwrap_or("")));
    el.set_class_name(class);
    set_hidden(&el, text.is_none())
}

fn structure_block(doc: &Document, r: &StructureReport, title: &str) -> Result<Vec<Element>, JsValue> {
    let head = ["open-loop mode".to_string(), "margin".to_string(), "verdict".to_string()];
    let rows: Vec<Vec<String>> = r.modes.iter().map(|m| vec![m.pole.clone(), m.margin.clone(), m.verdict.clone()]).collect();
    Ok(vec![
        make_class(doc, "p", Some(&r.summary), "summary")?,
        table(doc, Some(title), &head, &rows, false, 1)?,
        make_class(doc, "p", Some(&r.tolerance), "fine-print")?,
    ])
}

fn render_report(doc: &Document, r: &Report) -> Result<(), JsValue> {
    // Gain.
    let g = &r.gain;
    let mut head = vec!["K".to_string()];
    head.extend(g.column_labels.iter().cloned());
    let rows: Vec<Vec<String>> = g
        .entries
        .iter()
        .enumerate()
        .map(|(i, row)| {
            let mut cells = vec![g.row_labels.get(i).cloned().unwrap_or_default()];
            cells.extend(row.iter().cloned());
            cells
        })
        .collect();
    let gain = table(doc, Some("Gain K: one row per input, one column per state"), &head, &rows, true, 1)?;
    gain.set_id("pw-gain");
    fill(doc, ids::GAIN_TABLE, &[gain])?;
    set_text(doc, ids::GAIN_TEXT, &g.text)?;

    // Poles.
    let head: Vec<String> = ["requested", "achieved", "relative error", "character", "note"].iter().map(|s| s.to_string()).collect();
    let rows: Vec<Vec<String>> = r.poles.iter().map(|p| vec![p.requested.clone(), p.achieved.clone(), p.error.clone(), p.character.clone(), p.note.clone()]).collect();
    fill(doc, ids::POLE_TABLE, &[table(doc, Some("Closed-loop poles: requested and achieved (the eigenvalues of A − B K)"), &head, &rows, false, 0)?])?;
    set_text(doc, ids::OPEN_LOOP, &format!("Open-loop poles (eigenvalues of A): {}.", r.open_loop))?;

    fill(doc, ids::CONTROLLABILITY, &structure_block(doc, &r.controllability, "Controllability of each open-loop mode")?)?;
    let obs = by_id(doc, ids::OBSERVABILITY)?;
    match &r.observability {
        Some(o) => {
            fill(doc, ids::OBSERVABILITY, &structure_block(doc, o, "Observability of each open-loop mode (from the outputs C)")?)?;
            set_hidden(&obs, false)?;
        }
        None => {
            obs.set_text_content(None);
            set_hidden(&obs, true)?;
        }
    }
    set_text(doc, ids::ROBUSTNESS, &r.robustness)?;
    let items: Vec<Element> = if r.warnings.is_empty() {
        vec![make_class(doc, "li", Some("No warnings."), "none")?]
    } else {
        r.warnings.iter().map(|w| make(doc, "li", Some(w))).collect::<Result<_, _>>()?
    };
    fill(doc, ids::WARNINGS, &items)?;

    // Response figures.
    let head: Vec<String> = ["state", "initial value", "peak |value|", "settling time", "overshoot past zero"].iter().map(|s| s.to_string()).collect();
    let rows: Vec<Vec<String>> = r.states.iter().map(|s| vec![s.name.clone(), s.initial.clone(), s.peak.clone(), s.settling.clone(), s.overshoot.clone()]).collect();
    fill(doc, ids::STATE_TABLE, &[table(doc, Some("States: settling time and overshoot"), &head, &rows, true, 1)?])?;
    let head: Vec<String> = ["input", "peak commanded |u|", "limit", "verdict"].iter().map(|s| s.to_string()).collect();
    let rows: Vec<Vec<String>> = r.inputs.iter().map(|i| vec![i.name.clone(), i.peak.clone(), i.limit.clone(), i.verdict.clone()]).collect();
    fill(doc, ids::INPUT_TABLE, &[table(doc, Some("Inputs: peak versus limit"), &head, &rows, true, 1)?])?;
    set_text(doc, ids::SIMULATION, &r.simulation)
}

fn render_infeasible(doc: &Document, message: &str, analysis: Option<&OpenLoopAnalysis>) -> Result<(), JsValue> {
    fill(doc, ids::GAIN_TABLE, &[make_class(doc, "p", Some("No gain: the design is not possible (see the message above)."), "empty")?])?;
    set_text(doc, ids::GAIN_TEXT, "")?;
    fill(doc, ids::POLE_TABLE, &[])?;
    match analysis {
        Some(a) => {
            let poles: Vec<Complex64> = a.open_loop_poles.iter().map(|p| Complex64::new(p[0], p[1])).collect();
            set_text(doc, ids::OPEN_LOOP, &format!("Open-loop poles (eigenvalues of A): {}.", crate::poles::format_pole_list(&poles)))?;
            fill(doc, ids::CONTROLLABILITY, &structure_block(doc, &a.controllability, "Controllability of each open-loop mode")?)?;
        }
        None => {
            set_text(doc, ids::OPEN_LOOP, "")?;
            fill(doc, ids::CONTROLLABILITY, &[])?;
        }
    }
    let obs = by_id(doc, ids::OBSERVABILITY)?;
    obs.set_text_content(None);
    set_hidden(&obs, true)?;
    set_text(doc, ids::ROBUSTNESS, "")?;
    fill(doc, ids::WARNINGS, &[make(doc, "li", Some(message))?])?;
    fill(doc, ids::STATE_TABLE, &[])?;
    fill(doc, ids::INPUT_TABLE, &[])?;
    set_text(doc, ids::SIMULATION, "No response: without a stabilising gain there is nothing to simulate.")
}

fn pole_map_label(scene: &PoleMapScene) -> String {
    let mut parts = Vec::new();
    if !scene.closed_loop.is_empty() {
        parts.push(format!("{} closed-loop poles", scene.closed_loop.len()));
    }
    if !scene.not_assigned.is_empty() {
        parts.push(format!("{} requested poles that could not be assigned", scene.not_assigned.len()));
    }
    parts.push(format!("{} open-loop poles", scene.open_loop.len()));
    format!(
        "Pole map in the complex plane: {}. Focus it and use the arrow keys to read each pole; the pole table in Results lists them all.",
        parts.join(", ")
    )
}

/// Paint the three canvases from the page state.
fn paint_all(page: &PageState) -> Result<(), JsValue> {
    let doc = document()?;
    by_id(&doc, ids::POLE_MAP)?.set_attribute("aria-label", &pole_map_label(&page.pole_scene))?;
    paint_pole_map(&Surface::prepare(ids::POLE_MAP)?, &page.pole_scene)?;
    match (&page.shown, &page.design) {
        (Shown::Design, Some(d)) => {
            paint_time_plot(&Surface::prepare(ids::STATE_PLOT)?, &form::states_scene(d, page.normalised))?;
            paint_time_plot(&Surface::prepare(ids::INPUT_PLOT)?, &form::inputs_scene(d))?;
        }
        (Shown::Infeasible, _) => {
            let text = "No response: the design is not possible.";
            paint_message(&Surface::prepare(ids::STATE_PLOT)?, text)?;
            paint_message(&Surface::prepare(ids::INPUT_PLOT)?, text)?;
        }
        _ => {
            let text = "No design yet: complete the plant and the targets above.";
            paint_message(&Surface::prepare(ids::STATE_PLOT)?, text)?;
            paint_message(&Surface::prepare(ids::INPUT_PLOT)?, text)?;
        }
    }
    Ok(())
}

#[derive(Serialize)]
struct CycleSummary {
    status: FormStatus,
    cycle_ms: f64,
    errors: Vec<FieldError>,
}

/// One full cycle: read the form, evaluate (parse → analyse → place → simulate),
/// update the field feedback and the results, paint the canvases. Returns
/// `{ status, cycle_ms, errors }` and records `cycle_ms` in the status line's
/// `data-cycle-ms`.
#[wasm_bindgen]
pub fn update_page() -> Result<JsValue, JsValue> {
    let start = now_ms();
    let doc = document()?;
    let input = read_form(&doc)?;
    let mut outcome = evaluate_form(&input);
    show_field_feedback(&doc, &outcome)?;
    let status = outcome.status;
    let status_text = with_page(|page| {
        let text = match status {
            FormStatus::Designed => {
                let (design, report) = match (outcome.design.take(), outcome.report.take()) {
                    (Some(d), Some(r)) => (d, r),
                    // invariant: evaluate_form sets both with FormStatus::Designed; treat otherwise as an internal error.
                    _ => return Err(JsValue::from_str("internal error: a design without its report")),
                };
                render_report(&doc, &report)?;
                note(&doc, None, "note")?;
                mark_stale(&doc, false)?;
                let mut scene = form::pole_map_scene(&design);
                let markers = scene.markers();
                page.focus = page.focus.filter(|i| *i < markers.len());
                scene.highlight = page.focus.and_then(|i| markers.get(i)).map(|p| [p.re, p.im]);
                page.pole_scene = scene;
                page.gain_text = report.gain.text.clone();
                let text = format!(
                    "Designed: {} state{}, {} input{}; {} warning{}.",
                    design.plant.states,
                    if design.plant.states == 1 { "" } else { "s" },
                    design.plant.inputs,
                    if design.plant.inputs == 1 { "" } else { "s" },
                    design.warnings.len(),
                    if design.warnings.len() == 1 { "" } else { "s" }
                );
                page.design = Some(design);
                page.analysis = None;
                page.shown = Shown::Design;
                paint_all(page)?;
                refresh_readout(page)?;
                text
            }
            FormStatus::Invalid => {
                let list = error_list(&outcome.errors);
                let text = match page.shown {
                    Shown::Nothing => format!("No design yet: check {list}."),
                    _ => format!("Input needs attention ({list}); the results below are from the last valid input."),
                };
                note(&doc, Some(&text), "note is-stale-note")?;
                mark_stale(&doc, page.shown != Shown::Nothing)?;
                if page.shown == Shown::Nothing {
                    paint_all(page)?;
                }
                format!("Not updated: {} field{} to fix ({list}).", outcome.errors.len(), if outcome.errors.len() == 1 { "" } else { "s" })
            }
            FormStatus::Infeasible => {
                let message = outcome.design_error.clone().unwrap_or_else(|| "The design is not possible.".into());
                render_infeasible(&doc, &message, outcome.analysis.as_ref())?;
                note(&doc, Some(&message), "note is-infeasible")?;
                mark_stale(&doc, false)?;
                page.pole_scene = outcome.analysis.as_ref().map(form::open_loop_scene).unwrap_or_default();
                page.focus = None;
                page.design = None;
                page.analysis = outcome.analysis.take();
                page.gain_text = String::new();
                page.shown = Shown::Infeasible;
                paint_all(page)?;
                refresh_readout(page)?;
                "Design not possible with this plant: see Results.".to_string()
            }
        };
        Ok(text)
    })?;
    let cycle_ms = now_ms() - start;
    let status_el = by_id(&doc, ids::STATUS)?;
    status_el.set_text_content(Some(&format!("{status_text} Cycle time {:.1} ms.", cycle_ms)));
    status_el.set_attribute("data-cycle-ms", &format!("{cycle_ms}"))?;
    status_el.set_attribute("data-outcome", match status {
        FormStatus::Designed => "designed",
        FormStatus::Invalid => "invalid",
        FormStatus::Infeasible => "infeasible",
    })?;
    status_el.class_list().toggle_with_force("is-error", status != FormStatus::Designed)?;
    to_js(&CycleSummary { status, cycle_ms, errors: outcome.errors }, "cycle summary")
}

/// Repaint the canvases (after a resize, or before printing).
#[wasm_bindgen]
pub fn redraw() -> Result<(), JsValue> {
    with_page(|page| paint_all(page))
}

/// Choose how the state plot is scaled: each state divided by its peak (`true`, shows
/// the settling band) or the values as computed.
#[wasm_bindgen]
pub fn set_state_scale(normalised: bool) -> Result<(), JsValue> {
    with_page(|page| {
        page.normalised = normalised;
        paint_all(page)
    })
}

/// The gain as tab-separated text with labels (empty when there is no design).
#[wasm_bindgen]
pub fn gain_text() -> Result<String, JsValue> {
    with_page(|page| Ok(page.gain_text.clone()))
}

fn set_name(set: PoleSet) -> &'static str {
    match set {
        PoleSet::ClosedLoop => "Closed-loop pole",
        PoleSet::OpenLoop => "Open-loop pole",
        PoleSet::NotAssigned => "Requested pole that could not be assigned",
    }
}

/// `Closed-loop pole 2 of 4: −12 + 9j (damping ratio 0.8, natural frequency 15 rad/s).`
fn readout(scene: &PoleMapScene, pick: &PolePick) -> String {
    let same: Vec<PolePick> = scene.markers().into_iter().filter(|p| p.set == pick.set).collect();
    let k = same.iter().position(|p| p.index == pick.index).map_or(1, |k| k + 1);
    let z = Complex64::new(pick.re, pick.im);
    let character = form::pole_character(z);
    let extra = if character.is_empty() { String::new() } else { format!(" ({character})") };
    format!("{} {k} of {}: {}{extra}.", set_name(pick.set), same.len(), form::short_pole(z))
}

fn show_readout(text: &str) -> Result<(), JsValue> {
    set_text(&document()?, ids::POLE_PICK, text)
}

fn refresh_readout(page: &PageState) -> Result<(), JsValue> {
    let markers = page.pole_scene.markers();
    match page.focus.and_then(|i| markers.get(i)) {
        Some(p) => show_readout(&readout(&page.pole_scene, p)),
        None => show_readout(POLE_HINT),
    }
}

/// Keyboard on the pole map: `delta` = +1 / −1 steps to the next / previous pole
/// (wrapping; from no choice, +1 picks the first and −1 the last); 0 re-shows the
/// current one (or picks the first). The chosen pole is ringed and read out.
#[wasm_bindgen]
pub fn step_pole(delta: i32) -> Result<(), JsValue> {
    with_page(|page| {
        let markers = page.pole_scene.markers();
        let len = markers.len() as i64;
        if len == 0 {
            return show_readout("There are no poles to show.");
        }
        let next = match page.focus {
            None if delta < 0 => len - 1,
            None => 0,
            Some(i) => (i as i64 + i64::from(delta)).rem_euclid(len),
        } as usize;
        page.focus = Some(next);
        page.pole_scene.highlight = markers.get(next).map(|p| [p.re, p.im]);
        paint_pole_map(&Surface::prepare(ids::POLE_MAP)?, &page.pole_scene)?;
        refresh_readout(page)
    })
}

/// Keyboard on the pole map: jump to the first (`last = false`) or last pole.
#[wasm_bindgen]
pub fn jump_pole(last: bool) -> Result<(), JsValue> {
    with_page(|page| {
        page.focus = None;
        Ok(())
    })?;
    step_pole(if last { -1 } else { 1 })
}

/// The pole map lost focus: drop the ring and show the hint again.
#[wasm_bindgen]
pub fn clear_pole_focus() -> Result<(), JsValue> {
    with_page(|page| {
        page.focus = None;
        if page.pole_scene.highlight.take().is_some() {
            paint_pole_map(&Surface::prepare(ids::POLE_MAP)?, &page.pole_scene)?;
        }
        refresh_readout(page)
    })
}

/// Pointer over the pole map at CSS pixel offset (`x`, `y`): read out the pole under
/// it, or (if none) the keyboard choice or the hint.
#[wasm_bindgen]
pub fn hover_pole(x: f64, y: f64) -> Result<(), JsValue> {
    with_page(|page| {
        let canvas = find_canvas(ids::POLE_MAP)?;
        match page.pole_scene.pick(css_rect(&canvas), [x, y]) {
            Some(p) => show_readout(&readout(&page.pole_scene, &p)),
            None => refresh_readout(page),
        }
    })
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

/// A hollow diamond: requested poles that could not be assigned (a different shape,
/// not only a different colour, so that it reads in grey print too).
fn diamond(s: &Surface, c: [f64; 2], half: f64, width: f64, stroke: &str) {
    s.ctx.set_stroke_style_str(stroke);
    s.ctx.set_line_width(width);
    s.ctx.begin_path();
    s.ctx.move_to(c[0], c[1] - half);
    s.ctx.line_to(c[0] + half, c[1]);
    s.ctx.line_to(c[0], c[1] + half);
    s.ctx.line_to(c[0] - half, c[1]);
    s.ctx.close_path();
    s.ctx.stroke();
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
            half: 7.0,
            width: 2.0,
            stroke: colour::NOT_ASSIGNED,
        },
        PoleSet::ClosedLoop => MarkerStyle {
            half: 5.5,
            width: 2.25,
            stroke: colour::CLOSED_LOOP,
        },
    }
}

fn marker(s: &Surface, set: PoleSet, c: [f64; 2]) {
    let st = marker_style(set);
    match set {
        PoleSet::NotAssigned => diamond(s, c, st.half, st.width, st.stroke),
        _ => cross(s, c, st.half, st.width, st.stroke),
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
        for pt in points
            .iter()
            .filter(|q| q[0].is_finite() && q[1].is_finite())
        {
            marker(s, set, f.to_pixel(*pt));
        }
    }
    if let Some(h) = scene.highlight.filter(|h| h[0].is_finite() && h[1].is_finite()) {
        let c = f.to_pixel(h);
        s.ctx.set_stroke_style_str(colour::FOCUS);
        s.ctx.set_line_width(2.0);
        s.ctx.begin_path();
        s.ctx.arc(c[0], c[1], 11.0, 0.0, std::f64::consts::TAU)?;
        s.ctx.stroke();
    }
    s.ctx.restore();

    let var = if scene.discrete { "z" } else { "s" };
    axis_titles(s, &f, &format!("Re {var}"), &format!("Im {var}"))?;

    let region = if scene.discrete {
        "stable: |z| < 1"
    } else {
        "stable region"
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
            entries.push((
                set_label(set),
                Box::new(move |s: &Surface, c: [f64; 2]| marker(s, set, c)),
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

/// Dash pattern of series `i`: solid for the first colour cycle, then dashed, dotted…
fn series_dash(i: usize) -> &'static [f64] {
    const DASHES: [&[f64]; 4] = [&[], &[7.0, 3.5], &[2.0, 3.0], &[9.0, 3.0, 2.0, 3.0]];
    DASHES[(i / colour::SERIES.len()) % DASHES.len()]
}

/// A blank plot area with a centred message (no data to show).
fn paint_message(s: &Surface, text: &str) -> Result<(), JsValue> {
    let p = s.rect.inset(crate::plot::Margins::STANDARD);
    s.ctx.set_stroke_style_str(colour::PLOT_EDGE);
    s.ctx.set_line_width(1.0);
    s.ctx.stroke_rect(snap(p.x), snap(p.y), p.width.round(), p.height.round());
    s.ctx.set_font(TITLE_FONT);
    s.ctx.set_fill_style_str(colour::MUTED_TEXT);
    s.text(text, p.x + p.width / 2.0, p.y + p.height / 2.0, "center", "middle")
}

fn paint_time_plot(s: &Surface, scene: &TimePlotScene) -> Result<(), JsValue> {
    // Legend rows first: they set the top margin.
    s.ctx.set_font(TITLE_FONT);
    let title_width = s.text_width(&scene.y_label);
    s.ctx.set_font(FONT);
    let base = scene.frame(s.rect);
    let left = 8.0 + title_width + 16.0;
    let available = (base.plot.right() - left).max(LEGEND_SWATCH_PX + 40.0);
    let widths: Vec<f64> = scene.series.iter().map(|ser| s.text_width(&ser.name)).collect();
    let flow = flow_legend(&widths, available);
    let rows = flow.iter().map(|(r, _)| r + 1).max().unwrap_or(1);
    let f = scene.frame_with_legend_rows(s.rect, rows);
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
        s.dash(series_dash(i))?;
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

    // Legend: swatch (colour and dash of the line) and name, flowed into rows.
    s.ctx.set_font(FONT);
    for (i, ser) in scene.series.iter().enumerate() {
        let Some((row, x)) = flow.get(i).copied() else { continue };
        let y = 18.0 + row as f64 * LEGEND_ROW_PX;
        let x = left + x;
        s.ctx.set_stroke_style_str(colour::SERIES[i % colour::SERIES.len()]);
        s.ctx.set_line_width(2.0);
        s.dash(series_dash(i))?;
        s.line([x + 4.0, y], [x + 22.0, y]);
        s.dash(&[])?;
        s.ctx.set_fill_style_str(colour::TEXT);
        s.text(&ser.name, x + LEGEND_SWATCH_PX - 4.0, y, "left", "middle")?;
    }
    Ok(())
}
