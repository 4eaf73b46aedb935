//! `lingrav project`: the TT part of a perturbation along a direction, its plus and cross
//! polarizations and how much of h is not TT; optionally the TT part as a new problem file
//! with the claims proved for it. Every exact statement is audited
//! ([`crate::tt::audit`]).

use crate::canon::{Form, Store};
use crate::check::{CheckReport, check};
use crate::cli::audit::{AuditedFormat, audit_json, point_lines, points_json};
use crate::cli::limits::LimitArgs;
use crate::cli::out::{Failure, Outcome, print};
use crate::cli::plan::{DirectionArgs, ProblemOutput, kind_word, write_atomic};
use crate::cli::report::{
    Format, components_json, conventions, heading, json, list_components, proved_claims, texts,
    tt_solution, vec_display, vec_text, verification_json, verification_lines,
};
use crate::gauge::file_texts;
use crate::problem::{Claims, Gauge, render_problem};
use crate::tt::audit::audit_projection;
use crate::tt::{FRACTION_DEFINITION, Share, not_tt_fraction, project_perturbation};
use clap::Args;
use std::fmt::Write as _;
use std::path::PathBuf;

/// Arguments of `lingrav project`.
#[derive(Args, Debug)]
pub struct ProjectArgs {
    /// The problem file (TOML).
    file: PathBuf,
    #[command(flatten)]
    dir: DirectionArgs,
    /// Print the canonical (expanded) forms, without the file's [define] names.
    #[arg(long)]
    expanded: bool,
    #[command(flatten)]
    shown: AuditedFormat,
    #[command(flatten)]
    written: ProblemOutput,
    #[command(flatten)]
    limits: LimitArgs,
}

fn share_text(x: &Share) -> String {
    match x {
        Share::Exact(0) => "0 (exact)".into(),
        Share::Exact(_) => "1 (exact)".into(),
        Share::Numerical(v) => format!("{v:.4}"),
        Share::Unavailable(why) => format!("not available ({why})"),
    }
}

fn share_json(x: &Share) -> serde_json::Value {
    match x {
        Share::Exact(v) => serde_json::json!({ "value": v, "exact": true }),
        Share::Numerical(v) => serde_json::json!({ "value": v, "exact": false }),
        Share::Unavailable(why) => serde_json::json!({ "value": null, "reason": why }),
    }
}

