//! Wright's (1931) decay of heterozygosity and rise of inbreeding under drift in an ideal
//! population of effective size Ne:
//!
//! - heterozygosity retained after *t* generations: H_t/H₀ = (1 − 1/(2Ne))ᵗ;
//! - inbreeding accumulated by drift over those *t* generations, relative to today's population
//!   (today's population as the base, F = 0 now): F_drift(t) = 1 − (1 − 1/(2Ne))ᵗ = 1 − H_t/H₀;
//! - generations until a fraction *x* of the heterozygosity is lost:
//!   t = ln(1 − x) / ln(1 − 1/(2Ne)).
//!
//! F_drift is not the FIS of a sample. FIS measures non-random mating within today's
//! population relative to its own Hardy–Weinberg proportions, F_drift the drift from today's
//! population as a whole; the two combine as 1 − F_IT = (1 − F_IS)(1 − F_ST) (Wright 1951), so a
//! projection must never start from FIS.
//!
//! Units: *t* is in **generations**, not years (divide a horizon in years by the generation time).
//!
//! Edge cases, chosen so that callers never see a negative or out-of-range proportion:
//!
//! - Ne = +∞ (an `"inf"` estimate): no drift, so H_t/H₀ = 1, F_drift = 0 and no finite number
//!   of generations loses anything (`+∞`).
//! - 0 < Ne ≤ ½: the per-generation retention 1 − 1/(2Ne) would be ≤ 0 (negative for Ne < ½),
//!   which has no biological meaning; it is clamped to 0, i.e. all heterozygosity is lost in the
//!   first generation (H_t/H₀ = 0 and F_drift = 1 for t > 0, and exactly 1 generation to lose
//!   any fraction).
//! - Ne ≤ 0, NaN Ne, negative or NaN *t*, or a fraction outside [0, 1) are not sizes, times or
//!   fractions: the result is NaN, which tables print as `null`.
//!
//! Wright S (1931) Evolution in Mendelian populations. *Genetics* 16:97–159.
//! Wright S (1951) The genetical structure of populations. *Ann Eugen* 15:323–354.
//! Falconer DS, Mackay TFC (1996) *Introduction to Quantitative Genetics*, 4th ed. Longman.

/// The share of fitness retained after inbreeding ΔF rises by `inbreeding`, with
/// `lethal_equivalents` diploid lethal equivalents (2B): W_F/W₀ = exp(−B·ΔF) with B = 2B/2 the
/// lethal equivalents per gamete of Morton, Crow & Muller (1956), whose regression
/// ln W = ln W₀ − B·F counts them per haploid gamete. NaN when `inbreeding` is NaN.
pub fn fitness_retained(lethal_equivalents: f64, inbreeding: f64) -> f64 {
    (-(lethal_equivalents / 2.0) * inbreeding).exp()
}

/// The full reference of the decay formulas, for a step's citations.
pub const WRIGHT_1931: &str = "Wright S (1931) Evolution in Mendelian populations. Genetics 16:97–159.";

/// The fraction of heterozygosity kept per generation, 1 − 1/(2Ne), clamped to [0, 1];
/// NaN when `ne` is not a positive size.
fn retention_per_generation(ne: f64) -> f64 {
    if ne.is_nan() || ne <= 0.0 {
        return f64::NAN;
    }
    if ne.is_infinite() {
        return 1.0;
    }
    (1.0 - 1.0 / (2.0 * ne)).max(0.0)
}

/// H_t/H₀ = (1 − 1/(2Ne))ᵗ: the share of today's heterozygosity left after `generations`
/// generations at effective size `ne` (Wright 1931). 1 for Ne = ∞ or t = 0; NaN for Ne ≤ 0 or
/// t < 0 (see the module doc for Ne ≤ ½).
pub fn heterozygosity_retained(ne: f64, generations: f64) -> f64 {
    if generations.is_nan() || generations < 0.0 {
        return f64::NAN;
    }
    retention_per_generation(ne).powf(generations)
}

/// F_drift = 1 − (1 − 1/(2Ne))ᵗ: the inbreeding that drift accumulates over `generations`
/// generations at effective size `ne`, relative to today's population (Wright 1931). By
/// construction it is the share of today's heterozygosity lost, 1 − H_t/H₀; 0 for Ne = ∞.
pub fn drift_inbreeding(ne: f64, generations: f64) -> f64 {
    1.0 - heterozygosity_retained(ne, generations)
}

