//! The exports checked by the outside tools that will consume them: the C99 export compiled by
//! Debian's gcc with `-std=c99 -Wall -Wextra -Werror -pedantic`, a C test program that prints
//! every exported matrix (equal to the design's numbers exactly in double, or their nearest
//! float32) and runs the exported controller step on the exported test vectors; the Rust
//! export compiled by rustc; hostile names in every export.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests may fail loudly

use std::path::{Path, PathBuf};
use std::process::Command;

use polewright::design::export::{export_text, ExportFile, ExportFormat, Precision};

fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("polewright-exports-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

fn write_all(dir: &Path, files: &[ExportFile]) {
    for f in files {
        std::fs::write(dir.join(&f.name), &f.contents).unwrap();
    }
}

/// The test program: prints every matrix (`name i value` with 17 digits), then runs the step on
/// the vectors file given as its argument and prints the largest errors.
const HARNESS: &str = r#"
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <math.h>
#include "polewright_controller.h"

static void print_matrix(const char *name, const pw_real *m, int count)
{
    int i;
    for (i = 0; i < count; ++i) printf("%s %d %.17g\n", name, i, (double)m[i]);
}

int main(int argc, char **argv)
{
    MATRICES
#ifdef PW_SAMPLE_TIME
    if (argc > 1) {
        FILE *f = fopen(argv[1], "r");
        char line[65536];
        int columns = 0, rows = 0, qi, i;
        double worst_cmd = 0, worst_est = 0, worst_z = 0, scale_cmd = 0, scale_est = 0, scale_z = 0;
        pw_controller_state s;
        if (!f) return 2;
        pw_controller_init(&s);
        while (fgets(line, sizeof line, f)) {
            double v[4096];
            int n = 0;
            char *p = line;
            if (line[0] == '"') continue;
            if (line[0] == 'k') {
                for (i = 0; line[i]; ++i) if (line[i] == ',') ++columns;
                ++columns;
                continue;
            }
            while (*p && *p != '\r' && *p != '\n' && n < 4096) {
                char *end;
                v[n++] = strtod(p, &end);
                p = (*end == ',') ? end + 1 : end;
                if (end == p && *p != ',') break;
            }
            qi = columns - 2 - PW_MEASURED - PW_TRACKED - PW_STATES - PW_INPUTS;
            {
                pw_real meas[PW_MEASURED], ref[PW_TRACKED_ALLOC], cmd[PW_INPUTS], est[PW_STATES];
                int o = 2;
                for (i = 0; i < PW_MEASURED; ++i) meas[i] = (pw_real)v[o + i];
                o += PW_MEASURED;
                ref[0] = 0;
                for (i = 0; i < PW_TRACKED; ++i) ref[i] = (pw_real)v[o + i];
                o += PW_TRACKED;
                for (i = 0; i < qi; ++i) {
                    double d = fabs((double)s.z[i] - v[o + i]);
                    if (d > worst_z) worst_z = d;
                    if (fabs(v[o + i]) > scale_z) scale_z = fabs(v[o + i]);
                }
                o += qi;
                pw_controller_step(&s, meas, ref, cmd, est);
                for (i = 0; i < PW_STATES; ++i) {
                    double d = fabs((double)est[i] - v[o + i]);
                    if (d > worst_est) worst_est = d;
                    if (fabs(v[o + i]) > scale_est) scale_est = fabs(v[o + i]);
                }
                o += PW_STATES;
                for (i = 0; i < PW_INPUTS; ++i) {
                    double d = fabs((double)cmd[i] - v[o + i]);
                    if (d > worst_cmd) worst_cmd = d;
                    if (fabs(v[o + i]) > scale_cmd) scale_cmd = fabs(v[o + i]);
                }
            }
            ++rows;
        }
        fclose(f);
        printf("vectors %d %.3e %.3e %.3e %.3e %.3e %.3e\n", rows, worst_cmd, scale_cmd, worst_est, scale_est, worst_z, scale_z);
    }
#else
    (void)argc; (void)argv;
#endif
    return 0;
}
"#;

struct Run {
    /// `(matrix, index) → value` as printed.
    values: Vec<(String, usize, f64)>,
    /// rows, worst command error, command scale, worst estimate error, scale, worst z error, scale.
    vectors: Option<(usize, f64, f64, f64, f64, f64, f64)>,
    symbols: Vec<String>,
}

fn gcc(dir: &Path, args: &[&str]) {
    let out = Command::new("gcc").current_dir(dir).args(["-std=c99", "-Wall", "-Wextra", "-Werror", "-pedantic"]).args(args).output().expect("gcc (Debian's gcc; .ci/setup installs it)");
    assert!(out.status.success(), "gcc {args:?} failed:\n{}\n{}", String::from_utf8_lossy(&out.stdout), String::from_utf8_lossy(&out.stderr));
}

/// Exports `doc` as C (and vectors when digital), compiles and runs the harness.
fn compile_and_run(doc: &str, precision: Precision, tag: &str) -> Run {
    let dir = scratch(tag);
    let c = export_text(doc, ExportFormat::C, precision).unwrap_or_else(|e| panic!("{tag}: {e:?}"));
    write_all(&dir, &c);
    let header = &c.iter().find(|f| f.name.ends_with(".h")).unwrap().contents;
    let prints: Vec<String> = header
        .lines()
        .filter_map(|l| l.strip_prefix("extern const pw_real PW_"))
        .filter(|rest| !rest.starts_with("LIMIT["))
        .map(|rest| {
            // Through the matrix instance: its rows × cols must cover the array, and its data is it.
            let name = rest.split('[').next().unwrap();
            format!("if (PW_{name}_MATRIX.data != PW_{name} || (int)PW_{name}_MATRIX.rows * PW_{name}_MATRIX.cols != (int)(sizeof PW_{name} / sizeof PW_{name}[0])) return 3;\n    print_matrix(\"{name}\", PW_{name}_MATRIX.data, PW_{name}_MATRIX.rows * PW_{name}_MATRIX.cols);")
        })
        .collect();
    std::fs::write(dir.join("harness.c"), HARNESS.replace("MATRICES", &prints.join("\n    "))).unwrap();
    // Built with the address and undefined-behaviour sanitizers: an out-of-bounds write in the
    // generated step (as the back-calculation scratch once was, with more inputs than states)
    // stops the harness instead of passing silently.
    // (The plain object is the one whose symbols are listed below.)
    gcc(&dir, &["-c", "polewright_controller.c", "-o", "controller.o"]);
    gcc(&dir, &["-fsanitize=address,undefined", "-fno-sanitize-recover=all", "-c", "polewright_controller.c", "-o", "controller_checked.o"]);
    gcc(&dir, &["-fsanitize=address,undefined", "-fno-sanitize-recover=all", "harness.c", "controller_checked.o", "-lm", "-o", "harness"]);
    let vectors = export_text(doc, ExportFormat::Vectors, precision).ok();
    let mut cmd = Command::new(dir.join("harness"));
    if let Some(v) = &vectors {
        write_all(&dir, v);
        cmd.arg(dir.join("polewright_vectors.csv"));
    }
    let out = cmd.output().unwrap();
    assert!(out.status.success(), "{tag}: harness failed");
    let text = String::from_utf8(out.stdout).unwrap();
    let mut run = Run { values: Vec::new(), vectors: None, symbols: Vec::new() };
    for line in text.lines() {
        let f: Vec<&str> = line.split(' ').collect();
        if f[0] == "vectors" {
            let n: Vec<f64> = f[2..].iter().map(|x| x.parse().unwrap()).collect();
            run.vectors = Some((f[1].parse().unwrap(), n[0], n[1], n[2], n[3], n[4], n[5]));
        } else {
            run.values.push((f[0].to_string(), f[1].parse().unwrap(), f[2].parse().unwrap()));
        }
    }
    let nm = Command::new("nm").args(["-g", "--defined-only"]).arg(dir.join("controller.o")).output().expect("nm (binutils, with gcc)");
    run.symbols = String::from_utf8(nm.stdout).unwrap().lines().filter_map(|l| l.split_whitespace().nth(2).map(str::to_string)).collect();
    let _ = std::fs::remove_dir_all(&dir);
    run
}

/// The design's numbers by exported name, from the JSON export (which carries the result's
/// numbers unchanged; checked against the result itself below).
fn design_values(doc: &str) -> Vec<(String, Vec<f64>)> {
    let json = export_text(doc, ExportFormat::Json, Precision::Double).unwrap();
    let v: serde_json::Value = serde_json::from_str(&json[0].contents).unwrap();
    v["matrices"]
        .as_object()
        .unwrap()
        .iter()
        .map(|(k, m)| (k.to_uppercase(), m["data"].as_array().unwrap().iter().flat_map(|r| r.as_array().unwrap().iter().map(|x| x.as_f64().unwrap())).collect()))
        .collect()
}

fn check_values(doc: &str, run: &Run, precision: Precision, tag: &str) {
    let want = design_values(doc);
    assert!(!want.is_empty());
    for (name, data) in &want {
        for (i, w) in data.iter().enumerate() {
            let got = run.values.iter().find(|(n, j, _)| n == name && *j == i).map(|t| t.2).unwrap_or_else(|| panic!("{tag}: {name}[{i}] not printed"));
            let expected = match precision {
                Precision::Double => *w,
                Precision::Float => (*w as f32) as f64,
                Precision::Q15 | Precision::Q31 => unreachable!("floating-point exports only here"),
            };
            assert_eq!(got, expected, "{tag}: {name}[{i}]");
        }
    }
}

const CONTINUOUS: &str = r#"{"format": "polewright.design", "version": 3, "title": "continuous test",
  "plant": {"a": [[0, 1, 0], [0, 0, 1], [-1, -5, -6]], "b": [[0], [0], [1]], "c": [[1, 0, 0]]},
  "feedback": {"poles": ["-2±4j", -10]}, "tracking": {"mode": "feedforward"}}"#;

