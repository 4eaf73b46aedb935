//! Linearized gravity about a curved background in any coordinates, exactly.
//!
//! Model. A [`Background`] holds gbar_{mu nu} in the coordinates of a problem, its inverse,
//! its Christoffel symbols and curvature, a cosmological constant and a background source.
//! A [`Perturbation`] of it holds h_{mu nu} and computes, on demand and memoised, the
//! first-order change of the Einstein tensor by the Palatini identity (Wald 1984, eqs.
//! 7.5.14-7.5.15; common practice):
//!
//! - dGamma^a_{bc} = (1/2) gbar^{ad} (D_b h_{dc} + D_c h_{db} - D_d h_{bc}),
//! - dR_{bd} = D_a dGamma^a_{bd} - D_d dGamma^a_{ab},
//! - dG_{ab} = dR_{ab} - (1/2) h_{ab} Rbar - (1/2) gbar_{ab} (gbar^{cd} dR_{cd} - h^{cd} Rbar_{cd}),
//!
//! with D the background's covariant derivative, and from them the field-equation residual
//! dG + Lambda h - 8 pi dT, the covariant Lorenz divergence, the trace, the linearized
//! Riemann tensor (for flat backgrounds), the gauge residual h - D xi - D xi and the first-order
//! change of the source's divergence.
//!
//! Key design decision: one formula per quantity, written with explicit index sums over the
//! background's Christoffel symbols, so that Minkowski in Cartesian coordinates reduces to the
//! flat formulas term by term; the independent check of these formulas is
//! `crate::pointwise`'s forward-mode derivative of the full curvature chain, which shares
//! nothing with them.
//!
//! **Invariant:** every quantity is exact (canonical forms); a zero factor is skipped, never
//! approximated.

use super::Sym4;
use crate::canon::{CResult, Coeff, Form, KernelId, Store};

/// `[a][b][c]`: a quantity with one index up and two down, symmetric in the lower two.
pub type Chris = [Sym4; 4];

/// A memo of forms with four indices.
type Chris4 = [[Option<Form>; 4]; 4];

fn half() -> Coeff {
    Coeff::rational(crate::canon::Q::new(1.into(), 2.into()))
}

/// The sum of the products `a_i * b_i`, zero factors skipped.
fn dot(store: &mut Store, pairs: &[(Form, Form)]) -> CResult<Form> {
    store.dot(pairs)
}

/// A combination `sum c_i * f_i` with integer coefficients.
fn combo(store: &mut Store, terms: &[(i64, Form)]) -> CResult<Form> {
    let coeffs: Vec<Coeff> = terms.iter().map(|(c, _)| Coeff::int(*c)).collect();
    let refs: Vec<(&Coeff, Form)> = coeffs
        .iter()
        .zip(terms)
        .map(|(c, (_, f))| (c, *f))
        .collect();
    store.linear(&refs)
}

/// (1/2) ginv^{ad} (t_bdc + t_cdb - t_dbc) for a tensor `t` indexed `[b][d][c]` and symmetric
/// in its last two indices: the Christoffel symbols from t = d g, their first-order change
/// from t = D h.
fn connection(store: &mut Store, ginv: &Sym4, t: &[Sym4; 4]) -> CResult<Chris> {
    let zero = store.zero();
    let h = half();
    let mut low = [[[zero; 4]; 4]; 4];
    for d in 0..4 {
        for b in 0..4 {
            for c in b..4 {
                let v =
                    store.linear(&[(&h, t[b][d][c]), (&h, t[c][d][b]), (&h.neg(), t[d][b][c])])?;
                low[d][b][c] = v;
                low[d][c][b] = v;
            }
        }
    }
    let mut out = [[[zero; 4]; 4]; 4];
    for a in 0..4 {
        for b in 0..4 {
            for c in b..4 {
                let pairs: Vec<(Form, Form)> = (0..4).map(|d| (ginv[a][d], low[d][b][c])).collect();
                let v = dot(store, &pairs)?;
                out[a][b][c] = v;
                out[a][c][b] = v;
            }
        }
    }
    Ok(out)
}

