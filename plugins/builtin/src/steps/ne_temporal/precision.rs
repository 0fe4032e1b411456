//! The `temporal-precision-low` finding: comparisons in the range where the temporal method
//! loses precision.
//!
//! # Rule
//! A comparison is flagged when both hold:
//! - `ne_fs` > t · S̃, or `ne_fs` is `"inf"`, with t the generations between the samples and
//!   S̃ = 2/(1/S₀ + 1/S_t) the harmonic mean of `s_start` and `s_end`. Equivalently, the drift
//!   estimated, t/(2N̂e), is less than half the sampling term 1/(2S₀) + 1/(2S_t) = 1/S̃ that
//!   the correction removed;
//! - `ne_high` (the upper bound of the interval of `ne_fs`) is `"inf"`, or there is no
//!   interval.
//!
//! # Why
//! The temporal method measures drift as the allele-frequency change left after sampling
//! noise is removed (Waples 1989; Jorde & Ryman 2007); with few generations between the
//! samples, or Ne large relative to the samples, that remainder is a small difference of two
//! noisy quantities, and Waples & Do (2010, abstract) found the temporal method less precise
//! than the LD method with microsatellite data unless the samples are many generations apart.
//! No published threshold was found; the factor (drift below half the sampling term) was
//! chosen from the simulations of docs/accuracy.md (plan II, t = 10 generations, Ne 200–2,000,
//! S 25–60, 20 microsatellites or 500 SNPs, 500 replicates each). There the rule fired in
//! 51–98% of replicates at Ne = 2,000, in 29% at Ne = 200 with microsatellites and S = 25
//! (where 17% of estimates were more than a factor of two from Ne) and in at most 1 of 500
//! replicates in the other designs with Ne = 200. In the flagged replicates of the designs with
//! Ne 500–2,000 only 12–70% of point estimates were within a factor of two of the true Ne. The
//! interval of `ne_fs` contained the true Ne in 91–96% of all replicates of those designs but in
//! only 15–94% of the flagged ones: a flagged estimate is often one that overshot, and its
//! interval with it, so the finding does not vouch for the interval either.

use popgauge_abi::{Finding, Where};

use super::Comparison;

/// The rule of the module doc, from the comparison's generations, sample sizes, `ne_fs` and
/// the upper bound of its interval.
fn precision_is_low(generations: f64, samples: (f64, f64), ne: f64, high: Option<f64>) -> bool {
    let harmonic = 2.0 / (1.0 / samples.0 + 1.0 / samples.1);
    ne > generations * harmonic && high.is_none_or(f64::is_infinite)
}

/// One `temporal-precision-low` warning per flagged comparison.
pub(super) fn precision_findings(comparisons: &[Comparison]) -> Vec<Finding> {
    comparisons.iter().filter_map(precision_finding).collect()
}

fn precision_finding(c: &Comparison) -> Option<Finding> {
    let (estimate, statistics, generations) = (c.estimate.as_ref()?, c.statistics.as_ref()?, c.generations?);
    let samples = (statistics.start_samples, statistics.end_samples);
    let high = estimate.fs_interval.map(|i| i.high);
    if !precision_is_low(generations, samples, estimate.ne_fs, high) {
        return None;
    }
    let name = format!("{} {}–{}", c.start.population, c.start.year, c.end.year);
    let low = estimate.fs_interval.map_or(String::new(), |i| format!(", ne_low = {}", rounded(i.low)));
    let figures = format!(
        "ne_fs = {}, t = {generations:.1} generations, S₀ = {:.1}, S_t = {:.1}{low}",
        rounded(estimate.ne_fs),
        samples.0,
        samples.1
    );
    let location = Where { population: Some(c.start.population.clone()), year: Some(c.end.year), ..Where::default() };
    Some(Finding::warning("temporal-precision-low", message(&name, &figures), location))
}

fn rounded(ne: f64) -> String {
    if ne.is_infinite() { "inf".into() } else { format!("{ne:.0}") }
}

