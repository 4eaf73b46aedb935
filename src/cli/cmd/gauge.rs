//! `lingrav gauge`: apply a gauge transformation h -> h - d xi - d xi, or construct the one
//! that brings a Lorenz-gauge plane wave to TT gauge, and verify the result exactly. The
//! algebra is in [`crate::gauge`] (transformation, construction, box xi, the texts of the
//! result) and its audits in [`crate::gauge::audit`]; this file plans, calls and reports
//! (text or JSON).

use super::gauge_tt::{Built, Report, construct};
use crate::audit::expr::{Finding, summary};
use crate::check::{Status, check};
use crate::cli::audit::{AuditedFormat, point_lines, points_json};
use crate::cli::limits::LimitArgs;
use crate::cli::out::{Failure, Outcome, print};
use crate::cli::plan::{ProblemOutput, arg_failure, write_atomic};
use crate::cli::report::{
    Format, components_json, conventions, gauges_of, heading, json, limit_in_report,
    list_components, proved_claims, texts, tt_solution, verdict_json, verification_json,
    verification_lines,
};
use crate::gauge::audit::audit_box;
use crate::gauge::{box_verdicts, file_texts, transform, transformed_texts};
use crate::problem::{Claims, Gauge, render_problem};
use crate::tensor::COORDS;
use crate::tt::Arg;
use crate::zero::Verdict;
use clap::Args;
use std::fmt::Write as _;
use std::path::PathBuf;

/// Arguments of `lingrav gauge`.
#[derive(Args, Debug)]
pub struct GaugeArgs {
    /// The problem file (TOML).
    file: PathBuf,
    /// The gauge vector xi_mu (index down) as four expressions `xi_t, xi_x, xi_y, xi_z`.
    #[arg(
        long,
        value_name = "XI",
        allow_hyphen_values = true,
        required_unless_present = "to_tt",
        conflicts_with = "to_tt"
    )]
    vector: Option<String>,
    /// Construct the gauge vector that brings a Lorenz-gauge plane wave to TT gauge.
    #[arg(long)]
    to_tt: bool,
    /// With --to-tt: the wave vector k^mu = (w, kx, ky, kz) of the phase -w t + kx x + ky y +
    /// kz z (default: read off the perturbation).
    #[arg(
        long,
        value_name = "W,KX,KY,KZ",
        allow_hyphen_values = true,
        requires = "to_tt"
    )]
    wave_vector: Option<String>,
    /// Print the canonical (expanded) forms, without the file's [define] names.
    #[arg(long)]
    expanded: bool,
    #[command(flatten)]
    written: ProblemOutput,
    #[command(flatten)]
    shown: AuditedFormat,
    #[command(flatten)]
    limits: LimitArgs,
}

