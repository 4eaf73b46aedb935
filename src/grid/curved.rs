//! Grids about a background, in any coordinates.
//!
//! Model. The background metric `gbar`, the perturbation `h` and, when the file has them,
//! the background source `Tbar`, the source perturbation `dT`, the gauge vector `xi_mu` and
//! the cosmological constant are sampled on the lattices from the user's own texts (the
//! same [`crate::tape::Lowering`] as the flat grid, with the problem's coordinates as tape
//! inputs), slab by slab as in [`super::sweep`] (the same streaming order and tasks). At
//! every measured point the values and the central-difference first and second derivatives
//! of the samples (the same Fornberg
//! stencils, mixed derivatives as products of first-derivative stencils) go into
//! `crate::pointwise::evaluate`, the full curvature chain over dual numbers, which gives
//! every claim's components: the background's equations, `dG + Lambda h - 8 pi dT`, the
//! covariant gauge conditions, the change of source conservation, the gauge residual for the
//! file's vector. No symbolic derivative of any field is taken (only the `d_` operators the
//! user wrote), so this route shares nothing with the exact one but the parser.
//!
//! Round-off. The chain is run in [`Tracked`] arithmetic: each value is the plain `f64`
//! result (exactly what `pointwise::evaluate::<f64>` computes) together with a first-order
//! bound on its rounding error, started from the channels' sample errors amplified by the
//! stencils (`sum |w1| / spacing`, `sum |w2| / spacing^2`, `(sum |w1|)^2 / spacing^2`) and
//! carried through every operation. A claim's floor at a resolution is the largest bound of
//! its components over the measured points, so the verdict rule of [`super::verdict`] applies
//! unchanged.
//!
//! Pure gauge. Without a \[gauge_vector\] the exact route tests pure gauge by the linearized
//! Riemann tensor only on a background it has *proved* flat; the grids cannot prove that, so
//! they report the claim as not checked, with the reason. With a vector, the gauge residual
//! `h - D xi - D xi` is checked, and components that do not vanish decide nothing (another
//! vector may give `h`), as in the exact route.
//!
//! Key design decision: a point at a time. The flat grid's components are linear in the
//! samples and are evaluated as fused stencil passes along lines; here they are not linear,
//! so each measured point gathers its own derivatives (`15` per second-order channel) and
//! runs the chain once. Memory is that of the flat sweep (a ring of `(order + 2)` slabs of
//! the `t`-dependent channels and one slab of the others), whose `sweep::Window` it
//! reads; the time per measured point is that of one curvature chain over dual numbers.

use super::claims::{Deriv, Field};
use super::stencil::Stencil;
use super::sweep::{PlaneResult, Term, Window, terms};
use super::{Channel, ClaimPlan, ComponentPlan, GridError, GridPlan};
use crate::claim::{Kind, Part, Plan, PureGaugeRoute, Setting};
use crate::pointwise::{self, Arith, Covector1, PAIRS, Sym1, Sym2, pair};
use crate::problem::Problem;
use crate::tape::{Binding, Lowering, UserExprs};
use crate::tensor::Frame;
use rustc_hash::FxHashMap;

/// Work per measured point, in the nanosecond-sized units of [`super::Estimate`]: one
/// curvature chain over dual numbers with error bounds and the stencil sums feeding it
/// (about 0.1 ms per point in the test profile on the shared 2-core machine, Schwarzschild
/// slow rotation; an optimised build is faster, so this errs on the long side).
pub const POINT_COST: f64 = 100_000.0;

/// Why pure gauge is not checked on grids without a gauge vector.
pub const PURE_GAUGE_NOT_CHECKED: &str = "about a background the linearized Riemann tensor \
     decides pure gauge only on a background proved flat, which samples cannot prove; give \
     the candidate vector xi_mu in a [gauge_vector] table to check h = D xi + D xi on grids, \
     or use lingrav check";

