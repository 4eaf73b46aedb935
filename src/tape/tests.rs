use super::*;
use crate::canon::{FunctionSample, Names, Point, Store};
use crate::interval::{CInterval, Interval};
use crate::zero::SplitMix64;
use rustc_hash::FxHashMap;
use std::rc::Rc;

const COORDS: [&str; 4] = ["t", "x", "y", "z"];

/// A store with the sample `F(u) = exp(-u^2/3) + u/5` and the parameter `a = 0.7`.
struct Setup {
    store: Store,
    samples: FxHashMap<Rc<str>, FunctionSample>,
    constants: Vec<(String, f64)>,
}

fn setup() -> Setup {
    let mut store = Store::new();
    let e = crate::parse::parse("exp(-u^2/3) + u/5").unwrap();
    let form = store.build(&e, &Names::free()).unwrap();
    let var = store.symbol_kernel("u");
    let mut samples = FxHashMap::default();
    samples.insert(Rc::from("F"), FunctionSample { var, form });
    Setup {
        store,
        samples,
        constants: vec![("a".to_string(), 0.7)],
    }
}

fn build(store: &mut Store, text: &str) -> crate::canon::Form {
    let e = crate::parse::parse(text).unwrap_or_else(|e| panic!("{text}: {e}"));
    store
        .build(&e, &Names::free())
        .unwrap_or_else(|e| panic!("{text}: {e:?}"))
}

fn reference(s: &mut Setup, f: crate::canon::Form, x: &[f64; 4]) -> Option<(f64, f64)> {
    let mut pt = Point::default();
    for (i, c) in COORDS.iter().enumerate() {
        let k = s.store.symbol_kernel(c);
        pt.values
            .insert(k, CInterval::from_real(Interval::point(x[i]).unwrap()));
    }
    let k = s.store.symbol_kernel("a");
    pt.values
        .insert(k, CInterval::from_real(Interval::point(0.7).unwrap()));
    pt.samples = s.samples.clone();
    s.store.eval_f64(f, &pt)
}

/// A random expression over t, x, y, z, the parameter a and the function F: positive
/// arguments for log and sqrt, so that it is real and finite on the test box.
fn random_expr(rng: &mut SplitMix64, depth: u32) -> String {
    let leaf = |rng: &mut SplitMix64| -> String {
        match rng.next_u64() % 7 {
            0 => "t".into(),
            1 => "x".into(),
            2 => "y".into(),
            3 => "z".into(),
            4 => "a".into(),
            5 => format!("{}/{}", rng.next_u64() % 9 + 1, rng.next_u64() % 5 + 1),
            _ => "pi".into(),
        }
    };
    if depth == 0 {
        return leaf(rng);
    }
    let a = random_expr(rng, depth - 1);
    let b = random_expr(rng, depth - 1);
    match rng.next_u64() % 12 {
        0 => format!("({a}) + ({b})"),
        1 => format!("({a}) - ({b})"),
        2 | 3 => format!("({a})*({b})"),
        4 => format!("({a})/(2 + ({b})^2)"),
        5 => format!("({a})^{}", rng.next_u64() % 3 + 2),
        6 => format!("sin({a})"),
        7 => format!("cos({a}) * ({b})"),
        8 => format!("exp(({a})/4)"),
        9 => format!("log(1 + ({a})^2)"),
        10 => format!("sqrt(1 + ({b})^2) - ({a})"),
        _ => format!("F''({a}) + F({b})"),
    }
}

fn close(a: f64, b: f64, scale: f64) -> bool {
    (a - b).abs() <= 1e-9 * scale.max(1.0)
}

