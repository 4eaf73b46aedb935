//! One resolution: sample the channels slab by slab and take the residuals at interior points.
//!
//! Streaming. A sweep walks along one axis, `x` (or `t` when the box has more points in `t`
//! than in `x`), and each step samples one slab across it (a 3-d cut of the lattice): the
//! `(y, z)`-plane at that `x` for every `t` (or every `x`-plane at that `t`). A ring of the
//! `order + 2` latest slabs holds what a stencil centred `s + 1` slabs behind the newest
//! reaches (`s` the stencil's half-width); the channels that do not depend on `t` are sampled
//! once into one more slab (every `x`). Memory is `(order + 2)` slabs of the `t`-dependent
//! channels and one of the others, never the whole 4-d grid; with `n` points on every axis a
//! slab across `x` is as large as one across `t`.
//!
//! Key design decision: stream over `x` with every `t` held, because that keeps the samples
//! in cache between being written and being read by the stencils. For the benchmark's box
//! (5 values of `t`, 68^3 points, 6 components) a slab across `x` is 1.1 MB and the ring
//! 6.7 MB, which the last-level cache holds; streaming over `t`, each slab was 15 MB and the
//! 75 MB of samples went to memory and back. Blocks in `x` with a halo (re-sampling `2s`
//! planes per block) would need blocks a few planes thick for their rings to stay in cache,
//! which more than doubles the sampling. Streaming over `x`, one [`Lattice`] per `t` computes
//! its `t`-dependent values once.
//!
//! Parallel: each step's sampling (a task per plane) and the residuals of the slab `s + 1`
//! behind (a task per plane and block of rows) run as one batch of tasks (two steps per
//! batch on several threads, with a ring of `order + 4` slabs; on one thread the residuals of
//! the slab `s` behind run after the step's sampling, so that they read the slab just
//! written while it is in cache). Reductions merge
//! by value and lattice index (a tie goes to the first point in `(t, x, y, z)` order), so the
//! result does not depend on the streaming axis, the tasks or the threads (tested bit for bit
//! against the slab-by-slab sweep over `t` this replaced).
//!
//! Residuals: a task computes each fused combination (see `fuse`) over its rows, one
//! combination at a time, so every stencil term reads a long run of one plane, then every
//! component row by row. The hot loops have AVX-512 and AVX2 builds chosen at run time: the
//! same IEEE operations (no fused multiply-add), so the same bits.

use super::claims::Deriv;
use super::stencil::Stencil;
use super::{Channel, GridError, GridPlan};
use crate::tape::{Lattice, PlaneOutcome, PlaneWork, Tape};

/// A 4-d box of lattice points: `counts[a]` points along axis `a` (t, x, y, z), `spacing`
/// apart, centred on `center`.
#[derive(Clone, Debug, PartialEq)]
pub struct Box4 {
    /// The centre (t, x, y, z).
    pub center: [f64; 4],
    /// The spacing, the same along every axis.
    pub spacing: f64,
    /// Points along each axis.
    pub counts: [usize; 4],
}

impl Box4 {
    /// The coordinate of point `i` along `axis`.
    #[must_use]
    pub fn coord(&self, axis: usize, i: usize) -> f64 {
        let n = self.counts[axis] as f64;
        self.center[axis] + (i as f64 - (n - 1.0) / 2.0) * self.spacing
    }

    fn coords(&self, axis: usize) -> Vec<f64> {
        (0..self.counts[axis])
            .map(|i| self.coord(axis, i))
            .collect()
    }

    /// The point with lattice indices `idx`.
    #[must_use]
    pub fn point(&self, idx: [usize; 4]) -> [f64; 4] {
        std::array::from_fn(|a| self.coord(a, idx[a]))
    }
}

/// The residuals of one resolution.
#[derive(Clone, Debug, PartialEq)]
pub struct Sweep {
    /// Per claim, per component: the largest |residual| and the lattice indices where.
    pub best: Vec<Vec<(f64, [usize; 4])>>,
    /// Per claim: interior points skipped because a sample in the stencil was masked.
    pub skipped: Vec<usize>,
    /// Interior points (where the stencil fits) in the measured region.
    pub interior: usize,
    /// Sample values (point, channel) that were not finite and were masked.
    pub masked: usize,
    /// About a background, per claim, per component: the largest round-off bound over the
    /// measured points (the sample errors carried through the curvature chain); `None` for
    /// flat problems, whose floors come from [`GridPlan::floors`].
    pub floors: Option<Vec<Vec<f64>>>,
}

/// One stencil term: offsets along (t, x, y, z) and weight (spacing included).
#[derive(Clone, Copy, Debug)]
pub(super) struct Term {
    pub(super) d: [i32; 4],
    pub(super) w: f64,
}

pub(super) fn terms(deriv: Deriv, st: &Stencil, h: f64) -> Vec<Term> {
    let s = st.half as i32;
    let unit = |a: u8, k: i32| {
        let mut d = [0; 4];
        d[a as usize] = k;
        d
    };
    let mut out = Vec::new();
    match deriv {
        Deriv::Value => out.push(Term { d: [0; 4], w: 1.0 }),
        Deriv::D1(a) => {
            for k in -s..=s {
                let w = st.d1[(k + s) as usize];
                if w != 0.0 {
                    out.push(Term {
                        d: unit(a, k),
                        w: w / h,
                    });
                }
            }
        }
        Deriv::D2(a, b) if a == b => {
            for k in -s..=s {
                let w = st.d2[(k + s) as usize];
                if w != 0.0 {
                    out.push(Term {
                        d: unit(a, k),
                        w: w / (h * h),
                    });
                }
            }
        }
        Deriv::D2(a, b) => {
            // The mixed derivative as the product of two first-derivative stencils.
            for j in -s..=s {
                for k in -s..=s {
                    let w = st.d1[(j + s) as usize] * st.d1[(k + s) as usize];
                    if w != 0.0 {
                        let mut d = unit(a, j);
                        d[b as usize] = k;
                        out.push(Term { d, w: w / (h * h) });
                    }
                }
            }
        }
    }
    out
}

/// How many workers share a slab's planes.
fn workers() -> usize {
    #[cfg(feature = "parallel")]
    {
        rayon::current_num_threads().max(1)
    }
    #[cfg(not(feature = "parallel"))]
    {
        1
    }
}

/// Runs `f(state, i, piece)` on every `chunk`-long piece of `buf` (piece `i` is plane `i`):
/// the pieces are split into one contiguous run per state, so each worker reuses its state
/// (registers) for all its planes and across calls. Results in plane order.
fn each_plane<S: Send, R: Send>(
    buf: &mut [f64],
    chunk: usize,
    states: &mut [S],
    f: impl Fn(&mut S, usize, &mut [f64]) -> R + Sync + Send,
) -> Vec<R> {
    let n = buf.len() / chunk;
    let per = n.div_ceil(states.len().max(1)).max(1);
    let run = |k: usize, piece: &mut [f64], s: &mut S| -> Vec<R> {
        piece
            .chunks_mut(chunk)
            .enumerate()
            .map(|(j, c)| f(s, k * per + j, c))
            .collect()
    };
    #[cfg(feature = "parallel")]
    let runs: Vec<Vec<R>> = {
        use rayon::prelude::*;
        buf.par_chunks_mut(per * chunk)
            .zip(states.par_iter_mut())
            .enumerate()
            .map(|(k, (piece, s))| run(k, piece, s))
            .collect()
    };
    #[cfg(not(feature = "parallel"))]
    let runs: Vec<Vec<R>> = buf
        .chunks_mut(per * chunk)
        .zip(states.iter_mut())
        .enumerate()
        .map(|(k, (piece, s))| run(k, piece, s))
        .collect();
    runs.into_iter().flatten().collect()
}

/// `f(i)` for `i` in `range`, in parallel; results in order.
pub(super) fn each_index<R: Send>(
    range: std::ops::Range<usize>,
    f: impl Fn(usize) -> R + Sync + Send,
) -> Vec<R> {
    #[cfg(feature = "parallel")]
    {
        use rayon::prelude::*;
        range.into_par_iter().map(f).collect()
    }
    #[cfg(not(feature = "parallel"))]
    {
        range.map(f).collect()
    }
}

/// Largest |imaginary part| met per channel, with where, and the largest |value|.
struct Reality {
    im: Vec<(f64, [usize; 4])>,
    abs: Vec<f64>,
}

