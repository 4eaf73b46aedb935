//! The independent audit of what `project` states as exact: the unit length of a given
//! direction, the printed TT part, the exact shares of "not TT", the printed polarizations and
//! the basis. Each is evaluated from texts (the file's, or what was printed) by
//! `crate::audit` and applied with `crate::check::verdicts::audit_verdicts`; a finding
//! only takes a proof away.

use super::{Arg, Direction, NotTt, Share};
use crate::audit::expr::{FileQuantities, Finding, summary};
use crate::canon::Form;
use crate::check::verdicts::audit_verdicts;
use crate::problem::Problem;
use crate::tensor::COMPONENTS;
use crate::tensor::Sym4;
use crate::zero::Verdict;

/// The independent audit of what `project` states as exact.
pub struct ProjectAudit {
    /// "unit length (proved)" of a given vector, from its texts as written.
    pub unit: Option<Finding>,
    /// The components proved zero behind an exact share of "not TT" (0: h - h^TT, 1: h^TT).
    pub shares: Vec<Finding>,
    /// The printed TT part against the independent projection of the file's texts.
    pub printed: Vec<Finding>,
    /// The printed polarizations against the printed TT part and basis, and the basis
    /// against n (u.n = 0, u.u = 1, v.n = 0, v.v = 1, u.v = 0).
    pub polarizations: Vec<Finding>,
}

impl ProjectAudit {
    /// Every finding, in order.
    pub fn all(&self) -> Vec<&Finding> {
        self.unit
            .iter()
            .chain(&self.shares)
            .chain(&self.printed)
            .chain(&self.polarizations)
            .collect()
    }

    /// True if any finding contradicts the exact route.
    pub fn defect(&self) -> bool {
        self.all().iter().any(|f| f.is_defect())
    }

    /// The audit line of the exact shares of "not TT".
    pub fn shares_text(&self, seed: u64) -> String {
        summary(&self.shares.iter().collect::<Vec<_>>(), seed)
    }

    /// The audit line of the printed TT part.
    pub fn printed_text(&self, seed: u64) -> String {
        summary(&self.printed.iter().collect::<Vec<_>>(), seed)
    }

    /// The audit line of the polarizations and the basis.
    pub fn polarizations_text(&self, seed: u64) -> String {
        summary(&self.polarizations.iter().collect::<Vec<_>>(), seed)
    }
}

