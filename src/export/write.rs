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
    // A few thousand values per write call, not one (the writer hashes what it is given).
    let mut buf = Vec::with_capacity(8 * 4096);
    for chunk in table.values.chunks(4096) {
        buf.clear();
        for v in chunk {
            buf.extend_from_slice(&(v + 0.0).to_le_bytes());
        }
        w.write_all(&buf)?;
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
}
