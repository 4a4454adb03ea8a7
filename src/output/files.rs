//! Atomic file writing: write to a temporary file beside the target, then rename, so a
//! reader never sees half a file and a failed run leaves the old file in place.

use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::{Mutex, MutexGuard};

/// Paths of this process's unfinished output (temporaries, staging folders, run locks), kept
/// so that an interrupt can remove them before the process ends ([`remove_unfinished`]).
static UNFINISHED: Mutex<Vec<PathBuf>> = Mutex::new(Vec::new());

/// The registry of unfinished output; a panic elsewhere never makes it unusable.
fn unfinished() -> MutexGuard<'static, Vec<PathBuf>> {
    UNFINISHED.lock().unwrap_or_else(|e| e.into_inner())
}

/// Forget `path` in the registry of unfinished output (it was renamed into place or removed).
fn finished(list: &mut Vec<PathBuf>, path: &Path) {
    if let Some(i) = list.iter().rposition(|p| p == path) {
        list.swap_remove(i);
    }
}

/// Remove every temporary file, staging folder and run lock this process has open, and keep
/// the registry locked so that no new one is started. Meant for an interrupt handler that ends
/// the process right after: output already moved into place stays, a run folder keeps its old
/// complete set (a commit in progress finishes first, since it holds the registry).
/// Returns how many paths were removed.
pub fn remove_unfinished() -> usize {
    let mut list = unfinished();
    let mut removed = 0;
    for p in list.drain(..).rev() {
        let gone = match std::fs::symlink_metadata(&p) {
            Ok(m) if m.is_dir() => std::fs::remove_dir_all(&p).is_ok(),
            Ok(_) => std::fs::remove_file(&p).is_ok(),
            Err(_) => false,
        };
        removed += usize::from(gone);
    }
    // The guard is leaked on purpose: the process is about to end, and any thread that tries
    // to start a new temporary waits instead of writing one that nobody would remove.
    std::mem::forget(list);
    removed
}

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
    let (tmp, f) = create_temporary(dir, &name, "tmp").map_err(err)?;
    let written = (|| {
        let mut w = std::io::BufWriter::with_capacity(1 << 16, f);
        fill(&mut w)?;
        let f = w.into_inner().map_err(|e| e.into_error())?;
        f.sync_all()
    })();
    let mut list = unfinished();
    finished(&mut list, &tmp);
    if let Err(e) = written {
        let _ = std::fs::remove_file(&tmp);
        return Err(err(e));
    }
    std::fs::rename(&tmp, path).map_err(|e| {
        let _ = std::fs::remove_file(&tmp);
        err(e)
    })
}

/// An unpredictable number for a file name: std's RandomState is seeded from the operating
/// system's random source; the process id, `salt` and the clock are mixed in.
fn random_u64(salt: u32) -> u64 {
    use std::hash::{BuildHasher, Hasher};
    let mut h = std::collections::hash_map::RandomState::new().build_hasher();
    h.write_u32(std::process::id());
    h.write_u32(salt);
    let nanos = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map_or(0, |d| d.as_nanos());
    h.write_u128(nanos);
    h.finish()
}

/// Create a new temporary file `.<name>.<random>.<suffix>` in `dir`, exclusively (create-new:
/// an existing file or a planted symlink at that name is never opened) under an unpredictable
/// name. The file is registered for [`remove_unfinished`] until [`write_atomic_with`] moves
/// it into place (a caller that renames it itself leaves a stale entry, which is harmless).
pub fn create_temporary(
    dir: &Path,
    name: &str,
    suffix: &str,
) -> std::io::Result<(PathBuf, std::fs::File)> {
    let mut last = None;
    // Held across the create, so an interrupt sees either no file or a registered one.
    let mut list = unfinished();
    for attempt in 0u32..16 {
        let tmp = dir.join(format!(".{name}.{:016x}.{suffix}", random_u64(attempt)));
        match std::fs::OpenOptions::new()
            .write(true)
            .create_new(true)
            .open(&tmp)
        {
            Ok(f) => {
                list.push(tmp.clone());
                return Ok((tmp, f));
            }
            Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => last = Some(e),
            Err(e) => return Err(e),
        }
    }
    Err(last.unwrap_or_else(|| std::io::Error::other("no temporary name is free")))
}

/// Name of the lock file of a run folder.
pub const RUN_LOCK: &str = ".hoverline-run.lock";

/// Prefix of a run's hidden staging folder.
const STAGING_PREFIX: &str = ".hoverline-staging-";

/// One run's output written as a set: every file goes into a hidden staging folder inside
/// `dir`, and [`RunFolder::commit`] moves them into `dir` with the files named last (the
/// report page) moved last, so a reader never sees figures of one run beside the page of
/// another. A lock file refuses a second run into the same folder while one is active; a
/// failed or abandoned run leaves the old set in place, and its staging folder is removed
/// when the run ends or by the next run (after an interrupt).
#[derive(Debug)]
pub struct RunFolder {
    dir: PathBuf,
    staging: PathBuf,
    lock: PathBuf,
}