#[test]
fn tape_agrees_with_interval_evaluation_on_random_forms() {
    let seed = 0x7a9e_0001_u64;
    let mut rng = SplitMix64::new(seed);
    let mut s = setup();
    for case in 0..60 {
        let text = random_expr(&mut rng, 3);
        let f = build(&mut s.store, &text);
        let samples = s.samples.clone();
        let consts = s.constants.clone();
        let mut c = Compiler::new(&mut s.store, &COORDS, &consts, &samples);
        let node = c
            .form(f)
            .unwrap_or_else(|e| panic!("seed {seed:#x} case {case} `{text}`: {e}"));
        let tape = c.builder.finish(&[node]);
        let mut batch = Batch::new(&tape);
        let pts: Vec<[f64; 4]> = (0..5)
            .map(|_| std::array::from_fn(|_| rng.next_f64() * 2.0 - 1.0))
            .collect();
        let cols: Vec<Vec<f64>> = (0..4).map(|i| pts.iter().map(|p| p[i]).collect()).collect();
        let refs: Vec<&[f64]> = cols.iter().map(|c| c.as_slice()).collect();
        let mut out = vec![0.0; pts.len()];
        batch.eval(&refs, &mut out);
        for (p, x) in pts.iter().enumerate() {
            let Some((re, im)) = reference(&mut s, f, x) else {
                continue;
            };
            let z = tape.eval_point(x)[0];
            assert!(
                close(z.re, re, re.abs()) && close(z.im, im, re.abs()),
                "seed {seed:#x} case {case} `{text}` at {x:?}: tape {z:?}, reference ({re}, {im})"
            );
            assert!(
                close(out[p], re, re.abs()),
                "seed {seed:#x} case {case} `{text}` at {x:?}: batch {}, reference {re}",
                out[p]
            );
        }
    }
}

/// One tape for the outputs `texts`, compiled in the setup's store with its constants and
/// function samples.
fn tape_of(s: &mut Setup, texts: &[String]) -> Tape {
    let forms: Vec<_> = texts.iter().map(|t| build(&mut s.store, t)).collect();
    let samples = s.samples.clone();
    let consts = s.constants.clone();
    let mut c = Compiler::new(&mut s.store, &COORDS, &consts, &samples);
    let nodes: Vec<Node> = forms.iter().map(|&f| c.form(f).unwrap()).collect();
    c.builder.finish(&nodes)
}

#[test]
fn lattice_agrees_with_pointwise_evaluation() {
    let seed = 0x7a9e_0002_u64;
    let mut rng = SplitMix64::new(seed);
    let mut s = setup();
    let texts: Vec<String> = (0..8).map(|_| random_expr(&mut rng, 3)).collect();
    // Plus a few of known structure: t and z only, y only, everything, a constant.
    let mut texts = texts;
    texts.extend(
        [
            "a*cos(2*(t - z))",
            "sin(y)/3",
            "1/sqrt(x^2 + y^2 + z^2)",
            "pi/7",
        ]
        .map(String::from),
    );
    let tape = tape_of(&mut s, &texts);
    let ys = [0.3, 0.5, 0.7];
    let zs = [-0.4, -0.1, 0.2, 0.6];
    let mut lat = Lattice::new(&tape, &ys, &zs);
    let mut ws = lat.workspace();
    let mut out = vec![0.0; tape.outputs() * lat.plane_len()];
    for t in [0.25, -0.5] {
        lat.set_t(t);
        for x in [0.1, 0.9] {
            let outcome = lat.plane(&mut ws, x, &mut out);
            assert_eq!(outcome.nonfinite, 0);
            for (iy, &y) in ys.iter().enumerate() {
                for (iz, &z) in zs.iter().enumerate() {
                    let want = tape.eval_point(&[t, x, y, z]);
                    for (j, w) in want.iter().enumerate() {
                        let got = out[(j * ys.len() + iy) * zs.len() + iz];
                        assert!(
                            close(got, w.re, w.re.abs()),
                            "seed {seed:#x} `{}` at {:?}: lattice {got}, point {}",
                            texts[j],
                            [t, x, y, z],
                            w.re
                        );
                    }
                }
            }
        }
    }
}

