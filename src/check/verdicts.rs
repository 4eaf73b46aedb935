//! Verdicts of any command audited by an independent route, and changed as the findings
//! demand.
//!
//! The claims of a problem file are audited in [`super::audit`]; every other verdict (a
//! command-line expression, the derived statements of `project`, `gauge` and `compare`)
//! goes through [`audit_verdicts`] here, with a `Route` that evaluates the quantities from
//! their texts. A finding only ever takes a proof or a witness away: a contradicted proof
//! becomes nonzero with the independent witness, an unconfirmed witness undecided.

use crate::audit::AuditError;
use crate::audit::expr::{Finding, Route, audit_proofs, audit_witness, complete};
use crate::interval::CInterval;
use crate::zero::{Verdict, Witness};

/// The exact verdicts `verdicts` audited by `route` (`index` maps a verdict's position to the
/// route's quantity; `None`: no independent formula) and changed as the findings demand.
/// Proofs share seeded points; each witness is certified at its own point.
pub fn audit_verdicts<R: Route>(
    route: &Result<R, AuditError>,
    verdicts: &mut [Verdict],
    index: impl Fn(usize) -> Option<usize>,
    seed: u64,
) -> Vec<Finding> {
    let unavailable = |v: &Verdict, why: String| match v {
        Verdict::Zero => Finding::NotAudited(why),
        Verdict::Nonzero(_) => Finding::WitnessUnconfirmed {
            reason: why,
            at: None,
        },
        Verdict::Undecided(_) => Finding::Skipped,
    };
    let findings: Vec<Finding> = match route {
        Err(e) => verdicts
            .iter()
            .map(|v| {
                unavailable(
                    v,
                    format!("the independent route cannot read the texts: {e}"),
                )
            })
            .collect(),
        Ok(route) => {
            let proofs: Vec<(usize, usize)> = (0..verdicts.len())
                .filter(|&i| matches!(verdicts[i], Verdict::Zero))
                .filter_map(|i| Some((i, index(i)?)))
                .collect();
            let which: Vec<usize> = proofs.iter().map(|&(_, q)| q).collect();
            let mut proved: Vec<Option<Finding>> = vec![None; verdicts.len()];
            for (&(i, _), f) in proofs.iter().zip(audit_proofs(route, &which, seed)) {
                proved[i] = Some(f);
            }
            verdicts
                .iter()
                .enumerate()
                .map(|(i, v)| match (v, index(i)) {
                    (_, None) => unavailable(v, "no independent formula for it".into()),
                    (Verdict::Zero, Some(_)) => proved[i].take().unwrap_or(Finding::Skipped),
                    (Verdict::Nonzero(w), Some(q)) => {
                        let point = complete(route, &w.point, seed);
                        audit_witness(route, q, &point, &w.value, seed)
                    }
                    (Verdict::Undecided(_), Some(_)) => Finding::Skipped,
                })
                .collect()
        }
    };
    for (v, f) in verdicts.iter_mut().zip(&findings) {
        apply(v, f, seed);
    }
    findings
}

/// What a finding does to a verdict: only ever takes a proof or a witness away.
fn apply(v: &mut Verdict, f: &Finding, seed: u64) {
    match f {
        Finding::ProofContradicted(e) => {
            *v = match e.value.interval() {
                Some(iv) => Verdict::Nonzero(Witness {
                    point: e.point.clone(),
                    value: CInterval::from_real(iv),
                    seed,
                    chosen: None,
                }),
                // f64 interval bounds are finite; never "zero" in any case.
                None => Verdict::Undecided(f.method(seed)),
            };
        }
        Finding::WitnessUnconfirmed { reason, .. } => {
            *v = Verdict::Undecided(format!(
                "not reduced to zero, and the exact route's witness was not confirmed by the \
                 independent evaluation: {reason}"
            ));
        }
        _ => {}
    }
}
