//! `lingrav gauge --to-tt`: the gauge vector that brings a Lorenz-gauge plane wave to TT
//! gauge, constructed by [`crate::gauge::plane`] after the wave vector is proved null and
//! the input proved in Lorenz gauge, each verdict audited. The rest of the command (the
//! transformation, its verification, the output file) is in `gauge.rs`.

use crate::audit::expr::{FileQuantities, Finding, summary};
use crate::canon::Form;
use crate::check::verdicts::audit_verdicts;
use crate::claim::Part;
use crate::cli::audit::audit_json;
use crate::cli::out::{Failure, Outcome, gave_up, limit_in, print};
use crate::cli::report::{Format, json, verdict_json};
use crate::gauge::lorenz_verdicts;
use crate::gauge::plane::{PlaneError, find_wave, tt_gauge_vector};
use crate::problem::{Claims, Gauge, Problem};
use crate::zero::Verdict;
use std::fmt::Write as _;

/// The report of `gauge` as it is assembled: text and JSON side by side, every audit
/// finding, and whether one of them is a defect.
pub(super) struct Report {
    /// The text report so far.
    pub(super) s: String,
    /// The JSON report so far.
    pub(super) j: serde_json::Value,
    /// An audit contradicted the exact route.
    pub(super) defect: bool,
    /// The audit's findings, for `--audit-points`.
    pub(super) audits: Vec<Finding>,
    /// The format asked for.
    pub(super) format: Format,
}

/// How the construction ended: with the gauge vector, or with the command's end (its
/// report printed).
pub(super) enum Built {
    /// The constructed xi_mu, index down.
    Vector([Form; 4]),
    /// The command ended, undecided.
    Ended(Outcome),
}

/// Constructs the gauge vector to TT gauge for the plane wave of `p` (its wave vector read
/// off the perturbation, or `k_given`, index down), after proving k null and the input in
/// Lorenz gauge; every verdict is audited and reported into `r`.
pub(super) fn construct(
    p: &mut Problem,
    k_given: Option<[Form; 4]>,
    r: &mut Report,
) -> Result<Built, Failure> {
    let sampling = p.sampling.clone();
    let seed = sampling.seed;
    let h = p.h;
    let wave = match find_wave(&mut p.store, &sampling, &h, k_given) {
        Ok(w) => w,
        Err(e) => return plane_failure(e, r),
    };
    let st = &mut p.store;
    let k_up: Vec<String> = (0..4)
        .map(|mu| {
            let f = if mu == 0 {
                st.neg(wave.k[0]).unwrap_or(wave.k[0])
            } else {
                wave.k[mu]
            };
            st.to_text(f)
        })
        .collect();
    let _ = writeln!(
        r.s,
        "plane wave  phase k_mu x^mu = {}, k^mu = ({})  [{}]",
        st.to_text(wave.phase),
        k_up.join(", "),
        if wave.detected {
            "read off the perturbation"
        } else {
            "from --wave-vector"
        }
    );
    // k null, audited from the printed k (the texts shown above).
    let k_texts: Vec<String> = wave.k.iter().map(|f| p.store.to_text(*f)).collect();
    let norm = format!(
        "-({})^2 + ({})^2 + ({})^2 + ({})^2",
        k_texts[0], k_texts[1], k_texts[2], k_texts[3]
    );
    let route = FileQuantities::texts(p, &[("k_mu k^mu".into(), norm)]);
    let mut null = [wave.null.clone()];
    let finding = audit_verdicts(&route, &mut null, |_| Some(0), seed).remove(0);
    r.defect |= finding.is_defect();
    let [null] = null;
    r.j["plane_wave"] = serde_json::json!({
        "phase": p.store.to_text(wave.phase),
        "k_up": k_up,
        "detected": wave.detected,
        "k_null": { "verdict": verdict_json(&null), "audit": audit_json(&finding, seed) },
    });
    let _ = writeln!(
        r.s,
        "            k null (k_mu k^mu = 0): {}; {}",
        match &null {
            Verdict::Zero => "proved".to_string(),
            Verdict::Nonzero(w) => format!("no, nonzero {w}: not a vacuum wave"),
            Verdict::Undecided(why) => format!("undecided ({why})"),
        },
        finding.method(seed)
    );
    r.audits.push(finding);
    // The construction starts from Lorenz gauge; say so if the input is not in it.
    let (div, mut verdicts) = lorenz_verdicts(&mut p.store, &h, &sampling)?;
    let lorenz = Claims {
        gauge: vec![Gauge::Lorenz],
        ..Claims::default()
    };
    let route = FileQuantities::claims(p, Some(&lorenz));
    let index = |nu: usize| {
        let name = Part::Lorenz(nu).name();
        route.as_ref().ok()?.index_of("gauge.lorenz", &name)
    };
    let findings = audit_verdicts(&route, &mut verdicts, index, seed);
    for (nu, (v, finding)) in verdicts.iter().zip(&findings).enumerate() {
        match v {
            Verdict::Zero => {}
            Verdict::Nonzero(w) => {
                let r = match finding {
                    Finding::ProofContradicted(_) => {
                        format!("0 by the exact route, but {}", finding.method(seed))
                    }
                    _ => p.store.to_text(div[nu]),
                };
                return Err(Failure::Input(miette::miette!(
                    help = "bring the wave to Lorenz gauge first (see `lingrav gauge --vector`), \
                            or project its TT part with `lingrav project`",
                    "the TT construction needs a Lorenz-gauge wave, but {} = {r} \
                     is nonzero {w}",
                    Part::Lorenz(nu).name()
                )));
            }
            Verdict::Undecided(why) => {
                let reason = format!(
                    "cannot decide whether the input is in Lorenz gauge: {} ({why})",
                    Part::Lorenz(nu).name()
                );
                return stop_undecided(&reason, r);
            }
        }
    }
    let refs: Vec<&Finding> = findings.iter().collect();
    let _ = writeln!(
        r.s,
        "            input in Lorenz gauge: proved; {}",
        summary(&refs, seed)
    );
    r.j["input_lorenz"] = serde_json::json!({ "status": "holds", "audit": summary(&refs, seed) });
    r.audits.extend(findings);
    match tt_gauge_vector(&mut p.store, &wave, &h) {
        Ok(xi) => Ok(Built::Vector(xi)),
        Err(e) => plane_failure(e, r),
    }
}

fn plane_failure(e: PlaneError, r: &mut Report) -> Result<Built, Failure> {
    match e {
        PlaneError::NotApplicable(why) => Err(Failure::Input(miette::miette!(
            help = "--to-tt needs a plane wave in Lorenz gauge: every component a function of \
                    one phase k_mu x^mu (sin, cos, exp or a derivative F'(..) of an arbitrary \
                    function of it)",
            "the TT construction does not apply: {why}"
        ))),
        PlaneError::Undecided(why) => {
            if let Some(limit) = limit_in(&why) {
                return Err(gave_up(&limit));
            }
            // The text report is the reason alone; the JSON one keeps what it has.
            r.s.clear();
            stop_undecided(&why, r)
        }
    }
}

/// Ends the command as undecided for `reason` (not a limit): the report so far and the
/// reason, in text or JSON.
fn stop_undecided(reason: &str, r: &mut Report) -> Result<Built, Failure> {
    let _ = writeln!(r.s, "undecided: {reason}");
    r.j["result"] = "undecided".into();
    r.j["reason"] = reason.into();
    print(&match r.format {
        Format::Text => std::mem::take(&mut r.s),
        Format::Json => json(&r.j),
    })?;
    Ok(Built::Ended(Outcome::Undecided))
}
