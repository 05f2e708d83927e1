//! One design document, one rulebook: the page form and the design file must give the same
//! document, the same gains bit for bit, the same warnings and the same exit class; saving and
//! opening must not change a design; corrupt files must be refused with a path, never a panic.
//!
//! The numbers compared here are Polewright's own at two doors (no outside reference is
//! needed to show two doors agree); the gains themselves are checked against scipy elsewhere
//! (`placement_vs_scipy.rs`, `riccati_vs_scipy.rs`, `loop_vs_scipy.rs`).
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use std::io::Write;
use std::process::{Command, Stdio};

use polewright::design::{self, check, read_design, write_design, DesignError, DesignSpec, FieldPath};
use polewright::form::{evaluate_form, form_from_spec, spec_from_form, FormInput, FormStatus};

fn examples() -> Vec<(String, String)> {
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples");
    let mut out: Vec<(String, String)> = std::fs::read_dir(&dir)
        .expect("examples folder")
        .filter_map(|e| e.ok())
        .map(|e| e.path())
        .filter(|p| p.extension().is_some_and(|x| x == "json"))
        .map(|p| (p.display().to_string(), std::fs::read_to_string(&p).expect("read example")))
        .collect();
    out.sort();
    out
}

/// Exit class of a run: 0 designed, 1 cannot be done, 2 invalid input (the CLI's codes).
fn exit_class(r: &Result<design::DesignResult, DesignError>) -> i32 {
    match r {
        Ok(_) => 0,
        Err(DesignError::Infeasible { .. }) => 1,
        Err(DesignError::Input(_)) => 2,
    }
}

fn warning_codes(r: &design::DesignResult) -> Vec<&'static str> {
    r.warnings.iter().map(|w| w.code.as_str()).collect()
}

/// The file door and the form door of one document agree exactly.
fn assert_doors_agree(name: &str, spec: &DesignSpec) {
    let text = write_design(spec).expect("write");
    let by_file = design::run_text(&text);
    let form = form_from_spec(spec).unwrap_or_else(|e| panic!("{name}: the page cannot show it: {e}"));
    let page_spec = spec_from_form(&form).unwrap_or_else(|e| panic!("{name}: {e:?}"));
    // The page's document, written and read back, is the same document.
    let reread = read_design(&write_design(&page_spec).expect("write")).expect("read back");
    assert_eq!(reread, page_spec, "{name}: page document changed through a file");
    // The two doors' documents say the same thing: equal canonical forms (text leaves read into
    // plain JSON; version-1/2 comments carried into the notes).
    assert_eq!(design::canonical(spec), design::canonical(&page_spec), "{name}: the documents differ");
    // And the page's own document shows the same form again.
    assert_eq!(form_from_spec(&page_spec).expect("form"), form, "{name}: form changed through the document");
    let outcome = evaluate_form(&form);
    let by_page = design::run_text(&write_design(&page_spec).expect("write"));
    assert_eq!(exit_class(&by_file), exit_class(&by_page), "{name}: {by_file:?} / {by_page:?}");
    match (&by_file, &outcome.design) {
        (Ok(f), Some(p)) => {
            assert_eq!(outcome.status, FormStatus::Designed);
            let bits = |g: &Vec<Vec<f64>>| g.iter().flatten().map(|x| x.to_bits()).collect::<Vec<u64>>();
            assert_eq!(bits(&f.feedback.gain), bits(&p.feedback.gain), "{name}: gains differ");
            assert_eq!(warning_codes(f), warning_codes(p), "{name}: warnings differ");
            if let (Some(a), Some(b)) = (&f.observer, &p.observer) {
                assert_eq!(bits(&a.gain), bits(&b.gain), "{name}: observer gains differ");
            }
        }
        (Err(DesignError::Input(e)), None) => {
            let key = polewright::form::form_key(e.field).unwrap_or("a");
            assert_eq!(outcome.error_for(key), Some(e.message.as_str()), "{name}: {:?}", outcome.errors);
        }
        (Err(DesignError::Infeasible { .. }), None) => {
            assert_eq!(outcome.status, FormStatus::Infeasible)
        }
        other => panic!("{name}: the doors disagree: {other:?}"),
    }
}

#[test]
fn every_example_file_and_every_demo_gives_the_same_design_at_both_doors() {
    let mut compared = 0;
    for (name, text) in examples() {
        let spec = read_design(&text).unwrap_or_else(|e| panic!("{name}: {e}"));
        assert_doors_agree(&name, &spec);
        compared += 1;
    }
    for demo in polewright::demos::demos() {
        let spec = spec_from_form(&demo.form).expect("demo document");
        assert_doors_agree(demo.title, &spec);
        compared += 1;
    }
    // Three example files and every demo (at least four) were compared.
    assert!(compared >= 7, "only {compared} designs compared");
}

