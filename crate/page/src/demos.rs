//! Demonstration plants for the page, as form text. All are invented, illustrative
//! scenarios (not models of any real product); their numbers are round, plausible values.
//!
//! 1. A belt-driven positioning axis with a flexibly coupled tool head (the plant of
//!    `examples/belt-axis.json`): 4 states, 1 input.
//! 2. A two-zone heated plate with one heater under each zone: 4 states, 2 inputs.
//! 3. The belt axis of demo 1 as a 1 kHz digital controller with a position encoder on the
//!    tool head, an observer, integral action with clamping anti-windup, a reference step and
//!    a load step (the design of `examples/belt-axis-digital.json`).
//! 4. A small tilting mirror driven by a voice coil, its poles chosen from a specification
//!    (5 % overshoot, 50 ms settling) instead of listed: 3 states, 1 input.

use serde::Serialize;

use crate::form::FormInput;

/// One demonstration: a title, a one-sentence description (saying "Illustrative") and the form text.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Demo {
    pub title: &'static str,
    pub description: &'static str,
    pub form: FormInput,
}

/// Title and description only, for the page's selector.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DemoInfo {
    pub title: &'static str,
    pub description: &'static str,
}

fn belt_axis() -> Demo {
    // Carriage m1 = 2.4 kg, head m2 = 0.6 kg, coupling stiffness k = 900 N/m and damping
    // c = 1.5 N s/m, carriage viscous friction 4 N s/m, motor force on the carriage.
    // Row 2: (-k, -(4 + c), k, c) / m1; row 4: (k, c, -k, -c) / m2; B = 1/m1 on row 2.
    Demo {
        title: "Belt-driven positioning axis with a flexible tool head",
        description: "Illustrative, invented scenario: a 2.4 kg carriage pulled by a belt motor (at most 60 N) carries a 0.6 kg tool head on a springy coupling (900 N/m); the feedback returns both from a 50 mm offset while damping the coupling's wobble.",
        form: FormInput {
            a: "0 1 0 0\n-375 -2.291666666666667 375 0.625\n0 0 0 1\n1500 2.5 -1500 -2.5".into(),
            b: "0\n0.4166666666666667\n0\n0".into(),
            c: String::new(),
            d: String::new(),
            state_names: "carriage position, carriage velocity, head position, head velocity".into(),
            state_units: "m, m/s, m, m/s".into(),
            input_names: "motor force".into(),
            input_units: "N".into(),
            poles: "-12±9j, -20±30j".into(),
            limits: "60".into(),
            initial_state: "0.05 0 0.05 0".into(),
            duration: String::new(),
            ..FormInput::default()
        },
    }
}

fn heated_plate() -> Demo {
    // Each zone: heat capacity 400 J/K, 0.5 K/W to its heater element (50 J/K), 2 K/W to the
    // other zone, 4 K/W to the surroundings. States are deviations from the set temperatures;
    // inputs are deviations of the heater powers from their steady values (at most ±150 W).
    //   zone:   dT1/dt = (H1 − T1)/(0.5·400) − (T1 − T2)/(2·400) − T1/(4·400)
    //   heater: dH1/dt = P1/50 − (H1 − T1)/(0.5·50)
    Demo {
        title: "Two-zone heated plate with two heaters",
        description: "Illustrative, invented scenario: an aluminium plate with two heated zones that leak heat into each other and the room; two 150 W heater corrections bring both zones back to their set temperatures after a cold start 4 K and 2 K below.",
        form: FormInput {
            a: "-0.006875 0.00125 0.005 0\n0.00125 -0.006875 0 0.005\n0.04 0 -0.04 0\n0 0.04 0 -0.04".into(),
            b: "0 0\n0 0\n0.02 0\n0 0.02".into(),
            c: "1 0 0 0\n0 1 0 0".into(),
            d: String::new(),
            state_names: "zone 1 temperature, zone 2 temperature, heater 1 temperature, heater 2 temperature".into(),
            state_units: "K, K, K, K".into(),
            input_names: "heater 1 power, heater 2 power".into(),
            input_units: "W, W".into(),
            poles: "-0.02, -0.025, -0.06±0.02j".into(),
            limits: "150, 150".into(),
            initial_state: "-4 -2 -4 -2".into(),
            duration: String::new(),
            ..FormInput::default()
        },
    }
}