/// Samples one slab of `tape`'s outputs into `buf` (`[ix][output][iy][iz]`).
fn sample_slab(
    lat: &Lattice<'_>,
    xs: &[f64],
    buf: &mut [f64],
    outputs: usize,
    works: &mut [PlaneWork],
) -> Vec<PlaneOutcome> {
    if outputs == 0 {
        return Vec::new();
    }
    let chunk = outputs * lat.plane_len();
    each_plane(buf, chunk, works, |ws, ix, out| lat.plane(ws, xs[ix], out))
}

/// The index range along `axis` of the interior points (where the stencil of half-width `s`
/// fits) whose coordinate lies in `[lo, hi]` (with a relative slack of 1e-9 of the box).
fn measured(b: &Box4, axis: usize, s: usize, region: Option<[f64; 2]>) -> std::ops::Range<usize> {
    let n = b.counts[axis];
    let Some([lo, hi]) = region else {
        return s..n - s;
    };
    let slack = 1e-9 * b.spacing * n as f64;
    let inside = |i: usize| {
        let c = b.coord(axis, i);
        c >= lo - slack && c <= hi + slack
    };
    let first = (s..n - s).find(|&i| inside(i));
    match first {
        Some(f) => {
            f..(f..n - s)
                .take_while(|&i| inside(i))
                .last()
                .map_or(f, |l| l + 1)
        }
        None => s..s,
    }
}

/// The sample buffers of a sweep (the ring of slabs and the slab of `t`-independent
/// channels), kept by a caller that sweeps more than once (the resolutions of a run, a
/// benchmark's repetitions) so that later sweeps neither allocate nor zero-fill them again.
/// Their contents never carry over: every value is written by the sweep before it is read.
#[derive(Debug, Default)]
pub struct Buffers {
    ring: Vec<Vec<f64>>,
    stat: Vec<f64>,
}

impl Buffers {
    /// No buffers yet: the first sweep allocates them.
    #[must_use]
    pub fn new() -> Buffers {
        Buffers::default()
    }
}

/// Makes `v` `len` values long without writing what it had (every value is overwritten
/// before use). A buffer that must grow is allocated anew, zeroed by the allocator (fresh
/// pages come zeroed, so nothing is written twice and nothing old is copied).
fn fit(v: &mut Vec<f64>, len: usize) {
    if v.capacity() < len {
        *v = vec![0.0; len];
    } else {
        v.truncate(len);
        v.resize(len, 0.0);
    }
}

/// Per claim, per component: the largest |residual| so far and the point where it is.
type Peaks = Vec<Vec<(f64, [usize; 4])>>;

/// The largest residual of every component with where it is (none yet), and the points
/// skipped per claim (none yet).
fn no_residuals_yet(plan: &GridPlan) -> (Peaks, Vec<usize>) {
    let best = plan
        .claims
        .iter()
        .map(|c| vec![(0.0, [0; 4]); c.components.len()])
        .collect();
    (best, vec![0usize; plan.claims.len()])
}

/// Where and how a sweep samples: the box, the stencil, whether non-finite samples are
/// masked (else they stop the sweep), and the region residuals are taken in (per axis
/// `[lo, hi]`; `None`: every interior point).
#[derive(Clone, Copy, Debug)]
pub struct SweepAt<'a> {
    /// The box and its resolution.
    pub b: &'a Box4,
    /// The finite-difference stencil.
    pub st: &'a Stencil,
    /// Mask non-finite samples instead of stopping.
    pub mask: bool,
    /// The region of the residuals.
    pub region: Option<[[f64; 2]; 4]>,
}

/// Samples and residuals at one resolution. Residuals are taken at the interior points
/// (where the stencil fits) that lie in the lattice's region, so that resolutions can be
/// compared on one region. `progress(done, total)` is called after every slab.
///
/// # Errors
///
/// A sample that is not finite (unless masked), or one that is not real.
pub fn sweep(
    plan: &GridPlan,
    at: SweepAt<'_>,
    progress: &mut dyn FnMut(usize, usize),
) -> Result<Sweep, GridError> {
    sweep_with(&mut Buffers::new(), plan, at, progress)
}

/// [`sweep`] with sample buffers kept from earlier sweeps (the result is the same).
///
/// # Errors
///
/// As [`sweep`].
pub fn sweep_with(
    bufs: &mut Buffers,
    plan: &GridPlan,
    at: SweepAt<'_>,
    progress: &mut dyn FnMut(usize, usize),
) -> Result<Sweep, GridError> {
    // About a background the round-off floor needs the sample errors during the sweep.
    let errors = match plan.curved {
        Some(_) => {
            let b = at.b;
            let width = b.spacing * (b.counts[0].max(2) - 1) as f64;
            probe_errors(plan, b.center, width, super::PROBE_POINTS)
        }
        None => Vec::new(),
    };
    sweep_errors(bufs, plan, at, &errors, progress)
}

/// [`sweep_with`] with the per-channel sample errors (from [`probe_errors`]) given, which
/// only a problem about a background uses.
///
/// # Errors
///
/// As [`sweep`].
pub fn sweep_errors(
    bufs: &mut Buffers,
    plan: &GridPlan,
    at: SweepAt<'_>,
    errors: &[f64],
    progress: &mut dyn FnMut(usize, usize),
) -> Result<Sweep, GridError> {
    let [nt, nx, ..] = at.b.counts;
    let order = Order {
        stream: if nt <= nx { Stream::X } else { Stream::T },
        rows: None,
        group: None,
    };
    sweep_in(bufs, plan, at, errors, order, progress)
}

/// The axis a sweep streams over. Each step samples one slab across it (a 3-d cut of the
/// lattice: every `x`-plane at one `t`, or every `t` at one `x`), and the ring holds the
/// `2s + 2` latest slabs.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(super) enum Stream {
    /// Slabs at one `t`.
    T,
    /// Slabs at one `x`.
    X,
}

/// How a sweep is ordered: the axis it streams over, how many rows (`y`) one task of
/// residuals takes, and how many steps one batch of parallel tasks takes (`None`: chosen
/// from the number of workers). None of them changes a result.
#[derive(Clone, Copy, Debug)]
struct Order {
    stream: Stream,
    rows: Option<usize>,
    group: Option<usize>,
}

/// One piece of a step's work: sampling plane `(it, ix)` into `out`, or the residuals of rows
/// `rows` of plane `(it, ix)`.
enum Task<'a> {
    Sample {
        it: usize,
        ix: usize,
        out: &'a mut [f64],
    },
    Residual {
        it: usize,
        ix: usize,
        rows: std::ops::Range<usize>,
    },
}

/// What a [`Task`] found.
enum Done {
    Sampled(usize, usize, PlaneOutcome),
    Residual(PlaneResult),
}

/// The first non-finite sample in lattice order (slab `t`, plane `x`, then the plane's own
/// order: output, row, lane): its key `[it, ix]`, output, row, lane and value.
type FirstBad = ([usize; 2], usize, usize, usize, crate::tape::C64);

