//! `far_zone_order = n`: claims checked as "every component is O(1/r^n) as r grows at fixed
//! retarded time t - r and fixed direction" instead of "every component is 0".
//!
//! Model. Along the ray `t = u + rho*s`, `(x, y, z) = rho*(n1, n2, n3)`, with free direction
//! symbols `n` (not necessarily a unit vector) and `s = sqrt(n1^2 + n2^2 + n3^2)` a root
//! kernel, `sqrt(x^2 + y^2 + z^2) = sqrt(rho^2 (n.n)) = rho*s` (rho > 0 real, so the principal
//! root factors), hence `t - r = u` exactly. A component's canonical form is walked through
//! [`Store::view`] and expanded as a truncated Laurent series in `eps = 1/rho`
//! ([`series::Series`]: a lower bound of the valuation, exact coefficients that are canonical
//! forms in u, n and the parameters, and an absolute precision). Since `r = s*rho`, "O(1/r^n)"
//! and "O(eps^n)" are the same statement at a fixed direction. This is the ray of Minkowski in
//! Cartesian coordinates t, x, y, z.
//!
//! About a background ([`curved`]), in spherical-type coordinates, the ray is `t = u + rho`,
//! `r = rho` with the other two coordinates (the angles) fixed symbols: the time is the first
//! coordinate, the radius the coordinate named `r` or by `far_zone_radius` (the reader refuses
//! a file about a background with neither, with its line and column). The residuals are the
//! exact route's `dG + Lambda h - 8 pi dT` and covariant gauge forms, expanded as they are;
//! each component is judged in the background's orthonormal frame, `E_{ab} rho^-(w_a + w_b)`
//! with weights read from gbar's own expansion ([`frame`], whose docs say why that is the
//! frame's order); the background must approach flat space (else undecided, with the reason).
//! Outgoing fields about Schwarzschild depend on `t - r_*`, `r_* = r + 2M log(r/2M - 1)`: at
//! fixed `t - r` their argument grows like `log r`, so they are undecided, which is correct
//! (the expansion is not a series in 1/r), not a defect. The background's own equations stay
//! exact claims.
//!
//! Soundness. *Holds* needs every coefficient of eps^k, k < n, to be an empty canonical form
//! (the zero test's proof) and the series' precision to reach n; *fails* needs the lowest
//! coefficient that is not empty, at an order k < n, to be certified nonzero at a point by the
//! zero test (every lower one being proved zero), at a point where every [`Condition`] is
//! certified too; everything else is *undecided*. Each step of the expansion is an identity
//! of asymptotic expansions at a fixed point (u, n, parameters) as eps -> 0+:
//! - sums and products of series (precision bookkeeping by valuation lower bounds only);
//! - `1/a`, `a^(1/q)` and `log a` factor `a = c0 eps^v (1 + w)`, `w = O(eps)`, and expand in
//!   `w`: they need `c0 != 0`, which the zero test certifies at some point (else undecided),
//!   and the expansion then holds where `c0(u, n) != 0` (recorded as a condition); roots also
//!   need `q | v` (else a fractional power of r: undecided) and logarithms `v = 0` (else log r
//!   terms: undecided). `Log(c0 (1 + w)) = Log c0 + Log(1 + w)` for the principal branch as
//!   soon as `Arg c0 + Arg(1 + w)` stays in (-pi, pi], which holds for small eps wherever c0 is
//!   not a real number <= 0; this is recorded as a condition unless c0 is manifestly >= 0 (a
//!   sum of positive rationals times even powers of real symbols) and refused outright when
//!   c0 is a negative constant;
//! - an arbitrary function `F^(k)(a0 + d)`, `d = O(eps)`, is Taylor expanded exactly
//!   (`F` smooth, the remainder O(d^J)); a growing argument is undecided;
//! - `exp(E)` needs `E` bounded: a certified nonzero coefficient of a negative power of eps
//!   (e.g. `sin(w t)` at fixed u, `exp(i w rho)`; also `exp(-r^2)`, which decays faster than
//!   any power but is not a series in 1/r) is undecided.
//!
//! A verdict with conditions says so: *holds* is claimed for the (u, direction, parameters)
//! where they hold, and only if a point where all are certified is found (so that it is
//! never vacuous); *fails* is claimed at its witness, where they are certified. A coefficient
//! divided by that is a nonzero constant times a power of sqrt(n.n) is nonzero for every
//! direction n != 0 and is not listed.
//!
//! Why "holds" is sound, in short: at every (u, n, parameters) where the listed conditions
//! hold, each step above turns an asymptotic expansion `f = sum c_k eps^k + O(eps^prec)` into
//! another one (valuations are only ever lower bounds, precisions only ever shrink), so the
//! component equals `sum_{k < prec} c_k eps^k + O(eps^prec)` there; every `c_k`, `k < n`, is
//! an empty canonical form, identically 0 (the canonical form's rewrites are identities),
//! and `prec >= n`, so the component is O(eps^n) = O(1/r^n). "Fails" uses the same expansion
//! at one certified point: the lower coefficients vanish identically and `c_k` does not
//! there, so the component behaves as `c_k eps^k` with `k < n`.
//!
//! The frame's scaling adds nothing to this argument: multiplying a series by `eps^w` shifts
//! its valuation, precision and coefficients' orders by `w` exactly, and the conditions the
//! weights rest on (their leading coefficients nonzero) are conditions of the verdict like the
//! residual's own.
//!
//! The second opinion ([`audit`]) evaluates the components from the file's texts along the
//! ray at rho = 1e6, 1e8, 1e10 in multiprecision balls (about a background by the pointwise
//! curvature chain, scaled by the same weights) and compares the falloff with the verdict; a
//! disagreement is an INTERNAL DEFECT, never a pass.

