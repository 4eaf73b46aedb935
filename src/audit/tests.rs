use super::*;
use crate::check::check;
use crate::problem::from_str;
use crate::zero::Verdict;
use num_rational::BigRational;
use std::path::Path;

const SEED: u64 = 0xa0d1_7e57;

fn worked() -> Vec<(String, String)> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("worked");
    crate::problem::worked_names()
        .into_iter()
        .map(|name| {
            let text = std::fs::read_to_string(dir.join(&name)).expect("readable");
            (name, text)
        })
        .collect()
}

fn audit_of(label: &str, text: &str) -> Audit {
    let problem = from_str(label, text).unwrap_or_else(|e| panic!("{label}: {e:?}"));
    Audit::new(&problem).unwrap_or_else(|e| panic!("{label}: {e}"))
}

fn exact(x: f64) -> BigRational {
    BigRational::from_float(x).expect("finite")
}

/// The exact decimal `text`.
fn dec(text: &str) -> BigRational {
    crate::jet::eval::exact_rational(&parse(text).expect("number")).expect("number")
}

fn contains_exactly(iv: Interval, q: &BigRational) -> bool {
    exact(iv.lo()) <= *q && *q <= exact(iv.hi())
}

/// Files whose every asserted claim holds (the exact check proves them).
const HOLDING: [&str; 30] = [
    // Files with bodies: their claims are about radiation, decided and audited in
    // `radiation::claims`, so no claim about h is planned here.
    "binary_wrong_waveform.toml",
    "circular_binary.toml",
    "eccentric_binary.toml",
    "eccentric_from_apsides.toml",
    "head_on_plunge.toml",
    "recoil_binary.toml",
    "spinning_star.toml",
    "de_sitter_tensor_mode.toml",
    "detector_gauge_wave.toml",
    "frw_dust_tensor_mode.toml",
    "frw_radiation_tensor_mode.toml",
    "kottler_mass_perturbation.toml",
    "linear_wave_testbed.toml",
    "lorenz_oblique.toml",
    "lorenz_oblique_tt.toml",
    "lorenz_wave.toml",
    "oblique_wave.toml",
    "plummer_sign_anchor.toml",
    "pure_gauge.toml",
    "schwarzschild_mass_perturbation.toml",
    "schwarzschild_odd_l2_decaying.toml",
    "schwarzschild_odd_l2_static.toml",
    "schwarzschild_pure_gauge.toml",
    "schwarzschild_slow_rotation.toml",
    "spherical_point_mass.toml",
    "static_mass.toml",
    "teukolsky_l2_wave.toml",
    "uniform_ball.toml",
    "vibrating_rod.toml",
    "arctan_front_with_angle_gauge.toml",
];

/// The deliberately wrong files and the asserted claims that fail in each (the others hold:
/// a wrong file about a background still has a background that solves its equations, and a
/// spoiled coefficient may leave a gauge condition intact).
const WRONG: [(&str, &[&str]); 4] = [
    (
        "dropped_near_zone.toml",
        &["field_equations", "gauge.lorenz"],
    ),
    (
        "schwarzschild_wrong_slow_rotation.toml",
        &["field_equations"],
    ),
    (
        "teukolsky_wrong_coefficient.toml",
        &["field_equations", "gauge.lorenz", "gauge.tt"],
    ),
    ("wrong_sign_wave.toml", &["field_equations", "gauge.tt"]),
];

/// Files with `far_zone_order`: their components are claimed O(1/r^n) at fixed t - r, not 0,
/// so the tests of exact values below do not apply to them (their verdicts are audited along
/// rays: see `check::farzone`'s tests).
const FAR_ZONE: [&str; 5] = [
    "dropped_near_zone_far_zone.toml",
    "rod_quadrupole_formula_match.toml",
    "rotating_bar_far_zone.toml",
    "schwarzschild_mass_far_zone.toml",
    "spherical_wave_far_zone.toml",
];

/// The worked files whose claims are about exact values.
fn exact_worked() -> Vec<(String, String)> {
    worked()
        .into_iter()
        .filter(|(n, _)| !FAR_ZONE.contains(&n.as_str()))
        .collect()
}

fn is_wrong(label: &str) -> bool {
    WRONG.iter().any(|(w, _)| *w == label)
}

/// The claim `key` of `label` is meant to fail.
fn meant_to_fail(label: &str, key: &str) -> bool {
    WRONG
        .iter()
        .any(|(w, keys)| *w == label && keys.contains(&key))
}

