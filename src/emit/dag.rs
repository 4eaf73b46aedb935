//! Expressions as a hash-consed DAG, built from the engine's real-form printing trees, and
//! the choice of common subexpressions.
//!
//! Every distinct subtree (same operation on the same children) is one node, so a
//! subexpression written twice, in one component or in two, is one node with two uses. A
//! node with two or more uses that is not a number or a variable becomes a temporary.

use crate::canon::{CResult, Coeff, Form, FunctionSample, Pretty, Store};
use rustc_hash::FxHashMap;
use std::rc::Rc;

/// A node id.
pub type Id = u32;

/// A built-in function of one argument.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Fun {
    /// sin.
    Sin,
    /// cos.
    Cos,
    /// exp.
    Exp,
    /// The natural logarithm.
    Log,
}

/// One node.
#[derive(Clone, Debug, PartialEq, Eq, Hash)]
pub enum Op {
    /// A constant (the bits of an f64).
    Num(u64),
    /// Variable `i`: 0..4 the coordinates t, x, y, z, then the parameters in file order.
    Var(u32),
    /// A built-in function.
    Call(Fun, Id),
    /// `base^n`, n >= 2.
    Pow(Id, u32),
    /// The principal `arg^(1/q)`.
    Root(Id, u32),
    /// `coefficient * product(numerator) / product(denominator)` (coefficient bits).
    Prod(u64, Vec<Id>, Vec<Id>),
    /// A sum.
    Sum(Vec<Id>),
    /// `a / b`.
    Quot(Id, Id),
    /// Derivative `order` of the user-supplied function number `f` (file order), at `arg`.
    User(u32, u32, Id),
}

/// Why an expression cannot be turned into code.
#[derive(Clone, Debug, PartialEq, Eq, thiserror::Error)]
pub enum DagError {
    /// A coefficient that is not a finite real number.
    #[error("the expression has a coefficient {0} that is not a finite real number")]
    NotReal(String),
    /// A name that is neither a coordinate, a parameter, a function nor `pi`.
    #[error("the expression uses `{0}`, which is not a coordinate or parameter")]
    Unknown(String),
    /// The algebra stopped (differentiating a sample).
    #[error("the algebra stopped: {0}")]
    Algebra(String),
}

/// The variables and functions that names resolve to.
pub struct Symbols {
    /// Variable names: t, x, y, z, then the parameters.
    pub vars: Vec<String>,
    /// Function names (file order) and their samples.
    pub functions: Vec<(String, FunctionSample)>,
    /// True to replace functions by their samples, false to call user-supplied ones.
    pub inline_samples: bool,
}

/// The DAG.
#[derive(Default)]
pub struct Dag {
    nodes: Vec<Op>,
    index: FxHashMap<Op, Id>,
    derivatives: FxHashMap<(u32, u32), Rc<Pretty>>,
}

/// A complex value as real nodes: `None` is exactly zero. `re_value` and `im_value` hold
/// the parts of a constant before they become nodes.
#[derive(Clone, Copy, Debug, Default)]
struct Cx {
    re: Option<Id>,
    im: Option<Id>,
    re_value: Option<f64>,
    im_value: Option<f64>,
}

impl Cx {
    fn real(r: Id) -> Cx {
        Cx {
            re: Some(r),
            ..Cx::default()
        }
    }

    fn constant(re: f64, im: f64) -> Cx {
        Cx {
            re_value: (re != 0.0).then_some(re),
            im_value: (im != 0.0).then_some(im),
            ..Cx::default()
        }
    }
}

/// What the name `u` means while a sample is being read.
enum Scope {
    Top,
    Sample(Id),
}

impl Dag {
    /// An empty DAG.
    #[must_use]
    pub fn new() -> Dag {
        Dag::default()
    }

    /// Node `id`.
    #[must_use]
    pub fn op(&self, id: Id) -> &Op {
        &self.nodes[id as usize]
    }

