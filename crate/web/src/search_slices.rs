//! The search for the fastest design, in slices of the main thread.
//!
//! A cycle whose design asks for a search that has not been run for its inputs
//! ([`form::search_job`]) does not run it inside the cycle: it leaves a [`Running`] search,
//! says so in the status line (`data-pending="search"`, the verdicts `aria-busy`, and the count
//! of trial designs so far), and asks the browser for a call back. Each call runs trial designs
//! for about [`SLICE_MS`] and gives the main thread back (typing, painting); when the search is
//! over, its memo goes to the next cycle, which designs with it exactly as a fresh run would
//! (the steps are those of the one-piece search). A newer cycle takes over a running search with
//! exactly its inputs (an edit elsewhere in the form); otherwise it drops it (its generation no
//! longer matches) and starts its own if it needs one.

use super::*;

/// How long one slice runs trial designs before giving the main thread back (ms). One trial
/// design (a placement and the situations' simulations) can take longer than this near the
/// page's state limit; a slice then runs exactly one.
const SLICE_MS: f64 = 40.0;

/// A search running in slices.
pub(crate) struct Running {
    generation: u64,
    job: crate::design::SearchJob,
    /// The cycle to run once the search is over, and whether it starts afresh.
    depth: form::Depth,
    fresh: bool,
}

impl Running {
    /// Whether the cycle that left it was to start afresh (a new document or demo).
    pub(crate) fn fresh(&self) -> bool {
        self.fresh
    }
}

/// Leave `job` to run in slices after this cycle; the cycle itself stops here. A search already
/// running for exactly the same inputs (an edit elsewhere in the form while it runs) is kept,
/// with the trial designs it has done, and ends with this cycle instead.
///
/// # Errors
/// When the status line is missing or the browser refuses the timer.
pub(crate) fn start(doc: &Document, page: &mut PageState, job: crate::design::SearchJob, depth: form::Depth, fresh: bool) -> Result<(), JsValue> {
    let generation = page.generation;
    let running = match page.search.take() {
        Some(r) if r.job.same_search(&job) => Running { generation, job: r.job, depth, fresh },
        _ => Running { generation, job, depth, fresh },
    };
    let (done, most) = (running.job.evaluations(), running.job.max_evaluations());
    page.search = Some(running);
    // No outcome until the design after the search: the last one's is not this input's.
    let status = by_id(doc, ids::STATUS)?;
    status.remove_attribute("data-outcome")?;
    status.class_list().remove_1("is-error")?;
    show_progress(doc, done, most)?;
    if let Some(v) = doc.get_element_by_id(ids::VERDICTS) {
        v.set_attribute("aria-busy", "true")?;
    }
    schedule(generation)
}

fn show_progress(doc: &Document, done: usize, most: usize) -> Result<(), JsValue> {
    let status = by_id(doc, ids::STATUS)?;
    status.set_attribute("data-pending", "search")?;
    status.set_attribute("data-search-evaluations", &done.to_string())?;
    status.set_text_content(Some(&format!("Searching for the fastest design within the actuator limits: {done} trial design{} of at most {most} so far…", if done == 1 { "" } else { "s" })));
    Ok(())
}

fn schedule(generation: u64) -> Result<(), JsValue> {
    after_a_moment("The search for the fastest design stopped", move || slice(generation))
}

/// One slice of the search of `generation` (none if a newer cycle superseded it); the cycle it
/// was left by, once it is over.
fn slice(generation: u64) -> Result<(), JsValue> {
    let start = now_ms();
    let doc = document()?;
    let finished = with_page(|page| {
        // A newer cycle dropped this search (or left its own, of another generation).
        let Some(running) = page.search.as_mut().filter(|r| r.generation == generation) else {
            return Ok(None);
        };
        // Capped by the search's own evaluation cap; a step that finishes ends the slice.
        for _ in 0..=running.job.max_evaluations() {
            if let Some(memo) = running.job.step() {
                let (depth, fresh) = (running.depth, running.fresh);
                page.search = None;
                page.search_memo = Some(memo);
                page.fresh_start = fresh;
                return Ok(Some(depth));
            }
            if now_ms() - start >= SLICE_MS {
                break;
            }
        }
        show_progress(&doc, running.job.evaluations(), running.job.max_evaluations())?;
        schedule(generation)?;
        Ok(None)
    })?;
    match finished {
        Some(depth) => cycle(depth).map(|_| ()),
        None => Ok(()),
    }
}
