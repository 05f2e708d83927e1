//! Browser tests of the wasm bindings (wasm32 only), run by
//! `wasm-bindgen-test-runner` in headless Chromium: see scripts/test-browser.
#![cfg(target_arch = "wasm32")]

use polewright::web;
use wasm_bindgen::{JsCast, JsValue};
use wasm_bindgen_test::*;

wasm_bindgen_test_configure!(run_in_browser);

fn js(json: &str) -> JsValue {
    js_sys::JSON::parse(json).expect("test JSON is valid")
}

fn document() -> web_sys::Document {
    web_sys::window()
        .and_then(|w| w.document())
        .expect("a browser document")
}

/// Append a canvas of the given CSS size to the body.
fn add_canvas(id: &str, width: u32, height: u32) -> web_sys::HtmlCanvasElement {
    let doc = document();
    let canvas: web_sys::HtmlCanvasElement = doc
        .create_element("canvas")
        .expect("create canvas")
        .dyn_into()
        .expect("a canvas element");
    canvas.set_id(id);
    canvas.set_width(width);
    canvas.set_height(height);
    doc.body()
        .expect("body")
        .append_child(&canvas)
        .expect("append canvas");
    canvas
}

/// Number of distinct RGBA colours on the canvas bitmap.
fn distinct_colours(canvas: &web_sys::HtmlCanvasElement) -> usize {
    let ctx: web_sys::CanvasRenderingContext2d = canvas
        .get_context("2d")
        .expect("context")
        .expect("2d context")
        .dyn_into()
        .expect("2d context type");
    let data = ctx
        .get_image_data(
            0.0,
            0.0,
            f64::from(canvas.width()),
            f64::from(canvas.height()),
        )
        .expect("image data")
        .data();
    let mut seen = std::collections::HashSet::new();
    for px in data.chunks_exact(4) {
        seen.insert([px[0], px[1], px[2], px[3]]);
    }
    seen.len()
}

#[wasm_bindgen_test]
fn version_is_the_package_version() {
    assert_eq!(web::version(), env!("CARGO_PKG_VERSION"));
}

#[wasm_bindgen_test]
fn pole_map_scene_deserialises_from_a_js_object() {
    let scene = web::parse_pole_map_scene(&js(
        r#"{"open_loop": [[1, 0], [-2, 3], [-2, -3]], "closed_loop": [[-4, 1]], "discrete": true}"#,
    ))
    .expect("valid scene");
    assert_eq!(scene.open_loop, vec![[1.0, 0.0], [-2.0, 3.0], [-2.0, -3.0]]);
    assert_eq!(scene.closed_loop, vec![[-4.0, 1.0]]);
    assert!(
        scene.not_assigned.is_empty(),
        "omitted fields default to empty"
    );
    assert!(scene.discrete);

    let empty = web::parse_pole_map_scene(&js("{}")).expect("all fields optional");
    assert_eq!(empty, web::PoleMapScene::default());

    let err = web::parse_pole_map_scene(&js(r#"{"closed": []}"#)).expect_err("unknown field");
    let msg = err.as_string().unwrap_or_default();
    assert!(msg.contains("pole map scene"), "readable error: {msg}");
    assert!(
        web::parse_pole_map_scene(&js(r#"{"open_loop": [[1]]}"#)).is_err(),
        "points are pairs"
    );
}

#[wasm_bindgen_test]
fn time_plot_scene_deserialises_from_a_js_object() {
    let scene = web::parse_time_plot_scene(&js(
        r#"{"t": [0, 0.5, 1], "series": [{"name": "x1", "values": [1, 0.4, 0.1]}],
            "limits": [{"value": 2, "label": "u max"}],
            "band": {"lower": -0.02, "upper": 0.02, "label": "band"}, "x_label": "t [s]"}"#,
    ))
    .expect("valid scene");
    assert_eq!(scene.t.len(), 3);
    assert_eq!(scene.series[0].name, "x1");
    assert_eq!(scene.limits[0].value, 2.0);
    assert_eq!(scene.band.as_ref().map(|b| b.upper), Some(0.02));
    assert!(scene.y_label.is_empty());
}

#[wasm_bindgen_test]
fn painters_draw_something() {
    let pole = add_canvas("wbt-pole-map", 420, 320);
    web::draw_pole_map(
        "wbt-pole-map",
        js(r#"{"open_loop": [[0.5, 0], [-1, 2], [-1, -2]], "closed_loop": [[-3, 1], [-3, -1]]}"#),
    )
    .expect("pole map drawn");
    assert!(distinct_colours(&pole) > 5, "pole map has content");

    let time = add_canvas("wbt-time-plot", 500, 240);
    web::draw_time_plot(
        "wbt-time-plot",
        js(
            r#"{"t": [0, 1, 2, 3], "series": [{"name": "y", "values": [0, 0.8, 1.1, 1.0]}],
               "limits": [{"value": 1.2, "label": "max"}]}"#,
        ),
    )
    .expect("time plot drawn");
    assert!(distinct_colours(&time) > 5, "time plot has content");

    assert!(web::draw_pole_map("no-such-canvas", js("{}")).is_err());
    assert!(web::draw_time_plot("wbt-time-plot", js(r#"{"t": "oops"}"#)).is_err());
    assert!(web::draw_time_plot("wbt-time-plot", js(r#"{"x_lable": "t"}"#)).is_err());
}

#[wasm_bindgen_test]
fn pick_pole_finds_the_marker_under_the_pointer() {
    add_canvas("wbt-pick", 400, 300);
    let scene = r#"{"closed_loop": [[-2, 1]], "open_loop": [[1, 0]]}"#;
    let parsed = web::parse_pole_map_scene(&js(scene)).expect("scene");
    let frame = parsed.frame(polewright::plot::Rect::sized(400.0, 300.0));
    let at = frame.to_pixel([-2.0, 1.0]);
    let pick = web::pick_pole("wbt-pick", js(scene), at[0] + 1.0, at[1]).expect("pick ran");
    let pick: web::PolePick = serde_wasm_bindgen::from_value(pick).expect("a pick");
    assert_eq!(pick.set, web::PoleSet::ClosedLoop);
    assert_eq!(pick.index, 0);
    let none = web::pick_pole("wbt-pick", js(scene), 1.0, 1.0).expect("pick ran");
    assert!(none.is_null());
}

#[wasm_bindgen_test]
fn internal_errors_are_shown_as_text() {
    let doc = document();
    let el = doc.create_element("p").expect("p");
    el.set_id(web::ERROR_ELEMENT_ID);
    el.set_attribute("hidden", "").expect("hidden");
    doc.body().expect("body").append_child(&el).expect("append");
    // The hook itself is installed at start-up (see the e2e tests); setting
    // it here would also replace the test harness's own hook.
    web::report_internal_error("<b>not markup</b>");
    assert_eq!(el.text_content().as_deref(), Some("<b>not markup</b>"));
    assert!(
        el.first_element_child().is_none(),
        "message is text, not HTML"
    );
    assert!(!el.has_attribute("hidden"));
}