#[test]
fn lattice_blocks_of_rows_give_the_same_bits() {
    // Rows per block change nothing: random expressions plus outputs of every kind (one that
    // does not depend on y, one held for the slab, a constant, a sin/cos pair, the same value
    // twice, one that is another's operand), each block size against whole planes, bit for
    // bit; and a plane that needs the complex pass.
    let seed = 0x7a9e_0003_u64;
    let mut rng = SplitMix64::new(seed);
    let mut s = setup();
    let mut texts: Vec<String> = (0..6).map(|_| random_expr(&mut rng, 3)).collect();
    texts.extend(
        [
            "cos(2*(t - x - y + z))",
            "sin(2*(t - x - y + z))",
            "a*cos(x - z)",
            "sin(y)*t/3",
            "pi/7",
            "cos(2*(t - x - y + z))",
            "3*cos(2*(t - x - y + z)) + y",
            "sqrt(x - y)",
        ]
        .map(String::from),
    );
    let tape = tape_of(&mut s, &texts);
    let ys = [0.3, 0.5, 0.7, 0.8, 1.1, 1.3, 1.7];
    let zs = [-0.4, -0.1, 0.2, 0.6, 0.9];
    let whole = Lattice::new(&tape, &ys, &zs).with_block_rows(ys.len());
    let n = tape.outputs() * whole.plane_len();
    for rows in [1, 2, 3, 4, 6] {
        let mut want_lat = whole.clone();
        let mut lat = whole.clone().with_block_rows(rows);
        let (mut ws0, mut ws) = (want_lat.workspace(), lat.workspace());
        for t in [0.25, -0.5] {
            want_lat.set_t(t);
            lat.set_t(t);
            // x = 0.1 and 0.9 need the complex pass (the root of x - y < 0); x = 2 does not.
            for x in [0.1, 0.9, 2.0] {
                let (mut want, mut got) = (vec![0.0; n], vec![1.0; n]);
                let o0 = want_lat.plane(&mut ws0, x, &mut want);
                let o = lat.plane(&mut ws, x, &mut got);
                assert_eq!(o, o0, "seed {seed:#x} rows {rows} at t {t}, x {x}");
                for (k, (g, w)) in got.iter().zip(&want).enumerate() {
                    assert_eq!(
                        g.to_bits(),
                        w.to_bits(),
                        "seed {seed:#x} rows {rows} at t {t}, x {x}: `{}` value {k}",
                        texts[k / whole.plane_len()]
                    );
                }
            }
        }
    }
}

#[test]
fn common_subexpressions_are_shared_across_outputs() {
    let mut s = setup();
    let texts = [
        "1/sqrt(x^2 + y^2 + z^2)",
        "x/sqrt(x^2 + y^2 + z^2)^3",
        "y*z/sqrt(x^2 + y^2 + z^2)^5",
    ];
    let forms: Vec<_> = texts.iter().map(|t| build(&mut s.store, t)).collect();
    let mut sizes = Vec::new();
    for &f in &forms {
        let mut c = Compiler::new(&mut s.store, &COORDS, &[], &FxHashMap::default());
        let n = c.form(f).unwrap();
        sizes.push(c.builder.finish(&[n]).len());
    }
    let mut c = Compiler::new(&mut s.store, &COORDS, &[], &FxHashMap::default());
    let nodes: Vec<Node> = forms.iter().map(|&f| c.form(f).unwrap()).collect();
    let joint = c.builder.finish(&nodes).len();
    // x^2 + y^2 + z^2 and its root (at least 8 instructions) are built once, not three times.
    assert!(
        joint + 2 * 8 <= sizes.iter().sum::<usize>(),
        "joint tape {joint} vs separate {sizes:?}"
    );
}

