//! Compiled expressions: canonical forms flattened into an instruction tape for fast
//! evaluation at many points.
//!
//! Model. A [`TapeBuilder`] holds a DAG of instructions over complex double precision (inputs,
//! constants, `+ - * /`, integer powers, `exp`, `log`, `sin`, `cos`, principal roots). It is
//! hash-consed: asking for an instruction that already exists returns the existing node, so
//! common subexpressions are shared across every expression compiled into one builder (the
//! ten components of `h` share their `sqrt(x^2 + y^2 + z^2)`). Constants fold, and `x + 0`,
//! `x * 1`, `-(-x)` and the like simplify as they are built. [`TapeBuilder::finish`] keeps
//! what the requested outputs need, in dependency order, as a [`Tape`].
//!
//! `compile` turns canonical forms into nodes: it reads a form through its structural view
//! ([`crate::canon::Store::view`]; nothing is printed or parsed) and regroups `exp(i a)` pairs
//! as `sin a` and `cos a` as the printer does, so a real expression usually compiles to a tape
//! with real constants.
//!
//! Evaluation, three ways:
//! - [`Batch`]: blocks of [`BATCH`] arbitrary points, one instruction at a time over a block.
//! - [`Lattice`]: a 3-d slab of a 4-d grid at fixed `t`, one `x`-plane at a time, with every
//!   instruction evaluated only on the coordinates it depends on (a plane wave's phase
//!   `w*(t - z)` is computed once per slab, as a row over `z`, not at every point).
//! - [`Tape::eval_point`] and [`Tape::eval_bounds`]: one point, the second with a running
//!   error bound for every output (used to estimate the round-off floor of the grid check).
//!
//! Key design decision: the fast path runs in real `f64`. The real lane gives NaN exactly
//! where the principal complex value is not real (the log or root of a negative number), and
//! a block with a non-finite output is evaluated again in complex arithmetic, so the answer is
//! always that of the complex tape; the complex lane also runs every block of a tape whose
//! constants are not all real.
//!
//! **Invariants:** a tape's instructions refer only to earlier ones; evaluation never
//! allocates per point; a value is the principal-branch value of the canonical form it came
//! from, up to rounding.

mod compile;
mod lane;
mod lattice;
mod lower;
#[cfg(test)]
mod tests;
pub(crate) mod trig;

pub use compile::{Compiler, TapeError};
pub use lane::{C64, Lane};
pub use lattice::{Lattice, PlaneOutcome, PlaneWork};
pub use lower::{Binding, Combine, Lowering, TapeTarget, Target, UserExprs, UserNode};

use lane::{Shape, map1, spread, zip2};
use rustc_hash::FxHashMap;

/// Points per block in [`Batch`] evaluation.
pub const BATCH: usize = 256;

/// The most inputs a tape may have (dependency masks are bytes).
pub const MAX_INPUTS: usize = 8;

/// One instruction; operands are indices of earlier instructions.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(crate) enum Op {
    Const(C64),
    Input(u8),
    Add(u32, u32),
    Sub(u32, u32),
    Mul(u32, u32),
    Div(u32, u32),
    Neg(u32),
    PowI(u32, i32),
    Exp(u32),
    Log(u32),
    Sin(u32),
    Cos(u32),
    Root(u32, u32),
}

impl Op {
    /// The operands, in order.
    fn operands(self) -> [Option<u32>; 2] {
        use Op::*;
        match self {
            Const(_) | Input(_) => [None, None],
            Add(a, b) | Sub(a, b) | Mul(a, b) | Div(a, b) => [Some(a), Some(b)],
            Neg(a) | PowI(a, _) | Exp(a) | Log(a) | Sin(a) | Cos(a) | Root(a, _) => [Some(a), None],
        }
    }

    fn remap(self, f: impl Fn(u32) -> u32) -> Op {
        use Op::*;
        match self {
            Const(_) | Input(_) => self,
            Add(a, b) => Add(f(a), f(b)),
            Sub(a, b) => Sub(f(a), f(b)),
            Mul(a, b) => Mul(f(a), f(b)),
            Div(a, b) => Div(f(a), f(b)),
            Neg(a) => Neg(f(a)),
            PowI(a, n) => PowI(f(a), n),
            Exp(a) => Exp(f(a)),
            Log(a) => Log(f(a)),
            Sin(a) => Sin(f(a)),
            Cos(a) => Cos(f(a)),
            Root(a, q) => Root(f(a), q),
        }
    }

