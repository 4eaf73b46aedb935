//! The audit of single verdicts and printed forms, for the commands other than `check`.
//!
//! Model. A command's verdict is about a quantity: an expression (`zero`), the difference of
//! an input and the form printed for it (`simplify`, `diff`), or something computed from
//! problem files (a Riemann component of the difference of two files for `compare`, the box
//! of a gauge vector, the TT part of a perturbation). A [`Route`] evaluates such quantities
//! at a point from the *texts*, parsed again, with certified jets, in any [`Scalar`]
//! arithmetic. Then:
//! - a proof of zero is evaluated at [`AUDIT_POINTS`] seeded points (points where the route
//!   cannot evaluate are skipped, up to [`CANDIDATES`] are tried); an enclosure that excludes
//!   0 contradicts it ([`Finding::ProofContradicted`]);
//! - a certified witness is evaluated at its own point in f64 intervals, then in balls at
//!   [`PRECISIONS`] bits, until an enclosure excludes 0, which must overlap the exact route's
//!   enclosure; if the point cannot be evaluated at any precision (a singularity, a value that
//!   is not real there), seeded points are tried for an independent witness instead.
//!
//! Key design decision: a finding only ever takes a verdict away. The caller turns a
//! contradicted proof into a nonzero verdict with the independent witness and an unconfirmed
//! witness into undecided; nothing is promoted. Quantities of problem files are evaluated by
//! the formulas of [`crate::grid::claims`] on the fields' jets, as [`Audit`] does, so the
//! names of components are the exact route's.
//!
//! **Invariant:** like the rest of [`crate::audit`], never calls `canon`, `zero` or `tensor`.

use super::{
    Audit, AuditError, Coef, Fields, SplitMix64, claim_terms, generic_sample_text, parse_text,
    round6,
};
use crate::claim::Kind;
use crate::grid::claims::{Atom, Deriv, Field, claim_specs};
use crate::interval::{Ball, CInterval, Interval};
use crate::jet::eval::{called_functions, free_names};
use crate::jet::{Program, Scalar, Scope};
use crate::problem::{Claims, Problem};
use crate::tensor::{COMPONENTS, COORDS, component_name};
use rustc_hash::FxHashMap;
use std::fmt;

/// How many seeded points a proof is evaluated at.
pub const AUDIT_POINTS: usize = 3;

/// How many seeded points are tried at most, skipping those where the route cannot evaluate.
pub const CANDIDATES: usize = 12;

/// The ball precisions (bits) a witness is tried at after f64 intervals, in order.
pub const PRECISIONS: [u32; 3] = [128, 256, 512];

/// A point: values of names.
pub type Point = Vec<(String, f64)>;

/// Quantities the independent route evaluates at points.
pub trait Route {
    /// The names a point gives values to, each with its typical value if it has one.
    fn names(&self) -> Vec<(String, Option<f64>)>;

    /// Names confined to a range (a problem's \[domain\]): seeded points stay inside.
    fn ranges(&self) -> Vec<(String, (f64, f64))> {
        Vec::new()
    }

    /// Every quantity at `point` in the arithmetic `S` (`ctx`: `()` for f64 intervals, the
    /// precision in bits for balls); `None` for one that cannot be evaluated there.
    ///
    /// # Errors
    ///
    /// A name without a value at the point.
    fn values<S: Scalar>(
        &self,
        point: &[(String, f64)],
        ctx: &S::Ctx,
    ) -> Result<Vec<Option<S>>, AuditError>;
}

/// A certified enclosure from the independent route, with the arithmetic that gave it.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Enclosure {
    /// Lower bound (outward rounded to f64).
    pub lo: f64,
    /// Upper bound (outward rounded to f64).
    pub hi: f64,
    /// Certified: the value is not 0.
    pub nonzero: bool,
    /// `None` for f64 intervals, else the precision of the balls.
    pub bits: Option<u32>,
}

impl Enclosure {
    fn of<S: Scalar>(s: &S, bits: Option<u32>) -> Enclosure {
        let (lo, hi) = s.bounds_f64();
        Enclosure {
            lo,
            hi,
            nonzero: s.excludes_zero(),
            bits,
        }
    }

    /// The bounds as an interval (`None` if a bound is beyond the f64 range).
    pub fn interval(&self) -> Option<Interval> {
        Interval::new(self.lo, self.hi)
    }

    /// True if this real value and the exact route's complex enclosure may be the same
    /// number.
    fn overlaps(&self, exact: &CInterval) -> bool {
        exact.im.contains_zero() && exact.re.lo() <= self.hi && self.lo <= exact.re.hi()
    }
}

impl fmt::Display for Enclosure {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "[{:?}, {:?}]", self.lo, self.hi)?;
        if let Some(bits) = self.bits {
            write!(f, " ({bits}-bit balls)")?;
        }
        Ok(())
    }
}

/// "3 seeded points", "1 seeded point".
pub fn seeded(n: usize) -> String {
    if n == 1 {
        "1 seeded point".into()
    } else {
        format!("{n} seeded points")
    }
}

/// The text `t = 0.5, x = -1.2` of a point.
pub fn point_text(point: &[(String, f64)]) -> String {
    let parts: Vec<String> = point.iter().map(|(n, v)| format!("{n} = {v}")).collect();
    if parts.is_empty() {
        "any point".into()
    } else {
        parts.join(", ")
    }
}