fn io_err(path: &Path) -> impl Fn(std::io::Error) -> WriteError + '_ {
    move |source| WriteError {
        path: path.to_path_buf(),
        source,
    }
}

/// Whether the process that wrote a lock file is still running (Linux: its /proc entry);
/// without /proc a lock counts as held.
fn lock_held(lock: &Path) -> bool {
    let Ok(text) = std::fs::read_to_string(lock) else {
        return false;
    };
    let Ok(pid) = text.trim().parse::<u32>() else {
        return false;
    };
    let proc = Path::new("/proc");
    !proc.is_dir() || proc.join(pid.to_string()).exists()
}

impl RunFolder {
    /// Lock `dir` (created if needed) for this run and open a fresh staging folder in it.
    pub fn begin(dir: &Path) -> Result<RunFolder, WriteError> {
        ensure_dir(dir)?;
        let lock = dir.join(RUN_LOCK);
        let mut tries = 0;
        let mut list = unfinished();
        let mut f = loop {
            match std::fs::OpenOptions::new()
                .write(true)
                .create_new(true)
                .open(&lock)
            {
                Ok(f) => {
                    list.push(lock.clone());
                    break f;
                }
                Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists && tries == 0 => {
                    if lock_held(&lock) {
                        return Err(WriteError {
                            path: dir.to_path_buf(),
                            source: std::io::Error::other(format!(
                                "another hoverline run is writing into this folder\n  hint: wait for it, give another --out, or remove {} if no run is active",
                                lock.display()
                            )),
                        });
                    }
                    // Left by an interrupted run.
                    let _ = std::fs::remove_file(&lock);
                    tries += 1;
                }
                Err(e) => return Err(io_err(&lock)(e)),
            }
        };
        f.write_all(std::process::id().to_string().as_bytes())
            .map_err(io_err(&lock))?;
        drop(f);
        // Staging folders of interrupted runs (the lock is ours now).
        if let Ok(entries) = std::fs::read_dir(dir) {
            for e in entries.flatten() {
                if e.file_name().to_string_lossy().starts_with(STAGING_PREFIX) {
                    let _ = std::fs::remove_dir_all(e.path());
                }
            }
        }
        let mut run = RunFolder {
            dir: dir.to_path_buf(),
            staging: PathBuf::new(),
            lock,
        };
        let staging = dir.join(format!("{STAGING_PREFIX}{:016x}", random_u64(0)));
        // create_dir fails on an existing name: the folder is ours alone.
        let made = std::fs::create_dir(&staging);
        if made.is_ok() {
            list.push(staging.clone());
        }
        // The lock is removed by Drop (which takes the registry itself) if this fails.
        drop(list);
        made.map_err(io_err(&staging))?;
        run.staging = staging;
        Ok(run)
    }

    /// The folder this run writes into until [`RunFolder::commit`].
    pub fn staging(&self) -> &Path {
        &self.staging
    }

    /// Move every staged file into the run folder (the names in `last` after all others) and
    /// return their final paths.
    pub fn commit(self, last: &[&str]) -> Result<Vec<PathBuf>, WriteError> {
        // An interrupt during the moves waits for them: the folder then holds the new set.
        let _hold = unfinished();
        let mut names: Vec<std::ffi::OsString> = std::fs::read_dir(&self.staging)
            .map_err(io_err(&self.staging))?
            .filter_map(|e| e.ok().map(|e| e.file_name()))
            .collect();
        names.sort_by_key(|n| {
            let s = n.to_string_lossy();
            (
                last.iter().position(|l| *l == s).map_or(0, |i| i + 1),
                s.to_string(),
            )
        });
        let mut out = Vec::new();
        for n in names {
            let to = self.dir.join(&n);
            let from = self.staging.join(&n);
            // A sub-folder of the set (the back-transition's files) replaces the one an
            // earlier run wrote: a folder cannot be renamed over a non-empty one.
            let old_dir = std::fs::symlink_metadata(&to).is_ok_and(|m| m.is_dir());
            if old_dir && from.is_dir() {
                std::fs::remove_dir_all(&to).map_err(io_err(&to))?;
            }
            std::fs::rename(&from, &to).map_err(io_err(&to))?;
            out.push(to);
        }
        Ok(out)
    }
}

impl Drop for RunFolder {
    fn drop(&mut self) {
        let mut list = unfinished();
        if !self.staging.as_os_str().is_empty() {
            let _ = std::fs::remove_dir_all(&self.staging);
            finished(&mut list, &self.staging);
        }
        let _ = std::fs::remove_file(&self.lock);
        finished(&mut list, &self.lock);
    }
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