/// [`sweep_errors`] in a given order. Every step samples one slab along the streamed axis and
/// takes the residuals of the slab `s + 1` behind it (whose stencils reach only slabs sampled
/// in earlier steps; one step per batch, those of the slab `s` behind, after the step's
/// sampling); `g` steps at a time form one batch of tasks run in parallel (one step
/// on one thread, where nothing waits; two on several, so that the workers meet half as
/// often, at the cost of a ring of `2s + 2g` slabs: on the benchmark's box with two threads,
/// one, two and four steps took 11 to 14, 10 to 12 and 13 to 14 ms). The results are merged
/// by value and lattice index (a tie goes to the first point in `(t, x, y, z)` order, as a
/// sweep in that order would find it), so nothing depends on the order, the tasks or the
/// threads.
#[allow(clippy::too_many_lines)]
fn sweep_in(
    bufs: &mut Buffers,
    plan: &GridPlan,
    at: SweepAt<'_>,
    errors: &[f64],
    order: Order,
    progress: &mut dyn FnMut(usize, usize),
) -> Result<Sweep, GridError> {
    let SweepAt {
        b,
        st,
        mask,
        region,
    } = at;
    let s = st.half;
    let [nt, nx, ny, nz] = b.counts;
    if b.counts.iter().any(|&n| n < 2 * s + 1) {
        return Err(GridError::TooFewPoints {
            order: st.order,
            needed: 2 * s + 1,
            got: *b.counts.iter().min().unwrap_or(&0),
        });
    }
    let (ts, xs, ys, zs) = (b.coords(0), b.coords(1), b.coords(2), b.coords(3));
    let plane = ny * nz;
    let nd = plan.dynamic.outputs();
    let ns = plan.statics.outputs();
    let dyn_channels: Vec<usize> = plan.channel_order(true);
    let static_channels: Vec<usize> = plan.channel_order(false);
    let mut reality = Reality {
        im: vec![(0.0, [0; 4]); plan.channels.len()],
        abs: vec![0.0; plan.channels.len()],
    };
    let mut masked = 0usize;

    // Channels that do not depend on t: one slab for every t.
    let stat = &mut bufs.stat;
    fit(stat, nx * ns * plane);
    if ns > 0 {
        let lat = Lattice::new(&plan.statics, &ys, &zs);
        let mut works: Vec<PlaneWork> = (0..workers()).map(|_| lat.workspace()).collect();
        let outcomes = sample_slab(&lat, &xs, stat, ns, &mut works);
        let mut bad = None;
        for (ix, o) in outcomes.iter().enumerate() {
            absorb(
                o,
                [nt / 2, ix],
                &static_channels,
                nz,
                &mut bad,
                &mut masked,
                &mut reality,
            );
        }
        if let Some(bad) = bad.filter(|_| !mask) {
            return Err(nonfinite(plan, b, &static_channels, bad));
        }
        // A masked static sample is masked at every t.
        masked *= nt;
    }

    // The ring: slot `k % w` holds slab `k` along the streamed axis, laid out
    // `[across][output][iy][iz]` with `across` the other of t and x.
    let (along, across) = match order.stream {
        Stream::T => (nt, nx),
        Stream::X => (nx, nt),
    };
    let nworkers = workers();
    let g = order.group.unwrap_or_else(steps_per_batch).max(1);
    let w = 2 * s + 2 * g;
    let slot_len = across * nd * plane;
    let ring = &mut bufs.ring;
    ring.truncate(w);
    ring.resize_with(w, Vec::new);
    for slot in ring.iter_mut() {
        fit(slot, slot_len);
    }
    // One lattice per t held at once: those of a batch's steps streaming over t, every one
    // streaming over x (each computes its t-dependent values once).
    let mut lats: Vec<Lattice> = Vec::new();
    if nd > 0 {
        let lat = Lattice::new(&plan.dynamic, &ys, &zs);
        lats = match order.stream {
            Stream::X => (0..nt)
                .map(|it| {
                    let mut l = lat.clone();
                    l.set_t(ts[it]);
                    l
                })
                .collect(),
            Stream::T => vec![lat; g],
        };
    }
    let works: Vec<std::sync::Mutex<Scratch>> = (0..nworkers)
        .map(|_| {
            std::sync::Mutex::new(Scratch {
                regs: lats.first().map(Lattice::workspace),
                vals: Vec::new(),
            })
        })
        .collect();

    // Stencil terms of every atom, fused into the combinations the components use.
    let atom_terms: Vec<Vec<Term>> = plan
        .atoms
        .iter()
        .map(|&(_, d)| terms(d, st, b.spacing))
        .collect();
    let fused = fuse(plan, &atom_terms);
    // About a background: the stencils of every derivative the curvature chain needs.
    let point = plan
        .curved
        .as_ref()
        .map(|c| super::curved::PointStencils::new(c, plan, st, b.spacing, errors));
    let ranges: [std::ops::Range<usize>; 4] =
        std::array::from_fn(|a| measured(b, a, s, region.map(|r| r[a])));
    let len = ranges[3].len();
    let (mut best, mut skipped) = no_residuals_yet(plan);
    let mut floors: Option<Vec<Vec<f64>>> = point.as_ref().map(|_| {
        plan.claims
            .iter()
            .map(|c| vec![0.0; c.components.len()])
            .collect()
    });
    // The residual planes of one step, and the rows per task: enough tasks to share among
    // the workers with those of the sampling.
    let (centers, per_step) = match order.stream {
        Stream::T => (ranges[0].clone(), ranges[1].len()),
        Stream::X => (ranges[1].clone(), ranges[0].len()),
    };
    // A task's combinations stay within about 256 KB (in the core's own cache).
    let nrows = ranges[2].len().max(1);
    let rows = order.rows.unwrap_or_else(|| {
        let fit = (1 << 15) / (fused.combos.len() * len).max(1);
        let pieces = (4 * nworkers).div_ceil((per_step * g).max(1));
        let share = if nworkers == 1 {
            nrows
        } else {
            nrows.div_ceil(pieces)
        };
        share.min(fit)
    });
    let rows = rows.clamp(1, nrows);
    let mut bad: Option<FirstBad> = None;

    // One step per batch (one thread): the residuals of the slab s behind are taken after the
    // step's sampling, so that they read the slab just written while it is still in cache
    // (as a batch of parallel tasks they would read the slab being written).
    let fresh = g == 1;
    let mut k = 0;
    loop {
        // Sample slabs k..k + g while the residuals of the slabs s + 1..s + g behind them
        // are taken (their stencils reach only slabs sampled in earlier batches); one step
        // at a time, sample slab k, then take the residuals of the slab s behind.
        let units = k..(k + g).min(along);
        let end = if fresh { k + 1 } else { k };
        let behind = end.saturating_sub(g + s)..end.saturating_sub(s);
        let stopped = bad.is_some();
        let mut tasks: Vec<Task<'_>> = Vec::new();
        let mut slots: Vec<&[f64]> = Vec::with_capacity(w);
        for (i, slot) in ring.iter_mut().enumerate() {
            let Some(u) = units.clone().find(|u| u % w == i).filter(|_| nd > 0) else {
                slots.push(slot.as_slice());
                continue;
            };
            slots.push(&[]);
            if order.stream == Stream::T {
                lats[u % g].set_t(ts[u]);
            }
            for (j, out) in slot.chunks_mut(nd * plane).enumerate() {
                let (it, ix) = match order.stream {
                    Stream::T => (u, j),
                    Stream::X => (j, u),
                };
                tasks.push(Task::Sample { it, ix, out });
            }
        }
        let mut later: Vec<(usize, usize, std::ops::Range<usize>)> = Vec::new();
        for c in behind.filter(|c| centers.contains(c) && len > 0 && !stopped) {
            for j in match order.stream {
                Stream::T => ranges[1].clone(),
                Stream::X => ranges[0].clone(),
            } {
                let (it, ix) = match order.stream {
                    Stream::T => (c, j),
                    Stream::X => (j, c),
                };
                let mut y = ranges[2].start;
                while y < ranges[2].end {
                    let end = (y + rows).min(ranges[2].end);
                    later.push((it, ix, y..end));
                    y = end;
                }
            }
        }
        let run = |task: Task<'_>, slots: &[&[f64]]| -> Done {
            let i = thread_index() % works.len();
            let mut scratch = works[i]
                .lock()
                .unwrap_or_else(std::sync::PoisonError::into_inner);
            match task {
                Task::Sample { it, ix, out } => {
                    let lat = match order.stream {
                        Stream::T => &lats[it % g],
                        Stream::X => &lats[it],
                    };
                    let ws = scratch
                        .regs
                        .as_mut()
                        .expect("registers where there is a tape");
                    Done::Sampled(it, ix, lat.plane(ws, xs[ix], out))
                }
                Task::Residual { it, ix, rows } => {
                    let win = Window {
                        slots,
                        stream: order.stream,
                        center: it,
                        stat,
                        nd,
                        ns,
                        ny,
                        nz,
                    };
                    let mut r = ranges.clone();
                    r[2] = rows;
                    Done::Residual(match &point {
                        None => residual_plane(plan, &win, &fused, ix, &r, it, &mut scratch.vals),
                        Some(p) => super::curved::residual_plane(plan, p, &win, ix, &r, it),
                    })
                }
            }
        };
        if !fresh {
            tasks.extend(later.drain(..).map(residual_task));
        }
        let mut done = run_tasks(tasks, |t| run(t, &slots));
        if !later.is_empty() {
            let all: Vec<&[f64]> = ring.iter().map(Vec::as_slice).collect();
            let tasks = later.into_iter().map(residual_task).collect();
            done.extend(run_tasks(tasks, |t| run(t, &all)));
        }
        for d in done {
            match d {
                Done::Sampled(it, ix, o) => absorb(
                    &o,
                    [it, ix],
                    &dyn_channels,
                    nz,
                    &mut bad,
                    &mut masked,
                    &mut reality,
                ),
                Done::Residual(p) => {
                    merge(&mut best, &mut skipped, &mut floors, p);
                }
            }
        }
        if !mask && let Some(first) = bad {
            // Streaming over t no later slab comes first; over x one at a smaller t might.
            if order.stream == Stream::T || first.0[0] == 0 || units.end >= along {
                return Err(nonfinite(plan, b, &dyn_channels, first));
            }
        } else {
            bad = None;
        }
        progress(units.end, along);
        if k >= along {
            break;
        }
        k += g;
    }
    if let Some(first) = bad.filter(|_| !mask) {
        return Err(nonfinite(plan, b, &dyn_channels, first));
    }

    for (c, ch) in plan.channels.iter().enumerate() {
        let (im, at) = reality.im[c];
        if im > reality_tolerance(plan) * reality.abs[c] && im > 0.0 {
            return Err(GridError::NotReal {
                component: ch.name.clone(),
                coordinates: plan.coordinates.join(", "),
                point: b.point(at),
                imaginary: im,
                magnitude: reality.abs[c],
            });
        }
    }
    let interior = ranges.iter().map(std::ops::Range::len).product();
    Ok(Sweep {
        best,
        skipped,
        interior,
        masked,
        floors,
    })
}

