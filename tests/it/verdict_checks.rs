//! Checks of the steady verdict: attitude limits inside the trim, the reserve-keeping trim
//! objective, the three-part stall rule and the meaning of "inside the corridor".

use std::path::PathBuf;

use hoverline::atmosphere::{isa, Atmosphere};
use hoverline::corridor::{compute, CorridorSettings};
use hoverline::dynamics::{Evaluation, PartLoad, SurfaceLoad};
use hoverline::margins::{stall_assessment, StallVerdict};
use hoverline::scenario::load_scenario;
use hoverline::trim::{trim, Condition, Objective, TiltSetting, TrimRequest};
use hoverline::vehicle::{load_vehicle, parse_vehicle, Vehicle, VehicleClass};

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn vehicle(rel: &str) -> Vehicle {
    load_vehicle(&root().join(rel)).expect("vehicle loads")
}

fn hover(tilt: TiltSetting, objective: Objective) -> TrimRequest {
    TrimRequest {
        speed_mps: 0.0,
        climb_rad: 0.0,
        tilt,
        pitch_rad: None,
        condition: Condition::Steady,
        objective,
    }
}

#[test]
fn tilt_rotor_hovers_level_with_nacelles_up_when_tilt_is_free() {
    // Common practice, no source: a tilt-rotor hovers near level with its nacelles near 90 deg;
    // with tilt free the pitch/tilt redundancy must not walk it to a tail-sitter attitude.
    let v = vehicle("vehicles/tilt-rotor-mapper.toml");
    assert_eq!(v.class(), VehicleClass::Tilt);
    let atm = Atmosphere::sea_level();
    let s = trim(
        &v,
        &atm,
        &hover(TiltSetting::Free, Objective::default()),
        None,
        true,
    );
    assert!(s.trimmed(), "{:?}", s.reasons);
    let (lo, hi) = v.pitch_limits_rad(0.0);
    let theta = s.state.theta_rad;
    assert!(theta >= lo - 1e-9 && theta <= hi + 1e-9);
    assert!(
        theta.to_degrees().abs() < 5.0,
        "pitch {:.1} deg",
        theta.to_degrees()
    );
    for t in &s.controls.tilt_rad {
        assert!(t.to_degrees() > 85.0, "tilt {:.1} deg", t.to_degrees());
    }
}

#[test]
fn hover_rig_thrust_split_holds_under_the_reserve_objective() {
    // Source: statics of a rigid body: T_f = W (x_cg - x_r) / (x_f - x_r); front pair 0.4 m
    // ahead of the CG, rear pair 0.3 m behind, so T_f = 3/7 W and T_r = 4/7 W.
    let v = vehicle("tests/data/hover-quad.toml");
    let atm = Atmosphere::sea_level();
    let s = trim(
        &v,
        &atm,
        &hover(TiltSetting::Free, Objective::Reserve),
        None,
        true,
    );
    assert!(s.trimmed(), "{:?}", s.reasons);
    let w = v.weight_n();
    let e = &s.evaluation;
    assert!((e.rotors[0].thrust_n / (3.0 / 7.0 * w) - 1.0).abs() < 1e-6);
    assert!((e.rotors[1].thrust_n / (4.0 / 7.0 * w) - 1.0).abs() < 1e-6);
}

#[test]
fn reserve_objective_keeps_a_redundant_elevator_off_its_stops_for_little_power() {
    // Common practice, no source: a control without effect (the elevator in hover, no
    // airflow) must not be parked at a stop; our stated price is at most 3 % more power.
    let v = vehicle("vehicles/tilt-rotor-mapper.toml");
    let atm = Atmosphere::sea_level();
    let tilt = TiltSetting::Fixed(vec![90f64.to_radians(); v.actuators.len()]);
    let least = trim(&v, &atm, &hover(tilt.clone(), Objective::Power), None, true);
    let kept = trim(&v, &atm, &hover(tilt, Objective::Reserve), None, true);
    assert!(least.trimmed() && kept.trimmed());
    let el = &v.elevators[0];
    let d = kept.controls.elevator_rad[0];
    let travel = el.max_rad - el.min_rad;
    assert!(
        d > el.min_rad + 0.15 * travel - 1e-6 && d < el.max_rad - 0.15 * travel + 1e-6,
        "elevator {:.1} deg",
        d.to_degrees()
    );
    let p_least = least.evaluation.power_w;
    let p_kept = kept.evaluation.power_w;
    assert!(p_kept <= 1.03 * p_least, "{p_kept} W against {p_least} W");
    assert!(p_kept >= p_least * (1.0 - 1e-6), "least power is not least");
}

