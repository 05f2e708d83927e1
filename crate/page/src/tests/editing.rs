//! Unit tests of [`crate::editing`]: a child module of it (`use super::*` sees its private
//! items), kept in its own file so that test-only code (with its `unwrap`s and `expect`s)
//! stands apart from the code that runs.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use super::*;
use crate::plot::{Margins, Range, Rect};

fn c(re: f64, im: f64) -> Complex64 {
    Complex64::new(re, im)
}

fn set(poles: &[Complex64]) -> PoleSet {
    PoleSet::from_poles(poles).unwrap()
}

/// -1±2j, -3, -4, -5±1j: entries 0 (pair), 1, 2 (real), 3 (pair); 6 poles.
fn sample() -> PoleSet {
    set(&[c(-1.0, 2.0), c(-1.0, -2.0), c(-3.0, 0.0), c(-4.0, 0.0), c(-5.0, -1.0), c(-5.0, 1.0)])
}

/// Plot area 400 × 300 px at (20, 20); data [-10, 10] × [-7.5, 7.5] (equal scale,
/// 20 px per unit); larger span 20.
fn frame() -> Frame {
    let m = Margins { left: 20.0, right: 20.0, top: 20.0, bottom: 20.0 };
    Frame::new(Rect::sized(440.0, 340.0), m, Range::new(-10.0, 10.0), Range::new(-7.5, 7.5))
}

fn bits(s: &PoleSet) -> Vec<(bool, u64, u64)> {
    s.entries().iter().map(|e| (e.is_pair(), e.upper().re.to_bits(), e.upper().im.to_bits())).collect()
}

fn assert_symmetric(s: &PoleSet) {
    for e in s.entries() {
        let z = e.upper();
        assert!(z.re.is_finite() && z.im.is_finite(), "{s:?}");
        match e {
            PoleEntry::Pair { im, .. } => assert!(*im > 0.0, "{s:?}"),
            PoleEntry::Real { .. } => assert_eq!(z.im, 0.0),
        }
    }
    let poles = s.poles();
    assert_eq!(poles.len(), s.pole_count());
    assert_eq!(check_conjugate_pairs(&poles), Ok(()), "{s:?}");
    assert_eq!(PoleSet::from_poles(&poles).as_ref(), Ok(s));
}

// ---- pole set ----------------------------------------------------------------

#[test]
fn pairs_and_converts_back() {
    let s = sample();
    assert_eq!(s.entries(), &[PoleEntry::Pair { re: -1.0, im: 2.0 }, PoleEntry::Real { re: -3.0 }, PoleEntry::Real { re: -4.0 }, PoleEntry::Pair { re: -5.0, im: 1.0 },]);
    assert_eq!(s.entry_count(), 4);
    assert_eq!(s.pole_count(), 6);
    assert_eq!(s.poles(), vec![c(-1.0, 2.0), c(-1.0, -2.0), c(-3.0, 0.0), c(-4.0, 0.0), c(-5.0, 1.0), c(-5.0, -1.0)]);
    assert_eq!(s.text(), "-1±2j, -3, -4, -5±1j");
    assert_eq!(s.to_string(), s.text());
    let v: Vec<Complex64> = (&s).into();
    assert_eq!(PoleSet::try_from(v), Ok(s.clone()));
    // A near-conjugate within the tolerance of check_conjugate_pairs pairs up, keeping the
    // upper member exactly.
    let near = set(&[c(-1e6, -1e6 * (1.0 + 1e-14)), c(-1e6, 1e6)]);
    assert_eq!(near.entries(), &[PoleEntry::Pair { re: -1e6, im: 1e6 }]);
    let near = set(&[c(-1e6, 1e6), c(-1e6 * (1.0 + 1e-14), -1e6 * (1.0 + 1e-14))]);
    assert_eq!(near.entries(), &[PoleEntry::Pair { re: -1e6, im: 1e6 }]);
    assert!(PoleSet::new().is_empty());
    assert_eq!(PoleSet::from_poles(&[]), Ok(PoleSet::new()));
}

#[test]
fn unpaired_and_non_finite_lists_refused() {
    assert_eq!(PoleSet::from_poles(&[c(-1.0, 2.0), c(-3.0, 0.0)]), Err(EditError::Poles(PoleError::MissingConjugate { pole: c(-1.0, 2.0), expected: c(-1.0, -2.0) })));
    assert!(PoleSet::from_poles(&[c(-1.0, 2.0), c(-1.0, 2.0), c(-1.0, -2.0)]).is_err());
    assert_eq!(PoleSet::from_poles(&[c(-1.0, 0.0), c(f64::NAN, 0.0)]), Err(EditError::Poles(PoleError::NotFinite { index: 2 })));
    let err = PoleSet::from_poles(&[c(-1.0, 2.0)]).unwrap_err();
    assert!(err.to_string().contains("-1-2j"), "{err}");
    assert!(std::error::Error::source(&err).is_some());
    assert_eq!(PoleSet::from_entries(vec![PoleEntry::Pair { re: -1.0, im: -2.0 }]), Err(EditError::PairOnRealAxis));
    assert_eq!(PoleSet::from_entries(vec![PoleEntry::Real { re: f64::INFINITY }]), Err(EditError::NotFinite));
    assert_eq!(PoleSet::from_entries(vec![PoleEntry::Pair { re: -1.0, im: 2.0 }]).map(|s| s.text()), Ok("-1±2j".into()));
}

// ---- edit rules -----------------------------------------------------------------

#[test]
fn moving_a_pair_moves_its_conjugate() {
    let s = sample().edited(&Edit::Move { entry: 0, to: c(-2.0, 3.0) }).unwrap();
    assert_eq!(s.entry(0), Some(PoleEntry::Pair { re: -2.0, im: 3.0 }));
    assert_eq!(&s.poles()[..2], &[c(-2.0, 3.0), c(-2.0, -3.0)]);
    assert_eq!(s.pole_count(), 6);
    // Other entries untouched.
    assert_eq!(&s.entries()[1..], &sample().entries()[1..]);
}

