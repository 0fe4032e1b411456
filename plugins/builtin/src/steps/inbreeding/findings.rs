//! The findings of `inbreeding`: the cautions, the frequency reference, the ROH scan and its
//! panel, small groups, and one finding per reason for the `null` cells of `individuals` and
//! `groups` (codes in the module doc of [`super`]).

use popgauge_abi::{Finding, FindingLevel, Group, Table, Where, format_number};

use super::roh::{BP_PER_MB, PanelRuns};
use super::tables::SUMMARISED;
use super::{LOW_SAMPLE_SIZE, Params};
use crate::special_values::{Row, explain, group_name, rows_where};

pub(super) fn collect(groups: &[Group], runs: &PanelRuns, params: &Params) -> Vec<Finding> {
    let mut findings = vec![caution(), frequency_reference()];
    for group in groups.iter().filter(|g| g.samples.len() < LOW_SAMPLE_SIZE) {
        findings.push(Finding::warning(
            "low-sample-size",
            format!(
                "group {} {} has {} samples, fewer than {LOW_SAMPLE_SIZE}: the allele frequencies that f_hom, f_uni, \
                 f_grm, smlh, ir and hl rest on are imprecise there, and g2 and its interval are imprecise too",
                group.population,
                group.year,
                group.samples.len()
            ),
            Where::group(&group.population, group.year),
        ));
    }
    findings.push(roh_scan(runs, params));
    findings
}

fn caution() -> Finding {
    Finding::info(
        "inbreeding-caution",
        "Individual inbreeding, heterozygosity and runs of homozygosity are estimates with uncertainty: a single \
         individual's value rests on the loci typed and, for F_ROH, on the scan's parameters and the panel's \
         density. Read group means with their spread and g2 with its interval. Decisions about a population follow \
         the local regulatory framework and a review of these results by a qualified geneticist.",
        Where::default(),
    )
}

fn frequency_reference() -> Finding {
    Finding::info(
        "f-reference",
        "f_hom, f_uni and f_grm (Yang et al. 2011: F̂_II, F̂_III, F̂_I), ir and hl use the allele frequencies of the \
         individual's own group (population and sampling year, the individual included), so they measure inbreeding \
         relative to that sample: their group mean is near 0 and an individual less homozygous than its group has a \
         negative value. f_roh needs no frequencies and is relative to the panel's genome length. None of these is \
         the drift inbreeding of a projection",
        Where::default(),
    )
}

fn roh_scan(runs: &PanelRuns, params: &Params) -> Finding {
    if !runs.available() {
        return Finding::info(
            "roh-not-available",
            format!(
                "no runs of homozygosity were sought: {} of the {} loci have a chromosome and a position, covering 0 \
                 bp, so f_roh, roh_count, roh_length_mb, roh_lt2_mb, roh_2to8_mb and roh_gt8_mb are null for every \
                 individual and the runs table is empty. Read the genotypes from a VCF (CHROM and POS) to find them",
                runs.panel.placed_loci(),
                runs.panel.placed_loci() + runs.panel.unplaced
            ),
            Where::default(),
        );
    }
    let unplaced = match runs.panel.unplaced {
        0 => String::new(),
        n => format!(" {n} loci without a chromosome or position are left out of the scan."),
    };
    Finding::info(
        "roh-scan",
        format!(
            "runs of homozygosity were sought on {} loci over {} chromosome(s) covering {} Mb (the genome length f_roh \
             divides by, McQuillan et al. 2008): a run opens at a homozygous call, may hold {} heterozygous and {} \
             untyped call(s), ends at a gap over {} bp, and is kept from {} bp and {} loci with at least {} loci per \
             Mb.{unplaced} At about 1 cM per Mb a run inherited from an ancestor g generations back is expected to be \
             100/(2g) cM long (Thompson 2013), so runs over 8 Mb point to common ancestors within about 6 \
             generations; shorter runs than the minimum are not seen, so f_roh does not count old inbreeding",
            runs.panel.placed_loci(),
            runs.panel.chromosomes.len(),
            format_number((runs.panel.length_bp() as f64 / BP_PER_MB * 100.0).round() / 100.0),
            params.roh_max_heterozygous,
            params.roh_max_missing,
            params.roh_max_gap_bp,
            params.roh_min_length_bp,
            params.roh_min_snps,
            format_number(params.roh_min_density),
        ),
        Where::default(),
    )
}

fn sample_name(row: &Row<'_>) -> String {
    format!("{} ({} {})", row.text("sample"), row.text("population"), row.text("year"))
}

