//! A straight-line program in certified interval arithmetic: the fast path of `export`.
//!
//! Model. The export quantities, built from the problem's texts with their derivatives taken
//! symbolically on the user-structure DAG ([`super::lower`]), are lowered once into a list of
//! instructions over f64 intervals with outward rounding ([`crate::interval::Interval`]);
//! common subexpressions are shared by hash-consing. Evaluating a point is one pass over the
//! list: no Taylor coefficients, no allocation beyond the register file. Export runs it over
//! [`LANES`] points at a time ([`IntervalProgram::run_block`]: one instruction over a lane
//! array of lower and upper bounds, so decoding is paid once per instruction and block, and
//! the arithmetic loops vectorise); the block result is the per-point result bit for bit.
//! Values whose enclosure is too wide for the tolerance are run again in multiprecision
//! balls ([`IntervalProgram::run_in`]), only the instructions the failing columns need, with
//! values of one- and two-coordinate subexpressions reused across points ([`Memo`]); what
//! the program cannot settle goes on to the jets of [`super::certify`].
//!
//! **Invariants:** every instruction returns an enclosure of the exact result for every real
//! in its operands, or `None` ("cannot evaluate here"), which spreads; constants are exact
//! rationals enclosed outward; parameters are the exact f64 values given.

use super::lanes;
use crate::interval::Interval;
use crate::jet::Scalar;
use crate::jet::scalar::rational_interval;
use crate::tape::{TapeError, Target};
use num_rational::BigRational;
use rustc_hash::FxHashMap;

/// An exact constant of the program.
#[derive(Clone, Debug)]
enum Exact {
    Rational(BigRational),
    Pi,
    /// A parameter's f64 value (exact as given).
    Value(f64),
}

/// An instruction; operands are earlier registers.
#[derive(Clone, Copy, Debug)]
enum Instr {
    /// Constant number `k` (its f64 enclosure and its exact value in `exact[k]`).
    Const(Interval, u32),
    Input(u8),
    Add(u32, u32),
    Sub(u32, u32),
    Mul(u32, u32),
    Div(u32, u32),
    Neg(u32),
    PowI(u32, i32),
    Root(u32, u32),
    Exp(u32),
    Log(u32),
    Sin(u32),
    Cos(u32),
    Atan(u32),
}

impl Instr {
    /// The registers the instruction reads.
    fn operands(&self) -> impl Iterator<Item = u32> {
        let (a, b) = match *self {
            Instr::Const(..) | Instr::Input(_) => (None, None),
            Instr::Add(a, b) | Instr::Sub(a, b) | Instr::Mul(a, b) | Instr::Div(a, b) => {
                (Some(a), Some(b))
            }
            Instr::Neg(a)
            | Instr::PowI(a, _)
            | Instr::Root(a, _)
            | Instr::Exp(a)
            | Instr::Log(a)
            | Instr::Sin(a)
            | Instr::Cos(a)
            | Instr::Atan(a) => (Some(a), None),
        };
        a.into_iter().chain(b)
    }
}

/// The hash-consing key of an instruction (constants by their bits).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
enum Key {
    Const(u64, u64),
    Input(u8),
    Op(u8, u32, u32),
}

fn key(i: &Instr) -> Key {
    match *i {
        Instr::Const(_, k) => Key::Const(u64::from(k), 0),
        Instr::Input(k) => Key::Input(k),
        Instr::Add(a, b) => Key::Op(0, a, b),
        Instr::Sub(a, b) => Key::Op(1, a, b),
        Instr::Mul(a, b) => Key::Op(2, a, b),
        Instr::Div(a, b) => Key::Op(3, a, b),
        Instr::Neg(a) => Key::Op(4, a, 0),
        Instr::PowI(a, k) => Key::Op(5, a, k as u32),
        Instr::Root(a, q) => Key::Op(6, a, q),
        Instr::Exp(a) => Key::Op(7, a, 0),
        Instr::Log(a) => Key::Op(8, a, 0),
        Instr::Sin(a) => Key::Op(9, a, 0),
        Instr::Cos(a) => Key::Op(10, a, 0),
        Instr::Atan(a) => Key::Op(11, a, 0),
    }
}

/// The program being built and then run: coordinates `t, x, y, z` are inputs 0..4,
/// parameters are constants.
#[derive(Clone, Debug, Default)]
pub struct IntervalProgram {
    instrs: Vec<Instr>,
    index: FxHashMap<Key, u32>,
    parameters: Vec<(String, f64)>,
    exact: Vec<Exact>,
    constants_index: FxHashMap<ExactKey, u32>,
}

