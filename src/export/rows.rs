//! The certified values of a block of rows: a first pass in f64 intervals over every row,
//! then double-double and multiprecision balls for the values it leaves too wide, both in
//! parallel.
//!
//! Model. [`Numeric::first_pass`] runs the interval program ([`super::program`]) over
//! [`LANES`] points at a time, or the jets of [`super::certify`] point by point where there
//! is no program (on several threads from [`PARALLEL_JETS`] points on, each with its own
//! jets planned from the texts), and judges every value against the tolerance in the same parallel task: a
//! row whose values are all good is written at once (values, bounds, and the per-column
//! [`Stats`] of the task), any other row is left [`Pending`] with its judgements.
//! [`Numeric::refine_all`] raises the precision of a pending row's values, only the columns
//! that need it: through the program, double-double balls ([`DdBall`], about 106 bits, for
//! arithmetic, powers and square roots; a value that needs sin, exp, ... is not evaluated
//! there) and then multiprecision balls at 128, 256 and 512 bits; through the jets, the
//! balls. Pending rows are refined in parallel, each thread with its own constants and memos
//! ([`BallStates`]). The caller takes the pending rows in row order,
//! so errors and reports do not depend on the schedule.
//!
//! **Invariants:** every value's state is the same as a one-row-at-a-time evaluation would
//! give: the block program is the per-point program bit for bit, ball arithmetic is
//! deterministic, and a memo only returns values computed at points with the same bits in the
//! coordinates they depend on.

use super::certify;
use super::lanes;
use super::program::{self, BlockRegs, LANES};
use super::quantity::Quantity;
use super::{ExportError, Numeric, named_point};
use crate::audit::Audit;
use crate::interval::{Ball, DdBall, Interval};
use crate::jet::Scalar;
use rustc_hash::FxHashMap;
use std::sync::Mutex;

/// One value's state during the evaluation of a row.
#[derive(Clone, Copy, Debug)]
pub(super) enum Judged {
    /// Not evaluated at any precision yet, or not evaluable.
    Missing,
    /// Written value and bound, not yet within the relative tolerance.
    Loose(f64, f64),
    /// Within the relative tolerance.
    Good(f64, f64),
    /// Proved 0 by the exact route, but this enclosure `[lo, hi]` excludes 0: the two
    /// routes contradict each other (a defect).
    Contradicts(f64, f64),
}

/// The first judgement of a value from its f64 enclosure `v`; `exact_zero` when the exact
/// route proved the column 0.
fn first_judgement(v: Option<&Interval>, exact_zero: bool, tol: f64) -> Judged {
    if !exact_zero {
        return judge(v, tol);
    }
    // Proved 0 by the exact route: written as 0, with the independent enclosure's distance
    // from 0 as its bound; an enclosure excluding 0 is a contradiction of the two routes.
    match v.map(Scalar::bounds_f64) {
        Some((lo, hi)) if lo <= 0.0 && 0.0 <= hi => Judged::Good(0.0, (-lo).max(hi)),
        Some((lo, hi)) if lo.is_finite() && hi.is_finite() => Judged::Contradicts(lo, hi),
        _ => judge(v, tol),
    }
}

fn judge<S: Scalar>(v: Option<&S>, tol: f64) -> Judged {
    match v.and_then(certify::written) {
        None => Judged::Missing,
        Some((x, b)) if b <= tol * x.abs() => Judged::Good(x, b),
        Some((x, b)) => Judged::Loose(x, b),
    }
}

/// [`judge`] of the enclosure `[lo, hi]` (a lane of the block evaluator: finite and ordered,
/// or NaN) when it is good: `(x, b, true)` with the same `x` and `b` as
/// [`certify::written`], else `ok` false (the caller then judges it with [`first_judgement`]).
#[inline(always)]
fn good_value(lo: f64, hi: f64, tol: f64) -> (f64, f64, bool) {
    let point = lo == hi;
    let x = if point {
        lo
    } else {
        (lo / 2.0 + hi / 2.0).max(lo).min(hi)
    };
    let b = if point {
        0.0
    } else {
        lanes::up(hi - x).max(lanes::up(x - lo))
    };
    let ok = lo.is_finite() && hi.is_finite() && lo <= hi && b.is_finite() && b <= tol * x.abs();
    (x, b, ok)
}

