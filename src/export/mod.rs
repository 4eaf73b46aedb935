//! Reference values for simulation and analysis codes: the quantities of a perturbation
//! evaluated at given points, written as CSV, `.npy` or JSON with a JSON sidecar.
//!
//! Model. An export is a list of [`quantity::Block`]s (exact column forms, fixed names and
//! orders), a [`points::PointSet`] (a points file or a grid), the parameter values, and a
//! [`write::Format`]. [`evaluate`] gives rows whose columns are `t, x, y, z` and then every
//! component to a sink (the command's [`write::RowWriter`] on a temporary file), a block
//! of rows at a time; [`sidecar`] describes them: the conventions, the parameter
//! values, the exact expression of every column, the points and the tool version.
//!
//! Key design decision: every value is computed by the independent route ([`certify`]:
//! the problem's texts as written, jets in outward-rounded interval arithmetic, precision
//! raised to 512 bits where needed), never from the expanded canonical form, and comes with a
//! certified bound; a value beyond the tolerance is an error naming the point, and nothing
//! is written. The exact canonical forms still give the sidecar's expressions and re-check a
//! sample of rows (the two routes must agree). A value that cannot be enclosed (a singularity
//! such as r = 0, a root or log at its branch point) is an error naming the point.
//!
//! **Invariants:** the library writes to `impl Write` and to [`write::AtomicFile`] only; a
//! table holds finite values only; column names and orders come from [`quantity`] alone.

pub mod certify;
mod lanes;
pub mod lower;
pub mod points;
pub mod program;
pub mod quantity;
mod rows;
pub mod write;

use crate::audit::Audit;
use crate::canon::{CanonError, Form, Point, Store};
use crate::jet::Scalar;
use crate::problem::Problem;
use crate::zero::Sampling;
use certify::Frame;
use points::{Origin, PointSet};
use quantity::Block;
use quantity::Quantity;
use serde_json::{Value, json};
use write::Format;

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

