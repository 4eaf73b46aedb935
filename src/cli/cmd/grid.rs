//! `lingrav grid`: the numerical convergence test of a problem's claims.

use crate::cli::limits::LimitArgs;
use crate::cli::out::{Failure, Outcome, limit_or, print};
use crate::cli::progress::ProgressLine;
use crate::cli::report::{Format, conventions, json};
use crate::grid::{
    self, ClaimResult, Finding, GridError, GridPlan, GridReport, GridSettings, GridStatus,
};
use crate::output::AtomicFile;
use clap::Args;
use std::fmt::Write as _;
use std::path::PathBuf;
use std::time::Instant;

/// Arguments of `lingrav grid`.
#[derive(Args, Debug)]
pub struct GridArgs {
    /// The problem file (TOML).
    file: PathBuf,
    /// Points per side at each resolution, at least three, increasing (overrides [grid]
    /// points).
    #[arg(long, value_delimiter = ',', value_name = "N,N,N")]
    points: Option<Vec<usize>>,
    /// Order of accuracy of the central differences: 2, 4, 6 or 8.
    #[arg(long, default_value_t = grid::DEFAULT_ORDER, value_parser = parse_order)]
    order: u32,
    /// Centre of the 4-d box, in the file's coordinates (overrides [grid] center; default:
    /// the middle of [domain] where given).
    #[arg(
        long,
        value_delimiter = ',',
        value_name = "T,X,Y,Z",
        allow_hyphen_values = true
    )]
    center: Option<Vec<f64>>,
    /// Side of the 4-d box, the same in t, x, y and z (overrides [grid] width).
    #[arg(long, value_name = "W")]
    width: Option<f64>,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Text)]
    format: Format,
    /// Also draw residual against spacing (log-log, expected slope marked) into this SVG file
    /// (the option that draws is --svg in every command; --plot is accepted too).
    #[arg(long = "svg", alias = "plot", value_name = "FILE.svg")]
    plot: Option<PathBuf>,
    /// Replace the plot file if it exists.
    #[arg(long)]
    force: bool,
    /// Where a sample is not finite, skip every stencil that touches it (and count them)
    /// instead of stopping with an error.
    #[arg(long)]
    mask_nonfinite: bool,
    /// Start even when the estimated memory or time is above the caps (--max-memory,
    /// --time-limit); the limits still stop the run when they are reached.
    #[arg(long)]
    allow_large: bool,
    #[command(flatten)]
    limits: LimitArgs,
}

fn parse_order(s: &str) -> Result<u32, String> {
    match s.parse::<u32>() {
        Ok(n) if grid::ORDERS.contains(&n) => Ok(n),
        _ => Err(format!("the order is 2, 4, 6 or 8, not `{s}`")),
    }
}

fn input_error(message: String, help: &str) -> Failure {
    Failure::Input(miette::miette!(help = help.to_string(), "{message}"))
}

/// The grid settings, from the file's [grid] table, the flags and the defaults, and which of
/// them are defaults. With a [domain], the default centre is its middle and the default side
/// fits inside it, and the box must lie inside it.
fn settings(
    a: &GridArgs,
    problem: &crate::problem::Problem,
) -> Result<(GridSettings, Vec<&'static str>), Failure> {
    let spec = problem.grid.as_ref();
    let domain = problem.domain.as_ref();
    let mut s = GridSettings::from_spec(spec, a.order);
    let mut defaults = Vec::new();
    let given = |f: fn(&crate::problem::GridSpec) -> bool| spec.is_some_and(f);
    if let Some(p) = &a.points {
        s.points.clone_from(p);
    } else if !given(|g| g.points.is_some()) {
        defaults.push("points");
    }
    if let Some(c) = &a.center {
        let c: [f64; 4] = c.as_slice().try_into().map_err(|_| {
            input_error(
                format!("--center needs four numbers t,x,y,z, not {}", c.len()),
                "e.g. --center 0.3,0.4,0.5,0.6 (write --center=-1,0,0,2 for a negative t)",
            )
        })?;
        s.center = c;
    } else if !given(|g| g.center.is_some()) {
        defaults.push("center");
        s.center = GridSettings::default_center(domain);
    }
    if let Some(w) = a.width {
        s.width = w;
    } else if !given(|g| g.width.is_some()) {
        defaults.push("width");
        s.width = GridSettings::default_width(&s.center, domain);
    }
    s.mask_nonfinite = a.mask_nonfinite;
    s.check_domain(domain, &problem.coordinates)
        .and_then(|()| s.validate())
        .map_err(|e| {
            input_error(
                e.to_string(),
                "set the grid in the file's [grid] table (center, width, points) or with \
                 --center, --width, --points; e.g. --order 8 --points 12,24,48",
            )
        })?;
    Ok((s, defaults))
}

