//! Typed paths of the design document's fields.
//!
//! Every input error carries a [`FieldPath`]: the page maps it to its control through one table
//! (the `paths` of the form-field table, `form/fields.rs` in the page crate), the CLI prints its dotted name (`plant.a`, `feedback.poles`). The dotted
//! names are the design file's own keys, so a message always points at text the user can find.

use serde::{Serialize, Serializer};

macro_rules! field_paths {
    ($( $(#[$doc:meta])* $variant:ident => $dotted:literal ),* $(,)?) => {
        /// A field (or section) of the design document.
        #[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
        pub enum FieldPath {
            $( $(#[$doc])* $variant, )*
            /// One situation of `search.situations` (0-based index).
            SearchSituation(usize),
        }

        impl FieldPath {
            /// Every path with a fixed name, in document order.
            pub const ALL: &'static [FieldPath] = &[ $( FieldPath::$variant, )* ];

            /// The dotted name as in the design file (`plant.a`).
            pub fn dotted(self) -> String {
                match self {
                    $( FieldPath::$variant => $dotted.to_string(), )*
                    FieldPath::SearchSituation(i) => format!("search.situations[{}]", i + 1),
                }
            }

            /// The path of a dotted name; `search.situations[k]` (1-based) included.
            pub fn from_dotted(text: &str) -> Option<FieldPath> {
                match text {
                    $( $dotted => Some(FieldPath::$variant), )*
                    other => {
                        let k = other.strip_prefix("search.situations[")?.strip_suffix(']')?.parse::<usize>().ok()?;
                        (k >= 1).then(|| FieldPath::SearchSituation(k - 1))
                    }
                }
            }
        }
    };
}

field_paths! {
    /// The document as a whole (not valid JSON, truncated, too large).
    Document => "(file)",
    Format => "format",
    Version => "version",
    Title => "title",
    Notes => "notes",
    Plant => "plant",
    PlantA => "plant.a",
    PlantB => "plant.b",
    PlantC => "plant.c",
    PlantD => "plant.d",
    PlantE => "plant.e",
    PlantStateNames => "plant.state_names",
    PlantStateUnits => "plant.state_units",
    PlantStateLimits => "plant.state_limits",
    PlantInputNames => "plant.input_names",
    PlantInputUnits => "plant.input_units",
    PlantOutputNames => "plant.output_names",
    PlantOutputUnits => "plant.output_units",
    PlantSampleTime => "plant.sample_time",
    Feedback => "feedback",
    FeedbackPoles => "feedback.poles",
    FeedbackPlane => "feedback.plane",
    Pattern => "feedback.pattern",
    PatternFamily => "feedback.pattern.family",
    PatternNormalisation => "feedback.pattern.normalisation",
    PatternSettlingTime => "feedback.pattern.settling_time",
    PatternBandwidth => "feedback.pattern.bandwidth",
    PatternBand => "feedback.pattern.band",
    Spec => "feedback.spec",
    SpecOvershoot => "feedback.spec.overshoot",
    SpecSettlingTime => "feedback.spec.settling_time",
    SpecBand => "feedback.spec.band",
    SpecRiseTime => "feedback.spec.rise_time",
    SpecBandwidth => "feedback.spec.bandwidth",
    Lqr => "feedback.lqr",
    LqrQ => "feedback.lqr.q",
    LqrR => "feedback.lqr.r",
    LqrS => "feedback.lqr.s",
    LqrBryson => "feedback.lqr.bryson",
    LqrMaxState => "feedback.lqr.bryson.max_state",
    LqrMaxInput => "feedback.lqr.bryson.max_input",
    Actuators => "actuators",
    ActuatorLimits => "actuators.limit",
    Simulation => "simulation",
    InitialState => "simulation.initial_state",
    Duration => "simulation.duration",
    Band => "simulation.band",
    Reference => "simulation.reference",
    ReferenceTime => "simulation.reference_time",
    Disturbance => "simulation.disturbance",
    DisturbanceTime => "simulation.disturbance_time",
    NoiseStd => "simulation.noise_std",
    Seed => "simulation.seed",
    InitialEstimate => "simulation.initial_estimate",
    Implementation => "implementation",
    SampleTime => "implementation.sample_time",
    Method => "implementation.method",
    ComputationDelay => "implementation.computation_delay",
    DelayPoles => "implementation.delay_poles",
    Observer => "observer",
    ObserverPoles => "observer.poles",
    ObserverSpeedFactor => "observer.speed_factor",
    ObserverForm => "observer.form",
    Tracking => "tracking",
    TrackingMode => "tracking.mode",
    TrackingFeedforward => "tracking.feedforward",
    TrackedOutputs => "tracking.outputs",
    IntegralPoles => "tracking.integral_poles",
    AntiWindup => "anti_windup",
    AntiWindupMode => "anti_windup.mode",
    AntiWindupTime => "anti_windup.time_constant",
    Search => "search",
    SearchFastest => "search.fastest_within_limits",
    SearchSituations => "search.situations",
    Robustness => "robustness",
    DiskSkew => "robustness.disk_skew",
    SensitivityEntry => "robustness.sensitivity_entry",
    Uncertainty => "robustness.uncertainty",
    UncertainEntries => "robustness.uncertainty.entries",
    UncertaintySamples => "robustness.uncertainty.samples",
    UncertaintySeed => "robustness.uncertainty.seed",
}

impl FieldPath {
    /// The closest known path of a dotted name from a parser: the name itself, or its longest
    /// known prefix (`plant.a[3]` → `plant.a`), or the whole document.
    pub fn nearest(text: &str) -> FieldPath {
        let mut t = text;
        loop {
            if let Some(p) = FieldPath::from_dotted(t) {
                return p;
            }
            match t.rfind(['.', '[']) {
                Some(i) if i > 0 => {
                    // Keep `search.situations[k]` whole when it is the prefix.
                    if let Some(j) = t[..i].rfind(']') {
                        if let Some(p) = FieldPath::from_dotted(&t[..=j]) {
                            return p;
                        }
                    }
                    t = &t[..i];
                }
                _ => return FieldPath::Document,
            }
        }
    }
}

impl std::fmt::Display for FieldPath {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(&self.dotted())
    }
}

impl Serialize for FieldPath {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        s.serialize_str(&self.dotted())
    }
}
