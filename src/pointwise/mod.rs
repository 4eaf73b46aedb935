//! The linearized field equations on a curved background, at one point, in any arithmetic.
//!
//! Model. At a point we are given the background metric `gbar_{mu nu}` and the perturbation
//! `h_{mu nu}` (values, first and second partial derivatives), optionally a background source
//! `Tbar_{mu nu}` and its perturbation `dT_{mu nu}` (values and first derivatives), a
//! cosmological constant `Lambda` and a gauge vector `xi_mu` (index down, value and first
//! derivatives), in arbitrary coordinates. [`evaluate`] returns, at that point:
//! - the background residual `Gbar_ab + Lambda gbar_ab - 8 pi Tbar_ab`;
//! - the field residual `E_ab = dG_ab + Lambda h_ab - 8 pi dT_ab` with
//!   `dG_ab = d/deps G_ab[gbar + eps h]` at `eps = 0`;
//! - the linearized Riemann tensor `dR_abcd` and the background's `Rbar_abcd` (all down);
//! - the trace `h = gbar^{ab} h_ab` and the Lorenz divergence
//!   `L_nu = gbar^{mu alpha} nablabar_alpha (h_{mu nu} - 1/2 gbar_{mu nu} h)`;
//! - the gauge residual `h_ab - (nablabar_a xi_b + nablabar_b xi_a)` when `xi` is given;
//! - the change of source conservation, the `eps` part of `g^{mu alpha} nabla_alpha T_{mu nu}`
//!   for `g = gbar + eps h`, `T = Tbar + eps dT`.
//!
//! Conventions: signature (-,+,+,+), G = c = 1, MTW signs:
//! `R^a_bcd = d_c Gamma^a_bd - d_d Gamma^a_bc + Gamma^a_ce Gamma^e_bd - Gamma^a_de Gamma^e_bc`,
//! `R_bd = R^a_bad`, `G_ab = R_ab - 1/2 g_ab R`.
//!
//! Key design decision: forward-mode differentiation in `eps`. The whole curvature chain
//! (inverse metric, Christoffel symbols, the Riemann tensor with every index down from the
//! metric's second derivatives and the Christoffel symbols, Ricci, scalar, Einstein; see
//! [`curvature`]) is written once, from the definitions, over any [`Arith`], and run over
//! [`Dual`] numbers `a + b eps` (`eps^2 = 0`) for the metric `gbar + eps h`. The `eps` parts
//! are then exactly `d/deps` of the full nonlinear chain at `eps = 0`, and the value parts are
//! the background's quantities. No linearized formula (the Palatini identity, which the exact
//! route uses, or any hand-linearized Christoffel) appears here, so an error in one of those
//! cannot repeat itself in this route.
//!
//! Arithmetic. Everything is generic over the small trait [`Arith`] (the four operations,
//! negation, exact constants, pi, a magnitude for pivoting). Every certified enclosure type
//! of [`crate::jet::Scalar`] (f64 [`crate::interval::Interval`], multiprecision
//! [`crate::interval::Ball`]) is an `Arith` with the same meaning: each result encloses the
//! exact one. Plain `f64` is an `Arith` too, for the uncertified grid route: its operations
//! return `None` on a non-finite result (so a division by 0 is `None`) and promise nothing
//! else. `f64` deliberately does not implement [`crate::jet::Scalar`], whose contract is
//! certification.
//!
//! **Invariants:** uses only [`crate::jet::Scalar`] (and through it the interval types),
//! never `canon`, `tensor`, `problem` or `check`; `None` means "cannot evaluate here" (a
//! pivot or divisor enclosing 0, an overflow), propagated and never replaced by a guess.

use crate::jet::scalar::Scalar;
use std::fmt;

