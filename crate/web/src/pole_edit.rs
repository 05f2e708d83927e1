//! The pole map as an editor: readouts, keyboard focus, drags, add/remove, undo/redo of pole
//! edits, adopting suggested poles, pin and compare.

use super::*;

pub(crate) fn set_name(set: PoleSet) -> &'static str {
    match set {
        PoleSet::ClosedLoop => "Closed-loop pole",
        PoleSet::OpenLoop => "Open-loop pole",
        PoleSet::NotAssigned => "Requested pole that could not be assigned",
        PoleSet::Observer => "Observer pole",
        PoleSet::Requested => "Requested pole",
        PoleSet::Pinned => "Pinned design's closed-loop pole",
        PoleSet::Uncertain => "Closed-loop pole of a sampled uncertain plant",
        PoleSet::Zero => "Plant zero",
    }
}

/// `Closed-loop pole 2 of 4: −12 + 9j (damping ratio 0.8, natural frequency 15 rad/s).`; for a
/// z-plane pole both `z` and the equivalent `s = ln z / T`.
pub(crate) fn readout(scene: &PoleMapScene, pick: &PolePick, sample_time: Option<f64>) -> String {
    let same: Vec<PolePick> = scene.markers().into_iter().filter(|p| p.set == pick.set).collect();
    let k = same.iter().position(|p| p.index == pick.index).map_or(1, |k| k + 1);
    let head = format!("{} {k} of {}", set_name(pick.set), same.len());
    let tail = if pick.set == PoleSet::Requested { " Drag it, or move it with the arrow keys (Shift: larger steps); Delete removes it." } else { "" };
    format!("{}{tail}", readout_value(scene, pick, sample_time, &head))
}

