//! `ne-temporal`: effective population size from the change in allele frequencies between two
//! sampling years of the same population (the temporal method).
//!
//! # Method (docs/methods.md, "Temporal Ne")
//! For each population sampled in at least two years, each pair of consecutive sampling years
//! is compared, and so are the first and last years when there are three or more. At each locus,
//! with xᵤ and yᵤ the allele frequencies among the individuals typed at the locus in the first
//! and second sample (S₀ₗ and S_tₗ of them), zᵤ = (xᵤ + yᵤ)/2 and Kₗ the alleles seen in either
//! sample (alleles absent from both, and loci with a single allele in both, are left out):
//!
//! - F_c (Nei & Tajima 1981) = (1/K) Σᵤ (xᵤ − yᵤ)²/(zᵤ − xᵤyᵤ), combined over loci as
//!   Σ Kₗ F_c,ₗ / Σ Kₗ (`fc`);
//! - F_k (Pollak 1983) = [1/(K − 1)] Σᵤ (xᵤ − yᵤ)²/zᵤ, combined as Σ (Kₗ − 1) F_k,ₗ / Σ (Kₗ − 1)
//!   (`fk`);
//! - F_s (Jorde & Ryman 2007) from the ratio of sums over all alleles and loci
//!   F̃ = Σ (x − y)² / Σ z(1 − z): plan II F_s = [F̃(1 − 1/(4ñ)) − 1/ñ]/[(1 + F̃/4)(1 − 1/(2S_t))],
//!   plan I F_s′ = [F̃(1 − 1/(4ñ) + 1/(4N)) − 1/ñ + 1/N]/[(1 + F̃/4)(1 − 1/(2S_t))], with ñ the
//!   harmonic mean of S₀ and S_t (`fs`).
//!
//! **Sample sizes with missing data.** S₀ and S_t (`s_start`, `s_end`) are the harmonic means of
//! the per-locus numbers of typed individuals, weighted by Kₗ, and are used in every
//! sampling correction.
//!
//! **Sampling plans (Waples 1989).** `plan` has no default: the recipe must say how the
//! animals were sampled, since the choice changes every estimate and the data cannot tell.
//! Plan II (individuals sampled before reproduction and removed, or sampling effectively with
//! replacement): Ne = t / {2[F − 1/(2S₀) − 1/(2S_t)]}.
//! Plan I (sampled after reproduction, or non-lethally and returned, from N adults):
//! Ne = t / {2[F − 1/(2S₀) − 1/(2S_t) + 1/N]}, with N the population's `census_size` from the
//! population sheet; without it there is no plan-I estimate (a `census-size-missing` finding).
//! For F_s, Ne = t/(2F_s) (`ne_fc`, `ne_fk`, `ne_fs`).
//!
//! **Generations.** t = (year_end − year_start) / `generation_time_years` of the recipe
//! (`generations`, in generations, not years). Without a generation time there is no estimate
//! (an error-level finding); when t < 1 there is none either (a warning). Overlapping
//! generations bias the method unless the samples are several generations apart (Jorde & Ryman
//! 1995; Waples & Yokota 2007).
//!
//! **Precision (`temporal-precision-low`).** When the drift between the samples, t/(2Ne), is
//! small beside the sampling noise 1/(2S₀) + 1/(2S_t), the estimate loses precision. A
//! comparison is flagged with a `temporal-precision-low` warning when `ne_fs` > t · S̃ (S̃ the
//! harmonic mean of S₀ and S_t; or `"inf"`) and `ne_high` is `"inf"` (or there is no interval).
//! On simulated populations of Ne 500–2,000 sampled 10 generations apart with S 25–60 only
//! 12–70% of the flagged point estimates were within a factor of two of the true Ne, and the
//! interval contained the true Ne in only 15–94% of the flagged replicates (91–96% of all); the
//! rule, its sources and the figures are in `ne_temporal/precision.rs` and docs/accuracy.md.
//!
//! # Confidence intervals (95%)
//! - `ne_fc_low`/`ne_fc_high` and `ne_fk_low`/`ne_fk_high`: χ² intervals of Waples (1989),
//!   n′F/χ²_{n′} with n′ = Σ(Kₗ − 1) (`df`), each F bound pushed through the same sampling
//!   correction and Ne formula (the upper F bound gives the lower Ne).
//! - `ne_low`/`ne_high` are the interval of **`ne_fs`**: a delete-one jackknife over loci of F_s
//!   (recomputing F̃, S₀ and S_t without each locus), F_s ± t_{L−1}·SE_J, each bound through
//!   Ne = t/(2F_s).
//!
//! # Special values
//! A corrected F (or F_s) ≤ 0, or a lower F bound ≤ 0, gives `"inf"`: the drift signal does not
//! exceed sampling noise, so the data cannot tell Ne from infinity and only the lower bound is
//! informative. Ne is never negative. Without generation time, census size (plan I) or loci
//! typed in both years, estimates are `null`.
//!
//! # Citations
//! See [`CITATIONS`].

