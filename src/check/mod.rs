//! Checking claims about a perturbation: field equations, gauge conditions, pure gauge.
//!
//! Design decision: every claim reduces to a list of component expressions and an assertion
//! that they all vanish (or, for a claim written `= false`, that one does not). Each
//! component gets its own zero-test verdict, and a claim's status follows from those verdicts
//! by one rule ([`Status::of`]), so "holds" always rests on proofs and "fails" on certified
//! witnesses.

pub mod audit;
pub mod curved;
mod farzone;
pub mod verdicts;

pub use audit::{AUDIT_POINTS, Audited, audit_text, auditable};

use crate::canon::CResult;
use crate::canon::{CanonError, Coeff, Form, Store};
use crate::claim::{Claim, Kind, Part, Plan};
use crate::problem::Problem;
use crate::tensor::{Linearized, Sym4, divergence};
use crate::zero::{Sampling, Verdict, decide};
use std::sync::Arc;

/// The status of a claim or property.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord)]
pub enum Status {
    /// Proved.
    Holds,
    /// Refuted with a certified witness.
    Fails,
    /// Neither.
    Undecided,
}

impl Status {
    /// `holds`, `fails`, `undecided`.
    pub fn label(self) -> &'static str {
        match self {
            Status::Holds => "holds",
            Status::Fails => "fails",
            Status::Undecided => "undecided",
        }
    }

    /// The status of "all these vanish" (`expect_zero`) or "not all vanish" from the
    /// component verdicts.
    ///
    /// No verdicts at all (a claim whose components could not be computed) is undecided:
    /// nothing was checked, so nothing holds or fails (issue 9: a memory limit once left
    /// claims without components, and "all of none vanish" read as a proof).
    pub fn of(verdicts: &[&Verdict], expect_zero: bool) -> Status {
        if verdicts.is_empty() {
            return Status::Undecided;
        }
        let any_nonzero = verdicts.iter().any(|v| matches!(v, Verdict::Nonzero(_)));
        let all_zero = verdicts.iter().all(|v| matches!(v, Verdict::Zero));
        match (expect_zero, any_nonzero, all_zero) {
            (true, true, _) => Status::Fails,
            (true, false, true) => Status::Holds,
            (false, true, _) => Status::Holds,
            (false, false, true) => Status::Fails,
            (_, false, false) => Status::Undecided,
        }
    }
}

/// One component of a claim with its verdict.
#[derive(Clone, Debug)]
pub struct Component {
    /// Its name, e.g. `G_tx - 8 pi T_tx`.
    pub name: String,
    /// The zero-test verdict.
    pub verdict: Verdict,
    /// The simplified expression, when it is not proved zero (rendered only when a report
    /// shows it: see [`Residual::text`]).
    pub residual: Residual,
    /// What the independent evaluation found (see [`Audited`]).
    pub audit: Audited,
}

/// What a component's residual is, kept as a form so that its text is computed only for the
/// components a report shows.
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum Residual {
    /// Proved zero: nothing to show.
    Zero,
    /// The canonical form of the component.
    Form(Form),
    /// A note that replaces the form (e.g. an exact zero the audit contradicted).
    Note(String),
}

impl Residual {
    /// The residual as text for a summary, in the file's terms
    /// ([`Store::to_display_summary`]), cut after [`RESIDUAL_CHARS`] characters with the
    /// number of terms; `None` when it is zero.
    pub fn text(&self, store: &mut Store) -> Option<String> {
        match self {
            Residual::Zero => None,
            Residual::Note(n) => Some(n.clone()),
            Residual::Form(f) => Some(store.to_display_summary(*f, RESIDUAL_CHARS)),
        }
    }

    /// The whole residual as text and as LaTeX, canonical (for JSON: self-contained, in
    /// coordinates and parameters only; the LaTeX is `None` for a note); `None` when it is
    /// zero.
    pub fn whole(&self, store: &mut Store) -> Option<(String, Option<String>)> {
        match self {
            Residual::Zero => None,
            Residual::Note(n) => Some((n.clone(), None)),
            Residual::Form(f) => Some((store.to_text(*f), Some(store.to_latex(*f)))),
        }
    }
}

