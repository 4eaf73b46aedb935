//! From the user's own expressions to tape nodes, without the canonical form.
//!
//! Model. The strings of a problem file (components, `[define]` entries, function samples)
//! are parsed again and built into a small hash-consed DAG that keeps the user's structure:
//! a define is built once and shared by every use, nothing is expanded, and the `d_x(...)`
//! operator is applied by differentiating the DAG (chain rule, memoised per node and
//! variable). An arbitrary function `F''(a)` is a node of its own; when lowered, `F`'s sample
//! (an expression in `u`) is built into the same DAG, differentiated twice by `u` there, and
//! lowered with `u` bound to the lowered argument. The result is emitted into a
//! [`TapeBuilder`], whose hash-consing shares subexpressions across components.
//!
//! Key design decision: this path shares nothing with [`crate::canon`] but the parser, so a
//! grid check that samples through it is a second opinion on the exact route: a term the
//! canonical form lost is still here.
//!
//! **Invariants:** never calls `canon`, `zero` or `tensor`; the DAG is built from the parsed
//! trees only; recursion depth is bounded by the parser's nesting cap and by
//! [`MAX_SAMPLE_DEPTH`] for samples that call other functions.

use super::{C64, Node, TapeBuilder, TapeError};
use crate::expr::{BinOp, Expr, ExprKind};
use num_rational::BigRational;
use num_traits::{ToPrimitive, Zero};
use rustc_hash::FxHashMap;

/// How deep function samples may call other functions.
pub const MAX_SAMPLE_DEPTH: usize = 16;

/// Largest DAG the lowering builds (nodes); beyond it lowering stops with an error.
pub const MAX_NODES: usize = 2_000_000;

/// A node of the user-structure DAG.
#[derive(Clone, Debug, PartialEq, Eq, Hash)]
enum U {
    /// An exact constant.
    Num(BigRational),
    /// pi.
    Pi,
    /// A symbol by index into the symbol table.
    Sym(u32),
    Add(u32, u32),
    Sub(u32, u32),
    Mul(u32, u32),
    Div(u32, u32),
    Neg(u32),
    /// Integer power.
    PowI(u32, i64),
    /// Principal root of order q.
    Root(u32, u32),
    Exp(u32),
    Log(u32),
    Sin(u32),
    Cos(u32),
    /// The principal arctangent.
    Atan(u32),
    /// `|a|` of a real `a`.
    Abs(u32),
    /// `atan2(y, x)` of real arguments, off its cut `x <= 0, y = 0`.
    Atan2(u32, u32),
    /// An arbitrary function (by name index) differentiated `order` times, at the argument.
    Func(u32, u32, u32),
}

/// What a name means.
#[derive(Clone, Debug)]
pub enum Binding {
    /// Tape input number `i` (a coordinate).
    Input(usize),
    /// A constant value (a parameter).
    Value(f64),
}

/// The problem's expressions as the user wrote them.
#[derive(Clone, Debug, Default)]
pub struct UserExprs {
    /// Named subexpressions in file order, each as text.
    pub defines: Vec<(String, String)>,
    /// Arbitrary functions with their samples in `u`, as text.
    pub functions: Vec<(String, String)>,
}

