//! Speed of `ne-ld` at SNP scale (20,000 SNPs × 100 individuals in one group, the size the
//! step is meant to handle; the packed biallelic path) and on a large microsatellite sample (20
//! loci × 2,000 individuals; the byte path), one Pcrit criterion each, with and without the
//! jackknife over individuals, plus the step's default criteria (three Pcrit values and no
//! singletons, served by one pass). Prints pair·samples per second with the thread count, and the
//! machine's AND-and-popcount rate over the same words, from which the kernel's ceiling
//! follows (nine counts per 64 individuals); the README "Performance" table records the
//! figures.
//!
//! `cargo bench -p popgauge-builtin --bench ne_ld`

use std::collections::BTreeMap;
use std::time::Instant;

use criterion::{Criterion, criterion_group, criterion_main};
use popgauge_abi::{AssessmentInfo, GenotypeMatrix, Seed, Step, StepContext};
use popgauge_builtin::steps::ne_ld::NeLd;
use popgauge_sim::{
    BurnIn, LocusSpec, MarkerModel, MicrosatelliteModel, MigrationSchedule, PopulationSpec, SampleRequest, Simulation,
    SimulationConfig, SizeSchedule, SnpModel,
};
use serde_json::json;

#[path = "../src/test_support/sim.rs"]
mod sim;

/// A simulated sample of `samples` individuals at `loci` loci of `marker`.
fn simulated(marker: MarkerModel, loci: usize, size: usize, samples: usize) -> GenotypeMatrix {
    let config = SimulationConfig {
        loci: LocusSpec::numbered("L", loci, marker),
        populations: vec![PopulationSpec::new("Bench", SizeSchedule::constant(size))],
        migration: MigrationSchedule::none(),
        burn_in: BurnIn { ancestral_size: size, generations: 10 },
    };
    let mut simulation = Simulation::new(config, 7).expect("valid simulation");
    simulation.advance_to(2).expect("constant size");
    let population = simulation.population_index("Bench").expect("configured");
    let set = simulation.sample(&SampleRequest::new(population, samples, 2024, "B")).expect("enough adults");
    sim::matrix_from_samples(&set)
}

fn run(matrix: &GenotypeMatrix, jackknife: bool) -> popgauge_abi::StepOutput {
    run_criteria(matrix, jackknife, false)
}

/// `ne-ld` with one Pcrit (0.02), or with the default criteria when `defaults` is set.
fn run_criteria(matrix: &GenotypeMatrix, jackknife: bool, defaults: bool) -> popgauge_abi::StepOutput {
    let mut given: BTreeMap<String, serde_json::Value> =
        [("individual_blocks".to_string(), json!(if jackknife { 16 } else { 0 }))].into_iter().collect();
    if !defaults {
        given.insert("pcrit".to_string(), json!([0.02]));
        given.insert("exclude_singletons".to_string(), json!(false));
    }
    let params = NeLd.descriptor().resolve(&given).expect("valid parameters");
    let (samples, loci) = (matrix.all_sample_indices(), matrix.all_locus_indices());
    let assessment = AssessmentInfo::default();
    let ctx = StepContext::new(matrix.full_view(&samples, &loci), &params, Seed(1)).with_assessment(&assessment);
    NeLd.run(&ctx).expect("ne-ld runs")
}

/// CPU seconds of this process so far, summed over threads (Linux `/proc/self/stat`, 100 ticks
/// per second); `None` elsewhere.
fn cpu_seconds() -> Option<f64> {
    let stat = std::fs::read_to_string("/proc/self/stat").ok()?;
    let fields: Vec<&str> = stat.rsplit_once(')')?.1.split_whitespace().collect();
    let ticks: f64 = fields.get(11)?.parse::<f64>().ok()? + fields.get(12)?.parse::<f64>().ok()?;
    Some(ticks / 100.0)
}

/// Pair·samples per second of one timed run, printed for the README table.
fn report(name: &str, matrix: &GenotypeMatrix, jackknife: bool, defaults: bool) {
    let (start, cpu_start) = (Instant::now(), cpu_seconds());
    let output = run_criteria(matrix, jackknife, defaults);
    let seconds = start.elapsed().as_secs_f64();
    let cpu = cpu_seconds().zip(cpu_start).map_or(f64::NAN, |(end, start)| end - start);
    let pairs = output.tables["estimates"].column_values("pairs").and_then(|mut c| c.next()?.as_f64()).unwrap_or(0.0);
    let rate = pairs * matrix.samples().len() as f64 / seconds;
    let criteria = if defaults { "default criteria (4)" } else { "one Pcrit" };
    println!(
        "ne-ld {name}, {criteria}, jackknife over individuals {jackknife}: {seconds:.3} s wall, {cpu:.2} s CPU, \
         {pairs} pairs × {} samples = {rate:.3e} pair·samples/s (wall) on {} threads",
        matrix.samples().len(),
        rayon::current_num_threads()
    );
}