/// About a background with a \[gauge_vector\], the audit plans pure gauge both by the
/// linearized Riemann tensor and by the vector (whichever the exact route can use, see
/// `curved_claims`); the exact route reports only one of them. True for the audit's claim
/// that the exact report does not have.
fn unused_route(claim: &AuditClaim, exact: &[(String, Vec<String>)]) -> bool {
    let names: Vec<String> = claim.component_names().map(str::to_string).collect();
    claim.key == "pure_gauge" && !exact.iter().any(|(k, n)| *k == claim.key && *n == names)
}

#[test]
fn every_worked_file_is_covered() {
    let names: Vec<String> = worked().into_iter().map(|(n, _)| n).collect();
    let mut listed: Vec<&str> = HOLDING
        .iter()
        .copied()
        .chain(WRONG.iter().map(|(w, _)| *w))
        .chain(FAR_ZONE)
        .collect();
    listed.sort_unstable();
    assert_eq!(names, listed);
}

/// An audit's claims and component names are exactly those of the exact check, and every
/// verdict of the exact check is confirmed: components proved zero contain 0 at seeded
/// points, certified witnesses exclude 0 again at the same point.
#[test]
fn names_and_verdicts_agree_with_the_exact_check() {
    let (mut proved, mut witnessed) = (0, 0);
    for (label, text) in exact_worked() {
        let audit = audit_of(&label, &text);
        let mut problem = from_str(&label, &text).expect("reads");
        let report = check(&mut problem);
        let exact_names: Vec<(String, Vec<String>)> = report
            .claims
            .iter()
            .map(|c| {
                (
                    c.key.clone(),
                    c.components.iter().map(|x| x.name.clone()).collect(),
                )
            })
            .collect();
        let audit_names: Vec<(String, Vec<String>)> = audit
            .claims()
            .iter()
            .filter(|c| !unused_route(c, &exact_names))
            .map(|c| {
                (
                    c.key.clone(),
                    c.component_names().map(str::to_string).collect(),
                )
            })
            .collect();
        assert_eq!(audit_names, exact_names, "{label}");

        let points = audit.seeded_points(SEED, 3);
        let at: Vec<Vec<ComponentValue>> = points
            .iter()
            .map(|p| audit.components_at(p).expect("point is complete"))
            .collect();
        // The audit's values in the exact report's order (the audit may plan one more
        // claim, see `unused_route`).
        let index = |values: &[ComponentValue], key: &str, name: &str| -> usize {
            values
                .iter()
                .position(|v| v.claim == key && v.component == name)
                .unwrap_or_else(|| panic!("{label}: no audit value for {key} {name}"))
        };
        let mut wrong_witnessed = 0;
        for claim in &report.claims {
            for comp in &claim.components {
                match &comp.verdict {
                    Verdict::Zero => {
                        proved += 1;
                        for (p, values) in points.iter().zip(&at) {
                            let i = index(values, &claim.key, &comp.name);
                            let v = values[i].value.unwrap_or_else(|| {
                                panic!("{label} {}: not evaluable at {p:?}", comp.name)
                            });
                            assert!(
                                v.contains_zero(),
                                "{label}: {} proved zero but {v} at {p:?}",
                                comp.name
                            );
                        }
                    }
                    Verdict::Nonzero(w) => {
                        witnessed += 1;
                        if is_wrong(&label) {
                            wrong_witnessed += 1;
                        }
                        let point = audit.complete(&w.point, 0.75);
                        let values = audit.components_at(&point).expect("witness point");
                        let i = index(&values, &claim.key, &comp.name);
                        let v = values[i].value.expect("evaluable at the witness");
                        assert!(
                            v.excludes_zero(),
                            "{label}: {} certified nonzero at {:?}, audit {v}",
                            comp.name,
                            w.point
                        );
                    }
                    Verdict::Undecided(_) => {}
                }
            }
        }
        if is_wrong(&label) {
            assert!(wrong_witnessed > 0, "{label}: no failing component");
        }
    }
    // Both kinds of verdict were confirmed, not just one.
    assert!(
        proved > 100 && witnessed > 10,
        "{proved} proofs, {witnessed} witnesses"
    );
}

