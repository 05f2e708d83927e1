//! Zoom and pan of the plots (wheel, drag, keys, buttons; the views are computed by
//! `crate::plot::view`): a time window per time plot, a region of the plane for the pole map.

use super::*;

impl PageState {
    /// `picture` with the canvas's time window applied (every panel of a stack).
    pub(crate) fn windowed(&self, id: &str, picture: Picture) -> Picture {
        let window = self.time_windows.iter().find(|(k, _)| *k == id).map(|(_, w)| *w);
        match picture {
            Picture::Time(mut s) => {
                s.window = window;
                Picture::Time(s)
            }
            Picture::Stack(mut panels) => {
                for p in &mut panels {
                    p.window = window;
                }
                Picture::Stack(panels)
            }
            other => other,
        }
    }

    /// The time plot last painted on canvas `id` (its first panel) and its frame.
    fn time_frame(&mut self, id: &'static str) -> Result<Option<(TimePlotScene, crate::plot::Frame)>, JsValue> {
        let rect = self.canvas_rect(id)?;
        let scene = match self.canvas(id)?.painted.as_ref().map(|(_, _, p)| p) {
            Some(Picture::Time(s)) => s.clone(),
            Some(Picture::Stack(panels)) => match panels.first() {
                Some(s) => s.clone(),
                None => return Ok(None),
            },
            _ => return Ok(None),
        };
        let frame = scene.frame(rect);
        Ok(Some((scene, frame)))
    }

    fn set_window(&mut self, id: &'static str, window: Option<[f64; 2]>) {
        self.time_windows.retain(|(k, _)| *k != id);
        if let Some(w) = window {
            self.time_windows.push((id, w));
        }
    }
}

fn canvas_id(id: &str) -> Result<&'static str, JsValue> {
    ids::CANVASES.iter().copied().find(|c| *c == id).ok_or_else(|| js_err("not a page canvas", id))
}

/// Zoom canvas `id` by `factor` (> 1: in) about the CSS pixel (`x`, `y`) of the canvas.
#[wasm_bindgen]
pub fn zoom_plot(id: &str, factor: f64, x: f64, y: f64) -> Result<(), JsValue> {
    let id = canvas_id(id)?;
    with_page(|page| {
        if id == ids::POLE_MAP {
            let rect = page.canvas_rect(id)?;
            let frame = page.pole_scene.frame(rect);
            page.pole_view = Some(crate::plot::zoom_region(frame.view(), factor, frame.to_data([x, y])));
            page.pole_scene.view = page.pole_view;
        } else if let Some((scene, frame)) = page.time_frame(id)? {
            let window = crate::plot::zoom_window(scene.time_range(), scene.window, factor, frame.x.to_data(x));
            if window == scene.window {
                return Ok(());
            }
            page.set_window(id, window);
        }
        paint_all(page)
    })
}

/// Move the view of canvas `id` by (`dx`, `dy`) CSS pixels, as if dragged (time plots move
/// along time only).
#[wasm_bindgen]
pub fn pan_plot(id: &str, dx: f64, dy: f64) -> Result<(), JsValue> {
    let id = canvas_id(id)?;
    with_page(|page| {
        if id == ids::POLE_MAP {
            let rect = page.canvas_rect(id)?;
            let frame = page.pole_scene.frame(rect);
            let p = frame.plot;
            let region = crate::plot::pan_region(frame.view(), -dx / p.width.max(1.0), dy / p.height.max(1.0));
            page.pole_view = Some(region);
            page.pole_scene.view = page.pole_view;
        } else if let Some((scene, frame)) = page.time_frame(id)? {
            let window = crate::plot::pan_window(scene.time_range(), scene.window, -dx / frame.plot.width.max(1.0));
            if window == scene.window {
                return Ok(()); // nothing moved (the whole run is shown, or an end is reached)
            }
            page.set_window(id, window);
        }
        paint_all(page)
    })
}

/// Show the whole of canvas `id` again (the whole run; the pole map fitted to its poles).
#[wasm_bindgen]
pub fn reset_plot(id: &str) -> Result<(), JsValue> {
    let id = canvas_id(id)?;
    with_page(|page| {
        if id == ids::POLE_MAP {
            page.pole_view = None;
            page.pole_scene.view = None;
        } else {
            page.set_window(id, None);
        }
        paint_all(page)
    })
}
