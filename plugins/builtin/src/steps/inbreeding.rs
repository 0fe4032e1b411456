//! `inbreeding`: per-individual inbreeding and heterozygosity, runs of homozygosity (ROH) and
//! identity disequilibrium per group (population, year).
//!
//! # Allele frequencies
//! Every frequency-based measure takes the allele frequencies of the individual's own group
//! (population × sampling year), the individual included: the group's sample stands for the
//! base population, so the F estimates are relative to it (an individual less homozygous than
//! the group average has a negative F). At each locus only individuals typed at both alleles
//! count (code 0 = untyped is left out locus by locus).
//!
//! # Measures per individual (table `individuals`)
//! With h = 1 at a locus where the individual is heterozygous, 0 where homozygous, over the
//! loci it is typed at (docs/methods.md, "Individual heterozygosity"):
//!
//! - `smlh`, standardised multilocus heterozygosity (Coltman et al. 1999): Σh / Σ H̄ₗ, the
//!   share of its typed loci that are heterozygous divided by the mean of the groups' observed
//!   heterozygosity H̄ₗ over the same loci;
//! - `ir`, internal relatedness (Amos et al. 2001): (2H − Σf)/(2N − Σf), H homozygous loci, N
//!   typed loci, Σf the frequencies of the individual's 2N allele copies in its group;
//! - `hl`, homozygosity by locus (Aparicio, Ortego & Cordero 2006): ΣE_hom/(ΣE_hom + ΣE_het),
//!   E = 1 − Σp² of a locus, summed over its homozygous and its heterozygous loci.
//!
//! On the loci with exactly two alleles in the group (`loci_biallelic`), with x the copies of
//! the higher-coded allele and p its frequency (docs/methods.md, "Genomic inbreeding
//! coefficients"; Yang et al. 2011, means over loci of):
//!
//! - `f_grm` = F̂_I: (x − 2p)²/[2p(1 − p)] − 1 (the genomic relationship of the individual with
//!   itself, minus 1);
//! - `f_hom` = F̂_II: 1 − x(2 − x)/[2p(1 − p)] (excess homozygosity);
//! - `f_uni` = F̂_III: [x² − (1 + 2p)x + 2p²]/[2p(1 − p)] (correlation between uniting gametes).
//!
//! A locus monomorphic in the group adds nothing to these (it has no defined term), and to
//! `smlh`, `ir`, `hl` it adds 0 to numerator and denominator.
//!
//! # Runs of homozygosity (tables `individuals`, `runs`, `panel`)
//! Loci with a chromosome and a position (VCF CHROM and POS) are scanned in order of
//! chromosome name and position, each individual separately, by [`roh`] (docs/methods.md,
//! "Runs of homozygosity"): a run opens at a homozygous call, takes in the following calls
//! while it holds at most `roh_max_heterozygous` heterozygous and `roh_max_missing` untyped
//! calls and no gap between neighbouring loci exceeds `roh_max_gap_bp`, and ends at its last
//! homozygous call. It is kept when it spans at least `roh_min_length_bp` and
//! `roh_min_snps` loci with at least `roh_min_density` loci per Mb. `f_roh` = total run length
//! / the length the panel covers (Σ over chromosomes of last − first position; McQuillan et
//! al. 2008). Lengths are in Mb (10⁶ bp) of physical distance. `roh_lt2_mb`, `roh_2to8_mb`,
//! `roh_gt8_mb` are the individual's total run length in runs shorter than 2 Mb, from 2 to 8
//! Mb (both included) and longer than 8 Mb. At about 1 cM per Mb a run from an ancestor g
//! generations back has an expected length of 100/(2g) cM (Thompson 2013), so long runs point
//! to recent common ancestors and short ones to old ones.
//!
//! # Identity disequilibrium (table `groups`)
//! g2 (David et al. 2007): the excess of the correlation of heterozygosity between loci within
//! individuals, (A/W_A)/(B/W_B) − 1 with A the within-individual sum over ordered pairs of
//! distinct loci of hₗhₗ′, W_A the number of such pairs typed, and B, W_B the same over pairs
//! of distinct individuals; only loci polymorphic in the group count. g2 > 0 means individuals
//! vary in inbreeding. `g2_low`/`g2_high`: 2.5th and 97.5th percentiles of `g2_bootstrap`
//! replicates drawing individuals with replacement; `g2_p`: one-sided permutation p-value
//! (large g2 extreme) over `g2_permutations` arrangements that shuffle each locus's genotypes
//! among the group's individuals. Draws come from the step seed, in streams named after the
//! group (the permutations in chunks of 16, each chunk its own stream, so the result does not
//! depend on the number of threads; docs/methods.md, "Identity disequilibrium").
//!
//! # Null values
//! Every `null` has a finding: an individual with no typed locus (`no-typed-loci`); no locus
//! with two alleles in its group (`no-biallelic-loci`: f_*); only loci monomorphic in its group
//! (`individual-measure-undefined`: smlh, ir, hl); loci without position
//! (`roh-not-available`: every ROH column); group means and sds of fewer than one and two
//! defined values (`group-summary-undefined`); g2 and its interval and test (`g2-undefined`,
//! `g2-interval`, `g2-interval-undefined`, `g2-test-disabled`). No cell is ever `"inf"`.
//!
//! # Tables
//! - `individuals`: sample, population, year, loci, f_hom, f_uni, f_roh, roh_count,
//!   roh_length_mb, smlh, ir, hl, loci_biallelic, f_grm, roh_lt2_mb, roh_2to8_mb, roh_gt8_mb.
//! - `runs`: sample, population, year, chromosome, start, end, length_mb, snps, het_calls,
//!   missing_calls (start and end are the positions of its first and last locus, in bp).
//! - `groups`: population, year, n, then `<m>_mean` and `<m>_sd` for m in f_hom, f_uni,
//!   f_grm, f_roh, smlh, ir, hl, then g2_loci, g2, g2_low, g2_high, g2_replicates, g2_p,
//!   g2_permutations.
//! - `panel`: loci, loci_placed, chromosomes, length_mb (the genome length F_ROH divides by).
//!
//! # Citations
//! Coltman et al. (1999); Amos et al. (2001); Aparicio et al. (2006); Yang et al. (2011);
//! McQuillan et al. (2008); Thompson (2013); David et al. (2007) — full references in
//! [`CITATIONS`].

