//! Checks of the corridor map and the schedule builder against the outside world: the stall
//! speed of a conventional airplane, the hover statics of a demo tail-sitter, exhaustive
//! enumeration of schedules on small synthetic grids, and properties every built schedule must
//! have.

use std::path::{Path, PathBuf};

use hoverline::atmosphere::{isa, G0_MPS2};
use hoverline::corridor::{compute, Corridor, CorridorSettings, Variable};
use hoverline::output::corridor_files::schedule_toml;
use hoverline::scenario::{load_scenario, load_schedule_file, Schedule, Thresholds};
use hoverline::schedule::{
    admissible, build, knot_columns, optimise, path_margin, Constraints, MarginGrid,
    ScheduleSettings,
};
use hoverline::vehicle::{load_vehicle, Vehicle};
use proptest::prelude::*;

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn vehicle(rel: &str) -> Vehicle {
    load_vehicle(&root().join(rel)).expect("vehicle loads")
}

fn range(lo: f64, hi: f64, step: f64) -> Vec<f64> {
    let n = ((hi - lo) / step).round() as usize;
    (0..=n).map(|k| lo + k as f64 * step).collect()
}

fn pitch_settings(speeds: Vec<f64>, pitch_deg: Vec<f64>) -> CorridorSettings {
    CorridorSettings {
        variable: Variable::Pitch,
        speeds_mps: speeds,
        values_rad: pitch_deg.iter().map(|d| d.to_radians()).collect(),
        climb_rad: 0.0,
        thresholds: Thresholds::default(),
        objective: hoverline::trim::Objective::default(),
    }
}

fn corridor(v: &Vehicle, s: &CorridorSettings) -> Corridor {
    let atm = isa(0.0, 0.0).expect("sea level");
    compute(v, &atm, s, &|| {}).expect("corridor")
}

// ---------------------------------------------------------------------------------------
// Conventional airplane: the corridor is a speed band starting at the stall speed.

#[test]
fn airplane_corridor_starts_at_the_stall_speed() {
    let v = vehicle("tests/data/corridor-airplane.toml");
    let atm = isa(0.0, 0.0).expect("sea level");
    let wing = &v.surfaces[0];
    let cl_max = wing.polar.cl_max();
    // Source: Anderson, Aircraft Performance and Design (1999), stall speed
    // V_stall = sqrt(2 W / (rho_inf S CL_max)) (chapter from memory); CHECK-VALUES.md §6.
    let v_stall = (2.0 * v.weight_n() / (atm.density_kg_m3 * wing.area_m2 * cl_max)).sqrt();
    // The trimmed vehicle's CL equals the wing's here: the CG sits at the wing's quarter chord
    // on the thrust line and the symmetric wing has no cm0, so the tail trims at zero lift;
    // the pusher can add at most T_max sin(14 deg) = 0.5 % of the weight (see the vehicle file).
    let dv = 0.25;
    // A grid that does not line up with the stall speed.
    let speeds = range((v_stall - 2.0).floor(), (v_stall + 2.0).ceil(), dv);
    // Pitch is the wing's angle of attack in level flight (zero incidence): a fine grid up to
    // the stall angle, since the band of pitch that balances the weight is narrow.
    let pitch = range(9.0, 15.0, 0.05);
    // With no stall-margin allowance the corridor's low edge is the stall itself; with the
    // default 3 deg allowance it moves up (every normalised margin must be >= 0 inside).
    let mut settings = pitch_settings(speeds.clone(), pitch.clone());
    settings.thresholds.stall_margin_deg = 0.0;
    let c = corridor(&v, &settings);
    let inside_at = |i: usize| {
        (0..pitch.len())
            .filter(|&j| c.at(i, j).inside)
            .collect::<Vec<_>>()
    };
    let first = (0..speeds.len())
        .find(|&i| !inside_at(i).is_empty())
        .expect("some speed has a point inside");
    let v_low = speeds[first];
    assert!(
        (v_low - v_stall).abs() <= dv,
        "corridor starts at {v_low:.3} m/s, stall speed {v_stall:.3} m/s (grid step {dv})"
    );
    eprintln!("corridor low end {v_low:.3} m/s, stall speed {v_stall:.3} m/s (CL_max {cl_max:.4})");
    // A speed band: no point inside below the low end; above it the weight fixes CL, so the
    // trimmable pitch at each speed is a band a fraction of a degree wide (the pusher's thrust
    // range, under 0.5 % of W, sets its width), and just above stall, where that band is wider
    // than the 0.05 deg grid, every speed has a point inside.
    for (i, &speed) in speeds.iter().enumerate() {
        let ins = inside_at(i);
        let trimmed: Vec<usize> = (0..pitch.len()).filter(|&j| c.at(i, j).trimmed).collect();
        if i < first {
            assert!(ins.is_empty());
        }
        if let (Some(a), Some(b)) = (trimmed.first(), trimmed.last()) {
            let width = pitch[*b] - pitch[*a];
            assert!(
                width <= 1.0,
                "trimmable pitch band {width:.2} deg wide at {speed:.2} m/s"
            );
        }
        if speed >= v_stall + dv && speed <= v_stall + 1.5 {
            assert!(!ins.is_empty(), "no point inside at {speed:.2} m/s");
        }
    }
    // Nothing inside is stalled, and the stall is what closes the low end.
    for p in c.points.iter().filter(|p| p.inside) {
        assert!(p.margins.as_ref().and_then(|m| m.stall_deg).unwrap() >= 0.0);
    }
    let below = c.at(first.saturating_sub(1), pitch.len() - 1);
    assert!(!below.inside);
}

