//! Sampling design before fieldwork: how precise would an LD estimate of Ne be with this many
//! individuals and this marker panel, if the population's Ne were one of these values?
//!
//! For each plausible Ne and each replicate, [`plan`] simulates an ideal population with
//! `popgauge-sim` (discrete generations, random union of gametes, unlinked loci, so Ne = the
//! number of breeders exactly): an ancestral pool in Hardy–Weinberg and linkage equilibrium
//! founds a population of Ne adults, which breeds for [`DRIFT_GENERATIONS`] generations at
//! that size so that drift linkage disequilibrium builds up to its balance with recombination.
//! The generation sampled is the offspring of the last Ne breeders; it holds max(Ne, largest
//! sample) individuals, so a sample may exceed Ne (as a real sample may exceed the number of
//! breeders) and every sample size is drawn from the same simulated cohort. Each sample becomes
//! a [`GenotypeMatrix`] and is handed to the estimator step (in the CLI, the built-in `ne-ld`)
//! through the ordinary [`Step`] trait, as a recipe would run it.
//!
//! Per (Ne, sample size) the result is a [`PlanRow`]: the median estimate, the median width of
//! the chosen 95% interval (upper − lower, an infinite upper bound counted as an infinite
//! width, so the median is infinite when half the intervals are open), the share of intervals
//! with an infinite upper bound and the share that cover the true Ne.
//!
//! Randomness comes only from the seed: every (Ne, replicate) simulation and every estimator
//! run derives its own seed from it, so the same inputs give the same table.
//!
//! The simulated populations are ideal; real ones (overlapping generations, structure, linked
//! loci, skewed reproduction) give less precise estimates. The table is a guide to relative
//! precision between designs, not a promise.

use std::collections::BTreeMap;

use popgauge_abi::{Cell, GenotypeMatrix, Params, Seed, Step, StepContext, Table};
use popgauge_builtin::stats::bootstrap::median;
use popgauge_sim::{
    BurnIn, LocusSpec, MarkerModel, MicrosatelliteModel, MigrationSchedule, PopulationSpec, SampleRequest, SampleSet,
    SimError, Simulation, SimulationConfig, SizeSchedule, SnpModel,
};
use serde_json::Value;

use crate::progress::Progress;
use crate::report::figures::{Figure, Series};

/// Generations the population breeds at size Ne before it is sampled: unlinked loci lose about
/// three quarters of their disequilibrium per generation, so drift LD is near its balance well
/// before this.
pub const DRIFT_GENERATIONS: u32 = 10;
/// Adults in the ancestral pool the population is founded from.
const ANCESTRAL_SIZE: usize = 2000;
/// The year label of simulated samples (any year: one group per sample).
const SAMPLE_YEAR: i32 = 2000;
/// Most alleles a microsatellite panel may start with (the simulated size grid holds 31).
pub const MAX_ALLELES: usize = 31;
/// Largest Ne or sample size accepted.
pub const MAX_SIZE: usize = 100_000;

/// The markers the consultant plans to type.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum MarkerPanel {
    /// Microsatellites, each starting with about `alleles` alleles in the ancestral pool
    /// (frequencies falling off linearly from the commonest, as in the simulator).
    Microsatellites {
        /// Number of loci.
        loci: usize,
        /// Alleles per locus in the ancestral pool (on average).
        alleles: usize,
    },
    /// Biallelic SNPs with starting minor-allele frequencies uniform on (0.05, 0.5).
    Snps {
        /// Number of loci.
        loci: usize,
    },
}

/// Which 95% interval of the estimator is judged (its `<prefix>_low`/`<prefix>_high` columns).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum IntervalKind {
    /// `ne_resample_low`/`_high`: loci and individuals resampled.
    Resampling,
    /// `ne_jack_low`/`_high`: jackknife over loci.
    Jackknife,
    /// `ne_param_low`/`_high`: parametric χ².
    Parametric,
}

impl IntervalKind {
    /// The column prefix in the `estimates` table.
    pub fn column_prefix(self) -> &'static str {
        match self {
            IntervalKind::Resampling => "ne_resample",
            IntervalKind::Jackknife => "ne_jack",
            IntervalKind::Parametric => "ne_param",
        }
    }
}

