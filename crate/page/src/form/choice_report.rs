//! The report of how the poles were chosen: pattern or specification (with its region), LQR
//! (Riccati solution, weights), the fastest design within the limits.

use super::*;

// ---------------------------------------------------------------------------------------------
// How the poles were chosen.

/// Poles as text that [`parse_poles`] reads back to exactly the same values in the same order:
/// full precision ([`format_complex`]), an exact conjugate pair that follows each other written
/// once as `re±imj`.
pub fn exact_pole_text(poles: &[Complex64]) -> String {
    let mut parts = Vec::with_capacity(poles.len());
    let mut i = 0;
    while let Some(z) = poles.get(i) {
        match poles.get(i + 1) {
            Some(w) if z.im > 0.0 && *w == z.conj() => {
                parts.push(format_pole_list(&[*z, *w]));
                i += 2;
            }
            _ => {
                parts.push(format_complex(*z));
                i += 1;
            }
        }
    }
    parts.join(", ")
}

/// Poles rounded to `digits` significant digits (of each pole's magnitude, as a pole placed
/// on the map: [`crate::editing::round_pole`]) and written as [`exact_pole_text`] writes them,
/// so that the text reads back to the rounded values exactly. At the most digits
/// ([`crate::design::format::MAX_DIGITS`]) nothing is rounded: the text is exact.
pub fn typed_pole_text(poles: &[Complex64], digits: usize) -> String {
    if digits >= crate::design::format::MAX_DIGITS {
        return exact_pole_text(poles);
    }
    let rounded: Vec<Complex64> = poles.iter().map(|z| crate::editing::round_pole(*z, digits as i32)).collect();
    exact_pole_text(&rounded)
}

/// The region of a result, with its dominant pair at the corner (as the specification gives it).
pub(crate) fn region_of(r: &design::RegionResult) -> crate::patterns::Region {
    let zeta = r.min_damping;
    let corner = if zeta > 0.0 { r.min_decay_rate / zeta } else { 0.0 };
    let wn = r.natural_frequency.map_or(corner, |w| w.max(corner));
    let re = -zeta * wn;
    let im = wn * (1.0 - zeta * zeta).max(0.0).sqrt();
    crate::patterns::Region { min_damping: zeta, min_decay_rate: r.min_decay_rate, natural_frequency: r.natural_frequency, dominant_pair: [Complex64::new(re, im), Complex64::new(re, -im)] }
}

/// "5 % overshoot, 2 s settling at ±2 %": the specification behind a region, as far as the
/// result tells it. The overshoot follows from ζ exactly; the settling time from σ with the
/// design's band, and only when the description confirms that band.
pub(crate) fn specification_words(result: &DesignResult, region: &crate::patterns::Region) -> String {
    let zeta = region.min_damping;
    let mut parts = Vec::new();
    if let Ok(mp) = crate::patterns::overshoot_from_damping(zeta) {
        parts.push(format!("{} % overshoot", fmt_num(mp * 100.0)));
    }
    let band = result.simulation.band;
    let ts = -(band * (1.0 - zeta * zeta).sqrt()).ln() / region.min_decay_rate;
    let described = result.pole_choice.as_ref().is_some_and(|c| c.description.contains(&format!("{} s settling (±{} %", fmt_num(ts), fmt_num(band * 100.0))));
    if ts.is_finite() && described {
        parts.push(format!("{} s settling at ±{} %", fmt_num(ts), fmt_num(band * 100.0)));
    }
    parts.join(", ")
}

