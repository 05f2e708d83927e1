//! The warnings of a design, stage by stage (the page and the CLI show exactly these).

use num_complex::Complex64;

use super::gains::{Analysis, Gains};
use super::pair::DesignPair;
use super::setup::Setup;
use crate::analysis::{Domain, ModeVerdict};
use crate::controller::SampleRateAdvice;
use crate::result::LoopResult;
use crate::warnings::{Warning, WarningCode, WarningParams};
use crate::{fmt_num, ControllerSpec, ObserverPoles};

/// The usual observer speed factor (common practice): 2–6 times the controller poles.
pub const OBSERVER_SPEED_RULE: (f64, f64) = (2.0, 6.0);

fn shown(z: &Complex64) -> String {
    if z.im > 0.0 {
        format!("{}±{}j", fmt_num(z.re), fmt_num(z.im))
    } else {
        crate::format::complex(*z)
    }
}

/// Requested poles that are unstable, marginal or far faster than the plant.
pub(super) fn requested_pole_warnings(s: &Setup, pair: &DesignPair, anorm: f64) -> Vec<Warning> {
    let (domain, wp) = (s.domain, WarningParams::default());
    // Each requested pole judged on its own scale (units of time must not change the verdict).
    let relative = match domain {
        Domain::Continuous => s.ap.relative_tolerance,
        Domain::Discrete => 1e-12,
    };
    let mut out = Vec::new();
    let mut seen = Vec::new();
    for z in pair.dpoles.iter().filter(|z| z.im >= 0.0) {
        if seen.contains(z) {
            continue;
        }
        seen.push(*z);
        let (plane, what) = match domain {
            Domain::Continuous => ("", ["lies in the right half-plane: the closed loop will be unstable", "lies on the imaginary axis: the closed loop will not settle (marginal stability)"]),
            Domain::Discrete => (" z-plane", ["lies outside the unit circle: the digital loop will be unstable", "lies on the unit circle: the digital loop will not settle (marginal stability)"]),
        };
        let axis_tol = domain.mode_tolerance(relative, *z, 0.0);
        if !domain.is_strictly_stable(*z, -axis_tol) && !domain.is_marginal(*z, axis_tol) {
            out.push(Warning::new(WarningCode::RequestedPoleUnstable, format!("The requested{plane} pole {} {}.", shown(z), what[0])));
        } else if domain.is_marginal(*z, axis_tol) {
            out.push(Warning::new(WarningCode::RequestedPoleOnAxis, format!("The requested{plane} pole {} {}.", shown(z), what[1])));
        }
    }
    let requested_s = s.to_s(&pair.base_poles);
    let at_origin = requested_s.iter().filter(|z| !(z.re.is_finite() && z.im.is_finite())).count();
    if at_origin > 0 {
        out.push(Warning::new(
            WarningCode::Deadbeat,
            format!(
                "{at_origin} requested pole(s) at z = 0 (deadbeat): the states settle within at most {at_origin} sample(s) from any start, which takes inputs of the order of the state error divided by a power of the sample time, and the response between samples and under model errors is not what the poles suggest. Check the peak inputs against the limits and the response with the plant's uncertainty."
            ),
        ));
    }
    for z in requested_s.iter().filter(|z| z.im >= 0.0 && z.re.is_finite() && z.im.is_finite()) {
        if s.spec.plant_sample_time.is_none() && anorm > 0.0 && z.norm() > wp.fast_pole_ratio * anorm {
            out.push(Warning::new(
                WarningCode::FastPole,
                format!(
                    "The requested pole {} is {:.0} times faster than the plant's own dynamics (‖A‖ = {}): expect large gains, actuator saturation and amplified measurement noise.",
                    shown(z),
                    z.norm() / anorm,
                    fmt_num(anorm)
                ),
            ));
        }
    }
    out
}