/// Everything a plan depends on.
#[derive(Debug, Clone, PartialEq)]
pub struct PlanInputs {
    /// Plausible true Ne values.
    pub true_ne: Vec<usize>,
    /// The marker panel.
    pub panel: MarkerPanel,
    /// Candidate numbers of individuals to sample.
    pub sample_sizes: Vec<usize>,
    /// Simulated populations per Ne.
    pub replicates: usize,
    /// Master seed.
    pub seed: u64,
    /// The Pcrit row of the estimates to read.
    pub pcrit: f64,
    /// The interval judged.
    pub interval: IntervalKind,
}

/// The estimator step and the parameters it is run with (as in a recipe's `[step.params]`).
pub struct Estimator<'a> {
    /// The step, run through the [`Step`] trait.
    pub step: &'a dyn Step,
    /// Parameters given to it; the step's defaults fill the rest.
    pub params: BTreeMap<String, Value>,
}

/// Why a plan cannot be made.
#[derive(Debug, thiserror::Error)]
pub enum PlanError {
    /// An input out of range.
    #[error("{field}: {message}")]
    Input {
        /// The option.
        field: &'static str,
        /// What is wrong and how to fix it.
        message: String,
    },
    /// The simulator refused its configuration.
    #[error("simulation: {0}")]
    Simulation(#[from] SimError),
    /// The estimator refused its parameters or failed.
    #[error("estimator `{uses}`: {message}")]
    Estimator {
        /// The estimator's `uses` name.
        uses: String,
        /// What it said.
        message: String,
    },
}

/// The result for one (Ne, sample size).
#[derive(Debug, Clone, PartialEq)]
pub struct PlanRow {
    /// True Ne of the simulated populations.
    pub true_ne: usize,
    /// Individuals sampled.
    pub samples: usize,
    /// Replicates run.
    pub replicates: usize,
    /// Replicates with a point estimate.
    pub estimated: usize,
    /// Median point estimate (+∞ possible).
    pub median_estimate: Option<f64>,
    /// Median interval width, upper − lower (+∞ possible).
    pub median_ci_width: Option<f64>,
    /// Share of intervals with an infinite upper bound.
    pub share_infinite_upper: Option<f64>,
    /// Share of intervals containing the true Ne.
    pub coverage: Option<f64>,
}

/// One estimator run on one sample.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Replicate {
    estimate: Option<f64>,
    interval: Option<(f64, f64)>,
}

/// Simulates and estimates every (Ne, replicate, sample size) and summarises per (Ne, sample
/// size), in the order the inputs list them.
///
/// # Errors
/// [`PlanError::Input`] for an input out of range, [`PlanError::Estimator`] when the estimator
/// refuses its parameters or fails, [`PlanError::Simulation`] if the simulator does.
pub fn plan(
    inputs: &PlanInputs,
    estimator: &Estimator<'_>,
    progress: &mut dyn Progress,
) -> Result<Vec<PlanRow>, PlanError> {
    validate(inputs)?;
    let params = resolve_estimator_params(estimator)?;
    let mut rows = Vec::new();
    let total = inputs.true_ne.len() * inputs.replicates;
    for (ne_index, &true_ne) in inputs.true_ne.iter().enumerate() {
        let mut runs: Vec<Vec<Replicate>> = vec![Vec::new(); inputs.sample_sizes.len()];
        for replicate in 0..inputs.replicates {
            let done = ne_index * inputs.replicates + replicate + 1;
            progress.stage(done, total, &format!("Ne {true_ne}, replicate {}", replicate + 1));
            let samples = simulate_samples(inputs, true_ne, replicate)?;
            for (size_index, sample) in samples.iter().enumerate() {
                let seed = derive_seed(inputs.seed, &[1, true_ne as u64, replicate as u64, size_index as u64]);
                runs[size_index].push(estimate(estimator, &params, sample, seed, inputs)?);
            }
        }
        for (size_index, replicates) in runs.iter().enumerate() {
            rows.push(summarise(true_ne, inputs.sample_sizes[size_index], replicates));
        }
    }
    Ok(rows)
}

