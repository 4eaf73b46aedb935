//! Evaluation of a four-input tape `(t, x, y, z)` on a lattice, one `x`-plane at a time.
//!
//! Every instruction is placed by what it depends on:
//! - neither `t` nor `x`: computed once, on the `(y, z)` sub-grid it needs (a row over `z`, a
//!   column over `y`, a plane, or a single value);
//! - `t` but not `x`: once per slab (value of `t`);
//! - `x`: once per plane, over its own `(y, z)` sub-grid.
//!
//! Operands are broadcast to the result's shape as the instruction runs. Values of the first
//! two kinds are held for the whole slab; plane values live in a per-thread [`PlaneWork`]
//! whose registers are reused once a value is dead.
//!
//! Within a plane, the instructions that do not depend on `y` run once; the others run over
//! blocks of rows, so that their registers stay in cache (a plane's registers would not), and
//! in the real pass an output computed on the whole plane is written by its instruction
//! straight into the caller's buffer (no register, no copy). Every value is computed by the
//! same operations as on whole planes, so the bits do not depend on the blocks (tested).

use super::lane::{Shape, spread};
use super::{C64, Lane, Op, Tape, allocate, apply};

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Level {
    Fixed,
    Slab,
    Plane,
}

const T_BIT: u8 = 1;
const X_BIT: u8 = 2;
const Y_BIT: u8 = 4;
const Z_BIT: u8 = 8;

/// Values (f64) of plane registers per block of rows: 64 KB. On the benchmark's oblique wave
/// (10 registers, 68 lanes a row: blocks of 12 rows) this was faster than whole planes (the
/// registers then take 370 KB) and than blocks within the first-level cache (2 to 6 rows),
/// where running each instruction once per block costs more than the cache saves.
const BLOCK_VALUES: usize = 8192;

/// A tape prepared for one lattice's `y` and `z` coordinates.
#[derive(Clone)]
pub struct Lattice<'t> {
    tape: &'t Tape,
    ny: usize,
    nz: usize,
    ys: Vec<f64>,
    zs: Vec<f64>,
    shape: Vec<Shape>,
    level: Vec<Level>,
    fixed: Vec<u32>,
    slab: Vec<u32>,
    plane: Vec<u32>,
    slot: Vec<u32>,
    /// For the first of a pair `sin(a)`, `cos(a)` (adjacent in their schedule): the other,
    /// computed with it from one argument reduction; `u32::MAX` otherwise.
    partner: Vec<u32>,
    /// True for the second of such a pair (skipped: its partner computed it).
    second: Vec<bool>,
    /// For a plane instruction whose value is output `j` (its first output, on the whole
    /// plane, not one of a sin/cos pair): `j`, so that the real pass writes it straight into
    /// the caller's output instead of a register; `u32::MAX` otherwise.
    direct: Vec<u32>,
    preg: Vec<u32>,
    npreg: usize,
    /// The plane schedule is `plane[..ninv]`, the instructions that do not depend on `y`
    /// (run once per plane), then the others, run over blocks of `brows` rows at a time so
    /// that their registers stay in the first-level cache.
    ninv: usize,
    brows: usize,
    real: Vec<Vec<f64>>,
    cplx: Vec<Vec<C64>>,
}

/// Per-thread registers for [`Lattice::plane`].
pub struct PlaneWork {
    real: Vec<Vec<f64>>,
    cplx: Option<Vec<Vec<C64>>>,
    lanes: usize,
}

/// What one plane's evaluation found.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct PlaneOutcome {
    /// The first non-finite value (output, row `iy`, lane `iz`, value), if any.
    pub first_nonfinite: Option<(usize, usize, usize, C64)>,
    /// How many values were not finite.
    pub nonfinite: usize,
    /// True if the plane was evaluated in complex arithmetic.
    pub complex: bool,
    /// Per output: the largest |imaginary part| and its lane `iy * nz + iz`.
    pub max_im: Vec<(f64, usize)>,
    /// Per output: the largest |value| (of a plane evaluated in complex arithmetic; 0 for one
    /// that stayed real, where there is no imaginary part to compare with it).
    pub max_abs: Vec<f64>,
}

