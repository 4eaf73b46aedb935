use super::stencil::{Q, fornberg};
use super::*;
use num_bigint::BigInt;
use num_traits::{One, Zero};

fn q(n: i64, d: i64) -> Q {
    Q::new(BigInt::from(n), BigInt::from(d))
}

/// Central weights of Fornberg (1988), Math. Comp. 51, 699, Table 1, for the first and
/// second derivative at orders of accuracy 2, 4, 6, 8 (offsets -s..s). The values were
/// written from memory, not checked against the printed table; the test below also checks
/// each set independently by the exactness conditions on polynomials, which determine it.
fn table_1() -> Vec<(u32, Vec<Q>, Vec<Q>)> {
    vec![
        (
            2,
            vec![q(-1, 2), q(0, 1), q(1, 2)],
            vec![q(1, 1), q(-2, 1), q(1, 1)],
        ),
        (
            4,
            vec![q(1, 12), q(-2, 3), q(0, 1), q(2, 3), q(-1, 12)],
            vec![q(-1, 12), q(4, 3), q(-5, 2), q(4, 3), q(-1, 12)],
        ),
        (
            6,
            vec![
                q(-1, 60),
                q(3, 20),
                q(-3, 4),
                q(0, 1),
                q(3, 4),
                q(-3, 20),
                q(1, 60),
            ],
            vec![
                q(1, 90),
                q(-3, 20),
                q(3, 2),
                q(-49, 18),
                q(3, 2),
                q(-3, 20),
                q(1, 90),
            ],
        ),
        (
            8,
            vec![
                q(1, 280),
                q(-4, 105),
                q(1, 5),
                q(-4, 5),
                q(0, 1),
                q(4, 5),
                q(-1, 5),
                q(4, 105),
                q(-1, 280),
            ],
            vec![
                q(-1, 560),
                q(8, 315),
                q(-1, 5),
                q(8, 5),
                q(-205, 72),
                q(8, 5),
                q(-1, 5),
                q(8, 315),
                q(-1, 560),
            ],
        ),
    ]
}

#[test]
fn central_weights_match_fornberg_1988_table_1() {
    for (order, d1, d2) in table_1() {
        let st = Stencil::central(order).unwrap();
        assert_eq!(st.d1_exact, d1, "first derivative, order {order}");
        assert_eq!(st.d2_exact, d2, "second derivative, order {order}");
    }
    assert!(Stencil::central(3).is_none());
}

#[test]
fn weights_are_exact_on_polynomials_of_the_stencils_degree() {
    // sum_k w_k k^j = j! [j = m] for j = 0..=order+m-1 (m = derivative order): the defining
    // conditions of a central stencil of this accuracy (common practice).
    for (order, d1, d2) in table_1() {
        let s = (order / 2) as i64;
        for (m, w) in [(1u32, &d1), (2, &d2)] {
            for j in 0..(order + m) {
                let mut sum = Q::zero();
                for (i, wk) in w.iter().enumerate() {
                    let k = Q::from_integer(BigInt::from(i as i64 - s));
                    let mut p = Q::one();
                    for _ in 0..j {
                        p *= &k;
                    }
                    sum += wk * p;
                }
                let want = if j == m {
                    Q::from_integer(BigInt::from(if m == 1 { 1 } else { 2 }))
                } else {
                    Q::zero()
                };
                assert_eq!(sum, want, "order {order}, derivative {m}, moment {j}");
            }
        }
    }
}

#[test]
fn fornberg_handles_one_sided_nodes() {
    // Forward first difference on nodes 0, 1, 2 at z = 0: -3/2, 2, -1/2 (common practice).
    let nodes = [q(0, 1), q(1, 1), q(2, 1)];
    let w = fornberg(&q(0, 1), &nodes, 1);
    assert_eq!(w[1], vec![q(-3, 2), q(2, 1), q(-1, 2)]);
    assert_eq!(w[0], vec![q(1, 1), q(0, 1), q(0, 1)]);
}

/// The finite-difference first and second derivative of `f` at `x` with spacing `h`.
fn fd(st: &Stencil, f: impl Fn(f64) -> f64, x: f64, h: f64) -> (f64, f64) {
    let s = st.half as i64;
    let (mut a, mut b) = (0.0, 0.0);
    for k in -s..=s {
        let v = f(x + k as f64 * h);
        a += st.d1[(k + s) as usize] * v;
        b += st.d2[(k + s) as usize] * v;
    }
    (a / h, b / (h * h))
}