/// [`first_judgement`] of a column the exact route proved 0, when the enclosure contains 0:
/// `(0, its distance from 0, true)`; else `ok` false.
#[inline(always)]
fn good_zero(lo: f64, hi: f64) -> (f64, f64, bool) {
    (0.0, (-lo).max(hi), lo <= 0.0 && 0.0 <= hi)
}

/// What [`judge_columns`] reads: the block's registers, the output registers, the job, and
/// the number of lanes and the row shape (`width` values, `stride` bounds apart).
struct ColumnsIn<'a> {
    regs: &'a BlockRegs,
    outs: &'a [u32],
    job: &'a Job<'a>,
    n: usize,
    width: usize,
    stride: usize,
}

/// What [`judge_columns`] writes: the rows' values and bounds, which lanes are good, and the
/// columns' [`Stats`].
struct ColumnsOut<'a> {
    values: &'a mut [f64],
    bounds: &'a mut [f64],
    good: &'a mut [bool; LANES],
    stats: &'a mut [Stats],
}

/// The first pass's judgement of every column over the `n` lanes of the registers (see
/// [`good_value`]): values and bounds into the rows, `good[k]` cleared for a lane with a
/// value not good at once, and the [`Stats`] of the good values. Compiled for AVX2 where the
/// processor has it (the same operations, so the same bits).
fn judge_columns(i: &ColumnsIn<'_>, o: &mut ColumnsOut<'_>) {
    #[cfg(target_arch = "x86_64")]
    if std::is_x86_feature_detected!("avx2") {
        // SAFETY: the processor has AVX2 (detected just above), the only requirement.
        unsafe { judge_columns_avx2(i, o) };
        return;
    }
    judge_columns_lanes(i, o);
}

/// [`judge_columns`] compiled for AVX2.
///
/// # Safety
///
/// The processor must support AVX2.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
unsafe fn judge_columns_avx2(i: &ColumnsIn<'_>, o: &mut ColumnsOut<'_>) {
    judge_columns_lanes(i, o);
}

/// The body of [`judge_columns`]: per column, the judgement of all lanes into arrays (selects
/// only, so the loop vectorises), then the values into the rows.
#[inline(always)]
fn judge_columns_lanes(inp: &ColumnsIn<'_>, o: &mut ColumnsOut<'_>) {
    let ColumnsIn {
        regs,
        outs,
        job,
        n,
        width,
        stride,
    } = *inp;
    let (mut xs, mut bs, mut oks) = ([0.0f64; LANES], [0.0f64; LANES], [false; LANES]);
    for (i, (&r, &zero)) in outs.iter().zip(job.exact_zero).enumerate() {
        let (lo, hi) = regs.lanes(r);
        let (mut bound, mut relative, mut scale) = (0.0f64, 0.0f64, 0.0f64);
        for k in 0..LANES {
            let (x, b, ok) = if zero {
                good_zero(lo[k], hi[k])
            } else {
                good_value(lo[k], hi[k], job.tolerance)
            };
            // Lanes past `n` hold stale values: never good, never counted.
            let ok = ok && k < n;
            (xs[k], bs[k], oks[k]) = (x, b, ok);
            bound = bound.max(lanes::sel(ok, b, 0.0));
            scale = scale.max(lanes::sel(ok, x.abs(), 0.0));
            relative = relative.max(lanes::sel(ok && x != 0.0, b / x.abs(), 0.0));
        }
        o.stats[i].merge(&Stats {
            bound,
            relative,
            scale,
        });
        for k in 0..n {
            o.values[k * width + 4 + i] = xs[k];
            o.bounds[k * stride + i] = bs[k];
            o.good[k] &= oks[k];
        }
    }
}

