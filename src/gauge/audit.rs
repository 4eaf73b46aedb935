//! The independent audits of `gauge` and `compare`: `box xi` from the texts of `xi`, and the
//! Riemann difference of two files from both files' texts, applied with
//! [`crate::check::verdicts::audit_verdicts`] (a finding only takes a proof or a witness
//! away).

use super::compare::Comparison;
use crate::audit::expr::{FileQuantities, Finding};
use crate::check::Status;
use crate::check::verdicts::audit_verdicts;
use crate::problem::Problem;
use crate::tensor::COORDS;
use crate::zero::Verdict;

/// The verdicts on `box xi_nu` audited from the texts of `xi` (in `p`'s names: the texts or
/// the names of defines).
pub fn audit_box(p: &Problem, xi: &[String], verdicts: &mut [Verdict], seed: u64) -> Vec<Finding> {
    let texts: Vec<(String, String)> = (0..4)
        .map(|nu| {
            let x = &xi[nu];
            (
                format!("box xi_{}", COORDS[nu]),
                format!("-d_t_t({x}) + d_x_x({x}) + d_y_y({x}) + d_z_z({x})"),
            )
        })
        .collect();
    let route = FileQuantities::texts(p, &texts);
    audit_verdicts(&route, verdicts, Some, seed)
}

/// Audits the comparison's verdicts from both files' texts and updates them and its status
/// (a contradicted proof becomes nonzero with the independent witness, an unconfirmed
/// witness undecided). Functions both files declare are one arbitrary function sampled as
/// in the first file, as in the comparison, so the second file's audit takes the first
/// file's samples for them (shared parameters get one value at every audit point).
pub fn audit_comparison(
    cmp: &mut Comparison,
    pa: &Problem,
    pb: &mut Problem,
    seed: u64,
) -> Vec<Finding> {
    for (f, sample) in &mut pb.functions {
        if let Some((_, first)) = pa.functions.iter().find(|(g, _)| g == f) {
            sample.clone_from(first);
        }
    }
    let route = FileQuantities::riemann_difference(pa, pb);
    let names: Vec<String> = cmp.components.iter().map(|c| c.name.clone()).collect();
    let mut verdicts: Vec<Verdict> = cmp.components.iter().map(|c| c.verdict.clone()).collect();
    let index = |i: usize| route.as_ref().ok()?.index_of("riemann", &names[i]);
    let findings = audit_verdicts(&route, &mut verdicts, index, seed);
    for ((c, v), f) in cmp.components.iter_mut().zip(verdicts).zip(&findings) {
        if matches!(f, Finding::ProofContradicted(_)) {
            c.residual = crate::check::Residual::Note(
                "0 by the exact route, contradicted by the independent evaluation".into(),
            );
        }
        c.verdict = v;
    }
    let refs: Vec<&Verdict> = cmp.components.iter().map(|c| &c.verdict).collect();
    cmp.status = Status::of(&refs, true);
    findings
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::audit::expr::summary;
    use crate::gauge::compare::{compare, import};
    use crate::interval::{CInterval, Interval};
    use crate::zero::Witness;

    const SEED: u64 = 0x5eed_1a96_7a7e;

    use crate::problem::{worked, worked_file};

    fn comparison(a: &str, b: &str) -> (Problem, Problem, Comparison) {
        let mut pa = worked(a);
        let pb = worked_file(b).build_into(&mut pa.store).expect("builds");
        let sampling = pa.sampling.clone();
        let imported = import(&mut pa.store, &sampling, &pa.parameters, &pa.functions, &pb);
        let ha = pa.h;
        let cmp = compare(&mut pa.store, &ha, &imported.h, &imported.sampling).expect("small");
        (pa, pb, cmp)
    }

    /// False proofs (simulated: every verdict of a comparison of different physics replaced
    /// by Zero) are caught: the comparison fails, never "same physics".
    #[test]
    fn issue9_compare_catches_false_proofs() {
        let (pa, mut pb, mut cmp) = comparison("lorenz_wave.toml", "oblique_wave.toml");
        assert_eq!(cmp.status, Status::Fails);
        for c in &mut cmp.components {
            c.verdict = Verdict::Zero;
        }
        cmp.status = Status::Holds;
        let findings = audit_comparison(&mut cmp, &pa, &mut pb, SEED);
        assert_eq!(cmp.status, Status::Fails);
        assert!(findings.iter().all(Finding::is_defect), "{findings:?}");
        let refs: Vec<&Finding> = findings.iter().collect();
        assert!(summary(&refs, SEED).starts_with("INTERNAL DEFECT"));
        assert!(
            cmp.components
                .iter()
                .all(|c| matches!(c.verdict, Verdict::Nonzero(_)))
        );
    }

    /// A false witness (simulated on a comparison of the same physics) is not confirmed: the
    /// comparison becomes undecided, never "different".
    #[test]
    fn issue9_compare_does_not_trust_an_unconfirmed_witness() {
        let (pa, mut pb, mut cmp) = comparison("lorenz_oblique.toml", "lorenz_oblique_tt.toml");
        assert_eq!(cmp.status, Status::Holds);
        cmp.components[3].verdict = Verdict::Nonzero(Witness {
            point: vec![("t".into(), 0.5), ("x".into(), 0.25)],
            value: CInterval::from_real(Interval::new(1.0, 2.0).expect("interval")),
            seed: 1,
            chosen: None,
        });
        cmp.status = Status::Fails;
        let findings = audit_comparison(&mut cmp, &pa, &mut pb, SEED);
        assert_eq!(cmp.status, Status::Undecided);
        assert!(matches!(findings[3], Finding::WitnessUnconfirmed { .. }));
        assert!(matches!(cmp.components[3].verdict, Verdict::Undecided(_)));
    }

    /// A false proof that box xi vanishes (simulated) is caught; a false witness is not
    /// trusted.
    #[test]
    fn issue9_gauge_box_audit_catches_false_verdicts() {
        let p = worked("lorenz_wave.toml");
        let xi = ["0", "x*sin(t)", "0", "0"].map(String::from);
        let mut verdicts = vec![Verdict::Zero; 4];
        let findings = audit_box(&p, &xi, &mut verdicts, SEED);
        assert!(findings[1].is_defect(), "{:?}", findings[1]);
        assert!(matches!(verdicts[1], Verdict::Nonzero(_)));
        assert!(
            findings
                .iter()
                .enumerate()
                .all(|(i, f)| i == 1 || !f.is_defect())
        );
        let mut verdicts = vec![Verdict::Zero; 4];
        verdicts[0] = Verdict::Nonzero(Witness {
            point: vec![("t".into(), 0.5)],
            value: CInterval::from_real(Interval::new(1.0, 2.0).expect("interval")),
            seed: 1,
            chosen: None,
        });
        let xi = ["sin(t - z)", "0", "0", "0"].map(String::from);
        let findings = audit_box(&p, &xi, &mut verdicts, SEED);
        assert!(matches!(findings[0], Finding::WitnessUnconfirmed { .. }));
        assert!(matches!(verdicts[0], Verdict::Undecided(_)));
    }
}
