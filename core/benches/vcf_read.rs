//! Time to read the genomic-scale VCF into the genotype matrix: `cargo bench -p popgauge
//! --bench vcf_read`. The file is the SNP-panel benchmark case of `popgauge-sim`
//! (`SnpPanel::benchmark`: 20,000 biallelic SNPs × 1,200 samples, 1 % of calls missing),
//! generated once in the setup, plain and bgzipped. The timing covers parsing, hashing the
//! bytes, the site filters and building the matrix. The target: under 3 s.

use criterion::{Criterion, criterion_group, criterion_main};
use popgauge::data::sample_sheet::read_sample_sheet;
use popgauge::data::vcf::{VcfOptions, read_vcf};
use popgauge::progress::Silent;
use popgauge::recipe::SiteFilters;
use popgauge_sim::{SnpPanel, write_case};

fn read_panel(c: &mut Criterion) {
    let dir = tempfile::tempdir().expect("a temporary folder");
    let data = SnpPanel::benchmark().generate().expect("the benchmark panel simulates");
    let files = write_case(&data, dir.path()).expect("the case is written");
    let sheet_bytes = data.sample_sheet().into_bytes();
    let sheet = read_sample_sheet(&sheet_bytes, "samples.csv").expect("the sample sheet reads");
    let accept_filters = ["PASS".to_string(), ".".to_string()];
    let options = VcfOptions {
        file: "calls.vcf",
        sheet_file: "samples.csv",
        accept_filters: &accept_filters,
        sites: &SiteFilters::NONE,
        strict: false,
    };
    let mut group = c.benchmark_group("vcf");
    group.sample_size(10);
    for (name, path) in [
        ("read 20,000 SNPs × 1,200 samples, plain", &files.vcf),
        ("read 20,000 SNPs × 1,200 samples, bgzipped", &files.vcf_bgzipped),
    ] {
        group.bench_function(name, |b| {
            b.iter(|| {
                let read = read_vcf(path, &sheet, &options, &mut Silent).expect("the panel reads");
                assert_eq!(read.matrix.loci().len(), 20_000);
                std::hint::black_box(read.matrix)
            })
        });
    }
    group.finish();
}

criterion_group!(benches, read_panel);
criterion_main!(benches);