/// The largest |imaginary part| of a channel's samples, relative to their largest |value|,
/// taken as rounding: `1e-6` for the components themselves; none for the linear parts of
/// components ([`GridPlan::by_component`]: imaginary parts of parts might cancel in a
/// component, so any sends the run to the plan with a channel per component).
fn reality_tolerance(plan: &GridPlan) -> f64 {
    if plan.by_component.is_some() {
        0.0
    } else {
        1e-6
    }
}

/// The task of the residuals of rows `rows` of plane `(it, ix)`.
fn residual_task<'a>((it, ix, rows): (usize, usize, std::ops::Range<usize>)) -> Task<'a> {
    Task::Residual { it, ix, rows }
}

/// Steps per batch of parallel tasks: one on one thread, two on several.
fn steps_per_batch() -> usize {
    if workers() == 1 { 1 } else { 2 }
}

/// Slabs in the ring of a sweep with stencils of order `order` (each `n^3` points of every
/// `t`-dependent channel when the box has `n` points per side): `order + 2` on one thread,
/// `order + 4` on several.
#[must_use]
pub(super) fn ring_slabs(order: u32) -> usize {
    order as usize + 2 * steps_per_batch()
}

/// A worker's buffers, kept through a sweep: the tape's registers and the residuals'
/// combinations.
struct Scratch {
    regs: Option<PlaneWork>,
    vals: Vec<f64>,
}

/// The index of the worker running this (0 outside a pool).
fn thread_index() -> usize {
    #[cfg(feature = "parallel")]
    {
        rayon::current_thread_index().unwrap_or(0)
    }
    #[cfg(not(feature = "parallel"))]
    {
        0
    }
}

/// Runs a step's tasks, in parallel; results in task order.
fn run_tasks(tasks: Vec<Task<'_>>, run: impl Fn(Task<'_>) -> Done + Sync + Send) -> Vec<Done> {
    #[cfg(feature = "parallel")]
    {
        use rayon::prelude::*;
        if rayon::current_num_threads() > 1 {
            return tasks.into_par_iter().map(run).collect();
        }
    }
    tasks.into_iter().map(run).collect()
}

/// `a` comes before `b`: a larger value, or the same value at an earlier lattice point.
fn ahead(a: (f64, [usize; 4]), b: (f64, [usize; 4])) -> bool {
    a.0 > b.0 || (a.0 == b.0 && a.0 > 0.0 && a.1 < b.1)
}

/// Merges one task's residuals into the sweep's.
fn merge(
    best: &mut Peaks,
    skipped: &mut [usize],
    floors: &mut Option<Vec<Vec<f64>>>,
    p: PlaneResult,
) {
    for (ci, claim) in p.best.iter().enumerate() {
        for (k, &found) in claim.iter().enumerate() {
            if ahead(found, best[ci][k]) {
                best[ci][k] = found;
            }
        }
        skipped[ci] += p.skipped[ci];
    }
    if let (Some(all), Some(f)) = (floors.as_mut(), p.floors) {
        for (a, b) in all.iter_mut().zip(f) {
            for (x, y) in a.iter_mut().zip(b) {
                *x = x.max(y);
            }
        }
    }
}

/// Records what the sampling of plane `key = [it, ix]` found: masked values, the largest
/// imaginary parts and values, and the first non-finite sample in lattice order.
fn absorb(
    o: &PlaneOutcome,
    key: [usize; 2],
    channels: &[usize],
    nz: usize,
    bad: &mut Option<FirstBad>,
    masked: &mut usize,
    reality: &mut Reality,
) {
    let [it, ix] = key;
    if let Some((j, iy, iz, v)) = o.first_nonfinite
        && bad.is_none_or(|b| key < b.0)
    {
        *bad = Some((key, j, iy, iz, v));
    }
    *masked += o.nonfinite;
    for (j, &c) in channels.iter().enumerate() {
        reality.abs[c] = reality.abs[c].max(o.max_abs[j]);
        let (im, lane) = o.max_im[j];
        let found = (im, [it, ix, lane / nz, lane % nz]);
        if ahead(found, reality.im[c]) {
            reality.im[c] = found;
        }
    }
}

/// The error for a non-finite sample.
fn nonfinite(plan: &GridPlan, b: &Box4, channels: &[usize], bad: FirstBad) -> GridError {
    let ([it, ix], j, iy, iz, v) = bad;
    let ch: &Channel = &plan.channels[channels[j]];
    GridError::NonFinite {
        component: ch.name.clone(),
        coordinates: plan.coordinates.join(", "),
        point: b.point([it, ix, iy, iz]),
        value: if v.re.is_nan() || v.im.is_nan() {
            "NaN".into()
        } else {
            "infinite".into()
        },
        points: b.counts[1],
    }
}

/// The samples a stencil centred on slab `center` (in `t`) can reach.
pub(super) struct Window<'a> {
    /// The ring's slots (the one being written is empty).
    slots: &'a [&'a [f64]],
    stream: Stream,
    center: usize,
    stat: &'a [f64],
    nd: usize,
    ns: usize,
    ny: usize,
    nz: usize,
}

impl Window<'_> {
    /// The `(y, z)`-plane of `channel` at slab offset `dt`, plane `ix`.
    pub(super) fn plane(&self, ch: &Channel, dt: i32, ix: usize) -> &[f64] {
        let plane = self.ny * self.nz;
        if ch.dynamic {
            let it = (self.center as i64 + i64::from(dt)) as usize;
            let (along, across) = match self.stream {
                Stream::T => (it, ix),
                Stream::X => (ix, it),
            };
            let slot = self.slots[along % self.slots.len()];
            let start = (across * self.nd + ch.slot) * plane;
            &slot[start..start + plane]
        } else {
            let start = (ix * self.ns + ch.slot) * plane;
            &self.stat[start..start + plane]
        }
    }

    /// The `z`-line of `channel` at slab offset `dt`, plane `ix`, row `iy`.
    pub(super) fn line(&self, ch: &Channel, dt: i32, ix: usize, iy: usize) -> &[f64] {
        let start = iy * self.nz;
        &self.plane(ch, dt, ix)[start..start + self.nz]
    }
}

pub(super) struct PlaneResult {
    pub(super) best: Vec<Vec<(f64, [usize; 4])>>,
    pub(super) skipped: Vec<usize>,
    /// About a background: per claim, per component, the largest round-off bound.
    pub(super) floors: Option<Vec<Vec<f64>>>,
}

/// A linear combination of stencil terms on one channel (terms at one offset merged).
#[derive(Clone, Debug)]
struct Combo {
    channel: usize,
    terms: Vec<Term>,
}

/// The claims' components as sums of [`Combo`]s: every component's terms on one channel
/// whose coefficients are proportional to another component's (box hbar: every channel's
/// `eta^aa d_a d_a`) share one combination, evaluated once per point in one pass over the
/// samples, instead of one pass per derivative and a second sum.
#[derive(Clone, Debug)]
struct Fused {
    combos: Vec<Combo>,
    /// Per claim, per component: `(combo, coefficient)`.
    comps: Vec<Vec<Vec<(usize, f64)>>>,
}

