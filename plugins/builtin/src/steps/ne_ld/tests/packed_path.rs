//! The packed two-bit path of `ne-ld` against the general byte path: identical output on random
//! biallelic data (a property test), on groups past 31 blocks of 128 individuals, with a
//! multiallelic fallback and a resampling subset, and the AVX-512 and portable kernels alike.

use super::*;

/// Seeded random biallelic genotypes (`A`/`B`) for the packed-path checks: `groups` gives the
/// individuals of each (population, year), `missing` the share of untyped cells (in 1/1000),
/// `rare` the share of loci whose `B` allele is rare in every group; with `chromosomes`, loci
/// are spread over three chromosomes. Returns the matrix.
fn random_biallelic(seed: u64, groups: &[usize], loci: usize, missing: u64, chromosomes: bool) -> GenotypeMatrix {
    let names: Vec<String> = (0..loci).map(|l| format!("S{l}")).collect();
    let refs: Vec<&str> = names.iter().map(String::as_str).collect();
    let mut builder = MatrixBuilder::new(&refs);
    let mut state = seed.wrapping_mul(0x9e37_79b9_7f4a_7c15) | 1;
    let mut next = move || {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        state
    };
    // Per locus a frequency of B from 1/1000 to 1/2, so some loci fall below each Pcrit.
    let frequencies: Vec<u64> = (0..loci).map(|_| 1 + next() % 500).collect();
    for (g, &size) in groups.iter().enumerate() {
        for individual in 0..size {
            let cells: Vec<&str> = frequencies
                .iter()
                .map(|&p| {
                    if next() % 1000 < missing {
                        return "./.";
                    }
                    let copies = u8::from(next() % 1000 < p) + u8::from(next() % 1000 < p);
                    ["A/A", "A/B", "B/B"][usize::from(copies)]
                })
                .collect();
            builder = builder.sample(&format!("g{g}i{individual}"), &format!("P{}", g % 3), 2020 + g as i32, &cells);
        }
    }
    let matrix = builder.build();
    if !chromosomes {
        return matrix;
    }
    let names = ["c1", "c2", "c3"];
    let chromosome_names: Vec<Option<&str>> = (0..loci).map(|l| Some(names[l % 3])).collect();
    with_chromosomes(matrix, &chromosome_names)
}

/// Runs `ne-ld` with `params` on the full view through the given pair path.
fn run_path(matrix: &GenotypeMatrix, params: serde_json::Value, path: PairPath) -> StepOutput {
    let given = match params {
        serde_json::Value::Object(map) => map.into_iter().collect(),
        other => panic!("params must be an object, not {other}"),
    };
    let resolved = descriptor().resolve(&given).expect("valid test parameters");
    let (samples, loci) = (matrix.all_sample_indices(), matrix.all_locus_indices());
    let assessment = popgauge_abi::AssessmentInfo::default();
    let ctx =
        StepContext::new(matrix.full_view(&samples, &loci), &resolved, Seed(20_261_202)).with_assessment(&assessment);
    run_with(&ctx, path).expect("ne-ld runs")
}

/// True when the packed path serves every group of `matrix` (so an equivalence check is not
/// vacuous).
fn packed_serves_every_group(matrix: &GenotypeMatrix, individual_blocks: usize) -> bool {
    let (samples, loci) = (matrix.all_sample_indices(), matrix.all_locus_indices());
    let view = matrix.full_view(&samples, &loci);
    let chromosomes = chromosome_ids(&view);
    let criteria = [Criterion::Pcrit(0.05), Criterion::NoSingletons];
    view.groups().iter().all(|group| {
        let request = PackedRequest {
            group,
            loci: &loci,
            criteria: &criteria,
            groups: individual_blocks,
            chromosomes: &chromosomes,
        };
        PackedPanel::build(&view, &request, &group.samples).is_some()
    })
}

proptest::proptest! {
    #![proptest_config(proptest::prelude::ProptestConfig { cases: 40, ..Default::default() })]

    /// Check: the packed two-bit path and the general byte path give identical
    /// `ne-ld` output (every estimate, interval, count and finding, to the last bit) on random
    /// biallelic data with missing cells, rare alleles, chromosomes, several criteria and
    /// jackknife settings (with and without a resampling subset of loci); group sizes cover fewer individuals than jackknife groups, one and
    /// several 128-bit blocks.
    #[test]
    fn packed_and_general_paths_give_identical_estimates(
        seed in 0u64..1_000_000,
        sizes in proptest::collection::vec(proptest::sample::select(vec![2usize, 3, 7, 16, 17, 40, 129, 300]), 1..4),
        loci in 2usize..40,
        missing in proptest::sample::select(vec![0u64, 5, 50, 300]),
        chromosomes in proptest::bool::ANY,
        blocks in proptest::sample::select(vec![0usize, 1, 2, 5, 16]),
        pcrit in proptest::sample::select(vec![vec![0.05, 0.02, 0.01], vec![0.0], vec![0.1, 0.0]]),
        singletons in proptest::bool::ANY,
        resample_max_loci in proptest::sample::select(vec![2000usize, 12, 3]),
    ) {
        let matrix = random_biallelic(seed, &sizes, loci, missing, chromosomes);
        proptest::prop_assert!(packed_serves_every_group(&matrix, blocks));
        let params = json!({
            "pcrit": pcrit,
            "exclude_singletons": singletons,
            "individual_blocks": blocks,
            "resample_max_loci": resample_max_loci,
        });
        let packed = run_path(&matrix, params.clone(), PairPath::PackedWhenBiallelic);
        let general = run_path(&matrix, params, PairPath::General);
        proptest::prop_assert_eq!(packed, general);
    }
}

