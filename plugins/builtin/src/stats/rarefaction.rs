//! Allelic richness and private allelic richness by rarefaction (docs/methods.md, "Allelic
//! richness"; docs/methods.md, "Private allelic richness").
//!
//! At one locus, a group with *N* typed gene copies of which *Nᵤ* are allele *u* is rarefied to
//! a common number of copies *g* ≤ *N* (Hurlbert 1971; El Mousadik & Petit 1996):
//!
//! ```text
//! A(g) = Σᵤ [1 − Qᵤ],   Qᵤ = C(N − Nᵤ, g) / C(N, g) = ∏_{m=0}^{g−1} (N − Nᵤ − m)/(N − m)
//! ```
//!
//! Qᵤ, the chance that *g* copies drawn without replacement miss allele *u*, is computed as
//! that product of ratios, never with factorials, so nothing overflows; Qᵤ = 0 when
//! N − Nᵤ < g. Identities (derived from the definition): A(N) = the number of alleles seen, and
//! A(2) = 1 + N/(N − 1)·(1 − Σp̂²), one plus the unbiased expected heterozygosity.
//!
//! Private allelic richness of group *j* among the groups compared (Kalinowski 2004), all
//! rarefied to the same *g*:
//!
//! ```text
//! π_j(g) = Σᵤ [ (1 − Q_uj) · ∏_{j′≠j} Q_uj′ ]
//! ```
//!
//! the expected number of alleles in *g* copies from group *j* that are absent from *g* copies
//! of every other group. Which groups are compared is the caller's choice and must be stated
//! with the results.
//!
//! Hurlbert SH (1971) The nonconcept of species diversity: a critique and alternative
//! parameters. *Ecology* 52:577–586. El Mousadik A, Petit RJ (1996) *Theor Appl Genet*
//! 92:832–839. Kalinowski ST (2004) Counting alleles with rarefaction: private alleles and
//! hierarchical sampling designs. *Conserv Genet* 5:539–543.

/// Full references of the rarefaction estimators, for a step's citations.
pub const CITATIONS: [&str; 3] = [
    "Hurlbert SH (1971) The nonconcept of species diversity: a critique and alternative parameters. Ecology \
52:577–586.",
    "El Mousadik A, Petit RJ (1996) High level of genetic differentiation for allelic richness among populations \
of the argan tree [Argania spinosa (L.) Skeels] endemic to Morocco. Theor Appl Genet 92:832–839.",
    "Kalinowski ST (2004) Counting alleles with rarefaction: private alleles and hierarchical sampling designs. \
Conserv Genet 5:539–543.",
];

/// Probability that `size` copies drawn without replacement from `total` copies, `count` of
/// which are one allele, contain none of it: C(total − count, size)/C(total, size), as a product.
/// Requires `count ≤ total` and `size ≤ total`; 0 when fewer than `size` copies are not the
/// allele.
pub fn absence_probability(total: u32, count: u32, size: u32) -> f64 {
    let others = total.saturating_sub(count);
    if others < size {
        return 0.0;
    }
    (0..size).map(|m| f64::from(others - m) / f64::from(total - m)).product()
}

/// Allelic richness A(g) of one group at one locus from its allele copy counts (zeros allowed,
/// e.g. index 0 of [`popgauge_abi::AlleleCounts::alleles`]); `None` when `size` is 0 or exceeds
/// the copies typed.
pub fn allelic_richness(counts: &[u32], size: u32) -> Option<f64> {
    let total: u32 = counts.iter().sum();
    if size == 0 || size > total {
        return None;
    }
    Some(counts.iter().filter(|&&c| c > 0).map(|&c| 1.0 - absence_probability(total, c, size)).sum())
}

/// Rarefied richness of one group at one locus among the groups compared.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RarefiedRichness {
    /// Allelic richness A(g).
    pub richness: f64,
    /// Private allelic richness π(g) relative to the other groups compared.
    pub private_richness: f64,
}

