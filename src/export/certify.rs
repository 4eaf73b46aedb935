//! Certified values of the export quantities, computed from the problem's own texts.
//!
//! Model. The jets of `h_{mu nu}` (and `T_{mu nu}`) at a point come from
//! [`crate::audit::Audit::fields_in`]: the user's expressions, defines and function samples
//! evaluated as written, in outward-rounded enclosure arithmetic, never through the expanded
//! canonical form. Each column of each quantity is then a short formula in those jets
//! ([`quantity_values`]), written here from the definitions in
//! [`super::quantity::Quantity::definition`]. A value is accepted when its certified error
//! bound is within the relative tolerance; otherwise the point is evaluated again in
//! multiprecision balls at [`PRECISIONS`] bits. A value whose enclosure still contains 0 at
//! the top precision has no relative error to speak of; it is accepted when its absolute
//! bound is within the zero tolerance (by default the relative tolerance times the largest
//! magnitude in its column). Anything else is refused, naming the points.
//!
//! Key design decision: the written value is the midpoint of the certified f64 bounds of the
//! enclosure, and its bound the distance to the farther end, so `|exact - written| <= bound`
//! holds by construction for the exact value of the column's definition at the point whose
//! coordinates and parameters are the f64 numbers written (and listed in the sidecar).
//!
//! **Invariants:** never calls `canon`, `zero` or `tensor` (the column names and orders come
//! from [`super::quantity`]); every accepted value has a finite, certified bound.

use super::quantity::Quantity;
use crate::audit::Fields;
use crate::jet::Scalar;

/// The working precisions (bits) tried, in order, after f64 intervals.
pub const PRECISIONS: [u32; 3] = [128, 256, 512];

const ETA: [f64; 4] = [-1.0, 1.0, 1.0, 1.0];

/// The independent symmetric components, in the fixed column order (tt tx ty tz xx ...):
/// the file vocabulary's order.
const SYM: [(usize, usize); 10] = crate::tensor::COMPONENTS;

/// The independent spatial components (xx xy xz yy yz zz), spatial indices from 0.
const SPATIAL_SYM: [(usize, usize); 6] = crate::adm::SPATIAL_COMPONENTS;

/// The antisymmetric index pairs in the order tx ty tz xy xz yz.
const PAIRS: [(usize, usize); 6] = [(0, 1), (0, 2), (0, 3), (1, 2), (1, 3), (2, 3)];

/// A propagation direction and its polarization basis, as enclosures at a point.
#[derive(Clone, Debug)]
pub struct Frame<S> {
    /// The unit propagation direction.
    pub n: [S; 3],
    /// The first polarization vector.
    pub u: [S; 3],
    /// The second polarization vector.
    pub v: [S; 3],
}

/// The arithmetic the quantity formulas are written in: certified enclosures
/// ([`ScalarRing`]) for export, or expression nodes for generated code
/// ([`crate::emit`]). `None` is "cannot evaluate here" and spreads.
pub trait Ring {
    /// A value.
    type V: Clone;
    /// The constant `c` (every constant in the formulas is a small dyadic rational).
    fn num(&self, c: f64) -> Option<Self::V>;
    /// pi.
    fn pi(&self) -> Option<Self::V>;
    /// `a + b`.
    fn add(&self, a: &Self::V, b: &Self::V) -> Option<Self::V>;
    /// `a - b`.
    fn sub(&self, a: &Self::V, b: &Self::V) -> Option<Self::V>;
    /// `a * b`.
    fn mul(&self, a: &Self::V, b: &Self::V) -> Option<Self::V>;
    /// `-a`.
    fn neg(&self, a: &Self::V) -> Option<Self::V>;
}

/// `h_{mu nu}` and `T_{mu nu}` with their derivatives at a point (or as expressions).
pub trait FieldSource {
    /// A value.
    type V;
    /// `h_{mu nu}`.
    fn h(&self, mu: usize, nu: usize) -> Option<Self::V>;
    /// `d_rho h_{mu nu}`.
    fn dh(&self, rho: usize, mu: usize, nu: usize) -> Option<Self::V>;
    /// `d_a d_b h_{mu nu}`.
    fn ddh(&self, a: usize, b: usize, mu: usize, nu: usize) -> Option<Self::V>;
    /// `T_{mu nu}` (only asked when [`FieldSource::has_source`]).
    fn t(&self, mu: usize, nu: usize) -> Option<Self::V>;
    /// True if the problem has a source.
    fn has_source(&self) -> bool;
}

