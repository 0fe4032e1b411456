//! # popgauge-builtin
//!
//! The standard popgauge steps. Each implements [`popgauge_abi::Step`] exactly as an external
//! plugin would, so the engine cannot tell a built-in step from a loaded one.
//!
//! - [`steps`] holds the registry [`steps::BUILTIN`] and one module per step, named after its
//!   `uses` name (`validate`, `diversity`); [`steps::find`] looks a step up by that name.
//! - [`stats`] holds the estimators the steps share (heterozygosity, null-allele frequency),
//!   written once.
//!
//! ```
//! let step = popgauge_builtin::steps::find("validate").expect("validate is built in");
//! assert_eq!(step.descriptor().version, "0.1.0");
//! assert!(popgauge_builtin::steps::find("no-such-step").is_none());
//! ```
#![warn(missing_docs)]

mod packing;
mod special_values;
pub mod stats;
pub mod steps;

#[cfg(test)]
mod test_support;
