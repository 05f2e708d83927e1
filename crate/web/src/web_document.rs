//! The page's design document: save, open (picker or drop), remember in this browser, and undo
//! and redo of every form change ([`crate::form::history`]). The document is the one of [`crate::design::spec`]; the form
//! adapter ([`crate::form::adapter`]) turns it into the controls and back. The browser side
//! (download, file reading, storage, the leave-page prompt) is a few lines in `site/app.js`.

use wasm_bindgen::prelude::*;
use web_sys::Document;

use super::{document, js_err, read_form, set_control_value, set_text, with_page};
use crate::design::{read_design, write_design};
use crate::form::{form_from_spec, spec_from_form, FormInput};

const FILE_STATUS: &str = "pw-file-status";
const UNDO: &str = "pw-form-undo";
const REDO: &str = "pw-form-redo";

/// Notes the form as it stands (before a load or an open replaces it, so that typing not yet
/// designed is a step of its own), and updates the Undo and Redo buttons.
pub(super) fn note_form(doc: &Document) -> Result<(), JsValue> {
    let current = read_form(doc)?;
    with_page(|page| {
        page.form_history.note(&current);
        Ok(())
    })?;
    refresh_buttons(doc)
}

/// Enables Undo and Redo as the history allows.
pub(super) fn refresh_buttons(doc: &Document) -> Result<(), JsValue> {
    let (undo, redo) = with_page(|page| Ok((page.form_history.can_undo(), page.form_history.can_redo())))?;
    for (id, on) in [(UNDO, undo), (REDO, redo)] {
        if let Some(b) = doc.get_element_by_id(id).filter(|b| b.has_attribute("disabled") == on) {
            if on {
                b.remove_attribute("disabled")?;
            } else {
                b.set_attribute("disabled", "")?;
            }
        }
    }
    Ok(())
}

fn write_form(doc: &Document, form: &FormInput) -> Result<(), JsValue> {
    for key in FormInput::FIELDS {
        set_control_value(doc, key, form.get(key).unwrap_or(""))?;
    }
    reset_edit_history()
}

/// A new document (demo, opened file, undone load) starts a new pole-edit history.
pub(super) fn reset_edit_history() -> Result<(), JsValue> {
    with_page(|page| {
        page.history = None;
        page.focus_requested = None;
        page.focus = None;
        page.edit_message = None;
        Ok(())
    })
}

/// The current design document as the text *Save design* downloads (pretty JSON, the CLI's
/// format). What was typed is kept as typed, including fields that do not read yet.
///
/// # Errors
/// A message when a choice control holds a value that is not one of its choices.
#[wasm_bindgen]
pub fn document_text() -> Result<String, JsValue> {
    let doc = document()?;
    let form = read_form(&doc)?;
    let spec = spec_from_form(&form).map_err(|errors| js_err("save", errors.iter().map(|e| format!("{}: {}", e.field, e.message)).collect::<Vec<_>>().join("; ")))?;
    write_design(&spec).map_err(|e| js_err("save", e))
}

/// The export files of the design on the page, made from its document text exactly as
/// `polewright export` makes them from the saved file: an array of `{name, contents}`, or a
/// string saying why not (naming the field).
#[wasm_bindgen]
pub fn export_files(format: &str, precision: &str) -> Result<JsValue, JsValue> {
    use crate::design::export::{export_text, ExportFailure, ExportFormat, Precision};
    let (Some(format), Some(precision)) = (ExportFormat::parse(format), Precision::parse(precision)) else {
        return Ok(JsValue::from_str("Choose a format and a number type."));
    };
    let text = match document_text() {
        Ok(t) => t,
        Err(_) => return Ok(JsValue::from_str("The form has errors: correct the fields marked in red, then export.")),
    };
    match export_text(&text, format, precision) {
        Ok(files) => {
            #[derive(serde::Serialize)]
            struct File {
                name: String,
                contents: String,
            }
            let list: Vec<File> = files.into_iter().map(|f| File { name: f.name, contents: f.contents }).collect();
            serde_wasm_bindgen::to_value(&list).map_err(|e| js_err("export", e.to_string()))
        }
        Err(ExportFailure::Design(e)) => Ok(JsValue::from_str(&format!("Not exported: {e}"))),
        Err(ExportFailure::Export(e)) => Ok(JsValue::from_str(&format!("Not exported: {e}"))),
    }
}

