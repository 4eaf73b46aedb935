//! The expression commands: `zero`, `simplify`, `diff`, and the audit helpers every
//! verdict-printing command shares.
//!
//! Every verdict and every printed form is audited by the independent route
//! ([`lingrav::audit::expr`]): the texts are parsed again and evaluated with certified jets.
//! A proof of zero must contain 0 at seeded points, a witness must be certified again (f64
//! intervals, then balls), and a printed form must agree with the input. The audit only
//! takes away: a contradicted proof is reported nonzero with an `INTERNAL DEFECT` line, an
//! unconfirmed witness becomes undecided.

use super::out::{Failure, Outcome, gave_up, print, with_source};
use clap::{Args, ValueEnum};
use lingrav::audit::AuditError;
use lingrav::audit::expr::{
    Evaluated, Expressions, Finding, Route, audit_proofs, audit_witness, complete, point_text,
    seeded,
};
use lingrav::canon::{CanonError, Form, Names, Store};
use lingrav::interval::{CInterval, Interval};
use lingrav::zero::{Sampling, Verdict, Witness, decide};
use std::fmt::Write as _;

/// Output format.
#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum Format {
    /// Readable text.
    Text,
    /// JSON for scripts.
    Json,
}

/// Limits of the expression commands: 20 s of algebra by default.
pub type LimitArgs = super::limits::LimitArgs<20_000>;

/// Arguments of `lingrav zero`.
#[derive(Args, Debug)]
pub struct ZeroArgs {
    /// The expression.
    #[arg(allow_hyphen_values = true)]
    expr: String,
    /// A second expression: test whether EXPR - OTHER is zero.
    #[arg(allow_hyphen_values = true)]
    other: Option<String>,
    /// Seed of the random witness points.
    #[arg(long, default_value_t = 0x5eed_1a96_7a7e)]
    seed: u64,
    /// How many random points to try for a certified nonzero witness.
    #[arg(long, default_value_t = 32, value_name = "N")]
    points: usize,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Text)]
    format: Format,
    /// Also print the points of the independent audit and its enclosures there.
    #[arg(long)]
    audit_points: bool,
    #[command(flatten)]
    limits: LimitArgs,
}

/// The seed of the audit points of `simplify` and `diff` (that of `zero`'s witnesses).
const DEFAULT_SEED: u64 = 0x5eed_1a96_7a7e;

/// Options of the audit of a printed form (`simplify`, `diff`).
#[derive(Args, Debug)]
pub struct FormAuditArgs {
    /// Seed of the points where the printed form is checked against the input.
    #[arg(long, default_value_t = DEFAULT_SEED)]
    seed: u64,
    /// Also print the points of the independent audit and its enclosures there.
    #[arg(long)]
    audit_points: bool,
}

/// Arguments of `lingrav simplify`.
#[derive(Args, Debug)]
pub struct SimplifyArgs {
    /// The expression.
    #[arg(allow_hyphen_values = true)]
    expr: String,
    /// Print LaTeX instead of plain text.
    #[arg(long)]
    latex: bool,
    #[command(flatten)]
    audit: FormAuditArgs,
    #[command(flatten)]
    limits: LimitArgs,
}

/// Arguments of `lingrav diff`.
#[derive(Args, Debug)]
pub struct DiffArgs {
    /// The expression.
    #[arg(allow_hyphen_values = true)]
    expr: String,
    /// The variables to differentiate by, in order (`x x` is the second derivative).
    #[arg(required = true, num_args = 1.., value_name = "VAR")]
    vars: Vec<String>,
    /// Print LaTeX instead of plain text.
    #[arg(long)]
    latex: bool,
    #[command(flatten)]
    audit: FormAuditArgs,
    #[command(flatten)]
    limits: LimitArgs,
}

/// Parses and builds one command-line expression, with errors pointing into it. A size or
/// time limit reached while building is not bad input: it ends the command as undecided.
fn build_arg(store: &mut Store, text: &str, label: &str) -> Result<Form, Failure> {
    let e = lingrav::parse::parse(text).map_err(|e| with_source(e, label, text))?;
    store.build(&e, &Names::free()).map_err(|e| {
        if e.limit {
            gave_up(&e.cause.clone().unwrap_or_else(|| {
                super::limits::timeout_if_past(&store.limits)
                    .unwrap_or(CanonError::TooLarge(store.limits.max_terms))
            }))
        } else {
            Failure::Input(with_source(e, label, text))
        }
    })
}

