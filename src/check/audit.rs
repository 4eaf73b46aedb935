//! Every verdict of the exact route checked again by the independent jet route.
//!
//! A component proved zero is evaluated by `crate::audit` at seeded points; an enclosure
//! that excludes 0 means the proof was wrong, and the component becomes *nonzero* with that
//! witness and a loud note (an internal defect). A certified witness is evaluated again at its
//! own point; if that enclosure contains 0, or the point cannot be evaluated, the component
//! becomes *undecided*. Nothing is ever promoted: the audit can only take a proof or a
//! witness away.

use super::{ClaimReport, Component, Status, method_text};
use crate::audit::expr::tally;
use crate::audit::{Audit, ComponentValue, Texts};
use crate::interval::{CInterval, Interval};
use crate::problem::Problem;
use crate::zero::{Verdict, Witness};
use rustc_hash::FxHashMap;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::{Condvar, Mutex, PoisonError};

/// How many seeded points every proof is evaluated at.
pub const AUDIT_POINTS: usize = 3;

/// What the audit found for one component.
#[derive(Clone, Debug, PartialEq)]
pub enum Audited {
    /// The audit did not run (the reason).
    NotRun(String),
    /// A proof whose value contained 0 at every audit point that could be evaluated.
    ProofConsistent {
        /// Points where the component could be evaluated.
        points: usize,
    },
    /// A witness certified nonzero again at its point.
    WitnessConfirmed,
    /// The exact route proved zero but the independent route certifies a nonzero value: an
    /// internal defect. The verdict is now that witness.
    ProofContradicted,
    /// The witness could not be certified again (its verdict is now undecided).
    WitnessUnconfirmed,
    /// Both routes certify nonzero values, but their enclosures are disjoint: an internal
    /// defect in one of them (the verdict stays nonzero).
    ValuesDisagree(String),
    /// Nothing to audit (undecided by the exact route).
    Skipped,
}

impl Audited {
    /// A short machine label: `not_run`, `consistent`, `confirmed`, `contradicted`,
    /// `unconfirmed`, `disagree`, `skipped`.
    pub fn label(&self) -> &'static str {
        match self {
            Audited::NotRun(_) => "not_run",
            Audited::ProofConsistent { .. } => "consistent",
            Audited::WitnessConfirmed => "confirmed",
            Audited::ProofContradicted => "contradicted",
            Audited::WitnessUnconfirmed => "unconfirmed",
            Audited::ValuesDisagree(_) => "disagree",
            Audited::Skipped => "skipped",
        }
    }

    /// True if the two routes contradict each other (a defect to report).
    pub fn is_defect(&self) -> bool {
        matches!(
            self,
            Audited::ProofContradicted | Audited::ValuesDisagree(_)
        )
    }
}

/// True when the audit can see the same perturbation as the exact route: every component
/// that is not zero has the text it was built from (a derived perturbation has none).
pub fn auditable(problem: &Problem) -> Result<(), String> {
    let has_text = |forms: &[[crate::canon::Form; 4]; 4], texts: &[[Option<String>; 4]; 4]| {
        crate::tensor::COMPONENTS
            .iter()
            .all(|&(m, n)| texts[m][n].is_some() || problem.store.is_zero(forms[m][n]))
    };
    if !has_text(&problem.h, &problem.h_text) {
        return Err("the perturbation was derived, not read from text".into());
    }
    if let Some(t) = &problem.source {
        match &problem.source_text {
            Some(texts) if has_text(t, texts) => {}
            _ => return Err("the source was derived, not read from text".into()),
        }
    }
    Ok(())
}

/// The key of a component's value: the claim's key and the component's name.
pub(crate) fn key(claim: &str, component: &str) -> String {
    // Built by hand: a `format!` costs several times more, once per component and point.
    let mut k = String::with_capacity(claim.len() + 1 + component.len());
    k.push_str(claim);
    k.push('\u{0}');
    k.push_str(component);
    k
}

/// Audits every component of `claims` in place and updates the claims' status and method.
pub fn audit_claims(problem: &Problem, claims: &mut [ClaimReport], seed: u64) {
    if let Err(why) = auditable(problem) {
        return not_run(claims, &why);
    }
    audit_texts(&Texts::of(problem), claims, seed);
}