#[test]
fn target_below_the_axis_is_reflected() {
    let s = sample().edited(&Edit::Move { entry: 3, to: c(-6.0, -0.5) }).unwrap();
    assert_eq!(s.entry(3), Some(PoleEntry::Pair { re: -6.0, im: 0.5 }));
    assert_eq!(sample().edited(&Edit::Move { entry: 0, to: c(-1.0, 0.0) }), Err(EditError::PairOnRealAxis));
    assert_eq!(sample().edited(&Edit::Move { entry: 0, to: c(-1.0, -0.0) }), Err(EditError::PairOnRealAxis));
    assert!(EditError::PairOnRealAxis.to_string().contains("merge"));
}

#[test]
fn real_pole_stays_real() {
    let s = sample().edited(&Edit::Move { entry: 1, to: c(-2.5, 4.0) }).unwrap();
    assert_eq!(s.entry(1), Some(PoleEntry::Real { re: -2.5 }));
    assert_eq!(s.pole_count(), 6);
    assert_symmetric(&s);
}

#[test]
fn non_finite_targets_refused() {
    let s = sample();
    for bad in [c(f64::NAN, 1.0), c(-1.0, f64::INFINITY), c(f64::NEG_INFINITY, 0.0)] {
        for entry in [0, 1] {
            assert_eq!(s.edited(&Edit::Move { entry, to: bad }), Err(EditError::NotFinite));
        }
        assert_eq!(s.edited(&Edit::Add(bad)), Err(EditError::NotFinite));
        assert_eq!(s.edited(&Edit::SplitReal { entries: (1, 2), to: bad }), Err(EditError::NotFinite));
    }
    assert_eq!(s.edited(&Edit::MergePair { entry: 0, to: (-1.0, f64::NAN) }), Err(EditError::NotFinite));
    assert!(matches!(s.edited(&Edit::Replace(vec![c(f64::NAN, 0.0)])), Err(EditError::Poles(PoleError::NotFinite { index: 1 }))));
    // Through the history: refused, nothing recorded.
    let mut h = EditHistory::new(s.clone(), EditParams::default());
    assert_eq!(h.apply(&Edit::Move { entry: 0, to: c(f64::NAN, 1.0) }), Err(EditError::NotFinite));
    assert_eq!(h.current(), &s);
    assert!(!h.can_undo());
    h.begin_drag(0).unwrap();
    assert_eq!(h.drag_to(c(f64::INFINITY, 1.0)), Err(EditError::NotFinite));
    assert_eq!(h.current(), &s);
    assert!(EditError::NotFinite.to_string().contains("not a finite number"));
}

#[test]
fn add_and_remove_change_the_count() {
    let s = sample();
    let added = s.edited(&Edit::Add(c(-7.0, 0.0))).unwrap();
    assert_eq!(added.pole_count(), 7);
    assert_eq!(added.entry(4), Some(PoleEntry::Real { re: -7.0 }));
    let added = s.edited(&Edit::Add(c(-7.0, -2.0))).unwrap();
    assert_eq!(added.pole_count(), 8);
    assert_eq!(added.entry(4), Some(PoleEntry::Pair { re: -7.0, im: 2.0 }));
    let removed = s.edited(&Edit::Remove { entry: 0 }).unwrap();
    assert_eq!(removed.pole_count(), 4);
    assert_eq!(removed.entry(0), Some(PoleEntry::Real { re: -3.0 }));
    assert_eq!(s.edited(&Edit::Remove { entry: 1 }).unwrap().pole_count(), 5);
    assert_eq!(s.edited(&Edit::Remove { entry: 4 }), Err(EditError::NoSuchEntry { entry: 4, entries: 4 }));
    assert_eq!(s.edited(&Edit::Move { entry: 9, to: c(-1.0, 0.0) }), Err(EditError::NoSuchEntry { entry: 9, entries: 4 }));
    let message = EditError::NoSuchEntry { entry: 4, entries: 4 }.to_string();
    assert!(EditError::NoSuchEntry { entry: usize::MAX, entries: 0 }.to_string().contains("has 0"));
    assert!(message.contains("entry 5") && message.contains("has 4"), "{message}");
}

#[test]
fn replace_swaps_the_list() {
    let s = sample().edited(&Edit::Replace(vec![c(-2.0, 0.0), c(0.0, -1.0), c(0.0, 1.0)])).unwrap();
    assert_eq!(s.text(), "-2, ±1j");
    assert!(matches!(sample().edited(&Edit::Replace(vec![c(-2.0, 1.0)])), Err(EditError::Poles(PoleError::MissingConjugate { .. }))));
}

#[test]
fn split_and_merge_keep_the_count() {
    let s = sample();
    let split = s.edited(&Edit::SplitReal { entries: (2, 1), to: c(-3.5, -0.75) }).unwrap();
    assert_eq!(split.pole_count(), s.pole_count());
    assert_eq!(split.entry_count(), 3);
    assert_eq!(split.entry(1), Some(PoleEntry::Pair { re: -3.5, im: 0.75 }));
    assert_eq!(split.entry(2), Some(PoleEntry::Pair { re: -5.0, im: 1.0 }));
    assert_symmetric(&split);

    let merged = s.edited(&Edit::MergePair { entry: 0, to: (-0.5, -1.5) }).unwrap();
    assert_eq!(merged.pole_count(), s.pole_count());
    assert_eq!(merged.entry_count(), 5);
    assert_eq!(&merged.entries()[..3], &[PoleEntry::Real { re: -0.5 }, PoleEntry::Real { re: -1.5 }, PoleEntry::Real { re: -3.0 },]);
    assert_symmetric(&merged);

    assert_eq!(s.edited(&Edit::SplitReal { entries: (1, 1), to: c(-3.0, 1.0) }), Err(EditError::SameEntry { entry: 1 }));
    assert_eq!(s.edited(&Edit::SplitReal { entries: (0, 1), to: c(-3.0, 1.0) }), Err(EditError::NotReal { entry: 0 }));
    assert_eq!(s.edited(&Edit::SplitReal { entries: (1, 2), to: c(-3.0, 0.0) }), Err(EditError::PairOnRealAxis));
    assert_eq!(s.edited(&Edit::SplitReal { entries: (1, 7), to: c(-3.0, 1.0) }), Err(EditError::NoSuchEntry { entry: 7, entries: 4 }));
    assert_eq!(s.edited(&Edit::MergePair { entry: 1, to: (-1.0, -2.0) }), Err(EditError::NotPair { entry: 1 }));
    assert!(EditError::NotPair { entry: 1 }.to_string().contains("entry 2"));
    assert!(EditError::NotReal { entry: 0 }.to_string().contains("split"));
}

