use super::*;
use crate::canon::Point;
use crate::interval::{CInterval, Interval};
use crate::problem::from_str;
use crate::zero::{Sampling, Verdict, decide};

/// A problem with a circular binary in the x-y plane (symbolic masses and separation).
pub(super) const BINARY: &str = "[parameters]\nm1 = 1.5\nm2 = 1.0\nR = 20.0\niota = 0.7\nr = 1e6\n\
                      [binary]\nm1 = 'm1'\nm2 = 'm2'\nsemimajor_axis = 'R'\n";

pub(super) fn proved_zero(store: &mut Store, f: Form, s: &Sampling) -> bool {
    matches!(decide(store, f, s), Verdict::Zero)
}

pub(super) fn value(store: &mut Store, f: Form, at: &[(&str, f64)]) -> f64 {
    let mut pt = Point::default();
    for (n, v) in at {
        let k = store.symbol_kernel(n);
        pt.values
            .insert(k, CInterval::from_real(Interval::point(*v).unwrap()));
    }
    let z = store.eval_interval(f, &pt).expect("finite");
    z.re.mid()
}

/// The orbit seen at the inclination `iota` (a symbol): `n = (0, sin iota, cos iota)`,
/// `u = x` (the line of nodes), `v = (0, cos iota, -sin iota)`.
pub(super) fn inclined_basis(st: &mut Store) -> (Vec3, Vec3, Vec3) {
    let iota = st.symbol("iota");
    let (sin, cos) = (st.sin(iota).unwrap(), st.cos(iota).unwrap());
    let (z, one) = (st.zero(), st.one());
    let v = [z, cos, st.neg(sin).unwrap()];
    ([z, sin, cos], [one, z, z], v)
}

/// `n`, `u = e_theta`, `v = e_phi` as forms of the symbols `th`, `ph`.
pub(super) fn polar_basis(st: &mut Store) -> (Vec3, Vec3, Vec3) {
    let (th, ph) = (st.symbol("th"), st.symbol("ph"));
    let (s, c, sp, cp) = (
        st.sin(th).unwrap(),
        st.cos(th).unwrap(),
        st.sin(ph).unwrap(),
        st.cos(ph).unwrap(),
    );
    let z = st.zero();
    let mul = |st: &mut Store, a: Form, b: Form| st.mul(a, b).unwrap();
    let n = [mul(st, s, cp), mul(st, s, sp), c];
    let u = [mul(st, c, cp), mul(st, c, sp), st.neg(s).unwrap()];
    let v = [st.neg(sp).unwrap(), cp, z];
    (n, u, v)
}

