//! Checks of the transition flight in time (`hoverline::flight`) and of the loop margins
//! (`hoverline::loops`) against kinematics, textbook flight dynamics, the published gust shape
//! and closed-form control-theory results.

use std::path::{Path, PathBuf};

use hoverline::atmosphere::{isa, G0_MPS2};
use hoverline::control::loops::{closed_loop, frequency_margins, loop_margins, Siso};
use hoverline::dynamics::{Controls, State};
use hoverline::flight::wind::{discrete_gust, full_gust};
use hoverline::flight::{
    fly_open_loop, fly_perturbed, FeedforwardTable, FlightSettings, Manoeuvre,
};
use hoverline::linear::{linearise, modes};
use hoverline::scenario::{
    load_scenario, FlightFile, GustDirection, GustFile, GustShape, TransitionFile,
};
use hoverline::sweep::{run_sweep, SweepSettings};
use hoverline::trim::{trim, Condition, Objective, TiltSetting, TrimRequest};
use hoverline::vehicle::{load_vehicle, Point, Reference, Vehicle};
use nalgebra::{Complex, DMatrix, DVector};

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn settings_with(f: FlightFile) -> FlightSettings {
    FlightSettings::from_file(&f, &TransitionFile::default(), 0.0).expect("valid settings")
}

/// A point mass with pitch inertia and nothing else: no surfaces, no rotors.
fn bare_body() -> Vehicle {
    Vehicle {
        name: "bare body".into(),
        description: String::new(),
        mass_kg: 10.0,
        pitch_inertia_kg_m2: 1.0,
        cg: Point::default(),
        reference: Reference {
            area_m2: 1.0,
            chord_m: 1.0,
            span_m: 1.0,
            leading_edge_x_m: 0.0,
        },
        actuators: vec![],
        elevators: vec![],
        surfaces: vec![],
        rotors: vec![],
        derivatives: None,
        attitude: hoverline::vehicle::AttitudeLimits::constant(-1.5, 1.5, true),
    }
}

// ---------------------------------------------------------------------------------------------
// Free fall
// ---------------------------------------------------------------------------------------------

#[test]
fn free_fall_follows_the_kinematics_to_the_integrator_tolerance() {
    // Source: Newtonian kinematics of a body in uniform gravity, h = h0 - g t^2 / 2 and
    // x = x0 + u0 t; g = 9.80665 m/s^2 (standard gravity, 3rd CGPM 1901). With no aerodynamics
    // and no thrust the attitude stays as set, so the body-axis velocities rotate gravity in and
    // out and the earth-axis result must still be exact.
    let v = bare_body();
    let atm = isa(3000.0, 0.0).unwrap();
    let s = settings_with(FlightFile {
        relative_tolerance: 1e-10,
        absolute_tolerance: 1e-10,
        sample_step_s: 0.05,
        ..Default::default()
    });
    let theta: f64 = 0.3;
    let (u0, h_speed): (f64, f64) = (6.0, 0.0);
    // Earth velocity (6 m/s forward, 0 vertical) expressed in body axes at theta.
    let initial = State {
        u_mps: u0 * theta.cos() + h_speed * theta.sin(),
        w_mps: u0 * theta.sin() - h_speed * theta.cos(),
        q_rad_s: 0.0,
        theta_rad: theta,
    };
    let f = fly_open_loop(&v, &atm, &s, &initial, &Controls::zeros(&v), 20.0).unwrap();
    assert!(f.summary.stopped.is_none(), "{:?}", f.summary.stopped);
    let last = f.samples.last().unwrap();
    assert!((last.time_s - 20.0).abs() < 1e-12, "end time recorded");
    let mut worst: f64 = 0.0;
    for x in &f.samples {
        let t = x.time_s;
        let h = -0.5 * G0_MPS2 * t * t;
        let xx = u0 * t;
        worst = worst.max((x.height_m - h).abs()).max((x.x_m - xx).abs());
        assert!((x.state.theta_rad - theta).abs() < 1e-12);
    }
    // 1961 m of fall: the error must stay at the integrator's tolerance, relative 1e-9.
    assert!(
        worst < 1e-9 * 0.5 * G0_MPS2 * 400.0 + 1e-6,
        "worst error {worst} m"
    );
}

// ---------------------------------------------------------------------------------------------
// Phugoid
// ---------------------------------------------------------------------------------------------

