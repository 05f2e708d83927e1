//! DOM helpers: elements, text, tables updated in place, the form controls.

use super::*;

pub(crate) fn document() -> Result<Document, JsValue> {
    web_sys::window().and_then(|w| w.document()).ok_or_else(|| JsValue::from_str("no document"))
}

pub(crate) fn by_id(doc: &Document, id: &str) -> Result<Element, JsValue> {
    doc.get_element_by_id(id).ok_or_else(|| js_err("no element with id", id))
}

pub(crate) fn now_ms() -> f64 {
    web_sys::window().and_then(|w| w.performance()).map_or(0.0, |p| p.now())
}

pub(crate) fn set_text(doc: &Document, id: &str, text: &str) -> Result<(), JsValue> {
    by_id(doc, id)?.set_text_content(Some(text));
    Ok(())
}

pub(crate) fn set_hidden(el: &Element, hidden: bool) -> Result<(), JsValue> {
    if el.has_attribute("hidden") != hidden {
        el.toggle_attribute_with_force("hidden", hidden)?;
    }
    Ok(())
}

pub(crate) fn set_hidden_id(doc: &Document, id: &str, hidden: bool) -> Result<(), JsValue> {
    set_hidden(&by_id(doc, id)?, hidden)
}

/// A new element with optional text (always as text, never markup).
pub(crate) fn make(doc: &Document, tag: &str, text: Option<&str>) -> Result<Element, JsValue> {
    let el = doc.create_element(tag)?;
    if let Some(t) = text {
        el.set_text_content(Some(t));
    }
    Ok(el)
}

pub(crate) fn make_class(doc: &Document, tag: &str, text: Option<&str>, class: &str) -> Result<Element, JsValue> {
    let el = make(doc, tag, text)?;
    el.set_class_name(class);
    Ok(el)
}

pub(crate) fn hash_of<T: Hash + ?Sized>(value: &T) -> u64 {
    let mut h = std::collections::hash_map::DefaultHasher::new();
    value.hash(&mut h);
    h.finish()
}

impl PageState {
    /// True when block `id` already shows content with this fingerprint; otherwise
    /// records it (the caller then rebuilds the block).
    pub(crate) fn unchanged(&mut self, id: &'static str, fingerprint: u64) -> bool {
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
pub(crate) fn table(doc: &Document, caption: Option<&str>, head: &[String], rows: &[Vec<String>], row_headers: bool, numeric_from: usize) -> Result<Element, JsValue> {
    Ok(table_with_cells(doc, caption, head, rows, row_headers, numeric_from)?.0)
}

/// [`table`], also returning the body cells (row by row, the columns kept) for later updates.
pub(crate) fn table_with_cells(doc: &Document, caption: Option<&str>, head: &[String], rows: &[Vec<String>], row_headers: bool, numeric_from: usize) -> Result<(Element, Vec<Vec<Element>>), JsValue> {
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
pub(crate) fn kept_columns(head: &[String], rows: &[Vec<String>]) -> Vec<bool> {
    (0..head.len()).map(|j| j == 0 || rows.iter().any(|r| r.get(j).is_some_and(|c| !c.is_empty()))).collect()
}

/// A table on the page and what it shows, so that a new table of the same shape is
/// written by changing only the cells whose text changed.
pub(crate) struct TableView {
    host: &'static str,
    shape: u64,
    rows: Vec<Vec<String>>,
    cells: Vec<Vec<Element>>,
}

impl PageState {
    /// Shows one table in element `host` (with id `table_id`, if given): updates the cells
    /// in place when the table there has the same caption, header and size, else rebuilds it.
    #[allow(clippy::too_many_arguments)]
    pub(crate) fn show_table(
        &mut self,
        doc: &Document,
        host: &'static str,
        table_id: Option<&str>,
        caption: &str,
        head: &[String],
        rows: &[Vec<String>],
        row_headers: bool,
        numeric_from: usize,
    ) -> Result<(), JsValue> {
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

    pub(crate) fn show_matrix(&mut self, doc: &Document, host: &'static str, table_id: Option<&str>, m: &MatrixTable) -> Result<(), JsValue> {
        let (head, rows) = matrix_rows(m);
        self.show_table(doc, host, table_id, &m.caption, &head, &rows, true, 1)
    }
}

/// A labelled matrix's header row and body rows (symbol in the corner).
pub(crate) fn matrix_rows(m: &MatrixTable) -> (Vec<String>, Vec<Vec<String>>) {
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
pub(crate) fn matrix_element(doc: &Document, m: &MatrixTable) -> Result<Element, JsValue> {
    let (head, rows) = matrix_rows(m);
    table(doc, Some(&m.caption), &head, &rows, true, 1)
}

/// Replaces the children of element `id` with `children`.
pub(crate) fn fill(doc: &Document, id: &str, children: &[Element]) -> Result<(), JsValue> {
    let host = by_id(doc, id)?;
    host.set_text_content(None);
    for c in children {
        host.append_child(c)?;
    }
    Ok(())
}

/// The text of control `pw-<key>`: a text area, a text input, a checkbox (`"true"` when
/// ticked, else `""`) or a select.
pub(crate) fn control_value(doc: &Document, key: &str) -> Result<String, JsValue> {
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

pub(crate) fn set_control_value(doc: &Document, key: &str, text: &str) -> Result<(), JsValue> {
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
pub(crate) fn fit_rows(t: &HtmlTextAreaElement) {
    let lines = t.value().lines().count().clamp(2, 12) as u32;
    if t.rows() != lines {
        t.set_rows(lines);
    }
}

/// Makes each table box that scrolls sideways reachable by keyboard (WCAG 2.1.1; axe's
/// "scrollable-region-focusable"): a focusable region named after its table's caption. A box
/// that fits gets no tab stop, so the Tab order is not cluttered with boxes that do not scroll.
pub(crate) fn mark_scrollable_tables(doc: &Document) -> Result<(), JsValue> {
    let boxes = doc.get_elements_by_class_name("table-wrap");
    for i in 0..boxes.length() {
        let Some(el) = boxes.item(i) else { continue };
        let scrolls = el.scroll_width() > el.client_width() + 1;
        let focusable = el.get_attribute("tabindex").is_some();
        if scrolls && !focusable {
            let caption = el.query_selector("caption")?.and_then(|c| c.text_content()).unwrap_or_default();
            el.set_attribute("tabindex", "0")?;
            el.set_attribute("role", "region")?;
            el.set_attribute("aria-label", &format!("{} (scrolls sideways)", if caption.is_empty() { "Table" } else { caption.as_str() }))?;
        } else if !scrolls && focusable {
            el.remove_attribute("tabindex")?;
            el.remove_attribute("role")?;
            el.remove_attribute("aria-label")?;
        }
    }
    Ok(())
}
