//! Jets of a parsed expression, evaluated as written.
//!
//! Model. An expression is evaluated at a point where some names are *active variables*
//! (the jet's variables: the coordinates, and every name that a `d_` operator differentiates
//! by), some are *parameters* (constants with a value at the point), some are *defines*
//! (named subexpressions, evaluated once per point and shared), and some calls are *arbitrary
//! functions* `F(a)`, `F''(a)`, known through a sample expression in `u`. The result is a jet
//! whose coefficients enclose the exact Taylor coefficients of the expression at the point.
//!
//! - `d_x_y(f)`: `f` is evaluated two orders higher and differentiated twice, exactly as the
//!   operator reads; nothing is simplified first.
//! - `F^(n)(a)`: the sample's univariate jet in `u` around (the enclosure of) the value of `a`
//!   gives `F^(n+k)(a0)`, which is composed with `a - a0`.
//! - `a^b`: an exponent that is an exact rational constant (`2`, `-3`, `1/2`, `4/2`) is a
//!   real power (integers allow any base, other rationals need a positive base); any other
//!   exponent means `exp(b ln a)`, which needs a positive base. A negative base with a
//!   fractional exponent is "cannot evaluate here", as in the principal branch it is complex.
//!
//! Key design decision: the orders are decided statically, before any point is evaluated.
//! A node evaluated at order `N` inside `k` nested `d_` operators needs order `N + k`; each
//! define is evaluated once per point at the highest order any of its uses needs (a jet of
//! lower order is a prefix of it), and each arbitrary function's sample at the highest
//! `primes + order` of its calls. So one [`JetSpace`] of the maximal order serves the whole
//! point, its size is checked (a clear error instead of exhausting memory), and defines are
//! evaluated in file order before the roots, so evaluation never recurses through a chain of
//! defines (the parser bounds the depth of each expression).
//!
//! **Invariant:** uses only the parsed tree ([`crate::expr`]) and enclosure arithmetic; never
//! the canonical form, the zero test or the tensor layer.

use super::scalar::{Scalar, factorial};
use super::series::{Jet, JetSpace, SpaceError};
use crate::expr::{BinOp, Expr, ExprKind, Span};
use num_rational::BigRational;
use num_traits::{ToPrimitive, Zero};
use rustc_hash::FxHashMap;
use std::rc::Rc;

/// The built-in functions, as the parser's users know them.
pub const BUILTINS: [&str; 11] = [
    "sin", "cos", "tan", "exp", "log", "sqrt", "sinh", "cosh", "tanh", "atan", "abs",
];

/// The variable of function samples.
pub const SAMPLE_VAR: &str = "u";