/// Groups the atoms of every component by channel and shares proportional groups. A merged
/// weight that cancels to 0 is kept, so a masked (NaN) sample still reaches every residual
/// whose stencil touches it. Merging changes the order of the sums only: the values agree
/// with the atom-by-atom sums to rounding, and the round-off floor (which adds |weights|
/// atom by atom) still bounds the propagated sample error.
fn fuse(plan: &GridPlan, atom_terms: &[Vec<Term>]) -> Fused {
    let mut combos: Vec<Combo> = Vec::new();
    let mut comps: Vec<Vec<Vec<(usize, f64)>>> = plan
        .claims
        .iter()
        .map(|c| vec![Vec::new(); c.components.len()])
        .collect();
    for c in 0..plan.channels.len() {
        let atoms: Vec<usize> = (0..plan.atoms.len())
            .filter(|&a| plan.atoms[a].0 == c)
            .collect();
        if atoms.is_empty() {
            continue;
        }
        // Per component using this channel: its coefficient on each of the channel's atoms
        // (None: the atom is not a term), as (scale, direction) with direction[first] = 1.
        type Dir = Vec<Option<f64>>;
        let mut uses: Vec<(usize, usize, f64, Dir)> = Vec::new();
        for (ci, claim) in plan.claims.iter().enumerate() {
            for (k, comp) in claim.components.iter().enumerate() {
                let mut v: Dir = vec![None; atoms.len()];
                for &(a, coef) in &comp.terms {
                    if let Some(j) = atoms.iter().position(|&x| x == a) {
                        v[j] = Some(v[j].unwrap_or(0.0) + coef);
                    }
                }
                if v.iter().all(Option::is_none) {
                    continue;
                }
                let scale = v
                    .iter()
                    .flatten()
                    .copied()
                    .find(|&x| x != 0.0)
                    .unwrap_or(1.0);
                let dir: Dir = v.iter().map(|x| x.map(|x| x / scale)).collect();
                uses.push((ci, k, scale, dir));
            }
        }
        let mut dirs: Vec<Dir> = Vec::new();
        for u in &uses {
            let same = |d: &Dir| {
                d.len() == u.3.len()
                    && d.iter()
                        .zip(&u.3)
                        .all(|(a, b)| a.map(f64::to_bits) == b.map(f64::to_bits))
            };
            if !dirs.iter().any(same) {
                dirs.push(u.3.clone());
            }
        }
        if dirs.len() >= atoms.len() {
            // Nothing shared: one combination per atom, the terms as they were.
            let base = combos.len();
            for &a in &atoms {
                combos.push(Combo {
                    channel: c,
                    terms: atom_terms[a].clone(),
                });
            }
            for (ci, k, scale, dir) in uses {
                for (j, d) in dir.iter().enumerate() {
                    if let Some(d) = d {
                        comps[ci][k].push((base + j, scale * d));
                    }
                }
            }
            continue;
        }
        let base = combos.len();
        for dir in &dirs {
            let mut terms: Vec<Term> = Vec::new();
            for (j, d) in dir.iter().enumerate() {
                let Some(d) = *d else { continue };
                for t in &atom_terms[atoms[j]] {
                    match terms.iter_mut().find(|m| m.d == t.d) {
                        Some(m) => m.w += d * t.w,
                        None => terms.push(Term { d: t.d, w: d * t.w }),
                    }
                }
            }
            combos.push(Combo { channel: c, terms });
        }
        for (ci, k, scale, dir) in uses {
            let at = dirs
                .iter()
                .position(|d| {
                    d.iter()
                        .zip(&dir)
                        .all(|(a, b)| a.map(f64::to_bits) == b.map(f64::to_bits))
                })
                .unwrap_or(0);
            comps[ci][k].push((base + at, scale));
        }
    }
    Fused { combos, comps }
}

/// `acc[i] = sum_k w[k] * lines[k][i]`, the terms taken in groups of four in order, each
/// group summed as `(w0 x0 + w1 x1) + (w2 x2 + w3 x3)` (fewer terms: the same tree cut
/// short) and added to the running sum, which starts at 0. One pass over `acc`: the running
/// sums of a block of lanes stay in registers through all the groups. Blocks of 32 lanes
/// (four AVX-512 registers) first, so that a group's dispatch and its weights' broadcasts are
/// paid once per 32 lanes rather than once per 8 (the same sums, so the same bits).
#[inline(always)]
fn combine(acc: &mut [f64], w: &[f64], lines: &[&[f64]]) {
    let at = combine_blocks::<32>(acc, w, lines, 0);
    let at = combine_blocks::<8>(acc, w, lines, at);
    for i in at..acc.len() {
        let mut a = [0.0f64; 1];
        for (wg, lg) in w.chunks(4).zip(lines.chunks(4)) {
            add_group(&mut a, wg, lg, i);
        }
        acc[i] = a[0];
    }
}

/// [`combine`] over the whole blocks of `L` lanes from lane `at` on; returns where they end.
#[inline(always)]
fn combine_blocks<const L: usize>(
    acc: &mut [f64],
    w: &[f64],
    lines: &[&[f64]],
    mut at: usize,
) -> usize {
    for out in acc[at..].chunks_exact_mut(L) {
        let mut a = [0.0f64; L];
        for (wg, lg) in w.chunks(4).zip(lines.chunks(4)) {
            add_group(&mut a, wg, lg, at);
        }
        out.copy_from_slice(&a);
        at += L;
    }
    at
}

/// `a[j] += group sum at lane at + j`: one group of up to four terms of [`combine`].
#[inline(always)]
fn add_group<const L: usize>(a: &mut [f64; L], w: &[f64], l: &[&[f64]], at: usize) {
    let x = |k: usize| -> &[f64; L] { l[k][at..at + L].try_into().expect("L lanes") };
    match *w {
        [w0] => {
            let x0 = x(0);
            for j in 0..L {
                a[j] += w0 * x0[j];
            }
        }
        [w0, w1] => {
            let (x0, x1) = (x(0), x(1));
            for j in 0..L {
                a[j] += w0 * x0[j] + w1 * x1[j];
            }
        }
        [w0, w1, w2] => {
            let (x0, x1, x2) = (x(0), x(1), x(2));
            for j in 0..L {
                a[j] += (w0 * x0[j] + w1 * x1[j]) + w2 * x2[j];
            }
        }
        [w0, w1, w2, w3] => {
            let (x0, x1, x2, x3) = (x(0), x(1), x(2), x(3));
            for j in 0..L {
                a[j] += (w0 * x0[j] + w1 * x1[j]) + (w2 * x2[j] + w3 * x3[j]);
            }
        }
        _ => unreachable!("groups of at most four terms"),
    }
}

/// The largest |value| of `r` above `floor` and its first index (what a scan that keeps the
/// first strictly larger value finds), NaN left out and marked in `skip`. Branch-free over
/// blocks of four, so it vectorizes.
#[inline(always)]
fn row_peak(r: &[f64], skip: &mut [bool], floor: f64) -> Option<(f64, usize)> {
    let mut m = [0.0f64; 4];
    let blocks = r.chunks_exact(4);
    let tail = blocks.remainder();
    for c in blocks {
        for (mj, &v) in m.iter_mut().zip(c) {
            let a = v.abs();
            *mj = if a > *mj { a } else { *mj };
        }
    }
    let mut top = m
        .into_iter()
        .fold(0.0, |x: f64, y| if y > x { y } else { x });
    for &v in tail {
        let a = v.abs();
        top = if a > top { a } else { top };
    }
    for (k, &v) in skip.iter_mut().zip(r) {
        *k |= v.is_nan();
    }
    if top > floor {
        r.iter().position(|&v| v.abs() == top).map(|i| (top, i))
    } else {
        None
    }
}

/// The residuals of rows `ranges[2]` of plane `(it, ix)`: the fused combinations line by
/// line, every component from them, and its largest |value| with where.
fn residual_plane(
    plan: &GridPlan,
    win: &Window<'_>,
    fused: &Fused,
    ix: usize,
    ranges: &[std::ops::Range<usize>; 4],
    it: usize,
    vals: &mut Vec<f64>,
) -> PlaneResult {
    #[cfg(target_arch = "x86_64")]
    if std::is_x86_feature_detected!("avx512f") {
        // SAFETY: detected just above.
        return unsafe { residual_plane_avx512(plan, win, fused, ix, ranges, it, vals) };
    }
    #[cfg(target_arch = "x86_64")]
    if std::is_x86_feature_detected!("avx2") {
        // SAFETY: the processor has AVX2 (detected just above), the only requirement of
        // `residual_plane_avx2`.
        return unsafe { residual_plane_avx2(plan, win, fused, ix, ranges, it, vals) };
    }
    residual_plane_lanes(plan, win, fused, ix, ranges, it, vals)
}

/// [`residual_plane`] compiled for AVX2: the same additions and multiplications (no fused
/// multiply-add, which Rust never forms on its own), so the same bits, four lanes per
/// instruction instead of two.
///
/// # Safety
///
/// The processor must support AVX2.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
unsafe fn residual_plane_avx2(
    plan: &GridPlan,
    win: &Window<'_>,
    fused: &Fused,
    ix: usize,
    ranges: &[std::ops::Range<usize>; 4],
    it: usize,
    vals: &mut Vec<f64>,
) -> PlaneResult {
    residual_plane_lanes(plan, win, fused, ix, ranges, it, vals)
}

