use super::numeric::{gauss_legendre, pattern as f64_pattern, quadrature};
use super::*;
use crate::canon::Point;

fn form(store: &mut Store, text: &str) -> Form {
    let e = crate::parse::parse(text).unwrap();
    store.build(&e, &Names::free()).unwrap()
}

fn detector(store: &mut Store, a: &str, b: &str) -> Detector {
    read_detector(
        store,
        &Sampling::default(),
        Arg::new("--arm-a", a),
        Arg::new("--arm-b", b),
    )
    .unwrap()
}

fn value(store: &mut Store, f: Form) -> f64 {
    let (re, im) = store.eval_f64(f, &Point::default()).unwrap();
    assert!(im.abs() < 1e-14, "{}", store.to_text(f));
    re
}

/// checks.md section 3, the table (tests/data/antenna_table.txt names the source):
/// `(theta, phi, psi, F_plus, F_cross)`.
fn table() -> Vec<(String, String, String, f64, f64)> {
    include_str!("../../tests/data/antenna_table.txt")
        .lines()
        .filter(|l| !l.starts_with('#') && !l.trim().is_empty())
        .map(|l| {
            let f: Vec<&str> = l.split(';').map(str::trim).collect();
            let n = |s: &str| s.parse::<f64>().unwrap();
            (f[0].into(), f[1].into(), f[2].into(), n(f[3]), n(f[4]))
        })
        .collect()
}

#[test]
fn the_exact_pattern_reproduces_the_table_of_checks_md_section_3() {
    let mut st = Store::new();
    let det = detector(&mut st, "1,0,0", "0,1,0");
    let rows = table();
    assert_eq!(rows.len(), 8);
    for (th, ph, ps, fp, fc) in rows {
        let (th, ph, ps) = (th.as_str(), ph.as_str(), ps.as_str());
        let angles = (form(&mut st, th), form(&mut st, ph), form(&mut st, ps));
        let basis = wave_basis(&mut st, angles.0, angles.1, angles.2).unwrap();
        let (p, c) = pattern(&mut st, &det.d, &basis).unwrap();
        let (p, c) = (value(&mut st, p), value(&mut st, c));
        // The table gives 12 digits.
        assert!((p - fp).abs() < 1e-11, "{th} {ph} {ps}: F_plus {p} vs {fp}");
        assert!(
            (c - fc).abs() < 1e-11,
            "{th} {ph} {ps}: F_cross {c} vs {fc}"
        );
        let num = |t: &str| numeric::eval_text(t, &[]).unwrap();
        let (q, d) = f64_pattern(
            &[1.0, 0.0, 0.0],
            &[0.0, 1.0, 0.0],
            num(th),
            num(ph),
            num(ps),
        );
        assert!(
            (q - fp).abs() < 1e-11 && (d - fc).abs() < 1e-11,
            "f64 route {q} {d}"
        );
    }
}

#[test]
fn the_l_shaped_closed_form_and_the_theta_0_identity_are_proved() {
    // checks.md section 3: F_+ and F_x of the L-shaped detector for symbolic angles, and at
    // theta = 0, F_+ = cos 2(phi + psi), F_x = sin 2(phi + psi).
    let mut st = Store::new();
    let det = detector(&mut st, "x", "y");
    let (th, ph, ps) = (
        form(&mut st, "th"),
        form(&mut st, "ph"),
        form(&mut st, "ps"),
    );
    let basis = wave_basis(&mut st, th, ph, ps).unwrap();
    let (p, c) = pattern(&mut st, &det.d, &basis).unwrap();
    let want_p = form(
        &mut st,
        "(1 + cos(th)^2)/2*cos(2*ph)*cos(2*ps) - cos(th)*sin(2*ph)*sin(2*ps)",
    );
    let want_c = form(
        &mut st,
        "(1 + cos(th)^2)/2*cos(2*ph)*sin(2*ps) + cos(th)*sin(2*ph)*cos(2*ps)",
    );
    let dp = st.sub(p, want_p).unwrap();
    let dc = st.sub(c, want_c).unwrap();
    assert!(st.is_zero(dp), "{}", st.to_text(dp));
    assert!(st.is_zero(dc), "{}", st.to_text(dc));
    let zero = st.zero();
    let basis = wave_basis(&mut st, zero, ph, ps).unwrap();
    let (p, c) = pattern(&mut st, &det.d, &basis).unwrap();
    let want_p = form(&mut st, "cos(2*(ph + ps))");
    let want_c = form(&mut st, "sin(2*(ph + ps))");
    let dp = st.sub(p, want_p).unwrap();
    let dc = st.sub(c, want_c).unwrap();
    assert!(st.is_zero(dp) && st.is_zero(dc));
}

