//! `validate`: data checks and exclusions before any estimate.
//!
//! # Checks, in order
//! 1. **Reader findings** (bad cells found while reading, with file, line and column) are copied
//!    unchanged into this step's findings and counted per locus (`bad_cells`, matched on the
//!    finding's column = locus name). The readers have already treated those cells as untyped.
//! 2. **Duplicate sample ids**: one error-level `duplicate-sample-id` finding per repeated id.
//!    Both samples stay in play (an exclusion by id would drop both); the fix is in the data.
//! 3. **Missingness per locus**, over all samples: a locus untyped in more than
//!    `max_missing_locus` of them is excluded.
//! 4. **Monomorphic loci**: a locus with one allele (or none) over all samples is excluded, so
//!    every group is described on the same loci, polymorphic in the whole data set (METHODS §1).
//! 5. **Missingness per sample**, over the loci kept so far: a sample untyped at more than
//!    `max_missing_sample` of them is excluded.
//! 6. **Small groups**: a group (population, year) with fewer than `min_group_size` samples left
//!    after check 5 gets a `small-group` warning and its samples are excluded.
//! 7. **Duplicate multilocus genotypes** among the samples kept: pairs identical at every locus
//!    typed in both, typed together at `min_loci_for_duplicates` loci or more and at half the
//!    kept loci or more, are listed in one `duplicate-genotypes` warning and in the samples'
//!    `duplicate_of` column. With `exclude_duplicate_genotypes`, one sample of each pair is
//!    excluded (the one with more missing data; on a tie, the later one).
//! 8. **Monomorphic after the sample checks**: a kept locus left with one allele in the kept
//!    samples is excluded too, so later steps never see a monomorphic locus.
//! 9. **Null-allele indication** per kept locus and group of kept samples: Brookfield's (1996)
//!    estimator 1, r = (He − Ho)/(1 + He), with He unbiased (Nei 1978) and negative r set to 0
//!    (formula from memory, METHODS §4.4). `null_allele` is the mean r over the groups where the
//!    locus is typed in at least two individuals. A `possible-null-allele` warning is raised
//!    when r ≥ 0.1 in at least half the groups with at least 10 typed individuals. It is an
//!    indication only: inbreeding and a Wahlund effect also cause a heterozygote deficit, and
//!    the full rule needs the `hwe` step's q-values.
//!
//! A `validation-summary` info finding gives the samples and loci kept and excluded.
//!
//! # Tables
//! - `loci`: locus, missing (share of all samples untyped), alleles (distinct alleles in the
//!   samples kept at the end), status (`kept`/`excluded`), reason (null when kept), typed
//!   (samples typed), bad_cells, null_allele (null for excluded loci).
//! - `samples`: sample, population, year, missing (share of the loci kept at check 5 that are
//!   untyped; null when no locus was kept), status, reason, duplicate_of (ids of samples with
//!   an identical genotype, comma-separated, or null).
//! - `groups`: population, year, n_total, n_kept (samples kept at the end), status,
//!   n_passed_missingness (samples left after check 5, the count check 6 compares).
//!
//! Thresholds compare shares with "more than": a locus untyped in exactly 20 % of samples is
//! kept at `max_missing_locus = 0.2`.
//!
//! # Citations
//! Brookfield JFY (1996) A simple new method for estimating null allele frequency from
//! heterozygote deficiency. *Mol Ecol* 5:453–455. Nei M (1978) Estimation of average
//! heterozygosity and genetic distance from a small number of individuals. *Genetics*
//! 89:583–590.

mod duplicates;
mod output;
#[cfg(test)]
mod tests;

use std::collections::BTreeMap;

use popgauge_abi::{
    Descriptor, Finding, GenotypeView, LocusIdx, PackedGenotypes, ParamKind, SampleIdx, SampleSet, Step, StepContext,
    StepError, StepOutput, Where, format_number,
};

use crate::packing::pack;
use serde::Deserialize;
use serde_json::json;

use crate::stats::heterozygosity::LocusHeterozygosity;
use crate::stats::mean;
use crate::stats::null_allele::brookfield_null_allele_frequency;
use duplicates::{DuplicatePair, find_duplicate_genotypes};

