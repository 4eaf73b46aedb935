//! Certified Taylor-mode automatic differentiation: an evaluation route that shares nothing
//! with the canonical form.
//!
//! Model. An expression, exactly as the user wrote it (defines, the `d_` operator, arbitrary
//! functions through their samples), is evaluated at a point into a *jet*: its truncated
//! multivariate Taylor series, whose coefficients are enclosures (outward-rounded intervals)
//! of the exact partial derivatives divided by factorials. Every number this module produces
//! is therefore certified: the exact value lies in it.
//!
//! - [`scalar`]: the enclosure arithmetic jets are generic over ([`Scalar`]), implemented
//!   for [`crate::interval::Interval`], with an exact enclosure of big rationals;
//! - [`series`]: [`Jet`] and the shared tables of a [`JetSpace`](series::JetSpace);
//! - [`eval`]: from an [`crate::expr::Expr`] and a [`Scope`] to jets at a point.
//!
//! Key design decision: independence. The exact route proves identities by canonical forms;
//! this route only evaluates, so a wrong rewrite there cannot hide here. It reads the parsed
//! tree and nothing else.
//!
//! **Invariant:** never calls `canon`, `zero` or `tensor`; `None` always means "cannot
//! evaluate here", never a guessed value.

pub mod eval;
pub mod scalar;
pub mod series;

pub use eval::{EvalError, Program, Scope};
pub use scalar::Scalar;
pub use series::Jet;
