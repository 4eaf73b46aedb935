use super::*;
use crate::detector::numeric::gauss_legendre;
use crate::problem::from_str;
use crate::radiation::tests::{BINARY, inclined_basis, polar_basis, proved_zero, value};
use crate::radiation::{Average, Radiation, time_average};

fn expr(store: &mut Store, text: &str) -> Form {
    crate::expression(store, text).unwrap()
}

/// The moments and the momentum flux of a problem's bodies.
fn recoil(p: &mut crate::problem::Problem) -> (Radiation, NextOrder, Vec3) {
    let st = &mut p.store;
    let mut rad = Radiation::new(st, &p.bodies, "t").unwrap();
    let t = st.symbol_kernel("t");
    assert_eq!(refusal(st, &p.bodies, t), None);
    let mut next = NextOrder::new(st, &p.bodies, "t").unwrap();
    let dp = next.momentum_flux(st, &mut rad).unwrap();
    (rad, next, dp)
}

#[test]
fn the_recoil_of_a_circular_binary_is_fitchetts() {
    // Fitchett 1983, MNRAS 203, 1049 (from memory; also Kidder 1995, Phys. Rev. D 52, 821,
    // from memory): |dP/dt| = (464/105) eta^2 (dm/M) (M/R)^(11/2) for a circular orbit of
    // separation R, eta = m1 m2/M^2, dm = m1 - m2, M = m1 + m2. Compared squared, so that
    // the half-integer power is rational: |dP/dt|^2 - (464/105)^2 eta^4 (dm/M)^2 (M/R)^11.
    let mut p = from_str("binary", BINARY).unwrap();
    let s = p.sampling.clone();
    let (mut rad, _, dp) = recoil(&mut p);
    let st = &mut p.store;
    let sq = [st.mul(dp[0], dp[0]).unwrap(), st.mul(dp[1], dp[1]).unwrap()];
    let sq = st.sum(&sq).unwrap();
    let want = expr(
        st,
        "(464/105)^2*(m1*m2/(m1 + m2)^2)^4*((m1 - m2)/(m1 + m2))^2*((m1 + m2)/R)^11",
    );
    let d = st.sub(sq, want).unwrap();
    assert!(proved_zero(st, d, &s), "{}", st.to_text(sq));
    assert!(st.is_zero(dp[2]), "{}", st.to_text(dp[2]));
    // The direction (derived here, not from the paper): along the velocity of the lighter
    // body, dP.v1 = -(464/105) m1^2 m2^3 (m1 - m2)/R^6 with v1 the velocity of m1 (so the
    // source recoils along the heavier body's velocity).
    let v1: Vec<Form> = p.bodies[0]
        .position
        .iter()
        .map(|&x| st.diff(x, rad.t).unwrap())
        .collect();
    let dots: Vec<Form> = (0..3).map(|i| st.mul(dp[i], v1[i]).unwrap()).collect();
    let dot = st.sum(&dots).unwrap();
    let want = expr(st, "-(464/105)*m1^2*m2^3*(m1 - m2)/R^6");
    let d = st.sub(dot, want).unwrap();
    assert!(proved_zero(st, d, &s), "{}", st.to_text(dot));
    // Over an orbit the recoil turns full circle: average zero.
    for &f in &dp {
        match time_average(st, f, rad.t).unwrap() {
            Average::Exact(a) => assert!(st.is_zero(a), "{}", st.to_text(a)),
            Average::NotPeriodic(why) => panic!("{why}"),
        }
    }
    // The quadrupole of the same bodies is untouched by all this.
    let l = rad.luminosity(st).unwrap();
    let want = expr(st, "32*m1^2*m2^2*(m1 + m2)/(5*R^5)");
    let d = st.sub(l, want).unwrap();
    assert!(proved_zero(st, d, &s));
}