/// A small seeded generator (xorshift64*), so that every run corrupts the same way.
struct Rng(u64);
impl Rng {
    fn next(&mut self) -> u64 {
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        self.0.wrapping_mul(0x2545_F491_4F6C_DD1D)
    }
    fn below(&mut self, n: usize) -> usize {
        (self.next() % n.max(1) as u64) as usize
    }
}

/// The kinds of corruption, and whether the file must then be refused.
fn corrupt(text: &str, kind: usize, rng: &mut Rng) -> (String, bool) {
    let keys: Vec<(usize, usize)> = text
        .match_indices('"')
        .collect::<Vec<_>>()
        .chunks(2)
        .filter_map(|c| if c.len() == 2 { Some((c[0].0, c[1].0 + 1)) } else { None })
        .filter(|(a, b)| text[*b..].trim_start().starts_with(':') && b > a)
        .collect();
    match kind {
        // Truncation anywhere before the final brace.
        0 => {
            let cut = rng.below(text.trim_end().len() - 1);
            let mut end = cut;
            while !text.is_char_boundary(end) {
                end -= 1;
            }
            (text[..end].to_string(), true)
        }
        // A repeated key: a key of an object written twice.
        1 => {
            let (a, b) = keys[rng.below(keys.len())];
            (format!("{}{}: 0, {}", &text[..a], &text[a..b], &text[a..]), true)
        }
        // An unknown key next to a known one.
        2 => {
            let (a, _) = keys[rng.below(keys.len())];
            (format!("{}\"not_a_key_{}\": 1, {}", &text[..a], rng.below(1000), &text[a..]), true)
        }
        // A newer version.
        3 => (text.replacen("\"version\": 3", &format!("\"version\": {}", 4 + rng.below(100)), 1), true),
        // A value of the wrong type after a key.
        4 => {
            let (_, b) = keys[rng.below(keys.len())];
            let colon = b + text[b..].find(':').unwrap_or(0) + 1;
            let replacement = ["true", "null", "{}", "[[]]", "[{\"x\": 1}]", "-1e999", "\"\""][rng.below(7)];
            let rest = &text[colon..];
            // Replace the value up to the next comma or closing bracket at the same depth (roughly).
            let end = rest.find([',', '}']).unwrap_or(rest.len());
            (format!("{}{replacement}{}", &text[..colon], &rest[end..]), false)
        }
        // A huge array where a value was.
        _ => {
            let (_, b) = keys[rng.below(keys.len())];
            let colon = b + text[b..].find(':').unwrap_or(0) + 1;
            let rest = &text[colon..];
            let end = rest.find([',', '}']).unwrap_or(rest.len());
            let huge = format!("[{}]", vec!["1e300"; 20_000].join(","));
            (format!("{}{huge}{}", &text[..colon], &rest[end..]), false)
        }
    }
}

#[test]
fn ten_thousand_corrupt_files_are_refused_with_a_path_and_never_panic() {
    let sources: Vec<String> = examples().into_iter().map(|(_, t)| write_design(&read_design(&t).expect("example")).expect("write")).collect();
    let mut rng = Rng(0x9E37_79B9_7F4A_7C15);
    let (mut refused, mut total) = (0usize, 0usize);
    let started = std::time::Instant::now();
    for i in 0..10_000 {
        let source = &sources[i % sources.len()];
        let kind = if i % 20 == 19 { 5 } else { i % 5 };
        let (bad, must_refuse) = corrupt(source, kind, &mut rng);
        let outcome = std::panic::catch_unwind(|| read_design(&bad).map(|spec| check(&spec)));
        let outcome = outcome.unwrap_or_else(|_| panic!("panic on corruption {i} (kind {kind}): {bad:.300}"));
        total += 1;
        match outcome {
            Err(e) => {
                refused += 1;
                assert!(!e.message.is_empty(), "{e:?}");
                // The path is a field of the document (or the document itself).
                assert!(FieldPath::from_dotted(&e.field.dotted()).is_some() || e.field == FieldPath::Document);
                if kind == 3 {
                    assert_eq!(e.field, FieldPath::Version, "{e}");
                }
            }
            Ok(_) if must_refuse => panic!("corruption {i} (kind {kind}) was read: {bad:.300}"),
            Ok(report) => {
                for e in &report.errors {
                    assert!(!e.message.is_empty());
                }
            }
        }
    }
    assert_eq!(total, 10_000);
    eprintln!("{refused} of {total} corruptions refused");
    // Every truncation, repeated key, unknown key and newer version (4 of 5 kinds) is refused.
    assert!(refused >= 7_600, "only {refused} of {total} refused");
    // Bounded time: the whole sweep is a few seconds; a hang would show here, not a speed claim.
    assert!(started.elapsed().as_secs() < 600);
}

fn polewright(args: &[&str], stdin: &str) -> (i32, String, String) {
    let mut child = Command::new(env!("CARGO_BIN_EXE_polewright")).args(args).stdin(Stdio::piped()).stdout(Stdio::piped()).stderr(Stdio::piped()).spawn().expect("spawn");
    child.stdin.take().expect("stdin").write_all(stdin.as_bytes()).expect("write");
    let out = child.wait_with_output().expect("wait");
    (out.status.code().unwrap_or(-1), String::from_utf8_lossy(&out.stdout).into_owned(), String::from_utf8_lossy(&out.stderr).into_owned())
}

