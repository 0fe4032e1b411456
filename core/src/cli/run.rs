//! `popgauge run CASE`: the whole assessment.

use std::path::PathBuf;
use std::process::ExitCode;

use popgauge_abi::FindingLevel;

use super::{EXIT_FINDINGS, StderrProgress, configure_threads};
use crate::host::{Isolation, PluginSpec, PluginTrust};
use crate::pipeline::{RunOptions, RunSummary, run_case};

/// Arguments of `popgauge run`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// The case folder (it holds case.toml and the data it names).
    pub case: PathBuf,
    /// Where to write the results [default: CASE/out].
    #[arg(long, value_name = "DIR")]
    pub out: Option<PathBuf>,
    /// Replace the output folder if it exists (the old one is kept until the new one is complete).
    #[arg(long)]
    pub force: bool,
    /// Exit with code 1 when any finding is at error level.
    #[arg(long)]
    pub strict: bool,
    /// Let data paths in the recipe point outside the case folder.
    #[arg(long)]
    pub allow_outside: bool,
    /// Who runs the assessment (recorded in provenance.json).
    #[arg(long, value_name = "NAME")]
    pub operator: Option<String>,
    /// Show no progress.
    #[arg(long, short)]
    pub quiet: bool,
    /// Worker threads for the estimators [default: one per core]; results are the same for any number.
    #[arg(long, value_name = "N")]
    pub threads: Option<std::num::NonZeroUsize>,
}

/// Runs the assessment and prints where the results went.
///
/// # Errors
/// Recipe, data, step or output errors, each naming file, line and fix.
pub fn run(args: Args) -> anyhow::Result<ExitCode> {
    // Ctrl-C removes the temporary output folder and plugin copies, and exits 130.
    crate::interrupt::install_handler().map_err(|e| anyhow::anyhow!("cannot watch for Ctrl-C: {e}"))?;
    let trust = PluginTrust { announce: Some(announce_plugin), ..PluginTrust::default() };
    let options = RunOptions {
        out: args.out.clone(),
        force: args.force,
        allow_outside: args.allow_outside,
        operator: args.operator.clone(),
        trust,
    };
    configure_threads(args.threads)?;
    let mut progress = StderrProgress::new(args.quiet);
    let summary = run_case(&args.case, &options, &mut progress)?;
    print_summary(&summary);
    for failed in summary.results.steps.iter().filter(|s| s.status == popgauge_abi::StepStatus::Failed) {
        eprintln!("warning: step \"{}\" failed: {}", failed.id, failed.error.as_deref().unwrap_or("no reason given"));
    }
    let errors = summary.findings_at_least(FindingLevel::Error).len();
    if args.strict && errors > 0 {
        eprintln!("error: {errors} finding(s) at error level and --strict was given; see results.json");
        return Ok(ExitCode::from(EXIT_FINDINGS));
    }
    Ok(ExitCode::SUCCESS)
}

/// Says which plugin library is about to be loaded, and where its code runs: the recipe's
/// owner chose it, but whoever runs the case should see what code runs with their rights.
fn announce_plugin(step: &str, spec: &PluginSpec, sha256: &str) {
    let runs = match spec.isolation {
        Isolation::Process => "its code runs in a sandboxed worker process",
        Isolation::InProcess => {
            "its code runs inside popgauge with your rights, without a sandbox (isolation = \"in-process\")"
        }
    };
    eprintln!("note: step \"{step}\" loads the plugin library {} (SHA-256 {sha256}); {runs}", spec.shown);
}

fn print_summary(summary: &RunSummary) {
    let data = &summary.results.data;
    println!(
        "Assessed {} samples × {} loci in {} groups with {} steps.",
        data.samples,
        data.loci,
        data.groups.len(),
        summary.results.steps.len()
    );
    let warnings = summary.findings_at_least(FindingLevel::Warning);
    let errors = warnings.iter().filter(|f| f.level == FindingLevel::Error).count();
    println!("Findings: {errors} error(s), {} warning(s); they are listed in results.json.", warnings.len() - errors);
    let count = |role: &str| summary.provenance.outputs.iter().filter(|o| o.role == role).count();
    let (tables, figures) = (count("table"), count("figure"));
    println!(
        "Wrote {}: assessment.pdf, results.json, provenance.json, {tables} tables (tables/*.csv) and {figures} figure(s) (figures/*.svg).",
        summary.out.display()
    );
}