/// The sharing key of a constant: its exact value (numerator and denominator hashed as
/// integers; a rational's own hash recurses over its continued fraction).
#[derive(Clone, Debug, PartialEq, Eq, Hash)]
enum ExactKey {
    Rational(num_bigint::BigInt, num_bigint::BigInt),
    Pi,
    Value(u64),
}

const COORDS: [&str; 4] = ["t", "x", "y", "z"];

impl IntervalProgram {
    /// An empty program with these parameter values.
    #[must_use]
    pub fn new(parameters: &[(String, f64)]) -> IntervalProgram {
        IntervalProgram {
            parameters: parameters.to_vec(),
            ..IntervalProgram::default()
        }
    }

    /// A constant, shared by its exact value (two rationals with the same f64 enclosure
    /// stay two constants: the multiprecision run tells them apart).
    fn constant(&mut self, c: Interval, e: Exact) -> u32 {
        let k = match &e {
            Exact::Rational(q) => ExactKey::Rational(q.numer().clone(), q.denom().clone()),
            Exact::Pi => ExactKey::Pi,
            Exact::Value(v) => ExactKey::Value(v.to_bits()),
        };
        if let Some(&r) = self.constants_index.get(&k) {
            return r;
        }
        self.exact.push(e);
        let r = self.instrs.len() as u32;
        self.instrs
            .push(Instr::Const(c, (self.exact.len() - 1) as u32));
        self.constants_index.insert(k, r);
        r
    }

    /// The constants enclosed in `S` at its working precision, for [`IntervalProgram::run_in`].
    #[must_use]
    pub fn constants<S: Scalar>(&self, ctx: &S::Ctx) -> Vec<Option<S>> {
        self.exact
            .iter()
            .map(|e| match e {
                Exact::Rational(q) => S::from_rational(q, ctx),
                Exact::Pi => S::pi(ctx),
                Exact::Value(v) => S::input(*v, ctx),
            })
            .collect()
    }

    /// Runs the program at `(t, x, y, z)` in enclosure arithmetic `S` (multiprecision balls
    /// where f64 intervals are too wide), with `constants` from
    /// [`IntervalProgram::constants`] at the same precision. With `need` (from
    /// [`IntervalProgram::needed`]), instructions not marked are skipped (left `None`); with
    /// `memo` (one per program and precision), values of instructions that depend on at
    /// most two coordinates are reused from earlier points with the same such coordinates.
    pub fn run_in<S: Scalar>(
        &self,
        point: [f64; 4],
        ctx: &S::Ctx,
        constants: &[Option<S>],
        need: Option<&[bool]>,
        mut memo: Option<&mut Memo<S>>,
        regs: &mut Vec<Option<S>>,
    ) {
        regs.clear();
        regs.reserve(self.instrs.len());
        if let Some(m) = memo.as_deref_mut()
            && m.deps.len() != self.instrs.len()
        {
            *m = Memo::new(self);
        }
        for (n, i) in self.instrs.iter().enumerate() {
            if need.is_some_and(|m| !m[n]) {
                regs.push(None);
                continue;
            }
            let key = memo.as_deref().and_then(|m| m.key(n, point));
            if let (Some(m), Some(k)) = (memo.as_deref(), key)
                && let Some(v) = m.values.get(&k)
            {
                regs.push(v.clone());
                continue;
            }
            let r = |k: u32| regs[k as usize].as_ref();
            let v = match *i {
                Instr::Const(_, k) => constants[k as usize].clone(),
                Instr::Input(k) => S::input(point[k as usize], ctx),
                Instr::Add(a, b) => r(a).zip(r(b)).and_then(|(x, y)| x.add(y)),
                Instr::Sub(a, b) => r(a).zip(r(b)).and_then(|(x, y)| x.sub(y)),
                Instr::Mul(a, b) => r(a).zip(r(b)).and_then(|(x, y)| x.mul(y)),
                Instr::Div(a, b) => r(a).zip(r(b)).and_then(|(x, y)| x.div(y)),
                Instr::Neg(a) => r(a).map(Scalar::neg),
                Instr::PowI(a, k) => r(a).and_then(|x| x.powi(i64::from(k))),
                Instr::Root(a, q) => r(a).and_then(|x| root_in(x, q, ctx)),
                Instr::Exp(a) => r(a).and_then(Scalar::exp),
                Instr::Log(a) => r(a).and_then(Scalar::ln),
                Instr::Sin(a) => r(a).and_then(Scalar::sin),
                Instr::Cos(a) => r(a).and_then(Scalar::cos),
                Instr::Atan(a) => r(a).and_then(Scalar::atan),
            };
            if let (Some(m), Some(k)) = (memo.as_deref_mut(), key) {
                m.insert(k, v.clone());
            }
            regs.push(v);
        }
    }