    fn push(&mut self, op: Op) -> Id {
        if let Some(&i) = self.index.get(&op) {
            return i;
        }
        let i = self.nodes.len() as Id;
        self.nodes.push(op.clone());
        self.index.insert(op, i);
        i
    }

    /// The constant `v`.
    pub fn num(&mut self, v: f64) -> Id {
        self.push(Op::Num((v + 0.0).to_bits()))
    }

    /// The node of the exact form `f`: the real part of its printing tree (the form is real;
    /// its tree can still hold `i` where an exponent `i Q` has a denominator, and then the
    /// real and imaginary parts are carried separately, assuming every symbol real).
    ///
    /// # Errors
    ///
    /// An unknown name, a sample that cannot be differentiated, or a complex argument where
    /// only a real one can be written (a root, a logarithm, a supplied function).
    pub fn form(&mut self, store: &mut Store, syms: &Symbols, f: Form) -> Result<Id, DagError> {
        if store.is_zero(f) {
            return Ok(self.num(0.0));
        }
        let p = store.pretty(f);
        self.real_part(store, syms, &p)
    }

    /// The node of the real part of a printing tree (every symbol taken as real).
    ///
    /// # Errors
    ///
    /// As [`Dag::form`].
    pub fn real_part(
        &mut self,
        store: &mut Store,
        syms: &Symbols,
        p: &Pretty,
    ) -> Result<Id, DagError> {
        let z = self.tree(store, syms, p, &Scope::Top)?;
        Ok(match z.re {
            Some(r) => r,
            None => self.num(0.0),
        })
    }

    fn coeff(c: &Coeff) -> Result<Cx, DagError> {
        let part = |c: Coeff| -> Result<f64, DagError> {
            let v = match c.as_rational() {
                Some(q) => num_traits::ToPrimitive::to_f64(&q).unwrap_or(f64::NAN),
                None => c.to_f64().0,
            };
            if v.is_finite() {
                Ok(v)
            } else {
                Err(DagError::NotReal(c.to_string()))
            }
        };
        let re = part(c.re())?;
        let im = part(c.im())?;
        Ok(Cx::constant(re, im))
    }

    fn constant_of(&self, n: Id) -> Option<f64> {
        match self.op(n) {
            Op::Num(b) => Some(f64::from_bits(*b)),
            _ => None,
        }
    }

    /// `a * b` of real parts (`None` is exactly zero).
    fn rmul(&mut self, a: Option<Id>, b: Option<Id>) -> Option<Id> {
        let (a, b) = (a?, b?);
        match (self.constant_of(a), self.constant_of(b)) {
            (Some(x), Some(y)) => Some(self.num(x * y)),
            (Some(1.0), _) => Some(b),
            (_, Some(1.0)) => Some(a),
            (Some(c), _) => Some(self.push(Op::Prod((c + 0.0).to_bits(), vec![b], vec![]))),
            (_, Some(c)) => Some(self.push(Op::Prod((c + 0.0).to_bits(), vec![a], vec![]))),
            _ => Some(self.push(Op::Prod(1f64.to_bits(), vec![a, b], vec![]))),
        }
    }

    fn radd(&mut self, a: Option<Id>, b: Option<Id>) -> Option<Id> {
        match (a, b) {
            (None, x) | (x, None) => x,
            (Some(a), Some(b)) => Some(self.push(Op::Sum(vec![a, b]))),
        }
    }

    fn rneg(&mut self, a: Option<Id>) -> Option<Id> {
        let a = a?;
        Some(match self.constant_of(a) {
            Some(c) => self.num(-c),
            None => self.push(Op::Prod((-1f64).to_bits(), vec![a], vec![])),
        })
    }

    fn rdiv(&mut self, a: Option<Id>, b: Id) -> Option<Id> {
        let a = a?;
        Some(self.push(Op::Quot(a, b)))
    }