fn limit_failure(e: lingrav::canon::CanonError) -> Verdict {
    lingrav::zero::undecided_from(&e)
}

/// `lingrav zero`.
pub fn zero(a: ZeroArgs) -> Result<Outcome, Failure> {
    let mut st = a.limits.store();
    let f = build_arg(&mut st, &a.expr, "expression")?;
    let diff = match &a.other {
        Some(o) => {
            let g = build_arg(&mut st, o, "second expression")?;
            st.sub(f, g)
        }
        None => Ok(f),
    };
    let sampling = Sampling {
        seed: a.seed,
        points: a.points,
        ..Sampling::default()
    };
    let (verdict, residual) = match diff {
        Ok(d) => (decide(&mut st, d, &sampling), Some(d)),
        Err(e) => (limit_failure(e), None),
    };
    let residual_text = residual.filter(|d| !st.is_zero(*d)).map(|d| st.to_text(d));
    // The zero test numbers the generic samples of its residual's functions by sorted name;
    // the audit certifies a witness again with the same samples.
    let functions: Vec<String> = residual
        .map(|d| st.functions_used(d).iter().map(|f| f.to_string()).collect())
        .unwrap_or_default();
    let (text, outcome) = zero_report(&a, verdict, residual_text, &functions);
    print(&text)?;
    Ok(outcome)
}

/// The audited verdict of `zero` and its report. `verdict` is the exact route's.
fn zero_report(
    a: &ZeroArgs,
    verdict: Verdict,
    residual_text: Option<String>,
    functions: &[String],
) -> (String, Outcome) {
    let route = Expressions::new(&a.expr, a.other.as_deref(), &[], functions);
    let mut verdicts = [verdict];
    let finding = audit_verdicts(&route, &mut verdicts, |_| Some(0), a.seed).remove(0);
    let [verdict] = verdicts;
    let independent = matches!(finding, Finding::ProofContradicted(_));
    let text = match a.format {
        Format::Text => {
            let mut s = match &verdict {
                Verdict::Zero => "zero: proved (the canonical form cancels to 0)\n".to_string(),
                Verdict::Nonzero(w) if independent => format!(
                    "nonzero: certified by the independent evaluation {w} (seed {:#x})\n",
                    w.seed
                ),
                Verdict::Nonzero(w) => format!("nonzero: certified {w} (seed {:#x})\n", w.seed),
                Verdict::Undecided(why) => format!("undecided: {why}\n"),
            };
            let _ = writeln!(s, "{}", finding.method(a.seed));
            if let Some(r) = &residual_text {
                let _ = writeln!(s, "canonical form: {r}");
            }
            if a.audit_points {
                s.push_str(&points_text(&[&finding]));
            }
            s
        }
        Format::Json => {
            let mut j = serde_json::json!({ "verdict": verdict.label() });
            match &verdict {
                Verdict::Zero => j["method"] = "canonical form cancels to 0".into(),
                Verdict::Nonzero(w) => {
                    j["witness"] = serde_json::json!({
                        "point": w.point.iter().map(|(n, v)| (n.clone(), serde_json::json!(v))).collect::<serde_json::Map<_, _>>(),
                        "value": [w.value.re.mid(), w.value.im.mid()],
                        "enclosure": { "re": [w.value.re.lo(), w.value.re.hi()], "im": [w.value.im.lo(), w.value.im.hi()] },
                        "seed": w.seed,
                        "route": if independent { "independent" } else { "exact" },
                    })
                }
                Verdict::Undecided(why) => j["reason"] = why.clone().into(),
            }
            if let Some(r) = &residual_text {
                j["canonical_form"] = r.clone().into();
            }
            j["audit"] = audit_json(&finding, a.seed);
            format!("{}\n", serde_json::to_string_pretty(&j).expect("json"))
        }
    };
    (text, outcome_of(&verdict))
}

