//! `diversity`: heterozygosity and inbreeding per group (population, year) and per locus.
//!
//! # Method
//! At each locus of the view, in each group, *n* is the number of individuals typed at both
//! alleles (code 0 = untyped is left out locus by locus, never imputed) and:
//!
//! - `ho`, observed heterozygosity, is the share of those *n* that are heterozygous;
//! - `he` is the unbiased expected heterozygosity of Nei (1978),
//!   2n/(2n − 1) · (1 − Σ p̂ᵤ²);
//! - `f` = 1 − Ho/He.
//!
//! A locus typed in fewer than two individuals of a group leaves Ho, He and F `null` there and
//! is left out of that group's means. Per group, `ho` and `he` are unweighted means over the
//! remaining loci, `alleles_mean` the mean number of distinct alleles over them, and `f` the
//! ratio of sums 1 − ΣHo/ΣHe over them (METHODS §1; not the mean of per-locus F). `f` is
//! `null` when He (or ΣHe) is 0. The loci are those of the view: `validate` has already dropped
//! the loci monomorphic in the whole data set, so every group uses the same loci.
//!
//! This version leaves `fis` (Weir & Cockerham 1984) with its bootstrap interval, `ar` and
//! `par` (rarefaction) `null`; the parameters `bootstrap` and `rarefaction_size` are declared
//! now so recipes validate, and are used from the next version.
//!
//! # Tables
//! - `by_locus`: population, year, locus, n, alleles, ho, he, f, fis.
//! - `by_group`: population, year, n (samples in the group), loci (loci with n ≥ 2), ho, he, f,
//!   fis, fis_low, fis_high, ar, par, alleles_mean.
//!
//! # Findings
//! `low-sample-size` (warning) for a group of fewer than 10 samples, `few-loci` (warning) for
//! a group with fewer than 5 usable loci (both thresholds METHODS §1), and one `f-definition`
//! (info) stating how F is computed.
//!
//! # Citation
//! Nei M (1978) Estimation of average heterozygosity and genetic distance from a small number
//! of individuals. *Genetics* 89:583–590.

use popgauge_abi::{
    AlleleCounts, Cell, Descriptor, Finding, GenotypeView, Group, ParamKind, Step, StepContext, StepError, StepOutput,
    Table, Where,
};
use serde::Deserialize;
use serde_json::{Value, json};

use crate::stats::heterozygosity::{LocusHeterozygosity, NEI_1978, ratio_of_sums_inbreeding};
use crate::stats::mean;

/// A group with fewer samples than this gets a `low-sample-size` warning (METHODS §1).
pub const LOW_SAMPLE_SIZE: usize = 10;
/// A group with fewer usable loci than this gets a `few-loci` warning (METHODS §1).
pub const FEW_LOCI: usize = 5;

/// Parameters of `diversity`, as resolved from the descriptor (defaults live there).
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Params {
    /// Bootstrap replicates over loci for the FIS confidence interval (0 = no interval).
    pub bootstrap: u32,
    /// Individuals per group for rarefied allelic richness; `None` means the smallest group.
    pub rarefaction_size: Option<u32>,
}

/// The descriptor of `diversity`: its name, version and parameters with defaults.
pub fn descriptor() -> Descriptor {
    Descriptor::new(
        "diversity",
        "0.1.0",
        "Observed and unbiased expected heterozygosity, F and allele counts per group and locus",
    )
    .param(
        "bootstrap",
        ParamKind::Integer { min: 0, max: 1_000_000 },
        json!(1000),
        "bootstrap replicates over loci for the FIS confidence interval (used from the next version)",
    )
    .param(
        "rarefaction_size",
        ParamKind::Integer { min: 2, max: 1_000_000 },
        Value::Null,
        "individuals per group for allelic richness; null = the smallest group (used from the next version)",
    )
}

/// The `diversity` step.
#[derive(Debug, Clone, Copy, Default)]
pub struct Diversity;

impl Step for Diversity {
    fn descriptor(&self) -> Descriptor {
        descriptor()
    }