mod findings;
mod precision;

use std::collections::BTreeMap;

use popgauge_abi::{
    AlleleCounts, AssessmentInfo, Cell, Descriptor, GenotypeView, Group, PackedGenotypes, ParamKind, Step, StepContext,
    StepError, StepOutput, Table,
};

use crate::packing::pack;
use serde::Deserialize;

use self::findings::{collect_findings, special_value_findings};
use crate::stats::bootstrap::{Interval, jackknife_loci, jackknife_standard_error, sum_terms};
use crate::stats::intervals::{chi_square_interval, student_t_interval};

/// A sample with fewer individuals (harmonic mean over loci) gets a `low-sample-size` warning.
pub const LOW_SAMPLE_SIZE: f64 = 15.0;
/// Fewer independent alleles n′ than this give a `few-comparisons` warning.
pub const FEW_COMPARISONS: f64 = 10.0;
/// Fewer loci than this give a `few-loci` warning (common practice, as `diversity`).
pub const FEW_LOCI: usize = 5;
/// Confidence level of every interval.
pub const LEVEL: f64 = 0.95;

/// The references of the methods, for the results' citations.
pub const CITATIONS: &[&str] = &[
    "Nei M, Tajima F (1981) Genetic drift and estimation of effective population size. Genetics 98:625–640.",
    "Pollak E (1983) A new method for estimating the effective population size from allele frequency changes. \
     Genetics 104:531–548.",
    "Waples RS (1989) A generalized approach for estimating effective population size from temporal changes in \
     allele frequency. Genetics 121:379–391.",
    "Jorde PE, Ryman N (2007) Unbiased estimator for genetic drift and effective population size. Genetics \
     177:927–935.",
    "Jorde PE, Ryman N (1995) Temporal allele frequency change and estimation of effective size in populations \
     with overlapping generations. Genetics 139:1077–1090.",
    "Waples RS, Yokota M (2007) Temporal estimates of effective population size in species with overlapping \
     generations. Genetics 175:219–233.",
];

/// Waples' (1989) sampling plan.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize)]
pub enum Plan {
    /// Sampled after reproduction or non-lethally (needs the census size N).
    I,
    /// Sampled before reproduction and removed, or with replacement.
    II,
}

/// Parameters of `ne-temporal`, as resolved from the descriptor (`plan` is required).
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Params {
    /// The sampling plan.
    pub plan: Plan,
}

/// The descriptor of `ne-temporal`: its name, version and its one, required, parameter.
pub fn descriptor() -> Descriptor {
    Descriptor::new(
        "ne-temporal",
        "0.1.0",
        "Effective population size from allele-frequency change between sampling years (Fc, Fk, Fs) with the \
         sampling plans of Waples (1989)",
    )
    .required_param(
        "plan",
        ParamKind::Choice { choices: vec!["I".into(), "II".into()] },
        "the sampling plan of Waples (1989), required because it changes every estimate: \"I\" if the animals \
         were sampled after reproduction or non-lethally (uses census_size from the population sheet), \"II\" if \
         they were sampled before reproduction or lethally",
    )
}

/// The `ne-temporal` step.
#[derive(Debug, Clone, Copy, Default)]
pub struct NeTemporal;

impl Step for NeTemporal {
    fn descriptor(&self) -> Descriptor {
        descriptor()
    }

    fn run(&self, ctx: &StepContext<'_>) -> Result<StepOutput, StepError> {
        let params: Params = ctx.params_as()?;
        let comparisons = sampling_comparisons(&ctx.view);
        let packed = pack(ctx.view);
        let results: Vec<Comparison> = comparisons
            .into_iter()
            .map(|(start, end)| compare(&packed, ctx.assessment, params.plan, start, end))
            .collect();
        let mut output = StepOutput::default();
        let estimates = estimates_table(&results)?;
        output.findings = collect_findings(&ctx.view, ctx.assessment, &results);
        output.findings.extend(special_value_findings(&estimates));
        output.findings.extend(precision::precision_findings(&results));
        output.tables.insert("estimates".into(), estimates);
        output.citations = CITATIONS.iter().map(|c| c.to_string()).collect();
        Ok(output)
    }
}