/// AVX-512.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx512f")]
unsafe fn residual_plane_avx512(
    plan: &GridPlan,
    win: &Window<'_>,
    fused: &Fused,
    ix: usize,
    ranges: &[std::ops::Range<usize>; 4],
    it: usize,
    vals: &mut Vec<f64>,
) -> PlaneResult {
    residual_plane_lanes(plan, win, fused, ix, ranges, it, vals)
}

/// The body of [`residual_plane`], inlined into each compiled variant.
#[inline(always)]
fn residual_plane_lanes(
    plan: &GridPlan,
    win: &Window<'_>,
    fused: &Fused,
    ix: usize,
    ranges: &[std::ops::Range<usize>; 4],
    it: usize,
    vals: &mut Vec<f64>,
) -> PlaneResult {
    let (z0, len) = (ranges[3].start, ranges[3].len());
    let (mut best, mut skipped) = no_residuals_yet(plan);
    let (y0, rows) = (ranges[2].start, ranges[2].len());
    // Every combination at every row of the task first, one combination at a time: each term
    // then reads one long run of a plane (which the prefetcher follows) rather than one line
    // of each of 9 planes per row.
    let stride = rows * len;
    fit(vals, fused.combos.len() * stride);
    let mut r = vec![0.0; len];
    let mut skip = vec![false; len];
    let most = fused
        .combos
        .iter()
        .map(|c| c.terms.len())
        .max()
        .unwrap_or(0);
    let mut lines: Vec<&[f64]> = Vec::with_capacity(most);
    let nz = win.nz as i64;
    for (k, combo) in fused.combos.iter().enumerate() {
        let ch = &plan.channels[combo.channel];
        // Per term: the (y, z)-plane it reads, and where its line starts in row 0.
        let reach: Vec<(&[f64], i64)> = combo
            .terms
            .iter()
            .map(|t| {
                let pl = win.plane(ch, t.d[0], (ix as i64 + i64::from(t.d[1])) as usize);
                (pl, i64::from(t.d[2]) * nz + z0 as i64 + i64::from(t.d[3]))
            })
            .collect();
        let weights: Vec<f64> = combo.terms.iter().map(|t| t.w).collect();
        for (j, acc) in vals[k * stride..(k + 1) * stride]
            .chunks_mut(len)
            .enumerate()
        {
            let row = (y0 + j) as i64 * nz;
            lines.clear();
            for &(pl, off) in &reach {
                let from = (row + off) as usize;
                lines.push(&pl[from..from + len]);
            }
            combine(acc, &weights, &lines);
        }
    }
    for (j, iy) in ranges[2].clone().enumerate() {
        let val = |a: usize| &vals[a * stride + j * len..a * stride + (j + 1) * len];
        for (ci, comps) in fused.comps.iter().enumerate() {
            skip.fill(false);
            for (k, comp) in comps.iter().enumerate() {
                r.fill(0.0);
                for &(a, coef) in comp {
                    for (x, &v) in r.iter_mut().zip(val(a)) {
                        *x += coef * v;
                    }
                }
                let b = &mut best[ci][k];
                if let Some((v, i)) = row_peak(&r, &mut skip, b.0) {
                    *b = (v, [it, ix, iy, z0 + i]);
                }
            }
            skipped[ci] += skip.iter().filter(|&&x| x).count();
        }
    }
    PlaneResult {
        best,
        skipped,
        floors: None,
    }
}

/// Per channel, the largest running error bound of the samples at `n^4` points spread over
/// the box `center +- width/2` (both ends included), ignoring points where the bound is not
/// finite: the absolute rounding error of a sample, for the round-off floor.
#[must_use]
pub fn probe_errors(plan: &GridPlan, center: [f64; 4], width: f64, n: usize) -> Vec<f64> {
    let n = n.max(2);
    let at = |a: usize, i: usize| center[a] - width / 2.0 + width * i as f64 / (n - 1) as f64;
    let per_point = |p: usize| -> Vec<f64> {
        let idx = [p / (n * n * n), (p / (n * n)) % n, (p / n) % n, p % n];
        let x: [f64; 4] = std::array::from_fn(|a| at(a, idx[a]));
        let mut e = vec![0.0; plan.channels.len()];
        for (tape, dynamic) in [(&plan.dynamic, true), (&plan.statics, false)] {
            let chans = plan.channel_order(dynamic);
            for (j, (_, b)) in tape_bounds(tape, &x).into_iter().enumerate() {
                if b.is_finite() {
                    e[chans[j]] = b;
                }
            }
        }
        e
    };
    let all = each_index(0..n.pow(4), per_point);
    let mut out = vec![0.0f64; plan.channels.len()];
    for e in all {
        for (o, v) in out.iter_mut().zip(e) {
            *o = o.max(v);
        }
    }
    out
}

fn tape_bounds(tape: &Tape, x: &[f64; 4]) -> Vec<(crate::tape::C64, f64)> {
    if tape.outputs() == 0 {
        Vec::new()
    } else {
        tape.eval_bounds(x)
    }
}

#[cfg(test)]
/// The sweep as it was before the streaming order became a choice (slab by slab in `t`,
/// a ring of `2s + 1` slabs, merges in plane order, the first non-finite slab an error):
/// the reference the ordered sweeps are compared with, bit for bit.
mod reference {
    use super::*;
    use crate::grid::{Channel, GridError, GridPlan};
    use crate::tape::{Lattice, PlaneOutcome, PlaneWork};

    /// What a slab's sampling found; an error for a non-finite value unless masking.
    #[allow(clippy::too_many_arguments)]
    fn absorb_slab(
        outcomes: &[PlaneOutcome],
        it: usize,
        channels: &[usize],
        plan: &GridPlan,
        b: &Box4,
        mask: bool,
        masked: &mut usize,
        reality: &mut Reality,
    ) -> Result<(), GridError> {
        let nz = b.counts[3];
        for (ix, o) in outcomes.iter().enumerate() {
            if let Some((j, iy, iz, v)) = o.first_nonfinite
                && !mask
            {
                {
                    let ch: &Channel = &plan.channels[channels[j]];
                    return Err(GridError::NonFinite {
                        component: ch.name.clone(),
                        coordinates: plan.coordinates.join(", "),
                        point: b.point([it, ix, iy, iz]),
                        value: if v.re.is_nan() || v.im.is_nan() {
                            "NaN".into()
                        } else {
                            "infinite".into()
                        },
                        points: b.counts[1],
                    });
                }
            }
            *masked += o.nonfinite;
            for (j, &c) in channels.iter().enumerate() {
                reality.abs[c] = reality.abs[c].max(o.max_abs[j]);
                let (im, lane) = o.max_im[j];
                if im > reality.im[c].0 {
                    reality.im[c] = (im, [it, ix, lane / nz, lane % nz]);
                }
            }
        }
        Ok(())
    }

