//! Checks of the closed-loop analysis (`hoverline::control::loops`): disk margins against the
//! closed forms of their definition, Nyquist-consistent phase, gain and delay margins of an
//! open-loop unstable loop, a delay just beyond the margin in a time simulation, the fast
//! pole-form response against a dense solve, and the verdict on the demo scenarios.

use std::path::PathBuf;

use hoverline::atmosphere::isa;
use hoverline::control::law::FeedbackGains;
use hoverline::control::loops::{
    closed_loop, disk_gain_db, disk_margin_for, disk_phase_deg, frequency_margins, LoopSettings,
    PoleRatio, Roots, OMEGA_MAX_RAD_S, OMEGA_MIN_RAD_S,
};
use hoverline::scenario::load_scenario;
use hoverline::sweep::{run_sweep, SweepResult, SweepSettings};
use nalgebra::Complex;

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn demo_sweep(name: &str, gains: bool) -> (hoverline::scenario::Scenario, SweepResult) {
    let sc = load_scenario(&root().join("scenarios").join(name)).unwrap();
    let a = &sc.file.atmosphere;
    let atm = isa(a.altitude_m, a.temperature_offset_k).unwrap();
    let s = SweepSettings {
        speeds_mps: sc.speeds_mps.clone(),
        climb_rad: sc.climb_rad,
        schedule: sc.schedule.clone(),
        objective: sc.file.sweep.objective,
        thresholds: sc.file.thresholds.clone(),
        gains: gains.then(|| FeedbackGains::from_file(&sc.file.flight)),
        loop_model: LoopSettings::from_file(&sc.file.flight),
    };
    let r = run_sweep(&sc.vehicle, &atm, &s, &|| {});
    (sc, r)
}

const DEMOS: [&str; 5] = [
    "courier-transition.toml",
    "courier-heavy-hot.toml",
    "mapper-transition.toml",
    "surveyor-transition.toml",
    "tail-sitter-transition.toml",
];

#[test]
fn disk_margin_of_an_integrator_loop_is_two() {
    // Source: Seiler, Packard and Gahinet, "An introduction to disk margins", IEEE Control
    // Systems Magazine 40(5), 2020 (definitions from memory): the symmetric disk margin is
    // 1 / sup |S - T| / 2. For L = k / s, (S - T) / 2 = (jw - k) / (2 (jw + k)) has modulus
    // 1/2 at every frequency (derived here), so alpha = 2: unbounded gain equivalent and a
    // phase equivalent 2 atan(1) = 90 deg.
    for k in [0.3, 1.0, 7.0] {
        let l = |w: f64| Complex::new(k, 0.0) / Complex::new(0.0, w);
        let m = frequency_margins(&l, 1e-3, 1e3);
        let a = m.disk_margin.unwrap();
        assert!((a - 2.0).abs() < 1e-6, "k = {k}: alpha {a}");
        assert!(m.disk_gain_margin_db().is_none());
        assert!((m.disk_phase_margin_deg().unwrap() - 90.0).abs() < 1e-4);
        // Classical margins of k / s: infinite gain margins (null), phase margin 90 deg at w = k.
        assert!(m.gain_margin_db.is_none() && m.gain_reduction_margin_db.is_none());
        assert!((m.phase_margin_deg.unwrap() - 90.0).abs() < 1e-6);
        assert!((m.crossover_rad_s.unwrap() - k).abs() < 1e-8 * k);
    }
}

#[test]
fn disk_margin_of_first_order_loops_follows_the_closed_form() {
    // Source: Seiler, Packard and Gahinet 2020 (definitions from memory); closed forms derived
    // here. L = k / (s + a), a, k > 0: |S - T| / 2 = |jw + a - k| / (2 |jw + a + k|) rises to
    // 1/2 as w -> infinity, so alpha = 2. L = k / (s - a), k > a > 0 (open-loop unstable,
    // closed loop stable): the modulus falls from (k + a) / (2 (k - a)) at w = 0, so
    // alpha = 2 (k - a) / (k + a).
    let (k, a) = (2.0, 1.0);
    let stable = |w: f64| Complex::new(k, 0.0) / Complex::new(a, w);
    let m = frequency_margins(&stable, 1e-3, 1e3);
    assert!((m.disk_margin.unwrap() - 2.0).abs() < 1e-6);
    for (k, a) in [(2.0, 1.0), (5.0, 1.0), (1.5, 1.0)] {
        let unstable = |w: f64| Complex::new(k, 0.0) / Complex::new(-a, w);
        let m = frequency_margins(&unstable, 1e-3, 1e3);
        let alpha = 2.0 * (k - a) / (k + a);
        assert!((m.disk_margin.unwrap() - alpha).abs() < 1e-6 * alpha);
        // Gain equivalents (2 - alpha) / (2 + alpha) .. (2 + alpha) / (2 - alpha): for this loop
        // the lower one is exactly the classical gain-reduction margin a / k.
        let g = disk_gain_db(alpha).unwrap();
        assert!((g + 20.0 * (a / k).log10()).abs() < 1e-9);
        assert!((disk_phase_deg(alpha) - 2.0 * (alpha / 2.0).atan().to_degrees()).abs() < 1e-12);
    }
    // The disk that covers 6 dB and 45 deg (MIL-F-9490D, from memory): alpha = 2 tan(22.5 deg).
    let need = disk_margin_for(6.0, 45.0);
    assert!((need - 2.0 * 22.5f64.to_radians().tan()).abs() < 1e-12);
}