mod audit;
mod curved;
mod frame;
mod series;

use super::{ClaimReport, Component, ExactParts, RESIDUAL_CHARS, Residual, Status};
use crate::canon::{CanonError, Form, KernelId, Point, Store};
use crate::check::Audited;
use crate::claim::{Claim, Plan};
use crate::interval::{CInterval, Interval};
use crate::problem::Problem;
use crate::tensor::Linearized;
use crate::zero::{Sampling, SplitMix64, Verdict, Witness, decide};
use series::{Condition, Expander, Stop};

/// The names of the ray's symbols: retarded time and direction.
#[derive(Clone, Debug)]
pub(crate) struct RayNames {
    /// Retarded time `u = t - r`.
    pub u: String,
    /// What fixes the direction: `(n1, n2, n3)` on the Cartesian ray, the two angles (the
    /// coordinates other than time and radius) on the radial one.
    pub n: Vec<String>,
    /// The radial ray's time and radius (positions in the coordinates); `None`: Cartesian.
    pub radial: Option<(usize, usize)>,
    /// The problem's coordinates.
    pub coords: [String; 4],
    /// The \[domain\] range of each direction symbol (the angles of the radial ray).
    pub ranges: Vec<Option<(f64, f64)>>,
}

impl RayNames {
    /// The Cartesian ray's names: `u`, `n1`, `n2`, `n3`, with `_` appended until no name of
    /// the problem is taken.
    fn of(problem: &Problem) -> RayNames {
        let taken = |n: &str| {
            problem.parameters.iter().any(|(m, _)| m == n)
                || problem.functions.iter().any(|(m, _)| m == n)
                || problem.defines.iter().any(|(m, _)| m == n)
                || problem.coordinates.iter().any(|m| m == n)
        };
        let mut suffix = String::new();
        loop {
            let names = RayNames {
                u: format!("u{suffix}"),
                n: (1..=3).map(|i| format!("n{i}{suffix}")).collect(),
                radial: None,
                coords: problem.coordinates.clone(),
                ranges: vec![None; 3],
            };
            if !taken(&names.u) && !names.n.iter().any(|n| taken(n)) {
                return names;
            }
            suffix.push('_');
        }
    }

    /// The radial ray's names: a fresh `u`, the time (the first coordinate), the radius
    /// `radius` and the two other coordinates as the direction.
    fn radial(problem: &Problem, radius: usize) -> RayNames {
        let mut names = RayNames::of(problem);
        let angles: Vec<usize> = (1..4).filter(|&i| i != radius).collect();
        names.n = angles
            .iter()
            .map(|&i| problem.coordinates[i].clone())
            .collect();
        names.ranges = angles
            .iter()
            .map(|&i| problem.domain.and_then(|d| d[i]))
            .collect();
        names.radial = Some((0, radius));
        names
    }