/// The arithmetic the pointwise route is written in.
///
/// For a certified type every result must enclose the exact result for all reals in the
/// operands (or be `None`); for `f64` results are merely rounded.
pub trait Arith: Clone + fmt::Debug {
    /// What constants need besides their value (the working precision of a ball).
    type Ctx: Clone + fmt::Debug;
    /// The exactly representable constant `x` (small integers, halves); `None` if not finite.
    fn constant(x: f64) -> Option<Self>;
    /// Pi (an enclosure of it, for a certified type).
    fn pi(ctx: &Self::Ctx) -> Option<Self>;
    /// Sum.
    fn add(&self, rhs: &Self) -> Option<Self>;
    /// Difference.
    fn sub(&self, rhs: &Self) -> Option<Self>;
    /// Product.
    fn mul(&self, rhs: &Self) -> Option<Self>;
    /// Quotient; `None` if `rhs` may be 0.
    fn div(&self, rhs: &Self) -> Option<Self>;
    /// Negation (exact).
    fn neg(&self) -> Self;
    /// An approximate magnitude, used only to choose pivots (never for a verdict).
    fn magnitude(&self) -> f64;
    /// True for expression nodes (generated code), whose values are not known here: the
    /// inverse metric is then taken by cofactors, dividing only by the determinant, instead of
    /// pivoting on magnitudes.
    const SYMBOLIC: bool = false;
    /// `0`.
    fn zero() -> Self {
        Self::constant(0.0).expect("0 is finite")
    }
}

impl<S: Scalar> Arith for S {
    type Ctx = S::Ctx;
    fn constant(x: f64) -> Option<Self> {
        S::from_f64(x)
    }
    fn pi(ctx: &Self::Ctx) -> Option<Self> {
        S::pi(ctx)
    }
    fn add(&self, rhs: &Self) -> Option<Self> {
        Scalar::add(self, rhs)
    }
    fn sub(&self, rhs: &Self) -> Option<Self> {
        Scalar::sub(self, rhs)
    }
    fn mul(&self, rhs: &Self) -> Option<Self> {
        Scalar::mul(self, rhs)
    }
    fn div(&self, rhs: &Self) -> Option<Self> {
        Scalar::div(self, rhs)
    }
    fn neg(&self) -> Self {
        Scalar::neg(self)
    }
    fn magnitude(&self) -> f64 {
        self.mid_f64().abs()
    }
}

/// Plain floating point for the (uncertified) grid route: `None` on a non-finite result.
impl Arith for f64 {
    type Ctx = ();
    fn constant(x: f64) -> Option<Self> {
        finite(x)
    }
    fn pi(_: &()) -> Option<Self> {
        Some(std::f64::consts::PI)
    }
    fn add(&self, rhs: &Self) -> Option<Self> {
        finite(self + rhs)
    }
    fn sub(&self, rhs: &Self) -> Option<Self> {
        finite(self - rhs)
    }
    fn mul(&self, rhs: &Self) -> Option<Self> {
        finite(self * rhs)
    }
    fn div(&self, rhs: &Self) -> Option<Self> {
        finite(self / rhs)
    }
    fn neg(&self) -> Self {
        -self
    }
    fn magnitude(&self) -> f64 {
        self.abs()
    }
}

fn finite(x: f64) -> Option<f64> {
    x.is_finite().then_some(x)
}

/// A dual number `value + eps * eps_part` with `eps^2 = 0`: arithmetic on it carries
/// `d/deps` of every intermediate result exactly (forward-mode differentiation).
#[derive(Clone, Debug, PartialEq)]
pub struct Dual<A> {
    /// The part at `eps = 0`.
    pub value: A,
    /// The derivative by `eps` at `eps = 0`.
    pub eps: A,
}

impl<A: Arith> Dual<A> {
    /// `value + eps * eps_part`.
    pub fn new(value: A, eps: A) -> Dual<A> {
        Dual { value, eps }
    }
}

impl<A: Arith> Arith for Dual<A> {
    type Ctx = A::Ctx;
    fn constant(x: f64) -> Option<Self> {
        Some(Dual::new(A::constant(x)?, A::zero()))
    }
    fn pi(ctx: &Self::Ctx) -> Option<Self> {
        Some(Dual::new(A::pi(ctx)?, A::zero()))
    }
    fn add(&self, rhs: &Self) -> Option<Self> {
        Some(Dual::new(
            self.value.add(&rhs.value)?,
            self.eps.add(&rhs.eps)?,
        ))
    }
    fn sub(&self, rhs: &Self) -> Option<Self> {
        Some(Dual::new(
            self.value.sub(&rhs.value)?,
            self.eps.sub(&rhs.eps)?,
        ))
    }
    fn mul(&self, rhs: &Self) -> Option<Self> {
        let eps = self.value.mul(&rhs.eps)?.add(&self.eps.mul(&rhs.value)?)?;
        Some(Dual::new(self.value.mul(&rhs.value)?, eps))
    }
    fn div(&self, rhs: &Self) -> Option<Self> {
        // (a + a' eps) / (b + b' eps) = a/b + eps (a' - (a/b) b') / b.
        let q = self.value.div(&rhs.value)?;
        let eps = self.eps.sub(&q.mul(&rhs.eps)?)?.div(&rhs.value)?;
        Some(Dual::new(q, eps))
    }
    fn neg(&self) -> Self {
        Dual::new(self.value.neg(), self.eps.neg())
    }
    const SYMBOLIC: bool = A::SYMBOLIC;
    fn magnitude(&self) -> f64 {
        self.value.magnitude()
    }
}

