//! The C99 export: `polewright_controller.h` (dimensions, declarations, the step's state and
//! prototype) and `polewright_controller.c` (the matrices as `static const`-backed arrays and
//! one dependency-free controller step written to the loop simulation's difference equations).
//! Compiles with `gcc -std=c99 -Wall -Wextra -Werror -pedantic` (checked in the test suite).

use super::text::{c_double, c_float, comment_line};
use super::{Controller, ExportFile, NamedMatrix, Precision, Tracking};
use crate::controller::{AntiWindup, ObserverForm};

pub(super) fn files(c: &Controller, head: &[String], precision: Precision) -> Vec<ExportFile> {
    vec![
        ExportFile { name: "polewright_controller.h".into(), contents: header_file(c, head, precision) },
        ExportFile { name: "polewright_controller.c".into(), contents: source_file(c, head, precision) },
    ]
}

fn comment(head: &[String]) -> String {
    let mut out = String::from("/*\n");
    for l in head {
        out.push_str(&format!(" * {}\n", comment_line(l)));
    }
    out.push_str(" */\n");
    out
}

fn real(precision: Precision) -> &'static str {
    match precision {
        Precision::Float => "float",
        _ => "double",
    }
}

fn literal(precision: Precision, v: f64) -> String {
    match precision {
        Precision::Float => c_float(v),
        _ => c_double(v),
    }
}

/// Whether the controller has a step to export (a digital design).
fn has_step(c: &Controller) -> bool {
    c.sample_time.is_some() && c.matrix("Phi").is_some()
}

fn header_file(c: &Controller, head: &[String], precision: Precision) -> String {
    let mut out = comment(head);
    out.push_str("#ifndef POLEWRIGHT_CONTROLLER_H\n#define POLEWRIGHT_CONTROLLER_H\n\n");
    out.push_str(&format!("typedef {} pw_real;\n\n", real(precision)));
    let measured = if c.observer_form.is_some() { c.outputs() } else { c.states() };
    for (name, value) in [("PW_STATES", c.states()), ("PW_INPUTS", c.inputs()), ("PW_OUTPUTS", c.outputs()), ("PW_TRACKED", c.tracked.len()), ("PW_MEASURED", measured)] {
        out.push_str(&format!("#define {name} {value}\n"));
    }
    // C99 has no zero-length arrays: buffers sized by these counts take at least one element.
    out.push_str("#define PW_TRACKED_ALLOC (PW_TRACKED > 0 ? PW_TRACKED : 1)\n#define PW_OUTPUTS_ALLOC (PW_OUTPUTS > 0 ? PW_OUTPUTS : 1)\n\n");
    for m in &c.matrices {
        out.push_str(&format!(
            "/* {} */\n#define PW_{}_ROWS {}\n#define PW_{}_COLS {}\nextern const pw_real PW_{}[{}];\n\n",
            comment_line(m.description),
            ident(m),
            m.rows,
            ident(m),
            m.cols,
            ident(m),
            m.data.len()
        ));
    }
    out.push_str("/* Every matrix also as a matrix instance {rows, cols, data}, the layout embedded linear-algebra\n * libraries take (copy the fields into the library's own struct). */\ntypedef struct {\n    unsigned short rows;\n    unsigned short cols;\n    const pw_real *data;\n} pw_matrix;\n\n");
    for m in &c.matrices {
        out.push_str(&format!("extern const pw_matrix PW_{}_MATRIX;\n", ident(m)));
    }
    out.push_str("\n/* Actuator limits: PW_HAS_LIMIT[i] is 1 when input i is limited to +/-PW_LIMIT[i]. */\nextern const int PW_HAS_LIMIT[PW_INPUTS];\nextern const pw_real PW_LIMIT[PW_INPUTS];\n\n");
    if has_step(c) {
        out.push_str(&format!("#define PW_SAMPLE_TIME {}\n\n", literal(precision, c.sample_time.unwrap_or(0.0))));
        out.push_str(
            "/* The controller's memory between samples; set it with pw_controller_init. */\n\
             typedef struct {\n    pw_real xhat[PW_STATES];      /* observer estimate (unused without an observer) */\n    pw_real z[PW_TRACKED_ALLOC];  /* integrators of the tracking error */\n    pw_real u_prev[PW_INPUTS];    /* command computed at the previous sample (computation delay) */\n    pw_real u_held[PW_INPUTS];    /* input applied over the interval that ends now */\n} pw_controller_state;\n\n\
             void pw_controller_init(pw_controller_state *s);\n\n\
             /* One sample. measurement: the outputs y[k] (with an observer) or the full state x[k]\n * (without); reference: r[k] of the tracked outputs (ignored without tracking). command:\n * the saturated input computed now, applied now, or at the next sample with a computation\n * delay. estimate (may be NULL): the state estimate used at this sample. */\n\
             void pw_controller_step(pw_controller_state *s, const pw_real measurement[PW_MEASURED], const pw_real reference[PW_TRACKED_ALLOC], pw_real command[PW_INPUTS], pw_real estimate[PW_STATES]);\n\n",
        );
    } else {
        out.push_str("/* A continuous-time design: only its gains are exported. Give a sample time to export a\n * controller step. */\n\n");
    }
    out.push_str("#endif /* POLEWRIGHT_CONTROLLER_H */\n");
    out
}

