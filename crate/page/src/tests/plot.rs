//! Unit tests of [`crate::plot`]: a child module of it (`use super::*` sees its private
//! items), kept in its own file so that test-only code (with its `unwrap`s and `expect`s)
//! stands apart from the code that runs.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use super::*;

fn labels(t: &Ticks) -> Vec<&str> {
    t.ticks.iter().map(|t| t.label.as_str()).collect()
}

fn check_ticks(t: &Ticks) {
    let v = t.values();
    let brief = format!("{:?} step {:?} n={} first={:?} last={:?}", t.range, t.step, v.len(), v.first(), v.last());
    assert!(v.len() >= 2, "too few ticks: {brief}");
    assert!(v.len() <= MAX_TICK_TARGET + 1, "too many ticks: {brief}");
    let step = t.step.value();
    for w in v.windows(2) {
        assert!(w[1] > w[0], "not increasing: {brief}");
        let d = w[1] - w[0];
        assert!((d - step).abs() <= step * 1e-9 + w[1].abs().max(w[0].abs()) * 1e-14, "uneven: {brief}");
    }
    for x in &v {
        assert!(x.is_finite());
        assert!(t.range.contains(*x), "{x} outside {:?}", t.range);
    }
    for l in labels(t) {
        assert!(!l.is_empty());
        assert!(!l.starts_with("-0") || l.contains(|c: char| ('1'..='9').contains(&c)), "{l}");
    }
    let mut ls: Vec<&str> = labels(t);
    ls.dedup();
    assert_eq!(ls.len(), v.len(), "duplicate labels {brief}");
}

#[test]
fn ticks_unit_range() {
    let t = Ticks::new(Range::new(0.0, 1.0), 5);
    check_ticks(&t);
    assert_eq!(t.values(), vec![0.0, 0.2, 0.4, 0.6, 0.8, 1.0]);
    assert_eq!(labels(&t), vec!["0.0", "0.2", "0.4", "0.6", "0.8", "1.0"]);
}

#[test]
fn ticks_mixed_sign() {
    let t = Ticks::new(Range::new(-3.7, 12.2), 5);
    check_ticks(&t);
    assert_eq!(t.values(), vec![0.0, 5.0, 10.0]);
    assert_eq!(t.step, NiceStep { mantissa: 5, exponent: 0 });
    assert_eq!(labels(&t), vec!["0", "5", "10"]);
    let t = Ticks::new(Range::new(-3.7, 12.2), 8);
    check_ticks(&t);
    assert_eq!(labels(&t), vec!["-2", "0", "2", "4", "6", "8", "10", "12"]);
}

#[test]
fn ticks_small_magnitudes_use_scientific() {
    let t = Ticks::new(Range::new(1e-6, 3e-6), 5);
    check_ticks(&t);
    assert_eq!(labels(&t), vec!["1e-6", "1.5e-6", "2e-6", "2.5e-6", "3e-6"]);
}

#[test]
fn ticks_large_magnitudes() {
    let t = Ticks::new(Range::new(-1e5, 2e5), 5);
    check_ticks(&t);
    assert_eq!(labels(&t), vec!["-100000", "0", "100000", "200000"]);
    let t = Ticks::new(Range::new(0.0, 3e7), 5);
    check_ticks(&t);
    assert_eq!(labels(&t), vec!["0", "1e7", "2e7", "3e7"]);
    let t = Ticks::new(Range::new(0.0, 3e7), 8);
    assert_eq!(labels(&t), vec!["0", "5e6", "1e7", "1.5e7", "2e7", "2.5e7", "3e7"]);
    let t = Ticks::new(Range::new(-4e250, -1e250), 4);
    check_ticks(&t);
    assert!(labels(&t).iter().all(|l| l.starts_with('-') && l.contains("e250")), "{t:?}");
}

