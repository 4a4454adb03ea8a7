//! Vehicle and scenario files: every demo file loads, bad files are refused with the file,
//! the line and a hint (exit status 2, never a panic), demo polars are continuous, and the
//! `check` summary follows the textbook relations it quotes.

use std::path::{Path, PathBuf};
use std::process::Command;

use hoverline::atmosphere::Atmosphere;
use hoverline::scenario::load_scenario;
use hoverline::vehicle::summary::summarise;
use hoverline::vehicle::{load_vehicle, parse_vehicle};

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn demo_vehicles() -> Vec<PathBuf> {
    let mut v: Vec<PathBuf> = std::fs::read_dir(root().join("vehicles"))
        .expect("vehicles folder")
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.extension().is_some_and(|x| x == "toml"))
        .collect();
    v.sort();
    v
}

fn bin() -> Command {
    Command::new(env!("CARGO_BIN_EXE_hoverline"))
}

#[test]
fn every_demo_vehicle_and_scenario_loads() {
    assert_eq!(demo_vehicles().len(), 4);
    for p in demo_vehicles() {
        load_vehicle(&p).unwrap_or_else(|e| panic!("{e}"));
    }
    let mut n = 0;
    for e in std::fs::read_dir(root().join("scenarios")).unwrap() {
        let p = e.unwrap().path();
        if p.extension().is_none_or(|x| x != "toml") {
            continue;
        }
        load_scenario(&p).unwrap_or_else(|e| panic!("{e}"));
        n += 1;
    }
    assert!(n >= 4);
}

#[test]
fn demo_polars_are_continuous_over_the_full_circle() {
    // Common practice, no source: a full-range polar has no jump between neighbouring
    // 0.1-deg samples larger than 0.03 in any coefficient (tabulated polars: 0.03 per table
    // step of their own spacing is allowed, since they interpolate linearly).
    for p in demo_vehicles() {
        let v = load_vehicle(&p).unwrap();
        for s in &v.surfaces {
            let mut prev = s.polar.coefficients((-180f64).to_radians());
            for i in 1..=3600 {
                let a = (-180.0 + 0.1 * i as f64).to_radians();
                let c = s.polar.coefficients(a);
                for (x, y) in [(c.cl, prev.cl), (c.cd, prev.cd), (c.cm, prev.cm)] {
                    assert!(
                        (x - y).abs() < 0.03,
                        "{}: jump {} at {:.1} deg",
                        s.name,
                        (x - y).abs(),
                        a.to_degrees()
                    );
                }
                prev = c;
            }
        }
    }
}

#[test]
fn check_summary_follows_momentum_theory_and_the_stall_speed_relation() {
    // Source: ideal hover power P = W^1.5 / sqrt(2 rho A) (Leishman, Principles of Helicopter
    // Aerodynamics, 2nd ed. 2006, ch. 2) and V_s = sqrt(2 W / (rho S CL_max)) (Anderson,
    // Aircraft Performance and Design, 1999, ch. 5; from memory).
    let v = load_vehicle(&root().join("vehicles/lift-cruise-surveyor.toml")).unwrap();
    let atm = Atmosphere::sea_level();
    let s = summarise(&v, &atm);
    let w = v.weight_n();
    let area = 4.0 * std::f64::consts::PI * 0.2f64.powi(2);
    assert!((s.disk_loading_n_m2 - w / area).abs() < 1e-9 * w);
    let rho = s.density_kg_m3;
    assert!(
        (s.ideal_hover_power_w / (w.powf(1.5) / (2.0 * rho * area).sqrt()) - 1.0).abs() < 1e-12
    );
    let clmax = v.surfaces[0].polar.cl_max();
    let vs = (2.0 * w / (rho * v.reference.area_m2 * clmax)).sqrt();
    assert!((s.stall_speed_mps.unwrap() - vs).abs() < 1e-9);
    assert!(s.static_margin_pct.is_some_and(|k| k > 0.0));
}

