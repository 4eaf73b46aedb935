//! Property tests of the expression engine: algebraic laws of the canonical form, exact
//! differentiation rules, agreement with direct evaluation of the parsed tree, and soundness
//! of the zero test.
//!
//! Design decision: expressions are generated as a small tree of our own ([`G`]), printed
//! fully parenthesised and parsed, so every case goes through the real parser and both sides
//! of a numerical comparison start from the same parsed [`lingrav::Expr`]. The generated
//! language keeps every expression defined almost everywhere on the reals: roots only of
//! `g^2 + 1`, no logarithms, and an arbitrary function `F` only of linear arguments.
//!
//! The tree printing round trip `parse(e.to_string()) == e` is not repeated here: the
//! parser's own property tests cover it.
//!
//! Three properties run on a smaller language than the rest, to stay clear of known gaps of
//! the canonical form and its printer; each says which gap at its definition.
//!
//! Seeded: the proptest seed is fixed ([`DEFAULT_SEED`]) unless `PROPTEST_RNG_SEED` names
//! another, and a failing test prints the seed in use. `PROPTEST_CASES` changes the number
//! of cases (default 128 a property, a few seconds in a debug build).

use lingrav::Expr;
use lingrav::canon::{Form, FunctionSample, Limits, Names, Point, Store};
use lingrav::expr::Evaluator;
use lingrav::interval::{CInterval, Interval};
use lingrav::zero::{Sampling, Verdict, decide};
use proptest::prelude::*;
use proptest::test_runner::{Config, RngSeed};
use std::fmt;
use std::time::{Duration, Instant};

const DEFAULT_SEED: u64 = 0x00e1_9e4e_5eed;

/// The sample of the arbitrary function `F`, in the variable `u`, for the canonical side.
const SAMPLE_F: &str = "exp(-u^2/3) + u/5";

/// `F` and its first two derivatives in closed form, for the parsed-tree side.
fn sample_f(order: u32, u: f64) -> Option<f64> {
    let g = (-u * u / 3.0).exp();
    match order {
        0 => Some(g + u / 5.0),
        1 => Some(-2.0 * u / 3.0 * g + 0.2),
        2 => Some((4.0 * u * u / 9.0 - 2.0 / 3.0) * g),
        _ => None,
    }
}

fn seed() -> u64 {
    std::env::var("PROPTEST_RNG_SEED")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(DEFAULT_SEED)
}

fn config(cases: u32) -> Config {
    Config {
        // PROPTEST_CASES runs more (or fewer) cases than the default below.
        cases: std::env::var("PROPTEST_CASES")
            .ok()
            .and_then(|s| s.parse().ok())
            .unwrap_or(cases),
        rng_seed: RngSeed::Fixed(seed()),
        // A failure is reproduced from the printed seed; nothing is written under tests/.
        failure_persistence: None,
        ..Config::default()
    }
}

/// Prints the seed once per test (each test runs on its own thread); the harness shows it
/// only for a failing test.
fn announce_seed() {
    thread_local! {
        static SHOWN: std::cell::Cell<bool> = const { std::cell::Cell::new(false) };
    }
    if !SHOWN.with(|s| s.replace(true)) {
        eprintln!(
            "proptest seed {} (rerun with PROPTEST_RNG_SEED={})",
            seed(),
            seed()
        );
    }
}

// ----- the generated language ----------------------------------------------------------

