//! The tensor layer: linearized-gravity quantities of a perturbation, component by component.
//!
//! Conventions: signature (-,+,+,+), coordinates (t,x,y,z) with indices 0..3, all indices of h
//! and T down, eta = diag(-1, 1, 1, 1), Riemann sign as in Misner, Thorne & Wheeler (1973):
//! R_{abcd} = (1/2)(d_b d_c h_ad + d_a d_d h_bc - d_a d_c h_bd - d_b d_d h_ac) at first order.
//!
//! Design decision: a [`Linearized`] value owns the perturbation and memoises every derived
//! quantity, so checking several claims differentiates each component once (the store also
//! caches derivatives).
//!
//! **Invariant:** every quantity is exact (canonical forms); nothing here evaluates numerically.

use crate::canon::{CResult, Coeff, Form, KernelId, Store};

pub mod curved;

/// Coordinate names in index order.
pub const COORDS: [&str; 4] = ["t", "x", "y", "z"];

/// The flat metric's diagonal: eta_{mu mu} = eta^{mu mu}.
pub const ETA: [i64; 4] = [-1, 1, 1, 1];

/// A symmetric 4x4 array of forms (both indices down unless said otherwise).
pub type Sym4 = [[Form; 4]; 4];

/// The six antisymmetric index pairs in order tx, ty, tz, xy, xz, yz.
pub const PAIRS: [(usize, usize); 6] = [(0, 1), (0, 2), (0, 3), (1, 2), (1, 3), (2, 3)];

/// The 20 algebraically independent Riemann components: pairs (A, B) with A <= B, leaving
/// out (tz, xy), which the cyclic identity R_txyz + R_tyzx + R_tzxy = 0 determines.
pub fn riemann_independent() -> Vec<[usize; 4]> {
    let mut v = Vec::new();
    for (i, a) in PAIRS.iter().enumerate() {
        for b in &PAIRS[i..] {
            if *a == (0, 3) && *b == (1, 2) {
                continue;
            }
            v.push([a.0, a.1, b.0, b.1]);
        }
    }
    v
}

