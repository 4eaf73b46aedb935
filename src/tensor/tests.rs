//! Tests of the tensor layer against textbook identities (sources named beside each).

use super::*;
use crate::canon::Names;

fn form(store: &mut Store, s: &str) -> Form {
    let e = crate::parse::parse(s).unwrap();
    store.build(&e, &Names::free()).unwrap()
}

fn sym4(store: &mut Store, comps: &[(&str, &str)]) -> Sym4 {
    let mut h = zeros(store);
    for (k, v) in comps {
        let idx: Vec<usize> = k
            .chars()
            .map(|c| COORDS.iter().position(|n| n.starts_with(c)).unwrap())
            .collect();
        let f = form(store, v);
        h[idx[0]][idx[1]] = f;
        h[idx[1]][idx[0]] = f;
    }
    h
}

fn all_zero(store: &Store, a: &Sym4) -> bool {
    a.iter().flatten().all(|f| store.is_zero(*f))
}

/// A generic polynomial perturbation: every component a different cubic.
fn generic(store: &mut Store) -> Sym4 {
    sym4(
        store,
        &[
            ("tt", "t^2*x + 3*y*z - x^3"),
            ("tx", "t*y^2 - 2*x*z + z^3"),
            ("ty", "x*y*z + t^3/2"),
            ("tz", "t*x*z - y^2"),
            ("xx", "x^2*y - t*z^2"),
            ("xy", "t^2*z + 5*x*y"),
            ("xz", "y^3 - t*x*y"),
            ("yy", "z^2*x + t*y"),
            ("yz", "t*x^2 - z*y^2"),
            ("zz", "x*y*t + z^3/3"),
        ],
    )
}

#[test]
fn riemann_symmetries_hold() {
    // Common practice: R_abcd = -R_bacd = R_cdab and the first Bianchi identity.
    let mut st = Store::new();
    let h = generic(&mut st);
    let mut l = Linearized::new(&mut st, h);
    let idx = [0, 1, 2, 3];
    let r = l.riemann_component(&mut st, idx).unwrap();
    let r_swapped = l.riemann_component(&mut st, [1, 0, 2, 3]).unwrap();
    let sum = st.add(r, r_swapped).unwrap();
    assert!(st.is_zero(sum));
    let pair = l.riemann_component(&mut st, [2, 3, 0, 1]).unwrap();
    assert_eq!(r, pair);
    let a = l.riemann_component(&mut st, [0, 1, 2, 3]).unwrap();
    let b = l.riemann_component(&mut st, [0, 2, 3, 1]).unwrap();
    let c = l.riemann_component(&mut st, [0, 3, 1, 2]).unwrap();
    let s = st.add(a, b).unwrap();
    let s = st.add(s, c).unwrap();
    assert!(st.is_zero(s));
    assert_eq!(riemann_independent().len(), 20);
}

#[test]
fn ricci_matches_closed_form() {
    // Carroll (2004), Spacetime and Geometry, eq. (7.6) (number from memory):
    // R_mn = (1/2)(d_s d_m h^s_n + d_s d_n h^s_m - d_m d_n h - box h_mn).
    let mut st = Store::new();
    let h = generic(&mut st);
    let mut l = Linearized::new(&mut st, h);
    let ricci = l.ricci(&mut st).unwrap();
    let tr = l.trace(&mut st).unwrap();
    let boxh = box_of(&mut st, &h, &l.coords).unwrap();
    for m in 0..4 {
        for n in 0..4 {
            let mut acc = st.zero();
            for s in 0..4 {
                let a = l.ddh(&mut st, s, m, s, n).unwrap();
                let b = l.ddh(&mut st, s, n, s, m).unwrap();
                let ab = st.add(a, b).unwrap();
                let ab = st.scale(ab, &Coeff::int(ETA[s])).unwrap();
                acc = st.add(acc, ab).unwrap();
            }
            let dtr = st.diff(tr, l.coords[m]).unwrap();
            let ddtr = st.diff(dtr, l.coords[n]).unwrap();
            acc = st.sub(acc, ddtr).unwrap();
            acc = st.sub(acc, boxh[m][n]).unwrap();
            let half = st
                .scale(
                    acc,
                    &Coeff::rational(crate::canon::Q::new(1.into(), 2.into())),
                )
                .unwrap();
            let diff = st.sub(half, ricci[m][n]).unwrap();
            assert!(st.is_zero(diff), "R_{m}{n}");
        }
    }
}

