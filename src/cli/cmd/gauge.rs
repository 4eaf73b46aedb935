//! `lingrav gauge`: apply a gauge transformation h -> h - d xi - d xi, or construct the one
//! that brings a Lorenz-gauge plane wave to TT gauge, and verify the result exactly. The
//! algebra is in [`lingrav::gauge`] (transformation, construction, box xi, the texts of the
//! result) and its audits in [`lingrav::gauge::audit`]; this file plans, calls and reports
//! (text or JSON).

use crate::cli::audit::{audit_json, point_lines, points_json};
use crate::cli::limits::LimitArgs;
use crate::cli::out::{Failure, Outcome, gave_up, limit_in, print};
use crate::cli::plan::{arg_failure, plan_optional_output, write_atomic};
use crate::cli::report::{
    Format, components_json, conventions, gauges_of, heading, json, limit_in_report,
    list_components, texts, verdict_json, verification_json, verification_lines,
};
use clap::Args;
use lingrav::audit::expr::{FileQuantities, Finding, summary};
use lingrav::canon::{Form, Store};
use lingrav::check::verdicts::audit_verdicts;
use lingrav::check::{Status, check};
use lingrav::claim::Part;
use lingrav::gauge::audit::audit_box;
use lingrav::gauge::plane::{PlaneError, find_wave, tt_gauge_vector};
use lingrav::gauge::{box_verdicts, file_texts, lorenz_verdicts, transform, transformed_texts};
use lingrav::problem::{Claims, Gauge, render_problem};
use lingrav::tensor::COORDS;
use lingrav::tt::Arg;
use lingrav::zero::Verdict;
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
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Text)]
    format: Format,
    /// Write the transformed perturbation as a new problem file.
    #[arg(long, value_name = "FILE.toml")]
    output: Option<PathBuf>,
    /// Replace the output file if it exists.
    #[arg(long)]
    force: bool,
    /// Also print the points of the independent audit.
    #[arg(long)]
    audit_points: bool,
    #[command(flatten)]
    limits: LimitArgs,
}

fn plane_failure(e: PlaneError, format: Format, j: serde_json::Value) -> Result<Outcome, Failure> {
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
            stop_undecided(&why, format, String::new(), j)
        }
    }
}

