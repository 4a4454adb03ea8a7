//! Errors in user files, with the file, the line and a hint, and the locator that finds the
//! line of a key in a TOML text.
//!
//! Parsing is strict (unknown keys are errors, reported by the TOML parser with their span);
//! validation errors come from the model builders as a key path (`surface[1].area_m2`) that
//! [`locate_key`] turns back into a line of the original text.

use std::fmt;
use std::path::{Path, PathBuf};

/// One segment of a key path inside a TOML document.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum KeySegment {
    /// A table or key name.
    Key(String),
    /// An index into an array of tables (`[[surface]]`, 0-based).
    Index(usize),
}

/// Path to a key in a TOML document, e.g. `surface[1].polar.stall_pos_deg`.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct KeyPath(pub Vec<KeySegment>);

impl KeyPath {
    /// The empty path (the document itself).
    pub fn root() -> KeyPath {
        KeyPath(Vec::new())
    }
    /// This path with a key appended.
    pub fn key(&self, name: &str) -> KeyPath {
        let mut v = self.0.clone();
        v.push(KeySegment::Key(name.to_string()));
        KeyPath(v)
    }
    /// This path with an array index appended.
    pub fn index(&self, i: usize) -> KeyPath {
        let mut v = self.0.clone();
        v.push(KeySegment::Index(i));
        KeyPath(v)
    }
}

impl fmt::Display for KeyPath {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let mut first = true;
        for s in &self.0 {
            match s {
                KeySegment::Key(k) => {
                    if !first {
                        write!(f, ".")?;
                    }
                    write!(f, "{k}")?;
                }
                KeySegment::Index(i) => write!(f, "[{}]", i + 1)?,
            }
            first = false;
        }
        Ok(())
    }
}

/// A problem found while building a model from file contents, before the file and line are known.
#[derive(Debug, Clone, PartialEq)]
pub struct Invalid {
    /// Where in the document the offending value sits.
    pub path: KeyPath,
    /// What is wrong, lower case, no trailing period.
    pub message: String,
    /// How to fix it.
    pub hint: String,
}

impl Invalid {
    /// A new validation problem at `path`.
    pub fn new(path: KeyPath, message: impl Into<String>, hint: impl Into<String>) -> Invalid {
        Invalid {
            path,
            message: message.into(),
            hint: hint.into(),
        }
    }
}

/// An error in a user file: which file, which line, what is wrong and how to fix it.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("{}{}: {message}{}", file.display(), line.map(|l| format!(":{l}")).unwrap_or_default(), if hint.is_empty() { String::new() } else { format!("\n  hint: {hint}") })]
pub struct InputError {
    /// The file that holds the problem.
    pub file: PathBuf,
    /// 1-based line, when known.
    pub line: Option<usize>,
    /// What is wrong.
    pub message: String,
    /// How to fix it (may be empty).
    pub hint: String,
}

impl InputError {
    /// An error about a whole file (cannot be read, etc.).
    pub fn file(file: &Path, message: impl Into<String>, hint: impl Into<String>) -> InputError {
        InputError {
            file: file.to_path_buf(),
            line: None,
            message: message.into(),
            hint: hint.into(),
        }
    }

    /// Turn a validation problem into a located error using the file's text.
    pub fn from_invalid(file: &Path, text: &str, inv: Invalid) -> InputError {
        // A table that is missing altogether has no line: the file's first line stands in.
        let line = locate_key(text, &inv.path).or(Some(1));
        InputError {
            file: file.to_path_buf(),
            line,
            message: format!("{}: {}", inv.path, inv.message),
            hint: inv.hint,
        }
    }