/// The ten index pairs `mu <= nu` in the order of the crate's component lists
/// (`tt, tx, ty, tz, xx, xy, xz, yy, yz, zz` for coordinates `t, x, y, z`).
/// (The upper triangle row by row, the order of `tensor::COMPONENTS`, which this layer does
/// not use; a unit test compares them.)
pub const PAIRS: [(usize, usize); 10] = upper_triangle();

/// The pairs `mu <= nu` of four indices, row by row.
const fn upper_triangle() -> [(usize, usize); 10] {
    let mut out = [(0, 0); 10];
    let (mut k, mut mu) = (0, 0);
    while mu < 4 {
        let mut nu = mu;
        while nu < 4 {
            out[k] = (mu, nu);
            k += 1;
            nu += 1;
        }
        mu += 1;
    }
    out
}

/// The position of the pair `{mu, nu}` (either order) in [`PAIRS`].
pub fn pair(mu: usize, nu: usize) -> usize {
    let (a, b) = if mu <= nu { (mu, nu) } else { (nu, mu) };
    a * (7 - a) / 2 + b
}

/// A symmetric tensor field with indices down at a point, to second order: its ten
/// independent components (mu <= nu, [`PAIRS`] order), their four first and ten second
/// partial derivatives.
#[derive(Clone, Debug)]
pub struct Sym2<A> {
    /// `value[pair(mu, nu)]`.
    pub value: [A; 10],
    /// `d1[pair(mu, nu)][c]` is `d_c` of the component.
    pub d1: [[A; 4]; 10],
    /// `d2[pair(mu, nu)][pair(c, d)]` is `d_c d_d` of the component.
    pub d2: [[A; 10]; 10],
}

/// A symmetric tensor field with indices down at a point, to first order (a source).
#[derive(Clone, Debug)]
pub struct Sym1<A> {
    /// `value[pair(mu, nu)]`.
    pub value: [A; 10],
    /// `d1[pair(mu, nu)][c]` is `d_c` of the component.
    pub d1: [[A; 4]; 10],
}

/// A covector field `xi_mu` (index down) at a point, to first order.
#[derive(Clone, Debug)]
pub struct Covector1<A> {
    /// `value[mu]`.
    pub value: [A; 4],
    /// `d1[mu][c]` is `d_c xi_mu`.
    pub d1: [[A; 4]; 4],
}

/// Four results of a fallible function of the index, or `None` if any is `None`.
fn arr<T>(mut f: impl FnMut(usize) -> Option<T>) -> Option<[T; 4]> {
    // In order, without a heap allocation (this builds every level of every rank-4 tensor).
    let (a, b, c, d) = (f(0)?, f(1)?, f(2)?, f(3)?);
    Some([a, b, c, d])
}

/// `PAIR6[k][l]`: the position of the pair `k < l` among (0,1), (0,2), (0,3), (1,2), (1,3),
/// (2,3); unused for `k >= l`.
const PAIR6: [[usize; 4]; 4] = [[0, 0, 1, 2], [0, 0, 3, 4], [0, 0, 0, 5], [0, 0, 0, 0]];

/// Ten results of a fallible function of the pair index.
fn arr10<T>(f: impl FnMut(usize) -> Option<T>) -> Option<[T; 10]> {
    let v: Vec<T> = (0..10).map(f).collect::<Option<_>>()?;
    v.try_into().ok()
}

/// `sum_{i < 4} term(i)`.
fn sum4<A: Arith>(mut term: impl FnMut(usize) -> Option<A>) -> Option<A> {
    let mut acc = term(0)?;
    for i in 1..4 {
        acc = acc.add(&term(i)?)?;
    }
    Some(acc)
}

