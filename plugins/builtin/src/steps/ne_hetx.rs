//! `ne-hetx`: the effective number of breeders from the heterozygote excess in their progeny
//! (Pudovkin, Zaykin & Hedgecock 1996), per group (population, year).
//!
//! # Method (docs/methods.md, "Heterozygote-excess Nb")
//! When few parents produce a cohort, the allele frequencies of the male and female parents
//! differ by chance and their progeny carry more heterozygotes than Hardy–Weinberg proportions
//! predict, by about 1/(8N_m) + 1/(8N_f) (Robertson 1965). At each locus polymorphic in the
//! group, with Ho the observed heterozygosity and He the unbiased expected heterozygosity of Nei
//! (1978) among the individuals typed there,
//!
//! - Dₗ = (Hoₗ − Heₗ)/Heₗ (that is, −F at the locus);
//! - `d` = D̄, the unweighted mean over the polymorphic loci (He > 0, at least two individuals
//!   typed);
//! - `ne` = N̂b = 1/(2D̄) + 1/[2(D̄ + 1)] (Pudovkin et al. 1996; the form is written
//!   from memory and not checked against the paper).
//!
//! # Confidence interval (95%)
//! A delete-one jackknife over loci of D̄ (for a mean this is the usual standard error s/√L),
//! D̄ ± t_{L−1}·SE (`d_low`, `d_high`), each bound transformed through the formula: the upper D
//! bound gives `ne_low`, the lower gives `ne_high`.
//!
//! # Units and special values
//! N̂b counts the breeders that produced the sampled cohort (individuals, one reproductive
//! cycle); the sample must be one cohort of progeny. **`"inf"` is frequent and honest:** when
//! D̄ ≤ 0 (no excess beyond sampling noise), or a lower D bound ≤ 0, the data cannot tell Nb
//! from infinity, and only a finite lower bound is informative (`ne_low` `"inf"` too means an
//! interval ∞–∞: Nb is not estimable from the data). The method is informative only when
//! Nb is small (a few tens at most) and many loci are typed (Luikart & Cornuet 1999). Groups
//! without a polymorphic locus have `null` estimates; Nb is never negative.
//!
//! # Citations
//! See [`CITATIONS`].

use popgauge_abi::{
    AlleleCounts, Cell, Descriptor, Finding, FindingLevel, Group, PackedGenotypes, Step, StepContext,
    StepError, StepOutput, Table, Where,
};

use crate::packing::pack;
use crate::special_values::{LowerBound, explain, group_name, infinite_estimate_reading, rows_where};
use crate::stats::bootstrap::{Interval, jackknife_loci, jackknife_standard_error};
use crate::stats::heterozygosity::{LocusHeterozygosity, NEI_1978};
use crate::stats::intervals::student_t_interval;
use crate::stats::mean;

/// A group with fewer individuals gets a `low-sample-size` warning (docs/methods.md,
/// "Conventions").
pub const LOW_SAMPLE_SIZE: usize = 15;
/// Fewer polymorphic loci than this give a `few-loci` warning (common practice, as `diversity`).
pub const FEW_LOCI: usize = 5;
/// Confidence level of the interval.
pub const LEVEL: f64 = 0.95;

/// The references of the methods, for the results' citations.
pub const CITATIONS: &[&str] = &[
    "Pudovkin AI, Zaykin DV, Hedgecock D (1996) On the potential for estimating the effective number of breeders \
     from heterozygote-excess in progeny. Genetics 144:383–387.",
    "Robertson A (1965) The interpretation of genotypic ratios in domestic animal populations. Anim Prod 7:319–324.",
    "Luikart G, Cornuet J-M (1999) Estimating the effective number of breeders from heterozygote excess in progeny. \
     Genetics 151:1211–1216.",
    NEI_1978,
];

/// The descriptor of `ne-hetx`: its name, version and (no) parameters.
pub fn descriptor() -> Descriptor {
    Descriptor::new(
        "ne-hetx",
        "0.1.0",
        "Effective number of breeders from heterozygote excess in a cohort of progeny (Pudovkin et al. 1996), with a \
         jackknife interval over loci",
    )
}