fn ident(m: &NamedMatrix) -> String {
    m.name.to_uppercase()
}

fn source_file(c: &Controller, head: &[String], precision: Precision) -> String {
    let mut out = comment(head);
    out.push_str("#include \"polewright_controller.h\"\n\n");
    for m in &c.matrices {
        out.push_str(&format!("const pw_real PW_{}[{}] = {{\n", ident(m), m.data.len()));
        for row in m.data.chunks(m.cols.max(1)) {
            out.push_str(&format!("    {},\n", row.iter().map(|v| literal(precision, *v)).collect::<Vec<_>>().join(", ")));
        }
        out.push_str("};\n");
        out.push_str(&format!("const pw_matrix PW_{id}_MATRIX = {{ PW_{id}_ROWS, PW_{id}_COLS, PW_{id} }};\n\n", id = ident(m)));
    }
    out.push_str(&format!("const int PW_HAS_LIMIT[PW_INPUTS] = {{ {} }};\n", c.limits.iter().map(|l| if l.is_some() { "1" } else { "0" }).collect::<Vec<_>>().join(", ")));
    out.push_str(&format!("const pw_real PW_LIMIT[PW_INPUTS] = {{ {} }};\n\n", c.limits.iter().map(|l| literal(precision, l.unwrap_or(0.0))).collect::<Vec<_>>().join(", ")));
    if has_step(c) {
        out.push_str(&step_source(c, precision));
    }
    out
}

/// `out[i] (op)= Σ_j M[i][j] v[j]` as a C loop.
fn mat_vec(m: &str, v: &str, out: &str, op: &str) -> String {
    format!("    for (i = 0; i < PW_{m}_ROWS; ++i) {{\n        for (j = 0; j < PW_{m}_COLS; ++j) {{\n            {out}[i] {op}= PW_{m}[i * PW_{m}_COLS + j] * {v}[j];\n        }}\n    }}\n")
}