/// True if every value is finite: `x - x` is 0 for a finite `x` and NaN otherwise, summed in
/// 16 lanes without a branch, so it vectorizes (no early exit: the values are in cache).
#[inline(always)]
#[allow(
    clippy::eq_op,
    reason = "x - x is the test: 0 for a finite x, NaN for an infinite or NaN one"
)]
fn all_finite(v: &[f64]) -> bool {
    const L: usize = 16;
    let mut acc = [0.0f64; L];
    let blocks = v.chunks_exact(L);
    let tail = blocks.remainder();
    for c in blocks {
        for (a, &x) in acc.iter_mut().zip(c) {
            *a += x - x;
        }
    }
    for (a, &x) in acc.iter_mut().zip(tail) {
        *a += x - x;
    }
    acc.iter().all(|a| *a == 0.0)
}

/// Moves `cos(a)` right after `sin(a)` (or the other way round) where both are in
/// `schedule` (each depends only on `a`, which comes before both), and records the pair: the
/// first computes both values. Register allocation runs on the reordered schedule, so when
/// the first runs, the second's register is one that is free at the next position: it holds
/// no live value (the only value that could die at the first is `a`, which the second uses).
fn pair_trig(ops: &[Op], schedule: &mut Vec<u32>, partner: &mut [u32], second: &mut [bool]) {
    let mut by_arg: rustc_hash::FxHashMap<(bool, u32), u32> = rustc_hash::FxHashMap::default();
    for &i in schedule.iter() {
        match ops[i as usize] {
            Op::Sin(a) => {
                by_arg.insert((true, a), i);
            }
            Op::Cos(a) => {
                by_arg.insert((false, a), i);
            }
            _ => {}
        }
    }
    if by_arg.is_empty() {
        return;
    }
    let mut out = Vec::with_capacity(schedule.len());
    for &i in schedule.iter() {
        if second[i as usize] {
            continue;
        }
        out.push(i);
        let other = match ops[i as usize] {
            Op::Sin(a) => by_arg.get(&(false, a)),
            Op::Cos(a) => by_arg.get(&(true, a)),
            _ => None,
        };
        if let Some(&j) = other {
            partner[i as usize] = j;
            second[j as usize] = true;
            out.push(j);
        }
    }
    *schedule = out;
}

/// Runs the pair `op` (`sin(a)` or `cos(a)`) and its partner over the first `n` lanes:
/// `d` receives `op`'s values, `dj` the partner's.
fn sincos<T: Lane>(op: Op, d: &mut [T], dj: &mut [T], a: &[T], n: usize) {
    let (s, c) = if matches!(op, Op::Sin(_)) {
        (d, dj)
    } else {
        (dj, d)
    };
    T::sincos_block(&mut s[..n], &mut c[..n], &a[..n]);
}

/// Where a plane instruction's operands are, for the block of rows `rows`: the plane
/// registers (a value that depends on `y` holds the block's rows only), the values held for
/// the slab, and (in the real pass) the outputs written straight into the caller's buffer,
/// split around the one being written (`at`; `usize::MAX` when the result goes to a register
/// and `lo` is the whole buffer).
struct Sources<'a, 't, T> {
    lat: &'a Lattice<'t>,
    regs: &'a [Vec<T>],
    persistent: &'a [Vec<T>],
    lo: &'a [T],
    hi: &'a [T],
    at: usize,
    to_out: bool,
    rows: std::ops::Range<usize>,
}

impl<T: Lane> Sources<'_, '_, T> {
    /// The shape of instruction `k`'s values within the block.
    #[inline(always)]
    fn shape(&self, k: usize) -> Shape {
        let s = self.lat.shape[k];
        if s.ny > 1 {
            Shape {
                ny: self.rows.len(),
                nz: s.nz,
            }
        } else {
            s
        }
    }

    /// The values of instruction `k` within the block.
    #[inline(always)]
    fn get(&self, k: usize) -> &[T] {
        let lat = self.lat;
        let s = lat.shape[k];
        let rows = if s.ny > 1 {
            self.rows.start * s.nz..self.rows.end * s.nz
        } else {
            0..s.len()
        };
        if lat.level[k] != Level::Plane {
            return &self.persistent[lat.slot[k] as usize][rows];
        }
        let m = lat.direct[k];
        if self.to_out && m != u32::MAX {
            let len = lat.ny * lat.nz;
            let m = m as usize;
            return if m < self.at {
                &self.lo[m * len..(m + 1) * len][rows]
            } else {
                &self.hi[(m - self.at - 1) * len..(m - self.at) * len][rows]
            };
        }
        &self.regs[lat.preg[k] as usize]
    }

