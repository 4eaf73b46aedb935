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
//! Files are written through [`crate::output`] (re-exported here): a temporary file beside
//! the target, renamed into place whole; the data file and its sidecar in an order that never
//! shows a data file beside a sidecar that does not describe it.

pub use crate::output::{AtomicFile, FileError, commit_with_sidecar};
use std::io::{self, Write};
use std::path::Path;

/// A table of finite values with named columns (the tests' sink).
#[cfg(test)]
#[derive(Clone, Debug, PartialEq)]
pub struct Table {
    /// The column names.
    pub columns: Vec<String>,
    /// The values, row-major: `values[row * columns.len() + col]`.
    pub values: Vec<f64>,
}

#[cfg(test)]
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

/// Writes a table one row at a time in one format, a few tens of kilobytes per call to the
/// underlying writer (which hashes what it is given). The number of rows is declared at the
/// start (the `.npy` header states the shape); [`RowWriter::finish`] checks it.
pub struct RowWriter<'w, W: Write> {
    w: &'w mut W,
    format: Format,
    columns: usize,
    rows: usize,
    written: usize,
    buf: Vec<u8>,
}

/// Bytes gathered before a call to the underlying writer.
const CHUNK: usize = 1 << 15;

impl<'w, W: Write> RowWriter<'w, W> {
    /// Writes the header of a table of `rows` rows with these column names.
    ///
    /// # Errors
    ///
    /// An I/O error of `w`.
    pub fn begin(
        w: &'w mut W,
        columns: &[String],
        rows: usize,
        format: Format,
    ) -> io::Result<RowWriter<'w, W>> {
        let mut buf = Vec::with_capacity(CHUNK + 4096);
        match format {
            Format::Csv => {
                buf.extend_from_slice(columns.join(",").as_bytes());
                buf.push(b'\n');
            }
            Format::Npy => buf.extend_from_slice(&npy_header(rows, columns.len())),
            Format::Json => {
                let cols = serde_json::to_string(columns).map_err(io::Error::other)?;
                buf.extend_from_slice(format!("{{\"columns\": {cols},\n\"rows\": [\n").as_bytes());
            }
        }
        Ok(RowWriter {
            w,
            format,
            columns: columns.len(),
            rows,
            written: 0,
            buf,
        })
    }

    /// Writes one row of finite values (`-0` is written as `0`): [`RowWriter::rows`] with
    /// the row's length checked (the tests' writer).
    ///
    /// # Errors
    ///
    /// An I/O error of the writer, or a row of the wrong length or beyond the declared
    /// count (a defect of the caller, reported as an error rather than a corrupt file).
    #[cfg(test)]
    pub fn row(&mut self, values: &[f64]) -> io::Result<()> {
        if values.len() != self.columns {
            return Err(self.shape_error(values.len()));
        }
        self.rows(values)
    }

    /// Writes whole rows of finite values, one after the other in `values` (`-0` is written
    /// as `0`).
    ///
    /// # Errors
    ///
    /// An I/O error of the writer, or values that are not a whole number of rows or go
    /// beyond the declared count (a defect of the caller, reported as an error rather than a
    /// corrupt file).
    pub fn rows(&mut self, values: &[f64]) -> io::Result<()> {
        let n = values.len().checked_div(self.columns).unwrap_or(0);
        if self.columns == 0 || n * self.columns != values.len() || n > self.rows - self.written {
            return Err(self.shape_error(values.len()));
        }
        if self.format == Format::Npy {
            // All rows at once: little-endian f64, one after the other.
            self.written += n;
            let start = self.buf.len();
            self.buf.resize(start + 8 * values.len(), 0);
            for (b, v) in self.buf[start..].chunks_exact_mut(8).zip(values) {
                b.copy_from_slice(&(v + 0.0).to_le_bytes());
            }
            if self.buf.len() >= CHUNK {
                self.w.write_all(&self.buf)?;
                self.buf.clear();
            }
            return Ok(());
        }
        // CSV and JSON: one line per row.
        let json = self.format == Format::Json;
        for row in values.chunks(self.columns) {
            self.written += 1;
            let b = &mut self.buf;
            if json {
                b.push(b'[');
            }
            for (i, v) in row.iter().enumerate() {
                if i > 0 {
                    b.extend_from_slice(if json { b", " } else { b"," });
                }
                write!(b, "{:?}", v + 0.0)?;
            }
            if json {
                b.push(b']');
                if self.written < self.rows {
                    b.push(b',');
                }
            }
            b.push(b'\n');
            if self.buf.len() >= CHUNK {
                self.w.write_all(&self.buf)?;
                self.buf.clear();
            }
        }
        Ok(())
    }

    /// The error for `len` values that do not fit the table's shape.
    fn shape_error(&self, len: usize) -> io::Error {
        io::Error::other(format!(
            "row {} of {} values: the table has {} rows of {} columns",
            self.written, len, self.rows, self.columns
        ))
    }

    /// Writes what is left and the end of the table.
    ///
    /// # Errors
    ///
    /// An I/O error of the writer, or fewer rows than declared.
    pub fn finish(mut self) -> io::Result<()> {
        if self.written != self.rows {
            return Err(io::Error::other(format!(
                "{} rows written of the {} declared",
                self.written, self.rows
            )));
        }
        if self.format == Format::Json {
            self.buf.extend_from_slice(b"]}\n");
        }
        self.w.write_all(&self.buf)
    }
}