/// Why an expression cannot be evaluated anywhere (as opposed to "not at this point", which
/// is a `None` value).
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
pub enum EvalError {
    /// A name that is no variable, parameter, define or `pi`.
    #[error("unknown name `{0}`")]
    UnknownName(String, Span),
    /// A call of a name that is neither built in nor an arbitrary function with a sample.
    #[error("unknown function `{0}`")]
    UnknownFunction(String, Span),
    /// `sin'(x)`: primes are for arbitrary functions.
    #[error("`{0}` is built in; primes mark derivatives of arbitrary functions only")]
    PrimedBuiltin(String, Span),
    /// `d_r(...)` where `r` is a define or `pi`.
    #[error("cannot differentiate by `{0}`: it is not a variable or parameter")]
    NotAVariable(String, Span),
    /// A variable or parameter without a value at the point.
    #[error("no value for `{0}` at the point")]
    MissingValue(String),
    /// The jets would be too large.
    #[error(transparent)]
    TooLarge(#[from] SpaceError),
    /// An exponent too large to be a machine integer.
    #[error("exponent out of range at {0:?}")]
    Exponent(Span),
}

/// What the names of the expressions stand for.
#[derive(Clone, Debug, Default)]
pub struct Scope {
    /// Active variables (jet variables), in order. Names differentiated by `d_` are added.
    /// When every root is wanted at order 0, these are constants at the point unless a
    /// `d_` differentiates by them (see [`Program::of_scope`]).
    pub vars: Vec<String>,
    /// Names that are constants with a value at each point.
    pub parameters: Vec<String>,
    /// Named subexpressions, in order; each may use only those before it.
    pub defines: Vec<(String, Expr)>,
    /// Arbitrary functions with their samples in [`SAMPLE_VAR`] (which may use `u`, the
    /// parameters, `pi` and built-in functions).
    pub functions: Vec<(String, Expr)>,
}

/// Orders and tables decided before evaluation: see the module documentation.
#[derive(Debug)]
pub struct Program {
    vars: Vec<String>,
    var_index: FxHashMap<String, usize>,
    parameters: Vec<String>,
    defines: Vec<(String, Expr)>,
    define_index: FxHashMap<String, usize>,
    /// Order at which each define is evaluated; `None`: not used.
    define_order: Vec<Option<u32>>,
    /// Samples of the arbitrary functions that are called, by name.
    samples: FxHashMap<String, Sample>,
    roots: Vec<(Expr, u32)>,
    space: Rc<JetSpace>,
}

/// A function sample as a program of its own, with the order its calls need.
#[derive(Debug)]
struct Sample {
    program: Program,
    /// Position of the monomials `u^k` in the sample's space.
    u_powers: Vec<usize>,
}

/// What the static walk collects.
#[derive(Default)]
struct Needs {
    define_order: Vec<Option<u32>>,
    fn_order: FxHashMap<String, u32>,
    dvars: Vec<String>,
    max_order: u32,
}

impl Program {
    /// Plans the evaluation of `roots`, each `(expression, order)`.
    ///
    /// # Errors
    ///
    /// An unknown name or function, a primed built-in, `d_` by a define, or jets that would
    /// be too large.
    pub fn new(scope: &Scope, roots: Vec<(Expr, u32)>) -> Result<Program, EvalError> {
        Program::of_scope(scope.clone(), roots)
    }

    /// [`Program::new`] taking the scope by value: its defines move into the program
    /// instead of being copied (a problem's defines can be long polynomials).
    ///
    /// # Errors
    ///
    /// As [`Program::new`].
    pub fn of_scope(scope: Scope, roots: Vec<(Expr, u32)>) -> Result<Program, EvalError> {
        Program::planned(scope, roots, true)
    }

    /// [`Program::of_scope`]; `prune`: let variables nothing differentiates by be constants
    /// when every root is wanted at order 0 (not for a sample, whose variable is read by its
    /// position).
    fn planned(
        mut scope: Scope,
        roots: Vec<(Expr, u32)>,
        prune: bool,
    ) -> Result<Program, EvalError> {
        // When every root is wanted as a value (order 0), a variable enters the jets only
        // if something differentiates by it (`d_t(...)`, added below); the others are
        // constants at the point, exactly as parameters are. A jet in one variable instead of
        // four is the same value with a fraction of the coefficients.
        if prune && roots.iter().all(|(_, order)| *order == 0) {
            let vars = std::mem::take(&mut scope.vars);
            for v in vars {
                if !scope.parameters.contains(&v) {
                    scope.parameters.push(v);
                }
            }
        }
        let define_index: FxHashMap<String, usize> = scope
            .defines
            .iter()
            .enumerate()
            .map(|(i, (n, _))| (n.clone(), i))
            .collect();
        let mut p = Program {
            vars: scope.vars.clone(),
            var_index: FxHashMap::default(),
            parameters: scope.parameters.clone(),
            defines: std::mem::take(&mut scope.defines),
            define_index,
            define_order: Vec::new(),
            samples: FxHashMap::default(),
            roots,
            space: JetSpace::new(0, 0)?,
        };
        let mut needs = Needs {
            define_order: vec![None; p.defines.len()],
            ..Needs::default()
        };
        for (e, order) in &p.roots {
            p.walk(e, *order, &scope, &mut needs)?;
        }
        // Defines use only earlier defines, so one backward pass settles every order.
        for i in (0..p.defines.len()).rev() {
            if let Some(order) = needs.define_order[i] {
                p.walk(&p.defines[i].1, order, &scope, &mut needs)?;
            }
        }
        for v in needs.dvars {
            if !p.vars.contains(&v) {
                p.vars.push(v);
            }
        }
        p.var_index = p
            .vars
            .iter()
            .enumerate()
            .map(|(i, v)| (v.clone(), i))
            .collect();
        p.define_order = needs.define_order;
        p.space = JetSpace::new(p.vars.len(), needs.max_order)?;
        for (name, order) in needs.fn_order {
            let Some((_, sample)) = scope.functions.iter().find(|(n, _)| *n == name) else {
                continue;
            };
            // The sample's own variable shadows an outer name `u`.
            let sub = Scope {
                vars: vec![SAMPLE_VAR.to_string()],
                parameters: scope
                    .parameters
                    .iter()
                    .filter(|p| *p != SAMPLE_VAR)
                    .cloned()
                    .collect(),
                defines: Vec::new(),
                functions: Vec::new(),
            };
            let program = Program::planned(sub, vec![(sample.clone(), order)], false)?;
            let u_powers = (0..=order)
                .map(|k| {
                    let mut exps = vec![0u8; program.vars.len()];
                    exps[0] = k as u8;
                    program.space.position(&exps).unwrap_or(usize::MAX)
                })
                .collect();
            p.samples.insert(name, Sample { program, u_powers });
        }
        Ok(p)
    }

