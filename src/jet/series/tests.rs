use super::*;
use crate::interval::Interval;
use proptest::prelude::*;

type J = Jet<Interval>;

fn pt(x: f64) -> Interval {
    Interval::point(x).expect("finite")
}

/// Two enclosures of the same exact number must meet.
fn meet(a: &Interval, b: &Interval) -> bool {
    a.lo() <= b.hi() && b.lo() <= a.hi()
}

fn same(a: &J, b: &J) -> bool {
    a.coeffs().len() == b.coeffs().len()
        && a.coeffs().iter().zip(b.coeffs()).all(|(x, y)| meet(x, y))
}

/// `x` and `y` at `(x0, y0)` in a 2-variable space of order `n`.
fn xy(x0: f64, y0: f64, n: u32) -> (J, J) {
    let sp = JetSpace::new(2, n).expect("small");
    (
        Jet::variable(&sp, n, 0, pt(x0)),
        Jet::variable(&sp, n, 1, pt(y0)),
    )
}

#[test]
fn space_sizes_and_order() {
    let sp = JetSpace::new(4, 2).expect("small");
    assert_eq!((sp.len(0), sp.len(1), sp.len(2)), (1, 5, 15));
    assert_eq!(sp.monomial(0), &[0, 0, 0, 0]);
    assert_eq!(sp.monomial(1), &[1, 0, 0, 0]);
    assert_eq!(sp.monomial(4), &[0, 0, 0, 1]);
    assert_eq!(sp.monomial(5), &[2, 0, 0, 0]);
    // Degree 2 after the 5 of degree <= 1: 2000 1100 1010 1001 0200 0110 0101 ...
    assert_eq!(sp.position(&[0, 1, 0, 1]), Some(11));
    let sp = JetSpace::new(0, 3).expect("small");
    assert_eq!(sp.len(3), 1);
    assert!(matches!(
        JetSpace::new(12, 12),
        Err(SpaceError::TooLarge { .. })
    ));
    assert!(matches!(
        JetSpace::new(6, 40),
        Err(SpaceError::TooLarge { .. })
    ));
}

#[test]
fn products_are_polynomial_products() {
    // (x + y)^2 at (0, 0): x^2 + 2xy + y^2.
    let (x, y) = xy(0.0, 0.0, 3);
    let s = x.add(&y).expect("finite");
    let sq = s.mul(&s).expect("finite");
    assert!(sq.coeff(&[2, 0]).expect("in order").contains(1.0));
    assert!(sq.coeff(&[1, 1]).expect("in order").contains(2.0));
    assert!(sq.coeff(&[0, 2]).expect("in order").contains(1.0));
    assert!(sq.coeff(&[3, 0]).expect("in order").contains(0.0));
    let cube = sq.mul(&s).expect("finite");
    assert!(cube.coeff(&[2, 1]).expect("in order").contains(3.0));
    assert!(cube.partial(&[2, 1], &()).expect("in order").contains(6.0));
    // A jet truncated to order 1 drops the squares.
    let t = cube.truncate(1);
    assert_eq!(t.coeffs().len(), 3);
    assert!(t.mul(&sq).expect("finite").order() == 1);
}

#[test]
fn derivative_lowers_the_order() {
    let (x, y) = xy(2.0, 3.0, 3);
    // f = x^2 y: d_x f = 2 x y = 12, d_x d_y f = 2 x = 4.
    let f = x.mul(&x).and_then(|xx| xx.mul(&y)).expect("finite");
    let fx = f.derivative(0).expect("order 3");
    assert_eq!(fx.order(), 2);
    assert!(fx.value().contains(12.0));
    let fxy = fx.derivative(1).expect("order 2");
    assert!(fxy.value().contains(4.0));
    assert!(fxy.coeff(&[1, 0]).expect("in order").contains(2.0));
    let c: J = Jet::constant(f.space(), 0, pt(1.0));
    assert!(c.derivative(0).is_none());
}

