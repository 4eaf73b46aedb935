//! The claims of a problem about a background, by the exact route.
//!
//! Model. The background's own equations come first and are always asserted: a background
//! that does not solve Gbar + Lambda gbar = 8 pi Tbar makes every linearized claim
//! meaningless. Then, as for flat problems, source conservation, the field equations, the
//! gauge conditions and pure gauge, each [`Part`] computed by [`crate::tensor::curved`].
//! Pure gauge is decided by the linearized Riemann tensor only when the background's Riemann
//! tensor is proved zero; otherwise by the file's \[gauge_vector\] (which can prove it, never
//! refute it), and without one it is undecided with the reason.

use super::{ClaimReport, Status, claim, limit_report};
use crate::canon::{CResult, CanonError, Form, Store};
use crate::claim::{Claim, Kind, Part, PureGaugeRoute, Setting};
use crate::problem::Problem;
use crate::tensor::curved::{Background, Perturbation};
use crate::tensor::{Frame, Sym4};

/// The exact route about a background: each [`Part`] from the background's quantities,
/// memoised.
pub struct CurvedParts {
    bg: Background,
    p: Perturbation,
    dt: Option<Sym4>,
    xi: Option<[Form; 4]>,
    equations: Option<Sym4>,
    field: Option<Sym4>,
    lorenz: Option<[Form; 4]>,
    conservation: Option<[Form; 4]>,
    riemann: Option<Vec<([usize; 4], Form)>>,
    gauge: Option<Sym4>,
}

impl CurvedParts {
    /// The parts of `h` about `bg`, with the source perturbation `dt` and gauge vector `xi`.
    #[must_use]
    pub fn new(bg: Background, h: Sym4, dt: Option<Sym4>, xi: Option<[Form; 4]>) -> CurvedParts {
        CurvedParts {
            bg,
            p: Perturbation::new(h),
            dt,
            xi,
            equations: None,
            field: None,
            lorenz: None,
            conservation: None,
            riemann: None,
            gauge: None,
        }
    }

    /// The background (for its curvature).
    pub fn background(&mut self) -> &mut Background {
        &mut self.bg
    }

    /// The canonical form of `part`.
    ///
    /// # Errors
    ///
    /// An algebra limit, or a part that needs what the problem does not have (a flat-only
    /// part, a gauge residual without a vector).
    pub fn form(&mut self, store: &mut Store, part: Part) -> CResult<Form> {
        Ok(match part {
            Part::BackgroundEquation { mu, nu, .. } => {
                if self.equations.is_none() {
                    self.equations = Some(self.bg.equations(store)?);
                }
                self.equations.expect("computed above")[mu][nu]
            }
            Part::CurvedFieldEquation { mu, nu, .. } => {
                if self.field.is_none() {
                    self.field = Some(self.p.field_residual(
                        store,
                        &mut self.bg,
                        self.dt.as_ref(),
                    )?);
                }
                self.field.expect("computed above")[mu][nu]
            }
            Part::Lorenz(nu) => {
                if self.lorenz.is_none() {
                    self.lorenz = Some(self.p.lorenz(store, &self.bg)?);
                }
                self.lorenz.expect("computed above")[nu]
            }
            Part::Conservation(nu) => {
                if self.conservation.is_none() {
                    self.conservation =
                        Some(self.p.conservation(store, &self.bg, self.dt.as_ref())?);
                }
                self.conservation.expect("computed above")[nu]
            }
            Part::H(mu, nu) => self.p.h[mu][nu],
            Part::Trace => self.p.trace(store, &self.bg)?,
            Part::Riemann(idx) => {
                if self.riemann.is_none() {
                    self.riemann = Some(self.p.riemann(store, &mut self.bg)?);
                }
                let r = self.riemann.as_ref().expect("computed above");
                r.iter()
                    .find(|(i, _)| *i == idx)
                    .map(|(_, f)| *f)
                    .ok_or_else(|| {
                        CanonError::Undefined("a Riemann component out of range".into())
                    })?
            }
            Part::GaugeResidual(mu, nu) => {
                let Some(xi) = self.xi else {
                    return Err(CanonError::Undefined("no gauge vector".into()));
                };
                if self.gauge.is_none() {
                    self.gauge = Some(self.p.gauge_residual(store, &self.bg, &xi)?);
                }
                self.gauge.expect("computed above")[mu][nu]
            }
            Part::FieldEquation { .. } | Part::SpatialTrace | Part::SpatialDivergence(_) => {
                return Err(CanonError::Undefined(
                    "a flat-space part asked of the background route".into(),
                ));
            }
        })
    }

