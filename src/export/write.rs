//! Writing tables: CSV, NumPy `.npy` and JSON, and files that appear whole or not at all.
//!
//! A table is `rows x columns` of finite f64 values, row-major, with column names. Every
//! format holds the same layout: the columns `t, x, y, z` and then one column per
//! component.
//!
//! - CSV: a header line with the column names, then one line per row; numbers in Rust's
//!   shortest round-trip form (`1.0000000070710677`, `7.071067811865475e-9`), so a reader
//!   gets back the exact f64.
//! - `.npy` (format version 1.0): one little-endian float64 array (`'<f8'`), C order, shape
//!   `(rows, columns)`; the column names are in the JSON sidecar. `numpy.load` reads it.
//! - JSON: `{"columns": [...], "rows": [[...], ...]}`, numbers round-trip exactly.
//!
//! Files: [`AtomicFile`] writes into a temporary file beside the target and renames it into
//! place on [`AtomicFile::commit`]; dropped without a commit, the temporary file is removed.
//! Without `force`, an existing target is never replaced (checked when the file is opened,
//! and again, atomically where the file system allows, at the commit).

use std::fs::{self, File};
use std::io::{self, BufWriter, Write};
use std::path::{Path, PathBuf};

/// A table of finite values with named columns.
#[derive(Clone, Debug, PartialEq)]
pub struct Table {
    /// The column names.
    pub columns: Vec<String>,
    /// The values, row-major: `values[row * columns.len() + col]`.
    pub values: Vec<f64>,
}

impl Table {
    /// The number of rows.
    #[must_use]
    pub fn rows(&self) -> usize {
        if self.columns.is_empty() {
            0
        } else {
            self.values.len() / self.columns.len()
        }
    }

    /// Row `r`.
    #[must_use]
    pub fn row(&self, r: usize) -> &[f64] {
        let n = self.columns.len();
        &self.values[r * n..(r + 1) * n]
    }
}

/// The output formats.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Format {
    /// Comma-separated values with a header line.
    Csv,
    /// NumPy `.npy`, float64.
    Npy,
    /// JSON.
    Json,
}

impl Format {
    /// `csv`, `npy` or `json`.
    #[must_use]
    pub fn name(self) -> &'static str {
        match self {
            Format::Csv => "csv",
            Format::Npy => "npy",
            Format::Json => "json",
        }
    }

    /// The format a file name's extension implies, if any.
    #[must_use]
    pub fn from_path(p: &Path) -> Option<Format> {
        match p.extension()?.to_str()?.to_ascii_lowercase().as_str() {
            "csv" => Some(Format::Csv),
            "npy" => Some(Format::Npy),
            "json" => Some(Format::Json),
            _ => None,
        }
    }
}

/// Shortest round-trip text of a finite f64, with `-0` written as `0.0`.
#[must_use]
pub fn number(v: f64) -> String {
    format!("{:?}", v + 0.0)
}

/// Writes `table` as CSV.
///
/// # Errors
///
/// An I/O error of `w`.
pub fn write_csv(w: &mut impl Write, table: &Table) -> io::Result<()> {
    writeln!(w, "{}", table.columns.join(","))?;
    let mut line = String::new();
    for r in 0..table.rows() {
        line.clear();
        for (i, v) in table.row(r).iter().enumerate() {
            if i > 0 {
                line.push(',');
            }
            line.push_str(&number(*v));
        }
        line.push('\n');
        w.write_all(line.as_bytes())?;
    }
    Ok(())
}

/// The `.npy` version 1.0 header of a float64 C-order array of this shape: magic, version,
/// header length, and the header dictionary padded with spaces and a final newline so that
/// the data starts at a multiple of 64 bytes.
#[must_use]
pub fn npy_header(rows: usize, cols: usize) -> Vec<u8> {
    let dict = format!("{{'descr': '<f8', 'fortran_order': False, 'shape': ({rows}, {cols}), }}");
    let unpadded = 10 + dict.len() + 1;
    let pad = (64 - unpadded % 64) % 64;
    let header_len = dict.len() + pad + 1;
    let mut out = Vec::with_capacity(10 + header_len);
    out.extend_from_slice(b"\x93NUMPY");
    out.extend_from_slice(&[1, 0]);
    out.extend_from_slice(&(header_len as u16).to_le_bytes());
    out.extend_from_slice(dict.as_bytes());
    out.extend(std::iter::repeat_n(b' ', pad));
    out.push(b'\n');
    out
}

/// Writes `table` as `.npy`: shape `(rows, columns)`, `'<f8'`, C order.
///
/// # Errors
///
/// An I/O error of `w`.
pub fn write_npy(w: &mut impl Write, table: &Table) -> io::Result<()> {
    w.write_all(&npy_header(table.rows(), table.columns.len()))?;
    for v in &table.values {
        w.write_all(&(v + 0.0).to_le_bytes())?;
    }
    Ok(())
}

