//! Progress reporting hooks; the CLI decides whether and how to show them.
//!
//! Library code never prints: it calls a [`Progress`] it is handed. The CLI's reporter draws
//! bars on stderr when it is a terminal; tests and `--quiet` use [`Silent`].

/// Receives progress events from long work.
pub trait Progress {
    /// A numbered stage of the run begins (`index` is 1-based out of `total`), e.g. a step.
    fn stage(&mut self, index: usize, total: usize, label: &str);

    /// An unnumbered task begins, e.g. reading the data or typesetting.
    fn task(&mut self, _label: &str) {}

    /// How far the current stage or task has come: `done` of `total` units (bytes, records,
    /// replicates); `total` is 0 when unknown.
    fn within(&mut self, _done: u64, _total: u64) {}

    /// All work is done: clear whatever is shown.
    fn finish(&mut self) {}
}

/// Shows nothing.
#[derive(Debug, Default, Clone, Copy)]
pub struct Silent;

impl Progress for Silent {
    fn stage(&mut self, _index: usize, _total: usize, _label: &str) {}
}
