//! From the pair sums to Ne and its intervals: the sampling expectation of r² and the Ne
//! formulas of Waples (2006), the parametric χ² interval, the jackknife over loci and the
//! jackknife over groups of individuals (docs/methods.md, "LD-based Ne").

use crate::stats::bootstrap::Interval;
use crate::stats::intervals::{chi_square_interval, effective_degrees_of_freedom};

use super::pairs::{Accumulator, PairSums};

/// Sample sizes from which the large-sample branch of Waples (2006) applies.
pub const LARGE_SAMPLE: f64 = 30.0;

/// Confidence level of every interval.
pub const LEVEL: f64 = 0.95;

/// The mating system the Ne formula assumes (parameter `mating`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Mating {
    /// Random mating (the usual case).
    Random,
    /// Lifetime monogamy.
    Monogamy,
}

/// E(r²_sample), the r² expected from sampling S individuals alone (Waples 2006):
/// 1/S + 3.19/S² for S ≥ 30, else 0.0018 + 0.907/S + 4.44/S².
pub fn expected_sample_r2(samples: f64) -> f64 {
    if samples >= LARGE_SAMPLE {
        1.0 / samples + 3.19 / (samples * samples)
    } else {
        0.0018 + 0.907 / samples + 4.44 / (samples * samples)
    }
}

/// Ne from the drift part r²′ = r̄² − E(r²_sample) (Waples 2006; monogamy constants in
/// docs/methods.md, "LD-based Ne"): Ne = [a + √(a² − b·r²′)]/(2r²′) with (a, b) = (1/3, 2.76) for S
/// ≥ 30 and (0.308, 2.08) below, or (2/3, 7.2) and (0.618, 3.78) under lifetime monogamy. r²′ ≤ 0
/// gives +∞; a negative discriminant takes the square root as 0 (a very small Ne; the convention of
/// public re-implementations, not of the paper).
pub fn ne_from_drift_r2(drift_r2: f64, samples: f64, mating: Mating) -> f64 {
    if drift_r2.is_nan() {
        return f64::NAN;
    }
    if drift_r2 <= 0.0 {
        return f64::INFINITY;
    }
    let large = samples >= LARGE_SAMPLE;
    let (a, b) = match (mating, large) {
        (Mating::Random, true) => (1.0 / 3.0, 2.76),
        (Mating::Random, false) => (0.308, 2.08),
        (Mating::Monogamy, true) => (2.0 / 3.0, 7.2),
        (Mating::Monogamy, false) => (0.618, 3.78),
    };
    let discriminant = (a * a - b * drift_r2).max(0.0);
    (a + discriminant.sqrt()) / (2.0 * drift_r2)
}

/// Ne from r̄² at harmonic-mean sample size `samples`.
pub fn ne_from_r2(r2: f64, samples: f64, mating: Mating) -> f64 {
    ne_from_drift_r2(r2 - expected_sample_r2(samples), samples, mating)
}

/// An interval of r̄² turned into an interval of Ne: the upper r² bound gives the lower Ne.
pub fn ne_interval(r2_interval: Interval, samples: f64, mating: Mating) -> Interval {
    Interval { low: ne_from_r2(r2_interval.high, samples, mating), high: ne_from_r2(r2_interval.low, samples, mating) }
}

/// One row of the estimates table.
#[derive(Debug, Clone, PartialEq)]
pub struct LdEstimate {
    /// Loci with at least two retained alleles.
    pub loci: usize,
    /// Pairs of loci used.
    pub pairs: u64,
    /// Harmonic-mean S.
    pub samples: f64,
    /// n′ = Σ (k′ᵢ − 1)(k′ⱼ − 1).
    pub comparisons: f64,
    /// r̄².
    pub r2: f64,
    /// E(r²_sample).
    pub r2_sample: f64,
    /// Ne (+∞ when r̄² ≤ E(r²_sample)).
    pub ne: f64,
    /// Parametric χ² interval on n′.
    pub parametric: Option<Interval>,
    /// Jackknife over loci.
    pub jackknife_loci: Option<Interval>,
    /// Effective degrees of freedom of the jackknife over loci, min(2r̄⁴/V_L, n′).
    pub jackknife_df: Option<f64>,
    /// The larger-variance interval of the jackknives over loci and over groups of individuals.
    pub resample: Option<Interval>,
    /// Effective degrees of freedom of that interval, min(2r̄⁴/max(V_L, V_I), n′).
    pub resample_df: Option<f64>,
}

