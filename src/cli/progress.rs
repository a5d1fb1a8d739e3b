//! A progress bar on stderr for long runs: shown only when stderr is a
//! terminal and only once a run has taken about a second, so short runs and
//! redirected output stay clean.

use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};
use std::io::IsTerminal;
use std::time::{Duration, Instant};

/// How long a run goes before the bar appears.
const DELAY: Duration = Duration::from_secs(1);

/// A lazily shown progress bar.
pub struct Progress {
    start: Instant,
    total: u64,
    what: &'static str,
    enabled: bool,
    bar: Option<ProgressBar>,
}

impl Progress {
    /// A bar counting `total` units of `what` (e.g. "points", "bytes").
    pub fn new(total: u64, what: &'static str) -> Progress {
        Progress {
            start: Instant::now(),
            total,
            what,
            enabled: std::io::stderr().is_terminal() && total > 0,
            bar: None,
        }
    }

    /// Time since the run started.
    pub fn elapsed(&self) -> Duration {
        self.start.elapsed()
    }

    /// Reports `done` units.
    pub fn update(&mut self, done: u64) {
        if !self.enabled {
            return;
        }
        if self.bar.is_none() {
            if self.start.elapsed() < DELAY || done >= self.total {
                return;
            }
            let bar = ProgressBar::with_draw_target(Some(self.total), ProgressDrawTarget::stderr());
            let template = if self.what == "bytes" {
                "{elapsed_precise} [{bar:40}] {bytes}/{total_bytes} ({eta} left)"
            } else {
                "{elapsed_precise} [{bar:40}] {human_pos}/{human_len} {msg} ({eta} left)"
            };
            if let Ok(style) = ProgressStyle::with_template(template) {
                bar.set_style(style.progress_chars("=> "));
            }
            bar.set_message(self.what);
            self.bar = Some(bar);
        }
        if let Some(bar) = &self.bar {
            bar.set_position(done);
        }
    }

    /// Removes the bar, if shown.
    pub fn finish(&mut self) {
        if let Some(bar) = self.bar.take() {
            bar.finish_and_clear();
        }
    }
}