    fn push(&mut self, i: Instr) -> u32 {
        let k = key(&i);
        if let Some(&r) = self.index.get(&k) {
            return r;
        }
        let r = self.instrs.len() as u32;
        self.instrs.push(i);
        self.index.insert(k, r);
        r
    }

    /// Runs the program at `(t, x, y, z)` into `regs` (resized as needed), one point at a
    /// time: the tests' reference for [`IntervalProgram::run_block`].
    #[cfg(test)]
    pub fn run(&self, point: [f64; 4], regs: &mut Vec<Option<Interval>>) {
        regs.clear();
        regs.reserve(self.instrs.len());
        for i in &self.instrs {
            let r = |k: u32| regs[k as usize];
            let v = match *i {
                Instr::Const(c, _) => Some(c),
                Instr::Input(k) => Interval::point(point[k as usize]),
                op => apply(op, r),
            };
            regs.push(v);
        }
    }
}

/// Points evaluated together by [`IntervalProgram::run_block`]: one instruction is applied
/// to this many lanes before the next is decoded.
pub const LANES: usize = 64;

/// The register file of [`IntervalProgram::run_block`]: for every instruction, the lower
/// and upper bounds of its value at each of [`LANES`] points (structure of arrays). A lane
/// that "cannot be evaluated here" holds NaN in both bounds.
#[derive(Clone, Debug, Default)]
pub struct BlockRegs {
    lo: Vec<f64>,
    hi: Vec<f64>,
    /// Instructions whose constant lanes are already filled (constants never change).
    constants_filled: usize,
}

impl BlockRegs {
    /// The value of register `r` at lane `k`, as `IntervalProgram::run` (tests only) would give it.
    #[must_use]
    pub fn get(&self, r: u32, k: usize) -> Option<Interval> {
        let i = r as usize * LANES + k;
        Interval::new(self.lo[i], self.hi[i])
    }

    /// The lower and upper bounds of register `r` at every lane (NaN where it cannot be
    /// evaluated; lanes beyond the last block's points hold stale values).
    #[must_use]
    pub fn lanes(&self, r: u32) -> (&[f64], &[f64]) {
        let i = r as usize * LANES;
        (&self.lo[i..i + LANES], &self.hi[i..i + LANES])
    }
}

impl IntervalProgram {
    /// An empty register file for [`IntervalProgram::run_block`].
    #[must_use]
    pub fn block_regs(&self) -> BlockRegs {
        BlockRegs::default()
    }

    /// Runs the program at up to [`LANES`] points at once (lane `k` is `points[k]`), one
    /// instruction over all lanes at a time; lane `k` of register `r` is then exactly what
    /// `IntervalProgram::run` (tests only) gives at `points[k]` (same operations, same rounding, tested
    /// bit for bit), read with [`BlockRegs::get`].
    ///
    /// The four operations, negation, square roots, integer powers, sine and cosine are
    /// loops over the lanes of the branch-free operations of [`super::lanes`], which the
    /// per-point evaluator calls too; exp, log, atan and other roots call the [`Interval`]
    /// operations lane by lane.
    ///
    /// # Panics
    ///
    /// If `points` has more than [`LANES`] entries.
    pub fn run_block(&self, points: &[[f64; 4]], regs: &mut BlockRegs) {
        assert!(points.len() <= LANES, "at most LANES points per block");
        #[cfg(target_arch = "x86_64")]
        if std::is_x86_feature_detected!("avx2") {
            // SAFETY: the processor has AVX2 (detected just above), the only requirement of
            // `run_block_avx2`.
            unsafe { self.run_block_avx2(points, regs) };
            return;
        }
        self.run_block_lanes(points, regs);
    }