/// Times and values of the local maxima of `y(t)` (parabolic interpolation).
fn peaks(t: &[f64], y: &[f64]) -> Vec<(f64, f64)> {
    let mut out = Vec::new();
    for k in 1..y.len() - 1 {
        if y[k] > y[k - 1] && y[k] >= y[k + 1] {
            let (a, b, c) = (y[k - 1], y[k], y[k + 1]);
            let den = a - 2.0 * b + c;
            let d = if den.abs() > 0.0 {
                0.5 * (a - c) / den
            } else {
                0.0
            };
            let h = t[k + 1] - t[k];
            out.push((t[k] + d * h, b - 0.25 * (a - c) * d));
        }
    }
    out
}

#[test]
fn phugoid_matches_the_linear_model_and_lanchester() {
    // Sources: the linear model's phugoid eigenvalue (Etkin and Reid, Dynamics of Flight, 3rd
    // ed. 1996, ch. 6: small perturbations about a trim follow the linearised equations), and
    // Lanchester's phugoid period T = pi sqrt(2) U / g (Lanchester 1908, restated by Etkin and
    // Reid; CHECK-VALUES §6), expected within 10 % for L/D > 10 when pitch stiffness dominates.
    let v = load_vehicle(&root().join("tests/data/phugoid-airplane.toml")).unwrap();
    let atm = isa(0.0, 0.0).unwrap();
    let speed = 40.0;
    let req = TrimRequest {
        speed_mps: speed,
        climb_rad: 0.0,
        tilt: TiltSetting::Fixed(vec![]),
        pitch_rad: None,
        condition: Condition::Steady,
        objective: Objective::Power,
    };
    let sol = trim(&v, &atm, &req, None, true);
    assert!(sol.trimmed(), "{:?}", sol.reasons);
    let lift: f64 = sol.evaluation.surfaces.iter().map(|s| s.lift_n).sum();
    let drag: f64 = sol.evaluation.surfaces.iter().map(|s| s.drag_n).sum();
    assert!(lift / drag > 10.0, "L/D {}", lift / drag);
    let lin = linearise(&v, &atm, &sol.state, &sol.controls);
    let ph = modes(&lin.a, speed, true)
        .into_iter()
        .find(|m| m.name == "phugoid")
        .expect("a phugoid");
    let (sigma_lin, wd_lin) = (ph.real_per_s, ph.imag_rad_s);

    // Simulate a small speed upset with the trim commands held.
    let s = settings_with(FlightFile {
        relative_tolerance: 1e-10,
        absolute_tolerance: 1e-10,
        sample_step_s: 0.02,
        ..Default::default()
    });
    let mut initial = sol.state;
    initial.u_mps += 0.2;
    let f = fly_open_loop(&v, &atm, &s, &initial, &sol.controls, 110.0).unwrap();
    let t: Vec<f64> = f.samples.iter().map(|x| x.time_s).collect();
    let du: Vec<f64> = f
        .samples
        .iter()
        .map(|x| {
            x.state.u_mps * x.state.theta_rad.cos() + x.state.w_mps * x.state.theta_rad.sin()
                - speed
        })
        .collect();
    // Skip the short period (it is gone within a few seconds) and use whole periods.
    let pk: Vec<(f64, f64)> = peaks(&t, &du).into_iter().filter(|p| p.0 > 5.0).collect();
    assert!(pk.len() >= 4, "{} peaks", pk.len());
    let (a, b) = (pk[0], pk[pk.len() - 1]);
    let cycles = (pk.len() - 1) as f64;
    let period = (b.0 - a.0) / cycles;
    let sigma = (b.1 / a.1).ln() / (b.0 - a.0);
    let wd = 2.0 * std::f64::consts::PI / period;
    let rel = |x: f64, y: f64| (x - y).abs() / y.abs();
    assert!(
        rel(wd, wd_lin) < 0.02,
        "damped frequency {wd} vs linear {wd_lin}"
    );
    assert!(
        rel(sigma, sigma_lin) < 0.02,
        "decay rate {sigma} vs linear {sigma_lin}"
    );
    let lanchester = std::f64::consts::PI * 2f64.sqrt() * speed / G0_MPS2;
    let period_lin = 2.0 * std::f64::consts::PI / wd_lin;
    assert!(
        rel(period, lanchester) < 0.10,
        "simulated period {period} vs Lanchester {lanchester}"
    );
    assert!(
        rel(period_lin, lanchester) < 0.10,
        "linear period {period_lin} vs Lanchester {lanchester}"
    );
}

// ---------------------------------------------------------------------------------------------
// Hover hold and height step
// ---------------------------------------------------------------------------------------------

