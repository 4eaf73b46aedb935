//! One file per command: its clap arguments and its `run` (plan, call the library, report,
//! outcome). What commands share is in the modules beside this one.
//!
//! The doc comments of the arguments are the commands' `--help` text, written for a
//! terminal: `[define]` or `[[body]]` there is a TOML table of the problem file, not a link.
#![allow(rustdoc::broken_intra_doc_links)]

pub mod antenna;
pub mod binary;
mod binary_report;
pub mod check;
pub mod compare;
pub mod diff;
pub mod emit;
pub mod export;
pub mod gauge;
pub mod gauge_curved;
mod gauge_tt;
pub mod grid;
pub mod project;
pub mod radiation;
mod radiation_plot;
mod radiation_si;
pub mod response;
pub mod ring;
pub mod show;
pub mod simplify;
pub mod zero;