pub(crate) fn violation_text(v: &crate::patterns::RegionViolation, region: &crate::patterns::Region, sample_time: Option<f64>) -> String {
    use crate::patterns::ViolationKind;
    let pole = match sample_time {
        Some(t) => match z_to_s(v.pole, t) {
            Some(s) => format!("z = {} (s = ln z / T = {})", short_pole(v.pole), short_pole(s)),
            None => format!("z = {}", short_pole(v.pole)),
        },
        None => short_pole(v.pole),
    };
    match v.kind {
        ViolationKind::TooSlow { decay_rate } => format!("{pole}: decay rate {} 1/s, below σ = {} 1/s (outside the decay boundary)", fmt_num(decay_rate), fmt_num(region.min_decay_rate)),
        ViolationKind::TooLittleDamping { damping } => format!("{pole}: damping ratio {}, below ζ = {} (outside the damping boundary)", fmt_num(damping), fmt_num(region.min_damping)),
        ViolationKind::TooLowNaturalFrequency { natural_frequency } => format!(
            "{pole}: natural frequency {} rad/s, below ωn = {} rad/s (outside the natural-frequency boundary)",
            fmt_num(natural_frequency),
            region.natural_frequency.map_or_else(String::new, fmt_num)
        ),
    }
}

/// The achieved closed-loop poles of `result` outside `region` (digital: through `s = ln z / T`).
pub(crate) fn region_violations_of(result: &DesignResult, region: &crate::patterns::Region) -> Vec<crate::patterns::RegionViolation> {
    let achieved: Vec<Complex64> = result.feedback.achieved_poles.iter().map(c64).collect();
    match (result.domain, result.sample_time) {
        (crate::analysis::Domain::Discrete, Some(t)) => crate::patterns::discrete_region_violations(&achieved, region, t).unwrap_or_default(),
        _ => crate::patterns::region_violations(&achieved, region),
    }
}

pub(crate) fn region_report(result: &DesignResult, r: &design::RegionResult) -> RegionReport {
    let region = region_of(r);
    let t = match (result.domain, result.sample_time) {
        (crate::analysis::Domain::Discrete, Some(t)) => Some(t),
        _ => None,
    };
    let overshoot = crate::patterns::overshoot_from_damping(region.min_damping).map(|mp| format!(" (a pure pair with this damping overshoots by {} %)", fmt_num(mp * 100.0))).unwrap_or_default();
    let damping =
        format!("Damping ratio ζ ≥ {}{overshoot}: every pole within ±{}° of the negative real axis.", fmt_num(region.min_damping), fmt_num(region.min_damping.clamp(-1.0, 1.0).acos().to_degrees()));
    let circle = match t.and_then(|t| crate::patterns::discrete_decay_radius(&region, t).ok()) {
        Some(radius) => format!("; in the z-plane, |z| ≤ e^(−σT) = {}", fmt_num(radius)),
        None => String::new(),
    };
    let decay_rate = format!("Decay rate σ ≥ {} 1/s: every pole at Re s ≤ −{}{circle}.", fmt_num(region.min_decay_rate), fmt_num(region.min_decay_rate));
    let natural_frequency = region.natural_frequency.map(|w| format!("Natural frequency ωn ≥ {} rad/s (from the rise time): every pole at |s| ≥ {}.", fmt_num(w), fmt_num(w)));
    let note =
        "These bounds come from the formulas of a pure second-order pair (no zeros, no other poles); for this closed loop they are approximations: confirm the response by simulation.".to_string();
    let violations = region_violations_of(result, &region);
    let outside_region: Vec<String> = violations.iter().map(|v| violation_text(v, &region, t)).collect();
    RegionReport { damping, decay_rate, natural_frequency, note, outside_region }
}

/// Labels of the design states: plant states, then the delay states, then the integrators.
pub(crate) fn design_state_labels(result: &DesignResult, count: usize) -> Vec<String> {
    let mut labels = state_labels(result);
    if result.feedback.delay_gain.is_some() {
        labels.extend(result.plant.input_names.iter().map(|n| format!("previous {n}")));
    }
    if let Some(TrackingResult::Integral { outputs, .. }) = &result.tracking {
        labels.extend(outputs.iter().map(|o| format!("∫ error of {o}")));
    }
    if labels.len() == count {
        labels
    } else {
        (1..=count).map(|i| format!("x{i}")).collect()
    }
}