#[test]
fn circular_binary_field_and_luminosity_match_the_closed_forms() {
    // checks.md 2c (closed forms [CALC]; textbook form Maggiore 2007 eqs. (3.332)-(3.333),
    // from memory): n = (0, sin iota, cos iota), u = x, v = (0, cos iota, -sin iota),
    // h_+ = -(4/r) (m1 m2 / R) ((1 + cos^2 iota)/2) cos 2 w (t - r),
    // h_x = -(4/r) (m1 m2 / R) cos iota sin 2 w (t - r), w^2 = M/R^3 (mu R^2 w^2 = m1 m2/R).
    let mut p = from_str("binary", BINARY).unwrap();
    let s = p.sampling.clone();
    let st = &mut p.store;
    let mut rad = Radiation::new(st, &p.bodies, "t").unwrap();
    let (n, u, v) = inclined_basis(st);
    let r = st.symbol("r");
    let wave = rad.field(st, (&n, &u, &v), r).unwrap();
    let want_plus = crate::expression(
        st,
        "-(4/r)*(m1*m2/R)*((1 + cos(iota)^2)/2)*cos(2*sqrt((m1 + m2)/R^3)*(t - r))",
    )
    .unwrap();
    let want_cross = crate::expression(
        st,
        "-(4/r)*(m1*m2/R)*cos(iota)*sin(2*sqrt((m1 + m2)/R^3)*(t - r))",
    )
    .unwrap();
    let d = st.sub(wave.plus, want_plus).unwrap();
    assert!(proved_zero(st, d, &s), "h_plus: {}", st.to_text(wave.plus));
    let d = st.sub(wave.cross, want_cross).unwrap();
    assert!(
        proved_zero(st, d, &s),
        "h_cross: {}",
        st.to_text(wave.cross)
    );
    // L = (32/5) mu^2 R^4 w^6 = 1.125e-5 at m1 = 1.5, m2 = 1, R = 20 (checks.md 2c), constant
    // in time, so its average is itself.
    let l = rad.luminosity(st).unwrap();
    let dl = st.diff(l, rad.t).unwrap();
    assert!(st.is_zero(dl), "{}", st.to_text(l));
    let got = value(st, l, &[("m1", 1.5), ("m2", 1.0), ("R", 20.0)]);
    assert!((got / 1.125e-5 - 1.0).abs() < 1e-12, "{got}");
    match time_average(st, l, rad.t).unwrap() {
        Average::Exact(a) => assert_eq!(a, l),
        Average::NotPeriodic(why) => panic!("{why}"),
    }
    // The centre of mass is at rest: no dipole radiation.
    for a in rad.dipole_acceleration {
        assert!(st.is_zero(a));
    }
    // Angular momentum: along +z only, dJ_z/dt = -L/w (a circular orbit loses E and J in the
    // ratio w; common practice), x and y components 0.
    let dj = rad.angular_momentum_flux(st).unwrap();
    assert!(st.is_zero(dj[0]) && st.is_zero(dj[1]));
    let w = crate::expression(st, "sqrt((m1 + m2)/R^3)").unwrap();
    let lw = st.div(l, w).unwrap();
    let sum = st.add(dj[2], lw).unwrap();
    assert!(proved_zero(st, sum, &s), "{}", st.to_text(dj[2]));
}

#[test]
fn time_averages_of_periodic_and_other_forms() {
    let mut st = Store::new();
    let s = Sampling::default();
    let t = st.symbol_kernel("t");
    // <A cos^2(w t) + B> = A/2 + B; <sin(w t) cos(2 w t)> = 0.
    let f = crate::expression(&mut st, "A*cos(w*t)^2 + B + sin(w*t)*cos(2*w*t)").unwrap();
    let want = crate::expression(&mut st, "A/2 + B").unwrap();
    match time_average(&mut st, f, t).unwrap() {
        Average::Exact(a) => {
            let d = st.sub(a, want).unwrap();
            assert!(proved_zero(&mut st, d, &s), "{}", st.to_text(a));
        }
        Average::NotPeriodic(why) => panic!("{why}"),
    }
    // Secular growth and decay have no average.
    for text in ["t*cos(w*t)", "exp(-t)*cos(t)", "1/(1 + t^2)", "cos(t^2)"] {
        let f = crate::expression(&mut st, text).unwrap();
        assert!(
            matches!(
                time_average(&mut st, f, t).unwrap(),
                Average::NotPeriodic(_)
            ),
            "{text}"
        );
    }
}

#[test]
fn an_accelerated_centre_of_mass_is_reported() {
    let text = "[parameters]\nm = 1.0\ng = 0.1\n[[body]]\nmass = 'm'\n\
                position = ['g*t^2/2', '0', '0']\n";
    let mut p = from_str("falling", text).unwrap();
    let rad = Radiation::new(&mut p.store, &p.bodies, "t").unwrap();
    let want = crate::expression(&mut p.store, "m*g").unwrap();
    assert_eq!(rad.dipole_acceleration[0], want);
}

