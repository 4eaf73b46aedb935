//! `far_zone_order` about a background: the radial ray `t = u + rho`, `r = rho` (the other
//! two coordinates fixed), or in t, x, y, z without a named radius the Cartesian ray
//! `t = u + rho*sqrt(n.n)`, `(x, y, z) = rho*n` as about flat space; components judged in the
//! background's orthonormal frame ([`super::frame`]).
//!
//! The residuals are the exact route's own ([`crate::check::curved::CurvedParts`]: the
//! field residual `dG + Lambda h - 8 pi dT`, the covariant Lorenz divergence, ...), expanded
//! as they are. The background's own equations are not a claim about h: they stay exact
//! (every component proved 0, audited at seeded points as in `check::curved`), so a
//! background that only approximately solves its equations is never accepted far out.

use super::audit;
use super::frame::Frame;
use super::{Found, Ray, RayNames, series};
use crate::check::curved::{Prepared, prepare, pure_gauge_undecided};
use crate::check::{ClaimReport, Status, claim, limit_report};
use crate::claim::{Kind, PureGaugeRoute};
use crate::problem::Problem;

/// Checks every claim of a problem about a background at far-zone order `order`, then
/// audits the verdicts.
pub(super) fn check(problem: &mut Problem, order: u32) -> (Vec<ClaimReport>, bool) {
    let radius = problem
        .claims
        .as_ref()
        .and_then(|c| c.far_zone_radius.clone());
    let (mut out, has_claims) = match exact(problem, order) {
        Ok(mut checked) => {
            audit_all(problem, &mut checked);
            (checked.out, checked.has_claims)
        }
        Err(early) => early,
    };
    // Headings name the file's radius: "up to O(1/R^2)".
    if let Some(name) = radius {
        for r in out.iter_mut().filter(|r| r.far_zone.is_some()) {
            r.far_zone_radius.clone_from(&name);
        }
    }
    (out, has_claims)
}

/// The exact route's reports, before the audit, with what the audit needs.
pub(super) struct Checked {
    pub(super) out: Vec<ClaimReport>,
    pub(super) found: Vec<Vec<Found>>,
    pub(super) names: RayNames,
    pub(super) bases: Vec<Vec<(String, f64)>>,
    pub(super) frame: Option<Frame>,
    order: u32,
    has_claims: bool,
}