// ---------------------------------------------------------------------------------------
// Hover: a tail-sitter at zero airspeed is trimmable only near the attitude that points its
// thrust up.

#[test]
fn tail_sitter_hover_boundary_matches_statics() {
    let v = vehicle("vehicles/tail-sitter-wing.toml");
    let atm = isa(0.0, 0.0).expect("sea level");
    let rho = atm.density_kg_m3;
    let r = &v.rotors[0];
    let area = r.disk_area_m2();
    let n = r.count as f64;
    // Statics by hand at V = 0 with pitch theta held: the propellers' thrust acts along body x
    // (through the CG, so no moment), less the drag of the wing part in their wake; the wake
    // flows along the chord, so that part has zero angle of attack and no lift.
    // Wake speed k v_i with v_i = sqrt(T1 / (2 rho A)) per rotor (momentum theory, Leishman,
    // Principles of Helicopter Aerodynamics, 2nd ed. 2006, ch. 2), so the wake drag is
    // D = f S (rho/2) k^2 T1 / (2 rho A) cd(0) = kappa T1.
    let wing = &v.surfaces[0];
    let link = &wing.slipstream[0];
    let cd0 = wing.polar.coefficients(0.0).cd;
    let kappa = link.fraction * wing.area_m2 * link.wake_factor.powi(2) / (4.0 * area) * cd0;
    // Vertical balance (T1 (n - kappa)) sin(theta) = W; the rest of the net thrust accelerates
    // the vehicle along the (horizontal) path: a = g cot(theta).
    let t_avail = hoverline::rotor::thrust_available(
        r.thrust_max_n,
        r.power_max_w,
        rho,
        area,
        0.0,
        0.0,
        r.power_model,
    );
    let theta_min = (v.weight_n() / ((n - kappa) * t_avail)).asin().to_degrees();
    let step = 0.5;
    let pitch = range(30.0, 100.0, step);
    let c = corridor(&v, &pitch_settings(vec![0.0], pitch.clone()));
    let trimmed: Vec<usize> = (0..pitch.len()).filter(|&j| c.at(0, j).trimmed).collect();
    let lowest = pitch[trimmed[0]];
    eprintln!("hover: lowest trimmed pitch {lowest} deg, statics {theta_min:.3} deg (kappa {kappa:.4}, T_avail {t_avail:.2} N)");
    assert!(
        lowest >= theta_min - 1e-6 && lowest - step < theta_min,
        "lowest trimmed pitch {lowest} deg, statics give {theta_min:.3} deg"
    );
    // Trimmable from there up to the top of the grid (below 180 - theta_min), nowhere else.
    for (j, &th) in pitch.iter().enumerate() {
        assert_eq!(c.at(0, j).trimmed, th >= theta_min, "pitch {th} deg");
    }
    for &j in &trimmed {
        let p = c.at(0, j);
        let a = p.path_accel_mps2.unwrap();
        let expect = G0_MPS2 / pitch[j].to_radians().tan();
        assert!(
            (a - expect).abs() <= 1e-6 * (1.0 + expect.abs()),
            "pitch {}: {a} vs {expect}",
            pitch[j]
        );
    }
}

// ---------------------------------------------------------------------------------------
// Dynamic programming against exhaustive enumeration.

/// A deterministic pseudo-random sequence in [0, 1) (64-bit linear congruential generator,
/// Knuth's MMIX constants).
struct Lcg(u64);