const DELAY_CURRENT: &str = r#"{"format": "polewright.design", "version": 3, "title": "delay and current observer",
  "plant": {"a": [[0, 1], [-4, -0.4]], "b": [[0], [2]], "c": [[1, 0]]},
  "feedback": {"poles": ["-3±3j"]}, "implementation": {"sample_time": 0.02, "computation_delay": true},
  "observer": {"speed_factor": 3, "form": "current"}, "tracking": {"mode": "feedforward"},
  "actuators": {"limit": [5]}, "simulation": {"reference": [0.5], "reference_time": 0.1, "disturbance": [0.3], "disturbance_time": 2}}"#;

/// Integral action with the reference also fed forward (two degrees of freedom), a
/// computation delay and a saturating input (invented data).
const TWO_DOF: &str = r#"{"format": "polewright.design", "version": 3, "title": "two degrees of freedom",
  "plant": {"a": [[0, 1], [-4, -0.4]], "b": [[0], [2]], "c": [[1, 0]]},
  "feedback": {"poles": ["-3±3j", -4]}, "implementation": {"sample_time": 0.02, "computation_delay": true},
  "observer": {"speed_factor": 3}, "tracking": {"mode": "integral", "feedforward": true},
  "actuators": {"limit": [5]}, "simulation": {"reference": [0.5], "reference_time": 0.1, "disturbance": [0.3], "disturbance_time": 2}}"#;

