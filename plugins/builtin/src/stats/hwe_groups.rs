//! Hardy–Weinberg exact tests of many loci in groups of samples, their false-discovery-rate
//! q-values, and the heterozygote-deficit rule built on them. `hwe` reports the tests; `validate`
//! uses the same tests and the same rule to flag loci, so the two steps agree.
//!
//! - Each locus in each group is tested by [`crate::stats::hwe_exact`] on the individuals typed
//!   at both alleles; a locus with one allele or fewer than two typed individuals is untested
//!   ([`Untested`]), never given p = 1. Monte Carlo draws come from a stream named after the
//!   group and locus ([`test_rng`]), so no result depends on which other tests run.
//! - [`assign_q_values`]: Benjamini & Hochberg (1995) over every test passed in, the family
//!   whose size m the caller reports.
//! - The deficit rule ([`LocusTest::significant_deficit`], [`DeficitEvidence::flagged`]): in a
//!   group, a deficit counts when Ho < He (Nei 1978, unbiased), q < [`SIGNIFICANT_Q`] and
//!   Brookfield's (1996) r ≥ [`NULL_ALLELE_R`]; a locus is flagged when that holds in at least
//!   half of the groups where it was tested (and in one at least). Requiring the corrected test
//!   keeps loci from being flagged by sampling noise alone, which a threshold on r does not.

use popgauge_abi::{AlleleCounts, Group, LocusIdx, PackedGenotypes, SampleSet, Seed};
use rayon::prelude::*;

use crate::stats::fdr::benjamini_hochberg;
use crate::stats::heterozygosity::LocusHeterozygosity;
use crate::stats::hwe_exact::{GenotypeTable, HweTest, HweWorkspace, TestSettings, test_rng};
use crate::stats::null_allele::brookfield_null_allele_frequency;

/// q below this counts as a significant departure (the false-discovery rate of the rule).
pub const SIGNIFICANT_Q: f64 = 0.05;
/// Brookfield's r at or above this counts towards the deficit rule (a popgauge rule of thumb:
/// it keeps a significant but negligible deficit of a very large sample from counting).
pub const NULL_ALLELE_R: f64 = 0.05;

/// Whether heterozygotes are fewer or more than expected.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Direction {
    /// Ho < He.
    Deficit,
    /// Ho > He.
    Excess,
    /// Ho = He.
    None,
}

impl Direction {
    /// The spelling in result tables.
    pub fn as_str(self) -> &'static str {
        match self {
            Direction::Deficit => "deficit",
            Direction::Excess => "excess",
            Direction::None => "none",
        }
    }

    /// Ho against the unbiased He, compared exactly: Ho < He ⟺ H·N(N − 1) < n·(N² − Σcᵤ²);
    /// `None` with fewer than two typed individuals.
    pub fn of(counts: &AlleleCounts) -> Option<Direction> {
        if counts.typed < 2 {
            return None;
        }
        let n = u128::from(counts.typed);
        let copies = 2 * n;
        let squares: u128 = counts.alleles.iter().map(|&c| u128::from(c) * u128::from(c)).sum();
        let observed = u128::from(counts.heterozygotes) * copies * (copies - 1);
        let expected = n * (copies * copies - squares);
        Some(match observed.cmp(&expected) {
            std::cmp::Ordering::Less => Direction::Deficit,
            std::cmp::Ordering::Greater => Direction::Excess,
            std::cmp::Ordering::Equal => Direction::None,
        })
    }
}

/// Why a locus in a group has no test.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Untested {
    /// Fewer than two typed individuals.
    TooFewTyped,
    /// One allele only.
    Monomorphic,
    /// Too many tables to enumerate and `permutations` = 0.
    NoDraws,
}

/// The test of one locus in one group.
#[derive(Debug, Clone, PartialEq)]
pub struct LocusTest {
    /// n, Ho and He of the locus in the group.
    pub heterozygosity: LocusHeterozygosity,
    /// Ho against He; `None` with fewer than two typed individuals.
    pub direction: Option<Direction>,
    /// The test, or why there is none.
    pub outcome: Result<HweTest, Untested>,
    /// Benjamini–Hochberg q-value, once [`assign_q_values`] has run; `None` when untested.
    pub q_value: Option<f64>,
}

impl LocusTest {
    /// The two-sided p-value; `None` when untested.
    pub fn p_value(&self) -> Option<f64> {
        self.outcome.as_ref().ok().map(|t| t.p_value)
    }

    /// Brookfield's (1996) r, floored at 0; `None` without Ho and He.
    pub fn null_allele_r(&self) -> Option<f64> {
        Some(brookfield_null_allele_frequency(self.heterozygosity.observed?, self.heterozygosity.expected?))
    }