/// The exact route's verdicts; `Err` with the final reports when nothing can be expanded
/// (a background that cannot be built, no radius).
pub(super) fn exact(
    problem: &mut Problem,
    order: u32,
) -> Result<Checked, (Vec<ClaimReport>, bool)> {
    let radius_name = problem
        .claims
        .as_ref()
        .and_then(|c| c.far_zone_radius.clone())
        .unwrap_or_else(|| "r".into());
    let radius = problem
        .coordinates
        .iter()
        .position(|c| *c == radius_name)
        .filter(|&i| i > 0);
    // In t, x, y, z without a named radius the ray is the Cartesian one, as about flat space.
    let cartesian = radius.is_none()
        && problem
            .claims
            .as_ref()
            .is_none_or(|c| c.far_zone_radius.is_none())
        && problem.coordinates == crate::tensor::COORDS.map(String::from);
    let sampling = problem.sampling.clone();
    let parameters = problem.parameters.clone();
    let Prepared {
        mut parts,
        plan,
        pure,
        frame: names_frame,
    } = prepare(problem)?;
    let background = problem
        .background
        .as_ref()
        .expect("a problem with a background")
        .g;
    let ray = match radius {
        Some(radius) => Some(RayNames::radial(problem, radius)),
        None if cartesian => Some(RayNames::of(problem)),
        None => None,
    };
    let Some(names) = ray else {
        // The reader refuses this; a problem built otherwise is undecided.
        let why = format!("no coordinate `{radius_name}` other than time to grow along the ray");
        let out = plan
            .claims
            .iter()
            .map(|&c| {
                far(
                    ClaimReport::new(c, Status::Undecided, why.clone(), vec![]),
                    order,
                )
            })
            .collect();
        return Err((out, plan.has_claims));
    };
    let bases = audit::base_points(problem, &names);
    let store = &mut problem.store;
    let u = store.symbol(&names.u);
    let moving = match names.radial {
        Some((t, r)) => {
            let time = store.symbol_kernel(&names.coords[t]);
            let rk = store.symbol_kernel(&names.coords[r]);
            series::radial_ray(store, time, rk, u)
        }
        None => {
            let coords = std::array::from_fn(|i| store.symbol_kernel(&names.coords[i]));
            let n = std::array::from_fn(|i| store.symbol(&names.n[i]));
            match series::cartesian_ray(store, coords, u, n) {
                Ok(m) => m,
                Err(e) => {
                    let out = plan
                        .claims
                        .iter()
                        .map(|&c| far(limit_report(c, e.clone()), order));
                    return Err((out.collect(), plan.has_claims));
                }
            }
        }
    };
    let frame = Frame::of(store, &sampling, &moving, &background, &names);
    let ray = Ray {
        moving,
        order,
        names: &names,
        sampling: &sampling,
        parameters: &parameters,
        bases: &bases,
        frame: frame.as_ref().ok(),
    };
    let mut found: Vec<Vec<Found>> = Vec::new();
    let mut out = Vec::new();
    for &c in &plan.claims {
        found.push(Vec::new());
        if matches!(c.kind, Kind::BackgroundEquations { .. }) {
            // Exact, as always: see the module docs.
            out.push(match parts.named(store, c.kind, &names_frame) {
                Ok(named) => claim(store, c, named, &sampling),
                Err(e) => limit_report(c, e),
            });
            continue;
        }
        if c.kind == Kind::PureGauge && pure == PureGaugeRoute::None {
            out.push(far(pure_gauge_undecided(c), order));
            continue;
        }
        let fr = match &frame {
            Ok(fr) => fr,
            Err(why) => {
                let why = format!(
                    "undecided: the far-zone orders are judged in the background's orthonormal \
                     frame {}, which needs a background that approaches flat space: {why}",
                    names.ray_text()
                );
                out.push(far(
                    ClaimReport::new(c, Status::Undecided, why, vec![]),
                    order,
                ));
                continue;
            }
        };
        match parts.named(store, c.kind, &names_frame) {
            Ok(named) => {
                let weighted = named
                    .into_iter()
                    .zip(c.kind.parts())
                    .map(|((n, f), p)| (n, f, fr.weight(p)))
                    .collect();
                let (report, fd) = ray.claim(store, c, weighted);
                *found.last_mut().expect("pushed above") = fd;
                out.push(report);
            }
            Err(e) => out.push(far(limit_report(c, e), order)),
        }
    }
    Ok(Checked {
        out,
        found,
        bases,
        frame: frame.ok(),
        names,
        order,
        has_claims: plan.has_claims,
    })
}

/// The audits: the exact claims (the background's equations) by the exact audit at seeded
/// points, the far-zone ones along the ray ([`audit::audit`]).
pub(super) fn audit_all(problem: &Problem, c: &mut Checked) {
    let out = &mut c.out;
    let exact: Vec<usize> = (0..out.len())
        .filter(|&i| out[i].far_zone.is_none())
        .collect();
    let mut audited: Vec<ClaimReport> = exact.iter().map(|&i| out[i].clone()).collect();
    crate::check::audit::audit_claims(problem, &mut audited, problem.sampling.seed);
    for (i, r) in exact.into_iter().zip(audited) {
        out[i] = r;
    }
    audit::audit(
        problem,
        out,
        &c.found,
        c.order,
        &c.names,
        &c.bases,
        c.frame.as_ref(),
    );
}

fn far(mut r: ClaimReport, order: u32) -> ClaimReport {
    r.far_zone = Some(order);
    r
}
