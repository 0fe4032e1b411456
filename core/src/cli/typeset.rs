//! `popgauge typeset DIR`: typeset an output folder's document again after editing it.

use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::Context;

use crate::report::{PDF_FILE, typeset_folder};

/// Arguments of `popgauge typeset`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// The output folder of a run (it holds assessment.typ, assessment.json and figures/).
    pub dir: PathBuf,
    /// Write the PDF here instead of DIR/assessment.pdf.
    #[arg(long, value_name = "FILE")]
    pub out: Option<PathBuf>,
}

/// Typesets `DIR/assessment.typ` with `DIR/assessment.json` and `DIR/figures/` into a PDF.
///
/// # Errors
/// A template that does not compile (named by file and line), missing document data, or a
/// PDF that cannot be written.
pub fn run(args: Args) -> anyhow::Result<ExitCode> {
    let pdf = typeset_folder(&args.dir)?;
    let target = args.out.clone().unwrap_or_else(|| args.dir.join(PDF_FILE));
    write_atomically(&target, &pdf)?;
    println!("Wrote {} ({} bytes).", target.display(), pdf.len());
    if args.out.is_none() {
        println!(
            "Note: provenance.json still records the document of the original run, so `popgauge verify` will report assessment.pdf as changed."
        );
    }
    Ok(ExitCode::SUCCESS)
}

/// Writes to a temporary name beside `target`, then renames, so a failure never leaves a
/// half-written PDF.
fn write_atomically(target: &std::path::Path, bytes: &[u8]) -> anyhow::Result<()> {
    let name = target.file_name().map_or_else(|| "assessment.pdf".into(), |n| n.to_string_lossy().into_owned());
    let temp = target.with_file_name(format!(".{name}.popgauge-tmp-{}", std::process::id()));
    let help = "\n  help: check free space and permissions of the folder";
    std::fs::write(&temp, bytes).with_context(|| format!("{}: cannot write{help}", temp.display()))?;
    std::fs::rename(&temp, target)
        .inspect_err(|_| {
            let _ = std::fs::remove_file(&temp);
        })
        .with_context(|| format!("{}: cannot write{help}", target.display()))
}
