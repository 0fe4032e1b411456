//! Resampling over loci for the built-in steps: the SDK's [`popgauge_abi::resampling`] (the
//! seeded random stream, the percentile bootstrap, the delete-one jackknife, the median and
//! quantiles), which external plugins use too, so built-in and plugin steps compute their
//! intervals the same way.

pub use popgauge_abi::resampling::*;
