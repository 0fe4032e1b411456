//! `validate`: data checks and exclusions before any estimate.
//!
//! # Checks, in order
//! Samples are judged before loci, and loci only on the samples kept (common practice): a
//! group or a few samples that failed in the laboratory then cost those samples, not every
//! locus they left untyped.
//!
//! 1. **Reader findings** (bad cells found while reading, with file, line and column) are copied
//!    unchanged into this step's findings and counted per locus (`bad_cells`, matched on the
//!    finding's column = locus name). The readers have already treated those cells as untyped.
//! 2. **Duplicate sample ids**: one error-level `duplicate-sample-id` finding per repeated id.
//!    Both samples stay in play (an exclusion by id would drop both); the fix is in the data.
//! 3. **Monomorphic loci**: a locus with one allele (or none: typed in no sample) over all
//!    samples is excluded, so every group is described on the same loci, polymorphic in the
//!    whole data set (common practice).
//! 4. **Untyped groups**: a group (population, year) with no typed genotype at any locus kept by
//!    check 3 is named in a `group-untyped` warning and its samples are excluded.
//! 5. **Missingness per sample**, over the loci kept by check 3: a sample untyped at more than
//!    `max_missing_sample` of them is excluded.
//! 6. **Small groups**: a group with fewer than `min_group_size` samples left after check 5 gets
//!    a `small-group` warning and its samples are excluded (an untyped group is not named again).
//! 7. **Missingness per locus**, over the samples kept by checks 4–6: a locus untyped in more
//!    than `max_missing_locus` of them is excluded. With no sample kept, loci cannot be judged:
//!    a `no-samples-kept` error finding, and `missing` is null.
//! 8. **Duplicate multilocus genotypes** among the samples kept: pairs identical at every locus
//!    typed in both, typed together at `min_loci_for_duplicates` loci or more and at half the
//!    kept loci or more, are listed in one `duplicate-genotypes` warning and in the samples'
//!    `duplicate_of` column. Unless `keep_duplicates` is set, one sample of each identical set
//!    within a group (population, year) is kept and the others are excluded, each naming the
//!    kept one in its `reason`: the samples are visited by most loci typed, then input order,
//!    and one identical to a sample already kept in its group is excluded. An identical set thus
//!    keeps the sample typed at most loci, the earliest in the input on a tie. A repeated
//!    animal inflates the linkage disequilibrium of its group's sample and biases LD-based Ne
//!    downward (common practice); pairs in different groups are both kept, since one animal
//!    may rightly be in the samples of two years or places (details in `duplicates.rs`).
//! 9. **Monomorphic after the sample checks**: a kept locus left with one allele in the kept
//!    samples is excluded too, so later steps never see a monomorphic locus.
//! 10. **Heterozygote deficit** per kept locus and group of kept samples, by the rule the `hwe`
//!     step uses ([`crate::stats::hwe_groups`]): a Hardy–Weinberg exact test per locus and
//!     group, Benjamini & Hochberg (1995) q-values over all of them, and a flag where the
//!     deficit is significant (Ho < He, q < 0.05, Brookfield's r ≥ 0.05) in at least half the
//!     groups where the locus was tested. A flagged locus with three or more alleles gets a
//!     `possible-null-allele` warning; one with two alleles a `heterozygote-deficit` warning
//!     instead, since null alleles are an artefact of microsatellite amplification and a SNP's
//!     deficit has other usual suspects (calling error, inbreeding, a Wahlund effect). A
//!     `deficit-summary` info finding gives the number flagged beside the number expected by
//!     chance: at a false-discovery rate α, about α of the flagged loci are false discoveries,
//!     so α·N of N (Benjamini & Hochberg 1995). `null_allele` is Brookfield's (1996) estimator
//!     1, r = (He − Ho)/(1 + He), He unbiased (Nei 1978), negative r set to 0 (formula from
//!     memory), averaged over the groups where the locus is typed in at least two individuals.
//!     Every flag is an indication only: inbreeding and a Wahlund effect also cause a deficit.
//!
//! A `validation-summary` info finding gives the samples and loci kept and excluded.
//!
//! # Tables
//! - `loci`: locus, missing (share of the samples kept by checks 4–6 that are untyped at the
//!   locus; null when no sample is kept), alleles (distinct alleles in the samples kept at the
//!   end), status (`kept`/`excluded`), reason (null when kept), typed (samples kept by checks
//!   4–6 typed at the locus), bad_cells, null_allele (null for excluded loci), deficit_groups
//!   and tested_groups (groups with a significant deficit, groups where the locus was tested;
//!   null for excluded loci and when no sample is kept).
//! - `samples`: sample, population, year, missing (share of the loci kept by check 3 that are
//!   untyped; null when no locus was kept), status, reason, duplicate_of (ids of samples with an
//!   identical genotype, comma-separated, or null).
//! - `groups`: population, year, n_total, n_kept (samples kept at the end), status,
//!   n_passed_missingness (samples left after check 5, the count check 6 compares; 0 for an
//!   untyped group).
//!
//! Thresholds compare shares with "more than": a locus untyped in exactly 20 % of samples is
//! kept at `max_missing_locus = 0.2`.
//!
//! # Citations
//! Brookfield JFY (1996) A simple new method for estimating null allele frequency from
//! heterozygote deficiency. *Mol Ecol* 5:453–455. Nei M (1978) Estimation of average
//! heterozygosity and genetic distance from a small number of individuals. *Genetics*
//! 89:583–590. Benjamini Y, Hochberg Y (1995) Controlling the false discovery rate. *J R Stat
//! Soc B* 57:289–300. The exact tests' references are in [`crate::stats::hwe_exact`].