fn message(name: &str, figures: &str) -> String {
    format!(
        "{name} ({figures}): ne_fs exceeds t × the harmonic-mean sample size (or is \"inf\") and the upper bound of \
         its 95% interval is \"inf\" (or it has no interval), the range where the temporal method loses precision: \
         the drift estimated between the samples, t/(2N̂e), is less than half the sampling noise 1/(2S₀) + 1/(2S_t) \
         it was corrected for. In simulated populations of \
         Ne 500–2,000 sampled 10 generations apart with S 25–60 (docs/accuracy.md), only 12–70% of the flagged \
         point estimates were within a factor of two of the true Ne, and the interval, which contained the true Ne \
         in 91–96% of all replicates, contained it in only 15–94% of the flagged ones. Do not read the point \
         estimate as Ne, and read the interval with caution; samples further apart in time or larger samples \
         restore precision"
    )
}

#[cfg(test)]
mod tests {
    use popgauge_abi::{AssessmentInfo, PopulationInfo};
    use serde_json::json;

    use super::*;
    use crate::steps::ne_temporal::tests::run_with;
    use crate::test_support::{MatrixBuilder, findings_with, number, table};

    /// The rule's boundaries at t = 10 and S₀ = S_t = 40 (t · S̃ = 400; the rule of the module
    /// doc, derived there).
    #[test]
    fn an_estimate_above_t_times_s_with_an_unbounded_interval_is_flagged() {
        let open = Some(f64::INFINITY);
        assert!(precision_is_low(10.0, (40.0, 40.0), 401.0, open));
        assert!(precision_is_low(10.0, (40.0, 40.0), f64::INFINITY, open));
        assert!(precision_is_low(10.0, (40.0, 40.0), 900.0, None), "no interval: the ratio alone decides");
        assert!(!precision_is_low(10.0, (40.0, 40.0), 400.0, open), "exactly t · S̃ is not above it");
        assert!(!precision_is_low(10.0, (40.0, 40.0), 900.0, Some(4000.0)), "the interval bounds Ne");
        assert!(!precision_is_low(5.0, (40.0, 40.0), 150.0, open), "small relative to t · S̃");
    }

    /// S̃ is the harmonic mean: S₀ = 20, S_t = 60 give S̃ = 30, so at t = 10 the threshold is 300.
    #[test]
    fn the_threshold_uses_the_harmonic_mean_sample_size() {
        assert!(precision_is_low(10.0, (20.0, 60.0), 301.0, None));
        assert!(!precision_is_low(10.0, (20.0, 60.0), 299.0, None));
    }

    /// 20 individuals sampled in 2000 and 20 in 2010 (t = 10 with a generation time of one
    /// year) whose allele frequencies hardly change (0.750 → 0.700, 0.500 → 0.525,
    /// 0.650 → 0.700): F̃ = 0.01125/1.33719 = 0.0084, below the sampling term 1/S̃ = 0.05, so
    /// F_s < 0 and `ne_fs` is "inf" (Jorde & Ryman 2007; hand-computed), and the comparison is
    /// flagged once, located at the population and the later year.
    #[test]
    fn the_step_flags_a_comparison_without_drift_signal() {
        let builder = MatrixBuilder::new(&["T1", "T2", "T3"])
            .samples("a", "Pop", 2000, 10, &["1/2", "1/2", "1/2"])
            .samples("b", "Pop", 2000, 8, &["1/1", "1/2", "1/1"])
            .samples("c", "Pop", 2000, 2, &["1/1", "1/2", "2/2"])
            .samples("d", "Pop", 2010, 10, &["1/2", "1/2", "1/2"])
            .samples("e", "Pop", 2010, 9, &["1/1", "1/2", "1/1"])
            .samples("f", "Pop", 2010, 1, &["2/2", "1/1", "2/2"]);
        let assessment = AssessmentInfo {
            generation_time_years: Some(1.0),
            populations: vec![PopulationInfo { population: "Pop".into(), ..PopulationInfo::default() }],
            ..AssessmentInfo::default()
        };
        let output = run_with(&builder.build(), json!({"plan": "II"}), &assessment);
        assert_eq!(number(table(&output, "estimates"), 0, "ne_fs"), Some(f64::INFINITY));
        let flagged = findings_with(&output, "temporal-precision-low");
        assert_eq!(flagged.len(), 1);
        assert_eq!(flagged[0].location, Where { population: Some("Pop".into()), year: Some(2010), ..Where::default() });
        assert!(
            flagged[0].message.starts_with("Pop 2000–2010 (ne_fs = inf, t = 10.0 generations, S₀ = 20.0, S_t = 20.0"),
            "{}",
            flagged[0].message
        );
    }
}
