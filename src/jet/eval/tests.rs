use super::*;
use crate::interval::Interval;
use crate::parse::parse;

fn p(src: &str) -> Expr {
    parse(src).unwrap_or_else(|e| panic!("{src:?}: {e}"))
}

/// The exact decimal `text` as a rational.
fn dec(text: &str) -> BigRational {
    exact_rational(&p(text)).expect("a number")
}

fn contains(iv: &Interval, q: &BigRational) -> bool {
    let lo = BigRational::from_float(iv.lo()).expect("finite");
    let hi = BigRational::from_float(iv.hi()).expect("finite");
    lo <= *q && *q <= hi
}

struct Case {
    scope: Scope,
    values: Vec<(&'static str, &'static str)>,
}

impl Case {
    fn new(vars: &[&str], values: &[(&'static str, &'static str)]) -> Case {
        let vars: Vec<String> = vars.iter().map(|v| v.to_string()).collect();
        let parameters = values
            .iter()
            .map(|(n, _)| n.to_string())
            .filter(|n| !vars.contains(n))
            .collect();
        Case {
            scope: Scope {
                vars,
                parameters,
                ..Scope::default()
            },
            values: values.to_vec(),
        }
    }

    fn define(mut self, name: &str, src: &str) -> Case {
        self.scope.defines.push((name.into(), p(src)));
        self
    }

    fn function(mut self, name: &str, src: &str) -> Case {
        self.scope.functions.push((name.into(), p(src)));
        self
    }

    fn program(&self, src: &str, order: u32) -> Result<Program, EvalError> {
        Program::new(&self.scope, vec![(p(src), order)])
    }

    fn jet(&self, src: &str, order: u32) -> Option<Jet<Interval>> {
        let prog = self
            .program(src, order)
            .unwrap_or_else(|e| panic!("{src}: {e}"));
        let values: FxHashMap<String, Interval> = self
            .values
            .iter()
            .map(|(n, v)| (n.to_string(), rational(v)))
            .collect();
        prog.eval_roots(&values, &())
            .expect("values given")
            .remove(0)
    }

    /// The partial derivative `exps` (in the program's variables) of `src` must contain
    /// the exact decimal `want`, and be tight.
    fn check(&self, src: &str, exps: &[u8], want: &str) {
        let order = exps.iter().map(|&e| u32::from(e)).sum();
        let j = self
            .jet(src, order)
            .unwrap_or_else(|| panic!("{src}: not evaluable"));
        let mut e = exps.to_vec();
        e.resize(j.space().vars(), 0);
        let d = j.partial(&e, &()).expect("in order");
        let q = dec(want);
        assert!(
            contains(&d, &q),
            "{src} {exps:?}: {d} does not contain {want}"
        );
        assert!(d.width() < 1e-9 * d.mag().max(1.0), "{src}: {d} is loose");
    }
}

fn rational(text: &str) -> Interval {
    <Interval as Scalar>::from_rational(&dec(text), &()).expect("finite")
}

// Reference values: mpmath 1.3.0, `mp.diff` at 40 significant digits (mp.dps = 40).

#[test]
fn derivatives_match_mpmath() {
    let c = Case::new(&["x", "y"], &[("x", "0.7"), ("y", "-1.3")]);
    let f = "exp(sin(x*y))/(1 + x^2)";
    c.check(f, &[0, 0], "0.3047450176748834124590973863124949616345");
    c.check(f, &[1, 1], "-0.2593857494452095925883591242121914062431");
    c.check(f, &[2, 1], "-0.2261677658762328654289660905187341427895");
    c.check(
        "(x^2 + 1)^(x*y)",
        &[1, 1],
        "0.468257340960464869927169344943181825739",
    );
    let u = |v: &'static str| Case::new(&["x"], &[("x", v)]);
    u("0.4").check("tan(x)", &[5], "48.66469391697727535792670070612063467047");
    u("0.3").check("tanh(x)", &[4], "3.722485816613720073018242484845042113436");
    u("1.7").check(
        "x^(2/3)",
        &[3],
        "0.08590374015502722721849940888762522042945",
    );
    u("2.5").check("log(x)", &[4], "-0.1536");
    u("0.9").check(
        "sqrt(x)",
        &[3],
        "0.4880058117543795265430391272272713786604",
    );
    u("-0.6").check("sinh(x)", &[3], "1.185465218242267703751913292697716194357");
    u("-0.6").check("cosh(x)", &[2], "1.185465218242267703751913292697716194357");
}

