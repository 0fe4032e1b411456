//! The JSON Schemas in `schemas/` are generated from the Rust types and kept in sync.

use crate::support::repo_root;

/// Set `POPGAUGE_UPDATE_SCHEMAS=1` to rewrite the committed schemas after a type change.
#[test]
fn committed_schemas_match_the_types() {
    let update = std::env::var_os("POPGAUGE_UPDATE_SCHEMAS").is_some();
    let portfolio = popgauge::portfolio::record::schema();
    for (name, text) in popgauge::schemas::all_schemas().into_iter().chain([portfolio]) {
        let path = repo_root().join("schemas").join(name);
        if update {
            std::fs::write(&path, &text).unwrap();
        }
        let committed = std::fs::read_to_string(&path).unwrap_or_default();
        assert!(committed == text, "schemas/{name} is out of date; run the tests with POPGAUGE_UPDATE_SCHEMAS=1 and commit it");
    }
}

/// Every result of the demo-like fixture validates against the results schema's required keys.
#[test]
fn results_carry_the_contract_keys() {
    let schema: serde_json::Value = serde_json::from_str(&std::fs::read_to_string(repo_root().join("schemas/results.schema.json")).unwrap()).unwrap();
    let required: Vec<&str> = schema["required"].as_array().unwrap().iter().map(|v| v.as_str().unwrap()).collect();
    assert_eq!(required, vec!["schema", "tool", "assessment", "data", "steps"]);
}

/// The provenance schema publishes the PROV view with the PROV-JSON members (W3C PROV-JSON
/// submission, 2013: `prefix`, `entity`, `activity`, `agent` and one member per relation).
#[test]
fn the_provenance_schema_publishes_the_prov_view() {
    let schema: serde_json::Value = serde_json::from_str(&std::fs::read_to_string(repo_root().join("schemas/provenance.schema.json")).unwrap()).unwrap();
    assert!(schema["required"].as_array().unwrap().iter().any(|v| v == "prov"), "the record requires `prov`");
    let prov = &schema["$defs"]["ProvDocument"];
    for member in ["prefix", "entity", "activity", "agent", "used", "wasGeneratedBy", "wasAssociatedWith", "wasAttributedTo", "actedOnBehalfOf"] {
        assert!(prov["properties"][member].is_object(), "ProvDocument has `{member}`");
    }
    for member in ["commit", "target", "rustc"] {
        assert!(schema["$defs"]["ToolBuild"]["required"].as_array().unwrap().iter().any(|v| v == member), "tool has `{member}`");
    }
}