/// The `ne-hetx` step.
#[derive(Debug, Clone, Copy, Default)]
pub struct NeHetx;

impl Step for NeHetx {
    fn descriptor(&self) -> Descriptor {
        descriptor()
    }

    fn run(&self, ctx: &StepContext<'_>) -> Result<StepOutput, StepError> {
        let packed = pack(ctx.view);
        let groups: Vec<GroupEstimate> = ctx.view.groups().into_iter().map(|g| estimate_group(&packed, g)).collect();
        let mut output = StepOutput::default();
        let estimates = estimates_table(&groups)?;
        output.findings = collect_findings(&groups);
        output.findings.extend(special_value_findings(&estimates));
        output.tables.insert("estimates".into(), estimates);
        output.citations = CITATIONS.iter().map(|c| c.to_string()).collect();
        Ok(output)
    }
}

/// N̂b = 1/(2D̄) + 1/[2(D̄ + 1)] (Pudovkin et al. 1996); +∞ for D̄ ≤ 0, NaN for NaN.
pub fn breeders_from_excess(excess: f64) -> f64 {
    if excess.is_nan() {
        f64::NAN
    } else if excess <= 0.0 {
        f64::INFINITY
    } else {
        1.0 / (2.0 * excess) + 1.0 / (2.0 * (excess + 1.0))
    }
}

/// The estimate of one group.
struct GroupEstimate {
    group: Group,
    /// Dₗ of each polymorphic locus.
    excess: Vec<f64>,
    mean_excess: Option<f64>,
    excess_interval: Option<Interval>,
}

impl GroupEstimate {
    fn breeders(&self) -> Option<f64> {
        self.mean_excess.map(breeders_from_excess)
    }

    /// The Nb interval: the upper D bound gives the lower Nb.
    fn breeders_interval(&self) -> Option<Interval> {
        self.excess_interval.map(|i| Interval { low: breeders_from_excess(i.high), high: breeders_from_excess(i.low) })
    }
}

fn estimate_group(packed: &PackedGenotypes<'_>, group: Group) -> GroupEstimate {
    let mut counts = AlleleCounts::default();
    let members = packed.sample_set(&group.samples);
    let excess: Vec<f64> = (0..packed.view().n_loci())
        .filter_map(|locus| {
            packed.allele_counts_into(locus, &members, &mut counts);
            LocusHeterozygosity::from_counts(&counts).inbreeding().map(|f| -f)
        })
        .collect();
    let mean_excess = mean(excess.iter().copied());
    let terms: Vec<[f64; 1]> = excess.iter().map(|&d| [d]).collect();
    let leave_one_out = jackknife_loci(&terms, |sums, loci| (loci > 0).then(|| sums[0] / loci as f64));
    let excess_interval = match (mean_excess, jackknife_standard_error(&leave_one_out)) {
        (Some(d), Some(se)) => student_t_interval(d, se, excess.len() as f64 - 1.0, LEVEL),
        _ => None,
    };
    GroupEstimate { group, excess, mean_excess, excess_interval }
}

fn estimates_table(groups: &[GroupEstimate]) -> Result<Table, StepError> {
    let mut table = Table::new(&["population", "year", "d", "ne", "n", "loci", "d_low", "d_high", "ne_low", "ne_high"]);
    for g in groups {
        let nb = g.breeders_interval();
        table.push_row(vec![
            Cell::text(&g.group.population),
            Cell::Int(g.group.year.into()),
            Cell::maybe(g.mean_excess),
            Cell::maybe(g.breeders()),
            Cell::Int(i64::try_from(g.group.samples.len()).unwrap_or(i64::MAX)),
            Cell::Int(i64::try_from(g.excess.len()).unwrap_or(i64::MAX)),
            Cell::maybe(g.excess_interval.map(|i| i.low)),
            Cell::maybe(g.excess_interval.map(|i| i.high)),
            Cell::maybe(nb.map(|i| i.low)),
            Cell::maybe(nb.map(|i| i.high)),
        ])?;
    }
    Ok(table)
}

