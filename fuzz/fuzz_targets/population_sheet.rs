//! Any bytes as the population sheet (`populations.csv`: census sizes, coordinates, generation
//! times): Ok or a clean error with a help line, never a panic.
#![no_main]

use libfuzzer_sys::fuzz_target;
use popgauge_engine::data::populations::read_population_sheet;

fuzz_target!(|bytes: &[u8]| {
    if let Err(e) = read_population_sheet(bytes, "populations.csv") {
        assert!(e.to_string().contains("\n  help: "), "{e}");
    }
});
