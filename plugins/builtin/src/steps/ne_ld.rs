//! `ne-ld`: effective population size from linkage disequilibrium between unlinked loci
//! (Hill 1981), with the bias correction of Waples (2006), per group (population, year) and per
//! rare-allele criterion.
//!
//! # Method (docs/methods.md, "LD-based Ne")
//! For each pair of loci *i*, *j* in a group, the individuals typed at both (Sᵢⱼ of them) give,
//! for each retained allele *u* of *i* and *v* of *j*, Burrows' composite correlation with
//! Weir's (1979) sample-size factor: r̂ᵤᵥ = Sᵢⱼ/(Sᵢⱼ − 1) · (Pearson correlation of the allele
//! dosages 0/1/2 across those individuals). That Pearson correlation equals Burrows'
//! Δ̂/√{[p̂(1−p̂) + D̂_A][q̂(1−q̂) + D̂_B]}; the factor matters, because the sampling expectation
//! below is calibrated to r̂ with it.
//!
//! - **Rare alleles.** For each criterion, alleles with frequency below Pcrit in the group at
//!   the locus are dropped (k′ = alleles kept; a locus with k′ < 2 drops out); the
//!   no-singletons criterion drops only alleles seen once (Waples & Do 2010: Pcrit = 0.02 for
//!   S > 25, no singletons for smaller samples).
//! - **Within a pair (weighting convention).** r̂²ᵢⱼ is the mean of r̂²ᵤᵥ over the retained allele
//!   pairs with a defined r̂, weighted by p̂ᵤ·p̂ᵥ (group frequencies). For a biallelic locus with
//!   both alleles kept, all allele pairs give the same r̂², so one dosage vector is used.
//! - **Across pairs.** nᵢⱼ = (k′ᵢ − 1)(k′ⱼ − 1) independent comparisons, n′ = Σ nᵢⱼ (column
//!   `comparisons`); r̄² = Σ wᵢⱼ r̂²ᵢⱼ / Σ wᵢⱼ with wᵢⱼ = nᵢⱼ·Sᵢⱼ² (var r² ∝ 1/S²); the sample
//!   size `s` is the comparison-weighted harmonic mean Σ nᵢⱼ / Σ (nᵢⱼ/Sᵢⱼ). Missing data thus
//!   enter only through the per-pair Sᵢⱼ.
//! - **Ne** (Waples 2006): E(r²_sample) = 1/S + 3.19/S² for S ≥ 30, else
//!   0.0018 + 0.907/S + 4.44/S² (`r2_sample`); r²′ = r̄² − E(r²_sample) and
//!   Ne = [1/3 + √(1/9 − 2.76 r²′)]/(2r²′) for S ≥ 30, else [0.308 + √(0.308² − 2.08 r²′)]/(2r²′);
//!   with `mating = "monogamy"`, (2/3, 7.2) and (0.618, 3.78). A negative discriminant takes
//!   the square root as 0.
//! - Pairs of loci on the same chromosome are skipped when `skip_same_chromosome` is true
//!   and the data name chromosomes (physical linkage inflates r²; Waples, Larson & Waples 2016).
//!
//! # Confidence intervals (95%) — which column uses which method
//! - `ne_param_low`/`ne_param_high`: **parametric**, r̄² · n′/χ²_{n′} (Hill 1981; Waples 2006);
//!   each r² bound minus E(r²_sample) through the same formula (the upper r² bound gives the
//!   lower Ne). It treats the n′ comparisons as independent, which they are not when loci share
//!   individuals, so it is far too narrow for SNP panels.
//! - `ne_jack_low`/`ne_jack_high`: **jackknife over loci** (Jones, Ovenden & Wang 2016): locus l
//!   and every pair containing it are left out in turn; the variance V_L of r̄² gives effective
//!   degrees of freedom ν = min(2r̄⁴/V_L, n′) (`jack_df`) for the same χ² interval. It captures
//!   locus-to-locus variation but not the sampling of individuals shared by every pair, so it
//!   is too narrow for large SNP panels.
//! - `ne_resample_low`/`ne_resample_high` (**recommended**, for microsatellites and SNPs
//!   alike): a **delete-a-group jackknife over individuals** (Kott 2001): the group's
//!   individuals, in a seeded random order, are dealt into `individual_blocks` jackknife groups
//!   (16 by default, the most; each individual its own group in smaller samples; 0 turns the
//!   interval off); each group is left out in turn, every pair is recomputed without it, and
//!   the variance V_I of the drift signal r²′ (with E(r²_sample) recomputed at the smaller S) is
//!   taken. The seed (stream "ne-ld jackknife groups") fixes the order. Leaving individuals out
//!   resamples the sampling noise that all pairs share, which the loci jackknife misses. The
//!   interval uses the larger of V_I and V_L, so neither source of variation is ignored and
//!   none is counted twice: ν = min(2r̄⁴/max(V_L, V_I), n′) (`resample_df`). On simulated
//!   Wright–Fisher populations (Ne 50 and 200, S 50–100, 20 microsatellites or 500 SNPs) its
//!   coverage was 96–100% where the loci jackknife gave 70–81% for SNPs and the parametric
//!   interval 24–79%; the figures are in docs/accuracy.md.
//!
//! # Units and special values
//! Ne is in individuals per generation. A single-cohort sample estimates the effective number
//! of breeders (Nb) of its parents; a mixed-age sample roughly Ne (Waples, Antao & Luikart 2014).
//! When r̄² ≤ E(r²_sample) the estimate, or a bound, is `"inf"`: the data cannot tell Ne from
//! infinity, and only a finite lower bound is informative (with the lower bound `"inf"` too, the
//! interval is ∞–∞ and Ne is not estimable from the data). A group or criterion without any usable
//! pair of loci has `null` estimates. Never a negative Ne.
//!
//! # Speed
//! When every candidate locus has at most two alleles in a group (SNP panels), the pairs run on
//! packed bit planes (two bits per genotype plus a typed mask, see [`packed`]): one pass serves
//! every criterion (a biallelic pair's r̂² does not depend on it), criteria with identical panels
//! are summed once, and without jackknife lanes eight pairs are evaluated at a time with
//! AVX-512 population counts where the processor has them. Other groups use byte dosages
//! ([`pairs`]). Both use exact integer moments, the same r̂² function, the same fixed chunks of
//! pairs (threads via rayon, merged in a fixed order) and the same summation order, so their
//! results are identical to the last bit and do not depend on the number of threads.
//! `max_loci` caps the loci used with a seeded random subset, listed in a `loci-subset`
//! finding. The jackknife over individuals recomputes every pair once per group of individuals
//! left out; above `resample_max_loci` loci (2,000 by default) it runs on a seeded random
//! subset of loci (a `resample-subset` finding says so), every other column on all loci. The
//! variance of a subset's r̄² is on average at least that of the full panel's (the full mean is
//! the mean of the subset means), so `ne_resample_*` can only err wide.
//!
//! # Precision (`ld-precision-low`)
//! When Ne is large relative to S the drift signal r²′ ≈ 1/(3Ne) is small beside E(r²_sample)
//! ≈ 1/S and the estimate loses precision (Waples & Do 2010). A row is flagged with a
//! `ld-precision-low` warning when N̂e > 5 · S (or `"inf"`) and the upper bound of its
//! recommended interval (`ne_resample_high`, else `ne_jack_high`) is `"inf"` (or it has none).
//! On simulated populations of Ne 500–2,000 with S 25–60 only 8–78% of the flagged point
//! estimates were within a factor of two of the true Ne, while `ne_resample_*` contained it in
//! 91–100% of them; the rule, its sources and the figures are in `ne_ld/precision.rs` and
//! docs/accuracy.md.
//!
//! # Citations
//! Hill (1981); Weir (1979); Waples (2006); Waples & Do (2008, 2010); Jones, Ovenden & Wang
//! (2016); Kott (2001); Waples, Larson & Waples (2016); Waples, Antao & Luikart (2014): see
//! [`CITATIONS`].

