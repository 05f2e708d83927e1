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
use crate::draw::{self, Align, Baseline, Cap, DrawOp, TextMeasure};
use crate::editing::{self, Change, Direction, Edit, EditHistory, EditParams, Member, NudgeOutcome, PlaneMap, StepSize};
use crate::form::{self, ControllerReport, FieldError, FormInput, FormOutcome, FormStatus, MatrixTable, OpenLoopAnalysis, Report, StructureReport};
pub use crate::plot::{Band, EventLine, LimitLine, PoleMapScene, PolePick, PoleSet, Series, TimePlotScene};
use crate::plot::{Frame, Rect};

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
    let element = web_sys::window().and_then(|w| w.document()).and_then(|d| d.get_element_by_id(ERROR_ELEMENT_ID));
    if let Some(el) = element {
        el.set_text_content(Some(message));
        // Ignoring failure: the console already has the message.
        let _ = el.remove_attribute("hidden");
    }
}

/// Asks the browser to run `task` from a zero-delay timer (after it has painted and handled
/// pending input); an error `task` returns is reported ([`report_internal_error`]) after `what`.
///
/// # Errors
/// When there is no window or the browser refuses the timer.
pub(crate) fn after_a_moment(what: &'static str, task: impl FnOnce() -> Result<(), JsValue> + 'static) -> Result<(), JsValue> {
    let callback = Closure::once_into_js(move || {
        if let Err(e) = task() {
            report_internal_error(&format!("{what}: {}", e.as_string().unwrap_or_else(|| format!("{e:?}"))));
        }
    });
    let window = web_sys::window().ok_or_else(|| JsValue::from_str("no window"))?;
    window.set_timeout_with_callback_and_timeout_and_arguments_0(callback.unchecked_ref(), 0)?;
    Ok(())
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
    value.serialize(&serde_wasm_bindgen::Serializer::json_compatible()).map_err(|e| js_err(context, e))
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
    pub const ZEROS: &str = "pw-zeros";
    pub const CONTROLLABILITY: &str = "pw-controllability";
    pub const OBSERVABILITY: &str = "pw-observability";
    pub const ROBUSTNESS: &str = "pw-robustness";
    pub const MARGINS: &str = "pw-margins";
    pub const WARNINGS: &str = "pw-warnings";
    pub const VERDICTS: &str = "pw-verdicts";
    pub const OVERVIEW_PLOT: &str = "pw-overview-plot";
    pub const OVERVIEW_CAPTION: &str = "pw-overview-caption";
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
    pub const PRECISION: &str = "pw-precision";
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
    pub const LOOP_STATE_TABLE: &str = "pw-loop-state-table";
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
    pub const FREQUENCY_PLOT: &str = "pw-frequency-plot";
    pub const FREQUENCY_TABLE: &str = "pw-frequency-table";
    pub const SENSITIVITY_SUMMARY: &str = "pw-sensitivity-summary";
    pub const SENSITIVITY_TABLE: &str = "pw-sensitivity-table";
    pub const UNCERTAINTY: &str = "pw-uncertainty";
    pub const SAMPLE_UNCERTAINTY: &str = "pw-sample-uncertainty";
    /// Sections marked stale when the input is invalid.
    pub const OUTPUT_SECTIONS: [&str; 6] = ["pw-summary", "pw-results", "pw-pole-section", "pw-glance", "pw-loop-section", "pw-response-section"];
    /// Every canvas, in painting order.
    pub const CANVASES: [&str; 8] = [POLE_MAP, OVERVIEW_PLOT, FREQUENCY_PLOT, LOOP_PLOT, LOOP_INPUT_PLOT, ESTIMATION_PLOT, STATE_PLOT, INPUT_PLOT];
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
    /// Panels stacked under each other (one axis per signal).
    Stack(Vec<TimePlotScene>),
    Message(String),
}

/// A canvas's CSS size (read from layout only when unknown or after a resize), the
/// picture last painted on it at that size and pixel ratio, and whether it is near the
/// window (the page's IntersectionObserver says so): a canvas out of view keeps its newest
/// picture waiting and is painted when it comes into view ([`canvas_in_view`]).
struct CanvasState {
    id: &'static str,
    size: Option<Rect>,
    painted: Option<(Rect, f64, Picture)>,
    in_view: bool,
    waiting: Option<Picture>,
}