/// Writes `table` as JSON: `{"columns": [...], "rows": [[...], ...]}`, one row per line.
///
/// # Errors
///
/// An I/O error of `w`.
pub fn write_json(w: &mut impl Write, table: &Table) -> io::Result<()> {
    let cols = serde_json::to_string(&table.columns).map_err(io::Error::other)?;
    writeln!(w, "{{\"columns\": {cols},\n\"rows\": [")?;
    for r in 0..table.rows() {
        let row: Vec<String> = table.row(r).iter().map(|v| number(*v)).collect();
        let sep = if r + 1 < table.rows() { "," } else { "" };
        writeln!(w, "[{}]{sep}", row.join(", "))?;
    }
    writeln!(w, "]}}")
}

/// Writes `table` in `format`.
///
/// # Errors
///
/// An I/O error of `w`.
pub fn write_table(w: &mut impl Write, table: &Table, format: Format) -> io::Result<()> {
    match format {
        Format::Csv => write_csv(w, table),
        Format::Npy => write_npy(w, table),
        Format::Json => write_json(w, table),
    }
}

/// Why a file could not be written.
#[derive(Debug, thiserror::Error)]
pub enum FileError {
    /// The target exists and `force` was not given.
    #[error("`{0}` already exists; pass --force to replace it")]
    Exists(PathBuf),
    /// The target is a directory.
    #[error("`{0}` is a directory, not a file")]
    IsDirectory(PathBuf),
    /// The target's directory does not exist.
    #[error("cannot write `{0}`: the directory `{1}` does not exist")]
    NoDirectory(PathBuf, PathBuf),
    /// Any other I/O error.
    #[error("cannot write `{0}`: {1}")]
    Io(PathBuf, io::Error),
}

/// A file being written: a temporary file beside the target until [`AtomicFile::commit`].
pub struct AtomicFile {
    target: PathBuf,
    temp: PathBuf,
    writer: Option<BufWriter<File>>,
    force: bool,
    committed: bool,
}

impl AtomicFile {
    /// Opens a temporary file for `target` in the target's directory.
    ///
    /// # Errors
    ///
    /// The target exists (without `force`), is a directory, its directory is missing, or the
    /// temporary file cannot be created (no permission, say).
    pub fn create(target: &Path, force: bool) -> Result<AtomicFile, FileError> {
        if target.is_dir() {
            return Err(FileError::IsDirectory(target.to_path_buf()));
        }
        if !force && fs::symlink_metadata(target).is_ok() {
            return Err(FileError::Exists(target.to_path_buf()));
        }
        let dir = match target.parent() {
            Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
            _ => PathBuf::from("."),
        };
        if !dir.is_dir() {
            return Err(FileError::NoDirectory(target.to_path_buf(), dir));
        }
        let name = target
            .file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .ok_or_else(|| FileError::IsDirectory(target.to_path_buf()))?;
        let mut k = 0u32;
        loop {
            let temp = dir.join(format!(".{name}.lingrav-{}-{k}.tmp", std::process::id()));
            match fs::OpenOptions::new()
                .write(true)
                .create_new(true)
                .open(&temp)
            {
                Ok(f) => {
                    return Ok(AtomicFile {
                        target: target.to_path_buf(),
                        temp,
                        writer: Some(BufWriter::new(f)),
                        force,
                        committed: false,
                    });
                }
                Err(e) if e.kind() == io::ErrorKind::AlreadyExists && k < 100 => k += 1,
                Err(e) => return Err(FileError::Io(target.to_path_buf(), e)),
            }
        }
    }

    /// The target path.
    #[must_use]
    pub fn target(&self) -> &Path {
        &self.target
    }

    /// The writer of the temporary file.
    ///
    /// # Panics
    ///
    /// After [`AtomicFile::commit`].
    pub fn writer(&mut self) -> &mut BufWriter<File> {
        self.writer.as_mut().expect("not yet committed")
    }

    /// Flushes the temporary file to disk and moves it to the target.
    ///
    /// # Errors
    ///
    /// An I/O error, or (without `force`) a target that appeared in the meantime.
    pub fn commit(mut self) -> Result<(), FileError> {
        let io = |e| FileError::Io(self.target.clone(), e);
        let w = self.writer.take().expect("committed once");
        let f = w.into_inner().map_err(|e| io(e.into_error()))?;
        f.sync_all().map_err(io)?;
        drop(f);
        if self.force {
            fs::rename(&self.temp, &self.target).map_err(io)?;
        } else {
            // A hard link never replaces an existing file; where links are not supported,
            // check and rename.
            match fs::hard_link(&self.temp, &self.target) {
                Ok(()) => {
                    let _ = fs::remove_file(&self.temp);
                }
                Err(e) if e.kind() == io::ErrorKind::AlreadyExists => {
                    return Err(FileError::Exists(self.target.clone()));
                }
                Err(_) => {
                    if fs::symlink_metadata(&self.target).is_ok() {
                        return Err(FileError::Exists(self.target.clone()));
                    }
                    fs::rename(&self.temp, &self.target).map_err(io)?;
                }
            }
        }
        self.committed = true;
        Ok(())
    }
}