#[test]
fn real_path_falls_back_to_principal_complex_values() {
    let mut s = setup();
    // sqrt(x) at x = -4 is 2i (principal); log(x) at x = -1 is i*pi.
    let f = build(&mut s.store, "sqrt(x)");
    let g = build(&mut s.store, "log(x)");
    let mut c = Compiler::new(&mut s.store, &COORDS, &[], &FxHashMap::default());
    let nodes = [c.form(f).unwrap(), c.form(g).unwrap()];
    let tape = c.builder.finish(&nodes);
    assert!(tape.is_real());
    let z = tape.eval_point(&[0.0, -4.0, 0.0, 0.0]);
    assert!(
        (z[0].im - 2.0).abs() < 1e-15 && z[0].re.abs() < 1e-15,
        "{z:?}"
    );
    let z = tape.eval_point(&[0.0, -1.0, 0.0, 0.0]);
    assert!((z[1].im - std::f64::consts::PI).abs() < 1e-15, "{z:?}");
    let mut batch = Batch::new(&tape);
    let cols = [vec![0.0; 2], vec![-4.0, 4.0], vec![0.0; 2], vec![0.0; 2]];
    let refs: Vec<&[f64]> = cols.iter().map(|c| c.as_slice()).collect();
    let mut out = vec![0.0; 4];
    let report = batch.eval(&refs, &mut out);
    assert_eq!(report.complex_blocks, 1);
    assert!(report.max_im_ratio > 0.5, "{report:?}");
    assert!((out[1] - 2.0).abs() < 1e-15, "{out:?}");
}

#[test]
fn building_folds_constants_and_trivial_operations() {
    let mut b = TapeBuilder::new(1);
    let x = b.input(0);
    let one = b.real(1.0);
    let zero = b.real(0.0);
    assert_eq!(b.mul(x, one), x);
    assert_eq!(b.add(zero, x), x);
    let nx = b.neg(x);
    assert_eq!(b.neg(nx), x);
    let two = b.real(2.0);
    let three = b.real(3.0);
    let six = b.mul(two, three);
    assert_eq!(b.value(six), Some(C64::real(6.0)));
    // x + (-x) is x - x, which is 0.
    let s = b.add(x, nx);
    assert_eq!(b.value(s), Some(C64::real(0.0)));
    // Commutative operations are shared whatever the operand order.
    assert_eq!(b.mul(x, two), b.mul(two, x));
}

#[test]
fn running_error_bound_covers_the_cancellation_error() {
    // (x + 1e8) - 1e8 at x = 0.1 loses about 8 digits; the bound must cover the true error.
    let mut b = TapeBuilder::new(1);
    let x = b.input(0);
    let big = b.real(1e8);
    let s = b.add(x, big);
    let d = b.sub(s, big);
    let tape = b.finish(&[d]);
    let (v, e) = tape.eval_bounds(&[0.1])[0];
    let err = (v.re - 0.1).abs();
    assert!(err > 1e-12, "the test needs a visible error, got {err}");
    assert!(e >= err, "bound {e} below the error {err}");
    assert!(e < 1e-6, "bound {e} is far too loose");
}

#[test]
fn unbound_names_and_missing_samples_are_errors() {
    let mut s = setup();
    let f = build(&mut s.store, "q*x");
    let g = build(&mut s.store, "G(x)");
    let mut c = Compiler::new(&mut s.store, &COORDS, &[], &FxHashMap::default());
    assert_eq!(c.form(f), Err(TapeError::Unbound("q".into())));
    assert_eq!(c.form(g), Err(TapeError::NoSample("G".into())));
}