#[test]
fn observed_order_on_smooth_functions_is_the_stencil_order() {
    // Richardson analysis (common practice): the error of a central stencil of order q falls
    // like h^q, so log2(e(h)/e(h/2)) -> q, for sin and exp with known derivatives.
    type F = fn(f64) -> f64;
    let cases: [(F, F, F, f64); 2] = [
        (f64::sin, f64::cos, |x| -x.sin(), 0.7),
        (f64::exp, f64::exp, f64::exp, 0.3),
    ];
    for order in ORDERS {
        let st = Stencil::central(order).unwrap();
        // Spacings where truncation dominates rounding at every order.
        let h0 = match order {
            2 => 0.05,
            4 => 0.1,
            6 => 0.2,
            _ => 0.3,
        };
        for (f, df, d2f, x) in cases {
            let e = |h: f64| {
                let (a, b) = fd(&st, f, x, h);
                ((a - df(x)).abs(), (b - d2f(x)).abs())
            };
            let (a1, b1) = e(h0);
            let (a2, b2) = e(h0 / 2.0);
            let p1 = (a1 / a2).log2();
            let p2 = (b1 / b2).log2();
            let qf = f64::from(order);
            assert!(
                (p1 - qf).abs() < 0.3,
                "order {order}: first derivative p = {p1}"
            );
            assert!(
                (p2 - qf).abs() < 0.3,
                "order {order}: second derivative p = {p2}"
            );
        }
    }
}

#[test]
fn classify_follows_the_documented_rule() {
    let h = [0.04, 0.02, 0.01];
    let floors = [1e-14, 4e-14, 1.6e-13];
    // Falling at order 4.
    let r = [1.6e-6, 1e-7, 6.25e-9];
    assert!(matches!(
        classify(&r, &floors, &h, 4),
        Finding::Converges { .. }
    ));
    // Within the floor at the finest.
    let r = [1e-9, 1e-12, 1e-13];
    assert_eq!(classify(&r, &floors, &h, 4), Finding::AtFloor);
    // Stalling well above the floor.
    let r = [3e-3, 2.9e-3, 2.9e-3];
    assert!(matches!(
        classify(&r, &floors, &h, 4),
        Finding::Stalls { .. }
    ));
    // Stalling just above the floor: inconclusive.
    let r = [1e-12, 1e-12, 1e-12];
    assert!(matches!(classify(&r, &floors, &h, 4), Finding::Unclear(_)));
    // Falling at order 2 for a fourth-order stencil: inconclusive.
    let r = [1.6e-5, 4e-6, 1e-6];
    assert!(matches!(classify(&r, &floors, &h, 4), Finding::Unclear(_)));
    // Growing: inconclusive.
    let r = [1e-6, 4e-6, 1.6e-5];
    assert!(matches!(classify(&r, &floors, &h, 4), Finding::Unclear(_)));
    let p = observed_orders(&[1.6e-6, 1e-7, 0.0], &h);
    assert!((p[0].unwrap() - 4.0).abs() < 1e-9 && p[1].is_none());
}

/// A plan for one component `coef * d h_{mu nu}` over the problem in `text`.
fn single(text: &str, field: Field, mu: u8, nu: u8, deriv: Deriv) -> GridPlan {
    let mut p = crate::problem::from_str("test.toml", text).unwrap();
    let mut combo = Combo::default();
    combo.0.insert(
        Atom {
            field,
            mu,
            nu,
            deriv,
        },
        1.0,
    );
    let spec = ClaimSpec {
        key: "probe".into(),
        title: "probe".into(),
        heading: "probe".into(),
        asserted: Some(true),
        components: vec![("d h".into(), combo)],
    };
    let h = p.h;
    let params = p.parameters.clone();
    let samples = p.sampling.samples.clone();
    GridPlan::new(&mut p.store, &h, None, vec![spec], true, &params, &samples).unwrap()
}

