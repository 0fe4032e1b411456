//! The dosage panel of one group under one rare-allele criterion: for every locus kept, a typed
//! mask and one dosage vector (0, 1 or 2 copies) per retained allele, over the group's
//! individuals in a seeded random order.
//!
//! **Jackknife groups of individuals.** With G groups (at most [`LANES`]), the individual at
//! position k of that order belongs to group k mod G, so every sum over individuals is computed
//! as G interleaved partial sums ("lanes") in one vectorised pass ([`lane_dot`]); leaving group
//! g out is then one subtraction. Because the order is random, the groups are random subsets of
//! the individuals, of sizes differing by at most one.
//!
//! Everything a pair of loci needs that depends on one locus only is computed here once, so the
//! pair loop allocates nothing and touches only these byte vectors.

use popgauge_abi::{AlleleCounts, GenotypeView, Group, LocusIdx, SampleIdx};
use rand::RngExt;
use rand_chacha::ChaCha8Rng;

/// Most jackknife groups of individuals, and so of interleaved partial sums (lanes).
pub const LANES: usize = 16;

/// Index of the "nothing left out" slot in per-deletion arrays of length `LANES + 1`.
pub const FULL: usize = LANES;

/// Partial sums by lane (individual position mod G; lanes from G on stay 0).
pub type LaneSums = [u32; LANES];

/// Lane chunks summed in 16-bit lanes before widening: each adds at most 4 per lane, so
/// 16,000 chunks stay below 65,535.
const CHUNKS_PER_FLUSH: usize = 16_000;

/// Σ f(a[k], b[k]) by lane k mod G, in one pass the compiler vectorises (G is a constant
/// here): products are summed in 16-bit lanes (values ≤ 4 each) and widened every
/// [`CHUNKS_PER_FLUSH`] chunks.
#[inline]
fn lane_sums<const G: usize>(a: &[u8], b: &[u8], product: impl Fn(u8, u8) -> u8) -> LaneSums {
    let mut sums = [0u32; LANES];
    let span = G * CHUNKS_PER_FLUSH;
    for (part_a, part_b) in a.chunks(span).zip(b.chunks(span)) {
        let mut narrow = [0u16; G];
        let (mut chunks_a, mut chunks_b) = (part_a.chunks_exact(G), part_b.chunks_exact(G));
        for (x, y) in (&mut chunks_a).zip(&mut chunks_b) {
            for ((sum, &p), &q) in narrow.iter_mut().zip(x).zip(y) {
                *sum += u16::from(product(p, q));
            }
        }
        for (lane, (&p, &q)) in chunks_a.remainder().iter().zip(chunks_b.remainder()).enumerate() {
            narrow[lane] += u16::from(product(p, q));
        }
        for (sum, part) in sums.iter_mut().zip(narrow) {
            *sum += u32::from(part);
        }
    }
    sums
}

/// The plain sum Σ f(a[k], b[k]) in lane 0 (no jackknife groups), as a vectorised reduction.
#[inline]
fn single_lane(a: &[u8], b: &[u8], product: impl Fn(u8, u8) -> u8) -> LaneSums {
    let mut sums = [0u32; LANES];
    sums[0] = a.iter().zip(b).map(|(&p, &q)| u32::from(product(p, q))).sum();
    sums
}

/// [`lane_sums`] with G = `groups` (2 to [`LANES`], one compiled copy per G; other values give
/// a single lane).
macro_rules! with_groups {
    ($groups:expr, $a:expr, $b:expr, $product:expr; $($g:literal)*) => {
        match $groups {
            $($g => lane_sums::<$g>($a, $b, $product),)*
            _ => single_lane($a, $b, $product),
        }
    };
}

/// Σ a[k]·b[k] by lane k mod `groups`.
#[inline]
pub fn lane_dot(a: &[u8], b: &[u8], groups: usize) -> LaneSums {
    with_groups!(groups, a, b, |p, q| p * q; 2 3 4 5 6 7 8 9 10 11 12 13 14 15 16)
}

/// Σ x[k]²·m[k] by lane k mod `groups`.
#[inline]
pub fn lane_dot_squares(x: &[u8], m: &[u8], groups: usize) -> LaneSums {
    with_groups!(groups, x, m, |p, q| p * p * q; 2 3 4 5 6 7 8 9 10 11 12 13 14 15 16)
}

/// The sum of the lanes.
#[inline]
pub fn lane_total(sums: &LaneSums) -> u32 {
    sums.iter().sum()
}

/// Which alleles are too rare to use (docs/methods.md, "LD-based Ne", "Rare alleles").
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Criterion {
    /// Drop alleles whose frequency in the group at the locus is below this value.
    Pcrit(f64),
    /// Drop only alleles seen once (singletons) in the group at the locus.
    NoSingletons,
}

