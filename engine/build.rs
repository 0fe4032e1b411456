//! Build facts for the provenance record: the git commit the binary was built from (with
//! `-dirty` when tracked files differed from it), the target triple and the rustc version.
//!
//! Nothing here depends on the clock or the machine beyond those strings, so two builds of the
//! same commit with the same toolchain stay byte-identical. Without git (a build from a source
//! tarball) the commit is `unknown`, unless `POPGAUGE_BUILD_COMMIT` names it.

use std::path::{Path, PathBuf};
use std::process::Command;

fn main() {
    println!("cargo:rerun-if-changed=build.rs");
    println!("cargo:rerun-if-env-changed=POPGAUGE_BUILD_COMMIT");
    let commit =
        std::env::var("POPGAUGE_BUILD_COMMIT").ok().filter(|c| !c.trim().is_empty()).unwrap_or_else(git_commit);
    println!("cargo:rustc-env=POPGAUGE_BUILD_COMMIT={}", commit.trim());
    println!("cargo:rustc-env=POPGAUGE_BUILD_TARGET={}", std::env::var("TARGET").unwrap_or_else(|_| "unknown".into()));
    println!("cargo:rustc-env=POPGAUGE_BUILD_RUSTC={}", rustc_version());
}

/// `HEAD`'s commit, `-dirty` appended when tracked files differ from it; `unknown` without git.
fn git_commit() -> String {
    // A tarball unpacked inside some other repository must not take that repository's commit.
    let toplevel = git(&["rev-parse", "--show-toplevel"]).and_then(|t| PathBuf::from(t).canonicalize().ok());
    let workspace = manifest_dir().join("..").canonicalize().ok();
    if toplevel.is_none() || toplevel != workspace {
        return "unknown".into();
    }
    let Some(head) = git(&["rev-parse", "HEAD"]) else { return "unknown".into() };
    watch_git_state();
    // Tracked files only: build outputs and scratch files do not make a tree dirty.
    let dirty = git(&["status", "--porcelain", "--untracked-files=no"]).is_some_and(|s| !s.trim().is_empty());
    if dirty { format!("{head}-dirty") } else { head }
}

/// Reruns this script when HEAD moves (checkout, commit) or when the sources change, and only
/// then, so ordinary rebuilds stay cheap. Only existing paths are named: cargo reruns on every
/// build for a path that does not exist.
fn watch_git_state() {
    let mut paths: Vec<PathBuf> = ["HEAD", "packed-refs"].iter().filter_map(|p| git_path(p)).collect();
    if let Some(reference) = git(&["symbolic-ref", "-q", "HEAD"]) {
        paths.extend(git_path(&reference));
    }
    // The dirty flag follows edits to the sources the binary is built from.
    let root = manifest_dir();
    let sources = [
        "src",
        "../core/src",
        "../report/src",
        "../plugins/abi/src",
        "../plugins/builtin/src",
        "../sim/src",
        "../templates",
    ];
    paths.extend(sources.iter().map(|p| root.join(p)));
    for path in paths.iter().filter(|p| p.exists()) {
        println!("cargo:rerun-if-changed={}", path.display());
    }
}

fn git_path(name: &str) -> Option<PathBuf> {
    let path = PathBuf::from(git(&["rev-parse", "--git-path", name])?);
    Some(if path.is_absolute() { path } else { manifest_dir().join(path) })
}

fn manifest_dir() -> PathBuf {
    std::env::var_os("CARGO_MANIFEST_DIR").map_or_else(|| PathBuf::from("."), PathBuf::from)
}

fn git(args: &[&str]) -> Option<String> {
    let output = Command::new("git").args(args).current_dir(manifest_dir()).output().ok()?;
    let text = String::from_utf8(output.stdout).ok()?;
    (output.status.success() && !text.trim().is_empty()).then(|| text.trim().to_string())
}

/// `rustc --version` of the compiler cargo uses (`$RUSTC`), or `unknown`.
fn rustc_version() -> String {
    let rustc = std::env::var_os("RUSTC").unwrap_or_else(|| "rustc".into());
    Command::new(Path::new(&rustc))
        .arg("--version")
        .output()
        .ok()
        .filter(|o| o.status.success())
        .and_then(|o| String::from_utf8(o.stdout).ok())
        .map_or_else(|| "unknown".into(), |v| v.trim().to_string())
}
