//! # popgauge-example-relatedness
//!
//! An external popgauge step built against the SDK only (`popgauge-abi`): the mean pairwise
//! relatedness within each sampling group with the estimator of Queller & Goodnight (1989),
//! and a percentile bootstrap interval over loci drawn with the SDK's
//! [`popgauge_abi::resampling`] (the same seeded stream and interval as the built-in steps).
//!
//! # Method
//! For a pair of individuals x = (a, b) and y = (c, d) typed at a locus, with allele
//! frequencies p estimated from the *other* members of the group (the pair itself left out, so
//! that the pair's own alleles do not pull the reference towards them), the locus contributes
//!
//! - numerator   δac + δad + δbc + δbd − pa − pb − pc − pd,
//! - denominator 2 + δab + δcd − pa − pb − pc − pd,
//!
//! (δ = 1 for the same allele, else 0): the sum over both members taken as the reference
//! individual, which makes the estimate symmetric. The pair's relatedness `r` is the sum of
//! numerators over the loci typed in both divided by the sum of denominators. Expected values:
//! 0 for unrelated individuals, 0.5 for parent–offspring and full sibs, 0.25 for half sibs.
//! The group's `r_mean` is the mean over its pairs; `r_low`/`r_high` is the 95 % percentile
//! interval of `r_mean` over `bootstrap` resamples of loci (with replacement). A pair with no
//! usable locus, or a zero denominator, has `r` null and is left out of the mean.
//!
//! Pairwise relatedness from a few dozen loci is noisy for single pairs; the group mean is the
//! robust quantity. The estimate is relative to the group's own allele frequencies.
//!
//! # Tables
//! - `by_group`: population, year, n, pairs, loci, r_mean, r_low, r_high.
//! - `pairs`: population, year, sample_a, sample_b, loci, r.
//!
//! # Citation
//! Queller DC, Goodnight KF (1989) Estimating relatedness using genetic markers.
//! *Evolution* 43:258–275.

use popgauge_abi::resampling::{bootstrap_loci, percentile_interval, rng};
use popgauge_abi::{
    AlleleCounts, Cell, Descriptor, Finding, GenotypeView, Group, ParamKind, Step, StepContext, StepError, StepOutput,
    Table, Where,
};
use serde::Deserialize;
use serde_json::json;

/// The reference of the method.
pub const QUELLER_GOODNIGHT_1989: &str =
    "Queller DC, Goodnight KF (1989) Estimating relatedness using genetic markers. Evolution 43:258–275.";

/// Level of the bootstrap interval of `r_mean`.
const CONFIDENCE_LEVEL: f64 = 0.95;

/// A group with fewer samples than this gets a `low-sample-size` warning (common practice).
const LOW_SAMPLE_SIZE: usize = 10;

/// Parameters, as resolved from the descriptor.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Params {
    /// Bootstrap replicates over loci (0 = no interval).
    pub bootstrap: u32,
    /// Write the `pairs` table.
    pub pairs_table: bool,
}

/// The `relatedness-qg` step.
#[derive(Debug, Clone, Copy, Default)]
pub struct Relatedness;

impl Step for Relatedness {
    fn descriptor(&self) -> Descriptor {
        Descriptor::new(
            "relatedness-qg",
            "0.1.0",
            "Mean pairwise relatedness per group (Queller & Goodnight 1989) with a bootstrap CI over loci",
        )
        .param(
            "bootstrap",
            ParamKind::Integer { min: 0, max: 100_000 },
            json!(1000),
            "bootstrap replicates over loci for the interval of r_mean (0 = none)",
        )
        .param(
            "pairs_table",
            ParamKind::Boolean,
            json!(true),
            "also write the r of every pair (table `pairs`)",
        )
    }

    fn run(&self, ctx: &StepContext<'_>) -> Result<StepOutput, StepError> {
        let params: Params = ctx.params_as()?;
        let groups: Vec<GroupRelatedness> =
            ctx.view.groups().into_iter().map(|g| GroupRelatedness::estimate(&ctx.view, g)).collect();
        let mut output = StepOutput::default();
        output.tables.insert("by_group".into(), by_group_table(&groups, &params, ctx)?);
        if params.pairs_table {
            output.tables.insert("pairs".into(), pairs_table(&ctx.view, &groups)?);
        }
        output.findings = findings(&groups);
        output.citations = vec![QUELLER_GOODNIGHT_1989.into()];
        Ok(output)
    }
}

/// Numerator and denominator of one pair at one locus; `None` where not both are typed or no
/// other member of the group is.
type Contribution = Option<(f64, f64)>;

/// Per-pair, per-locus contributions of one group.
struct GroupRelatedness {
    group: Group,
    /// (view sample a, view sample b) for each pair, a < b.
    pairs: Vec<(usize, usize)>,
    /// `contributions[pair * n_loci + locus]`.
    contributions: Vec<Contribution>,
    n_loci: usize,
}

impl GroupRelatedness {
    fn estimate(view: &GenotypeView<'_>, group: Group) -> GroupRelatedness {
        let n_loci = view.n_loci();
        let pairs: Vec<(usize, usize)> = (0..group.samples.len())
            .flat_map(|i| ((i + 1)..group.samples.len()).map(move |j| (i, j)))
            .map(|(i, j)| (group.samples[i], group.samples[j]))
            .collect();
        let mut contributions = vec![None; pairs.len() * n_loci];
        let mut counts = AlleleCounts::default();
        for locus in 0..n_loci {
            view.allele_counts_into(locus, &group.samples, &mut counts);
            for (p, &(x, y)) in pairs.iter().enumerate() {
                contributions[p * n_loci + locus] = pair_contribution(view, locus, &counts, x, y);
            }
        }
        GroupRelatedness { group, pairs, contributions, n_loci }
    }

