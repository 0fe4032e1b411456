//! Permutation tests: an in-place shuffle drawn from the step's seeded stream, the complete
//! enumeration of all orders of a few labels, the tally of arrangements at least as extreme as
//! the observed statistic, and the Mantel (1967) test of association between two distance
//! matrices.
//!
//! # Convention
//! *Random* test: with B defined replicates T*, of which `as_extreme` satisfy T* ≥ T
//! (one-sided, large values extreme), the p-value is p = (1 + as_extreme)/(B + 1): the observed
//! arrangement counts as one of the equally likely arrangements under the null, so p is never 0
//! and never below 1/(B + 1) (docs/methods.md, "Conventions").
//!
//! *Exact* test: when n labels are permuted freely and their n! distinct orders are no more than
//! the replicates asked for, every order is evaluated once instead ([`label_permutation_test`];
//! the permutation distribution is then known exactly, not estimated; Good 2005,
//! *Permutation, Parametric and Bootstrap Tests of Hypotheses*, 3rd ed., Springer). With B defined orders (the observed one
//! among them), p = as_extreme/B, the share of orders whose statistic is at least as extreme,
//! the observed order included; the smallest attainable p is 1/B (1/24 for four labels).
//! Drawing 9,999 random orders of four labels would only estimate these 24 values and report a
//! precision the test cannot have.
//!
//! Either way a replicate whose statistic is undefined (`None`, or not finite) is skipped and
//! not counted in B. T* counts as "at least as extreme" when
//! T* ≥ T − [`TIE_TOLERANCE`]·max(1, |T|), so arrangements whose statistic equals the observed
//! one up to rounding count as ties, whatever order the floating-point sums took.
//!
//! # Allocation
//! [`permutation_test`] shuffles the caller's label slice in place and hands it to the
//! statistic, so B replicates allocate nothing. Each shuffle is a full Fisher–Yates shuffle, which
//! gives a uniformly random arrangement whatever the starting order, so the slice is not reset
//! between replicates.
//!
//! # Citations
//! Mantel N (1967) The detection of disease clustering and a generalized regression approach.
//! *Cancer Res* 27:209–220. Heap BR (1963) Permutations by interchanges. *The Computer Journal*
//! 6:293–294. Fisher–Yates shuffle as in Knuth DE (1997) *The Art of Computer
//! Programming* vol. 2, 3rd ed., §3.4.2 Algorithm P.

use rand::RngExt;
use rand_chacha::ChaCha8Rng;

/// The full reference of the Mantel test, for a step's citations.
pub const MANTEL_1967: &str = "Mantel N (1967) The detection of disease clustering and a generalized regression \
approach. Cancer Research 27:209–220.";

/// Relative tolerance under which a replicate's statistic ties with the observed one.
pub const TIE_TOLERANCE: f64 = 1e-10;

/// How the arrangements of a permutation test were chosen.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Enumeration {
    /// Every distinct order once, the observed one included.
    Exact,
    /// Orders drawn at random from the seeded stream.
    Random,
}

impl Enumeration {
    /// The word in the tables: `exact` or `random`.
    pub fn as_str(self) -> &'static str {
        match self {
            Enumeration::Exact => "exact",
            Enumeration::Random => "random",
        }
    }
}

/// The outcome of a permutation test.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PermutationOutcome {
    /// The observed statistic T.
    pub observed: f64,
    /// Arrangements evaluated with a defined statistic (B): random replicates, or every order
    /// (the observed one included) of an exact test.
    pub replicates: usize,
    /// Arrangements with T* ≥ T (ties included).
    pub as_extreme: usize,
    /// Whether every order was evaluated or a random sample of them.
    pub enumeration: Enumeration,
}

impl PermutationOutcome {
    fn new(observed: f64, enumeration: Enumeration) -> PermutationOutcome {
        PermutationOutcome { observed, replicates: 0, as_extreme: 0, enumeration }
    }

