//! The `polewright` command line, driven as a user would: files, standard input, exit codes.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use std::io::Write;
use std::process::{Command, Stdio};

fn polewright(args: &[&str], stdin: Option<&str>) -> (i32, String, String) {
    let mut cmd = Command::new(env!("CARGO_BIN_EXE_polewright"));
    cmd.args(args).stdin(Stdio::piped()).stdout(Stdio::piped()).stderr(Stdio::piped());
    let mut child = cmd.spawn().expect("spawn polewright");
    if let Some(text) = stdin {
        child.stdin.take().expect("stdin").write_all(text.as_bytes()).expect("write stdin");
    } else {
        drop(child.stdin.take());
    }
    let out = child.wait_with_output().expect("wait");
    (out.status.code().unwrap_or(-1), String::from_utf8_lossy(&out.stdout).into_owned(), String::from_utf8_lossy(&out.stderr).into_owned())
}

fn example(name: &str) -> String {
    std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples").join(name).display().to_string()
}

#[test]
fn textbook_example_from_a_file() {
    // Ogata, Modern Control Engineering, pole-placement example (from memory): K = [199, 55, 8].
    let (code, out, err) = polewright(&["design", &example("third-order-textbook.json")], None);
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).expect("result JSON");
    assert_eq!(v["format"], "polewright.result");
    assert_eq!(v["version"], 2);
    assert_eq!(v["convention"], "u = -K x");
    let k: Vec<f64> = v["feedback"]["gain"][0].as_array().unwrap().iter().map(|x| x.as_f64().unwrap()).collect();
    for (got, want) in k.iter().zip([199.0, 55.0, 8.0]) {
        assert!((got - want).abs() < 1e-9 * want, "{k:?}");
    }
    // The reported pole error is honest: eig(A − B K) from the printed gain (nalgebra's Schur)
    // is within 1e-12 of the request, and so is the figure the CLI prints.
    let a = nalgebra::DMatrix::from_row_slice(3, 3, &[0.0, 1.0, 0.0, 0.0, 0.0, 1.0, -1.0, -5.0, -6.0]);
    let b = nalgebra::DMatrix::from_row_slice(3, 1, &[0.0, 0.0, 1.0]);
    let closed = a - b * nalgebra::DMatrix::from_row_slice(1, 3, &k);
    let mut got: Vec<num_complex::Complex64> = closed.try_schur(f64::EPSILON, 10_000).expect("Schur").complex_eigenvalues().iter().copied().collect();
    for want in [num_complex::Complex64::new(-2.0, 4.0), num_complex::Complex64::new(-2.0, -4.0), num_complex::Complex64::new(-10.0, 0.0)] {
        let j = (0..got.len()).min_by(|&i, &j| (got[i] - want).norm().total_cmp(&(got[j] - want).norm())).unwrap();
        assert!((got[j] - want).norm() < 1e-12 * want.norm(), "{want} vs {got:?}");
        got.remove(j);
    }
    assert!(v["feedback"]["max_pole_error"].as_f64().unwrap() < 1e-12);
    assert_eq!(v["controllability"]["rank"], 3);
    assert_eq!(v["controllability"]["stabilizable"], true);
}

#[test]
fn standard_input_and_exit_codes() {
    let infeasible = r#"{"format":"polewright.design","version":1,"plant":{"a":[[1,0],[0,-1]],"b":[[0],[1]]},"feedback":{"poles":[-1,-2]}}"#;
    let (code, out, err) = polewright(&["design", "-"], Some(infeasible));
    assert_eq!(code, 1, "{err}");
    assert!(out.is_empty());
    assert!(err.contains("mode at 1") && err.contains("uncontrollable"), "{err}");

    let bad = r#"{"format":"polewright.design","version":1,"plant":{"a":[[1,0],[0,"x"]],"b":[[0],[1]]},"feedback":{"poles":[-1,-2]}}"#;
    let (code, _, err) = polewright(&["design", "-"], Some(bad));
    assert_eq!(code, 2);
    assert!(err.contains("plant.a") && err.contains("row 2, column 2"), "{err}");

    let (code, _, err) = polewright(&["design", "-"], Some("not json"));
    assert_eq!(code, 2);
    assert!(err.contains("not valid JSON"), "{err}");

    let (code, _, err) = polewright(&["design", "/nonexistent/file.json"], None);
    assert_eq!(code, 2);
    assert!(err.contains("cannot read"), "{err}");

    let (code, _, _) = polewright(&["frobnicate"], None);
    assert_eq!(code, 2);
}

#[test]
fn help_explains_the_convention_and_the_caution() {
    let (code, out, _) = polewright(&["--help"], None);
    assert_eq!(code, 0);
    assert!(out.contains("u = -K x"));
    assert!(out.contains("not a safety function"));
    assert!(out.contains("EXIT STATUS"));
}