/// Audits what `project` states as exact, from the file's texts and the direction: the unit
/// length of a given vector (its texts as written), the printed TT part and every exact
/// share of "not TT" (the independent projection `Lambda_ij,kl h_kl` with `n` as printed,
/// the direction the user is shown). A share whose proof is contradicted is no longer shown
/// as exact.
pub fn audit_projection(
    p: &mut Problem,
    direction_text: &str,
    dir: &Direction,
    tt4: &Sym4,
    (proj_plus, proj_cross): (Form, Form),
    frac: &mut NotTt,
    seed: u64,
) -> ProjectAudit {
    let proved = |n: usize| vec![Verdict::Zero; n];
    let unit = dir.n_note.contains("(proved)").then(|| {
        let pieces = Arg::new("--direction", direction_text).split().ok();
        match pieces.as_deref() {
            Some([x, y, z]) => {
                let text = format!("({})^2 + ({})^2 + ({})^2 - 1", x.text, y.text, z.text);
                let route = FileQuantities::texts(p, &[("|n|^2 - 1".into(), text)]);
                audit_verdicts(&route, &mut proved(1), |_| Some(0), seed).remove(0)
            }
            _ => Finding::NotAudited("the direction is not three components".into()),
        }
    });
    let n: [String; 3] = std::array::from_fn(|i| p.store.to_text(dir.n[i]));
    let printed: [String; 6] = {
        let mut it = COMPONENTS.iter().filter(|(m, _)| *m > 0);
        std::array::from_fn(|_| {
            let &(mu, nu) = it.next().expect("six spatial components");
            p.store.to_text(tt4[mu][nu])
        })
    };
    let route = FileQuantities::not_tt(p, &n, Some(&printed));
    let printed_findings = audit_verdicts(&route, &mut proved(6), |i| Some(16 + i), seed);
    // The components behind each exact share: h - h^TT (all ten, or the six spatial ones)
    // for 0, the six of h^TT for 1.
    let behind = |share: &Share, spatial: bool| -> Vec<usize> {
        match share {
            Share::Exact(0) if spatial => (4..10).collect(),
            Share::Exact(0) => (0..10).collect(),
            Share::Exact(_) => (10..16).collect(),
            _ => Vec::new(),
        }
    };
    let (all, spatial) = (behind(&frac.all, false), behind(&frac.spatial, true));
    let mut which: Vec<usize> = all.iter().chain(&spatial).copied().collect();
    which.sort_unstable();
    which.dedup();
    let shares = audit_verdicts(&route, &mut proved(which.len()), |i| Some(which[i]), seed);
    for (share, of) in [(&mut frac.all, &all), (&mut frac.spatial, &spatial)] {
        let contradicted = which
            .iter()
            .zip(&shares)
            .find(|(q, f)| of.contains(q) && f.is_defect());
        if let Some((_, f)) = contradicted {
            *share = Share::Unavailable(f.method(seed));
        }
    }
    // The printed polarizations from the printed TT part and basis (the TT part itself is
    // audited above), and the basis against the printed n.
    let vtext = |v: &[crate::canon::Form; 3], st: &mut crate::canon::Store| -> [String; 3] {
        std::array::from_fn(|i| format!("({})", st.to_text(v[i])))
    };
    let (nv, uv, vv) = (
        vtext(&dir.n, &mut p.store),
        vtext(&dir.u, &mut p.store),
        vtext(&dir.v, &mut p.store),
    );
    let tt = |i: usize, j: usize| format!("({})", printed[spatial_index(i.min(j), i.max(j))]);
    let mut plus_sum = Vec::new();
    let mut cross_sum = Vec::new();
    for i in 0..3 {
        for j in 0..3 {
            plus_sum.push(format!(
                "{}*({}*{} - {}*{})",
                tt(i, j),
                uv[i],
                uv[j],
                vv[i],
                vv[j]
            ));
            cross_sum.push(format!(
                "{}*({}*{} + {}*{})",
                tt(i, j),
                uv[i],
                vv[j],
                vv[i],
                uv[j]
            ));
        }
    }
    let dot = |a: &[String; 3], b: &[String; 3]| {
        (0..3)
            .map(|i| format!("{}*{}", a[i], b[i]))
            .collect::<Vec<_>>()
            .join(" + ")
    };
    let plus = format!(
        "({}) - ({})/2",
        p.store.to_text(proj_plus),
        plus_sum.join(" + ")
    );
    let cross = format!(
        "({}) - ({})/2",
        p.store.to_text(proj_cross),
        cross_sum.join(" + ")
    );
    let texts = vec![
        ("h_plus as printed".to_string(), plus),
        ("h_cross as printed".to_string(), cross),
        ("u.n".to_string(), dot(&uv, &nv)),
        ("u.u - 1".to_string(), format!("{} - 1", dot(&uv, &uv))),
        ("v.n".to_string(), dot(&vv, &nv)),
        ("v.v - 1".to_string(), format!("{} - 1", dot(&vv, &vv))),
        ("u.v".to_string(), dot(&uv, &vv)),
    ];
    let route = FileQuantities::texts(p, &texts);
    let polarizations = audit_verdicts(&route, &mut proved(texts.len()), Some, seed);
    ProjectAudit {
        unit,
        shares,
        printed: printed_findings,
        polarizations,
    }
}