/// Where each field of a problem about a background is sampled, and what each claim
/// component is.
#[derive(Clone, Debug, PartialEq)]
pub struct CurvedPlan {
    /// Channel of each component of gbar, in [`PAIRS`] order (`None`: identically 0).
    gbar: [Option<usize>; 10],
    /// Likewise for h.
    h: [Option<usize>; 10],
    /// Likewise for Tbar, when the background has a source.
    tbar: Option<[Option<usize>; 10]>,
    /// Likewise for dT, when the perturbation has a source.
    dt: Option<[Option<usize>; 10]>,
    /// Channel of each component of xi_mu, when the file has a gauge vector.
    xi: Option<[Option<usize>; 4]>,
    /// Channel of Lambda (`None`: 0).
    lambda: Option<usize>,
    /// Per claim, per component: the part of [`crate::pointwise::Quantities`] it is.
    parts: Vec<Vec<Part>>,
}

/// The grid plan of a problem about a background: the claims of
/// [`crate::claim::Plan::curved`] (keys, titles and component names as the exact check's),
/// the fields compiled from the texts.
///
/// # Errors
///
/// A text that cannot be compiled (a symbol without a value, a function without a sample).
pub(super) fn plan(p: &mut Problem) -> Result<GridPlan, GridError> {
    let Some(bg) = p.background.clone() else {
        return Err(GridError::Settings(
            "the problem is not about a background".into(),
        ));
    };
    let coords = p.coordinates.clone();
    let frame = Frame::covariant(coords.clone());
    // Whether Lambda is zero names the components only (as the exact check names them).
    let lambda_named = !p.store.is_zero(bg.lambda);
    let pure = if bg.gauge_vector_text.is_some() {
        PureGaugeRoute::Vector
    } else {
        PureGaugeRoute::None
    };
    let claims = Plan::curved(Setting {
        claims: p.claims.as_ref(),
        sourced: p.source.is_some(),
        background_sourced: bg.source.is_some(),
        lambda: lambda_named,
        pure,
    });

    let mut bindings = FxHashMap::default();
    for (i, a) in coords.iter().enumerate() {
        bindings.insert(a.clone(), Binding::Input(i));
    }
    for (name, v) in &p.parameters {
        bindings.insert(name.clone(), Binding::Value(*v));
    }
    let user = UserExprs {
        defines: p.defines.clone(),
        functions: p.functions.clone(),
    };
    let compile_error = |component: String| move |error| GridError::Compile { component, error };
    let mut lowering =
        Lowering::new(4, bindings, &user).map_err(compile_error("[define]".into()))?;
    let mut comps = Vec::new();
    let tensors = [
        (Field::Gbar, "gbar", Some(&bg.g_text)),
        (Field::H, "h", Some(&p.h_text)),
        (Field::Tbar, "Tbar", bg.source_text.as_ref()),
        (Field::T, "dT", p.source_text.as_ref()),
    ];
    for (field, letter, m) in tensors {
        let Some(m) = m else { continue };
        for &(mu, nu) in &PAIRS {
            let Some(text) = m[mu][nu].as_ref() else {
                continue;
            };
            let name = format!("{letter}_{}", frame.index(&[mu, nu]));
            let node = lowering
                .expression(text)
                .map_err(compile_error(name.clone()))?;
            comps.push((field, name, mu, nu, node));
        }
    }
    if let Some(xi) = &bg.gauge_vector_text {
        for (mu, text) in xi.iter().enumerate() {
            let Some(text) = text else { continue };
            let name = format!("xi_{}", frame.coord(mu));
            let node = lowering
                .expression(text)
                .map_err(compile_error(name.clone()))?;
            comps.push((Field::Xi, name, mu, mu, node));
        }
    }
    if let Some(text) = &bg.lambda_text {
        let name = "Lambda".to_string();
        let node = lowering
            .expression(text)
            .map_err(compile_error(name.clone()))?;
        comps.push((Field::Lambda, name, 0, 0, node));
    }
    let mut grid = GridPlan::assemble(
        &lowering.target.builder,
        comps,
        Vec::new(),
        claims.has_claims,
    )?;

    let find = |channels: &[Channel], field: Field, mu: usize, nu: usize| {
        channels
            .iter()
            .position(|c| c.field == field && c.mu == mu && c.nu == nu)
    };
    let pairs = |channels: &[Channel], field: Field| -> [Option<usize>; 10] {
        std::array::from_fn(|k| find(channels, field, PAIRS[k].0, PAIRS[k].1))
    };
    let ch = &grid.channels;
    let mut curved = CurvedPlan {
        gbar: pairs(ch, Field::Gbar),
        h: pairs(ch, Field::H),
        tbar: bg.source_text.is_some().then(|| pairs(ch, Field::Tbar)),
        dt: p.source_text.is_some().then(|| pairs(ch, Field::T)),
        xi: bg
            .gauge_vector_text
            .is_some()
            .then(|| std::array::from_fn(|mu| find(ch, Field::Xi, mu, mu))),
        lambda: find(ch, Field::Lambda, 0, 0),
        parts: Vec::new(),
    };
    for c in &claims.claims {
        let parts = c.kind.parts();
        grid.claims.push(ClaimPlan {
            key: c.kind.key(),
            title: c.kind.title().into(),
            heading: c.heading().into(),
            asserted: c.asserted,
            components: parts
                .iter()
                .map(|p| ComponentPlan {
                    name: p.name_in(&frame),
                    terms: Vec::new(),
                })
                .collect(),
            not_checked: (c.kind == Kind::PureGauge).then(|| PURE_GAUGE_NOT_CHECKED.to_string()),
            refutable: c.kind.refuted_by_witness(),
        });
        curved.parts.push(parts);
    }
    grid.coordinates = coords;
    grid.curved = Some(curved);
    Ok(grid)
}

