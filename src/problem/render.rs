//! Writing a problem file: the inverse of reading, for commands that output a changed problem.
//!
//! Strings are written as literal strings `'...'` when they can be (so a later error points
//! exactly into them), else as basic strings with escapes; floats with Rust's shortest
//! round-trip form, so they read back to the same `f64`.

use super::{Claims, GridSpec};
use crate::tensor::{COMPONENTS, component_name};
use std::fmt::Write;

/// A problem file with these contents, in the layout [`super::from_str`] reads. Components
/// of `h` and of the source are taken from `[mu][nu]` with `mu <= nu`, falling back to
/// `[nu]\[mu\]`; `None` components are omitted (zero). A \[perturbation\] table is always written.
#[must_use]
pub fn render_problem(
    name: Option<&str>,
    parameters: &[(String, f64)],
    functions: &[(String, String)],
    defines: &[(String, String)],
    h: &[[Option<String>; 4]; 4],
    source: Option<&[[Option<String>; 4]; 4]>,
    claims: Option<&Claims>,
) -> String {
    let mut sections: Vec<String> = Vec::new();
    if let Some(n) = name {
        sections.push(format!("name = {}\n", string(n)));
    }
    if !parameters.is_empty() {
        let mut s = String::from("[parameters]\n");
        for (n, v) in parameters {
            let _ = writeln!(s, "{} = {}", key(n), float(*v));
        }
        sections.push(s);
    }
    for (table, entries) in [("functions", functions), ("define", defines)] {
        if !entries.is_empty() {
            let mut s = format!("[{table}]\n");
            for (n, e) in entries {
                let _ = writeln!(s, "{} = {}", key(n), string(e));
            }
            sections.push(s);
        }
    }
    sections.push(tensor("perturbation", h));
    if let Some(t) = source {
        sections.push(tensor("source", t));
    }
    if let Some(c) = claims {
        let mut s = String::from("[claims]\n");
        if let Some(b) = c.field_equations {
            let _ = writeln!(s, "field_equations = {b}");
        }
        if !c.gauge.is_empty() {
            let names: Vec<String> = c.gauge.iter().map(|g| format!("'{}'", g.name())).collect();
            let _ = writeln!(s, "gauge = [{}]", names.join(", "));
        }
        if let Some(b) = c.pure_gauge {
            let _ = writeln!(s, "pure_gauge = {b}");
        }
        if let Some(n) = c.far_zone_order {
            let _ = writeln!(s, "far_zone_order = {n}");
        }
        if let Some(r) = &c.far_zone_radius {
            let _ = writeln!(s, "far_zone_radius = '{r}'");
        }
        sections.push(s);
    }
    sections.join("\n")
}

/// A `[grid]` table for `grid`, to append to the output of [`render_problem`] (after a blank
/// line).
#[must_use]
pub fn render_grid(grid: &GridSpec) -> String {
    let mut s = String::from("[grid]\n");
    if let Some(c) = grid.center {
        let parts: Vec<String> = c.iter().map(|&x| float(x)).collect();
        let _ = writeln!(s, "center = [{}]", parts.join(", "));
    }
    if let Some(w) = grid.width {
        let _ = writeln!(s, "width = {}", float(w));
    }
    if let Some(p) = &grid.points {
        let parts: Vec<String> = p.iter().map(usize::to_string).collect();
        let _ = writeln!(s, "points = [{}]", parts.join(", "));
    }
    s
}

fn tensor(table: &str, m: &[[Option<String>; 4]; 4]) -> String {
    let mut s = format!("[{table}]\n");
    for (mu, nu) in COMPONENTS {
        if let Some(e) = m[mu][nu].as_ref().or(m[nu][mu].as_ref()) {
            let _ = writeln!(s, "{} = {}", component_name(mu, nu), string(e));
        }
    }
    s
}

/// Shortest text that reads back to the same f64 (TOML spells the non-finite ones `nan`, `inf`).
fn float(x: f64) -> String {
    if x.is_nan() {
        "nan".into()
    } else if x.is_infinite() {
        if x > 0.0 { "inf".into() } else { "-inf".into() }
    } else {
        format!("{x:?}")
    }
}

/// A bare key when TOML allows one, else a quoted key.
fn key(k: &str) -> String {
    let bare = !k.is_empty()
        && k.bytes()
            .all(|b| b.is_ascii_alphanumeric() || b == b'_' || b == b'-');
    if bare { k.to_string() } else { basic(k) }
}

/// A literal string `'...'` when possible, else a basic string.
fn string(s: &str) -> String {
    if s.chars().all(|c| c != '\'' && !c.is_control()) {
        format!("'{s}'")
    } else {
        basic(s)
    }
}

/// A basic string `"..."` with TOML escapes.
fn basic(s: &str) -> String {
    let mut out = String::with_capacity(s.len() + 2);
    out.push('"');
    for c in s.chars() {
        match c {
            '"' => out.push_str("\\\""),
            '\\' => out.push_str("\\\\"),
            '\n' => out.push_str("\\n"),
            '\t' => out.push_str("\\t"),
            '\r' => out.push_str("\\r"),
            c if c.is_control() => {
                let _ = write!(out, "\\u{:04X}", c as u32);
            }
            c => out.push(c),
        }
    }
    out.push('"');
    out
}
