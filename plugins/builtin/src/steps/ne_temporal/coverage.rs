//! Bias and coverage of `ne-temporal` on simulated Wright–Fisher populations of known Ne (the
//! issue's acceptance checks), under both sampling plans. Each test prints its measured
//! figures, which the repository README reports. Ignored in debug builds (`cargo test --release`
//! runs them).
//!
//! Plan II design: generation 0 has N + S₀ adults; S₀ are sampled and removed before breeding
//! (`sample_and_remove`), so N breed; generation t has N adults, of which S_t are sampled
//! non-lethally. Relative to the ancestral gene pool the drift between the two samples is then
//! exactly t/(2N) plus the two sampling terms of plan II. Plan I design: N adults throughout,
//! both samples non-lethal, census N.

use popgauge_abi::{AssessmentInfo, PopulationInfo};
use popgauge_sim::{
    BurnIn, LocusSpec, MarkerModel, MicrosatelliteModel, MigrationSchedule, PopulationSpec, SampleRequest, Simulation,
    SimulationConfig, SizeSchedule, SnpModel,
};
use serde_json::json;

use super::tests::run_with;
use crate::test_support::sim::matrix_from_samples;
use crate::test_support::{number, table};

/// Generations of ancestral burn-in at size N.
const BURN_IN: u32 = 20;

struct Scenario {
    name: &'static str,
    marker: MarkerModel,
    loci: usize,
    size: usize,
    samples: usize,
    generations: u32,
    plan_one: bool,
    replicates: u64,
}

fn simulate(s: &Scenario, seed: u64) -> popgauge_abi::GenotypeMatrix {
    let (size, extra) = (s.size, if s.plan_one { 0 } else { s.samples });
    let config = SimulationConfig {
        loci: LocusSpec::numbered("L", s.loci, s.marker.clone()),
        populations: vec![PopulationSpec::new(
            "Pop",
            SizeSchedule::from_fn(move |g| if g == 0 { size + extra } else { size }),
        )],
        migration: MigrationSchedule::none(),
        burn_in: BurnIn { ancestral_size: s.size, generations: BURN_IN },
    };
    let mut simulation = Simulation::new(config, seed).expect("valid simulation");
    let population = simulation.population_index("Pop").expect("configured");
    let first_request = SampleRequest::new(population, s.samples, 2000, "A");
    let mut samples = if s.plan_one {
        simulation.sample(&first_request).expect("enough adults")
    } else {
        simulation.sample_and_remove(&first_request).expect("enough adults")
    };
    simulation.advance_to(s.generations).expect("valid sizes");
    let year = 2000 + i32::try_from(s.generations).expect("few generations");
    let later = simulation.sample(&SampleRequest::new(population, s.samples, year, "B")).expect("enough adults");
    samples.append(later).expect("same loci");
    matrix_from_samples(&samples)
}

fn check(s: &Scenario) {
    let truth = s.size as f64;
    let assessment = AssessmentInfo {
        generation_time_years: Some(1.0),
        populations: vec![PopulationInfo { population: "Pop".into(), census_size: Some(truth), ..Default::default() }],
        ..AssessmentInfo::default()
    };
    let plan = if s.plan_one { "I" } else { "II" };
    let (mut inverse, mut covered, mut covered_fc, mut covered_fk) = ([0.0f64; 3], 0usize, 0usize, 0usize);
    for replicate in 0..s.replicates {
        let output = run_with(&simulate(s, 5_000 + replicate), json!({ "plan": plan }), &assessment);
        let estimates = table(&output, "estimates");
        for (slot, column) in ["ne_fs", "ne_fc", "ne_fk"].iter().enumerate() {
            inverse[slot] += 1.0 / number(estimates, 0, column).expect("an estimate");
        }
        let within = |low: &str, high: &str| {
            let (l, h) =
                (number(estimates, 0, low).unwrap_or(f64::NAN), number(estimates, 0, high).unwrap_or(f64::NAN));
            usize::from(l <= truth && truth <= h)
        };
        covered += within("ne_low", "ne_high");
        covered_fc += within("ne_fc_low", "ne_fc_high");
        covered_fk += within("ne_fk_low", "ne_fk_high");
    }
    let n = s.replicates as f64;
    let bias = inverse.map(|sum| sum / n * truth - 1.0);
    let coverage = [covered, covered_fc, covered_fk].map(|c| c as f64 / n);
    println!(
        "ne-temporal {}: plan {plan}, Ne = {}, S = {}, t = {}, {} loci, {} replicates: mean(1/Ne^)·Ne − 1 = {:+.3} \
         (Fs), {:+.3} (Fc), {:+.3} (Fk); coverage ne_low–ne_high (Fs jackknife) = {:.2}, Fc χ² = {:.2}, Fk χ² = {:.2}",
        s.name,
        s.size,
        s.samples,
        s.generations,
        s.loci,
        s.replicates,
        bias[0],
        bias[1],
        bias[2],
        coverage[0],
        coverage[1],
        coverage[2],
    );
    assert!(bias[0].abs() <= 0.2, "{}: Fs bias {bias:?}", s.name);
    assert!(coverage[0] >= 0.8, "{}: Fs coverage {coverage:?}", s.name);
}

fn microsatellites() -> MarkerModel {
    MarkerModel::Microsatellite(MicrosatelliteModel::default())
}

fn snps() -> MarkerModel {
    MarkerModel::Snp(SnpModel::default())
}

/// Simulated truth (popgauge-sim, Wright–Fisher, Ne = N = 50): 20 microsatellites, plan II.
#[test]
#[cfg_attr(debug_assertions, ignore = "statistical test: run with --release")]
fn microsatellites_ne_50_plan_two() {
    check(&Scenario {
        name: "microsatellites",
        marker: microsatellites(),
        loci: 20,
        size: 50,
        samples: 50,
        generations: 5,
        plan_one: false,
        replicates: 200,
    });
}

/// Simulated truth (Ne = N = 200): 20 microsatellites, plan II.
#[test]
#[cfg_attr(debug_assertions, ignore = "statistical test: run with --release")]
fn microsatellites_ne_200_plan_two() {
    check(&Scenario {
        name: "microsatellites",
        marker: microsatellites(),
        loci: 20,
        size: 200,
        samples: 100,
        generations: 10,
        plan_one: false,
        replicates: 200,
    });
}

/// Simulated truth (Ne = N = 50): 500 SNPs, plan II.
#[test]
#[cfg_attr(debug_assertions, ignore = "statistical test: run with --release")]
fn snps_ne_50_plan_two() {
    check(&Scenario {
        name: "SNPs",
        marker: snps(),
        loci: 500,
        size: 50,
        samples: 50,
        generations: 5,
        plan_one: false,
        replicates: 100,
    });
}

/// Simulated truth (Ne = N = 200): 500 SNPs, plan II.
#[test]
#[cfg_attr(debug_assertions, ignore = "statistical test: run with --release")]
fn snps_ne_200_plan_two() {
    check(&Scenario {
        name: "SNPs",
        marker: snps(),
        loci: 500,
        size: 200,
        samples: 100,
        generations: 10,
        plan_one: false,
        replicates: 100,
    });
}

/// Simulated truth (Ne = N = 200, census N): 20 microsatellites, plan I (non-lethal sampling).
#[test]
#[cfg_attr(debug_assertions, ignore = "statistical test: run with --release")]
fn microsatellites_ne_200_plan_one() {
    check(&Scenario {
        name: "microsatellites",
        marker: microsatellites(),
        loci: 20,
        size: 200,
        samples: 100,
        generations: 10,
        plan_one: true,
        replicates: 200,
    });
}
