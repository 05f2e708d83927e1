//! Unit tests of [`crate::draw`]: the display lists are checked as data. Pixel positions are
//! compared with the scene's own frame ([`crate::plot`], tested against its formulas in
//! `tests/plot.rs`); what is checked here is that every pole, signal, limit and label of a
//! scene reaches the list, in the right place, with finite, bounded coordinates.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use super::*;
use crate::plot::{Band, EventLine, LimitLine, Series};

const RECT: Rect = Rect { x: 0.0, y: 0.0, width: 640.0, height: 400.0 };

/// The points of an SVG path written by `push_point`.
fn path_points(d: &str) -> Vec<[f64; 2]> {
    let mut out = Vec::new();
    for part in d.split(['M', 'L']).filter(|p| !p.trim().is_empty()) {
        let nums: Vec<f64> = part.split_whitespace().map(|v| v.parse().expect("number")).collect();
        assert_eq!(nums.len(), 2, "{part:?}");
        out.push([nums[0], nums[1]]);
    }
    out
}

/// Every path stroked while `colour` is the stroke style.
fn paths_in(ops: &[DrawOp], colour: &str) -> Vec<String> {
    let mut current = "";
    let mut out = Vec::new();
    for op in ops {
        match op {
            DrawOp::Stroke(c) => current = c,
            DrawOp::Restore => current = "",
            DrawOp::StrokePath(d) if current == colour => out.push(d.clone()),
            _ => {}
        }
    }
    out
}

fn all_coordinates(ops: &[DrawOp]) -> Vec<f64> {
    let mut v = Vec::new();
    for op in ops {
        match op {
            DrawOp::ClipRect(r) | DrawOp::FillRect(r) | DrawOp::StrokeRect(r) => v.extend([r.x, r.y, r.width, r.height]),
            DrawOp::StrokePath(d) => v.extend(path_points(d).into_iter().flatten()),
            DrawOp::FillCircle { centre, radius } | DrawOp::StrokeCircle { centre, radius } => v.extend([centre[0], centre[1], *radius]),
            DrawOp::Text { at, .. } => v.extend(at),
            DrawOp::LineWidth(w) | DrawOp::Alpha(w) => v.push(*w),
            _ => {}
        }
    }
    v
}

fn balanced_clips(ops: &[DrawOp]) {
    let mut depth = 0i32;
    for op in ops {
        match op {
            DrawOp::Save => depth += 1,
            DrawOp::Restore => depth -= 1,
            _ => {}
        }
        assert!(depth >= 0);
    }
    assert_eq!(depth, 0);
}

#[test]
fn every_closed_loop_pole_is_a_cross_at_its_pixel() {
    let poles = vec![[-1.0, 1.0], [-1.0, -1.0], [-2.0, 0.0]];
    let scene = PoleMapScene { closed_loop: poles.clone(), open_loop: vec![[0.5, 0.0]], ..Default::default() };
    let ops = pole_map(&scene, RECT, &ApproximateText);
    balanced_clips(&ops);
    let frame = scene.frame(RECT);
    let crosses = paths_in(&ops, colour::CLOSED_LOOP);
    // One per pole, and one legend swatch.
    assert_eq!(crosses.len(), poles.len() + 1, "{crosses:?}");
    for (pole, d) in poles.iter().zip(&crosses) {
        let pts = path_points(d);
        let centre = [(pts[0][0] + pts[1][0]) / 2.0, (pts[0][1] + pts[1][1]) / 2.0];
        let want = frame.to_pixel(*pole);
        assert!((centre[0] - want[0]).abs() < 0.01 && (centre[1] - want[1]).abs() < 0.01, "{centre:?} vs {want:?}");
    }
    assert!(ops.iter().any(|op| matches!(op, DrawOp::Text { text, .. } if text == "closed loop")));
    assert!(ops.iter().any(|op| matches!(op, DrawOp::Text { text, .. } if text == "open loop")));
}

#[test]
fn a_digital_map_draws_the_unit_circle_where_the_scene_places_it() {
    let scene = PoleMapScene { closed_loop: vec![[0.5, 0.2], [0.5, -0.2]], discrete: true, ..Default::default() };
    let ops = pole_map(&scene, RECT, &ApproximateText);
    let [x, y, r] = scene.unit_circle(RECT).expect("unit circle");
    let circles: Vec<_> = ops.iter().filter_map(|op| if let DrawOp::StrokeCircle { centre, radius } = op { Some((*centre, *radius)) } else { None }).collect();
    assert!(circles.iter().any(|(c, rad)| (c[0] - x).abs() < 1e-9 && (c[1] - y).abs() < 1e-9 && (rad - r).abs() < 1e-9), "{circles:?} vs {x} {y} {r}");
    assert!(ops.iter().any(|op| matches!(op, DrawOp::Text { text, .. } if text == "Re z")));
}

