//! `lingrav binary`: a Keplerian binary in physical units (issue 13): luminosity, secular
//! evolution, time to coalescence, chirp and strain, each audited by a second route, and
//! with `--evolve` the orbit's evolution as a table and an SVG picture.

use crate::cli::out::{Failure, Outcome, print};
use crate::cli::plan::{Target, plan_optional_output, write_atomic};
use crate::cli::report::{Format, json};
use clap::Args;
use lingrav::binary::coalesce::{Evolution, EvolveError, Stop, audit_evolution, evolve};
use lingrav::binary::units::{
    AU, C, DAY, G, GM_SUN, HOUR, JULIAN_YEAR, Kind, PARSEC, parse_number, parse_quantity,
};
use lingrav::binary::{
    AUDIT_TOLERANCE, Check, Orbit, Summary, enhancement, semimajor_axis_of_period, summarize,
};
use std::fmt::Write as _;
use std::path::PathBuf;

/// How the orbit's size is given: exactly one of the two.
#[derive(Args, Debug)]
#[group(required = true, multiple = false)]
pub struct OrbitSize {
    /// The orbital period, with a unit: s, h, d, yr (Julian), e.g. `7.75h`.
    #[arg(long, value_name = "P", allow_hyphen_values = true)]
    period: Option<String>,
    /// The semimajor axis of the relative orbit, with a unit: m, km, AU, pc, kpc, Mpc, Gpc.
    #[arg(long, value_name = "A", allow_hyphen_values = true)]
    semimajor_axis: Option<String>,
}

/// Arguments of `lingrav binary`.
#[derive(Args, Debug)]
pub struct BinaryArgs {
    /// The first mass, in solar masses (`1.4msun` or `1.4`).
    #[arg(long, value_name = "M", allow_hyphen_values = true)]
    m1: String,
    /// The second mass, in solar masses.
    #[arg(long, value_name = "M", allow_hyphen_values = true)]
    m2: String,
    #[command(flatten)]
    size: OrbitSize,
    /// The eccentricity, 0 <= e < 1 (a bound orbit).
    #[arg(
        long,
        value_name = "E",
        default_value = "0",
        allow_hyphen_values = true
    )]
    eccentricity: String,
    /// The distance to the binary, for the strain amplitude (m, km, AU, pc, kpc, Mpc, Gpc).
    #[arg(long, value_name = "D", allow_hyphen_values = true)]
    distance: Option<String>,
    /// Also evolve the orbit and print a table of t, a, e, f_gw and the GW phase.
    #[arg(long)]
    evolve: bool,
    /// Stop the evolution when f_gw reaches this frequency (Hz, mHz, kHz); default: at
    /// a = 6 G M / c^2.
    #[arg(
        long,
        value_name = "F",
        requires = "evolve",
        allow_hyphen_values = true
    )]
    until_frequency: Option<String>,
    /// Rows of the evolution table (at equal steps in ln a).
    #[arg(long, value_name = "N", default_value_t = 20, requires = "evolve",
          value_parser = clap::value_parser!(u16).range(2..=2000))]
    rows: u16,
    /// Also draw the evolution (a, e, f_gw against time) as an SVG picture.
    #[arg(long, value_name = "FILE.svg", requires = "evolve")]
    svg: Option<PathBuf>,
    /// Replace the SVG file if it exists.
    #[arg(long)]
    force: bool,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Text)]
    format: Format,
}

/// The smallest 1 - e accepted: closer to 1, the eccentricity as a double no longer fixes
/// 1 - e (on which the time to coalescence depends as (1 - e)^(7/2)) to better than 1e-7.
const MIN_ONE_MINUS_E: f64 = 1e-9;

/// Bad input naming its option.
fn bad(option: &str, text: &str, why: impl std::fmt::Display, help: &str) -> Failure {
    Failure::Input(miette::miette!(
        help = help.to_string(),
        "{option} {text:?}: {why}"
    ))
}

/// A positive quantity of `kind` given to `option`, in SI (masses as G m).
fn positive(option: &str, text: &str, kind: Kind, what: &str) -> Result<f64, Failure> {
    let help = format!("write a number and a unit, e.g. {option} {}", example(kind));
    let (v, _) = parse_quantity(text, kind).map_err(|e| bad(option, text, e, &help))?;
    if v <= 0.0 {
        return Err(bad(option, text, format!("{what} must be positive"), &help));
    }
    Ok(v)
}