#[test]
fn streamed_stencils_reproduce_exact_derivatives_of_polynomials() {
    // For a polynomial of degree <= 4 a fourth-order stencil is exact, so the largest |d_t d_x
    // h_xx| over the interior is that of 6 t x^2 at the interior points: this checks the ring
    // of slabs, the offsets and the mixed stencil.
    let text = "[perturbation]\nxx = 't^2*x^3 + y*z'\n";
    let plan = single(text, Field::H, 1, 1, Deriv::D2(0, 1));
    let st = Stencil::central(4).unwrap();
    let b = Box4 {
        center: [0.3, 0.2, -0.1, 0.4],
        spacing: 0.05,
        counts: [7, 8, 6, 9],
    };
    let sw = sweep::sweep(&plan, lattice(&b, &st), &mut |_, _| {}).unwrap();
    let mut want = (0.0f64, [0usize; 4]);
    for it in 2..5 {
        for ix in 2..6 {
            let (t, x) = (b.coord(0, it), b.coord(1, ix));
            let v = (6.0 * t * x * x).abs();
            if v > want.0 {
                want = (v, [it, ix, 0, 0]);
            }
        }
    }
    let (got, at) = sw.best[0][0];
    assert!((got - want.0).abs() < 1e-9, "got {got}, want {}", want.0);
    assert_eq!(at[..2], want.1[..2]);
    assert_eq!(sw.interior, 3 * 4 * 2 * 5);
    // A t-derivative of a channel that does not depend on t is dropped as exactly zero.
    let plan = single("[perturbation]\nxx = 'x^2'\n", Field::H, 1, 1, Deriv::D1(0));
    assert!(plan.claims[0].components[0].terms.is_empty());
    assert!(!plan.channels[0].dynamic);
}

#[test]
fn a_second_derivative_in_each_direction_comes_out_right() {
    for axis in 0..4u8 {
        let var = ["t", "x", "y", "z"][axis as usize];
        let text = format!("[perturbation]\nyy = '{var}^4/12 + t*x*y*z'\n");
        let plan = single(&text, Field::H, 2, 2, Deriv::D2(axis, axis));
        let st = Stencil::central(4).unwrap();
        let b = Box4 {
            center: [0.5, 0.6, 0.7, 0.8],
            spacing: 0.1,
            counts: [5; 4],
        };
        let sw = sweep::sweep(&plan, lattice(&b, &st), &mut |_, _| {}).unwrap();
        // d^2/dv^2 (v^4/12) = v^2, largest at the interior point farthest out: index 2 of 5
        // is the centre, so the only interior point is the centre.
        let c = b.center[axis as usize];
        assert!(
            (sw.best[0][0].0 - c * c).abs() < 1e-9,
            "axis {var}: {:?}",
            sw.best[0][0]
        );
    }
}

#[test]
fn box_hbar_of_a_plane_wave_converges_at_the_stencil_order() {
    // Oblique: along a grid axis the truncation errors of d_t^2 and d_z^2 cancel exactly.
    let text = "[parameters]\na = 1.0e-3\nw = 3.0\n[define]\nhp = 'a*cos(w*(t - (3*x + 4*z)/5))'\n\
                [perturbation]\nxx = '16/25*hp'\nxz = '-12/25*hp'\nyy = '-hp'\nzz = '9/25*hp'\n";
    let mut p = crate::problem::from_str("test.toml", text).unwrap();
    let h = p.h;
    let params = p.parameters.clone();
    let samples = p.sampling.samples.clone();
    let plan = GridPlan::new(
        &mut p.store,
        &h,
        None,
        vec![box_hbar()],
        true,
        &params,
        &samples,
    )
    .unwrap();
    for order in [2, 4] {
        let st = Stencil::central(order).unwrap();
        let r: Vec<f64> = [0.05, 0.025]
            .iter()
            .map(|&h| {
                let b = Box4 {
                    center: [0.1, 0.2, 0.3, 0.4],
                    spacing: h,
                    counts: [order as usize + 3; 4],
                };
                let sw = sweep::sweep(&plan, lattice(&b, &st), &mut |_, _| {}).unwrap();
                sw.best[0].iter().map(|x| x.0).fold(0.0, f64::max)
            })
            .collect();
        let p_obs = (r[0] / r[1]).log2();
        assert!(
            (p_obs - f64::from(order)).abs() < 0.3,
            "order {order}: {r:?}, p = {p_obs}"
        );
    }
}