    /// Runs instruction `i` (not the first of a sin/cos pair) into `d`.
    #[inline(always)]
    fn run(&self, i: usize, op: Op, d: &mut [T], x: f64) {
        match op {
            Op::Input(1) => d[0] = T::from_f64(x),
            Op::Const(_) | Op::Input(_) => unreachable!("only x is a plane leaf"),
            _ => {
                let [a, b] = op.operands();
                let a = a.expect("operand") as usize;
                let b = b.map_or(a, |b| b as usize);
                apply(
                    op,
                    d,
                    self.shape(i),
                    (self.get(a), self.shape(a)),
                    (self.get(b), self.shape(b)),
                );
            }
        }
    }
}

impl<'t> Lattice<'t> {
    /// Prepares `tape` (inputs `t, x, y, z`) for the coordinates `ys` and `zs`, and computes
    /// everything that depends on neither `t` nor `x`.
    ///
    /// # Panics
    ///
    /// If the tape does not have exactly four inputs.
    #[must_use]
    pub fn new(tape: &'t Tape, ys: &[f64], zs: &[f64]) -> Lattice<'t> {
        assert_eq!(tape.inputs(), 4, "a lattice tape has inputs t, x, y, z");
        let (ny, nz) = (ys.len(), zs.len());
        let n = tape.ops.len();
        let mut shape = Vec::with_capacity(n);
        let mut level = Vec::with_capacity(n);
        for &m in &tape.masks {
            shape.push(Shape {
                ny: if m & Y_BIT != 0 { ny } else { 1 },
                nz: if m & Z_BIT != 0 { nz } else { 1 },
            });
            level.push(if m & (T_BIT | X_BIT) == 0 {
                Level::Fixed
            } else if m & X_BIT == 0 {
                Level::Slab
            } else {
                Level::Plane
            });
        }
        let pick =
            |l: Level| -> Vec<u32> { (0..n as u32).filter(|&i| level[i as usize] == l).collect() };
        let (mut fixed, mut slab, mut plane) =
            (pick(Level::Fixed), pick(Level::Slab), pick(Level::Plane));
        let mut partner = vec![u32::MAX; n];
        let mut second = vec![false; n];
        for schedule in [&mut fixed, &mut slab, &mut plane] {
            pair_trig(&tape.ops, schedule, &mut partner, &mut second);
        }
        let mut slot = vec![u32::MAX; n];
        let mut real = Vec::new();
        let mut cplx = Vec::new();
        for &i in fixed.iter().chain(&slab) {
            slot[i as usize] = real.len() as u32;
            let len = shape[i as usize].len();
            real.push(vec![0.0; len]);
            cplx.push(vec![C64::default(); len]);
        }
        let mut keep = vec![false; n];
        for &o in &tape.outputs {
            keep[o as usize] = true;
        }
        // The plane instructions that do not depend on y first (their values are kept through
        // every block of rows), then those that do; sin/cos pairs have one shape, so they stay
        // adjacent.
        let (mut plane, rowwise): (Vec<u32>, Vec<u32>) = plane
            .into_iter()
            .partition(|&i| tape.masks[i as usize] & Y_BIT == 0);
        let ninv = plane.len();
        for &i in &rowwise {
            for a in tape.ops[i as usize].operands().into_iter().flatten() {
                if level[a as usize] == Level::Plane && tape.masks[a as usize] & Y_BIT == 0 {
                    keep[a as usize] = true;
                }
            }
        }
        plane.extend(rowwise);
        let external: Vec<bool> = level.iter().map(|&l| l != Level::Plane).collect();
        let (preg, npreg) = allocate(&tape.ops, &plane, &keep, &external);
        // Rows per block: the registers within BLOCK_VALUES, an even number of rows.
        let brows = (BLOCK_VALUES / (npreg.max(1) * nz)).clamp(1, ny.max(1));
        let brows = if brows > 2 { brows & !1 } else { brows };
        let mut direct = vec![u32::MAX; n];
        for (j, &o) in tape.outputs.iter().enumerate() {
            let o = o as usize;
            let whole = shape[o].len() == ny * nz;
            let paired = partner[o] != u32::MAX || second[o];
            let first = !tape.outputs[..j].contains(&(o as u32));
            if level[o] == Level::Plane && whole && !paired && first {
                direct[o] = j as u32;
            }
        }
        let mut lat = Lattice {
            tape,
            ny,
            nz,
            ys: ys.to_vec(),
            zs: zs.to_vec(),
            shape,
            level,
            fixed,
            slab,
            plane,
            slot,
            partner,
            second,
            direct,
            preg,
            npreg,
            ninv,
            brows,
            real,
            cplx,
        };
        let fixed = std::mem::take(&mut lat.fixed);
        lat.run_persistent(&fixed, 0.0);
        lat.fixed = fixed;
        lat
    }

    /// The same lattice evaluating `rows` rows per block (at least 1).
    #[cfg(test)]
    pub(crate) fn with_block_rows(mut self, rows: usize) -> Lattice<'t> {
        self.brows = rows.clamp(1, self.ny.max(1));
        self
    }