    /// A deficit with q < [`SIGNIFICANT_Q`] and r ≥ [`NULL_ALLELE_R`].
    pub fn significant_deficit(&self) -> bool {
        self.direction == Some(Direction::Deficit)
            && self.q_value.is_some_and(|q| q < SIGNIFICANT_Q)
            && self.null_allele_r().is_some_and(|r| r >= NULL_ALLELE_R)
    }
}

/// Tests of the requested loci of one group, in the order the loci were given.
pub type GroupTests = Vec<LocusTest>;

/// Tests `loci` in every group, groups in parallel; each test draws only from its own named
/// stream, so the thread count does not change any result.
pub fn test_groups(
    packed: &PackedGenotypes<'_>,
    groups: &[Group],
    loci: &[LocusIdx],
    settings: &TestSettings,
    seed: Seed,
) -> Vec<GroupTests> {
    groups.par_iter().map(|group| test_group(packed, group, loci, settings, seed)).collect()
}

fn test_group(
    packed: &PackedGenotypes<'_>,
    group: &Group,
    loci: &[LocusIdx],
    settings: &TestSettings,
    seed: Seed,
) -> GroupTests {
    let view = packed.view();
    let members = packed.sample_set(&group.samples);
    let mut counts = AlleleCounts::default();
    let mut table = GenotypeTable::new();
    let mut workspace = HweWorkspace::new();
    let mut compact: Vec<usize> = Vec::new();
    loci.iter()
        .map(|&locus| {
            packed.allele_counts_into(locus, &members, &mut counts);
            fill_table(packed, locus, &members, &counts, &mut compact, &mut table);
            let rng = || test_rng(seed, &group.population, group.year, &view.locus(locus).name);
            let outcome = match workspace.test(&table, settings, rng) {
                Some(test) => Ok(test),
                None if counts.typed < 2 => Err(Untested::TooFewTyped),
                None if counts.distinct() < 2 => Err(Untested::Monomorphic),
                None => Err(Untested::NoDraws),
            };
            LocusTest {
                heterozygosity: LocusHeterozygosity::from_counts(&counts),
                direction: Direction::of(&counts),
                outcome,
                q_value: None,
            }
        })
        .collect()
}

/// The genotype table of `members` at `locus`, alleles relabelled in code order `0..k`: from
/// the genotype counts at a packed locus, sample by sample otherwise.
fn fill_table(
    packed: &PackedGenotypes<'_>,
    locus: usize,
    members: &SampleSet,
    counts: &AlleleCounts,
    compact: &mut Vec<usize>,
    table: &mut GenotypeTable,
) {
    compact.clear();
    let mut next = 0;
    compact.extend(counts.alleles.iter().map(|&c| {
        let index = next;
        next += usize::from(c > 0);
        index
    }));
    table.reset(next);
    if let (Some(biallelic), Some(bits)) = (packed.locus(locus), members.bits()) {
        let genotypes = biallelic.genotype_counts(bits);
        let (low, high) = (usize::from(biallelic.low.0), usize::from(biallelic.high.0));
        for (a, b, n) in [
            (low, low, genotypes.low_homozygotes),
            (low, high, genotypes.heterozygotes),
            (high, high, genotypes.high_homozygotes),
        ] {
            if n > 0 {
                table.add_many(compact[a], compact[b], n);
            }
        }
        return;
    }
    let view = packed.view();
    for &s in members.samples() {
        if let Some((a, b)) = view.genotype(s, locus) {
            table.add(compact[a.0 as usize], compact[b.0 as usize]);
        }
    }
}

/// Benjamini–Hochberg q-values over every test in `results`; returns the family size m.
pub fn assign_q_values(results: &mut [GroupTests]) -> usize {
    let p_values: Vec<f64> = results.iter().flatten().filter_map(LocusTest::p_value).collect();
    let q_values = benjamini_hochberg(&p_values);
    let mut next = q_values.iter();
    for test in results.iter_mut().flatten() {
        if test.p_value().is_some() {
            test.q_value = next.next().copied();
        }
    }
    p_values.len()
}

/// How many groups tested one locus, and in which of them the deficit rule holds.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct DeficitEvidence {
    /// Positions (in the `results` passed) of the groups where the locus was tested.
    pub tested: Vec<usize>,
    /// Positions of the groups with a significant deficit ([`LocusTest::significant_deficit`]).
    pub significant: Vec<usize>,
}

