//! `differentiation`: pairwise and global FST (Weir & Cockerham 1984) with permutation
//! p-values and bootstrap intervals, Jost's D, G_ST, G′_ST and G″_ST, and isolation by distance
//! when the population sheet gives coordinates.
//!
//! # Groups and comparison sets
//! With `by_year = false` (the default) a group is a population with all its sampling years
//! pooled; every pair of populations is compared and `year` is `null`. With `by_year = true` a
//! group is a (population, year) and pairs are formed only within the same year. A *comparison
//! set* is the groups compared with each other (all populations, or the populations of one
//! year); the global estimates are computed per comparison set and the `global` table names it.
//!
//! # FST
//! θ̂ of Weir & Cockerham (1984) as a ratio of sums over alleles and loci, Σa/Σ(a + b + c)
//! ([`crate::stats::weir_cockerham`]; docs/methods.md, "Weir and Cockerham F-statistics"). At each
//! locus *n*ᵢ counts the individuals of group *i* typed at both alleles (code 0 = untyped is left
//! out, never imputed). A locus untyped in every individual of a group is dropped from every
//! comparison involving that group (for the global estimate, from the whole set) and listed in a
//! `locus-untyped-in-group` finding. A locus monomorphic over the compared groups adds 0 to both
//! sums. Negative θ̂ is sampling noise and is kept as computed. θ̂ is `null` when Σ(a + b + c) = 0
//! (no locus polymorphic in the comparison) or no locus has n̄ > 1, with an `fst-undefined`
//! finding.
//!
//! **Intervals**: 95 % percentile bootstrap over loci (`bootstrap` replicates;
//! docs/methods.md, "Conventions"; Efron & Tibshirani 1993), for each pair and each comparison set,
//! of θ̂, Jost's D and G″_ST. Each replicate draws the comparison's loci once (from the loci
//! entering θ̂, which include every locus of the G_ST family) and recomputes all three from those
//! loci, so the intervals come from the same resampled data and θ̂'s interval is that of a
//! bootstrap of θ̂ alone. A bound is `null` when `bootstrap` = 0 or fewer than two replicates give
//! the statistic a defined value (a replicate drawing only loci monomorphic in the comparison has
//! no D or G″_ST); `bootstrap` in `global` counts the replicates with a defined θ̂*.
//!
//! **Permutation test** (`fst_p`, pairs only): whole individuals (all loci, untyped cells
//! included) are shuffled between the two groups keeping the group sizes, on the loci used for
//! the observed θ̂; p = (1 + #{θ̂* ≥ θ̂})/(B + 1) with B = `permutations` (one-sided: large θ̂ is
//! extreme; [`crate::stats::permutation`]). Permuting genotypes rather than alleles keeps the
//! test valid when groups depart from Hardy–Weinberg proportions (Goudet et al. 1996). A
//! replicate in which a locus ends up untyped in one group leaves that locus out of that
//! replicate. Pairs are estimated in parallel; each pair draws its bootstrap and permutation
//! replicates from its own stream (named after the year and the two populations), so results
//! depend neither on the number of threads nor on which other populations are in the data.
//! The p-values are not adjusted for the number of pairs. A pair of more than
//! 65,535 individuals is not tested (`fst_p` null).
//!
//! # Jost's D and the G_ST family
//! Per locus over the compared groups (docs/methods.md, "Gene-diversity differentiation";
//! [`crate::stats::gst`]). **Multilocus values are ratios of averages**: Ĥ_S and Ĥ_T are averaged
//! over the loci polymorphic in the comparison, then the formula is applied once (not the mean of
//! per-locus values, and not the harmonic mean of per-locus D). `gst` (Nei 1973), `gst_p` (G′_ST,
//! Hedrick 2005) and `gst_pp` (G″_ST, Meirmans & Hedrick 2011) use the Nei & Chesser (1983)
//! estimators of Ĥ_S and Ĥ_T; `jost_d` uses Jost's (2008) own estimators. Where Ĥ_S = 1 or kĤ_T =
//! Ĥ_S the measure is `null` with a `differentiation-undefined` finding. Their intervals are
//! described under FST.
//!
//! # Isolation by distance
//! For each comparison set with at least three populations that have latitude and longitude
//! in the population sheet: great-circle distances by the haversine formula (Sinnott 1984)
//! with the mean Earth radius 6371.0088 km (IUGG; Moritz 1980), the least-squares regression of
//! θ̂/(1 − θ̂) on ln(distance in km) (Rousset 1997, two-dimensional habitat), and a Mantel
//! (1967) test of a positive association between the two (Pearson's r, population labels
//! permuted, one-sided; [`crate::stats::permutation`]). With *n* populations there are only n!
//! orders of the labels: when n! ≤ `mantel_permutations` every order is evaluated once and p is
//! exact (the share of orders, the observed one included, with r at least as large), otherwise
//! `mantel_permutations` random orders give p = (1 + #{r* ≥ r})/(B + 1). `mantel_p_min` is the
//! smallest p the test could give (1/n! or 1/(B + 1): 1/24 with four populations), and
//! `mantel_method` says which way p was found. Pairs at zero distance, or with θ̂ `null` or ≥ 1,
//! are left out (with a finding). When p > 0.05 an `ibd-not-significant` finding says that the
//! fitted line is descriptive only.
//!
//! # Tables
//! - `pairwise`: pop_a, pop_b, year (`null` when years are pooled), n_a, n_b (samples), loci
//!   (loci entering θ̂: typed in both groups with n̄ > 1, monomorphic ones included), fst,
//!   fst_low, fst_high, fst_p, permutations (defined replicates), jost_d, jost_d_low,
//!   jost_d_high, gst, gst_p (G′_ST), gst_pp (G″_ST), gst_pp_low, gst_pp_high.
//! - `global`: comparison (in words), year, populations, samples, loci, fst, fst_low,
//!   fst_high, bootstrap (defined replicates), jost_d, jost_d_low, jost_d_high, gst, gst_p,
//!   gst_pp, gst_pp_low, gst_pp_high.
//! - `ibd` (when tested): year, pop_a, pop_b, distance_km, fst, fst_linearised.
//! - `ibd_test` (when tested): year, populations, pairs, slope, intercept, r, mantel_p,
//!   mantel_p_min, permutations (orders evaluated), mantel_method (`exact` or `random`).
//!
//! # Findings
//! `differentiation-scope` (info: the comparison sets and conventions), `low-sample-size`
//! (warning, a group of fewer than 10 samples), `no-pairs` (info, a set with fewer than two
//! groups), `locus-untyped-in-group` (info), `fst-undefined` and `differentiation-undefined`
//! (warnings, a `null` estimate and why), `fst-interval-undefined` and
//! `differentiation-interval-undefined` (info, an interval `null` beside a defined estimate),
//! `permutation-test-disabled` (info), `ibd-not-tested` (info), `bad-coordinates` and
//! `ibd-pair-excluded` (warnings), `ibd-not-significant` (info: Mantel p > 0.05, the line is
//! descriptive only), and `differentiation-caution` (info: the cautions a reader needs before
//! acting on these numbers).
//!
//! # Citations
//! Weir & Cockerham (1984); Goudet et al. (1996); Efron & Tibshirani (1993); Nei (1973); Nei &
//! Chesser (1983); Hedrick (2005); Meirmans & Hedrick (2011); Jost (2008); with isolation by
//! distance also Rousset (1997), Mantel (1967), Sinnott (1984), Moritz (1980).