    fn run(&self, ctx: &StepContext<'_>) -> Result<StepOutput, StepError> {
        // Read now so a descriptor/struct mismatch fails early; the values are used from the
        // next version.
        let _declared: Params = ctx.params_as()?;
        let groups = estimate_groups(&ctx.view);
        let mut output = StepOutput::default();
        output.tables.insert("by_locus".into(), by_locus_table(&ctx.view, &groups)?);
        output.tables.insert("by_group".into(), by_group_table(&groups)?);
        output.findings = collect_findings(&groups);
        output.citations = vec![NEI_1978.into()];
        Ok(output)
    }
}

/// Per-locus heterozygosity of one group, one entry per view locus.
struct GroupEstimates {
    group: Group,
    loci: Vec<LocusHeterozygosity>,
}

/// Multilocus summary of one group over its usable loci (n ≥ 2).
struct GroupSummary {
    usable_loci: usize,
    observed_mean: Option<f64>,
    expected_mean: Option<f64>,
    inbreeding: Option<f64>,
    alleles_mean: Option<f64>,
}

impl GroupEstimates {
    fn summarise(&self) -> GroupSummary {
        let usable: Vec<(f64, f64, usize)> =
            self.loci.iter().filter_map(|l| Some((l.observed?, l.expected?, l.distinct_alleles))).collect();
        GroupSummary {
            usable_loci: usable.len(),
            observed_mean: mean(usable.iter().map(|u| u.0)),
            expected_mean: mean(usable.iter().map(|u| u.1)),
            inbreeding: ratio_of_sums_inbreeding(usable.iter().map(|u| (u.0, u.1))),
            alleles_mean: mean(usable.iter().map(|u| u.2 as f64)),
        }
    }
}

fn estimate_groups(view: &GenotypeView<'_>) -> Vec<GroupEstimates> {
    let mut counts = AlleleCounts::default();
    let mut estimates = Vec::new();
    for group in view.groups() {
        let mut loci = Vec::with_capacity(view.n_loci());
        for locus in 0..view.n_loci() {
            view.allele_counts_into(locus, &group.samples, &mut counts);
            loci.push(LocusHeterozygosity::from_counts(&counts));
        }
        estimates.push(GroupEstimates { group, loci });
    }
    estimates
}

fn by_locus_table(view: &GenotypeView<'_>, groups: &[GroupEstimates]) -> Result<Table, StepError> {
    let mut table = Table::new(&["population", "year", "locus", "n", "alleles", "ho", "he", "f", "fis"]);
    for estimates in groups {
        for (locus, het) in estimates.loci.iter().enumerate() {
            table.push_row(vec![
                Cell::text(&estimates.group.population),
                Cell::Int(estimates.group.year.into()),
                Cell::text(&view.locus(locus).name),
                Cell::Int(het.typed.into()),
                Cell::Int(count_cell(het.distinct_alleles)),
                Cell::maybe(het.observed),
                Cell::maybe(het.expected),
                Cell::maybe(het.inbreeding()),
                Cell::Null,
            ])?;
        }
    }
    Ok(table)
}

fn by_group_table(groups: &[GroupEstimates]) -> Result<Table, StepError> {
    let mut table = Table::new(&[
        "population",
        "year",
        "n",
        "loci",
        "ho",
        "he",
        "f",
        "fis",
        "fis_low",
        "fis_high",
        "ar",
        "par",
        "alleles_mean",
    ]);
    for estimates in groups {
        let summary = estimates.summarise();
        table.push_row(vec![
            Cell::text(&estimates.group.population),
            Cell::Int(estimates.group.year.into()),
            Cell::Int(count_cell(estimates.group.samples.len())),
            Cell::Int(count_cell(summary.usable_loci)),
            Cell::maybe(summary.observed_mean),
            Cell::maybe(summary.expected_mean),
            Cell::maybe(summary.inbreeding),
            Cell::Null,
            Cell::Null,
            Cell::Null,
            Cell::Null,
            Cell::Null,
            Cell::maybe(summary.alleles_mean),
        ])?;
    }
    Ok(table)
}

