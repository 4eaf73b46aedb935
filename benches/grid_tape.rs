//! Tape evaluation against a hand-written closure for the same formula, and the residual
//! computation of the NumPy comparison (`benches/grid_ratio.sh` prints the ratios).
//!
//! Run with `cargo bench --bench grid_tape`.

mod grid_common;

use grid_common::*;
use lingrav::tape::Batch;

// The binary's allocator, so that the time is the time `lingrav` spends.
#[global_allocator]
static ALLOCATOR: lingrav::budget::Counting = lingrav::budget::Counting;

fn main() {
    divan::main();
}

const N: usize = 1 << 14;

#[divan::bench]
fn tape_batch(bencher: divan::Bencher) {
    let tape = formula_tape();
    let pts = points(N);
    let cols: Vec<&[f64]> = pts.iter().map(Vec::as_slice).collect();
    let mut out = vec![0.0; N];
    let mut batch = Batch::new(&tape);
    bencher
        .counter(divan::counter::ItemsCount::new(N))
        .bench_local(|| {
            batch.eval(&cols, &mut out);
            divan::black_box(out[N - 1])
        });
}

#[divan::bench]
fn closure(bencher: divan::Bencher) {
    let pts = points(N);
    let mut out = vec![0.0; N];
    bencher
        .counter(divan::counter::ItemsCount::new(N))
        .bench_local(|| {
            for (i, o) in out.iter_mut().enumerate() {
                *o = by_hand(pts[0][i], pts[1][i], pts[2][i], pts[3][i]);
            }
            divan::black_box(out[N - 1])
        });
}

#[divan::bench(sample_count = 10)]
fn box_hbar_residual_64_cubed(bencher: divan::Bencher) {
    let plan = wave_plan(WAVE);
    let b = wave_box();
    bencher.bench_local(|| divan::black_box(wave_residual(&plan, &b)));
}