mod findings;
mod ibd;
mod pairs;
mod special_values;
mod tables;
#[cfg(test)]
mod tests;

use std::collections::BTreeMap;

use popgauge_abi::{
    AlleleCounts, Descriptor, GenotypeView, Group, PackedGenotypes, ParamKind, Seed, Step, StepContext, StepError,
    StepOutput,
};

use crate::packing::pack;
use rayon::prelude::*;
use serde::Deserialize;
use serde_json::json;

use crate::stats::bootstrap::rng;
use crate::stats::gst::{HEDRICK_2005, JOST_2008, MEIRMANS_HEDRICK_2011, NEI_1973, NEI_CHESSER_1983};
use crate::stats::permutation::{MANTEL_1967, PermutationOutcome, permutation_test_in_batches};
use crate::stats::weir_cockerham::WEIR_COCKERHAM_1984;
use findings::collect_findings;
use ibd::{MORITZ_1980, ROUSSET_1997, SINNOTT_1984};
use pairs::{ComparisonEstimate, PairPermutation};
use tables::{global_table, ibd_table, ibd_test_table, pairwise_table, year_key};

/// A group with fewer samples than this gets a `low-sample-size` warning (docs/methods.md,
/// "Conventions").
pub const LOW_SAMPLE_SIZE: usize = 10;
/// At most this many locus names are spelled out in one finding.
const LOCI_LISTED: usize = 10;

