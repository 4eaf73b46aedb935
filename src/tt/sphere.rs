//! Polarizations on the sphere, for perturbations written in spherical coordinates.
//!
//! Model. With coordinates (t, r, theta, phi) in this order and the polarization basis
//! u = e_theta, v = e_phi of the radial direction (the basis `project` documents), the two
//! polarizations are h_plus = (h_thth - h_phph / sin^2 theta) / (2 r^2) and
//! h_cross = h_thph / (r^2 sin theta) (common practice: the orthonormal-frame components of
//! the angular block). They are given exactly, and at leading order in 1/r at fixed retarded
//! time u = t - r and fixed angles: h ~ C r^p with C a function of u and the angles.
//!
//! Key design decision: the leading order is read off the canonical form's structure (the
//! exponent of r in each numerator term, after substituting t = u + r), and only when that is
//! sound: no denominator factor and no other kernel may depend on r, and the coefficient of
//! the leading power must be proved nonzero, else the next power is tried (proved zero) or the
//! leading order is reported undecided.

use crate::canon::{CResult, Form, KernelId, OwnedTerm, Store};
use crate::tensor::Sym4;
use crate::zero::{Sampling, Verdict, decide};
use rustc_hash::FxHashMap;

/// The polarizations on the sphere.
#[derive(Clone, Debug)]
pub struct Sphere {
    /// h_plus, exactly.
    pub plus: Form,
    /// h_cross, exactly.
    pub cross: Form,
    /// h_plus at leading order in 1/r at fixed u = t - r.
    pub plus_leading: Leading,
    /// h_cross likewise.
    pub cross_leading: Leading,
}

/// A leading order in 1/r.
#[derive(Clone, Debug)]
pub enum Leading {
    /// `coefficient * r^power`, the coefficient a function of u and the angles.
    Term {
        /// The power of r (-1 for a radiative field).
        power: i32,
        /// The coefficient.
        coefficient: Form,
    },
    /// Exactly zero.
    Zero,
    /// Not available, with the reason.
    Unavailable(String),
}

/// Why the background `g` in the coordinates named `coords` = (t, r, theta, phi) does not
/// have the round angular block the formulas of this module assume, or `None` when it is
/// proved to: gbar_thth = r^2, gbar_phph = r^2 sin^2 theta and no other component with an
/// angular index (then e_theta/r and e_phi/(r sin theta) are orthonormal, and the
/// polarizations are the components of h in that frame). Not proved counts as not.
///
/// # Errors
///
/// An algebra limit.
pub fn round_sphere(store: &mut Store, coords: [&str; 4], g: &Sym4) -> CResult<Option<String>> {
    let r = store.symbol(coords[1]);
    let th = store.symbol(coords[2]);
    let r2 = store.powi(r, 2)?;
    let sin = store.sin(th)?;
    let sin2 = store.powi(sin, 2)?;
    let r2sin2 = store.mul(r2, sin2)?;
    let zero = store.zero();
    let want = [
        (2, 2, r2, format!("{0}^2", coords[1])),
        (
            3,
            3,
            r2sin2,
            format!("{0}^2*sin({1})^2", coords[1], coords[2]),
        ),
        (2, 3, zero, "0".into()),
        (0, 2, zero, "0".into()),
        (0, 3, zero, "0".into()),
        (1, 2, zero, "0".into()),
        (1, 3, zero, "0".into()),
    ];
    for (a, b, f, text) in want {
        let d = store.sub(g[a][b], f)?;
        if !store.is_zero(d) {
            return Ok(Some(format!(
                "gbar_{}.{} is not proved to be {text}",
                coords[a], coords[b]
            )));
        }
    }
    Ok(None)
}

/// h_plus and h_cross of `h` in the coordinates named `coords` = (t, r, theta, phi), with
/// `u` the name of the retarded-time symbol used for the leading order.
///
/// # Errors
///
/// An algebra limit.
pub fn polarizations(
    store: &mut Store,
    coords: [&str; 4],
    h: &Sym4,
    u: &str,
    sampling: &Sampling,
) -> CResult<Sphere> {
    let kernels = coords.map(|c| store.symbol_kernel(c));
    let r = store.symbol(coords[1]);
    let th = store.symbol(coords[2]);
    let sin = store.sin(th)?;
    let r2 = store.powi(r, 2)?;
    let sin2 = store.powi(sin, 2)?;
    let two_r2 = store.scale(r2, &crate::canon::Coeff::int(2))?;
    let a = store.div(h[3][3], sin2)?;
    let diff = store.sub(h[2][2], a)?;
    let plus = store.div(diff, two_r2)?;
    let d = store.mul(r2, sin)?;
    let cross = store.div(h[2][3], d)?;
    // t = u + r.
    let u_form = store.symbol(u);
    let ret = store.add(u_form, r)?;
    let mut subs = FxHashMap::default();
    subs.insert(kernels[0], ret);
    let plus_leading = leading(store, plus, &subs, kernels[1], sampling)?;
    let cross_leading = leading(store, cross, &subs, kernels[1], sampling)?;
    Ok(Sphere {
        plus,
        cross,
        plus_leading,
        cross_leading,
    })
}