/// An enclosure at a point.
#[derive(Clone, Debug, PartialEq)]
pub struct Evaluated {
    /// The point.
    pub point: Point,
    /// The enclosure there.
    pub value: Enclosure,
}

impl fmt::Display for Evaluated {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "at {}: {}", point_text(&self.point), self.value)
    }
}

/// What the independent route found for one verdict of the exact route.
#[derive(Clone, Debug, PartialEq)]
pub enum Finding {
    /// A proof whose value contained 0 at every point evaluated.
    ProofConsistent {
        /// The points and enclosures.
        points: Vec<Evaluated>,
        /// Seeded points tried where the route could not evaluate.
        skipped: usize,
    },
    /// The exact route proved zero but the independent route certifies a nonzero value: an
    /// internal defect. The verdict becomes nonzero with this witness.
    ProofContradicted(Evaluated),
    /// A witness certified nonzero again at its own point.
    WitnessConfirmed(Evaluated),
    /// The witness's point cannot be evaluated by the independent route, which certifies a
    /// nonzero value at another point (its own witness).
    ConfirmedElsewhere {
        /// Why the witness's own point could not be evaluated.
        why: String,
        /// The independent witness.
        at: Evaluated,
    },
    /// Both routes certify a nonzero value at the witness point, but the enclosures are
    /// disjoint: an internal defect in one of them (the verdict stays nonzero).
    ValuesDisagree {
        /// The independent enclosure.
        at: Evaluated,
        /// The exact route's enclosure.
        exact: CInterval,
    },
    /// The witness could not be certified again: the verdict becomes undecided.
    WitnessUnconfirmed {
        /// Why.
        reason: String,
        /// The last enclosure at the witness's point, if there was one.
        at: Option<Evaluated>,
    },
    /// Nothing could be evaluated (the reason); the verdict stands, marked not audited.
    NotAudited(String),
    /// Nothing to audit: the exact route is undecided.
    Skipped,
}

impl Finding {
    /// A short machine label, as the check's: `consistent`, `contradicted`, `confirmed`,
    /// `confirmed_elsewhere`, `disagree`, `unconfirmed`, `not_run`, `skipped`.
    pub fn label(&self) -> &'static str {
        match self {
            Finding::ProofConsistent { .. } => "consistent",
            Finding::ProofContradicted(_) => "contradicted",
            Finding::WitnessConfirmed(_) => "confirmed",
            Finding::ConfirmedElsewhere { .. } => "confirmed_elsewhere",
            Finding::ValuesDisagree { .. } => "disagree",
            Finding::WitnessUnconfirmed { .. } => "unconfirmed",
            Finding::NotAudited(_) => "not_run",
            Finding::Skipped => "skipped",
        }
    }

    /// True if the two routes contradict each other (a defect to report).
    pub fn is_defect(&self) -> bool {
        matches!(
            self,
            Finding::ProofContradicted(_) | Finding::ValuesDisagree { .. }
        )
    }

    /// The points evaluated, with their enclosures (for `--audit-points` and JSON).
    pub fn evaluated(&self) -> Vec<&Evaluated> {
        match self {
            Finding::ProofConsistent { points, .. } => points.iter().collect(),
            Finding::ProofContradicted(e)
            | Finding::WitnessConfirmed(e)
            | Finding::ConfirmedElsewhere { at: e, .. }
            | Finding::ValuesDisagree { at: e, .. } => vec![e],
            Finding::WitnessUnconfirmed { at, .. } => at.iter().collect(),
            Finding::NotAudited(_) | Finding::Skipped => Vec::new(),
        }
    }

    /// How one verdict was audited, in words (`what` names it: "this zero", "the printed
    /// form", ...); loud for a defect.
    pub fn method(&self, seed: u64) -> String {
        match self {
            Finding::ProofConsistent { points, skipped } => {
                let mut s = format!(
                    "audited: consistent with an independent evaluation at {} (seed {seed:#x})",
                    seeded(points.len())
                );
                if *skipped > 0 {
                    s.push_str(&format!("; {skipped} other(s) could not be evaluated"));
                }
                s
            }
            Finding::ProofContradicted(e) => format!(
                "INTERNAL DEFECT: the exact route proved this zero but the independent \
                 evaluation certifies a nonzero value {e}; the independent value is reported. \
                 Please report this (input and command) as a bug"
            ),
            Finding::WitnessConfirmed(e) => {
                format!("audited: witness certified again independently, {e}")
            }
            Finding::ConfirmedElsewhere { why, at } => format!(
                "audited: the witness's point cannot be evaluated by the independent route \
                 ({why}); it certifies a nonzero value {at}"
            ),
            Finding::ValuesDisagree { at, exact } => format!(
                "INTERNAL DEFECT: both routes certify a nonzero value, but the exact route \
                 encloses it in {exact} and the independent route {at}. Please report this \
                 (input and command) as a bug"
            ),
            Finding::WitnessUnconfirmed { .. } => {
                "audited: witness not confirmed independently (now undecided)".into()
            }
            Finding::NotAudited(why) => format!("not audited: {why}"),
            Finding::Skipped => "nothing to audit (undecided by the exact route)".into(),
        }
    }
}