// ---- history ---------------------------------------------------------------------

fn mv(entry: usize, re: f64, im: f64) -> Edit {
    Edit::Move { entry, to: c(re, im) }
}

#[test]
fn undo_and_redo() {
    let s0 = sample();
    let mut h = EditHistory::new(s0.clone(), EditParams::default());
    assert!(h.undo().is_none() && h.redo().is_none());
    assert_eq!(h.apply(&mv(1, -2.0, 0.0)), Ok(Change::Changed));
    let s1 = h.current().clone();
    assert_eq!(h.apply(&Edit::Add(c(-8.0, 0.0))), Ok(Change::Changed));
    let s2 = h.current().clone();
    assert_eq!(h.undo_steps(), 2);
    assert_eq!(h.undo(), Some(&s1));
    assert_eq!(h.undo(), Some(&s0));
    assert_eq!(h.undo(), None);
    assert_eq!(h.current(), &s0);
    assert_eq!(h.redo_steps(), 2);
    assert_eq!(h.redo(), Some(&s1));
    assert_eq!(h.redo(), Some(&s2));
    assert_eq!(h.redo(), None);
    assert_eq!(h.undo(), Some(&s1));
    // A new edit after undo clears the redo list.
    assert!(h.can_redo());
    h.apply(&mv(0, -1.0, 5.0)).unwrap();
    assert!(!h.can_redo());
    assert_eq!(h.redo(), None);
    assert_eq!(h.undo(), Some(&s1));
    assert_eq!(h.undo(), Some(&s0));
}

#[test]
fn unchanged_edit_records_nothing() {
    let mut h = EditHistory::new(sample(), EditParams::default());
    h.apply(&mv(1, -2.0, 0.0)).unwrap();
    h.undo();
    // Moving a real pole to where it is (the imaginary part is dropped): no step, and
    // the redo list survives.
    assert_eq!(h.apply(&mv(1, -3.0, 9.0)), Ok(Change::Unchanged));
    assert_eq!(h.undo_steps(), 0);
    assert!(h.can_redo());
}

#[test]
fn history_is_bounded() {
    let params = EditParams { history_limit: 3, ..EditParams::default() };
    let mut h = EditHistory::new(sample(), params);
    let mut states = vec![h.current().clone()];
    for k in 0..5 {
        h.apply(&mv(1, -10.0 - k as f64, 0.0)).unwrap();
        states.push(h.current().clone());
    }
    assert_eq!(h.undo_steps(), 3);
    assert_eq!(h.undo(), Some(&states[4]));
    assert_eq!(h.undo(), Some(&states[3]));
    assert_eq!(h.undo(), Some(&states[2]));
    assert_eq!(h.undo(), None, "the oldest steps were dropped");
    assert_eq!(h.current(), &states[2]);
    for state in &states[3..=5] {
        assert_eq!(h.redo(), Some(state));
    }
    assert_eq!(h.undo_steps(), 3);

    let mut none = EditHistory::new(sample(), EditParams { history_limit: 0, ..EditParams::default() });
    none.apply(&mv(1, -2.0, 0.0)).unwrap();
    assert!(!none.can_undo());
    assert_eq!(EditParams::default().history_limit, 200);
}

#[test]
fn a_drag_is_one_step() {
    let s0 = sample();
    let mut h = EditHistory::new(s0.clone(), EditParams::default());
    h.apply(&mv(2, -4.5, 0.0)).unwrap();
    let s1 = h.current().clone();
    h.begin_drag(0).unwrap();
    assert_eq!(h.dragging(), Some(0));
    for k in 1..=20 {
        let x = -1.0 - 0.1 * k as f64;
        assert_eq!(h.drag_to(c(x, 2.0 + 0.05 * k as f64)), Ok(Change::Changed));
        // The list follows live.
        assert_eq!(h.current().entry(0), Some(PoleEntry::Pair { re: x, im: 2.0 + 0.05 * k as f64 }));
    }
    assert_eq!(h.undo_steps(), 1, "nothing recorded during the drag");
    assert_eq!(h.end_drag(), Change::Changed);
    assert_eq!(h.dragging(), None);
    assert_eq!(h.undo_steps(), 2);
    let dragged = h.current().clone();
    assert_eq!(h.undo(), Some(&s1), "one undo reverts the whole drag");
    assert_eq!(h.undo(), Some(&s0));
    assert_eq!(h.redo(), Some(&s1));
    assert_eq!(h.redo(), Some(&dragged));

    // A drag that ends where it began records nothing.
    h.begin_drag(1).unwrap();
    h.drag_to(c(-9.0, 0.0)).unwrap();
    h.drag_to(c(-3.0, 0.0)).unwrap();
    assert_eq!(h.end_drag(), Change::Unchanged);
    assert_eq!(h.undo_steps(), 2);

    // Cancel puts it back.
    h.begin_drag(1).unwrap();
    h.drag_to(c(-9.0, 0.0)).unwrap();
    assert_eq!(h.cancel_drag(), Change::Changed);
    assert_eq!(h.current(), &dragged);
    assert_eq!(h.undo_steps(), 2);

    // Without a drag.
    assert_eq!(h.drag_to(c(-1.0, 0.0)), Err(EditError::NoDrag));
    assert_eq!(h.end_drag(), Change::Unchanged);
    assert_eq!(h.begin_drag(99), Err(EditError::NoSuchEntry { entry: 99, entries: 4 }));
    assert_eq!(h.dragging(), None);

    // An edit or undo during a drag first commits it.
    h.begin_drag(1).unwrap();
    h.drag_to(c(-9.0, 0.0)).unwrap();
    let mid = h.current().clone();
    h.apply(&mv(2, -6.0, 0.0)).unwrap();
    assert_eq!(h.dragging(), None);
    assert_eq!(h.undo(), Some(&mid));
    assert_eq!(h.undo(), Some(&dragged));
    h.begin_drag(1).unwrap();
    h.drag_to(c(-9.5, 0.0)).unwrap();
    assert_eq!(h.undo(), Some(&dragged));
    assert_eq!(h.dragging(), None);
}

