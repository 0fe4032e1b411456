//! Speed of `ne-ld` at SNP scale (10,000 SNPs × 200 individuals in one group) and on a large
//! microsatellite sample (20 loci × 2,000 individuals), one Pcrit criterion each, with and
//! without the jackknife over individuals. Prints pair·samples per second with the thread
//! count; the README "Performance" table records the figures.
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
    let given: BTreeMap<String, serde_json::Value> = [
        ("pcrit".to_string(), json!([0.02])),
        ("exclude_singletons".to_string(), json!(false)),
        ("individual_blocks".to_string(), json!(if jackknife { 16 } else { 0 })),
    ]
    .into_iter()
    .collect();
    let params = NeLd.descriptor().resolve(&given).expect("valid parameters");
    let (samples, loci) = (matrix.all_sample_indices(), matrix.all_locus_indices());
    let assessment = AssessmentInfo::default();
    let ctx = StepContext {
        view: matrix.full_view(&samples, &loci),
        params: &params,
        seed: Seed(1),
        earlier: &[],
        assessment: &assessment,
        input_findings: &[],
    };
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
fn report(name: &str, matrix: &GenotypeMatrix, jackknife: bool) {
    let (start, cpu_start) = (Instant::now(), cpu_seconds());
    let output = run(matrix, jackknife);
    let seconds = start.elapsed().as_secs_f64();
    let cpu = cpu_seconds().zip(cpu_start).map_or(f64::NAN, |(end, start)| end - start);
    let pairs = output.tables["estimates"].column_values("pairs").and_then(|mut c| c.next()?.as_f64()).unwrap_or(0.0);
    let rate = pairs * matrix.samples().len() as f64 / seconds;
    println!(
        "ne-ld {name}, jackknife over individuals {jackknife}: {seconds:.3} s wall, {cpu:.2} s CPU, {pairs} pairs × \
         {} samples = {rate:.3e} pair·samples/s (wall) on {} threads",
        matrix.samples().len(),
        rayon::current_num_threads()
    );
}

fn bench(c: &mut Criterion) {
    let snps = simulated(MarkerModel::Snp(SnpModel::default()), 10_000, 400, 200);
    let microsatellites = simulated(MarkerModel::Microsatellite(MicrosatelliteModel::default()), 20, 2_000, 2_000);
    for jackknife in [false, true] {
        report("10,000 SNPs × 200 samples", &snps, jackknife);
        report("20 microsatellites × 2,000 samples", &microsatellites, jackknife);
    }
    let mut group = c.benchmark_group("ne-ld");
    group.sample_size(10);
    for jackknife in [false, true] {
        group.bench_function(format!("10k SNPs x 200, jackknife {jackknife}"), |b| b.iter(|| run(&snps, jackknife)));
        group.bench_function(format!("20 msats x 2000, jackknife {jackknife}"), |b| {
            b.iter(|| run(&microsatellites, jackknife))
        });
    }
    group.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
