//! The parsed expression tree: what the user wrote, with a source span on every node.
//!
//! Design decision: this tree is deliberately *not* simplified or shared. It is the faithful
//! record of the input, used for error messages and for an independent numerical evaluation
//! (see [`Expr::eval`]) that tests compare against the canonical form. All algebra happens in
//! [`crate::canon`], which builds hash-consed canonical forms from this tree.
//!
//! **Invariant:** `expr` knows nothing about canonical forms, tensors or problem files.

mod eval;

pub use eval::{EvalError, Evaluator};

use num_rational::BigRational;
use std::fmt;

/// A byte range `start..end` into the text an expression was parsed from.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Default)]
pub struct Span {
    /// First byte.
    pub start: usize,
    /// One past the last byte.
    pub end: usize,
}

impl Span {
    /// The span `start..end`.
    pub fn new(start: usize, end: usize) -> Span {
        Span { start, end }
    }
    /// The smallest span covering both.
    pub fn join(self, other: Span) -> Span {
        Span::new(self.start.min(other.start), self.end.max(other.end))
    }
    /// This span moved right by `offset` bytes (used to point into a larger file).
    pub fn shifted(self, offset: usize) -> Span {
        Span::new(self.start + offset, self.end + offset)
    }
    /// Length in bytes.
    pub fn len(self) -> usize {
        self.end - self.start
    }
    /// True for an empty span.
    pub fn is_empty(self) -> bool {
        self.end == self.start
    }
}

impl From<Span> for miette::SourceSpan {
    fn from(s: Span) -> Self {
        (s.start, s.len()).into()
    }
}

/// Binary operators of the expression language.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum BinOp {
    /// `a + b`
    Add,
    /// `a - b`
    Sub,
    /// `a * b`
    Mul,
    /// `a / b`
    Div,
    /// `a ^ b`
    Pow,
}

impl BinOp {
    /// The operator's symbol.
    pub fn symbol(self) -> &'static str {
        match self {
            BinOp::Add => "+",
            BinOp::Sub => "-",
            BinOp::Mul => "*",
            BinOp::Div => "/",
            BinOp::Pow => "^",
        }
    }
}

/// One node of the parsed tree.
#[derive(Clone, Debug, PartialEq)]
pub enum ExprKind {
    /// A number, read exactly (`1.5e-3` is 3/2000).
    Num(BigRational),
    /// A name: a symbol, the constant `pi`, or a defined name.
    Ident(String),
    /// Unary minus.
    Neg(Box<Expr>),
    /// A binary operation.
    Binary(BinOp, Box<Expr>, Box<Expr>),
    /// `name(arg)` or `name'''(arg)`: a built-in function or an arbitrary function of one
    /// argument; `primes` counts the derivative marks.
    Call {
        /// The function's name as written.
        name: String,
        /// Where the name (with its primes) stands.
        name_span: Span,
        /// Number of `'` marks after the name.
        primes: u32,
        /// The single argument.
        arg: Box<Expr>,
    },
    /// `atan2(y, x)`, the one built-in function of two arguments: the angle of the point
    /// `(x, y)`, defined off its cut `x <= 0, y = 0` (see [`crate::canon`]).
    Atan2 {
        /// Where the name `atan2` stands.
        name_span: Span,
        /// The first argument (the ordinate).
        y: Box<Expr>,
        /// The second argument (the abscissa).
        x: Box<Expr>,
    },
    /// `d_x(f)`, `d_t_z(f)`: partial derivatives of `f` by the listed variables, in order.
    Deriv {
        /// The variables, each with the span of its name.
        vars: Vec<(String, Span)>,
        /// What is differentiated.
        arg: Box<Expr>,
    },
}

/// A parsed expression with the span of the text it came from.
#[derive(Clone, Debug, PartialEq)]
pub struct Expr {
    /// What the node is.
    pub kind: ExprKind,
    /// Where it stands in the source.
    pub span: Span,
}

impl Expr {
    /// A node at `span`.
    pub fn new(kind: ExprKind, span: Span) -> Expr {
        Expr { kind, span }
    }

    /// Every identifier used as a value (not as a function name), with its span, in order of
    /// appearance.
    pub fn idents(&self) -> Vec<(&str, Span)> {
        let mut out = Vec::new();
        self.walk(&mut |e| {
            if let ExprKind::Ident(n) = &e.kind {
                out.push((n.as_str(), e.span));
            }
        });
        out
    }

    /// Visit every node, parents before children.
    pub fn walk<'a>(&'a self, f: &mut impl FnMut(&'a Expr)) {
        f(self);
        match &self.kind {
            ExprKind::Num(_) | ExprKind::Ident(_) => {}
            ExprKind::Neg(a) => a.walk(f),
            ExprKind::Binary(_, a, b) => {
                a.walk(f);
                b.walk(f);
            }
            ExprKind::Call { arg, .. } | ExprKind::Deriv { arg, .. } => arg.walk(f),
            ExprKind::Atan2 { y, x, .. } => {
                y.walk(f);
                x.walk(f);
            }
        }
    }
}

/// Prints in the input syntax, fully parenthesised where precedence requires, so that the
/// printed text parses back to an equal tree (up to spans).
impl fmt::Display for Expr {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        fn prec(e: &Expr) -> u8 {
            match &e.kind {
                ExprKind::Binary(BinOp::Add | BinOp::Sub, ..) => 1,
                ExprKind::Binary(BinOp::Mul | BinOp::Div, ..) => 2,
                ExprKind::Neg(_) => 3,
                ExprKind::Binary(BinOp::Pow, ..) => 4,
                ExprKind::Num(n) if !n.is_integer() || n < &BigRational::from_integer(0.into()) => {
                    2
                }
                _ => 5,
            }
        }
        fn wrap(e: &Expr, min: u8, f: &mut fmt::Formatter<'_>) -> fmt::Result {
            if prec(e) < min {
                write!(f, "({e})")
            } else {
                write!(f, "{e}")
            }
        }
        match &self.kind {
            ExprKind::Num(n) => write!(f, "{n}"),
            ExprKind::Ident(s) => write!(f, "{s}"),
            ExprKind::Neg(a) => {
                write!(f, "-")?;
                wrap(a, 4, f)
            }
            ExprKind::Binary(op, a, b) => {
                let (lmin, rmin) = match op {
                    BinOp::Add => (1, 2),
                    BinOp::Sub => (1, 2),
                    BinOp::Mul => (2, 3),
                    BinOp::Div => (2, 3),
                    BinOp::Pow => (5, 4),
                };
                wrap(a, lmin, f)?;
                let sep = if matches!(op, BinOp::Pow) { "" } else { " " };
                write!(f, "{sep}{}{sep}", op.symbol())?;
                wrap(b, rmin, f)
            }
            ExprKind::Call {
                name, primes, arg, ..
            } => {
                write!(f, "{name}{}({arg})", "'".repeat(*primes as usize))
            }
            ExprKind::Atan2 { y, x, .. } => write!(f, "atan2({y}, {x})"),
            ExprKind::Deriv { vars, arg } => {
                write!(f, "d")?;
                for (v, _) in vars {
                    write!(f, "_{v}")?;
                }
                write!(f, "({arg})")
            }
        }
    }
}