pub(crate) fn readout_value(scene: &PoleMapScene, pick: &PolePick, sample_time: Option<f64>, head: &str) -> String {
    let z = Complex64::new(pick.re, pick.im);
    match (scene.discrete, sample_time) {
        (true, _) if z.norm() <= form::Z_ZERO => format!("{head}: z = 0 (deadbeat / delay: gone after one sample; computed |z| = {}).", fmt_num(z.norm())),
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

pub(crate) fn show_readout(text: &str) -> Result<(), JsValue> {
    let doc = document()?;
    let el = by_id(&doc, ids::POLE_PICK)?;
    if el.text_content().as_deref() != Some(text) {
        el.set_text_content(Some(text));
    }
    Ok(())
}

pub(crate) fn refresh_readout(page: &PageState) -> Result<(), JsValue> {
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
pub(crate) fn list_is_editable(input: &FormInput) -> bool {
    input.choice("pole_source") == "list" && input.choice("search") != "true"
}

/// A digital design given by s-plane poles is shown on the z-plane map.
pub(crate) fn plane_map_for(input: &FormInput, design: &DesignResult) -> PlaneMap {
    match (design.domain == crate::analysis::Domain::Discrete, design.sample_time, input.choice("plane").as_str()) {
        (true, Some(t), "s") => PlaneMap::SampledFromS { sample_time: t },
        _ => PlaneMap::Same,
    }
}

/// Keeps the edit history in step with the poles field: text typed there becomes one undo
/// step (nothing is recorded while a drag is under way: the drag writes the field itself).
pub(crate) fn sync_history(page: &mut PageState, input: &FormInput) {
    if !list_is_editable(input) {
        return;
    }
    let Ok(poles) = crate::poles::parse_poles(&input.poles) else {
        return;
    };
    let Ok(set) = editing::PoleSet::from_poles(&poles) else {
        return;
    };
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
pub(crate) fn edit_layers(page: &mut PageState, input: &FormInput) {
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
    page.pole_scene.view = page.drag.as_ref().map(|d| d.frame.view()).or(page.pole_view);
    refocus(page);
}

/// Recomputes the keyboard position (an index into the scene's markers) and the ring.
pub(crate) fn refocus(page: &mut PageState) {
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
pub(crate) fn note_focus(page: &mut PageState) {
    let markers = page.pole_scene.markers();
    page.focus_requested = page.focus.and_then(|i| markers.get(i)).filter(|p| p.set == PoleSet::Requested).and_then(|p| page.requested_markers.get(p.index)).map(|m| (m.entry, m.member));
}

/// Writes a new pole list into the poles field and runs the design cycle.
pub(crate) fn commit_poles(text: &str) -> Result<(), JsValue> {
    let doc = document()?;
    set_control_value(&doc, "poles", text)?;
    update_page().map(|_| ())
}

/// [`commit_poles`] when an edit produced a new list.
pub(crate) fn commit_changed(text: Option<String>) -> Result<(), JsValue> {
    text.map_or(Ok(()), |t| commit_poles(&t))
}

pub(crate) fn show_edit_message(page: &mut PageState, message: Option<String>) -> Result<(), JsValue> {
    page.edit_message = message;
    refresh_edit_controls(page)
}

/// Enables the undo, redo, add, remove and unpin buttons to match the state, and writes
/// the editing note under the map.
pub(crate) fn refresh_edit_controls(page: &PageState) -> Result<(), JsValue> {
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
    pub(crate) fn last_input_editable(&self) -> bool {
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
        let Some(k) = crate::plot::hit_test([x, y], &pixels, radius) else {
            return Ok(false);
        };
        let Some(marker) = page.requested_markers.get(k).copied() else {
            return Ok(false);
        };
        let Some(history) = page.history.as_mut() else {
            return Ok(false);
        };
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
        let Some(frame) = page.drag.as_ref().map(|d| d.frame) else {
            return Ok(None);
        };
        let map = page.plane_map;
        let Some(history) = page.history.as_mut() else {
            return Ok(None);
        };
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
            // While dragging, the quick cycle: the margins follow when the pole is released.
            set_control_value(&document()?, "poles", &text)?;
            cycle(form::Depth::Quick)?;
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
pub(crate) fn median(samples: &[f64]) -> Option<f64> {
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
        let Some(drag) = page.drag.take() else {
            return Ok((None, Vec::new()));
        };
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
        None => {
            with_page(|page| {
                page.pole_scene.view = page.pole_view;
                Ok(())
            })?;
            // The full cycle on release brings the margins and pole sensitivity back.
            update_page().map(|_| ())
        }
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
        let Some(history) = page.history.as_mut() else {
            return Ok(None);
        };
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
pub(crate) fn new_pole(set: &editing::PoleSet, z_plane: bool, pair: bool) -> num_complex::Complex64 {
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

pub(crate) fn edit_list(edit: impl FnOnce(&PageState) -> Option<Edit>) -> Result<(), JsValue> {
    let text = with_page(|page| {
        if !page.last_input_editable() {
            show_edit_message(page, Some("The poles are chosen for you: press “Use these poles” under Pole choice first.".into()))?;
            return Ok(None);
        }
        let Some(e) = edit(page) else { return Ok(None) };
        let added = matches!(e, Edit::Add(_));
        let Some(history) = page.history.as_mut() else {
            return Ok(None);
        };
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
        let Some(history) = page.history.as_mut() else {
            return Ok(None);
        };
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

pub(crate) fn format_pairs(poles: &[[f64; 2]]) -> String {
    let z: Vec<Complex64> = poles.iter().map(|p| Complex64::new(p[0], p[1])).collect();
    crate::design::format::pole_list(&z)
}

/// The pinned-versus-current table (hidden without a pin).
pub(crate) fn render_compare(doc: &Document, page: &mut PageState) -> Result<(), JsValue> {
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
pub(crate) fn as_pinned(scene: &TimePlotScene) -> Vec<crate::plot::PinnedSeries> {
    scene
        .series
        .iter()
        .enumerate()
        .map(|(i, ser)| crate::plot::PinnedSeries { name: format!("{} (pinned)", ser.name), t: scene.t.clone(), values: ser.values.clone(), colour: Some(ser.colour.unwrap_or(i)) })
        .collect()
}