/// A generated expression. Printing parenthesises every compound operand.
#[derive(Clone, Debug)]
enum G {
    Sym(&'static str),
    Int(i64),
    /// `p/q`, printed as a division of integers.
    Ratio(i64, i64),
    /// `n/100`, printed as a decimal literal such as `1.25`.
    Decimal(i64),
    Add(Box<G>, Box<G>),
    Sub(Box<G>, Box<G>),
    Mul(Box<G>, Box<G>),
    Div(Box<G>, Box<G>),
    Neg(Box<G>),
    Pow(Box<G>, i32),
    Sin(Box<G>),
    Cos(Box<G>),
    Exp(Box<G>),
    /// `sqrt(g^2 + 1)`.
    SqrtSq1(Box<G>),
    /// `F^(order)(a*x + b*y + c)`.
    F {
        order: u32,
        a: i64,
        b: i64,
        c: i64,
    },
}

impl fmt::Display for G {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            G::Sym(s) => write!(f, "{s}"),
            G::Int(n) if *n < 0 => write!(f, "({n})"),
            G::Int(n) => write!(f, "{n}"),
            G::Ratio(p, q) => write!(f, "({p}/{q})"),
            G::Decimal(n) => {
                let sign = if *n < 0 { "-" } else { "" };
                write!(f, "({sign}{}.{:02})", n.abs() / 100, n.abs() % 100)
            }
            G::Add(a, b) => write!(f, "({a} + {b})"),
            G::Sub(a, b) => write!(f, "({a} - {b})"),
            G::Mul(a, b) => write!(f, "({a}*{b})"),
            G::Div(a, b) => write!(f, "({a}/{b})"),
            G::Neg(a) => write!(f, "(-{a})"),
            G::Pow(a, n) => write!(f, "({a}^({n}))"),
            G::Sin(a) => write!(f, "sin({a})"),
            G::Cos(a) => write!(f, "cos({a})"),
            G::Exp(a) => write!(f, "exp({a})"),
            G::SqrtSq1(a) => write!(f, "sqrt({a}^2 + 1)"),
            G::F { order, a, b, c } => {
                write!(
                    f,
                    "F{}({a}*x + ({b})*y + ({c}))",
                    "'".repeat(*order as usize)
                )
            }
        }
    }
}

impl G {
    /// The same value written differently, by identities the engine must know: double
    /// angles, a split exponential, a peeled power, a negative power as a reciprocal, swapped
    /// operands, division as a negative power, a root as a power, and a derivative of `F` as
    /// the derivative operator applied to `F`.
    fn rewrite(&self) -> String {
        match self {
            G::Sym(s) => s.to_string(),
            G::Int(n) => format!("(({}) - 1)", n + 1),
            G::Ratio(p, q) => format!("({}/{})", 2 * p, 2 * q),
            G::Decimal(n) => format!("({n}/100)"),
            G::Add(a, b) => format!("({} + {})", b.rewrite(), a.rewrite()),
            G::Sub(a, b) => format!("((-1)*({} - {}))", b.rewrite(), a.rewrite()),
            G::Mul(a, b) => format!("({}*{})", b.rewrite(), a.rewrite()),
            G::Div(a, b) => format!("({}*{}^(-1))", a.rewrite(), b.rewrite()),
            G::Neg(a) => format!("(0 - {})", a.rewrite()),
            G::Pow(_, 0) => "1".to_string(),
            G::Pow(a, n) if *n > 0 => {
                let r = a.rewrite();
                format!("({r}^({})*{r})", n - 1)
            }
            G::Pow(a, n) => format!("(1/{}^({}))", a.rewrite(), -n),
            G::Sin(a) => {
                let r = a.rewrite();
                format!("(2*sin({r}/2)*cos({r}/2))")
            }
            G::Cos(a) => {
                let r = a.rewrite();
                format!("(cos({r}/2)^2 - sin({r}/2)^2)")
            }
            G::Exp(a) => format!("(exp({}/2)^2)", a.rewrite()),
            G::SqrtSq1(a) => format!("((1 + {}^2)^(1/2))", a.rewrite()),
            G::F { order, a, b, c } if *order > 0 && *a != 0 => {
                let inner = G::F {
                    order: order - 1,
                    a: *a,
                    b: *b,
                    c: *c,
                };
                format!("(d_x({inner})/({a}))")
            }
            G::F { order, a, b, c } => {
                format!("F{}(({c}) + ({b})*y + {a}*x)", "'".repeat(*order as usize))
            }
        }
    }
}

