//! Choosing one Ne per population and year from the earlier Ne steps, in the order of the
//! `prefer` parameter.

use popgauge_abi::{Cell, StepError, StepResult, Table};

use crate::steps::trend::sources::{table, year_of};

/// Interval columns of an `ne-ld` row, most trusted first: the resampling interval (loci and
/// individuals), then the jackknife over loci, then the parametric χ² interval.
const LD_INTERVALS: [(&str, &str); 3] =
    [("ne_resample", "resampling"), ("ne_jack", "jackknife"), ("ne_param", "parametric")];

/// One Ne source named in `prefer`.
#[derive(Debug, Clone, PartialEq)]
pub enum NeSource {
    /// `ld:<pcrit>`: the `ne-ld` row at that Pcrit (`singletons` for the no-singletons row);
    /// `ld` alone: the Pcrit of the step's first row.
    Ld(Option<LdCriterion>),
    /// `temporal`: `ne_fs` of the `ne-temporal` row ending in the year assessed (the latest
    /// starting one), or else the latest row ending before it.
    Temporal,
    /// `hetx`: the `ne-hetx` row of the year assessed.
    Hetx,
}

/// The rare-allele criterion of an `ne-ld` row.
#[derive(Debug, Clone, PartialEq)]
pub enum LdCriterion {
    /// A Pcrit value.
    Pcrit(f64),
    /// The no-singletons criterion.
    NoSingletons,
}

impl NeSource {
    /// Parses one entry of `prefer`.
    ///
    /// # Errors
    /// A [`StepError`] naming the parameter, the entry and the accepted spellings.
    pub fn parse(word: &str) -> Result<NeSource, StepError> {
        match word {
            "temporal" => Ok(NeSource::Temporal),
            "hetx" => Ok(NeSource::Hetx),
            "ld" => Ok(NeSource::Ld(None)),
            _ => match word.strip_prefix("ld:") {
                Some("singletons") => Ok(NeSource::Ld(Some(LdCriterion::NoSingletons))),
                Some(number) => match number.parse::<f64>() {
                    Ok(p) if (0.0..=0.5).contains(&p) => Ok(NeSource::Ld(Some(LdCriterion::Pcrit(p)))),
                    _ => Err(bad_source(word)),
                },
                None => Err(bad_source(word)),
            },
        }
    }

    /// The `uses` name of the step this source reads.
    pub fn uses(&self) -> &'static str {
        match self {
            NeSource::Ld(_) => "ne-ld",
            NeSource::Temporal => "ne-temporal",
            NeSource::Hetx => "ne-hetx",
        }
    }
}

fn bad_source(word: &str) -> StepError {
    StepError::new(format!(
        "parameter `prefer`: \"{word}\" is not an Ne source\n  help: use \"ld:<pcrit>\" (for example \"ld:0.02\", or \
         \"ld:singletons\"), \"ld\", \"temporal\" or \"hetx\", in the order you trust them"
    ))
}

/// The Ne chosen for one population and year.
#[derive(Debug, Clone, PartialEq)]
pub struct ChosenNe {
    /// The point estimate (+∞ allowed).
    pub ne: f64,
    /// Lower CI bound, when the source gives one.
    pub low: Option<f64>,
    /// Upper CI bound (+∞ allowed), when the source gives one.
    pub high: Option<f64>,
    /// The source as written in `prefer`, with the Pcrit actually used (`ld:0.02`).
    pub method: String,
    /// Which interval the CI is (`resampling`, `jackknife`, `parametric`, `ne_low/ne_high`).
    pub interval: Option<&'static str>,
    /// The sampling year the estimate refers to (`year_end` for a temporal estimate).
    pub year: i32,
}

/// The first source in `prefer` order that has an estimate for `population` in `year`.
pub fn choose(sources: &[NeSource], earlier: &[StepResult], population: &str, year: i32) -> Option<ChosenNe> {
    sources.iter().find_map(|source| {
        let result = earlier.iter().rev().find(|r| r.uses == source.uses())?;
        let table = table(result, "estimates").ok()?;
        match source {
            NeSource::Ld(criterion) => from_ld(table, criterion.as_ref(), population, year),
            NeSource::Temporal => from_temporal(table, population, year),
            NeSource::Hetx => from_hetx(table, population, year),
        }
    })
}

