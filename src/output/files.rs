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

/// Write to `path` atomically: `fill` writes the content into a buffered temporary file in
/// the same folder, which is then synced and renamed over `path`.
pub fn write_atomic_with(
    path: &Path,
    fill: impl FnOnce(&mut dyn Write) -> std::io::Result<()>,
) -> Result<(), WriteError> {
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
    let tmp = dir.join(format!(".{name}.tmp{}", std::process::id()));
    let written = (|| {
        let mut w = std::io::BufWriter::with_capacity(1 << 16, std::fs::File::create(&tmp)?);
        fill(&mut w)?;
        let f = w.into_inner().map_err(|e| e.into_error())?;
        f.sync_all()
    })();
    if let Err(e) = written {
        let _ = std::fs::remove_file(&tmp);
        return Err(err(e));
    }
    std::fs::rename(&tmp, path).map_err(|e| {
        let _ = std::fs::remove_file(&tmp);
        err(e)
    })
}

/// Write `bytes` to `path` atomically (temporary file in the same folder, then rename).
pub fn write_atomic(path: &Path, bytes: &[u8]) -> Result<(), WriteError> {
    write_atomic_with(path, |w| w.write_all(bytes))
}

/// Serialise `value` as pretty JSON straight into the file (no whole-document string) and
/// write it atomically.
pub fn write_json<T: serde::Serialize>(path: &Path, value: &T) -> Result<(), WriteError> {
    write_atomic_with(path, |w| {
        serde_json::to_writer_pretty(w, value).map_err(std::io::Error::other)
    })
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
        w.write_record(r).map_err(io)?;
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
}
