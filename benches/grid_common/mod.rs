//! Shared by the grid benchmarks: one formula as a tape and as a hand-written closure, and the
//! residual case compared with NumPy (`benches/grid_numpy.py`, same grid, same arithmetic).

#![allow(dead_code)]

use lingrav::canon::{Names, Store};
use lingrav::grid::{Box4, GridPlan, Stencil, box_hbar, sweep};
use lingrav::tape::{Compiler, Tape};
use rustc_hash::FxHashMap;

/// The formula of the tape-against-closure benchmark: an oblique wave under a Gaussian
/// envelope plus a point-mass potential (a cos, an exp and a sqrt per point).
pub const FORMULA: &str =
    "a*cos(w*(t - (2*x + 2*y + z)/3))*exp(-(x^2 + y^2)/4) + m/sqrt(x^2 + y^2 + z^2)";

/// The same formula, written by hand.
#[inline]
pub fn by_hand(t: f64, x: f64, y: f64, z: f64) -> f64 {
    const A: f64 = 1.0e-3;
    const W: f64 = 3.0;
    const M: f64 = 0.01;
    A * (W * (t - (2.0 * x + 2.0 * y + z) / 3.0)).cos() * (-(x * x + y * y) / 4.0).exp()
        + M / (x * x + y * y + z * z).sqrt()
}

/// [`FORMULA`] compiled, with the parameter values of [`by_hand`].
pub fn formula_tape() -> Tape {
    let mut store = Store::new();
    let e = lingrav::parse::parse(FORMULA).expect("parses");
    let f = store.build(&e, &Names::free()).expect("builds");
    let consts = [
        ("a".to_string(), 1.0e-3),
        ("w".to_string(), 3.0),
        ("m".to_string(), 0.01),
    ];
    let mut c = Compiler::new(
        &mut store,
        &["t", "x", "y", "z"],
        &consts,
        &FxHashMap::default(),
    );
    let n = c.form(f).expect("compiles");
    c.builder.finish(&[n])
}

/// `n` pseudo-random points in [0.5, 1.5]^4, one column per coordinate.
pub fn points(n: usize) -> [Vec<f64>; 4] {
    let mut rng = lingrav::zero::SplitMix64::new(0x6a1d_5eed);
    std::array::from_fn(|_| (0..n).map(|_| 0.5 + rng.next_f64()).collect())
}

/// The residual case: an oblique plane wave, both polarizations, along n = (2/3, 2/3, 1/3)
/// (so no coordinate can be factored out), in TT gauge.
pub const WAVE: &str = "
[parameters]
a = 1.0e-3
w = 3.0
[define]
phase = 'w*(t - (2*x + 2*y + z)/3)'
hp = 'a*cos(phase)'
hc = 'a*sin(phase)'
[perturbation]
xx = '-hp/3 + 4*hc/9'
xy = '-5*hc/9'
xz = '2*hp/3 + 2*hc/9'
yy = 'hp/3 + 4*hc/9'
yz = '-2*hp/3 + 2*hc/9'
zz = '-8*hc/9'
";

/// The same wave travelling along n = (3/5, 0, 4/5): its phase does not depend on y, and the
/// tape evaluates what does not depend on y once per row instead of at every point.
pub const WAVE_XZ: &str = "
[parameters]
a = 1.0e-3
w = 3.0
[define]
phase = 'w*(t - (3*x + 4*z)/5)'
hp = 'a*cos(phase)'
hc = 'a*sin(phase)'
[perturbation]
xx = '16/25*hp'
xy = '4/5*hc'
xz = '-12/25*hp'
yy = '-hp'
yz = '-3/5*hc'
zz = '9/25*hp'
";

/// Interior points per side of the residual case, and the stencil order.
pub const SIDE: usize = 64;
pub const ORDER: u32 = 4;
/// Centre and spacing of the residual case (also in grid_numpy.py).
pub const CENTER: [f64; 4] = [0.3, 0.4, 0.5, 0.6];
pub const SPACING: f64 = 1.0 / 64.0;

/// The plan for (box hbar)_mn = 0 over a wave ([`WAVE`] or [`WAVE_XZ`]).
pub fn wave_plan(text: &str) -> GridPlan {
    let mut p = lingrav::problem::from_str("wave.toml", text).expect("the wave reads");
    let h = p.h;
    let params = p.parameters.clone();
    let samples = p.sampling.samples.clone();
    GridPlan::new(
        &mut p.store,
        &h,
        None,
        vec![box_hbar()],
        true,
        &params,
        &samples,
    )
    .expect("compiles")
}

/// The lattice: 5 slabs in t (the stencil's reach), SIDE^3 interior points in space.
pub fn wave_box() -> Box4 {
    let s = (ORDER / 2) as usize;
    Box4 {
        center: CENTER,
        spacing: SPACING,
        counts: [2 * s + 1, SIDE + 2 * s, SIDE + 2 * s, SIDE + 2 * s],
    }
}

/// Samples, derivatives and the max norm of every component of box hbar, in fresh buffers.
pub fn wave_residual(plan: &GridPlan, b: &Box4) -> f64 {
    wave_residual_with(&mut sweep::Buffers::new(), plan, b)
}

/// [`wave_residual`] in sample buffers kept from an earlier call (as the resolutions of one
/// `lingrav grid` run share theirs).
pub fn wave_residual_with(bufs: &mut sweep::Buffers, plan: &GridPlan, b: &Box4) -> f64 {
    let st = Stencil::central(ORDER).expect("order");
    let at = sweep::SweepAt {
        b,
        st: &st,
        mask: false,
        region: None,
    };
    let sw = sweep::sweep_with(bufs, plan, at, &mut |_, _| {}).expect("samples");
    sw.best[0].iter().map(|x| x.0).fold(0.0, f64::max)
}