fn analysed(a: &str, b: &str) -> (Store, Antenna) {
    let mut st = Store::new();
    let det = detector(&mut st, a, b);
    let angles = (
        form(&mut st, "th"),
        form(&mut st, "ph"),
        form(&mut st, "ps"),
    );
    let an = analyse(&mut st, &det, angles, &Sampling::default()).unwrap();
    (st, an)
}

#[test]
fn every_statement_is_proved_and_the_averages_are_two_fifths_sin_squared() {
    // 90 degrees: 2/5 and 1/5 (checks.md section 3, [CALC]); 60 degrees: (2/5)(3/4) = 3/10
    // (the closed form derived in the module docs).
    for (a, b, sum, each) in [
        ("1,0,0", "0,1,0", "2/5", "1/5"),
        ("1,0,0", "1/2,sqrt(3)/2,0", "3/10", "3/20"),
        ("0,0,1", "3/5,4/5,0", "2/5", "1/5"),
    ] {
        let (mut st, an) = analysed(a, b);
        for p in &an.proofs {
            assert_eq!(p.verdict, Verdict::Zero, "{a} {b}: {}", p.statement);
        }
        assert_eq!(an.proofs.len(), 5);
        assert_eq!(st.to_text(an.averages.sum), sum);
        assert_eq!(st.to_text(an.averages.each), each);
    }
}

#[test]
fn a_symbolic_opening_angle_gives_two_fifths_sin_squared() {
    let (mut st, an) = analysed("1,0,0", "cos(g),sin(g),0");
    assert!(an.proofs.iter().all(|p| p.verdict == Verdict::Zero));
    let want = form(&mut st, "2/5*sin(g)^2");
    let d = st.sub(an.averages.sum, want).unwrap();
    assert!(st.is_zero(d), "{}", st.to_text(d));
}

#[test]
fn the_quadrature_gives_the_averages_of_checks_md() {
    // checks.md section 3: <F+^2> = <Fx^2> = 1/5, <F+ Fx> = 0, <F+^2 + Fx^2> = 2/5 ([CALC],
    // quadrature 0.4 exactly); tolerance 1e-10 there, 1e-13 here.
    let q = quadrature(&[1.0, 0.0, 0.0], &[0.0, 1.0, 0.0]);
    assert!((q.sum - 0.4).abs() < 1e-13, "{q:?}");
    assert!((q.plus2 - 0.2).abs() < 1e-13 && (q.cross2 - 0.2).abs() < 1e-13);
    assert!(q.plus_cross.abs() < 1e-13);
    // 60 degrees: 3/10 (derived closed form), and an arm out of the plane.
    let s3 = 3f64.sqrt() / 2.0;
    let q = quadrature(&[1.0, 0.0, 0.0], &[0.5, s3, 0.0]);
    assert!((q.sum - 0.3).abs() < 1e-13, "{q:?}");
    let q = quadrature(&[0.0, 0.0, 1.0], &[0.6, 0.8, 0.0]);
    assert!((q.sum - 0.4).abs() < 1e-13, "{q:?}");
}

#[test]
fn a_plain_midpoint_rule_agrees_with_the_sixty_degree_closed_form() {
    // Independent of the Gauss-Legendre nodes: the midpoint rule in theta (with sin theta)
    // converges to 3/10 at second order.
    let s3 = 3f64.sqrt() / 2.0;
    let (a, b) = ([1.0, 0.0, 0.0], [0.5, s3, 0.0]);
    let n = 200;
    let m = 16;
    let mut acc = 0.0;
    let mut norm = 0.0;
    for i in 0..n {
        let th = (i as f64 + 0.5) * std::f64::consts::PI / n as f64;
        for j in 0..m {
            let ph = j as f64 * std::f64::consts::TAU / m as f64;
            let (p, c) = f64_pattern(&a, &b, th, ph, 0.7);
            acc += th.sin() * (p * p + c * c);
            norm += th.sin();
        }
    }
    assert!((acc / norm - 0.3).abs() < 1e-4, "{}", acc / norm);
}

