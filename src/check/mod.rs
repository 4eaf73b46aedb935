//! Checking claims about a perturbation: field equations, gauge conditions, pure gauge.
//!
//! Design decision: every claim reduces to a list of component expressions and an assertion
//! that they all vanish (or, for a claim written `= false`, that one does not). Each
//! component gets its own zero-test verdict, and a claim's status follows from those verdicts
//! by one rule ([`Status::of`]), so "holds" always rests on proofs and "fails" on certified
//! witnesses.

pub mod audit;
pub mod verdicts;

pub use audit::{AUDIT_POINTS, Audited, audit_text, auditable};

use crate::canon::{CanonError, Coeff, Form, Store};
use crate::problem::{Gauge, Problem};
use crate::tensor::{COORDS, Linearized, Sym4, divergence, index_name};
use crate::zero::{Sampling, Verdict, decide};

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
    /// The residual as text, cut after [`RESIDUAL_CHARS`] characters with the number of
    /// terms; `None` when it is zero.
    pub fn text(&self, store: &mut Store) -> Option<String> {
        match self {
            Residual::Zero => None,
            Residual::Note(n) => Some(n.clone()),
            Residual::Form(f) => {
                let t = store.to_text(*f);
                Some(if t.len() > RESIDUAL_CHARS {
                    let cut: String = t.chars().take(RESIDUAL_CHARS).collect();
                    format!("{cut}... ({} terms)", store.num_terms(*f))
                } else {
                    t
                })
            }
        }
    }
}

