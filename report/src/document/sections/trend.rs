//! Trends over the sampling years.

use super::*;

/// Trends.
#[derive(Debug, Clone, Serialize)]
pub struct TrendSection {
    /// Step id.
    pub step: String,
    /// Tests per population and metric.
    pub tests: TableData,
    /// Paired two-point comparisons, when the step made them.
    pub paired: Option<TableData>,
}

pub(crate) fn trend_section(ctx: &Context<'_>, _extras: &mut Extras) -> Option<TrendSection> {
    let step = ctx.results.step(uses::TREND)?;
    let mut tests = TableData::new(&[
        ("Population", false),
        ("Metric", false),
        ("Points", true),
        ("Kendall τ", true),
        ("p (MK)", true),
        ("Sen slope /yr", true),
        ("LS slope /yr (95 % CI)", true),
    ]);
    if let Some(rows) = table_of(step, table::TESTS) {
        for row in rows.iter() {
            let ls = match row.num(col::OLS_SLOPE) {
                None => format::UNDEFINED.to_string(),
                Some(s) => format!(
                    "{} ({})",
                    format::significant(s, 3),
                    format::interval(row.num(col::OLS_LOW), row.num(col::OLS_HIGH), NumberStyle::Significant(3))
                ),
            };
            tests.push(vec![
                text(&row, col::POPULATION),
                // A metric tested on the inverse scale (Ne as 1/Ne) is labelled so, since its
                // slopes are in those units.
                match row.text("scale") {
                    Some(scale) if scale != "value" => {
                        format!("1/{}", metric_label(row.text(col::METRIC).unwrap_or("")))
                    }
                    _ => metric_label(row.text(col::METRIC).unwrap_or("")),
                },
                whole(&row, col::POINTS),
                format::maybe(row.num(col::MK_TAU), NumberStyle::Fixed(2)),
                format::maybe(row.num(col::MK_P), NumberStyle::PValue),
                format::maybe(row.num(col::SEN_SLOPE), NumberStyle::Significant(3)),
                ls,
            ]);
        }
    }
    tests.drop_empty_columns(&["Population", "Metric", "Points"]);
    let paired = table_of(step, table::PAIRED).filter(|t| !t.is_empty()).map(|t| readable(&t));
    Some(TrendSection { step: step.id.clone(), tests, paired })
}

/// `he` → `He`, `ne:ld` → `Ne (ld)`.
pub(crate) fn metric_label(metric: &str) -> String {
    match metric {
        "he" => "He".into(),
        "ho" => "Ho".into(),
        "ar" => "Ar".into(),
        "f" => "F".into(),
        other => match other.strip_prefix("ne:") {
            Some(step) => format!("Ne ({step})"),
            None => other.to_string(),
        },
    }
}
