//! The progress reporter of the command line: bars on stderr, shown only when stderr is a
//! terminal and `--quiet` is not given.

use std::io::IsTerminal;
use std::time::Duration;

use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};

use crate::progress::Progress;

/// How often a spinner redraws while a step runs.
const TICK: Duration = Duration::from_millis(120);

/// Shows one bar for the current stage or task on stderr (a spinner with the elapsed time,
/// turning into a bar with a percentage once the work reports its size).
pub struct StderrProgress {
    enabled: bool,
    bar: Option<ProgressBar>,
}

impl StderrProgress {
    /// Shows progress unless `quiet` or stderr is not a terminal.
    pub fn new(quiet: bool) -> StderrProgress {
        StderrProgress { enabled: !quiet && std::io::stderr().is_terminal(), bar: None }
    }

    fn begin(&mut self, message: String) {
        self.clear();
        if !self.enabled {
            return;
        }
        let bar = ProgressBar::with_draw_target(None, ProgressDrawTarget::stderr());
        bar.set_style(style("{spinner} {msg} ({elapsed})"));
        bar.set_message(message);
        bar.enable_steady_tick(TICK);
        self.bar = Some(bar);
    }

    fn clear(&mut self) {
        if let Some(bar) = self.bar.take() {
            bar.finish_and_clear();
        }
    }
}

/// A bar style from a template that is known to parse (a wrong one falls back to the default).
fn style(template: &str) -> ProgressStyle {
    ProgressStyle::with_template(template).unwrap_or_else(|_| ProgressStyle::default_spinner())
}

impl Progress for StderrProgress {
    fn stage(&mut self, index: usize, total: usize, label: &str) {
        self.begin(format!("[{index}/{total}] {label}"));
    }

    fn task(&mut self, label: &str) {
        self.begin(label.to_string());
    }

    fn within(&mut self, done: u64, total: u64) {
        let Some(bar) = &self.bar else { return };
        if total > 0 && bar.length() != Some(total) {
            bar.set_length(total);
            bar.set_style(style("{msg} [{bar:32}] {percent:>3}% ({elapsed}, about {eta} left)"));
        }
        bar.set_position(done.min(total.max(done)));
    }

    fn finish(&mut self) {
        self.clear();
    }
}

impl Drop for StderrProgress {
    fn drop(&mut self) {
        self.clear();
    }
}
