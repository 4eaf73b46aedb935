//! Direct floating-point evaluation of a parsed tree.
//!
//! Design decision: this evaluator walks the tree exactly as written and shares nothing with
//! the canonical form, so tests can compare the two as independent computations of the same
//! value. It is strict rather than forgiving: any step that leaves the real numbers or yields
//! an infinity or NaN is an error, never a silently propagated non-finite value.
//!
//! Built in: the constant `pi` (unless [`Evaluator::values`] gives a value for it) and the
//! functions `sin cos tan exp log sqrt sinh cosh tanh` (`log` is natural). Built-in function
//! names always mean the built-in; [`Evaluator::functions`] is consulted only for other names.
//! A primed built-in (`sin'(x)`) and the operator `d_x(f)` are [`EvalError::Unsupported`]:
//! derivatives are the algebra's business, and a numerical derivative here would make the
//! cross-check depend on a step size.

use super::{BinOp, Expr, ExprKind};
use num_traits::ToPrimitive;

/// Where the values of symbols and arbitrary functions come from.
pub struct Evaluator<'a> {
    /// The value of a symbol, or `None` if it has none.
    pub values: &'a dyn Fn(&str) -> Option<f64>,
    /// The value of the `order`-th derivative of the function `name` at `x`, called as
    /// `(name, order, x)`; `None` if the function is unknown.
    pub functions: &'a dyn Fn(&str, u32, f64) -> Option<f64>,
}

/// Why an expression has no finite real value.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum EvalError {
    /// A symbol without a value.
    #[error("no value for symbol `{0}`")]
    UnknownSymbol(String),
    /// A function that is neither built in nor known to the evaluator.
    #[error("no values for function `{0}`")]
    UnknownFunction(String),
    /// Outside the real domain, a division by zero, or a non-finite result.
    #[error("not a finite real number: {0}")]
    Domain(String),
    /// Something this evaluator deliberately does not compute.
    #[error("cannot evaluate numerically: {0}")]
    Unsupported(String),
}

/// The built-in function `name` applied to `x`, or `None` if `name` is not built in.
fn builtin(name: &str, x: f64) -> Option<Result<f64, EvalError>> {
    let domain = |what: &str| Err(EvalError::Domain(format!("{what} of {x}")));
    let value = match name {
        "sin" => Ok(x.sin()),
        "cos" => Ok(x.cos()),
        "tan" => Ok(x.tan()),
        "exp" => Ok(x.exp()),
        "log" if x <= 0.0 => domain("log"),
        "log" => Ok(x.ln()),
        "sqrt" if x < 0.0 => domain("sqrt"),
        "sqrt" => Ok(x.sqrt()),
        "sinh" => Ok(x.sinh()),
        "cosh" => Ok(x.cosh()),
        "tanh" => Ok(x.tanh()),
        "atan" => Ok(x.atan()),
        "abs" => Ok(x.abs()),
        _ => return None,
    };
    Some(value.and_then(|v| finite(v, || format!("{name}({x})"))))
}

/// `v` if it is finite, else a domain error describing the step that produced it.
fn finite(v: f64, what: impl FnOnce() -> String) -> Result<f64, EvalError> {
    if v.is_finite() {
        Ok(v)
    } else {
        Err(EvalError::Domain(format!("{} is {v}", what())))
    }
}

/// `a^b` over the reals: a negative base needs an integer exponent.
fn power(a: f64, b: f64) -> Result<f64, EvalError> {
    let v = if a < 0.0 {
        if b.fract() != 0.0 {
            return Err(EvalError::Domain(format!(
                "negative base {a} to the non-integer power {b}"
            )));
        }
        match i32::try_from(b as i64) {
            // `b` is an integer here, so the cast is exact whenever it fits.
            Ok(n) if f64::from(n) == b => a.powi(n),
            _ => a.powf(b),
        }
    } else {
        a.powf(b)
    };
    finite(v, || format!("{a}^{b}"))
}