/// The machine's rate of AND-and-count over 64-bit words on all threads, the operation the
/// packed kernel repeats nine times per 64 individuals of a pair, with the instructions the
/// kernel uses (AVX-512 VPOPCNTQ where available, else POPCNT): two arrays of 4,096 words (in
/// L1 cache, as the kernel's working rows are), counted 20,000 times per thread.
fn popcount_ceiling() -> f64 {
    use rayon::prelude::*;
    const WORDS: usize = 4_096;
    const REPEATS: usize = 20_000;
    let threads = rayon::current_num_threads();
    let start = Instant::now();
    let total: u64 = (0..threads)
        .into_par_iter()
        .map(|thread| {
            let x: Vec<u64> =
                (0..WORDS).map(|i| (i as u64 + thread as u64).wrapping_mul(0x9e37_79b9_7f4a_7c15)).collect();
            let y: Vec<u64> = x.iter().map(|v| v.rotate_left(17)).collect();
            (0..REPEATS).map(|r| and_count(&x, &y[..WORDS - (r & 1)])).sum::<u64>()
        })
        .sum();
    std::hint::black_box(total);
    (threads * WORDS * REPEATS) as f64 / start.elapsed().as_secs_f64()
}

/// Σ popcount(x ∧ y) with the kernel's instructions.
fn and_count(x: &[u64], y: &[u64]) -> u64 {
    #[cfg(target_arch = "x86_64")]
    {
        if std::is_x86_feature_detected!("avx512f") && std::is_x86_feature_detected!("avx512vpopcntdq") {
            // SAFETY: the processor has AVX-512 F and VPOPCNTDQ, checked just above.
            return unsafe { and_count_avx512(x, y) };
        }
        if std::is_x86_feature_detected!("popcnt") {
            // SAFETY: the processor has POPCNT, checked just above.
            return unsafe { and_count_popcnt(x, y) };
        }
    }
    x.iter().zip(y).map(|(a, b)| u64::from((a & b).count_ones())).sum()
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "popcnt")]
fn and_count_popcnt(x: &[u64], y: &[u64]) -> u64 {
    x.iter().zip(y).map(|(a, b)| u64::from((a & b).count_ones())).sum()
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx512f,avx512vpopcntdq")]
fn and_count_avx512(x: &[u64], y: &[u64]) -> u64 {
    use std::arch::x86_64::*;
    let n = x.len().min(y.len()) / 8 * 8;
    let mut sum = _mm512_setzero_si512();
    for i in (0..n).step_by(8) {
        // SAFETY: i + 8 ≤ n ≤ both lengths.
        let (a, b) =
            unsafe { (_mm512_loadu_si512(x.as_ptr().add(i).cast()), _mm512_loadu_si512(y.as_ptr().add(i).cast())) };
        sum = _mm512_add_epi64(sum, _mm512_popcnt_epi64(_mm512_and_si512(a, b)));
    }
    let tail: u64 = x[n..].iter().zip(&y[n..]).map(|(a, b)| u64::from((a & b).count_ones())).sum();
    _mm512_reduce_add_epi64(sum) as u64 + tail
}

fn bench(c: &mut Criterion) {
    let snps = simulated(MarkerModel::Snp(SnpModel::default()), 20_000, 400, 100);
    let microsatellites = simulated(MarkerModel::Microsatellite(MicrosatelliteModel::default()), 20, 2_000, 2_000);
    let and_counts = popcount_ceiling();
    println!(
        "AND-and-count of 64-bit words: {and_counts:.3e} per second on {} threads; kernel ceiling at nine per 64 \
         individuals: {:.3e} pair·samples/s",
        rayon::current_num_threads(),
        and_counts * 64.0 / 9.0
    );
    for jackknife in [false, true] {
        report("20,000 SNPs × 100 samples", &snps, jackknife, false);
        report("20 microsatellites × 2,000 samples", &microsatellites, jackknife, false);
    }
    report("20,000 SNPs × 100 samples", &snps, true, true);
    let mut group = c.benchmark_group("ne-ld");
    group.sample_size(10);
    for jackknife in [false, true] {
        group.bench_function(format!("20k SNPs x 100, jackknife {jackknife}"), |b| b.iter(|| run(&snps, jackknife)));
        group.bench_function(format!("20 msats x 2000, jackknife {jackknife}"), |b| {
            b.iter(|| run(&microsatellites, jackknife))
        });
    }
    group.bench_function("20k SNPs x 100, default criteria, jackknife true", |b| {
        b.iter(|| run_criteria(&snps, true, true))
    });
    group.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