    /// A hashable identity of the instruction (constants by their bits).
    fn key(self) -> (u8, u64, u64) {
        use Op::*;
        match self {
            Const(c) => (0, c.re.to_bits(), c.im.to_bits()),
            Input(i) => (1, u64::from(i), 0),
            Add(a, b) => (2, a.into(), b.into()),
            Sub(a, b) => (3, a.into(), b.into()),
            Mul(a, b) => (4, a.into(), b.into()),
            Div(a, b) => (5, a.into(), b.into()),
            Neg(a) => (6, a.into(), 0),
            PowI(a, n) => (7, a.into(), n as u64),
            Exp(a) => (8, a.into(), 0),
            Log(a) => (9, a.into(), 0),
            Sin(a) => (10, a.into(), 0),
            Cos(a) => (11, a.into(), 0),
            Root(a, q) => (12, a.into(), q.into()),
        }
    }
}

/// Applies a non-leaf instruction to a block: `a` and `b` are the operands' blocks with their
/// shapes (`b` is ignored by unary instructions, whose result has `a`'s shape).
#[inline]
pub(crate) fn apply<T: Lane>(op: Op, d: &mut [T], ds: Shape, a: (&[T], Shape), b: (&[T], Shape)) {
    #[cfg(target_arch = "x86_64")]
    if std::is_x86_feature_detected!("avx512f") {
        // SAFETY: detected just above.
        unsafe { apply_avx512(op, d, ds, a, b) };
        return;
    }
    #[cfg(target_arch = "x86_64")]
    if std::is_x86_feature_detected!("avx2") {
        // SAFETY: the processor has AVX2 (detected just above), the only requirement of
        // `apply_avx2`.
        unsafe { apply_avx2(op, d, ds, a, b) };
        return;
    }
    apply_lanes(op, d, ds, a, b);
}

/// [`apply`] compiled for AVX2: the same IEEE operations (no fused multiply-add, which Rust
/// never forms on its own), so the same bits, four lanes per instruction instead of two.
///
/// # Safety
///
/// The processor must support AVX2.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
unsafe fn apply_avx2<T: Lane>(op: Op, d: &mut [T], ds: Shape, a: (&[T], Shape), b: (&[T], Shape)) {
    apply_lanes(op, d, ds, a, b);
}

/// AVX-512 (eight lanes per instruction; the same operations, so the same bits).
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx512f")]
unsafe fn apply_avx512<T: Lane>(
    op: Op,
    d: &mut [T],
    ds: Shape,
    a: (&[T], Shape),
    b: (&[T], Shape),
) {
    apply_lanes(op, d, ds, a, b);
}

/// The body of [`apply`], inlined into each compiled variant.
#[inline(always)]
fn apply_lanes<T: Lane>(op: Op, d: &mut [T], ds: Shape, a: (&[T], Shape), b: (&[T], Shape)) {
    let n = ds.len();
    match op {
        Op::Add(..) => zip2(d, ds, a, b, T::add),
        Op::Sub(..) => zip2(d, ds, a, b, T::sub),
        Op::Mul(..) => zip2(d, ds, a, b, T::mul),
        Op::Div(..) => zip2(d, ds, a, b, T::div),
        Op::Neg(_) => map1(&mut d[..n], &a.0[..n], T::neg),
        Op::PowI(_, k) => map1(&mut d[..n], &a.0[..n], |x| T::powi(x, k)),
        Op::Exp(_) => map1(&mut d[..n], &a.0[..n], T::exp),
        Op::Log(_) => map1(&mut d[..n], &a.0[..n], T::ln),
        Op::Sin(_) => T::sin_block(&mut d[..n], &a.0[..n]),
        Op::Cos(_) => T::cos_block(&mut d[..n], &a.0[..n]),
        Op::Root(_, q) => map1(&mut d[..n], &a.0[..n], |x| T::root(x, q)),
        Op::Const(_) | Op::Input(_) => unreachable!("leaves are filled by the caller"),
    }
}

/// A node of a [`TapeBuilder`].
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct Node(u32);

/// A hash-consed DAG of instructions under construction.
#[derive(Clone, Debug)]
pub struct TapeBuilder {
    ops: Vec<Op>,
    masks: Vec<u8>,
    index: FxHashMap<(u8, u64, u64), u32>,
    n_inputs: usize,
}

