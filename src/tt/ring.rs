//! The response of a ring of free test masses to the TT part of a wave, numerically.
//!
//! Model. Masses sit on a ring of radius `L` in the plane transverse to `n`, mass `k` at
//! angle `phi_k = 2 pi k / N` from `u` towards `v`: `x = L (cos phi_k u + sin phi_k v)`. To
//! first order in `h`, its proper displacement from the ring's centre changes by
//! `delta x^i = (1/2) h^TT_ij x^j`, with `h^TT` taken at the centre of the ring. In the
//! basis `(u, v)` that is `(1/2) L M (cos phi, sin phi)` with
//! `M = [[h_uu, h_uv], [h_uv, h_vv]] = [[h_+, h_x], [h_x, -h_+]]`.
//!
//! Design decision: this is the one place where the TT part is turned into numbers, with the
//! problem's parameter values and function samples; everything it reports is labelled as
//! numerical. The SVG picture is written by hand (no plotting dependency), with fixed
//! number formatting, so the same input gives byte-identical output.

use super::{Direction, Mat3, numeric_point};
use crate::canon::{Form, Store};
use crate::zero::Sampling;
use std::fmt::Write as _;

/// One mass at one time.
#[derive(Clone, Debug, PartialEq)]
pub struct Mass {
    /// Its index, 0 to N - 1.
    pub index: usize,
    /// Its angle from `u` towards `v`, in radians.
    pub phi: f64,
    /// Displacement along `u`.
    pub dx_u: f64,
    /// Displacement along `v`.
    pub dx_v: f64,
}

/// The ring at one time.
#[derive(Clone, Debug, PartialEq)]
pub struct Snapshot {
    /// The time.
    pub t: f64,
    /// `h_+` at the centre.
    pub plus: f64,
    /// `h_x` at the centre.
    pub cross: f64,
    /// `M = [[h_uu, h_uv], [h_vu, h_vv]]` at the centre.
    pub m: [[f64; 2]; 2],
    /// The masses.
    pub masses: Vec<Mass>,
}

/// Where and how big the ring is.
#[derive(Clone, Debug)]
pub struct Ring {
    /// Its radius `L`, positive.
    pub radius: f64,
    /// How many masses.
    pub masses: usize,
    /// Its centre `(x, y, z)`.
    pub centre: [f64; 3],
}

fn real(store: &mut Store, f: Form, pt: &crate::canon::Point, what: &str) -> Result<f64, String> {
    let (re, im) = store
        .eval_f64(f, pt)
        .ok_or_else(|| format!("cannot evaluate {what} there"))?;
    if !re.is_finite() || im.abs() > 1e-9 * (1.0 + re.abs()) {
        return Err(format!(
            "{what} is not a finite real number there ({re} + {im} i)"
        ));
    }
    Ok(re)
}

/// The ring's response at each time.
///
/// # Errors
///
/// A value that cannot be evaluated (a singular point, a direction undefined there).
pub fn respond(
    store: &mut Store,
    parameters: &[(String, f64)],
    sampling: &Sampling,
    dir: &Direction,
    tt: &Mat3,
    ring: &Ring,
    times: &[f64],
) -> Result<Vec<Snapshot>, String> {
    let mut out = Vec::new();
    for &t in times {
        let [x, y, z] = ring.centre;
        let pt = numeric_point(store, parameters, sampling, [t, x, y, z]);
        let mut u = [0f64; 3];
        let mut v = [0f64; 3];
        for i in 0..3 {
            u[i] = real(store, dir.u[i], &pt, "the basis vector u")?;
            v[i] = real(store, dir.v[i], &pt, "the basis vector v")?;
        }
        let mut h = [[0f64; 3]; 3];
        for i in 0..3 {
            for j in 0..3 {
                h[i][j] = real(store, tt[i][j], &pt, "h^TT")?;
            }
        }
        let quad = |a: &[f64; 3], b: &[f64; 3]| -> f64 {
            let mut s = 0.0;
            for i in 0..3 {
                for j in 0..3 {
                    s += a[i] * h[i][j] * b[j];
                }
            }
            s
        };
        let m = [[quad(&u, &u), quad(&u, &v)], [quad(&v, &u), quad(&v, &v)]];
        out.push(snapshot(t, m, ring));
    }
    snap_noise(&mut out, ring.radius);
    Ok(out)
}

/// The ring at time `t` for `M = [[h_uu, h_uv], [h_vu, h_vv]]` at its centre.
fn snapshot(t: f64, m: [[f64; 2]; 2], ring: &Ring) -> Snapshot {
    let masses = (0..ring.masses)
        .map(|k| {
            let phi = std::f64::consts::TAU * k as f64 / ring.masses as f64;
            let (s, c) = phi.sin_cos();
            Mass {
                index: k,
                phi,
                dx_u: 0.5 * ring.radius * (m[0][0] * c + m[0][1] * s),
                dx_v: 0.5 * ring.radius * (m[1][0] * c + m[1][1] * s),
            }
        })
        .collect();
    Snapshot {
        t,
        plus: 0.5 * (m[0][0] - m[1][1]),
        cross: 0.5 * (m[0][1] + m[1][0]),
        m,
        masses,
    }
}