fn validate(inputs: &PlanInputs) -> Result<(), PlanError> {
    let input = |field, message: String| Err(PlanError::Input { field, message });
    if inputs.true_ne.is_empty() || inputs.true_ne.iter().any(|&n| !(2..=MAX_SIZE).contains(&n)) {
        return input(
            "--ne",
            format!("give one or more effective sizes from 2 to {MAX_SIZE}, for example --ne 50,200,500"),
        );
    }
    if inputs.sample_sizes.is_empty() || inputs.sample_sizes.iter().any(|&n| !(2..=MAX_SIZE).contains(&n)) {
        return input(
            "--samples",
            format!("give one or more sample sizes from 2 to {MAX_SIZE}, for example --samples 30,50,100"),
        );
    }
    if inputs.replicates == 0 {
        return input("--replicates", "give at least 1 replicate (20 or more for stable shares)".into());
    }
    match inputs.panel {
        MarkerPanel::Microsatellites { loci, .. } | MarkerPanel::Snps { loci } if loci < 2 => {
            input("--microsatellites/--snps", "LD needs at least 2 loci; give the number of loci to type".into())
        }
        MarkerPanel::Microsatellites { alleles, .. } if !(2..=MAX_ALLELES).contains(&alleles) => input(
            "--alleles",
            format!("give the typical number of alleles per microsatellite, from 2 to {MAX_ALLELES}"),
        ),
        _ => Ok(()),
    }
}

fn resolve_estimator_params(estimator: &Estimator<'_>) -> Result<Params, PlanError> {
    let descriptor = estimator.step.descriptor();
    descriptor.resolve(&estimator.params).map_err(|e| PlanError::Estimator {
        uses: descriptor.uses.clone(),
        message: format!("{e}\n  help: {}", e.help()),
    })
}

/// A seed for one purpose, mixed from the master seed and the purpose's coordinates
/// (SplitMix64 finaliser over each word), so neighbouring coordinates give unrelated streams.
fn derive_seed(seed: u64, words: &[u64]) -> u64 {
    let mut state = seed;
    for &word in words {
        state = state.wrapping_add(word).wrapping_add(0x9e37_79b9_7f4a_7c15);
        let mut z = state;
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
        state = z ^ (z >> 31);
    }
    state
}

fn locus_specs(panel: MarkerPanel) -> Vec<LocusSpec> {
    match panel {
        MarkerPanel::Microsatellites { loci, alleles } => {
            // A spread of w repeats starts 2w − 1 alleles; two spreads around (alleles + 1)/2
            // average `alleles` (and at least 3 alleles, since a spread of 1 is monomorphic).
            let low = (alleles.div_ceil(2)).max(2) as u16;
            let high = ((alleles + 2) / 2).max(2) as u16;
            let model = MicrosatelliteModel {
                mutation_rate: 0.0,
                initial_spread: (low, high),
                ..MicrosatelliteModel::default()
            };
            LocusSpec::numbered("M", loci, MarkerModel::Microsatellite(model))
        }
        MarkerPanel::Snps { loci } => LocusSpec::numbered("S", loci, MarkerModel::Snp(SnpModel::default())),
    }
}

/// One simulated population of Ne breeders and a sample of each size from its offspring.
fn simulate_samples(inputs: &PlanInputs, true_ne: usize, replicate: usize) -> Result<Vec<SampleSet>, PlanError> {
    let largest = inputs.sample_sizes.iter().copied().max().unwrap_or(0);
    let cohort = true_ne.max(largest);
    let sizes = SizeSchedule::from_fn(move |generation| if generation < DRIFT_GENERATIONS { true_ne } else { cohort });
    let config = SimulationConfig {
        loci: locus_specs(inputs.panel),
        populations: vec![PopulationSpec::new("plan", sizes)],
        migration: MigrationSchedule::none(),
        burn_in: BurnIn { ancestral_size: ANCESTRAL_SIZE.max(2 * true_ne), generations: 0 },
    };
    let mut simulation = Simulation::new(config, derive_seed(inputs.seed, &[0, true_ne as u64, replicate as u64]))?;
    simulation.advance_to(DRIFT_GENERATIONS)?;
    let population = simulation.population_index("plan").ok_or(SimError::NoPopulations)?;
    inputs
        .sample_sizes
        .iter()
        .map(|&size| Ok(simulation.sample(&SampleRequest::new(population, size, SAMPLE_YEAR, "P"))?))
        .collect()
}