/// A claim (or, without \[claims\], a property) and what was found.
#[derive(Clone, Debug)]
pub struct ClaimReport {
    /// Machine key: `field_equations`, `gauge.lorenz`, `pure_gauge`, `source_conservation`.
    pub key: String,
    /// Human description.
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
    /// The overall status: fails if any asserted claim fails, else undecided if any is.
    pub fn overall(&self) -> Status {
        let counted: Vec<&ClaimReport> = self
            .claims
            .iter()
            .filter(|c| c.asserted.is_some() || !self.has_claims)
            .collect();
        if self.has_claims && counted.iter().any(|c| c.status == Status::Fails) {
            Status::Fails
        } else if counted.iter().any(|c| c.status == Status::Undecided) {
            Status::Undecided
        } else {
            Status::Holds
        }
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

fn claim(
    store: &mut Store,
    key: &str,
    title: &str,
    asserted: Option<bool>,
    named: Vec<(String, Form)>,
    sampling: &Sampling,
) -> ClaimReport {
    let components = verdicts_for(store, named, sampling);
    let expect_zero = asserted.unwrap_or(true);
    let refs: Vec<&Verdict> = components.iter().map(|c| &c.verdict).collect();
    let status = Status::of(&refs, expect_zero);
    let method = method_text(&components, status, expect_zero);
    ClaimReport {
        key: key.into(),
        title: title.into(),
        asserted,
        status,
        method,
        components,
    }
}

fn limit_report(key: &str, title: &str, asserted: Option<bool>, e: CanonError) -> ClaimReport {
    ClaimReport {
        key: key.into(),
        title: title.into(),
        asserted,
        status: Status::Undecided,
        method: format!("undecided: {e}"),
        components: Vec::new(),
    }
}

/// The field-equation residuals G1_{mu nu} - 8 pi T_{mu nu}.
pub fn field_equation_residuals(
    store: &mut Store,
    lin: &mut Linearized,
    source: Option<&Sym4>,
) -> Result<Vec<(String, Form)>, CanonError> {
    let g = lin.einstein(store)?;
    let pi = store.pi();
    let eight_pi = store.scale(pi, &Coeff::int(8))?;
    let mut out = Vec::new();
    for (mu, nu) in crate::problem::COMPONENTS {
        let mut r = g[mu][nu];
        let name = match source {
            Some(t) => {
                let s = store.mul(eight_pi, t[mu][nu])?;
                r = store.sub(r, s)?;
                format!("G_{0} - 8*pi*T_{0}", index_name(&[mu, nu]))
            }
            None => format!("G_{}", index_name(&[mu, nu])),
        };
        out.push((name, r));
    }
    Ok(out)
}

fn gauge_components(
    store: &mut Store,
    lin: &mut Linearized,
    g: Gauge,
) -> Result<Vec<(String, Form)>, CanonError> {
    Ok(match g {
        Gauge::Lorenz => {
            let v = lin.lorenz(store)?;
            (0..4)
                .map(|nu| (format!("d^mu hbar_mu{}", COORDS[nu]), v[nu]))
                .collect()
        }
        Gauge::Tt => lin.tt_conditions(store)?,
        Gauge::Synchronous => lin.synchronous_conditions(),
    })
}

/// Checks every claim of the problem (or, without claims, reports every property).
pub fn check(problem: &mut Problem) -> CheckReport {
    // Every verdict is checked again through the independent route, which can only take a
    // proof or a witness away, never add one.
    //
    // The audit's values at its seeded points need only the problem's texts: they are
    // computed on a second thread while the exact route works (the two routes share nothing
    // but the parser). The witnesses' audit waits for the exact verdicts. Whichever thread
    // computes the seeded values, the results are the same (see `audit::SeededJob`).
    let seed = problem.sampling.seed;
    let texts = audit::auditable(problem)
        .ok()
        .filter(|()| audit_beside(problem))
        .map(|()| crate::audit::Texts::of(problem));
    let Some(texts) = texts else {
        // Not auditable (the report says why), or small: the audit runs after the exact
        // route on this thread.
        let (mut out, has_claims) = exact_claims(problem);
        audit::audit_claims(problem, &mut out, seed);
        return CheckReport {
            claims: out,
            has_claims,
        };
    };
    // The helper is detached: if the caller takes the job first, it is not waited for (it
    // finds the job taken and ends).
    let job = std::sync::Arc::new(audit::SeededJob::new(texts, seed));
    let helper = job.clone();
    let _detached = std::thread::Builder::new()
        .name("audit".into())
        .spawn(move || helper.run_beside());
    let (mut out, has_claims) = exact_claims(problem);
    // No thread could be started: the job is still unclaimed, and runs here.
    job.audit(&mut out);
    CheckReport {
        claims: out,
        has_claims,
    }
}

/// Whether the audit's seeded points are evaluated on a second thread: from
/// [`PARALLEL_AUDIT_TERMS`] (terms of `h` plus defines) on. Starting a thread costs about
/// 0.1 ms here, so smaller problems (checked in well under a millisecond) audit on one
/// thread. A scheduling choice only: the results are the same.
fn audit_beside(problem: &Problem) -> bool {
    let size: usize = crate::problem::COMPONENTS
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
    let store = &mut problem.store;
    let sampling = problem.sampling.clone();
    let mut lin = Linearized::new(store, problem.h);
    let source = problem.source;
    let mut out = Vec::new();
    let claims = problem.claims.clone();
    let has_claims = claims.is_some();

    // Source conservation first: a source that is not conserved cannot satisfy the equations.
    if let Some(t) = &source {
        let coords = std::array::from_fn(|mu| lin.coord(mu));
        let title = crate::problem::titles::SOURCE_CONSERVATION;
        let asserted = match &claims {
            Some(c) => c.field_equations.filter(|b| *b),
            None => None,
        };
        out.push(match divergence(store, t, &coords) {
            Ok(v) => {
                let named = (0..4)
                    .map(|nu| (format!("d^mu T_mu{}", COORDS[nu]), v[nu]))
                    .collect();
                claim(
                    store,
                    "source_conservation",
                    title,
                    asserted,
                    named,
                    &sampling,
                )
            }
            Err(e) => limit_report("source_conservation", title, asserted, e),
        });
    }

    let fe_title = if source.is_some() {
        crate::problem::titles::FIELD_EQUATIONS
    } else {
        crate::problem::titles::VACUUM_FIELD_EQUATIONS
    };
    let (fe, gauges, pg) = match &claims {
        Some(c) => (c.field_equations, c.gauge.clone(), c.pure_gauge),
        None => (None, Gauge::ALL.to_vec(), None),
    };
    if fe.is_some() || !has_claims {
        out.push(
            match field_equation_residuals(store, &mut lin, source.as_ref()) {
                Ok(named) => claim(store, "field_equations", fe_title, fe, named, &sampling),
                Err(e) => limit_report("field_equations", fe_title, fe, e),
            },
        );
    }
    for g in gauges {
        let key = format!("gauge.{}", g.name());
        let asserted = has_claims.then_some(true);
        out.push(match gauge_components(store, &mut lin, g) {
            Ok(named) => claim(store, &key, g.title(), asserted, named, &sampling),
            Err(e) => limit_report(&key, g.title(), asserted, e),
        });
    }
    if pg.is_some() || !has_claims {
        let title = crate::problem::titles::PURE_GAUGE;
        out.push(match lin.riemann(store) {
            Ok(r) => {
                let named = r
                    .into_iter()
                    .map(|(idx, f)| (format!("R_{}", index_name(&idx)), f))
                    .collect();
                claim(store, "pure_gauge", title, pg, named, &sampling)
            }
            Err(e) => limit_report("pure_gauge", title, pg, e),
        });
    }
    (out, has_claims)
}