#[test]
fn sin_and_cos_of_one_argument_agree_with_pointwise_evaluation() {
    // Pairs of sin and cos of one argument at each level of the lattice (fixed: y only; slab:
    // t only; plane: everything), computed from one argument reduction, and a sin without its
    // cos; beside libm's values in `eval_point` to a few ulps.
    let mut s = setup();
    let texts = [
        "sin(3*y) + cos(3*y)",
        "sin(2*t) - cos(2*t)/3",
        "sin(w) - 2*cos(w)",
        "cos(x*z + 40)",
        "sin(7*(t - y + x*z))",
    ]
    .map(|t| t.replace('w', "5*(t - (2*x + 2*y + z)/3)"));
    let forms: Vec<_> = texts.iter().map(|t| build(&mut s.store, t)).collect();
    let mut c = Compiler::new(&mut s.store, &COORDS, &[], &FxHashMap::default());
    let nodes: Vec<Node> = forms.iter().map(|&f| c.form(f).unwrap()).collect();
    let tape = c.builder.finish(&nodes);
    let ys = [0.3, 0.5, 0.7, -2.0];
    let zs = [-0.4, -0.1, 0.2, 0.6, 1.5];
    let mut lat = Lattice::new(&tape, &ys, &zs);
    assert_eq!(lat.trig_pairs(), 3);
    let mut ws = lat.workspace();
    let mut out = vec![0.0; tape.outputs() * lat.plane_len()];
    for t in [0.25, -0.5, 3.0] {
        lat.set_t(t);
        for x in [0.1, 0.9, -4.0] {
            let outcome = lat.plane(&mut ws, x, &mut out);
            assert_eq!(outcome.nonfinite, 0);
            for (iy, &y) in ys.iter().enumerate() {
                for (iz, &z) in zs.iter().enumerate() {
                    let want = tape.eval_point(&[t, x, y, z]);
                    for (j, w) in want.iter().enumerate() {
                        let got = out[(j * ys.len() + iy) * zs.len() + iz];
                        assert!(
                            (got - w.re).abs() <= 8.0 * f64::EPSILON,
                            "`{}` at {:?}: lattice {got}, point {}",
                            texts[j],
                            [t, x, y, z],
                            w.re
                        );
                    }
                }
            }
        }
    }
}

