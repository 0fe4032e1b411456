use super::*;
use crate::output::Table;

fn result(id: &str, uses: &str, columns: &[&str], rows: Vec<Vec<Cell>>) -> StepResult {
    let mut table = Table::new(columns);
    for row in rows {
        table.push_row(row).unwrap();
    }
    StepResult {
        id: id.into(),
        uses: uses.into(),
        version: "0.1.0".into(),
        status: StepStatus::Ok,
        error: None,
        tables: [(ne_steps::ESTIMATES.to_string(), table)].into_iter().collect(),
        findings: Vec::new(),
        citations: Vec::new(),
        exclusions: Default::default(),
    }
}

const LD_COLUMNS: [&str; 11] = [
    "population",
    "year",
    "pcrit",
    "s",
    "ne",
    "ne_param_low",
    "ne_param_high",
    "ne_jack_low",
    "ne_jack_high",
    "ne_resample_low",
    "ne_resample_high",
];

fn n(x: f64) -> Cell {
    Cell::number(x)
}

/// One `ne-ld` row: the estimate with a jackknife interval only.
fn ld_row(population: &str, year: i64, pcrit: Cell, s: f64, ne: f64) -> Vec<Cell> {
    vec![
        Cell::text(population),
        Cell::Int(year),
        pcrit,
        n(s),
        n(ne),
        Cell::Null,
        Cell::Null,
        n(ne * 0.5),
        n(ne * 2.0),
        Cell::Null,
        Cell::Null,
    ]
}

/// Rows at Pcrit 0.05, 0.02 and no singletons for one group with sample size `s`.
fn ld_group(population: &str, year: i64, s: f64) -> Vec<Vec<Cell>> {
    vec![
        ld_row(population, year, n(0.05), s, 300.0),
        ld_row(population, year, n(0.02), s, 200.0),
        ld_row(population, year, Cell::text("singletons"), s, 100.0),
    ]
}

fn ld(rows: Vec<Vec<Cell>>) -> StepResult {
    result("ld", "ne-ld", &LD_COLUMNS, rows)
}

fn by_rule(earlier: &[StepResult], population: &str, year: i32) -> Option<RepresentativeNe> {
    representative_ne(earlier, population, year, &[NeSource::Ld(LdChoice::BySampleSize)])
}

/// Waples & Do (2010, Evol Appl 3:244–262): no singletons at S ≤ 25, Pcrit 0.02 above; the
/// boundary S = 25 itself drops singletons (0.02 · 2 · 25 = 1 copy screens nothing).
#[test]
fn the_ld_criterion_follows_the_sample_size() {
    let rows =
        [ld_group("A", 2020, 18.0), ld_group("B", 2020, 25.0), ld_group("C", 2020, 25.5), ld_group("D", 2020, 80.0)]
            .concat();
    let earlier = [ld(rows)];
    let method = |p: &str| by_rule(&earlier, p, 2020).map(|r| (r.method(), r.ne, r.samples, r.criterion_reason));
    let rule = Some(CriterionReason::SampleSizeRule);
    assert_eq!(method("A"), Some(("ld:singletons".into(), 100.0, Some(18.0), rule)));
    assert_eq!(method("B"), Some(("ld:singletons".into(), 100.0, Some(25.0), rule)));
    assert_eq!(method("C"), Some(("ld:0.02".into(), 200.0, Some(25.5), rule)));
    assert_eq!(method("D"), Some(("ld:0.02".into(), 200.0, Some(80.0), rule)));
    assert_eq!(LdCriterion::for_sample_size(25.0), LdCriterion::NoSingletons);
    assert_eq!(LdCriterion::for_sample_size(25.000_001), LdCriterion::Pcrit(0.02));
    let chosen = by_rule(&earlier, "A", 2020).unwrap();
    assert_eq!((chosen.rule_samples, chosen.year, chosen.step_id.as_str()), (Some(18.0), 2020, "ld"));
    assert_eq!((chosen.low, chosen.high, chosen.interval), (Some(50.0), Some(200.0), Some(IntervalKind::Jackknife)));
}

