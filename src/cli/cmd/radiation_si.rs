//! `lingrav radiation --mass-unit`: the exact results again as SI numbers (the distance, the
//! frequencies or the orbital period, the averaged fluxes, and with `--at` the instantaneous
//! fluxes and the strain), each by the two routes of [`crate::radiation::si`].

use crate::binary::units::{C, G, GM_SUN, Kind, parse_quantity};
use crate::canon::{Form, Store};
use crate::cli::out::Failure;
use crate::cli::plan::plan_parameters;
use crate::problem::Problem;
use crate::radiation::anomaly;
use crate::radiation::si::{self, Dimension, Judgement, Scale, TOLERANCE};
use std::fmt::Write as _;

/// What the SI numbers are computed with, read before any algebra.
pub struct SiPlan {
    /// One geometric unit of mass.
    pub scale: Scale,
    /// `--mass-unit` as written.
    pub written: String,
    /// Every parameter's value (the file's, or `--set`).
    pub values: Vec<(String, f64)>,
    /// The parameters set on the command line.
    pub overridden: Vec<String>,
    /// `--at`: the observer's time in s, and as written.
    pub at: Option<(f64, String)>,
}

fn bad(option: &str, text: &str, why: impl std::fmt::Display, help: &str) -> Failure {
    Failure::Input(miette::miette!(
        help = help.to_string(),
        "{option} {text:?}: {why}"
    ))
}

/// Reads `--mass-unit`, `--set` and `--at` against the problem.
pub fn plan(
    p: &Problem,
    mass_unit: &str,
    set: &[String],
    at: Option<&str>,
) -> Result<SiPlan, Failure> {
    let help = "say what one geometric unit of mass is, in solar masses, e.g. --mass-unit 1.4msun";
    let (gm, _) = parse_quantity(mass_unit, Kind::Mass)
        .map_err(|e| bad("--mass-unit", mass_unit, e, help))?;
    let scale = Scale::new(gm / GM_SUN).ok_or_else(|| {
        bad(
            "--mass-unit",
            mass_unit,
            "the mass unit must be positive",
            help,
        )
    })?;
    let (values, overridden) = plan_parameters(p, set)?;
    let at = match at {
        None => None,
        Some(text) => {
            let (s, _) = parse_quantity(text, Kind::Time).map_err(|e| {
                bad(
                    "--at",
                    text,
                    e,
                    "the observer's time with a unit, e.g. --at 0.5s or --at 2h",
                )
            })?;
            Some((s, text.trim().to_string()))
        }
    };
    Ok(SiPlan {
        scale,
        written: mass_unit.trim().to_string(),
        values,
        overridden,
        at,
    })
}

/// One SI number to compute: its label, JSON key, exact form and dimension.
pub struct Item {
    /// The printed label.
    pub label: String,
    /// The JSON key (with the unit suffix).
    pub key: String,
    /// The exact form, in geometric units.
    pub form: Form,
    /// What it measures.
    pub dim: Dimension,
}

impl Item {
    fn copy(&self) -> Item {
        Item {
            label: self.label.clone(),
            key: self.key.clone(),
            form: self.form,
            dim: self.dim,
        }
    }

    /// An item whose JSON key is `key` with the unit's suffix.
    pub fn new(label: impl Into<String>, key: &str, form: Form, dim: Dimension) -> Item {
        Item {
            label: label.into(),
            key: format!("{key}{}", dim.key_suffix()),
            form,
            dim,
        }
    }
}