/// The six permutations of (0, 1, 2) with their signs.
pub const PERMUTATIONS3: [([usize; 3], i64); 6] = [
    ([0, 1, 2], 1),
    ([1, 2, 0], 1),
    ([2, 0, 1], 1),
    ([0, 2, 1], -1),
    ([2, 1, 0], -1),
    ([1, 0, 2], -1),
];

/// The inverse of a symmetric matrix of forms: the adjugate over the determinant, by
/// cofactor expansion (diagonal metrics take the short way).
///
/// # Errors
///
/// A determinant that is exactly 0 (a degenerate metric: `DivisionByZero`), or a limit.
pub fn inverse(store: &mut Store, g: &Sym4) -> CResult<Sym4> {
    let zero = store.zero();
    let mut out = [[zero; 4]; 4];
    let diagonal = (0..4).all(|a| (0..4).all(|b| a == b || g[a][b] == zero));
    if diagonal {
        for a in 0..4 {
            out[a][a] = store.inv(g[a][a])?;
        }
        return Ok(out);
    }
    // Cofactors C_ab = (-1)^(a+b) det(minor_ab); g^{ab} = C_ba / det = C_ab / det (symmetric).
    let mut cof = [[zero; 4]; 4];
    for a in 0..4 {
        for b in a..4 {
            let rows: Vec<usize> = (0..4).filter(|&r| r != a).collect();
            let cols: Vec<usize> = (0..4).filter(|&c| c != b).collect();
            let m = det3(store, g, &rows, &cols)?;
            let c = if (a + b) % 2 == 0 { m } else { store.neg(m)? };
            cof[a][b] = c;
            cof[b][a] = c;
        }
    }
    let det = dot(
        store,
        &(0..4).map(|b| (g[0][b], cof[0][b])).collect::<Vec<_>>(),
    )?;
    let inv_det = store.inv(det)?;
    for a in 0..4 {
        for b in a..4 {
            let v = store.mul(cof[a][b], inv_det)?;
            out[a][b] = v;
            out[b][a] = v;
        }
    }
    Ok(out)
}

fn det3(store: &mut Store, g: &Sym4, r: &[usize], c: &[usize]) -> CResult<Form> {
    let mut terms = Vec::new();
    for (p, sign) in PERMUTATIONS3 {
        let a = store.mul(g[r[0]][c[p[0]]], g[r[1]][c[p[1]]])?;
        let t = store.mul(a, g[r[2]][c[p[2]]])?;
        terms.push((sign, t));
    }
    combo(store, &terms)
}

/// A background spacetime: metric, inverse, connection, curvature, cosmological constant and
/// source.
pub struct Background {
    /// The coordinates' kernels, in index order.
    pub coords: [KernelId; 4],
    /// gbar_{mu nu}.
    pub g: Sym4,
    /// gbar^{mu nu}.
    pub ginv: Sym4,
    /// Gamma^a_{bc}.
    pub gamma: Chris,
    /// Lambda.
    pub lambda: Form,
    /// Tbar_{mu nu}, `None` for vacuum.
    pub source: Option<Sym4>,
    riemann: Option<Box<[[Sym4; 4]; 4]>>,
    ricci: Option<Sym4>,
}

impl Background {
    /// The background `g` in the coordinates `coords`, with `lambda` and `source`.
    ///
    /// # Errors
    ///
    /// A degenerate metric (`DivisionByZero`) or a limit.
    pub fn new(
        store: &mut Store,
        coords: [KernelId; 4],
        g: Sym4,
        lambda: Form,
        source: Option<Sym4>,
    ) -> CResult<Background> {
        let ginv = inverse(store, &g)?;
        let zero = store.zero();
        let mut dg = [[[zero; 4]; 4]; 4];
        for c in 0..4 {
            for a in 0..4 {
                for b in a..4 {
                    let v = store.diff(g[a][b], coords[c])?;
                    dg[c][a][b] = v;
                    dg[c][b][a] = v;
                }
            }
        }
        // Gamma^a_bc = (1/2) g^{ad} (d_b g_dc + d_c g_db - d_d g_bc).
        let gamma = connection(store, &ginv, &dg)?;
        Ok(Background {
            coords,
            g,
            ginv,
            gamma,
            lambda,
            source,
            riemann: None,
            ricci: None,
        })
    }

