//! The generated code's expressions, from the problem's own texts.
//!
//! Model. The user's components, defines and function samples are built into the
//! user-structure DAG of [`crate::tape::Lowering`] (defines shared, `d_` applied by
//! differentiating the DAG), the derivatives of `h` each quantity needs are taken there, and
//! the quantity formulas of [`crate::export::certify`] (the same code that computes the
//! exported numbers) combine them. The result is lowered into the emitter's [`Dag`], which
//! shares common subexpressions. Nothing is expanded: a Gaussian pulse
//! `exp(-(t - y)^2/(2 s^2))` is computed as written, not as `exp((2 t y - t^2 - y^2)/(2 s^2))`,
//! which loses every digit far from the origin.
//!
//! **Invariants:** never calls `canon`, `zero` or `tensor`; variables are numbered as in
//! [`Op::Var`] (t, x, y, z, then the parameters in file order); an arbitrary function
//! is a call [`Op::User`] unless its sample is inlined.

use super::dag::{Dag, Fun, Id, Op};
use crate::export::certify::{self, FieldSource, Frame, Ring};
use crate::export::quantity::Quantity;
use crate::tape::{Combine, Lowering, TapeError, Target, UserExprs, UserNode};
use num_rational::BigRational;
use std::cell::RefCell;

/// The emitter's DAG as a lowering target.
pub struct EmitTarget {
    /// The DAG.
    pub dag: Dag,
    /// Variable names: t, x, y, z, then the parameters.
    vars: Vec<String>,
    /// Arbitrary functions in file order.
    functions: Vec<String>,
    /// True to evaluate functions through their samples.
    inline: bool,
}

impl EmitTarget {
    /// A target with these variables (t, x, y, z, then parameters) and functions.
    #[must_use]
    pub fn new(vars: Vec<String>, functions: Vec<String>, inline: bool) -> EmitTarget {
        EmitTarget {
            dag: Dag::new(),
            vars,
            functions,
            inline,
        }
    }

    fn prod(&mut self, c: f64, num: Vec<Id>, den: Vec<Id>) -> Id {
        self.dag.node(Op::Prod((c + 0.0).to_bits(), num, den))
    }
}

impl Target for EmitTarget {
    type Node = Id;
    fn number(&mut self, q: &BigRational) -> Option<Id> {
        let v = num_traits::ToPrimitive::to_f64(q).filter(|v| v.is_finite())?;
        Some(self.dag.num(v))
    }
    fn pi(&mut self) -> Id {
        self.dag.num(std::f64::consts::PI)
    }
    fn symbol(&mut self, name: &str, sample: Option<&str>) -> Result<Id, TapeError> {
        match self.vars.iter().position(|v| v == name) {
            // Inside a sample only parameters have values.
            Some(i) if sample.is_none() || i >= 4 => Ok(self.dag.node(Op::Var(i as u32))),
            _ => Err(match sample {
                None => TapeError::Unbound(name.to_string()),
                Some(f) => TapeError::UnboundInSample {
                    func: f.to_string(),
                    name: name.to_string(),
                },
            }),
        }
    }
    fn add(&mut self, a: Id, b: Id) -> Id {
        self.dag.node(Op::Sum(vec![a, b]))
    }
    fn sub(&mut self, a: Id, b: Id) -> Id {
        let nb = self.neg(b);
        self.dag.node(Op::Sum(vec![a, nb]))
    }
    fn mul(&mut self, a: Id, b: Id) -> Id {
        self.prod(1.0, vec![a, b], vec![])
    }
    fn div(&mut self, a: Id, b: Id) -> Id {
        self.dag.node(Op::Quot(a, b))
    }
    fn neg(&mut self, a: Id) -> Id {
        if let Op::Num(bits) = self.dag.op(a) {
            let v = -f64::from_bits(*bits);
            return self.dag.num(v);
        }
        self.prod(-1.0, vec![a], vec![])
    }
    fn powi(&mut self, a: Id, k: i32) -> Id {
        match k {
            0 => self.dag.num(1.0),
            1 => a,
            -1 => self.prod(1.0, vec![], vec![a]),
            k if k > 1 => self.dag.node(Op::Pow(a, k.unsigned_abs())),
            k => {
                let p = self.dag.node(Op::Pow(a, k.unsigned_abs()));
                self.prod(1.0, vec![], vec![p])
            }
        }
    }
    fn root(&mut self, a: Id, q: u32) -> Id {
        self.dag.node(Op::Root(a, q))
    }
    fn exp(&mut self, a: Id) -> Id {
        self.dag.node(Op::Call(Fun::Exp, a))
    }
    fn log(&mut self, a: Id) -> Id {
        self.dag.node(Op::Call(Fun::Log, a))
    }
    fn sin(&mut self, a: Id) -> Id {
        self.dag.node(Op::Call(Fun::Sin, a))
    }
    fn cos(&mut self, a: Id) -> Id {
        self.dag.node(Op::Call(Fun::Cos, a))
    }
    fn call(&mut self, f: &str, k: u32, arg: Id) -> Option<Id> {
        if self.inline {
            return None;
        }
        let i = self.functions.iter().position(|n| n == f)?;
        Some(self.dag.node(Op::User(i as u32, k, arg)))
    }
}

