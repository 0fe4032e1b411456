//! Unit tests of `ne-ld` on small hand-made data; the simulation checks of bias and coverage
//! are in `coverage.rs`.

use popgauge_abi::{Cell, GenotypeMatrix, LocusMeta, Where};
use serde_json::json;

use super::estimate::{Mating, expected_sample_r2, ne_from_drift_r2, ne_from_r2, ne_interval};
use super::pairs::{Moments, row_chunks, weir_r_squared};
use super::panel::{Criterion, LANES, lane_dot};
use super::*;
use crate::stats::intervals::chi_square_interval;
use crate::test_support::{MatrixBuilder, assert_close, cell, findings_with, number, run_step, table};

mod packed_path;

/// 24 invented individuals at 6 loci (offspring of four invented parents, so the loci are in
/// LD), with missing cells and rare alleles `9`; the same rows are in
/// tests/reference/ne_formulas.py.
fn family_example() -> GenotypeMatrix {
    family_rows(24)
}

/// The first `count` rows of [`family_example`].
fn family_rows(count: usize) -> GenotypeMatrix {
    const ROWS: [[&str; 6]; 24] = [
        ["1/2", "A/A", "2/4", "x/x", "5/6", "./."],
        ["1/1", "A/B", "1/1", "x/y", "5/5", "a/b"],
        ["1/1", "A/A", "2/2", "./.", "5/6", "a/c"],
        ["2/2", "./.", "./.", "x/y", "./.", "./."],
        ["1/2", "A/A", "2/4", "x/x", "5/7", "a/c"],
        ["1/1", "A/B", "1/1", "x/x", "5/6", "a/a"],
        ["1/2", "A/A", "1/2", "x/y", "5/7", "a/b"],
        ["1/1", "A/A", "./.", "x/x", "5/6", "a/b"],
        ["1/1", "A/B", "2/2", "x/x", "5/5", "a/a"],
        ["1/1", "A/B", "1/2", "./.", "5/7", "a/a"],
        ["1/2", "A/A", "2/2", "x/x", "6/7", "a/a"],
        ["1/1", "A/A", "1/4", "9/x", "5/5", "a/b"],
        ["1/2", "A/A", "1/4", "x/x", "./.", "a/a"],
        ["1/1", "A/A", "1/2", "./.", "5/6", "a/a"],
        ["1/1", "./.", "2/2", "x/x", "5/6", "a/b"],
        ["1/1", "A/B", "1/2", "x/x", "5/6", "a/a"],
        ["1/1", "A/B", "1/2", "./.", "5/6", "./."],
        ["1/1", "A/B", "1/2", "x/x", "5/7", "a/c"],
        ["1/1", "A/B", "./.", "x/y", "5/6", "a/c"],
        ["1/1", "A/B", "2/9", "./.", "5/5", "a/c"],
        ["1/9", "A/B", "1/2", "x/x", "5/6", "9/a"],
        ["1/2", "A/A", "1/4", "x/x", "5/7", "a/a"],
        ["1/1", "A/B", "1/2", "x/x", "./.", "a/a"],
        ["./.", "A/A", "2/4", "x/x", "5/7", "a/a"],
    ];
    let mut builder = MatrixBuilder::new(&["L1", "L2", "L3", "L4", "L5", "L6"]);
    for (i, row) in ROWS.iter().take(count).enumerate() {
        builder = builder.sample(&format!("f{i}"), "Fam", 2021, row);
    }
    builder.build()
}

/// `matrix` with chromosome names given to its loci, in order.
fn with_chromosomes(matrix: GenotypeMatrix, chromosomes: &[Option<&str>]) -> GenotypeMatrix {
    let loci: Vec<LocusMeta> = matrix
        .loci()
        .iter()
        .zip(chromosomes)
        .map(|(locus, chromosome)| LocusMeta { chromosome: chromosome.map(str::to_string), ..locus.clone() })
        .collect();
    GenotypeMatrix::new(matrix.samples().to_vec(), loci, matrix.codes().to_vec()).unwrap()
}

fn moments_of(x: &[i64], y: &[i64]) -> Moments {
    Moments {
        samples: x.len() as i64,
        sums: [
            x.iter().sum(),
            x.iter().map(|v| v * v).sum(),
            y.iter().sum(),
            y.iter().map(|v| v * v).sum(),
            x.iter().zip(y).map(|(a, b)| a * b).sum(),
        ],
    }
}