#[test]
fn ticks_degenerate_ranges() {
    let t = Ticks::new(Range::new(5.0, 5.0), 5);
    check_ticks(&t);
    assert_eq!(t.range, Range::new(4.5, 5.5));
    assert!(t.values().contains(&5.0));
    let t = Ticks::new(Range::new(0.0, 0.0), 5);
    check_ticks(&t);
    assert_eq!(t.range, Range::new(-1.0, 1.0));
    assert_eq!(labels(&t), vec!["-1.0", "-0.5", "0.0", "0.5", "1.0"]);
    let t = Ticks::new(Range::new(-7e-12, -7e-12), 5);
    check_ticks(&t);
    let t = Ticks::new(Range::new(1e15, 1e15 + 1.0), 5);
    check_ticks(&t);
}

#[test]
fn ticks_huge_and_non_finite() {
    for r in [
        Range::new(-f64::MAX, f64::MAX),
        Range::new(f64::NAN, f64::NAN),
        Range::new(f64::NEG_INFINITY, f64::INFINITY),
        Range::new(f64::NAN, 3.0),
        Range { min: f64::NAN, max: f64::INFINITY },
        Range { min: 2.0, max: -2.0 },
        Range::new(-1e-300, 1e-300),
        Range::new(1e-310, 2e-310),
        Range::new(-1e300, -1e300),
    ] {
        for target in [0, 1, 2, 5, 10, 1000] {
            let t = Ticks::new(r, target);
            check_ticks(&t);
            let c = Ticks::covering(r, target);
            check_ticks(&c);
        }
    }
    assert_eq!(Range::new(f64::NAN, 3.0), Range::new(3.0, 3.0));
    assert_eq!(Range::new(f64::NAN, f64::INFINITY), Range::UNIT);
}

#[test]
fn no_negative_zero_labels() {
    let t = Ticks::new(Range::new(-0.3, 0.3), 6);
    check_ticks(&t);
    assert!(labels(&t).contains(&"0.0"));
    assert!(!labels(&t).iter().any(|l| *l == "-0.0" || *l == "-0"));
    assert_eq!(clean_negative_zero("-0.000".into()), "0.000");
    assert_eq!(clean_negative_zero("-0e0".into()), "0e0");
    assert_eq!(clean_negative_zero("-0.01".into()), "-0.01");
}

#[test]
fn covering_ticks_enclose_range() {
    let c = Ticks::covering(Range::new(-3.7, 12.2), 5);
    check_ticks(&c);
    assert_eq!(c.range, Range::new(-5.0, 15.0));
    assert!(c.values().first() <= Some(&-3.7));
    assert!(c.values().last() >= Some(&12.2));
    let c = Ticks::covering(Range::new(0.0, 1.0), 5);
    assert_eq!(c.values(), vec![0.0, 0.2, 0.4, 0.6, 0.8, 1.0]);
}

#[test]
fn nice_step_selection() {
    let s = |m, e| NiceStep { mantissa: m, exponent: e };
    assert_eq!(NiceStep::at_least(0.2), s(2, -1));
    assert_eq!(NiceStep::at_least(0.21), s(5, -1));
    assert_eq!(NiceStep::at_least(1000.0), s(1, 3));
    assert_eq!(NiceStep::at_least(7.0), s(1, 1));
    assert_eq!(NiceStep::at_least(f64::NAN), s(1, 0));
    assert_eq!(NiceStep::at_least(-1.0), s(1, 0));
    assert_eq!(s(5, 0).smaller(), s(2, 0));
    assert_eq!(s(1, 0).smaller(), s(5, -1));
    assert_eq!(s(5, 0).larger(), s(1, 1));
    assert_eq!(s(2, -3).multiple(3), 0.006);
    assert_eq!(s(1, -1).multiple(3), 0.3);
}

