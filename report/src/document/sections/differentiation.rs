//! Differentiation: the FST matrix, the Mantel test and isolation by distance.

use super::*;

/// Differentiation.
#[derive(Debug, Clone, Serialize)]
pub struct DifferentiationSection {
    /// Step id.
    pub step: String,
    /// FST below the diagonal (shaded), permutation p above.
    pub matrix: Option<HeatTable>,
    /// Which year the matrix shows (`pooled` or a year).
    pub matrix_years: String,
    /// Global FST with its interval, display text.
    pub global: Option<String>,
    /// Isolation-by-distance test, as a table.
    pub ibd_test: Option<TableData>,
    /// What the Mantel test says and does not say, in a sentence.
    pub ibd_note: Option<String>,
    /// Appendix key of the full pairwise table.
    pub pairwise: Option<String>,
}

pub(crate) fn differentiation_section(ctx: &Context<'_>, extras: &mut Extras) -> Option<DifferentiationSection> {
    let step = ctx.results.step(uses::DIFFERENTIATION)?;
    let pairwise = table_of(step, table::PAIRWISE);
    let (matrix, matrix_years) = match &pairwise {
        Some(p) => fst_matrix(ctx, p),
        None => (None, String::new()),
    };
    let global = table_of(step, table::GLOBAL).and_then(|g| {
        let row = g.iter().find(|r| r.num(col::YEAR).is_none()).or_else(|| g.iter().next())?;
        let fst = row.num(col::FST)?;
        Some(match (row.num(col::FST_LOW), row.num(col::FST_HIGH)) {
            (None, None) => format::fixed(fst, 3),
            (low, high) => {
                format!("{} (95 % CI {})", format::fixed(fst, 3), format::interval(low, high, NumberStyle::Fixed(3)))
            }
        })
    });
    if let Some(ibd) = table_of(step, table::IBD) {
        isolation_by_distance(&ibd, table_of(step, table::IBD_TEST), extras);
    }
    let ibd_test = table_of(step, table::IBD_TEST).filter(|t| !t.is_empty()).map(|t| readable(&t));
    let pairwise_key = pairwise.filter(|p| !p.is_empty()).map(|p| {
        let mut data = generic(&p);
        data.drop_empty_columns(&[]);
        extras.appendix(
            format!("Pairwise differentiation (step \"{}\")", step.id),
            data,
            table_file(&step.id, table::PAIRWISE),
        )
    });
    Some(DifferentiationSection {
        step: step.id.clone(),
        matrix,
        matrix_years,
        global,
        ibd_note: table_of(step, table::IBD_TEST).and_then(|t| mantel_note(&t)),
        ibd_test,
        pairwise: pairwise_key,
    })
}

/// The FST matrix of the pooled rows (year `null`), or of the latest year when every row has
/// one; FST below the diagonal, permutation p above.
fn fst_matrix(ctx: &Context<'_>, pairwise: &Rows<'_>) -> (Option<HeatTable>, String) {
    let pooled: Vec<Row<'_>> = pairwise.iter().filter(|r| r.num(col::YEAR).is_none()).collect();
    let (rows, years) = if pooled.is_empty() {
        let latest = pairwise.iter().filter_map(|r| r.int(col::YEAR)).max();
        (
            pairwise.iter().filter(|r| r.int(col::YEAR) == latest).collect::<Vec<_>>(),
            latest.map_or_else(String::new, |y| y.to_string()),
        )
    } else {
        (pooled, "pooled".to_string())
    };
    let names: Vec<String> = ctx
        .populations
        .iter()
        .filter(|p| {
            rows.iter().any(|r| r.text(col::POP_A) == Some(p.as_str()) || r.text(col::POP_B) == Some(p.as_str()))
        })
        .cloned()
        .collect();
    if names.len() < 2 {
        return (None, years);
    }
    let index = |name: Option<&str>| name.and_then(|n| names.iter().position(|p| p == n));
    let mut fst = vec![vec![None; names.len()]; names.len()];
    let mut p = vec![vec![None; names.len()]; names.len()];
    for row in &rows {
        if let (Some(a), Some(b)) = (index(row.text(col::POP_A)), index(row.text(col::POP_B))) {
            let (hi, lo) = if a > b { (a, b) } else { (b, a) };
            fst[hi][lo] = row.num(col::FST);
            p[lo][hi] = row.num(col::FST_P);
        }
    }
    let max = fst.iter().flatten().flatten().copied().filter(|v| v.is_finite()).fold(0.0_f64, f64::max);
    let cells = (0..names.len())
        .map(|i| {
            (0..names.len())
                .map(|j| match i.cmp(&j) {
                    std::cmp::Ordering::Equal => HeatCell { text: String::new(), heat: None },
                    std::cmp::Ordering::Greater => HeatCell {
                        text: format::maybe(fst[i][j], NumberStyle::Fixed(3)),
                        heat: fst[i][j]
                            .filter(|v| v.is_finite())
                            .map(|v| if max > 0.0 { (v / max).clamp(0.0, 1.0) } else { 0.0 }),
                    },
                    std::cmp::Ordering::Less => {
                        HeatCell { text: format::maybe(p[i][j], NumberStyle::PValue), heat: None }
                    }
                })
                .collect()
        })
        .collect();
    (Some(HeatTable { labels: names, cells, max: format::fixed(max, 3) }), years)
}

