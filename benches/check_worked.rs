//! Times `check` on every worked example: the whole library path a user pays for, reading and
//! building the problem file (`problem::read`) and then checking every claim (`check::check`).
//!
//! One benchmark per file in `worked/`, found at run time so a new example is timed without
//! editing this file. The sample count is small because a single check of the larger files
//! (the quadrupole fields) takes tens of milliseconds; the comparison with SymPy is
//! `benches/ratios.sh`. `audit_only` times the independent audit of the same verdicts.

use std::path::{Path, PathBuf};

// The binary's allocator, so that the time is the time `lingrav` spends.
#[global_allocator]
static ALLOCATOR: lingrav::budget::Counting = lingrav::budget::Counting;

fn main() {
    divan::main();
}

fn worked_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("worked")
}

/// The file names of `worked/*.toml`, sorted so the report order is stable.
fn worked_files() -> Vec<String> {
    let mut names: Vec<String> = std::fs::read_dir(worked_dir())
        .expect("worked/ is readable")
        .filter_map(|entry| {
            let name = entry.ok()?.file_name().into_string().ok()?;
            name.ends_with(".toml").then_some(name)
        })
        .collect();
    names.sort();
    names
}

#[divan::bench(args = worked_files(), sample_count = 10, sample_size = 1)]
fn check(bencher: divan::Bencher, file: &str) {
    let path = worked_dir().join(file);
    bencher.bench(|| {
        let mut problem = lingrav::problem::read(&path).expect("worked files are valid");
        lingrav::check::check(&mut problem)
    });
}

/// The audit alone (the independent route re-evaluating every verdict of an already computed
/// report), to compare with `check` above: the audit must cost well under the check.
#[divan::bench(args = worked_files(), sample_count = 10, sample_size = 1)]
fn audit_only(bencher: divan::Bencher, file: &str) {
    let path = worked_dir().join(file);
    let mut problem = lingrav::problem::read(&path).expect("worked files are valid");
    let report = lingrav::check::check(&mut problem);
    bencher.bench_local(|| {
        let mut claims = report.claims.clone();
        lingrav::check::audit::audit_claims(&problem, &mut claims, 7);
        claims
    });
}