    /// How many `sin(a)`, `cos(a)` pairs are computed together.
    #[cfg(test)]
    pub(crate) fn trig_pairs(&self) -> usize {
        self.second.iter().filter(|&&s| s).count()
    }

    /// Sets `t` and computes everything that depends on `t` but not on `x`.
    pub fn set_t(&mut self, t: f64) {
        let slab = std::mem::take(&mut self.slab);
        self.run_persistent(&slab, t);
        self.slab = slab;
    }

    fn run_persistent(&mut self, schedule: &[u32], t: f64) {
        let mut real = std::mem::take(&mut self.real);
        let mut cplx = std::mem::take(&mut self.cplx);
        if !self.tape.complex {
            self.persistent_pass(&mut real, schedule, t);
        }
        self.persistent_pass(&mut cplx, schedule, t);
        self.real = real;
        self.cplx = cplx;
    }

    fn persistent_pass<T: Lane>(&self, regs: &mut [Vec<T>], schedule: &[u32], t: f64) {
        for &i in schedule {
            let i = i as usize;
            if self.second[i] {
                continue;
            }
            let op = self.tape.ops[i];
            let s = self.slot[i] as usize;
            let mut d = std::mem::take(&mut regs[s]);
            match op {
                Op::Sin(a) | Op::Cos(a) if self.partner[i] != u32::MAX => {
                    let j = self.partner[i] as usize;
                    let sj = self.slot[j] as usize;
                    let mut dj = std::mem::take(&mut regs[sj]);
                    let src = &regs[self.slot[a as usize] as usize];
                    sincos(op, &mut d, &mut dj, src, self.shape[i].len());
                    regs[sj] = dj;
                }
                Op::Const(c) => d[0] = T::from_c64(c),
                Op::Input(0) => d[0] = T::from_f64(t),
                Op::Input(2) => {
                    for (o, &y) in d.iter_mut().zip(&self.ys) {
                        *o = T::from_f64(y);
                    }
                }
                Op::Input(3) => {
                    for (o, &z) in d.iter_mut().zip(&self.zs) {
                        *o = T::from_f64(z);
                    }
                }
                Op::Input(_) => unreachable!("x is a plane input"),
                _ => {
                    let [a, b] = op.operands();
                    let a = a.expect("operand") as usize;
                    let b = b.map_or(a, |b| b as usize);
                    apply(
                        op,
                        &mut d,
                        self.shape[i],
                        (&regs[self.slot[a] as usize], self.shape[a]),
                        (&regs[self.slot[b] as usize], self.shape[b]),
                    );
                }
            }
            regs[s] = d;
        }
    }

    /// Registers for one thread.
    #[must_use]
    pub fn workspace(&self) -> PlaneWork {
        let lanes = self.ny * self.nz;
        PlaneWork {
            real: vec![vec![0.0; self.brows * self.nz]; self.npreg],
            cplx: None,
            lanes,
        }
    }

    /// Values per output in one plane: `ny * nz`.
    #[must_use]
    pub fn plane_len(&self) -> usize {
        self.ny * self.nz
    }