/// The ten independent components of a symmetric 4x4 tensor, as `(mu, nu)` with `mu <= nu`,
/// in the order tt tx ty tz xx xy xz yy yz zz (index 0 = t, 1 = x, 2 = y, 3 = z).
pub const COMPONENTS: [(usize, usize); 10] = [
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

/// Name of a component from its indices, e.g. `[0, 1]` -> "tx"; `?` stands for an index
/// above 3.
pub fn index_name(idx: &[usize]) -> String {
    idx.iter()
        .map(|&i| COORDS.get(i).copied().unwrap_or("?"))
        .collect()
}

/// How indices are written in reports: the coordinate names, and whether derivatives are
/// covariant (about a background: written `D`) or partial (flat Cartesian: `d`).
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Frame {
    names: [String; 4],
    /// Derivatives are the background's covariant derivative.
    pub covariant: bool,
}

impl Frame {
    /// Cartesian (t, x, y, z) with partial derivatives.
    #[must_use]
    pub fn cartesian() -> Frame {
        Frame {
            names: COORDS.map(String::from),
            covariant: false,
        }
    }

    /// The coordinates `names` (time first) about a background.
    #[must_use]
    pub fn covariant(names: [String; 4]) -> Frame {
        Frame {
            names,
            covariant: true,
        }
    }

    /// The name of coordinate `i` (`?` beyond 3).
    #[must_use]
    pub fn coord(&self, i: usize) -> &str {
        self.names.get(i).map_or("?", String::as_str)
    }

    /// True when every coordinate name is one letter (indices are then written joined).
    #[must_use]
    pub fn one_letter(&self) -> bool {
        self.names.iter().all(|c| c.chars().count() == 1)
    }

    /// Indices joined (`txtx`) when every name is one letter, else with dots (`t.r.t.r`).
    #[must_use]
    pub fn index(&self, idx: &[usize]) -> String {
        let parts: Vec<&str> = idx.iter().map(|&i| self.coord(i)).collect();
        if self.one_letter() {
            parts.concat()
        } else {
            parts.join(".")
        }
    }
}

/// The name of component `(mu, nu)` of a symmetric tensor: `"tt"`, `"tx"`, ...
#[must_use]
pub fn component_name(mu: usize, nu: usize) -> String {
    index_name(&[mu, nu])
}

/// A perturbation with memoised derived quantities.
pub struct Linearized {
    /// h_{mu nu}.
    pub h: Sym4,
    coords: [KernelId; 4],
    dh: Option<[Sym4; 4]>,
    riemann: Option<Vec<([usize; 4], Form)>>,
    ricci: Option<Sym4>,
    einstein: Option<Sym4>,
    hbar: Option<Sym4>,
    lorenz: Option<[Form; 4]>,
}

fn zeros(store: &Store) -> Sym4 {
    [[store.zero(); 4]; 4]
}

impl Linearized {
    /// Wraps a perturbation.
    pub fn new(store: &mut Store, h: Sym4) -> Linearized {
        let coords = COORDS.map(|c| store.symbol_kernel(c));
        Linearized {
            h,
            coords,
            dh: None,
            riemann: None,
            ricci: None,
            einstein: None,
            hbar: None,
            lorenz: None,
        }
    }

    /// The kernel of coordinate `mu`.
    pub fn coord(&self, mu: usize) -> KernelId {
        self.coords[mu]
    }

    /// d_rho h_{mu nu}, indexed `[rho][mu][nu]`.
    pub fn dh(&mut self, store: &mut Store) -> CResult<[Sym4; 4]> {
        if let Some(d) = self.dh {
            return Ok(d);
        }
        let mut d = [zeros(store); 4];
        for (rho, drho) in d.iter_mut().enumerate() {
            for mu in 0..4 {
                for nu in mu..4 {
                    let v = store.diff(self.h[mu][nu], self.coords[rho])?;
                    drho[mu][nu] = v;
                    drho[nu][mu] = v;
                }
            }
        }
        self.dh = Some(d);
        Ok(d)
    }

    /// d_a d_b h_{mu nu}.
    fn ddh(
        &mut self,
        store: &mut Store,
        a: usize,
        b: usize,
        mu: usize,
        nu: usize,
    ) -> CResult<Form> {
        let d = self.dh(store)?;
        // Differentiate in a fixed order so the cache is shared between (a, b) and (b, a).
        let (first, second) = if a <= b { (a, b) } else { (b, a) };
        store.diff(d[first][mu][nu], self.coords[second])
    }

    /// The trace h = eta^{mu nu} h_{mu nu}.
    pub fn trace(&self, store: &mut Store) -> CResult<Form> {
        let eta = ETA.map(Coeff::int);
        let terms: Vec<(&Coeff, Form)> = (0..4).map(|mu| (&eta[mu], self.h[mu][mu])).collect();
        store.linear(&terms)
    }

    /// The trace-reversed perturbation hbar_{mu nu} = h_{mu nu} - (1/2) eta_{mu nu} h.
    pub fn hbar(&mut self, store: &mut Store) -> CResult<Sym4> {
        if let Some(h) = self.hbar {
            return Ok(h);
        }
        let tr = self.trace(store)?;
        let half = Coeff::rational(crate::canon::Q::new(1.into(), 2.into()));
        let mut out = self.h;
        for (mu, row) in out.iter_mut().enumerate() {
            let shift = half.mul(&Coeff::int(-ETA[mu]));
            row[mu] = store.linear(&[(&Coeff::one(), self.h[mu][mu]), (&shift, tr)])?;
        }
        self.hbar = Some(out);
        Ok(out)
    }

    /// The linearized Christoffel symbols Gamma^l_{mu nu}, indexed `[l][mu][nu]`.
    pub fn christoffel(&mut self, store: &mut Store) -> CResult<[Sym4; 4]> {
        let d = self.dh(store)?;
        let half = Coeff::rational(crate::canon::Q::new(1.into(), 2.into()));
        let mut g = [zeros(store); 4];
        for (l, gl) in g.iter_mut().enumerate() {
            for mu in 0..4 {
                for nu in mu..4 {
                    // Gamma_{l mu nu} = (1/2)(d_mu h_{l nu} + d_nu h_{l mu} - d_l h_{mu nu})
                    let c = half.mul(&Coeff::int(ETA[l]));
                    let v = store.linear(&[
                        (&c, d[mu][l][nu]),
                        (&c, d[nu][l][mu]),
                        (&c.neg(), d[l][mu][nu]),
                    ])?;
                    gl[mu][nu] = v;
                    gl[nu][mu] = v;
                }
            }
        }
        Ok(g)
    }

    /// R_{abcd} at first order.
    pub fn riemann_component(&mut self, store: &mut Store, idx: [usize; 4]) -> CResult<Form> {
        let terms = self.riemann_terms(store, idx, &Coeff::one())?;
        let refs: Vec<(&Coeff, Form)> = terms.iter().map(|(c, f)| (c, *f)).collect();
        store.linear(&refs)
    }

    /// `k R_{abcd}` as four second derivatives with their coefficients:
    /// R_{abcd} = (1/2)(d_b d_c h_{ad} + d_a d_d h_{bc} - d_a d_c h_{bd} - d_b d_d h_{ac}).
    fn riemann_terms(
        &mut self,
        store: &mut Store,
        [a, b, c, d]: [usize; 4],
        k: &Coeff,
    ) -> CResult<[(Coeff, Form); 4]> {
        let plus = k.mul(&Coeff::rational(crate::canon::Q::new(1.into(), 2.into())));
        let minus = plus.neg();
        Ok([
            (plus.clone(), self.ddh(store, b, c, a, d)?),
            (plus, self.ddh(store, a, d, b, c)?),
            (minus.clone(), self.ddh(store, a, c, b, d)?),
            (minus, self.ddh(store, b, d, a, c)?),
        ])
    }

    /// The 20 independent Riemann components with their indices.
    pub fn riemann(&mut self, store: &mut Store) -> CResult<Vec<([usize; 4], Form)>> {
        if let Some(r) = &self.riemann {
            return Ok(r.clone());
        }
        let mut out = Vec::new();
        for idx in riemann_independent() {
            out.push((idx, self.riemann_component(store, idx)?));
        }
        self.riemann = Some(out.clone());
        Ok(out)
    }

    /// The Ricci tensor R_{mu nu} = eta^{rho sigma} R_{rho mu sigma nu}.
    pub fn ricci(&mut self, store: &mut Store) -> CResult<Sym4> {
        if let Some(r) = self.ricci {
            return Ok(r);
        }
        let mut out = zeros(store);
        for mu in 0..4 {
            for nu in mu..4 {
                let mut terms = Vec::with_capacity(16);
                for rho in 0..4 {
                    let k = Coeff::int(ETA[rho]);
                    terms.extend(self.riemann_terms(store, [rho, mu, rho, nu], &k)?);
                }
                let refs: Vec<(&Coeff, Form)> = terms.iter().map(|(c, f)| (c, *f)).collect();
                let acc = store.linear(&refs)?;
                out[mu][nu] = acc;
                out[nu][mu] = acc;
            }
        }
        self.ricci = Some(out);
        Ok(out)
    }

    /// The Ricci scalar R = eta^{mu nu} R_{mu nu}.
    pub fn ricci_scalar(&mut self, store: &mut Store) -> CResult<Form> {
        let r = self.ricci(store)?;
        let eta = ETA.map(Coeff::int);
        let terms: Vec<(&Coeff, Form)> = (0..4).map(|mu| (&eta[mu], r[mu][mu])).collect();
        store.linear(&terms)
    }

    /// The linearized Einstein tensor G_{mu nu} = R_{mu nu} - (1/2) eta_{mu nu} R.
    pub fn einstein(&mut self, store: &mut Store) -> CResult<Sym4> {
        if let Some(g) = self.einstein {
            return Ok(g);
        }
        let r = self.ricci(store)?;
        let s = self.ricci_scalar(store)?;
        let mut g = r;
        for (mu, row) in g.iter_mut().enumerate() {
            let shift = Coeff::rational(crate::canon::Q::new((-ETA[mu]).into(), 2.into()));
            row[mu] = store.linear(&[(&Coeff::one(), r[mu][mu]), (&shift, s)])?;
        }
        self.einstein = Some(g);
        Ok(g)
    }

    /// The flat d'Alembertian of hbar: (box hbar)_{mu nu} = eta^{rho sigma} d_rho d_sigma hbar_{mu nu}.
    pub fn box_hbar(&mut self, store: &mut Store) -> CResult<Sym4> {
        let hb = self.hbar(store)?;
        box_of(store, &hb, &self.coords)
    }

    /// The Lorenz divergence V_nu = d^mu hbar_{mu nu}.
    pub fn lorenz(&mut self, store: &mut Store) -> CResult<[Form; 4]> {
        if let Some(v) = self.lorenz {
            return Ok(v);
        }
        let hb = self.hbar(store)?;
        let v = divergence(store, &hb, &self.coords)?;
        self.lorenz = Some(v);
        Ok(v)
    }

    /// The spatial trace h_xx + h_yy + h_zz (the flat spatial metric's trace).
    pub fn spatial_trace(&self, store: &mut Store) -> CResult<Form> {
        let one = Coeff::one();
        let terms: Vec<(&Coeff, Form)> = (1..4).map(|i| (&one, self.h[i][i])).collect();
        store.linear(&terms)
    }

    /// The spatial divergence d_i h_{ij} (summed over the spatial `i`), for `j` in 0..4.
    pub fn spatial_divergence(&mut self, store: &mut Store, j: usize) -> CResult<Form> {
        let d = self.dh(store)?;
        let one = Coeff::one();
        let terms: Vec<(&Coeff, Form)> = (1..4).map(|i| (&one, d[i][i][j])).collect();
        store.linear(&terms)
    }
}

/// (box A)_{mu nu} for a symmetric array.
pub fn box_of(store: &mut Store, a: &Sym4, coords: &[KernelId; 4]) -> CResult<Sym4> {
    let mut out = zeros(store);
    for mu in 0..4 {
        for nu in mu..4 {
            let eta = ETA.map(Coeff::int);
            let mut terms = Vec::with_capacity(4);
            for (rho, &c) in coords.iter().enumerate() {
                let d1 = store.diff(a[mu][nu], c)?;
                terms.push((&eta[rho], store.diff(d1, c)?));
            }
            let acc = store.linear(&terms)?;
            out[mu][nu] = acc;
            out[nu][mu] = acc;
        }
    }
    Ok(out)
}

/// The divergence V_nu = eta^{mu rho} d_rho A_{mu nu}.
pub fn divergence(store: &mut Store, a: &Sym4, coords: &[KernelId; 4]) -> CResult<[Form; 4]> {
    let mut out = [store.zero(); 4];
    for (nu, slot) in out.iter_mut().enumerate() {
        let eta = ETA.map(Coeff::int);
        let mut terms = Vec::with_capacity(4);
        for (mu, &c) in coords.iter().enumerate() {
            terms.push((&eta[mu], store.diff(a[mu][nu], c)?));
        }
        *slot = store.linear(&terms)?;
    }
    Ok(out)
}

#[cfg(test)]
mod tests;