fn surveyor_table(
    f: FlightFile,
) -> (
    Vehicle,
    hoverline::atmosphere::Atmosphere,
    FeedforwardTable,
    FlightSettings,
) {
    let sc = load_scenario(&root().join("scenarios/surveyor-transition.toml")).unwrap();
    let atm = isa(
        sc.file.atmosphere.altitude_m,
        sc.file.atmosphere.temperature_offset_k,
    )
    .unwrap();
    let ss = SweepSettings {
        speeds_mps: vec![0.0, 1.0, 2.0],
        climb_rad: 0.0,
        schedule: sc.schedule.clone(),
        objective: Objective::Power,
        thresholds: sc.file.thresholds.clone(),
        gains: None,
        loop_model: hoverline::control::loops::LoopSettings::from_file(&sc.file.flight),
    };
    let sweep = run_sweep(&sc.vehicle, &atm, &ss, &|| {});
    let settings = settings_with(f);
    let table = FeedforwardTable::from_points(
        &sc.vehicle,
        hoverline::sweep::trim_points(&sc.vehicle, &sweep.points),
        &sc.schedule,
    )
    .unwrap();
    (sc.vehicle, atm, table, settings)
}

#[test]
fn hover_hold_stays_in_the_box_after_an_upset() {
    // Source: ADS-33E-PRF (US Army, 2000), hover mission-task element, desired performance in a
    // good visual environment: hold a stabilised hover for at least 30 s within +-3 ft (0.91 m)
    // of the reference position and +-2 ft (0.61 m) of the reference height (from memory).
    let (v, atm, table, s) = surveyor_table(FlightFile::default());
    let upset = State {
        u_mps: 0.3,
        w_mps: 0.2,
        q_rad_s: 0.0,
        theta_rad: 2f64.to_radians(),
    };
    let m = Manoeuvre::Hold {
        speed_mps: 0.0,
        duration_s: 30.0,
        height_step_m: 0.0,
        height_step_at_s: 0.0,
    };
    let f = fly_perturbed(&v, &atm, &table, &s, m, &upset, &|_| {}).unwrap();
    assert!(f.summary.stopped.is_none());
    assert!((f.samples.last().unwrap().time_s - 30.0).abs() < 1e-9);
    for x in &f.samples {
        assert!(x.x_m.abs() <= 0.91, "x {} m at {} s", x.x_m, x.time_s);
        assert!(
            x.height_m.abs() <= 0.61,
            "h {} m at {} s",
            x.height_m,
            x.time_s
        );
    }
    // And it comes back: no drift left at the end.
    let last = f.samples.last().unwrap();
    assert!(
        last.x_m.abs() < 0.05 && last.height_m.abs() < 0.02,
        "end x {} h {}",
        last.x_m,
        last.height_m
    );
}

/// Overshoot (fraction), peak time and 2 % settling time of a step response from `t0` to `y_final`.
fn step_figures(t: &[f64], y: &[f64], t0: f64, y_final: f64) -> (f64, f64, f64) {
    let mut peak = (0.0, f64::NEG_INFINITY);
    for (ti, yi) in t.iter().zip(y) {
        if *ti >= t0 && *yi > peak.1 {
            peak = (*ti, *yi);
        }
    }
    let settle = t
        .iter()
        .zip(y)
        .rev()
        .find(|(_, yi)| ((**yi - y_final) / y_final).abs() > 0.02)
        .map_or(t0, |(ti, _)| *ti);
    ((peak.1 - y_final) / y_final, peak.0 - t0, settle - t0)
}

/// Step response of the height design with a first-order actuator lag `tau` behind the
/// first-order Pade approximant of a delay `delay` (classical RK4, 1 ms steps):
/// a_cmd = k_h (1 - h) - k_hd h', z' = (a_cmd - z) 2 / delay, tau a' = (2 z - a_cmd) - a,
/// h'' = a; with `delay` = 0 the command goes to the lag directly.
fn designed_step(k_h: f64, k_hd: f64, tau: f64, delay: f64, t_end: f64) -> (Vec<f64>, Vec<f64>) {
    let f = |x: [f64; 4]| {
        let cmd = k_h * (1.0 - x[0]) - k_hd * x[1];
        let (delayed, dz) = if delay > 0.0 {
            (2.0 * x[3] - cmd, (cmd - x[3]) * 2.0 / delay)
        } else {
            (cmd, 0.0)
        };
        [x[1], x[2], (delayed - x[2]) / tau, dz]
    };
    let dt = 1e-3;
    let mut x = [0.0; 4];
    let (mut t, mut y) = (vec![0.0], vec![0.0]);
    let n = (t_end / dt) as usize;
    let add = |a: [f64; 4], b: [f64; 4], s: f64| std::array::from_fn(|i| a[i] + s * b[i]);
    for k in 1..=n {
        let k1 = f(x);
        let k2 = f(add(x, k1, 0.5 * dt));
        let k3 = f(add(x, k2, 0.5 * dt));
        let k4 = f(add(x, k3, dt));
        for i in 0..4 {
            x[i] += dt / 6.0 * (k1[i] + 2.0 * k2[i] + 2.0 * k3[i] + k4[i]);
        }
        t.push(k as f64 * dt);
        y.push(x[0]);
    }
    (t, y)
}