/// Where lowered nodes go: an operation graph with hash-consing, such as the grid's
/// [`TapeBuilder`] ([`TapeTarget`]) or the code emitter's DAG.
pub trait Target {
    /// A node of the target graph.
    type Node: Copy;
    /// The exact constant `q`; `None` if the target cannot represent it (beyond the f64
    /// range for a floating-point target).
    fn number(&mut self, q: &BigRational) -> Option<Self::Node>;
    /// pi.
    fn pi(&mut self) -> Self::Node;
    /// The node of a name: a coordinate or parameter at the top level (`sample` is `None`),
    /// or a name inside the sample of function `sample` (other than its variable).
    ///
    /// # Errors
    ///
    /// [`TapeError::Unbound`] or [`TapeError::UnboundInSample`] for a name without a value.
    fn symbol(&mut self, name: &str, sample: Option<&str>) -> Result<Self::Node, TapeError>;
    /// `a + b`.
    fn add(&mut self, a: Self::Node, b: Self::Node) -> Self::Node;
    /// `a - b`.
    fn sub(&mut self, a: Self::Node, b: Self::Node) -> Self::Node;
    /// `a * b`.
    fn mul(&mut self, a: Self::Node, b: Self::Node) -> Self::Node;
    /// `a / b`.
    fn div(&mut self, a: Self::Node, b: Self::Node) -> Self::Node;
    /// `-a`.
    fn neg(&mut self, a: Self::Node) -> Self::Node;
    /// `a^k`, `k` an integer of either sign (not 0 or 1).
    fn powi(&mut self, a: Self::Node, k: i32) -> Self::Node;
    /// The principal `a^(1/q)`.
    fn root(&mut self, a: Self::Node, q: u32) -> Self::Node;
    /// `exp(a)`.
    fn exp(&mut self, a: Self::Node) -> Self::Node;
    /// `log(a)`.
    fn log(&mut self, a: Self::Node) -> Self::Node;
    /// `sin(a)`.
    fn sin(&mut self, a: Self::Node) -> Self::Node;
    /// `cos(a)`.
    fn cos(&mut self, a: Self::Node) -> Self::Node;
    /// The principal `atan(a)`.
    fn atan(&mut self, a: Self::Node) -> Self::Node;
    /// `|a|` of a real `a`; by default `sqrt(a^2)`, the principal root (equal for real `a`).
    fn abs(&mut self, a: Self::Node) -> Self::Node {
        let a2 = self.mul(a, a);
        self.root(a2, 2)
    }
    /// `atan2(y, x)` of real arguments; by default `2 atan(y / (sqrt(x^2 + y^2) + x))`,
    /// equal off the cut `x <= 0, y = 0` (see `canon`'s `atan2`), undefined on it (0/0).
    fn atan2(&mut self, y: Self::Node, x: Self::Node) -> Self::Node {
        let xx = self.mul(x, x);
        let yy = self.mul(y, y);
        let s = self.add(xx, yy);
        let r = self.root(s, 2);
        let d = self.add(r, x);
        let q = self.div(y, d);
        let a = self.atan(q);
        self.add(a, a)
    }
    /// Derivative `k` of the arbitrary function `f` at `arg` as a call the target keeps
    /// (code calling a user-supplied function), or `None` to evaluate `f`'s sample instead.
    fn call(&mut self, _f: &str, _k: u32, _arg: Self::Node) -> Option<Self::Node> {
        None
    }
}

/// The grid's target: a [`TapeBuilder`] with coordinates bound to inputs and parameters to
/// values.
pub struct TapeTarget {
    /// The builder the nodes live in.
    pub builder: TapeBuilder,
    bindings: FxHashMap<String, Binding>,
}

impl Target for TapeTarget {
    type Node = Node;
    fn number(&mut self, q: &BigRational) -> Option<Node> {
        let v = q.to_f64().filter(|v| v.is_finite())?;
        Some(self.builder.real(v))
    }
    fn pi(&mut self) -> Node {
        self.builder.real(std::f64::consts::PI)
    }
    fn symbol(&mut self, name: &str, sample: Option<&str>) -> Result<Node, TapeError> {
        match (self.bindings.get(name), sample) {
            (Some(Binding::Input(i)), None) => Ok(self.builder.input(*i)),
            (Some(Binding::Value(v)), _) => Ok(self.builder.real(*v)),
            (_, None) => Err(TapeError::Unbound(name.to_string())),
            (_, Some(f)) => Err(TapeError::UnboundInSample {
                func: f.to_string(),
                name: name.to_string(),
            }),
        }
    }
    fn add(&mut self, a: Node, b: Node) -> Node {
        self.builder.add(a, b)
    }
    fn sub(&mut self, a: Node, b: Node) -> Node {
        self.builder.sub(a, b)
    }
    fn mul(&mut self, a: Node, b: Node) -> Node {
        self.builder.mul(a, b)
    }
    fn div(&mut self, a: Node, b: Node) -> Node {
        self.builder.div(a, b)
    }
    fn neg(&mut self, a: Node) -> Node {
        self.builder.neg(a)
    }
    fn powi(&mut self, a: Node, k: i32) -> Node {
        self.builder.powi(a, k)
    }
    fn root(&mut self, a: Node, q: u32) -> Node {
        self.builder.root(a, q)
    }
    fn exp(&mut self, a: Node) -> Node {
        self.builder.exp(a)
    }
    fn log(&mut self, a: Node) -> Node {
        self.builder.log(a)
    }
    fn sin(&mut self, a: Node) -> Node {
        self.builder.sin(a)
    }
    fn cos(&mut self, a: Node) -> Node {
        self.builder.cos(a)
    }
    /// `atan(a) = (i/2) (log(1 - i a) - log(1 + i a))`, the principal branches (the standard
    /// definition of the principal arctangent, an identity off its cuts `a = i y, |y| >= 1`;
    /// for real `a` both logarithms have real part 1 > 0 and the result is real).
    fn atan(&mut self, a: Node) -> Node {
        let one = self.builder.real(1.0);
        let i = self.builder.constant(C64::new(0.0, 1.0));
        let ia = self.builder.mul(i, a);
        let m = self.builder.sub(one, ia);
        let p = self.builder.add(one, ia);
        let lm = self.builder.log(m);
        let lp = self.builder.log(p);
        let d = self.builder.sub(lm, lp);
        let half_i = self.builder.constant(C64::new(0.0, 0.5));
        self.builder.mul(half_i, d)
    }
}