/// A claim (or, without \[claims\], a property) and what was found.
#[derive(Clone, Debug)]
pub struct ClaimReport {
    /// Which claim: its kind and what the file asserts.
    pub claim: Claim,
    /// Machine key: `field_equations`, `gauge.lorenz`, `pure_gauge`, `source_conservation`
    /// (the claim's [`Kind::key`]).
    pub key: String,
    /// Human description (the claim's [`Kind::title`]).
    pub title: String,
    /// What the file asserts: `Some(true)` vanishing, `Some(false)` not vanishing, `None` when
    /// only reporting.
    pub asserted: Option<bool>,
    /// The outcome (for a report without assertion: whether the property holds).
    pub status: Status,
    /// How it was decided, in words.
    pub method: String,
    /// Every component and its verdict.
    pub components: Vec<Component>,
    /// `Some(n)` when the claim was checked as "every component is O(1/r^n) at fixed
    /// retarded time" (`far_zone_order = n`), not as "every component is 0".
    pub far_zone: Option<u32>,
    /// The radius of a far-zone check as the headings name it (`r` unless the file's
    /// `far_zone_radius` names another coordinate).
    pub far_zone_radius: String,
}

impl ClaimReport {
    /// The report of `claim` with its outcome.
    #[must_use]
    pub fn new(
        claim: Claim,
        status: Status,
        method: String,
        components: Vec<Component>,
    ) -> ClaimReport {
        ClaimReport {
            claim,
            key: claim.kind.key(),
            title: claim.kind.title().into(),
            asserted: claim.asserted,
            status,
            method,
            components,
            far_zone: None,
            far_zone_radius: "r".into(),
        }
    }

    /// The title as asserted (negated for a claim asserted false).
    #[must_use]
    pub fn heading(&self) -> &'static str {
        self.claim.heading()
    }

    /// [`ClaimReport::heading`] with the order of a far-zone check: `vacuum field equations
    /// G1 = 0 up to O(1/r^2)`.
    #[must_use]
    pub fn display_heading(&self) -> String {
        match self.far_zone {
            Some(n) => format!("{} up to O(1/{}^{n})", self.heading(), self.far_zone_radius),
            None => self.heading().to_string(),
        }
    }
}

/// The result of checking a problem.
#[derive(Clone, Debug)]
pub struct CheckReport {
    /// The lines, claims first.
    pub claims: Vec<ClaimReport>,
    /// True if the file had a \[claims\] table.
    pub has_claims: bool,
}

impl CheckReport {
    /// The overall status by the one rule of [`crate::claim::overall`]: fails if an asserted
    /// claim fails, else undecided if a counted claim is, else holds.
    pub fn overall(&self) -> Status {
        crate::claim::overall(
            self.has_claims,
            self.claims.iter().map(|c| (c.asserted, c.status)),
            Status::Fails,
            &[Status::Undecided],
            Status::Holds,
        )
    }

    /// The status of the claim with machine key `key`, if it was checked.
    #[must_use]
    pub fn status_of(&self, key: &str) -> Option<Status> {
        self.claims.iter().find(|c| c.key == key).map(|c| c.status)
    }

    /// What a file may claim about `key` after this check: `Some(true)` if it holds,
    /// `Some(false)` if it fails, `None` if it is undecided or was not checked.
    #[must_use]
    pub fn proved(&self, key: &str) -> Option<bool> {
        match self.status_of(key) {
            Some(Status::Holds) => Some(true),
            Some(Status::Fails) => Some(false),
            _ => None,
        }
    }

    /// True if the independent audit contradicts the exact route somewhere.
    #[must_use]
    pub fn has_defect(&self) -> bool {
        self.claims
            .iter()
            .any(|c| c.components.iter().any(|k| k.audit.is_defect()))
    }

    /// Every component of every claim, in order.
    pub fn components(&self) -> impl Iterator<Item = &Component> {
        self.claims.iter().flat_map(|c| c.components.iter())
    }
}

/// Residuals longer than this are cut in reports.
pub const RESIDUAL_CHARS: usize = 600;

fn verdicts_for(
    store: &mut Store,
    named: Vec<(String, Form)>,
    sampling: &Sampling,
) -> Vec<Component> {
    named
        .into_iter()
        .map(|(name, f)| {
            let verdict = decide(store, f, sampling);
            let residual = if store.is_zero(f) {
                Residual::Zero
            } else {
                Residual::Form(f)
            };
            Component {
                name,
                verdict,
                residual,
                audit: Audited::NotRun("not yet audited".into()),
            }
        })
        .collect()
}