/// Certified enclosure arithmetic in a [`Scalar`] type.
pub struct ScalarRing<'a, S: Scalar> {
    /// The precision context.
    pub ctx: &'a S::Ctx,
}

impl<S: Scalar> Ring for ScalarRing<'_, S> {
    type V = S;
    fn num(&self, c: f64) -> Option<S> {
        S::from_f64(c)
    }
    fn pi(&self) -> Option<S> {
        S::pi(self.ctx)
    }
    fn add(&self, a: &S, b: &S) -> Option<S> {
        a.add(b)
    }
    fn sub(&self, a: &S, b: &S) -> Option<S> {
        a.sub(b)
    }
    fn mul(&self, a: &S, b: &S) -> Option<S> {
        a.mul(b)
    }
    fn neg(&self, a: &S) -> Option<S> {
        Some(a.neg())
    }
}

impl<S: Scalar> FieldSource for Fields<S> {
    type V = S;
    fn h(&self, mu: usize, nu: usize) -> Option<S> {
        Fields::h(self, mu, nu)
    }
    fn dh(&self, rho: usize, mu: usize, nu: usize) -> Option<S> {
        Fields::dh(self, rho, mu, nu)
    }
    fn ddh(&self, a: usize, b: usize, mu: usize, nu: usize) -> Option<S> {
        Fields::ddh(self, a, b, mu, nu)
    }
    fn t(&self, mu: usize, nu: usize) -> Option<S> {
        Fields::t(self, mu, nu)
    }
    fn has_source(&self) -> bool {
        Fields::has_source(self)
    }
}

/// Ring arithmetic on optional values.
struct Ops<'a, R: Ring> {
    r: &'a R,
}

impl<R: Ring> Ops<'_, R> {
    fn k(&self, c: f64) -> Option<R::V> {
        self.r.num(c)
    }
    fn pi_times(&self, c: f64) -> Option<R::V> {
        self.r.mul(&self.r.pi()?, &self.k(c)?)
    }
    fn add(&self, a: Option<R::V>, b: Option<R::V>) -> Option<R::V> {
        self.r.add(&a?, &b?)
    }
    fn sub(&self, a: Option<R::V>, b: Option<R::V>) -> Option<R::V> {
        self.r.sub(&a?, &b?)
    }
    fn mul(&self, a: Option<R::V>, b: Option<R::V>) -> Option<R::V> {
        self.r.mul(&a?, &b?)
    }
    fn neg(&self, a: Option<R::V>) -> Option<R::V> {
        self.r.neg(&a?)
    }
    fn scale(&self, c: f64, a: Option<R::V>) -> Option<R::V> {
        if c == 1.0 {
            return a;
        }
        if c == -1.0 {
            return self.neg(a);
        }
        self.r.mul(&self.k(c)?, &a?)
    }
    fn sum(&self, items: impl IntoIterator<Item = Option<R::V>>) -> Option<R::V> {
        let mut acc: Option<R::V> = None;
        for x in items {
            let x = x?;
            acc = Some(match acc {
                None => x,
                Some(a) => self.r.add(&a, &x)?,
            });
        }
        acc.or_else(|| self.k(0.0))
    }
}

/// `R_abcd = (1/2)(d_b d_c h_ad + d_a d_d h_bc - d_a d_c h_bd - d_b d_d h_ac)` (MTW sign).
fn riemann<R: Ring, F: FieldSource<V = R::V>>(
    o: &Ops<'_, R>,
    f: &F,
    [a, b, c, d]: [usize; 4],
) -> Option<R::V> {
    let p = o.add(f.ddh(b, c, a, d), f.ddh(a, d, b, c));
    let m = o.add(f.ddh(a, c, b, d), f.ddh(b, d, a, c));
    o.scale(0.5, o.sub(p, m))
}

/// `R_mn = eta^{rs} R_{r m s n}`.
fn ricci<R: Ring, F: FieldSource<V = R::V>>(o: &Ops<'_, R>, f: &F) -> [[Option<R::V>; 4]; 4] {
    std::array::from_fn(|m| {
        std::array::from_fn(|n| o.sum((0..4).map(|s| o.scale(ETA[s], riemann(o, f, [s, m, s, n])))))
    })
}

