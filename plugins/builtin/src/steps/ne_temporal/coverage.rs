//! Bias and coverage of `ne-temporal` on simulated Wright–Fisher populations of known Ne, under
//! both sampling plans. Each test prints its measured figures as a row of the `ne-temporal`
//! table in docs/accuracy.md.
//!
//! The designs with Ne ≤ 200 run in the normal suite; they need a release build to stay within
//! the CI budget and are ignored in debug builds. The large-Ne designs take minutes and are
//! always ignored; run them with
//! `cargo test --release -p popgauge-builtin coverage -- --ignored --nocapture`.
//!
//! Plan II design: generation 0 has N + S₀ adults; S₀ are sampled and removed before breeding
//! (`sample_and_remove`), so N breed; generation t has N adults, of which S_t are sampled
//! non-lethally. Relative to the ancestral gene pool the drift between the two samples is then
//! exactly t/(2N) plus the two sampling terms of plan II. Plan I design: N adults throughout,
//! both samples non-lethal, census N.

use popgauge_abi::{AssessmentInfo, PopulationInfo, StepOutput};
use popgauge_sim::{BurnIn, SampleRequest, SizeSchedule};
use serde_json::json;

use super::tests::run_with;
use crate::test_support::accuracy::{
    ANY_SHARE, Accuracy, Design, Estimator, LARGE_REPLICATES, MOST_SHARE, Panel, RARE_SHARE, closed_population,
    fraction, large_design, markdown_row, measure, signed, whole,
};
use crate::test_support::sim::matrix_from_samples;

/// Generations of ancestral burn-in at size N.
const BURN_IN: u32 = 20;
/// F_s with its jackknife interval, then F_c and F_k with their χ² intervals.
const ESTIMATORS: &[Estimator] = &[
    Estimator { estimate: "ne_fs", intervals: &[("ne_low", "ne_high")] },
    Estimator { estimate: "ne_fc", intervals: &[("ne_fc_low", "ne_fc_high")] },
    Estimator { estimate: "ne_fk", intervals: &[("ne_fk_low", "ne_fk_high")] },
];

/// The finding whose share of replicates the tables report.
const PRECISION_FINDING: &str = "temporal-precision-low";

struct Scenario {
    panel: Panel,
    size: usize,
    samples: usize,
    generations: u32,
    plan_one: bool,
    replicates: u64,
}

impl Scenario {
    fn plan_two(panel: Panel, size: usize, samples: usize, generations: u32, replicates: u64) -> Scenario {
        Scenario { panel, size, samples, generations, plan_one: false, replicates }
    }

    fn plan(&self) -> &'static str {
        if self.plan_one { "I" } else { "II" }
    }

    fn simulate(&self, seed: u64) -> popgauge_abi::GenotypeMatrix {
        let (size, extra) = (self.size, if self.plan_one { 0 } else { self.samples });
        let sizes = SizeSchedule::from_fn(move |g| if g == 0 { size + extra } else { size });
        let burn_in = BurnIn { ancestral_size: self.size, generations: BURN_IN };
        let (mut simulation, population) = closed_population(&self.panel, "Pop", sizes, burn_in, seed);
        let first_request = SampleRequest::new(population, self.samples, 2000, "A");
        let mut samples = if self.plan_one {
            simulation.sample(&first_request).expect("enough adults")
        } else {
            simulation.sample_and_remove(&first_request).expect("enough adults")
        };
        simulation.advance_to(self.generations).expect("valid sizes");
        let year = 2000 + i32::try_from(self.generations).expect("few generations");
        let later = simulation.sample(&SampleRequest::new(population, self.samples, year, "B")).expect("enough adults");
        samples.append(later).expect("same loci");
        matrix_from_samples(&samples)
    }

    fn run(&self, seed: u64) -> StepOutput {
        let assessment = AssessmentInfo {
            generation_time_years: Some(1.0),
            populations: vec![PopulationInfo {
                population: "Pop".into(),
                census_size: Some(self.size as f64),
                ..Default::default()
            }],
            ..AssessmentInfo::default()
        };
        run_with(&self.simulate(seed), json!({ "plan": self.plan() }), &assessment)
    }

    /// Measures the design and prints its row of docs/accuracy.md.
    fn measure(&self) -> Accuracy {
        let truth = self.size as f64;
        let design = Design {
            truth,
            replicates: self.replicates,
            first_seed: 5_000,
            estimators: ESTIMATORS,
            findings: &[PRECISION_FINDING],
        };
        let accuracy = measure(&design, |seed| self.run(seed));
        let [fs, fc, fk] = [0, 1, 2].map(|i| &accuracy.estimators[i]);
        let flagged = accuracy.flagged(PRECISION_FINDING);
        println!(
            "{}",
            markdown_row(&[
                self.panel.name.into(),
                self.plan().into(),
                whole(truth),
                self.samples.to_string(),
                self.generations.to_string(),
                self.replicates.to_string(),
                signed(fs.estimate.inverse_bias(truth)),
                signed(fc.estimate.inverse_bias(truth)),
                signed(fk.estimate.inverse_bias(truth)),
                whole(fs.estimate.median()),
                fraction(fs.estimate.infinite_share()),
                fraction(fs.estimate.within_factor_two(truth)),
                fraction(fs.intervals[0].coverage()),
                fraction(fs.intervals[0].open_share()),
                fraction(fc.intervals[0].coverage()),
                fraction(fk.intervals[0].coverage()),
                fraction(accuracy.flagged_share(PRECISION_FINDING)),
                fraction(flagged.estimate.within_factor_two(truth)),
                fraction(flagged.intervals[0].coverage()),
            ])
        );
        accuracy
    }
}

