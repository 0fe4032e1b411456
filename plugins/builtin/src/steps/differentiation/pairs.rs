//! The estimates of one comparison (a pair of groups, or every group of a comparison set) and
//! the permutation of individuals between the two groups of a pair.

use popgauge_abi::{AlleleCounts, GenotypeCounts, GenotypeView, LocusIdx, PackedGenotypes, SampleBits, SampleIdx};
use rand_chacha::ChaCha8Rng;

use crate::packing::pack_samples;
use crate::stats::permutation::BatchedStatistic;

use crate::stats::bootstrap::{Interval, bootstrap_loci_each, percentile_interval};
use crate::stats::gst::{
    DifferentiationIndices, DiversityEstimator, DiversityTotals, GeneDiversities, LocusSummary, indices,
};
use crate::stats::weir_cockerham::{BiallelicSample, VarianceComponents, biallelic_components, locus_components};

/// Level of the bootstrap intervals.
pub(super) const INTERVAL_LEVEL: f64 = 0.95;

/// FST, Jost's D, G″_ST, their intervals and the rest of the G_ST family for one comparison.
#[derive(Debug, Clone, PartialEq)]
pub(super) struct ComparisonEstimate {
    /// Loci typed in every compared group with n̄ > 1: those entering θ̂.
    pub loci: Vec<LocusIdx>,
    /// The variance components summed over alleles, one per entry of `loci`.
    pub components: Vec<VarianceComponents>,
    /// θ̂ = Σa/Σ(a + b + c); `None` when Σ(a + b + c) = 0 or no locus is usable.
    pub theta: Option<f64>,
    /// The percentile bootstrap intervals over loci of θ̂, D and G″_ST.
    pub intervals: Intervals,
    /// Bootstrap replicates with a defined θ̂*.
    pub bootstrap_replicates: usize,
    /// Loci polymorphic in the comparison that enter the G_ST family.
    pub polymorphic_loci: usize,
    /// G_ST, G′_ST, G″_ST (Nei–Chesser estimators) and D (Jost's estimators).
    pub indices: DifferentiationIndices,
}

/// Percentile bootstrap intervals of one comparison, all from the same replicates.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub(super) struct Intervals {
    /// θ̂ (FST).
    pub fst: Option<Interval>,
    /// Jost's D.
    pub jost_d: Option<Interval>,
    /// G″_ST.
    pub gst_double_prime: Option<Interval>,
}

/// Ĥ_S and Ĥ_T of one locus with both estimators; `None` for a locus that does not enter the
/// G_ST family (monomorphic over the compared groups, or ñ ≤ 1).
type LocusDiversities = Option<(GeneDiversities, GeneDiversities)>;

/// Estimates one comparison from the allele counts of its groups (`groups[g][locus]`, every
/// group with one entry per view locus), with `bootstrap` replicates drawn from `rng`.
///
/// The loci entering the G_ST family are among those entering θ̂: both need every group typed,
/// and the harmonic mean ñ > 1 of the G_ST family implies the arithmetic mean n̄ > 1 of θ̂. So
/// one list of loci serves both, and each bootstrap replicate draws from it once: θ̂*, D* and
/// G″_ST* are computed from the same drawn loci, and the draws (hence θ̂*) are those of a
/// bootstrap of θ̂ alone.
pub(super) fn estimate(groups: &[&[AlleleCounts]], bootstrap: usize, rng: &mut ChaCha8Rng) -> ComparisonEstimate {
    let n_loci = groups.first().map_or(0, |g| g.len());
    let mut samples: Vec<&AlleleCounts> = Vec::with_capacity(groups.len());
    let (mut loci, mut components, mut diversities) = (Vec::new(), Vec::new(), Vec::new());
    for locus in 0..n_loci {
        samples.clear();
        samples.extend(groups.iter().map(|g| &g[locus]));
        if samples.iter().any(|s| s.typed == 0) {
            continue;
        }
        if let Some(c) = locus_components(&samples) {
            loci.push(locus);
            components.push(c);
            diversities.push(LocusSummary::from_counts(&samples).map(|summary| {
                (summary.diversities(DiversityEstimator::NeiChesser), summary.diversities(DiversityEstimator::Jost))
            }));
        }
    }
    let k = groups.len();
    let (nei_chesser, jost) = diversity_totals(&diversities, None);
    let [mut fst, mut jost_d, mut gst_double_prime] =
        bootstrap_loci_each(components.len(), bootstrap, rng, |sampled| {
            let (nei_chesser, jost) = diversity_totals(&diversities, Some(sampled));
            let indices = combined_indices(&nei_chesser, &jost, k);
            [theta_of(&components, Some(sampled)), indices.jost_d, indices.gst_double_prime]
        });
    ComparisonEstimate {
        theta: theta_of(&components, None),
        intervals: Intervals {
            fst: percentile_interval(&mut fst, INTERVAL_LEVEL),
            jost_d: percentile_interval(&mut jost_d, INTERVAL_LEVEL),
            gst_double_prime: percentile_interval(&mut gst_double_prime, INTERVAL_LEVEL),
        },
        bootstrap_replicates: fst.len(),
        polymorphic_loci: nei_chesser.loci(),
        indices: combined_indices(&nei_chesser, &jost, k),
        loci,
        components,
    }
}