/// More inputs than states, integral action with back-calculation anti-windup, saturating
/// (invented data): the generated step's scratch buffers must fit both counts.
const MORE_INPUTS: &str = r#"{"format": "polewright.design", "version": 3, "title": "more inputs than states",
  "plant": {"a": [[-1]], "b": [[1, 0.5]], "c": [[1]]},
  "feedback": {"poles": [-3, -4]}, "implementation": {"sample_time": 0.01},
  "tracking": {"mode": "integral"}, "anti_windup": {"mode": "back_calculation", "time_constant": 0.05},
  "actuators": {"limit": [0.5, 0.5]}, "simulation": {"reference": [1], "reference_time": 0.1}}"#;

#[test]
fn c_export_compiles_prints_the_design_and_reproduces_the_simulation() {
    let belt = std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/belt-axis-digital.json")).unwrap();
    // The belt axis saturates: a 60 N limit on a 10 mm step with integral action and clamping.
    let saturating = belt.replace("\"limit\": [60]", "\"limit\": [0.5]");
    for (tag, doc, digital) in [
        ("continuous", CONTINUOUS, false),
        ("delay-current", DELAY_CURRENT, true),
        ("integral-saturating", saturating.as_str(), true),
        ("two-degrees-of-freedom", TWO_DOF, true),
        ("more-inputs-than-states", MORE_INPUTS, true),
    ] {
        for precision in [Precision::Double, Precision::Float] {
            let label = format!("{tag}/{precision:?}");
            let run = compile_and_run(doc, precision, &label);
            check_values(doc, &run, precision, &label);
            match (digital, run.vectors) {
                (true, Some((rows, cmd_err, cmd_scale, est_err, est_scale, z_err, z_scale))) => {
                    assert!(rows >= 100, "{label}: {rows} rows");
                    // double: the C step and the simulator differ only in the order of the sums;
                    // float: float32 arithmetic throughout the step — an estimate of a rounding
                    // of f32::EPSILON (1.2e-7) per step accumulated over the rows without decay
                    // (a well-damped loop forgets old rounding; a non-normal one can amplify it
                    // for a while), times 10 for the operations of a step: 10 · rows · ε₃₂ of
                    // the signal's size (4.8e-4 at 401 rows; measured worst 5.8e-5, the
                    // saturating integral loop).
                    let tol = match precision {
                        Precision::Double => 1e-12,
                        Precision::Float => 10.0 * rows as f64 * f64::from(f32::EPSILON),
                        Precision::Q15 | Precision::Q31 => {
                            unreachable!("floating-point exports only here")
                        }
                    };
                    eprintln!(
                        "{label}: {rows} samples, command error {:.1e} (of {cmd_scale:.3}), estimate {:.1e}, integrator {:.1e}",
                        cmd_err / cmd_scale.max(1e-300),
                        est_err / est_scale.max(1e-300),
                        z_err / z_scale.max(1e-300)
                    );
                    assert!(cmd_err <= tol * cmd_scale.max(1e-12), "{label}: command error {cmd_err:e} of {cmd_scale}");
                    assert!(est_err <= tol * est_scale.max(1e-12), "{label}: estimate error {est_err:e} of {est_scale}");
                    assert!(z_err <= tol * z_scale.max(1e-12), "{label}: integrator error {z_err:e} of {z_scale}");
                }
                (true, None) => panic!("{label}: no vectors"),
                (false, v) => assert!(v.is_none(), "{label}: a continuous design has no step"),
            }
        }
    }
    // A scenario that stays within the limits is scaled until an input saturates, and says so.
    let v = export_text(DELAY_CURRENT, ExportFormat::Vectors, Precision::Double).unwrap();
    assert!(v[0].contents.contains("saturation reached"), "{}", &v[0].contents[..1200]);
    // The saturating case says so in its vectors.
    let v = export_text(&saturating, ExportFormat::Vectors, Precision::Double).unwrap();
    assert!(v[0].contents.contains("saturation reached") && v[0].contents.contains("integrator active"), "{}", &v[0].contents[..600]);
}