/// The Mantel test of the pooled row in words: its p-value, how it was obtained, the smallest
/// p the number of populations allows, and whether the fitted line is evidence or description.
fn mantel_note(test: &Rows<'_>) -> Option<String> {
    let row = test.iter().find(|r| r.num(col::YEAR).is_none()).or_else(|| test.iter().next())?;
    let p = row.num("mantel_p")?;
    let orders = row.int("permutations");
    let how = match (row.text("mantel_method"), orders) {
        (Some("exact"), Some(n)) => format!("from all {n} orders of the populations (exact)"),
        (_, Some(n)) => format!("from {n} random orders of the populations"),
        _ => String::new(),
    };
    let floor = row
        .num("mantel_p_min")
        .map(|m| format!("; the smallest p these populations allow is {}", format::p_value(m)))
        .unwrap_or_default();
    let verdict = if p < 0.05 {
        "Genetic differentiation increases with distance at the 5 % level; the line is the least-squares fit."
    } else {
        "The relation is not significant at the 5 % level: the fitted line describes the points and is no evidence of isolation by distance."
    };
    Some(format!("Mantel test {} {how}{floor}. {verdict}", format::p_phrase(p)).replace("  ", " "))
}

/// The isolation-by-distance scatter: the first column naming a distance against the first
/// naming FST, with the test's slope when it gives one.
fn isolation_by_distance(ibd: &Rows<'_>, test: Option<Rows<'_>>, extras: &mut Extras) {
    let columns = &ibd.table().columns;
    let x = columns.iter().find(|c| c.contains("dist"));
    let y = columns
        .iter()
        .find(|c| c.contains("fst") && c.contains("lin"))
        .or_else(|| columns.iter().find(|c| c.contains("fst")));
    let (Some(x), Some(y)) = (x, y) else { return };
    let pooled: Vec<Row<'_>> = ibd.iter().filter(|r| r.num(col::YEAR).is_none()).collect();
    let rows = if pooled.is_empty() { ibd.iter().collect() } else { pooled };
    let labelled: Vec<(f64, f64, String)> = rows
        .iter()
        .filter_map(|r| {
            let pair =
                format!("{}–{}", r.label(col::POP_A).unwrap_or_default(), r.label(col::POP_B).unwrap_or_default());
            Some((r.num(x)?, r.num(y)?, pair))
        })
        .filter(|p| p.0.is_finite() && p.0 > 0.0 && p.1.is_finite())
        .collect();
    let left_out = rows.len() - labelled.len();
    if labelled.len() < 3 {
        return;
    }
    let points: Vec<(f64, f64)> = labelled.iter().map(|p| (p.0, p.1)).collect();
    let labels: Vec<String> = labelled.into_iter().map(|p| p.2).collect();
    // The test regresses on ln(distance) (Rousset 1997), so the chart's distance axis is
    // logarithmic and the fitted line straight on it.
    let test_row = test.and_then(|t| t.iter().find(|r| r.num(col::YEAR).is_none()).or_else(|| t.iter().next()));
    let fit = test_row.and_then(|r| Some((r.num("intercept")?, r.num("slope")?)));
    let x_label =
        if x.contains("km") { "Geographic distance (km, logarithmic axis)".to_string() } else { x.replace('_', " ") };
    let y_label = if y.contains("lin") { "FST/(1 − FST)".to_string() } else { y.replace('_', " ") };
    let alt = format!(
        "Isolation by distance: {y_label} against {x_label} for {} population pairs{}.",
        points.len(),
        if left_out > 0 {
            format!(
                " ({left_out} pair(s) without a positive distance or a finite value cannot be placed and are not drawn)"
            )
        } else {
            String::new()
        }
    );
    extras.figure("ibd", Figure::Scatter { points, labels, fit, log_x: x.contains("dist"), x_label, y_label }, alt);
}