/// What the report keeps of a column's values: the largest bound, relative bound (of
/// nonzero good values) and magnitude.
#[derive(Clone, Copy, Debug, Default)]
pub(super) struct Stats {
    pub bound: f64,
    pub relative: f64,
    pub scale: f64,
}

impl Stats {
    /// Takes in a written value `x` with bound `b` (`good`: within the tolerance).
    #[inline]
    pub fn add(&mut self, x: f64, b: f64, good: bool) {
        if good && x != 0.0 {
            self.relative = self.relative.max(b / x.abs());
        }
        self.scale = self.scale.max(x.abs());
        self.bound = self.bound.max(b);
    }

    /// Takes in another set of values.
    pub fn merge(&mut self, o: &Stats) {
        self.bound = self.bound.max(o.bound);
        self.relative = self.relative.max(o.relative);
        self.scale = self.scale.max(o.scale);
    }
}

/// A row the first pass left with values not yet good.
#[derive(Clone, Debug)]
pub(super) struct Pending {
    /// The row within its block.
    pub row: usize,
    /// Every column's state.
    pub judged: Vec<Judged>,
    /// Every column's working precision (53: f64 intervals).
    pub bits: Vec<u32>,
}

/// The first pass over a block of rows.
#[derive(Debug, Default)]
pub(super) struct FirstPass {
    /// Rows of `4 + ncol` values, `t, x, y, z` first; the component values of pending rows
    /// are set by the caller.
    pub values: Vec<f64>,
    /// Per row, `ncol` bounds, [`bounds_stride`] apart.
    pub bounds: Vec<f64>,
    /// The rows with a value not yet good, in row order.
    pub pending: Vec<Pending>,
    /// Per column, over the values good at once (of pending rows too: the caller takes in
    /// all values of those again, which changes no maximum).
    pub stats: Vec<Stats>,
}

impl FirstPass {
    /// Takes in what one task found (tasks are taken in row order).
    fn take(&mut self, t: TaskOut) {
        for (s, o) in self.stats.iter_mut().zip(&t.stats) {
            s.merge(o);
        }
        self.pending.extend(t.pending);
    }
}

/// The distance between rows of [`FirstPass::bounds`]: `ncol`, at least 1 (so that the
/// rows can be chunked when there are no columns).
pub(super) fn bounds_stride(ncol: usize) -> usize {
    ncol.max(1)
}

/// One parallel task's share of a block: its index, its points, and its rows of values and
/// bounds.
type Chunk<'a> = (usize, ((&'a [[f64; 4]], &'a mut [f64]), &'a mut [f64]));

/// The judgements of the wanted columns at a point in a tier of the refinement:
/// `(point, wanted columns, bits)`.
type TierRoute<'a> = dyn Fn([f64; 4], &[bool], u32) -> Result<Vec<Judged>, ExportError> + 'a;

/// What one parallel task of the first pass gives besides the rows it wrote.
struct TaskOut {
    stats: Vec<Stats>,
    pending: Vec<Pending>,
}

/// A program's constants in one arithmetic and its [`program::Memo`] there.
type Tier<S> = (Vec<Option<S>>, program::Memo<S>);

/// One thread's constants and memos: the double-double tier and, per precision, balls.
#[derive(Default)]
struct BallState {
    dd: Option<Tier<DdBall>>,
    balls: FxHashMap<u32, Tier<Ball>>,
}

/// One [`BallState`] per thread of the pool (a thread takes the one of its index, so the
/// locks are not contended).
pub(super) struct BallStates(Vec<Mutex<BallState>>);

impl BallStates {
    pub fn new() -> BallStates {
        #[cfg(feature = "parallel")]
        let n = rayon::current_num_threads().max(1);
        #[cfg(not(feature = "parallel"))]
        let n = 1;
        BallStates((0..n).map(|_| Mutex::new(BallState::default())).collect())
    }