    fn cmul(&mut self, x: Cx, y: Cx) -> Cx {
        let rr = self.rmul(x.re, y.re);
        let ii = self.rmul(x.im, y.im);
        let nii = self.rneg(ii);
        let ri = self.rmul(x.re, y.im);
        let ir = self.rmul(x.im, y.re);
        Cx {
            re: self.radd(rr, nii),
            im: self.radd(ri, ir),
            ..Cx::default()
        }
    }

    fn cdiv(&mut self, x: Cx, y: Cx) -> Result<Cx, DagError> {
        let Some(yr) = y.re.or(y.im) else {
            return Err(DagError::NotReal("a division by zero".into()));
        };
        if y.im.is_none() {
            return Ok(Cx {
                re: self.rdiv(x.re, yr),
                im: self.rdiv(x.im, yr),
                ..Cx::default()
            });
        }
        // x / y = x conj(y) / |y|^2
        let conj = Cx {
            re: y.re,
            im: self.rneg(y.im),
            ..Cx::default()
        };
        let n = self.cmul(x, conj);
        let rr = self.rmul(y.re, y.re);
        let ii = self.rmul(y.im, y.im);
        let d = self.radd(rr, ii).expect("nonzero");
        Ok(Cx {
            re: self.rdiv(n.re, d),
            im: self.rdiv(n.im, d),
            ..Cx::default()
        })
    }

    fn real_only(z: Cx, what: &str) -> Result<Id, DagError> {
        if z.im.is_some() {
            return Err(DagError::NotReal(format!("(a complex argument of {what})")));
        }
        Ok(z.re.unwrap_or(u32::MAX))
    }

    fn call(&mut self, fun: Fun, a: Id) -> Id {
        self.push(Op::Call(fun, a))
    }

