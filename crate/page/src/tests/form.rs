//! Unit tests of [`crate::form`]: a child module of it (`use super::*` sees its private
//! items), kept in its own file so that test-only code (with its `unwrap`s and `expect`s)
//! stands apart from the code that runs.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use super::*;
use crate::poles::parse_poles;

fn form(a: &str, b: &str, poles: &str) -> FormInput {
    FormInput { a: a.into(), b: b.into(), poles: poles.into(), ..Default::default() }
}

const TEXTBOOK_A: &str = "0 1 0\n0 0 1\n-1 -5 -6";

#[test]
fn textbook_plant_gives_the_textbook_gain() {
    // Ogata, Modern Control Engineering, pole-placement example (from memory): K = [199, 55, 8].
    let out = evaluate_form(&form(TEXTBOOK_A, "0\n0\n1", "-2±4j, -10"));
    assert_eq!(out.status, FormStatus::Designed, "{:?}", out.errors);
    let g = &out.design.as_ref().unwrap().feedback.gain;
    for (got, want) in g[0].iter().zip([199.0, 55.0, 8.0]) {
        assert!((got - want).abs() <= 1e-9 * want, "{got} vs {want}");
    }
    // The copyable text reads back to the same numbers; the table shows them rounded to the
    // display digits (5 by default: 199, 55, 8).
    let table = &out.report.as_ref().unwrap().gain;
    assert_eq!(copied_rows(table)[0], g[0]);
    assert_eq!(table.entries[0], ["199", "55", "8"]);
    assert_eq!(table.row_labels, ["u1"]);
    assert_eq!(table.column_labels, ["x1", "x2", "x3"]);
    assert_eq!(out.size_for("a"), Some("3 × 3"));
    assert_eq!(out.size_for("b"), Some("3 × 1"));
    assert_eq!(out.size_for("poles"), Some("3 poles"));
    assert!(out.size_for("c").is_none());
}

#[test]
fn one_line_b_is_a_column_and_json_works() {
    let out = evaluate_form(&form("[[0,1,0],[0,0,1],[-1,-5,-6]]", "[0, 0, 1]", "-10 -2+4j -2-4j"));
    assert_eq!(out.status, FormStatus::Designed, "{:?}", out.errors);
    assert_eq!(out.size_for("b"), Some("3 × 1 (one line read as a column)"));
    let k = &out.design.unwrap().feedback.gain[0];
    assert!((k[0] - 199.0).abs() < 1e-9 * 199.0);
}

#[test]
fn bad_token_names_row_column_and_token() {
    let out = evaluate_form(&form("0 1 0\n0 0 x\n-1 -5 -6", "0\n0\n1", "-2±4j, -10"));
    assert_eq!(out.status, FormStatus::Invalid);
    let msg = out.error_for("a").unwrap();
    assert!(msg.contains("row 2, column 3") && msg.contains("\"x\""), "{msg}");
    assert!(out.design.is_none() && out.size_for("a").is_none());
    assert_eq!(out.errors.len(), 1, "{:?}", out.errors);
}

#[test]
fn every_wrong_field_gets_its_own_error_in_page_order() {
    let mut f = form("1 2\n3", "", "-1, 1+j");
    f.limits = "5, zero".into();
    f.duration = "-3".into();
    f.initial_state = "1 2\n3 4".into();
    let out = evaluate_form(&f);
    let fields: Vec<&str> = out.errors.iter().map(|e| e.field).collect();
    assert_eq!(fields, ["a", "b", "poles", "limits", "initial_state", "duration"], "{:?}", out.errors);
    assert!(out.error_for("a").unwrap().contains("row 2"));
    assert!(out.error_for("b").unwrap().starts_with("required"));
    assert!(out.error_for("poles").unwrap().contains("1-1j"), "{:?}", out.error_for("poles"));
    assert!(out.error_for("limits").unwrap().contains("entry 2: \"zero\""), "{:?}", out.error_for("limits"));
    assert!(out.error_for("duration").unwrap().contains("positive"));
}

#[test]
fn plant_shape_errors_go_to_the_right_field() {
    let out = evaluate_form(&form("0 1\n0 0", "0\n1\n2", "-1, -2"));
    assert_eq!(out.errors.len(), 1);
    assert_eq!(out.errors[0].field, "b");
    assert!(out.errors[0].message.starts_with("has 3 rows but needs 2"), "{}", out.errors[0].message);

    let out = evaluate_form(&form("0 1 2\n0 0 1", "0\n1", "-1, -2"));
    assert_eq!(out.errors[0].field, "a");
    assert!(out.errors[0].message.contains("square"), "{}", out.errors[0].message);

    let out = evaluate_form(&form("0 1\n0 0", "0\n0", "-1, -2"));
    assert_eq!(out.errors[0].field, "b");

    let mut f = form("0 1\n0 0", "0\n1", "-1, -2");
    f.c = "1 0 0".into();
    assert_eq!(evaluate_form(&f).errors[0].field, "c");
    f.c = String::new();
    f.d = "0".into();
    assert_eq!(evaluate_form(&f).errors[0].field, "d");
    f.d = String::new();
    f.state_names = "position".into();
    let out = evaluate_form(&f);
    assert_eq!(out.errors[0].field, "state_names");
    assert!(out.errors[0].message.contains("1 name given but the plant has 2 states"), "{}", out.errors[0].message);
    f.state_names = "position, velocity".into();
    f.input_units = "N, N".into();
    let out = evaluate_form(&f);
    assert_eq!(out.errors[0].field, "input_units");
    assert!(out.errors[0].message.contains("has 1 input;"), "{}", out.errors[0].message);
}

#[test]
fn counts_that_depend_on_the_plant() {
    let mut f = form("0 1\n0 0", "0 0\n1 1", "-1, -2");
    f.limits = "5".into();
    f.initial_state = "1 0 0".into();
    let out = evaluate_form(&f);
    assert!(out.error_for("limits").unwrap().contains("1 limit given but the plant has 2 inputs"), "{:?}", out.errors);
    assert!(out.error_for("initial_state").unwrap().contains("3 values given but the plant has 2 states"));
    let out = evaluate_form(&form("0 1\n0 0", "0\n1", "-1, -2, -3"));
    // The engine words it; the message lands on the poles field and gives both counts.
    let msg = out.error_for("poles").unwrap();
    assert!(msg.contains('3') && msg.contains("2 states"), "{msg}");
}

#[test]
fn uncontrollable_unstable_plant_is_infeasible_with_analysis() {
    let out = evaluate_form(&form("1 0\n0 -1", "0\n1", "-1, -2"));
    assert_eq!(out.status, FormStatus::Infeasible);
    assert!(out.errors.is_empty());
    let msg = out.design_error.as_deref().unwrap();
    assert!(msg.contains("not possible") && msg.contains("mode at 1"), "{msg}");
    let an = out.analysis.unwrap();
    assert_eq!(an.open_loop_poles.len(), 2);
    assert!(an.controllability.summary.starts_with("Not stabilisable"), "{}", an.controllability.summary);
    assert!(an.controllability.modes.iter().any(|m| m.verdict == "not controllable and not stable"));
}