/// Reads cells of one row by column name.
struct Row<'t> {
    table: &'t Table,
    cells: &'t [Cell],
}

impl Row<'_> {
    fn cell(&self, column: &str) -> Option<&Cell> {
        self.table.column(column).map(|i| &self.cells[i])
    }

    fn number(&self, column: &str) -> Option<f64> {
        self.cell(column)?.as_f64()
    }

    fn year(&self, column: &str) -> Option<i32> {
        year_of(self.cell(column)?)
    }

    fn is_population(&self, population: &str) -> bool {
        self.cell("population").and_then(Cell::as_str) == Some(population)
    }

    /// Both bounds of the interval `<prefix>_low`/`<prefix>_high`, when both are numbers.
    fn interval(&self, prefix: &str) -> Option<(f64, f64)> {
        Some((self.number(&format!("{prefix}_low"))?, self.number(&format!("{prefix}_high"))?))
    }
}

fn rows<'t>(table: &'t Table) -> impl Iterator<Item = Row<'t>> {
    table.rows.iter().map(move |cells| Row { table, cells })
}

fn pcrit_matches(cell: Option<&Cell>, criterion: &LdCriterion) -> bool {
    match (criterion, cell) {
        (LdCriterion::Pcrit(p), Some(c)) => c.as_f64().is_some_and(|x| (x - p).abs() < 1e-9),
        (LdCriterion::NoSingletons, Some(c)) => c.as_str() == Some("singletons"),
        (_, None) => false,
    }
}

fn pcrit_text(cell: Option<&Cell>) -> String {
    cell.map_or_else(String::new, |c| format!(":{c}"))
}

fn from_ld(table: &Table, criterion: Option<&LdCriterion>, population: &str, year: i32) -> Option<ChosenNe> {
    let first_pcrit = rows(table).next()?.cell("pcrit").cloned();
    let wanted = |row: &Row<'_>| match criterion {
        Some(c) => pcrit_matches(row.cell("pcrit"), c),
        None => row.cell("pcrit") == first_pcrit.as_ref(),
    };
    let row = rows(table).find(|r| r.is_population(population) && r.year("year") == Some(year) && wanted(r))?;
    let ne = row.number("ne")?;
    let interval = LD_INTERVALS.iter().find_map(|(prefix, name)| Some((row.interval(prefix)?, *name)));
    Some(ChosenNe {
        ne,
        low: interval.map(|i| i.0.0),
        high: interval.map(|i| i.0.1),
        method: format!("ld{}", pcrit_text(row.cell("pcrit"))),
        interval: interval.map(|i| i.1),
        year,
    })
}

fn from_temporal(table: &Table, population: &str, year: i32) -> Option<ChosenNe> {
    // The row ending in `year` (latest start), else the one ending latest before it.
    let row = rows(table)
        .filter(|r| r.is_population(population) && r.number("ne_fs").is_some())
        .filter_map(|r| Some((r.year("year_end")?, r.year("year_start")?, r)))
        .filter(|(end, _, _)| *end <= year)
        .max_by_key(|(end, start, _)| (*end, *start))?;
    let (end, _, row) = row;
    let interval = row.interval("ne");
    Some(ChosenNe {
        ne: row.number("ne_fs")?,
        low: interval.map(|i| i.0),
        high: interval.map(|i| i.1),
        method: "temporal".into(),
        interval: interval.map(|_| "ne_low/ne_high"),
        year: end,
    })
}

fn from_hetx(table: &Table, population: &str, year: i32) -> Option<ChosenNe> {
    let row = rows(table).find(|r| r.is_population(population) && r.year("year") == Some(year))?;
    let interval = row.interval("ne");
    Some(ChosenNe {
        ne: row.number("ne")?,
        low: interval.map(|i| i.0),
        high: interval.map(|i| i.1),
        method: "hetx".into(),
        interval: interval.map(|_| "ne_low/ne_high"),
        year,
    })
}
