//! `lingrav response`: the strain of a two-arm detector for a file's perturbation, exact in
//! t, by the TT route and the gauge-invariant tidal route, their agreement decided by the
//! zero test, and for a plane wave the finite-arm (light travel time) response. The algebra
//! is [`crate::detector::response`], the audit [`crate::detector::response_audit`].

use crate::canon::Form;
use crate::cli::audit::DEFAULT_SEED;
use crate::cli::limits::LimitArgs;
use crate::cli::out::{Failure, Outcome, print};
use crate::cli::plan::{ArmArgs, DirectionArgs, arg_failure, kind_word, numbers};
use crate::cli::report::{Format, heading, json, texts, vec_text, verdict_json};
use crate::detector::read_detector;
use crate::detector::response::{FiniteArm, Setup, finite_arm, plane_wave_along, respond};
use crate::detector::response_audit::{Inputs, POINTS, Printed, Report, TOLERANCE, audit};
use crate::gauge::plane::{PlaneError, PlaneWave};
use crate::problem::Problem;
use crate::tt::{Arg, ArgError};
use crate::zero::{Sampling, Verdict};
use clap::Args;
use std::fmt::Write as _;
use std::path::PathBuf;

/// Arguments of `lingrav response`.
#[derive(Args, Debug)]
pub struct ResponseArgs {
    /// The problem file (TOML, flat Cartesian).
    file: PathBuf,
    #[command(flatten)]
    dir: DirectionArgs,
    #[command(flatten)]
    arms: ArmArgs,
    /// The detector's corner `x,y,z` (constant expressions; the file's parameters allowed).
    #[arg(
        long,
        value_name = "X,Y,Z",
        default_value = "0,0,0",
        allow_hyphen_values = true
    )]
    at: String,
    /// The arms' length L, for the finite-arm (light travel time) response of a plane wave
    /// along --direction (a positive constant expression).
    #[arg(long, value_name = "L", allow_hyphen_values = true)]
    arm_length: Option<String>,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Text)]
    format: Format,
    /// Seed of the audit's points.
    #[arg(long, default_value_t = DEFAULT_SEED)]
    seed: u64,
    #[command(flatten)]
    limits: LimitArgs,
}

/// The source of the finite-arm formula, named beside it.
const FINITE_SOURCE: &str = "photon timing in TT gauge, dt = (1 + h^TT_aa/2) dl along each \
    leg, integrated exactly: the one-way form [G(u_end) - G(u_start)]/(2(1 - n.a)) is the \
    standard single-arm response (e.g. Estabrook & Wahlquist 1975, Doppler tracking; from \
    memory), here for a round trip of a Michelson arm";

/// The source of the tidal route.
const TIDAL_SOURCE: &str = "geodesic deviation d^2 xi^i/dt^2 = -R^i_0j0 xi^j (MTW sign): \
    d^2(dL_a/L)/dt^2 = -a^i a^j R_0i0j, so d^2 s/dt^2 = -(a a - b b)^ij R_0i0j = \
    -2 D_ij R_0i0j; for a TT wave R_0i0j = -(1/2) d_t^2 h_ij (common practice)";

/// A fresh name for the symbolic arm length.
fn fresh_length_name(p: &Problem, taken_too: &[String]) -> String {
    let taken = |n: &str| {
        p.parameters.iter().any(|(m, _)| m == n)
            || p.functions.iter().any(|(m, _)| m == n)
            || p.defines.iter().any(|(m, _)| m == n)
            || p.coordinates.iter().any(|m| m == n)
            || taken_too.iter().any(|m| m == n)
    };
    let mut n = "L".to_string();
    while taken(&n) {
        n.push('_');
    }
    n
}

fn constant_vector(p: &mut Problem, name: &str, text: &str) -> Result<[Form; 3], Failure> {
    let arg = Arg::new(name, text);
    let pieces = arg
        .split_exact(3, "a point is given as x,y,z")
        .map_err(arg_failure)?;
    let names = p.names.clone();
    let mut out = [p.store.zero(); 3];
    for (i, piece) in pieces.iter().enumerate() {
        out[i] = arg
            .build_constant(&mut p.store, &names, piece)
            .map_err(arg_failure)?;
    }
    Ok(out)
}

fn not_applicable(a: &ResponseArgs, text: &str, e: PlaneError) -> Failure {
    match e {
        PlaneError::Undecided(why) => Failure::GaveUp(format!(
            "cannot decide whether the finite-arm response applies: {why}"
        )),
        PlaneError::NotApplicable(why) => arg_failure(
            ArgError::whole(
                "--arm-length",
                text,
                format!(
                    "--arm-length does not apply: it needs a plane wave h(t - n.x) along \
                     --direction {}, and {why}",
                    a.dir.direction
                ),
            )
            .with_help("leave out --arm-length, or give the wave's propagation direction"),
        ),
    }
}

