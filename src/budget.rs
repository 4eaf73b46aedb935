//! A process-wide memory budget: a byte counter, a cap, and an "over budget" flag.
//!
//! Model. The `lingrav` binary installs [`Counting`] as its global allocator: mimalloc (a
//! compact, fast allocator for many small, short-lived blocks, which is what canonical forms
//! allocate; about 1.3x faster than the system allocator on small checks, `cargo bench
//! --bench check_files`), calling [`allocated`] and [`freed`] for every allocation; the
//! library only reads the result through [`over_budget`], which long computations poll and turn into "undecided: too large"
//! (the same outcome as a term limit). The allocator never refuses memory because of the cap:
//! an allocation that fails makes Rust abort the process, which is exactly the crash this
//! budget exists to prevent. Passing the cap only raises the flag, so the computation that
//! polls it stops cleanly, with its report.
//!
//! Key design decision: plain atomics, no locks and no allocation, so the functions are safe
//! to call from inside a global allocator (where allocating again would recurse). Without a
//! counting allocator (library users, unit tests) nothing is counted and [`over_budget`] is
//! always false.

use std::alloc::{GlobalAlloc, Layout};
use std::cell::Cell;
use std::sync::atomic::{AtomicBool, AtomicIsize, Ordering};

/// The global allocator of the `lingrav` binary and of the benchmarks that time it: mimalloc,
/// counting bytes in [`GLOBAL`]. Install it with
/// `#[global_allocator] static A: lingrav::budget::Counting = lingrav::budget::Counting;`.
pub struct Counting;

// SAFETY: every call is forwarded to mimalloc unchanged; the counting only touches atomics
// and never allocates.
unsafe impl GlobalAlloc for Counting {
    unsafe fn alloc(&self, layout: Layout) -> *mut u8 {
        // SAFETY: forwarded with the caller's guarantees.
        let p = unsafe { mimalloc::MiMalloc.alloc(layout) };
        if !p.is_null() {
            allocated(layout.size());
        }
        p
    }

    unsafe fn alloc_zeroed(&self, layout: Layout) -> *mut u8 {
        // SAFETY: forwarded with the caller's guarantees.
        let p = unsafe { mimalloc::MiMalloc.alloc_zeroed(layout) };
        if !p.is_null() {
            allocated(layout.size());
        }
        p
    }

    unsafe fn dealloc(&self, ptr: *mut u8, layout: Layout) {
        // SAFETY: forwarded with the caller's guarantees.
        unsafe { mimalloc::MiMalloc.dealloc(ptr, layout) };
        freed(layout.size());
    }

    unsafe fn realloc(&self, ptr: *mut u8, layout: Layout, new_size: usize) -> *mut u8 {
        // SAFETY: forwarded with the caller's guarantees.
        let p = unsafe { mimalloc::MiMalloc.realloc(ptr, layout, new_size) };
        if !p.is_null() {
            if new_size >= layout.size() {
                allocated(new_size - layout.size());
            } else {
                freed(layout.size() - new_size);
            }
        }
        p
    }
}

/// A byte counter with a cap and a flag. The process has one, [`GLOBAL`]; the functions of
/// this module act on it.
pub struct Budget {
    /// Bytes currently allocated through the counting allocator. Signed: with per-thread
    /// batching (see [`allocated`]) one thread's frees may reach the counter before another
    /// thread's allocations of the same bytes, so it may dip below zero for a moment.
    live: AtomicIsize,
    /// The largest value of `live` seen so far.
    peak: AtomicIsize,
    /// The cap in bytes; `isize::MAX` means none.
    cap: AtomicIsize,
    /// Set once `live` passed `cap`; cleared by `set_cap` and `reset`.
    over: AtomicBool,
}

impl Budget {
    /// No bytes counted, no cap.
    #[must_use]
    pub const fn new() -> Budget {
        Budget {
            live: AtomicIsize::new(0),
            peak: AtomicIsize::new(0),
            cap: AtomicIsize::new(isize::MAX),
            over: AtomicBool::new(false),
        }
    }

