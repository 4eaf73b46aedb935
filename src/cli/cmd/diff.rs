//! `lingrav diff`: the derivative of an expression by one or more variables, simplified and
//! audited against the jet derivative of the input at seeded points.

use super::simplify::print_form;
use super::zero::LimitArgs;
use crate::cli::audit::FormAuditArgs;
use crate::cli::out::{Failure, Outcome, gave_up};
use crate::cli::plan::build_arg;
use crate::cli::report::Format;
use clap::Args;

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
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Text)]
    format: Format,
    #[command(flatten)]
    audit: FormAuditArgs,
    #[command(flatten)]
    limits: LimitArgs,
}

/// `lingrav diff`.
pub fn run(a: DiffArgs) -> Result<Outcome, Failure> {
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
        f = st.diff_by_name(f, v).map_err(|e| gave_up(&e))?;
    }
    let by: Vec<&str> = a.vars.iter().map(String::as_str).collect();
    print_form(&mut st, f, &a.expr, &by, (a.latex, a.format, &a.audit))
}
