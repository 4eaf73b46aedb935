//! From canonical forms to tape nodes.
//!
//! A form is read through its printed text ([`Store::to_text`], the input syntax, which parses
//! back to an equal canonical form): sums, products, exact coefficients, integer and rational
//! powers (principal roots), and calls of the built-in functions or of an arbitrary function
//! with primes (`F''`). In that text `exp(i a)` pairs are already regrouped as `sin a` and
//! `cos a`, so a real expression usually compiles to a tape whose constants are all real.
//! Going through the text keeps this module on the store's public interface only. Names
//! resolve to inputs (the coordinates), constants (parameter values) or, inside a function's
//! sample, the sample's variable; `i` that is none of these is the imaginary unit (the text
//! of a non-real coefficient).
//!
//! Arbitrary functions `F^(n)(arg)` are evaluated through their samples: the sample is a form
//! in one variable, differentiated `n` times with [`Store::diff`] (this defines the sample's
//! derivatives; it is not a derivative of the perturbation) and compiled with its variable
//! bound to the compiled argument. Shared arguments and repeated calls share nodes through the
//! builder's hash-consing.

use super::{C64, Node, TapeBuilder};
use crate::canon::{Form, FunctionSample, Kernel, Q, Store};
use crate::expr::{BinOp, Expr, ExprKind};
use num_traits::{ToPrimitive, Zero};
use rustc_hash::FxHashMap;
use std::rc::Rc;

/// Why a form could not be compiled.
#[derive(Clone, Debug, PartialEq, Eq, thiserror::Error)]
pub enum TapeError {
    /// A symbol with no value: not an input and not a constant.
    #[error("`{0}` has no value: it is neither a coordinate nor a parameter")]
    Unbound(String),
    /// A symbol inside a function's sample other than its variable and the parameters.
    #[error("the sample of `{func}` uses `{name}`, which has no value there")]
    UnboundInSample {
        /// The function.
        func: String,
        /// The symbol.
        name: String,
    },
    /// An arbitrary function without a sample.
    #[error("the function `{0}` has no sample to evaluate it with")]
    NoSample(String),
    /// Differentiating a sample ran into a limit.
    #[error("cannot differentiate the sample of `{func}`: {why}")]
    Sample {
        /// The function.
        func: String,
        /// The limit that was hit.
        why: String,
    },
    /// A power too large for the tape.
    #[error("the power {0} is too large to evaluate")]
    Power(String),
    /// Samples that call each other without end.
    #[error("function samples nest deeper than {0} levels")]
    TooDeep(usize),
    /// The printed form did not read back (a bug in printing or parsing).
    #[error("internal: the printed form `{text}` does not read back: {why}")]
    Reread {
        /// The printed text, cut to a readable length.
        text: String,
        /// The parse error.
        why: String,
    },
    /// Something in the printed form that the tape does not evaluate.
    #[error("cannot evaluate `{0}` on a grid")]
    Unsupported(String),
}

const MAX_DEPTH: usize = 16;

/// Where a name is looked up.
enum Scope<'a> {
    /// The expressions themselves: inputs, then constants.
    Top,
    /// Inside the sample of `func`: its variable, then constants.
    Sample {
        func: &'a str,
        var: &'a str,
        arg: Node,
        depth: usize,
    },
}

/// Compiles forms of one store into one [`TapeBuilder`].
pub struct Compiler<'s> {
    store: &'s mut Store,
    /// The builder the nodes live in.
    pub builder: TapeBuilder,
    inputs: FxHashMap<String, usize>,
    constants: FxHashMap<String, f64>,
    samples: FxHashMap<Rc<str>, FunctionSample>,
    derivatives: FxHashMap<(Rc<str>, u32), Rc<Derivative>>,
    memo: FxHashMap<Form, Node>,
}

/// A sample's derivative: the name of its variable and the expression.
type Derivative = (String, Expr);