#[test]
fn run_reports_verdicts_floors_and_masking() {
    // The static mass on a grid centred on the origin with odd points hits r = 0.
    let text = "[parameters]\nm = 0.01\n[perturbation]\ntt = '2*m/sqrt(x^2 + y^2 + z^2)'\n[claims]\nfield_equations = true\n";
    let mut p = crate::problem::from_str("test.toml", text).unwrap();
    let plan = GridPlan::for_problem(&mut p).unwrap();
    let mut s = GridSettings::from_spec(None, 2);
    s.center = [0.0; 4];
    s.width = 0.4;
    s.points = vec![5, 7, 9];
    match run(&plan, &s, &mut |_| {}) {
        Err(GridError::NonFinite {
            component, point, ..
        }) => {
            assert_eq!(component, "h_tt");
            assert_eq!(point[1..], [0.0, 0.0, 0.0]);
        }
        other => panic!("expected a non-finite error, got {other:?}"),
    }
    s.mask_nonfinite = true;
    let r = run(&plan, &s, &mut |_| {}).unwrap();
    assert!(r.levels.iter().all(|l| l.masked > 0));
    assert!(r.claims[0].rows.iter().all(|row| row.skipped > 0));
}

#[test]
fn settings_are_checked_before_any_work() {
    let mut s = GridSettings::from_spec(None, 8);
    assert_eq!(s.points, vec![12, 24, 48]);
    s.points = vec![8, 16, 32];
    assert!(matches!(
        s.validate(),
        Err(GridError::TooFewPoints { needed: 9, .. })
    ));
    s.points = vec![12, 24];
    assert!(matches!(s.validate(), Err(GridError::Settings(_))));
    s.points = vec![12, 10, 24];
    assert!(matches!(s.validate(), Err(GridError::Settings(_))));
}

/// The wave of the benchmark comparison (both polarizations, oblique), as a box hbar plan.
fn wave_plan() -> GridPlan {
    let text = "[parameters]\na = 1.0e-3\nw = 3.0\n[define]\nphase = 'w*(t - (2*x + 2*y + z)/3)'\n\
                hp = 'a*cos(phase)'\nhc = 'a*sin(phase)'\n[perturbation]\n\
                xx = '-hp/3 + 4*hc/9'\nxy = '-5*hc/9'\nxz = '2*hp/3 + 2*hc/9'\n\
                yy = 'hp/3 + 4*hc/9'\nyz = '-2*hp/3 + 2*hc/9'\nzz = '-8*hc/9'\n\
                tt = 'x^2*y/7'\n";
    box_hbar_plan(text)
}

/// The plan of box hbar = 0 for the perturbation of a problem file's text.
pub(super) fn box_hbar_plan(text: &str) -> GridPlan {
    let mut p = crate::problem::from_str("test.toml", text).unwrap();
    let h = p.h;
    let params = p.parameters.clone();
    let samples = p.sampling.samples.clone();
    GridPlan::new(
        &mut p.store,
        &h,
        None,
        vec![box_hbar()],
        true,
        &params,
        &samples,
    )
    .unwrap()
}

#[test]
fn kept_sample_buffers_give_the_residuals_of_fresh_ones() {
    // Larger, then smaller, then larger again: stale values from an earlier sweep are never
    // read (bit-identical results), in the ring and in the slab of t-independent channels
    // (h_tt here does not depend on t).
    let plan = wave_plan();
    assert!(plan.channels.iter().any(|c| !c.dynamic));
    let st = Stencil::central(4).unwrap();
    let boxes = [
        Box4 {
            center: [0.3, 0.4, 0.5, 0.6],
            spacing: 0.02,
            counts: [7, 12, 10, 11],
        },
        Box4 {
            center: [0.1, -0.2, 0.3, 0.2],
            spacing: 0.05,
            counts: [5, 6, 7, 5],
        },
        Box4 {
            center: [0.2, 0.1, 0.0, -0.3],
            spacing: 0.01,
            counts: [6, 9, 13, 8],
        },
    ];
    let mut bufs = sweep::Buffers::new();
    for b in &boxes {
        let fresh = sweep::sweep(&plan, lattice(b, &st), &mut |_, _| {}).unwrap();
        let kept = sweep::sweep_with(&mut bufs, &plan, lattice(b, &st), &mut |_, _| {}).unwrap();
        assert_eq!(fresh, kept, "box {b:?}");
        assert!(fresh.best[0].iter().any(|x| x.0 > 0.0));
    }
}

// ----- about a background (issue 12) ------------------------------------------------------

/// A perturbation that solves nothing, so every component of the field equations is nonzero.
const NOT_A_SOLUTION: &str = "[perturbation]\nxx = 'sin(t + 2*y)*x'\nty = 'cos(x - z)*t^2'\n\
                              zz = 'exp(y/3)*t'\n";

