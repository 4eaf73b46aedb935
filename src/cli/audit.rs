//! How the independent audit is shown: its points and enclosures in text and JSON, and the
//! audit of a printed form (`simplify`, `diff`). The audit itself is in the library
//! ([`crate::check::verdicts::audit_verdicts`], [`crate::audit::expr`]); it only takes
//! away: a contradicted proof is reported nonzero with an `INTERNAL DEFECT` line, an
//! unconfirmed witness becomes undecided.

use super::out::Outcome;
use super::report::point_json;
use crate::audit::expr::{
    Evaluated, Expressions, Finding, Route, audit_proofs, point_text, seeded,
};
use crate::interval::Interval;
use clap::Args;
use std::fmt::Write as _;

/// The seed of the audit points of `simplify` and `diff` (that of `zero`'s witnesses).
pub const DEFAULT_SEED: u64 = 0x5eed_1a96_7a7e;

/// Options of the audit of a printed form (`simplify`, `diff`).
/// `--format` and `--audit-points`, flattened into the commands whose verdicts are audited
/// at seeded points (`zero`, `compare`, `gauge`, `project`).
#[derive(Args, Debug, Clone, Copy)]
pub struct AuditedFormat {
    /// Output format.
    #[arg(long, value_enum, default_value_t = crate::cli::report::Format::Text)]
    pub format: crate::cli::report::Format,
    /// Also print the points of the independent audit (and its enclosures there).
    #[arg(long)]
    pub audit_points: bool,
}

#[derive(Args, Debug)]
pub struct FormAuditArgs {
    /// Seed of the points where the printed form is checked against the input.
    #[arg(long, default_value_t = DEFAULT_SEED)]
    pub seed: u64,
    /// Also print the points of the independent audit and its enclosures there.
    #[arg(long)]
    pub audit_points: bool,
}

/// One line per point evaluated by the audit (`--audit-points`).
pub fn points_text(findings: &[&Finding]) -> String {
    let mut s = String::new();
    let mut seen: Vec<&Evaluated> = Vec::new();
    for f in findings {
        for e in f.evaluated() {
            if !seen.contains(&e) {
                seen.push(e);
            }
        }
    }
    if seen.is_empty() {
        s.push_str("audit points: none evaluated\n");
    } else {
        s.push_str("audit points:\n");
        for e in seen {
            let _ = writeln!(s, "  {e}");
        }
    }
    s
}

/// The distinct points evaluated by the audits of several verdicts (`--audit-points` of the
/// commands with many components; the enclosures are in the JSON of each verdict).
fn distinct_points<'f>(findings: &[&'f Finding]) -> Vec<&'f [(String, f64)]> {
    let mut out: Vec<&[(String, f64)]> = Vec::new();
    for f in findings {
        for e in f.evaluated() {
            if !out.contains(&e.point.as_slice()) {
                out.push(&e.point);
            }
        }
    }
    out
}

/// `audit points:` and one line per distinct point.
pub fn point_lines(findings: &[&Finding]) -> String {
    let points = distinct_points(findings);
    let mut s = format!("audit points ({}):\n", points.len());
    for p in points {
        let _ = writeln!(s, "  {}", point_text(p));
    }
    s
}

/// The distinct points as JSON objects.
pub fn points_json(findings: &[&Finding]) -> Vec<serde_json::Value> {
    distinct_points(findings)
        .into_iter()
        .map(point_json)
        .collect()
}

/// A finding as JSON: label, method line, seed and the points with their enclosures.
pub fn audit_json(f: &Finding, seed: u64) -> serde_json::Value {
    serde_json::json!({
        "result": f.label(),
        "method": f.method(seed),
        "seed": seed,
        "points": f.evaluated().iter().map(|e| evaluated_json(e)).collect::<Vec<_>>(),
    })
}

fn evaluated_json(e: &Evaluated) -> serde_json::Value {
    serde_json::json!({
        "point": point_json(&e.point),
        "enclosure": [e.value.lo, e.value.hi],
        "precision": match e.value.bits { Some(b) => format!("{b}-bit balls"), None => "f64 intervals".into() },
    })
}