/// Goudet et al. (1996), the permutation of genotypes between samples.
pub const GOUDET_1996: &str = "Goudet J, Raymond M, de Meeüs T, Rousset F (1996) Testing differentiation in \
diploid populations. Genetics 144:1933–1940.";
/// Efron & Tibshirani (1993), the percentile bootstrap.
pub const EFRON_TIBSHIRANI_1993: &str =
    "Efron B, Tibshirani RJ (1993) An Introduction to the Bootstrap. Chapman & Hall, New York.";

/// Parameters of `differentiation`, as resolved from the descriptor (defaults live there).
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Params {
    /// Permutations of individuals per pair for `fst_p` (0 = no test).
    pub permutations: u32,
    /// Groups are (population, year) and pairs stay within a year when true.
    pub by_year: bool,
    /// Bootstrap replicates over loci for the FST, D and G″ST intervals (0 = no interval).
    pub bootstrap: u32,
    /// Random permutations of population labels for the Mantel test (0 = no test); with n
    /// populations and n! not more than this, all n! orders are evaluated instead.
    pub mantel_permutations: u32,
}

/// The descriptor of `differentiation`: its name, version and parameters with defaults.
pub fn descriptor() -> Descriptor {
    let count = ParamKind::Integer { min: 0, max: 1_000_000 };
    Descriptor::new(
        "differentiation",
        "0.2.0",
        "Pairwise and global FST (Weir & Cockerham 1984) with permutation p-values and bootstrap intervals, \
         Jost's D, G″ST, and isolation by distance",
    )
    .param(
        "permutations",
        count.clone(),
        json!(1000),
        "permutations of individuals between the two groups of each pair for the FST p-value (0 = no test)",
    )
    .param(
        "by_year",
        ParamKind::Boolean,
        json!(false),
        "false: each population with its years pooled; true: groups are (population, year), pairs within a year",
    )
    .param(
        "bootstrap",
        count.clone(),
        json!(1000),
        "bootstrap replicates over loci for the 95% intervals of FST, D and G″ST (0 = no interval)",
    )
    .param(
        "mantel_permutations",
        count,
        json!(9999),
        "permutations of population labels for the Mantel test (0 = no test); with n populations and n! ≤ this, all \
         n! orders instead",
    )
}

/// The `differentiation` step.
#[derive(Debug, Clone, Copy, Default)]
pub struct Differentiation;

impl Step for Differentiation {
    fn descriptor(&self) -> Descriptor {
        descriptor()
    }

    fn run(&self, ctx: &StepContext<'_>) -> Result<StepOutput, StepError> {
        let params: Params = ctx.params_as()?;
        let sets = comparison_sets(&ctx.view, params.by_year);
        let packed = pack(ctx.view);
        let estimates: Vec<SetEstimates<'_>> =
            sets.iter().map(|set| estimate_set(&packed, set, &params, ctx.seed)).collect();
        let isolation = ibd::analyse(&estimates, &ctx.assessment.populations, &params, ctx.seed);
        let mut output = StepOutput::default();
        output.tables.insert("pairwise".into(), pairwise_table(&estimates)?);
        output.tables.insert("global".into(), global_table(&estimates)?);
        if !isolation.tests.is_empty() {
            output.tables.insert("ibd".into(), ibd_table(&isolation)?);
            output.tables.insert("ibd_test".into(), ibd_test_table(&isolation)?);
        }
        output.findings = collect_findings(&ctx.view, &estimates, &params, isolation.findings.clone());
        output.findings.extend(special_values::findings(&output.tables, &params));
        output.citations = citations(!isolation.tests.is_empty());
        Ok(output)
    }
}

/// Groups compared with each other: all populations (years pooled) or those of one year.
#[derive(Debug, Clone, PartialEq)]
struct ComparisonSet {
    /// The year of a per-year set; `None` when years are pooled.
    year: Option<i32>,
    /// The groups, sorted by population.
    groups: Vec<Group>,
}

impl ComparisonSet {
    /// The set in words, for the `global` table and findings.
    fn describe(&self) -> String {
        match self.year {
            None => "all populations, sampling years pooled".to_string(),
            Some(year) => format!("populations sampled in {year}"),
        }
    }
}

/// One pair of a comparison set (indices into its groups, a < b) with its estimates.
#[derive(Debug, Clone, PartialEq)]
struct PairResult {
    a: usize,
    b: usize,
    estimate: ComparisonEstimate,
    permutation: Option<PermutationOutcome>,
}

