//! `lingrav gauge --vector` about a background: h'_ab = h_ab - D_a xi_b - D_b xi_a with the
//! background's covariant derivative, and what holds for h' (checked exactly and audited from
//! texts written from the background's own texts, see
//! [`crate::gauge::covariant_transformed_texts`]).

use crate::canon::CanonError;
use crate::check::check;
use crate::cli::out::{Failure, Outcome, gave_up, print};
use crate::cli::plan::arg_failure;
use crate::cli::report::{
    Format, claim_lines, conventions, gauges_of, heading, json, limit_in_report, verification_json,
};
use crate::problem::{Claims, Gauge, Problem};
use crate::tensor::curved::Perturbation;
use crate::tensor::{COMPONENTS, Frame};
use crate::tt::Arg;
use std::fmt::Write as _;

/// The gauge transformation by `vector` (four expressions, index down, in the file's
/// coordinate order) of a problem about a background.
pub fn run(mut p: Problem, vector: &str, format: Format, label: &str) -> Result<Outcome, Failure> {
    let c = p.coordinates.clone();
    let names = p.names.clone();
    let arg = Arg::new("--vector", vector);
    let what = format!(
        "the gauge vector is given as four expressions xi_{}, xi_{}, xi_{}, xi_{} (index down)",
        c[0], c[1], c[2], c[3]
    );
    let pieces = arg.split_exact(4, &what).map_err(arg_failure)?;
    let mut xi = [p.store.zero(); 4];
    for (slot, piece) in xi.iter_mut().zip(&pieces) {
        *slot = arg
            .build(&mut p.store, &names, piece)
            .map_err(arg_failure)?;
    }
    let xi_texts: Vec<String> = pieces.iter().map(|x| format!("({})", x.text)).collect();
    let bgd = p.background.clone().expect("a problem about a background");
    let limit = |e: CanonError| gave_up(&e);
    let bg = crate::cli::limits::spacetime(&mut p)?;
    let st = &mut p.store;
    let h2 = Perturbation::new(p.h)
        .gauge_residual(st, &bg, &xi)
        .map_err(limit)?;
    // What holds for h', checked exactly and audited from texts of the background's texts.
    let stem = fresh(&p, "lingrav_gt");
    let (defines, h2_text) =
        crate::gauge::covariant_transformed_texts(&c, &bgd.g_text, &p.h_text, &xi_texts, &stem);
    let asked = Claims {
        field_equations: Some(true),
        gauge: Gauge::ALL.to_vec(),
        pure_gauge: None,
        far_zone_order: None,
        far_zone_radius: None,
    };
    let report = p.with_derived(h2, (h2_text, defines), asked, true, check);
    let frame = Frame::covariant(c.clone());
    let st = &mut p.store;
    // Text reports print in the file's terms, JSON the canonical forms.
    let shown = |st: &mut crate::canon::Store, f| match format {
        Format::Text => st.to_display_text(f),
        Format::Json => st.to_text(f),
    };
    let mut rows: Vec<(String, String)> = Vec::new();
    for &(m, n) in &COMPONENTS {
        if !st.is_zero(h2[m][n]) {
            rows.push((frame.index(&[m, n]), shown(st, h2[m][n])));
        }
    }
    let xi_rows: Vec<(String, String)> = (0..4).map(|m| (c[m].clone(), shown(st, xi[m]))).collect();
    let defect = report.has_defect();
    let (holding, gauge_lines) = gauges_of(&report);
    let limit = limit_in_report(&report);
    let out = match format {
        Format::Text => {
            let mut s = String::new();
            let _ = writeln!(s, "{}", heading(label, p.name.as_deref()));
            let _ = writeln!(s, "gauge vector xi_mu (index down):");
            for (n, t) in &xi_rows {
                let _ = writeln!(s, "  xi_{n} = {t}");
            }
            let _ = writeln!(
                s,
                "transformed perturbation h'_mu nu = h_mu nu - D_mu xi_nu - D_nu xi_mu (D: the \
                 background's covariant derivative):"
            );
            if rows.is_empty() {
                let _ = writeln!(s, "  every component is exactly 0");
            }
            for (n, t) in &rows {
                let _ = writeln!(s, "  h'_{n} = {t}");
            }
            let _ = writeln!(s, "verification of h' (exact):");
            for c in report
                .claims
                .iter()
                .filter(|c| !c.key.starts_with("gauge."))
            {
                claim_lines(&mut s, &mut p.store, c, c.status.label(), 6, true);
            }
            s.push_str(&gauge_lines);
            if let Some(why) = &limit {
                let _ = writeln!(s, "undecided: {why}");
            }
            if defect {
                let _ = writeln!(
                    s,
                    "INTERNAL DEFECT: the exact route and the independent evaluation disagree"
                );
            }
            s
        }
        Format::Json => json(&serde_json::json!({
            "file": label,
            "name": p.name,
            "coordinates": c,
            "xi": xi_rows.iter().map(|(_, t)| t.clone()).collect::<Vec<_>>(),
            "h_prime": rows.iter().map(|(n, t)| serde_json::json!({"name": n, "value": t})).collect::<Vec<_>>(),
            "verification": verification_json(&report),
            "gauges": holding,
            "limit": limit,
            "defect": defect,
            "conventions": conventions(&p.coordinates),
        })),
    };
    print(&out)?;
    // As for flat problems: what h' is, is reported, not claimed; a limit is undecided.
    Ok(if defect {
        Outcome::Fails
    } else if limit.is_some() {
        Outcome::Undecided
    } else {
        Outcome::Holds
    })
}

/// A name stem no parameter, function, define or coordinate of `p` starts with.
fn fresh(p: &Problem, stem: &str) -> String {
    let mut s = stem.to_string();
    let taken = |s: &str| {
        p.parameters.iter().any(|(n, _)| n.starts_with(s))
            || p.functions.iter().any(|(n, _)| n.starts_with(s))
            || p.defines.iter().any(|(n, _)| n.starts_with(s))
            || p.coordinates.iter().any(|n| n.starts_with(s))
    };
    while taken(&s) {
        s.push('_');
    }
    s
}
