//! The curved-background layer against the flat layer (Minkowski in Cartesian coordinates
//! must give the same canonical forms) and against published solutions (sources beside each).

use super::*;
use crate::canon::Names;
use crate::tensor::{COORDS, Linearized};

fn form(store: &mut Store, s: &str) -> Form {
    let e = crate::parse::parse(s).unwrap();
    store.build(&e, &Names::free()).unwrap()
}

fn sym(store: &mut Store, comps: &[(usize, usize, &str)]) -> Sym4 {
    let z = store.zero();
    let mut m = [[z; 4]; 4];
    for &(a, b, t) in comps {
        let f = form(store, t);
        m[a][b] = f;
        m[b][a] = f;
    }
    m
}

fn coords(store: &mut Store, names: [&str; 4]) -> [KernelId; 4] {
    names.map(|n| store.symbol_kernel(n))
}

/// Equal as functions: forms with denominators are kept factored, so equality is a zero
/// difference, not an equal id.
fn same(store: &mut Store, a: Form, text: &str) -> bool {
    let b = form(store, text);
    let d = store.sub(a, b).unwrap();
    store.is_zero(d)
}

fn all_zero(store: &Store, m: &Sym4) -> bool {
    m.iter().flatten().all(|f| store.is_zero(*f))
}

const SPHERICAL: [&str; 4] = ["t", "r", "th", "ph"];

fn minkowski_spherical(store: &mut Store) -> Background {
    let c = coords(store, SPHERICAL);
    let g = sym(
        store,
        &[
            (0, 0, "-1"),
            (1, 1, "1"),
            (2, 2, "r^2"),
            (3, 3, "r^2*sin(th)^2"),
        ],
    );
    let z = store.zero();
    Background::new(store, c, g, z, None).unwrap()
}

fn schwarzschild(store: &mut Store) -> Background {
    let c = coords(store, SPHERICAL);
    let g = sym(
        store,
        &[
            (0, 0, "-(1 - 2*M/r)"),
            (1, 1, "1/(1 - 2*M/r)"),
            (2, 2, "r^2"),
            (3, 3, "r^2*sin(th)^2"),
        ],
    );
    let z = store.zero();
    Background::new(store, c, g, z, None).unwrap()
}

#[test]
fn minkowski_in_cartesian_coordinates_gives_the_flat_forms() {
    // The same canonical forms as the flat layer, term for term (common practice: with
    // Gamma = 0 every covariant formula reduces to the flat one).
    let mut st = Store::new();
    let c = coords(&mut st, COORDS);
    let eta = sym(
        &mut st,
        &[(0, 0, "-1"), (1, 1, "1"), (2, 2, "1"), (3, 3, "1")],
    );
    let z = st.zero();
    let mut bg = Background::new(&mut st, c, eta, z, None).unwrap();
    let h = sym(
        &mut st,
        &[
            (0, 0, "x^2*sin(t - y)"),
            (0, 2, "z*exp(x)"),
            (1, 1, "t^3*y"),
            (1, 3, "cos(x*z)"),
            (2, 3, "F(t - x)"),
        ],
    );
    let mut lin = Linearized::new(&mut st, h);
    let mut p = Perturbation::new(h);
    let g_flat = lin.einstein(&mut st).unwrap();
    let g_bg = p.field_residual(&mut st, &mut bg, None).unwrap();
    assert_eq!(g_flat, g_bg);
    assert_eq!(
        lin.lorenz(&mut st).unwrap(),
        p.lorenz(&mut st, &bg).unwrap()
    );
    let r_flat = lin.riemann(&mut st).unwrap();
    let r_bg = p.riemann(&mut st, &mut bg).unwrap();
    assert_eq!(r_flat, r_bg);
    assert_eq!(lin.trace(&mut st).unwrap(), p.trace(&mut st, &bg).unwrap());
}

#[test]
fn flat_space_in_spherical_coordinates_is_flat() {
    let mut st = Store::new();
    let mut bg = minkowski_spherical(&mut st);
    assert!(
        bg.riemann_down(&mut st)
            .unwrap()
            .iter()
            .all(|(_, f)| st.is_zero(*f))
    );
    let e = bg.equations(&mut st).unwrap();
    assert!(all_zero(&st, &e));
}