/// The numerical point for coordinates `c` with these parameter values and function samples.
fn point_at(
    store: &mut Store,
    coordinates: &[String; 4],
    parameters: &[(String, f64)],
    sampling: &Sampling,
    c: [f64; 4],
) -> Point {
    crate::tt::numeric_point_in(store, coordinates, parameters, sampling, c)
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

/// The independent evaluation route of an export: the jets of the problem's fields, planned
/// once from its texts, and the texts of the direction frame when a quantity needs one.
#[derive(Debug)]
pub struct Numeric {
    audit: Audit,
    /// What `audit` was planned from, so that other threads can plan their own
    /// ([`Audit::fields_from`]).
    plan: JetsPlan,
    /// The fast path: the columns as one interval program and its output registers (`None`
    /// if the texts could not be lowered; the jets then do everything).
    program: Option<(program::IntervalProgram, Vec<u32>)>,
}

impl Numeric {
    /// Plans the jets `quantities` need for `problem`, and the interval program of the
    /// columns at these `parameters` (the export's values); `frame` gives the texts of `n`,
    /// `u`, `v` (three components each) for psi4, hplus and hcross.
    ///
    /// # Errors
    ///
    /// A text that cannot be planned (cannot happen for a problem that was built).
    pub fn new(
        problem: &Problem,
        quantities: &[Quantity],
        frame: Option<[[String; 3]; 3]>,
        parameters: &[(String, f64)],
    ) -> Result<Numeric, crate::audit::AuditError> {
        let about = problem.background.is_some();
        let order = quantities
            .iter()
            .map(|&q| certify::derivative_order(q))
            .max()
            .unwrap_or(0);
        // The pointwise route runs the whole curvature chain: h to second order.
        let order = if about { order.max(2) } else { order };
        let mut extras = Vec::new();
        if let Some(fr) = &frame {
            for (v, comps) in ["n", "u", "v"].iter().zip(fr) {
                for (i, text) in comps.iter().enumerate() {
                    extras.push((format!("direction {v}[{i}]"), text.clone()));
                }
            }
        }
        let texts = lower::Texts {
            h: &problem.h_text,
            source: problem.source_text.as_ref(),
            user: crate::tape::UserExprs {
                defines: problem.defines.clone(),
                functions: problem.functions.clone(),
            },
            frame: frame.clone(),
        };
        // The interval program lowers the flat formulas only.
        let program = if about {
            None
        } else {
            lower::roots(
                program::IntervalProgram::new(parameters),
                &texts,
                quantities,
            )
            .ok()
            .map(|(p, r)| (p, r.into_iter().flatten().collect()))
        };
        let plan = JetsPlan {
            texts: crate::audit::Texts::of(problem),
            order,
            extras,
            frame: frame.is_some(),
            about,
        };
        Ok(Numeric {
            audit: Audit::fields_from(&plan.texts, order, &plan.extras)?,
            plan,
            program,
        })
    }

    /// The coordinate names, time first (the first four columns of an export).
    #[must_use]
    pub fn coordinates(&self) -> &[String; 4] {
        self.audit.coordinates()
    }
}

/// The texts, derivative order and extra texts of a [`Numeric`]'s jets.
#[derive(Clone, Debug)]
struct JetsPlan {
    texts: crate::audit::Texts,
    order: u32,
    extras: Vec<(String, String)>,
    /// Whether the extras are the direction frame (`n`, `u`, `v`).
    frame: bool,
    /// About a background: every column from the pointwise route
    /// ([`certify::values_about`]).
    about: bool,
}

impl JetsPlan {
    /// The jets of this plan (the same as the [`Numeric`]'s own).
    fn audit(&self) -> Result<Audit, ExportError> {
        Audit::fields_from(&self.texts, self.order, &self.extras)
            .map_err(|e| ExportError::Setup(e.to_string()))
    }

    /// Every column of `quantities` at `point`, in enclosure arithmetic `S`, through the
    /// jets `audit` (a [`Numeric`]'s own, or one planned from the same texts).
    fn values_in<S: Scalar>(
        &self,
        audit: &Audit,
        quantities: &[Quantity],
        point: &[(String, f64)],
        ctx: &S::Ctx,
    ) -> Result<Vec<Option<S>>, crate::audit::AuditError> {
        let f = audit.fields_in::<String, S>(point, ctx)?;
        if self.about {
            let needs = crate::pointwise::Needs {
                riemann: quantities.contains(&Quantity::Riemann),
            };
            let curved = f.curved_quantities(ctx, needs);
            let mut out = Vec::new();
            for &q in quantities {
                let n = certify::column_count(q);
                match &curved {
                    Some((pq, pf)) => out.extend(certify::values_about(q, pq, pf)),
                    None => out.extend(std::iter::repeat_n(None, n)),
                }
            }
            return Ok(out);
        }
        let frame = if self.frame {
            let get = |k: usize| -> Option<[S; 3]> {
                Some([f.extra(3 * k)?, f.extra(3 * k + 1)?, f.extra(3 * k + 2)?])
            };
            match (get(0), get(1), get(2)) {
                (Some(n), Some(u), Some(v)) => Some(Frame { n, u, v }),
                _ => None,
            }
        } else {
            None
        };
        let mut out = Vec::new();
        for &q in quantities {
            let ring = certify::ScalarRing::<S> { ctx };
            let mut vals = certify::quantity_values(&ring, q, &f, frame.as_ref());
            if q.needs_direction() && frame.is_none() {
                vals.iter_mut().for_each(|v| *v = None);
            }
            out.extend(vals);
        }
        Ok(out)
    }
}

/// How strict an export is, and its limits.
#[derive(Clone, Debug)]
pub struct Settings {
    /// The largest relative error bound accepted (default [`DEFAULT_TOLERANCE`]).
    pub tolerance: f64,
    /// The largest absolute bound accepted for a value indistinguishable from 0 at the top
    /// precision; `None`: the tolerance times the largest magnitude in its column.
    pub zero_tolerance: Option<f64>,
    /// Stop when this passes: `(when, the limit in ms)`.
    pub deadline: Option<(std::time::Instant, u64)>,
    /// How many rows the exact route re-evaluates (evenly spread, first and last included).
    pub audit_rows: usize,
}

/// Rows evaluated together (in parallel) by the interval program.
const FAST_BLOCK: usize = 16384;

/// The default relative tolerance of an export.
pub const DEFAULT_TOLERANCE: f64 = 1e-12;

impl Default for Settings {
    fn default() -> Settings {
        Settings {
            tolerance: DEFAULT_TOLERANCE,
            zero_tolerance: None,
            deadline: None,
            audit_rows: 64,
        }
    }
}

/// A value that could not be certified within the tolerance.
#[derive(Clone, Debug, PartialEq)]
pub struct Uncertified {
    /// The row (from 0).
    pub row: usize,
    /// The column's name.
    pub column: String,
    /// The point, described.
    pub point: String,
    /// The value and its certified bound at the top precision.
    pub value: f64,
    /// Its bound.
    pub bound: f64,
}

/// Why an export writes nothing.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
pub enum ExportError {
    /// A value that cannot be evaluated (a singularity, not real).
    #[error(transparent)]
    Point(#[from] EvalError),
    /// Values whose certified error stays above the tolerance at the top precision.
    #[error("{} value(s) could not be certified within the tolerance ({tolerance:e} relative, \
        or the zero tolerance for values indistinguishable from 0) even at {} bits; first: \
        {}", .total, certify::PRECISIONS[certify::PRECISIONS.len() - 1], describe_failures(.failures))]
    Uncertified {
        /// The first few, in row order.
        failures: Vec<Uncertified>,
        /// How many in all.
        total: usize,
        /// The relative tolerance.
        tolerance: f64,
    },
    /// The exact route's enclosure and the independent one are disjoint: a defect.
    #[error(
        "INTERNAL DEFECT: at {point}, {column} is {value:e} (bound {bound:e}) by the \
        problem's texts but {exact:e} (bound {exact_bound:e}) by the exact canonical form; \
        the two routes must agree. Nothing was written. Please report this with the problem \
        file"
    )]
    Disagreement {
        /// The column.
        column: String,
        /// The point, described.
        point: String,
        /// The independent route's value and bound.
        value: f64,
        /// Its bound.
        bound: f64,
        /// The exact route's midpoint and radius.
        exact: f64,
        /// Its radius.
        exact_bound: f64,
    },
    /// A time or memory limit.
    #[error("{0}")]
    Limit(CanonError),
    /// The evaluation could not be set up.
    #[error("cannot evaluate: {0}")]
    Setup(String),
    /// The sink refused a row (an I/O error of the data file).
    #[error("cannot write the data: {0}")]
    Write(String),
}