impl DeficitEvidence {
    /// The evidence at the locus in position `locus` of every group's tests.
    pub fn at(results: &[GroupTests], locus: usize) -> DeficitEvidence {
        let tested: Vec<usize> = (0..results.len()).filter(|&g| results[g][locus].outcome.is_ok()).collect();
        let significant = tested.iter().copied().filter(|&g| results[g][locus].significant_deficit()).collect();
        DeficitEvidence { tested, significant }
    }

    /// The rule: a significant deficit in at least half of the groups where the locus was
    /// tested, and in one at least.
    pub fn flagged(&self) -> bool {
        !self.significant.is_empty() && 2 * self.significant.len() >= self.tested.len()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::stats::hwe_exact::TestMethod;

    /// A tested locus with the given p-value, direction and Ho, He.
    fn tested(p_value: f64, direction: Direction, observed: f64, expected: f64) -> LocusTest {
        let heterozygosity =
            LocusHeterozygosity { typed: 20, distinct_alleles: 2, observed: Some(observed), expected: Some(expected) };
        let test = HweTest {
            method: TestMethod::Exact,
            p_value,
            p_mid: p_value,
            p_deficit: p_value,
            p_excess: 1.0,
            standard_error: 0.0,
            draws: 0,
        };
        LocusTest { heterozygosity, direction: Some(direction), outcome: Ok(test), q_value: None }
    }

    fn untested() -> LocusTest {
        let heterozygosity = LocusHeterozygosity { typed: 1, distinct_alleles: 1, observed: None, expected: None };
        LocusTest { heterozygosity, direction: None, outcome: Err(Untested::TooFewTyped), q_value: None }
    }

    /// Benjamini & Hochberg (1995), by hand: m = 3 tests (the untested one is not in the
    /// family), p = 0.01, 0.04, 0.03 → m·p/rank = 0.03, 0.04, 0.045 → q = 0.03, 0.04, 0.04
    /// after the running minimum from the largest p down.
    #[test]
    fn q_values_cover_the_tested_loci_of_every_group() {
        let deficit = |p| tested(p, Direction::Deficit, 0.3, 0.6);
        let mut results = vec![vec![deficit(0.01), deficit(0.04)], vec![untested(), deficit(0.03)]];
        assert_eq!(assign_q_values(&mut results), 3);
        let q: Vec<Option<f64>> = results.iter().flatten().map(|t| t.q_value).collect();
        crate::test_support::assert_close(q[0].unwrap(), 0.03, 1e-15);
        assert_eq!(q[1], Some(0.04));
        assert_eq!(q[2], None);
        assert_eq!(q[3], Some(0.04));
    }

    /// The deficit rule: Ho 0.3 < He 0.6 gives Brookfield's r = 0.3/1.6 = 0.1875 (hand
    /// calculation, formula from memory); a deficit counts only with q < 0.05 and r ≥ 0.05, and
    /// an excess never counts. Ho 0.58, He 0.6 gives r = 0.0125, too small.
    #[test]
    fn a_deficit_counts_when_significant_and_not_negligible() {
        let with_q = |mut t: LocusTest, q: f64| {
            t.q_value = Some(q);
            t
        };
        assert!(with_q(tested(0.001, Direction::Deficit, 0.3, 0.6), 0.049).significant_deficit());
        assert!(!with_q(tested(0.001, Direction::Deficit, 0.3, 0.6), 0.05).significant_deficit());
        assert!(!with_q(tested(0.001, Direction::Excess, 0.7, 0.6), 0.01).significant_deficit());
        assert!(!with_q(tested(0.001, Direction::Deficit, 0.58, 0.6), 0.01).significant_deficit());
        assert!(!untested().significant_deficit());
    }

    /// The rule needs a significant deficit in at least half of the groups where the locus was
    /// tested: 1 of 2 is enough, 1 of 3 is not, untested groups do not count, none is never.
    #[test]
    fn a_locus_is_flagged_in_half_the_tested_groups() {
        let significant = || {
            let mut t = tested(0.001, Direction::Deficit, 0.3, 0.6);
            t.q_value = Some(0.01);
            t
        };
        let fine = || {
            let mut t = tested(0.6, Direction::Deficit, 0.55, 0.6);
            t.q_value = Some(0.9);
            t
        };
        let evidence =
            |groups: Vec<LocusTest>| DeficitEvidence::at(&groups.into_iter().map(|t| vec![t]).collect::<Vec<_>>(), 0);
        let half = evidence(vec![significant(), fine(), untested()]);
        assert_eq!((half.tested.clone(), half.significant.clone()), (vec![0, 1], vec![0]));
        assert!(half.flagged());
        assert!(!evidence(vec![significant(), fine(), fine()]).flagged());
        assert!(!evidence(vec![untested()]).flagged());
        assert!(!evidence(vec![fine()]).flagged());
    }
}
