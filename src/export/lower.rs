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
    derivatives_by(l, m, &COORDS.map(String::from))
}

/// The first partial derivatives of the symmetric `m` by each coordinate of `coords`.
fn derivatives_by<T: Target>(
    l: &mut Lowering<T>,
    m: &[[UserNode; 4]; 4],
    coords: &[String; 4],
) -> Result<Vec<[[UserNode; 4]; 4]>, TapeError> {
    let mut out = Vec::with_capacity(4);
    for c in coords {
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

/// What the columns about a background are computed from besides [`Texts`]: the coordinate
/// names and the texts of `gbar` (the file's `[background]`).
#[derive(Clone, Copy, Debug)]
pub struct About<'a> {
    /// The coordinate names, time first.
    pub coordinates: &'a [String; 4],
    /// `gbar_{mu nu}` as written.
    pub g: &'a [[Option<String>; 4]; 4],
}

/// The lowering being built, shared by the symbolic values of [`Sym`].
pub struct Handle<'l, T: Target>(&'l RefCell<Lowering<T>>);

impl<T: Target> Clone for Handle<'_, T> {
    fn clone(&self) -> Self {
        *self
    }
}
impl<T: Target> Copy for Handle<'_, T> {}
impl<T: Target> std::fmt::Debug for Handle<'_, T> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str("Handle")
    }
}

/// A value of the pointwise curvature chain as an expression: a plain constant (the chain's
/// own small constants, folded), or a node of the user-structure DAG.
pub enum Sym<'l, T: Target> {
    /// A constant.
    Const(f64),
    /// A node, and the lowering it lives in.
    Node(UserNode, Handle<'l, T>),
}

impl<T: Target> Clone for Sym<'_, T> {
    fn clone(&self) -> Self {
        *self
    }
}
impl<T: Target> Copy for Sym<'_, T> {}
impl<T: Target> std::fmt::Debug for Sym<'_, T> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            Sym::Const(c) => write!(f, "{c}"),
            Sym::Node(n, _) => write!(f, "{n:?}"),
        }
    }
}

impl<'l, T: Target> Sym<'l, T> {
    /// The node of this value, in the lowering of `h`.
    fn node(self, h: Handle<'l, T>) -> Option<UserNode> {
        match self {
            Sym::Node(n, _) => Some(n),
            Sym::Const(c) => Some(h.0.borrow_mut().number(BigRational::from_float(c)?)),
        }
    }

    /// `op` of the two values: folded when both are constants, else a node.
    fn binary(
        self,
        rhs: Self,
        fold: impl FnOnce(f64, f64) -> f64,
        op: impl FnOnce(UserNode, UserNode) -> Combine,
    ) -> Option<Self> {
        let h = match (self, rhs) {
            (Sym::Const(a), Sym::Const(b)) => {
                let v = fold(a, b);
                return v.is_finite().then_some(Sym::Const(v));
            }
            (Sym::Node(_, h), _) | (_, Sym::Node(_, h)) => h,
        };
        let (a, b) = (self.node(h)?, rhs.node(h)?);
        let n = h.0.borrow_mut().combine(op(a, b));
        Some(Sym::Node(n, h))
    }
}

impl<'l, T: Target> crate::pointwise::Arith for Sym<'l, T> {
    type Ctx = Handle<'l, T>;
    const SYMBOLIC: bool = true;
    fn constant(x: f64) -> Option<Self> {
        x.is_finite().then_some(Sym::Const(x))
    }
    fn pi(ctx: &Handle<'l, T>) -> Option<Self> {
        let n = ctx.0.borrow_mut().pi();
        Some(Sym::Node(n, *ctx))
    }
    fn add(&self, rhs: &Self) -> Option<Self> {
        self.binary(*rhs, |a, b| a + b, Combine::Add)
    }
    fn sub(&self, rhs: &Self) -> Option<Self> {
        self.binary(*rhs, |a, b| a - b, Combine::Sub)
    }
    fn mul(&self, rhs: &Self) -> Option<Self> {
        self.binary(*rhs, |a, b| a * b, Combine::Mul)
    }
    fn div(&self, rhs: &Self) -> Option<Self> {
        // A division by an exact 0 has no value anywhere.
        match rhs {
            Sym::Const(b) if *b == 0.0 => return None,
            Sym::Node(n, h) if h.0.borrow().is_zero(*n) => return None,
            _ => {}
        }
        self.binary(*rhs, |a, b| a / b, Combine::Div)
    }
    fn neg(&self) -> Self {
        match *self {
            Sym::Const(c) => Sym::Const(-c),
            Sym::Node(n, h) => Sym::Node(h.0.borrow_mut().combine(Combine::Neg(n)), h),
        }
    }
    fn magnitude(&self) -> f64 {
        // Never used to pivot (SYMBOLIC: the inverse is taken by cofactors).
        match self {
            Sym::Const(c) => c.abs(),
            Sym::Node(..) => 1.0,
        }
    }
}