impl Lcg {
    fn next(&mut self) -> f64 {
        self.0 = self
            .0
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        (self.0 >> 11) as f64 / (1u64 << 53) as f64
    }
}

fn synthetic(ns: usize, nv: usize, holes: f64, seed: u64) -> MarginGrid {
    let mut r = Lcg(seed);
    MarginGrid {
        speeds_mps: (0..ns).map(|i| i as f64).collect(),
        values_rad: (0..nv).map(|j| 0.1 * j as f64).collect(),
        margin: (0..ns)
            .map(|_| {
                (0..nv)
                    .map(|_| {
                        let hole = r.next() < holes;
                        let m = 4.0 * r.next() - 1.0;
                        (!hole).then_some(m)
                    })
                    .collect()
            })
            .collect(),
    }
}

/// Independent bottleneck of a path through knot rows: knots every `stride` columns, straight
/// segments, linear interpolation between grid values (all cells present in the strided cases).
fn brute_value(g: &MarginGrid, stride: usize, rows: &[usize]) -> Option<f64> {
    let ns = g.speeds_mps.len();
    let mut knots: Vec<usize> = (0..ns).step_by(stride).collect();
    if *knots.last().unwrap() != ns - 1 {
        knots.push(ns - 1);
    }
    let mut worst = f64::INFINITY;
    for i in 0..ns {
        let k = knots.iter().rposition(|&c| c <= i).unwrap();
        let (y, lo_row) = if knots[k] == i {
            (g.values_rad[rows[k]], rows[k])
        } else {
            let (c0, c1) = (knots[k], knots[k + 1]);
            let t = (i - c0) as f64 / (c1 - c0) as f64;
            let y = g.values_rad[rows[k]] + t * (g.values_rad[rows[k + 1]] - g.values_rad[rows[k]]);
            (y, rows[k + 1].min(rows[k]))
        };
        // Find the grid interval holding y (values are 0.1 apart from 0).
        let mut j = lo_row;
        while j + 1 < g.values_rad.len() && g.values_rad[j + 1] <= y + 1e-12 {
            j += 1;
        }
        let m = if (y - g.values_rad[j]).abs() < 1e-12 {
            g.margin[i][j]?
        } else {
            let t = (y - g.values_rad[j]) / (g.values_rad[j + 1] - g.values_rad[j]);
            let (a, b) = (g.margin[i][j]?, g.margin[i][j + 1]?);
            a + t * (b - a)
        };
        worst = worst.min(m);
    }
    Some(worst)
}

/// Independent check of monotonicity, rate and smoothness of knot rows.
fn brute_admissible(g: &MarginGrid, stride: usize, rows: &[usize], c: &Constraints) -> bool {
    let ns = g.speeds_mps.len();
    let mut knots: Vec<usize> = (0..ns).step_by(stride).collect();
    if *knots.last().unwrap() != ns - 1 {
        knots.push(ns - 1);
    }
    let y: Vec<f64> = rows.iter().map(|&j| g.values_rad[j]).collect();
    let v: Vec<f64> = knots.iter().map(|&k| g.speeds_mps[k]).collect();
    let slopes: Vec<f64> = (1..y.len())
        .map(|k| (y[k] - y[k - 1]) / (v[k] - v[k - 1]))
        .collect();
    slopes
        .iter()
        .all(|s| *s <= 1e-12 && -s <= c.max_slope_rad_per_mps + 1e-9)
        && (1..slopes.len()).all(|k| {
            let h = 0.5 * (v[k + 1] - v[k - 1]);
            ((slopes[k] - slopes[k - 1]) / h).abs() <= c.max_curvature_rad_per_mps2 + 1e-9
        })
}

/// Best bottleneck over every admissible assignment of rows to knots, by enumeration.
fn brute_force(g: &MarginGrid, c: &Constraints) -> Option<f64> {
    let nk = knot_columns(g.speeds_mps.len(), c.knot_stride).len();
    let nv = g.values_rad.len();
    let mut rows = vec![0usize; nk];
    let mut best: Option<f64> = None;
    loop {
        if brute_admissible(g, c.knot_stride, &rows, c) {
            if let Some(m) = brute_value(g, c.knot_stride, &rows) {
                best = Some(best.map_or(m, |b: f64| b.max(m)));
            }
        }
        // Next assignment (odometer).
        let mut k = 0;
        loop {
            if k == nk {
                return best;
            }
            rows[k] += 1;
            if rows[k] < nv {
                break;
            }
            rows[k] = 0;
            k += 1;
        }
    }
}