fn describe_failures(f: &[Uncertified]) -> String {
    f.iter()
        .map(|u| {
            format!(
                "{} at {} = {:e} +- {:e}",
                u.column, u.point, u.value, u.bound
            )
        })
        .collect::<Vec<_>>()
        .join("; ")
}

/// What was learnt about one component column.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct ColumnReport {
    /// The largest certified bound on `|exact - written|` over the rows.
    pub bound: f64,
    /// The largest certified relative bound over the rows whose enclosure excludes 0.
    pub relative: f64,
    /// Rows accepted by the zero tolerance (enclosure containing 0 at the top precision).
    pub near_zero_rows: usize,
    /// The zero tolerance applied to them.
    pub zero_tolerance: f64,
    /// The highest working precision used (53: f64 intervals; 106: double-double balls;
    /// then multiprecision balls).
    pub precision_bits: u32,
}

/// What the exact route's re-evaluation found.
#[derive(Clone, Debug, Default, PartialEq, Eq)]
pub struct ExactAudit {
    /// Rows re-evaluated through the exact canonical form.
    pub rows: usize,
    /// Of those, rows where it could not enclose some value (not compared there).
    pub not_enclosed: usize,
}

/// What an evaluation learnt (its rows went to the sink given to [`evaluate`]): the column
/// names, the number of rows and, per component column, its certified bounds.
#[derive(Clone, Debug)]
pub struct Evaluated {
    /// `t, x, y, z`, then every column of every block.
    pub names: Vec<String>,
    /// How many rows were given to the sink.
    pub rows: usize,
    /// For each component column (in order, without `t, x, y, z`).
    pub columns: Vec<ColumnReport>,
    /// The second route's summary.
    pub audit: ExactAudit,
}

