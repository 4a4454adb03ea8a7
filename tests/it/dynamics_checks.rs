//! Property checks of the derivative function on every demo vehicle.

use std::path::Path;

use hoverline::atmosphere::Atmosphere;
use hoverline::dynamics::{evaluate, Controls, Evaluation, State, Wind};
use hoverline::vehicle::{load_vehicle, Vehicle};
use proptest::prelude::*;

fn demo() -> Vec<Vehicle> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("vehicles");
    [
        "tilt-wing-courier",
        "tilt-rotor-mapper",
        "lift-cruise-surveyor",
        "tail-sitter-wing",
    ]
    .iter()
    .map(|n| load_vehicle(&dir.join(format!("{n}.toml"))).expect("demo vehicle"))
    .collect()
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(400))]

    // Common practice, no source: the model must return finite accelerations for any finite
    // state and control within the actuator limits, hover and reversed flow included.
    #[test]
    fn derivatives_are_finite_for_any_finite_state(
        u in -80.0f64..80.0, w in -80.0f64..80.0, q in -5.0f64..5.0, theta in -3.2f64..3.2,
        t in 0.0f64..1.0, d in 0.0f64..1.0, tilt in 0.0f64..1.0, wx in -15.0f64..15.0, wz in -10.0f64..10.0,
        which in 0usize..4,
    ) {
        let vs = demo();
        let v = &vs[which];
        let mut c = Controls::zeros(v);
        for (g, r) in v.rotors.iter().enumerate() { c.thrust_n[g] = t * r.thrust_max_n; }
        for (k, e) in v.elevators.iter().enumerate() { c.elevator_rad[k] = e.min_rad + d * (e.max_rad - e.min_rad); }
        for (k, a) in v.actuators.iter().enumerate() { c.tilt_rad[k] = a.min_rad + tilt * (a.max_rad - a.min_rad); }
        let s = State { u_mps: u, w_mps: w, q_rad_s: q, theta_rad: theta };
        let mut e = Evaluation::default();
        evaluate(v, &Atmosphere::sea_level(), &s, &c, Wind { x_mps: wx, z_mps: wz }, &mut e);
        for x in e.state_dot { prop_assert!(x.is_finite()); }
        prop_assert!(e.power_w.is_finite() && e.power_w >= 0.0);
        prop_assert!(e.x_dot_mps.is_finite() && e.h_dot_mps.is_finite());
    }
}

#[test]
fn gravity_alone_accelerates_down_at_g() {
    // Source: Newton's second law in body axes (Etkin and Reid, Dynamics of Flight, ch. 4):
    // with no airspeed, no thrust and level attitude, dw/dt = g and du/dt = dq/dt = 0.
    for v in demo() {
        let c = Controls::zeros(&v);
        let mut e = Evaluation::default();
        evaluate(
            &v,
            &Atmosphere::sea_level(),
            &State::default(),
            &c,
            Wind::default(),
            &mut e,
        );
        assert!(
            (e.state_dot[1] - hoverline::atmosphere::G0_MPS2).abs() < 1e-12,
            "{}",
            v.name
        );
        assert!(e.state_dot[0].abs() < 1e-12 && e.state_dot[2].abs() < 1e-12);
    }
}