fn collect_findings(groups: &[GroupEstimates]) -> Vec<Finding> {
    let mut findings = Vec::new();
    for estimates in groups {
        let (group, usable_loci) = (&estimates.group, estimates.summarise().usable_loci);
        let location = || Where::group(&group.population, group.year);
        let name = format!("{} {}", group.population, group.year);
        if group.samples.len() < LOW_SAMPLE_SIZE {
            findings.push(Finding::warning(
                "low-sample-size",
                format!(
                    "group {name} has {} samples, fewer than {LOW_SAMPLE_SIZE}: its heterozygosity and F are imprecise",
                    group.samples.len()
                ),
                location(),
            ));
        }
        if usable_loci < FEW_LOCI {
            findings.push(Finding::warning(
                "few-loci",
                format!(
                    "group {name} has {usable_loci} loci typed in at least two individuals, fewer than {FEW_LOCI}: \
                     its mean heterozygosity and F rest on few loci"
                ),
                location(),
            ));
        }
    }
    findings.push(f_definition_finding());
    findings
}

fn f_definition_finding() -> Finding {
    Finding::info(
        "f-definition",
        "F of a group is 1 − ΣHo/ΣHe over the loci typed in at least two of its individuals, with He \
         the unbiased expected heterozygosity of Nei (1978); per locus F = 1 − Ho/He is null where He = 0",
        Where::default(),
    )
}

/// A count as a table integer (counts never approach `i64::MAX`).
fn count_cell(count: usize) -> i64 {
    i64::try_from(count).unwrap_or(i64::MAX)
}

#[cfg(test)]
mod tests {
    use popgauge_abi::{AlleleCode, GenotypeMatrix, LocusMeta, SampleMeta};
    use rand::{RngExt, SeedableRng};
    use rand_chacha::ChaCha8Rng;

    use super::*;
    use crate::test_support::{MatrixBuilder, assert_close, findings_with, number, run_step, table};

    /// The four variants of the scikit-allel documentation example as loci V1–V4, three
    /// samples in one group.
    fn scikit_allel_example() -> GenotypeMatrix {
        MatrixBuilder::new(&["V1", "V2", "V3", "V4"])
            .sample("s1", "North", 2020, &["0/0", "0/0", "0/0", "1/1"])
            .sample("s2", "North", 2020, &["0/0", "0/1", "1/1", "1/2"])
            .sample("s3", "North", 2020, &["0/0", "1/1", "2/2", "./."])
            .build()
    }

    /// Source: scikit-allel 1.x documentation, docstring examples of `heterozygosity_observed`
    /// and `inbreeding_coefficient` (module `allel.stats.hw`): Ho = 0, 0.333333, 0, 0.5. He is
    /// computed with Nei's (1978) unbiased formula on the same data (METHODS §10 item 1):
    /// 0, 0.6, 0.8, 0.5, so F = null, 0.444444, 1, 0 (the documentation's F uses plug-in He).
    #[test]
    fn by_locus_matches_scikit_allel_example_with_nei_he() {
        let output = run_step(&Diversity, &scikit_allel_example(), json!({}));
        let by_locus = table(&output, "by_locus");
        let expected_ho = [0.0, 1.0 / 3.0, 0.0, 0.5];
        let expected_he = [0.0, 0.6, 0.8, 0.5];
        let expected_f = [None, Some(4.0 / 9.0), Some(1.0), Some(0.0)];
        let expected_n = [3.0, 3.0, 3.0, 2.0];
        for row in 0..4 {
            assert_close(number(by_locus, row, "ho").unwrap(), expected_ho[row], 1e-12);
            assert_close(number(by_locus, row, "he").unwrap(), expected_he[row], 1e-12);
            assert_eq!(number(by_locus, row, "n"), Some(expected_n[row]));
            match expected_f[row] {
                Some(f) => assert_close(number(by_locus, row, "f").unwrap(), f, 1e-12),
                None => assert_eq!(number(by_locus, row, "f"), None),
            }
            assert_eq!(number(by_locus, row, "fis"), None);
        }
        assert_close(number(by_locus, 1, "f").unwrap(), 0.444444, 1e-6);
        let alleles: Vec<_> = (0..4).map(|r| number(by_locus, r, "alleles")).collect();
        assert_eq!(alleles, vec![Some(1.0), Some(2.0), Some(3.0), Some(2.0)]);
    }