#[test]
fn each_signal_is_one_path_through_its_samples_and_limits_are_lines() {
    let t: Vec<f64> = (0..=100).map(|k| k as f64 * 0.01).collect();
    let y: Vec<f64> = t.iter().map(|v| (-3.0 * v).exp()).collect();
    let u: Vec<f64> = t.iter().map(|v| -2.0 * (-3.0 * v).exp()).collect();
    let scene = TimePlotScene {
        t: t.clone(),
        series: vec![
            Series { name: "position".into(), values: y.clone(), colour: Some(0), dash: Some(0), hold: false },
            Series { name: "force".into(), values: u, colour: Some(1), dash: Some(0), hold: false },
        ],
        limits: vec![LimitLine { value: 1.5, label: "limit +1.5".into() }],
        band: Some(Band { lower: -0.02, upper: 0.02, label: "±2 %".into() }),
        events: vec![EventLine { time: 0.5, label: "load step".into() }],
        x_label: "time (s)".into(),
        y_label: "value".into(),
        pinned: Vec::new(),
        window: None,
    };
    let ops = time_plot(&scene, RECT, &ApproximateText);
    balanced_clips(&ops);
    let rows = flow_legend(&[7.0 * 8.0, 7.0 * 5.0], 1e9).iter().map(|(r, _)| r + 1).max().unwrap_or(1);
    let frame = scene.frame_with_legend_rows(RECT, rows);
    let first = paths_in(&ops, colour::SERIES[0]);
    // The signal, and its legend swatch.
    assert_eq!(first.len(), 2, "{first:?}");
    let pts = path_points(&first[0]);
    let want0 = frame.to_pixel([t[0], y[0]]);
    let want_last = frame.to_pixel([t[100], y[100]]);
    assert!((pts[0][0] - want0[0]).abs() < 0.01 && (pts[0][1] - want0[1]).abs() < 0.01);
    assert!((pts[pts.len() - 1][0] - want_last[0]).abs() < 0.01 && (pts[pts.len() - 1][1] - want_last[1]).abs() < 0.01);
    let limit = paths_in(&ops, colour::LIMIT);
    assert_eq!(limit.len(), 1);
    let ly = path_points(&limit[0])[0][1];
    assert!((ly - frame.y.to_pixel(1.5)).abs() < 0.01);
    for label in ["position", "force", "limit +1.5", "load step", "±2 %", "time (s)", "value"] {
        assert!(ops.iter().any(|op| matches!(op, DrawOp::Text { text, .. } if text == label)), "{label} missing");
    }
}

#[test]
fn hostile_scenes_give_finite_bounded_lists() {
    let bad = [f64::NAN, f64::INFINITY, -f64::INFINITY, 1e300, -1e300, 0.0, 1e-300];
    let pts: Vec<[f64; 2]> = bad.iter().flat_map(|a| bad.iter().map(move |b| [*a, *b])).collect();
    for discrete in [false, true] {
        let scene = PoleMapScene { closed_loop: pts.clone(), open_loop: pts.clone(), requested: pts.clone(), highlight: Some([1e300, 1e300]), discrete, ..Default::default() };
        let ops = pole_map(&scene, RECT, &ApproximateText);
        balanced_clips(&ops);
        assert!(all_coordinates(&ops).iter().all(|v| v.is_finite() && v.abs() <= 1e6 + 1.0), "discrete {discrete}");
    }
    let t: Vec<f64> = (0..bad.len()).map(|k| k as f64).collect();
    let scene = TimePlotScene {
        t,
        series: vec![Series { name: "x".into(), values: bad.to_vec(), colour: None, dash: None, hold: false }],
        limits: vec![LimitLine { value: 1e300, label: "huge".into() }],
        ..Default::default()
    };
    let ops = time_plot(&scene, RECT, &ApproximateText);
    balanced_clips(&ops);
    assert!(all_coordinates(&ops).iter().all(|v| v.is_finite() && v.abs() <= 1e6 + 1.0));
}

#[test]
fn styles_are_set_only_when_they_change() {
    let scene = PoleMapScene { closed_loop: (0..20).map(|k| [-(k as f64) - 1.0, 0.0]).collect(), ..Default::default() };
    let ops = pole_map(&scene, RECT, &ApproximateText);
    for pair in ops.windows(2) {
        let repeated = matches!((&pair[0], &pair[1]), (DrawOp::Stroke(a), DrawOp::Stroke(b)) if a == b)
            || matches!((&pair[0], &pair[1]), (DrawOp::Fill(a), DrawOp::Fill(b)) if a == b)
            || matches!((&pair[0], &pair[1]), (DrawOp::LineWidth(a), DrawOp::LineWidth(b)) if a == b);
        assert!(!repeated, "{pair:?}");
    }
    let text = message("No design yet.", RECT, &ApproximateText);
    assert!(matches!(text.first(), Some(DrawOp::Clear { .. })));
    assert!(text.iter().any(|op| matches!(op, DrawOp::Text { text, align: Align::Center, .. } if text == "No design yet.")));
}