#[test]
fn height_step_settles_as_designed() {
    // Source: Franklin, Powell and Emami-Naeini, Feedback Control of Dynamic Systems, §3.3
    // (from memory): the step response of s^2 + 2 zeta w s + w^2 with no zero overshoots by
    // Mp = exp(-pi zeta / sqrt(1 - zeta^2)) and peaks at tp = pi / (w sqrt(1 - zeta^2)). The
    // height loop without integral (proportional on the error, rate on the measured height
    // rate) is exactly that closed loop by design. The design leaves out the rotors' thrust lag
    // (0.08 s on the lift+cruise demo) and the loop delay (20 ms, flown as its first-order Pade
    // approximant); with both added to the design model the flown step
    // must match it to 1 percentage point of overshoot, 5 % in peak time and 8 % in 2 %
    // settling time (the airframe's own heave response and the allocation are what remains;
    // settling time is the most sensitive of the three); the lag-free textbook figures
    // within 4 points and 5 %.
    let zeta = 0.5;
    let w = 1.0;
    let (v, atm, table, s) = surveyor_table(FlightFile {
        height_bandwidth_rad_s: w,
        height_damping: zeta,
        height_integral_ratio: 0.0,
        ..Default::default()
    });
    let tau = v
        .rotors
        .iter()
        .filter(|r| r.mounting_rad > 1.0)
        .map(|r| r.thrust_lag_s)
        .fold(0.0, f64::max);
    let m = Manoeuvre::Hold {
        speed_mps: 0.0,
        duration_s: 25.0,
        height_step_m: 1.0,
        height_step_at_s: 1.0,
    };
    let f = fly_perturbed(&v, &atm, &table, &s, m, &State::default(), &|_| {}).unwrap();
    let t: Vec<f64> = f.samples.iter().map(|x| x.time_s).collect();
    let h: Vec<f64> = f.samples.iter().map(|x| x.height_m).collect();
    let (mp, tp, ts) = step_figures(&t, &h, 1.0, 1.0);
    let (kh, khd, _) = s.gains.height_gains();
    let (td, yd) = designed_step(kh, khd, tau, s.loop_delay_s, 24.0);
    let (mp_d, tp_d, ts_d) = step_figures(&td, &yd, 0.0, 1.0);
    assert!(
        (mp - mp_d).abs() < 0.01,
        "overshoot {mp} vs design with lag {mp_d}"
    );
    assert!((tp - tp_d).abs() / tp_d < 0.05, "peak time {tp} vs {tp_d}");
    assert!((ts - ts_d).abs() / ts_d < 0.08, "settling {ts} vs {ts_d}");
    let mp_book = (-std::f64::consts::PI * zeta / (1.0 - zeta * zeta).sqrt()).exp();
    let tp_book = std::f64::consts::PI / (w * (1.0 - zeta * zeta).sqrt());
    assert!((mp - mp_book).abs() < 0.04, "overshoot {mp} vs {mp_book}");
    assert!(
        (tp - tp_book).abs() / tp_book < 0.05,
        "peak time {tp} vs {tp_book}"
    );
    let _ = ts;
}

// ---------------------------------------------------------------------------------------------
// Gust
// ---------------------------------------------------------------------------------------------

#[test]
fn discrete_gust_has_the_published_shape_and_peak() {
    // Source: MIL-F-8785C (1980), §3.7.3 discrete gust: v = 0 for x < 0,
    // v = (v_m / 2)(1 - cos(pi x / d_m)) for 0 <= x <= d_m, v = v_m beyond (from memory; the
    // same shape in MIL-HDBK-1797). The full 1-cosine gust (v_m/2)(1 - cos(pi x/d_m)) over
    // 0..2 d_m is the form of the certification gusts (CS-25.341).
    let (d, vm) = (25.0, 4.0);
    for k in 0..=100 {
        let x = -10.0 + 0.7 * k as f64;
        let book = if x < 0.0 {
            0.0
        } else if x <= d {
            0.5 * vm * (1.0 - (std::f64::consts::PI * x / d).cos())
        } else {
            vm
        };
        assert!(
            (discrete_gust(x, d, vm) - book).abs() < 1e-12,
            "ramp at {x}"
        );
        let full = if (0.0..=2.0 * d).contains(&x) {
            0.5 * vm * (1.0 - (std::f64::consts::PI * x / d).cos())
        } else {
            0.0
        };
        assert!((full_gust(x, d, vm) - full).abs() < 1e-12, "full at {x}");
    }
    assert_eq!(discrete_gust(d, d, vm), vm);
    assert!((full_gust(d, d, vm) - vm).abs() < 1e-12);
    assert!(full_gust(2.0 * d, d, vm).abs() < 1e-12);
}