    /// Runs the plane instructions that depend on `y` over the block of rows `rows` (those
    /// that do not must have run). With a non-empty `out` (the real pass), the instructions
    /// marked in `direct` write their output's values straight into it (output `j` at
    /// `out[j * len..]`), where their readers read them, and every other output but the
    /// repeated ones is copied there; with an empty one the registers must hold whole planes
    /// (`rows` every row) and the outputs are left in them.
    #[inline(always)]
    fn plane_block<T: Lane>(
        &self,
        regs: &mut [Vec<T>],
        persistent: &[Vec<T>],
        x: f64,
        out: &mut [T],
        rows: std::ops::Range<usize>,
    ) {
        let (len, nz) = (self.ny * self.nz, self.nz);
        self.plane_run(
            &self.plane[self.ninv..],
            regs,
            persistent,
            x,
            out,
            rows.clone(),
        );
        if out.is_empty() {
            return;
        }
        for (j, &o) in self.tape.outputs.iter().enumerate() {
            let o = o as usize;
            if self.direct[o] != u32::MAX {
                continue;
            }
            let src = Sources {
                lat: self,
                regs,
                persistent,
                lo: &[],
                hi: &[],
                at: usize::MAX,
                to_out: false,
                rows: rows.clone(),
            };
            let d = &mut out[j * len + rows.start * nz..j * len + rows.end * nz];
            let ds = Shape { ny: rows.len(), nz };
            spread(d, ds, src.get(o), src.shape(o));
        }
    }

    /// Runs `schedule` (a part of the plane schedule) over the block of rows `rows`.
    #[allow(clippy::too_many_arguments)]
    #[inline(always)]
    fn plane_run<T: Lane>(
        &self,
        schedule: &[u32],
        regs: &mut [Vec<T>],
        persistent: &[Vec<T>],
        x: f64,
        out: &mut [T],
        rows: std::ops::Range<usize>,
    ) {
        let (len, nz) = (self.ny * self.nz, self.nz);
        let to_out = !out.is_empty();
        for &i in schedule {
            let i = i as usize;
            if self.second[i] {
                continue;
            }
            let op = self.tape.ops[i];
            let j = if to_out { self.direct[i] } else { u32::MAX };
            if j != u32::MAX {
                let j = j as usize;
                let (lo, rest) = out.split_at_mut(j * len);
                let (d, hi) = rest.split_at_mut(len);
                let src = Sources {
                    lat: self,
                    regs,
                    persistent,
                    lo,
                    hi,
                    at: j,
                    to_out,
                    rows: rows.clone(),
                };
                src.run(i, op, &mut d[rows.start * nz..rows.end * nz], x);
                continue;
            }
            let r = self.preg[i] as usize;
            let mut d = std::mem::take(&mut regs[r]);
            // A sin/cos pair: the partner is next in the schedule, so its register holds no
            // live value now (see `pair_trig`).
            let pair = match op {
                Op::Sin(a) | Op::Cos(a) if self.partner[i] != u32::MAX => {
                    let rj = self.preg[self.partner[i] as usize] as usize;
                    Some((a as usize, rj, std::mem::take(&mut regs[rj])))
                }
                _ => None,
            };
            let src = Sources {
                lat: self,
                regs,
                persistent,
                lo: out,
                hi: &[],
                at: usize::MAX,
                to_out,
                rows: rows.clone(),
            };
            match pair {
                Some((a, rj, mut dj)) => {
                    let n = src.shape(i).len();
                    sincos(op, &mut d, &mut dj, src.get(a), n);
                    regs[rj] = dj;
                }
                None => src.run(i, op, &mut d, x),
            }
            regs[r] = d;
        }
    }

