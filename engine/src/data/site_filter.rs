//! Site filters applied while reading (`[data] min_call_rate`, `min_maf`, `max_alleles`).
//!
//! A site is judged on the samples that are read (for a VCF file, those in the sample sheet):
//! its call rate is the share of them typed at both alleles; its minor-allele frequency is the
//! frequency of the second most common allele among their typed gene copies (the usual minor
//! allele for a biallelic site; 0 for a monomorphic or untyped one); its allele count is the
//! number of distinct alleles they carry. Dropped sites never enter the genotype matrix; one
//! finding per reason says how many were dropped and names the first few.

use std::collections::BTreeMap;

use popgauge_abi::{AlleleCode, Finding, GenotypeMatrix, MatrixError, Where};

use crate::recipe::SiteFilters;

/// How many dropped site names a finding lists before "… and N more".
const NAMES_SHOWN: usize = 10;

/// Why a site was not read.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub enum SiteDrop {
    /// Typed in too few samples.
    CallRate,
    /// Minor allele too rare.
    MinorAlleleFrequency,
    /// More distinct alleles than `max_alleles`.
    TooManyAlleles,
}

/// The verdict on one site: `codes` holds two codes per sample (0 = untyped), `labels` is the
/// number of allele codes the site uses.
pub fn site_verdict(codes: &[AlleleCode], labels: usize, filters: &SiteFilters) -> Option<SiteDrop> {
    if *filters == SiteFilters::NONE {
        return None;
    }
    let mut counts = vec![0u64; labels + 1];
    let mut typed = 0usize;
    for pair in codes.chunks_exact(2) {
        if pair[0].is_typed() && pair[1].is_typed() {
            typed += 1;
            counts[pair[0].0 as usize] += 1;
            counts[pair[1].0 as usize] += 1;
        }
    }
    let samples = codes.len() / 2;
    let call_rate = if samples == 0 { 0.0 } else { typed as f64 / samples as f64 };
    if call_rate < filters.min_call_rate {
        return Some(SiteDrop::CallRate);
    }
    let distinct = counts[1..].iter().filter(|&&c| c > 0).count();
    if filters.max_alleles.is_some_and(|max| distinct > max) {
        return Some(SiteDrop::TooManyAlleles);
    }
    if minor_allele_frequency(&counts[1..], typed) < filters.min_maf {
        return Some(SiteDrop::MinorAlleleFrequency);
    }
    None
}

/// Frequency of the second most common allele among `2 × typed` gene copies.
fn minor_allele_frequency(counts: &[u64], typed: usize) -> f64 {
    if typed == 0 {
        return 0.0;
    }
    let mut sorted: Vec<u64> = counts.to_vec();
    sorted.sort_unstable_by(|a, b| b.cmp(a));
    sorted.get(1).copied().unwrap_or(0) as f64 / (2 * typed) as f64
}

/// Dropped sites by reason, in the order they were met.
#[derive(Debug, Default)]
pub struct SiteTally {
    dropped: BTreeMap<SiteDrop, Vec<String>>,
}

impl SiteTally {
    /// Records that `site` was dropped for `reason`.
    pub fn record(&mut self, reason: SiteDrop, site: &str) {
        self.dropped.entry(reason).or_default().push(site.to_string());
    }

    /// One finding per reason.
    pub fn findings(&self, file: &str, filters: &SiteFilters) -> Vec<Finding> {
        self.dropped
            .iter()
            .map(|(reason, sites)| {
                let (code, rule) = match reason {
                    SiteDrop::CallRate => (
                        "low-call-rate-sites",
                        format!("typed in fewer than {} of the samples (min_call_rate)", filters.min_call_rate),
                    ),
                    SiteDrop::MinorAlleleFrequency => {
                        ("low-maf-sites", format!("minor-allele frequency below {} (min_maf)", filters.min_maf))
                    }
                    SiteDrop::TooManyAlleles => (
                        "too-many-alleles-sites",
                        format!("more than {} alleles (max_alleles)", filters.max_alleles.unwrap_or(0)),
                    ),
                };
                let message = format!("{file}: {} site(s) not read: {rule}: {}", sites.len(), name_list(sites));
                Finding::info(code, message, Where { file: Some(file.into()), ..Where::default() })
            })
            .collect()
    }
}