/// Evaluates every column of `blocks` at every point through the independent route, with
/// precision raised where needed, gives the rows (`t, x, y, z`, then the columns; several
/// rows one after the other in each call) to `sink` a block at a time as soon as they are
/// computed, and re-evaluates a sample of rows through the exact canonical
/// forms (which must agree). Only those rows are kept: memory does not grow with the points.
///
/// # Errors
///
/// A value that cannot be evaluated, values that cannot be certified, a disagreement of the
/// two routes, a limit, or an error of `sink`. The sink has then been given some rows, which
/// must not be published: the command writes them to a temporary file it removes.
#[allow(clippy::too_many_arguments)]
pub fn evaluate(
    store: &mut Store,
    numeric: &Numeric,
    blocks: &[Block],
    points: &PointSet,
    parameters: &[(String, f64)],
    sampling: &Sampling,
    settings: &Settings,
    sink: &mut dyn FnMut(&[f64]) -> std::io::Result<()>,
) -> Result<Evaluated, ExportError> {
    let quantities: Vec<Quantity> = blocks.iter().map(|b| b.quantity).collect();
    let forms: Vec<Form> = blocks
        .iter()
        .flat_map(|b| b.columns.iter().map(|c| c.form))
        .collect();
    let names: Vec<&str> = blocks
        .iter()
        .flat_map(|b| b.columns.iter().map(|c| c.name.as_str()))
        .collect();
    let ncol = forms.len();
    let exact_zero: Vec<bool> = forms.iter().map(|&f| store.is_zero(f)).collect();
    let coordinates = numeric.coordinates();
    let mut columns: Vec<String> = coordinates.to_vec();
    columns.extend(names.iter().map(|s| s.to_string()));
    let audited = audited_rows(points.coords.len(), settings.audit_rows);
    // The values and bounds of the rows the exact route will re-evaluate (the others go to
    // `sink` and are not kept).
    let mut kept: Vec<(Vec<f64>, Vec<f64>)> = Vec::with_capacity(audited.len());
    let mut stats = vec![rows::Stats::default(); ncol];
    let mut bits = vec![53u32; ncol];
    // (row, column, value, bound) of values containing 0 at the top precision.
    let mut near_zero: Vec<(usize, usize, f64, f64)> = Vec::new();
    // (row, column, value, bound) of values that cannot be certified.
    let mut rejected: Vec<(usize, usize, f64, f64)> = Vec::new();
    let tol = settings.tolerance;
    let job = rows::Job {
        quantities: &quantities,
        parameters,
        exact_zero: &exact_zero,
        tolerance: tol,
    };
    let (_, width, stride) = job.shape();
    let check = || check_limits(settings);
    // A block of rows at a time: the first pass in f64 intervals and the refinement of the
    // values it leaves too wide, both in parallel; then, in row order, the pending rows'
    // verdicts and every row to the sink.
    let mut pass = rows::FirstPass::default();
    let states = rows::BallStates::new();
    for (first_row, coords) in (0..)
        .step_by(FAST_BLOCK)
        .zip(points.coords.chunks(FAST_BLOCK))
    {
        check_limits(settings)?;
        numeric.first_pass(&job, coords, &mut pass)?;
        for (s, o) in stats.iter_mut().zip(&pass.stats) {
            s.merge(o);
        }
        let refined = numeric.refine_all(&job, coords, &mut pass.pending, &states, &check);
        for (p, r) in pass.pending.iter().zip(refined) {
            let row = first_row + p.row;
            if let Some((i, &rows::Judged::Contradicts(lo, hi))) = p
                .judged
                .iter()
                .enumerate()
                .find(|(_, j)| matches!(j, rows::Judged::Contradicts(..)))
            {
                return Err(ExportError::Disagreement {
                    column: names[i].to_string(),
                    point: points.describe(row),
                    value: lo / 2.0 + hi / 2.0,
                    bound: (hi - lo) / 2.0,
                    exact: 0.0,
                    exact_bound: 0.0,
                });
            }
            r?;
            let values = &mut pass.values[p.row * width + 4..(p.row + 1) * width];
            let bounds = &mut pass.bounds[p.row * stride..p.row * stride + ncol];
            for (i, &j) in p.judged.iter().enumerate() {
                let (x, b, good) = match j {
                    rows::Judged::Missing | rows::Judged::Contradicts(..) => {
                        return Err(ExportError::Point(EvalError {
                            row,
                            column: names[i].to_string(),
                            point: points.describe(row),
                            reason: "the value is not finite or not real there (a singularity \
                                such as r = 0, or a root or logarithm at or past its branch \
                                point)"
                                .into(),
                        }));
                    }
                    rows::Judged::Good(x, b) => (x, b, true),
                    rows::Judged::Loose(x, b) => {
                        if b >= x.abs() {
                            near_zero.push((row, i, x, b));
                        } else {
                            rejected.push((row, i, x, b));
                        }
                        (x, b, false)
                    }
                };
                values[i] = x;
                bounds[i] = b;
                stats[i].add(x, b, good);
                bits[i] = bits[i].max(p.bits[i]);
            }
        }
        while let Some(&row) = audited.get(kept.len())
            && row < first_row + coords.len()
        {
            let k = row - first_row;
            kept.push((
                pass.values[k * width..(k + 1) * width].to_vec(),
                pass.bounds[k * stride..k * stride + ncol].to_vec(),
            ));
        }
        sink(&pass.values).map_err(|e| ExportError::Write(e.to_string()))?;
    }
    let mut reports: Vec<ColumnReport> = stats
        .iter()
        .zip(&bits)
        .map(|(s, &b)| ColumnReport {
            bound: s.bound,
            relative: s.relative,
            precision_bits: b,
            ..ColumnReport::default()
        })
        .collect();
    let scale: Vec<f64> = stats.iter().map(|s| s.scale).collect();
    // Values indistinguishable from 0: judged against the zero tolerance, by default the
    // relative tolerance times the column's largest magnitude.
    let rows = points.coords.len();
    for i in 0..ncol {
        reports[i].zero_tolerance = settings.zero_tolerance.unwrap_or(tol * scale[i]);
    }
    for &(row, i, x, b) in &near_zero {
        if b <= reports[i].zero_tolerance {
            reports[i].near_zero_rows += 1;
        } else {
            rejected.push((row, i, x, b));
        }
    }
    if !rejected.is_empty() {
        let total_failures = rejected.len();
        rejected.sort_by_key(|r| r.0);
        let failures = rejected
            .iter()
            .take(5)
            .map(|&(row, i, x, b)| Uncertified {
                row,
                column: names[i].to_string(),
                point: points.describe(row),
                value: x,
                bound: b,
            })
            .collect();
        return Err(ExportError::Uncertified {
            failures,
            total: total_failures,
            tolerance: tol,
        });
    }
    let audit = audit_rows(
        store,
        coordinates,
        &forms,
        &names,
        points,
        parameters,
        sampling,
        &audited,
        &kept,
        settings,
    )?;
    // The bound of a value is its own; `reports` keeps the largest per column.
    Ok(Evaluated {
        names: columns,
        rows,
        columns: reports,
        audit,
    })
}

