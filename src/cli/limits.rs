//! Limits shared by every command that does algebra: time, terms, memory.
//!
//! One clap struct, flattened into each command, so the options read the same everywhere.
//! The limits are put into the `Store` before the problem file is built (building a file is
//! algebra too), and every limit reached ends the same way, through `out::gave_up`:
//! "undecided: too large" or "undecided: too slow", exit 3.
//!
//! Memory: the binary's counting allocator raises `crate::budget`'s flag when the process
//! passes `--max-memory`. Computations that poll the flag stop with "too large"; a watchdog
//! thread ends the process the same way (message on standard output, temporaries removed,
//! exit 3) if the flag stays up for a second, or at once when use passes one and a half
//! times the cap. Nothing here calls `setrlimit` or refuses an allocation, so reaching the
//! cap never aborts the process.

use super::out::{Failure, gave_up};
use crate::canon::{CanonError, Limits, Store};
use crate::problem::Problem;
use clap::Args;
use std::path::Path;
use std::sync::Once;
use std::time::{Duration, Instant};

/// `--time-limit`, `--max-terms` and `--max-memory`; `DEFAULT_MS` is the command's default
/// time limit.
#[derive(Args, Debug, Clone)]
pub struct LimitArgs<const DEFAULT_MS: u64 = 60_000> {
    /// Give up (undecided: too slow, exit 3) after this many milliseconds of algebra
    /// [default: 20000 for zero, simplify and diff, 60000 for the other commands].
    // No clap default: a derived default is cached once for every `DEFAULT_MS`.
    #[arg(long, value_name = "MS")]
    time_limit: Option<u64>,
    /// Give up (undecided: too large, exit 3) when an intermediate result has more terms.
    #[arg(long, default_value_t = 200_000, value_name = "N")]
    max_terms: usize,
    /// Give up (undecided: too large, exit 3) when the process uses more memory than this,
    /// in MiB [default: half the physical memory, at most 4096].
    #[arg(long, value_name = "MB", value_parser = clap::value_parser!(u64).range(1..))]
    max_memory: Option<u64>,
}

impl<const DEFAULT_MS: u64> LimitArgs<DEFAULT_MS> {
    /// The limits, with the deadline counted from now; also sets the memory cap and starts
    /// the watchdog.
    pub fn start(&self) -> Limits {
        let cap = self
            .max_memory
            .map_or_else(crate::budget::default_cap, |mb| {
                usize::try_from(mb.saturating_mul(1 << 20)).unwrap_or(usize::MAX)
            });
        crate::budget::set_cap(cap);
        start_watchdog();
        let ms = self.time_limit();
        Limits {
            max_terms: self.max_terms,
            deadline: Some((Instant::now() + Duration::from_millis(ms), ms)),
        }
    }

    /// A store with the limits in force.
    pub fn store(&self) -> Store {
        let mut s = Store::new();
        s.limits = self.start();
        s
    }

    /// Reads and builds a problem file under the limits: a limit reached while building is
    /// "undecided", not bad input.
    pub fn load(&self, path: &Path) -> Result<Problem, Failure> {
        let limits = self.start();
        load_with(path, limits)
    }

    /// The time limit in milliseconds.
    pub fn time_limit(&self) -> u64 {
        self.time_limit.unwrap_or(DEFAULT_MS)
    }
}

/// Reads and builds a problem file under `limits` (for a second file under the same clock).
pub fn load_with(path: &Path, limits: Limits) -> Result<Problem, Failure> {
    crate::problem::read_with(path, limits).map_err(load_failure)
}

/// How a problem file that does not load ends: a limit reached while building is
/// "undecided", anything else bad input.
pub fn load_failure(e: crate::problem::ProblemError) -> Failure {
    match e.limit.clone() {
        Some(l) => gave_up(&l),
        None => Failure::Input(miette::Report::new(e)),
    }
}

/// The problem's background as a spacetime (Minkowski without one): a degenerate metric is
/// bad input naming the file, a limit is undecided.
pub fn spacetime(p: &mut Problem) -> Result<crate::tensor::curved::Background, Failure> {
    p.spacetime().map_err(|e| match e {
        CanonError::DivisionByZero => Failure::Input(miette::miette!(
            help = "the background metric must be invertible where the fields are meant to hold",
            "{}: the background metric is degenerate (its determinant is 0)",
            p.path
        )),
        e => gave_up(&e),
    })
}