#[test]
fn range_padding_and_widening() {
    assert_eq!(Range::new(3.0, 1.0), Range { min: 1.0, max: 3.0 });
    assert_eq!(Range::new(0.0, 10.0).padded(0.1), Range::new(-1.0, 11.0));
    assert_eq!(Range::new(-2.0, -2.0).widened(), Range::new(-2.2, -1.8));
    assert_eq!(Range::new(0.0, 0.0).padded(0.5), Range::new(-2.0, 2.0));
    assert!(Range::new(1.0, 1.0 + 1e-12).is_degenerate());
    assert!(!Range::new(1.0, 1.001).is_degenerate());
    assert_eq!(Range::new(1.0, 2.0).padded(f64::NAN), Range::new(1.0, 2.0));
    assert_eq!(Range::from_values([f64::NAN, 2.0, -1.0, f64::INFINITY]), Some(Range::new(-1.0, 2.0)));
    assert_eq!(Range::from_values([f64::NAN]), None);
    assert_eq!(Range::from_values(Vec::new()), None);
    let big = Range::new(-f64::MAX, f64::MAX).padded(10.0);
    assert!(big.min.is_finite() && big.max.is_finite() && big.span().is_finite());
    assert_eq!(Range::new(0.0, 1.0).including(f64::NAN), Range::UNIT);
    assert_eq!(Range::new(0.0, 1.0).union(Range::new(-1.0, 0.5)), Range::new(-1.0, 1.0));
}

#[test]
fn axis_round_trip() {
    let x = Axis::new(Range::new(-3.0, 7.0), 50.0, 550.0);
    assert_eq!(x.to_pixel(-3.0), 50.0);
    assert_eq!(x.to_pixel(7.0), 550.0);
    assert_eq!(x.to_pixel(2.0), 300.0);
    let y = Axis::new(Range::new(0.0, 10.0), 400.0, 20.0);
    assert_eq!(y.to_pixel(0.0), 400.0);
    assert_eq!(y.to_pixel(10.0), 20.0);
    assert!(y.to_pixel(7.0) < y.to_pixel(3.0), "y grows upward in data");
    assert!(y.scale() < 0.0);
    for v in [-3.0, -1.234, 0.0, 5.5, 7.0, 100.0] {
        let back = x.to_data(x.to_pixel(v));
        assert!((back - v).abs() < 1e-12 * (1.0 + v.abs()), "{v} → {back}");
        let back = y.to_data(y.to_pixel(v));
        assert!((back - v).abs() < 1e-12 * (1.0 + v.abs()));
    }
    for p in [0.0, 50.0, 123.4, 550.0] {
        assert!((x.to_pixel(x.to_data(p)) - p).abs() < 1e-9);
    }
    let flat = Axis::new(Range::new(0.0, 1.0), 10.0, 10.0);
    assert_eq!(flat.to_data(42.0), 0.0);
    let bad = Axis::new(Range::new(0.0, 1.0), f64::NAN, f64::INFINITY);
    assert!(bad.to_pixel(0.5).is_finite());
    assert!(Axis::new(Range::new(2.0, 2.0), 0.0, 100.0).to_pixel(2.0).is_finite());
}

#[test]
fn frame_maps_y_upward() {
    let f = Frame::new(Rect::sized(400.0, 300.0), Margins { left: 40.0, right: 10.0, top: 10.0, bottom: 30.0 }, Range::new(0.0, 10.0), Range::new(-1.0, 1.0));
    assert_eq!(f.plot, Rect { x: 40.0, y: 10.0, width: 350.0, height: 260.0 });
    assert_eq!(f.to_pixel([0.0, -1.0]), [40.0, 270.0]);
    assert_eq!(f.to_pixel([10.0, 1.0]), [390.0, 10.0]);
    let d = f.to_data(f.to_pixel([3.3, 0.25]));
    assert!((d[0] - 3.3).abs() < 1e-12 && (d[1] - 0.25).abs() < 1e-12);
    // A canvas smaller than its margins still gives a usable frame.
    let tiny = Frame::new(Rect::sized(10.0, f64::NAN), Margins::STANDARD, Range::UNIT, Range::UNIT);
    assert!(tiny.plot.width >= 1.0 && tiny.plot.height >= 1.0);
    assert!(tiny.to_pixel([0.5, 0.5])[0].is_finite());
}

fn assert_equal_scale(f: &Frame) {
    let sx = f.x.scale();
    let sy = -f.y.scale();
    assert!((sx - sy).abs() <= 1e-9 * sx.abs(), "unequal scale {sx} vs {sy}");
}

