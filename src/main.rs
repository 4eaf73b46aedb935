//! The `lingrav` command: thin wrapper over the library.
//!
//! Every command first builds a plan (parse and resolve all input), reporting any input error
//! with its location before computing anything; then it computes, prints, and maps the result
//! to an exit code: 0 every claim holds, 1 one fails, 2 bad input or I/O error, 3 undecided.
//!
//! The binary counts its memory: its global allocator, [`lingrav::budget::Counting`], records
//! every allocation in [`lingrav::budget`]. It never refuses memory (a refused allocation aborts a
//! Rust process); passing the cap raises a flag that computations poll, and a watchdog ends
//! the process as "undecided: too large" (exit 3) if the flag stays up (see `cli::limits`).

use std::process::ExitCode;

#[global_allocator]
static ALLOCATOR: lingrav::budget::Counting = lingrav::budget::Counting;

fn main() -> ExitCode {
    lingrav::command_line()
}
