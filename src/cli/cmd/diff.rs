//! `lingrav diff`: the derivative of an expression by one or more variables, simplified and
//! audited against the jet derivative of the input at seeded points.

use super::simplify::{SimplifyArgs, print_form};
use crate::cli::out::{Failure, Outcome, gave_up};
use crate::cli::plan::build_arg;
use clap::Args;

/// Arguments of `lingrav diff`: those of `simplify` and the variables.
#[derive(Args, Debug)]
pub struct DiffArgs {
    #[command(flatten)]
    form: SimplifyArgs,
    /// The variables to differentiate by, in order (`x x` is the second derivative).
    #[arg(required = true, num_args = 1.., value_name = "VAR")]
    vars: Vec<String>,
}

/// `lingrav diff`.
pub fn run(a: DiffArgs) -> Result<Outcome, Failure> {
    let mut st = a.form.limits.store();
    let mut f = build_arg(&mut st, &a.form.expr, "expression")?;
    let arbitrary = crate::cli::plan::arbitrary_functions(&mut st, &[f], &[&a.form.expr]);
    for v in &a.vars {
        let ok = !v.is_empty()
            && v.chars()
                .next()
                .is_some_and(|c| c.is_ascii_alphabetic() || c == '_')
            && v.chars().all(|c| c.is_ascii_alphanumeric() || c == '_');
        if !ok || crate::canon::BUILTINS.contains(&v.as_str()) || v == "pi" {
            return Err(Failure::Input(miette::miette!(
                help = "variables are names such as t, x, y, z or a parameter",
                "cannot differentiate by `{v}`: not a variable name"
            )));
        }
        f = st.diff_by_name(f, v).map_err(|e| gave_up(&e))?;
    }
    let by: Vec<&str> = a.vars.iter().map(String::as_str).collect();
    print_form(&mut st, f, &a.form, &by, &arbitrary)
}