/// One finding per reason for the null cells of `individuals` and `groups`.
pub(super) fn special_values(individuals: &Table, groups: &Table, params: &Params) -> Vec<Finding> {
    let untyped = rows_where(individuals, |r| r.text("loci") == "0", sample_name);
    let no_biallelic = rows_where(individuals, |r| r.text("loci") != "0" && r.is_null("f_hom"), sample_name);
    let undefined = rows_where(
        individuals,
        |r| r.text("loci") != "0" && (r.is_null("smlh") || r.is_null("ir") || r.is_null("hl")),
        |r| format!("{} ({})", sample_name(r), r.columns_where(&["smlh", "ir", "hl"], |r, c| r.is_null(c))),
    );
    let summary_columns: Vec<String> =
        SUMMARISED.iter().flat_map(|m| [format!("{m}_mean"), format!("{m}_sd")]).collect();
    let summary_names: Vec<&str> = summary_columns.iter().map(String::as_str).collect();
    let summaries = rows_where(
        groups,
        |r| summary_names.iter().any(|c| r.is_null(c)),
        |r| format!("{} ({})", group_name(r), r.columns_where(&summary_names, |r, c| r.is_null(c))),
    );
    let no_g2 = rows_where(
        groups,
        |r| r.is_null("g2"),
        |r| format!("{} (n = {}, {} polymorphic loci)", group_name(r), r.text("n"), r.text("g2_loci")),
    );
    let no_interval = rows_where(
        groups,
        |r| params.g2_bootstrap > 0 && r.is_finite("g2") && r.is_null("g2_low"),
        |r| format!("{} ({} defined replicates)", group_name(r), r.text("g2_replicates")),
    );
    let findings = [
        explain(FindingLevel::Warning, "no-typed-loci", &untyped, |n, list| {
            format!("{n} individual(s) are typed at no locus in play, so every measure of theirs is null: {list}")
        }),
        explain(FindingLevel::Info, "no-biallelic-loci", &no_biallelic, |n, list| {
            format!(
                "{n} individual(s) are typed at no locus with exactly two alleles in their group, so f_hom, f_uni and \
                 f_grm (defined for biallelic loci) are null; loci_biallelic counts such loci: {list}"
            )
        }),
        explain(FindingLevel::Info, "individual-measure-undefined", &undefined, |n, list| {
            format!(
                "{n} individual(s) are typed only at loci monomorphic in their group, so the measures named are null \
                 (their denominators are 0): {list}"
            )
        }),
        explain(FindingLevel::Info, "group-summary-undefined", &summaries, |n, list| {
            format!(
                "{n} group(s) have a null mean (no individual with the measure) or sd (fewer than two) for the \
                 columns named: {list}"
            )
        }),
        explain(FindingLevel::Info, "g2-undefined", &no_g2, |n, list| {
            format!(
                "{n} group(s) have no g2: it needs at least two individuals and two loci polymorphic in the group \
                 with heterozygotes in different individuals, so g2 and its interval and test are null: {list}"
            )
        }),
        explain(FindingLevel::Info, "g2-interval-undefined", &no_interval, |n, list| {
            format!(
                "{n} group(s) have g2 but a null g2_low and g2_high: fewer than two bootstrap replicates were defined; \
                 type more individuals: {list}"
            )
        }),
    ];
    let mut all: Vec<Finding> = findings.into_iter().flatten().collect();
    all.extend(g2_settings(params));
    all
}

fn g2_settings(params: &Params) -> Vec<Finding> {
    let interval = if params.g2_bootstrap == 0 {
        "g2_low and g2_high are null: the bootstrap is off (g2_bootstrap = 0)".to_string()
    } else {
        format!(
            "g2_low and g2_high are the 2.5th and 97.5th percentiles of {} bootstrap replicates drawing individuals \
             with replacement, from the step seed (g2_replicates counts the defined ones)",
            params.g2_bootstrap
        )
    };
    let test = if params.g2_permutations == 0 {
        Finding::info(
            "g2-test-disabled",
            "g2_p and g2_permutations are null: the permutation test is off (g2_permutations = 0)",
            Where::default(),
        )
    } else {
        Finding::info(
            "g2-test",
            format!(
                "g2_p is (b + 1)/(B + 1) over B = {} arrangements, each shuffling every locus's genotypes among the \
                 group's individuals, of which b give a g2 at least as large as observed; a small p means the \
                 individuals vary in inbreeding (David et al. 2007)",
                params.g2_permutations
            ),
            Where::default(),
        )
    };
    vec![Finding::info("g2-interval", interval, Where::default()), test]
}