/// What placement and the structural analysis found.
pub(super) fn placement_warnings(s: &Setup, g: &Gains, an: &Analysis) -> Vec<Warning> {
    let (p, wp, m) = (&g.placement, WarningParams::default(), s.m);
    let mut out = Vec::new();
    if let Some(w) = jordan_warning(p, "closed-loop", "rank B") {
        out.push(w);
    } else if !(p.balanced_eigenvector_condition <= wp.fragile_condition) {
        // Judged in balanced coordinates, so that the units of the states do not decide it.
        out.push(Warning::new(
            WarningCode::FragileDesign,
            format!(
                "The closed-loop eigenvector condition number is {} in balanced coordinates ({} as the states are scaled; above {}): small errors in the plant model or the gain can move the poles far from where they were placed. Spread clustered poles apart or move them closer to the open-loop poles.",
                fmt_num(p.balanced_eigenvector_condition),
                fmt_num(p.eigenvector_condition),
                fmt_num(wp.fragile_condition)
            ),
        ));
    }
    out.extend(branch_warning(&p.branch, "gain", if s.spec.search.is_some() { "the search's" } else { "the previous design's" }));
    if p.max_pole_error > wp.inaccurate_placement {
        out.push(Warning::new(
            WarningCode::PlacementInaccurate,
            format!("The achieved poles differ from the requested ones by up to {} (relative): the problem is numerically ill conditioned.", fmt_num(p.max_pole_error)),
        ));
    }
    if !p.converged {
        out.push(Warning::new(WarningCode::NotConverged, "The eigenvector optimisation stopped at its sweep limit; the gain is valid but its robustness may not be the best available."));
    }
    if p.input_rank < m {
        out.push(Warning::new(WarningCode::DependentInputs, format!("B has rank {} but {m} columns: some inputs act in the same directions; the gain shown is the smallest-norm one.", p.input_rank)));
    }
    if !an.ctrb.is_complete() {
        let not_assigned = if p.not_assigned.is_empty() { String::new() } else { format!("; the requested pole(s) {} were not assigned", crate::format::pole_list(&p.not_assigned)) };
        out.push(Warning::new(
            WarningCode::UncontrollableModes,
            format!(
                "The plant is not controllable: {} mode(s) at {} cannot be moved by feedback and stay where they are{not_assigned}.",
                an.ctrb.hidden_modes.len(),
                crate::format::pole_list(&an.ctrb.hidden_modes)
            ),
        ));
    }
    for md in an.ctrb.modes.iter().filter(|md| md.verdict == ModeVerdict::Weak) {
        out.push(Warning::new(
            WarningCode::WeaklyControllable,
            format!("The mode at {} is only weakly controllable (margin {}): moving it needs large inputs.", crate::format::complex(md.pole), fmt_num(md.margin)),
        ));
    }
    for md in an.obsv.iter().flat_map(|o| o.modes.iter()).filter(|md| md.verdict == ModeVerdict::Weak) {
        out.push(Warning::new(WarningCode::WeaklyObservable, format!("The mode at {} is only weakly observable from the outputs (margin {}).", crate::format::complex(md.pole), fmt_num(md.margin))));
    }
    if !an.ctrb.consistent || an.obsv.as_ref().is_some_and(|o| !o.consistent) {
        out.push(Warning::new(
            WarningCode::AnalysisInconsistent,
            "The staircase and the per-mode (PBH) tests disagree: the plant is on the borderline of losing controllability or observability; treat the verdicts with care.",
        ));
    }
    out
}

/// The sample rate, the observer's accuracy and conditioning, its speed factor.
pub(super) fn controller_warnings(g: &Gains, advice: Option<&SampleRateAdvice>) -> Vec<Warning> {
    let wp = WarningParams::default();
    let mut out = Vec::new();
    if let Some(a) = advice.filter(|a| a.verdict == crate::controller::SampleRateVerdict::TooSlow) {
        out.push(Warning::new(WarningCode::SampleRateTooSlow, super::sample_rate_message(a)));
    }
    if let Some((od, _, _)) = &g.observer {
        if od.placement.max_pole_error > wp.inaccurate_placement {
            out.push(Warning::new(WarningCode::ObserverInaccurate, format!("The observer poles are achieved only to within {} (relative).", fmt_num(od.placement.max_pole_error))));
        }
        out.extend(branch_warning(&od.placement.branch, "observer gain", "the previous design's"));
        if let Some(w) = jordan_warning(&od.placement, "observer", "the number of independent outputs") {
            out.push(w);
        } else if !(od.placement.eigenvector_condition <= wp.fragile_condition) {
            out.push(Warning::new(
                WarningCode::FragileObserver,
                format!("The observer's eigenvector condition number is {}: its poles are sensitive to model errors.", fmt_num(od.placement.eigenvector_condition)),
            ));
        }
    }
    out
}

