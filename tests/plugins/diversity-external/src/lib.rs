//! The built-in `diversity` step exported as an external plugin through the SDK macro, so a
//! test can check that the same step gives identical results in process and across the ABI.

popgauge_abi::export_step!(popgauge_builtin::steps::diversity::Diversity);