/// How a set of verdicts (the components of one statement) was audited, in one line; loud
/// when the routes disagree.
pub fn summary(findings: &[&Finding], seed: u64) -> String {
    let count = |f: fn(&Finding) -> bool| findings.iter().filter(|x| f(x)).count();
    let defects: Vec<&&Finding> = findings.iter().filter(|f| f.is_defect()).collect();
    if let Some(first) = defects.first() {
        return format!(
            "{} ({} component(s) in all)",
            first.method(seed),
            defects.len()
        );
    }
    let proofs = count(|f| matches!(f, Finding::ProofConsistent { .. }));
    let confirmed = count(|f| {
        matches!(
            f,
            Finding::WitnessConfirmed(_) | Finding::ConfirmedElsewhere { .. }
        )
    });
    let unconfirmed = count(|f| matches!(f, Finding::WitnessUnconfirmed { .. }));
    let not_audited: Vec<&str> = findings
        .iter()
        .filter_map(|f| match f {
            Finding::NotAudited(why) => Some(why.as_str()),
            _ => None,
        })
        .collect();
    let mut parts = Vec::new();
    if proofs > 0 {
        let fewest = findings
            .iter()
            .filter_map(|f| match f {
                Finding::ProofConsistent { points, .. } => Some(points.len()),
                _ => None,
            })
            .min()
            .unwrap_or(0);
        let at = if fewest == AUDIT_POINTS {
            format!("{AUDIT_POINTS} seeded points")
        } else {
            format!("{fewest} to {AUDIT_POINTS} seeded points (others could not be evaluated)")
        };
        parts.push(tally(proofs, &at, 0, 0).remove(0));
    }
    parts.extend(tally(0, "", confirmed, unconfirmed));
    let mut s = if parts.is_empty() {
        String::new()
    } else {
        format!("audited: {} (seed {seed:#x})", parts.join(", "))
    };
    if let Some(why) = not_audited.first() {
        if !s.is_empty() {
            s.push_str("; ");
        }
        s.push_str(&format!(
            "{} component(s) not audited: {why}",
            not_audited.len()
        ));
    }
    if s.is_empty() {
        "nothing to audit (undecided by the exact route)".into()
    } else {
        s
    }
}

/// The parts of an audit line, shared with the check's claim lines: `proofs` consistent at
/// `at` (e.g. "3 seeded points"), witnesses confirmed and not (each part only if nonzero).
pub fn tally(proofs: usize, at: &str, confirmed: usize, unconfirmed: usize) -> Vec<String> {
    let mut parts = Vec::new();
    if proofs > 0 {
        parts.push(format!(
            "{proofs} proof(s) consistent with an independent evaluation at {at}"
        ));
    }
    if confirmed > 0 {
        parts.push(format!(
            "{confirmed} witness(es) certified again independently"
        ));
    }
    if unconfirmed > 0 {
        parts.push(format!(
            "{unconfirmed} witness(es) not confirmed independently (now undecided)"
        ));
    }
    parts
}

/// `count` reproducible points for `seed`: names without a typical value in `±[0.25, 2]`,
/// the others within a factor of 2 of it (same sign), rounded to six significant digits.
pub fn seeded_points(names: &[(String, Option<f64>)], seed: u64, count: usize) -> Vec<Point> {
    seeded_points_in(names, &[], seed, count)
}

/// [`seeded_points`] with names confined to `ranges`, sampled inside them (as
/// [`crate::audit::Audit::seeded_points`] does for a problem's \[domain\]).
pub fn seeded_points_in(
    names: &[(String, Option<f64>)],
    ranges: &[(String, (f64, f64))],
    seed: u64,
    count: usize,
) -> Vec<Point> {
    seeded_point_stream(names, ranges, seed)
        .take(count)
        .collect()
}

/// The points of [`seeded_points_in`], one at a time (the first `count` are the same
/// points): a caller that needs only a few of its candidates draws only those.
fn seeded_point_stream<'a>(
    names: &'a [(String, Option<f64>)],
    ranges: &'a [(String, (f64, f64))],
    seed: u64,
) -> impl Iterator<Item = Point> + 'a {
    let mut rng = SplitMix64(seed);
    std::iter::repeat_with(move || {
        let mut one = |name: &str, typical: Option<f64>| {
            if let Some((_, (lo, hi))) = ranges.iter().find(|(n, _)| n == name) {
                let m = (hi - lo) * 1e-3;
                return round6(lo + m + (hi - lo - 2.0 * m) * rng.next_f64()).clamp(*lo, *hi);
            }
            match typical {
                Some(t) if t != 0.0 => round6(t * (0.5 + 1.5 * rng.next_f64())),
                _ => rng.signed_unit(),
            }
        };
        names.iter().map(|(n, t)| (n.clone(), one(n, *t))).collect()
    })
}

/// A witness's point completed with a value for every name of `route` it lacks (the exact
/// route names only what its residual depends on), taken from a seeded point.
pub fn complete<R: Route>(route: &R, point: &[(String, f64)], seed: u64) -> Point {
    let names = route.names();
    let fill = seeded_points_in(&names, &route.ranges(), seed ^ 0xf111, 1).remove(0);
    let mut out: Point = point.to_vec();
    for (n, v) in fill {
        if !out.iter().any(|(m, _)| *m == n) {
            out.push((n, v));
        }
    }
    out
}

