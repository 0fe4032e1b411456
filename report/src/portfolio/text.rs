//! The portfolio document's sentences: each states what the numbers beside it show.

use super::model::{Indicator, NeBasis, PortfolioSource};
use crate::format;

/// References the portfolio cites.
pub const REFERENCES: [&str; 5] = [
    "Frankham R (1995) Effective population size/adult population size ratios in wildlife: a review. Genetical Research 66:95–107.",
    "Frankham R, Bradshaw CJA, Brook BW (2014) Genetics in conservation management: revised recommendations for the 50/500 rules, Red List criteria and population viability analyses. Biological Conservation 170:56–63.",
    "Hoban S, Bruford M, D'Urban Jackson J, et al. (2020) Genetic diversity targets and indicators in the CBD post-2020 Global Biodiversity Framework must be improved. Biological Conservation 248:108654.",
    "Palstra FP, Fraser DJ (2012) Effective/census population size ratio estimation: a compendium and appraisal. Ecology and Evolution 2:2357–2365.",
    "Wright S (1931) Evolution in Mendelian populations. Genetics 16:97–159.",
];

/// `50 and 500`.
pub fn thresholds_in_words(thresholds: &[f64]) -> String {
    let words: Vec<String> = thresholds.iter().map(|t| format::short(*t, 6)).collect();
    match words.split_last() {
        Some((last, rest)) if !rest.is_empty() => format!("{} and {last}", rest.join(", ")),
        Some((last, _)) => last.clone(),
        None => String::new(),
    }
}

fn plural(count: usize, one: &str, many: &str) -> String {
    format!("{count} {}", if count == 1 { one } else { many })
}

/// The summary: what was brought together, how many populations have an Ne, the counts
/// against each threshold by point and lower bound, the cross-species mean, retained
/// heterozygosity, and what rests on assumptions.
pub fn summary(source: &PortfolioSource) -> Vec<String> {
    let Some(all) = source.indicators.iter().find(|i| i.scope == "all") else { return Vec::new() };
    let species = source.indicators.iter().filter(|i| i.scope == "species").count();
    let mut out = vec![format!(
        "This portfolio brings together {} of {} with {}.",
        plural(source.cases.len(), "assessment", "assessments"),
        plural(species, "species", "species"),
        plural(all.populations, "population", "populations"),
    )];
    let genetic = all.with_ne - all.census_based;
    let mut with = format!(
        "{} of them {} an Ne the indicator counts: {genetic} from the genetic estimate chosen by the case's status step",
        all.with_ne,
        if all.with_ne == 1 { "has" } else { "have" }
    );
    if all.census_based > 0 {
        with.push_str(&format!(
            " and {} from a census size alone (census × Ne/N ratio {})",
            all.census_based,
            format::short(source.ne_nc_ratio, 3)
        ));
    }
    with.push('.');
    out.push(with);
    let without = without_reasons(source);
    if !without.is_empty() {
        out.push(without);
    }
    if all.with_ne > 0 {
        for count in all.counts.iter().rev() {
            let t = format::short(count.threshold, 6);
            out.push(format!(
                "Ne above {t}: {} of {} populations by point estimate ({}); {} ({}) by the lower bound, that is with the whole 95 % interval above {t}{}.",
                count.above_point,
                all.with_ne,
                format::percent(count.share_point.unwrap_or(0.0)),
                count.above_lower,
                format::percent(count.share_lower.unwrap_or(0.0)),
                if all.census_based > 0 { " (census-based values, which have no interval, count by their value)" } else { "" },
            ));
        }
        if let Some(top) = all.counts.last() {
            if let (Some(point), Some(lower)) = (top.species_mean_share_point, top.species_mean_share_lower) {
                out.push(format!(
                    "Averaged over the species, each counting once whatever its number of populations (the way the indicator is combined across species; Hoban et al. 2020), the share of populations with Ne above {} is {} by point estimate and {} by lower bound.",
                    format::short(top.threshold, 6),
                    format::percent(point),
                    format::percent(lower),
                ));
            }
        }
    }
    if let Some(retained) = retained_sentence(all) {
        out.push(retained);
    }
    if all.census_based > 0 {
        out.push(format!(
            "The {} {} on an assumed ratio, not on genotypes, and {} no interval: treat {} as indicative.",
            if all.census_based == 1 {
                "census-based value".to_string()
            } else {
                format!("{} census-based values", all.census_based)
            },
            if all.census_based == 1 { "rests" } else { "rest" },
            if all.census_based == 1 { "has" } else { "have" },
            if all.census_based == 1 { "it" } else { "them" },
        ));
    }
    out
}