    /// R^a_{bcd} = d_c Gamma^a_bd - d_d Gamma^a_bc + Gamma^a_ce Gamma^e_bd - Gamma^a_de Gamma^e_bc,
    /// indexed `[a][b][c][d]` (MTW sign).
    ///
    /// # Errors
    ///
    /// A limit.
    pub fn riemann(&mut self, store: &mut Store) -> CResult<[[Sym4; 4]; 4]> {
        if let Some(r) = &self.riemann {
            return Ok(**r);
        }
        let zero = store.zero();
        let mut r = [[[[zero; 4]; 4]; 4]; 4];
        let gm = self.gamma;
        for a in 0..4 {
            for b in 0..4 {
                for c in 0..4 {
                    for d in (c + 1)..4 {
                        let d1 = store.diff(gm[a][b][d], self.coords[c])?;
                        let d2 = store.diff(gm[a][b][c], self.coords[d])?;
                        let p1: Vec<(Form, Form)> =
                            (0..4).map(|e| (gm[a][c][e], gm[e][b][d])).collect();
                        let p2: Vec<(Form, Form)> =
                            (0..4).map(|e| (gm[a][d][e], gm[e][b][c])).collect();
                        let q1 = dot(store, &p1)?;
                        let q2 = dot(store, &p2)?;
                        let v = combo(store, &[(1, d1), (-1, d2), (1, q1), (-1, q2)])?;
                        r[a][b][c][d] = v;
                        r[a][b][d][c] = store.neg(v)?;
                    }
                }
            }
        }
        self.riemann = Some(Box::new(r));
        Ok(r)
    }

    /// R_{abcd} with every index down, for the 20 independent index sets of
    /// [`super::riemann_independent`].
    ///
    /// # Errors
    ///
    /// A limit.
    pub fn riemann_down(&mut self, store: &mut Store) -> CResult<Vec<([usize; 4], Form)>> {
        let r = self.riemann(store)?;
        let mut out = Vec::new();
        for idx in super::riemann_independent() {
            let [a, b, c, d] = idx;
            let pairs: Vec<(Form, Form)> = (0..4).map(|e| (self.g[a][e], r[e][b][c][d])).collect();
            out.push((idx, dot(store, &pairs)?));
        }
        Ok(out)
    }

    /// Rbar_{bd} = R^a_{bad}.
    ///
    /// # Errors
    ///
    /// A limit.
    pub fn ricci(&mut self, store: &mut Store) -> CResult<Sym4> {
        if let Some(r) = self.ricci {
            return Ok(r);
        }
        // R_bd = R^a_bad = d_a Gamma^a_bd - d_d C_b + C_e Gamma^e_bd - Gamma^a_de Gamma^e_ab
        // with C_b = Gamma^a_ab: the contraction taken first, so the 96 components of the
        // Riemann tensor are not needed. Symmetric in b, d (Levi-Civita connection).
        let gm = self.gamma;
        let zero = store.zero();
        let mut contracted = [zero; 4];
        for (b, c) in contracted.iter_mut().enumerate() {
            let terms: Vec<Form> = (0..4).map(|a| gm[a][a][b]).collect();
            *c = store.sum(&terms)?;
        }
        let mut out = [[zero; 4]; 4];
        for b in 0..4 {
            for d in b..4 {
                let mut terms = Vec::with_capacity(7);
                for a in 0..4 {
                    terms.push((1, store.diff(gm[a][b][d], self.coords[a])?));
                }
                terms.push((-1, store.diff(contracted[b], self.coords[d])?));
                let p1: Vec<(Form, Form)> = (0..4).map(|e| (contracted[e], gm[e][b][d])).collect();
                terms.push((1, dot(store, &p1)?));
                let p2: Vec<(Form, Form)> = (0..4)
                    .flat_map(|a| (0..4).map(move |e| (gm[a][d][e], gm[e][a][b])))
                    .collect();
                terms.push((-1, dot(store, &p2)?));
                let v = combo(store, &terms)?;
                out[b][d] = v;
                out[d][b] = v;
            }
        }
        self.ricci = Some(out);
        Ok(out)
    }

