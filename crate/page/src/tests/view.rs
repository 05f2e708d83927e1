//! Zoom and pan of plot views: worked by hand.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use super::*;

const FULL: Range = Range { min: 0.0, max: 10.0 };

#[test]
fn a_time_window_zooms_about_its_point_and_stays_inside_the_run() {
    // Twice about t = 5: [2.5, 7.5]; again about 7.5 (its right end): [5, 7.5].
    let w = zoom_window(FULL, None, 2.0, 5.0).unwrap();
    assert_eq!(w, [2.5, 7.5]);
    assert_eq!(zoom_window(FULL, Some(w), 2.0, 7.5).unwrap(), [5.0, 7.5]);
    // Zooming out past the whole run shows it all again (no window).
    assert_eq!(zoom_window(FULL, Some(w), 0.5, 5.0), None);
    // About t = 0.5 the point keeps its place: [0.25, 5.25]; zooming out at the start stays
    // inside the run.
    assert_eq!(zoom_window(FULL, None, 2.0, 0.5).unwrap(), [0.25, 5.25]);
    assert_eq!(zoom_window(FULL, Some([0.0, 5.0]), 0.8, 0.0).unwrap(), [0.0, 6.25]);
    // The narrowest window is a millionth of the run.
    let mut w = None;
    for _ in 0..200 {
        w = zoom_window(FULL, w, 10.0, 3.0);
    }
    let [a, b] = w.unwrap();
    assert!((b - a - 1e-5).abs() < 1e-12 && a <= 3.0 && b >= 3.0, "{a} {b}");
    // Bad input leaves the view as it was.
    assert_eq!(zoom_window(FULL, Some([1.0, 2.0]), f64::NAN, 1.5), Some([1.0, 2.0]));
}

#[test]
fn a_time_window_pans_by_its_own_width_and_stops_at_the_ends() {
    assert_eq!(pan_window(FULL, Some([2.0, 4.0]), 0.5), Some([3.0, 5.0]));
    assert_eq!(pan_window(FULL, Some([2.0, 4.0]), -5.0), Some([0.0, 2.0]));
    assert_eq!(pan_window(FULL, Some([2.0, 4.0]), 9.0), Some([8.0, 10.0]));
    // The whole run cannot pan.
    assert_eq!(pan_window(FULL, None, 0.5), None);
}

#[test]
fn a_region_of_the_plane_zooms_about_a_fixed_point_and_pans() {
    let r = [-4.0, 4.0, -3.0, 3.0];
    // About (2, 1), twice: the point keeps its place: (2 − 6/2, 2 + 2/2) and (1 − 4/2, 1 + 2/2).
    assert_eq!(zoom_region(r, 2.0, [2.0, 1.0]), [-1.0, 3.0, -1.0, 2.0]);
    assert_eq!(zoom_region(zoom_region(r, 2.0, [2.0, 1.0]), 0.5, [2.0, 1.0]), r);
    assert_eq!(pan_region(r, 0.25, -0.5), [-2.0, 6.0, -6.0, 0.0]);
    assert_eq!(zoom_region(r, 2.0, [f64::NAN, 0.0]), r);
}

#[test]
fn a_window_from_a_longer_run_never_breaks_the_view() {
    // A window zoomed on a run of 10 s, kept while a redesign shortened the run to 2 s: panning
    // and zooming show the new run (no panic; the window is cut to it).
    let short = Range { min: 0.0, max: 2.0 };
    assert_eq!(pan_window(short, Some([1.0, 6.0]), 0.5), None);
    assert_eq!(pan_window(short, Some([5.0, 6.0]), 0.5), Some([1.0, 2.0]));
    let z = zoom_window(short, Some([5.0, 6.0]), 2.0, 5.5).unwrap();
    assert!(z[0] >= 0.0 && z[1] <= 2.0 && z[1] > z[0], "{z:?}");
    // A broken window is left alone (nothing to move), never a panic.
    assert!(pan_window(short, Some([f64::NAN, 1.0]), 0.5).is_some_and(|w| w[0].is_nan() && w[1] == 1.0));
}
