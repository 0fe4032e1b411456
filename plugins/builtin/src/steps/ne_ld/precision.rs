//! The `ld-precision-low` finding: estimates in the range where the LD method loses precision.
//!
//! # Rule
//! A row (group and criterion) is flagged when both hold:
//! - N̂e > [`PRECISION_RATIO`] · S (5 × the harmonic-mean sample size `s`), or N̂e is `"inf"`;
//! - the upper bound of its recommended interval is `"inf"`: `ne_resample_high`, or
//!   `ne_jack_high` when the jackknife over individuals is off (`individual_blocks` < 2); a row
//!   with neither interval is judged on the first condition alone.
//!
//! # Why
//! The drift signal r²′ ≈ 1/(3Ne) is what remains of r̄² after the r² that sampling S
//! individuals produces alone, about 1/S (Waples 2006); when Ne is large relative to S it is a
//! small difference of two noisy quantities. Waples & Do (2010, abstract) found precise LD
//! estimates with 10–20 loci of 10 alleles and 50 individuals for Ne < 200 (Ne < 4 · S), and
//! reliable estimates for large populations very difficult to obtain; England et al. (2006,
//! abstract), for the estimator before the correction of Waples (2006), propose checking that
//! the sample exceeds Ne before trusting the estimate. The factor 5, just above that 4 · S, was
//! chosen from the simulations below. How far past it precision lasts depends on the data
//! (500 SNPs keep it much longer than 20 microsatellites), so the rule asks the data too: an
//! infinite upper bound means the interval cannot exclude an unbounded Ne.
//!
//! In the simulations of docs/accuracy.md (closed Wright–Fisher populations, Ne 200–2,000,
//! S 25–60, 20 microsatellites or 500 SNPs, 500 replicates each) the rule fired in 64–100% of
//! replicates at Ne ≥ 1,000 and in 7–90% at Ne = 500 (7% for 500 SNPs with S = 60, which keep
//! their precision there: 98% of estimates within a factor of two of Ne); at Ne = 200 with
//! S = 60 in 20% (microsatellites) and 0% (SNPs), and in the designs with Ne ≤ 200 and S ≥ 50
//! (100 replicates each) in 0–2%. In the flagged replicates of the designs with Ne 500–2,000 only 8–78% of point
//! estimates were within a factor of two of the true Ne, while `ne_resample_*` still contained
//! it in 91–100% of them.

use popgauge_abi::{Finding, Where};

use super::estimate::LdEstimate;
use super::{GroupResult, criterion_label};

/// N̂e above this multiple of S is in the range where the LD method loses precision (with an
/// infinite upper bound, see the module doc).
pub const PRECISION_RATIO: f64 = 5.0;

/// One `ld-precision-low` warning per group with a flagged row, naming each flagged criterion
/// with its estimate, S and lower bound.
pub(super) fn precision_findings(groups: &[GroupResult]) -> Vec<Finding> {
    groups
        .iter()
        .filter_map(|result| {
            let rows: Vec<String> = result
                .criteria
                .iter()
                .filter_map(|row| {
                    let estimate = row.estimate.as_ref().filter(|e| precision_is_low(e))?;
                    Some(format!("{}: {}", criterion_label(row.criterion), row_figures(estimate)))
                })
                .collect();
            let group = &result.group;
            (!rows.is_empty()).then(|| {
                let name = format!("{} {}", group.population, group.year);
                Finding::warning(
                    "ld-precision-low",
                    message(&name, &rows.join("; ")),
                    Where::group(&group.population, group.year),
                )
            })
        })
        .collect()
}

/// The rule of the module doc.
fn precision_is_low(estimate: &LdEstimate) -> bool {
    let unbounded = recommended(estimate).is_none_or(|(_, interval)| interval.high.is_infinite());
    estimate.ne > PRECISION_RATIO * estimate.samples && unbounded
}

/// The recommended interval with its lower-bound column: the jackknife over individuals, or
/// the jackknife over loci when that is off.
fn recommended(estimate: &LdEstimate) -> Option<(&'static str, crate::stats::bootstrap::Interval)> {
    match (estimate.resample, estimate.jackknife_loci) {
        (Some(interval), _) => Some(("ne_resample_low", interval)),
        (None, Some(interval)) => Some(("ne_jack_low", interval)),
        (None, None) => None,
    }
}

fn row_figures(estimate: &LdEstimate) -> String {
    let bound = recommended(estimate)
        .map_or(String::new(), |(column, interval)| format!(", {column} = {}", rounded(interval.low)));
    format!("N̂e = {}, S = {:.1}{bound}", rounded(estimate.ne), estimate.samples)
}

fn rounded(ne: f64) -> String {
    if ne.is_infinite() { "inf".into() } else { format!("{ne:.0}") }
}