#[test]
fn minkowski_written_as_a_background_gives_the_flat_residuals() {
    // The curvature chain over dual numbers on Minkowski's constant samples is the flat
    // linearized Einstein tensor of the same differenced samples: the two routes agree
    // component by component to rounding, though they share no formula.
    let flat_text = format!("{NOT_A_SOLUTION}[claims]\nfield_equations = true\n");
    let curved_text = format!("{flat_text}[background]\ntt = '-1'\nxx = '1'\nyy = '1'\nzz = '1'\n");
    let mut flat = crate::problem::from_str("flat.toml", &flat_text).unwrap();
    let mut curved = crate::problem::from_str("curved.toml", &curved_text).unwrap();
    assert!(curved.background.is_some());
    let fp = GridPlan::for_problem(&mut flat).unwrap();
    let cp = GridPlan::for_problem(&mut curved).unwrap();
    assert!(fp.curved.is_none() && cp.curved.is_some());
    let st = Stencil::central(4).unwrap();
    let b = Box4 {
        center: [0.3, 0.4, 0.5, 0.6],
        spacing: 0.04,
        counts: [7, 8, 7, 9],
    };
    let fs = sweep::sweep(&fp, lattice(&b, &st), &mut |_, _| {}).unwrap();
    let cs = sweep::sweep(&cp, lattice(&b, &st), &mut |_, _| {}).unwrap();
    let fe = |p: &GridPlan| {
        p.claims
            .iter()
            .position(|c| c.key == "field_equations")
            .unwrap()
    };
    let (fi, ci) = (fe(&fp), fe(&cp));
    assert_eq!(cp.claims[ci].components[0].name, "dG_tt");
    assert_eq!(fs.best[fi].len(), 10);
    let mut exercised = 0;
    for (k, (f, c)) in fs.best[fi].iter().zip(&cs.best[ci]).enumerate() {
        exercised += usize::from(f.0 > 1e-3);
        assert!(
            (f.0 - c.0).abs() <= 1e-9 * f.0.max(1.0),
            "component {k}: flat {}, curved {}",
            f.0,
            c.0
        );
    }
    assert!(exercised >= 6, "only {exercised} components are nonzero");
    // The background's own equations: Minkowski's samples are constants, so the residual is
    // exactly 0 (their derivatives are exactly 0), and the round-off floors of the field
    // equations are small, and positive where the samples of h enter.
    let bg = cp
        .claims
        .iter()
        .position(|c| c.key == "background")
        .unwrap();
    assert!(cs.best[bg].iter().all(|&(v, _)| v == 0.0));
    let floors = cs.floors.as_ref().unwrap();
    assert!(floors[bg].iter().all(|&f| f == 0.0), "{floors:?}");
    assert!(floors[ci].iter().all(|&f| f < 1e-9), "{floors:?}");
    assert!(
        floors[ci].iter().filter(|&&f| f > 0.0).count() >= 6,
        "{floors:?}"
    );
    assert!(fs.floors.is_none());
}

#[test]
fn a_degenerate_background_is_skipped_point_by_point_not_a_panic() {
    // gbar_rr = 0: the inverse does not exist at any point; every measured point is skipped
    // and counted, and the run ends with a verdict, never a panic.
    let text = "coordinates = ['t', 'r', 'th', 'ph']\n[background]\nt.t = '-1'\n\
                th.th = 'r^2'\nph.ph = 'r^2*sin(th)^2'\n[perturbation]\nt.t = '1/r'\n\
                [claims]\nfield_equations = true\n";
    let mut p = crate::problem::from_str("test.toml", text).unwrap();
    let plan = GridPlan::for_problem(&mut p).unwrap();
    let settings = GridSettings {
        center: [0.0, 3.0, 1.0, 0.5],
        width: 0.2,
        points: vec![6, 8, 10],
        order: 2,
        mask_nonfinite: false,
    };
    let report = run(&plan, &settings, &mut |_| {}).unwrap();
    for c in &report.claims {
        assert_eq!(c.status, GridStatus::Inconclusive, "{c:?}");
        assert!(c.rows.iter().all(|r| r.skipped > 0));
    }
}