/// Pairs of samples (groups) of the same population to compare: consecutive years, then the
/// first and last year when there are three or more.
fn sampling_comparisons(view: &GenotypeView<'_>) -> Vec<(Group, Group)> {
    let mut by_population: BTreeMap<String, Vec<Group>> = BTreeMap::new();
    for group in view.groups() {
        by_population.entry(group.population.clone()).or_default().push(group);
    }
    let mut pairs = Vec::new();
    for years in by_population.into_values() {
        for window in years.windows(2) {
            pairs.push((window[0].clone(), window[1].clone()));
        }
        if years.len() >= 3 {
            pairs.push((years[0].clone(), years[years.len() - 1].clone()));
        }
    }
    pairs
}

/// Allele frequencies of one locus in the two samples, over the alleles seen in either.
#[derive(Debug, Clone, PartialEq)]
pub struct LocusFrequencies {
    /// Individuals typed in the first sample.
    pub start_typed: f64,
    /// Individuals typed in the second sample.
    pub end_typed: f64,
    /// (x, y) per allele seen in either sample.
    pub alleles: Vec<(f64, f64)>,
}

impl LocusFrequencies {
    /// From the allele counts of both samples; `None` when either sample has no typed
    /// individual or fewer than two alleles are seen in total.
    pub fn from_counts(start: &AlleleCounts, end: &AlleleCounts) -> Option<LocusFrequencies> {
        if start.typed == 0 || end.typed == 0 {
            return None;
        }
        let (x, y) = (start.frequencies(), end.frequencies());
        let alleles: Vec<(f64, f64)> = (1..x.len().max(y.len()))
            .map(|code| (x.get(code).copied().unwrap_or(0.0), y.get(code).copied().unwrap_or(0.0)))
            .filter(|&(a, b)| a > 0.0 || b > 0.0)
            .collect();
        (alleles.len() >= 2).then(|| LocusFrequencies {
            start_typed: f64::from(start.typed),
            end_typed: f64::from(end.typed),
            alleles,
        })
    }

    fn allele_count(&self) -> f64 {
        self.alleles.len() as f64
    }

    /// F_c at this locus (Nei & Tajima 1981).
    fn nei_tajima(&self) -> f64 {
        let sum: f64 = self.alleles.iter().map(|&(x, y)| (x - y).powi(2) / ((x + y) / 2.0 - x * y)).sum();
        sum / self.allele_count()
    }

    /// F_k at this locus (Pollak 1983).
    fn pollak(&self) -> f64 {
        let sum: f64 = self.alleles.iter().map(|&(x, y)| (x - y).powi(2) / ((x + y) / 2.0)).sum();
        sum / (self.allele_count() - 1.0)
    }

    /// (Σ (x − y)², Σ z(1 − z)) for F̃ (Jorde & Ryman 2007).
    fn ratio_terms(&self) -> (f64, f64) {
        self.alleles.iter().fold((0.0, 0.0), |(num, den), &(x, y)| {
            let z = (x + y) / 2.0;
            (num + (x - y).powi(2), den + z * (1.0 - z))
        })
    }
}

/// The multilocus drift statistics and sample sizes over a set of loci.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DriftStatistics {
    /// Loci used.
    pub loci: usize,
    /// n′ = Σ(Kₗ − 1).
    pub df: f64,
    /// S₀: K-weighted harmonic mean of the per-locus typed individuals in the first sample.
    pub start_samples: f64,
    /// S_t, likewise in the second sample.
    pub end_samples: f64,
    /// F_c.
    pub fc: f64,
    /// F_k.
    pub fk: f64,
    /// F̃ = Σ (x − y)² / Σ z(1 − z).
    pub f_ratio: f64,
}

/// The drift statistics over the loci `indices` of `loci`; `None` without loci.
pub fn drift_statistics(loci: &[LocusFrequencies], indices: &[usize]) -> Option<DriftStatistics> {
    let terms: Vec<[f64; DRIFT_TERMS]> = indices.iter().map(|&l| drift_terms(&loci[l])).collect();
    statistics_of_sums(&sum_terms(&terms), indices.len())
}

/// Summands of one locus: K, K − 1, K·F_c, (K − 1)·F_k, the two F̃ ratio terms, K/S₀ and K/S_t.
const DRIFT_TERMS: usize = 8;

fn drift_terms(locus: &LocusFrequencies) -> [f64; DRIFT_TERMS] {
    let k = locus.allele_count();
    let (numerator, denominator) = locus.ratio_terms();
    [
        k,
        k - 1.0,
        k * locus.nei_tajima(),
        (k - 1.0) * locus.pollak(),
        numerator,
        denominator,
        k / locus.start_typed,
        k / locus.end_typed,
    ]
}

