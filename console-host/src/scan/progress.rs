//! The progress bar of `mwctl scan` on stderr: points done of the total, the rate and
//! the time left. Shown only when stderr is a terminal or with `--progress`; quiet
//! otherwise, so that logs and pipes get no control characters.

use std::io::Write;
use std::time::Instant;

/// Width of the bar, characters.
const BAR: usize = 30;

/// A progress display.
pub struct Progress {
    shown: bool,
    total: u32,
    start: Instant,
    /// Points done when this run started (a resumed scan starts part-way).
    base: u32,
    last_drawn: Option<Instant>,
}

impl Progress {
    /// A display for `total` points of which `base` are already done; drawn when `shown`.
    pub fn new(shown: bool, total: u32, base: u32) -> Progress {
        Progress {
            shown,
            total,
            start: Instant::now(),
            base,
            last_drawn: None,
        }
    }

    /// The line for `done` points after `elapsed_s` seconds of this run.
    pub fn line(&self, done: u32, elapsed_s: f64) -> String {
        let total = self.total.max(1);
        let filled = (done.min(total) as usize * BAR) / total as usize;
        let run = done.saturating_sub(self.base);
        let rate = if elapsed_s > 0.0 {
            f64::from(run) / elapsed_s
        } else {
            0.0
        };
        let left = self.total.saturating_sub(done);
        let eta = if rate > 0.0 {
            clock(f64::from(left) / rate)
        } else {
            "--:--".into()
        };
        format!(
            "[{}{}] {done}/{} points  {rate:.1} pt/s  ETA {eta}",
            "#".repeat(filled),
            ".".repeat(BAR - filled),
            self.total
        )
    }

    /// Redraws the bar for `done` points (at most ten times a second, and always for
    /// the last point).
    pub fn update(&mut self, done: u32) {
        if !self.shown {
            return;
        }
        let now = Instant::now();
        let due = self
            .last_drawn
            .is_none_or(|t| now.duration_since(t).as_millis() >= 100);
        if !due && done < self.total {
            return;
        }
        self.last_drawn = Some(now);
        let l = self.line(done, now.duration_since(self.start).as_secs_f64());
        let mut e = std::io::stderr().lock();
        let _ = write!(e, "\r{l}\x1b[K");
        let _ = e.flush();
    }

    /// Ends the bar's line, so that a message after it starts on a line of its own.
    pub fn finish(&mut self) {
        if self.shown && self.last_drawn.is_some() {
            let _ = writeln!(std::io::stderr());
        }
    }
}

/// `m:ss` or `h:mm:ss`.
fn clock(s: f64) -> String {
    let s = s.round().clamp(0.0, 359_999.0) as u64;
    if s >= 3600 {
        format!("{}:{:02}:{:02}", s / 3600, s % 3600 / 60, s % 60)
    } else {
        format!("{}:{:02}", s / 60, s % 60)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_line_shows_count_rate_and_time_left() {
        let p = Progress::new(false, 40, 10);
        // 10 points in 5 s of this run: 2 pt/s, 20 left: 10 s.
        let l = p.line(20, 5.0);
        assert!(l.contains("20/40 points"), "{l}");
        assert!(l.contains("2.0 pt/s"), "{l}");
        assert!(l.contains("ETA 0:10"), "{l}");
        assert_eq!(l.matches('#').count(), 15, "{l}");
        assert_eq!(clock(3725.0), "1:02:05");
        assert!(p.line(10, 0.0).contains("ETA --:--"));
    }
}
