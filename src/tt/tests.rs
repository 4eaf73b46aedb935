//! Exact tests of the projector algebra, the directions and the polarizations.
//!
//! Outside checks: Lambda is a projector on symmetric tensors, transverse and traceless, of
//! rank 2 (Maggiore 2007 vol. 1 sec. 1.2, from memory; common practice); h_+ and h_x of a
//! wave along z are h_xx and h_xy (MTW 1973 sec. 35.6, from memory); the two numerical
//! values of the shared check sheet, item 2a.

use super::*;
use crate::canon::{Names, Q};
use num_traits::{One, Zero};

fn q(n: i64, d: i64) -> Q {
    Q::new(n.into(), d.into())
}

fn names() -> Names {
    let mut n = Names::strict();
    for c in ["t", "x", "y", "z"] {
        n.symbol(c);
    }
    n.symbol("a");
    n.symbol("b");
    n
}

fn dir(store: &mut Store, text: &str) -> Direction {
    parse_direction(
        store,
        &names(),
        &Sampling::default(),
        Arg::new("--direction", text),
        false,
    )
    .unwrap_or_else(|e| panic!("{text}: {e}"))
}

fn dir_err(text: &str, normalize: bool) -> String {
    let mut st = Store::new();
    match parse_direction(
        &mut st,
        &names(),
        &Sampling::default(),
        Arg::new("--direction", text),
        normalize,
    ) {
        Ok(_) => panic!("{text} was accepted"),
        Err(e) => e.message,
    }
}

fn rational_matrix(store: &mut Store, rows: &[[i64; 3]; 3]) -> Mat3 {
    std::array::from_fn(|i| std::array::from_fn(|j| store.int(rows[i][j])))
}

fn as_rationals(store: &Store, m: &Mat3) -> [[Q; 3]; 3] {
    std::array::from_fn(|i| {
        std::array::from_fn(|j| {
            store
                .as_rational(m[i][j])
                .unwrap_or_else(|| panic!("entry {i}{j} is not rational"))
        })
    })
}

/// The symmetric basis E^(ab), a <= b: 1 at (a, b) and (b, a).
const SYM: [(usize, usize); 6] = [(0, 0), (0, 1), (0, 2), (1, 1), (1, 2), (2, 2)];

fn basis_tensor(store: &Store, a: usize, b: usize) -> Mat3 {
    let mut m = [[store.zero(); 3]; 3];
    m[a][b] = store.one();
    m[b][a] = store.one();
    m
}

/// Lambda as a 6x6 matrix on symmetric tensors: column (ab) holds the coordinates of
/// Lambda E^(ab), i.e. its (i, j) entries for i <= j.
fn lambda6(store: &mut Store, n: &Vec3) -> Vec<Vec<Form>> {
    let mut cols = Vec::new();
    for &(a, b) in &SYM {
        let e = basis_tensor(store, a, b);
        let p = project(store, n, &e).unwrap();
        cols.push(SYM.iter().map(|&(i, j)| p[i][j]).collect::<Vec<_>>());
    }
    (0..6)
        .map(|r| (0..6).map(|c| cols[c][r]).collect())
        .collect()
}

fn rank_q(mut m: Vec<Vec<Q>>) -> usize {
    let (rows, cols) = (m.len(), m[0].len());
    let mut rank = 0;
    for c in 0..cols {
        let Some(p) = (rank..rows).find(|&r| !m[r][c].is_zero()) else {
            continue;
        };
        m.swap(rank, p);
        for r in 0..rows {
            if r != rank && !m[r][c].is_zero() {
                let f = &m[r][c] / &m[rank][c];
                for k in 0..cols {
                    let sub = &f * &m[rank][k];
                    m[r][k] -= sub;
                }
            }
        }
        rank += 1;
    }
    rank
}

#[test]
fn check_sheet_2a_along_z() {
    let mut st = Store::new();
    let d = dir(&mut st, "0,0,1");
    let a = rational_matrix(&mut st, &[[1, 2, 3], [2, 4, 5], [3, 5, 6]]);
    let p = project(&mut st, &d.n, &a).unwrap();
    let want = [
        [q(-3, 2), q(2, 1), q(0, 1)],
        [q(2, 1), q(3, 2), q(0, 1)],
        [q(0, 1), q(0, 1), q(0, 1)],
    ];
    assert_eq!(as_rationals(&st, &p), want);
}