fn collect_findings(groups: &[GroupEstimate]) -> Vec<Finding> {
    let mut findings = Vec::new();
    for g in groups {
        let name = format!("{} {}", g.group.population, g.group.year);
        let location = || Where::group(&g.group.population, g.group.year);
        if g.group.samples.len() < LOW_SAMPLE_SIZE {
            findings.push(Finding::warning(
                "low-sample-size",
                format!(
                    "group {name} has {} individuals, fewer than {LOW_SAMPLE_SIZE}: the heterozygote excess is swamped \
                     by sampling noise",
                    g.group.samples.len()
                ),
                location(),
            ));
        }
        if g.excess.len() < FEW_LOCI {
            findings.push(Finding::warning(
                "few-loci",
                format!(
                    "group {name} has {} polymorphic loci, fewer than {FEW_LOCI}: the estimate rests on few loci",
                    g.excess.len()
                ),
                location(),
            ));
        }
        match g.breeders() {
            None => findings.push(Finding::warning(
                "no-estimate",
                format!("group {name} has no polymorphic locus typed in two or more individuals, so no estimate"),
                location(),
            )),
            Some(nb) if nb.is_infinite() => {
                let lower = LowerBound::of(g.breeders_interval().map(|i| i.low));
                findings.push(infinite_finding(&name, lower, location()));
            }
            Some(_) => {}
        }
    }
    findings.push(Finding::info(
        "ne-interpretation",
        "The heterozygote-excess estimate refers to the effective number of breeders that produced the sampled \
         cohort, and needs a sample of one cohort of progeny; it is informative only when that number is small (a \
         few tens at most) and many loci are typed. Estimates carry uncertainty: read them with their intervals. \
         Thresholds such as Ne 50/500 are guidance, not rules: decisions follow the local regulatory framework and \
         review by a qualified geneticist",
        Where::default(),
    ));
    findings
}

/// The findings for interval cells that are `"inf"` or `null` while the point estimate is
/// defined (a `null` or `"inf"` point has its own finding above).
fn special_value_findings(estimates: &Table) -> Vec<Finding> {
    let upper = rows_where(estimates, |r| r.is_finite("ne") && r.is_inf("ne_high"), group_name);
    let missing = rows_where(estimates, |r| r.is_finite("d") && r.is_null("d_low"), group_name);
    let infinite_upper = explain(FindingLevel::Info, "infinite-upper-bound", &upper, |n, list| {
        format!(
            "{n} group(s) have ne_high \"inf\" because the lower bound of D (d_low) is 0 or below: the data are \
             consistent with a very large number of breeders and only ne_low constrains Nb: {list}"
        )
    });
    let no_interval = explain(FindingLevel::Info, "no-interval", &missing, |n, list| {
        format!(
            "{n} group(s) have d_low, d_high, ne_low and ne_high null because the jackknife over loci needs at least \
             two polymorphic loci: {list}"
        )
    });
    infinite_upper.into_iter().chain(no_interval).collect()
}

fn infinite_finding(name: &str, lower: LowerBound, location: Where) -> Finding {
    Finding::info(
        "infinite-estimate",
        format!(
            "group {name}: Nb is \"inf\" because the progeny show no heterozygote excess beyond sampling noise (mean D \
             ≤ 0). This is the usual outcome unless the breeders number at most a few tens: the data cannot \
             distinguish Nb from infinity. {}",
            infinite_estimate_reading(lower, "ne_low", "Nb")
        ),
        location,
    )
}

#[cfg(test)]
mod tests {
    use serde_json::json;

    use super::*;
    use crate::test_support::{MatrixBuilder, assert_close, cell, findings_with, number, run_step, table};

