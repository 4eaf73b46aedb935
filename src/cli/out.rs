//! Output, error rendering and exit codes, shared by every command.

use std::io::{self, Write};
use std::process::ExitCode;

/// What a command concluded.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Outcome {
    /// Every claim holds (or the expression is zero).
    Holds,
    /// A claim fails.
    Fails,
    /// Undecided, none failing.
    Undecided,
}

/// Why a command could not run.
pub enum Failure {
    /// Bad input, rendered with its source.
    Input(miette::Report),
    /// The output pipe closed: not an error.
    BrokenPipe,
    /// A size or time limit stopped the algebra: undecided, with the reason.
    GaveUp(String),
}

impl From<miette::Report> for Failure {
    fn from(r: miette::Report) -> Self {
        Failure::Input(r)
    }
}

impl From<io::Error> for Failure {
    fn from(e: io::Error) -> Self {
        if e.kind() == io::ErrorKind::BrokenPipe {
            Failure::BrokenPipe
        } else {
            Failure::Input(miette::miette!("cannot write output: {e}"))
        }
    }
}

/// Maps a command's result to the exit code, printing errors to standard error.
pub fn finish(r: Result<Outcome, Failure>) -> ExitCode {
    match r {
        Ok(Outcome::Holds) => ExitCode::from(0),
        Ok(Outcome::Fails) => ExitCode::from(1),
        Ok(Outcome::Undecided) => ExitCode::from(3),
        Err(Failure::BrokenPipe) => ExitCode::from(0),
        Err(Failure::GaveUp(why)) => {
            let _ = writeln!(io::stdout(), "undecided: {why}");
            ExitCode::from(3)
        }
        Err(Failure::Input(report)) => {
            let _ = writeln!(io::stderr(), "{report:?}");
            ExitCode::from(2)
        }
    }
}

/// Writes the whole text to standard output at once.
pub fn print(text: &str) -> Result<(), Failure> {
    let mut out = io::stdout().lock();
    out.write_all(text.as_bytes())?;
    out.flush()?;
    Ok(())
}

/// Attaches a named source to a diagnostic so that it renders with file, line and column.
pub fn with_source(
    diag: impl miette::Diagnostic + Send + Sync + 'static,
    name: &str,
    text: &str,
) -> miette::Report {
    // A trailing space gives a label at the very end of the input a place to be drawn.
    miette::Report::new(diag).with_source_code(miette::NamedSource::new(name, format!("{text} ")))
}