#[test]
fn complex_plane_layout() {
    let outer = Rect::sized(500.0, 400.0);
    let pts = [[-3.0, 2.0], [-3.0, -2.0], [-0.5, 0.0]];
    let f = Frame::complex_plane(outer, Margins::STANDARD, &pts, false, 0.1);
    assert_equal_scale(&f);
    assert!(f.x.range.contains(0.0) && f.y.range.contains(0.0));
    for p in pts {
        let px = f.to_pixel(p);
        assert!(f.plot.contains(px), "{p:?} → {px:?} outside {:?}", f.plot);
    }
    assert!((f.y.range.min + f.y.range.max).abs() < 1e-12, "symmetric imaginary range");
    // Right of the imaginary axis there is some room (padding).
    assert!(f.x.range.max > 0.0);

    // Only real, far-left poles: origin still shown.
    let f = Frame::complex_plane(outer, Margins::STANDARD, &[[-100.0, 0.0], [-120.0, 0.0]], false, 0.1);
    assert_equal_scale(&f);
    assert!(f.x.range.contains(0.0) && f.x.range.contains(-120.0));
    assert!(f.y.range.span() > 0.0);

    // Discrete: unit circle included even for poles near the origin.
    let f = Frame::complex_plane(outer, Margins::STANDARD, &[[0.1, 0.1]], true, 0.1);
    assert_equal_scale(&f);
    for p in [[1.0, 0.0], [-1.0, 0.0], [0.0, 1.0], [0.0, -1.0]] {
        assert!(f.plot.contains(f.to_pixel(p)));
    }

    // Nothing, only origin, NaN/inf, huge.
    for pts in [vec![], vec![[0.0, 0.0]], vec![[f64::NAN, 1.0], [f64::INFINITY, 0.0]], vec![[-1e300, 1e300], [f64::MAX, 0.0]], vec![[1e-200, 0.0]], vec![[5.0, 0.0], [5.0, 0.0]]] {
        let f = Frame::complex_plane(outer, Margins::STANDARD, &pts, false, POLE_MAP_PADDING);
        assert_equal_scale(&f);
        assert!(f.x.range.span().is_finite() && f.x.range.span() > 0.0);
        assert!(f.y.range.span().is_finite() && f.y.range.span() > 0.0);
        assert!(f.x.range.contains(0.0) && f.y.range.contains(0.0));
        check_ticks(&f.x.ticks(70.0));
        check_ticks(&f.y.ticks(45.0));
        for p in pts.iter().filter(|p| p[0].is_finite() && p[1].is_finite()) {
            let q = [p[0].clamp(-MAX_MAGNITUDE, MAX_MAGNITUDE), p[1].clamp(-MAX_MAGNITUDE, MAX_MAGNITUDE)];
            let px = f.to_pixel(q);
            assert!(f.plot.contains(px) || (px[0] - f.plot.right()).abs() < 1e-6, "{q:?} {px:?} {f:?}");
        }
    }
}

#[test]
fn hit_testing() {
    let m = [[10.0, 10.0], [20.0, 10.0], [14.0, 10.0], [16.0, 10.0]];
    assert_eq!(hit_test([10.0, 10.0], &m, 5.0), Some(0));
    assert_eq!(hit_test([19.0, 10.0], &m, 5.0), Some(1));
    // Equidistant from markers 2 and 3: the lower index wins.
    assert_eq!(hit_test([15.0, 10.0], &m, 5.0), Some(2));
    // Exactly on the radius counts; just beyond does not.
    assert_eq!(hit_test([10.0, 15.0], &m[..1], 5.0), Some(0));
    assert_eq!(hit_test([10.0, 15.0001], &m[..1], 5.0), None);
    assert_eq!(hit_test([100.0, 100.0], &m, 5.0), None);
    assert_eq!(hit_test([10.0, 10.0], &[], 5.0), None);
    assert_eq!(hit_test([f64::NAN, 10.0], &m, 5.0), None);
    assert_eq!(hit_test([10.0, 10.0], &m, -1.0), None);
    assert_eq!(hit_test([10.0, 10.0], &m, f64::NAN), None);
    assert_eq!(hit_test([10.0, 10.0], &m, 0.0), Some(0));
    // Duplicates: first one.
    assert_eq!(hit_test([5.0, 5.0], &[[5.0, 5.0], [5.0, 5.0]], 1.0), Some(0));
    // Non-finite markers are skipped.
    assert_eq!(hit_test([5.0, 5.0], &[[f64::NAN, 5.0], [f64::INFINITY, 5.0], [6.0, 5.0]], 2.0), Some(2));
    // Infinite radius: everything finite is in reach.
    assert_eq!(hit_test([0.0, 0.0], &[[1e6, 0.0]], f64::INFINITY), Some(0));
}