/// `lingrav project`.
pub fn run(a: ProjectArgs) -> Result<Outcome, Failure> {
    let mut p = a.limits.load(&a.file)?;
    if a.expanded {
        p.store.set_display_names(None);
    }
    if !p.is_flat_cartesian() {
        return sphere(a, p);
    }
    let dir = a.dir.plan(&mut p)?;
    let target = a.written.plan()?;

    let h = p.h;
    let proj = project_perturbation(&mut p.store, &h, &dir)?;
    let mut frac = {
        let sampling = p.sampling.clone();
        not_tt_fraction(&mut p.store, &h, &proj.tt, &p.parameters, &sampling)
    };
    let tt4 = crate::tt::as_perturbation(&p.store, &proj.tt);
    let seed = p.sampling.seed;
    let audit = audit_projection(
        &mut p,
        &a.dir.direction,
        &dir,
        &tt4,
        (proj.plus, proj.cross),
        &mut frac,
        seed,
    );
    let label = a.file.display().to_string();
    let st = &mut p.store;
    // The canonical texts go into the written file and JSON; text reports print in the
    // file's terms.
    let n_text = vec_text(st, &dir.n);
    let n_shown = vec_display(st, &dir.n);
    let u_shown = vec_display(st, &dir.u);
    let v_shown = vec_display(st, &dir.v);
    let plus = st.to_text(proj.plus);
    let cross = st.to_text(proj.cross);
    let plus_shown = st.to_display_text(proj.plus);
    let cross_shown = st.to_display_text(proj.cross);

    // The output file: the TT part, with the claims proved for it.
    let mut written: Option<(String, Claims, CheckReport)> = None;
    let mut verification_defect = false;
    let mut outcome = Outcome::Holds;
    let mut write_problem: Option<String> = None;
    if let Some(t) = &target {
        let names = p.names.clone();
        let texts = file_texts(&mut p.store, &names, &tt4, |_, _| None);
        let texts = match texts {
            Ok(t) => t,
            Err(why) => {
                print(&format!("{why}; nothing was written\n"))?;
                return Ok(Outcome::Undecided);
            }
        };
        let wanted = Claims {
            field_equations: Some(true),
            gauge: vec![Gauge::Tt],
            pure_gauge: None,
            far_zone_order: None,
            far_zone_radius: None,
        };
        let report = p.with_derived(
            tt4,
            (texts.clone(), Vec::new()),
            wanted.clone(),
            false,
            check,
        );
        verification_defect = report.has_defect();
        let claims = proved_claims(&report, &wanted);
        outcome = tt_solution(&report);
        let name = format!(
            "TT part of {} along n = {n_text}",
            p.name.clone().unwrap_or_else(|| label.clone())
        );
        // The simplified texts use no defines, so none are copied.
        let body = render_problem(
            Some(&name),
            &p.parameters,
            &p.functions,
            &[],
            &texts,
            None,
            Some(&claims),
        );
        let header = format!(
            "# The TT part h^TT_ij = Lambda_ij,kl h_kl of {label} along n = {n_text}\n\
             # (written by lingrav project; the claims below were proved for it).\n"
        );
        write_problem = Some(format!("{header}{body}"));
        written = Some((t.path.display().to_string(), claims, report));
    }
    if let (Some(t), Some(text)) = (&target, &write_problem) {
        write_atomic(t, text)?;
    }

    let st = &mut p.store;
    let text = match a.shown.format {
        Format::Text => {
            let mut s = String::new();
            let _ = writeln!(s, "{}", heading(&label, p.name.as_deref()));
            let _ = writeln!(
                s,
                "direction  n = {n_shown}  [{}; {}]",
                kind_word(dir.kind),
                dir.n_note
            );
            if let Some(f) = &audit.unit {
                let _ = writeln!(s, "           unit length: {}", f.method(seed));
            }
            let _ = writeln!(s, "basis      u = {u_shown}, v = {v_shown}");
            let _ = writeln!(s, "           {}", dir.basis_note);
            let _ = writeln!(
                s,
                "TT part h^TT_ij = Lambda_ij,kl h_kl, Lambda = P_ik P_jl - P_ij P_kl/2, P = 1 - n n (exact):"
            );
            list_components(&mut s, st, &tt4, "h^TT", true);
            let _ = writeln!(
                s,
                "  (the exact forms, against an independent projection of the texts: {})",
                audit.printed_text(seed)
            );
            let _ = writeln!(
                s,
                "polarizations, h^TT = h_plus (u u - v v) + h_cross (u v + v u):"
            );
            let _ = writeln!(s, "  h_plus  = {plus_shown}");
            let _ = writeln!(s, "  h_cross = {cross_shown}");
            let _ = writeln!(
                s,
                "  (the exact forms, against the exact TT part and an orthonormal basis u, v \
                 transverse to n: {})",
                audit.polarizations_text(seed)
            );
            if frac.all == Share::Exact(0) {
                let _ = writeln!(s, "not TT     0, exactly: h is already TT along n");
            } else if frac.all == Share::Exact(1) && frac.spatial == Share::Exact(1) {
                let _ = writeln!(s, "not TT     1, exactly: no part of h is TT along n");
            } else {
                let _ = writeln!(
                    s,
                    "not TT     {} of the whole perturbation, {} of its spatial part",
                    share_text(&frac.all),
                    share_text(&frac.spatial)
                );
            }
            if !audit.shares.is_empty() {
                let _ = writeln!(s, "           {}", audit.shares_text(seed));
            }
            if matches!(frac.all, Share::Numerical(_))
                || matches!(frac.spatial, Share::Numerical(_))
            {
                let _ = writeln!(
                    s,
                    "           numerical evidence: {FRACTION_DEFINITION}; {} points, seed {:#x}",
                    frac.points, frac.seed
                );
            }
            if let Some((path, claims, report)) = &written {
                let _ = writeln!(s, "the TT part as a perturbation on its own:");
                verification_lines(&mut s, &mut p.store, report);
                let _ = writeln!(s, "wrote {path} with claims: {}", claims.summary());
                if outcome != Outcome::Holds {
                    let _ = writeln!(
                        s,
                        "  (claims not proved were left out: the TT part along n is a vacuum \
                         TT wave only when h is a plane wave travelling along n)"
                    );
                }
            }
            if audit.defect() || verification_defect {
                let _ = writeln!(
                    s,
                    "INTERNAL DEFECT: the exact route and the independent evaluation disagree \
                     (see above); no statement they disagree on is reported as proved"
                );
            }
            if a.shown.audit_points {
                s.push_str(&point_lines(&audit.all()));
            }
            s
        }
        Format::Json => {
            let tt = components_json(st, &tt4, true);
            let strs = |st: &mut Store, v: &[Form; 3]| texts(st, v);
            let mut j = serde_json::json!({
                "file": label,
                "name": p.name,
                "direction": { "kind": kind_word(dir.kind), "n": strs(st, &dir.n), "note": dir.n_note },
                "basis": { "u": strs(st, &dir.u), "v": strs(st, &dir.v), "construction": dir.basis_note },
                "tt": tt,
                "h_plus": plus,
                "h_cross": cross,
                "not_tt": {
                    "all": share_json(&frac.all),
                    "spatial": share_json(&frac.spatial),
                    "definition": FRACTION_DEFINITION,
                    "points": frac.points,
                    "seed": frac.seed,
                },
                "conventions": conventions(&p.coordinates),
                "audit": {
                    "unit_length": audit.unit.as_ref().map(|f| audit_json(f, seed)),
                    "tt_part": audit.printed_text(seed),
                    "polarizations_and_basis": audit.polarizations_text(seed),
                    "not_tt": if audit.shares.is_empty() { None } else { Some(audit.shares_text(seed)) },
                    "defect": audit.defect() || verification_defect,
                    "seed": seed,
                    "points": points_json(&audit.all()),
                },
            });
            if let Some((path, claims, report)) = &written {
                j["output"] = serde_json::json!({
                    "path": path,
                    "claims": claims.summary(),
                    "verification": verification_json(report),
                });
            }
            json(&j)
        }
    };
    print(&text)?;
    if audit.defect() || verification_defect {
        return Ok(Outcome::Fails);
    }
    Ok(outcome)
}

