//! `popgauge sign OUT --key KEYFILE`: sign a provenance record.

use std::path::PathBuf;
use std::process::ExitCode;

use crate::provenance::signature::sign_record;
use crate::audit::record_in;

/// Arguments of `popgauge sign`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// The output folder (or its provenance.json).
    pub out: PathBuf,
    /// The private key (PEM, PKCS#8; `popgauge keygen NAME` makes NAME.key).
    #[arg(long, value_name = "KEYFILE")]
    pub key: PathBuf,
    /// Replace an existing signature.
    #[arg(long)]
    pub force: bool,
}

/// Signs the record and says where the signature went.
///
/// # Errors
/// An unreadable record or key, or a signature that exists already.
pub fn run(args: Args) -> anyhow::Result<ExitCode> {
    let record = if args.out.is_dir() { record_in(&args.out) } else { args.out.clone() };
    let signature = sign_record(&record, &args.key, args.force)?;
    println!("Signed {}: {}", record.display(), signature.display());
    println!("Check it with `popgauge verify {} --public-key PUBLIC_KEY`.", record.display());
    Ok(ExitCode::SUCCESS)
}