// ---- keyboard ---------------------------------------------------------------------

fn nudged(s: &PoleSet, entry: usize, d: Direction, step: StepSize) -> NudgeOutcome {
    nudge(s, entry, d, step, &frame(), &EditParams::default()).unwrap()
}

fn target(o: &NudgeOutcome) -> Complex64 {
    match o {
        NudgeOutcome::Edit(Edit::Move { to, .. }) => *to,
        other => panic!("{other:?}"),
    }
}

#[test]
fn nudge_steps_are_relative_to_the_frame_span() {
    let f = frame();
    assert_eq!(frame_span(&f), Ok(20.0));
    let s = sample();
    let left = target(&nudged(&s, 1, Direction::Left, StepSize::Normal));
    assert!((left.re - (-3.2)).abs() < 1e-12 && left.im == 0.0, "{left}");
    let right = target(&nudged(&s, 1, Direction::Right, StepSize::Large));
    assert!((right.re - (-1.0)).abs() < 1e-12, "{right}");
    let up = target(&nudged(&s, 0, Direction::Up, StepSize::Normal));
    assert!((up - c(-1.0, 2.2)).norm() < 1e-12, "{up}");
    // Down by 10 % of 20 = 2 would reach the axis: it stops at the clearance, 0.5 % of 20.
    let down = target(&nudged(&s, 0, Direction::Down, StepSize::Large));
    assert!((down - c(-1.0, 0.1)).norm() < 1e-12, "{down}");
    let down = target(&nudged(&s, 0, Direction::Down, StepSize::Normal));
    assert!((down - c(-1.0, 1.8)).norm() < 1e-12, "{down}");
    // Same data step in both directions, and it scales with the frame.
    let wide = Frame::new(Rect::sized(440.0, 340.0), Margins { left: 20.0, right: 20.0, top: 20.0, bottom: 20.0 }, Range::new(-100.0, 100.0), Range::new(-75.0, 75.0));
    let o = nudge(&s, 3, Direction::Up, StepSize::Normal, &wide, &EditParams::default()).unwrap();
    assert!((target(&o) - c(-5.0, 3.0)).norm() < 1e-12);
    let o = nudge(&s, 3, Direction::Left, StepSize::Normal, &wide, &EditParams::default()).unwrap();
    assert!((target(&o) - c(-7.0, 1.0)).norm() < 1e-12);
    // Applying the edit moves the pole.
    let mut h = EditHistory::new(s.clone(), EditParams::default());
    let NudgeOutcome::Edit(edit) = nudged(&s, 0, Direction::Right, StepSize::Normal) else { panic!("expected an edit") };
    h.apply(&edit).unwrap();
    assert!((h.current().entry(0).unwrap().upper() - c(-0.8, 2.0)).norm() < 1e-12);
    assert!(nudge(&s, 9, Direction::Left, StepSize::Normal, &f, &EditParams::default()).is_err());
    let bad = EditParams { nudge_fraction: f64::NAN, ..EditParams::default() };
    assert_eq!(nudge(&s, 0, Direction::Left, StepSize::Normal, &f, &bad), Err(EditError::UnusableFrame));
}

#[test]
fn vertical_nudge_of_a_real_pole_is_a_no_op() {
    let s = sample();
    for d in [Direction::Up, Direction::Down] {
        assert_eq!(nudged(&s, 2, d, StepSize::Normal), NudgeOutcome::NoChange(NoChangeReason::RealPoleStaysOnAxis));
    }
    assert!(NoChangeReason::RealPoleStaysOnAxis.to_string().contains("real axis"));
    // A pair at the clearance cannot go further down.
    let low = set(&[c(-1.0, 0.1), c(-1.0, -0.1)]);
    assert_eq!(nudged(&low, 0, Direction::Down, StepSize::Normal), NudgeOutcome::NoChange(NoChangeReason::PairAtAxisClearance));
    assert!(NoChangeReason::PairAtAxisClearance.to_string().contains("merge"));
    assert_eq!(Direction::Up.for_member(Member::Lower), Direction::Down);
    assert_eq!(Direction::Down.for_member(Member::Lower), Direction::Up);
    assert_eq!(Direction::Up.for_member(Member::Upper), Direction::Up);
    assert_eq!(Direction::Left.for_member(Member::Lower), Direction::Left);
}

// ---- pointer ---------------------------------------------------------------------

#[test]
fn pixel_drag() {
    let f = frame();
    let s = sample();
    let params = EditParams::default();
    // Pixel of data (-2, -3): x = 20 + 8·20 = 180, y = 20 + (7.5 + 3)·20 = 230.
    assert_eq!(f.to_pixel([-2.0, -3.0]), [180.0, 230.0]);
    assert_eq!(pointer_position(&f, [180.0, 230.0]), Ok(c(-2.0, -3.0)));
    // A pair dragged below the axis: the upper member is the reflection.
    assert_eq!(drag_edit(&s, 0, &f, [180.0, 230.0], &params), Ok(mv(0, -2.0, 3.0)));
    // A real pole stays real.
    assert_eq!(drag_edit(&s, 1, &f, [180.0, 230.0], &params), Ok(mv(1, -2.0, 0.0)));
    // A pair at the axis is held at the clearance (0.5 % of 20).
    let on_axis = f.to_pixel([-2.0, 0.0]);
    assert_eq!(drag_edit(&s, 0, &f, on_axis, &params), Ok(mv(0, -2.0, 0.1)));
    assert_eq!(drag_edit(&s, 0, &f, [f64::NAN, 10.0], &params), Err(EditError::NotFinite));
    assert_eq!(drag_edit(&s, 5, &f, [1.0, 1.0], &params), Err(EditError::NoSuchEntry { entry: 5, entries: 4 }));
    // Through the history, as one step.
    let mut h = EditHistory::new(s.clone(), params);
    h.begin_drag(3).unwrap();
    for p in [[100.0, 200.0], [120.0, 250.0], [180.0, 230.0]] {
        h.drag_to_pixel(&f, p).unwrap();
    }
    assert_eq!(h.current().entry(3), Some(PoleEntry::Pair { re: -2.0, im: 3.0 }));
    assert_eq!(h.drag_to_pixel(&f, [f64::INFINITY, 0.0]), Err(EditError::NotFinite));
    h.end_drag();
    assert_eq!(h.undo(), Some(&s));
    assert_eq!(h.drag_to_pixel(&f, [1.0, 1.0]), Err(EditError::NoDrag));
}