fn method_text(components: &[Component], status: Status, expect_zero: bool) -> String {
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
    match (status, expect_zero) {
        (Status::Holds, true) | (Status::Fails, false) => {
            format!("exact: all {n} components reduce to 0")
        }
        (Status::Fails, true) | (Status::Holds, false) => {
            format!(
                "certified: {nonzero} of {n} components nonzero at a witness point, {zero} proved 0"
            )
        }
        (Status::Undecided, _) => format!(
            "{zero} of {n} proved 0, {undecided} undecided (not reduced to zero; no certified nonzero value), {nonzero} nonzero"
        ),
    }
}

pub(crate) fn claim(
    store: &mut Store,
    claim: Claim,
    named: Vec<(String, Form)>,
    sampling: &Sampling,
) -> ClaimReport {
    let components = verdicts_for(store, named, sampling);
    let expect_zero = claim.asserted.unwrap_or(true);
    let refs: Vec<&Verdict> = components.iter().map(|c| &c.verdict).collect();
    let mut status = Status::of(&refs, expect_zero);
    let mut method = method_text(&components, status, expect_zero);
    let nonzero = refs
        .iter()
        .filter(|v| matches!(v, Verdict::Nonzero(_)))
        .count();
    if !claim.kind.refuted_by_witness() && nonzero > 0 {
        // A nonzero part shows only that this vector is not the one: it decides nothing.
        status = Status::Undecided;
        method = format!(
            "undecided: h is not the gauge transformation of the file's vector ({nonzero} of {} \
             components certified nonzero); another vector may still give h",
            components.len()
        );
    }
    ClaimReport::new(claim, status, method, components)
}

pub(crate) fn limit_report(claim: Claim, e: CanonError) -> ClaimReport {
    ClaimReport::new(
        claim,
        Status::Undecided,
        format!("undecided: {e}"),
        Vec::new(),
    )
}

/// The exact route: each [`Part`] of a claim from the tensor layer's quantities (memoised
/// in [`Linearized`], so a part costs only what its claim's first part computed).
pub struct ExactParts<'a> {
    lin: &'a mut Linearized,
    source: Option<&'a Sym4>,
    conservation: Option<[Form; 4]>,
}

impl<'a> ExactParts<'a> {
    /// The parts of the perturbation `lin` with the source `source` (`None`: vacuum).
    pub fn new(lin: &'a mut Linearized, source: Option<&'a Sym4>) -> ExactParts<'a> {
        ExactParts {
            lin,
            source,
            conservation: None,
        }
    }

    /// The canonical form of `part`.
    ///
    /// # Errors
    ///
    /// An algebra limit.
    pub fn form(&mut self, store: &mut Store, part: Part) -> CResult<Form> {
        let zero = store.zero();
        Ok(match part {
            Part::Conservation(nu) => match self.source {
                None => zero,
                Some(t) => {
                    if self.conservation.is_none() {
                        let coords = std::array::from_fn(|mu| self.lin.coord(mu));
                        self.conservation = Some(divergence(store, t, &coords)?);
                    }
                    self.conservation.expect("computed above")[nu]
                }
            },
            Part::FieldEquation { mu, nu, sourced } => {
                let g = self.lin.einstein(store)?[mu][nu];
                match self.source.filter(|_| sourced) {
                    None => g,
                    Some(t) => {
                        let pi = store.pi();
                        let s = store.mul(pi, t[mu][nu])?;
                        store.linear(&[(&Coeff::one(), g), (&Coeff::int(-8), s)])?
                    }
                }
            }
            Part::Lorenz(nu) => self.lin.lorenz(store)?[nu],
            Part::H(mu, nu) => self.lin.h[mu][nu],
            Part::SpatialTrace => self.lin.spatial_trace(store)?,
            Part::SpatialDivergence(j) => self.lin.spatial_divergence(store, j)?,
            Part::Riemann(idx) => self.lin.riemann_component(store, idx)?,
            // The parts about a background are computed by [`CurvedParts`].
            Part::BackgroundEquation { .. }
            | Part::CurvedFieldEquation { .. }
            | Part::Trace
            | Part::GaugeResidual(..) => {
                return Err(CanonError::Undefined(
                    "a part about a background asked of the flat route".into(),
                ));
            }
        })
    }

    /// Every part of `kind`, named, in report order.
    ///
    /// # Errors
    ///
    /// An algebra limit.
    pub fn named(&mut self, store: &mut Store, kind: Kind) -> CResult<Vec<(String, Form)>> {
        kind.parts()
            .into_iter()
            .map(|p| Ok((p.name(), self.form(store, p)?)))
            .collect()
    }
}