/// The ring's response on the sphere, in coordinates `names` read as (t, r, theta, phi): the
/// ring is transverse to e_r at `ring.centre` = (r, theta, phi), `u = e_theta`,
/// `v = e_phi`, and `M = [[h_+, h_x], [h_x, -h_+]]` with the polarizations `plus`, `cross`
/// on the sphere ([`super::sphere::polarizations`]).
///
/// # Errors
///
/// A value that cannot be evaluated there.
#[allow(clippy::too_many_arguments)]
pub fn respond_on_sphere(
    store: &mut Store,
    names: &[String; 4],
    parameters: &[(String, f64)],
    sampling: &Sampling,
    plus: Form,
    cross: Form,
    ring: &Ring,
    times: &[f64],
) -> Result<Vec<Snapshot>, String> {
    let mut out = Vec::new();
    for &t in times {
        let [r, th, ph] = ring.centre;
        let pt = super::numeric_point_in(store, names, parameters, sampling, [t, r, th, ph]);
        let hp = real(store, plus, &pt, "h_plus")?;
        let hx = real(store, cross, &pt, "h_cross")?;
        out.push(snapshot(t, [[hp, hx], [hx, -hp]], ring));
    }
    snap_noise(&mut out, ring.radius);
    Ok(out)
}

/// Rounding noise (cos(pi/2) = 6e-17, say) is shown as 0: values below [`NOISE`] times the
/// largest of their kind are set to zero.
pub const NOISE: f64 = 1e-12;

fn snap_noise(snaps: &mut [Snapshot], radius: f64) {
    let big = snaps
        .iter()
        .flat_map(|s| s.m.iter().flatten().copied())
        .fold(0f64, |a, b| a.max(b.abs()));
    let tiny = |x: &mut f64, scale: f64| {
        if x.abs() <= NOISE * scale {
            *x = 0.0;
        }
    };
    for s in snaps.iter_mut() {
        tiny(&mut s.plus, big);
        tiny(&mut s.cross, big);
        for x in s.m.iter_mut().flatten() {
            tiny(x, big);
        }
        for m in &mut s.masses {
            tiny(&mut m.dx_u, big * radius);
            tiny(&mut m.dx_v, big * radius);
        }
    }
}

/// The exaggeration that makes the largest displacement a quarter of the radius (1 when
/// nothing moves).
#[must_use]
pub fn exaggeration(snaps: &[Snapshot], radius: f64) -> f64 {
    // The largest displacement on the ring is (1/2) L times the largest |eigenvalue| of M.
    let mut biggest = 0f64;
    for s in snaps {
        let m = s.m;
        let mean = 0.5 * (m[0][0] + m[1][1]);
        let dev = (0.25 * (m[0][0] - m[1][1]).powi(2) + m[0][1] * m[1][0])
            .max(0.0)
            .sqrt();
        biggest = biggest.max((mean.abs() + dev) * 0.5 * radius);
    }
    if biggest > 0.0 && biggest.is_finite() {
        0.25 * radius / biggest
    } else {
        1.0
    }
}

const PANEL_W: f64 = 220.0;
const PANEL_H: f64 = 250.0;
const RING_PX: f64 = 70.0;
const PER_ROW: usize = 4;

fn num(x: f64) -> String {
    let s = format!("{x:.2}");
    if s == "-0.00" { "0.00".into() } else { s }
}