#[test]
fn the_mean_projector_has_trace_two_and_is_traceless() {
    // <Lambda> keeps Lambda's traces: Lambda_ij,ij = 2 on symmetric tensors (checks.md 7c,
    // via the symmetrized trace with Lambda_ij,ji), Lambda_ii,kl = 0.
    let mut tr = Q::from_integer(0.into());
    for i in 0..3 {
        for j in 0..3 {
            tr += (mean_lambda(i, j, i, j) + mean_lambda(i, j, j, i)) * frac(1, 2);
        }
    }
    assert_eq!(tr, frac(2, 1));
    for k in 0..3 {
        for l in 0..3 {
            let s = (0..3).fold(frac(0, 1), |s, i| s + mean_lambda(i, i, k, l));
            assert_eq!(s, frac(0, 1));
        }
    }
}

#[test]
fn gauss_legendre_integrates_polynomials_exactly() {
    let nodes = gauss_legendre(12);
    let w: f64 = nodes.iter().map(|(_, w)| w).sum();
    assert!((w - 2.0).abs() < 1e-14);
    let x10: f64 = nodes.iter().map(|(x, w)| w * x.powi(10)).sum();
    assert!((x10 - 2.0 / 11.0).abs() < 1e-14, "{x10}");
}

#[test]
fn parallel_non_unit_and_unparsable_inputs_are_refused_naming_the_option() {
    let mut st = Store::new();
    let s = Sampling::default();
    let e = read_detector(
        &mut st,
        &s,
        Arg::new("--arm-a", "1,0,0"),
        Arg::new("--arm-b", "-1,0,0"),
    )
    .unwrap_err();
    assert!(e.message.contains("parallel"), "{}", e.message);
    assert_eq!(e.source_code.name(), "--arm-b");
    let e = read_detector(
        &mut st,
        &s,
        Arg::new("--arm-a", "1,1,0"),
        Arg::new("--arm-b", "0,1,0"),
    )
    .unwrap_err();
    assert!(e.message.contains("not a unit vector"), "{}", e.message);
    assert_eq!(e.source_code.name(), "--arm-a");
    assert!(read_angle(&mut st, Arg::new("--theta", "pi/")).is_err());
    assert!(read_angle(&mut st, Arg::new("--theta", "F(1)")).is_err());
}

#[test]
fn a_wrong_printed_form_is_an_internal_defect() {
    let inputs = audit::Inputs {
        arms: [
            ["1".into(), "0".into(), "0".into()],
            ["0".into(), "1".into(), "0".into()],
        ],
        angles: ["pi/3".into(), "pi/6".into(), "pi/5".into()],
    };
    let right = audit::Printed {
        plus: "-0.315251741031".into(),
        cross: "0.431013445007".into(),
        sum: "2/5".into(),
        each: "1/5".into(),
    };
    // The table's 12 digits are within the tolerance, 1e-11 (1 + |value|).
    let r = audit::audit(&inputs, &right, 1);
    assert!(!r.defect(), "{r:?}");
    assert_eq!(r.rows.len(), 6);
    let mut wrong = right.clone();
    wrong.sum = "1/5".into();
    assert_eq!(
        audit::audit(&inputs, &wrong, 1)
            .first_defect()
            .unwrap()
            .quantity,
        "sky average of F_plus^2 + F_cross^2"
    );
    // A printed value whose imaginary part does not cancel is not real: a defect.
    let mut complex = right.clone();
    complex.plus = "-0.315251741031 + i/10".into();
    assert!(audit::audit(&inputs, &complex, 1).defect());
    // Pairs of i that cancel are real.
    let mut pairs = right;
    pairs.plus = "-0.315251741031 + i*cos(2*pi/5) - i*cos(8*pi/5)".into();
    assert!(!audit::audit(&inputs, &pairs, 1).defect());
}
