//! Mutation test of the input layer: a seeded generator breaks the demo vehicle, polar and
//! scenario files in the ways users and tools do (deleted or repeated lines, numbers replaced
//! by 0, -1, +-1e308, 1e-308, nan, inf or a string, truncation, random bytes, long and
//! formula names) and runs the library entry points on each mutant under a per-case time
//! budget (a guard against a hang, not a speed check). Every case must end in a result or in
//! an error that names the file and a line; no panic, no hang, no non-finite number in a
//! printed summary. CI runs 2,000 cases; `cargo test --release --test it -- --ignored
//! mutation` runs 100,000 (set `HOVERLINE_MUTANTS` to choose another count).

use std::path::{Path, PathBuf};
use std::sync::mpsc;
use std::time::Duration;

use hoverline::input::InputError;
use hoverline::scenario::{load_scenario, Thresholds};
use hoverline::trim::{Condition, Objective, TiltSetting, TrimRequest};
use hoverline::vehicle::load_vehicle;

/// Per-case safety budget: a case that has not returned by then counts as a hang.
const CASE_BUDGET: Duration = Duration::from_secs(60);

/// xorshift64* (Vigna 2016): a small, seeded, reproducible generator.
struct Rng(u64);

impl Rng {
    fn next(&mut self) -> u64 {
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        self.0.wrapping_mul(0x2545_F491_4F6C_DD1D)
    }
    fn below(&mut self, n: usize) -> usize {
        (self.next() % n.max(1) as u64) as usize
    }
}

const VALUES: [&str; 14] = [
    "0", "-1", "1e308", "-1e308", "1e-308", "nan", "inf", "-inf", "\"x\"", "1e200", "1e-200",
    "0.0", "-0.0", "99999",
];

/// One mutation of a text (possibly into invalid UTF-8).
fn mutate(text: &str, rng: &mut Rng) -> Vec<u8> {
    let lines: Vec<&str> = text.lines().collect();
    if lines.is_empty() {
        return text.as_bytes().to_vec();
    }
    let i = rng.below(lines.len());
    let mut out: Vec<String> = lines.iter().map(|l| l.to_string()).collect();
    match rng.below(8) {
        0 => {
            out.remove(i);
        }
        1 | 2 => {
            // Replace the value of a `key = value` line (or a CSV cell).
            if let Some((k, _)) = out[i].split_once('=') {
                out[i] = format!("{k}= {}", VALUES[rng.below(VALUES.len())]);
            } else if out[i].contains(',') {
                let mut cells: Vec<String> = out[i].split(',').map(str::to_string).collect();
                let c = rng.below(cells.len());
                cells[c] = VALUES[rng.below(VALUES.len())]
                    .trim_matches('"')
                    .to_string();
                out[i] = cells.join(",");
            }
        }
        3 => {
            let l = out[i].clone();
            out.insert(i, l);
        }
        4 => {
            // Truncate at a random byte.
            let joined = out.join("\n");
            let cut = rng.below(joined.len() + 1);
            return joined.as_bytes()[..cut].to_vec();
        }
        5 => {
            // Random bytes into a random line.
            let mut b = out.join("\n").into_bytes();
            let at = rng.below(b.len() + 1);
            let n = 1 + rng.below(8);
            let junk: Vec<u8> = (0..n).map(|_| rng.next() as u8).collect();
            b.splice(at..at, junk);
            return b;
        }
        6 => {
            if out[i].trim_start().starts_with("name") {
                let name = if rng.below(2) == 0 {
                    "x".repeat(300)
                } else {
                    "=HYPERLINK(\\\"http://x\\\")".to_string()
                };
                out[i] = format!("name = \"{name}\"");
            } else {
                out[i] = String::new();
            }
        }
        _ => {
            // A second mutation on top.
            let once = String::from_utf8_lossy(&mutate(text, rng)).to_string();
            return mutate(&once, rng);
        }
    }
    out.join("\n").into_bytes()
}

/// How a case ended.
#[derive(Debug, Default)]
struct Tally {
    accepted: usize,
    refused_with_line: usize,
    refused_without_line: Vec<String>,
    non_finite: Vec<String>,
    panics: Vec<String>,
    hangs: Vec<String>,
}

/// Outcome of one case, computed on its own thread.
enum Outcome {
    Accepted(Option<String>),
    Refused(InputError),
}

/// A printed summary holds no non-finite number.
fn non_finite_in(text: &str) -> bool {
    text.split(|c: char| !(c.is_alphanumeric() || c == '.'))
        .any(|w| matches!(w, "NaN" | "inf" | "-inf"))
}

fn vehicle_case(path: PathBuf, speed: f64) -> Outcome {
    match load_vehicle(&path) {
        Err(e) => Outcome::Refused(e),
        Ok(v) => {
            let atm = hoverline::atmosphere::isa(0.0, 0.0).unwrap();
            let s = hoverline::vehicle::summary::summarise(&v, &atm);
            let mut text = hoverline::output::text::check(&s);
            let req = TrimRequest {
                speed_mps: speed,
                climb_rad: 0.0,
                tilt: TiltSetting::Free,
                pitch_rad: None,
                condition: Condition::Steady,
                objective: Objective::Power,
            };
            let (p, _) =
                hoverline::sweep::solve_point(&v, &atm, &req, &Thresholds::default(), None, false);
            text.push_str(&hoverline::output::text::point(&p));
            Outcome::Accepted(non_finite_in(&text).then_some(text))
        }
    }
}

