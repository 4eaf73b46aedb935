//! Expressions as a hash-consed DAG (built from the problem's texts by [`super::user`]), and
//! the choice of common subexpressions.
//!
//! Every distinct subtree (same operation on the same children) is one node, so a
//! subexpression written twice, in one component or in two, is one node with two uses. A
//! node with two or more uses that is not a number or a variable becomes a temporary.

use rustc_hash::FxHashMap;

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
    /// The principal arctangent.
    Atan,
    /// The absolute value (of a real argument).
    Abs,
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
    /// `atan2(y, x)`, the language's own (equal to lingrav's off the cut `x <= 0, y = 0`).
    Atan2(Id, Id),
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
    /// The problem's texts could not be lowered (an unknown name, a missing sample, ...).
    #[error("{0}")]
    Lowering(String),
}

/// The DAG.
#[derive(Default)]
pub struct Dag {
    nodes: Vec<Op>,
    index: FxHashMap<Op, Id>,
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

    /// The node `op` (an existing equal node is reused).
    pub fn node(&mut self, op: Op) -> Id {
        self.push(op)
    }

    /// The constant `v`.
    pub fn num(&mut self, v: f64) -> Id {
        self.push(Op::Num((v + 0.0).to_bits()))
    }

    /// The children of node `id`, in order.
    #[must_use]
    pub fn children(&self, id: Id) -> Vec<Id> {
        match self.op(id) {
            Op::Num(_) | Op::Var(_) => Vec::new(),
            Op::Call(_, a) | Op::Pow(a, _) | Op::Root(a, _) | Op::User(_, _, a) => vec![*a],
            Op::Prod(_, n, d) => n.iter().chain(d).copied().collect(),
            Op::Sum(ts) => ts.clone(),
            Op::Quot(a, b) | Op::Atan2(a, b) => vec![*a, *b],
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
    /// if one is called): the tests' reference for the generated code.
    #[cfg(test)]
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
                    Fun::Atan => a.atan(),
                    Fun::Abs => a.abs(),
                }
            }
            Op::Atan2(y, x) => {
                let y = self.eval(*y, vars, memo)?;
                y.atan2(self.eval(*x, vars, memo)?)
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
