//! Effective population size: each Ne step's table, the chart against the thresholds and Ne over the years.

use super::*;

/// Effective population size by method.
#[derive(Debug, Clone, Serialize)]
pub struct NeSection {
    /// One block per Ne step.
    pub methods: Vec<NeMethod>,
    /// What the chart shows (its source), when drawn.
    pub chart_source: Option<String>,
    /// Every estimate of each population side by side.
    pub overview: Option<TableData>,
}

/// One Ne step's estimates.
#[derive(Debug, Clone, Serialize)]
pub struct NeMethod {
    /// Step id.
    pub step: String,
    /// `ne-ld`, `ne-temporal` or `ne-hetx`.
    pub uses: String,
    /// Estimates (body part).
    pub table: TableData,
    /// Appendix key of the rest.
    pub more: Option<String>,
    /// The sampling plan of a temporal step (`I` or `II`, Waples 1989).
    pub plan: Option<String>,
    /// The estimates the step found imprecise (Ne large relative to the sample), in a
    /// sentence printed beside its table.
    pub precision: Option<String>,
}

/// Findings of the Ne steps that mark an estimate as imprecise (Ne large relative to S), and
/// what the document says of the estimates they name.
const PRECISION_FINDINGS: [(&str, &str); 2] = [
    (
        "ld-precision-low",
        "are more than 5 × S or infinite, and the upper bound of their recommended 95 % interval is infinite: \
         there the drift signal is small beside the linkage disequilibrium that sampling S individuals produces, \
         and the method loses precision (Waples & Do 2010). Read their intervals, whose lower bounds are what \
         the data support; more individuals narrow them.",
    ),
    (
        "temporal-precision-low",
        "exceed the generations between the samples times their harmonic-mean sample size, or are infinite, \
         with no finite upper bound: the change of allele frequencies by drift is small beside sampling noise, \
         and such estimates are often too large. Read their intervals with caution.",
    ),
];

/// "The estimates of A 2018, B 2018–2021 … are …": the rows an Ne step flagged as imprecise,
/// named by the subject of each finding (before its details in parentheses).
fn precision_note(step: &StepResult) -> Option<String> {
    let sentences: Vec<String> = PRECISION_FINDINGS
        .iter()
        .filter_map(|(code, says)| {
            let rows: Vec<String> = step
                .findings
                .iter()
                .filter(|f| f.code == *code)
                .filter_map(|f| subject_and_reason(&f.message).0)
                .map(|subject| {
                    let name = subject.split(" (").next().unwrap_or(subject);
                    name.strip_prefix("group ").unwrap_or(name).to_string()
                })
                .collect();
            (!rows.is_empty()).then(|| format!("The estimates of {} {says}", rows.join(", ")))
        })
        .collect();
    (!sentences.is_empty()).then(|| sentences.join(" "))
}

pub(crate) fn ne_section(ctx: &Context<'_>, extras: &mut Extras) -> Option<NeSection> {
    let mut methods = Vec::new();
    for uses_name in [uses::NE_LD, uses::NE_TEMPORAL, uses::NE_HETX] {
        for step in ctx.results.steps(uses_name) {
            let Some(estimates) = table_of(step, table::ESTIMATES) else { continue };
            let (mut t, more) = match uses_name {
                // The body shows the rule for rare alleles that fits each sample's size; the
                // estimates at every rule go to the appendix.
                uses::NE_LD => {
                    let all = ld_table(&estimates, |_| true);
                    let chosen = ld_table(&estimates, |row| is_representative_ld(step, row));
                    let title = format!("LD estimates of step \"{}\" at every rule for rare alleles", step.id);
                    let every = extras.appendix(title, all, table_file(&step.id, table::ESTIMATES));
                    (chosen, Some(every))
                }
                uses::NE_TEMPORAL => (temporal_table(&estimates), None),
                _ => (hetx_table(&estimates), None),
            };
            let more = more.or_else(|| {
                let title = format!("Ne estimates of step \"{}\" (continued)", step.id);
                extras.overflow(&mut t, title, table_file(&step.id, table::ESTIMATES))
            });
            let plan = ctx
                .runs
                .iter()
                .find(|r| r.id == step.id)
                .and_then(|r| r.params.get("plan"))
                .and_then(serde_json::Value::as_str)
                .map(str::to_string);
            let precision = precision_note(step);
            methods.push(NeMethod { step: step.id.clone(), uses: step.uses.clone(), table: t, more, plan, precision });
        }
    }
    let chart_source = ne_chart(ctx, extras);
    ne_over_years(ctx, extras);
    if methods.is_empty() && chart_source.is_none() {
        return None;
    }
    Some(NeSection { methods, chart_source, overview: super::super::ne_overview::ne_overview(ctx) })
}