/// `m`, its first and its second derivatives by the coordinates `c`, as nodes.
type Jets = (
    [[UserNode; 4]; 4],
    Vec<[[UserNode; 4]; 4]>,
    Vec<Vec<[[UserNode; 4]; 4]>>,
);

fn jets_of<T: Target>(
    l: &mut Lowering<T>,
    texts: &[[Option<String>; 4]; 4],
    c: &[String; 4],
) -> Result<Jets, TapeError> {
    let m = tensor(l, texts)?;
    let d = derivatives_by(l, &m, c)?;
    let mut dd = Vec::with_capacity(4);
    for x in &d {
        dd.push(derivatives_by(l, x, c)?);
    }
    Ok((m, d, dd))
}

/// The roots of every column of `quantities` about the background of `about` (one list per
/// quantity, columns in the order of [`super::quantity::blocks_about`]), lowered into
/// `target`: the whole curvature chain of `gbar + eps h` of [`crate::pointwise`] evaluated
/// on expression nodes (inverse by cofactors), the same code that certifies the exported
/// numbers.
///
/// # Errors
///
/// As [`roots`]; a quantity not defined about a background; a background metric whose
/// determinant is exactly 0.
pub fn roots_about<T: Target>(
    target: T,
    texts: &Texts<'_>,
    about: &About<'_>,
    quantities: &[Quantity],
) -> Result<(T, Columns<T>), TapeError> {
    use crate::pointwise as pw;
    let mut l = Lowering::with_target(target, &texts.user)?;
    let c = about.coordinates;
    let g = jets_of(&mut l, about.g, c)?;
    let h = jets_of(&mut l, texts.h, c)?;
    let cell = RefCell::new(l);
    let mut nodes = Vec::with_capacity(quantities.len());
    {
        let handle = Handle(&cell);
        let sym2 = |j: &Jets| {
            pw::Sym2::from_fn(|mu, nu, d| {
                let n = match d {
                    [] => j.0[mu][nu],
                    [a] => j.1[*a][mu][nu],
                    [a, b] => j.2[*a][*b][mu][nu],
                    _ => return None,
                };
                Some(Sym::Node(n, handle))
            })
        };
        let unsupported = |what: &str| TapeError::Unsupported(what.to_string());
        let fields = pw::Fields {
            gbar: sym2(&g).ok_or_else(|| unsupported("the background's derivatives"))?,
            h: sym2(&h).ok_or_else(|| unsupported("the perturbation's derivatives"))?,
            lambda: Sym::Const(0.0),
            tbar: None,
            dt: None,
            xi: None,
        };
        let pq = pw::evaluate(&fields, &handle)
            .ok_or_else(|| unsupported("a background metric whose determinant is exactly 0"))?;
        for &q in quantities {
            let vals = certify::values_about(q, &pq, &fields);
            if vals.is_empty() {
                return Err(unsupported(&format!(
                    "`{}` about a background (the quantities there are h, hbar, dh, riemann, \
                     ricci, einstein)",
                    q.name()
                )));
            }
            let mut ids = Vec::with_capacity(vals.len());
            for v in vals {
                let v = v.ok_or_else(|| unsupported("a division by an exact 0"))?;
                ids.push(v.node(handle).ok_or_else(|| unsupported("a constant"))?);
            }
            nodes.push(ids);
        }
    }
    let mut l = cell.into_inner();
    let mut out = Vec::with_capacity(nodes.len());
    for ids in nodes {
        out.push(
            ids.into_iter()
                .map(|n| l.lower(n))
                .collect::<Result<_, _>>()?,
        );
    }
    Ok((l.target, out))
}