impl TapeBuilder {
    /// A builder for expressions of `n_inputs` inputs (at most [`MAX_INPUTS`]).
    ///
    /// # Panics
    ///
    /// If `n_inputs` is above [`MAX_INPUTS`].
    #[must_use]
    pub fn new(n_inputs: usize) -> TapeBuilder {
        assert!(n_inputs <= MAX_INPUTS, "at most {MAX_INPUTS} inputs");
        TapeBuilder {
            ops: Vec::new(),
            masks: Vec::new(),
            index: FxHashMap::default(),
            n_inputs,
        }
    }

    /// How many distinct instructions have been built.
    #[must_use]
    pub fn len(&self) -> usize {
        self.ops.len()
    }

    /// True if nothing has been built.
    #[must_use]
    pub fn is_empty(&self) -> bool {
        self.ops.is_empty()
    }

    fn push(&mut self, op: Op) -> Node {
        let key = op.key();
        if let Some(&i) = self.index.get(&key) {
            return Node(i);
        }
        let mask = match op {
            Op::Const(_) => 0,
            Op::Input(i) => 1u8 << i,
            _ => op
                .operands()
                .iter()
                .flatten()
                .fold(0, |m, &a| m | self.masks[a as usize]),
        };
        let i = self.ops.len() as u32;
        self.ops.push(op);
        self.masks.push(mask);
        self.index.insert(key, i);
        Node(i)
    }

    fn value(&self, n: Node) -> Option<C64> {
        match self.ops[n.0 as usize] {
            Op::Const(c) => Some(c),
            _ => None,
        }
    }

    fn is_value(&self, n: Node, v: f64) -> bool {
        self.value(n) == Some(C64::real(v))
    }

    /// True if the node is the constant 0.
    #[must_use]
    pub fn is_zero(&self, n: Node) -> bool {
        self.is_value(n, 0.0)
    }

    /// The dependency mask of a node: bit `i` set if it depends on input `i`.
    #[must_use]
    pub fn mask(&self, n: Node) -> u8 {
        self.masks[n.0 as usize]
    }

    /// Input number `i`.
    ///
    /// # Panics
    ///
    /// If `i` is not below the builder's number of inputs.
    pub fn input(&mut self, i: usize) -> Node {
        assert!(i < self.n_inputs, "input {i} out of range");
        self.push(Op::Input(i as u8))
    }

    /// A constant.
    pub fn constant(&mut self, c: C64) -> Node {
        // One zero: -0.0 and 0.0 are the same constant for every later use.
        self.push(Op::Const(C64::new(c.re + 0.0, c.im + 0.0)))
    }

    /// A real constant.
    pub fn real(&mut self, x: f64) -> Node {
        self.constant(C64::real(x))
    }

    fn fold2(&mut self, a: Node, b: Node, f: fn(C64, C64) -> C64) -> Option<Node> {
        let (x, y) = (self.value(a)?, self.value(b)?);
        Some(self.constant(f(x, y)))
    }

    fn fold1(&mut self, a: Node, f: impl Fn(C64) -> C64) -> Option<Node> {
        let x = self.value(a)?;
        Some(self.constant(f(x)))
    }

    fn negated(&self, n: Node) -> Option<Node> {
        match self.ops[n.0 as usize] {
            Op::Neg(x) => Some(Node(x)),
            _ => None,
        }
    }

    /// `a + b`.
    pub fn add(&mut self, a: Node, b: Node) -> Node {
        if let Some(n) = self.fold2(a, b, C64::add_) {
            return n;
        }
        if self.is_value(a, 0.0) {
            return b;
        }
        if self.is_value(b, 0.0) {
            return a;
        }
        if let Some(y) = self.negated(b) {
            return self.sub(a, y);
        }
        if let Some(x) = self.negated(a) {
            return self.sub(b, x);
        }
        let (a, b) = if a <= b { (a, b) } else { (b, a) };
        self.push(Op::Add(a.0, b.0))
    }

