//! Provenance: the record of what went in, what ran and what came out, its W3C PROV view and
//! its optional signature. Hashing is in [`crate::hash`]; the audit that re-runs a case from
//! its record is beside the pipeline, in the `popgauge` crate.

pub mod entries;
pub mod prov;
pub mod record;
pub mod signature;

pub use record::ProvenanceRecord;
