//! `lingrav radiation`: what a file's bodies radiate, exactly: at quadrupole order the mass
//! quadrupole, the luminosity, the angular-momentum flux and the waveform along a direction;
//! at the next order the mass octupole, the current quadrupole, the linear momentum they carry
//! (with the quadrupole) and their waveform; the time averages of the fluxes.

use crate::canon::{CanonError, Form};
use crate::cli::audit::{audit_json, point_lines, points_json};
use crate::cli::limits::LimitArgs;
use crate::cli::out::{Failure, Outcome, gave_up, print};
use crate::cli::plan::{build_arg, numbers, plan_direction, plan_optional_output, write_atomic};
use crate::cli::report::{Format, conventions, heading, json};
use crate::radiation::multipole::{IJK, NextOrder, RIGID_ASSUMPTION, refusal};
use crate::radiation::si::Dimension as SiDim;
use crate::radiation::{Average, Radiation};
use crate::tt::DirectionKind;
use crate::zero::{Verdict, decide};
use clap::Args;
use std::fmt::Write as _;
use std::path::PathBuf;

/// Arguments of `lingrav radiation`.
#[derive(Args, Debug)]
pub struct RadiationArgs {
    /// The problem file (TOML) with [[body]] tables or a [binary].
    file: PathBuf,
    /// The direction to the observer, for the waveform: a unit vector `nx,ny,nz`, an axis, or
    /// polar angles `theta=..,phi=..` (constant; not `radial`).
    #[arg(long, value_name = "D", allow_hyphen_values = true)]
    direction: Option<String>,
    /// First polarization vector u, perpendicular to the direction (default: e_theta of its
    /// polar angles); v = n x u.
    #[arg(
        long,
        value_name = "AX,AY,AZ",
        allow_hyphen_values = true,
        requires = "direction"
    )]
    basis: Option<String>,
    /// The observer's distance (an expression; default: the symbol r).
    #[arg(
        long,
        value_name = "R",
        allow_hyphen_values = true,
        requires = "direction"
    )]
    distance: Option<String>,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Text)]
    format: Format,
    /// Print the audit's seeded points.
    #[arg(long)]
    audit_points: bool,
    /// Print the canonical (expanded) forms, without the file's [define] names.
    #[arg(long)]
    expanded: bool,
    /// Draw h_plus and h_cross over --time-range at the observer, and the angular pattern of the
    /// radiated power, as an SVG picture.
    #[arg(long, value_name = "FILE.svg", requires_all = ["direction", "distance", "time_range"])]
    svg: Option<PathBuf>,
    /// The time range of the picture, `T0,T1`.
    #[arg(long, value_name = "T0,T1", allow_hyphen_values = true)]
    time_range: Option<String>,
    /// Replace the SVG file if it exists.
    #[arg(long)]
    force: bool,
    /// Also print the results as SI numbers: what one geometric unit of mass is, in solar
    /// masses (e.g. --mass-unit 1.4msun). Every parameter then takes its value from the file
    /// (or --set); a waveform needs --distance.
    #[arg(long, value_name = "MASS", allow_hyphen_values = true)]
    mass_unit: Option<String>,
    /// A parameter's value for the SI numbers, e.g. --set R=40 (repeatable).
    #[arg(
        long = "set",
        value_name = "NAME=VALUE",
        allow_hyphen_values = true,
        requires = "mass_unit"
    )]
    set: Vec<String>,
    /// A time at the source for instantaneous SI numbers, with a unit: s, h, d, yr (e.g. --at
    /// 0.01s): the fluxes at that time, and the strain it sends, which reaches the observer
    /// one distance later.
    #[arg(
        long,
        value_name = "TIME",
        allow_hyphen_values = true,
        requires = "mass_unit"
    )]
    at: Option<String>,
    #[command(flatten)]
    limits: LimitArgs,
}

const IJ: [(usize, usize); 6] = [(0, 0), (0, 1), (0, 2), (1, 1), (1, 2), (2, 2)];
const AXES: [&str; 3] = ["x", "y", "z"];

/// A printed quantity and its definition from the file's texts, for the audit.
struct Row {
    name: String,
    form: Form,
    definition: String,
}

