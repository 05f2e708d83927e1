//! Unit tests of [`crate::warnings`].

use super::*;

#[test]
fn every_code_serialises_as_its_stable_name_and_the_table_lists_it() {
    let table = include_str!("../warnings.rs");
    for code in WarningCode::ALL {
        let json = serde_json::to_value(code).unwrap();
        assert_eq!(json, code.as_str(), "{code:?}");
        assert!(table.contains(&format!("| `{}` |", code.as_str())), "{code} missing from the module table");
        assert!(code == code.as_str());
    }
    let w = Warning::new(WarningCode::LoopDiverged, "x");
    assert_eq!(w.severity, Severity::Danger);
    let v = serde_json::to_value(&w).unwrap();
    assert_eq!(v["code"], "loop-diverged");
    assert_eq!(v["severity"], "danger");
    assert!(Severity::Danger > Severity::Caution && Severity::Caution > Severity::Note);
}