#[test]
fn the_gust_reaches_the_flight_as_published() {
    // Source: MIL-F-8785C §3.7.3 (as above), placed in time by x = V_p (t - t0) with the
    // penetration speed V_p: an updraft is a negative downward air velocity.
    let v = bare_body();
    let atm = isa(2000.0, 0.0).unwrap();
    let g = GustFile {
        start_s: 1.0,
        direction: GustDirection::Up,
        amplitude_mps: 3.0,
        length_m: 10.0,
        shape: GustShape::Full,
        min_penetration_mps: 5.0,
    };
    let s = settings_with(FlightFile {
        gust: Some(g.clone()),
        ..Default::default()
    });
    let f = fly_open_loop(&v, &atm, &s, &State::default(), &Controls::zeros(&v), 6.0).unwrap();
    let mut peak: f64 = 0.0;
    for x in &f.samples {
        let xg = 5.0 * (x.time_s - 1.0);
        let book = if (0.0..=20.0).contains(&xg) {
            1.5 * (1.0 - (std::f64::consts::PI * xg / 10.0).cos())
        } else {
            0.0
        };
        assert!((-x.wind.z_mps - book).abs() < 1e-12, "t {}", x.time_s);
        peak = peak.max(-x.wind.z_mps);
    }
    assert!(
        (peak - 3.0).abs() < 1e-9,
        "peak {peak} at t = 3 s (a sample)"
    );
    assert!(f
        .events
        .iter()
        .any(|e| e.kind == "gust" && (e.time_s - 1.0).abs() < 1e-9));
}

// ---------------------------------------------------------------------------------------------
// Loop margins
// ---------------------------------------------------------------------------------------------

#[test]
fn margins_of_an_integrator_with_a_double_lag() {
    // Source: Franklin, Powell and Emami-Naeini, Feedback Control of Dynamic Systems, ch. 6
    // (from memory): L(s) = K / (s (s + 1)^2). Phase -90 - 2 atan(w) reaches -180 deg at
    // w = 1 rad/s where |L| = K / 2, so GM = 2 / K; the gain crossover solves w (1 + w^2) = K
    // and PM = 90 - 2 atan(w_c) deg; the delay margin is PM / w_c. Derived in closed form here.
    let k = 1.0;
    let l = |w: f64| {
        let s = Complex::new(0.0, w);
        Complex::new(k, 0.0) / (s * (s + 1.0) * (s + 1.0))
    };
    let m = frequency_margins(&l, 1e-3, 1e3);
    // w^3 + w - 1 = 0 by Cardano: w = cbrt(1/2 + sqrt(1/4 + 1/27)) + cbrt(1/2 - sqrt(1/4 + 1/27)).
    let r = (0.25f64 + 1.0 / 27.0).sqrt();
    let wc = (0.5 + r).cbrt() + (0.5 - r).cbrt();
    let pm = 90.0 - 2.0 * wc.atan().to_degrees();
    assert!((m.gain_margin_db.unwrap() - 20.0 * 2f64.log10()).abs() < 1e-8);
    assert!((m.phase_crossover_rad_s.unwrap() - 1.0).abs() < 1e-8);
    assert!((m.crossover_rad_s.unwrap() - wc).abs() < 1e-8);
    assert!((m.phase_margin_deg.unwrap() - pm).abs() < 1e-6);
    assert!((m.delay_margin_s.unwrap() - pm.to_radians() / wc).abs() < 1e-8);
    assert!(m.gain_reduction_margin_db.is_none());

    // The same plant as a state-space loop: A companion form of s^3 + 2 s^2 + s, B = e3, C = K e1.
    let a = DMatrix::from_row_slice(3, 3, &[0.0, 1.0, 0.0, 0.0, 0.0, 1.0, 0.0, -1.0, -2.0]);
    let ss = Siso {
        a,
        b: DVector::from_vec(vec![0.0, 0.0, 1.0]),
        c: DVector::from_vec(vec![k, 0.0, 0.0]),
        d: 0.0,
    };
    let ms = ss.margins();
    assert!((ms.gain_margin_db.unwrap() - 20.0 * 2f64.log10()).abs() < 1e-8);
    assert!((ms.phase_margin_deg.unwrap() - pm).abs() < 1e-6);
}

