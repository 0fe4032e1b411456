//! `popgauge keygen NAME`: an ed25519 key pair for signing provenance records.

use std::path::PathBuf;
use std::process::ExitCode;

use crate::provenance::signature::generate_key_pair;

/// Arguments of `popgauge keygen`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// Where to write the keys: NAME.key (private) and NAME.pub (public); neither may exist.
    pub name: PathBuf,
}

/// Writes the key pair and says which file is which.
///
/// # Errors
/// A key file that exists already, or one that cannot be written.
pub fn run(args: Args) -> anyhow::Result<ExitCode> {
    let (private, public) = generate_key_pair(&args.name)?;
    println!("Wrote {} (private: keep it where only the signer can read it)", private.display());
    println!("Wrote {} (public: give it to auditors for `popgauge verify --public-key`)", public.display());
    Ok(ExitCode::SUCCESS)
}
