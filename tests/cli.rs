//! The `lingrav` binary, end to end. One integration-test binary for the whole command line,
//! so that CI links it once; one module per area under `tests/cli/`, all running the binary
//! through [`support::lingrav`]. A new area is one more file there and one more line here.

#[path = "cli/support.rs"]
mod support;

#[path = "cli/audit.rs"]
mod audit;
#[path = "cli/bad_input.rs"]
mod bad_input;
#[path = "cli/expr_commands.rs"]
mod expr_commands;
#[path = "cli/general.rs"]
mod general;
#[path = "cli/safety.rs"]
mod safety;