/// Reads the problem file at `path` and builds it into `store`, another problem's (see
/// [`crate::problem::ProblemFile::build_into`]), under that store's limits; errors as
/// [`load_with`].
pub fn load_into(path: &Path, store: &mut crate::canon::Store) -> Result<Problem, Failure> {
    crate::problem::read_file(path)
        .and_then(|f| f.build_into(store))
        .map_err(load_failure)
}

/// The limit in force when the deadline has passed, for results that carry no `CanonError`.
pub fn timeout_if_past(limits: &Limits) -> Option<CanonError> {
    match limits.deadline {
        Some((t, ms)) if Instant::now() >= t => Some(CanonError::Timeout(ms)),
        _ => None,
    }
}

/// Ends the process from the main thread as a limit reached, `why` the reason after
/// `undecided: ` (text or JSON, as asked: `out::limit_report`), the temporaries removed,
/// exit 3. For work that cannot return early (grid sampling); the caller must not have
/// printed a partial report.
pub fn stop_now(why: &str) -> ! {
    use std::io::Write as _;
    crate::output::remove_temporaries();
    let mut out = std::io::stdout().lock();
    let _ = write!(out, "{}", super::out::limit_report(why));
    let _ = out.flush();
    std::process::exit(3);
}

/// Set once a command starts printing its report: the watchdog then stands down.
static DISARMED: std::sync::atomic::AtomicBool = std::sync::atomic::AtomicBool::new(false);

/// Stops the memory watchdog: the command has finished computing and is reporting (a limit
/// it reached is part of that report).
pub fn disarm_watchdog() {
    DISARMED.store(true, std::sync::atomic::Ordering::SeqCst);
}

/// How often the watchdog looks at the memory flag.
const POLL: Duration = Duration::from_millis(20);
/// How long the flag may stay up before the watchdog ends the process.
const GRACE: Duration = Duration::from_secs(1);

fn start_watchdog() {
    // Armed again for each computation (`check` of several files computes after reporting).
    DISARMED.store(false, std::sync::atomic::Ordering::SeqCst);
    static ONCE: Once = Once::new();
    ONCE.call_once(|| {
        let spawned = std::thread::Builder::new()
            .name("memory watchdog".into())
            .stack_size(64 * 1024)
            .spawn(|| {
                let mut since: Option<Instant> = None;
                loop {
                    std::thread::sleep(POLL);
                    if DISARMED.load(std::sync::atomic::Ordering::SeqCst) {
                        since = None;
                        continue;
                    }
                    if !crate::budget::over_budget() {
                        since = None;
                        continue;
                    }
                    let cap = crate::budget::cap();
                    let first = *since.get_or_insert_with(Instant::now);
                    let hard = crate::budget::in_use() > cap.saturating_add(cap / 2);
                    if hard || first.elapsed() >= GRACE {
                        stop_over_budget(cap);
                    }
                }
            });
        // Without the thread the cap is only polled; nothing else changes.
        drop(spawned);
    });
}

/// Ends the process as "undecided: too large" without allocating, locking or unwinding (as
/// a one-line JSON object with `result` and `limit` when a JSON report was asked for).
fn stop_over_budget(cap: usize) -> ! {
    let json = super::out::json_report();
    let mut msg = [0u8; 160];
    let mut n = 0;
    let mut push = |bytes: &[u8]| {
        for &b in bytes {
            if n < msg.len() {
                msg[n] = b;
                n += 1;
            }
        }
    };
    push(if json {
        b"{\"result\": \"undecided\", \"limit\": \"too large: memory use passed the cap of "
    } else {
        b"undecided: too large: memory use passed the cap of "
    });
    let mut digits = [0u8; 20];
    let mut d = 0;
    let mut mb = cap >> 20;
    loop {
        digits[d] = b'0' + (mb % 10) as u8;
        d += 1;
        mb /= 10;
        if mb == 0 {
            break;
        }
    }
    digits[..d].reverse();
    push(&digits[..d]);
    push(b" MiB (--max-memory raises it)");
    push(if json { b"\"}\n" } else { b"\n" });
    crate::output::remove_temporaries();
    #[cfg(unix)]
    // SAFETY: write and _exit only; the buffer is valid for `n` bytes.
    unsafe {
        libc::write(1, msg.as_ptr().cast(), n);
        libc::_exit(3);
    }
    #[cfg(not(unix))]
    {
        use std::io::Write as _;
        let _ = std::io::stdout().write_all(&msg[..n]);
        std::process::exit(3);
    }
}