/// `lingrav gauge`.
pub fn run(a: GaugeArgs) -> Result<Outcome, Failure> {
    let mut p = a.limits.load(&a.file)?;
    if a.expanded {
        p.store.set_display_names(None);
    }
    if !p.is_flat_cartesian() {
        let label = a.file.display().to_string();
        return match (&a.vector, a.to_tt || a.written.output.is_some()) {
            (Some(v), false) => super::gauge_curved::run(p, v, a.shown.format, &label),
            _ => Err(Failure::Input(miette::miette!(
                help = "about a background, `lingrav gauge --vector XI` applies a gauge \
                        transformation (without --output); --to-tt is for plane waves in flat \
                        Cartesian coordinates",
                "{label}: about a background or in other coordinates, only `--vector` works \
                 (without --output)"
            ))),
        };
    }
    let names = p.names.clone();
    let sampling = p.sampling.clone();
    // The plan: the vector (or wave vector) and the output path, before any algebra.
    let (xi_given, xi_texts) = match &a.vector {
        Some(v) => {
            let arg = Arg::new("--vector", v);
            let pieces = arg
                .split_exact(4, "the gauge vector is given as four expressions xi_t, xi_x, xi_y, xi_z (index down)")
                .map_err(arg_failure)?;
            let mut xi = [p.store.zero(); 4];
            for (slot, piece) in xi.iter_mut().zip(&pieces) {
                *slot = arg
                    .build(&mut p.store, &names, piece)
                    .map_err(arg_failure)?;
            }
            let texts: Vec<String> = pieces.iter().map(|x| x.text.clone()).collect();
            (Some(xi), texts)
        }
        None => (None, Vec::new()),
    };
    let k_given = match &a.wave_vector {
        Some(w) => {
            let arg = Arg::new("--wave-vector", w);
            let pieces = arg
                .split_exact(4, "the wave vector is given as w,kx,ky,kz: k^mu with the phase -w t + kx x + ky y + kz z")
                .map_err(arg_failure)?;
            let mut k = [p.store.zero(); 4];
            for (i, (slot, piece)) in k.iter_mut().zip(&pieces).enumerate() {
                let f = arg
                    .build_constant(&mut p.store, &names, piece)
                    .map_err(arg_failure)?;
                // k_t = -k^t; spatial components are the same up and down.
                *slot = if i == 0 { p.store.neg(f)? } else { f };
            }
            Some(k)
        }
        None => None,
    };
    let target = a.written.plan()?;
    let label = a.file.display().to_string();
    let mut s = String::new();
    let _ = writeln!(s, "{}", heading(&label, p.name.as_deref()));
    let j = serde_json::json!({ "file": label, "name": p.name, "conventions": conventions(&p.coordinates) });
    let h = p.h;
    let seed = sampling.seed;
    // Every verdict below is audited independently; a contradiction is an internal defect.
    let mut r = Report {
        s,
        j,
        defect: false,
        audits: Vec::new(),
        format: a.shown.format,
    };
    let (xi, verify_tt) = match xi_given {
        Some(xi) => (xi, false),
        None => match construct(&mut p, k_given, &mut r)? {
            Built::Vector(xi) => (xi, true),
            Built::Ended(outcome) => return Ok(outcome),
        },
    };
    let Report {
        mut s,
        mut j,
        mut defect,
        mut audits,
        ..
    } = r;

    let h2 = transform(&mut p.store, &h, &xi)?;
    // The texts of xi the audit evaluates: as given, or as printed for a constructed one.
    let xi_src: Vec<String> = if xi_texts.is_empty() {
        let st = &mut p.store;
        xi.iter().map(|f| st.to_text(*f)).collect()
    } else {
        xi_texts.clone()
    };
    let st = &mut p.store;
    let _ = writeln!(
        s,
        "gauge vector xi_mu (index down){}:",
        if verify_tt {
            ", constructed to remove h_t mu"
        } else {
            ""
        }
    );
    for (mu, f) in xi.iter().enumerate() {
        let _ = writeln!(s, "  xi_{} = {}", COORDS[mu], st.to_display_text(*f));
    }
    let _ = writeln!(
        s,
        "transformed perturbation h'_mu nu = h_mu nu - d_mu xi_nu - d_nu xi_mu:"
    );
    list_components(&mut s, st, &h2, "h'", false);
    j["xi"] = texts(st, &xi).into();
    j["constructed"] = verify_tt.into();
    j["h_prime"] = components_json(st, &h2, false);

    // Lorenz gauge is preserved exactly when box xi = 0.
    let (bx, mut verdicts) = box_verdicts(st, &xi, &sampling)?;

    // Verify the result on h' itself: the TT construction's claims, or what holds after a
    // given vector. The file gets only claims that were proved.
    let asked = Claims {
        field_equations: Some(true),
        gauge: if verify_tt {
            vec![Gauge::Tt, Gauge::Lorenz]
        } else {
            Gauge::ALL.to_vec()
        },
        pure_gauge: if verify_tt || target.is_none() {
            None
        } else {
            p.claims.as_ref().and_then(|c| c.pure_gauge)
        },
        far_zone_order: None,
        far_zone_radius: None,
    };
    // The audits of h' and of box xi read xi as defines, so that each of its components is
    // evaluated once per point rather than once per derivative of it.
    let xi_names = p.fresh_names("lingrav_xi");
    let xi_defines: Vec<(String, String)> = xi_names.iter().cloned().zip(xi_src.clone()).collect();
    let h2_text = transformed_texts(&p.h_text, &xi_names);
    let (report, findings) = p.with_derived(h2, (h2_text, xi_defines), asked.clone(), true, |d| {
        (check(d), audit_box(d, &xi_names, &mut verdicts, seed))
    });
    defect |= report.has_defect();

    let refs: Vec<&Verdict> = verdicts.iter().collect();
    let preserved = Status::of(&refs, true);
    let finding_refs: Vec<&Finding> = findings.iter().collect();
    defect |= findings.iter().any(Finding::is_defect);
    let st = &mut p.store;
    let _ = writeln!(
        s,
        "Lorenz gauge preserved (box xi_nu = 0): {}",
        preserved.label()
    );
    let _ = writeln!(s, "  {}", summary(&finding_refs, seed));
    j["lorenz_preserved"] = serde_json::json!({
        "status": preserved.label(),
        "audit": summary(&finding_refs, seed),
        "box_xi": verdicts.iter().enumerate().map(|(nu, v)| {
            let mut c = verdict_json(v);
            c["component"] = format!("box xi_{}", COORDS[nu]).into();
            c["value"] = st.to_text(bx[nu]).into();
            c
        }).collect::<Vec<_>>(),
    });
    audits.extend(findings);
    for (nu, v) in verdicts.iter().enumerate() {
        match v {
            Verdict::Zero => {}
            Verdict::Nonzero(w) => {
                let _ = writeln!(
                    s,
                    "  box xi_{} = {}, nonzero {w}",
                    COORDS[nu],
                    st.to_display_text(bx[nu])
                );
            }
            Verdict::Undecided(why) => {
                let _ = writeln!(
                    s,
                    "  box xi_{} = {}, undecided: {why}",
                    COORDS[nu],
                    st.to_display_text(bx[nu])
                );
            }
        }
    }

    let mut outcome = Outcome::Holds;
    if verify_tt {
        let _ = writeln!(s, "verification of h' (exact):");
        verification_lines(&mut s, st, &report);
        outcome = tt_solution(&report);
        let _ = writeln!(
            s,
            "result: {}",
            match outcome {
                Outcome::Holds =>
                    "h' is in TT gauge and solves the field equations (proved exactly)",
                Outcome::Fails => "the construction did not reach a TT-gauge solution (see above)",
                Outcome::Undecided => "not every condition on h' could be decided",
            }
        );
    } else {
        let (holding, lines) = gauges_of(&report);
        s.push_str(&lines);
        j["gauges"] = holding.into();
        // A limit that left a verdict on h' undecided is the command's end as any limit is.
        if let Some(why) = limit_in_report(&report) {
            outcome = Outcome::Undecided;
            let _ = writeln!(s, "undecided: {why}");
            j["limit"] = why.into();
        }
    }
    j["verification"] = verification_json(&report).into();
    if defect {
        outcome = Outcome::Fails;
        let _ = writeln!(
            s,
            "INTERNAL DEFECT: the exact route and the independent evaluation disagree (see \
             above); no verdict they disagree on is reported as proved"
        );
    }
    let refs: Vec<&Finding> = audits.iter().collect();
    j["audit"] =
        serde_json::json!({ "defect": defect, "seed": seed, "points": points_json(&refs) });
    if a.shown.audit_points {
        s.push_str(&point_lines(&refs));
    }

    if let Some(t) = &target {
        // Prefer the simplified text; where it does not read back exactly, write the
        // transformation itself with the derivative operators.
        let fallback_texts = transformed_texts(&p.h_text, &xi_src);
        let used_fallback = std::cell::Cell::new(false);
        let fallback = |mu: usize, nu: usize| -> Option<String> {
            used_fallback.set(true);
            fallback_texts[mu][nu].clone()
        };
        let texts = file_texts(&mut p.store, &names, &h2, fallback).map_err(|why| {
            Failure::Input(miette::miette!(
                "cannot write `{}`: {why}",
                t.path.display()
            ))
        })?;
        let claims = proved_claims(&report, &asked);
        let name = format!(
            "{}, {}",
            p.name.clone().unwrap_or_else(|| label.clone()),
            if verify_tt {
                "in TT gauge"
            } else {
                "gauge-transformed"
            }
        );
        // Simplified texts use no defines; the fallback texts may.
        let defines: &[(String, String)] = if used_fallback.get() { &p.defines } else { &[] };
        let body = render_problem(
            Some(&name),
            &p.parameters,
            &p.functions,
            defines,
            &texts,
            p.source_text.as_ref(),
            Some(&claims),
        );
        let xi_line = crate::cli::report::texts(&mut p.store, &xi);
        let header = format!(
            "# {label} after h -> h - d_mu xi_nu - d_nu xi_mu with xi_mu = ({}),\n\
             # written by lingrav gauge; the claims below were proved for the result.\n",
            xi_line.join(", ")
        );
        write_atomic(t, &format!("{header}{body}"))?;
        let _ = writeln!(
            s,
            "wrote {} with claims: {}",
            t.path.display(),
            claims.summary()
        );
        j["output"] =
            serde_json::json!({ "path": t.path.display().to_string(), "claims": claims.summary() });
    }
    j["result"] = outcome_word(outcome).into();
    print(&match a.shown.format {
        Format::Text => s,
        Format::Json => json(&j),
    })?;
    Ok(outcome)
}

fn outcome_word(o: Outcome) -> &'static str {
    match o {
        Outcome::Holds => "holds",
        Outcome::Fails => "fails",
        Outcome::Undecided => "undecided",
    }
}
