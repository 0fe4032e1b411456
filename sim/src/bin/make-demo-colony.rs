//! Writes the colony demo case: a fictional captive-breeding colony of the Korrin valley newt
//! whose studbook was lost, typed at a SNP panel on four chromosomes, so that the `inbreeding`
//! step can be shown with runs of homozygosity against a known truth.
//!
//! The animals are simulated by `popgauge_sim::pedigree`: each is the offspring of full sibs,
//! half sibs, first cousins or unrelated founders (pedigree F = 1/4, 1/8, 1/16, 0; Wright 1922)
//! on a uniform map of 1 cM per Mb, and its realised share of genome identical by descent is
//! written to `truth.csv`. Everything comes from [`SEED`]; the same binary writes the same
//! bytes. Usage: `make-demo-colony DIR` (the repository's copy is `demo-colony/`).

use std::error::Error;
use std::fmt::Write as _;
use std::fs;
use std::io::Write as _;
use std::path::Path;
use std::process::ExitCode;

use popgauge_sim::{Genome, Mating, PedigreeSample, PedigreeStudy, simulate_pedigrees};

/// The seed of the colony.
const SEED: u64 = 20_251_104;
/// Animals per mating type.
const PER_MATING: usize = 10;
/// Population name.
const POPULATION: &str = "Halvard colony";
/// Sampling year.
const YEAR: i32 = 2025;

fn genome() -> Genome {
    Genome { chromosomes: 4, chromosome_length_bp: 40_000_000, snp_spacing_bp: 20_000, centimorgans_per_mb: 1.0 }
}

fn main() -> ExitCode {
    popgauge_sim::write_case_main(
        "usage: make-demo-colony DIR\n  writes calls.vcf.gz, samples.csv, populations.csv and truth.csv into DIR",
        run,
    )
}

fn run(dir: &Path) -> Result<String, Box<dyn Error>> {
    let study = PedigreeStudy {
        genome: genome(),
        animals: Mating::ALL.iter().map(|&m| (m, PER_MATING)).collect(),
        population: POPULATION.into(),
        year: YEAR,
        seed: SEED,
    };
    let sample = simulate_pedigrees(&study)?;
    fs::create_dir_all(dir)?;
    let mut compressed = noodles_bgzf::io::Writer::new(Vec::new());
    compressed.write_all(vcf(&sample)?.as_bytes())?;
    fs::write(dir.join("calls.vcf.gz"), compressed.finish()?)?;
    fs::write(dir.join("samples.csv"), sample_sheet(&sample))?;
    fs::write(
        dir.join("populations.csv"),
        "population,label,census_size,census_year\nHalvard colony,Halvard breeding station colony,40,2025\n",
    )?;
    fs::write(dir.join("truth.csv"), truth(&sample))?;
    Ok(format!(
        "wrote {}: {} animals × {} SNPs on {} chromosomes",
        dir.display(),
        sample.animals.len(),
        sample.matrix.loci().len(),
        study.genome.chromosomes
    ))
}

/// VCF 4.3 with GT only; REF and ALT are the panel's two alleles.
fn vcf(sample: &PedigreeSample) -> Result<String, std::fmt::Error> {
    let matrix = &sample.matrix;
    let mut out = String::from("##fileformat=VCFv4.3\n##source=popgauge-sim make-demo-colony (simulated data)\n");
    let genome = genome();
    for c in 0..genome.chromosomes {
        writeln!(out, "##contig=<ID={},length={}>", Genome::chromosome_name(c), genome.chromosome_length_bp)?;
    }
    out.push_str("##FORMAT=<ID=GT,Number=1,Type=String,Description=\"Genotype\">\n");
    out.push_str("#CHROM\tPOS\tID\tREF\tALT\tQUAL\tFILTER\tINFO\tFORMAT");
    for s in matrix.samples() {
        write!(out, "\t{}", s.id)?;
    }
    out.push('\n');
    let n = matrix.samples().len();
    for (l, locus) in matrix.loci().iter().enumerate() {
        let chromosome = locus.chromosome.as_deref().unwrap_or("chr00");
        let position = locus.position.unwrap_or(0);
        write!(
            out,
            "{chromosome}\t{position}\t{}\t{}\t{}\t.\tPASS\t.\tGT",
            locus.name, locus.alleles[0], locus.alleles[1]
        )?;
        for s in 0..n {
            let a = matrix.codes()[(l * n + s) * 2].0;
            let b = matrix.codes()[(l * n + s) * 2 + 1].0;
            write!(out, "\t{}/{}", a - 1, b - 1)?;
        }
        out.push('\n');
    }
    Ok(out)
}

fn sample_sheet(sample: &PedigreeSample) -> String {
    let mut sheet = String::from("sample,population,year\n");
    for s in sample.matrix.samples() {
        sheet.push_str(&format!("{},{},{}\n", s.id, s.population, s.year));
    }
    sheet
}

/// The truth: each animal's parents' relationship, pedigree F and realised IBD share.
fn truth(sample: &PedigreeSample) -> String {
    let mut out = String::from("sample,parents,pedigree_f,realised_ibd\n");
    for a in &sample.animals {
        let parents = match a.mating {
            Mating::FullSibs => "full sibs",
            Mating::HalfSibs => "half sibs",
            Mating::FirstCousins => "first cousins",
            Mating::Unrelated => "unrelated",
        };
        out.push_str(&format!("{},{parents},{},{:.6}\n", a.id, a.mating.pedigree_inbreeding(), a.realised_inbreeding));
    }
    out
}