fn leaf() -> impl Strategy<Value = G> {
    prop_oneof![
        3 => prop_oneof![Just("x"), Just("y"), Just("z")].prop_map(G::Sym),
        1 => (-3i64..=5).prop_map(G::Int),
        1 => (-5i64..=5, 1i64..=4).prop_map(|(p, q)| G::Ratio(p, q)),
        1 => (-250i64..=250).prop_map(G::Decimal),
        1 => (0u32..=2, -2i64..=2, -2i64..=2, -2i64..=2)
            .prop_map(|(order, a, b, c)| G::F { order, a, b, c }),
    ]
}

/// Polynomials in the leaves (the leaves include `F` of linear arguments).
fn polynomial() -> BoxedStrategy<G> {
    leaf()
        .prop_recursive(3, 12, 2, |inner| {
            prop_oneof![
                (inner.clone(), inner.clone()).prop_map(|(a, b)| G::Add(Box::new(a), Box::new(b))),
                (inner.clone(), inner.clone()).prop_map(|(a, b)| G::Sub(Box::new(a), Box::new(b))),
                (inner.clone(), inner.clone()).prop_map(|(a, b)| G::Mul(Box::new(a), Box::new(b))),
                (inner, 0i32..=3).prop_map(|(a, n)| G::Pow(Box::new(a), n)),
            ]
        })
        .boxed()
}

/// Expressions of the generated language; with `rich_arguments` false, sin, cos and exp
/// apply only to [`polynomial`]s. Three properties use that smaller language to stay clear of
/// known gaps, each saying which.
fn expr_in(rich_arguments: bool) -> BoxedStrategy<G> {
    let poly = polynomial();
    leaf()
        .prop_recursive(4, 24, 2, move |inner| {
            let arg = if rich_arguments {
                inner.clone().boxed()
            } else {
                poly.clone()
            };
            let pair = (inner.clone(), inner.clone());
            let arms: Vec<(u32, BoxedStrategy<G>)> = vec![
                (
                    3,
                    pair.clone()
                        .prop_map(|(a, b)| G::Add(Box::new(a), Box::new(b)))
                        .boxed(),
                ),
                (
                    2,
                    pair.clone()
                        .prop_map(|(a, b)| G::Sub(Box::new(a), Box::new(b)))
                        .boxed(),
                ),
                (
                    3,
                    pair.clone()
                        .prop_map(|(a, b)| G::Mul(Box::new(a), Box::new(b)))
                        .boxed(),
                ),
                (1, inner.clone().prop_map(|a| G::Neg(Box::new(a))).boxed()),
                (
                    2,
                    (inner.clone(), -3i32..=4)
                        .prop_map(|(a, n)| G::Pow(Box::new(a), n))
                        .boxed(),
                ),
                (1, arg.clone().prop_map(|a| G::Sin(Box::new(a))).boxed()),
                (1, arg.clone().prop_map(|a| G::Cos(Box::new(a))).boxed()),
                (1, arg.prop_map(|a| G::Exp(Box::new(a))).boxed()),
                (1, inner.prop_map(|a| G::SqrtSq1(Box::new(a))).boxed()),
                (
                    2,
                    pair.prop_map(|(a, b)| G::Div(Box::new(a), Box::new(b)))
                        .boxed(),
                ),
            ];
            prop::strategy::Union::new_weighted(arms)
        })
        .boxed()
}

fn expr() -> BoxedStrategy<G> {
    expr_in(true)
}

/// A point in the cube [-2, 2]^3, values rounded to 1e-3 so reports are short.
fn point() -> impl Strategy<Value = [f64; 3]> {
    prop::array::uniform3(-2000i32..=2000).prop_map(|a| a.map(|v| f64::from(v) / 1000.0))
}

// ----- building and evaluating ---------------------------------------------------------

/// A store whose limits keep one case well under a second.
fn store() -> Store {
    let mut st = Store::new();
    st.limits = Limits {
        max_terms: 20_000,
        deadline: Some((Instant::now() + Duration::from_secs(5), 5_000)),
    };
    st
}