/// A(g) and π(g) of every group at one locus. `groups[j][u]` is the number of copies of allele
/// code `u` in group `j` (all groups use the same coding; a code beyond a group's slice counts
/// as absent there). `None` when `size` is 0 or a group has fewer than `size` copies.
pub fn rarefy_locus(groups: &[&[u32]], size: u32) -> Option<Vec<RarefiedRichness>> {
    let totals: Vec<u32> = groups.iter().map(|g| g.iter().sum()).collect();
    if size == 0 || totals.iter().any(|&t| t < size) {
        return None;
    }
    let codes = groups.iter().map(|g| g.len()).max().unwrap_or(0);
    // absence[u * r + j] = Q_uj.
    let r = groups.len();
    let mut absence = vec![1.0; codes * r];
    for (j, counts) in groups.iter().enumerate() {
        for (u, &count) in counts.iter().enumerate() {
            absence[u * r + j] = absence_probability(totals[j], count, size);
        }
    }
    let mut result = vec![RarefiedRichness { richness: 0.0, private_richness: 0.0 }; r];
    for row in absence.chunks_exact(r) {
        for (j, out) in result.iter_mut().enumerate() {
            let present = 1.0 - row[j];
            if present == 0.0 {
                continue;
            }
            let absent_elsewhere: f64 = row.iter().enumerate().filter(|&(k, _)| k != j).map(|(_, q)| q).product();
            out.richness += present;
            out.private_richness += present * absent_elsewhere;
        }
    }
    Some(result)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::test_support::assert_close;

    /// Computed from the rarefaction formula (module documentation), confirmed independently with
    /// scipy 1.17.1 `scipy.special.comb(exact=True)` by tests/reference/rarefaction_reference.py:
    /// counts (5, 3, 1, 1) give A(2) = 1.711111, A(4) = 2.609524, A(10) = 4.
    #[test]
    fn rarefied_richness_of_counts_5_3_1_1() {
        let counts = [5, 3, 1, 1];
        assert_close(allelic_richness(&counts, 2).unwrap(), 1.711111, 1e-6);
        assert_close(allelic_richness(&counts, 4).unwrap(), 2.609524, 1e-6);
        assert_close(allelic_richness(&counts, 10).unwrap(), 4.0, 1e-12);
        assert_eq!(allelic_richness(&counts, 11), None);
        assert_eq!(allelic_richness(&counts, 0), None);
    }

    /// Identities derived from the definition: A(N) = the number of alleles observed, and
    /// A(2) = 1 + the unbiased He (Nei 1978) of the heterozygosity module, on several loci including a
    /// monomorphic one (A = 1 at every g). By hand for (5, 3, 1, 1): Σp² = 0.36,
    /// He = 10/9 · 0.64 = 0.711111.
    #[test]
    fn identities_with_allele_count_and_he() {
        use popgauge_abi::AlleleCounts;
        for counts in [vec![0, 5, 3, 1, 1], vec![0, 7, 0, 12, 1], vec![0, 40, 2], vec![0, 10]] {
            let total: u32 = counts.iter().sum();
            let seen = counts.iter().filter(|&&c| c > 0).count() as f64;
            assert_close(allelic_richness(&counts, total).unwrap(), seen, 1e-12);
            let as_counts = AlleleCounts {
                alleles: counts.clone(),
                heterozygous_carriers: vec![],
                typed: total / 2,
                heterozygotes: 0,
            };
            let he = crate::stats::heterozygosity::expected_heterozygosity(&as_counts).unwrap();
            assert_close(allelic_richness(&counts, 2).unwrap(), 1.0 + he, 1e-12);
        }
    }

    /// Computed from the rarefaction formulas (module documentation), confirmed with scipy 1.17.1
    /// by tests/reference/rarefaction_reference.py: pop1 {a:6, b:4, c:2}, pop2 {a:8, b:2, d:2},
    /// g = 8: AR = 2.907071 and 2.818182, PAR = 0.999816 and 0.910927.
    #[test]
    fn private_richness_of_two_populations_matches_scipy() {
        // codes: a = 1, b = 2, c = 3, d = 4
        let pop1 = [0, 6, 4, 2];
        let pop2 = [0, 8, 2, 0, 2];
        let rarefied = rarefy_locus(&[&pop1, &pop2], 8).unwrap();
        assert_close(rarefied[0].richness, 2.907071, 1e-6);
        assert_close(rarefied[1].richness, 2.818182, 1e-6);
        assert_close(rarefied[0].private_richness, 0.999816, 1e-6);
        assert_close(rarefied[1].private_richness, 0.910927, 1e-6);
        assert_eq!(rarefy_locus(&[&pop1, &pop2], 13), None);
    }

    /// Hand calculation: Q = C(2, 2)/C(4, 2) = 1/6 = (2·1)/(4·3); Q = 0 when fewer copies
    /// than g are other alleles; a single group has private richness equal to its richness.
    #[test]
    fn absence_probability_by_hand() {
        assert_close(absence_probability(4, 2, 2), 1.0 / 6.0, 1e-15);
        assert_eq!(absence_probability(4, 3, 2), 0.0);
        assert_eq!(absence_probability(4, 0, 4), 1.0);
        let only = rarefy_locus(&[&[0, 5, 3, 1, 1]], 4).unwrap();
        assert_close(only[0].private_richness, only[0].richness, 1e-15);
    }
}