impl Expr {
    /// The value of this expression, with symbols and functions from `ev`.
    ///
    /// # Errors
    ///
    /// The first [`EvalError`] met, evaluating operands left to right.
    pub fn eval(&self, ev: &Evaluator) -> Result<f64, EvalError> {
        // Each kind of node has its own function, so the frame that recursion stacks up stays
        // small even in unoptimised builds.
        match &self.kind {
            ExprKind::Num(n) => {
                let v = n.to_f64().unwrap_or(f64::NAN);
                finite(v, || format!("the number {n} as a float"))
            }
            ExprKind::Ident(name) => symbol(name, ev),
            ExprKind::Neg(a) => Ok(-a.eval(ev)?),
            ExprKind::Binary(op, a, b) => binary(*op, a.eval(ev)?, b.eval(ev)?),
            ExprKind::Call {
                name, primes, arg, ..
            } => call(name, *primes, arg.eval(ev)?, ev),
            ExprKind::Atan2 { y, x, .. } => atan2(y.eval(ev)?, x.eval(ev)?),
            ExprKind::Deriv { .. } => Err(EvalError::Unsupported("derivative operator".into())),
        }
    }
}

/// `atan2(y, x)`, refused on its cut `x <= 0, y = 0`, where lingrav leaves it undefined.
fn atan2(y: f64, x: f64) -> Result<f64, EvalError> {
    if y == 0.0 && x <= 0.0 {
        return Err(EvalError::Domain(format!(
            "atan2({y}, {x}) on its cut (x <= 0, y = 0)"
        )));
    }
    finite(y.atan2(x), || format!("atan2({y}, {x})"))
}

fn symbol(name: &str, ev: &Evaluator) -> Result<f64, EvalError> {
    match (ev.values)(name) {
        Some(v) => finite(v, || format!("the value of `{name}`")),
        None if name == "pi" => Ok(std::f64::consts::PI),
        None => Err(EvalError::UnknownSymbol(name.to_string())),
    }
}

fn binary(op: BinOp, x: f64, y: f64) -> Result<f64, EvalError> {
    match op {
        BinOp::Add => finite(x + y, || format!("{x} + {y}")),
        BinOp::Sub => finite(x - y, || format!("{x} - {y}")),
        BinOp::Mul => finite(x * y, || format!("{x} * {y}")),
        BinOp::Div if y == 0.0 => Err(EvalError::Domain(format!("division of {x} by zero"))),
        BinOp::Div => finite(x / y, || format!("{x} / {y}")),
        BinOp::Pow => power(x, y),
    }
}