impl Criterion {
    /// True when an allele seen `count` times among `copies` typed gene copies is kept.
    pub fn keeps(self, count: u32, copies: u32) -> bool {
        match self {
            // A frequency exactly at Pcrit is kept; the tolerance absorbs the rounding of
            // Pcrit · copies (0.02 · 150 is not exactly 3 in binary).
            Criterion::Pcrit(pcrit) => count > 0 && f64::from(count) >= pcrit * f64::from(copies) * (1.0 - 1e-12),
            Criterion::NoSingletons => count >= 2,
        }
    }
}

/// One locus of the panel.
#[derive(Debug, Clone)]
pub struct PanelLocus {
    /// The locus in the view.
    pub view_locus: LocusIdx,
    /// Alleles retained (k′ ≥ 2).
    pub retained: usize,
    /// Index of its first dosage vector in the panel.
    pub first_vector: usize,
    /// Number of dosage vectors (1 for a biallelic locus with both alleles kept, else k′).
    pub vectors: usize,
    /// True when every individual of the group is typed at the locus.
    pub complete: bool,
    /// Chromosome id (an index into the sorted chromosome names), when known.
    pub chromosome: Option<u32>,
}

/// Per-deletion moments of a dosage vector of a complete locus, for the fast pair path.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct VectorMoments {
    /// Σ x over the individuals left.
    pub sum: i64,
    /// S′Σx² − (Σx)² over them (0 when the dosage is constant there).
    pub spread: i64,
}

/// The dosage panel of one group under one criterion.
#[derive(Debug, Clone)]
pub struct Panel {
    /// Individuals in the group (S of the group; per pair S is the number typed at both loci).
    pub samples: usize,
    /// Lanes in use: the jackknife groups G, or 1 when the jackknife is off.
    pub groups: usize,
    /// Jackknife replicates: G, or 0 when the jackknife is off.
    pub replicates: usize,
    /// Individuals per lane.
    pub lane_counts: LaneSums,
    /// Loci with at least two retained alleles.
    pub loci: Vec<PanelLocus>,
    /// Per panel locus, `samples` bytes: 1 where the individual is typed.
    pub masks: Vec<u8>,
    /// Per dosage vector, `samples` bytes: copies of the allele (0 where untyped).
    pub dosages: Vec<u8>,
    /// Per dosage vector, the weight of its allele in the within-pair mean (its frequency p̂ᵤ,
    /// or 1 for the single vector of a biallelic locus).
    pub weights: Vec<f64>,
    /// Per dosage vector: (Σ x, Σ x²) by lane over its own typed individuals.
    pub vector_lanes: Vec<[LaneSums; 2]>,
    /// Per dosage vector: its moments with each lane left out and with none (`FULL`);
    /// meaningful for complete loci only.
    pub vector_moments: Vec<[VectorMoments; LANES + 1]>,
    /// Per panel locus: individuals typed, by lane.
    pub typed_lanes: Vec<LaneSums>,
}

impl Panel {
    /// The typed mask of panel locus `locus`.
    pub fn mask(&self, locus: usize) -> &[u8] {
        &self.masks[locus * self.samples..(locus + 1) * self.samples]
    }

    /// Dosage vector `vector`.
    pub fn dosage(&self, vector: usize) -> &[u8] {
        &self.dosages[vector * self.samples..(vector + 1) * self.samples]
    }

    /// Largest number of dosage vectors at one locus.
    pub fn max_vectors(&self) -> usize {
        self.loci.iter().map(|l| l.vectors).max().unwrap_or(0)
    }

    /// Individuals left when lane `slot` is left out (`FULL`: none left out).
    pub fn samples_without(&self, slot: usize) -> u32 {
        let all = u32::try_from(self.samples).unwrap_or(u32::MAX);
        if slot == FULL { all } else { all - self.lane_counts[slot] }
    }
}

/// What [`build_panel`] needs besides the view.
pub struct PanelRequest<'a> {
    /// The group.
    pub group: &'a Group,
    /// The loci to use (view indices, ascending).
    pub loci: &'a [LocusIdx],
    /// The rare-allele criterion.
    pub criterion: Criterion,
    /// Jackknife groups of individuals wanted (at most [`LANES`], capped at the group size;
    /// 0 or 1: no jackknife over individuals).
    pub groups: usize,
    /// Chromosome id of each view locus (`None` when unknown).
    pub chromosomes: &'a [Option<u32>],
}

/// The individuals of a group in a seeded random order, so that the jackknife groups (position
/// mod G) are random subsets whatever the input order (which often follows sites or
/// families).
pub fn shuffled_samples(group: &Group, rng: &mut ChaCha8Rng) -> Vec<SampleIdx> {
    let mut order = group.samples.clone();
    for position in (1..order.len()).rev() {
        let pick = rng.random_range(0..=position);
        order.swap(position, pick);
    }
    order
}

