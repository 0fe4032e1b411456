//! `hwe`: Hardy–Weinberg exact tests per locus and group (population, year), the direction of
//! any departure, Fisher's combination per group, false-discovery-rate q-values over every test
//! of the step, and a null-allele indication per locus.
//!
//! # Method
//! At each locus, in each group, the *n* individuals typed at both alleles (code 0 = untyped
//! is left out, never imputed) form a genotype table, tested given its allele counts
//! ([`crate::stats::hwe_exact`], through [`crate::stats::hwe_groups`], which `validate` shares):
//!
//! - two alleles: the exact test of Wigginton, Cutler & Abecasis (2005) by recurrence;
//! - three or more: complete enumeration of the tables when they are few (Guo & Thompson
//!   1992), otherwise a Monte Carlo estimate from `permutations` random tables (default
//!   10,000): the 2n gene copies are shuffled and paired; p̂ = (b + 1)/(B + 1) with standard
//!   error `p_se` (0 for exact tests). Each test draws from its own stream of the step seed,
//!   named after the group and locus, so results do not depend on the order of the tests or on
//!   which other loci are present.
//!
//! `p_value` sums the probabilities of the tables no more probable than the observed one
//! (ties within a relative 1e−7); `p_mid` is the mid-p; `p_deficit` and `p_excess` are the
//! one-sided tests on the number of heterozygotes. `direction` is `deficit` when Ho < He
//! (Nei 1978, unbiased), `excess` when Ho > He, else `none` (compared exactly in integers).
//!
//! A locus monomorphic in the group or typed in fewer than two of its individuals is
//! untestable: its p-values are `null` (not 1) and one info finding lists all such cases.
//!
//! # Combining and correcting
//! - `by_group`: Fisher's (1932) X² = −2 Σ ln p over the loci tested in the group, on 2m
//!   degrees of freedom. It assumes independent loci; with exact (discrete) p-values it is
//!   conservative.
//! - `q_value`: Benjamini & Hochberg (1995) over every locus × group test of the step; the
//!   family size m is stated in an info finding.
//! - Null alleles: a `possible-null-allele` warning for a locus where, in at least half of the
//!   groups in which it was tested, the deficit is significant (`direction` = deficit and
//!   q < 0.05) and Brookfield's (1996) r = (He − Ho)/(1 + He) ≥ 0.05 (docs/methods.md, "Null
//!   alleles"; the estimator is written from memory and awaits a check against the paper).
//!   Inbreeding or a Wahlund effect raise both too, so this is an indication only. `null_allele_r`
//!   reports r.
//!
//! # Tables
//! - `by_locus`: population, year, locus, n, alleles, method (`exact`/`monte-carlo`), draws,
//!   p_value, p_se, p_mid, p_deficit, p_excess, q_value, direction, ho, he, null_allele_r.
//! - `by_group`: population, year, loci_tested, chi2, df, p_value.

use popgauge_abi::{
    Cell, Descriptor, Finding, FindingLevel, ParamKind, Step, StepContext, StepError, StepOutput, Table,
};

use crate::packing::pack;
use serde::Deserialize;
use serde_json::json;

use crate::special_values::{explain, group_name, rows_where};
use crate::stats::fdr::{BENJAMINI_HOCHBERG_1995, FISHER_1932, FisherCombination, fisher_combination};
use crate::stats::heterozygosity::NEI_1978;
use crate::stats::hwe_exact::{self, TestSettings};
use crate::stats::hwe_groups::{GroupTests, LocusTest, assign_q_values, test_groups};
use crate::stats::null_allele::BROOKFIELD_1996;

mod findings;
mod tables;

pub use crate::stats::hwe_groups::{Direction, NULL_ALLELE_R, SIGNIFICANT_Q};

/// Parameters of `hwe`, as resolved from the descriptor (defaults live there).
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Params {
    /// Monte Carlo draws for multi-allelic loci with too many tables to enumerate.
    pub permutations: u32,
}

/// The descriptor of `hwe`: its name, version and parameters with defaults.
pub fn descriptor() -> Descriptor {
    Descriptor::new(
        "hwe",
        "0.1.0",
        "Hardy–Weinberg exact tests per locus and group, deficit/excess, Fisher's combination and FDR q-values",
    )
    .param(
        "permutations",
        ParamKind::Integer { min: 0, max: 10_000_000 },
        json!(10_000),
        "Monte Carlo draws for multi-allelic loci too large to enumerate (0 = leave them untested)",
    )
}

/// The `hwe` step.
#[derive(Debug, Clone, Copy, Default)]
pub struct Hwe;

impl Step for Hwe {
    fn descriptor(&self) -> Descriptor {
        descriptor()
    }

    fn run(&self, ctx: &StepContext<'_>) -> Result<StepOutput, StepError> {
        let params: Params = ctx.params_as()?;
        let settings = TestSettings { permutations: params.permutations, ..TestSettings::default() };
        let groups = ctx.view.groups();
        let loci: Vec<usize> = (0..ctx.view.n_loci()).collect();
        let mut results = test_groups(&pack(ctx.view), &groups, &loci, &settings, ctx.seed);
        let family_size = assign_q_values(&mut results);
        let combined: Vec<Option<FisherCombination>> = results.iter().map(combine_group).collect();
        let mut output = StepOutput::default();
        output.tables.insert("by_locus".into(), tables::by_locus(&ctx.view, &groups, &results)?);
        let by_group = tables::by_group(&groups, &results, &combined)?;
        output.findings = findings::collect(&ctx.view, &groups, &results, family_size, &settings);
        output.findings.extend(untested_groups_finding(&by_group));
        output.tables.insert("by_group".into(), by_group);
        output.citations = citations();
        Ok(output)
    }
}

fn combine_group(tests: &GroupTests) -> Option<FisherCombination> {
    let p_values: Vec<f64> = tests.iter().filter_map(LocusTest::p_value).collect();
    fisher_combination(&p_values)
}

fn citations() -> Vec<String> {
    let mut all: Vec<String> = hwe_exact::CITATIONS.iter().map(|c| c.to_string()).collect();
    all.extend([FISHER_1932, BENJAMINI_HOCHBERG_1995, BROOKFIELD_1996, NEI_1978].map(String::from));
    all
}

/// A count as a table integer (counts never approach `i64::MAX`).
fn count_cell(count: usize) -> Cell {
    Cell::Int(i64::try_from(count).unwrap_or(i64::MAX))
}

/// One finding for the groups in which no locus was tested, whose Fisher combination (chi2,
/// df, p_value of `by_group`) is therefore null.
fn untested_groups_finding(by_group: &Table) -> Option<Finding> {
    let groups = rows_where(by_group, |r| r.is_null("chi2"), group_name);
    explain(FindingLevel::Info, "hwe-group-untested", &groups, |n, list| {
        format!(
            "{n} group(s) have no testable locus (every locus monomorphic there or typed in fewer than two \
             individuals), so their Fisher combination (chi2, df, p_value in by_group) is null: {list}"
        )
    })
}

#[cfg(test)]
mod tests;