    /// [`IntervalProgram::run_block`] compiled for AVX2: the same operations (IEEE addition,
    /// multiplication, comparisons; no fused multiply-add, which Rust never forms on its
    /// own), so the same bits, four lanes per instruction instead of two.
    ///
    /// # Safety
    ///
    /// The processor must support AVX2.
    #[cfg(target_arch = "x86_64")]
    #[target_feature(enable = "avx2")]
    unsafe fn run_block_avx2(&self, points: &[[f64; 4]], regs: &mut BlockRegs) {
        self.run_block_lanes(points, regs);
    }

    /// The body of [`IntervalProgram::run_block`], inlined into each compiled variant.
    #[inline(always)]
    fn run_block_lanes(&self, points: &[[f64; 4]], regs: &mut BlockRegs) {
        let size = self.instrs.len() * LANES;
        if regs.lo.len() != size {
            regs.lo = vec![f64::NAN; size];
            regs.hi = vec![f64::NAN; size];
            regs.constants_filled = 0;
        }
        let n = points.len();
        for (i, ins) in self.instrs.iter().enumerate() {
            let (lo_src, lo_rest) = regs.lo.split_at_mut(i * LANES);
            let (hi_src, hi_rest) = regs.hi.split_at_mut(i * LANES);
            let (lo, hi) = (&mut lo_rest[..n], &mut hi_rest[..n]);
            let reg = |k: u32| {
                let s = k as usize * LANES;
                (&lo_src[s..s + n], &hi_src[s..s + n])
            };
            match *ins {
                Instr::Const(c, _) => {
                    if regs.constants_filled <= i {
                        lo_rest[..LANES].fill(c.lo());
                        hi_rest[..LANES].fill(c.hi());
                    }
                }
                Instr::Input(k) => {
                    for (j, p) in points.iter().enumerate() {
                        let x = p[k as usize];
                        (lo[j], hi[j]) = lanes::checked(x, x);
                    }
                }
                Instr::Add(a, b) => binary_lanes(reg(a), reg(b), (lo, hi), lanes::add),
                Instr::Sub(a, b) => binary_lanes(reg(a), reg(b), (lo, hi), lanes::sub),
                Instr::Mul(a, b) => binary_lanes(reg(a), reg(b), (lo, hi), lanes::mul),
                Instr::Div(a, b) => binary_lanes(reg(a), reg(b), (lo, hi), lanes::div),
                Instr::Neg(a) => {
                    let (alo, ahi) = reg(a);
                    for j in 0..n {
                        (lo[j], hi[j]) = lanes::neg(alo[j], ahi[j]);
                    }
                }
                Instr::Root(a, 2) => {
                    let (alo, ahi) = reg(a);
                    for j in 0..n {
                        (lo[j], hi[j]) = lanes::sqrt(alo[j], ahi[j]);
                    }
                }
                Instr::PowI(a, k) => {
                    let (alo, ahi) = reg(a);
                    for j in 0..n {
                        (lo[j], hi[j]) = lanes::powi(alo[j], ahi[j], k);
                    }
                }
                Instr::Sin(a) | Instr::Cos(a) => {
                    let (alo, ahi) = reg(a);
                    let cosine = matches!(ins, Instr::Cos(_));
                    lanes::sin_or_cos_lanes(alo, ahi, lo, hi, cosine);
                }
                _ => {
                    for j in 0..n {
                        let r = |k: u32| {
                            let s = k as usize * LANES + j;
                            Interval::new(lo_src[s], hi_src[s])
                        };
                        let v = apply(*ins, r);
                        (lo[j], hi[j]) = v.map_or((f64::NAN, f64::NAN), |v| (v.lo(), v.hi()));
                    }
                }
            }
        }
        regs.constants_filled = self.instrs.len();
    }

    /// Which instructions the registers `outs` depend on (the rest can be skipped).
    #[must_use]
    pub fn needed(&self, outs: &[u32]) -> Vec<bool> {
        let mut need = vec![false; self.instrs.len()];
        for &r in outs {
            need[r as usize] = true;
        }
        for i in (0..self.instrs.len()).rev() {
            if !need[i] {
                continue;
            }
            for k in self.instrs[i].operands() {
                need[k as usize] = true;
            }
        }
        need
    }
}