/// Computed from Weir's composite r (re-derived from Burrows' composite count in
/// tests/reference/ne_formulas.py): r = 0.621670, r² = 0.386473, and Weir's factor
/// (S/(S − 1))² = (10/9)² gives r̂²_W = 0.477128.
#[test]
fn composite_r_with_weir_factor_matches_check_value() {
    let a = [2, 2, 1, 1, 1, 0, 0, 1, 2, 0];
    let b = [2, 1, 1, 2, 0, 0, 1, 0, 2, 0];
    let r2 = weir_r_squared(moments_of(&a, &b)).unwrap();
    assert_close(r2 / (10.0f64 / 9.0).powi(2), 0.386_473, 1e-6);
    assert_close(r2, 0.477_128, 1e-6);
    // A constant dosage has no variance, so r̂ is undefined (docs/methods.md, "LD-based Ne").
    assert_eq!(weir_r_squared(moments_of(&[1, 1, 1], &[0, 1, 2])), None);
    assert_eq!(weir_r_squared(moments_of(&[1], &[2])), None);
}

/// Computed from the Waples (2006) formulas (constants as in docs/methods.md, "LD-based Ne",
/// which were checked against independent re-implementations, not against the paper's
/// Table 1 — from memory for the paper itself); re-derived in tests/reference/ne_formulas.py
/// with scipy 1.17.1 χ² quantiles: S = 50, r̄² = 0.03, n′ = 300 → E = 0.021276, Ne = 36.0125,
/// CI (21.2314, 72.8177); r̄² = 0.0215 → Ne = 1486.02, CI (78.6534, inf); S = 20, r̄² = 0.08,
/// n′ = 150 → E = 0.058250, Ne = 12.2015, CI (4.31292, 46.8642).
#[test]
fn waples_formulas_match_check_values() {
    assert_close(expected_sample_r2(50.0), 0.021_276, 1e-9);
    assert_close(expected_sample_r2(20.0), 0.058_25, 1e-9);
    let cases = [
        (50.0, 0.03, 300.0, 36.0125, 21.231_407, 72.817_709),
        (50.0, 0.0215, 300.0, 1486.0224, 78.653_355, f64::INFINITY),
        (20.0, 0.08, 150.0, 12.2015, 4.312_922, 46.864_150),
    ];
    for (s, r2, df, ne, low, high) in cases {
        assert_close(ne_from_r2(r2, s, Mating::Random), ne, 1e-3);
        let interval = ne_interval(chi_square_interval(r2, df, 0.95).unwrap(), s, Mating::Random);
        assert_close(interval.low, low, 1e-4);
        if high.is_finite() {
            assert_close(interval.high, high, 1e-4);
        } else {
            assert_eq!(interval.high, f64::INFINITY);
        }
    }
}

/// docs/methods.md, "LD-based Ne": the two E(r²_sample) branches nearly meet at S = 30: 0.036878
/// and 0.036967 (tests/reference/ne_formulas.py; 0.0018 plus
/// 0.907/30 plus 4.44/900 is 0.0369667); r²′ ≤ 0 gives +∞; a negative discriminant takes the root as 0, so r²′ = 0.05 at S ≥ 30
/// gives (1/3)/(2·0.05) = 3.3333 (hand calculation); lifetime monogamy (constants from
/// memory for S < 30) gives 73.6147 at S = 50, r̄² = 0.03 and 26.7921 at S = 20, r̄² = 0.08
/// (tests/reference/ne_formulas.py).
#[test]
fn formula_edge_cases_and_monogamy() {
    assert_close(expected_sample_r2(30.0), 0.036_878, 1e-6);
    assert_close(expected_sample_r2(29.999_999), 0.036_966_7, 1e-6);
    assert_eq!(ne_from_drift_r2(0.0, 50.0, Mating::Random), f64::INFINITY);
    assert_eq!(ne_from_drift_r2(-0.01, 20.0, Mating::Random), f64::INFINITY);
    assert_close(ne_from_drift_r2(0.05, 50.0, Mating::Random), 10.0 / 3.0, 1e-12);
    assert_close(ne_from_r2(0.03, 50.0, Mating::Monogamy), 73.614_746, 1e-5);
    assert_close(ne_from_r2(0.08, 20.0, Mating::Monogamy), 26.792_111, 1e-5);
}

