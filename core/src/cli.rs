//! The command line: one module per subcommand, each with its clap `Args` and a `run`.

pub mod check;
pub mod keygen;
pub mod new;
pub mod plan;
pub mod portfolio;
pub mod reporter;
pub mod run;
pub mod sign;
pub mod steps;
pub mod typeset;
pub mod verify;

use std::num::NonZeroUsize;
use std::process::ExitCode;

use clap::{Parser, Subcommand};

use crate::pipeline::RunError;

pub use reporter::StderrProgress;

/// Exit code: success.
pub const EXIT_OK: u8 = 0;
/// Exit code: `--strict` and error-level findings.
pub const EXIT_FINDINGS: u8 = 1;
/// Exit code: `verify` found a difference.
pub const EXIT_DIFFERENCES: u8 = 1;
/// Exit code: bad input (recipe, data, output folder).
pub const EXIT_BAD_INPUT: u8 = 2;
/// Exit code: a step failed.
pub const EXIT_STEP_FAILED: u8 = 3;
/// Exit code: `verify` found no difference, but plugin steps were not re-run because their code
/// is not trusted (`--trust-plugin`), so they and what depends on them are not verified.
pub const EXIT_UNTRUSTED_PLUGINS: u8 = 4;

/// popgauge: genetic-status assessments of managed and listed populations.
///
/// From genotypes sampled at several sites over several years, popgauge validates the data,
/// estimates diversity and inbreeding, and writes machine-readable results with a provenance
/// record an auditor can check. Start with `popgauge new my-case`, or run the demo:
/// `popgauge run demo-case`.
#[derive(Debug, Parser)]
#[command(name = "popgauge", version, about, long_about, max_term_width = 100)]
pub struct Cli {
    /// What to do.
    #[command(subcommand)]
    pub command: Command,
}

/// The subcommands.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Run the assessment recipe of a case folder and write the output folder.
    Run(run::Args),
    /// Check a case's recipe and data without computing estimates.
    Check(check::Args),
    /// List the built-in steps with their parameters, or describe a plugin library.
    Steps(steps::Args),
    /// Create a case folder with a commented recipe to fill in.
    New(new::Args),
    /// Size a sampling design before fieldwork: simulate plausible Ne and compare LD estimates by sample size.
    Plan(plan::Args),
    /// Bring the outputs of many cases together: indicator tables, a portfolio document and its provenance.
    Portfolio(portfolio::Args),
    /// Check a provenance record: re-hash the inputs, re-run the steps, re-typeset, and say what differs.
    Verify(verify::Args),
    /// Sign an output folder's provenance record with an organisation's ed25519 key.
    Sign(sign::Args),
    /// Make an ed25519 key pair for signing provenance records (NAME.key private, NAME.pub public).
    Keygen(keygen::Args),
    /// Typeset an output folder's assessment.pdf again after editing assessment.typ.
    Typeset(typeset::Args),
    /// Internal: runs one plugin call in an isolated child process (spawned by popgauge itself).
    #[command(hide = true)]
    PluginWorker,
}

/// Runs a parsed command line.
///
/// # Errors
/// Whatever the subcommand reports; [`exit_code_for`] maps it to an exit code.
pub fn dispatch(cli: Cli) -> anyhow::Result<ExitCode> {
    match cli.command {
        Command::Run(args) => run::run(args),
        Command::Check(args) => check::run(args),
        Command::Steps(args) => steps::run(args),
        Command::New(args) => new::run(args),
        Command::Plan(args) => plan::run(args),
        Command::Portfolio(args) => portfolio::run(args),
        Command::Verify(args) => verify::run(args),
        Command::Sign(args) => sign::run(args),
        Command::Keygen(args) => keygen::run(args),
        Command::Typeset(args) => typeset::run(args),
        Command::PluginWorker => Ok(crate::host::worker::serve()),
    }
}

/// The exit code for an error: 3 when a step failed, 2 for everything else (bad input).
pub fn exit_code_for(error: &anyhow::Error) -> ExitCode {
    match error.downcast_ref::<RunError>() {
        Some(RunError::Engine(_)) => ExitCode::from(EXIT_STEP_FAILED),
        _ => ExitCode::from(EXIT_BAD_INPUT),
    }
}

/// Sets the number of worker threads of the estimators (rayon's global pool); `None` keeps
/// rayon's default of one per core. Results do not depend on it: every parallel sum is reduced
/// in a fixed order.
///
/// # Errors
/// When the pool was already configured, which only happens if called twice.
pub fn configure_threads(threads: Option<NonZeroUsize>) -> anyhow::Result<()> {
    if let Some(threads) = threads {
        rayon::ThreadPoolBuilder::new()
            .num_threads(threads.get())
            .build_global()
            .map_err(|e| anyhow::anyhow!("cannot start {threads} worker threads: {e}"))?;
    }
    Ok(())
}