impl<A: Arith> Sym2<A> {
    /// The field whose component `(mu, nu)` (`mu <= nu`) with the partial derivatives by
    /// the coordinates `d` (empty, one index, or two in ascending order) is `f(mu, nu, d)`.
    pub fn from_fn(mut f: impl FnMut(usize, usize, &[usize]) -> Option<A>) -> Option<Sym2<A>> {
        Some(Sym2 {
            value: arr10(|k| f(PAIRS[k].0, PAIRS[k].1, &[]))?,
            d1: arr10(|k| arr(|c| f(PAIRS[k].0, PAIRS[k].1, &[c])))?,
            d2: arr10(|k| arr10(|p| f(PAIRS[k].0, PAIRS[k].1, &[PAIRS[p].0, PAIRS[p].1])))?,
        })
    }

    /// The metric `gbar + eps h` as dual numbers.
    pub fn dual(gbar: &Sym2<A>, h: &Sym2<A>) -> Sym2<Dual<A>> {
        let d = |a: &A, b: &A| Dual::new(a.clone(), b.clone());
        Sym2 {
            value: std::array::from_fn(|k| d(&gbar.value[k], &h.value[k])),
            d1: std::array::from_fn(|k| std::array::from_fn(|c| d(&gbar.d1[k][c], &h.d1[k][c]))),
            d2: std::array::from_fn(|k| std::array::from_fn(|p| d(&gbar.d2[k][p], &h.d2[k][p]))),
        }
    }

    /// Component `(mu, nu)`.
    pub fn at(&self, mu: usize, nu: usize) -> &A {
        &self.value[pair(mu, nu)]
    }

    /// `d_c` of component `(mu, nu)`.
    pub fn d(&self, c: usize, mu: usize, nu: usize) -> &A {
        &self.d1[pair(mu, nu)][c]
    }

    /// `d_c d_d` of component `(mu, nu)`.
    pub fn dd(&self, c: usize, d: usize, mu: usize, nu: usize) -> &A {
        &self.d2[pair(mu, nu)][pair(c, d)]
    }
}

impl<A: Arith> Sym1<A> {
    /// The field whose component `(mu, nu)` (`mu <= nu`) with the partial derivatives by
    /// the coordinates `d` (empty or one index) is `f(mu, nu, d)`.
    pub fn from_fn(mut f: impl FnMut(usize, usize, &[usize]) -> Option<A>) -> Option<Sym1<A>> {
        Some(Sym1 {
            value: arr10(|k| f(PAIRS[k].0, PAIRS[k].1, &[]))?,
            d1: arr10(|k| arr(|c| f(PAIRS[k].0, PAIRS[k].1, &[c])))?,
        })
    }

    /// Every component and derivative 0.
    pub fn zero() -> Sym1<A> {
        Sym1 {
            value: std::array::from_fn(|_| A::zero()),
            d1: std::array::from_fn(|_| std::array::from_fn(|_| A::zero())),
        }
    }

    /// Component `(mu, nu)`.
    pub fn at(&self, mu: usize, nu: usize) -> &A {
        &self.value[pair(mu, nu)]
    }

    /// `d_c` of component `(mu, nu)`.
    pub fn d(&self, c: usize, mu: usize, nu: usize) -> &A {
        &self.d1[pair(mu, nu)][c]
    }
}

impl<A: Arith> Covector1<A> {
    /// The covector whose component `mu` with the partial derivatives by the coordinates `d`
    /// (empty or one index) is `f(mu, d)`.
    pub fn from_fn(mut f: impl FnMut(usize, &[usize]) -> Option<A>) -> Option<Covector1<A>> {
        Some(Covector1 {
            value: arr(|mu| f(mu, &[]))?,
            d1: arr(|mu| arr(|c| f(mu, &[c])))?,
        })
    }
}

/// Everything given at the point.
#[derive(Clone, Debug)]
pub struct Fields<A> {
    /// The background metric, to second order.
    pub gbar: Sym2<A>,
    /// The perturbation, to second order.
    pub h: Sym2<A>,
    /// The cosmological constant (0 for none).
    pub lambda: A,
    /// The background source, if any (absent: 0).
    pub tbar: Option<Sym1<A>>,
    /// The perturbation of the source, if any (absent: 0).
    pub dt: Option<Sym1<A>>,
    /// A gauge vector `xi_mu` (index down), if the gauge residual is wanted.
    pub xi: Option<Covector1<A>>,
}