/// Check: more than 31 blocks of 128 individuals (the 8-bit partial counts are widened
/// before they overflow) give the same output on both paths; a locus with a third allele sends
/// its group to the general path.
#[test]
fn packed_path_large_groups_and_multiallelic_fallback() {
    let matrix = random_biallelic(7, &[4_100], 5, 20, false);
    assert!(packed_serves_every_group(&matrix, 16));
    let params = json!({"pcrit": [0.02], "exclude_singletons": false});
    let packed = run_path(&matrix, params.clone(), PairPath::PackedWhenBiallelic);
    assert_eq!(packed, run_path(&matrix, params.clone(), PairPath::General));
    assert_eq!(number(table(&packed, "estimates"), 0, "pairs"), Some(10.0));

    let three = MatrixBuilder::new(&["M1", "M2"])
        .sample("a", "P", 2020, &["A/B", "A/A"])
        .sample("b", "P", 2020, &["C/B", "A/B"])
        .sample("c", "P", 2020, &["A/A", "B/B"])
        .build();
    assert!(!packed_serves_every_group(&three, 16));
    assert_eq!(
        run_path(&three, params.clone(), PairPath::PackedWhenBiallelic),
        run_path(&three, params, PairPath::General)
    );
}

/// `resample_max_loci`: above the cap the jackknife over individuals runs on a seeded
/// subset of loci, said in a `resample-subset` finding; every other column is the same as with
/// the full jackknife (it does not depend on the jackknife), the resampling interval is still
/// given, and the same seed gives the same subset. At or below the cap nothing changes.
#[test]
fn jackknife_over_individuals_can_run_on_a_subset_of_loci() {
    let matrix = random_biallelic(11, &[60], 30, 10, false);
    let full = run_step(&NeLd, &matrix, json!({"pcrit": [0.02], "exclude_singletons": false}));
    let capped = json!({"pcrit": [0.02], "exclude_singletons": false, "resample_max_loci": 10});
    let subset = run_step(&NeLd, &matrix, capped.clone());
    let (full_rows, subset_rows) = (table(&full, "estimates"), table(&subset, "estimates"));
    for column in ["s", "comparisons", "r2", "ne", "ne_param_low", "ne_jack_low", "ne_jack_high", "pairs", "jack_df"] {
        assert_eq!(cell(full_rows, 0, column), cell(subset_rows, 0, column), "{column}");
    }
    assert!(number(subset_rows, 0, "ne_resample_low").is_some());
    assert_ne!(cell(full_rows, 0, "resample_df"), cell(subset_rows, 0, "resample_df"));
    let finding = &findings_with(&subset, "resample-subset")[0].message;
    assert!(finding.contains("subset of 10 loci") && finding.contains("with 30 loci"), "{finding}");
    assert!(findings_with(&full, "resample-subset").is_empty());
    assert_eq!(subset, run_step(&NeLd, &matrix, capped));
    let at_cap =
        run_step(&NeLd, &matrix, json!({"pcrit": [0.02], "exclude_singletons": false, "resample_max_loci": 30}));
    assert_eq!(full, at_cap);
}

/// The AVX-512 dense loop (tiles of eight rows by eight second loci) and the portable one give
/// the same pair sums to the last bit (compared by their printed form, which tells -0.0 from
/// +0.0), on random biallelic groups of 1 to 300 individuals (1 to 5 words per plane) and 1 to
/// 300 loci: partial tiles at the row ends, chunks that start and end inside a block of eight
/// rows, many blocks per chunk, and three or seven criteria. Skipped, with a message, on processors without AVX-512
/// VPOPCNTDQ, where only the portable kernel runs.
#[test]
fn avx512_and_portable_kernels_agree() {
    use super::super::packed::{Kernel, avx512_available, sum_pairs_packed_with};
    if !avx512_available() {
        eprintln!("no AVX-512 VPOPCNTDQ here: only the portable kernel runs");
        return;
    }
    #[cfg(target_arch = "x86_64")]
    for (seed, size, loci) in [
        (1, 1, 5),
        (2, 2, 9),
        (3, 63, 17),
        (4, 64, 8),
        (5, 100, 40),
        (6, 300, 33),
        (7, 129, 1),
        (8, 100, 300),
        (9, 40, 131),
        (10, 7, 77),
    ] {
        let matrix = random_biallelic(seed, &[size], loci, 30, seed % 2 == 0);
        let (samples, all) = (matrix.all_sample_indices(), matrix.all_locus_indices());
        let view = matrix.full_view(&samples, &all);
        let chromosomes = chromosome_ids(&view);
        let group = &view.groups()[0];
        let three = [Criterion::Pcrit(0.05), Criterion::Pcrit(0.0), Criterion::NoSingletons];
        // Seven criteria, more than one pass of the tiled loop sums at once.
        let seven = [0.3, 0.2, 0.1, 0.05, 0.02, 0.0].map(Criterion::Pcrit);
        let seven: Vec<Criterion> = seven.into_iter().chain([Criterion::NoSingletons]).collect();
        let criteria: &[Criterion] = if seed % 3 == 0 { &seven } else { &three };
        let request = PackedRequest { group, loci: &all, criteria, groups: 0, chromosomes: &chromosomes };
        let panel = PackedPanel::build(&view, &request, &group.samples).expect("biallelic");
        let cuts = ChunkCuts::new(&all);
        let portable = sum_pairs_packed_with(&panel, true, &cuts, Kernel::Portable);
        let tiled = sum_pairs_packed_with(&panel, true, &cuts, Kernel::Avx512);
        assert_eq!(format!("{portable:?}"), format!("{tiled:?}"), "seed {seed}");
        assert!(size < 3 || loci < 2 || portable[1].total.pairs > 0, "seed {seed}: some pairs are defined");
    }
}
