//! `popgauge check CASE`: recipe and data only, no estimates.

use std::path::PathBuf;
use std::process::ExitCode;

use popgauge_abi::FindingLevel;

use super::StderrProgress;
use crate::pipeline::load_case;
use crate::progress::Progress;

/// Arguments of `popgauge check`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// The case folder.
    pub case: PathBuf,
    /// Let data paths in the recipe point outside the case folder.
    #[arg(long)]
    pub allow_outside: bool,
    /// Show no progress.
    #[arg(long, short)]
    pub quiet: bool,
}

/// Loads the recipe and data and prints what was found.
///
/// # Errors
/// Recipe and data errors, each naming file, line and fix.
pub fn run(args: Args) -> anyhow::Result<ExitCode> {
    let mut progress = StderrProgress::new(args.quiet);
    let case = load_case(&args.case, args.allow_outside, &mut progress)?;
    progress.finish();
    let matrix = &case.data.matrix;
    let samples = matrix.all_sample_indices();
    let loci = matrix.all_locus_indices();
    let groups = matrix.full_view(&samples, &loci).groups();
    println!("Recipe: {} step(s): {}", case.recipe.steps.len(), case.recipe.steps.iter().map(|s| format!("{} ({})", s.id, s.uses)).collect::<Vec<_>>().join(", "));
    println!("Data: {} samples × {} loci in {} groups (population × year)", samples.len(), loci.len(), groups.len());
    for group in &groups {
        println!("  {:<24} {}  n = {}", group.population, group.year, group.samples.len());
    }
    let notable: Vec<_> = case.data.findings.iter().filter(|f| f.level >= FindingLevel::Warning).collect();
    println!("Reading findings: {}", notable.len());
    for finding in notable {
        println!("  {}: {}", finding.level, finding.message);
    }
    println!("The case is ready to run: popgauge run {}", args.case.display());
    Ok(ExitCode::SUCCESS)
}