/// Audits the proofs of zero of the quantities `which` (indices into the route's values) at
/// shared seeded points: [`AUDIT_POINTS`] evaluated points each, skipping points where a
/// quantity cannot be evaluated, at most [`CANDIDATES`] tried. One finding per index.
pub fn audit_proofs<R: Route>(route: &R, which: &[usize], seed: u64) -> Vec<Finding> {
    struct State {
        points: Vec<Evaluated>,
        skipped: usize,
        contradicted: Option<Evaluated>,
    }
    let done = |s: &State| s.contradicted.is_some() || s.points.len() >= AUDIT_POINTS;
    let mut states: Vec<State> = which
        .iter()
        .map(|_| State {
            points: Vec::new(),
            skipped: 0,
            contradicted: None,
        })
        .collect();
    let mut error = None;
    let (names, ranges) = (route.names(), route.ranges());
    for p in seeded_point_stream(&names, &ranges, seed).take(CANDIDATES) {
        if states.iter().all(done) {
            break;
        }
        let values = match route.values::<Interval>(&p, &()) {
            Ok(v) => v,
            Err(e) => {
                error = Some(e.to_string());
                continue;
            }
        };
        for (s, &i) in states.iter_mut().zip(which) {
            if done(s) {
                continue;
            }
            match values.get(i).copied().flatten() {
                Some(v) => {
                    let e = Evaluated {
                        point: p.clone(),
                        value: Enclosure::of(&v, None),
                    };
                    if v.excludes_zero() {
                        s.contradicted = Some(e);
                    } else {
                        s.points.push(e);
                    }
                }
                None => s.skipped += 1,
            }
        }
    }
    states
        .into_iter()
        .map(|s| match s.contradicted {
            Some(e) => Finding::ProofContradicted(e),
            None if s.points.is_empty() => Finding::NotAudited(match &error {
                Some(e) => format!("the independent route cannot evaluate it: {e}"),
                None => format!(
                    "the independent route cannot evaluate it at any of {CANDIDATES} seeded \
                     points (singularities or values that are not real; seed {seed:#x})"
                ),
            }),
            None => Finding::ProofConsistent {
                points: s.points,
                skipped: s.skipped,
            },
        })
        .collect()
}

/// The value of quantity `index` at `point`, certified nonzero if any precision can: f64
/// intervals, then balls at [`PRECISIONS`] (after an f64 `None` only if `balls_if_none`: a
/// wide f64 enclosure can make a division or a root fail where balls succeed).
/// `Ok(None)`: not evaluable at any precision tried; `Err(e)`: evaluable but never
/// certified nonzero (the last enclosure).
fn certified_value<R: Route>(
    route: &R,
    index: usize,
    point: &[(String, f64)],
    balls_if_none: bool,
) -> Result<Option<Enclosure>, Enclosure> {
    let mut last = None;
    let f64_value = route
        .values::<Interval>(point, &())
        .ok()
        .and_then(|v| v.get(index).copied().flatten())
        .map(|v| Enclosure::of(&v, None));
    if f64_value.is_none() && !balls_if_none {
        return Ok(None);
    }
    let balls = PRECISIONS.iter().map(|&bits| {
        route
            .values::<Ball>(point, &bits)
            .ok()
            .and_then(|mut v| v.get_mut(index).and_then(Option::take))
            .map(|v| Enclosure::of(&v, Some(bits)))
    });
    for value in std::iter::once(f64_value).chain(balls).flatten() {
        if value.nonzero {
            return Ok(Some(value));
        }
        last = Some(value);
    }
    match last {
        Some(e) => Err(e),
        None => Ok(None),
    }
}

/// Certifies the exact route's witness of quantity `index` again at its own (complete)
/// point: [`Finding::WitnessConfirmed`], [`Finding::ValuesDisagree`] or
/// [`Finding::WitnessUnconfirmed`] (with `at: None` when the point cannot be evaluated).
pub fn certify_at<R: Route>(
    route: &R,
    index: usize,
    point: &[(String, f64)],
    exact: &CInterval,
) -> Finding {
    let top = PRECISIONS[PRECISIONS.len() - 1];
    match certified_value(route, index, point, true) {
        Ok(Some(value)) => {
            let at = Evaluated {
                point: point.to_vec(),
                value,
            };
            if value.overlaps(exact) {
                Finding::WitnessConfirmed(at)
            } else {
                Finding::ValuesDisagree { at, exact: *exact }
            }
        }
        Err(value) => Finding::WitnessUnconfirmed {
            reason: format!(
                "its enclosure at the witness point, {value}, contains 0 even with {top}-bit \
                 balls"
            ),
            at: Some(Evaluated {
                point: point.to_vec(),
                value,
            }),
        },
        Ok(None) => Finding::WitnessUnconfirmed {
            reason: format!(
                "the independent route cannot evaluate it at the witness point at any \
                 precision up to {top} bits (a singularity, or a value that is not real)"
            ),
            at: None,
        },
    }
}

