//! The page form's fields: one table gives each field its key (the control's id is
//! `pw-<key>`), its label in messages and, for a choice, its allowed values (the first is what
//! a blank field means). The struct, the key list, the lookups and the labels all come from
//! this one table, so a field is added in one place.

use serde::{Deserialize, Serialize};

macro_rules! form_fields {
    ($( $(#[$doc:meta])* $key:ident => $label:literal $([$($choice:literal),+])? ),* $(,)?) => {
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
    title => "title",
    /// Free-text notes (saved in the document).
    notes => "notes",
    a => "A",
    b => "B",
    state_names => "state names",
    state_units => "state units",
    input_names => "input names",
    input_units => "input units",
    c => "C",
    d => "D",
    output_names => "output names",
    output_units => "output units",
    poles => "desired poles",
    pole_source => "pole choice" ["list", "pattern", "specification", "lqr"],
    pattern_family => "pattern" ["bessel", "butterworth", "itae", "binomial"],
    pattern_normalisation => "Bessel normalisation" ["unit_settling_time", "unit_group_delay", "half_power_at_unit_frequency"],
    pattern_settling_time => "pattern settling time",
    spec_overshoot => "overshoot",
    spec_settling_time => "settling time",
    spec_rise_time => "rise time",
    settling_band => "settling band" ["2", "1", "5"],
    lqr_max_state => "state excursions",
    lqr_max_input => "input excursions",
    search => "fastest-design search" ["false", "true"],
    limits => "actuator limits",
    initial_state => "initial state",
    duration => "simulated time",
    observer => "observer" ["none", "poles", "speed_factor"],
    observer_poles => "observer poles",
    observer_speed => "observer speed factor",
    observer_form => "observer form" ["predictor", "current"],
    tracking => "tracking" ["none", "feedforward", "integral"],
    tracked_outputs => "tracked outputs",
    integral_poles => "integrator poles",
    anti_windup => "anti-windup" ["none", "clamp", "back_calculation"],
    anti_windup_time => "anti-windup time constant",
    sample_time => "sample time",
    computation_delay => "computation delay" ["false", "true"],
    delay_poles => "delay poles",
    plane => "pole plane" ["s", "z"],
    reference => "reference",
    reference_time => "reference step time",
    disturbance => "load disturbance",
    disturbance_time => "load step time",
    noise_std => "measurement noise",
    seed => "noise seed",
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
