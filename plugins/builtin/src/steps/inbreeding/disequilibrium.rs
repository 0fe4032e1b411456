//! Identity disequilibrium g2 (David et al. 2007) of one group, with a bootstrap interval over
//! individuals and a permutation test (docs/methods.md, "Identity disequilibrium").
//!
//! With hᵢₗ = 1 when individual i is heterozygous at locus l, mᵢₗ = 1 when it is typed there,
//! Hᵢ = Σₗ hᵢₗ, Mᵢ = Σₗ mᵢₗ, Tₗ = Σᵢ hᵢₗ and Cₗ = Σᵢ mᵢₗ over the loci polymorphic in the group:
//!
//! - A = Σᵢ Σ_{l≠l′} hᵢₗhᵢₗ′ = Σᵢ (Hᵢ² − Hᵢ), W_A = Σᵢ (Mᵢ² − Mᵢ) (pairs of loci within individuals);
//! - B = Σ_{i≠j} Σ_{l≠l′} hᵢₗhⱼₗ′ = [(ΣTₗ)² − ΣTₗ²] − A, W_B = [(ΣCₗ)² − ΣCₗ²] − W_A;
//! - g2 = (A/W_A)/(B/W_B) − 1.
//!
//! A permutation that shuffles each locus's calls among individuals keeps every Tₗ and Cₗ, so
//! only A and W_A are recomputed. A bootstrap replicate draws individuals with replacement (a
//! drawn copy is a distinct individual) and needs the pairwise Kᵢⱼ = Σₗ hᵢₗhⱼₗ and
//! Qᵢⱼ = Σₗ mᵢₗmⱼₗ, counted once by popcount: B* = (ΣH)² − ΣH² − (Σ_{a,b} K − Σ_a H) over the
//! draws a, b, and W_B* likewise with M and Q.

use popgauge_abi::{Group, Seed};
use rand::{Rng, RngExt};
use rand_chacha::ChaCha8Rng;
use rayon::prelude::*;

use super::{INTERVAL_LEVEL, Params};
use crate::stats::bootstrap::{Interval, percentile_interval, rng};
use crate::stats::permutation::{Enumeration, PermutationOutcome, at_least_as_extreme};

/// The heterozygosity of one group's members at the loci polymorphic in the group.
#[derive(Debug, Clone, Default)]
pub(crate) struct GroupHeterozygosity {
    members: usize,
    words: usize,
    /// Per member, one bit per view locus: heterozygous there.
    heterozygous: Vec<u64>,
    /// Per member, one bit per view locus: typed there (polymorphic loci only).
    typed: Vec<u64>,
    /// (Tₗ, Cₗ) per polymorphic locus.
    loci: Vec<(u32, u32)>,
}

impl GroupHeterozygosity {
    pub(crate) fn new(members: usize, loci: usize) -> GroupHeterozygosity {
        let words = loci.div_ceil(64);
        GroupHeterozygosity {
            members,
            words,
            heterozygous: vec![0; members * words],
            typed: vec![0; members * words],
            loci: Vec::new(),
        }
    }

    /// Records a polymorphic locus with `heterozygotes` of `typed` members.
    pub(crate) fn add_locus(&mut self, heterozygotes: u32, typed: u32) {
        self.loci.push((heterozygotes, typed));
    }

    /// Records member `member`'s call at a polymorphic locus.
    pub(crate) fn mark(&mut self, member: usize, locus: usize, heterozygous: bool) {
        let (word, bit) = (member * self.words + locus / 64, 1u64 << (locus % 64));
        self.typed[word] |= bit;
        if heterozygous {
            self.heterozygous[word] |= bit;
        }
    }

    /// Polymorphic loci in the group.
    pub(crate) fn polymorphic_loci(&self) -> usize {
        self.loci.len()
    }

