//! Overhead of an external step: the built-in `diversity` in process, the same step exported as
//! a plugin library (`tests/plugins/diversity-external`) loaded in process, and the same library
//! run in a child process (the default isolation), on 10,000 biallelic SNPs × 1,000 samples.
//!
//! Run with `cargo bench -p popgauge --bench plugin_overhead`. Besides criterion's timings it
//! prints the peak memory of each mode: for in-process modes the rise of this process's peak
//! resident set during one call (Linux `VmHWM`, reset through `/proc/self/clear_refs`), for the
//! child the peak resident set of the worker (`getrusage(RUSAGE_CHILDREN)`). The genotype codes
//! take 40 MB (10,000 × 1,000 × 2 codes × 2 bytes); a mode that copied the view per call would
//! show another 40 MB.

use std::hint::black_box;
use std::path::PathBuf;
use std::process::Command;
use std::sync::Arc;
use std::time::Duration;

use criterion::Criterion;
use popgauge::host::{Isolation, PluginScratch, PluginSpec, load_plugin, worker::WORKER_ENV};
use popgauge::hash::sha256_hex;
use popgauge_abi::{
    AlleleCode, AssessmentInfo, GenotypeMatrix, LocusMeta, Params, SampleMeta, Seed, Step, StepContext,
};

const SAMPLES: usize = 1_000;
const LOCI: usize = 10_000;

/// Seeded synthetic SNP data: 4 groups of 250, allele frequency per locus from a fixed
/// sequence, about 2 % untyped cells.
fn matrix() -> GenotypeMatrix {
    let mut state: u64 = 0x5eed;
    let mut next = move || {
        state = state.wrapping_add(0x9e37_79b9_7f4a_7c15);
        let mut z = state;
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
        ((z ^ (z >> 31)) >> 11) as f64 / (1u64 << 53) as f64
    };
    let samples = (0..SAMPLES)
        .map(|s| SampleMeta { id: format!("s{s}"), population: format!("P{}", s % 2), year: 2020 + (s / 500) as i32 })
        .collect();
    let loci = (0..LOCI)
        .map(|l| LocusMeta {
            name: format!("snp{l}"),
            alleles: vec!["A".into(), "G".into()],
            chromosome: Some(format!("chr{}", l % 20)),
            position: Some(1 + 5_000 * l as u64),
        })
        .collect();
    let mut codes = Vec::with_capacity(SAMPLES * LOCI * 2);
    for l in 0..LOCI {
        let p = 0.05 + 0.9 * ((l * 7919) % 1000) as f64 / 1000.0;
        for _ in 0..SAMPLES {
            if next() < 0.02 {
                codes.extend([AlleleCode(0), AlleleCode(0)]);
            } else {
                let allele = |u: f64| AlleleCode(if u < p { 1 } else { 2 });
                codes.extend([allele(next()), allele(next())]);
            }
        }
    }
    GenotypeMatrix::new(samples, loci, codes).expect("well-formed synthetic matrix")
}

/// Builds the plugin crate with this cargo and profile and returns the library path.
fn plugin_library() -> PathBuf {
    let root = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("..");
    let mut command = Command::new(env!("CARGO"));
    command.args([
        "build",
        "--release",
        "-p",
        "popgauge-test-plugin-diversity-external",
        "--message-format=json-render-diagnostics",
    ]);
    let output = command.current_dir(root).output().expect("run cargo");
    assert!(output.status.success(), "{}", String::from_utf8_lossy(&output.stderr));
    String::from_utf8_lossy(&output.stdout)
        .lines()
        .filter_map(|l| serde_json::from_str::<serde_json::Value>(l).ok())
        .filter(|m| {
            m["reason"] == "compiler-artifact"
                && m["target"]["kind"].as_array().is_some_and(|k| k.iter().any(|k| k == "cdylib"))
        })
        .flat_map(|m| m["filenames"].as_array().cloned().unwrap_or_default())
        .filter_map(|f| f.as_str().map(PathBuf::from))
        .find(|f| f.extension().is_some_and(|e| e == "so" || e == "dylib"))
        .expect("a cdylib")
}