/// θ̂ over all loci (`None`) or over the sampled loci (with repeats).
fn theta_of(components: &[VarianceComponents], sampled: Option<&[usize]>) -> Option<f64> {
    let sum: VarianceComponents = match sampled {
        Some(indices) => indices.iter().map(|&i| components[i]).sum(),
        None => components.iter().copied().sum(),
    };
    if components.is_empty() { None } else { sum.theta() }
}

/// The Nei–Chesser and Jost sums of Ĥ_S and Ĥ_T over all loci (`None`) or over the sampled
/// loci (with repeats), leaving out loci outside the G_ST family.
fn diversity_totals(diversities: &[LocusDiversities], sampled: Option<&[usize]>) -> (DiversityTotals, DiversityTotals) {
    let (mut nei_chesser, mut jost) = (DiversityTotals::default(), DiversityTotals::default());
    let mut add = |locus: &LocusDiversities| {
        if let Some((by_nei_chesser, by_jost)) = locus {
            nei_chesser.add(*by_nei_chesser);
            jost.add(*by_jost);
        }
    };
    match sampled {
        Some(indices) => indices.iter().for_each(|&i| add(&diversities[i])),
        None => diversities.iter().for_each(add),
    }
    (nei_chesser, jost)
}

/// G_ST, G′_ST and G″_ST from the Nei–Chesser averages, D from Jost's (ratio of averages).
fn combined_indices(nei_chesser: &DiversityTotals, jost: &DiversityTotals, k: usize) -> DifferentiationIndices {
    let from_nei_chesser = nei_chesser.mean().map(|d| indices(d, k)).unwrap_or_default();
    let from_jost = jost.mean().map(|d| indices(d, k)).unwrap_or_default();
    DifferentiationIndices { jost_d: from_jost.jost_d, ..from_nei_chesser }
}

/// Largest pair (individuals in both groups) the permutation test handles.
pub(super) const MAX_PERMUTED_INDIVIDUALS: usize = u16::MAX as usize;

/// Replicates evaluated together: one pass over the loci serves this many arrangements.
const BATCH: usize = 64;

/// The individuals of a pair of groups, ready to be shuffled between them.
///
/// The pair's individuals are the columns of a packing of their genotypes (the smaller group
/// first), and a replicate's labels name columns. A replicate counts only the smaller group and
/// takes the other group's counts from the pair totals by subtraction. At a biallelic locus it
/// counts by popcount: the shuffled labels become a bitset of columns, ANDed with the locus's
/// bit planes. At a locus with more alleles the distinct genotypes of the pair are listed once,
/// every individual's genotype is stored as its index in that list (0 = untyped), and a
/// replicate builds a histogram of genotype indices over the individuals in the smaller group.
/// Both give the same integer counts, so θ̂* does not depend on the path.
///
/// Replicates are evaluated [`BATCH`] at a time ([`BatchedStatistic`]): each locus's planes are
/// read once for the whole batch, and each replicate still sums its loci in locus order, so
/// θ̂* is the same as one replicate at a time. Buffers are reused across batches.
#[derive(Debug, Clone)]
pub(super) struct PairPermutation<'v> {
    individuals: usize,
    counted: usize,
    packed: PackedGenotypes<'v>,
    /// The loci tested, in view locus order.
    tested: Vec<TestedLocus>,
    /// Genotype indices of the loci counted by histogram, `rows × individuals`.
    codes: Vec<u16>,
    /// Distinct genotypes of every locus counted by histogram, each locus's list starting with
    /// (0, 0) = untyped.
    genotypes: Vec<(u16, u16)>,
    batch: Batch,
}

/// The arrangements recorded for the next evaluation and the evaluation's buffers.
#[derive(Debug, Clone, Default)]
struct Batch {
    recorded: usize,
    /// The smaller group of each arrangement as columns.
    sides: Vec<SampleBits>,
    /// The smaller group of each arrangement as labels (kept only for histogram loci).
    labels: Vec<Vec<u32>>,
    side_counts: Vec<GenotypeCounts>,
    sums: Vec<VarianceComponents>,
    defined: Vec<bool>,
    histogram: [Vec<u32>; 2],
    side: AlleleCounts,
    rest: AlleleCounts,
}

