//! Unit tests of the exact Hardy–Weinberg tests: small tables enumerated by hand and by
//! reference libraries, Monte Carlo against complete enumeration, and untestable tables.

use super::*;
use crate::test_support::assert_close;

fn table_of(alleles: usize, genotypes: &[(usize, usize, u32)]) -> GenotypeTable {
    let mut table = GenotypeTable::new();
    table.reset(alleles);
    for &(a, b, count) in genotypes {
        for _ in 0..count {
            table.add(a, b);
        }
    }
    table
}

fn biallelic(aa: u32, ab: u32, bb: u32) -> GenotypeTable {
    table_of(2, &[(0, 0, aa), (0, 1, ab), (1, 1, bb)])
}

fn no_rng() -> ChaCha8Rng {
    panic!("an exact test draws no random numbers")
}

fn exact(table: &GenotypeTable) -> HweTest {
    HweWorkspace::new().test(table, &TestSettings::default(), no_rng).unwrap()
}

/// Computed from the Levene–Haldane probability (module documentation), confirmed independently
/// in Python by direct enumeration of all tables with the factorial formula in exact rational
/// arithmetic (tests/reference/hwe_reference.py). Tolerance: 1e−6 relative to the printed
/// digits.
#[test]
fn exact_test_of_68_28_4_matches_enumeration() {
    let t = exact(&biallelic(68, 28, 4));
    assert_eq!(t.method, TestMethod::Exact);
    assert_close(t.p_value, 0.515367, 1e-6);
    assert_close(t.p_mid, 0.408344, 1e-6);
    assert_close(t.p_deficit, 0.392205, 1e-6);
    assert_close(t.p_excess, 0.821842, 1e-6);
    assert_eq!((t.standard_error, t.draws), (0.0, 0));
    let extreme = exact(&biallelic(57, 14, 29));
    assert_close(extreme.p_value / 1.50457e-12, 1.0, 1e-5);
    assert_close(extreme.p_mid / 7.71797e-13, 1.0, 1e-5);
    let no_heterozygotes = exact(&biallelic(10, 0, 10));
    assert_close(no_heterozygotes.p_value / 1.3403e-6, 1.0, 1e-4);
    let all_heterozygotes = exact(&biallelic(0, 10, 0));
    assert_close(all_heterozygotes.p_value, 0.00690641, 1e-8);
    assert_close(all_heterozygotes.p_excess, 0.00554245, 1e-8);
    assert_close(all_heterozygotes.p_deficit, 1.0, 1e-12);
    let balanced = exact(&biallelic(25, 50, 25));
    assert_close(balanced.p_value, 1.0, 1e-12);
    assert_close(balanced.p_mid, 0.920709, 1e-6);
    assert_close(balanced.p_deficit, 0.559617, 1e-6);
    assert_close(balanced.p_excess, 0.598966, 1e-6);
}

/// The observed table's own probability (computed from the Levene–Haldane probability,
/// confirmed by the Python enumeration): P(68, 28, 4) = 0.214047. The allele labels do not
/// matter: the common allele may be either code.
#[test]
fn observed_probability_and_label_symmetry() {
    let table = biallelic(68, 28, 4);
    assert_close(HweWorkspace::new().log_probability(&table).exp(), 0.214047, 1e-6);
    assert_eq!(exact(&biallelic(4, 28, 68)), exact(&table));
}

/// Reference p-values of the two-allele exact test (Wigginton, Cutler & Abecasis 2005)
/// shipped with sgkit's test suite as `sgkit/tests/test_hwe/sim_01.csv` (repository
/// sgkit-dev/sgkit, commit 6ad49defe202d6e04f67609a22dd610eed46b81e; columns n_het,
/// n_hom_1, n_hom_2, p), which sgkit checks its own implementation against. Rows taken
/// as printed there, spanning p from 1 to 6e−137. Tolerance: 1e−9 relative (both sides
/// are double-precision sums of the same recurrence; the first row of that file, one
/// heterozygous individual, is untestable here by design and left out).
#[test]
fn sgkit_reference_p_values() {
    let rows: [(u32, u32, u32, f64); 10] = [
        (51, 27, 26, 0.845926828898329),
        (151, 71, 99, 0.3684874920023832),
        (301, 158, 201, 0.03464156123462855),
        (351, 115, 117, 9.778051416840305e-07),
        (1251, 660, 594, 0.999999999999999),
        (1501, 545, 516, 4.0878258413432674e-18),
        (3151, 969, 1325, 3.506219413030305e-33),
        (5101, 1580, 1667, 2.7112967783602924e-92),
        (9251, 5364, 3987, 1.0),
        (9951, 3050, 3722, 6.099767234370392e-137),
    ];
    for (heterozygotes, hom_1, hom_2, expected) in rows {
        let t = exact(&biallelic(hom_1, heterozygotes, hom_2));
        assert_close(t.p_value / expected, 1.0, 1e-9);
    }
}