#[test]
fn hostile_names_stay_text_in_every_export() {
    let doc = r#"{"format": "polewright.design", "version": 3, "title": "<script>alert(1)</script> */ int t; /*",
      "notes": "=HYPERLINK(\"http://x\")",
      "plant": {"a": [[0, 1], [0, 0]], "b": [[0], [1]], "c": [[1, 0]],
                "state_names": ["x */ int injected; /*", "v ??/"], "state_units": ["m\nint unit;", "=1+1"],
                "input_names": ["\"quoted\", u"], "output_names": ["@y"]},
      "feedback": {"poles": [-1, -2]}, "implementation": {"sample_time": 0.01}, "observer": {"speed_factor": 3},
      "tracking": {"mode": "integral"}, "tracking_poles": null}"#
        .replace(", \"tracking_poles\": null", "");
    let doc = doc.replace("\"feedback\": {\"poles\": [-1, -2]}", "\"feedback\": {\"poles\": [-1, -2, -3]}");
    for precision in [Precision::Double, Precision::Float] {
        let run = compile_and_run(&doc, precision, &format!("hostile-{precision:?}"));
        // Nothing is declared beyond the controller's own symbols.
        for s in &run.symbols {
            assert!(s.starts_with("PW_") || s.starts_with("pw_controller_"), "unexpected symbol {s} in {:?}", run.symbols);
        }
        assert!(!run.symbols.iter().any(|s| s.contains("injected") || s == "t"), "{:?}", run.symbols);
    }
    // CSV: quoted cells, formulas neutralised.
    for format in [ExportFormat::Csv, ExportFormat::Vectors] {
        let f = export_text(&doc, format, Precision::Double).unwrap();
        for line in f[0].contents.split("\r\n").filter(|l| l.starts_with("\"#")) {
            assert!(line.ends_with('"') && !line.contains('\n'), "a header cell is closed on its line: {line}");
        }
        assert!(!f[0].contents.contains("\r\n=") && !f[0].contents.contains(",="), "no cell starts a formula");
    }
    // Rust: the names only in comments, one line each.
    let r = export_text(&doc, ExportFormat::Rust, Precision::Double).unwrap();
    for line in r[0].contents.lines().filter(|l| l.contains("injected") || l.contains("unit;")) {
        assert!(line.starts_with("// "), "{line}");
    }
}