/// Audits the exact route's witness of quantity `index`: [`certify_at`] its (complete)
/// point; if that point cannot be evaluated at all, an independent witness at seeded points.
pub fn audit_witness<R: Route>(
    route: &R,
    index: usize,
    point: &[(String, f64)],
    exact: &CInterval,
    seed: u64,
) -> Finding {
    let finding = certify_at(route, index, point, exact);
    let Finding::WitnessUnconfirmed { at: None, reason } = &finding else {
        return finding;
    };
    // Points the f64 route cannot evaluate are skipped at once here (domain), so the search
    // costs at most a few evaluations per candidate.
    let (names, ranges) = (route.names(), route.ranges());
    for p in seeded_point_stream(&names, &ranges, seed).take(CANDIDATES) {
        if let Ok(Some(value)) = certified_value(route, index, &p, false) {
            return Finding::ConfirmedElsewhere {
                why: "a singularity, or a value that is not real".into(),
                at: Evaluated { point: p, value },
            };
        }
    }
    Finding::WitnessUnconfirmed {
        reason: format!(
            "{reason}, and it certifies no nonzero value at {CANDIDATES} seeded points either \
             (seed {seed:#x})"
        ),
        at: None,
    }
}

// ----- expressions as written ----------------------------------------------------------

/// Command-line expressions: `a` differentiated by `by` (the jet derivative), optionally
/// minus `b`. Values: `[a' - b, a', b]` with `b`, else `[a']`; every name is a free symbol,
/// calls of unknown names are arbitrary functions with generic samples.
#[derive(Debug)]
pub struct Expressions {
    program: Program,
    needed: Vec<String>,
    /// The derivative of the first root, as exponents of the program's variables.
    exps: Vec<u8>,
    two: bool,
}

impl Expressions {
    /// Plans the route from the texts. Arbitrary functions get the generic samples
    /// ([`generic_sample_text`]) numbered in the order of `first` (those called), then the
    /// rest in sorted order: the zero test numbers the functions of its residual by sorted
    /// name, and a witness is only certified again with the same samples.
    ///
    /// # Errors
    ///
    /// A text that does not parse, a primed built-in, jets too large.
    pub fn new(
        a: &str,
        b: Option<&str>,
        by: &[&str],
        first: &[String],
    ) -> Result<Expressions, AuditError> {
        // More variables than fit are refused by the jet space's size check.
        let order = u32::try_from(by.len()).unwrap_or(u32::MAX);
        let mut roots = vec![(parse_text(|| "the expression".into(), a)?, order)];
        if let Some(b) = b {
            roots.push((parse_text(|| "the second expression".into(), b)?, 0));
        }
        let mut scope = Scope::default();
        for v in by {
            if !scope.vars.iter().any(|x| x == v) {
                scope.vars.push((*v).to_string());
            }
        }
        let mut called = Vec::new();
        for (e, _) in &roots {
            for n in free_names(e) {
                if !scope.vars.contains(&n) && !scope.parameters.contains(&n) {
                    scope.parameters.push(n);
                }
            }
            for f in called_functions(e) {
                if !called.contains(&f) {
                    called.push(f);
                }
            }
        }
        called.sort();
        let mut ordered: Vec<String> = first
            .iter()
            .filter(|f| called.contains(f))
            .cloned()
            .collect();
        for f in called {
            if !ordered.contains(&f) {
                ordered.push(f);
            }
        }
        for (i, f) in ordered.into_iter().enumerate() {
            let text = generic_sample_text(i);
            let e = parse_text(|| format!("sample of `{f}`"), &text)?;
            scope.functions.push((f, e));
        }
        let program = Program::new(&scope, roots)?;
        let mut needed: Vec<String> = program.vars().to_vec();
        for p in &scope.parameters {
            if !needed.contains(p) {
                needed.push(p.clone());
            }
        }
        let mut exps = vec![0u8; program.vars().len()];
        for v in by {
            let i = program
                .vars()
                .iter()
                .position(|x| x == v)
                .ok_or_else(|| AuditError::Missing((*v).to_string()))?;
            exps[i] = exps[i].saturating_add(1);
        }
        Ok(Expressions {
            program,
            needed,
            exps,
            two: b.is_some(),
        })
    }
}

impl Route for Expressions {
    fn names(&self) -> Vec<(String, Option<f64>)> {
        self.needed.iter().map(|n| (n.clone(), None)).collect()
    }

    fn values<S: Scalar>(
        &self,
        point: &[(String, f64)],
        ctx: &S::Ctx,
    ) -> Result<Vec<Option<S>>, AuditError> {
        let mut values = FxHashMap::default();
        for (n, v) in point {
            values.insert(
                n.clone(),
                S::input(*v, ctx).ok_or_else(|| AuditError::Missing(n.clone()))?,
            );
        }
        if let Some(n) = self.needed.iter().find(|n| !values.contains_key(*n)) {
            return Err(AuditError::Missing(n.clone()));
        }
        let jets = self.program.eval_roots(&values, ctx)?;
        let a = jets[0].as_ref().and_then(|j| j.partial(&self.exps, ctx));
        if !self.two {
            return Ok(vec![a]);
        }
        let b = jets[1].as_ref().map(|j| j.value().clone());
        let d = match (&a, &b) {
            (Some(a), Some(b)) => a.sub(b),
            _ => None,
        };
        Ok(vec![d, a, b])
    }
}