mod estimate;
mod findings;
mod packed;
pub mod pairs;
mod panel;
mod precision;

use popgauge_abi::{
    Cell, Descriptor, GenotypeView, Group, LocusIdx, ParamKind, SampleIdx, Seed, Step, StepContext, StepError,
    StepOutput, Table,
};
use rand::RngExt;
use serde::Deserialize;
use serde_json::{Value, json};

use self::estimate::{LdEstimate, Mating, estimate};
use self::packed::{PackedPanel, PackedRequest, sum_pairs_packed};
use self::pairs::{ChunkCuts, PairSums, sum_pairs};
use self::panel::{Criterion, PanelRequest, build_panel, chromosome_ids, shuffled_samples};
use crate::stats::bootstrap::rng;

pub use self::estimate::{expected_sample_r2, ne_from_drift_r2, ne_from_r2};
use self::findings::{collect_findings, missing_interval_finding};

/// A group/criterion with a harmonic-mean S below this gets a `low-sample-size` warning
/// (docs/methods.md, "Conventions").
pub const LOW_SAMPLE_SIZE: f64 = 15.0;
/// Fewer independent comparisons than this give a `few-comparisons` warning (docs/methods.md,
/// "Conventions").
pub const FEW_COMPARISONS: f64 = 10.0;
/// Fewer usable loci than this give a `few-loci` warning (common practice, as `diversity`).
pub const FEW_LOCI: usize = 5;

