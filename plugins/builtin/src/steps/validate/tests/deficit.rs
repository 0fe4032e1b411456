//! Heterozygote deficits and null alleles in `validate`: the null-allele indication per locus,
//! Hardy–Weinberg panels flagged within the false discovery rate, and planted deficits found.

use super::*;

/// Three groups of 10. L1: 5 × 1/1 and 5 × 2/2 in every group, so Ho = 0 and He = 200/380 =
/// 0.526316 (Nei 1978), r = 0.526316/1.526316 = 10/29 = 0.344828. L2: 3 × 1/1, 4 × 1/2,
/// 3 × 2/2, Ho = 0.4, r = 0.126316/1.526316 = 12/145 = 0.082759. L3: the L1 pattern in group A
/// only, the L2 pattern elsewhere: mean r = (10/29 + 2 · 12/145)/3 = 0.170115. Hand
/// calculations; the Brookfield (1996) estimator-1 formula is from memory. L1 has no
/// heterozygote in 10 individuals in each group: exact p = 0.001364 (the Levene 1949 / Haldane
/// 1954 probabilities of the six possible tables summed by hand, exact factorials in Python),
/// q = 0.001364 · 9/4 = 0.0031 for the four such tests among 9 (Benjamini & Hochberg 1995), so
/// L1 is flagged in 3 of 3 groups; L3 only in group A, fewer than half, so it is not flagged.
#[test]
fn null_allele_indication_per_locus() {
    let deficit = ["1/1", "1/1", "1/1", "1/1", "1/1", "2/2", "2/2", "2/2", "2/2", "2/2"];
    let balanced = ["1/1", "1/1", "1/1", "1/2", "1/2", "1/2", "1/2", "2/2", "2/2", "2/2"];
    let mut builder = MatrixBuilder::new(&["L1", "L2", "L3"]);
    for population in ["A", "B", "C"] {
        for i in 0..10 {
            let l3 = if population == "A" { deficit[i] } else { balanced[i] };
            builder = builder.sample(&format!("{population}{i}"), population, 2020, &[deficit[i], balanced[i], l3]);
        }
    }
    let output = run(builder, json!({}));
    let loci = table(&output, "loci");
    assert_close(number(loci, 0, "null_allele").unwrap(), 10.0 / 29.0, 1e-12);
    assert_close(number(loci, 0, "null_allele").unwrap(), 0.344828, 1e-6);
    assert_close(number(loci, 1, "null_allele").unwrap(), 0.082759, 1e-6);
    assert_close(number(loci, 2, "null_allele").unwrap(), 0.170115, 1e-6);
    let counts: Vec<(Option<f64>, Option<f64>)> =
        (0..3).map(|l| (number(loci, l, "deficit_groups"), number(loci, l, "tested_groups"))).collect();
    assert_eq!(counts, vec![(Some(3.0), Some(3.0)), (Some(0.0), Some(3.0)), (Some(1.0), Some(3.0))]);
    let warnings = findings_with(&output, "heterozygote-deficit");
    assert_eq!(warnings.len(), 1);
    assert_eq!(warnings[0].location, Where::locus("L1"));
    assert!(warnings[0].message.contains("in 3 of the 3 groups where it was tested (A 2020, B 2020, C 2020)"));
    assert!(output.citations.iter().any(|c| c.starts_with("Brookfield JFY (1996)")));
    assert!(output.citations.iter().any(|c| c.starts_with("Benjamini Y")));
}

/// A seeded panel of biallelic loci in Hardy–Weinberg proportions: two groups of
/// `individuals`, each gene copy drawn independently with the locus's allele frequency
/// (uniform on 0.05–0.5), so any heterozygote deficit is sampling noise.
fn hardy_weinberg_panel(seed: u64, loci: usize, individuals: usize) -> GenotypeMatrix {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let names: Vec<String> = (0..loci).map(|l| format!("snp{l}")).collect();
    let mut rows: Vec<(String, &str, Vec<String>)> = Vec::new();
    for population in ["North", "South"] {
        for i in 0..individuals {
            rows.push((format!("{population}{i}"), population, Vec::with_capacity(loci)));
        }
    }
    for _ in 0..loci {
        let frequency = 0.05 + 0.45 * rng.random::<f64>();
        for row in &mut rows {
            let mut copy = || if rng.random::<f64>() < frequency { "A" } else { "G" };
            let (a, b) = (copy(), copy());
            row.2.push(format!("{a}/{b}"));
        }
    }
    let mut builder = MatrixBuilder::new(&names.iter().map(String::as_str).collect::<Vec<_>>());
    for (id, population, cells) in &rows {
        builder = builder.sample(id, population, 2020, &cells.iter().map(String::as_str).collect::<Vec<_>>());
    }
    builder.build()
}

/// Loci named in per-locus deficit warnings, whatever their wording.
fn flagged_loci(output: &StepOutput) -> Vec<String> {
    output
        .findings
        .iter()
        .filter(|f| f.code == "possible-null-allele" || f.code == "heterozygote-deficit")
        .filter_map(|f| f.location.locus.clone())
        .collect()
}