#[test]
fn check_runs_on_every_demo_vehicle_and_writes_polars() {
    let dir = std::env::temp_dir().join(format!("hoverline-check-{}", std::process::id()));
    for p in demo_vehicles() {
        let out = bin()
            .arg("check")
            .arg(&p)
            .arg("--plot")
            .arg(&dir)
            .output()
            .unwrap();
        assert!(
            out.status.success(),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
        let text = String::from_utf8_lossy(&out.stdout);
        assert!(text.contains("not a flight clearance"));
        let json = bin().arg("check").arg(&p).arg("--json").output().unwrap();
        let v: serde_json::Value =
            serde_json::from_slice(&json.stdout).expect("valid JSON on stdout");
        assert!(v["weight_n"].as_f64().unwrap() > 0.0);
    }
    let _ = std::fs::remove_dir_all(&dir);
}

/// A known-good vehicle text to break in the tests below.
fn good() -> String {
    std::fs::read_to_string(root().join("vehicles/tilt-wing-courier.toml")).unwrap()
}

/// `text` with `from` replaced by `to`; the test data must contain `from`.
fn swap(text: &str, from: &str, to: &str) -> String {
    assert!(text.contains(from), "test data lacks '{from}'");
    text.replace(from, to)
}

fn refused(text: &str, expect: &[&str]) {
    let dir = std::env::temp_dir().join(format!(
        "hoverline-bad-{}-{}",
        std::process::id(),
        expect[0].len()
    ));
    std::fs::create_dir_all(&dir).unwrap();
    let p = dir.join("bad.toml");
    std::fs::write(&p, text).unwrap();
    // Library: an error, not a panic.
    let Err(e) = parse_vehicle(text, &p) else {
        panic!("the file must be refused ({expect:?})");
    };
    let msg = e.to_string();
    assert!(e.line.is_some(), "no line in: {msg}");
    assert!(msg.contains("bad.toml:"), "no file:line in: {msg}");
    assert!(msg.contains("hint:"), "no hint in: {msg}");
    for x in expect {
        assert!(msg.contains(x), "'{x}' not in: {msg}");
    }
    // Binary: exit status 2 and the same message on stderr.
    let out = bin().arg("check").arg(&p).output().unwrap();
    assert_eq!(
        out.status.code(),
        Some(2),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    assert!(String::from_utf8_lossy(&out.stderr).contains("bad.toml:"));
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn non_physical_values_are_refused_with_file_line_and_hint() {
    let g = good();
    refused(
        &swap(&g, "mass_kg = 25.0", "mass_kg = 0.0"),
        &["mass_kg", "outside 0.01..100000 kg"],
    );
    refused(&swap(&g, "mass_kg = 25.0", "mass_kg = -3.0"), &["mass_kg"]);
    refused(&swap(&g, "area_m2 = 1.45", "area_m2 = -1.45"), &["area_m2"]);
    refused(
        &swap(&g, "stall_pos_deg = 18.0", "stall_pos_deg = 95.0"),
        &["stall_pos_deg", "0..90"],
    );
    refused(&swap(&g, "mass_kg = 25.0", "mass_kg = nan"), &["finite"]);
    refused(
        &swap(&g, "radius_m = 0.12", "radius_m = inf"),
        &["radius_m", "finite"],
    );
    refused(
        &swap(&g, "rotor = \"wing-props\"", "rotor = \"wing-fans\""),
        &["no rotor is named 'wing-fans'", "wing-props"],
    );
    refused(
        &swap(
            &g,
            "min_deg = 0.0\nmax_deg = 95.0",
            "min_deg = 95.0\nmax_deg = 0.0",
        ),
        &["min_deg", "above"],
    );
    refused(
        &swap(&g, "fraction = 0.93", "fraction = 1.45"),
        &["fraction"],
    );
    refused(
        &swap(&g, "figure_of_merit = 0.68", "figure_of_merit = 1.4"),
        &["figure_of_merit"],
    );
    // Unknown key, wrong type, broken syntax: located by the parser.
    refused(
        &swap(&g, "mass_kg = 25.0", "mass_kg = 25.0\nmass_lb = 55.0"),
        &["unknown field"],
    );
    refused(&swap(&g, "count = 12", "count = \"two\""), &["count"]);
    refused(&swap(&g, "[mass]", "[mass"), &["bad.toml"]);
}

#[test]
fn tabulated_polars_are_checked_for_coverage_and_order() {
    // A table that does not reach -180 deg, and one out of order, both refused with the row.
    let dir = std::env::temp_dir().join(format!("hoverline-table-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let vehicle =
        std::fs::read_to_string(root().join("vehicles/lift-cruise-surveyor.toml")).unwrap();
    let table =
        std::fs::read_to_string(root().join("vehicles/surveyor-fuselage-polar.csv")).unwrap();
    let vp = dir.join("v.toml");
    std::fs::write(&vp, &vehicle).unwrap();
    let cut: String = table
        .lines()
        .filter(|l| !l.starts_with("-180.0,"))
        .map(|l| format!("{l}\n"))
        .collect();
    std::fs::write(dir.join("surveyor-fuselage-polar.csv"), cut).unwrap();
    let e = load_vehicle(&vp).expect_err("uncovered table refused");
    assert!(e.to_string().contains("surveyor-fuselage-polar.csv"), "{e}");
    let swapped = table.replace("-178.0,", "-175.5,");
    std::fs::write(dir.join("surveyor-fuselage-polar.csv"), swapped).unwrap();
    let e = load_vehicle(&vp).expect_err("unordered table refused");
    assert!(e.line.is_some(), "{e}");
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn bad_usage_and_missing_files_exit_with_status_2() {
    let out = bin()
        .args(["trim", "vehicles/none.toml", "--speed", "10"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    let out = bin()
        .arg("trim")
        .arg(root().join("vehicles/tail-sitter-wing.toml"))
        .args(["--speed", "-4"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    let out = bin()
        .arg("trim")
        .arg(root().join("vehicles/tail-sitter-wing.toml"))
        .args(["--speed", "5", "--tilt-deg", "30"])
        .output()
        .unwrap();
    assert_eq!(
        out.status.code(),
        Some(2),
        "tail-sitter has no tilt actuator"
    );
    let out = bin().arg("frobnicate").output().unwrap();
    assert_eq!(out.status.code(), Some(2));
    let _ = Path::new(".");
}