/// Generations until `fraction` (in [0, 1)) of today's heterozygosity is lost at effective size
/// `ne`: ln(1 − fraction)/ln(1 − 1/(2Ne)). 0 for a fraction of 0, +∞ for Ne = ∞ (with a positive
/// fraction), 1 for 0 < Ne ≤ ½; NaN for a fraction outside [0, 1) or Ne ≤ 0.
pub fn generations_to_lose(fraction: f64, ne: f64) -> f64 {
    let retention = retention_per_generation(ne);
    if !(0.0..1.0).contains(&fraction) || retention.is_nan() {
        return f64::NAN;
    }
    if fraction == 0.0 {
        return 0.0;
    }
    if retention == 1.0 {
        return f64::INFINITY;
    }
    if retention == 0.0 {
        return 1.0;
    }
    (1.0 - fraction).ln() / retention.ln()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::test_support::assert_close;

    /// Ne = 50, t = 10 → H_t/H₀ = 0.99¹⁰ = 0.904382 (hand calculation of Wright's 1931 formula).
    #[test]
    fn heterozygosity_retained_matches_check_value() {
        assert_close(heterozygosity_retained(50.0, 10.0), 0.904_382, 1e-6);
        assert_close(heterozygosity_retained(50.0, 0.0), 1.0, 0.0);
        assert_close(heterozygosity_retained(f64::INFINITY, 100.0), 1.0, 0.0);
    }

    /// F_drift = 1 − (1 − 1/(2Ne))ᵗ (Wright 1931): 1 − 0.99¹⁰ = 0.095618 at Ne = 50, t = 10 and
    /// 1 − 0.98² = 0.0396 at Ne = 25, t = 2 (hand calculations); it is exactly the share of
    /// heterozygosity lost, and 0 for an infinite Ne.
    #[test]
    fn drift_inbreeding_is_the_complement_of_retention() {
        assert_close(drift_inbreeding(50.0, 10.0), 0.095_618, 1e-6);
        assert_close(drift_inbreeding(25.0, 2.0), 0.0396, 1e-12);
        for (ne, t) in [(50.0, 10.0), (7.3, 4.5), (1e6, 25.0), (0.4, 2.0)] {
            // Equal up to the rounding of one subtraction.
            assert_close(drift_inbreeding(ne, t) + heterozygosity_retained(ne, t), 1.0, 1e-15);
        }
        assert_eq!(drift_inbreeding(f64::INFINITY, 7.0), 0.0);
    }

    /// Inverse of the decay: losing 1 − 0.904382 at Ne = 50 takes 10 generations (the check
    /// value above, inverted); losing 10% at Ne = 50 takes ln 0.9/ln 0.99 = 10.483283 (hand calculation).
    #[test]
    fn generations_to_lose_inverts_the_decay() {
        let retained = heterozygosity_retained(50.0, 10.0);
        assert_close(generations_to_lose(1.0 - retained, 50.0), 10.0, 1e-9);
        assert_close(generations_to_lose(0.1, 50.0), 0.9f64.ln() / 0.99f64.ln(), 1e-12);
        assert_close(generations_to_lose(0.1, 50.0), 10.483_283, 1e-6);
        assert_eq!(generations_to_lose(0.1, f64::INFINITY), f64::INFINITY);
        assert_eq!(generations_to_lose(0.0, 50.0), 0.0);
    }

    /// By hand from Morton, Crow & Muller (1956), W/W₀ = exp(−B·F) with B per gamete: 12 diploid
    /// lethal equivalents (B = 6) at F = 0.1 keep exp(−0.6) = 0.548812; at F = 0 everything.
    #[test]
    fn fitness_retained_uses_lethal_equivalents_per_gamete() {
        assert_close(fitness_retained(12.0, 0.1), 0.548_812, 1e-6);
        assert_eq!(fitness_retained(12.0, 0.0), 1.0);
        assert!(fitness_retained(12.0, f64::NAN).is_nan());
    }

    /// Degenerate sizes never give a negative or >1 proportion (common practice: a retention
    /// factor below 0 is meaningless, so Ne ≤ ½ loses everything in one generation).
    #[test]
    fn degenerate_sizes_are_handled() {
        assert_eq!(heterozygosity_retained(0.25, 3.0), 0.0);
        assert_eq!(heterozygosity_retained(0.5, 1.0), 0.0);
        assert_eq!(drift_inbreeding(0.25, 3.0), 1.0);
        assert_eq!(generations_to_lose(0.5, 0.4), 1.0);
        assert!(heterozygosity_retained(0.0, 1.0).is_nan());
        assert!(heterozygosity_retained(-5.0, 1.0).is_nan());
        assert!(heterozygosity_retained(50.0, -1.0).is_nan());
        assert!(generations_to_lose(1.0, 50.0).is_nan());
        assert!(generations_to_lose(0.1, f64::NAN).is_nan());
    }
}
