//! Central finite-difference stencils, with weights from Fornberg's algorithm in exact
//! rational arithmetic.
//!
//! Fornberg, B. (1988), "Generation of finite difference formulas on arbitrarily spaced
//! grids", Math. Comp. 51, 699-706: the recursion below gives the weights of every derivative
//! order up to `m` at a point `z` from any set of nodes. Run in exact rationals, the central
//! weights come out exactly as in the paper's Table 1.

use num_bigint::BigInt;
use num_rational::BigRational;
use num_traits::{Signed, ToPrimitive, Zero};

/// An exact rational.
pub type Q = BigRational;

/// Fornberg's weights: `w[k][j]` is the weight of node `j` in the approximation of the `k`-th
/// derivative at `z`, for `k = 0..=m`.
///
/// # Panics
///
/// If two nodes coincide.
#[must_use]
pub fn fornberg(z: &Q, nodes: &[Q], m: usize) -> Vec<Vec<Q>> {
    let n = nodes.len();
    let mut c = vec![vec![Q::zero(); n]; m + 1];
    if n == 0 {
        return c;
    }
    let int = |k: usize| Q::from_integer(BigInt::from(k));
    let mut c1 = int(1);
    let mut c4 = &nodes[0] - z;
    c[0][0] = int(1);
    for i in 1..n {
        let mn = i.min(m);
        let mut c2 = int(1);
        let c5 = c4.clone();
        c4 = &nodes[i] - z;
        for j in 0..i {
            let c3 = &nodes[i] - &nodes[j];
            assert!(!c3.is_zero(), "nodes must be distinct");
            c2 = &c2 * &c3;
            if j == i - 1 {
                for k in (1..=mn).rev() {
                    c[k][i] = &c1 * (int(k) * &c[k - 1][i - 1] - &c5 * &c[k][i - 1]) / &c2;
                }
                c[0][i] = -(&c1 * &c5 * &c[0][i - 1]) / &c2;
            }
            for k in (1..=mn).rev() {
                c[k][j] = (&c4 * &c[k][j] - int(k) * &c[k - 1][j]) / &c3;
            }
            c[0][j] = &c4 * &c[0][j] / &c3;
        }
        c1 = c2;
    }
    c
}

/// The central stencils of one order of accuracy for first and second derivatives.
#[derive(Clone, Debug, PartialEq)]
pub struct Stencil {
    /// Order of accuracy: 2, 4, 6 or 8.
    pub order: u32,
    /// Points on each side of the centre: `order / 2`.
    pub half: usize,
    /// First-derivative weights at offsets `-half..=half` (unit spacing), exact.
    pub d1_exact: Vec<Q>,
    /// Second-derivative weights at offsets `-half..=half` (unit spacing), exact.
    pub d2_exact: Vec<Q>,
    /// `d1_exact` in floating point.
    pub d1: Vec<f64>,
    /// `d2_exact` in floating point.
    pub d2: Vec<f64>,
}

/// The orders of accuracy offered.
pub const ORDERS: [u32; 4] = [2, 4, 6, 8];

impl Stencil {
    /// The central stencils of order `order` (2, 4, 6 or 8); `None` for another order.
    #[must_use]
    pub fn central(order: u32) -> Option<Stencil> {
        if !ORDERS.contains(&order) {
            return None;
        }
        let half = (order / 2) as usize;
        let nodes: Vec<Q> = (-(half as i64)..=half as i64)
            .map(|k| Q::from_integer(BigInt::from(k)))
            .collect();
        let w = fornberg(&Q::zero(), &nodes, 2);
        let f = |v: &[Q]| v.iter().map(|q| q.to_f64().unwrap_or(f64::NAN)).collect();
        Some(Stencil {
            order,
            half,
            d1: f(&w[1]),
            d2: f(&w[2]),
            d1_exact: w[1].clone(),
            d2_exact: w[2].clone(),
        })
    }

    /// Sum of |first-derivative weights|: how much a first difference amplifies rounding
    /// errors of the samples, at unit spacing.
    #[must_use]
    pub fn d1_gain(&self) -> f64 {
        abs_sum(&self.d1_exact)
    }

    /// Sum of |second-derivative weights|, the same for second differences.
    #[must_use]
    pub fn d2_gain(&self) -> f64 {
        abs_sum(&self.d2_exact)
    }
}

fn abs_sum(v: &[Q]) -> f64 {
    v.iter()
        .fold(Q::zero(), |a, q| a + q.abs())
        .to_f64()
        .unwrap_or(f64::NAN)
}
