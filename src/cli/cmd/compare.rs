//! `lingrav compare`: are two perturbations the same physics in different gauges? The 20
//! independent components of R[A] - R[B] decided exactly and audited from both files' texts.

use crate::audit::expr::{Finding, summary};
use crate::check::Status;
use crate::cli::audit::{AuditedFormat, point_lines, points_json};
use crate::cli::limits::{LimitArgs, load_into, load_with};
use crate::cli::out::gave_up;
use crate::cli::out::{Failure, Outcome, print};
use crate::cli::report::{Format, heading, json};
use crate::gauge::audit::audit_comparison;
use crate::gauge::compare::{Comparison, compare, import};
use crate::zero::Verdict;
use clap::Args;
use std::fmt::Write as _;
use std::path::PathBuf;

/// Differing components listed in text output.
const LISTED: usize = 10;

/// Arguments of `lingrav compare`.
#[derive(Args, Debug)]
pub struct CompareArgs {
    /// The first problem file.
    first: PathBuf,
    /// The second problem file.
    second: PathBuf,
    #[command(flatten)]
    shown: AuditedFormat,
    #[command(flatten)]
    limits: LimitArgs,
}

/// `lingrav compare`.
pub fn run(a: CompareArgs) -> Result<Outcome, Failure> {
    let limits = a.limits.start();
    let mut pa = load_with(&a.first, limits)?;
    // The second file is built once, straight into the first file's store.
    let mut pb = load_into(&a.second, &mut pa.store)?;
    let imported = {
        let sampling = pa.sampling.clone();
        import(&mut pa.store, &sampling, &pa.parameters, &pa.functions, &pb)
    };
    let ha = pa.h;
    let mut cmp: Comparison = if pa.is_flat_cartesian() && pb.is_flat_cartesian() {
        compare(&mut pa.store, &ha, &imported.h, &imported.sampling)?
    } else {
        about_background(&mut pa, &pb, &imported.h, &imported.sampling)?
    };
    let seed = imported.sampling.seed;
    let findings = audit_comparison(&mut cmp, &pa, &mut pb, seed);
    let finding_refs: Vec<&Finding> = findings.iter().collect();
    let audit_line = summary(&finding_refs, seed);
    let la = a.first.display().to_string();
    let lb = a.second.display().to_string();
    let differing: Vec<_> = cmp
        .components
        .iter()
        .filter(|c| !matches!(c.verdict, Verdict::Zero))
        .collect();
    let n = cmp.components.len();
    let text = match a.shown.format {
        Format::Text => {
            let mut s = String::new();
            let _ = writeln!(s, "A  {}", heading(&la, pa.name.as_deref()));
            let _ = writeln!(s, "B  {}", heading(&lb, pb.name.as_deref()));
            for note in &imported.notes {
                let _ = writeln!(s, "note: {note}");
            }
            match cmp.status {
                Status::Holds => {
                    let _ = writeln!(
                        s,
                        "same physics: all {n} independent components of the linearized Riemann \
                         tensor agree (exact), so A and B differ by a gauge transformation"
                    );
                }
                Status::Fails | Status::Undecided => {
                    let nonzero = differing
                        .iter()
                        .filter(|c| matches!(c.verdict, Verdict::Nonzero(_)))
                        .count();
                    if cmp.status == Status::Fails {
                        let _ = writeln!(
                            s,
                            "different physics: {nonzero} of {n} Riemann components differ \
                             (certified), {} proved equal",
                            n - differing.len()
                        );
                    } else {
                        let _ = writeln!(
                            s,
                            "undecided: {} of {n} Riemann components could not be decided, none \
                             certified different",
                            differing.len()
                        );
                    }
                    for c in differing.iter().take(LISTED) {
                        let _ = writeln!(
                            s,
                            "  {}[A] - {}[B] = {}",
                            c.name,
                            c.name,
                            c.residual.text(&mut pa.store).unwrap_or_else(|| "0".into())
                        );
                        match &c.verdict {
                            Verdict::Nonzero(w) => {
                                let _ = writeln!(s, "      nonzero {w}");
                            }
                            Verdict::Undecided(why) => {
                                let _ = writeln!(s, "      undecided: {why}");
                            }
                            Verdict::Zero => {}
                        }
                    }
                    if differing.len() > LISTED {
                        let _ = writeln!(
                            s,
                            "  ... and {} more (see --format json)",
                            differing.len() - LISTED
                        );
                    }
                }
            }
            let _ = writeln!(s, "{audit_line}");
            if a.shown.audit_points {
                s.push_str(&point_lines(&finding_refs));
            }
            s
        }
        Format::Json => {
            let j = serde_json::json!({
                "first": la,
                "second": lb,
                "result": match cmp.status { Status::Holds => "same", Status::Fails => "different", Status::Undecided => "undecided" },
                "method": "exact zero test of R[A] - R[B] for the 20 independent linearized Riemann components",
                "notes": imported.notes,
                "audit": {
                    "method": audit_line,
                    "seed": seed,
                    "components": cmp.components.iter().zip(&findings).map(|(c, f)| (c.name.clone(), serde_json::json!(f.label()))).collect::<serde_json::Map<_, _>>(),
                    "points": points_json(&finding_refs),
                },
                "differing": differing.iter().map(|c| { let whole = c.residual.whole(&mut pa.store); serde_json::json!({
                    "component": c.name,
                    "verdict": c.verdict.label(),
                    "residual": whole.as_ref().map(|w| &w.0),
                    "residual_latex": whole.as_ref().and_then(|w| w.1.as_ref()),
                    "detail": match &c.verdict {
                        Verdict::Nonzero(w) => w.to_string(),
                        Verdict::Undecided(why) => why.clone(),
                        Verdict::Zero => String::new(),
                    },
                })}).collect::<Vec<_>>(),
            });
            json(&j)
        }
    };
    print(&text)?;
    Ok(Outcome::of(cmp.status))
}

