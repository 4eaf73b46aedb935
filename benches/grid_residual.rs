//! Plain timings for `benches/grid_ratio.sh`: the tape against a hand-written closure, and
//! the box-hbar residual of the NumPy comparison. Prints `key value` lines.
//!
//! Run with `cargo bench --bench grid_residual` (set RAYON_NUM_THREADS=1 for one core).

mod grid_common;

use grid_common::*;
use lingrav::tape::Batch;
use std::time::Instant;

/// Best wall time of `reps` runs of `f`, in seconds.
fn best(reps: usize, mut f: impl FnMut() -> f64) -> (f64, f64) {
    let mut t = f64::INFINITY;
    let mut v = 0.0;
    for _ in 0..reps {
        let s = Instant::now();
        v = std::hint::black_box(f());
        t = t.min(s.elapsed().as_secs_f64());
    }
    (t, v)
}

// The binary's allocator, so that the time is the time `lingrav` spends.
#[global_allocator]
static ALLOCATOR: lingrav::budget::Counting = lingrav::budget::Counting;

fn main() {
    // (1) The tape against the closure, the same points, the same formula.
    const N: usize = 1 << 16;
    let tape = formula_tape();
    let pts = points(N);
    let cols: Vec<&[f64]> = pts.iter().map(Vec::as_slice).collect();
    let mut out = vec![0.0; N];
    let mut batch = Batch::new(&tape);
    let (t_tape, v_tape) = best(30, || {
        batch.eval(&cols, &mut out);
        out.iter().sum()
    });
    let mut out2 = vec![0.0; N];
    let (t_hand, v_hand) = best(30, || {
        for (i, o) in out2.iter_mut().enumerate() {
            *o = by_hand(pts[0][i], pts[1][i], pts[2][i], pts[3][i]);
        }
        out2.iter().sum()
    });
    let worst = out
        .iter()
        .zip(&out2)
        .map(|(a, b)| (a - b).abs() / b.abs().max(1e-300))
        .fold(0.0, f64::max);
    println!("tape_instructions {}", tape.len());
    println!("tape_ns_per_point {:.3}", t_tape / N as f64 * 1e9);
    println!("closure_ns_per_point {:.3}", t_hand / N as f64 * 1e9);
    println!("tape_over_closure {:.3}", t_tape / t_hand);
    println!("tape_closure_max_rel_diff {worst:.1e} (sums {v_tape:.6e} {v_hand:.6e})");

    // (2) The residual: sampling, fourth-order second derivatives, box hbar, max norm.
    let threads = std::env::var("RAYON_NUM_THREADS").unwrap_or_else(|_| {
        std::thread::available_parallelism()
            .map_or(1, |n| n.get())
            .to_string()
    });
    println!("threads {threads}");
    let b = wave_box();
    println!("grid {:?} interior {}^3", b.counts, SIDE);
    for (case, text) in [("oblique", WAVE), ("xz", WAVE_XZ)] {
        let s = Instant::now();
        let plan = wave_plan(text);
        println!("{case}_plan_seconds {:.4}", s.elapsed().as_secs_f64());
        // Fresh buffers every time (allocation and first touch of the pages included), and
        // buffers kept between repetitions (the steady state; NumPy's allocator, too, keeps
        // much of its memory between its repetitions).
        let (t_fresh, r) = best(5, || wave_residual(&plan, &b));
        let mut bufs = lingrav::grid::Buffers::new();
        let (t_res, r2) = best(5, || wave_residual_with(&mut bufs, &plan, &b));
        assert_eq!(r.to_bits(), r2.to_bits(), "kept buffers change nothing");
        println!("{case}_residual_seconds {t_res:.4}");
        println!("{case}_residual_fresh_seconds {t_fresh:.4}");
        println!("{case}_residual_max {r:.6e}");
    }
}