    fn mine(&self) -> std::sync::MutexGuard<'_, BallState> {
        #[cfg(feature = "parallel")]
        let k = rayon::current_thread_index().unwrap_or(0) % self.0.len();
        #[cfg(not(feature = "parallel"))]
        let k = 0;
        // A panic elsewhere cannot leave a state half-updated in a way that matters: the
        // memo only holds finished values.
        self.0[k]
            .lock()
            .unwrap_or_else(std::sync::PoisonError::into_inner)
    }
}

/// The precision reported for the double-double tier ([`DdBall`]: a centre of two f64).
pub(super) const DD_BITS: u32 = 106;

/// The tiers of the refinement through the interval program: double-double balls (algebraic
/// operations only; a value that needs sin, exp, ... is `None` there), then multiprecision
/// balls.
const PROGRAM_TIERS: [u32; 4] = [
    DD_BITS,
    certify::PRECISIONS[0],
    certify::PRECISIONS[1],
    certify::PRECISIONS[2],
];

/// What the first pass and the refinement need to know of the export.
pub(super) struct Job<'a> {
    pub quantities: &'a [Quantity],
    pub parameters: &'a [(String, f64)],
    /// Per column, whether the exact route proved it 0.
    pub exact_zero: &'a [bool],
    pub tolerance: f64,
}

impl Job<'_> {
    /// The columns, the values per row (`t, x, y, z` and the columns) and the distance
    /// between rows of bounds ([`bounds_stride`]).
    pub fn shape(&self) -> (usize, usize, usize) {
        let ncol = self.exact_zero.len();
        (ncol, 4 + ncol, bounds_stride(ncol))
    }
}

impl Numeric {
    /// The first pass over the rows at `coords` into `pass` (see the module's doc): in
    /// parallel through the interval program; point by point through the jets where there
    /// is none, on several threads from [`PARALLEL_JETS`] points on.
    ///
    /// # Errors
    ///
    /// The jets cannot be set up, or give the wrong number of values.
    pub(super) fn first_pass(
        &self,
        job: &Job<'_>,
        coords: &[[f64; 4]],
        pass: &mut FirstPass,
    ) -> Result<(), ExportError> {
        let (ncol, width, stride) = job.shape();
        pass.values.clear();
        pass.values.resize(coords.len() * width, 0.0);
        pass.bounds.clear();
        pass.bounds.resize(coords.len() * stride, 0.0);
        pass.pending.clear();
        pass.stats.clear();
        pass.stats.resize(ncol, Stats::default());
        let Some((p, outs)) = self.program.as_ref().filter(|(_, outs)| outs.len() == ncol) else {
            return self.first_pass_jets(job, coords, pass);
        };
        let task = |regs: &mut BlockRegs, (t, ((pts, values), bounds)): Chunk<'_>| {
            let mut out = TaskOut::new(ncol);
            p.run_block(pts, regs);
            let n = pts.len();
            for (row, c) in values.chunks_mut(width).zip(pts) {
                row[..4].copy_from_slice(c);
            }
            // Column by column over the lanes: the values good at once are written (and
            // counted), a lane with any other is taken again below.
            let mut good = [true; LANES];
            judge_columns(
                &ColumnsIn {
                    regs,
                    outs,
                    job,
                    n,
                    width,
                    stride,
                },
                &mut ColumnsOut {
                    values,
                    bounds,
                    good: &mut good,
                    stats: &mut out.stats,
                },
            );
            for k in (0..n).filter(|&k| !good[k]) {
                let judged = outs
                    .iter()
                    .zip(job.exact_zero)
                    .map(|(&r, &z)| first_judgement(regs.get(r, k).as_ref(), z, job.tolerance))
                    .collect();
                out.pending.push(Pending {
                    row: t * LANES + k,
                    judged,
                    bits: vec![53; ncol],
                });
            }
            out
        };
        let chunks = coords
            .chunks(LANES)
            .zip(pass.values.chunks_mut(LANES * width))
            .zip(pass.bounds.chunks_mut(LANES * stride))
            .enumerate();
        #[cfg(feature = "parallel")]
        let tasks: Vec<TaskOut> = {
            use rayon::prelude::*;
            chunks
                .collect::<Vec<_>>()
                .into_par_iter()
                .map_init(|| p.block_regs(), task)
                .collect()
        };
        #[cfg(not(feature = "parallel"))]
        let tasks: Vec<TaskOut> = {
            let mut regs = p.block_regs();
            chunks.map(|c| task(&mut regs, c)).collect()
        };
        for t in tasks {
            pass.take(t);
        }
        Ok(())
    }

    /// The refinement of the pending rows of a block at `coords` (see [`refine`]): in
    /// parallel through the interval program in balls; row after row through the jets where
    /// there is no program. The results are in row order, one per pending row.
    pub(super) fn refine_all(
        &self,
        job: &Job<'_>,
        coords: &[[f64; 4]],
        pending: &mut [Pending],
        states: &BallStates,
        check: &(dyn Fn() -> Result<(), ExportError> + Sync),
    ) -> Vec<Result<(), ExportError>> {
        let ncol = job.exact_zero.len();
        let Some((p, outs)) = self.program.as_ref().filter(|(_, outs)| outs.len() == ncol) else {
            return self.refine_jets(job, coords, pending, check);
        };
        let tiers = |c: [f64; 4], want: &[bool], prec: u32| {
            let mut state = states.mine();
            Ok(if prec == DD_BITS {
                let tier = state
                    .dd
                    .get_or_insert_with(|| (p.constants::<DdBall>(&()), program::Memo::new(p)));
                judge_all(&program_values(p, outs, c, want, &(), tier), job.tolerance)
            } else {
                let tier = state
                    .balls
                    .entry(prec)
                    .or_insert_with(|| (p.constants::<Ball>(&prec), program::Memo::new(p)));
                judge_all(
                    &program_values(p, outs, c, want, &prec, tier),
                    job.tolerance,
                )
            })
        };
        let one = |r: &mut Pending| refine(coords[r.row], r, check, &PROGRAM_TIERS, &tiers);
        #[cfg(feature = "parallel")]
        {
            use rayon::prelude::*;
            pending.par_iter_mut().map(one).collect()
        }
        #[cfg(not(feature = "parallel"))]
        {
            pending.iter_mut().map(one).collect()
        }
    }
}

