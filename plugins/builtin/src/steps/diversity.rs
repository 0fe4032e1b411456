//! `diversity`: heterozygosity, inbreeding and allelic richness per group (population, year)
//! and per locus.
//!
//! # Method
//! At each locus of the view, in each group, *n* is the number of individuals typed at both
//! alleles (code 0 = untyped is left out locus by locus, never imputed) and:
//!
//! - `ho`, observed heterozygosity, is the share of those *n* that are heterozygous;
//! - `he` is the unbiased expected heterozygosity of Nei (1978), 2n/(2n − 1) · (1 − Σ p̂ᵤ²);
//! - `f` = 1 − Ho/He;
//! - `fis` is Weir & Cockerham's (1984) f̂ = 1 − Σc/Σ(b + c) with one sample (r = 1, a = 0),
//!   which equals 1 − ΣHo/ΣHe* with the Nei–Chesser He* = n/(n − 1)·(1 − Σp̂² − Ho/(2n))
//!   (docs/methods.md, "Weir and Cockerham F-statistics"; components in
//!   [`crate::stats::weir_cockerham`]). `f` and `fis` differ slightly in small samples;
//! - `effective_alleles` is the effective number of alleles 1/Σp̂ᵤ² (plug-in frequencies; not
//!   an effective population size);
//! - `ar` is the allelic richness and `par` the private allelic richness, both rarefied to a
//!   common number of gene copies *g* (Hurlbert 1971; El Mousadik & Petit 1996; Kalinowski
//!   2004; [`crate::stats::rarefaction`]).
//!
//! A locus typed in fewer than two individuals of a group leaves Ho, He, F, FIS and the
//! effective number of alleles `null` there and is left out of that group's means. Per group,
//! `ho`, `he`, `effective_alleles` and `alleles_mean` are unweighted means over the remaining
//! loci; `f` is the ratio of sums 1 − ΣHo/ΣHe and `fis` the ratio of summed variance
//! components over them (docs/methods.md, "Inbreeding coefficient F"; docs/methods.md, "Weir and
//! Cockerham F-statistics"), `null` when the denominator is 0 (a group monomorphic at every locus).
//! A monomorphic locus gives Ho = He = 0 and `f`, `fis` `null`.
//!
//! # Confidence interval of FIS
//! `fis_low`, `fis_high`: the 2.5th and 97.5th percentiles of `bootstrap` replicates (default
//! 1000; 0 = no interval) drawing the view's loci with replacement, each locus keeping its
//! per-group (b + c, c) (docs/methods.md, "Conventions"). The draws come from the step seed's `fis`
//! stream and are the same for every group. A replicate whose drawn loci are all monomorphic
//! in the group is undefined and skipped; `fis_replicates` counts the replicates used.
//!
//! # Rarefaction
//! Allelic richness `ar` compares every (population, year) group of the view with at least two
//! samples, so that it is on one scale across populations and years (the `trend` step follows
//! it over years). At each locus *g* = 2 × the smallest *n* over those groups, or
//! 2 × `rarefaction_size` when that is given.
//!
//! Private allelic richness `par` (Kalinowski 2004) compares the populations sampled in the same
//! year: the comparison set of a group is the groups of its year with at least two samples, and
//! *g* is taken from that set (2 × the smallest *n* among them at each locus, or
//! 2 × `rarefaction_size`). Across years a population would be compared with itself, and an
//! allele it carries in two sampling years would not count as private to it. A population that
//! is the only one compared in its year has `par` `null` (`par-alone-in-year`). Because the two
//! sets differ, so can their *g*: `rarefaction_copies` is the *g* of `ar` and
//! `par_rarefaction_copies` that of `par` (per locus; in `by_group` the smallest over the loci
//! averaged).
//!
//! A group of one sample is left out of both (its `ar`, `par` are `null`, with a finding). A
//! locus at which a compared group has fewer than two typed individuals (or fewer than
//! `rarefaction_size`) is dropped from `ar` for every group and from `par` for every group of
//! that year, with one warning listing such loci, so every group's `ar` averages the same loci,
//! and so do the `par` of the populations of one year.
//!
//! # Tables
//! - `by_locus`: population, year, locus, n, alleles, ho, he, f, fis, effective_alleles, ar,
//!   par, rarefaction_copies, par_rarefaction_copies.
//! - `by_group`: population, year, n (samples in the group), loci (loci with n ≥ 2), ho, he, f,
//!   fis, fis_low, fis_high, fis_replicates, alleles_mean, effective_alleles, ar, par,
//!   rarefaction_copies, par_rarefaction_copies.
//!
//! # Findings
//! `low-sample-size` (warning) for a group of fewer than 10 samples; `few-loci` (warning) for a
//! group with fewer than 5 usable loci (both docs/methods.md, "Conventions"); `too-few-typed`
//! (info, one finding listing every locus and group with n < 2); `monomorphic-in-group` (info, one
//! finding listing them); `rarefaction-group-excluded` and `rarefaction-loci-dropped` (warnings);
//! `par-alone-in-year` (info, the groups whose `par` is null for want of another population
//! that year); `rarefaction-size`, `par-comparison` (one per year: the populations compared and
//! *g*), `fis-interval` and `f-definition` (info) stating the conventions.
//!
//! # Citations
//! Nei (1978); Weir & Cockerham (1984); Hurlbert (1971); El Mousadik & Petit (1996);
//! Kalinowski (2004) — full references in the step's citations.

