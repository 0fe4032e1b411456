//! The registry of built-in steps: one module per step, named after its `uses` name, and one
//! line per step in [`BUILTIN`].

use popgauge_abi::Step;

pub mod differentiation;
pub mod diversity;
pub mod hwe;
pub mod inbreeding;
pub mod ne_hetx;
pub mod ne_ld;
pub mod ne_temporal;
pub mod status;
pub mod trend;
pub mod validate;

/// Every built-in step, in the order `popgauge steps` lists them.
pub const BUILTIN: &[&dyn Step] = &[
    &validate::Validate,
    &diversity::Diversity,
    &hwe::Hwe,
    &differentiation::Differentiation,
    &ne_ld::NeLd,
    &ne_temporal::NeTemporal,
    &ne_hetx::NeHetx,
    &inbreeding::Inbreeding,
    &trend::Trend,
    &status::Status,
];

/// The built-in step a recipe's `uses` names, if any.
pub fn find(uses: &str) -> Option<&'static dyn Step> {
    BUILTIN.iter().copied().find(|step| step.descriptor().uses == uses)
}

#[cfg(test)]
mod tests {
    use std::collections::BTreeSet;

    use super::*;

    /// Common practice: a recipe's `uses` must name exactly one step.
    #[test]
    fn uses_names_are_unique_and_found() {
        let names: Vec<String> = BUILTIN.iter().map(|s| s.descriptor().uses).collect();
        let unique: BTreeSet<&String> = names.iter().collect();
        assert_eq!(unique.len(), names.len(), "duplicate uses names in {names:?}");
        for name in &names {
            let found = find(name).expect("every registered step is found by its name");
            assert_eq!(&found.descriptor().uses, name);
        }
        assert!(find("validat").is_none());
    }

    /// `uses` names are part of the interface (recipes name steps by them).
    #[test]
    fn registry_holds_the_designed_names() {
        assert!(find("validate").is_some());
        assert!(find("diversity").is_some());
        assert!(find("hwe").is_some());
    }

    /// STYLE: every default is within its own range, parameter names are unique within a step,
    /// `uses` names are kebab-case and every parameter has a description.
    #[test]
    fn descriptors_are_well_formed() {
        for step in BUILTIN {
            let descriptor = step.descriptor();
            let uses = &descriptor.uses;
            assert!(descriptor.check_defaults().is_ok(), "{uses}: {:?}", descriptor.check_defaults());
            let params: BTreeSet<&str> = descriptor.params.iter().map(|p| p.name.as_str()).collect();
            assert_eq!(params.len(), descriptor.params.len(), "{uses}: duplicate parameter names");
            assert!(uses.chars().all(|c| c.is_ascii_lowercase() || c == '-'), "{uses} is not kebab-case");
            assert!(
                descriptor.params.iter().all(|p| !p.description.is_empty()),
                "{uses}: a parameter lacks a description"
            );
            assert!(!descriptor.summary.is_empty());
        }
    }
}
