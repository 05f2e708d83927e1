//! Browser front end (wasm32 only): panic hook, version, the design page
//! (form → [`crate::form::evaluate_form`] → result DOM and canvases, built here
//! with `createElement`/`textContent` only), and thin canvas painters that draw
//! what [`crate::plot`] lays out.
//!
//! # The page cycle
//! [`update_page`] reads the form controls (`pw-<key>` for each key of
//! [`FormInput::FIELDS`]: text areas, inputs, selects and the checkbox), evaluates them,
//! writes each field's size (`pw-<key>-size`) and error (`pw-<key>-error`; the control
//! gets `aria-invalid`) and hides the sub-fields of switched-off sections
//! (`pw-<key>-field`), never touching the text the user typed; then it paints the
//! canvases (pole map; loop outputs, loop inputs and estimation error when the loop is
//! simulated; states and inputs of the free response) and fills the results (gain,
//! controller, observer, poles, controllability, warnings, loop and response tables). On
//! invalid input the previous results stay and are marked stale. It measures its own
//! duration with `performance.now()` and leaves it in `data-cycle-ms` of the status
//! line, the phases in `data-cycle-phases`.
//!
//! # What keeps the cycle short
//! - Canvas sizes are cached: the cycle never reads layout (the page's ResizeObserver
//!   calls [`canvases_resized`] after layout instead).
//! - Canvases are painted before the result DOM changes (drawing text on a canvas makes
//!   the browser bring styles up to date first), and a canvas whose picture, size and
//!   pixel ratio are unchanged is not repainted.
//! - Each line is simplified to what its pixels show ([`crate::plot::Simplifier`]: at most
//!   four points per pixel column, then a 0.2 px corridor) and stroked as one `Path2D`.
//! - Result blocks whose content is unchanged are left alone; a table of the same shape
//!   has only its changed cells rewritten; field feedback is written only when it changes.
//!
//! Every exported function returns `Result<_, JsValue>` with a readable
//! message instead of panicking; should a panic happen anyway, the hook
//! installed at start-up writes it into the page element
//! [`ERROR_ELEMENT_ID`] and to `console.error`.
//!
//! Inputs are plain JS objects deserialised with serde-wasm-bindgen into the
//! scene structs of [`crate::plot`] ([`PoleMapScene`], [`TimePlotScene`]);
//! every field may be omitted; unknown top-level keys are rejected.
#![cfg(target_arch = "wasm32")]

// The page model and the layers below it, named `crate::form`, `crate::design`… as elsewhere.
use polewright_page::*;

use std::cell::RefCell;
use std::hash::{Hash, Hasher};
use std::sync::Once;

use num_complex::Complex64;
use serde::Serialize;
use wasm_bindgen::prelude::*;
use wasm_bindgen::JsCast;
use web_sys::{CanvasRenderingContext2d, Document, Element, HtmlCanvasElement, HtmlInputElement, HtmlSelectElement, HtmlTextAreaElement, Path2d};

use crate::design::{fmt_num, DesignResult};
use crate::editing::{self, Change, Direction, Edit, EditHistory, EditParams, Member, NudgeOutcome, PlaneMap, StepSize};
use crate::form::{self, evaluate_form, ControllerReport, FieldError, FormInput, FormOutcome, FormStatus, MatrixTable, OpenLoopAnalysis, Report, StructureReport};
use crate::draw::{self, Align, Baseline, Cap, DrawOp, TextMeasure};
use crate::plot::{Frame, Rect};
pub use crate::plot::{Band, EventLine, LimitLine, PoleMapScene, PolePick, PoleSet, Series, TimePlotScene};

/// Id of the page element that receives internal-error messages.
pub const ERROR_ELEMENT_ID: &str = "pw-error";

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

fn to_js<T: Serialize>(value: &T, context: &str) -> Result<JsValue, JsValue> {
    value
        .serialize(&serde_wasm_bindgen::Serializer::json_compatible())
        .map_err(|e| js_err(context, e))
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
    pub const POLE_LEGEND: &str = "pw-pole-legend";
    pub const STATE_PLOT: &str = "pw-state-plot";
    pub const INPUT_PLOT: &str = "pw-input-plot";
    pub const CONTROLLER: &str = "pw-controller";
    pub const CONTROLLER_DOMAIN: &str = "pw-controller-domain";
    pub const CONTROLLER_LAW: &str = "pw-controller-law";
    pub const SAMPLE_RATE: &str = "pw-sample-rate";
    pub const DELAY_GAIN: &str = "pw-delay-gain";
    pub const TRACKING_GAINS: &str = "pw-tracking-gains";
    pub const TRACKING_NOTE: &str = "pw-tracking-note";
    pub const DISCRETE_BLOCK: &str = "pw-discrete-block";
    pub const DISCRETE_PLANT: &str = "pw-discrete-plant";
    pub const CONTROLLER_TEXT: &str = "pw-controller-text";
    pub const OBSERVER: &str = "pw-obs-result";
    pub const OBSERVER_SUMMARY: &str = "pw-obs-summary";
    pub const OBSERVER_TABLE: &str = "pw-obs-table";
    pub const OBSERVER_CURRENT: &str = "pw-obs-current";
    pub const OBSERVER_TEXT: &str = "pw-obs-text";
    pub const OBSERVER_POLES: &str = "pw-obs-poles";
    pub const OBSERVER_NOISE: &str = "pw-obs-noise";
    pub const LOOP_SECTION: &str = "pw-loop-section";
    pub const LOOP_SUMMARY: &str = "pw-loop-summary";
    pub const LOOP_PLOT: &str = "pw-loop-plot";
    pub const LOOP_TABLE: &str = "pw-loop-table";
    pub const LOOP_INPUT_PLOT: &str = "pw-loop-input-plot";
    pub const LOOP_INPUT_TABLE: &str = "pw-loop-input-table";
    pub const ESTIMATION: &str = "pw-estimation";
    pub const ESTIMATION_PLOT: &str = "pw-estimation-plot";
    pub const ESTIMATION_TABLE: &str = "pw-estimation-table";
    pub const COMPARE: &str = "pw-compare";
    pub const POLE_CHOICE: &str = "pw-pole-choice";
    pub const CHOICE_SUMMARY: &str = "pw-choice-summary";
    pub const CHOICE_POLES: &str = "pw-choice-poles";
    pub const CHOICE_DETAILS: &str = "pw-choice-details";
    pub const COMPARE_LABEL: &str = "pw-compare-label";
    pub const COMPARE_TABLE: &str = "pw-compare-table";
    /// Sections marked stale when the input is invalid.
    pub const OUTPUT_SECTIONS: [&str; 4] = ["pw-results", "pw-pole-section", "pw-loop-section", "pw-response-section"];
    /// Every canvas, in painting order.
    pub const CANVASES: [&str; 6] = [POLE_MAP, LOOP_PLOT, LOOP_INPUT_PLOT, ESTIMATION_PLOT, STATE_PLOT, INPUT_PLOT];
}

const POLE_HINT: &str = "Point at a pole, or focus the map (Tab) and press N / P, to read a pole's value.";

#[derive(Clone, Copy, PartialEq, Eq)]
enum Shown {
    Nothing,
    Design,
    Infeasible,
}

/// What a canvas shows; kept to skip repainting an unchanged picture.
#[derive(Clone, PartialEq)]
enum Picture {
    Poles(PoleMapScene),
    Time(TimePlotScene),
    Message(String),
}

/// A canvas's CSS size (read from layout only when unknown or after a resize) and the
/// picture last painted on it at that size and pixel ratio.
struct CanvasState {
    id: &'static str,
    size: Option<Rect>,
    painted: Option<(Rect, f64, Picture)>,
}

/// Per-field feedback last written (size, error, active), to touch only what changes.
type Feedback = (Option<String>, Option<String>, bool);

