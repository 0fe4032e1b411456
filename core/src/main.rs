//! The `popgauge` command: parse, dispatch, print the error, pick the exit code.

use std::process::ExitCode;

use clap::Parser;
use popgauge::cli::{Cli, dispatch, exit_code_for};

fn main() -> ExitCode {
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