/// Whether an `ne-ld` row holds the rule for rare alleles that the SDK's sample-size rule picks
/// for its population and year (the estimate `status` and `trend` use).
fn is_representative_ld(step: &StepResult, row: &Row<'_>) -> bool {
    let (Some(population), Some(year)) = (row.text(col::POPULATION), row.int(col::YEAR)) else { return false };
    let Ok(year) = i32::try_from(year) else { return false };
    let by_size = [NeSource::Ld(LdChoice::BySampleSize)];
    let chosen = representative_ne(std::slice::from_ref(step), population, year, &by_size);
    match (chosen.and_then(|c| c.criterion), row.cell(col::PCRIT)) {
        (Some(criterion), Some(cell)) => criterion.matches(cell),
        _ => false,
    }
}

fn ld_table(rows: &Rows<'_>, keep: impl Fn(&Row<'_>) -> bool) -> TableData {
    let mut t = TableData::new(&[
        ("Population", false),
        ("Year", true),
        ("Pcrit", true),
        ("S", true),
        ("Ne", true),
        ("95 % CI (resampling)", true),
        ("95 % CI (jackknife)", true),
        ("95 % CI (parametric)", true),
    ]);
    for row in rows.iter().filter(|r| keep(r)) {
        t.push(vec![
            text(&row, col::POPULATION),
            whole(&row, col::YEAR),
            // A criterion may be text (`singletons`: only alleles seen once are left out).
            row.cell(col::PCRIT)
                .map_or_else(|| format::UNDEFINED.to_string(), |c| format::cell(c, NumberStyle::Short(3))),
            format::maybe(row.num(col::S), NumberStyle::Significant(3)),
            ne(&row, col::NE),
            ne_interval(&row, col::NE_RESAMPLE_LOW, col::NE_RESAMPLE_HIGH),
            ne_interval(&row, col::NE_JACK_LOW, col::NE_JACK_HIGH),
            ne_interval(&row, col::NE_PARAM_LOW, col::NE_PARAM_HIGH),
        ]);
    }
    t.drop_empty_columns(&["Population", "Ne"]);
    t
}

fn temporal_table(rows: &Rows<'_>) -> TableData {
    let mut t = TableData::new(&[
        ("Population", false),
        ("Interval", false),
        ("Generations", true),
        ("Ne (Fs)", true),
        ("95 % CI", true),
        ("Ne (Fc)", true),
        ("Ne (Fk)", true),
    ]);
    for row in rows.iter() {
        t.push(vec![
            text(&row, col::POPULATION),
            format!("{}–{}", whole(&row, col::YEAR_START), whole(&row, col::YEAR_END)),
            format::maybe(row.num(col::GENERATIONS), NumberStyle::Short(3)),
            ne(&row, col::NE_FS),
            ne_interval(&row, col::NE_LOW, col::NE_HIGH),
            ne(&row, "ne_fc"),
            ne(&row, "ne_fk"),
        ]);
    }
    t.drop_empty_columns(&["Population", "Ne (Fs)"]);
    t
}

fn hetx_table(rows: &Rows<'_>) -> TableData {
    let mut t = TableData::new(&[("Population", false), ("Year", true), ("D", true), ("Ne", true)]);
    for row in rows.iter() {
        t.push(vec![
            text(&row, col::POPULATION),
            whole(&row, col::YEAR),
            format::maybe(row.num(col::D), NumberStyle::Fixed(3)),
            ne(&row, col::NE),
        ]);
    }
    t
}