#[test]
fn functions_at_known_points() {
    let (x, _) = xy(0.0, 0.0, 4);
    // exp(x) at 0: 1/k!.
    let e = x.exp(&()).expect("finite");
    assert!(e.coeff(&[4, 0]).expect("in order").contains(1.0 / 24.0));
    // sin(x): x - x^3/6.
    let s = x.sin(&()).expect("finite");
    assert!(s.coeff(&[3, 0]).expect("in order").contains(-1.0 / 6.0));
    assert!(s.coeff(&[2, 0]).expect("in order").contains(0.0));
    // log(1 + x) = x - x^2/2 + x^3/3 - x^4/4.
    let l = x
        .add(&Jet::constant(x.space(), 4, pt(1.0)))
        .and_then(|a| a.ln(&()));
    let l = l.expect("positive");
    assert!(l.coeff(&[4, 0]).expect("in order").contains(-0.25));
    // tan x = x + x^3/3, tanh x = x - x^3/3.
    let t = x.tan(&()).expect("finite");
    assert!(t.coeff(&[3, 0]).expect("in order").contains(1.0 / 3.0));
    let th = x.tanh(&()).expect("finite");
    assert!(th.coeff(&[3, 0]).expect("in order").contains(-1.0 / 3.0));
}

#[test]
fn undefined_values_give_none() {
    let (x, y) = xy(0.0, -1.0, 2);
    assert!(x.ln(&()).is_none());
    assert!(y.ln(&()).is_none());
    assert!(x.sqrt(&()).is_none());
    assert!(y.sqrt(&()).is_none());
    assert!(x.recip(&()).is_none());
    assert!(y.div(&x, &()).is_none());
    assert!(x.powi(-2, &()).is_none());
    let third = BigRational::new(1.into(), 3.into());
    assert!(y.pow_rational(&third, &()).is_none());
    // Integer powers of a negative base are fine.
    let c = y.powi(-3, &()).expect("nonzero");
    assert!(c.value().contains(-1.0));
    // Overflow.
    let (big, _) = xy(800.0, 0.0, 2);
    assert!(big.exp(&()).is_none());
    // A constant sqrt may be 0.
    let z: J = Jet::constant(x.space(), 2, pt(0.0));
    assert!(z.sqrt(&()).expect("constant root").value().contains(0.0));
}

proptest! {
    #[test]
    fn jet_laws_hold_as_meeting_enclosures(
        x0 in -3.0f64..3.0, y0 in -3.0f64..3.0, n in 0u32..=4,
    ) {
        let (x, y) = xy(x0, y0, n);
        let one: J = Jet::constant(x.space(), n, pt(1.0));
        let a = x.mul(&y).unwrap().add(&one).unwrap();      // xy + 1
        let b = x.sin(&()).unwrap();
        let c = y.cos(&()).unwrap().add(&x).unwrap();
        // Distributivity.
        let lhs = a.mul(&b.add(&c).unwrap()).unwrap();
        let rhs = a.mul(&b).unwrap().add(&a.mul(&c).unwrap()).unwrap();
        prop_assert!(same(&lhs, &rhs));
        // exp(a + b) = exp(a) exp(b).
        let lhs = a.add(&b).unwrap().exp(&());
        if let (Some(lhs), Some(ea), Some(eb)) = (lhs, a.exp(&()), b.exp(&())) {
            prop_assert!(same(&lhs, &ea.mul(&eb).unwrap()));
        }
        // sin^2 + cos^2 = 1.
        let s = a.sin(&()).unwrap();
        let co = a.cos(&()).unwrap();
        let p = s.mul(&s).unwrap().add(&co.mul(&co).unwrap()).unwrap();
        prop_assert!(same(&p, &one));
        // cosh^2 - sinh^2 = 1, tanh = sinh / cosh.
        let sh = b.sinh(&()).unwrap();
        let ch = b.cosh(&()).unwrap();
        prop_assert!(same(&ch.mul(&ch).unwrap().sub(&sh.mul(&sh).unwrap()).unwrap(), &one));
        prop_assert!(same(&b.tanh(&()).unwrap(), &sh.div(&ch, &()).unwrap()));
        // Powers, reciprocals, roots and logs.
        prop_assert!(same(&a.powi(3, &()).unwrap(), &a.mul(&a).unwrap().mul(&a).unwrap()));
        if let Some(r) = a.recip(&()) {
            prop_assert!(same(&r.mul(&a).unwrap(), &one));
            prop_assert!(same(&a.powi(-2, &()).unwrap(), &r.mul(&r).unwrap()));
        }
        if let Some(q) = c.sqrt(&()) {
            prop_assert!(same(&q.mul(&q).unwrap(), &c));
            prop_assert!(same(&c.ln(&()).unwrap().exp(&()).unwrap(), &c));
            let two_thirds = BigRational::new(2.into(), 3.into());
            let p = c.pow_rational(&two_thirds, &()).unwrap();
            prop_assert!(same(&p.powi(3, &()).unwrap(), &c.powi(2, &()).unwrap()));
            prop_assert!(same(&c.pow(&a, &()).unwrap(), &c.ln(&()).unwrap().mul(&a).unwrap().exp(&()).unwrap()));
        }
        if let Some(t) = b.tan(&()) {
            prop_assert!(same(&t, &b.sin(&()).unwrap().div(&b.cos(&()).unwrap(), &()).unwrap()));
        }
        // Derivative of a product (order >= 1): Leibniz rule.
        if n >= 1 {
            let ab = a.mul(&b).unwrap().derivative(0).unwrap();
            let rule = a.derivative(0).unwrap().mul(&b).unwrap()
                .add(&a.mul(&b.derivative(0).unwrap()).unwrap()).unwrap();
            prop_assert!(same(&ab, &rule));
        }
    }

    #[test]
    fn values_match_direct_interval_evaluation(x0 in -3.0f64..3.0, y0 in -3.0f64..3.0) {
        let (x, y) = xy(x0, y0, 2);
        let (ix, iy) = (pt(x0), pt(y0));
        let j = x.mul(&y).unwrap().sin(&()).unwrap().exp(&()).unwrap();
        let direct = ix.mul(iy).unwrap().sin().exp().unwrap();
        prop_assert!(meet(j.value(), &direct));
        // And the first derivative by x: y cos(xy) exp(sin(xy)).
        let dx = iy.mul(ix.mul(iy).unwrap().cos()).unwrap().mul(direct).unwrap();
        prop_assert!(meet(&j.partial(&[1, 0], &()).unwrap(), &dx));
        prop_assert!(j.value().width() < 1e-12);
    }
}