/// r at or above this in a group counts towards a `possible-null-allele` warning.
pub const NULL_ALLELE_FLAG: f64 = 0.1;
/// Groups with fewer individuals typed at a locus do not count towards that warning.
pub const NULL_ALLELE_MIN_TYPED: u32 = 10;
/// At most this many duplicate pairs are spelled out in the finding (all are in the table).
const DUPLICATE_PAIRS_LISTED: usize = 50;

/// Parameters of `validate`, as resolved from the descriptor (defaults live there).
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Params {
    /// A locus untyped in more than this share of samples is excluded.
    pub max_missing_locus: f64,
    /// A sample untyped at more than this share of the kept loci is excluded.
    pub max_missing_sample: f64,
    /// Samples of a (population, year) group with fewer kept samples are excluded.
    pub min_group_size: usize,
    /// Whether one sample of each duplicate-genotype pair is excluded.
    pub exclude_duplicate_genotypes: bool,
    /// Fewest loci typed in both samples for a pair to count as a duplicate.
    pub min_loci_for_duplicates: usize,
}

/// The descriptor of `validate`: its name, version and parameters with defaults.
pub fn descriptor() -> Descriptor {
    Descriptor::new(
        "validate",
        "0.1.0",
        "Data checks and exclusions: bad cells, duplicate ids and genotypes, missingness, \
         monomorphic loci, small groups, null-allele indication",
    )
    .param(
        "max_missing_locus",
        ParamKind::Number { min: 0.0, max: 1.0 },
        json!(0.2),
        "a locus untyped in more than this share of samples is excluded",
    )
    .param(
        "max_missing_sample",
        ParamKind::Number { min: 0.0, max: 1.0 },
        json!(0.5),
        "a sample untyped at more than this share of the kept loci is excluded",
    )
    .param(
        "min_group_size",
        ParamKind::Integer { min: 1, max: 1_000_000 },
        json!(5),
        "samples of a (population, year) group with fewer kept samples are excluded, with a warning",
    )
    .param(
        "exclude_duplicate_genotypes",
        ParamKind::Boolean,
        json!(false),
        "exclude one sample of each pair with identical multilocus genotypes (otherwise only warn)",
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
        screen.exclude_loci_by_missingness(params.max_missing_locus);
        screen.exclude_monomorphic_loci(MonomorphicPass::WholeDataSet);
        findings.extend(screen.exclude_samples_by_missingness(params.max_missing_sample));
        findings.extend(screen.exclude_small_groups(params.min_group_size));
        findings.extend(screen.check_duplicate_genotypes(&params));
        screen.exclude_monomorphic_loci(MonomorphicPass::KeptSamples);
        findings.extend(screen.indicate_null_alleles());
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

struct LocusRecord {
    typed: usize,
    missing: f64,
    bad_cells: usize,
    alleles: usize,
    null_allele: Option<f64>,
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
    /// Check 4: over all samples.
    WholeDataSet,
    /// Check 8: over the samples kept after the sample checks.
    KeptSamples,
}

impl<'a> Screen<'a> {
    fn new(view: GenotypeView<'a>, input_findings: &[Finding]) -> Screen<'a> {
        let all: Vec<SampleIdx> = (0..view.n_samples()).collect();
        let packed = pack(view);
        let everyone = packed.sample_set(&all);
        let bad_cells = bad_cells_per_column(input_findings);
        let loci = (0..view.n_loci())
            .map(|l| {
                let untyped = packed.untyped_count(l, &everyone);
                LocusRecord {
                    typed: all.len() - untyped,
                    missing: untyped as f64 / all.len() as f64,
                    bad_cells: bad_cells.get(view.locus(l).name.as_str()).copied().unwrap_or(0),
                    alleles: 0,
                    null_allele: None,
                    exclusion: None,
                }
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
        Screen { view, packed, loci, samples, groups }
    }

    fn kept_loci(&self) -> Vec<LocusIdx> {
        (0..self.loci.len()).filter(|&l| self.loci[l].exclusion.is_none()).collect()
    }

    fn kept_samples(&self) -> Vec<SampleIdx> {
        (0..self.samples.len()).filter(|&s| self.samples[s].exclusion.is_none()).collect()
    }

    fn sample_id(&self, sample: SampleIdx) -> &'a str {
        &self.view.sample(sample).id
    }

    /// Check 3.
    fn exclude_loci_by_missingness(&mut self, max_missing: f64) {
        let n_samples = self.samples.len();
        for locus in &mut self.loci {
            if locus.missing > max_missing {
                locus.exclusion = Some(format!(
                    "untyped in {} of {n_samples} samples ({}; more than max_missing_locus = {})",
                    n_samples - locus.typed,
                    percent(locus.missing),
                    format_number(max_missing)
                ));
            }
        }
    }

    /// Checks 4 and 8; also records each locus's distinct alleles in the samples kept now.
    fn exclude_monomorphic_loci(&mut self, pass: MonomorphicPass) {
        let kept = self.packed.sample_set(&self.kept_samples());
        for (l, locus) in self.loci.iter_mut().enumerate() {
            locus.alleles = self.packed.allele_counts(l, &kept).distinct();
            if locus.exclusion.is_none() && locus.alleles <= 1 {
                locus.exclusion = Some(monomorphic_reason(pass, locus.alleles));
            }
        }
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
            if missing > max_missing {
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
        for group in &mut self.groups {
            let passed: Vec<SampleIdx> =
                group.samples.iter().copied().filter(|&s| self.samples[s].exclusion.is_none()).collect();
            group.passed_missingness = passed.len();
            if passed.len() >= min_group_size {
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

    /// Check 7: one warning listing the pairs; exclusions when the parameter asks for them.
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
        if params.exclude_duplicate_genotypes {
            self.exclude_duplicates(&pairs);
        }
        vec![self.duplicate_genotypes_finding(&pairs, min_compared, params.exclude_duplicate_genotypes)]
    }

    /// Drops one sample of each pair still fully kept: the one with more missing data, the
    /// later one on a tie.
    fn exclude_duplicates(&mut self, pairs: &[DuplicatePair]) {
        for pair in pairs {
            let (first, second) = (&self.samples[pair.first], &self.samples[pair.second]);
            if first.exclusion.is_some() || second.exclusion.is_some() {
                continue;
            }
            let (keep, drop) =
                if first.missing > second.missing { (pair.second, pair.first) } else { (pair.first, pair.second) };
            self.samples[drop].exclusion = Some(format!(
                "same multilocus genotype as sample {} at all {} loci typed in both (exclude_duplicate_genotypes = true)",
                self.sample_id(keep),
                pair.compared
            ));
        }
    }

    fn duplicate_genotypes_finding(&self, pairs: &[DuplicatePair], min_compared: usize, excluded: bool) -> Finding {
        let mut listed: Vec<String> = pairs
            .iter()
            .take(DUPLICATE_PAIRS_LISTED)
            .map(|p| format!("{}–{} ({} loci)", self.sample_id(p.first), self.sample_id(p.second), p.compared))
            .collect();
        if pairs.len() > DUPLICATE_PAIRS_LISTED {
            listed.push(format!(
                "and {} more (see duplicate_of in the samples table)",
                pairs.len() - DUPLICATE_PAIRS_LISTED
            ));
        }
        let consequence = if excluded {
            "one sample of each pair is excluded (exclude_duplicate_genotypes = true)"
        } else {
            "they are kept; set exclude_duplicate_genotypes = true to exclude one of each pair"
        };
        Finding::warning(
            "duplicate-genotypes",
            format!(
                "{} pair(s) of samples have identical genotypes at every locus typed in both (at least {min_compared} \
                 loci compared): {}. They may be one individual sampled twice; check the field records. {consequence}",
                pairs.len(),
                listed.join(", ")
            ),
            Where::default(),
        )
    }

    /// Check 9: `null_allele` per kept locus and a warning where the indication is consistent.
    fn indicate_null_alleles(&mut self) -> Vec<Finding> {
        let groups: Vec<SampleSet> = self
            .groups
            .iter()
            .map(|g| {
                let kept: Vec<SampleIdx> =
                    g.samples.iter().copied().filter(|&s| self.samples[s].exclusion.is_none()).collect();
                self.packed.sample_set(&kept)
            })
            .collect();
        let mut findings = Vec::new();
        for l in self.kept_loci() {
            let per_group: Vec<(u32, f64)> =
                groups.iter().filter_map(|samples| null_allele_in_group(&self.packed, l, samples)).collect();
            self.loci[l].null_allele = mean(per_group.iter().map(|g| g.1));
            findings.extend(null_allele_finding(&self.view.locus(l).name, &per_group));
        }
        findings
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

fn refuse_empty_view(view: &GenotypeView<'_>) -> Result<(), StepError> {
    if view.n_samples() == 0 {
        return Err(StepError::new("there are no samples to validate: the genotype data hold no sample rows"));
    }
    if view.n_loci() == 0 {
        return Err(StepError::new("there are no loci to validate: the genotype data hold no locus columns"));
    }
    Ok(())
}

/// Check 1: reader findings per column name (the wide reader's column of a bad cell is its locus).
fn bad_cells_per_column(input_findings: &[Finding]) -> BTreeMap<&str, usize> {
    let mut counts = BTreeMap::new();
    for column in input_findings.iter().filter_map(|f| f.location.column.as_deref()) {
        *counts.entry(column).or_insert(0) += 1;
    }
    counts
}

/// Check 2.
fn duplicate_id_findings(view: &GenotypeView<'_>) -> Vec<Finding> {
    let mut occurrences: BTreeMap<&str, usize> = BTreeMap::new();
    for s in 0..view.n_samples() {
        *occurrences.entry(view.sample(s).id.as_str()).or_insert(0) += 1;
    }
    occurrences
        .into_iter()
        .filter(|&(_, count)| count > 1)
        .map(|(id, count)| {
            Finding::error(
                "duplicate-sample-id",
                format!(
                    "sample id \"{id}\" appears {count} times; ids must be unique. All {count} stay in the \
                     analysis as separate samples: give each its own id, or remove the repeated rows"
                ),
                Where::sample(id),
            )
        })
        .collect()
}

fn monomorphic_reason(pass: MonomorphicPass, alleles: usize) -> String {
    match (pass, alleles) {
        (MonomorphicPass::WholeDataSet, 0) => "not typed in any sample".into(),
        (MonomorphicPass::WholeDataSet, _) => "monomorphic in the whole data set".into(),
        (MonomorphicPass::KeptSamples, 0) => "not typed in any of the samples kept after the sample checks".into(),
        (MonomorphicPass::KeptSamples, _) => "monomorphic in the samples kept after the sample checks".into(),
    }
}

fn no_loci_kept_finding() -> Finding {
    Finding::error(
        "no-loci-kept",
        "no locus passed the missingness and polymorphism checks, so samples cannot be judged and no \
         estimate can follow; raise max_missing_locus or check the locus columns",
        Where::default(),
    )
}

fn duplicate_check_skipped_finding(kept_loci: usize, min_loci: usize) -> Finding {
    Finding::info(
        "duplicate-check-skipped",
        format!(
            "duplicate genotypes were not looked for: {kept_loci} loci are kept, fewer than \
             min_loci_for_duplicates = {min_loci}, too few for identical genotypes to mean the same individual"
        ),
        Where::default(),
    )
}

/// (typed individuals, Brookfield r) at one locus in one group; `None` when n < 2.
fn null_allele_in_group(packed: &PackedGenotypes<'_>, locus: LocusIdx, samples: &SampleSet) -> Option<(u32, f64)> {
    let het = LocusHeterozygosity::from_counts(&packed.allele_counts(locus, samples));
    Some((het.typed, brookfield_null_allele_frequency(het.observed?, het.expected?)))
}

/// A warning when r ≥ [`NULL_ALLELE_FLAG`] in at least half the groups with at least
/// [`NULL_ALLELE_MIN_TYPED`] typed individuals (and there is at least one such group).
fn null_allele_finding(locus: &str, per_group: &[(u32, f64)]) -> Option<Finding> {
    let large: Vec<f64> = per_group.iter().filter(|g| g.0 >= NULL_ALLELE_MIN_TYPED).map(|g| g.1).collect();
    let flagged = large.iter().filter(|&&r| r >= NULL_ALLELE_FLAG).count();
    if large.is_empty() || 2 * flagged < large.len() {
        return None;
    }
    Some(Finding::warning(
        "possible-null-allele",
        format!(
            "locus {locus}: the null-allele frequency estimated from the heterozygote deficit (Brookfield 1996) \
             is {} or more in {flagged} of {} groups with at least {NULL_ALLELE_MIN_TYPED} typed individuals. \
             This is an indication only: inbreeding or a Wahlund effect also cause a deficit; the hwe step's \
             tests show whether the deficit is significant",
            format_number(NULL_ALLELE_FLAG),
            large.len()
        ),
        Where::locus(locus),
    ))
}

/// A share as a percentage with at most one decimal, e.g. `35%`, `33.3%`.
fn percent(share: f64) -> String {
    format!("{}%", format_number((share * 1000.0).round() / 10.0))
}
