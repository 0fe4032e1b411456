//! Containment of panics inside the VCF parsing crate.
//!
//! noodles-vcf 0.96 can panic on some malformed records when a field is asked for (found by
//! fuzzing: a slice ending inside a multi-byte character); a data file must give a clean
//! refusal instead. [`PanicGuard`] installs one panic hook per read (not one per record: the
//! hook is process-wide state behind a lock) and restores the previous hook when dropped. The
//! hook stays silent only while [`PanicGuard::contain`] runs on the thread that called it;
//! every other panic, on any thread, still reaches the previous hook.

use std::cell::Cell;
use std::panic::{self, AssertUnwindSafe, PanicHookInfo};
use std::sync::Arc;

/// A panic hook as the standard library stores it.
type Hook = Box<dyn Fn(&PanicHookInfo<'_>) + Send + Sync + 'static>;

thread_local! {
    /// Set while [`PanicGuard::contain`] runs on this thread.
    static CONTAINING: Cell<bool> = const { Cell::new(false) };
}

/// A panic hook, silent inside [`PanicGuard::contain`], for the lifetime of one read.
pub(super) struct PanicGuard {
    previous: Arc<Hook>,
}

impl PanicGuard {
    /// Installs the hook, chaining to the current one for panics outside `contain`.
    pub(super) fn install() -> Self {
        let previous: Arc<Hook> = Arc::new(panic::take_hook());
        let chained = Arc::clone(&previous);
        panic::set_hook(Box::new(move |info| {
            if !CONTAINING.with(Cell::get) {
                chained(info);
            }
        }));
        Self { previous }
    }

    /// Runs `read`, turning a panic inside it into `None` without printing it.
    pub(super) fn contain<T>(&self, read: impl FnOnce() -> T) -> Option<T> {
        CONTAINING.with(|flag| flag.set(true));
        let result = panic::catch_unwind(AssertUnwindSafe(read));
        CONTAINING.with(|flag| flag.set(false));
        result.ok()
    }
}

impl Drop for PanicGuard {
    fn drop(&mut self) {
        // Setting a hook from a panicking thread aborts the process; the installed hook
        // chains to the previous one, so leaving it in place loses nothing.
        if std::thread::panicking() {
            return;
        }
        drop(panic::take_hook());
        // Our hook (just dropped) held the only other reference, unless another thread
        // installed its own guard meanwhile; then keep chaining through a thin wrapper.
        let previous = std::mem::replace(&mut self.previous, Arc::new(Box::new(|_| {})));
        match Arc::try_unwrap(previous) {
            Ok(hook) => panic::set_hook(hook),
            Err(shared) => panic::set_hook(Box::new(move |info| shared(info))),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_contained_panic_becomes_none_and_later_calls_still_run() {
        let guard = PanicGuard::install();
        assert_eq!(guard.contain(|| -> u8 { panic!("inside the parser") }), None);
        assert_eq!(guard.contain(|| 7), Some(7));
        assert!(!CONTAINING.with(Cell::get), "the flag is cleared after a contained panic");
    }

    #[test]
    fn only_the_calling_thread_is_silenced_and_a_second_guard_restores_cleanly() {
        let guard = PanicGuard::install();
        let (here, elsewhere) = guard
            .contain(|| {
                let elsewhere = std::thread::spawn(|| CONTAINING.with(Cell::get)).join();
                (CONTAINING.with(Cell::get), elsewhere)
            })
            .expect("no panic");
        assert!(here, "silenced inside contain on the calling thread");
        assert_eq!(elsewhere.ok(), Some(false), "another thread's panics still reach the previous hook");
        drop(guard);
        let again = PanicGuard::install();
        assert_eq!(again.contain(|| 1), Some(1));
    }
}