#[test]
fn point_mass_in_spherical_coordinates() {
    // checks-backgrounds.md §1a (SymPy-verified): h_iso = (2M/r) diag(1, 1, r^2, r^2 sin^2)
    // solves the vacuum equations, is in Lorenz gauge, and dR_trtr = -2M/r^3.
    let mut st = Store::new();
    let mut bg = minkowski_spherical(&mut st);
    let h = sym(
        &mut st,
        &[
            (0, 0, "2*M/r"),
            (1, 1, "2*M/r"),
            (2, 2, "2*M*r"),
            (3, 3, "2*M*r*sin(th)^2"),
        ],
    );
    let mut p = Perturbation::new(h);
    let e = p.field_residual(&mut st, &mut bg, None).unwrap();
    assert!(all_zero(&st, &e));
    let l = p.lorenz(&mut st, &bg).unwrap();
    assert!(l.iter().all(|f| st.is_zero(*f)));
    let r = p.riemann(&mut st, &mut bg).unwrap();
    let trtr = r.iter().find(|(i, _)| *i == [0, 1, 0, 1]).unwrap().1;
    assert!(same(&mut st, trtr, "-2*M/r^3"), "{}", st.to_text(trtr));
    // h_S = diag(2M/r, 2M/r, 0, 0): a solution, not in Lorenz gauge: L_r = 2M/r^2 (§1a).
    let hs = sym(&mut st, &[(0, 0, "2*M/r"), (1, 1, "2*M/r")]);
    let mut ps = Perturbation::new(hs);
    let e = ps.field_residual(&mut st, &mut bg, None).unwrap();
    assert!(all_zero(&st, &e));
    let l = ps.lorenz(&mut st, &bg).unwrap();
    assert!(same(&mut st, l[1], "2*M/r^2"), "{}", st.to_text(l[1]));
    // The spoiled h_iso (h_tt -> 2M/r^2): E_rr = -2M(r - 2)/r^4 (§1a).
    let bad = sym(
        &mut st,
        &[
            (0, 0, "2*M/r^2"),
            (1, 1, "2*M/r"),
            (2, 2, "2*M*r"),
            (3, 3, "2*M*r*sin(th)^2"),
        ],
    );
    let mut pb = Perturbation::new(bad);
    let e = pb.field_residual(&mut st, &mut bg, None).unwrap();
    assert!(
        same(&mut st, e[1][1], "-2*M*(r - 2)/r^4"),
        "{}",
        st.to_text(e[1][1])
    );
    assert!(
        same(&mut st, e[2][2], "M*(r - 4)/r^2"),
        "{}",
        st.to_text(e[2][2])
    );
}

#[test]
fn plummer_sphere_fixes_the_sign() {
    // checks-backgrounds.md §1c: h = -2 Phi diag(1, 1, r^2, r^2 sin^2), Phi = -M/sqrt(r^2+b^2),
    // dT_tt = rho = 3 M b^2 / (4 pi (r^2+b^2)^(5/2)) (Plummer 1911): E = 0 exactly.
    let mut st = Store::new();
    let mut bg = minkowski_spherical(&mut st);
    let phi2 = "2*M/sqrt(r^2 + b^2)";
    let h = sym(
        &mut st,
        &[
            (0, 0, phi2),
            (1, 1, phi2),
            (2, 2, &format!("r^2*{phi2}")),
            (3, 3, &format!("r^2*sin(th)^2*{phi2}")),
        ],
    );
    let dt = sym(&mut st, &[(0, 0, "3*M*b^2/(4*pi*(r^2 + b^2)^(5/2))")]);
    let mut p = Perturbation::new(h);
    let e = p.field_residual(&mut st, &mut bg, Some(&dt)).unwrap();
    assert!(all_zero(&st, &e), "{}", st.to_text(e[0][0]));
    // The opposite sign of the source fails.
    let minus = sym(&mut st, &[(0, 0, "-3*M*b^2/(4*pi*(r^2 + b^2)^(5/2))")]);
    let e = p.field_residual(&mut st, &mut bg, Some(&minus)).unwrap();
    assert!(!st.is_zero(e[0][0]));
}