fn step_source(c: &Controller, precision: Precision) -> String {
    let t = literal(precision, c.sample_time.unwrap_or(0.0));
    let mut s = String::from("void pw_controller_init(pw_controller_state *s)\n{\n    int i;\n    for (i = 0; i < PW_STATES; ++i) s->xhat[i] = 0;\n    for (i = 0; i < PW_TRACKED_ALLOC; ++i) s->z[i] = 0;\n    for (i = 0; i < PW_INPUTS; ++i) { s->u_prev[i] = 0; s->u_held[i] = 0; }\n}\n\n");
    s.push_str("void pw_controller_step(pw_controller_state *s, const pw_real measurement[PW_MEASURED], const pw_real reference[PW_TRACKED_ALLOC], pw_real command[PW_INPUTS], pw_real estimate[PW_STATES])\n{\n");
    s.push_str("    pw_real est[PW_STATES], cmd[PW_INPUTS], u[PW_INPUTS], ua[PW_INPUTS], y[PW_OUTPUTS_ALLOC], innov[PW_OUTPUTS_ALLOC], dx[PW_STATES], nxt[PW_STATES];\n    int i, j, clipped = 0;\n    (void)reference; (void)y; (void)innov; (void)dx; (void)nxt; (void)j;\n");
    // 1. The measured outputs (computed from the state when the state is measured).
    match c.observer_form {
        Some(_) => s.push_str("    for (i = 0; i < PW_OUTPUTS; ++i) y[i] = measurement[i];\n"),
        None if c.outputs() > 0 => {
            s.push_str("    for (i = 0; i < PW_OUTPUTS; ++i) y[i] = 0;\n");
            s.push_str(&mat_vec("C", "measurement", "y", "+"));
            s.push_str(&mat_vec("D", "s->u_held", "y", "+"));
        }
        None => {}
    }
    // 2. The estimate.
    match c.observer_form {
        None => s.push_str("    for (i = 0; i < PW_STATES; ++i) est[i] = measurement[i];\n"),
        Some(form) => {
            s.push_str("    for (i = 0; i < PW_OUTPUTS; ++i) innov[i] = y[i];\n");
            s.push_str(&mat_vec("C", "s->xhat", "innov", "-"));
            s.push_str(&mat_vec("D", "s->u_held", "innov", "-"));
            s.push_str("    for (i = 0; i < PW_STATES; ++i) est[i] = s->xhat[i];\n");
            if form == ObserverForm::Current {
                s.push_str(&mat_vec("L_C", "innov", "est", "+"));
            }
        }
    }
    // 3. The command.
    s.push_str("    for (i = 0; i < PW_INPUTS; ++i) cmd[i] = 0;\n");
    // The reference fed forward (feedforward, or integral action with it: two degrees of
    // freedom): u = N_u r − K (x̂ − N_x r); else u = −K x̂. Integral action adds − K_i z.
    if c.matrix("N_x").is_some() {
        s.push_str("    for (i = 0; i < PW_STATES; ++i) dx[i] = est[i];\n");
        s.push_str(&mat_vec("N_X", "reference", "dx", "-"));
        s.push_str(&mat_vec("N_U", "reference", "cmd", "+"));
        s.push_str(&mat_vec("K", "dx", "cmd", "-"));
    } else {
        s.push_str(&mat_vec("K", "est", "cmd", "-"));
    }
    if c.tracking == Tracking::Integral {
        s.push_str(&mat_vec("K_I", "s->z", "cmd", "-"));
    }
    if c.computation_delay {
        s.push_str("    for (i = 0; i < PW_INPUTS; ++i) ua[i] = s->u_prev[i];\n");
        if c.matrix("N_u").is_some() {
            s.push_str(&mat_vec("N_U", "reference", "ua", "-"));
        }
        s.push_str(&mat_vec("K_U", "ua", "cmd", "-"));
    }
    // 4. Saturation; the input applied over the coming interval.
    s.push_str("    for (i = 0; i < PW_INPUTS; ++i) {\n        u[i] = cmd[i];\n        if (PW_HAS_LIMIT[i] && u[i] > PW_LIMIT[i]) { u[i] = PW_LIMIT[i]; clipped = 1; }\n        if (PW_HAS_LIMIT[i] && u[i] < -PW_LIMIT[i]) { u[i] = -PW_LIMIT[i]; clipped = 1; }\n    }\n    (void)clipped;\n");
    s.push_str(if c.computation_delay { "    for (i = 0; i < PW_INPUTS; ++i) ua[i] = s->u_prev[i];\n" } else { "    for (i = 0; i < PW_INPUTS; ++i) ua[i] = u[i];\n" });
    // 5. Integrators.
    if c.tracking == Tracking::Integral {
        let tracked: Vec<String> = c.tracked.iter().map(|i| i.to_string()).collect();
        s.push_str(&format!(
            "    {{\n        static const int tracked[PW_TRACKED] = {{ {} }};\n        pw_real e[PW_TRACKED];\n        for (i = 0; i < PW_TRACKED; ++i) e[i] = reference[i] - y[tracked[i]];\n",
            tracked.join(", ")
        ));
        match c.anti_windup {
            AntiWindup::Clamp => s.push_str(&format!("        if (!clipped) for (i = 0; i < PW_TRACKED; ++i) s->z[i] += {t} * e[i];\n")),
            AntiWindup::BackCalculation { time_constant } => {
                // du has its own PW_INPUTS entries (dx has PW_STATES, fewer with more inputs).
                s.push_str("        pw_real du[PW_INPUTS];\n        for (i = 0; i < PW_INPUTS; ++i) du[i] = u[i] - cmd[i];\n");
                s.push_str(&format!("        for (i = 0; i < PW_TRACKED; ++i) {{\n            pw_real back = 0;\n            for (j = 0; j < PW_INPUTS; ++j) back += PW_K_I_PINV[i * PW_INPUTS + j] * du[j];\n            s->z[i] += {t} * (e[i] - back / {});\n        }}\n", literal(precision, time_constant)));
            }
            AntiWindup::None => s.push_str(&format!("        for (i = 0; i < PW_TRACKED; ++i) s->z[i] += {t} * e[i];\n")),
        }
        s.push_str("    }\n");
    }
    // 6. Observer update.
    match c.observer_form {
        None => {}
        Some(ObserverForm::Predictor) => {
            s.push_str("    for (i = 0; i < PW_STATES; ++i) nxt[i] = 0;\n");
            s.push_str(&mat_vec("PHI", "s->xhat", "nxt", "+"));
            s.push_str(&mat_vec("GAMMA", "ua", "nxt", "+"));
            s.push_str(&mat_vec("L", "innov", "nxt", "+"));
            s.push_str("    for (i = 0; i < PW_STATES; ++i) s->xhat[i] = nxt[i];\n");
        }
        Some(ObserverForm::Current) => {
            s.push_str("    for (i = 0; i < PW_STATES; ++i) nxt[i] = 0;\n");
            s.push_str(&mat_vec("PHI", "est", "nxt", "+"));
            s.push_str(&mat_vec("GAMMA", "ua", "nxt", "+"));
            s.push_str("    for (i = 0; i < PW_STATES; ++i) s->xhat[i] = nxt[i];\n");
        }
    }
    // 7. Memory and outputs.
    s.push_str("    for (i = 0; i < PW_INPUTS; ++i) { s->u_held[i] = ua[i]; command[i] = u[i]; }\n");
    if c.computation_delay {
        s.push_str("    for (i = 0; i < PW_INPUTS; ++i) s->u_prev[i] = u[i];\n");
    }
    s.push_str("    if (estimate) for (i = 0; i < PW_STATES; ++i) estimate[i] = est[i];\n}\n");
    s
}
