//! The 3+1 data and constraints: exact identities with the field equations, the linear-wave
//! testbed's K, and zero constraints for the worked examples.

use super::*;
use crate::canon::Names;
use crate::tensor::COMPONENTS;

fn form(store: &mut Store, s: &str) -> Form {
    let e = crate::parse::parse(s).unwrap();
    store.build(&e, &Names::free()).unwrap()
}

/// Every component a quadratic in (t, x, y, z) whose 15 coefficients are independent
/// symbols: at any point every value, first and second derivative of h is independent, so an
/// identity in second derivatives that holds for this h holds for every h.
fn generic_quadratic(store: &mut Store) -> Sym4 {
    let c = ["t", "x", "y", "z"];
    let mut monomials: Vec<String> = vec!["1".into()];
    monomials.extend(c.iter().map(|s| s.to_string()));
    for i in 0..4 {
        for j in i..4 {
            monomials.push(format!("{}*{}", c[i], c[j]));
        }
    }
    let mut h = [[store.zero(); 4]; 4];
    for (mu, nu) in COMPONENTS {
        let name = crate::tensor::component_name(mu, nu);
        let terms: Vec<String> = monomials
            .iter()
            .enumerate()
            .map(|(k, m)| format!("c_{name}_{k}*{m}"))
            .collect();
        let f = form(store, &terms.join(" + "));
        h[mu][nu] = f;
        h[nu][mu] = f;
    }
    h
}

fn generic_source(store: &mut Store) -> Sym4 {
    let mut t = [[store.zero(); 4]; 4];
    for (mu, nu) in COMPONENTS {
        let name = crate::tensor::component_name(mu, nu);
        let f = form(store, &format!("T_{name}*(1 + x*t) + y"));
        t[mu][nu] = f;
        t[nu][mu] = f;
    }
    t
}

#[test]
fn constraints_are_components_of_the_field_equations_for_every_h() {
    // Gauss and Codazzi at first order: H = 2 (G_tt - 8 pi T_tt), M_i = -(G_ti - 8 pi T_ti).
    let mut st = Store::new();
    let h = generic_quadratic(&mut st);
    let t = generic_source(&mut st);
    let mut lin = Linearized::new(&mut st, h);
    let c = constraints(&mut st, &mut lin, Some(&t)).unwrap();
    let g = lin.einstein(&mut st).unwrap();
    let pi = st.pi();
    let eight_pi = st.scale(pi, &Coeff::int(8)).unwrap();
    let field = |st: &mut Store, mu: usize, nu: usize| {
        let s = st.mul(eight_pi, t[mu][nu]).unwrap();
        st.sub(g[mu][nu], s).unwrap()
    };
    let e00 = field(&mut st, 0, 0);
    let twice = st.scale(e00, &Coeff::int(2)).unwrap();
    let d = st.sub(c.hamiltonian, twice).unwrap();
    assert!(st.is_zero(d), "H - 2(G_tt - 8 pi T_tt) = {}", st.to_text(d));
    for i in 0..3 {
        let e = field(&mut st, 0, i + 1);
        let d = st.add(c.momentum[i], e).unwrap();
        assert!(
            st.is_zero(d),
            "M_{} + (G_t{} - 8 pi T) = {}",
            SPATIAL[i],
            SPATIAL[i],
            st.to_text(d)
        );
    }
    // And the identities are not empty: the residuals themselves are not zero.
    assert!(!st.is_zero(c.hamiltonian));
    assert!(c.momentum.iter().all(|m| !st.is_zero(*m)));
}

#[test]
fn adm_data_of_a_generic_perturbation() {
    let mut st = Store::new();
    let h = generic_quadratic(&mut st);
    let mut lin = Linearized::new(&mut st, h);
    let a = adm(&mut st, &mut lin).unwrap();
    // alpha = 1 - h_tt/2: 2 (1 - alpha) = h_tt.
    let one = st.one();
    let d = st.sub(one, a.alpha).unwrap();
    let d = st.scale(d, &Coeff::int(2)).unwrap();
    let d = st.sub(d, h[0][0]).unwrap();
    assert!(st.is_zero(d));
    assert_eq!(a.beta, [h[0][1], h[0][2], h[0][3]]);
    // K_xy = -(1/2)(d_t h_xy - d_x h_ty - d_y h_tx), written out by hand.
    let kxy = form(
        &mut st,
        "-(c_xy_1 + 2*c_xy_5*t + c_xy_6*x + c_xy_7*y + c_xy_8*z \
          - (c_ty_2 + c_ty_6*t + 2*c_ty_9*x + c_ty_10*y + c_ty_11*z) \
          - (c_tx_3 + c_tx_7*t + c_tx_10*x + 2*c_tx_12*y + c_tx_13*z))/2",
    );
    let d = st.sub(a.k[0][1], kxy).unwrap();
    assert!(st.is_zero(d), "K_xy differs by {}", st.to_text(d));
    assert_eq!(a.k[0][1], a.k[1][0]);
}