const TWO_OUTPUTS_ONE_INPUT: &str = r#"{"format": "polewright.design", "version": 3,
  "plant": {"a": [[0, 1], [0, 0]], "b": [[0], [1]], "c": [[1, 0], [0, 1]]},
  "feedback": {"poles": [-2, -3]},
  "tracking": {"mode": "feedforward", "outputs": [1, 2]}}"#;

#[test]
fn a_feedforward_shape_error_is_invalid_input_at_both_doors() {
    let (code, _, err) = polewright(&["design", "-"], TWO_OUTPUTS_ONE_INPUT);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("tracking.outputs") && err.contains("as many tracked outputs as inputs"), "{err}");
    let form = form_from_spec(&read_design(TWO_OUTPUTS_ONE_INPUT).expect("read")).expect("form");
    let out = evaluate_form(&form);
    assert!(out.error_for("tracked_outputs").is_some_and(|m| m.contains("as many tracked outputs as inputs")), "{:?}", out.errors);
}

#[test]
fn a_slow_observer_gives_the_same_warning_at_both_doors() {
    let text = r#"{"format": "polewright.design", "version": 3,
      "plant": {"a": [[0, 1], [0, 0]], "b": [[0], [1]], "c": [[1, 0]]},
      "feedback": {"poles": [-2, -3]}, "observer": {"speed_factor": 0.5}}"#;
    let (code, out, err) = polewright(&["design", "-"], text);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).expect("result");
    let codes: Vec<&str> = v["warnings"].as_array().expect("warnings").iter().filter_map(|w| w["code"].as_str()).collect();
    assert!(codes.contains(&"observer-slow"), "{codes:?}");
    let form = form_from_spec(&read_design(text).expect("read")).expect("form");
    let page = evaluate_form(&form);
    let d = page.design.expect("designed");
    assert!(d.warnings.iter().any(|w| w.code == "observer-slow"));
    assert_eq!(d.warnings.len(), codes.len());
}

#[test]
fn the_page_saves_what_was_typed_and_opens_it_unchanged() {
    let mut f = FormInput { title: "Carriage axis, review 2".into(), notes: "Illustrative.\nPoles from the drive's bandwidth.".into(), ..FormInput::default() };
    f.a = "0 1\n0 -0.5".into();
    f.b = "0\n2".into();
    f.poles = "-3 ± 2j, ".into();
    f.limits = "4".into();
    let spec = spec_from_form(&f).expect("document");
    let text = write_design(&spec).expect("write");
    let opened = read_design(&text).expect("read");
    assert_eq!(opened, spec);
    let back = form_from_spec(&opened).expect("form");
    assert_eq!(back.title, f.title);
    assert_eq!(back.notes, f.notes);
    assert_eq!(back.poles, f.poles, "the typed text is kept as typed");
    // The CLI on the saved file gives the page's gain bit for bit.
    let page = evaluate_form(&f).design.expect("designed");
    let (code, out, err) = polewright(&["design", "-"], &text);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).expect("result");
    let cli: Vec<u64> = v["feedback"]["gain"][0].as_array().expect("gain").iter().map(|x| x.as_f64().expect("number").to_bits()).collect();
    let mine: Vec<u64> = page.feedback.gain[0].iter().map(|x| x.to_bits()).collect();
    assert_eq!(cli, mine);
}

#[test]
fn version_one_and_two_files_are_read_with_their_meaning_and_notes() {
    let v1 = r#"{"format": "polewright.design", "version": 1, "comment": "old note",
      "plant": {"a": [[0, 1], [0, 0]], "b": [0, 1]}, "feedback": {"poles": [-1, -2]}}"#;
    let spec = read_design(v1).expect("v1");
    assert_eq!(spec.version, 3);
    assert_eq!(spec.notes, "old note");
    // A version-3 file may not use the old key, and a version-1 file no version-2 section.
    let e = read_design(&v1.replace("\"version\": 1", "\"version\": 3")).expect_err("comment in v3");
    assert_eq!(e.field, FieldPath::Notes);
    let e = read_design(&v1.replace("\"comment\": \"old note\",", "\"observer\": {},")).expect_err("observer in v1");
    assert_eq!(e.field, FieldPath::Observer);
    let e = read_design(&v1.replace("\"version\": 1", "\"version\": 9")).expect_err("newer");
    assert_eq!(e.field, FieldPath::Version);
    assert!(e.message.contains("newer"));
    let e = read_design(&v1.replace("\"a\": [[0, 1], [0, 0]],", "\"a\": [[0, 1], [0, 0]], \"a\": [[1]],")).expect_err("repeated key");
    assert!(e.message.contains("duplicate"), "{e}");
    assert_eq!(e.field, FieldPath::Plant);
}