    fn tree(
        &mut self,
        store: &mut Store,
        syms: &Symbols,
        p: &Pretty,
        scope: &Scope,
    ) -> Result<Cx, DagError> {
        Ok(match p {
            Pretty::Num(c) => {
                let z = Self::coeff(c)?;
                Cx {
                    re: z.re_value.map(|v| self.num(v)),
                    im: z.im_value.map(|v| self.num(v)),
                    ..Cx::default()
                }
            }
            Pretty::Name(n) => {
                if n == "pi" {
                    return Ok(Cx::real(self.num(std::f64::consts::PI)));
                }
                if let Scope::Sample(arg) = scope {
                    if n == "u" {
                        return Ok(Cx::real(*arg));
                    }
                    // Samples see the parameters, never the coordinates.
                    if let Some(i) = syms.vars.iter().skip(4).position(|v| v == n) {
                        return Ok(Cx::real(self.push(Op::Var(i as u32 + 4))));
                    }
                    return Err(DagError::Unknown(n.clone()));
                }
                match syms.vars.iter().position(|v| v == n) {
                    Some(i) => Cx::real(self.push(Op::Var(i as u32))),
                    None => return Err(DagError::Unknown(n.clone())),
                }
            }
            Pretty::Call(name, a) => {
                let z = self.tree(store, syms, a, scope)?;
                let zero = self.num(0.0);
                let fun = match name.as_str() {
                    "sin" => Some(Fun::Sin),
                    "cos" => Some(Fun::Cos),
                    "exp" => Some(Fun::Exp),
                    "log" => Some(Fun::Log),
                    _ => None,
                };
                match (fun, z.im) {
                    (Some(f), None) => {
                        let r = z.re.unwrap_or(zero);
                        return Ok(Cx::real(self.call(f, r)));
                    }
                    (Some(Fun::Exp), Some(y)) => {
                        // e^(x + iy) = e^x (cos y + i sin y)
                        let e = z.re.map(|x| self.call(Fun::Exp, x));
                        let c = Some(self.call(Fun::Cos, y));
                        let s = Some(self.call(Fun::Sin, y));
                        let (re, im) = match e {
                            Some(_) => (self.rmul(e, c), self.rmul(e, s)),
                            None => (c, s),
                        };
                        return Ok(Cx {
                            re,
                            im,
                            ..Cx::default()
                        });
                    }
                    (Some(f @ (Fun::Sin | Fun::Cos)), Some(y)) => {
                        // sin(x + iy) = sin x cosh y + i cos x sinh y,
                        // cos(x + iy) = cos x cosh y - i sin x sinh y.
                        let x = z.re.unwrap_or(zero);
                        let ep = self.call(Fun::Exp, y);
                        let ny = self.rneg(Some(y)).expect("nonzero");
                        let em = self.call(Fun::Exp, ny);
                        let half = self.num(0.5);
                        let sum = self.radd(Some(ep), Some(em));
                        let cosh = self.rmul(Some(half), sum);
                        let nem = self.rneg(Some(em));
                        let diff = self.radd(Some(ep), nem);
                        let sinh = self.rmul(Some(half), diff);
                        let sx = Some(self.call(Fun::Sin, x));
                        let cx = Some(self.call(Fun::Cos, x));
                        return Ok(if f == Fun::Sin {
                            let re = self.rmul(sx, cosh);
                            let im = self.rmul(cx, sinh);
                            Cx {
                                re,
                                im,
                                ..Cx::default()
                            }
                        } else {
                            let re = self.rmul(cx, cosh);
                            let im = self.rmul(sx, sinh);
                            let im = self.rneg(im);
                            Cx {
                                re,
                                im,
                                ..Cx::default()
                            }
                        });
                    }
                    (Some(_), Some(_)) => {
                        return Err(DagError::NotReal(format!("(a complex argument of {name})")));
                    }
                    (None, _) => {}
                }
                let arg = match Self::real_only(z, name)? {
                    u32::MAX => zero,
                    a => a,
                };
                let base = name.trim_end_matches('\'');
                let order = (name.len() - base.len()) as u32;
                let Some(fi) = syms.functions.iter().position(|(n, _)| n == base) else {
                    return Err(DagError::Unknown(name.clone()));
                };
                if syms.inline_samples {
                    let d = self.derivative(store, syms, fi as u32, order)?;
                    self.tree(store, syms, &d, &Scope::Sample(arg))?
                } else {
                    Cx::real(self.push(Op::User(fi as u32, order, arg)))
                }
            }
            Pretty::Root(a, q) => {
                let z = self.tree(store, syms, a, scope)?;
                let zero = self.num(0.0);
                let a = match Self::real_only(z, "a root")? {
                    u32::MAX => zero,
                    a => a,
                };
                Cx::real(self.push(Op::Root(a, *q)))
            }
            Pretty::Pow(b, n) => {
                let z = self.tree(store, syms, b, scope)?;
                match (z.re, z.im) {
                    (Some(r), None) => Cx::real(self.push(Op::Pow(r, *n))),
                    (None, None) => Cx::default(),
                    _ => {
                        let mut acc = z;
                        for _ in 1..*n {
                            acc = self.cmul(acc, z);
                        }
                        acc
                    }
                }
            }
            Pretty::Prod(c, n, d) => {
                let c = Self::coeff(c)?;
                let mut nums = Vec::with_capacity(n.len());
                for f in n {
                    nums.push(self.tree(store, syms, f, scope)?);
                }
                let mut dens = Vec::with_capacity(d.len());
                for f in d {
                    dens.push(self.tree(store, syms, f, scope)?);
                }
                let real = c.im_value.is_none()
                    && nums
                        .iter()
                        .chain(&dens)
                        .all(|z| z.im.is_none() && z.re.is_some());
                if real {
                    let cv = c.re_value.unwrap_or(0.0);
                    if cv == 0.0 {
                        return Ok(Cx::default());
                    }
                    let nums: Vec<Id> = nums.iter().map(|z| z.re.expect("real")).collect();
                    let dens: Vec<Id> = dens.iter().map(|z| z.re.expect("real")).collect();
                    if nums.is_empty() && dens.is_empty() {
                        Cx::real(self.num(cv))
                    } else if cv == 1.0 && nums.len() == 1 && dens.is_empty() {
                        Cx::real(nums[0])
                    } else {
                        Cx::real(self.push(Op::Prod((cv + 0.0).to_bits(), nums, dens)))
                    }
                } else {
                    let mut acc = Cx {
                        re: c.re_value.map(|v| self.num(v)),
                        im: c.im_value.map(|v| self.num(v)),
                        ..Cx::default()
                    };
                    for z in nums {
                        acc = self.cmul(acc, z);
                    }
                    for z in dens {
                        acc = self.cdiv(acc, z)?;
                    }
                    acc
                }
            }
            Pretty::Sum(ts) => {
                let mut re = Vec::with_capacity(ts.len());
                let mut im = Vec::new();
                for t in ts {
                    let z = self.tree(store, syms, t, scope)?;
                    re.extend(z.re);
                    im.extend(z.im);
                }
                let mut part = |v: Vec<Id>| match v.len() {
                    0 => None,
                    1 => Some(v[0]),
                    _ => Some(self.push(Op::Sum(v))),
                };
                let re = part(re);
                let im = part(im);
                Cx {
                    re,
                    im,
                    ..Cx::default()
                }
            }
            Pretty::Quot(a, b) => {
                let a = self.tree(store, syms, a, scope)?;
                let b = self.tree(store, syms, b, scope)?;
                match (a.im, b.im, b.re) {
                    (None, None, Some(br)) => Cx {
                        re: a.re.map(|ar| self.push(Op::Quot(ar, br))),
                        ..Cx::default()
                    },
                    _ => self.cdiv(a, b)?,
                }
            }
        })
    }