    /// Random: p = (1 + as_extreme)/(B + 1); exact: p = as_extreme/B (module doc).
    pub fn p_value(&self) -> f64 {
        match self.enumeration {
            Enumeration::Random => (1.0 + self.as_extreme as f64) / (self.replicates as f64 + 1.0),
            Enumeration::Exact => self.as_extreme as f64 / self.replicates as f64,
        }
    }

    /// The smallest p the test can give: 1/(B + 1) for a random test, 1/B for an exact one.
    pub fn smallest_p_value(&self) -> f64 {
        match self.enumeration {
            Enumeration::Random => 1.0 / (self.replicates as f64 + 1.0),
            Enumeration::Exact => 1.0 / self.replicates as f64,
        }
    }

    /// Counts one replicate's statistic; an undefined or non-finite one is skipped.
    fn tally(&mut self, value: Option<f64>) {
        let Some(value) = value.filter(|v| v.is_finite()) else { return };
        self.replicates += 1;
        if at_least_as_extreme(value, self.observed) {
            self.as_extreme += 1;
        }
    }
}

/// Shuffles `items` in place (Fisher–Yates), drawing only from `rng`. Written here rather than
/// taken from a library so that results depend on the seed alone, not on a library's choice of
/// shuffling algorithm.
pub fn shuffle<T>(items: &mut [T], rng: &mut ChaCha8Rng) {
    for last in (1..items.len()).rev() {
        let other = rng.random_range(0..=last);
        items.swap(last, other);
    }
}

/// True when `replicate` is at least as large as `observed` (ties within [`TIE_TOLERANCE`]).
pub fn at_least_as_extreme(replicate: f64, observed: f64) -> bool {
    replicate >= observed - TIE_TOLERANCE * observed.abs().max(1.0)
}

/// Runs `replicates` permutations: each shuffles `labels` in place and passes the arrangement
/// to `statistic` (`None` = undefined, skipped). `observed` is the statistic of the data as
/// they are. Returns `None` when `observed` is not finite or `replicates` is 0.
pub fn permutation_test<T>(
    labels: &mut [T],
    observed: f64,
    replicates: usize,
    rng: &mut ChaCha8Rng,
    mut statistic: impl FnMut(&[T]) -> Option<f64>,
) -> Option<PermutationOutcome> {
    if !observed.is_finite() || replicates == 0 {
        return None;
    }
    let mut outcome = PermutationOutcome::new(observed, Enumeration::Random);
    for _ in 0..replicates {
        shuffle(labels, rng);
        outcome.tally(statistic(labels));
    }
    Some(outcome)
}

/// The number of distinct orders of `labels` labels, `labels`!; `None` when it exceeds `usize`.
pub fn orders(labels: usize) -> Option<usize> {
    (2..=labels).try_fold(1usize, |product, k| product.checked_mul(k))
}

/// Evaluates `statistic` on every order of `labels` exactly once (Heap's algorithm: each order
/// differs from the previous one by one swap; Heap 1963, *The Computer Journal* 6:293–294, in
/// the iterative form of Sedgewick 1977, *ACM Computing Surveys* 9:137–164), starting with the
/// order given, which is the observed one. p = as_extreme/B over the defined orders (module
/// doc). Leaves `labels` in some order of its items. `None` when `observed` is not finite.
pub fn exhaustive_permutation_test<T>(
    labels: &mut [T],
    observed: f64,
    mut statistic: impl FnMut(&[T]) -> Option<f64>,
) -> Option<PermutationOutcome> {
    if !observed.is_finite() {
        return None;
    }
    let mut outcome = PermutationOutcome::new(observed, Enumeration::Exact);
    outcome.tally(statistic(labels));
    // counters[i] counts the swaps made at level i since level i was last reset.
    let mut counters = vec![0usize; labels.len()];
    let mut level = 1;
    while level < labels.len() {
        if counters[level] < level {
            let other = if level % 2 == 0 { 0 } else { counters[level] };
            labels.swap(other, level);
            outcome.tally(statistic(labels));
            counters[level] += 1;
            level = 1;
        } else {
            counters[level] = 0;
            level += 1;
        }
    }
    Some(outcome)
}

