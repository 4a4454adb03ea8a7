//! Atomic file writing: write to a temporary file beside the target, then rename, so a
//! reader never sees half a file and a failed run leaves the old file in place.

use std::io::Write;
use std::path::{Path, PathBuf};

/// An error while writing results.
#[derive(Debug, thiserror::Error)]
#[error("cannot write {}: {source}", path.display())]
pub struct WriteError {
    /// The file that could not be written.
    pub path: PathBuf,
    /// The underlying error.
    #[source]
    pub source: std::io::Error,
}

/// Create `dir` and its parents.
pub fn ensure_dir(dir: &Path) -> Result<(), WriteError> {
    std::fs::create_dir_all(dir).map_err(|source| WriteError {
        path: dir.to_path_buf(),
        source,
    })
}

/// Write `bytes` to `path` atomically (temporary file in the same folder, then rename).
pub fn write_atomic(path: &Path, bytes: &[u8]) -> Result<(), WriteError> {
    let err = |source| WriteError {
        path: path.to_path_buf(),
        source,
    };
    let dir = path
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    ensure_dir(dir)?;
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_default();
    let (tmp, mut f) = create_temporary(dir, &name, "tmp").map_err(err)?;
    let written = f.write_all(bytes).and_then(|_| f.sync_all());
    drop(f);
    if let Err(e) = written {
        let _ = std::fs::remove_file(&tmp);
        return Err(err(e));
    }
    std::fs::rename(&tmp, path).map_err(|e| {
        let _ = std::fs::remove_file(&tmp);
        err(e)
    })
}

/// Create a new temporary file `.<name>.<random>.<suffix>` in `dir`, exclusively (create-new:
/// an existing file or a planted symlink at that name is never opened) under an unpredictable
/// name.
pub fn create_temporary(
    dir: &Path,
    name: &str,
    suffix: &str,
) -> std::io::Result<(PathBuf, std::fs::File)> {
    use std::hash::{BuildHasher, Hasher};
    let mut last = None;
    for attempt in 0u32..16 {
        // RandomState is seeded from the operating system's random source.
        let mut h = std::collections::hash_map::RandomState::new().build_hasher();
        h.write_u32(std::process::id());
        h.write_u32(attempt);
        let nanos = std::time::SystemTime::now()
            .duration_since(std::time::UNIX_EPOCH)
            .map_or(0, |d| d.as_nanos());
        h.write_u128(nanos);
        let tmp = dir.join(format!(".{name}.{:016x}.{suffix}", h.finish()));
        match std::fs::OpenOptions::new()
            .write(true)
            .create_new(true)
            .open(&tmp)
        {
            Ok(f) => return Ok((tmp, f)),
            Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => last = Some(e),
            Err(e) => return Err(e),
        }
    }
    Err(last.unwrap_or_else(|| std::io::Error::other("no temporary name is free")))
}

/// A text cell that a spreadsheet would run as a formula (first character `=`, `+`, `-`,
/// `@`, tab or carriage return) gets a leading `'`; numbers are left alone (OWASP guidance on
/// CSV injection).
pub fn neutralise_cell(cell: &str) -> std::borrow::Cow<'_, str> {
    let risky = cell.starts_with(['=', '+', '-', '@', '\t', '\r']);
    if risky && cell.trim().parse::<f64>().is_err() {
        std::borrow::Cow::Owned(format!("'{cell}"))
    } else {
        std::borrow::Cow::Borrowed(cell)
    }
}

/// Serialise `value` as pretty JSON and write it atomically.
pub fn write_json<T: serde::Serialize>(path: &Path, value: &T) -> Result<(), WriteError> {
    let s = serde_json::to_string_pretty(value).map_err(|e| WriteError {
        path: path.to_path_buf(),
        source: std::io::Error::other(e),
    })?;
    write_atomic(path, s.as_bytes())
}

/// Write a CSV table (header and rows of already formatted cells) atomically.
pub fn write_csv(path: &Path, header: &[String], rows: &[Vec<String>]) -> Result<(), WriteError> {
    let mut w = csv::Writer::from_writer(Vec::new());
    let io = |e: csv::Error| WriteError {
        path: path.to_path_buf(),
        source: std::io::Error::other(e),
    };
    w.write_record(header).map_err(io)?;
    for r in rows {
        w.write_record(r.iter().map(|c| neutralise_cell(c).into_owned()))
            .map_err(io)?;
    }
    let bytes = w.into_inner().map_err(|e| WriteError {
        path: path.to_path_buf(),
        source: std::io::Error::other(e.to_string()),
    })?;
    write_atomic(path, &bytes)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn atomic_write_replaces_whole_file() {
        let dir = std::env::temp_dir().join(format!("hoverline-files-{}", std::process::id()));
        let p = dir.join("a.txt");
        write_atomic(&p, b"first").unwrap();
        write_atomic(&p, b"second").unwrap();
        assert_eq!(std::fs::read_to_string(&p).unwrap(), "second");
        let leftovers: Vec<_> = std::fs::read_dir(&dir)
            .unwrap()
            .filter_map(|e| e.ok())
            .filter(|e| e.file_name().to_string_lossy().contains(".tmp"))
            .collect();
        assert!(leftovers.is_empty());
        std::fs::remove_dir_all(&dir).unwrap();
    }

    #[test]
    fn formula_cells_are_neutralised_and_numbers_kept() {
        // Source: OWASP, CSV Injection (cells starting with = + - @ tab CR).
        assert_eq!(neutralise_cell("=HYPERLINK(\"x\")"), "'=HYPERLINK(\"x\")");
        assert_eq!(neutralise_cell("@sum"), "'@sum");
        assert_eq!(neutralise_cell("-1.5e-3"), "-1.5e-3");
        assert_eq!(neutralise_cell("wing"), "wing");
    }

    #[cfg(unix)]
    #[test]
    fn a_planted_symlink_is_not_followed() {
        // Common practice, no source: temporaries are created exclusively.
        let dir = std::env::temp_dir().join(format!("hoverline-link-{}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        std::fs::create_dir_all(&dir).unwrap();
        let victim = dir.join("victim.txt");
        std::fs::write(&victim, b"keep").unwrap();
        // The old predictable name and a few guesses of the new one all point at the victim.
        let old = dir.join(format!(".out.txt.tmp{}", std::process::id()));
        std::os::unix::fs::symlink(&victim, &old).unwrap();
        write_atomic(&dir.join("out.txt"), b"new").unwrap();
        assert_eq!(std::fs::read_to_string(&victim).unwrap(), "keep");
        assert_eq!(std::fs::read_to_string(dir.join("out.txt")).unwrap(), "new");
        std::fs::remove_dir_all(&dir).unwrap();
    }
}