/// Per-field feedback last written (size, error, active), to touch only what changes.
type Feedback = (Option<String>, Option<String>, bool);

struct PageState {
    /// The next design starts afresh instead of continuing the last one (a new document or
    /// demo: another plant's branch means nothing here).
    fresh_start: bool,
    shown: Shown,
    design: Option<DesignResult>,
    report: Option<Report>,
    analysis: Option<OpenLoopAnalysis>,
    pole_scene: PoleMapScene,
    /// Position in `pole_scene.markers()` chosen by keyboard.
    focus: Option<usize>,
    normalised: bool,
    fit_poles: bool,
    /// Zoomed time windows, per time-plot canvas (none: the whole run).
    time_windows: Vec<(&'static str, [f64; 2])>,
    /// The pole map's zoomed region (none: fitted to the poles).
    pole_view: Option<[f64; 4]>,
    /// How input and output plots share axes (the page's "Axes" choice).
    signal_axes: form::SignalAxes,
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
    /// The robustness analysis left for after the cycle ([`deferred`]).
    pending: Option<deferred::Pending>,
    /// Counts cycles, so that a pending run left by an older one is not shown.
    generation: u64,
    /// The search for the fastest design running in slices ([`search_slices`]).
    search: Option<search_slices::Running>,
    /// The last search run in slices, for the next cycle's design.
    search_memo: Option<crate::design::SearchMemo>,
    /// The uncertainty cloud being drawn in slices ([`cloud_slices`]).
    cloud: Option<cloud_slices::Running>,
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
        time_windows: Vec::new(),
        pole_view: None,
        signal_axes: form::SignalAxes::Automatic,
        canvases: ids::CANVASES.iter().map(|id| CanvasState { id, size: None, painted: None, in_view: true, waiting: None }).collect(),
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
        fresh_start: true,
        pinned: None,
        edit_message: None,
        pending: None,
        generation: 0,
        search: None,
        search_memo: None,
        cloud: None,
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

mod canvas;
mod cloud_slices;
mod deferred;
mod dom;
mod plot_view;
mod pole_edit;
mod render;
mod search_slices;
pub use canvas::canvas_in_view;
use canvas::*;
pub use deferred::complete_robustness;
use dom::*;
pub use plot_view::*;
pub use pole_edit::*;
use render::*;

#[path = "web_document.rs"]
mod document;
#[cfg(feature = "test-exports")]
#[path = "web_test_exports.rs"]
mod test_exports;
pub use document::*;
#[cfg(feature = "test-exports")]
pub use test_exports::*;

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
    // A new plant starts a new edit history (undoing into another plant's poles makes no sense)
    // and a fresh placement.
    document::reset_edit_history()?;
    with_page(|page| {
        page.fresh_start = true;
        Ok(())
    })?;
    set_text(&doc, ids::DEMO_DESCRIPTION, d.description)
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
/// `data-cycle-ms` (and the phases in `data-cycle-phases`); returns `null` when the design
/// first needs a search for the fastest design, which then runs in slices and ends with this
/// cycle ([`search_slices`]); [`sample_uncertainty`] returns `null` too while its cloud is
/// drawn in slices ([`cloud_slices`]).
#[wasm_bindgen]
pub fn update_page() -> Result<JsValue, JsValue> {
    cycle(form::Depth::Full)
}

/// [`update_page`] with the uncertainty cloud sampled (the “Sample the uncertain plant”
/// button): the cloud is drawn until the next change of the form.
#[wasm_bindgen]
pub fn sample_uncertainty() -> Result<JsValue, JsValue> {
    cycle(form::Depth::WithCloud)
}

/// What a new cycle continues from, and whether it starts afresh: the last design shown, so
/// that gains move continuously as poles are dragged or edited (the result says when a fresh
/// design would differ), with the outcome of a search just run in slices. Drops the
/// robustness analysis an older cycle left; a running search is dropped or taken over by the
/// cycle ([`search_slices::start`]).
///
/// Also says whether a search has just ended: that cycle designs with its outcome and never
/// starts another search, so the page cannot loop between searching and designing even if an
/// input failed to compare equal to itself. The same for a cloud drawn in slices (`after`):
/// the cycle after it starts where the cycle that left it started, with the cloud's memo, and
/// never draws another in slices. A cloud still being drawn is dropped (it belongs to one
/// design).
fn continue_from(page: &mut PageState, after: Option<cloud_slices::AfterCloud>) -> Start {
    deferred::supersede(page);
    let dropped_cloud = page.cloud.take().is_some();
    if let Some(a) = after {
        return Start { previous: a.previous, fresh: a.fresh, searched: true, clouded: true, dropped_cloud };
    }
    // A running search that this cycle drops or takes over still owes a fresh start if it was
    // given one.
    let fresh = std::mem::take(&mut page.fresh_start) || page.search.as_ref().is_some_and(|r| r.fresh());
    let mut previous = if fresh { None } else { page.design.as_ref().map(|d| d.continuation.clone()) };
    let searched = page.search_memo.is_some();
    if let Some(memo) = page.search_memo.take() {
        previous.get_or_insert_with(Default::default).search = Some(memo);
    }
    Start { previous, fresh, searched, clouded: false, dropped_cloud }
}

/// Where a cycle starts ([`continue_from`]).
struct Start {
    previous: Option<crate::design::Continuation>,
    fresh: bool,
    /// A search has just ended (or ended before the cloud that has just ended): none now.
    searched: bool,
    /// A cloud has just been drawn in slices: not again.
    clouded: bool,
    /// A cloud being drawn was dropped: its button and list are free again.
    dropped_cloud: bool,
}

/// The status line at the end of a cycle: its text with the cycle time, and the attributes
/// tests and benchmarks read (`data-cycle-ms`, `data-cycle-phases`, `data-outcome`).
fn finish_status(doc: &Document, status: FormStatus, text: &str, cycle_ms: f64) -> Result<(), JsValue> {
    let status_el = by_id(doc, ids::STATUS)?;
    status_el.remove_attribute("data-search-evaluations")?;
    status_el.remove_attribute("data-cloud-samples")?;
    status_el.set_text_content(Some(&format!("{text} Cycle time {:.1} ms.", cycle_ms)));
    status_el.set_attribute("data-cycle-ms", &format!("{cycle_ms}"))?;
    let phases = PHASES.with(|p| p.try_borrow().map(|v| v.iter().map(|(k, ms)| format!("{k}={ms:.3}")).collect::<Vec<_>>().join(" ")).unwrap_or_default());
    status_el.set_attribute("data-cycle-phases", &phases)?;
    status_el.set_attribute(
        "data-outcome",
        match status {
            FormStatus::Designed => "designed",
            FormStatus::Invalid => "invalid",
            FormStatus::Infeasible => "infeasible",
        },
    )?;
    if status_el.class_list().contains("is-error") != (status != FormStatus::Designed) {
        status_el.class_list().toggle_with_force("is-error", status != FormStatus::Designed)?;
    }
    Ok(())
}

/// The design cycle at a given depth (quick while a pole is dragged). At
/// [`form::Depth::Full`] the cycle itself runs quick and leaves the robustness analysis for
/// right after it ([`deferred`]).
pub(crate) fn cycle(depth: form::Depth) -> Result<JsValue, JsValue> {
    cycle_after(depth, None)
}

/// Leaves the search for the fastest design, or the uncertainty cloud, to slices of the main
/// thread when this cycle needs one first; true when it did (the cycle stops there and runs
/// again when the work is done). Any search left running is dropped otherwise.
fn leave_to_slices(doc: &Document, input: &FormInput, depth: form::Depth, start: &Start) -> Result<bool, JsValue> {
    // Not while a pole is dragged, and not again right after a search.
    if depth != form::Depth::Quick && !start.searched {
        if let Some(job) = form::search_job(input, start.previous.as_ref()) {
            with_page(|page| search_slices::start(doc, page, job, depth, start.fresh))?;
            return Ok(true);
        }
    }
    with_page(|page| {
        page.search = None;
        Ok(())
    })?;
    // The uncertainty cloud asked for by its button, unless it has just been drawn.
    if depth == form::Depth::WithCloud && !start.clouded {
        if let Some(job) = form::cloud_job(input, start.previous.as_ref()) {
            let left = cloud_slices::Left { input: input.clone(), previous: start.previous.clone(), fresh: start.fresh };
            with_page(|page| cloud_slices::start(doc, page, job, left))?;
            return Ok(true);
        }
    }
    Ok(false)
}

/// [`cycle`], right after a cloud was drawn in slices (`after`): it starts where the cycle that
/// left the cloud started, with the cloud's memo. If the form changed meanwhile (an edit landed
/// while the last slice ran), the cloud belongs to another design: the form is designed as it
/// is, at [`form::Depth::Full`], without it.
pub(crate) fn cycle_after(depth: form::Depth, after: Option<cloud_slices::AfterCloud>) -> Result<JsValue, JsValue> {
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
    let (after, depth) = match after {
        Some(a) if a.input != input => (None, form::Depth::Full),
        other => (other, depth),
    };
    let begin = with_page(|page| Ok(continue_from(page, after)))?;
    if begin.dropped_cloud {
        cloud_slices::set_controls(&doc, false)?;
    }
    if leave_to_slices(&doc, &input, depth, &begin)? {
        return Ok(JsValue::NULL);
    }
    let previous = begin.previous;
    let defer = depth == form::Depth::Full;
    let mut outcome = form::evaluate_form_with(&input, previous.as_ref(), if defer { form::Depth::Quick } else { depth });
    let t_eval = now_ms();
    phase("evaluate", t_eval - t_read);
    let status = outcome.status;
    let status_text = with_page(|page| {
        let t_history = now_ms();
        page.form_history.note(&input);
        sync_history(page, &input);
        phase("history", now_ms() - t_history);
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
                let t_scene = now_ms();
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
                phase("scene", now_ms() - t_scene);
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
                // Which tables scroll sideways is read from layout after the cycle
                // (refresh_scrollable_tables, called by the page's script at the next frame):
                // reading it here would force a layout inside every cycle.
                phase("results", now_ms() - t0);
                if defer {
                    let t1 = now_ms();
                    // The same start as this quick run, and its search (same inputs, same
                    // result): the robustness run does not search again.
                    let mut start = previous.clone().unwrap_or_default();
                    start.search = page.design.as_ref().and_then(|d| d.continuation.search.clone());
                    let start = (previous.is_some() || start.search.is_some()).then_some(start);
                    deferred::schedule(&doc, page, input.clone(), start)?;
                    phase("schedule", now_ms() - t1);
                }
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
    if !(defer && status == FormStatus::Designed) {
        deferred::settled(&doc)?;
    }
    finish_status(&doc, status, &status_text, cycle_ms)?;
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
        dom::mark_scrollable_tables(&document()?)?;
        paint_all(page)
    })
}

/// Marks every table box that scrolls sideways as a focusable, labelled region (keyboard users
/// can then scroll it) and unmarks those that no longer do. Reads layout: the page's script
/// calls it at the next animation frame after the results change, not inside a design cycle.
#[wasm_bindgen]
pub fn refresh_scrollable_tables() -> Result<(), JsValue> {
    dom::mark_scrollable_tables(&document()?)
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

/// The significant digits of every number the page shows (3–17; copies, exports and saved
/// files keep full precision), then a full design cycle so that every figure is redrawn.
/// Returns the digits in force.
#[wasm_bindgen]
pub fn set_display_digits(digits: usize) -> Result<usize, JsValue> {
    let d = crate::design::format::set_digits(digits);
    cycle(form::Depth::Full)?;
    Ok(d)
}

/// How input and output plots share axes: `automatic`, `separate` (one axis per signal),
/// `limit` (each divided by its limit) or `shared`.
#[wasm_bindgen]
pub fn set_signal_axes(choice: &str) -> Result<(), JsValue> {
    with_page(|page| {
        page.signal_axes = form::SignalAxes::from_choice(choice);
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
        let Some(r) = &page.report else {
            return Ok(String::new());
        };
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