    fn row<'a>(&self, bits: &'a [u64], member: usize) -> &'a [u64] {
        &bits[member * self.words..(member + 1) * self.words]
    }

    fn per_member(&self, bits: &[u64]) -> Vec<f64> {
        (0..self.members).map(|m| popcount(self.row(bits, m)) as f64).collect()
    }

    /// Σ_{l≠l′} Tₗ Tₗ′ and Σ_{l≠l′} Cₗ Cₗ′: invariant under permutation within loci.
    fn totals(&self) -> (f64, f64) {
        let (mut t, mut t2, mut c, mut c2) = (0.0, 0.0, 0.0, 0.0);
        for &(het, typed) in &self.loci {
            let (het, typed) = (f64::from(het), f64::from(typed));
            t += het;
            t2 += het * het;
            c += typed;
            c2 += typed * typed;
        }
        (t * t - t2, c * c - c2)
    }

    /// Pairwise counts Σₗ xᵢₗxⱼₗ of `bits`, a full symmetric matrix (the diagonal is Σₗ xᵢₗ).
    fn pairwise(&self, bits: &[u64]) -> Vec<f64> {
        let n = self.members;
        let mut matrix = vec![0.0; n * n];
        for i in 0..n {
            let row_i = self.row(bits, i);
            for j in i..n {
                let shared: u64 =
                    row_i.iter().zip(self.row(bits, j)).map(|(a, b)| u64::from((a & b).count_ones())).sum();
                matrix[i * n + j] = shared as f64;
                matrix[j * n + i] = shared as f64;
            }
        }
        matrix
    }

    fn complete(&self) -> bool {
        self.loci.iter().all(|&(_, typed)| typed as usize == self.members)
    }
}

fn popcount(words: &[u64]) -> u64 {
    words.iter().map(|w| u64::from(w.count_ones())).sum()
}

/// A = Σ(x² − x) over members.
fn within(values: impl Iterator<Item = f64>) -> f64 {
    values.map(|x| x * x - x).sum()
}

/// g2 from its four sums; `None` when a mean is undefined or B is 0.
pub(crate) fn g2_from_sums(within_sum: f64, within_pairs: f64, between_sum: f64, between_pairs: f64) -> Option<f64> {
    if within_pairs <= 0.0 || between_pairs <= 0.0 || between_sum <= 0.0 {
        return None;
    }
    Some((within_sum / within_pairs) / (between_sum / between_pairs) - 1.0)
}

/// g2 of a group, its interval and its test.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub(crate) struct IdentityDisequilibrium {
    pub loci: usize,
    pub g2: Option<f64>,
    pub interval: Option<Interval>,
    pub replicates: usize,
    pub test: Option<PermutationOutcome>,
}

pub(crate) fn estimate_identity_disequilibrium(
    hets: &GroupHeterozygosity,
    group: &Group,
    params: &Params,
    seed: Seed,
) -> IdentityDisequilibrium {
    let loci = hets.polymorphic_loci();
    let g2 = point_estimate(hets);
    let Some(observed) = g2 else {
        return IdentityDisequilibrium { loci, ..IdentityDisequilibrium::default() };
    };
    let key = format!("{} {}", group.population, group.year);
    let mut values = bootstrap(hets, params.g2_bootstrap as usize, &mut rng(seed, &format!("g2-bootstrap {key}")));
    let test = permutation_test(hets, observed, params.g2_permutations as usize, seed, &format!("g2-test {key}"));
    IdentityDisequilibrium {
        loci,
        g2,
        replicates: values.len(),
        interval: percentile_interval(&mut values, INTERVAL_LEVEL),
        test,
    }
}

pub(crate) fn point_estimate(hets: &GroupHeterozygosity) -> Option<f64> {
    if hets.members < 2 || hets.polymorphic_loci() < 2 {
        return None;
    }
    let (total_t, total_c) = hets.totals();
    let a = within(hets.per_member(&hets.heterozygous).into_iter());
    let w_a = within(hets.per_member(&hets.typed).into_iter());
    g2_from_sums(a, w_a, total_t - a, total_c - w_a)
}

