//! The loop over pairs of loci: Weir's composite r̂² per pair (weighted over allele pairs), and
//! the weighted sums that give r̄², the harmonic-mean S and n′, for all pairs, for the pairs
//! containing each locus (the jackknife over loci) and for all pairs with each group of
//! individuals left out (the jackknife over individuals).
//!
//! # Speed and determinism
//! Dosages and masks are bytes and every per-pair moment is an exact integer sum, so a pair's
//! r̂² does not depend on summation order; r̂² itself comes from one function,
//! [`r2_from_spreads`], shared with the packed biallelic path ([`super::packed`]). The candidate
//! loci (all loci of the step, before any rare-allele criterion) are cut into [`CHUNKS`] row
//! ranges of about equal numbers of pairs ([`ChunkCuts`]), independent of the thread count and
//! of the criterion; rayon runs the chunks on its threads, each chunk sums its pairs in row
//! order (a row's pairs into a row sum, added at the row's end to the totals and to the
//! leave-one-out sums of its first locus; each pair also to those of its second locus), and
//! the chunk results are merged in chunk order. Results are therefore bit-identical
//! for any number of threads, and the packed path, which cuts the same way, reproduces them
//! exactly. The pair loop allocates nothing: each chunk reuses one scratch buffer.

use rayon::prelude::*;

use super::panel::{FULL, LANES, LaneSums, Panel, PanelLocus, lane_dot, lane_dot_squares, lane_total};

/// Number of chunks the pairs are cut into (fixed, so results do not depend on the threads).
pub const CHUNKS: usize = 64;

/// Fewest individuals typed at both loci for a pair to count (r̂ needs S ≥ 2 for the factor
/// S/(S − 1) and a variance).
pub const MIN_PAIR_SAMPLES: u32 = 2;

/// Weighted sums over a set of pairs (docs/methods.md, "LD-based Ne", "Across pairs"): with nᵢⱼ =
/// (k′ᵢ − 1)(k′ⱼ − 1) and wᵢⱼ = nᵢⱼ·Sᵢⱼ², r̄² = Σ w r̂² / Σ w, n′ = Σ n and the harmonic-mean
/// S = Σ n / Σ (n/S).
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Accumulator {
    /// Σ wᵢⱼ r̂²ᵢⱼ.
    pub weighted_r2: f64,
    /// Σ wᵢⱼ.
    pub weight: f64,
    /// Σ nᵢⱼ (n′).
    pub comparisons: f64,
    /// Σ nᵢⱼ/Sᵢⱼ.
    pub comparisons_per_sample: f64,
    /// Pairs summed.
    pub pairs: u64,
}

impl Accumulator {
    fn add(&mut self, r2: f64, samples: f64, comparisons: f64) {
        let weight = comparisons * samples * samples;
        self.weighted_r2 += weight * r2;
        self.weight += weight;
        self.comparisons += comparisons;
        self.comparisons_per_sample += comparisons / samples;
        self.pairs += 1;
    }

    /// Adds one pair already weighted: `weighted_r2` = w·r̂², `weight` = w = n·S², and
    /// `per_sample` = n/S, for n = `comparisons` (the same sums as [`Accumulator::add`]).
    #[inline(always)]
    pub(super) fn add_weighted(&mut self, weighted_r2: f64, weight: f64, comparisons: f64, per_sample: f64) {
        self.weighted_r2 += weighted_r2;
        self.weight += weight;
        self.comparisons += comparisons;
        self.comparisons_per_sample += per_sample;
        self.pairs += 1;
    }

    pub(super) fn merge(&mut self, other: &Accumulator) {
        self.weighted_r2 += other.weighted_r2;
        self.weight += other.weight;
        self.comparisons += other.comparisons;
        self.comparisons_per_sample += other.comparisons_per_sample;
        self.pairs += other.pairs;
    }