/// Ne per population with its interval, against the thresholds: the status step's chosen
/// estimate when present, otherwise the estimate that represents the population's latest
/// estimated year by the SDK's default preference (the rule `status` applies).
fn ne_chart(ctx: &Context<'_>, extras: &mut Extras) -> Option<String> {
    let (points, source) = status_points(ctx).or_else(|| representative_points(ctx))?;
    if points.is_empty() {
        return None;
    }
    let alt = format!(
        "Effective population size per population ({source}) with 95 % confidence intervals on a logarithmic axis; dashed lines mark the thresholds Ne = {}.",
        ctx.thresholds.iter().map(|t| format::effective_size(*t)).collect::<Vec<_>>().join(" and ")
    );
    extras.figure(
        "ne",
        Figure::IntervalsAgainstThresholds {
            points,
            thresholds: ctx.thresholds.to_vec(),
            y_label: "Effective population size Ne".into(),
        },
        alt,
    );
    Some(source)
}

type Points = (Vec<IntervalPoint>, String);

fn status_points(ctx: &Context<'_>) -> Option<Points> {
    let step = ctx.results.step(uses::STATUS)?;
    let rows = table_of(step, table::POPULATIONS)?;
    let latest = latest_rows(&rows);
    let points = latest
        .iter()
        .filter_map(|r| {
            let population = r.text(col::POPULATION)?;
            Some(IntervalPoint {
                label: population.into(),
                style: ctx.style_of(population),
                value: r.num(col::NE)?,
                low: r.num(col::NE_LOW),
                high: r.num(col::NE_HIGH),
            })
        })
        .collect();
    Some((points, format!("the estimate chosen by step \"{}\"", step.id)))
}

/// Without a status step: per population, the latest year any Ne step estimated, and the
/// estimate that represents it by the default preference.
fn representative_points(ctx: &Context<'_>) -> Option<Points> {
    let steps = &ctx.results.doc().steps;
    let preference = NeSource::default_preference();
    let groups: Vec<(String, i32)> = [uses::NE_LD, uses::NE_TEMPORAL, uses::NE_HETX]
        .iter()
        .flat_map(|u| ctx.results.steps(u))
        .flat_map(estimated_groups)
        .collect();
    if groups.is_empty() {
        return None;
    }
    let points = ctx
        .populations
        .iter()
        .filter_map(|population| {
            let year = groups.iter().filter(|(p, _)| p == population).map(|(_, y)| *y).max()?;
            let chosen = representative_ne(steps, population, year, &preference)?;
            Some(IntervalPoint {
                label: format!("{population} {year}"),
                style: ctx.style_of(population),
                value: chosen.ne,
                low: chosen.low,
                high: chosen.high,
            })
        })
        .collect();
    Some((points, "the estimate of each population's latest sample, by the default choice of source".to_string()))
}

/// LD Ne over sampling years per population (log axis), when there are at least two years;
/// each year's value is the LD estimate that represents it (its criterion follows that
/// sample's size, as in `status` and `trend`).
fn ne_over_years(ctx: &Context<'_>, extras: &mut Extras) {
    let Some(step) = ctx.results.step(uses::NE_LD) else { return };
    let ld_only = [NeSource::Ld(LdChoice::BySampleSize)];
    let slopes = trend_slopes(ctx, &format!("ne:{}", step.id));
    let chosen: Vec<(String, f64, popgauge_abi::RepresentativeNe)> = estimated_groups(step)
        .into_iter()
        .filter_map(|(population, year)| {
            let chosen = representative_ne(std::slice::from_ref(step), &population, year, &ld_only)?;
            (!chosen.ne.is_nan()).then_some((population, f64::from(year), chosen))
        })
        .collect();
    let values = chosen.iter().map(|(p, year, c)| (p.clone(), *year, c.ne));
    let mut series = series_by_population(ctx, values, &slopes);
    for s in &mut series {
        s.intervals = chosen
            .iter()
            .filter(|(p, _, _)| *p == s.name)
            .filter_map(|(_, year, c)| Some((*year, c.low?, c.high?)))
            .collect();
    }
    if series.iter().any(|s| s.points.len() >= 2) {
        let alt = format!(
            "LD estimates of Ne per population and sampling year (step \"{}\") with their 95 % intervals on a logarithmic axis; an infinite estimate is marked ∞ at the top edge, and an interval without a finite upper bound ends in an arrow there.",
            step.id
        );
        extras.figure(
            "ne-years",
            Figure::Lines {
                series,
                x_label: "Sampling year".into(),
                y_label: "Ne (LD)".into(),
                log_y: true,
                y_from_zero: false,
            },
            alt,
        );
    }
}
