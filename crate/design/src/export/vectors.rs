//! Test vectors: the loop simulation (`crate::loop_sim`) of the exported controller, with the
//! exported numbers, on the design's own scenario (initial state, reference and load steps,
//! actuator limits; no measurement noise), recorded sample by sample as the controller sees
//! it: the measurement and reference it reads, the integrator state it starts the sample with,
//! the estimate it uses and the saturated command it returns. A firmware port that reproduces
//! the commands runs the controller that was simulated. When the scenario stays within the
//! actuator limits it is scaled so that the largest command reaches twice its limit (said in
//! the file), so that the vectors exercise saturation.
//!
//! CSV (RFC 4180), the header lines first as `#`-led quoted cells, then one row per sample:
//! `k, t, measurement…, reference…, integrator…, estimate…, command…`.

use nalgebra::{DMatrix, DVector};

use super::text::{csv_cell, rust_f64};
use super::{Controller, ExportError, ExportFile, Tracking};
use crate::check::CheckedDesign;
use crate::controller::AntiWindup;
use crate::loop_sim::{simulate_sampled_loop, LoopController, LoopScenario, Noise, TrackingLaw};

/// Samples in a set of test vectors, at most.
pub const MAX_VECTOR_SAMPLES: usize = 400;

fn matrix(c: &Controller, name: &str) -> Option<DMatrix<f64>> {
    c.matrix(name).map(super::NamedMatrix::dense)
}

fn not_available(why: &str) -> ExportError {
    ExportError::NotAvailable { what: "test vectors".into(), why: why.into() }
}

/// The load's input matrix in the sampled plant's terms: `Γ_E` of a continuous `E` (the
/// zero-order hold of `(A, E)`), or `E` itself for a plant given in discrete time; `None`
/// (the load at the plant input) without `E`.
fn sampled_disturbance_input(design: &CheckedDesign, t: f64) -> Result<Option<DMatrix<f64>>, ExportError> {
    let Some(e) = &design.controller.scenario.disturbance_input else {
        return Ok(None);
    };
    if design.controller.plant_sample_time.is_some() {
        return Ok(Some(e.clone()));
    }
    let (_, gamma_e) = crate::linalg::expm::try_zero_order_hold(design.request.plant.a(), e, t).map_err(|err| not_available(&err.to_string()))?;
    Ok(Some(gamma_e))
}

