//! A one-line progress display for long runs (the grid's sampling).

use crate::grid::Progress;
use std::io::{IsTerminal, Write as _};
use std::time::{Duration, Instant};

/// A one-line progress display on standard error, only when it is a terminal, and only once
/// a run has taken a moment.
pub struct ProgressLine {
    enabled: bool,
    start: Instant,
    last: Option<Instant>,
}

impl ProgressLine {
    pub fn new() -> ProgressLine {
        ProgressLine {
            enabled: std::io::stderr().is_terminal(),
            start: Instant::now(),
            last: None,
        }
    }

    pub fn update(&mut self, p: Progress) {
        if !self.enabled || self.start.elapsed() < Duration::from_millis(400) {
            return;
        }
        let now = Instant::now();
        if self
            .last
            .is_some_and(|l| now - l < Duration::from_millis(100))
        {
            return;
        }
        self.last = Some(now);
        let frac = p.work.0 as f64 / p.work.1.max(1) as f64;
        let width = 24;
        let filled = ((frac * width as f64).round() as usize).min(width);
        let bar: String = "#".repeat(filled) + &".".repeat(width - filled);
        let mut e = std::io::stderr().lock();
        let _ = write!(
            e,
            "\r  grid {}/{}: {}^4 points, slab {:>3}/{:<3} [{bar}] {:>3.0}%",
            p.level + 1,
            p.levels,
            p.points,
            p.slab,
            p.slabs,
            frac * 100.0
        );
        let _ = e.flush();
    }

    pub fn finish(&mut self) {
        if self.last.is_some() {
            let mut e = std::io::stderr().lock();
            let _ = write!(e, "\r{:78}\r", "");
            let _ = e.flush();
        }
    }
}