/// The finite-arm plan: the length and the proof that h is a plane wave along n.
struct FinitePlan {
    length: Form,
    text: String,
    wave: PlaneWave,
    symbol: String,
}

fn plan_finite(
    a: &ResponseArgs,
    p: &mut Problem,
    n: &[Form; 3],
    sampling: &Sampling,
    arm_symbols: &[String],
) -> Result<Option<FinitePlan>, Failure> {
    let Some(text) = &a.arm_length else {
        return Ok(None);
    };
    let value = numbers(
        p,
        "--arm-length",
        text,
        Some(1),
        "the arm length is one positive constant, e.g. 1 or 2*pi/w",
    )?[0];
    if value <= 0.0 {
        return Err(arg_failure(ArgError::whole(
            "--arm-length",
            text,
            "the arm length must be positive",
        )));
    }
    let arg = Arg::new("--arm-length", text);
    let pieces = arg
        .split_exact(1, "the arm length is one constant")
        .map_err(arg_failure)?;
    let names = p.names.clone();
    let length = arg
        .build_constant(&mut p.store, &names, &pieces[0])
        .map_err(arg_failure)?;
    let h = p.h;
    let wave =
        plane_wave_along(&mut p.store, &h, n, sampling).map_err(|e| not_applicable(a, text, e))?;
    Ok(Some(FinitePlan {
        length,
        text: text.clone(),
        wave,
        symbol: fresh_length_name(p, arm_symbols),
    }))
}

fn verdict_word(v: &Verdict) -> String {
    match v {
        Verdict::Zero => "proved".into(),
        Verdict::Nonzero(w) => format!("FALSE (certified witness {w})"),
        Verdict::Undecided(why) => format!("undecided ({why})"),
    }
}

fn agreement_word(v: &Verdict) -> String {
    match v {
        Verdict::Zero => "agree (proved)".into(),
        Verdict::Nonzero(w) => format!("disagree (certified witness {w})"),
        Verdict::Undecided(why) => format!("undecided ({why})"),
    }
}

/// The audit in one line.
fn audit_line(r: &Report, seed: u64) -> String {
    if let Some(line) = crate::cli::audit::defect_line(r, "the second route") {
        return line;
    }
    let agreeing = r.rows.iter().filter(|x| x.agrees()).count();
    let mut s = format!(
        "audited: the printed exact forms, evaluated by the independent jet route (certified \
         intervals), agree with D:Lambda(n):h, -2 D:R_0i0j from the jets of the file's texts \
         and the quadrature of the photon delay, at {POINTS} seeded times and parameter values \
         (seed {seed:#x}; {agreeing} comparisons, relative tolerance {TOLERANCE:e})"
    );
    if agreeing == 0 {
        s = "not audited: no comparison could be made".to_string();
    }
    if let Some(why) = r.not_audited.first() {
        let _ = write!(s, "; not all audited: {why}");
    }
    s
}