    pub(super) fn slab_sweep(
        bufs: &mut Buffers,
        plan: &GridPlan,
        at: SweepAt<'_>,
        errors: &[f64],
        progress: &mut dyn FnMut(usize, usize),
    ) -> Result<Sweep, GridError> {
        let SweepAt {
            b,
            st,
            mask,
            region,
        } = at;
        let s = st.half;
        let [nt, nx, ny, nz] = b.counts;
        if b.counts.iter().any(|&n| n < 2 * s + 1) {
            return Err(GridError::TooFewPoints {
                order: st.order,
                needed: 2 * s + 1,
                got: *b.counts.iter().min().unwrap_or(&0),
            });
        }
        let (ts, xs, ys, zs) = (b.coords(0), b.coords(1), b.coords(2), b.coords(3));
        let plane = ny * nz;
        let nd = plan.dynamic.outputs();
        let ns = plan.statics.outputs();
        let dyn_channels: Vec<usize> = plan.channel_order(true);
        let static_channels: Vec<usize> = plan.channel_order(false);
        let mut reality = Reality {
            im: vec![(0.0, [0; 4]); plan.channels.len()],
            abs: vec![0.0; plan.channels.len()],
        };
        let mut masked = 0usize;

        // Channels that do not depend on t: one slab for every t.
        let stat = &mut bufs.stat;
        fit(stat, nx * ns * plane);
        if ns > 0 {
            let lat = Lattice::new(&plan.statics, &ys, &zs);
            let mut works: Vec<PlaneWork> = (0..workers()).map(|_| lat.workspace()).collect();
            let outcomes = sample_slab(&lat, &xs, stat, ns, &mut works);
            absorb_slab(
                &outcomes,
                nt / 2,
                &static_channels,
                plan,
                b,
                mask,
                &mut masked,
                &mut reality,
            )?;
            // A masked static sample is masked at every t.
            masked *= nt;
        }

        let w = 2 * s + 1;
        let ring = &mut bufs.ring;
        ring.truncate(w);
        ring.resize_with(w, Vec::new);
        for slab in ring.iter_mut() {
            fit(slab, nx * nd * plane);
        }
        let mut lat = Lattice::new(&plan.dynamic, &ys, &zs);
        let mut works: Vec<PlaneWork> = (0..workers()).map(|_| lat.workspace()).collect();

        // Stencil terms of every atom, fused into the combinations the components use.
        let atom_terms: Vec<Vec<Term>> = plan
            .atoms
            .iter()
            .map(|&(_, d)| terms(d, st, b.spacing))
            .collect();
        let fused = fuse(plan, &atom_terms);
        // About a background: the stencils of every derivative the curvature chain needs.
        let point = plan
            .curved
            .as_ref()
            .map(|c| crate::grid::curved::PointStencils::new(c, plan, st, b.spacing, errors));
        let ranges: [std::ops::Range<usize>; 4] =
            std::array::from_fn(|a| measured(b, a, s, region.map(|r| r[a])));
        let len = ranges[3].len();
        let (mut best, mut skipped) = no_residuals_yet(plan);
        let mut floors: Option<Vec<Vec<f64>>> = point.as_ref().map(|_| {
            plan.claims
                .iter()
                .map(|c| vec![0.0; c.components.len()])
                .collect()
        });

        for it in 0..nt {
            if nd > 0 {
                lat.set_t(ts[it]);
                let slab = &mut ring[it % w];
                let outcomes = sample_slab(&lat, &xs, slab, nd, &mut works);
                absorb_slab(
                    &outcomes,
                    it,
                    &dyn_channels,
                    plan,
                    b,
                    mask,
                    &mut masked,
                    &mut reality,
                )?;
            }
            if it >= 2 * s && ranges[0].contains(&(it - s)) && len > 0 {
                let center = it - s;
                let slots: Vec<&[f64]> = ring.iter().map(Vec::as_slice).collect();
                let window = Window {
                    slots: &slots,
                    stream: Stream::T,
                    center,
                    stat,
                    nd,
                    ns,
                    ny,
                    nz,
                };
                let planes = each_index(ranges[1].clone(), |ix| match &point {
                    None => residual_plane_rows(plan, &window, &fused, ix, &ranges, center),
                    Some(k) => {
                        crate::grid::curved::residual_plane(plan, k, &window, ix, &ranges, center)
                    }
                });
                for p in planes {
                    for (ci, claim) in p.best.iter().enumerate() {
                        for (k, &(v, at)) in claim.iter().enumerate() {
                            if v > best[ci][k].0 {
                                best[ci][k] = (v, at);
                            }
                        }
                        skipped[ci] += p.skipped[ci];
                    }
                    if let (Some(all), Some(f)) = (floors.as_mut(), p.floors) {
                        for (a, b) in all.iter_mut().zip(f) {
                            for (x, y) in a.iter_mut().zip(b) {
                                *x = x.max(y);
                            }
                        }
                    }
                }
            }
            progress(it + 1, nt);
        }

        for (c, ch) in plan.channels.iter().enumerate() {
            let (im, at) = reality.im[c];
            if im > super::reality_tolerance(plan) * reality.abs[c] && im > 0.0 {
                return Err(GridError::NotReal {
                    component: ch.name.clone(),
                    coordinates: plan.coordinates.join(", "),
                    point: b.point(at),
                    imaginary: im,
                    magnitude: reality.abs[c],
                });
            }
        }
        let interior = ranges.iter().map(std::ops::Range::len).product();
        Ok(Sweep {
            best,
            skipped,
            interior,
            masked,
            floors,
        })
    }

    /// `acc[i] += sum_k w[k] * lines[k][i]` for up to four terms at once (fewer passes over
    /// `acc`).
    #[inline(always)]
    fn accumulate(acc: &mut [f64], w: &[f64], lines: &[&[f64]]) {
        let n = acc.len();
        match (w, lines) {
            (&[w0], &[l0]) => {
                for (a, &x0) in acc.iter_mut().zip(&l0[..n]) {
                    *a += w0 * x0;
                }
            }
            (&[w0, w1], &[l0, l1]) => {
                for ((a, &x0), &x1) in acc.iter_mut().zip(&l0[..n]).zip(&l1[..n]) {
                    *a += w0 * x0 + w1 * x1;
                }
            }
            (&[w0, w1, w2], &[l0, l1, l2]) => {
                for (((a, &x0), &x1), &x2) in
                    acc.iter_mut().zip(&l0[..n]).zip(&l1[..n]).zip(&l2[..n])
                {
                    *a += (w0 * x0 + w1 * x1) + w2 * x2;
                }
            }
            (&[w0, w1, w2, w3], &[l0, l1, l2, l3]) => {
                for ((((a, &x0), &x1), &x2), &x3) in acc
                    .iter_mut()
                    .zip(&l0[..n])
                    .zip(&l1[..n])
                    .zip(&l2[..n])
                    .zip(&l3[..n])
                {
                    *a += (w0 * x0 + w1 * x1) + (w2 * x2 + w3 * x3);
                }
            }
            _ => {
                for (&wk, lk) in w.iter().zip(lines) {
                    for (a, &x) in acc.iter_mut().zip(lk.iter()) {
                        *a += wk * x;
                    }
                }
            }
        }
    }

