//! Check 10 of `validate`: heterozygote deficits per kept locus, tested as the `hwe` step
//! tests them ([`crate::stats::hwe_groups`]), with one warning per flagged locus and a summary
//! that puts the number flagged beside the number expected by chance.

use popgauge_abi::{Finding, Group, LocusIdx, Seed, Where, format_number};

use super::Screen;
use super::findings::percent;
use crate::stats::hwe_exact::TestSettings;
use crate::stats::hwe_groups::{
    DeficitEvidence, GroupTests, NULL_ALLELE_R, SIGNIFICANT_Q, assign_q_values, test_groups,
};
use crate::stats::mean;

/// What the tests of one flagged locus say, for its warning.
struct Flag<'s> {
    locus: &'s str,
    alleles: usize,
    evidence: DeficitEvidence,
    mean_r: Option<f64>,
}

impl<'a> Screen<'a> {
    /// Tests every kept locus in every group of kept samples; fills `null_allele` and `deficit`
    /// of the kept loci and returns the warnings and the summary.
    pub(super) fn flag_heterozygote_deficits(&mut self, seed: Seed) -> Vec<Finding> {
        let groups: Vec<Group> = self
            .groups
            .iter()
            .map(|g| Group { population: g.population.clone(), year: g.year, samples: self.kept_in(g) })
            .filter(|g| !g.samples.is_empty())
            .collect();
        let loci = self.kept_loci();
        if groups.is_empty() || loci.is_empty() {
            return Vec::new();
        }
        let mut results = test_groups(&self.packed, &groups, &loci, &TestSettings::default(), seed);
        let family_size = assign_q_values(&mut results);
        let flags = self.record_evidence(&loci, &results);
        let mut findings: Vec<Finding> = flags.iter().map(|f| flag_finding(f, &groups, family_size)).collect();
        findings.push(summary_finding(&flags, loci.len(), family_size));
        findings
    }

    /// Records the mean r and the deficit counts of each tested locus; returns the flagged ones.
    fn record_evidence(&mut self, loci: &[LocusIdx], results: &[GroupTests]) -> Vec<Flag<'a>> {
        let mut flagged = Vec::new();
        for (position, &l) in loci.iter().enumerate() {
            let evidence = DeficitEvidence::at(results, position);
            let mean_r = mean(results.iter().filter_map(|tests| tests[position].null_allele_r()));
            let record = &mut self.loci[l];
            record.null_allele = mean_r;
            record.deficit = Some((evidence.significant.len(), evidence.tested.len()));
            if evidence.flagged() {
                flagged.push((l, evidence, mean_r));
            }
        }
        flagged
            .into_iter()
            .map(|(l, evidence, mean_r)| Flag {
                locus: self.view.locus(l).name.as_str(),
                alleles: self.loci[l].alleles,
                evidence,
                mean_r,
            })
            .collect()
    }
}

/// `heterozygote-deficit` for a locus with two alleles, `possible-null-allele` otherwise.
fn flag_finding(flag: &Flag<'_>, groups: &[Group], family_size: usize) -> Finding {
    let names: Vec<String> =
        flag.evidence.significant.iter().map(|&g| format!("{} {}", groups[g].population, groups[g].year)).collect();
    let evidence = format!(
        "a significant heterozygote deficit (Ho < He, q < {} over the m = {family_size} locus × group tests, \
         Brookfield's r ≥ {}) in {} of the {} groups where it was tested ({})",
        format_number(SIGNIFICANT_Q),
        format_number(NULL_ALLELE_R),
        flag.evidence.significant.len(),
        flag.evidence.tested.len(),
        names.join(", ")
    );
    let locus = flag.locus;
    if flag.alleles <= 2 {
        return Finding::warning(
            "heterozygote-deficit",
            format!(
                "locus {locus} has two alleles and shows {evidence}. It is reported as a heterozygote deficit, not as \
                 a null allele (an artefact of microsatellite amplification): at a two-allele locus the causes to \
                 consider are genotype-calling error (a heterozygote called homozygous, e.g. at low read depth), \
                 inbreeding and a Wahlund effect. The locus is kept; check its calls before relying on it"
            ),
            Where::locus(locus),
        );
    }
    let r = flag.mean_r.map_or_else(|| "undefined".to_string(), |r| format_number((r * 1000.0).round() / 1000.0));
    Finding::warning(
        "possible-null-allele",
        format!(
            "locus {locus} shows {evidence}: possibly a null allele (mean r = {r}). Inbreeding or a Wahlund effect \
             also cause a deficit, so this is an indication only. The locus is kept; check its amplification \
             before relying on it"
        ),
        Where::locus(locus),
    )
}

/// The number flagged, of each kind, beside the number expected by chance: at a false-discovery
/// rate α about α of the discoveries are false (Benjamini & Hochberg 1995), so α·N of N.
fn summary_finding(flags: &[Flag<'_>], tested_loci: usize, family_size: usize) -> Finding {
    let flagged = flags.len();
    let two_allele = flags.iter().filter(|f| f.alleles <= 2).count();
    let by_chance = (SIGNIFICANT_Q * flagged as f64 * 100.0).round() / 100.0;
    Finding::info(
        "deficit-summary",
        format!(
            "{flagged} of {tested_loci} kept loci flagged for a significant heterozygote deficit (at two-allele \
             loci: {two_allele}; possible null alleles, at loci with more alleles: {}); of these flags, about {} are \
             expected to be chance findings at the false-discovery rate of {} (Benjamini & Hochberg 1995 q-values over all m = {family_size} locus × group tests; a locus is \
             flagged when the deficit is significant, with Brookfield's r ≥ {}, in at least half of the groups where \
             it was tested)",
            flagged - two_allele,
            format_number(by_chance),
            percent(SIGNIFICANT_Q),
            format_number(NULL_ALLELE_R)
        ),
        Where::default(),
    )
}