    /// The active variables, in jet order (the scope's, then names differentiated by `d_`).
    pub fn vars(&self) -> &[String] {
        &self.vars
    }

    /// The space of this program's jets.
    #[cfg(test)]
    pub fn space(&self) -> &Rc<JetSpace> {
        &self.space
    }

    fn walk(&self, e: &Expr, order: u32, scope: &Scope, n: &mut Needs) -> Result<(), EvalError> {
        n.max_order = n.max_order.max(order);
        match &e.kind {
            ExprKind::Num(_) => Ok(()),
            ExprKind::Ident(name) => {
                if let Some(&i) = self.define_index.get(name) {
                    let o = &mut n.define_order[i];
                    *o = Some(o.map_or(order, |o| o.max(order)));
                    Ok(())
                } else if self.vars.contains(name) || self.parameters.contains(name) || name == "pi"
                {
                    Ok(())
                } else {
                    Err(EvalError::UnknownName(name.clone(), e.span))
                }
            }
            ExprKind::Neg(a) => self.walk(a, order, scope, n),
            ExprKind::Binary(_, a, b) => {
                self.walk(a, order, scope, n)?;
                self.walk(b, order, scope, n)
            }
            ExprKind::Call {
                name,
                name_span,
                primes,
                arg,
            } => {
                if BUILTINS.contains(&name.as_str()) {
                    if *primes > 0 {
                        return Err(EvalError::PrimedBuiltin(name.clone(), *name_span));
                    }
                } else if scope.functions.iter().any(|(f, _)| f == name) {
                    let need = order.saturating_add(*primes);
                    let o = n.fn_order.entry(name.clone()).or_insert(need);
                    *o = (*o).max(need);
                } else {
                    return Err(EvalError::UnknownFunction(name.clone(), *name_span));
                }
                self.walk(arg, order, scope, n)
            }
            ExprKind::Atan2 { y, x, .. } => {
                self.walk(y, order, scope, n)?;
                self.walk(x, order, scope, n)
            }
            ExprKind::Deriv { vars, arg } => {
                for (v, span) in vars {
                    if self.define_index.contains_key(v) || v == "pi" {
                        return Err(EvalError::NotAVariable(v.clone(), *span));
                    }
                    if !self.vars.contains(v) && !self.parameters.contains(v) {
                        return Err(EvalError::UnknownName(v.clone(), *span));
                    }
                    if !n.dvars.contains(v) {
                        n.dvars.push(v.clone());
                    }
                }
                let k = u32::try_from(vars.len()).unwrap_or(u32::MAX);
                self.walk(arg, order.saturating_add(k), scope, n)
            }
        }
    }