/// The point (t, x, y, z) = (0.5, 1.25, -0.75, 0.5) with the sample Q = exp(-u^2/2) sin(3u),
/// shared by the tests of sampled functions.
fn sampled_case() -> Case {
    Case::new(
        &["t", "x", "y", "z"],
        &[("t", "0.5"), ("x", "1.25"), ("y", "-0.75"), ("z", "0.5")],
    )
    .function("Q", "exp(-u^2/2)*sin(3*u)")
}

#[test]
fn arbitrary_functions_through_samples_match_mpmath() {
    // Q''(t - r)/r with Q = exp(-u^2/2) sin(3u), at (t, x, y, z) = (0.5, 1.25, -0.75, 0.5).
    let c = sampled_case()
        .define("r", "sqrt(x^2 + y^2 + z^2)")
        .define("q2", "Q''(t - r)/r");
    c.check(
        "q2",
        &[0, 0, 0, 0],
        "-2.295572078026486073705287046397663883837",
    );
    c.check(
        "q2",
        &[0, 1, 0, 0],
        "-6.992835141850999938815058506266219739025",
    );
    c.check(
        "q2",
        &[1, 0, 0, 1],
        "-18.65861568334817202161063983367985820471",
    );
    // The same through the operator: d_x(q2) and d_t_z(q2) as values.
    c.check(
        "d_x(q2)",
        &[0, 0, 0, 0],
        "-6.992835141850999938815058506266219739025",
    );
    c.check(
        "d_t_z(q2)",
        &[0, 0, 0, 0],
        "-18.65861568334817202161063983367985820471",
    );
    c.check(
        "d_z(d_t(q2))",
        &[0, 0, 0, 0],
        "-18.65861568334817202161063983367985820471",
    );
}

/// Samples of one name recur with different derivatives, and two functions share an
/// argument: each (function, derivative, order) is its own, also when computed once per
/// point. Q = exp(-u^2/2) sin(3u), F = u^3, w = t - r, at (0.5, 1.25, -0.75, 0.5); the
/// values from mpmath (45 digits, `mpmath.diff`).
#[test]
fn samples_of_one_argument_keep_their_derivatives_apart() {
    let c = sampled_case()
        .function("F", "u^3")
        .define("w", "t - sqrt(x^2 + y^2 + z^2)");
    let e = "Q(w) + 2*Q'(w) + Q''(w)*Q(w) + F(w) + F'(w)";
    c.check(
        e,
        &[0, 0, 0, 0],
        "-1.361016670012622971504295923051991822118",
    );
    c.check(
        e,
        &[1, 0, 0, 0],
        "-5.780774086401358556795941450857504677822",
    );
    c.check(
        e,
        &[1, 1, 0, 0],
        "12.69531674835226091221346454923981558253",
    );
    // The same at order 0 first, then a higher order in the same expression.
    c.check(
        &format!("Q(w) + d_t_x({e})"),
        &[0, 0, 0, 0],
        "12.68468418515275995383625449526172145242",
    );
}