#[test]
fn dynamic_programming_equals_brute_force() {
    // Source: Bellman, Dynamic Programming (1957), principle of optimality, applied to the
    // bottleneck (max-min) path problem; checked here against exhaustive enumeration.
    let mut cases = 0;
    for seed in 1..=12u64 {
        // Every knot on a grid column, with holes (outside the corridor).
        let g = synthetic(7, 6, 0.2, seed);
        let c = Constraints {
            max_slope_rad_per_mps: 0.2,      // two rows per knot
            max_curvature_rad_per_mps2: 0.1, // slope may change by one row per knot
            knot_stride: 1,
            end_value_rad: None,
        };
        let expect = brute_force(&g, &c);
        match optimise(&g, &c) {
            Ok(p) => {
                let e = expect.expect("enumeration finds a path too");
                assert!(
                    (p.smallest_margin - e).abs() < 1e-12,
                    "seed {seed}: {} vs {e}",
                    p.smallest_margin
                );
                assert!(brute_admissible(&g, 1, &p.rows, &c));
                assert_eq!(brute_value(&g, 1, &p.rows), Some(p.smallest_margin));
                cases += 1;
            }
            Err(_) => assert!(
                expect.is_none(),
                "seed {seed}: enumeration found {expect:?}"
            ),
        }
        // Knots every second column with straight segments between (no holes, so the value
        // between grid rows is the linear interpolation).
        let g = synthetic(9, 6, 0.0, seed + 100);
        let c = Constraints {
            max_slope_rad_per_mps: 0.1,
            max_curvature_rad_per_mps2: 0.05,
            knot_stride: 2,
            end_value_rad: None,
        };
        let p = optimise(&g, &c).expect("a path exists without holes");
        let e = brute_force(&g, &c).expect("enumeration finds a path");
        assert!(
            (p.smallest_margin - e).abs() < 1e-12,
            "seed {seed}, stride 2: {} vs {e}",
            p.smallest_margin
        );
        cases += 1;
    }
    assert!(cases >= 12);
}

#[test]
fn admissibility_oracle_refuses_increasing_steep_and_kinked_schedules() {
    // Common practice, no source: a transition schedule runs from hover towards cruise, so the
    // tilt never rises with speed; |dy/dV| at most the rate limit over the planned acceleration
    // and the second difference 2 (s2 - s1) / (h1 + h2) at most the smoothness bound. Hand
    // values on knots 0, 5, 10 m/s with a slope limit of 0.1 rad per m/s and a curvature limit
    // of 0.01 rad per (m/s)^2.
    let speeds = [0.0, 5.0, 10.0];
    let knots = [0, 1, 2];
    let c = Constraints {
        max_slope_rad_per_mps: 0.1,
        max_curvature_rad_per_mps2: 0.01,
        knot_stride: 1,
        end_value_rad: None,
    };
    // Straight decrease, 0.05 rad per m/s: admissible.
    assert!(admissible(&speeds, &knots, &[1.0, 0.75, 0.5], &c));
    // Held constant: admissible (monotone non-increasing).
    assert!(admissible(&speeds, &knots, &[1.0, 1.0, 1.0], &c));
    // Any rise, however small (1e-3 rad over 5 m/s), is refused.
    assert!(!admissible(&speeds, &knots, &[1.0, 1.001, 0.5], &c));
    assert!(!admissible(&speeds, &knots, &[0.5, 0.75, 1.0], &c));
    // 0.6 rad over 5 m/s is 0.12 rad per m/s, above the rate limit.
    assert!(!admissible(&speeds, &knots, &[1.0, 0.4, 0.4], &c));
    // Slopes -0.01 then -0.09 rad per m/s: second difference 0.08 / 5 = 0.016 > 0.01.
    assert!(!admissible(&speeds, &knots, &[1.0, 0.95, 0.5], &c));
    // Slopes -0.04 then -0.06: 0.02 / 5 = 0.004, inside the bound.
    assert!(admissible(&speeds, &knots, &[1.0, 0.8, 0.5], &c));
}