// ----- quantities of problem files -----------------------------------------------------

/// One part of a quantity of a problem file.
#[derive(Clone, Debug)]
enum Part {
    /// A linear combination of derivatives of `h` and `T`.
    Combo(Vec<(Coef, Atom)>),
    /// The value of the file's extra text `i`.
    Extra(usize),
    /// `h^TT_ij` (spatial indices from 0) with the direction `n` in extras 0, 1, 2.
    Tt(usize, usize),
    /// A part about the file's background, by the pointwise route.
    Curved(crate::claim::Part),
}

/// The named parts that `texts` use, directly or through other parts, in their order (a
/// part that nothing uses need not be parsed or planned). Names are matched as whole
/// identifiers (runs of letters, digits and `_`).
fn referenced(parts: &[(String, String)], texts: &[(String, String)]) -> Vec<(String, String)> {
    fn words(text: &str, into: &mut rustc_hash::FxHashSet<String>) {
        for w in text.split(|c: char| !(c.is_alphanumeric() || c == '_')) {
            if !w.is_empty() && !into.contains(w) {
                into.insert(w.to_string());
            }
        }
    }
    let mut used = rustc_hash::FxHashSet::default();
    for (_, t) in texts {
        words(t, &mut used);
    }
    let mut keep = vec![false; parts.len()];
    loop {
        let mut grew = false;
        for (k, (name, text)) in parts.iter().enumerate() {
            if !keep[k] && used.contains(name.as_str()) {
                keep[k] = true;
                grew = true;
                words(text, &mut used);
            }
        }
        if !grew {
            break;
        }
    }
    parts
        .iter()
        .zip(keep)
        .filter(|(_, k)| *k)
        .map(|(p, _)| p.clone())
        .collect()
}

/// One problem file's jets and the names it accepts.
#[derive(Debug)]
struct File {
    audit: Audit,
    parameters: Vec<String>,
}

/// A quantity: its name and signed parts, each of one file.
#[derive(Debug)]
struct Quantity {
    claim: String,
    name: String,
    parts: Vec<(usize, f64, Part)>,
}

/// Quantities computed from problem files' texts: claim components, the difference of two
/// files' Riemann components, values of texts in a file's names, the TT part along a
/// direction.
#[derive(Debug)]
pub struct FileQuantities {
    files: Vec<File>,
    quantities: Vec<Quantity>,
}

/// A file to plan: the problem, named parts its texts use, and its texts.
type PlannedFile<'a> = (&'a Problem, &'a [(String, String)], Vec<(String, String)>);

/// The order of derivatives of `h` the parts need.
fn h_order(parts: &[&Part]) -> u32 {
    let mut order = 0;
    for p in parts {
        // The pointwise route needs h to second order.
        if let Part::Curved(_) = p {
            order = 2;
        }
        if let Part::Combo(terms) = p {
            for (_, a) in terms {
                order = order.max(match a.deriv {
                    Deriv::Value => 0,
                    Deriv::D1(_) => 1,
                    Deriv::D2(..) => 2,
                });
            }
        }
    }
    order
}