/// The sample's variable `u` is its own, also when the outer expression has a symbol `u`:
/// F(x) with F = u^2 is x^2, whatever u is (found by the audit of `lingrav zero 'F(x)*u'`,
/// issue 9).
#[test]
fn issue9_a_sample_variable_shadows_an_outer_u() {
    let scope = Scope {
        parameters: vec!["x".into(), "u".into()],
        functions: vec![("F".into(), p("u^2"))],
        ..Scope::default()
    };
    let prog = Program::new(&scope, vec![(p("F(x)*u"), 0)]).expect("plans");
    let values: FxHashMap<String, Interval> = [("x", 3.0), ("u", 5.0)]
        .into_iter()
        .map(|(n, v)| (n.to_string(), Interval::point(v).expect("finite")))
        .collect();
    let v = prog.eval_roots(&values, &()).expect("values")[0]
        .clone()
        .expect("evaluable");
    assert!(v.value().contains(45.0), "{:?}", v.value());
}

#[test]
fn d_by_a_parameter_makes_it_active() {
    let c = Case::new(&["x"], &[("x", "0.5"), ("a", "2")]);
    let prog = c.program("d_a(sin(a*x))", 1).expect("plans");
    assert_eq!(prog.vars(), ["x".to_string(), "a".to_string()]);
    // d_a sin(a x) = x cos(a x); its d_x is cos(ax) - a x sin(ax).
    let j = c.jet("d_a(sin(a*x))", 1).expect("evaluable");
    let want = 0.5 * 1f64.cos();
    assert!((j.value().mid() - want).abs() < 1e-15);
    let dx = j.partial(&[1, 0], &()).expect("order 1");
    assert!((dx.mid() - (1f64.cos() - 1f64.sin())).abs() < 1e-14);
    // Mixed partials commute: d_x_a = d_a_x.
    let a = c.jet("d_x_a(a^3*x^2)", 0).expect("evaluable");
    let b = c.jet("d_a_x(a^3*x^2)", 0).expect("evaluable");
    assert!(a.value().contains(12.0) && b.value().contains(12.0));
}

#[test]
fn defines_are_shared_at_the_highest_order_needed() {
    let c = Case::new(&["x"], &[("x", "1")])
        .define("s", "x^3")
        .define("w", "d_x_x(s) + s");
    let prog = c.program("d_x(w) + w", 1).expect("plans");
    // w at order 2 (d_x at 1 + 1), s at order 4.
    assert_eq!(prog.define_order, vec![Some(4), Some(2)]);
    assert_eq!(prog.space().max_order(), 4);
    // w = 6x + x^3; d_x w + w = 6 + 3x^2 + 6x + x^3 = 16 at 1; derivative 6x + 6 + 3x^2 = 15.
    let j = c.jet("d_x(w) + w", 1).expect("evaluable");
    assert!(j.value().contains(16.0));
    assert!(j.partial(&[1], &()).expect("order 1").contains(15.0));
}

#[test]
fn powers_follow_the_real_rules() {
    let c = Case::new(&["y"], &[("y", "-2")]);
    assert!(
        c.jet("y^3", 1)
            .expect("integer power")
            .value()
            .contains(-8.0)
    );
    assert!(
        c.jet("y^(4/2)", 1)
            .expect("exact integer")
            .value()
            .contains(4.0)
    );
    assert!(
        c.jet("y^-2", 1)
            .expect("integer power")
            .value()
            .contains(0.25)
    );
    assert!(c.jet("y^(1/3)", 1).is_none());
    assert!(c.jet("y^y", 1).is_none());
    assert!(c.jet("sqrt(y)", 0).is_none());
    assert!(c.jet("log(y)", 0).is_none());
    assert!(c.jet("1/(y + 2)", 0).is_none());
    let c = Case::new(&["y"], &[("y", "2")]);
    assert!(
        c.jet("2^y", 1)
            .expect("positive base")
            .value()
            .contains(4.0)
    );
    assert!(
        c.jet("y^(1/2)", 0)
            .expect("root")
            .value()
            .contains(2f64.sqrt())
    );
}

