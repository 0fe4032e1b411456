//! Test harness: temporary case folders and running the binary.

use std::path::{Path, PathBuf};
use std::process::Command;

/// The repository root.
pub fn repo_root() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).parent().expect("core/ has a parent").to_path_buf()
}

/// A case folder in a temporary directory (removed on drop).
pub struct Case {
    root: tempfile::TempDir,
}

impl Case {
    /// A copy of `tests/fixtures/<name>/`.
    pub fn fixture(name: &str) -> Case {
        Case::copy_of(&repo_root().join("tests/fixtures").join(name))
    }

    /// A copy of `demo-case/` without any `out/` folder.
    pub fn demo() -> Case {
        Case::copy_of(&repo_root().join("demo-case"))
    }

    /// A copy of `demo-colony/` (a captive colony typed at a SNP panel with positions).
    pub fn colony() -> Case {
        Case::copy_of(&repo_root().join("demo-colony"))
    }

    /// A copy of the example case `examples/portfolio/cases/<name>/`.
    pub fn portfolio_example(name: &str) -> Case {
        Case::copy_of(&repo_root().join("examples/portfolio/cases").join(name))
    }

    fn copy_of(source: &Path) -> Case {
        let root = tempfile::tempdir().expect("temporary folder");
        copy_dir(source, &root.path().join("case"));
        Case { root }
    }

    /// The case folder.
    pub fn path(&self) -> PathBuf {
        self.root.path().join("case")
    }

    /// The temporary root (parent of the case folder), for outputs elsewhere.
    pub fn root(&self) -> &Path {
        self.root.path()
    }

    /// Writes (or replaces) a file in the case folder.
    pub fn write(&self, relative: &str, content: impl AsRef<[u8]>) -> &Case {
        let path = self.path().join(relative);
        std::fs::create_dir_all(path.parent().expect("file has a parent")).expect("create folder");
        std::fs::write(path, content).expect("write file");
        self
    }

    /// Reads a file of the case folder (or of its outputs) as text.
    pub fn read(&self, relative: &str) -> String {
        std::fs::read_to_string(self.path().join(relative)).unwrap_or_else(|e| panic!("read {relative}: {e}"))
    }

    /// Runs `popgauge` with the given arguments from the temporary root.
    pub fn run(&self, args: &[&str]) -> Output {
        popgauge(args, self.root.path())
    }
}

fn copy_dir(from: &Path, to: &Path) {
    std::fs::create_dir_all(to).expect("create folder");
    for entry in std::fs::read_dir(from).unwrap_or_else(|e| panic!("read {}: {e}", from.display())) {
        let entry = entry.expect("folder entry");
        let target = to.join(entry.file_name());
        if entry.file_type().expect("file type").is_dir() {
            if entry.file_name() != "out" {
                copy_dir(&entry.path(), &target);
            }
        } else {
            std::fs::copy(entry.path(), target).expect("copy file");
        }
    }
}

/// What the binary did.
#[derive(Debug)]
pub struct Output {
    /// Exit code.
    pub code: i32,
    /// Standard output, with the working folder replaced by `<tmp>`.
    pub stdout: String,
    /// Standard error, likewise.
    pub stderr: String,
}

/// Runs the real binary in `cwd`.
pub fn popgauge(args: &[&str], cwd: &Path) -> Output {
    popgauge_with_env(args, cwd, &[])
}

/// Runs the real binary in `cwd` with extra environment variables.
pub fn popgauge_with_env(args: &[&str], cwd: &Path, env: &[(&str, &Path)]) -> Output {
    let output = Command::new(env!("CARGO_BIN_EXE_popgauge"))
        .args(args)
        .envs(env.iter().copied())
        .current_dir(cwd)
        .output()
        .expect("run popgauge");
    let normalise = |bytes: &[u8]| String::from_utf8_lossy(bytes).replace(&cwd.display().to_string(), "<tmp>");
    Output {
        code: output.status.code().unwrap_or(-1),
        stdout: normalise(&output.stdout),
        stderr: normalise(&output.stderr),
    }
}

/// Starts `popgauge run case --out out` in `case` in the background, with `TMPDIR` set to
/// `tmpdir` (so a test can see what the run leaves there).
pub fn spawn_run(case: &Case, tmpdir: &Path) -> std::process::Child {
    Command::new(env!("CARGO_BIN_EXE_popgauge"))
        .args(["run", "case", "--out", "out"])
        .current_dir(case.root())
        .env("TMPDIR", tmpdir)
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::piped())
        .spawn()
        .expect("start popgauge run")
}

/// Sends `signal` to a running child and waits for it: its exit code and standard error.
pub fn interrupt(child: std::process::Child, signal: libc::c_int) -> (Option<i32>, String) {
    // SAFETY: kill(2) with a child's pid and a signal number has no memory effects in this process.
    assert_eq!(unsafe { libc::kill(child.id() as libc::pid_t, signal) }, 0);
    let output = child.wait_with_output().expect("wait for popgauge run");
    (output.status.code(), String::from_utf8_lossy(&output.stderr).into_owned())
}

/// Names of the entries of a folder, sorted.
pub fn entries(dir: &Path) -> Vec<String> {
    let mut names: Vec<String> = std::fs::read_dir(dir)
        .map(|rd| rd.map(|e| e.expect("entry").file_name().to_string_lossy().into_owned()).collect())
        .unwrap_or_default();
    names.sort();
    names
}
