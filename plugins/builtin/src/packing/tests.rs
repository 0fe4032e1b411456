//! The packed and general paths give identical step outputs: counts are integers, so every
//! estimate built on them must agree bit for bit (the general path is the reference; common
//! practice). Outputs are compared through their `Debug` text, which spells every float to its
//! last bit (and tells −0 from +0).

use std::collections::BTreeMap;

use popgauge_abi::{
    AlleleCode, AssessmentInfo, GenotypeMatrix, LocusMeta, PopulationInfo, SampleMeta, Seed, Step, StepContext,
    StepOutput,
};
use proptest::prelude::*;
use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;
use serde_json::{Value, json};

use super::tests_support::general_and_packed;
use crate::steps::find;

/// The size of a simulated data set.
#[derive(Debug, Clone, Copy)]
struct Shape {
    populations: usize,
    years: usize,
    per_group: usize,
    loci: usize,
    seed: u64,
}

fn shape() -> impl Strategy<Value = Shape> {
    (1usize..=3, 1usize..=3, 1usize..=24, 1usize..=10, any::<u64>())
        .prop_map(|(populations, years, per_group, loci, seed)| Shape { populations, years, per_group, loci, seed })
}

/// Random genotypes: samples in shuffled order (so groups interleave across plane words);
/// loci mostly with two alleles, some with one or three, codes not always adjacent (1 and 3 of
/// three labels); up to 30 % untyped cells, some of them half typed.
fn simulate(shape: Shape) -> GenotypeMatrix {
    let mut rng = ChaCha8Rng::seed_from_u64(shape.seed);
    let mut samples = Vec::new();
    for p in 0..shape.populations {
        for y in 0..shape.years {
            for i in 0..shape.per_group {
                let year = 2010 + 3 * y as i32;
                samples.push(SampleMeta { id: format!("p{p}y{y}s{i}"), population: format!("Pop{p}"), year });
            }
        }
    }
    crate::stats::permutation::shuffle(&mut samples, &mut rng);
    let mut codes = Vec::with_capacity(2 * samples.len() * shape.loci);
    for _ in 0..shape.loci {
        let used: &[u16] = match rng.random_range(0..20) {
            0..2 => &[2],
            2..5 => &[1, 2, 3],
            5..8 => &[1, 3],
            _ => &[1, 2],
        };
        let missing = 0.3 * rng.random::<f64>();
        let draw = |rng: &mut ChaCha8Rng| used[rng.random_range(0..used.len())];
        for _ in &samples {
            let cell = if rng.random::<f64>() >= missing {
                [draw(&mut rng), draw(&mut rng)]
            } else if rng.random::<bool>() {
                [draw(&mut rng), 0]
            } else {
                [0, 0]
            };
            codes.extend(cell.map(AlleleCode));
        }
    }
    let loci = (0..shape.loci)
        .map(|l| LocusMeta {
            name: format!("L{l}"),
            alleles: vec!["A".into(), "C".into(), "G".into()],
            chromosome: None,
            position: None,
        })
        .collect();
    GenotypeMatrix::new(samples, loci, codes).expect("a well-formed simulated matrix")
}

/// Runs `uses` with `params` on every sample and locus, with a generation time and census
/// sizes so that `ne-temporal` estimates.
fn run(uses: &str, matrix: &GenotypeMatrix, params: &Value) -> StepOutput {
    let step: &dyn Step = find(uses).expect("a built-in step");
    let given: BTreeMap<String, Value> = params.as_object().expect("an object").clone().into_iter().collect();
    let resolved = step.descriptor().resolve(&given).expect("valid parameters");
    let (samples, loci) = (matrix.all_sample_indices(), matrix.all_locus_indices());
    let populations = (0..3)
        .map(|p| PopulationInfo { population: format!("Pop{p}"), census_size: Some(500.0), ..Default::default() })
        .collect();
    let assessment = AssessmentInfo { generation_time_years: Some(1.5), populations, ..Default::default() };
    let ctx = StepContext::new(matrix.full_view(&samples, &loci), &resolved, Seed(7)).with_assessment(&assessment);
    step.run(&ctx).expect("the step runs")
}

/// Every step that counts genotypes over sets of samples, with parameters that keep it quick.
fn steps(by_year: bool) -> Vec<(&'static str, Value)> {
    vec![
        ("validate", json!({"min_group_size": 1})),
        ("diversity", json!({"bootstrap": 50})),
        ("hwe", json!({"permutations": 200})),
        ("differentiation", json!({"permutations": 99, "bootstrap": 50, "by_year": by_year})),
        ("ne-temporal", json!({"plan": "II"})),
        ("ne-hetx", json!({})),
    ]
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(32))]

    /// Identical outputs from the packed and the general path on random data with untyped and
    /// half-typed cells and some loci with one or three alleles.
    #[test]
    fn packed_and_general_paths_give_identical_outputs(shape in shape(), by_year in any::<bool>()) {
        let matrix = simulate(shape);
        for (uses, params) in steps(by_year) {
            let (general, packed) = general_and_packed(|| format!("{:?}", run(uses, &matrix, &params)));
            prop_assert!(general == packed, "{uses} differs on {shape:?}:\n{general}\n{packed}");
        }
    }
}

/// The steps that run in parallel (`hwe` over groups, `differentiation` over pairs) give the
/// same output with one and two threads on the packed path.
#[test]
fn one_and_two_threads_give_identical_outputs() {
    let matrix = simulate(Shape { populations: 3, years: 2, per_group: 40, loci: 60, seed: 2026 });
    for (uses, params) in [("hwe", json!({})), ("differentiation", json!({"permutations": 199, "bootstrap": 100}))] {
        let with = |threads: usize| {
            let pool = rayon::ThreadPoolBuilder::new().num_threads(threads).build().expect("a thread pool");
            pool.install(|| format!("{:?}", run(uses, &matrix, &params)))
        };
        assert_eq!(with(1), with(2), "{uses}");
    }
}

/// The comparison can fail: the general-path switch really changes the path taken (a locus
/// of the simulated data is packed only when packing is on).
#[test]
fn the_switch_changes_the_path() {
    let matrix = simulate(Shape { populations: 2, years: 1, per_group: 10, loci: 5, seed: 1 });
    let (samples, loci) = (matrix.all_sample_indices(), matrix.all_locus_indices());
    let view = matrix.full_view(&samples, &loci);
    let (general, packed) = general_and_packed(|| super::pack(view).packed_loci());
    assert_eq!(general, 0);
    assert!(packed > 0);
}
