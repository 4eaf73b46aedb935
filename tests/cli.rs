//! The `lingrav` binary, end to end. One integration-test binary for the whole command line,
//! so that CI links it once; one module per area under `tests/cli/`, all running the binary
//! through [`support::lingrav`]. A new area is one more file there and one more line here.

#![allow(
    clippy::needless_range_loop,
    reason = "index loops over tensor components read like the formulas"
)]

#[path = "cli/support.rs"]
mod support;

#[path = "cli/antenna.rs"]
mod antenna;
#[path = "cli/audit.rs"]
mod audit;
#[path = "cli/background_values.rs"]
mod background_values;
#[path = "cli/backgrounds.rs"]
mod backgrounds;
#[path = "cli/bad_input.rs"]
mod bad_input;
#[path = "cli/binary.rs"]
mod binary;
#[path = "cli/curved_commands.rs"]
mod curved_commands;
#[path = "cli/expr_commands.rs"]
mod expr_commands;
#[path = "cli/farzone.rs"]
mod farzone;
#[path = "cli/general.rs"]
mod general;
#[path = "cli/layers.rs"]
mod layers;
#[path = "cli/output.rs"]
mod output;
#[path = "cli/radiation.rs"]
mod radiation;
#[path = "cli/response.rs"]
mod response;
#[path = "cli/safety.rs"]
mod safety;

// The other areas, kept at the top of tests/ (outside checks against reference libraries,
// the soundness fuzz, the engine's laws, the later commands): modules of this one binary.
#[path = "atan2_mpmath.rs"]
mod atan2_mpmath;
#[path = "atan_mpmath.rs"]
mod atan_mpmath;
#[path = "ball_mpmath.rs"]
mod ball_mpmath;
#[path = "emit_code.rs"]
mod emit_code;
#[path = "engine_props.rs"]
mod engine_props;
#[path = "export_cli.rs"]
mod export_cli;
#[path = "export_mpmath.rs"]
mod export_mpmath;
#[path = "grid_cli.rs"]
mod grid_cli;
#[path = "handbook.rs"]
mod handbook;
#[path = "problem_files.rs"]
mod problem_files;
#[path = "radiation_si_mpmath.rs"]
mod radiation_si_mpmath;
#[path = "soundness.rs"]
mod soundness;
#[path = "sympy_cross.rs"]
mod sympy_cross;
#[path = "sympy_eccentric.rs"]
mod sympy_eccentric;
#[path = "sympy_radiation.rs"]
mod sympy_radiation;
#[path = "sympy_tensor.rs"]
mod sympy_tensor;
#[path = "sympy_tt.rs"]
mod sympy_tt;
#[path = "tt_cli.rs"]
mod tt_cli;
