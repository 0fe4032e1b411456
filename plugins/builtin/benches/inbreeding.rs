//! Speed of `inbreeding` at its defaults (ROH scan, 1000 bootstrap replicates and 199
//! permutations for g2 in every group) on 50,000 SNPs × 1,000 samples in 4 groups (2
//! populations × 2 years), the SNPs spread over 20 chromosomes of 100 Mb (one every 40 kb).
//! Genotypes are drawn in Hardy–Weinberg proportions from seeded random allele frequencies,
//! with 2% of cells untyped; one sample in five carries a homozygous block of 1–20 Mb on each
//! chromosome with probability ½, so that the scan has runs to find. Nothing is read from disk.
//!
//! `cargo bench -p popgauge-builtin --bench inbreeding`

use std::time::Instant;

use criterion::{Criterion, criterion_group, criterion_main};
use popgauge_abi::{AlleleCode, AssessmentInfo, GenotypeMatrix, LocusMeta, SampleMeta, Seed, Step, StepContext};
use popgauge_builtin::steps::inbreeding::Inbreeding;
use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;

const CHROMOSOMES: usize = 20;
const CHROMOSOME_BP: u64 = 100_000_000;

fn simulated(loci: usize, samples: usize, groups: usize) -> GenotypeMatrix {
    let mut rng = ChaCha8Rng::seed_from_u64(20_261_203);
    let sample_meta: Vec<SampleMeta> = (0..samples)
        .map(|s| {
            let group = s * groups / samples;
            SampleMeta { id: format!("S{s}"), population: format!("Pop{}", group / 2), year: 2020 + (group % 2) as i32 }
        })
        .collect();
    // Per sample and chromosome, an optional homozygous block (start, end) in bp.
    let blocks: Vec<Vec<Option<(u64, u64)>>> = (0..samples)
        .map(|s| {
            (0..CHROMOSOMES)
                .map(|_| {
                    (s % 5 == 0 && rng.random::<f64>() < 0.5).then(|| {
                        let length = rng.random_range(1_000_000..20_000_000);
                        let start = rng.random_range(0..CHROMOSOME_BP - length);
                        (start, start + length)
                    })
                })
                .collect()
        })
        .collect();
    let per_chromosome = loci / CHROMOSOMES;
    let spacing = CHROMOSOME_BP / per_chromosome as u64;
    let mut locus_meta = Vec::with_capacity(loci);
    let mut codes = Vec::with_capacity(2 * samples * loci);
    for l in 0..loci {
        let (chromosome, index) = (l / per_chromosome, l % per_chromosome);
        let position = spacing / 2 + index as u64 * spacing;
        let p = 0.05 + 0.9 * rng.random::<f64>();
        for block in blocks.iter().map(|b| b[chromosome]) {
            if rng.random::<f64>() < 0.02 {
                codes.extend([AlleleCode::UNTYPED, AlleleCode::UNTYPED]);
                continue;
            }
            let mut allele = || AlleleCode(1 + u16::from(rng.random::<f64>() < p));
            let first = allele();
            let homozygous = block.is_some_and(|(start, end)| (start..end).contains(&position));
            let second = if homozygous { first } else { allele() };
            codes.extend([first, second]);
        }
        locus_meta.push(LocusMeta {
            name: format!("chr{:02}:{position}", chromosome + 1),
            alleles: vec!["A".into(), "G".into()],
            chromosome: Some(format!("chr{:02}", chromosome + 1)),
            position: Some(position),
        });
    }
    GenotypeMatrix::new(sample_meta, locus_meta, codes).expect("a well-formed simulated matrix")
}

fn run(matrix: &GenotypeMatrix) -> popgauge_abi::StepOutput {
    let params = Inbreeding.descriptor().resolve(&Default::default()).expect("defaults are valid");
    let (samples, loci) = (matrix.all_sample_indices(), matrix.all_locus_indices());
    let assessment = AssessmentInfo::default();
    let ctx = StepContext::new(matrix.full_view(&samples, &loci), &params, Seed(1)).with_assessment(&assessment);
    Inbreeding.run(&ctx).expect("the step runs")
}

fn bench(c: &mut Criterion) {
    let panel = simulated(50_000, 1_000, 4);
    let start = Instant::now();
    let output = run(&panel);
    println!(
        "inbreeding 50,000 SNPs × 1,000 samples, 4 groups: {:.3} s ({} runs found)",
        start.elapsed().as_secs_f64(),
        output.tables["runs"].rows.len()
    );
    let mut group = c.benchmark_group("inbreeding");
    group.sample_size(10);
    group.bench_function("50000 SNPs x 1000", |b| b.iter(|| run(&panel)));
    group.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
