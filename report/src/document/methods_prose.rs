//! The methods in prose: for each step that ran, a few sentences a reviewer can read without
//! the manual (what the method estimates, which variant and why, the parameters that matter,
//! and its paper). The full parameter listing stays in the appendix.

use std::collections::BTreeMap;

use popgauge_engine::host::{Isolation, PluginRecord};
use serde_json::Value;

use super::super::contract::uses;
use super::super::format;

/// The prose for one step, from its `uses` name and resolved parameters. A plugin step (or
/// a built-in one without its own text) gets a sentence that says so and points to its
/// citations.
pub(crate) fn step_prose(
    id: &str,
    uses_name: &str,
    params: &BTreeMap<String, Value>,
    generation_time: Option<f64>,
) -> String {
    let p = Params(params);
    match uses_name {
        uses::VALIDATE => format!(
            "Step {id} checked the data before any estimate. Loci untyped in more than {} of the samples and samples untyped at more than {} of the loci were left out, and population–year groups with fewer than {} samples were not analysed. {} Each locus was tested for a heterozygote deficit in every group, and Brookfield's (1996) estimator gives the frequency r of a possible null allele.",
            p.share("max_missing_locus"),
            p.share("max_missing_sample"),
            p.text("min_group_size"),
            if p.bool("keep_duplicates") {
                format!(
                    "Samples with identical genotypes at every locus typed in both (at least {} loci) were reported but kept.",
                    p.text("min_loci_for_duplicates")
                )
            } else {
                format!(
                    "Samples with identical genotypes at every locus typed in both (at least {} loci) were taken as one animal sampled twice, and one of each set was kept.",
                    p.text("min_loci_for_duplicates")
                )
            }
        ),
        uses::DIVERSITY => format!(
            "Step {id} estimated observed heterozygosity Ho, expected heterozygosity He corrected for sample size (Nei 1978) and the inbreeding coefficient F = 1 − ΣHo/ΣHe over loci, which measures the heterozygote deficit of the sample. FIS, Weir & Cockerham's (1984) estimator of the same quantity, has a 95 % confidence interval from {} bootstrap replicates over loci. Allelic richness Ar counts alleles rarefied to one sample size across groups (Hurlbert 1971; El Mousadik & Petit 1996), so that groups of different sizes compare; private allelic richness PAr compares only populations sampled in the same year (Kalinowski 2004).",
            p.text("bootstrap")
        ),
        uses::HWE => format!(
            "Step {id} tested each locus in each group for Hardy–Weinberg proportions by exact tests (Haldane 1954; Guo & Thompson 1992): all genotype tables were enumerated where feasible, and otherwise {} random tables were drawn. Because many tests are made, a departure counts only when its q-value, which controls the false-discovery rate over all tests (Benjamini & Hochberg 1995), is below 0.05.",
            p.text("permutations")
        ),
        uses::DIFFERENTIATION => format!(
            "Step {id} measured differentiation between populations ({}) by Weir & Cockerham's (1984) FST, with G″ST (Meirmans & Hedrick 2011) and Jost's (2008) D, which do not depend on the diversity within populations; their 95 % intervals come from {} bootstrap replicates over loci. Each pair of populations was tested by {} permutations of individuals between them. Isolation by distance regresses FST/(1 − FST) on the logarithm of distance (Rousset 1997), tested by a Mantel (1967) test.",
            if p.bool("by_year") { "per sampling year" } else { "sampling years pooled" },
            p.text("bootstrap"),
            p.text("permutations")
        ),
        uses::NE_LD => format!(
            "Step {id} estimated Ne from the linkage disequilibrium (LD) that drift creates between unlinked loci in one sample (Hill 1981), with the bias correction of Waples (2006); the r² that sampling alone produces, given the harmonic-mean number of individuals typed at both loci of a pair (S), is subtracted. Rare alleles inflate r² in small samples, so they are left out: alleles below a lowest frequency Pcrit ({}), or alleles seen only once in the sample (singletons). The estimate reported for each sample follows Waples & Do (2010): no singletons when S is 25 or less, Pcrit = 0.02 above. The recommended 95 % interval resamples individuals in {} groups (delete-a-group jackknife, Kott 2001){}.",
            p.list("pcrit"),
            p.text("individual_blocks"),
            if p.bool("skip_same_chromosome") {
                "; pairs of loci on the same chromosome are left out where the data name chromosomes (Waples, Larson & Waples 2016)"
            } else {
                ""
            }
        ),
        uses::NE_TEMPORAL => {
            let plan = params.get("plan").and_then(Value::as_str).unwrap_or("II");
            format!(
                "Step {id} estimated Ne from the change of allele frequencies between two samples of a population, t generations apart{}: the more drift, the larger the change and the smaller Ne. The standardized variance of the change Fs (Jorde & Ryman 2007) is the estimate reported; Fc (Nei & Tajima 1981) and Fk (Pollak 1983) are its older relatives, shown for comparison. Each is corrected for the change that sampling alone produces under sampling plan {plan} of Waples (1989): {}. The 95 % interval of the Fs estimate is a jackknife over loci.",
                generation_time.map_or_else(String::new, |g| format!(
                    " (t = years between samples / {} years per generation)",
                    trimmed(g)
                )),
                if plan == "I" {
                    "plan I, where animals are sampled after they bred or released, so that the census size enters the correction"
                } else {
                    "plan II, where animals are sampled before they breed and removed"
                }
            )
        }
        uses::NE_HETX => format!(
            "Step {id} estimated the effective number of breeders Nb from the excess of heterozygotes that few parents leave in their offspring (Pudovkin, Zaykin & Hedgecock 1996), with a jackknife interval over loci. It needs a sample of one cohort and is informative only when Nb is small (Luikart & Cornuet 1999)."
        ),
        uses::TREND => format!(
            "Step {id} tested change over the sampling years for {} per population: the Mann–Kendall test (Mann 1945; Kendall 1975) for a monotone trend, Sen's (1968) slope, and the least-squares slope with its 95 % interval, at α = {}. Ne is tested as 1/Ne so that an infinite estimate counts as 0. With few sampling years these tests have little power.",
            p.metrics(),
            p.text("alpha")
        ),
        uses::STATUS => format!(
            "Step {id} took for each population one Ne estimate, from the first of {} that gives one for the latest sampling year, compared it and its 95 % interval with the thresholds, and projected the heterozygosity kept and the inbreeding added by drift over {} years from it (Wright 1931).",
            p.sources(),
            p.text("horizon_years")
        ),
        uses::INBREEDING => format!(
            "Step {id} measured each animal's heterozygosity and inbreeding: standardised multilocus heterozygosity sMLH (Coltman et al. 1999), internal relatedness (Amos et al. 2001) and homozygosity by locus (Aparicio, Ortego & Cordero 2006) at any marker, and at loci with two alleles the genomic inbreeding coefficients F̂I, F̂II and F̂III of Yang et al. (2011), relative to the allele frequencies of the animal's population and year. Where loci have positions, runs of homozygosity of at least {} bp and {} loci (at most {} heterozygous and {} untyped calls, gaps up to {} bp, at least {} loci per Mb) give FROH, the share of the genome in runs (McQuillan et al. 2008). Identity disequilibrium g2 (David et al. 2007) has a 95 % interval from {} bootstrap draws of animals and a p-value from {} permutations of genotypes among animals.",
            p.text("roh_min_length_bp"),
            p.text("roh_min_snps"),
            p.text("roh_max_heterozygous"),
            p.text("roh_max_missing"),
            p.text("roh_max_gap_bp"),
            p.text("roh_min_density"),
            p.text("g2_bootstrap"),
            p.text("g2_permutations")
        ),
        other => format!(
            "Step {id} ran {}; popgauge reports its tables as the step gave them. Its method is described in its own documentation and the references it cites.",
            other
                .strip_prefix("plugin:")
                .map_or_else(|| format!("\u{201c}{other}\u{201d}"), |lib| format!("the external step library {lib}"))
        ),
    }
}