/// `-(1/2)(d_t h_ij - d_i h_tj - d_j h_ti)`, spatial indices from 0.
fn extrinsic<R: Ring, F: FieldSource<V = R::V>>(
    o: &Ops<'_, R>,
    f: &F,
    i: usize,
    j: usize,
) -> Option<R::V> {
    let (a, b) = (i + 1, j + 1);
    let s = o.add(f.dh(a, 0, b), f.dh(b, 0, a));
    o.scale(-0.5, o.sub(f.dh(0, a, b), s))
}

/// `d_k K_ij = -(1/2)(d_k d_t h_ij - d_k d_i h_tj - d_k d_j h_ti)`, spatial indices from 0.
fn d_extrinsic<R: Ring, F: FieldSource<V = R::V>>(
    o: &Ops<'_, R>,
    f: &F,
    k: usize,
    i: usize,
    j: usize,
) -> Option<R::V> {
    let (c, a, b) = (k + 1, i + 1, j + 1);
    let s = o.add(f.ddh(c, a, 0, b), f.ddh(c, b, 0, a));
    o.scale(-0.5, o.sub(f.ddh(c, 0, a, b), s))
}

/// The 20 independent Riemann index sets in column order: pairs (ab, cd) with ab <= cd in the
/// order of [`PAIRS`], leaving out (03, 12), which the cyclic identity fixes.
fn riemann_order() -> impl Iterator<Item = [usize; 4]> {
    PAIRS.iter().enumerate().flat_map(|(i, &(a, b))| {
        PAIRS[i..]
            .iter()
            .filter(move |&&(c, d)| (a, b, c, d) != (0, 3, 1, 2))
            .map(move |&(c, d)| [a, b, c, d])
    })
}

/// The column values of `q` about a background, in the order of
/// [`super::quantity::blocks_about`], from the pointwise route's quantities `pq` and the
/// fields `f` they came from ([`crate::pointwise::evaluate`]: the full curvature chain of
/// `gbar + eps h` in dual numbers, no linearized formula), in any arithmetic (enclosures for
/// export, expression nodes for generated code); empty for a quantity not defined about a
/// background.
#[must_use]
pub fn values_about<S: crate::pointwise::Arith>(
    q: Quantity,
    pq: &crate::pointwise::Quantities<S>,
    f: &crate::pointwise::Fields<S>,
) -> Vec<Option<S>> {
    let sym = |m: &dyn Fn(usize, usize) -> Option<S>| -> Vec<Option<S>> {
        SYM.iter().map(|&(a, b)| m(a, b)).collect()
    };
    match q {
        Quantity::H => sym(&|a, b| Some(f.h.at(a, b).clone())),
        Quantity::Hbar => sym(&|a, b| {
            let half = S::constant(0.5)?;
            f.h.at(a, b)
                .sub(&half.mul(f.gbar.at(a, b))?.mul(&pq.trace)?)
        }),
        Quantity::Dh => (0..4)
            .flat_map(|r| SYM.iter().map(move |&(a, b)| (r, a, b)))
            .map(|(r, a, b)| Some(f.h.d(r, a, b).clone()))
            .collect(),
        Quantity::Riemann => riemann_order()
            .map(|[a, b, c, d]| Some(pq.riemann.as_ref()?[a][b][c][d].clone()))
            .collect(),
        Quantity::Ricci => sym(&|a, b| Some(pq.ricci[a][b].clone())),
        Quantity::Einstein => sym(&|a, b| Some(pq.einstein[a][b].clone())),
        _ => Vec::new(),
    }
}