#[test]
fn check_sheet_2a_along_the_diagonal() {
    let mut st = Store::new();
    let d = dir(&mut st, "1/sqrt(3),1/sqrt(3),1/sqrt(3)");
    let a = rational_matrix(&mut st, &[[1, 2, 3], [2, 4, 5], [3, 5, 6]]);
    let p = project(&mut st, &d.n, &a).unwrap();
    let n9 = |x: i64| q(x, 9);
    let want = [
        [n9(2), n9(-1), n9(-1)],
        [n9(-1), n9(-1), n9(2)],
        [n9(-1), n9(2), n9(-1)],
    ];
    assert_eq!(as_rationals(&st, &p), want);
}

const RATIONAL_DIRECTIONS: [&str; 6] = [
    "0,0,1",
    "0,0,-1",
    "3/5,0,4/5",
    "2/3,-2/3,1/3",
    "2/7,3/7,6/7",
    "1/sqrt(2),-1/sqrt(2),0",
];

#[test]
fn lambda_is_a_rank_two_projector_with_trace_two() {
    for text in RATIONAL_DIRECTIONS {
        let mut st = Store::new();
        let d = dir(&mut st, text);
        let m = lambda6(&mut st, &d.n);
        let mq: Vec<Vec<Q>> = m
            .iter()
            .map(|r| {
                r.iter()
                    .map(|f| st.as_rational(*f).expect("rational"))
                    .collect()
            })
            .collect();
        // Idempotent: M M = M, exactly.
        for i in 0..6 {
            for j in 0..6 {
                let mut s = Q::zero();
                for k in 0..6 {
                    s += &mq[i][k] * &mq[k][j];
                }
                assert_eq!(s, mq[i][j], "{text}: (M M)_{i}{j}");
            }
        }
        assert_eq!(rank_q(mq.clone()), 2, "{text}: rank");
        let tr: Q = (0..6).map(|i| mq[i][i].clone()).sum();
        assert_eq!(tr, Q::from_integer(2.into()), "{text}: trace");
    }
}

#[test]
fn lambda_is_idempotent_transverse_and_traceless_for_symbolic_angles() {
    let mut st = Store::new();
    let mut nm = names();
    nm.symbol("th");
    nm.symbol("ph");
    let d = parse_direction(
        &mut st,
        &nm,
        &Sampling::default(),
        Arg::new("--direction", "theta=th,phi=ph"),
        false,
    )
    .unwrap();
    let l = lambda(&mut st, &d.n).unwrap();
    for i in 0..3 {
        for j in 0..3 {
            for k in 0..3 {
                for m in 0..3 {
                    // n_i Lambda_ij,kl = 0
                    let mut acc = st.zero();
                    for a in 0..3 {
                        let p = st.mul(d.n[a], l[a][j][k][m]).unwrap();
                        acc = st.add(acc, p).unwrap();
                    }
                    assert!(st.is_zero(acc), "transverse {j}{k}{m}");
                    if i == 0 {
                        // Lambda_aa,kl = 0
                        let mut tr = st.zero();
                        for a in 0..3 {
                            tr = st.add(tr, l[a][a][k][m]).unwrap();
                        }
                        assert!(st.is_zero(tr), "traceless {k}{m}");
                    }
                    // (Lambda Lambda)_ij,kl = Lambda_ij,kl on symmetric tensors: contract over
                    // (a, b) with Lambda's own symmetric action.
                    let mut ll = st.zero();
                    for a in 0..3 {
                        for b in 0..3 {
                            let p = st.mul(l[i][j][a][b], l[a][b][k][m]).unwrap();
                            ll = st.add(ll, p).unwrap();
                        }
                    }
                    // Symmetrise in (k, l): Lambda acts on symmetric tensors.
                    let sym = |st: &mut Store, x: Form, y: Form| {
                        let s = st.add(x, y).unwrap();
                        st.scale(s, &Coeff::rational(q(1, 2))).unwrap()
                    };
                    let mut ll_t = st.zero();
                    for a in 0..3 {
                        for b in 0..3 {
                            let p = st.mul(l[i][j][a][b], l[a][b][m][k]).unwrap();
                            ll_t = st.add(ll_t, p).unwrap();
                        }
                    }
                    let lhs = sym(&mut st, ll, ll_t);
                    let rhs = sym(&mut st, l[i][j][k][m], l[i][j][m][k]);
                    let d = st.sub(lhs, rhs).unwrap();
                    assert!(st.is_zero(d), "idempotent {i}{j}{k}{m}");
                }
            }
        }
    }
}

