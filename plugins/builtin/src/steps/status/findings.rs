//! The `status` step's findings (codes in the module doc of [`super`]).

use popgauge_abi::{
    CriterionReason, Finding, FindingLevel, NeKind, NeSource, PopulationInfo, RepresentativeNe, Table, Where,
    format_number, representative::SINGLETONS_MAX_SAMPLE_SIZE,
};

use super::{Assessed, RETAIN_TARGET, Setting, ne_to_retain};
use crate::special_values::{Row, explain, group_name, rows_where};

pub(super) fn collect_findings(assessed: &[Assessed], setting: &Setting) -> Vec<Finding> {
    let mut findings = vec![caution_finding(), thresholds_finding(setting)];
    for a in assessed {
        findings.extend(population_findings(a, setting));
    }
    if assessed.iter().any(|a| a.ne_over_census().is_some()) {
        findings.push(Finding::info(
            "ne-nc-context",
            "Ne/Nc: comprehensive estimates across wildlife average about 0.1 (Frankham 1995), but the ratio varies \
             by orders of magnitude between species and years (Palstra & Fraser 2012); it compares like with like \
             only when the census year and the generation the Ne refers to match",
            Where::default(),
        ));
    }
    findings.push(horizon_finding(setting));
    findings.push(inbreeding_depression_finding(setting));
    findings
}

/// How the cost of inbreeding is computed, and why it is a rough guide.
fn inbreeding_depression_finding(setting: &Setting) -> Finding {
    let b = setting.lethal_equivalents;
    Finding::info(
        "inbreeding-depression",
        format!(
            "fitness_retained = exp(−(2B/2)·f_drift), the share of today's fitness expected to remain after the drift \
             inbreeding of the horizon (Morton, Crow & Muller 1956, with 2B = {} diploid lethal equivalents, the \
             mean over the life history in wild mammals and birds of O'Grady et al. 2006); fitness_retained_low and \
             _high take f_drift at the Ne interval's bounds, fitness_retained_b_low and _b_high take {} and {} \
             diploid lethal equivalents at the point Ne (the median and the largest estimate for juvenile survival \
             in 40 captive mammal populations, Ralls, Ballou & Templeton 1988). The number of lethal equivalents \
             varies among species, populations, traits and environments (wild vertebrates average about 3.5 per \
             gamete for survival to sexual maturity alone, Nietlisbach et al. 2019), and purging of deleterious \
             alleles, selection and gene flow are not modelled: read these columns as an order of magnitude for \
             a constant Ne, not a prediction",
            format_number(b.point),
            format_number(b.low),
            format_number(b.high)
        ),
        Where::default(),
    )
}

fn caution_finding() -> Finding {
    Finding::info(
        "decision-caution",
        "Every estimate here carries uncertainty: read the category with its confidence interval, not the point \
         alone. The thresholds are guidance on genetic risk, not minimum viable population sizes, and the \
         projections assume a constant Ne. Decisions about a population follow the local regulatory framework and \
         a review of these results by a qualified geneticist.",
        Where::default(),
    )
}

fn thresholds_finding(setting: &Setting) -> Finding {
    let text: Vec<String> = setting.thresholds.iter().map(|t| format_number(*t)).collect();
    let source = match setting.thresholds.as_slice() {
        [a, b] if (*a, *b) == (50.0, 500.0) => " (Franklin 1980; Soulé 1980; Lande 1995 argued for more)",
        [a, b] if (*a, *b) == (100.0, 1000.0) => " (Frankham, Bradshaw & Brook 2014)",
        _ => " (set in [report] thresholds)",
    };
    Finding::info(
        "thresholds",
        format!(
            "categories place the point estimate of Ne against the thresholds {}{source}, a value equal to a \
             threshold meeting it; interval_reaches lists the thresholds inside the 95% interval, on both sides of \
             which Ne may lie. The indicator counts populations with Ne strictly above each threshold (\"> 500\", \
             Hoban et al. 2020)",
            text.join(" and ")
        ),
        Where::default(),
    )
}

