//! Argument parsing and dispatch.

mod expr_cmds;
mod out;

use clap::{Parser, Subcommand};
use std::process::ExitCode;


const AFTER_HELP: &str = "\
Conventions: signature (-,+,+,+), coordinates (t,x,y,z), G = c = 1, indices of h and T down.
Exit codes: 0 holds / zero, 1 fails / nonzero, 2 bad input or I/O error, 3 undecided.";

/// Exact and numerical checks of linearized-gravity metric perturbations.
#[derive(Parser, Debug)]
#[command(name = "lingrav", version, about, after_help = AFTER_HELP, propagate_version = true)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand, Debug)]
enum Command {
    /// Decide whether an expression (or the difference of two) is identically zero.
    #[command(after_help = "\
Examples:
  lingrav zero 'sin(x)^2 + cos(x)^2 - 1'
  lingrav zero 'd_t_t(F(t - z)) - d_z_z(F(t - z))'
  lingrav zero 'cos(3*a)' '4*cos(a)^3 - 3*cos(a)'

Unknown names are free symbols; unknown names applied to an argument are arbitrary
functions of one argument (F'(u), F''(u) are their derivatives); d_x(...) differentiates.
Verdicts: zero (proved: the canonical form cancels), nonzero (certified at a printed
witness point), undecided (with the reason). Exit 0, 1, 3 respectively; 2 for bad input.")]
    Zero(expr_cmds::ZeroArgs),
    /// Print the canonical form of an expression in readable real form.
    #[command(after_help = "\
Examples:
  lingrav simplify '2*sin(x)*cos(x)'            # prints sin(2*x)
  lingrav simplify --latex '1/sqrt(x^2 + y^2 + z^2)^3'")]
    Simplify(expr_cmds::SimplifyArgs),
    /// Differentiate an expression by one or more variables and print the simplified result.
    #[command(after_help = "\
Examples:
  lingrav diff 'F(t - r)/r' t t            # second time derivative
  lingrav diff 'sqrt(x^2 + y^2 + z^2)' x   # prints x/sqrt(x^2 + y^2 + z^2)")]
    Diff(expr_cmds::DiffArgs),
}

/// Runs the command line and returns the exit code.
pub fn run() -> ExitCode {
    let cli = match Cli::try_parse() {
        Ok(c) => c,
        Err(e) => {
            let code = if e.use_stderr() { 2 } else { 0 };
            let _ = e.print();
            return ExitCode::from(code);
        }
    };
    let result = match cli.command {
        Command::Zero(a) => expr_cmds::zero(a),
        Command::Simplify(a) => expr_cmds::simplify(a),
        Command::Diff(a) => expr_cmds::diff(a),
    };
    out::finish(result)
}
