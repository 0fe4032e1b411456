//! The findings for `null` cells of `differentiation`'s tables that its other findings do not
//! explain: an interval missing for a defined FST, D or G″ST, a pair left untested although permutations
//! were asked for, an isolation-by-distance regression or Mantel test without a value, and a
//! Mantel test switched off (each one finding listing the comparisons).

use std::collections::BTreeMap;

use popgauge_abi::{Finding, FindingLevel, Table};

use super::Params;
use crate::special_values::{Row, explain, rows_where};

/// The findings, from the assembled tables (by name, as in the step's output).
pub(super) fn findings(tables: &BTreeMap<String, Table>, params: &Params) -> Vec<Finding> {
    let empty = Table::new(&[]);
    let table = |name: &str| tables.get(name).unwrap_or(&empty);
    let pair = |r: &Row<'_>| match r.text("year").as_str() {
        "" => format!("{}–{}", r.text("pop_a"), r.text("pop_b")),
        year => format!("{}–{} {year}", r.text("pop_a"), r.text("pop_b")),
    };
    let no_interval = |r: &Row<'_>| params.bootstrap > 0 && r.is_finite("fst") && r.is_null("fst_low");
    let mut without_interval = rows_where(table("pairwise"), no_interval, pair);
    without_interval.extend(rows_where(table("global"), no_interval, |r| format!("global ({})", r.text("comparison"))));
    // The point columns whose interval is missing although the bootstrap ran.
    let without_own_interval = |r: &Row<'_>| {
        let on = params.bootstrap > 0;
        r.columns_where(&["jost_d", "gst_pp"], |r, c| on && r.is_finite(c) && r.is_null(&format!("{c}_low")))
    };
    let index_interval_missing = |r: &Row<'_>| !without_own_interval(r).is_empty();
    let which = without_own_interval;
    let mut index_without_interval =
        rows_where(table("pairwise"), index_interval_missing, |r| format!("{} ({})", pair(r), which(r)));
    index_without_interval.extend(rows_where(table("global"), index_interval_missing, |r| {
        format!("global ({}) ({})", r.text("comparison"), which(r))
    }));
    let untested =
        rows_where(table("pairwise"), |r| params.permutations > 0 && r.is_finite("fst") && r.is_null("fst_p"), pair);
    let ibd_scope = |r: &Row<'_>| match r.text("year").as_str() {
        "" => format!("years pooled ({} usable pairs)", r.text("pairs")),
        year => format!("{year} ({} usable pairs)", r.text("pairs")),
    };
    let mantel_on = params.mantel_permutations > 0;
    let ibd_undefined = rows_where(
        table("ibd_test"),
        |r| r.is_null("slope") || r.is_null("r") || (mantel_on && r.is_null("mantel_p")),
        ibd_scope,
    );
    let mantel_off = if mantel_on { Vec::new() } else { rows_where(table("ibd_test"), |_| true, ibd_scope) };
    let findings = [
        explain(FindingLevel::Info, "fst-interval-undefined", &without_interval, |n, list| {
            format!(
                "{n} comparison(s) have FST but a null fst_low and fst_high: fewer than two bootstrap replicates over \
                 loci were defined (bootstrap = {}); raise `bootstrap` or type more polymorphic loci: {list}",
                params.bootstrap
            )
        }),
        explain(FindingLevel::Info, "differentiation-interval-undefined", &index_without_interval, |n, list| {
            format!(
                "{n} comparison(s) have Jost's D or G″ST but a null interval for it (the columns _low and _high): \
                 fewer than two bootstrap replicates over loci gave a defined value (a replicate drawing only loci \
                 monomorphic in the comparison, or with HS averaging 1, is undefined; bootstrap = {}); raise \
                 `bootstrap` or type more polymorphic loci: {list}",
                params.bootstrap
            )
        }),
        explain(FindingLevel::Info, "permutation-test-skipped", &untested, |n, list| {
            format!(
                "{n} pair(s) have more than 65,535 individuals between them, too many to permute, so fst_p is null \
                 there: {list}"
            )
        }),
        explain(FindingLevel::Info, "ibd-test-undefined", &ibd_undefined, |n, list| {
            format!(
                "{n} isolation-by-distance test(s) have a null slope, intercept, r or mantel_p (and with it \
                 mantel_p_min, permutations and mantel_method): the regression and the correlation need at least three pairs at positive distances with a defined FST/(1 − FST) and \
                 some spread in distance and in differentiation: {list}"
            )
        }),
        explain(FindingLevel::Info, "mantel-test-disabled", &mantel_off, |n, list| {
            format!(
                "mantel_permutations = 0: no Mantel test was run, so mantel_p, mantel_p_min, permutations and \
                 mantel_method are null in the {n} isolation-by-distance test(s) (set mantel_permutations to 999 or more to test): {list}"
            )
        }),
    ];
    findings.into_iter().flatten().collect()
}