fn population_findings(a: &Assessed, setting: &Setting) -> Vec<Finding> {
    let location = Where::group(&a.population, a.year);
    let mut findings = Vec::new();
    let Some(estimate) = a.estimate.as_ref() else {
        let sources: Vec<String> = setting.sources.iter().map(NeSource::to_string).collect();
        findings.push(Finding::warning(
            "no-estimate",
            format!(
                "{} {}: none of the Ne sources in `prefer` ({}) has an estimate for this population and year; its \
                 category is \"unknown\"",
                a.population,
                a.year,
                sources.join(", ")
            ),
            location,
        ));
        return findings;
    };
    findings.extend(criterion_finding(a, estimate));
    if estimate.bounds().is_none() {
        findings.push(Finding::info(
            "no-interval",
            format!(
                "{} {}: the Ne from {} has no confidence interval, so ne_low, ne_high, ci_method, interval_reaches, \
                 interval_note and the projections at the bounds (h_retained_low/high, f_drift_low/high) are null and \
                 its category rests on the point alone",
                a.population,
                a.year,
                estimate.method()
            ),
            location.clone(),
        ));
    }
    if let Some(census) = &a.census {
        findings.extend(census_finding(a, census, estimate, location));
    }
    findings
}

/// The `ld-criterion` finding of an LD estimate: which criterion, why, and at which S.
fn criterion_finding(a: &Assessed, estimate: &RepresentativeNe) -> Option<Finding> {
    if estimate.kind != NeKind::Ld {
        return None;
    }
    let location = Where::group(&a.population, a.year);
    let used = estimate.criterion.map_or_else(|| "its first criterion".into(), |c| c.label());
    let s = |value: Option<f64>| value.map_or_else(|| "unknown".into(), one_decimal);
    let rule = format!(
        "Waples & Do (2010): alleles seen once are dropped when S ≤ {}, alleles below Pcrit 0.02 above",
        format_number(SINGLETONS_MAX_SAMPLE_SIZE)
    );
    let name = format!("{} {}", a.population, estimate.year);
    match estimate.criterion_reason? {
        CriterionReason::SampleSizeRule => Some(Finding::info(
            "ld-criterion",
            format!("{name}: the LD estimate uses {used} at harmonic-mean S = {} ({rule})", s(estimate.rule_samples)),
            location,
        )),
        CriterionReason::Preferred => Some(Finding::info(
            "ld-criterion",
            format!("{name}: the LD estimate uses {used}, as `prefer` names it (S = {})", s(estimate.samples)),
            location,
        )),
        CriterionReason::RuleCriterionMissing(wanted) => Some(Finding::warning(
            "ld-criterion-missing",
            format!(
                "{name}: at harmonic-mean S = {} the rule asks for {} ({rule}), but the ne-ld step did not estimate \
                 it for this group, so {used} is used; add it to the ne-ld step (pcrit, or exclude_singletons = true)",
                s(estimate.rule_samples),
                wanted.label()
            ),
            location,
        )),
        CriterionReason::SampleSizeUnknown => Some(Finding::warning(
            "ld-criterion-missing",
            format!(
                "{name}: the ne-ld rows give no sample size s, so the criterion could not follow it ({rule}); {used} \
                 is used"
            ),
            location,
        )),
    }
}

/// A sample size as findings print it: one decimal.
fn one_decimal(value: f64) -> String {
    format_number((value * 10.0).round() / 10.0)
}

fn census_finding(
    a: &Assessed,
    census: &PopulationInfo,
    estimate: &RepresentativeNe,
    location: Where,
) -> Option<Finding> {
    census.census_size?;
    match census.census_year {
        Some(y) if y != estimate.year => Some(Finding::info(
            "census-year-mismatch",
            format!(
                "{}: the census is from {y} but the Ne refers to {}; ne_nc is left empty because the ratio compares \
                 like with like only when the years match",
                a.population, estimate.year
            ),
            location,
        )),
        None => Some(Finding::warning(
            "census-year-unknown",
            format!(
                "{}: the population sheet gives no census_year, so ne_nc assumes the census matches the Ne of {}; \
                 add census_year to check it",
                a.population, estimate.year
            ),
            location,
        )),
        _ => None,
    }
}

/// The columns that are `"inf"` when the point estimate is.
const INFINITE_POINT_COLUMNS: [&str; 5] = ["ne", "ne_high", "ne_nc", "generations_to_lose_10", "years_to_lose_10"];

