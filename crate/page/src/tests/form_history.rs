//! Unit tests of [`crate::form::history`].

use super::*;

fn form(poles: &str) -> FormInput {
    FormInput { poles: poles.into(), ..FormInput::default() }
}

#[test]
fn each_change_is_one_step_and_repeats_are_not() {
    let mut h = FormHistory::default();
    assert!(h.note(&form("-1")));
    assert!(!h.note(&form("-1")), "the same form again is no step");
    assert!(h.note(&form("-2")));
    assert!(h.note(&form("-3")));
    assert_eq!(h.undo().map(|f| f.poles.as_str()), Some("-2"));
    assert_eq!(h.undo().map(|f| f.poles.as_str()), Some("-1"));
    assert!(h.undo().is_none(), "nothing before the first form");
    assert!(!h.can_undo() && h.can_redo());
    assert_eq!(h.redo().map(|f| f.poles.as_str()), Some("-2"));
    // Noting the restored form changes nothing; a new change ends the redo branch.
    assert!(!h.note(&form("-2")));
    assert!(h.can_redo());
    assert!(h.note(&form("-9")));
    assert!(!h.can_redo());
    assert_eq!(h.undo().map(|f| f.poles.as_str()), Some("-2"));
}

#[test]
fn the_depth_is_capped() {
    let mut h = FormHistory::with_depth(3);
    for k in 0..10 {
        h.note(&form(&format!("-{k}")));
    }
    assert_eq!(h.undo().map(|f| f.poles.clone()), Some("-8".to_string()));
    assert_eq!(h.undo().map(|f| f.poles.clone()), Some("-7".to_string()));
    assert!(h.undo().is_none(), "only three snapshots kept");
}