/// `lingrav response`.
pub fn run(a: ResponseArgs) -> Result<Outcome, Failure> {
    let mut p = a.limits.load(&a.file)?;
    if !p.is_flat_cartesian() {
        return Err(Failure::Input(miette::miette!(
            help = "response works on flat Cartesian problem files (Minkowski background, \
                    coordinates t, x, y, z); give the perturbation in those coordinates",
            "{}: this file is about a background or other coordinates; the detector response \
             is defined here on flat space only",
            p.path
        )));
    }
    let sampling = Sampling {
        seed: a.seed,
        ..p.sampling.clone()
    };
    let det = read_detector(
        &mut p.store,
        &sampling,
        Arg::new("--arm-a", &a.arms.arm_a),
        Arg::new("--arm-b", &a.arms.arm_b),
    )
    .map_err(arg_failure)?;
    let at = constant_vector(&mut p, "--at", &a.at)?;
    let direction = a.dir.plan(&mut p)?;
    let mut arm_symbols = Vec::new();
    for f in det.a.iter().chain(&det.b) {
        arm_symbols.extend(p.store.free_symbols(*f).iter().map(|s| s.to_string()));
    }
    let n = direction.n;
    let finite_plan = plan_finite(&a, &mut p, &n, &sampling, &arm_symbols)?;
    let setup = Setup {
        detector: det,
        at,
        direction,
    };

    let h = p.h;
    let r = respond(&mut p.store, &h, &setup, &sampling).map_err(|e| match e {
        crate::canon::CanonError::DivisionByZero | crate::canon::CanonError::Undefined(_) => {
            arg_failure(
                ArgError::whole(
                    "--at",
                    &a.at,
                    format!("the perturbation is singular at the detector: {e}"),
                )
                .with_help("put the detector where h and its derivatives are defined"),
            )
        }
        other => crate::cli::out::gave_up(&other),
    })?;
    let finite: Option<Result<FiniteArm, String>> = match &finite_plan {
        Some(fp) => Some(
            match finite_arm(
                &mut p.store,
                &fp.wave,
                &setup,
                &r.tt.tt,
                r.tt.strain,
                (fp.length, &fp.symbol),
                &sampling,
            ) {
                Ok(f) => Ok(f),
                Err(PlaneError::Undecided(why) | PlaneError::NotApplicable(why)) => {
                    if let Some(l) = crate::cli::out::limit_in(&why) {
                        return Err(crate::cli::out::gave_up(&l));
                    }
                    Err(why)
                }
            },
        ),
        None => None,
    };

    let st = &mut p.store;
    let tt_text = st.to_text(r.tt.strain);
    let second_text = st.to_text(r.tidal.second);
    let tidal_text = r.tidal.strain.as_ref().ok().map(|f| st.to_text(*f));
    let finite_text = match &finite {
        Some(Ok(f)) => Some(st.to_text(f.strain)),
        _ => None,
    };
    let inputs = Inputs {
        arms: setup.detector.texts.clone(),
        at: std::array::from_fn(|i| st.to_text(setup.at[i])),
        n: std::array::from_fn(|i| st.to_text(setup.direction.n[i])),
        length: finite_plan.as_ref().map(|f| f.text.clone()),
    };
    let printed = Printed {
        tt: tt_text.clone(),
        second: second_text.clone(),
        tidal: tidal_text.clone(),
        finite: finite_text.clone(),
    };
    let report = audit(&p, &inputs, &printed, a.seed);
    let defect = report.first_defect().is_some();
    let st = &mut p.store;

    let limit_false = matches!(
        &finite,
        Some(Ok(f)) if matches!(f.limit_value, Verdict::Nonzero(_)) || matches!(f.limit_slope, Verdict::Nonzero(_))
    );
    let limit_undecided = matches!(
        &finite,
        Some(Ok(f)) if matches!(f.limit_value, Verdict::Undecided(_)) || matches!(f.limit_slope, Verdict::Undecided(_))
    ) || matches!(&finite, Some(Err(_)));
    let outcome = if defect || limit_false || matches!(r.agreement, Verdict::Nonzero(_)) {
        Outcome::Fails
    } else if limit_undecided || matches!(r.agreement, Verdict::Undecided(_)) {
        Outcome::Undecided
    } else {
        Outcome::Holds
    };

    let label = a.file.display().to_string();
    let a_text = vec_text(st, &setup.detector.a);
    let b_text = vec_text(st, &setup.detector.b);
    let at_text = vec_text(st, &setup.at);
    let n_text = vec_text(st, &setup.direction.n);
    let u_text = vec_text(st, &setup.direction.u);
    let v_text = vec_text(st, &setup.direction.v);
    let [plus, cross, fp, fc] =
        [r.tt.plus, r.tt.cross, r.tt.f_plus, r.tt.f_cross].map(|f| st.to_text(f));
    let constants = r.constants.map(|(c0, c1)| (st.to_text(c0), st.to_text(c1)));
    let finite_parts = match &finite {
        Some(Ok(f)) => Some((
            st.to_text(f.length),
            st.to_text(f.delays[0]),
            st.to_text(f.delays[1]),
        )),
        _ => None,
    };
    let audit_text = audit_line(&report, a.seed);

    let text = match a.format {
        Format::Text => {
            let mut s = String::new();
            let _ = writeln!(s, "{}", heading(&label, p.name.as_deref()));
            let _ = writeln!(
                s,
                "detector   arms a = {a_text}, b = {b_text}, D = (a a - b b)/2, corner x0 = {at_text}"
            );
            let _ = writeln!(
                s,
                "direction  n = {n_text}  [{}; {}], basis u = {u_text}, v = {v_text}",
                kind_word(setup.direction.kind),
                setup.direction.n_note
            );
            let _ = writeln!(
                s,
                "TT route (long-wavelength limit): s(t) = D_ij h^TT_ij(t, x0), h^TT along n"
            );
            let _ = writeln!(s, "  s(t) = {tt_text}");
            let _ = writeln!(
                s,
                "  = F_plus h_plus + F_cross h_cross, F_plus = {fp}, F_cross = {fc},"
            );
            let _ = writeln!(s, "    h_plus(t, x0) = {plus}, h_cross(t, x0) = {cross}");
            let _ = writeln!(
                s,
                "tidal route (gauge invariant): d^2 s/dt^2 = -2 D_ij R_0i0j(t, x0)"
            );
            let _ = writeln!(s, "  d^2 s/dt^2 = {second_text}");
            match (&tidal_text, &r.tidal.strain) {
                (Some(t), _) => {
                    let _ = writeln!(s, "  s(t) = {t} + c0 + c1 t (defined up to c0 + c1 t)");
                }
                (None, Err(why)) => {
                    let _ = writeln!(s, "  s(t): not integrated ({why})");
                }
                _ => {}
            }
            if let Some((c0, c1)) = &constants {
                let _ = writeln!(s, "  with the TT route's constants: c0 = {c0}, c1 = {c1}");
            }
            let _ = writeln!(s, "  source: {TIDAL_SOURCE}");
            let _ = writeln!(
                s,
                "agreement  {}: d^2/dt^2 of the TT strain against -2 D_ij R_0i0j, by the zero test",
                agreement_word(&r.agreement)
            );
            match (&finite, &finite_parts) {
                (Some(Ok(f)), Some((len, da, db))) => {
                    let _ = writeln!(
                        s,
                        "finite arms  L = {len}: s_L(t) = (dT_a - dT_b)/(2 L), photon received at x0 at t"
                    );
                    let _ = writeln!(s, "  s_L(t) = {}", finite_text.as_deref().unwrap_or(""));
                    let _ = writeln!(s, "  dT_a = {da}");
                    let _ = writeln!(s, "  dT_b = {db}");
                    let _ = writeln!(
                        s,
                        "  L -> 0 (symbolic {0}): (dT_a - dT_b)({0} = 0) = 0: {1}; d/d{0} (dT_a - \
                         dT_b)({0} = 0) = 2 s(t): {2}; so s_L -> s",
                        f.symbol,
                        verdict_word(&f.limit_value),
                        verdict_word(&f.limit_slope)
                    );
                    let _ = writeln!(s, "  source: {FINITE_SOURCE}");
                }
                (Some(Err(why)), _) => {
                    let _ = writeln!(s, "finite arms  undecided ({why})");
                }
                _ => {}
            }
            let _ = writeln!(s, "audit      {audit_text}");
            s
        }
        Format::Json => {
            let agreement = {
                let mut v = verdict_json(&r.agreement);
                v["result"] = match &r.agreement {
                    Verdict::Zero => "agree",
                    Verdict::Nonzero(_) => "disagree",
                    Verdict::Undecided(_) => "undecided",
                }
                .into();
                v["statement"] = "d^2/dt^2 (D_ij h^TT_ij(t, x0)) = -2 D_ij R_0i0j(t, x0)".into();
                v
            };
            let finite_json = match (&finite, &finite_parts) {
                (Some(Ok(f)), Some((len, da, db))) => serde_json::json!({
                    "arm_length": len,
                    "strain": finite_text,
                    "delay_a": da,
                    "delay_b": db,
                    "symbol": f.symbol,
                    "limit_value": verdict_json(&f.limit_value),
                    "limit_slope": verdict_json(&f.limit_slope),
                    "source": FINITE_SOURCE,
                }),
                (Some(Err(why)), _) => serde_json::json!({ "undecided": why }),
                _ => serde_json::Value::Null,
            };
            let rows = crate::cli::audit::comparison_rows(&report.rows);
            json(&serde_json::json!({
                "file": label,
                "name": p.name,
                "detector": {
                    "a": texts(st, &setup.detector.a),
                    "b": texts(st, &setup.detector.b),
                    "at": texts(st, &setup.at),
                    "tensor": "D = (a a - b b)/2",
                },
                "direction": {
                    "kind": kind_word(setup.direction.kind),
                    "n": texts(st, &setup.direction.n),
                    "u": texts(st, &setup.direction.u),
                    "v": texts(st, &setup.direction.v),
                },
                "tt_route": {
                    "strain": tt_text,
                    "h_plus": plus,
                    "h_cross": cross,
                    "F_plus": fp,
                    "F_cross": fc,
                },
                "tidal_route": {
                    "second_derivative": second_text,
                    "strain": tidal_text,
                    "not_integrated": r.tidal.strain.as_ref().err(),
                    "constants": constants.as_ref().map(|(c0, c1)| serde_json::json!({ "c0": c0, "c1": c1 })),
                    "source": TIDAL_SOURCE,
                },
                "agreement": agreement,
                "finite_arm": finite_json,
                "audit": {
                    "defect": defect,
                    "method": audit_text,
                    "comparisons": rows,
                    "not_audited": report.not_audited,
                    "seed": a.seed,
                },
            }))
        }
    };
    print(&text)?;
    Ok(outcome)
}