#[test]
fn stabilisable_plant_reports_fixed_and_unassigned_poles() {
    // x1 is an uncontrollable stable mode at -1; x2 is an integrator driven by u.
    let out = evaluate_form(&form("-1 0\n0 0", "0\n1", "-3, -4"));
    assert_eq!(out.status, FormStatus::Designed, "{:?} {:?}", out.errors, out.design_error);
    let r = out.report.unwrap();
    assert!(r.controllability.summary.starts_with("Not controllable, but stabilisable"), "{}", r.controllability.summary);
    assert!(r.poles.iter().any(|p| p.note.starts_with("uncontrollable mode") && p.achieved == "\u{2212}1"), "{:?}", r.poles);
    assert!(r.poles.iter().any(|p| p.note.starts_with("not assigned")), "{:?}", r.poles);
    let scene = pole_map_scene(out.design.as_ref().unwrap());
    assert_eq!(scene.not_assigned.len(), 1);
}

#[test]
fn limits_accept_none_and_produce_limit_lines() {
    let mut f = form("0 1\n0 0", "0 0\n1 0.5", "-2, -3");
    f.limits = "none, 4".into();
    f.initial_state = "1 0".into();
    f.input_names = "push, pull".into();
    f.input_units = "N, N".into();
    let out = evaluate_form(&f);
    assert_eq!(out.status, FormStatus::Designed, "{:?}", out.errors);
    let d = out.design.unwrap();
    assert_eq!(d.simulation.input_limit, vec![None, Some(4.0)]);
    let scene = inputs_scene(&d);
    assert_eq!(scene.limits.len(), 2);
    assert!(scene.limits[0].label.contains("(pull)"), "{:?}", scene.limits);
    // A limit shared by every input is drawn once, without names.
    let mut shared = d.clone();
    shared.simulation.input_limit = vec![Some(4.0), Some(4.0)];
    let scene = inputs_scene(&shared);
    let labels: Vec<&str> = scene.limits.iter().map(|l| l.label.as_str()).collect();
    assert_eq!(labels, ["limit +4 N", "limit −4 N"]);
    assert_eq!(scene.y_label, "input (N)");
    assert_eq!(scene.series.len(), 2);
    let r = out.report.unwrap();
    assert_eq!(r.inputs[0].limit, "none");
    assert!(r.inputs[1].limit == "4 N", "{:?}", r.inputs[1]);
}

#[test]
fn normalised_states_peak_at_one_and_carry_the_band() {
    let out = evaluate_form(&form(TEXTBOOK_A, "0\n0\n1", "-2±4j, -10"));
    let d = out.design.unwrap();
    let s = states_scene(&d, true);
    for ser in &s.series {
        let peak = ser.values.iter().fold(0.0f64, |m, v| m.max(v.abs()));
        assert!((peak - 1.0).abs() < 1e-12, "{peak}");
    }
    assert_eq!(s.band.as_ref().map(|b| b.upper), Some(0.02));
    let raw = states_scene(&d, false);
    assert!(raw.band.is_none());
    assert_eq!(raw.series[0].values, d.simulation.states[0]);
    assert_eq!(s.x_label, "time (s)");
}

#[test]
fn gain_text_is_labelled_and_exact() {
    let mut f = form(TEXTBOOK_A, "0\n0\n1", "-2±4j, -10");
    f.state_names = "position, velocity, acceleration".into();
    f.state_units = "m, m/s, m/s²".into();
    f.input_names = "jerk".into();
    let out = evaluate_form(&f);
    assert_eq!(out.status, FormStatus::Designed, "{:?}", out.errors);
    let text = out.report.unwrap().gain.text;
    let lines: Vec<&str> = text.lines().collect();
    assert!(lines[0].starts_with("u = -K x"));
    assert_eq!(lines[1], "K\tposition (m)\tvelocity (m/s)\tacceleration (m/s²)");
    let cells: Vec<&str> = lines[2].split('\t').collect();
    assert_eq!(cells[0], "jerk");
    assert_eq!(cells.len(), 4);
    let k: Vec<f64> = cells[1..].iter().map(|c| c.parse().unwrap()).collect();
    assert!((k[1] - 55.0).abs() < 1e-9 * 55.0);
}

#[test]
fn pole_rows_pair_requested_with_achieved() {
    let out = evaluate_form(&form(TEXTBOOK_A, "0\n0\n1", "-10, -2±4j"));
    let rows = out.report.unwrap().poles;
    assert_eq!(rows.len(), 3);
    assert_eq!(rows[0].requested, "\u{2212}10");
    assert_eq!(rows[1].achieved, "\u{2212}2 + 4j");
    for r in &rows {
        let want: Complex64 = shown_pole(&r.requested);
        let got: Complex64 = shown_pole(&r.achieved);
        assert!((want - got).norm() < 1e-9, "{r:?}");
        assert!(r.error.parse::<f64>().map_or(true, |e| e < 1e-9), "{r:?}");
    }
    assert!(rows[1].character.contains("damping ratio 0.4472"), "{:?}", rows[1]);
    assert!(rows[0].character.contains("time constant 0.1 s"), "{:?}", rows[0]);
}

#[test]
fn blank_optional_fields_and_whitespace_are_fine() {
    let mut f = form(TEXTBOOK_A, "0\n0\n1", "-2±4j, -10");
    f.c = "  \n ".into();
    f.limits = " ".into();
    f.duration = "\n".into();
    let out = evaluate_form(&f);
    assert_eq!(out.status, FormStatus::Designed, "{:?}", out.errors);
    f.c = "1 0 0".into();
    let out = evaluate_form(&f);
    let r = out.report.unwrap();
    assert!(r.observability.unwrap().summary.starts_with("Observable"));
}

#[test]
fn hostile_text_never_panics() {
    let samples = ["", "[", "]]", "1e999", "nan", "-", "±", "j", "\u{feff}", "1,,2", "[[1],[2,3]]", "0\n\n\n0", "∞", "1 2\n3 4\n5 6", "1e-320", "1e308 1e308\n1e308 1e308"];
    for a in samples {
        for b in samples {
            for p in ["", "-1", "-1, -2", "1+j", "j2", "-1±2j"] {
                let mut f = form(a, b, p);
                f.limits = a.into();
                f.initial_state = b.into();
                f.duration = p.into();
                let out = evaluate_form(&f);
                if out.status == FormStatus::Designed {
                    assert!(out.report.is_some());
                }
            }
        }
    }
}

