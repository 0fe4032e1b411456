//! The sampling design: what was sampled, when and how many per group, the generation time
//! with its source, and the caveats that follow for each estimator in the recipe.

use std::collections::BTreeMap;

use popgauge_abi::{Cohorts, SamplingInfo};
use serde::Serialize;

use super::super::contract::uses;
use super::super::format;
use super::sections::Context;
use super::table::TableData;

/// The sampling design section.
#[derive(Debug, Clone, Serialize)]
pub struct SamplingSection {
    /// What was sampled, as `(what, value)` lines: life stage, tissue, lethal or not, cohorts.
    pub facts: Vec<(String, String)>,
    /// Whether the recipe has a `[sampling]` table at all.
    pub stated: bool,
    /// Per population: its samples per year and census.
    pub table: TableData,
    /// The generation time in years with its source, as a sentence; `None` without one.
    pub generation_time: Option<String>,
    /// The span of the sampling, as a sentence (`3 sampling years from 2018 to 2024, …`).
    pub span: String,
    /// One caveat per estimator or design point that applies, each a sentence with its paper.
    pub caveats: Vec<String>,
}

const NOT_STATED: &str = "not stated in the recipe";

pub(crate) fn sampling_section(ctx: &Context<'_>) -> SamplingSection {
    let doc = ctx.results.doc();
    let sampling = doc.assessment.sampling.clone().unwrap_or_default();
    let stated = doc.assessment.sampling.is_some();
    let mut by_population: BTreeMap<&str, Vec<(i32, usize)>> = BTreeMap::new();
    for g in &doc.data.groups {
        by_population.entry(g.population.as_str()).or_default().push((g.year, g.n));
    }
    let mut table =
        TableData::new(&[("Population", false), ("Samples per sampling year", false), ("Census (year)", true)]);
    for (population, years) in &mut by_population {
        years.sort_unstable();
        let per_year = years.iter().map(|(y, n)| format!("{y}: {n}")).collect::<Vec<_>>().join(" · ");
        let census = doc.assessment.populations.iter().find(|p| p.population == *population).and_then(|p| {
            p.census_size.map(|n| match p.census_year {
                Some(year) => format!("{} ({year})", format::effective_size(n)),
                None => format::effective_size(n),
            })
        });
        table.push(vec![population.to_string(), per_year, census.unwrap_or_else(|| format::UNDEFINED.into())]);
    }
    let years: Vec<i32> = {
        let mut y: Vec<i32> = doc.data.groups.iter().map(|g| g.year).collect();
        y.sort_unstable();
        y.dedup();
        y
    };
    let gaps: Vec<i32> = by_population
        .values()
        .flat_map(|ys| ys.windows(2).map(|w| w[1].0 - w[0].0).collect::<Vec<_>>())
        .filter(|g| *g > 0)
        .collect();
    let generation_time = ctx.generation_time.map(|g| {
        let years = trimmed(g);
        match &doc.assessment.generation_time_source {
            Some(source) => format!("The generation time is {years} years ({source})."),
            None => format!("The generation time is {years} years; the recipe does not give its source (generation_time_source in [assessment])."),
        }
    });
    SamplingSection {
        facts: facts(&sampling),
        stated,
        table,
        generation_time,
        span: span(&years, &gaps, ctx.generation_time),
        caveats: caveats(ctx, &sampling, &gaps),
    }
}

fn trimmed(value: f64) -> String {
    format::significant(value, 3).trim_end_matches('0').trim_end_matches('.').to_string()
}

fn facts(s: &SamplingInfo) -> Vec<(String, String)> {
    let or_not = |v: &Option<String>| v.clone().unwrap_or_else(|| NOT_STATED.into());
    vec![
        ("Life stage".into(), or_not(&s.life_stage)),
        ("Tissue".into(), or_not(&s.tissue)),
        (
            "Sampling".into(),
            match s.lethal {
                Some(true) => "lethal (the animals sampled were removed)".into(),
                Some(false) => "non-lethal (the animals were released)".into(),
                None => NOT_STATED.into(),
            },
        ),
        (
            "Ages in a sample".into(),
            match s.cohorts {
                Some(Cohorts::Single) => "one cohort".into(),
                Some(Cohorts::Mixed) => "mixed ages".into(),
                None => NOT_STATED.into(),
            },
        ),
    ]
}

