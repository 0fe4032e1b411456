use popgauge_abi::{AlleleCode, AssessmentInfo, GenotypeMatrix, LocusMeta, Params as ResolvedParams, SampleMeta, Seed};

use super::*;

/// Builds a matrix from per-sample genotypes given as allele codes (1-based, 0 untyped).
fn matrix(samples: &[(&str, &str, i32)], genotypes: &[Vec<(u16, u16)>], alleles_per_locus: usize) -> GenotypeMatrix {
    let n_loci = genotypes[0].len();
    let meta = samples
        .iter()
        .map(|(id, p, y)| SampleMeta { id: id.to_string(), population: p.to_string(), year: *y })
        .collect();
    let loci = (0..n_loci)
        .map(|l| LocusMeta {
            name: format!("L{}", l + 1),
            alleles: (1..=alleles_per_locus).map(|a| a.to_string()).collect(),
            chromosome: None,
            position: None,
        })
        .collect();
    let mut codes = Vec::new();
    for l in 0..n_loci {
        for g in genotypes {
            codes.push(AlleleCode(g[l].0));
            codes.push(AlleleCode(g[l].1));
        }
    }
    GenotypeMatrix::new(meta, loci, codes).unwrap()
}

fn run(m: &GenotypeMatrix, bootstrap: u32) -> StepOutput {
    let step = Relatedness;
    let given = [("bootstrap".to_string(), json!(bootstrap))].into_iter().collect();
    let params: ResolvedParams = step.descriptor().resolve(&given).unwrap();
    let (s, l) = (m.all_sample_indices(), m.all_locus_indices());
    let assessment = AssessmentInfo::default();
    let ctx = StepContext::new(m.full_view(&s, &l), &params, Seed(5)).with_assessment(&assessment);
    step.run(&ctx).unwrap()
}

fn column(table: &Table, row: usize, name: &str) -> Option<f64> {
    table.rows[row][table.column(name).unwrap()].as_f64()
}

/// Hand calculation with the formula of Queller & Goodnight (1989), frequencies of the group
/// without the pair: x = 1/1, y = 1/2, z1 = 2/2, z2 = 1/2 at one locus. (x, y): reference z1,
/// z2 → p1 = 0.25, p2 = 0.75; numerator 2 − 1.5 = 0.5, denominator 2 + 1 − 1.5 = 1.5, r = 1/3.
/// (x, z1): p = 0.5, 0.5; r = −2/2 = −1. (y, z2): denominator 0, r undefined. The other three
/// pairs are 1/3, so r_mean = (4·1/3 − 1)/5 = 1/15.
#[test]
fn matches_a_hand_calculation() {
    let samples = [("x", "P", 2020), ("y", "P", 2020), ("z1", "P", 2020), ("z2", "P", 2020)];
    let genotypes = vec![vec![(1, 1)], vec![(1, 2)], vec![(2, 2)], vec![(1, 2)]];
    let out = run(&matrix(&samples, &genotypes, 2), 50);
    let pairs = &out.tables["pairs"];
    let r: Vec<Option<f64>> = (0..pairs.rows.len()).map(|i| column(pairs, i, "r")).collect();
    let third = Some(1.0 / 3.0);
    let expected = [third, Some(-1.0), third, third, None, third];
    for (got, want) in r.iter().zip(expected) {
        match (got, want) {
            (Some(g), Some(w)) => assert!((g - w).abs() < 1e-12, "{r:?}"),
            (g, w) => assert_eq!(*g, w, "{r:?}"),
        }
    }
    let by_group = &out.tables["by_group"];
    assert!((column(by_group, 0, "r_mean").unwrap() - 1.0 / 15.0).abs() < 1e-12);
    assert_eq!(column(by_group, 0, "pairs"), Some(6.0));
    // One locus: every bootstrap resample is the same data set.
    assert!((column(by_group, 0, "r_low").unwrap() - 1.0 / 15.0).abs() < 1e-12);
    assert!((column(by_group, 0, "r_high").unwrap() - 1.0 / 15.0).abs() < 1e-12);
}

