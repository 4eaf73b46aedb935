//! Each claim as a list of components, each component a linear combination of samples and
//! derivatives of `h` and `T` at a point.
//!
//! These formulas are written here from the definitions, independently of
//! [`crate::tensor`], so that the grid check is a second opinion and not the same code run
//! numerically. With `eta = diag(-1, 1, 1, 1)`, `h = eta^{mn} h_mn`, `d` partial derivatives:
//! - Ricci: `R_mn = (1/2)(d_s d_m h^s_n + d_s d_n h^s_m - d_m d_n h - box h_mn)`, with
//!   `box = eta^{ss} d_s d_s`; Einstein `G_mn = R_mn - (1/2) eta_mn eta^{rs} R_rs`;
//! - Lorenz: `d^m hbar_mn = eta^{mm} d_m h_mn - (1/2) d_n h`;
//! - TT: `h_tm`, `h_xx + h_yy + h_zz`, `d_i h_ij`; synchronous: `h_tm`;
//! - Riemann (sign of Misner, Thorne & Wheeler 1973, at first order):
//!   `R_abcd = (1/2)(d_b d_c h_ad + d_a d_d h_bc - d_a d_c h_bd - d_b d_d h_ac)`, for the 20
//!   independent components of [`crate::tensor::riemann_independent`];
//! - source conservation: `d^m T_mn = eta^{mm} d_m T_mn`.

use crate::claim::{Claim, Part, Plan};
use crate::problem::Claims;
use crate::tensor::component_name;
use std::collections::BTreeMap;

const ETA: [f64; 4] = [-1.0, 1.0, 1.0, 1.0];

/// Which tensor a sample belongs to.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Field {
    /// The perturbation `h_{mu nu}`.
    H,
    /// The source `T_{mu nu}` (about a background: its perturbation `dT_{mu nu}`).
    T,
    /// The background metric `gbar_{mu nu}` (problems about a background).
    Gbar,
    /// The background source `Tbar_{mu nu}`.
    Tbar,
    /// The gauge vector `xi_mu` (index down; the component in `mu`, `nu` unused).
    Xi,
    /// The cosmological constant (a constant channel; indices unused).
    Lambda,
}

/// A derivative of a sample: none, first along an axis, or second along two (sorted).
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Deriv {
    /// The sample itself.
    Value,
    /// `d_a`.
    D1(u8),
    /// `d_a d_b`, `a <= b`.
    D2(u8, u8),
}

impl Deriv {
    /// Highest order of differentiation.
    #[must_use]
    pub fn order(self) -> u32 {
        match self {
            Deriv::Value => 0,
            Deriv::D1(_) => 1,
            Deriv::D2(..) => 2,
        }
    }
    /// True if it differentiates along the axis.
    #[must_use]
    pub fn involves(self, axis: u8) -> bool {
        match self {
            Deriv::Value => false,
            Deriv::D1(a) => a == axis,
            Deriv::D2(a, b) => a == axis || b == axis,
        }
    }
}

/// One term's target: a derivative of one component of `h` or `T` (indices sorted).
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct Atom {
    /// `h` or `T`.
    pub field: Field,
    /// The smaller index.
    pub mu: u8,
    /// The larger index.
    pub nu: u8,
    /// The derivative.
    pub deriv: Deriv,
}

/// A linear combination of atoms.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Combo(pub BTreeMap<Atom, f64>);

impl Combo {
    fn add(&mut self, field: Field, m: usize, n: usize, deriv: Deriv, c: f64) {
        let (mu, nu) = (m.min(n) as u8, m.max(n) as u8);
        let deriv = match deriv {
            Deriv::D2(a, b) => Deriv::D2(a.min(b), a.max(b)),
            d => d,
        };
        let e = self
            .0
            .entry(Atom {
                field,
                mu,
                nu,
                deriv,
            })
            .or_insert(0.0);
        *e += c;
        if *e == 0.0 {
            self.0.remove(&Atom {
                field,
                mu,
                nu,
                deriv,
            });
        }
    }
    fn plus(&mut self, other: &Combo, c: f64) {
        for (a, v) in &other.0 {
            self.add(a.field, a.mu as usize, a.nu as usize, a.deriv, c * v);
        }
    }
}

/// A claim in grid terms.
#[derive(Clone, Debug, PartialEq)]
pub struct ClaimSpec {
    /// Machine key, the same as the exact check's.
    pub key: String,
    /// Human description.
    pub title: String,
    /// The title as asserted (negated for a claim asserted false).
    pub heading: String,
    /// `Some(true)`: the components vanish; `Some(false)`: they do not; `None`: only report.
    pub asserted: Option<bool>,
    /// The named components.
    pub components: Vec<(String, Combo)>,
}

impl ClaimSpec {
    /// The grid form of a planned claim: each of its parts by [`part`]; `None` for a claim
    /// about a background (the flat formulas do not apply).
    #[must_use]
    pub fn of(claim: Claim) -> Option<ClaimSpec> {
        let components = claim
            .kind
            .parts()
            .into_iter()
            .map(|p| Some((p.name(), part(p)?)))
            .collect::<Option<Vec<_>>>()?;
        Some(ClaimSpec {
            key: claim.kind.key(),
            title: claim.kind.title().into(),
            heading: claim.heading().into(),
            asserted: claim.asserted,
            components,
        })
    }
}

fn d2(a: usize, b: usize) -> Deriv {
    Deriv::D2(a as u8, b as u8)
}

/// The linearized Ricci tensor's combinations, built once (every field-equation part uses
/// them).
fn ricci() -> &'static [[Combo; 4]; 4] {
    static RICCI: std::sync::OnceLock<[[Combo; 4]; 4]> = std::sync::OnceLock::new();
    RICCI.get_or_init(build_ricci)
}