fn outcome_of(v: &Verdict) -> Outcome {
    match v {
        Verdict::Zero => Outcome::Holds,
        Verdict::Nonzero(_) => Outcome::Fails,
        Verdict::Undecided(_) => Outcome::Undecided,
    }
}

// ----- the audit, shared by the verdict-printing commands ----------------------------------

/// The exact verdicts `verdicts` audited by `route` (`index` maps a verdict's position to the
/// route's quantity; `None`: no independent formula) and changed as the findings demand: a
/// contradicted proof becomes nonzero with the independent witness, an unconfirmed witness
/// undecided. Proofs share seeded points; each witness is certified at its own point.
pub(super) fn audit_verdicts<R: Route>(
    route: &Result<R, AuditError>,
    verdicts: &mut [Verdict],
    index: impl Fn(usize) -> Option<usize>,
    seed: u64,
) -> Vec<Finding> {
    let unavailable = |v: &Verdict, why: String| match v {
        Verdict::Zero => Finding::NotAudited(why),
        Verdict::Nonzero(_) => Finding::WitnessUnconfirmed {
            reason: why,
            at: None,
        },
        Verdict::Undecided(_) => Finding::Skipped,
    };
    let findings: Vec<Finding> = match route {
        Err(e) => verdicts
            .iter()
            .map(|v| {
                unavailable(
                    v,
                    format!("the independent route cannot read the texts: {e}"),
                )
            })
            .collect(),
        Ok(route) => {
            let proofs: Vec<(usize, usize)> = (0..verdicts.len())
                .filter(|&i| matches!(verdicts[i], Verdict::Zero))
                .filter_map(|i| Some((i, index(i)?)))
                .collect();
            let which: Vec<usize> = proofs.iter().map(|&(_, q)| q).collect();
            let mut proved: Vec<Option<Finding>> = vec![None; verdicts.len()];
            for (&(i, _), f) in proofs.iter().zip(audit_proofs(route, &which, seed)) {
                proved[i] = Some(f);
            }
            verdicts
                .iter()
                .enumerate()
                .map(|(i, v)| match (v, index(i)) {
                    (_, None) => unavailable(v, "no independent formula for it".into()),
                    (Verdict::Zero, Some(_)) => proved[i].take().unwrap_or(Finding::Skipped),
                    (Verdict::Nonzero(w), Some(q)) => {
                        let point = complete(route, &w.point, seed);
                        audit_witness(route, q, &point, &w.value, seed)
                    }
                    (Verdict::Undecided(_), Some(_)) => Finding::Skipped,
                })
                .collect()
        }
    };
    for (v, f) in verdicts.iter_mut().zip(&findings) {
        apply(v, f, seed);
    }
    findings
}

/// What a finding does to a verdict: only ever takes a proof or a witness away.
fn apply(v: &mut Verdict, f: &Finding, seed: u64) {
    match f {
        Finding::ProofContradicted(e) => {
            *v = match e.value.interval() {
                Some(iv) => Verdict::Nonzero(Witness {
                    point: e.point.clone(),
                    value: CInterval::from_real(iv),
                    seed,
                }),
                // f64 interval bounds are finite; never "zero" in any case.
                None => Verdict::Undecided(f.method(seed)),
            };
        }
        Finding::WitnessUnconfirmed { reason, .. } => {
            *v = Verdict::Undecided(format!(
                "not reduced to zero, and the exact route's witness was not confirmed by the \
                 independent evaluation: {reason}"
            ));
        }
        _ => {}
    }
}

