//! JSON Schemas of the recipe, results, provenance record and its signature, generated from the Rust types.
//!
//! `schemas/` in the repository holds these files; a test regenerates them and fails when the
//! committed copies differ (run it with `POPGAUGE_UPDATE_SCHEMAS=1` to rewrite them).

use schemars::schema_for;

use crate::provenance::ProvenanceRecord;
use crate::provenance::signature::SignatureFile;
use crate::recipe::raw::RawRecipe;
use crate::results::ResultsDocument;

/// Each schema as (file name, pretty JSON with a trailing newline).
pub fn all_schemas() -> Vec<(&'static str, String)> {
    let pretty = |v: schemars::Schema| format!("{}\n", serde_json::to_string_pretty(&v).unwrap_or_default());
    vec![
        ("recipe.schema.json", pretty(schema_for!(RawRecipe))),
        ("results.schema.json", pretty(schema_for!(ResultsDocument))),
        ("provenance.schema.json", pretty(schema_for!(ProvenanceRecord))),
        ("signature.schema.json", pretty(schema_for!(SignatureFile))),
        ("plugin-descriptor.schema.json", pretty(schema_for!(popgauge_abi::Descriptor))),
    ]
}