    /// r of pair `p` over the given loci (indices may repeat, as in a bootstrap resample).
    fn pair_r(&self, p: usize, loci: impl Iterator<Item = usize>) -> Option<f64> {
        let row = &self.contributions[p * self.n_loci..(p + 1) * self.n_loci];
        let (num, den) = loci.filter_map(|l| row[l]).fold((0.0, 0.0), |(n, d), (a, b)| (n + a, d + b));
        (den > 0.0).then(|| num / den)
    }

    fn loci_of_pair(&self, p: usize) -> usize {
        self.contributions[p * self.n_loci..(p + 1) * self.n_loci].iter().flatten().count()
    }

    /// Mean r over pairs with a defined r, over the given loci.
    fn mean_r(&self, loci: &[usize]) -> Option<f64> {
        let values: Vec<f64> = (0..self.pairs.len()).filter_map(|p| self.pair_r(p, loci.iter().copied())).collect();
        (!values.is_empty()).then(|| values.iter().sum::<f64>() / values.len() as f64)
    }
}

/// The Queller & Goodnight terms of one pair at one locus, with allele frequencies of the group
/// without the pair.
fn pair_contribution(view: &GenotypeView<'_>, locus: usize, group: &AlleleCounts, x: usize, y: usize) -> Contribution {
    let (a, b) = view.genotype(x, locus)?;
    let (c, d) = view.genotype(y, locus)?;
    let others = f64::from(group.gene_copies()) - 4.0;
    if others <= 0.0 {
        return None;
    }
    let frequency = |allele: popgauge_abi::AlleleCode| {
        let own = [a, b, c, d].iter().filter(|&&k| k == allele).count() as f64;
        (f64::from(group.alleles[allele.0 as usize]) - own) / others
    };
    let same = |u: popgauge_abi::AlleleCode, v: popgauge_abi::AlleleCode| f64::from(u8::from(u == v));
    let reference = frequency(a) + frequency(b) + frequency(c) + frequency(d);
    let numerator = same(a, c) + same(a, d) + same(b, c) + same(b, d) - reference;
    let denominator = 2.0 + same(a, b) + same(c, d) - reference;
    Some((numerator, denominator))
}

fn by_group_table(groups: &[GroupRelatedness], params: &Params, ctx: &StepContext<'_>) -> Result<Table, StepError> {
    let mut table = Table::new(&["population", "year", "n", "pairs", "loci", "r_mean", "r_low", "r_high"]);
    let all_loci: Vec<usize> = (0..ctx.view.n_loci()).collect();
    for estimate in groups {
        let r_mean = estimate.mean_r(&all_loci);
        let stream = format!("{}/{}", estimate.group.population, estimate.group.year);
        let mut replicates =
            bootstrap_loci(all_loci.len(), params.bootstrap as usize, &mut rng(ctx.seed, &stream), |loci| {
                estimate.mean_r(loci)
            });
        let interval = percentile_interval(&mut replicates, CONFIDENCE_LEVEL);
        let usable_loci = (0..estimate.n_loci)
            .filter(|&l| (0..estimate.pairs.len()).any(|p| estimate.contributions[p * estimate.n_loci + l].is_some()))
            .count();
        table.push_row(vec![
            Cell::text(&estimate.group.population),
            Cell::Int(estimate.group.year.into()),
            Cell::Int(estimate.group.samples.len() as i64),
            Cell::Int(estimate.pairs.len() as i64),
            Cell::Int(usable_loci as i64),
            Cell::maybe(r_mean),
            Cell::maybe(interval.map(|i| i.low)),
            Cell::maybe(interval.map(|i| i.high)),
        ])?;
    }
    Ok(table)
}

fn pairs_table(view: &GenotypeView<'_>, groups: &[GroupRelatedness]) -> Result<Table, StepError> {
    let mut table = Table::new(&["population", "year", "sample_a", "sample_b", "loci", "r"]);
    for estimate in groups {
        for (p, &(x, y)) in estimate.pairs.iter().enumerate() {
            table.push_row(vec![
                Cell::text(&estimate.group.population),
                Cell::Int(estimate.group.year.into()),
                Cell::text(&view.sample(x).id),
                Cell::text(&view.sample(y).id),
                Cell::Int(estimate.loci_of_pair(p) as i64),
                Cell::maybe(estimate.pair_r(p, 0..estimate.n_loci)),
            ])?;
        }
    }
    Ok(table)
}

fn findings(groups: &[GroupRelatedness]) -> Vec<Finding> {
    let mut findings = Vec::new();
    for estimate in groups {
        let n = estimate.group.samples.len();
        if n < LOW_SAMPLE_SIZE {
            findings.push(Finding::warning(
                "low-sample-size",
                format!(
                    "{} {}: only {n} samples; mean relatedness rests on {} pairs and its interval is wide",
                    estimate.group.population,
                    estimate.group.year,
                    estimate.pairs.len()
                ),
                Where::group(&estimate.group.population, estimate.group.year),
            ));
        }
    }
    findings.push(Finding::info(
        "relatedness-caution",
        "Relatedness of single pairs from few loci is imprecise; read the group means with their intervals, and \
         treat any management decision as guidance for review by a qualified geneticist.",
        Where::default(),
    ));
    findings
}

popgauge_abi::export_step!(Relatedness);

#[cfg(test)]
mod tests;
