//! The README keeps up with the code: every key a vehicle, scenario or schedule file accepts has
//! a line in its key reference, the annotated example files are the shipped demo files byte for
//! byte, and the commands table lists every option each command takes.
//!
//! The keys are not listed here by hand: they are read from the strict serde structs themselves.
//! A file with an unknown key is refused with "unknown field `x`, expected one of `a`, `b`", so
//! probing each table with an unknown key lists its fields; a field that accepts a table (or an
//! array of tables, or a `kind`-tagged table) is probed in turn.

use std::collections::BTreeSet;
use std::path::Path;
use std::process::Command;

use serde::de::DeserializeOwned;

use hoverline::scenario::{ScenarioFile, ScheduleDocument};
use hoverline::vehicle::file::VehicleFile;

const PROBE: &str = "zz_probe_key";

fn readme() -> String {
    std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("README.md"))
        .expect("README.md is readable")
}

/// One step of a key path: a table or an array of tables, with the `kind` tag it needs.
#[derive(Clone)]
struct Step {
    name: String,
    array: bool,
    kind: Option<String>,
}

/// The TOML text that opens the table at `path` (each level given, arrays as `[[..]]`) and puts
/// `body` in it.
fn document(path: &[Step], body: &str) -> String {
    let mut text = String::new();
    let mut dotted = Vec::new();
    for s in path {
        dotted.push(s.name.clone());
        let head = dotted.join(".");
        if s.array {
            text.push_str(&format!("[[{head}]]\n"));
        } else {
            text.push_str(&format!("[{head}]\n"));
        }
        if let Some(k) = &s.kind {
            text.push_str(&format!("kind = \"{k}\"\n"));
        }
    }
    text.push_str(body);
    text
}

fn error_of<T: DeserializeOwned>(text: &str) -> Option<String> {
    toml::from_str::<T>(text)
        .err()
        .map(|e| e.message().to_string())
}

/// The back-quoted names after "expected" in a serde message.
fn expected_names(message: &str) -> Vec<String> {
    let Some(at) = message.find("expected") else {
        return Vec::new();
    };
    message[at..]
        .split('`')
        .skip(1)
        .step_by(2)
        .map(str::to_string)
        .collect()
}

/// The fields of the table at `path`, or `None` when the path does not hold a table.
fn fields_at<T: DeserializeOwned>(path: &[Step]) -> Option<Vec<String>> {
    let message = error_of::<T>(&document(path, &format!("{PROBE} = 1\n")))?;
    if message.contains(&format!("unknown field `{PROBE}`")) {
        return Some(expected_names(&message));
    }
    if message.contains("there are no fields") {
        return Some(Vec::new());
    }
    None
}

/// Every key path under `path` (tables included), dotted, added to `out`.
fn collect<T: DeserializeOwned>(path: &[Step], out: &mut BTreeSet<String>) {
    let Some(fields) = fields_at::<T>(path) else {
        return;
    };
    let prefix: Vec<String> = path.iter().map(|s| s.name.clone()).collect();
    for f in fields {
        let mut dotted = prefix.clone();
        dotted.push(f.clone());
        out.insert(dotted.join("."));
        for array in [false, true] {
            let mut next = path.to_vec();
            next.push(Step {
                name: f.clone(),
                array,
                kind: None,
            });
            if fields_at::<T>(&next).is_some() {
                collect::<T>(&next, out);
                break;
            }
            // A `kind`-tagged table: an unknown kind lists the variants.
            let message = error_of::<T>(&document(&next, &format!("kind = \"{PROBE}\"\n")))
                .unwrap_or_default();
            if message.contains(&format!("unknown variant `{PROBE}`")) {
                out.insert(format!("{}.kind", dotted.join(".")));
                for variant in expected_names(&message) {
                    let last = next.len() - 1;
                    next[last].kind = Some(variant);
                    collect::<T>(&next, out);
                }
                break;
            }
        }
    }
}

fn keys_of<T: DeserializeOwned>() -> BTreeSet<String> {
    let mut out = BTreeSet::new();
    collect::<T>(&[], &mut out);
    out
}

/// The documented keys of the README table between `<!-- keys: NAME -->` and `<!-- /keys -->`:
/// rows `| `key` | meaning |`. Panics on a row without a meaning.
fn documented(readme: &str, name: &str) -> BTreeSet<String> {
    let open = format!("<!-- keys: {name} -->");
    let start = readme
        .find(&open)
        .unwrap_or_else(|| panic!("README has no {open} marker"));
    let rest = &readme[start + open.len()..];
    let end = rest.find("<!-- /keys -->").expect("key table is closed");
    let mut keys = BTreeSet::new();
    for line in rest[..end].lines() {
        let cells: Vec<&str> = line.split('|').map(str::trim).collect();
        if cells.len() < 4 || !cells[1].starts_with('`') {
            continue;
        }
        let key = cells[1].trim_matches('`').to_string();
        assert!(
            cells[2].len() >= 8,
            "README key {key} ({name} file) has no real description: '{}'",
            cells[2]
        );
        assert!(keys.insert(key.clone()), "README lists {key} twice");
    }
    keys
}

fn compare(name: &str, accepted: &BTreeSet<String>, readme: &str) {
    let doc = documented(readme, name);
    let missing: Vec<_> = accepted.difference(&doc).collect();
    let stale: Vec<_> = doc.difference(accepted).collect();
    assert!(
        missing.is_empty(),
        "{name} file keys without a line in README's key reference: {missing:?}"
    );
    assert!(
        stale.is_empty(),
        "README documents {name} keys the file does not accept: {stale:?}"
    );
}