/// The column values of `q` for the fields `f`, in the order of
/// [`super::quantity::blocks`]; `None` where a value cannot be evaluated. `frame` is needed
/// by psi4, hplus and hcross (all `None` without it).
#[must_use]
pub fn quantity_values<R: Ring, F: FieldSource<V = R::V>>(
    ring: &R,
    q: Quantity,
    f: &F,
    frame: Option<&Frame<R::V>>,
) -> Vec<Option<R::V>> {
    let o = Ops { r: ring };
    let source =
        |m: usize, n: usize| -> Option<R::V> { if f.has_source() { f.t(m, n) } else { o.k(0.0) } };
    match q {
        Quantity::H => SYM.iter().map(|&(m, n)| f.h(m, n)).collect(),
        Quantity::Hbar => {
            let tr = o.sum((0..4).map(|r| o.scale(ETA[r], f.h(r, r))));
            SYM.iter()
                .map(|&(m, n)| {
                    if m == n {
                        o.sub(f.h(m, n), o.scale(0.5 * ETA[m], tr.clone()))
                    } else {
                        f.h(m, n)
                    }
                })
                .collect()
        }
        Quantity::Dh => (0..4)
            .flat_map(|r| SYM.iter().map(move |&(m, n)| (r, m, n)))
            .map(|(r, m, n)| f.dh(r, m, n))
            .collect(),
        Quantity::Riemann => riemann_order().map(|idx| riemann(&o, f, idx)).collect(),
        Quantity::Ricci => {
            let r = ricci(&o, f);
            SYM.iter().map(|&(m, n)| r[m][n].clone()).collect()
        }
        Quantity::Einstein => {
            let r = ricci(&o, f);
            let scalar = o.sum((0..4).map(|s| o.scale(ETA[s], r[s][s].clone())));
            SYM.iter()
                .map(|&(m, n)| {
                    if m == n {
                        o.sub(r[m][n].clone(), o.scale(0.5 * ETA[m], scalar.clone()))
                    } else {
                        r[m][n].clone()
                    }
                })
                .collect()
        }
        Quantity::Adm => {
            let mut out = vec![o.sub(o.k(1.0), o.scale(0.5, f.h(0, 0)))];
            out.extend((1..4).map(|i| f.h(0, i)));
            for &(i, j) in &SPATIAL_SYM {
                out.push(if i == j {
                    o.add(o.k(1.0), f.h(i + 1, j + 1))
                } else {
                    f.h(i + 1, j + 1)
                });
            }
            for &(i, j) in &SPATIAL_SYM {
                out.push(extrinsic(&o, f, i, j));
            }
            out
        }
        Quantity::Constraints => {
            // H = d_i d_j h_ij - d_k d_k h_jj - 16 pi T_tt.
            let pairs = || (1..4).flat_map(|i| (1..4).map(move |j| (i, j)));
            let didj = o.sum(pairs().map(|(i, j)| f.ddh(i, j, i, j)));
            let lap_tr = o.sum(pairs().map(|(k, j)| f.ddh(k, k, j, j)));
            let mut h = o.sub(didj, lap_tr);
            if f.has_source() {
                h = o.sub(h, o.mul(o.pi_times(16.0), source(0, 0)));
            }
            let mut out = vec![h];
            // M_i = d_j K_ij - d_i K - 8 pi S_i, K = K_jj, S_i = -T_ti.
            for i in 0..3 {
                let div = o.sum((0..3).map(|j| d_extrinsic(&o, f, j, i, j)));
                let dk = o.sum((0..3).map(|j| d_extrinsic(&o, f, i, j, j)));
                let mut m = o.sub(div, dk);
                if f.has_source() {
                    m = o.add(m, o.mul(o.pi_times(8.0), source(0, i + 1)));
                }
                out.push(m);
            }
            out
        }
        Quantity::Psi4 => {
            let Some(fr) = frame else {
                return vec![None, None];
            };
            // N = d_t - n^i d_i, U = (0, u), V = (0, v); zero entries are None here and
            // skipped in the contraction.
            let nt: [Option<R::V>; 4] = [
                o.k(1.0),
                o.neg(Some(fr.n[0].clone())),
                o.neg(Some(fr.n[1].clone())),
                o.neg(Some(fr.n[2].clone())),
            ];
            let spatial = |w: &[R::V; 3]| -> [Option<R::V>; 4] {
                [
                    None,
                    Some(w[0].clone()),
                    Some(w[1].clone()),
                    Some(w[2].clone()),
                ]
            };
            let (u, v) = (spatial(&fr.u), spatial(&fr.v));
            let contract = |w: [&[Option<R::V>; 4]; 4]| -> Option<R::V> {
                let mut terms = Vec::new();
                for a in 0..4 {
                    for b in 0..4 {
                        for c in 0..4 {
                            for d in 0..4 {
                                let (Some(wa), Some(wb), Some(wc), Some(wd)) =
                                    (&w[0][a], &w[1][b], &w[2][c], &w[3][d])
                                else {
                                    continue;
                                };
                                // R_abcd vanishes for a = b or c = d.
                                if a == b || c == d {
                                    continue;
                                }
                                let p = o.mul(
                                    o.mul(Some(wa.clone()), Some(wb.clone())),
                                    o.mul(Some(wc.clone()), Some(wd.clone())),
                                );
                                terms.push(o.mul(p, riemann(&o, f, [a, b, c, d])));
                            }
                        }
                    }
                }
                o.sum(terms)
            };
            let nunu = contract([&nt, &u, &nt, &u]);
            let nvnv = contract([&nt, &v, &nt, &v]);
            let nunv = contract([&nt, &u, &nt, &v]);
            vec![o.scale(0.25, o.sub(nunu, nvnv)), o.scale(-0.5, nunv)]
        }
        Quantity::Hplus | Quantity::Hcross => {
            let Some(fr) = frame else {
                return vec![None];
            };
            vec![polarization(&o, f, fr, q == Quantity::Hplus)]
        }
    }
}