/// Ne ≤ 200: mean 1/N̂e of F_s within 20% of 1/Ne, and its interval covering the true Ne in at
/// least 80% of replicates (Jorde & Ryman 2007 built F_s to be unbiased; 20% leaves room for
/// replicate noise; 80% is the floor below which the interval could not be recommended,
/// common practice).
fn check(scenario: &Scenario) {
    scenario.measure().check_precise(scenario.panel.name, scenario.size as f64, 0);
}

/// Simulated truth (popgauge-sim, Wright–Fisher, Ne = N = 50): 20 microsatellites, plan II.
#[test]
#[cfg_attr(debug_assertions, ignore = "statistical test: run with --release")]
fn microsatellites_ne_50_plan_two() {
    check(&Scenario::plan_two(Panel::microsatellites(), 50, 50, 5, 200));
}

/// Simulated truth (Ne = N = 200): 20 microsatellites, plan II.
#[test]
#[cfg_attr(debug_assertions, ignore = "statistical test: run with --release")]
fn microsatellites_ne_200_plan_two() {
    check(&Scenario::plan_two(Panel::microsatellites(), 200, 100, 10, 200));
}

/// Simulated truth (Ne = N = 50): 500 SNPs, plan II.
#[test]
#[cfg_attr(debug_assertions, ignore = "statistical test: run with --release")]
fn snps_ne_50_plan_two() {
    check(&Scenario::plan_two(Panel::snps(), 50, 50, 5, 100));
}

/// Simulated truth (Ne = N = 200): 500 SNPs, plan II.
#[test]
#[cfg_attr(debug_assertions, ignore = "statistical test: run with --release")]
fn snps_ne_200_plan_two() {
    check(&Scenario::plan_two(Panel::snps(), 200, 100, 10, 100));
}

/// Simulated truth (Ne = N = 200, census N): 20 microsatellites, plan I (non-lethal sampling).
#[test]
#[cfg_attr(debug_assertions, ignore = "statistical test: run with --release")]
fn microsatellites_ne_200_plan_one() {
    check(&Scenario { plan_one: true, ..Scenario::plan_two(Panel::microsatellites(), 200, 100, 10, 200) });
}

/// Ne ≥ 200 sampled 10 generations apart with S of 25 or 60, where the drift signal t/(2Ne)
/// shrinks beside the sampling noise 1/S̃: bias is not asserted (with many `"inf"` estimates,
/// mean(1/N̂e) is pushed up by the truncation at 1/N̂e = 0), but the interval of `ne_fs` must
/// still cover the true Ne in at least 80% of replicates, and `temporal-precision-low` must be
/// raised in a share of replicates within `flagged` (justified at each constant).
fn check_large(scenario: &Scenario, flagged: std::ops::RangeInclusive<f64>) {
    let name = format!("{} Ne {} S {}", scenario.panel.name, scenario.size, scenario.samples);
    scenario.measure().check_large(&name, 0, PRECISION_FINDING, flagged);
}

/// Any share (the designs between the clearly precise and the clearly imprecise ones).
const ANY: std::ops::RangeInclusive<f64> = ANY_SHARE;
/// Where the estimate is precise (Ne = 200, S = 60, t = 10: N̂e within a factor of two of Ne in
/// at least 96% of replicates in an exploratory run of 100 replicates), the warning is rare: at
/// most a quarter of replicates (that run: 0–2%).
const RARE: std::ops::RangeInclusive<f64> = RARE_SHARE;
/// Where it is not (Ne = 2,000 with S = 25: within a factor of two in 24–47% of replicates in
/// that run), the warning reaches at least half the replicates (that run: 83–99%).
const MOST: std::ops::RangeInclusive<f64> = MOST_SHARE;

