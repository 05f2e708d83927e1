//! Browser tests of the wasm bindings (wasm32 only), run by
//! `wasm-bindgen-test-runner` in headless Chromium: see scripts/test-browser.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly
#![cfg(all(target_arch = "wasm32", feature = "test-exports"))]

use polewright_web as web;
use wasm_bindgen::{JsCast, JsValue};
use wasm_bindgen_test::*;

wasm_bindgen_test_configure!(run_in_browser);

fn js(json: &str) -> JsValue {
    js_sys::JSON::parse(json).expect("test JSON is valid")
}

fn document() -> web_sys::Document {
    web_sys::window().and_then(|w| w.document()).expect("a browser document")
}

/// Append a canvas of the given CSS size to the body.
fn add_canvas(id: &str, width: u32, height: u32) -> web_sys::HtmlCanvasElement {
    let doc = document();
    let canvas: web_sys::HtmlCanvasElement = doc.create_element("canvas").expect("create canvas").dyn_into().expect("a canvas element");
    canvas.set_id(id);
    canvas.set_width(width);
    canvas.set_height(height);
    doc.body().expect("body").append_child(&canvas).expect("append canvas");
    canvas
}

/// Number of distinct RGBA colours on the canvas bitmap.
fn distinct_colours(canvas: &web_sys::HtmlCanvasElement) -> usize {
    let ctx: web_sys::CanvasRenderingContext2d = canvas.get_context("2d").expect("context").expect("2d context").dyn_into().expect("2d context type");
    let data = ctx.get_image_data(0.0, 0.0, f64::from(canvas.width()), f64::from(canvas.height())).expect("image data").data();
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
    let scene = web::parse_pole_map_scene(&js(r#"{"open_loop": [[1, 0], [-2, 3], [-2, -3]], "closed_loop": [[-4, 1]], "discrete": true}"#)).expect("valid scene");
    assert_eq!(scene.open_loop, vec![[1.0, 0.0], [-2.0, 3.0], [-2.0, -3.0]]);
    assert_eq!(scene.closed_loop, vec![[-4.0, 1.0]]);
    assert!(scene.not_assigned.is_empty(), "omitted fields default to empty");
    assert!(scene.discrete);

    let empty = web::parse_pole_map_scene(&js("{}")).expect("all fields optional");
    assert_eq!(empty, web::PoleMapScene::default());

    let err = web::parse_pole_map_scene(&js(r#"{"closed": []}"#)).expect_err("unknown field");
    let msg = err.as_string().unwrap_or_default();
    assert!(msg.contains("pole map scene"), "readable error: {msg}");
    assert!(web::parse_pole_map_scene(&js(r#"{"open_loop": [[1]]}"#)).is_err(), "points are pairs");
}

#[wasm_bindgen_test]
fn time_plot_scene_deserialises_from_a_js_object() {
    let scene = web::parse_time_plot_scene(&js(r#"{"t": [0, 0.5, 1], "series": [{"name": "x1", "values": [1, 0.4, 0.1]}],
            "limits": [{"value": 2, "label": "u max"}],
            "band": {"lower": -0.02, "upper": 0.02, "label": "band"}, "x_label": "t [s]"}"#))
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
    web::draw_pole_map("wbt-pole-map", js(r#"{"open_loop": [[0.5, 0], [-1, 2], [-1, -2]], "closed_loop": [[-3, 1], [-3, -1]]}"#)).expect("pole map drawn");
    assert!(distinct_colours(&pole) > 5, "pole map has content");

    let time = add_canvas("wbt-time-plot", 500, 240);
    web::draw_time_plot(
        "wbt-time-plot",
        js(r#"{"t": [0, 1, 2, 3], "series": [{"name": "y", "values": [0, 0.8, 1.1, 1.0]}],
               "limits": [{"value": 1.2, "label": "max"}]}"#),
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
    let frame = parsed.frame(polewright_page::plot::Rect::sized(400.0, 300.0));
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
    assert!(el.first_element_child().is_none(), "message is text, not HTML");
    assert!(!el.has_attribute("hidden"));
}

/// Reads `obj.key` (nested keys separated by dots).
fn get(obj: &JsValue, path: &str) -> JsValue {
    path.split('.').fold(obj.clone(), |v, k| js_sys::Reflect::get(&v, &JsValue::from_str(k)).unwrap_or(JsValue::UNDEFINED))
}

fn array(v: &JsValue) -> Vec<JsValue> {
    js_sys::Array::from(v).iter().collect()
}

#[wasm_bindgen_test]
fn a_design_crosses_the_boundary_and_back_intact() {
    // Ogata, Modern Control Engineering, pole-placement example (from memory): K = [199, 55, 8].
    let out = web::evaluate(js(r#"{"a": "0 1 0\n0 0 1\n-1 -5 -6", "b": "0 0 1", "poles": "-2±4j, -10"}"#)).expect("evaluate runs");
    assert_eq!(get(&out, "status").as_string().as_deref(), Some("designed"));
    assert_eq!(array(&get(&out, "errors")).len(), 0);
    let gain = array(&get(&out, "design.feedback.gain"));
    assert_eq!(gain.len(), 1);
    let k: Vec<f64> = array(&gain[0]).iter().filter_map(|v| v.as_f64()).collect();
    for (got, want) in k.iter().zip([199.0, 55.0, 8.0]) {
        assert!((got - want).abs() <= 1e-9 * want, "{got} vs {want}");
    }
    assert_eq!(k.len(), 3);
    // The same numbers as the native evaluation of the same form.
    let native = polewright_page::form::evaluate_form(&polewright_page::form::FormInput { a: "0 1 0\n0 0 1\n-1 -5 -6".into(), b: "0 0 1".into(), poles: "-2±4j, -10".into(), ..Default::default() });
    let native_k = &native.design.expect("native design").feedback.gain[0];
    assert_eq!(&k, native_k, "bit-identical after the round trip");
    // The report's copyable text parses back to the same gain.
    let text = get(&out, "report.gain.text").as_string().unwrap_or_default();
    let row: Vec<f64> = text.lines().nth(2).unwrap_or("").split('\t').skip(1).filter_map(|c| c.parse().ok()).collect();
    assert_eq!(row, k);
    assert_eq!(get(&out, "sizes.a").as_string().as_deref(), Some("3 × 3"));
    assert!(get(&out, "sizes.c").is_undefined(), "blank optional matrices have no size");
    assert!(get(&out, "design_error").is_null());
    let series = array(&get(&out, "design.simulation.states"));
    assert_eq!(series.len(), 3);
}

#[wasm_bindgen_test]
fn bad_input_comes_back_as_field_errors_not_a_panic() {
    let out = web::evaluate(js(r#"{"a": "0 1 0\n0 0 x\n-1 -5 -6", "b": "0\n0\n1\n1", "poles": "-1, 2+j", "limits": "-4"}"#)).expect("evaluate runs");
    assert_eq!(get(&out, "status").as_string().as_deref(), Some("invalid"));
    let errors = array(&get(&out, "errors"));
    let fields: Vec<String> = errors.iter().filter_map(|e| get(e, "field").as_string()).collect();
    assert_eq!(fields, ["a", "poles", "limits"]);
    let a_msg = get(&errors[0], "message").as_string().unwrap_or_default();
    assert!(a_msg.contains("row 2, column 3") && a_msg.contains("\"x\""), "{a_msg}");
    assert!(get(&out, "design").is_null());
    assert!(get(&out, "sizes.a").is_undefined());
    assert_eq!(get(&out, "sizes.b").as_string().as_deref(), Some("4 × 1"));

    // A shape error from the plant check lands on B, not on A.
    let out = web::evaluate(js(r#"{"a": "0 1\n0 0", "b": "0\n1\n2", "poles": "-1 -2"}"#)).expect("runs");
    let errors = array(&get(&out, "errors"));
    assert_eq!(get(&errors[0], "field").as_string().as_deref(), Some("b"));

    // An infeasible design is a message, not an exception.
    let out = web::evaluate(js(r#"{"a": "1 0\n0 -1", "b": "0\n1", "poles": "-1, -2"}"#)).expect("runs");
    assert_eq!(get(&out, "status").as_string().as_deref(), Some("infeasible"));
    assert!(get(&out, "design_error").as_string().unwrap_or_default().contains("not possible"));

    // Malformed objects are refused with a readable error (still no panic).
    let e = web::evaluate(js(r#"{"A": "1"}"#)).expect_err("unknown key");
    assert!(e.as_string().unwrap_or_default().contains("unknown field `A`"));
    assert!(web::evaluate(js(r#"{"a": 5}"#)).is_err(), "numbers are not text");
    assert!(web::evaluate(JsValue::from_str("0 1")).is_err());
    let empty = web::evaluate(js("{}")).expect("all fields optional");
    assert_eq!(get(&empty, "status").as_string().as_deref(), Some("invalid"));
}

#[wasm_bindgen_test]
fn demos_are_listed_and_design() {
    let list = array(&web::demo_list().expect("list"));
    assert!(list.len() >= 2);
    for (i, d) in list.iter().enumerate() {
        assert!(get(d, "description").as_string().unwrap_or_default().starts_with("Illustrative"));
        let form = web::demo(i).expect("demo");
        let out = web::evaluate(form).expect("evaluate");
        assert_eq!(get(&out, "status").as_string().as_deref(), Some("designed"), "demo {i}");
    }
    assert!(web::demo(list.len()).is_err());
}

#[wasm_bindgen_test]
fn a_version_2_design_crosses_the_boundary_intact() {
    // The digital demo: observer, integral action with clamping, a 1 kHz sample time, a
    // reference step and a load step, evaluated through the JS boundary and natively.
    let list = array(&web::demo_list().expect("list"));
    let index = list.iter().position(|d| get(d, "title").as_string().unwrap_or_default().contains("digital")).expect("a digital demo");
    let form = web::demo(index).expect("demo");
    assert_eq!(get(&form, "sample_time").as_string().as_deref(), Some("0.001"));
    let out = web::evaluate(form).expect("evaluate runs");
    assert_eq!(get(&out, "status").as_string().as_deref(), Some("designed"));
    assert_eq!(get(&out, "design.domain").as_string().as_deref(), Some("discrete"));
    assert_eq!(get(&out, "design.sample_time").as_f64(), Some(0.001));

    let native_form = polewright_page::demos::demo(index).expect("native demo").form;
    let native = polewright_page::form::evaluate_form(&native_form);
    let nd = native.design.as_ref().expect("native design");
    let rows = |path: &str| -> Vec<Vec<f64>> { array(&get(&out, path)).iter().map(|r| array(r).iter().filter_map(|v| v.as_f64()).collect()).collect() };
    // Bit-identical after the round trip: K, L, K_i, Φ and the loop's signals.
    assert_eq!(rows("design.feedback.gain"), nd.feedback.gain);
    let no = nd.observer.as_ref().expect("native observer");
    assert_eq!(rows("design.observer.gain"), no.gain);
    assert_eq!(get(&out, "design.observer.form").as_string().as_deref(), Some("predictor"));
    assert_eq!(get(&out, "design.observer.noise_to_input_gain").as_f64(), Some(no.noise_to_input_gain));
    assert_eq!(get(&out, "design.tracking.mode").as_string().as_deref(), Some("integral"));
    assert_eq!(get(&out, "design.tracking.anti_windup").as_string().as_deref(), Some("clamp"));
    assert_eq!(rows("design.discrete_plant.a"), nd.discrete_plant.as_ref().expect("Φ").a);
    let nl = nd.closed_loop.as_ref().expect("native loop");
    assert_eq!(rows("design.loop.outputs"), nl.outputs);
    assert_eq!(rows("design.loop.commanded"), nl.commanded);
    let tracked = array(&get(&out, "design.loop.tracked"));
    assert_eq!(tracked.len(), 1);
    assert_eq!(get(&tracked[0], "rise_time").as_f64(), nl.tracked[0].rise_time);
    assert!(get(&out, "design.sample_rate.message").as_string().unwrap_or_default().contains("bandwidth"));
    // The report: L's copyable text reads back to the same numbers.
    let text = get(&out, "report.controller.observer.gain.text").as_string().unwrap_or_default();
    let l: Vec<f64> = text.lines().skip(2).filter_map(|line| line.split('\t').nth(1)).filter_map(|c| c.parse().ok()).collect();
    assert_eq!(l, no.gain.iter().map(|r| r[0]).collect::<Vec<_>>());
    assert_eq!(array(&get(&out, "report.controller.loop_outputs")).len(), 1);
    assert_eq!(array(&get(&out, "report.controller.events")).len(), 2);

    // A bad observer field comes back as that field's error.
    let bad = web::evaluate(js(r#"{"a": "0 1\n0 0", "b": "0\n1", "poles": "-1, -2", "observer": "poles", "observer_poles": "-5, x"}"#)).expect("evaluate runs");
    let errors = array(&get(&bad, "errors"));
    let fields: Vec<String> = errors.iter().filter_map(|e| get(e, "field").as_string()).collect();
    assert_eq!(fields, ["observer", "observer_poles"], "no C for the observer, and a bad pole");

    // The z-plane map with observer poles draws.
    let canvas = add_canvas("wbt-z-map", 420, 320);
    web::draw_pole_map("wbt-z-map", js(r#"{"closed_loop": [[0.98, 0.03], [0.98, -0.03]], "observer": [[0.9, 0.1], [0.9, -0.1]], "open_loop": [[1, 0]], "discrete": true}"#))
        .expect("z-plane map drawn");
    assert!(distinct_colours(&canvas) > 5, "z-plane map has content");
}