#[test]
fn mutated_demo_text_never_panics() {
    // Deterministic pseudo-random edits (insert, delete, replace a character) of every
    // field of every demo, each evaluated through the full design run.
    let alphabet: Vec<char> = "0123456789 -+.,e\nj±x[]".chars().collect();
    let mut seed: u64 = 0x9e37_79b9_7f4a_7c15;
    let mut next = move |bound: usize| {
        seed ^= seed << 13;
        seed ^= seed >> 7;
        seed ^= seed << 17;
        (seed % bound.max(1) as u64) as usize
    };
    let mut designed = 0;
    for demo in crate::demos::demos() {
        for round in 0..150 {
            let mut f = demo.form.clone();
            let key = FormInput::FIELDS[round % FormInput::FIELDS.len()];
            let mut chars: Vec<char> = f.get(key).unwrap_or("").chars().collect();
            for _ in 0..1 + next(3) {
                let at = next(chars.len() + 1);
                let c = alphabet[next(alphabet.len())];
                match next(3) {
                    0 => chars.insert(at, c),
                    1 if at < chars.len() => {
                        chars.remove(at);
                    }
                    _ if at < chars.len() => chars[at] = c,
                    _ => chars.push(c),
                }
            }
            f.set(key, chars.into_iter().collect::<String>());
            let out = evaluate_form(&f);
            match out.status {
                FormStatus::Designed => {
                    designed += 1;
                    assert!(out.report.is_some() && out.errors.is_empty());
                }
                FormStatus::Invalid => assert!(!out.errors.is_empty()),
                FormStatus::Infeasible => assert!(out.design_error.is_some()),
            }
        }
    }
    assert!(designed > 0, "some mutations still design");
}

#[test]
fn oversize_plants_are_refused_politely() {
    let n = MAX_STATES + 1;
    let a: String = (0..n).map(|i| (0..n).map(|j| if i == j { "-1" } else { "0" }).collect::<Vec<_>>().join(" ")).collect::<Vec<_>>().join("\n");
    let b: String = (0..n).map(|_| "1").collect::<Vec<_>>().join("\n");
    let out = evaluate_form(&form(&a, &b, "-1"));
    assert!(out.error_for("a").unwrap().contains("up to 50 states"));
}

#[test]
fn form_input_get_set_cover_every_field() {
    let mut f = FormInput::default();
    for (i, k) in FormInput::FIELDS.iter().enumerate() {
        assert!(f.set(k, format!("v{i}")));
    }
    for (i, k) in FormInput::FIELDS.iter().enumerate() {
        assert_eq!(f.get(k), Some(format!("v{i}").as_str()));
    }
    assert!(!f.set("nope", ""));
    assert_eq!(f.get("nope"), None);
    let json = serde_json::to_value(&f).unwrap();
    assert_eq!(json.as_object().unwrap().len(), FormInput::FIELDS.len());
}

/// The belt axis with a head encoder: a version-2 base for the field tests below.
fn axis_v2() -> FormInput {
    FormInput {
        a: "0 1 0 0\n-375 -2.291666666666667 375 0.625\n0 0 0 1\n1500 2.5 -1500 -2.5".into(),
        b: "0\n0.4166666666666667\n0\n0".into(),
        c: "0 0 1 0".into(),
        output_names: "head position".into(),
        output_units: "m".into(),
        state_names: "carriage position, carriage velocity, head position, head velocity".into(),
        poles: "-12±9j, -20±30j".into(),
        limits: "60".into(),
        ..Default::default()
    }
}

fn only_error(out: &FormOutcome, field: &str) -> String {
    assert_eq!(out.status, FormStatus::Invalid, "{:?}", out.errors);
    let fields: Vec<&str> = out.errors.iter().map(|e| e.field).collect();
    assert_eq!(fields, [field], "{:?}", out.errors);
    out.errors[0].message.clone()
}

#[test]
fn blank_version_2_fields_give_the_version_1_design() {
    let f = axis_v2();
    let out = evaluate_form(&f);
    assert_eq!(out.status, FormStatus::Designed, "{:?} {:?}", out.errors, out.design_error);
    let d = out.design.as_ref().unwrap();
    assert_eq!(d.domain, crate::analysis::Domain::Continuous);
    assert!(d.closed_loop.is_none() && d.observer.is_none() && d.tracking.is_none() && d.sample_time.is_none());
    assert!(out.report.as_ref().unwrap().controller.is_none());
    // Exactly what the version-1 run gives for the same request.
    let text = r#"{"format": "polewright.design", "version": 1,
            "plant": {"a": [[0,1,0,0],[-375,-2.291666666666667,375,0.625],[0,0,0,1],[1500,2.5,-1500,-2.5]],
                      "b": [0,0.4166666666666667,0,0], "c": [[0,0,1,0]]},
            "feedback": {"poles": ["-12±9j", "-20±30j"]}, "actuators": {"limit": [60]}}"#;
    let v1 = design::run_text(text).unwrap();
    assert_eq!(v1.feedback.gain, d.feedback.gain);
    assert_eq!(v1.simulation.states, d.simulation.states);
    // Sub-fields of switched-off sections are not read, whatever they hold.
    let mut g = axis_v2();
    g.observer_poles = "not poles".into();
    g.integral_poles = "x".into();
    g.anti_windup_time = "-1".into();
    g.delay_poles = "?".into();
    g.reference = "1 2 3".into();
    let out = evaluate_form(&g);
    assert_eq!(out.status, FormStatus::Designed, "{:?}", out.errors);
    assert!(!g.is_active("observer_poles") && !g.is_active("reference") && g.is_active("poles"));
    assert!(!g.is_active("nonsense"));
}

#[test]
fn a_bad_sample_time_is_the_sample_time_field_error() {
    for bad in ["-0.001", "0", "1 kHz", "0.001 0.002"] {
        let mut f = axis_v2();
        f.sample_time = bad.into();
        let out = evaluate_form(&f);
        let msg = only_error(&out, "sample_time");
        assert!(!msg.is_empty(), "{bad}");
        assert_eq!(f.sample_time, bad, "the text is the caller's and stays");
    }
    let mut f = axis_v2();
    f.sample_time = "-1".into();
    assert!(only_error(&evaluate_form(&f), "sample_time").contains("positive"));
    f.sample_time = "0.001".into();
    let out = evaluate_form(&f);
    assert_eq!(out.status, FormStatus::Designed, "{:?}", out.errors);
    let d = out.design.unwrap();
    assert_eq!(d.domain, crate::analysis::Domain::Discrete);
    assert!(d.closed_loop.is_some(), "a digital design is simulated in the loop");
    // Recomputed here: Φ, Γ by nalgebra's exponential of [[A, B], [0, 0]] T, then eig(Φ − Γ K)
    // from the gain (nalgebra's Schur): e^{sT} for each requested s, inside the unit circle.
    let mut big = nalgebra::DMatrix::<f64>::zeros(5, 5);
    let a = [[0.0, 1.0, 0.0, 0.0], [-375.0, -2.291666666666667, 375.0, 0.625], [0.0, 0.0, 0.0, 1.0], [1500.0, 2.5, -1500.0, -2.5]];
    for i in 0..4 {
        for j in 0..4 {
            big[(i, j)] = a[i][j] * 0.001;
        }
    }
    big[(1, 4)] = 0.4166666666666667 * 0.001;
    let e = big.exp();
    let (phi, gamma) = (e.view((0, 0), (4, 4)).into_owned(), e.view((0, 4), (4, 1)).into_owned());
    let k = nalgebra::DMatrix::from_fn(1, 4, |_, j| d.feedback.gain[0][j]);
    let poles = (phi - gamma * k).try_schur(f64::EPSILON, 10_000).expect("Schur").complex_eigenvalues();
    for s in [(-12.0, 9.0), (-12.0, -9.0), (-20.0, 30.0), (-20.0, -30.0)] {
        let z = (num_complex::Complex64::new(s.0, s.1) * 0.001).exp();
        assert!(poles.iter().any(|w| (w - z).norm() < 1e-9), "{z} not in {poles}");
    }
    assert!(poles.iter().all(|z| z.norm() < 1.0));
}

