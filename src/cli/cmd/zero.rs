//! `lingrav zero`: is an expression (or the difference of two) identically zero? The exact
//! verdict is audited by the independent route before it is printed.

use crate::audit::expr::{Expressions, Finding};
use crate::check::verdicts::audit_verdicts;
use crate::cli::audit::{AuditedFormat, audit_json, points_text};
use crate::cli::out::{Failure, Outcome, print};
use crate::cli::plan::{arbitrary_note, build_arg, unit_note};
use crate::cli::report::{Format, json, point_json};
use crate::zero::{Sampling, Verdict, decide};
use clap::Args;
use std::fmt::Write as _;

/// Limits of the expression commands: 20 s of algebra by default.
pub type LimitArgs = crate::cli::limits::LimitArgs<20_000>;

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
    /// How many random points to try for a certified nonzero witness (--points is accepted
    /// too; elsewhere --points counts grid points).
    #[arg(long, alias = "points", default_value_t = 32, value_name = "N")]
    tries: usize,
    #[command(flatten)]
    shown: AuditedFormat,
    #[command(flatten)]
    limits: LimitArgs,
}

/// `lingrav zero`.
pub fn run(a: ZeroArgs) -> Result<Outcome, Failure> {
    let mut st = a.limits.store();
    let f = build_arg(&mut st, &a.expr, "expression")?;
    let g = match &a.other {
        Some(o) => Some(build_arg(&mut st, o, "second expression")?),
        None => None,
    };
    let inputs: Vec<_> = std::iter::once(f).chain(g).collect();
    let texts: Vec<&str> = std::iter::once(a.expr.as_str())
        .chain(a.other.as_deref())
        .collect();
    let arbitrary = crate::cli::plan::arbitrary_functions(&mut st, &inputs, &texts);
    let diff = match g {
        Some(g) => st.sub(f, g),
        None => Ok(f),
    };
    let sampling = Sampling {
        seed: a.seed,
        points: a.tries,
        ..Sampling::default()
    };
    let (verdict, residual) = match diff {
        Ok(d) => (decide(&mut st, d, &sampling), Some(d)),
        Err(e) => (crate::zero::undecided_from(&e), None),
    };
    let residual_text = residual.filter(|d| !st.is_zero(*d)).map(|d| st.to_text(d));
    // The zero test numbers the generic samples of its residual's functions by sorted name;
    // the audit certifies a witness again with the same samples.
    let functions: Vec<String> = residual
        .map(|d| st.functions_used(d).iter().map(|f| f.to_string()).collect())
        .unwrap_or_default();
    let (text, outcome) = zero_report(&a, verdict, residual_text, &functions, &arbitrary);
    print(&text)?;
    Ok(outcome)
}

/// The audited verdict of `zero` and its report. `verdict` is the exact route's.
fn zero_report(
    a: &ZeroArgs,
    verdict: Verdict,
    residual_text: Option<String>,
    functions: &[String],
    arbitrary: &[String],
) -> (String, Outcome) {
    let route = Expressions::new(&a.expr, a.other.as_deref(), &[], functions);
    let mut verdicts = [verdict];
    let finding = audit_verdicts(&route, &mut verdicts, |_| Some(0), a.seed).remove(0);
    let [verdict] = verdicts;
    let independent = matches!(finding, Finding::ProofContradicted(_));
    let text = match a.shown.format {
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
            if a.shown.audit_points {
                s.push_str(&points_text(&[&finding]));
            }
            if let Some(note) = arbitrary_note(arbitrary) {
                let _ = writeln!(s, "{note}");
            }
            let texts: Vec<&str> = std::iter::once(a.expr.as_str())
                .chain(a.other.as_deref())
                .collect();
            if let Some(note) = unit_note(&texts) {
                let _ = writeln!(s, "{note}");
            }
            s
        }
        Format::Json => {
            let mut j = serde_json::json!({ "verdict": verdict.label() });
            match &verdict {
                Verdict::Zero => j["method"] = "canonical form cancels to 0".into(),
                Verdict::Nonzero(w) => {
                    j["witness"] = serde_json::json!({
                        "point": point_json(&w.point),
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
            j["arbitrary_functions"] = serde_json::json!(arbitrary);
            json(&j)
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::interval::{CInterval, Interval};
    use crate::zero::Witness;
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
            chosen: None,
        })
    }

    /// A false proof (simulated: the exact route's verdict replaced by Zero for an
    /// expression that is not zero) is never printed as zero: nonzero with the independent
    /// witness and an INTERNAL DEFECT line, exit 1, in text and JSON.
    #[test]
    fn issue9_zero_reports_a_false_proof_as_an_internal_defect() {
        let a = zero_args(&["sin(2*x)", "2*sin(x)"]);
        let (text, outcome) = zero_report(&a, Verdict::Zero, None, &[], &[]);
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
        let (text, outcome) = zero_report(&a, Verdict::Zero, None, &[], &[]);
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
        let (text, outcome) = zero_report(&a, fake, Some("residual".into()), &[], &[]);
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
        let (text, outcome) = zero_report(&a, wrong, None, &[], &[]);
        assert_eq!(outcome, Outcome::Fails, "{text}");
        assert!(
            text.contains("INTERNAL DEFECT: both routes certify"),
            "{text}"
        );
    }
}
