//! Fixed-point exports (Q15, Q31): every matrix as integers with one power-of-two shift
//! ([`crate::precision::quantise`]), the shift stated beside it, and the closed loop re-checked
//! with the quantised numbers. Refused, with the reason, when a matrix's entries span more than
//! the format holds with one shift, or when the quantised loop is not stable. Coefficients only:
//! the controller step is exported in floating point (its fixed-point arithmetic — accumulator
//! widths, signal scaling — depends on the target's signal ranges, which the design does not
//! know).

use nalgebra::DMatrix;

use super::text::{c_double, comment_line, csv_cell};
use super::{Controller, ExportError, ExportFile, ExportFormat, NamedMatrix, Tracking};
use crate::controller::{delay_augmented, integral_augmented};
use crate::precision::{quantise, recheck, PrecisionCheck, QMatrix};

/// A controller in a fixed-point format.
pub(super) struct Fixed {
    pub bits: u32,
    pub mats: Vec<(NamedMatrix, QMatrix)>,
    /// `(loop, check)`: the controller loop with the quantised gains, the observer with its
    /// quantised model.
    pub checks: Vec<(&'static str, PrecisionCheck)>,
}

fn refused(bits: u32, why: String) -> ExportError {
    ExportError::NotAvailable { what: format!("Q{}", bits - 1), why }
}

/// Quantises every matrix and re-checks the loops.
pub(super) fn fixed(c: &Controller, bits: u32) -> Result<Fixed, ExportError> {
    let t = c.sample_time.ok_or_else(|| refused(bits, "a continuous design has no sampled coefficients; give a sample time".into()))?;
    let mut mats = Vec::with_capacity(c.matrices.len());
    for m in &c.matrices {
        let q = quantise(&m.dense(), bits).map_err(|e| refused(bits, format!("{}: {e}", m.name)))?;
        mats.push((m.clone(), q));
    }
    let get = |name: &str| mats.iter().find(|(m, _)| m.name == name).map(|(m, q)| (m.dense(), q.values.clone()));
    let (Some((phi, _)), Some((gamma, _)), Some((k, kq))) = (get("Phi"), get("Gamma"), get("K")) else {
        return Err(refused(bits, "the sampled plant is missing".into()));
    };
    // The design pair as the run builds it: plant, delay states, integrators.
    let (mut a, mut b) = (phi.clone(), gamma.clone());
    let (mut g, mut gq) = (k, kq);
    if let Some((ku, kuq)) = get("K_u") {
        let (pa, pb) = delay_augmented(&a, &b);
        a = pa;
        b = pb;
        g = concat(&g, &ku);
        gq = concat(&gq, &kuq);
    }
    if let (Tracking::Integral, Some((ki, kiq)), Some((cm, _)), Some((dm, _))) = (c.tracking, get("K_i"), get("C"), get("D")) {
        let ct = DMatrix::from_fn(c.tracked.len(), a.nrows(), |i, j| if j < cm.ncols() { cm[(c.tracked[i], j)] } else { 0.0 });
        let dt = DMatrix::from_fn(c.tracked.len(), dm.ncols(), |i, j| dm[(c.tracked[i], j)]);
        let (ia, ib) = integral_augmented(&a, &b, &ct, &dt, Some(t));
        a = ia;
        b = ib;
        g = concat(&g, &ki);
        gq = concat(&gq, &kiq);
    }
    let name = format!("Q{}", bits - 1);
    let mut checks = vec![("controller", recheck(&(&a - &b * &g), &(&a - &b * &gq), t).map_err(|e| refused(bits, e.to_string()))?)];
    if let (Some((l, lq)), Some((cm, cq)), Some((_, phiq))) = (get("L"), get("C"), get("Phi")) {
        checks.push(("observer", recheck(&(&phi - &l * &cm), &(&phiq - &lq * &cq), t).map_err(|e| refused(bits, e.to_string()))?));
    }
    if let Some((loop_name, ch)) = checks.iter().find(|(_, ch)| ch.designed_stable && !ch.stable) {
        let worst = ch.poles.iter().map(|p| p.rounded.norm()).fold(0.0, f64::max);
        return Err(refused(bits, format!("with the {name} coefficients the {loop_name} loop is unstable (a pole at |z| = {worst}); use Q31 or floating point")));
    }
    Ok(Fixed { bits, mats, checks })
}

fn concat(a: &DMatrix<f64>, b: &DMatrix<f64>) -> DMatrix<f64> {
    let mut out = DMatrix::zeros(a.nrows(), a.ncols() + b.ncols());
    out.columns_mut(0, a.ncols()).copy_from(a);
    out.columns_mut(a.ncols(), b.ncols()).copy_from(b);
    out
}

/// The header lines of a fixed-point export.
pub(super) fn header(f: &Fixed) -> Vec<String> {
    let frac = f.bits - 1;
    let mut out = vec![format!(
        "Fixed point Q{frac}: value = integer x 2^(shift - {frac}), one shift per matrix (the smallest that keeps the largest entry within full scale): {}.",
        f.mats.iter().map(|(m, q)| format!("{} {}", m.name, q.shift)).collect::<Vec<_>>().join(", ")
    )];
    for (name, ch) in &f.checks {
        out.push(format!(
            "Q{frac} re-check, {name} loop: poles move by at most {:e}; damping kept to {:.4} of its design value; stable: {}.",
            ch.max_distance,
            ch.worst_damping_fraction,
            if ch.stable { "yes" } else { "no" }
        ));
    }
    out.push("Coefficients only: the controller step is exported in floating point (double or float).".into());
    out
}

/// The files of a fixed-point export.
pub(super) fn files(c: &Controller, head: &[String], f: &Fixed, format: ExportFormat) -> Result<Vec<ExportFile>, ExportError> {
    let ty = if f.bits == 16 { ("int16_t", "i16") } else { ("int32_t", "i32") };
    Ok(match format {
        ExportFormat::C => {
            let mut h = String::from("/*\n");
            for l in head {
                h.push_str(&format!(" * {}\n", comment_line(l)));
            }
            h.push_str(" */\n#ifndef POLEWRIGHT_CONTROLLER_H\n#define POLEWRIGHT_CONTROLLER_H\n\n#include <stdint.h>\n\n");
            h.push_str(&format!("typedef {} pw_q;\n#define PW_Q_FRACTION_BITS {}\n\n", ty.0, f.bits - 1));
            let mut s = String::from("/*\n");
            for l in head {
                s.push_str(&format!(" * {}\n", comment_line(l)));
            }
            s.push_str(" */\n#include \"polewright_controller.h\"\n\n");
            for (m, q) in &f.mats {
                let id = m.name.to_uppercase();
                h.push_str(&format!(
                    "/* {} */\n#define PW_{id}_ROWS {}\n#define PW_{id}_COLS {}\n#define PW_{id}_SHIFT {}\nextern const pw_q PW_{id}[{}];\n\n",
                    comment_line(m.description),
                    m.rows,
                    m.cols,
                    q.shift,
                    q.ints.len()
                ));
                s.push_str(&format!("const pw_q PW_{id}[{}] = {{\n", q.ints.len()));
                for row in q.ints.chunks(m.cols.max(1)) {
                    let lits: Vec<String> = row.iter().map(|v| if f.bits == 32 && *v == -(1i64 << 31) { "(-2147483647 - 1)".to_string() } else { v.to_string() }).collect();
                    s.push_str(&format!("    {},\n", lits.join(", ")));
                }
                s.push_str("};\n\n");
            }
            h.push_str(&format!("#define PW_SAMPLE_TIME {}\n\n#endif /* POLEWRIGHT_CONTROLLER_H */\n", c_double(c.sample_time.unwrap_or(0.0))));
            vec![ExportFile { name: "polewright_controller.h".into(), contents: h }, ExportFile { name: "polewright_controller.c".into(), contents: s }]
        }
        ExportFormat::Rust => {
            let mut out = String::new();
            for l in head {
                out.push_str(&format!("// {}\n", comment_line(l)));
            }
            out.push_str(&format!("#![allow(dead_code)]\n\npub const FRACTION_BITS: i32 = {};\n", f.bits - 1));
            for (m, q) in &f.mats {
                let id = m.name.to_uppercase();
                out.push_str(&format!(
                    "\n/// {} ({} x {}, row-major), value = integer x 2^(SHIFT - FRACTION_BITS).\npub const {id}_SHIFT: i32 = {};\npub const {id}: [{}; {}] = [{}];\n",
                    m.description,
                    m.rows,
                    m.cols,
                    q.shift,
                    ty.1,
                    q.ints.len(),
                    q.ints.iter().map(|v| v.to_string()).collect::<Vec<_>>().join(", ")
                ));
            }
            vec![ExportFile { name: "polewright_controller.rs".into(), contents: out }]
        }
        ExportFormat::Json => {
            let matrices: serde_json::Map<String, serde_json::Value> = f
                .mats
                .iter()
                .map(|(m, q)| {
                    (
                        m.name.to_string(),
                        serde_json::json!({"description": m.description, "rows": m.rows, "cols": m.cols, "shift": q.shift, "integers": q.ints.chunks(m.cols.max(1)).collect::<Vec<_>>()}),
                    )
                })
                .collect();
            let checks: Vec<serde_json::Value> = f
                .checks
                .iter()
                .map(|(name, ch)| {
                    serde_json::json!({"loop": name, "max_pole_move": ch.max_distance, "worst_damping_fraction": ch.worst_damping_fraction, "stable": ch.stable,
                    "poles": ch.poles.iter().map(|p| [[p.designed.re, p.designed.im], [p.rounded.re, p.rounded.im]]).collect::<Vec<_>>()})
                })
                .collect();
            let doc = serde_json::json!({"format": "polewright.controller", "version": 1, "header": head, "number_format": format!("Q{}", f.bits - 1), "fraction_bits": f.bits - 1,
                "document_sha256": c.document_sha256, "sample_time": c.sample_time, "matrices": matrices, "recheck": checks});
            vec![ExportFile { name: "polewright_controller.json".into(), contents: serde_json::to_string_pretty(&doc).unwrap_or_default() + "\n" }]
        }
        ExportFormat::Csv => {
            let mut out = String::new();
            for l in head {
                out.push_str(&csv_cell(&format!("# {l}")));
                out.push_str("\r\n");
            }
            for (m, q) in &f.mats {
                out.push_str(&format!("{},{},{},{}\r\n", csv_cell(m.name), m.rows, m.cols, q.shift));
                for row in q.ints.chunks(m.cols.max(1)) {
                    out.push_str(&row.iter().map(|v| v.to_string()).collect::<Vec<_>>().join(","));
                    out.push_str("\r\n");
                }
            }
            vec![ExportFile { name: "polewright_controller.csv".into(), contents: out }]
        }
        ExportFormat::Vectors => return Err(refused(f.bits, "test vectors are in floating point; choose double or float".into())),
    })
}