#[test]
fn either_member_of_a_pair_hits_the_same_entry() {
    let f = frame();
    let s = sample();
    let radius = EditParams::default().hit_radius_px;
    let markers = s.markers();
    assert_eq!(markers.len(), s.pole_count());
    let lower = f.to_pixel([-1.0, -2.0]);
    let upper = f.to_pixel([-1.0, 2.0]);
    let hit = s.hit(&f, [lower[0] + 3.0, lower[1] - 2.0], radius).unwrap();
    assert_eq!((hit.entry, hit.member), (0, Member::Lower));
    let hit = s.hit(&f, upper, radius).unwrap();
    assert_eq!((hit.entry, hit.member), (0, Member::Upper));
    let hit = s.hit(&f, f.to_pixel([-5.0, -1.0]), radius).unwrap();
    assert_eq!((hit.entry, hit.member), (3, Member::Lower));
    let hit = s.hit(&f, f.to_pixel([-4.0, 0.0]), radius).unwrap();
    assert_eq!((hit.entry, hit.member), (2, Member::Real));
    // Misses: too far (1 unit = 20 px > 8 px), or a non-finite pointer.
    assert_eq!(s.hit(&f, f.to_pixel([-1.0, -1.0]), radius), None);
    assert_eq!(s.hit(&f, [f64::NAN, 0.0], radius), None);
    // The lower marker then drags the same entry, reflected.
    let edit = drag_edit(&s, hit_lower_entry(&s, &f), &f, f.to_pixel([-1.5, -2.5]), &EditParams::default());
    assert_eq!(edit, Ok(mv(0, -1.5, 2.5)));
}

fn hit_lower_entry(s: &PoleSet, f: &Frame) -> usize {
    s.hit(f, f.to_pixel([-1.0, -2.0]), HIT_RADIUS_PX).map(|m| m.entry).unwrap()
}

// ---- random sequence ------------------------------------------------------------------

struct XorShift(u64);

impl XorShift {
    fn next(&mut self) -> u64 {
        let mut x = self.0;
        x ^= x << 13;
        x ^= x >> 7;
        x ^= x << 17;
        self.0 = x;
        x
    }
    fn below(&mut self, n: usize) -> usize {
        (self.next() % n.max(1) as u64) as usize
    }
    fn value(&mut self) -> f64 {
        // Mostly ordinary numbers, sometimes exact zero, now and then non-finite.
        match self.below(20) {
            0 => f64::NAN,
            1 => 0.0,
            2 => -0.0,
            _ => (self.below(2001) as f64 - 1000.0) / 100.0,
        }
    }
    fn point(&mut self) -> Complex64 {
        c(self.value(), self.value())
    }
}

#[test]
fn random_edit_sequence_keeps_the_invariants() {
    let original = sample();
    let params = EditParams { history_limit: 10_000, ..EditParams::default() };
    let f = frame();
    let mut h = EditHistory::new(original.clone(), params.clone());
    let mut undo_model: Vec<PoleSet> = Vec::new();
    let mut redo_model: Vec<PoleSet> = Vec::new();
    let mut rng = XorShift(0x9E37_79B9_7F4A_7C15);
    let (mut changed, mut refused) = (0, 0);
    for _ in 0..3000 {
        let before = h.current().clone();
        let entries = before.entry_count();
        let op = rng.below(11);
        match op {
            0..=6 => {
                let (edit, count_change): (Edit, Option<isize>) = match op {
                    0 => (Edit::Move { entry: rng.below(entries + 1), to: rng.point() }, Some(0)),
                    1 => {
                        let z = rng.point();
                        (Edit::Add(z), Some(if z.im == 0.0 { 1 } else { 2 }))
                    }
                    2 if entries > 1 => {
                        let e = rng.below(entries);
                        let n = before.entry(e).map_or(0, |x| x.pole_count()) as isize;
                        (Edit::Remove { entry: e }, Some(-n))
                    }
                    3 => {
                        let a = rng.below(entries);
                        let b = rng.below(entries);
                        (Edit::SplitReal { entries: (a, b), to: rng.point() }, Some(0))
                    }
                    4 => {
                        let e = rng.below(entries);
                        (Edit::MergePair { entry: e, to: (rng.value(), rng.value()) }, Some(0))
                    }
                    5 => {
                        // A random list, sometimes unpaired.
                        let mut poles = Vec::new();
                        for _ in 0..=rng.below(4) {
                            let z = rng.point();
                            poles.push(z);
                            if rng.below(6) != 0 && z.im != 0.0 {
                                poles.push(z.conj());
                            }
                        }
                        (Edit::Replace(poles), None)
                    }
                    _ => {
                        let d = [Direction::Left, Direction::Right, Direction::Up, Direction::Down][rng.below(4)];
                        let step = if rng.below(2) == 0 { StepSize::Normal } else { StepSize::Large };
                        match nudge(&before, rng.below(entries), d, step, &f, &params) {
                            Ok(NudgeOutcome::Edit(e)) => (e, Some(0)),
                            _ => continue,
                        }
                    }
                };
                match h.apply(&edit) {
                    Ok(Change::Changed) => {
                        changed += 1;
                        undo_model.push(before.clone());
                        redo_model.clear();
                        if let Some(dc) = count_change {
                            assert_eq!(h.current().pole_count() as isize, before.pole_count() as isize + dc, "{edit:?}");
                        }
                    }
                    Ok(Change::Unchanged) => assert_eq!(bits(h.current()), bits(&before)),
                    Err(e) => {
                        refused += 1;
                        assert!(!e.to_string().is_empty());
                        assert_eq!(bits(h.current()), bits(&before), "{edit:?} {e}");
                    }
                }
            }
            7 | 8 => {
                // A drag of several moves, ended or cancelled.
                let entry = rng.below(entries);
                if h.begin_drag(entry).is_err() {
                    assert_eq!(entries, 0);
                    continue;
                }
                for _ in 0..rng.below(6) {
                    if rng.below(2) == 0 {
                        let _ = h.drag_to(rng.point());
                    } else {
                        let p = [rng.value() * 40.0 + 200.0, rng.value() * 30.0 + 150.0];
                        let _ = h.drag_to_pixel(&f, p);
                    }
                    assert_symmetric(h.current());
                    assert_eq!(h.current().pole_count(), before.pole_count());
                }
                if op == 7 {
                    if h.end_drag() == Change::Changed {
                        changed += 1;
                        undo_model.push(before.clone());
                        redo_model.clear();
                    } else {
                        assert_eq!(h.current(), &before);
                    }
                } else {
                    h.cancel_drag();
                    assert_eq!(bits(h.current()), bits(&before));
                }
            }
            9 => match undo_model.pop() {
                Some(previous) => {
                    let got = h.undo().cloned();
                    assert_eq!(got.as_ref().map(bits), Some(bits(&previous)));
                    redo_model.push(before.clone());
                }
                None => assert!(h.undo().is_none()),
            },
            _ => match redo_model.pop() {
                Some(next) => {
                    let got = h.redo().cloned();
                    assert_eq!(got.as_ref().map(bits), Some(bits(&next)));
                    undo_model.push(before.clone());
                }
                None => assert!(h.redo().is_none()),
            },
        }
        assert_symmetric(h.current());
        assert_eq!(h.undo_steps(), undo_model.len());
        assert_eq!(h.redo_steps(), redo_model.len());
    }
    assert!(changed > 500 && refused > 50, "the generator exercises both: {changed} {refused}");
    while h.undo().is_some() {}
    assert_eq!(bits(h.current()), bits(&original));
    assert_eq!(h.undo_steps(), 0);
}