/// Values of instructions kept across points by [`IntervalProgram::run_in`].
///
/// An instruction's value is a function of the coordinates it depends on (constants and
/// parameters are fixed for a program, and every operation is deterministic), so a value
/// computed at one point is the value at every point with the same bits in those
/// coordinates. On a grid, an instruction of at most two coordinates (a phase `x - t`, its
/// sine) recurs along whole lines and planes of points; only those are kept, at most
/// [`Memo::CAPACITY`] at a time (the memo is emptied when full).
#[derive(Clone, Debug)]
pub struct Memo<S> {
    /// Per instruction, the coordinates it depends on (bit `k` for coordinate `k`).
    deps: Vec<u8>,
    /// Per instruction, whether its values are kept.
    kept: Vec<bool>,
    values: FxHashMap<(u32, [u64; 4]), Option<S>>,
}

impl<S: Clone> Memo<S> {
    /// Values kept at most.
    pub const CAPACITY: usize = 1 << 14;

    /// An empty memo for `program`.
    #[must_use]
    pub fn new(program: &IntervalProgram) -> Memo<S> {
        let mut deps = Vec::with_capacity(program.instrs.len());
        for i in &program.instrs {
            let m = match *i {
                Instr::Input(k) => 1u8 << k,
                _ => i.operands().fold(0, |m, k| m | deps[k as usize]),
            };
            deps.push(m);
        }
        let kept = program
            .instrs
            .iter()
            .zip(&deps)
            .map(|(i, d)| {
                !matches!(i, Instr::Const(..) | Instr::Input(_))
                    && (1..=2).contains(&d.count_ones())
            })
            .collect();
        Memo {
            deps,
            kept,
            values: FxHashMap::default(),
        }
    }

    /// The key of instruction `n` at `point`, if it is one that is kept: an operation that
    /// depends on one or two coordinates (constants and inputs are cheaper to make than to
    /// look up).
    fn key(&self, n: usize, point: [f64; 4]) -> Option<(u32, [u64; 4])> {
        let d = self.deps[n];
        if !self.kept[n] {
            return None;
        }
        let mut k = [0u64; 4];
        for (c, (slot, x)) in k.iter_mut().zip(point).enumerate() {
            if d & (1 << c) != 0 {
                *slot = x.to_bits();
            }
        }
        Some((n as u32, k))
    }

    fn insert(&mut self, k: (u32, [u64; 4]), v: Option<S>) {
        if self.values.len() >= Self::CAPACITY {
            self.values.clear();
        }
        self.values.insert(k, v);
    }
}

/// `(lo, hi)[j] = f(a[j], b[j])` over the lanes (`f` inlined, so the loop vectorises).
#[inline(always)]
fn binary_lanes<F: Fn(f64, f64, f64, f64) -> (f64, f64)>(
    (alo, ahi): (&[f64], &[f64]),
    (blo, bhi): (&[f64], &[f64]),
    (lo, hi): (&mut [f64], &mut [f64]),
    f: F,
) {
    for j in 0..lo.len() {
        (lo[j], hi[j]) = f(alo[j], ahi[j], blo[j], bhi[j]);
    }
}

/// The value of one operation from its operands' values (`r(register)`): the one
/// definition that `IntervalProgram::run` (tests only) and the per-lane fallback of the block evaluator
/// share, so the two agree bit for bit. Constants and inputs are not operations: `None`.
fn apply(ins: Instr, r: impl Fn(u32) -> Option<Interval>) -> Option<Interval> {
    let lane = |k: u32| r(k).map_or((f64::NAN, f64::NAN), |v| (v.lo(), v.hi()));
    let binary = |a: u32, b: u32, f: fn(f64, f64, f64, f64) -> (f64, f64)| {
        let ((al, ah), (bl, bh)) = (lane(a), lane(b));
        lanes::interval(f(al, ah, bl, bh))
    };
    match ins {
        Instr::Const(..) | Instr::Input(_) => None,
        Instr::Add(a, b) => binary(a, b, lanes::add),
        Instr::Sub(a, b) => binary(a, b, lanes::sub),
        Instr::Mul(a, b) => binary(a, b, lanes::mul),
        Instr::Div(a, b) => binary(a, b, lanes::div),
        Instr::Neg(a) => r(a).map(|x| -x),
        Instr::PowI(a, k) => {
            let (l, h) = lane(a);
            lanes::interval(lanes::powi(l, h, k))
        }
        Instr::Root(a, q) => r(a).and_then(|x| root(x, q)),
        Instr::Exp(a) => r(a).and_then(Interval::exp),
        Instr::Log(a) => r(a).and_then(Interval::ln),
        Instr::Sin(a) | Instr::Cos(a) => {
            let (l, h) = lane(a);
            lanes::interval(lanes::sin_or_cos(l, h, matches!(ins, Instr::Cos(_))))
        }
        Instr::Atan(a) => r(a).map(Interval::atan),
    }
}