mod deficit;
mod duplicates;
mod findings;
mod output;
#[cfg(test)]
mod tests;

use std::collections::BTreeMap;

use popgauge_abi::{
    Descriptor, Finding, GenotypeView, LocusIdx, PackedGenotypes, ParamKind, SampleIdx, Step, StepContext, StepError,
    StepOutput, Where, format_number,
};

use crate::packing::pack;
use serde::Deserialize;
use serde_json::json;

use self::findings::{
    and_list, bad_cells_per_column, duplicate_check_skipped_finding, duplicate_id_findings, monomorphic_reason,
    no_loci_kept_finding, no_loci_left_finding, no_samples_kept_finding, percent, refuse_empty_view,
};
use crate::special_values::listing;
use duplicates::{DuplicatePair, Removal, choose_removals, find_duplicate_genotypes};

/// Parameters of `validate`, as resolved from the descriptor (defaults live there).
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Params {
    /// A locus untyped in more than this share of the kept samples is excluded.
    pub max_missing_locus: f64,
    /// A sample untyped at more than this share of the polymorphic loci is excluded.
    pub max_missing_sample: f64,
    /// Samples of a (population, year) group with fewer kept samples are excluded.
    pub min_group_size: usize,
    /// Whether every sample of a duplicate-genotype set is kept (otherwise one per group).
    pub keep_duplicates: bool,
    /// Fewest loci typed in both samples for a pair to count as a duplicate.
    pub min_loci_for_duplicates: usize,
}

/// The descriptor of `validate`: its name, version and parameters with defaults.
pub fn descriptor() -> Descriptor {
    Descriptor::new(
        "validate",
        "0.1.0",
        "Data checks and exclusions: bad cells, duplicate ids and genotypes, untyped groups, missingness, \
         monomorphic loci, small groups, heterozygote deficits",
    )
    .param(
        "max_missing_locus",
        ParamKind::Number { min: 0.0, max: 1.0 },
        json!(0.2),
        "a locus untyped in more than this share of the samples kept by the sample checks is excluded",
    )
    .param(
        "max_missing_sample",
        ParamKind::Number { min: 0.0, max: 1.0 },
        json!(0.5),
        "a sample untyped at more than this share of the polymorphic loci is excluded",
    )
    .param(
        "min_group_size",
        ParamKind::Integer { min: 1, max: 1_000_000 },
        json!(5),
        "samples of a (population, year) group with fewer kept samples are excluded, with a warning",
    )
    .param(
        "keep_duplicates",
        ParamKind::Boolean,
        json!(false),
        "keep every sample with an identical multilocus genotype (by default one of each identical set within a \
         group is kept: the one typed at most loci, the earliest on a tie)",
    )
    .param(
        "min_loci_for_duplicates",
        ParamKind::Integer { min: 1, max: 1_000_000 },
        json!(5),
        "two samples count as duplicates only when typed together at this many loci (and at half the kept loci) or more",
    )
}

/// The `validate` step.
#[derive(Debug, Clone, Copy, Default)]
pub struct Validate;

impl Step for Validate {
    fn descriptor(&self) -> Descriptor {
        descriptor()
    }