/// `diag(a, b, …)` of a diagonal matrix, or `None`.
pub(crate) fn diagonal_text(m: &[Vec<f64>]) -> Option<String> {
    let diagonal = m.iter().enumerate().all(|(i, row)| row.iter().enumerate().all(|(j, v)| i == j || *v == 0.0));
    if !diagonal {
        return None;
    }
    Some(format!("diag({})", m.iter().enumerate().map(|(i, row)| row.get(i).map_or_else(String::new, |v| fmt_num(*v))).collect::<Vec<_>>().join(", ")))
}

pub(crate) fn lqr_report(result: &DesignResult, l: &design::LqrResult, context: &ReportContext) -> LqrReport {
    let size = l.riccati_solution.len();
    let labels = design_state_labels(result, size);
    let inputs = input_labels(result);
    let discrete = result.domain == crate::analysis::Domain::Discrete;
    let short_list = |v: &[f64]| format!("[{}]", v.iter().map(|x| fmt_num(*x)).collect::<Vec<_>>().join(", "));
    let (q, r) = match &context.lqr_bounds {
        Some((xs, us)) => (
            format!(
                "Q = diag(1/x_max²) = {} with the largest acceptable excursions x_max = {} of the design states (Bryson's rule: each term of the cost is 1 at its bound).",
                diagonal_text(&l.q).unwrap_or_default(),
                short_list(xs)
            ),
            format!(
                "R = diag(1/u_max²) = {} with the largest acceptable inputs u_max = {}{}.",
                diagonal_text(&l.r).unwrap_or_default(),
                short_list(us),
                if context.lqr_inputs_from_limits { " (the actuator limits)" } else { "" }
            ),
        ),
        None => (
            diagonal_text(&l.q).map_or_else(|| format!("Q as given ({size} × {size})."), |d| format!("Q = {d}.")),
            diagonal_text(&l.r).map_or_else(|| format!("R as given ({} × {}).", l.r.len(), l.r.len()), |d| format!("R = {d}.")),
        ),
    };
    let residual = format!(
        "Normalised residual of the {} Riccati equation: {} (0 would be exact; values near 1e-15 are at rounding level).",
        if discrete { "discrete" } else { "continuous" },
        fmt_num(l.residual)
    );
    let riccati_solution = matrix_table(
        "X",
        "Riccati solution X: one row and one column per design state",
        "Riccati solution X; one row and one column per design state",
        labels.clone(),
        labels.clone(),
        &l.riccati_solution,
    );
    let gain = matrix_table("K_lqr", "LQR gain: one row per input, one column per design state", "u = -K_lqr x; one row per input, one column per design state", inputs, labels, &l.gain);
    let mut poles: Vec<Complex64> = l.closed_loop_poles.iter().map(c64).collect();
    sort_for_display(&mut poles);
    let gain_note = "The gain K used is this LQR gain as computed, for any number of inputs (it is not re-placed), so the LQR's optimality and margins belong to K.".to_string();
    let margins = (!discrete).then(|| {
        let mut text = "Full-state LQR has guaranteed margins: at least 60° of phase margin and a gain margin from −6 dB to infinity in each input loop (Safonov & Athans, IEEE Trans. Automatic Control 22(2), 1977; for a diagonal R, as with Bryson's rule). This holds only for the full-state loop u = −K_lqr x with the whole state measured: not with an observer, and not for a digital implementation.".to_string();
        if let Some(smallest) = l.state_weight_smallest_eigenvalue {
            text = format!("The state weight Q is not positive semidefinite (smallest eigenvalue {}), so the guaranteed margins of full-state LQR do not apply to this design; check its margins independently.", fmt_num(smallest));
            return text;
        }
        if result.observer.is_some() {
            text.push_str(" This design uses an observer, so the guarantee does not apply to it.");
        }
        text
    });
    LqrReport { q, r, residual, riccati_solution, gain, closed_loop_poles: crate::design::format::pole_list(&poles), gain_note, margins }
}

