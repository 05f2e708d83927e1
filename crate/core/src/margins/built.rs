//! The loop as built, broken at the plant input: the plant and the complete controller of
//! [`crate::loop_sim`] (observer in predictor or current form, integrators, computation delay).
//!
//! # Equation
//! The plant receives the injected input `u_in`; the controller runs as in firmware on the
//! measurements and on its **own** command (the observer, the delay line `K_u u_prev` and the
//! `D`-term of the innovation use the command the controller believes it applied). The loop
//! output is the negated applied command, so the loop closes with `u_in = −out` and `L` is
//! the loop transfer at the plant input. With the reference, the disturbance and the noise at
//! zero, and no input clipped, the sampled loop is (`y = C x + D h`, `h` the input applied over
//! the previous interval, `h_c` the controller's own):
//! - estimate `x̄ = x̂` (predictor), `x̂ + L_c (y − C x̂ − D h_c)` (current) or `x` (no observer);
//! - command `u = −K x̄ − K_i z − K_u u_prev`, applied `u_a = u_prev` (delay) or `u`;
//! - `z⁺ = z − T y_t`; `x̂⁺ = Φ x̄ + Γ u_a` (current) or `Φ x̂ + Γ u_a + L (y − C x̂ − D h_c)`;
//! - `x⁺ = Φ x + Γ u_in`, `h⁺ = u_in`, `h_c⁺ = u_a`, `u_prev⁺ = u`; output `−u_a`.
//!
//! The continuous loop: `x' = A x + B u_in`, `y = C x + D u_in`, `u = −K x̄ − K_i z`,
//! `x̂' = A x̂ + B u + L (y − C x̂ − D u)`, `z' = −y_t`; output `−u`.
//!
//! # Method
//! The step (or derivative) above is linear in `(state, u_in)`; the model's matrices are its
//! columns, obtained by applying it to unit vectors, so the loop model follows the same
//! equations as the simulation by construction. Closing it reproduces the closed-loop poles
//! (checked in the tests).
//!
//! # Cost
//! `(s + m)` applications of an `O(s²)` step, `s ≤ 2n + q + 3m` states: `O(s³)`.
//!
//! # Failure modes
//! Inconsistent sizes give [`MarginError::Size`].

use nalgebra::{DMatrix, DVector};

use super::{LoopModel, MarginError};
use crate::controller::ObserverForm;
use crate::loop_sim::{LoopController, TrackingLaw};

/// The plant in the controller's domain: `(A, B)` for a continuous controller, `(Φ, Γ)` for a
/// sampled one, with its outputs `(C, D)`.
#[derive(Debug, Clone, Copy)]
pub struct PlantMatrices<'a> {
    pub a: &'a DMatrix<f64>,
    pub b: &'a DMatrix<f64>,
    pub c: &'a DMatrix<f64>,
    pub d: &'a DMatrix<f64>,
}

/// Offsets of the loop's state blocks.
struct Layout {
    n: usize,
    m: usize,
    xhat: Option<usize>,
    z: usize,
    qi: usize,
    u_prev: Option<usize>,
    h: Option<usize>,
    hc: Option<usize>,
    size: usize,
}

fn layout(p: &PlantMatrices, ctrl: &LoopController) -> Layout {
    let (n, m) = (p.a.nrows(), p.b.ncols());
    let sampled = ctrl.sample_time.is_some();
    let qi = if matches!(ctrl.tracking, TrackingLaw::Integral { .. }) { ctrl.tracked_outputs.len() } else { 0 };
    let feedthrough = sampled && p.d.iter().any(|v| *v != 0.0);
    let mut next = n;
    let mut take = |on: bool, k: usize| -> Option<usize> {
        on.then(|| {
            next += k;
            next - k
        })
    };
    let xhat = take(ctrl.observer.is_some(), n);
    let z = take(true, qi).unwrap_or(n);
    let u_prev = take(sampled && ctrl.k_delay.is_some(), m);
    let h = take(feedthrough, m);
    let hc = take(feedthrough && ctrl.observer.is_some(), m);
    Layout { n, m, xhat, z, qi, u_prev, h, hc, size: next }
}

fn block(v: &DVector<f64>, at: Option<usize>, len: usize) -> DVector<f64> {
    at.map_or_else(|| DVector::zeros(len), |o| v.rows(o, len).into_owned())
}

fn put(v: &mut DVector<f64>, at: Option<usize>, value: &DVector<f64>) {
    if let Some(o) = at {
        v.rows_mut(o, value.len()).copy_from(value);
    }
}

