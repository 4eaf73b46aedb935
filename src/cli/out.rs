//! Output, error rendering and exit codes, shared by every command.
//!
//! A command run with `--format json` prints JSON
//! on standard output whatever ends it: its report, or, when a limit or an input error ends
//! it first, a JSON object saying so (see [`finish`]), so a script never has to parse text.

use super::report::{Format, json};
use crate::canon::CanonError;
use crate::output::FileError;
use std::io::{self, Write};
use std::process::ExitCode;
use std::sync::atomic::{AtomicBool, Ordering};

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
    /// Errors already rendered (several files): only the exit code is left to set.
    Quiet(u8),
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

/// A limit reached anywhere (loading, computing, printing, sampling) as the command's end:
/// "undecided: too large" or "undecided: too slow" (exit 3) with the option that raises the
/// limit, worded by [`limit_reason`]. Other algebra errors (a division by zero, say) are bad
/// input. Every command maps its limits through here (directly, through [`limit_or`] for
/// errors that keep only a message, or through [`limit_among`] for verdicts a limit left
/// undecided).
pub fn gave_up(e: &CanonError) -> Failure {
    match limit_reason(e) {
        Some(why) => Failure::GaveUp(why),
        None => Failure::Input(miette::miette!("{e}")),
    }
}

/// The reason a limit gives for "undecided" (after `undecided: `), with the option that
/// raises it; `None` for algebra errors that are not limits.
pub fn limit_reason(e: &CanonError) -> Option<String> {
    match e {
        CanonError::TooLarge(_) => Some(format!("{e} (--max-terms raises the limit)")),
        CanonError::Timeout(_) => Some(format!("{e} (--time-limit raises it)")),
        CanonError::NumberTooLarge(_) | CanonError::PowerTooLarge => Some(e.to_string()),
        CanonError::MemoryCap(_) => Some(format!("{e} (--max-memory raises it)")),
        CanonError::DivisionByZero | CanonError::Undefined(_) => None,
    }
}

/// An error that keeps only its message: undecided if the message names a limit, else
/// `otherwise` (usually bad input).
pub fn limit_or(message: &str, otherwise: impl FnOnce() -> Failure) -> Failure {
    match limit_in(message) {
        Some(l) => gave_up(&l),
        None => otherwise(),
    }
}

/// The first limit among the reasons of undecided verdicts: a report whose verdicts a limit
/// stopped ends with the same line, and exit 3, as a command stopped by it.
pub fn limit_among<'a>(reasons: impl IntoIterator<Item = &'a str>) -> Option<String> {
    reasons
        .into_iter()
        .find_map(|r| limit_reason(&limit_in(r)?))
}

/// The limit named in a message that wraps a `CanonError` as text (some library errors keep
/// only the message, e.g. "the algebra stopped: too slow: stopped after the time limit of
/// 5 ms"), so that it ends as undecided like any other limit.
pub fn limit_in(message: &str) -> Option<CanonError> {
    let number_after = |key: &str| -> Option<u64> {
        let rest = &message[message.find(key)? + key.len()..];
        let digits: String = rest.chars().take_while(char::is_ascii_digit).collect();
        digits.parse().ok()
    };
    if let Some(ms) = number_after("too slow: stopped after the time limit of ") {
        return Some(CanonError::Timeout(ms));
    }
    if let Some(mib) = number_after("too large: memory use passed the cap of ") {
        return Some(CanonError::MemoryCap(mib));
    }
    if let Some(bits) = number_after("too large: an exact number would have over ") {
        return Some(CanonError::NumberTooLarge(bits));
    }
    if message.contains("too large: an exponent beyond the limits") {
        return Some(CanonError::PowerTooLarge);
    }
    number_after("too large: an intermediate result has over ")
        .map(|n| CanonError::TooLarge(usize::try_from(n).unwrap_or(usize::MAX)))
}

impl From<CanonError> for Failure {
    fn from(e: CanonError) -> Self {
        gave_up(&e)
    }
}

/// An output file that cannot be written, as bad input (exit 2) naming the file.
pub fn file_failure(e: FileError) -> Failure {
    Failure::Input(miette::miette!(help = e.help(), "{e}"))
}

impl From<FileError> for Failure {
    fn from(e: FileError) -> Self {
        file_failure(e)
    }
}

impl Outcome {
    /// The outcome of a claim's (or a report's) status.
    pub fn of(s: crate::check::Status) -> Outcome {
        match s {
            crate::check::Status::Holds => Outcome::Holds,
            crate::check::Status::Fails => Outcome::Fails,
            crate::check::Status::Undecided => Outcome::Undecided,
        }
    }
}

/// Set once, before the command runs, when its report was asked for as JSON: then the ends
/// that are not the command's own report (a limit, an input error, the memory watchdog) are
/// JSON objects on standard output too.
static JSON_REPORT: AtomicBool = AtomicBool::new(false);

/// Records the report format the command line asked for (see [`JSON_REPORT`]).
pub fn report_as(format: Format) {
    JSON_REPORT.store(format == Format::Json, Ordering::SeqCst);
}

/// Whether the command line asked for a JSON report.
pub fn json_report() -> bool {
    JSON_REPORT.load(Ordering::SeqCst)
}

/// The JSON object of a command that a limit ended: `result` `undecided` and the `limit`
/// reached, worded as the text line after `undecided: ` (the key `check` and `gauge` use
/// when a limit leaves a verdict undecided).
pub fn limit_json(why: &str) -> String {
    json(&serde_json::json!({ "result": "undecided", "limit": why }))
}

/// The line (text or JSON, as asked) that ends a command stopped by a limit: `why` is the
/// reason after `undecided: `.
pub fn limit_report(why: &str) -> String {
    if json_report() {
        limit_json(why)
    } else {
        format!("undecided: {why}\n")
    }
}

/// Maps a command's result to the exit code, printing errors to standard error (and, for a
/// JSON report, an object with `result` `error` and the message to standard output).
pub fn finish(r: Result<Outcome, Failure>) -> ExitCode {
    match r {
        Ok(Outcome::Holds) => ExitCode::from(0),
        Ok(Outcome::Fails) => ExitCode::from(1),
        Ok(Outcome::Undecided) => ExitCode::from(3),
        Err(Failure::BrokenPipe) => ExitCode::from(0),
        Err(Failure::Quiet(code)) => ExitCode::from(code),
        Err(Failure::GaveUp(why)) => {
            let _ = write!(io::stdout(), "{}", limit_report(&why));
            ExitCode::from(3)
        }
        Err(Failure::Input(report)) => {
            let report = super::render::safe(report);
            if json_report() {
                let mut j = serde_json::json!({ "result": "error", "error": report.to_string() });
                if let Some(help) = report.help() {
                    j["help"] = help.to_string().into();
                }
                let _ = write!(io::stdout(), "{}", json(&j));
            }
            let _ = writeln!(io::stderr(), "{report:?}");
            ExitCode::from(2)
        }
    }
}

/// Writes the whole text to standard output at once.
pub fn print(text: &str) -> Result<(), Failure> {
    // The computation is over: what it found is being reported, limits included, so the
    // memory watchdog must not cut the report or append to it.
    super::limits::disarm_watchdog();
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
