//! Hardy–Weinberg exact tests of one locus in one group (docs/methods.md, "Hardy–Weinberg exact
//! tests").
//!
//! Given the allele counts, the conditional probability of a genotype table under
//! Hardy–Weinberg proportions is Levene's (1949) / Haldane's (1954)
//!
//! ```text
//! P({n_uv} | {n_u}) = n! · ∏_u n_u! · 2^H / [ (2n)! · ∏_{u≤v} n_uv! ]      H = Σ_{u<v} n_uv
//! ```
//!
//! computed in logs with a table of ln k! built once per workspace. Every test reports:
//!
//! - `p_value`: Σ P(T) over the tables T with P(T) ≤ P(observed), ties within a relative
//!   tolerance of 1e−7 ([`TIE_TOLERANCE`]) counted in (Wigginton, Cutler & Abecasis 2005);
//! - `p_mid`: Σ_{P(T) < P(obs)} P(T) + ½ Σ_{P(T) = P(obs)} P(T) (the mid-p of Graffelman &
//!   Moreno 2013; the tie convention is ours);
//! - `p_deficit` = Σ_{H(T) ≤ H(obs)} P(T) and `p_excess` = Σ_{H(T) ≥ H(obs)} P(T), one-sided
//!   tests on the number of heterozygotes.
//!
//! Methods, in order of preference:
//!
//! 1. **Two alleles**: the exact distribution of the heterozygote count by the recurrence of
//!    Wigginton et al. (2005), no factorials; exact.
//! 2. **Three or more alleles, few tables**: complete enumeration of the tables with the
//!    observed allele counts (Guo & Thompson 1992), abandoned past
//!    [`TestSettings::enumeration_limit`] search nodes; exact.
//! 3. **Otherwise, Monte Carlo**: shuffle the 2n gene copies and pair them consecutively (an
//!    exact draw from the null distribution), B times; p̂ = (b + 1)/(B + 1), where b counts
//!    draws at least as extreme, with standard error √[p̂(1 − p̂)/B]. Nothing is allocated per
//!    draw.
//!
//! A locus with one allele (monomorphic) or fewer than two typed individuals is untestable and
//! gives `None`, never p = 1.

use popgauge_abi::Seed;
use rand::RngExt;
use rand_chacha::ChaCha8Rng;

/// Relative tolerance within which two table probabilities count as tied.
pub const TIE_TOLERANCE: f64 = 1e-7;

/// Full references, for a step's citations.
pub const CITATIONS: [&str; 5] = [
    "Wigginton JE, Cutler DJ, Abecasis GR (2005) A note on exact tests of Hardy–Weinberg equilibrium. Am J Hum \
Genet 76:887–893.",
    "Guo SW, Thompson EA (1992) Performing the exact test of Hardy–Weinberg proportion for multiple alleles. \
Biometrics 48:361–372.",
    "Levene H (1949) On a matching problem arising in genetics. Ann Math Stat 20:91–94.",
    "Haldane JBS (1954) An exact test for randomness of mating. J Genet 52:631–635.",
    "Graffelman J, Moreno V (2013) The mid p-value in exact tests for Hardy–Weinberg equilibrium. Stat Appl Genet \
Mol Biol 12:433–448.",
];

/// How a p-value was obtained.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum TestMethod {
    /// Exact: the full null distribution was summed.
    Exact,
    /// Monte Carlo estimate from random tables.
    MonteCarlo,
}

impl TestMethod {
    /// The spelling in result tables: `exact` or `monte-carlo`.
    pub fn as_str(self) -> &'static str {
        match self {
            TestMethod::Exact => "exact",
            TestMethod::MonteCarlo => "monte-carlo",
        }
    }
}

/// The outcome of one Hardy–Weinberg test.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct HweTest {
    /// Exact or Monte Carlo.
    pub method: TestMethod,
    /// Two-sided probability-ordered p-value.
    pub p_value: f64,
    /// Mid-p value.
    pub p_mid: f64,
    /// One-sided p-value for a heterozygote deficit.
    pub p_deficit: f64,
    /// One-sided p-value for a heterozygote excess.
    pub p_excess: f64,
    /// Standard error of `p_value` (0 when exact).
    pub standard_error: f64,
    /// Monte Carlo draws B (0 when exact).
    pub draws: u32,
}

/// Settings of the multi-allelic test.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct TestSettings {
    /// Monte Carlo draws B when enumeration is abandoned.
    pub permutations: u32,
    /// Search nodes the complete enumeration may visit before it gives way to Monte Carlo.
    pub enumeration_limit: u64,
}

impl Default for TestSettings {
    fn default() -> Self {
        TestSettings { permutations: 10_000, enumeration_limit: DEFAULT_ENUMERATION_LIMIT }
    }
}