/// A floating-point value with a first-order bound on its accumulated rounding error: `v` is
/// the plain `f64` result (what `Arith` for `f64` computes), `e` bounds `|v - exact|` given
/// the bounds of the inputs, adding half an ulp of every result (the unit roundoff `u`).
/// Products of two errors are kept, so the bound holds beyond first order too, up to the
/// rounding of the bound itself. Nothing is certified: this is the grid's round-off floor.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Tracked {
    /// The value.
    pub v: f64,
    /// The error bound (may be infinite when a divisor's bound reaches its value).
    pub e: f64,
}

const UNIT_ROUNDOFF: f64 = f64::EPSILON / 2.0;

impl Tracked {
    /// `v` with error bound `e`; `None` if `v` is not finite.
    #[must_use]
    pub fn new(v: f64, e: f64) -> Option<Tracked> {
        v.is_finite().then_some(Tracked { v, e })
    }

    fn rounded(v: f64, e: f64) -> Option<Tracked> {
        Tracked::new(v, e + UNIT_ROUNDOFF * v.abs())
    }
}

impl Arith for Tracked {
    type Ctx = ();
    fn constant(x: f64) -> Option<Self> {
        // The constants of the chain (0, 1/2, 1, 8) are exact.
        Tracked::new(x, 0.0)
    }
    fn pi(_: &()) -> Option<Self> {
        Tracked::new(std::f64::consts::PI, UNIT_ROUNDOFF * std::f64::consts::PI)
    }
    fn add(&self, rhs: &Self) -> Option<Self> {
        Tracked::rounded(self.v + rhs.v, self.e + rhs.e)
    }
    fn sub(&self, rhs: &Self) -> Option<Self> {
        Tracked::rounded(self.v - rhs.v, self.e + rhs.e)
    }
    fn mul(&self, rhs: &Self) -> Option<Self> {
        let e = self.v.abs() * rhs.e + rhs.v.abs() * self.e + self.e * rhs.e;
        Tracked::rounded(self.v * rhs.v, e)
    }
    fn div(&self, rhs: &Self) -> Option<Self> {
        let q = self.v / rhs.v;
        let room = rhs.v.abs() - rhs.e;
        let e = if room > 0.0 {
            (self.e + q.abs() * rhs.e) / room
        } else {
            f64::INFINITY
        };
        Tracked::rounded(q, e)
    }
    fn neg(&self) -> Self {
        Tracked {
            v: -self.v,
            e: self.e,
        }
    }
    fn magnitude(&self) -> f64 {
        self.v.abs()
    }
}