impl FileQuantities {
    /// Plans the files' jets for the quantities: `files` are the problems with the extra
    /// texts each needs.
    fn plan(
        files: &[PlannedFile<'_>],
        quantities: Vec<Quantity>,
    ) -> Result<FileQuantities, AuditError> {
        let mut planned = Vec::new();
        for (i, (p, defines, extras)) in files.iter().enumerate() {
            let parts: Vec<&Part> = quantities
                .iter()
                .flat_map(|q| q.parts.iter().filter(|(f, ..)| *f == i).map(|(_, _, p)| p))
                .collect();
            planned.push(File {
                audit: Audit::fields_with(p, h_order(&parts), defines, extras)?,
                parameters: p.parameters.iter().map(|(n, _)| n.clone()).collect(),
            });
        }
        Ok(FileQuantities {
            files: planned,
            quantities,
        })
    }

    /// The components of `claims` (as the exact check lists them) of `problem`.
    ///
    /// # Errors
    ///
    /// A text that cannot be planned, a formula coefficient that cannot be enclosed.
    pub fn claims(problem: &Problem, claims: Option<&Claims>) -> Result<Self, AuditError> {
        let mut quantities = Vec::new();
        for spec in claim_specs(claims, problem.source.is_some()) {
            for (name, c) in &spec.components {
                quantities.push(Quantity {
                    claim: spec.key.clone(),
                    name: name.clone(),
                    parts: vec![(0, 1.0, Part::Combo(claim_terms(name, c)?))],
                });
            }
        }
        Self::plan(&[(problem, &[], Vec::new())], quantities)
    }

    /// The 20 independent linearized Riemann components of `a` minus those of `b`, named
    /// `R_txtx`, ... as the comparison names them.
    ///
    /// # Errors
    ///
    /// A text that cannot be planned.
    pub fn riemann_difference(a: &Problem, b: &Problem) -> Result<Self, AuditError> {
        let mut quantities = Vec::new();
        if a.background.is_some() {
            // About a (flat) background: the covariant linearized Riemann tensor of each file
            // by the pointwise route, named in the first file's coordinates.
            let frame = crate::tensor::Frame::covariant(a.coordinates.clone());
            for p in Kind::PureGauge.parts() {
                quantities.push(Quantity {
                    claim: "riemann".into(),
                    name: p.name_in(&frame),
                    parts: vec![(0, 1.0, Part::Curved(p)), (1, -1.0, Part::Curved(p))],
                });
            }
            return Self::plan(&[(a, &[], Vec::new()), (b, &[], Vec::new())], quantities);
        }
        for p in Kind::PureGauge.parts() {
            let name = p.name();
            let combo =
                crate::grid::claims::part(p).expect("a flat formula for every Riemann part");
            let terms = claim_terms(&name, &combo)?;
            quantities.push(Quantity {
                claim: "riemann".into(),
                name,
                parts: vec![
                    (0, 1.0, Part::Combo(terms.clone())),
                    (1, -1.0, Part::Combo(terms)),
                ],
            });
        }
        Self::plan(&[(a, &[], Vec::new()), (b, &[], Vec::new())], quantities)
    }

    /// The values of `texts` (`(name, text)`; expressions in the coordinates and the
    /// problem's parameters, defines and functions, `d_` allowed).
    ///
    /// # Errors
    ///
    /// A text that does not parse or cannot be planned.
    pub fn texts(problem: &Problem, texts: &[(String, String)]) -> Result<Self, AuditError> {
        Self::texts_with(problem, &[], texts)
    }

    /// [`FileQuantities::texts`] with named parts the texts may use: `defines`, each a
    /// `(name, text)` in the file's names and the parts before it, evaluated once per point
    /// (see [`Audit::fields_with`]).
    ///
    /// # Errors
    ///
    /// As [`FileQuantities::texts`].
    pub fn texts_with(
        problem: &Problem,
        defines: &[(String, String)],
        texts: &[(String, String)],
    ) -> Result<Self, AuditError> {
        let quantities = texts
            .iter()
            .enumerate()
            .map(|(i, (name, _))| Quantity {
                claim: "text".into(),
                name: name.clone(),
                parts: vec![(0, 1.0, Part::Extra(i))],
            })
            .collect();
        let defines = referenced(defines, texts);
        Self::plan(&[(problem, &defines, texts.to_vec())], quantities)
    }

    /// The TT part of `problem`'s `h` along the direction whose components are the texts `n`
    /// (`Lambda_ij,kl h_kl` with `P = 1 - n n`): quantities `h - h^TT` for the ten
    /// components `tt`, `tx`, ... (claim `h - h^TT`), then `h^TT` for the six spatial ones
    /// (claim `h^TT`), then, with `printed` (texts of the six spatial components `xx`, `xy`,
    /// `xz`, `yy`, `yz`, `zz` of a TT part computed otherwise), `printed - h^TT` (claim
    /// `printed - h^TT`).
    ///
    /// # Errors
    ///
    /// A text that does not parse or cannot be planned.
    pub fn not_tt(
        problem: &Problem,
        n: &[String; 3],
        printed: Option<&[String; 6]>,
    ) -> Result<Self, AuditError> {
        let value = |mu: usize, nu: usize| {
            Part::Combo(vec![(
                Coef::Dyadic(1.0),
                Atom {
                    field: Field::H,
                    mu: mu as u8,
                    nu: nu as u8,
                    deriv: Deriv::Value,
                },
            )])
        };
        let mut quantities = Vec::new();
        for (mu, nu) in COMPONENTS {
            let mut parts = vec![(0, 1.0, value(mu, nu))];
            if mu > 0 {
                parts.push((0, -1.0, Part::Tt(mu - 1, nu - 1)));
            }
            quantities.push(Quantity {
                claim: "h - h^TT".into(),
                name: component_name(mu, nu),
                parts,
            });
        }
        for (mu, nu) in COMPONENTS.iter().copied().filter(|(m, _)| *m > 0) {
            quantities.push(Quantity {
                claim: "h^TT".into(),
                name: component_name(mu, nu),
                parts: vec![(0, 1.0, Part::Tt(mu - 1, nu - 1))],
            });
        }
        let mut extras: Vec<(String, String)> = n
            .iter()
            .enumerate()
            .map(|(i, t)| (format!("direction n[{i}]"), t.clone()))
            .collect();
        if let Some(texts) = printed {
            let spatial = COMPONENTS.iter().copied().filter(|(m, _)| *m > 0);
            for (k, ((mu, nu), text)) in spatial.zip(texts).enumerate() {
                extras.push((
                    format!("printed h^TT_{}", component_name(mu, nu)),
                    text.clone(),
                ));
                quantities.push(Quantity {
                    claim: "printed - h^TT".into(),
                    name: component_name(mu, nu),
                    parts: vec![
                        (0, 1.0, Part::Extra(3 + k)),
                        (0, -1.0, Part::Tt(mu - 1, nu - 1)),
                    ],
                });
            }
        }
        Self::plan(&[(problem, &[], extras)], quantities)
    }

    /// The index of the quantity `name` of `claim` (`riemann`, `text`, `h - h^TT`, `h^TT`,
    /// or a claim key).
    pub fn index_of(&self, claim: &str, name: &str) -> Option<usize> {
        self.quantities
            .iter()
            .position(|q| q.claim == claim && q.name == name)
    }
}

/// `h^TT_ij = (P_ik P_jl - (1/2) P_ij P_kl) h_kl`, `P = 1 - n n`, with `n` in the extras.
fn tt_part<S: Scalar>(f: &Fields<S>) -> Option<Vec<Vec<S>>> {
    let n = [f.extra(0)?, f.extra(1)?, f.extra(2)?];
    let half = S::from_f64(0.5)?;
    let matrix = |entry: &dyn Fn(usize, usize) -> Option<S>| -> Option<Vec<Vec<S>>> {
        (0..3)
            .map(|i| (0..3).map(|j| entry(i, j)).collect())
            .collect()
    };
    let p = matrix(&|i, j| {
        let delta = S::from_f64(if i == j { 1.0 } else { 0.0 })?;
        delta.sub(&n[i].mul(&n[j])?)
    })?;
    let h = matrix(&|i, j| f.h(i + 1, j + 1))?;
    matrix(&|i, j| {
        let mut acc = S::zero();
        for k in 0..3 {
            for l in 0..3 {
                let lam = p[i][k]
                    .mul(&p[j][l])?
                    .sub(&half.mul(&p[i][j].mul(&p[k][l])?)?)?;
                acc = acc.add(&lam.mul(&h[k][l])?)?;
            }
        }
        Some(acc)
    })
}

fn part_value<S: Scalar>(
    f: &Fields<S>,
    tt: &Option<Option<Vec<Vec<S>>>>,
    curved: &Option<Option<Curved<S>>>,
    part: &Part,
    ctx: &S::Ctx,
) -> Option<S> {
    match part {
        Part::Combo(terms) => {
            let mut acc = S::zero();
            for (c, atom) in terms {
                let c = c.enclose::<S>(ctx)?;
                acc = acc.add(&f.atom(atom)?.mul(&c)?)?;
            }
            Some(acc)
        }
        Part::Extra(i) => f.extra(*i),
        Part::Tt(i, j) => tt.as_ref()?.as_ref().map(|m| m[*i][*j].clone()),
        Part::Curved(p) => {
            let (q, pf) = curved.as_ref()?.as_ref()?;
            crate::grid::claims::curved_part(q, pf, *p)
        }
    }
}

/// The pointwise quantities of one file at a point, with the fields they came from.
type Curved<S> = (crate::pointwise::Quantities<S>, crate::pointwise::Fields<S>);

impl Route for FileQuantities {
    fn names(&self) -> Vec<(String, Option<f64>)> {
        let coords = self.files.first().map_or_else(
            || COORDS.map(String::from).to_vec(),
            |f| f.audit.coordinates().to_vec(),
        );
        let mut out: Vec<(String, Option<f64>)> = coords.into_iter().map(|c| (c, None)).collect();
        for f in &self.files {
            for (n, v) in &f.audit.parameters {
                if !out.iter().any(|(m, _)| m == n) {
                    out.push((n.clone(), Some(*v)));
                }
            }
        }
        out
    }