/// The first few names, then how many more.
pub fn name_list(names: &[String]) -> String {
    let shown: Vec<&str> = names.iter().take(NAMES_SHOWN).map(String::as_str).collect();
    match names.len().saturating_sub(NAMES_SHOWN) {
        0 => shown.join(", "),
        more => format!("{}, … and {more} more", shown.join(", ")),
    }
}

/// Applies the filters to a matrix already read (the wide table), keeping loci in order.
///
/// # Errors
/// Only if the kept parts no longer form a matrix, which cannot happen for a valid input.
pub fn filter_matrix(
    matrix: GenotypeMatrix,
    filters: &SiteFilters,
    file: &str,
) -> Result<(GenotypeMatrix, Vec<Finding>), MatrixError> {
    if *filters == SiteFilters::NONE {
        return Ok((matrix, Vec::new()));
    }
    let per_locus = matrix.samples().len() * 2;
    let mut tally = SiteTally::default();
    let mut loci = Vec::new();
    let mut codes = Vec::new();
    for (index, locus) in matrix.loci().iter().enumerate() {
        let block = &matrix.codes()[index * per_locus..(index + 1) * per_locus];
        match site_verdict(block, locus.alleles.len(), filters) {
            Some(reason) => tally.record(reason, &locus.name),
            None => {
                loci.push(locus.clone());
                codes.extend_from_slice(block);
            }
        }
    }
    let filtered = GenotypeMatrix::new(matrix.samples().to_vec(), loci, codes)?;
    Ok((filtered, tally.findings(file, filters)))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn codes(pairs: &[(u16, u16)]) -> Vec<AlleleCode> {
        pairs.iter().flat_map(|&(a, b)| [AlleleCode(a), AlleleCode(b)]).collect()
    }

    /// Hand count (common practice): 3 of 4 samples typed is a call rate of 0.75; of the 6
    /// typed copies allele 1 has 4 and allele 2 has 2, so the minor-allele frequency is 1/3.
    #[test]
    fn verdicts_follow_the_thresholds() {
        let site = codes(&[(1, 1), (1, 2), (2, 1), (0, 0)]);
        let filters = |min_call_rate, min_maf, max_alleles| SiteFilters { min_call_rate, min_maf, max_alleles };
        assert_eq!(site_verdict(&site, 2, &filters(0.75, 0.0, None)), None);
        assert_eq!(site_verdict(&site, 2, &filters(0.8, 0.0, None)), Some(SiteDrop::CallRate));
        // copies: allele 1 ×4, allele 2 ×2 of 6 → MAF 1/3.
        assert_eq!(site_verdict(&site, 2, &filters(0.0, 0.33, None)), None);
        assert_eq!(site_verdict(&site, 2, &filters(0.0, 0.34, None)), Some(SiteDrop::MinorAlleleFrequency));
        assert_eq!(site_verdict(&site, 2, &filters(0.0, 0.0, Some(1))), Some(SiteDrop::TooManyAlleles));
        assert_eq!(site_verdict(&site, 2, &filters(0.0, 0.0, Some(2))), None);
    }

    /// Multi-allelic: counts 3, 2, 1 of 6 copies → the second most common has frequency 1/3.
    #[test]
    fn minor_allele_of_a_multiallelic_site_is_the_second_most_common() {
        assert!((minor_allele_frequency(&[3, 1, 2], 3) - 1.0 / 3.0).abs() < 1e-12);
        assert_eq!(minor_allele_frequency(&[4, 0], 2), 0.0);
        assert_eq!(minor_allele_frequency(&[0, 0], 0), 0.0);
    }

    #[test]
    fn findings_list_the_first_names_and_count_the_rest() {
        let names: Vec<String> = (1..=12).map(|i| format!("s{i}")).collect();
        assert_eq!(name_list(&names), "s1, s2, s3, s4, s5, s6, s7, s8, s9, s10, … and 2 more");
        let mut tally = SiteTally::default();
        tally.record(SiteDrop::CallRate, "chr1:5");
        let filters = SiteFilters { min_call_rate: 0.9, ..SiteFilters::NONE };
        let findings = tally.findings("calls.vcf", &filters);
        assert_eq!(findings[0].code, "low-call-rate-sites");
        assert_eq!(
            findings[0].message,
            "calls.vcf: 1 site(s) not read: typed in fewer than 0.9 of the samples (min_call_rate): chr1:5"
        );
    }
}