    fn output_source<'a, T: Lane>(
        &self,
        o: usize,
        regs: &'a [Vec<T>],
        persistent: &'a [Vec<T>],
    ) -> &'a [T] {
        if self.level[o] == Level::Plane {
            &regs[self.preg[o] as usize]
        } else {
            &persistent[self.slot[o] as usize]
        }
    }

    /// Evaluates every output on the plane at `x` of the current slab: output `j` at row
    /// `iy`, lane `iz` goes to `out[(j * ny + iy) * nz + iz]` (its real part; a non-finite
    /// value is stored as NaN and reported).
    ///
    /// # Panics
    ///
    /// If `out` is not `outputs * ny * nz` long or `ws` belongs to another lattice.
    pub fn plane(&self, ws: &mut PlaneWork, x: f64, out: &mut [f64]) -> PlaneOutcome {
        #[cfg(target_arch = "x86_64")]
        if std::is_x86_feature_detected!("avx512f") {
            // SAFETY: detected just above.
            return unsafe { self.plane_avx512(ws, x, out) };
        }
        #[cfg(target_arch = "x86_64")]
        if std::is_x86_feature_detected!("avx2") {
            // SAFETY: the processor has AVX2 (detected just above), the only requirement of
            // `plane_avx2`.
            return unsafe { self.plane_avx2(ws, x, out) };
        }
        self.plane_lanes(ws, x, out)
    }

    /// [`Lattice::plane`] compiled for AVX2 (the same operations, so the same bits).
    ///
    /// # Safety
    ///
    /// The processor must support AVX2.
    #[cfg(target_arch = "x86_64")]
    #[target_feature(enable = "avx2")]
    unsafe fn plane_avx2(&self, ws: &mut PlaneWork, x: f64, out: &mut [f64]) -> PlaneOutcome {
        self.plane_lanes(ws, x, out)
    }

    /// AVX-512.
    #[cfg(target_arch = "x86_64")]
    #[target_feature(enable = "avx512f")]
    unsafe fn plane_avx512(&self, ws: &mut PlaneWork, x: f64, out: &mut [f64]) -> PlaneOutcome {
        self.plane_lanes(ws, x, out)
    }

    /// The body of [`Lattice::plane`], inlined into each compiled variant.
    #[inline(always)]
    fn plane_lanes(&self, ws: &mut PlaneWork, x: f64, out: &mut [f64]) -> PlaneOutcome {
        let m = self.tape.outputs.len();
        let len = self.ny * self.nz;
        assert_eq!(out.len(), m * len, "output length");
        assert_eq!(ws.lanes, len, "workspace of another lattice");
        let full = Shape {
            ny: self.ny,
            nz: self.nz,
        };
        let mut outcome = PlaneOutcome {
            max_im: vec![(0.0, 0); m],
            max_abs: vec![0.0; m],
            ..PlaneOutcome::default()
        };
        if !self.tape.complex {
            let regs = &mut ws.real;
            self.plane_run(&self.plane[..self.ninv], regs, &self.real, x, out, 0..1);
            // Block by block, each block's outputs checked while they are in cache; a repeated
            // output (a copy of an earlier one) is copied at the end.
            let repeated = |j: usize, o: u32| {
                let m = self.direct[o as usize];
                m != u32::MAX && m as usize != j
            };
            let mut finite = true;
            let mut r0 = 0;
            while r0 < self.ny {
                let rows = r0..(r0 + self.brows).min(self.ny);
                self.plane_block(regs, &self.real, x, out, rows.clone());
                for (j, &o) in self.tape.outputs.iter().enumerate() {
                    if !repeated(j, o) {
                        let at = j * len + rows.start * self.nz;
                        finite &= all_finite(&out[at..at + rows.len() * self.nz]);
                    }
                }
                r0 = rows.end;
            }
            for (j, &o) in self.tape.outputs.iter().enumerate() {
                if repeated(j, o) {
                    let m = self.direct[o as usize] as usize;
                    out.copy_within(m * len..(m + 1) * len, j * len);
                }
            }
            if finite {
                return outcome;
            }
        }
        outcome.complex = true;
        let npreg = self.npreg;
        let regs = ws
            .cplx
            .get_or_insert_with(|| vec![vec![C64::default(); len]; npreg]);
        self.plane_run(&self.plane[..self.ninv], regs, &self.cplx, x, &mut [], 0..1);
        self.plane_block(regs, &self.cplx, x, &mut [], 0..self.ny);
        let mut tmp = vec![C64::default(); len];
        for (j, &o) in self.tape.outputs.iter().enumerate() {
            let o = o as usize;
            spread(
                &mut tmp,
                full,
                self.output_source(o, regs, &self.cplx),
                self.shape[o],
            );
            let (mut mx, mut im) = (0f64, (0f64, 0usize));
            for (lane, z) in tmp.iter().enumerate() {
                if z.is_finite() {
                    out[j * len + lane] = z.re;
                    mx = mx.max(z.abs());
                    if z.im.abs() > im.0 {
                        im = (z.im.abs(), lane);
                    }
                } else {
                    out[j * len + lane] = f64::NAN;
                    outcome.nonfinite += 1;
                    if outcome.first_nonfinite.is_none() {
                        outcome.first_nonfinite = Some((j, lane / self.nz, lane % self.nz, *z));
                    }
                }
            }
            outcome.max_abs[j] = mx;
            outcome.max_im[j] = im;
        }
        outcome
    }
}