    fn ranges(&self) -> Vec<(String, (f64, f64))> {
        self.files
            .first()
            .map(|f| f.audit.ranges())
            .unwrap_or_default()
    }

    fn values<S: Scalar>(
        &self,
        point: &[(String, f64)],
        ctx: &S::Ctx,
    ) -> Result<Vec<Option<S>>, AuditError> {
        let mut fields = Vec::with_capacity(self.files.len());
        let mut tts = Vec::with_capacity(self.files.len());
        let mut curved = Vec::with_capacity(self.files.len());
        for (i, f) in self.files.iter().enumerate() {
            let own: Vec<(&str, f64)> = point
                .iter()
                .filter(|(n, _)| f.audit.coordinates().contains(n) || f.parameters.contains(n))
                .map(|(n, v)| (n.as_str(), *v))
                .collect();
            let fl = f.audit.fields_in::<&str, S>(&own, ctx)?;
            let needs_tt = self.quantities.iter().any(|q| {
                q.parts
                    .iter()
                    .any(|(k, _, p)| *k == i && matches!(p, Part::Tt(..)))
            });
            tts.push(needs_tt.then(|| tt_part(&fl)));
            // The curvature chain once per file and point, shared by all its parts.
            let needs_curved = self.quantities.iter().any(|q| {
                q.parts
                    .iter()
                    .any(|(k, _, p)| *k == i && matches!(p, Part::Curved(_)))
            });
            let riemann = self.quantities.iter().any(|q| {
                q.parts.iter().any(|(k, _, p)| {
                    *k == i && matches!(p, Part::Curved(crate::claim::Part::Riemann(_)))
                })
            });
            let needs = crate::pointwise::Needs { riemann };
            curved.push(needs_curved.then(|| fl.curved_quantities(ctx, needs)));
            fields.push(fl);
        }
        Ok(self
            .quantities
            .iter()
            .map(|q| {
                let mut acc = S::zero();
                for (k, sign, part) in &q.parts {
                    let v = part_value(&fields[*k], &tts[*k], &curved[*k], part, ctx)?;
                    acc = if *sign < 0.0 {
                        acc.sub(&v)?
                    } else {
                        acc.add(&v)?
                    };
                }
                Some(acc)
            })
            .collect())
    }
}

#[cfg(test)]
mod tests;