    /// Rbar = gbar^{ab} Rbar_{ab}.
    ///
    /// # Errors
    ///
    /// A limit.
    pub fn ricci_scalar(&mut self, store: &mut Store) -> CResult<Form> {
        let r = self.ricci(store)?;
        let mut pairs = Vec::new();
        for a in 0..4 {
            for b in 0..4 {
                pairs.push((self.ginv[a][b], r[a][b]));
            }
        }
        dot(store, &pairs)
    }

    /// The background's own equations, Gbar_{ab} + Lambda gbar_{ab} - 8 pi Tbar_{ab}.
    ///
    /// # Errors
    ///
    /// A limit.
    pub fn equations(&mut self, store: &mut Store) -> CResult<Sym4> {
        let r = self.ricci(store)?;
        let s = self.ricci_scalar(store)?;
        let pi = store.pi();
        let zero = store.zero();
        let mut out = [[zero; 4]; 4];
        let h = half();
        for a in 0..4 {
            for b in a..4 {
                let gs = store.mul(self.g[a][b], s)?;
                let gl = store.mul(self.g[a][b], self.lambda)?;
                let t = match &self.source {
                    Some(t) => store.mul(pi, t[a][b])?,
                    None => zero,
                };
                let v = store.linear(&[
                    (&Coeff::one(), r[a][b]),
                    (&h.neg(), gs),
                    (&Coeff::one(), gl),
                    (&Coeff::int(-8), t),
                ])?;
                out[a][b] = v;
                out[b][a] = v;
            }
        }
        Ok(out)
    }

    /// D_c A_{ab} for a symmetric `a`, indexed `[c][a][b]`:
    /// d_c A_ab - Gamma^e_ca A_eb - Gamma^e_cb A_ae.
    ///
    /// # Errors
    ///
    /// A limit.
    pub fn covariant_sym(&self, store: &mut Store, a: &Sym4) -> CResult<[Sym4; 4]> {
        let zero = store.zero();
        let mut out = [[[zero; 4]; 4]; 4];
        for c in 0..4 {
            for i in 0..4 {
                for j in i..4 {
                    let d = store.diff(a[i][j], self.coords[c])?;
                    let p1: Vec<(Form, Form)> =
                        (0..4).map(|e| (self.gamma[e][c][i], a[e][j])).collect();
                    let p2: Vec<(Form, Form)> =
                        (0..4).map(|e| (self.gamma[e][c][j], a[i][e])).collect();
                    let q1 = dot(store, &p1)?;
                    let q2 = dot(store, &p2)?;
                    let v = combo(store, &[(1, d), (-1, q1), (-1, q2)])?;
                    out[c][i][j] = v;
                    out[c][j][i] = v;
                }
            }
        }
        Ok(out)
    }

    /// The divergence gbar^{ma} D_a A_{mn} of a symmetric `a`.
    ///
    /// # Errors
    ///
    /// A limit.
    pub fn divergence(&self, store: &mut Store, a: &Sym4) -> CResult<[Form; 4]> {
        let da = self.covariant_sym(store, a)?;
        let mut out = [store.zero(); 4];
        for (n, slot) in out.iter_mut().enumerate() {
            let mut pairs = Vec::new();
            for m in 0..4 {
                for al in 0..4 {
                    pairs.push((self.ginv[m][al], da[al][m][n]));
                }
            }
            *slot = dot(store, &pairs)?;
        }
        Ok(out)
    }