#[test]
fn common_ticks_share_a_step() {
    let outer = Rect::sized(560.0, 440.0);
    let pts = [[-4.0, 0.8], [-4.0, -0.8], [-2.0, 1.5], [3.1, 0.0]];
    let f = Frame::complex_plane(outer, Margins::STANDARD, &pts, false, POLE_MAP_PADDING);
    let (xt, yt) = common_ticks(&f, 70.0, 42.0);
    check_ticks(&xt);
    check_ticks(&yt);
    assert_eq!(xt.step, yt.step);
    // Odd inputs still give valid ticks.
    let t = Ticks::with_step(Range::new(0.0, 1.0), NiceStep { mantissa: 1, exponent: -5 }, 5);
    check_ticks(&t);
    assert_eq!(t.step, NiceStep { mantissa: 2, exponent: -1 }, "fell back");
    let t = Ticks::with_step(Range::new(0.0, 1.0), NiceStep { mantissa: 5, exponent: 3 }, 5);
    check_ticks(&t);
}

#[test]
fn tick_targets() {
    assert_eq!(tick_target(400.0, 80.0), 5);
    assert_eq!(tick_target(10.0, 80.0), 2);
    assert_eq!(tick_target(1e9, 80.0), MAX_TICK_TARGET);
    assert_eq!(tick_target(f64::NAN, 80.0), 2);
    assert_eq!(tick_target(400.0, 0.0), 2);
}

/// Small deterministic generator (SplitMix64) for the property test.
struct SplitMix(u64);
impl SplitMix {
    fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    fn unit(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64
    }
    /// A value with random sign and magnitude over many decades.
    fn wide(&mut self) -> f64 {
        let decade = (self.unit() * 40.0 - 20.0).round() as i32;
        let sign = if self.next_u64() & 1 == 0 { 1.0 } else { -1.0 };
        sign * self.unit() * 10f64.powi(decade)
    }
}

#[test]
fn property_ticks_are_nice() {
    let mut rng = SplitMix(0x5eed_2024);
    for case in 0..20_000 {
        let a = rng.wide();
        let b = match case % 4 {
            0 => a,                           // degenerate
            1 => a + rng.wide().abs() * 1e-3, // narrow
            _ => rng.wide(),                  // anything
        };
        let target = (rng.next_u64() % 12) as usize;
        let padded = Range::new(a, b).padded(0.05);
        let t = Ticks::new(padded, target);
        check_ticks(&t);
        assert!(t.range.min >= padded.widened().min && t.range.max <= padded.widened().max);
        let c = Ticks::covering(padded, target);
        check_ticks(&c);
        assert!(c.range.min <= padded.min && c.range.max >= padded.max, "{padded:?} {c:?}");
    }
}

