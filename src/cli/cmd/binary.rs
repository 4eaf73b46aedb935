//! `lingrav binary`: a Keplerian binary in physical units (issue 13): luminosity, secular
//! evolution, time to coalescence, chirp and strain, each audited by a second route, and
//! with `--evolve` the orbit's evolution as a table and an SVG picture.

use crate::binary::coalesce::{EvolveError, audit_evolution, evolve};
use crate::binary::units::{Kind, parse_number, parse_quantity};
use crate::binary::{Orbit, semimajor_axis_of_period, summarize};
use crate::cli::out::{Failure, Outcome, print};
use crate::cli::plan::{Target, plan_optional_output, write_atomic};
use crate::cli::report::{Format, json};
use clap::Args;
use std::path::PathBuf;

use super::binary_report::{audit_lines, json_report, msun, text_report};

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
pub(super) struct Plan {
    pub(super) orbit: Orbit,
    /// How the size was given, for the report: ("period", seconds) or ("semimajor axis", m).
    pub(super) given: (&'static str, f64),
    pub(super) distance: Option<f64>,
    pub(super) until: Option<f64>,
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
            write_atomic(t, &crate::binary::svg::svg(ev, &title))?;
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
