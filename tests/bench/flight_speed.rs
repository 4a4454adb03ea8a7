//! Benchmark: a 60 s hover-to-cruise transition of the tilt-wing courier demo (2 s hold, a
//! 50 s speed ramp from 0 to 30 m/s at 0.6 m/s^2, 8 s hold), closed loop, with the time
//! history sampled every 0.02 s and the summary built. The trim table along the schedule is
//! built once beforehand (that is the sweep's job, timed by its own bench).
//! Then 1,000 dispersed flights of the same transition on all cores.
//! Run with `cargo bench --bench flight_speed`. Prints the median of several runs on one core
//! (the flight itself is single-threaded) against the budget of 50 ms, and the dispersion time
//! against its budget of 30 s, and exits with status 1 above either.

use std::path::Path;
use std::time::Instant;

use hoverline::atmosphere::isa;
use hoverline::flight::{fly, FeedforwardTable, FlightSettings, Manoeuvre};
use hoverline::scenario::load_scenario;
use hoverline::sweep::{run_sweep, SweepSettings};
use hoverline::trim::Objective;

const BUDGET_S: f64 = 0.050;
const DISPERSION_BUDGET_S: f64 = 30.0;

fn median(mut v: Vec<f64>) -> f64 {
    v.sort_by(|a, b| a.partial_cmp(b).expect("finite timings"));
    v[v.len() / 2]
}

fn main() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let mut sc = load_scenario(&root.join("scenarios/courier-transition.toml"))
        .expect("demo scenario loads");
    sc.file.transition.acceleration_mps2 = 0.6;
    let atm = isa(
        sc.file.atmosphere.altitude_m,
        sc.file.atmosphere.temperature_offset_k,
    )
    .expect("atmosphere");
    let ss = SweepSettings {
        speeds_mps: sc.speeds_mps.clone(),
        climb_rad: sc.climb_rad,
        schedule: sc.schedule.clone(),
        objective: Objective::Power,
        thresholds: sc.file.thresholds.clone(),
        gains: None,
        loop_model: hoverline::control::loops::LoopSettings::from_file(&sc.file.flight),
    };
    let t = Instant::now();
    let sweep = run_sweep(&sc.vehicle, &atm, &ss, &|| {});
    let settings = FlightSettings::from_scenario(&sc).expect("settings");
    let table = FeedforwardTable::from_points(
        &sc.vehicle,
        hoverline::sweep::trim_points(&sc.vehicle, &sweep.points),
        &sc.schedule,
    )
    .expect("table");
    let table_s = t.elapsed().as_secs_f64();
    let one = rayon::ThreadPoolBuilder::new()
        .num_threads(1)
        .build()
        .expect("pool");
    let mut times = Vec::new();
    let mut flown = 0.0;
    let mut steps = 0;
    let mut evals = 0;
    for _ in 0..15 {
        let t = Instant::now();
        let f = one.install(|| {
            fly(
                &sc.vehicle,
                &atm,
                &table,
                &settings,
                Manoeuvre::HoverToCruise,
                &|_| {},
            )
            .expect("flight")
        });
        times.push(t.elapsed().as_secs_f64());
        flown = f.summary.duration_s;
        steps = f.integrator.accepted_steps;
        evals = f.integrator.evaluations;
    }
    let m = median(times);
    println!(
        "flight: {flown:.1} s of flight ({steps} steps, {evals} right-hand sides), median {:.1} ms on one core (budget {:.0} ms); trim table {:.1} ms",
        1e3 * m,
        1e3 * BUDGET_S,
        1e3 * table_s
    );
    let t = Instant::now();
    let d = hoverline::flight::dispersion::run_dispersions(
        &sc.vehicle,
        &atm,
        &table,
        &settings,
        Manoeuvre::HoverToCruise,
        &sc.file.flight.dispersions,
        1000,
        &|| {},
    );
    let dt = t.elapsed().as_secs_f64();
    println!(
        "dispersions: 1000 flights in {dt:.2} s on {} threads (budget {DISPERSION_BUDGET_S:.0} s); {} completed, {} departed",
        rayon::current_num_threads(),
        d.completed,
        d.failed
    );
    if m > BUDGET_S || dt > DISPERSION_BUDGET_S {
        eprintln!("over budget");
        std::process::exit(1);
    }
}