/// The audit of a printed form: the input (its jet derivative by `by`) and the printed plain
/// text evaluated independently at seeded points must agree. Returns the lines to print and
/// the outcome (a disagreement is an internal defect: exit 1).
pub fn form_audit(
    a: &FormAuditArgs,
    input: &str,
    printed: &str,
    by: &[&str],
    latex: bool,
) -> (String, Outcome, Finding) {
    let (what, against) = if by.is_empty() {
        ("the printed form", "the input")
    } else {
        ("the printed derivative", "the jet derivative of the input")
    };
    let route = Expressions::new(input, Some(printed), by, &[]);
    let finding = match &route {
        Ok(r) => audit_proofs(r, &[0], a.seed).remove(0),
        Err(e) => Finding::NotAudited(format!("{what} cannot be read back: {e}")),
    };
    let plain = if latex {
        " (in its plain-text form)"
    } else {
        ""
    };
    let (mut s, outcome) = match &finding {
        Finding::ProofConsistent { points, skipped } => {
            let mut s = format!(
                "audited: agrees{plain} with an independent evaluation of {against} at {} \
                 (seed {:#x})",
                seeded(points.len()),
                a.seed
            );
            if *skipped > 0 {
                let _ = write!(s, "; {skipped} other(s) could not be evaluated");
            }
            (s + "\n", Outcome::Holds)
        }
        Finding::ProofContradicted(e) => {
            let values = route
                .as_ref()
                .ok()
                .and_then(|r| r.values::<Interval>(&e.point, &()).ok())
                .unwrap_or_default();
            let show = |i: usize| {
                values
                    .get(i)
                    .copied()
                    .flatten()
                    .map_or("not evaluable".to_string(), |v| v.to_string())
            };
            (
                format!(
                    "INTERNAL DEFECT: {what}{plain} disagrees with an independent evaluation of \
                     {against} at {}: {against} is in {}, {what} in {}. Please report this \
                     (input and command) as a bug\n",
                    point_text(&e.point),
                    show(1),
                    show(2)
                ),
                Outcome::Fails,
            )
        }
        other => (format!("{}\n", other.method(a.seed)), Outcome::Holds),
    };
    if a.audit_points {
        s.push_str(&points_text(&[&finding]));
    }
    (s, outcome, finding)
}

/// The line that reports a detector audit's first disagreement (`route`: what gave the direct
/// value), or `None` when the routes agree.
pub fn defect_line(r: &crate::detector::audit::Report, route: &str) -> Option<String> {
    let row = r.first_defect()?;
    let (lo, hi) = row.enclosure.unwrap_or((f64::NAN, f64::NAN));
    Some(format!(
        "INTERNAL DEFECT: {} at {}: {route} gives {:e}, the printed exact form evaluated by \
         the jet route is in [{lo:e}, {hi:e}]. Please report this as a bug",
        row.quantity,
        crate::audit::expr::point_text(&row.point),
        row.direct
    ))
}

/// The comparisons of a detector audit (`antenna`, `response`) as JSON rows.
pub fn comparison_rows(rows: &[crate::detector::audit::Row]) -> Vec<serde_json::Value> {
    rows.iter()
        .map(|r| {
            serde_json::json!({
                "quantity": r.quantity,
                "point": point_json(&r.point),
                "f64": r.direct,
                "enclosure": r.enclosure.map(|(lo, hi)| [lo, hi]),
                "agrees": r.agrees(),
            })
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A printed form that is wrong (simulated: a wrong derivative or simplification handed
    /// to the audit) is an internal defect, exit 1, with both enclosures.
    #[test]
    fn issue9_a_wrong_printed_form_is_an_internal_defect() {
        let args = FormAuditArgs {
            seed: DEFAULT_SEED,
            audit_points: true,
        };
        let (text, outcome, _) = form_audit(&args, "x^3*y", "2*x^2*y", &["x"], false);
        assert_eq!(outcome, Outcome::Fails, "{text}");
        assert!(
            text.starts_with("INTERNAL DEFECT: the printed derivative disagrees"),
            "{text}"
        );
        assert!(text.contains("audit points:\n  at "), "{text}");
        let (text, outcome, _) = form_audit(&args, "2*sin(x)*cos(x)", "sin(x)", &[], false);
        assert_eq!(outcome, Outcome::Fails, "{text}");
        assert!(
            text.starts_with("INTERNAL DEFECT: the printed form"),
            "{text}"
        );
        // The right ones pass.
        let (text, outcome, _) = form_audit(&args, "x^3*y", "3*x^2*y", &["x"], false);
        assert_eq!(outcome, Outcome::Holds, "{text}");
        assert!(text.starts_with("audited: agrees with"), "{text}");
        // A printed form that cannot be read back is said so.
        let (text, outcome, _) = form_audit(&args, "x", "x +", &[], false);
        assert_eq!(outcome, Outcome::Holds, "{text}");
        assert!(
            text.starts_with("not audited: the printed form cannot be read back"),
            "{text}"
        );
    }
}