    /// `a - b`.
    pub fn sub(&mut self, a: Node, b: Node) -> Node {
        if let Some(n) = self.fold2(a, b, C64::sub_) {
            return n;
        }
        if a == b {
            return self.real(0.0);
        }
        if self.is_value(b, 0.0) {
            return a;
        }
        if self.is_value(a, 0.0) {
            return self.neg(b);
        }
        if let Some(y) = self.negated(b) {
            return self.add(a, y);
        }
        self.push(Op::Sub(a.0, b.0))
    }

    /// `a * b`.
    pub fn mul(&mut self, a: Node, b: Node) -> Node {
        if let Some(n) = self.fold2(a, b, C64::mul_) {
            return n;
        }
        for (x, y) in [(a, b), (b, a)] {
            if self.is_value(x, 1.0) {
                return y;
            }
            if self.is_value(x, 0.0) {
                return x;
            }
            if self.is_value(x, -1.0) {
                return self.neg(y);
            }
        }
        let (a, b) = if a <= b { (a, b) } else { (b, a) };
        self.push(Op::Mul(a.0, b.0))
    }

    /// `a / b`.
    pub fn div(&mut self, a: Node, b: Node) -> Node {
        if let Some(n) = self.fold2(a, b, C64::div_) {
            return n;
        }
        if self.is_value(b, 1.0) {
            return a;
        }
        if self.is_value(a, 0.0) {
            return a;
        }
        if let Some(c) = self.value(b) {
            // Multiplying by the reciprocal is cheaper and as accurate to a rounding.
            let r = self.constant(C64::div_(C64::real(1.0), c));
            return self.mul(a, r);
        }
        self.push(Op::Div(a.0, b.0))
    }

    /// `-a`.
    pub fn neg(&mut self, a: Node) -> Node {
        if let Some(n) = self.fold1(a, |x| C64::new(-x.re, -x.im)) {
            return n;
        }
        if let Some(x) = self.negated(a) {
            return x;
        }
        if let Op::Sub(x, y) = self.ops[a.0 as usize] {
            return self.sub(Node(y), Node(x));
        }
        self.push(Op::Neg(a.0))
    }

    /// `a^n`.
    pub fn powi(&mut self, a: Node, n: i32) -> Node {
        match n {
            0 => return self.real(1.0),
            1 => return a,
            _ => {}
        }
        if let Some(c) = self.fold1(a, |x| <C64 as Lane>::powi(x, n)) {
            return c;
        }
        self.push(Op::PowI(a.0, n))
    }

    /// `f(a)`: folded into a constant for a constant `a`, else the instruction `op(a)`.
    fn unary(&mut self, a: Node, f: fn(C64) -> C64, op: fn(u32) -> Op) -> Node {
        match self.fold1(a, f) {
            Some(c) => c,
            None => self.push(op(a.0)),
        }
    }

    /// `exp(a)`.
    pub fn exp(&mut self, a: Node) -> Node {
        self.unary(a, <C64 as Lane>::exp, Op::Exp)
    }

    /// The principal `log(a)`.
    pub fn log(&mut self, a: Node) -> Node {
        self.unary(a, <C64 as Lane>::ln, Op::Log)
    }

    /// `sin(a)`.
    pub fn sin(&mut self, a: Node) -> Node {
        self.unary(a, <C64 as Lane>::sin, Op::Sin)
    }

    /// `cos(a)`.
    pub fn cos(&mut self, a: Node) -> Node {
        self.unary(a, <C64 as Lane>::cos, Op::Cos)
    }

    /// The principal root `a^(1/q)`, `q >= 1`.
    pub fn root(&mut self, a: Node, q: u32) -> Node {
        if q <= 1 {
            return a;
        }
        if let Some(c) = self.fold1(a, |x| <C64 as Lane>::root(x, q)) {
            return c;
        }
        self.push(Op::Root(a.0, q))
    }