/// The comparison of two files about one background, which must be proved flat: the same
/// coordinates and a background proved equal, then the covariant linearized Riemann tensors.
fn about_background(
    pa: &mut crate::Problem,
    pb: &crate::Problem,
    hb: &crate::tensor::Sym4,
    sampling: &crate::Sampling,
) -> Result<Comparison, Failure> {
    let paths = format!("{} and {}", pa.path, pb.path);
    let refuse = |why: String| {
        Failure::Input(miette::miette!(
            help = "compare needs both files about the same background, in the same \
                    coordinates, and that background flat (Minkowski in any coordinates)",
            "{paths}: {why}"
        ))
    };
    let (Some(ga), Some(gb)) = (pa.background.clone(), pb.background.clone()) else {
        return Err(refuse(
            "one file is about a background and the other is not".into(),
        ));
    };
    if pa.coordinates != pb.coordinates {
        return Err(refuse(format!(
            "the coordinates differ ({} against {})",
            pa.coordinates.join(", "),
            pb.coordinates.join(", ")
        )));
    }
    // The same background, proved: every component of the difference is exactly 0.
    let st = &mut pa.store;
    for &(m, n) in &crate::tensor::COMPONENTS {
        let d = st.sub(ga.g[m][n], gb.g[m][n])?;
        if !st.is_zero(d) {
            return Err(refuse(format!(
                "the backgrounds differ in gbar_{} (or are not proved equal)",
                crate::tensor::Frame::covariant(pa.coordinates.clone()).index(&[m, n])
            )));
        }
    }
    let mut bg = pa.spacetime().map_err(|e| match e {
        crate::CanonError::DivisionByZero => {
            refuse("the background metric is degenerate (its determinant is 0)".into())
        }
        e => gave_up(&e),
    })?;
    let st = &mut pa.store;
    let flat = bg.riemann_down(st)?.iter().all(|(_, f)| st.is_zero(*f));
    if !flat {
        return Err(Failure::GaveUp(
            "the background's Riemann tensor is not proved zero, so the linearized Riemann \
             tensor does not decide whether the two perturbations differ by a gauge \
             transformation"
                .into(),
        ));
    }
    let frame = crate::tensor::Frame::covariant(pa.coordinates.clone());
    let ha = pa.h;
    Ok(crate::gauge::compare::compare_about(
        st,
        &mut bg,
        (&ha, hb),
        sampling,
        &frame,
    )?)
}