fn size(bytes: u64) -> String {
    let b = bytes as f64;
    if b >= (1u64 << 30) as f64 {
        format!("{:.1} GiB", b / (1u64 << 30) as f64)
    } else {
        format!("{:.0} MiB", (b / (1u64 << 20) as f64).ceil())
    }
}

fn duration(seconds: f64) -> String {
    if seconds >= 3600.0 {
        format!("{:.1} h", seconds / 3600.0)
    } else if seconds >= 60.0 {
        format!("{:.0} min", seconds / 60.0)
    } else {
        format!("{seconds:.1} s")
    }
}

/// Refuses a run whose estimated memory or time is above the caps, with the estimate.
fn check_estimate(plan: &GridPlan, settings: &GridSettings, a: &GridArgs) -> Result<(), Failure> {
    let est = plan.estimate(settings);
    let cap = crate::budget::cap() as u64;
    let time_cap = a.limits.time_limit() as f64 / 1000.0;
    if a.allow_large || (est.bytes <= cap && est.seconds <= time_cap) {
        return Ok(());
    }
    let points: Vec<String> = settings.points.iter().map(ToString::to_string).collect();
    Err(Failure::GaveUp(format!(
        "too large: the grid {} would take about {} samples, {} of memory and {} of work \
         (estimated before starting); the caps are {} (--max-memory) and {} (--time-limit). \
         Use fewer points per side, or --allow-large (with limits that fit) to run it anyway",
        points.join(","),
        est.samples,
        size(est.bytes),
        duration(est.seconds),
        size(cap),
        duration(time_cap),
    )))
}

/// `lingrav grid`.
pub fn run(a: GridArgs) -> Result<Outcome, Failure> {
    // Plan: read and build the file, resolve the grid, compile, check the plot's folder.
    let mut problem = a.limits.load(&a.file)?;
    if let Some(n) = problem.claims.as_ref().and_then(|c| c.far_zone_order) {
        // A grid measures whether components vanish on a box; it says nothing about their
        // falloff at fixed t - r.
        return Err(input_error(
            format!(
                "the file claims its components only as O(1/r^{n}) far out (far_zone_order),                  which a grid on a box does not measure"
            ),
            "check it with `lingrav check`, or remove `far_zone_order` to check on a grid that              the components vanish",
        ));
    }
    let (settings, defaults) = settings(&a, &problem)?;
    let plot = match &a.plot {
        Some(p) => Some(
            AtomicFile::create(p, a.force)
                .map_err(|e| Failure::Input(miette::miette!(help = e.help(), "--svg {e}")))?,
        ),
        None => None,
    };
    let plan = GridPlan::for_problem(&mut problem).map_err(|e| {
        limit_or(&e.to_string(), || {
            let help = format!(
                "every symbol needs a value: coordinates {}, parameters from [parameters], \
                 functions with a sample in [functions]",
                problem.coordinates.join(", ")
            );
            input_error(e.to_string(), &help)
        })
    })?;

    check_estimate(&plan, &settings, &a)?;

    // Compute.
    // Sampling cannot return early, so the time limit ends the process from the progress
    // callback, after every slab: "undecided: too slow", exit 3, the plot's temporary removed.
    let deadline = problem.store.limits.deadline;
    let mut line = ProgressLine::new();
    let result = grid::run(&plan, &settings, &mut |p| {
        if let Some((t, ms)) = deadline
            && Instant::now() > t
        {
            line.finish();
            crate::cli::limits::stop_now(&format!(
                "too slow: stopped sampling after the time limit of {ms} ms \
                     (--time-limit raises it)"
            ));
        }
        line.update(p);
    });
    line.finish();
    let what = if problem.background.is_some() {
        "the fields"
    } else {
        "the perturbation"
    };
    let report = result.map_err(|e| match &e {
        GridError::NonFinite { .. } => input_error(
            format!("cannot sample {what}: {e}"),
            "move the box away from the singular point ([grid] center and width, or --center, \
             --width), or pass --mask-nonfinite to skip (and count) every stencil that touches it",
        ),
        GridError::NotReal { .. } => input_error(
            format!("cannot sample {what}: {e}"),
            "a component with a complex value (a root or logarithm of a negative number) has no \
             real grid samples there; move the box or correct the expression",
        ),
        _ => input_error(e.to_string(), "see lingrav grid --help"),
    })?;

    let label = a.file.display().to_string();
    let text = match a.format {
        Format::Text => render_text(&label, problem.name.as_deref(), &report, &defaults),
        Format::Json => render_json(&label, problem.name.as_deref(), &report, &defaults),
    };
    if let Some(mut file) = plot {
        let title = match problem.name.as_deref() {
            Some(n) => format!("{label}: {n} (order {})", settings.order),
            None => format!("{label} (order {})", settings.order),
        };
        let svg = grid::plot::svg(&report, &title);
        file.write_all(svg.as_bytes())?;
        file.commit()?;
    }
    print(&text)?;
    Ok(match report.overall() {
        GridStatus::Holds => Outcome::Holds,
        GridStatus::Fails => Outcome::Fails,
        GridStatus::Inconclusive | GridStatus::Unresolved => Outcome::Undecided,
    })
}