/// What every bootstrap replicate reuses: per-member counts and the pairwise matrices.
pub(crate) struct Resampling {
    het: Vec<f64>,
    typed: Vec<f64>,
    het_pairs: Vec<f64>,
    /// `None` when every member is typed at every polymorphic locus (then Qᵢⱼ = L).
    typed_pairs: Option<Vec<f64>>,
    loci: f64,
}

impl Resampling {
    pub(crate) fn of(hets: &GroupHeterozygosity) -> Resampling {
        Resampling {
            het: hets.per_member(&hets.heterozygous),
            typed: hets.per_member(&hets.typed),
            het_pairs: hets.pairwise(&hets.heterozygous),
            typed_pairs: (!hets.complete()).then(|| hets.pairwise(&hets.typed)),
            loci: hets.polymorphic_loci() as f64,
        }
    }

    /// g2 of a sample holding member i `weights[i]` times (each copy a distinct individual).
    pub(crate) fn g2(&self, weights: &[f64]) -> Option<f64> {
        let drawn = |x: &[f64]| weights.iter().zip(x).fold((0.0, 0.0), |(s, q), (w, v)| (s + w * v, q + w * v * v));
        let (h_sum, h_squares) = drawn(&self.het);
        let (m_sum, m_squares) = drawn(&self.typed);
        let b = h_sum * h_sum - h_squares - (weighted_total(&self.het_pairs, weights) - h_sum);
        let typed_pairs = match &self.typed_pairs {
            Some(q) => weighted_total(q, weights),
            None => {
                let total: f64 = weights.iter().sum();
                self.loci * total * total
            }
        };
        let w_b = m_sum * m_sum - m_squares - (typed_pairs - m_sum);
        g2_from_sums(h_squares - h_sum, m_squares - m_sum, b, w_b)
    }
}

/// Percentile-bootstrap replicates of g2 over individuals (undefined replicates skipped).
fn bootstrap(hets: &GroupHeterozygosity, replicates: usize, stream: &mut ChaCha8Rng) -> Vec<f64> {
    if replicates == 0 {
        return Vec::new();
    }
    let n = hets.members;
    let resampling = Resampling::of(hets);
    let mut weights = vec![0.0f64; n];
    let mut values = Vec::with_capacity(replicates);
    for _ in 0..replicates {
        weights.iter_mut().for_each(|w| *w = 0.0);
        for _ in 0..n {
            weights[stream.random_range(0..n)] += 1.0;
        }
        values.extend(resampling.g2(&weights));
    }
    values
}

/// Σᵢⱼ wᵢwⱼ Xᵢⱼ.
fn weighted_total(matrix: &[f64], weights: &[f64]) -> f64 {
    let n = weights.len();
    let mut total = 0.0;
    for (i, &wi) in weights.iter().enumerate() {
        if wi == 0.0 {
            continue;
        }
        let row = &matrix[i * n..(i + 1) * n];
        total += wi * row.iter().zip(weights).map(|(x, w)| x * w).sum::<f64>();
    }
    total
}

/// Permutations drawn from one named stream; chunks run in parallel and are summed in order,
/// so the p-value does not depend on the number of threads.
const PERMUTATION_CHUNK: usize = 16;

