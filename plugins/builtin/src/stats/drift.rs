//! Wright's (1931) decay of heterozygosity and rise of inbreeding under drift in an ideal
//! population of effective size Ne (METHODS §1, "Wright's decay"):
//!
//! - heterozygosity retained after *t* generations: H_t/H₀ = (1 − 1/(2Ne))ᵗ;
//! - inbreeding after *t* generations from a current F₀: F_t = 1 − (1 − F₀)(1 − 1/(2Ne))ᵗ;
//! - generations until a fraction *x* of the heterozygosity is lost:
//!   t = ln(1 − x) / ln(1 − 1/(2Ne)).
//!
//! Units: *t* is in **generations**, not years (divide a horizon in years by the generation time).
//!
//! Edge cases, chosen so that callers never see a negative or out-of-range proportion:
//!
//! - Ne = +∞ (an `"inf"` estimate): no drift, so H_t/H₀ = 1, F_t = F₀ and no finite number of
//!   generations loses anything (`+∞`).
//! - 0 < Ne ≤ ½: the per-generation retention 1 − 1/(2Ne) would be ≤ 0 (negative for Ne < ½),
//!   which has no biological meaning; it is clamped to 0, i.e. all heterozygosity is lost in the
//!   first generation (H_t/H₀ = 0 and F_t = 1 for t > 0, and exactly 1 generation to lose any
//!   fraction).
//! - Ne ≤ 0, NaN Ne, negative or NaN *t*, or a fraction outside [0, 1) are not sizes, times or
//!   fractions: the result is NaN, which tables print as `null`.
//!
//! Wright S (1931) Evolution in Mendelian populations. *Genetics* 16:97–159.
//! Falconer DS, Mackay TFC (1996) *Introduction to Quantitative Genetics*, 4th ed. Longman.

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

/// F_t = 1 − (1 − F₀)(1 − 1/(2Ne))ᵗ: the inbreeding coefficient after `generations`
/// generations at effective size `ne`, starting from `f0` (Wright 1931). Equals `f0` for Ne = ∞.
pub fn inbreeding_after(ne: f64, generations: f64, f0: f64) -> f64 {
    1.0 - (1.0 - f0) * heterozygosity_retained(ne, generations)
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

    /// METHODS §10 item 16 (computed; re-derived in tests/reference/ne_formulas.py):
    /// Ne = 50, t = 10 → H_t/H₀ = 0.99¹⁰ = 0.904382. Formula: Wright (1931), common practice.
    #[test]
    fn heterozygosity_retained_matches_check_value() {
        assert_close(heterozygosity_retained(50.0, 10.0), 0.904_382, 1e-6);
        assert_close(heterozygosity_retained(50.0, 0.0), 1.0, 0.0);
        assert_close(heterozygosity_retained(f64::INFINITY, 100.0), 1.0, 0.0);
    }

    /// F_t = 1 − (1 − F₀)·H_t/H₀ (Wright 1931; common practice); from F₀ = 0 it is the
    /// complement of the retained heterozygosity: 1 − 0.904382 = 0.095618 (METHODS §10 item 16).
    #[test]
    fn inbreeding_after_is_complement_of_retention() {
        assert_close(inbreeding_after(50.0, 10.0, 0.0), 1.0 - 0.904_382, 1e-6);
        // Hand calculation: F0 = 0.1, Ne = 25, t = 2 → 1 − 0.9·0.98² = 0.13564.
        assert_close(inbreeding_after(25.0, 2.0, 0.1), 0.135_64, 1e-12);
        // 1 − 0.8·1 rounds to 0.19999999999999996 in binary floating point.
        assert_close(inbreeding_after(f64::INFINITY, 7.0, 0.2), 0.2, 1e-15);
    }

    /// Inverse of the decay: losing 1 − 0.904382 at Ne = 50 takes 10 generations (METHODS §10
    /// item 16, inverted); losing 10% at Ne = 50 takes ln 0.9/ln 0.99 = 10.483283 (hand calculation).
    #[test]
    fn generations_to_lose_inverts_the_decay() {
        let retained = heterozygosity_retained(50.0, 10.0);
        assert_close(generations_to_lose(1.0 - retained, 50.0), 10.0, 1e-9);
        assert_close(generations_to_lose(0.1, 50.0), 0.9f64.ln() / 0.99f64.ln(), 1e-12);
        assert_close(generations_to_lose(0.1, 50.0), 10.483_283, 1e-6);
        assert_eq!(generations_to_lose(0.1, f64::INFINITY), f64::INFINITY);
        assert_eq!(generations_to_lose(0.0, 50.0), 0.0);
    }

    /// Degenerate sizes never give a negative or >1 proportion (common practice: a retention
    /// factor below 0 is meaningless, so Ne ≤ ½ loses everything in one generation).
    #[test]
    fn degenerate_sizes_are_handled() {
        assert_eq!(heterozygosity_retained(0.25, 3.0), 0.0);
        assert_eq!(heterozygosity_retained(0.5, 1.0), 0.0);
        assert_eq!(inbreeding_after(0.25, 3.0, 0.1), 1.0);
        assert_eq!(generations_to_lose(0.5, 0.4), 1.0);
        assert!(heterozygosity_retained(0.0, 1.0).is_nan());
        assert!(heterozygosity_retained(-5.0, 1.0).is_nan());
        assert!(heterozygosity_retained(50.0, -1.0).is_nan());
        assert!(generations_to_lose(1.0, 50.0).is_nan());
        assert!(generations_to_lose(0.1, f64::NAN).is_nan());
    }
}