    /// These sums without the pairs summed in `part` (a subset of them).
    pub fn without(&self, part: &Accumulator) -> Accumulator {
        Accumulator {
            weighted_r2: self.weighted_r2 - part.weighted_r2,
            weight: self.weight - part.weight,
            comparisons: self.comparisons - part.comparisons,
            comparisons_per_sample: self.comparisons_per_sample - part.comparisons_per_sample,
            pairs: self.pairs - part.pairs,
        }
    }

    /// r̄², `None` without pairs.
    pub fn mean_r2(&self) -> Option<f64> {
        (self.pairs > 0 && self.weight > 0.0).then(|| self.weighted_r2 / self.weight)
    }

    /// The harmonic-mean S weighted by comparisons, `None` without pairs.
    pub fn harmonic_samples(&self) -> Option<f64> {
        (self.pairs > 0 && self.comparisons_per_sample > 0.0).then(|| self.comparisons / self.comparisons_per_sample)
    }
}

/// The sums of one panel's pairs.
#[derive(Debug, Clone, PartialEq)]
pub struct PairSums {
    /// All usable pairs.
    pub total: Accumulator,
    /// Per panel locus: the pairs containing it.
    pub with_locus: Vec<Accumulator>,
    /// Per jackknife group of individuals: all pairs recomputed without that group (empty when
    /// the jackknife over individuals is off).
    pub without_group: Vec<Accumulator>,
    /// Pairs skipped because both loci lie on the same chromosome.
    pub same_chromosome: u64,
    /// Pairs left out because r̂² was undefined (fewer than two individuals typed at both, or no
    /// allele pair variable among them).
    pub undefined: u64,
}

impl PairSums {
    pub(super) fn empty(loci: usize, replicates: usize) -> PairSums {
        PairSums {
            total: Accumulator::default(),
            with_locus: vec![Accumulator::default(); loci],
            without_group: vec![Accumulator::default(); replicates],
            same_chromosome: 0,
            undefined: 0,
        }
    }

    pub(super) fn merge(&mut self, other: &PairSums) {
        self.total.merge(&other.total);
        for (mine, theirs) in self.with_locus.iter_mut().zip(&other.with_locus) {
            mine.merge(theirs);
        }
        for (mine, theirs) in self.without_group.iter_mut().zip(&other.without_group) {
            mine.merge(theirs);
        }
        self.same_chromosome += other.same_chromosome;
        self.undefined += other.undefined;
    }
}

/// The chunk boundaries of the pair loop, as view-locus cut points: chunk c holds the rows
/// whose view locus lies in `[cuts[c-1], cuts[c])` (from 0 and up to `usize::MAX`). They are
/// computed once from the candidate loci, so every criterion and both pair paths cut alike.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ChunkCuts(Vec<usize>);

impl ChunkCuts {
    /// [`CHUNKS`] cuts balancing the pairs of the candidate loci (view indices, ascending).
    pub fn new(candidates: &[usize]) -> ChunkCuts {
        let cuts = row_chunks(candidates.len(), CHUNKS)
            .into_iter()
            .map(|rows| candidates.get(rows.end).copied().unwrap_or(usize::MAX))
            .collect();
        ChunkCuts(cuts)
    }

    /// The row ranges of a panel whose rows have these view loci (ascending), one per chunk
    /// (some possibly empty).
    pub fn row_ranges(&self, view_loci: impl Fn(usize) -> usize, rows: usize) -> Vec<std::ops::Range<usize>> {
        let loci: Vec<usize> = (0..rows).map(view_loci).collect();
        let mut start = 0;
        self.0
            .iter()
            .map(|&cut| {
                let end = loci.partition_point(|&locus| locus < cut);
                let range = start..end;
                start = end;
                range
            })
            .collect()
    }
}

