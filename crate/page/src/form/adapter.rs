//! The page form as a syntax adapter of the design document: its text fields become a
//! [`DesignSpec`] (what was typed is kept as text) and a document becomes text fields again.
//! No design rule lives here: every rule is [`crate::design::check`]'s. The
//! field table (`fields.rs`) says which [`FieldPath`]s each control shows.

use num_complex::Complex64;

use super::{FieldError, FormInput};
use crate::design::spec::*;
use crate::design::FieldPath as P;
use crate::poles::format_complex;

/// The form field that shows `path`, if the page has one (the field table's `paths`).
pub fn form_key(path: P) -> Option<&'static str> {
    match path {
        P::SearchSituation(_) => Some("search"),
        p => FormInput::FIELDS.iter().copied().find(|k| FormInput::paths(k).contains(&p)),
    }
}

fn blank(text: &str) -> bool {
    text.trim_start_matches('\u{feff}').trim().is_empty()
}

fn opt(text: &str) -> Option<String> {
    (!blank(text)).then(|| text.to_string())
}

/// The document the form's fields describe. Fields of a section that is switched off are
/// not read; a required field left blank is written as empty text (the check then says it is
/// required). An unknown choice (only possible from a script) is a field error.
///
/// # Errors
/// One [`FieldError`] per choice field whose value is not one of its choices.
pub fn spec_from_form(form: &FormInput) -> Result<DesignSpec, Vec<FieldError>> {
    let mut errors = Vec::new();
    let mut choice = |key: &'static str| -> String {
        let v = form.choice(key);
        let allowed = FormInput::choices(key).unwrap_or(&[]);
        if form.is_active(key) && !allowed.contains(&v.as_str()) {
            errors.push(FieldError { field: key, message: format!("\"{v}\" is not a choice; choose one of: {}", allowed.join(", ")) });
        }
        v
    };
    let source = choice("pole_source");
    let plane = choice("plane");
    let band = choice("settling_band");
    let observer = choice("observer");
    let observer_form = choice("observer_form");
    let tracking = choice("tracking");
    let anti_windup = choice("anti_windup");
    let delay = choice("computation_delay") == "true";
    let search = choice("search") == "true";
    let family = choice("pattern_family");
    let normalisation = choice("pattern_normalisation");
    let text = |k: &str| form.get(k).unwrap_or("").to_string();
    let scalar = |k: &str| opt(&text(k)).map(Scalar::Text);
    let numbers = |k: &str| opt(&text(k)).map(NumberList::Text);
    let names = |k: &str| opt(&text(k)).map(NameList::Text);

    let plant = PlantDoc {
        a: Some(MatrixValue::Text(text("a"))),
        b: Some(MatrixValue::Text(text("b"))),
        c: opt(&text("c")).map(MatrixValue::Text),
        d: opt(&text("d")).map(MatrixValue::Text),
        e: opt(&text("disturbance_input")).map(MatrixValue::Text),
        state_limits: opt(&text("state_limits")).map(LimitList::Text),
        state_names: names("state_names"),
        state_units: names("state_units"),
        input_names: names("input_names"),
        input_units: names("input_units"),
        output_names: names("output_names"),
        output_units: names("output_units"),
        sample_time: None,
    };
    let mut feedback = FeedbackDoc { plane: (plane == "z").then_some(PlaneChoice::Z), ..FeedbackDoc::default() };
    match source.as_str() {
        "pattern" => {
            let family = match family.as_str() {
                "butterworth" => PatternFamily::Butterworth,
                "itae" => PatternFamily::Itae,
                "binomial" => PatternFamily::Binomial,
                _ => PatternFamily::Bessel,
            };
            let normalisation = match (family, normalisation.as_str()) {
                (PatternFamily::Bessel, "unit_group_delay") => Some(BesselChoice::UnitGroupDelay),
                (PatternFamily::Bessel, "half_power_at_unit_frequency") => Some(BesselChoice::HalfPowerAtUnitFrequency),
                _ => None,
            };
            feedback.pattern = Some(PatternDoc { family, normalisation, settling_time: Some(Scalar::Text(text("pattern_settling_time"))), bandwidth: None, band: None });
        }
        "specification" => {
            // The page asks for the overshoot in percent; the document holds a fraction.
            let overshoot = opt(&text("spec_overshoot")).map(|t| match crate::parse::parse_vector(&t).as_deref() {
                Ok([v]) => Scalar::Number(v / 100.0),
                _ => Scalar::Text(t),
            });
            feedback.spec = Some(SpecDoc { overshoot, settling_time: scalar("spec_settling_time"), band: None, rise_time: scalar("spec_rise_time"), bandwidth: None });
        }
        "lqr" => {
            feedback.lqr = Some(LqrDoc { q: None, r: None, s: None, bryson: Some(BrysonDoc { max_state: Some(NumberList::Text(text("lqr_max_state"))), max_input: numbers("lqr_max_input") }) });
        }
        _ => feedback.poles = Some(PoleList::Text(text("poles"))),
    }
    let tracking_on = tracking != "none";
    let simulation = SimulationDoc {
        initial_state: numbers("initial_state"),
        duration: scalar("duration"),
        band: match band.as_str() {
            "1" => Some(Scalar::Number(0.01)),
            "5" => Some(Scalar::Number(0.05)),
            _ => None,
        },
        reference: numbers("reference").filter(|_| tracking_on),
        reference_time: scalar("reference_time").filter(|_| tracking_on),
        disturbance: numbers("disturbance"),
        disturbance_time: scalar("disturbance_time"),
        noise_std: numbers("noise_std"),
        seed: opt(&text("seed")).map(Whole::Text),
        initial_estimate: None,
    };
    let implementation = (!blank(&text("sample_time")) || delay).then(|| ImplementationDoc {
        sample_time: scalar("sample_time"),
        method: None,
        computation_delay: delay.then_some(true),
        delay_poles: opt(&text("delay_poles")).filter(|_| delay).map(PoleList::Text),
    });
    let observer_doc = match observer.as_str() {
        "poles" => Some(ObserverDoc { poles: Some(PoleList::Text(text("observer_poles"))), speed_factor: None, form: None }),
        "speed_factor" => Some(ObserverDoc { poles: None, speed_factor: scalar("observer_speed"), form: None }),
        _ => None,
    }
    .map(|o| ObserverDoc { form: (observer_form == "current").then_some(ObserverFormChoice::Current), ..o });
    let integral = tracking == "integral";
    let tracking_doc = tracking_on.then(|| TrackingDoc {
        mode: if integral { TrackingMode::Integral } else { TrackingMode::Feedforward },
        outputs: opt(&text("tracked_outputs")).map(OutputList::Text),
        // With LQR the integrator poles come from the LQR as well.
        integral_poles: opt(&text("integral_poles")).filter(|_| integral && source != "lqr").map(PoleList::Text),
        feedforward: (integral && choice("tracking_feedforward") == "true").then_some(true),
    });
    let anti_windup_doc = match (integral, anti_windup.as_str()) {
        (true, "clamp") => Some(AntiWindupDoc { mode: AntiWindupMode::Clamp, time_constant: None }),
        (true, "back_calculation") => Some(AntiWindupDoc { mode: AntiWindupMode::BackCalculation, time_constant: scalar("anti_windup_time") }),
        _ => None,
    };
    let spec = DesignSpec {
        title: form.title.clone(),
        notes: form.notes.clone(),
        plant,
        feedback: Some(feedback),
        actuators: numbers_limits(&text("limits")),
        simulation: (simulation != SimulationDoc::default()).then_some(simulation),
        implementation,
        observer: observer_doc,
        tracking: tracking_doc,
        anti_windup: anti_windup_doc,
        search: search.then_some(SearchDoc { fastest_within_limits: true, situations: None }),
        robustness: robustness_doc(&text),
        ..DesignSpec::default()
    };
    if errors.is_empty() {
        Ok(spec)
    } else {
        Err(errors)
    }
}