/// The sample as a genotype matrix ([`SampleSet::to_genotype_matrix`]).
fn matrix_from_sample(set: &SampleSet) -> Result<GenotypeMatrix, PlanError> {
    set.to_genotype_matrix().map_err(|e| PlanError::Estimator { uses: "(sample)".into(), message: e.to_string() })
}

fn estimate(
    estimator: &Estimator<'_>,
    params: &Params,
    sample: &SampleSet,
    seed: u64,
    inputs: &PlanInputs,
) -> Result<Replicate, PlanError> {
    let matrix = matrix_from_sample(sample)?;
    let (samples, loci) = (matrix.all_sample_indices(), matrix.all_locus_indices());
    let ctx = StepContext::new(matrix.full_view(&samples, &loci), params, Seed(seed));
    let uses = || estimator.step.descriptor().uses;
    let output = estimator.step.run(&ctx).map_err(|e| PlanError::Estimator { uses: uses(), message: e.message })?;
    let table = output
        .tables
        .get("estimates")
        .ok_or_else(|| PlanError::Estimator { uses: uses(), message: "returned no `estimates` table".into() })?;
    Ok(read_replicate(table, inputs.pcrit, inputs.interval))
}

/// The row at `pcrit` (or the first row) of an `estimates` table.
fn read_replicate(table: &Table, pcrit: f64, interval: IntervalKind) -> Replicate {
    let column = |name: &str| table.column(name);
    let at_pcrit =
        |row: &&Vec<Cell>| column("pcrit").and_then(|c| row[c].as_f64()).is_some_and(|p| (p - pcrit).abs() < 1e-9);
    let Some(row) = table.rows.iter().find(at_pcrit).or(table.rows.first()) else {
        return Replicate { estimate: None, interval: None };
    };
    let number = |name: &str| column(name).and_then(|c| row[c].as_f64());
    let prefix = interval.column_prefix();
    let bounds = number(&format!("{prefix}_low")).zip(number(&format!("{prefix}_high")));
    Replicate { estimate: number("ne"), interval: bounds }
}


fn share(count: usize, of: usize) -> Option<f64> {
    (of > 0).then(|| count as f64 / of as f64)
}

fn summarise(true_ne: usize, samples: usize, replicates: &[Replicate]) -> PlanRow {
    let estimates: Vec<f64> = replicates.iter().filter_map(|r| r.estimate).collect();
    let intervals: Vec<(f64, f64)> = replicates.iter().filter_map(|r| r.interval).collect();
    let truth = true_ne as f64;
    PlanRow {
        true_ne,
        samples,
        replicates: replicates.len(),
        estimated: estimates.len(),
        median_estimate: median(estimates),
        median_ci_width: median(intervals.iter().map(|(low, high)| high - low).collect()),
        share_infinite_upper: share(intervals.iter().filter(|i| i.1 == f64::INFINITY).count(), intervals.len()),
        coverage: share(
            intervals.iter().filter(|(low, high)| *low <= truth && truth <= *high).count(),
            intervals.len(),
        ),
    }
}

/// The plan as a table: ne, samples, replicates, estimated, median_estimate,
/// median_ci_width, share_infinite_upper, coverage.
pub fn plan_table(rows: &[PlanRow]) -> Table {
    let mut table = Table::new(&[
        "ne",
        "samples",
        "replicates",
        "estimated",
        "median_estimate",
        "median_ci_width",
        "share_infinite_upper",
        "coverage",
    ]);
    for row in rows {
        table.rows.push(vec![
            Cell::Int(row.true_ne as i64),
            Cell::Int(row.samples as i64),
            Cell::Int(row.replicates as i64),
            Cell::Int(row.estimated as i64),
            Cell::maybe(row.median_estimate),
            Cell::maybe(row.median_ci_width),
            Cell::maybe(row.share_infinite_upper),
            Cell::maybe(row.coverage),
        ]);
    }
    table
}