#[test]
fn equal_masses_do_not_recoil() {
    // Symmetry: the binary is invariant under a half turn about its axis, which reverses
    // every vector in the orbital plane; so its recoil is zero at every time, exactly.
    let text = "[parameters]\nm = 1.2\nR = 15.0\n\
                [binary]\nm1 = 'm'\nm2 = 'm'\nsemimajor_axis = 'R'\ninclination = '0.4'\n";
    let mut p = from_str("equal", text).unwrap();
    let (_, next, dp) = recoil(&mut p);
    let st = &mut p.store;
    for f in dp {
        assert!(st.is_zero(f), "{}", st.to_text(f));
    }
    // Its octupole and current quadrupole vanish too (x_1 = -x_2, equal masses).
    for &(i, j, k) in &IJK {
        assert!(st.is_zero(next.octupole[i][j][k]));
    }
    for row in next.current {
        for f in row {
            assert!(st.is_zero(f));
        }
    }
}

#[test]
fn a_constant_shift_of_the_origin_leaves_the_recoil_alone() {
    // The octupole and the current quadrupole depend on the origin, the momentum the waves
    // carry does not (for a source whose mass dipole does not accelerate and whose angular
    // momentum is constant, as for this orbit): a law, not a closed form.
    let shifted = "[parameters]\nm1 = 1.5\nm2 = 1.0\nR = 20.0\n\
        [define]\nw = 'sqrt((m1 + m2)/R^3)'\n\
        [[body]]\nmass = 'm1'\nposition = ['3 + m2/(m1 + m2)*R*cos(w*t)', \
        '-2 + m2/(m1 + m2)*R*sin(w*t)', '5/7']\n\
        [[body]]\nmass = 'm2'\nposition = ['3 - m1/(m1 + m2)*R*cos(w*t)', \
        '-2 - m1/(m1 + m2)*R*sin(w*t)', '5/7']\n";
    let mut a = from_str("binary", BINARY).unwrap();
    let (_, next_a, dp_a) = recoil(&mut a);
    let mut b = from_str("shifted", shifted).unwrap();
    let s = b.sampling.clone();
    let (_, next_b, dp_b) = recoil(&mut b);
    for i in 0..3 {
        let ta = a.store.to_text(dp_a[i]);
        let fa = expr(&mut b.store, &ta);
        let d = b.store.sub(dp_b[i], fa).unwrap();
        assert!(
            proved_zero(&mut b.store, d, &s),
            "{i}: {} against {ta}",
            b.store.to_text(dp_b[i])
        );
    }
    // The moments themselves do change.
    let oa = a.store.to_text(next_a.octupole[0][0][0]);
    let ob = b.store.to_text(next_b.octupole[0][0][0]);
    assert_ne!(oa, ob);
}