/// The estimate and intervals from a panel's pair sums; `None` without any usable pair.
pub fn estimate(sums: &PairSums, loci: usize, mating: Mating) -> Option<LdEstimate> {
    let r2 = sums.total.mean_r2()?;
    let samples = sums.total.harmonic_samples()?;
    let comparisons = sums.total.comparisons;
    let parametric = chi_square_interval(r2, comparisons, LEVEL).map(|i| ne_interval(i, samples, mating));
    let loci_variance = jackknife_loci_variance(sums);
    let individual_variance = jackknife_individuals_variance(sums);
    let jackknife_df = loci_variance.and_then(|v| effective_degrees_of_freedom(r2, v)).map(|df| df.min(comparisons));
    // Each jackknife sees one source of variation (loci; the individuals shared by all pairs);
    // the larger of the two variances is used, so neither is ignored and none is counted twice.
    let resample_variance = individual_variance.map(|i| loci_variance.map_or(i, |l| l.max(i)));
    let resample_df = resample_variance.and_then(|v| effective_degrees_of_freedom(r2, v)).map(|df| df.min(comparisons));
    let interval_with =
        |df: Option<f64>| df.and_then(|df| chi_square_interval(r2, df, LEVEL)).map(|i| ne_interval(i, samples, mating));
    Some(LdEstimate {
        loci,
        pairs: sums.total.pairs,
        samples,
        comparisons,
        r2,
        r2_sample: expected_sample_r2(samples),
        ne: ne_from_r2(r2, samples, mating),
        parametric,
        jackknife_loci: interval_with(jackknife_df),
        jackknife_df,
        resample: interval_with(resample_df),
        resample_df,
    })
}

/// Delete-one-locus jackknife variance of r̄² (Jones, Ovenden & Wang 2016): locus l and every
/// pair containing it are left out; V = ((L−1)/L) Σ (θ₍₋ₗ₎ − θ̄)². `None` for fewer than three
/// loci with a defined leave-one-out value.
fn jackknife_loci_variance(sums: &PairSums) -> Option<f64> {
    let values: Vec<f64> = sums
        .with_locus
        .iter()
        .filter(|part| part.pairs > 0)
        .filter_map(|part| sums.total.without(part).mean_r2())
        .collect();
    delete_group_variance(&values, 3)
}

/// Delete-a-group jackknife variance (Kott 2001) over the groups of individuals of the drift
/// signal r²′ = r̄²₍₋g₎ − E(r²_sample at S₍₋g₎): leaving individuals out changes S, so the
/// expectation is recomputed for each replicate. `None` with fewer than two groups.
fn jackknife_individuals_variance(sums: &PairSums) -> Option<f64> {
    let values: Vec<f64> = sums.without_group.iter().filter_map(drift_r2).collect();
    delete_group_variance(&values, 2)
}

fn drift_r2(sums: &Accumulator) -> Option<f64> {
    Some(sums.mean_r2()? - expected_sample_r2(sums.harmonic_samples()?))
}

/// ((G−1)/G) Σ (θ_g − θ̄)² over `values`; `None` below `minimum` values.
fn delete_group_variance(values: &[f64], minimum: usize) -> Option<f64> {
    if values.len() < minimum {
        return None;
    }
    let count = values.len() as f64;
    let mean = values.iter().sum::<f64>() / count;
    Some((count - 1.0) / count * values.iter().map(|v| (v - mean).powi(2)).sum::<f64>())
}