pub(crate) fn search_report(result: &DesignResult, s: &design::SearchSummary, context: &ReportContext) -> SearchReport {
    let situation = |k: usize| context.search_situations.get(k).cloned().unwrap_or_else(|| format!("situation {}", k + 1));
    let band = fmt_num(result.simulation.band * 100.0);
    let settling_times = s
        .settling_time
        .iter()
        .enumerate()
        .map(|(k, t)| match t {
            Some(t) => format!("{}: the slowest state settles (±{band} %) in {} s", situation(k), fmt_num(*t)),
            None => format!("{}: not settled (±{band} %) within the simulated time", situation(k)),
        })
        .collect();
    let top = s.samples.last().map_or(s.speed_factor, |x| x[0]);
    let bottom = s.samples.first().map_or(s.speed_factor, |x| x[0]);
    let monotonicity = if s.limited_by_range {
        format!(
            "Warning: the inputs stay within their limits even at the largest factor tried ({}): the actuators do not limit this design; measurement noise, model accuracy and sampling do.",
            fmt_num(s.speed_factor)
        )
    } else if s.monotonic {
        format!("The peak input grew steadily with the factor over the range checked ({} to {}), so the factor found is the only crossing of the limit there.", fmt_num(bottom), fmt_num(top))
    } else {
        format!(
            "Warning: the peak input did not grow steadily with the factor over the range checked ({} to {}): the factor found is one crossing of the limit, not necessarily the only one.",
            fmt_num(bottom),
            fmt_num(top)
        )
    };
    SearchReport {
        speed_factor: format!("Speed factor {}: every pole multiplied by it.", fmt_num(s.speed_factor)),
        limiting: format!("Set by {}, on input {}.", situation(s.limiting_situation.saturating_sub(1)), s.limiting_input),
        peak_ratio: format!("Peak input at the factor found: {} % of its limit.", fmt_num(100.0 * s.peak_ratio)),
        settling_times,
        monotonic: s.monotonic,
        monotonicity,
        evaluations: s.evaluations,
        notes: context.search_notes.clone(),
    }
}