/// Rare-allele rule (docs/methods.md, "LD-based Ne"): drop frequency < Pcrit (keep exactly Pcrit),
/// no-singletons drops count 1 only (hand calculation).
#[test]
fn criteria_keep_and_drop_alleles() {
    assert!(Criterion::Pcrit(0.02).keeps(3, 150));
    assert!(!Criterion::Pcrit(0.02).keeps(2, 150));
    assert!(Criterion::Pcrit(0.05).keeps(5, 100));
    assert!(!Criterion::Pcrit(0.0).keeps(0, 100));
    assert!(Criterion::NoSingletons.keeps(2, 1000));
    assert!(!Criterion::NoSingletons.keeps(1, 10));
}

/// Independent calculation in tests/reference/ne_formulas.py (Burrows' composite counts per
/// allele pair, all four allele pairs of biallelic loci, p̂ᵤp̂ᵥ weights, per-pair S; scipy
/// 1.17.1 χ² quantiles) on [`family_example`]: every column except `ne_resample_*`, whose
/// jackknife groups follow the seeded order of individuals (checked on 16 individuals below).
#[test]
fn estimates_match_independent_python_calculation() {
    let output = run_step(&NeLd, &family_example(), json!({"pcrit": [0.15, 0.05, 0.0]}));
    let estimates = table(&output, "estimates");
    assert_eq!(estimates.rows.len(), 4);
    assert_eq!(cell(estimates, 3, "pcrit"), &Cell::text("singletons"));
    // (row, loci, pairs, s, n′, r̄², E, Ne, param interval, jack_df, jack low)
    let expected = [
        (
            0,
            4.0,
            6.0,
            19.872_717_211,
            9.0,
            0.126_282_395,
            0.058_683_106,
            2.278_130_479,
            (0.425_182_400, 287.972_569),
            6.335_810_8,
            0.296_636_134,
        ),
        (
            1,
            6.0,
            15.0,
            18.736_967_813,
            33.0,
            0.089_814_738,
            0.062_853_886,
            9.364_321_407,
            (1.660_234_689, f64::INFINITY),
            17.697_640_34,
            1.139_585_515,
        ),
        (
            2,
            6.0,
            15.0,
            18.556_808_942,
            69.0,
            0.091_150_331,
            0.063_570_603,
            9.094_441_105,
            (2.275_906_562, 87.815_104_283),
            20.703_992_614,
            1.244_942_558,
        ),
        (
            3,
            6.0,
            15.0,
            18.736_967_813,
            33.0,
            0.089_814_738,
            0.062_853_886,
            9.364_321_407,
            (1.660_234_689, f64::INFINITY),
            17.697_640_34,
            1.139_585_515,
        ),
    ];
    for (row, loci, pairs, s, comparisons, r2, r2_sample, ne, param, jack_df, jack_low) in expected {
        assert_eq!(number(estimates, row, "loci"), Some(loci), "row {row}");
        assert_eq!(number(estimates, row, "pairs"), Some(pairs), "row {row}");
        assert_eq!(number(estimates, row, "comparisons"), Some(comparisons), "row {row}");
        assert_close(number(estimates, row, "s").unwrap(), s, 1e-8);
        assert_close(number(estimates, row, "r2").unwrap(), r2, 1e-8);
        assert_close(number(estimates, row, "r2_sample").unwrap(), r2_sample, 1e-8);
        assert_close(number(estimates, row, "ne").unwrap(), ne, 1e-6);
        assert_close(number(estimates, row, "ne_param_low").unwrap(), param.0, 1e-6);
        assert_eq!(number(estimates, row, "ne_param_high").map(|v| v.is_infinite()), Some(param.1.is_infinite()));
        if param.1.is_finite() {
            assert_close(number(estimates, row, "ne_param_high").unwrap(), param.1, 1e-5);
        }
        assert_close(number(estimates, row, "jack_df").unwrap(), jack_df, 1e-6);
        assert_close(number(estimates, row, "ne_jack_low").unwrap(), jack_low, 1e-6);
        assert_eq!(cell(estimates, row, "ne_jack_high"), &Cell::Inf);
        assert!(number(estimates, row, "resample_df").unwrap() <= jack_df + 1e-9, "max(V_L, V_I) ≥ V_L");
    }
}

