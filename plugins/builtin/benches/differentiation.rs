//! Benchmark of the `differentiation` step on simulated data (figures in the README
//! "Performance" table):
//!
//! - 20 microsatellite-like loci (8–12 alleles) × 2,000 samples in 10 populations of 200, with
//!   the default parameters (1,000 permutations per pair, 1,000 bootstrap replicates): 45 pairs;
//! - 5,000 biallelic SNPs × 1,000 samples in 4 populations of 250 (6 pairs), with 100
//!   permutations per pair and 1,000 bootstrap replicates (the permutation test's cost grows
//!   linearly with the number of permutations);
//! - 20,000 biallelic SNPs × 1,200 samples in 6 populations of 200, each sampled in 2 years
//!   (15 pairs, years pooled), with the default parameters. Besides the criterion figure, one
//!   single timed run is printed (it is the README's figure for this case).
//!
//! Run with `cargo bench -p popgauge-builtin --bench differentiation`.

use std::hint::black_box;
use std::time::{Duration, Instant};

use criterion::{Criterion, criterion_group, criterion_main};
use popgauge_abi::{
    AlleleCode, AssessmentInfo, GenotypeMatrix, LocusMeta, SampleMeta, Seed, Step, StepContext, StepOutput,
};
use popgauge_builtin::steps::differentiation::{Differentiation, descriptor};
use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;
use serde_json::{Value, json};

/// Populations with mildly different allele frequencies (each population's frequencies are
/// the shared ones with random noise), genotypes in Hardy–Weinberg proportions, 2 % untyped.
/// A population's samples alternate between `years` sampling years from 2024 on.
fn simulated(
    populations: usize,
    per_population: usize,
    years: usize,
    loci: usize,
    alleles: impl Fn(usize) -> usize,
) -> GenotypeMatrix {
    let mut rng = ChaCha8Rng::seed_from_u64(2026);
    let samples: Vec<SampleMeta> = (0..populations)
        .flat_map(|p| {
            (0..per_population).map(move |i| SampleMeta {
                id: format!("P{p}-{i}"),
                population: format!("P{p}"),
                year: 2024 + (i % years) as i32,
            })
        })
        .collect();
    let mut codes = Vec::with_capacity(samples.len() * loci * 2);
    let mut locus_meta = Vec::with_capacity(loci);
    for locus in 0..loci {
        let k = alleles(locus);
        let shared: Vec<f64> = (0..k).map(|_| 0.2 + rng.random::<f64>()).collect();
        for _ in 0..populations {
            let weights: Vec<f64> = shared.iter().map(|w| w * (0.7 + 0.6 * rng.random::<f64>())).collect();
            let total: f64 = weights.iter().sum();
            for _ in 0..per_population {
                if rng.random::<f64>() < 0.02 {
                    codes.extend([AlleleCode::UNTYPED, AlleleCode::UNTYPED]);
                    continue;
                }
                for _ in 0..2 {
                    let mut remaining = rng.random::<f64>() * total;
                    let mut code = k;
                    for (a, w) in weights.iter().enumerate() {
                        if remaining < *w {
                            code = a + 1;
                            break;
                        }
                        remaining -= w;
                    }
                    codes.push(AlleleCode(code as u16));
                }
            }
        }
        let labels = (0..k).map(|a| (100 + 2 * a).to_string()).collect();
        locus_meta.push(LocusMeta { name: format!("L{locus}"), alleles: labels, chromosome: None, position: None });
    }
    GenotypeMatrix::new(samples, locus_meta, codes).expect("simulated matrix is well formed")
}

fn run(matrix: &GenotypeMatrix, params: &Value) -> StepOutput {
    let given = params.as_object().expect("params are an object").clone().into_iter().collect();
    let resolved = descriptor().resolve(&given).expect("benchmark parameters are valid");
    let (samples, loci) = (matrix.all_sample_indices(), matrix.all_locus_indices());
    let assessment = AssessmentInfo::default();
    let ctx = StepContext::new(matrix.full_view(&samples, &loci), &resolved, Seed(1)).with_assessment(&assessment);
    Differentiation.run(&ctx).expect("the step runs")
}

fn microsatellites(c: &mut Criterion) {
    let matrix = simulated(10, 200, 1, 20, |l| 8 + l % 5);
    let params = json!({});
    c.bench_function("differentiation 20 microsatellites x 2000 samples, 10 groups, 1000 permutations", |b| {
        b.iter(|| black_box(run(&matrix, &params)))
    });
}

fn snps(c: &mut Criterion) {
    let matrix = simulated(4, 250, 1, 5000, |_| 2);
    let params = json!({"permutations": 100});
    c.bench_function("differentiation 5000 SNPs x 1000 samples, 4 groups, 100 permutations", |b| {
        b.iter(|| black_box(run(&matrix, &params)))
    });
}

fn snp_panel(c: &mut Criterion) {
    let matrix = simulated(6, 200, 2, 20_000, |_| 2);
    let params = json!({});
    let start = Instant::now();
    black_box(run(&matrix, &params));
    println!(
        "differentiation 20,000 SNPs × 1,200 samples, 6 populations × 2 years, defaults: {:.2} s wall on {} threads",
        start.elapsed().as_secs_f64(),
        rayon::current_num_threads()
    );
    let mut group = c.benchmark_group("differentiation 20000 SNPs x 1200 samples");
    group.sample_size(10).measurement_time(Duration::from_secs(60));
    group.bench_function("6 populations x 2 years, defaults", |b| b.iter(|| black_box(run(&matrix, &params))));
    group.finish();
}

criterion_group! {
    name = benches;
    config = Criterion::default().sample_size(10);
    targets = microsatellites, snps, snp_panel
}
criterion_main!(benches);