/// `h_plus = (1/2) h^TT_ij (u_i u_j - v_i v_j)` or `h_cross = (1/2) h^TT_ij (u_i v_j + v_i
/// u_j)`, with `h^TT = P h P - (1/2) P tr(P h)` and `P_ij = delta_ij - n_i n_j`.
fn polarization<R: Ring, F: FieldSource<V = R::V>>(
    o: &Ops<'_, R>,
    f: &F,
    fr: &Frame<R::V>,
    plus: bool,
) -> Option<R::V> {
    let c = |x: &R::V| Some(x.clone());
    let mut p: Vec<Vec<Option<R::V>>> = vec![vec![None; 3]; 3];
    for i in 0..3 {
        for j in 0..3 {
            let nn = o.mul(c(&fr.n[i]), c(&fr.n[j]));
            p[i][j] = if i == j {
                o.sub(o.k(1.0), nn)
            } else {
                o.neg(nn)
            };
        }
    }
    let h: Vec<Vec<Option<R::V>>> = (0..3)
        .map(|i| (0..3).map(|j| f.h(i + 1, j + 1)).collect())
        .collect();
    let matmul = |a: &Vec<Vec<Option<R::V>>>, b: &Vec<Vec<Option<R::V>>>| {
        (0..3)
            .map(|i| {
                (0..3)
                    .map(|j| o.sum((0..3).map(|k| o.mul(a[i][k].clone(), b[k][j].clone()))))
                    .collect::<Vec<_>>()
            })
            .collect::<Vec<_>>()
    };
    let ph = matmul(&p, &h);
    let php = matmul(&ph, &p);
    let half_tr = o.scale(0.5, o.sum((0..3).map(|i| ph[i][i].clone())));
    let mut terms = Vec::new();
    for i in 0..3 {
        for j in 0..3 {
            let tt = o.sub(php[i][j].clone(), o.mul(p[i][j].clone(), half_tr.clone()));
            let e = if plus {
                o.sub(
                    o.mul(c(&fr.u[i]), c(&fr.u[j])),
                    o.mul(c(&fr.v[i]), c(&fr.v[j])),
                )
            } else {
                o.add(
                    o.mul(c(&fr.u[i]), c(&fr.v[j])),
                    o.mul(c(&fr.v[i]), c(&fr.u[j])),
                )
            };
            terms.push(o.mul(tt, e));
        }
    }
    o.scale(0.5, o.sum(terms))
}

/// The highest order of derivatives of `h` that `q` needs.
#[must_use]
pub fn derivative_order(q: Quantity) -> u32 {
    match q {
        Quantity::H | Quantity::Hbar | Quantity::Hplus | Quantity::Hcross => 0,
        Quantity::Dh | Quantity::Adm => 1,
        Quantity::Riemann
        | Quantity::Ricci
        | Quantity::Einstein
        | Quantity::Constraints
        | Quantity::Psi4 => 2,
    }
}

/// The number of columns of `q` about a background (0 for a quantity not defined there).
#[must_use]
pub fn column_count(q: Quantity) -> usize {
    match q {
        Quantity::H | Quantity::Hbar | Quantity::Ricci | Quantity::Einstein => SYM.len(),
        Quantity::Dh => 4 * SYM.len(),
        Quantity::Riemann => 20,
        _ => 0,
    }
}

/// A value written and its certified bound: the midpoint of the enclosure's f64 bounds, and
/// the distance from it to the farther bound (rounded up). `None` if a bound is infinite.
#[must_use]
pub fn written<S: Scalar>(s: &S) -> Option<(f64, f64)> {
    let (lo, hi) = s.bounds_f64();
    if !(lo.is_finite() && hi.is_finite()) || lo > hi {
        return None;
    }
    if lo == hi {
        return Some((lo, 0.0));
    }
    let x = (lo / 2.0 + hi / 2.0).clamp(lo, hi);
    let bound = (hi - x).next_up().max((x - lo).next_up());
    bound.is_finite().then_some((x, bound))
}