    /// Evaluates every root at the point given by `values` (every active variable and
    /// parameter must have one): `None` for a root that cannot be evaluated there.
    ///
    /// # Errors
    ///
    /// [`EvalError::MissingValue`] if a variable or parameter has no value.
    pub fn eval_roots<S: Scalar>(
        &self,
        values: &FxHashMap<String, S>,
        ctx: &S::Ctx,
    ) -> Result<Vec<Option<Jet<S>>>, EvalError> {
        let mut ev = Evaluation::new(self, values, ctx)?;
        Ok(self
            .roots
            .iter()
            .map(|(e, order)| ev.eval(e, *order).ok())
            .collect())
    }
}

/// Why a node has no jet: "cannot evaluate here" (the whole expression is then `None`).
struct Here;

trait OrHere<T> {
    fn here(self) -> Result<T, Here>;
}

impl<T> OrHere<T> for Option<T> {
    fn here(self) -> Result<T, Here> {
        self.ok_or(Here)
    }
}

/// One point's evaluation: the values and the memoised defines.
struct Evaluation<'p, S: Scalar> {
    p: &'p Program,
    values: &'p FxHashMap<String, S>,
    ctx: &'p S::Ctx,
    defines: Vec<Option<Jet<S>>>,
    /// Rational powers and built-in functions of a name (`x^3`, `r^(1/2)`, `sin(phase)`),
    /// which recur across the terms of a polynomial or the components of a wave: the name's
    /// value is fixed at the point, so each is computed once per operation and order (the
    /// same computation, done once).
    applied: FxHashMap<String, Vec<(Applied, u32, Jet<S>)>>,
}

/// An operation applied to a name, as memoised by an evaluation.
#[derive(Clone, Debug, PartialEq)]
enum Applied {
    Pow(BigRational),
    Builtin(&'static str),
    /// A function given by a sample (its name), differentiated this many times.
    Sample(String, u32),
}

/// An exact rational if `e` is a constant built from numbers by `+ - * /` and integer
/// powers (so `-2`, `4/2`, `(1/2)^3` are exact exponents).
pub fn exact_rational(e: &Expr) -> Option<BigRational> {
    match &e.kind {
        ExprKind::Num(q) => Some(q.clone()),
        ExprKind::Neg(a) => Some(-exact_rational(a)?),
        ExprKind::Binary(op, a, b) => {
            let (x, y) = (exact_rational(a)?, exact_rational(b)?);
            match op {
                BinOp::Add => Some(x + y),
                BinOp::Sub => Some(x - y),
                BinOp::Mul => Some(x * y),
                BinOp::Div => (!y.is_zero()).then(|| x / y),
                BinOp::Pow => {
                    // Keep the numbers small: exponents up to 64 in size.
                    let n = y.is_integer().then(|| y.to_integer().to_i32())??;
                    if n.unsigned_abs() > 64 || (n < 0 && x.is_zero()) {
                        return None;
                    }
                    Some(num_traits::Pow::pow(x, n))
                }
            }
        }
        _ => None,
    }
}

impl<'p, S: Scalar> Evaluation<'p, S> {
    fn new(
        p: &'p Program,
        values: &'p FxHashMap<String, S>,
        ctx: &'p S::Ctx,
    ) -> Result<Self, EvalError> {
        for name in p.vars.iter().chain(&p.parameters) {
            if !values.contains_key(name) {
                return Err(EvalError::MissingValue(name.clone()));
            }
        }
        let mut ev = Evaluation {
            p,
            values,
            ctx,
            defines: Vec::with_capacity(p.defines.len()),
            applied: FxHashMap::default(),
        };
        for (i, (_, e)) in p.defines.iter().enumerate() {
            let v = match p.define_order[i] {
                Some(order) => ev.eval(e, order).ok(),
                None => None,
            };
            ev.defines.push(v);
        }
        Ok(ev)
    }

    fn constant(&self, order: u32, v: S) -> Jet<S> {
        Jet::constant(&self.p.space, order, v)
    }

    fn eval(&mut self, e: &Expr, order: u32) -> Result<Jet<S>, Here> {
        match &e.kind {
            ExprKind::Num(q) => Ok(self.constant(order, S::from_rational(q, self.ctx).here()?)),
            ExprKind::Ident(name) => self.ident(name, order),
            ExprKind::Neg(a) => Ok(self.eval(a, order)?.neg()),
            ExprKind::Binary(op, a, b) => self.binary(*op, a, b, order),
            ExprKind::Call {
                name, primes, arg, ..
            } => self.call(name, *primes, arg, order),
            ExprKind::Atan2 { y, x, .. } => {
                let (y, x) = (self.eval(y, order)?, self.eval(x, order)?);
                atan2(&y, &x, self.ctx).here()
            }
            ExprKind::Deriv { vars, arg } => self.deriv(vars, arg, order),
        }
    }