/// The position of spatial component `(i, j)`, `i <= j`, in the order xx xy xz yy yz zz.
fn spatial_index(i: usize, j: usize) -> usize {
    match (i, j) {
        (0, 0) => 0,
        (0, 1) => 1,
        (0, 2) => 2,
        (1, 1) => 3,
        (1, 2) => 4,
        _ => 5,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::tt::project_perturbation;

    const SEED: u64 = 0x5eed_1a96_7a7e;

    use crate::problem::worked;

    fn direction_of(p: &mut Problem, text: &str, normalize: bool) -> Direction {
        let (names, sampling) = (p.names.clone(), p.sampling.clone());
        crate::tt::parse_direction(
            &mut p.store,
            &names,
            &sampling,
            Arg::new("--direction", text),
            normalize,
        )
        .unwrap_or_else(|e| panic!("direction: {e}"))
    }

    /// The "not TT" shares, both `share`.
    fn not_tt(share: Share) -> crate::tt::NotTt {
        crate::tt::NotTt {
            all: share.clone(),
            spatial: share,
            points: 0,
            seed: 0,
        }
    }

    /// The audit of the projection of `p` along `dir` as `project` prints it, with h_plus
    /// and h_cross swapped if `swapped` (as a defect in the exact route would print them).
    fn audit_as_printed(
        p: &mut Problem,
        direction: &str,
        dir: &Direction,
        frac: &mut crate::tt::NotTt,
        swapped: bool,
    ) -> ProjectAudit {
        let h = p.h;
        let proj = project_perturbation(&mut p.store, &h, dir).expect("small");
        let tt4 = crate::tt::as_perturbation(&p.store, &proj.tt);
        let pols = if swapped {
            (proj.cross, proj.plus)
        } else {
            (proj.plus, proj.cross)
        };
        audit_projection(p, direction, dir, &tt4, pols, frac, SEED)
    }

    /// False exact statements of `project` (simulated: "not TT = 0, exactly" for a wave that
    /// is not TT along n; "unit length (proved)" for a vector that is not) are caught and not
    /// shown as exact.
    #[test]
    fn issue9_project_catches_false_exact_statements() {
        let mut p = worked("lorenz_wave.toml");
        let direction = "1,1,0";
        let mut dir = direction_of(&mut p, direction, true);
        dir.n_note = "unit length (proved)".into();
        let mut frac = not_tt(Share::Exact(0));
        let audit = audit_as_printed(&mut p, direction, &dir, &mut frac, false);
        assert!(audit.defect());
        assert!(audit.unit.as_ref().is_some_and(Finding::is_defect));
        for share in [&frac.all, &frac.spatial] {
            assert!(
                matches!(share, Share::Unavailable(why) if why.starts_with("INTERNAL DEFECT")),
                "{share:?}"
            );
        }
        // The printed TT part itself is right, and so are the polarizations and the basis.
        assert!(
            audit
                .printed
                .iter()
                .chain(&audit.polarizations)
                .all(|f| matches!(f, Finding::ProofConsistent { .. }))
        );
    }

    /// Polarizations printed wrongly (h_plus and h_cross swapped, as a defect in the exact
    /// route would) are caught against the printed TT part and basis.
    #[test]
    fn issue9_project_catches_false_polarizations() {
        let mut p = worked("oblique_wave.toml");
        let direction = "3/5,0,4/5";
        let dir = direction_of(&mut p, direction, false);
        let mut frac = not_tt(Share::Numerical(0.5));
        let good = audit_as_printed(&mut p, direction, &dir, &mut frac, false);
        assert!(!good.defect(), "{}", good.polarizations_text(SEED));
        let bad = audit_as_printed(&mut p, direction, &dir, &mut frac, true);
        assert!(bad.defect());
        assert!(bad.polarizations[0].is_defect() && bad.polarizations[1].is_defect());
        assert!(bad.polarizations[2..].iter().all(|f| !f.is_defect()));
    }
}