impl Drop for AtomicFile {
    fn drop(&mut self) {
        if !self.committed {
            self.writer.take();
            let _ = fs::remove_file(&self.temp);
        }
    }
}

/// Commits several files: all of them, or (on the first failure) none of those that did not
/// exist before. A replaced file (with `force`) cannot be restored.
///
/// # Errors
///
/// The first failure.
pub fn commit_all(files: Vec<AtomicFile>) -> Result<(), FileError> {
    let mut done: Vec<(PathBuf, bool)> = Vec::new();
    for f in files {
        let target = f.target.clone();
        let existed = fs::symlink_metadata(&target).is_ok();
        if let Err(e) = f.commit() {
            for (p, existed) in done {
                if !existed {
                    let _ = fs::remove_file(p);
                }
            }
            return Err(e);
        }
        done.push((target, existed));
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn table() -> Table {
        Table {
            columns: vec!["t".into(), "h_tt".into()],
            values: vec![0.0, 1.0000000070710677, 0.5, -7.071067811865475e-9],
        }
    }

    #[test]
    fn csv_round_trips() {
        let mut out = Vec::new();
        write_csv(&mut out, &table()).unwrap();
        let s = String::from_utf8(out).unwrap();
        assert_eq!(
            s,
            "t,h_tt\n0.0,1.0000000070710677\n0.5,-7.071067811865475e-9\n"
        );
        for (text, v) in [
            ("1.0000000070710677", 1.0000000070710677),
            ("-7.071067811865475e-9", -7.071067811865475e-9),
        ] {
            assert_eq!(text.parse::<f64>().unwrap(), v);
        }
    }

    #[test]
    fn npy_header_is_aligned() {
        for (r, c) in [(0, 0), (1, 1), (729, 20), (123_456_789, 47)] {
            let h = npy_header(r, c);
            assert_eq!(h.len() % 64, 0, "{r}x{c}");
            assert_eq!(&h[..8], b"\x93NUMPY\x01\x00");
            let len = u16::from_le_bytes([h[8], h[9]]) as usize;
            assert_eq!(len + 10, h.len());
            assert_eq!(*h.last().unwrap(), b'\n');
            let text = std::str::from_utf8(&h[10..]).unwrap();
            assert!(text.contains(&format!("'shape': ({r}, {c}), ")), "{text}");
        }
        let mut out = Vec::new();
        write_npy(&mut out, &table()).unwrap();
        let h = npy_header(2, 2).len();
        assert_eq!(out.len(), h + 4 * 8);
        assert_eq!(&out[h..h + 8], &0.0f64.to_le_bytes());
        assert_eq!(&out[h + 8..h + 16], &1.0000000070710677f64.to_le_bytes());
    }

    #[test]
    fn json_parses() {
        let mut out = Vec::new();
        write_json(&mut out, &table()).unwrap();
        let v: serde_json::Value = serde_json::from_slice(&out).unwrap();
        assert_eq!(v["columns"][1], "h_tt");
        assert_eq!(v["rows"][1][1].as_f64().unwrap(), -7.071067811865475e-9);
    }

    #[test]
    fn atomic_files_do_not_clobber() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("a.csv");
        let mut f = AtomicFile::create(&p, false).unwrap();
        f.writer().write_all(b"one").unwrap();
        assert!(!p.exists(), "nothing at the target before the commit");
        f.commit().unwrap();
        assert_eq!(fs::read_to_string(&p).unwrap(), "one");
        assert!(matches!(
            AtomicFile::create(&p, false),
            Err(FileError::Exists(_))
        ));
        let mut f = AtomicFile::create(&p, true).unwrap();
        f.writer().write_all(b"two").unwrap();
        f.commit().unwrap();
        assert_eq!(fs::read_to_string(&p).unwrap(), "two");
        // Dropped without a commit: no trace.
        let q = dir.path().join("b.csv");
        let mut f = AtomicFile::create(&q, false).unwrap();
        f.writer().write_all(b"x").unwrap();
        drop(f);
        let left: Vec<_> = fs::read_dir(dir.path()).unwrap().collect();
        assert_eq!(left.len(), 1, "{left:?}");
        assert!(matches!(
            AtomicFile::create(&dir.path().join("no/such/dir/c.csv"), false),
            Err(FileError::NoDirectory(..))
        ));
        assert!(matches!(
            AtomicFile::create(dir.path(), true),
            Err(FileError::IsDirectory(_))
        ));
    }
}