fn assert_orthonormal_right_handed(st: &mut Store, d: &Direction, label: &str) {
    let checks = [
        (d.n, d.n, 1),
        (d.u, d.u, 1),
        (d.v, d.v, 1),
        (d.n, d.u, 0),
        (d.n, d.v, 0),
        (d.u, d.v, 0),
    ];
    for (a, b, want) in checks {
        let x = dot(st, &a, &b).unwrap();
        let w = st.int(want);
        let r = st.sub(x, w).unwrap();
        assert!(st.is_zero(r), "{label}: dot = {}", st.to_text(x));
    }
    let uxv = cross(st, &d.u, &d.v).unwrap();
    for i in 0..3 {
        let r = st.sub(uxv[i], d.n[i]).unwrap();
        assert!(
            st.is_zero(r),
            "{label}: (u x v)_{i} = {}",
            st.to_text(uxv[i])
        );
    }
}

#[test]
fn default_bases_are_orthonormal_and_right_handed() {
    for text in RATIONAL_DIRECTIONS {
        let mut st = Store::new();
        let d = dir(&mut st, text);
        assert_orthonormal_right_handed(&mut st, &d, text);
    }
    let mut st = Store::new();
    let d = dir(&mut st, "theta=a,phi=b");
    assert_orthonormal_right_handed(&mut st, &d, "angles");
    let mut st = Store::new();
    let d = dir(&mut st, "radial");
    assert_orthonormal_right_handed(&mut st, &d, "radial");
}

#[test]
fn oblique_default_basis_is_the_documented_one() {
    // n = (3/5, 0, 4/5): rho = 3/5, u = (4/5, 0, -3/5), v = (0, 1, 0).
    let mut st = Store::new();
    let d = dir(&mut st, "3/5,0,4/5");
    let u: Vec<Q> = d.u.iter().map(|f| st.as_rational(*f).unwrap()).collect();
    let v: Vec<Q> = d.v.iter().map(|f| st.as_rational(*f).unwrap()).collect();
    assert_eq!(u, [q(4, 5), q(0, 1), q(-3, 5)]);
    assert_eq!(v, [q(0, 1), q(1, 1), q(0, 1)]);
    // On the negative z axis: theta = pi, phi = 0.
    let d = dir(&mut st, "0,0,-1");
    let u: Vec<Q> = d.u.iter().map(|f| st.as_rational(*f).unwrap()).collect();
    assert_eq!(u, [q(-1, 1), q(0, 1), q(0, 1)]);
}

fn plane_wave(st: &mut Store, comps: &[(usize, usize, &str)]) -> [[Form; 4]; 4] {
    let mut h = [[st.zero(); 4]; 4];
    for &(i, j, text) in comps {
        let e = crate::parse::parse(text).unwrap();
        let f = st.build(&e, &Names::free()).unwrap();
        h[i][j] = f;
        h[j][i] = f;
    }
    h
}

#[test]
fn polarizations_along_z_are_h_xx_and_h_xy() {
    let mut st = Store::new();
    let d = dir(&mut st, "0,0,1");
    let h = plane_wave(
        &mut st,
        &[
            (1, 1, "A*cos(w*(t - z))"),
            (2, 2, "-A*cos(w*(t - z))"),
            (1, 2, "B*sin(w*(t - z))"),
        ],
    );
    let p = project_perturbation(&mut st, &h, &d).unwrap();
    let dp = st.sub(p.plus, h[1][1]).unwrap();
    let dc = st.sub(p.cross, h[1][2]).unwrap();
    assert!(st.is_zero(dp), "h_+ = {}", st.to_text(p.plus));
    assert!(st.is_zero(dc), "h_x = {}", st.to_text(p.cross));
    // A TT wave is left unchanged.
    for i in 0..3 {
        for j in 0..3 {
            let r = st.sub(p.tt[i][j], h[i + 1][j + 1]).unwrap();
            assert!(st.is_zero(r), "component {i}{j} changed");
        }
    }
}

#[test]
fn a_pure_gauge_plane_wave_projects_to_zero() {
    // h = k_mu zeta_nu + k_nu zeta_mu F'(k.x) along n = (3/5, 0, 4/5), zeta arbitrary.
    let mut st = Store::new();
    let d = dir(&mut st, "3/5,0,4/5");
    let k = ["-1", "3/5", "0", "4/5"];
    let zeta = ["z0", "z1", "z2", "z3"];
    let mut comps = Vec::new();
    let texts: Vec<(usize, usize, String)> = (0..4)
        .flat_map(|m| (m..4).map(move |n| (m, n)))
        .map(|(m, n)| {
            (
                m,
                n,
                format!(
                    "(({})*{} + ({})*{})*F'(-t + 3*x/5 + 4*z/5)",
                    k[m], zeta[n], k[n], zeta[m]
                ),
            )
        })
        .collect();
    for (m, n, t) in &texts {
        comps.push((*m, *n, t.as_str()));
    }
    let h = plane_wave(&mut st, &comps);
    let p = project_perturbation(&mut st, &h, &d).unwrap();
    for row in &p.tt {
        for f in row {
            assert!(st.is_zero(*f), "{}", st.to_text(*f));
        }
    }
    let frac = not_tt_fraction(&mut st, &h, &p.tt, &[], &Sampling::default());
    assert_eq!(frac.all, Share::Exact(1));
}

