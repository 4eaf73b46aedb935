//! Reference values for simulation and analysis codes: the quantities of a perturbation
//! evaluated at given points, written as CSV, `.npy` or JSON with a JSON sidecar.
//!
//! Model. An export is a list of [`quantity::Block`]s (exact column forms, fixed names and
//! orders), a [`points::PointSet`] (a points file or a grid), the parameter values, and a
//! [`write::Format`]. [`evaluate`] fills a [`write::Table`] whose columns are `t, x, y, z`
//! and then every component; [`sidecar`] describes it: the conventions, the parameter
//! values, the exact expression of every column, the points and the tool version.
//!
//! Key design decision: every value is checked against a certified interval enclosure of the
//! exact canonical form (see [`crate::canon::Store::eval_interval`]), so each column comes
//! with a proved bound on its error, written to the sidecar. The value written is the plain
//! f64 evaluation (the arithmetic `emit` generates) when it lies inside the enclosure, which
//! it nearly always does, else the enclosure's midpoint. A value that cannot
//! be enclosed (a singularity such as r = 0, a root or log at its branch point) or that is
//! certified not to be real is an error naming the point; nothing is written then.
//!
//! **Invariants:** the library writes to `impl Write` and to [`write::AtomicFile`] only; a
//! table holds finite values only; column names and orders come from [`quantity`] alone.

pub mod points;
pub mod quantity;
pub mod write;

use crate::canon::{Form, Point, Store};
use crate::zero::Sampling;
use points::{Origin, PointSet};
use quantity::Block;
use serde_json::{Value, json};
use write::{Format, Table};

/// A value that could not be computed.
#[derive(Clone, Debug, PartialEq, Eq, thiserror::Error)]
#[error("{column} cannot be evaluated at {point}: {reason}")]
pub struct EvalError {
    /// The row (from 0).
    pub row: usize,
    /// The column's name.
    pub column: String,
    /// The point, described (file line or grid index, and coordinates).
    pub point: String,
    /// Why.
    pub reason: String,
}

/// A filled table and the certified error bound of every component column.
///
/// Each value is the plain f64 evaluation of the column's real form (the arithmetic that
/// `emit` writes, samples inlined) when that lies inside the certified enclosure, else the
/// enclosure's midpoint.
#[derive(Clone, Debug)]
pub struct Evaluated {
    /// `t, x, y, z`, then every column of every block.
    pub table: Table,
    /// For each component column (in order, without `t, x, y, z`): the largest radius of its
    /// enclosures over all rows, a bound on `|exact - written|` (up to the conversion of the
    /// written decimal, half an ulp).
    pub bounds: Vec<f64>,
}

/// The numerical point for coordinates `c` with these parameter values and function samples.
fn point_at(
    store: &mut Store,
    parameters: &[(String, f64)],
    sampling: &Sampling,
    c: [f64; 4],
) -> Point {
    crate::tt::numeric_point(store, parameters, sampling, c)
}

/// Encloses the values of `forms` at `pt`: `(midpoint, radius)` of the real part, or why not.
fn eval_forms(
    store: &mut Store,
    forms: &[Form],
    pt: &Point,
) -> Result<Vec<(f64, f64)>, (usize, String)> {
    let mut out = Vec::with_capacity(forms.len());
    for (i, &f) in forms.iter().enumerate() {
        if store.is_zero(f) {
            out.push((0.0, 0.0));
            continue;
        }
        let Some(z) = store.eval_interval(f, pt) else {
            return Err((
                i,
                "the value is not finite or not defined there (a singularity such as r = 0, \
                 or a root or logarithm at its branch point)"
                    .into(),
            ));
        };
        if z.im.excludes_zero() {
            return Err((
                i,
                format!(
                    "the value is not real (imaginary part {:e}); a root or logarithm of a \
                     negative number?",
                    z.im.mid()
                ),
            ));
        }
        let (m, r) = (z.re.mid(), z.re.rad());
        if !(m.is_finite() && r.is_finite()) {
            return Err((i, "the value is not finite there".into()));
        }
        out.push((m, r));
    }
    Ok(out)
}

/// The same expressions as straight-line f64 arithmetic (the code `emit` writes, with the
/// samples inlined), when every column can be read that way.
struct Plain {
    dag: crate::emit::dag::Dag,
    roots: Vec<crate::emit::dag::Id>,
}

impl Plain {
    fn new(
        store: &mut Store,
        forms: &[Form],
        parameters: &[(String, f64)],
        sampling: &Sampling,
    ) -> Option<Plain> {
        let mut functions: Vec<(String, crate::canon::FunctionSample)> = sampling
            .samples
            .iter()
            .map(|(n, s)| (n.to_string(), s.clone()))
            .collect();
        functions.sort_by(|a, b| a.0.cmp(&b.0));
        let syms = crate::emit::dag::Symbols {
            vars: crate::tensor::COORDS
                .iter()
                .map(|c| c.to_string())
                .chain(parameters.iter().map(|p| p.0.clone()))
                .collect(),
            functions,
            inline_samples: true,
        };
        let mut dag = crate::emit::dag::Dag::new();
        let mut roots = Vec::with_capacity(forms.len());
        for &f in forms {
            roots.push(dag.form(store, &syms, f).ok()?);
        }
        Some(Plain { dag, roots })
    }