/// MN blood groups (data from memory, textbook example: 1787 MM, 3039 MN, 1303 NN; the
/// source table is to be verified). Exact p = 0.87742 is computed from the Levene–Haldane
/// probability and confirmed by the Python enumeration in exact rational arithmetic.
#[test]
fn mn_blood_groups() {
    let t = exact(&biallelic(1787, 3039, 1303));
    assert_close(t.p_value, 0.87742, 1e-5);
}

/// Computed from the Levene–Haldane probability, confirmed by the Python enumeration (24
/// tables, total probability 1): alleles A:6, B:5, C:5, n = 8 with AA 3, BB 2, BC 1, CC 2 has
/// P(obs) = 0.001665 and exact p = 0.002553.
#[test]
fn levene_three_allele_example_by_enumeration() {
    let table = table_of(3, &[(0, 0, 3), (1, 1, 2), (1, 2, 1), (2, 2, 2)]);
    let mut workspace = HweWorkspace::new();
    assert_close(workspace.log_probability(&table).exp(), 0.001665, 1e-6);
    let t = workspace.test(&table, &TestSettings::default(), no_rng).unwrap();
    assert_eq!(t.method, TestMethod::Exact);
    assert_close(t.p_value, 0.002553, 1e-6);
    // Only 1 heterozygote of 8 individuals: a significant deficit, no excess.
    assert!(t.p_deficit < 0.01 && t.p_excess > 0.99, "{t:?}");
}

/// docs/methods.md, "Hardy–Weinberg exact tests": the Monte Carlo estimate agrees with the
/// exact p within 3 standard errors (Levene example, B = 10,000 from a fixed seed), and the
/// same seed gives the same p̂.
#[test]
fn monte_carlo_agrees_with_enumeration() {
    let table = table_of(3, &[(0, 0, 3), (1, 1, 2), (1, 2, 1), (2, 2, 2)]);
    let settings = TestSettings { permutations: 10_000, enumeration_limit: 0 };
    let rng = || test_rng(Seed(7), "P", 2020, "L1");
    let mc = HweWorkspace::new().test(&table, &settings, rng).unwrap();
    assert_eq!((mc.method, mc.draws), (TestMethod::MonteCarlo, 10_000));
    assert!((mc.p_value - 0.002553).abs() <= 3.0 * mc.standard_error, "{mc:?}");
    assert!(mc.standard_error > 0.0);
    assert_eq!(HweWorkspace::new().test(&table, &settings, rng).unwrap(), mc);
    let exact = HweWorkspace::new().test(&table, &TestSettings::default(), no_rng).unwrap();
    assert!(
        (mc.p_deficit - exact.p_deficit).abs() <= 3.0 * (exact.p_deficit * (1.0 - exact.p_deficit) / 1e4).sqrt() + 1e-4
    );
}

/// Enumeration reproduces the two-allele recurrence (two independent routes to the same
/// exact distribution), and a four-allele table matches the Python enumeration
/// (tests/reference/hwe_reference.py, exact rationals, 180 tables): p = 0.29333824 (computed).
#[test]
fn enumeration_matches_recurrence_and_python() {
    let table = biallelic(6, 3, 1);
    let mut workspace = HweWorkspace::new();
    let observed = Observed { log_probability: workspace.log_probability(&table), heterozygotes: 3 };
    let by_enumeration = workspace.enumerate(&table, observed, u64::MAX).unwrap().exact();
    let by_recurrence = exact(&table);
    assert_close(by_enumeration.p_value, by_recurrence.p_value, 1e-12);
    assert_close(by_enumeration.p_mid, by_recurrence.p_mid, 1e-12);
    assert_close(by_recurrence.p_value, 0.479876, 1e-6);
    let four = table_of(4, &[(0, 0, 2), (0, 1, 3), (1, 2, 2), (2, 3, 1), (3, 3, 1), (0, 2, 1)]);
    let t = exact(&four);
    assert_eq!(t.method, TestMethod::Exact);
    assert_close(t.p_value, FOUR_ALLELE_P, 1e-7);
}

/// Printed by tests/reference/hwe_reference.py (exact rational enumeration).
const FOUR_ALLELE_P: f64 = 0.29333824;

/// Module doc: monomorphic loci and fewer than two individuals are untestable (`None`,
/// not p = 1); with no draws allowed, a table too large to enumerate is untestable too.
#[test]
fn untestable_tables() {
    let mut workspace = HweWorkspace::new();
    assert_eq!(workspace.test(&biallelic(5, 0, 0), &TestSettings::default(), no_rng), None);
    assert_eq!(workspace.test(&biallelic(0, 1, 0), &TestSettings::default(), no_rng), None);
    let mut empty = GenotypeTable::new();
    empty.reset(3);
    assert_eq!(workspace.test(&empty, &TestSettings::default(), no_rng), None);
    let table = table_of(3, &[(0, 0, 3), (1, 1, 2), (1, 2, 1), (2, 2, 2)]);
    let none = TestSettings { permutations: 0, enumeration_limit: 1 };
    assert_eq!(workspace.test(&table, &none, no_rng), None);
}