#[test]
fn margins_of_a_first_order_lag_with_delay() {
    // Source: Franklin, Powell and Emami-Naeini, ch. 6 (from memory), a first-order plant with
    // a pure delay under proportional feedback, L(s) = K e^(-sT) / (tau s + 1): the gain
    // crossover is w_c = sqrt(K^2 - 1) / tau, PM = 180 - atan(w_c tau) - w_c T (deg, T in rad);
    // the phase crossover solves atan(w tau) + w T = pi, GM = sqrt(1 + (w tau)^2) / K.
    let (k, tau, td) = (2.0, 1.0, 0.1);
    let l = |w: f64| Complex::new(0.0, -w * td).exp() * k / Complex::new(1.0, w * tau);
    let m = frequency_margins(&l, 1e-3, 1e3);
    let wc = (k * k - 1.0f64).sqrt() / tau;
    let pm = 180.0 - (wc * tau).atan().to_degrees() - (wc * td).to_degrees();
    // Phase crossover by bisection of the closed-form phase equation.
    let (mut lo, mut hi) = (1.0, 100.0);
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if (mid * tau).atan() + mid * td < std::f64::consts::PI {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    let w180 = 0.5 * (lo + hi);
    let gm_db = 20.0 * ((1.0 + (w180 * tau).powi(2)).sqrt() / k).log10();
    assert!((m.crossover_rad_s.unwrap() - wc).abs() < 1e-8);
    assert!((m.phase_margin_deg.unwrap() - pm).abs() < 1e-6);
    assert!((m.delay_margin_s.unwrap() - pm.to_radians() / wc).abs() < 1e-8);
    assert!((m.phase_crossover_rad_s.unwrap() - w180).abs() < 1e-6);
    assert!((m.gain_margin_db.unwrap() - gm_db).abs() < 1e-6);
}

#[test]
fn gain_margin_puts_the_closed_loop_on_the_stability_boundary() {
    // Source: Nyquist stability criterion (Franklin, Powell and Emami-Naeini, ch. 6): raising a
    // loop's gain by its gain margin puts a closed-loop root on the imaginary axis at the phase
    // crossover frequency. Checked on the tilt-wing demo's trim points where a loop has a
    // finite gain margin.
    let sc = load_scenario(&root().join("scenarios/courier-transition.toml")).unwrap();
    let atm = isa(
        sc.file.atmosphere.altitude_m,
        sc.file.atmosphere.temperature_offset_k,
    )
    .unwrap();
    let ss = SweepSettings {
        speeds_mps: sc.speeds_mps.clone(),
        climb_rad: 0.0,
        schedule: sc.schedule.clone(),
        objective: Objective::Power,
        thresholds: sc.file.thresholds.clone(),
        gains: None,
        loop_model: hoverline::control::loops::LoopSettings::from_file(&sc.file.flight),
    };
    let sweep = run_sweep(&sc.vehicle, &atm, &ss, &|| {});
    let s = FlightSettings::from_scenario(&sc).unwrap();
    let table = FeedforwardTable::from_points(
        &sc.vehicle,
        hoverline::sweep::trim_points(&sc.vehicle, &sweep.points),
        &sc.schedule,
    )
    .unwrap();
    let ls = hoverline::control::loops::LoopSettings::from_file(&sc.file.flight);
    let mut checked = 0;
    for p in table.points.iter().filter(|p| p.trim.trimmed) {
        let lin = p.trim.linear.as_ref().unwrap();
        let margins = loop_margins(
            &sc.vehicle,
            &p.trim.state,
            &p.trim.controls,
            lin,
            &s.gains,
            0.0,
            &ls,
        );
        let cl = closed_loop(
            &sc.vehicle,
            &p.trim.state,
            &p.trim.controls,
            lin,
            &s.gains,
            0.0,
            &ls,
        );
        for (j, m) in margins.iter().enumerate() {
            let (Some(gm), Some(w180)) = (m.gain_margin_db, m.phase_crossover_rad_s) else {
                continue;
            };
            if gm > 40.0 {
                continue;
            }
            let mut g = vec![1.0; cl.b.len()];
            g[j] = 10f64.powf(gm / 20.0);
            let ev = cl.a_closed(&g).complex_eigenvalues();
            let near = ev
                .iter()
                .map(|l| (l.re.abs() + (l.im.abs() - w180).abs()) / w180)
                .fold(f64::INFINITY, f64::min);
            assert!(
                near < 1e-5,
                "at {} m/s, {}: no root near +-{w180} i (closest {near})",
                p.trim.speed_mps,
                m.actuator
            );
            checked += 1;
        }
    }
    assert!(checked >= 1, "no finite gain margin to check");
}

#[test]
fn flight_settings_out_of_range_are_errors() {
    // Common practice, no source: a user file must never hang or panic the program.
    for f in [
        FlightFile {
            sample_step_s: 0.0,
            ..Default::default()
        },
        FlightFile {
            relative_tolerance: -1.0,
            ..Default::default()
        },
        FlightFile {
            pitch_bandwidth_rad_s: f64::NAN,
            ..Default::default()
        },
        FlightFile {
            hold_after_s: 1e9,
            ..Default::default()
        },
    ] {
        assert!(FlightSettings::from_file(&f, &TransitionFile::default(), 0.0).is_err());
    }
    let _ = Path::new(".");
}

// ---------------------------------------------------------------------------------------------
// Dispersions
// ---------------------------------------------------------------------------------------------

#[test]
fn normal_deviates_have_the_truncated_normal_moments() {
    // Source: Box and Muller, Ann. Math. Statist. 29 (1958) 610-611 (the transform gives
    // standard normal deviates); a standard normal truncated at +-3 has mean 0 and variance
    // 1 - 2 * 3 * phi(3) / (2 Phi(3) - 1) = 0.973344 (phi(3) = 0.00443185, Phi(3) = 0.99865010;
    // derived). Tolerances five standard errors for n = 200000.
    use hoverline::flight::dispersion::SplitMix64;
    let n = 200_000;
    let mut g = SplitMix64::new(7, 0);
    let z: Vec<f64> = (0..n).map(|_| g.normal()).collect();
    let mean = z.iter().sum::<f64>() / n as f64;
    let var = z.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1) as f64;
    assert!(mean.abs() < 5.0 * (1.0 / n as f64).sqrt(), "mean {mean}");
    let phi3 = (-4.5f64).exp() / (2.0 * std::f64::consts::PI).sqrt();
    let big_phi3 = 0.998_650_101_968_37;
    let var_book = 1.0 - 6.0 * phi3 / (2.0 * big_phi3 - 1.0);
    assert!(
        (var - var_book).abs() < 5.0 * (2.0 / n as f64).sqrt() * var_book,
        "variance {var} vs {var_book}"
    );
    assert!(z.iter().all(|x| x.abs() <= 3.0));
}

