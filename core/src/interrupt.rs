//! Ctrl-C (SIGINT) during a run: remove the run's temporary folders and exit with code 130, so
//! an interrupted run leaves neither a partial output folder nor temporary files.
//!
//! Code that creates a temporary folder registers it here. File operations inside such a folder
//! run under [`guarded`], which holds the same lock the handler takes: the handler therefore
//! never removes a folder while a file is being written into it, and once it has removed the
//! folders it exits while still holding the lock, so no later write can recreate them.

use std::path::{Path, PathBuf};
use std::sync::{Mutex, MutexGuard};

/// The exit code of a run stopped by Ctrl-C (128 + SIGINT, the shell convention).
pub const EXIT_INTERRUPTED: i32 = 130;

/// Temporary folders to remove when interrupted.
static TEMPORARY: Mutex<Vec<PathBuf>> = Mutex::new(Vec::new());

fn lock() -> MutexGuard<'static, Vec<PathBuf>> {
    // A panic while the lock was held leaves the list itself intact; keep using it.
    TEMPORARY.lock().unwrap_or_else(std::sync::PoisonError::into_inner)
}

/// Installs the Ctrl-C handler (once per process).
///
/// # Errors
/// The handler cannot be installed (another one is already set).
pub fn install_handler() -> Result<(), ctrlc::Error> {
    ctrlc::set_handler(|| {
        let folders = lock();
        remove_all(&folders);
        // Exit with the lock held: no guarded write can run after the removal.
        std::process::exit(EXIT_INTERRUPTED);
    })
}

fn remove_all(folders: &[PathBuf]) {
    for folder in folders {
        let _ = std::fs::remove_dir_all(folder);
    }
}

/// Registers a temporary folder to remove on Ctrl-C (it need not exist yet).
pub fn register(folder: &Path) {
    lock().push(folder.to_path_buf());
}

/// Forgets a folder registered with [`register`] (it was renamed into place or removed).
pub fn unregister(folder: &Path) {
    lock().retain(|f| f != folder);
}

/// Runs `work` (file operations in a registered folder) so that Ctrl-C waits for it to finish.
pub fn guarded<T>(work: impl FnOnce() -> T) -> T {
    let _held = lock();
    work()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn registered_folders_are_removed_and_forgotten() {
        let dir = tempfile::tempdir().unwrap();
        let (kept, removed) = (dir.path().join("kept"), dir.path().join("removed"));
        std::fs::create_dir_all(removed.join("tables")).unwrap();
        std::fs::write(removed.join("tables/a.csv"), "x").unwrap();
        std::fs::create_dir_all(&kept).unwrap();
        register(&removed);
        register(&kept);
        unregister(&kept);
        let registered: Vec<PathBuf> = lock().iter().filter(|f| f.starts_with(dir.path())).cloned().collect();
        assert_eq!(registered, vec![removed.clone()]);
        remove_all(&registered);
        assert!(!removed.exists());
        assert!(kept.exists());
        assert_eq!(guarded(|| 7), 7);
        unregister(&removed);
    }
}