#[test]
fn an_observer_without_c_is_an_error_of_the_observer_choice() {
    let mut f = axis_v2();
    f.c = String::new();
    f.output_names = String::new();
    f.output_units = String::new();
    f.observer = "speed_factor".into();
    let msg = only_error(&evaluate_form(&f), "observer");
    assert!(msg.contains("output matrix C"), "{msg}");
    // With C the observer designs; L is states × outputs, labelled and exact.
    let mut f = axis_v2();
    f.observer = "speed_factor".into();
    f.observer_speed = "4".into();
    let out = evaluate_form(&f);
    assert_eq!(out.status, FormStatus::Designed, "{:?} {:?}", out.errors, out.design_error);
    let d = out.design.as_ref().unwrap();
    let c = out.report.as_ref().unwrap().controller.as_ref().unwrap();
    let o = c.observer.as_ref().unwrap();
    assert_eq!(o.gain.row_labels.len(), 4);
    assert_eq!(o.gain.column_labels, ["head position (m)"]);
    for ((row, shown), want) in copied_rows(&o.gain).iter().zip(&o.gain.entries).zip(&d.observer.as_ref().unwrap().gain) {
        assert_eq!(row[0], want[0]);
        assert_eq!(shown[0], crate::design::format::number(want[0]).replace('-', "\u{2212}"));
    }
    assert!(o.noise.contains("‖K L‖₂"), "{}", o.noise);
    assert_eq!(o.poles.len(), 4);
    assert!(o.poles.iter().all(|p| p.error.parse::<f64>().is_ok_and(|e| e < 1e-9)), "{:?}", o.poles);
    let scene = pole_map_scene(d);
    assert_eq!(scene.observer.len(), 4);
    assert!(!scene.discrete);
    let est = estimation_scene(d, out.report.as_ref().unwrap()).unwrap();
    assert_eq!(est.series.len(), 4);
}

#[test]
fn observer_fields_are_checked_one_by_one() {
    let mut f = axis_v2();
    f.observer = "poles".into();
    assert!(only_error(&evaluate_form(&f), "observer_poles").starts_with("required"));
    f.observer_poles = "-40, -50, x".into();
    only_error(&evaluate_form(&f), "observer_poles");
    f.observer_poles = "-40, -50, -60".into();
    assert!(only_error(&evaluate_form(&f), "observer_poles").contains("3 poles given but the plant has 4 states"));
    f.observer_poles = "-40±30j, -50, -60".into();
    assert_eq!(evaluate_form(&f).status, FormStatus::Designed);
    f.observer_form = "current".into();
    assert!(only_error(&evaluate_form(&f), "observer_form").contains("sample time"));
    f.sample_time = "0.001".into();
    f.observer_poles = "0.9, 0.91, 0.92, 0.93".into();
    f.plane = "z".into();
    f.poles = "0.98, 0.985, 0.99, 0.995".into();
    let out = evaluate_form(&f);
    assert_eq!(out.status, FormStatus::Designed, "{:?} {:?}", out.errors, out.design_error);
    let o = out.design.as_ref().unwrap().observer.as_ref().unwrap();
    assert_eq!(o.form, crate::design::ObserverRunForm::Current);
    let lc = o.current_gain.as_ref().expect("a current-form observer has L_c");
    assert_eq!((lc.len(), lc[0].len()), (4, 1), "L_c is states × outputs");
    let c = out.report.unwrap().controller.unwrap();
    assert_table_is(c.observer.as_ref().unwrap().current_gain.as_ref().expect("the page shows L_c"), lc);
    assert!(c.law.iter().any(|l| l.contains("L_c")), "{:?}", c.law);
    let mut g = axis_v2();
    g.observer = "speed_factor".into();
    g.observer_speed = "-2".into();
    only_error(&evaluate_form(&g), "observer_speed");
    g.observer_speed = "1.5".into();
    let out = evaluate_form(&g);
    assert!(out.report.unwrap().warnings.iter().any(|w| w.contains("2–6 times faster than the controller (common practice)")));
    g.observer = "magic".into();
    only_error(&evaluate_form(&g), "observer");
}

#[test]
fn integral_action_with_the_wrong_pole_count() {
    let mut f = axis_v2();
    f.tracking = "integral".into();
    f.integral_poles = "-10, -11".into();
    let msg = only_error(&evaluate_form(&f), "integral_poles");
    assert!(msg.contains("2 poles given but 1 output is tracked"), "{msg}");
    // Without integrator poles the desired poles need one more: the engine's message, on poles.
    f.integral_poles = String::new();
    let msg = only_error(&evaluate_form(&f), "poles");
    assert!(msg.contains("integrators") && msg.contains('5'), "{msg}");
    f.poles = "-12±9j, -20±30j, -10".into();
    let out = evaluate_form(&f);
    assert_eq!(out.status, FormStatus::Designed, "{:?} {:?}", out.errors, out.design_error);
    f.poles = "-12±9j, -20±30j".into();
    f.integral_poles = "-10".into();
    let again = evaluate_form(&f);
    assert_eq!(again.design.as_ref().unwrap().feedback.gain, out.design.as_ref().unwrap().feedback.gain);
    let c = again.report.unwrap().controller.unwrap();
    assert_eq!(c.tracking.len(), 1);
    assert_eq!(c.tracking[0].symbol, "K_i");
    assert_eq!(c.loop_outputs.len(), 1);
    assert!(c.loop_outputs[0].rise_time.ends_with(" s"), "{:?}", c.loop_outputs[0]);
    // Anti-windup.
    f.anti_windup = "back_calculation".into();
    assert!(only_error(&evaluate_form(&f), "anti_windup_time").starts_with("required"));
    f.anti_windup_time = "0".into();
    only_error(&evaluate_form(&f), "anti_windup_time");
    f.anti_windup_time = "0.05".into();
    assert_eq!(evaluate_form(&f).status, FormStatus::Designed);
}

