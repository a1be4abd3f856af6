//! Writing output files safely: every file is written to a temporary name
//! in its target folder and renamed into place, so a reader never sees a
//! half-written file and an interrupted run leaves the old file intact.

use anyhow::{Context, Result};
use sim_core::record::{Waveform, COLUMNS};
use std::fs::{self, File};
use std::io::{BufWriter, Write};
use std::path::Path;

/// Writes `path` through `fill`, via a temporary file beside it.
///
/// The temporary file is made by the `tempfile` crate: created
/// exclusively under a random name (never opening a file or a symlink
/// someone placed there), then persisted over `path` by a rename. On any
/// failure it is removed.
pub fn write_atomic(
    path: &Path,
    fill: impl FnOnce(&mut BufWriter<File>) -> Result<()>,
) -> Result<()> {
    let dir = parent_dir(path);
    let mut builder = tempfile::Builder::new();
    builder.prefix(".chopwave-").suffix(".tmp");
    // Readable like any file the user makes (the umask applies), not
    // private as temporary files are by default.
    #[cfg(unix)]
    builder.permissions(std::os::unix::fs::PermissionsExt::from_mode(0o666));
    let tmp = builder
        .tempfile_in(dir)
        .with_context(|| format!("cannot create a temporary file in {}", dir.display()))?;
    let (file, tmp_path) = tmp.into_parts();
    let mut w = BufWriter::new(file);
    fill(&mut w)?;
    w.flush()?;
    let file = w.into_inner().map_err(|e| e.into_error())?;
    file.sync_all()?;
    tempfile::NamedTempFile::from_parts(file, tmp_path)
        .persist(path)
        .map_err(|e| e.error)
        .with_context(|| format!("cannot move the temporary file to {}", path.display()))?;
    Ok(())
}

/// Writes text to `path` atomically.
pub fn write_text(path: &Path, text: &str) -> Result<()> {
    write_atomic(path, |w| {
        w.write_all(text.as_bytes())?;
        Ok(())
    })
    .with_context(|| format!("cannot write {}", path.display()))
}

/// Writes text given in pieces to `path` atomically, without joining
/// the pieces first (a large table is never held as one string).
pub fn write_pieces(path: &Path, pieces: impl Iterator<Item = String>) -> Result<()> {
    write_atomic(path, |w| {
        for p in pieces {
            w.write_all(p.as_bytes())?;
        }
        Ok(())
    })
    .with_context(|| format!("cannot write {}", path.display()))
}

/// The CSV header's fields: one column per signal, each `name (unit)`.
pub fn csv_header_fields() -> Vec<String> {
    COLUMNS
        .iter()
        .map(|(name, unit)| {
            if *unit == "1" {
                format!("{name} (1 = on)")
            } else {
                format!("{name} ({unit})")
            }
        })
        .collect()
}

/// Writes the recorded samples as CSV (by the `csv` crate): the
/// header, then one row per sample, values in SI units in the shortest
/// form that reads back exactly.
pub fn write_csv(path: &Path, w: &Waveform) -> Result<()> {
    write_atomic(path, |out| {
        let mut c = csv::Writer::from_writer(out);
        c.write_record(csv_header_fields())?;
        let mut cells: Vec<String> = Vec::with_capacity(COLUMNS.len());
        for row in w.data.rows() {
            cells.clear();
            cells.extend(row.iter().map(|v| v.to_string()));
            c.write_record(&cells)?;
        }
        c.flush()?;
        Ok(())
    })
    .with_context(|| format!("cannot write {}", path.display()))
}

/// Creates a folder (and its parents) for output.
pub fn ensure_dir(dir: &Path) -> Result<()> {
    fs::create_dir_all(dir).with_context(|| format!("cannot create folder {}", dir.display()))
}

/// Checks before any work that files can be written into `dir` (creating
/// it if needed): writes and removes a probe file.
pub fn check_writable(dir: &Path) -> Result<()> {
    ensure_dir(dir)?;
    // Created exclusively under a random name, removed when dropped.
    tempfile::Builder::new()
        .prefix(".chopwave-probe-")
        .tempfile_in(dir)
        .with_context(|| format!("cannot write into folder {}", dir.display()))?;
    Ok(())
}

/// The folder a file will be written into (`.` for a bare name).
pub fn parent_dir(path: &Path) -> &Path {
    match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p,
        _ => Path::new("."),
    }
}

/// A scenario name made safe for a file name: letters, digits, `-` and
/// `_` kept, anything else turned into `-`.
pub fn file_stem(name: &str) -> String {
    let s: String = name
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '-' || c == '_' {
                c
            } else {
                '-'
            }
        })
        .collect();
    let s = s.trim_matches('-').to_string();
    if s.is_empty() {
        "scenario".into()
    } else {
        s
    }
}

/// The name of the lock file a study keeps in its output folder.
pub const LOCK_FILE: &str = ".chopwave-study.lock";

/// Why a folder could not be locked.
#[derive(Debug)]
pub enum LockFailure {
    /// Another process holds the folder (its own words, for the user).
    Busy(String),
    /// The lock file could not be made or locked.
    Io(anyhow::Error),
}

/// An exclusive advisory lock on a study's output folder, held as long
/// as this value lives (and released by the system if the process dies,
/// so a lock can never go stale). The lock file itself stays in the
/// folder: removing it could let two processes lock two different files.
#[derive(Debug)]
pub struct FolderLock {
    _file: File,
}

/// Locks `dir` for one study (creating it if needed); a second study
/// into the same folder gets [`LockFailure::Busy`] at once.
pub fn lock_folder(dir: &Path) -> Result<FolderLock, LockFailure> {
    use fs4::FileExt;
    ensure_dir(dir).map_err(LockFailure::Io)?;
    let path = dir.join(LOCK_FILE);
    if fs::symlink_metadata(&path).is_ok_and(|m| !m.is_file()) {
        return Err(LockFailure::Io(anyhow::anyhow!(
            "{} is not a plain file (a link or folder in its place): remove it",
            path.display()
        )));
    }
    let file = fs::OpenOptions::new()
        .read(true)
        .write(true)
        .create(true)
        .truncate(false)
        .open(&path)
        .with_context(|| format!("cannot open the lock file {}", path.display()))
        .map_err(LockFailure::Io)?;
    match FileExt::try_lock(&file) {
        Ok(()) => {
            // Who holds it, for the message a second study prints.
            let _ = file.set_len(0);
            let _ = (&file).write_all(format!("{}\n", std::process::id()).as_bytes());
            Ok(FolderLock { _file: file })
        }
        Err(fs4::TryLockError::WouldBlock) => {
            let who = fs::read_to_string(&path).unwrap_or_default();
            let who = who.trim();
            Err(LockFailure::Busy(format!(
                "another chopwave study{} is writing into {}; wait for it to finish or give \
                 this one another --out folder",
                if who.is_empty() {
                    String::new()
                } else {
                    format!(" (process {who})")
                },
                dir.display()
            )))
        }
        Err(fs4::TryLockError::Error(e)) => Err(LockFailure::Io(
            anyhow::Error::new(e).context(format!("cannot lock {}", path.display())),
        )),
    }
}