#[test]
fn hostile_inputs_never_crash() {
    // Every one of these must end in exit 0, 1 or 2 with a message: never a panic (exit 101/134).
    let cases = [
        "",
        "{}",
        "[]",
        "null",
        r#"{"format":"polewright.design","version":99}"#,
        r#"{"format":"polewright.design","version":1,"plant":{"a":[],"b":[]},"feedback":{"poles":[]}}"#,
        r#"{"format":"polewright.design","version":1,"plant":{"a":[[0]],"b":[[0]]},"feedback":{"poles":[-1]}}"#,
        r#"{"format":"polewright.design","version":1,"plant":{"a":[[0,0],[0,0]],"b":[[1],[1]]},"feedback":{"poles":[-1,-1]}}"#,
        r#"{"format":"polewright.design","version":1,"plant":{"a":[[1e308,1e308],[1e308,1e308]],"b":[[1],[0]]},"feedback":{"poles":[-1,-2]}}"#,
        r#"{"format":"polewright.design","version":1,"plant":{"a":[[0,1],[0,0]],"b":[[0],[1]]},"feedback":{"poles":["-1+1j"]}}"#,
        r#"{"format":"polewright.design","version":1,"plant":{"a":[[0,1],[0,0]],"b":[[0],[1]]},"feedback":{"poles":[1e300,-1e300]}}"#,
        r#"{"format":"polewright.design","version":1,"plant":{"a":[[0,1],[0,0]],"b":[[0],[1]]},"feedback":{"poles":[-1,-2]},"simulation":{"duration":1e300}}"#,
        r#"{"format":"polewright.design","version":1,"plant":{"a":[[0,1],[0,0]],"b":[[0],[1]]},"feedback":{"poles":[-1,-2]},"actuators":{"limit":[0]}}"#,
        r#"{"format":"polewright.design","version":1,"plant":{"a":"0 1\n0 0","b":"0\n1"},"feedback":{"poles":"0, 0"}}"#,
    ];
    for text in cases {
        let (code, _, err) = polewright(&["design", "-"], Some(text));
        assert!((0..=2).contains(&code), "exit {code} for {text}: {err}");
        if code != 0 {
            assert!(err.starts_with("polewright: "), "{text}: {err}");
        }
    }
}

#[test]
fn compare_two_designs_side_by_side() {
    // Pinned: the textbook design (Ogata, Modern Control Engineering; from memory), whose gain
    // K = [199, 55, 8] has the 2-norm √(199² + 55² + 8²) = 206.616… . Current: the same plant
    // with every pole twice as fast, from standard input.
    let pinned = example("third-order-textbook.json");
    let text = std::fs::read_to_string(&pinned).expect("example");
    let mut faster: serde_json::Value = serde_json::from_str(&text).expect("json");
    assert_eq!(faster["feedback"]["poles"], serde_json::json!(["-2±4j", -10]));
    faster["feedback"]["poles"] = serde_json::json!(["-4±8j", -20]);
    let (code, out, err) = polewright(&["compare", &pinned, "-"], Some(&faster.to_string()));
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).expect("comparison JSON");
    assert_eq!(v["format"], "polewright.comparison");
    let rows = v["rows"].as_array().expect("rows");
    let row = |name: &str| rows.iter().find(|r| r["figure"].as_str().is_some_and(|f| f.starts_with(name))).unwrap_or_else(|| panic!("{name} in {out}"));
    let norm = row("gain norm")["pinned"]["value"].as_f64().expect("value");
    let want = (199.0f64 * 199.0 + 55.0 * 55.0 + 8.0 * 8.0).sqrt();
    assert!((norm - want).abs() < 1e-9 * want, "{norm} vs {want}");
    assert_eq!(row("gain norm")["better"], "pinned", "faster poles cost gain");
    assert_eq!(row("slowest settling time")["better"], "current", "and settle sooner");
    // Errors say which file.
    let (code, _, err) = polewright(&["compare", &pinned, "-"], Some("{}"));
    assert_eq!(code, 2);
    assert!(err.contains("-: invalid input"), "{err}");
    let (code, _, err) = polewright(&["compare", &pinned], None);
    assert_eq!(code, 2);
    assert!(err.contains("two design files"), "{err}");
}

#[test]
fn report_figures_follow_the_digits_option() {
    // The same record at 3 and at 8 significant digits: the sample-rate ratio of the digital
    // belt-axis example reads with that many digits; a bad count is refused with the rule.
    let file = example("belt-axis-digital.json");
    let figure = |html: &str| -> String {
        let start = html.find("Sample rate against the closed-loop bandwidth</td><td>").map(|i| i + "Sample rate against the closed-loop bandwidth</td><td>".len()).unwrap();
        html[start..].split(' ').next().unwrap().to_string()
    };
    let (code, three, err) = polewright(&["report", &file, "--digits", "3"], None);
    assert_eq!(code, 0, "{err}");
    let (code, eight, err) = polewright(&["report", "--digits", "8", &file], None);
    assert_eq!(code, 0, "{err}");
    let (a, b) = (figure(&three), figure(&eight));
    assert_eq!(a.replace('.', "").len(), 3, "{a}");
    assert_eq!(b.replace('.', "").len(), 8, "{b}");
    let (x, y): (f64, f64) = (a.parse().unwrap(), b.parse().unwrap());
    assert!((x - y).abs() <= 0.5e-2 * y, "{x} is {y} to 3 digits");
    let (code, _, err) = polewright(&["report", &file, "--digits", "2"], None);
    assert_eq!(code, 2);
    assert!(err.contains("--digits \"2\"") && err.contains("3 to 17"), "{err}");
}