/// Simulated truth (Ne = N = 1,000): 20 microsatellites, plan II, S = 60, t = 10 — the one
/// large-Ne temporal design of the normal suite (about 2 s): with 100 replicates, an
/// exploratory coverage of 0.95 makes the 0.8 floor fail by chance with probability below
/// 10⁻⁶ (binomial); no bound on the warning's share (that run: 0.74).
#[test]
#[cfg_attr(debug_assertions, ignore = "statistical test: run with --release")]
fn microsatellites_ne_1000_s_60_plan_two() {
    check_large(&Scenario::plan_two(Panel::microsatellites(), 1000, 60, 10, 100), ANY);
}

/// Generations between the two samples of the large-Ne designs.
const LARGE_GENERATIONS: u32 = 10;

/// A large-Ne plan II design, sampled [`LARGE_GENERATIONS`] apart, with [`LARGE_REPLICATES`]
/// replicates.
fn large(panel: Panel, size: usize, samples: usize) -> Scenario {
    Scenario::plan_two(panel, size, samples, LARGE_GENERATIONS, LARGE_REPLICATES)
}

large_design!(
    /// Simulated truth (popgauge-sim: Wright–Fisher, Ne = N = 200), 20 microsatellites, plan II,
    /// S = 25, t = 10.
    microsatellites_ne_200_s_25_plan_two, large(Panel::microsatellites(), 200, 25), ANY
);
large_design!(
    /// Simulated truth (Ne = N = 200), 20 microsatellites, plan II, S = 60, t = 10.
    microsatellites_ne_200_s_60_plan_two, large(Panel::microsatellites(), 200, 60), RARE
);
large_design!(
    /// Simulated truth (Ne = N = 500), 20 microsatellites, plan II, S = 25, t = 10.
    microsatellites_ne_500_s_25_plan_two, large(Panel::microsatellites(), 500, 25), ANY
);
large_design!(
    /// Simulated truth (Ne = N = 500), 20 microsatellites, plan II, S = 60, t = 10.
    microsatellites_ne_500_s_60_plan_two, large(Panel::microsatellites(), 500, 60), ANY
);
large_design!(
    /// Simulated truth (Ne = N = 1,000), 20 microsatellites, plan II, S = 25, t = 10.
    microsatellites_ne_1000_s_25_plan_two, large(Panel::microsatellites(), 1000, 25), ANY
);
large_design!(
    /// Simulated truth (Ne = N = 1,000), 20 microsatellites, plan II, S = 60, t = 10: the
    /// normal-suite design with as many replicates as the other large designs.
    microsatellites_ne_1000_s_60_plan_two_500_replicates, large(Panel::microsatellites(), 1000, 60), ANY
);
large_design!(
    /// Simulated truth (Ne = N = 2,000), 20 microsatellites, plan II, S = 25, t = 10.
    microsatellites_ne_2000_s_25_plan_two, large(Panel::microsatellites(), 2000, 25), MOST
);
large_design!(
    /// Simulated truth (Ne = N = 2,000), 20 microsatellites, plan II, S = 60, t = 10.
    microsatellites_ne_2000_s_60_plan_two, large(Panel::microsatellites(), 2000, 60), ANY
);
large_design!(
    /// Simulated truth (Ne = N = 200), 500 SNPs, plan II, S = 25, t = 10.
    snps_ne_200_s_25_plan_two, large(Panel::snps(), 200, 25), ANY
);
large_design!(
    /// Simulated truth (Ne = N = 200), 500 SNPs, plan II, S = 60, t = 10.
    snps_ne_200_s_60_plan_two, large(Panel::snps(), 200, 60), RARE
);
large_design!(
    /// Simulated truth (Ne = N = 500), 500 SNPs, plan II, S = 25, t = 10.
    snps_ne_500_s_25_plan_two, large(Panel::snps(), 500, 25), ANY
);
large_design!(
    /// Simulated truth (Ne = N = 500), 500 SNPs, plan II, S = 60, t = 10.
    snps_ne_500_s_60_plan_two, large(Panel::snps(), 500, 60), ANY
);
large_design!(
    /// Simulated truth (Ne = N = 1,000), 500 SNPs, plan II, S = 25, t = 10.
    snps_ne_1000_s_25_plan_two, large(Panel::snps(), 1000, 25), ANY
);
large_design!(
    /// Simulated truth (Ne = N = 1,000), 500 SNPs, plan II, S = 60, t = 10.
    snps_ne_1000_s_60_plan_two, large(Panel::snps(), 1000, 60), ANY
);
large_design!(
    /// Simulated truth (Ne = N = 2,000), 500 SNPs, plan II, S = 25, t = 10.
    snps_ne_2000_s_25_plan_two, large(Panel::snps(), 2000, 25), MOST
);
large_design!(
    /// Simulated truth (Ne = N = 2,000), 500 SNPs, plan II, S = 60, t = 10.
    snps_ne_2000_s_60_plan_two, large(Panel::snps(), 2000, 60), ANY
);