    fn set_cap(&self, bytes: usize) {
        let bytes = isize::try_from(bytes).unwrap_or(isize::MAX);
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

    /// Adds `delta` bytes (negative: freed) to the counter, raising the flag and the peak.
    #[inline]
    fn add(&self, delta: isize) {
        let now = self
            .live
            .fetch_add(delta, Ordering::Relaxed)
            .wrapping_add(delta);
        if delta > 0 {
            if now > self.peak.load(Ordering::Relaxed) {
                self.peak.fetch_max(now, Ordering::Relaxed);
            }
            if now > self.cap.load(Ordering::Relaxed) && !self.over.load(Ordering::Relaxed) {
                self.over.store(true, Ordering::Relaxed);
            }
        }
    }
}

// mimalloc's C interface for its options (the library is linked through the `mimalloc` crate).
unsafe extern "C" {
    fn mi_option_set(option: std::ffi::c_int, value: std::ffi::c_long);
    #[cfg(test)]
    fn mi_option_get(option: std::ffi::c_int) -> std::ffi::c_long;
}

/// `mi_option_purge_delay` in the mimalloc version the `mimalloc` crate builds (v3: the 16th
/// entry of `mi_option_t`); a test checks its default, 1000 ms (`src/options.c`).
const MI_OPTION_PURGE_DELAY: std::ffi::c_int = 15;

/// Tells mimalloc to return freed memory to the system at once rather than after a second,
/// and keeps the process off transparent huge pages. Called by [`crate::command_line`]
/// before any work.
///
/// - Purge delay 0: with the delay the peak resident memory of the largest benchmark case
///   was 45% above the system allocator's (263 MB against 182 MB), without it about the
///   same (186 MB), at no measurable cost in time.
/// - No transparent huge pages: mimalloc asked for them on its arenas (`madvise`, now
///   compiled out with the `mimalloc` crate's `no_thp` feature), so the kernel zeroed 2 MiB
///   at every first touch of an arena region, and again after each prompt purge; on the
///   radiation file with the momentum flux that zeroing was a quarter of the time. Without
///   them peak memory falls by 10% to 45% (recoil_binary 34 to 19 MB, the degree-16 pure
///   gauge 65 to 43 MB, the degree-24 one 186 to 166 MB) and system time by half (measured
///   2026-12-03). On a system whose huge pages are on for every mapping ("always"), the
///   process flag set here keeps them off too (Linux `prctl(2)`, PR_SET_THP_DISABLE).
pub fn release_memory_promptly() {
    // SAFETY: a plain setter of an integer option, valid at any time.
    unsafe { mi_option_set(MI_OPTION_PURGE_DELAY, 0) };
    #[cfg(target_os = "linux")]
    // SAFETY: prctl with PR_SET_THP_DISABLE takes plain integers and touches no memory of
    // ours; failure (an old kernel) only leaves huge pages allowed.
    unsafe {
        libc::prctl(libc::PR_SET_THP_DISABLE, 1, 0, 0, 0);
    }
}

/// Bytes a thread counts locally before it adds them to [`GLOBAL`]: one shared atomic
/// updated on every allocation by two busy threads bounced its cache line between the cores
/// and made counting cost more than allocating. The counter is therefore exact up to this
/// many bytes per running thread.
const BATCH: isize = 64 * 1024;

/// A thread's bytes not yet added to [`GLOBAL`]; added when the thread ends.
struct Pending(Cell<isize>);

impl Drop for Pending {
    fn drop(&mut self) {
        GLOBAL.add(self.0.replace(0));
    }
}

// Registering `Pending`'s destructor must not allocate through this allocator (it would
// re-enter `count` while the local is being set up): on glibc Rust registers it with
// `__cxa_thread_atexit_impl`, which allocates with the C library's own malloc.
thread_local! {
    static PENDING: Pending = const { Pending(Cell::new(0)) };
}

/// Adds `delta` to this thread's pending bytes and passes them on once they reach
/// [`BATCH`] either way; straight to [`GLOBAL`] while the thread's local is gone (at exit).
#[inline]
fn count(delta: isize) {
    let counted = PENDING.try_with(|p| {
        let v = p.0.get().wrapping_add(delta);
        if v >= BATCH || v <= -BATCH {
            p.0.set(0);
            GLOBAL.add(v);
        } else {
            p.0.set(v);
        }
    });
    if counted.is_err() {
        GLOBAL.add(delta);
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
    match GLOBAL.cap.load(Ordering::Relaxed) {
        isize::MAX => usize::MAX,
        c => usize::try_from(c).unwrap_or(0),
    }
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
    usize::try_from(GLOBAL.live.load(Ordering::Relaxed)).unwrap_or(0)
}

/// The largest number of bytes in use so far.
#[must_use]
pub fn peak() -> usize {
    usize::try_from(GLOBAL.peak.load(Ordering::Relaxed)).unwrap_or(0)
}

/// Clears the flag (after the computation that passed the cap has released its memory).
pub fn reset() {
    GLOBAL.reset();
}

/// Records an allocation of `bytes`. Called by the counting allocator; never allocates.
#[inline]
pub fn allocated(bytes: usize) {
    count(isize::try_from(bytes).unwrap_or(isize::MAX));
}

/// Records that `bytes` were freed. Called by the counting allocator; never allocates.
#[inline]
pub fn freed(bytes: usize) {
    count(isize::try_from(bytes).map_or(isize::MIN + 1, |b| -b));
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
        b.add(600);
        assert!(!b.over.load(Ordering::Relaxed));
        b.add(600);
        assert!(
            b.over.load(Ordering::Relaxed),
            "passing the cap raises the flag"
        );
        assert_eq!(b.peak.load(Ordering::Relaxed), 1200);
        b.add(-1200);
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
        b.add(1);
        b.set_cap(10);
        assert!(
            !b.over.load(Ordering::Relaxed),
            "a new cap above the use clears it"
        );
        assert!(default_cap() >= 1 << 20);
        assert!(!over_budget(), "unit tests count nothing globally");
    }

    #[test]
    fn the_options_set_are_the_ones_meant() {
        // SAFETY: a plain getter of an integer option.
        let default = unsafe { mi_option_get(MI_OPTION_PURGE_DELAY) };
        assert_eq!(default, 1000, "mimalloc's purge delay defaults to 1000 ms");
        release_memory_promptly();
        // SAFETY: as above.
        assert_eq!(unsafe { mi_option_get(MI_OPTION_PURGE_DELAY) }, 0);
        #[cfg(target_os = "linux")]
        // SAFETY: a getter of the process flag.
        assert_eq!(
            unsafe { libc::prctl(libc::PR_GET_THP_DISABLE, 0, 0, 0, 0) },
            1
        );
        // SAFETY: as above; back to the default for the other tests of this process.
        unsafe { mi_option_set(MI_OPTION_PURGE_DELAY, 1000) };
    }

    #[test]
    fn a_thread_passes_its_bytes_on_in_batches_and_when_it_ends() {
        // Unit tests install no counting allocator, so only this test moves GLOBAL's counter.
        let before = GLOBAL.live.load(Ordering::Relaxed);
        std::thread::spawn(|| {
            let start = GLOBAL.live.load(Ordering::Relaxed);
            count(1000);
            count(24);
            assert_eq!(
                GLOBAL.live.load(Ordering::Relaxed),
                start,
                "small amounts wait in the thread's batch"
            );
            count(BATCH);
            assert_eq!(
                GLOBAL.live.load(Ordering::Relaxed),
                start + BATCH + 1024,
                "a full batch reaches the counter with what waited"
            );
            count(-300);
        })
        .join()
        .unwrap();
        assert_eq!(
            GLOBAL.live.load(Ordering::Relaxed),
            before + BATCH + 724,
            "what waited is passed on when the thread ends"
        );
    }
}