fn leading(
    store: &mut Store,
    f: Form,
    subs: &FxHashMap<KernelId, Form>,
    r: KernelId,
    sampling: &Sampling,
) -> CResult<Leading> {
    let g = store.substitute(f, subs)?;
    if store.is_zero(g) {
        return Ok(Leading::Zero);
    }
    let r_name = match store.kernel(r) {
        crate::canon::Kernel::Sym(s) => s.clone(),
        _ => return Ok(Leading::Unavailable("r is not a symbol".into())),
    };
    let view = store.view(g);
    let depends_on_r =
        |store: &mut Store, form: Form| store.free_symbols(form).iter().any(|s| **s == *r_name);
    // The denominator: its factors may depend on the angles, not on r.
    let den: Vec<(Vec<OwnedTerm>, u32)> = view
        .denominator()
        .map(|(p, e)| (p.owned_terms(), e))
        .collect();
    let terms = view.numerator().owned_terms();
    let mut den_form = store.one();
    for (factor, e) in den {
        let forms: Vec<Form> = factor.iter().map(|t| store.term_form(t)).collect();
        let f = store.sum(&forms)?;
        if depends_on_r(store, f) {
            return Ok(Leading::Unavailable(
                "a denominator depends on r at fixed retarded time".into(),
            ));
        }
        let fe = store.powi(f, i64::from(e))?;
        den_form = store.mul(den_form, fe)?;
    }
    // Group the numerator's terms by their power of r; the rest must not depend on r.
    let mut groups: Vec<(i32, Vec<OwnedTerm>)> = Vec::new();
    for mut t in terms {
        let power = t
            .powers
            .iter()
            .find(|(k, _)| *k == r)
            .map_or(0, |(_, e)| *e);
        t.powers.retain(|(k, _)| *k != r);
        let tf = store.term_form(&t);
        if depends_on_r(store, tf) {
            return Ok(Leading::Unavailable(
                "it depends on r other than through powers of r at fixed retarded time".into(),
            ));
        }
        match groups.iter_mut().find(|(p, _)| *p == power) {
            Some((_, v)) => v.push(t),
            None => groups.push((power, vec![t])),
        }
    }
    groups.sort_by_key(|(p, _)| -p);
    for (power, group) in groups {
        let forms: Vec<Form> = group.iter().map(|t| store.term_form(t)).collect();
        let n = store.sum(&forms)?;
        let c = store.div(n, den_form)?;
        match decide(store, c, sampling) {
            Verdict::Zero => continue,
            Verdict::Nonzero(_) => {
                return Ok(Leading::Term {
                    power,
                    coefficient: c,
                });
            }
            Verdict::Undecided(why) => {
                return Ok(Leading::Unavailable(format!(
                    "the coefficient of r^{power} is not decided: {why}"
                )));
            }
        }
    }
    Ok(Leading::Zero)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::canon::Names;

    fn form(store: &mut Store, s: &str) -> Form {
        let e = crate::parse::parse(s).unwrap();
        store.build(&e, &Names::free()).unwrap()
    }

    #[test]
    fn an_outgoing_wave_falls_off_as_one_over_r() {
        // h_thth = r F(t - r) + G(t - r), h_phph = -sin^2 th * r F(t - r): h_plus = F(u)/r +
        // G(u)/(2 r^2), so the leading order is F(u) r^-1.
        let mut st = Store::new();
        let coords = ["t", "r", "th", "ph"];
        let z = st.zero();
        let mut h = [[z; 4]; 4];
        h[2][2] = form(&mut st, "r*F(t - r) + G(t - r)");
        h[3][3] = form(&mut st, "-sin(th)^2*r*F(t - r)");
        h[2][3] = form(&mut st, "r*sin(th)*cos(th)*K(t - r)/(1 + r)");
        let s = polarizations(&mut st, coords, &h, "u", &Sampling::default()).unwrap();
        let want = form(&mut st, "F(t - r)/r + G(t - r)/(2*r^2)");
        let d = st.sub(s.plus, want).unwrap();
        assert!(st.is_zero(d), "{}", st.to_text(s.plus));
        match s.plus_leading {
            Leading::Term { power, coefficient } => {
                assert_eq!(power, -1);
                let want = form(&mut st, "F(u)");
                let d = st.sub(coefficient, want).unwrap();
                assert!(st.is_zero(d), "{}", st.to_text(coefficient));
            }
            other => panic!("{other:?}"),
        }
        // h_cross has a denominator 1 + r: no leading order by structure.
        assert!(matches!(s.cross_leading, Leading::Unavailable(_)));
    }

    #[test]
    fn the_leading_power_is_the_highest_nonzero_one() {
        // (sin^2 + cos^2 - 1) r^3 + 1/r: the r^3 term vanishes.
        let mut st = Store::new();
        let coords = ["t", "r", "th", "ph"];
        let z = st.zero();
        let mut h = [[z; 4]; 4];
        h[2][2] = form(&mut st, "2*r^2*((sin(t)^2 + cos(t)^2 - 1)*r^3 + 1/r)");
        let s = polarizations(&mut st, coords, &h, "u", &Sampling::default()).unwrap();
        match s.plus_leading {
            Leading::Term { power, .. } => assert_eq!(power, -1),
            other => panic!("{other:?}"),
        }
        assert!(matches!(s.cross_leading, Leading::Zero));
    }
}