/// A hand-made evaluation of the courier's surfaces: wing with a clean part and a part in
/// the wing propellers' wake, tail and fuselage one clean part each.
fn hand_evaluation(v: &Vehicle, airspeed: f64, parts: &[Vec<PartLoad>]) -> Evaluation {
    let mut e = Evaluation {
        airspeed_mps: airspeed,
        ..Default::default()
    };
    for p in parts {
        e.surfaces.push(SurfaceLoad {
            first_part: e.parts.len(),
            part_count: p.len(),
            ..Default::default()
        });
        e.parts.extend(p.iter().copied());
    }
    assert_eq!(e.surfaces.len(), v.surfaces.len());
    e
}

fn part(fraction: f64, rotor: Option<usize>, alpha_deg: f64, q_pa: f64) -> PartLoad {
    PartLoad {
        fraction,
        rotor,
        alpha_rad: alpha_deg.to_radians(),
        dynamic_pressure_pa: q_pa,
        ..Default::default()
    }
}

#[test]
fn stalled_load_share_is_q_s_of_the_stalled_parts_over_the_weight() {
    // Source: definition (ours): share = sum over stalled counted wing and tail parts of
    // q_part S fraction / W; computed here by hand from the part values.
    let v = vehicle("vehicles/tilt-wing-courier.toml");
    let rho = 1.225;
    let w = v.weight_n();
    let speed = 10.0;
    let q = 0.5 * rho * speed * speed;
    let s_wing = v.surfaces[0].area_m2;
    // Wing: clean tenth stalled at 30 deg (stall at 18), immersed part attached at 8 deg;
    // tail attached; fuselage separated at 35 deg (a body: advisory only).
    let e = hand_evaluation(
        &v,
        speed,
        &[
            vec![part(0.1, None, 30.0, q), part(0.9, Some(0), 8.0, 3.0 * q)],
            vec![part(1.0, None, 2.0, q)],
            vec![part(1.0, None, 35.0, q)],
        ],
    );
    let a = stall_assessment(&v, rho, &e, 0.05);
    let by_hand = q * s_wing * 0.1 / w;
    assert!((a.stalled_load_share / by_hand - 1.0).abs() < 1e-12);
    assert!(by_hand < 0.05, "test set-up: the share must stay below 5 %");
    assert_eq!(a.surfaces[0].verdict, StallVerdict::Advisory);
    assert_eq!(a.surfaces[2].verdict, StallVerdict::Advisory);
    assert_eq!(a.verdict, StallVerdict::Advisory);
    // At a 1 % limit the same share is unsafe.
    assert_eq!(
        stall_assessment(&v, rho, &e, 0.01).verdict,
        StallVerdict::Stalled
    );
    // The immersed wing part stalled is unsafe whatever its share.
    let e2 = hand_evaluation(
        &v,
        speed,
        &[
            vec![part(0.1, None, 5.0, q), part(0.9, Some(0), 19.0, 3.0 * q)],
            vec![part(1.0, None, 2.0, q)],
            vec![part(1.0, None, 3.0, q)],
        ],
    );
    let a2 = stall_assessment(&v, rho, &e2, 0.05);
    assert_eq!(a2.verdict, StallVerdict::Stalled);
    assert!((a2.verdict_margin_rad.to_degrees() + 1.0).abs() < 1e-9);
    // A loaded tail beyond stall is unsafe.
    let e3 = hand_evaluation(
        &v,
        speed,
        &[
            vec![part(0.1, None, 5.0, q), part(0.9, Some(0), 5.0, 3.0 * q)],
            vec![part(1.0, None, -15.0, q)],
            vec![part(1.0, None, 3.0, q)],
        ],
    );
    assert_eq!(
        stall_assessment(&v, rho, &e3, 0.05).verdict,
        StallVerdict::Stalled
    );
}