    /// `n` as a linear combination `sum c_k n_k` with real constant coefficients `c_k` of
    /// nodes `n_k` that are not sums, differences, negations or products with a real
    /// constant (the derivatives of `n` are then the same combination of theirs). The parts
    /// are in node order, each node once, with no zero coefficient; the coefficients are
    /// products and sums of the tape's constants in `f64`, so they equal the exact ones to
    /// rounding. `n` itself (coefficient 1) when it has a nonzero constant term, a complex
    /// coefficient, or more than `limit` nodes to visit (a shared subexpression is visited
    /// once per use); nothing for the constant 0.
    #[must_use]
    pub fn linear_parts(&self, n: Node, limit: usize) -> Vec<(Node, f64)> {
        let whole = || vec![(n, 1.0)];
        let real = |x: u32| match self.ops[x as usize] {
            Op::Const(c) if c.im == 0.0 && c.re.is_finite() => Some(c.re),
            _ => None,
        };
        let mut parts: Vec<(Node, f64)> = Vec::new();
        let mut stack = vec![(n.0, 1.0f64)];
        let mut visited = 0usize;
        while let Some((i, c)) = stack.pop() {
            visited += 1;
            if visited > limit {
                return whole();
            }
            match self.ops[i as usize] {
                Op::Const(v) if v.re == 0.0 && v.im == 0.0 => {}
                Op::Const(_) => return whole(),
                Op::Add(a, b) => stack.extend([(b, c), (a, c)]),
                Op::Sub(a, b) => stack.extend([(b, -c), (a, c)]),
                Op::Neg(a) => stack.push((a, -c)),
                Op::Mul(a, b) if real(a).is_some() => stack.push((b, c * real(a).unwrap_or(1.0))),
                Op::Mul(a, b) if real(b).is_some() => stack.push((a, c * real(b).unwrap_or(1.0))),
                _ => parts.push((Node(i), c)),
            }
        }
        if parts.iter().any(|p| !p.1.is_finite()) {
            return whole();
        }
        // Each node once (stable sort: the coefficients add in the order they were found).
        parts.sort_by_key(|p| p.0);
        let mut merged: Vec<(Node, f64)> = Vec::with_capacity(parts.len());
        for (m, c) in parts {
            match merged.last_mut() {
                Some(last) if last.0 == m => last.1 += c,
                _ => merged.push((m, c)),
            }
        }
        merged.retain(|p| p.1 != 0.0);
        merged
    }

    /// The tape that computes `outputs`, in that order: only the instructions they need,
    /// renumbered in dependency order.
    #[must_use]
    pub fn finish(&self, outputs: &[Node]) -> Tape {
        let mut live = vec![false; self.ops.len()];
        for o in outputs {
            live[o.0 as usize] = true;
        }
        for i in (0..self.ops.len()).rev() {
            if live[i] {
                for a in self.ops[i].operands().into_iter().flatten() {
                    live[a as usize] = true;
                }
            }
        }
        let mut new_index = vec![u32::MAX; self.ops.len()];
        let mut ops = Vec::new();
        let mut masks = Vec::new();
        for (i, op) in self.ops.iter().enumerate() {
            if live[i] {
                new_index[i] = ops.len() as u32;
                ops.push(op.remap(|a| new_index[a as usize]));
                masks.push(self.masks[i]);
            }
        }
        let complex = ops
            .iter()
            .any(|op| matches!(op, Op::Const(c) if c.im != 0.0));
        Tape {
            ops,
            masks,
            outputs: outputs.iter().map(|o| new_index[o.0 as usize]).collect(),
            complex,
            n_inputs: self.n_inputs,
        }
    }
}

// Named helpers so that constant folding uses exactly the complex lane's arithmetic.
impl C64 {
    fn add_(a: C64, b: C64) -> C64 {
        <C64 as Lane>::add(a, b)
    }
    fn sub_(a: C64, b: C64) -> C64 {
        <C64 as Lane>::sub(a, b)
    }
    fn mul_(a: C64, b: C64) -> C64 {
        <C64 as Lane>::mul(a, b)
    }
    fn div_(a: C64, b: C64) -> C64 {
        <C64 as Lane>::div(a, b)
    }
}

/// A finished instruction tape: straight-line code computing its outputs from its inputs.
#[derive(Clone, Debug)]
pub struct Tape {
    pub(crate) ops: Vec<Op>,
    pub(crate) masks: Vec<u8>,
    pub(crate) outputs: Vec<u32>,
    pub(crate) complex: bool,
    n_inputs: usize,
}

/// Unit roundoff of f64.
const U: f64 = f64::EPSILON / 2.0;

impl Tape {
    /// Number of instructions.
    #[must_use]
    pub fn len(&self) -> usize {
        self.ops.len()
    }

    /// True if the tape has no instructions.
    #[must_use]
    pub fn is_empty(&self) -> bool {
        self.ops.is_empty()
    }

    /// Number of outputs.
    #[must_use]
    pub fn outputs(&self) -> usize {
        self.outputs.len()
    }

