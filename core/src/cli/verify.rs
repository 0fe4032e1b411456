//! `popgauge verify PROVENANCE`: reproduce an assessment from its provenance record.

use std::path::PathBuf;
use std::process::ExitCode;

use super::{EXIT_DIFFERENCES, StderrProgress, configure_threads};
use crate::provenance::signature::read_public_key;
use crate::audit::{add_signature_check, record_in, verify};

/// Arguments of `popgauge verify`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// The provenance.json of an output folder (or the output folder itself).
    pub provenance: PathBuf,
    /// The folder holding the case's recipe and data, when it has moved since the run
    /// [default: the case folder recorded relative to the output folder].
    #[arg(long, value_name = "DIR")]
    pub data: Option<PathBuf>,
    /// Check the record's signature (provenance.json.sig) against this ed25519 public key (PEM).
    #[arg(long, value_name = "FILE")]
    pub public_key: Option<PathBuf>,
    /// Show no progress.
    #[arg(long, short)]
    pub quiet: bool,
    /// Worker threads for the estimators [default: one per core]; results are the same for any number.
    #[arg(long, value_name = "N")]
    pub threads: Option<std::num::NonZeroUsize>,
}

/// Verifies and prints one line per input, step and output.
///
/// # Errors
/// An unreadable record or a case that cannot be loaded at all.
pub fn run(args: Args) -> anyhow::Result<ExitCode> {
    configure_threads(args.threads)?;
    let record = if args.provenance.is_dir() { record_in(&args.provenance) } else { args.provenance.clone() };
    // A bad key file is refused before any work.
    let key = args.public_key.as_deref().map(read_public_key).transpose()?;
    let mut report = verify(&record, args.data.as_deref(), &mut StderrProgress::new(args.quiet))?;
    add_signature_check(&mut report, &record, key.as_ref());
    for note in &report.notes {
        println!("{note}");
    }
    for item in &report.items {
        println!("{item}");
    }
    let differences = report.differences();
    if differences == 0 {
        println!("verified: every input, step and output is the same as recorded");
        Ok(ExitCode::SUCCESS)
    } else {
        println!("NOT verified: {differences} item(s) differ from the record");
        Ok(ExitCode::from(EXIT_DIFFERENCES))
    }
}