    /// Computed from the Nb formula (re-derived in tests/reference/ne_formulas.py): D = 0.05
    /// gives Nb = 10.476190 and D = 0.01 gives 50.495050; D ≤ 0 gives "inf" (docs/methods.md,
    /// "Heterozygote-excess Nb").
    #[test]
    fn formula_matches_check_values() {
        assert_close(breeders_from_excess(0.05), 10.476_190, 1e-6);
        assert_close(breeders_from_excess(0.01), 50.495_050, 1e-6);
        assert_eq!(breeders_from_excess(0.0), f64::INFINITY);
        assert_eq!(breeders_from_excess(-0.2), f64::INFINITY);
        assert!(breeders_from_excess(f64::NAN).is_nan());
    }

    /// A constructed progeny sample (tests/reference/ne_formulas.py, hand-checkable): 10
    /// individuals; L1 6 AB, 2 AA, 2 BB (Ho 0.6, He 0.526316, D 0.14); L2 5 AB, 3 AA, 2 BB
    /// (D −0.040404); L3 4 AB, 2 AC, 2 BC, 1 AA, 1 CC (Ho 0.8, He 0.694737, D 0.151515); L4
    /// monomorphic (left out). D̄ = 0.083704, Nb = 6.434832; jackknife SE 0.062143 with
    /// t₂ = 4.302653 (scipy 1.17.1) gives D (−0.183675, 0.351083) and Nb (1.794239, inf).
    #[test]
    fn constructed_cohort_matches_hand_calculation() {
        let mut builder = MatrixBuilder::new(&["L1", "L2", "L3", "L4"]);
        let l1 = ["A/B", "A/B", "A/B", "A/B", "A/B", "A/B", "A/A", "A/A", "B/B", "B/B"];
        let l2 = ["A/B", "A/B", "A/B", "A/B", "A/B", "A/A", "A/A", "A/A", "B/B", "B/B"];
        let l3 = ["A/B", "A/B", "A/B", "A/B", "A/C", "A/C", "B/C", "B/C", "A/A", "C/C"];
        for i in 0..10 {
            builder = builder.sample(&format!("c{i}"), "Cohort", 2023, &[l1[i], l2[i], l3[i], "Z/Z"]);
        }
        let output = run_step(&NeHetx, &builder.build(), json!({}));
        let estimates = table(&output, "estimates");
        assert_eq!(number(estimates, 0, "loci"), Some(3.0));
        assert_close(number(estimates, 0, "d").unwrap(), 0.083_704, 1e-6);
        assert_close(number(estimates, 0, "ne").unwrap(), 6.434_832, 1e-6);
        assert_close(number(estimates, 0, "d_low").unwrap(), -0.183_675, 1e-6);
        assert_close(number(estimates, 0, "d_high").unwrap(), 0.351_083, 1e-6);
        assert_close(number(estimates, 0, "ne_low").unwrap(), 1.794_239, 1e-6);
        assert_eq!(cell(estimates, 0, "ne_high"), &Cell::Inf);
        assert_eq!(findings_with(&output, "low-sample-size").len(), 1);
        assert_eq!(findings_with(&output, "few-loci").len(), 1);
        // Results contract: the "inf" upper bound comes with a finding naming the group (common
        // practice).
        let upper = findings_with(&output, "infinite-upper-bound");
        assert_eq!(upper.len(), 1);
        assert!(
            upper[0].message.contains("ne_high") && upper[0].message.ends_with(": Cohort 2023"),
            "{}",
            upper[0].message
        );
        assert!(findings_with(&output, "no-interval").is_empty());
    }