/// One locus of the permutation test and how a replicate counts the smaller group there.
#[derive(Debug, Clone)]
enum TestedLocus {
    /// By popcount over the packed planes of view locus `locus`; `total` counts the pair.
    Packed { locus: LocusIdx, total: BiallelicSample },
    /// By histogram over row `row` of `codes`, with genotypes `genotypes[start..end]`;
    /// `total` counts the pair.
    Histogram { total: AlleleCounts, row: usize, start: usize, end: usize },
}

impl<'v> PairPermutation<'v> {
    /// The pair `first`, `second` (view sample indices) at `loci`; loci monomorphic over the
    /// pair are left out (they add 0 to every replicate). `None` for a pair of more than
    /// [`MAX_PERMUTED_INDIVIDUALS`] individuals, whose genotype indices might not fit 16 bits.
    pub(super) fn new(
        view: &GenotypeView<'v>,
        first: &[SampleIdx],
        second: &[SampleIdx],
        loci: &[LocusIdx],
    ) -> Option<Self> {
        if first.len() + second.len() > MAX_PERMUTED_INDIVIDUALS {
            return None;
        }
        let (smaller, larger) = if first.len() <= second.len() { (first, second) } else { (second, first) };
        let members: Vec<SampleIdx> = smaller.iter().chain(larger).copied().collect();
        let mut permutation = PairPermutation {
            individuals: members.len(),
            counted: smaller.len(),
            packed: pack_samples(*view, &members),
            tested: Vec::with_capacity(loci.len()),
            codes: Vec::new(),
            genotypes: Vec::new(),
            batch: Batch::default(),
        };
        let everyone = SampleBits::from_columns(members.len(), 0..members.len());
        for &locus in loci {
            let tested = match permutation.packed.locus(locus) {
                Some(packed) => {
                    let total = BiallelicSample::from(packed.genotype_counts(&everyone));
                    // Both alleles present: the packed equivalent of `distinct() > 1`.
                    (total.low_copies > 0 && total.high_copies > 0).then_some(TestedLocus::Packed { locus, total })
                }
                None => {
                    let total = view.allele_counts(locus, &members);
                    (total.distinct() > 1).then(|| permutation.add_histogram_locus(view, locus, &members, total))
                }
            };
            permutation.tested.extend(tested);
        }
        Some(permutation)
    }

    fn add_histogram_locus(
        &mut self,
        view: &GenotypeView<'_>,
        locus: LocusIdx,
        members: &[SampleIdx],
        total: AlleleCounts,
    ) -> TestedLocus {
        let row = self.codes.len() / self.individuals.max(1);
        let start = self.genotypes.len();
        self.genotypes.push((0, 0));
        for &sample in members {
            let index = match view.genotype(sample, locus) {
                None => 0,
                Some((a, b)) => {
                    let genotype = (a.0.min(b.0), a.0.max(b.0));
                    let known = self.genotypes[start..].iter().position(|&g| g == genotype);
                    known.unwrap_or_else(|| {
                        self.genotypes.push(genotype);
                        self.genotypes.len() - 1 - start
                    })
                }
            };
            // The index is at most the number of individuals (distinct genotypes plus the
            // untyped bin), which `new` keeps within u16.
            self.codes.push(u16::try_from(index).unwrap_or(u16::MAX));
        }
        TestedLocus::Histogram { total, row, start, end: self.genotypes.len() }
    }

    /// The labels of the data as they are: the smaller group first.
    pub(super) fn labels(&self) -> Vec<u32> {
        (0..u32::try_from(self.individuals).unwrap_or(u32::MAX)).collect()
    }

    /// θ̂ with the first labels of `order` (as many as the smaller group) forming that group.
    pub(super) fn theta(&mut self, order: &[u32]) -> Option<f64> {
        self.batch.recorded = 0;
        self.record(order);
        let mut values = Vec::with_capacity(1);
        self.evaluate(&mut values);
        values.pop().flatten()
    }

    fn has_histogram_loci(&self) -> bool {
        !self.codes.is_empty()
    }
}