#[test]
fn tracking_fields_name_outputs_and_count_them() {
    let mut f = axis_v2();
    f.tracking = "feedforward".into();
    f.tracked_outputs = "carriage".into();
    let msg = only_error(&evaluate_form(&f), "tracked_outputs");
    assert!(msg.contains("no output is named \"carriage\"") && msg.contains("head position"), "{msg}");
    f.tracked_outputs = "1".into();
    let out = evaluate_form(&f);
    assert_eq!(out.status, FormStatus::Designed, "{:?} {:?}", out.errors, out.design_error);
    let c = out.report.unwrap().controller.unwrap();
    let symbols: Vec<&str> = c.tracking.iter().map(|m| m.symbol.as_str()).collect();
    assert_eq!(symbols, ["N_x", "N_u"]);
    f.tracked_outputs = "head position, 1".into();
    assert!(only_error(&evaluate_form(&f), "tracked_outputs").contains("listed twice"));
    // Feedforward needs as many tracked outputs as inputs.
    f.c = "0 0 1 0\n1 0 0 0".into();
    f.output_names = "head, carriage".into();
    f.output_units = String::new();
    f.tracked_outputs = String::new();
    assert!(only_error(&evaluate_form(&f), "tracked_outputs").contains("exactly as many tracked outputs as inputs"));
    f.tracking = "integral".into();
    assert!(only_error(&evaluate_form(&f), "tracked_outputs").contains("at most as many"));
    f.reference = "0.01".into();
    f.tracked_outputs = "head".into();
    f.integral_poles = "-10".into();
    assert_eq!(evaluate_form(&f).status, FormStatus::Designed);
    f.reference = "0.01, 0.02".into();
    assert!(only_error(&evaluate_form(&f), "reference").contains("one per tracked output"));
    let mut g = axis_v2();
    g.c = String::new();
    g.output_names = String::new();
    g.output_units = String::new();
    g.tracking = "integral".into();
    assert!(only_error(&evaluate_form(&g), "tracking").contains("output matrix C"));
}

#[test]
fn digital_fields_need_a_sample_time_and_the_right_counts() {
    let mut f = axis_v2();
    f.plane = "z".into();
    assert!(only_error(&evaluate_form(&f), "plane").contains("sample time"));
    let mut f = axis_v2();
    f.computation_delay = "true".into();
    assert!(only_error(&evaluate_form(&f), "computation_delay").contains("sample time"));
    f.sample_time = "0.001".into();
    f.delay_poles = "0, 0".into();
    assert!(only_error(&evaluate_form(&f), "delay_poles").contains("1 input"));
    f.delay_poles = "0.1".into();
    let out = evaluate_form(&f);
    assert_eq!(out.status, FormStatus::Designed, "{:?} {:?}", out.errors, out.design_error);
    let d = out.design.as_ref().unwrap();
    let ku = d.feedback.delay_gain.as_ref().expect("a computation delay gives K_u");
    assert_eq!((ku.len(), ku[0].len()), (1, 1), "K_u is inputs × inputs");
    assert_eq!(d.feedback.achieved_poles.len(), 5, "plant poles and the delay pole");
    let r = out.report.unwrap();
    let c = r.controller.unwrap();
    assert_table_is(c.delay_gain.as_ref().expect("the page shows K_u"), ku);
    assert!(c.domain.contains("computation delay") && c.domain.contains("0.1"), "{}", c.domain);
    assert!(c.law[0].contains("K_u u[k−1]"), "{:?}", c.law);
    assert!(r.poles.iter().all(|p| p.character.starts_with("|z| = ")), "{:?}", r.poles);
    f.computation_delay = "maybe".into();
    only_error(&evaluate_form(&f), "computation_delay");
}

#[test]
fn noise_without_a_sample_time_is_the_noise_field_error() {
    let mut f = axis_v2();
    f.observer = "speed_factor".into();
    f.noise_std = "1e-6".into();
    let msg = only_error(&evaluate_form(&f), "noise_std");
    assert!(msg.contains("digital controller"), "{msg}");
    f.sample_time = "0.001".into();
    f.seed = "7".into();
    let out = evaluate_form(&f);
    assert_eq!(out.status, FormStatus::Designed, "{:?} {:?}", out.errors, out.design_error);
    let l = out.design.as_ref().unwrap().closed_loop.as_ref().unwrap();
    assert!(l.measured[0].iter().zip(&l.outputs[0]).any(|(m, y)| m != y), "noise reaches the measurement");
    assert!(out.report.unwrap().controller.unwrap().loop_summary.unwrap().contains("seed 7"));
    f.noise_std = "1e-6, 1e-6".into();
    assert!(only_error(&evaluate_form(&f), "noise_std").contains("1 output"));
    f.noise_std = "-1".into();
    assert!(only_error(&evaluate_form(&f), "noise_std").contains("negative"));
    f.noise_std = "1e-6".into();
    f.seed = "1.5".into();
    only_error(&evaluate_form(&f), "seed");
    f.seed = String::new();
    f.c = String::new();
    f.output_names = String::new();
    f.output_units = String::new();
    f.observer = "none".into();
    assert!(only_error(&evaluate_form(&f), "noise_std").contains("output matrix C"));
}

#[test]
fn load_steps_and_step_times() {
    let mut f = axis_v2();
    f.disturbance = "5".into();
    assert!(only_error(&evaluate_form(&f), "disturbance").contains("simulated in the loop"));
    f.sample_time = "0.001".into();
    f.disturbance = "5, 5".into();
    assert!(only_error(&evaluate_form(&f), "disturbance").contains("1 input"));
    f.disturbance = "5".into();
    f.disturbance_time = "-1".into();
    only_error(&evaluate_form(&f), "disturbance_time");
    f.disturbance_time = "0.3".into();
    f.initial_state = "0 0 0 0".into();
    let out = evaluate_form(&f);
    assert_eq!(out.status, FormStatus::Designed, "{:?} {:?}", out.errors, out.design_error);
    let r = out.report.unwrap();
    let c = r.controller.as_ref().unwrap();
    assert_eq!(c.events, vec![EventLine { time: 0.3, label: "load step".into() }]);
    assert!(c.loop_summary.as_ref().unwrap().contains("load step of 5 on"), "{:?}", c.loop_summary);
    let d = out.design.unwrap();
    let scene = loop_inputs_scene(&d, &r).unwrap();
    assert_eq!(scene.series.len(), 2, "applied and commanded");
    assert_eq!(scene.series[1].dash, Some(1));
    assert_eq!(scene.limits.len(), 2);
    assert!(estimation_scene(&d, &r).is_none(), "no observer, no estimation error");
    let outputs = loop_outputs_scene(&d, &r).unwrap();
    assert_eq!(outputs.series.len(), 1, "one output, no reference");
    let mut g = axis_v2();
    g.tracking = "integral".into();
    g.integral_poles = "-10".into();
    g.reference_time = "later".into();
    only_error(&evaluate_form(&g), "reference_time");
}

#[test]
fn output_names_need_c_and_the_right_count() {
    let mut f = axis_v2();
    f.output_names = "a, b".into();
    assert!(only_error(&evaluate_form(&f), "output_names").contains("2 names given but the plant has 1 output"));
    f.output_names = String::new();
    f.output_units = "m, m".into();
    only_error(&evaluate_form(&f), "output_units");
    f.c = String::new();
    f.output_units = String::new();
    f.output_names = "head".into();
    only_error(&evaluate_form(&f), "output_names");
}

#[test]
fn digital_simulations_have_a_length_limit() {
    let mut f = axis_v2();
    // A time chosen from the poles is cut to the cap (a note), never refused.
    f.sample_time = "1e-5".into();
    let d = evaluate_form(&f).design.expect("designed");
    assert!(d.warnings.iter().any(|w| w.code == "simulation-shortened"), "{:?}", d.warnings);
    // A time the user typed beyond the cap is the duration field's error.
    f.sample_time = "0.001".into();
    f.duration = "100".into();
    assert!(only_error(&evaluate_form(&f), "duration").contains("100000 samples"));
    f.duration = String::new();
    f.tracking = "integral".into();
    f.integral_poles = "-10".into();
    f.reference_time = "1e20".into();
    only_error(&evaluate_form(&f), "reference_time");
    f.reference_time = "2".into();
    f.duration = "1".into();
    assert!(only_error(&evaluate_form(&f), "reference_time").contains("after the end"));
    f.reference_time = "0.5".into();
    assert_eq!(evaluate_form(&f).status, FormStatus::Designed);
}