#[test]
fn linear_wave_testbed_extrinsic_curvature() {
    // Alcubierre et al. 2004 (Class. Quantum Grav. 21, 589), linear wave: b = A sin(2 pi (x -
    // t)/d), gamma_yy = 1 + b, gamma_zz = 1 - b, alpha = 1, beta = 0. With the MTW/York sign
    // K_yy = -(1/2) d_t b = (pi A/d) cos(2 pi (x - t)/d) (checks sheet, sec. 5a).
    let mut st = Store::new();
    let b = form(&mut st, "A*sin(2*pi*(x - t)/d)");
    let nb = st.neg(b).unwrap();
    let mut h = [[st.zero(); 4]; 4];
    h[2][2] = b;
    h[3][3] = nb;
    let mut lin = Linearized::new(&mut st, h);
    let a = adm(&mut st, &mut lin).unwrap();
    let expect = form(&mut st, "pi*A/d*cos(2*pi*(x - t)/d)");
    let d = st.sub(a.k[1][1], expect).unwrap();
    assert!(st.is_zero(d), "K_yy - expected = {}", st.to_text(d));
    let d = st.add(a.k[2][2], expect).unwrap();
    assert!(st.is_zero(d), "K_zz + expected = {}", st.to_text(d));
    let one = st.one();
    let d = st.sub(a.alpha, one).unwrap();
    assert!(st.is_zero(d));
    let c = constraints(&mut st, &mut lin, None).unwrap();
    assert!(st.is_zero(c.hamiltonian));
    assert!(c.momentum.iter().all(|m| st.is_zero(*m)));
}

#[test]
fn worked_solutions_satisfy_the_constraints_exactly() {
    // Every worked example whose field equations hold (vacuum or with its source) has zero
    // constraint residuals; the deliberately wrong ones do not.
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("worked");
    let solutions = [
        "oblique_wave.toml",
        "lorenz_wave.toml",
        "static_mass.toml",
        "vibrating_rod.toml",
        "pure_gauge.toml",
        "uniform_ball.toml",
    ];
    for name in solutions {
        let mut p = crate::problem::read(&root.join(name)).unwrap();
        let mut lin = Linearized::new(&mut p.store, p.h);
        let c = constraints(&mut p.store, &mut lin, p.source.as_ref()).unwrap();
        assert!(
            p.store.is_zero(c.hamiltonian),
            "{name}: H = {}",
            p.store.to_text(c.hamiltonian)
        );
        for (i, m) in c.momentum.iter().enumerate() {
            assert!(
                p.store.is_zero(*m),
                "{name}: M_{} = {}",
                SPATIAL[i],
                p.store.to_text(*m)
            );
        }
    }
    // The uniform ball's Hamiltonian constraint is not empty without its source: the source
    // term is what makes it vanish.
    let mut p = crate::problem::read(&root.join("uniform_ball.toml")).unwrap();
    let mut lin = Linearized::new(&mut p.store, p.h);
    let c = constraints(&mut p.store, &mut lin, None).unwrap();
    assert!(!p.store.is_zero(c.hamiltonian));
    // wrong_sign_wave.toml sources G_tt = G_zz = -G_tz, so H and M_z fail.
    let mut p = crate::problem::read(&root.join("wrong_sign_wave.toml")).unwrap();
    let mut lin = Linearized::new(&mut p.store, p.h);
    let c = constraints(&mut p.store, &mut lin, None).unwrap();
    assert!(!p.store.is_zero(c.hamiltonian));
    assert!(!p.store.is_zero(c.momentum[2]));
}
