//! A process-wide memory budget: a byte counter, a cap, and an "over budget" flag.
//!
//! Model. The `lingrav` binary installs a counting global allocator that calls
//! [`allocated`] and [`freed`] for every allocation; the library only reads the result
//! through [`over_budget`], which long computations poll and turn into "undecided: too large"
//! (the same outcome as a term limit). The allocator never refuses memory because of the cap:
//! an allocation that fails makes Rust abort the process, which is exactly the crash this
//! budget exists to prevent. Passing the cap only raises the flag, so the computation that
//! polls it stops cleanly, with its report.
//!
//! Key design decision: plain atomics, no locks and no allocation, so the functions are safe
//! to call from inside a global allocator (where allocating again would recurse). Without a
//! counting allocator (library users, unit tests) nothing is counted and [`over_budget`] is
//! always false.

use std::sync::atomic::{AtomicBool, AtomicUsize, Ordering};

/// Bytes currently allocated through the counting allocator.
static LIVE: AtomicUsize = AtomicUsize::new(0);
/// The largest value of [`LIVE`] seen so far.
static PEAK: AtomicUsize = AtomicUsize::new(0);
/// The cap in bytes; `usize::MAX` means none.
static CAP: AtomicUsize = AtomicUsize::new(usize::MAX);
/// Set once [`LIVE`] passed [`CAP`]; cleared by [`set_cap`] and [`reset`].
static OVER: AtomicBool = AtomicBool::new(false);

/// Sets the cap in bytes (`usize::MAX`: no cap) and clears the flag if the current use is
/// below the new cap.
pub fn set_cap(bytes: usize) {
    CAP.store(bytes, Ordering::Relaxed);
    OVER.store(LIVE.load(Ordering::Relaxed) > bytes, Ordering::Relaxed);
}

/// The cap in bytes (`usize::MAX` when none is set).
#[must_use]
pub fn cap() -> usize {
    CAP.load(Ordering::Relaxed)
}

/// True once the bytes in use passed the cap: a computation polling this should stop and
/// report "undecided: too large".
#[inline]
#[must_use]
pub fn over_budget() -> bool {
    OVER.load(Ordering::Relaxed)
}

/// Bytes in use now (as counted by the allocator; 0 without a counting allocator).
#[must_use]
pub fn in_use() -> usize {
    LIVE.load(Ordering::Relaxed)
}

/// The largest number of bytes in use so far.
#[must_use]
pub fn peak() -> usize {
    PEAK.load(Ordering::Relaxed)
}

/// Clears the flag (after the computation that passed the cap has released its memory).
pub fn reset() {
    OVER.store(
        LIVE.load(Ordering::Relaxed) > CAP.load(Ordering::Relaxed),
        Ordering::Relaxed,
    );
}

/// Records an allocation of `bytes`. Called by the counting allocator; never allocates.
#[inline]
pub fn allocated(bytes: usize) {
    let now = LIVE.fetch_add(bytes, Ordering::Relaxed).wrapping_add(bytes);
    if now > PEAK.load(Ordering::Relaxed) {
        PEAK.fetch_max(now, Ordering::Relaxed);
    }
    if now > CAP.load(Ordering::Relaxed) && !OVER.load(Ordering::Relaxed) {
        OVER.store(true, Ordering::Relaxed);
    }
}

/// Records that `bytes` were freed. Called by the counting allocator; never allocates.
#[inline]
pub fn freed(bytes: usize) {
    LIVE.fetch_sub(bytes, Ordering::Relaxed);
}

/// A default cap: half the physical memory, at most 4 GiB (4 GiB when the physical memory
/// cannot be read).
#[must_use]
pub fn default_cap() -> usize {
    const FOUR_GIB: usize = 4 << 30;
    physical_memory().map_or(FOUR_GIB, |p| (p / 2).min(FOUR_GIB))
}

/// Physical memory in bytes, where the system says (Linux: `/proc/meminfo`).
#[must_use]
pub fn physical_memory() -> Option<usize> {
    let text = std::fs::read_to_string("/proc/meminfo").ok()?;
    let line = text.lines().find(|l| l.starts_with("MemTotal:"))?;
    let kib: usize = line
        .trim_start_matches("MemTotal:")
        .trim()
        .trim_end_matches("kB")
        .trim()
        .parse()
        .ok()?;
    kib.checked_mul(1024)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_flag_follows_the_counter_and_the_cap() {
        // Unit tests run without the counting allocator, so only these calls count.
        let base = in_use();
        set_cap(base + 1000);
        assert!(!over_budget());
        allocated(600);
        assert!(!over_budget());
        allocated(600);
        assert!(over_budget(), "passing the cap raises the flag");
        assert!(peak() >= base + 1200);
        freed(1200);
        reset();
        assert!(!over_budget(), "reset clears it once use is below the cap");
        set_cap(usize::MAX);
        assert!(default_cap() >= 1 << 20);
    }
}