use popgauge_abi::{
    AlleleCounts, Cell, Descriptor, GenotypeView, Group, ParamKind, Seed, Step, StepContext, StepError, StepOutput,
};

use crate::packing::pack;
use serde::Deserialize;
use serde_json::{Value, json};

use crate::stats::bootstrap::{Interval, bootstrap_loci, percentile_interval, rng};
use crate::stats::heterozygosity::{LocusHeterozygosity, NEI_1978, ratio_of_sums_inbreeding};
use crate::stats::mean;
use crate::stats::rarefaction;
use crate::stats::weir_cockerham::{VarianceComponents, WEIR_COCKERHAM_1984, locus_components};

mod findings;
mod richness;
mod tables;

/// A group with fewer samples than this gets a `low-sample-size` warning (docs/methods.md,
/// "Conventions").
pub const LOW_SAMPLE_SIZE: usize = 10;
/// A group with fewer usable loci than this gets a `few-loci` warning (docs/methods.md,
/// "Conventions").
pub const FEW_LOCI: usize = 5;
/// Coverage of the FIS bootstrap interval.
pub const INTERVAL_LEVEL: f64 = 0.95;

/// Parameters of `diversity`, as resolved from the descriptor (defaults live there).
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Params {
    /// Bootstrap replicates over loci for the FIS confidence interval (0 = no interval).
    pub bootstrap: u32,
    /// Individuals per group for rarefied allelic richness; `None` means the smallest group of
    /// the comparison set (all groups for `ar`, the year's populations for `par`).
    pub rarefaction_size: Option<u32>,
}

/// The descriptor of `diversity`: its name, version and parameters with defaults.
pub fn descriptor() -> Descriptor {
    Descriptor::new(
        "diversity",
        "0.3.0",
        "Heterozygosity, F, Weir & Cockerham FIS with a bootstrap interval, and allelic richness per group and locus",
    )
    .param(
        "bootstrap",
        ParamKind::Integer { min: 0, max: 1_000_000 },
        json!(1000),
        "bootstrap replicates over loci for the 95% interval of FIS (0 = no interval)",
    )
    .param(
        "rarefaction_size",
        ParamKind::Integer { min: 2, max: 1_000_000 },
        Value::Null,
        "individuals to rarefy allelic richness (ar, par) to; null = the smallest compared group typed at each locus",
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
        let params: Params = ctx.params_as()?;
        let groups = estimate_groups(&ctx.view);
        let richness = richness::rarefy(&groups, params.rarefaction_size);
        let intervals = fis_intervals(&groups, params.bootstrap, ctx.seed);
        let mut output = StepOutput::default();
        output.tables.insert("by_locus".into(), tables::by_locus(&ctx.view, &groups, &richness)?);
        let by_group = tables::by_group(&groups, &richness, &intervals)?;
        output.findings = findings::collect(&ctx.view, &groups, &richness, &params);
        output.findings.extend(findings::undefined_in_groups(&by_group, params.bootstrap));
        output.tables.insert("by_group".into(), by_group);
        output.citations = citations();
        Ok(output)
    }
}

/// Estimates at one locus in one group.
struct LocusEstimates {
    heterozygosity: LocusHeterozygosity,
    /// WC84 components with r = 1; `None` when fewer than two individuals are typed.
    components: Option<VarianceComponents>,
    /// 1/Σp̂²; `None` when fewer than two individuals are typed.
    effective_alleles: Option<f64>,
    /// Copies of each allele code (index 0 unused), for rarefaction.
    allele_copies: Vec<u32>,
}

/// Per-locus estimates of one group, one entry per view locus.
struct GroupEstimates {
    group: Group,
    loci: Vec<LocusEstimates>,
}

/// Multilocus summary of one group over its usable loci (n ≥ 2).
struct GroupSummary {
    usable_loci: usize,
    observed_mean: Option<f64>,
    expected_mean: Option<f64>,
    inbreeding: Option<f64>,
    fis: Option<f64>,
    alleles_mean: Option<f64>,
    effective_alleles_mean: Option<f64>,
}