/// Why populations have no Ne: no status step, or an interval of ∞–∞.
fn without_reasons(source: &PortfolioSource) -> String {
    let no_status = source.populations.iter().filter(|p| p.basis == NeBasis::None).count();
    let not_estimable = source.populations.iter().filter(|p| p.basis == NeBasis::Genetic && !p.has_ne()).count();
    let mut parts = Vec::new();
    if no_status > 0 {
        parts.push(format!("{} from cases without a status step (listed as no Ne)", no_status));
    }
    if not_estimable > 0 {
        parts.push(format!(
            "{} whose estimate is not estimable (interval ∞–∞: the data say nothing about its size)",
            not_estimable
        ));
    }
    if parts.is_empty() {
        return String::new();
    }
    let total = no_status + not_estimable;
    format!(
        "{} {} no Ne: {}.",
        plural(total, "population", "populations"),
        if total == 1 { "has" } else { "have" },
        parts.join("; ")
    )
}

fn retained_sentence(all: &Indicator) -> Option<String> {
    let min = all.h_retained_min?;
    match (all.h_retained_mean, all.horizon_years) {
        (Some(mean), Some(horizon)) => Some(format!(
            "Were each population to keep its point Ne, populations would retain over the next {} years on average {} of today's heterozygosity by drift alone (least {}; {}); this projection is not the sample's FIS.",
            format::short(horizon, 4),
            format::percent(mean),
            format::percent(min),
            plural(all.projected, "population projected", "populations projected"),
        )),
        _ => Some(format!(
            "The cases project over different horizons, so retained heterozygosity is not averaged; the least retained by any population over its case's horizon is {} (see the population table).",
            format::percent(min)
        )),
    }
}

/// The chart's caption.
pub fn chart_caption(source: &PortfolioSource, marks: usize) -> String {
    format!(
        "Ne of every population, grouped by species, on a log scale ({} of {} populations marked; the others are named in their row). Dashed lines: Ne = {}. Filled circles are genetic estimates with their 95 % intervals; open diamonds are census-based values (census × {}), which have no interval.",
        marks,
        source.populations.len(),
        thresholds_in_words(&source.thresholds),
        format::short(source.ne_nc_ratio, 3),
    )
}

/// Methods paragraphs.
pub fn methods(source: &PortfolioSource) -> Vec<String> {
    let t = thresholds_in_words(&source.thresholds);
    vec![
        "Each case's output folder was read without re-running it: its provenance record was checked against every file it lists (size and SHA-256), and a folder whose files changed after its run was refused. The list of cases below gives the SHA-256 of each record; this portfolio's own provenance record names them, so “popgauge verify” can check the portfolio and, with “--deep”, re-run every case."
            .to_string(),
        "A population's Ne is the one its case's status step chose (the representative estimate of its latest sampling year, with the 95 % interval and the method shown in the population table). A case without a status step contributes its populations as \"no Ne\".".to_string(),
        format!(
            "Populations of a case's population sheet that were not genotyped but have a census size are included with a census-based Ne = census size × {}. A ratio of 0.1 is the conservative default for all species in the guidance for the Ne 500 indicator (Hoban et al. 2020), near the mean of the ratios reviewed by Frankham (1995) and within the range compiled by Palstra & Fraser (2012). These values are flagged in every table and in the chart, and have no interval; they count by their value in both the point and the lower-bound columns.",
            format::short(source.ne_nc_ratio, 3)
        ),
        format!(
            "The indicators count populations with Ne strictly above each threshold ({t}; Frankham et al. 2014; Hoban et al. 2020), by point estimate and by the lower bound of the 95 % interval, as shares of the populations with an Ne. The cross-species value is the mean of the species' shares. Heterozygosity retained is each case's projection at the point Ne: the share of today's heterozygosity left after t generations of drift, (1 − 1/(2Ne)) to the power t, with t the generations in the case's horizon (Wright 1931); for census-based values it uses the case's horizon in generations."
        ),
    ]
}
