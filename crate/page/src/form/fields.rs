//! The page form's fields: one table gives each field its key (the control's id is
//! `pw-<key>`), its label in messages, for a choice its allowed values (the first is what a
//! blank field means), and the paths of the design document it shows (so that an input error
//! of the rulebook finds its control). The struct, the key list, the lookups and the labels all come from
//! this one table, so a field is added in one place.

use serde::{Deserialize, Serialize};

use crate::design::FieldPath;

macro_rules! form_fields {
    ($( $(#[$doc:meta])* $key:ident => $label:literal $([$($choice:literal),+])? @ [$($path:ident),*] ),* $(,)?) => {
        /// The form's fields, as typed. Every field may be omitted (it is then blank).
        #[derive(Debug, Clone, Default, PartialEq, Eq, Serialize, Deserialize)]
        #[serde(default, deny_unknown_fields)]
        pub struct FormInput {
            $( $(#[$doc])* pub $key: String, )*
        }

        impl FormInput {
            /// How many fields the form has.
            pub const COUNT: usize = [$(stringify!($key)),*].len();

            /// The field keys, in page order.
            pub const FIELDS: [&'static str; Self::COUNT] = [$(stringify!($key)),*];

            fn slot(&self, key: &str) -> Option<&String> {
                match key {
                    $( stringify!($key) => Some(&self.$key), )*
                    _ => None,
                }
            }

            fn slot_mut(&mut self, key: &str) -> Option<&mut String> {
                match key {
                    $( stringify!($key) => Some(&mut self.$key), )*
                    _ => None,
                }
            }

            /// The field's name in messages ("desired poles"); "a field" for an unknown key.
            pub fn label(key: &str) -> &'static str {
                match key {
                    $( stringify!($key) => $label, )*
                    _ => "a field",
                }
            }

            /// The paths of the design document this field shows (its errors come here).
            pub fn paths(key: &str) -> &'static [FieldPath] {
                match key {
                    $( stringify!($key) => &[$(FieldPath::$path),*], )*
                    _ => &[],
                }
            }

            /// The allowed values of a choice field (the first is what blank means); `None`
            /// for a text field or an unknown key.
            pub fn choices(key: &str) -> Option<&'static [&'static str]> {
                match key {
                    $( $( stringify!($key) => Some(&[$($choice),+]), )? )*
                    _ => None,
                }
            }
        }
    };
}

form_fields! {
    /// The design's title (saved in the document; no effect on the numbers).
    title => "title" @ [Title],
    /// Free-text notes (saved in the document).
    notes => "notes" @ [Notes],
    a => "A" @ [PlantA],
    b => "B" @ [PlantB],
    state_names => "state names" @ [PlantStateNames],
    state_units => "state units" @ [PlantStateUnits],
    state_limits => "state limits" @ [PlantStateLimits],
    input_names => "input names" @ [PlantInputNames],
    input_units => "input units" @ [PlantInputUnits],
    c => "C" @ [PlantC],
    d => "D" @ [PlantD],
    output_names => "output names" @ [PlantOutputNames],
    output_units => "output units" @ [PlantOutputUnits],
    poles => "desired poles" @ [FeedbackPoles],
    pole_source => "pole choice" ["list", "pattern", "specification", "lqr"] @ [Feedback, Spec, SpecBandwidth],
    pattern_family => "pattern" ["bessel", "butterworth", "itae", "binomial"] @ [Pattern, PatternFamily, PatternBandwidth],
    pattern_normalisation => "Bessel normalisation" ["unit_settling_time", "unit_group_delay", "half_power_at_unit_frequency"] @ [PatternNormalisation],
    pattern_settling_time => "pattern settling time" @ [PatternSettlingTime],
    spec_overshoot => "overshoot" @ [SpecOvershoot],
    spec_settling_time => "settling time" @ [SpecSettlingTime],
    spec_rise_time => "rise time" @ [SpecRiseTime],
    settling_band => "settling band" ["2", "1", "5"] @ [PatternBand, SpecBand, Band],
    lqr_max_state => "state excursions" @ [Lqr, LqrQ, LqrBryson, LqrMaxState],
    lqr_max_input => "input excursions" @ [LqrR, LqrMaxInput],
    search => "fastest-design search" ["false", "true"] @ [Search, SearchFastest, SearchSituations],
    limits => "actuator limits" @ [Actuators, ActuatorLimits],
    initial_state => "initial state" @ [InitialState],
    duration => "simulated time" @ [Simulation, Duration],
    observer => "observer" ["none", "poles", "speed_factor"] @ [Observer],
    observer_poles => "observer poles" @ [ObserverPoles],
    observer_speed => "observer speed factor" @ [ObserverSpeedFactor],
    observer_form => "observer form" ["predictor", "current"] @ [ObserverForm],
    tracking => "tracking" ["none", "feedforward", "integral"] @ [Tracking, TrackingMode],
    tracked_outputs => "tracked outputs" @ [TrackedOutputs],
    integral_poles => "integrator poles" @ [IntegralPoles],
    tracking_feedforward => "feedforward with integral action" ["false", "true"] @ [TrackingFeedforward],
    anti_windup => "anti-windup" ["none", "clamp", "back_calculation"] @ [AntiWindup, AntiWindupMode],
    anti_windup_time => "anti-windup time constant" @ [AntiWindupTime],
    sample_time => "sample time" @ [Implementation, SampleTime, Method],
    computation_delay => "computation delay" ["false", "true"] @ [ComputationDelay],
    delay_poles => "delay poles" @ [DelayPoles],
    plane => "pole plane" ["s", "z"] @ [FeedbackPlane],
    reference => "reference" @ [Reference],
    reference_time => "reference step time" @ [ReferenceTime],
    disturbance => "load disturbance" @ [Disturbance],
    disturbance_input => "disturbance input E" @ [PlantE],
    disturbance_time => "load step time" @ [DisturbanceTime],
    noise_std => "measurement noise" @ [NoiseStd],
    seed => "noise seed" @ [Seed],
    disk_skew => "disk skew" @ [Robustness, DiskSkew],
    sensitivity_entry => "sensitivity entry" @ [SensitivityEntry],
    uncertain_entries => "uncertain parameters" @ [Uncertainty, UncertainEntries],
    uncertainty_samples => "samples" @ [UncertaintySamples],
    uncertainty_seed => "sample seed" @ [UncertaintySeed],
}

impl FormInput {
    /// The text of field `key` (`None` for an unknown key).
    pub fn get(&self, key: &str) -> Option<&str> {
        self.slot(key).map(|s| s.as_str())
    }

    /// Sets field `key`; returns false for an unknown key.
    pub fn set(&mut self, key: &str, text: impl Into<String>) -> bool {
        match self.slot_mut(key) {
            Some(slot) => {
                *slot = text.into();
                true
            }
            None => false,
        }
    }
}