// ---- comparison ----------------------------------------------------------------------

fn input(name: &str, peak: f64, limit: Option<f64>) -> InputSummary {
    InputSummary { name: name.into(), unit: String::new(), peak: Figure::Value(peak), limit, peak_over_limit: limit.map_or(Figure::NotAvailable, |l| Figure::Value(peak / l)) }
}

fn summary() -> DesignSummary {
    DesignSummary {
        poles: "-1±2j, -3".into(),
        state_names: vec!["x1".into(), "x2".into(), "x3".into()],
        settling_time: vec![Figure::Value(2.0), Figure::Value(3.0), Figure::Value(1.0)],
        slowest_settling_time: Figure::Value(3.0),
        overshoot: vec![Figure::Value(5.0), Figure::NotAvailable, Figure::Value(1.0)],
        largest_overshoot: Figure::Value(5.0),
        inputs: vec![input("u1", 4.0, Some(8.0)), input("u2", 1.0, None)],
        gain_norm: Figure::Value(10.0),
        eigenvector_condition: Figure::Value(3.0),
        max_pole_error: Figure::Value(1e-14),
        tracked: vec![],
    }
}

fn find<'a>(rows: &'a [ComparisonRow], label: &str) -> &'a ComparisonRow {
    rows.iter().find(|r| r.figure == label).unwrap_or_else(|| panic!("no row {label}: {rows:?}"))
}

#[test]
fn comparison_rows_and_the_better_column() {
    let pinned = summary();
    let mut current = summary();
    current.slowest_settling_time = Figure::Value(2.5);
    current.largest_overshoot = Figure::Value(9.0);
    current.inputs = vec![input("u1", 6.0, Some(8.0)), input("u2", 0.5, None)];
    current.gain_norm = Figure::Value(10.0 * (1.0 + 1e-12));
    current.eigenvector_condition = Figure::Value(f64::INFINITY);
    let rows = compare(&pinned, &current);
    let labels: Vec<&str> = rows.iter().map(|r| r.figure.as_str()).collect();
    assert_eq!(
        labels,
        ["slowest settling time (s)", "largest overshoot (%)", "peak input u1 / limit", "peak input u2", "gain norm ‖K‖", "eigenvector condition κ₂(X)", "largest pole error (relative)",]
    );
    assert_eq!(find(&rows, "slowest settling time (s)").better, Which::Current);
    assert_eq!(find(&rows, "largest overshoot (%)").better, Which::Pinned);
    let u1 = find(&rows, "peak input u1 / limit");
    assert_eq!((u1.pinned, u1.current, u1.better), (Figure::Value(0.5), Figure::Value(0.75), Which::Pinned));
    assert_eq!(u1.current_text, "0.75");
    assert_eq!(find(&rows, "peak input u2").better, Which::Current);
    assert_eq!(find(&rows, "gain norm ‖K‖").better, Which::Same, "within 1e-9");
    let kappa = find(&rows, "eigenvector condition κ₂(X)");
    assert_eq!(kappa.better, Which::Pinned);
    assert_eq!(kappa.current_text, "∞");
    assert_eq!(find(&rows, "largest pole error (relative)").better, Which::Same);
    // Swapping sides swaps the verdicts.
    let swapped = compare(&current, &pinned);
    assert_eq!(find(&swapped, "slowest settling time (s)").better, Which::Pinned);
    assert_eq!(find(&swapped, "eigenvector condition κ₂(X)").better, Which::Current);
    let json = serde_json::to_string(&rows).unwrap();
    assert!(json.contains("\"better\":\"current\""), "{json}");
    assert!(json.contains("{\"kind\":\"value\",\"value\":0.5}"), "{json}");
    // Strict tolerance: the tiny gain-norm difference counts.
    let strict = compare_with(&pinned, &current, &ComparisonParams { equal_within: 0.0 });
    assert_eq!(find(&strict, "gain norm ‖K‖").better, Which::Pinned);
}