    /// The trace gbar^{ab} A_{ab}.
    ///
    /// # Errors
    ///
    /// A limit.
    pub fn trace(&self, store: &mut Store, a: &Sym4) -> CResult<Form> {
        let mut pairs = Vec::new();
        for i in 0..4 {
            for j in 0..4 {
                pairs.push((self.ginv[i][j], a[i][j]));
            }
        }
        dot(store, &pairs)
    }

    /// A^{ab} = gbar^{ac} gbar^{bd} A_{cd} for a symmetric `a`.
    ///
    /// # Errors
    ///
    /// A limit.
    pub fn raise_both(&self, store: &mut Store, a: &Sym4) -> CResult<Sym4> {
        let zero = store.zero();
        let mut half_up = [[zero; 4]; 4]; // A^a_d = g^{ac} A_cd
        for i in 0..4 {
            for d in 0..4 {
                let pairs: Vec<(Form, Form)> = (0..4).map(|c| (self.ginv[i][c], a[c][d])).collect();
                half_up[i][d] = dot(store, &pairs)?;
            }
        }
        let mut out = [[zero; 4]; 4];
        for i in 0..4 {
            for j in i..4 {
                let pairs: Vec<(Form, Form)> =
                    (0..4).map(|d| (self.ginv[j][d], half_up[i][d])).collect();
                let v = dot(store, &pairs)?;
                out[i][j] = v;
                out[j][i] = v;
            }
        }
        Ok(out)
    }
}

/// A perturbation h of a [`Background`], with its linearized quantities memoised.
pub struct Perturbation {
    /// h_{mu nu}.
    pub h: Sym4,
    dh: Option<[Sym4; 4]>,
    dgamma: Option<Chris>,
    /// D_e dGamma^a_bc, memoised by `[e][a][b][c]` (b <= c).
    ddgamma: Box<[[Chris4; 4]; 4]>,
    dricci: Option<Sym4>,
    trace: Option<Form>,
}

impl Perturbation {
    /// Wraps `h`.
    #[must_use]
    pub fn new(h: Sym4) -> Perturbation {
        Perturbation {
            h,
            dh: None,
            dgamma: None,
            ddgamma: Box::new([[[[None; 4]; 4]; 4]; 4]),
            dricci: None,
            trace: None,
        }
    }

    /// D_c h_{ab}, indexed `[c][a][b]`.
    ///
    /// # Errors
    ///
    /// A limit.
    pub fn covariant(&mut self, store: &mut Store, bg: &Background) -> CResult<[Sym4; 4]> {
        if let Some(d) = self.dh {
            return Ok(d);
        }
        let d = bg.covariant_sym(store, &self.h)?;
        self.dh = Some(d);
        Ok(d)
    }

    /// The trace h = gbar^{ab} h_{ab}.
    ///
    /// # Errors
    ///
    /// A limit.
    pub fn trace(&mut self, store: &mut Store, bg: &Background) -> CResult<Form> {
        if let Some(t) = self.trace {
            return Ok(t);
        }
        let t = bg.trace(store, &self.h)?;
        self.trace = Some(t);
        Ok(t)
    }

    /// dGamma^a_{bc} = (1/2) gbar^{ad} (D_b h_dc + D_c h_db - D_d h_bc).
    ///
    /// # Errors
    ///
    /// A limit.
    pub fn delta_gamma(&mut self, store: &mut Store, bg: &Background) -> CResult<Chris> {
        if let Some(g) = self.dgamma {
            return Ok(g);
        }
        let dh = self.covariant(store, bg)?;
        let out = connection(store, &bg.ginv, &dh)?;
        self.dgamma = Some(out);
        Ok(out)
    }