/// A test that permutes `labels` freely: exact over all n! orders when n! is not more than
/// `replicates` ([`exhaustive_permutation_test`]), otherwise `replicates` random orders
/// ([`permutation_test`]). The starting order of `labels` is the observed one. `None` when
/// `observed` is not finite or `replicates` is 0.
pub fn label_permutation_test<T>(
    labels: &mut [T],
    observed: f64,
    replicates: usize,
    rng: &mut ChaCha8Rng,
    statistic: impl FnMut(&[T]) -> Option<f64>,
) -> Option<PermutationOutcome> {
    if replicates == 0 {
        return None;
    }
    match orders(labels.len()) {
        Some(all) if all <= replicates => exhaustive_permutation_test(labels, observed, statistic),
        _ => permutation_test(labels, observed, replicates, rng, statistic),
    }
}

/// A statistic that evaluates many arrangements in one pass over its data (each pass over
/// large data then serves a whole batch of replicates).
pub trait BatchedStatistic<T> {
    /// Arrangements recorded before each evaluation.
    const BATCH: usize;
    /// Keeps what the statistic needs of one arrangement.
    fn record(&mut self, arrangement: &[T]);
    /// Appends the statistic of every arrangement recorded since the last evaluation to
    /// `values`, in recording order (`None` = undefined), and forgets them.
    fn evaluate(&mut self, values: &mut Vec<Option<f64>>);
}

/// [`permutation_test`] with the arrangements handed to `statistic` a batch at a time: the same
/// shuffles drawn from `rng` in the same order, so the same outcome as
/// `permutation_test` with the statistic evaluated one arrangement at a time.
pub fn permutation_test_in_batches<T, S: BatchedStatistic<T>>(
    labels: &mut [T],
    observed: f64,
    replicates: usize,
    rng: &mut ChaCha8Rng,
    statistic: &mut S,
) -> Option<PermutationOutcome> {
    if !observed.is_finite() || replicates == 0 {
        return None;
    }
    let mut outcome = PermutationOutcome::new(observed, Enumeration::Random);
    let mut values = Vec::with_capacity(S::BATCH);
    let mut done = 0;
    while done < replicates {
        let size = S::BATCH.max(1).min(replicates - done);
        for _ in 0..size {
            shuffle(labels, rng);
            statistic.record(labels);
        }
        statistic.evaluate(&mut values);
        for value in values.drain(..) {
            outcome.tally(value);
        }
        done += size;
    }
    Some(outcome)
}

/// A symmetric matrix over `n` objects, row-major, with `NaN` for a missing entry (the diagonal
/// is ignored).
#[derive(Debug, Clone, PartialEq)]
pub struct SymmetricMatrix {
    size: usize,
    values: Vec<f64>,
}

impl SymmetricMatrix {
    /// An `n` × `n` matrix with every entry missing.
    pub fn missing(size: usize) -> SymmetricMatrix {
        SymmetricMatrix { size, values: vec![f64::NAN; size * size] }
    }

    /// Sets entries (i, j) and (j, i).
    pub fn set(&mut self, i: usize, j: usize, value: f64) {
        self.values[i * self.size + j] = value;
        self.values[j * self.size + i] = value;
    }

    /// Entry (i, j); `NaN` when missing.
    pub fn get(&self, i: usize, j: usize) -> f64 {
        self.values[i * self.size + j]
    }

    /// Number of objects.
    pub fn size(&self) -> usize {
        self.size
    }
}

/// The Mantel test of a positive association between `fixed` and `permuted` (same objects, same
/// order): the statistic is Pearson's r over the pairs i < j where both entries are present;
/// each replicate relabels the objects of `permuted` (rows and columns together), so a pair
/// missing in either matrix drops out of that replicate. One-sided: large r is extreme. With n
/// objects and n! ≤ `replicates` every relabelling is evaluated once (exact test), otherwise
/// `replicates` random ones ([`label_permutation_test`]). `None` when the matrices differ in
/// size, fewer than three pairs are present, r is undefined or `replicates` is 0.
pub fn mantel_test(
    fixed: &SymmetricMatrix,
    permuted: &SymmetricMatrix,
    replicates: usize,
    rng: &mut ChaCha8Rng,
) -> Option<PermutationOutcome> {
    if fixed.size() != permuted.size() {
        return None;
    }
    let mut labels: Vec<usize> = (0..fixed.size()).collect();
    let observed = relabelled_correlation(fixed, permuted, &labels)?;
    label_permutation_test(&mut labels, observed, replicates, rng, |order| {
        relabelled_correlation(fixed, permuted, order)
    })
}

