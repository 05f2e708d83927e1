//! Design warnings: a stable code for scripts and a plain sentence for people.
//!
//! | code | when |
//! |---|---|
//! | `requested-pole-unstable` | a requested pole has a positive real part |
//! | `requested-pole-on-axis` | a requested pole lies on the imaginary axis (within the analysis tolerance) |
//! | `fragile-design` | `κ₂(D⁻¹X)` in balanced coordinates (independent of the state units) above [`WarningParams::fragile_condition`] (default 1e4): small model errors move the poles far |
//! | `fast-pole` | a requested pole more than [`WarningParams::fast_pole_ratio`] (default 20) times faster than the plant's own dynamics (`‖A‖₂`): expect large gains and noise amplification |
//! | `input-over-limit` | the commanded input from the initial state exceeds its actuator limit |
//! | `weakly-controllable` | an open-loop mode with a PBH margin below the weak threshold (default 1e-6) |
//! | `weakly-observable` | the same for observability |
//! | `uncontrollable-modes` | the plant is stabilisable but not controllable: fixed modes stay put |
//! | `dependent-inputs` | `B` has dependent columns (rank < inputs) |
//! | `placement-inaccurate` | achieved poles differ from the request by more than 1e-6 (relative) |
//! | `not-settled` | a state has not settled within the simulated horizon |
//! | `simulation-diverged` | the simulated state grew without bound |
//! | `analysis-inconsistent` | the staircase and PBH tests disagree (borderline controllability) |
//! | `not-converged` | the eigenvector optimisation stopped at its sweep limit |

use serde::Serialize;

/// Thresholds behind the warnings.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct WarningParams {
    /// `κ₂(X)` above which a design is called fragile. Default `1e4`.
    pub fragile_condition: f64,
    /// Ratio `|λ| / ‖A‖₂` above which a requested pole is called far faster than the plant. Default 20.
    pub fast_pole_ratio: f64,
    /// Relative pole error above which placement is called inaccurate. Default `1e-6`.
    pub inaccurate_placement: f64,
}

impl Default for WarningParams {
    fn default() -> Self {
        WarningParams { fragile_condition: 1e4, fast_pole_ratio: 20.0, inaccurate_placement: 1e-6 }
    }
}

/// One warning.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Warning {
    /// Stable, machine-readable code (see the module table).
    pub code: &'static str,
    /// A plain sentence.
    pub message: String,
}

impl Warning {
    pub fn new(code: &'static str, message: impl Into<String>) -> Self {
        Warning { code, message: message.into() }
    }
}
