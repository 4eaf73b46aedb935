//! 3+1 (ADM) data of a perturbation at first order, and the linearized constraints.
//!
//! Model. With g = eta + h and the slicing t = const, the lapse, shift, spatial metric and
//! extrinsic curvature are, to first order in h:
//!
//! - `alpha = 1 - h_tt/2` (from g_tt = -alpha^2 + beta_k beta^k);
//! - `beta_i = h_ti`, the shift with its index down; `beta^i = beta_i` at first order;
//! - `gamma_ij = delta_ij + h_ij`;
//! - `K_ij = -(1/2)(d_t h_ij - d_i h_tj - d_j h_ti)`, the first-order form of the MTW/York
//!   sign `K_ij = -(1/(2 alpha))(d_t gamma_ij - D_i beta_j - D_j beta_i)` (Misner, Thorne &
//!   Wheeler 1973, sec. 21.5; York 1979). Some numerical-relativity texts use the opposite sign.
//!
//! The linearized constraints, as residuals that vanish for a solution:
//!
//! - Hamiltonian: `H = d_i d_j h_ij - d_k d_k h_jj - 16 pi rho`, with `rho = T_tt` the energy
//!   density seen by the normal observer at first order (`rho = n^a n^b T_ab`,
//!   `n^a = (1, 0, 0, 0)` at zeroth order). The first two terms are the linearized scalar
//!   curvature of `gamma`; `K^2 - K_ij K^ij` is second order.
//! - Momentum: `M_i = d_j K_ij - d_i K - 8 pi S_i`, with `K = K_jj` and `S_i = -T_ti` the
//!   momentum density (`S_i = -gamma_i^a n^b T_ab`; matter moving along +x has
//!   `T^tx > 0`, so `T_tx < 0` and `S_x > 0`).
//!
//! Both follow from the Gauss and Codazzi equations, and at first order they are components
//! of the linearized field equations, for every h:
//! `H = 2 (G_tt - 8 pi T_tt)` and `M_i = -(G_ti - 8 pi T_ti)`. The unit tests prove these two
//! identities exactly for a generic quadratic h (every second derivative an independent
//! symbol), which makes the definitions above self-checking.
//!
//! Key design decision: everything is an exact canonical form, like the tensor layer, so the
//! constraints of a file are proved zero (or not) by the same zero test as its claims.
//!
//! **Invariant:** exact; first order in h; indices of h and T down; nothing numerical.

use crate::canon::{CResult, Coeff, Form, Q, Store};
use crate::tensor::{Linearized, Sym4};

/// A 3x3 array of forms, spatial indices x, y, z = 0, 1, 2.
pub type Mat3 = [[Form; 3]; 3];

/// The six independent components of a symmetric 3x3 tensor, in the order xx xy xz yy yz zz.
pub const SPATIAL_COMPONENTS: [(usize, usize); 6] =
    [(0, 0), (0, 1), (0, 2), (1, 1), (1, 2), (2, 2)];

/// The spatial coordinate names.
pub const SPATIAL: [&str; 3] = ["x", "y", "z"];

/// The 3+1 data of a perturbation, first order.
#[derive(Clone, Copy, Debug)]
pub struct Adm {
    /// The lapse `alpha = 1 - h_tt/2`.
    pub alpha: Form,
    /// The shift with its index down, `beta_i = h_ti` (equal to `beta^i` at first order).
    pub beta: [Form; 3],
    /// The spatial metric `gamma_ij = delta_ij + h_ij`.
    pub gamma: Mat3,
    /// The extrinsic curvature, MTW/York sign: `K_ij = -(1/2)(d_t h_ij - d_i h_tj - d_j h_ti)`.
    pub k: Mat3,
}

/// The linearized constraint residuals.
#[derive(Clone, Copy, Debug)]
pub struct Constraints {
    /// `H = d_i d_j h_ij - d_k d_k h_jj - 16 pi T_tt`.
    pub hamiltonian: Form,
    /// `M_i = d_j K_ij - d_i K - 8 pi S_i`, `S_i = -T_ti`.
    pub momentum: [Form; 3],
}

/// The ADM formulas in words, for documentation and file headers.
pub const ADM_DEFINITION: &str = "first order in h: alpha = 1 - h_tt/2; beta_i = h_ti (shift \
    with index down, equal to beta^i at first order); gamma_ij = delta_ij + h_ij; K_ij = \
    -(1/2)(d_t h_ij - d_i h_tj - d_j h_ti), the MTW/York sign K_ij = -(1/(2 alpha))(d_t \
    gamma_ij - D_i beta_j - D_j beta_i)";