    /// D_e dGamma^a_{bc}: d_e dGamma^a_bc + Gamma^a_ef dGamma^f_bc - Gamma^f_eb dGamma^a_fc
    /// - Gamma^f_ec dGamma^a_bf.
    fn d_delta_gamma(
        &mut self,
        store: &mut Store,
        bg: &Background,
        e: usize,
        a: usize,
        b: usize,
        c: usize,
    ) -> CResult<Form> {
        let (b, c) = (b.min(c), b.max(c));
        if let Some(f) = self.ddgamma[e][a][b][c] {
            return Ok(f);
        }
        let dg = self.delta_gamma(store, bg)?;
        let gm = &bg.gamma;
        let d = store.diff(dg[a][b][c], bg.coords[e])?;
        let p1: Vec<(Form, Form)> = (0..4).map(|f| (gm[a][e][f], dg[f][b][c])).collect();
        let p2: Vec<(Form, Form)> = (0..4).map(|f| (gm[f][e][b], dg[a][f][c])).collect();
        let p3: Vec<(Form, Form)> = (0..4).map(|f| (gm[f][e][c], dg[a][b][f])).collect();
        let q1 = dot(store, &p1)?;
        let q2 = dot(store, &p2)?;
        let q3 = dot(store, &p3)?;
        let v = combo(store, &[(1, d), (1, q1), (-1, q2), (-1, q3)])?;
        self.ddgamma[e][a][b][c] = Some(v);
        Ok(v)
    }

    /// dR_{bd} = D_a dGamma^a_{bd} - D_d dGamma^a_{ab}, with the contractions done first:
    /// D_a dGamma^a_{bd} is `d_a dGamma^a_bd + Gamma^a_af dGamma^f_bd - Gamma^f_ab
    /// dGamma^a_fd - Gamma^f_ad dGamma^a_bf`, and dGamma^a_{ab} = (1/2) d_b h with
    /// h = gbar^{ac} h_ac (the other two terms of dGamma^a_ab cancel under the symmetric
    /// gbar^{ac}), so D_d dGamma^a_{ab} = (1/2) (d_d d_b h - Gamma^f_db d_f h).
    ///
    /// # Errors
    ///
    /// A limit.
    pub fn delta_ricci(&mut self, store: &mut Store, bg: &Background) -> CResult<Sym4> {
        if let Some(r) = self.dricci {
            return Ok(r);
        }
        let dg = self.delta_gamma(store, bg)?;
        let tr = self.trace(store, bg)?;
        let gm = &bg.gamma;
        let zero = store.zero();
        // Gamma^a_{af} and d_f h.
        let mut contracted = [zero; 4];
        let mut dtr = [zero; 4];
        for f in 0..4 {
            contracted[f] = store.sum(&[gm[0][0][f], gm[1][1][f], gm[2][2][f], gm[3][3][f]])?;
            dtr[f] = store.diff(tr, bg.coords[f])?;
        }
        let h = half();
        let mut out = [[zero; 4]; 4];
        for b in 0..4 {
            for d in b..4 {
                let mut div = Vec::with_capacity(4);
                for a in 0..4 {
                    div.push(store.diff(dg[a][b][d], bg.coords[a])?);
                }
                let div = store.sum(&div)?;
                let p1: Vec<(Form, Form)> = (0..4).map(|f| (contracted[f], dg[f][b][d])).collect();
                let mut p2 = Vec::with_capacity(32);
                for a in 0..4 {
                    for f in 0..4 {
                        p2.push((gm[f][a][b], dg[a][f][d]));
                        p2.push((gm[f][a][d], dg[a][b][f]));
                    }
                }
                let p3: Vec<(Form, Form)> = (0..4).map(|f| (gm[f][d][b], dtr[f])).collect();
                let q1 = dot(store, &p1)?;
                let q2 = dot(store, &p2)?;
                let q3 = dot(store, &p3)?;
                let ddtr = store.diff(dtr[b], bg.coords[d])?;
                let v = store.linear(&[
                    (&Coeff::one(), div),
                    (&Coeff::one(), q1),
                    (&Coeff::int(-1), q2),
                    (&h.neg(), ddtr),
                    (&h, q3),
                ])?;
                out[b][d] = v;
                out[d][b] = v;
            }
        }
        self.dricci = Some(out);
        Ok(out)
    }