/// [`audit_claims`] for an auditable problem, from its texts alone (see `Texts`): the
/// texts are parsed and planned once, for the seeded points and the witnesses.
pub fn audit_texts(texts: &Texts, claims: &mut [ClaimReport], seed: u64) {
    match Audit::of_texts(texts) {
        Ok(audit) => {
            let seeded = seeded_values(&audit, seed);
            audit_claims_with(Some(&audit), texts, claims, seed, &seeded);
        }
        Err(e) => not_run(claims, &e.to_string()),
    }
}

/// What the helper of a [`SeededJob`] leaves: its values, the reason there are none, or its
/// panic.
type JobResult = std::thread::Result<Result<Vec<PointValues>, String>>;

/// The audit's seeded values as a job for whichever thread gets to it first: a helper thread
/// started beside the exact route ([`SeededJob::run_beside`]), or the caller once the exact
/// verdicts are in ([`SeededJob::audit`]). On a busy machine the helper may not get a core
/// before the exact route is done; the caller then audits everything itself instead of
/// sleeping until the helper has run (a scheduling choice only: the values are the same).
pub struct SeededJob {
    texts: Texts,
    seed: u64,
    claimed: AtomicBool,
    cancelled: AtomicBool,
    done: Mutex<Option<JobResult>>,
    ready: Condvar,
}

impl SeededJob {
    /// The job for `texts` (the texts of an auditable problem) and `seed`.
    pub fn new(texts: Texts, seed: u64) -> SeededJob {
        SeededJob {
            texts,
            seed,
            claimed: AtomicBool::new(false),
            cancelled: AtomicBool::new(false),
            done: Mutex::new(None),
            ready: Condvar::new(),
        }
    }

    /// True when the job is for `texts` and `seed`.
    pub fn is_for(&self, texts: &Texts, seed: u64) -> bool {
        self.seed == seed && self.texts == *texts
    }

    /// Gives the job up: a helper that has not started will not start, one at work stops
    /// after the point it is evaluating. Nobody may wait for its values afterwards.
    pub fn cancel(&self) {
        self.cancelled.store(true, Ordering::Release);
        self.claimed.store(true, Ordering::Release);
    }

    /// On the helper thread: the seeded values, unless the caller has taken the job.
    pub fn run_beside(&self) {
        if self.claimed.swap(true, Ordering::AcqRel) {
            return;
        }
        let values = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
            let audit = Audit::of_texts(&self.texts).map_err(|e| e.to_string())?;
            Ok(seeded_values_unless(&audit, self.seed, &self.cancelled))
        }));
        *self.done.lock().unwrap_or_else(PoisonError::into_inner) = Some(values);
        self.ready.notify_all();
    }

    /// On the caller's thread, with the exact verdicts: audits `claims` with the helper's
    /// values (waiting for them if the helper is at work), or entirely here if the helper has
    /// not started. A panic of the helper is resumed here.
    pub fn audit(&self, claims: &mut [ClaimReport]) {
        if !self.claimed.swap(true, Ordering::AcqRel) {
            return audit_texts(&self.texts, claims, self.seed);
        }
        let mut done = self.done.lock().unwrap_or_else(PoisonError::into_inner);
        let values = loop {
            if let Some(v) = done.take() {
                break v;
            }
            done = self
                .ready
                .wait(done)
                .unwrap_or_else(PoisonError::into_inner);
        };
        drop(done);
        match values {
            Ok(Ok(values)) => audit_claims_with(None, &self.texts, claims, self.seed, &values),
            Ok(Err(why)) => not_run(claims, &why),
            Err(panic) => std::panic::resume_unwind(panic),
        }
    }
}

/// Every component marked "not audited", with the reason.
pub fn not_run(claims: &mut [ClaimReport], why: &str) {
    for c in claims.iter_mut() {
        for k in &mut c.components {
            k.audit = Audited::NotRun(why.to_string());
        }
        c.method = format!("{}; not audited: {why}", c.method);
    }
}

/// The audit's values at the seeded points, shared by every claim: what the audit of proofs
/// needs, computed from the problem's texts alone, so that it can run beside the exact route
/// (see [`super::check`]).
pub fn seeded_values(audit: &Audit, seed: u64) -> Vec<PointValues> {
    seeded_values_unless(audit, seed, &AtomicBool::new(false))
}

/// [`seeded_values`], stopping before the next point once `cancelled` is set (the values
/// are then incomplete, for nobody: see [`SeededJob::cancel`]).
fn seeded_values_unless(audit: &Audit, seed: u64, cancelled: &AtomicBool) -> Vec<PointValues> {
    let points = audit.seeded_points(seed, AUDIT_POINTS);
    let mut at_points: Vec<PointValues> = Vec::new();
    for p in points {
        if cancelled.load(Ordering::Acquire) {
            break;
        }
        let values = match audit.components_at(&p) {
            Ok(v) => by_key(v),
            Err(_) => FxHashMap::default(),
        };
        at_points.push((p, values));
    }
    at_points
}