/// The `robustness` section from its fields (left out when they are all blank).
fn robustness_doc(text: &dyn Fn(&str) -> String) -> Option<RobustnessDoc> {
    let samples = opt(&text("uncertainty_samples")).map(Whole::Text);
    let seed = opt(&text("uncertainty_seed")).map(Whole::Text);
    let entries = opt(&text("uncertain_entries")).map(UncertainList::Text);
    let uncertainty = (entries.is_some() || samples.is_some() || seed.is_some()).then_some(UncertaintyDoc { entries, samples, seed });
    let doc = RobustnessDoc { disk_skew: opt(&text("disk_skew")).map(Scalar::Text), sensitivity_entry: opt(&text("sensitivity_entry")).map(EntryRefDoc::Text), uncertainty };
    (doc != RobustnessDoc::default()).then_some(doc)
}

/// The robustness fields of a document.
fn robustness_fields(spec: &DesignSpec, f: &mut FormInput) {
    let r = spec.robustness.clone().unwrap_or_default();
    let whole = |w: &Option<Whole>| match w {
        Some(Whole::Number(v)) => v.to_string(),
        Some(Whole::Text(t)) => t.clone(),
        None => String::new(),
    };
    let percent = |r: Option<f64>| r.map_or(String::new(), |r| format!(" {}%", num(100.0 * r)));
    let entry = |d: &EntryDoc| match (d.row, d.column) {
        (Some(row), Some(col)) => format!("{} {row} {col}{}", d.matrix.to_uppercase(), percent(d.relative)),
        _ => format!("{}{}", d.matrix.to_uppercase(), percent(d.relative)),
    };
    f.set("disk_skew", r.disk_skew.as_ref().map(scalar_text).unwrap_or_default());
    f.set(
        "sensitivity_entry",
        match &r.sensitivity_entry {
            Some(EntryRefDoc::Text(t)) => t.clone(),
            Some(EntryRefDoc::Entry(d)) => entry(d),
            None => String::new(),
        },
    );
    let u = r.uncertainty.unwrap_or_default();
    f.set(
        "uncertain_entries",
        match &u.entries {
            Some(UncertainList::Text(t)) => t.clone(),
            Some(UncertainList::List(items)) => items.iter().map(entry).collect::<Vec<_>>().join("\n"),
            None => String::new(),
        },
    );
    f.set("uncertainty_samples", whole(&u.samples));
    f.set("uncertainty_seed", whole(&u.seed));
}