    /// The residual kernel as it was (one row of every combination at a time).
    fn residual_plane_rows(
        plan: &GridPlan,
        win: &Window<'_>,
        fused: &Fused,
        ix: usize,
        ranges: &[std::ops::Range<usize>; 4],
        it: usize,
    ) -> PlaneResult {
        let (z0, len) = (ranges[3].start, ranges[3].len());
        let (mut best, mut skipped) = no_residuals_yet(plan);
        let mut vals = vec![0.0; fused.combos.len() * len];
        let mut r = vec![0.0; len];
        let mut skip = vec![false; len];
        let mut lines: Vec<&[f64]> = Vec::with_capacity(4);
        for iy in ranges[2].clone() {
            for (k, combo) in fused.combos.iter().enumerate() {
                let ch = &plan.channels[combo.channel];
                let acc = &mut vals[k * len..(k + 1) * len];
                acc.fill(0.0);
                for group in combo.terms.chunks(4) {
                    lines.clear();
                    let mut w = [0.0; 4];
                    for (t, wk) in group.iter().zip(&mut w) {
                        let line = win.line(
                            ch,
                            t.d[0],
                            (ix as i64 + i64::from(t.d[1])) as usize,
                            (iy as i64 + i64::from(t.d[2])) as usize,
                        );
                        let from = (z0 as i64 + i64::from(t.d[3])) as usize;
                        lines.push(&line[from..from + len]);
                        *wk = t.w;
                    }
                    accumulate(acc, &w[..group.len()], &lines);
                }
            }
            for (ci, comps) in fused.comps.iter().enumerate() {
                skip.fill(false);
                for (k, comp) in comps.iter().enumerate() {
                    r.fill(0.0);
                    for &(a, coef) in comp {
                        for (x, &v) in r.iter_mut().zip(&vals[a * len..(a + 1) * len]) {
                            *x += coef * v;
                        }
                    }
                    let b = &mut best[ci][k];
                    for (i, &v) in r.iter().enumerate() {
                        let v = v.abs();
                        if v.is_nan() {
                            skip[i] = true;
                        } else if v > b.0 {
                            *b = (v, [it, ix, iy, z0 + i]);
                        }
                    }
                }
                skipped[ci] += skip.iter().filter(|&&x| x).count();
            }
        }
        PlaneResult {
            best,
            skipped,
            floors: None,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::zero::SplitMix64;

    #[test]
    fn fused_combinations_sum_the_atoms() {
        // Box hbar: one combination per channel (17 terms at order 4 for a t-dependent
        // channel, 13 for h_tt, which does not depend on t), and every component's value the
        // atom-by-atom sum to rounding, on random samples.
        let text = "[perturbation]\nxx = 'cos(t - z)'\nxy = 'sin(t + x)'\nyy = 'x*y*t'\n\
                    zz = 'exp(t*z)'\ntt = 'x^2*y'\n";
        let mut p = crate::problem::from_str("test.toml", text).unwrap();
        let h = p.h;
        let params = p.parameters.clone();
        let samples = p.sampling.samples.clone();
        let plan = GridPlan::new(
            &mut p.store,
            &h,
            None,
            vec![super::super::box_hbar()],
            true,
            &params,
            &samples,
        )
        .unwrap();
        let st = Stencil::central(4).unwrap();
        let atom_terms: Vec<Vec<Term>> = plan
            .atoms
            .iter()
            .map(|&(_, d)| terms(d, &st, 0.1))
            .collect();
        let fused = fuse(&plan, &atom_terms);
        assert_eq!(fused.combos.len(), plan.channels.len());
        for combo in &fused.combos {
            let n = if plan.channels[combo.channel].dynamic {
                17
            } else {
                13
            };
            assert_eq!(combo.terms.len(), n);
        }
        let seed = 0xf05e_0001_u64;
        let mut rng = SplitMix64::new(seed);
        for _ in 0..20 {
            // A random sample at every (channel, offset).
            let mut sample: Vec<((usize, [i32; 4]), f64)> = Vec::new();
            let mut value = |c: usize, d: [i32; 4], rng: &mut SplitMix64| -> f64 {
                if let Some(v) = sample.iter().find(|e| e.0 == (c, d)) {
                    return v.1;
                }
                let v = rng.next_f64() * 2.0 - 1.0;
                sample.push(((c, d), v));
                v
            };
            for (ci, claim) in plan.claims.iter().enumerate() {
                for (k, comp) in claim.components.iter().enumerate() {
                    let (mut want, mut size) = (0.0, 0.0);
                    for &(a, coef) in &comp.terms {
                        for t in &atom_terms[a] {
                            let v = coef * t.w * value(plan.atoms[a].0, t.d, &mut rng);
                            want += v;
                            size += v.abs();
                        }
                    }
                    let mut got = 0.0;
                    for &(cb, coef) in &fused.comps[ci][k] {
                        let combo = &fused.combos[cb];
                        for t in &combo.terms {
                            got += coef * t.w * value(combo.channel, t.d, &mut rng);
                        }
                    }
                    assert!(
                        (got - want).abs() <= 64.0 * f64::EPSILON * size,
                        "seed {seed:#x} {}: fused {got}, atoms {want}",
                        comp.name
                    );
                }
            }
        }
    }

    /// A problem's grid plan, and the sample errors its sweep uses.
    fn plan_of(text: &str, hbar: bool) -> (GridPlan, Vec<f64>) {
        let plan = if hbar {
            super::super::tests::box_hbar_plan(text)
        } else {
            let mut p = crate::problem::from_str("test.toml", text).unwrap();
            GridPlan::for_problem(&mut p).unwrap()
        };
        let errors = match plan.curved {
            Some(_) => probe_errors(&plan, [0.3, 0.4, 0.5, 0.6], 0.2, 3),
            None => Vec::new(),
        };
        (plan, errors)
    }

    #[test]
    fn ordered_sweeps_give_the_slab_sweep_bit_for_bit() {
        // Streaming over t or over x, with any number of rows per task, on one thread or
        // several: the same largest residuals at the same points (ties to the first point in
        // (t, x, y, z) order), the same skipped, masked, interior and floors, and the same
        // error (the same non-finite sample, the same point not real) as the slab-by-slab
        // sweep. Random boxes (counts not tied to anything), orders 2 and 4, regions, masking.
        let cases: [(&str, bool); 5] = [
            // Box hbar of a wave, with h_tt static.
            (
                "[parameters]\na = 1.0e-3\nw = 3.0\n[define]\nphase = 'w*(t - (2*x + 2*y + z)/3)'\n\
                 [perturbation]\nxx = 'a*cos(phase)'\nxy = 'a*sin(phase)'\nzz = '-a*cos(phase)'\n\
                 tt = 'x^2*y/7'\n",
                true,
            ),
            // Field equations (mixed derivatives) of a perturbation that solves nothing.
            (
                "[perturbation]\nxx = 'sin(t + 2*y)*x'\nty = 'cos(x - z)*t^2'\nzz = 'exp(y/3)*t'\n\
                 [claims]\nfield_equations = true\n",
                false,
            ),
            // Not finite on the plane x = 0.4 and on the slab t = 0.3 (when the counts are
            // odd): the first such sample in lattice order is the error, or all are masked.
            (
                "[perturbation]\nxx = '1/((x - 0.4)*(t - 0.3))'\nyy = 'y*t'\ntt = '1/(z - 0.6)'\n",
                true,
            ),
            // Not real where y < 0.5, the largest imaginary part tied along x.
            ("[perturbation]\nxx = 'sqrt(y - 0.5)*t'\nyy = 'z*t'\n", true),
            // About a background.
            (
                "[perturbation]\nxx = 'sin(t + 2*y)*x'\nty = 'cos(x - z)*t^2'\n\
                 [claims]\nfield_equations = true\n\
                 [background]\ntt = '-1 - x^2/10'\nxx = '1'\nyy = '1 + t^2/10'\nzz = '1'\n",
                false,
            ),
        ];
        let seed = 0x0b10_c4ed_5eed_u64;
        println!("seed {seed:#x}");
        let mut rng = SplitMix64::new(seed);
        let mut below = |n: usize| (rng.next_u64() % n as u64) as usize;
        let mut outcomes = [0usize; 3];
        for (case, &(text, hbar)) in cases.iter().enumerate() {
            let (plan, errors) = plan_of(text, hbar);
            let curved = plan.curved.is_some();
            for trial in 0..if curved { 3 } else { 8 } {
                let order = if below(2) == 0 { 2 } else { 4 };
                let st = Stencil::central(order).unwrap();
                let s = st.half;
                let extra = if curved { 3 } else { 6 };
                let counts: [usize; 4] = std::array::from_fn(|_| 2 * s + 1 + below(extra));
                let spacing = [0.01, 0.02, 0.05][below(3)];
                let b = Box4 {
                    center: [0.3, 0.4, 0.5, 0.6],
                    spacing,
                    counts,
                };
                let region = (below(2) == 0).then(|| {
                    std::array::from_fn(|a| {
                        let c = b.center[a];
                        let half = spacing * counts[a] as f64 / 2.0;
                        [c - half * 0.6 + spacing * below(2) as f64, c + half * 0.4]
                    })
                });
                let at = SweepAt {
                    b: &b,
                    st: &st,
                    mask: below(2) == 0,
                    region,
                };
                let want =
                    reference::slab_sweep(&mut Buffers::new(), &plan, at, &errors, &mut |_, _| {});
                outcomes[match &want {
                    Ok(_) => 0,
                    Err(GridError::NonFinite { .. }) => 1,
                    Err(_) => 2,
                }] += 1;
                let orders = [
                    (Stream::T, None, None),
                    (Stream::X, None, None),
                    (Stream::T, Some(1), Some(1)),
                    (Stream::X, Some(1), Some(1)),
                    (Stream::X, Some(2), Some(3)),
                    (Stream::T, Some(3), Some(2)),
                    (Stream::X, None, Some(5)),
                ];
                let mut bufs = Buffers::new();
                for (stream, rows, group) in orders {
                    let order = Order {
                        stream,
                        rows,
                        group,
                    };
                    let mut calls = Vec::new();
                    let got = sweep_in(&mut bufs, &plan, at, &errors, order, &mut |k, n| {
                        calls.push((k, n));
                    });
                    assert_eq!(
                        got, want,
                        "seed {seed:#x} case {case} trial {trial}: {b:?} {order:?}"
                    );
                    if got.is_ok() {
                        let n = if stream == Stream::T {
                            counts[0]
                        } else {
                            counts[1]
                        };
                        assert_eq!(calls.last(), Some(&(n, n)));
                    }
                }
                // One thread and three.
                #[cfg(feature = "parallel")]
                for threads in [1, 3] {
                    let pool = rayon::ThreadPoolBuilder::new()
                        .num_threads(threads)
                        .build()
                        .unwrap();
                    let order = Order {
                        stream: Stream::X,
                        rows: None,
                        group: None,
                    };
                    let got = pool.install(|| {
                        sweep_in(
                            &mut Buffers::new(),
                            &plan,
                            at,
                            &errors,
                            order,
                            &mut |_, _| {},
                        )
                    });
                    assert_eq!(
                        got, want,
                        "seed {seed:#x} case {case} trial {trial}, {threads} threads"
                    );
                }
            }
        }
        // Every outcome was compared: results, non-finite samples, points not real.
        assert!(outcomes.iter().all(|&n| n > 0), "{outcomes:?}");
    }
}