/// The audit of `claims` from `texts` (the texts of an auditable problem), with its values
/// at the seeded points already computed ([`seeded_values`]): proofs against those values,
/// witnesses at their own points by `planned`, the audit those values came from when it is
/// at hand (else the texts are planned again, only if there is a witness).
pub fn audit_claims_with(
    planned: Option<&Audit>,
    texts: &Texts,
    claims: &mut [ClaimReport],
    seed: u64,
    at_points: &[PointValues],
) {
    let needs_witness = claims
        .iter()
        .flat_map(|c| &c.components)
        .any(|k| matches!(k.verdict, Verdict::Nonzero(_)));
    let built;
    let audit = match planned {
        Some(a) => Some(a),
        None if needs_witness => match Audit::of_texts(texts) {
            Ok(a) => {
                built = a;
                Some(&built)
            }
            Err(e) => return not_run(claims, &e.to_string()),
        },
        None => None,
    };
    let typical: FxHashMap<&str, f64> = texts
        .parameters()
        .iter()
        .map(|(n, v)| (n.as_str(), *v))
        .collect();
    // Witness points repeat across components (the zero test draws them from one seed):
    // each point is evaluated once. A component's witness names only the symbols its form
    // depends on; the others are filled in where the other witnesses name them, so that
    // components of one seed meet at one point (one evaluation of the whole chain, not one
    // per set of named symbols).
    let shared = shared_values(claims);
    let mut at_witness: FxHashMap<Vec<(String, u64)>, FxHashMap<String, Interval>> =
        FxHashMap::default();
    for c in claims.iter_mut() {
        if c.components.is_empty() {
            // A claim the exact route could not compute (a limit): its report stays as is.
            continue;
        }
        for k in &mut c.components {
            let id = key(&c.key, &k.name);
            k.audit = match (k.verdict.clone(), audit) {
                (Verdict::Zero, _) => audit_proof(k, &id, at_points, seed),
                // `audit` is at hand whenever a verdict is nonzero.
                (Verdict::Nonzero(w), Some(audit)) => {
                    let point = witness_point(audit, &w, &shared, &typical);
                    let mut tag: Vec<(String, u64)> = point
                        .iter()
                        .map(|(n, v)| (n.clone(), v.to_bits()))
                        .collect();
                    tag.sort();
                    let values = at_witness.entry(tag).or_insert_with(|| {
                        audit.components_at(&point).map(by_key).unwrap_or_default()
                    });
                    let value = witness_value(audit, &point, &id, values.get(&id).copied());
                    audit_witness(k, &w, value)
                }
                (Verdict::Nonzero(_) | Verdict::Undecided(_), _) => Audited::Skipped,
            };
        }
        let expect_zero = c.asserted.unwrap_or(true);
        let refs: Vec<&Verdict> = c.components.iter().map(|k| &k.verdict).collect();
        c.status = Status::of(&refs, expect_zero);
        // A disagreement of the two routes is never a pass: a claim written `= false` would
        // otherwise hold on the independent value of a contradicted proof.
        if c.status == Status::Holds && c.components.iter().any(|k| k.audit.is_defect()) {
            c.status = Status::Undecided;
        }
        c.method = format!(
            "{}; {}",
            method_text(&c.components, c.status, expect_zero),
            audit_text(&c.components)
        );
    }
}

fn by_key(values: Vec<ComponentValue>) -> FxHashMap<String, Interval> {
    values
        .into_iter()
        .filter_map(|v| Some((key(&v.claim, &v.component), v.value?)))
        .collect()
}

/// The values that the witnesses of `claims` give a symbol, where they all give it the same
/// value, in order of first appearance.
fn shared_values(claims: &[ClaimReport]) -> Vec<(String, f64)> {
    let mut seen: Vec<(&str, Option<u64>)> = Vec::new();
    for k in claims.iter().flat_map(|c| &c.components) {
        let Verdict::Nonzero(w) = &k.verdict else {
            continue;
        };
        for (name, v) in &w.point {
            match seen.iter_mut().find(|(n, _)| n == name) {
                Some((_, agreed)) => {
                    if *agreed != Some(v.to_bits()) {
                        *agreed = None;
                    }
                }
                None => seen.push((name, Some(v.to_bits()))),
            }
        }
    }
    seen.into_iter()
        .filter_map(|(n, v)| Some((n.to_string(), f64::from_bits(v?))))
        .collect()
}

