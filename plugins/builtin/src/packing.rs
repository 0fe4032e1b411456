//! Where the steps get their packed genotypes ([`popgauge_abi::PackedGenotypes`]): one place,
//! so that tests can run a step with every locus on the general path and compare the two
//! paths on the same data (`tests_support::general_and_packed`, compiled for tests only).

use popgauge_abi::{GenotypeView, PackedGenotypes, SampleIdx};

/// Packs every sample of `view`, in view order.
pub(crate) fn pack(view: GenotypeView<'_>) -> PackedGenotypes<'_> {
    let all: Vec<SampleIdx> = (0..view.n_samples()).collect();
    pack_samples(view, &all)
}

/// Packs the view samples `samples`, in the order given.
pub(crate) fn pack_samples<'a>(view: GenotypeView<'a>, samples: &[SampleIdx]) -> PackedGenotypes<'a> {
    #[cfg(test)]
    if tests_support::GENERAL_ONLY.load(std::sync::atomic::Ordering::SeqCst) {
        return PackedGenotypes::general_path_only(view, samples);
    }
    PackedGenotypes::for_samples(view, samples)
}

#[cfg(test)]
pub(crate) mod tests_support {
    use std::sync::Mutex;
    use std::sync::atomic::{AtomicBool, Ordering};

    /// While true, [`super::pack_samples`] packs no locus.
    pub(super) static GENERAL_ONLY: AtomicBool = AtomicBool::new(false);
    /// Serialises the comparisons, so that one never runs its packed half while another has
    /// switched packing off.
    static COMPARISON: Mutex<()> = Mutex::new(());

    /// Runs `run` once with every locus on the general path, then once with packing on, and
    /// returns both results (general first). Other tests running meanwhile may take the
    /// general path for a moment, which gives them the same results by construction.
    pub(crate) fn general_and_packed<T>(run: impl Fn() -> T) -> (T, T) {
        let _serial = COMPARISON.lock().unwrap_or_else(|poisoned| poisoned.into_inner());
        GENERAL_ONLY.store(true, Ordering::SeqCst);
        let general = run();
        GENERAL_ONLY.store(false, Ordering::SeqCst);
        (general, run())
    }
}

#[cfg(test)]
mod tests;
