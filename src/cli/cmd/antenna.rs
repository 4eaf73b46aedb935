//! `lingrav antenna`: the antenna pattern `F_plus`, `F_cross` of a two-arm detector for a
//! source direction and polarization angle, exactly and in f64, its averages over the sky
//! and psi, and optionally an SVG sky map. The algebra, the proofs and the audit are in
//! [`crate::detector`]; the convention is [`crate::detector::CONVENTION`].

use super::zero::LimitArgs;
use crate::cli::audit::DEFAULT_SEED;
use crate::cli::out::{Failure, Outcome, print};
use crate::cli::plan::{ArmArgs, arg_failure, plan_optional_output, write_atomic};
use crate::cli::report::{Format, json, texts, vec_text, verdict_json};
use crate::detector::audit::{Inputs, POINTS, Printed, Report, TOLERANCE, audit};
use crate::detector::map::{MapAudit, Quantity, audit_map, sky_map, svg};
use crate::detector::numeric::{QUADRATURE_METHOD, eval_text, eval_vector, pattern, quadrature};
use crate::detector::{Antenna, CONVENTION, Detector, analyse, read_angle, read_detector};
use crate::tt::{Arg, ArgError};
use crate::zero::{Sampling, Verdict};
use clap::{Args, ValueEnum};
use std::fmt::Write as _;
use std::path::PathBuf;

/// What the sky map shows.
#[derive(Clone, Copy, Debug, ValueEnum)]
pub enum MapArg {
    /// sqrt(F_plus^2 + F_cross^2), independent of psi.
    Rms,
    /// F_plus at --psi.
    Plus,
    /// F_cross at --psi.
    Cross,
}

/// Arguments of `lingrav antenna`.
#[derive(Args, Debug)]
pub struct AntennaArgs {
    #[command(flatten)]
    arms: ArmArgs,
    /// Polar angle of the direction to the source, from the z axis: a number or an expression
    /// (`pi/3`, `0.3`, `th`).
    #[arg(
        long,
        value_name = "THETA",
        default_value = "theta",
        allow_hyphen_values = true
    )]
    theta: String,
    /// Azimuth of the direction to the source, from the x axis towards y.
    #[arg(
        long,
        value_name = "PHI",
        default_value = "phi",
        allow_hyphen_values = true
    )]
    phi: String,
    /// Polarization angle: turns u from e_theta towards e_phi.
    #[arg(
        long,
        value_name = "PSI",
        default_value = "psi",
        allow_hyphen_values = true
    )]
    psi: String,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Text)]
    format: Format,
    /// Also draw a sky map (equirectangular in phi and theta) as an SVG picture.
    #[arg(long, value_name = "FILE.svg")]
    svg: Option<PathBuf>,
    /// What the sky map shows.
    #[arg(long, value_enum, default_value_t = MapArg::Rms)]
    map: MapArg,
    /// Replace the SVG file if it exists.
    #[arg(long)]
    force: bool,
    /// Seed of the audit points (when the inputs have symbols) and of the zero test.
    #[arg(long, default_value_t = DEFAULT_SEED)]
    seed: u64,
    #[command(flatten)]
    limits: LimitArgs,
}

/// Map rows (theta cells of 5 degrees) and columns (phi cells of 5 degrees).
const MAP_ROWS: usize = 36;
const MAP_COLS: usize = 72;

/// Sources of the averages, named beside the numbers.
const AVERAGE_SOURCE: &str = "common practice: <F_plus^2> = <F_cross^2> = 1/5, \
    <F_plus^2 + F_cross^2> = 2/5 for perpendicular arms; the general (2/5) sin^2 is derived from \
    the isotropic moments of the TT projector and proved above for these arms";

/// The map as planned: the arms in f64, psi and what to show.
struct MapPlan {
    a: [f64; 3],
    b: [f64; 3],
    psi: f64,
    quantity: Quantity,
}