#[test]
fn margins_of_an_open_loop_unstable_first_order_loop_follow_nyquist() {
    // Source: Nyquist stability criterion with one unstable open-loop pole (Franklin, Powell
    // and Emami-Naeini, Feedback Control of Dynamic Systems, ch. 6, from memory); closed forms
    // derived here. L = k / (s - a), k > a: closed-loop root a - k < 0. |L| = 1 at
    // w_c = sqrt(k^2 - a^2); arg L = -180 deg + atan(w_c / a), so the smallest destabilising
    // lag is atan(w_c / a) > 0 and the delay margin atan(w_c / a) / w_c. L(0) = -k / a: a gain
    // reduced to a / k destabilises; no gain increase does.
    let (k, a) = (2.0f64, 1.0f64);
    let l = |w: f64| Complex::new(k, 0.0) / Complex::new(-a, w);
    let m = frequency_margins(&l, 1e-3, 1e3);
    let wc = (k * k - a * a).sqrt();
    let pm = (wc / a).atan();
    assert!((m.crossover_rad_s.unwrap() - wc).abs() < 1e-8);
    assert!(m.phase_margin_deg.unwrap() > 0.0);
    assert!((m.phase_margin_deg.unwrap() - pm.to_degrees()).abs() < 1e-6);
    assert!((m.delay_margin_s.unwrap() - pm / wc).abs() < 1e-8);
    assert!((m.gain_reduction_margin_db.unwrap() - 20.0 * (a / k).log10()).abs() < 1e-9);
    assert!(m.gain_margin_db.is_none());
}

/// Peak |x| over the last `window` s of x' = a x - k x(t - T), x = 1 before t = 0
/// (explicit Euler on a fine step, delay as a history buffer).
fn delayed_loop_peak(a: f64, k: f64, delay: f64, t_end: f64, window: f64) -> f64 {
    let dt = 1e-4;
    let lag = (delay / dt).round() as usize;
    let n = (t_end / dt) as usize;
    let mut x = vec![1.0; lag + n + 1];
    let mut peak: f64 = 0.0;
    for i in 0..n {
        let now = x[lag + i];
        let past = x[i];
        x[lag + i + 1] = now + dt * (a * now - k * past);
        if (i as f64) * dt > t_end - window {
            peak = peak.max(x[lag + i + 1].abs());
        }
    }
    peak
}

#[test]
fn a_delay_just_beyond_the_delay_margin_destabilises_in_time() {
    // Source: the delay margin's definition (the smallest delay that puts a closed-loop root
    // on the imaginary axis); time simulation of x' = a x - k x(t - T) here. 5 % below the
    // margin the response decays, 5 % above it grows.
    let (k, a) = (2.0f64, 1.0f64);
    let l = |w: f64| Complex::new(k, 0.0) / Complex::new(-a, w);
    let dm = frequency_margins(&l, 1e-3, 1e3).delay_margin_s.unwrap();
    let below = delayed_loop_peak(a, k, 0.95 * dm, 60.0, 10.0);
    let above = delayed_loop_peak(a, k, 1.05 * dm, 60.0, 10.0);
    assert!(below < 0.1, "delay 0.95 x margin: late peak {below}");
    assert!(above > 10.0, "delay 1.05 x margin: late peak {above}");
}