/// Without the exact check: the claims of the correct files vanish at seeded points, and
/// every asserted claim of the deliberately wrong files has a component excluding 0.
#[test]
fn claims_of_worked_files_at_seeded_points() {
    for (label, text) in exact_worked() {
        let audit = audit_of(&label, &text);
        let points = audit.seeded_points(SEED ^ 1, 4);
        let values: Vec<Vec<ComponentValue>> = points
            .iter()
            .map(|p| audit.components_at(p).expect("complete point"))
            .collect();
        let both_routes = audit
            .claims()
            .iter()
            .filter(|c| c.key == "pure_gauge")
            .count()
            > 1;
        for claim in audit.claims() {
            let names: Vec<&str> = claim.component_names().collect();
            if both_routes && names.first().is_some_and(|n| n.starts_with("R_")) {
                // The Riemann route on a curved background with a [gauge_vector]: the exact
                // route decides by the vector (L_xi Rbar need not vanish).
                continue;
            }
            let of_claim = |vals: &Vec<ComponentValue>| -> Vec<Option<Interval>> {
                vals.iter()
                    .filter(|v| v.claim == claim.key && names.contains(&v.component.as_str()))
                    .map(|v| v.value)
                    .collect()
            };
            let some_nonzero = values.iter().any(|v| {
                of_claim(v)
                    .iter()
                    .any(|x| x.is_some_and(|x| x.excludes_zero()))
            });
            let wrong = meant_to_fail(&label, &claim.key);
            match (claim.asserted, wrong) {
                (Some(true), false) => {
                    for (p, v) in points.iter().zip(&values) {
                        for x in of_claim(v) {
                            let x = x.unwrap_or_else(|| panic!("{label}: not evaluable at {p:?}"));
                            assert!(x.contains_zero(), "{label} {}: {x} at {p:?}", claim.key);
                        }
                    }
                }
                (Some(false), false) | (Some(true), true) => {
                    assert!(
                        some_nonzero,
                        "{label} {}: nothing certified nonzero",
                        claim.key
                    )
                }
                _ => {}
            }
        }
    }
}

#[test]
fn fields_match_direct_derivatives() {
    // static_mass: h_tt = 2m/r; d_x h_tt = -2 m x / r^3; d_x d_y h_tt = 6 m x y / r^5.
    let (_, text) = worked()
        .into_iter()
        .find(|(n, _)| n == "static_mass.toml")
        .expect("present");
    let audit = audit_of("static_mass", &text);
    let (m, x, y, z) = (0.01, 0.5, -1.0, 0.75);
    let f = audit
        .fields_at(&[("t", 0.0), ("x", x), ("y", y), ("z", z), ("m", m)])
        .expect("point");
    let r: f64 = (x * x + y * y + z * z).sqrt();
    let close = |iv: Option<Interval>, want: f64| {
        let iv = iv.expect("evaluable");
        assert!(
            (iv.mid() - want).abs() <= 1e-14 * want.abs().max(1e-300),
            "{iv} vs {want}"
        );
        assert!(iv.width() <= 1e-13 * want.abs());
    };
    close(f.h(0, 0), 2.0 * m / r);
    close(f.h(3, 3), 2.0 * m / r);
    close(f.dh(1, 0, 0), -2.0 * m * x / r.powi(3));
    close(f.ddh(1, 2, 1, 1), 6.0 * m * x * y / r.powi(5));
    assert_eq!(f.h(0, 1), Some(Interval::ZERO));
    assert!(f.dh(0, 0, 0).expect("evaluable").contains_zero());
    assert_eq!(f.t(0, 0), None);
    // Errors name the culprit.
    assert_eq!(
        audit.fields_at(&[("x", 1.0)]).map(|_| ()),
        Err(AuditError::Missing("t".into()))
    );
    assert_eq!(
        audit
            .fields_at(&[("t", 0.0), ("x", 1.0), ("y", 1.0), ("z", 1.0), ("w", 1.0)])
            .map(|_| ()),
        Err(AuditError::Unknown("w".into()))
    );
}