#[test]
fn pi_and_exact_numbers() {
    let c = Case::new(&["x"], &[("x", "0")]);
    let v = c.jet("sin(pi/9)", 0).expect("evaluable");
    // mpmath 1.3.0 at 40 digits: sin(pi/9).
    assert!(contains(
        v.value(),
        &dec("0.3420201433256687330440996146822595807631")
    ));
    let v = c.jet("1e-400 * 1e400 + 1/3", 0);
    // 1e-400 is enclosed in [0, 5e-324] and 1e400 overflows: not evaluable, never wrong.
    assert!(v.is_none());
    let v = c.jet("(1e200 * 1e-200) + 1/3", 0).expect("evaluable");
    assert!(contains(v.value(), &dec("4/3")));
    // An exact rational that underflows still encloses its value.
    let v = c.jet("1e-400", 0).expect("evaluable");
    assert!(v.value().contains_zero() && v.value().hi() > 0.0);
}

#[test]
fn structural_errors() {
    let c = Case::new(&["x"], &[("x", "1")]).define("r", "x^2");
    assert!(matches!(c.program("q + x", 0), Err(EvalError::UnknownName(n, _)) if n == "q"));
    assert!(matches!(c.program("F(x)", 0), Err(EvalError::UnknownFunction(n, _)) if n == "F"));
    assert!(matches!(
        c.program("sin'(x)", 0),
        Err(EvalError::PrimedBuiltin(..))
    ));
    assert!(matches!(
        c.program("d_r(x)", 0),
        Err(EvalError::NotAVariable(..))
    ));
    let big = Scope {
        vars: (0..12).map(|i| format!("v{i}")).collect(),
        ..Scope::default()
    };
    assert!(matches!(
        Program::new(
            &big,
            vec![(p("d_v1_v2_v3_v4_v5_v6_v7_v8_v9_v10_v11(v0)"), 3)]
        ),
        Err(EvalError::TooLarge(_))
    ));
    let prog = c.program("x + a", 0);
    assert!(matches!(prog, Err(EvalError::UnknownName(..))));
    let prog = Program::new(
        &Scope {
            vars: vec!["x".into()],
            parameters: vec!["a".into()],
            ..Scope::default()
        },
        vec![(p("x + a"), 0)],
    )
    .expect("plans");
    let values: FxHashMap<String, Interval> =
        [("x".to_string(), Interval::ONE)].into_iter().collect();
    assert_eq!(
        prog.eval_roots(&values, &()).map(|_| ()),
        Err(EvalError::MissingValue("a".into()))
    );
}

#[test]
fn deep_expressions_stay_within_the_stack() {
    let mut src = String::from("x");
    for _ in 0..crate::parse::MAX_DEPTH / 2 - 2 {
        src = format!("sin({src})");
    }
    let c = Case::new(&["x"], &[("x", "0.5")]);
    let j = c.jet(&src, 2).expect("evaluable");
    assert!(j.value().excludes_zero());
}

#[test]
fn helpers_list_names() {
    let e = p("d_a(F(x) + G'(pi*y)) + a*sin(z)");
    assert_eq!(free_names(&e), ["a", "x", "y", "z"]);
    assert_eq!(called_functions(&e), ["F", "G"]);
    assert_eq!(exact_rational(&p("-(4/2)^3 + 1")), Some(int(-7)));
    assert_eq!(exact_rational(&p("1/(2 - 2)")), None);
}