/// A named criterion wins over the rule, and gives nothing when the step did not estimate it.
#[test]
fn a_named_criterion_wins() {
    let earlier = [ld(ld_group("A", 2020, 18.0))];
    let fixed = |word: &str| representative_ne(&earlier, "A", 2020, &[NeSource::parse(word).unwrap()]);
    let chosen = fixed("ld:0.05").unwrap();
    assert_eq!((chosen.ne, chosen.criterion_reason), (300.0, Some(CriterionReason::Preferred)));
    assert_eq!(fixed("ld:0.02").unwrap().ne, 200.0);
    assert!(fixed("ld:0.01").is_none());
}

/// When the rule's criterion was not estimated the group's first row with an estimate is used
/// and the reason says which criterion was missing; without any `s` the 0.02 row is used.
#[test]
fn a_missing_rule_criterion_is_reported() {
    let rows = vec![ld_row("A", 2020, n(0.05), 18.0, 300.0), ld_row("A", 2020, n(0.02), 18.0, 200.0)];
    let chosen = by_rule(&[ld(rows)], "A", 2020).unwrap();
    assert_eq!(chosen.method(), "ld:0.05");
    assert_eq!(chosen.criterion_reason, Some(CriterionReason::RuleCriterionMissing(LdCriterion::NoSingletons)));
    let mut rows = ld_group("A", 2020, 40.0);
    for row in &mut rows {
        row[3] = Cell::Null;
    }
    let chosen = by_rule(&[ld(rows)], "A", 2020).unwrap();
    assert_eq!(
        (chosen.method(), chosen.criterion_reason),
        ("ld:0.02".into(), Some(CriterionReason::SampleSizeUnknown))
    );
}

/// One Pcrit tolerance, 1e-9 (common practice: values written through JSON differ at most in
/// the last binary digits).
#[test]
fn pcrit_values_match_within_the_tolerance() {
    let criterion = LdCriterion::Pcrit(0.02);
    assert!(criterion.matches(&n(0.02 + 5e-10)));
    assert!(!criterion.matches(&n(0.02 + 2e-9)));
    assert!(!criterion.matches(&Cell::text("singletons")));
    assert!(LdCriterion::NoSingletons.matches(&Cell::text("singletons")));
    assert!(!LdCriterion::NoSingletons.matches(&Cell::Null));
}

/// The resampling interval is preferred, then the jackknife, then the parametric one; an
/// interval with one null bound does not count.
#[test]
fn the_most_trusted_complete_ld_interval_is_used() {
    let mut row = ld_row("A", 2020, n(0.02), 60.0, 100.0);
    row[5] = n(70.0);
    row[6] = n(150.0);
    row[9] = n(40.0);
    row[10] = Cell::Null;
    let chosen = by_rule(&[ld(vec![row.clone()])], "A", 2020).unwrap();
    assert_eq!((chosen.bounds(), chosen.interval), (Some((50.0, 200.0)), Some(IntervalKind::Jackknife)));
    row[10] = Cell::Inf;
    let chosen = by_rule(&[ld(vec![row])], "A", 2020).unwrap();
    assert_eq!((chosen.bounds(), chosen.interval), (Some((40.0, f64::INFINITY)), Some(IntervalKind::Resampling)));
}

fn temporal(rows: &[(&str, i64, i64, Cell)]) -> StepResult {
    let columns = ["population", "year_start", "year_end", "ne_fs", "ne_low", "ne_high"];
    let rows = rows
        .iter()
        .map(|(p, start, end, ne)| {
            vec![Cell::text(*p), Cell::Int(*start), Cell::Int(*end), ne.clone(), n(10.0), Cell::Inf]
        })
        .collect();
    result("temp", "ne-temporal", &columns, rows)
}

/// Temporal: the row ending in the year with the latest start (shortest interval), else the
/// latest row ending before it; rows without an estimate are skipped; a tie keeps the first.
#[test]
fn the_temporal_estimate_is_the_latest_starting_one() {
    let earlier = [temporal(&[
        ("A", 2010, 2020, n(900.0)),
        ("A", 2015, 2020, n(600.0)),
        ("A", 2018, 2020, Cell::Null),
        ("A", 2010, 2015, n(400.0)),
        ("A", 2012, 2015, n(450.0)),
        ("A", 2012, 2015, n(460.0)),
    ])];
    let at = |year| representative_ne(&earlier, "A", year, &[NeSource::Temporal]);
    let chosen = at(2020).unwrap();
    assert_eq!((chosen.ne, chosen.year_start, chosen.year), (600.0, Some(2015), 2020));
    assert_eq!((chosen.method(), chosen.interval), ("temporal".into(), Some(IntervalKind::NeLowHigh)));
    let before = at(2018).unwrap();
    assert_eq!((before.ne, before.year_start, before.year), (450.0, Some(2012), 2015));
    assert!(at(2014).is_none());
}