/// Points per parallel task of the jets (each point costs tens of microseconds).
const JETS_CHUNK: usize = 16;

/// Points (or pending rows) from which the jets run on several threads; each thread first
/// plans its own jets from the texts.
const PARALLEL_JETS: usize = 64;

impl Numeric {
    /// [`Numeric::first_pass`] through the jets, where there is no program: point by point,
    /// on several threads when there are enough points (each thread plans its own jets from
    /// the same texts, [`super::JetsPlan`]), else on this one with the `Numeric`'s own.
    fn first_pass_jets(
        &self,
        job: &Job<'_>,
        coords: &[[f64; 4]],
        pass: &mut FirstPass,
    ) -> Result<(), ExportError> {
        let (ncol, width, stride) = job.shape();
        let coordinates = self.coordinates().clone();
        let plan = &self.plan;
        let task = |audit: &Audit, (t, ((pts, values), bounds)): Chunk<'_>| {
            let mut out = TaskOut::new(ncol);
            let mut judged = vec![Judged::Missing; ncol];
            for (k, c) in pts.iter().enumerate() {
                let point = named_point(&coordinates, job.parameters, *c);
                let first = plan
                    .values_in::<Interval>(audit, job.quantities, &point, &())
                    .map_err(|e| ExportError::Setup(e.to_string()))?;
                if first.len() != ncol {
                    return Err(ExportError::Setup(format!(
                        "{} values for {ncol} columns",
                        first.len()
                    )));
                }
                for ((j, v), &z) in judged.iter_mut().zip(&first).zip(job.exact_zero) {
                    *j = first_judgement(v.as_ref(), z, job.tolerance);
                }
                let row = &mut values[k * width..(k + 1) * width];
                let b = &mut bounds[k * stride..k * stride + ncol];
                out.settle(t * JETS_CHUNK + k, c, &judged, row, b);
            }
            Ok(out)
        };
        let chunks = coords
            .chunks(JETS_CHUNK)
            .zip(pass.values.chunks_mut(JETS_CHUNK * width))
            .zip(pass.bounds.chunks_mut(JETS_CHUNK * stride))
            .enumerate();
        #[cfg(feature = "parallel")]
        let tasks: Vec<Result<TaskOut, ExportError>> = if coords.len() >= PARALLEL_JETS {
            use rayon::prelude::*;
            chunks
                .collect::<Vec<_>>()
                .into_par_iter()
                .map_init(
                    || plan.audit(),
                    |audit, c| task(audit.as_ref().map_err(Clone::clone)?, c),
                )
                .collect()
        } else {
            chunks.map(|c| task(&self.audit, c)).collect()
        };
        #[cfg(not(feature = "parallel"))]
        let tasks: Vec<Result<TaskOut, ExportError>> =
            chunks.map(|c| task(&self.audit, c)).collect();
        for t in tasks {
            pass.take(t?);
        }
        Ok(())
    }

    /// [`Numeric::refine_all`] through the jets in balls, where there is no program: on
    /// several threads when there are enough pending rows (each planning its own jets), else
    /// on this one.
    fn refine_jets(
        &self,
        job: &Job<'_>,
        coords: &[[f64; 4]],
        pending: &mut [Pending],
        check: &(dyn Fn() -> Result<(), ExportError> + Sync),
    ) -> Vec<Result<(), ExportError>> {
        let coordinates = self.coordinates().clone();
        let plan = &self.plan;
        let one = |audit: &Audit, r: &mut Pending| {
            let jets = |c: [f64; 4], _: &[bool], prec: u32| {
                let point = named_point(&coordinates, job.parameters, c);
                let v = plan
                    .values_in::<Ball>(audit, job.quantities, &point, &prec)
                    .map_err(|e| ExportError::Setup(e.to_string()))?;
                Ok(judge_all(&v, job.tolerance))
            };
            refine(coords[r.row], r, check, &certify::PRECISIONS, &jets)
        };
        #[cfg(feature = "parallel")]
        if pending.len() >= PARALLEL_JETS {
            use rayon::prelude::*;
            return pending
                .par_iter_mut()
                .map_init(
                    || plan.audit(),
                    |audit, r| one(audit.as_ref().map_err(Clone::clone)?, r),
                )
                .collect();
        }
        pending.iter_mut().map(|r| one(&self.audit, r)).collect()
    }
}