/// [`root`] in any enclosure arithmetic.
fn root_in<S: Scalar>(x: &S, q: u32, ctx: &S::Ctx) -> Option<S> {
    if q == 2 {
        return x.sqrt();
    }
    if x.is_exact_zero() {
        return Some(S::zero());
    }
    if !x.is_positive() {
        return None;
    }
    x.ln()?.div(&S::from_i64(i64::from(q), ctx)?)?.exp()
}

/// The principal real `x^(1/q)`: `sqrt` for `q = 2`, `exp(ln(x)/q)` for positive `x`, exactly
/// 0 at 0; `None` where it is not real or the enclosure reaches below 0.
fn root(x: Interval, q: u32) -> Option<Interval> {
    if q == 2 {
        return x.sqrt();
    }
    if x.lo() == 0.0 && x.hi() == 0.0 {
        return Some(Interval::ZERO);
    }
    if x.lo() <= 0.0 {
        return None;
    }
    let inv_q = Interval::point(1.0)?.div(Interval::point(f64::from(q))?)?;
    x.ln()?.mul(inv_q)?.exp()
}

/// The operations of [`Target`] that are one instruction each: `name(a, b) => Instr`, the
/// operands registers (`u32`) unless a type is given.
macro_rules! push_instructions {
    ($($name:ident($($arg:ident $(: $ty:ty)?),+) => $instr:ident,)+) => {
        $(
            fn $name(&mut self, $($arg: push_instructions!(@ty $($ty)?)),+) -> u32 {
                self.push(Instr::$instr($($arg),+))
            }
        )+
    };
    (@ty) => { u32 };
    (@ty $ty:ty) => { $ty };
}

impl Target for IntervalProgram {
    type Node = u32;
    fn number(&mut self, q: &BigRational) -> Option<u32> {
        let c = rational_interval(q)?;
        Some(self.constant(c, Exact::Rational(q.clone())))
    }
    fn pi(&mut self) -> u32 {
        // The double nearest to pi is below it; one ulp either side encloses it.
        let pi = Interval::around(std::f64::consts::PI).expect("finite");
        self.constant(pi, Exact::Pi)
    }
    fn symbol(&mut self, name: &str, sample: Option<&str>) -> Result<u32, TapeError> {
        if let Some((_, v)) = self.parameters.iter().find(|(n, _)| n == name) {
            let v = *v;
            let c = Interval::point(v).ok_or_else(|| TapeError::Unsupported(name.into()))?;
            return Ok(self.constant(c, Exact::Value(v)));
        }
        match (COORDS.iter().position(|c| *c == name), sample) {
            (Some(k), None) => Ok(self.push(Instr::Input(k as u8))),
            (_, None) => Err(TapeError::Unbound(name.to_string())),
            (_, Some(f)) => Err(TapeError::UnboundInSample {
                func: f.to_string(),
                name: name.to_string(),
            }),
        }
    }
    push_instructions! {
        add(a, b) => Add,
        sub(a, b) => Sub,
        mul(a, b) => Mul,
        div(a, b) => Div,
        neg(a) => Neg,
        powi(a, k: i32) => PowI,
        root(a, q: u32) => Root,
        exp(a) => Exp,
        log(a) => Log,
        sin(a) => Sin,
        cos(a) => Cos,
        atan(a) => Atan,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::export::lanes::{down, up};
    use crate::export::lower::{Texts, roots};
    use crate::export::quantity::Quantity;
    use crate::interval::{Ball, DdBall};
    use crate::tape::UserExprs;
    use proptest::prelude::*;

    /// The texts of a vacuum perturbation `h` without defines or functions.
    fn vacuum(h: &[[Option<String>; 4]; 4]) -> Texts<'_> {
        Texts {
            h,
            source: None,
            user: UserExprs::default(),
            frame: None,
        }
    }

