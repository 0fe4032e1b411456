//! Diversity and Hardy–Weinberg proportions.

use super::*;

/// Diversity and inbreeding.
#[derive(Debug, Clone, Serialize)]
pub struct DiversitySection {
    /// Step id.
    pub step: String,
    /// Per group.
    pub by_group: TableData,
    /// Appendix key of the per-locus table.
    pub by_locus: Option<String>,
}

/// Hardy–Weinberg tests.
#[derive(Debug, Clone, Serialize)]
pub struct HweSection {
    /// Step id.
    pub step: String,
    /// Per group: loci tested, significant after FDR, deficits, excesses.
    pub summary: TableData,
    /// Appendix key of the per-locus table.
    pub by_locus: Option<String>,
}

pub(crate) fn diversity_section(ctx: &Context<'_>, extras: &mut Extras) -> Option<DiversitySection> {
    let step = ctx.results.step(uses::DIVERSITY)?;
    let by_group = table_of(step, table::BY_GROUP)?;
    let mut t = TableData::new(&[
        ("Population", false),
        ("Year", true),
        ("n", true),
        ("Ho", true),
        ("He", true),
        ("F", true),
        ("FIS (95 % CI)", true),
        ("Ar", true),
        ("PAr", true),
        ("Alleles", true),
    ]);
    for row in by_group.iter() {
        let fis = match row.num(col::FIS) {
            None => format::UNDEFINED.to_string(),
            Some(fis) => match (row.num(col::FIS_LOW), row.num(col::FIS_HIGH)) {
                (None, None) => format::fixed(fis, 3),
                (low, high) => {
                    format!("{} ({})", format::fixed(fis, 3), format::interval(low, high, NumberStyle::Fixed(3)))
                }
            },
        };
        t.push(vec![
            text(&row, col::POPULATION),
            whole(&row, col::YEAR),
            whole(&row, col::N),
            fixed3(&row, col::HO),
            fixed3(&row, col::HE),
            fixed3(&row, col::F),
            fis,
            fixed3(&row, col::AR),
            fixed3(&row, col::PAR),
            format::maybe(row.num(col::ALLELES_MEAN), NumberStyle::Fixed(2)),
        ]);
    }
    t.drop_empty_columns(&["Population", "Year", "Ho", "He", "F"]);
    let by_locus = table_of(step, table::BY_LOCUS).filter(|t| !t.is_empty()).map(|t| {
        let mut data = generic(&t);
        data.drop_empty_columns(&[]);
        let title = format!("Diversity per locus and group (step \"{}\")", step.id);
        extras.appendix(title, data, table_file(&step.id, table::BY_LOCUS))
    });
    he_over_years(ctx, &by_group, extras);
    Some(DiversitySection { step: step.id.clone(), by_group: t, by_locus })
}

/// He over years per population, with the trend step's least-squares slope when present.
fn he_over_years(ctx: &Context<'_>, by_group: &Rows<'_>, extras: &mut Extras) {
    let slopes = trend_slopes(ctx, "he");
    let series = series_by_population(
        ctx,
        by_group
            .iter()
            .filter_map(|r| Some((r.text(col::POPULATION)?.to_string(), r.num(col::YEAR)?, r.num(col::HE)?))),
        &slopes,
    );
    if series.iter().any(|s| s.points.len() >= 2) {
        let alt = format!(
            "Expected heterozygosity He per population and sampling year{}.",
            if slopes.is_empty() { "" } else { ", with the least-squares trend of each population as a dashed line" }
        );
        extras.figure(
            "he-years",
            Figure::Lines {
                series,
                x_label: "Sampling year".into(),
                y_label: "He (unbiased)".into(),
                log_y: false,
                y_from_zero: false,
            },
            alt,
        );
    }
}

pub(crate) fn hwe_section(ctx: &Context<'_>, extras: &mut Extras) -> Option<HweSection> {
    let step = ctx.results.step(uses::HWE)?;
    let by_locus = table_of(step, table::BY_LOCUS)?;
    #[derive(Default)]
    struct Tally {
        tested: usize,
        significant: usize,
        deficit: usize,
        excess: usize,
    }
    let mut tallies: BTreeMap<(String, String), Tally> = BTreeMap::new();
    for row in by_locus.iter() {
        let key = (text(&row, col::POPULATION), whole(&row, col::YEAR));
        let tally = tallies.entry(key).or_default();
        if row.num(col::P_VALUE).is_some() {
            tally.tested += 1;
        }
        if row.num(col::Q_VALUE).is_some_and(|q| q < 0.05) {
            tally.significant += 1;
            match row.text(col::DIRECTION) {
                Some(d) if d.contains("deficit") => tally.deficit += 1,
                Some(d) if d.contains("excess") => tally.excess += 1,
                _ => {}
            }
        }
    }
    let mut summary = TableData::new(&[
        ("Population", false),
        ("Year", true),
        ("Loci tested", true),
        ("q < 0.05", true),
        ("Deficit", true),
        ("Excess", true),
    ]);
    for ((population, year), t) in tallies {
        summary.push(vec![
            population,
            year,
            t.tested.to_string(),
            t.significant.to_string(),
            t.deficit.to_string(),
            t.excess.to_string(),
        ]);
    }
    let key = (!by_locus.is_empty()).then(|| {
        let title = format!("Hardy–Weinberg tests per locus and group (step \"{}\")", step.id);
        extras.appendix(title, generic(&by_locus), table_file(&step.id, table::BY_LOCUS))
    });
    Some(HweSection { step: step.id.clone(), summary, by_locus: key })
}