/// With 16 individuals each jackknife group holds one individual, so the jackknife over
/// individuals is the delete-one jackknife and does not depend on the seeded order: the
/// independent calculation in tests/reference/ne_formulas.py (retained alleles and weights
/// fixed, E(r²_sample) recomputed per replicate, V = max(V_L, V_I)) gives resample_df 10.643269
/// and 13.284790, lower bounds 0.527013 and 0.565839, for Pcrit 0.05 and 0.
#[test]
fn individual_jackknife_matches_python_on_sixteen_individuals() {
    let output = run_step(&NeLd, &family_rows(LANES), json!({"pcrit": [0.05, 0.0], "exclude_singletons": false}));
    let estimates = table(&output, "estimates");
    let expected =
        [(0, 7.255_017_064, 10.643_269_466, 0.527_013_176), (1, 4.497_000_518, 13.284_789_802, 0.565_839_089)];
    for (row, ne, resample_df, resample_low) in expected {
        assert_close(number(estimates, row, "ne").unwrap(), ne, 1e-6);
        assert_close(number(estimates, row, "resample_df").unwrap(), resample_df, 1e-6);
        assert_close(number(estimates, row, "ne_resample_low").unwrap(), resample_low, 1e-6);
        assert_eq!(cell(estimates, row, "ne_resample_high"), &Cell::Inf);
    }
}

/// The small-sample and small-data warnings of docs/methods.md, "Conventions" (S < 15, n′ < 10) and
/// few loci (common practice): 8 individuals at 3 biallelic loci whose ±1 dosage patterns are rows
/// of a Hadamard matrix, so every r̂ is exactly 0, r̄² = 0 < E(r²_sample) and Ne is "inf"
/// (hand calculation), with a finding explaining what "inf" means.
#[test]
fn uncorrelated_loci_give_inf_with_findings() {
    let patterns = [[0, 0, 2, 2, 0, 0, 2, 2], [0, 2, 0, 2, 0, 2, 0, 2], [0, 2, 2, 0, 0, 2, 2, 0]];
    let mut builder = MatrixBuilder::new(&["H1", "H2", "H3"]);
    for individual in 0..8 {
        let cells: Vec<&str> = patterns.iter().map(|p| if p[individual] == 2 { "A/A" } else { "B/B" }).collect();
        builder = builder.sample(&format!("h{individual}"), "Had", 2020, &cells);
    }
    let output = run_step(&NeLd, &builder.build(), json!({"pcrit": [0.05], "exclude_singletons": false}));
    let estimates = table(&output, "estimates");
    assert_eq!(number(estimates, 0, "r2"), Some(0.0));
    assert_eq!(cell(estimates, 0, "ne"), &Cell::Inf);
    assert_eq!(cell(estimates, 0, "ne_param_high"), &Cell::Inf);
    for code in ["low-sample-size", "few-comparisons", "few-loci", "infinite-estimate"] {
        let found = findings_with(&output, code);
        assert_eq!(found.len(), 1, "{code}");
        assert_eq!(found[0].location, Where::group("Had", 2020));
    }
    let infinite = &findings_with(&output, "infinite-estimate")[0].message;
    assert!(infinite.contains("cannot distinguish Ne from infinity") && infinite.contains("lower confidence bound"));
    // r̄² = 0 puts even the upper χ² bound of r² below E(r²_sample): the interval is ∞–∞, which
    // bounds nothing, so the finding says "not estimable", never "informative".
    assert_eq!(cell(estimates, 0, "ne_param_low"), &Cell::Inf);
    assert!(infinite.contains("not estimable") && !infinite.contains("informative"), "{infinite}");
    assert!(output.findings.iter().all(|f| !f.message.contains("NaN")));
}

/// docs/methods.md, "LD-based Ne": a group with a single polymorphic locus has no pair; its row is
/// null and a `no-estimate` finding says how to fix it. Ne is never negative (common practice).
#[test]
fn no_pairs_gives_null_row_and_finding() {
    let matrix = MatrixBuilder::new(&["M1", "M2"])
        .samples("a", "Solo", 2020, 6, &["1/2", "3/3"])
        .samples("b", "Solo", 2020, 6, &["1/1", "3/3"])
        .build();
    let output = run_step(&NeLd, &matrix, json!({"pcrit": [0.02], "exclude_singletons": false}));
    let estimates = table(&output, "estimates");
    assert_eq!(number(estimates, 0, "ne"), None);
    assert_eq!(number(estimates, 0, "s"), None);
    assert!(findings_with(&output, "no-estimate")[0].message.contains("lower pcrit"));
    let family = run_step(&NeLd, &family_example(), json!({}));
    for row in 0..family.tables["estimates"].rows.len() {
        for column in ["ne", "ne_param_low", "ne_jack_low", "ne_resample_low"] {
            assert!(number(&family.tables["estimates"], row, column).is_none_or(|v| v >= 0.0), "{column}");
        }
    }
}