#[test]
fn dispersions_without_uncertainty_fly_the_nominal_vehicle() {
    // Common practice, no source: with every standard deviation zero, each dispersed flight is
    // the nominal flight, to the last bit, on any number of threads.
    use hoverline::flight::dispersion::run_dispersions;
    use hoverline::scenario::DispersionFile;
    let (v, atm, table, s) = surveyor_table(FlightFile::default());
    let m = Manoeuvre::Hold {
        speed_mps: 0.0,
        duration_s: 5.0,
        height_step_m: 0.5,
        height_step_at_s: 1.0,
    };
    let nominal = fly_perturbed(&v, &atm, &table, &s, m, &State::default(), &|_| {}).unwrap();
    let zero = DispersionFile {
        mass_pct: 0.0,
        cg_x_m: 0.0,
        aero_pct: 0.0,
        thrust_pct: 0.0,
        seed: 3,
    };
    let d = run_dispersions(&v, &atm, &table, &s, m, &zero, 4, &|| {});
    for f in &d.flights {
        assert_eq!(f.height_gained_m, nominal.summary.height_gained_m);
        assert_eq!(f.energy_j, nominal.summary.energy_j);
    }
}

#[test]
fn a_flight_without_elevator_authority_departs_and_is_unsafe() {
    // Common practice, no source: with its elevons (its only pitch control when wingborne)
    // jammed at the trailing-edge-up limit, the tail-sitter cannot hold pitch at 20 m/s; the flight must end "departed" with an UNSAFE
    // finding, never as a completed flight.
    let sc = load_scenario(&root().join("scenarios/tail-sitter-transition.toml")).unwrap();
    let atm = isa(
        sc.file.atmosphere.altitude_m,
        sc.file.atmosphere.temperature_offset_k,
    )
    .unwrap();
    let ss = SweepSettings {
        speeds_mps: sc.speeds_mps.clone(),
        climb_rad: 0.0,
        schedule: sc.schedule.clone(),
        objective: Objective::Power,
        thresholds: sc.file.thresholds.clone(),
        gains: None,
        loop_model: hoverline::control::loops::LoopSettings::from_file(&sc.file.flight),
    };
    let sweep = run_sweep(&sc.vehicle, &atm, &ss, &|| {});
    let table = FeedforwardTable::from_points(
        &sc.vehicle,
        hoverline::sweep::trim_points(&sc.vehicle, &sweep.points),
        &sc.schedule,
    )
    .unwrap();
    let s = FlightSettings::from_scenario(&sc).unwrap();
    let mut jammed = sc.vehicle.clone();
    for e in &mut jammed.elevators {
        e.max_rad = e.min_rad;
    }
    let m = Manoeuvre::Hold {
        speed_mps: 20.0,
        duration_s: 30.0,
        height_step_m: 0.0,
        height_step_at_s: 0.0,
    };
    let f = hoverline::flight::fly(&jammed, &atm, &table, &s, m, &|_| {}).unwrap();
    assert_eq!(
        f.summary.outcome, "departed",
        "{}",
        f.summary.outcome_reason
    );
    assert!(f.summary.stopped.is_some());
    assert!(f
        .summary
        .unsafe_findings
        .iter()
        .any(|x| x.starts_with("flight departed")));
    // The same hold with the elevator free completes.
    let ok = hoverline::flight::fly(&sc.vehicle, &atm, &table, &s, m, &|_| {}).unwrap();
    assert_eq!(
        ok.summary.outcome, "completed",
        "{}",
        ok.summary.outcome_reason
    );
}