fn numbers_limits(text: &str) -> Option<ActuatorsDoc> {
    opt(text).map(|t| ActuatorsDoc { limit: Some(LimitList::Text(t)) })
}

// ---------------------------------------------------------------------------------------------
// Document → form.

/// The shortest text that reads back to the same number.
fn num(x: f64) -> String {
    format_complex(Complex64::new(x, 0.0))
}

/// A number given to 12 significant digits (for values the page shows scaled, like percent).
fn scaled(x: f64) -> String {
    let r: f64 = format!("{x:.11e}").parse().unwrap_or(x);
    num(r)
}

fn matrix_text(m: &MatrixValue) -> String {
    match m {
        MatrixValue::Text(s) => s.clone(),
        MatrixValue::Flat(x) => x.iter().map(|v| num(*v)).collect::<Vec<_>>().join(" "),
        MatrixValue::Rows(rows) => rows.iter().map(|r| r.iter().map(|v| num(*v)).collect::<Vec<_>>().join(" ")).collect::<Vec<_>>().join("\n"),
    }
}

fn numbers_text(v: &NumberList) -> String {
    match v {
        NumberList::Text(s) => s.clone(),
        NumberList::List(x) => x.iter().map(|v| num(*v)).collect::<Vec<_>>().join(", "),
        NumberList::One(x) => num(*x),
    }
}

fn poles_text(v: &PoleList) -> String {
    match v {
        PoleList::Text(s) => s.clone(),
        PoleList::Items(items) => items
            .iter()
            .map(|i| match i {
                PoleItem::Real(x) => num(*x),
                PoleItem::Pair([re, im]) => format_complex(Complex64::new(*re, *im)),
                PoleItem::Text(s) => s.clone(),
            })
            .collect::<Vec<_>>()
            .join(", "),
    }
}

fn names_text(v: &NameList) -> String {
    match v {
        NameList::Text(s) => s.clone(),
        // One per line, so that a name with a comma stays whole.
        NameList::List(items) => items.join(if items.iter().any(|s| s.contains(',')) { "\n" } else { ", " }),
    }
}

fn scalar_text(v: &Scalar) -> String {
    match v {
        Scalar::Number(x) => num(*x),
        Scalar::Text(s) => s.clone(),
    }
}

fn band_choice(b: f64) -> Option<&'static str> {
    [(0.02, "2"), (0.01, "1"), (0.05, "5")].iter().find(|(v, _)| (b - v).abs() <= 1e-12).map(|(_, k)| *k)
}

