//! Result blocks: field feedback, the report, the pole choice, the controller, an infeasible design.

use super::*;

/// Per-field size, error and visibility (sub-fields of a section switched off are hidden);
/// only what changed since the last cycle is touched, and the typed text never is.
pub(crate) fn show_field_feedback(doc: &Document, page: &mut PageState, input: &FormInput, outcome: &FormOutcome) -> Result<(), JsValue> {
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
                open_enclosing_section(&control)?;
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

/// A field with a new error inside a folded form section unfolds that section, so the
/// message naming the field is never hidden from the user.
fn open_enclosing_section(control: &Element) -> Result<(), JsValue> {
    if let Some(section) = control.closest(".form-section.is-collapsed")? {
        section.class_list().remove_1("is-collapsed")?;
        if let Some(toggle) = section.query_selector(".section-toggle")? {
            toggle.set_attribute("aria-expanded", "true")?;
        }
    }
    Ok(())
}

pub(crate) fn error_list(errors: &[FieldError]) -> String {
    errors.iter().map(|e| FormInput::label(e.field)).collect::<Vec<_>>().join(", ")
}

pub(crate) fn mark_stale(doc: &Document, stale: bool) -> Result<(), JsValue> {
    for id in ids::OUTPUT_SECTIONS {
        if let Some(el) = doc.get_element_by_id(id) {
            if el.class_list().contains("is-stale") != stale {
                el.class_list().toggle_with_force("is-stale", stale)?;
            }
        }
    }
    Ok(())
}

pub(crate) fn note(doc: &Document, text: Option<&str>, class: &str) -> Result<(), JsValue> {
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

pub(crate) fn structure_block(doc: &Document, r: &StructureReport, title: &str) -> Result<Vec<Element>, JsValue> {
    let head = ["open-loop mode".to_string(), "margin".to_string(), "verdict".to_string()];
    let rows: Vec<Vec<String>> = r.modes.iter().map(|m| vec![m.pole.clone(), m.margin.clone(), m.verdict.clone()]).collect();
    Ok(vec![make_class(doc, "p", Some(&r.summary), "summary")?, table(doc, Some(title), &head, &rows, false, 1)?, make_class(doc, "p", Some(&r.tolerance), "fine-print")?])
}

pub(crate) fn strings(items: &[&str]) -> Vec<String> {
    items.iter().map(|s| s.to_string()).collect()
}

pub(crate) fn pole_rows_text(poles: &[form::PoleRow]) -> (Vec<String>, Vec<Vec<String>>) {
    let head = strings(&["requested", "achieved", "relative error", "character", "note"]);
    let rows: Vec<Vec<String>> = poles.iter().map(|p| vec![p.requested.clone(), p.achieved.clone(), p.error.clone(), p.character.clone(), p.note.clone()]).collect();
    (head, rows)
}

pub(crate) fn pole_table(doc: &Document, caption: &str, poles: &[form::PoleRow]) -> Result<Element, JsValue> {
    let (head, rows) = pole_rows_text(poles);
    table(doc, Some(caption), &head, &rows, false, 0)
}

/// Builds the result blocks whose content changed since they were last built.
pub(crate) fn render_report(doc: &Document, page: &mut PageState, r: &Report, discrete: bool) -> Result<(), JsValue> {
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
    if !page.unchanged(ids::ZEROS, hash_of(&r.zeros)) {
        set_text(doc, ids::ZEROS, &r.zeros)?;
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
    if !r.robustness_deferred && !page.unchanged(ids::MARGINS, hash_of(&r.margins)) {
        let items: Vec<Element> = r.margins.iter().map(|l| make(doc, "li", Some(l))).collect::<Result<_, _>>()?;
        fill(doc, ids::MARGINS, &items)?;
    }
    if !page.unchanged(ids::ROBUSTNESS, hash_of(&r.robustness)) {
        set_text(doc, ids::ROBUSTNESS, &r.robustness)?;
    }
    if !r.robustness_deferred {
        render_robustness_detail(doc, page, &r.robustness_detail)?;
    }
    if !page.unchanged(ids::WARNINGS, hash_of(&r.warnings)) {
        let items: Vec<Element> =
            if r.warnings.is_empty() { vec![make_class(doc, "li", Some("No warnings."), "none")?] } else { r.warnings.iter().map(|w| make(doc, "li", Some(w))).collect::<Result<_, _>>()? };
        fill(doc, ids::WARNINGS, &items)?;
    }
    if !page.unchanged(ids::VERDICTS, hash_of(&r.verdicts)) {
        let items: Vec<Element> = r
            .verdicts
            .iter()
            .map(|v| match v.tone {
                form::VerdictTone::Fine => make(doc, "li", Some(&v.text)),
                form::VerdictTone::Attention => make_class(doc, "li", Some(&v.text), "is-bad"),
            })
            .collect::<Result<_, _>>()?;
        fill(doc, ids::VERDICTS, &items)?;
    }

    // Response figures.
    if !page.unchanged(ids::STATE_TABLE, hash_of(&r.states)) {
        let head = strings(&["state", "initial value", "peak |value|", "settling time", "overshoot past zero", "limit (plant.state_limits)"]);
        let rows: Vec<Vec<String>> = r.states.iter().map(|s| vec![s.name.clone(), s.initial.clone(), s.peak.clone(), s.settling.clone(), s.overshoot.clone(), s.limit.clone()]).collect();
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
pub(crate) fn render_pole_choice(doc: &Document, c: Option<&form::PoleChoiceReport>) -> Result<(), JsValue> {
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

pub(crate) fn set_text_or_hide(doc: &Document, id: &str, text: Option<&str>) -> Result<(), JsValue> {
    let el = by_id(doc, id)?;
    el.set_text_content(Some(text.unwrap_or("")));
    set_hidden(&el, text.is_none())
}

pub(crate) fn fill_matrices(doc: &Document, id: &str, tables: &[&MatrixTable]) -> Result<(), JsValue> {
    let els: Vec<Element> = tables.iter().map(|m| matrix_element(doc, m)).collect::<Result<_, _>>()?;
    fill(doc, id, &els)?;
    set_hidden_id(doc, id, tables.is_empty())
}

/// Every controller matrix as tab-separated text: K, then K_u, the tracking gains, L (L_c), Φ, Γ.
pub(crate) fn controller_text(r: &Report) -> String {
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

pub(crate) fn render_controller(doc: &Document, page: &mut PageState, c: Option<&ControllerReport>) -> Result<(), JsValue> {
    let Some(c) = c else {
        if !page.unchanged(ids::CONTROLLER, 0) {
            set_hidden_id(doc, ids::CONTROLLER, true)?;
            set_hidden_id(doc, ids::OBSERVER, true)?;
            set_hidden_id(doc, ids::LOOP_SECTION, true)?;
        }
        return Ok(());
    };
    // The whole report is the key of both blocks: a field added to it can never be missed.
    let key = hash_of(c);
    if !page.unchanged(ids::CONTROLLER, key) {
        set_hidden_id(doc, ids::CONTROLLER, false)?;
        set_text(doc, ids::CONTROLLER_DOMAIN, &c.domain)?;
        let lines: Vec<Element> = c.law.iter().map(|l| make(doc, "li", Some(l))).collect::<Result<_, _>>()?;
        fill(doc, ids::CONTROLLER_LAW, &lines)?;
        set_text_or_hide(doc, ids::SAMPLE_RATE, c.sample_rate.as_deref())?;
        set_text_or_hide(doc, ids::PRECISION, c.precision.as_deref())?;
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
    if !page.unchanged(ids::LOOP_SECTION, key) {
        set_hidden_id(doc, ids::LOOP_SECTION, c.loop_summary.is_none())?;
        set_text(doc, ids::LOOP_SUMMARY, c.loop_summary.as_deref().unwrap_or(""))?;
        let outputs = if c.loop_outputs.is_empty() {
            make_class(doc, "p", Some("No reference is tracked, so there are no step figures: choose feedforward or integral tracking to see rise and settling times."), "empty")?
        } else {
            let settling = format!("settling time ({}) after the step", c.settling_band);
            let head = strings(&["tracked output", "reference step", "rise time (10–90 %)", &settling, "overshoot", "undershoot (wrong way first)", "error at the end (r − y)"]);
            let rows: Vec<Vec<String>> = c
                .loop_outputs
                .iter()
                .map(|o| vec![o.name.clone(), o.reference.clone(), o.rise_time.clone(), o.settling_time.clone(), o.overshoot.clone(), o.undershoot.clone(), o.steady_state_error.clone()])
                .collect();
            let t = table(doc, Some("Loop simulation: step figures of each tracked output"), &head, &rows, true, 1)?;
            t.set_id("pw-loop-metrics");
            t
        };
        fill(doc, ids::LOOP_TABLE, &[outputs])?;
        let head = strings(&["input", "peak commanded |u|", "limit", "time saturated"]);
        let rows: Vec<Vec<String>> = c.loop_inputs.iter().map(|i| vec![i.name.clone(), i.peak.clone(), i.limit.clone(), i.saturated.clone()]).collect();
        fill(doc, ids::LOOP_INPUT_TABLE, &[table(doc, Some("Loop simulation: each input's peak command against its limit"), &head, &rows, true, 1)?])?;
        let head = strings(&["state", "peak |x| over the run", "limit"]);
        let rows: Vec<Vec<String>> = c.loop_states.iter().map(|s| vec![s.name.clone(), s.peak.clone(), s.limit.clone()]).collect();
        fill(doc, ids::LOOP_STATE_TABLE, &[table(doc, Some("Loop simulation: each state's peak (every step) against its limit"), &head, &rows, true, 1)?])?;
        set_hidden_id(doc, ids::ESTIMATION, c.estimation.is_empty())?;
        if !c.estimation.is_empty() {
            let head = strings(&["state", "peak |x − x̂|", "|x − x̂| at the end"]);
            let rows: Vec<Vec<String>> = c.estimation.iter().map(|e| vec![e.name.clone(), e.peak.clone(), e.last.clone()]).collect();
            fill(doc, ids::ESTIMATION_TABLE, &[table(doc, Some("Loop simulation: estimation error of each state"), &head, &rows, true, 1)?])?;
        }
    }
    Ok(())
}

pub(crate) fn render_infeasible(doc: &Document, message: &str, analysis: Option<&OpenLoopAnalysis>) -> Result<(), JsValue> {
    fill(doc, ids::GAIN_TABLE, &[make_class(doc, "p", Some("No gain: the design is not possible (see the message above)."), "empty")?])?;
    set_text(doc, ids::GAIN_TEXT, "")?;
    fill(doc, ids::POLE_TABLE, &[])?;
    match analysis {
        Some(a) => {
            let poles: Vec<Complex64> = a.open_loop_poles.iter().map(|p| Complex64::new(p[0], p[1])).collect();
            set_text(doc, ids::OPEN_LOOP, &format!("Open-loop poles (eigenvalues of A): {}.", crate::design::format::pole_list(&poles)))?;
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
    fill(doc, ids::VERDICTS, &[make_class(doc, "li", Some("No design: see the message above."), "is-bad")?])?;
    fill(doc, ids::STATE_TABLE, &[])?;
    fill(doc, ids::INPUT_TABLE, &[])?;
    set_hidden_id(doc, ids::CONTROLLER, true)?;
    set_hidden_id(doc, ids::OBSERVER, true)?;
    set_hidden_id(doc, ids::LOOP_SECTION, true)?;
    set_text(doc, ids::SIMULATION, "No response: without a stabilising gain there is nothing to simulate.")
}

pub(crate) fn pole_map_label(scene: &PoleMapScene) -> String {
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
    if !scene.zeros.is_empty() {
        parts.push(format!("{} plant zeros", scene.zeros.len()));
    }
    let plane = if scene.discrete { "Pole map in the z-plane with the unit circle" } else { "Pole map in the complex plane" };
    format!("{plane}: {}. Focus it and press N / P to read each pole, the arrow keys to move a requested one; the pole tables in Results list them all.", parts.join(", "))
}

pub(crate) fn pole_legend(scene: &PoleMapScene) -> String {
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
    if !scene.zeros.is_empty() {
        text.push_str("; ○ a zero of the plant, from the inputs to the outputs C (small dark ring; feedback does not move it)");
    }
    text.push_str(". ");
    if let Some(r) = &scene.region {
        text.push_str(&format!("Dash-dot (dark amber): the boundary of the specification's region, {}. ", r.label));
    }
    text.push_str(if scene.discrete { "Shaded: the stable region inside the unit circle, |z| < 1 (dashed)." } else { "Shaded: the stable region, Re s < 0." });
    text
}

/// The frequency table, the pole-sensitivity table and the uncertainty lines.
fn render_robustness_detail(doc: &Document, page: &mut PageState, d: &form::RobustnessDetail) -> Result<(), JsValue> {
    if !page.unchanged(ids::FREQUENCY_TABLE, hash_of(&d.frequency_rows)) {
        let head = strings(&["frequency (rad/s)", "σmax(S)", "σmax(T)"]);
        let rows: Vec<Vec<String>> = d.frequency_rows.iter().map(|r| r.to_vec()).collect();
        page.show_table(
            doc,
            ids::FREQUENCY_TABLE,
            None,
            "Largest singular values of S and T at the plant input over frequency (16 frequencies evenly spread in log ω, and the peaks)",
            &head,
            &rows,
            true,
            1,
        )?;
    }
    if !page.unchanged(ids::SENSITIVITY_TABLE, hash_of(&(&d.sensitivity_rows, &d.sensitivity_entry))) {
        let derivative = d.sensitivity_entry.as_ref().map_or("dλ/dp (choose an entry)".to_string(), |e| format!("dλ/d {e}"));
        let head = vec!["pole".to_string(), "condition number".to_string(), derivative];
        let rows: Vec<Vec<String>> = d.sensitivity_rows.iter().map(|r| r.to_vec()).collect();
        page.show_table(doc, ids::SENSITIVITY_TABLE, None, "Sensitivity of each closed-loop pole of the loop as built to model error", &head, &rows, true, 1)?;
        set_text(doc, ids::SENSITIVITY_SUMMARY, &d.sensitivity_summary)?;
    }
    if !page.unchanged(ids::UNCERTAINTY, hash_of(&(&d.uncertainty, d.uncertainty_pending))) {
        let items: Vec<Element> = d.uncertainty.iter().map(|l| make(doc, "li", Some(l))).collect::<Result<_, _>>()?;
        fill(doc, ids::UNCERTAINTY, &items)?;
    }
    Ok(())
}
