//! The accuracy harness of the Ne steps, shared by `steps/ne_ld/coverage.rs` and
//! `steps/ne_temporal/coverage.rs`: closed Wright–Fisher populations of known Ne simulated with
//! `popgauge-sim` (Ne = N, unlinked loci), a loop over seeded replicates, and the tallies of
//! bias on the inverse scale, infinite estimates and interval coverage that docs/accuracy.md
//! reports, and the checks both steps apply to them: [`Accuracy::check_precise`] for designs
//! where the estimate should be precise, [`Accuracy::check_large`] and the slow
//! [`large_design!`] tests for large Ne. Each step's `coverage.rs` keeps only its scenario (how
//! one replicate is simulated and run, and its row of docs/accuracy.md) and its designs. Each
//! test prints its figures as a row of that document's tables.

use std::collections::BTreeMap;

use popgauge_abi::{StepOutput, Table};
use popgauge_sim::{
    BurnIn, LocusSpec, MarkerModel, MicrosatelliteModel, MigrationSchedule, PopulationIdx, PopulationSpec, Simulation,
    SimulationConfig, SizeSchedule, SnpModel,
};

use super::{number, table};

/// A marker panel of the accuracy tests.
#[derive(Debug, Clone)]
pub(crate) struct Panel {
    /// How the tables name it.
    pub(crate) name: &'static str,
    pub(crate) model: MarkerModel,
    pub(crate) loci: usize,
}

impl Panel {
    /// 20 microsatellites: stepwise mutation, μ = 5·10⁻⁴, 3–11 starting alleles
    /// (`popgauge-sim` defaults).
    pub(crate) fn microsatellites() -> Panel {
        Panel {
            name: "20 microsatellites",
            model: MarkerModel::Microsatellite(MicrosatelliteModel::default()),
            loci: 20,
        }
    }

    /// 500 biallelic SNPs with starting minor-allele frequencies uniform on 0.05–0.5.
    pub(crate) fn snps() -> Panel {
        Panel { name: "500 SNPs", model: MarkerModel::Snp(SnpModel::default()), loci: 500 }
    }
}

/// One closed population `name` of the panel's loci with sizes `sizes`, founded from an
/// ancestral pool of `burn_in.ancestral_size` adults after `burn_in.generations` generations.
pub(crate) fn closed_population(
    panel: &Panel,
    name: &str,
    sizes: SizeSchedule,
    burn_in: BurnIn,
    seed: u64,
) -> (Simulation, PopulationIdx) {
    let config = SimulationConfig {
        loci: LocusSpec::numbered("L", panel.loci, panel.model.clone()),
        populations: vec![PopulationSpec::new(name, sizes)],
        migration: MigrationSchedule::none(),
        burn_in,
    };
    let simulation = Simulation::new(config, seed).expect("valid simulation");
    let population = simulation.population_index(name).expect("configured");
    (simulation, population)
}

/// An estimate column of a step's `estimates` table and its 95% intervals as
/// (low column, high column).
pub(crate) struct Estimator {
    pub(crate) estimate: &'static str,
    pub(crate) intervals: &'static [(&'static str, &'static str)],
}

/// What to measure over the replicates of one design.
pub(crate) struct Design<'d> {
    /// The true Ne.
    pub(crate) truth: f64,
    /// Replicates, seeded `first_seed`, `first_seed + 1`, …
    pub(crate) replicates: u64,
    pub(crate) first_seed: u64,
    /// The estimators read from row 0 of the `estimates` table.
    pub(crate) estimators: &'d [Estimator],
    /// Finding codes whose share of replicates is counted.
    pub(crate) findings: &'d [&'static str],
}

/// Point estimates of Ne over replicates.
#[derive(Debug, Default)]
pub(crate) struct EstimateTally {
    estimates: Vec<f64>,
}

impl EstimateTally {
    fn add(&mut self, ne: f64) {
        self.estimates.push(ne);
    }

    /// mean(1/N̂e)·Ne − 1, an `"inf"` estimate counting as 1/N̂e = 0: the relative bias of the
    /// inverse estimate (0 = unbiased).
    pub(crate) fn inverse_bias(&self, truth: f64) -> f64 {
        let mean = self.estimates.iter().map(|ne| 1.0 / ne).sum::<f64>() / self.estimates.len() as f64;
        mean * truth - 1.0
    }