/// The drift statistics from the summed terms of `loci` loci; `None` without loci.
fn statistics_of_sums(sums: &[f64; DRIFT_TERMS], loci: usize) -> Option<DriftStatistics> {
    let [k_sum, df, fc, fk, num, den, inv_start, inv_end] = *sums;
    (loci > 0).then(|| DriftStatistics {
        loci,
        df,
        start_samples: k_sum / inv_start,
        end_samples: k_sum / inv_end,
        fc: fc / k_sum,
        fk: fk / df,
        f_ratio: num / den,
    })
}

/// The sampling correction of F_c or F_k: F − 1/(2S₀) − 1/(2S_t) (+ 1/N under plan I).
pub fn corrected_f(f: f64, start_samples: f64, end_samples: f64, census: Option<f64>) -> f64 {
    f - 1.0 / (2.0 * start_samples) - 1.0 / (2.0 * end_samples) + census.map_or(0.0, |n| 1.0 / n)
}

/// Ne = t/(2F′) from a corrected F′ (Waples 1989); +∞ when F′ ≤ 0.
pub fn ne_from_corrected(corrected: f64, generations: f64) -> f64 {
    if corrected.is_nan() || generations.is_nan() {
        f64::NAN
    } else if corrected <= 0.0 {
        f64::INFINITY
    } else {
        generations / (2.0 * corrected)
    }
}

/// F_s (plan II) or F_s′ (plan I, census `Some(N)`) of Jorde & Ryman (2007) from F̃.
pub fn jorde_ryman(f_ratio: f64, start_samples: f64, end_samples: f64, census: Option<f64>) -> f64 {
    let harmonic = 2.0 / (1.0 / start_samples + 1.0 / end_samples);
    let inverse_census = census.map_or(0.0, |n| 1.0 / n);
    let numerator = f_ratio * (1.0 - 1.0 / (4.0 * harmonic) + inverse_census / 4.0) - 1.0 / harmonic + inverse_census;
    numerator / ((1.0 + f_ratio / 4.0) * (1.0 - 1.0 / (2.0 * end_samples)))
}

/// Why a comparison has no Ne estimate.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Missing {
    GenerationTime,
    TooFewGenerations,
    CensusSize,
}

/// One compared pair of samples.
struct Comparison {
    plan: Plan,
    start: Group,
    end: Group,
    generations: Option<f64>,
    census: Option<f64>,
    statistics: Option<DriftStatistics>,
    estimate: Option<Estimates>,
    missing: Option<Missing>,
}

/// The Ne estimates and intervals of one comparison.
struct Estimates {
    fs: f64,
    ne_fc: f64,
    ne_fk: f64,
    ne_fs: f64,
    fc_interval: Option<Interval>,
    fk_interval: Option<Interval>,
    fs_interval: Option<Interval>,
}

fn compare(
    packed: &PackedGenotypes<'_>,
    assessment: &AssessmentInfo,
    plan: Plan,
    start: Group,
    end: Group,
) -> Comparison {
    let loci = locus_frequencies(packed, &start, &end);
    let all: Vec<usize> = (0..loci.len()).collect();
    let statistics = drift_statistics(&loci, &all);
    let generations =
        assessment.generation_time_years.filter(|g| *g > 0.0).map(|g| f64::from(end.year - start.year) / g);
    let census = census_size(assessment, &start.population);
    let missing = match (generations, plan, census) {
        (None, _, _) => Some(Missing::GenerationTime),
        (Some(t), _, _) if t < 1.0 => Some(Missing::TooFewGenerations),
        (_, Plan::I, None) => Some(Missing::CensusSize),
        _ => None,
    };
    let plan_census = if plan == Plan::I { census } else { None };
    let estimate = match (missing, generations, statistics) {
        (None, Some(t), Some(stats)) => Some(estimates(&loci, &stats, t, plan_census)),
        _ => None,
    };
    Comparison { plan, start, end, generations, census: plan_census, statistics, estimate, missing }
}

fn census_size(assessment: &AssessmentInfo, population: &str) -> Option<f64> {
    assessment.populations.iter().find(|p| p.population == population).and_then(|p| p.census_size).filter(|n| *n > 0.0)
}