    /// Number of inputs.
    #[must_use]
    pub fn inputs(&self) -> usize {
        self.n_inputs
    }

    /// True if every constant is real, so the real fast path applies.
    #[must_use]
    pub fn is_real(&self) -> bool {
        !self.complex
    }

    /// The inputs output `j` depends on, as a bit mask.
    #[must_use]
    pub fn output_mask(&self, j: usize) -> u8 {
        self.masks[self.outputs[j] as usize]
    }

    /// The outputs at one point, in complex arithmetic.
    ///
    /// # Panics
    ///
    /// If `x` has fewer values than the tape has inputs.
    #[must_use]
    pub fn eval_point(&self, x: &[f64]) -> Vec<C64> {
        assert!(x.len() >= self.n_inputs, "one value per input");
        let mut v: Vec<C64> = Vec::with_capacity(self.ops.len());
        for &op in &self.ops {
            let r = match op {
                Op::Const(c) => c,
                Op::Input(i) => C64::real(x[i as usize]),
                _ => {
                    let [a, b] = op.operands();
                    let a = v[a.expect("operand") as usize];
                    let b = b.map_or(a, |b| v[b as usize]);
                    let mut d = [C64::default()];
                    apply(
                        op,
                        &mut d,
                        Shape::ONE,
                        (&[a], Shape::ONE),
                        (&[b], Shape::ONE),
                    );
                    d[0]
                }
            };
            v.push(r);
        }
        self.outputs.iter().map(|&o| v[o as usize]).collect()
    }

    /// The outputs at one point with a running error bound each: `(value, bound)`, the bound
    /// on the absolute difference between the computed value and the exact value of the
    /// expression at the computed (rounded) input values, to first order in the unit roundoff
    /// (a running error analysis in the sense of Wilkinson; libm functions are taken to be
    /// within one ulp). Inputs count as rounded once. Infinite where a divisor or the argument
    /// of a log or root is not bounded away from zero.
    ///
    /// # Panics
    ///
    /// If `x` has fewer values than the tape has inputs.
    #[must_use]
    pub fn eval_bounds(&self, x: &[f64]) -> Vec<(C64, f64)> {
        assert!(x.len() >= self.n_inputs, "one value per input");
        let mut v: Vec<(C64, f64)> = Vec::with_capacity(self.ops.len());
        for &op in &self.ops {
            let r = match op {
                Op::Const(c) => (c, 2.0 * U * c.abs()),
                Op::Input(i) => {
                    let xi = x[i as usize];
                    (C64::real(xi), U * xi.abs())
                }
                _ => {
                    let [a, b] = op.operands();
                    let (av, ae) = v[a.expect("operand") as usize];
                    let (bv, be) = b.map_or((av, ae), |b| v[b as usize]);
                    let mut d = [C64::default()];
                    apply(
                        op,
                        &mut d,
                        Shape::ONE,
                        (&[av], Shape::ONE),
                        (&[bv], Shape::ONE),
                    );
                    let z = d[0];
                    let m = z.abs();
                    let (am, bm) = (av.abs(), bv.abs());
                    let e = match op {
                        Op::Add(..) | Op::Sub(..) => ae + be + U * m,
                        Op::Mul(..) => am * be + bm * ae + ae * be + 2.0 * U * m,
                        Op::Div(..) => {
                            if bm <= be {
                                f64::INFINITY
                            } else {
                                (ae + m * be) / (bm - be) + 2.0 * U * m
                            }
                        }
                        Op::Neg(_) => ae,
                        Op::PowI(_, n) => {
                            let k = n.unsigned_abs() as i32;
                            let grow = if am == 0.0 {
                                if n > 0 { ae.powi(k) } else { f64::INFINITY }
                            } else {
                                let rel = ae / am;
                                if n > 0 {
                                    m * ((1.0 + rel).powi(k) - 1.0)
                                } else if rel >= 1.0 {
                                    f64::INFINITY
                                } else {
                                    m * ((1.0 - rel).powi(-k) - 1.0)
                                }
                            };
                            grow + f64::from(k) * U * m
                        }
                        Op::Exp(_) => m * ae.exp_m1() + 2.0 * U * m,
                        Op::Log(_) => {
                            if am <= ae {
                                f64::INFINITY
                            } else {
                                -(1.0 - ae / am).ln() + 2.0 * U * m + U
                            }
                        }
                        Op::Sin(_) | Op::Cos(_) => ae * (av.im.abs() + ae).cosh() + 2.0 * U * m,
                        Op::Root(_, q) => {
                            if am == 0.0 {
                                ae.powf(1.0 / f64::from(q))
                            } else {
                                let rel = ae / am;
                                if rel >= 1.0 {
                                    f64::INFINITY
                                } else {
                                    m * rel / (f64::from(q) * (1.0 - rel)) + 2.0 * U * m
                                }
                            }
                        }
                        Op::Const(_) | Op::Input(_) => unreachable!(),
                    };
                    (z, if e.is_nan() { f64::INFINITY } else { e })
                }
            };
            v.push(r);
        }
        self.outputs.iter().map(|&o| v[o as usize]).collect()
    }
}