/// Issue 11 (item 3): the compiler reads forms through their structure, not their printed
/// text. At seeded random points, each compiled value (with its running error bound) must lie
/// in the certified enclosure of `canon::eval`: roots, logs, trig (exponentials with imaginary
/// exponents, with coefficients in Q(sqrt 2, sqrt 3, i)), arbitrary functions through their
/// samples, denominators, values that are not real, and an exponential left unpaired.
#[test]
fn issue11_compiled_forms_lie_in_the_interval_enclosures() {
    let seed = 0x7a9e_0011_u64;
    let mut rng = SplitMix64::new(seed);
    let mut s = setup();
    // (text, real: the tape's constants are all real)
    let cases = [
        ("sqrt(x^2 + y^2 + z^2)^3/(1 + x^2)^2", true),
        ("(x^4 + 1)^(1/3) - log(1 + t^2)*x", true),
        ("a*cos(3*(t - z)) + sin(2*(t - z) + pi/3)/7", true),
        ("sin(x + pi/4)*sqrt(6) - cos(2*y - pi/12)", true),
        ("exp(-x^2/2)*sinh(y) + exp(cos(t))", true),
        ("cos(sin(x) + y)/(2 + sin(z))", true),
        ("F''(t - z)*F(x/(1 + y^2)) + F'(sin(x))", true),
        ("tan(x)/(3 + x^2) - tanh(a*y)", true),
        ("x^-2 + y/(x^2 + 1/4)", true),
        ("log(-1 - x^2) + sqrt(-2 - y^2)", true),
        ("exp(x/(1 + y^2)) + exp(sqrt(1 + t^2))", true),
    ];
    let mut forms: Vec<(String, crate::canon::Form, bool)> = cases
        .iter()
        .map(|&(t, r)| (t.to_string(), build(&mut s.store, t), r))
        .collect();
    // Built directly: i*x + x*exp(i*y) (an exponential without its conjugate) and
    // exp((1 + i)*t)/(2 - i*z) (a complex denominator).
    {
        let st = &mut s.store;
        let (x, y, t, z) = (
            st.symbol("x"),
            st.symbol("y"),
            st.symbol("t"),
            st.symbol("z"),
        );
        let i = crate::canon::Coeff::i();
        let ix = st.scale(x, &i).unwrap();
        let iy = st.scale(y, &i).unwrap();
        let e = st.exp(iy).unwrap();
        let xe = st.mul(x, e).unwrap();
        let f = st.add(ix, xe).unwrap();
        forms.push(("i*x + x*exp(i*y)".into(), f, false));
        let it = st.scale(t, &i).unwrap();
        let p = st.add(t, it).unwrap();
        let num = st.exp(p).unwrap();
        let iz = st.scale(z, &i).unwrap();
        let two = st.int(2);
        let den = st.sub(two, iz).unwrap();
        let g = st.div(num, den).unwrap();
        forms.push(("exp((1 + i)*t)/(2 - i*z)".into(), g, false));
    }
    for (text, f, real) in &forms {
        let samples = s.samples.clone();
        let consts = s.constants.clone();
        let mut c = Compiler::new(&mut s.store, &COORDS, &consts, &samples);
        let node = c
            .form(*f)
            .unwrap_or_else(|e| panic!("seed {seed:#x} `{text}`: {e}"));
        let tape = c.builder.finish(&[node]);
        assert_eq!(tape.is_real(), *real, "`{text}`");
        let mut checked = 0;
        for _ in 0..12 {
            let x: [f64; 4] = std::array::from_fn(|_| rng.next_f64() * 3.0 - 1.5);
            let mut pt = Point::default();
            for (i, name) in COORDS.iter().enumerate() {
                let k = s.store.symbol_kernel(name);
                pt.values
                    .insert(k, CInterval::from_real(Interval::point(x[i]).unwrap()));
            }
            let k = s.store.symbol_kernel("a");
            pt.values
                .insert(k, CInterval::from_real(Interval::point(0.7).unwrap()));
            pt.samples = s.samples.clone();
            let Some(want) = s.store.eval_interval(*f, &pt) else {
                continue;
            };
            let (z, err) = tape.eval_bounds(&x)[0];
            let scale = 1.0 + want.re.mid().abs() + want.im.mid().abs();
            let slack = err + 1e-12 * scale;
            let inside = |v: f64, iv: Interval| iv.lo() - slack <= v && v <= iv.hi() + slack;
            assert!(
                inside(z.re, want.re) && inside(z.im, want.im),
                "seed {seed:#x} `{text}` at {x:?}: tape {z:?} (error bound {err}), enclosure \
                 {want:?}"
            );
            let p = tape.eval_point(&x)[0];
            assert!(
                close(p.re, z.re, scale) && close(p.im, z.im, scale),
                "`{text}` at {x:?}: {p:?} vs {z:?}"
            );
            checked += 1;
        }
        assert!(checked >= 6, "`{text}`: only {checked} points evaluated");
    }
}

/// Issue 11: a real expression keeps the real fast path: sin and cos of one argument, a
/// damped wave and a function sample compile to a tape without complex constants, and the
/// pair `e^(ia)`, `e^(-ia)` becomes one sin and one cos of one shared argument node.
#[test]
fn issue11_real_forms_compile_to_real_tapes_with_shared_trig_arguments() {
    let mut s = setup();
    let f = build(&mut s.store, "a*cos(2*(t - z)) + sin(2*(t - z))*exp(-x)");
    let samples = s.samples.clone();
    let consts = s.constants.clone();
    let mut c = Compiler::new(&mut s.store, &COORDS, &consts, &samples);
    let n = c.form(f).unwrap();
    let tape = c.builder.finish(&[n]);
    assert!(tape.is_real());
    let ops = &tape.ops;
    let sins: Vec<u32> = ops
        .iter()
        .filter_map(|o| if let Op::Sin(a) = o { Some(*a) } else { None })
        .collect();
    let coss: Vec<u32> = ops
        .iter()
        .filter_map(|o| if let Op::Cos(a) = o { Some(*a) } else { None })
        .collect();
    assert_eq!((sins.len(), coss.len()), (1, 1), "{ops:?}");
    assert_eq!(sins, coss);
    assert!(!ops.iter().any(|o| matches!(o, Op::Exp(a) if *a == sins[0])));
}

