//! Unit tests of [`crate::plant`]: a child module of it (`use super::*` sees its private
//! items), kept in its own file so that test-only code (with its `unwrap`s and `expect`s)
//! stands apart from the code that runs.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use super::*;

fn spec(a: DMatrix<f64>, b: DMatrix<f64>) -> PlantSpec {
    PlantSpec { a, b, ..Default::default() }
}

#[test]
fn defaults_and_accessors() {
    let p = Plant::new(spec(DMatrix::from_row_slice(2, 2, &[0.0, 1.0, 0.0, 0.0]), DMatrix::from_row_slice(2, 1, &[0.0, 1.0]))).unwrap();
    assert_eq!(p.states(), 2);
    assert_eq!(p.inputs(), 1);
    assert_eq!(p.outputs(), 0);
    assert_eq!(p.state_names(), ["x1", "x2"]);
    assert_eq!(p.input_names(), ["u1"]);
}

#[test]
fn shape_errors_name_the_field() {
    let e = Plant::new(spec(DMatrix::zeros(2, 3), DMatrix::from_element(2, 1, 1.0))).unwrap_err();
    assert_eq!(e, PlantError::NotSquare { rows: 2, columns: 3 });
    let e = Plant::new(spec(DMatrix::zeros(2, 2), DMatrix::from_element(3, 1, 1.0))).unwrap_err();
    assert!(e.to_string().starts_with("b: has 3 rows but needs 2"), "{e}");
    let e = Plant::new(spec(DMatrix::zeros(2, 2), DMatrix::zeros(2, 1))).unwrap_err();
    assert_eq!(e, PlantError::ZeroInput);
    let mut s = spec(DMatrix::zeros(2, 2), DMatrix::from_element(2, 1, 1.0));
    s.c = Some(DMatrix::zeros(1, 3));
    assert!(matches!(Plant::new(s).unwrap_err(), PlantError::Columns { field: Field::C, expected: 2, found: 3, .. }));
    let mut s = spec(DMatrix::zeros(2, 2), DMatrix::from_element(2, 1, 1.0));
    s.d = Some(DMatrix::zeros(1, 1));
    assert_eq!(Plant::new(s).unwrap_err(), PlantError::FeedthroughWithoutOutput);
    let mut s = spec(DMatrix::zeros(2, 2), DMatrix::from_element(2, 1, 1.0));
    s.a[(1, 0)] = f64::NAN;
    assert_eq!(Plant::new(s).unwrap_err(), PlantError::NotFinite { field: Field::A, row: 1, column: 0 });
    let mut s = spec(DMatrix::zeros(2, 2), DMatrix::from_element(2, 1, 1.0));
    s.state_names = vec!["pos".into()];
    assert_eq!(Plant::new(s).unwrap_err(), PlantError::Count { field: Field::StateNames, expected: 2, found: 1 });
}

#[test]
fn c_without_d_gets_zero_feedthrough() {
    let mut s = spec(DMatrix::zeros(2, 2), DMatrix::from_element(2, 3, 1.0));
    s.c = Some(DMatrix::from_row_slice(1, 2, &[1.0, 0.0]));
    let p = Plant::new(s).unwrap();
    assert_eq!(p.d().map(|d| d.shape()), Some((1, 3)));
    assert_eq!(p.output_names(), ["y1"]);
}
