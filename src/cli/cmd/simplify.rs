//! `lingrav simplify`: the canonical form of an expression in readable real form, audited
//! against the input at seeded points.

use super::zero::LimitArgs;
use crate::canon::{Form, Store};
use crate::cli::audit::{FormAuditArgs, audit_json, form_audit};
use crate::cli::out::{Failure, Outcome, print};
use crate::cli::plan::build_arg;
use crate::cli::report::{Format, json};
use clap::Args;

/// Arguments of `lingrav simplify`, and what `diff` shares with it: the expression and how
/// its result is printed and audited.
#[derive(Args, Debug)]
pub struct SimplifyArgs {
    /// The expression.
    #[arg(allow_hyphen_values = true)]
    pub(super) expr: String,
    /// Print LaTeX instead of plain text.
    #[arg(long)]
    latex: bool,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Text)]
    format: Format,
    #[command(flatten)]
    audit: FormAuditArgs,
    #[command(flatten)]
    pub(super) limits: LimitArgs,
}

/// What `simplify` and `diff` print: the form (LaTeX if asked) and the audit of its plain
/// text against the input (its jet derivative by `by`), as text or JSON.
pub fn print_form(
    st: &mut Store,
    f: Form,
    a: &SimplifyArgs,
    by: &[&str],
    arbitrary: &[String],
) -> Result<Outcome, Failure> {
    let (input, latex, format, audit) = (a.expr.as_str(), a.latex, a.format, &a.audit);
    let plain = st.to_text(f);
    let shown = if latex { st.to_latex(f) } else { plain.clone() };
    let (note, outcome, finding) = form_audit(audit, input, &plain, by, latex);
    let text = match format {
        Format::Text => {
            let mut s = format!("{shown}\n{note}");
            let notes = [
                crate::cli::plan::arbitrary_note(arbitrary),
                crate::cli::plan::unit_note(&[input]),
            ];
            for n in notes.into_iter().flatten() {
                s.push_str(&n);
                s.push('\n');
            }
            s
        }
        Format::Json => {
            let mut j = serde_json::json!({
                "input": input,
                "result": plain,
                "audit": audit_json(&finding, audit.seed),
                "defect": outcome == Outcome::Fails,
                "arbitrary_functions": arbitrary,
            });
            if !by.is_empty() {
                j["by"] = serde_json::json!(by);
            }
            if latex {
                j["latex"] = shown.into();
            }
            json(&j)
        }
    };
    print(&text)?;
    Ok(outcome)
}

/// `lingrav simplify`.
pub fn run(a: SimplifyArgs) -> Result<Outcome, Failure> {
    let mut st = a.limits.store();
    let f = build_arg(&mut st, &a.expr, "expression")?;
    let arbitrary = crate::cli::plan::arbitrary_functions(&mut st, &[f], &[&a.expr]);
    print_form(&mut st, f, &a, &[], &arbitrary)
}