impl GroupEstimates {
    fn summarise(&self) -> GroupSummary {
        let usable: Vec<&LocusEstimates> = self.loci.iter().filter(|l| l.heterozygosity.is_usable()).collect();
        let observed = || usable.iter().filter_map(|l| l.heterozygosity.observed);
        let expected = || usable.iter().filter_map(|l| l.heterozygosity.expected);
        GroupSummary {
            usable_loci: usable.len(),
            observed_mean: mean(observed()),
            expected_mean: mean(expected()),
            inbreeding: ratio_of_sums_inbreeding(observed().zip(expected())),
            fis: usable.iter().filter_map(|l| l.components).sum::<VarianceComponents>().f_is(),
            alleles_mean: mean(usable.iter().map(|l| l.heterozygosity.distinct_alleles as f64)),
            effective_alleles_mean: mean(usable.iter().filter_map(|l| l.effective_alleles)),
        }
    }

    /// (b + c, c) per view locus, (0, 0) where undefined: what one bootstrap replicate sums.
    fn fis_terms(&self) -> Vec<(f64, f64)> {
        self.loci
            .iter()
            .map(|l| {
                l.components
                    .map_or((0.0, 0.0), |k| (k.between_individuals + k.within_individuals, k.within_individuals))
            })
            .collect()
    }
}

fn estimate_groups(view: &GenotypeView<'_>) -> Vec<GroupEstimates> {
    let packed = pack(*view);
    let mut counts = AlleleCounts::default();
    let mut estimates = Vec::new();
    for group in view.groups() {
        let members = packed.sample_set(&group.samples);
        let mut loci = Vec::with_capacity(view.n_loci());
        for locus in 0..view.n_loci() {
            packed.allele_counts_into(locus, &members, &mut counts);
            loci.push(estimate_locus(&counts));
        }
        estimates.push(GroupEstimates { group, loci });
    }
    estimates
}

fn estimate_locus(counts: &AlleleCounts) -> LocusEstimates {
    let heterozygosity = LocusHeterozygosity::from_counts(counts);
    let usable = heterozygosity.is_usable();
    LocusEstimates {
        heterozygosity,
        components: locus_components(&[counts]).filter(|_| usable),
        effective_alleles: effective_number_of_alleles(counts).filter(|_| usable),
        allele_copies: counts.alleles.clone(),
    }
}

/// 1/Σp̂ᵤ² from allele copies; `None` when nothing is typed.
fn effective_number_of_alleles(counts: &AlleleCounts) -> Option<f64> {
    let copies = u64::from(counts.gene_copies());
    let squares: u64 = counts.alleles.iter().map(|&c| u64::from(c) * u64::from(c)).sum();
    (squares > 0).then(|| (copies * copies) as f64 / squares as f64)
}

/// The FIS bootstrap interval of one group and the number of replicates that were defined.
#[derive(Debug, Clone, Copy, PartialEq)]
struct FisInterval {
    interval: Option<Interval>,
    replicates: usize,
}

fn fis_intervals(groups: &[GroupEstimates], replicates: u32, seed: Seed) -> Vec<FisInterval> {
    groups.iter().map(|g| fis_interval(&g.fis_terms(), replicates as usize, seed)).collect()
}

/// Percentile bootstrap over loci of 1 − Σc/Σ(b + c); each replicate only sums precomputed
/// terms. Every group starts the `fis` stream afresh, so all groups see the same locus draws.
fn fis_interval(terms: &[(f64, f64)], replicates: usize, seed: Seed) -> FisInterval {
    if replicates == 0 || terms.iter().all(|t| t.0 == 0.0) {
        return FisInterval { interval: None, replicates: 0 };
    }
    let mut stream = rng(seed, "fis");
    let mut values = bootstrap_loci(terms.len(), replicates, &mut stream, |loci| {
        let (within_samples, within_individuals) =
            loci.iter().fold((0.0, 0.0), |(total, c), &l| (total + terms[l].0, c + terms[l].1));
        (within_samples != 0.0).then(|| 1.0 - within_individuals / within_samples)
    });
    FisInterval { replicates: values.len(), interval: percentile_interval(&mut values, INTERVAL_LEVEL) }
}

fn citations() -> Vec<String> {
    let mut all = vec![NEI_1978.to_string(), WEIR_COCKERHAM_1984.to_string()];
    all.extend(rarefaction::CITATIONS.iter().map(|c| c.to_string()));
    all
}

/// A count as a table integer (counts never approach `i64::MAX`).
fn count_cell(count: usize) -> Cell {
    Cell::Int(i64::try_from(count).unwrap_or(i64::MAX))
}

#[cfg(test)]
mod tests;