#[test]
fn fraction_is_exactly_zero_for_a_tt_wave() {
    let mut st = Store::new();
    let d = dir(&mut st, "0,0,1");
    let h = plane_wave(&mut st, &[(1, 1, "cos(t - z)"), (2, 2, "-cos(t - z)")]);
    let p = project_perturbation(&mut st, &h, &d).unwrap();
    let frac = not_tt_fraction(&mut st, &h, &p.tt, &[], &Sampling::default());
    assert_eq!(frac.all, Share::Exact(0));
    assert_eq!(frac.spatial, Share::Exact(0));
}

#[test]
fn fraction_is_numerical_for_a_mixed_wave() {
    // Spatial part diag(1, -1, 1) cos: the zz part (norm 1 of sqrt 3) is not TT along z.
    let mut st = Store::new();
    let d = dir(&mut st, "0,0,1");
    let h = plane_wave(
        &mut st,
        &[
            (1, 1, "cos(t - z)"),
            (2, 2, "-cos(t - z)"),
            (3, 3, "cos(t - z)"),
        ],
    );
    let p = project_perturbation(&mut st, &h, &d).unwrap();
    let frac = not_tt_fraction(&mut st, &h, &p.tt, &[], &Sampling::default());
    match frac.spatial {
        Share::Numerical(x) => assert!((x - (1.0f64 / 3.0).sqrt()).abs() < 1e-9, "{x}"),
        other => panic!("{other:?}"),
    }
    assert!(frac.points > 0);
}

#[test]
fn bad_directions_are_refused_with_reasons() {
    assert!(dir_err("1,1,0", false).contains("not a unit vector"));
    assert!(dir_err("0,0,0", true).contains("zero vector"));
    assert!(dir_err("1,0", false).contains("expected 3"));
    assert!(dir_err("up", false).contains("unknown direction"));
    assert!(dir_err("w", false).contains("unknown direction"));
    assert!(dir_err("theta=1", false).contains("`phi` is missing"));
    assert!(dir_err("theta=1,psi=2", false).contains("unknown angle"));
    assert!(dir_err("theta=1,theta=2", false).contains("twice"));
    assert!(dir_err("theta=x,phi=0", false).contains("coordinate"));
    assert!(dir_err("1,0,q", false).contains("undeclared"));
    assert!(dir_err("1,0,(", false).len() > 3);
}

#[test]
fn axes_are_directions() {
    let mut st = Store::new();
    for (text, want) in [("z", [0, 0, 1]), ("-x", [-1, 0, 0]), ("+y", [0, 1, 0])] {
        let d = dir(&mut st, text);
        let n: Vec<Q> = d.n.iter().map(|f| st.as_rational(*f).unwrap()).collect();
        let w: Vec<Q> = want.iter().map(|&k| q(k, 1)).collect();
        assert_eq!(n, w, "{text}");
    }
}

#[test]
fn normalize_divides_by_the_exact_length() {
    let mut st = Store::new();
    let d = parse_direction(
        &mut st,
        &names(),
        &Sampling::default(),
        Arg::new("--direction", "3,0,4"),
        true,
    )
    .unwrap();
    let n: Vec<Q> = d.n.iter().map(|f| st.as_rational(*f).unwrap()).collect();
    assert_eq!(n, [q(3, 5), q(0, 1), q(4, 5)]);
    assert!(d.normalized);
    let nn = dot(&mut st, &d.n, &d.n).unwrap();
    assert_eq!(st.as_rational(nn), Some(Q::one()));
}

#[test]
fn a_user_basis_must_be_transverse_and_unit() {
    let mut st = Store::new();
    let mut d = dir(&mut st, "0,0,1");
    let s = Sampling::default();
    let e = set_basis(
        &mut st,
        &names(),
        &s,
        &mut d,
        Arg::new("--basis", "1,0,1"),
        false,
    )
    .unwrap_err();
    assert!(e.message.contains("not perpendicular"), "{}", e.message);
    let e = set_basis(
        &mut st,
        &names(),
        &s,
        &mut d,
        Arg::new("--basis", "1,1,0"),
        false,
    )
    .unwrap_err();
    assert!(e.message.contains("not a unit vector"), "{}", e.message);
    set_basis(
        &mut st,
        &names(),
        &s,
        &mut d,
        Arg::new("--basis", "1,1,0"),
        true,
    )
    .unwrap();
    assert_orthonormal_right_handed(&mut st, &d, "user basis");
}