/// One step (sampled) or the derivative (continuous): `(next or derivative, output)`.
fn apply(p: &PlantMatrices, ctrl: &LoopController, lay: &Layout, s: &DVector<f64>, u_in: &DVector<f64>) -> (DVector<f64>, DVector<f64>) {
    let (n, m) = (lay.n, lay.m);
    let x = s.rows(0, n).into_owned();
    let xhat = block(s, lay.xhat, n);
    let z = block(s, Some(lay.z), lay.qi);
    let u_prev = block(s, lay.u_prev, m);
    let sampled = ctrl.sample_time.is_some();
    let h = if sampled { block(s, lay.h, m) } else { u_in.clone() };
    let y = p.c * &x + p.d * &h;
    let yt = DVector::from_iterator(ctrl.tracked_outputs.len(), ctrl.tracked_outputs.iter().map(|&i| y[i]));
    let estimate_of = |hc: &DVector<f64>| match (&ctrl.observer, ctrl.observer_form, &ctrl.current_gain) {
        (None, _, _) => x.clone(),
        (Some(_), ObserverForm::Current, Some(lc)) if sampled => &xhat + lc * (&y - p.c * &xhat - p.d * hc),
        _ => xhat.clone(),
    };
    let hc = if sampled { block(s, lay.hc, m) } else { DVector::zeros(m) };
    let est = estimate_of(&hc);
    let mut u = -(&ctrl.k * &est);
    if let TrackingLaw::Integral { ki, .. } = &ctrl.tracking {
        u -= ki * &z;
    }
    if let (Some(ku), Some(_)) = (&ctrl.k_delay, lay.u_prev) {
        u -= ku * &u_prev;
    }
    let u_a = if lay.u_prev.is_some() { u_prev.clone() } else { u.clone() };
    let mut next = DVector::<f64>::zeros(lay.size);
    if sampled {
        next.rows_mut(0, n).copy_from(&(p.a * &x + p.b * u_in));
        if lay.qi > 0 {
            put(&mut next, Some(lay.z), &(&z - yt * ctrl.sample_time.unwrap_or(0.0)));
        }
        if let Some(l) = &ctrl.observer {
            let xh = match (ctrl.observer_form, &ctrl.current_gain) {
                (ObserverForm::Current, Some(_)) => p.a * &est + p.b * &u_a,
                _ => p.a * &xhat + p.b * &u_a + l * (&y - p.c * &xhat - p.d * &hc),
            };
            put(&mut next, lay.xhat, &xh);
        }
        put(&mut next, lay.h, u_in);
        put(&mut next, lay.hc, &u_a);
        put(&mut next, lay.u_prev, &u);
    } else {
        next.rows_mut(0, n).copy_from(&(p.a * &x + p.b * u_in));
        if lay.qi > 0 {
            put(&mut next, Some(lay.z), &(-yt));
        }
        if let Some(l) = &ctrl.observer {
            put(&mut next, lay.xhat, &(p.a * &xhat + p.b * &u + l * (&y - p.c * &xhat - p.d * &u)));
        }
    }
    (next, -u_a)
}

/// The loop transfer at the plant input of `ctrl` on the plant `p`.
///
/// # Errors
/// [`MarginError::Size`] when the controller's matrices do not fit the plant.
pub fn plant_input_loop(p: &PlantMatrices, ctrl: &LoopController) -> Result<LoopModel, MarginError> {
    let (n, m, outputs) = (p.a.nrows(), p.b.ncols(), p.c.nrows());
    let bad = |what: &'static str| MarginError::Size { what };
    if p.a.ncols() != n || p.b.nrows() != n || p.c.ncols() != n || p.d.shape() != (outputs, m) {
        return Err(bad("plant"));
    }
    if ctrl.k.shape() != (m, n) {
        return Err(bad("state gain"));
    }
    if ctrl.observer.as_ref().is_some_and(|l| l.shape() != (n, outputs)) || ctrl.current_gain.as_ref().is_some_and(|l| l.shape() != (n, outputs)) {
        return Err(bad("observer gain"));
    }
    if ctrl.tracked_outputs.iter().any(|&i| i >= outputs) || ctrl.k_delay.as_ref().is_some_and(|k| k.shape() != (m, m)) {
        return Err(bad("tracking or delay"));
    }
    if let TrackingLaw::Integral { ki, .. } = &ctrl.tracking {
        if ki.shape() != (m, ctrl.tracked_outputs.len()) {
            return Err(bad("integral gain"));
        }
    }
    let lay = layout(p, ctrl);
    let mut a = DMatrix::<f64>::zeros(lay.size, lay.size);
    let mut c = DMatrix::<f64>::zeros(m, lay.size);
    let zero_u = DVector::<f64>::zeros(m);
    for j in 0..lay.size {
        let mut e = DVector::<f64>::zeros(lay.size);
        e[j] = 1.0;
        let (next, out) = apply(p, ctrl, &lay, &e, &zero_u);
        a.set_column(j, &next);
        c.set_column(j, &out);
    }
    let mut b = DMatrix::<f64>::zeros(lay.size, m);
    let mut d = DMatrix::<f64>::zeros(m, m);
    let zero_s = DVector::<f64>::zeros(lay.size);
    for j in 0..m {
        let mut e = DVector::<f64>::zeros(m);
        e[j] = 1.0;
        let (next, out) = apply(p, ctrl, &lay, &zero_s, &e);
        b.set_column(j, &next);
        d.set_column(j, &out);
    }
    Ok(LoopModel { a, b, c, d, sample_time: ctrl.sample_time })
}