/// The estimates of one comparison set.
#[derive(Debug, Clone, PartialEq)]
struct SetEstimates<'s> {
    set: &'s ComparisonSet,
    /// Allele counts per group and view locus: `counts[group][locus]`.
    counts: Vec<Vec<AlleleCounts>>,
    pairs: Vec<PairResult>,
    /// Every group of the set together; `None` with fewer than two groups.
    global: Option<ComparisonEstimate>,
}

fn comparison_sets(view: &GenotypeView<'_>, by_year: bool) -> Vec<ComparisonSet> {
    if !by_year {
        return vec![ComparisonSet { year: None, groups: view.populations() }];
    }
    let mut by_year: BTreeMap<i32, Vec<Group>> = BTreeMap::new();
    for group in view.groups() {
        by_year.entry(group.year).or_default().push(group);
    }
    by_year.into_iter().map(|(year, groups)| ComparisonSet { year: Some(year), groups }).collect()
}

fn estimate_set<'s>(
    packed: &PackedGenotypes<'_>,
    set: &'s ComparisonSet,
    params: &Params,
    seed: Seed,
) -> SetEstimates<'s> {
    let counts = group_counts(packed, set);
    let view = &packed.view();
    let indices: Vec<(usize, usize)> =
        (0..set.groups.len()).flat_map(|a| ((a + 1)..set.groups.len()).map(move |b| (a, b))).collect();
    // Pairs run in parallel; each draws from its own streams and `collect` keeps their order,
    // so the result does not depend on the number of threads.
    let pairs = indices.par_iter().map(|&pair| estimate_pair(view, set, &counts, pair, params, seed)).collect();
    let global = (set.groups.len() >= 2).then(|| {
        let all: Vec<&[AlleleCounts]> = counts.iter().map(Vec::as_slice).collect();
        let stream = format!("fst-bootstrap/global/{}", year_key(set.year));
        pairs::estimate(&all, params.bootstrap as usize, &mut rng(seed, &stream))
    });
    SetEstimates { set, counts, pairs, global }
}

/// Allele counts per group of the set and view locus (`counts[group][locus]`), by popcount at
/// biallelic loci.
fn group_counts(packed: &PackedGenotypes<'_>, set: &ComparisonSet) -> Vec<Vec<AlleleCounts>> {
    set.groups
        .iter()
        .map(|group| {
            let members = packed.sample_set(&group.samples);
            (0..packed.view().n_loci()).map(|locus| packed.allele_counts(locus, &members)).collect()
        })
        .collect()
}

/// Estimates one pair. Each pair draws from its own named streams, so a pair's interval and
/// p-value do not change when other populations are added to or removed from the data.
fn estimate_pair(
    view: &GenotypeView<'_>,
    set: &ComparisonSet,
    counts: &[Vec<AlleleCounts>],
    (a, b): (usize, usize),
    params: &Params,
    seed: Seed,
) -> PairResult {
    let key = format!("{}/{}/{}", year_key(set.year), set.groups[a].population, set.groups[b].population);
    let bootstrap_stream = format!("fst-bootstrap/{key}");
    let estimate =
        pairs::estimate(&[&counts[a], &counts[b]], params.bootstrap as usize, &mut rng(seed, &bootstrap_stream));
    // With no permutation the test is off: skip packing the pair.
    let tested = (params.permutations > 0).then_some(&estimate.loci);
    let permutation = tested
        .and_then(|loci| PairPermutation::new(view, &set.groups[a].samples, &set.groups[b].samples, loci))
        .and_then(|mut permuted| {
            let mut labels = permuted.labels();
            let observed = permuted.theta(&labels)?;
            let mut stream = rng(seed, &format!("fst-permutation/{key}"));
            permutation_test_in_batches(&mut labels, observed, params.permutations as usize, &mut stream, &mut permuted)
        });
    PairResult { a, b, estimate, permutation }
}

fn citations(with_isolation_by_distance: bool) -> Vec<String> {
    let mut citations = vec![
        WEIR_COCKERHAM_1984,
        GOUDET_1996,
        EFRON_TIBSHIRANI_1993,
        NEI_1973,
        NEI_CHESSER_1983,
        HEDRICK_2005,
        MEIRMANS_HEDRICK_2011,
        JOST_2008,
    ];
    if with_isolation_by_distance {
        citations.extend([ROUSSET_1997, MANTEL_1967, SINNOTT_1984, MORITZ_1980]);
    }
    citations.into_iter().map(str::to_string).collect()
}