#[cfg(test)]
mod tests {
    use popgauge_abi::Cell;

    use super::*;

    fn params(bootstrap: u32, permutations: u32) -> Params {
        serde_json::from_value(serde_json::json!({
            "bootstrap": bootstrap, "permutations": permutations, "by_year": false,
            "mantel_permutations": permutations
        }))
        .expect("valid parameters")
    }

    fn tables() -> BTreeMap<String, Table> {
        let mut pairwise = Table::new(&["pop_a", "pop_b", "year", "fst", "fst_low", "fst_p"]);
        let rows = [
            ("A", "B", Cell::Null, Cell::Num(0.1), Cell::Null, Cell::Num(0.01)),
            ("A", "C", Cell::Int(2020), Cell::Num(0.2), Cell::Num(0.1), Cell::Null),
            ("B", "C", Cell::Null, Cell::Null, Cell::Null, Cell::Null),
        ];
        for (a, b, year, fst, low, p) in rows {
            pairwise.push_row(vec![Cell::text(a), Cell::text(b), year, fst, low, p]).unwrap();
        }
        let mut global = Table::new(&["comparison", "fst", "fst_low"]);
        global.push_row(vec![Cell::text("all populations"), Cell::Num(0.1), Cell::Num(0.05)]).unwrap();
        let mut ibd_test = Table::new(&["year", "pairs", "slope", "r", "mantel_p"]);
        ibd_test.push_row(vec![Cell::Null, Cell::Int(2), Cell::Null, Cell::Null, Cell::Null]).unwrap();
        ibd_test.push_row(vec![Cell::Int(2020), Cell::Int(6), Cell::Num(0.1), Cell::Num(0.5), Cell::Num(0.2)]).unwrap();
        [("pairwise", pairwise), ("global", global), ("ibd_test", ibd_test)]
            .into_iter()
            .map(|(name, table)| (name.to_string(), table))
            .collect()
    }

    /// No null without a finding saying why; the rows are hand-made: A–B lacks its
    /// interval, A–C its p-value, B–C has no FST at all (`fst-undefined` covers it), and the
    /// pooled isolation-by-distance test has two pairs only.
    #[test]
    fn each_unexplained_null_gets_one_finding_naming_the_rows() {
        let findings = findings(&tables(), &params(100, 99));
        let codes: Vec<&str> = findings.iter().map(|f| f.code.as_str()).collect();
        assert_eq!(codes, ["fst-interval-undefined", "permutation-test-skipped", "ibd-test-undefined"]);
        assert!(
            findings[0].message.ends_with("(bootstrap = 100); raise `bootstrap` or type more polymorphic loci: A–B")
        );
        assert!(findings[1].message.ends_with("fst_p is null there: A–C 2020"), "{}", findings[1].message);
        assert!(findings[2].message.ends_with(": years pooled (2 usable pairs)"), "{}", findings[2].message);
    }

    /// With the bootstrap or the permutation test switched off, the scope finding and
    /// `permutation-test-disabled` already say why; a Mantel test switched off is said once.
    #[test]
    fn switched_off_methods_are_explained_once() {
        let findings = findings(&tables(), &params(0, 0));
        let codes: Vec<&str> = findings.iter().map(|f| f.code.as_str()).collect();
        assert_eq!(codes, ["ibd-test-undefined", "mantel-test-disabled"]);
        assert!(findings[1].message.ends_with("null in the 2 isolation-by-distance test(s) (set mantel_permutations to 999 or more to test): years pooled (2 usable pairs), 2020 (6 usable pairs)"), "{}", findings[1].message);
    }
}
