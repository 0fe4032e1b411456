//! Simulated genotypes for the statistical tests and the benchmarks: a `popgauge-sim`
//! [`SampleSet`] as a [`GenotypeMatrix`] (the benchmarks include this file by path, so it uses
//! no `crate::` item).

use popgauge_abi::GenotypeMatrix;
use popgauge_sim::SampleSet;

/// The samples of `set` as a genotype matrix ([`SampleSet::to_genotype_matrix`]).
pub fn matrix_from_samples(set: &SampleSet) -> GenotypeMatrix {
    set.to_genotype_matrix().expect("a simulated sample set is a well-formed matrix")
}