/// A node of the user-structure DAG, for building expressions from lowered parts (see
/// [`Lowering::text`], [`Lowering::derivative`], [`Lowering::combine`]).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub struct UserNode(u32);

/// An operation on user-structure nodes, for [`Lowering::combine`].
#[derive(Clone, Copy, Debug)]
pub enum Combine {
    /// `a + b`.
    Add(UserNode, UserNode),
    /// `a - b`.
    Sub(UserNode, UserNode),
    /// `a * b`.
    Mul(UserNode, UserNode),
    /// `a / b`.
    Div(UserNode, UserNode),
    /// `-a`.
    Neg(UserNode),
}

/// Lowers user expressions into one [`Target`] graph.
pub struct Lowering<T: Target = TapeTarget> {
    /// The graph the lowered nodes live in.
    pub target: T,
    top_memo: FxHashMap<u32, T::Node>,
    nodes: Vec<U>,
    index: FxHashMap<U, u32>,
    symbols: Vec<String>,
    symbol_ids: FxHashMap<String, u32>,
    functions: Vec<String>,
    function_ids: FxHashMap<String, u32>,
    define_text: FxHashMap<String, Expr>,
    define_nodes: FxHashMap<String, u32>,
    samples: FxHashMap<String, Expr>,
    diff_memo: FxHashMap<(u32, u32), u32>,
    zero: u32,
    one: u32,
}