/// A speed factor outside [`OBSERVER_SPEED_RULE`].
pub(super) fn observer_speed_warning(spec: &ControllerSpec) -> Option<Warning> {
    let Some(ObserverPoles::SpeedFactor(f)) = spec.observer.as_ref().map(|o| &o.poles) else {
        return None;
    };
    let (lo, hi) = OBSERVER_SPEED_RULE;
    if *f < lo {
        Some(Warning::new(WarningCode::ObserverSlow, format!("The observer poles are only {} times the controller poles; the usual rule of thumb is 2–6 times faster than the controller (common practice): with a slow observer the estimation error shapes the response.", fmt_num(*f))))
    } else if *f > hi {
        Some(Warning::new(WarningCode::ObserverFast, format!("The observer poles are {} times the controller poles; the usual rule of thumb is 2–6 times faster than the controller (common practice): a much faster observer passes more measurement noise to the inputs.", fmt_num(*f))))
    } else {
        None
    }
}

/// What the whole-loop simulation shows: outputs that do not settle, divergence, a failed
/// separation check.
pub(super) fn loop_warnings(l: &LoopResult, band: f64) -> Vec<Warning> {
    let mut out = Vec::new();
    for tm in l.tracked.iter().filter(|tm| tm.settling_time.is_none() && !l.diverged) {
        out.push(Warning::new(
            WarningCode::LoopNotSettled,
            format!(
                "In the loop simulation, {} does not settle within ±{} % of its reference step before the simulation ends ({} s) or the load step comes: lengthen the simulated time, or make the controller faster.",
                tm.name,
                fmt_num(band * 100.0),
                fmt_num(l.duration)
            ),
        ));
    }
    if l.diverged {
        out.push(Warning::new(
            WarningCode::LoopDiverged,
            "The loop simulation (the whole controller with the plant) grew without bound and was stopped: this controller does not stabilise the plant as simulated.",
        ));
    }
    if let Some(e) = l.separation_error.filter(|e| !(*e <= 1e-6)) {
        out.push(Warning::new(
            WarningCode::SeparationFailed,
            format!(
                "The eigenvalues of the loop with observer differ from the controller and observer poles by up to {} (relative): the separation check failed; treat the design with care.",
                fmt_num(e)
            ),
        ));
    }
    out
}