    /// Share of `"inf"` estimates.
    pub(crate) fn infinite_share(&self) -> f64 {
        share(self.estimates.iter().filter(|ne| ne.is_infinite()).count(), self.estimates.len())
    }

    /// Share of estimates within a factor of two of the truth (Ne/2 ≤ N̂e ≤ 2·Ne).
    pub(crate) fn within_factor_two(&self, truth: f64) -> f64 {
        share(self.estimates.iter().filter(|&&ne| truth / 2.0 <= ne && ne <= 2.0 * truth).count(), self.estimates.len())
    }

    /// The median estimate (`"inf"` sorts last); NaN without estimates.
    pub(crate) fn median(&self) -> f64 {
        let mut sorted = self.estimates.clone();
        sorted.sort_by(f64::total_cmp);
        sorted.get(sorted.len() / 2).copied().unwrap_or(f64::NAN)
    }
}

/// One kind of 95% interval over replicates.
#[derive(Debug, Default)]
pub(crate) struct IntervalTally {
    covered: usize,
    open: usize,
    count: usize,
}

impl IntervalTally {
    /// Adds one replicate's interval; a missing (`null`) interval counts as not covering.
    fn add(&mut self, low: Option<f64>, high: Option<f64>, truth: f64) {
        self.count += 1;
        if let (Some(low), Some(high)) = (low, high) {
            self.covered += usize::from(low <= truth && truth <= high);
            self.open += usize::from(high.is_infinite());
        }
    }

    /// Share of replicates whose interval contains the true Ne.
    pub(crate) fn coverage(&self) -> f64 {
        share(self.covered, self.count)
    }

    /// Share of replicates whose upper bound is `"inf"`.
    pub(crate) fn open_share(&self) -> f64 {
        share(self.open, self.count)
    }
}

/// The tallies of one estimator.
#[derive(Debug, Default)]
pub(crate) struct EstimatorTally {
    pub(crate) estimate: EstimateTally,
    /// In the order of [`Estimator::intervals`].
    pub(crate) intervals: Vec<IntervalTally>,
}

impl EstimatorTally {
    fn new(estimator: &Estimator) -> EstimatorTally {
        EstimatorTally {
            estimate: EstimateTally::default(),
            intervals: estimator.intervals.iter().map(|_| IntervalTally::default()).collect(),
        }
    }

    /// Adds the estimator's row-0 values of one replicate's `estimates` table.
    fn add(&mut self, estimator: &Estimator, estimates: &Table, truth: f64) {
        self.estimate.add(number(estimates, 0, estimator.estimate).expect("an estimate"));
        for (interval, &(low, high)) in self.intervals.iter_mut().zip(estimator.intervals) {
            interval.add(number(estimates, 0, low), number(estimates, 0, high), truth);
        }
    }

    /// Replicates tallied.
    pub(crate) fn count(&self) -> usize {
        self.estimate.estimates.len()
    }
}

/// Everything measured over the replicates of one design.
#[derive(Debug)]
pub(crate) struct Accuracy {
    pub(crate) replicates: u64,
    /// In the order of [`Design::estimators`].
    pub(crate) estimators: Vec<EstimatorTally>,
    /// Per counted finding code, the first estimator over the replicates that raised it.
    flagged: BTreeMap<&'static str, EstimatorTally>,
}

impl Accuracy {
    /// Share of replicates that raised a finding `code` (one of [`Design::findings`]).
    pub(crate) fn flagged_share(&self, code: &str) -> f64 {
        share(self.flagged[code].count(), self.replicates as usize)
    }

    /// The first estimator over the replicates that raised a finding `code`; empty when none did.
    pub(crate) fn flagged(&self, code: &str) -> &EstimatorTally {
        &self.flagged[code]
    }
}

/// Any share of replicates raising a precision finding: designs between the clearly precise
/// and the clearly imprecise ones.
pub(crate) const ANY_SHARE: std::ops::RangeInclusive<f64> = 0.0..=1.0;
/// The share of replicates raising a precision finding where the estimate is precise: rare, at
/// most a quarter (each step's designs give the exploratory figures behind it).
pub(crate) const RARE_SHARE: std::ops::RangeInclusive<f64> = 0.0..=0.25;
/// The share of replicates raising a precision finding where the estimate is not precise: at
/// least half.
pub(crate) const MOST_SHARE: std::ops::RangeInclusive<f64> = 0.5..=1.0;

