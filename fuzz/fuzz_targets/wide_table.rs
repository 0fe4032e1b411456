//! Any bytes into the wide-table reader: Ok or a clean error with a help line, never a panic.
#![no_main]

use libfuzzer_sys::fuzz_target;
use popgauge_engine::data::wide_table::{WideOptions, read_wide_table};

fuzz_target!(|bytes: &[u8]| {
    let missing = vec![String::new(), "NA".to_string(), "./.".to_string()];
    for strict in [false, true] {
        let options = WideOptions { file: "genotypes.csv", missing: &missing, ignore_columns: &[], strict };
        if let Err(e) = read_wide_table(bytes, &options) {
            // Every refusal renders and carries a help line.
            assert!(e.to_string().contains("\n  help: "), "{e}");
        }
    }
});
