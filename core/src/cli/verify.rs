//! `popgauge verify PROVENANCE`: reproduce an assessment from its provenance record.

use std::collections::BTreeSet;
use std::path::PathBuf;
use std::process::ExitCode;

use super::{EXIT_DIFFERENCES, EXIT_UNTRUSTED_PLUGINS, StderrProgress, configure_threads};
use crate::audit::{VerifyOptions, VerifyReport, add_signature_check, record_in, verify};
use crate::portfolio::verify::{is_portfolio_record, verify_portfolio};
use crate::provenance::signature::read_public_key;

/// Arguments of `popgauge verify`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// The provenance.json of an output folder or a portfolio (or the folder itself).
    pub provenance: PathBuf,
    /// The folder holding the case's recipe and data, when it has moved since the run
    /// [default: the case folder recorded relative to the output folder].
    #[arg(long, value_name = "DIR")]
    pub data: Option<PathBuf>,
    /// Check the record's signature (provenance.json.sig) against this ed25519 public key (PEM).
    #[arg(long, value_name = "FILE")]
    pub public_key: Option<PathBuf>,
    /// Run the code of the plugin library with this SHA-256 (repeatable); without it, plugin
    /// steps are not re-run, since a case's author wrote both its library and the hash.
    #[arg(long = "trust-plugin", value_name = "SHA256", value_parser = parse_sha256)]
    pub trust_plugin: Vec<String>,
    /// For a portfolio's record: also verify every case it names by re-running it.
    #[arg(long)]
    pub deep: bool,
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
    let options = VerifyOptions {
        data: args.data.clone(),
        trusted_plugins: args.trust_plugin.iter().cloned().collect::<BTreeSet<_>>(),
    };
    let bytes = std::fs::read(&record).unwrap_or_default();
    let mut progress = StderrProgress::new(args.quiet);
    let mut report = if is_portfolio_record(&bytes) {
        verify_portfolio(&record, args.deep, &options, &mut progress)?
    } else {
        verify(&record, &options, &mut progress)?
    };
    add_signature_check(&mut report, &record, key.as_ref());
    for note in &report.notes {
        println!("{note}");
    }
    for item in &report.items {
        println!("{item}");
    }
    Ok(verdict(&report))
}

/// The closing line and the exit code.
fn verdict(report: &VerifyReport) -> ExitCode {
    let differences = report.differences();
    let not_checked = report.not_checked();
    if differences > 0 {
        println!("NOT verified: {differences} item(s) differ from the record");
        ExitCode::from(EXIT_DIFFERENCES)
    } else if not_checked > 0 {
        let steps: Vec<String> = report.withheld.iter().map(|w| format!("\"{}\"", w.id)).collect();
        println!(
            "verified except {not_checked} item(s): plugin step(s) {} not re-run (their code is not trusted) and what depends on them",
            steps.join(", ")
        );
        for step in &report.withheld {
            println!(
                "  help: review {} (step \"{}\"), then add --trust-plugin {} to re-run it",
                step.library, step.id, step.sha256
            );
        }
        ExitCode::from(EXIT_UNTRUSTED_PLUGINS)
    } else {
        println!("verified: every input, step and output is the same as recorded");
        ExitCode::SUCCESS
    }
}

/// A SHA-256 as 64 hexadecimal digits (any case), kept in lower case.
fn parse_sha256(text: &str) -> Result<String, String> {
    if text.len() == 64 && text.chars().all(|c| c.is_ascii_hexdigit()) {
        Ok(text.to_ascii_lowercase())
    } else {
        Err(format!(
            "\"{text}\" is not a SHA-256 (64 hexadecimal digits); the record's plugin lines and `popgauge steps --plugin` print it"
        ))
    }
}