mod disequilibrium;
mod findings;
mod measures;
pub mod roh;
mod tables;
#[cfg(test)]
mod tests;

use popgauge_abi::{Descriptor, ParamKind, Step, StepContext, StepError, StepOutput};
use rayon::prelude::*;
use serde::Deserialize;
use serde_json::json;

use disequilibrium::{IdentityDisequilibrium, estimate_identity_disequilibrium};
use measures::tally_view;
use roh::{RunSettings, scan_view};

/// A group with fewer samples than this gets a `low-sample-size` warning (docs/methods.md,
/// "Conventions").
pub const LOW_SAMPLE_SIZE: usize = 10;
/// Coverage of the g2 bootstrap interval.
pub const INTERVAL_LEVEL: f64 = 0.95;

/// Full references, for the step's citations.
pub const CITATIONS: [&str; 7] = [
    "Coltman DW, Pilkington JG, Smith JA, Pemberton JM (1999) Parasite-mediated selection against inbred Soay \
     sheep in a free-living island population. Evolution 53:1259–1267.",
    "Amos W, Worthington Wilmer J, Fullard K, Burg TM, Croxall JP, Bloch D, Coulson T (2001) The influence of \
     parental relatedness on reproductive success. Proc R Soc Lond B 268:2021–2027.",
    "Aparicio JM, Ortego J, Cordero PJ (2006) What should we weigh to estimate heterozygosity, alleles or loci? \
     Mol Ecol 15:4659–4665.",
    "Yang J, Lee SH, Goddard ME, Visscher PM (2011) GCTA: a tool for genome-wide complex trait analysis. Am J Hum \
     Genet 88:76–82.",
    "McQuillan R, Leutenegger AL, Abdel-Rahman R, et al. (2008) Runs of homozygosity in European populations. Am J \
     Hum Genet 83:359–372.",
    "Thompson EA (2013) Identity by descent: variation in meiosis, across genomes, and in populations. Genetics \
     194:301–326.",
    "David P, Pujol B, Viard F, Castella V, Goudet J (2007) Reliable selfing rate estimates from imperfect \
     population genetic data. Mol Ecol 16:2474–2487.",
];

/// Parameters of `inbreeding`, as resolved from the descriptor (defaults live there).
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Params {
    /// Shortest run kept, in base pairs.
    pub roh_min_length_bp: u64,
    /// Fewest loci in a run kept.
    pub roh_min_snps: u32,
    /// Heterozygous calls a run may hold.
    pub roh_max_heterozygous: u32,
    /// Untyped calls a run may hold.
    pub roh_max_missing: u32,
    /// Largest distance between neighbouring loci inside a run, in base pairs.
    pub roh_max_gap_bp: u64,
    /// Fewest loci per Mb in a run kept.
    pub roh_min_density: f64,
    /// Bootstrap replicates over individuals for the g2 interval (0 = none).
    pub g2_bootstrap: u32,
    /// Permutations for the g2 test (0 = no test).
    pub g2_permutations: u32,
}