#[test]
fn rust_export_compiles_and_equals_the_design() {
    let doc = DELAY_CURRENT;
    let dir = scratch("rust");
    let files = export_text(doc, ExportFormat::Rust, Precision::Double).unwrap();
    write_all(&dir, &files);
    let want = design_values(doc);
    let prints: Vec<String> = want.iter().map(|(name, _)| format!("for (i, v) in polewright_controller::{name}.iter().enumerate() {{ println!(\"{name} {{i}} {{v:?}}\"); }}")).collect();
    std::fs::write(dir.join("main.rs"), format!("mod polewright_controller;\nfn main() {{\n    {}\n}}\n", prints.join("\n    "))).unwrap();
    let rustc = std::env::var("RUSTC").unwrap_or_else(|_| "rustc".into());
    let out = Command::new(rustc).current_dir(&dir).args(["--edition", "2021", "-D", "warnings", "main.rs", "-o", "main"]).output().unwrap();
    assert!(out.status.success(), "rustc failed:\n{}", String::from_utf8_lossy(&out.stderr));
    let text = String::from_utf8(Command::new(dir.join("main")).output().unwrap().stdout).unwrap();
    for (name, data) in &want {
        for (i, w) in data.iter().enumerate() {
            let line = text.lines().find(|l| l.starts_with(&format!("{name} {i} "))).unwrap_or_else(|| panic!("{name}[{i}]"));
            let got: f64 = line.rsplit(' ').next().unwrap().parse().unwrap();
            assert_eq!(got, *w, "{name}[{i}]");
        }
    }
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn the_exported_numbers_are_the_results() {
    // The JSON export carries the design result's own numbers (the other tests compare the
    // C and Rust exports with it).
    let r = polewright::design::run_text(DELAY_CURRENT).unwrap();
    let values = design_values(DELAY_CURRENT);
    let k: Vec<f64> = r.feedback.gain.iter().flatten().copied().collect();
    assert_eq!(values.iter().find(|(n, _)| n == "K").unwrap().1, k);
    let l: Vec<f64> = r.observer.as_ref().unwrap().current_gain.as_ref().unwrap().iter().flatten().copied().collect();
    assert_eq!(values.iter().find(|(n, _)| n == "L_C").unwrap().1, l);
    // The header states the document's hash, the same however the document is written.
    let reordered = DELAY_CURRENT.replace("\"title\": \"delay and current observer\",", "").replace("\"version\": 3,", "\"version\": 3, \"title\": \"delay and current observer\",");
    let a = export_text(DELAY_CURRENT, ExportFormat::Json, Precision::Double).unwrap();
    let b = export_text(&reordered, ExportFormat::Json, Precision::Double).unwrap();
    let hash = |s: &str| serde_json::from_str::<serde_json::Value>(s).unwrap()["document_sha256"].as_str().unwrap().to_string();
    assert_eq!(hash(&a[0].contents), hash(&b[0].contents));
    assert_eq!(hash(&a[0].contents).len(), 64);
}

#[test]
fn float32_recheck_flags_poles_near_one_at_fast_sampling() {
    // A lightly damped plant (ζ = 0.05 at 1 rad/s) with an observer, sampled at 10 MHz: the
    // observer's model Φ = e^{AT} has entries within 1e-7 of 0 and 1, and float32 (spacing 6e-8
    // near 1) moves an observer pole out of the unit circle (the closed form of the rounding
    // of such a rotation is checked in crate/core/src/tests/precision.rs). At 1 kHz the same
    // design keeps its damping to 0.1 %.
    let doc = |t: &str| {
        format!(
            r#"{{"format": "polewright.design", "version": 3, "plant": {{"a": [[0, 1], [-1, -0.1]], "b": [[0], [1]], "c": [[1, 0]]}},
               "feedback": {{"poles": ["-0.02±1j"]}}, "implementation": {{"sample_time": {t}}}, "observer": {{"speed_factor": 2}},
               "simulation": {{"duration": 0.001}}}}"#
        )
    };
    // Recomputed here: Φ by nalgebra's matrix exponential, Φ and L rounded to float32, the
    // observer's error dynamics Φ − L C (predictor form) and their eigenvalues by nalgebra's Schur.
    let a = nalgebra::DMatrix::from_row_slice(2, 2, &[0.0, 1.0, -1.0, -0.1]);
    let c = nalgebra::DMatrix::from_row_slice(1, 2, &[1.0, 0.0]);
    let f32_poles = |r: &polewright::design::DesignResult, t: f64| -> Vec<num_complex::Complex64> {
        let phi = (&a * t).exp().map(|v| v as f32 as f64);
        let g = &r.observer.as_ref().expect("observer").gain;
        let l = nalgebra::DMatrix::from_fn(2, 1, |i, _| g[i][0] as f32 as f64);
        (phi - l * &c).try_schur(f64::EPSILON, 10_000).expect("Schur").complex_eigenvalues().iter().copied().collect()
    };
    let fast = polewright::design::run_text(&doc("1e-7")).unwrap();
    let radius = f32_poles(&fast, 1e-7).iter().map(|z| z.norm()).fold(0.0, f64::max);
    assert!(radius > 1.0, "float32 moves an observer pole out of the unit circle: |z| = {radius}");
    let fp = fast.finite_precision.as_ref().expect("digital designs are re-checked");
    let observer = fp.loops.iter().find(|l| l.name == "observer").unwrap();
    assert!(!observer.stable, "{observer:?}");
    assert!(fast.warnings.iter().any(|w| w.code == "float32-sensitive"), "{:?}", fast.warnings);
    let slow = polewright::design::run_text(&doc("1e-3")).unwrap();
    // At 1 kHz the float32 observer poles stay inside the unit circle with their damping: ζ of
    // s = ln z / T within 0.1 % of the f64 design's.
    let damping = |z: &num_complex::Complex64| {
        let s = z.ln() / 1e-3;
        -s.re / s.norm()
    };
    let rounded = f32_poles(&slow, 1e-3);
    let exact: Vec<num_complex::Complex64> = {
        let g = &slow.observer.as_ref().unwrap().gain;
        let l = nalgebra::DMatrix::from_fn(2, 1, |i, _| g[i][0]);
        ((&a * 1e-3).exp() - l * &c).try_schur(f64::EPSILON, 10_000).expect("Schur").complex_eigenvalues().iter().copied().collect()
    };
    let worst = rounded.iter().map(damping).fold(f64::INFINITY, f64::min) / exact.iter().map(damping).fold(f64::INFINITY, f64::min);
    assert!(rounded.iter().all(|z| z.norm() < 1.0) && worst > 0.999, "{rounded:?} vs {exact:?}");
    let fp = slow.finite_precision.as_ref().unwrap();
    assert!(fp.loops.iter().all(|l| l.stable && l.worst_damping_fraction > 0.999), "{fp:?}");
    assert!(!slow.warnings.iter().any(|w| w.code == "float32-sensitive"));
}