fn word(c: &ClaimResult, has_claims: bool) -> String {
    match (has_claims, c.asserted) {
        (true, Some(_)) => c.status.label().to_string(),
        (true, None) => format!("({})", c.status.label()),
        (false, _) => match c.status {
            GridStatus::Holds => "yes".into(),
            GridStatus::Fails => "no".into(),
            GridStatus::Inconclusive => "unclear".into(),
            GridStatus::Unresolved => "unresolved".into(),
        },
    }
}

/// A coordinate as a person would write it: the shortest decimal within 1e-12 of `v`
/// relative (a midpoint (0.2 + 2.9)/2 reads 1.55, not 1.5499999999999998).
fn coord(v: f64) -> String {
    if v == 0.0 || !v.is_finite() {
        return format!("{v}");
    }
    for digits in 1..17 {
        if let Ok(r) = format!("{:.*e}", digits - 1, v).parse::<f64>()
            && (r - v).abs() <= 1e-12 * v.abs()
        {
            return format!("{r}");
        }
    }
    format!("{v}")
}

fn num(v: f64) -> String {
    if v == 0.0 {
        "0".into()
    } else {
        format!("{v:.3e}")
    }
}

fn wrap(text: &str, indent: usize, width: usize) -> String {
    let mut out = String::new();
    let mut line = String::new();
    for w in text.split_whitespace() {
        if !line.is_empty() && indent + line.len() + 1 + w.len() > width {
            let _ = writeln!(out, "{:indent$}{line}", "");
            line.clear();
        }
        if !line.is_empty() {
            line.push(' ');
        }
        line.push_str(w);
    }
    if !line.is_empty() {
        let _ = writeln!(out, "{:indent$}{line}", "");
    }
    out
}

fn render_text(label: &str, name: Option<&str>, r: &GridReport, defaults: &[&str]) -> String {
    let s0 = &r.settings;
    let mut s = String::new();
    match name {
        Some(n) => {
            let _ = writeln!(s, "{label}: {n}");
        }
        None => {
            let _ = writeln!(s, "{label}");
        }
    }
    let pts: Vec<String> = s0.points.iter().map(usize::to_string).collect();
    let _ = writeln!(
        s,
        "convergence test on grids (numerical evidence, not proof)"
    );
    let _ = writeln!(
        s,
        "  box: centre ({}) = ({}, {}, {}, {}), side {}; {} points per side",
        r.coordinates.join(", "),
        coord(s0.center[0]),
        coord(s0.center[1]),
        coord(s0.center[2]),
        coord(s0.center[3]),
        coord(s0.width),
        pts.join(", ")
    );
    let _ = writeln!(
        s,
        "  derivatives: central differences of order {}; residual = largest |component| over \
         the\n  interior of the coarsest grid (the same region at every resolution)",
        s0.order
    );
    if r.background {
        let _ = writeln!(
            s,
            "  about the background: at every interior point the claims' components come from \
             the\n  full curvature chain (dual numbers) on the differenced samples of gbar and h"
        );
    }
    if !defaults.is_empty() {
        let _ = writeln!(
            s,
            "  (default {}: set in [grid] or with --{})",
            defaults.join(", "),
            defaults.join(", --")
        );
    }
    if !r.has_claims {
        let _ = writeln!(
            s,
            "  (no [claims] table: reporting which properties the grids support)"
        );
    }
    for l in &r.levels {
        if l.masked > 0 {
            let _ = writeln!(
                s,
                "  masked: {} non-finite sample values at {} points per side",
                l.masked, l.points
            );
        }
    }
    for c in &r.claims {
        let _ = writeln!(s);
        let _ = writeln!(s, "  {:<13}{}", word(c, r.has_claims), c.heading);
        if c.rows.is_empty() {
            // Not checked on grids: only the reason.
            s.push_str(&wrap(&c.explanation, 15, 96));
            continue;
        }
        let _ = writeln!(
            s,
            "  {:13}{:>6}  {:>10}  {:>10}  {:>10}  {:>6}",
            "", "points", "spacing", "residual", "floor", "order"
        );
        for (i, (row, l)) in c.rows.iter().zip(&r.levels).enumerate() {
            let order = match i.checked_sub(1).and_then(|j| c.orders[j]) {
                Some(p) => format!("{p:.2}"),
                None if i == 0 => String::new(),
                None => "-".into(),
            };
            let skipped = if row.skipped > 0 {
                format!("  ({} points skipped)", row.skipped)
            } else {
                String::new()
            };
            let _ = writeln!(
                s,
                "  {:13}{:>6}  {:>10.3e}  {:>10}  {:>10.1e}  {:>6}{skipped}",
                "",
                l.points,
                l.spacing,
                num(row.residual),
                row.floor,
                order
            );
        }
        s.push_str(&wrap(&c.explanation, 15, 96));
    }
    let counted: Vec<&ClaimResult> = r
        .claims
        .iter()
        .filter(|c| c.asserted.is_some() || !r.has_claims)
        .collect();
    let by = |st: GridStatus| counted.iter().filter(|c| c.status == st).count();
    let _ = writeln!(s);
    let summary = match (r.has_claims, r.overall()) {
        (true, GridStatus::Holds) => format!("every claim holds ({} checked)", counted.len()),
        (true, GridStatus::Fails) => {
            format!("{} of {} claims fail", by(GridStatus::Fails), counted.len())
        }
        (true, GridStatus::Inconclusive) => format!(
            "{} of {} claims inconclusive, none fails",
            by(GridStatus::Inconclusive),
            counted.len()
        ),
        (true, GridStatus::Unresolved) => format!(
            "{} of {} claims not resolvable at the round-off floor, none fails",
            by(GridStatus::Unresolved),
            counted.len()
        ),
        (false, GridStatus::Inconclusive | GridStatus::Unresolved) => {
            "some properties are unclear".into()
        }
        (false, _) => "every property decided".into(),
    };
    let _ = writeln!(s, "result (numerical evidence): {summary}");
    s
}