struct PageState {
    shown: Shown,
    design: Option<DesignResult>,
    report: Option<Report>,
    analysis: Option<OpenLoopAnalysis>,
    pole_scene: PoleMapScene,
    /// Position in `pole_scene.markers()` chosen by keyboard.
    focus: Option<usize>,
    normalised: bool,
    fit_poles: bool,
    canvases: Vec<CanvasState>,
    /// Content fingerprints of the result blocks last built (block id, hash).
    rendered: Vec<(&'static str, u64)>,
    /// Tables updated in place when only their cells change.
    tables: Vec<TableView>,
    feedback: Vec<(&'static str, Feedback)>,
    last_input: FormInput,
    /// Every form change, for the page's Undo and Redo.
    form_history: form::history::FormHistory,
    /// The pole list being edited from the map (kept in step with the poles field).
    history: Option<EditHistory>,
    /// The editable markers as drawn, in the order of `pole_scene.requested`.
    requested_markers: Vec<editing::PoleMarker>,
    /// How the list's plane relates to the map's.
    plane_map: PlaneMap,
    /// The requested pole chosen by keyboard or pointer (entry, member), kept across edits.
    focus_requested: Option<(usize, Member)>,
    /// A pointer drag in progress.
    drag: Option<DragView>,
    /// The design pinned for comparison.
    pinned: Option<Pinned>,
    /// Why the last edit from the map did nothing (shown under the map).
    edit_message: Option<String>,
}

/// A drag in progress: the frame the map had when it began (kept, so that the view does not
/// rescale under the pointer) and the measured update times (ms) of its moves.
struct DragView {
    frame: Frame,
    samples: Vec<f64>,
}

/// A design kept for comparison: what the comparison table and the overlays need, computed
/// once when it is pinned (the overlays are drawn on every cycle, a drag's included).
struct Pinned {
    /// Overlays are drawn only on a design of the same domain.
    domain: crate::analysis::Domain,
    /// Its achieved closed-loop poles (the plum + on the map).
    poles: Vec<[f64; 2]>,
    /// Its state signals, as computed (`[0]`) and each divided by its peak (`[1]`).
    states: [Vec<crate::plot::PinnedSeries>; 2],
    inputs: Vec<crate::plot::PinnedSeries>,
    loop_outputs: Vec<crate::plot::PinnedSeries>,
    summary: editing::DesignSummary,
    /// The poles field when it was pinned (or the pole choice).
    label: String,
    /// The form that gave it (kept when the page remembers its state).
    form: FormInput,
}

impl Pinned {
    fn new(design: &DesignResult, report: &Report, label: String, form: FormInput) -> Pinned {
        Pinned {
            domain: design.domain,
            poles: design.feedback.achieved_poles.clone(),
            states: [as_pinned(&form::states_scene(design, false)), as_pinned(&form::states_scene(design, true))],
            inputs: as_pinned(&form::inputs_scene(design)),
            loop_outputs: form::loop_outputs_scene(design, report).map(|s| as_pinned(&s)).unwrap_or_default(),
            summary: editing::DesignSummary::from_result(design),
            label,
            form,
        }
    }
}

thread_local! {
    static PAGE: RefCell<PageState> = RefCell::new(PageState {
        shown: Shown::Nothing,
        design: None,
        report: None,
        analysis: None,
        pole_scene: PoleMapScene::default(),
        focus: None,
        normalised: true,
        fit_poles: false,
        canvases: ids::CANVASES.iter().map(|id| CanvasState { id, size: None, painted: None }).collect(),
        rendered: Vec::new(),
        tables: Vec::new(),
        feedback: Vec::new(),
        last_input: FormInput::default(),
        form_history: form::history::FormHistory::default(),
        history: None,
        requested_markers: Vec::new(),
        plane_map: PlaneMap::Same,
        focus_requested: None,
        drag: None,
        pinned: None,
        edit_message: None,
    });
    /// Named durations of the last cycle's phases (milliseconds).
    static PHASES: RefCell<Vec<(&'static str, f64)>> = const { RefCell::new(Vec::new()) };
}

fn phase(name: &'static str, ms: f64) {
    PHASES.with(|p| {
        if let Ok(mut v) = p.try_borrow_mut() {
            match v.iter_mut().find(|(k, _)| *k == name) {
                Some(slot) => slot.1 += ms,
                None => v.push((name, ms)),
            }
        }
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
    if el.has_attribute("hidden") != hidden {
        el.toggle_attribute_with_force("hidden", hidden)?;
    }
    Ok(())
}

fn set_hidden_id(doc: &Document, id: &str, hidden: bool) -> Result<(), JsValue> {
    set_hidden(&by_id(doc, id)?, hidden)
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

fn hash_of<T: Hash + ?Sized>(value: &T) -> u64 {
    let mut h = std::collections::hash_map::DefaultHasher::new();
    value.hash(&mut h);
    h.finish()
}

impl PageState {
    /// True when block `id` already shows content with this fingerprint; otherwise
    /// records it (the caller then rebuilds the block).
    fn unchanged(&mut self, id: &'static str, fingerprint: u64) -> bool {
        match self.rendered.iter_mut().find(|(k, _)| *k == id) {
            Some(slot) if slot.1 == fingerprint => true,
            Some(slot) => {
                slot.1 = fingerprint;
                false
            }
            None => {
                self.rendered.push((id, fingerprint));
                false
            }
        }
    }
}

/// A table: optional caption, a header row, and rows whose first cell is a row header
/// when `row_headers` is set. Cells from column `numeric_from` on are numeric (right-aligned).
fn table(doc: &Document, caption: Option<&str>, head: &[String], rows: &[Vec<String>], row_headers: bool, numeric_from: usize) -> Result<Element, JsValue> {
    Ok(table_with_cells(doc, caption, head, rows, row_headers, numeric_from)?.0)
}

/// [`table`], also returning the body cells (row by row, the columns kept) for later updates.
fn table_with_cells(doc: &Document, caption: Option<&str>, head: &[String], rows: &[Vec<String>], row_headers: bool, numeric_from: usize) -> Result<(Element, Vec<Vec<Element>>), JsValue> {
    // Columns empty in every row (e.g. "note" when nothing needs a note) are left out.
    let keep = kept_columns(head, rows);
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
    let mut cells = Vec::with_capacity(rows.len());
    for row in rows {
        let tr = make(doc, "tr", None)?;
        let mut row_cells = Vec::with_capacity(row.len());
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
            row_cells.push(el);
        }
        tbody.append_child(&tr)?;
        cells.push(row_cells);
    }
    t.append_child(&tbody)?;
    Ok((t, cells))
}

/// Which columns a table shows: the first always, the others when some row fills them.
fn kept_columns(head: &[String], rows: &[Vec<String>]) -> Vec<bool> {
    (0..head.len()).map(|j| j == 0 || rows.iter().any(|r| r.get(j).is_some_and(|c| !c.is_empty()))).collect()
}

/// A table on the page and what it shows, so that a new table of the same shape is
/// written by changing only the cells whose text changed.
struct TableView {
    host: &'static str,
    shape: u64,
    rows: Vec<Vec<String>>,
    cells: Vec<Vec<Element>>,
}

impl PageState {
    /// Shows one table in element `host` (with id `table_id`, if given): updates the cells
    /// in place when the table there has the same caption, header and size, else rebuilds it.
    #[allow(clippy::too_many_arguments)]
    fn show_table(&mut self, doc: &Document, host: &'static str, table_id: Option<&str>, caption: &str, head: &[String], rows: &[Vec<String>], row_headers: bool, numeric_from: usize) -> Result<(), JsValue> {
        let keep = kept_columns(head, rows);
        let shape = hash_of(&(caption, head, &keep, rows.len(), rows.iter().map(|r| r.len()).collect::<Vec<_>>(), table_id, row_headers, numeric_from));
        let visible: Vec<Vec<String>> = rows.iter().map(|r| r.iter().enumerate().filter(|(j, _)| keep.get(*j).copied().unwrap_or(true)).map(|(_, c)| c.clone()).collect()).collect();
        if let Some(view) = self.tables.iter_mut().find(|v| v.host == host && v.shape == shape) {
            for (i, row) in visible.iter().enumerate() {
                for (j, text) in row.iter().enumerate() {
                    let old = view.rows.get(i).and_then(|r| r.get(j));
                    if old != Some(text) {
                        if let Some(cell) = view.cells.get(i).and_then(|r| r.get(j)) {
                            cell.set_text_content(Some(text));
                        }
                    }
                }
            }
            view.rows = visible;
            return Ok(());
        }
        let (t, cells) = table_with_cells(doc, Some(caption), head, rows, row_headers, numeric_from)?;
        if let Some(id) = table_id {
            t.set_id(id);
        }
        fill(doc, host, &[t])?;
        self.tables.retain(|v| v.host != host);
        self.tables.push(TableView { host, shape, rows: visible, cells });
        Ok(())
    }

    fn show_matrix(&mut self, doc: &Document, host: &'static str, table_id: Option<&str>, m: &MatrixTable) -> Result<(), JsValue> {
        let (head, rows) = matrix_rows(m);
        self.show_table(doc, host, table_id, &m.caption, &head, &rows, true, 1)
    }
}

/// A labelled matrix's header row and body rows (symbol in the corner).
fn matrix_rows(m: &MatrixTable) -> (Vec<String>, Vec<Vec<String>>) {
    let mut head = vec![m.symbol.clone()];
    head.extend(m.column_labels.iter().cloned());
    let rows: Vec<Vec<String>> = m
        .entries
        .iter()
        .enumerate()
        .map(|(i, row)| {
            let mut cells = vec![m.row_labels.get(i).cloned().unwrap_or_default()];
            cells.extend(row.iter().cloned());
            cells
        })
        .collect();
    (head, rows)
}

/// A labelled matrix as a table (symbol in the corner, row and column labels as headers).
fn matrix_element(doc: &Document, m: &MatrixTable) -> Result<Element, JsValue> {
    let (head, rows) = matrix_rows(m);
    table(doc, Some(&m.caption), &head, &rows, true, 1)
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

/// The text of control `pw-<key>`: a text area, a text input, a checkbox (`"true"` when
/// ticked, else `""`) or a select.
fn control_value(doc: &Document, key: &str) -> Result<String, JsValue> {
    let el = by_id(doc, &format!("pw-{key}"))?;
    if let Some(t) = el.dyn_ref::<HtmlTextAreaElement>() {
        Ok(t.value())
    } else if let Some(i) = el.dyn_ref::<HtmlInputElement>() {
        if i.type_() == "checkbox" {
            Ok(if i.checked() { "true".into() } else { String::new() })
        } else {
            Ok(i.value())
        }
    } else if let Some(s) = el.dyn_ref::<HtmlSelectElement>() {
        Ok(s.value())
    } else {
        Err(js_err("not a form control", key))
    }
}

fn set_control_value(doc: &Document, key: &str, text: &str) -> Result<(), JsValue> {
    let el = by_id(doc, &format!("pw-{key}"))?;
    if let Some(t) = el.dyn_ref::<HtmlTextAreaElement>() {
        t.set_value(text);
        fit_rows(t);
        Ok(())
    } else if let Some(i) = el.dyn_ref::<HtmlInputElement>() {
        if i.type_() == "checkbox" {
            i.set_checked(matches!(text.trim(), "true" | "on" | "yes" | "1"));
        } else {
            i.set_value(text);
        }
        Ok(())
    } else if let Some(s) = el.dyn_ref::<HtmlSelectElement>() {
        // A blank choice is the first option (the field's default).
        if text.trim().is_empty() {
            s.set_selected_index(0);
        } else {
            s.set_value(text.trim());
        }
        Ok(())
    } else {
        Err(js_err("not a form control", key))
    }
}

/// Grows a text area with its content (2 to 12 rows); never changes the text.
fn fit_rows(t: &HtmlTextAreaElement) {
    let lines = t.value().lines().count().clamp(2, 12) as u32;
    if t.rows() != lines {
        t.set_rows(lines);
    }
}

#[path = "web_document.rs"]
mod document;
#[cfg(feature = "test-exports")]
#[path = "web_test_exports.rs"]
mod test_exports;
#[cfg(feature = "test-exports")]
pub use test_exports::*;
pub use document::*;

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
    document::note_form(&doc)?;
    for key in FormInput::FIELDS {
        set_control_value(&doc, key, d.form.get(key).unwrap_or(""))?;
    }
    if let Some(sel) = doc.get_element_by_id(ids::DEMO_SELECT).and_then(|e| e.dyn_into::<HtmlSelectElement>().ok()) {
        sel.set_value(&index.to_string());
    }
    // A new plant starts a new edit history (undoing into another plant's poles makes no sense).
    document::reset_edit_history()?;
    set_text(&doc, ids::DEMO_DESCRIPTION, d.description)
}

/// Per-field size, error and visibility (sub-fields of a section switched off are hidden);
/// only what changed since the last cycle is touched, and the typed text never is.
fn show_field_feedback(doc: &Document, page: &mut PageState, input: &FormInput, outcome: &FormOutcome) -> Result<(), JsValue> {
    for key in FormInput::FIELDS {
        let now: Feedback = (outcome.size_for(key).map(str::to_string), outcome.error_for(key).map(str::to_string), input.is_active(key));
        let before = page.feedback.iter().find(|(k, _)| *k == key).map(|(_, f)| f.clone());
        if before.as_ref() != Some(&now) {
            let (size, error, active) = &now;
            if let Some(el) = doc.get_element_by_id(&format!("pw-{key}-size")) {
                el.set_text_content(Some(size.as_deref().unwrap_or("")));
            }
            if let Some(el) = doc.get_element_by_id(&format!("pw-{key}-error")) {
                el.set_text_content(Some(error.as_deref().unwrap_or("")));
                set_hidden(&el, error.is_none())?;
            }
            let control = by_id(doc, &format!("pw-{key}"))?;
            if error.is_some() {
                control.set_attribute("aria-invalid", "true")?;
            } else {
                control.remove_attribute("aria-invalid")?;
            }
            if let Some(wrapper) = doc.get_element_by_id(&format!("pw-{key}-field")) {
                set_hidden(&wrapper, !active)?;
            }
            match page.feedback.iter_mut().find(|(k, _)| *k == key) {
                Some(slot) => slot.1 = now,
                None => page.feedback.push((key, now)),
            }
        }
        if input.get(key) != page.last_input.get(key) {
            if let Some(t) = doc.get_element_by_id(&format!("pw-{key}")).and_then(|e| e.dyn_into::<HtmlTextAreaElement>().ok()) {
                fit_rows(&t);
            }
        }
    }
    page.last_input = input.clone();
    Ok(())
}

fn error_list(errors: &[FieldError]) -> String {
    errors.iter().map(|e| FormInput::label(e.field)).collect::<Vec<_>>().join(", ")
}

fn mark_stale(doc: &Document, stale: bool) -> Result<(), JsValue> {
    for id in ids::OUTPUT_SECTIONS {
        if let Some(el) = doc.get_element_by_id(id) {
            if el.class_list().contains("is-stale") != stale {
                el.class_list().toggle_with_force("is-stale", stale)?;
            }
        }
    }
    Ok(())
}

fn note(doc: &Document, text: Option<&str>, class: &str) -> Result<(), JsValue> {
    let el = by_id(doc, ids::RESULTS_NOTE)?;
    let text = text.unwrap_or("");
    if el.text_content().as_deref() != Some(text) {
        el.set_text_content(Some(text));
    }
    if el.class_name() != class {
        el.set_class_name(class);
    }
    set_hidden(&el, text.is_empty())
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

fn strings(items: &[&str]) -> Vec<String> {
    items.iter().map(|s| s.to_string()).collect()
}

fn pole_rows_text(poles: &[form::PoleRow]) -> (Vec<String>, Vec<Vec<String>>) {
    let head = strings(&["requested", "achieved", "relative error", "character", "note"]);
    let rows: Vec<Vec<String>> = poles.iter().map(|p| vec![p.requested.clone(), p.achieved.clone(), p.error.clone(), p.character.clone(), p.note.clone()]).collect();
    (head, rows)
}

fn pole_table(doc: &Document, caption: &str, poles: &[form::PoleRow]) -> Result<Element, JsValue> {
    let (head, rows) = pole_rows_text(poles);
    table(doc, Some(caption), &head, &rows, false, 0)
}

/// Builds the result blocks whose content changed since they were last built.
fn render_report(doc: &Document, page: &mut PageState, r: &Report, discrete: bool) -> Result<(), JsValue> {
    if !page.unchanged(ids::POLE_CHOICE, hash_of(&r.pole_choice)) {
        render_pole_choice(doc, r.pole_choice.as_ref())?;
    }
    // Gain.
    if !page.unchanged(ids::GAIN_TABLE, hash_of(&r.gain)) {
        page.show_matrix(doc, ids::GAIN_TABLE, Some("pw-gain"), &r.gain)?;
        set_text(doc, ids::GAIN_TEXT, &r.gain.text)?;
    }

    // Poles.
    if !page.unchanged(ids::POLE_TABLE, hash_of(&(&r.poles, &r.open_loop, discrete))) {
        let caption = if discrete {
            "Closed-loop poles in the z-plane: requested and achieved (the eigenvalues of Φ − Γ K), with their equivalent s = ln z / T; errors relative to max(|z|, 1), the unit circle being the z-plane's scale"
        } else {
            "Closed-loop poles: requested and achieved (the eigenvalues of A − B K)"
        };
        let (head, rows) = pole_rows_text(&r.poles);
        page.show_table(doc, ids::POLE_TABLE, None, caption, &head, &rows, false, 0)?;
        let open = if discrete { "Open-loop poles (eigenvalues of Φ)" } else { "Open-loop poles (eigenvalues of A)" };
        set_text(doc, ids::OPEN_LOOP, &format!("{open}: {}.", r.open_loop))?;
    }

    if !page.unchanged(ids::CONTROLLABILITY, hash_of(&r.controllability)) {
        fill(doc, ids::CONTROLLABILITY, &structure_block(doc, &r.controllability, "Controllability of each open-loop mode")?)?;
    }
    if !page.unchanged(ids::OBSERVABILITY, hash_of(&r.observability)) {
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
    }
    if !page.unchanged(ids::ROBUSTNESS, hash_of(&r.robustness)) {
        set_text(doc, ids::ROBUSTNESS, &r.robustness)?;
    }
    if !page.unchanged(ids::WARNINGS, hash_of(&r.warnings)) {
        let items: Vec<Element> = if r.warnings.is_empty() {
            vec![make_class(doc, "li", Some("No warnings."), "none")?]
        } else {
            r.warnings.iter().map(|w| make(doc, "li", Some(w))).collect::<Result<_, _>>()?
        };
        fill(doc, ids::WARNINGS, &items)?;
    }

    // Response figures.
    if !page.unchanged(ids::STATE_TABLE, hash_of(&r.states)) {
        let head = strings(&["state", "initial value", "peak |value|", "settling time", "overshoot past zero"]);
        let rows: Vec<Vec<String>> = r.states.iter().map(|s| vec![s.name.clone(), s.initial.clone(), s.peak.clone(), s.settling.clone(), s.overshoot.clone()]).collect();
        page.show_table(doc, ids::STATE_TABLE, None, "States: settling time and overshoot", &head, &rows, true, 1)?;
    }
    if !page.unchanged(ids::INPUT_TABLE, hash_of(&r.inputs)) {
        let head = strings(&["input", "peak commanded |u|", "limit", "verdict"]);
        let rows: Vec<Vec<String>> = r.inputs.iter().map(|i| vec![i.name.clone(), i.peak.clone(), i.limit.clone(), i.verdict.clone()]).collect();
        page.show_table(doc, ids::INPUT_TABLE, None, "Inputs: peak versus limit", &head, &rows, true, 1)?;
    }
    if !page.unchanged(ids::SIMULATION, hash_of(&r.simulation)) {
        set_text(doc, ids::SIMULATION, &r.simulation)?;
    }
    if r.controller.is_some() {
        let text = controller_text(r);
        if !page.unchanged(ids::CONTROLLER_TEXT, hash_of(&text)) {
            set_text(doc, ids::CONTROLLER_TEXT, &text)?;
        }
    }
    render_controller(doc, page, r.controller.as_ref())
}

/// The pole-choice block: how the poles were chosen, the suggestion to adopt, and the
/// region, LQR and search details.
fn render_pole_choice(doc: &Document, c: Option<&form::PoleChoiceReport>) -> Result<(), JsValue> {
    let Some(c) = c else {
        return set_hidden_id(doc, ids::POLE_CHOICE, true);
    };
    set_hidden_id(doc, ids::POLE_CHOICE, false)?;
    set_text(doc, ids::CHOICE_SUMMARY, &format!("{}: {}", c.method, c.description))?;
    set_text(doc, ids::CHOICE_POLES, &c.suggested_poles)?;
    set_text(doc, "pw-adopt-status", "")?;
    let mut parts: Vec<Element> = vec![make_class(doc, "p", Some(&c.suggested_note), "fine-print")?];
    if let Some(r) = &c.region {
        let mut lines = vec![r.damping.clone(), r.decay_rate.clone()];
        lines.extend(r.natural_frequency.iter().cloned());
        let list = make_class(doc, "ul", None, "facts")?;
        for l in &lines {
            list.append_child(&make(doc, "li", Some(l))?.into())?;
        }
        let head = make(doc, "h4", Some("Admissible region (dashed on the pole map)"))?;
        parts.extend([head, list, make_class(doc, "p", Some(&r.note), "fine-print")?]);
        let outside = if r.outside_region.is_empty() {
            make_class(doc, "p", Some("Every achieved closed-loop pole is inside the region."), "summary")?
        } else {
            let ul = make_class(doc, "ul", None, "warnings")?;
            for o in &r.outside_region {
                ul.append_child(&make(doc, "li", Some(o))?.into())?;
            }
            ul
        };
        outside.set_id("pw-choice-outside");
        parts.push(outside);
    }
    if let Some(l) = &c.lqr {
        parts.push(make(doc, "h4", Some("LQR design"))?);
        let list = make_class(doc, "ul", None, "facts")?;
        for line in [&l.q, &l.r, &l.residual, &l.gain_note] {
            list.append_child(&make(doc, "li", Some(line))?.into())?;
        }
        list.set_id("pw-lqr-facts");
        parts.push(list);
        let x = matrix_element(doc, &l.riccati_solution)?;
        x.set_id("pw-lqr-x");
        let wrap = make_class(doc, "div", None, "table-wrap")?;
        wrap.append_child(&x)?;
        parts.push(wrap);
        let k = matrix_element(doc, &l.gain)?;
        k.set_id("pw-lqr-gain");
        let wrap = make_class(doc, "div", None, "table-wrap")?;
        wrap.append_child(&k)?;
        parts.push(wrap);
        parts.push(make_class(doc, "p", Some(&format!("LQR closed-loop poles: {}", l.closed_loop_poles)), "fine-print")?);
        if let Some(m) = &l.margins {
            parts.push(make_class(doc, "p", Some(m), "fine-print")?);
        }
    }
    if let Some(sr) = &c.search {
        parts.push(make(doc, "h4", Some("Fastest design within the actuator limits"))?);
        let list = make_class(doc, "ul", None, "facts")?;
        let mut lines = vec![sr.speed_factor.clone(), sr.limiting.clone(), sr.peak_ratio.clone()];
        lines.extend(sr.settling_times.iter().cloned());
        lines.push(sr.monotonicity.clone());
        lines.push(format!("{} trial designs were simulated.", sr.evaluations));
        lines.extend(sr.notes.iter().cloned());
        for line in &lines {
            list.append_child(&make(doc, "li", Some(line))?.into())?;
        }
        list.set_id("pw-search-facts");
        parts.push(list);
    }
    fill(doc, ids::CHOICE_DETAILS, &parts)
}

fn set_text_or_hide(doc: &Document, id: &str, text: Option<&str>) -> Result<(), JsValue> {
    let el = by_id(doc, id)?;
    el.set_text_content(Some(text.unwrap_or("")));
    set_hidden(&el, text.is_none())
}

fn fill_matrices(doc: &Document, id: &str, tables: &[&MatrixTable]) -> Result<(), JsValue> {
    let els: Vec<Element> = tables.iter().map(|m| matrix_element(doc, m)).collect::<Result<_, _>>()?;
    fill(doc, id, &els)?;
    set_hidden_id(doc, id, tables.is_empty())
}

/// Every controller matrix as tab-separated text: K, then K_u, the tracking gains, L (L_c), Φ, Γ.
fn controller_text(r: &Report) -> String {
    let mut parts = vec![r.gain.text.clone()];
    if let Some(c) = &r.controller {
        parts.extend(c.delay_gain.iter().map(|m| m.text.clone()));
        parts.extend(c.tracking.iter().map(|m| m.text.clone()));
        if let Some(o) = &c.observer {
            parts.push(o.gain.text.clone());
            parts.extend(o.current_gain.iter().map(|m| m.text.clone()));
        }
        parts.extend(c.discrete_plant.iter().map(|m| m.text.clone()));
    }
    parts.join("\n")
}

fn render_controller(doc: &Document, page: &mut PageState, c: Option<&ControllerReport>) -> Result<(), JsValue> {
    let Some(c) = c else {
        if !page.unchanged(ids::CONTROLLER, 0) {
            set_hidden_id(doc, ids::CONTROLLER, true)?;
            set_hidden_id(doc, ids::OBSERVER, true)?;
            set_hidden_id(doc, ids::LOOP_SECTION, true)?;
        }
        return Ok(());
    };
    let key = hash_of(&(&c.law, &c.domain, &c.sample_rate, &c.delay_gain, &c.tracking, &c.tracking_note, &c.discrete_plant, &c.observer));
    if !page.unchanged(ids::CONTROLLER, key) {
        set_hidden_id(doc, ids::CONTROLLER, false)?;
        set_text(doc, ids::CONTROLLER_DOMAIN, &c.domain)?;
        let lines: Vec<Element> = c.law.iter().map(|l| make(doc, "li", Some(l))).collect::<Result<_, _>>()?;
        fill(doc, ids::CONTROLLER_LAW, &lines)?;
        set_text_or_hide(doc, ids::SAMPLE_RATE, c.sample_rate.as_deref())?;
        fill_matrices(doc, ids::DELAY_GAIN, &c.delay_gain.iter().collect::<Vec<_>>())?;
        fill_matrices(doc, ids::TRACKING_GAINS, &c.tracking.iter().collect::<Vec<_>>())?;
        set_text_or_hide(doc, ids::TRACKING_NOTE, c.tracking_note.as_deref())?;
        fill_matrices(doc, ids::DISCRETE_PLANT, &c.discrete_plant.iter().collect::<Vec<_>>())?;
        set_hidden_id(doc, ids::DISCRETE_BLOCK, c.discrete_plant.is_empty())?;
        match &c.observer {
            Some(o) => {
                set_hidden_id(doc, ids::OBSERVER, false)?;
                set_text(doc, ids::OBSERVER_SUMMARY, &o.summary)?;
                let l = matrix_element(doc, &o.gain)?;
                l.set_id("pw-obs-gain");
                fill(doc, ids::OBSERVER_TABLE, &[l])?;
                fill_matrices(doc, ids::OBSERVER_CURRENT, &o.current_gain.iter().collect::<Vec<_>>())?;
                let mut text = o.gain.text.clone();
                if let Some(lc) = &o.current_gain {
                    text.push('\n');
                    text.push_str(&lc.text);
                }
                set_text(doc, ids::OBSERVER_TEXT, &text)?;
                fill(doc, ids::OBSERVER_POLES, &[pole_table(doc, "Observer poles: requested and achieved (the eigenvalues of the observer's error dynamics)", &o.poles)?])?;
                set_text(doc, ids::OBSERVER_NOISE, &o.noise)?;
            }
            None => set_hidden_id(doc, ids::OBSERVER, true)?,
        }
    }
    let key = hash_of(&(&c.loop_summary, &c.loop_outputs, &c.loop_inputs, &c.estimation));
    if !page.unchanged(ids::LOOP_SECTION, key) {
        set_hidden_id(doc, ids::LOOP_SECTION, c.loop_summary.is_none())?;
        set_text(doc, ids::LOOP_SUMMARY, c.loop_summary.as_deref().unwrap_or(""))?;
        let outputs = if c.loop_outputs.is_empty() {
            make_class(doc, "p", Some("No reference is tracked, so there are no step figures: choose feedforward or integral tracking to see rise and settling times."), "empty")?
        } else {
            let settling = format!("settling time ({}) after the step", c.settling_band);
            let head = strings(&["tracked output", "reference step", "rise time (10–90 %)", &settling, "overshoot", "error at the end (r − y)"]);
            let rows: Vec<Vec<String>> = c.loop_outputs.iter().map(|o| vec![o.name.clone(), o.reference.clone(), o.rise_time.clone(), o.settling_time.clone(), o.overshoot.clone(), o.steady_state_error.clone()]).collect();
            let t = table(doc, Some("Loop simulation: step figures of each tracked output"), &head, &rows, true, 1)?;
            t.set_id("pw-loop-metrics");
            t
        };
        fill(doc, ids::LOOP_TABLE, &[outputs])?;
        let head = strings(&["input", "peak commanded |u|", "limit", "time saturated"]);
        let rows: Vec<Vec<String>> = c.loop_inputs.iter().map(|i| vec![i.name.clone(), i.peak.clone(), i.limit.clone(), i.saturated.clone()]).collect();
        fill(doc, ids::LOOP_INPUT_TABLE, &[table(doc, Some("Loop simulation: each input's peak command against its limit"), &head, &rows, true, 1)?])?;
        set_hidden_id(doc, ids::ESTIMATION, c.estimation.is_empty())?;
        if !c.estimation.is_empty() {
            let head = strings(&["state", "peak |x − x̂|", "|x − x̂| at the end"]);
            let rows: Vec<Vec<String>> = c.estimation.iter().map(|e| vec![e.name.clone(), e.peak.clone(), e.last.clone()]).collect();
            fill(doc, ids::ESTIMATION_TABLE, &[table(doc, Some("Loop simulation: estimation error of each state"), &head, &rows, true, 1)?])?;
        }
    }
    Ok(())
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
    set_hidden_id(doc, ids::POLE_CHOICE, true)?;
    fill(doc, ids::WARNINGS, &[make(doc, "li", Some(message))?])?;
    fill(doc, ids::STATE_TABLE, &[])?;
    fill(doc, ids::INPUT_TABLE, &[])?;
    set_hidden_id(doc, ids::CONTROLLER, true)?;
    set_hidden_id(doc, ids::OBSERVER, true)?;
    set_hidden_id(doc, ids::LOOP_SECTION, true)?;
    set_text(doc, ids::SIMULATION, "No response: without a stabilising gain there is nothing to simulate.")
}

fn pole_map_label(scene: &PoleMapScene) -> String {
    let mut parts = Vec::new();
    if !scene.closed_loop.is_empty() {
        parts.push(format!("{} closed-loop poles", scene.closed_loop.len()));
    }
    if !scene.observer.is_empty() {
        parts.push(format!("{} observer poles", scene.observer.len()));
    }
    if !scene.not_assigned.is_empty() {
        parts.push(format!("{} requested poles that could not be assigned", scene.not_assigned.len()));
    }
    parts.push(format!("{} open-loop poles", scene.open_loop.len()));
    let plane = if scene.discrete { "Pole map in the z-plane with the unit circle" } else { "Pole map in the complex plane" };
    format!(
        "{plane}: {}. Focus it and press N / P to read each pole, the arrow keys to move a requested one; the pole tables in Results list them all.",
        parts.join(", ")
    )
}

fn pole_legend(scene: &PoleMapScene) -> String {
    let mut text = String::from("× closed loop (teal) and open loop (grey)");
    if !scene.observer.is_empty() {
        text.push_str("; ⊠ observer (× in a square, slate blue)");
    }
    text.push_str("; ◇ a requested pole that could not be assigned (amber)");
    if !scene.requested.is_empty() {
        text.push_str("; ○ a requested pole you can drag (teal ring)");
    }
    if !scene.pinned.is_empty() {
        text.push_str("; + the pinned design's poles (plum)");
    }
    text.push_str(". ");
    if let Some(r) = &scene.region {
        text.push_str(&format!("Dash-dot (dark amber): the boundary of the specification's region, {}. ", r.label));
    }
    text.push_str(if scene.discrete {
        "Shaded: the stable region inside the unit circle, |z| < 1 (dashed)."
    } else {
        "Shaded: the stable region, Re s < 0."
    });
    text
}

/// The device pixel ratio, clamped to 1…4.
fn pixel_ratio() -> f64 {
    web_sys::window()
        .map(|w| w.device_pixel_ratio())
        .filter(|d| d.is_finite() && *d > 0.0)
        .unwrap_or(1.0)
        .clamp(1.0, 4.0)
}

impl PageState {
    fn canvas(&mut self, id: &str) -> Result<&mut CanvasState, JsValue> {
        self.canvases.iter_mut().find(|c| c.id == id).ok_or_else(|| js_err("not a page canvas", id))
    }

    /// The CSS size of canvas `id`: cached, or read from layout when not known yet.
    fn canvas_rect(&mut self, id: &str) -> Result<Rect, JsValue> {
        let state = self.canvas(id)?;
        if let Some(r) = state.size {
            return Ok(r);
        }
        let canvas = find_canvas(id)?;
        let (w, h) = (canvas.client_width(), canvas.client_height());
        if w > 0 && h > 0 {
            let r = Rect::sized(f64::from(w), f64::from(h));
            state.size = Some(r);
            Ok(r)
        } else {
            Ok(Rect::sized(f64::from(canvas.width()), f64::from(canvas.height())))
        }
    }

    /// Paints `picture` on canvas `id` unless that very picture is already there.
    fn paint(&mut self, id: &'static str, picture: Picture) -> Result<(), JsValue> {
        let rect = self.canvas_rect(id)?;
        let dpr = pixel_ratio();
        let state = self.canvas(id)?;
        if let Some((r, d, p)) = &state.painted {
            if *r == rect && *d == dpr && *p == picture {
                return Ok(());
            }
        }
        state.painted = None;
        let t0 = now_ms();
        let result = paint_picture(id, rect, dpr, &picture);
        phase(id, now_ms() - t0);
        result?;
        if let Ok(state) = self.canvas(id) {
            state.painted = Some((rect, dpr, picture));
        }
        Ok(())
    }
}

fn time_or_message(scene: Option<TimePlotScene>, empty: &str) -> Picture {
    match scene {
        Some(s) if !s.series.is_empty() && !s.t.is_empty() => Picture::Time(s),
        _ => Picture::Message(empty.to_string()),
    }
}

/// Paint every visible canvas from the page state (unchanged pictures are left alone).
fn paint_all(page: &mut PageState) -> Result<(), JsValue> {
    let doc = document()?;
    let map = by_id(&doc, ids::POLE_MAP)?;
    let label = pole_map_label(&page.pole_scene);
    if map.get_attribute("aria-label").as_deref() != Some(label.as_str()) {
        map.set_attribute("aria-label", &label)?;
    }
    let legend_text = pole_legend(&page.pole_scene);
    let legend_el = by_id(&doc, ids::POLE_LEGEND)?;
    if legend_el.text_content().as_deref() != Some(legend_text.as_str()) {
        legend_el.set_text_content(Some(&legend_text));
    }
    let rect = page.canvas_rect(ids::POLE_MAP)?;
    match page.pole_scene.unit_circle(rect) {
        Some([x, y, r]) => map.set_attribute("data-unit-circle", &format!("{x:.2} {y:.2} {r:.2}"))?,
        None => map.remove_attribute("data-unit-circle")?,
    }
    // Where the editable markers are (CSS pixels), for tests and assistive scripts.
    let frame = page.pole_scene.frame(rect);
    let requested: Vec<String> = page.pole_scene.requested.iter().map(|p| frame.to_pixel(*p)).map(|q| format!("{:.2},{:.2}", q[0], q[1])).collect();
    let requested = requested.join(" ");
    if map.get_attribute("data-requested-px").as_deref() != Some(requested.as_str()) {
        map.set_attribute("data-requested-px", &requested)?;
    }
    let pinned_count = page.pole_scene.pinned.len().to_string();
    if map.get_attribute("data-pinned-poles").as_deref() != Some(pinned_count.as_str()) {
        map.set_attribute("data-pinned-poles", &pinned_count)?;
    }
    page.paint(ids::POLE_MAP, Picture::Poles(page.pole_scene.clone()))?;
    let pinned = page.pinned.as_ref().filter(|p| Some(p.domain) == page.design.as_ref().map(|d| d.domain));
    let overlay = |mut scene: TimePlotScene, pin: Option<&Vec<crate::plot::PinnedSeries>>| {
        if let Some(p) = pin {
            scene.pinned = p.clone();
        }
        scene
    };
    let normalised = usize::from(page.normalised);
    let (states, inputs, loop_pictures) = match (&page.shown, &page.design, &page.report) {
        (Shown::Design, Some(d), Some(r)) => (
            Picture::Time(overlay(form::states_scene(d, page.normalised), pinned.and_then(|p| p.states.get(normalised)))),
            Picture::Time(overlay(form::inputs_scene(d), pinned.map(|p| &p.inputs))),
            d.closed_loop.as_ref().map(|_| {
                (
                    time_or_message(
                        form::loop_outputs_scene(d, r).map(|s| overlay(s, pinned.map(|p| &p.loop_outputs))),
                        "No outputs to show: enter the output matrix C in Measurement.",
                    ),
                    time_or_message(form::loop_inputs_scene(d, r), "No inputs to show."),
                    form::estimation_scene(d, r).map(Picture::Time),
                )
            }),
        ),
        (Shown::Infeasible, _, _) => {
            let text = "No response: the design is not possible.".to_string();
            (Picture::Message(text.clone()), Picture::Message(text), None)
        }
        _ => {
            let text = "No design yet: complete the plant and the targets above.".to_string();
            (Picture::Message(text.clone()), Picture::Message(text), None)
        }
    };
    if let Some((outputs, loop_inputs, estimation)) = loop_pictures {
        page.paint(ids::LOOP_PLOT, outputs)?;
        page.paint(ids::LOOP_INPUT_PLOT, loop_inputs)?;
        if let Some(e) = estimation {
            page.paint(ids::ESTIMATION_PLOT, e)?;
        }
    }
    page.paint(ids::STATE_PLOT, states)?;
    page.paint(ids::INPUT_PLOT, inputs)
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
/// `data-cycle-ms` (and the phases in `data-cycle-phases`).
#[wasm_bindgen]
pub fn update_page() -> Result<JsValue, JsValue> {
    let start = now_ms();
    PHASES.with(|p| {
        if let Ok(mut v) = p.try_borrow_mut() {
            v.clear();
        }
    });
    let doc = document()?;
    let input = read_form(&doc)?;
    let t_read = now_ms();
    phase("read", t_read - start);
    let mut outcome = evaluate_form(&input);
    let t_eval = now_ms();
    phase("evaluate", t_eval - t_read);
    let status = outcome.status;
    let status_text = with_page(|page| {
        page.form_history.note(&input);
        sync_history(page, &input);
        show_field_feedback(&doc, page, &input, &outcome)?;
        phase("feedback", now_ms() - t_eval);
        let text = match status {
            FormStatus::Designed => {
                let (design, report) = match (outcome.design.take(), outcome.report.take()) {
                    (Some(d), Some(r)) => (d, r),
                    // invariant: evaluate_form sets both with FormStatus::Designed; treat otherwise as an internal error.
                    _ => return Err(JsValue::from_str("internal error: a design without its report")),
                };
                let discrete = design.domain == crate::analysis::Domain::Discrete;
                let mut scene = form::pole_map_scene(&design);
                scene.fit_poles = page.fit_poles;
                page.plane_map = plane_map_for(&input, &design);
                page.pole_scene = scene;
                let text = format!(
                    "Designed: {} state{}, {} input{}; {} warning{}.",
                    design.plant.states,
                    if design.plant.states == 1 { "" } else { "s" },
                    design.plant.inputs,
                    if design.plant.inputs == 1 { "" } else { "s" },
                    report.warnings.len(),
                    if report.warnings.len() == 1 { "" } else { "s" }
                );
                if page.shown == Shown::Infeasible {
                    page.rendered.clear();
                }
                page.design = Some(design);
                page.report = Some(report);
                page.analysis = None;
                page.shown = Shown::Design;
                edit_layers(page, &input);
                // Canvases first: text drawn on a canvas after the page changed would make
                // the browser recompute the page's styles there and then.
                paint_all(page)?;
                let t0 = now_ms();
                if let Some(report) = page.report.take() {
                    let rendered = render_report(&doc, page, &report, discrete);
                    page.report = Some(report);
                    rendered?;
                }
                note(&doc, None, "note")?;
                mark_stale(&doc, false)?;
                render_compare(&doc, page)?;
                refresh_readout(page)?;
                refresh_edit_controls(page)?;
                phase("results", now_ms() - t0);
                text
            }
            FormStatus::Invalid => {
                let list = error_list(&outcome.errors);
                let text = match page.shown {
                    Shown::Nothing => format!("No design yet: check {list}."),
                    _ => format!("Input needs attention ({list}); the results below are from the last valid input."),
                };
                if page.shown == Shown::Nothing {
                    paint_all(page)?;
                } else {
                    // The edited list (e.g. one pole too many after an add) stays visible.
                    edit_layers(page, &input);
                    paint_all(page)?;
                }
                note(&doc, Some(&text), "note is-stale-note")?;
                mark_stale(&doc, page.shown != Shown::Nothing)?;
                refresh_edit_controls(page)?;
                format!("Not updated: {} field{} to fix ({list}).", outcome.errors.len(), if outcome.errors.len() == 1 { "" } else { "s" })
            }
            FormStatus::Infeasible => {
                let message = outcome.design_error.clone().unwrap_or_else(|| "The design is not possible.".into());
                page.pole_scene = outcome.analysis.as_ref().map(form::open_loop_scene).unwrap_or_default();
                page.pole_scene.fit_poles = page.fit_poles;
                page.focus = None;
                page.focus_requested = None;
                page.requested_markers.clear();
                page.design = None;
                page.report = None;
                page.analysis = outcome.analysis.take();
                page.shown = Shown::Infeasible;
                paint_all(page)?;
                render_infeasible(&doc, &message, page.analysis.as_ref())?;
                page.rendered.clear();
                page.tables.clear();
                note(&doc, Some(&message), "note is-infeasible")?;
                mark_stale(&doc, false)?;
                set_hidden_id(&doc, ids::COMPARE, true)?;
                refresh_readout(page)?;
                refresh_edit_controls(page)?;
                "Design not possible with this plant: see Results.".to_string()
            }
        };
        Ok(text)
    })?;
    let cycle_ms = now_ms() - start;
    let status_el = by_id(&doc, ids::STATUS)?;
    status_el.set_text_content(Some(&format!("{status_text} Cycle time {:.1} ms.", cycle_ms)));
    status_el.set_attribute("data-cycle-ms", &format!("{cycle_ms}"))?;
    let phases = PHASES.with(|p| p.try_borrow().map(|v| v.iter().map(|(k, ms)| format!("{k}={ms:.3}")).collect::<Vec<_>>().join(" ")).unwrap_or_default());
    status_el.set_attribute("data-cycle-phases", &phases)?;
    status_el.set_attribute("data-outcome", match status {
        FormStatus::Designed => "designed",
        FormStatus::Invalid => "invalid",
        FormStatus::Infeasible => "infeasible",
    })?;
    if status_el.class_list().contains("is-error") != (status != FormStatus::Designed) {
        status_el.class_list().toggle_with_force("is-error", status != FormStatus::Designed)?;
    }
    document::refresh_buttons(&doc)?;
    to_js(&CycleSummary { status, cycle_ms, errors: outcome.errors }, "cycle summary")
}

/// The page's canvases changed size (called from a ResizeObserver, when layout is fresh):
/// re-read their CSS sizes and repaint those that changed.
#[wasm_bindgen]
pub fn canvases_resized() -> Result<(), JsValue> {
    with_page(|page| {
        for c in page.canvases.iter_mut() {
            if let Ok(canvas) = find_canvas(c.id) {
                let (w, h) = (canvas.client_width(), canvas.client_height());
                c.size = if w > 0 && h > 0 { Some(Rect::sized(f64::from(w), f64::from(h))) } else { None };
            }
        }
        paint_all(page)
    })
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

/// Fit the pole map's view to the poles (`true`) or show the whole stable-region context
/// (the origin, and the unit circle for a digital design).
#[wasm_bindgen]
pub fn set_pole_zoom(fit: bool) -> Result<(), JsValue> {
    with_page(|page| {
        page.fit_poles = fit;
        page.pole_scene.fit_poles = fit;
        paint_all(page)
    })
}

/// Text to copy: `"gain"` (K), `"observer"` (L, and L_c) or `"controller"` (every matrix of the
/// controller); empty when there is none.
#[wasm_bindgen]
pub fn copy_text(which: &str) -> Result<String, JsValue> {
    with_page(|page| {
        let Some(r) = &page.report else { return Ok(String::new()) };
        Ok(match which {
            "gain" => r.gain.text.clone(),
            "observer" => r
                .controller
                .as_ref()
                .and_then(|c| c.observer.as_ref())
                .map(|o| {
                    let mut t = o.gain.text.clone();
                    if let Some(lc) = &o.current_gain {
                        t.push('\n');
                        t.push_str(&lc.text);
                    }
                    t
                })
                .unwrap_or_default(),
            "controller" => controller_text(r),
            other => return Err(js_err("copy", format!("nothing called {other} to copy"))),
        })
    })
}

fn set_name(set: PoleSet) -> &'static str {
    match set {
        PoleSet::ClosedLoop => "Closed-loop pole",
        PoleSet::OpenLoop => "Open-loop pole",
        PoleSet::NotAssigned => "Requested pole that could not be assigned",
        PoleSet::Observer => "Observer pole",
        PoleSet::Requested => "Requested pole",
        PoleSet::Pinned => "Pinned design's closed-loop pole",
    }
}

/// `Closed-loop pole 2 of 4: −12 + 9j (damping ratio 0.8, natural frequency 15 rad/s).`; for a
/// z-plane pole both `z` and the equivalent `s = ln z / T`.
fn readout(scene: &PoleMapScene, pick: &PolePick, sample_time: Option<f64>) -> String {
    let same: Vec<PolePick> = scene.markers().into_iter().filter(|p| p.set == pick.set).collect();
    let k = same.iter().position(|p| p.index == pick.index).map_or(1, |k| k + 1);
    let head = format!("{} {k} of {}", set_name(pick.set), same.len());
    let tail = if pick.set == PoleSet::Requested { " Drag it, or move it with the arrow keys (Shift: larger steps); Delete removes it." } else { "" };
    format!("{}{tail}", readout_value(scene, pick, sample_time, &head))
}

fn readout_value(scene: &PoleMapScene, pick: &PolePick, sample_time: Option<f64>, head: &str) -> String {
    let z = Complex64::new(pick.re, pick.im);
    match (scene.discrete, sample_time) {
        (true, Some(t)) => match form::z_to_s(z, t) {
            Some(s) => {
                let character = form::pole_character(s);
                let extra = if character.is_empty() { String::new() } else { format!(" ({character})") };
                format!("{head}: z = {} (|z| = {}); s = ln z / T = {}{extra}.", form::short_pole(z), fmt_num(z.norm()), form::short_pole(s))
            }
            None => format!("{head}: z = {}; s = ln z / T = −∞ (gone after one sample).", form::short_pole(z)),
        },
        (true, None) => format!("{head}: z = {} (|z| = {}).", form::short_pole(z), fmt_num(z.norm())),
        _ => {
            let character = form::pole_character(z);
            let extra = if character.is_empty() { String::new() } else { format!(" ({character})") };
            format!("{head}: {}{extra}.", form::short_pole(z))
        }
    }
}

fn show_readout(text: &str) -> Result<(), JsValue> {
    let doc = document()?;
    let el = by_id(&doc, ids::POLE_PICK)?;
    if el.text_content().as_deref() != Some(text) {
        el.set_text_content(Some(text));
    }
    Ok(())
}

fn refresh_readout(page: &PageState) -> Result<(), JsValue> {
    let markers = page.pole_scene.markers();
    let t = page.design.as_ref().and_then(|d| d.sample_time);
    match page.focus.and_then(|i| markers.get(i)) {
        Some(p) => show_readout(&readout(&page.pole_scene, p, t)),
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
        note_focus(page);
        page.pole_scene.highlight = markers.get(next).map(|p| [p.re, p.im]);
        page.paint(ids::POLE_MAP, Picture::Poles(page.pole_scene.clone()))?;
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
        page.focus_requested = None;
        if page.pole_scene.highlight.take().is_some() {
            page.paint(ids::POLE_MAP, Picture::Poles(page.pole_scene.clone()))?;
        }
        refresh_readout(page)
    })
}

/// Pointer over the pole map at CSS pixel offset (`x`, `y`): read out the pole under
/// it, or (if none) the keyboard choice or the hint.
#[wasm_bindgen]
pub fn hover_pole(x: f64, y: f64) -> Result<(), JsValue> {
    with_page(|page| {
        let rect = page.canvas_rect(ids::POLE_MAP)?;
        let t = page.design.as_ref().and_then(|d| d.sample_time);
        match page.pole_scene.pick(rect, [x, y]) {
            Some(p) => show_readout(&readout(&page.pole_scene, &p, t)),
            None => refresh_readout(page),
        }
    })
}

// ---------------------------------------------------------------------------
// Editing poles on the map, undo/redo, pin and compare
// ---------------------------------------------------------------------------

/// The poles field is the list edited from the map: when the poles are listed (not chosen
/// by a pattern, a specification or LQR) and not rescaled by the fastest-design search.
fn list_is_editable(input: &FormInput) -> bool {
    input.choice("pole_source") == "list" && input.choice("search") != "true"
}

/// A digital design given by s-plane poles is shown on the z-plane map.
fn plane_map_for(input: &FormInput, design: &DesignResult) -> PlaneMap {
    match (design.domain == crate::analysis::Domain::Discrete, design.sample_time, input.choice("plane").as_str()) {
        (true, Some(t), "s") => PlaneMap::SampledFromS { sample_time: t },
        _ => PlaneMap::Same,
    }
}

/// Keeps the edit history in step with the poles field: text typed there becomes one undo
/// step (nothing is recorded while a drag is under way: the drag writes the field itself).
fn sync_history(page: &mut PageState, input: &FormInput) {
    if !list_is_editable(input) {
        return;
    }
    let Ok(poles) = crate::poles::parse_poles(&input.poles) else { return };
    let Ok(set) = editing::PoleSet::from_poles(&poles) else { return };
    match page.history.as_mut() {
        None => page.history = Some(EditHistory::new(set, EditParams::default())),
        Some(h) if h.dragging().is_none() && *h.current() != set => {
            // A refused replacement (not possible for a list from_poles accepted) changes nothing.
            let _ = h.apply(&Edit::Replace(poles));
        }
        Some(_) => {}
    }
}

/// Fills the map's editable layer (the requested poles, through the plane map), the pinned
/// design's poles and the drag's fixed view, and puts the keyboard ring back on the chosen
/// requested pole.
fn edit_layers(page: &mut PageState, input: &FormInput) {
    page.requested_markers.clear();
    page.pole_scene.requested.clear();
    if list_is_editable(input) {
        if let Some(shown) = page.history.as_ref().and_then(|h| page.plane_map.map_set(h.current()).ok()) {
            page.requested_markers = shown.markers();
            page.pole_scene.requested = page.requested_markers.iter().map(|m| m.point).collect();
        }
    }
    let discrete = page.pole_scene.discrete;
    page.pole_scene.pinned = match &page.pinned {
        Some(p) if (p.domain == crate::analysis::Domain::Discrete) == discrete => p.poles.clone(),
        _ => Vec::new(),
    };
    page.pole_scene.view = page.drag.as_ref().map(|d| d.frame.view());
    refocus(page);
}

/// Recomputes the keyboard position (an index into the scene's markers) and the ring.
fn refocus(page: &mut PageState) {
    let markers = page.pole_scene.markers();
    if let Some(chosen) = page.focus_requested {
        match page.requested_markers.iter().position(|m| (m.entry, m.member) == chosen) {
            Some(k) => page.focus = markers.iter().position(|p| p.set == PoleSet::Requested && p.index == k),
            None => {
                page.focus_requested = None;
                page.focus = None;
            }
        }
    }
    page.focus = page.focus.filter(|i| *i < markers.len());
    page.pole_scene.highlight = page.focus.and_then(|i| markers.get(i)).map(|p| [p.re, p.im]);
}

/// Remembers which requested pole the keyboard position is on (if it is one).
fn note_focus(page: &mut PageState) {
    let markers = page.pole_scene.markers();
    page.focus_requested = page
        .focus
        .and_then(|i| markers.get(i))
        .filter(|p| p.set == PoleSet::Requested)
        .and_then(|p| page.requested_markers.get(p.index))
        .map(|m| (m.entry, m.member));
}

/// Writes a new pole list into the poles field and runs the design cycle.
fn commit_poles(text: &str) -> Result<(), JsValue> {
    let doc = document()?;
    set_control_value(&doc, "poles", text)?;
    update_page().map(|_| ())
}

/// [`commit_poles`] when an edit produced a new list.
fn commit_changed(text: Option<String>) -> Result<(), JsValue> {
    text.map_or(Ok(()), |t| commit_poles(&t))
}

fn show_edit_message(page: &mut PageState, message: Option<String>) -> Result<(), JsValue> {
    page.edit_message = message;
    refresh_edit_controls(page)
}

/// Enables the undo, redo, add, remove and unpin buttons to match the state, and writes
/// the editing note under the map.
fn refresh_edit_controls(page: &PageState) -> Result<(), JsValue> {
    let doc = document()?;
    let editable = page.history.is_some() && page.last_input_editable();
    let set_disabled = |id: &str, disabled: bool, title: &str| -> Result<(), JsValue> {
        if let Some(el) = doc.get_element_by_id(id) {
            if el.has_attribute("disabled") != disabled {
                el.toggle_attribute_with_force("disabled", disabled)?;
            }
            if el.get_attribute("title").as_deref() != Some(title) {
                el.set_attribute("title", title)?;
            }
        }
        Ok(())
    };
    let (undo, redo) = page.history.as_ref().map_or((0, 0), |h| (h.undo_steps(), h.redo_steps()));
    set_disabled("pw-undo", undo == 0 || !editable, &format!("Undo the last pole edit ({undo} step{} to undo; Ctrl+Z on the map)", if undo == 1 { "" } else { "s" }))?;
    set_disabled("pw-redo", redo == 0 || !editable, &format!("Redo ({redo} step{} to redo; Ctrl+Y on the map)", if redo == 1 { "" } else { "s" }))?;
    set_disabled("pw-add-real", !editable, "Add one real pole to the list (also + on the map)")?;
    set_disabled("pw-add-pair", !editable, "Add a complex-conjugate pair to the list")?;
    set_disabled("pw-remove-pole", !editable || page.focus_requested.is_none(), "Remove the chosen requested pole, or its pair (also Delete on the map)")?;
    set_disabled("pw-unpin", page.pinned.is_none(), "Stop comparing with the pinned design")?;
    set_disabled("pw-pin", page.design.is_none(), "Keep this design to compare the next ones with it")?;
    let text = match (&page.edit_message, editable) {
        (Some(m), _) => m.clone(),
        (None, true) => "Drag a ringed requested pole (its conjugate follows; a real pole stays on the real axis), or focus the map and choose one with N / P, move it with the arrow keys (Shift: larger steps), Delete removes it, + adds a real pole. The design follows live.".to_string(),
        (None, false) => "The poles are chosen for you (pattern, specification, LQR or the fastest-design search): press “Use these poles” under Pole choice to copy them into the list and edit them here.".to_string(),
    };
    if let Some(el) = doc.get_element_by_id("pw-edit-note") {
        if el.text_content().as_deref() != Some(text.as_str()) {
            el.set_text_content(Some(&text));
        }
    }
    Ok(())
}

impl PageState {
    fn last_input_editable(&self) -> bool {
        list_is_editable(&self.last_input)
    }
}

/// Pointer pressed on the pole map at CSS pixel (`x`, `y`): starts dragging the requested
/// pole under it. Returns whether a drag began (the page then captures the pointer).
#[wasm_bindgen]
pub fn pole_pointer_down(x: f64, y: f64) -> Result<bool, JsValue> {
    with_page(|page| {
        if page.requested_markers.is_empty() || !page.last_input_editable() {
            return Ok(false);
        }
        let rect = page.canvas_rect(ids::POLE_MAP)?;
        let frame = page.pole_scene.frame(rect);
        let pixels: Vec<[f64; 2]> = page.pole_scene.requested.iter().map(|p| frame.to_pixel(*p)).collect();
        let radius = page.history.as_ref().map_or(crate::plot::HIT_RADIUS_PX, |h| h.params().hit_radius_px) + 3.0;
        let Some(k) = crate::plot::hit_test([x, y], &pixels, radius) else { return Ok(false) };
        let Some(marker) = page.requested_markers.get(k).copied() else { return Ok(false) };
        let Some(history) = page.history.as_mut() else { return Ok(false) };
        history.begin_drag(marker.entry).map_err(|e| js_err("drag", e))?;
        page.drag = Some(DragView { frame, samples: Vec::new() });
        page.pole_scene.view = Some(frame.view());
        page.focus_requested = Some((marker.entry, marker.member));
        page.edit_message = None;
        refocus(page);
        page.paint(ids::POLE_MAP, Picture::Poles(page.pole_scene.clone()))?;
        refresh_readout(page)?;
        Ok(true)
    })
}

/// Pointer moved over the pole map: during a drag, moves the pole there and redesigns
/// (the update's duration is recorded); otherwise reads out the pole under the pointer.
#[wasm_bindgen]
pub fn pole_pointer_move(x: f64, y: f64) -> Result<(), JsValue> {
    let start = now_ms();
    let moved = with_page(|page| {
        let Some(frame) = page.drag.as_ref().map(|d| d.frame) else { return Ok(None) };
        let map = page.plane_map;
        let Some(history) = page.history.as_mut() else { return Ok(None) };
        match history.drag_to_pixel_mapped(&frame, [x, y], map) {
            Ok(Change::Changed) => Ok(Some(history.current().text())),
            Ok(Change::Unchanged) => Ok(Some(String::new())),
            Err(e) => {
                show_edit_message(page, Some(format!("The pole stays where it was: {e}.")))?;
                Ok(Some(String::new()))
            }
        }
    })?;
    match moved {
        None => hover_pole(x, y),
        Some(text) if text.is_empty() => Ok(()),
        Some(text) => {
            commit_poles(&text)?;
            let ms = now_ms() - start;
            with_page(|page| {
                if let Some(d) = page.drag.as_mut() {
                    d.samples.push(ms);
                }
                Ok(())
            })?;
            let doc = document()?;
            by_id(&doc, ids::POLE_MAP)?.set_attribute("data-drag-last-ms", &format!("{ms}"))
        }
    }
}

/// The median of `samples` (`None` when empty).
fn median(samples: &[f64]) -> Option<f64> {
    let mut v: Vec<f64> = samples.iter().copied().filter(|x| x.is_finite()).collect();
    if v.is_empty() {
        return None;
    }
    v.sort_by(f64::total_cmp);
    let m = v.len() / 2;
    Some(if v.len() % 2 == 1 { v[m] } else { (v[m - 1] + v[m]) / 2.0 })
}

/// Pointer released (`cancel = false`) or the drag abandoned (`cancel = true`, e.g. Escape):
/// ends the drag as one undo step (or puts the pole back), refits the view, and records the
/// drag's median update time in the map's `data-drag-median-ms` (`data-drag-updates` moves).
#[wasm_bindgen]
pub fn pole_pointer_up(cancel: bool) -> Result<(), JsValue> {
    let (restore, samples) = with_page(|page| {
        let Some(drag) = page.drag.take() else { return Ok((None, Vec::new())) };
        let restore = page.history.as_mut().and_then(|h| {
            if cancel {
                (h.cancel_drag() == Change::Changed).then(|| h.current().text())
            } else {
                h.end_drag();
                None
            }
        });
        Ok((restore, drag.samples))
    })?;
    let doc = document()?;
    let map = by_id(&doc, ids::POLE_MAP)?;
    if let Some(m) = median(&samples) {
        map.set_attribute("data-drag-median-ms", &format!("{m}"))?;
        map.set_attribute("data-drag-updates", &samples.len().to_string())?;
    }
    match restore {
        Some(text) => commit_poles(&text),
        None => with_page(|page| {
            page.pole_scene.view = None;
            paint_all(page)?;
            refresh_edit_controls(page)
        }),
    }
}

/// Arrow key on the pole map: moves the chosen requested pole (`direction` = `left`,
/// `right`, `up`, `down`; `large` for the larger step) and redesigns.
#[wasm_bindgen]
pub fn move_pole(direction: &str, large: bool) -> Result<(), JsValue> {
    let dir = match direction {
        "left" => Direction::Left,
        "right" => Direction::Right,
        "up" => Direction::Up,
        "down" => Direction::Down,
        other => return Err(js_err("move_pole", format!("no direction called {other}"))),
    };
    let text = with_page(|page| {
        let Some((entry, member)) = page.focus_requested.filter(|_| page.last_input_editable()) else {
            show_edit_message(page, Some("Choose a requested pole first (N / P on the map, or click one): only the ringed requested poles can be moved.".into()))?;
            return Ok(None);
        };
        let rect = page.canvas_rect(ids::POLE_MAP)?;
        let frame = page.pole_scene.frame(rect);
        let map = page.plane_map;
        let Some(history) = page.history.as_mut() else { return Ok(None) };
        let step = if large { StepSize::Large } else { StepSize::Normal };
        let outcome = editing::nudge_mapped(history.current(), entry, dir.for_member(member), step, &frame, &EditParams::default(), map);
        match outcome {
            Ok(NudgeOutcome::Edit(edit)) => match history.apply(&editing::rounded_move(edit)) {
                Ok(Change::Changed) => {
                    page.edit_message = None;
                    Ok(Some(history.current().text()))
                }
                Ok(Change::Unchanged) => Ok(None),
                Err(e) => {
                    show_edit_message(page, Some(format!("The pole stays where it was: {e}.")))?;
                    Ok(None)
                }
            },
            Ok(NudgeOutcome::NoChange(reason)) => {
                show_edit_message(page, Some(format!("{reason}.")))?;
                Ok(None)
            }
            Err(e) => {
                show_edit_message(page, Some(format!("The pole stays where it was: {e}.")))?;
                Ok(None)
            }
        }
    })?;
    commit_changed(text)
}

/// A new pole for the list: a little faster than the fastest real part (s-plane), or a
/// little closer to the origin than the fastest pole (z-plane list).
fn new_pole(set: &editing::PoleSet, z_plane: bool, pair: bool) -> num_complex::Complex64 {
    let poles = set.poles();
    if z_plane {
        let r = poles.iter().map(|p| p.norm()).fold(f64::INFINITY, f64::min);
        let r = if r.is_finite() && r > 0.0 { 0.8 * r.min(0.95) } else { 0.5 };
        return if pair { Complex64::new(r * 0.8, r * 0.6) } else { Complex64::new(r, 0.0) };
    }
    let fastest = poles.iter().map(|p| p.re).fold(f64::INFINITY, f64::min);
    let re = if fastest.is_finite() && fastest < 0.0 { 1.25 * fastest } else { -1.0 };
    if pair {
        Complex64::new(re, 0.75 * re.abs())
    } else {
        Complex64::new(re, 0.0)
    }
}

fn edit_list(edit: impl FnOnce(&PageState) -> Option<Edit>) -> Result<(), JsValue> {
    let text = with_page(|page| {
        if !page.last_input_editable() {
            show_edit_message(page, Some("The poles are chosen for you: press “Use these poles” under Pole choice first.".into()))?;
            return Ok(None);
        }
        let Some(e) = edit(page) else { return Ok(None) };
        let added = matches!(e, Edit::Add(_));
        let Some(history) = page.history.as_mut() else { return Ok(None) };
        match history.apply(&e) {
            Ok(Change::Changed) => {
                let text = history.current().text();
                let last = history.current().entry_count().saturating_sub(1);
                let first_member = history.current().entry(last).map(|e| if e.is_pair() { Member::Upper } else { Member::Real });
                page.focus_requested = if added { first_member.map(|m| (last, m)) } else { None };
                page.edit_message = None;
                Ok(Some(text))
            }
            Ok(Change::Unchanged) => Ok(None),
            Err(err) => {
                show_edit_message(page, Some(format!("Not changed: {err}.")))?;
                Ok(None)
            }
        }
    })?;
    commit_changed(text)
}

/// Adds a pole to the list (`kind` = `real` or `pair`; the pair adds two poles).
#[wasm_bindgen]
pub fn add_pole(kind: &str) -> Result<(), JsValue> {
    let pair = match kind {
        "real" => false,
        "pair" => true,
        other => return Err(js_err("add_pole", format!("no kind of pole called {other}"))),
    };
    edit_list(|page| {
        let z_plane = page.last_input.choice("plane") == "z";
        page.history.as_ref().map(|h| Edit::Add(new_pole(h.current(), z_plane, pair)))
    })
}

/// Removes the chosen requested pole (a pair as a whole).
#[wasm_bindgen]
pub fn remove_pole() -> Result<(), JsValue> {
    let chosen = with_page(|page| Ok(page.focus_requested))?;
    match chosen {
        Some((entry, _)) => edit_list(|_| Some(Edit::Remove { entry })),
        None => with_page(|page| show_edit_message(page, Some("Choose a requested pole first (N / P on the map, or click one).".into()))),
    }
}

/// Undo (`redo = false`) or redo the last pole edit.
#[wasm_bindgen]
pub fn undo_edit(redo: bool) -> Result<(), JsValue> {
    let text = with_page(|page| {
        if !page.last_input_editable() {
            return Ok(None);
        }
        let Some(history) = page.history.as_mut() else { return Ok(None) };
        let done = if redo { history.redo().is_some() } else { history.undo().is_some() };
        page.edit_message = if done { None } else { Some(format!("Nothing to {}.", if redo { "redo" } else { "undo" })) };
        let text = done.then(|| history.current().text());
        refresh_edit_controls(page)?;
        Ok(text)
    })?;
    commit_changed(text)
}

/// "Use these poles": copies the suggested poles (pattern, specification, LQR, or the
/// search's result) into the poles field, switches the pole choice to the list and the
/// search off, and redesigns. The design is the same; the poles can now be edited.
#[wasm_bindgen]
pub fn adopt_poles() -> Result<(), JsValue> {
    let choice = with_page(|page| Ok(page.report.as_ref().and_then(|r| r.pole_choice.clone())))?;
    let doc = document()?;
    let Some(c) = choice.filter(|c| !c.suggested_poles.trim().is_empty()) else {
        return set_text(&doc, "pw-adopt-status", "There are no suggested poles to use.");
    };
    set_control_value(&doc, "pole_source", "list")?;
    set_control_value(&doc, "search", "")?;
    set_control_value(&doc, "plane", &c.suggested_plane)?;
    if let Some(d) = &c.suggested_delay_poles {
        set_control_value(&doc, "delay_poles", d)?;
    }
    set_control_value(&doc, "poles", &c.suggested_poles)?;
    update_page()?;
    set_text(&doc, "pw-adopt-status", "Copied into the pole list: edit them there or on the pole map.")
}

/// Pins the current design for comparison (replacing an earlier pin).
#[wasm_bindgen]
pub fn pin_design() -> Result<(), JsValue> {
    with_page(|page| {
        let (Some(design), Some(report)) = (&page.design, &page.report) else {
            return show_edit_message(page, Some("There is no design to pin yet.".into()));
        };
        let label = if page.last_input_editable() { page.last_input.poles.trim().replace('\n', " ") } else { format_pairs(&design.feedback.requested_poles) };
        page.pinned = Some(Pinned::new(design, report, label, page.last_input.clone()));
        page.rendered.retain(|(k, _)| *k != ids::COMPARE);
        let doc = document()?;
        render_compare(&doc, page)?;
        let input = page.last_input.clone();
        edit_layers(page, &input);
        paint_all(page)?;
        refresh_edit_controls(page)
    })
}

/// Stops comparing with the pinned design.
#[wasm_bindgen]
pub fn unpin_design() -> Result<(), JsValue> {
    with_page(|page| {
        page.pinned = None;
        let doc = document()?;
        render_compare(&doc, page)?;
        let input = page.last_input.clone();
        edit_layers(page, &input);
        paint_all(page)?;
        refresh_edit_controls(page)
    })
}

fn format_pairs(poles: &[[f64; 2]]) -> String {
    let z: Vec<Complex64> = poles.iter().map(|p| Complex64::new(p[0], p[1])).collect();
    crate::poles::format_pole_list(&z)
}

/// The pinned-versus-current table (hidden without a pin).
fn render_compare(doc: &Document, page: &mut PageState) -> Result<(), JsValue> {
    let section = by_id(doc, ids::COMPARE)?;
    let (Some(pin), Some(design)) = (&page.pinned, &page.design) else {
        set_hidden(&section, true)?;
        return Ok(());
    };
    let current = editing::DesignSummary::from_result(design);
    let rows: Vec<Vec<String>> = editing::compare(&pin.summary, &current)
        .into_iter()
        .map(|r| {
            let better = match r.better {
                editing::Which::Pinned => "pinned",
                editing::Which::Current => "current",
                editing::Which::Same => "same",
                editing::Which::Undecided => "—",
            };
            vec![r.figure, r.pinned_text, r.current_text, better.to_string()]
        })
        .collect();
    let label = pin.label.clone();
    let key = hash_of(&(&rows, &label));
    set_hidden(&section, false)?;
    if page.unchanged(ids::COMPARE, key) {
        return Ok(());
    }
    set_text(doc, ids::COMPARE_LABEL, &format!("Pinned design: poles {label}. Lower is better for every figure."))?;
    let head = strings(&["figure", "pinned", "current", "better"]);
    page.show_table(doc, ids::COMPARE_TABLE, Some("pw-compare-rows"), "Pinned design against the current one", &head, &rows, true, 1)
}

/// A time plot's series as the pinned overlay of another plot.
fn as_pinned(scene: &TimePlotScene) -> Vec<crate::plot::PinnedSeries> {
    scene
        .series
        .iter()
        .enumerate()
        .map(|(i, ser)| crate::plot::PinnedSeries { name: format!("{} (pinned)", ser.name), t: scene.t.clone(), values: ser.values.clone(), colour: Some(ser.colour.unwrap_or(i)) })
        .collect()
}

// ---------------------------------------------------------------------------
// Canvas: the display lists of crate::draw, replayed
// ---------------------------------------------------------------------------

fn find_canvas(canvas_id: &str) -> Result<HtmlCanvasElement, JsValue> {
    let document = web_sys::window().and_then(|w| w.document()).ok_or_else(|| JsValue::from_str("no document"))?;
    let element = document.get_element_by_id(canvas_id).ok_or_else(|| js_err("no element with id", canvas_id))?;
    element.dyn_into::<HtmlCanvasElement>().map_err(|_| js_err("not a canvas", canvas_id))
}

/// The browser's own text widths, for laying out a display list.
struct CanvasText<'a> {
    ctx: &'a CanvasRenderingContext2d,
    font: std::cell::Cell<&'static str>,
}

impl TextMeasure for CanvasText<'_> {
    fn width(&self, font: &'static str, text: &str) -> f64 {
        if self.font.get() != font {
            self.ctx.set_font(font);
            self.font.set(font);
        }
        self.ctx.measure_text(text).map(|m| m.width()).unwrap_or(7.0 * text.chars().count() as f64)
    }
}

/// Canvas `canvas_id` sized for CSS size `rect` at `dpr`, drawing in CSS pixels. The bitmap
/// is resized only when its size changes (resizing reallocates it); otherwise the drawing
/// state is reset by hand.
fn prepare_canvas(canvas_id: &str, rect: Rect, dpr: f64) -> Result<(HtmlCanvasElement, CanvasRenderingContext2d), JsValue> {
    let canvas = find_canvas(canvas_id)?;
    let w = (rect.width * dpr).round().clamp(1.0, 16384.0) as u32;
    let h = (rect.height * dpr).round().clamp(1.0, 16384.0) as u32;
    let resized = canvas.width() != w || canvas.height() != h;
    if resized {
        canvas.set_width(w);
        canvas.set_height(h);
    }
    let ctx = canvas
        .get_context("2d")?
        .ok_or_else(|| js_err("no 2d context", canvas_id))?
        .dyn_into::<CanvasRenderingContext2d>()
        .map_err(|_| js_err("no 2d context", canvas_id))?;
    ctx.set_transform(dpr, 0.0, 0.0, dpr, 0.0, 0.0)?;
    if !resized {
        ctx.set_line_dash(&js_sys::Array::new())?;
        ctx.set_line_join("miter");
        ctx.set_global_alpha(1.0);
    }
    ctx.set_line_cap("butt");
    Ok((canvas, ctx))
}

/// Replays a display list on a canvas context.
fn replay(ctx: &CanvasRenderingContext2d, ops: &[DrawOp]) -> Result<(), JsValue> {
    let align = |a: Align| match a {
        Align::Left => "left",
        Align::Center => "center",
        Align::Right => "right",
    };
    let baseline = |b: Baseline| match b {
        Baseline::Top => "top",
        Baseline::Middle => "middle",
        Baseline::Bottom => "bottom",
    };
    for op in ops {
        match op {
            DrawOp::Clear { width, height } => {
                ctx.set_fill_style_str(draw::colour::BACKGROUND);
                ctx.fill_rect(0.0, 0.0, *width, *height);
            }
            DrawOp::Save => ctx.save(),
            DrawOp::ClipRect(r) => {
                ctx.begin_path();
                ctx.rect(r.x, r.y, r.width, r.height);
                ctx.clip();
            }
            DrawOp::Restore => ctx.restore(),
            DrawOp::Font(f) => ctx.set_font(f),
            DrawOp::Fill(c) => ctx.set_fill_style_str(c),
            DrawOp::Stroke(c) => ctx.set_stroke_style_str(c),
            DrawOp::LineWidth(w) => ctx.set_line_width(*w),
            DrawOp::Dash(pattern) => {
                let arr = js_sys::Array::new();
                for v in pattern {
                    arr.push(&JsValue::from_f64(*v));
                }
                ctx.set_line_dash(&arr)?;
            }
            DrawOp::LineCap(Cap::Butt) => ctx.set_line_cap("butt"),
            DrawOp::LineCap(Cap::Round) => ctx.set_line_cap("round"),
            DrawOp::RoundJoin => ctx.set_line_join("round"),
            DrawOp::Alpha(a) => ctx.set_global_alpha(*a),
            DrawOp::FillRect(r) => ctx.fill_rect(r.x, r.y, r.width, r.height),
            DrawOp::StrokeRect(r) => ctx.stroke_rect(r.x, r.y, r.width, r.height),
            DrawOp::StrokePath(d) => {
                if let Ok(path) = Path2d::new_with_path_string(d) {
                    ctx.stroke_with_path(&path);
                }
            }
            DrawOp::FillCircle { centre, radius } | DrawOp::StrokeCircle { centre, radius } => {
                ctx.begin_path();
                ctx.arc(centre[0], centre[1], *radius, 0.0, std::f64::consts::TAU)?;
                if matches!(op, DrawOp::FillCircle { .. }) {
                    ctx.fill();
                } else {
                    ctx.stroke();
                }
            }
            DrawOp::Text { text, at, align: a, baseline: b } => {
                ctx.set_text_align(align(*a));
                ctx.set_text_baseline(baseline(*b));
                ctx.fill_text(text, at[0], at[1])?;
            }
        }
    }
    Ok(())
}

/// Builds `picture`'s display list (text measured by the canvas) and replays it.
fn paint_picture(canvas_id: &str, rect: Rect, dpr: f64, picture: &Picture) -> Result<(), JsValue> {
    let (canvas, ctx) = prepare_canvas(canvas_id, rect, dpr)?;
    let measure = CanvasText { ctx: &ctx, font: std::cell::Cell::new("") };
    let ops = match picture {
        Picture::Poles(scene) => draw::pole_map(scene, rect, &measure),
        Picture::Time(scene) => draw::time_plot(scene, rect, &measure),
        Picture::Message(text) => draw::message(text, rect, &measure),
    };
    let done = replay(&ctx, &ops);
    if done.is_err() {
        // Leave the bitmap to be reset next time (its context state is unknown).
        canvas.set_width(0);
    }
    done
}
