//! `popgauge plan`: sampling design before fieldwork — how precise an LD estimate of Ne would
//! be for plausible Ne values, a marker panel and candidate sample sizes (see
//! [`crate::planning`]).

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::process::ExitCode;

use anyhow::{Context, bail};
use serde_json::json;

use super::StderrProgress;
use crate::planning::{Estimator, IntervalKind, MarkerPanel, PlanInputs, PlanRow, plan, plan_figure, plan_table};
use crate::report::figures::render;
use crate::report::format::{effective_size, percent};
use crate::results::table_csv;

/// The estimator `plan` runs on every simulated sample.
const ESTIMATOR: &str = "ne-ld";

/// Which 95% interval of `ne-ld` to judge.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum Interval {
    /// Loci and individuals resampled (`ne_resample_*`, what `status` reports first).
    Resampling,
    /// Jackknife over loci (`ne_jack_*`).
    Jackknife,
    /// Parametric χ² (`ne_param_*`).
    Parametric,
}

/// Arguments of `popgauge plan`.
#[derive(Debug, clap::Args)]
#[command(after_help = "Example: popgauge plan --ne 50,200,500 --microsatellites 20 --alleles 8 \
                        --samples 30,50,100 --replicates 20 --seed 1 --out plan")]
pub struct Args {
    /// Plausible effective sizes to simulate, comma-separated.
    #[arg(long, value_delimiter = ',', required = true, value_name = "NE,…")]
    pub ne: Vec<usize>,
    /// Number of microsatellite loci in the panel.
    #[arg(long, value_name = "LOCI", conflicts_with = "snps", required_unless_present = "snps")]
    pub microsatellites: Option<usize>,
    /// Typical number of alleles per microsatellite.
    #[arg(long, default_value_t = 8, value_name = "N", requires = "microsatellites")]
    pub alleles: usize,
    /// Number of biallelic SNP loci in the panel.
    #[arg(long, value_name = "LOCI")]
    pub snps: Option<usize>,
    /// Candidate numbers of individuals to sample, comma-separated.
    #[arg(long, value_delimiter = ',', required = true, value_name = "N,…")]
    pub samples: Vec<usize>,
    /// Simulated populations per Ne.
    #[arg(long, default_value_t = 20)]
    pub replicates: usize,
    /// Seed of all simulations (the same seed gives the same table).
    #[arg(long, default_value_t = 1)]
    pub seed: u64,
    /// Rare-allele threshold of the estimates.
    #[arg(long, default_value_t = 0.02)]
    pub pcrit: f64,
    /// Which 95% interval to judge.
    #[arg(long, value_enum, default_value_t = Interval::Resampling)]
    pub interval: Interval,
    /// Also write plan.csv and plan.svg into this folder.
    #[arg(long, value_name = "DIR")]
    pub out: Option<PathBuf>,
    /// Replace plan.csv and plan.svg if they exist.
    #[arg(long)]
    pub force: bool,
    /// Show no progress.
    #[arg(long, short)]
    pub quiet: bool,
}

/// Simulates, estimates and prints the table (and writes the files with `--out`).
///
/// # Errors
/// Options out of range, an estimator failure, or files that cannot be written.
pub fn run(args: Args) -> anyhow::Result<ExitCode> {
    let inputs = inputs_from(&args);
    let Some(step) = popgauge_builtin::steps::find(ESTIMATOR) else {
        bail!("this build has no `{ESTIMATOR}` step, which plan needs\n  help: build popgauge with its standard steps");
    };
    let estimator = Estimator { step, params: estimator_params(&args, step) };
    if let Some(out) = &args.out {
        check_out(out, args.force)?;
    }
    let mut progress = StderrProgress::new(args.quiet);
    let rows = plan(&inputs, &estimator, &mut progress)?;
    print!("{}", report(&args, &rows));
    if let Some(out) = &args.out {
        write_files(out, &rows)?;
        println!("Wrote {} and {}.", out.join("plan.csv").display(), out.join("plan.svg").display());
    }
    Ok(ExitCode::SUCCESS)
}

fn inputs_from(args: &Args) -> PlanInputs {
    let panel = match (args.microsatellites, args.snps) {
        (Some(loci), _) => MarkerPanel::Microsatellites { loci, alleles: args.alleles },
        (None, loci) => MarkerPanel::Snps { loci: loci.unwrap_or(0) },
    };
    PlanInputs {
        true_ne: args.ne.clone(),
        panel,
        sample_sizes: args.samples.clone(),
        replicates: args.replicates,
        seed: args.seed,
        pcrit: args.pcrit,
        interval: match args.interval {
            Interval::Resampling => IntervalKind::Resampling,
            Interval::Jackknife => IntervalKind::Jackknife,
            Interval::Parametric => IntervalKind::Parametric,
        },
    }
}