/// A product with a written number or a variable, taken in place, is the product of the
/// two jets bit for bit: each pair is written once so that the in-place road applies and
/// once so that it does not (`(3 + 0)` and `(y + 0)` are not a number or a variable, but
/// the same jets), at points with rounding and at an exact 0.
#[test]
fn products_in_place_are_the_general_products() {
    let pairs = [
        (
            "3*x*y^2 - 2*t*x*z",
            "(3 + 0)*x*(y + 0)^2 - (2 + 0)*t*(x + 0)*(z + 0)",
        ),
        ("x*t*7", "(x + 0)*(t + 0)*(7 + 0)"),
        ("sin(x)*y*z", "sin(x)*(y + 0)*(z + 0)"),
        ("(x^2 + y)*x*0.1", "(x^2 + y)*(x + 0)*(0.1 + 0)"),
        ("a*x*2", "a*(x + 0)*(2 + 0)"),
    ];
    for point in [["0.3", "-1.7", "2.25", "1/3"], ["0", "-1.7", "0", "1/7"]] {
        let values: Vec<(&'static str, &'static str)> = ["t", "x", "y", "z"]
            .into_iter()
            .zip(point)
            .chain([("a", "5/7")])
            .collect();
        let c = Case::new(&["t", "x", "y", "z"], &values);
        for (fast, general) in pairs {
            for order in 0..=3 {
                let f = c.jet(fast, order).expect("evaluable");
                let g = c.jet(general, order).expect("evaluable");
                assert_eq!(
                    format!("{f:?}"),
                    format!("{g:?}"),
                    "{fast} at {point:?}, order {order}"
                );
            }
        }
    }
}

/// The rising product `(k + n)!/k!` is the quotient of the factorials, bit for bit, also
/// beyond the machine integers (26!/1! does not fit in 64 bits).
#[test]
fn rising_products_are_the_quotients_of_factorials() {
    for k in 0..30 {
        for n in 0..30 {
            let q = factorial(k + n) / factorial(k);
            let want = <Interval as Scalar>::from_rational(&q, &()).expect("finite");
            let got = rising::<Interval>(k, n, &()).expect("finite");
            assert_eq!(format!("{got:?}"), format!("{want:?}"), "k = {k}, n = {n}");
        }
    }
}

mod against_direct_evaluation {
    use super::*;
    use crate::expr::Evaluator;
    use proptest::prelude::*;

    const EXPRS: [&str; 8] = [
        "x*y + 3",
        "sin(x*y)/(2 + cos(x))",
        "exp(-x^2/3) * (1 + 2*x/7) + tanh(y)",
        "sqrt(1 + x^2 + y^2)^3 - log(2 + sinh(x)^2)",
        "(1 + x^2)^(y/3) + tan(x/4)",
        "cosh(y)^-2 + x^(4/2) - pi*y",
        "F(x - y) + F''(x*y)",
        "d_x(sin(x*y)) - y*cos(x*y) + 1",
    ];

    proptest! {
        /// The value of each jet meets the plain f64 evaluation of the same text (a loose
        /// check of the value, independent of jets), and is tight.
        #[test]
        fn values_meet_the_f64_evaluator(x0 in -2.0f64..2.0, y0 in -2.0f64..2.0) {
            let c = Case {
                scope: Scope {
                    vars: vec!["x".into(), "y".into()],
                    functions: vec![("F".into(), p("u^3 - u"))],
                    ..Scope::default()
                },
                values: Vec::new(),
            };
            let mut values: FxHashMap<String, Interval> = FxHashMap::default();
            values.insert("x".into(), Interval::point(x0).unwrap());
            values.insert("y".into(), Interval::point(y0).unwrap());
            for src in EXPRS {
                let prog = c.program(src, 2).unwrap();
                let j = prog.eval_roots(&values, &()).unwrap().remove(0).unwrap();
                let want = if src.starts_with("d_x") {
                    1.0
                } else {
                    p(src)
                        .eval(&Evaluator {
                            values: &|n| match n {
                                "x" => Some(x0),
                                "y" => Some(y0),
                                _ => None,
                            },
                            functions: &|_, k, u| match k {
                                0 => Some(u * u * u - u),
                                2 => Some(6.0 * u),
                                _ => None,
                            },
                        })
                        .unwrap()
                };
                let v = j.value();
                let tol = 1e-12 * want.abs().max(1.0);
                prop_assert!(v.lo() - tol <= want && want <= v.hi() + tol, "{}: {} vs {}", src, v, want);
                prop_assert!(v.width() < 1e-10 * want.abs().max(1.0), "{}: {}", src, v);
            }
        }
    }
}