    /// Turn a TOML parse error (syntax, wrong type, unknown key) into a located error.
    pub fn from_toml(file: &Path, text: &str, e: &toml::de::Error) -> InputError {
        // Errors without a span (the nesting limit) point at the first line.
        let line = Some(e.span().map_or(1, |s| line_of_offset(text, s.start)));
        let mut msg = e.message().trim().to_string();
        if let Some(l) = line
            .and_then(|l| text.lines().nth(l - 1))
            .and_then(|l| excerpt(file, "toml", l))
        {
            msg = format!("{msg} (at `{l}`)");
        }
        let hint = if msg.contains("unknown field") {
            "check the spelling against the file format in README.md; keys carry their unit (mass_kg, area_m2)"
        } else if msg.contains("missing field") {
            "add the missing key; README.md lists the keys each table needs"
        } else {
            "see the annotated example in README.md"
        };
        InputError {
            file: file.to_path_buf(),
            line,
            message: msg,
            hint: hint.to_string(),
        }
    }
}

/// Read a user's input file as text: only a regular file (a FIFO or a device would block or
/// never end), at most [`crate::limits::MAX_FILE_BYTES`], valid UTF-8 (an invalid byte is
/// reported with its line). `what` names the kind of file in messages ("vehicle file").
pub fn read_text(path: &Path, what: &str, hint: &str) -> Result<String, InputError> {
    use std::io::Read;
    let max = crate::limits::MAX_FILE_BYTES;
    let meta = std::fs::metadata(path)
        .map_err(|e| InputError::file(path, format!("cannot read {what}: {e}"), hint))?;
    if !meta.is_file() {
        return Err(InputError::file(
            path,
            format!("cannot read {what}: not a regular file"),
            "give the path of a text file (not a folder, pipe or device)",
        ));
    }
    let too_big = || {
        InputError::file(
            path,
            format!("{what} is larger than {} MiB", max / (1024 * 1024)),
            "give the path of a hoverline text file; they are a few kB",
        )
    };
    if meta.len() > max {
        return Err(too_big());
    }
    let mut bytes = Vec::new();
    std::fs::File::open(path)
        .and_then(|f| f.take(max + 1).read_to_end(&mut bytes))
        .map_err(|e| InputError::file(path, format!("cannot read {what}: {e}"), hint))?;
    if bytes.len() as u64 > max {
        return Err(too_big());
    }
    String::from_utf8(bytes).map_err(|e| {
        let at = e.utf8_error().valid_up_to();
        let line = e.as_bytes()[..at].iter().filter(|&&b| b == b'\n').count() + 1;
        InputError {
            file: path.to_path_buf(),
            line: Some(line),
            message: format!("{what} is not valid UTF-8 text (byte {at})"),
            hint: "save the file as UTF-8 text".into(),
        }
    })
}

/// A short, printable excerpt of one line of a user's file for a message: control
/// characters dropped, at most 80 characters; `None` when `path` does not end in `ext`, so
/// the content of a file that is not plausibly ours (`/etc/passwd`) is never echoed.
pub fn excerpt(path: &Path, ext: &str, line: &str) -> Option<String> {
    if path
        .extension()
        .is_none_or(|x| !x.eq_ignore_ascii_case(ext))
    {
        return None;
    }
    let clean: String = line.trim().chars().filter(|c| !c.is_control()).collect();
    let mut out: String = clean.chars().take(80).collect();
    if clean.chars().count() > 80 {
        out.push_str("...");
    }
    (!out.is_empty()).then_some(out)
}

/// 1-based line number of a byte offset.
pub fn line_of_offset(text: &str, offset: usize) -> usize {
    let end = offset.min(text.len());
    text.as_bytes()[..end]
        .iter()
        .filter(|&&b| b == b'\n')
        .count()
        + 1
}