fn parse(src: &str) -> Expr {
    lingrav::parse::parse(src)
        .unwrap_or_else(|e| panic!("generated text {src:?} does not parse: {e}"))
}

/// The form of `src`, or `None` where building is legitimately refused: a division by an
/// expression that is identically zero (the generator can write `1/(x - x)`), or a limit.
fn build(st: &mut Store, src: &str) -> Option<Form> {
    match st.build(&parse(src), &Names::free()) {
        Ok(f) => Some(f),
        Err(e)
            if e.message.contains("identically zero")
                || e.message.contains("too large")
                || e.message.contains("too slow") =>
        {
            None
        }
        Err(e) => panic!("{src:?} does not build: {e:?}"),
    }
}

/// Building refused: skip the case.
fn built(st: &mut Store, src: &str) -> Result<Form, TestCaseError> {
    build(st, src).ok_or_else(|| TestCaseError::reject("not buildable (zero divisor or limit)"))
}

/// A limit error from form arithmetic skips the case; anything else is a failure.
fn ok<T>(r: Result<T, lingrav::canon::CanonError>) -> Result<T, TestCaseError> {
    r.map_err(|e| match e {
        lingrav::canon::CanonError::TooLarge(_) | lingrav::canon::CanonError::Timeout(_) => {
            TestCaseError::reject(format!("limit: {e}"))
        }
        other => TestCaseError::fail(format!("form arithmetic failed: {other}")),
    })
}

/// The value of the parsed tree at `p` (x, y, z), with `F` from [`sample_f`].
fn eval_tree(e: &Expr, p: [f64; 3]) -> Option<f64> {
    let values = |n: &str| match n {
        "x" => Some(p[0]),
        "y" => Some(p[1]),
        "z" => Some(p[2]),
        _ => None,
    };
    let functions = |n: &str, order: u32, u: f64| if n == "F" { sample_f(order, u) } else { None };
    e.eval(&Evaluator {
        values: &values,
        functions: &functions,
    })
    .ok()
}

/// The point `p` for the canonical side, with the sample of `F` as a form.
fn canon_point(st: &mut Store, p: [f64; 3]) -> Point {
    let mut pt = Point::default();
    for (name, v) in ["x", "y", "z"].into_iter().zip(p) {
        let k = st.symbol_kernel(name);
        pt.values
            .insert(k, CInterval::from_real(Interval::point(v).expect("finite")));
    }
    let sample = st
        .build(&parse(SAMPLE_F), &Names::free())
        .expect("the sample builds");
    let var = st.symbol_kernel("u");
    pt.samples
        .insert("F".into(), FunctionSample { var, form: sample });
    pt
}

/// Zero-test sampling with the same sample of `F` as [`canon_point`], so that witnesses can
/// be checked against the parsed tree.
fn sampling(st: &mut Store) -> Sampling {
    let form = st
        .build(&parse(SAMPLE_F), &Names::free())
        .expect("the sample builds");
    let var = st.symbol_kernel("u");
    let mut s = Sampling::default();
    s.samples.insert("F".into(), FunctionSample { var, form });
    s
}

/// Values beyond this are skipped: the comparison is about algebra, not overflow.
const HUGE: f64 = 1e8;

/// Checks that the canonical form `f` and the parsed tree `e` agree at `p`; `Ok(false)` if
/// the point is skipped (either side not finite, or huge).
fn agree_at(
    st: &mut Store,
    f: Form,
    e: &Expr,
    p: [f64; 3],
    what: &str,
) -> Result<bool, TestCaseError> {
    let Some(tree) = eval_tree(e, p) else {
        return Ok(false);
    };
    let pt = canon_point(st, p);
    let Some(v) = st.eval_interval(f, &pt) else {
        return Ok(false);
    };
    let (re, im) = (v.re.mid(), v.im.mid());
    if !re.is_finite() || !im.is_finite() || tree.abs() > HUGE || re.abs() > HUGE {
        return Ok(false);
    }
    // Relative 1e-9 of the magnitude, plus the width of the certified enclosure, which
    // measures the rounding the canonical side suffered.
    let tol = 1e-9 * tree.abs().max(re.abs()).max(1.0) + v.re.width() + v.im.width();
    prop_assert!(
        (re - tree).abs() <= tol && im.abs() <= tol,
        "{what} at (x, y, z) = {p:?}: canonical {re} + {im}i (enclosure {v:?}), parsed tree {tree}; \
         canonical form {}",
        st.to_text(f)
    );
    Ok(true)
}