    /// The radius as reports name it: the radial coordinate, or `r` (= |x|) on the
    /// Cartesian ray.
    fn radius_text(&self) -> &str {
        match self.radial {
            Some((_, r)) => &self.coords[r],
            None => "r",
        }
    }

    /// How the ray is parametrised, for reports.
    fn ray_text(&self) -> String {
        match self.radial {
            Some((t, r)) => format!(
                "along {t} = {u} + rho, {r} = rho at fixed {a}, {b}",
                t = self.coords[t],
                r = self.coords[r],
                u = self.u,
                a = self.n[0],
                b = self.n[1],
            ),
            None => {
                let [a, b, c] = [&self.n[0], &self.n[1], &self.n[2]];
                format!(
                    "along t = {u} + rho*sqrt({a}^2 + {b}^2 + {c}^2), (x, y, z) = rho*({a}, {b}, \
                     {c})",
                    u = self.u
                )
            }
        }
    }

    /// A seeded value of direction symbol `i`: inside its \[domain\] range, if it has one,
    /// else in `±[0.25, 2]`; three significant digits.
    fn direction(&self, i: usize, rng: &mut SplitMix64) -> f64 {
        let round = |v: f64| format!("{v:.2e}").parse().unwrap_or(v);
        match self.ranges.get(i).copied().flatten() {
            Some((lo, hi)) => {
                let m = (hi - lo) * 1e-3;
                round(lo + m + (hi - lo - 2.0 * m) * rng.next_f64()).clamp(lo, hi)
            }
            None => {
                let mag = 0.25 + 1.75 * rng.next_f64();
                round(if rng.next_u64() & 1 == 1 { -mag } else { mag })
            }
        }
    }

    /// `v` as the value of direction symbol `i`, or the middle of its range when `v` is
    /// outside it.
    fn fill(&self, i: usize, v: f64) -> f64 {
        match self.ranges.get(i).copied().flatten() {
            Some((lo, hi)) if !(lo..=hi).contains(&v) => (lo + hi) / 2.0,
            _ => v,
        }
    }
}

/// What the exact route found for one component (beside its [`Verdict`]).
#[derive(Clone, Debug, Default)]
pub(crate) struct Found {
    /// The power of 1/rho of the certified nonzero coefficient, for a failing component.
    pub failing_order: Option<i64>,
    /// Conditions as text (see the module docs), empty when none.
    pub conditions: Vec<String>,
    /// For each of the audit's base points: whether every condition is certified there.
    pub valid_at: Vec<bool>,
    /// The frame weight: the component judged is the coordinate component times
    /// `rho^-weight` (0 on the Cartesian ray; see [`frame`]).
    pub weight: i64,
}

/// Checks every claim of a problem at far-zone order `order`, then audits the verdicts
/// along rays (see the module docs).
pub(crate) fn check(problem: &mut Problem, order: u32) -> (Vec<ClaimReport>, bool) {
    if problem.background.is_some() {
        return curved::check(problem, order);
    }
    let names = RayNames::of(problem);
    let plan = Plan::of(problem.claims.as_ref(), problem.source.is_some());
    let bases = audit::base_points(problem, &names);
    let (mut out, found) = exact(problem, &plan, order, &names, &bases);
    audit::audit(problem, &mut out, &found, order, &names, &bases, None);
    (out, plan.has_claims)
}

fn exact(
    problem: &mut Problem,
    plan: &Plan,
    order: u32,
    names: &RayNames,
    bases: &[Vec<(String, f64)>],
) -> (Vec<ClaimReport>, Vec<Vec<Found>>) {
    let sampling = problem.sampling.clone();
    let parameters = problem.parameters.clone();
    let store = &mut problem.store;
    let coords: [KernelId; 4] =
        std::array::from_fn(|i| store.symbol_kernel(&problem.coordinates[i]));
    let u = store.symbol(&names.u);
    let dir: [Form; 3] = std::array::from_fn(|i| store.symbol(&names.n[i]));
    let moving = match series::cartesian_ray(store, coords, u, dir) {
        Ok(m) => m,
        Err(e) => {
            let out = plan
                .claims
                .iter()
                .map(|&c| {
                    let mut r = super::limit_report(c, e.clone());
                    r.far_zone = Some(order);
                    r
                })
                .collect();
            return (out, vec![Vec::new(); plan.claims.len()]);
        }
    };
    let mut lin = Linearized::new(store, problem.h);
    let source = problem.source;
    let mut parts = ExactParts::new(&mut lin, source.as_ref());
    let ray = Ray {
        moving,
        order,
        names,
        sampling: &sampling,
        parameters: &parameters,
        bases,
        frame: None,
    };
    let mut found = Vec::new();
    let out = plan
        .claims
        .iter()
        .map(|&c| match parts.named(store, c.kind) {
            Ok(named) => {
                let named = named.into_iter().map(|(n, f)| (n, f, 0)).collect();
                let (report, f) = ray.claim(store, c, named);
                found.push(f);
                report
            }
            Err(e) => {
                found.push(Vec::new());
                let mut r = super::limit_report(c, e);
                r.far_zone = Some(order);
                r
            }
        })
        .collect();
    (out, found)
}