/// Default node budget of the complete enumeration: about the work of a few hundred Monte Carlo
/// draws, so trying enumeration first never costs much.
pub const DEFAULT_ENUMERATION_LIMIT: u64 = 200_000;

/// An observed genotype table with the alleles seen relabelled `0..k`.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct GenotypeTable {
    alleles: usize,
    /// `pairs[u * alleles + v]` for u ≤ v.
    pairs: Vec<u32>,
    copies: Vec<u32>,
    individuals: u32,
    heterozygotes: u32,
}

impl GenotypeTable {
    /// An empty table (call [`GenotypeTable::reset`] before use).
    pub fn new() -> GenotypeTable {
        GenotypeTable::default()
    }

    /// Empties the table for `alleles` alleles, keeping its buffers.
    pub fn reset(&mut self, alleles: usize) {
        self.alleles = alleles;
        self.pairs.clear();
        self.pairs.resize(alleles * alleles, 0);
        self.copies.clear();
        self.copies.resize(alleles, 0);
        self.individuals = 0;
        self.heterozygotes = 0;
    }

    /// Adds one individual with alleles `a` and `b` (each `< alleles`).
    pub fn add(&mut self, a: usize, b: usize) {
        self.add_many(a, b, 1);
    }

    /// Adds `count` individuals with alleles `a` and `b` (each `< alleles`).
    pub fn add_many(&mut self, a: usize, b: usize, count: u32) {
        let (u, v) = if a <= b { (a, b) } else { (b, a) };
        self.pairs[u * self.alleles + v] += count;
        self.copies[a] += count;
        self.copies[b] += count;
        self.individuals += count;
        if u != v {
            self.heterozygotes += count;
        }
    }

    /// Individuals in the table, n.
    pub fn individuals(&self) -> u32 {
        self.individuals
    }

    /// Heterozygous individuals, H.
    pub fn heterozygotes(&self) -> u32 {
        self.heterozygotes
    }

    /// Alleles with at least one copy.
    pub fn alleles_seen(&self) -> usize {
        self.copies.iter().filter(|&&c| c > 0).count()
    }

    fn count(&self, u: usize, v: usize) -> u32 {
        self.pairs[u * self.alleles + v]
    }
}

/// Buffers reused across tests, so that testing many loci allocates only when a larger locus
/// than any before arrives.
#[derive(Debug, Clone, Default)]
pub struct HweWorkspace {
    log_factorials: Vec<f64>,
    heterozygote_probabilities: Vec<f64>,
    copies: Vec<usize>,
    draw: Vec<u32>,
    remaining: Vec<u32>,
    present: Vec<u32>,
}

/// Sums of probability (exact) or counts of draws (Monte Carlo) by how extreme a table is.
#[derive(Debug, Clone, Copy, Default)]
struct Tally {
    total: f64,
    as_or_less_likely: f64,
    less_likely: f64,
    deficit: f64,
    excess: f64,
}

/// Where the observed table sits: its log-probability and heterozygote count.
#[derive(Debug, Clone, Copy)]
struct Observed {
    log_probability: f64,
    heterozygotes: u32,
}

impl Tally {
    fn add(&mut self, weight: f64, log_probability: f64, heterozygotes: u32, observed: Observed) {
        self.total += weight;
        if log_probability <= observed.log_probability + TIE_TOLERANCE.ln_1p() {
            self.as_or_less_likely += weight;
        }
        if log_probability < observed.log_probability + (-TIE_TOLERANCE).ln_1p() {
            self.less_likely += weight;
        }
        if heterozygotes <= observed.heterozygotes {
            self.deficit += weight;
        }
        if heterozygotes >= observed.heterozygotes {
            self.excess += weight;
        }
    }

    fn exact(&self) -> HweTest {
        let clamp = |x: f64| (x / self.total).clamp(0.0, 1.0);
        let ties = self.as_or_less_likely - self.less_likely;
        HweTest {
            method: TestMethod::Exact,
            p_value: clamp(self.as_or_less_likely),
            p_mid: clamp(self.less_likely + ties / 2.0),
            p_deficit: clamp(self.deficit),
            p_excess: clamp(self.excess),
            standard_error: 0.0,
            draws: 0,
        }
    }

    /// Monte Carlo estimates with the observed table counted as one more draw: (b + 1)/(B + 1).
    fn monte_carlo(&self, draws: u32) -> HweTest {
        let b = f64::from(draws);
        let estimate = |x: f64| (x + 1.0) / (b + 1.0);
        let ties = self.as_or_less_likely - self.less_likely;
        let p_value = estimate(self.as_or_less_likely);
        HweTest {
            method: TestMethod::MonteCarlo,
            p_value,
            p_mid: (self.less_likely + (ties + 1.0) / 2.0) / (b + 1.0),
            p_deficit: estimate(self.deficit),
            p_excess: estimate(self.excess),
            standard_error: (p_value * (1.0 - p_value) / b).sqrt(),
            draws,
        }
    }
}