/// A 4x4 matrix.
pub type Matrix<A> = [[A; 4]; 4];
/// A tensor of rank 3, `t[a][b][c]`.
pub type Rank3<A> = [[[A; 4]; 4]; 4];
/// A tensor of rank 4, `t[a][b][c][d]`.
pub type Rank4<A> = [[[[A; 4]; 4]; 4]; 4];

/// The inverse of a 4x4 matrix by Gauss-Jordan elimination, pivoting on the largest
/// magnitude in the column; `None` when a pivot may be 0 (for enclosures: contains 0).
pub fn inverse<A: Arith>(m: &Matrix<A>) -> Option<Matrix<A>> {
    if A::SYMBOLIC {
        return inverse_by_cofactors(m);
    }
    let mut a = m.clone();
    let mut inv: Matrix<A> = arr(|i| arr(|j| A::constant(if i == j { 1.0 } else { 0.0 })))?;
    for col in 0..4 {
        let p = (col..4)
            .max_by(|&i, &j| a[i][col].magnitude().total_cmp(&a[j][col].magnitude()))
            .unwrap_or(col);
        a.swap(col, p);
        inv.swap(col, p);
        let pivot = a[col][col].clone();
        for j in 0..4 {
            a[col][j] = a[col][j].div(&pivot)?;
            inv[col][j] = inv[col][j].div(&pivot)?;
        }
        for r in 0..4 {
            if r == col {
                continue;
            }
            let f = a[r][col].clone();
            for j in 0..4 {
                a[r][j] = a[r][j].sub(&f.mul(&a[col][j])?)?;
                inv[r][j] = inv[r][j].sub(&f.mul(&inv[col][j])?)?;
            }
        }
    }
    Some(inv)
}

/// The inverse of a 4x4 matrix as its adjugate over its determinant (Laplace expansion along
/// the first row): the only division is by the determinant, which vanishes only where the
/// matrix is singular. For [`Arith::SYMBOLIC`] types.
pub fn inverse_by_cofactors<A: Arith>(m: &Matrix<A>) -> Option<Matrix<A>> {
    // The determinant of the 3x3 minor without row `r` and column `c`.
    let minor = |r: usize, c: usize| -> Option<A> {
        let rows: Vec<usize> = (0..4).filter(|&i| i != r).collect();
        let cols: Vec<usize> = (0..4).filter(|&j| j != c).collect();
        let e = |i: usize, j: usize| &m[rows[i]][cols[j]];
        let term = |a: usize, b: usize, c: usize| -> Option<A> {
            e(0, a).mul(&e(1, b).mul(e(2, c))?.sub(&e(1, c).mul(e(2, b))?)?)
        };
        term(0, 1, 2)?.sub(&term(1, 0, 2)?)?.add(&term(2, 0, 1)?)
    };
    let cofactor = |r: usize, c: usize| -> Option<A> {
        let x = minor(r, c)?;
        Some(if (r + c).is_multiple_of(2) {
            x
        } else {
            x.neg()
        })
    };
    let cof: Matrix<A> = arr(|r| arr(|c| cofactor(r, c)))?;
    let det = sum4(|j| m[0][j].mul(&cof[0][j]))?;
    // (m^-1)_{ij} = C_ji / det.
    arr(|i| arr(|j| cof[j][i].div(&det)))
}

/// The curvature chain of a metric at a point, from its value and first and second
/// derivatives, written from the definitions.
#[derive(Clone, Debug)]
pub struct Curvature<A> {
    /// `g^{ab}`.
    pub inverse: Matrix<A>,
    /// `christoffel[a][b][c] = Gamma^a_bc = 1/2 g^{ad} (d_b g_dc + d_c g_db - d_d g_bc)`.
    pub christoffel: Rank3<A>,
    /// `riemann[a][b][c][d] = R_abcd` (MTW signs), when [`Needs::riemann`].
    pub riemann: Option<Box<Rank4<A>>>,
    /// `R_bd = R^a_bad = g^{ae} R_ebad`.
    pub ricci: Matrix<A>,
    /// `R = g^{bd} R_bd`.
    #[allow(
        dead_code,
        reason = "part of the chain's result (and of Einstein); no caller reads it on its own yet"
    )]
    pub scalar: A,
    /// `G_ab = R_ab - 1/2 g_ab R`.
    pub einstein: Matrix<A>,
}