#[test]
fn z_plane_pole_characters() {
    let t = 0.001;
    let s = z_to_s(Complex64::new(0.99, 0.0), t).unwrap();
    assert!((s.re - 0.99f64.ln() / t).abs() < 1e-9 && s.im == 0.0);
    let s = z_to_s(Complex64::new(-0.5, 0.0), t).unwrap();
    assert!((s.im - std::f64::consts::PI / t).abs() < 1e-6, "{s}");
    assert!(z_to_s(Complex64::new(0.0, 0.0), t).is_none());
    assert!(z_to_s(Complex64::new(0.5, 0.0), 0.0).is_none());
    assert!(z_to_s(Complex64::new(f64::NAN, 0.0), t).is_none());
    // z = e^{sT} read back.
    let s0 = Complex64::new(-20.0, 30.0);
    let z = (s0 * t).exp();
    assert!((z_to_s(z, t).unwrap() - s0).norm() < 1e-9);
    assert!(z_pole_character(z, t).contains("damping ratio 0.5547"), "{}", z_pole_character(z, t));
    assert!(z_pole_character(Complex64::new(0.0, 0.0), t).contains("z = 0"));
}

#[test]
fn the_same_form_gives_the_same_report() {
    // The page skips rebuilding what did not change: that relies on evaluations of the
    // same text being identical.
    let mut f = axis_v2();
    f.observer = "speed_factor".into();
    let (one, two) = (evaluate_form(&f), evaluate_form(&f));
    assert_eq!(one.report, two.report);
    f.sample_time = "0.001".into();
    f.tracking = "integral".into();
    f.integral_poles = "-10".into();
    let (one, two) = (evaluate_form(&f), evaluate_form(&f));
    assert!(one.report.is_some());
    assert_eq!(one.report, two.report);
}

#[test]
fn a_cloud_drawn_in_steps_gives_the_report_of_one_evaluation() {
    // The page's way: the form's cloud job drawn to its end, its memo handed to the evaluation
    // with the cloud. The report is that of drawing the cloud inside the evaluation.
    let mut f = axis_v2();
    f.uncertain_entries = "A 2 1 20%\nB 10%".into();
    f.uncertainty_samples = "40".into();
    let whole = evaluate_form_with(&f, None, Depth::WithCloud);
    let report = whole.report.expect("designed");
    assert!(report.robustness_detail.uncertainty[0].starts_with("40 samples (seed 1)"), "{:?}", report.robustness_detail.uncertainty);
    let mut job = cloud_job(&f, None).expect("a cloud to draw");
    while !job.run_for(&mut || true) {}
    let previous = crate::design::Continuation { cloud: job.memo(), ..Default::default() };
    assert!(previous.cloud.is_some() && cloud_job(&f, Some(&previous)).is_none());
    assert_eq!(evaluate_form_with(&f, Some(&previous), Depth::WithCloud).report, Some(report));
    // Without uncertain parameters, or with a field to fix, there is no job.
    f.uncertain_entries = " ".into();
    assert!(cloud_job(&f, None).is_none());
    f.uncertain_entries = "A 9 9 20%".into();
    assert!(cloud_job(&f, None).is_none());
}

#[test]
fn hostile_text_in_the_version_2_fields_never_panics() {
    let samples = [
        "",
        "x",
        "-1",
        "0",
        "1e999",
        "nan",
        "±",
        "1, 2, 3",
        "[1]",
        "\u{feff}",
        "true",
        "z",
        "current",
        "integral",
        "poles",
        "speed_factor",
        "back_calculation",
        "-1±2j",
        "head position",
        "99999999999999999999",
        "1e-300",
    ];
    // An observer and integral action, continuous and digital (1 kHz).
    let mut continuous = axis_v2();
    continuous.observer = "speed_factor".into();
    continuous.tracking = "integral".into();
    continuous.integral_poles = "-10".into();
    let mut digital = continuous.clone();
    digital.sample_time = "0.001".into();
    let v2 = [
        "observer",
        "observer_poles",
        "observer_speed",
        "observer_form",
        "tracking",
        "tracked_outputs",
        "integral_poles",
        "anti_windup",
        "anti_windup_time",
        "sample_time",
        "computation_delay",
        "delay_poles",
        "plane",
        "reference",
        "reference_time",
        "disturbance",
        "disturbance_time",
        "noise_std",
        "seed",
        "output_names",
        "output_units",
        "duration",
    ];
    // The continuous loop is slow to simulate: there, only the fields that set times and speeds.
    let timing = ["observer_speed", "observer_poles", "integral_poles", "anti_windup", "anti_windup_time", "reference_time", "disturbance_time", "duration"];
    for (base, keys) in [(&continuous, &timing[..]), (&digital, &v2[..])] {
        for &key in keys {
            for text in samples {
                let mut f = base.clone();
                f.set(key, text);
                let out = evaluate_form(&f);
                match out.status {
                    FormStatus::Designed => assert!(out.report.is_some() && out.errors.is_empty()),
                    FormStatus::Invalid => assert!(!out.errors.is_empty()),
                    FormStatus::Infeasible => assert!(out.design_error.is_some()),
                }
                for e in &out.errors {
                    assert!(FormInput::FIELDS.contains(&e.field), "{key}={text:?}: {e:?}");
                }
            }
        }
    }
}

#[test]
fn pole_choice_fields_follow_the_poles_and_are_switched_on_by_their_source() {
    let at = |k: &str| FormInput::FIELDS.iter().position(|f| *f == k).unwrap();
    let keys = [
        "poles",
        "pole_source",
        "pattern_family",
        "pattern_normalisation",
        "pattern_settling_time",
        "spec_overshoot",
        "spec_settling_time",
        "spec_rise_time",
        "settling_band",
        "lqr_max_state",
        "lqr_max_input",
        "search",
    ];
    for w in keys.windows(2) {
        assert_eq!(at(w[1]), at(w[0]) + 1, "{w:?}");
    }
    for (k, values) in FormInput::FIELDS.iter().filter_map(|k| FormInput::choices(k).map(|v| (*k, v))) {
        assert!(FormInput::FIELDS.contains(&k), "{k}");
        let mut f = FormInput::default();
        f.set(k, "");
        assert_eq!(f.choice(k), values[0], "blank is the first choice of {k}");
    }
    let mut f = FormInput::default();
    assert!(f.is_active("poles") && f.is_active("settling_band") && f.is_active("search"));
    assert!(!f.is_active("pattern_family") && !f.is_active("spec_overshoot") && !f.is_active("lqr_max_state"));
    f.pole_source = "pattern".into();
    assert!(!f.is_active("poles") && f.is_active("pattern_family") && f.is_active("pattern_settling_time") && f.is_active("pattern_normalisation"));
    f.pattern_family = "itae".into();
    assert!(!f.is_active("pattern_normalisation"));
    f.pole_source = "specification".into();
    assert!(f.is_active("spec_overshoot") && f.is_active("spec_rise_time") && !f.is_active("pattern_family"));
    f.pole_source = "lqr".into();
    f.tracking = "integral".into();
    assert!(f.is_active("lqr_max_state") && f.is_active("lqr_max_input") && !f.is_active("integral_poles") && !f.is_active("poles"));
    f.search = "on".into();
    assert_eq!(f.choice("search"), "true");
    f.settling_band = "1".into();
    assert_eq!(f.choice("settling_band"), "1", "a band of 1 % is not a ticked box");
}