/// The witness's point with every coordinate and parameter it does not name filled in (the
/// component does not depend on them, so any value serves): the value the other witnesses
/// agree on (`shared`), else a coordinate's default and a parameter's typical value.
fn witness_point(
    audit: &Audit,
    w: &Witness,
    shared: &[(String, f64)],
    typical: &FxHashMap<&str, f64>,
) -> Vec<(String, f64)> {
    let mut named = w.point.clone();
    for (n, v) in shared {
        if !named.iter().any(|(m, _)| m == n) {
            named.push((n.clone(), *v));
        }
    }
    let mut p = audit.complete(&named, 0.5);
    for (name, v) in typical {
        if !p.iter().any(|(n, _)| n == name) {
            p.push(((*name).to_string(), *v));
        }
    }
    p
}

/// The independent enclosure of component `id` at a witness point: `first` (f64 intervals)
/// or, while the enclosure contains 0, multiprecision balls at [`WITNESS_PRECISIONS`] bits
/// (a tiny but real value), so a true witness is not lost to round-off.
fn witness_value(
    audit: &Audit,
    point: &[(String, f64)],
    id: &str,
    first: Option<Interval>,
) -> Option<Interval> {
    let mut best = first;
    for prec in WITNESS_PRECISIONS {
        if best.is_some_and(|v| v.excludes_zero()) {
            break;
        }
        let v = audit
            .components_in::<String, crate::interval::Ball>(point, &prec)
            .ok()
            .and_then(|v| by_key(v).remove(id));
        if v.is_some() {
            best = v;
        }
    }
    best
}

/// A seeded point (coordinate and parameter values) and the enclosure of every component
/// there, by component key (empty when the point cannot be evaluated).
/// A seeded point and the audit's values there, by claim and component.
pub type PointValues = (Vec<(String, f64)>, FxHashMap<String, Interval>);

/// Working precisions (bits) for re-certifying a witness that f64 intervals cannot.
const WITNESS_PRECISIONS: [u32; 3] = [128, 256, 512];

fn audit_proof(k: &mut Component, id: &str, at_points: &[PointValues], seed: u64) -> Audited {
    let mut evaluated = 0;
    for (point, values) in at_points {
        let Some(v) = values.get(id) else { continue };
        evaluated += 1;
        if v.excludes_zero() {
            k.residual = super::Residual::Note(
                "0 by the exact route, contradicted by the independent evaluation".into(),
            );
            k.verdict = Verdict::Nonzero(Witness {
                point: point.clone(),
                value: CInterval::from_real(*v),
                seed,
                chosen: None,
            });
            return Audited::ProofContradicted;
        }
    }
    Audited::ProofConsistent { points: evaluated }
}

fn audit_witness(k: &mut Component, w: &Witness, value: Option<Interval>) -> Audited {
    match value {
        Some(v) if v.excludes_zero() => {
            // Both certify nonzero; their enclosures of the same real value must overlap.
            let exact = w.value.re;
            let overlap =
                w.value.im.contains_zero() && exact.lo() <= v.hi() && v.lo() <= exact.hi();
            if overlap {
                Audited::WitnessConfirmed
            } else {
                Audited::ValuesDisagree(format!(
                    "the exact route encloses the value in {} but the independent route in {v}",
                    w.value
                ))
            }
        }
        other => {
            let why = match other {
                Some(v) => format!("its enclosure there, {v}, contains 0"),
                None => "it cannot evaluate the component there".to_string(),
            };
            k.verdict = Verdict::Undecided(format!(
                "not reduced to zero, and the exact route's witness was not confirmed by the \
                 independent evaluation: {why}"
            ));
            Audited::WitnessUnconfirmed
        }
    }
}