#[test]
fn a_spinning_rigid_body_loses_energy_and_angular_momentum_in_the_ratio_of_its_spin() {
    // Common practice: a source rotating rigidly at angular velocity W radiates
    // dE/dt = W dJ/dt, and a body symmetric about its spin axis does not radiate at all.
    let text = "[parameters]\nI1 = 0.5\nI2 = 0.49\nI3 = 0.52\nW = 0.05\n[[body]]\nmass = 1\n\
                moments = ['I1', 'I2', 'I3']\naxis = ['0', '0', '1']\nangle = 'W*t'\n";
    let mut p = from_str("star", text).unwrap();
    let s = p.sampling.clone();
    let st = &mut p.store;
    let mut rad = Radiation::new(st, &p.bodies, "t").unwrap();
    let l = rad.luminosity(st).unwrap();
    let dj = rad.angular_momentum_flux(st).unwrap();
    let w = st.symbol("W");
    let wj = st.mul(w, dj[2]).unwrap();
    let sum = st.add(l, wj).unwrap();
    assert!(
        proved_zero(st, sum, &s),
        "{} {}",
        st.to_text(l),
        st.to_text(dj[2])
    );
    // Symmetric about a tilted spin axis (I1 = I2 = I3): nothing radiates.
    let text = "[parameters]\nI = 0.5\nW = 0.05\n[[body]]\nmass = 1\n\
                moments = ['I', 'I', 'I']\naxis = ['3/5', '0', '4/5']\nangle = 'W*t'\n";
    let mut p = from_str("ball", text).unwrap();
    let st = &mut p.store;
    let mut rad = Radiation::new(st, &p.bodies, "t").unwrap();
    let l = rad.luminosity(st).unwrap();
    assert!(st.is_zero(l), "{}", st.to_text(l));
    // The second moment of a body spun by a quarter turn about z swaps I1 and I2 (exact).
    let text = "[parameters]\nI1 = 0.5\nI2 = 0.3\nI3 = 0.7\n[[body]]\nmass = 1\n\
                moments = ['I1', 'I2', 'I3']\nangle = 'pi/2'\n";
    let mut p = from_str("turned", text).unwrap();
    let st = &mut p.store;
    let rigid = p.bodies[0].rigid.clone().unwrap();
    let m = rigid_second_moment(st, &rigid).unwrap();
    // int rho x^2 = (I1 + I2 + I3)/2 - I_xx, and I_xx after the turn is I2.
    let want = crate::expression(st, "(I1 + I2 + I3)/2 - I2").unwrap();
    let d = st.sub(m[0][0], want).unwrap();
    assert!(st.is_zero(d), "{}", st.to_text(m[0][0]));
}

#[test]
fn the_flux_through_a_large_sphere_is_the_luminosity() {
    // checks.md 2c flux-integral test: (r^2/(16 pi)) oint <hdot_+^2 + hdot_x^2> dOmega = L
    // (common practice: the Isaacson energy flux of a TT wave), here with the exact time
    // average of the exact far-zone field along a symbolic direction, and the angular
    // integral by the midpoint rule in theta (the average does not depend on phi for an
    // orbit in the x-y plane; checked at two phi).
    let mut p = from_str("binary", BINARY).unwrap();
    let st = &mut p.store;
    let mut rad = Radiation::new(st, &p.bodies, "t").unwrap();
    let (n, u, v) = polar_basis(st);
    let r = st.symbol("r");
    let w = rad.field(st, (&n, &u, &v), r).unwrap();
    let mut power = Vec::new();
    for h in [w.plus, w.cross] {
        let d = st.diff(h, rad.t).unwrap();
        power.push(st.mul(d, d).unwrap());
    }
    let sum = st.sum(&power).unwrap();
    let r2 = st.mul(r, r).unwrap();
    let flux = st.mul(sum, r2).unwrap();
    let Average::Exact(avg) = time_average(st, flux, rad.t).unwrap() else {
        panic!("the flux of a circular binary has a time average");
    };
    let values = [("m1", 1.5), ("m2", 1.0), ("R", 20.0), ("r", 1e6)];
    let steps = 400;
    for phi in [0.0, 1.1] {
        let mut integral = 0.0;
        for k in 0..steps {
            let theta = std::f64::consts::PI * (k as f64 + 0.5) / steps as f64;
            let mut at = values.to_vec();
            at.extend([("th", theta), ("ph", phi)]);
            integral += value(st, avg, &at) * theta.sin();
        }
        integral *= std::f64::consts::PI / steps as f64 * 2.0 * std::f64::consts::PI;
        let flux_l = integral / (16.0 * std::f64::consts::PI);
        assert!(
            (flux_l / 1.125e-5 - 1.0).abs() < 1e-5,
            "phi = {phi}: {flux_l}"
        );
    }
}