impl Params {
    fn run_settings(&self) -> RunSettings {
        RunSettings {
            min_length_bp: self.roh_min_length_bp,
            min_snps: self.roh_min_snps,
            max_heterozygous: self.roh_max_heterozygous,
            max_missing: self.roh_max_missing,
            max_gap_bp: self.roh_max_gap_bp,
            min_density_per_mb: self.roh_min_density,
        }
    }
}

/// The descriptor of `inbreeding`: its name, version and parameters with defaults.
pub fn descriptor() -> Descriptor {
    Descriptor::new(
        "inbreeding",
        "0.1.0",
        "Per-individual inbreeding (F_I, F_II, F_III of Yang et al. 2011), sMLH, IR, HL, runs of homozygosity and \
         F_ROH, and identity disequilibrium g2 per group with a bootstrap interval and a permutation test",
    )
    .param(
        "roh_min_length_bp",
        ParamKind::Integer { min: 10_000, max: 100_000_000 },
        json!(1_000_000),
        "shortest run of homozygosity kept, in base pairs (first to last locus of the run)",
    )
    .param(
        "roh_min_snps",
        ParamKind::Integer { min: 2, max: 100_000 },
        json!(30),
        "fewest loci a run of homozygosity must span",
    )
    .param(
        "roh_max_heterozygous",
        ParamKind::Integer { min: 0, max: 100 },
        json!(1),
        "heterozygous calls a run may hold (genotyping errors)",
    )
    .param("roh_max_missing", ParamKind::Integer { min: 0, max: 1000 }, json!(5), "untyped calls a run may hold")
    .param(
        "roh_max_gap_bp",
        ParamKind::Integer { min: 1_000, max: 100_000_000 },
        json!(1_000_000),
        "largest distance between neighbouring loci inside a run, in base pairs; a larger gap ends every run",
    )
    .param(
        "roh_min_density",
        ParamKind::Number { min: 0.0, max: 100_000.0 },
        json!(10),
        "fewest loci per Mb a run must hold (loci in the run / its length in Mb)",
    )
    .param(
        "g2_bootstrap",
        ParamKind::Integer { min: 0, max: 1_000_000 },
        json!(1000),
        "bootstrap replicates over individuals for the 95% interval of g2 (0 = no interval)",
    )
    .param(
        "g2_permutations",
        ParamKind::Integer { min: 0, max: 1_000_000 },
        json!(199),
        "permutations of genotypes among individuals within loci for the g2 test (0 = no test)",
    )
}

/// The `inbreeding` step.
#[derive(Debug, Clone, Copy, Default)]
pub struct Inbreeding;

impl Step for Inbreeding {
    fn descriptor(&self) -> Descriptor {
        descriptor()
    }

    fn run(&self, ctx: &StepContext<'_>) -> Result<StepOutput, StepError> {
        let params: Params = ctx.params_as()?;
        let groups = ctx.view.groups();
        let tallies = tally_view(&ctx.view, &groups);
        let runs = scan_view(&ctx.view, &params.run_settings());
        // Groups in parallel; each draws from its own named streams and `collect` keeps the order.
        let disequilibria: Vec<IdentityDisequilibrium> = groups
            .par_iter()
            .zip(&tallies.group_heterozygosity)
            .map(|(group, hets)| estimate_identity_disequilibrium(hets, group, &params, ctx.seed))
            .collect();
        let mut output = StepOutput::default();
        let individuals = tables::individuals(&ctx.view, &tallies, &runs)?;
        let groups_table = tables::groups(&groups, &individuals, &disequilibria)?;
        output.tables.insert("runs".into(), tables::runs(&ctx.view, &runs)?);
        output.tables.insert("panel".into(), tables::panel(&ctx.view, &runs)?);
        output.findings = findings::collect(&groups, &runs, &params);
        output.findings.extend(findings::special_values(&individuals, &groups_table, &params));
        output.tables.insert("individuals".into(), individuals);
        output.tables.insert("groups".into(), groups_table);
        output.citations = CITATIONS.iter().map(|c| c.to_string()).collect();
        Ok(output)
    }
}