    /// The program's enclosures contain the true values: R_txtx of h_xx = sin(w (t - z)) is
    /// (w^2/2) sin(w (t - z)) (MTW sign: R_txtx = -(1/2) d_t d_t h_xx).
    #[test]
    fn curvature_enclosures_contain_the_value() {
        let mut h: [[Option<String>; 4]; 4] = Default::default();
        h[1][1] = Some("sin(w*(t - z))".into());
        let texts = vacuum(&h);
        let p = IntervalProgram::new(&[("w".into(), 3.0)]);
        let (p, r) = roots(p, &texts, &[Quantity::Riemann]).unwrap();
        let mut regs = Vec::new();
        let (t, z) = (0.7, 0.2);
        p.run([t, 0.0, 0.0, z], &mut regs);
        let v = regs[r[0][0] as usize].unwrap();
        let want = 4.5 * (3.0f64 * (t - z)).sin();
        assert!(v.lo() <= want && want <= v.hi(), "{v:?} vs {want}");
        assert!(v.hi() - v.lo() < 1e-13, "{v:?}");
        // A singular point gives None, not a number.
        let mut h: [[Option<String>; 4]; 4] = Default::default();
        h[0][0] = Some("1/x".into());
        let texts = vacuum(&h);
        let (p, r) = roots(IntervalProgram::new(&[]), &texts, &[Quantity::H]).unwrap();
        p.run([0.0, 0.0, 1.0, 1.0], &mut regs);
        assert!(regs[r[0][0] as usize].is_none());
    }

    #[test]
    fn roots_of_order_three_are_real_only_for_positive_arguments() {
        let x = Interval::point(8.0).unwrap();
        let r = root(x, 3).unwrap();
        assert!(r.lo() <= 2.0 && 2.0 <= r.hi() && r.hi() - r.lo() < 1e-14);
        assert!(root(Interval::point(-8.0).unwrap(), 3).is_none());
        assert_eq!(root(Interval::ZERO, 3), Some(Interval::ZERO));
    }

    /// The values the block evaluator is tested on: exact zeros and ones (the exact-point
    /// cases of add, mul, div, sin), halves, small and large magnitudes, negative numbers.
    fn coordinate() -> impl Strategy<Value = f64> {
        prop_oneof![
            Just(0.0),
            Just(-0.0),
            Just(1.0),
            Just(0.5),
            -3.0..3.0f64,
            -1e-300..1e-300f64,
            -1e150..1e150f64,
        ]
    }

    /// A random program over `t, x, y, z`, a parameter and a few constants: `ops` are
    /// (operation, operand, operand, exponent) with operands taken modulo the nodes so far.
    fn random_program(ops: &[(u8, u16, u16, i8)]) -> (IntervalProgram, Vec<u32>) {
        let mut p = IntervalProgram::new(&[("w".into(), 1.7)]);
        let mut nodes = Vec::new();
        for c in ["t", "x", "y", "z", "w"] {
            nodes.push(p.symbol(c, None).unwrap());
        }
        for (n, d) in [(0, 1), (1, 3), (2, 1), (-5, 7)] {
            let q = BigRational::new(n.into(), d.into());
            nodes.push(p.number(&q).unwrap());
        }
        nodes.push(p.pi());
        for &(op, a, b, k) in ops {
            let a = nodes[a as usize % nodes.len()];
            let b = nodes[b as usize % nodes.len()];
            let r = match op % 11 {
                0 => p.add(a, b),
                1 => p.sub(a, b),
                2 => p.mul(a, b),
                3 => p.div(a, b),
                4 => p.neg(a),
                5 => p.powi(a, i32::from(k % 5)),
                6 => p.root(a, 2 + u32::from(k.unsigned_abs() % 2)),
                7 => p.exp(a),
                8 => p.log(a),
                9 => p.sin(a),
                _ => p.cos(a),
            };
            nodes.push(r);
        }
        (p, nodes)
    }

    fn bits(v: Option<Interval>) -> Option<(u64, u64)> {
        v.map(|i| (i.lo().to_bits(), i.hi().to_bits()))
    }