/// Arithmetic on user-structure nodes, for the quantity formulas.
struct UserRing<'a> {
    l: RefCell<&'a mut Lowering<EmitTarget>>,
}

impl Ring for UserRing<'_> {
    type V = UserNode;
    fn num(&self, c: f64) -> Option<UserNode> {
        let q = BigRational::from_float(c)?;
        Some(self.l.borrow_mut().number(q))
    }
    fn pi(&self) -> Option<UserNode> {
        Some(self.l.borrow_mut().pi())
    }
    fn add(&self, a: &UserNode, b: &UserNode) -> Option<UserNode> {
        Some(self.l.borrow_mut().combine(Combine::Add(*a, *b)))
    }
    fn sub(&self, a: &UserNode, b: &UserNode) -> Option<UserNode> {
        Some(self.l.borrow_mut().combine(Combine::Sub(*a, *b)))
    }
    fn mul(&self, a: &UserNode, b: &UserNode) -> Option<UserNode> {
        Some(self.l.borrow_mut().combine(Combine::Mul(*a, *b)))
    }
    fn neg(&self, a: &UserNode) -> Option<UserNode> {
        Some(self.l.borrow_mut().combine(Combine::Neg(*a)))
    }
}

/// Components of `h` and `T` and the derivatives the quantities need, as DAG nodes.
struct UserFields {
    /// `[mu][nu]`, then `[rho][mu][nu]`, `[a][b][mu][nu]`.
    h: [[UserNode; 4]; 4],
    dh: Vec<[[UserNode; 4]; 4]>,
    ddh: Vec<Vec<[[UserNode; 4]; 4]>>,
    t: Option<[[UserNode; 4]; 4]>,
}

impl FieldSource for UserFields {
    type V = UserNode;
    fn h(&self, mu: usize, nu: usize) -> Option<UserNode> {
        Some(self.h[mu][nu])
    }
    fn dh(&self, rho: usize, mu: usize, nu: usize) -> Option<UserNode> {
        self.dh.get(rho).map(|d| d[mu][nu])
    }
    fn ddh(&self, a: usize, b: usize, mu: usize, nu: usize) -> Option<UserNode> {
        self.ddh.get(a)?.get(b).map(|d| d[mu][nu])
    }
    fn t(&self, mu: usize, nu: usize) -> Option<UserNode> {
        self.t.map(|t| t[mu][nu])
    }
    fn has_source(&self) -> bool {
        self.t.is_some()
    }
}

/// The problem's texts the code is generated from.
pub struct Texts<'a> {
    /// `h_{mu nu}` as written (`None`: zero).
    pub h: &'a [[Option<String>; 4]; 4],
    /// `T_{mu nu}` as written, `None` for vacuum.
    pub source: Option<&'a [[Option<String>; 4]; 4]>,
    /// Defines and function samples.
    pub user: UserExprs,
    /// The direction frame `n`, `u`, `v` as texts, for psi4, hplus, hcross.
    pub frame: Option<[[String; 3]; 3]>,
}

const COORDS: [&str; 4] = ["t", "x", "y", "z"];

fn tensor(
    l: &mut Lowering<EmitTarget>,
    texts: &[[Option<String>; 4]; 4],
) -> Result<[[UserNode; 4]; 4], TapeError> {
    let zero = l.number(BigRational::from_integer(0.into()));
    let mut m = [[zero; 4]; 4];
    for mu in 0..4 {
        for nu in mu..4 {
            if let Some(t) = texts[mu][nu].as_ref().or(texts[nu][mu].as_ref()) {
                let n = l.text(t)?;
                m[mu][nu] = n;
                m[nu][mu] = n;
            }
        }
    }
    Ok(m)
}

fn derivatives(
    l: &mut Lowering<EmitTarget>,
    m: &[[UserNode; 4]; 4],
) -> Result<Vec<[[UserNode; 4]; 4]>, TapeError> {
    let mut out = Vec::with_capacity(4);
    for c in COORDS {
        let mut d = *m;
        for mu in 0..4 {
            for nu in mu..4 {
                let n = l.derivative(m[mu][nu], c)?;
                d[mu][nu] = n;
                d[nu][mu] = n;
            }
        }
        out.push(d);
    }
    Ok(out)
}