/// Small integers `-3..=3` (zero one time in seven) from a seeded xorshift.
fn small_ints(seed: u64) -> impl FnMut() -> i64 {
    let mut state = seed | 1;
    move || {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        (state % 7) as i64 - 3
    }
}

/// Checks a shift-table product `fast(a, b)` of the jets with integer coefficients `ai`
/// and `bi` against their exact product (convolved in integers here): it, the pairs-table
/// product and `Jet::mul` in both operand orders enclose every exact coefficient, and where
/// every product is an exact zero the fast route keeps the zero exact.
fn check_fast_product(
    sp: &Rc<JetSpace>,
    order: u32,
    ai: &[i64],
    bi: &[i64],
    fast: impl Fn(&[Interval], &[Interval]) -> Option<Vec<Interval>>,
) -> Result<(), TestCaseError> {
    let n = sp.len(order);
    let mut exact = vec![0i64; n];
    for i in 0..n {
        for j in 0..n {
            let m: Vec<u8> = sp
                .monomial(i)
                .iter()
                .zip(sp.monomial(j))
                .map(|(x, y)| x + y)
                .collect();
            if let Some(k) = sp.position(&m) {
                exact[k] += ai[i] * bi[j];
            }
        }
    }
    let a: Vec<Interval> = ai.iter().map(|&v| pt(v as f64)).collect();
    let b: Vec<Interval> = bi.iter().map(|&v| pt(v as f64)).collect();
    let pairs = Jet::<Interval>::mul_pairs(sp, &a, &b).expect("finite");
    let shift = fast(&a, &b).expect("finite");
    let ja = Jet {
        space: sp.clone(),
        order,
        c: a.clone(),
        constant: false,
    };
    let jb = Jet {
        space: sp.clone(),
        order,
        c: b.clone(),
        constant: false,
    };
    let (p1, p2) = (ja.mul(&jb).expect("finite"), jb.mul(&ja).expect("finite"));
    for k in 0..n {
        let e = exact[k] as f64;
        for c in [&pairs[k], &shift[k], &p1.coeffs()[k], &p2.coeffs()[k]] {
            prop_assert!(c.lo() <= e && e <= c.hi(), "coefficient {} misses {}", k, e);
        }
        if pairs[k].is_exact_zero() {
            prop_assert!(shift[k].is_exact_zero());
        }
    }
    Ok(())
}