#[test]
fn download_under_a_rotor_wake_never_counts_as_stall() {
    // Common practice, no source: a fixed wing under a hovering rotor meets the wake at about
    // 90 deg; that is download (a force the trim carries), not stall.
    let v = vehicle("vehicles/tilt-wing-courier.toml");
    let rho = 1.225;
    let e = hand_evaluation(
        &v,
        0.0,
        &[
            vec![part(0.1, None, 0.0, 0.0), part(0.9, Some(0), 88.0, 600.0)],
            vec![part(1.0, None, 0.0, 0.0)],
            vec![part(1.0, None, 0.0, 0.0)],
        ],
    );
    let a = stall_assessment(&v, rho, &e, 0.05);
    assert_eq!(a.verdict, StallVerdict::Attached);
    assert_eq!(a.stalled_load_share, 0.0);
    assert!(a.verdict_margin_rad.is_infinite());
}

#[test]
fn inside_the_corridor_means_every_margin_is_at_least_zero() {
    // Definition (README, "Reading the corridor"): a point is inside when it is trimmed, no
    // hard limit is crossed and every normalised margin is >= 0.
    let sc = load_scenario(&root().join("scenarios/courier-transition.toml")).unwrap();
    let s = CorridorSettings::for_scenario(&sc, Some(2.0), Some(5.0)).unwrap();
    let atm = isa(
        sc.file.atmosphere.altitude_m,
        sc.file.atmosphere.temperature_offset_k,
    )
    .unwrap();
    let c = compute(&sc.vehicle, &atm, &s, &|| {}).unwrap();
    let inside: Vec<_> = c.points.iter().filter(|p| p.inside).collect();
    assert!(!inside.is_empty());
    for p in inside {
        let m = p.smallest_margin.expect("inside points have a margin");
        assert!(m >= 0.0, "{} m/s, {} deg: {m}", p.speed_mps, p.value_deg);
        let (lo, hi) = sc.vehicle.pitch_limits_rad(p.speed_mps);
        let th = p.pitch_deg.unwrap().to_radians();
        assert!(th >= lo - 1e-9 && th <= hi + 1e-9);
    }
}

#[test]
fn attitude_limits_interpolate_against_airspeed_and_bad_rows_are_refused() {
    // Source: linear interpolation between table rows, held beyond the ends (our definition).
    let base = std::fs::read_to_string(root().join("vehicles/tilt-wing-courier.toml")).unwrap();
    let text = format!(
        "{base}\n[[limits.pitch_by_speed]]\nspeed_mps = 0.0\nmin_deg = -5.0\nmax_deg = 10.0\n\n[[limits.pitch_by_speed]]\nspeed_mps = 20.0\nmin_deg = -10.0\nmax_deg = 20.0\n"
    );
    let path = root().join("vehicles/limits-test.toml");
    let v = parse_vehicle(&text, &path).expect("valid limits");
    let (lo, hi) = v.pitch_limits_rad(10.0);
    assert!((lo.to_degrees() + 7.5).abs() < 1e-9 && (hi.to_degrees() - 15.0).abs() < 1e-9);
    let (lo, hi) = v.pitch_limits_rad(40.0);
    assert!((lo.to_degrees() + 10.0).abs() < 1e-9 && (hi.to_degrees() - 20.0).abs() < 1e-9);
    // Rows out of order: refused with the key and a hint.
    let bad = text.replace("speed_mps = 20.0", "speed_mps = 0.0");
    let err = parse_vehicle(&bad, &path).unwrap_err().to_string();
    assert!(
        err.contains("pitch_by_speed") && err.contains("increasing"),
        "{err}"
    );
    // Both forms at once: refused.
    let both = format!("{text}\n");
    let both = both.replacen(
        "[[limits.pitch_by_speed]]",
        "[limits]\npitch_min_deg = -5.0\npitch_max_deg = 5.0\n\n[[limits.pitch_by_speed]]",
        1,
    );
    let err = parse_vehicle(&both, &path).unwrap_err().to_string();
    assert!(err.contains("not both"), "{err}");
}

#[test]
fn tail_sitter_default_limits_reach_past_vertical() {
    // Common practice, no source: a tail-sitter pitches through to about 90 deg in hover; the
    // class default allows 10 deg beyond the attitude that points its rotors straight up.
    let v = vehicle("vehicles/tail-sitter-wing.toml");
    assert_eq!(v.class(), VehicleClass::TailSitter);
    let (lo, hi) = v.pitch_limits_rad(0.0);
    assert!((lo.to_degrees() + 15.0).abs() < 1e-9);
    assert!(hi.to_degrees() > 95.0 && hi.to_degrees() < 105.0);
}