/// Refuses (bad input) a background whose angular block is not proved to be
/// r^2 (dtheta^2 + sin^2 theta dphi^2) in the file's coordinates read as (t, r, theta, phi):
/// the polarizations on the sphere are defined in that frame.
pub fn round_sphere_or_refuse(p: &mut crate::Problem, command: &str) -> Result<(), Failure> {
    let c = p.coordinates.clone();
    let names = [c[0].as_str(), c[1].as_str(), c[2].as_str(), c[3].as_str()];
    let g = match &p.background {
        Some(b) => b.g,
        None => return Ok(()),
    };
    let why = crate::tt::sphere::round_sphere(&mut p.store, names, &g)
        .map_err(|e| crate::cli::out::gave_up(&e))?;
    match why {
        None => Ok(()),
        Some(why) => Err(Failure::Input(miette::miette!(
            help = format!(
                "`{command}` reads the coordinates {} as (t, r, theta, phi) and needs the \
                 background's angular block to be {r}^2 (d{th}^2 + sin({th})^2 d{ph}^2), so that \
                 e_{th}/{r} and e_{ph}/({r} sin {th}) are orthonormal",
                c.join(", "),
                r = c[1],
                th = c[2],
                ph = c[3]
            ),
            "{}: the polarizations on the sphere are not defined for this background: {why}",
            p.path
        ))),
    }
}