    fn values(&self, vars: &[f64]) -> Vec<Option<f64>> {
        let mut memo = rustc_hash::FxHashMap::default();
        self.roots
            .iter()
            .map(|&r| self.dag.eval(r, vars, &mut memo))
            .collect()
    }
}

/// Evaluates every column of `blocks` at every point.
///
/// # Errors
///
/// The first value that cannot be enclosed or is not real, with its row and column.
pub fn evaluate(
    store: &mut Store,
    blocks: &[Block],
    points: &PointSet,
    parameters: &[(String, f64)],
    sampling: &Sampling,
) -> Result<Evaluated, EvalError> {
    let forms: Vec<Form> = blocks
        .iter()
        .flat_map(|b| b.columns.iter().map(|c| c.form))
        .collect();
    let names: Vec<&str> = blocks
        .iter()
        .flat_map(|b| b.columns.iter().map(|c| c.name.as_str()))
        .collect();
    let mut columns: Vec<String> = ["t", "x", "y", "z"].map(String::from).to_vec();
    columns.extend(names.iter().map(|s| s.to_string()));
    let mut values = Vec::with_capacity(points.coords.len() * columns.len());
    let mut bounds = vec![0.0f64; forms.len()];
    let plain = Plain::new(store, &forms, parameters, sampling);
    let mut vars: Vec<f64> = vec![0.0; 4];
    vars.extend(parameters.iter().map(|p| p.1));
    for (row, &c) in points.coords.iter().enumerate() {
        let pt = point_at(store, parameters, sampling, c);
        let v = eval_forms(store, &forms, &pt).map_err(|(i, reason)| EvalError {
            row,
            column: names[i].to_string(),
            point: points.describe(row),
            reason,
        })?;
        vars[..4].copy_from_slice(&c);
        let fast = plain.as_ref().map(|p| p.values(&vars));
        values.extend_from_slice(&c);
        for (i, (m, r)) in v.into_iter().enumerate() {
            // The plain f64 value where it is inside the certified enclosure (it nearly always
            // is, and it is what a straightforward evaluation gives), else the midpoint.
            let x = match fast.as_ref().and_then(|f| f[i]) {
                Some(x) if (x - m).abs() <= r => x,
                _ => m,
            };
            values.push(x);
            bounds[i] = bounds[i].max(r + (x - m).abs());
        }
    }
    Ok(Evaluated {
        table: Table { columns, values },
        bounds,
    })
}

/// The conventions every export states.
#[must_use]
pub fn conventions() -> Value {
    json!({
        "signature": "-+++",
        "metric": "g = eta + h to first order in h, eta = diag(-1, 1, 1, 1)",
        "coordinates": "t, x, y, z (Cartesian)",
        "units": "G = c = 1",
        "index_positions": "all indices down: h_{mu nu}, hbar_{mu nu}, d_rho h_{mu nu}, R_abcd, \
            R_{mu nu}, G_{mu nu}, T_{mu nu}; ADM: beta_i = h_ti (shift with index down, equal \
            to beta^i at first order), gamma_ij, K_ij",
        "component_order": "symmetric tensors: tt tx ty tz xx xy xz yy yz zz; spatial: xx xy xz yy yz zz",
        "riemann": "MTW sign: R_abcd = (1/2)(d_b d_c h_ad + d_a d_d h_bc - d_a d_c h_bd - d_b d_d h_ac)",
        "field_equations": "G_{mu nu} = 8 pi T_{mu nu}",
        "extrinsic_curvature": "MTW/York sign: K_ij = -(1/(2 alpha))(d_t gamma_ij - D_i beta_j - D_j beta_i)",
        "adm": crate::adm::ADM_DEFINITION,
        "constraints": crate::adm::CONSTRAINT_DEFINITION,
        "psi4_tetrad": quantity::PSI4_DEFINITION,
    })
}

/// What the sidecar describes besides the table.
pub struct SidecarInfo<'a> {
    /// The problem file's path as given.
    pub file: &'a str,
    /// The problem's `name`.
    pub name: Option<&'a str>,
    /// Parameter values used, in file order.
    pub parameters: &'a [(String, f64)],
    /// Parameters whose value was set on the command line.
    pub overridden: &'a [String],
    /// Function samples, in file order.
    pub functions: &'a [(String, String)],
    /// Defines, in file order.
    pub defines: &'a [(String, String)],
    /// `h` as written, `[mu][nu]`.
    pub h_text: &'a [[Option<String>; 4]; 4],
    /// `T` as written, `None` for vacuum.
    pub source_text: Option<&'a [[Option<String>; 4]; 4]>,
    /// The direction of psi4 / hplus / hcross, if one was given: `(n, u, v)` as texts and the
    /// notes on how they were made.
    pub direction: Option<Value>,
    /// The data file's name (no directory).
    pub data_file: &'a str,
    /// Its format.
    pub format: Format,
    /// Where the points came from.
    pub points: &'a PointSet,
}