/// `lingrav gauge`.
pub fn run(a: GaugeArgs) -> Result<Outcome, Failure> {
    let mut p = a.limits.load(&a.file)?;
    if !p.is_flat_cartesian() {
        let label = a.file.display().to_string();
        return match (&a.vector, a.to_tt || a.output.is_some()) {
            (Some(v), false) => super::gauge_curved::run(p, v, a.format, &label),
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
    let target = plan_optional_output(a.output.as_deref(), a.force, "--output")?;
    let label = a.file.display().to_string();
    let mut s = String::new();
    let _ = writeln!(s, "{}", heading(&label, p.name.as_deref()));
    let mut j = serde_json::json!({ "file": label, "name": p.name, "conventions": conventions(&p.coordinates) });
    let h = p.h;
    let seed = sampling.seed;
    // Every verdict below is audited independently; a contradiction is an internal defect.
    let mut defect = false;
    let mut audits: Vec<Finding> = Vec::new();

    let (xi, verify_tt) = match xi_given {
        Some(xi) => (xi, false),
        None => {
            let wave = match find_wave(&mut p.store, &sampling, &h, k_given) {
                Ok(w) => w,
                Err(e) => return plane_failure(e, a.format, j),
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
                s,
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
            let route = FileQuantities::texts(&p, &[("k_mu k^mu".into(), norm)]);
            let mut null = [wave.null.clone()];
            let finding = audit_verdicts(&route, &mut null, |_| Some(0), seed).remove(0);
            defect |= finding.is_defect();
            let [null] = null;
            j["plane_wave"] = serde_json::json!({
                "phase": st_text(&mut p.store, wave.phase),
                "k_up": k_up,
                "detected": wave.detected,
                "k_null": { "verdict": verdict_json(&null), "audit": audit_json(&finding, seed) },
            });
            let _ = writeln!(
                s,
                "            k null (k_mu k^mu = 0): {}; {}",
                match &null {
                    Verdict::Zero => "proved".to_string(),
                    Verdict::Nonzero(w) => format!("no, nonzero {w}: not a vacuum wave"),
                    Verdict::Undecided(why) => format!("undecided ({why})"),
                },
                finding.method(seed)
            );
            audits.push(finding);
            // The construction starts from Lorenz gauge; say so if the input is not in it.
            let (div, mut verdicts) = lorenz_verdicts(&mut p.store, &h, &sampling)?;
            let lorenz = Claims {
                gauge: vec![Gauge::Lorenz],
                ..Claims::default()
            };
            let route = FileQuantities::claims(&p, Some(&lorenz));
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
                        return stop_undecided(&reason, a.format, s, j);
                    }
                }
            }
            let refs: Vec<&Finding> = findings.iter().collect();
            let _ = writeln!(
                s,
                "            input in Lorenz gauge: proved; {}",
                summary(&refs, seed)
            );
            j["input_lorenz"] =
                serde_json::json!({ "status": "holds", "audit": summary(&refs, seed) });
            audits.extend(findings);
            match tt_gauge_vector(&mut p.store, &wave, &h) {
                Ok(xi) => (xi, true),
                Err(e) => return plane_failure(e, a.format, j),
            }
        }
    };

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
        let _ = writeln!(s, "  xi_{} = {}", COORDS[mu], st.to_text(*f));
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
                    st.to_text(bx[nu])
                );
            }
            Verdict::Undecided(why) => {
                let _ = writeln!(
                    s,
                    "  box xi_{} = {}, undecided: {why}",
                    COORDS[nu],
                    st.to_text(bx[nu])
                );
            }
        }
    }

    let mut outcome = Outcome::Holds;
    if verify_tt {
        let _ = writeln!(s, "verification of h' (exact):");
        verification_lines(&mut s, st, &report);
        outcome = match (
            report.status_of("gauge.tt"),
            report.status_of("field_equations"),
        ) {
            (Some(Status::Holds), Some(Status::Holds)) => Outcome::Holds,
            (Some(Status::Fails), _) | (_, Some(Status::Fails)) => Outcome::Fails,
            _ => Outcome::Undecided,
        };
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
    if a.audit_points {
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
        let status = |key: &str| report.status_of(key);
        let claims = Claims {
            field_equations: report.proved("field_equations"),
            gauge: asked
                .gauge
                .iter()
                .copied()
                .filter(|g| status(&format!("gauge.{}", g.name())) == Some(Status::Holds))
                .collect(),
            // A claim that holds keeps the value asked; one that fails is written negated.
            pure_gauge: asked
                .pure_gauge
                .and_then(|want| match status("pure_gauge") {
                    Some(Status::Holds) => Some(want),
                    Some(Status::Fails) => Some(!want),
                    _ => None,
                }),
        };
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
    print(&match a.format {
        Format::Text => s,
        Format::Json => json(&j),
    })?;
    Ok(outcome)
}

/// Ends the command as undecided for `reason` (not a limit): the report so far and the
/// reason, in text or JSON.
fn stop_undecided(
    reason: &str,
    format: Format,
    mut s: String,
    mut j: serde_json::Value,
) -> Result<Outcome, Failure> {
    let _ = writeln!(s, "undecided: {reason}");
    j["result"] = "undecided".into();
    j["reason"] = reason.into();
    print(&match format {
        Format::Text => s,
        Format::Json => json(&j),
    })?;
    Ok(Outcome::Undecided)
}

fn outcome_word(o: Outcome) -> &'static str {
    match o {
        Outcome::Holds => "holds",
        Outcome::Fails => "fails",
        Outcome::Undecided => "undecided",
    }
}

fn st_text(st: &mut Store, f: Form) -> String {
    st.to_text(f)
}