    fn run(&self, ctx: &StepContext<'_>) -> Result<StepOutput, StepError> {
        let params: Params = ctx.params_as()?;
        refuse_empty_view(&ctx.view)?;
        let mut screen = Screen::new(ctx.view, ctx.input_findings);
        let mut findings = ctx.input_findings.to_vec();
        findings.extend(duplicate_id_findings(&ctx.view));
        screen.exclude_monomorphic_loci(MonomorphicPass::WholeDataSet);
        findings.extend(screen.exclude_untyped_groups());
        findings.extend(screen.exclude_samples_by_missingness(params.max_missing_sample));
        findings.extend(screen.exclude_small_groups(params.min_group_size));
        findings.extend(screen.exclude_loci_by_missingness(params.max_missing_locus));
        findings.extend(screen.check_duplicate_genotypes(&params));
        screen.exclude_monomorphic_loci(MonomorphicPass::KeptSamples);
        findings.extend(screen.flag_heterozygote_deficits(ctx.seed));
        findings.push(screen.summary());
        screen.into_output(findings)
    }
}

/// The decisions so far about every sample, locus and group of the view.
struct Screen<'a> {
    view: GenotypeView<'a>,
    /// The view's biallelic loci packed, for counts over sets of samples.
    packed: PackedGenotypes<'a>,
    loci: Vec<LocusRecord>,
    samples: Vec<SampleRecord>,
    groups: Vec<GroupRecord>,
}

#[derive(Default)]
struct LocusRecord {
    /// Samples kept by the sample checks that are typed at the locus.
    typed: usize,
    /// Share of the samples kept by the sample checks untyped at the locus; `None` without any.
    missing: Option<f64>,
    bad_cells: usize,
    alleles: usize,
    null_allele: Option<f64>,
    /// (groups with a significant deficit, groups where tested), for kept loci.
    deficit: Option<(usize, usize)>,
    exclusion: Option<String>,
}

#[derive(Default)]
struct SampleRecord {
    missing: Option<f64>,
    duplicate_of: Vec<SampleIdx>,
    exclusion: Option<String>,
}

struct GroupRecord {
    population: String,
    year: i32,
    samples: Vec<SampleIdx>,
    passed_missingness: usize,
    excluded: bool,
}

#[derive(Clone, Copy)]
enum MonomorphicPass {
    /// Check 3: over all samples.
    WholeDataSet,
    /// Check 9: over the samples kept after the sample checks.
    KeptSamples,
}

impl<'a> Screen<'a> {
    fn new(view: GenotypeView<'a>, input_findings: &[Finding]) -> Screen<'a> {
        let bad_cells = bad_cells_per_column(input_findings);
        let loci = (0..view.n_loci())
            .map(|l| LocusRecord {
                bad_cells: bad_cells.get(view.locus(l).name.as_str()).copied().unwrap_or(0),
                ..LocusRecord::default()
            })
            .collect();
        let groups = view
            .groups()
            .into_iter()
            .map(|g| GroupRecord {
                population: g.population,
                year: g.year,
                samples: g.samples,
                passed_missingness: 0,
                excluded: false,
            })
            .collect();
        let samples = (0..view.n_samples()).map(|_| SampleRecord::default()).collect();
        Screen { view, packed: pack(view), loci, samples, groups }
    }

    fn kept_loci(&self) -> Vec<LocusIdx> {
        (0..self.loci.len()).filter(|&l| self.loci[l].exclusion.is_none()).collect()
    }

    fn kept_samples(&self) -> Vec<SampleIdx> {
        (0..self.samples.len()).filter(|&s| self.samples[s].exclusion.is_none()).collect()
    }

    fn kept_in(&self, group: &GroupRecord) -> Vec<SampleIdx> {
        group.samples.iter().copied().filter(|&s| self.samples[s].exclusion.is_none()).collect()
    }

    fn sample_id(&self, sample: SampleIdx) -> &'a str {
        &self.view.sample(sample).id
    }

    /// Checks 3 and 9; also records each locus's distinct alleles in the samples kept now.
    fn exclude_monomorphic_loci(&mut self, pass: MonomorphicPass) {
        let kept = self.packed.sample_set(&self.kept_samples());
        for (l, locus) in self.loci.iter_mut().enumerate() {
            locus.alleles = self.packed.allele_counts(l, &kept).distinct();
            if locus.exclusion.is_none() && locus.alleles <= 1 {
                locus.exclusion = Some(monomorphic_reason(pass, locus.alleles));
            }
        }
    }

