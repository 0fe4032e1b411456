//! Any bytes as `case.toml`: the strict parser and the full loader (paths, steps, parameters)
//! give a recipe or a clean error.
#![no_main]

use std::sync::OnceLock;

use libfuzzer_sys::fuzz_target;
use popgauge_engine::recipe::load_recipe;
use popgauge_engine::recipe::resolve::parse;

/// A case folder with a genotype table and a population sheet, made once per process.
fn case_dir() -> &'static tempfile::TempDir {
    static DIR: OnceLock<tempfile::TempDir> = OnceLock::new();
    DIR.get_or_init(|| {
        let dir = tempfile::tempdir().expect("temporary folder");
        std::fs::write(dir.path().join("genotypes.csv"), "sample,population,year,L1\na,N,2020,1/2\n").expect("write");
        std::fs::write(dir.path().join("populations.csv"), "population\nN\n").expect("write");
        dir
    })
}

fuzz_target!(|bytes: &[u8]| {
    let Ok(text) = std::str::from_utf8(bytes) else { return };
    if let Err(e) = parse(text) {
        assert!(e.to_string().contains("\n  help: "), "{e}");
        return;
    }
    let dir = case_dir();
    std::fs::write(dir.path().join("case.toml"), bytes).expect("write case.toml");
    if let Err(e) = load_recipe(dir.path(), false) {
        assert!(e.to_string().contains("\n  help: "), "{e}");
    }
});