/// The constraint formulas in words.
pub const CONSTRAINT_DEFINITION: &str = "linearized residuals, zero for a solution: H = d_i \
    d_j h_ij - d_k d_k h_jj - 16 pi rho with rho = T_tt; M_i = d_j K_ij - d_i K - 8 pi S_i \
    with K = K_jj and S_i = -T_ti; identically H = 2 (G_tt - 8 pi T_tt) and M_i = -(G_ti - 8 \
    pi T_ti)";

fn rational(n: i64, d: i64) -> Coeff {
    Coeff::rational(Q::new(n.into(), d.into()))
}

/// The 3+1 data of the perturbation in `lin`.
///
/// # Errors
///
/// An algebra limit.
pub fn adm(store: &mut Store, lin: &mut Linearized) -> CResult<Adm> {
    let h = lin.h;
    let d = lin.dh(store)?;
    let half = rational(1, 2);
    let one = store.one();
    let zero = store.zero();
    let half_htt = store.scale(h[0][0], &half)?;
    let alpha = store.sub(one, half_htt)?;
    let beta = [h[0][1], h[0][2], h[0][3]];
    let mut gamma = [[zero; 3]; 3];
    let mut k = [[zero; 3]; 3];
    for i in 0..3 {
        for j in i..3 {
            let (a, b) = (i + 1, j + 1);
            let g = if i == j {
                store.add(one, h[a][b])?
            } else {
                h[a][b]
            };
            // d_t h_ij - d_i h_tj - d_j h_ti, with d indexed [rho][mu][nu].
            let s = store.sub(d[0][a][b], d[a][0][b])?;
            let s = store.sub(s, d[b][0][a])?;
            let kij = store.scale(s, &half.neg())?;
            gamma[i][j] = g;
            gamma[j][i] = g;
            k[i][j] = kij;
            k[j][i] = kij;
        }
    }
    Ok(Adm {
        alpha,
        beta,
        gamma,
        k,
    })
}

/// The linearized Hamiltonian and momentum constraint residuals of the perturbation in `lin`
/// with the source `source` (`None`: vacuum).
///
/// # Errors
///
/// An algebra limit.
pub fn constraints(
    store: &mut Store,
    lin: &mut Linearized,
    source: Option<&Sym4>,
) -> CResult<Constraints> {
    let h = lin.h;
    let xs = [lin.coord(1), lin.coord(2), lin.coord(3)];
    let a = adm(store, lin)?;
    // Scalar curvature of gamma, first order: d_i d_j h_ij - d_k d_k h_jj.
    let mut trace = store.zero();
    for i in 1..4 {
        trace = store.add(trace, h[i][i])?;
    }
    let mut r3 = store.zero();
    for i in 0..3 {
        for j in 0..3 {
            let di = store.diff(h[i + 1][j + 1], xs[i])?;
            let dij = store.diff(di, xs[j])?;
            r3 = store.add(r3, dij)?;
        }
        let dk = store.diff(trace, xs[i])?;
        let dkk = store.diff(dk, xs[i])?;
        r3 = store.sub(r3, dkk)?;
    }
    let pi = store.pi();
    let hamiltonian = match source {
        Some(t) => {
            let rho = store.mul(pi, t[0][0])?;
            let rho = store.scale(rho, &Coeff::int(16))?;
            store.sub(r3, rho)?
        }
        None => r3,
    };
    // M_i = d_j K_ij - d_i K - 8 pi S_i, S_i = -T_ti.
    let mut tr_k = store.zero();
    for i in 0..3 {
        tr_k = store.add(tr_k, a.k[i][i])?;
    }
    let mut momentum = [store.zero(); 3];
    for (i, slot) in momentum.iter_mut().enumerate() {
        let mut acc = store.zero();
        for (j, &xj) in xs.iter().enumerate() {
            let dj = store.diff(a.k[i][j], xj)?;
            acc = store.add(acc, dj)?;
        }
        let di = store.diff(tr_k, xs[i])?;
        acc = store.sub(acc, di)?;
        if let Some(t) = source {
            // -8 pi S_i = +8 pi T_ti
            let s = store.mul(pi, t[0][i + 1])?;
            let s = store.scale(s, &Coeff::int(8))?;
            acc = store.add(acc, s)?;
        }
        *slot = acc;
    }
    Ok(Constraints {
        hamiltonian,
        momentum,
    })
}

#[cfg(test)]
mod tests;
