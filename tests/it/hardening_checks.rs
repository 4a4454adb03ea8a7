//! Malformed input never panics, never hangs and never runs out of memory: each family of
//! defects found by mutating the demo files is refused with exit status 2, the file, the line
//! and a hint. The binary runs under a safety timeout (a guard against a hang, not a speed
//! check).

use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// A fresh, empty folder for one test.
fn scratch(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("hoverline-harden-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

/// What a run of the binary left.
pub struct Run {
    pub code: Option<i32>,
    pub stdout: String,
    pub stderr: String,
}

/// Safety timeout of one run: a hang fails the test instead of blocking the suite.
const SAFETY_TIMEOUT: Duration = Duration::from_secs(300);

/// Run the binary with `args` in `cwd`, killing it after [`SAFETY_TIMEOUT`].
pub fn run_in(cwd: &Path, args: &[&str]) -> Run {
    let mut child = Command::new(env!("CARGO_BIN_EXE_hoverline"))
        .args(args)
        .current_dir(cwd)
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    // Drain the pipes on threads so a chatty child cannot block on a full pipe.
    let mut so = child.stdout.take().unwrap();
    let mut se = child.stderr.take().unwrap();
    let to = std::thread::spawn(move || {
        let mut s = String::new();
        let _ = std::io::Read::read_to_string(&mut so, &mut s);
        s
    });
    let te = std::thread::spawn(move || {
        let mut s = String::new();
        let _ = std::io::Read::read_to_string(&mut se, &mut s);
        s
    });
    let start = Instant::now();
    let status = loop {
        if let Some(s) = child.try_wait().unwrap() {
            break s;
        }
        if start.elapsed() > SAFETY_TIMEOUT {
            let _ = child.kill();
            let _ = child.wait();
            panic!("hoverline {args:?} hung (killed after the safety timeout)");
        }
        std::thread::sleep(Duration::from_millis(20));
    };
    Run {
        code: status.code(),
        stdout: to.join().unwrap(),
        stderr: te.join().unwrap(),
    }
}

/// Exit status 2 with `file:line`, one hint, no panic, and every `expect` in the message.
pub fn assert_refused(r: &Run, file: &str, expect: &[&str]) {
    let e = &r.stderr;
    assert_eq!(r.code, Some(2), "exit status {:?}: {e}", r.code);
    assert!(!e.contains("panicked"), "panic: {e}");
    let located = e
        .split(&format!("{file}:"))
        .skip(1)
        .any(|rest| rest.starts_with(|c: char| c.is_ascii_digit()));
    assert!(located, "no {file}:<line> in: {e}");
    assert_eq!(
        e.matches("hint:").count(),
        1,
        "not exactly one hint in: {e}"
    );
    for x in expect {
        assert!(e.contains(x), "'{x}' not in: {e}");
    }
}

/// The demo scenario text with its vehicle path made absolute.
fn demo_scenario(name: &str) -> String {
    let t = std::fs::read_to_string(root().join("scenarios").join(name)).unwrap();
    let v = root().join("vehicles");
    t.replace("\"../vehicles/", &format!("\"{}/", v.display()))
}

/// `text` with `from` replaced by `to`; the test data must contain `from`.
fn swap(text: &str, from: &str, to: &str) -> String {
    assert!(text.contains(from), "test data lacks '{from}'");
    text.replacen(from, to, 1)
}

fn write(dir: &Path, name: &str, text: &str) -> String {
    let p = dir.join(name);
    std::fs::write(&p, text).unwrap();
    p.to_string_lossy().to_string()
}

#[test]
fn counts_that_size_an_allocation_are_checked_before_use() {
    let d = scratch("counts");
    let base = demo_scenario("courier-heavy-hot.toml");
    // Common practice, no source: a count computed as (to - from) / step must not wrap, and
    // every grid states its limit.
    for (from, to, cmd, expect) in [
        (
            "step_mps = 1.0",
            "step_mps = 1e-308",
            "sweep",
            "at most 100000 points",
        ),
        (
            "step_mps = 1.0",
            "step_mps = 1e-6",
            "sweep",
            "at most 100000 points",
        ),
        ("to_mps = 30.0", "to_mps = 1e308", "sweep", "0..300 m/s"),
        (
            "pitch_bandwidth_rad_s = 4.0",
            "pitch_bandwidth_rad_s = 4.0\nsample_step_s = 1e-9",
            "fly",
            "at most 1000000",
        ),
        (
            "pitch_bandwidth_rad_s = 4.0",
            "pitch_bandwidth_rad_s = 4.0\nsample_step_s = 1e-5",
            "sweep",
            "at most 1000000",
        ),
    ] {
        let f = write(&d, "s.toml", &swap(&base, from, to));
        let r = run_in(&d, &[cmd, &f, "--out", "o"]);
        assert_refused(&r, "s.toml", &[expect]);
        assert!(!d.join("o").exists(), "{cmd} wrote output for bad input");
        assert!(!r.stdout.contains("wrote"), "{}", r.stdout);
    }
    let f = write(&d, "good.toml", &base);
    // The schedule optimiser's table: refused before the corridor is computed.
    let r = run_in(&d, &["schedule", &f, "--value-step", "0.01", "--out", "o"]);
    assert_eq!(r.code, Some(2), "{}", r.stderr);
    assert!(r.stderr.contains("at most 20000000 cells"), "{}", r.stderr);
    for flags in [
        ["--speed-step", "1e-300"],
        ["--speed-step", "1e-9"],
        ["--value-step", "1e-9"],
    ] {
        let r = run_in(&d, &["corridor", &f, flags[0], flags[1], "--out", "o"]);
        assert_eq!(r.code, Some(2), "{flags:?}: {}", r.stderr);
        assert!(!r.stderr.contains("panicked"), "{}", r.stderr);
        assert!(r.stderr.contains("at most"), "{}", r.stderr);
    }
    let _ = std::fs::remove_dir_all(&d);
}

/// `f` on a thread, failing the test if it does not return within [`SAFETY_TIMEOUT`].
fn returns<T: Send + 'static>(what: &str, f: impl FnOnce() -> T + Send + 'static) -> T {
    let (tx, rx) = std::sync::mpsc::channel();
    std::thread::spawn(move || {
        let _ = tx.send(f());
    });
    rx.recv_timeout(SAFETY_TIMEOUT)
        .unwrap_or_else(|_| panic!("{what} did not return (hang or panic)"))
}

#[test]
fn solvers_return_an_error_on_non_finite_models_instead_of_hanging() {
    use hoverline::scenario::Thresholds;
    use hoverline::trim::{Condition, Objective, TiltSetting, TrimRequest};
    let req = |speed_mps| TrimRequest {
        speed_mps,
        climb_rad: 0.0,
        tilt: TiltSetting::Free,
        pitch_rad: None,
        condition: Condition::Steady,
        objective: Objective::Power,
    };
    let base =
        hoverline::vehicle::load_vehicle(&root().join("vehicles/tilt-wing-courier.toml")).unwrap();
    let atm = hoverline::atmosphere::isa(0.0, 0.0).unwrap();
    // Common practice, no source: magnitudes past any airframe overflow the model; the point
    // must come back untrimmable with a reason, not hang in the eigenvalue iteration.
    let mut cases: Vec<(&str, hoverline::vehicle::Vehicle, f64)> = Vec::new();
    cases.push(("speed 1e100 m/s", base.clone(), 1e100));
    let mut v = base.clone();
    v.cg.x_m = -1e200;
    cases.push(("cg_x_m = -1e200", v, 10.0));
    let mut v = base.clone();
    v.mass_kg = 1e-250;
    cases.push(("mass_kg = 1e-250", v, 10.0));
    let mut v = base.clone();
    v.rotors[0].thrust_max_n = 1e300;
    cases.push(("thrust_max_n = 1e300", v, 10.0));
    for (what, v, speed) in cases {
        let r = req(speed);
        let report = returns(what, move || {
            hoverline::sweep::solve_point(&v, &atm, &r, &Thresholds::default(), None, true).0
        });
        assert!(
            !report.trimmed,
            "{what}: a non-finite point counted as trimmed"
        );
        assert!(!report.reasons.is_empty(), "{what}: no reason given");
    }
    // Source: nalgebra Schur::try_new documents None past its iteration budget; a NaN
    // entry must be refused before the iteration starts.
    let a = nalgebra::DMatrix::from_element(8, 8, f64::NAN);
    assert_eq!(
        hoverline::linear::try_complex_eigenvalues(&a),
        Err(hoverline::linear::EigenError::NonFinite)
    );
    let d = scratch("speed");
    let v = root().join("vehicles/tilt-wing-courier.toml");
    let r = run_in(&d, &["trim", &v.to_string_lossy(), "--speed", "1e100"]);
    assert_eq!(r.code, Some(2), "{}", r.stderr);
    assert!(r.stderr.contains("0..300 m/s"), "{}", r.stderr);
    let _ = std::fs::remove_dir_all(&d);
}

/// The demo vehicle text.
fn demo_vehicle(name: &str) -> String {
    std::fs::read_to_string(root().join("vehicles").join(name)).unwrap()
}

#[test]
fn meaningless_magnitudes_are_refused_with_a_plausible_range() {
    let d = scratch("magnitudes");
    let g = demo_vehicle("tilt-wing-courier.toml");
    // Common practice, no source: our sanity bounds (src/limits.rs, README.md); values past
    // them overflow the model into infinities.
    for (from, to, range) in [
        ("cg_x_m = -0.64", "cg_x_m = -1e200", "-1000..1000 m"),
        ("mass_kg = 25.0", "mass_kg = 1e-250", "0.01..100000 kg"),
        (
            "pitch_inertia_kg_m2 = 4.2",
            "pitch_inertia_kg_m2 = 1e-201",
            "kg m^2",
        ),
        ("chord_m = 0.49", "chord_m = 1e250", "0.0001..1000 m"),
        ("x_m = -1.58", "x_m = 1e300", "-1000..1000 m"),
        ("thrust_max_n = 38.0", "thrust_max_n = 1e308", "N"),
        ("power_max_w = 1200.0", "power_max_w = 1e308", "W"),
        ("rate_deg_s = 20.0", "rate_deg_s = 1e-300", "deg/s"),
        ("count = 12", "count = 4000000", "1..1000"),
    ] {
        let f = write(&d, "v.toml", &swap(&g, from, to));
        let r = run_in(&d, &["check", &f]);
        assert_refused(&r, "v.toml", &[range]);
    }
    // A polar cell of 1e308 in a tabulated polar, reported on its own line of the CSV.
    let sv = demo_vehicle("lift-cruise-surveyor.toml");
    let csv = std::fs::read_to_string(root().join("vehicles/surveyor-fuselage-polar.csv")).unwrap();
    let lines: Vec<&str> = csv.lines().collect();
    let row = lines
        .iter()
        .rposition(|l| l.starts_with("0"))
        .unwrap_or(lines.len() / 2);
    let mut cells: Vec<String> = lines[row].split(',').map(str::to_string).collect();
    cells[1] = "1e308".into();
    let mut bad = lines.clone();
    let joined = cells.join(",");
    bad[row] = &joined;
    write(&d, "surveyor-fuselage-polar.csv", &bad.join("\n"));
    let f = write(&d, "sv.toml", &sv);
    let r = run_in(&d, &["check", &f]);
    assert_refused(&r, "surveyor-fuselage-polar.csv", &["+-10"]);
    assert!(
        r.stderr
            .contains(&format!("surveyor-fuselage-polar.csv:{}", row + 1)),
        "{}",
        r.stderr
    );
    // Scenario magnitudes.
    let base = demo_scenario("courier-heavy-hot.toml");
    for (from, to, range) in [
        (
            "cg_shift_x_m = -0.015",
            "cg_shift_x_m = 1e308",
            "-1000..1000 m",
        ),
        ("mass_kg = 27.5", "mass_kg = 1e-300", "0.01..100000 kg"),
        (
            "temperature_offset_k = 20.0",
            "temperature_offset_k = 1000",
            "-100..100 K",
        ),
    ] {
        let f = write(&d, "s.toml", &swap(&base, from, to));
        let r = run_in(&d, &["sweep", &f, "--out", "o"]);
        assert_refused(&r, "s.toml", &[range]);
    }
    let _ = std::fs::remove_dir_all(&d);
}

#[test]
fn every_refusal_names_the_line_of_the_key_at_fault() {
    let d = scratch("lines");
    let base = demo_scenario("courier-heavy-hot.toml");
    let g = demo_vehicle("tilt-wing-courier.toml");
    // Common practice, no source: the line of the key that is wrong.
    let line_of = |text: &str, key: &str| {
        1 + text
            .lines()
            .position(|l| l.trim_start().starts_with(key))
            .unwrap()
    };
    // -300 K is reported on the temperature key, with one hint.
    let t = swap(
        &base,
        "temperature_offset_k = 20.0",
        "temperature_offset_k = -300",
    );
    let f = write(&d, "s.toml", &t);
    let r = run_in(&d, &["sweep", &f, "--out", "o"]);
    let at = format!("s.toml:{}:", line_of(&t, "temperature_offset_k"));
    assert_refused(&r, "s.toml", &[&at]);
    // A threshold of zero would switch its check off.
    let t = swap(&base, "thrust_margin = 0.15", "thrust_margin = 0.0");
    let f = write(&d, "s.toml", &t);
    let r = run_in(&d, &["sweep", &f, "--out", "o"]);
    assert_refused(
        &r,
        "s.toml",
        &[&format!("s.toml:{}:", line_of(&t, "thrust_margin"))],
    );
    // A missing vehicle file is reported on the scenario's `vehicle =` line.
    let t = swap(&base, "tilt-wing-courier.toml", "no-such-vehicle.toml");
    let f = write(&d, "s.toml", &t);
    let r = run_in(&d, &["sweep", &f, "--out", "o"]);
    assert_refused(
        &r,
        "s.toml",
        &[&format!("s.toml:{}:", line_of(&t, "vehicle ="))],
    );
    // A missing polar table is reported on the vehicle's `file =` line.
    let sv = swap(
        &demo_vehicle("lift-cruise-surveyor.toml"),
        "surveyor-fuselage-polar.csv",
        "missing.csv",
    );
    let f = write(&d, "v.toml", &sv);
    let r = run_in(&d, &["check", &f]);
    assert_refused(
        &r,
        "v.toml",
        &[&format!("v.toml:{}:", line_of(&sv, "file ="))],
    );
    // Invalid UTF-8 on line 3.
    let mut bytes = b"# a\n# b\nname = \"x".to_vec();
    bytes.extend([0xff, 0xfe]);
    bytes.extend(b"\"\n");
    std::fs::write(d.join("u.toml"), bytes).unwrap();
    let r = run_in(&d, &["check", "u.toml"]);
    assert_refused(&r, "u.toml", &["u.toml:3:", "UTF-8"]);
    // No rotor at all, and the TOML nesting limit: a line is named all the same.
    let no_rotor: String = {
        let start = g.find("[[rotor]]").unwrap();
        let end = g.find("[[surface]]").unwrap();
        format!("{}{}", &g[..start], &g[end..]).replace("rotor = \"wing-props\"", "rotor = \"x\"")
    };
    let f = write(&d, "v.toml", &no_rotor);
    let r = run_in(&d, &["check", &f]);
    assert_refused(&r, "v.toml", &[]);
    let deep = format!("name = {}{}\n", "[".repeat(200), "]".repeat(200));
    let f = write(&d, "v.toml", &deep);
    let r = run_in(&d, &["check", &f]);
    assert_refused(&r, "v.toml", &[]);
    // A too-short polar table points at its header line.
    std::fs::write(
        d.join("short.csv"),
        "# c\nalpha_deg,cl,cd,cm\n-180,0,0.1,0\n",
    )
    .unwrap();
    let sv = swap(
        &demo_vehicle("lift-cruise-surveyor.toml"),
        "surveyor-fuselage-polar.csv",
        "short.csv",
    );
    let f = write(&d, "v.toml", &sv);
    let r = run_in(&d, &["check", &f]);
    assert_refused(&r, "short.csv", &[]);
    let _ = std::fs::remove_dir_all(&d);
}

#[cfg(unix)]
#[test]
fn special_files_are_refused_and_foreign_content_is_not_echoed() {
    let d = scratch("special");
    let fifo = d.join("fifo.toml");
    let made = Command::new("mkfifo").arg(&fifo).status().unwrap();
    assert!(made.success());
    // Common practice, no source: a pipe blocks a reader forever, a device never ends.
    for target in [
        fifo.to_string_lossy().to_string(),
        "/dev/zero".into(),
        "/dev/urandom".into(),
    ] {
        let t = swap(
            &demo_scenario("courier-heavy-hot.toml"),
            &root()
                .join("vehicles/tilt-wing-courier.toml")
                .display()
                .to_string(),
            &target,
        );
        let f = write(&d, "s.toml", &t);
        let r = run_in(&d, &["sweep", &f, "--out", "o"]);
        assert_refused(&r, "s.toml", &["not a regular file"]);
        let r = run_in(&d, &["check", &target]);
        assert_eq!(r.code, Some(2), "{}", r.stderr);
    }
    // A file that is not ours: refused without its content in the message.
    let secret = d.join("secret");
    std::fs::write(&secret, "root:x:0:0:supersecret\n").unwrap();
    let r = run_in(&d, &["check", &secret.to_string_lossy()]);
    assert_eq!(r.code, Some(2), "{}", r.stderr);
    assert!(!r.stderr.contains("supersecret"), "{}", r.stderr);
    // Larger than the cap.
    let big = d.join("big.toml");
    std::fs::write(&big, "#".repeat(5 * 1024 * 1024)).unwrap();
    let r = run_in(&d, &["check", &big.to_string_lossy()]);
    assert_eq!(r.code, Some(2), "{}", r.stderr);
    assert!(r.stderr.contains("MiB"), "{}", r.stderr);
    let _ = std::fs::remove_dir_all(&d);
}

#[test]
fn names_are_capped_and_cannot_inject_formulas_or_escape_the_output_folder() {
    let d = scratch("names");
    let g = demo_vehicle("tilt-wing-courier.toml");
    // Source: OWASP, CSV Injection (a cell starting with = + - @ is run as a formula).
    let f = write(
        &d,
        "v.toml",
        &swap(&g, "name = \"wing\"", "name = \"=HYPERLINK(1)\""),
    );
    assert_refused(&run_in(&d, &["check", &f]), "v.toml", &["formula"]);
    // Common practice, no source: names at most 200 characters.
    let long = format!("name = \"{}\"", "w".repeat(1_000_000));
    let f = write(&d, "v.toml", &swap(&g, "name = \"wing\"", &long));
    assert_refused(&run_in(&d, &["check", &f]), "v.toml", &["at most 200"]);
    // A scenario name is one folder inside out/, never a path.
    let t = swap(
        &demo_scenario("courier-heavy-hot.toml"),
        "name = \"courier-heavy-hot\"",
        "name = \"../../escaped\"",
    );
    let t = swap(&t, "step_mps = 1.0", "step_mps = 10.0");
    let work = d.join("a").join("b");
    std::fs::create_dir_all(&work).unwrap();
    let f = write(&work, "s.toml", &t);
    let r = run_in(&work, &["sweep", &f]);
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    assert!(!d.join("escaped").exists() && !work.join("escaped").exists());
    let made: Vec<_> = std::fs::read_dir(work.join("out")).unwrap().collect();
    assert_eq!(made.len(), 1);
    let _ = std::fs::remove_dir_all(&d);
}

#[test]
fn a_closed_stdout_ends_printing_quietly_and_loses_no_file() {
    let d = scratch("pipe");
    let t = swap(
        &demo_scenario("courier-heavy-hot.toml"),
        "step_mps = 1.0",
        "step_mps = 10.0",
    );
    let f = write(&d, "s.toml", &t);
    let v = root().join("vehicles/tilt-wing-courier.toml");
    let v = v.to_string_lossy();
    // Common practice, no source: `cmd | head` closes the pipe early; the command exits 0
    // (or dies of SIGPIPE, the convention), never panics, and still writes its files.
    for args in [
        vec!["sweep", &f, "--out", "o"],
        vec!["check", &v],
        vec!["trim", &v, "--speed", "12"],
    ] {
        let mut child = Command::new(env!("CARGO_BIN_EXE_hoverline"))
            .args(&args)
            .current_dir(&d)
            .stdin(Stdio::null())
            .stdout(Stdio::piped())
            .stderr(Stdio::piped())
            .spawn()
            .unwrap();
        drop(child.stdout.take());
        let mut err = String::new();
        std::io::Read::read_to_string(&mut child.stderr.take().unwrap(), &mut err).unwrap();
        let status = child.wait().unwrap();
        assert_eq!(status.code(), Some(0), "{args:?}: {err}");
        assert!(!err.contains("panicked"), "{args:?}: {err}");
    }
    assert!(d.join("o/trim.csv").is_file());
    assert!(d.join("o/sweep.json").is_file());
    let _ = std::fs::remove_dir_all(&d);
}

/// Whether `line` writes a range as `a..b` or `a .. b` (numbers around two dots).
fn numeric_range(line: &str) -> bool {
    let b = line.as_bytes();
    (0..b.len().saturating_sub(1)).any(|i| {
        let dots = b[i] == b'.' && b[i + 1] == b'.' && b.get(i + 2) != Some(&b'.');
        let before = b[..i].iter().rev().find(|c| **c != b' ');
        let after = b[i + 2..].iter().find(|c| **c != b' ');
        dots && (i == 0 || b[i - 1] != b'.')
            && before.is_some_and(u8::is_ascii_digit)
            && after.is_some_and(|c| c.is_ascii_digit() || *c == b'-')
    })
}

#[test]
fn terminal_tables_fit_in_100_columns_and_use_words() {
    // Common practice, no source: a terminal summary a reader can take in keeps to about 100
    // columns (long reasons go under the table, wrapped) and uses words, not codes. Every demo
    // scenario, every table-printing command; the corridor grid is coarsened (the layout does
    // not depend on the grid) to keep the check quick. Only the `wrote <path>` lines may be
    // longer, as a path is never broken.
    let d = scratch("width");
    let mut demos: Vec<PathBuf> = std::fs::read_dir(root().join("scenarios"))
        .unwrap()
        .flatten()
        .map(|e| e.path())
        .filter(|p| p.extension().is_some_and(|x| x == "toml"))
        .collect();
    demos.sort();
    assert!(demos.len() >= 5, "{demos:?}");
    let coarse = ["--speed-step", "2", "--value-step", "5"];
    let mut lines = 0;
    for demo in &demos {
        let demo = demo.to_string_lossy();
        for cmd in ["sweep", "corridor", "schedule", "fly"] {
            let mut args = vec![cmd, &demo, "--out", "o"];
            if cmd == "corridor" || cmd == "schedule" {
                args.extend(coarse);
            }
            let r = run_in(&d, &args);
            assert_eq!(r.code, Some(0), "{args:?}: {}", r.stderr);
            for line in r.stdout.lines().filter(|l| !l.starts_with("wrote ")) {
                lines += 1;
                let width = line.chars().count();
                assert!(width <= 100, "{cmd} {demo}: {width} columns: {line}");
                for code in ["maxRe", "none m/s", "limited by Cap", "beyond -"] {
                    assert!(!line.contains(code), "{cmd} {demo}: '{code}' in: {line}");
                }
                let negative_zero = line.split_whitespace().any(|w| {
                    let w = w.trim_end_matches([',', ';', ')', '%']);
                    w.strip_prefix('-').is_some_and(|r| {
                        r.starts_with('0') && r.bytes().all(|c| c == b'0' || c == b'.')
                    })
                });
                assert!(!negative_zero, "{cmd} {demo}: a negative zero in: {line}");
                // A range whose ends print alike is a single speed.
                for w in line.split_whitespace().collect::<Vec<_>>().windows(3) {
                    let same = w[1] == "to" && w[0] == w[2].trim_end_matches([',', ';']);
                    assert!(!same, "{cmd} {demo}: a range of one speed in: {line}");
                }
                assert!(!numeric_range(line), "{cmd} {demo}: '..' range in: {line}");
                let cells: Vec<&str> = line.split_whitespace().collect();
                let coded = cells.get(1).is_some_and(|c| *c == "yes" || *c == "!");
                assert!(
                    !(cmd == "sweep" && coded),
                    "{cmd} {demo}: a code in the verdict column: {line}"
                );
            }
        }
    }
    assert!(lines > 500, "{lines} lines checked");
    let _ = std::fs::remove_dir_all(&d);
}

/// The `"scenario"` named in a JSON file of a run folder.
fn scenario_in(path: &Path) -> String {
    let text = std::fs::read_to_string(path).unwrap();
    let v: serde_json::Value = serde_json::from_str(&text).unwrap();
    v["scenario"].as_str().unwrap_or_default().to_string()
}

/// A courier scenario named `name` with sweep step `step`.
fn courier(d: &Path, name: &str, step: &str) -> String {
    let t = swap(
        &demo_scenario("courier-transition.toml"),
        "name = \"courier-transition\"",
        &format!("name = \"{name}\""),
    );
    let t = swap(&t, "step_mps = 1.0", &format!("step_mps = {step}"));
    write(d, &format!("{name}.toml"), &t)
}

/// Every file of the set names the same scenario, and the page embeds that run's figure.
fn one_complete_set(out: &Path) -> String {
    let name = scenario_in(&out.join("report.json"));
    for f in ["sweep.json", "corridor.json", "flight.json"] {
        assert_eq!(scenario_in(&out.join(f)), name, "{f} is from another run");
    }
    let page = std::fs::read_to_string(out.join("report.html")).unwrap();
    assert!(page.contains(&name), "report.html is from another run");
    name
}

#[test]
fn report_runs_are_written_as_a_set() {
    let d = scratch("report-set");
    let a = courier(&d, "run-a", "2.0");
    let b = courier(&d, "run-b", "3.0");
    // Common practice, no source: two runs into one folder at once never mix; the second is
    // refused while the first holds the folder, or runs after it.
    let (ra, rb) = std::thread::scope(|s| {
        let ta = s.spawn(|| run_in(&d, &["report", &a, "--out", "o"]));
        let tb = s.spawn(|| run_in(&d, &["report", &b, "--out", "o"]));
        (ta.join().unwrap(), tb.join().unwrap())
    });
    for r in [&ra, &rb] {
        let refused = r.code == Some(1) && r.stderr.contains("another hoverline run");
        assert!(r.code == Some(0) || refused, "{:?}: {}", r.code, r.stderr);
    }
    assert!(ra.code == Some(0) || rb.code == Some(0));
    one_complete_set(&d.join("o"));
    assert!(!d.join("o").join(".hoverline-run.lock").exists());

    // An interrupted run leaves the old complete set (or, had it finished, the new one).
    let first = one_complete_set(&d.join("o"));
    let slow = courier(&d, "run-slow", "0.25");
    let child = Command::new(env!("CARGO_BIN_EXE_hoverline"))
        .args(["report", &slow, "--out", "o"])
        .current_dir(&d)
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .spawn()
        .unwrap();
    let start = Instant::now();
    let staging_seen = || {
        std::fs::read_dir(d.join("o")).unwrap().flatten().any(|e| {
            e.file_name()
                .to_string_lossy()
                .starts_with(".hoverline-staging-")
        })
    };
    while !staging_seen() && start.elapsed() < SAFETY_TIMEOUT {
        std::thread::sleep(Duration::from_millis(10));
    }
    std::thread::sleep(Duration::from_millis(200));
    let killed = Command::new("kill")
        .args(["-INT", &child.id().to_string()])
        .status()
        .unwrap();
    assert!(killed.success());
    let mut child = child;
    let status = child.wait().unwrap();
    let now = one_complete_set(&d.join("o"));
    assert!(now == first || now == "run-slow", "{now}");
    // Common practice, no source: an interrupted command cleans up after itself and exits
    // with 128 + SIGINT; no staging folder, lock or temporary is left in the folder.
    let finished_first = now == "run-slow" && status.code() == Some(0);
    assert!(status.code() == Some(130) || finished_first, "{status:?}");
    let leftovers: Vec<String> = std::fs::read_dir(d.join("o"))
        .unwrap()
        .flatten()
        .map(|e| e.file_name().to_string_lossy().to_string())
        .filter(|n| n.starts_with('.'))
        .collect();
    assert!(leftovers.is_empty(), "left behind: {leftovers:?}");
    // The next run clears what the interrupted one left behind.
    let r = run_in(&d, &["report", &a, "--out", "o"]);
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    assert!(!staging_seen());
    assert_eq!(one_complete_set(&d.join("o")), "run-a");
    let _ = std::fs::remove_dir_all(&d);
}