/// The references of the methods, for the results' citations.
pub const CITATIONS: &[&str] = &[
    "Hill WG (1981) Estimation of effective population size from data on linkage disequilibrium. Genet Res 38:209–216.",
    "Weir BS (1979) Inferences about linkage disequilibrium. Biometrics 35:235–254.",
    "Waples RS (2006) A bias correction for estimates of effective population size based on linkage disequilibrium \
     at unlinked gene loci. Conserv Genet 7:167–184.",
    "Waples RS, Do C (2008) Mol Ecol Resour 8:753–756.",
    "Waples RS, Do C (2010) Linkage disequilibrium estimates of contemporary Ne using highly variable genetic \
     markers: a largely untapped resource for applied conservation and evolution. Evol Appl 3:244–262.",
    "Jones AT, Ovenden JR, Wang Y-G (2016) Improved confidence intervals for the linkage disequilibrium method for \
     estimating effective population size. Heredity 117:217–223.",
    "Kott PS (2001) The delete-a-group jackknife. J Off Stat 17:521–526.",
    "Waples RK, Larson WA, Waples RS (2016) Estimating contemporary effective population size in non-model species \
     using linkage disequilibrium across thousands of loci. Heredity 117:233–240.",
    "Waples RS, Antao T, Luikart G (2014) Effects of overlapping generations on linkage disequilibrium estimates of \
     effective population size. Genetics 197:769–780.",
];

/// Parameters of `ne-ld`, as resolved from the descriptor (defaults live there).
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Params {
    /// Rare-allele thresholds: alleles with frequency below Pcrit are dropped, one row each.
    pub pcrit: Vec<f64>,
    /// Adds a row for the "no singletons" criterion.
    pub exclude_singletons: bool,
    /// Skips pairs of loci on the same chromosome when chromosomes are known.
    pub skip_same_chromosome: bool,
    /// At most this many loci (a seeded random subset); `None` uses all.
    pub max_loci: Option<usize>,
    /// The mating system of the Ne formula.
    pub mating: Mating,
    /// Jackknife groups of individuals for `ne_resample_*` (at most 16; 0 or 1: none).
    pub individual_blocks: usize,
    /// Above this many loci the jackknife over individuals runs on a seeded subset of them.
    pub resample_max_loci: usize,
}