/// Sums every pair of the panel's loci (skipping same-chromosome pairs when asked), on rayon's
/// threads, with a result independent of the thread count.
pub fn sum_pairs(panel: &Panel, skip_same_chromosome: bool, cuts: &ChunkCuts) -> PairSums {
    let chunks = cuts.row_ranges(|row| panel.loci[row].view_locus, panel.loci.len());
    let parts: Vec<PairSums> = chunks
        .par_iter()
        .map(|rows| {
            let mut part = PairSums::empty(panel.loci.len(), panel.replicates);
            let mut scratch = Scratch::new(panel);
            for a in rows.clone() {
                let mut row = Accumulator::default();
                for b in a + 1..panel.loci.len() {
                    if skip_same_chromosome && same_chromosome(&panel.loci[a], &panel.loci[b]) {
                        part.same_chromosome += 1;
                        continue;
                    }
                    add_pair(panel, (a, b), &mut scratch, &mut part, &mut row);
                }
                part.total.merge(&row);
                part.with_locus[a].merge(&row);
            }
            part
        })
        .collect();
    let mut sums = PairSums::empty(panel.loci.len(), panel.replicates);
    for part in &parts {
        sums.merge(part);
    }
    sums
}

fn same_chromosome(a: &PanelLocus, b: &PanelLocus) -> bool {
    matches!((a.chromosome, b.chromosome), (Some(x), Some(y)) if x == y)
}

/// Row ranges of the upper triangle of `loci` × `loci` pairs, at most `chunks` of them, each
/// with about the same number of pairs.
pub fn row_chunks(loci: usize, chunks: usize) -> Vec<std::ops::Range<usize>> {
    let total: usize = loci * loci.saturating_sub(1) / 2;
    let chunks = chunks.max(1);
    let mut ranges = Vec::with_capacity(chunks);
    let (mut start, mut done) = (0usize, 0usize);
    for row in 0..loci {
        done += loci - 1 - row;
        let chunk = ranges.len() + 1;
        if done * chunks >= chunk * total && row + 1 > start {
            ranges.push(start..row + 1);
            start = row + 1;
        }
    }
    if start < loci {
        ranges.push(start..loci);
    }
    ranges
}

/// Lane sums of one pair and the per-deletion weighted r̂² accumulators, reused across pairs.
struct Scratch {
    /// Individuals typed at both loci, by lane.
    joint: LaneSums,
    /// Per vector of the first locus: (Σ x, Σ x²) by lane over individuals typed at both.
    first: Vec<[LaneSums; 2]>,
    /// Per vector of the second locus: (Σ y, Σ y²) by lane over individuals typed at both.
    second: Vec<[LaneSums; 2]>,
    /// Per allele pair: Σ x y by lane.
    cross: Vec<LaneSums>,
    /// Per deletion slot (`FULL` = none): Σ p̂ᵤp̂ᵥ r̂²ᵤᵥ and Σ p̂ᵤp̂ᵥ over defined allele pairs.
    weighted: [f64; LANES + 1],
    weights: [f64; LANES + 1],
}

impl Scratch {
    fn new(panel: &Panel) -> Scratch {
        let vectors = panel.max_vectors();
        Scratch {
            joint: [0; LANES],
            first: vec![[[0; LANES]; 2]; vectors],
            second: vec![[[0; LANES]; 2]; vectors],
            cross: vec![[0; LANES]; vectors * vectors],
            weighted: [0.0; LANES + 1],
            weights: [0.0; LANES + 1],
        }
    }
}

/// Integer moments of one allele pair over a set of individuals typed at both loci.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Moments {
    /// Individuals (S).
    pub samples: i64,
    /// Σ x, Σ x², Σ y, Σ y², Σ x y.
    pub sums: [i64; 5],
}

/// Weir's composite r̂² with the sample-size factor: r̂_W = S/(S − 1) · Pearson r of the
/// dosages (the identity with Burrows' form is derived, not quoted); `None` when S < 2 or either
/// dosage is constant. Computed from exact integer moments: r = (SΣxy − ΣxΣy)/√((SΣx² − (Σx)²)(SΣy²
/// − (Σy)²)); with dosages ≤ 2 every product stays below 4S², exact in `i64` for any realistic S.
pub fn weir_r_squared(moments: Moments) -> Option<f64> {
    let n = moments.samples;
    let [sx, sxx, sy, syy, sxy] = moments.sums;
    let r2 = r2_from_spreads(n as f64, (n * sxy - sx * sy) as f64, (n * sxx - sx * sx) as f64, (n * syy - sy * sy) as f64);
    (!r2.is_nan()).then_some(r2)
}