/// Same form, or a difference that cancels to the zero form.
fn same_form(st: &mut Store, a: Form, b: Form) -> Result<bool, TestCaseError> {
    if a == b {
        return Ok(true);
    }
    let d = ok(st.sub(a, b))?;
    Ok(st.is_zero(d))
}

// ----- properties ----------------------------------------------------------------------

proptest! {
    #![proptest_config(config(128))]

    /// The canonical form has the value of the expression as written.
    #[test]
    fn canonical_form_agrees_with_the_parsed_tree(g in expr(), pts in prop::collection::vec(point(), 4)) {
        announce_seed();
        let src = g.to_string();
        let mut st = store();
        let f = built(&mut st, &src)?;
        let e = parse(&src);
        for p in pts {
            agree_at(&mut st, f, &e, p, &src)?;
        }
    }

    /// So does its rewritten twin, which reaches the same form through other identities.
    #[test]
    fn rewritten_expressions_agree_with_the_parsed_tree(g in expr(), pts in prop::collection::vec(point(), 3)) {
        announce_seed();
        let src = g.rewrite();
        let mut st = store();
        let f = built(&mut st, &src)?;
        let e = parse(&src);
        for p in pts {
            agree_at(&mut st, f, &e, p, &src)?;
        }
    }

    /// Printing the canonical form and reading it back gives the same form, and the same text.
    ///
    /// A known gap keeps sin, cos and exp to polynomial arguments: `exp(sin(x))` prints as
    /// `cos(i*sin(x)) - i*sin(i*sin(x))` and `sin(x/(y - 1))` as `i/2*exp(-i*x/(y - 1)) - ...`,
    /// with the imaginary unit, which reads back as a name.
    #[test]
    fn simplify_is_idempotent(g in expr_in(false)) {
        announce_seed();
        let mut st = store();
        let f = built(&mut st, &g.to_string())?;
        let text = st.to_text(f);
        let again = st.build(&parse(&text), &Names::free())
            .map_err(|e| TestCaseError::fail(format!("printed form {text:?} does not build: {e:?}")))?;
        let text2 = st.to_text(again);
        prop_assert_eq!(&text2, &text, "printing is not stable for {}", g);
        prop_assert!(again == f, "{} prints as {:?}, which builds to another form", g, text);
    }

    /// The printed form does not depend on what else the store holds (no id-order leaks).
    #[test]
    fn printing_is_independent_of_store_history(g in expr(), other in expr()) {
        announce_seed();
        let mut fresh = store();
        let f = built(&mut fresh, &g.to_string())?;
        let mut used = store();
        built(&mut used, &other.rewrite())?;
        built(&mut used, &other.to_string())?;
        let f2 = built(&mut used, &g.to_string())?;
        prop_assert_eq!(fresh.to_text(f), used.to_text(f2));
    }

    /// Sums and products are commutative on canonical forms.
    #[test]
    fn addition_and_multiplication_commute(a in expr(), b in expr()) {
        announce_seed();
        let mut st = store();
        let ab = built(&mut st, &format!("{a} + {b}"))?;
        let ba = built(&mut st, &format!("{b} + {a}"))?;
        prop_assert!(ab == ba, "{} + {}: {} vs {}", a, b, st.to_text(ab), st.to_text(ba));
        let ab = built(&mut st, &format!("{a}*{b}"))?;
        let ba = built(&mut st, &format!("{b}*{a}"))?;
        prop_assert!(ab == ba, "{} * {}: {} vs {}", a, b, st.to_text(ab), st.to_text(ba));
    }

    /// d/dx d/dy f = d/dy d/dx f exactly.
    #[test]
    fn mixed_partials_commute(g in expr()) {
        announce_seed();
        let mut st = store();
        let f = built(&mut st, &g.to_string())?;
        let fx = ok(st.diff_by_name(f, "x"))?;
        let fxy = ok(st.diff_by_name(fx, "y"))?;
        let fy = ok(st.diff_by_name(f, "y"))?;
        let fyx = ok(st.diff_by_name(fy, "x"))?;
        prop_assert!(same_form(&mut st, fxy, fyx)?, "{}: d_y d_x = {}, d_x d_y = {}", g, st.to_text(fxy), st.to_text(fyx));
    }

    /// Product, quotient and chain rules hold exactly.
    ///
    /// Arguments of sin, cos and exp stay polynomial here because of a known gap: a form
    /// whose numerator shares a factor with its denominator is not reduced (`sin(1)/sin(1)`
    /// prints as it is), so `exp(sin(1)/sin(1))` and `exp(1)` are different monomials, and
    /// the quotient rule for `x/g` with `g = (sin(1) + x)/sin(1/sin(1))` is left undecided
    /// instead of cancelling.
    #[test]
    fn differentiation_rules_hold_exactly(
        a in expr_in(false),
        b in expr_in(false),
    ) {
        announce_seed();
        let mut st = store();
        let f = built(&mut st, &a.to_string())?;
        let g = built(&mut st, &b.to_string())?;
        let df = ok(st.diff_by_name(f, "x"))?;
        let dg = ok(st.diff_by_name(g, "x"))?;

        // d(f g) = df g + f dg
        let fg = ok(st.mul(f, g))?;
        let lhs = ok(st.diff_by_name(fg, "x"))?;
        let t1 = ok(st.mul(df, g))?;
        let t2 = ok(st.mul(f, dg))?;
        let rhs = ok(st.add(t1, t2))?;
        prop_assert!(same_form(&mut st, lhs, rhs)?, "product rule fails for f = {}, g = {}", a, b);

        // d sin(f) = cos(f) df
        let s = ok(st.sin(f))?;
        let lhs = ok(st.diff_by_name(s, "x"))?;
        let c = ok(st.cos(f))?;
        let rhs = ok(st.mul(c, df))?;
        prop_assert!(same_form(&mut st, lhs, rhs)?, "chain rule for sin fails for f = {}", a);

        // d exp(f) = exp(f) df
        let e = ok(st.exp(f))?;
        let lhs = ok(st.diff_by_name(e, "x"))?;
        let rhs = ok(st.mul(e, df))?;
        prop_assert!(same_form(&mut st, lhs, rhs)?, "chain rule for exp fails for f = {}", a);

        // d sqrt(f^2 + 1) = f df / sqrt(f^2 + 1)
        let f2 = ok(st.mul(f, f))?;
        let one = st.one();
        let rad = ok(st.add(f2, one))?;
        let r = ok(st.root(rad, 2))?;
        let lhs = ok(st.diff_by_name(r, "x"))?;
        let top = ok(st.mul(f, df))?;
        let rhs = ok(st.div(top, r))?;
        prop_assert!(same_form(&mut st, lhs, rhs)?, "chain rule for sqrt fails for f = {}", a);

        // d(f/g) = (df g - f dg)/g^2, where g is not the zero form
        if !st.is_zero(g) {
            let q = ok(st.div(f, g))?;
            let lhs = ok(st.diff_by_name(q, "x"))?;
            let n = ok(st.sub(t1, t2))?;
            let g2 = ok(st.mul(g, g))?;
            let rhs = ok(st.div(n, g2))?;
            prop_assert!(same_form(&mut st, lhs, rhs)?, "quotient rule fails for f = {}, g = {}", a, b);
        }
    }

    /// An expression minus its rewritten twin is proved zero, and with a tiny 1e-20*x added
    /// it is certified nonzero.
    ///
    /// Arguments of sin, cos and exp stay polynomial because of a known gap: a denominator
    /// keeps its factors as written, and forms are compared by id inside exponentials and
    /// function arguments, so `exp(1/(x^2 - 1))` and `exp(1/((x - 1)*(x + 1)))` are different
    /// monomials and their difference is undecided; the twin of `exp(1/sin(x))` runs into it.
    #[test]
    fn rewritten_twins_are_proved_equal(g in expr_in(false)) {
        announce_seed();
        let (src, twin) = (g.to_string(), g.rewrite());
        let mut st = store();
        let f = built(&mut st, &src)?;
        let h = built(&mut st, &twin)?;
        let d = ok(st.sub(f, h))?;
        let sampling = sampling(&mut st);
        let v = decide(&mut st, d, &sampling);
        prop_assert!(v == Verdict::Zero, "{} = {} not proved: {:?}; difference {}", src, twin, v, st.to_text(d));

        let tiny = built(&mut st, "1e-20*x")?;
        let off = ok(st.add(d, tiny))?;
        let v = decide(&mut st, off, &sampling);
        prop_assert!(matches!(v, Verdict::Nonzero(_)), "({}) - ({}) + 1e-20*x not refuted: {:?}", src, twin, v);
    }

    /// The zero test is sound: an expression plus a tiny 1e-20*x, or its difference from its
    /// twin plus 1e-20*x, is never called zero.
    #[test]
    fn tiny_perturbations_are_never_called_zero(g in expr()) {
        announce_seed();
        let (src, twin) = (g.to_string(), g.rewrite());
        let mut st = store();
        let f = built(&mut st, &src)?;
        let h = built(&mut st, &twin)?;
        let tiny = built(&mut st, "1e-20*x")?;
        let sampling = sampling(&mut st);
        let perturbed = ok(st.add(f, tiny))?;
        let v = decide(&mut st, perturbed, &sampling);
        prop_assert!(v != Verdict::Zero, "{} + 1e-20*x claimed zero", src);
        let d = ok(st.sub(f, h))?;
        let off = ok(st.add(d, tiny))?;
        let v = decide(&mut st, off, &sampling);
        prop_assert!(v != Verdict::Zero, "({}) - ({}) + 1e-20*x claimed zero", src, twin);
    }

    /// A "zero" verdict means the value vanishes; a "nonzero" witness is a point where the
    /// parsed tree's value lies in the certified enclosure.
    #[test]
    fn verdicts_agree_with_the_parsed_tree(g in expr(), pts in prop::collection::vec(point(), 3)) {
        announce_seed();
        let src = g.to_string();
        let mut st = store();
        let f = built(&mut st, &src)?;
        let e = parse(&src);
        let sampling = sampling(&mut st);
        match decide(&mut st, f, &sampling) {
            Verdict::Zero => {
                for p in pts {
                    if let Some(v) = eval_tree(&e, p) {
                        prop_assert!(v.abs() <= 1e-9, "{} proved zero, but is {} at {:?}", src, v, p);
                    }
                }
            }
            Verdict::Nonzero(w) => {
                let mut p = [0.0; 3];
                for (name, v) in &w.point {
                    let i = ["x", "y", "z"].iter().position(|n| n == name)
                        .ok_or_else(|| TestCaseError::fail(format!("witness names an unknown symbol {name}")))?;
                    p[i] = *v;
                }
                if let Some(v) = eval_tree(&e, p) {
                    let (re, im) = (w.value.re, w.value.im);
                    let slack = 1e-9 * v.abs().max(1.0);
                    prop_assert!(
                        im.contains_zero() && re.lo() - slack <= v && v <= re.hi() + slack,
                        "{}: witness {:?} encloses {:?} + i{:?}, parsed tree gives {}", src, w.point, re, im, v
                    );
                }
            }
            Verdict::Undecided(_) => {}
        }
    }
}