/// Waples, Larson & Waples (2016): pairs on the same chromosome are skipped when
/// chromosomes are known. With L1–L3 on chromosome 1 and L4–L6 on chromosome 2, 6 of the 15
/// pairs are same-chromosome pairs, leaving 9 (hand count).
#[test]
fn same_chromosome_pairs_are_skipped() {
    let chromosomes = [Some("1"), Some("1"), Some("1"), Some("2"), Some("2"), Some("2")];
    let matrix = with_chromosomes(family_example(), &chromosomes);
    let params = json!({"pcrit": [0.0], "exclude_singletons": false});
    let skipped = run_step(&NeLd, &matrix, params.clone());
    assert_eq!(number(table(&skipped, "estimates"), 0, "pairs"), Some(9.0));
    assert!(findings_with(&skipped, "same-chromosome-pairs-skipped")[0].message.contains("6 pairs"));
    let kept =
        run_step(&NeLd, &matrix, json!({"pcrit": [0.0], "exclude_singletons": false, "skip_same_chromosome": false}));
    assert_eq!(number(table(&kept, "estimates"), 0, "pairs"), Some(15.0));
    assert!(findings_with(&kept, "same-chromosome-pairs-skipped").is_empty());
}

/// `max_loci` caps the panel at a seeded subset of that many loci, the same on every run and
/// listed in a finding (common practice for reproducibility).
#[test]
fn max_loci_uses_a_listed_seeded_subset() {
    let params = json!({"pcrit": [0.0], "exclude_singletons": false, "max_loci": 4});
    let first = run_step(&NeLd, &family_example(), params.clone());
    let second = run_step(&NeLd, &family_example(), params);
    assert_eq!(first, second);
    assert_eq!(number(table(&first, "estimates"), 0, "loci"), Some(4.0));
    let subset = &findings_with(&first, "loci-subset")[0].message;
    assert!(subset.starts_with("max_loci = 4 of 6 loci"), "{subset}");
    assert_eq!(subset.matches(", L").count() + 1, 4, "{subset}");
    assert!(findings_with(&run_step(&NeLd, &family_example(), json!({})), "loci-subset").is_empty());
}

/// STYLE (determinism): results do not depend on the number of threads — the pair chunks and
/// their merge order are fixed. 1, 2 and 3 threads on 60 loci give identical outputs.
#[test]
fn results_do_not_depend_on_thread_count() {
    let loci: Vec<String> = (0..60).map(|l| format!("S{l}")).collect();
    let names: Vec<&str> = loci.iter().map(String::as_str).collect();
    let mut builder = MatrixBuilder::new(&names);
    let mut state = 12_345u64;
    for individual in 0..40 {
        let cells: Vec<&str> = (0..60)
            .map(|_| {
                state = state.wrapping_mul(6_364_136_223_846_793_005).wrapping_add(1_442_695_040_888_963_407);
                ["A/A", "A/B", "B/B", "A/B", "./."][(state >> 33) as usize % 5]
            })
            .collect();
        builder = builder.sample(&format!("t{individual}"), "Thr", 2022, &cells);
    }
    let matrix = builder.build();
    let run_with = |threads: usize| {
        let pool = rayon::ThreadPoolBuilder::new().num_threads(threads).build().unwrap();
        pool.install(|| run_step(&NeLd, &matrix, json!({})))
    };
    let one = run_with(1);
    assert_eq!(one, run_with(2));
    assert_eq!(one, run_with(3));
    assert_eq!(number(table(&one, "estimates"), 0, "pairs"), Some(1770.0));
}