#[test]
fn exact_pole_text_reads_back_to_the_same_values_in_the_same_order() {
    let third = 1.0 / 3.0;
    let poles = [
        Complex64::new(-third, 2.0 * third),
        Complex64::new(-third, -2.0 * third),
        Complex64::new(-1e-7, 0.0),
        // Not exact conjugates: written one by one.
        Complex64::new(-2.0, 0.1 + 1e-15),
        Complex64::new(-2.0, -0.1),
        Complex64::new(0.0, 5.0),
        Complex64::new(0.0, -5.0),
    ];
    let text = exact_pole_text(&poles);
    assert_eq!(parse_poles(&text).unwrap(), poles, "{text}");
    assert!(text.starts_with("-0.3333333333333333±0.6666666666666666j"), "{text}");
}

#[test]
fn a_slow_digital_lqr_design_is_designed_with_its_simulation_cut_to_the_cap() {
    // Q = 1e-4 I, R = 1e4 on a double integrator: poles near 0.01 rad/s, so the simulation
    // chosen from them would run about 1000 s, a million samples at 1 kHz. Nobody asked for
    // that time: the design is made and the simulation cut to 50 000 samples, with a note.
    let mut f = form("0 1\n0 0", "0\n1", "");
    f.pole_source = "lqr".into();
    f.lqr_max_state = "100, 100".into();
    f.lqr_max_input = "0.01".into();
    f.sample_time = "0.001".into();
    let out = evaluate_form(&f);
    let d = out.design.expect("designed");
    assert!(d.warnings.iter().any(|w| w.code == "simulation-shortened"), "{:?}", d.warnings);
    assert!(d.simulation.duration <= 50_000.0 * 0.001 + 1e-9, "{}", d.simulation.duration);
    f.lqr_max_state = "1, 1".into();
    f.lqr_max_input = "1".into();
    assert_eq!(evaluate_form(&f).status, FormStatus::Designed);
}

#[test]
fn the_search_says_when_it_could_not_judge_the_reference_step() {
    let mut f = form("0 1\n0 0", "0\n1", "-1±1j");
    f.limits = "8".into();
    f.search = "true".into();
    f.c = "1 0\n0 1".into();
    f.tracking = "feedforward".into();
    f.tracked_outputs = "1".into();
    let out = evaluate_form(&f);
    assert_eq!(out.status, FormStatus::Designed, "{:?} {:?}", out.errors, out.design_error);
    let sr = out.report.unwrap().pole_choice.unwrap().search.unwrap();
    assert_eq!(sr.settling_times.len(), 1);
    assert!(sr.notes.iter().any(|n| n.contains("free response only") && n.contains("2 rows")), "{sr:?}");
    // Too tight a limit: the message says which situation is which.
    f.limits = "1e-9".into();
    let out = evaluate_form(&f);
    assert_eq!(out.status, FormStatus::Infeasible);
    assert!(out.design_error.unwrap().contains("1 = the free response from x₀ = [1, 0]"));
}

#[test]
fn short_pole_and_character() {
    assert_eq!(short_pole(Complex64::new(-12.0, 9.0)), "\u{2212}12 + 9j");
    assert_eq!(short_pole(Complex64::new(-12.0, -9.0)), "\u{2212}12 \u{2212} 9j");
    assert_eq!(short_pole(Complex64::new(0.5, 0.0)), "0.5");
    assert_eq!(short_pole(Complex64::new(0.0, -2.0)), "\u{2212}2j");
    assert_eq!(pole_character(Complex64::new(0.0, 0.0)), "integrator (does not decay)");
    assert!(pole_character(Complex64::new(2.0, 0.0)).starts_with("unstable"));
}

#[test]
fn each_document_path_has_at_most_one_control() {
    use crate::design::FieldPath;
    for path in FieldPath::ALL {
        let keys: Vec<&str> = FormInput::FIELDS.iter().copied().filter(|k| FormInput::paths(k).contains(path)).collect();
        assert!(keys.len() <= 1, "{path} is shown by {keys:?}");
        if let Some(k) = keys.first() {
            assert_eq!(form_key(*path), Some(*k));
        }
    }
    // The fields of the plant, the poles and the digital implementation are all on the page.
    for path in [FieldPath::PlantA, FieldPath::FeedbackPoles, FieldPath::SampleTime, FieldPath::TrackedOutputs] {
        assert!(form_key(path).is_some(), "{path}");
    }
}

#[test]
fn the_copied_observer_equation_is_the_law_the_controller_runs() {
    // A digital design with a computation delay: the observer is driven by the input applied
    // during the sample, u[k−1], in the law and in every copied text alike.
    let mut f = axis_v2();
    f.sample_time = "0.001".into();
    f.computation_delay = "true".into();
    f.observer = "speed_factor".into();
    let out = evaluate_form(&f);
    let c = out.report.expect("designed").controller.expect("controller");
    let law = c.law.iter().find(|l| l.starts_with("x̂[k+1]")).expect("observer line").clone();
    assert!(law.contains("Γ u[k−1]"), "{law}");
    let copied = &c.observer.expect("observer").gain.text;
    assert!(copied.contains(&law), "{copied}");
    assert!(!copied.contains("Γ u[k] "), "{copied}");
}

#[test]
fn decimal_commas_and_typographic_minus_are_not_misread() {
    let base = axis_v2();
    let mut f = base.clone();
    f.limits = "1,5".into();
    assert!(only_error(&evaluate_form(&f), "limits").contains("decimal comma"));
    let mut f = base.clone();
    f.initial_state = "0,5 0,5 0 0".into();
    assert!(only_error(&evaluate_form(&f), "initial_state").contains("decimal comma"));
    let mut f = base.clone();
    f.sample_time = "0,001".into();
    assert!(only_error(&evaluate_form(&f), "sample_time").contains("decimal comma"));
    // A readout copied back with its typographic minus designs as with an ordinary one.
    let mut f = base.clone();
    f.poles = "\u{2212}12\u{b1}9j, \u{2212}20\u{b1}30j".into();
    let with_typographic = evaluate_form(&f).design.expect("designed").feedback.gain;
    assert_eq!(with_typographic, evaluate_form(&base).design.expect("designed").feedback.gain);
}

