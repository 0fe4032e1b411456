//! Any bytes as `provenance.json`, read the way `popgauge verify` reads it: Ok or a clean
//! error, never a panic. A record that parses has a PROV view that can be derived from it, and
//! it survives a round trip through JSON unchanged.
#![no_main]

use libfuzzer_sys::fuzz_target;
use popgauge_engine::provenance::prov::ProvDocument;
use popgauge_engine::provenance::record::{RecordReadError, parse_record};

fuzz_target!(|bytes: &[u8]| {
    match parse_record(bytes) {
        Ok(record) => {
            let _view = ProvDocument::of(&record.facts());
            let text = serde_json::to_string(&record).expect("a parsed record serialises");
            let again = parse_record(text.as_bytes()).expect("a serialised record parses");
            assert_eq!(again, record);
        }
        Err(RecordReadError::Unreadable(message)) => assert!(!message.is_empty()),
        Err(RecordReadError::OtherFormat { tool, .. }) => assert!(!tool.is_empty()),
    }
});