    /// Hand calculation on the scikit-allel example (He per Nei 1978, METHODS §10 item 1):
    /// ΣHo = 1/3 + 1/2 = 0.833333 and ΣHe = 0.6 + 0.8 + 0.5 = 1.9 over the 4 loci with n ≥ 2;
    /// ho = 0.833333/4 = 0.208333, he = 1.9/4 = 0.475, f = 1 − 0.833333/1.9 = 0.561404,
    /// alleles_mean = (1 + 2 + 3 + 2)/4 = 2.
    #[test]
    fn by_group_uses_means_and_ratio_of_sums() {
        let output = run_step(&Diversity, &scikit_allel_example(), json!({}));
        let by_group = table(&output, "by_group");
        assert_eq!(by_group.rows.len(), 1);
        assert_eq!((number(by_group, 0, "n"), number(by_group, 0, "loci")), (Some(3.0), Some(4.0)));
        assert_close(number(by_group, 0, "ho").unwrap(), 0.208333, 1e-6);
        assert_close(number(by_group, 0, "he").unwrap(), 0.475, 1e-12);
        assert_close(number(by_group, 0, "f").unwrap(), 0.561404, 1e-6);
        assert_close(number(by_group, 0, "alleles_mean").unwrap(), 2.0, 1e-12);
        for column in ["fis", "fis_low", "fis_high", "ar", "par"] {
            assert_eq!(number(by_group, 0, column), None, "{column} is filled by the next version");
        }
    }

    /// Hand calculation (textbook formulas, METHODS §1): AA×3, AB×4, BB×2, BC×1 gives
    /// p = 0.5, 0.45, 0.05, He = 20/19 · (1 − 0.455) = 0.573684, Ho = 0.5,
    /// F = 1 − 0.5/0.573684 = 0.128440.
    #[test]
    fn hand_calculated_locus() {
        let cells = ["A/A", "A/A", "A/A", "A/B", "A/B", "A/B", "A/B", "B/B", "B/B", "B/C"];
        let mut builder = MatrixBuilder::new(&["L1"]);
        for (i, cell) in cells.iter().enumerate() {
            builder = builder.sample(&format!("s{i}"), "P", 2021, &[cell]);
        }
        let output = run_step(&Diversity, &builder.build(), json!({}));
        let by_locus = table(&output, "by_locus");
        assert_close(number(by_locus, 0, "he").unwrap(), 0.573684, 1e-6);
        assert_close(number(by_locus, 0, "ho").unwrap(), 0.5, 1e-12);
        assert_close(number(by_locus, 0, "f").unwrap(), 0.128440, 1e-6);
        assert_eq!(number(by_locus, 0, "alleles"), Some(3.0));
    }

    /// METHODS §1 edge case: n < 2 leaves Ho, He and F null at that locus in that group, and
    /// the locus is left out of the group's means (hand calculation: L1 alone, Ho = 1,
    /// He = 4/3 · 0.5 = 0.666667 with alleles 1,1,2,2 in group P).
    #[test]
    fn locus_typed_in_one_individual_is_null_and_left_out() {
        let matrix = MatrixBuilder::new(&["L1", "L2"])
            .sample("a", "P", 2020, &["1/2", "1/2"])
            .sample("b", "P", 2020, &["1/2", "./."])
            .build();
        let output = run_step(&Diversity, &matrix, json!({}));
        let by_locus = table(&output, "by_locus");
        assert_eq!(number(by_locus, 1, "n"), Some(1.0));
        assert_eq!(
            (number(by_locus, 1, "ho"), number(by_locus, 1, "he"), number(by_locus, 1, "f")),
            (None, None, None)
        );
        let by_group = table(&output, "by_group");
        assert_eq!(number(by_group, 0, "loci"), Some(1.0));
        assert_close(number(by_group, 0, "ho").unwrap(), 1.0, 1e-12);
        assert_close(number(by_group, 0, "he").unwrap(), 2.0 / 3.0, 1e-12);
        assert_close(number(by_group, 0, "f").unwrap(), -0.5, 1e-12);
    }

