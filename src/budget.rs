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

/// A byte counter with a cap and a flag. The process has one, [`GLOBAL`]; the functions of
/// this module act on it.
pub struct Budget {
    /// Bytes currently allocated through the counting allocator.
    live: AtomicUsize,
    /// The largest value of `live` seen so far.
    peak: AtomicUsize,
    /// The cap in bytes; `usize::MAX` means none.
    cap: AtomicUsize,
    /// Set once `live` passed `cap`; cleared by `set_cap` and `reset`.
    over: AtomicBool,
}

impl Budget {
    /// No bytes counted, no cap.
    #[must_use]
    pub const fn new() -> Budget {
        Budget {
            live: AtomicUsize::new(0),
            peak: AtomicUsize::new(0),
            cap: AtomicUsize::new(usize::MAX),
            over: AtomicBool::new(false),
        }
    }

    fn set_cap(&self, bytes: usize) {
        self.cap.store(bytes, Ordering::Relaxed);
        self.over
            .store(self.live.load(Ordering::Relaxed) > bytes, Ordering::Relaxed);
    }

    fn reset(&self) {
        self.over.store(
            self.live.load(Ordering::Relaxed) > self.cap.load(Ordering::Relaxed),
            Ordering::Relaxed,
        );
    }

    #[inline]
    fn allocated(&self, bytes: usize) {
        let now = self
            .live
            .fetch_add(bytes, Ordering::Relaxed)
            .wrapping_add(bytes);
        if now > self.peak.load(Ordering::Relaxed) {
            self.peak.fetch_max(now, Ordering::Relaxed);
        }
        if now > self.cap.load(Ordering::Relaxed) && !self.over.load(Ordering::Relaxed) {
            self.over.store(true, Ordering::Relaxed);
        }
    }

    #[inline]
    fn freed(&self, bytes: usize) {
        self.live.fetch_sub(bytes, Ordering::Relaxed);
    }
}

impl Default for Budget {
    fn default() -> Budget {
        Budget::new()
    }
}

/// The process's budget.
pub static GLOBAL: Budget = Budget::new();

/// Sets the cap in bytes (`usize::MAX`: no cap) and clears the flag if the current use is
/// below the new cap.
pub fn set_cap(bytes: usize) {
    GLOBAL.set_cap(bytes);
}

/// The cap in bytes (`usize::MAX` when none is set).
#[must_use]
pub fn cap() -> usize {
    GLOBAL.cap.load(Ordering::Relaxed)
}

/// True once the bytes in use passed the cap: a computation polling this should stop and
/// report "undecided: too large".
#[inline]
#[must_use]
pub fn over_budget() -> bool {
    GLOBAL.over.load(Ordering::Relaxed)
}

/// Bytes in use now (as counted by the allocator; 0 without a counting allocator).
#[must_use]
pub fn in_use() -> usize {
    GLOBAL.live.load(Ordering::Relaxed)
}

/// The largest number of bytes in use so far.
#[must_use]
pub fn peak() -> usize {
    GLOBAL.peak.load(Ordering::Relaxed)
}

/// Clears the flag (after the computation that passed the cap has released its memory).
pub fn reset() {
    GLOBAL.reset();
}

/// Records an allocation of `bytes`. Called by the counting allocator; never allocates.
#[inline]
pub fn allocated(bytes: usize) {
    GLOBAL.allocated(bytes);
}

/// Records that `bytes` were freed. Called by the counting allocator; never allocates.
#[inline]
pub fn freed(bytes: usize) {
    GLOBAL.freed(bytes);
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
        // A budget of its own: the global one may be polled by tests running beside this.
        let b = Budget::new();
        b.set_cap(1000);
        b.allocated(600);
        assert!(!b.over.load(Ordering::Relaxed));
        b.allocated(600);
        assert!(
            b.over.load(Ordering::Relaxed),
            "passing the cap raises the flag"
        );
        assert_eq!(b.peak.load(Ordering::Relaxed), 1200);
        b.freed(1200);
        assert!(
            b.over.load(Ordering::Relaxed),
            "the flag stays up until reset"
        );
        b.reset();
        assert!(
            !b.over.load(Ordering::Relaxed),
            "reset clears it once use is below the cap"
        );
        b.set_cap(0);
        b.allocated(1);
        b.set_cap(10);
        assert!(
            !b.over.load(Ordering::Relaxed),
            "a new cap above the use clears it"
        );
        assert!(default_cap() >= 1 << 20);
        assert!(!over_budget(), "unit tests count nothing globally");
    }
}
