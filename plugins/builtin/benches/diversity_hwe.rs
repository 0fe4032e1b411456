//! Speed of `diversity` (with the default 1000 bootstrap replicates for the FIS interval) and
//! `hwe` (default 10,000 Monte Carlo draws for multi-allelic loci too large to enumerate) on
//! 20 microsatellite loci × 2,000 samples in 10 groups, on 5,000 SNPs × 1,000 samples in
//! 10 groups and on 20,000 SNPs × 1,200 samples in 12 groups (6 populations × 2 years). Genotypes are drawn in Hardy–Weinberg proportions from seeded random allele
//! frequencies, with 2% of cells untyped; nothing is read from disk. The README "Performance"
//! table records the figures.
//!
//! `cargo bench -p popgauge-builtin --bench diversity_hwe`

use std::time::Instant;

use criterion::{Criterion, criterion_group, criterion_main};
use popgauge_abi::{AlleleCode, AssessmentInfo, GenotypeMatrix, LocusMeta, SampleMeta, Seed, Step, StepContext};
use popgauge_builtin::steps::diversity::Diversity;
use popgauge_builtin::steps::hwe::Hwe;
use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;

/// `loci` loci with `alleles` alleles each (random frequencies per locus, shared by all
/// groups), `samples` samples spread evenly over `groups` groups (`groups / 2` populations ×
/// 2 years).
fn simulated(loci: usize, alleles: std::ops::RangeInclusive<usize>, samples: usize, groups: usize) -> GenotypeMatrix {
    let mut rng = ChaCha8Rng::seed_from_u64(20_261_130);
    let sample_meta: Vec<SampleMeta> = (0..samples)
        .map(|s| {
            let group = s * groups / samples;
            SampleMeta { id: format!("S{s}"), population: format!("Pop{}", group / 2), year: 2020 + (group % 2) as i32 }
        })
        .collect();
    let mut locus_meta = Vec::with_capacity(loci);
    let mut codes = Vec::with_capacity(2 * samples * loci);
    for l in 0..loci {
        let count = rng.random_range(alleles.clone());
        let weights: Vec<f64> = (0..count).map(|_| 0.05 + rng.random::<f64>()).collect();
        let total: f64 = weights.iter().sum();
        let draw_allele = |rng: &mut ChaCha8Rng| {
            let mut x = rng.random::<f64>() * total;
            for (a, w) in weights.iter().enumerate() {
                if x < *w {
                    return a as u16 + 1;
                }
                x -= w;
            }
            count as u16
        };
        for _ in 0..samples {
            if rng.random::<f64>() < 0.02 {
                codes.extend([AlleleCode::UNTYPED, AlleleCode::UNTYPED]);
            } else {
                codes.extend([AlleleCode(draw_allele(&mut rng)), AlleleCode(draw_allele(&mut rng))]);
            }
        }
        locus_meta.push(LocusMeta {
            name: format!("L{l}"),
            alleles: (1..=count).map(|a| a.to_string()).collect(),
            chromosome: None,
            position: None,
        });
    }
    GenotypeMatrix::new(sample_meta, locus_meta, codes).expect("a well-formed simulated matrix")
}

fn run(step: &dyn Step, matrix: &GenotypeMatrix) -> popgauge_abi::StepOutput {
    let params = step.descriptor().resolve(&Default::default()).expect("defaults are valid");
    let (samples, loci) = (matrix.all_sample_indices(), matrix.all_locus_indices());
    let assessment = AssessmentInfo::default();
    let ctx = StepContext::new(matrix.full_view(&samples, &loci), &params, Seed(1)).with_assessment(&assessment);
    step.run(&ctx).expect("the step runs")
}

/// One timed run, printed for the README table.
fn report(step: &dyn Step, name: &str, matrix: &GenotypeMatrix) {
    let start = Instant::now();
    let output = run(step, matrix);
    let seconds = start.elapsed().as_secs_f64();
    let monte_carlo = output.findings.iter().find(|f| f.code == "hwe-monte-carlo").map(|f| f.message.clone());
    println!(
        "{} {name}: {seconds:.3} s on {} threads{}",
        step.descriptor().uses,
        rayon::current_num_threads(),
        monte_carlo
            .map(|m| format!(" ({} by Monte Carlo)", m.split(" had ").next().unwrap_or_default()))
            .unwrap_or_default()
    );
}

fn bench(c: &mut Criterion) {
    let microsatellites = simulated(20, 8..=16, 2_000, 10);
    let snps = simulated(5_000, 2..=2, 1_000, 10);
    let panel = simulated(20_000, 2..=2, 1_200, 12);
    for (step, uses) in [(&Diversity as &dyn Step, "diversity"), (&Hwe as &dyn Step, "hwe")] {
        report(step, "20 microsatellites × 2,000 samples, 10 groups", &microsatellites);
        report(step, "5,000 SNPs × 1,000 samples, 10 groups", &snps);
        report(step, "20,000 SNPs × 1,200 samples, 12 groups", &panel);
        let mut group = c.benchmark_group(uses);
        group.sample_size(10);
        group.bench_function("20 msats x 2000", |b| b.iter(|| run(step, &microsatellites)));
        group.bench_function("5000 SNPs x 1000", |b| b.iter(|| run(step, &snps)));
        group.bench_function("20000 SNPs x 1200", |b| b.iter(|| run(step, &panel)));
        group.finish();
    }
}

criterion_group!(benches, bench);
criterion_main!(benches);