#[test]
fn open_loop_parts_below_the_rounding_level_read_as_zero() {
    // An integrator computed as 1.4e−13 next to a pair of size 43 is 0 on the page; a genuinely
    // small pole of a small system is kept.
    let poles = [Complex64::new(-1.729, 43.26), Complex64::new(-1.729, -43.26), Complex64::new(1.4079e-13, 0.0)];
    let clean = zero_below_rounding(&poles);
    assert_eq!(clean[2], Complex64::new(0.0, 0.0));
    assert_eq!(clean[0], poles[0]);
    let small = [Complex64::new(-1e-9, 0.0), Complex64::new(-2e-9, 0.0)];
    assert_eq!(zero_below_rounding(&small), small.to_vec());
}

/// The rows of a table's copyable text (full precision), labels dropped.
fn copied_rows(table: &MatrixTable) -> Vec<Vec<f64>> {
    table.text.lines().skip(2).map(|line| line.split('\t').skip(1).map(|v| v.parse().unwrap()).collect()).collect()
}

/// A pole as the tables show it (`−2 + 4j`), read back.
fn shown_pole(text: &str) -> Complex64 {
    crate::poles::parse_pole_items(&text.replace('\u{2212}', "-").replace(' ', "")).unwrap()[0]
}

#[test]
fn a_non_minimum_phase_plant_shows_its_zero_and_its_dip() {
    // G(s) = (2 − s) / ((s + 1)(s + 3)) in controllable canonical form (by hand: zero at +2),
    // feedforward tracking of a unit step: the output first moves the wrong way.
    let f = FormInput { a: "0 1\n-3 -4".into(), b: "0\n1".into(), c: "2 -1".into(), poles: "-2±1j".into(), tracking: "feedforward".into(), reference: "1".into(), ..Default::default() };
    let out = evaluate_form(&f);
    assert_eq!(out.status, FormStatus::Designed, "{:?} {:?}", out.errors, out.design_error);
    let d = out.design.as_ref().unwrap();
    let z = d.zeros.as_ref().unwrap();
    assert_eq!(z.zeros.len(), 1);
    assert!((z.zeros[0][0] - 2.0).abs() < 1e-12 && z.zeros[0][1] == 0.0, "{:?}", z.zeros);
    assert!(z.non_minimum_phase);
    let r = out.report.as_ref().unwrap();
    assert!(r.zeros.contains("Plant zeros") && r.zeros.contains(": 2.") && r.zeros.contains("non-minimum-phase"), "{}", r.zeros);
    assert!(r.verdicts.iter().any(|v| v.tone == VerdictTone::Attention && v.text.contains("zero at 2")), "{:?}", r.verdicts);
    let dip = &r.controller.as_ref().unwrap().loop_outputs[0].undershoot;
    let percent: f64 = dip.trim_end_matches(" %").parse().unwrap();
    assert!(percent > 1.0, "{dip}");
    assert_eq!(pole_map_scene(d).zeros, z.zeros);
    // The mirror (2 + s): a zero at −2, no dip, no verdict line.
    let g = FormInput { c: "2 1".into(), ..f };
    let out = evaluate_form(&g);
    let r = out.report.as_ref().unwrap();
    assert!(!out.design.as_ref().unwrap().zeros.as_ref().unwrap().non_minimum_phase);
    assert_eq!(r.controller.as_ref().unwrap().loop_outputs[0].undershoot, "0 %");
    assert!(!r.verdicts.iter().any(|v| v.text.contains("Non-minimum")));
}

#[test]
fn the_sampling_zeros_of_a_triple_integrator_are_named_as_such() {
    // Zero-order hold of 1/s³: the sampled numerator is (T³/6)(z² + 4 z + 1), zeros −2 ± √3
    // (Åström & Wittenmark, Computer-Controlled Systems; from memory; any T). The one at
    // −3.732 lies outside the unit circle: a sampling zero, not a reason for undershoot.
    let f = FormInput { a: "0 1 0\n0 0 1\n0 0 0".into(), b: "0\n0\n1".into(), c: "1 0 0".into(), poles: "-2, -3, -4".into(), sample_time: "0.01".into(), ..Default::default() };
    let out = evaluate_form(&f);
    assert_eq!(out.status, FormStatus::Designed, "{:?} {:?}", out.errors, out.design_error);
    let z = out.design.as_ref().unwrap().zeros.as_ref().unwrap();
    let mut re: Vec<f64> = z.zeros.iter().map(|p| p[0]).collect();
    re.sort_by(f64::total_cmp);
    let want = [-2.0 - 3f64.sqrt(), -2.0 + 3f64.sqrt()];
    assert_eq!(re.len(), 2);
    for (g, w) in re.iter().zip(want) {
        assert!((g - w).abs() < 1e-6, "{re:?}");
    }
    assert!(z.non_minimum_phase && !z.tracked_only);
    let r = out.report.as_ref().unwrap();
    assert!(r.zeros.contains("sampling zeros") && !r.zeros.contains("first moves the wrong way"), "{}", r.zeros);
    assert!(r.verdicts.iter().any(|v| v.text.starts_with("A sampling zero at \u{2212}3.7321")), "{:?}", r.verdicts);
}

#[test]
fn oversized_fields_are_refused_before_parsing() {
    // A runaway pole list (2 million poles, 8 MB) and an oversized matrix: each field gets its
    // own error naming the length and the limit; nothing is designed.
    let poles = vec!["-1"; 2_000_000].join(", ");
    let o = evaluate_form(&form("0", "1", &poles));
    assert_eq!(o.status, FormStatus::Invalid);
    assert_eq!(o.errors.len(), 1);
    assert_eq!(o.errors[0].field, "poles");
    assert!(o.errors[0].message.contains(&format!("{} characters", poles.len())) && o.errors[0].message.contains(&MAX_FIELD_CHARS.to_string()), "{}", o.errors[0].message);
    let big_a = vec!["0.5"; 140_000].join(" ");
    let o = evaluate_form(&form(&big_a, "1", &vec!["-1"; 10_000].join(", ")));
    let fields: Vec<&str> = o.errors.iter().map(|e| e.field).collect();
    assert_eq!(fields, ["a"], "{:?}", o.errors);
    // Just under the limits the text is read as usual (and judged on its content).
    let a = vec!["0"; 124_999].join(" ");
    assert!(a.len() < MAX_MATRIX_CHARS);
    let o = evaluate_form(&form(&a, "1", "-1"));
    assert!(o.errors.iter().all(|e| !e.message.contains("characters")), "{:?}", o.errors);
    // The plural follows the count.
    let o = evaluate_form(&form("0", "1", "-1, -2"));
    assert!(o.errors.iter().any(|e| e.message.contains("2 poles given but the plant has 1 state; give exactly 1 pole")), "{:?}", o.errors);
}

/// The page's table shows the design's numbers: its copyable text (heading, symbol row, then
/// one labelled row per matrix row) reads back to exactly `values`, entry for entry.
fn assert_table_is(table: &crate::form::MatrixTable, values: &[Vec<f64>]) {
    let rows: Vec<Vec<f64>> = table.text.lines().skip(2).map(|line| line.split('\t').skip(1).map(|v| v.parse::<f64>().unwrap_or_else(|e| panic!("{v:?}: {e}"))).collect()).collect();
    assert_eq!(&rows, values, "{}", table.text);
    assert_eq!(table.entries.len(), values.len());
}