impl HweWorkspace {
    /// An empty workspace.
    pub fn new() -> HweWorkspace {
        HweWorkspace::default()
    }

    /// Tests `table` for Hardy–Weinberg proportions; `None` when it is untestable (fewer than
    /// two alleles seen or fewer than two individuals). `rng` is called only when Monte Carlo
    /// is needed (never with `permutations = 0`, which then gives `None` for a table too large
    /// to enumerate).
    pub fn test(
        &mut self,
        table: &GenotypeTable,
        settings: &TestSettings,
        rng: impl FnOnce() -> ChaCha8Rng,
    ) -> Option<HweTest> {
        if table.individuals < 2 || table.alleles_seen() < 2 {
            return None;
        }
        self.ensure_log_factorials(2 * table.individuals as usize);
        if table.alleles_seen() == 2 {
            return Some(self.biallelic(table));
        }
        let observed = Observed { log_probability: self.log_probability(table), heterozygotes: table.heterozygotes };
        if let Some(tally) = self.enumerate(table, observed, settings.enumeration_limit) {
            return Some(tally.exact());
        }
        if settings.permutations == 0 {
            return None;
        }
        let mut rng = rng();
        Some(self.monte_carlo(table, observed, settings.permutations, &mut rng))
    }

    /// ln P of `table` given its allele counts (Levene 1949; Haldane 1954).
    pub fn log_probability(&mut self, table: &GenotypeTable) -> f64 {
        self.ensure_log_factorials(2 * table.individuals as usize);
        let lf = &self.log_factorials;
        let mut log_p = lf[table.individuals as usize] - lf[2 * table.individuals as usize]
            + f64::from(table.heterozygotes) * std::f64::consts::LN_2;
        log_p += table.copies.iter().map(|&c| lf[c as usize]).sum::<f64>();
        for u in 0..table.alleles {
            for v in u..table.alleles {
                log_p -= lf[table.count(u, v) as usize];
            }
        }
        log_p
    }

    fn ensure_log_factorials(&mut self, up_to: usize) {
        if self.log_factorials.is_empty() {
            self.log_factorials.push(0.0);
        }
        while self.log_factorials.len() <= up_to {
            let k = self.log_factorials.len();
            let previous = self.log_factorials[k - 1];
            self.log_factorials.push(previous + (k as f64).ln());
        }
    }

    /// The two-allele exact test by the recurrence of Wigginton et al. (2005).
    fn biallelic(&mut self, table: &GenotypeTable) -> HweTest {
        self.present.clear();
        self.present.extend(table.copies.iter().copied().filter(|&c| c > 0));
        let n = table.individuals as usize;
        let rare = self.present.iter().copied().min().unwrap_or(0) as usize;
        let probabilities = &mut self.heterozygote_probabilities;
        probabilities.clear();
        probabilities.resize(rare + 1, 0.0);
        let homozygotes_at = |h: usize| {
            let rare_homozygotes = (rare - h) / 2;
            (rare_homozygotes as f64, (n - h - rare_homozygotes) as f64)
        };
        let mut mid = rare * (2 * n - rare) / (2 * n);
        if mid % 2 != rare % 2 {
            mid += 1;
        }
        probabilities[mid] = 1.0;
        let mut h = mid;
        while h >= 2 {
            let (rare_hom, common_hom) = homozygotes_at(h);
            let hf = h as f64;
            probabilities[h - 2] = probabilities[h] * hf * (hf - 1.0) / (4.0 * (rare_hom + 1.0) * (common_hom + 1.0));
            h -= 2;
        }
        let mut h = mid;
        while h + 2 <= rare {
            let (rare_hom, common_hom) = homozygotes_at(h);
            let hf = h as f64;
            probabilities[h + 2] = probabilities[h] * 4.0 * rare_hom * common_hom / ((hf + 2.0) * (hf + 1.0));
            h += 2;
        }
        let observed_heterozygotes = table.heterozygotes as usize;
        let observed = Observed {
            log_probability: probabilities[observed_heterozygotes].ln(),
            heterozygotes: table.heterozygotes,
        };
        let mut tally = Tally::default();
        for (h, &p) in probabilities.iter().enumerate().skip(rare % 2).step_by(2) {
            tally.add(p, p.ln(), h as u32, observed);
        }
        tally.exact()
    }

