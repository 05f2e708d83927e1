//! The uncertainty cloud, drawn in slices of the main thread.
//!
//! The “Sample the uncertain plant” button asks for a cycle with the cloud
//! ([`form::Depth::WithCloud`]). Up to 10,000 perturbed plants, each closed, solved for its
//! poles and simulated, can take seconds; so the cycle does not draw them itself. It leaves a
//! [`Running`] job ([`form::cloud_job`]), says so (the status line with the count of samples,
//! `data-pending="cloud"`, the button disabled and the robustness list `aria-busy`), and asks
//! the browser for a call back. Each call draws samples for about [`SLICE_MS`] and gives the
//! main thread back. When every sample is drawn, the same cycle runs again from the same start
//! with the cloud's memo: the design it shows is that of one run with the cloud (the same
//! plants in the same order). Any newer cycle (an edit, a drag, a demo) drops a running cloud:
//! the cloud belongs to one design.

use super::*;

/// How long one slice draws samples before giving the main thread back (ms); a slice draws one
/// at least.
const SLICE_MS: f64 = 40.0;

/// A cloud being drawn in slices.
pub(crate) struct Running {
    generation: u64,
    job: crate::design::CloudJob,
    left: Left,
}

/// What the cycle that left a cloud to slices had: its form and where it started.
pub(crate) struct Left {
    pub(crate) input: FormInput,
    pub(crate) previous: Option<crate::design::Continuation>,
    pub(crate) fresh: bool,
}

/// Where the cycle after a finished cloud starts ([`cycle_after`]): the start of the cycle that
/// left the job, with the cloud's memo, for the form it was drawn for.
pub(crate) struct AfterCloud {
    pub(crate) input: FormInput,
    pub(crate) previous: Option<crate::design::Continuation>,
    pub(crate) fresh: bool,
}

/// Leave `job` to draw in slices after this cycle; the cycle itself stops here.
///
/// # Errors
/// When the status line is missing or the browser refuses the timer.
pub(crate) fn start(doc: &Document, page: &mut PageState, job: crate::design::CloudJob, left: Left) -> Result<(), JsValue> {
    let generation = page.generation;
    let (done, all) = (job.drawn(), job.samples());
    page.cloud = Some(Running { generation, job, left });
    let status = by_id(doc, ids::STATUS)?;
    status.remove_attribute("data-outcome")?;
    status.class_list().remove_1("is-error")?;
    show_progress(doc, done, all)?;
    set_controls(doc, true)?;
    schedule(generation)
}

/// The button and the list while a cloud is drawn (`busy`) or not.
///
/// # Errors
/// When the browser refuses an attribute.
pub(crate) fn set_controls(doc: &Document, busy: bool) -> Result<(), JsValue> {
    if let Some(button) = doc.get_element_by_id(ids::SAMPLE_UNCERTAINTY) {
        if busy {
            button.set_attribute("disabled", "")?;
        } else {
            button.remove_attribute("disabled")?;
        }
    }
    if let Some(list) = doc.get_element_by_id(ids::UNCERTAINTY) {
        if busy {
            list.set_attribute("aria-busy", "true")?;
        } else {
            list.remove_attribute("aria-busy")?;
        }
    }
    Ok(())
}

fn show_progress(doc: &Document, done: usize, all: usize) -> Result<(), JsValue> {
    let status = by_id(doc, ids::STATUS)?;
    status.set_attribute("data-pending", "cloud")?;
    status.set_attribute("data-cloud-samples", &done.to_string())?;
    status.set_text_content(Some(&format!("Sampling the uncertain plant: {done} of {all} sample{} so far…", if all == 1 { "" } else { "s" })));
    Ok(())
}

fn schedule(generation: u64) -> Result<(), JsValue> {
    after_a_moment("Sampling the uncertain plant stopped", move || slice(generation))
}

/// One slice of the cloud of `generation` (none if a newer cycle dropped it); the cycle that
/// shows it, once every sample is drawn.
fn slice(generation: u64) -> Result<(), JsValue> {
    let start = now_ms();
    let doc = document()?;
    let finished = with_page(|page| {
        let Some(running) = page.cloud.as_mut().filter(|r| r.generation == generation) else {
            return Ok(None);
        };
        if running.job.run_for(&mut || now_ms() - start < SLICE_MS) {
            return Ok(page.cloud.take().map(|r| {
                let Left { input, mut previous, fresh } = r.left;
                // No memo only if the job could not go on; the cycle then draws the cloud itself.
                if let Some(memo) = r.job.memo() {
                    previous.get_or_insert_with(Default::default).cloud = Some(memo);
                }
                AfterCloud { input, previous, fresh }
            }));
        }
        show_progress(&doc, running.job.drawn(), running.job.samples())?;
        schedule(generation)?;
        Ok(None)
    })?;
    match finished {
        Some(after) => {
            set_controls(&doc, false)?;
            cycle_after(form::Depth::WithCloud, Some(after)).map(|_| ())
        }
        None => Ok(()),
    }
}
