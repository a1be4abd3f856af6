//! Writing output files safely: every file is written to a temporary name
//! in its target folder and renamed into place, so a reader never sees a
//! half-written file and an interrupted run leaves the old file intact.

use anyhow::{Context, Result};
use sim_core::record::{Waveform, COLUMNS};
use std::fs::{self, File};
use std::io::{BufWriter, Write};
use std::path::{Path, PathBuf};

/// Writes `path` through `fill`, via a temporary file beside it.
pub fn write_atomic(
    path: &Path,
    fill: impl FnOnce(&mut BufWriter<File>) -> Result<()>,
) -> Result<()> {
    let dir = match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "output".into());
    let tmp = dir.join(format!(".{name}.{}.tmp", std::process::id()));
    let result = (|| -> Result<()> {
        let file =
            File::create(&tmp).with_context(|| format!("cannot create {}", tmp.display()))?;
        let mut w = BufWriter::new(file);
        fill(&mut w)?;
        w.flush()?;
        w.into_inner().map_err(|e| e.into_error())?.sync_all()?;
        fs::rename(&tmp, path)
            .with_context(|| format!("cannot rename {} to {}", tmp.display(), path.display()))?;
        Ok(())
    })();
    if result.is_err() {
        let _ = fs::remove_file(&tmp);
    }
    result
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

/// The CSV header: one column per signal, each `name (unit)`.
pub fn csv_header() -> String {
    COLUMNS
        .iter()
        .map(|(name, unit)| {
            if *unit == "1" {
                format!("{name} (1 = on)")
            } else {
                format!("{name} ({unit})")
            }
        })
        .collect::<Vec<_>>()
        .join(",")
}

/// Writes the recorded samples as CSV: the header, then one row per
/// sample, values in SI units with full precision.
pub fn write_csv(path: &Path, w: &Waveform) -> Result<()> {
    write_atomic(path, |out| {
        writeln!(out, "{}", csv_header())?;
        for row in w.data.rows() {
            let mut first = true;
            for v in row {
                if !first {
                    out.write_all(b",")?;
                }
                first = false;
                write!(out, "{v}")?;
            }
            out.write_all(b"\n")?;
        }
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
    let probe = dir.join(format!(".chopwave-probe.{}.tmp", std::process::id()));
    std::fs::write(&probe, b"")
        .with_context(|| format!("cannot write into folder {}", dir.display()))?;
    let _ = std::fs::remove_file(&probe);
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