/// Checks every claim of the problem (or, without claims, reports every property).
pub fn check(problem: &mut Problem) -> CheckReport {
    check_with(problem, None)
}

/// The audit's seeded values, started from a problem file's texts before the file is built
/// (see [`check_with`]): the audit needs only the texts, so it runs while the exact route's
/// forms are built. It is used only if the built problem's texts are the same; a job not
/// used is given up when this is dropped.
pub struct EarlyAudit(Option<Arc<audit::SeededJob>>);

impl EarlyAudit {
    /// Starts the audit of `file` on a helper thread, when it will be audited beside the
    /// exact route: a file about a background, or one whose perturbation, source and
    /// defines are written in 300 bytes or more (a flat problem too small to be
    /// worth a thread is audited after the exact route); not for
    /// claims in the far zone, nor when the texts need the built forms (see
    /// `audit::Texts::of_file`).
    #[must_use]
    pub fn start(file: &crate::problem::ProblemFile) -> Option<EarlyAudit> {
        if file.perturbation.is_empty()
            || file
                .claims
                .as_ref()
                .is_some_and(|c| c.far_zone_order.is_some())
        {
            return None;
        }
        let written = |c: &[crate::problem::Component]| -> usize {
            c.iter().map(|c| c.expr.text.len()).sum()
        };
        let size = written(&file.perturbation)
            + file.source.as_deref().map_or(0, written)
            + file
                .defines
                .iter()
                .map(|d| d.expr.text.len())
                .sum::<usize>();
        if !file.has_background() && size < EARLY_AUDIT_BYTES {
            return None;
        }
        let texts = crate::audit::Texts::of_file(file)?;
        let job = Arc::new(audit::SeededJob::new(texts, Sampling::default().seed));
        beside(&job);
        Some(EarlyAudit(Some(job)))
    }

    /// The job, if it is for `texts` and `seed`; else it is given up.
    fn take_for(mut self, texts: &crate::audit::Texts, seed: u64) -> Option<Arc<audit::SeededJob>> {
        self.0.take_if(|job| job.is_for(texts, seed))
    }
}

impl Drop for EarlyAudit {
    fn drop(&mut self) {
        if let Some(job) = &self.0 {
            job.cancel();
        }
    }
}

/// See [`EarlyAudit::start`]: about the size of a flat problem with [`PARALLEL_AUDIT_TERMS`]
/// terms (a scheduling choice only).
const EARLY_AUDIT_BYTES: usize = 300;

/// Hands `job` to the audit helper, a thread started on first use and kept for the process
/// (so that a check hands its audit over in microseconds, not the tens a new thread costs),
/// which runs the jobs in the order given. If the caller takes a job first, the helper is not
/// waited for (it finds the job taken and goes on). No helper could be started, or it has
/// gone: the job stays unclaimed, and the caller runs it.
fn beside(job: &Arc<audit::SeededJob>) {
    let mut helper = AUDIT_HELPER
        .lock()
        .unwrap_or_else(std::sync::PoisonError::into_inner);
    if let Some(tx) = helper.as_ref()
        && tx.send(job.clone()).is_ok()
    {
        return;
    }
    *helper = start_helper();
    if let Some(tx) = helper.as_ref()
        && tx.send(job.clone()).is_err()
    {
        *helper = None;
    }
}

/// The queue of the audit helper ([`beside`]); `None` until it is started.
type Helper = Option<std::sync::mpsc::Sender<Arc<audit::SeededJob>>>;
static AUDIT_HELPER: std::sync::Mutex<Helper> = std::sync::Mutex::new(None);