fn escape(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

/// An SVG picture: one panel per time with the undeformed ring (dashed), the deformed ring
/// and the masses, displacements exaggerated by [`exaggeration`] (printed in the picture).
#[must_use]
pub fn svg(snaps: &[Snapshot], radius: f64, title: &str) -> String {
    let scale = exaggeration(snaps, radius);
    let cols = snaps.len().clamp(1, PER_ROW);
    let rows = snaps.len().div_ceil(PER_ROW).max(1);
    let width = PANEL_W * cols as f64;
    let height = 50.0 + PANEL_H * rows as f64;
    let mut s = String::new();
    let _ = writeln!(
        s,
        "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{}\" height=\"{}\" viewBox=\"0 0 {} {}\" font-family=\"monospace\" font-size=\"11\">",
        num(width),
        num(height),
        num(width),
        num(height)
    );
    let _ = writeln!(s, "<rect width=\"100%\" height=\"100%\" fill=\"white\"/>");
    let _ = writeln!(
        s,
        "<text x=\"8\" y=\"18\" font-size=\"13\">{}</text>",
        escape(title)
    );
    let _ = writeln!(
        s,
        "<text x=\"8\" y=\"36\">ring of radius L = {radius}, displacements x{scale:.3e}; u to the right, v up</text>"
    );
    for (p, snap) in snaps.iter().enumerate() {
        let ox = PANEL_W * (p % PER_ROW) as f64;
        let oy = 50.0 + PANEL_H * (p / PER_ROW) as f64;
        let (cx, cy) = (ox + PANEL_W / 2.0, oy + 40.0 + PANEL_H / 2.0 - 20.0);
        let to_px = |pu: f64, pv: f64| (cx + RING_PX * pu, cy - RING_PX * pv);
        let _ = writeln!(
            s,
            "<g><text x=\"{}\" y=\"{}\">t = {:.4}</text>",
            num(ox + 10.0),
            num(oy + 16.0),
            snap.t
        );
        let _ = writeln!(
            s,
            "<text x=\"{}\" y=\"{}\">h+ = {:+.3e}  hx = {:+.3e}</text>",
            num(ox + 10.0),
            num(oy + 30.0),
            snap.plus,
            snap.cross
        );
        let _ = writeln!(
            s,
            "<circle cx=\"{}\" cy=\"{}\" r=\"{}\" fill=\"none\" stroke=\"#888\" stroke-dasharray=\"4 3\"/>",
            num(cx),
            num(cy),
            num(RING_PX)
        );
        // The deformed ring: every point of the ring moves by (1/2) L M (cos psi, sin psi).
        let m = snap.m;
        let mut pts = Vec::new();
        for k in 0..=72 {
            let psi = std::f64::consts::TAU * k as f64 / 72.0;
            let (sn, cs) = psi.sin_cos();
            let du = 0.5 * (m[0][0] * cs + m[0][1] * sn) * scale;
            let dv = 0.5 * (m[1][0] * cs + m[1][1] * sn) * scale;
            let (x, y) = to_px(cs + du, sn + dv);
            pts.push(format!("{},{}", num(x), num(y)));
        }
        let _ = writeln!(
            s,
            "<polyline points=\"{}\" fill=\"none\" stroke=\"#1f5fa8\" stroke-width=\"1.5\"/>",
            pts.join(" ")
        );
        for mass in &snap.masses {
            let (sn, cs) = mass.phi.sin_cos();
            let (x0, y0) = to_px(cs, sn);
            let (x, y) = to_px(
                cs + mass.dx_u / radius * scale,
                sn + mass.dx_v / radius * scale,
            );
            let colour = if mass.index == 0 { "#c0392b" } else { "#222" };
            let _ = writeln!(
                s,
                "<line x1=\"{}\" y1=\"{}\" x2=\"{}\" y2=\"{}\" stroke=\"#bbb\"/><circle cx=\"{}\" cy=\"{}\" r=\"4\" fill=\"{colour}\"/>",
                num(x0),
                num(y0),
                num(x),
                num(y),
                num(x),
                num(y)
            );
        }
        let _ = writeln!(s, "</g>");
    }
    let _ = writeln!(s, "</svg>");
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    fn snap(plus: f64, cross: f64) -> Snapshot {
        let m = [[plus, cross], [cross, -plus]];
        let masses = (0..4)
            .map(|k| {
                let phi = std::f64::consts::TAU * k as f64 / 4.0;
                let (s, c) = phi.sin_cos();
                Mass {
                    index: k,
                    phi,
                    dx_u: 0.5 * (m[0][0] * c + m[0][1] * s),
                    dx_v: 0.5 * (m[1][0] * c + m[1][1] * s),
                }
            })
            .collect();
        Snapshot {
            t: 0.0,
            plus,
            cross,
            m,
            masses,
        }
    }

    #[test]
    fn exaggeration_makes_the_largest_displacement_a_quarter_radius() {
        // Largest displacement (1/2) L |h| for a pure plus wave: h = 1e-3, L = 2 -> 1e-3.
        let s = [snap(1e-3, 0.0)];
        let e = exaggeration(&s, 2.0);
        assert!((e * 1e-3 - 0.5).abs() < 1e-12, "{e}");
        assert_eq!(exaggeration(&[snap(0.0, 0.0)], 1.0), 1.0);
    }

    #[test]
    fn svg_is_deterministic_and_well_formed() {
        let s = [snap(1e-3, 0.0), snap(0.0, 1e-3)];
        let a = svg(&s, 1.0, "a <test>");
        let b = svg(&s, 1.0, "a <test>");
        assert_eq!(a, b);
        assert!(a.starts_with("<svg"));
        assert!(a.trim_end().ends_with("</svg>"));
        assert!(a.contains("a &lt;test&gt;"));
        assert_eq!(a.matches("stroke-dasharray").count(), 2);
        assert_eq!(a.matches("<polyline").count(), 2);
    }
}