#[test]
fn default_boxes_fit_inside_the_domain() {
    let domain = [None, Some((3.0, 9.0)), Some((0.5, 0.6)), None];
    let c = GridSettings::default_center(Some(&domain));
    assert_eq!(c, [DEFAULT_CENTER[0], 6.0, 0.55, DEFAULT_CENTER[3]]);
    let w = GridSettings::default_width(&c, Some(&domain));
    assert!((w - 0.05).abs() < 1e-12, "{w}");
    let s = GridSettings {
        center: c,
        width: w,
        points: default_points(4),
        order: 4,
        mask_nonfinite: false,
    };
    let names = ["t", "r", "th", "ph"].map(String::from);
    assert!(s.check_domain(Some(&domain), &names).is_ok());
    let wide = GridSettings { width: 0.2, ..s };
    let e = wide.check_domain(Some(&domain), &names).unwrap_err();
    assert!(
        e.to_string().contains("the domain of th is [0.5, 0.6]"),
        "{e}"
    );
    // Without a domain, the flat defaults.
    assert_eq!(GridSettings::default_center(None), DEFAULT_CENTER);
    assert_eq!(
        GridSettings::default_width(&DEFAULT_CENTER, None),
        DEFAULT_WIDTH
    );
}

/// The whole box at `b`'s resolution with stencil `st`, nothing masked.
fn lattice<'a>(b: &'a Box4, st: &'a Stencil) -> sweep::SweepAt<'a> {
    sweep::SweepAt {
        b,
        st,
        mask: false,
        region: None,
    }
}

// ----- linear parts of the components ---------------------------------------------------

/// `plan` and its plan with a channel per component, swept on one box: per claim, per
/// component, the two residuals.
fn both_residuals(plan: &GridPlan, b: &Box4, order: u32) -> Vec<(f64, f64)> {
    let plain = plan
        .by_component
        .as_deref()
        .expect("sampled by linear parts");
    let st = Stencil::central(order).unwrap();
    let lin = sweep::sweep(plan, lattice(b, &st), &mut |_, _| {}).unwrap();
    let per = sweep::sweep(plain, lattice(b, &st), &mut |_, _| {}).unwrap();
    assert_eq!(lin.interior, per.interior);
    lin.best
        .iter()
        .flatten()
        .zip(per.best.iter().flatten())
        .map(|(l, p)| (l.0, p.0))
        .collect()
}

#[test]
fn components_sharing_linear_parts_sample_the_parts_and_give_the_same_residuals() {
    // Six components of a wave are combinations of cos and sin of one phase (and h_tt its
    // own): three channels instead of seven, and the residuals of every component agree with
    // those of the six samples to rounding, at a resolution where they are truncation error
    // and at one where a claim fails (the phase is not null: box hbar != 0).
    let plan = wave_plan();
    let plain = plan
        .by_component
        .as_deref()
        .expect("fewer parts than components");
    assert_eq!((plan.channels.len(), plain.channels.len()), (3, 7));
    assert!(plain.by_component.is_none());
    let b = Box4 {
        center: [0.3, 0.4, 0.5, 0.6],
        spacing: 0.02,
        counts: [7, 12, 10, 11],
    };
    let pairs = both_residuals(&plan, &b, 4);
    assert!(pairs.iter().filter(|p| p.1 > 0.0).count() >= 6, "{pairs:?}");
    for &(l, p) in &pairs {
        assert!((l - p).abs() <= 1e-9 * p + 1e-13, "{pairs:?}");
    }
    let fails = "[parameters]\na = 1.0e-3\n[define]\nphase = '3*t - 2*x - y - z'\n\
                 [perturbation]\nxx = 'a*cos(phase)'\nyy = '-a*cos(phase)'\nxy = 'a*sin(phase)/2'\n\
                 xz = '-a*sin(phase)/4'\n";
    let plan = box_hbar_plan(fails);
    assert_eq!(plan.channels.len(), 2);
    let pairs = both_residuals(&plan, &b, 2);
    assert!(
        pairs.iter().filter(|p| p.1 > 1e-4).count() >= 4,
        "{pairs:?}"
    );
    for &(l, p) in &pairs {
        assert!((l - p).abs() <= 1e-9 * p, "{pairs:?}");
    }
    // With a channel per component as many as the parts, nothing changes.
    let plain = box_hbar_plan("[perturbation]\nxx = 'sin(t + x)'\nyy = 'cos(t - y)'\n");
    assert!(plain.by_component.is_none() && plain.channels.len() == 2);
}

