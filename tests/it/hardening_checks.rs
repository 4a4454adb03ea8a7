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
            "[sweep]",
            "[flight]\nsample_step_s = 1e-9\n\n[sweep]",
            "fly",
            "at most 1000000",
        ),
        (
            "[sweep]",
            "[flight]\nsample_step_s = 1e-5\n\n[sweep]",
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