    /// METHODS §1: F is null when ΣHe = 0 (a group monomorphic at every locus).
    #[test]
    fn group_without_diversity_has_null_f() {
        let matrix = MatrixBuilder::new(&["L1"])
            .samples("p", "P", 2020, 3, &["1/1"])
            .samples("q", "Q", 2020, 3, &["1/2"])
            .build();
        let by_group = run_step(&Diversity, &matrix, json!({})).tables["by_group"].clone();
        assert_eq!(number(&by_group, 0, "he"), Some(0.0));
        assert_eq!(number(&by_group, 0, "f"), None);
        // Q: three 1/2 heterozygotes, Ho = 1, He = 6/5 · 0.5 = 0.6, F = 1 − 1/0.6 = −0.666667.
        assert_close(number(&by_group, 1, "f").unwrap(), 1.0 - 1.0 / 0.6, 1e-12);
    }

    /// METHODS §1: warn when n < 10 or fewer than 5 loci are usable; one info finding on how
    /// F is computed. Group A (12 samples, 5 loci) raises neither warning; B (4 samples, 3
    /// loci typed in at least two of them) raises both.
    #[test]
    fn small_groups_and_few_loci_are_flagged() {
        let matrix = MatrixBuilder::new(&["L1", "L2", "L3", "L4", "L5"])
            .samples("a", "A", 2020, 12, &["1/2", "1/2", "1/1", "2/2", "1/2"])
            .samples("b", "B", 2020, 3, &["1/2", "1/2", "1/1", "./.", "./."])
            .sample("b4", "B", 2020, &["1/1", "2/2", "1/2", "1/2", "./."])
            .build();
        let output = run_step(&Diversity, &matrix, json!({}));
        let low = findings_with(&output, "low-sample-size");
        assert_eq!(low.len(), 1);
        assert_eq!(low[0].location, Where::group("B", 2020));
        assert!(low[0].message.contains("4 samples"), "{}", low[0].message);
        let few = findings_with(&output, "few-loci");
        assert_eq!(few.len(), 1);
        assert_eq!(few[0].location, Where::group("B", 2020));
        assert!(few[0].message.contains("3 loci"), "{}", few[0].message);
        assert_eq!(number(table(&output, "by_group"), 1, "loci"), Some(3.0));
        let info = findings_with(&output, "f-definition");
        assert_eq!(info.len(), 1);
        assert!(info[0].message.contains("1 − ΣHo/ΣHe"));
        assert_eq!(output.citations, vec![NEI_1978.to_string()]);
    }

    /// Genotype frequencies under inbreeding F (common practice; METHODS §1):
    /// P(AᵤAᵤ) = pᵤ² + pᵤ(1 − pᵤ)F, P(AᵤAᵥ) = 2pᵤpᵥ(1 − F). Returns (u, v, probability), u ≤ v.
    fn genotype_probabilities(frequencies: &[f64], inbreeding: f64) -> Vec<(u16, u16, f64)> {
        let mut table = Vec::new();
        for (u, &pu) in frequencies.iter().enumerate() {
            table.push((u as u16 + 1, u as u16 + 1, pu * pu + pu * (1.0 - pu) * inbreeding));
            for (v, &pv) in frequencies.iter().enumerate().skip(u + 1) {
                table.push((u as u16 + 1, v as u16 + 1, 2.0 * pu * pv * (1.0 - inbreeding)));
            }
        }
        table
    }

    fn draw_genotype(rng: &mut ChaCha8Rng, table: &[(u16, u16, f64)]) -> (u16, u16) {
        let mut remaining: f64 = rng.random();
        for &(u, v, probability) in table {
            if remaining < probability {
                return (u, v);
            }
            remaining -= probability;
        }
        let &(u, v, _) = table.last().expect("a locus has genotypes");
        (u, v)
    }