    /// Every part of `kind`, named in `frame`, in report order.
    ///
    /// # Errors
    ///
    /// As [`CurvedParts::form`].
    pub fn named(
        &mut self,
        store: &mut Store,
        kind: Kind,
        frame: &Frame,
    ) -> CResult<Vec<(String, Form)>> {
        kind.parts()
            .into_iter()
            .map(|p| Ok((p.name_in(frame), self.form(store, p)?)))
            .collect()
    }
}

/// What every route about a background starts from: the exact parts, the plan, how pure
/// gauge is decided, and the frame that names the components.
pub(crate) struct Prepared {
    /// The parts, memoised.
    pub parts: CurvedParts,
    /// The claims.
    pub plan: crate::claim::Plan,
    /// How pure gauge is decided.
    pub pure: PureGaugeRoute,
    /// The names of the components.
    pub frame: Frame,
}

/// The background, its parts and the plan of a problem about a background; or, when the
/// background cannot be built (degenerate, a limit), the one report that says so.
pub(crate) fn prepare(problem: &mut Problem) -> Result<Prepared, (Vec<ClaimReport>, bool)> {
    let bgd = problem
        .background
        .clone()
        .expect("a problem with a background");
    let frame = Frame::covariant(problem.coordinates.clone());
    let spacetime = problem.spacetime();
    let store = &mut problem.store;
    let bg = match spacetime {
        Ok(bg) => bg,
        Err(e) => {
            // A degenerate metric or a limit: nothing can be decided.
            let why = match e {
                CanonError::DivisionByZero => {
                    "the background metric is degenerate (its determinant is 0)".to_string()
                }
                e => e.to_string(),
            };
            let kind = Kind::BackgroundEquations {
                lambda: !store.is_zero(bgd.lambda),
                sourced: bgd.source.is_some(),
            };
            let c = Claim {
                kind,
                asserted: Some(true),
            };
            let report = ClaimReport::new(
                c,
                Status::Undecided,
                format!("undecided: {why}"),
                Vec::new(),
            );
            return Err((vec![report], problem.claims.is_some()));
        }
    };
    let mut parts = CurvedParts::new(bg, problem.h, problem.source, bgd.gauge_vector);
    let lambda = !store.is_zero(bgd.lambda);
    let setting = |pure| Setting {
        claims: problem.claims.as_ref(),
        sourced: problem.source.is_some(),
        background_sourced: bgd.source.is_some(),
        lambda,
        pure,
    };
    // Whether pure gauge is asked at all does not depend on its route.
    let pure_gauge_asked = crate::claim::Plan::curved(setting(PureGaugeRoute::None))
        .claims
        .iter()
        .any(|c| c.kind == Kind::PureGauge);
    // Flat background? Then the linearized Riemann tensor decides pure gauge. (The
    // background's Riemann tensor is computed only when pure gauge is asked.)
    let flat = pure_gauge_asked
        && parts
            .background()
            .riemann_down(store)
            .map(|r| r.iter().all(|(_, f)| store.is_zero(*f)))
            .unwrap_or(false);
    let pure = if flat {
        PureGaugeRoute::Riemann
    } else if bgd.gauge_vector.is_some() {
        PureGaugeRoute::Vector
    } else {
        PureGaugeRoute::None
    };
    let plan = crate::claim::Plan::curved(setting(pure));
    Ok(Prepared {
        parts,
        plan,
        pure,
        frame,
    })
}

/// The report of pure gauge on a background not proved flat, without a gauge vector.
pub(crate) fn pure_gauge_undecided(c: Claim) -> ClaimReport {
    ClaimReport::new(
        c,
        Status::Undecided,
        "undecided: the background's Riemann tensor is not proved zero, so the linearized \
         Riemann tensor is no test of pure gauge; give the candidate vector xi_mu in a \
         [gauge_vector] table to test h = D xi + D xi"
            .into(),
        Vec::new(),
    )
}

/// Every claim of a problem about a background, decided by the exact route.
pub(super) fn exact_claims(problem: &mut Problem) -> (Vec<ClaimReport>, bool) {
    let sampling = problem.sampling.clone();
    let Prepared {
        mut parts,
        plan,
        pure,
        frame,
    } = match prepare(problem) {
        Ok(p) => p,
        Err(early) => return early,
    };
    let store = &mut problem.store;
    let out = plan
        .claims
        .iter()
        .map(|&c| {
            if c.kind == Kind::PureGauge && pure == PureGaugeRoute::None {
                return pure_gauge_undecided(c);
            }
            match parts.named(store, c.kind, &frame) {
                Ok(named) => claim(store, c, named, &sampling),
                Err(e) => limit_report(c, e),
            }
        })
        .collect();
    (out, plan.has_claims)
}
