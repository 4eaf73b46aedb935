//! lingrav: exact and numerical checks of linearized-gravity metric perturbations.
//!
//! The pipeline: text is parsed into an [`Expr`] tree ([`parse`]), turned into a hash-consed
//! canonical form in a [`Store`] ([`canon`]), and a zero test ([`zero`]) decides whether a
//! canonical form is identically zero: a proof, a certified nonzero witness, or an honest
//! "undecided" with its reason.
//!
//! Conventions: signature (-,+,+,+), coordinates (t,x,y,z), G = c = 1, indices of h and T down.
#![warn(missing_docs)]

pub mod adm;
pub mod audit;
pub mod budget;
pub mod canon;
pub mod check;
pub mod emit;
pub mod export;
pub mod expr;
pub mod gauge;
pub mod grid;
pub mod interval;
pub mod jet;
pub mod output;
pub mod parse;
pub mod problem;
pub mod tape;
pub mod tensor;
pub mod tt;
pub mod zero;

pub use expr::{Expr, ExprKind, Span};