/// Per-locus frequencies of the loci usable in both samples.
fn locus_frequencies(packed: &PackedGenotypes<'_>, start: &Group, end: &Group) -> Vec<LocusFrequencies> {
    let (mut first, mut second) = (AlleleCounts::default(), AlleleCounts::default());
    let (start, end) = (packed.sample_set(&start.samples), packed.sample_set(&end.samples));
    (0..packed.view().n_loci())
        .filter_map(|locus| {
            packed.allele_counts_into(locus, &start, &mut first);
            packed.allele_counts_into(locus, &end, &mut second);
            LocusFrequencies::from_counts(&first, &second)
        })
        .collect()
}

fn estimates(loci: &[LocusFrequencies], stats: &DriftStatistics, generations: f64, census: Option<f64>) -> Estimates {
    let ne_of_f =
        |f: f64| ne_from_corrected(corrected_f(f, stats.start_samples, stats.end_samples, census), generations);
    let ne_interval = |interval: Interval| Interval { low: ne_of_f(interval.high), high: ne_of_f(interval.low) };
    let fs = jorde_ryman(stats.f_ratio, stats.start_samples, stats.end_samples, census);
    let fs_of = |sums: &[f64; DRIFT_TERMS], count: usize| {
        statistics_of_sums(sums, count).map(|s| jorde_ryman(s.f_ratio, s.start_samples, s.end_samples, census))
    };
    let terms: Vec<[f64; DRIFT_TERMS]> = loci.iter().map(drift_terms).collect();
    let leave_one_out = jackknife_loci(&terms, fs_of);
    let fs_interval = jackknife_standard_error(&leave_one_out)
        .and_then(|se| student_t_interval(fs, se, loci.len() as f64 - 1.0, LEVEL))
        .map(|i| Interval { low: ne_from_corrected(i.high, generations), high: ne_from_corrected(i.low, generations) });
    Estimates {
        fs,
        ne_fc: ne_of_f(stats.fc),
        ne_fk: ne_of_f(stats.fk),
        ne_fs: ne_from_corrected(fs, generations),
        fc_interval: chi_square_interval(stats.fc, stats.df, LEVEL).map(ne_interval),
        fk_interval: chi_square_interval(stats.fk, stats.df, LEVEL).map(ne_interval),
        fs_interval,
    }
}

/// Columns of the `estimates` table: the contract's, then the plan, census, loci, n′ and the
/// χ² intervals of `ne_fc` and `ne_fk`.
const COLUMNS: &[&str] = &[
    "population",
    "year_start",
    "year_end",
    "generations",
    "s_start",
    "s_end",
    "fc",
    "fk",
    "fs",
    "ne_fc",
    "ne_fk",
    "ne_fs",
    "ne_low",
    "ne_high",
    "plan",
    "census_size",
    "loci",
    "df",
    "ne_fc_low",
    "ne_fc_high",
    "ne_fk_low",
    "ne_fk_high",
];

fn estimates_table(results: &[Comparison]) -> Result<Table, StepError> {
    let mut table = Table::new(COLUMNS);
    for c in results {
        let stats = c.statistics.as_ref();
        let e = c.estimate.as_ref();
        let low = |i: Option<Interval>| Cell::maybe(i.map(|i| i.low));
        let high = |i: Option<Interval>| Cell::maybe(i.map(|i| i.high));
        table.push_row(vec![
            Cell::text(&c.start.population),
            Cell::Int(c.start.year.into()),
            Cell::Int(c.end.year.into()),
            Cell::maybe(c.generations),
            Cell::maybe(stats.map(|s| s.start_samples)),
            Cell::maybe(stats.map(|s| s.end_samples)),
            Cell::maybe(stats.map(|s| s.fc)),
            Cell::maybe(stats.map(|s| s.fk)),
            Cell::maybe(e.map(|e| e.fs)),
            Cell::maybe(e.map(|e| e.ne_fc)),
            Cell::maybe(e.map(|e| e.ne_fk)),
            Cell::maybe(e.map(|e| e.ne_fs)),
            low(e.and_then(|e| e.fs_interval)),
            high(e.and_then(|e| e.fs_interval)),
            Cell::text(match c.plan {
                Plan::I => "I",
                Plan::II => "II",
            }),
            Cell::maybe(c.census),
            Cell::Int(stats.map_or(0, |s| i64::try_from(s.loci).unwrap_or(i64::MAX))),
            Cell::maybe(stats.map(|s| s.df)),
            low(e.and_then(|e| e.fc_interval)),
            high(e.and_then(|e| e.fc_interval)),
            low(e.and_then(|e| e.fk_interval)),
            high(e.and_then(|e| e.fk_interval)),
        ])?;
    }
    Ok(table)
}

#[cfg(test)]
mod coverage;
#[cfg(test)]
mod tests;