/// How a claim was audited, in words; loud when the routes disagree.
pub fn audit_text(components: &[Component]) -> String {
    let count = |f: fn(&Audited) -> bool| components.iter().filter(|k| f(&k.audit)).count();
    let defects = count(Audited::is_defect);
    if defects > 0 {
        return format!(
            "INTERNAL DEFECT: for {defects} component(s) the exact route and the independent \
             evaluation disagree; the independent value is reported. Please report this \
             (file and command) as a bug"
        );
    }
    if let Some(Audited::NotRun(why)) = components.first().map(|k| &k.audit) {
        return format!("not audited: {why}");
    }
    let proofs = count(|a| matches!(a, Audited::ProofConsistent { .. }));
    let unevaluated = count(|a| matches!(a, Audited::ProofConsistent { points: 0 }));
    let confirmed = count(|a| matches!(a, Audited::WitnessConfirmed));
    let unconfirmed = count(|a| matches!(a, Audited::WitnessUnconfirmed));
    let mut at = format!("{AUDIT_POINTS} seeded points");
    if unevaluated > 0 {
        at.push_str(&format!(" ({unevaluated} could not be evaluated there)"));
    }
    let parts = tally(proofs, &at, confirmed, unconfirmed);
    if parts.is_empty() {
        "nothing to audit".into()
    } else {
        format!("audited: {}", parts.join(", "))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::check::check;

    const WAVE: &str = "name = 'plus wave'\n[parameters]\na = 1e-3\nw = 2.0\n\
        [perturbation]\nxx = 'a*cos(w*(t - z))'\nyy = '-a*cos(w*(t - z))'\n\
        [claims]\nfield_equations = true\npure_gauge = false\n";

    const WRONG: &str = "name = 'wrong sign'\n[parameters]\na = 1e-3\nw = 2.0\n\
        [perturbation]\nxx = 'a*cos(w*(t - z))'\nyy = 'a*cos(w*(t - z))'\n\
        [claims]\nfield_equations = true\n";

    /// Witnesses name only the symbols their component depends on; a symbol they do not name
    /// is filled in with the value the other witnesses agree on (so components of one seed
    /// meet at one point), never with a value two witnesses disagree on. On the point mass
    /// in spherical coordinates, the six nonzero Riemann components of "not pure gauge" name
    /// {m, r} or {m, r, th}: all are completed to one point, and each is still certified.
    #[test]
    fn issue10_witnesses_of_one_seed_meet_at_one_point() {
        let mut p = crate::problem::worked("spherical_point_mass.toml");
        let (mut claims, _) = super::super::exact_claims(&mut p);
        let witnesses: Vec<Witness> = claims
            .iter()
            .flat_map(|c| &c.components)
            .filter_map(|k| match &k.verdict {
                Verdict::Nonzero(w) => Some(w.clone()),
                _ => None,
            })
            .collect();
        assert_eq!(witnesses.len(), 6);
        assert!(witnesses.iter().any(|w| w.point.len() < 3), "{witnesses:?}");
        let shared = shared_values(&claims);
        let texts = Texts::of(&p);
        let audit = Audit::of_texts(&texts).expect("plans");
        let typical = FxHashMap::default();
        let mut points: Vec<Vec<(String, f64)>> = witnesses
            .iter()
            .map(|w| {
                let mut q = witness_point(&audit, w, &shared, &typical);
                q.sort_by(|a, b| a.0.cmp(&b.0));
                q
            })
            .collect();
        for (w, q) in witnesses.iter().zip(&points) {
            for named in &w.point {
                assert!(q.contains(named), "{q:?} keeps {named:?}");
            }
        }
        points.dedup();
        assert_eq!(points.len(), 1, "{points:?}");
        // Each witness is still certified again at the shared point.
        let mut audited = claims.clone();
        audit_claims(&p, &mut audited, p.sampling.seed);
        let riemann = &audited[3];
        assert!(
            riemann
                .method
                .contains("6 witness(es) certified again independently"),
            "{}",
            riemann.method
        );
        assert!(
            audited
                .iter()
                .all(|c| c.components.iter().all(|k| !k.audit.is_defect()))
        );
        // Two witnesses that disagree on a symbol leave it to the default.
        let Verdict::Nonzero(w) = &mut claims[3].components[0].verdict else {
            panic!(
                "the first Riemann component has a witness: {:?}",
                claims[3].components[0]
            );
        };
        w.point[1].1 += 1.0;
        let r = w.point[1].0.clone();
        let shared = shared_values(&claims);
        assert!(!shared.iter().any(|(n, _)| *n == r), "{shared:?}");
        assert!(shared.iter().any(|(n, _)| n == "th"), "{shared:?}");
    }

    /// The audit's seeded points evaluated on a second thread beside the exact route give
    /// exactly the report of the sequential audit (a scheduling choice, nothing else), for
    /// files above and below the size that starts the thread, holding and failing.
    #[test]
    fn issue10_the_audit_beside_the_exact_route_gives_the_sequential_report() {
        let mut threaded = 0;
        for file in [
            "lorenz_oblique.toml",
            "vibrating_rod.toml",
            "wrong_sign_wave.toml",
            "dropped_near_zone.toml",
        ] {
            let mut p = crate::problem::worked(file);
            threaded += usize::from(super::super::audit_beside(&p));
            let beside = check(&mut p);
            let mut q = crate::problem::worked(file);
            let (mut claims, _) = super::super::exact_claims(&mut q);
            audit_claims(&q, &mut claims, q.sampling.seed);
            assert_eq!(
                format!("{:?}", beside.claims),
                format!("{claims:?}"),
                "{file}"
            );
            assert!(claims.iter().all(|c| {
                c.components
                    .iter()
                    .all(|k| !matches!(k.audit, Audited::NotRun(_)))
            }));
        }
        assert!(threaded >= 2, "the thread was started for {threaded} files");
    }

    /// The audit started from a file's texts before the file is built
    /// ([`crate::check::EarlyAudit`], as `lingrav check` does) gives the report of the audit
    /// started after the build, on every worked file; the texts foreseen from the file are
    /// those of the built problem (none are foreseen only for an eccentric orbit).
    #[test]
    fn issue10_the_audit_started_before_the_build_gives_the_same_report() {
        let mut early = 0;
        for name in crate::problem::worked_names() {
            let file = crate::problem::worked_file(&name);
            let mut built = crate::problem::worked(&name);
            match Texts::of_file(&file) {
                Some(t) => assert_eq!(t, Texts::of(&built), "{name}"),
                None => assert!(file.orbit.is_some(), "{name}: no texts foreseen"),
            }
            early += usize::from(crate::check::EarlyAudit::start(&file).is_some());
            let (_, report) = crate::check_file(&file, crate::canon::Limits::default())
                .unwrap_or_else(|e| panic!("{name}: {e:?}"));
            let report = report.unwrap_or_else(|e| panic!("{name}: {e}"));
            let after = crate::check_problem(&mut built).unwrap_or_else(|e| panic!("{name}: {e}"));
            assert_eq!(
                format!("{:?}", report.claims),
                format!("{:?}", after.claims),
                "{name}"
            );
        }
        assert!(early >= 10, "the audit started early for {early} files");
    }

    /// A job given up is not run by a helper that starts later, and a helper at work stops
    /// before its next point: it leaves fewer values than the points, for nobody.
    #[test]
    fn issue10_a_cancelled_job_does_not_run() {
        let p = crate::problem::worked("lorenz_oblique.toml");
        let job = SeededJob::new(Texts::of(&p), p.sampling.seed);
        job.cancel();
        job.run_beside();
        assert!(job.done.lock().unwrap().is_none());
        let audit = Audit::of_texts(&Texts::of(&p)).unwrap();
        let stop = AtomicBool::new(true);
        assert!(seeded_values_unless(&audit, p.sampling.seed, &stop).is_empty());
        stop.store(false, Ordering::Release);
        let all = seeded_values_unless(&audit, p.sampling.seed, &stop);
        assert_eq!(all.len(), AUDIT_POINTS);
    }

    /// Texts foreseen wrongly are not used: a cosmological constant written `1 - 1` is
    /// foreseen nonzero but built as 0, which names the components differently. The job
    /// started from the file is given up, and the report is that of the audit started after
    /// the build, with every component audited.
    #[test]
    fn issue10_texts_foreseen_wrongly_are_not_used() {
        let name = "schwarzschild_slow_rotation.toml";
        let text = std::fs::read_to_string(
            std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
                .join("worked")
                .join(name),
        )
        .expect("readable");
        let text = format!("cosmological_constant = '1 - 1'\n{text}");
        let file = crate::problem::ProblemFile::parse(name, &text).expect("parses");
        let mut built = file.build().expect("builds");
        let foreseen = Texts::of_file(&file).expect("no orbit");
        assert_ne!(foreseen, Texts::of(&built), "the foresight is wrong here");
        let (_, report) = crate::check_file(&file, crate::canon::Limits::default()).unwrap();
        let report = report.unwrap();
        let after = crate::check_problem(&mut built).unwrap();
        assert_eq!(
            format!("{:?}", report.claims),
            format!("{:?}", after.claims)
        );
        assert!(!report.claims.is_empty());
        assert!(report.claims.iter().all(|c| {
            c.components
                .iter()
                .all(|k| !matches!(k.audit, Audited::NotRun(_)))
        }));
    }

    /// Whichever thread takes the seeded job (the helper first, or the caller because the
    /// helper has not started), the report is the sequential one.
    #[test]
    fn issue10_the_seeded_job_gives_the_sequential_report_whoever_runs_it() {
        for file in ["lorenz_oblique.toml", "wrong_sign_wave.toml"] {
            let mut q = crate::problem::worked(file);
            let seed = q.sampling.seed;
            let (sequential, _) = {
                let (mut claims, h) = super::super::exact_claims(&mut q);
                audit_claims(&q, &mut claims, seed);
                (claims, h)
            };
            for helper_first in [true, false] {
                let mut p = crate::problem::worked(file);
                let job = SeededJob::new(Texts::of(&p), seed);
                if helper_first {
                    job.run_beside();
                }
                let (mut claims, _) = super::super::exact_claims(&mut p);
                job.audit(&mut claims);
                // A helper that starts late finds the job taken and does nothing.
                job.run_beside();
                assert_eq!(
                    format!("{claims:?}"),
                    format!("{sequential:?}"),
                    "{file}, helper first: {helper_first}"
                );
            }
        }
    }

    /// The audit helper is started once and kept: it runs the jobs handed to it in turn, and
    /// each report is the sequential one.
    #[test]
    fn issue10_the_audit_helper_is_kept_and_runs_the_jobs_in_turn() {
        use std::sync::atomic::Ordering::Relaxed;
        let mut started = None;
        for round in 0..3 {
            for file in ["lorenz_oblique.toml", "schwarzschild_slow_rotation.toml"] {
                let mut q = crate::problem::worked(file);
                let seed = q.sampling.seed;
                let mut sequential = super::super::exact_claims(&mut q).0;
                audit_claims(&q, &mut sequential, seed);
                let mut p = crate::problem::worked(file);
                let job = std::sync::Arc::new(SeededJob::new(Texts::of(&p), seed));
                super::super::beside(&job);
                let helpers = super::super::HELPERS_STARTED.load(Relaxed);
                assert_eq!(*started.get_or_insert(helpers), helpers, "a new helper");
                // The helper runs the job (within a minute, on the busiest machine).
                let t = std::time::Instant::now();
                while job.done.lock().unwrap().is_none() {
                    assert!(t.elapsed().as_secs() < 60, "the helper never ran the job");
                    std::thread::sleep(std::time::Duration::from_millis(1));
                }
                let mut claims = super::super::exact_claims(&mut p).0;
                job.audit(&mut claims);
                assert_eq!(
                    format!("{claims:?}"),
                    format!("{sequential:?}"),
                    "{file}, round {round}"
                );
            }
        }
    }

    /// A proof that the exact route got wrong (simulated by overwriting a failing component's
    /// verdict with Zero) must be caught: the claim fails with the independent witness and
    /// the method says loudly that the routes disagree.
    #[test]
    fn issue9_a_false_proof_is_caught_and_reported_as_a_defect() {
        let mut p = crate::problem::from_str("wrong.toml", WRONG).unwrap();
        let mut report = check(&mut p);
        let fe = &mut report.claims[0];
        assert_eq!(fe.status, Status::Fails);
        let failing: Vec<usize> = (0..fe.components.len())
            .filter(|&i| matches!(fe.components[i].verdict, Verdict::Nonzero(_)))
            .collect();
        assert!(!failing.is_empty());
        for &i in &failing {
            fe.components[i].verdict = Verdict::Zero;
        }
        fe.status = Status::Holds;
        audit_claims(&p, &mut report.claims, 7);
        let fe = &report.claims[0];
        assert_eq!(fe.status, Status::Fails, "{}", fe.method);
        assert!(fe.method.contains("INTERNAL DEFECT"), "{}", fe.method);
        for &i in &failing {
            assert_eq!(fe.components[i].audit, Audited::ProofContradicted);
            assert!(matches!(fe.components[i].verdict, Verdict::Nonzero(_)));
        }
    }

    /// A contradicted proof under a claim written `= false` does not make the claim hold:
    /// the claim is undecided and the report has a defect (the command exits 1).
    #[test]
    fn a_defect_under_a_false_claim_is_never_a_pass() {
        let text = WRONG.replace("field_equations = true", "field_equations = false");
        assert_ne!(
            text, WRONG,
            "the test file has a field_equations claim to negate"
        );
        let mut p = crate::problem::from_str("wrong.toml", &text).unwrap();
        let mut report = check(&mut p);
        let fe = &mut report.claims[0];
        assert_eq!(fe.status, Status::Holds, "nonzero, as claimed");
        for k in &mut fe.components {
            k.verdict = Verdict::Zero;
        }
        fe.status = Status::Fails;
        audit_claims(&p, &mut report.claims, 7);
        let fe = &report.claims[0];
        assert!(fe.method.contains("INTERNAL DEFECT"), "{}", fe.method);
        assert_eq!(fe.status, Status::Undecided, "{}", fe.method);
        assert!(report.has_defect());
    }

    /// A witness the independent route cannot confirm becomes undecided, never "fails".
    #[test]
    fn issue9_an_unconfirmed_witness_becomes_undecided() {
        let mut p = crate::problem::from_str("wave.toml", WAVE).unwrap();
        let mut report = check(&mut p);
        let fe = report
            .claims
            .iter_mut()
            .find(|c| c.key == "field_equations")
            .unwrap();
        assert_eq!(fe.status, Status::Holds);
        // Pretend the exact route certified G_tt nonzero at a point: the audit finds 0 there.
        fe.components[0].verdict = Verdict::Nonzero(Witness {
            point: vec![("t".into(), 0.5), ("z".into(), 0.25)],
            value: CInterval::from_real(Interval::new(1.0, 2.0).unwrap()),
            seed: 1,
            chosen: None,
        });
        audit_claims(&p, &mut report.claims, 7);
        let fe = report
            .claims
            .iter()
            .find(|c| c.key == "field_equations")
            .unwrap();
        assert_eq!(fe.components[0].audit, Audited::WitnessUnconfirmed);
        assert!(matches!(fe.components[0].verdict, Verdict::Undecided(_)));
        assert_eq!(fe.status, Status::Undecided);
    }

    /// A claim that fails by a tiny but real amount: f64 intervals of the independent route
    /// lose it to cancellation, balls certify the witness again, and the claim stays failing
    /// instead of becoming undecided.
    #[test]
    fn issue9_a_tiny_but_certified_failure_stays_a_failure() {
        let tiny = "name = 'almost a wave'\n[parameters]\na = 1e-3\nw = 2.0\n\
            [perturbation]\nxx = 'a*cos(w*(t - z))*(1 + 1e-30*x^2)'\nyy = '-a*cos(w*(t - z))'\n\
            [claims]\nfield_equations = true\n";
        let mut p = crate::problem::from_str("tiny.toml", tiny).unwrap();
        let report = check(&mut p);
        let fe = &report.claims[0];
        assert_eq!(fe.status, Status::Fails, "{}", fe.method);
        let failing: Vec<&Component> = fe
            .components
            .iter()
            .filter(|k| matches!(k.verdict, Verdict::Nonzero(_)))
            .collect();
        assert!(!failing.is_empty());
        for k in failing {
            assert_eq!(k.audit, Audited::WitnessConfirmed, "{}", k.name);
            // f64 intervals alone do not certify it: the balls did.
            let Verdict::Nonzero(w) = &k.verdict else {
                unreachable!()
            };
            let audit = Audit::new(&p).unwrap();
            let point = audit.complete(&w.point, 0.5);
            let v = audit.components_at(&point).unwrap();
            let v = by_key(v).remove(&key("field_equations", &k.name)).unwrap();
            assert!(v.contains_zero(), "{}: {v}", k.name);
        }
    }

    #[test]
    fn verdicts_of_a_correct_file_are_all_audited() {
        let mut p = crate::problem::from_str("wave.toml", WAVE).unwrap();
        let report = check(&mut p);
        for c in &report.claims {
            assert_eq!(c.status, Status::Holds, "{}: {}", c.key, c.method);
            assert!(c.method.contains("audited:"), "{}", c.method);
            for k in &c.components {
                assert!(
                    matches!(
                        k.audit,
                        Audited::ProofConsistent { points: 1.. } | Audited::WitnessConfirmed
                    ),
                    "{} {}: {:?}",
                    c.key,
                    k.name,
                    k.audit
                );
            }
        }
    }

    /// A claim with no verdicts (its components could not be computed) is undecided, whatever
    /// it asserts; "all of none vanish" is no proof.
    #[test]
    fn issue9_no_components_is_undecided_not_a_verdict() {
        assert_eq!(Status::of(&[], true), Status::Undecided);
        assert_eq!(Status::of(&[], false), Status::Undecided);
    }
}
