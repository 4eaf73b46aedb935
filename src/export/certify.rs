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

// Index loops mirror the tensor formulas they implement.
#![allow(clippy::needless_range_loop)]

use super::quantity::Quantity;
use crate::audit::Fields;
use crate::jet::Scalar;

/// The working precisions (bits) tried, in order, after f64 intervals.
pub const PRECISIONS: [u32; 3] = [128, 256, 512];

const ETA: [f64; 4] = [-1.0, 1.0, 1.0, 1.0];

/// The independent symmetric components, in the fixed column order (tt tx ty tz xx ...).
const SYM: [(usize, usize); 10] = [
    (0, 0),
    (0, 1),
    (0, 2),
    (0, 3),
    (1, 1),
    (1, 2),
    (1, 3),
    (2, 2),
    (2, 3),
    (3, 3),
];

/// The independent spatial components (xx xy xz yy yz zz), spatial indices from 0.
const SPATIAL_SYM: [(usize, usize); 6] = [(0, 0), (0, 1), (0, 2), (1, 1), (1, 2), (2, 2)];

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

/// Enclosure arithmetic on optional values: `None` is "cannot evaluate here" and spreads.
struct Ops<'a, S: Scalar> {
    ctx: &'a S::Ctx,
}

impl<S: Scalar> Ops<'_, S> {
    fn k(&self, c: f64) -> Option<S> {
        // Every constant used here is a small dyadic rational, exact in f64.
        S::from_f64(c)
    }
    fn pi_times(&self, c: f64) -> Option<S> {
        S::pi(self.ctx)?.mul(&self.k(c)?)
    }
    fn add(&self, a: Option<S>, b: Option<S>) -> Option<S> {
        a?.add(&b?)
    }
    fn sub(&self, a: Option<S>, b: Option<S>) -> Option<S> {
        a?.sub(&b?)
    }
    fn mul(&self, a: Option<S>, b: Option<S>) -> Option<S> {
        a?.mul(&b?)
    }
    fn scale(&self, c: f64, a: Option<S>) -> Option<S> {
        a?.mul(&self.k(c)?)
    }
    fn sum(&self, items: impl IntoIterator<Item = Option<S>>) -> Option<S> {
        let mut acc = S::zero();
        for x in items {
            acc = acc.add(&x?)?;
        }
        Some(acc)
    }
}

/// `R_abcd = (1/2)(d_b d_c h_ad + d_a d_d h_bc - d_a d_c h_bd - d_b d_d h_ac)` (MTW sign).
fn riemann<S: Scalar>(o: &Ops<'_, S>, f: &Fields<S>, [a, b, c, d]: [usize; 4]) -> Option<S> {
    let p = o.add(f.ddh(b, c, a, d), f.ddh(a, d, b, c));
    let m = o.add(f.ddh(a, c, b, d), f.ddh(b, d, a, c));
    o.scale(0.5, o.sub(p, m))
}

/// `R_mn = eta^{rs} R_{r m s n}`.
fn ricci<S: Scalar>(o: &Ops<'_, S>, f: &Fields<S>) -> [[Option<S>; 4]; 4] {
    std::array::from_fn(|m| {
        std::array::from_fn(|n| o.sum((0..4).map(|s| o.scale(ETA[s], riemann(o, f, [s, m, s, n])))))
    })
}

/// `-(1/2)(d_t h_ij - d_i h_tj - d_j h_ti)`, spatial indices from 0.
fn extrinsic<S: Scalar>(o: &Ops<'_, S>, f: &Fields<S>, i: usize, j: usize) -> Option<S> {
    let (a, b) = (i + 1, j + 1);
    let s = o.add(f.dh(a, 0, b), f.dh(b, 0, a));
    o.scale(-0.5, o.sub(f.dh(0, a, b), s))
}

/// `d_k K_ij = -(1/2)(d_k d_t h_ij - d_k d_i h_tj - d_k d_j h_ti)`, spatial indices from 0.
fn d_extrinsic<S: Scalar>(
    o: &Ops<'_, S>,
    f: &Fields<S>,
    k: usize,
    i: usize,
    j: usize,
) -> Option<S> {
    let (c, a, b) = (k + 1, i + 1, j + 1);
    let s = o.add(f.ddh(c, a, 0, b), f.ddh(c, b, 0, a));
    o.scale(-0.5, o.sub(f.ddh(c, 0, a, b), s))
}