/// Simulated pedigree (40 unrelated founders, 20 offspring of random founder pairs, 400 loci
/// with 4 alleles of random frequencies). Expected r (Queller & Goodnight 1989; common
/// practice): 0.5 for parent–offspring, 0 for unrelated founders. Tolerance 0.05: the standard
/// error of a mean over the 40 parent–offspring pairs at 400 loci is about 0.01, and relatives
/// in the reference sample pull the estimate slightly down.
#[test]
fn parent_offspring_near_one_half_unrelated_near_zero() {
    let mut rng = SplitMix64::new(Seed(2026), "pedigree");
    let (n_loci, founders, offspring) = (400usize, 40usize, 20usize);
    let frequencies: Vec<[f64; 4]> = (0..n_loci)
        .map(|_| {
            let w: Vec<f64> = (0..4).map(|_| 0.2 + (rng.next_u64() >> 11) as f64 / (1u64 << 53) as f64).collect();
            let s: f64 = w.iter().sum();
            [w[0] / s, w[1] / s, w[2] / s, w[3] / s]
        })
        .collect();
    let draw = |f: &[f64; 4], rng: &mut SplitMix64| {
        let u = (rng.next_u64() >> 11) as f64 / (1u64 << 53) as f64;
        let mut acc = 0.0;
        for (k, p) in f.iter().enumerate() {
            acc += p;
            if u < acc {
                return k as u16 + 1;
            }
        }
        4
    };
    let mut genotypes: Vec<Vec<(u16, u16)>> =
        (0..founders).map(|_| frequencies.iter().map(|f| (draw(f, &mut rng), draw(f, &mut rng))).collect()).collect();
    let mut parents = Vec::new();
    for _ in 0..offspring {
        let mother = rng.below(founders);
        let father = (mother + 1 + rng.below(founders - 1)) % founders;
        let child = (0..n_loci)
            .map(|l| {
                let pick = |g: (u16, u16), r: &mut SplitMix64| if r.below(2) == 0 { g.0 } else { g.1 };
                (pick(genotypes[mother][l], &mut rng), pick(genotypes[father][l], &mut rng))
            })
            .collect();
        genotypes.push(child);
        parents.push((mother, father));
    }
    let ids: Vec<String> = (0..founders + offspring).map(|i| format!("s{i}")).collect();
    let samples: Vec<(&str, &str, i32)> = ids.iter().map(|id| (id.as_str(), "P", 2020)).collect();
    let out = run(&matrix(&samples, &genotypes, 4), 0);
    let pairs = &out.tables["pairs"];
    let r_of = |a: usize, b: usize| {
        let (a, b) = (format!("s{}", a.min(b)), format!("s{}", a.max(b)));
        let row = (0..pairs.rows.len())
            .find(|&i| pairs.rows[i][2].as_str() == Some(&a) && pairs.rows[i][3].as_str() == Some(&b))
            .unwrap();
        column(pairs, row, "r").unwrap()
    };
    let po: Vec<f64> =
        parents.iter().enumerate().flat_map(|(c, &(m, f))| [r_of(founders + c, m), r_of(founders + c, f)]).collect();
    let mean_po = po.iter().sum::<f64>() / po.len() as f64;
    let unrelated: Vec<f64> =
        (0..founders).flat_map(|a| ((a + 1)..founders).map(move |b| (a, b))).map(|(a, b)| r_of(a, b)).collect();
    let mean_unrelated = unrelated.iter().sum::<f64>() / unrelated.len() as f64;
    eprintln!("simulated: parent–offspring mean r = {mean_po:.4}, unrelated mean r = {mean_unrelated:.4}");
    assert!((mean_po - 0.5).abs() < 0.05, "parent–offspring mean r = {mean_po}");
    assert!(mean_unrelated.abs() < 0.05, "unrelated mean r = {mean_unrelated}");
}

/// Common practice: the descriptor's defaults are admissible and the step is exported.
#[test]
fn descriptor_is_well_formed() {
    let d = Relatedness.descriptor();
    assert!(d.check_defaults().is_ok());
    assert_eq!(d.uses, "relatedness-qg");
    unsafe extern "C" {
        fn popgauge_plugin_entry() -> *const popgauge_abi::ffi::PgPlugin;
    }
    // SAFETY: the macro's entry symbol returns a pointer to a static table.
    assert_eq!(unsafe { (*popgauge_plugin_entry()).abi_version }, popgauge_abi::ffi::ABI_VERSION);
}

/// SplitMix64 (Steele, Lea & Flood 2014): a small, well-mixed 64-bit generator that simulates
/// the test data (the step itself draws from the SDK's `resampling::rng`).
struct SplitMix64(u64);

impl SplitMix64 {
    /// A stream for one purpose: the seed mixed with an FNV-1a hash of `stream`.
    fn new(seed: Seed, stream: &str) -> SplitMix64 {
        let mut hash: u64 = 0xcbf2_9ce4_8422_2325;
        for byte in stream.bytes() {
            hash = (hash ^ u64::from(byte)).wrapping_mul(0x0100_0000_01b3);
        }
        SplitMix64(seed.0 ^ hash)
    }

    fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9e37_79b9_7f4a_7c15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
        z ^ (z >> 31)
    }

    /// A number in `0..n` (multiply-shift; the bias is below 2⁻⁶⁴·n).
    fn below(&mut self, n: usize) -> usize {
        ((u128::from(self.next_u64()) * n as u128) >> 64) as usize
    }
}

/// Common practice: the same seed and stream give the same simulated draws; draws stay in range.
#[test]
fn draws_are_reproducible_and_in_range() {
    let draw = |stream: &str| {
        let mut rng = SplitMix64::new(Seed(9), stream);
        (0..100).map(|_| rng.below(7)).collect::<Vec<_>>()
    };
    assert_eq!(draw("a"), draw("a"));
    assert_ne!(draw("a"), draw("b"));
    assert!(draw("a").iter().all(|&x| x < 7));
    let mut seen = [false; 7];
    draw("a").iter().for_each(|&x| seen[x] = true);
    assert!(seen.iter().all(|&s| s), "every value can be drawn");
}