struct Ray<'a> {
    /// The coordinates that move along the ray, with their exact series.
    moving: Vec<(KernelId, series::Series)>,
    order: u32,
    names: &'a RayNames,
    sampling: &'a Sampling,
    parameters: &'a [(String, f64)],
    bases: &'a [Vec<(String, f64)>],
    /// The orthonormal frame's weights, on the radial ray.
    frame: Option<&'a frame::Frame>,
}

/// The relative precisions tried, as multiples of the order plus a margin.
const PRECISIONS: [(usize, usize); 3] = [(1, 3), (2, 6), (4, 12)];

impl Ray<'_> {
    fn claim(
        &self,
        store: &mut Store,
        claim: Claim,
        named: Vec<(String, Form, i64)>,
    ) -> (ClaimReport, Vec<Found>) {
        let mut components = Vec::new();
        let mut found = Vec::new();
        for (name, f, weight) in named {
            let (verdict, residual, mut fd) = self.component(store, f, weight);
            fd.weight = weight;
            components.push(Component {
                name,
                verdict,
                residual,
                audit: Audited::NotRun("not yet audited".into()),
            });
            found.push(fd);
        }
        let refs: Vec<&Verdict> = components.iter().map(|c| &c.verdict).collect();
        let status = status_of(claim, &refs);
        let method = method_text(&components, &found, self.order, self.names, self.frame);
        let mut report = ClaimReport::new(claim, status, method, components);
        report.far_zone = Some(self.order);
        (report, found)
    }

    fn component(&self, store: &mut Store, f: Form, weight: i64) -> (Verdict, Residual, Found) {
        if store.is_zero(f) {
            // Exactly 0: no expansion, no condition; the audit still evaluates it.
            let found = Found {
                valid_at: vec![true; self.bases.len()],
                ..Found::default()
            };
            return (Verdict::Zero, Residual::Zero, found);
        }
        let undecided =
            |why: String| (Verdict::Undecided(why), Residual::Form(f), Found::default());
        let n = i64::from(self.order);
        let mut last = 0;
        for (mult, margin) in PRECISIONS {
            let p = self.order as usize * mult + margin;
            last = p;
            let mut ex = Expander::new(self.sampling, self.moving.clone(), p);
            let s = match ex.expand(store, f) {
                // The component in the orthonormal frame: times rho^-weight = eps^weight.
                Ok(s) => series::shift(s, weight),
                Err(Stop::Precision) => continue,
                Err(e) => return undecided(stop_text(e)),
            };
            let mut conditions = self.frame.map_or(Vec::new(), |fr| fr.conditions.clone());
            for c in &ex.conditions {
                if !conditions.contains(c) {
                    conditions.push(*c);
                }
            }
            let end = s.prec.min(n);
            let mut k = s.v;
            while k < end {
                let c = s.coef(k, store).expect("below the precision");
                if store.is_zero(c) {
                    k += 1;
                    continue;
                }
                match decide(store, c, self.sampling) {
                    Verdict::Nonzero(w) => {
                        return self.failing(store, c, k, w, &conditions, f);
                    }
                    Verdict::Undecided(why) => {
                        return undecided(format!(
                            "the coefficient of 1/rho^{k} is not reduced to 0 and not \
                             certified nonzero ({why})"
                        ));
                    }
                    // Only an empty form is proved 0, and those were skipped above.
                    Verdict::Zero => k += 1,
                }
            }
            if s.prec < n {
                continue;
            }
            let texts = self.condition_texts(store, &conditions);
            if !conditions.is_empty() && self.somewhere(store, &conditions).is_none() {
                return undecided(format!(
                    "every coefficient below 1/r^{n} reduces to 0, but the expansion rests on \
                     conditions ({}) that could not be certified at any sampled point",
                    texts.join("; ")
                ));
            }
            let valid_at = self
                .bases
                .iter()
                .map(|b| self.certified_at(store, &conditions, b))
                .collect();
            return (
                Verdict::Zero,
                Residual::Zero,
                Found {
                    failing_order: None,
                    conditions: texts,
                    valid_at,
                    weight,
                },
            );
        }
        undecided(format!(
            "too large: the expansion in 1/r did not reach order {n} with {last} terms \
             (cancellations)"
        ))
    }

    /// The verdict of a component whose coefficient `c` of eps^k (k < n, every lower one
    /// proved 0) the zero test certified nonzero at `w`.
    fn failing(
        &self,
        store: &mut Store,
        c: Form,
        k: i64,
        w: Witness,
        conditions: &[Condition],
        f: Form,
    ) -> (Verdict, Residual, Found) {
        let point = self.complete(&w.point);
        let w = if self.certified_at(store, conditions, &point) {
            Some(Witness { point, ..w })
        } else {
            // The zero test's point lies where the expansion is not certified: look for one
            // where both the coefficient and the conditions are.
            self.somewhere_nonzero(store, c, conditions)
        };
        let Some(w) = w else {
            return (
                Verdict::Undecided(format!(
                    "the coefficient of 1/rho^{k} is certified nonzero, but not at a point where \
                     the expansion's conditions are certified"
                )),
                Residual::Form(f),
                Found::default(),
            );
        };
        let n = self.order;
        let how = match k {
            -1 => "grows like r".to_string(),
            k if k < 0 => format!("grows like r^{}", -k),
            0 => "does not fall off (order r^0)".to_string(),
            1 => "falls off only as 1/r".to_string(),
            k => format!("falls off only as 1/r^{k}"),
        };
        let text = store.to_text_summary(c, RESIDUAL_CHARS);
        let valid_at = self
            .bases
            .iter()
            .map(|b| self.certified_at(store, conditions, b))
            .collect();
        (
            Verdict::Nonzero(w),
            Residual::Note(format!(
                "{how}; claimed O({}); coefficient of {}: {text}",
                if n == 1 {
                    "1/r".to_string()
                } else {
                    format!("1/r^{n}")
                },
                match k {
                    k if k < 0 => format!("rho^{}", -k),
                    0 => "rho^0".to_string(),
                    k => format!("1/rho^{k}"),
                }
            )),
            Found {
                failing_order: Some(k),
                conditions: self.condition_texts(store, conditions),
                valid_at,
                weight: 0,
            },
        )
    }

    /// `point` with u, n and every parameter it lacks filled in (a coefficient does not
    /// depend on the symbols its witness leaves out).
    fn complete(&self, point: &[(String, f64)]) -> Vec<(String, f64)> {
        let mut out = point.to_vec();
        let fill = [0.6, -0.7, 0.8]
            .into_iter()
            .enumerate()
            .map(|(i, v)| (self.names.n.get(i), self.names.fill(i, v)));
        let fill = std::iter::once((Some(&self.names.u), 0.5)).chain(fill);
        for (name, v) in fill {
            let Some(name) = name else { continue };
            if !out.iter().any(|(m, _)| m == name) {
                out.push((name.clone(), v));
            }
        }
        for (name, v) in self.parameters {
            if !out.iter().any(|(m, _)| m == name) {
                out.push((name.clone(), *v));
            }
        }
        out.sort_by(|a, b| a.0.cmp(&b.0));
        out
    }

    fn point(&self, store: &mut Store, values: &[(String, f64)], forms: &[Form]) -> Option<Point> {
        let mut pt = Point::default();
        for (name, v) in values {
            let k = store.symbol_kernel(name);
            pt.values
                .insert(k, CInterval::from_real(Interval::point(*v)?));
        }
        for &f in forms {
            for (i, name) in store.functions_used(f).into_iter().enumerate() {
                let s = match self.sampling.samples.get(&name) {
                    Some(s) => s.clone(),
                    None => crate::zero::generic_sample(store, i),
                };
                pt.samples.insert(name, s);
            }
        }
        Some(pt)
    }

    /// Whether every condition is certified at `values`.
    fn certified_at(
        &self,
        store: &mut Store,
        conditions: &[Condition],
        values: &[(String, f64)],
    ) -> bool {
        let forms: Vec<Form> = conditions.iter().map(|c| condition_form(*c)).collect();
        let Some(pt) = self.point(store, values, &forms) else {
            return false;
        };
        conditions.iter().all(|c| {
            let Some(v) = store.eval_interval(condition_form(*c), &pt) else {
                return false;
            };
            match c {
                Condition::NonZero(_) => v.excludes_zero(),
                Condition::OffNegativeAxis(_) => v.im.excludes_zero() || v.re.lo() > 0.0,
            }
        })
    }

    /// Seeded points of u, n and the parameters (as the zero test samples them).
    fn sampled(&self, attempt: usize, rng: &mut SplitMix64) -> Vec<(String, f64)> {
        let mut out = Vec::new();
        let unit = |rng: &mut SplitMix64| {
            let mag = 0.25 + 1.75 * rng.next_f64();
            let v = if rng.next_u64() & 1 == 1 { -mag } else { mag };
            format!("{v:.2e}").parse().unwrap_or(v)
        };
        out.push((self.names.u.clone(), unit(rng)));
        for i in 0..self.names.n.len() {
            let v = self.names.direction(i, rng);
            out.push((self.names.n[i].clone(), v));
        }
        let at_file_values = attempt < self.sampling.points.div_ceil(2);
        for (name, t) in self.parameters {
            let v = if at_file_values || *t == 0.0 {
                *t
            } else {
                t * (0.5 + 1.5 * rng.next_f64())
            };
            out.push((name.clone(), v));
        }
        out.sort_by(|a, b| a.0.cmp(&b.0));
        out
    }

    /// A seeded point where every condition is certified.
    fn somewhere(&self, store: &mut Store, conditions: &[Condition]) -> Option<Vec<(String, f64)>> {
        let mut rng = SplitMix64::new(self.sampling.seed);
        (0..self.sampling.points)
            .map(|a| self.sampled(a, &mut rng))
            .find(|p| self.certified_at(store, conditions, p))
    }

    /// A seeded witness of `c != 0` where every condition is certified.
    fn somewhere_nonzero(
        &self,
        store: &mut Store,
        c: Form,
        conditions: &[Condition],
    ) -> Option<Witness> {
        let mut rng = SplitMix64::new(self.sampling.seed ^ 0x9e37);
        for a in 0..self.sampling.points {
            let p = self.sampled(a, &mut rng);
            if !self.certified_at(store, conditions, &p) {
                continue;
            }
            let pt = self.point(store, &p, &[c])?;
            if let Some(v) = store.eval_interval(c, &pt)
                && v.excludes_zero()
            {
                return Some(Witness {
                    point: p,
                    value: v,
                    seed: self.sampling.seed,
                    chosen: None,
                });
            }
        }
        None
    }

    /// The conditions as text, without the coefficients whose nonzero value follows from
    /// n != 0 (a nonzero constant times a power of n.n).
    fn condition_texts(&self, store: &mut Store, conditions: &[Condition]) -> Vec<String> {
        let mut out = Vec::new();
        let mut kept: Vec<Form> = Vec::new();
        for &c in conditions {
            if let Condition::NonZero(f) = c {
                if self.implied_by_direction(store, f) {
                    continue;
                }
                // A constant multiple of a condition already listed says nothing new: f/g
                // proved free of every symbol (each partial derivative proved 0).
                let same = kept
                    .iter()
                    .any(|&g| constant_ratio(store, f, g, self.sampling));
                if same {
                    continue;
                }
                kept.push(f);
            }
            let text = store.to_display_summary(condition_form(c), 200);
            out.push(match c {
                Condition::NonZero(_) => format!("{text} != 0"),
                Condition::OffNegativeAxis(_) => format!("{text} is not a real number <= 0"),
            });
        }
        out
    }

    fn implied_by_direction(&self, store: &mut Store, f: Form) -> bool {
        if self.names.radial.is_some() {
            return false;
        }
        let n: [Form; 3] = std::array::from_fn(|i| store.symbol(&self.names.n[i]));
        let nn = (|| -> Result<Form, CanonError> {
            let sq = [
                store.mul(n[0], n[0])?,
                store.mul(n[1], n[1])?,
                store.mul(n[2], n[2])?,
            ];
            store.sum(&sq)
        })();
        let Ok(nn) = nn else { return false };
        // f or f^2 (for odd powers of s = sqrt(n.n)) a nonzero constant times (n.n)^k.
        let Ok(f2) = store.mul(f, f) else {
            return false;
        };
        let mut p = store.one();
        for _ in 0..=8 {
            for g in [f, f2] {
                if let Ok(q) = store.div(g, p)
                    && store.as_constant(q).is_some()
                {
                    return true;
                }
            }
            match store.mul(p, nn) {
                Ok(next) => p = next,
                Err(_) => return false,
            }
        }
        false
    }
}

