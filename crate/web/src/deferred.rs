//! The robustness analysis after the cycle.
//!
//! A design cycle started by typing, a demo, a file or a released pole shows the design
//! without its margins, pole sensitivity and frequency response (the quick run of
//! [`form::Depth::Quick`]); then it leaves a [`Pending`] run and asks the browser to call
//! [`complete_robustness`] once the page has been drawn (a zero-delay timer: the browser
//! paints and handles input first). That run evaluates the same form from the same
//! continuation at full depth — the same design, since the run is deterministic — and
//! updates the results; a newer cycle makes a pending run stale (its generation no longer
//! matches) or replaces it. While it is pending the status line carries
//! `data-pending="robustness"`; when done, `data-robustness-ms` holds its duration.

use super::*;

/// The full-depth run a quick cycle left to do.
pub(crate) struct Pending {
    pub(crate) generation: u64,
    pub(crate) input: FormInput,
    pub(crate) previous: Option<crate::design::Continuation>,
}

/// Forget any pending run (a newer cycle supersedes it); returns the next generation.
pub(crate) fn supersede(page: &mut PageState) -> u64 {
    page.pending = None;
    page.generation = page.generation.wrapping_add(1);
    page.generation
}

/// Leave the full-depth run for after the cycle and ask the browser for a call back.
///
/// # Errors
/// When the status line is missing or the browser refuses the timer.
pub(crate) fn schedule(doc: &Document, page: &mut PageState, input: FormInput, previous: Option<crate::design::Continuation>) -> Result<(), JsValue> {
    let generation = page.generation;
    page.pending = Some(Pending { generation, input, previous });
    let status = by_id(doc, ids::STATUS)?;
    status.set_attribute("data-pending", "robustness")?;
    status.remove_attribute("data-robustness-ms")?;
    set_busy(doc, true)?;
    after_a_moment("The robustness analysis could not be shown", move || complete(Some(generation)).map(|_| ()))
}

/// Run the pending robustness analysis now (the page's timer does it by itself; tests and
/// benchmarks may call it to wait for it). Returns whether there was one to run.
///
/// # Errors
/// When the page cannot be updated.
#[wasm_bindgen]
pub fn complete_robustness() -> Result<bool, JsValue> {
    complete(None)
}

/// No run is pending (a cycle that did not leave one).
///
/// # Errors
/// When the status line is missing.
pub(crate) fn settled(doc: &Document) -> Result<(), JsValue> {
    set_busy(doc, false)?;
    by_id(doc, ids::STATUS)?.remove_attribute("data-pending")
}

/// The robustness sections say whether they belong to the design shown.
fn set_busy(doc: &Document, busy: bool) -> Result<(), JsValue> {
    for id in [ids::ROBUSTNESS, ids::MARGINS, ids::VERDICTS] {
        if let Some(el) = doc.get_element_by_id(id) {
            if busy {
                el.set_attribute("aria-busy", "true")?;
            } else {
                el.remove_attribute("aria-busy")?;
            }
        }
    }
    Ok(())
}

/// The pending run of `generation` (any, with `None`), if it is still current.
fn complete(generation: Option<u64>) -> Result<bool, JsValue> {
    let start = now_ms();
    let pending = with_page(|page| {
        Ok(match &page.pending {
            Some(p) if generation.is_none_or(|g| g == p.generation) => page.pending.take(),
            _ => None,
        })
    })?;
    let Some(p) = pending else {
        return Ok(false);
    };
    let doc = document()?;
    let mut outcome = form::evaluate_form_with(&p.input, p.previous.as_ref(), form::Depth::Full);
    let shown = with_page(|page| {
        // A cycle that ran meanwhile owns the page now.
        if page.generation != p.generation || page.shown != Shown::Design {
            return Ok(false);
        }
        let (Some(design), Some(report)) = (outcome.design.take(), outcome.report.take()) else {
            // The quick run designed this very input; keep what it showed.
            return Ok(false);
        };
        let discrete = design.domain == crate::analysis::Domain::Discrete;
        page.design = Some(design);
        paint_all(page)?;
        let rendered = render_report(&doc, page, &report, discrete);
        page.report = Some(report);
        rendered?;
        render_compare(&doc, page)?;
        Ok(true)
    })?;
    settled(&doc)?;
    if shown {
        by_id(&doc, ids::STATUS)?.set_attribute("data-robustness-ms", &format!("{}", now_ms() - start))?;
    }
    Ok(shown)
}