    /// The printing tree of derivative `order` of sample `f`, in the variable `u`.
    fn derivative(
        &mut self,
        store: &mut Store,
        syms: &Symbols,
        f: u32,
        order: u32,
    ) -> Result<Rc<Pretty>, DagError> {
        if let Some(p) = self.derivatives.get(&(f, order)) {
            return Ok(p.clone());
        }
        let s = &syms.functions[f as usize].1;
        let d = (|| -> CResult<Form> {
            let mut d = s.form;
            for _ in 0..order {
                d = store.diff(d, s.var)?;
            }
            Ok(d)
        })()
        .map_err(|e| DagError::Algebra(e.to_string()))?;
        let p = Rc::new(if store.is_zero(d) {
            Pretty::Num(Coeff::zero())
        } else {
            store.pretty(d)
        });
        self.derivatives.insert((f, order), p.clone());
        Ok(p)
    }

    /// The children of node `id`, in order.
    #[must_use]
    pub fn children(&self, id: Id) -> Vec<Id> {
        match self.op(id) {
            Op::Num(_) | Op::Var(_) => Vec::new(),
            Op::Call(_, a) | Op::Pow(a, _) | Op::Root(a, _) | Op::User(_, _, a) => vec![*a],
            Op::Prod(_, n, d) => n.iter().chain(d).copied().collect(),
            Op::Sum(ts) => ts.clone(),
            Op::Quot(a, b) => vec![*a, *b],
        }
    }