fn call(name: &str, primes: u32, x: f64, ev: &Evaluator) -> Result<f64, EvalError> {
    if primes == 0 {
        if let Some(v) = builtin(name, x) {
            return v;
        }
    } else if builtin(name, 0.0).is_some() {
        return Err(EvalError::Unsupported(format!(
            "derivative of the built-in function `{name}`"
        )));
    }
    match (ev.functions)(name, primes, x) {
        Some(v) => finite(v, || format!("`{name}` at {x}")),
        None => Err(EvalError::UnknownFunction(name.to_string())),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::parse::parse;
    use std::f64::consts::PI;

    fn values(name: &str) -> Option<f64> {
        match name {
            "x" => Some(0.5),
            "y" => Some(-2.0),
            "big" => Some(1e308),
            "inf" => Some(f64::INFINITY),
            _ => None,
        }
    }

    /// `F(u) = u^3`, with its derivatives; `G` returns a NaN.
    fn functions(name: &str, order: u32, u: f64) -> Option<f64> {
        match (name, order) {
            ("F", 0) => Some(u * u * u),
            ("F", 1) => Some(3.0 * u * u),
            ("F", 2) => Some(6.0 * u),
            ("G", _) => Some(f64::NAN),
            _ => None,
        }
    }

    fn eval(src: &str) -> Result<f64, EvalError> {
        let e = parse(src).unwrap_or_else(|err| panic!("{src:?} does not parse: {err}"));
        e.eval(&Evaluator {
            values: &values,
            functions: &functions,
        })
    }

    fn check(src: &str, want: f64) {
        match eval(src) {
            Ok(v) => assert!(
                (v - want).abs() <= 1e-12 * want.abs().max(1.0),
                "{src}: got {v}, want {want}"
            ),
            Err(e) => panic!("{src}: {e}"),
        }
    }

    fn check_err(src: &str, want: EvalError) {
        assert_eq!(eval(src), Err(want), "{src}");
    }

    fn domain(src: &str) {
        assert!(
            matches!(eval(src), Err(EvalError::Domain(_))),
            "{src}: expected a domain error, got {:?}",
            eval(src)
        );
    }

    #[test]
    fn arithmetic() {
        check("1 + 2*3", 7.0);
        check("1.5e-3 * 2000", 3.0);
        check("7/2 - x", 3.0);
        check("-x^2", -0.25);
        check("2^-3", 0.125);
        check("2^3^2", 512.0);
        check("x * y", -1.0);
    }

    #[test]
    fn builtins() {
        let x: f64 = 0.5;
        let table = [
            ("sin(x)", x.sin()),
            ("cos(x)", x.cos()),
            ("tan(x)", x.tan()),
            ("exp(x)", x.exp()),
            ("log(x)", x.ln()),
            ("sqrt(x)", x.sqrt()),
            ("sinh(x)", x.sinh()),
            ("cosh(x)", x.cosh()),
            ("tanh(x)", x.tanh()),
            ("sin(pi/6)", 0.5),
            ("pi", PI),
            ("log(exp(2))", 2.0),
        ];
        for (src, want) in table {
            check(src, want);
        }
    }

    #[test]
    fn values_may_redefine_pi() {
        let e = parse("pi + 1").expect("parses");
        let ev = Evaluator {
            values: &|n| (n == "pi").then_some(3.0),
            functions: &|_, _, _| None,
        };
        assert_eq!(e.eval(&ev), Ok(4.0));
    }

    #[test]
    fn arbitrary_functions_and_their_derivatives() {
        check("F(2)", 8.0);
        check("F'(2)", 12.0);
        check("F''(x + 1)", 9.0);
        check_err("F'''(1)", EvalError::UnknownFunction("F".into()));
        check_err("H(1)", EvalError::UnknownFunction("H".into()));
        domain("G(1)");
    }

    #[test]
    fn builtin_names_are_not_overridden() {
        let e = parse("sin(0)").expect("parses");
        let ev = Evaluator {
            values: &|_| None,
            functions: &|_, _, _| Some(42.0),
        };
        assert_eq!(e.eval(&ev), Ok(0.0));
    }

    #[test]
    fn negative_bases() {
        check("(-2)^3", -8.0);
        check("y^3", -8.0);
        check("y^(-2)", 0.25);
        check("y^(4/2)", 4.0);
        check("(-8)^1e2", 8f64.powi(100));
        domain("y^(1/3)");
        domain("y^x");
        // An integer exponent too large for powi still follows the rules of powf.
        check("(-1)^3000000001", -1.0);
    }

    #[test]
    fn domain_errors() {
        for src in [
            "log(0)",
            "log(-1)",
            "sqrt(-1)",
            "1/0",
            "x/(x - x)",
            "0^(-1)",
            "exp(1000)",
            "big * big",
            "big + big",
            "-big - big",
            "cosh(1000)",
            "inf",
            "1e400",
        ] {
            domain(src);
        }
    }

    #[test]
    fn unknowns_and_unsupported() {
        check_err("z + 1", EvalError::UnknownSymbol("z".into()));
        check_err("F(z)", EvalError::UnknownSymbol("z".into()));
        check_err(
            "d_x(x^2)",
            EvalError::Unsupported("derivative operator".into()),
        );
        check_err(
            "sin'(x)",
            EvalError::Unsupported("derivative of the built-in function `sin`".into()),
        );
    }

    #[test]
    fn left_operand_error_comes_first() {
        check_err("a / b", EvalError::UnknownSymbol("a".into()));
    }
}