fn plan_map(
    a: &AntennaArgs,
    st: &mut crate::Store,
    det: &Detector,
    psi: crate::Form,
) -> Result<Option<MapPlan>, Failure> {
    if a.svg.is_none() {
        return Ok(None);
    }
    let mut arm_symbols = Vec::new();
    for f in det.a.iter().chain(&det.b) {
        arm_symbols.extend(st.free_symbols(*f));
    }
    if let Some(s) = arm_symbols.first() {
        let (name, text) = if det.a.iter().any(|f| st.free_symbols(*f).contains(s)) {
            ("--arm-a", &a.arms.arm_a)
        } else {
            ("--arm-b", &a.arms.arm_b)
        };
        return Err(arg_failure(
            ArgError::whole(
                name,
                text,
                format!("the sky map needs numeric arms, but this one uses `{s}`"),
            )
            .with_help("give the arms as numbers to draw --svg"),
        ));
    }
    let quantity = match a.map {
        MapArg::Rms => Quantity::Rms,
        MapArg::Plus => Quantity::Plus,
        MapArg::Cross => Quantity::Cross,
    };
    let psi_value = if st.free_symbols(psi).is_empty() {
        Some(eval_text(&a.psi, &[]).map_err(|why| {
            arg_failure(ArgError::whole(
                "--psi",
                &a.psi,
                format!("not a finite number: {why}"),
            ))
        })?)
    } else {
        None
    };
    let psi = match (psi_value, quantity) {
        (Some(v), _) => v,
        // F_plus^2 + F_cross^2 is proved independent of psi before the map is drawn.
        (None, Quantity::Rms) => 0.0,
        (None, _) => {
            return Err(arg_failure(
                ArgError::whole(
                    "--psi",
                    &a.psi,
                    format!("the map of {} needs a number for psi", quantity.label()),
                )
                .with_help("give --psi a number, or draw --map rms (independent of psi)"),
            ));
        }
    };
    let vec = |texts: &[String; 3], name: &str, text: &str| {
        eval_vector(texts, &[]).map_err(|why| {
            arg_failure(ArgError::whole(
                name,
                text,
                format!("not a finite vector: {why}"),
            ))
        })
    };
    Ok(Some(MapPlan {
        a: vec(&det.texts[0], "--arm-a", &a.arms.arm_a)?,
        b: vec(&det.texts[1], "--arm-b", &a.arms.arm_b)?,
        psi,
        quantity,
    }))
}

/// The numbers of the f64 route when every input is a number.
struct Numbers {
    plus: f64,
    cross: f64,
}

fn numbers(det: &Detector, angles: &[String; 3]) -> Option<Numbers> {
    let a = eval_vector(&det.texts[0], &[]).ok()?;
    let b = eval_vector(&det.texts[1], &[]).ok()?;
    let ang: Vec<f64> = angles
        .iter()
        .map(|t| eval_text(t, &[]))
        .collect::<Result<_, _>>()
        .ok()?;
    let (plus, cross) = pattern(&a, &b, ang[0], ang[1], ang[2]);
    Some(Numbers { plus, cross })
}

/// The audit in one line.
fn audit_line(r: &Report, seed: u64, symbolic: bool) -> String {
    if let Some(line) = crate::cli::audit::defect_line(r, "the f64 route") {
        return line;
    }
    let agreeing = r.rows.iter().filter(|x| x.agrees()).count();
    let at = if symbolic {
        format!("at {POINTS} seeded values of the symbols (seed {seed:#x})")
    } else {
        "at the given values".to_string()
    };
    let mut s = format!(
        "audited: the printed exact forms, evaluated by the independent jet route (certified \
         intervals), agree with the f64 contraction of the vectors and the quadrature {at} \
         ({agreeing} comparisons, relative tolerance {TOLERANCE:e})"
    );
    if let Some(why) = r.not_audited.first() {
        let _ = write!(s, "; not all audited: {why}");
    }
    s
}

fn map_line(m: &MapAudit) -> String {
    if let Some((th, ph, which, v, (lo, hi))) = m.defect {
        return format!(
            "INTERNAL DEFECT: the sky map's {which} at theta = {th}, phi = {ph} is {v:e} in f64, \
             the printed general form evaluated by the jet route is in [{lo:e}, {hi:e}]; \
             nothing was written"
        );
    }
    if let Some(why) = &m.not_audited {
        return format!("not audited: {why}");
    }
    let mut s = format!(
        "audited: F_plus and F_cross of all {} cells agree with the jet route's enclosures of \
         the printed general forms",
        m.cells
    );
    if m.not_evaluable > 0 {
        let _ = write!(s, " ({} cells could not be evaluated)", m.not_evaluable);
    }
    s
}

fn verdict_word(v: &Verdict) -> String {
    match v {
        Verdict::Zero => "proved".into(),
        Verdict::Nonzero(_) => "FALSE (certified witness)".into(),
        Verdict::Undecided(why) => format!("undecided ({why})"),
    }
}