/// The exact value of a constant exponent written with numbers and `+ - * /`.
pub(crate) fn rational_of(e: &Expr) -> Option<Q> {
    match &e.kind {
        ExprKind::Num(q) => Some(q.clone()),
        ExprKind::Neg(a) => Some(-rational_of(a)?),
        ExprKind::Binary(op, a, b) => {
            let (x, y) = (rational_of(a)?, rational_of(b)?);
            match op {
                BinOp::Add => Some(x + y),
                BinOp::Sub => Some(x - y),
                BinOp::Mul => Some(x * y),
                BinOp::Div => (!y.is_zero()).then(|| x / y),
                BinOp::Pow => None,
            }
        }
        _ => None,
    }
}

fn cut(text: &str) -> String {
    if text.chars().count() > 200 {
        let c: String = text.chars().take(200).collect();
        format!("{c}...")
    } else {
        text.to_string()
    }
}

impl<'s> Compiler<'s> {
    /// A compiler whose inputs are the symbols `inputs` (input `i` is `inputs[i]`), with
    /// `constants` as the values of the other symbols, and `samples` for the arbitrary
    /// functions.
    pub fn new(
        store: &'s mut Store,
        inputs: &[&str],
        constants: &[(String, f64)],
        samples: &FxHashMap<Rc<str>, FunctionSample>,
    ) -> Compiler<'s> {
        Compiler {
            store,
            builder: TapeBuilder::new(inputs.len()),
            inputs: inputs
                .iter()
                .enumerate()
                .map(|(i, s)| (s.to_string(), i))
                .collect(),
            constants: constants.iter().cloned().collect(),
            samples: samples.clone(),
            derivatives: FxHashMap::default(),
            memo: FxHashMap::default(),
        }
    }

    /// The node computing `f`.
    ///
    /// # Errors
    ///
    /// A symbol without a value, a function without a sample, or a sample that cannot be
    /// differentiated within the store's limits.
    pub fn form(&mut self, f: Form) -> Result<Node, TapeError> {
        if let Some(&n) = self.memo.get(&f) {
            return Ok(n);
        }
        let e = self.reread(f)?;
        let n = self.expr(&e, &Scope::Top)?;
        self.memo.insert(f, n);
        Ok(n)
    }

    fn reread(&mut self, f: Form) -> Result<Expr, TapeError> {
        let text = self.store.to_text(f);
        crate::parse::parse(&text).map_err(|e| TapeError::Reread {
            text: cut(&text),
            why: e.to_string(),
        })
    }

    fn name(&mut self, n: &str, scope: &Scope<'_>) -> Result<Node, TapeError> {
        if n == "pi" {
            return Ok(self.builder.real(std::f64::consts::PI));
        }
        let unbound = match scope {
            Scope::Top => {
                if let Some(&i) = self.inputs.get(n) {
                    return Ok(self.builder.input(i));
                }
                TapeError::Unbound(n.to_string())
            }
            Scope::Sample { func, var, arg, .. } => {
                if n == *var {
                    return Ok(*arg);
                }
                TapeError::UnboundInSample {
                    func: func.to_string(),
                    name: n.to_string(),
                }
            }
        };
        match self.constants.get(n) {
            Some(&v) => Ok(self.builder.real(v)),
            None if n == "i" => Ok(self.builder.constant(C64::new(0.0, 1.0))),
            None => Err(unbound),
        }
    }

    fn expr(&mut self, e: &Expr, scope: &Scope<'_>) -> Result<Node, TapeError> {
        Ok(match &e.kind {
            ExprKind::Num(q) => {
                let v = q
                    .to_f64()
                    .ok_or_else(|| TapeError::Unsupported(q.to_string()))?;
                self.builder.real(v)
            }
            ExprKind::Ident(n) => self.name(n, scope)?,
            ExprKind::Neg(a) => {
                let a = self.expr(a, scope)?;
                self.builder.neg(a)
            }
            ExprKind::Binary(BinOp::Pow, base, exp) => {
                let x = self.expr(base, scope)?;
                match rational_of(exp) {
                    Some(q) => self.rational_power(x, &q)?,
                    None => {
                        // A symbolic exponent: a^b = exp(b log a), as the canonical form has it.
                        let y = self.expr(exp, scope)?;
                        let l = self.builder.log(x);
                        let p = self.builder.mul(y, l);
                        self.builder.exp(p)
                    }
                }
            }
            ExprKind::Binary(op, l, r) => {
                let x = self.expr(l, scope)?;
                let y = self.expr(r, scope)?;
                let bl = &mut self.builder;
                match op {
                    BinOp::Add => bl.add(x, y),
                    BinOp::Sub => bl.sub(x, y),
                    BinOp::Mul => bl.mul(x, y),
                    BinOp::Div => bl.div(x, y),
                    BinOp::Pow => unreachable!("handled above"),
                }
            }
            ExprKind::Call {
                name, primes, arg, ..
            } => {
                let a = self.expr(arg, scope)?;
                if *primes == 0
                    && let Some(n) = self.builtin(name, a)
                {
                    return Ok(n);
                }
                self.call(name, *primes, a, scope)?
            }
            ExprKind::Deriv { .. } => return Err(TapeError::Unsupported(cut(&e.to_string()))),
        })
    }

    fn builtin(&mut self, name: &str, a: Node) -> Option<Node> {
        let b = &mut self.builder;
        let half = |b: &mut TapeBuilder, x: Node| {
            let h = b.real(0.5);
            b.mul(h, x)
        };
        Some(match name {
            "sin" => b.sin(a),
            "cos" => b.cos(a),
            "tan" => {
                let (s, c) = (b.sin(a), b.cos(a));
                b.div(s, c)
            }
            "exp" => b.exp(a),
            "log" => b.log(a),
            "sqrt" => b.root(a, 2),
            "sinh" | "cosh" | "tanh" => {
                let p = b.exp(a);
                let na = b.neg(a);
                let m = b.exp(na);
                let s = b.sub(p, m);
                let c = b.add(p, m);
                match name {
                    "sinh" => half(b, s),
                    "cosh" => half(b, c),
                    _ => b.div(s, c),
                }
            }
            _ => return None,
        })
    }

    /// `x^q` with the principal branch: `x^(p/q) = (x^(1/q))^p`.
    fn rational_power(&mut self, x: Node, q: &Q) -> Result<Node, TapeError> {
        let too_big = || TapeError::Power(q.to_string());
        let num = q.numer().to_i32().ok_or_else(too_big)?;
        let den = q.denom().to_u32().ok_or_else(too_big)?;
        let r = self.builder.root(x, den);
        Ok(self.builder.powi(r, num))
    }

    /// `F^(order)(arg)`.
    fn call(
        &mut self,
        name: &str,
        order: u32,
        arg: Node,
        scope: &Scope<'_>,
    ) -> Result<Node, TapeError> {
        let depth = match scope {
            Scope::Top => 0,
            Scope::Sample { depth, .. } => *depth + 1,
        };
        if depth >= MAX_DEPTH {
            return Err(TapeError::TooDeep(MAX_DEPTH));
        }
        let d = self.derivative(name, order)?;
        let inner = Scope::Sample {
            func: name,
            var: &d.0,
            arg,
            depth,
        };
        self.expr(&d.1, &inner)
    }

    /// The `order`-th derivative of `name`'s sample, read back as an expression, with the
    /// name of the sample's variable.
    fn derivative(&mut self, name: &str, order: u32) -> Result<Rc<Derivative>, TapeError> {
        let key: (Rc<str>, u32) = (Rc::from(name), order);
        if let Some(d) = self.derivatives.get(&key) {
            return Ok(d.clone());
        }
        let sample = self
            .samples
            .get(name)
            .cloned()
            .ok_or_else(|| TapeError::NoSample(name.to_string()))?;
        let var = match self.store.kernel(sample.var) {
            Kernel::Sym(s) => s.to_string(),
            _ => return Err(TapeError::NoSample(name.to_string())),
        };
        let mut form = sample.form;
        for _ in 0..order {
            form = self
                .store
                .diff(form, sample.var)
                .map_err(|e| TapeError::Sample {
                    func: name.to_string(),
                    why: e.to_string(),
                })?;
        }
        let e = self.reread(form)?;
        let d = Rc::new((var, e));
        self.derivatives.insert(key, d.clone());
        Ok(d)
    }
}