fn finite(v: f64) -> serde_json::Value {
    if v.is_finite() {
        serde_json::json!(v)
    } else {
        serde_json::Value::Null
    }
}

fn render_json(label: &str, name: Option<&str>, r: &GridReport, defaults: &[&str]) -> String {
    let claims: Vec<serde_json::Value> = r
        .claims
        .iter()
        .map(|c| {
            let finding = match &c.finding {
                _ if c.rows.is_empty() => "not_checked",
                Finding::Converges { .. } => "converges",
                Finding::AtFloor => "within_roundoff",
                Finding::Stalls { .. } => "stalls",
                Finding::Unclear(_) => "unclear",
            };
            serde_json::json!({
                "key": c.key,
                "title": c.title,
                "asserted": c.asserted,
                "status": c.status.label(),
                "finding": finding,
                "explanation": c.explanation,
                "observed_orders": c.orders.iter().map(|o| o.map_or(serde_json::Value::Null, finite)).collect::<Vec<_>>(),
                "levels": c.rows.iter().zip(&r.levels).map(|(row, l)| serde_json::json!({
                    "points": l.points,
                    "spacing": finite(l.spacing),
                    "residual": finite(row.residual),
                    "roundoff_floor": finite(row.floor),
                    "largest_component": row.worst.as_ref().map(|w| w.component.clone()),
                    "largest_at": row.worst.as_ref().map(|w| w.point.to_vec()),
                    "skipped_points": row.skipped,
                })).collect::<Vec<_>>(),
            })
        })
        .collect();
    let s0 = &r.settings;
    let mut j = serde_json::json!({
        "file": label,
        "name": name,
        "method": "convergence test on grids (numerical evidence, not proof)",
        "grid": {
            "center": s0.center.to_vec(),
            "width": s0.width,
            "order": s0.order,
            "points": s0.points,
            "spacings": r.levels.iter().map(|l| l.spacing).collect::<Vec<_>>(),
            "interior_points": r.levels.iter().map(|l| l.interior).collect::<Vec<_>>(),
            "masked_samples": r.levels.iter().map(|l| l.masked).collect::<Vec<_>>(),
            "defaults": defaults,
        },
        "sample_errors": r.sample_errors.iter().map(|(n, e)| (n.clone(), finite(*e))).collect::<serde_json::Map<_, _>>(),
        "has_claims": r.has_claims,
        "result": r.overall().label(),
        "claims": claims,
        "conventions": conventions(&r.coordinates),
    });
    if r.background {
        // Only about a background, so that flat reports stay as they were.
        j["grid"]["coordinates"] = serde_json::json!(r.coordinates);
    }
    json(&j)
}

#[cfg(test)]
mod tests {
    use super::coord;

    #[test]
    fn coordinates_print_as_written() {
        assert_eq!(coord((0.2 + 2.9) / 2.0), "1.55");
        assert_eq!(coord(21.5), "21.5");
        assert_eq!(coord(0.3), "0.3");
        assert_eq!(coord(-4.0), "-4");
        assert_eq!(coord(0.0), "0");
        assert_eq!(coord(1.0 / 3.0), "0.333333333333");
        assert_eq!(coord(2.5e-9), "0.0000000025");
    }
}
