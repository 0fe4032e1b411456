//! The `popgauge` command: parse, dispatch, print the error, pick the exit code.

use std::process::ExitCode;

use clap::Parser;
use popgauge::cli::{Cli, dispatch, exit_code_for};

fn main() -> ExitCode {
    one_allocator_arena();
    let cli = Cli::parse();
    match dispatch(cli) {
        Ok(code) => code,
        Err(error) => {
            eprintln!("error: {error}");
            for cause in error.chain().skip(1) {
                eprintln!("  caused by: {cause}");
            }
            exit_code_for(&error)
        }
    }
}

/// Asks the GNU C library for one allocation arena, before any thread starts. By default each
/// worker thread gets an arena of its own, and memory a step frees in one arena is not reused
/// by the next step's allocations in another: on the genomic-scale case (docs/benchmarks.md)
/// the peak resident memory of `popgauge run` fell from 1139 MiB to 793 MiB with one arena, at
/// the same run time. Small allocations still come from each thread's own cache.
fn one_allocator_arena() {
    #[cfg(all(target_os = "linux", target_env = "gnu"))]
    // SAFETY: `mallopt` only changes an allocator setting; it is called before any other thread
    // exists, as the GNU C library asks for M_ARENA_MAX.
    unsafe {
        libc::mallopt(libc::M_ARENA_MAX, 1);
    }
}