fn example(kind: Kind) -> &'static str {
    match kind {
        Kind::Mass => "1.4msun",
        Kind::Time => "7.75h",
        Kind::Length => "6.4kpc",
        Kind::Frequency => "100Hz",
    }
}

/// What the command line asks for, read and checked before any work.
struct Plan {
    orbit: Orbit,
    /// How the size was given, for the report: ("period", seconds) or ("semimajor axis", m).
    given: (&'static str, f64),
    distance: Option<f64>,
    until: Option<f64>,
    svg: Option<Target>,
}

fn plan(a: &BinaryArgs) -> Result<Plan, Failure> {
    let gm1 = positive("--m1", &a.m1, Kind::Mass, "a mass")?;
    let gm2 = positive("--m2", &a.m2, Kind::Mass, "a mass")?;
    let e = parse_number(&a.eccentricity).map_err(|err| {
        bad(
            "--eccentricity",
            &a.eccentricity,
            err,
            "the eccentricity is a plain number, 0 <= e < 1",
        )
    })?;
    if !(0.0..1.0).contains(&e) {
        return Err(bad(
            "--eccentricity",
            &a.eccentricity,
            "a bound Kepler orbit has 0 <= e < 1",
            "e = 0 is a circle; e >= 1 is unbound (no orbit, no period)",
        ));
    }
    if 1.0 - e < MIN_ONE_MINUS_E {
        return Err(bad(
            "--eccentricity",
            &a.eccentricity,
            "1 - e is below 1e-9: in double precision e no longer fixes 1 - e well enough \
             (the time to coalescence goes as (1 - e)^(7/2)); a limit of lingrav, not of physics",
            "use e <= 0.999999999",
        ));
    }
    let gm = gm1 + gm2;
    let (a_m, given) = match (&a.size.period, &a.size.semimajor_axis) {
        (Some(p), None) => {
            let p_s = positive("--period", p, Kind::Time, "the period")?;
            (semimajor_axis_of_period(gm, p_s), ("period", p_s))
        }
        (None, Some(s)) => {
            let a_m = positive("--semimajor-axis", s, Kind::Length, "the semimajor axis")?;
            (a_m, ("semimajor axis", a_m))
        }
        // clap's group requires exactly one.
        _ => unreachable!("--period and --semimajor-axis form a required exclusive group"),
    };
    if !a_m.is_finite() || a_m <= 0.0 {
        return Err(bad(
            "--period",
            a.size.period.as_deref().unwrap_or(""),
            "the semimajor axis of this period is beyond double precision",
            "choose a period within the range of double precision",
        ));
    }
    let distance = a
        .distance
        .as_deref()
        .map(|d| positive("--distance", d, Kind::Length, "the distance"))
        .transpose()?;
    let until = a
        .until_frequency
        .as_deref()
        .map(|f| positive("--until-frequency", f, Kind::Frequency, "the frequency"))
        .transpose()?;
    let svg = plan_optional_output(a.svg.as_deref(), a.force, "--svg")?;
    Ok(Plan {
        orbit: Orbit {
            gm1,
            gm2,
            a: a_m,
            e,
        },
        given,
        distance,
        until,
        svg,
    })
}

/// A mass G m in solar masses, rounded to 13 significant digits (so that `6msun` reads back
/// as 6, not as 5.999999999999999 after the division by G M_sun).
fn msun(gm: f64) -> f64 {
    format!("{:.12e}", gm / GM_SUN)
        .parse()
        .unwrap_or(gm / GM_SUN)
}

/// A time in its readable unit.
fn readable_time(t: f64) -> String {
    let a = t.abs();
    if a >= JULIAN_YEAR {
        format!("{:.6e} yr", t / JULIAN_YEAR)
    } else if a >= DAY {
        format!("{:.6} d", t / DAY)
    } else if a >= HOUR {
        format!("{:.6} h", t / HOUR)
    } else {
        format!("{t:.6} s")
    }
}

/// A length in its readable unit.
fn readable_length(m: f64) -> String {
    if m >= 1e3 * PARSEC {
        format!("{:.6e} kpc", m / (1e3 * PARSEC))
    } else if m >= 0.01 * AU {
        format!("{:.6e} AU", m / AU)
    } else {
        format!("{:.6e} km", m / 1e3)
    }
}

/// The audit's verdict: the largest disagreement, or the defects.
struct AuditResult {
    lines: String,
    defect: bool,
}

fn audit_lines(checks: &[Check]) -> AuditResult {
    let mut s = String::new();
    let failing: Vec<&Check> = checks.iter().filter(|c| c.fails(AUDIT_TOLERANCE)).collect();
    for c in &failing {
        let _ = writeln!(
            s,
            "INTERNAL DEFECT: {} = {:e} disagrees with its second route ({}) = {:e}: relative \
             disagreement {:.1e} beyond the tolerance {AUDIT_TOLERANCE:.0e}. Please report this \
             (the command) as a bug",
            c.key, c.value, c.route, c.second, c.disagreement
        );
    }
    if failing.is_empty() {
        let compared: Vec<&Check> = checks.iter().filter(|c| c.skipped.is_none()).collect();
        let _ = write!(
            s,
            "audit: {} quantities agree with a second, independent route within \
             {AUDIT_TOLERANCE:.0e} relative",
            compared.len()
        );
        if let Some(w) = compared
            .iter()
            .max_by(|x, y| x.disagreement.total_cmp(&y.disagreement))
        {
            let _ = write!(
                s,
                " (largest disagreement {:.1e}, {})",
                w.disagreement, w.key
            );
        }
        for c in checks.iter().filter(|c| c.skipped.is_some()) {
            let _ = write!(s, "; {} not audited: {}", c.key, c.skipped.unwrap_or(""));
        }
        s.push('\n');
    }
    AuditResult {
        lines: s,
        defect: !failing.is_empty(),
    }
}

/// `lingrav binary`.
pub fn run(a: BinaryArgs) -> Result<Outcome, Failure> {
    let p = plan(&a)?;
    let o = p.orbit;
    let out_of_range = |e: &dyn std::fmt::Display| {
        Failure::Input(miette::miette!(
            help = "masses, sizes and distances must keep every quantity within double \
                    precision (about 1e-300 to 1e300 in SI)",
            "{e}"
        ))
    };
    let s = summarize(o, p.distance).map_err(|e| out_of_range(&e))?;
    let evolution = if a.evolve {
        let ev = evolve(&o, p.until, usize::from(a.rows)).map_err(|e| {
            let option = match e {
                EvolveError::FrequencyNotAbove { .. } => "--until-frequency",
                _ => "--evolve",
            };
            Failure::Input(miette::miette!(
                help = "choose --until-frequency above the binary's f_gw, or an orbit wider than \
                        6 G M / c^2",
                "{option}: {e}"
            ))
        })?;
        let checks = audit_evolution(&o, &ev).map_err(|e| out_of_range(&e))?;
        Some((ev, checks))
    } else {
        None
    };
    let mut checks = s.audit.clone();
    if let Some((_, extra)) = &evolution {
        checks.extend(extra.iter().cloned());
    }
    let audit = audit_lines(&checks);
    // The picture first, so that the report can say it was written; not when the audit
    // found a defect.
    let written = match (&p.svg, &evolution) {
        (Some(t), Some((ev, _))) if !audit.defect => {
            let title = format!(
                "lingrav binary: m1 = {} msun, m2 = {} msun, e0 = {}",
                msun(o.gm1),
                msun(o.gm2),
                o.e
            );
            write_atomic(t, &lingrav::binary::svg::svg(ev, &title))?;
            Some(t.path.display().to_string())
        }
        _ => None,
    };
    let ev = evolution.as_ref().map(|x| &x.0);
    let text = match a.format {
        Format::Text => text_report(&p, &s, ev, p.until, written.as_deref(), &audit.lines),
        Format::Json => json(&json_report(
            &p,
            &s,
            ev,
            &checks,
            &audit,
            written.as_deref(),
        )),
    };
    print(&text)?;
    Ok(if audit.defect {
        Outcome::Fails
    } else {
        Outcome::Holds
    })
}

fn stop_text(ev: &Evolution, until: Option<f64>) -> String {
    match (ev.stop, until) {
        (Stop::Frequency, Some(f)) => format!("f_gw reached {f} Hz"),
        (Stop::Innermost, Some(f)) => format!(
            "a reached 6 G M / c^2 before f_gw reached {f} Hz (the point-mass formulas do not \
             apply closer in)"
        ),
        _ => "a reached 6 G M / c^2 (the point-mass formulas do not apply closer in)".into(),
    }
}

fn text_report(
    p: &Plan,
    s: &Summary,
    ev: Option<&Evolution>,
    until: Option<f64>,
    written: Option<&str>,
    audit: &str,
) -> String {
    let o = &s.orbit;
    let mut t = String::new();
    let given = match p.given {
        ("period", v) => format!("period {}", readable_time(v)),
        (_, v) => format!("semimajor axis {v:e} m"),
    };
    let _ = writeln!(
        t,
        "binary                 m1 = {} msun, m2 = {} msun, e = {}, orbit given by its {given}",
        msun(o.gm1),
        msun(o.gm2),
        o.e
    );
    let _ = writeln!(
        t,
        "semimajor axis         {:.6e} m  ({})",
        o.a,
        readable_length(o.a)
    );
    let _ = writeln!(
        t,
        "orbital period         {:.6e} s  ({})",
        s.period,
        readable_time(s.period)
    );
    let _ = writeln!(
        t,
        "speed scale            sqrt(G M / a) / c = {:.3e} (the slow-motion quadrupole formulas need it << 1)",
        (o.gm() / o.a).sqrt() / C
    );
    let _ = writeln!(
        t,
        "luminosity             {:.6e} W  (orbit average; Peters & Mathews 1963 f(e) = {:.6})",
        s.luminosity,
        enhancement(o.e)
    );
    let _ = writeln!(
        t,
        "da/dt                  {:.6e} m/s  ({:.6e} m/yr)",
        s.semimajor_axis_rate,
        s.semimajor_axis_rate * JULIAN_YEAR
    );
    let _ = writeln!(
        t,
        "de/dt                  {:.6e} 1/s  ({:.6e} per yr)",
        s.eccentricity_rate,
        s.eccentricity_rate * JULIAN_YEAR
    );
    let _ = writeln!(
        t,
        "dP/dt                  {:.6e} s/s  ((3/2)(P/a) da/dt)",
        s.period_derivative
    );
    let _ = writeln!(
        t,
        "time to coalescence    {:.6e} s  ({}; Peters 1964 integral for e0 = {}, relative quadrature error {:.0e})",
        s.coalescence_time,
        readable_time(s.coalescence_time),
        o.e,
        s.coalescence.error
    );
    let _ = writeln!(
        t,
        "circular closed form   {:.6e} s  ({}; a^4/(4 beta) at the same a; ratio T/T_c = {:.10})",
        s.circular_coalescence_time,
        readable_time(s.circular_coalescence_time),
        s.coalescence.value
    );
    let _ = writeln!(
        t,
        "chirp mass             {:.8} msun  ((m1 m2)^(3/5) / (m1 + m2)^(1/5))",
        s.chirp_mass_msun
    );
    let _ = writeln!(
        t,
        "GW frequency           {:.6e} Hz  (f_gw = 2 f_orb, the dominant quadrupole harmonic; for e > 0 the power is spread over the harmonics n f_orb)",
        s.gw_frequency
    );
    let _ = writeln!(
        t,
        "df_gw/dt               {:.6e} Hz/s  (-f_gw (dP/dt) / P)",
        s.gw_frequency_rate
    );
    if let (Some(h), Some(d)) = (s.strain, p.distance) {
        let _ = writeln!(
            t,
            "strain amplitude       {h:.6e}  at d = {d:.6e} m ({:.6e} kpc); h0 = 4 (G Mc)^(5/3) (pi f_gw)^(2/3) / (c^4 d), the face-on amplitude of a circular orbit at f_gw",
            d / (1e3 * PARSEC)
        );
    }
    let _ = writeln!(
        t,
        "constants              G = {G:e} m^3/(kg s^2) (CODATA), G M_sun = {GM_SUN:e} m^3/s^2 (IAU 2015 nominal), c = {C} m/s, yr = 365.25 d"
    );
    if let Some(ev) = ev {
        let _ = writeln!(t);
        let _ = writeln!(
            t,
            "evolution              {} rows at equal steps in ln a, until {}; {} integration steps",
            ev.samples.len(),
            stop_text(ev, until),
            ev.steps
        );
        let _ = writeln!(
            t,
            "{:>14}  {:>14}  {:>12}  {:>14}  {:>14}",
            "t [s]", "a [m]", "e", "f_gw [Hz]", "phase [rad]"
        );
        for r in &ev.samples {
            let _ = writeln!(
                t,
                "{:>14.6e}  {:>14.6e}  {:>12.6e}  {:>14.6e}  {:>14.6e}",
                r.t, r.a, r.e, r.f_gw, r.phase
            );
        }
        let _ = writeln!(
            t,
            "phase: of the n = 2 harmonic, 2 x the mean orbital phase accumulated since t = 0"
        );
        if let Some(path) = written {
            let _ = writeln!(t, "wrote {path} (a, e, f_gw against time)");
        }
    }
    t.push_str(audit);
    t
}

fn check_json(c: &Check) -> serde_json::Value {
    serde_json::json!({
        "quantity": c.key,
        "route": c.route,
        "value": c.value,
        "second": c.second,
        "relative_disagreement": c.skipped.map_or(serde_json::json!(c.disagreement), |_| serde_json::Value::Null),
        "not_audited": c.skipped,
    })
}

fn json_report(
    p: &Plan,
    s: &Summary,
    ev: Option<&Evolution>,
    checks: &[Check],
    audit: &AuditResult,
    written: Option<&str>,
) -> serde_json::Value {
    let o = &s.orbit;
    serde_json::json!({
        "m1_msun": msun(o.gm1),
        "m2_msun": msun(o.gm2),
        "eccentricity": o.e,
        "given": p.given.0,
        "semimajor_axis_m": o.a,
        "period_s": s.period,
        "velocity_ratio": (o.gm() / o.a).sqrt() / C,
        "enhancement_factor": enhancement(o.e),
        "luminosity_w": s.luminosity,
        "semimajor_axis_rate_m_per_s": s.semimajor_axis_rate,
        "eccentricity_rate_per_s": s.eccentricity_rate,
        "period_derivative": s.period_derivative,
        "time_to_coalescence_s": s.coalescence_time,
        "time_to_coalescence_yr": s.coalescence_time / JULIAN_YEAR,
        "circular_coalescence_time_s": s.circular_coalescence_time,
        "coalescence_ratio": s.coalescence.value,
        "coalescence_quadrature": {
            "relative_error_estimate": s.coalescence.error,
            "intervals": s.coalescence.intervals,
        },
        "chirp_mass_msun": s.chirp_mass_msun,
        "gw_frequency_hz": s.gw_frequency,
        "gw_frequency_note": "f_gw = 2 f_orb, the dominant quadrupole harmonic",
        "gw_frequency_rate_hz_per_s": s.gw_frequency_rate,
        "distance_m": p.distance,
        "strain_amplitude": s.strain,
        "strain_formula": "h0 = 4 (G Mc)^(5/3) (pi f_gw)^(2/3) / (c^4 d), face-on, circular orbit",
        "constants": {
            "G": G,
            "GM_sun": GM_SUN,
            "c": C,
            "year_s": JULIAN_YEAR,
            "sources": "G: CODATA recommended value; GM_sun: IAU 2015 Resolution B3 nominal; c: exact (SI); year: Julian",
        },
        "evolution": ev.map(|ev| serde_json::json!({
            "stop": match ev.stop { Stop::Frequency => "frequency", Stop::Innermost => "innermost_separation" },
            "steps": ev.steps,
            "rows": ev.samples.iter().map(|r| serde_json::json!({
                "t_s": r.t, "a_m": r.a, "e": r.e, "f_gw_hz": r.f_gw, "phase_rad": r.phase,
            })).collect::<Vec<_>>(),
        })),
        "svg": written,
        "audit": {
            "tolerance": AUDIT_TOLERANCE,
            "defect": audit.defect,
            "checks": checks.iter().map(check_json).collect::<Vec<_>>(),
        },
    })
}