fn external(library: &PathBuf, isolation: Isolation) -> popgauge::host::ExternalStep {
    let bytes = std::fs::read(library).expect("read library");
    let spec = PluginSpec {
        shown: "libdiversity.so".into(),
        path: library.clone(),
        expected_sha256: Some(sha256_hex(&bytes)),
        isolation,
        timeout: Duration::from_secs(600),
    };
    let scratch: Arc<PluginScratch> = PluginScratch::new().expect("temporary folder");
    load_plugin(&spec, &scratch).expect("library loads")
}

/// `VmHWM` and `VmRSS` of this process in KiB (Linux).
fn memory_kib() -> (u64, u64) {
    let status = std::fs::read_to_string("/proc/self/status").unwrap_or_default();
    let field = |name: &str| {
        status
            .lines()
            .find(|l| l.starts_with(name))
            .and_then(|l| l.split_whitespace().nth(1))
            .and_then(|v| v.parse().ok())
            .unwrap_or(0)
    };
    (field("VmHWM:"), field("VmRSS:"))
}

/// Rise of the peak resident set above the current one during `call`, in MiB.
fn peak_rise_mib(call: impl FnOnce()) -> f64 {
    let _ = std::fs::write("/proc/self/clear_refs", "5");
    let (_, before) = memory_kib();
    call();
    let (peak, _) = memory_kib();
    peak.saturating_sub(before) as f64 / 1024.0
}

fn children_peak_mib() -> f64 {
    // SAFETY: `getrusage` writes into the zeroed struct we own.
    let mut usage: libc::rusage = unsafe { std::mem::zeroed() };
    // SAFETY: as above.
    unsafe { libc::getrusage(libc::RUSAGE_CHILDREN, &mut usage) };
    usage.ru_maxrss as f64 / 1024.0
}

fn main() {
    // The child worker is the popgauge binary of this build.
    // SAFETY: set before any thread of this process reads the environment.
    unsafe { std::env::set_var(WORKER_ENV, env!("CARGO_BIN_EXE_popgauge")) };
    let library = plugin_library();
    let m = matrix();
    let (samples, loci) = (m.all_sample_indices(), m.all_locus_indices());
    // No bootstrap, so that the step's own work does not hide the cost of crossing the boundary.
    let given = [("bootstrap".to_string(), serde_json::json!(0))].into_iter().collect();
    let params: Params = popgauge_builtin::steps::diversity::descriptor().resolve(&given).expect("valid parameters");
    let assessment = AssessmentInfo::default();
    let ctx = StepContext::new(m.full_view(&samples, &loci), &params, Seed(1)).with_assessment(&assessment);
    let builtin = popgauge_builtin::steps::diversity::Diversity;
    let in_process = external(&library, Isolation::InProcess);
    let child = external(&library, Isolation::Process);
    let reference = builtin.run(&ctx).expect("built-in runs");
    assert_eq!(in_process.run(&ctx).expect("in-process plugin runs"), reference, "same results in process");
    assert_eq!(child.run(&ctx).expect("child plugin runs"), reference, "same results in a child");

    let mut criterion =
        Criterion::default().configure_from_args().sample_size(10).measurement_time(Duration::from_secs(10));
    let mut group = criterion.benchmark_group("diversity 10k SNPs x 1k samples");
    group.bench_function("built-in", |b| b.iter(|| black_box(builtin.run(&ctx).expect("runs"))));
    group.bench_function("plugin in-process", |b| b.iter(|| black_box(in_process.run(&ctx).expect("runs"))));
    group.bench_function("plugin child process", |b| b.iter(|| black_box(child.run(&ctx).expect("runs"))));
    group.finish();
    criterion.final_summary();

    let builtin_peak = peak_rise_mib(|| drop(black_box(builtin.run(&ctx))));
    let in_process_peak = peak_rise_mib(|| drop(black_box(in_process.run(&ctx))));
    drop(black_box(child.run(&ctx)));
    println!("genotype codes: {:.1} MiB", std::mem::size_of_val(m.codes()) as f64 / 1048576.0);
    println!("peak memory rise during one call, built-in:          {builtin_peak:.1} MiB");
    println!("peak memory rise during one call, plugin in-process: {in_process_peak:.1} MiB");
    println!("peak resident set of the child worker:               {:.1} MiB", children_peak_mib());
}
