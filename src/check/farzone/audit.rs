//! The second opinion on far-zone verdicts: the components evaluated from the file's texts
//! (`crate::audit`'s jets, never a canonical form) at points far out along the ray, in
//! multiprecision balls, and their falloff compared with the verdict. About a background the
//! components come from the `pointwise` curvature chain of gbar + eps h over dual numbers
//! (`Audit::components_in`, the curved audit's route, sharing only the parser with the exact
//! one) at the ray's points (`t = u + rho`, `r = rho`, or the Cartesian ray in t, x, y, z),
//! and each is multiplied by `rho^-w`, the frame weight the exact route used
//! (`Found::weight`), so both judge the same quantity; "component" below means the scaled
//! one.
//!
//! - *O(1/r^n) proved*: at each seeded ray (retarded time, direction, parameters) where the
//!   exact route's conditions are certified, `g(rho) = rho^n |component|` at rho = 1e6, 1e8,
//!   1e10. A component that is O(rho^-n) has `g` bounded (tending to `|c_n|`), which cannot
//!   grow by a factor 10 twice running over these decades; a component that falls off only as
//!   rho^-k, k < n, makes `g` grow by about 100 per step. Growth by more than 10 at both steps
//!   contradicts the proof: an INTERNAL DEFECT.
//! - *fails at order k* (coefficient `c_k` certified nonzero at the witness): at the witness's
//!   ray, `d(rho) = rho^k component - c_k` must tend to 0 like 1/rho. Confirmed when
//!   `|d(1e10)| <= |c_k| / 4`; a defect when `|d| > |c_k| / 2` at both 1e8 and 1e10 (the
//!   component does not approach `c_k rho^-k`); otherwise unconfirmed, and the component is
//!   undecided.
//!
//! The audit only takes a proof or a witness away, never promotes.

use super::{Found, RayNames};
use crate::audit::Audit;
use crate::check::audit::{auditable, key, not_run};
use crate::check::{Audited, ClaimReport, Status};
use crate::interval::{Ball, Interval};
use crate::problem::Problem;
use crate::zero::{SplitMix64, Verdict};
use rustc_hash::FxHashMap;

/// Where along the ray the texts are evaluated.
pub(super) const RADII: [f64; 3] = [1e6, 1e8, 1e10];

/// The working precision of the balls (bits): the residual at rho = 1e10 is a cancellation
/// of terms many orders of magnitude larger.
const PRECISION: u32 = 512;

/// How many seeded rays every proof is checked on.
const BASES: usize = 3;

/// Seeded base points (u, n, parameters), shared by the exact route (which says where its
/// conditions are certified) and the audit.
pub(super) fn base_points(problem: &Problem, names: &RayNames) -> Vec<Vec<(String, f64)>> {
    let mut rng = SplitMix64::new(problem.sampling.seed ^ 0xfa2_2011e);
    let unit = |rng: &mut SplitMix64| {
        let mag = 0.25 + 1.75 * rng.next_f64();
        let v = if rng.next_u64() & 1 == 1 { -mag } else { mag };
        format!("{v:.2e}").parse().unwrap_or(v)
    };
    (0..BASES)
        .map(|i| {
            let mut p = vec![(names.u.clone(), unit(&mut rng))];
            for (i, n) in names.n.iter().enumerate() {
                p.push((n.clone(), names.direction(i, &mut rng)));
            }
            for (name, t) in &problem.parameters {
                let v = if i == 0 || *t == 0.0 {
                    *t
                } else {
                    t * (0.5 + 1.5 * rng.next_f64())
                };
                p.push((name.clone(), v));
            }
            p
        })
        .collect()
}

/// The point of the problem's coordinates and parameters at `rho` on the ray of `base`.
fn on_ray(names: &RayNames, base: &[(String, f64)], rho: f64) -> Option<Vec<(String, f64)>> {
    let get = |n: &str| base.iter().find(|(m, _)| m == n).map(|p| p.1);
    let u = get(&names.u)?;
    let coords = &names.coords;
    let mut out = match names.radial {
        Some((t, r)) => vec![(coords[t].clone(), u + rho), (coords[r].clone(), rho)],
        None => {
            let n: Vec<f64> = names.n.iter().map(|m| get(m)).collect::<Option<_>>()?;
            let s = (n[0] * n[0] + n[1] * n[1] + n[2] * n[2]).sqrt();
            vec![
                (coords[0].clone(), u + rho * s),
                (coords[1].clone(), rho * n[0]),
                (coords[2].clone(), rho * n[1]),
                (coords[3].clone(), rho * n[2]),
            ]
        }
    };
    // The angles of the radial ray are coordinates, the Cartesian direction is not.
    for (name, v) in base {
        let direction = names.n.contains(name) && names.radial.is_none();
        if *name != names.u && !direction {
            out.push((name.clone(), *v));
        }
    }
    Some(out)
}