#[test]
fn hover_thrust_margin_is_one_minus_thrust_over_the_momentum_theory_limit() {
    // Source: momentum theory in hover, P = T^(3/2) / (FM sqrt(2 rho A)) (Leishman,
    // Principles of Helicopter Aerodynamics, ch. 2; from memory), so the power-limited thrust
    // is T_P = (P FM sqrt(2 rho A))^(2/3); thrust margin = 1 - T / min(T_cap, T_P).
    use hoverline::rotor::PowerModel;
    use hoverline::scenario::Thresholds;
    use hoverline::sweep::solve_point;
    let v = vehicle("vehicles/tilt-rotor-mapper.toml");
    let atm = Atmosphere::sea_level();
    let tilt = TiltSetting::Fixed(vec![90f64.to_radians(); v.actuators.len()]);
    let req = hover(tilt, Objective::Reserve);
    let (rep, sol) = solve_point(&v, &atm, &req, &Thresholds::default(), None, true);
    assert!(sol.trimmed());
    for (g, r) in v.rotors.iter().enumerate() {
        let PowerModel::FigureOfMerit(fm) = r.power_model else {
            panic!("the demo rotors use a figure of merit");
        };
        let t_p = (r.power_max_w * fm * (2.0 * atm.density_kg_m3 * r.disk_area_m2()).sqrt())
            .powf(2.0 / 3.0);
        let t1 = sol.controls.thrust_n[g];
        let expected = 1.0 - t1 / t_p.min(r.thrust_max_n);
        let got = rep.rotors[g].thrust_margin;
        assert!(
            (got - expected).abs() < 1e-6,
            "{}: {got} vs {expected}",
            r.name
        );
    }
}

#[test]
fn elevator_travel_left_counts_both_stops() {
    // Source: definition: travel left = min(max - delta, delta - min) over elevators with
    // authority; checked at cruise points where the elevator is trailing-edge up (delta < 0),
    // so the lower stop is the nearer one.
    use hoverline::scenario::Thresholds;
    use hoverline::sweep::solve_point;
    let v = vehicle("vehicles/tilt-wing-courier.toml");
    let atm = Atmosphere::sea_level();
    let el = &v.elevators[0];
    let mut seen = 0;
    for speed in [16.0, 20.0, 25.0] {
        let req = TrimRequest {
            speed_mps: speed,
            climb_rad: 0.0,
            tilt: TiltSetting::Fixed(vec![0.0]),
            pitch_rad: None,
            condition: Condition::Steady,
            objective: Objective::Reserve,
        };
        let (rep, sol) = solve_point(&v, &atm, &req, &Thresholds::default(), None, true);
        assert!(sol.trimmed(), "{:?}", sol.reasons);
        let d = sol.controls.elevator_rad[0];
        let expected = (el.max_rad - d).min(d - el.min_rad).to_degrees();
        let got = rep
            .margins
            .unwrap()
            .elevator_deg
            .expect("the elevator has authority");
        assert!((got - expected).abs() < 1e-9, "{got} vs {expected}");
        seen += usize::from(d < 0.0);
    }
    assert!(seen > 0, "no point with the elevator trailing-edge up");
}

#[test]
fn an_updraft_on_a_pitched_vehicle_at_rest_comes_from_below_the_nose() {
    // Source: axis transformation earth -> body (Etkin and Reid, Dynamics of Flight, ch. 4;
    // from memory): at rest in an updraft w_g (up), the air-relative velocity in earth axes is
    // w_g downward, so u = -w_g sin(theta), w = w_g cos(theta) and alpha = 90 deg + theta.
    use hoverline::dynamics::{evaluate, Controls, State, Wind};
    let v = vehicle("vehicles/tilt-wing-courier.toml");
    let atm = Atmosphere::sea_level();
    let theta = 30f64.to_radians();
    let state = State {
        u_mps: 0.0,
        w_mps: 0.0,
        q_rad_s: 0.0,
        theta_rad: theta,
    };
    let mut e = Evaluation::default();
    let wind = Wind {
        x_mps: 0.0,
        z_mps: -3.0,
    };
    evaluate(&v, &atm, &state, &Controls::zeros(&v), wind, &mut e);
    assert!((e.airspeed_mps - 3.0).abs() < 1e-12);
    assert!(
        (e.alpha_rad - (90f64.to_radians() + theta)).abs() < 1e-12,
        "alpha {:.3} deg",
        e.alpha_rad.to_degrees()
    );
}