fn message(name: &str, rows: &str) -> String {
    format!(
        "group {name} ({rows}): the estimate is more than {PRECISION_RATIO} × S (or \"inf\") and the upper bound \
         of its recommended 95% interval is \"inf\" (or it has none), the range where the LD method loses \
         precision: the drift signal (about 1/(3Ne)) is small beside the r² that sampling S individuals produces \
         alone (about 1/S). Waples & Do (2010) found LD estimates precise for Ne < 200 with 50 individuals and \
         10–20 loci of 10 alleles, and reliable estimates for large populations very difficult to obtain. In \
         simulated populations of Ne 500–2,000 with S 25–60 (docs/accuracy.md), only 8–78% of the flagged point \
         estimates were within a factor of two of the true Ne, while the recommended interval contained it in \
         91–100% of them. Do not read the point estimate as Ne: report the interval, whose lower bound is the \
         figure the data support; more individuals (S) narrow it"
    )
}

#[cfg(test)]
mod tests {
    use popgauge_abi::Group;

    use super::*;
    use crate::stats::bootstrap::Interval;
    use crate::steps::ne_ld::CriterionResult;
    use crate::steps::ne_ld::panel::Criterion;

    /// An estimate at S = 50 with the given point estimate and recommended interval (the other
    /// fields do not enter the rule).
    fn estimate(ne: f64, resample: Option<(f64, f64)>, jackknife: Option<(f64, f64)>) -> LdEstimate {
        let interval = |(low, high)| Interval { low, high };
        LdEstimate {
            loci: 20,
            pairs: 190,
            samples: 50.0,
            comparisons: 1000.0,
            r2: 0.021,
            r2_sample: 0.0213,
            ne,
            parametric: Some(Interval { low: 100.0, high: 400.0 }),
            jackknife_loci: jackknife.map(interval),
            jackknife_df: None,
            resample: resample.map(interval),
            resample_df: None,
        }
    }

    /// The rule's boundaries at S = 50 (5 · S = 250; the rule of the module doc, derived there).
    #[test]
    fn an_estimate_above_five_times_s_with_an_unbounded_interval_is_flagged() {
        let open = Some((120.0, f64::INFINITY));
        assert!(precision_is_low(&estimate(251.0, open, None)));
        assert!(precision_is_low(&estimate(f64::INFINITY, open, None)));
        assert!(!precision_is_low(&estimate(250.0, open, None)), "exactly 5 · S is not above it");
        assert!(!precision_is_low(&estimate(100.0, open, None)), "small relative to S");
        assert!(!precision_is_low(&estimate(900.0, Some((400.0, 5000.0)), None)), "the interval bounds Ne");
    }

    /// Without the jackknife over individuals the loci jackknife decides; without any interval
    /// the ratio alone does.
    #[test]
    fn the_loci_jackknife_stands_in_when_the_recommended_interval_is_off() {
        assert!(precision_is_low(&estimate(900.0, None, Some((300.0, f64::INFINITY)))));
        assert!(!precision_is_low(&estimate(900.0, None, Some((300.0, 5000.0)))));
        assert!(precision_is_low(&estimate(900.0, None, None)));
        // The recommended interval takes precedence over the loci jackknife.
        assert!(!precision_is_low(&estimate(900.0, Some((300.0, 5000.0)), Some((400.0, f64::INFINITY)))));
    }

    /// One warning per group, naming only the flagged criteria with their figures.
    #[test]
    fn one_warning_names_the_flagged_criteria_of_a_group() {
        let row = |criterion, estimate| CriterionResult { criterion, estimate, same_chromosome: 0 };
        let groups = [
            GroupResult {
                group: Group { population: "Lake Oster".into(), year: 2018, samples: vec![] },
                criteria: vec![
                    row(Criterion::Pcrit(0.05), Some(estimate(180.0, Some((90.0, 700.0)), None))),
                    row(Criterion::Pcrit(0.02), Some(estimate(f64::INFINITY, Some((312.4, f64::INFINITY)), None))),
                    row(Criterion::NoSingletons, Some(estimate(2600.0, None, Some((280.0, f64::INFINITY))))),
                ],
            },
            GroupResult {
                group: Group { population: "Brennmoor".into(), year: 2018, samples: vec![] },
                criteria: vec![
                    row(Criterion::Pcrit(0.02), Some(estimate(60.0, Some((40.0, 110.0)), None))),
                    row(Criterion::NoSingletons, None),
                ],
            },
        ];
        let findings = precision_findings(&groups);
        assert_eq!(findings.len(), 1, "{findings:?}");
        let finding = &findings[0];
        assert_eq!(finding.code, "ld-precision-low");
        assert_eq!(finding.level, popgauge_abi::FindingLevel::Warning);
        assert_eq!(finding.location, Where::group("Lake Oster", 2018));
        assert!(
            finding.message.starts_with(
                "group Lake Oster 2018 (Pcrit 0.02: N̂e = inf, S = 50.0, ne_resample_low = 312; no singletons: \
                 N̂e = 2600, S = 50.0, ne_jack_low = 280): the estimate is more than 5 × S"
            ),
            "{}",
            finding.message
        );
        assert!(finding.message.contains("docs/accuracy.md"));
    }
}