/// The chunks of pairs cover every row once, in order (the fixed reduction order), and the
/// lane sums add up to the plain dot product with position k in lane k mod G (hand check).
#[test]
fn pair_chunks_and_lane_sums() {
    for loci in [0, 1, 2, 3, 10, 100, 1001] {
        let chunks = row_chunks(loci, 8);
        let rows: Vec<usize> = chunks.iter().flat_map(|r| r.clone()).collect();
        assert_eq!(rows, (0..loci).collect::<Vec<_>>());
        assert!(chunks.len() <= 9, "{loci}: {chunks:?}");
    }
    let x: Vec<u8> = (0..37).map(|k| (k % 3) as u8).collect();
    let y: Vec<u8> = (0..37).map(|k| ((k / 2) % 3) as u8).collect();
    for groups in [1, 5, LANES] {
        let lanes = lane_dot(&x, &y, groups);
        for (lane, &sum) in lanes.iter().enumerate() {
            let expected: u32 =
                if lane < groups { (lane..37).step_by(groups).map(|k| u32::from(x[k] * y[k])).sum() } else { 0 };
            assert_eq!(sum, expected, "{groups} groups, lane {lane}");
        }
    }
    // 16-bit partial sums are widened before they can overflow: 2·2 summed over 16·20,000 + 5
    // positions gives 80,000 (or 80,004 in the first five lanes) per lane.
    let twos = vec![2u8; LANES * 20_000 + 5];
    let lanes = lane_dot(&twos, &twos, LANES);
    assert_eq!(lanes[0], 80_004);
    assert_eq!(lanes[LANES - 1], 80_000);
}

/// With `individual_blocks = 0` there is no jackknife over individuals, so the resampling
/// interval is null while the loci jackknife remains; with 4 groups it is defined.
#[test]
fn resampling_interval_can_be_switched_off() {
    let four = run_step(&NeLd, &family_example(), json!({"pcrit": [0.0], "individual_blocks": 4}));
    assert!(number(table(&four, "estimates"), 0, "ne_resample_low").is_some());
    let output = run_step(&NeLd, &family_example(), json!({"pcrit": [0.0], "individual_blocks": 0}));
    let estimates = table(&output, "estimates");
    assert_eq!(number(estimates, 0, "ne_resample_low"), None);
    assert!(number(estimates, 0, "ne_jack_low").is_some());
    // Results contract: the null interval is explained, naming the group, criterion and interval.
    assert!(findings_with(&four, "no-interval").is_empty());
    let missing = findings_with(&output, "no-interval");
    assert_eq!(missing.len(), 1);
    assert!(missing[0].message.contains("individual_blocks = 0 turns them off"), "{}", missing[0].message);
    let group = format!("{} {} Pcrit 0 (ne_resample), ", estimates.rows[0][0], estimates.rows[0][1]);
    assert!(missing[0].message.contains(&group), "{}", missing[0].message);
}

/// Interface: parameter names and defaults are fixed; `mating` is a closed choice and Pcrit lies
/// in [0, 0.5]; the `estimates` table carries the contract's columns in order.
#[test]
fn parameters_and_columns_follow_the_contract() {
    let d = descriptor();
    assert!(d.check_defaults().is_ok());
    let resolved = d.resolve(&Default::default()).unwrap();
    assert_eq!(resolved["pcrit"], json!([0.05, 0.02, 0.01]));
    assert_eq!(resolved["exclude_singletons"], json!(true));
    assert_eq!(resolved["skip_same_chromosome"], json!(true));
    assert_eq!(resolved["max_loci"], serde_json::Value::Null);
    assert_eq!(resolved["mating"], json!("random"));
    assert_eq!(resolved["individual_blocks"], json!(16));
    let bad = [("individual_blocks".to_string(), json!(17))].into_iter().collect();
    assert!(d.resolve(&bad).is_err());
    let bad = [("mating".to_string(), json!("polygyny"))].into_iter().collect();
    assert!(d.resolve(&bad).is_err());
    let bad = [("pcrit".to_string(), json!([0.7]))].into_iter().collect();
    assert!(d.resolve(&bad).is_err());
    let output = run_step(&NeLd, &family_example(), json!({}));
    let columns = &table(&output, "estimates").columns;
    let contract = [
        "population",
        "year",
        "pcrit",
        "s",
        "comparisons",
        "r2",
        "r2_sample",
        "ne",
        "ne_param_low",
        "ne_param_high",
        "ne_jack_low",
        "ne_jack_high",
    ];
    assert_eq!(&columns[..contract.len()], &contract);
    assert_eq!(table(&output, "estimates").rows.len(), 4, "three Pcrit values and no singletons");
    assert_eq!(findings_with(&output, "ne-ld-intervals").len(), 1);
    let caution = &findings_with(&output, "ne-interpretation")[0].message;
    assert!(
        caution.contains("uncertainty") && caution.contains("regulatory") && caution.contains("qualified geneticist")
    );
    assert_eq!(output.citations.len(), CITATIONS.len());
}