/// One line per point evaluated by the audit (`--audit-points`).
pub(super) fn points_text(findings: &[&Finding]) -> String {
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
pub(super) fn point_lines(findings: &[&Finding]) -> String {
    let points = distinct_points(findings);
    let mut s = format!("audit points ({}):\n", points.len());
    for p in points {
        let _ = writeln!(s, "  {}", point_text(p));
    }
    s
}

/// The distinct points as JSON objects.
pub(super) fn points_json(findings: &[&Finding]) -> Vec<serde_json::Value> {
    distinct_points(findings)
        .into_iter()
        .map(|p| {
            serde_json::Value::Object(
                p.iter()
                    .map(|(n, v)| (n.clone(), serde_json::json!(v)))
                    .collect(),
            )
        })
        .collect()
}

/// A finding as JSON: label, method line, seed and the points with their enclosures.
pub(super) fn audit_json(f: &Finding, seed: u64) -> serde_json::Value {
    serde_json::json!({
        "result": f.label(),
        "method": f.method(seed),
        "seed": seed,
        "points": f.evaluated().iter().map(|e| evaluated_json(e)).collect::<Vec<_>>(),
    })
}

fn evaluated_json(e: &Evaluated) -> serde_json::Value {
    serde_json::json!({
        "point": e.point.iter().map(|(n, v)| (n.clone(), serde_json::json!(v))).collect::<serde_json::Map<_, _>>(),
        "enclosure": [e.value.lo, e.value.hi],
        "precision": match e.value.bits { Some(b) => format!("{b}-bit balls"), None => "f64 intervals".into() },
    })
}

fn render(st: &mut Store, f: Form, latex: bool) -> String {
    if latex { st.to_latex(f) } else { st.to_text(f) }
}

fn algebra_limit(e: CanonError) -> Failure {
    gave_up(&e)
}

/// `lingrav simplify`.
pub fn simplify(a: SimplifyArgs) -> Result<Outcome, Failure> {
    let mut st = a.limits.store();
    let f = build_arg(&mut st, &a.expr, "expression")?;
    let text = render(&mut st, f, a.latex);
    let plain = if a.latex { st.to_text(f) } else { text.clone() };
    let (note, outcome) = form_audit(&a.audit, &a.expr, &plain, &[], a.latex);
    print(&format!("{text}\n{note}"))?;
    Ok(outcome)
}

/// `lingrav diff`.
pub fn diff(a: DiffArgs) -> Result<Outcome, Failure> {
    let mut st = a.limits.store();
    let mut f = build_arg(&mut st, &a.expr, "expression")?;
    for v in &a.vars {
        let ok = !v.is_empty()
            && v.chars()
                .next()
                .is_some_and(|c| c.is_ascii_alphabetic() || c == '_')
            && v.chars().all(|c| c.is_ascii_alphanumeric() || c == '_');
        if !ok || lingrav::canon::BUILTINS.contains(&v.as_str()) || v == "pi" {
            return Err(Failure::Input(miette::miette!(
                help = "variables are names such as t, x, y, z or a parameter",
                "cannot differentiate by `{v}`: not a variable name"
            )));
        }
        f = st.diff_by_name(f, v).map_err(algebra_limit)?;
    }
    let text = render(&mut st, f, a.latex);
    let plain = if a.latex { st.to_text(f) } else { text.clone() };
    let by: Vec<&str> = a.vars.iter().map(String::as_str).collect();
    let (note, outcome) = form_audit(&a.audit, &a.expr, &plain, &by, a.latex);
    print(&format!("{text}\n{note}"))?;
    Ok(outcome)
}

/// The audit of a printed form: the input (its jet derivative by `by`) and the printed plain
/// text evaluated independently at seeded points must agree. Returns the lines to print and
/// the outcome (a disagreement is an internal defect: exit 1).
fn form_audit(
    a: &FormAuditArgs,
    input: &str,
    printed: &str,
    by: &[&str],
    latex: bool,
) -> (String, Outcome) {
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
    (s, outcome)
}

#[cfg(test)]
mod tests {
    use super::*;
    use clap::Parser;

    #[derive(Parser)]
    struct ZeroCli {
        #[command(flatten)]
        zero: ZeroArgs,
    }

    fn zero_args(args: &[&str]) -> ZeroArgs {
        ZeroCli::parse_from(std::iter::once("zero").chain(args.iter().copied())).zero
    }

    fn witness(point: &[(&str, f64)], lo: f64, hi: f64) -> Verdict {
        Verdict::Nonzero(Witness {
            point: point.iter().map(|(n, v)| (n.to_string(), *v)).collect(),
            value: CInterval::from_real(Interval::new(lo, hi).expect("interval")),
            seed: 1,
        })
    }

    /// A false proof (simulated: the exact route's verdict replaced by Zero for an
    /// expression that is not zero) is never printed as zero: nonzero with the independent
    /// witness and an INTERNAL DEFECT line, exit 1, in text and JSON.
    #[test]
    fn issue9_zero_reports_a_false_proof_as_an_internal_defect() {
        let a = zero_args(&["sin(2*x)", "2*sin(x)"]);
        let (text, outcome) = zero_report(&a, Verdict::Zero, None, &[]);
        assert_eq!(outcome, Outcome::Fails, "{text}");
        assert!(
            text.starts_with("nonzero: certified by the independent evaluation at x = "),
            "{text}"
        );
        assert!(
            text.contains("INTERNAL DEFECT: the exact route proved this zero"),
            "{text}"
        );
        assert!(!text.contains("zero: proved"), "{text}");

        let a = zero_args(&["sin(2*x)", "2*sin(x)", "--format", "json"]);
        let (text, outcome) = zero_report(&a, Verdict::Zero, None, &[]);
        assert_eq!(outcome, Outcome::Fails);
        let j: serde_json::Value = serde_json::from_str(&text).expect("json");
        assert_eq!(j["verdict"], "nonzero", "{j}");
        assert_eq!(j["witness"]["route"], "independent", "{j}");
        assert_eq!(j["audit"]["result"], "contradicted", "{j}");
        assert_eq!(
            j["audit"]["points"].as_array().map(Vec::len),
            Some(1),
            "{j}"
        );
    }

    /// A false witness (simulated: a made-up nonzero value for an identity) is not
    /// confirmed even with 512-bit balls: undecided, exit 3, never "nonzero".
    #[test]
    fn issue9_zero_turns_an_unconfirmed_witness_into_undecided() {
        let a = zero_args(&["sin(x)^2 + cos(x)^2 - 1"]);
        let fake = witness(&[("x", 0.5)], 1.0, 2.0);
        let (text, outcome) = zero_report(&a, fake, Some("residual".into()), &[]);
        assert_eq!(outcome, Outcome::Undecided, "{text}");
        assert!(text.starts_with("undecided: not reduced to zero"), "{text}");
        assert!(
            text.contains("contains 0 even with 512-bit balls"),
            "{text}"
        );
        assert!(
            text.contains("audited: witness not confirmed independently"),
            "{text}"
        );
    }

    /// Disjoint nonzero enclosures: the verdict stays nonzero, with a defect line.
    #[test]
    fn issue9_zero_reports_disagreeing_values() {
        let a = zero_args(&["x + 1"]);
        let wrong = witness(&[("x", 0.5)], 5.0, 6.0);
        let (text, outcome) = zero_report(&a, wrong, None, &[]);
        assert_eq!(outcome, Outcome::Fails, "{text}");
        assert!(
            text.contains("INTERNAL DEFECT: both routes certify"),
            "{text}"
        );
    }

    /// A printed form that is wrong (simulated: a wrong derivative or simplification handed
    /// to the audit) is an internal defect, exit 1, with both enclosures.
    #[test]
    fn issue9_a_wrong_printed_form_is_an_internal_defect() {
        let args = FormAuditArgs {
            seed: DEFAULT_SEED,
            audit_points: true,
        };
        let (text, outcome) = form_audit(&args, "x^3*y", "2*x^2*y", &["x"], false);
        assert_eq!(outcome, Outcome::Fails, "{text}");
        assert!(
            text.starts_with("INTERNAL DEFECT: the printed derivative disagrees"),
            "{text}"
        );
        assert!(text.contains("audit points:\n  at "), "{text}");
        let (text, outcome) = form_audit(&args, "2*sin(x)*cos(x)", "sin(x)", &[], false);
        assert_eq!(outcome, Outcome::Fails, "{text}");
        assert!(
            text.starts_with("INTERNAL DEFECT: the printed form"),
            "{text}"
        );
        // The right ones pass.
        let (text, outcome) = form_audit(&args, "x^3*y", "3*x^2*y", &["x"], false);
        assert_eq!(outcome, Outcome::Holds, "{text}");
        assert!(text.starts_with("audited: agrees with"), "{text}");
        // A printed form that cannot be read back is said so.
        let (text, outcome) = form_audit(&args, "x", "x +", &[], false);
        assert_eq!(outcome, Outcome::Holds, "{text}");
        assert!(
            text.starts_with("not audited: the printed form cannot be read back"),
            "{text}"
        );
    }
}