/// The descriptor of `ne-ld`: its name, version and parameters with defaults.
pub fn descriptor() -> Descriptor {
    Descriptor::new(
        "ne-ld",
        "0.1.0",
        "Effective population size from linkage disequilibrium (Hill 1981; Waples 2006) with parametric and \
         jackknife confidence intervals, per group and rare-allele criterion",
    )
    .param(
        "pcrit",
        ParamKind::NumberList { min: 0.0, max: 0.5 },
        json!([0.05, 0.02, 0.01]),
        "rare-allele thresholds: alleles with frequency below Pcrit are dropped; one row per value",
    )
    .param(
        "exclude_singletons",
        ParamKind::Boolean,
        json!(true),
        "also report the \"no singletons\" criterion (drops only alleles seen once; pcrit = \"singletons\")",
    )
    .param(
        "skip_same_chromosome",
        ParamKind::Boolean,
        json!(true),
        "skip pairs of loci on the same chromosome when the data name chromosomes",
    )
    .param(
        "max_loci",
        ParamKind::Integer { min: 2, max: 10_000_000 },
        Value::Null,
        "use at most this many loci, a seeded random subset listed in a finding; null = all loci",
    )
    .param(
        "mating",
        ParamKind::Choice { choices: vec!["random".into(), "monogamy".into()] },
        json!("random"),
        "mating system of the Ne formula: random mating or lifetime monogamy",
    )
    .param(
        "individual_blocks",
        ParamKind::Integer { min: 0, max: 16 },
        json!(16),
        "jackknife groups of individuals for ne_resample_* (individuals dealt at random; at most 16); 0 = none, faster \
         on large SNP panels",
    )
    .param(
        "resample_max_loci",
        ParamKind::Integer { min: 2, max: 10_000_000 },
        json!(2000),
        "above this many loci, the jackknife over individuals (ne_resample_*) runs on a seeded random subset of this \
         many loci; every other column uses all loci",
    )
}

/// The `ne-ld` step.
#[derive(Debug, Clone, Copy, Default)]
pub struct NeLd;

impl Step for NeLd {
    fn descriptor(&self) -> Descriptor {
        descriptor()
    }

    fn run(&self, ctx: &StepContext<'_>) -> Result<StepOutput, StepError> {
        run_with(ctx, PairPath::PackedWhenBiallelic)
    }
}

/// Which pair loop a run may use; the general one exists for the equivalence tests.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum PairPath {
    /// The packed path for groups whose loci are all biallelic, the byte path otherwise.
    PackedWhenBiallelic,
    /// The byte path always.
    #[cfg_attr(not(test), allow(dead_code))]
    General,
}

fn run_with(ctx: &StepContext<'_>, path: PairPath) -> Result<StepOutput, StepError> {
    let params: Params = ctx.params_as()?;
    let criteria = criteria(&params);
    let loci = select_loci(ctx.view.n_loci(), params.max_loci, ctx.seed);
    let plan = LociPlan::new(&ctx.view, &params, loci, ctx.seed);
    let groups = estimate_groups(&ctx.view, &params, &criteria, &plan, ctx.seed, path);
    let mut output = StepOutput::default();
    let estimates = estimates_table(&groups)?;
    output.findings = collect_findings(&ctx.view, &params, &plan, &groups);
    output.findings.extend(missing_interval_finding(&estimates));
    output.findings.extend(precision::precision_findings(&groups));
    output.tables.insert("estimates".into(), estimates);
    output.citations = CITATIONS.iter().map(|c| c.to_string()).collect();
    Ok(output)
}

/// The criteria of one run, in row order: each Pcrit as given, then "no singletons".
fn criteria(params: &Params) -> Vec<Criterion> {
    let mut criteria: Vec<Criterion> = params.pcrit.iter().map(|&p| Criterion::Pcrit(p)).collect();
    if params.exclude_singletons {
        criteria.push(Criterion::NoSingletons);
    }
    criteria
}