impl TaskOut {
    fn new(ncol: usize) -> TaskOut {
        TaskOut {
            stats: vec![Stats::default(); ncol],
            pending: Vec::new(),
        }
    }

    /// Writes row `k` (at `c`, with these judgements) into `row` and `bounds` if all its
    /// values are good, else keeps it pending.
    #[inline]
    fn settle(
        &mut self,
        k: usize,
        c: &[f64; 4],
        judged: &[Judged],
        row: &mut [f64],
        bounds: &mut [f64],
    ) {
        row[..4].copy_from_slice(c);
        if judged.iter().all(|j| matches!(j, Judged::Good(..))) {
            for (i, j) in judged.iter().enumerate() {
                if let Judged::Good(x, b) = *j {
                    row[4 + i] = x;
                    bounds[i] = b;
                    self.stats[i].add(x, b, true);
                }
            }
        } else {
            self.pending.push(Pending {
                row: k,
                judged: judged.to_vec(),
                bits: vec![53; judged.len()],
            });
        }
    }
}

/// Raises the precision of the values of `p` (at `c`) that are not yet good, through the
/// `tiers` (bits; `values(c, wanted columns, bits)` judges the wanted columns there, the
/// others `Missing`), keeping for each the best judgement; `check` is called before each
/// tier (the limits). A row with a contradiction of the two routes is left as it is (the
/// caller reports it).
///
/// # Errors
///
/// What `check` or `values` returns.
fn refine(
    c: [f64; 4],
    p: &mut Pending,
    check: &(dyn Fn() -> Result<(), ExportError> + Sync),
    tiers: &[u32],
    values: &TierRoute<'_>,
) -> Result<(), ExportError> {
    if p.judged
        .iter()
        .any(|j| matches!(j, Judged::Contradicts(..)))
    {
        return Ok(());
    }
    let mut want = Vec::with_capacity(p.judged.len());
    for &prec in tiers {
        if p.judged.iter().all(|j| matches!(j, Judged::Good(..))) {
            break;
        }
        check()?;
        want.clear();
        want.extend(p.judged.iter().map(|j| !matches!(j, Judged::Good(..))));
        let judged = values(c, &want, prec)?;
        for (i, &j) in judged.iter().enumerate() {
            if matches!(p.judged[i], Judged::Good(..)) {
                continue;
            }
            let better = match (j, p.judged[i]) {
                (Judged::Missing | Judged::Contradicts(..), _) => false,
                (_, Judged::Missing | Judged::Contradicts(..)) => true,
                (Judged::Good(..), _) => true,
                (Judged::Loose(_, b), Judged::Loose(_, b0)) => b < b0,
                (Judged::Loose(..), Judged::Good(..)) => false,
            };
            if better {
                p.judged[i] = j;
                p.bits[i] = prec;
            }
        }
    }
    Ok(())
}