    /// The common subexpressions of `roots`, in an order in which each comes after those it
    /// uses: every node with two or more uses (a root counts as one use) that is not a
    /// number or a variable.
    #[must_use]
    pub fn shared(&self, roots: &[Id]) -> Vec<Id> {
        let mut uses: FxHashMap<Id, u32> = FxHashMap::default();
        let mut stack: Vec<Id> = roots.to_vec();
        let mut seen: rustc_hash::FxHashSet<Id> = rustc_hash::FxHashSet::default();
        for &r in roots {
            *uses.entry(r).or_default() += 1;
        }
        while let Some(n) = stack.pop() {
            if !seen.insert(n) {
                continue;
            }
            for c in self.children(n) {
                *uses.entry(c).or_default() += 1;
                stack.push(c);
            }
        }
        let is_temp = |n: Id| {
            uses.get(&n).copied().unwrap_or(0) >= 2
                && !matches!(self.op(n), Op::Num(_) | Op::Var(_))
        };
        // Post-order from the roots: children before parents.
        let mut order = Vec::new();
        let mut done: rustc_hash::FxHashSet<Id> = rustc_hash::FxHashSet::default();
        for &r in roots {
            self.post_order(r, &mut done, &mut order);
        }
        order.into_iter().filter(|&n| is_temp(n)).collect()
    }

    fn post_order(&self, root: Id, done: &mut rustc_hash::FxHashSet<Id>, out: &mut Vec<Id>) {
        // Iterative, so deep expressions cannot overflow the stack.
        let mut stack: Vec<(Id, bool)> = vec![(root, false)];
        while let Some((n, expanded)) = stack.pop() {
            if done.contains(&n) {
                continue;
            }
            if expanded {
                done.insert(n);
                out.push(n);
                continue;
            }
            stack.push((n, true));
            for c in self.children(n).into_iter().rev() {
                if !done.contains(&c) {
                    stack.push((c, false));
                }
            }
        }
    }

    /// The variables (by index) and user functions `(function, order)` that `roots` use.
    #[must_use]
    pub fn uses(&self, roots: &[Id]) -> (Vec<u32>, Vec<(u32, u32)>) {
        let mut vars = Vec::new();
        let mut funs = Vec::new();
        let mut done = rustc_hash::FxHashSet::default();
        let mut order = Vec::new();
        for &r in roots {
            self.post_order(r, &mut done, &mut order);
        }
        for n in order {
            match self.op(n) {
                Op::Var(i) => vars.push(*i),
                Op::User(f, k, _) => funs.push((*f, *k)),
                _ => {}
            }
        }
        vars.sort_unstable();
        vars.dedup();
        funs.sort_unstable();
        funs.dedup();
        (vars, funs)
    }

    /// The value of node `id` in f64 with variables `vars` (user functions inlined: `None`
    /// if one is called).
    #[must_use]
    pub fn eval(&self, id: Id, vars: &[f64], memo: &mut FxHashMap<Id, f64>) -> Option<f64> {
        if let Some(&v) = memo.get(&id) {
            return Some(v);
        }
        let v = match self.op(id) {
            Op::Num(b) => f64::from_bits(*b),
            Op::Var(i) => *vars.get(*i as usize)?,
            Op::Call(f, a) => {
                let a = self.eval(*a, vars, memo)?;
                match f {
                    Fun::Sin => a.sin(),
                    Fun::Cos => a.cos(),
                    Fun::Exp => a.exp(),
                    Fun::Log => a.ln(),
                }
            }
            Op::Pow(b, n) => self.eval(*b, vars, memo)?.powi(*n as i32),
            Op::Root(a, q) => {
                let a = self.eval(*a, vars, memo)?;
                if *q == 2 {
                    a.sqrt()
                } else {
                    a.powf(1.0 / f64::from(*q))
                }
            }
            Op::Prod(c, n, d) => {
                let mut p = f64::from_bits(*c);
                for &f in n {
                    p *= self.eval(f, vars, memo)?;
                }
                let mut q = 1.0;
                for &f in d {
                    q *= self.eval(f, vars, memo)?;
                }
                if d.is_empty() { p } else { p / q }
            }
            Op::Sum(ts) => {
                let mut s = 0.0;
                for &t in ts {
                    s += self.eval(t, vars, memo)?;
                }
                s
            }
            Op::Quot(a, b) => self.eval(*a, vars, memo)? / self.eval(*b, vars, memo)?,
            Op::User(..) => return None,
        };
        memo.insert(id, v);
        Some(v)
    }
}
