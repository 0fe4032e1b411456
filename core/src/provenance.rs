//! Provenance: hashing, and the record of what went in, what ran and what came out.

pub mod hash;
pub mod prov;
pub mod record;
pub mod signature;
pub mod verify;

pub use record::ProvenanceRecord;