/// How the poles were chosen: the specification's region, a repeated pattern, the search.
pub(super) fn choice_warnings(s: &Setup, pair: &DesignPair, g: &Gains) -> Vec<Warning> {
    let mut out = Vec::new();
    let choice = s.spec.pole_choice.as_ref();
    if let Some(region) = choice.and_then(|c| c.region.as_ref()) {
        let achieved_s = s.design_to_s(&g.placement.achieved_poles);
        let violations = crate::patterns::region_violations(&achieved_s, region);
        let mut outside: Vec<usize> = violations.iter().map(|v| v.index).collect();
        outside.dedup();
        if !outside.is_empty() {
            let slowed = pair.search.as_ref().is_some_and(|r| r.speed_factor < 1.0);
            let each: Vec<String> = violations.iter().map(|v| format!("{}: {v}", crate::format::complex(v.pole))).collect();
            out.push(Warning::new(
                WarningCode::PoleOutsideRegion,
                format!(
                    "{} outside the region of the specification (ζ ≥ {}, σ ≥ {} 1/s): the response may not meet the specification{}. {}.",
                    crate::check::plural(outside.len(), "closed-loop pole lies", "closed-loop poles lie"),
                    fmt_num(region.min_damping),
                    fmt_num(region.min_decay_rate),
                    if slowed { "; the search slowed the poles down to keep the inputs within their limits" } else { "" },
                    each.join("; ")
                ),
            ));
        }
    }
    if let Some(smallest) = pair.lqr.as_ref().and_then(|l| l.state_weight_smallest_eigenvalue) {
        out.push(Warning::new(
            WarningCode::LqrWeightIndefinite,
            format!(
                "The state weight Q{} is not positive semidefinite (smallest eigenvalue {}): the stabilising Riccati solution exists and its gain is used, but the cost is no longer a sum of squares and LQR's guaranteed margins do not apply. Check the margins independently, or make Q semidefinite (weights rounded from published data often need only their diagonal raised slightly).",
                if s.spec.lqr.as_ref().is_some_and(|w| matches!(w, crate::LqrWeights::Matrices { s: Some(_), .. })) { " − S R⁻¹ Sᵀ" } else { "" },
                fmt_num(smallest)
            ),
        ));
    }
    if let Some(r) = &pair.search {
        if let Some(why) = r.shortfall {
            use crate::search::SearchShortfall as S;
            let reason = match why {
                S::BranchChange => "the robust placement changed branch inside the final bracket, so the gains — and the peak — jump there",
                S::NonMonotonic => "the peak input does not grow steadily with the speed-up",
                S::Discontinuous => "the peak input jumps between two factors less than 0.1 % apart",
            };
            out.push(Warning::new(
                WarningCode::SearchShortOfLimit,
                format!(
                    "At the speed factor found ({}), the peak input is {} % of its limit, not the 97–100 % a steady search ends at: {reason}. Look at the samples before relying on the factor.",
                    fmt_num(r.speed_factor),
                    fmt_num(100.0 * r.peak_ratio)
                ),
            ));
        }
        if !r.monotonic {
            out.push(Warning::new(
                WarningCode::SearchNotMonotonic,
                "The peak input did not grow steadily with the speed-up over the searched range: the factor found is one crossing of the limit, not necessarily the only one; check the samples.",
            ));
        }
        if r.limited_by_range {
            out.push(Warning::new(
                WarningCode::SearchRangeLimit,
                format!(
                    "The inputs stay within their limits even at the largest factor tried ({}): the actuators are not what limits this design; noise, model accuracy and sampling are.",
                    fmt_num(r.speed_factor)
                ),
            ));
        }
    }
    out
}

/// The `repeated-poles` warning when a placement put a Jordan block (a pole repeated beyond
/// what `limit` allows as independent eigenvectors).
fn jordan_warning(p: &crate::place::Placement, what: &str, limit: &str) -> Option<Warning> {
    use crate::place::PlacementMethod;
    let combined = match &p.method {
        PlacementMethod::Deflation => String::new(),
        PlacementMethod::DeflationMultiInput => {
            " With several inputs, spreading the copies slightly apart (or using at most rank B of them) lets the eigenvectors be independent and is more robust.".to_string()
        }
        PlacementMethod::Robust | PlacementMethod::Given => return None,
    };
    let (pole, copies) = crate::place::most_repeated(&p.assigned_poles);
    Some(Warning::new(
        WarningCode::RepeatedPoles,
        format!(
            "The {what} pole {} is repeated {copies} times, more than {limit} allows with independent eigenvectors, so it is placed as a Jordan block: a model error of relative size δ moves such poles by about δ^(1/{copies}) (for δ = 1e-6: {}). Here the achieved poles scatter by up to {} around it (relative) and their mean is within {}.{combined}",
            shown(&pole),
            fmt_num(1e-6f64.powf(1.0 / copies as f64)),
            fmt_num(p.repeated_pole_spread),
            fmt_num(p.max_pole_error)
        ),
    ))
}