    /// Check 4: a warning per group without a typed genotype, whose samples are excluded.
    fn exclude_untyped_groups(&mut self) -> Vec<Finding> {
        let kept_loci = self.kept_loci();
        if kept_loci.is_empty() {
            return Vec::new();
        }
        // The packing's columns are the view's samples, in order.
        let untyped = self.packed.untyped_per_column(&kept_loci);
        let mut findings = Vec::new();
        for group in &mut self.groups {
            if group.samples.iter().any(|&s| untyped[s] < kept_loci.len()) {
                continue;
            }
            group.excluded = true;
            let what = format!("has no typed genotype at any of the {} loci", kept_loci.len());
            for &s in &group.samples {
                self.samples[s].exclusion = Some(format!("its group {} {} {what}", group.population, group.year));
            }
            findings.push(Finding::warning(
                "group-untyped",
                format!(
                    "group {} {} {what} ({} samples); its samples are excluded and the other groups are assessed \
                     without it. Check that the group's genotypes were entered or exported, or remove its rows",
                    group.population,
                    group.year,
                    group.samples.len()
                ),
                Where::group(&group.population, group.year),
            ));
        }
        findings
    }

    /// Check 5. An error finding when no locus is left to judge samples by.
    fn exclude_samples_by_missingness(&mut self, max_missing: f64) -> Vec<Finding> {
        let kept_loci = self.kept_loci();
        if kept_loci.is_empty() {
            return vec![no_loci_kept_finding()];
        }
        // The packing's columns are the view's samples, in order.
        let untyped_per_sample = self.packed.untyped_per_column(&kept_loci);
        for (sample, &untyped) in self.samples.iter_mut().zip(&untyped_per_sample) {
            let missing = untyped as f64 / kept_loci.len() as f64;
            sample.missing = Some(missing);
            if sample.exclusion.is_none() && missing > max_missing {
                sample.exclusion = Some(format!(
                    "untyped at {untyped} of the {} kept loci ({}; more than max_missing_sample = {})",
                    kept_loci.len(),
                    percent(missing),
                    format_number(max_missing)
                ));
            }
        }
        Vec::new()
    }

    /// Check 6: a warning per small group, whose remaining samples are excluded.
    fn exclude_small_groups(&mut self, min_group_size: usize) -> Vec<Finding> {
        let mut findings = Vec::new();
        for g in 0..self.groups.len() {
            let passed = self.kept_in(&self.groups[g]);
            let group = &mut self.groups[g];
            group.passed_missingness = passed.len();
            if group.excluded || passed.len() >= min_group_size {
                continue;
            }
            group.excluded = true;
            let size = format!(
                "{} {} has {} samples left after the missingness checks, fewer than min_group_size = {min_group_size}",
                group.population,
                group.year,
                passed.len()
            );
            for s in passed {
                self.samples[s].exclusion = Some(format!("its group {size}"));
            }
            findings.push(Finding::warning(
                "small-group",
                format!("group {size}; its samples are excluded from later steps"),
                Where::group(&group.population, group.year),
            ));
        }
        findings
    }

    /// Check 7, over the samples kept by checks 4–6. An error finding when none is kept.
    fn exclude_loci_by_missingness(&mut self, max_missing: f64) -> Vec<Finding> {
        let had_loci = !self.kept_loci().is_empty();
        let kept = self.kept_samples();
        let kept_set = self.packed.sample_set(&kept);
        for (l, locus) in self.loci.iter_mut().enumerate() {
            let untyped = self.packed.untyped_count(l, &kept_set);
            locus.typed = kept.len() - untyped;
            locus.missing = (!kept.is_empty()).then(|| untyped as f64 / kept.len() as f64);
            if let Some(missing) = locus.missing
                && locus.exclusion.is_none()
                && missing > max_missing
            {
                locus.exclusion = Some(format!(
                    "untyped in {untyped} of the {} samples kept after the sample checks ({}; more than \
                     max_missing_locus = {})",
                    kept.len(),
                    percent(missing),
                    format_number(max_missing)
                ));
            }
        }
        if kept.is_empty() {
            return vec![no_samples_kept_finding()];
        }
        if had_loci && self.kept_loci().is_empty() { vec![no_loci_left_finding(max_missing)] } else { Vec::new() }
    }