#[test]
fn not_settled_and_missing_figures() {
    let p = ComparisonParams::default();
    assert_eq!(better_of(Figure::Value(9.0), Figure::NotSettled, &p), Which::Pinned);
    assert_eq!(better_of(Figure::NotSettled, Figure::Value(9.0), &p), Which::Current);
    assert_eq!(better_of(Figure::NotSettled, Figure::NotSettled, &p), Which::Undecided);
    assert_eq!(better_of(Figure::NotAvailable, Figure::Value(1.0), &p), Which::Undecided);
    assert_eq!(better_of(Figure::Value(1.0), Figure::NotAvailable, &p), Which::Undecided);
    assert_eq!(better_of(Figure::Value(f64::NAN), Figure::Value(1.0), &p), Which::Undecided);
    assert_eq!(better_of(Figure::Value(f64::INFINITY), Figure::Value(f64::INFINITY), &p), Which::Same);
    assert_eq!(Figure::NotSettled.text(), "not settled");
    assert_eq!(Figure::from_settling(None), Figure::NotSettled);
    assert_eq!(Figure::from_number(f64::NAN), Figure::NotAvailable);
    assert_eq!(slowest(&[Figure::Value(1.0), Figure::NotSettled, Figure::Value(2.0)]), Figure::NotSettled);
    assert_eq!(slowest(&[Figure::Value(1.0), Figure::Value(2.0)]), Figure::Value(2.0));
    assert_eq!(slowest(&[]), Figure::NotAvailable);
    assert_eq!(largest(&[Figure::NotAvailable, Figure::Value(3.0), Figure::Value(1.0)]), Figure::Value(3.0));
    assert_eq!(largest(&[Figure::NotAvailable]), Figure::NotAvailable);

    let pinned = summary();
    let mut current = summary();
    current.slowest_settling_time = Figure::NotSettled;
    current.largest_overshoot = Figure::NotAvailable;
    // One input fewer, and u1 without a limit: raw peaks are compared.
    current.inputs = vec![input("u1", 3.0, None)];
    let rows = compare(&pinned, &current);
    let settle = find(&rows, "slowest settling time (s)");
    assert_eq!((settle.better, settle.current_text.as_str()), (Which::Pinned, "not settled"));
    let over = find(&rows, "largest overshoot (%)");
    assert_eq!((over.better, over.current_text.as_str()), (Which::Undecided, "—"));
    let u1 = find(&rows, "peak input u1");
    assert_eq!((u1.pinned, u1.current, u1.better), (Figure::Value(4.0), Figure::Value(3.0), Which::Current));
    let u2 = find(&rows, "peak input u2");
    assert_eq!((u2.current, u2.better), (Figure::NotAvailable, Which::Undecided));
}

#[test]
fn tracked_outputs_are_matched_by_name() {
    let tracked = |name: &str, settle: Option<f64>, over: f64| TrackedSummary {
        name: name.into(),
        settling_time: Figure::from_settling(settle),
        overshoot: Figure::Value(over),
        steady_state_error: Figure::Value(0.0),
    };
    let mut pinned = summary();
    pinned.tracked = vec![tracked("position", Some(1.0), 2.0), tracked("angle", None, 1.0)];
    let mut current = summary();
    current.tracked = vec![tracked("angle", Some(4.0), 3.0), tracked("speed", Some(1.0), 0.0)];
    let rows = compare(&pinned, &current);
    assert_eq!(find(&rows, "settling time of angle (s)").better, Which::Current);
    assert_eq!(find(&rows, "overshoot of angle (%)").better, Which::Pinned);
    assert_eq!(find(&rows, "steady-state error of angle").better, Which::Same);
    assert_eq!(find(&rows, "settling time of position (s)").current, Figure::NotAvailable);
    assert_eq!(find(&rows, "settling time of speed (s)").pinned, Figure::NotAvailable);
    let first_tracked = rows.iter().position(|r| r.figure.contains("of ")).unwrap();
    assert_eq!(rows[first_tracked].figure, "settling time of position (s)");
    assert_eq!(rows.len(), 7 + 3 * 3);
}

const TEXTBOOK: &str = r#"{"format": "polewright.design", "version": 1,
        "plant": {"a": [[0,1,0],[0,0,1],[-1,-5,-6]], "b": [0,0,1], "input_units": ["N"]},
        "feedback": {"poles": ["-2±4j", -10]}, "actuators": {"limit": [500]},
        "simulation": {"initial_state": [1, 0, 0]}}"#;

#[test]
fn summary_from_a_design_run() {
    let result = crate::design::run_text(TEXTBOOK).unwrap();
    let s = DesignSummary::from_result(&result);
    assert_eq!(s.poles, "-2±4j, -10");
    let times: Vec<f64> = result.simulation.settling_time.iter().map(|t| t.unwrap()).collect();
    let worst = times.iter().copied().fold(0.0, f64::max);
    assert!(worst > 0.0);
    assert_eq!(s.slowest_settling_time, Figure::Value(worst));
    assert_eq!(s.settling_time.len(), 3);
    assert_eq!(s.gain_norm, Figure::Value(result.feedback.gain_norm));
    assert_eq!(s.eigenvector_condition, Figure::Value(result.feedback.eigenvector_condition));
    assert_eq!(s.max_pole_error, Figure::Value(result.feedback.max_pole_error));
    let peak = result.simulation.peak_input[0];
    assert_eq!(s.inputs[0].peak, Figure::Value(peak));
    assert_eq!(s.inputs[0].limit, Some(500.0));
    assert_eq!(s.inputs[0].peak_over_limit, Figure::Value(peak / 500.0));
    let over = result.simulation.overshoot[0].unwrap() * 100.0;
    assert_eq!(s.overshoot[0], Figure::Value(over));
    // States starting at zero have no overshoot figure.
    assert_eq!(s.overshoot[1], Figure::NotAvailable);
    assert!(s.tracked.is_empty());
    // Not settled: one state's settling time missing makes the slowest "not settled".
    let mut unsettled = result.clone();
    unsettled.simulation.settling_time[1] = None;
    let u = DesignSummary::from(&unsettled);
    assert_eq!(u.slowest_settling_time, Figure::NotSettled);
    assert_eq!(u.settling_time[1], Figure::NotSettled);
    let rows = compare(&s, &u);
    assert_eq!(find(&rows, "slowest settling time (s)").better, Which::Pinned);
    assert_eq!(find(&rows, "gain norm ‖K‖").better, Which::Same);
    // Without a limit the raw peak is shown, with the unit.
    let mut unlimited = result.clone();
    unlimited.simulation.input_limit = vec![None];
    let rows = compare(&DesignSummary::from(&unlimited), &s);
    let u1 = find(&rows, "peak input u1 (N)");
    assert_eq!(u1.better, Which::Same);
    let json = serde_json::to_string(&s).unwrap();
    assert!(json.contains("\"slowest_settling_time\":{\"kind\":\"value\""), "{json}");
}

