//! Benchmark: a sweep of 1,000 speeds with the linear model of every point, on one demo
//! vehicle (the tail-sitter wing, hover to 24 m/s), on one core and on all cores.
//! Run with `cargo bench --bench sweep_speed`. Prints the median of several runs.

use std::path::Path;
use std::time::Instant;

use hoverline::atmosphere::isa;
use hoverline::scenario::{Schedule, Thresholds};
use hoverline::sweep::{run_sweep, SweepSettings};
use hoverline::trim::Objective;
use hoverline::vehicle::load_vehicle;

fn median(mut v: Vec<f64>) -> f64 {
    v.sort_by(|a, b| a.partial_cmp(b).expect("finite timings"));
    v[v.len() / 2]
}

fn main() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let v = load_vehicle(&root.join("vehicles/tail-sitter-wing.toml")).expect("demo vehicle loads");
    let atm = isa(100.0, 0.0).expect("atmosphere");
    let settings = SweepSettings {
        speeds_mps: (0..1000).map(|i| 24.0 * i as f64 / 999.0).collect(),
        climb_rad: 0.0,
        schedule: Schedule::Free,
        objective: Objective::Power,
        thresholds: Thresholds::default(),
        gains: None,
    };
    let one = rayon::ThreadPoolBuilder::new()
        .num_threads(1)
        .build()
        .expect("pool");
    let all = rayon::ThreadPoolBuilder::new().build().expect("pool");
    let report = |label: &str, pool: &rayon::ThreadPool| {
        let mut times = Vec::new();
        let mut trimmed = 0;
        for _ in 0..7 {
            let t = Instant::now();
            let r = pool.install(|| run_sweep(&v, &atm, &settings, &|| {}));
            times.push(t.elapsed().as_secs_f64());
            trimmed = r.points.iter().filter(|p| p.trimmed).count();
        }
        println!(
            "sweep 1000 speeds + linear models, {label} ({} threads): median {:.1} ms ({trimmed} trimmed)",
            pool.current_num_threads(),
            1e3 * median(times)
        );
    };
    report("one core", &one);
    report("all cores", &all);
}
