//! One resolution: sample the channels slab by slab and take the residuals at interior points.
//!
//! Streaming over `t`: the samples of the channels that depend on `t` live in a ring of
//! `order + 1` slabs (3-d grids at one `t`), exactly what a stencil centred on the middle slab
//! reaches; the channels that do not depend on `t` are sampled once into one more slab.
//! Residuals are computed on the middle slab as soon as the ring is full, so memory is
//! `(order + 2) * nx * ny * nz * channels * 8` bytes, never the whole 4-d grid.
//!
//! Within a slab, sampling runs over `x`-planes in parallel, and residuals over `x`-planes of
//! the middle slab in parallel, each plane line by line along `z`, so every stencil term is a
//! contiguous multiply-add. Reductions are per plane and merged in plane order, so the result
//! does not depend on scheduling.

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

/// Records what a slab's sampling found; an error for a non-finite value unless masking.
#[allow(clippy::too_many_arguments)]
fn absorb(
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
        absorb(
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

    for it in 0..nt {
        if nd > 0 {
            lat.set_t(ts[it]);
            let slab = &mut ring[it % w];
            let outcomes = sample_slab(&lat, &xs, slab, nd, &mut works);
            absorb(
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
            let window = Window {
                ring,
                center,
                w,
                stat,
                nd,
                ns,
                ny,
                nz,
            };
            let planes = each_index(ranges[1].clone(), |ix| match &point {
                None => residual_plane(plan, &window, &fused, ix, &ranges, center),
                Some(k) => super::curved::residual_plane(plan, k, &window, ix, &ranges, center),
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
        if im > 1e-6 * reality.abs[c] && im > 0.0 {
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

/// The samples a stencil centred on slab `center` can reach.
pub(super) struct Window<'a> {
    ring: &'a [Vec<f64>],
    center: usize,
    w: usize,
    stat: &'a [f64],
    nd: usize,
    ns: usize,
    ny: usize,
    nz: usize,
}

impl Window<'_> {
    /// The `z`-line of `channel` at slab offset `dt`, plane `ix`, row `iy`.
    pub(super) fn line(&self, ch: &Channel, dt: i32, ix: usize, iy: usize) -> &[f64] {
        let plane = self.ny * self.nz;
        if ch.dynamic {
            let slab = &self.ring[(self.center as i64 + i64::from(dt)) as usize % self.w];
            let start = (ix * self.nd + ch.slot) * plane + iy * self.nz;
            &slab[start..start + self.nz]
        } else {
            let start = (ix * self.ns + ch.slot) * plane + iy * self.nz;
            &self.stat[start..start + self.nz]
        }
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

/// `acc[i] += sum_k w[k] * lines[k][i]` for up to four terms at once (fewer passes over
/// `acc`).
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
            for (((a, &x0), &x1), &x2) in acc.iter_mut().zip(&l0[..n]).zip(&l1[..n]).zip(&l2[..n]) {
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

fn residual_plane(
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
}