#[test]
fn the_momentum_flux_is_the_flux_of_the_field_through_a_large_sphere() {
    // The Isaacson momentum flux of a TT wave, dP_i/dt = (r^2/(16 pi)) oint n_i
    // (dh_+/dt^2 + dh_x/dt^2) dOmega (common practice), of the exact far-zone field to the
    // next order (quadrupole + octupole + current quadrupole, `field` of both orders) along
    // a symbolic direction, integrated by Gauss-Legendre in cos(theta) and the trapezoid
    // rule in phi, exact for these polynomials in n up to rounding. Bodies on arbitrary
    // (non-Keplerian) trajectories and a moving, spinning rigid body with a tilted axis, so
    // that every term of both formulas is exercised.
    let text = "[parameters]\nr = 2.0\n\
        [[body]]\nmass = '3/2'\nposition = ['cos(t)', '2*sin(t)/3', 't/5']\n\
        [[body]]\nmass = '1'\nposition = ['-t^2/4', '1/2', 'cos(2*t)/3']\n\
        [[body]]\nmass = '2'\nposition = ['1/3', 'sin(t)', '0']\n\
        moments = ['1/2', '1/3', '1/5']\naxis = ['3/5', '0', '4/5']\nangle = '2*t'\n";
    let mut p = from_str("bodies", text).unwrap();
    let (mut rad, mut next, dp) = recoil(&mut p);
    let st = &mut p.store;
    let (n, u, v) = polar_basis(st);
    let r = st.symbol("r");
    let w2 = rad.field(st, (&n, &u, &v), r).unwrap();
    let w3 = next.field(st, (&n, &u, &v), r).unwrap();
    let mut power = Vec::new();
    for (a, b) in [(w2.plus, w3.plus), (w2.cross, w3.cross)] {
        let h = st.add(a, b).unwrap();
        let d = st.diff(h, rad.t).unwrap();
        power.push(st.mul(d, d).unwrap());
    }
    let power = st.sum(&power).unwrap();
    let r2 = st.mul(r, r).unwrap();
    let density = st.mul(power, r2).unwrap();
    let densities: Vec<Form> = n.iter().map(|&ni| st.mul(density, ni).unwrap()).collect();
    // The 1/r field's flux does not depend on r; a small r keeps the expanded polynomials
    // in t - r free of cancellation in floating point.
    let (t0, r0) = (0.37, 2.0);
    let nodes = gauss_legendre(10);
    let phis = 14;
    let mut integral = [0.0; 3];
    for &(x, wx) in &nodes {
        let theta = x.acos();
        for k in 0..phis {
            let phi = std::f64::consts::TAU * k as f64 / phis as f64;
            // The field at the observer at time t0 + r left the source at t0.
            let at = [("t", t0 + r0), ("r", r0), ("th", theta), ("ph", phi)];
            for (slot, &f) in integral.iter_mut().zip(&densities) {
                *slot += wx * std::f64::consts::TAU / phis as f64 * value(st, f, &at);
            }
        }
    }
    let scale: f64 = {
        let want: Vec<f64> = dp.iter().map(|&f| value(st, f, &[("t", t0)])).collect();
        want.iter().map(|w| w.abs()).fold(0.0, f64::max)
    };
    assert!(scale > 1e-6, "a trivial case: {scale}");
    for i in 0..3 {
        let quadrature = integral[i] / (16.0 * std::f64::consts::PI);
        let exact = value(st, dp[i], &[("t", t0)]);
        assert!(
            (quadrature - exact).abs() < 1e-9 * scale,
            "dP_{i}/dt: quadrature {quadrature:e}, formula {exact:e}"
        );
    }
}

#[test]
fn a_rigid_body_has_the_moments_of_point_masses_on_its_principal_axes() {
    // A body reflection-symmetric in its principal planes is, for its moments up to the
    // third, six point masses mu_a at +-e_a (mu_a = D0_a/2, D0_a = (I1 + I2 + I3)/2 - I_a)
    // and the rest of its mass at the centre. Spun about z by W t and carried on a helix,
    // its octupole and current quadrupole from the rigid-body formulas must equal those of
    // the seven point masses, exactly. I = (1/2, 1/3, 1/5): D0 = (1, 11, 19)/60.
    let centre = ["2*cos(t/3)", "2*sin(t/3)", "t/4"];
    let rigid = format!(
        "[parameters]\nW = 0.7\n[[body]]\nmass = '3'\nposition = ['{}', '{}', '{}']\n\
         moments = ['1/2', '1/3', '1/5']\naxis = ['0', '0', '1']\nangle = 'W*t'\n",
        centre[0], centre[1], centre[2]
    );
    let axes = [
        ["cos(W*t)", "sin(W*t)", "0"],
        ["-sin(W*t)", "cos(W*t)", "0"],
        ["0", "0", "1"],
    ];
    let mu = ["1/120", "11/120", "19/120"];
    let mut points = format!(
        "[parameters]\nW = 0.7\n[[body]]\nmass = '3 - 2*(1 + 11 + 19)/120'\n\
         position = ['{}', '{}', '{}']\n",
        centre[0], centre[1], centre[2]
    );
    for (e, m) in axes.iter().zip(mu) {
        for sign in ["+", "-"] {
            points.push_str(&format!(
                "[[body]]\nmass = '{m}'\nposition = ['{} {sign} ({})', '{} {sign} ({})', \
                 '{} {sign} ({})']\n",
                centre[0], e[0], centre[1], e[1], centre[2], e[2]
            ));
        }
    }
    let mut a = from_str("rigid", &rigid).unwrap();
    let mut b = from_str("points", &points).unwrap();
    let s = b.sampling.clone();
    let (ra, na, pa) = recoil(&mut a);
    let (rb, nb, pb) = recoil(&mut b);
    let mut compare = |fa: Form, fb: Form, what: String| {
        let ta = a.store.to_text(fa);
        let f = expr(&mut b.store, &ta);
        let d = b.store.sub(fb, f).unwrap();
        assert!(
            proved_zero(&mut b.store, d, &s),
            "{what}: rigid {ta}, points {}",
            b.store.to_text(fb)
        );
    };
    for &(i, j, k) in &IJK {
        compare(
            na.octupole[i][j][k],
            nb.octupole[i][j][k],
            format!("Q_{i}{j}{k}"),
        );
    }
    for i in 0..3 {
        for j in 0..3 {
            compare(na.current[i][j], nb.current[i][j], format!("S_{i}{j}"));
            compare(
                ra.trace_free[i][j],
                rb.trace_free[i][j],
                format!("Q_{i}{j}"),
            );
        }
        compare(pa[i], pb[i], format!("dP_{i}/dt"));
    }
    assert!(na.rigid && !nb.rigid);
}