/// `lingrav radiation`.
pub fn run(a: RadiationArgs) -> Result<Outcome, Failure> {
    let mut p = a.limits.load(&a.file)?;
    // JSON is for programs: canonical forms, in coordinates and parameters only.
    if a.expanded || a.format == Format::Json {
        p.store.set_display_names(None);
    }
    if p.bodies.is_empty() {
        return Err(Failure::Input(miette::miette!(
            help = "describe the source with [[body]] tables (mass, position in t) or a \
                    [binary] table (m1, m2, semimajor_axis or period)",
            "{}: the file describes no bodies",
            p.path
        )));
    }
    let dir = match &a.direction {
        Some(d) => {
            let dir = plan_direction(&mut p, d, a.basis.as_deref(), false)?;
            if dir.kind == DirectionKind::Radial {
                return Err(Failure::Input(miette::miette!(
                    help = "give a fixed direction to the observer, e.g. --direction z or \
                            --direction theta=pi/3,phi=0",
                    "--direction radial is not a fixed direction"
                )));
            }
            Some(dir)
        }
        None => None,
    };
    // The distance: the symbol r (or a fresh name) unless given.
    let taken = |n: &str| {
        p.coordinates.iter().any(|c| c == n)
            || p.parameters.iter().any(|(m, _)| m == n)
            || p.functions.iter().any(|(m, _)| m == n)
            || p.defines.iter().any(|(m, _)| m == n)
            || p.orbit.as_ref().is_some_and(|o| o.anomaly == n)
    };
    let mut r_name = "r".to_string();
    while taken(&r_name) {
        r_name.push('_');
    }
    let (distance, distance_text) = match &a.distance {
        Some(d) => (build_arg(&mut p.store, d, "--distance")?, format!("({d})")),
        None => (p.store.symbol(&r_name), r_name.clone()),
    };

    let times = match &a.time_range {
        Some(t) => {
            let v = numbers(&mut p, "--time-range", t, Some(2), "the range is T0,T1")?;
            if v[1] <= v[0] {
                return Err(Failure::Input(miette::miette!(
                    help = "e.g. --time-range 0,2000",
                    "--time-range needs T0 < T1"
                )));
            }
            Some((v[0], v[1]))
        }
        None => None,
    };
    let si_plan = match &a.mass_unit {
        Some(m) => {
            if dir.is_some() && a.distance.is_none() {
                return Err(Failure::Input(miette::miette!(
                    help = "give the observer's distance in length units G M/c^2, e.g. \
                            --distance 1e15, or a parameter",
                    "--mass-unit: an SI strain needs a distance with a value, and --distance \
                     is not given"
                )));
            }
            Some(super::radiation_si::plan(&p, m, &a.set, a.at.as_deref())?)
        }
        None => None,
    };
    let target = plan_optional_output(a.svg.as_deref(), a.force, "--svg")?;
    let limit = |e: CanonError| gave_up(&e);
    let t_name = p.coordinates[0].clone();
    let sampling = p.sampling.clone();
    let defs = crate::radiation::claims::Definitions::of(&p);
    let clock = crate::radiation::Clock::of(&mut p);
    let st = &mut p.store;
    let mut rad = Radiation::of_problem(st, &p.bodies, p.orbit.as_ref(), clock).map_err(limit)?;
    let mut rows = Vec::new();
    for &(i, j) in &IJ {
        rows.push(Row {
            name: format!("Q_{}{}", AXES[i], AXES[j]),
            form: rad.trace_free[i][j],
            definition: defs.q(i, j).to_string(),
        });
    }
    let lum = rad.luminosity(st).map_err(limit)?;
    rows.push(Row {
        name: "L".into(),
        form: lum,
        definition: defs.luminosity(),
    });
    let dj = rad.angular_momentum_flux(st).map_err(limit)?;
    for (i, &f) in dj.iter().enumerate() {
        rows.push(Row {
            name: format!("dJ_{}/dt", AXES[i]),
            form: f,
            definition: defs.angular_momentum(i),
        });
    }
    // The next multipoles and the momentum they carry, unless a rigid body's motion is not
    // rigid (the reason is printed instead).
    let next_refused = refusal(st, &p.bodies, rad.t);
    let mut next = match next_refused {
        None => Some(NextOrder::of_problem(st, &p.bodies, p.orbit.as_ref(), clock).map_err(limit)?),
        Some(_) => None,
    };
    let mut dp = Vec::new();
    let next_defs = defs.next();
    if let (Some(next), Some(next_defs)) = (&mut next, &next_defs) {
        for &(i, j, k) in &IJK {
            rows.push(Row {
                name: format!("Q_{}{}{}", AXES[i], AXES[j], AXES[k]),
                form: next.octupole[i][j][k],
                definition: next_defs.octupole(i, j, k).to_string(),
            });
        }
        for &(i, j) in &IJ {
            rows.push(Row {
                name: format!("S_{}{}", AXES[i], AXES[j]),
                form: next.current[i][j],
                definition: next_defs.current(i, j).to_string(),
            });
        }
        dp = next.momentum_flux(st, &mut rad).map_err(limit)?.to_vec();
        for (i, &f) in dp.iter().enumerate() {
            rows.push(Row {
                name: format!("dP_{}/dt", AXES[i]),
                form: f,
                definition: next_defs.momentum(i),
            });
        }
    }
    // The waveform, audited at t + R against (1/R) ddQ_ij(t) e_ij (and the next order
    // against its own definition).
    let mut wave_rows = Vec::new();
    if let Some(dir) = &dir {
        let w = rad
            .field(st, (&dir.n, &dir.u, &dir.v), distance)
            .map_err(limit)?;
        let n = crate::radiation::claims::vector_texts(st, &dir.n);
        let u = crate::radiation::claims::vector_texts(st, &dir.u);
        let v = crate::radiation::claims::vector_texts(st, &dir.v);
        let [plus_def, cross_def] = defs.polarizations(&u, &v, &distance_text);
        let mut fields = vec![
            ("h_plus", w.plus, plus_def),
            ("h_cross", w.cross, cross_def),
        ];
        if let (Some(next), Some(next_defs)) = (&mut next, &next_defs) {
            let w = next
                .field(st, (&dir.n, &dir.u, &dir.v), distance)
                .map_err(limit)?;
            let [plus_def, cross_def] = next_defs.polarizations_next(&n, (&u, &v), &distance_text);
            fields.push(("h_plus_next", w.plus, plus_def));
            fields.push(("h_cross_next", w.cross, cross_def));
        }
        // Shift the printed forms to t + R so that they meet the definitions at t (an
        // eccentric orbit's forms are at the retarded anomaly already: no shift).
        let mut subs = rustc_hash::FxHashMap::default();
        if clock.is_time() {
            let t = st.symbol_kernel(&t_name);
            let tf = st.symbol(&t_name);
            let ahead = st.add(tf, distance).map_err(limit)?;
            subs.insert(t, ahead);
        }
        for (name, f, def) in fields {
            let shifted = st.substitute(f, &subs).map_err(limit)?;
            wave_rows.push((name, f, shifted, def));
        }
    }

    let wave = wave_rows
        .first()
        .zip(wave_rows.get(1))
        .map(|(a, b)| (a.1, b.1));

    // The audit: each printed form against its definition from the file's texts.
    let mut texts: Vec<(String, String)> = rows
        .iter()
        .map(|r| {
            (
                r.name.clone(),
                format!("({}) - {}", st.to_text(r.form), r.definition),
            )
        })
        .collect();
    for (name, _, shifted, def) in &wave_rows {
        texts.push((
            name.to_string(),
            format!("({}) - {def}", st.to_text(*shifted)),
        ));
    }
    let added = a.distance.is_none();
    if added {
        p.parameters.push((r_name.clone(), 7.25));
    }
    // An eccentric orbit's anomaly is one more name with a value at each audited point.
    let anomaly = p.orbit.as_ref().map(|o| o.anomaly.clone());
    if let Some(an) = &anomaly {
        p.parameters
            .push((an.clone(), crate::radiation::claims::ANOMALY_TYPICAL));
    }
    let route = crate::audit::expr::FileQuantities::texts_with(&p, defs.parts(), &texts);
    if anomaly.is_some() {
        p.parameters.pop();
    }
    if added {
        p.parameters.pop();
    }
    let seed = p.sampling.seed;
    let mut proved = vec![Verdict::Zero; texts.len()];
    let findings = crate::check::verdicts::audit_verdicts(&route, &mut proved, Some, seed);
    let defect = findings.iter().any(|f| f.is_defect());

    // Averages and the centre of mass.
    let orbit_si = p
        .orbit
        .as_ref()
        .map(|o| (o.anomaly.clone(), o.mean_motion, o.eccentricity));
    let st = &mut p.store;
    let mut average_forms = Vec::new();
    let mut average = |st: &mut crate::Store, f: Form| -> Result<Result<String, String>, Failure> {
        Ok(match rad.average(st, f).map_err(limit)? {
            Average::Exact(a) => {
                average_forms.push(Some(a));
                Ok(st.to_display_text(a))
            }
            Average::NotPeriodic(why) => {
                average_forms.push(None);
                Err(why)
            }
        })
    };
    let l_avg = average(st, lum)?;
    let mut dj_avg = Vec::new();
    for &f in &dj {
        dj_avg.push(average(st, f)?);
    }
    let mut dp_avg = Vec::new();
    for &f in &dp {
        dp_avg.push(average(st, f)?);
    }
    // The SI numbers, from the exact forms above.
    let si_report = match &si_plan {
        None => None,
        Some(plan) => {
            let mut avgs = vec![(
                "<L>".to_string(),
                "luminosity",
                average_forms[0],
                SiDim::Power,
            )];
            let mut source = vec![("L".to_string(), "luminosity", lum, SiDim::Power)];
            for i in 0..3 {
                avgs.push((
                    format!("<dJ_{}/dt>", AXES[i]),
                    [
                        "angular_momentum_flux_x",
                        "angular_momentum_flux_y",
                        "angular_momentum_flux_z",
                    ][i],
                    average_forms[1 + i],
                    SiDim::Torque,
                ));
                source.push((
                    format!("dJ_{}/dt", AXES[i]),
                    [
                        "angular_momentum_flux_x",
                        "angular_momentum_flux_y",
                        "angular_momentum_flux_z",
                    ][i],
                    dj[i],
                    SiDim::Torque,
                ));
            }
            for (i, &f) in dp.iter().enumerate() {
                let key = ["momentum_flux_x", "momentum_flux_y", "momentum_flux_z"][i];
                avgs.push((
                    format!("<dP_{}/dt>", AXES[i]),
                    key,
                    average_forms[4 + i],
                    SiDim::Force,
                ));
                source.push((format!("dP_{}/dt", AXES[i]), key, f, SiDim::Force));
            }
            let flat: Vec<Form> = rad.trace_free.iter().flatten().copied().collect();
            let src = super::radiation_si::Sources {
                averages: avgs,
                source,
                waves: wave_rows
                    .iter()
                    .map(|(n, _, shifted, _)| (n.to_string(), *n, *shifted))
                    .collect(),
                distance: a.distance.as_ref().map(|_| distance),
                quadrupole: clock.is_time().then_some((flat.as_slice(), rad.t)),
                orbit: orbit_si.clone(),
                t_name: t_name.clone(),
            };
            Some(super::radiation_si::report(st, plan, &src)?)
        }
    };
    let assumptions: Vec<&str> = match &next {
        Some(n) if n.rigid => vec![RIGID_ASSUMPTION],
        _ => Vec::new(),
    };
    let mut accelerates = Vec::new();
    for (i, &f) in rad.dipole_acceleration.iter().enumerate() {
        match decide(st, f, &sampling) {
            Verdict::Zero => {}
            Verdict::Nonzero(_) => {
                accelerates.push(format!("{}: {}", AXES[i], st.to_display_text(f)));
            }
            Verdict::Undecided(why) => {
                accelerates.push(format!("{}: not proved zero ({why})", AXES[i]));
            }
        }
    }

    let label = a.file.display().to_string();
    let written = match (&target, wave, times) {
        (Some(t), Some(wave), Some(times)) => {
            let title = format!(
                "{}: waveform at distance {distance_text} and angular pattern",
                p.name.clone().unwrap_or_else(|| label.clone())
            );
            let text =
                super::radiation_plot::picture(&mut p, &mut rad, (wave, distance), times, &title)?;
            write_atomic(t, &text)?;
            Some(t.path.display().to_string())
        }
        _ => None,
    };
    // The bodies as built (a binary's positions simplified), in the file's terms.
    let body_forms: Vec<(String, Form, [Form; 3])> = p
        .bodies
        .iter()
        .map(|b| (b.label.clone(), b.mass, b.position))
        .collect();
    let st = &mut p.store;
    let body_lines: Vec<String> = body_forms
        .into_iter()
        .map(|(label, m, x)| {
            let x: Vec<String> = x.iter().map(|&f| st.to_display_text(f)).collect();
            format!(
                "{label:<10} mass {}, position ({})",
                st.to_display_text(m),
                x.join(", ")
            )
        })
        .collect();
    let mut printed: Vec<(String, String)> = Vec::new();
    for r in &rows {
        printed.push((r.name.clone(), st.to_display_text(r.form)));
    }
    for (n, f, _, _) in &wave_rows {
        printed.push((n.to_string(), st.to_display_text(*f)));
    }
    let avg_text = |a: &Result<String, String>| match a {
        Ok(t) => t.clone(),
        Err(why) => format!("none ({why})"),
    };
    let dir_json = dir.as_ref().map(|d| {
        let st = &mut p.store;
        let t = |st: &mut crate::Store, v: &[Form; 3]| -> Vec<String> {
            v.iter().map(|&f| st.to_text(f)).collect()
        };
        serde_json::json!({ "n": t(st, &d.n), "u": t(st, &d.u), "v": t(st, &d.v) })
    });
    let out = match a.format {
        Format::Text => {
            let mut s = String::new();
            let _ = writeln!(s, "{}", heading(&label, p.name.as_deref()));
            if let Some(o) = &p.orbit {
                let an = &o.anomaly;
                let _ = writeln!(
                    s,
                    "eccentric orbit (e = {}): the bodies and every quantity below are functions \
                     of the eccentric anomaly {an}, with n t = {an} - e sin {an} (periapsis at t = \
                     0), n = {}, d/dt = n/(1 - e cos {an}) d/d{an}; averages are over one period",
                    o.eccentricity_text, o.mean_motion_text
                );
                if let Some(c) = &o.condition {
                    let _ = writeln!(s, "ASSUMED: {c}");
                }
            }
            for line in &body_lines {
                let _ = writeln!(s, "{line}");
            }
            if accelerates.is_empty() {
                let _ = writeln!(
                    s,
                    "centre of mass: not accelerated (d^2/dt^2 sum m x = 0, proved), so the \
                     quadrupole formula applies to an isolated source"
                );
            } else {
                let _ = writeln!(
                    s,
                    "FLAG: the mass dipole accelerates (momentum is not conserved: something \
                     outside the bodies pushes them), d^2/dt^2 sum m x_i: {}",
                    accelerates.join("; ")
                );
            }
            let _ = writeln!(
                s,
                "trace-free quadrupole Q_ij = sum m (x_i x_j - delta_ij |x|^2/3), about the origin:"
            );
            for (n, t) in &printed[..6] {
                let _ = writeln!(s, "  {n} = {t}");
            }
            let _ = writeln!(s, "luminosity L = (1/5) dddQ_ij dddQ_ij (G = c = 1):");
            let _ = writeln!(s, "  L = {}", printed[6].1);
            let _ = writeln!(s, "  time average <L> = {}", avg_text(&l_avg));
            let _ = writeln!(
                s,
                "the source's angular momentum, dJ_i/dt = -(2/5) eps_ijk ddQ_ja dddQ_ka (the waves carry away -dJ_i/dt):"
            );
            let with_averages = |s: &mut String, rows: &[(String, String)], avgs: &[_]| {
                for ((n, t), a) in rows.iter().zip(avgs) {
                    let _ = writeln!(s, "  {n} = {t}   (average {})", avg_text(a));
                }
            };
            with_averages(&mut s, &printed[7..10], &dj_avg);
            match &next_refused {
                Some(why) => {
                    let _ = writeln!(
                        s,
                        "mass octupole, current quadrupole and momentum flux: not computed: {why}"
                    );
                }
                None => {
                    let _ = writeln!(
                        s,
                        "mass octupole Q_ijk = STF sum m x_i x_j x_k (trace-free in every pair), \
                         about the origin:"
                    );
                    for (n, t) in &printed[10..20] {
                        let _ = writeln!(s, "  {n} = {t}");
                    }
                    let _ = writeln!(
                        s,
                        "current quadrupole S_ij = STF sum m x_i (x cross v)_j (Thorne 1980's \
                         normalisation), about the origin:"
                    );
                    for (n, t) in &printed[20..26] {
                        let _ = writeln!(s, "  {n} = {t}");
                    }
                    let _ = writeln!(
                        s,
                        "linear momentum carried away, dP_i/dt = (2/63) d^4Q_iab d^3Q_ab + \
                         (16/45) eps_ipq d^3Q_pa d^3S_qa (the source recoils at -dP/dt):"
                    );
                    with_averages(&mut s, &printed[26..29], &dp_avg);
                    for a in &assumptions {
                        let _ = writeln!(s, "ASSUMED: {a}");
                    }
                }
            }
            if let Some(dir) = &dir {
                let st = &mut p.store;
                let vec = |st: &mut crate::Store, v: &[Form; 3]| {
                    let t: Vec<String> = v.iter().map(|&f| st.to_text(f)).collect();
                    format!("({})", t.join(", "))
                };
                let at = match &p.orbit {
                    None => format!("{t_name} - {distance_text}"),
                    Some(o) => format!("{} at the retarded time", o.anomaly),
                };
                let _ = writeln!(
                    s,
                    "waveform along n = {} at distance {distance_text}, basis u = {}, v = {}: \
                     h^TT = (2/{distance_text}) Lambda(n) ddQ({at})",
                    vec(st, &dir.n),
                    vec(st, &dir.u),
                    vec(st, &dir.v)
                );
                let waves = &printed[rows.len()..];
                for (n, t) in &waves[..2] {
                    let _ = writeln!(s, "  {n} = {t}");
                }
                if waves.len() > 2 {
                    let _ = writeln!(
                        s,
                        "next order (not in h_plus, h_cross above): h^TT_next = \
                         (1/{distance_text}) Lambda(n) [(2/3) n_k dddQ_ijk + (4/3)(eps_kil n_k \
                         ddS_jl + eps_kjl n_k ddS_il)]({at})"
                    );
                    for (n, t) in &waves[2..] {
                        let _ = writeln!(s, "  {n} = {t}");
                    }
                }
            }
            let _ = writeln!(
                s,
                "audit: {} printed forms against their definitions from the bodies' texts \
                 (certified jets; {}): {}",
                findings.len(),
                if p.orbit.is_some() {
                    "time derivatives by the chain rule through Kepler's equation"
                } else {
                    "the waveform shifted by the distance"
                },
                if defect { "DISAGREE" } else { "consistent" }
            );
            if defect {
                let _ = writeln!(
                    s,
                    "INTERNAL DEFECT: the exact route and the independent evaluation disagree"
                );
            }
            if a.audit_points {
                let refs: Vec<&crate::audit::expr::Finding> = findings.iter().collect();
                s.push_str(&point_lines(&refs));
            }
            if let Some(r) = &si_report {
                s.push_str(&r.text);
            }
            if let Some(path) = &written {
                let _ = writeln!(s, "wrote {path}");
            }
            s
        }
        Format::Json => {
            let refs: Vec<&crate::audit::expr::Finding> = findings.iter().collect();
            let quantities: serde_json::Map<String, serde_json::Value> = printed
                .iter()
                .zip(&findings)
                .map(|((n, t), f)| {
                    (
                        n.clone(),
                        serde_json::json!({ "expression": t, "audit": audit_json(f, seed) }),
                    )
                })
                .collect();
            let avg_json = |a: &Result<String, String>| match a {
                Ok(t) => serde_json::json!({ "expression": t }),
                Err(why) => serde_json::json!({ "expression": null, "reason": why }),
            };
            let mut averages = serde_json::Map::new();
            averages.insert("L".into(), avg_json(&l_avg));
            for (i, a) in dj_avg.iter().enumerate() {
                averages.insert(format!("dJ_{}/dt", AXES[i]), avg_json(a));
            }
            for (i, a) in dp_avg.iter().enumerate() {
                averages.insert(format!("dP_{}/dt", AXES[i]), avg_json(a));
            }
            json(&serde_json::json!({
                "file": label,
                "name": p.name,
                "bodies": p.bodies.iter().map(|b| serde_json::json!({
                    "label": b.label, "mass": b.mass_text, "position": b.position_text,
                })).collect::<Vec<_>>(),
                "dipole_accelerates": !accelerates.is_empty(),
                "dipole_acceleration": accelerates,
                "quantities": quantities,
                "averages": averages,
                "next_order_refused": next_refused,
                "orbit": p.orbit.as_ref().map(|o| serde_json::json!({
                    "anomaly": o.anomaly,
                    "eccentricity": o.eccentricity_text,
                    "mean_motion": o.mean_motion_text,
                    "kepler_equation": format!("n*t = {0} - e*sin({0})", o.anomaly),
                    "condition": o.condition,
                })),
                "assumptions": assumptions,
                "distance": dir.as_ref().map(|_| distance_text.clone()),
                "direction": dir_json,
                "svg": written,
                "si": si_report.as_ref().map(|r| r.json.clone()),
                "conventions": conventions(&p.coordinates),
                "audit": { "defect": defect, "seed": seed, "points": points_json(&refs) },
            }))
        }
    };
    print(&out)?;
    let si_defect = si_report.as_ref().is_some_and(|r| r.defect);
    let si_uncertified = si_report.as_ref().is_some_and(|r| r.uncertified);
    Ok(if defect || si_defect {
        Outcome::Fails
    } else if si_uncertified {
        Outcome::Undecided
    } else {
        Outcome::Holds
    })
}