/// The findings for the special values of `populations`, each worded by the columns that carry
/// them: an infinite point (and what follows from it), an infinite upper bound alone, an
/// interval ∞–∞, and FIS or `s` left null.
pub(super) fn special_value_findings(populations: &Table) -> Vec<Finding> {
    let not_estimable = |r: &Row<'_>| r.is_inf("ne") && r.is_inf("ne_low");
    let infinite = rows_where(
        populations,
        |r| r.is_inf("ne") && !not_estimable(r),
        |r| format!("{} ({})", group_name(r), r.columns_where(&INFINITE_POINT_COLUMNS, |r, c| r.is_inf(c))),
    );
    let upper = rows_where(populations, |r| r.is_finite("ne") && r.is_inf("ne_high"), group_name);
    let unbounded = rows_where(populations, not_estimable, group_name);
    let without_fis = rows_where(populations, |r| r.is_null("fis"), group_name);
    let without_fis_interval = rows_where(populations, |r| r.is_finite("fis") && r.is_null("fis_low"), group_name);
    let s_not_applicable = rows_where(
        populations,
        |r| !r.is_null("ne") && r.is_null("s"),
        |r| format!("{} ({})", group_name(r), r.text("ne_method")),
    );
    let findings = [
        explain(FindingLevel::Info, "infinite-ne", &infinite, |n, list| {
            format!(
                "{n} population(s) have an Ne of \"inf\" as its source step gives it (that step's findings say why), \
                 with a finite lower bound ne_low where there is an interval: an infinite Ne loses no \
                 heterozygosity, so h_retained is 1 and f_drift 0, and the columns named are \"inf\": {list}"
            )
        }),
        explain(FindingLevel::Info, "infinite-upper-bound", &upper, |n, list| {
            format!(
                "{n} population(s) have a finite Ne whose upper bound ne_high is \"inf\" (the interval is open above: \
                 the data do not exclude a very large population); only that bound is infinite, so \
                 h_retained_high is 1 and f_drift_low 0, while ne, ne_nc and the projection at the point stay \
                 finite: {list}"
            )
        }),
        explain(FindingLevel::Warning, "not-estimable", &unbounded, |n, list| {
            format!(
                "{n} population(s) have an Ne whose interval is ∞–∞ (ne, ne_low and ne_high \"inf\"): the data set \
                 no bound on Ne, which does not show that the population is large, so their category is \"not \
                 estimable\", they count as without an estimate in the indicator, and ne_nc, interval_reaches, \
                 interval_note and every projection column are null; more individuals or loci are needed: {list}"
            )
        }),
        explain(FindingLevel::Info, "no-fis", &without_fis, |n, list| {
            format!(
                "{n} population(s) have no FIS for the year assessed in a `diversity` step's by_group (no diversity \
                 step ran, or its FIS is null there and its findings say why), so fis, fis_low and fis_high are null; \
                 the drift projection does not use FIS: {list}"
            )
        }),
        explain(FindingLevel::Info, "no-fis-interval", &without_fis_interval, |n, list| {
            format!(
                "{n} population(s) have an FIS without its interval (fis_low and fis_high null): the diversity step's \
                 bootstrap was off or gave too few defined replicates, as its fis-interval findings say: {list}"
            )
        }),
        explain(FindingLevel::Info, "s-not-applicable", &s_not_applicable, |n, list| {
            format!(
                "{n} population(s) have an Ne from a source other than ne-ld, so s (the harmonic-mean sample size of \
                 an LD estimate) is null: {list}"
            )
        }),
    ];
    findings.into_iter().flatten().collect()
}

fn horizon_finding(setting: &Setting) -> Finding {
    let Some(generation_time) = setting.generation_time else {
        return Finding::warning(
            "no-generation-time",
            "the projection needs the generation time: set generation_time_years in [assessment] of case.toml; \
             the projection columns are empty",
            Where::default(),
        );
    };
    let required = ne_to_retain(RETAIN_TARGET, setting.horizon_years, generation_time);
    Finding::info(
        "horizon",
        format!(
            "over {} years ({} generations of {} years) an Ne of at least {} keeps 90% of today's heterozygosity \
             (Soulé et al. 1986, who proposed 200 years; 100 years is the later common convention)",
            format_number(setting.horizon_years),
            format_number((setting.horizon_years / generation_time * 100.0).round() / 100.0),
            format_number(generation_time),
            format_number((required * 100.0).round() / 100.0)
        ),
        Where::default(),
    )
}