/// Shuffles each locus's calls among the members: the Tₗ heterozygous and n − Cₗ untyped calls
/// go to a uniformly random set of members (a partial Fisher–Yates shuffle), the rest are
/// homozygous. One-sided: large g2 is extreme. Chunk k of [`PERMUTATION_CHUNK`] arrangements
/// draws from the stream `"{stream} {k}"`.
fn permutation_test(
    hets: &GroupHeterozygosity,
    observed: f64,
    permutations: usize,
    seed: Seed,
    stream: &str,
) -> Option<PermutationOutcome> {
    if permutations == 0 {
        return None;
    }
    let chunks: Vec<usize> = (0..permutations.div_ceil(PERMUTATION_CHUNK)).collect();
    let tallies: Vec<(usize, usize)> = chunks
        .par_iter()
        .map(|&chunk| {
            let count = PERMUTATION_CHUNK.min(permutations - chunk * PERMUTATION_CHUNK);
            let mut draws = Draws::seeded(&mut rng(seed, &format!("{stream} {chunk}")));
            permutation_chunk(hets, observed, count, &mut draws)
        })
        .collect();
    let (replicates, as_extreme) = tallies.iter().fold((0, 0), |(r, e), t| (r + t.0, e + t.1));
    Some(PermutationOutcome { observed, replicates, as_extreme, enumeration: Enumeration::Random })
}

/// (defined replicates, replicates at least as extreme) of `count` arrangements.
fn permutation_chunk(hets: &GroupHeterozygosity, observed: f64, count: usize, draws: &mut Draws) -> (usize, usize) {
    let n = hets.members;
    let (total_t, total_c) = hets.totals();
    let mut order: Vec<usize> = (0..n).collect();
    let mut het = vec![0u32; n];
    let mut typed = vec![0u32; n];
    let loci = u32::try_from(hets.polymorphic_loci()).unwrap_or(u32::MAX);
    let (mut replicates, mut as_extreme) = (0, 0);
    for _ in 0..count {
        het.iter_mut().for_each(|h| *h = 0);
        typed.iter_mut().for_each(|m| *m = loci);
        for &(heterozygotes, typed_here) in &hets.loci {
            let untyped = n - typed_here as usize;
            for k in 0..untyped + heterozygotes as usize {
                let other = k + draws.below(n - k);
                order.swap(k, other);
                if k < untyped {
                    typed[order[k]] -= 1;
                } else {
                    het[order[k]] += 1;
                }
            }
        }
        let a = within(het.iter().map(|&h| f64::from(h)));
        let w_a = within(typed.iter().map(|&m| f64::from(m)));
        if let Some(value) = g2_from_sums(a, w_a, total_t - a, total_c - w_a) {
            replicates += 1;
            if at_least_as_extreme(value, observed) {
                as_extreme += 1;
            }
        }
    }
    (replicates, as_extreme)
}

/// The draws of the permutation test's innermost loop: a SplitMix64 sequence (Steele, Lea &
/// Flood 2014, "Fast splittable pseudorandom number generators") started from the step's seeded ChaCha stream, read 32 bits at
/// a time. It is several times cheaper per draw than the stream itself and passes the usual
/// statistical test batteries, which is all a permutation test needs; every value still
/// follows from the step seed alone.
struct Draws {
    state: u64,
    spare: Option<u32>,
}

impl Draws {
    fn seeded(stream: &mut ChaCha8Rng) -> Draws {
        Draws { state: stream.next_u64(), spare: None }
    }

    fn next_u32(&mut self) -> u32 {
        if let Some(spare) = self.spare.take() {
            return spare;
        }
        self.state = self.state.wrapping_add(0x9e37_79b9_7f4a_7c15);
        let mut z = self.state;
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
        z ^= z >> 31;
        self.spare = Some((z >> 32) as u32);
        z as u32
    }

    /// A uniform integer in `0..range` (`range` ≥ 1, below 2³²) by Lemire's (2019, "Fast random
    /// integer generation in an interval") multiply-and-reject method: unbiased.
    fn below(&mut self, range: usize) -> usize {
        let range = range as u32;
        let mut product = u64::from(self.next_u32()) * u64::from(range);
        if (product as u32) < range {
            let threshold = range.wrapping_neg() % range;
            while (product as u32) < threshold {
                product = u64::from(self.next_u32()) * u64::from(range);
            }
        }
        (product >> 32) as usize
    }
}