/// The curvature chain of the metric `g` at the point; `None` if it cannot be evaluated
/// there (the metric's inverse cannot be certified, an overflow).
///
/// The Riemann tensor with every index down comes from the second derivatives of the metric
/// and the Christoffel symbols of both kinds, without derivatives of the Christoffel
/// symbols (the same tensor as `g_ae R^e_bcd` with MTW's `R^a_bcd = d_c Gamma^a_bd -
/// d_d Gamma^a_bc + Gamma^a_ce Gamma^e_bd - Gamma^a_de Gamma^e_bc`, expanded):
/// `R_abcd = 1/2 (d_b d_c g_ad + d_a d_d g_bc - d_b d_d g_ac - d_a d_c g_bd)
///         + Gamma_fbc Gamma^f_ad - Gamma_fbd Gamma^f_ac`.
pub fn curvature<A: Arith>(g: &Sym2<A>, needs: Needs) -> Option<Curvature<A>> {
    let half = A::constant(0.5)?;
    let metric: Matrix<A> = arr(|a| arr(|b| Some(g.at(a, b).clone())))?;
    let inv = inverse(&metric)?;
    // Christoffel symbols of the first kind, Gamma_dbc.
    let first: Rank3<A> = arr(|d| {
        arr(|b| {
            arr(|c| {
                g.d(b, d, c)
                    .add(g.d(c, d, b))?
                    .sub(g.d(d, b, c))?
                    .mul(&half)
            })
        })
    })?;
    let gamma: Rank3<A> = arr(|a| arr(|b| arr(|c| sum4(|d| inv[a][d].mul(&first[d][b][c])))))?;
    // R_abcd for a < b and c < d; the others by antisymmetry in each pair (negation is
    // exact, and outward rounding is symmetric about 0), the pairs a = b or c = d being 0.
    let lower_at = |a: usize, b: usize, c: usize, d: usize| {
        let second = g
            .dd(b, c, a, d)
            .add(g.dd(a, d, b, c))?
            .sub(g.dd(b, d, a, c))?
            .sub(g.dd(a, c, b, d))?
            .mul(&half)?;
        let quad = sum4(|f| {
            first[f][b][c]
                .mul(&gamma[f][a][d])?
                .sub(&first[f][b][d].mul(&gamma[f][a][c])?)
        })?;
        second.add(&quad)
    };
    let mut upper: Vec<A> = Vec::with_capacity(36);
    for (a, b) in PAIRS6 {
        for (c, d) in PAIRS6 {
            upper.push(lower_at(a, b, c, d)?);
        }
    }
    let zero = A::constant(0.0)?;
    let at = |a: usize, b: usize, c: usize, d: usize| -> A {
        if a == b || c == d {
            return zero.clone();
        }
        let v = &upper[PAIR6[a.min(b)][a.max(b)] * 6 + PAIR6[c.min(d)][c.max(d)]];
        if (a > b) != (c > d) {
            v.neg()
        } else {
            v.clone()
        }
    };
    // R_bd = g^{ae} R_ebad, the terms e = b or a = d being 0. R_bd is symmetric for the
    // Levi-Civita connection (inputs with symmetric second derivatives), so an enclosure of
    // R_bd encloses R_db: the entries b > d are copies.
    let ricci_upper: Matrix<A> = arr(|b| {
        arr(|d| {
            if b > d {
                return A::constant(0.0);
            }
            let mut acc = A::constant(0.0)?;
            for a in (0..4).filter(|&a| a != d) {
                for e in (0..4).filter(|&e| e != b) {
                    acc = acc.add(&inv[a][e].mul(&at(e, b, a, d))?)?;
                }
            }
            Some(acc)
        })
    })?;
    let ricci: Matrix<A> = arr(|b| arr(|d| Some(ricci_upper[b.min(d)][b.max(d)].clone())))?;
    let riemann = if needs.riemann {
        Some(Box::new(arr(|a| {
            arr(|b| arr(|c| arr(|d| Some(at(a, b, c, d)))))
        })?))
    } else {
        None
    };
    let scalar = sum4(|b| sum4(|d| inv[b][d].mul(&ricci[b][d])))?;
    let einstein: Matrix<A> =
        arr(|a| arr(|b| ricci[a][b].sub(&metric[a][b].mul(&scalar)?.mul(&half)?)))?;
    Some(Curvature {
        inverse: inv,
        christoffel: gamma,
        riemann,
        ricci,
        scalar,
        einstein,
    })
}