#[test]
fn fixed_point_exports_compile_and_stand_for_the_design() {
    // Q15 and Q31 integers with one shift per matrix: each stands for its design value within
    // half a step (2^(shift − f − 1)); the C compiles with -Werror -pedantic. The closed loop
    // of the quantised numbers is checked against numpy by tests/oracle/check_fixed_point.py.
    let doc = DELAY_CURRENT;
    let exact = design_values(doc);
    for (precision, f) in [(Precision::Q15, 15), (Precision::Q31, 31)] {
        let json = export_text(doc, ExportFormat::Json, precision).unwrap();
        let v: serde_json::Value = serde_json::from_str(&json[0].contents).unwrap();
        for (name, data) in &exact {
            let m = v["matrices"].as_object().unwrap().iter().find(|(k, _)| k.to_uppercase() == *name).unwrap().1;
            let shift = m["shift"].as_i64().unwrap() as i32;
            let ints: Vec<f64> = m["integers"].as_array().unwrap().iter().flat_map(|r| r.as_array().unwrap().iter().map(|x| x.as_f64().unwrap())).collect();
            let step = 2f64.powi(shift - f);
            let largest = data.iter().fold(0.0f64, |a, x| a.max(x.abs()));
            for (q, w) in ints.iter().zip(data) {
                let w = if w.abs() <= 1e-12 * largest { 0.0 } else { *w };
                assert!((q * step - w).abs() <= step / 2.0 + 1e-300, "{precision:?} {name}: {q} × {step} vs {w}");
            }
        }
        let dir = scratch(&format!("{precision:?}"));
        write_all(&dir, &export_text(doc, ExportFormat::C, precision).unwrap());
        gcc(&dir, &["-c", "polewright_controller.c", "-o", "controller.o"]);
        let _ = std::fs::remove_dir_all(&dir);
    }
    // A dynamic range the format cannot hold with one shift is refused, naming the entry.
    let belt = std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/belt-axis-digital.json")).unwrap();
    match export_text(&belt, ExportFormat::C, Precision::Q15) {
        Err(polewright::design::export::ExportFailure::Export(e)) => {
            assert!(e.to_string().contains("below the resolution of Q15"), "{e}")
        }
        other => panic!("{other:?}"),
    }
}
