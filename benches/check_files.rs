//! In-process time of `check` on the problem files named on the command line, for the peer
//! comparison of `benches/engine_ratios.sh` (the peers are timed in-process too, their
//! interpreter start and imports excluded; this excludes lingrav's process start, about 1 ms).
//!
//! What is timed is what `lingrav check FILE` computes: reading and building the problem,
//! checking every claim (those about h and those about the radiation of bodies) and the
//! independent audit of every verdict (`lingrav::check_file`, as the command calls it); not
//! the rendering of the report (microseconds for most files, but a large failing residual's
//! display, built in the file's terms with its sines and cosines regrouped, can take as long
//! as its check: see the whole-process column of `benches/engine_ratios.sh`). One untimed
//! warm-up run, then runs until `REPEAT` (default 3) samples are collected and, with
//! `MIN_SECONDS` set, until the samples add up to that many seconds (at most 1000 samples;
//! the peer's `--min-seconds` does the same), within 10 s; prints `FILE median_seconds samples` per file, or
//! `FILE error MESSAGE` when the file does not load.
//!
//! Usage: cargo bench --bench check_files -- FILE...

use std::time::Instant;

// The binary's allocator, so that the time is the time `lingrav check` spends.
#[global_allocator]
static ALLOCATOR: lingrav::budget::Counting = lingrav::budget::Counting;

fn main() {
    let repeat: usize = std::env::var("REPEAT")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(3)
        .max(1);
    let min_seconds: f64 = std::env::var("MIN_SECONDS")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(0.0);
    // cargo bench passes `--bench`; every other argument is a file.
    let files: Vec<String> = std::env::args()
        .skip(1)
        .filter(|a| !a.starts_with("--"))
        .collect();
    for file in files {
        let run = || -> Result<usize, String> {
            let parsed = lingrav::problem::read_file(std::path::Path::new(&file))
                .map_err(|e| e.to_string().replace('\n', " "))?;
            let (_problem, report) =
                lingrav::check_file(&parsed, lingrav::canon::Limits::default())
                    .map_err(|e| e.to_string().replace('\n', " "))?;
            let report = report.map_err(|e| e.to_string())?;
            Ok(report.claims.len())
        };
        if let Err(e) = run() {
            println!("{file} error {e}");
            continue;
        }
        let mut times: Vec<f64> = Vec::new();
        let budget = Instant::now();
        let more = |times: &[f64]| {
            let wall = budget.elapsed().as_secs_f64();
            times.is_empty()
                || (times.len() < repeat && wall < 10.0)
                || (times.iter().sum::<f64>() < min_seconds && times.len() < 1000 && wall < 10.0)
        };
        while more(&times) {
            let start = Instant::now();
            let n = run().unwrap_or(0);
            times.push(start.elapsed().as_secs_f64());
            std::hint::black_box(n);
        }
        times.sort_by(f64::total_cmp);
        println!("{file} {:.6} {}", times[times.len() / 2], times.len());
    }
}