fn constraints_strategy() -> impl Strategy<Value = Constraints> {
    (0.05f64..0.5, 0.02f64..0.4, 1usize..4).prop_map(|(s, k, st)| Constraints {
        max_slope_rad_per_mps: s,
        max_curvature_rad_per_mps2: k,
        knot_stride: st,
        end_value_rad: None,
    })
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(64))]

    // Common practice, no source: the constraints a schedule must meet, checked on random grids.
    #[test]
    fn built_schedules_are_monotone_inside_and_rate_limited(
        ns in 3usize..12,
        nv in 3usize..9,
        holes in 0.0f64..0.4,
        seed in 1u64..10_000,
        c in constraints_strategy(),
    ) {
        let g = synthetic(ns, nv, holes, seed);
        if let Ok(p) = optimise(&g, &c) {
            let knots = knot_columns(ns, c.knot_stride);
            let y: Vec<f64> = p.rows.iter().map(|&j| g.values_rad[j]).collect();
            for k in 1..y.len() {
                let h = g.speeds_mps[knots[k]] - g.speeds_mps[knots[k - 1]];
                prop_assert!(y[k] <= y[k - 1] + 1e-12, "not monotone");
                prop_assert!(y[k - 1] - y[k] <= c.max_slope_rad_per_mps * h + 1e-9, "rate limit");
            }
            prop_assert!(admissible(&g.speeds_mps, &knots, &y, &c));
            // Inside the corridor at every grid speed, with the margin the optimiser reports.
            for i in 0..ns {
                let k = knots.iter().rposition(|&c| c <= i).unwrap();
                let yi = if knots[k] == i {
                    y[k]
                } else {
                    let t = (g.speeds_mps[i] - g.speeds_mps[knots[k]])
                        / (g.speeds_mps[knots[k + 1]] - g.speeds_mps[knots[k]]);
                    y[k] + t * (y[k + 1] - y[k])
                };
                prop_assert!(g.at(i, yi).is_some(), "outside at column {}", i);
            }
            prop_assert_eq!(path_margin(&g, &knots, &y), Some(p.smallest_margin));
        }
    }
}

// ---------------------------------------------------------------------------------------
// A schedule built on a demo corridor: constraints met after refinement, file round trip.

#[test]
fn demo_schedule_meets_its_constraints_and_round_trips() {
    let sc = load_scenario(&root().join("scenarios/mapper-transition.toml")).expect("scenario");
    let atm = isa(
        sc.file.atmosphere.altitude_m,
        sc.file.atmosphere.temperature_offset_k,
    )
    .unwrap();
    let s = CorridorSettings::for_scenario(&sc, Some(1.0), Some(2.0)).expect("grid");
    let c = compute(&sc.vehicle, &atm, &s, &|| {}).expect("corridor");
    let ss = ScheduleSettings::for_scenario(&sc);
    let b = build(&sc.vehicle, &atm, &s, &c, &ss, &sc.schedule).expect("schedule");
    let slope = b.constraints.max_slope_deg_per_mps;
    let curv = b.constraints.smoothness_deg_per_mps2;
    let (x, y) = (&b.speed_mps, &b.value_deg);
    for k in 1..x.len() {
        let h = x[k] - x[k - 1];
        assert!(y[k] <= y[k - 1] + 1e-9, "not monotone at {} m/s", x[k]);
        assert!(
            y[k - 1] - y[k] <= slope * h + 1e-6,
            "rate limit at {} m/s",
            x[k]
        );
        if k >= 2 {
            let s1 = (y[k - 1] - y[k - 2]) / (x[k - 1] - x[k - 2]);
            let s2 = (y[k] - y[k - 1]) / h;
            let c2 = 2.0 * (s2 - s1) / (x[k] - x[k - 2]);
            assert!(
                c2.abs() <= curv + 1e-6,
                "smoothness at {} m/s: {c2}",
                x[k - 1]
            );
        }
    }
    // Ends at the cruise tilt.
    assert!((y[y.len() - 1] - c.values_deg[0]).abs() < 1e-9);
    // Every point along it is trimmed.
    assert_eq!(b.built.untrimmed, 0);
    // The file is in the scenario format and reads back to the same table.
    let text = schedule_toml(&sc, &b).expect("serialises");
    assert!(text.starts_with("# Transition schedule built by hoverline"));
    let dir = std::env::temp_dir().join(format!("hoverline-corridor-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let f = dir.join("schedule.toml");
    std::fs::write(&f, &text).unwrap();
    let back = load_schedule_file(&f, &sc.vehicle).expect("schedule file loads");
    let Schedule::Tilt(t) = back else {
        panic!("a tilt schedule")
    };
    assert_eq!(t.speed_mps.len(), x.len());
    for (a, b) in t.value_rad.iter().zip(y) {
        assert!((a.to_degrees() - b).abs() < 1e-3);
    }
    std::fs::remove_dir_all(Path::new(&dir)).unwrap();
}