    fn ident(&mut self, name: &str, order: u32) -> Result<Jet<S>, Here> {
        if let Some(&i) = self.p.define_index.get(name) {
            return Ok(self.defines.get(i).here()?.as_ref().here()?.truncate(order));
        }
        if let Some(&v) = self.p.var_index.get(name) {
            let x = self.values.get(name).here()?.clone();
            return Ok(Jet::variable(&self.p.space, order, v, x));
        }
        if let Some(x) = self.values.get(name) {
            return Ok(self.constant(order, x.clone()));
        }
        // Checked statically: the only other name is pi.
        Ok(self.constant(order, S::pi(self.ctx).here()?))
    }

    fn binary(&mut self, op: BinOp, a: &Expr, b: &Expr, order: u32) -> Result<Jet<S>, Here> {
        if op == BinOp::Pow {
            // A written number is its own exact exponent (no copy needed).
            let computed;
            let r = match &b.kind {
                ExprKind::Num(q) => Some(q),
                _ => {
                    computed = exact_rational(b);
                    computed.as_ref()
                }
            };
            if let Some(r) = r {
                if let ExprKind::Ident(name) = &a.kind {
                    return self.name_power(name, r, order);
                }
                return self.eval(a, order)?.pow_rational(r, self.ctx).here();
            }
        }
        if op == BinOp::Mul
            && let Some(j) = self.product_in_place(a, b, order)?
        {
            return Ok(j);
        }
        let x = self.eval(a, order)?;
        let y = self.eval(b, order)?;
        match op {
            BinOp::Add => x.add_into(&y),
            BinOp::Sub => x.sub_into(&y),
            BinOp::Mul => x.mul_into(y),
            BinOp::Div => x.div(&y, self.ctx),
            BinOp::Pow => x.pow(&y, self.ctx),
        }
        .here()
    }

    /// `a * b` without the jet of a factor that is a written number or a variable: the
    /// other factor's jet scaled, or shifted by the variable, in place. The same operations
    /// as the general product of the two jets ([`Jet::mul_into`]), so the same enclosures;
    /// `None` when neither shape applies.
    fn product_in_place(&mut self, a: &Expr, b: &Expr, order: u32) -> Result<Option<Jet<S>>, Here> {
        // A constant's jet has the order `order` at most the space's.
        let constant_order = order.min(self.p.space.max_order());
        if let ExprKind::Num(q) = &a.kind {
            let k = S::from_rational(q, self.ctx).here()?;
            let y = self.eval(b, order)?;
            return y.scale_prefix_into(constant_order, &k).here().map(Some);
        }
        if let ExprKind::Num(q) = &b.kind {
            let x = self.eval(a, order)?;
            let k = S::from_rational(q, self.ctx).here()?;
            return x.scale_prefix_into(constant_order, &k).here().map(Some);
        }
        let ExprKind::Ident(name) = &b.kind else {
            return Ok(None);
        };
        if self.p.define_index.contains_key(name) {
            return Ok(None);
        }
        let Some(&v) = self.p.var_index.get(name) else {
            return Ok(None);
        };
        let x = self.eval(a, order)?;
        let value = self.values.get(name).here()?;
        match x.mul_variable_into(order, v, value) {
            Ok(j) => j.here().map(Some),
            Err(x) => {
                let y = Jet::variable(&self.p.space, order, v, value.clone());
                x.mul_into(y).here().map(Some)
            }
        }
    }

    /// `name^r`, memoised per point (see `applied`).
    fn name_power(&mut self, name: &str, r: &BigRational, order: u32) -> Result<Jet<S>, Here> {
        if let Some(j) = self.recall(name, order, |op| matches!(op, Applied::Pow(q) if q == r)) {
            return Ok(j);
        }
        let ctx = self.ctx;
        let j = self.ident(name, order)?.pow_rational(r, ctx).here()?;
        self.remember(name, Applied::Pow(r.clone()), order, &j);
        Ok(j)
    }