/// The preference is followed in order, a source without an estimate gives way to the next,
/// the last step of a kind is read and a failed step is passed over.
#[test]
fn sources_are_tried_in_order() {
    let hetx = |id: &str, ne: f64| {
        result(
            "hx",
            "ne-hetx",
            &["population", "year", "ne", "ne_low", "ne_high"],
            vec![vec![Cell::text("A"), Cell::Int(2020), n(ne), Cell::Null, Cell::Null]],
        )
        .with_id(id)
    };
    let mut failed = hetx("hx3", 70.0);
    failed.status = StepStatus::Failed;
    let earlier = [ld(ld_group("B", 2020, 40.0)), hetx("hx1", 30.0), hetx("hx2", 50.0), failed];
    let chosen = representative_ne(&earlier, "A", 2020, &NeSource::default_preference()).unwrap();
    assert_eq!((chosen.kind, chosen.ne, chosen.step_id.as_str()), (NeKind::Hetx, 50.0, "hx2"));
    assert_eq!(chosen.interval, None);
    assert_eq!(representative_ne(&earlier, "B", 2020, &NeSource::default_preference()).unwrap().kind, NeKind::Ld);
    assert!(representative_ne(&earlier, "A", 2019, &NeSource::default_preference()).is_none());
    assert!(representative_ne(&earlier, "A", 2020, &[]).is_none());
}

impl StepResult {
    fn with_id(mut self, id: &str) -> StepResult {
        self.id = id.into();
        self
    }
}

/// An interval ∞–∞ is not an estimate of size; a finite lower bound is.
#[test]
fn an_infinite_lower_bound_is_not_estimable() {
    let mut row = ld_row("A", 2020, n(0.02), 60.0, f64::INFINITY);
    row[7] = Cell::Inf;
    row[8] = Cell::Inf;
    assert!(!by_rule(&[ld(vec![row.clone()])], "A", 2020).unwrap().is_estimable());
    row[7] = n(400.0);
    assert!(by_rule(&[ld(vec![row])], "A", 2020).unwrap().is_estimable());
}

#[test]
fn preference_entries_parse_and_print_back() {
    for word in ["ld", "ld:0.02", "ld:0.05", "ld:singletons", "temporal", "hetx"] {
        assert_eq!(NeSource::parse(word).unwrap().to_string(), word);
    }
    let err = NeSource::parse("ld:0.7").unwrap_err();
    assert_eq!(err.word, "ld:0.7");
    let message = err.to_string();
    assert!(message.starts_with("\"ld:0.7\" is not an Ne source\n  help: use \"ld\""), "{message}");
    assert!(NeSource::parse("LD").is_err());
    let parsed: Vec<NeSource> = DEFAULT_PREFERENCE.iter().map(|w| NeSource::parse(w).unwrap()).collect();
    assert_eq!(parsed, NeSource::default_preference());
    assert_eq!(NeSource::for_uses("ne-temporal", LdChoice::BySampleSize), Some(NeSource::Temporal));
    assert_eq!(NeSource::for_uses("diversity", LdChoice::BySampleSize), None);
}

#[test]
fn estimated_groups_list_population_and_year_once() {
    let rows = [ld_group("A", 2020, 40.0), ld_group("A", 2021, 40.0), ld_group("B", 2020, 40.0)].concat();
    let groups = estimated_groups(&ld(rows));
    assert_eq!(groups, vec![("A".into(), 2020), ("A".into(), 2021), ("B".into(), 2020)]);
    let t = temporal(&[("A", 2010, 2020, n(1.0)), ("A", 2015, 2020, n(1.0))]);
    assert_eq!(estimated_groups(&t), vec![("A".into(), 2020)]);
}