#[test]
fn every_compiled_variant_of_the_lane_loops_gives_the_same_bits() {
    // `apply` runs a variant chosen at run time (AVX2 or the baseline build); over every
    // broadcast of the operands it must give exactly what the baseline body gives.
    let seed = 0xa991_5eed_u64;
    let mut rng = SplitMix64::new(seed);
    let (ny, nz) = (5, 13);
    let full = lane::Shape { ny, nz };
    let shapes = [
        full,
        lane::Shape { ny: 1, nz },
        lane::Shape { ny, nz: 1 },
        lane::Shape::ONE,
    ];
    let value = |rng: &mut SplitMix64| {
        (rng.next_f64() * 4.0 - 1.0) * 10f64.powi((rng.next_u64() % 6) as i32 - 3)
    };
    let binary = [Op::Add(0, 1), Op::Sub(0, 1), Op::Mul(0, 1), Op::Div(0, 1)];
    let unary = [
        Op::Neg(0),
        Op::PowI(0, 3),
        Op::PowI(0, -2),
        Op::Exp(0),
        Op::Log(0),
        Op::Root(0, 2),
        Op::Root(0, 3),
    ];
    for &sa in &shapes {
        for &sb in &shapes {
            let a: Vec<f64> = (0..sa.len()).map(|_| value(&mut rng)).collect();
            let b: Vec<f64> = (0..sb.len()).map(|_| value(&mut rng)).collect();
            let ops: Vec<(Op, lane::Shape)> = binary
                .iter()
                .map(|&op| (op, full))
                .chain(unary.iter().map(|&op| (op, sa)))
                .collect();
            for (op, ds) in ops {
                let (mut got, mut want) = (vec![0.0; ds.len()], vec![0.0; ds.len()]);
                apply(op, &mut got, ds, (&a, sa), (&b, sb));
                apply_lanes(op, &mut want, ds, (&a, sa), (&b, sb));
                let same = got
                    .iter()
                    .zip(&want)
                    .all(|(g, w)| g.to_bits() == w.to_bits());
                assert!(same, "seed {seed:#x} {op:?} {sa:?} {sb:?}");
            }
        }
    }
}

/// A random expression over the builder's four inputs: sums, differences, negations,
/// products with constants and with each other, and a few functions, `depth` levels deep.
fn random_node(b: &mut TapeBuilder, rng: &mut SplitMix64, depth: u32) -> Node {
    let pick = rng.next_u64() % if depth == 0 { 2 } else { 9 };
    let sub = |b: &mut TapeBuilder, rng: &mut SplitMix64| random_node(b, rng, depth - 1);
    match pick {
        0 => b.input((rng.next_u64() % 4) as usize),
        1 => b.real(((rng.next_u64() % 7) as f64 - 3.0) / 4.0),
        2 => {
            let (x, y) = (sub(b, rng), sub(b, rng));
            b.add(x, y)
        }
        3 => {
            let (x, y) = (sub(b, rng), sub(b, rng));
            b.sub(x, y)
        }
        4 => {
            let x = sub(b, rng);
            b.neg(x)
        }
        5 => {
            let c = b.real(rng.next_f64() * 4.0 - 2.0);
            let x = sub(b, rng);
            b.mul(c, x)
        }
        6 => {
            let (x, y) = (sub(b, rng), sub(b, rng));
            b.mul(x, y)
        }
        7 => {
            let x = sub(b, rng);
            b.sin(x)
        }
        _ => {
            let x = sub(b, rng);
            let c = b.real(3.0);
            b.div(x, c)
        }
    }
}