#[test]
fn einstein_matches_trace_reversed_form() {
    // Flanagan & Hughes (2005), New J. Phys. 7, 204, eq. (2.6) (number from memory):
    // G_mn = -(1/2)[box hbar_mn + eta_mn d^a d^b hbar_ab - d^a d_m hbar_na - d^a d_n hbar_ma].
    let mut st = Store::new();
    let h = generic(&mut st);
    let mut l = Linearized::new(&mut st, h);
    let g = l.einstein(&mut st).unwrap();
    let hb = l.hbar(&mut st).unwrap();
    let boxhb = box_of(&mut st, &hb, &l.coords).unwrap();
    let div = divergence(&mut st, &hb, &l.coords).unwrap();
    let mut ddiv = st.zero();
    for (b, v) in div.iter().enumerate() {
        let d = st.diff(*v, l.coords[b]).unwrap();
        let d = st.scale(d, &Coeff::int(ETA[b])).unwrap();
        ddiv = st.add(ddiv, d).unwrap();
    }
    for m in 0..4 {
        for n in 0..4 {
            let mut acc = boxhb[m][n];
            if m == n {
                let t = st.scale(ddiv, &Coeff::int(ETA[m])).unwrap();
                acc = st.add(acc, t).unwrap();
            }
            let a = st.diff(div[n], l.coords[m]).unwrap();
            let b = st.diff(div[m], l.coords[n]).unwrap();
            acc = st.sub(acc, a).unwrap();
            acc = st.sub(acc, b).unwrap();
            let expected = st
                .scale(
                    acc,
                    &Coeff::rational(crate::canon::Q::new((-1).into(), 2.into())),
                )
                .unwrap();
            let d = st.sub(expected, g[m][n]).unwrap();
            assert!(st.is_zero(d), "G_{m}{n}");
        }
    }
}

#[test]
fn pure_gauge_has_vanishing_riemann() {
    // Linearized Riemann is gauge invariant (Carroll 2004, sec. 7.1; common practice):
    // h = d_m xi_n + d_n xi_m for arbitrary xi gives R = 0.
    let mut st = Store::new();
    let xi =
        ["A(t - 2*x + y)", "B(x*y + z)", "C(t*z)", "D(t + x + y + z)"].map(|s| form(&mut st, s));
    let coords = COORDS.map(|c| st.symbol_kernel(c));
    let mut h = zeros(&st);
    for m in 0..4 {
        for n in 0..4 {
            let a = st.diff(xi[n], coords[m]).unwrap();
            let b = st.diff(xi[m], coords[n]).unwrap();
            h[m][n] = st.add(a, b).unwrap();
        }
    }
    let mut l = Linearized::new(&mut st, h);
    for (idx, r) in l.riemann(&mut st).unwrap() {
        assert!(st.is_zero(r), "R_{}", index_name(&idx));
    }
}

#[test]
fn tt_plane_wave_solves_vacuum_equations() {
    // Misner, Thorne & Wheeler (1973), sec. 35.6 (common practice): h_xx = -h_yy = F(t - z),
    // h_xy = G(t - z) is a vacuum solution in TT gauge.
    let mut st = Store::new();
    let h = sym4(
        &mut st,
        &[("xx", "F(t - z)"), ("yy", "-F(t - z)"), ("xy", "G(t - z)")],
    );
    let mut l = Linearized::new(&mut st, h);
    let g = l.einstein(&mut st).unwrap();
    assert!(all_zero(&st, &g));
    assert!(l.lorenz(&mut st).unwrap().iter().all(|f| st.is_zero(*f)));
    assert!((0..4).all(|mu| st.is_zero(l.h[0][mu])));
    let tr = l.spatial_trace(&mut st).unwrap();
    assert!(st.is_zero(tr));
    for j in 0..4 {
        let d = l.spatial_divergence(&mut st, j).unwrap();
        assert!(st.is_zero(d));
    }
    // But it is not pure gauge: R_txtx = -(1/2) F''.
    let r = l.riemann_component(&mut st, [0, 1, 0, 1]).unwrap();
    let expected = form(&mut st, "-F''(t - z)/2");
    assert_eq!(r, expected);
}

#[test]
fn static_weak_field_is_vacuum_away_from_the_mass() {
    // Weak-field Schwarzschild in isotropic form, h_tt = h_ii = 2M/r (Carroll 2004, eq. 7.22;
    // number from memory): G = 0 for r > 0.
    let mut st = Store::new();
    let r = "sqrt(x^2 + y^2 + z^2)";
    let v = format!("2*M/{r}");
    let h = sym4(&mut st, &[("tt", &v), ("xx", &v), ("yy", &v), ("zz", &v)]);
    let mut l = Linearized::new(&mut st, h);
    let g = l.einstein(&mut st).unwrap();
    assert!(all_zero(&st, &g));
}

#[test]
fn uniform_ball_interior_has_the_right_density() {
    // Newtonian limit (common practice): h_tt = h_ii = -2 Phi with the interior potential of a
    // uniform ball Phi = -M (3 R^2 - r^2) / (2 R^3) gives G_tt = 8 pi rho, rho = 3M/(4 pi R^3),
    // and the spatial components vanish at first order.
    let mut st = Store::new();
    let v = "M*(3*R^2 - (x^2 + y^2 + z^2))/R^3";
    let h = sym4(&mut st, &[("tt", v), ("xx", v), ("yy", v), ("zz", v)]);
    let mut l = Linearized::new(&mut st, h);
    let g = l.einstein(&mut st).unwrap();
    let expected = form(&mut st, "8*pi*3*M/(4*pi*R^3)");
    assert_eq!(g[0][0], expected);
    for i in 1..4 {
        for j in 1..4 {
            assert!(st.is_zero(g[i][j]));
        }
    }
}

#[test]
fn component_names() {
    assert_eq!(component_name(0, 3), "tz");
    assert_eq!(component_name(3, 0), "zt");
    assert_eq!(component_name(4, 0), "?t");
    let names: Vec<String> = COMPONENTS
        .iter()
        .map(|&(a, b)| component_name(a, b))
        .collect();
    assert_eq!(names.join(" "), "tt tx ty tz xx xy xz yy yz zz");
}