/// Every value of `v` judged against the tolerance.
fn judge_all<S: Scalar>(v: &[Option<S>], tol: f64) -> Vec<Judged> {
    v.iter().map(|x| judge(x.as_ref(), tol)).collect()
}

/// The columns marked in `want` at `c` through the program `p` (outputs `outs`) in the
/// arithmetic `S` (constants and memo in `tier`, one per thread), only the instructions those
/// columns need run; the other columns are `None`.
fn program_values<S: Scalar>(
    p: &program::IntervalProgram,
    outs: &[u32],
    c: [f64; 4],
    want: &[bool],
    ctx: &S::Ctx,
    (constants, memo): &mut Tier<S>,
) -> Vec<Option<S>> {
    let wanted: Vec<u32> = outs
        .iter()
        .zip(want)
        .filter_map(|(&r, &w)| w.then_some(r))
        .collect();
    let need = p.needed(&wanted);
    let mut regs = Vec::new();
    p.run_in(c, ctx, constants, Some(&need), Some(memo), &mut regs);
    outs.iter()
        .zip(want)
        .map(|(&r, &w)| if w { regs[r as usize].clone() } else { None })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn endpoint() -> impl Strategy<Value = f64> {
        prop_oneof![
            Just(0.0),
            Just(-0.0),
            Just(1.0),
            -3.0..3.0f64,
            -1e-300..1e-300f64,
            -1e300..1e300f64,
            Just(f64::MAX),
            Just(-f64::MAX),
        ]
    }

    proptest! {
        /// The lane judgement is the value-by-value one: the same value and bound, bit for
        /// bit, exactly when that one says `Good` (NaN lanes: never good).
        #[test]
        fn lane_judgement_is_the_scalar_one(
            a in endpoint(),
            b in endpoint(),
            tol in prop_oneof![Just(0.0), Just(1e-12), Just(1e-3), Just(1.0)],
            nan in any::<bool>(),
        ) {
            let (lo, hi) = if nan { (f64::NAN, f64::NAN) } else { (a.min(b), a.max(b)) };
            let v = Interval::new(lo, hi);
            for zero in [false, true] {
                let lane = if zero { good_zero(lo, hi) } else { good_value(lo, hi, tol) };
                match first_judgement(v.as_ref(), zero, tol) {
                    Judged::Good(x, bound) => {
                        prop_assert!(lane.2, "[{:e}, {:e}] zero {}", lo, hi, zero);
                        prop_assert_eq!((lane.0.to_bits(), lane.1.to_bits()), (x.to_bits(), bound.to_bits()));
                    }
                    _ => prop_assert!(!lane.2, "[{:e}, {:e}] zero {}", lo, hi, zero),
                }
            }
        }
    }
}