/// Largest pitch-rate excursion over the samples between `from_s` and `to_s`.
fn pitch_rate_peak(f: &hoverline::flight::Flight, from_s: f64, to_s: f64) -> f64 {
    f.samples
        .iter()
        .filter(|x| x.time_s >= from_s && x.time_s <= to_s)
        .map(|x| x.state.q_rad_s.abs())
        .fold(0.0, f64::max)
}

#[test]
fn the_flight_flies_the_loop_delay_its_margins_assume() {
    // Source: Nyquist criterion (Franklin, Powell and Emami-Naeini, Feedback Control of Dynamic
    // Systems, ch. 6): a loop stays stable for an added delay below its delay margin and loses
    // stability beyond it. The flight carries the same servo and Pade delay as the loop
    // model. A loop margin is found with one loop delayed, the others nominal; the flight
    // delays every loop at once, which can only be worse, so the smallest loop delay margin
    // added to every loop must make a hover upset grow, while a quarter of it leaves the upset
    // decaying (measured: the surveyor's hover loses stability between 0.4 and 0.5 of it).
    let sc = load_scenario(&root().join("scenarios/surveyor-transition.toml")).unwrap();
    let atm = isa(
        sc.file.atmosphere.altitude_m,
        sc.file.atmosphere.temperature_offset_k,
    )
    .unwrap();
    let ss = SweepSettings {
        speeds_mps: vec![0.0, 1.0, 2.0],
        climb_rad: 0.0,
        schedule: sc.schedule.clone(),
        objective: sc.file.sweep.objective,
        thresholds: sc.file.thresholds.clone(),
        gains: Some(hoverline::control::law::FeedbackGains::from_file(
            &sc.file.flight,
        )),
        loop_model: hoverline::control::loops::LoopSettings::from_file(&sc.file.flight),
    };
    let sweep = run_sweep(&sc.vehicle, &atm, &ss, &|| {});
    let margin = sweep.points[0]
        .loop_margins
        .iter()
        .filter_map(|m| m.delay_margin_s)
        .fold(f64::INFINITY, f64::min);
    assert!(margin.is_finite() && margin > 0.02, "delay margin {margin}");
    let table = FeedforwardTable::from_points(
        &sc.vehicle,
        hoverline::sweep::trim_points(&sc.vehicle, &sweep.points),
        &sc.schedule,
    )
    .unwrap();
    let upset = State {
        u_mps: 0.0,
        w_mps: 0.0,
        q_rad_s: 0.05,
        theta_rad: 0.0,
    };
    let m = Manoeuvre::Hold {
        speed_mps: 0.0,
        duration_s: 12.0,
        height_step_m: 0.0,
        height_step_at_s: 0.0,
    };
    let fly_with = |extra_s: f64| {
        let mut s = FlightSettings::from_scenario(&sc).unwrap();
        s.loop_delay_s += extra_s;
        fly_perturbed(&sc.vehicle, &atm, &table, &s, m, &upset, &|_| {}).unwrap()
    };
    let calm = fly_with(0.25 * margin);
    assert!(calm.summary.stopped.is_none());
    assert!(
        pitch_rate_peak(&calm, 8.0, 12.0) < 0.1 * pitch_rate_peak(&calm, 0.0, 2.0),
        "upset does not decay with a quarter of the delay margin"
    );
    let wild = fly_with(margin);
    let grew = wild.summary.stopped.is_some()
        || pitch_rate_peak(&wild, 8.0, 12.0) > pitch_rate_peak(&wild, 0.0, 2.0);
    assert!(grew, "upset does not grow with the delay margin added");
}