/// The exact value of a constant exponent written with numbers and `+ - * /`.
fn rational_of(e: &Expr) -> Option<BigRational> {
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

fn parse(text: &str, what: &str) -> Result<Expr, TapeError> {
    crate::parse::parse(text).map_err(|e| TapeError::Reread {
        text: format!("{what}: {text}"),
        why: e.to_string(),
    })
}

impl Lowering<TapeTarget> {
    /// A lowering with tape inputs and constants given by `bindings` (coordinates to inputs,
    /// parameters to values), over the user's defines and function samples.
    ///
    /// # Errors
    ///
    /// A define or sample that does not parse.
    pub fn new(
        n_inputs: usize,
        bindings: FxHashMap<String, Binding>,
        user: &UserExprs,
    ) -> Result<Lowering<TapeTarget>, TapeError> {
        Lowering::with_target(
            TapeTarget {
                builder: TapeBuilder::new(n_inputs),
                bindings,
            },
            user,
        )
    }

    /// The tape node of the user expression `text` (a component of h or T).
    ///
    /// # Errors
    ///
    /// A parse error, a name without a value, a function without a sample, a power too large.
    pub fn expression(&mut self, text: &str) -> Result<Node, TapeError> {
        let n = self.text(text)?;
        self.lower(n)
    }

    /// A constant node, for callers that add their own.
    pub fn constant(&mut self, c: C64) -> Node {
        self.target.builder.constant(c)
    }
}

impl<T: Target> Lowering<T> {
    /// A lowering into `target` over the user's defines and function samples.
    ///
    /// # Errors
    ///
    /// A define or sample that does not parse.
    pub fn with_target(target: T, user: &UserExprs) -> Result<Lowering<T>, TapeError> {
        let mut l = Lowering {
            target,
            top_memo: FxHashMap::default(),
            nodes: Vec::new(),
            index: FxHashMap::default(),
            symbols: Vec::new(),
            symbol_ids: FxHashMap::default(),
            functions: Vec::new(),
            function_ids: FxHashMap::default(),
            define_text: FxHashMap::default(),
            define_nodes: FxHashMap::default(),
            samples: FxHashMap::default(),
            diff_memo: FxHashMap::default(),
            zero: 0,
            one: 0,
        };
        l.zero = l.push(U::Num(BigRational::zero()));
        l.one = l.push(U::Num(BigRational::from_integer(1.into())));
        for (name, text) in &user.defines {
            let e = parse(text, name)?;
            l.define_text.insert(name.clone(), e);
        }
        for (name, text) in &user.functions {
            let e = parse(text, name)?;
            l.samples.insert(name.clone(), e);
        }
        Ok(l)
    }

    /// The user-structure node of `text` (defines shared, `d_` applied), not yet lowered.
    ///
    /// # Errors
    ///
    /// A parse error or a DAG beyond `MAX_NODES` nodes.
    pub fn text(&mut self, text: &str) -> Result<UserNode, TapeError> {
        let e = parse(text, "component")?;
        Ok(UserNode(self.build(&e, false)?))
    }

    /// The partial derivative of `n` by the coordinate or parameter `var`.
    ///
    /// # Errors
    ///
    /// A DAG beyond `MAX_NODES` nodes.
    pub fn derivative(&mut self, n: UserNode, var: &str) -> Result<UserNode, TapeError> {
        let s = self.symbol(var);
        Ok(UserNode(self.diff(n.0, s)?))
    }

    /// The exact constant `q`.
    pub fn number(&mut self, q: BigRational) -> UserNode {
        UserNode(self.rational(q))
    }

    /// pi.
    pub fn pi(&mut self) -> UserNode {
        UserNode(self.push(U::Pi))
    }

    /// The result of one operation on user-structure nodes (with the folds of 0 and 1).
    pub fn combine(&mut self, op: Combine) -> UserNode {
        UserNode(match op {
            Combine::Add(a, b) => self.add(a.0, b.0),
            Combine::Sub(a, b) => self.sub(a.0, b.0),
            Combine::Mul(a, b) => self.mul(a.0, b.0),
            Combine::Div(a, b) => self.div(a.0, b.0),
            Combine::Neg(a) => self.neg(a.0),
        })
    }

    /// True if `n` is the exact constant 0.
    #[must_use]
    pub fn is_zero(&self, n: UserNode) -> bool {
        n.0 == self.zero
    }

    /// Lowers `n` into the target (top-level names; nodes shared across calls).
    ///
    /// # Errors
    ///
    /// A name without a value, a function without a sample, a power too large.
    pub fn lower(&mut self, n: UserNode) -> Result<T::Node, TapeError> {
        let mut memo = std::mem::take(&mut self.top_memo);
        let r = self.emit(n.0, &Scope::Top, &mut memo);
        self.top_memo = memo;
        r
    }

    fn push(&mut self, u: U) -> u32 {
        if let Some(&i) = self.index.get(&u) {
            return i;
        }
        let i = self.nodes.len() as u32;
        self.nodes.push(u.clone());
        self.index.insert(u, i);
        i
    }

    fn guard(&self) -> Result<(), TapeError> {
        if self.nodes.len() > MAX_NODES {
            return Err(TapeError::Unsupported(format!(
                "expressions over {MAX_NODES} nodes"
            )));
        }
        Ok(())
    }

    fn num(&self, i: u32) -> Option<&BigRational> {
        match &self.nodes[i as usize] {
            U::Num(q) => Some(q),
            _ => None,
        }
    }

    fn symbol(&mut self, name: &str) -> u32 {
        if let Some(&i) = self.symbol_ids.get(name) {
            return i;
        }
        let i = self.symbols.len() as u32;
        self.symbols.push(name.to_string());
        self.symbol_ids.insert(name.to_string(), i);
        i
    }

    fn function(&mut self, name: &str) -> u32 {
        if let Some(&i) = self.function_ids.get(name) {
            return i;
        }
        let i = self.functions.len() as u32;
        self.functions.push(name.to_string());
        self.function_ids.insert(name.to_string(), i);
        i
    }

    // Constructors with the obvious folds (0 and 1), so derivatives stay small.
    fn add(&mut self, a: u32, b: u32) -> u32 {
        if a == self.zero {
            return b;
        }
        if b == self.zero {
            return a;
        }
        if let (Some(x), Some(y)) = (self.num(a), self.num(b)) {
            let s = x + y;
            return self.push(U::Num(s));
        }
        self.push(U::Add(a, b))
    }
    fn sub(&mut self, a: u32, b: u32) -> u32 {
        if b == self.zero {
            return a;
        }
        if a == b {
            return self.zero;
        }
        if a == self.zero {
            return self.neg(b);
        }
        if let (Some(x), Some(y)) = (self.num(a), self.num(b)) {
            let s = x - y;
            return self.push(U::Num(s));
        }
        self.push(U::Sub(a, b))
    }
    fn mul(&mut self, a: u32, b: u32) -> u32 {
        if a == self.zero || b == self.zero {
            return self.zero;
        }
        if a == self.one {
            return b;
        }
        if b == self.one {
            return a;
        }
        if let (Some(x), Some(y)) = (self.num(a), self.num(b)) {
            let s = x * y;
            return self.push(U::Num(s));
        }
        self.push(U::Mul(a, b))
    }
    fn div(&mut self, a: u32, b: u32) -> u32 {
        if a == self.zero {
            return self.zero;
        }
        if b == self.one {
            return a;
        }
        self.push(U::Div(a, b))
    }
    fn neg(&mut self, a: u32) -> u32 {
        if let Some(x) = self.num(a) {
            let s = -x.clone();
            return self.push(U::Num(s));
        }
        if let U::Neg(x) = self.nodes[a as usize] {
            return x;
        }
        self.push(U::Neg(a))
    }
    fn powi(&mut self, a: u32, n: i64) -> u32 {
        match n {
            0 => self.one,
            1 => a,
            _ => self.push(U::PowI(a, n)),
        }
    }
    fn int(&mut self, n: i64) -> u32 {
        self.push(U::Num(BigRational::from_integer(n.into())))
    }
    fn rational(&mut self, q: BigRational) -> u32 {
        self.push(U::Num(q))
    }

    /// Builds `e` in the DAG. `sample_var` is the sample variable's symbol inside a sample.
    fn build(&mut self, e: &Expr, in_sample: bool) -> Result<u32, TapeError> {
        self.guard()?;
        Ok(match &e.kind {
            ExprKind::Num(q) => self.rational(q.clone()),
            ExprKind::Ident(n) => {
                if n == "pi" {
                    self.push(U::Pi)
                } else if !in_sample && self.define_text.contains_key(n) {
                    self.define(n)?
                } else {
                    let s = self.symbol(n);
                    self.push(U::Sym(s))
                }
            }
            ExprKind::Neg(a) => {
                let a = self.build(a, in_sample)?;
                self.neg(a)
            }
            ExprKind::Binary(BinOp::Pow, base, exp) => {
                let x = self.build(base, in_sample)?;
                match rational_of(exp) {
                    Some(q) if q.is_integer() => {
                        let n = q
                            .to_integer()
                            .to_i64()
                            .filter(|n| n.abs() <= 100_000)
                            .ok_or_else(|| TapeError::Power(q.to_string()))?;
                        self.powi(x, n)
                    }
                    Some(q) => {
                        let too_big = || TapeError::Power(q.to_string());
                        let num = q.numer().to_i64().ok_or_else(too_big)?;
                        let den = q.denom().to_u32().ok_or_else(too_big)?;
                        let r = self.push(U::Root(x, den));
                        self.powi(r, num)
                    }
                    None => {
                        // a^b = exp(b log a), the principal branch.
                        let y = self.build(exp, in_sample)?;
                        let l = self.push(U::Log(x));
                        let p = self.mul(y, l);
                        self.push(U::Exp(p))
                    }
                }
            }
            ExprKind::Binary(op, l, r) => {
                let x = self.build(l, in_sample)?;
                let y = self.build(r, in_sample)?;
                match op {
                    BinOp::Add => self.add(x, y),
                    BinOp::Sub => self.sub(x, y),
                    BinOp::Mul => self.mul(x, y),
                    BinOp::Div => self.div(x, y),
                    BinOp::Pow => unreachable!("handled above"),
                }
            }
            ExprKind::Call {
                name, primes, arg, ..
            } => {
                let a = self.build(arg, in_sample)?;
                if *primes == 0
                    && let Some(n) = self.builtin(name, a)
                {
                    return Ok(n);
                }
                let f = self.function(name);
                self.push(U::Func(f, *primes, a))
            }
            ExprKind::Atan2 { y, x, .. } => {
                let y = self.build(y, in_sample)?;
                let x = self.build(x, in_sample)?;
                self.push(U::Atan2(y, x))
            }
            ExprKind::Deriv { vars, arg } => {
                let mut f = self.build(arg, in_sample)?;
                for (v, _) in vars {
                    let s = self.symbol(v);
                    f = self.diff(f, s)?;
                }
                f
            }
        })
    }

    fn define(&mut self, name: &str) -> Result<u32, TapeError> {
        if let Some(&n) = self.define_nodes.get(name) {
            return Ok(n);
        }
        let e = self.define_text[name].clone();
        // A define refers only to earlier ones (the problem reader checks the order), so this
        // recursion is as deep as the chain of defines.
        let n = self.build(&e, false)?;
        self.define_nodes.insert(name.to_string(), n);
        Ok(n)
    }

    fn builtin(&mut self, name: &str, a: u32) -> Option<u32> {
        Some(match name {
            "sin" => self.push(U::Sin(a)),
            "cos" => self.push(U::Cos(a)),
            "tan" => {
                let s = self.push(U::Sin(a));
                let c = self.push(U::Cos(a));
                self.div(s, c)
            }
            "exp" => self.push(U::Exp(a)),
            "log" => self.push(U::Log(a)),
            "sqrt" => self.push(U::Root(a, 2)),
            "atan" => self.push(U::Atan(a)),
            // |a| for real a (the canonical build refuses abs of an argument not shown real,
            // so a problem that reaches the numeric routes has a real one).
            "abs" => self.push(U::Abs(a)),
            "sinh" | "cosh" | "tanh" => {
                let p = self.push(U::Exp(a));
                let na = self.neg(a);
                let m = self.push(U::Exp(na));
                let s = self.sub(p, m);
                let c = self.add(p, m);
                let half = self.rational(BigRational::new(1.into(), 2.into()));
                match name {
                    "sinh" => self.mul(half, s),
                    "cosh" => self.mul(half, c),
                    _ => self.div(s, c),
                }
            }
            _ => return None,
        })
    }

    /// The partial derivative of node `n` by symbol `s`.
    fn diff(&mut self, n: u32, s: u32) -> Result<u32, TapeError> {
        if let Some(&d) = self.diff_memo.get(&(n, s)) {
            return Ok(d);
        }
        self.guard()?;
        let d = match self.nodes[n as usize].clone() {
            U::Num(_) | U::Pi => self.zero,
            U::Sym(t) => {
                if t == s {
                    self.one
                } else {
                    self.zero
                }
            }
            U::Add(a, b) => {
                let (da, db) = (self.diff(a, s)?, self.diff(b, s)?);
                self.add(da, db)
            }
            U::Sub(a, b) => {
                let (da, db) = (self.diff(a, s)?, self.diff(b, s)?);
                self.sub(da, db)
            }
            U::Mul(a, b) => {
                let (da, db) = (self.diff(a, s)?, self.diff(b, s)?);
                let x = self.mul(da, b);
                let y = self.mul(a, db);
                self.add(x, y)
            }
            U::Div(a, b) => {
                // (a/b)' = a'/b - a b'/b^2
                let (da, db) = (self.diff(a, s)?, self.diff(b, s)?);
                let x = self.div(da, b);
                let b2 = self.powi(b, 2);
                let ab = self.mul(a, db);
                let y = self.div(ab, b2);
                self.sub(x, y)
            }
            U::Neg(a) => {
                let da = self.diff(a, s)?;
                self.neg(da)
            }
            U::PowI(a, k) => {
                let da = self.diff(a, s)?;
                let p = self.powi(a, k - 1);
                let c = self.int(k);
                let cp = self.mul(c, p);
                self.mul(cp, da)
            }
            U::Root(a, q) => {
                // (a^(1/q))' = a^(1/q) a' / (q a)
                let da = self.diff(a, s)?;
                let qa = {
                    let qn = self.int(i64::from(q));
                    self.mul(qn, a)
                };
                let t = self.mul(n, da);
                self.div(t, qa)
            }
            U::Exp(a) => {
                let da = self.diff(a, s)?;
                self.mul(n, da)
            }
            U::Log(a) => {
                let da = self.diff(a, s)?;
                self.div(da, a)
            }
            U::Abs(a) => {
                // |a|' = a a' / |a| (real a, away from a = 0)
                let da = self.diff(a, s)?;
                let t = self.mul(a, da);
                self.div(t, n)
            }
            U::Atan2(y, x) => {
                // atan2(y, x)' = (x y' - y x') / (x^2 + y^2)
                let (dy, dx) = (self.diff(y, s)?, self.diff(x, s)?);
                let a = self.mul(x, dy);
                let b = self.mul(y, dx);
                let num = self.sub(a, b);
                let xx = self.mul(x, x);
                let yy = self.mul(y, y);
                let den = self.add(xx, yy);
                self.div(num, den)
            }
            U::Atan(a) => {
                // d atan(a) = a' / (1 + a^2)
                let da = self.diff(a, s)?;
                let a2 = self.mul(a, a);
                let one = self.one;
                let q = self.add(one, a2);
                self.div(da, q)
            }
            U::Sin(a) => {
                let da = self.diff(a, s)?;
                let c = self.push(U::Cos(a));
                self.mul(c, da)
            }
            U::Cos(a) => {
                let da = self.diff(a, s)?;
                let si = self.push(U::Sin(a));
                let ns = self.neg(si);
                self.mul(ns, da)
            }
            U::Func(f, k, a) => {
                let da = self.diff(a, s)?;
                let next = self.push(U::Func(f, k + 1, a));
                self.mul(next, da)
            }
        };
        self.diff_memo.insert((n, s), d);
        Ok(d)
    }

    fn emit(
        &mut self,
        n: u32,
        scope: &Scope<T::Node>,
        memo: &mut FxHashMap<u32, T::Node>,
    ) -> Result<T::Node, TapeError> {
        if let Some(&t) = memo.get(&n) {
            return Ok(t);
        }
        let t = match self.nodes[n as usize].clone() {
            U::Num(q) => self
                .target
                .number(&q)
                .ok_or_else(|| TapeError::Unsupported(q.to_string()))?,
            U::Pi => self.target.pi(),
            U::Sym(s) => {
                let name = self.symbols[s as usize].clone();
                match scope {
                    Scope::Sample { var, arg, .. } if name == *var => *arg,
                    Scope::Sample { func, .. } => self.target.symbol(&name, Some(func))?,
                    Scope::Top => self.target.symbol(&name, None)?,
                }
            }
            U::Add(a, b) => {
                let (x, y) = (self.emit(a, scope, memo)?, self.emit(b, scope, memo)?);
                self.target.add(x, y)
            }
            U::Sub(a, b) => {
                let (x, y) = (self.emit(a, scope, memo)?, self.emit(b, scope, memo)?);
                self.target.sub(x, y)
            }
            U::Mul(a, b) => {
                let (x, y) = (self.emit(a, scope, memo)?, self.emit(b, scope, memo)?);
                self.target.mul(x, y)
            }
            U::Div(a, b) => {
                let (x, y) = (self.emit(a, scope, memo)?, self.emit(b, scope, memo)?);
                self.target.div(x, y)
            }
            U::Neg(a) => {
                let x = self.emit(a, scope, memo)?;
                self.target.neg(x)
            }
            U::PowI(a, k) => {
                let x = self.emit(a, scope, memo)?;
                let k = i32::try_from(k).map_err(|_| TapeError::Power(k.to_string()))?;
                self.target.powi(x, k)
            }
            U::Root(a, q) => {
                let x = self.emit(a, scope, memo)?;
                self.target.root(x, q)
            }
            U::Exp(a) => {
                let x = self.emit(a, scope, memo)?;
                self.target.exp(x)
            }
            U::Log(a) => {
                let x = self.emit(a, scope, memo)?;
                self.target.log(x)
            }
            U::Atan(a) => {
                let x = self.emit(a, scope, memo)?;
                self.target.atan(x)
            }
            U::Abs(a) => {
                let x = self.emit(a, scope, memo)?;
                self.target.abs(x)
            }
            U::Atan2(y, x) => {
                let (yn, xn) = (self.emit(y, scope, memo)?, self.emit(x, scope, memo)?);
                self.target.atan2(yn, xn)
            }
            U::Sin(a) => {
                let x = self.emit(a, scope, memo)?;
                self.target.sin(x)
            }
            U::Cos(a) => {
                let x = self.emit(a, scope, memo)?;
                self.target.cos(x)
            }
            U::Func(f, k, a) => {
                let x = self.emit(a, scope, memo)?;
                self.call(f, k, x, scope)?
            }
        };
        memo.insert(n, t);
        Ok(t)
    }

    /// `F^(k)(x)`: the sample of `F` differentiated `k` times by `u`, lowered with `u = x`.
    fn call(
        &mut self,
        f: u32,
        k: u32,
        x: T::Node,
        scope: &Scope<T::Node>,
    ) -> Result<T::Node, TapeError> {
        let name = self.functions[f as usize].clone();
        if let Some(n) = self.target.call(&name, k, x) {
            return Ok(n);
        }
        let depth = match scope {
            Scope::Top => 0,
            Scope::Sample { depth, .. } => depth + 1,
        };
        if depth >= MAX_SAMPLE_DEPTH {
            return Err(TapeError::TooDeep(MAX_SAMPLE_DEPTH));
        }
        let sample = self
            .samples
            .get(&name)
            .cloned()
            .ok_or_else(|| TapeError::NoSample(name.clone()))?;
        let mut s = self.build(&sample, true)?;
        let u = self.symbol("u");
        for _ in 0..k {
            s = self.diff(s, u)?;
        }
        let inner = Scope::Sample {
            func: name,
            var: "u".to_string(),
            arg: x,
            depth,
        };
        let mut memo = FxHashMap::default();
        self.emit(s, &inner, &mut memo)
    }
}

/// Where names are looked up while emitting.
enum Scope<N> {
    Top,
    Sample {
        func: String,
        var: String,
        arg: N,
        depth: usize,
    },
}

#[cfg(test)]
mod tests {
    use super::*;

    fn lowering(defines: &[(&str, &str)], functions: &[(&str, &str)]) -> Lowering {
        let mut b = FxHashMap::default();
        for (i, c) in ["t", "x", "y", "z"].iter().enumerate() {
            b.insert(c.to_string(), Binding::Input(i));
        }
        b.insert("w".into(), Binding::Value(1.5));
        b.insert("a".into(), Binding::Value(0.25));
        let user = UserExprs {
            defines: defines
                .iter()
                .map(|(n, t)| (n.to_string(), t.to_string()))
                .collect(),
            functions: functions
                .iter()
                .map(|(n, t)| (n.to_string(), t.to_string()))
                .collect(),
        };
        Lowering::new(4, b, &user).unwrap()
    }

    fn value(l: &mut Lowering, text: &str, p: [f64; 4]) -> f64 {
        let n = l.expression(text).unwrap();
        let tape = l.target.builder.finish(&[n]);
        tape.eval_point(&p)[0].re
    }

    #[test]
    fn issue9_a_pi_phase_is_kept_by_the_user_structure() {
        let mut l = lowering(&[("phase", "w*(t - z)/(1 + a) + pi/8")], &[]);
        let p: [f64; 4] = [0.3, 0.1, -0.2, 0.7];
        let v = value(&mut l, "cos(phase)", p);
        let want = (1.5 * (0.3 - 0.7) / 1.25 + std::f64::consts::PI / 8.0).cos();
        assert!((v - want).abs() < 1e-14, "{v} vs {want}");
    }

    #[test]
    fn derivative_operator_differentiates_the_dag() {
        let mut l = lowering(&[("r", "sqrt(x^2 + y^2 + z^2)")], &[("Q", "exp(-u^2)")]);
        let p: [f64; 4] = [0.4, 0.3, -0.5, 1.1];
        let (t, x, y, z) = (p[0], p[1], p[2], p[3]);
        let r = (x * x + y * y + z * z).sqrt();
        // d_x(1/r) = -x/r^3
        let v = value(&mut l, "d_x(1/r)", p);
        assert!((v + x / r.powi(3)).abs() < 1e-13);
        // d_t_t(Q(t - r)/r) = Q''(t - r)/r with Q = exp(-u^2): Q'' = (4u^2 - 2) exp(-u^2)
        let u = t - r;
        let want = (4.0 * u * u - 2.0) * (-u * u).exp() / r;
        let v = value(&mut l, "d_t_t(Q(t - r)/r)", p);
        assert!((v - want).abs() < 1e-12, "{v} vs {want}");
        // A prime is the same derivative.
        let v2 = value(&mut l, "Q''(t - r)/r", p);
        assert!((v2 - want).abs() < 1e-12);
        // d by a parameter: d_w(sin(w*x)) = x cos(w x)
        let v = value(&mut l, "d_w(sin(w*x))", p);
        assert!((v - x * (1.5 * x).cos()).abs() < 1e-14);
        let _ = y;
    }

    #[test]
    fn unbound_names_and_missing_samples_are_errors() {
        let mut l = lowering(&[], &[]);
        assert!(matches!(l.expression("q*x"), Err(TapeError::Unbound(n)) if n == "q"));
        assert!(matches!(l.expression("G(x)"), Err(TapeError::NoSample(n)) if n == "G"));
    }
}