/// The median interval width against the sample size, one line per Ne (log scale). Infinite
/// widths cannot be drawn: their points stay in the series (so the x axis spans every sample
/// size) but show no marker, and the axis title says so. `None` when no width is finite.
pub fn plan_figure(rows: &[PlanRow]) -> Option<Figure> {
    if !rows.iter().any(|r| r.median_ci_width.is_some_and(f64::is_finite)) {
        return None;
    }
    let mut by_ne: BTreeMap<usize, Vec<(f64, f64)>> = BTreeMap::new();
    for row in rows {
        let width = row.median_ci_width.unwrap_or(f64::INFINITY);
        by_ne.entry(row.true_ne).or_default().push((row.samples as f64, width));
    }
    let series: Vec<Series> = by_ne
        .into_iter()
        .enumerate()
        .map(|(style, (ne, mut points))| {
            points.sort_by(|a, b| a.0.total_cmp(&b.0));
            Series { name: format!("Ne = {ne}"), style, points, slope: None, intervals: Vec::new() }
        })
        .collect();
    Some(Figure::Lines {
        series,
        x_label: "individuals sampled".into(),
        y_label: "median width of the 95% CI of Ne (∞ not drawn)".into(),
        log_y: true,
        y_from_zero: false,
    })
}

#[cfg(test)]
mod tests {
    use popgauge_abi::{Descriptor, ParamKind, StepError, StepOutput};
    use serde_json::json;

    use super::*;
    use crate::progress::Silent;

    /// A stand-in estimator: Ne = 100 with an interval whose width is 1000/√(individuals),
    /// so a larger sample gives a narrower interval; it also checks the sample it is given.
    struct WidthFromSampleSize;

    impl Step for WidthFromSampleSize {
        fn descriptor(&self) -> Descriptor {
            Descriptor::new("stand-in", "0.1.0", "test estimator").param(
                "pcrit",
                ParamKind::NumberList { min: 0.0, max: 0.5 },
                json!([0.05, 0.02]),
                "rows",
            )
        }

        fn run(&self, ctx: &StepContext<'_>) -> Result<StepOutput, StepError> {
            let n = ctx.view.n_samples() as f64;
            assert!(ctx.view.groups().len() == 1 && ctx.view.n_loci() == 6);
            let width = 1000.0 / n.sqrt();
            let mut table = Table::new(&["pcrit", "ne", "ne_jack_low", "ne_jack_high"]);
            table.push_row(vec![Cell::number(0.05), Cell::number(1.0), Cell::Null, Cell::Null])?;
            table.push_row(vec![
                Cell::number(0.02),
                Cell::number(100.0),
                Cell::number(100.0 - width / 2.0),
                Cell::number(100.0 + width / 2.0),
            ])?;
            let mut output = StepOutput::default();
            output.tables.insert("estimates".into(), table);
            Ok(output)
        }
    }

    fn inputs() -> PlanInputs {
        PlanInputs {
            true_ne: vec![30, 200],
            panel: MarkerPanel::Microsatellites { loci: 6, alleles: 8 },
            sample_sizes: vec![25, 100],
            replicates: 2,
            seed: 7,
            pcrit: 0.02,
            interval: IntervalKind::Jackknife,
        }
    }

    /// The plan reads the Pcrit 0.02 row and the chosen interval; widths follow the stand-in's
    /// 1000/√S (hand calculation: S = 25 → 200, S = 100 → 100); the interval 0–200 covers
    /// Ne 30 but not 200 at S = 100 (50–150).
    #[test]
    fn summarises_each_design() {
        let estimator = Estimator { step: &WidthFromSampleSize, params: BTreeMap::new() };
        let rows = plan(&inputs(), &estimator, &mut Silent).unwrap();
        let keys: Vec<(usize, usize)> = rows.iter().map(|r| (r.true_ne, r.samples)).collect();
        assert_eq!(keys, vec![(30, 25), (30, 100), (200, 25), (200, 100)]);
        assert_eq!(rows[0].median_estimate, Some(100.0));
        assert_eq!((rows[0].median_ci_width, rows[1].median_ci_width), (Some(200.0), Some(100.0)));
        assert_eq!((rows[0].coverage, rows[1].coverage), (Some(1.0), Some(0.0)));
        assert_eq!(rows[3].coverage, Some(0.0));
        assert_eq!(rows[2].coverage, Some(1.0));
        assert_eq!(rows[0].share_infinite_upper, Some(0.0));
        assert_eq!((rows[0].replicates, rows[0].estimated), (2, 2));
        let table = plan_table(&rows);
        assert_eq!(table.columns[5], "median_ci_width");
        assert_eq!(table.rows.len(), 4);
    }