/// The DAG roots of every column of `quantities` (one list per quantity, columns in their
/// fixed order), in `target`.
///
/// # Errors
///
/// A text that does not parse, a name without a value, a sample that is missing or nests too
/// deep, a DAG too large, or a quantity that needs a direction without one.
pub fn roots(
    target: EmitTarget,
    texts: &Texts<'_>,
    quantities: &[Quantity],
) -> Result<(Dag, Vec<Vec<Id>>), TapeError> {
    let mut l = Lowering::with_target(target, &texts.user)?;
    let order = quantities
        .iter()
        .map(|&q| certify::derivative_order(q))
        .max()
        .unwrap_or(0);
    let h = tensor(&mut l, texts.h)?;
    let dh = if order >= 1 {
        derivatives(&mut l, &h)?
    } else {
        Vec::new()
    };
    let mut ddh = Vec::new();
    if order >= 2 {
        for d in &dh {
            ddh.push(derivatives(&mut l, d)?);
        }
    }
    let t = match texts.source {
        Some(s) => Some(tensor(&mut l, s)?),
        None => None,
    };
    let frame = match &texts.frame {
        Some(fr) => {
            let mut vecs = Vec::with_capacity(3);
            for v in fr {
                let mut c = Vec::with_capacity(3);
                for text in v {
                    c.push(l.text(text)?);
                }
                vecs.push([c[0], c[1], c[2]]);
            }
            Some(Frame {
                n: vecs[0],
                u: vecs[1],
                v: vecs[2],
            })
        }
        None => None,
    };
    let fields = UserFields { h, dh, ddh, t };
    let mut columns = Vec::with_capacity(quantities.len());
    {
        let ring = UserRing {
            l: RefCell::new(&mut l),
        };
        for &q in quantities {
            let vals = certify::quantity_values(&ring, q, &fields, frame.as_ref());
            columns.push(vals);
        }
    }
    let mut out = Vec::with_capacity(columns.len());
    for (q, vals) in quantities.iter().zip(columns) {
        let mut ids = Vec::with_capacity(vals.len());
        for v in vals {
            let v = v.ok_or_else(|| {
                TapeError::Unsupported(format!("`{}` without a direction", q.name()))
            })?;
            ids.push(l.lower(v)?);
        }
        out.push(ids);
    }
    Ok((l.target.dag, out))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn target(params: &[&str], functions: &[&str], inline: bool) -> EmitTarget {
        let vars = COORDS.iter().chain(params).map(|s| s.to_string()).collect();
        EmitTarget::new(
            vars,
            functions.iter().map(|s| s.to_string()).collect(),
            inline,
        )
    }

    fn h_only(text: &str, mu: usize, nu: usize) -> [[Option<String>; 4]; 4] {
        let mut h: [[Option<String>; 4]; 4] = Default::default();
        h[mu][nu] = Some(text.to_string());
        h
    }

    /// Issue 9: the emitted arithmetic keeps `t - y`, so it is accurate far from the origin.
    /// Reference: mpmath, 50 digits (see the export test of the same pulse).
    #[test]
    fn issue9_emitted_code_keeps_the_user_structure() {
        let h = h_only("exp(-(t - y)^2/(2*s^2))", 1, 1);
        let texts = Texts {
            h: &h,
            source: None,
            user: UserExprs::default(),
            frame: None,
        };
        let (dag, r) = roots(target(&["s"], &[], false), &texts, &[Quantity::H]).unwrap();
        let vars = [100_000_000.1, 0.0, 100_000_000.0, 0.0, 0.03];
        let mut memo = rustc_hash::FxHashMap::default();
        let v = dag.eval(r[0][4], &vars, &mut memo).unwrap();
        assert!((v / 0.003_865_922_699_771_317 - 1.0).abs() < 1e-9, "{v}");
    }

    /// Riemann of h_xx = F(t - z) through the DAG: R_txtx = -(1/2) F''(t - z); with an
    /// inlined sample F = sin, -(1/2)(-sin(u)) = sin(u)/2.
    #[test]
    fn curvature_from_differentiated_user_structure() {
        let h = h_only("F(t - z)", 1, 1);
        let texts = Texts {
            h: &h,
            source: None,
            user: UserExprs {
                defines: vec![],
                functions: vec![("F".into(), "sin(u)".into())],
            },
            frame: None,
        };
        let (dag, r) = roots(target(&[], &["F"], true), &texts, &[Quantity::Riemann]).unwrap();
        let (t, z) = (0.7, 0.2);
        let mut memo = rustc_hash::FxHashMap::default();
        let v = dag.eval(r[0][0], &[t, 0.1, 0.3, z], &mut memo).unwrap();
        assert!((v - (t - z).sin() / 2.0).abs() < 1e-15, "{v}");
        // Without inlining, F'' is a call to a supplied function.
        let (dag, r) = roots(target(&[], &["F"], false), &texts, &[Quantity::Riemann]).unwrap();
        let (_, users) = dag.uses(&r[0]);
        assert_eq!(users, [(0, 2)]);
    }

    #[test]
    fn coordinates_inside_samples_and_unknown_names_are_errors() {
        let h = h_only("q*x", 0, 0);
        let texts = Texts {
            h: &h,
            source: None,
            user: UserExprs::default(),
            frame: None,
        };
        let e = roots(target(&[], &[], false), &texts, &[Quantity::H]).err();
        assert_eq!(e, Some(TapeError::Unbound("q".into())));
        let h = h_only("F(t)", 0, 0);
        let texts = Texts {
            h: &h,
            source: None,
            user: UserExprs {
                defines: vec![],
                functions: vec![("F".into(), "u*x".into())],
            },
            frame: None,
        };
        let e = roots(target(&[], &["F"], true), &texts, &[Quantity::H]).err();
        assert!(
            matches!(e, Some(TapeError::UnboundInSample { .. })),
            "{e:?}"
        );
    }
}