/// The `branch-followed` / `branch-changed` warning of a continued placement (`source` names
/// what it continued from).
fn branch_warning(branch: &crate::place::Branch, what: &str, source: &str) -> Option<Warning> {
    use crate::place::Branch;
    match *branch {
        Branch::Fresh => None,
        Branch::Followed { gain_difference, fresh_condition } if gain_difference > 0.01 => Some(Warning::new(
            WarningCode::BranchFollowed,
            format!(
                "The {what} continues {source} branch of the robust placement (it has several solutions), so that it moves smoothly. A fresh design of this document — what the command-line tool and a reloaded page compute — gives a {what} {} % different (its eigenvector condition number {}).",
                fmt_num(100.0 * gain_difference),
                fmt_num(fresh_condition)
            ),
        )),
        Branch::Followed { .. } => None,
        Branch::Changed { followed_condition } => Some(Warning::new(
            WarningCode::BranchChanged,
            format!("The {what} jumped: the branch of the robust placement followed from {source} reached an eigenvector condition number of {}, more than twice a fresh placement's, so the fresh one is used.", fmt_num(followed_condition)),
        )),
        Branch::Lost { drift } => Some(Warning::new(
            WarningCode::BranchChanged,
            format!(
                "The {what} jumped: the branch of the robust placement followed from {source} ends near these poles (an eigenvector turned by {}°), and the placement moved to another solution.",
                fmt_num((1.0 - drift).clamp(-1.0, 1.0).acos().to_degrees())
            ),
        )),
    }
}

/// Damping kept under float32 rounding below which the `float32-sensitive` caution is given.
pub const FLOAT32_DAMPING_FRACTION: f64 = 0.9;

/// The `float32-sensitive` caution of the re-check, when a loop needs it.
pub(super) fn precision_warning(fp: &crate::result::FinitePrecisionResult) -> Option<Warning> {
    let bad: Vec<String> = fp
        .loops
        .iter()
        .filter(|l| !l.stable || l.worst_damping_fraction < FLOAT32_DAMPING_FRACTION)
        .map(|l| {
            if l.stable {
                format!("the {} poles move by up to {} and a damping ratio falls to {} % of its design value", l.name, fmt_num(l.max_pole_move), fmt_num(100.0 * l.worst_damping_fraction))
            } else {
                format!("one {} pole leaves the unit circle (poles move by up to {})", l.name, fmt_num(l.max_pole_move))
            }
        })
        .collect();
    (!bad.is_empty()).then(|| {
        Warning::new(
            WarningCode::Float32Sensitive,
            format!(
                "Stored as float32, {}: poles close to z = 1 (fast sampling against the loop's speed) are sensitive to coefficient rounding (Middleton & Goodwin, IEEE TAC 31(11), 1986). Export double precision, sample more slowly, or use a delta-operator implementation.",
                bad.join("; ")
            ),
        )
    })
}

/// The `small-margin` caution: the multiloop disk margin (every input perturbed at once)
/// guarantees less than a factor 2 (6 dB) either way or 35° of phase (common practice minimum).
pub(super) fn margin_warning(m: &crate::result::MarginsResult) -> Option<Warning> {
    let d = &m.all_inputs_symmetric;
    let short = d.gain_range[0] > 0.5 || d.gain_range[1] < 2.0 || d.phase_margin_deg < 35.0;
    short.then(|| {
        let weakest = m.per_input.iter().min_by(|a, b| a.disk.disk_margin.total_cmp(&b.disk.disk_margin));
        let single = match (m.per_input.len(), weakest) {
            (2.., Some(p)) => format!(" The weakest single input is {} (α = {}).", p.input, fmt_num(p.disk.disk_margin)),
            _ => String::new(),
        };
        Warning::new(
            WarningCode::SmallMargin,
            format!(
                "The symmetric disk margin (skew 0) at the plant input ({}) guarantees gain factors {} to {} and phase ±{}° (at {} rad/s): less than the common-practice minimum of about ±6 dB and ±35°.{single} Slow the poles down, or, with an observer, make it faster or check the loop with the model's uncertainty.",
                if m.per_input.len() > 1 { "all inputs at once" } else { "one input" },
                fmt_num(d.gain_range[0]),
                if d.gain_range[1].is_finite() { fmt_num(d.gain_range[1]) } else { "∞".into() },
                fmt_num(d.phase_margin_deg),
                fmt_num(d.frequency)
            ),
        )
    })
}