/// Find the 1-based line of a key path in a TOML text written with table headers
/// (`[mass]`, `[[surface]]`, `[surface.polar]`) and `key = value` lines. Returns the line
/// of the key itself, or of the closest enclosing table header, or `None`.
pub fn locate_key(text: &str, path: &KeyPath) -> Option<usize> {
    // Split the path into the table part (everything up to the last key) and the final key.
    let segs = &path.0;
    if segs.is_empty() {
        return None;
    }
    // Current table, as a path of names and array counters while scanning.
    let mut counters: std::collections::HashMap<String, usize> = Default::default();
    let mut current: Vec<KeySegment> = Vec::new();
    let mut best: Option<(usize, usize)> = None; // (matched segments, line)
    for (ln, raw) in text.lines().enumerate() {
        let line = raw.trim();
        if line.starts_with('#') || line.is_empty() {
            continue;
        }
        if let Some(h) = line.strip_prefix("[[").and_then(|r| r.split("]]").next()) {
            let names: Vec<&str> = h.split('.').map(str::trim).collect();
            let key = names.join(".");
            let n = counters.entry(key).or_insert(0);
            current = header_path(&names, &current, Some(*n));
            *n += 1;
            // Nested arrays restart under a new parent.
            let prefix = names.join(".") + ".";
            counters.retain(|k, _| !k.starts_with(&prefix));
        } else if let Some(h) = line.strip_prefix('[').and_then(|r| r.split(']').next()) {
            let names: Vec<&str> = h.split('.').map(str::trim).collect();
            current = header_path(&names, &current, None);
        } else if let Some((k, _)) = line.split_once('=') {
            let k = k.trim().trim_matches('"');
            let mut full = current.clone();
            full.push(KeySegment::Key(k.to_string()));
            let m = common_prefix(&full, segs);
            if m == segs.len() {
                return Some(ln + 1);
            }
            continue;
        } else {
            continue;
        }
        let m = common_prefix(&current, segs);
        if m == current.len() && best.is_none_or(|(bm, _)| m > bm) {
            best = Some((m, ln + 1));
        }
    }
    best.map(|(_, l)| l)
}

fn header_path(names: &[&str], current: &[KeySegment], index: Option<usize>) -> Vec<KeySegment> {
    // Re-use the indices of the enclosing arrays of the current table for the shared prefix.
    let mut out = Vec::new();
    let mut cur = current.iter().peekable();
    for (i, n) in names.iter().enumerate() {
        out.push(KeySegment::Key(n.to_string()));
        let matches_current = matches!(cur.next(), Some(KeySegment::Key(c)) if c == n);
        let last = i + 1 == names.len();
        if last {
            if let Some(ix) = index {
                out.push(KeySegment::Index(ix));
            }
        } else if matches_current {
            if let Some(KeySegment::Index(ix)) = cur.peek() {
                out.push(KeySegment::Index(*ix));
                cur.next();
            }
        }
    }
    out
}

fn common_prefix(a: &[KeySegment], b: &[KeySegment]) -> usize {
    a.iter().zip(b).take_while(|(x, y)| x == y).count()
}

#[cfg(test)]
mod tests {
    use super::*;

    const DOC: &str = "name = \"x\"\n[mass]\nmass_kg = 2\n\n[[surface]]\nname = \"wing\"\narea_m2 = 1\n[surface.polar]\nkind = \"parametric\"\n[[surface]]\nname = \"tail\"\narea_m2 = -1\n[surface.polar]\nstall_pos_deg = 99\n[[surface.slipstream]]\nrotor = \"nope\"\n";

    #[test]
    fn finds_keys_in_arrays_and_subtables() {
        let p = KeyPath::root().key("surface").index(1).key("area_m2");
        assert_eq!(locate_key(DOC, &p), Some(12));
        let p = KeyPath::root()
            .key("surface")
            .index(1)
            .key("polar")
            .key("stall_pos_deg");
        assert_eq!(locate_key(DOC, &p), Some(14));
        let p = KeyPath::root().key("mass").key("mass_kg");
        assert_eq!(locate_key(DOC, &p), Some(3));
        let p = KeyPath::root()
            .key("surface")
            .index(1)
            .key("slipstream")
            .index(0)
            .key("rotor");
        assert_eq!(locate_key(DOC, &p), Some(16));
    }

    #[test]
    fn missing_key_falls_back_to_its_table() {
        let p = KeyPath::root().key("surface").index(0).key("chord_m");
        assert_eq!(locate_key(DOC, &p), Some(5));
    }

    #[test]
    fn path_display_is_one_based() {
        let p = KeyPath::root().key("rotor").index(0).key("radius_m");
        assert_eq!(p.to_string(), "rotor[1].radius_m");
    }
}