/// Pearson's r between `fixed(i, j)` and `permuted(order[i], order[j])` over the pairs i < j
/// where both are present; `None` for fewer than three pairs or zero variance.
pub fn relabelled_correlation(fixed: &SymmetricMatrix, permuted: &SymmetricMatrix, order: &[usize]) -> Option<f64> {
    let pairs = || {
        (0..order.len()).flat_map(move |i| ((i + 1)..order.len()).map(move |j| (i, j))).filter_map(move |(i, j)| {
            let (x, y) = (fixed.get(i, j), permuted.get(order[i], order[j]));
            (x.is_finite() && y.is_finite()).then_some((x, y))
        })
    };
    pearson_correlation(pairs)
}

/// Pearson's r of `(x, y)` pairs (two passes over a re-startable iterator); `None` for fewer
/// than three pairs or zero variance in either variable.
pub fn pearson_correlation<I: Iterator<Item = (f64, f64)>>(pairs: impl Fn() -> I) -> Option<f64> {
    let (count, sum_x, sum_y) = pairs().fold((0usize, 0.0, 0.0), |(n, sx, sy), (x, y)| (n + 1, sx + x, sy + y));
    if count < 3 {
        return None;
    }
    let (mean_x, mean_y) = (sum_x / count as f64, sum_y / count as f64);
    let (sxx, syy, sxy) = pairs().fold((0.0, 0.0, 0.0), |(xx, yy, xy), (x, y)| {
        let (dx, dy) = (x - mean_x, y - mean_y);
        (xx + dx * dx, yy + dy * dy, xy + dx * dy)
    });
    (sxx > 0.0 && syy > 0.0).then(|| sxy / (sxx * syy).sqrt())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::stats::bootstrap::rng;
    use crate::test_support::assert_close;
    use popgauge_abi::Seed;

    /// Common practice: a shuffle is a permutation (same multiset), is reproducible for a seed,
    /// and over many shuffles puts each item in each position about equally often
    /// (4 items × 40 000 shuffles: expected 10 000 per cell, binomial SD ≈ 87; ±500 ≈ 6 SD).
    #[test]
    fn shuffle_is_a_reproducible_uniform_permutation() {
        let mut a: Vec<usize> = (0..10).collect();
        let mut b = a.clone();
        shuffle(&mut a, &mut rng(Seed(7), "test"));
        shuffle(&mut b, &mut rng(Seed(7), "test"));
        assert_eq!(a, b);
        let mut sorted = a.clone();
        sorted.sort_unstable();
        assert_eq!(sorted, (0..10).collect::<Vec<_>>());
        let mut position_counts = [[0usize; 4]; 4];
        let mut stream = rng(Seed(8), "uniform");
        let mut items = [0usize, 1, 2, 3];
        for _ in 0..40_000 {
            shuffle(&mut items, &mut stream);
            for (position, &item) in items.iter().enumerate() {
                position_counts[item][position] += 1;
            }
        }
        for row in position_counts {
            for count in row {
                assert!((9_500..=10_500).contains(&count), "{position_counts:?}");
            }
        }
        let mut empty: [u8; 0] = [];
        shuffle(&mut empty, &mut stream);
    }

    /// Common practice: p = (1 + #{T* ≥ T})/(B + 1). A statistic that is always 1 against
    /// observed 1 ties every time (p = 1); against observed 2 never reaches it (p = 1/(B + 1));
    /// undefined replicates are skipped.
    #[test]
    fn p_value_counts_ties_and_skips_undefined() {
        let mut labels = [0u8, 1, 2];
        let mut stream = rng(Seed(1), "p");
        let always_one = permutation_test(&mut labels, 1.0, 99, &mut stream, |_| Some(1.0)).unwrap();
        assert_eq!((always_one.replicates, always_one.as_extreme), (99, 99));
        assert_eq!(always_one.p_value(), 1.0);
        let never = permutation_test(&mut labels, 2.0, 99, &mut stream, |_| Some(1.0)).unwrap();
        assert_eq!(never.p_value(), 0.01);
        let mut calls = 0;
        let some_undefined = permutation_test(&mut labels, 0.5, 10, &mut stream, |_| {
            calls += 1;
            (calls % 2 == 0).then_some(1.0)
        })
        .unwrap();
        assert_eq!((some_undefined.replicates, some_undefined.as_extreme), (5, 5));
        assert_eq!(permutation_test(&mut labels, 0.5, 0, &mut stream, |_| Some(1.0)), None);
        assert_eq!(permutation_test(&mut labels, f64::NAN, 10, &mut stream, |_| Some(1.0)), None);
        assert!(at_least_as_extreme(0.3 - 1e-15, 0.3));
        assert!(!at_least_as_extreme(0.2999, 0.3));
    }

    /// Hand calculation: x = 1, 2, 3, 4 and y = 2, 4, 5, 9: means 2.5 and 5,
    /// Sxy = (−1.5)(−3) + (−0.5)(−1) + (0.5)(0) + (1.5)(4) = 11, Sxx = 5, Syy = 26,
    /// r = 11/√130 = 0.964764.
    #[test]
    fn pearson_correlation_by_hand() {
        let data = [(1.0, 2.0), (2.0, 4.0), (3.0, 5.0), (4.0, 9.0)];
        assert_close(pearson_correlation(|| data.iter().copied()).unwrap(), 11.0 / 130f64.sqrt(), 1e-12);
        assert_close(pearson_correlation(|| data.iter().copied()).unwrap(), 0.964764, 1e-6);
        assert_eq!(pearson_correlation(|| data[..2].iter().copied()), None);
        let flat = [(1.0, 1.0), (2.0, 1.0), (3.0, 1.0)];
        assert_eq!(pearson_correlation(|| flat.iter().copied()), None);
    }

    /// Mantel (1967): with six objects at irregular positions on a line, a matrix that is a
    /// linear function of their distances has r = 1, and only the identity among the
    /// 6! = 720 arrangements reaches it (no other relabelling preserves those distances), so
    /// p = 1/720 plus the few arrangements with r close to 1 (all 720 are evaluated, since
    /// 720 ≤ 9999 asked). The same matrix with its objects relabelled by a fixed shuffle shows
    /// no association (r < 0.5, p > 0.1).
    #[test]
    fn mantel_detects_structure_and_not_its_absence() {
        let positions: [f64; 6] = [0.0, 1.0, 2.5, 4.0, 7.0, 11.0];
        let n = positions.len();
        let mut distance = SymmetricMatrix::missing(n);
        let mut related = SymmetricMatrix::missing(n);
        for i in 0..n {
            for j in (i + 1)..n {
                let d = (positions[i] - positions[j]).abs();
                distance.set(i, j, d);
                related.set(i, j, 0.01 + 0.02 * d);
            }
        }
        let structured = mantel_test(&distance, &related, 9999, &mut rng(Seed(3), "mantel")).unwrap();
        assert_close(structured.observed, 1.0, 1e-12);
        assert!(structured.p_value() < 0.02, "{structured:?}");
        // Relabel the genetic matrix: object i takes the row of shuffled[i].
        let shuffled = [3usize, 5, 0, 4, 1, 2];
        let mut unrelated = SymmetricMatrix::missing(n);
        for i in 0..n {
            for j in (i + 1)..n {
                unrelated.set(i, j, related.get(shuffled[i], shuffled[j]));
            }
        }
        let random = mantel_test(&distance, &unrelated, 9999, &mut rng(Seed(3), "mantel")).unwrap();
        assert!(random.observed < 0.5, "{random:?}");
        assert!(random.p_value() > 0.1, "{random:?}");
    }

    /// Complete enumeration (Heap 1963): four labels give each of the 4! = 24 orders exactly
    /// once, the observed order first, when 24 or more permutations are asked. p = as_extreme/24
    /// equals the share counted by brute force over the 24 orders (four nested loops, the
    /// observed order included), so p is a whole number of 24ths, and the smallest attainable p
    /// is 1/24 (common practice). 23 asked, or eight labels (8! = 40,320) with 999 asked, take
    /// the random path: p_min = 1/(B + 1).
    #[test]
    fn few_labels_are_enumerated_exactly() {
        let weight = |order: &[usize]| -> Option<f64> {
            Some(order.iter().enumerate().map(|(i, &l)| ((i + 1) * (l * l + 1)) as f64).sum())
        };
        let start = [2usize, 0, 3, 1];
        let observed = weight(&start).unwrap();
        let mut seen = std::collections::BTreeSet::new();
        let mut visited_first = None;
        let mut labels = start;
        let outcome = label_permutation_test(&mut labels, observed, 9999, &mut rng(Seed(1), "exact"), |order| {
            visited_first.get_or_insert_with(|| order.to_vec());
            seen.insert(order.to_vec());
            weight(order)
        })
        .unwrap();
        assert_eq!(visited_first, Some(start.to_vec()));
        assert_eq!(seen.len(), 24);
        assert_eq!((outcome.enumeration, outcome.replicates), (Enumeration::Exact, 24));
        let mut as_extreme = 0;
        for a in 0..4 {
            for b in (0..4).filter(|&b| b != a) {
                for c in (0..4).filter(|&c| c != a && c != b) {
                    let d = 6 - a - b - c;
                    as_extreme += usize::from(weight(&[a, b, c, d]).unwrap() >= observed);
                }
            }
        }
        assert_eq!(outcome.as_extreme, as_extreme);
        assert!(as_extreme > 1 && as_extreme < 24, "{as_extreme}: the observed order is neither extreme");
        assert_eq!(outcome.p_value(), as_extreme as f64 / 24.0);
        assert_eq!(outcome.smallest_p_value(), 1.0 / 24.0);
        assert_eq!(Enumeration::Exact.as_str(), "exact");

        let mut labels = start;
        let sampled = label_permutation_test(&mut labels, observed, 23, &mut rng(Seed(1), "r"), weight).unwrap();
        assert_eq!((sampled.enumeration, sampled.replicates), (Enumeration::Random, 23));
        let mut eight: Vec<usize> = (0..8).collect();
        let observed = weight(&eight).unwrap();
        let random = label_permutation_test(&mut eight, observed, 999, &mut rng(Seed(1), "r"), weight).unwrap();
        assert_eq!((random.enumeration, random.replicates), (Enumeration::Random, 999));
        assert_eq!(random.smallest_p_value(), 1.0 / 1000.0);
        assert_eq!(Enumeration::Random.as_str(), "random");
        assert_eq!((orders(4), orders(8), orders(0)), (Some(24), Some(40_320), Some(1)));
        assert_eq!(orders(30), None, "30! overflows");
        assert_eq!(label_permutation_test(&mut labels, observed, 0, &mut rng(Seed(1), "r"), weight), None);
    }

    /// Mantel (1967) over four objects: 24 relabellings, all evaluated when 9999 are asked, so
    /// p is a whole number of 24ths and p_min = 1/24; over eight objects with 999 asked the
    /// relabellings are drawn at random (8! = 40,320 > 999).
    #[test]
    fn mantel_test_is_exact_for_four_objects() {
        let matrices = |n: usize| {
            let positions: Vec<f64> = (0..n).map(|i| (i * i) as f64 + 0.5 * i as f64).collect();
            let (mut distance, mut related) = (SymmetricMatrix::missing(n), SymmetricMatrix::missing(n));
            for i in 0..n {
                for j in (i + 1)..n {
                    let d = (positions[i] - positions[j]).abs();
                    distance.set(i, j, d);
                    related.set(i, j, (d + (i * j % 3) as f64).ln());
                }
            }
            (distance, related)
        };
        let (distance, related) = matrices(4);
        let four = mantel_test(&distance, &related, 9999, &mut rng(Seed(2), "mantel")).unwrap();
        assert_eq!((four.enumeration, four.replicates), (Enumeration::Exact, 24));
        let in_24ths = four.p_value() * 24.0;
        assert!((in_24ths - in_24ths.round()).abs() < 1e-9, "p = {}", four.p_value());
        assert_eq!(four.p_value(), four.as_extreme as f64 / 24.0);
        assert_eq!(four.smallest_p_value(), 1.0 / 24.0);
        let (distance, related) = matrices(8);
        let eight = mantel_test(&distance, &related, 999, &mut rng(Seed(2), "mantel")).unwrap();
        assert_eq!((eight.enumeration, eight.replicates), (Enumeration::Random, 999));
        assert_eq!(eight.smallest_p_value(), 1.0 / 1000.0);
    }

    /// Module doc: a pair missing in either matrix drops out; fewer than three pairs → `None`.
    #[test]
    fn mantel_skips_missing_pairs() {
        let mut fixed = SymmetricMatrix::missing(3);
        let mut other = SymmetricMatrix::missing(3);
        fixed.set(0, 1, 1.0);
        fixed.set(0, 2, 2.0);
        fixed.set(1, 2, 3.0);
        other.set(0, 1, 1.0);
        other.set(0, 2, 2.0);
        assert_eq!(relabelled_correlation(&fixed, &other, &[0, 1, 2]), None);
        other.set(1, 2, 2.5);
        assert!(relabelled_correlation(&fixed, &other, &[0, 1, 2]).is_some());
        assert_eq!(mantel_test(&fixed, &SymmetricMatrix::missing(4), 10, &mut rng(Seed(1), "m")), None);
    }

    /// A statistic of an arrangement (a weighted sum of the first labels, undefined for some
    /// arrangements), evaluated in batches of 7.
    struct Weighted {
        recorded: Vec<Vec<u32>>,
    }

    fn weighted(arrangement: &[u32]) -> Option<f64> {
        let value: f64 = arrangement.iter().take(5).enumerate().map(|(i, &l)| (i as f64 + 0.5) * f64::from(l)).sum();
        (arrangement[0] != 3).then_some(value)
    }

    impl BatchedStatistic<u32> for Weighted {
        const BATCH: usize = 7;
        fn record(&mut self, arrangement: &[u32]) {
            self.recorded.push(arrangement.to_vec());
        }
        fn evaluate(&mut self, values: &mut Vec<Option<f64>>) {
            assert!(self.recorded.len() <= Self::BATCH);
            values.extend(self.recorded.drain(..).map(|a| weighted(&a)));
        }
    }

    /// Common practice: batching changes neither the draws nor their order, so the outcome
    /// equals the one-at-a-time test's (100 replicates: 14 full batches and one of 2; and 0
    /// replicates or an undefined observed value give no test).
    #[test]
    fn batches_give_the_same_outcome() {
        let start: Vec<u32> = (0..12).collect();
        let observed = weighted(&start).unwrap();
        for replicates in [0, 1, 7, 100] {
            let mut one_at_a_time = start.clone();
            let expected = permutation_test(&mut one_at_a_time, observed, replicates, &mut rng(Seed(3), "t"), weighted);
            let mut batched = start.clone();
            let mut statistic = Weighted { recorded: Vec::new() };
            let outcome =
                permutation_test_in_batches(&mut batched, observed, replicates, &mut rng(Seed(3), "t"), &mut statistic);
            assert_eq!(outcome, expected, "{replicates} replicates");
            assert_eq!(batched, one_at_a_time);
        }
        let mut labels = start.clone();
        let mut statistic = Weighted { recorded: Vec::new() };
        assert_eq!(
            permutation_test_in_batches(&mut labels, f64::NAN, 10, &mut rng(Seed(3), "t"), &mut statistic),
            None
        );
    }
}