/// `project` in spherical coordinates (t, r, theta, phi), along the radial direction: h_plus
/// and h_cross on the sphere, exactly and at leading order in 1/r at fixed retarded time.
fn sphere(a: ProjectArgs, mut p: crate::Problem) -> Result<Outcome, Failure> {
    use crate::tt::sphere::{Leading, polarizations};
    let c = p.coordinates.clone();
    if a.dir.direction.trim() != "radial" || a.dir.basis.is_some() || a.written.output.is_some() {
        return Err(Failure::Input(miette::miette!(
            help = format!(
                "in the coordinates {} (read as t, r, theta, phi), `project` works along the \
                 radial direction with the basis e_{}, e_{}: `--direction radial`, without \
                 --basis or --output",
                c.join(", "),
                c[2],
                c[3]
            ),
            "{}: only the radial projection is available in these coordinates",
            p.path
        )));
    }
    round_sphere_or_refuse(&mut p, "project")?;
    // A retarded-time name that the file does not use.
    let taken = |n: &str| {
        c.iter().any(|x| x == n)
            || p.parameters.iter().any(|(m, _)| m == n)
            || p.functions.iter().any(|(m, _)| m == n)
            || p.defines.iter().any(|(m, _)| m == n)
    };
    let mut u = "u".to_string();
    while taken(&u) {
        u.push('_');
    }
    let names = [c[0].as_str(), c[1].as_str(), c[2].as_str(), c[3].as_str()];
    let sampling = p.sampling.clone();
    let h = p.h;
    let sph = polarizations(&mut p.store, names, &h, &u, &sampling)?;
    // The audit: the printed forms against the definitions evaluated from the file's texts.
    let text = |mu: usize, nu: usize| format!("({})", p.h_text[mu][nu].as_deref().unwrap_or("0"));
    let (r, th) = (&c[1], &c[2]);
    let plus_def = format!("({} - {}/sin({th})^2)/(2*{r}^2)", text(2, 2), text(3, 3));
    let cross_def = format!("{}/({r}^2*sin({th}))", text(2, 3));
    // The audit reads the canonical texts (also JSON's); the text report prints in the file's
    // terms.
    let plus = p.store.to_text(sph.plus);
    let cross = p.store.to_text(sph.cross);
    let plus_shown = p.store.to_display_text(sph.plus);
    let cross_shown = p.store.to_display_text(sph.cross);
    let seed = p.sampling.seed;
    let route = crate::audit::expr::FileQuantities::texts(
        &p,
        &[
            ("h_plus".into(), format!("({plus}) - {plus_def}")),
            ("h_cross".into(), format!("({cross}) - {cross_def}")),
        ],
    );
    let mut proved = vec![crate::zero::Verdict::Zero; 2];
    let findings = crate::check::verdicts::audit_verdicts(&route, &mut proved, Some, seed);
    let defect = findings.iter().any(|f| f.is_defect());
    let mut leading = |l: &Leading| match l {
        Leading::Term { power, coefficient } => {
            let c = p.store.to_text(*coefficient);
            let shown = p.store.to_display_text(*coefficient);
            (
                format!("({shown}) * {r}^{power}"),
                Some(*power),
                Some(c),
                None,
            )
        }
        Leading::Zero => ("0".to_string(), None, Some("0".into()), None),
        Leading::Unavailable(why) => (
            format!("not available ({why})"),
            None,
            None,
            Some(why.clone()),
        ),
    };
    let pl = leading(&sph.plus_leading);
    let cl = leading(&sph.cross_leading);
    let label = a.file.display().to_string();
    let out = match a.shown.format {
        Format::Text => {
            let mut s = String::new();
            let _ = writeln!(s, "{}", heading(&label, p.name.as_deref()));
            let _ = writeln!(
                s,
                "on the sphere: n = e_{r}, basis u = e_{th}, v = e_{}; h_plus = (h_{th}{th} - \
                 h_{1}{1}/sin({th})^2)/(2 {r}^2), h_cross = h_{th}{1}/({r}^2 sin({th}))",
                c[3], c[3]
            );
            let _ = writeln!(s, "  h_plus  = {plus_shown}");
            let _ = writeln!(s, "  h_cross = {cross_shown}");
            let _ = writeln!(
                s,
                "  (the exact forms, against the definitions evaluated from the file's texts: {}; {})",
                findings[0].method(seed),
                findings[1].method(seed)
            );
            let _ = writeln!(
                s,
                "leading order in 1/{r} at fixed retarded time {u} = {} - {r} and fixed angles \
                 (from the exact form; not audited):",
                c[0]
            );
            let _ = writeln!(s, "  h_plus  ~ {}", pl.0);
            let _ = writeln!(s, "  h_cross ~ {}", cl.0);
            if defect {
                let _ = writeln!(
                    s,
                    "INTERNAL DEFECT: the exact route and the independent evaluation disagree"
                );
            }
            if a.shown.audit_points {
                let refs: Vec<&crate::audit::expr::Finding> = findings.iter().collect();
                s.push_str(&point_lines(&refs));
            }
            s
        }
        Format::Json => {
            let lead = |l: &(String, Option<i32>, Option<String>, Option<String>)| {
                serde_json::json!({
                    "power": l.1,
                    "coefficient": l.2,
                    "unavailable": l.3,
                })
            };
            let refs: Vec<&crate::audit::expr::Finding> = findings.iter().collect();
            json(&serde_json::json!({
                "file": label,
                "name": p.name,
                "direction": { "kind": "radial", "coordinates": c },
                "basis": { "u": format!("e_{th}"), "v": format!("e_{}", c[3]) },
                "h_plus": plus,
                "h_cross": cross,
                "leading_order": {
                    "retarded_time": format!("{u} = {} - {r}", c[0]),
                    "h_plus": lead(&pl),
                    "h_cross": lead(&cl),
                },
                "conventions": conventions(&p.coordinates),
                "audit": {
                    "h_plus": audit_json(&findings[0], seed),
                    "h_cross": audit_json(&findings[1], seed),
                    "defect": defect,
                    "seed": seed,
                    "points": points_json(&refs),
                },
            }))
        }
    };
    print(&out)?;
    Ok(if defect {
        Outcome::Fails
    } else {
        Outcome::Holds
    })
}
