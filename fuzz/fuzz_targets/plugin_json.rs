//! Any bytes as a plugin's descriptor JSON or result JSON: decoded or refused, never a panic.
#![no_main]

use libfuzzer_sys::fuzz_target;
use popgauge_engine::host::{interpret_output, parse_descriptor};
use popgauge_abi::ffi::STATUS_OK;

fuzz_target!(|bytes: &[u8]| {
    let _ = parse_descriptor(bytes, "libfuzz.so");
    if let Ok(output) = interpret_output(STATUS_OK, bytes) {
        // A decoded result serialises again and decodes to the same value (the engine hashes
        // and writes what it decoded).
        let json = serde_json::to_vec(&output).expect("a decoded result serialises");
        let again: popgauge_abi::StepOutput = serde_json::from_slice(&json).expect("and decodes again");
        assert_eq!(again, output);
    }
});
