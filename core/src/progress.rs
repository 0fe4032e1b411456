//! Progress reporting hooks; the CLI decides whether and how to show them.

/// Receives progress events from long work.
pub trait Progress {
    /// A stage of the run begins (`index` is 1-based out of `total`).
    fn stage(&mut self, index: usize, total: usize, label: &str);
}

/// Shows nothing.
#[derive(Debug, Default, Clone, Copy)]
pub struct Silent;

impl Progress for Silent {
    fn stage(&mut self, _index: usize, _total: usize, _label: &str) {}
}