/// Writes `table` in `format` (through [`RowWriter`]).
#[cfg(test)]
///
/// # Errors
///
/// An I/O error of `w`.
pub fn write_table(w: &mut impl Write, table: &Table, format: Format) -> io::Result<()> {
    let mut out = RowWriter::begin(w, &table.columns, table.rows(), format)?;
    let half = table.rows() / 2 * table.columns.len();
    // Rows one at a time, then the rest at once: the two calls write the same bytes.
    for r in 0..table.rows() / 2 {
        out.row(table.row(r))?;
    }
    out.rows(&table.values[half..])?;
    out.finish()
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
        write_table(&mut out, &table(), Format::Csv).unwrap();
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
        write_table(&mut out, &table(), Format::Npy).unwrap();
        let h = npy_header(2, 2).len();
        assert_eq!(out.len(), h + 4 * 8);
        assert_eq!(&out[h..h + 8], &0.0f64.to_le_bytes());
        assert_eq!(&out[h + 8..h + 16], &1.0000000070710677f64.to_le_bytes());
    }

    #[test]
    fn json_parses() {
        let mut out = Vec::new();
        write_table(&mut out, &table(), Format::Json).unwrap();
        let v: serde_json::Value = serde_json::from_slice(&out).unwrap();
        assert_eq!(v["columns"][1], "h_tt");
        assert_eq!(v["rows"][1][1].as_f64().unwrap(), -7.071067811865475e-9);
    }

    #[test]
    fn row_writer_checks_the_declared_shape() {
        let cols = vec!["t".to_string(), "h".to_string()];
        for format in [Format::Csv, Format::Npy, Format::Json] {
            // No rows: still a whole file (JSON parses, the npy header states 0 rows).
            let mut out = Vec::new();
            RowWriter::begin(&mut out, &cols, 0, format)
                .unwrap()
                .finish()
                .unwrap();
            if format == Format::Json {
                let v: serde_json::Value = serde_json::from_slice(&out).unwrap();
                assert_eq!(v["rows"].as_array().unwrap().len(), 0);
            }
            // A row too many, a row of the wrong width, or a row missing: errors.
            let mut out = Vec::new();
            let mut w = RowWriter::begin(&mut out, &cols, 1, format).unwrap();
            assert!(w.row(&[1.0]).is_err());
            w.row(&[1.0, -0.0]).unwrap();
            assert!(w.row(&[1.0, 2.0]).is_err());
            w.finish().unwrap();
            let mut out = Vec::new();
            let mut w = RowWriter::begin(&mut out, &cols, 2, format).unwrap();
            w.row(&[1.0, 2.0]).unwrap();
            assert!(w.finish().is_err());
        }
        // Many rows: the chunked writes give the same bytes as one write per row would.
        let n = 10_000;
        let table = Table {
            columns: cols.clone(),
            values: (0..2 * n).map(|k| f64::from(k) / 7.0).collect(),
        };
        let mut out = Vec::new();
        write_table(&mut out, &table, Format::Csv).unwrap();
        let text = String::from_utf8(out).unwrap();
        assert_eq!(text.lines().count(), n as usize + 1);
        let last = text.lines().last().unwrap();
        let want = format!(
            "{:?},{:?}",
            f64::from(2 * n - 2) / 7.0,
            f64::from(2 * n - 1) / 7.0
        );
        assert_eq!(last, want);
    }
}