/// What the prose says of a plugin step's code: which library (its path and SHA-256 as pinned)
/// and where its code ran — in the confined worker, in a worker without (part of) the
/// operating system's sandbox (finding `worker-not-sandboxed`), or inside popgauge. Empty for
/// a built-in step, or when the run record is not at hand.
pub(crate) fn plugin_code(id: &str, plugin: Option<&PluginRecord>, not_sandboxed: bool) -> String {
    let Some(plugin) = plugin else { return String::new() };
    let sha = &plugin.sha256;
    let short = if sha.len() > 12 { format!("{}…{}", &sha[..8], &sha[sha.len() - 4..]) } else { sha.clone() };
    let library = format!(" Its code is the library {} (SHA-256 {short}, pinned in the recipe).", plugin.path);
    let confinement = match (plugin.isolation, not_sandboxed) {
        (Isolation::InProcess, _) => format!(
            " The code of step {id} ran inside popgauge's own process (isolation = \"in-process\"), with popgauge's rights and no confinement."
        ),
        (Isolation::Process, true) => format!(
            " The code of step {id} ran in a separate worker process, but without the operating system's sandbox that popgauge uses where the kernel offers one (its findings say what was missing), so it was not confined to reading its inputs."
        ),
        (Isolation::Process, false) => format!(
            " The code of step {id} ran in a separate worker process confined by the operating system (Landlock and seccomp on Linux): it could read only its inputs, write only its scratch folder, open no network connection and start no program, within memory and CPU-time limits."
        ),
    };
    library + &confinement
}