fn condition_form(c: Condition) -> Form {
    match c {
        Condition::NonZero(f) | Condition::OffNegativeAxis(f) => f,
    }
}

fn stop_text(e: Stop) -> String {
    match e {
        Stop::Undecided(why) => why,
        Stop::Precision => "too large: the expansion lost its precision to cancellations".into(),
        Stop::Limit(e) => e.to_string(),
    }
}

/// A claim's status from its components' verdicts: [`Status::of`], except that a claim a
/// witness does not refute (h as the gauge transformation of the file's vector) is then
/// undecided.
fn status_of(claim: Claim, verdicts: &[&Verdict]) -> Status {
    let status = Status::of(verdicts, claim.asserted.unwrap_or(true));
    let nonzero = verdicts.iter().any(|v| matches!(v, Verdict::Nonzero(_)));
    if !claim.kind.refuted_by_witness() && nonzero {
        Status::Undecided
    } else {
        status
    }
}

/// How the claim was decided, in words (the audit appends its own).
fn method_text(
    components: &[Component],
    found: &[Found],
    order: u32,
    names: &RayNames,
    frame: Option<&frame::Frame>,
) -> String {
    let n = components.len();
    let zero = components
        .iter()
        .filter(|c| matches!(c.verdict, Verdict::Zero))
        .count();
    let nonzero = components
        .iter()
        .filter(|c| matches!(c.verdict, Verdict::Nonzero(_)))
        .count();
    let undecided = n - zero - nonzero;
    let mut conditions: Vec<&str> = found
        .iter()
        .flat_map(|f| f.conditions.iter().map(String::as_str))
        .collect();
    conditions.sort_unstable();
    conditions.dedup();
    let r = names.radius_text();
    let mut s = format!(
        "far zone, expanded in 1/rho {}: {zero} of {n} components O(1/{r}^{order}) (every \
         coefficient of 1/rho^k, k < {order}, reduces to 0), {nonzero} certified not \
         O(1/{r}^{order}), {undecided} undecided",
        names.ray_text()
    );
    if let Some(fr) = frame {
        let weighted: Vec<String> = components
            .iter()
            .zip(found)
            .filter(|(_, f)| f.weight != 0)
            .map(|(c, f)| format!("{}/{}", c.name, fr.power_text(f.weight)))
            .collect();
        s.push_str(&format!("; components in the frame {}", fr.text()));
        if !weighted.is_empty() {
            s.push_str(&format!(": {}", weighted.join(", ")));
        }
    }
    if !conditions.is_empty() {
        let direction = if names.radial.is_some() {
            "angles"
        } else {
            "direction"
        };
        s.push_str(&format!(
            "; valid for u, {direction} and parameters where {}",
            conditions.join(", ")
        ));
    }
    s
}

/// Whether `f / g` is proved to be a constant: every partial derivative reduces to 0 by the
/// zero test (a proof, so a condition is never dropped on a guess).
fn constant_ratio(store: &mut Store, f: Form, g: Form, sampling: &Sampling) -> bool {
    let Ok(q) = store.div(f, g) else {
        return false;
    };
    if store.as_constant(q).is_some() {
        return true;
    }
    let names = store.free_symbols(q);
    names.iter().all(|n| {
        let k = store.symbol_kernel(n);
        store
            .diff(q, k)
            .is_ok_and(|d| matches!(decide(store, d, sampling), Verdict::Zero))
    })
}

#[cfg(test)]
mod tests;