#[test]
fn linear_parts_recombine_to_the_expression() {
    // Seeded: every node is the combination of its parts to rounding at random points, no
    // part is itself a sum, difference, negation or product with a constant, and each part
    // appears once with a nonzero coefficient.
    let seed = 0x11_7ea5;
    let mut rng = SplitMix64::new(seed);
    let mut split = 0;
    for case in 0..1000 {
        let mut b = TapeBuilder::new(4);
        let n = random_node(&mut b, &mut rng, 5);
        let parts = b.linear_parts(n, 4096);
        split += usize::from(parts.len() > 1);
        let mut seen = FxHashMap::default();
        for &(m, c) in &parts {
            assert!(c != 0.0 && c.is_finite(), "seed {seed} case {case}");
            assert!(
                seen.insert(m, ()).is_none(),
                "seed {seed} case {case}: twice"
            );
            if parts != [(n, 1.0)] {
                assert!(
                    !matches!(b.ops[m.0 as usize], Op::Add(..) | Op::Sub(..) | Op::Neg(_)),
                    "seed {seed} case {case}"
                );
            }
        }
        let outs: Vec<Node> = std::iter::once(n)
            .chain(parts.iter().map(|p| p.0))
            .collect();
        let tape = b.finish(&outs);
        for _ in 0..4 {
            let x: Vec<f64> = (0..4).map(|_| rng.next_f64() * 2.0 - 1.0).collect();
            let v = tape.eval_point(&x);
            let (mut sum, mut scale) = (0.0, v[0].re.abs());
            for (p, val) in parts.iter().zip(&v[1..]) {
                sum += p.1 * val.re;
                scale += (p.1 * val.re).abs();
            }
            assert!(
                (sum - v[0].re).abs() <= 1e-12 * scale.max(1e-300) || !v[0].re.is_finite(),
                "seed {seed} case {case}: {} against {sum} from {parts:?}",
                v[0].re
            );
        }
    }
    assert!(split > 40, "only {split} expressions had several parts");
    // (50 of the 1000 at this seed.)
}

#[test]
fn linear_parts_keep_constant_terms_complex_coefficients_and_large_graphs_whole() {
    let mut b = TapeBuilder::new(4);
    let (t, x) = (b.input(0), b.input(1));
    let (s, c) = (b.sin(t), b.cos(x));
    let k = b.real(-0.5);
    let ks = b.mul(k, s);
    let f = b.sub(c, ks);
    let three = b.real(3.0);
    let g = b.div(f, three);
    let third = 1.0 / 3.0;
    assert_eq!(b.linear_parts(g, 100), [(s, 0.5 * third), (c, third)]);
    // A constant term: the node whole.
    let one = b.real(1.0);
    let h = b.add(g, one);
    assert_eq!(b.linear_parts(h, 100), [(h, 1.0)]);
    // A complex coefficient: the product is a part.
    let i = b.constant(C64::new(0.0, 1.0));
    let is = b.mul(i, s);
    let j = b.add(is, c);
    assert_eq!(b.linear_parts(j, 100), [(c, 1.0), (is, 1.0)]);
    // Terms that cancel leave nothing; a difference of a node with itself is folded to 0.
    let two = b.real(2.0);
    let cc = b.add(c, c);
    let c2 = b.mul(two, c);
    let zero = b.sub(c2, cc);
    assert_eq!(b.linear_parts(zero, 100), []);
    // A sum of 3000 terms is fine at a limit above it and whole below it (no recursion).
    let mut sum = c;
    for _ in 0..3000 {
        sum = b.add(sum, s);
    }
    assert_eq!(b.linear_parts(sum, 10_000), [(s, 3000.0), (c, 1.0)]);
    assert_eq!(b.linear_parts(sum, 1000), [(sum, 1.0)]);
    // A graph whose tree is exponential (each level used twice) stops at the limit.
    let mut d = s;
    for _ in 0..60 {
        d = b.add(d, d);
    }
    assert_eq!(b.linear_parts(d, 4096), [(d, 1.0)]);
}