/// The coordinates `c` and the parameters, by name (the jets' point).
fn named_point(
    coordinates: &[String; 4],
    parameters: &[(String, f64)],
    c: [f64; 4],
) -> Vec<(String, f64)> {
    let mut p: Vec<(String, f64)> = coordinates
        .iter()
        .zip(c)
        .map(|(n, v)| (n.to_string(), v))
        .collect();
    p.extend(parameters.iter().cloned());
    p
}

fn check_limits(settings: &Settings) -> Result<(), ExportError> {
    if let Some((t, ms)) = settings.deadline
        && std::time::Instant::now() > t
    {
        return Err(ExportError::Limit(CanonError::Timeout(ms)));
    }
    if crate::budget::over_budget() {
        return Err(ExportError::Limit(CanonError::MemoryCap(
            (crate::budget::cap() >> 20) as u64,
        )));
    }
    Ok(())
}

/// The rows the exact route re-evaluates: all of them up to `n`, else `n` evenly spread.
fn audited_rows(rows: usize, n: usize) -> Vec<usize> {
    if rows <= n {
        return (0..rows).collect();
    }
    if n <= 1 {
        return vec![0];
    }
    let mut v: Vec<usize> = (0..n).map(|k| k * (rows - 1) / (n - 1)).collect();
    v.dedup();
    v
}

/// Re-evaluates sample rows through the exact canonical forms; their enclosures must meet
/// the written values' bounds.
#[allow(clippy::too_many_arguments)]
fn audit_rows(
    store: &mut Store,
    coordinates: &[String; 4],
    forms: &[Form],
    names: &[&str],
    points: &PointSet,
    parameters: &[(String, f64)],
    sampling: &Sampling,
    rows: &[usize],
    kept: &[(Vec<f64>, Vec<f64>)],
    settings: &Settings,
) -> Result<ExactAudit, ExportError> {
    let mut audit = ExactAudit::default();
    for (&row, (values, bounds)) in rows.iter().zip(kept) {
        check_limits(settings)?;
        let c = points.coords[row];
        let pt = point_at(store, coordinates, parameters, sampling, c);
        audit.rows += 1;
        let Ok(exact) = eval_forms(store, forms, &pt) else {
            audit.not_enclosed += 1;
            continue;
        };
        for (i, (m, r)) in exact.into_iter().enumerate() {
            let x = values[4 + i];
            let b = bounds[i];
            let gap = (m - x).abs();
            let slack = (r + b) * (1.0 + 1e-12) + f64::MIN_POSITIVE;
            if gap > slack {
                return Err(ExportError::Disagreement {
                    column: names[i].to_string(),
                    point: points.describe(row),
                    value: x,
                    bound: b,
                    exact: m,
                    exact_bound: r,
                });
            }
        }
    }
    Ok(audit)
}