/// Benjamini & Hochberg (1995): when no locus departs from Hardy–Weinberg proportions, the
/// false-discovery rate equals the chance of any flag at all, at most 5 %. Twenty seeded
/// 474-SNP panels (20 individuals in each of two groups) may therefore show flags in about one
/// panel; four or more would happen with probability 0.016 (binomial, 20 panels, p = 0.05).
/// A threshold on Brookfield's r alone flags dozens of loci per panel from noise.
#[test]
fn hardy_weinberg_panels_are_flagged_no_more_than_the_false_discovery_rate_allows() {
    let (mut panels_with_flags, mut total) = (0, 0);
    for seed in 0..20 {
        let output = run_step(&Validate, &hardy_weinberg_panel(1_000 + seed, 474, 20), json!({}));
        let flagged = flagged_loci(&output);
        assert!(flagged.len() <= 24, "seed {seed}: {} loci flagged, more than 5 % of 474", flagged.len());
        panels_with_flags += usize::from(!flagged.is_empty());
        total += flagged.len();
    }
    println!("Hardy–Weinberg panels: {panels_with_flags} of 20 with a flag, {total} loci flagged in all");
    assert!(panels_with_flags <= 3, "{panels_with_flags} of 20 null panels have flags");
}

/// A microsatellite-like panel: `loci` loci with 6 alleles of unequal frequency in two groups
/// of 30, in Hardy–Weinberg proportions, except locus `Null`, which also carries a null allele
/// at frequency 0.25: a carrier of one copy shows as homozygous for its other allele, one with
/// two copies as untyped.
fn microsatellites_with_a_null_allele(seed: u64, loci: usize) -> GenotypeMatrix {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut names: Vec<String> = (1..loci).map(|l| format!("Ms{l:02}")).collect();
    names.push("Null".into());
    let visible = [0.3, 0.2, 0.2, 0.1, 0.1, 0.1];
    let labels = ["150", "154", "158", "162", "166", "170"];
    let mut rows: Vec<(String, &str, Vec<String>)> = Vec::new();
    for population in ["North", "South"] {
        for i in 0..30 {
            rows.push((format!("{population}{i}"), population, Vec::new()));
        }
    }
    for name in &names {
        let null_frequency = if name == "Null" { 0.25 } else { 0.0 };
        for row in &mut rows {
            let mut copy = || {
                let mut u = rng.random::<f64>();
                if u < null_frequency {
                    return None;
                }
                u = (u - null_frequency) / (1.0 - null_frequency);
                let mut cumulative = 0.0;
                for (label, p) in labels.iter().zip(visible) {
                    cumulative += p;
                    if u < cumulative {
                        return Some(*label);
                    }
                }
                Some(labels[5])
            };
            let cell = match (copy(), copy()) {
                (Some(a), Some(b)) => format!("{a}/{b}"),
                (Some(a), None) | (None, Some(a)) => format!("{a}/{a}"),
                (None, None) => "./.".into(),
            };
            row.2.push(cell);
        }
    }
    let mut builder = MatrixBuilder::new(&names.iter().map(String::as_str).collect::<Vec<_>>());
    for (id, population, cells) in &rows {
        builder = builder.sample(id, population, 2020, &cells.iter().map(String::as_str).collect::<Vec<_>>());
    }
    builder.build()
}

/// Brookfield (1996): a null allele shows as a heterozygote deficit. Planted at frequency 0.25
/// in a 6-allele locus (two groups of 30), it is flagged as a possible null allele, with the
/// corrected exact test (Monte Carlo p ≈ 1e−4, q well below 0.05 over 40 tests).
#[test]
fn a_planted_null_allele_is_still_flagged() {
    let output = run_step(&Validate, &microsatellites_with_a_null_allele(77, 20), json!({}));
    let null = findings_with(&output, "possible-null-allele");
    assert!(null.iter().any(|f| f.location == Where::locus("Null")), "{:?}", output.findings);
    let finding = null.iter().find(|f| f.location == Where::locus("Null")).unwrap();
    assert_eq!(finding.level, FindingLevel::Warning);
    assert!(finding.message.contains("in 2 of the 2 groups where it was tested"), "{}", finding.message);
    assert!(finding.message.contains("possibly a null allele"), "{}", finding.message);
    assert!(findings_with(&output, "heterozygote-deficit").is_empty());
    let loci = table(&output, "loci");
    let row = row_with(loci, "locus", "Null");
    assert_eq!((number(loci, row, "deficit_groups"), number(loci, row, "tested_groups")), (Some(2.0), Some(2.0)));
}

/// Null alleles are a microsatellite artefact: a two-allele locus with no heterozygotes in
/// both groups (10 × 1/1, 10 × 2/2; exact p = 1.3403e−6 per group, Wigginton et al. 2005 as
/// checked in `hwe_exact`) is reported as a heterozygote deficit, never as a null allele, and
/// the summary puts the number flagged beside the number expected by chance (5 % of 1).
#[test]
fn a_biallelic_locus_is_flagged_as_a_heterozygote_deficit() {
    let mut builder = MatrixBuilder::new(&["L1", "L2"]);
    for population in ["P", "Q"] {
        builder = builder.samples(&format!("{population}a"), population, 2020, 10, &["1/1", "1/1"]);
        builder = builder.samples(&format!("{population}b"), population, 2020, 10, &["2/2", "1/2"]);
    }
    let output = run(builder, json!({}));
    assert!(findings_with(&output, "possible-null-allele").is_empty());
    let deficit = findings_with(&output, "heterozygote-deficit");
    assert_eq!(deficit.len(), 1);
    assert_eq!((deficit[0].level, &deficit[0].location), (FindingLevel::Warning, &Where::locus("L1")));
    assert!(!deficit[0].message.contains("possibly a null allele"), "{}", deficit[0].message);
    let summary = findings_with(&output, "deficit-summary");
    assert_eq!(summary.len(), 1);
    assert!(
        summary[0].message.starts_with(
            "1 of 2 kept loci flagged for a significant heterozygote deficit (at two-allele loci: 1; possible null \
             alleles, at loci with more alleles: 0); of these flags, about 0.05 are expected to be chance findings at the false-discovery rate of 5%"
        ),
        "{}",
        summary[0].message
    );
}