/// The design record of the page's design as an HTML fragment (all design text escaped), the
/// same as `polewright report` writes, dated `date`; or a sentence starting "Not " saying why.
#[wasm_bindgen]
pub fn record_fragment_html(date: &str) -> Result<String, JsValue> {
    let text = match document_text() {
        Ok(t) => t,
        Err(_) => return Ok("Not printed: the form has errors; correct the fields marked in red first.".into()),
    };
    let date: String = date.chars().filter(|c| c.is_ascii_digit() || *c == '-').take(10).collect();
    Ok(crate::design::export::record::record_from_text(&text, &date, false).unwrap_or_else(|e| format!("Not printed: {e}")))
}

/// Opens a design file's text: everything is checked first; on any problem the page is left
/// as it was and the message (naming the field) is returned. An empty string means opened.
#[wasm_bindgen]
pub fn open_document(text: &str, file_name: &str) -> Result<String, JsValue> {
    let doc = document()?;
    let shown = file_name.chars().take(80).collect::<String>();
    let opened = read_design(text).map_err(|e| e.to_string()).and_then(|spec| form_from_spec(&spec).map(|form| (spec, form)));
    let (spec, form) = match opened {
        Ok(both) => both,
        Err(message) => {
            let m = format!("{shown} was not opened (the design on the page is unchanged): {message}");
            set_text(&doc, FILE_STATUS, &m)?;
            return Ok(m);
        }
    };
    note_form(&doc)?;
    write_form(&doc, &form)?;
    crate::with_page(|page| {
        page.fresh_start = true;
        Ok(())
    })?;
    // The whole rulebook runs on it too: a saved work in progress opens, and says what is left.
    let errors = crate::design::check(&spec).errors;
    let status = match errors.len() {
        0 => format!("Opened {shown}."),
        k => format!(
            "Opened {shown}; {k} field{} need{} attention: {}.",
            if k == 1 { "" } else { "s" },
            if k == 1 { "s" } else { "" },
            errors.iter().take(3).map(|e| e.to_string()).collect::<Vec<_>>().join("; ")
        ),
    };
    set_text(&doc, FILE_STATUS, &status)?;
    Ok(String::new())
}

/// Undoes (or, with `redo`, redoes) the last form change: a typed pause, a choice, a pole
/// edit, a demo load or a file open. False when there is nothing to undo (redo).
#[wasm_bindgen]
pub fn undo_form(redo: bool) -> Result<bool, JsValue> {
    let doc = document()?;
    note_form(&doc)?;
    let target = with_page(|page| Ok(if redo { page.form_history.redo().cloned() } else { page.form_history.undo().cloned() }))?;
    let Some(form) = target else { return Ok(false) };
    write_form(&doc, &form)?;
    set_text(&doc, FILE_STATUS, if redo { "Redone." } else { "Undone: the form is as it was before the last change." })?;
    refresh_buttons(&doc)?;
    Ok(true)
}

/// What *Remember this design* keeps: every form field (the document and the text of sections
/// that are switched off) and the form of the pinned design, so a reload restores both.
#[derive(serde::Serialize, serde::Deserialize)]
#[serde(deny_unknown_fields)]
struct PageMemory {
    form: FormInput,
    #[serde(default)]
    pinned: Option<FormInput>,
}

/// The page's state as JSON text for the browser's storage.
#[wasm_bindgen]
pub fn form_state() -> Result<String, JsValue> {
    let form = read_form(&document()?)?;
    let pinned = with_page(|page| Ok(page.pinned.as_ref().map(|p| p.form.clone())))?;
    serde_json::to_string(&PageMemory { form, pinned }).map_err(|e| js_err("remember", e))
}

/// Restores [`form_state`] text: the form, and the pinned design (designed again from its
/// form). A stored state that does not read (another version, a damaged entry) is ignored and
/// false is returned, leaving the page as it is.
#[wasm_bindgen]
pub fn restore_form_state(text: &str) -> Result<bool, JsValue> {
    let Ok(memory) = serde_json::from_str::<PageMemory>(text) else {
        return Ok(false);
    };
    write_form(&document()?, &memory.form)?;
    if let Some(pinned_form) = memory.pinned {
        let outcome = crate::form::evaluate_form(&pinned_form);
        if let (Some(design), Some(report)) = (&outcome.design, &outcome.report) {
            let label = if pinned_form.pole_source.trim().is_empty() || pinned_form.choice("pole_source") == "list" {
                pinned_form.poles.trim().replace('\n', " ")
            } else {
                super::format_pairs(&design.feedback.requested_poles)
            };
            let pinned = super::Pinned::new(design, report, label, pinned_form.clone());
            with_page(|page| {
                page.pinned = Some(pinned);
                page.rendered.retain(|(k, _)| *k != super::ids::COMPARE);
                Ok(())
            })?;
        }
    }
    Ok(true)
}
