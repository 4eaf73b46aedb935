//! lingrav: exact and numerical checks of linearized-gravity metric perturbations.
//!
//! The pipeline: text is parsed into an [`Expr`] tree ([`parse`]), turned into a hash-consed
//! canonical form in a [`Store`] ([`canon`]), and a zero test ([`zero`]) decides whether a
//! canonical form is identically zero: a proof, a certified nonzero witness, or an honest
//! "undecided" with its reason.
//!
//! Conventions: signature (-,+,+,+), coordinates (t,x,y,z) unless a problem lists others (about
//! a background, [`tensor::curved`]), G = c = 1, indices of h and T down, MTW curvature signs.
//!
//! # The front door
//!
//! Check a perturbation without writing a file: the claims default to "report everything"
//! (field equations, the gauge conditions, pure gauge), each with a verdict that rests on a
//! proof or a certified witness and is audited by an independent evaluation.
//!
//! ```
//! use lingrav::{Status, check_perturbation};
//!
//! // A plus-polarized plane wave along z: a vacuum solution in TT gauge.
//! let report = check_perturbation(
//!     &[("xx", "a*cos(w*(t - z))"), ("yy", "-a*cos(w*(t - z))")],
//!     &[("a", 1e-3), ("w", 2.0)],
//! )
//! .unwrap();
//! let fe = report.claims.iter().find(|c| c.key == "field_equations").unwrap();
//! assert_eq!(fe.status, Status::Holds);
//! let tt = report.claims.iter().find(|c| c.key == "gauge.tt").unwrap();
//! assert_eq!(tt.status, Status::Holds);
//! ```
//!
//! And a single expression, into a [`Store`], decided by the zero test:
//!
//! ```
//! use lingrav::{Sampling, Store, Verdict, decide, expression};
//!
//! let mut store = Store::new();
//! let f = expression(&mut store, "sin(x)^2 + cos(x)^2 - 1").unwrap();
//! assert!(matches!(decide(&mut store, f, &Sampling::default()), Verdict::Zero));
//! ```
//!
//! Public are the vocabulary above and the modules a program calls: the exact route
//! ([`canon`], [`zero`], [`tensor`], [`check`](mod@check), [`problem`]), certified numbers ([`interval`]),
//! the capabilities ([`tt`], [`gauge`], [`radiation`], [`binary`], [`detector`]) and the
//! numeric route ([`grid`], [`tape`]). The independent audit, the jets, the exporters and the
//! command line are private; [`command_line`] is the whole `lingrav` command as a function.
#![warn(missing_docs)]
#![allow(
    clippy::needless_range_loop,
    reason = "index loops over tensor components read like the formulas"
)]

pub(crate) mod adm;
pub(crate) mod audit;
pub mod binary;
pub mod budget;
pub mod canon;
pub mod check;
pub mod claim;
mod cli;
pub mod detector;
pub(crate) mod emit;
pub(crate) mod export;
pub mod expr;
pub mod gauge;
pub mod grid;
pub mod interval;
pub(crate) mod jet;
pub(crate) mod output;
pub mod parse;
pub(crate) mod plot;
pub(crate) mod pointwise;
pub mod problem;
pub mod radiation;
pub mod tape;
pub mod tensor;
pub mod tt;
pub mod zero;

pub use canon::{CanonError, Coeff, Form, Names, Store};
pub use check::{CheckReport, ClaimReport, Component, Status, check};
pub use expr::{Expr, ExprKind, Span};
pub use problem::{Problem, ProblemError};
pub use tensor::Linearized;
pub use zero::{Sampling, Verdict, Witness, decide};

/// The `lingrav` command line: reads the process's arguments, runs the command, prints its
/// report and returns the exit code (0 every claim holds, 1 one fails, 2 bad input or I/O
/// error, 3 undecided). Installs the signal handlers that remove half-written files on
/// Ctrl-C. The `lingrav` binary is this function and [`budget::Counting`].
#[must_use]
pub fn command_line() -> std::process::ExitCode {
    budget::release_memory_promptly();
    output::install_signal_cleanup();
    cli::run()
}

/// Every claim of a problem file, as `lingrav check FILE` decides them: the claims about h
/// ([`check()`], skipped for a file that describes only bodies) followed by the claims about
/// the radiation of its bodies ([`radiation::claims::reports`]).
///
/// # Errors
///
/// A `[claims.waveform]` direction that cannot be read, or an algebra limit in the radiation
/// claims (the claims about h end in "undecided" instead).
pub fn check_problem(problem: &mut Problem) -> Result<CheckReport, radiation::claims::ClaimsError> {
    check_problem_with(problem, None)
}

