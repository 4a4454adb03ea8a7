//! Benchmark: what `hoverline sweep` does for the tilt-wing courier's scenario, at 1,000 speeds
//! over the scenario's own range: its tilt schedule, its thresholds, the linear model and the
//! loop margins of the feedback law at every point, then the sweep.json document. On one core
//! and on all cores (the JSON written to a temporary file). A third line times the sweep
//! without loop margins, a fourth one untrimmable point (beyond the courier's top speed)
//! against one trimmed point.
//! Run with `cargo bench --bench sweep_speed`. Prints the median of several runs.

use std::path::Path;
use std::time::Instant;

use hoverline::atmosphere::isa;
use hoverline::control::law::FeedbackGains;
use hoverline::output::files::write_json;
use hoverline::scenario::load_scenario;
use hoverline::sweep::{run_sweep, SweepSettings};

/// CPU time of the whole process (s): on a shared machine the wall clock counts the other
/// processes' time too, and the one-thread runs have only the pool thread busy.
fn cpu_s() -> f64 {
    let mut t = libc::timespec {
        tv_sec: 0,
        tv_nsec: 0,
    };
    // SAFETY: `t` is a valid, writable timespec; the clock id is a constant libc defines.
    let rc = unsafe { libc::clock_gettime(libc::CLOCK_PROCESS_CPUTIME_ID, &mut t) };
    assert_eq!(rc, 0, "process CPU clock");
    t.tv_sec as f64 + 1e-9 * t.tv_nsec as f64
}

fn median(mut v: Vec<f64>) -> f64 {
    v.sort_by(|a, b| a.partial_cmp(b).expect("finite timings"));
    v[v.len() / 2]
}

fn main() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let sc = load_scenario(&root.join("scenarios/courier-transition.toml"))
        .expect("demo scenario loads");
    let atm = isa(
        sc.file.atmosphere.altitude_m,
        sc.file.atmosphere.temperature_offset_k,
    )
    .expect("atmosphere");
    let (lo, hi) = (sc.file.sweep.from_mps, sc.file.sweep.to_mps);
    let settings = SweepSettings {
        speeds_mps: (0..1000)
            .map(|i| lo + (hi - lo) * i as f64 / 999.0)
            .collect(),
        climb_rad: sc.climb_rad,
        schedule: sc.schedule.clone(),
        objective: sc.file.sweep.objective,
        thresholds: sc.file.thresholds.clone(),
        gains: Some(FeedbackGains::from_file(&sc.file.flight)),
        loop_model: hoverline::control::loops::LoopSettings::from_file(&sc.file.flight),
    };
    let mut bare = settings.clone();
    bare.gains = None;
    let one = rayon::ThreadPoolBuilder::new()
        .num_threads(1)
        .build()
        .expect("pool");
    let all = rayon::ThreadPoolBuilder::new().build().expect("pool");
    let dir = std::env::temp_dir().join(format!("hoverline-bench-{}", std::process::id()));
    let out = dir.join("sweep.json");
    let report = |label: &str, s: &SweepSettings, pool: &rayon::ThreadPool| {
        let mut times = Vec::new();
        let mut cpu = Vec::new();
        let mut trimmed = 0;
        let mut bytes = 0;
        for _ in 0..7 {
            let t = Instant::now();
            let c = cpu_s();
            let r = pool.install(|| run_sweep(&sc.vehicle, &atm, s, &|| {}));
            write_json(&out, &r).expect("writes");
            cpu.push(cpu_s() - c);
            times.push(t.elapsed().as_secs_f64());
            trimmed = r.points.iter().filter(|p| p.trimmed).count();
            bytes = std::fs::metadata(&out).map_or(0, |m| m.len());
        }
        println!(
            "courier sweep 1000 speeds, {label} ({} threads): median {:.1} ms wall, {:.1} ms CPU ({trimmed} trimmed, {:.1} MB JSON)",
            pool.current_num_threads(),
            1e3 * median(times),
            1e3 * median(cpu),
            bytes as f64 / 1e6
        );
    };
    report("linear models + loop margins, one core", &settings, &one);
    report("linear models + loop margins, all cores", &settings, &all);
    report("linear models, no loop margins, one core", &bare, &one);

    // One untrimmable point against one trimmed point: 16 copies of the same speed (one chunk),
    // as the sweep solves them, per point. The courier trims over its whole range, so the
    // untrimmable point is the first one found beyond it (the schedule holds its last tilt).
    let probe = run_sweep(&sc.vehicle, &atm, &settings, &|| {});
    let beyond = SweepSettings {
        speeds_mps: (1..=16).map(|k| hi + 5.0 * k as f64).collect(),
        ..settings.clone()
    };
    let beyond = run_sweep(&sc.vehicle, &atm, &beyond, &|| {});
    let bad = probe
        .points
        .iter()
        .chain(&beyond.points)
        .find(|p| !p.trimmed)
        .map(|p| p.speed_mps);
    let good = probe.points.iter().find(|p| p.trimmed).map(|p| p.speed_mps);
    let per_point = |speed: f64| {
        let s = SweepSettings {
            speeds_mps: vec![speed; 16],
            ..settings.clone()
        };
        let mut times = Vec::new();
        for _ in 0..7 {
            let c = cpu_s();
            one.install(|| run_sweep(&sc.vehicle, &atm, &s, &|| {}));
            times.push((cpu_s() - c) / 16.0);
        }
        1e6 * median(times)
    };
    if let (Some(b), Some(g)) = (bad, good) {
        let (tb, tg) = (per_point(b), per_point(g));
        println!(
            "one point, one core: untrimmable ({b:.2} m/s) median {tb:.0} us CPU, trimmed ({g:.2} m/s) median {tg:.0} us CPU, ratio {:.1}",
            tb / tg
        );
    }
    let _ = std::fs::remove_dir_all(&dir);
}
