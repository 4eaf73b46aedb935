//! The `lingrav` command: thin wrapper over the library.
//!
//! Every command first builds a plan (parse and resolve all input), reporting any input error
//! with its location before computing anything; then it computes, prints, and maps the result
//! to an exit code: 0 every claim holds, 1 one fails, 2 bad input or I/O error, 3 undecided.

mod cli;

use std::process::ExitCode;

fn main() -> ExitCode {
    cli::run()
}
