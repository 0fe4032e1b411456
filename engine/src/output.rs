//! Writing the output folder so that a failed run leaves nothing half-written.
//!
//! Files go into a hidden temporary folder beside the target; only when every file is written
//! is it renamed into place. An existing output folder is replaced only with `--force`, and
//! then by renaming the old one aside first, so that at every moment either the old or the new
//! folder is complete. A folder that holds the case or any input file is never a target.

use std::path::{Path, PathBuf};

use crate::interrupt;

/// Why the output folder cannot be written.
#[derive(Debug, thiserror::Error)]
pub enum OutputError {
    /// The folder exists and `--force` was not given.
    #[error("{path}: the output folder already exists; nothing was written\n  help: choose another --out folder, or add --force to replace it")]
    Exists {
        /// The folder.
        path: String,
    },
    /// The folder would hold or be the case folder or an input.
    #[error("{path}: the output folder contains {what}; popgauge never writes over its inputs\n  help: choose an --out folder outside the case data, for example the default CASE/out")]
    WouldOverwriteInput {
        /// The folder.
        path: String,
        /// What it contains.
        what: String,
    },
    /// An I/O failure.
    #[error("{path}: cannot write: {source}\n  help: check free space and permissions of the output location")]
    Io {
        /// The path.
        path: String,
        /// The error.
        source: std::io::Error,
    },
}

fn io_error(path: &Path) -> impl FnOnce(std::io::Error) -> OutputError + '_ {
    move |source| OutputError::Io { path: path.display().to_string(), source }
}

/// Checks, before any work, that `out` may be written.
///
/// # Errors
/// [`OutputError::Exists`] without `force`; [`OutputError::WouldOverwriteInput`] when `out` is,
/// or contains, the case folder or an input file.
pub fn check_target(out: &Path, force: bool, case_dir: &Path, inputs: &[&Path]) -> Result<(), OutputError> {
    let out_abs = absolute(out);
    let case_abs = case_dir.canonicalize().unwrap_or_else(|_| absolute(case_dir));
    let display = || out.display().to_string();
    if case_abs.starts_with(&out_abs) {
        return Err(OutputError::WouldOverwriteInput { path: display(), what: "the case folder".into() });
    }
    if let Some(input) = inputs.iter().find(|i| absolute(i).starts_with(&out_abs)) {
        return Err(OutputError::WouldOverwriteInput { path: display(), what: format!("the input file {}", input.display()) });
    }
    if out.exists() && !force {
        return Err(OutputError::Exists { path: display() });
    }
    Ok(())
}

/// An absolute, symlink-resolved form of `path`, resolving the longest existing prefix.
fn absolute(path: &Path) -> PathBuf {
    if let Ok(p) = path.canonicalize() {
        return p;
    }
    let base = std::env::current_dir().unwrap_or_default().join(path);
    match (base.parent(), base.file_name()) {
        (Some(parent), Some(name)) if parent != base => absolute(parent).join(name),
        _ => base,
    }
}

/// Files to write, relative to the output folder.
pub type OutputFiles = Vec<(String, Vec<u8>)>;

/// Writes `files` into `out` atomically (see the module doc).
///
/// # Errors
/// [`OutputError`]; on error the temporary folder is removed and `out` is as it was.
pub fn write_folder(out: &Path, files: &OutputFiles, force: bool) -> Result<(), OutputError> {
    let parent = out.parent().filter(|p| !p.as_os_str().is_empty()).unwrap_or(Path::new("."));
    std::fs::create_dir_all(parent).map_err(io_error(parent))?;
    let name = out.file_name().map_or("out".into(), |n| n.to_string_lossy().into_owned());
    let temp = parent.join(format!(".{name}.popgauge-tmp-{}", std::process::id()));
    let aside = temp.with_extension("old");
    interrupt::register(&temp);
    let result = write_all(&temp, files).and_then(|()| interrupt::guarded(|| swap_into_place(&temp, &aside, out, force)));
    if result.is_err() {
        let _ = std::fs::remove_dir_all(&temp);
    }
    interrupt::unregister(&temp);
    result
}

fn write_all(temp: &Path, files: &OutputFiles) -> Result<(), OutputError> {
    if temp.exists() {
        std::fs::remove_dir_all(temp).map_err(io_error(temp))?;
    }
    interrupt::guarded(|| std::fs::create_dir_all(temp)).map_err(io_error(temp))?;
    for (relative, bytes) in files {
        let path = temp.join(relative);
        interrupt::guarded(|| {
            if let Some(dir) = path.parent() {
                std::fs::create_dir_all(dir).map_err(io_error(dir))?;
            }
            std::fs::write(&path, bytes).map_err(io_error(&path))
        })?;
    }
    Ok(())
}

/// Renames `temp` to `out`; with `force`, an existing `out` is renamed to `aside` first and
/// removed once the new folder is in place (Ctrl-C waits for all of it, see [`interrupt`]).
fn swap_into_place(temp: &Path, aside: &Path, out: &Path, force: bool) -> Result<(), OutputError> {
    if !out.exists() {
        return std::fs::rename(temp, out).map_err(io_error(out));
    }
    if !force {
        return Err(OutputError::Exists { path: out.display().to_string() });
    }
    std::fs::rename(out, aside).map_err(io_error(out))?;
    if let Err(e) = std::fs::rename(temp, out) {
        // Put the old folder back so nothing is lost.
        let _ = std::fs::rename(aside, out);
        return Err(io_error(out)(e));
    }
    std::fs::remove_dir_all(aside).map_err(io_error(aside))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn writes_and_refuses_to_overwrite_without_force() {
        let dir = tempfile::tempdir().unwrap();
        let out = dir.path().join("out");
        let files: OutputFiles = vec![("a.txt".into(), b"one".to_vec()), ("t/b.csv".into(), b"x\n".to_vec())];
        write_folder(&out, &files, false).unwrap();
        assert_eq!(std::fs::read(out.join("t/b.csv")).unwrap(), b"x\n");
        let err = check_target(&out, false, dir.path(), &[]).unwrap_err();
        assert!(err.to_string().contains("already exists"), "{err}");
        let newer: OutputFiles = vec![("a.txt".into(), b"two".to_vec())];
        write_folder(&out, &newer, true).unwrap();
        assert_eq!(std::fs::read(out.join("a.txt")).unwrap(), b"two");
        assert!(!out.join("t").exists(), "replaced folder keeps nothing of the old one");
        let leftovers: Vec<_> = std::fs::read_dir(dir.path()).unwrap().map(|e| e.unwrap().file_name()).collect();
        assert_eq!(leftovers, vec![std::ffi::OsString::from("out")]);
    }

    #[test]
    fn never_targets_the_case_or_its_inputs() {
        let dir = tempfile::tempdir().unwrap();
        let case = dir.path().join("case");
        std::fs::create_dir_all(case.join("data")).unwrap();
        let input = case.join("data/g.csv");
        std::fs::write(&input, "x").unwrap();
        assert!(matches!(check_target(&case, true, &case, &[]), Err(OutputError::WouldOverwriteInput { .. })));
        assert!(matches!(check_target(dir.path(), true, &case, &[]), Err(OutputError::WouldOverwriteInput { .. })));
        assert!(matches!(check_target(&case.join("data"), true, &dir.path().join("elsewhere"), &[&input]), Err(OutputError::WouldOverwriteInput { .. })));
        assert!(check_target(&case.join("out"), false, &case, &[&input]).is_ok());
    }
}