    /// dG_{ab} = dR_ab - (1/2) h_ab Rbar - (1/2) gbar_ab (gbar^{cd} dR_cd - h^{cd} Rbar_cd).
    ///
    /// # Errors
    ///
    /// A limit.
    pub fn delta_einstein(&mut self, store: &mut Store, bg: &mut Background) -> CResult<Sym4> {
        let dr = self.delta_ricci(store, bg)?;
        let rbar = bg.ricci(store)?;
        let sbar = bg.ricci_scalar(store)?;
        let hup = bg.raise_both(store, &self.h)?;
        let tr_dr = bg.trace(store, &dr)?;
        let mut pairs = Vec::new();
        for c in 0..4 {
            for d in 0..4 {
                pairs.push((hup[c][d], rbar[c][d]));
            }
        }
        let h_r = dot(store, &pairs)?;
        let ds = combo(store, &[(1, tr_dr), (-1, h_r)])?;
        let zero = store.zero();
        let mut out = [[zero; 4]; 4];
        let h = half();
        for a in 0..4 {
            for b in a..4 {
                let x = store.mul(self.h[a][b], sbar)?;
                let y = store.mul(bg.g[a][b], ds)?;
                let v = store.linear(&[(&Coeff::one(), dr[a][b]), (&h.neg(), x), (&h.neg(), y)])?;
                out[a][b] = v;
                out[b][a] = v;
            }
        }
        Ok(out)
    }

    /// The field-equation residual dG_ab + Lambda h_ab - 8 pi dT_ab (`dt`: `None` for vacuum).
    ///
    /// # Errors
    ///
    /// A limit.
    pub fn field_residual(
        &mut self,
        store: &mut Store,
        bg: &mut Background,
        dt: Option<&Sym4>,
    ) -> CResult<Sym4> {
        let dg = self.delta_einstein(store, bg)?;
        let pi = store.pi();
        let zero = store.zero();
        let mut out = [[zero; 4]; 4];
        for a in 0..4 {
            for b in a..4 {
                let lh = store.mul(bg.lambda, self.h[a][b])?;
                let t = match dt {
                    Some(t) => store.mul(pi, t[a][b])?,
                    None => zero,
                };
                let v = combo(store, &[(1, dg[a][b]), (1, lh), (-8, t)])?;
                out[a][b] = v;
                out[b][a] = v;
            }
        }
        Ok(out)
    }

    /// The covariant Lorenz divergence L_n = gbar^{ma} D_a hbar_mn, hbar = h - (1/2) gbar tr h.
    ///
    /// # Errors
    ///
    /// A limit.
    pub fn lorenz(&mut self, store: &mut Store, bg: &Background) -> CResult<[Form; 4]> {
        let dh = self.covariant(store, bg)?;
        let tr = self.trace(store, bg)?;
        let mut out = [store.zero(); 4];
        let h = half();
        for (n, slot) in out.iter_mut().enumerate() {
            let mut pairs = Vec::new();
            for m in 0..4 {
                for a in 0..4 {
                    pairs.push((bg.ginv[m][a], dh[a][m][n]));
                }
            }
            let div = dot(store, &pairs)?;
            // D gbar = 0, so D_a (gbar_mn tr) = gbar_mn d_a tr, and gbar^{ma} gbar_mn = delta^a_n.
            let dtr = store.diff(tr, bg.coords[n])?;
            *slot = store.linear(&[(&Coeff::one(), div), (&h.neg(), dtr)])?;
        }
        Ok(out)
    }