    /// docs/methods.md, "Heterozygote-excess Nb": a heterozygote deficit (D̄ < 0) gives "inf" with
    /// a finding saying what it means; a monomorphic group has a null estimate. Hand calculation:
    /// 20 individuals 10 AA, 10 BB have Ho 0, so D = −1.
    #[test]
    fn deficit_is_infinite_and_monomorphic_is_null() {
        let matrix = MatrixBuilder::new(&["L1"])
            .samples("d", "Deficit", 2020, 10, &["A/A"])
            .samples("e", "Deficit", 2020, 10, &["B/B"])
            .samples("m", "Mono", 2020, 20, &["A/A"])
            .build();
        let output = run_step(&NeHetx, &matrix, json!({}));
        let estimates = table(&output, "estimates");
        assert_eq!(number(estimates, 0, "d"), Some(-1.0));
        assert_eq!(cell(estimates, 0, "ne"), &Cell::Inf);
        assert_eq!(number(estimates, 1, "ne"), None);
        let infinite = findings_with(&output, "infinite-estimate");
        assert_eq!(infinite.len(), 1);
        assert!(infinite[0].message.contains("cannot distinguish Nb from infinity"));
        assert_eq!(findings_with(&output, "no-estimate")[0].location, Where::group("Mono", 2020));
        // One locus: no jackknife interval, explained once, naming the group (the null point
        // of "Mono" has its own no-estimate finding and is not listed again).
        assert_eq!(number(estimates, 0, "ne_low"), None);
        let no_interval = findings_with(&output, "no-interval");
        assert_eq!(no_interval.len(), 1);
        assert!(no_interval[0].message.ends_with("two polymorphic loci: Deficit 2020"), "{}", no_interval[0].message);
        assert!(
            findings_with(&output, "infinite-upper-bound").is_empty(),
            "ne itself is inf: infinite-estimate says so"
        );
        let caution = &findings_with(&output, "ne-interpretation")[0].message;
        assert!(caution.contains("one cohort") && caution.contains("qualified geneticist"));
    }

    /// Only a finite lower bound is called informative (common practice: an interval ∞–∞ bounds
    /// nothing). Hand calculation: at two loci of 10 A/A + 10 B/B, D = −1 at both, so the
    /// jackknife interval of D̄ is −1 to −1 and ne_low = ne_high = "inf": not estimable. With the
    /// second locus 10 A/B + 5 A/A + 5 B/B (D = 0.5/0.512821 − 1 = −0.025, Nei 1978 He) D̄ =
    /// −0.5125 with SE 0.4875 and t₁ = 12.706, so d_high > 0 and ne_low is finite: informative.
    #[test]
    fn the_lower_bound_of_an_infinite_estimate_is_read_correctly() {
        let deficit = |second: [&str; 3]| {
            MatrixBuilder::new(&["L1", "L2"])
                .samples("a", "P", 2020, 5, &["A/A", second[0]])
                .samples("b", "P", 2020, 5, &["A/A", second[1]])
                .samples("c", "P", 2020, 10, &["B/B", second[2]])
                .build()
        };
        let output = run_step(&NeHetx, &deficit(["A/A", "A/A", "B/B"]), json!({}));
        assert_eq!(cell(table(&output, "estimates"), 0, "ne_low"), &Cell::Inf);
        let message = &findings_with(&output, "infinite-estimate")[0].message;
        assert!(message.contains("Nb is not estimable") && !message.contains("informative"), "{message}");
        let output = run_step(&NeHetx, &deficit(["A/A", "B/B", "A/B"]), json!({}));
        let estimates = table(&output, "estimates");
        assert_close(number(estimates, 0, "d").unwrap(), -0.5125, 1e-4);
        assert!(number(estimates, 0, "ne_low").unwrap().is_finite());
        let message = &findings_with(&output, "infinite-estimate")[0].message;
        assert!(message.contains("(ne_low) is informative: Nb is unlikely to be below it"), "{message}");
    }

    /// Results contract: the `estimates` table starts with the contract's columns; no parameters.
    #[test]
    fn columns_follow_the_contract() {
        assert!(descriptor().params.is_empty());
        let matrix = MatrixBuilder::new(&["L1"]).samples("a", "P", 2020, 3, &["A/B"]).build();
        let output = run_step(&NeHetx, &matrix, json!({}));
        assert_eq!(&table(&output, "estimates").columns[..4], &["population", "year", "d", "ne"]);
        assert_eq!(output.citations.len(), CITATIONS.len());
    }
}
