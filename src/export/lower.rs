//! The export quantities as expressions of the problem's own texts, lowered into any
//! operation graph ([`Target`]): the emitter's DAG ([`crate::emit::user::EmitTarget`]) or the
//! export's interval program ([`super::program::IntervalProgram`]).
//!
//! Model. The user's components, defines and function samples are built into the
//! user-structure DAG of [`crate::tape::Lowering`] (defines shared, `d_` applied by
//! differentiating the DAG), the derivatives of `h` each quantity needs are taken there, and
//! the quantity formulas of [`super::certify`] combine them. Nothing is expanded.
//!
//! **Invariants:** never calls `canon`, `zero` or `tensor`; the columns come in the order of
//! [`super::quantity::blocks`].

use super::certify::{self, FieldSource, Frame, Ring};
use super::quantity::Quantity;
use crate::tape::{Combine, Lowering, TapeError, Target, UserExprs, UserNode};
use num_rational::BigRational;
use std::cell::RefCell;

/// Arithmetic on user-structure nodes, for the quantity formulas.
struct UserRing<'a, T: Target> {
    l: RefCell<&'a mut Lowering<T>>,
}

impl<T: Target> Ring for UserRing<'_, T> {
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

fn tensor<T: Target>(
    l: &mut Lowering<T>,
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

fn derivatives<T: Target>(
    l: &mut Lowering<T>,
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

/// The lowered columns: one list of root nodes per quantity, columns in their fixed order.
pub type Columns<T> = Vec<Vec<<T as Target>::Node>>;

/// The roots of every column of `quantities` (one list per quantity, columns in their fixed
/// order), lowered into `target`, which is returned with them.
///
/// # Errors
///
/// A text that does not parse, a name without a value, a sample that is missing or nests too
/// deep, a DAG too large, or a quantity that needs a direction without one.
pub fn roots<T: Target>(
    target: T,
    texts: &Texts<'_>,
    quantities: &[Quantity],
) -> Result<(T, Columns<T>), TapeError> {
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
    Ok((l.target, out))
}