fn scenario_case(path: PathBuf) -> Outcome {
    match load_scenario(&path) {
        Err(e) => Outcome::Refused(e),
        Ok(sc) => {
            // The grid counts are checked before anything is allocated.
            let _ = hoverline::corridor::CorridorSettings::for_scenario(&sc, None, None);
            let _ = hoverline::flight::FlightSettings::from_scenario(&sc);
            Outcome::Accepted(None)
        }
    }
}

fn run_case(what: String, f: impl FnOnce() -> Outcome + Send + 'static, tally: &mut Tally) {
    let (tx, rx) = mpsc::channel();
    std::thread::spawn(move || {
        let _ = tx.send(f());
    });
    match rx.recv_timeout(CASE_BUDGET) {
        Ok(Outcome::Accepted(None)) => tally.accepted += 1,
        Ok(Outcome::Accepted(Some(text))) => tally.non_finite.push(format!("{what}: {text}")),
        Ok(Outcome::Refused(e)) if e.line.is_some() => tally.refused_with_line += 1,
        Ok(Outcome::Refused(e)) => tally.refused_without_line.push(format!("{what}: {e}")),
        Err(mpsc::RecvTimeoutError::Timeout) => tally.hangs.push(what),
        Err(mpsc::RecvTimeoutError::Disconnected) => tally.panics.push(what),
    }
}

fn mutation_run(cases: usize, seed: u64) {
    let root = PathBuf::from(env!("CARGO_MANIFEST_DIR"));
    let dir = std::env::temp_dir().join(format!("hoverline-mutants-{}-{seed}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    let read = |p: &Path| std::fs::read_to_string(p).unwrap();
    let vehicles: Vec<(String, String)> = [
        "tilt-wing-courier",
        "lift-cruise-surveyor",
        "tail-sitter-wing",
        "tilt-rotor-mapper",
    ]
    .iter()
    .map(|n| {
        (
            n.to_string(),
            read(&root.join(format!("vehicles/{n}.toml"))),
        )
    })
    .collect();
    let csv = read(&root.join("vehicles/surveyor-fuselage-polar.csv"));
    std::fs::write(dir.join("surveyor-fuselage-polar.csv"), &csv).unwrap();
    let scenario = read(&root.join("scenarios/courier-transition.toml"))
        .replace("\"../vehicles/", &format!("\"{}/vehicles/", root.display()));
    let mut rng = Rng(seed | 1);
    let mut tally = Tally::default();
    for k in 0..cases {
        let speed = [0.0, 6.0, 15.0, 30.0][rng.below(4)];
        match rng.below(10) {
            0..=5 => {
                let (name, text) = &vehicles[rng.below(vehicles.len())];
                let p = dir.join(format!("{name}.toml"));
                std::fs::write(&p, mutate(text, &mut rng)).unwrap();
                run_case(
                    format!("case {k}: {name}"),
                    move || vehicle_case(p, speed),
                    &mut tally,
                );
            }
            6 | 7 => {
                let p = dir.join("mutant-polar.csv");
                std::fs::write(&p, mutate(&csv, &mut rng)).unwrap();
                let v = vehicles[1]
                    .1
                    .replace("surveyor-fuselage-polar.csv", "mutant-polar.csv");
                let vp = dir.join("surveyor-mutant-polar.toml");
                std::fs::write(&vp, v).unwrap();
                run_case(
                    format!("case {k}: polar"),
                    move || vehicle_case(vp, speed),
                    &mut tally,
                );
            }
            _ => {
                let p = dir.join("scenario.toml");
                std::fs::write(&p, mutate(&scenario, &mut rng)).unwrap();
                run_case(
                    format!("case {k}: scenario"),
                    move || scenario_case(p),
                    &mut tally,
                );
            }
        }
        if !tally.hangs.is_empty() {
            break;
        }
    }
    eprintln!(
        "mutation test, {cases} cases, seed {seed}: accepted {}, refused with a line {}, refused without a line {}, non-finite output {}, panics {}, hangs {}",
        tally.accepted,
        tally.refused_with_line,
        tally.refused_without_line.len(),
        tally.non_finite.len(),
        tally.panics.len(),
        tally.hangs.len()
    );
    let _ = std::fs::remove_dir_all(&dir);
    // Common practice, no source: input never panics or hangs the program, and every
    // refusal says where.
    assert!(tally.hangs.is_empty(), "hangs: {:?}", tally.hangs);
    assert!(tally.panics.is_empty(), "panics: {:?}", tally.panics);
    assert!(
        tally.refused_without_line.is_empty(),
        "refusals without a line: {:?}",
        &tally.refused_without_line[..tally.refused_without_line.len().min(5)]
    );
    assert!(
        tally.non_finite.is_empty(),
        "non-finite output: {:?}",
        &tally.non_finite[..tally.non_finite.len().min(2)]
    );
    // The generator must actually exercise both outcomes.
    assert!(tally.accepted > 0 && tally.refused_with_line > 0);
}

fn case_count(default: usize) -> usize {
    std::env::var("HOVERLINE_MUTANTS")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(default)
}

#[test]
fn mutated_input_files_never_panic_hang_or_lose_their_line() {
    mutation_run(case_count(2_000), 11);
}

#[test]
#[ignore = "long: 100,000 mutants"]
fn mutation_long_run() {
    mutation_run(case_count(100_000), 12);
}