// ---------------------------------------------------------------------------
// Contrast of the plot palette (WCAG 2.2, success criterion 1.4.11 "Non-text contrast":
// graphical objects needed to understand the content at least 3:1 against adjacent colours;
// relative luminance and contrast ratio as defined in WCAG 2.2's glossary).
// ---------------------------------------------------------------------------

/// `#rrggbb`, or `rgba(r, g, b, a)` composited over white, as 0–255 channels.
fn rgb_on_white(css: &str) -> [f64; 3] {
    if let Some(hex) = css.strip_prefix('#') {
        let c = |i: usize| f64::from(u8::from_str_radix(&hex[i..i + 2], 16).unwrap());
        return [c(0), c(2), c(4)];
    }
    let inner = css.strip_prefix("rgba(").and_then(|s| s.strip_suffix(')')).unwrap();
    let v: Vec<f64> = inner.split(',').map(|s| s.trim().parse().unwrap()).collect();
    let a = v[3];
    [0, 1, 2].map(|i| a * v[i] + (1.0 - a) * 255.0)
}

fn relative_luminance(rgb: [f64; 3]) -> f64 {
    let lin = |c: f64| {
        let c = c / 255.0;
        if c <= 0.04045 {
            c / 12.92
        } else {
            ((c + 0.055) / 1.055).powf(2.4)
        }
    };
    0.2126 * lin(rgb[0]) + 0.7152 * lin(rgb[1]) + 0.0722 * lin(rgb[2])
}

fn contrast(a: [f64; 3], b: [f64; 3]) -> f64 {
    let (la, lb) = (relative_luminance(a), relative_luminance(b));
    (la.max(lb) + 0.05) / (la.min(lb) + 0.05)
}

#[test]
fn contrast_formula_matches_the_definition_at_its_ends() {
    // Black on white is 21:1 and a colour on itself 1:1 (WCAG 2.2 glossary).
    assert!((contrast([0.0; 3], [255.0; 3]) - 21.0).abs() < 1e-12);
    assert!((contrast([123.0, 135.0, 148.0], [123.0, 135.0, 148.0]) - 1.0).abs() < 1e-12);
    // #767676 on white is the well-known 4.54:1 grey (common practice, from memory).
    assert!((contrast(rgb_on_white("#767676"), [255.0; 3]) - 4.54).abs() < 0.01);
}

#[test]
fn every_plot_line_and_marker_has_at_least_3_to_1_contrast_against_what_it_is_drawn_on() {
    use super::colour::*;
    // What lines and markers are drawn on: the plot, the shaded stable region, the settling band.
    let grounds = [("background", BACKGROUND), ("stable region", STABLE_FILL), ("settling band", BAND_FILL)];
    let mut marks: Vec<(&str, &str)> = vec![
        ("open-loop pole", OPEN_LOOP),
        ("closed-loop pole", CLOSED_LOOP),
        ("pole not assigned", NOT_ASSIGNED),
        ("observer pole", OBSERVER),
        ("reference or load step", EVENT),
        ("limit line", LIMIT),
        ("keyboard ring", FOCUS),
        ("requested pole", REQUESTED),
        ("pinned design", PINNED),
        ("uncertain plant pole", UNCERTAIN),
        ("zero", ZERO),
        ("region boundary", REGION),
        ("stability boundary", STABLE_EDGE),
        ("axis", AXIS),
        ("band label", BAND_TEXT),
    ];
    marks.extend(SERIES.iter().map(|c| ("signal", *c)));
    let mut worst = f64::INFINITY;
    for (what, mark) in &marks {
        for (ground_name, ground) in grounds {
            let ratio = contrast(rgb_on_white(mark), rgb_on_white(ground));
            assert!(ratio >= 3.0, "{what} {mark} on the {ground_name} {ground}: {ratio:.2}:1, below 3:1");
            worst = worst.min(ratio);
        }
    }
    // Text on the plots is held to the 4.5:1 of criterion 1.4.3.
    for (what, text) in [("text", TEXT), ("muted text", MUTED_TEXT)] {
        for (ground_name, ground) in grounds {
            let ratio = contrast(rgb_on_white(text), rgb_on_white(ground));
            assert!(ratio >= 4.5, "{what} {text} on the {ground_name}: {ratio:.2}:1, below 4.5:1");
        }
    }
    assert!(worst < 3.1, "the check reaches the tightest pair ({worst:.2}:1)");
}