/// The components at the three radii of one ray, by key.
type RayValues = Vec<FxHashMap<String, Interval>>;

struct Evaluator<'a> {
    audit: &'a Audit,
    names: &'a RayNames,
    cache: FxHashMap<Vec<(String, u64)>, RayValues>,
}

impl Evaluator<'_> {
    fn along(&mut self, base: &[(String, f64)]) -> &RayValues {
        let mut tag: Vec<(String, u64)> =
            base.iter().map(|(n, v)| (n.clone(), v.to_bits())).collect();
        tag.sort();
        let (audit, names) = (self.audit, self.names);
        self.cache.entry(tag).or_insert_with(|| {
            RADII
                .iter()
                .map(|&rho| {
                    let Some(point) = on_ray(names, base, rho) else {
                        return FxHashMap::default();
                    };
                    audit
                        .components_in::<String, Ball>(&point, &PRECISION)
                        .map(|vs| {
                            vs.into_iter()
                                .filter_map(|v| Some((key(&v.claim, &v.component), v.value?)))
                                .collect()
                        })
                        .unwrap_or_default()
                })
                .collect()
        })
    }
}

/// `rho^k |v|` or `rho^k v - c`.
fn scaled(v: Interval, rho: f64, k: i64) -> Option<Interval> {
    v.mul(Interval::point(rho)?.powi(k)?)
}