/// Register allocation for a schedule: a register per instruction in `schedule`, reusing a
/// register once its value's last use has passed. `keep` marks values that must survive to
/// the end (outputs); `external` marks operands that live elsewhere (never allocated here).
/// Returns (register of each instruction, by instruction index; number of registers).
fn allocate(ops: &[Op], schedule: &[u32], keep: &[bool], external: &[bool]) -> (Vec<u32>, usize) {
    let mut last = vec![usize::MAX; ops.len()];
    for (pos, &i) in schedule.iter().enumerate() {
        for a in ops[i as usize].operands().into_iter().flatten() {
            last[a as usize] = pos;
        }
    }
    let mut reg = vec![u32::MAX; ops.len()];
    let mut free: Vec<u32> = Vec::new();
    let mut count = 0u32;
    for (pos, &i) in schedule.iter().enumerate() {
        let r = free.pop().unwrap_or_else(|| {
            count += 1;
            count - 1
        });
        reg[i as usize] = r;
        // Operands whose last use is here are freed after the result has its register, so a
        // result never shares a register with its operands.
        let mut ops_here = ops[i as usize].operands();
        if ops_here[0] == ops_here[1] {
            ops_here[1] = None;
        }
        for a in ops_here.into_iter().flatten() {
            let a = a as usize;
            if last[a] == pos && !keep[a] && !external[a] {
                free.push(reg[a]);
            }
        }
        // A value nobody uses (only possible for kept ones) keeps its register.
        if last[i as usize] == usize::MAX && !keep[i as usize] {
            free.push(r);
        }
    }
    (reg, count as usize)
}

/// What a [`Batch`] evaluation found.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct BatchReport {
    /// Output values that are not finite (after the complex pass).
    pub nonfinite: usize,
    /// Blocks that needed the complex pass.
    pub complex_blocks: usize,
    /// The largest |imaginary part| met, relative to the largest |value| of its output.
    pub max_im_ratio: f64,
}

/// Evaluation at arbitrary points, in blocks of [`BATCH`].
pub struct Batch<'t> {
    tape: &'t Tape,
    schedule: Vec<u32>,
    reg: Vec<u32>,
    real: Vec<Vec<f64>>,
    cplx: Vec<Vec<C64>>,
}