    /// Complete enumeration; `None` when it would visit more than `limit` nodes.
    fn enumerate(&mut self, table: &GenotypeTable, observed: Observed, limit: u64) -> Option<Tally> {
        self.present.clear();
        self.present.extend(table.copies.iter().copied().filter(|&c| c > 0));
        self.remaining.clear();
        self.remaining.extend_from_slice(&self.present);
        let lf = &self.log_factorials;
        let n = table.individuals as usize;
        let constant = lf[n] - lf[2 * n] + self.present.iter().map(|&c| lf[c as usize]).sum::<f64>();
        let mut search = Enumeration {
            alleles: self.present.len(),
            remaining: &mut self.remaining,
            log_factorials: lf,
            visited: 0,
            limit,
            observed,
            tally: Tally::default(),
        };
        let first_column = 1.min(search.alleles);
        search.visit(0, first_column, constant, 0).then_some(search.tally)
    }

    fn monte_carlo(&mut self, table: &GenotypeTable, observed: Observed, draws: u32, rng: &mut ChaCha8Rng) -> HweTest {
        let k = table.alleles;
        self.copies.clear();
        for (u, &c) in table.copies.iter().enumerate() {
            self.copies.extend(std::iter::repeat_n(u, c as usize));
        }
        self.draw.clear();
        self.draw.resize(k * k, 0);
        let lf = &self.log_factorials;
        let n = table.individuals as usize;
        let constant = lf[n] - lf[2 * n] + table.copies.iter().map(|&c| lf[c as usize]).sum::<f64>();
        let mut tally = Tally::default();
        for _ in 0..draws {
            shuffle(&mut self.copies, rng);
            let mut heterozygotes = 0u32;
            for pair in self.copies.chunks_exact(2) {
                let (u, v) = if pair[0] <= pair[1] { (pair[0], pair[1]) } else { (pair[1], pair[0]) };
                self.draw[u * k + v] += 1;
                heterozygotes += u32::from(u != v);
            }
            let mut log_p = constant + f64::from(heterozygotes) * std::f64::consts::LN_2;
            for count in self.draw.iter_mut() {
                if *count > 1 {
                    log_p -= lf[*count as usize];
                }
                *count = 0;
            }
            tally.add(1.0, log_p, heterozygotes, observed);
        }
        tally.monte_carlo(draws)
    }
}

/// Fisher–Yates shuffle from the step's seeded stream.
fn shuffle(items: &mut [usize], rng: &mut ChaCha8Rng) {
    for i in (1..items.len()).rev() {
        let j = rng.random_range(0..=i);
        items.swap(i, j);
    }
}

/// Depth-first enumeration of symmetric tables with given allele counts, row by row: in row u
/// the off-diagonal counts n_uv (v > u) are chosen, then the homozygote count n_uu takes what
/// is left (which must be even).
struct Enumeration<'a> {
    alleles: usize,
    remaining: &'a mut [u32],
    log_factorials: &'a [f64],
    visited: u64,
    limit: u64,
    observed: Observed,
    tally: Tally,
}

impl Enumeration<'_> {
    /// Visits cell (u, v) (v == alleles means the diagonal of row u); false when the node
    /// budget is exhausted.
    fn visit(&mut self, u: usize, v: usize, log_p: f64, heterozygotes: u32) -> bool {
        self.visited += 1;
        if self.visited > self.limit {
            return false;
        }
        if u == self.alleles {
            self.tally.add(log_p.exp(), log_p, heterozygotes, self.observed);
            return true;
        }
        if v == self.alleles {
            let left = self.remaining[u];
            if left % 2 == 1 {
                return true;
            }
            self.remaining[u] = 0;
            let next_column = (u + 2).min(self.alleles);
            let ok = self.visit(u + 1, next_column, log_p - self.log_factorials[(left / 2) as usize], heterozygotes);
            self.remaining[u] = left;
            return ok;
        }
        let most = self.remaining[u].min(self.remaining[v]);
        for m in 0..=most {
            self.remaining[u] -= m;
            self.remaining[v] -= m;
            let log_next = log_p - self.log_factorials[m as usize] + f64::from(m) * std::f64::consts::LN_2;
            let ok = self.visit(u, v + 1, log_next, heterozygotes + m);
            self.remaining[u] += m;
            self.remaining[v] += m;
            if !ok {
                return false;
            }
        }
        true
    }
}

/// The random stream of one test, named after its group and locus so that a locus's Monte
/// Carlo p-value does not depend on which other loci or groups are tested.
pub fn test_rng(seed: Seed, population: &str, year: i32, locus: &str) -> ChaCha8Rng {
    crate::stats::bootstrap::rng(seed, &format!("hwe/{population}/{year}/{locus}"))
}

#[cfg(test)]
mod tests;