    /// A memoised result, if `name` had an operation `is_op` applied at `order`.
    fn recall(&self, name: &str, order: u32, is_op: impl Fn(&Applied) -> bool) -> Option<Jet<S>> {
        let done = self.applied.get(name)?;
        done.iter()
            .find(|(o, n, _)| *n == order && is_op(o))
            .map(|(_, _, j)| j.clone())
    }

    fn remember(&mut self, name: &str, op: Applied, order: u32, j: &Jet<S>) {
        match self.applied.get_mut(name) {
            Some(v) => v.push((op, order, j.clone())),
            None => {
                self.applied
                    .insert(name.to_string(), vec![(op, order, j.clone())]);
            }
        }
    }

    /// `op` applied to the jet of `name` at `order`, computed once per point.
    fn memoised(
        &mut self,
        name: &str,
        op: Applied,
        order: u32,
        f: impl FnOnce(&Jet<S>) -> Option<Jet<S>>,
    ) -> Result<Jet<S>, Here> {
        if let Some(j) = self.recall(name, order, |o| *o == op) {
            return Ok(j);
        }
        let j = f(&self.ident(name, order)?).here()?;
        self.remember(name, op, order, &j);
        Ok(j)
    }

    /// The built-in function `name` (one of [`BUILTINS`]) of a jet.
    fn builtin(name: &str, a: &Jet<S>, c: &S::Ctx) -> Option<Jet<S>> {
        match name {
            "sin" => a.sin(c),
            "cos" => a.cos(c),
            "tan" => a.tan(c),
            "exp" => a.exp(c),
            "log" => a.ln(c),
            "sqrt" => a.sqrt(c),
            "sinh" => a.sinh(c),
            "cosh" => a.cosh(c),
            "tanh" => a.tanh(c),
            "atan" => a.atan(c),
            "abs" => a.abs(),
            _ => None,
        }
    }

    fn call(&mut self, name: &str, primes: u32, arg: &Expr, order: u32) -> Result<Jet<S>, Here> {
        let c = self.ctx;
        if let Some(&f) = BUILTINS.iter().find(|b| **b == name) {
            if let ExprKind::Ident(x) = &arg.kind {
                return self.memoised(x, Applied::Builtin(f), order, |a| Self::builtin(f, a, c));
            }
            return Self::builtin(f, &self.eval(arg, order)?, c).here();
        }
        // A sample of a name (`X(t)`, `F(u)`): the same name and derivative recur across
        // the parts of a problem (a body's position, its quadrupole, the claim), so it is
        // computed once per point, order and derivative.
        if let ExprKind::Ident(x) = &arg.kind {
            let is_this =
                |op: &Applied| matches!(op, Applied::Sample(n, k) if n == name && *k == primes);
            if let Some(j) = self.recall(x, order, is_this) {
                return Ok(j);
            }
            let j = self.sampled(name, primes, arg, order)?;
            self.remember(x, Applied::Sample(name.to_string(), primes), order, &j);
            return Ok(j);
        }
        self.sampled(name, primes, arg, order)
    }

    /// The function `name`, given by a sample, differentiated `primes` times, of `arg`.
    fn sampled(&mut self, name: &str, primes: u32, arg: &Expr, order: u32) -> Result<Jet<S>, Here> {
        let c = self.ctx;
        let a = self.eval(arg, order)?;
        let sample = self.p.samples.get(name).here()?;
        let k_max = if a.is_constant() { 0 } else { a.order() };
        let u = sample_coeffs(sample, a.value(), self.values, c, primes + k_max)?;
        // F^(n)(a0 + s) = sum_k F^(n+k)(a0)/k! s^k, and F^(n+k)(a0) = (n+k)! u_{n+k}.
        let mut g = Vec::with_capacity(k_max as usize + 1);
        for k in 0..=k_max {
            g.push(
                u[(primes + k) as usize]
                    .mul(&rising(k, primes, c).here()?)
                    .here()?,
            );
        }
        a.compose(&g).here()
    }

