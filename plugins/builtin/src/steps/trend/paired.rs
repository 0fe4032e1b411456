//! Populations sampled in exactly two years: the paired comparison over loci of the per-locus
//! `he` and `ho` (Wilcoxon signed-rank test) and the mean change with its bootstrap interval.

use std::collections::BTreeMap;

use popgauge_abi::{Finding, StepContext, Where};

use crate::stats::bootstrap::{bootstrap_loci, percentile_interval, rng};
use crate::stats::trend::{SignedRank, wilcoxon_signed_rank};

use super::sources::SourceProblem;
use super::{CONFIDENCE_LEVEL, Metric, PAIRED_METRICS, Params, sources};

/// A two-point comparison over loci.
pub(super) struct PairedChange {
    pub(super) population: String,
    pub(super) metric: &'static str,
    pub(super) year_start: i32,
    pub(super) year_end: i32,
    pub(super) loci: usize,
    pub(super) test: Option<SignedRank>,
    pub(super) mean_change: Option<f64>,
    pub(super) interval: Option<(f64, f64)>,
    pub(super) replicates: usize,
}

/// The paired comparisons for populations sampled in exactly two years.
pub(super) fn paired_changes(
    ctx: &StepContext<'_>,
    metrics: &[Metric],
    params: &Params,
    findings: &mut Vec<Finding>,
) -> Vec<PairedChange> {
    let Some(diversity) = ctx.earlier_by_uses("diversity") else { return Vec::new() };
    let mut changes = Vec::new();
    for metric in PAIRED_METRICS.iter().filter(|m| metrics.contains(&Metric::Diversity(m))) {
        let values = match sources::locus_values(diversity, metric) {
            Ok(values) => values,
            Err(SourceProblem(reason)) => {
                findings.push(Finding::warning(
                    "missing-source",
                    format!("paired test of {metric} skipped: {reason}"),
                    Where::default(),
                ));
                continue;
            }
        };
        for (population, years) in &values {
            if let [(first, before), (last, after)] = years.iter().collect::<Vec<_>>()[..] {
                let differences = paired_differences(before, after);
                let seed_stream = format!("paired/{population}/{metric}");
                let (mean_change, interval) =
                    mean_change_with_interval(&differences, params.bootstrap, ctx, &seed_stream);
                changes.push(PairedChange {
                    population: population.clone(),
                    metric,
                    year_start: *first,
                    year_end: *last,
                    loci: differences.len(),
                    test: wilcoxon_signed_rank(&differences),
                    mean_change,
                    interval,
                    replicates: params.bootstrap,
                });
            }
        }
    }
    changes.sort_by(|a, b| a.population.cmp(&b.population));
    changes
}

/// Later minus earlier value at each locus present in both years, in locus-name order.
fn paired_differences(before: &BTreeMap<String, f64>, after: &BTreeMap<String, f64>) -> Vec<f64> {
    before.iter().filter_map(|(locus, b)| Some(after.get(locus)? - b)).collect()
}

/// The mean change over loci and its percentile bootstrap interval (loci resampled).
fn mean_change_with_interval(
    differences: &[f64],
    replicates: usize,
    ctx: &StepContext<'_>,
    stream: &str,
) -> (Option<f64>, Option<(f64, f64)>) {
    let mean_of = |indices: &[usize]| crate::stats::mean(indices.iter().map(|&i| differences[i]));
    let all: Vec<usize> = (0..differences.len()).collect();
    let mean_change = mean_of(&all);
    let mut generator = rng(ctx.seed, stream);
    let mut replicate_means = bootstrap_loci(differences.len(), replicates, &mut generator, mean_of);
    let interval = percentile_interval(&mut replicate_means, CONFIDENCE_LEVEL).map(|i| (i.low, i.high));
    (mean_change, interval)
}
