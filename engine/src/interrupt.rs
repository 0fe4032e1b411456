//! Ctrl-C (SIGINT), SIGTERM or SIGHUP during a run: kill the plugin worker processes still
//! running, remove the run's temporary folders and exit with code 130, so an interrupted run
//! leaves neither a partial output folder, nor temporary files, nor a worker left to its time
//! limit.
//!
//! Code that creates a temporary folder registers it here. File operations inside such a folder
//! run under [`guarded`], which holds the same lock the handler takes: the handler therefore
//! never removes a folder while a file is being written into it, and once it has removed the
//! folders it exits while still holding the lock, so no later write can recreate them.
//!
//! A worker process is started with [`spawn_worker`], which keeps the [`Child`] here; the
//! caller waits on it through the returned [`Worker`]. Spawning, polling and reaping all take
//! the lock, so the handler kills exactly the workers that are still running (never a process
//! id the system has already handed to someone else).

use std::path::{Path, PathBuf};
use std::process::{Child, ChildStderr, ChildStdin, ChildStdout, Command, ExitStatus};
use std::sync::{Mutex, MutexGuard};

/// The exit code of a run stopped by Ctrl-C (128 + SIGINT, the shell convention).
pub const EXIT_INTERRUPTED: i32 = 130;

/// What to clean up when interrupted.
struct Pending {
    /// Temporary folders to remove.
    folders: Vec<PathBuf>,
    /// Worker processes not yet reaped, with the key their [`Worker`] knows them by.
    workers: Vec<(u64, Child)>,
    /// The key of the next worker.
    next_key: u64,
}

static PENDING: Mutex<Pending> = Mutex::new(Pending { folders: Vec::new(), workers: Vec::new(), next_key: 0 });

fn lock() -> MutexGuard<'static, Pending> {
    // A panic while the lock was held leaves the lists themselves intact; keep using them.
    PENDING.lock().unwrap_or_else(std::sync::PoisonError::into_inner)
}

/// Installs the Ctrl-C handler (once per process).
///
/// # Errors
/// The handler cannot be installed (another one is already set).
pub fn install_handler() -> Result<(), ctrlc::Error> {
    ctrlc::set_handler(|| {
        let mut pending = lock();
        // Workers first: they may hold files in the folders open.
        kill_all(&mut pending.workers);
        remove_all(&pending.folders);
        // Exit with the lock held: no guarded write can run after the removal.
        std::process::exit(EXIT_INTERRUPTED);
    })
}

fn kill_all(workers: &mut Vec<(u64, Child)>) {
    for (_, child) in workers.iter_mut() {
        let _ = child.kill();
        let _ = child.wait();
    }
    workers.clear();
}

fn remove_all(folders: &[PathBuf]) {
    for folder in folders {
        let _ = std::fs::remove_dir_all(folder);
    }
}

/// Registers a temporary folder to remove on Ctrl-C (it need not exist yet).
pub fn register(folder: &Path) {
    lock().folders.push(folder.to_path_buf());
}

/// Forgets a folder registered with [`register`] (it was renamed into place or removed).
pub fn unregister(folder: &Path) {
    lock().folders.retain(|f| f != folder);
}

/// Runs `work` (file operations in a registered folder) so that Ctrl-C waits for it to finish.
pub fn guarded<T>(work: impl FnOnce() -> T) -> T {
    let _held = lock();
    work()
}

/// Starts a worker process that an interrupt kills.
///
/// # Errors
/// The process cannot be started.
pub fn spawn_worker(command: &mut Command) -> std::io::Result<Worker> {
    let mut pending = lock();
    let mut child = command.spawn()?;
    let key = pending.next_key;
    pending.next_key += 1;
    let worker = Worker {
        key,
        id: child.id(),
        stdin: child.stdin.take(),
        stdout: child.stdout.take(),
        stderr: child.stderr.take(),
    };
    pending.workers.push((key, child));
    Ok(worker)
}

/// A worker process started with [`spawn_worker`], with its pipes as [`Child`] has them.
/// Dropping it kills the process if it is still running and reaps it.
#[derive(Debug)]
pub struct Worker {
    key: u64,
    /// The operating system's process id.
    pub id: u32,
    /// The process's stdin, when piped.
    pub stdin: Option<ChildStdin>,
    /// The process's stdout, when piped.
    pub stdout: Option<ChildStdout>,
    /// The process's stderr, when piped.
    pub stderr: Option<ChildStderr>,
}

impl Worker {
    /// Runs `act` on the child under the lock; forgets the child once `act` reports it ended.
    fn with_child<T>(&self, act: impl FnOnce(&mut Child) -> std::io::Result<Option<T>>) -> std::io::Result<Option<T>> {
        let mut pending = lock();
        let Some(at) = pending.workers.iter().position(|(key, _)| *key == self.key) else {
            return Err(std::io::Error::other("the worker process was already reaped"));
        };
        let ended = act(&mut pending.workers[at].1)?;
        if ended.is_some() {
            pending.workers.swap_remove(at);
        }
        Ok(ended)
    }

    /// The exit status if the process has ended (then it is reaped), without blocking.
    ///
    /// # Errors
    /// Waiting on the process failed.
    pub fn try_wait(&self) -> std::io::Result<Option<ExitStatus>> {
        self.with_child(Child::try_wait)
    }

    /// Kills the process and reaps it.
    ///
    /// # Errors
    /// Waiting on the process failed.
    pub fn kill(&self) -> std::io::Result<ExitStatus> {
        let status = self.with_child(|child| {
            let _ = child.kill();
            child.wait().map(Some)
        })?;
        status.ok_or_else(|| std::io::Error::other("the worker process did not end"))
    }
}

impl Drop for Worker {
    fn drop(&mut self) {
        let _ = self.kill();
    }
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
        let registered: Vec<PathBuf> = lock().folders.iter().filter(|f| f.starts_with(dir.path())).cloned().collect();
        assert_eq!(registered, vec![removed.clone()]);
        remove_all(&registered);
        assert!(!removed.exists());
        assert!(kept.exists());
        assert_eq!(guarded(|| 7), 7);
        unregister(&removed);
    }

    #[cfg(target_os = "linux")]
    #[test]
    fn a_dropped_worker_is_killed_and_reaped_and_an_ended_one_forgotten() {
        let registered = |key: u64| lock().workers.iter().any(|(k, _)| *k == key);
        let sleeper = spawn_worker(Command::new("sleep").arg("30")).unwrap();
        let (key, pid) = (sleeper.key, sleeper.id);
        assert!(registered(key));
        assert_eq!(sleeper.try_wait().unwrap(), None);
        drop(sleeper);
        assert!(!registered(key));
        // Reaped, so no zombie is left under this pid.
        assert!(!Path::new(&format!("/proc/{pid}")).exists(), "process {pid} still exists");

        let quick = spawn_worker(&mut Command::new("true")).unwrap();
        let status = loop {
            if let Some(status) = quick.try_wait().unwrap() {
                break status;
            }
            std::thread::sleep(std::time::Duration::from_millis(5));
        };
        assert!(status.success());
        assert!(!registered(quick.key), "an ended worker is forgotten");
        assert!(quick.try_wait().is_err(), "and cannot be waited on twice");
    }
}