/// The plan of a problem file's text, checked to sample `parts` linear parts of its
/// components.
fn sampled_by_parts(text: &str, parts: usize) -> GridPlan {
    let mut p = crate::problem::from_str("test.toml", text).unwrap();
    let plan = GridPlan::for_problem(&mut p).unwrap();
    assert_eq!(plan.channels.len(), parts);
    assert!(plan.by_component.is_some());
    plan
}

#[test]
fn what_is_said_of_samples_is_said_of_the_components() {
    // An isotropic point mass: four components, one part (1/r). On a box through r = 0 the
    // error names the component and point that a channel per component names, and masking
    // counts the masked samples of the components.
    let text = "[parameters]\nm = 0.01\n[define]\nphi = 'm/sqrt(x^2 + y^2 + z^2)'\n\
                [perturbation]\ntt = '2*phi'\nxx = '2*phi'\nyy = '2*phi'\nzz = '2*phi'\n\
                [claims]\nfield_equations = true\n";
    let plan = sampled_by_parts(text, 1);
    let plain = plan
        .by_component
        .as_deref()
        .expect("one part, four components");
    let mut s = GridSettings::from_spec(None, 2);
    s.center = [0.0; 4];
    s.width = 0.4;
    s.points = vec![5, 7, 9];
    let lin = run(&plan, &s, &mut |_| {});
    assert!(matches!(lin, Err(GridError::NonFinite { .. })), "{lin:?}");
    assert_eq!(lin, run_sampled(plain, &s, &mut |_| {}));
    s.mask_nonfinite = true;
    assert!(std::ptr::eq(plan.sampled(&s), plain));
    let masked = run(&plan, &s, &mut |_| {}).unwrap();
    let want = run_sampled(plain, &s, &mut |_| {}).unwrap();
    assert_eq!(masked, want);
    assert!(masked.levels.iter().all(|l| l.masked > 0));
    // Away from r = 0 the report names the sample errors of the components.
    s.mask_nonfinite = false;
    s.center = [0.3, 0.4, 0.5, 0.6];
    let r = run(&plan, &s, &mut |_| {}).unwrap();
    let names: Vec<&str> = r.sample_errors.iter().map(|e| e.0.as_str()).collect();
    assert_eq!(names, ["h_tt", "h_xx", "h_yy", "h_zz"]);
    assert!(r.sample_errors.iter().all(|e| e.1 > 0.0));

    // Parts that are not real though the components are (the imaginary parts cancel in each
    // component): the run is that of a channel per component, which finds them real.
    let text = "[define]\nf = 'sqrt(-1 - x^2)*cos(t) - sqrt(-4 - 4*x^2)*cos(t)/2 + cos(t - y)'\n\
                [perturbation]\nxx = 'f'\nyy = '-f'\nxy = '2*f'\nzz = 'f/3'\n\
                [claims]\nfield_equations = true\n";
    let plan = sampled_by_parts(text, 3);
    let plain = plan
        .by_component
        .as_deref()
        .expect("three parts, four components");
    let s = GridSettings::from_spec(None, 2);
    let st = Stencil::central(2).unwrap();
    let b = Box4 {
        center: [0.3, 0.4, 0.5, 0.6],
        spacing: 0.05,
        counts: [5; 4],
    };
    let lin = sweep::sweep(&plan, lattice(&b, &st), &mut |_, _| {});
    assert!(matches!(lin, Err(GridError::NotReal { .. })), "{lin:?}");
    let r = run(&plan, &s, &mut |_| {}).unwrap();
    assert_eq!(r, run_sampled(plain, &s, &mut |_| {}).unwrap());
    // An imaginary part far below the 1e-6 taken as rounding in a component's samples still
    // sends the run to a channel per component: in a part it is not known to be rounding.
    let text = "[define]\ne = 'sqrt(-1e-20 - 1e-20*x^2)'\nf = '(1 + e)*cos(t) - (2 + e)*cos(t) + cos(t - y)'\n\
                [perturbation]\nxx = 'f'\nyy = '-f'\nxy = '2*f'\nzz = 'f/3'\n\
                [claims]\nfield_equations = true\n";
    let plan = sampled_by_parts(text, 3);
    let lin = sweep::sweep(&plan, lattice(&b, &st), &mut |_, _| {});
    assert!(matches!(lin, Err(GridError::NotReal { .. })), "{lin:?}");
    let plain = plan.by_component.as_deref().unwrap();
    assert!(sweep::sweep(plain, lattice(&b, &st), &mut |_, _| {}).is_ok());
    assert!(run(&plan, &s, &mut |_| {}).is_ok());
}