#[test]
fn probe_finds_nested_tables_and_tags() {
    // The probe itself must see through every kind of nesting, or the check below could pass
    // on a short list. Common practice, no source: these keys are known to exist.
    let keys = keys_of::<VehicleFile>();
    for k in [
        "mass.cg_z_m",
        "reference.leading_edge_x_m",
        "surface.polar.kind",
        "surface.polar.span_efficiency",
        "surface.polar.file",
        "surface.elevator.moment_per_rad",
        "surface.slipstream.wake_factor",
        "limits.pitch_by_speed.max_deg",
        "derivatives.elevator.name",
    ] {
        assert!(keys.contains(k), "probe missed {k}: {keys:?}");
    }
    let keys = keys_of::<ScenarioFile>();
    for k in [
        "flight.dispersions.seed",
        "flight.gust.shape",
        "transition.smoothness_deg_per_mps2",
    ] {
        assert!(keys.contains(k), "probe missed {k}: {keys:?}");
    }
}

#[test]
fn every_file_key_has_a_readme_line() {
    let text = readme();
    compare("vehicle", &keys_of::<VehicleFile>(), &text);
    compare("scenario", &keys_of::<ScenarioFile>(), &text);
    compare("schedule", &keys_of::<ScheduleDocument>(), &text);
}

/// The README's example blocks: `<!-- file: PATH -->` followed by a fenced block.
fn included_blocks(readme: &str) -> Vec<(String, String)> {
    let mut out = Vec::new();
    let mut rest = readme;
    while let Some(at) = rest.find("<!-- file: ") {
        rest = &rest[at + "<!-- file: ".len()..];
        let close = rest.find(" -->").expect("file marker is closed");
        let path = rest[..close].to_string();
        rest = &rest[close..];
        let fence = rest.find("```").expect("a fenced block follows the marker");
        let body_start = fence + rest[fence..].find('\n').expect("fence line ends") + 1;
        let body_end = body_start + rest[body_start..].find("\n```").expect("fence is closed") + 1;
        out.push((path, rest[body_start..body_end].to_string()));
        rest = &rest[body_end..];
    }
    out
}

/// Rewrites every included block from its file (run with `HOVERLINE_UPDATE_README=1`).
fn refresh(readme: &str) -> String {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let mut out = String::new();
    let mut rest = readme;
    while let Some(at) = rest.find("<!-- file: ") {
        let marker = at + "<!-- file: ".len();
        let close = marker + rest[marker..].find(" -->").unwrap();
        let path = &rest[marker..close];
        let fence = close + rest[close..].find("```").unwrap();
        let body_start = fence + rest[fence..].find('\n').unwrap() + 1;
        let body_end = body_start + rest[body_start..].find("\n```").unwrap() + 1;
        let file = std::fs::read_to_string(root.join(path)).unwrap();
        out.push_str(&rest[..body_start]);
        out.push_str(&file);
        if !file.ends_with('\n') {
            out.push('\n');
        }
        rest = &rest[body_end..];
    }
    out.push_str(rest);
    out
}

#[test]
fn readme_examples_are_the_shipped_files() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let mut text = readme();
    if std::env::var_os("HOVERLINE_UPDATE_README").is_some() {
        text = refresh(&text);
        std::fs::write(root.join("README.md"), &text).expect("README.md is writable");
    }
    let blocks = included_blocks(&text);
    let paths: Vec<&str> = blocks.iter().map(|(p, _)| p.as_str()).collect();
    for needed in [
        "vehicles/tilt-wing-courier.toml",
        "scenarios/courier-transition.toml",
    ] {
        assert!(paths.contains(&needed), "README does not include {needed}");
    }
    for (path, body) in &blocks {
        let file = std::fs::read_to_string(root.join(path))
            .unwrap_or_else(|e| panic!("README includes {path}, which cannot be read: {e}"));
        assert!(
            file.trim_end() == body.trim_end(),
            "README's copy of {path} differs from the file: run \
             `HOVERLINE_UPDATE_README=1 cargo test --release --test it readme_examples`"
        );
    }
}

/// The long options `--x` in a command's help text.
fn long_options(help: &str) -> BTreeSet<String> {
    help.split_whitespace()
        .filter_map(|w| {
            let w = w.trim_end_matches(',');
            let name = w.strip_prefix("--")?;
            let name: String = name
                .chars()
                .take_while(|c| c.is_ascii_alphanumeric() || *c == '-')
                .collect();
            (!name.is_empty() && name != "help").then(|| format!("--{name}"))
        })
        .collect()
}

#[test]
fn commands_table_lists_every_option() {
    let text = readme();
    let bin = env!("CARGO_BIN_EXE_hoverline");
    for command in [
        "check", "trim", "sweep", "corridor", "schedule", "fly", "report",
    ] {
        let out = Command::new(bin)
            .args([command, "--help"])
            .output()
            .expect("hoverline runs");
        assert!(out.status.success(), "{command} --help fails");
        let help = String::from_utf8_lossy(&out.stdout);
        let options = long_options(&help);
        assert!(!options.is_empty(), "{command} --help lists no option");
        let row = text
            .lines()
            .find(|l| l.starts_with(&format!("| `hoverline {command} ")))
            .unwrap_or_else(|| panic!("README commands table has no row for {command}"));
        for option in &options {
            let found = row.match_indices(option.as_str()).any(|(i, _)| {
                let next = row[i + option.len()..].chars().next();
                !next.is_some_and(|c| c.is_ascii_alphanumeric() || c == '-')
            });
            assert!(
                found,
                "README commands table row for {command} lacks {option}"
            );
        }
        // The other way round: an option in the row that the command does not take.
        for option in long_options(row) {
            assert!(
                options.contains(&option),
                "README lists {option} for {command}, which it does not take"
            );
        }
    }
}