/// What of a document the page has no control for (the design is then run from the CLI).
fn not_on_page(spec: &DesignSpec) -> Option<&'static str> {
    let fb = spec.feedback.as_ref();
    let sim = spec.simulation.as_ref();
    let band_of_sim = sim.and_then(|s| s.band.as_ref());
    let other_band = |b: Option<&Scalar>| b.is_some() && b != band_of_sim;
    [
        (spec.plant.sample_time.is_some(), "a plant given in discrete time (plant.sample_time)"),
        (fb.and_then(|f| f.lqr.as_ref()).is_some_and(|l| l.q.is_some() || l.r.is_some() || l.s.is_some()), "LQR weight matrices (feedback.lqr.q, r and s); the page uses Bryson's rule"),
        (fb.and_then(|f| f.pattern.as_ref()).is_some_and(|p| p.bandwidth.is_some()), "a pattern scaled to a bandwidth"),
        (fb.and_then(|f| f.pattern.as_ref()).is_some_and(|p| other_band(p.band.as_ref())), "a settling band of the pattern apart from the simulation's"),
        (fb.and_then(|f| f.spec.as_ref()).is_some_and(|s| s.bandwidth.is_some()), "a bandwidth requirement in the specification"),
        (fb.and_then(|f| f.spec.as_ref()).is_some_and(|s| other_band(s.band.as_ref())), "a settling band of the specification apart from the simulation's"),
        (fb.is_some_and(|f| [f.poles.is_some(), f.pattern.is_some(), f.spec.is_some(), f.lqr.is_some()].iter().filter(|x| **x).count() != 1), "more or fewer than one pole choice"),
        (spec.search.as_ref().is_some_and(|s| s.situations.is_some() || !s.fastest_within_limits), "search situations of its own"),
        (sim.is_some_and(|s| s.initial_estimate.is_some()), "an initial estimate of the observer"),
        (band_of_sim.is_some_and(|b| !matches!(b, Scalar::Number(x) if band_choice(*x).is_some())), "a settling band other than 1, 2 or 5 %"),
        (spec.tracking.as_ref().is_some_and(|t| t.mode == TrackingMode::None && (t.outputs.is_some() || t.integral_poles.is_some())), "tracked outputs without tracking"),
    ]
    .into_iter()
    .find(|(yes, _)| *yes)
    .map(|(_, what)| what)
}

/// The form fields that show `spec`; choices are written as their canonical values.
///
/// # Errors
/// A sentence naming what the page cannot show (the document itself may be valid: the CLI runs
/// it).
pub fn form_from_spec(spec: &DesignSpec) -> Result<FormInput, String> {
    if let Some(what) = not_on_page(spec) {
        return Err(format!("this design uses {what}, which the page cannot show; run it with the command-line tool"));
    }
    let mut f = FormInput { title: spec.title.clone(), notes: spec.notes.clone(), ..FormInput::default() };
    let p = &spec.plant;
    let mut put = |key: &str, text: Option<String>| {
        f.set(key, text.unwrap_or_default());
    };
    put("a", p.a.as_ref().map(matrix_text));
    put("b", p.b.as_ref().map(matrix_text));
    put("c", p.c.as_ref().map(matrix_text));
    put("d", p.d.as_ref().map(matrix_text));
    put("disturbance_input", p.e.as_ref().map(matrix_text));
    for (key, v) in [
        ("state_names", &p.state_names),
        ("state_units", &p.state_units),
        ("input_names", &p.input_names),
        ("input_units", &p.input_units),
        ("output_names", &p.output_names),
        ("output_units", &p.output_units),
    ] {
        put(key, v.as_ref().map(names_text));
    }
    feedback_fields(spec, &mut f);
    controller_fields(spec, &mut f);
    robustness_fields(spec, &mut f);
    Ok(f)
}

fn feedback_fields(spec: &DesignSpec, f: &mut FormInput) {
    let fb = spec.feedback.clone().unwrap_or_default();
    f.set("plane", if fb.plane == Some(PlaneChoice::Z) { "z" } else { "s" });
    f.set("pattern_family", "bessel");
    f.set("pattern_normalisation", "unit_settling_time");
    if let Some(p) = &fb.poles {
        f.set("pole_source", "list");
        f.set("poles", poles_text(p));
    } else if let Some(p) = &fb.pattern {
        f.set("pole_source", "pattern");
        f.set("pattern_family", serde_name(&p.family));
        if let Some(n) = &p.normalisation {
            f.set("pattern_normalisation", serde_name(n));
        }
        f.set("pattern_settling_time", p.settling_time.as_ref().map(scalar_text).unwrap_or_default());
    } else if let Some(s) = &fb.spec {
        f.set("pole_source", "specification");
        f.set(
            "spec_overshoot",
            match &s.overshoot {
                Some(Scalar::Number(x)) => scaled(x * 100.0),
                Some(Scalar::Text(t)) => t.clone(),
                None => String::new(),
            },
        );
        f.set("spec_settling_time", s.settling_time.as_ref().map(scalar_text).unwrap_or_default());
        f.set("spec_rise_time", s.rise_time.as_ref().map(scalar_text).unwrap_or_default());
    } else if let Some(l) = &fb.lqr {
        f.set("pole_source", "lqr");
        let b = l.bryson.clone().unwrap_or_default();
        f.set("lqr_max_state", b.max_state.as_ref().map(numbers_text).unwrap_or_default());
        f.set("lqr_max_input", b.max_input.as_ref().map(numbers_text).unwrap_or_default());
    } else {
        f.set("pole_source", "list");
    }
    f.set("search", if spec.search.is_some() { "true" } else { "false" });
}