/// The six pairs `a < b` of indices, in the order of [`PAIR6`].
const PAIRS6: [(usize, usize); 6] = [(0, 1), (0, 2), (0, 3), (1, 2), (1, 3), (2, 3)];

/// What [`evaluate`] computes at a point (see the module documentation).
#[derive(Clone, Debug)]
pub struct Quantities<A> {
    /// `Gbar_ab + Lambda gbar_ab - 8 pi Tbar_ab`: zero iff the background solves its equations.
    pub background: Matrix<A>,
    /// `dG_ab = d/deps G_ab[gbar + eps h]` at `eps = 0`.
    pub einstein: Matrix<A>,
    /// `dR_ab = d/deps R_ab[gbar + eps h]` at `eps = 0`.
    pub ricci: Matrix<A>,
    /// `E_ab = dG_ab + Lambda h_ab - 8 pi dT_ab`: zero iff the linearized equations hold.
    pub field: Matrix<A>,
    /// `dR_abcd`, the linearized Riemann tensor, all indices down, when [`Needs::riemann`].
    pub riemann: Option<Box<Rank4<A>>>,
    /// `Rbar_abcd`, the background's Riemann tensor, all indices down, when
    /// [`Needs::riemann`].
    pub riemann_bar: Option<Box<Rank4<A>>>,
    /// `h = gbar^{ab} h_ab`.
    pub trace: A,
    /// `L_nu = gbar^{mu alpha} nablabar_alpha (h_{mu nu} - 1/2 gbar_{mu nu} h)`.
    pub lorenz: [A; 4],
    /// `h_ab - (nablabar_a xi_b + nablabar_b xi_a)`, when a gauge vector was given.
    pub gauge: Option<Matrix<A>>,
    /// `d/deps` of `g^{mu alpha} nabla_alpha T_{mu nu}` for `g = gbar + eps h`,
    /// `T = Tbar + eps dT` (absent fields are 0).
    pub conservation: [A; 4],
}

/// Which of the optional quantities [`curvature`] and [`evaluate_for`] compute.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Needs {
    /// The Riemann tensors (the full tensor costs more than the rest of the chain's
    /// contractions; Ricci and Einstein do not need it).
    pub riemann: bool,
}

impl Needs {
    /// Everything.
    pub const ALL: Needs = Needs { riemann: true };
}

/// Every quantity of [`Quantities`] at the point; `None` if any cannot be evaluated there.
pub fn evaluate<A: Arith>(f: &Fields<A>, ctx: &A::Ctx) -> Option<Quantities<A>> {
    evaluate_for(f, ctx, Needs::ALL)
}