fn build_ricci() -> [[Combo; 4]; 4] {
    let mut r: [[Combo; 4]; 4] = Default::default();
    for m in 0..4 {
        for n in m..4 {
            let c = &mut r[m][n];
            for s in 0..4 {
                // (1/2) d_s d_m h^s_n + (1/2) d_s d_n h^s_m
                c.add(Field::H, s, n, d2(s, m), 0.5 * ETA[s]);
                c.add(Field::H, s, m, d2(s, n), 0.5 * ETA[s]);
                // -(1/2) d_m d_n h, h = eta^{ss} h_ss
                c.add(Field::H, s, s, d2(m, n), -0.5 * ETA[s]);
                // -(1/2) box h_mn
                c.add(Field::H, m, n, d2(s, s), -0.5 * ETA[s]);
            }
            r[n][m] = r[m][n].clone();
        }
    }
    r
}

/// One part of a claim as a combination of samples and derivatives of `h` and `T`, by the
/// formulas of the module's documentation; `None` for the parts about a background.
#[must_use]
pub fn part(p: Part) -> Option<Combo> {
    let mut c = Combo::default();
    match p {
        Part::Conservation(n) => {
            for m in 0..4 {
                c.add(Field::T, m, n, Deriv::D1(m as u8), ETA[m]);
            }
        }
        Part::FieldEquation { mu, nu, sourced } => {
            let r = ricci();
            c = r[mu][nu].clone();
            if mu == nu {
                for s in 0..4 {
                    c.plus(&r[s][s], -0.5 * ETA[mu] * ETA[s]);
                }
            }
            if sourced {
                c.add(Field::T, mu, nu, Deriv::Value, -8.0 * std::f64::consts::PI);
            }
        }
        Part::Lorenz(n) => {
            for m in 0..4 {
                c.add(Field::H, m, n, Deriv::D1(m as u8), ETA[m]);
                c.add(Field::H, m, m, Deriv::D1(n as u8), -0.5 * ETA[m]);
            }
        }
        Part::H(mu, nu) => c.add(Field::H, mu, nu, Deriv::Value, 1.0),
        Part::SpatialTrace => {
            for i in 1..4 {
                c.add(Field::H, i, i, Deriv::Value, 1.0);
            }
        }
        Part::SpatialDivergence(j) => {
            for i in 1..4 {
                c.add(Field::H, i, j, Deriv::D1(i as u8), 1.0);
            }
        }
        Part::Riemann([a, b, cc, d]) => {
            c.add(Field::H, a, d, d2(b, cc), 0.5);
            c.add(Field::H, b, cc, d2(a, d), 0.5);
            c.add(Field::H, b, d, d2(a, cc), -0.5);
            c.add(Field::H, a, cc, d2(b, d), -0.5);
        }
        Part::BackgroundEquation { .. }
        | Part::CurvedFieldEquation { .. }
        | Part::Trace
        | Part::GaugeResidual(..) => return None,
    }
    Some(c)
}

/// The flat d'Alembertian of the trace-reversed perturbation, `(box hbar)_mn`: not a claim of
/// problem files, but the field equations in Lorenz gauge (`G1 = -(1/2) box hbar`), used by
/// the benchmarks.
#[must_use]
pub fn box_hbar() -> ClaimSpec {
    let mut components = Vec::new();
    for m in 0..4 {
        for n in m..4 {
            let mut c = Combo::default();
            for s in 0..4 {
                c.add(Field::H, m, n, d2(s, s), ETA[s]);
                if m == n {
                    // hbar_mm = h_mm - (1/2) eta_mm h
                    for r in 0..4 {
                        c.add(Field::H, r, r, d2(s, s), -0.5 * ETA[m] * ETA[r] * ETA[s]);
                    }
                }
            }
            components.push((format!("box hbar_{}", component_name(m, n)), c));
        }
    }
    ClaimSpec {
        key: "box_hbar".into(),
        title: "box hbar = 0".into(),
        heading: "box hbar = 0".into(),
        asserted: Some(true),
        components,
    }
}

/// The claims of a problem in grid terms, in the order of its [`Plan`].
#[must_use]
pub fn claim_specs(claims: Option<&Claims>, with_source: bool) -> Vec<ClaimSpec> {
    Plan::of(claims, with_source)
        .claims
        .into_iter()
        .filter_map(ClaimSpec::of)
        .collect()
}

/// The value of a part about a background from the pointwise quantities `q` at a point with
/// fields `f` (the grid's differenced samples or the audit's jets): the one mapping from
/// [`Part`] to `crate::pointwise::Quantities`. `None` for a flat-only part, or a gauge
/// residual without a vector.
pub fn curved_part<A: crate::pointwise::Arith>(
    q: &crate::pointwise::Quantities<A>,
    f: &crate::pointwise::Fields<A>,
    p: Part,
) -> Option<A> {
    Some(match p {
        Part::BackgroundEquation { mu, nu, .. } => q.background[mu][nu].clone(),
        Part::CurvedFieldEquation { mu, nu, .. } => q.field[mu][nu].clone(),
        Part::Lorenz(nu) => q.lorenz[nu].clone(),
        Part::Conservation(nu) => q.conservation[nu].clone(),
        Part::H(mu, nu) => f.h.at(mu, nu).clone(),
        Part::Trace => q.trace.clone(),
        Part::Riemann([a, b, c, d]) => q.riemann.as_ref()?[a][b][c][d].clone(),
        Part::GaugeResidual(mu, nu) => q.gauge.as_ref()?[mu][nu].clone(),
        Part::FieldEquation { .. } | Part::SpatialTrace | Part::SpatialDivergence(_) => {
            return None;
        }
    })
}