/// The conventions of an export in the coordinates `c`, about a background when `about`:
/// those of [`conventions`], with the coordinates, metric and curvature stated for them.
#[must_use]
pub fn conventions_in(c: &[String; 4], about: bool) -> Value {
    let mut v = conventions();
    if about {
        v["coordinates"] = json!(c.join(", "));
        v["metric"] = json!("g = gbar + h to first order in h, gbar the file's [background]");
        v["component_order"] = json!(format!(
            "symmetric tensors in coordinate order: {}",
            crate::tensor::COMPONENTS
                .iter()
                .map(|&(i, j)| crate::tensor::Frame::covariant(c.clone()).index(&[i, j]))
                .collect::<Vec<_>>()
                .join(" ")
        ));
        v["riemann"] = json!(
            "MTW sign: R^a_bcd = d_c Gamma^a_bd - d_d Gamma^a_bc + Gamma^a_ce Gamma^e_bd - \
             Gamma^a_de Gamma^e_bc, R_abcd = g_ae R^e_bcd; the columns dR_abcd are its \
             first-order change"
        );
        v["field_equations"] = json!("dG_{mu nu} + Lambda h_{mu nu} = 8 pi dT_{mu nu}");
        v["index_positions"] = json!(
            "all indices down: h_{mu nu}, hbar_{mu nu}, d_rho h_{mu nu}, dR_abcd, dR_{mu nu}, \
             dG_{mu nu}, gbar_{mu nu}, T_{mu nu}"
        );
        if let Some(o) = v.as_object_mut() {
            for k in ["extrinsic_curvature", "adm", "constraints", "psi4_tetrad"] {
                o.remove(k);
            }
        }
    }
    v
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
    /// The coordinate names, time first.
    pub coordinates: &'a [String; 4],
    /// About a background: its texts (`gbar`, `Tbar`, `Lambda`), as [`background_json`]
    /// writes them; `None` about Minkowski in Cartesian coordinates.
    pub background: Option<Value>,
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
    /// The relative tolerance used.
    pub tolerance: f64,
    /// The zero tolerance given, if any.
    pub zero_tolerance: Option<f64>,
}

fn tensor_text(m: &[[Option<String>; 4]; 4], coordinates: &[String; 4]) -> Value {
    let frame = crate::tensor::Frame::covariant(coordinates.clone());
    let mut o = serde_json::Map::new();
    for (mu, nu) in crate::tensor::COMPONENTS {
        if let Some(t) = m[mu][nu].as_ref().or(m[nu][mu].as_ref()) {
            o.insert(frame.index(&[mu, nu]), json!(t));
        }
    }
    Value::Object(o)
}

/// The background of `problem` as its sidecar states it: the texts of `gbar`, `Tbar` and
/// `Lambda` as written, keyed by component; `None` about Minkowski in Cartesian coordinates.
#[must_use]
pub fn background_json(problem: &Problem) -> Option<Value> {
    let b = problem.background.as_ref()?;
    let c = &problem.coordinates;
    Some(json!({
        "metric": tensor_text(&b.g_text, c),
        "source": b.source_text.as_ref().map(|t| tensor_text(t, c)),
        "cosmological_constant": b.lambda_text.clone().unwrap_or_else(|| "0".into()),
        "note": "g = gbar + h to first order in h; every quantity is the first-order change \
            of its definition for gbar + eps h, in the file's coordinates",
    }))
}

fn points_json(p: &PointSet, coordinates: &[String; 4]) -> Value {
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
                "axes": (0..4).map(|c| (coordinates[c].clone(), axis(c))).collect::<serde_json::Map<_, _>>(),
                "order": grid_order(g.spacetime, coordinates),
                "rows": p.coords.len(),
            })
        }
    }
}