/// The quantities of [`Quantities`] at the point, the optional ones only as `needs` asks;
/// `None` if any cannot be evaluated there.
pub fn evaluate_for<A: Arith>(f: &Fields<A>, ctx: &A::Ctx, needs: Needs) -> Option<Quantities<A>> {
    let (gbar, h) = (&f.gbar, &f.h);
    let eight_pi = A::pi(ctx)?.mul(&A::constant(8.0)?)?;
    let half = A::constant(0.5)?;
    let zero_source = Sym1::zero();
    let tbar = f.tbar.as_ref().unwrap_or(&zero_source);
    let dt = f.dt.as_ref().unwrap_or(&zero_source);

    // The full chain for gbar + eps h: value parts are the background's, eps parts d/deps.
    let lin = curvature(&Sym2::dual(gbar, h), needs)?;
    let value = |m: &Matrix<Dual<A>>| -> Matrix<A> {
        std::array::from_fn(|a| std::array::from_fn(|b| m[a][b].value.clone()))
    };
    let rank4 = |t: &Rank4<Dual<A>>, eps: bool| -> Box<Rank4<A>> {
        Box::new(std::array::from_fn(|a| {
            std::array::from_fn(|b| {
                std::array::from_fn(|c| {
                    std::array::from_fn(|d| {
                        let x = &t[a][b][c][d];
                        if eps { x.eps.clone() } else { x.value.clone() }
                    })
                })
            })
        }))
    };
    let inv_bar = value(&lin.inverse);
    // d_c gbar^ab = -gbar^ap (d_c gbar_pq) gbar^qb, as two matrix products.
    let m: Rank3<A> = arr(|c| arr(|a| arr(|q| sum4(|p| inv_bar[a][p].mul(gbar.d(c, p, q))))))?;
    let dinv_bar: Rank3<A> =
        arr(|c| arr(|a| arr(|b| Some(sum4(|q| m[c][a][q].mul(&inv_bar[q][b]))?.neg()))))?;
    let gamma_bar: Rank3<A> = std::array::from_fn(|a| value(&lin.christoffel[a]));

    let background = arr(|a| {
        arr(|b| {
            lin.einstein[a][b]
                .value
                .add(&f.lambda.mul(gbar.at(a, b))?)?
                .sub(&eight_pi.mul(tbar.at(a, b))?)
        })
    })?;
    let einstein: Matrix<A> =
        std::array::from_fn(|a| std::array::from_fn(|b| lin.einstein[a][b].eps.clone()));
    let field = arr(|a| {
        arr(|b| {
            einstein[a][b]
                .add(&f.lambda.mul(h.at(a, b))?)?
                .sub(&eight_pi.mul(dt.at(a, b))?)
        })
    })?;

    // Trace and Lorenz divergence, with the background's connection.
    let trace = sum4(|a| sum4(|b| inv_bar[a][b].mul(h.at(a, b))))?;
    let dtrace = arr(|c| {
        sum4(|a| {
            sum4(|b| {
                dinv_bar[c][a][b]
                    .mul(h.at(a, b))?
                    .add(&inv_bar[a][b].mul(h.d(c, a, b))?)
            })
        })
    })?;
    // hbar_mn = h_mn - 1/2 gbar_mn h and d_c hbar_mn.
    let hbar: Matrix<A> = arr(|m| arr(|n| h.at(m, n).sub(&half.mul(gbar.at(m, n))?.mul(&trace)?)))?;
    let dhbar: Rank3<A> = arr(|c| {
        arr(|m| {
            arr(|n| {
                let d_of_product = gbar
                    .d(c, m, n)
                    .mul(&trace)?
                    .add(&gbar.at(m, n).mul(&dtrace[c])?)?;
                h.d(c, m, n).sub(&half.mul(&d_of_product)?)
            })
        })
    })?;
    let lorenz = arr(|n| {
        sum4(|m| {
            sum4(|al| {
                let connection = sum4(|l| {
                    gamma_bar[l][al][m]
                        .mul(&hbar[l][n])?
                        .add(&gamma_bar[l][al][n].mul(&hbar[m][l])?)
                })?;
                inv_bar[m][al].mul(&dhbar[al][m][n].sub(&connection)?)
            })
        })
    })?;

    let gauge = match &f.xi {
        None => None,
        Some(xi) => {
            // nablabar_a xi_b = d_a xi_b - Gammabar^c_ab xi_c.
            let nabla = |a: usize, b: usize| {
                xi.d1[b][a].sub(&sum4(|c| gamma_bar[c][a][b].mul(&xi.value[c]))?)
            };
            Some(arr(|a| {
                arr(|b| h.at(a, b).sub(&nabla(a, b)?)?.sub(&nabla(b, a)?))
            })?)
        }
    };

    // g^{mu alpha} nabla_alpha T_{mu nu} over duals: its eps part is the change.
    let t = |m: usize, n: usize| Dual::new(tbar.at(m, n).clone(), dt.at(m, n).clone());
    let dtd =
        |c: usize, m: usize, n: usize| Dual::new(tbar.d(c, m, n).clone(), dt.d(c, m, n).clone());
    let gamma = &lin.christoffel;
    let conservation = arr(|n| {
        let c = sum4(|m| {
            sum4(|al| {
                let connection = sum4(|l| {
                    gamma[l][al][m]
                        .mul(&t(l, n))?
                        .add(&gamma[l][al][n].mul(&t(m, l))?)
                })?;
                lin.inverse[m][al].mul(&dtd(al, m, n).sub(&connection)?)
            })
        })?;
        Some(c.eps)
    })?;

    let ricci: Matrix<A> =
        std::array::from_fn(|a| std::array::from_fn(|b| lin.ricci[a][b].eps.clone()));
    Some(Quantities {
        background,
        einstein,
        ricci,
        field,
        riemann: lin.riemann.as_deref().map(|r| rank4(r, true)),
        riemann_bar: lin.riemann.as_deref().map(|r| rank4(r, false)),
        trace,
        lorenz,
        gauge,
        conservation,
    })
}

#[cfg(test)]
mod tests;