/// All view loci, or a seeded random subset of `max_loci` of them (ascending).
fn select_loci(n_loci: usize, max_loci: Option<usize>, seed: Seed) -> Vec<LocusIdx> {
    let loci: Vec<LocusIdx> = (0..n_loci).collect();
    match max_loci.filter(|&m| m < n_loci) {
        Some(keep) => seeded_subset(&loci, keep, seed, "ne-ld max_loci subset"),
        None => loci,
    }
}

/// `keep` of `loci` drawn at random from the step seed's stream `stream`, ascending.
fn seeded_subset(loci: &[LocusIdx], keep: usize, seed: Seed, stream: &str) -> Vec<LocusIdx> {
    let mut subset = loci.to_vec();
    let mut random = rng(seed, stream);
    let keep = keep.min(subset.len());
    for position in 0..keep {
        let pick = random.random_range(position..subset.len());
        subset.swap(position, pick);
    }
    subset.truncate(keep);
    subset.sort_unstable();
    subset
}

/// The estimate of one group under one criterion.
struct CriterionResult {
    criterion: Criterion,
    estimate: Option<LdEstimate>,
    same_chromosome: u64,
}

/// The estimates of one group.
struct GroupResult {
    group: Group,
    criteria: Vec<CriterionResult>,
}

/// The loci of one run and how their pairs are cut into chunks; with `resample`, the seeded
/// subset on which the jackknife over individuals runs.
struct LociPlan {
    loci: Vec<LocusIdx>,
    cuts: ChunkCuts,
    resample: Option<(Vec<LocusIdx>, ChunkCuts)>,
    chromosomes: Vec<Option<u32>>,
}

impl LociPlan {
    fn new(view: &GenotypeView<'_>, params: &Params, loci: Vec<LocusIdx>, seed: Seed) -> LociPlan {
        let resample = (params.individual_blocks >= 2 && loci.len() > params.resample_max_loci).then(|| {
            let subset = seeded_subset(&loci, params.resample_max_loci, seed, "ne-ld resample loci");
            let cuts = ChunkCuts::new(&subset);
            (subset, cuts)
        });
        LociPlan { cuts: ChunkCuts::new(&loci), loci, resample, chromosomes: chromosome_ids(view) }
    }
}

fn estimate_groups(
    view: &GenotypeView<'_>,
    params: &Params,
    criteria: &[Criterion],
    plan: &LociPlan,
    seed: Seed,
    path: PairPath,
) -> Vec<GroupResult> {
    view.groups()
        .into_iter()
        .map(|group| {
            let order = shuffled_samples(
                &group,
                &mut rng(seed, &format!("ne-ld jackknife groups {} {}", group.population, group.year)),
            );
            let sums = group_sums(view, params, criteria, plan, (&group, &order), path);
            let results = criteria
                .iter()
                .zip(sums)
                .map(|(&criterion, (sums, loci))| CriterionResult {
                    criterion,
                    estimate: estimate(&sums, loci, params.mating),
                    same_chromosome: sums.same_chromosome,
                })
                .collect();
            GroupResult { group, criteria: results }
        })
        .collect()
}