impl<'t> Batch<'t> {
    /// An evaluator with its own registers.
    #[must_use]
    pub fn new(tape: &'t Tape) -> Batch<'t> {
        let n = tape.ops.len();
        let mut keep = vec![false; n];
        for &o in &tape.outputs {
            keep[o as usize] = true;
        }
        // Constants live in registers of their own, filled once, after the pooled ones.
        let is_const: Vec<bool> = tape
            .ops
            .iter()
            .map(|op| matches!(op, Op::Const(_)))
            .collect();
        let schedule: Vec<u32> = (0..n as u32).filter(|&i| !is_const[i as usize]).collect();
        let (mut reg, mut count) = allocate(&tape.ops, &schedule, &keep, &is_const);
        for (i, &c) in is_const.iter().enumerate() {
            if c {
                reg[i] = count as u32;
                count += 1;
            }
        }
        let mut real = vec![vec![0.0; BATCH]; count];
        let mut cplx = vec![vec![C64::default(); BATCH]; count];
        for (i, op) in tape.ops.iter().enumerate() {
            if let Op::Const(c) = op {
                real[reg[i] as usize][0] = c.re;
                cplx[reg[i] as usize][0] = *c;
            }
        }
        Batch {
            tape,
            schedule,
            reg,
            real,
            cplx,
        }
    }

    fn shape(&self, i: usize, n: usize) -> Shape {
        if matches!(self.tape.ops[i], Op::Const(_)) {
            Shape::ONE
        } else {
            Shape { ny: 1, nz: n }
        }
    }

    fn run<T: Lane>(&self, regs: &mut [Vec<T>], inputs: &[&[f64]], start: usize, n: usize) {
        for &i in &self.schedule {
            let i = i as usize;
            let op = self.tape.ops[i];
            let r = self.reg[i] as usize;
            let mut d = std::mem::take(&mut regs[r]);
            match op {
                Op::Input(k) => {
                    for (o, &x) in d[..n].iter_mut().zip(&inputs[k as usize][start..start + n]) {
                        *o = T::from_f64(x);
                    }
                }
                _ => {
                    let [a, b] = op.operands();
                    let a = a.expect("operand") as usize;
                    let b = b.map_or(a, |b| b as usize);
                    let ds = self.shape(i, n);
                    apply(
                        op,
                        &mut d,
                        ds,
                        (&regs[self.reg[a] as usize], self.shape(a, n)),
                        (&regs[self.reg[b] as usize], self.shape(b, n)),
                    );
                }
            }
            regs[r] = d;
        }
    }

    /// Evaluates every output at `n` points: `inputs[k]` holds input `k` at each point, and
    /// `out` receives output `j` at point `p` in `out[j * n + p]` (the real part; see the
    /// report for imaginary parts and non-finite values).
    ///
    /// # Panics
    ///
    /// If there are fewer input slices than inputs, a slice is shorter than the others' `n`,
    /// or `out` is not `outputs * n` long.
    pub fn eval(&mut self, inputs: &[&[f64]], out: &mut [f64]) -> BatchReport {
        assert!(inputs.len() >= self.tape.n_inputs, "one slice per input");
        let n = inputs.first().map_or(0, |s| s.len());
        assert!(inputs.iter().all(|s| s.len() == n), "input slices differ");
        let m = self.tape.outputs.len();
        assert_eq!(out.len(), m * n, "output length");
        let mut report = BatchReport::default();
        let mut max_abs = vec![0f64; m];
        let mut max_im = vec![0f64; m];
        let mut start = 0;
        while start < n {
            let len = BATCH.min(n - start);
            let mut ok = false;
            if !self.tape.complex {
                let mut regs = std::mem::take(&mut self.real);
                self.run(&mut regs, inputs, start, len);
                ok = true;
                for (j, &o) in self.tape.outputs.iter().enumerate() {
                    let s = self.shape(o as usize, len);
                    let dst = &mut out[j * n + start..j * n + start + len];
                    spread(
                        dst,
                        Shape { ny: 1, nz: len },
                        &regs[self.reg[o as usize] as usize],
                        s,
                    );
                    ok &= dst.iter().all(|v| v.is_finite());
                    for v in dst.iter() {
                        max_abs[j] = max_abs[j].max(v.abs());
                    }
                }
                self.real = regs;
            }
            if !ok {
                report.complex_blocks += 1;
                let mut regs = std::mem::take(&mut self.cplx);
                self.run(&mut regs, inputs, start, len);
                let mut tmp = vec![C64::default(); len];
                for (j, &o) in self.tape.outputs.iter().enumerate() {
                    let s = self.shape(o as usize, len);
                    spread(
                        &mut tmp,
                        Shape { ny: 1, nz: len },
                        &regs[self.reg[o as usize] as usize],
                        s,
                    );
                    for (p, z) in tmp.iter().enumerate() {
                        out[j * n + start + p] = if z.is_finite() { z.re } else { f64::NAN };
                        if z.is_finite() {
                            max_abs[j] = max_abs[j].max(z.abs());
                            max_im[j] = max_im[j].max(z.im.abs());
                        } else {
                            report.nonfinite += 1;
                        }
                    }
                }
                self.cplx = regs;
            }
            start += len;
        }
        for j in 0..m {
            if max_im[j] > 0.0 {
                let ratio = if max_abs[j] > 0.0 {
                    max_im[j] / max_abs[j]
                } else {
                    f64::INFINITY
                };
                report.max_im_ratio = report.max_im_ratio.max(ratio);
            }
        }
        report
    }
}
