//! What `lingrav binary` prints: its report as text (one labelled line a quantity, the
//! evolution's table) and as JSON, and the audit's lines. The command's planning and
//! computing are in `binary.rs`.

use super::binary::Plan;
use crate::binary::coalesce::{Evolution, Stop};
use crate::binary::units::{AU, C, DAY, G, GM_SUN, HOUR, JULIAN_YEAR, PARSEC};
use crate::binary::{AUDIT_TOLERANCE, Check, Summary, enhancement};
use std::fmt::Write as _;

/// A mass G m in solar masses, rounded to 13 significant digits (so that `6msun` reads back
/// as 6, not as 5.999999999999999 after the division by G M_sun).
pub(super) fn msun(gm: f64) -> f64 {
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
pub(super) struct AuditResult {
    pub(super) lines: String,
    pub(super) defect: bool,
}

pub(super) fn audit_lines(checks: &[Check]) -> AuditResult {
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

pub(super) fn text_report(
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
    let mut rows: Vec<(&str, String)> = vec![
        (
            "binary",
            format!(
                "m1 = {} msun, m2 = {} msun, e = {}, orbit given by its {given}",
                msun(o.gm1),
                msun(o.gm2),
                o.e
            ),
        ),
        (
            "semimajor axis",
            format!("{:.6e} m  ({})", o.a, readable_length(o.a)),
        ),
        (
            "orbital period",
            format!("{:.6e} s  ({})", s.period, readable_time(s.period)),
        ),
        (
            "speed scale",
            format!(
                "sqrt(G M / a) / c = {:.3e} (the slow-motion quadrupole formulas need it << 1)",
                (o.gm() / o.a).sqrt() / C
            ),
        ),
        (
            "luminosity",
            format!(
                "{:.6e} W  (orbit average; Peters & Mathews 1963 f(e) = {:.6})",
                s.luminosity,
                enhancement(o.e)
            ),
        ),
        (
            "da/dt",
            format!(
                "{:.6e} m/s  ({:.6e} m/yr)",
                s.semimajor_axis_rate,
                s.semimajor_axis_rate * JULIAN_YEAR
            ),
        ),
        (
            "de/dt",
            format!(
                "{:.6e} 1/s  ({:.6e} per yr)",
                s.eccentricity_rate,
                s.eccentricity_rate * JULIAN_YEAR
            ),
        ),
        (
            "dP/dt",
            format!("{:.6e} s/s  ((3/2)(P/a) da/dt)", s.period_derivative),
        ),
        (
            "time to coalescence",
            format!(
                "{:.6e} s  ({}; Peters 1964 integral for e0 = {}, relative quadrature error {:.0e})",
                s.coalescence_time,
                readable_time(s.coalescence_time),
                o.e,
                s.coalescence.error
            ),
        ),
        (
            "circular closed form",
            format!(
                "{:.6e} s  ({}; a^4/(4 beta) at the same a; ratio T/T_c = {:.10})",
                s.circular_coalescence_time,
                readable_time(s.circular_coalescence_time),
                s.coalescence.value
            ),
        ),
        (
            "chirp mass",
            format!(
                "{:.8} msun  ((m1 m2)^(3/5) / (m1 + m2)^(1/5))",
                s.chirp_mass_msun
            ),
        ),
        (
            "GW frequency",
            format!(
                "{:.6e} Hz  (f_gw = 2 f_orb, the dominant quadrupole harmonic; for e > 0 the power is spread over the harmonics n f_orb)",
                s.gw_frequency
            ),
        ),
        (
            "df_gw/dt",
            format!("{:.6e} Hz/s  (-f_gw (dP/dt) / P)", s.gw_frequency_rate),
        ),
    ];
    if let (Some(h), Some(d)) = (s.strain, p.distance) {
        rows.push((
            "strain amplitude",
            format!(
                "{h:.6e}  at d = {d:.6e} m ({:.6e} kpc); h0 = 4 (G Mc)^(5/3) (pi f_gw)^(2/3) / (c^4 d), the face-on amplitude of a circular orbit at f_gw",
                d / (1e3 * PARSEC)
            ),
        ));
    }
    rows.push((
        "constants",
        format!(
            "G = {G:e} m^3/(kg s^2) (CODATA), G M_sun = {GM_SUN:e} m^3/s^2 (IAU 2015 nominal), c = {C} m/s, yr = 365.25 d"
        ),
    ));
    for (label, value) in &rows {
        let _ = writeln!(t, "{}", row(label, value));
    }
    if let Some(ev) = ev {
        let _ = writeln!(t);
        let what = format!(
            "{} rows at equal steps in ln a, until {}; {} integration steps",
            ev.samples.len(),
            stop_text(ev, until),
            ev.steps
        );
        let _ = writeln!(t, "{}", row("evolution", &what));
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

/// One line of the text report: the label in a column of 23 characters, then the value.
fn row(label: &str, value: &str) -> String {
    format!("{label:<23}{value}")
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

pub(super) fn json_report(
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