/// Chromosome ids of the view's loci: indices into the sorted distinct chromosome names.
pub fn chromosome_ids(view: &GenotypeView<'_>) -> Vec<Option<u32>> {
    let mut names: Vec<&str> = (0..view.n_loci()).filter_map(|l| view.locus(l).chromosome.as_deref()).collect();
    names.sort_unstable();
    names.dedup();
    (0..view.n_loci())
        .map(|l| {
            let name = view.locus(l).chromosome.as_deref()?;
            names.binary_search(&name).ok().and_then(|i| u32::try_from(i).ok())
        })
        .collect()
}

/// Builds the panel of one group under one criterion; `order` is the group's individuals in
/// jackknife order ([`shuffled_samples`]).
pub fn build_panel(view: &GenotypeView<'_>, request: &PanelRequest<'_>, order: &[SampleIdx]) -> Panel {
    let samples = order.len();
    let groups = request.groups.min(LANES).min(samples).max(1);
    let lane_counts: LaneSums = std::array::from_fn(|lane| {
        if lane < groups { count_u32(samples / groups + usize::from(lane < samples % groups)) } else { 0 }
    });
    let mut panel = Panel {
        samples,
        groups,
        replicates: if groups >= 2 { groups } else { 0 },
        lane_counts,
        loci: Vec::new(),
        masks: Vec::new(),
        dosages: Vec::new(),
        weights: Vec::new(),
        vector_lanes: Vec::new(),
        vector_moments: Vec::new(),
        typed_lanes: Vec::new(),
    };
    let mut counts = AlleleCounts::default();
    for &locus in request.loci {
        view.allele_counts_into(locus, &request.group.samples, &mut counts);
        let copies = counts.gene_copies();
        let retained: Vec<usize> =
            (1..counts.alleles.len()).filter(|&code| request.criterion.keeps(counts.alleles[code], copies)).collect();
        if retained.len() < 2 {
            continue;
        }
        // A biallelic locus with both alleles kept: the two dosage vectors are complements
        // (x_a = 2 − x_A where typed), so every allele pair gives the same r²; one suffices.
        let all_kept = retained.len() == counts.distinct();
        let codes: &[usize] = if all_kept && retained.len() == 2 { &retained[..1] } else { &retained };
        let weights: Vec<f64> = if codes.len() == 1 {
            vec![1.0]
        } else {
            codes.iter().map(|&code| f64::from(counts.alleles[code]) / f64::from(copies)).collect()
        };
        let complete = counts.typed as usize == samples;
        push_locus(&mut panel, view, order, (locus, codes, &weights));
        panel.loci.push(PanelLocus {
            view_locus: locus,
            retained: retained.len(),
            first_vector: panel.weights.len() - codes.len(),
            vectors: codes.len(),
            complete,
            chromosome: request.chromosomes[locus],
        });
    }
    panel
}

fn count_u32(count: usize) -> u32 {
    u32::try_from(count).unwrap_or(u32::MAX)
}

/// Appends the mask of a locus, one dosage vector per code and their precomputed sums.
fn push_locus(panel: &mut Panel, view: &GenotypeView<'_>, order: &[SampleIdx], locus: (LocusIdx, &[usize], &[f64])) {
    let (locus, codes, weights) = locus;
    let mask: Vec<u8> = order.iter().map(|&s| u8::from(view.genotype(s, locus).is_some())).collect();
    panel.typed_lanes.push(lane_dot(&mask, &mask, panel.groups));
    for (&code, &weight) in codes.iter().zip(weights) {
        let dosage: Vec<u8> = order
            .iter()
            .map(|&s| match view.genotype(s, locus) {
                Some((a, b)) => u8::from(usize::from(a.0) == code) + u8::from(usize::from(b.0) == code),
                None => 0,
            })
            .collect();
        let lanes = [lane_dot(&dosage, &mask, panel.groups), lane_dot_squares(&dosage, &mask, panel.groups)];
        panel.vector_moments.push(deletion_moments(panel, &lanes));
        panel.vector_lanes.push(lanes);
        panel.dosages.extend_from_slice(&dosage);
        panel.weights.push(weight);
    }
    panel.masks.extend_from_slice(&mask);
}

/// The moments of a vector of a complete locus with each lane left out, and with none.
fn deletion_moments(panel: &Panel, lanes: &[LaneSums; 2]) -> [VectorMoments; LANES + 1] {
    let (sum, squares) = (i64::from(lane_total(&lanes[0])), i64::from(lane_total(&lanes[1])));
    std::array::from_fn(|slot| {
        let (left_sum, left_squares) = if slot == FULL {
            (sum, squares)
        } else {
            (sum - i64::from(lanes[0][slot]), squares - i64::from(lanes[1][slot]))
        };
        let n = i64::from(panel.samples_without(slot));
        VectorMoments { sum: left_sum, spread: n * left_squares - left_sum * left_sum }
    })
}