    /// Samples larger than Ne come from the enlarged offspring cohort; every sample has the
    /// requested number of individuals and the panel's loci (checked inside the stand-in).
    #[test]
    fn samples_may_exceed_ne() {
        let mut small = inputs();
        small.true_ne = vec![10];
        let samples = simulate_samples(&small, 10, 0).unwrap();
        assert_eq!(samples.iter().map(|s| s.individuals.len()).collect::<Vec<_>>(), vec![25, 100]);
        let matrix = matrix_from_sample(&samples[1]).unwrap();
        assert_eq!((matrix.samples().len(), matrix.loci().len()), (100, 6));
    }

    /// Medians count +∞ as the largest value (common practice for ordered data with infinite
    /// estimates): widths 10, ∞, ∞ have median ∞; 10, 20, ∞, ∞ have median ∞ too.
    #[test]
    fn infinite_upper_bounds_are_counted() {
        let r = |low: f64, high: f64| Replicate { estimate: Some(50.0), interval: Some((low, high)) };
        let row = summarise(50, 30, &[r(40.0, 50.0), r(45.0, f64::INFINITY), r(60.0, f64::INFINITY)]);
        assert_eq!(row.median_ci_width, Some(f64::INFINITY));
        assert_close(row.share_infinite_upper.unwrap(), 2.0 / 3.0);
        assert_close(row.coverage.unwrap(), 2.0 / 3.0);
        assert_eq!(median(vec![10.0, 20.0, f64::INFINITY, f64::INFINITY]), Some(f64::INFINITY));
        assert_eq!(median(vec![3.0, 1.0, 2.0, 10.0]), Some(2.5));
        let figure = plan_figure(&[row]);
        assert!(figure.is_none(), "an infinite width cannot be drawn");
    }

    fn assert_close(actual: f64, expected: f64) {
        assert!((actual - expected).abs() < 1e-12, "expected {expected}, got {actual}");
    }

    /// Same inputs and seed → the same rows; another seed → other simulated samples.
    #[test]
    fn same_seed_same_samples() {
        let a = simulate_samples(&inputs(), 30, 1).unwrap();
        let b = simulate_samples(&inputs(), 30, 1).unwrap();
        assert_eq!(a, b);
        let mut other = inputs();
        other.seed = 8;
        assert_ne!(simulate_samples(&other, 30, 1).unwrap(), a);
        assert_ne!(derive_seed(7, &[0, 30, 1]), derive_seed(7, &[0, 30, 2]));
    }

    /// Inputs out of range and parameters the estimator refuses are errors naming the option.
    #[test]
    fn bad_inputs_are_refused() {
        let estimator = Estimator { step: &WidthFromSampleSize, params: BTreeMap::new() };
        let mut bad = inputs();
        bad.true_ne = vec![1];
        let err = plan(&bad, &estimator, &mut Silent).unwrap_err();
        assert!(err.to_string().starts_with("--ne: give one or more effective sizes"), "{err}");
        let mut bad = inputs();
        bad.panel = MarkerPanel::Microsatellites { loci: 6, alleles: 40 };
        assert!(plan(&bad, &estimator, &mut Silent).unwrap_err().to_string().starts_with("--alleles"));
        let wrong = Estimator { step: &WidthFromSampleSize, params: [("pcritt".to_string(), json!([0.02]))].into() };
        let err = plan(&inputs(), &wrong, &mut Silent).unwrap_err();
        assert!(err.to_string().contains("unknown parameter `pcritt`"), "{err}");
        assert!(err.to_string().contains("did you mean `pcrit`?"), "{err}");
    }

    /// Microsatellite spreads: 8 alleles → spreads 4 and 5 (7 or 9 alleles, 8 on average);
    /// 2 alleles → spread 2 (3 alleles, the fewest a polymorphic start allows).
    #[test]
    fn allele_counts_map_to_spreads() {
        let spread = |alleles| match &locus_specs(MarkerPanel::Microsatellites { loci: 2, alleles })[0].model {
            MarkerModel::Microsatellite(m) => m.initial_spread,
            MarkerModel::Snp(_) => unreachable!(),
        };
        assert_eq!(spread(8), (4, 5));
        assert_eq!(spread(9), (5, 5));
        assert_eq!(spread(2), (2, 2));
    }
}