/// How many times this process has started an audit helper (once, unless one has gone or
/// could not be started).
static HELPERS_STARTED: std::sync::atomic::AtomicUsize = std::sync::atomic::AtomicUsize::new(0);

/// A new audit helper thread, and its queue; `None` if no thread could be started.
fn start_helper() -> Helper {
    HELPERS_STARTED.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
    let (tx, rx) = std::sync::mpsc::channel::<Arc<audit::SeededJob>>();
    std::thread::Builder::new()
        .name("audit".into())
        .spawn(move || {
            for job in rx {
                job.run_beside();
            }
        })
        .ok()?;
    Some(tx)
}

/// [`check`], with the audit perhaps started already from the file's texts (see
/// [`EarlyAudit`]); the report is the same either way.
pub fn check_with(problem: &mut Problem, early: Option<EarlyAudit>) -> CheckReport {
    // Every verdict is checked again through the independent route, which can only take a
    // proof or a witness away, never add one.
    //
    // The audit's values at its seeded points need only the problem's texts: they are
    // computed on a second thread while the exact route works (the two routes share nothing
    // but the parser). The witnesses' audit waits for the exact verdicts. Whichever thread
    // computes the seeded values, the results are the same (see `audit::SeededJob`).
    if let Some(order) = problem.claims.as_ref().and_then(|c| c.far_zone_order) {
        // Every claim checked as "O(1/r^n) at fixed t - r", audited along rays.
        let (claims, has_claims) = farzone::check(problem, order);
        return CheckReport { claims, has_claims };
    }
    let seed = problem.sampling.seed;
    let texts = audit::auditable(problem)
        .ok()
        .filter(|()| early.is_some() || audit_beside(problem))
        .map(|()| crate::audit::Texts::of(problem));
    let Some(texts) = texts else {
        drop(early);
        // Not auditable (the report says why), or small: the audit runs after the exact
        // route on this thread.
        let (mut out, has_claims) = exact_claims(problem);
        audit::audit_claims(problem, &mut out, seed);
        return CheckReport {
            claims: out,
            has_claims,
        };
    };
    let early = early.and_then(|e| e.take_for(&texts, seed));
    let job = early.unwrap_or_else(|| {
        let job = Arc::new(audit::SeededJob::new(texts, seed));
        beside(&job);
        job
    });
    let (mut out, has_claims) = exact_claims(problem);
    job.audit(&mut out);
    CheckReport {
        claims: out,
        has_claims,
    }
}

/// Whether the audit's seeded points are evaluated on a second thread: about a background
/// (where each point runs the whole curvature chain), or from [`PARALLEL_AUDIT_TERMS`]
/// (terms of `h` plus defines) on. Starting a thread cost 50 to 65 us here (measured), and
/// handing a job to the running helper ([`beside`]) and taking its values back still costs
/// 25 to 45 us (measured with every problem audited beside: linear_wave_testbed went from
/// 117 to 142 us), so smaller flat problems (checked in well under a millisecond) audit on
/// one thread. A scheduling choice only: the results are the same.
fn audit_beside(problem: &Problem) -> bool {
    if problem.background.is_some() {
        return true;
    }
    let size: usize = crate::tensor::COMPONENTS
        .iter()
        .map(|&(m, n)| problem.store.num_terms(problem.h[m][n]))
        .sum::<usize>()
        + problem.defines.len();
    size >= PARALLEL_AUDIT_TERMS
}

/// See [`audit_beside`].
const PARALLEL_AUDIT_TERMS: usize = 20;

/// Every claim decided by the exact route, without the audit.
fn exact_claims(problem: &mut Problem) -> (Vec<ClaimReport>, bool) {
    if problem.background.is_some() {
        return curved::exact_claims(problem);
    }
    let store = &mut problem.store;
    let sampling = problem.sampling.clone();
    let mut lin = Linearized::new(store, problem.h);
    let source = problem.source;
    let plan = Plan::of(problem.claims.as_ref(), source.is_some());
    let mut parts = ExactParts::new(&mut lin, source.as_ref());
    let out = plan
        .claims
        .iter()
        .map(|&c| match parts.named(store, c.kind) {
            Ok(named) => claim(store, c, named, &sampling),
            Err(e) => limit_report(c, e),
        })
        .collect();
    (out, plan.has_claims)
}