fn tensor_text(m: &[[Option<String>; 4]; 4]) -> Value {
    let mut o = serde_json::Map::new();
    for (mu, nu) in crate::problem::COMPONENTS {
        if let Some(t) = m[mu][nu].as_ref().or(m[nu][mu].as_ref()) {
            o.insert(crate::problem::component_name(mu, nu), json!(t));
        }
    }
    Value::Object(o)
}

fn points_json(p: &PointSet) -> Value {
    match &p.origin {
        Origin::File { path, .. } => json!({
            "from": "file",
            "path": path,
            "rows": p.coords.len(),
            "order": "the file's rows, in order",
        }),
        Origin::Grid(g) => {
            let axis = |c: usize| json!(g.axis(c));
            json!({
                "from": "grid",
                "center": g.center,
                "width": g.width,
                "points_per_axis": g.points,
                "spacetime": g.spacetime,
                "rule": "value_k = center + (k - (points - 1)/2)*spacing, spacing = \
                    width/(points - 1), k = 0 .. points - 1 (both ends included); the box of \
                    the grid check",
                "axes": { "t": axis(0), "x": axis(1), "y": axis(2), "z": axis(3) },
                "order": if g.spacetime {
                    "C order over (t, x, y, z): z fastest, row = ((i_t*N + i_x)*N + i_y)*N + i_z"
                } else {
                    "C order over (x, y, z) at the centre's t: z fastest, row = (i_x*N + i_y)*N + i_z"
                },
                "rows": p.coords.len(),
            })
        }
    }
}

/// The layout of the data file, in words.
#[must_use]
pub fn layout(format: Format) -> &'static str {
    match format {
        Format::Csv => {
            "CSV: a header line with the column names, then one line per point; numbers in \
             shortest round-trip form"
        }
        Format::Npy => {
            "NumPy .npy v1.0: one float64 ('<f8') array, C order, shape (rows, columns); the \
             columns are those listed here, t, x, y, z first"
        }
        Format::Json => "JSON: {\"columns\": [...], \"rows\": [[...], ...]}, one array per point",
    }
}

/// The sidecar of an export: everything needed to read, trust and reproduce the data.
#[must_use]
pub fn sidecar(
    store: &mut Store,
    blocks: &[Block],
    ev: &Evaluated,
    info: &SidecarInfo<'_>,
) -> Value {
    let mut k = 0usize;
    let quantities: Vec<Value> = blocks
        .iter()
        .map(|b| {
            let cols: Vec<Value> = b
                .columns
                .iter()
                .map(|c| {
                    let bound = ev.bounds.get(k).copied().unwrap_or(0.0);
                    k += 1;
                    json!({
                        "name": c.name,
                        "expression": store.to_text(c.form),
                        "exactly_zero": store.is_zero(c.form),
                        "error_bound": bound,
                    })
                })
                .collect();
            json!({
                "quantity": b.quantity.name(),
                "definition": b.quantity.definition(),
                "columns": cols,
            })
        })
        .collect();
    let params: serde_json::Map<String, Value> = info
        .parameters
        .iter()
        .map(|(n, v)| (n.clone(), json!(v)))
        .collect();
    let functions: serde_json::Map<String, Value> = info
        .functions
        .iter()
        .map(|(n, s)| (n.clone(), json!(s)))
        .collect();
    let defines: serde_json::Map<String, Value> = info
        .defines
        .iter()
        .map(|(n, s)| (n.clone(), json!(s)))
        .collect();
    json!({
        "tool": { "name": "lingrav", "version": env!("CARGO_PKG_VERSION") },
        "data": {
            "file": info.data_file,
            "format": info.format.name(),
            "layout": layout(info.format),
            "rows": ev.table.rows(),
            "columns": ev.table.columns,
        },
        "problem": {
            "file": info.file,
            "name": info.name,
            "parameters": params,
            "parameters_set_on_command_line": info.overridden,
            "functions": {
                "samples_in_u": functions,
                "note": "arbitrary functions are evaluated through these samples, and their \
                    derivatives through the exact derivatives of the samples",
            },
            "define": defines,
            "perturbation": tensor_text(info.h_text),
            "source": info.source_text.map(tensor_text),
        },
        "points": points_json(info.points),
        "direction": info.direction,
        "conventions": conventions(),
        "evaluation": "each value is the f64 evaluation of the exact expression's real form \
            (the arithmetic of `lingrav emit`, samples inlined), checked to lie inside a \
            certified interval enclosure of the exact value (outward rounding; libm assumed \
            accurate to 4 ulp), else the enclosure's midpoint; error_bound bounds |exact - \
            value| over the column",
        "quantities": quantities,
    })
}

#[cfg(test)]
mod tests;