#[test]
fn pole_map_scene_json_and_pick() {
    let json = r#"{"open_loop":[[1.0,0.0],[-2.0,3.0],[-2.0,-3.0]],"closed_loop":[[-4.0,1.0],[-4.0,-1.0]],"discrete":false}"#;
    let s: PoleMapScene = serde_json::from_str(json).expect("valid scene");
    assert_eq!(s.open_loop.len(), 3);
    assert_eq!(s.closed_loop.len(), 2);
    assert!(s.not_assigned.is_empty());
    assert!(serde_json::from_str::<PoleMapScene>(r#"{"closed":[]}"#).is_err(), "unknown field rejected");
    let outer = Rect::sized(480.0, 360.0);
    let f = s.frame(outer);
    let target = f.to_pixel([-4.0, 1.0]);
    let pick = s.pick(outer, [target[0] + 2.0, target[1] - 1.0]);
    assert_eq!(pick, Some(PolePick { set: PoleSet::ClosedLoop, index: 0, re: -4.0, im: 1.0 }));
    let pick = s.pick(outer, f.to_pixel([1.0, 0.0]));
    assert_eq!(pick.map(|p| (p.set, p.index)), Some((PoleSet::OpenLoop, 0)));
    assert_eq!(s.pick(outer, [0.0, 0.0]), None);
    // Same location in two layers: closed loop (drawn on top) wins.
    let both = PoleMapScene { open_loop: vec![[-1.0, 0.0]], closed_loop: vec![[-1.0, 0.0]], ..Default::default() };
    let p = both.frame(outer).to_pixel([-1.0, 0.0]);
    assert_eq!(both.pick(outer, p).map(|p| p.set), Some(PoleSet::ClosedLoop));
}

fn serialized_keys<T: Serialize>(v: &T) -> Vec<String> {
    match serde_json::to_value(v) {
        Ok(serde_json::Value::Object(m)) => m.keys().cloned().collect(),
        other => panic!("not an object: {other:?}"),
    }
}

#[test]
fn legend_flows_into_right_aligned_rows() {
    let w = LEGEND_SWATCH_PX;
    let flow = flow_legend(&[50.0, 50.0, 50.0], 2.0 * (w + 50.0) + 1.0);
    assert_eq!(flow.iter().map(|f| f.0).collect::<Vec<_>>(), [0, 0, 1]);
    // Right-aligned: the first row ends at the right edge.
    assert!((flow[1].1 + w + 50.0 - (2.0 * (w + 50.0) + 1.0)).abs() < 1e-9);
    assert!(flow[0].1 < flow[1].1);
    let wide = flow_legend(&[500.0, 10.0], 100.0);
    assert_eq!(wide.iter().map(|f| f.0).collect::<Vec<_>>(), [0, 1]);
    assert_eq!(wide[0].1, 0.0);
    assert!(flow_legend(&[], 100.0).is_empty());
    assert_eq!(flow_legend(&[f64::NAN, f64::INFINITY], f64::NAN).len(), 2);
    let one_row = TimePlotScene::default().frame(Rect::sized(400.0, 300.0));
    let three = TimePlotScene::default().frame_with_legend_rows(Rect::sized(400.0, 300.0), 3);
    assert!((three.plot.y - one_row.plot.y - 2.0 * LEGEND_ROW_PX).abs() < 1e-9);
}

#[test]
fn pole_markers_come_in_keyboard_order() {
    let scene =
        PoleMapScene { open_loop: vec![[1.0, 0.0], [-3.0, 0.0]], closed_loop: vec![[-2.0, -1.0], [-5.0, 0.0], [-2.0, 1.0], [f64::NAN, 0.0]], not_assigned: vec![[-1.0, 0.0]], ..Default::default() };
    let order: Vec<(PoleSet, usize)> = scene.markers().iter().map(|p| (p.set, p.index)).collect();
    assert_eq!(order, [(PoleSet::ClosedLoop, 1), (PoleSet::ClosedLoop, 2), (PoleSet::ClosedLoop, 0), (PoleSet::NotAssigned, 0), (PoleSet::OpenLoop, 1), (PoleSet::OpenLoop, 0),]);
}

/// Vertical distance from `q` to the polyline `line` at `q`'s x (x increasing).
fn vertical_gap(line: &[[f64; 2]], q: [f64; 2]) -> f64 {
    for w in line.windows(2) {
        let (a, b) = (w[0], w[1]);
        if q[0] >= a[0] && q[0] <= b[0] {
            let y = if b[0] > a[0] { a[1] + (b[1] - a[1]) * (q[0] - a[0]) / (b[0] - a[0]) } else { a[1] };
            return (q[1] - y).abs();
        }
    }
    f64::INFINITY
}

#[test]
fn simplified_lines_stay_within_the_tolerance() {
    // A decaying oscillation, 2000 samples over 1000 px: every sample stays within
    // the tolerance of the simplified line, which is much shorter.
    for &(n, width) in &[(2000usize, 1000.0f64), (600, 900.0), (5000, 300.0)] {
        let pts: Vec<[f64; 2]> = (0..n)
            .map(|i| {
                let t = i as f64 / (n - 1) as f64;
                [10.0 + width * t, 150.0 + 120.0 * (-3.0 * t).exp() * (25.0 * t).cos()]
            })
            .collect();
        let tol = 0.2;
        let out = simplify_polyline(&pts, tol);
        assert_eq!(out.first(), pts.first());
        assert_eq!(out.last(), pts.last());
        assert!(out.len() * 4 < pts.len(), "{n}: {} of {} kept", out.len(), pts.len());
        // Beyond one pixel column per sample, the column bins decide; check the corridor
        // where samples are at least a pixel apart.
        if width / n as f64 >= 1.0 {
            for q in &pts {
                let gap = vertical_gap(&out, *q);
                assert!(gap <= tol + 1e-9, "{n}: {q:?} is {gap} px off");
            }
        }
        // Every kept point is an original sample, in order.
        let mut k = 0;
        for q in &out {
            while k < pts.len() && pts[k] != *q {
                k += 1;
            }
            assert!(k < pts.len(), "{q:?} is not a sample (or out of order)");
        }
    }
}

#[test]
fn simplification_keeps_each_columns_extremes_and_odd_input() {
    // Ten samples in one pixel column with a spike: first, lowest, highest and last stay.
    let col: Vec<[f64; 2]> = (0..10)
        .map(|i| {
            [
                5.0 + 0.05 * i as f64,
                if i == 4 {
                    90.0
                } else if i == 6 {
                    -20.0
                } else {
                    10.0
                },
            ]
        })
        .collect();
    let out = simplify_polyline(&col, 0.0);
    assert_eq!(out, vec![col[0], col[4], col[6], col[9]]);
    // Too short to simplify, a straight line, and x going backwards.
    assert_eq!(simplify_polyline(&[[0.0, 0.0], [1.0, 1.0]], 0.2).len(), 2);
    let line: Vec<[f64; 2]> = (0..100).map(|i| [i as f64 * 3.0, i as f64 * 2.0]).collect();
    assert_eq!(simplify_polyline(&line, 0.2), vec![line[0], line[99]]);
    let back = [[0.0, 0.0], [10.0, 5.0], [4.0, 9.0], [20.0, 1.0]];
    let out = simplify_polyline(&back, 0.2);
    assert_eq!(out.len(), 4, "{out:?}");
    assert!(simplify_polyline(&[], 1.0).is_empty());
}

#[test]
fn zoomed_pole_maps_fit_the_poles_at_equal_scale() {
    let pts = [[0.98, 0.03], [0.98, -0.03], [0.99, 0.0], [f64::NAN, 1.0]];
    let outer = Rect::sized(560.0, 440.0);
    let f = Frame::complex_region(outer, Margins::STANDARD, &pts, POLE_MAP_PADDING);
    for p in &pts[..3] {
        let q = f.to_pixel(*p);
        assert!(f.plot.contains(q), "{p:?} at {q:?}");
    }
    assert!((f.x.scale().abs() - f.y.scale().abs()).abs() < 1e-9 * f.x.scale().abs());
    assert!(!f.x.range.contains(0.0), "the origin is not forced into view");
    assert!(f.x.range.span() < 0.2, "{:?}", f.x.range);
    // One point, or none: still a drawable frame.
    let one = Frame::complex_region(outer, Margins::STANDARD, &[[5.0, 0.0]], 0.1);
    assert!(one.x.range.span() > 0.0 && one.x.range.contains(5.0));
    let none = Frame::complex_region(outer, Margins::STANDARD, &[], 0.1);
    assert!(none.x.range.contains(0.0));
    // The scene switches to it with fit_poles, and keeps the unit circle otherwise.
    let scene = PoleMapScene { closed_loop: pts[..3].to_vec(), discrete: true, ..Default::default() };
    let full = scene.frame(outer);
    assert!(full.x.range.contains(-1.0) && full.x.range.contains(1.0));
    let [cx, cy, r] = scene.unit_circle(outer).unwrap();
    assert!((full.to_pixel([1.0, 0.0])[0] - (cx + r)).abs() < 1e-9 && (cy - full.to_pixel([0.0, 0.0])[1]).abs() < 1e-9);
    let zoomed = PoleMapScene { fit_poles: true, ..scene.clone() };
    assert!(zoomed.frame(outer).x.range.span() < 0.2);
    assert!(PoleMapScene::default().unit_circle(outer).is_none());
}

#[test]
fn observer_poles_are_their_own_layer() {
    let scene = PoleMapScene { closed_loop: vec![[-2.0, 0.0]], observer: vec![[-8.0, 1.0], [-8.0, -1.0]], open_loop: vec![[1.0, 0.0]], ..Default::default() };
    let order: Vec<PoleSet> = scene.markers().iter().map(|p| p.set).collect();
    assert_eq!(order, [PoleSet::ClosedLoop, PoleSet::Observer, PoleSet::Observer, PoleSet::OpenLoop]);
    let outer = Rect::sized(480.0, 360.0);
    let at = scene.frame(outer).to_pixel([-8.0, -1.0]);
    assert_eq!(scene.pick(outer, at).map(|p| (p.set, p.index)), Some((PoleSet::Observer, 1)));
    let json = r#"{"observer": [[-3, 0]], "fit_poles": true}"#;
    let s: PoleMapScene = serde_json::from_str(json).expect("valid scene");
    assert!(s.fit_poles && s.observer.len() == 1);
    let t: TimePlotScene = serde_json::from_str(r#"{"series": [{"name": "r", "values": [1], "colour": 2, "dash": 1}], "events": [{"time": 0.5, "label": "step"}]}"#).expect("valid scene");
    assert_eq!((t.series[0].colour, t.series[0].dash), (Some(2), Some(1)));
    assert_eq!(t.events[0].time, 0.5);
}

#[test]
fn scene_field_lists_match_the_structs() {
    let mut want = serialized_keys(&PoleMapScene::default());
    let mut have: Vec<String> = PoleMapScene::FIELDS.iter().map(|s| s.to_string()).collect();
    want.sort();
    have.sort();
    assert_eq!(have, want);
    let mut want = serialized_keys(&TimePlotScene::default());
    let mut have: Vec<String> = TimePlotScene::FIELDS.iter().map(|s| s.to_string()).collect();
    want.sort();
    have.sort();
    assert_eq!(have, want);
}

#[test]
fn time_plot_scene_ranges() {
    let s = TimePlotScene {
        t: vec![0.0, 0.5, 1.0, 1.5, 2.0],
        series: vec![Series { name: "x1".into(), values: vec![1.0, 0.5, 0.2, f64::NAN, 0.0], ..Default::default() }, Series { name: "u".into(), values: vec![-3.0, -1.0, 0.0], ..Default::default() }],
        limits: vec![LimitLine { value: 4.0, label: "u max".into() }],
        band: Some(Band { lower: -0.02, upper: 0.02, label: "±2 %".into() }),
        ..Default::default()
    };
    let (x, y) = s.data_ranges();
    assert_eq!(x, Range::new(0.0, 2.0));
    assert!(y.contains(-3.0) && y.contains(4.0) && y.min < -3.0 && y.max > 4.0);
    assert_eq!(s.points(1).len(), 3);
    assert!(s.points(7).is_empty());
    let empty = TimePlotScene::default();
    let (x, y) = empty.data_ranges();
    assert!(x.span() > 0.0 && y.span() > 0.0);
    let s2: TimePlotScene = serde_json::from_str(r#"{"t":[0,1],"series":[{"name":"y","values":[0,1]}],"band":{"lower":0.9,"upper":1.1}}"#).expect("valid scene");
    assert_eq!(s2.series.len(), 1);
    assert_eq!(s2.band.as_ref().map(|b| b.upper), Some(1.1));
}