fn trimmed(value: f64) -> String {
    format::significant(value, 3).trim_end_matches('0').trim_end_matches('.').to_string()
}

struct Params<'a>(&'a BTreeMap<String, Value>);

impl Params<'_> {
    fn text(&self, name: &str) -> String {
        match self.0.get(name) {
            Some(Value::String(s)) => s.clone(),
            Some(Value::Null) | None => format::UNDEFINED.into(),
            Some(other) => other.to_string(),
        }
    }

    fn share(&self, name: &str) -> String {
        self.0
            .get(name)
            .and_then(Value::as_f64)
            .map_or_else(|| format::UNDEFINED.into(), |v| format!("{} %", trimmed(v * 100.0)))
    }

    fn bool(&self, name: &str) -> bool {
        self.0.get(name).and_then(Value::as_bool).unwrap_or(false)
    }

    fn list(&self, name: &str) -> String {
        match self.0.get(name) {
            Some(Value::Array(values)) => values.iter().map(|v| v.to_string()).collect::<Vec<_>>().join(", "),
            _ => self.text(name),
        }
    }

    fn metrics(&self) -> String {
        let names: Vec<String> = match self.0.get("metrics") {
            Some(Value::Array(values)) => values
                .iter()
                .filter_map(Value::as_str)
                .map(|m| match m {
                    "he" => "He".to_string(),
                    "ho" => "Ho".to_string(),
                    "ar" => "Ar".to_string(),
                    "f" => "F".to_string(),
                    "ne" => "Ne".to_string(),
                    other => other.to_string(),
                })
                .collect(),
            _ => Vec::new(),
        };
        if names.is_empty() { "each metric".into() } else { names.join(", ") }
    }

    fn sources(&self) -> String {
        match self.0.get("prefer") {
            Some(Value::Array(values)) => {
                let names: Vec<String> =
                    values.iter().filter_map(Value::as_str).map(|m| format!("the {}", format::ne_method(m))).collect();
                match names.as_slice() {
                    [] => "the Ne steps".into(),
                    [one] => one.clone(),
                    [first @ .., last] => format!("{}, then {last}", first.join(", then ")),
                }
            }
            _ => "the Ne steps".into(),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn params(json: Value) -> BTreeMap<String, Value> {
        serde_json::from_value(json).unwrap()
    }

    #[test]
    fn prose_quotes_the_parameters_that_matter() {
        let qc = step_prose(
            "qc",
            uses::VALIDATE,
            &params(
                serde_json::json!({"max_missing_locus": 0.2, "max_missing_sample": 0.5, "min_group_size": 5, "keep_duplicates": false, "min_loci_for_duplicates": 5}),
            ),
            None,
        );
        assert!(qc.contains("more than 20 % of the samples") && qc.contains("more than 50 % of the loci"), "{qc}");
        assert!(qc.contains("fewer than 5 samples") && qc.contains("one of each set was kept"), "{qc}");
        let ld = step_prose(
            "ld",
            uses::NE_LD,
            &params(serde_json::json!({"pcrit": [0.05, 0.02], "individual_blocks": 16, "skip_same_chromosome": true})),
            None,
        );
        assert!(ld.contains("(0.05, 0.02)") && ld.contains("16 groups") && ld.contains("singletons"), "{ld}");
        let temporal = step_prose("t", uses::NE_TEMPORAL, &params(serde_json::json!({"plan": "I"})), Some(2.0));
        assert!(temporal.contains("plan I, where") && temporal.contains("/ 2 years per generation"), "{temporal}");
        let plugin = step_prose("kin", "plugin:libkin.so", &BTreeMap::new(), None);
        assert!(plugin.contains("external step library libkin.so"), "{plugin}");
        let record = |isolation| PluginRecord {
            path: "plugins/libkin.so".into(),
            sha256: "c9b8cadb70e8eb82059f1637b47a5f5936d7da8766e6e9b1cee8461fb21c18c5".into(),
            isolation,
            descriptor: popgauge_abi::Descriptor {
                uses: "kin".into(),
                version: "0.1.0".into(),
                summary: "kinship".into(),
                params: Vec::new(),
            },
        };
        let confined = plugin_code("kin", Some(&record(Isolation::Process)), false);
        assert!(confined.contains("library plugins/libkin.so (SHA-256 c9b8cadb…18c5, pinned in the recipe)"), "{confined}");
        assert!(confined.contains("confined by the operating system"), "{confined}");
        let open = plugin_code("kin", Some(&record(Isolation::Process)), true);
        assert!(open.contains("ran in a separate worker process, but without"), "{open}");
        let inside = plugin_code("kin", Some(&record(Isolation::InProcess)), false);
        assert!(inside.contains("no confinement"), "{inside}");
        assert_eq!(plugin_code("kin", None, true), "", "a built-in step has no plugin sentence");
    }
}