#[test]
fn flagship_demo_corridor_is_open_from_hover_to_cruise() {
    // Common practice, no source: the demo that teaches the tool must show an open corridor;
    // this guards it against a model or design change that closes a band again (with 10 % of
    // the courier's wing outside the wakes, 13-14 m/s had no point inside).
    let sc = load_scenario(&root().join("scenarios/courier-transition.toml")).unwrap();
    let s = CorridorSettings::for_scenario(&sc, None, None).unwrap();
    let atm = isa(
        sc.file.atmosphere.altitude_m,
        sc.file.atmosphere.temperature_offset_k,
    )
    .unwrap();
    let c = compute(&sc.vehicle, &atm, &s, &|| {}).unwrap();
    let mut speeds: Vec<f64> = c.points.iter().map(|p| p.speed_mps).collect();
    speeds.dedup();
    for v in speeds {
        assert!(
            c.points.iter().any(|p| p.speed_mps == v && p.inside),
            "no point inside at {v} m/s"
        );
    }
}

#[test]
fn flight_stall_exposure_uses_the_scenario_stalled_share() {
    // One stall rule (README, "The stall rule"): the flight judges stall with the scenario's
    // `[thresholds] stalled_load_share`, like the sweep and the corridor.
    let text = std::fs::read_to_string(root().join("scenarios/courier-heavy-hot.toml"))
        .unwrap()
        .replace(
            "\"../vehicles/",
            &format!("\"{}/", root().join("vehicles").display()),
        )
        .replace("[thresholds]\n", "[thresholds]\nstalled_load_share = 0.2\n");
    let dir = std::env::temp_dir().join(format!("hoverline-share-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let p = dir.join("s.toml");
    std::fs::write(&p, text).unwrap();
    let sc = load_scenario(&p).unwrap();
    let s = hoverline::flight::FlightSettings::from_scenario(&sc).unwrap();
    assert_eq!(s.stalled_load_share, 0.2);
    std::fs::remove_dir_all(&dir).ok();
}

#[test]
fn every_surface_flown_beyond_stall_by_the_rule_is_an_unsafe_finding() {
    // One stall rule (README, "The stall rule"): time beyond stall counts only what the rule
    // calls unsafe, so a flight that reports it for any surface, wing or tail, must carry an
    // UNSAFE finding that names the surface; a flight with none reports no stall finding.
    let dir = root();
    let mut stalled_flights = 0;
    for name in ["mapper-transition.toml", "courier-transition.toml"] {
        let p = dir.join("scenarios").join(name);
        let out = std::env::temp_dir().join(format!("hoverline-fly-{}-{name}", std::process::id()));
        let r = crate::hardening_checks::run_in(
            &dir,
            &[
                "fly",
                p.to_str().unwrap(),
                "--json",
                "--out",
                out.to_str().unwrap(),
            ],
        );
        assert_eq!(r.code, Some(0), "{}", r.stderr);
        let d: serde_json::Value = serde_json::from_str(&r.stdout).unwrap();
        let findings: Vec<String> = d["unsafe_findings"]
            .as_array()
            .unwrap()
            .iter()
            .map(|x| x.as_str().unwrap().to_string())
            .collect();
        for s in d["flight"]["summary"]["surfaces"].as_array().unwrap() {
            let surface = s["name"].as_str().unwrap();
            let beyond = s["time_beyond_stall_s"].as_f64().unwrap() > 0.0;
            let named = findings
                .iter()
                .any(|f| f.contains(&format!("'{surface}' beyond stall")));
            assert_eq!(beyond, named, "{name}, '{surface}': {findings:?}");
            stalled_flights += usize::from(beyond);
        }
        std::fs::remove_dir_all(&out).ok();
    }
    // The mapper's wing stalls in its slipstream at 10-14 m/s: the check has a case to judge.
    assert!(stalled_flights > 0);
}