impl BatchedStatistic<u32> for PairPermutation<'_> {
    const BATCH: usize = BATCH;

    fn record(&mut self, arrangement: &[u32]) {
        let counted = &arrangement[..self.counted];
        let slot = self.batch.recorded;
        if self.batch.sides.len() == slot {
            self.batch.sides.push(self.packed.empty_bits());
            self.batch.labels.push(Vec::new());
        }
        let side = &mut self.batch.sides[slot];
        side.clear();
        for &label in counted {
            side.insert(label as usize);
        }
        if self.has_histogram_loci() {
            self.batch.labels[slot].clear();
            self.batch.labels[slot].extend_from_slice(counted);
        }
        self.batch.recorded += 1;
    }

    fn evaluate(&mut self, values: &mut Vec<Option<f64>>) {
        let replicates = self.batch.recorded;
        let batch = &mut self.batch;
        batch.sums.clear();
        batch.sums.resize(replicates, VarianceComponents::default());
        batch.defined.clear();
        batch.defined.resize(replicates, false);
        for tested in &self.tested {
            match tested {
                TestedLocus::Packed { locus, total } => {
                    // Always `Some`: `new` chose this path by the same lookup.
                    let Some(packed) = self.packed.locus(*locus) else { continue };
                    packed.genotype_counts_many(&batch.sides[..replicates], &mut batch.side_counts);
                    for (r, &counts) in batch.side_counts.iter().enumerate() {
                        let side = BiallelicSample::from(counts);
                        if let Some(c) = biallelic_components(&[side, total.without(side)]) {
                            batch.sums[r] += c;
                            batch.defined[r] = true;
                        }
                    }
                }
                TestedLocus::Histogram { total, row, start, end } => {
                    let row = &self.codes[row * self.individuals..(row + 1) * self.individuals];
                    let genotypes = &self.genotypes[*start..*end];
                    for r in 0..replicates {
                        genotype_histogram(row, &batch.labels[r], end - start, &mut batch.histogram);
                        counts_from_histogram(&batch.histogram[0], genotypes, total.alleles.len(), &mut batch.side);
                        subtract(total, &batch.side, &mut batch.rest);
                        if let Some(c) = locus_components(&[&batch.side, &batch.rest]) {
                            batch.sums[r] += c;
                            batch.defined[r] = true;
                        }
                    }
                }
            }
        }
        values.extend(batch.sums.iter().zip(&batch.defined).map(|(sum, &defined)| sum.theta().filter(|_| defined)));
        batch.recorded = 0;
    }
}

/// Counts the genotype indices of `members` in `row` into `histogram[0]` (length `bins`).
/// Two interleaved histograms, summed at the end, halve the chains of dependent increments
/// when few genotypes repeat (biallelic loci).
fn genotype_histogram(row: &[u16], members: &[u32], bins: usize, histogram: &mut [Vec<u32>; 2]) {
    let [even, odd] = histogram;
    for h in [&mut *even, &mut *odd] {
        h.clear();
        h.resize(bins, 0);
    }
    let mut pairs = members.chunks_exact(2);
    for pair in &mut pairs {
        even[usize::from(row[pair[0] as usize])] += 1;
        odd[usize::from(row[pair[1] as usize])] += 1;
    }
    for &member in pairs.remainder() {
        even[usize::from(row[member as usize])] += 1;
    }
    for (e, o) in even.iter_mut().zip(odd.iter()) {
        *e += o;
    }
}

/// Allele counts from a genotype histogram (`genotypes[g]` is the genotype of bin g; bin 0 is
/// untyped), into `counts` for a locus whose count vectors have `length` entries.
fn counts_from_histogram(histogram: &[u32], genotypes: &[(u16, u16)], length: usize, counts: &mut AlleleCounts) {
    reset(counts, length);
    for (&n, &(a, b)) in histogram.iter().zip(genotypes).skip(1) {
        let (a, b) = (usize::from(a), usize::from(b));
        counts.typed += n;
        counts.alleles[a] += n;
        counts.alleles[b] += n;
        if a != b {
            counts.heterozygotes += n;
            counts.heterozygous_carriers[a] += n;
            counts.heterozygous_carriers[b] += n;
        }
    }
}

/// `rest = total − part`, element by element (part is a subset of total).
fn subtract(total: &AlleleCounts, part: &AlleleCounts, rest: &mut AlleleCounts) {
    reset(rest, total.alleles.len());
    for (r, (t, p)) in rest.alleles.iter_mut().zip(total.alleles.iter().zip(&part.alleles)) {
        *r = t - p;
    }
    for (r, (t, p)) in
        rest.heterozygous_carriers.iter_mut().zip(total.heterozygous_carriers.iter().zip(&part.heterozygous_carriers))
    {
        *r = t - p;
    }
    rest.typed = total.typed - part.typed;
    rest.heterozygotes = total.heterozygotes - part.heterozygotes;
}

/// Zeroes `counts` for a locus whose count vectors have `length` entries, keeping capacity.
fn reset(counts: &mut AlleleCounts, length: usize) {
    counts.alleles.clear();
    counts.alleles.resize(length, 0);
    counts.heterozygous_carriers.clear();
    counts.heterozygous_carriers.resize(length, 0);
    counts.typed = 0;
    counts.heterozygotes = 0;
}