/// Builds the problem of `file` under `limits` and checks it as [`check_problem`] does, the
/// independent audit starting from the file's texts while the forms are built (see
/// [`check::EarlyAudit`]): what `lingrav check` computes for one file. The report is the
/// same as that of [`check_problem`] on the built problem.
///
/// # Errors
///
/// The outer result: the file does not build (as [`problem::ProblemFile::build_with`]); the
/// inner: as [`check_problem`].
pub fn check_file(
    file: &problem::ProblemFile,
    limits: canon::Limits,
) -> Result<(Problem, Result<CheckReport, radiation::claims::ClaimsError>), ProblemError> {
    let early = check::EarlyAudit::start(file);
    let mut problem = file.build_with(limits)?;
    let report = check_problem_with(&mut problem, early);
    Ok((problem, report))
}

fn check_problem_with(
    problem: &mut Problem,
    early: Option<check::EarlyAudit>,
) -> Result<CheckReport, radiation::claims::ClaimsError> {
    let only_bodies =
        !problem.bodies.is_empty() && problem.h_text.iter().flatten().all(Option::is_none);
    let mut report = if only_bodies {
        CheckReport {
            claims: Vec::new(),
            has_claims: true,
        }
    } else {
        check::check_with(problem, early)
    };
    report.claims.extend(radiation::claims::reports(problem)?);
    Ok(report)
}

/// Why [`expression`] could not build a form.
#[derive(Debug, thiserror::Error)]
pub enum ExpressionError {
    /// The text does not parse.
    #[error(transparent)]
    Parse(#[from] parse::ParseError),
    /// It parses but cannot be built (an unknown function with primes, a limit, ...).
    #[error(transparent)]
    Build(#[from] canon::BuildError),
}

/// Parses `text` and builds its canonical form in `store`, with every unknown name a free
/// symbol and every unknown name applied to an argument an arbitrary function (as the `zero`
/// command reads its arguments).
///
/// # Errors
///
/// A parse error or a build error, each with its span in `text`.
pub fn expression(store: &mut Store, text: &str) -> Result<Form, ExpressionError> {
    let e = parse::parse(text)?;
    Ok(store.build(&e, &Names::free())?)
}

/// Checks the perturbation with components `h` (keys `tt`, `tx`, ..., `zz`, texts in the
/// expression language, indices down; omitted components are 0) and `parameters` with their
/// typical values, in vacuum, reporting every property (field equations, the gauge
/// conditions, pure gauge) as `lingrav check` does for a file without `[claims]`.
///
/// # Errors
///
/// A component key or text that is not valid, with what was wrong.
pub fn check_perturbation(
    h: &[(&str, &str)],
    parameters: &[(&str, f64)],
) -> Result<CheckReport, ProblemError> {
    let mut text = String::from("[parameters]\n");
    for (name, value) in parameters {
        text.push_str(&format!("{name} = {value:e}\n"));
    }
    text.push_str("[perturbation]\n");
    for (key, component) in h {
        // A TOML basic string: primes (F'') are single quotes, so escape instead.
        let escaped = component.replace('\\', "\\\\").replace('"', "\\\"");
        text.push_str(&format!("{key} = \"{escaped}\"\n"));
    }
    let mut problem = problem::from_str("perturbation", &text)?;
    Ok(check(&mut problem))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The front door reads primes (single quotes) and reports a bad key with its reason.
    #[test]
    fn check_perturbation_takes_primes_and_reports_bad_keys() {
        // F is not declared (this entry point has no [functions]): a located error naming
        // it, though the text holds primes (single quotes) that must reach the parser.
        let e = check_perturbation(&[("tt", "F''(t - x)")], &[]).unwrap_err();
        assert!(e.to_string().contains("`F`"), "{e}");
        let r = check_perturbation(&[("xx", "sin(t - z)"), ("yy", "-sin(t - z)")], &[]).unwrap();
        assert!(
            r.claims
                .iter()
                .any(|c| c.key == "field_equations" && c.status == Status::Holds)
        );
        let e = check_perturbation(&[("qq", "1")], &[]).unwrap_err();
        assert!(e.to_string().contains("qq"), "{e}");
    }
}