fn belt_axis_digital() -> Demo {
    // The plant of demo 1 with an encoder on the tool head (C picks the head position), run by
    // a 1 kHz controller: zero-order-hold model, the s-plane targets mapped by z = e^{sT}, a
    // predictor observer 4 times faster, one integrator on the head position (pole at -10) with
    // conditional integration, a 10 mm step at 0.05 s and a 5 N load on the carriage at 0.6 s.
    let axis = belt_axis().form;
    Demo {
        title: "Belt axis with a 1 kHz digital controller, observer and integral action",
        description: "Illustrative, invented scenario: the belt axis above with only an encoder on the tool head; a 1 kHz controller estimates the other states with an observer, holds the head on a 10 mm step with integral action (clamped while the motor saturates) and rejects a 5 N load applied after 0.6 s. Its margins at the motor input are small (about ±22° of phase, see the warning): the encoder sits beyond the belt's flexibility and the observer closes the loop through it — a design to study, not to copy.",
        form: FormInput {
            c: "0 0 1 0".into(),
            output_names: "head position".into(),
            output_units: "m".into(),
            poles: "-12±9j, -20±30j".into(),
            initial_state: String::new(),
            duration: "1.2".into(),
            observer: "speed_factor".into(),
            observer_speed: "4".into(),
            observer_form: "predictor".into(),
            tracking: "integral".into(),
            tracked_outputs: "head position".into(),
            integral_poles: "-10".into(),
            anti_windup: "clamp".into(),
            sample_time: "0.001".into(),
            computation_delay: "false".into(),
            plane: "s".into(),
            reference: "0.01".into(),
            reference_time: "0.05".into(),
            disturbance: "5".into(),
            disturbance_time: "0.6".into(),
            ..axis
        },
    }
}

fn tilting_mirror() -> Demo {
    // Mirror inertia J = 2e-4 kg m² on a flexure of stiffness 0.05 N m/rad with damping
    // 1e-4 N m s/rad, torque constant 0.02 N m/A; coil resistance 2 Ω and inductance 2 mH.
    //   J θ'' = −0.05 θ − 1e-4 θ' + 0.02 i   →   ω' = −250 θ − 0.5 ω + 100 i
    //   L i' = v − R i                        →   i' = −1000 i + 500 v
    Demo {
        title: "Tilting mirror with a voice coil, poles from a specification",
        description: "Illustrative, invented scenario: a small mirror on a springy flexure, tilted by a voice coil driven with at most 12 V; instead of listing poles, the design asks for at most 5 % overshoot and settling within 50 ms, and returns the mirror from a 20 mrad offset. The disk margin at the coil guarantees about ±32° of phase, just under the common ±35° (see the warning).",
        form: FormInput {
            a: "0 1 0\n-250 -0.5 100\n0 0 -1000".into(),
            b: "0\n0\n500".into(),
            state_names: "mirror angle, mirror rate, coil current".into(),
            state_units: "rad, rad/s, A".into(),
            input_names: "coil voltage".into(),
            input_units: "V".into(),
            pole_source: "specification".into(),
            spec_overshoot: "5".into(),
            spec_settling_time: "0.05".into(),
            limits: "12".into(),
            initial_state: "0.02 0 0".into(),
            ..FormInput::default()
        },
    }
}

/// Every demonstration, in the order the page lists them (the first is loaded on first open).
pub fn demos() -> Vec<Demo> {
    vec![belt_axis(), heated_plate(), belt_axis_digital(), tilting_mirror()]
}

/// Titles and descriptions, in order.
pub fn demo_list() -> Vec<DemoInfo> {
    demos().into_iter().map(|d| DemoInfo { title: d.title, description: d.description }).collect()
}

/// Demonstration `index`, if there is one.
pub fn demo(index: usize) -> Option<Demo> {
    demos().into_iter().nth(index)
}

#[cfg(test)]
#[path = "tests/demos.rs"]
mod tests;