/// The exact results the SI numbers come from.
pub struct Sources<'a> {
    /// The averages: `<L>`, `<dJ_i/dt>`, `<dP_i/dt>` (`None`: not given).
    pub averages: Vec<(String, &'static str, Option<Form>, Dimension)>,
    /// The instantaneous quantities at the source (in the clock's variable).
    pub source: Vec<(String, &'static str, Form, Dimension)>,
    /// The waveform as the source sends it at the clock's time (the observer's field shifted
    /// by the distance, or for an eccentric orbit the field in the retarded anomaly).
    pub waves: Vec<(String, &'static str, Form)>,
    /// The distance, when a direction was given.
    pub distance: Option<Form>,
    /// The trace-free quadrupole (its frequencies) and the time coordinate, for a time clock.
    pub quadrupole: Option<(&'a [Form], crate::canon::KernelId)>,
    /// An eccentric orbit: anomaly name, mean motion and eccentricity.
    pub orbit: Option<(String, Form, Form)>,
    /// The time coordinate's name.
    pub t_name: String,
}

/// One computed number.
pub struct Computed {
    label: String,
    key: String,
    dim: Dimension,
    value: Option<f64>,
    note: Option<String>,
}

/// The SI numbers, rendered.
pub struct SiReport {
    /// The text block.
    pub text: String,
    /// The JSON object.
    pub json: serde_json::Value,
    /// An internal defect (the routes disagree).
    pub defect: bool,
    /// A number whose enclosure is too wide to be printed as certified.
    pub uncertified: bool,
}

fn fmt_value(v: f64, dim: Dimension) -> String {
    let u = dim.unit();
    if u.is_empty() {
        format!("{v:.6e}")
    } else {
        format!("{v:.6e} {u}")
    }
}

/// The failure for a name without a value (bad input: exit 2).
fn no_value(label: &str, e: &si::SiError) -> Failure {
    Failure::Input(miette::miette!(
        help = "every name in an SI number needs a value: the file's [parameters] give them \
                (--set NAME=VALUE overrides), --distance gives the observer's distance and --at \
                the time",
        "--mass-unit: {label}: {e}"
    ))
}

/// What the audit of the SI numbers found so far.
#[derive(Default)]
struct Audit {
    audited: usize,
    largest: f64,
    defect: bool,
    uncertified: usize,
    defects: Vec<String>,
}

/// The SI numbers of `items` by both routes, judged with one absolute floor for the family
/// (the tolerance times its largest magnitude, so that a member that cancels to 0 is not
/// judged relatively), pushed onto `out`.
fn compute(
    st: &mut Store,
    acc: &mut Audit,
    scale: &Scale,
    values: &[(String, f64)],
    items: Vec<Item>,
    out: &mut Vec<Computed>,
) -> Result<(), Failure> {
    let mut numbers = Vec::with_capacity(items.len());
    for it in &items {
        let n = si::number(st, it.form, values, scale, it.dim).map_err(|e| match e {
            si::SiError::NoValue(_) | si::SiError::Function(_) => no_value(&it.label, &e),
            _ => Failure::Input(miette::miette!("--mass-unit: {}: {e}", it.label)),
        })?;
        numbers.push(n);
    }
    let floor = TOLERANCE * numbers.iter().map(|m| m.value().abs()).fold(0.0, f64::max);
    for (it, n) in items.into_iter().zip(&numbers) {
        acc.audited += 1;
        let (value, note) = match n.judge(floor) {
            Judgement::Agree(d) => {
                acc.largest = acc.largest.max(d);
                (Some(n.value()), None)
            }
            Judgement::Wide(_) => {
                acc.uncertified += 1;
                (
                    None,
                    Some(format!(
                        "not certified: the enclosure [{:.3e}, {:.3e}] is wider than 1e-9 \
                         relative (at large times a phase w t is beyond double precision)",
                        n.enclosure.lo(),
                        n.enclosure.hi()
                    )),
                )
            }
            Judgement::Disagree => {
                acc.defect = true;
                acc.defects.push(format!(
                    "{}: enclosure [{:e}, {:e}], printed text {:e}",
                    it.label,
                    n.enclosure.lo(),
                    n.enclosure.hi(),
                    n.text_value
                ));
                (
                    None,
                    Some("INTERNAL DEFECT: the two routes disagree".to_string()),
                )
            }
        };
        out.push(Computed {
            label: it.label,
            key: it.key,
            dim: it.dim,
            value,
            note,
        });
    }
    Ok(())
}

/// Computes and audits every SI number.
#[allow(
    clippy::too_many_lines,
    reason = "one pass over the quantities in printed order"
)]
pub fn report(st: &mut Store, plan: &SiPlan, src: &Sources<'_>) -> Result<SiReport, Failure> {
    let scale = &plan.scale;
    let mut values = plan.values.clone();
    let mut rows: Vec<Computed> = Vec::new();
    let mut avg_rows: Vec<Computed> = Vec::new();
    let mut at_rows: Vec<Computed> = Vec::new();
    let mut acc = Audit::default();
    // The distance, the frequencies or the period.
    if let Some(d) = src.distance {
        compute(
            st,
            &mut acc,
            scale,
            &values,
            vec![Item::new("distance", "distance", d, Dimension::Length)],
            &mut rows,
        )?;
    }
    let mut orbit_values = None;
    if let Some((_, n, e)) = &src.orbit {
        let nv = si::number(st, *n, &values, scale, Dimension::Strain)
            .map_err(|err| no_value("the mean motion", &err))?;
        let ev =
            si::number(st, *e, &values, scale, Dimension::Strain).map_err(|err| match err {
                si::SiError::NoValue(_) | si::SiError::Function(_) => {
                    no_value("the eccentricity", &err)
                }
                _ => Failure::Input(miette::miette!(
                    help = "a Kepler orbit has 0 < e < 1 here (e = 0 is a circular orbit: leave \
                        the eccentricity out); change the values with --set",
                    "--mass-unit: the eccentricity is not a real number in (0, 1) at these \
                 parameter values ({err})"
                )),
            })?;
        // Real (roots of certified positive radicands) and strictly inside (0, 1): the exact
        // averages divide by e and take sqrt(1 - e^2).
        let mut pt = crate::canon::Point::default();
        for (name, v) in &values {
            if let Some(i) = crate::interval::Interval::point(*v) {
                let k = st.symbol_kernel(name);
                pt.values
                    .insert(k, crate::interval::CInterval::from_real(i));
            }
        }
        if !(st.is_real_on(*e, &pt) && ev.enclosure.lo() > 0.0 && ev.enclosure.hi() < 1.0) {
            return Err(Failure::Input(miette::miette!(
                help = "a Kepler orbit has 0 < e < 1 here (e = 0 is a circular orbit: leave \
                        the eccentricity out); change the values with --set",
                "--mass-unit: the eccentricity at these parameter values is {:e}, not \
                 certified to lie strictly between 0 and 1",
                ev.value()
            )));
        }
        orbit_values = Some((nv.value(), ev.value()));
        let two_pi = st.int(2);
        let pi = crate::expression(st, "pi").map_err(|e| Failure::Input(miette::miette!("{e}")))?;
        let two_pi = st
            .mul(two_pi, pi)
            .map_err(|e| crate::cli::out::gave_up(&e))?;
        let period = st
            .div(two_pi, *n)
            .map_err(|e| crate::cli::out::gave_up(&e))?;
        compute(
            st,
            &mut acc,
            scale,
            &values,
            vec![
                Item::new(
                    "orbital period 2 pi/n",
                    "orbital_period",
                    period,
                    Dimension::Time,
                ),
                Item::new(
                    "orbital frequency n/(2 pi)",
                    "orbital_frequency",
                    *n,
                    Dimension::AngularFrequency,
                ),
            ],
            &mut rows,
        )?;
    }
    let mut frequencies_note = None;
    if let Some((q, t)) = src.quadrupole {
        let mut forms = Vec::new();
        let mut shaped = true;
        for &f in q {
            match crate::radiation::frequencies(st, f, t)
                .map_err(|e| crate::cli::out::gave_up(&e))?
            {
                Some(ws) => {
                    for w in ws {
                        if !forms.contains(&w) {
                            forms.push(w);
                        }
                    }
                }
                None => shaped = false,
            }
        }
        if shaped {
            let mut fr = Vec::new();
            compute(
                st,
                &mut acc,
                scale,
                &values,
                forms
                    .iter()
                    .map(|&w| Item::new("frequency", "frequency", w, Dimension::AngularFrequency))
                    .collect(),
                &mut fr,
            )?;
            // |w| and its sign twin are one frequency.
            let mut hz: Vec<f64> = Vec::new();
            for c in &fr {
                match c.value {
                    Some(v) => {
                        let v = v.abs();
                        if v > 0.0 && !hz.iter().any(|h| (h - v).abs() <= 1e-9 * v) {
                            hz.push(v);
                        }
                    }
                    None => frequencies_note = c.note.clone(),
                }
            }
            hz.sort_by(f64::total_cmp);
            for (k, v) in hz.iter().enumerate() {
                rows.push(Computed {
                    label: format!("frequency {} of Q_ij and h", k + 1),
                    key: format!("frequency_{}_hz", k + 1),
                    dim: Dimension::AngularFrequency,
                    value: Some(*v),
                    note: None,
                });
            }
            if hz.is_empty() && frequencies_note.is_none() {
                frequencies_note = Some("Q_ij does not change with time".into());
            }
        } else {
            frequencies_note =
                Some("Q_ij is not a sum of exp(i w t): no frequencies to print".into());
        }
    }
    // The averages.
    let mut avg_items = Vec::new();
    let mut missing = Vec::new();
    for (label, key, f, dim) in &src.averages {
        match f {
            Some(f) => avg_items.push(Item::new(label.clone(), key, *f, *dim)),
            None => missing.push(label.clone()),
        }
    }
    // Judged per dimension, so that each family has its own floor.
    for dim in [Dimension::Power, Dimension::Torque, Dimension::Force] {
        let family: Vec<Item> = avg_items
            .iter()
            .filter(|i| i.dim == dim)
            .map(Item::copy)
            .collect();
        compute(st, &mut acc, scale, &values, family, &mut avg_rows)?;
    }
    // The instantaneous values at a time T at the source; the strain is the one it sends,
    // which the observer receives at T + r (the waveform forms are given here shifted by the
    // distance, so no large retarded phase is ever formed).
    let mut at_header = None;
    if let Some((seconds, written)) = &plan.at {
        let t_geom = seconds / scale.time_s();
        let mut source_values = values.clone();
        let mut wave_values = values.clone();
        let strain_note = if src.waves.is_empty() {
            ""
        } else {
            "; the strain is what the observer receives one distance later"
        };
        match (&src.orbit, orbit_values) {
            (Some((anomaly_name, _, _)), Some((n, e))) => {
                let m = n * t_geom;
                let x = anomaly::solve(m, e)
                    .map_err(|err| Failure::Input(miette::miette!("--at {written}: {err}")))?;
                let y = anomaly::solve_by_bisection(m, e)
                    .map_err(|err| Failure::Input(miette::miette!("--at {written}: {err}")))?;
                if (x - y).abs() > 1e-10 * (1.0 + m.abs()) {
                    acc.defect = true;
                    acc.defects.push(format!(
                        "Kepler's equation at M = {m:e}: Newton {x:e}, bisection {y:e}"
                    ));
                }
                // The bodies of a [binary] are functions of cos E and sin E, so every quantity
                // is 2 pi-periodic in E: evaluate at E reduced to [-pi, pi], where the
                // enclosures stay tight.
                let turns = (x / (2.0 * std::f64::consts::PI)).round();
                let reduced = x - 2.0 * std::f64::consts::PI * turns;
                source_values.push((anomaly_name.clone(), reduced));
                wave_values.push((anomaly_name.clone(), reduced));
                at_header = Some(format!(
                    "at the source's time t = {written} ({t_geom:.6e} time units; eccentric \
                     anomaly {reduced:.9} modulo 2 pi, from Kepler's equation by Newton's \
                     method, checked by bisection){strain_note}"
                ));
            }
            _ => {
                source_values.push((src.t_name.clone(), t_geom));
                wave_values.push((src.t_name.clone(), t_geom));
                at_header = Some(format!(
                    "at the source's time t = {written} ({t_geom:.6e} time units){strain_note}"
                ));
            }
        }
        values = source_values;
        for dim in [Dimension::Power, Dimension::Torque, Dimension::Force] {
            let family: Vec<Item> = src
                .source
                .iter()
                .filter(|(_, _, _, d)| *d == dim)
                .map(|(l, k, f, d)| Item::new(l.clone(), k, *f, *d))
                .collect();
            compute(st, &mut acc, scale, &values, family, &mut at_rows)?;
        }
        let waves: Vec<Item> = src
            .waves
            .iter()
            .map(|(l, k, f)| Item::new(l.clone(), k, *f, Dimension::Strain))
            .collect();
        compute(st, &mut acc, scale, &wave_values, waves, &mut at_rows)?;
    }

    // Text.
    let mut s = String::new();
    let vals: Vec<String> = plan
        .values
        .iter()
        .map(|(n, v)| {
            let set = if plan.overridden.contains(n) {
                " (--set)"
            } else {
                ""
            };
            format!("{n} = {v}{set}")
        })
        .collect();
    let _ = writeln!(
        s,
        "SI numbers, with one mass unit = {} (G M = {:.7e} m^3/s^2, M = {:.6e} kg), length unit \
         G M/c^2 = {:.7e} m, time unit G M/c^3 = {:.7e} s{}:",
        plan.written,
        scale.gm,
        scale.mass_kg(),
        scale.length_m(),
        scale.time_s(),
        if vals.is_empty() {
            String::new()
        } else {
            format!("; values {}", vals.join(", "))
        }
    );
    let line = |s: &mut String, c: &Computed| {
        let v = match (c.value, &c.note) {
            (Some(v), _) => fmt_value(v, c.dim),
            (None, Some(n)) => n.clone(),
            (None, None) => "none".into(),
        };
        let _ = writeln!(s, "  {:<34} {v}", c.label);
    };
    for c in rows.iter().chain(&avg_rows) {
        line(&mut s, c);
    }
    if let Some(n) = &frequencies_note {
        let _ = writeln!(s, "  {:<34} {n}", "frequencies");
    }
    for m in &missing {
        let _ = writeln!(s, "  {m:<34} none (no exact average)");
    }
    if let Some(h) = &at_header {
        let _ = writeln!(s, "  {h}:");
        for c in &at_rows {
            let _ = write!(s, "  ");
            line(&mut s, c);
        }
    }
    let _ = writeln!(
        s,
        "  (L c^5/G in W, dJ/dt M c^2 in N m, dP/dt c^4/G in N; G = {G:e} m^3/(kg s^2) \
         (CODATA), G M_sun = {GM_SUN:e} m^3/s^2 (IAU 2015 nominal), c = {C} m/s)"
    );
    let _ = writeln!(
        s,
        "audit: {} SI numbers, the interval enclosure of each exact form against a \
         floating-point evaluation of its printed text: {}",
        acc.audited,
        if acc.defect {
            "DISAGREE".to_string()
        } else if acc.uncertified > 0 {
            format!(
                "consistent where certified (largest relative difference {:.1e}); {} not \
                 certified (exit 3)",
                acc.largest, acc.uncertified
            )
        } else {
            format!(
                "consistent (largest relative difference {:.1e})",
                acc.largest
            )
        }
    );
    for d in &acc.defects {
        let _ = writeln!(s, "INTERNAL DEFECT: {d}");
    }

    // JSON.
    let obj = |cs: &[Computed]| -> serde_json::Map<String, serde_json::Value> {
        cs.iter()
            .map(|c| {
                (
                    c.key.clone(),
                    match c.value {
                        Some(v) => serde_json::json!(v),
                        None => serde_json::Value::Null,
                    },
                )
            })
            .collect()
    };
    let json = serde_json::json!({
        "mass_unit": plan.written,
        "mass_unit_msun": scale.msun,
        "mass_unit_kg": scale.mass_kg(),
        "length_unit_m": scale.length_m(),
        "time_unit_s": scale.time_s(),
        "values": plan.values.iter().map(|(n, v)| (n.clone(), serde_json::json!(v)))
            .collect::<serde_json::Map<_, _>>(),
        "set": plan.overridden,
        "numbers": obj(&rows),
        "averages": obj(&avg_rows),
        "frequencies_note": frequencies_note,
        "at": plan.at.as_ref().map(|(sec, _)| {
            let mut m = obj(&at_rows);
            m.insert("time_s".into(), serde_json::json!(sec));
            m
        }),
        "notes": rows.iter().chain(&avg_rows).chain(&at_rows).filter_map(|c| c.note.as_ref()
            .map(|n| (c.key.clone(), serde_json::json!(n))))
            .collect::<serde_json::Map<_, _>>(),
        "audit": { "numbers": acc.audited, "defect": acc.defect,
                   "not_certified": acc.uncertified,
                   "largest_relative_difference": acc.largest, "defects": acc.defects },
    });
    Ok(SiReport {
        text: s,
        json,
        defect: acc.defect,
        uncertified: acc.uncertified > 0,
    })
}