/// Audits every far-zone verdict of `claims` in place (see the module docs) and updates the
/// claims' status and method.
pub(super) fn audit(
    problem: &Problem,
    claims: &mut [ClaimReport],
    found: &[Vec<Found>],
    order: u32,
    names: &RayNames,
    bases: &[Vec<(String, f64)>],
    frame: Option<&super::frame::Frame>,
) {
    if let Err(why) = auditable(problem) {
        return not_run(claims, &why);
    }
    let audit = match Audit::new(problem) {
        Ok(a) => a,
        Err(e) => return not_run(claims, &e.to_string()),
    };
    let mut ev = Evaluator {
        audit: &audit,
        names,
        cache: FxHashMap::default(),
    };
    let n = i64::from(order);
    for (c, fd) in claims.iter_mut().zip(found) {
        // A claim checked exactly (a background's own equations) is audited as such.
        if c.components.is_empty() || c.far_zone.is_none() {
            continue;
        }
        for (k, f) in c.components.iter_mut().zip(fd) {
            let id = key(&c.key, &k.name);
            k.audit = match k.verdict.clone() {
                Verdict::Zero => {
                    let mut evaluated = 0;
                    let mut contradicted = None;
                    for (b, _) in bases.iter().zip(&f.valid_at).filter(|(_, ok)| **ok) {
                        let vals = ev.along(b);
                        let g: Option<Vec<Interval>> = vals
                            .iter()
                            .zip(RADII)
                            .map(|(m, rho)| scaled(m.get(&id)?.abs(), rho, n - f.weight))
                            .collect();
                        let Some(g) = g else { continue };
                        evaluated += 1;
                        if g[1].lo() > 10.0 * g[0].hi() && g[2].lo() > 10.0 * g[1].hi() {
                            contradicted = Some((b.clone(), g));
                            break;
                        }
                    }
                    match contradicted {
                        Some((b, g)) => {
                            k.verdict = Verdict::Undecided(format!(
                                "O(1/r^{order}) by the exact route, contradicted by the \
                                 independent evaluation: rho^{order} |component| grows from \
                                 {:.3e} to {:.3e} to {:.3e} at rho = 1e6, 1e8, 1e10 on the \
                                 ray {}",
                                g[0].mid(),
                                g[1].mid(),
                                g[2].mid(),
                                point_text(&b)
                            ));
                            Audited::ProofContradicted
                        }
                        None => Audited::ProofConsistent { points: evaluated },
                    }
                }
                Verdict::Nonzero(w) => match f.failing_order.filter(|_| w.value.im.contains_zero())
                {
                    None => {
                        k.verdict = Verdict::Undecided(
                            "the exact route's coefficient is not real, so the independent \
                             evaluation cannot confirm it"
                                .into(),
                        );
                        Audited::WitnessUnconfirmed
                    }
                    Some(kk) => {
                        let ck = w.value.re;
                        let vals = ev.along(&w.point);
                        let d: Option<Vec<Interval>> = vals
                            .iter()
                            .zip(RADII)
                            .map(|(m, rho)| {
                                scaled(*m.get(&id)?, rho, kk - f.weight)?
                                    .sub(ck)
                                    .map(Interval::abs)
                            })
                            .collect();
                        let small = ck.abs().lo();
                        let large = ck.abs().hi();
                        match d {
                            Some(d) if d[2].hi() <= 0.25 * small => Audited::WitnessConfirmed,
                            Some(d) if d[1].lo() > 0.5 * large && d[2].lo() > 0.5 * large => {
                                let msg = format!(
                                    "the exact route's coefficient of 1/rho^{kk} is in {ck}, but \
                                 rho^{kk} times the component differs from it by {:.3e} and \
                                 {:.3e} at rho = 1e8, 1e10",
                                    d[1].mid(),
                                    d[2].mid()
                                );
                                k.verdict = Verdict::Undecided(format!("INTERNAL DEFECT: {msg}"));
                                Audited::ValuesDisagree(msg)
                            }
                            other => {
                                let why = match other {
                                    Some(d) => format!(
                                        "rho^{kk} times the component is {:.3e} from the coefficient \
                                     at rho = 1e10",
                                        d[2].mid()
                                    ),
                                    None => "it cannot evaluate the component on the ray".into(),
                                };
                                k.verdict = Verdict::Undecided(format!(
                                    "certified not O(1/r^{order}) by the exact route, but the \
                                 independent evaluation did not confirm it: {why}"
                                ));
                                Audited::WitnessUnconfirmed
                            }
                        }
                    }
                },
                Verdict::Undecided(_) => Audited::Skipped,
            };
        }
        let refs: Vec<&Verdict> = c.components.iter().map(|k| &k.verdict).collect();
        c.status = super::status_of(c.claim, &refs);
        // A disagreement of the two routes is never a pass.
        if c.status == Status::Holds && c.components.iter().any(|k| k.audit.is_defect()) {
            c.status = Status::Undecided;
        }
        c.method = format!(
            "{}; {}",
            super::method_text(&c.components, fd, order, names, frame),
            audit_text(c)
        );
    }
}

fn point_text(p: &[(String, f64)]) -> String {
    p.iter()
        .map(|(n, v)| format!("{n} = {v}"))
        .collect::<Vec<_>>()
        .join(", ")
}

fn audit_text(c: &ClaimReport) -> String {
    let ks = &c.components;
    if ks.iter().any(|k| k.audit.is_defect()) {
        return crate::check::audit_text(ks);
    }
    let count = |f: fn(&Audited) -> bool| ks.iter().filter(|k| f(&k.audit)).count();
    let proofs = count(|a| matches!(a, Audited::ProofConsistent { .. }));
    let unevaluated = count(|a| matches!(a, Audited::ProofConsistent { points: 0 }));
    let confirmed = count(|a| matches!(a, Audited::WitnessConfirmed));
    let unconfirmed = count(|a| matches!(a, Audited::WitnessUnconfirmed));
    let mut parts = Vec::new();
    if proofs > 0 {
        let mut p = format!("{proofs} falloff proof(s) consistent on up to {BASES} seeded rays");
        if unevaluated > 0 {
            p.push_str(&format!(" ({unevaluated} could not be evaluated on any)"));
        }
        parts.push(p);
    }
    if confirmed > 0 {
        parts.push(format!(
            "{confirmed} failing order(s) confirmed (rho^k times the component tends to the \
             coefficient)"
        ));
    }
    if unconfirmed > 0 {
        parts.push(format!(
            "{unconfirmed} witness(es) not confirmed (now undecided)"
        ));
    }
    if parts.is_empty() {
        "nothing to audit".into()
    } else {
        format!(
            "audited from the file's texts at rho = 1e6, 1e8, 1e10: {}",
            parts.join(", ")
        )
    }
}