    /// Check 8: one warning listing the pairs; one sample of each identical set within a group
    /// is kept unless `keep_duplicates`.
    fn check_duplicate_genotypes(&mut self, params: &Params) -> Vec<Finding> {
        let kept_loci = self.kept_loci();
        if kept_loci.len() < params.min_loci_for_duplicates {
            return vec![duplicate_check_skipped_finding(kept_loci.len(), params.min_loci_for_duplicates)];
        }
        let min_compared = params.min_loci_for_duplicates.max(kept_loci.len().div_ceil(2));
        let pairs = find_duplicate_genotypes(&self.view, &self.kept_samples(), &kept_loci, min_compared);
        if pairs.is_empty() {
            return Vec::new();
        }
        for pair in &pairs {
            self.samples[pair.first].duplicate_of.push(pair.second);
            self.samples[pair.second].duplicate_of.push(pair.first);
        }
        for sample in &mut self.samples {
            sample.duplicate_of.sort_unstable();
        }
        let removals = if params.keep_duplicates { Vec::new() } else { self.remove_duplicates(&pairs, &kept_loci) };
        vec![self.duplicate_genotypes_finding(&pairs, min_compared, &removals, params.keep_duplicates)]
    }

    /// Excludes all but one sample of each identical set within a group ([`choose_removals`]).
    fn remove_duplicates(&mut self, pairs: &[DuplicatePair], kept_loci: &[LocusIdx]) -> Vec<Removal> {
        let untyped = self.packed.untyped_per_column(kept_loci);
        let typed: Vec<usize> = untyped.iter().map(|u| kept_loci.len() - u).collect();
        let mut group_of = vec![0; self.samples.len()];
        for (g, group) in self.groups.iter().enumerate() {
            for &s in &group.samples {
                group_of[s] = g;
            }
        }
        let removals = choose_removals(pairs, &group_of, &typed);
        for removal in &removals {
            self.samples[removal.removed].exclusion = Some(format!(
                "same multilocus genotype as sample {}, which is kept (identical at all {} loci typed in both; set \
                 keep_duplicates = true to keep both)",
                self.sample_id(removal.kept),
                removal.compared
            ));
        }
        removals
    }

    fn duplicate_genotypes_finding(
        &self,
        pairs: &[DuplicatePair],
        min_compared: usize,
        removals: &[Removal],
        keep_duplicates: bool,
    ) -> Finding {
        let named: Vec<String> = pairs
            .iter()
            .map(|p| format!("{}–{} ({} loci)", self.sample_id(p.first), self.sample_id(p.second), p.compared))
            .collect();
        let consequence = if keep_duplicates {
            "They are kept (keep_duplicates = true); a repeated individual biases LD-based Ne downward, so \
             set keep_duplicates = false to keep one of each"
                .to_string()
        } else {
            self.duplicate_consequence(pairs, removals)
        };
        Finding::warning(
            "duplicate-genotypes",
            format!(
                "{} pair(s) of samples have identical genotypes at every locus typed in both (at least {min_compared} \
                 loci compared): {}. They may be one individual sampled twice; check the field records. {consequence}",
                pairs.len(),
                listing(&named)
            ),
            Where::default(),
        )
    }

    /// What the default did: the samples excluded per kept sample, and the pairs across groups.
    fn duplicate_consequence(&self, pairs: &[DuplicatePair], removals: &[Removal]) -> String {
        let mut by_kept: BTreeMap<SampleIdx, Vec<&str>> = BTreeMap::new();
        for removal in removals {
            by_kept.entry(removal.kept).or_default().push(self.sample_id(removal.removed));
        }
        let excluded: Vec<String> = by_kept
            .iter()
            .map(|(&kept, removed)| format!("{} (kept: {})", and_list(removed), self.sample_id(kept)))
            .collect();
        let across: Vec<String> = pairs
            .iter()
            .filter(|p| self.samples[p.first].exclusion.is_none() && self.samples[p.second].exclusion.is_none())
            .map(|p| format!("{}–{}", self.sample_id(p.first), self.sample_id(p.second)))
            .collect();
        let mut parts = Vec::new();
        if !excluded.is_empty() {
            parts.push(format!(
                "Within a group one sample of each identical set is kept (the one typed at most loci, the earliest \
                 in the input on a tie) and the others are excluded: {}; set keep_duplicates = true to keep them all.",
                listing(&excluded)
            ));
        }
        if !across.is_empty() {
            parts.push(format!(
                "Pairs in different groups are both kept: {} (the same animal may have been sampled in another place \
                 or year).",
                listing(&across)
            ));
        }
        parts.join(" ")
    }

    fn summary(&self) -> Finding {
        let (n_samples, n_loci) = (self.samples.len(), self.loci.len());
        let (kept_samples, kept_loci) = (self.kept_samples().len(), self.kept_loci().len());
        Finding::info(
            "validation-summary",
            format!(
                "kept {kept_samples} of {n_samples} samples ({} excluded) and {kept_loci} of {n_loci} loci ({} excluded)",
                n_samples - kept_samples,
                n_loci - kept_loci
            ),
            Where::default(),
        )
    }
}