/// How the poles were chosen: `None` when they were listed and not searched.
pub(crate) fn pole_choice_report(result: &DesignResult, context: &ReportContext) -> Option<PoleChoiceReport> {
    let choice = result.pole_choice.as_ref();
    let lqr = result.lqr.as_ref();
    let search = result.search.as_ref();
    if choice.is_none() && lqr.is_none() && search.is_none() {
        return None;
    }
    let method = match (choice, lqr) {
        (Some(c), _) => match c.method {
            design::PoleChoiceMethod::Bessel => "Bessel pattern".to_string(),
            design::PoleChoiceMethod::Butterworth => "Butterworth pattern".to_string(),
            design::PoleChoiceMethod::Itae => "ITAE pattern".to_string(),
            design::PoleChoiceMethod::Binomial => "Binomial pattern".to_string(),
            design::PoleChoiceMethod::Specification => "Specification (dominant pair)".to_string(),
        },
        (None, Some(_)) if context.lqr_bounds.is_some() => "LQR (Bryson's rule)".to_string(),
        (None, Some(_)) => "LQR (weights Q and R)".to_string(),
        (None, None) => "Listed poles, sped up by the search".to_string(),
    };
    let mut description = match (choice, lqr) {
        (Some(c), _) => {
            let mut chars = c.description.chars();
            let first: String = chars.next().map(|f| f.to_uppercase().collect()).unwrap_or_default();
            format!("{first}{}.", chars.as_str())
        }
        (None, Some(_)) => format!(
            "The closed-loop poles of the LQR design: the state feedback that minimises the {} of xᵀ Q x + uᵀ R u over the design states, with the weights below.",
            if result.domain == crate::analysis::Domain::Discrete { "sum over the samples" } else { "integral over time" }
        ),
        (None, None) => "The listed poles, used as the shape of the design.".to_string(),
    };
    if let Some(s) = search {
        description.push_str(&format!(" The search then multiplied every pole by {}: the fastest design within the actuator limits.", fmt_num(s.speed_factor)));
    }

    let sample_time = result.sample_time.filter(|_| result.domain == crate::analysis::Domain::Discrete);
    let mut suggested_delay_poles = None;
    let digits = crate::design::format::digits();
    let adopt = format!(
        "To adopt them, press “Use these poles”: they are written with {digits} significant digits (the Digits setting beside the gain; 17 keeps them exact), so the design changes only by that rounding (with several inputs: the same poles, with the robust placement's gain)."
    );
    let (poles, suggested_note, suggested_plane): (Vec<Complex64>, String, &str) = match (search, choice, lqr) {
        (Some(s), _, _) => (
            s.suggested_poles.iter().map(c64).collect(),
            format!("{} (s-plane): the poles after the search, which adopting them switches off. {adopt}", plural(s.suggested_poles.len(), "pole", "poles")),
            "s",
        ),
        (None, Some(c), _) => (c.suggested_poles.iter().map(c64).collect(), format!("{} (s-plane). {adopt}", plural(c.suggested_poles.len(), "pole", "poles")), "s"),
        (None, None, Some(l)) => {
            let mut z: Vec<Complex64> = l.closed_loop_poles.iter().map(c64).collect();
            // With a computation delay the LQR also placed the delay states' poles, which the
            // pole list does not take: the m poles nearest the origin (LQR puts them at or near
            // z = 0, deadbeat) go to the delay poles instead.
            let mut delay = String::new();
            if result.feedback.delay_gain.is_some() && sample_time.is_some() {
                let m = result.plant.inputs.min(z.len());
                let mut order: Vec<usize> = (0..z.len()).collect();
                order.sort_by(|&i, &j| z[i].norm().total_cmp(&z[j].norm()));
                let chosen: Vec<usize> = order.into_iter().take(m).collect();
                let mut fast: Vec<Complex64> = chosen.iter().map(|&i| z[i]).collect();
                // A real delay pole is written as a real number (the LQR's complex rounding dropped).
                for p in fast.iter_mut() {
                    if p.im.abs() <= 1e-12 {
                        p.im = 0.0;
                    }
                }
                if check_conjugate_pairs(&fast).is_ok() {
                    z = (0..z.len()).filter(|i| !chosen.contains(i)).map(|i| z[i]).collect();
                    suggested_delay_poles = Some(typed_pole_text(&fast, digits));
                    delay = format!(" The {} nearest the origin, {}, go to the delay poles of the computation-delay states.", plural(m, "pole", "poles"), exact_pole_text(&fast));
                } else {
                    delay = format!(" The list also holds the {} of the computation-delay states, which the pole list does not take: give those as delay poles.", plural(m, "pole", "poles"));
                }
            }
            match sample_time {
                None => (z.clone(), format!("{} (s-plane). {adopt}{delay}", plural(z.len(), "pole", "poles")), "s"),
                Some(_) if context.z_plane => (z.clone(), format!("{} (z-plane, the pole plane chosen). {adopt}{delay}", plural(z.len(), "pole", "poles")), "z"),
                Some(t) => {
                    let s: Option<Vec<Complex64>> = z.iter().map(|p| z_to_s(*p, t)).collect();
                    match s {
                        Some(s) => (
                            s.clone(),
                            format!("{} (s-plane: s = ln z / T of the LQR's z-plane poles, which z = e^(sT) gives back to rounding). {adopt}{delay}", plural(s.len(), "pole", "poles")),
                            "s",
                        ),
                        None => (z.clone(), format!("{} (z-plane: a pole at z = 0 has no s-plane equivalent, so the pole plane becomes z). {adopt}{delay}", plural(z.len(), "pole", "poles")), "z"),
                    }
                }
            }
        }
        (None, None, None) => (Vec::new(), String::new(), "s"),
    };
    Some(PoleChoiceReport {
        method,
        description,
        suggested_poles: typed_pole_text(&poles, digits),
        suggested_note,
        suggested_plane: suggested_plane.to_string(),
        suggested_delay_poles,
        region: choice.and_then(|c| c.region.as_ref()).map(|r| region_report(result, r)),
        lqr: lqr.map(|l| lqr_report(result, l, context)),
        search: search.map(|s| search_report(result, s, context)),
    })
}