/// The stencils of every derivative the chain needs at one resolution, and the sample
/// errors they amplify.
pub(crate) struct PointStencils {
    /// `d1[a]`: the first derivative along axis `a`.
    d1: [Vec<Term>; 4],
    /// `d2[pair(a, b)]`: the second derivative along `a` and `b`.
    d2: [Vec<Term>; 10],
    /// Error gain of a first derivative.
    gain1: f64,
    /// Error gain of each second derivative.
    gain2: [f64; 10],
    /// Per channel: the sample error and the coordinates it depends on (bit per axis).
    channels: Vec<(f64, u8)>,
    plan: CurvedPlan,
}

impl PointStencils {
    /// The stencils at spacing `h`, with per-channel sample errors `errors` (missing ones 0).
    pub(crate) fn new(
        c: &CurvedPlan,
        plan: &GridPlan,
        st: &Stencil,
        h: f64,
        errors: &[f64],
    ) -> PointStencils {
        let (g1, g2) = (st.d1_gain(), st.d2_gain());
        PointStencils {
            d1: std::array::from_fn(|a| terms(Deriv::D1(a as u8), st, h)),
            d2: std::array::from_fn(|k| {
                let (a, b) = PAIRS[k];
                terms(Deriv::D2(a as u8, b as u8), st, h)
            }),
            gain1: g1 / h,
            gain2: std::array::from_fn(|k| {
                let (a, b) = PAIRS[k];
                if a == b {
                    g2 / (h * h)
                } else {
                    g1 * g1 / (h * h)
                }
            }),
            channels: plan
                .channels
                .iter()
                .enumerate()
                .map(|(i, ch)| (errors.get(i).copied().unwrap_or(0.0), ch.axes))
                .collect(),
            plan: c.clone(),
        }
    }
}

/// One point's samples: the window and the point's lattice indices (slab, plane, row, column).
struct At<'w, 'a> {
    win: &'w Window<'a>,
    channels: &'w [Channel],
    ix: usize,
    iy: usize,
    iz: usize,
}

impl At<'_, '_> {
    fn sample(&self, c: usize, d: [i32; 4]) -> f64 {
        let ch = &self.channels[c];
        let line = self.win.line(
            ch,
            d[0],
            (self.ix as i64 + i64::from(d[1])) as usize,
            (self.iy as i64 + i64::from(d[2])) as usize,
        );
        line[(self.iz as i64 + i64::from(d[3])) as usize]
    }

    fn stencil(&self, c: usize, terms: &[Term]) -> f64 {
        terms.iter().map(|t| t.w * self.sample(c, t.d)).sum()
    }

    /// Channel `c` (or 0) differentiated by the axes `d` (none, one, or two ascending).
    fn field(&self, k: &PointStencils, c: Option<usize>, d: &[usize]) -> Option<Tracked> {
        let Some(c) = c else {
            return Tracked::new(0.0, 0.0);
        };
        let (err, axes) = k.channels[c];
        // Derivatives along a coordinate the channel does not depend on are exactly 0 (and
        // cost nothing): Minkowski's constants have no round-off in their derivatives.
        if d.iter().any(|&a| axes >> a & 1 == 0) {
            return Tracked::new(0.0, 0.0);
        }
        match *d {
            [] => Tracked::new(self.sample(c, [0; 4]), err),
            [a] => Tracked::new(self.stencil(c, &k.d1[a]), err * k.gain1),
            [a, b] => {
                let p = pair(a, b);
                Tracked::new(self.stencil(c, &k.d2[p]), err * k.gain2[p])
            }
            _ => None,
        }
    }