#[test]
fn expression_api_values_and_derivatives() {
    let e = parse("d_a(sin(a*x)) + F'(x)").expect("parses");
    let j = eval_expr_at(&e, &[("x", 0.5), ("a", 2.0)], &["x"], 1, &[("F", "u^3")]).expect("plans");
    assert_eq!(j.vars, ["x", "a"]);
    // x cos(a x) + 3 x^2 at (0.5, 2).
    let want = 0.5 * 1f64.cos() + 0.75;
    assert!((j.value().expect("evaluable").mid() - want).abs() < 1e-14);
    // d_x: cos(ax) - a x sin(ax) + 6x.
    let dx = j.derivative(&["x"]).expect("order 1");
    assert!((dx.mid() - (1f64.cos() - 1f64.sin() + 3.0)).abs() < 1e-14);
    assert_eq!(j.derivative(&["x", "x"]), None);
    // Unknown functions get the generic sample; unknown names need values.
    let e = parse("G(y) + H(y)").expect("parses");
    let j = eval_expr_at(&e, &[("y", 0.3)], &[], 0, &[]).expect("plans");
    let g0 = |u: f64| (-u * u / 4.0).exp() * (1.0 + 2.0 * u / 7.0) + (5.0 * u / 4.0).sin() / 2.0;
    let g1 = |u: f64| (-u * u / 5.0).exp() * (1.0 + 3.0 * u / 7.0) + (7.0 * u / 4.0).sin() / 3.0;
    assert!((j.value().expect("evaluable").mid() - g0(0.3) - g1(0.3)).abs() < 1e-14);
    assert_eq!(
        eval_expr_at(&e, &[("x", 0.3)], &[], 0, &[]).map(|_| ()),
        Err(AuditError::Missing("y".into()))
    );
    assert_eq!(
        generic_sample_text(0),
        "exp(-u^2/4) * (1 + 2*u/7) + sin(5*u/4)/2"
    );
}

const PHASE_WAVE: &str = r#"
[parameters]
a = 1.0e-3
w = 2.0
v = 0.3

[define]
phase = 'w*(t - z)/(1 + v) + pi/8'

[perturbation]
xx = 'a*cos(phase)'
yy = 'YY'

[claims]
field_equations = true
gauge = ['tt']
"#;

/// Issue 9: a pi phase dropped by the canonical form made a false claim "proved". The audit
/// evaluates the phase as written.
#[test]
fn issue9_pi_phase_in_a_wave_is_seen() {
    // With h_yy missing the pi/8, the trace does not vanish.
    let text = PHASE_WAVE.replace("YY", "-a*cos(w*(t - z)/(1 + v))");
    let audit = audit_of("phase", &text);
    let point = [("t", 0.3), ("x", 1.0), ("y", -0.5), ("z", -0.4)];
    let values = audit.components_at(&point).expect("point");
    let trace = values
        .iter()
        .find(|v| v.component == "h_xx + h_yy + h_zz")
        .and_then(|v| v.value)
        .expect("evaluable");
    // mpmath 1.3.0 at 40 digits: a (cos(p + pi/8) - cos(p)), p = w (t - z)/(1 + v).
    assert!(trace.excludes_zero());
    assert!(contains_exactly(
        trace,
        &dec("-0.0003730381952995562968904544091603864558019")
    ));
    // With the phase in both, every claimed component vanishes.
    let text = PHASE_WAVE.replace("YY", "-a*cos(phase)");
    let audit = audit_of("phase", &text);
    for p in audit.seeded_points(SEED, 4) {
        for v in audit.components_at(&p).expect("point") {
            let x = v.value.expect("evaluable");
            assert!(x.contains_zero(), "{}: {x} at {p:?}", v.component);
        }
    }
}

/// Issue 9: an irrational multiple of pi inside a constant factor must not vanish either.
#[test]
fn issue9_sin_pi_ninths_factor_is_seen() {
    let text = r#"
[parameters]
q = 0.75

[perturbation]
tt = 'sin(pi/9)*exp(q/(2 + y^2))'

[claims]
gauge = ['synchronous']
"#;
    let audit = audit_of("sin_pi_9", text);
    let point = [("t", 0.1), ("x", 0.2), ("y", 0.5), ("z", 0.3)];
    let values = audit.components_at(&point).expect("point");
    let htt = values
        .iter()
        .find(|v| v.component == "h_tt")
        .and_then(|v| v.value)
        .expect("evaluable");
    // mpmath 1.3.0 at 40 digits: sin(pi/9) exp(0.75/2.25) and its second y-derivative.
    assert!(htt.excludes_zero());
    assert!(contains_exactly(
        htt,
        &dec("0.4773275616550284581905841785373566673943")
    ));
    let f = audit.fields_at(&point).expect("point");
    let yy = f.ddh(2, 2, 0, 0).expect("evaluable");
    assert!(contains_exactly(
        yy,
        &dec("-0.06809611304817964286943862080642673993005")
    ));
    assert!(yy.excludes_zero());
    for v in &values {
        if v.component != "h_tt" {
            let x = v.value.expect("evaluable");
            assert!(
                x.contains_zero() && x.width() < 1e-300,
                "{}: {x}",
                v.component
            );
        }
    }
}