/// Replicates of each large-Ne design run with `--ignored`: at a coverage of 0.95 the standard
/// error of the measured share is 0.01.
pub(crate) const LARGE_REPLICATES: u64 = 500;

/// A slow large-Ne design, run only with `--ignored`: the test `$name` calls the calling
/// module's `check_large(&scenario, flagged)` on the scenario given.
macro_rules! large_design {
    ($(#[$doc:meta])* $name:ident, $scenario:expr, $flagged:expr) => {
        $(#[$doc])*
        #[test]
        #[ignore = "slow statistical test: cargo test --release -p popgauge-builtin coverage -- --ignored --nocapture"]
        fn $name() {
            check_large(&$scenario, $flagged);
        }
    };
}
pub(crate) use large_design;

impl Accuracy {
    /// The check of the designs where an Ne step is expected to be precise: mean 1/N̂e of the
    /// first estimator within 20% of 1/Ne, and its interval `interval` covering the true Ne in
    /// at least 80% of replicates (80% is the floor below which the interval could not be
    /// recommended, common practice). `name` labels the design in the messages.
    pub(crate) fn check_precise(&self, name: &str, truth: f64, interval: usize) {
        let tally = &self.estimators[0];
        let bias = tally.estimate.inverse_bias(truth);
        let coverage = tally.intervals[interval].coverage();
        assert!(bias.abs() <= 0.2, "{name}: bias {bias}");
        assert!(coverage >= 0.8, "{name}: interval coverage {coverage}");
    }

    /// The large-Ne check of both Ne steps: the interval `interval` of the first estimator
    /// covers the truth in at least 80% of replicates, and the finding `code` is raised in a
    /// share of replicates within `flagged`. `name` labels the design in the messages.
    pub(crate) fn check_large(&self, name: &str, interval: usize, code: &str, flagged: std::ops::RangeInclusive<f64>) {
        let coverage = self.estimators[0].intervals[interval].coverage();
        let share = self.flagged_share(code);
        assert!(coverage >= 0.8, "{name}: interval coverage {coverage}");
        assert!(flagged.contains(&share), "{name}: {code} in {share} of replicates, expected {flagged:?}");
    }
}

/// Runs `run(seed)` for every replicate of `design` and tallies its outputs.
pub(crate) fn measure(design: &Design<'_>, mut run: impl FnMut(u64) -> StepOutput) -> Accuracy {
    let mut estimators: Vec<EstimatorTally> = design.estimators.iter().map(EstimatorTally::new).collect();
    let mut flagged: BTreeMap<&'static str, EstimatorTally> =
        design.findings.iter().map(|&code| (code, EstimatorTally::new(&design.estimators[0]))).collect();
    for seed in design.first_seed..design.first_seed + design.replicates {
        let output = run(seed);
        let estimates = table(&output, "estimates");
        for (tally, estimator) in estimators.iter_mut().zip(design.estimators) {
            tally.add(estimator, estimates, design.truth);
        }
        for (code, tally) in &mut flagged {
            if output.findings.iter().any(|f| f.code == *code) {
                tally.add(&design.estimators[0], estimates, design.truth);
            }
        }
    }
    Accuracy { replicates: design.replicates, estimators, flagged }
}

fn share(part: usize, whole: usize) -> f64 {
    part as f64 / whole as f64
}

/// A signed figure as the tables print it: `+0.013`, `−0.031` (a true minus sign).
pub(crate) fn signed(value: f64) -> String {
    let text = format!("{value:+.3}");
    text.replacen('-', "−", 1)
}

/// A share with two decimals; `–` when there was nothing to count.
pub(crate) fn fraction(value: f64) -> String {
    if value.is_nan() { "–".into() } else { format!("{value:.2}") }
}

/// A whole number with a thousands separator, or `inf`.
pub(crate) fn whole(value: f64) -> String {
    if value.is_infinite() {
        return "inf".into();
    }
    let digits = format!("{value:.0}");
    let mut grouped = String::new();
    for (i, digit) in digits.chars().enumerate() {
        if i > 0 && (digits.len() - i) % 3 == 0 {
            grouped.push(',');
        }
        grouped.push(digit);
    }
    grouped
}

/// One row of a Markdown table.
pub(crate) fn markdown_row(cells: &[String]) -> String {
    format!("| {} |", cells.join(" | "))
}