/// `lingrav antenna`.
pub fn run(a: AntennaArgs) -> Result<Outcome, Failure> {
    let mut st = a.limits.store();
    let sampling = Sampling {
        seed: a.seed,
        ..Sampling::default()
    };
    let det = read_detector(
        &mut st,
        &sampling,
        Arg::new("--arm-a", &a.arms.arm_a),
        Arg::new("--arm-b", &a.arms.arm_b),
    )
    .map_err(arg_failure)?;
    let th = read_angle(&mut st, Arg::new("--theta", &a.theta)).map_err(arg_failure)?;
    let ph = read_angle(&mut st, Arg::new("--phi", &a.phi)).map_err(arg_failure)?;
    let ps = read_angle(&mut st, Arg::new("--psi", &a.psi)).map_err(arg_failure)?;
    let map_plan = plan_map(&a, &mut st, &det, ps)?;
    let target = plan_optional_output(a.svg.as_deref(), a.force, "--svg")?;

    let an: Antenna = analyse(&mut st, &det, (th, ph, ps), &sampling)?;
    let printed = Printed {
        plus: st.to_text(an.plus),
        cross: st.to_text(an.cross),
        sum: st.to_text(an.averages.sum),
        each: st.to_text(an.averages.each),
    };
    let general = [st.to_text(an.general_plus), st.to_text(an.general_cross)];
    let angles = [a.theta.clone(), a.phi.clone(), a.psi.clone()];
    let inputs = Inputs {
        arms: det.texts.clone(),
        angles: angles.clone(),
    };
    let symbolic = !crate::detector::audit::symbols(&inputs).is_empty();
    let report = audit(&inputs, &printed, a.seed);
    let nums = numbers(&det, &angles);
    let arms_numeric = det
        .a
        .iter()
        .chain(&det.b)
        .all(|f| st.free_symbols(*f).is_empty());
    let quad = if arms_numeric {
        eval_vector(&det.texts[0], &[])
            .ok()
            .zip(eval_vector(&det.texts[1], &[]).ok())
            .map(|(x, y)| quadrature(&x, &y))
    } else {
        None
    };
    let proofs_hold = an.proofs.iter().all(|p| p.verdict == Verdict::Zero);
    let proof_false = an
        .proofs
        .iter()
        .any(|p| matches!(p.verdict, Verdict::Nonzero(_)));

    // The sky map, audited cell by cell before it is written.
    let mut map_report: Option<(String, MapAudit, (f64, f64), bool)> = None;
    if let (Some(m), Some(t)) = (&map_plan, &target) {
        let sky = sky_map(&m.a, &m.b, m.psi, m.quantity, MAP_ROWS, MAP_COLS);
        let check = audit_map(&sky, [&general[0], &general[1]], &an.general_names);
        // With a symbolic psi the rms map is drawn at psi = 0: only once that is proved
        // to change nothing.
        let psi_symbolic = !st.free_symbols(ps).is_empty();
        let independent = !psi_symbolic
            || an
                .proofs
                .iter()
                .any(|p| p.key == "psi_independent" && p.verdict == Verdict::Zero);
        let written = check.defect.is_none() && independent;
        if written {
            let title = format!(
                "antenna pattern, arms a = {}, b = {}",
                vec_text(&mut st, &det.a),
                vec_text(&mut st, &det.b)
            );
            write_atomic(t, &svg(&sky, [&m.a, &m.b], &title))?;
        }
        map_report = Some((t.path.display().to_string(), check, sky.range(), written));
    }
    let map_defect = map_report
        .as_ref()
        .is_some_and(|(_, m, _, _)| m.defect.is_some());
    let defect = report.defect() || map_defect || proof_false;

    let sum_text = st.to_text(an.averages.sum);
    let cos_opening = st.to_text(det.cos_opening);
    let opening_degrees =
        eval_text_of_form(&mut st, det.cos_opening).map(|c| c.acos().to_degrees());
    let sum_value = eval_text_of_form(&mut st, an.averages.sum);
    let each_value = eval_text_of_form(&mut st, an.averages.each);
    let text = match a.format {
        Format::Text => {
            let mut s = String::new();
            let _ = writeln!(
                s,
                "detector   arms a = {}, b = {}; a.b = {cos_opening}{}; D = (a a - b b)/2",
                vec_text(&mut st, &det.a),
                vec_text(&mut st, &det.b),
                opening_degrees.map_or(String::new(), |d| format!(
                    " (opening angle {d:.6} degrees)"
                ))
            );
            let _ = writeln!(
                s,
                "source     theta = {}, phi = {}, psi = {}",
                a.theta, a.phi, a.psi
            );
            let _ = writeln!(s, "convention {CONVENTION}");
            let _ = writeln!(s, "F_plus  = {}", printed.plus);
            let _ = writeln!(s, "F_cross = {}", printed.cross);
            if let Some(n) = &nums {
                let _ = writeln!(
                    s,
                    "numbers    F_plus = {:.12}, F_cross = {:.12} (f64 contraction of the vectors)",
                    n.plus, n.cross
                );
            }
            let _ = writeln!(s, "           {}", audit_line(&report, a.seed, symbolic));
            let _ = writeln!(
                s,
                "proofs     (zero test; symbolic {}, {}, {}):",
                an.general_names[0], an.general_names[1], an.general_names[2]
            );
            for p in &an.proofs {
                let _ = writeln!(s, "  {}: {}", p.statement, verdict_word(&p.verdict));
            }
            let _ = writeln!(
                s,
                "sky and polarization averages (uniform in solid angle, psi in [0, 2 pi)):"
            );
            let val = |v: Option<f64>| v.map_or(String::new(), |v| format!(" = {v}"));
            let _ = writeln!(
                s,
                "  <F_plus^2 + F_cross^2> = {sum_text}{} for every psi ((2/5) sin^2 of the \
                 opening angle)",
                val(sum_value)
            );
            let _ = writeln!(
                s,
                "  <F_plus^2> = <F_cross^2> = {}{}, <F_plus F_cross> = 0 (averaged over psi, by \
                 the rotation law)",
                printed.each,
                val(each_value)
            );
            if let Some(q) = &quad {
                let _ = writeln!(
                    s,
                    "  by quadrature: {:.15}, {:.15}, {:.15}, {:.1e} ({QUADRATURE_METHOD})",
                    q.sum, q.plus2, q.cross2, q.plus_cross
                );
            }
            let _ = writeln!(s, "  source: {AVERAGE_SOURCE}");
            if let Some((path, m, (lo, hi), written)) = &map_report {
                let _ = writeln!(s, "sky map    {}", map_line(m));
                if *written {
                    let _ = writeln!(
                        s,
                        "wrote {path} ({MAP_ROWS} x {MAP_COLS} cells of 5 degrees; values from \
                         {lo:.6} to {hi:.6})"
                    );
                }
            }
            if defect {
                let _ = writeln!(
                    s,
                    "INTERNAL DEFECT: the exact route and the independent evaluation disagree \
                     (see above)"
                );
            }
            s
        }
        Format::Json => {
            let proofs: Vec<serde_json::Value> = an
                .proofs
                .iter()
                .map(|p| {
                    let mut v = verdict_json(&p.verdict);
                    v["key"] = p.key.into();
                    v["statement"] = p.statement.clone().into();
                    v
                })
                .collect();
            let avg = |exact: &str, value: Option<f64>, q: Option<f64>| serde_json::json!({ "exact": exact, "value": value, "quadrature": q });
            let rows = crate::cli::audit::comparison_rows(&report.rows);
            json(&serde_json::json!({
                "detector": {
                    "a": texts(&mut st, &det.a),
                    "b": texts(&mut st, &det.b),
                    "cos_opening": cos_opening,
                    "opening_angle_degrees": opening_degrees,
                    "tensor": "D = (a a - b b)/2",
                },
                "angles": { "theta": a.theta, "phi": a.phi, "psi": a.psi },
                "convention": CONVENTION,
                "F_plus": nums.as_ref().map(|n| n.plus),
                "F_cross": nums.as_ref().map(|n| n.cross),
                "exact": {
                    "F_plus": printed.plus,
                    "F_cross": printed.cross,
                    "general": {
                        "angles": an.general_names,
                        "F_plus": general[0],
                        "F_cross": general[1],
                    },
                },
                "proofs": proofs,
                "sky_average": {
                    "F_plus2_plus_F_cross2": avg(&printed.sum, sum_value, quad.map(|q| q.sum)),
                    "F_plus2": avg(&printed.each, each_value, quad.map(|q| q.plus2)),
                    "F_cross2": avg(&printed.each, each_value, quad.map(|q| q.cross2)),
                    "F_plus_F_cross": avg("0", Some(0.0), quad.map(|q| q.plus_cross)),
                    "closed_form": "(2/5)(1 - (a.b)^2) = (2/5) sin^2(opening angle)",
                    "quadrature_method": QUADRATURE_METHOD,
                    "source": AVERAGE_SOURCE,
                },
                "audit": {
                    "defect": defect,
                    "method": audit_line(&report, a.seed, symbolic),
                    "comparisons": rows,
                    "not_audited": report.not_audited,
                    "seed": a.seed,
                },
                "svg": map_report.as_ref().map(|(path, m, (lo, hi), written)| serde_json::json!({
                    "path": path,
                    "written": written,
                    "quantity": map_plan.as_ref().map(|p| p.quantity.label()),
                    "psi": map_plan.as_ref().map(|p| p.psi),
                    "cells": [MAP_ROWS, MAP_COLS],
                    "range": [lo, hi],
                    "audit": map_line(m),
                })),
            }))
        }
    };
    print(&text)?;
    Ok(if defect {
        Outcome::Fails
    } else if proofs_hold {
        Outcome::Holds
    } else {
        Outcome::Undecided
    })
}

/// The value of a constant form (the exact route's own enclosure), if it has no symbols.
fn eval_text_of_form(st: &mut crate::Store, f: crate::Form) -> Option<f64> {
    if !st.free_symbols(f).is_empty() {
        return None;
    }
    let (re, im) = st.eval_f64(f, &crate::canon::Point::default())?;
    (im.abs() <= 1e-12 * (1.0 + re.abs())).then_some(re)
}