proptest! {
    /// The shift-table product by a factor of degree at most 1 encloses the exact product
    /// as the pairs-table product does ([`check_fast_product`]).
    #[test]
    fn linear_factor_product_encloses_the_exact_product_as_the_pairs_product(
        vars in 1usize..4,
        order in 1u32..5,
        seed in any::<u64>(),
    ) {
        let sp = JetSpace::new(vars, order).expect("small");
        let n = sp.len(order);
        let mut next = small_ints(seed);
        let ai: Vec<i64> = (0..n).map(|_| next()).collect();
        let li: Vec<i64> = (0..n).map(|k| if k < sp.len(1) { next() } else { 0 }).collect();
        check_fast_product(&sp, order, &ai, &li, |a, l| mul_linear(&sp, order, a, l))?;
    }

    /// The shift-table product by a factor in one variable (coefficients only at the powers
    /// of `x_v`) likewise, and [`univariate`] finds that variable.
    #[test]
    fn one_variable_factor_product_encloses_the_exact_product(
        vars in 1usize..5,
        order in 1u32..6,
        var in 0usize..4,
        seed in any::<u64>(),
    ) {
        let v = var % vars;
        let sp = JetSpace::new(vars, order).expect("small");
        let n = sp.len(order);
        let mut next = small_ints(seed);
        let ai: Vec<i64> = (0..n).map(|_| next()).collect();
        let ui: Vec<i64> = (0..n)
            .map(|k| {
                let m = sp.monomial(k);
                let pure = m.iter().enumerate().all(|(w, &e)| w == v || e == 0);
                if pure { next() } else { 0 }
            })
            .collect();
        let u: Vec<Interval> = ui.iter().map(|&x| pt(x as f64)).collect();
        let found = univariate(&sp, &u);
        prop_assert!(found.is_none() || found == Some(v));
        check_fast_product(&sp, order, &ai, &ui, |a, u| mul_univariate(&sp, order, a, u, v))?;
    }
}

proptest! {
    /// The product by a variable in place is the general product by the variable's jet,
    /// bit for bit: coefficients with rounding (thirds), exact zeros, and a point exactly
    /// at 0 among the values.
    #[test]
    fn the_product_by_a_variable_in_place_is_the_general_product(
        vars in 1usize..5,
        order in 0u32..5,
        var in 0usize..4,
        at_zero in any::<bool>(),
        seed in any::<u64>(),
    ) {
        let v = var % vars;
        let sp = JetSpace::new(vars, order).expect("small");
        let n = sp.len(order);
        let mut next = small_ints(seed);
        let third = pt(1.0).div(pt(3.0)).expect("finite");
        let c: Vec<Interval> = (0..n)
            .map(|_| pt(next() as f64).mul(third).expect("finite"))
            .collect();
        let a = J { space: sp.clone(), order, c, constant: false };
        let value = if at_zero { pt(0.0) } else { pt(next() as f64).mul(third).expect("finite") };
        let general = a.mul(&Jet::variable(&sp, order, v, value)).expect("finite");
        match a.clone().mul_variable_into(order, v, &value) {
            Ok(fast) => {
                let fast = fast.expect("finite");
                prop_assert_eq!(format!("{:?}", fast), format!("{:?}", general));
            }
            Err(back) => {
                prop_assert_eq!(order, 0);
                prop_assert_eq!(format!("{:?}", back), format!("{:?}", a));
            }
        }
        // A constant goes back to the caller untouched.
        let k = Jet::constant(&sp, order, third);
        prop_assert!(k.mul_variable_into(order, v, &value).is_err());
    }
}

#[test]
fn a_mixed_factor_is_not_taken_for_one_variable() {
    // x*y is in two variables; x^2 + 3 in one; a constant in none.
    let sp = JetSpace::new(2, 3).expect("small");
    let n = sp.len(3);
    let at = |exps: &[u8], v: f64| {
        let mut c = vec![pt(0.0); n];
        c[sp.position(exps).expect("in the space")] = pt(v);
        c
    };
    assert_eq!(univariate(&sp, &at(&[1, 1], 2.0)), None);
    let mut x2 = at(&[2, 0], 1.0);
    x2[0] = pt(3.0);
    assert_eq!(univariate(&sp, &x2), Some(0));
    assert_eq!(univariate(&sp, &at(&[0, 3], 1.0)), Some(1));
    assert_eq!(univariate(&sp, &at(&[0, 0], 5.0)), None);
    let mut both = at(&[2, 0], 1.0);
    both[sp.position(&[0, 1]).expect("in the space")] = pt(1.0);
    assert_eq!(univariate(&sp, &both), None);
}