#[test]
fn schwarzschild_perturbations() {
    // checks-backgrounds.md §2 (Regge & Wheeler 1957; SymPy-verified): the background is
    // vacuum; the mass perturbation and slow rotation solve; the spoiled rotation does not.
    let mut st = Store::new();
    let mut bg = schwarzschild(&mut st);
    let e = bg.equations(&mut st).unwrap();
    assert!(all_zero(&st, &e));
    let mass = sym(
        &mut st,
        &[(0, 0, "2*dM/r"), (1, 1, "2*dM/(r*(1 - 2*M/r)^2)")],
    );
    let mut p = Perturbation::new(mass);
    let e = p.field_residual(&mut st, &mut bg, None).unwrap();
    assert!(all_zero(&st, &e));
    // L_r = 2 dM / (r (r - 2M)) (§2a).
    let l = p.lorenz(&mut st, &bg).unwrap();
    assert!(
        same(&mut st, l[1], "2*dM/(r*(r - 2*M))"),
        "{}",
        st.to_text(l[1])
    );
    let rot = sym(&mut st, &[(0, 3, "-2*J*sin(th)^2/r")]);
    let mut p = Perturbation::new(rot);
    let e = p.field_residual(&mut st, &mut bg, None).unwrap();
    assert!(all_zero(&st, &e));
    let spoiled = sym(&mut st, &[(0, 3, "-2*J*sin(th)^2/r^2")]);
    let mut p = Perturbation::new(spoiled);
    let e = p.field_residual(&mut st, &mut bg, None).unwrap();
    assert!(!all_zero(&st, &e));
}

#[test]
fn a_lie_derivative_of_the_background_is_pure_gauge_and_solves() {
    // checks-backgrounds.md §5.1 (common practice): h = D_a xi_b + D_b xi_a solves the
    // vacuum equations on a vacuum background, and its gauge residual vanishes.
    let mut st = Store::new();
    let mut bg = schwarzschild(&mut st);
    let xi = [
        form(&mut st, "F(t - r)*cos(th)"),
        form(&mut st, "r*sin(th)*t"),
        form(&mut st, "r^2*cos(ph)"),
        form(&mut st, "0"),
    ];
    let zero_h = [[st.zero(); 4]; 4];
    let p0 = Perturbation::new(zero_h);
    let minus = p0.gauge_residual(&mut st, &bg, &xi).unwrap();
    let mut h = minus;
    for row in &mut h {
        for f in row.iter_mut() {
            *f = st.neg(*f).unwrap();
        }
    }
    let mut p = Perturbation::new(h);
    let gr = p.gauge_residual(&mut st, &bg, &xi).unwrap();
    assert!(all_zero(&st, &gr));
    let e = p.field_residual(&mut st, &mut bg, None).unwrap();
    assert!(all_zero(&st, &e));
}

#[test]
fn de_sitter_needs_its_cosmological_constant() {
    // de Sitter in flat slicing, gbar = a^2 (-d eta^2 + dx^2), a = -1/(H eta): Gbar + Lambda
    // gbar = 0 with Lambda = 3 H^2 (common practice); with Lambda = 0 it fails.
    let mut st = Store::new();
    let c = coords(&mut st, ["eta", "x", "y", "z"]);
    let a2 = "1/(H^2*eta^2)";
    let g = sym(
        &mut st,
        &[
            (0, 0, &format!("-{a2}")),
            (1, 1, a2),
            (2, 2, a2),
            (3, 3, a2),
        ],
    );
    let lambda = form(&mut st, "3*H^2");
    let mut bg = Background::new(&mut st, c, g, lambda, None).unwrap();
    let e = bg.equations(&mut st).unwrap();
    assert!(all_zero(&st, &e));
    let z = st.zero();
    let mut wrong = Background::new(&mut st, c, g, z, None).unwrap();
    let e = wrong.equations(&mut st).unwrap();
    assert!(!all_zero(&st, &e));
}

#[test]
fn a_non_diagonal_metric_is_inverted_exactly() {
    let mut st = Store::new();
    let g = sym(
        &mut st,
        &[
            (0, 0, "-1 + x^2"),
            (0, 1, "x*y"),
            (1, 1, "1"),
            (2, 2, "1 + y^2"),
            (2, 3, "z"),
            (3, 3, "2"),
        ],
    );
    let inv = inverse(&mut st, &g).unwrap();
    for a in 0..4 {
        for b in 0..4 {
            let pairs: Vec<(Form, Form)> = (0..4).map(|c| (g[a][c], inv[c][b])).collect();
            let v = dot(&mut st, &pairs).unwrap();
            let want = if a == b { st.one() } else { st.zero() };
            assert_eq!(v, want, "({a},{b}): {}", st.to_text(v));
        }
    }
}