#[test]
fn pole_form_response_matches_a_dense_solve_on_every_demo_loop() {
    // Common practice, no source: the fast response chi_cl / chi_j - 1 and the dense complex
    // LU solve of c (jwI - A_j)^-1 b are two evaluations of one definition, so every margin
    // must agree to 1e-8 relative on every loop of every demo sweep.
    let mut compared = 0;
    for demo in DEMOS {
        let (sc, r) = demo_sweep(demo, false);
        let gains = FeedbackGains::from_file(&sc.file.flight);
        let ls = LoopSettings::from_file(&sc.file.flight);
        for p in r.points.iter().filter(|p| p.trimmed) {
            let tp = p.trim_point(&sc.vehicle);
            let lin = tp.linear.as_ref().unwrap();
            let cl = closed_loop(
                &sc.vehicle,
                &tp.state,
                &tp.controls,
                lin,
                &gains,
                sc.climb_rad,
                &ls,
            );
            let closed = Roots::of(&cl.a_closed(&vec![1.0; cl.b.len()]));
            if !closed.stable() {
                continue;
            }
            for j in 0..cl.b.len() {
                let dense = cl.broken(j);
                if dense.b.norm() * dense.c.norm() < 1e-12 {
                    continue;
                }
                let fast = PoleRatio {
                    closed: &closed,
                    open: Roots::of(&dense.a),
                };
                let mf = frequency_margins(&|w| fast.response(w), OMEGA_MIN_RAD_S, OMEGA_MAX_RAD_S);
                let md = dense.margins();
                if md.peak_gain < 0.01 {
                    continue;
                }
                let same = |x: Option<f64>, y: Option<f64>, what: &str| match (x, y) {
                    (Some(x), Some(y)) => assert!(
                        (x - y).abs() <= 1e-8 * x.abs().max(y.abs()).max(1e-3),
                        "{demo} {} m/s loop {j} {what}: {x} vs {y}",
                        p.speed_mps
                    ),
                    (None, None) => {}
                    _ => panic!("{demo} {} m/s loop {j} {what}: {x:?} vs {y:?}", p.speed_mps),
                };
                same(md.gain_margin_db, mf.gain_margin_db, "gain margin");
                same(
                    md.gain_reduction_margin_db,
                    mf.gain_reduction_margin_db,
                    "gain reduction",
                );
                same(md.phase_margin_deg, mf.phase_margin_deg, "phase margin");
                same(md.delay_margin_s, mf.delay_margin_s, "delay margin");
                same(md.disk_margin, mf.disk_margin, "disk margin");
                compared += 1;
            }
        }
    }
    assert!(compared > 100, "only {compared} loops compared");
}

#[test]
fn phase_margins_of_stable_closed_loops_are_positive_on_every_demo() {
    // Source: Nyquist stability criterion (Franklin, Powell and Emami-Naeini, ch. 6, from
    // memory): a stable closed loop needs a positive phase lag (and delay) to be destabilised,
    // whatever the number of unstable open-loop poles.
    for demo in DEMOS {
        let (_, r) = demo_sweep(demo, true);
        for p in &r.points {
            for m in p.loop_margins.iter().filter(|m| m.closed_loop_stable) {
                if let Some(pm) = m.phase_margin_deg {
                    assert!(pm >= 0.0, "{demo} {} m/s {}: {pm}", p.speed_mps, m.actuator);
                }
                if let Some(d) = m.delay_margin_s {
                    assert!(d > 0.0);
                }
                for g in [m.gain_margin_db, m.gain_reduction_margin_db.map(|g| -g)]
                    .into_iter()
                    .flatten()
                {
                    assert!(g > 0.0 && g <= 40.0, "{demo} {} m/s: {g} dB", p.speed_mps);
                }
            }
        }
    }
}

#[test]
fn tail_sitter_hover_is_not_unsafe_on_stability_when_its_closed_loop_is_sound() {
    // Common practice, no source: an open-loop unstable hover mode is a demand on the loop
    // (crossover about 3 x the root), not a verdict; the closed loop decides.
    let (sc, r) = demo_sweep("tail-sitter-transition.toml", true);
    let p = r.points.iter().find(|p| p.speed_mps == 0.0).unwrap();
    let need = disk_margin_for(
        sc.file.thresholds.gain_margin_db,
        sc.file.thresholds.phase_margin_deg,
    );
    assert!(p.trimmed);
    // The open-loop heave mode doubles in under 1 s and is reported as a demand.
    let fast = p
        .open_loop_demands
        .iter()
        .find(|d| d.time_to_double_s < 1.0)
        .expect("a fast open-loop mode");
    assert!((fast.crossover_demand_rad_s - 3.0 * fast.real_per_s).abs() < 1e-9);
    // Its closed loop is stable with every disk margin above the threshold...
    assert!(p.loop_margins.iter().all(|m| m.closed_loop_stable));
    for m in p.loop_margins.iter().filter(|m| m.in_loop) {
        assert!(
            m.disk_margin.unwrap() >= need,
            "{}: {:?}",
            m.actuator,
            m.disk_margin
        );
    }
    // ... so no stability reason is given.
    assert!(
        p.reasons.iter().all(|r| !r.contains("doubles")
            && !r.contains("margin at")
            && !r.contains("closed loop")),
        "{:?}",
        p.reasons
    );
}