#[test]
fn linear_factor_product_encloses_the_exact_product() {
    // (1/3 + x/7)(x + y)^2 at order 3: widened enclosures of the same numbers must meet
    // those of the pairs product.
    let (x, y) = xy(0.5, -0.25, 3);
    let third = Scalar::div(&pt(1.0), &pt(3.0)).unwrap();
    let sev = Scalar::div(&pt(1.0), &pt(7.0)).unwrap();
    let lin = x
        .scale(&sev)
        .unwrap()
        .add(&Jet::constant(&x.space, 3, third))
        .unwrap();
    let s = x.add(&y).unwrap();
    let q = s.mul(&s).unwrap();
    let fast = lin.mul(&q).unwrap();
    let slow = Jet::<Interval>::mul_pairs(&x.space, lin.coeffs(), q.coeffs()).unwrap();
    assert!(fast.coeffs().iter().zip(&slow).all(|(a, b)| meet(a, b)));
    assert!(fast.coeffs().iter().any(|c| c.lo() != 0.0));
}

/// Bit for bit: both enclosures' bounds are the same doubles.
fn identical(a: &J, b: &J) -> bool {
    a.order() == b.order()
        && a.is_constant() == b.is_constant()
        && a.coeffs().len() == b.coeffs().len()
        && a.coeffs().iter().zip(b.coeffs()).all(|(x, y)| {
            x.lo().to_bits() == y.lo().to_bits() && x.hi().to_bits() == y.hi().to_bits()
        })
}

proptest! {
    /// The in-place operations of the evaluator are the allocating ones, bit for bit, for
    /// every mix of constant and non-constant operands and of orders.
    #[test]
    fn in_place_operations_equal_the_allocating_ones(
        x0 in -3.0f64..3.0, y0 in -3.0f64..3.0, k in -3.0f64..3.0,
        n1 in 0u32..4, n2 in 0u32..4, which in 0usize..4,
    ) {
        let sp = JetSpace::new(2, 3).expect("small");
        let x = Jet::variable(&sp, n1, 0, pt(x0));
        let y = Jet::variable(&sp, n2, 1, pt(y0));
        let a = x.mul(&x).and_then(|xx| xx.add(&y)).expect("finite"); // x^2 + y
        let b = y.sin(&()).expect("finite").truncate(n2);
        let c1 = Jet::constant(&sp, n1, pt(k));
        let c2 = Jet::constant(&sp, n2, pt(k * 0.5 + 0.1));
        let ops: [(&J, &J); 4] = [(&a, &b), (&c1, &b), (&a, &c2), (&c1, &c2)];
        let (l, r) = ops[which];
        prop_assert!(identical(&l.clone().add_into(r).expect("finite"), &l.add(r).expect("finite")));
        prop_assert!(identical(&l.clone().sub_into(r).expect("finite"), &l.sub(r).expect("finite")));
        prop_assert!(identical(&l.clone().mul_into(r.clone()).expect("finite"), &l.mul(r).expect("finite")));
        // (A constant jet's power takes another path, not through the binomials.)
        for p in [2i64, 3, -1, -2, 7].into_iter().filter(|_| !a.is_constant()) {
            // powi's binomials in machine integers give the enclosures of exact rationals.
            if let (Some(v), Some(w)) = (a.powi(p, &()), a.compose(&{
                let a0 = a.coeffs()[0];
                let mut b = BigRational::from_integer(1.into());
                let mut cs = Vec::new();
                for k in 0..=i64::from(a.order()) {
                    if k > 0 {
                        b *= BigRational::new(BigInt::from(p - k + 1), BigInt::from(k));
                    }
                    if p >= 0 && k > p {
                        cs.push(Interval::ZERO);
                        continue;
                    }
                    match a0.powi(p - k) {
                        Some(q) => cs.push(rational_interval_for_test(&b).mul(q).expect("finite")),
                        None => cs.push(Interval::ZERO),
                    }
                }
                cs
            })) {
                prop_assert!(identical(&v, &w));
            }
        }
    }
}

fn rational_interval_for_test(q: &BigRational) -> Interval {
    crate::jet::scalar::rational_interval(q).expect("finite")
}