/// r̂²_W from S and the exact integer quantities C = SΣxy − ΣxΣy, Vx = SΣx² − (Σx)² and
/// Vy = SΣy² − (Σy)² (each below 4S², so exact as `f64` for S below 4·10⁷):
/// C²·S²/(Vx·Vy·(S − 1)²), with one division. NaN when undefined (S < 2 or a spread ≤ 0).
/// Both pair paths call this one function, so they agree to the last bit.
#[inline(always)]
pub fn r2_from_spreads(samples: f64, covariance: f64, spread_x: f64, spread_y: f64) -> f64 {
    let defined = samples >= 2.0 && spread_x > 0.0 && spread_y > 0.0;
    let less = samples - 1.0;
    let r2 = (covariance * covariance) * (samples * samples) / ((spread_x * spread_y) * (less * less));
    if defined { r2 } else { f64::NAN }
}

/// The slots evaluated for a pair: `FULL`, then each jackknife group.
fn slots(panel: &Panel) -> impl Iterator<Item = usize> {
    std::iter::once(FULL).chain(0..panel.replicates)
}

/// Pair of two complete loci: per-vector moments come from the panel; only Σ x y is summed.
fn complete_pair(panel: &Panel, a: &PanelLocus, b: &PanelLocus, scratch: &mut Scratch) {
    for u in 0..a.vectors {
        let (vector_u, weight_u) = (a.first_vector + u, panel.weights[a.first_vector + u]);
        let x = panel.dosage(vector_u);
        for v in 0..b.vectors {
            let vector_v = b.first_vector + v;
            let cross = lane_dot(x, panel.dosage(vector_v), panel.groups);
            let cross_total = i64::from(lane_total(&cross));
            let weight = weight_u * panel.weights[vector_v];
            for slot in slots(panel) {
                let (mu, mv) = (panel.vector_moments[vector_u][slot], panel.vector_moments[vector_v][slot]);
                let n = i64::from(panel.samples_without(slot));
                let sxy = if slot == FULL { cross_total } else { cross_total - i64::from(cross[slot]) };
                let covariance = (n * sxy - mu.sum * mv.sum) as f64;
                let r2 = r2_from_spreads(n as f64, covariance, mu.spread as f64, mv.spread as f64);
                if r2.is_nan() {
                    continue;
                }
                scratch.weighted[slot] += weight * r2;
                scratch.weights[slot] += weight;
            }
        }
    }
}

/// Pair with missing data at one or both loci: every moment is summed over the individuals
/// typed at both.
fn general_pair(panel: &Panel, (a, b): (usize, usize), scratch: &mut Scratch) {
    fill_lane_sums(panel, a, b, scratch);
    let (la, lb) = (&panel.loci[a], &panel.loci[b]);
    let joint_total = i64::from(lane_total(&scratch.joint));
    for u in 0..la.vectors {
        let x = scratch.first[u];
        let x_total = [i64::from(lane_total(&x[0])), i64::from(lane_total(&x[1]))];
        for v in 0..lb.vectors {
            let y = scratch.second[v];
            let y_total = [i64::from(lane_total(&y[0])), i64::from(lane_total(&y[1]))];
            let cross = scratch.cross[u * lb.vectors + v];
            let cross_total = i64::from(lane_total(&cross));
            let weight = panel.weights[la.first_vector + u] * panel.weights[lb.first_vector + v];
            for slot in slots(panel) {
                let minus = |lanes: &LaneSums| if slot == FULL { 0 } else { i64::from(lanes[slot]) };
                let moments = Moments {
                    samples: joint_total - minus(&scratch.joint),
                    sums: [
                        x_total[0] - minus(&x[0]),
                        x_total[1] - minus(&x[1]),
                        y_total[0] - minus(&y[0]),
                        y_total[1] - minus(&y[1]),
                        cross_total - minus(&cross),
                    ],
                };
                if let Some(r2) = weir_r_squared(moments) {
                    scratch.weighted[slot] += weight * r2;
                    scratch.weights[slot] += weight;
                }
            }
        }
    }
}