/// Per criterion: the pair sums of one group and its number of panel loci. With a resampling
/// subset, the sums over all loci come from a pass without jackknife lanes and the
/// jackknife-over-individuals sums from a second pass over the subset.
fn group_sums(
    view: &GenotypeView<'_>,
    params: &Params,
    criteria: &[Criterion],
    plan: &LociPlan,
    (group, order): (&Group, &[SampleIdx]),
    path: PairPath,
) -> Vec<(PairSums, usize)> {
    let pass = |loci: &[LocusIdx], cuts: &ChunkCuts, blocks: usize| {
        let request = PackedRequest { group, loci, criteria, groups: blocks, chromosomes: &plan.chromosomes };
        let packed = (path == PairPath::PackedWhenBiallelic).then(|| PackedPanel::build(view, &request, order));
        match packed.flatten() {
            Some(panel) => {
                sum_pairs_packed(&panel, params.skip_same_chromosome, cuts).into_iter().zip(panel.loci_in).collect()
            }
            None => criteria
                .iter()
                .map(|&criterion| {
                    let request =
                        PanelRequest { group, loci, criterion, groups: blocks, chromosomes: &plan.chromosomes };
                    let panel = build_panel(view, &request, order);
                    (sum_pairs(&panel, params.skip_same_chromosome, cuts), panel.loci.len())
                })
                .collect::<Vec<_>>(),
        }
    };
    let Some((subset, subset_cuts)) = &plan.resample else {
        return pass(&plan.loci, &plan.cuts, params.individual_blocks);
    };
    let mut all = pass(&plan.loci, &plan.cuts, 0);
    for ((sums, _), (resampled, _)) in all.iter_mut().zip(pass(subset, subset_cuts, params.individual_blocks)) {
        sums.without_group = resampled.without_group;
    }
    all
}

/// Columns of the `estimates` table: the contract's, then `loci`, `pairs`, the resampling
/// interval and the effective degrees of freedom of the two jackknife intervals.
const COLUMNS: &[&str] = &[
    "population",
    "year",
    "pcrit",
    "s",
    "comparisons",
    "r2",
    "r2_sample",
    "ne",
    "ne_param_low",
    "ne_param_high",
    "ne_jack_low",
    "ne_jack_high",
    "loci",
    "pairs",
    "ne_resample_low",
    "ne_resample_high",
    "jack_df",
    "resample_df",
];

fn pcrit_cell(criterion: Criterion) -> Cell {
    match criterion {
        Criterion::Pcrit(p) => Cell::number(p),
        Criterion::NoSingletons => Cell::text("singletons"),
    }
}

fn criterion_label(criterion: Criterion) -> String {
    match criterion {
        Criterion::Pcrit(p) => format!("Pcrit {p}"),
        Criterion::NoSingletons => "no singletons".into(),
    }
}

fn estimates_table(groups: &[GroupResult]) -> Result<Table, StepError> {
    let mut table = Table::new(COLUMNS);
    for result in groups {
        for row in &result.criteria {
            let mut cells = vec![
                Cell::text(&result.group.population),
                Cell::Int(result.group.year.into()),
                pcrit_cell(row.criterion),
            ];
            cells.extend(estimate_cells(row.estimate.as_ref()));
            table.push_row(cells)?;
        }
    }
    Ok(table)
}

fn estimate_cells(estimate: Option<&LdEstimate>) -> Vec<Cell> {
    let Some(e) = estimate else { return vec![Cell::Null; COLUMNS.len() - 3] };
    let low = |i: Option<crate::stats::bootstrap::Interval>| Cell::maybe(i.map(|i| i.low));
    let high = |i: Option<crate::stats::bootstrap::Interval>| Cell::maybe(i.map(|i| i.high));
    vec![
        Cell::number(e.samples),
        Cell::Int(e.comparisons.round() as i64),
        Cell::number(e.r2),
        Cell::number(e.r2_sample),
        Cell::number(e.ne),
        low(e.parametric),
        high(e.parametric),
        low(e.jackknife_loci),
        high(e.jackknife_loci),
        Cell::Int(i64::try_from(e.loci).unwrap_or(i64::MAX)),
        Cell::Int(i64::try_from(e.pairs).unwrap_or(i64::MAX)),
        low(e.resample),
        high(e.resample),
        Cell::maybe(e.jackknife_df),
        Cell::maybe(e.resample_df),
    ]
}

#[cfg(test)]
mod coverage;
#[cfg(test)]
mod tests;
