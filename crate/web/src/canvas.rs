//! Canvases: sizes, the pictures of the page, and the replay of display lists (crate::draw).

use super::*;

/// The device pixel ratio, clamped to 1…4.
pub(crate) fn pixel_ratio() -> f64 {
    web_sys::window().map(|w| w.device_pixel_ratio()).filter(|d| d.is_finite() && *d > 0.0).unwrap_or(1.0).clamp(1.0, 4.0)
}

impl PageState {
    pub(crate) fn canvas(&mut self, id: &str) -> Result<&mut CanvasState, JsValue> {
        self.canvases.iter_mut().find(|c| c.id == id).ok_or_else(|| js_err("not a page canvas", id))
    }

    /// The CSS size of canvas `id`: cached, or read from layout when not known yet.
    pub(crate) fn canvas_rect(&mut self, id: &str) -> Result<Rect, JsValue> {
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

    /// Paints `picture` on canvas `id` unless that very picture is already there. A picture
    /// of stacked panels sets the canvas's `data-panels` (the style sheet makes it taller).
    pub(crate) fn paint(&mut self, id: &'static str, picture: Picture) -> Result<(), JsValue> {
        let picture = self.windowed(id, picture);
        let panels = panel_count(&picture).to_string();
        let canvas = find_canvas(id)?;
        if canvas.get_attribute("data-panels").unwrap_or_else(|| "1".into()) != panels {
            canvas.set_attribute("data-panels", &panels)?;
            self.canvas(id)?.size = None;
        }
        let state = self.canvas(id)?;
        if !state.in_view {
            if state.waiting.is_none() {
                canvas.set_attribute("data-waiting", "")?;
            }
            state.waiting = Some(picture);
            return Ok(());
        }
        if state.waiting.take().is_some() {
            canvas.remove_attribute("data-waiting")?;
        }
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

/// Canvas `id` came into view (or left it; `in_view`): a picture that waited is painted now.
///
/// # Errors
/// When `id` is not a page canvas or the paint fails.
#[wasm_bindgen]
pub fn canvas_in_view(id: &str, in_view: bool) -> Result<(), JsValue> {
    with_page(|page| {
        let state = page.canvas(id)?;
        state.in_view = in_view;
        let key = state.id;
        match state.waiting.take() {
            Some(picture) if in_view => {
                find_canvas(key)?.remove_attribute("data-waiting")?;
                page.paint(key, picture)
            }
            waiting => {
                page.canvas(key)?.waiting = waiting;
                Ok(())
            }
        }
    })
}

/// One plot, panels, or the message when there is nothing to draw.
pub(crate) fn plots_or_message(mut panels: Vec<TimePlotScene>, empty: &str) -> Picture {
    panels.retain(|s| !s.series.is_empty() && !s.t.is_empty());
    match panels.len() {
        0 => Picture::Message(empty.to_string()),
        1 => panels.pop().map_or_else(|| Picture::Message(empty.to_string()), Picture::Time),
        _ => Picture::Stack(panels),
    }
}

/// The number of panels of a picture (for the canvas height: `data-panels`).
fn panel_count(picture: &Picture) -> usize {
    match picture {
        Picture::Stack(p) => p.len(),
        _ => 1,
    }
}

pub(crate) fn time_or_message(scene: Option<TimePlotScene>, empty: &str) -> Picture {
    match scene {
        Some(s) if !s.series.is_empty() && !s.t.is_empty() => Picture::Time(s),
        _ => Picture::Message(empty.to_string()),
    }
}

/// Paint every visible canvas from the page state (unchanged pictures are left alone).
pub(crate) fn paint_all(page: &mut PageState) -> Result<(), JsValue> {
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
    let axes = page.signal_axes;
    let (states, inputs, loop_pictures) = match (&page.shown, &page.design, &page.report) {
        (Shown::Design, Some(d), Some(r)) => (
            Picture::Time(overlay(form::states_scene(d, page.normalised), pinned.and_then(|p| p.states.get(normalised)))),
            plots_or_message(form::arrange_inputs(overlay(form::inputs_scene(d), pinned.map(|p| &p.inputs)), d, axes), "No inputs to show."),
            d.closed_loop.as_ref().map(|_| {
                (
                    plots_or_message(
                        form::loop_outputs_scene(d, r).map(|s| form::arrange_outputs(overlay(s, pinned.map(|p| &p.loop_outputs)), d, r, axes)).unwrap_or_default(),
                        "No outputs to show: enter the output matrix C in Measurement.",
                    ),
                    plots_or_message(form::loop_inputs_scene(d, r).map(|s| form::arrange_inputs(s, d, axes)).unwrap_or_default(), "No inputs to show."),
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
    // From x₀ = 0 the free response is zero: say so instead of drawing flat lines.
    let (states, inputs) = match &page.design {
        Some(d) if page.shown == Shown::Design && form::free_response_is_zero(d) => {
            let text = "x₀ = 0: the free response is zero. Give an initial state to see it.".to_string();
            (Picture::Message(text.clone()), Picture::Message(text))
        }
        _ => (states, inputs),
    };
    let frequency = match (&page.shown, &page.design) {
        // A quick run (a pole being dragged) keeps the last plot.
        (Shown::Design, Some(d)) if d.robustness_deferred => None,
        (Shown::Design, Some(d)) => Some(time_or_message(form::frequency_scene(d), "No margins for this design.")),
        _ => Some(Picture::Message("No design yet.".to_string())),
    };
    if let Some(f) = frequency {
        page.paint(ids::FREQUENCY_PLOT, f)?;
    }
    // The response beside the pole map: the loop's outputs when a loop scenario runs and C
    // gives outputs, else the free response's states.
    let overview = match (&loop_pictures, &states) {
        (Some((outputs @ (Picture::Time(_) | Picture::Stack(_)), _, _)), _) => {
            Some((outputs.clone(), "Loop simulation: outputs (solid) against their references (dashed); figures under Loop simulation below."))
        }
        (_, Picture::Time(_)) => Some((states.clone(), "Free response from x₀: the states; figures under Free response below.")),
        _ => None,
    };
    let (overview, caption) = overview.unwrap_or_else(|| (states.clone(), ""));
    page.paint(ids::OVERVIEW_PLOT, overview)?;
    if let Some((outputs, loop_inputs, estimation)) = loop_pictures {
        page.paint(ids::LOOP_PLOT, outputs)?;
        page.paint(ids::LOOP_INPUT_PLOT, loop_inputs)?;
        if let Some(e) = estimation {
            page.paint(ids::ESTIMATION_PLOT, e)?;
        }
    }
    page.paint(ids::STATE_PLOT, states)?;
    page.paint(ids::INPUT_PLOT, inputs)?;
    // Text last: a DOM change before a canvas paint would make the browser restyle first.
    let caption_el = by_id(&doc, ids::OVERVIEW_CAPTION)?;
    if caption_el.text_content().as_deref() != Some(caption) {
        caption_el.set_text_content(Some(caption));
    }
    Ok(())
}

// ---------------------------------------------------------------------------
// Canvas: the display lists of crate::draw, replayed
// ---------------------------------------------------------------------------

pub(crate) fn find_canvas(canvas_id: &str) -> Result<HtmlCanvasElement, JsValue> {
    let document = web_sys::window().and_then(|w| w.document()).ok_or_else(|| JsValue::from_str("no document"))?;
    let element = document.get_element_by_id(canvas_id).ok_or_else(|| js_err("no element with id", canvas_id))?;
    element.dyn_into::<HtmlCanvasElement>().map_err(|_| js_err("not a canvas", canvas_id))
}

/// The browser's own text widths, for laying out a display list.
pub(crate) struct CanvasText<'a> {
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
pub(crate) fn prepare_canvas(canvas_id: &str, rect: Rect, dpr: f64) -> Result<(HtmlCanvasElement, CanvasRenderingContext2d), JsValue> {
    let canvas = find_canvas(canvas_id)?;
    let w = (rect.width * dpr).round().clamp(1.0, 16384.0) as u32;
    let h = (rect.height * dpr).round().clamp(1.0, 16384.0) as u32;
    let resized = canvas.width() != w || canvas.height() != h;
    if resized {
        canvas.set_width(w);
        canvas.set_height(h);
    }
    let ctx = canvas.get_context("2d")?.ok_or_else(|| js_err("no 2d context", canvas_id))?.dyn_into::<CanvasRenderingContext2d>().map_err(|_| js_err("no 2d context", canvas_id))?;
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
pub(crate) fn replay(ctx: &CanvasRenderingContext2d, ops: &[DrawOp]) -> Result<(), JsValue> {
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
            DrawOp::Translate { dx, dy } => ctx.translate(*dx, *dy)?,
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
pub(crate) fn paint_picture(canvas_id: &str, rect: Rect, dpr: f64, picture: &Picture) -> Result<(), JsValue> {
    let (canvas, ctx) = prepare_canvas(canvas_id, rect, dpr)?;
    let measure = CanvasText { ctx: &ctx, font: std::cell::Cell::new("") };
    let ops = match picture {
        Picture::Poles(scene) => draw::pole_map(scene, rect, &measure),
        Picture::Time(scene) => draw::time_plot(scene, rect, &measure),
        Picture::Stack(panels) => draw::stacked_time_plots(panels, rect, &measure),
        Picture::Message(text) => draw::message(text, rect, &measure),
    };
    let done = replay(&ctx, &ops);
    if done.is_err() {
        // Leave the bitmap to be reset next time (its context state is unknown).
        canvas.set_width(0);
    }
    done
}