#[test]
fn a_spinning_star_at_the_origin_has_no_octupole_nor_current_quadrupole() {
    let text = "[parameters]\nI1 = 0.5\nI2 = 0.49\nI3 = 0.52\nW = 0.05\n[[body]]\nmass = 1\n\
                moments = ['I1', 'I2', 'I3']\naxis = ['0', '0', '1']\nangle = 'W*t'\n";
    let mut p = from_str("star", text).unwrap();
    let (_, next, dp) = recoil(&mut p);
    let st = &mut p.store;
    for &(i, j, k) in &IJK {
        assert!(st.is_zero(next.octupole[i][j][k]));
    }
    for f in next.current.iter().flatten().chain(&dp) {
        assert!(st.is_zero(*f), "{}", st.to_text(*f));
    }
}

#[test]
fn a_point_mass_on_a_circle_has_the_current_quadrupole_of_its_definition() {
    // One mass m at x = (a cos wt, a sin wt, h): x x v = a w (-h cos wt, -h sin wt, a), so
    // J_ij = m x_i (x x v)_j has trace 0 and S_ij = (J_ij + J_ji)/2, written out by hand.
    let text = "[parameters]\nm = 1.0\na = 2.0\nh = 0.5\nw = 0.3\n\
                [[body]]\nmass = 'm'\nposition = ['a*cos(w*t)', 'a*sin(w*t)', 'h']\n";
    let mut p = from_str("circle", text).unwrap();
    let s = p.sampling.clone();
    let st = &mut p.store;
    let next = NextOrder::new(st, &p.bodies, "t").unwrap();
    let want = [
        [
            "-m*a^2*w*h*cos(w*t)^2",
            "-m*a^2*w*h*cos(w*t)*sin(w*t)",
            "m*a^2*w*(a^2 - h^2)*cos(w*t)/(2*a)",
        ],
        [
            "-m*a^2*w*h*cos(w*t)*sin(w*t)",
            "-m*a^2*w*h*sin(w*t)^2",
            "m*a^2*w*(a^2 - h^2)*sin(w*t)/(2*a)",
        ],
        [
            "m*a^2*w*(a^2 - h^2)*cos(w*t)/(2*a)",
            "m*a^2*w*(a^2 - h^2)*sin(w*t)/(2*a)",
            "m*a^2*w*h",
        ],
    ];
    // Trace of the symmetric part: -m a^2 w h + m a^2 w h = 0, so S = sym(J) here.
    for i in 0..3 {
        for j in 0..3 {
            let f = expr(st, want[i][j]);
            let d = st.sub(next.current[i][j], f).unwrap();
            assert!(
                proved_zero(st, d, &s),
                "S_{i}{j} = {}",
                st.to_text(next.current[i][j])
            );
        }
    }
    // Q_zzz = m (h^3 - (3/5) h |x|^2) with |x|^2 = a^2 + h^2 (STF by the trace formula).
    let f = expr(st, "m*(h^3 - 3*h*(a^2 + h^2)/5)");
    let d = st.sub(next.octupole[2][2][2], f).unwrap();
    assert!(
        proved_zero(st, d, &s),
        "{}",
        st.to_text(next.octupole[2][2][2])
    );
}