fn limit_text(l: &LimitList) -> String {
    match l {
        LimitList::Text(s) => s.clone(),
        LimitList::One(x) => num(*x),
        LimitList::List(items) => items.iter().map(|v| v.map_or("none".to_string(), num)).collect::<Vec<_>>().join(", "),
    }
}

fn controller_fields(spec: &DesignSpec, f: &mut FormInput) {
    f.set("limits", spec.actuators.as_ref().and_then(|a| a.limit.as_ref()).map(limit_text).unwrap_or_default());
    f.set("state_limits", spec.plant.state_limits.as_ref().map(limit_text).unwrap_or_default());
    let sim = spec.simulation.clone().unwrap_or_default();
    f.set("initial_state", sim.initial_state.as_ref().map(numbers_text).unwrap_or_default());
    f.set("duration", sim.duration.as_ref().map(scalar_text).unwrap_or_default());
    f.set("settling_band", sim.band.as_ref().and_then(|b| if let Scalar::Number(x) = b { band_choice(*x) } else { None }).unwrap_or("2"));
    f.set("reference", sim.reference.as_ref().map(numbers_text).unwrap_or_default());
    f.set("reference_time", sim.reference_time.as_ref().map(scalar_text).unwrap_or_default());
    f.set("disturbance", sim.disturbance.as_ref().map(numbers_text).unwrap_or_default());
    f.set("disturbance_time", sim.disturbance_time.as_ref().map(scalar_text).unwrap_or_default());
    f.set("noise_std", sim.noise_std.as_ref().map(numbers_text).unwrap_or_default());
    f.set(
        "seed",
        match &sim.seed {
            Some(Whole::Number(v)) => v.to_string(),
            Some(Whole::Text(t)) => t.clone(),
            None => String::new(),
        },
    );
    let imp = spec.implementation.clone().unwrap_or_default();
    f.set("sample_time", imp.sample_time.as_ref().map(scalar_text).unwrap_or_default());
    f.set("computation_delay", if imp.computation_delay == Some(true) { "true" } else { "false" });
    f.set("delay_poles", imp.delay_poles.as_ref().map(poles_text).unwrap_or_default());
    let obs = spec.observer.as_ref();
    f.set(
        "observer",
        match obs {
            None => "none",
            Some(o) if o.poles.is_some() => "poles",
            Some(_) => "speed_factor",
        },
    );
    f.set("observer_poles", obs.and_then(|o| o.poles.as_ref()).map(poles_text).unwrap_or_default());
    f.set("observer_speed", obs.and_then(|o| o.speed_factor.as_ref()).map(scalar_text).unwrap_or_default());
    f.set("observer_form", if obs.and_then(|o| o.form) == Some(ObserverFormChoice::Current) { "current" } else { "predictor" });
    let tr = spec.tracking.as_ref();
    f.set("tracking", tr.map_or("none", |t| serde_name_static(&t.mode)));
    f.set("tracking_feedforward", if tr.and_then(|t| t.feedforward) == Some(true) { "true" } else { "false" });
    f.set(
        "tracked_outputs",
        tr.and_then(|t| t.outputs.as_ref())
            .map(|o| match o {
                OutputList::Text(s) => s.clone(),
                OutputList::List(items) => items
                    .iter()
                    .map(|r| match r {
                        OutputRef::Name(s) => s.clone(),
                        OutputRef::Number(k) => k.to_string(),
                    })
                    .collect::<Vec<_>>()
                    .join(", "),
            })
            .unwrap_or_default(),
    );
    f.set("integral_poles", tr.and_then(|t| t.integral_poles.as_ref()).map(poles_text).unwrap_or_default());
    let aw = spec.anti_windup.as_ref();
    f.set("anti_windup", aw.map_or("none", |a| serde_name_static(&a.mode)));
    f.set("anti_windup_time", aw.and_then(|a| a.time_constant.as_ref()).map(scalar_text).unwrap_or_default());
}

/// The serialised name of a unit enum variant (`"back_calculation"`).
fn serde_name<T: serde::Serialize>(v: &T) -> String {
    match serde_json::to_value(v) {
        Ok(serde_json::Value::String(s)) => s,
        _ => String::new(),
    }
}

fn serde_name_static<T: serde::Serialize>(v: &T) -> &'static str {
    match serde_name(v).as_str() {
        "feedforward" => "feedforward",
        "integral" => "integral",
        "clamp" => "clamp",
        "back_calculation" => "back_calculation",
        _ => "none",
    }
}