/// The `ne-ld` parameter that sets the jackknife over individuals (0 turns it off).
const INDIVIDUAL_BLOCKS: &str = "individual_blocks";

/// `ne-ld` parameters: only the Pcrit asked for, no singletons row, and the jackknife over
/// individuals only when its interval is the one judged (it multiplies the work many times).
fn estimator_params(args: &Args, step: &dyn popgauge_abi::Step) -> BTreeMap<String, serde_json::Value> {
    let mut params = BTreeMap::new();
    params.insert("pcrit".to_string(), json!([args.pcrit]));
    params.insert("exclude_singletons".to_string(), json!(false));
    let declares_blocks = step.descriptor().params.iter().any(|p| p.name == INDIVIDUAL_BLOCKS);
    if args.interval != Interval::Resampling && declares_blocks {
        params.insert(INDIVIDUAL_BLOCKS.to_string(), json!(0));
    }
    params
}

fn check_out(out: &Path, force: bool) -> anyhow::Result<()> {
    for name in ["plan.csv", "plan.svg"] {
        let path = out.join(name);
        if path.exists() && !force {
            bail!(
                "{}: the file exists; nothing was computed\n  help: choose another --out folder, or add --force to replace it",
                path.display()
            );
        }
    }
    Ok(())
}

fn write_files(out: &Path, rows: &[PlanRow]) -> anyhow::Result<()> {
    std::fs::create_dir_all(out).with_context(|| format!("{}: cannot create the folder", out.display()))?;
    write_atomically(&out.join("plan.csv"), &table_csv(&plan_table(rows)))?;
    let svg = match plan_figure(rows) {
        Some(figure) => render("plan", &figure)?,
        None => no_figure_svg(),
    };
    write_atomically(&out.join("plan.svg"), svg.as_bytes())
}

/// A figure that says why there is nothing to draw (every median width infinite).
fn no_figure_svg() -> String {
    "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"720\" height=\"80\"><text x=\"10\" y=\"40\">Every median \
     confidence-interval width is infinite: no design here bounds Ne from above.</text></svg>\n"
        .to_string()
}

fn write_atomically(path: &Path, bytes: &[u8]) -> anyhow::Result<()> {
    let temporary = path.with_extension("partial");
    std::fs::write(&temporary, bytes).with_context(|| format!("{}: cannot write", temporary.display()))?;
    std::fs::rename(&temporary, path).with_context(|| format!("{}: cannot write", path.display()))
}

/// The text printed: the design, the table and the cautions.
fn report(args: &Args, rows: &[PlanRow]) -> String {
    let panel = match (args.microsatellites, args.snps) {
        (Some(loci), _) => format!("{loci} microsatellites with about {} alleles", args.alleles),
        (None, loci) => format!("{} SNPs", loci.unwrap_or(0)),
    };
    let interval = match args.interval {
        Interval::Resampling => "resampling",
        Interval::Jackknife => "jackknife",
        Interval::Parametric => "parametric",
    };
    let mut text = format!(
        "Sampling design: LD estimates of Ne ({ESTIMATOR}, Pcrit {}, {interval} 95% CI) from {panel};\n\
         {} simulated populations per Ne, seed {}.\n\n",
        args.pcrit, args.replicates, args.seed
    );
    text.push_str(&format!(
        "{:>8} {:>8} {:>10} {:>16} {:>12} {:>13}\n",
        "Ne", "sampled", "median Ne", "median CI width", "upper = ∞", "CI covers Ne"
    ));
    for row in rows {
        let show = |value: Option<f64>, f: fn(f64) -> String| value.map_or_else(|| "—".to_string(), f);
        text.push_str(&format!(
            "{:>8} {:>8} {:>10} {:>16} {:>12} {:>13}\n",
            row.true_ne,
            row.samples,
            show(row.median_estimate, effective_size),
            show(row.median_ci_width, effective_size),
            show(row.share_infinite_upper, percent),
            show(row.coverage, percent),
        ));
    }
    text.push_str(
        "\nThe simulated populations are ideal (random mating, unlinked loci, constant Ne, discrete\n\
         generations); real populations give less precise estimates. Use the table to compare designs,\n\
         not as a promise of precision, and have the design reviewed by a qualified geneticist.\n",
    );
    text
}