// z = e^{sT} written out with Euler's formula, e^{(σ+jω)T} = e^{σT}(cos ωT + j sin ωT)
// (a textbook identity), independently of Complex64::exp.
fn euler(s: Complex64, t: f64) -> Complex64 {
    let r = (s.re * t).exp();
    Complex64::new(r * (s.im * t).cos(), r * (s.im * t).sin())
}

/// A z-plane view around the unit circle: data [-1.5, 1.5] × [-1.125, 1.125].
fn z_frame() -> Frame {
    let m = Margins { left: 20.0, right: 20.0, top: 20.0, bottom: 20.0 };
    Frame::new(Rect::sized(440.0, 340.0), m, Range::new(-1.5, 1.5), Range::new(-1.125, 1.125))
}

#[test]
fn plane_map_round_trips_and_matches_euler() {
    let t = 0.01;
    let map = PlaneMap::SampledFromS { sample_time: t };
    for s in [c(-3.0, 0.0), c(-20.0, 45.0), c(-0.5, 300.0), c(4.0, 1.0)] {
        let z = map.to_map(s);
        let e = euler(s, t);
        assert!((z - e).norm() <= 1e-14 * e.norm().max(1.0), "{s}: {z} vs {e}");
        let back = map.from_map(z, s.im == 0.0).expect("invertible");
        assert!((back - s).norm() <= 1e-10 * s.norm(), "{s} -> {z} -> {back}");
    }
    assert_eq!(PlaneMap::Same.to_map(c(-1.0, 2.0)), c(-1.0, 2.0));
    assert!(matches!(map.from_map(c(-0.2, 0.0), true), Err(EditError::NoRealEquivalent { .. })));
    assert!(matches!(map.from_map(c(0.0, 0.0), false), Err(EditError::NotFinite)));
    assert!(PlaneMap::SampledFromS { sample_time: 0.0 }.from_map(c(0.5, 0.0), true).is_err());
}

#[test]
fn mapped_drag_puts_the_marker_under_the_pointer_on_the_z_map() {
    let t = 0.02;
    let map = PlaneMap::SampledFromS { sample_time: t };
    let set = PoleSet::from_poles(&[c(-5.0, 0.0), c(-10.0, 20.0), c(-10.0, -20.0)]).expect("pairs");
    let f = z_frame();
    // Drag the pair's upper member to z = 0.6 + 0.3j, the real pole to z = 0.5.
    let target = [0.6, 0.3];
    let edit = drag_edit_mapped(&set, 1, &f, f.to_pixel(target), &EditParams::default(), map).expect("drag");
    let moved = set.edited(&edit).expect("move");
    let shown = map.to_map(moved.entry(1).expect("entry").upper());
    assert!((shown.re - 0.6).abs() < 1e-9 && (shown.im - 0.3).abs() < 1e-9, "{shown}");
    let edit = drag_edit_mapped(&moved, 0, &f, f.to_pixel([0.5, 0.2]), &EditParams::default(), map).expect("drag");
    let moved = moved.edited(&edit).expect("move");
    let real = moved.entry(0).expect("entry");
    assert!(!real.is_pair());
    assert!((real.re() - 0.5f64.ln() / t).abs() < 1e-9, "{}", real.re());
    // Left of the origin a real pole has no s-plane equivalent: refused, nothing changes.
    assert!(matches!(drag_edit_mapped(&moved, 0, &f, f.to_pixel([-0.3, 0.0]), &EditParams::default(), map), Err(EditError::NoRealEquivalent { .. })));
}

#[test]
fn mapped_nudge_steps_the_same_distance_on_the_map() {
    let t = 0.02;
    let map = PlaneMap::SampledFromS { sample_time: t };
    let set = PoleSet::from_poles(&[c(-10.0, 20.0), c(-10.0, -20.0)]).expect("pairs");
    let f = z_frame();
    let before = map.to_map(set.entry(0).expect("entry").upper());
    let NudgeOutcome::Edit(edit) = nudge_mapped(&set, 0, Direction::Right, StepSize::Normal, &f, &EditParams::default(), map).expect("nudge") else { panic!("expected a move") };
    let after = map.to_map(set.edited(&edit).expect("move").entry(0).expect("entry").upper());
    // 1 % of the larger span (3.0) to the right, imaginary part kept.
    assert!((after.re - before.re - 0.03).abs() < 1e-12 && (after.im - before.im).abs() < 1e-12, "{before} -> {after}");
    let mut h = EditHistory::new(set.clone(), EditParams::default());
    h.begin_drag(0).expect("entry");
    assert_eq!(h.drag_to_pixel_mapped(&f, f.to_pixel([0.7, 0.4]), map), Ok(Change::Changed));
    assert_eq!(h.end_drag(), Change::Changed);
    // The drag rounds the s-plane target to five significant digits (|s| ≈ 35, a step of
    // 1e-3 1/s): on the map that is within T · 1e-3 of the pointer.
    let z = map.to_map(h.current().entry(0).expect("entry").upper());
    assert!((z - c(0.7, 0.4)).norm() < t * 1e-3, "{z}");
    assert!(h.undo().is_some());
    assert_eq!(h.current(), &set);
}
