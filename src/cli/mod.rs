//! Argument parsing and dispatch.

mod expr_cmds;
mod out;
mod problem_cmds;

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
  lingrav diff 'sqrt(x^2 + y^2 + z^2)' x   # prints x*sqrt(x^2 + y^2 + z^2)/(x^2 + y^2 + z^2)")]
    Diff(expr_cmds::DiffArgs),
    /// Check a perturbation's claims: field equations, gauge conditions, pure gauge.
    #[command(after_help = "\
Example:
  lingrav check worked/oblique_wave.toml
  lingrav check --format json worked/oblique_wave.toml

One line per claim: holds (proved exactly), fails (with the failing components, their
simplified residuals and a certified witness point) or undecided (with the reason).
Without a [claims] table every property is reported. Exit 0 every claim holds, 1 one
fails, 3 one is undecided and none fails, 2 bad input.")]
    Check(problem_cmds::CheckArgs),
    /// Print a derived quantity (Einstein, Ricci, Riemann, ...) component by component.
    #[command(after_help = "\
Examples:
  lingrav show worked/vibrating_rod.toml einstein
  lingrav show --latex worked/static_mass.toml riemann")]
    Show(problem_cmds::ShowArgs),
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
        Command::Check(a) => problem_cmds::run_check(a),
        Command::Show(a) => problem_cmds::run_show(a),
    };
    out::finish(result)
}