    fn deriv(&mut self, vars: &[(String, Span)], arg: &Expr, order: u32) -> Result<Jet<S>, Here> {
        let k = u32::try_from(vars.len()).map_err(|_| Here)?;
        let mut j = self.eval(arg, order + k)?;
        for (v, _) in vars {
            let i = *self.p.var_index.get(v).here()?;
            j = j.derivative(i).here()?;
        }
        Ok(j)
    }
}

/// `atan2(y, x)` of jets, by the half-plane the point lies in (certified), independently of
/// the canonical form's half-angle formula: `atan(y/x)` where `x > 0`, `pi/2 - atan(x/y)`
/// where `y > 0` and `-pi/2 - atan(x/y)` where `y < 0` (each the principal angle of `(x, y)`
/// on its open half-plane, which covers the plane off the cut `x <= 0, y = 0`). `None` where
/// no half-plane is certified (near the cut or the origin).
fn atan2<S: Scalar>(y: &Jet<S>, x: &Jet<S>, c: &S::Ctx) -> Option<Jet<S>> {
    if x.value().is_positive() {
        return y.div(x, c)?.atan(c);
    }
    let sign = if y.value().is_positive() {
        1
    } else if y.value().neg().is_positive() {
        -1
    } else {
        return None;
    };
    let half_pi = S::pi(c)?.div(&S::from_rational(&BigRational::from_integer(2.into()), c)?)?;
    let quarter = Jet::constant(x.space(), x.order(), half_pi);
    let a = x.div(y, c)?.atan(c)?;
    if sign > 0 {
        quarter.sub(&a)
    } else {
        quarter.neg().sub(&a)
    }
}

/// `(k + n)! / k!`, the exact integer `(k + 1) (k + 2) ... (k + n)`: in machine integers
/// while it fits, else through the factorials.
fn rising<S: Scalar>(k: u32, n: u32, c: &S::Ctx) -> Option<S> {
    let mut p: i64 = 1;
    for j in k + 1..=k + n {
        match p.checked_mul(i64::from(j)) {
            Some(q) => p = q,
            None => return S::from_rational(&(factorial(k + n) / factorial(k)), c),
        }
    }
    S::from_i64(p, c)
}

/// The Taylor coefficients `u_k = F^(k)(u0)/k!`, `k = 0..=n`, of a sample at `u0`.
fn sample_coeffs<S: Scalar>(
    sample: &Sample,
    u0: &S,
    outer: &FxHashMap<String, S>,
    ctx: &S::Ctx,
    n: u32,
) -> Result<Vec<S>, Here> {
    let prog = &sample.program;
    let mut values: FxHashMap<String, S> = FxHashMap::default();
    values.insert(SAMPLE_VAR.to_string(), u0.clone());
    for p in &prog.parameters {
        if let Some(v) = outer.get(p) {
            values.insert(p.clone(), v.clone());
        }
    }
    let mut ev = Evaluation::new(prog, &values, ctx).map_err(|_| Here)?;
    let (e, order) = &prog.roots[0];
    let j = ev.eval(e, *order)?;
    (0..=n as usize)
        .map(|k| {
            let pos = *sample.u_powers.get(k).here()?;
            j.coeffs().get(pos).cloned().here()
        })
        .collect()
}

/// The names an expression uses as values or `d_` variables, except `pi`, in order of first
/// appearance.
pub fn free_names(e: &Expr) -> Vec<String> {
    let mut out: Vec<String> = Vec::new();
    e.walk(&mut |node| {
        let mut add = |n: &str| {
            if n != "pi" && !out.iter().any(|o| o == n) {
                out.push(n.to_string());
            }
        };
        match &node.kind {
            ExprKind::Ident(n) => add(n),
            ExprKind::Deriv { vars, .. } => vars.iter().for_each(|(v, _)| add(v)),
            _ => {}
        }
    });
    out
}

/// The names called as functions that are not built in, in order of first appearance.
pub fn called_functions(e: &Expr) -> Vec<String> {
    let mut out: Vec<String> = Vec::new();
    e.walk(&mut |node| {
        if let ExprKind::Call { name, .. } = &node.kind
            && !BUILTINS.contains(&name.as_str())
            && !out.contains(name)
        {
            out.push(name.clone());
        }
    });
    out
}

/// An exact integer as a rational.
#[cfg(test)]
fn int(n: i64) -> BigRational {
    BigRational::from_integer(n.into())
}

#[cfg(test)]
mod tests;