#[test]
fn moments_that_change_in_time_are_refused_with_the_reason() {
    let text = "[parameters]\nW = 0.05\n[[body]]\nmass = 1\n\
                moments = ['1/2 + t/100', '1/3', '1/5']\nangle = 'W*t'\n";
    let mut p = from_str("growing", text).unwrap();
    let t = p.store.symbol_kernel("t");
    let why = refusal(&mut p.store, &p.bodies, t).expect("refused");
    assert!(
        why.contains("1/2 + t/100") && why.contains("not rigid"),
        "{why}"
    );
}

#[test]
fn the_next_order_waveform_of_a_circular_binary_is_the_published_one() {
    // Blanchet, Iyer, Will & Wiseman 1996, Class. Quantum Grav. 13, 575, the Newtonian and
    // 0.5PN terms of the circular-orbit waveform (from memory):
    // h = (2 mu x/r) [H^0 + x^(1/2) H^(1/2)], x = (M w)^(2/3) = M/R,
    // H^0_+ = -(1 + c^2) cos 2 phi,  H^0_x = -2 c sin 2 phi,
    // H^(1/2)_+ = -(s/8) (dm/M) [(5 + c^2) cos phi - 9 (1 + c^2) cos 3 phi],
    // H^(1/2)_x = -(3/4) s c (dm/M) [sin phi - 3 sin 3 phi],
    // c = cos i, s = sin i, dm = m1 - m2, with the orbit seen along n = (0, sin i, cos i),
    // the basis u = x (the line of nodes), v = (0, cos i, -sin i), and phi = w (t - r) the
    // phase of m1 from that line. mu x = m1 m2/R and mu x^(3/2) = m1 m2 w.
    let mut p = from_str("binary", BINARY).unwrap();
    let s = p.sampling.clone();
    let st = &mut p.store;
    let mut rad = Radiation::new(st, &p.bodies, "t").unwrap();
    let mut next = NextOrder::new(st, &p.bodies, "t").unwrap();
    let (n, u, v) = inclined_basis(st);
    let r = st.symbol("r");
    let w2 = rad.field(st, (&n, &u, &v), r).unwrap();
    let w3 = next.field(st, (&n, &u, &v), r).unwrap();
    let phi = "sqrt((m1 + m2)/R^3)*(t - r)";
    let wants = [
        (
            w2.plus,
            format!("(2*m1*m2/(R*r))*(-(1 + cos(iota)^2)*cos(2*{phi}))"),
        ),
        (
            w2.cross,
            format!("(2*m1*m2/(R*r))*(-2*cos(iota)*sin(2*{phi}))"),
        ),
        (
            w3.plus,
            format!(
                "(2*m1*m2*sqrt((m1 + m2)/R^3)/r)*(-(sin(iota)/8)*((m1 - m2)/(m1 + m2))*\
                 ((5 + cos(iota)^2)*cos({phi}) - 9*(1 + cos(iota)^2)*cos(3*{phi})))"
            ),
        ),
        (
            w3.cross,
            format!(
                "(2*m1*m2*sqrt((m1 + m2)/R^3)/r)*(-(3/4)*sin(iota)*cos(iota)*\
                 ((m1 - m2)/(m1 + m2))*(sin({phi}) - 3*sin(3*{phi})))"
            ),
        ),
    ];
    for (got, want) in wants {
        let f = expr(st, &want);
        let d = st.sub(got, f).unwrap();
        assert!(proved_zero(st, d, &s), "{want}: got {}", st.to_text(got));
    }
}