    /// 20 loci × 2000 individuals per group, 2–6 alleles with random frequencies; group "Inbred"
    /// drawn with F = 0.25 and group "Outbred" with F = 0.
    fn simulated_inbreeding_matrix(individuals: usize, loci: usize) -> GenotypeMatrix {
        let mut rng = ChaCha8Rng::seed_from_u64(20_261_130);
        let groups = [("Inbred", 0.25), ("Outbred", 0.0)];
        let samples: Vec<SampleMeta> = groups
            .iter()
            .flat_map(|(pop, _)| {
                (0..individuals).map(move |i| SampleMeta {
                    id: format!("{pop}{i}"),
                    population: pop.to_string(),
                    year: 2022,
                })
            })
            .collect();
        let mut locus_meta = Vec::new();
        let mut codes = Vec::new();
        for l in 0..loci {
            let allele_count = 2 + l % 5;
            let weights: Vec<f64> = (0..allele_count).map(|_| 0.2 + rng.random::<f64>()).collect();
            let total: f64 = weights.iter().sum();
            let frequencies: Vec<f64> = weights.iter().map(|w| w / total).collect();
            for &(_, inbreeding) in &groups {
                let probabilities = genotype_probabilities(&frequencies, inbreeding);
                let sum: f64 = probabilities.iter().map(|g| g.2).sum();
                assert_close(sum, 1.0, 1e-12);
                for _ in 0..individuals {
                    let (a, b) = draw_genotype(&mut rng, &probabilities);
                    codes.extend([AlleleCode(a), AlleleCode(b)]);
                }
            }
            let alleles = (1..=allele_count).map(|a| a.to_string()).collect();
            locus_meta.push(LocusMeta { name: format!("L{l}"), alleles, chromosome: None });
        }
        GenotypeMatrix::new(samples, locus_meta, codes).expect("simulated matrix is well formed")
    }

    /// Genotypes drawn with F = 0.25 (common practice formulas above) give a group `f` within
    /// ±0.03 of 0.25, and F = 0 gives `f` within ±0.03 of 0. The standard error of `f` here is
    /// about 0.006 (binomial Ho over 20 × 2000 genotypes), so ±0.03 is about five standard
    /// errors; the bias of Nei's He under inbreeding, F/(2n − 1), is below 0.0001.
    #[test]
    fn simulated_inbreeding_is_recovered() {
        let output = run_step(&Diversity, &simulated_inbreeding_matrix(2000, 20), json!({}));
        let by_group = table(&output, "by_group");
        assert_eq!(number(by_group, 0, "loci"), Some(20.0));
        assert_close(number(by_group, 0, "f").unwrap(), 0.25, 0.03);
        assert_close(number(by_group, 1, "f").unwrap(), 0.0, 0.03);
    }

    /// Common practice: the genotype probabilities under inbreeding sum to 1 and reduce to
    /// Hardy–Weinberg at F = 0 (p = 0.3, q = 0.7: 0.09, 0.42, 0.49) and to pᵤ homozygotes only
    /// at F = 1; biallelic F = 0.25: P(AA) = 0.09 + 0.21·0.25 = 0.1425, P(Aa) = 0.42·0.75 = 0.315.
    #[test]
    fn genotype_probabilities_under_inbreeding() {
        let hwe = genotype_probabilities(&[0.3, 0.7], 0.0);
        let probabilities: Vec<f64> = hwe.iter().map(|g| g.2).collect();
        for (p, expected) in probabilities.iter().zip([0.09, 0.42, 0.49]) {
            assert_close(*p, expected, 1e-12);
        }
        let inbred = genotype_probabilities(&[0.3, 0.7], 0.25);
        assert_close(inbred[0].2, 0.1425, 1e-12);
        assert_close(inbred[1].2, 0.315, 1e-12);
        assert_close(inbred[2].2, 0.49 + 0.21 * 0.25, 1e-12);
        let fully = genotype_probabilities(&[0.2, 0.3, 0.5], 1.0);
        let heterozygous: f64 = fully.iter().filter(|g| g.0 != g.1).map(|g| g.2).sum();
        assert_close(heterozygous, 0.0, 1e-12);
    }

    /// DESIGN: the parameter names are fixed; `rarefaction_size` defaults to null (the smallest
    /// group) and must be at least 2.
    #[test]
    fn parameters_are_declared_with_defaults() {
        let d = descriptor();
        assert!(d.check_defaults().is_ok());
        let resolved = d.resolve(&Default::default()).unwrap();
        assert_eq!(resolved["bootstrap"], json!(1000));
        assert_eq!(resolved["rarefaction_size"], Value::Null);
        let too_small = [("rarefaction_size".to_string(), json!(1))].into_iter().collect();
        assert!(d.resolve(&too_small).is_err());
        let given = [("rarefaction_size".to_string(), json!(8))].into_iter().collect();
        let params: Params = serde_json::from_value(json!(d.resolve(&given).unwrap())).unwrap();
        assert_eq!(params, Params { bootstrap: 1000, rarefaction_size: Some(8) });
    }
}
