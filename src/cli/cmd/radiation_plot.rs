//! `lingrav radiation --svg`: the waveform against time at the observer and the angular
//! pattern of the time-averaged power, numbers from certified enclosures of the exact forms
//! (whose printed texts the command audits). For an eccentric orbit, whose forms are functions
//! of the eccentric anomaly, each time of the picture is turned into the anomaly of the
//! retarded time by solving Kepler's equation numerically ([`crate::radiation::anomaly`]): a
//! picture, not a verdict.

use crate::canon::{Form, Point, Store};
use crate::cli::out::{Failure, gave_up};
use crate::interval::{CInterval, Interval};
use crate::plot::{Panel, svg};
use crate::problem::Problem;
use crate::radiation::{Average, Radiation, anomaly};

/// Points along each curve.
const SAMPLES: usize = 241;

/// The value of `f` at `at` (names and values) with the file's parameters and samples; NaN
/// where it cannot be enclosed (left out of the curve).
fn value(
    st: &mut Store,
    p_params: &[(String, f64)],
    pt0: &Point,
    f: Form,
    at: &[(&str, f64)],
) -> f64 {
    let mut pt = pt0.clone();
    for (name, v) in p_params
        .iter()
        .map(|(n, v)| (n.as_str(), *v))
        .chain(at.iter().copied())
    {
        if let Some(i) = Interval::point(v) {
            let k = st.symbol_kernel(name);
            pt.values.insert(k, CInterval::from_real(i));
        }
    }
    st.eval_interval(f, &pt).map_or(f64::NAN, |z| z.re.mid())
}

/// The picture: h_plus and h_cross over `[t0, t1]` at the observer, and the power per solid
/// angle `r^2/(16 pi) <hdot_plus^2 + hdot_cross^2>` against theta at phi = 0 (time-averaged
/// when the motion allows, else at t0).
pub fn picture(
    p: &mut Problem,
    rad: &mut Radiation,
    (wave, distance): ((Form, Form), Form),
    (t0, t1): (f64, f64),
    title: &str,
) -> Result<String, Failure> {
    let limit = |e: crate::CanonError| gave_up(&e);
    let t_name = p.coordinates[0].clone();
    let params = p.parameters.clone();
    let orbit = p
        .orbit
        .as_ref()
        .map(|o| (o.anomaly.clone(), o.mean_motion, o.eccentricity));
    let pt0 = Point {
        samples: p.sampling.samples.clone(),
        ..Point::default()
    };
    let st = &mut p.store;
    let times: Vec<f64> = (0..SAMPLES)
        .map(|k| t0 + (t1 - t0) * k as f64 / (SAMPLES - 1) as f64)
        .collect();
    // The clock's value at each observer time: t itself, or the anomaly E of the retarded
    // time t - r (n (t - r) = E - e sin E), reduced modulo 2 pi (the bodies are functions of
    // cos E and sin E) so that the enclosures stay tight.
    let clock_name = match &orbit {
        None => t_name.clone(),
        Some((an, _, _)) => an.clone(),
    };
    let clock_values: Vec<f64> = match &orbit {
        None => times.clone(),
        Some((_, n, e)) => {
            let n = value(st, &params, &pt0, *n, &[]);
            let e = value(st, &params, &pt0, *e, &[]);
            let r = value(st, &params, &pt0, distance, &[]);
            if !(n.is_finite() && r.is_finite() && (0.0..1.0).contains(&e)) {
                return Err(Failure::Input(miette::miette!(
                    help = "give the distance as a number or a parameter, and an eccentricity \
                            whose value is in [0, 1)",
                    "--svg: the orbit's mean motion ({n}), eccentricity ({e}) or the distance \
                     ({r}) has no usable value"
                )));
            }
            let mut out = Vec::with_capacity(times.len());
            for &t in &times {
                let x = anomaly::solve(n * (t - r), e)
                    .map_err(|err| Failure::Input(miette::miette!("--svg: {err}")))?;
                let turns = (x / (2.0 * std::f64::consts::PI)).round();
                out.push(x - 2.0 * std::f64::consts::PI * turns);
            }
            out
        }
    };
    let curve = |st: &mut Store, f: Form| -> Vec<(f64, f64)> {
        times
            .iter()
            .zip(&clock_values)
            .map(|(&t, &c)| (t, value(st, &params, &pt0, f, &[(clock_name.as_str(), c)])))
            .collect()
    };
    let plus = curve(st, wave.0);
    let cross = curve(st, wave.1);
    // The pattern in the x-z plane: n = (sin th, 0, cos th), u = e_theta, v = e_phi.
    let th_name = "lingrav_theta";
    let th = st.symbol(th_name);
    let (s, c) = (st.sin(th).map_err(limit)?, st.cos(th).map_err(limit)?);
    let (z, one) = (st.zero(), st.one());
    let n = [s, z, c];
    let u = [c, z, st.neg(s).map_err(limit)?];
    let v = [z, one, z];
    let r = st.symbol("lingrav_r");
    let w = rad.field(st, (&n, &u, &v), r).map_err(limit)?;
    let mut terms = Vec::new();
    for h in [w.plus, w.cross] {
        let d = rad.clock.d_dt(st, h).map_err(limit)?;
        terms.push(st.mul(d, d).map_err(limit)?);
    }
    let sum = st.sum(&terms).map_err(limit)?;
    let r2 = st.mul(r, r).map_err(limit)?;
    let sixteen_pi =
        crate::expression(st, "16*pi").map_err(|e| Failure::Input(miette::miette!("{e}")))?;
    let flux = st.mul(sum, r2).map_err(limit)?;
    let flux = st.div(flux, sixteen_pi).map_err(limit)?;
    let (flux, averaged) = match rad.clock.average(st, flux).map_err(limit)? {
        Average::Exact(a) => (a, true),
        Average::NotPeriodic(_) => (flux, false),
    };
    let pattern: Vec<(f64, f64)> = (0..=180)
        .map(|k| {
            let theta = std::f64::consts::PI * f64::from(k) / 180.0;
            let at = [
                (th_name, theta),
                ("lingrav_r", 1.0),
                (clock_name.as_str(), clock_values[0]),
            ];
            (theta, value(st, &params, &pt0, flux, &at))
        })
        .collect();
    let t_label = format!("{t_name} (observer's time)");
    Ok(svg(
        title,
        &[
            Panel {
                name: "h_plus".into(),
                x_label: t_label.clone(),
                points: plus,
            },
            Panel {
                name: "h_cross".into(),
                x_label: t_label,
                points: cross,
            },
            Panel {
                name: if averaged {
                    "<dP/dOmega>".into()
                } else {
                    format!("dP/dOmega at {clock_name} = {}", clock_values[0])
                },
                x_label: "theta [rad] from +z, in the x-z plane (phi = 0)".into(),
                points: pattern,
            },
        ],
    ))
}