    fn fields(&self, k: &PointStencils) -> Option<pointwise::Fields<Tracked>> {
        let cp = &k.plan;
        let sym2 =
            |m: &[Option<usize>; 10]| Sym2::from_fn(|mu, nu, d| self.field(k, m[pair(mu, nu)], d));
        let sym1 =
            |m: &[Option<usize>; 10]| Sym1::from_fn(|mu, nu, d| self.field(k, m[pair(mu, nu)], d));
        Some(pointwise::Fields {
            gbar: sym2(&cp.gbar)?,
            h: sym2(&cp.h)?,
            lambda: self.field(k, cp.lambda, &[])?,
            tbar: match &cp.tbar {
                Some(m) => Some(sym1(m)?),
                None => None,
            },
            dt: match &cp.dt {
                Some(m) => Some(sym1(m)?),
                None => None,
            },
            xi: match &cp.xi {
                Some(x) => Some(Covector1::from_fn(|mu, d| self.field(k, x[mu], d))?),
                None => None,
            },
        })
    }
}

/// The residuals and round-off bounds of plane `ix` of the slab centred at `it`: the
/// curvature chain at every measured point. A point where the chain cannot be evaluated (a
/// masked sample in a stencil, a degenerate metric, an overflow) is skipped and counted.
pub(super) fn residual_plane(
    plan: &GridPlan,
    k: &PointStencils,
    win: &Window<'_>,
    ix: usize,
    ranges: &[std::ops::Range<usize>; 4],
    it: usize,
) -> PlaneResult {
    let mut best: Vec<Vec<(f64, [usize; 4])>> = plan
        .claims
        .iter()
        .map(|c| vec![(0.0, [0; 4]); c.components.len()])
        .collect();
    let mut floors: Vec<Vec<f64>> = plan
        .claims
        .iter()
        .map(|c| vec![0.0; c.components.len()])
        .collect();
    let mut skipped = vec![0usize; plan.claims.len()];
    let riemann = k
        .plan
        .parts
        .iter()
        .flatten()
        .any(|p| matches!(p, crate::claim::Part::Riemann(_)));
    let needs = pointwise::Needs { riemann };
    for iy in ranges[2].clone() {
        for iz in ranges[3].clone() {
            let at = At {
                win,
                channels: &plan.channels,
                ix,
                iy,
                iz,
            };
            let evaluated = at
                .fields(k)
                .and_then(|f| Some((pointwise::evaluate_for(&f, &(), needs)?, f)));
            for (ci, claim) in plan.claims.iter().enumerate() {
                if claim.not_checked.is_some() {
                    continue;
                }
                let values: Option<Vec<Tracked>> = evaluated.as_ref().and_then(|(q, f)| {
                    k.plan.parts[ci]
                        .iter()
                        .map(|&p| super::claims::curved_part(q, f, p))
                        .collect()
                });
                let Some(values) = values else {
                    skipped[ci] += 1;
                    continue;
                };
                for (j, v) in values.iter().enumerate() {
                    let a = v.v.abs();
                    let e = if v.e.is_nan() { f64::INFINITY } else { v.e };
                    if a > best[ci][j].0 {
                        best[ci][j] = (a, [it, ix, iy, iz]);
                    }
                    // An infinite bound (a divisor not separated from 0) is kept: nothing
                    // below it can be resolved.
                    if e > floors[ci][j] {
                        floors[ci][j] = e;
                    }
                }
            }
        }
    }
    PlaneResult {
        best,
        skipped,
        floors: Some(floors),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn tracked_bounds_cover_the_rounding_of_a_cancelling_sum() {
        // (1 + 1e-8) - 1 in f64 differs from 1e-8 by about 1e-16 * 1 / 1e-8 relative: the bound
        // (from the inputs' half ulps) covers the difference.
        let one = Tracked::new(1.0, 0.0).unwrap();
        let small = Tracked::new(1e-8, 0.0).unwrap();
        let sum = one.add(&small).unwrap();
        let diff = sum.sub(&one).unwrap();
        assert!((diff.v - 1e-8).abs() <= diff.e, "{diff:?}");
        assert!(diff.e < 1e-15, "{diff:?}");
        // A division by a value whose bound reaches it has no finite bound.
        let fuzzy = Tracked::new(1e-20, 1e-19).unwrap();
        assert_eq!(one.div(&fuzzy).unwrap().e, f64::INFINITY);
        assert_eq!(one.div(&Tracked::new(0.0, 0.0).unwrap()), None);
    }
}