/// How the rows of a grid are ordered, in the coordinates' own names.
fn grid_order(spacetime: bool, c: &[String; 4]) -> String {
    let [t, x, y, z] = [&c[0], &c[1], &c[2], &c[3]];
    if spacetime {
        format!(
            "C order over ({t}, {x}, {y}, {z}): {z} fastest, row = ((i_{t}*N + i_{x})*N + \
             i_{y})*N + i_{z}"
        )
    } else {
        format!(
            "C order over ({x}, {y}, {z}) at the centre's {t}: {z} fastest, row = (i_{x}*N + \
             i_{y})*N + i_{z}"
        )
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
                    let r = ev.columns.get(k).cloned().unwrap_or_default();
                    k += 1;
                    json!({
                        "name": c.name,
                        "expression": store.to_text(c.form),
                        "exactly_zero": store.is_zero(c.form),
                        "error_bound": r.bound,
                        "relative_error_bound": r.relative,
                        "rows_indistinguishable_from_zero": r.near_zero_rows,
                        "zero_tolerance": r.zero_tolerance,
                        "precision_bits": r.precision_bits,
                    })
                })
                .collect();
            json!({
                "quantity": b.quantity.name(),
                "definition": if info.background.is_some() {
                    b.quantity.definition_about_background().unwrap_or(b.quantity.definition())
                } else {
                    b.quantity.definition()
                },
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
    let mut out = json!({
        "tool": { "name": "lingrav", "version": env!("CARGO_PKG_VERSION") },
        "data": {
            "file": info.data_file,
            "format": info.format.name(),
            "layout": layout(info.format),
            "rows": ev.rows,
            "columns": ev.names,
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
            "coordinates": info.coordinates,
            "background": info.background,
            "perturbation": tensor_text(info.h_text, info.coordinates),
            "source": info.source_text.map(|t| tensor_text(t, info.coordinates)),
        },
        "points": points_json(info.points, info.coordinates),
        "direction": info.direction,
        "conventions": conventions_in(info.coordinates, info.background.is_some()),
        "evaluation": {
            "method": "each value is computed from the problem's texts as written (defines \
                kept, derivatives taken on the texts' expression graph, or by Taylor-mode \
                jets about a background or where that graph cannot be built, arbitrary \
                functions through their samples) in outward-rounded interval arithmetic, never from the expanded \
                canonical form; where the certified relative error exceeds the tolerance the \
                point is computed again in double-double balls (106 bits; arithmetic, powers \
                and square roots only) and then in multiprecision balls (128, 256, 512 bits). \
                The \
                value written is the midpoint of the certified f64 bounds, so |exact - value| \
                <= error_bound. 'exact' is the column's definition at the point whose \
                coordinates and parameters are the f64 numbers written here",
            "tolerance": info.tolerance,
            "zero_tolerance": info.zero_tolerance.map_or_else(
                || json!("the tolerance times the largest magnitude in the column"),
                |z| json!(z),
            ),
            "zero_rule": "a value whose enclosure still contains 0 at 512 bits has no relative \
                error to bound; it is accepted when its absolute bound is within the zero \
                tolerance, and counted in rows_indistinguishable_from_zero",
            "largest_error_bound": ev.columns.iter().map(|c| c.bound).fold(0.0, f64::max),
            "largest_relative_error_bound": ev.columns.iter().map(|c| c.relative).fold(0.0, f64::max),
            "libm": "f64 intervals assume sin, cos, exp, log, atan accurate to 4 ulp (libm; \
                sin and cos on the expression graph from the fdlibm kernel, within one ulp, \
                for arguments up to 5e5); the multiprecision balls use their own certified \
                series",
            "second_route": {
                "method": "the exact canonical form of every column, enclosed by interval \
                    evaluation at these rows; each enclosure must meet the written value's \
                    bound, or nothing is written",
                "rows_checked": ev.audit.rows,
                "rows_not_enclosed_by_the_exact_route": ev.audit.not_enclosed,
            },
        },
        "quantities": quantities,
    });
    if info.background.is_some() {
        out["evaluation"]["about_the_background"] = json!(
            "every column comes from the whole curvature chain of gbar + eps h, evaluated at \
             the point in dual numbers (inverse, Christoffel symbols, Riemann, Ricci, Einstein \
             from their definitions; the eps part is the first-order change), from the texts \
             of gbar and h as written; the exact route (the second route) uses the Palatini \
             identity instead"
        );
    }
    out
}

#[cfg(test)]
mod tests;