    /// The linearized Riemann tensor with every index down, dR_{abcd} = gbar_ae dR^e_bcd +
    /// h_ae Rbar^e_bcd, dR^e_bcd = D_c dGamma^e_db - D_d dGamma^e_cb, for the 20 independent
    /// index sets.
    ///
    /// # Errors
    ///
    /// A limit.
    pub fn riemann(
        &mut self,
        store: &mut Store,
        bg: &mut Background,
    ) -> CResult<Vec<([usize; 4], Form)>> {
        let rbar = bg.riemann(store)?;
        let mut out = Vec::new();
        for idx in super::riemann_independent() {
            let [a, b, c, d] = idx;
            let mut pairs = Vec::new();
            for e in 0..4 {
                let x = self.d_delta_gamma(store, bg, c, e, d, b)?;
                let y = self.d_delta_gamma(store, bg, d, e, c, b)?;
                let up = combo(store, &[(1, x), (-1, y)])?;
                pairs.push((bg.g[a][e], up));
                pairs.push((self.h[a][e], rbar[e][b][c][d]));
            }
            out.push((idx, dot(store, &pairs)?));
        }
        Ok(out)
    }

    /// The gauge residual h_ab - D_a xi_b - D_b xi_a for the covector `xi` (index down).
    ///
    /// # Errors
    ///
    /// A limit.
    pub fn gauge_residual(
        &self,
        store: &mut Store,
        bg: &Background,
        xi: &[Form; 4],
    ) -> CResult<Sym4> {
        let zero = store.zero();
        let mut dxi = [[zero; 4]; 4]; // D_a xi_b
        for a in 0..4 {
            for b in 0..4 {
                let d = store.diff(xi[b], bg.coords[a])?;
                let pairs: Vec<(Form, Form)> = (0..4).map(|e| (bg.gamma[e][a][b], xi[e])).collect();
                let q = dot(store, &pairs)?;
                dxi[a][b] = combo(store, &[(1, d), (-1, q)])?;
            }
        }
        let mut out = [[zero; 4]; 4];
        for a in 0..4 {
            for b in a..4 {
                let v = combo(
                    store,
                    &[(1, self.h[a][b]), (-1, dxi[a][b]), (-1, dxi[b][a])],
                )?;
                out[a][b] = v;
                out[b][a] = v;
            }
        }
        Ok(out)
    }

    /// The first-order change of the source's divergence g^{ma} D_a T_mn for g = gbar + h,
    /// T = Tbar + dT: gbar^{ma} (D_a dT_mn - dGamma^l_am Tbar_ln - dGamma^l_an Tbar_ml)
    /// - h^{ma} D_a Tbar_mn.
    ///
    /// # Errors
    ///
    /// A limit.
    pub fn conservation(
        &mut self,
        store: &mut Store,
        bg: &Background,
        dt: Option<&Sym4>,
    ) -> CResult<[Form; 4]> {
        let zero = store.zero();
        let zeros = [[zero; 4]; 4];
        let dt = dt.unwrap_or(&zeros);
        let ddt = bg.covariant_sym(store, dt)?;
        let tbar = bg.source;
        let (dtbar, dgam, hup) = match &tbar {
            Some(t) => (
                Some(bg.covariant_sym(store, t)?),
                Some(self.delta_gamma(store, bg)?),
                Some(bg.raise_both(store, &self.h)?),
            ),
            None => (None, None, None),
        };
        let mut out = [zero; 4];
        for (n, slot) in out.iter_mut().enumerate() {
            let mut pairs = Vec::new();
            for m in 0..4 {
                for a in 0..4 {
                    let mut inner = vec![(1, ddt[a][m][n])];
                    if let (Some(t), Some(dg)) = (&tbar, &dgam) {
                        let p1: Vec<(Form, Form)> =
                            (0..4).map(|l| (dg[l][a][m], t[l][n])).collect();
                        let p2: Vec<(Form, Form)> =
                            (0..4).map(|l| (dg[l][a][n], t[m][l])).collect();
                        inner.push((-1, dot(store, &p1)?));
                        inner.push((-1, dot(store, &p2)?));
                    }
                    let x = combo(store, &inner)?;
                    pairs.push((bg.ginv[m][a], x));
                    if let (Some(dtb), Some(hu)) = (&dtbar, &hup) {
                        let y = store.neg(dtb[a][m][n])?;
                        pairs.push((hu[m][a], y));
                    }
                }
            }
            *slot = dot(store, &pairs)?;
        }
        Ok(out)
    }
}

#[cfg(test)]
mod tests;