/// The column values of `q` at the point of `f`, in the order of
/// [`super::quantity::blocks`]; `None` where a value cannot be evaluated. `frame` is needed
/// by psi4, hplus and hcross (all `None` without it).
#[must_use]
pub fn quantity_values<S: Scalar>(
    q: Quantity,
    f: &Fields<S>,
    frame: Option<&Frame<S>>,
) -> Vec<Option<S>> {
    let o = Ops::<S> { ctx: f.ctx() };
    let source = |m: usize, n: usize| -> Option<S> {
        if f.has_source() {
            f.t(m, n)
        } else {
            Some(S::zero())
        }
    };
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
        Quantity::Riemann => {
            let mut out = Vec::with_capacity(20);
            for (i, &(a, b)) in PAIRS.iter().enumerate() {
                for &(c, d) in &PAIRS[i..] {
                    // R_tzxy is fixed by the cyclic identity and left out.
                    if (a, b, c, d) == (0, 3, 1, 2) {
                        continue;
                    }
                    out.push(riemann(&o, f, [a, b, c, d]));
                }
            }
            out
        }
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
                let delta = if i == j { 1.0 } else { 0.0 };
                out.push(o.add(o.k(delta), f.h(i + 1, j + 1)));
            }
            for &(i, j) in &SPATIAL_SYM {
                out.push(extrinsic(&o, f, i, j));
            }
            out
        }
        Quantity::Constraints => {
            // H = d_i d_j h_ij - d_k d_k h_jj - 16 pi T_tt.
            let didj = o.sum(
                (1..4)
                    .flat_map(|i| (1..4).map(move |j| (i, j)))
                    .map(|(i, j)| f.ddh(i, j, i, j)),
            );
            let lap_tr = o.sum(
                (1..4)
                    .flat_map(|k| (1..4).map(move |j| (k, j)))
                    .map(|(k, j)| f.ddh(k, k, j, j)),
            );
            let rho = o.mul(o.pi_times(16.0), source(0, 0));
            let mut out = vec![o.sub(o.sub(didj, lap_tr), rho)];
            // M_i = d_j K_ij - d_i K - 8 pi S_i, K = K_jj, S_i = -T_ti.
            for i in 0..3 {
                let div = o.sum((0..3).map(|j| d_extrinsic(&o, f, j, i, j)));
                let dk = o.sum((0..3).map(|j| d_extrinsic(&o, f, i, j, j)));
                let s = o.mul(o.pi_times(8.0), source(0, i + 1));
                out.push(o.add(o.sub(div, dk), s));
            }
            out
        }
        Quantity::Psi4 => {
            let Some(fr) = frame else {
                return vec![None, None];
            };
            let z = Some(S::zero());
            let nt: [Option<S>; 4] = [
                o.k(1.0),
                Some(fr.n[0].neg()),
                Some(fr.n[1].neg()),
                Some(fr.n[2].neg()),
            ];
            let u: [Option<S>; 4] = [
                z.clone(),
                Some(fr.u[0].clone()),
                Some(fr.u[1].clone()),
                Some(fr.u[2].clone()),
            ];
            let v: [Option<S>; 4] = [
                z,
                Some(fr.v[0].clone()),
                Some(fr.v[1].clone()),
                Some(fr.v[2].clone()),
            ];
            let mut r = vec![None; 256];
            for a in 0..4 {
                for b in 0..4 {
                    for c in 0..4 {
                        for d in 0..4 {
                            r[((a * 4 + b) * 4 + c) * 4 + d] = riemann(&o, f, [a, b, c, d]);
                        }
                    }
                }
            }
            let contract = |w: [&[Option<S>; 4]; 4]| -> Option<S> {
                let mut acc = S::zero();
                for a in 0..4 {
                    for b in 0..4 {
                        for c in 0..4 {
                            for d in 0..4 {
                                let p = o.mul(
                                    o.mul(w[0][a].clone(), w[1][b].clone()),
                                    o.mul(w[2][c].clone(), w[3][d].clone()),
                                );
                                acc =
                                    acc.add(&o.mul(p, r[((a * 4 + b) * 4 + c) * 4 + d].clone())?)?;
                            }
                        }
                    }
                }
                Some(acc)
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
fn polarization<S: Scalar>(o: &Ops<'_, S>, f: &Fields<S>, fr: &Frame<S>, plus: bool) -> Option<S> {
    let mut p: [[S; 3]; 3] = std::array::from_fn(|_| std::array::from_fn(|_| S::zero()));
    for i in 0..3 {
        for j in 0..3 {
            let delta = if i == j { 1.0 } else { 0.0 };
            p[i][j] = o.k(delta)?.sub(&fr.n[i].mul(&fr.n[j])?)?;
        }
    }
    let mut h: [[S; 3]; 3] = std::array::from_fn(|_| std::array::from_fn(|_| S::zero()));
    for i in 0..3 {
        for j in 0..3 {
            h[i][j] = f.h(i + 1, j + 1)?;
        }
    }
    let matmul = |a: &[[S; 3]; 3], b: &[[S; 3]; 3]| -> Option<[[S; 3]; 3]> {
        let mut out: [[S; 3]; 3] = std::array::from_fn(|_| std::array::from_fn(|_| S::zero()));
        for i in 0..3 {
            for j in 0..3 {
                let mut acc = S::zero();
                for k in 0..3 {
                    acc = acc.add(&a[i][k].mul(&b[k][j])?)?;
                }
                out[i][j] = acc;
            }
        }
        Some(out)
    };
    let ph = matmul(&p, &h)?;
    let php = matmul(&ph, &p)?;
    let half_tr = o.scale(0.5, o.sum((0..3).map(|i| Some(ph[i][i].clone()))))?;
    let mut acc = S::zero();
    for i in 0..3 {
        for j in 0..3 {
            let tt = php[i][j].sub(&p[i][j].mul(&half_tr)?)?;
            let e = if plus {
                fr.u[i].mul(&fr.u[j])?.sub(&fr.v[i].mul(&fr.v[j])?)?
            } else {
                fr.u[i].mul(&fr.v[j])?.add(&fr.v[i].mul(&fr.u[j])?)?
            };
            acc = acc.add(&tt.mul(&e)?)?;
        }
    }
    o.scale(0.5, Some(acc))
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