fn span(years: &[i32], gaps: &[i32], generation_time: Option<f64>) -> String {
    let (Some(first), Some(last)) = (years.first(), years.last()) else { return String::new() };
    let mut text = if years.len() == 1 {
        format!("All samples were taken in {first}.")
    } else {
        format!(
            "Samples were taken in {} sampling years from {first} to {last} ({}).",
            years.len(),
            years.iter().map(i32::to_string).collect::<Vec<_>>().join(", ")
        )
    };
    if let (Some(g), Some(min), Some(max)) = (generation_time, gaps.iter().min(), gaps.iter().max()) {
        let between = |y: i32| trimmed(f64::from(y) / g);
        if min == max {
            text.push_str(&format!(
                " Successive samples of a population are {min} years apart, {} generations.",
                between(*min)
            ));
        } else {
            text.push_str(&format!(
                " Successive samples of a population are {min}–{max} years apart, {}–{} generations.",
                between(*min),
                between(*max)
            ));
        }
    }
    text
}

fn caveats(ctx: &Context<'_>, s: &SamplingInfo, gaps: &[i32]) -> Vec<String> {
    let mut out = Vec::new();
    if ctx.results.step(uses::NE_LD).is_some() {
        out.push(match s.cohorts {
            Some(Cohorts::Single) => "Each sample holds one cohort, so the linkage-disequilibrium (LD) estimate reflects the effective number of breeders Nb that produced it as much as Ne per generation: in simulations of 21 age-structured species it followed the harmonic mean of Ne and Nb (Waples, Antao & Luikart 2014). Read it as an estimate for that cohort's parents.".to_string(),
            Some(Cohorts::Mixed) => "Each sample mixes ages. With overlapping generations, LD estimates from mixed-age samples of adults were biased downwards in all 21 species simulated by Waples, Antao & Luikart (2014), through the linkage disequilibrium that mixing cohorts creates: the LD estimate may understate Ne.".to_string(),
            None => "The recipe does not say whether a sample holds one cohort or mixed ages. This matters for the linkage-disequilibrium (LD) estimate: from one cohort it reflects the number of breeders that produced it as much as Ne, from mixed-age adults it tends to be biased downwards (Waples, Antao & Luikart 2014).".to_string(),
        });
    }
    if ctx.results.step(uses::NE_TEMPORAL).is_some() {
        let shortest = gaps.iter().min().copied();
        let generations = ctx.generation_time.zip(shortest).map(|(g, y)| f64::from(y) / g);
        let mut text = String::from(
            "The temporal method measures drift between samples. Samples only a few generations apart carry little drift signal beside sampling noise, and with overlapping generations they give biased estimates unless spaced many generations apart (Jorde & Ryman 1995; Waples & Yokota 2007).",
        );
        if let Some(t) = generations {
            text.push_str(&format!(" Here the shortest interval is {} generations.", trimmed(t)));
        }
        out.push(text);
        let plan = ctx.param(uses::NE_TEMPORAL, "plan").and_then(|v| v.as_str()).map(str::to_string);
        match (s.lethal, plan.as_deref()) {
            (Some(false), Some("II")) => out.push("The recipe says sampling was non-lethal, but the temporal step used Waples' (1989) plan II, which assumes the sampled animals were removed before they bred; plan I fits animals that were released. Check the plan before relying on the temporal estimates.".into()),
            (Some(true), Some("I")) => out.push("Sampling was lethal and the temporal step used Waples' (1989) plan I, which fits only if the animals were taken after they bred; if they were taken before breeding, plan II applies.".into()),
            _ => {}
        }
    }
    if ctx.results.step(uses::NE_HETX).is_some() {
        out.push("The heterozygote-excess method measures the excess of heterozygotes among the offspring of few breeders; it is informative only for very small numbers of breeders and is usually infinite otherwise (Pudovkin, Zaykin & Hedgecock 1996).".into());
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn span_names_years_and_generations_between_samples() {
        assert_eq!(
            span(&[2018, 2021, 2024], &[3, 3, 3], Some(2.0)),
            "Samples were taken in 3 sampling years from 2018 to 2024 (2018, 2021, 2024). Successive samples of a population are 3 years apart, 1.5 generations."
        );
        assert_eq!(
            span(&[2018, 2020, 2024], &[2, 4], Some(4.0)),
            "Samples were taken in 3 sampling years from 2018 to 2024 (2018, 2020, 2024). Successive samples of a population are 2–4 years apart, 0.5–1 generations."
        );
        assert_eq!(span(&[2020], &[], Some(2.0)), "All samples were taken in 2020.");
    }

    #[test]
    fn missing_sampling_facts_are_said_to_be_not_stated() {
        let f =
            facts(&SamplingInfo { tissue: Some("tail tip".into()), lethal: Some(false), ..SamplingInfo::default() });
        assert_eq!(f[0].1, NOT_STATED);
        assert_eq!(f[1].1, "tail tip");
        assert!(f[2].1.starts_with("non-lethal"));
        assert_eq!(f[3].1, NOT_STATED);
    }
}
