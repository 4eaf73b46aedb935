//! The `lingrav` command: thin wrapper over the library.
//!
//! Every command first builds a plan (parse and resolve all input), reporting any input error
//! with its location before computing anything; then it computes, prints, and maps the result
//! to an exit code: 0 every claim holds, 1 one fails, 2 bad input or I/O error, 3 undecided.
//!
//! The binary counts its memory: a global allocator wrapping the system's records every
//! allocation in [`lingrav::budget`]. It never refuses memory (a refused allocation aborts a
//! Rust process); passing the cap raises a flag that computations poll, and a watchdog ends
//! the process as "undecided: too large" (exit 3) if the flag stays up (see `cli::limits`).

mod cli;

use std::alloc::{GlobalAlloc, Layout, System};
use std::process::ExitCode;

/// The system allocator, counting bytes in [`lingrav::budget`].
struct Counting;

// SAFETY: every call is forwarded to `System` unchanged; the counting only touches atomics.
unsafe impl GlobalAlloc for Counting {
    unsafe fn alloc(&self, layout: Layout) -> *mut u8 {
        // SAFETY: forwarded with the caller's guarantees.
        let p = unsafe { System.alloc(layout) };
        if !p.is_null() {
            lingrav::budget::allocated(layout.size());
        }
        p
    }

    unsafe fn alloc_zeroed(&self, layout: Layout) -> *mut u8 {
        // SAFETY: forwarded with the caller's guarantees.
        let p = unsafe { System.alloc_zeroed(layout) };
        if !p.is_null() {
            lingrav::budget::allocated(layout.size());
        }
        p
    }

    unsafe fn dealloc(&self, ptr: *mut u8, layout: Layout) {
        // SAFETY: forwarded with the caller's guarantees.
        unsafe { System.dealloc(ptr, layout) };
        lingrav::budget::freed(layout.size());
    }

    unsafe fn realloc(&self, ptr: *mut u8, layout: Layout, new_size: usize) -> *mut u8 {
        // SAFETY: forwarded with the caller's guarantees.
        let p = unsafe { System.realloc(ptr, layout, new_size) };
        if !p.is_null() {
            if new_size >= layout.size() {
                lingrav::budget::allocated(new_size - layout.size());
            } else {
                lingrav::budget::freed(layout.size() - new_size);
            }
        }
        p
    }
}

#[global_allocator]
static ALLOCATOR: Counting = Counting;

fn main() -> ExitCode {
    lingrav::output::install_signal_cleanup();
    cli::run()
}