pub(super) fn file(c: &Controller, head: &[String], design: &CheckedDesign) -> Result<ExportFile, ExportError> {
    let t = c.sample_time.ok_or_else(|| not_available("the design is continuous; give a sample time so that there is a controller step to test"))?;
    let (Some(phi), Some(gamma), Some(k)) = (matrix(c, "Phi"), matrix(c, "Gamma"), matrix(c, "K")) else {
        return Err(not_available("the sampled plant is missing"));
    };
    let (n, m) = (phi.nrows(), gamma.ncols());
    let cm = matrix(c, "C").unwrap_or_else(|| DMatrix::zeros(0, n));
    let dm = matrix(c, "D").unwrap_or_else(|| DMatrix::zeros(0, m));
    let tracking = match c.tracking {
        Tracking::None => TrackingLaw::None,
        Tracking::Feedforward => {
            TrackingLaw::Feedforward { nx: matrix(c, "N_x").ok_or_else(|| not_available("N_x is missing"))?, nu: matrix(c, "N_u").ok_or_else(|| not_available("N_u is missing"))? }
        }
        Tracking::Integral => {
            TrackingLaw::Integral { ki: matrix(c, "K_i").ok_or_else(|| not_available("K_i is missing"))?, anti_windup: c.anti_windup, feedforward: matrix(c, "N_x").zip(matrix(c, "N_u")) }
        }
    };
    let ctrl = LoopController {
        k,
        k_delay: matrix(c, "K_u"),
        observer: matrix(c, "L"),
        observer_form: c.observer_form.unwrap_or(crate::controller::ObserverForm::Predictor),
        current_gain: matrix(c, "L_c"),
        tracking,
        tracked_outputs: c.tracked.clone(),
        sample_time: Some(t),
    };
    let spec = &design.controller.scenario;
    let tracking_on = c.tracking != Tracking::None;
    let q = c.tracked.len();
    let x0 = match (&design.request.initial_state, tracking_on) {
        (Some(x), _) => x.clone(),
        (None, true) => vec![0.0; n],
        (None, false) => (0..n).map(|i| if i == 0 { 1.0 } else { 0.0 }).collect(),
    };
    let reference = if tracking_on {
        if spec.reference.is_empty() {
            vec![1.0; q]
        } else {
            spec.reference.clone()
        }
    } else {
        Vec::new()
    };
    let scenario = LoopScenario {
        x0: DVector::from_vec(x0),
        xhat0: spec.initial_estimate.clone().map(DVector::from_vec),
        duration: t * MAX_VECTOR_SAMPLES as f64,
        reference,
        reference_time: spec.reference_time,
        disturbance: spec.disturbance.clone(),
        disturbance_time: spec.disturbance_time,
        disturbance_input: sampled_disturbance_input(design, t)?,
        noise: Noise::None,
        limits: c.limits.clone(),
        continuous_step: None,
    };
    let mut lr = simulate_sampled_loop(&phi, &gamma, &cm, &dm, &ctrl, &scenario).map_err(|e| not_available(&e.to_string()))?;
    // Vectors should exercise saturation: when the design's own scenario stays within the
    // limits, it is scaled (the loop is linear until an input saturates) so that the largest
    // command reaches twice its limit, and the file says so.
    let peak_ratio = (0..m).filter_map(|i| c.limits[i].map(|l| lr.commanded[i].iter().fold(0.0f64, |a, v| a.max(v.abs())) / l)).fold(0.0f64, f64::max);
    let mut scaled = None;
    if peak_ratio > 0.0 && peak_ratio <= 1.0 && peak_ratio.is_finite() {
        let factor = 2.0 / peak_ratio;
        let mut sc = scenario.clone();
        sc.x0 *= factor;
        sc.xhat0 = sc.xhat0.map(|x| x * factor);
        sc.reference.iter_mut().for_each(|r| *r *= factor);
        sc.disturbance.iter_mut().for_each(|w| *w *= factor);
        lr = simulate_sampled_loop(&phi, &gamma, &cm, &dm, &ctrl, &sc).map_err(|e| not_available(&e.to_string()))?;
        scaled = Some(factor);
    }
    let measured: &Vec<Vec<f64>> = if c.observer_form.is_some() { &lr.measured } else { &lr.states };
    let samples = lr.time.len();
    let saturated = (0..samples).any(|k| (0..m).any(|i| c.limits[i].is_some_and(|l| lr.commanded[i][k].abs() > l)));
    let integrating = c.tracking == Tracking::Integral && lr.integrator.iter().flatten().any(|v| *v != 0.0);
    let mut out = String::new();
    for l in head {
        out.push_str(&csv_cell(&format!("# {l}")));
        out.push_str("\r\n");
    }
    out.push_str(&csv_cell(&format!(
        "# Test vectors: {samples} samples of the loop simulation with these numbers{}; saturation {}; integrator {}. Start from pw_controller_init (zero memory{}), feed measurement and reference of each row, expect its command (and estimate); the integrator column is the memory at the start of the sample.",
        scaled.map_or(String::new(), |f| format!(" (the design's scenario — initial state, reference and load — scaled by {} so that an input reaches saturation)", crate::fmt_num(f))),
        if saturated { "reached" } else { "not reached" },
        match (c.tracking, c.anti_windup) {
            (Tracking::Integral, AntiWindup::Clamp) if integrating => "active (clamp anti-windup)",
            (Tracking::Integral, _) if integrating => "active",
            (Tracking::Integral, _) => "present, not exercised",
            _ => "none",
        },
        if spec.initial_estimate.is_some() { ", then set the estimate to the design's initial estimate" } else { "" }
    )));
    out.push_str("\r\n");
    let mut cols = vec!["k".to_string(), "t".to_string()];
    let meas_len = measured.len();
    cols.extend((0..meas_len).map(|i| format!("measurement_{i}")));
    cols.extend((0..q).map(|i| format!("reference_{i}")));
    let qi = if c.tracking == Tracking::Integral { q } else { 0 };
    cols.extend((0..qi).map(|i| format!("integrator_{i}")));
    cols.extend((0..n).map(|i| format!("estimate_{i}")));
    cols.extend((0..m).map(|i| format!("command_{i}")));
    out.push_str(&cols.join(","));
    out.push_str("\r\n");
    for k in 0..samples {
        let mut row = vec![k.to_string(), rust_f64(lr.time[k])];
        row.extend(measured.iter().map(|s| rust_f64(s[k])));
        row.extend(lr.reference.iter().map(|s| rust_f64(s[k])));
        row.extend(lr.integrator.iter().take(qi).map(|s| rust_f64(s[k])));
        row.extend(lr.estimates.iter().map(|s| rust_f64(s[k])));
        row.extend((0..m).map(|i| rust_f64(saturate(lr.commanded[i][k], c.limits[i]))));
        out.push_str(&row.join(","));
        out.push_str("\r\n");
    }
    Ok(ExportFile { name: "polewright_vectors.csv".into(), contents: out })
}

fn saturate(v: f64, limit: Option<f64>) -> f64 {
    match limit {
        Some(l) => v.clamp(-l, l),
        None => v,
    }
}
