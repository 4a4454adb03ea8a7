//! Benchmark: a corridor of 200 airspeeds x 91 values of the transition variable on a demo
//! vehicle, and the schedule built from it. Plain `std::time::Instant`, median of several runs.
//!
//! Run with `cargo bench --bench corridor_speed`; optional arguments: scenario files (default
//! the tilt-rotor mapper) and `--runs N` (default 5). Targets (issue 4): corridor under 2 s
//! and schedule under 0.2 s on a 2-core machine.

use std::path::PathBuf;
use std::time::Instant;

use hoverline::corridor::{compute, CorridorSettings};
use hoverline::scenario::load_scenario;
use hoverline::schedule::{build, ScheduleSettings};

/// CPU time of this process (user + system, s) from /proc/self/stat on Linux; None elsewhere.
/// On a shared machine the wall clock depends on the load, the CPU time much less.
fn cpu_s() -> Option<f64> {
    let s = std::fs::read_to_string("/proc/self/stat").ok()?;
    // Fields after the command name (which is in parentheses and may contain spaces).
    let rest = &s[s.rfind(')')? + 2..];
    let f: Vec<&str> = rest.split_whitespace().collect();
    let ticks: f64 = f.get(11)?.parse::<f64>().ok()? + f.get(12)?.parse::<f64>().ok()?;
    // USER_HZ is 100 on every Linux configuration in practice (from memory).
    Some(ticks / 100.0)
}

fn median(mut v: Vec<f64>) -> f64 {
    v.sort_by(f64::total_cmp);
    let n = v.len();
    if n % 2 == 1 {
        v[n / 2]
    } else {
        0.5 * (v[n / 2 - 1] + v[n / 2])
    }
}

fn main() {
    let mut files: Vec<PathBuf> = Vec::new();
    let mut runs = 5usize;
    let mut args = std::env::args().skip(1);
    while let Some(a) = args.next() {
        if a == "--runs" {
            runs = args
                .next()
                .and_then(|s| s.parse().ok())
                .unwrap_or(runs)
                .max(1);
        } else if a.ends_with(".toml") {
            files.push(PathBuf::from(a));
        }
        // cargo passes --bench; other flags are ignored.
    }
    if files.is_empty() {
        files.push(PathBuf::from("scenarios/mapper-transition.toml"));
    }
    println!(
        "corridor_speed: {} threads, {runs} runs per case",
        rayon::current_num_threads()
    );
    for f in files {
        let sc = match load_scenario(&f) {
            Ok(s) => s,
            Err(e) => {
                eprintln!("{e}");
                std::process::exit(2);
            }
        };
        let atm = hoverline::atmosphere::isa(
            sc.file.atmosphere.altitude_m,
            sc.file.atmosphere.temperature_offset_k,
        )
        .expect("scenario atmosphere was validated");
        let mut s = CorridorSettings::for_scenario(&sc, None, None).expect("scenario grid");
        let (from, to) = (sc.file.sweep.from_mps, sc.file.sweep.to_mps);
        s.speeds_mps = (0..200)
            .map(|k| from + (to - from) * k as f64 / 199.0)
            .collect();
        let (lo, hi) = (s.values_rad[0], s.values_rad[s.values_rad.len() - 1]);
        let (lo, hi) = if s.variable == hoverline::corridor::Variable::Tilt {
            (0f64.to_radians().max(lo), 90f64.to_radians().min(hi))
        } else {
            (lo, hi)
        };
        s.values_rad = (0..91).map(|k| lo + (hi - lo) * k as f64 / 90.0).collect();
        let ss = ScheduleSettings::for_scenario(&sc);
        let mut t_corridor = Vec::new();
        let mut cpu_corridor = Vec::new();
        let mut t_dp = Vec::new();
        let mut t_schedule = Vec::new();
        let mut last = None;
        for _ in 0..runs {
            let t0 = Instant::now();
            let c0 = cpu_s();
            let c = compute(&sc.vehicle, &atm, &s, &|| {}).expect("corridor");
            t_corridor.push(t0.elapsed().as_secs_f64());
            if let (Some(a), Some(b)) = (c0, cpu_s()) {
                cpu_corridor.push(b - a);
            }
            let t1 = Instant::now();
            let b = build(&sc.vehicle, &atm, &s, &c, &ss, &sc.schedule);
            t_schedule.push(t1.elapsed().as_secs_f64());
            if let Ok(b) = &b {
                t_dp.push(b.timing.dp_s);
            }
            last = Some((c, b));
        }
        let (c, b) = last.expect("at least one run");
        let inside = c.points.iter().filter(|p| p.inside).count();
        let trimmed = c.points.iter().filter(|p| p.trimmed).count();
        println!(
            "{}: corridor {} x {} = {} points ({} trimmed, {} inside)",
            sc.file.name,
            c.speeds_mps.len(),
            c.values_deg.len(),
            c.points.len(),
            trimmed,
            inside
        );
        let load = std::fs::read_to_string("/proc/loadavg").unwrap_or_default();
        println!(
            "  corridor median {:.3} s wall (target < 2 s), {} CPU; load average {}",
            median(t_corridor),
            if cpu_corridor.is_empty() {
                "unknown".to_string()
            } else {
                format!("{:.3} s", median(cpu_corridor))
            },
            load.split_whitespace().next().unwrap_or("?")
        );
        match b {
            Ok(b) => {
                println!(
                    "  schedule median {:.4} s (target < 0.2 s), of which dynamic programming {:.4} s; smallest margin {:.3}",
                    median(t_schedule),
                    median(t_dp),
                    b.worst.smallest_margin.unwrap_or(f64::NAN)
                );
            }
            Err(e) => println!("  schedule: {e}"),
        }
    }
}
