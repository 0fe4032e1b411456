//! Any bytes as a VCF file (plain, or bgzipped when they start with the gzip magic) with a
//! fixed sample sheet: Ok or a clean error with a help line, never a panic.
#![no_main]

use std::io::Write as _;
use std::sync::OnceLock;

use libfuzzer_sys::fuzz_target;
use popgauge_engine::data::sample_sheet::{SampleSheet, read_sample_sheet};
use popgauge_engine::data::vcf::{VcfOptions, read_vcf};
use popgauge_engine::progress::Silent;
use popgauge_engine::recipe::SiteFilters;

fn sheet() -> &'static SampleSheet {
    static SHEET: OnceLock<SampleSheet> = OnceLock::new();
    SHEET.get_or_init(|| {
        let text = b"sample,population,year\na1,North,2020\na2,North,2020\nb1,South,2020\nb2,South,2020\n";
        read_sample_sheet(text, "samples.csv").expect("a valid sheet")
    })
}

fuzz_target!(|bytes: &[u8]| {
    // read_vcf reads a path: one scratch file per fuzzing process.
    let path = std::env::temp_dir().join(format!("popgauge-fuzz-vcf-{}.vcf", std::process::id()));
    let Ok(mut file) = std::fs::File::create(&path) else { return };
    if file.write_all(bytes).is_err() {
        return;
    }
    drop(file);
    let accept = vec!["PASS".to_string(), ".".to_string()];
    for strict in [false, true] {
        let options = VcfOptions {
            file: "calls.vcf",
            sheet_file: "samples.csv",
            accept_filters: &accept,
            sites: &SiteFilters::NONE,
            strict,
        };
        if let Err(e) = read_vcf(&path, sheet(), &options, &mut Silent) {
            assert!(e.to_string().contains("\n  help: "), "{e}");
        }
    }
});