    proptest! {
        /// The branch-free ulp steps are `next_up`/`next_down` wherever the block evaluator
        /// relies on them (every double but NaN and the infinity they move away from).
        #[test]
        fn ulp_steps_are_next_up_and_next_down(b in any::<u64>()) {
            let x = f64::from_bits(b);
            if x.is_nan() {
                prop_assert!(up(x).is_nan() && down(x).is_nan());
            } else {
                if x != f64::INFINITY {
                    prop_assert_eq!(up(x).to_bits(), x.next_up().to_bits(), "{:e}", x);
                }
                if x != f64::NEG_INFINITY {
                    prop_assert_eq!(down(x).to_bits(), x.next_down().to_bits(), "{:e}", x);
                }
            }
        }

        /// The block evaluator gives, bit for bit, what the per-point evaluator gives, in
        /// every register and every lane (so it inherits its enclosures); lanes are
        /// independent of each other.
        #[test]
        fn block_evaluation_is_the_per_point_evaluation(
            ops in proptest::collection::vec((any::<u8>(), any::<u16>(), any::<u16>(), any::<i8>()), 1..40),
            points in proptest::collection::vec(proptest::array::uniform4(coordinate()), 1..=LANES),
        ) {
            let (p, _) = random_program(&ops);
            let mut block = p.block_regs();
            p.run_block(&points, &mut block);
            let mut regs = Vec::new();
            for (k, &pt) in points.iter().enumerate() {
                p.run(pt, &mut regs);
                for (r, &want) in regs.iter().enumerate() {
                    prop_assert_eq!(bits(block.get(r as u32, k)), bits(want), "register {} lane {}", r, k);
                }
            }
            // A second, shorter block in the same register file (constants kept).
            let tail = &points[points.len() / 2..];
            p.run_block(tail, &mut block);
            for (k, &pt) in tail.iter().enumerate() {
                p.run(pt, &mut regs);
                for (r, &want) in regs.iter().enumerate() {
                    prop_assert_eq!(bits(block.get(r as u32, k)), bits(want), "register {} lane {}", r, k);
                }
            }
            // The baseline build of the lane loops (what a processor without AVX2 runs)
            // gives the same bits as the dispatched one.
            let mut baseline = p.block_regs();
            p.run_block_lanes(&points, &mut baseline);
            p.run_block(&points, &mut block);
            for k in 0..points.len() {
                for r in 0..p.instrs.len() {
                    prop_assert_eq!(bits(baseline.get(r as u32, k)), bits(block.get(r as u32, k)), "register {} lane {}", r, k);
                }
            }
        }

        /// Every enclosure of the block evaluator, and of the double-double tier, meets the
        /// 256-bit ball of the same value (all contain the exact value), and running only the instructions an output
        /// needs, with values kept from earlier points, gives that output unchanged.
        #[test]
        fn block_enclosures_meet_multiprecision_balls(
            ops in proptest::collection::vec((any::<u8>(), any::<u16>(), any::<u16>(), any::<i8>()), 1..30),
            points in proptest::collection::vec(proptest::array::uniform4(coordinate()), 1..8),
        ) {
            let (p, nodes) = random_program(&ops);
            let mut block = p.block_regs();
            p.run_block(&points, &mut block);
            let consts = p.constants::<Ball>(&256);
            let last = *nodes.last().unwrap();
            let need = p.needed(&[last]);
            let (mut balls, mut sliced, mut dds) = (Vec::new(), Vec::new(), Vec::new());
            let mut memo = Memo::new(&p);
            let dd_consts = p.constants::<DdBall>(&());
            for (k, &pt) in points.iter().enumerate() {
                p.run_in(pt, &256, &consts, None, None, &mut balls);
                for (r, b) in balls.iter().enumerate() {
                    if let (Some(i), Some(b)) = (block.get(r as u32, k), b) {
                        let (lo, hi) = b.bounds_f64();
                        prop_assert!(lo <= i.hi() && i.lo() <= hi,
                            "register {} at {:?}: f64 {:?}, ball [{:e}, {:e}]", r, pt, i, lo, hi);
                    }
                }
                p.run_in(pt, &256, &consts, Some(&need), Some(&mut memo), &mut sliced);
                let (a, b) = (&balls[last as usize], &sliced[last as usize]);
                prop_assert_eq!(a.as_ref().map(Ball::bounds_f64), b.as_ref().map(Ball::bounds_f64));
                // The double-double tier meets them too (where it evaluates at all).
                p.run_in(pt, &(), &dd_consts, None, None, &mut dds);
                for (r, (d, b)) in dds.iter().zip(&balls).enumerate() {
                    if let (Some(d), Some(b)) = (d, b) {
                        let ((dl, dh), (bl, bh)) = (d.bounds_f64(), b.bounds_f64());
                        prop_assert!(dl <= bh && bl <= dh,
                            "register {} at {:?}: double-double [{:e}, {:e}], ball [{:e}, {:e}]", r, pt, dl, dh, bl, bh);
                    }
                }
            }
        }
    }
}