/// The lane sums of pair (a, b) over the individuals typed at both loci; a complete locus
/// lends the other its precomputed sums.
fn fill_lane_sums(panel: &Panel, a: usize, b: usize, scratch: &mut Scratch) {
    let (la, lb) = (&panel.loci[a], &panel.loci[b]);
    let (mask_a, mask_b) = (panel.mask(a), panel.mask(b));
    scratch.joint = match (la.complete, lb.complete) {
        (true, _) => panel.typed_lanes[b],
        (false, true) => panel.typed_lanes[a],
        (false, false) => lane_dot(mask_a, mask_b, panel.groups),
    };
    for u in 0..la.vectors {
        let vector = la.first_vector + u;
        scratch.first[u] = if lb.complete {
            panel.vector_lanes[vector]
        } else {
            let x = panel.dosage(vector);
            [lane_dot(x, mask_b, panel.groups), lane_dot_squares(x, mask_b, panel.groups)]
        };
    }
    for v in 0..lb.vectors {
        let vector = lb.first_vector + v;
        scratch.second[v] = if la.complete {
            panel.vector_lanes[vector]
        } else {
            let y = panel.dosage(vector);
            [lane_dot(y, mask_a, panel.groups), lane_dot_squares(y, mask_a, panel.groups)]
        };
    }
    for u in 0..la.vectors {
        let x = panel.dosage(la.first_vector + u);
        for v in 0..lb.vectors {
            scratch.cross[u * lb.vectors + v] = lane_dot(x, panel.dosage(lb.first_vector + v), panel.groups);
        }
    }
}

/// Individuals typed at both loci of pair (a, b) with lane `slot` left out.
fn pair_samples(panel: &Panel, a: &PanelLocus, b: &PanelLocus, joint: &LaneSums, slot: usize) -> u32 {
    if a.complete && b.complete {
        return panel.samples_without(slot);
    }
    let total = lane_total(joint);
    if slot == FULL { total } else { total - joint[slot] }
}

/// Adds pair (a, b): its full-sample values to the row's sums and to locus b's, its
/// per-deletion values to the jackknife sums.
fn add_pair(panel: &Panel, (a, b): (usize, usize), scratch: &mut Scratch, part: &mut PairSums, row: &mut Accumulator) {
    scratch.weighted = [0.0; LANES + 1];
    scratch.weights = [0.0; LANES + 1];
    let (la, lb) = (&panel.loci[a], &panel.loci[b]);
    if la.complete && lb.complete {
        complete_pair(panel, la, lb, scratch);
    } else {
        general_pair(panel, (a, b), scratch);
    }
    let comparisons = ((la.retained - 1) * (lb.retained - 1)) as f64;
    let pair_value = |slot: usize| {
        let samples = pair_samples(panel, la, lb, &scratch.joint, slot);
        (scratch.weights[slot] > 0.0 && samples >= MIN_PAIR_SAMPLES)
            .then(|| (scratch.weighted[slot] / scratch.weights[slot], f64::from(samples)))
    };
    let Some((r2, samples)) = pair_value(FULL) else {
        part.undefined += 1;
        return;
    };
    row.add(r2, samples, comparisons);
    part.with_locus[b].add(r2, samples, comparisons);
    for slot in 0..panel.replicates {
        if let Some((r2, samples)) = pair_value(slot) {
            part.without_group[slot].add(r2, samples, comparisons);
        }
    }
}
