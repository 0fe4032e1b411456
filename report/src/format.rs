//! Numbers as the document prints them.
//!
//! Every number reaches the template as text made here, so rounding is decided once, in Rust
//! (Typst would print 139 for 139.0 and round differently from the tables). Conventions:
//!
//! - an infinite estimate prints as `∞`, an undefined one (`null`) as `—`;
//! - negative numbers carry a true minus sign (`−0.012`), and −0 prints as `0`;
//! - proportions (Ho, He, F, FST, …) keep three decimals, Ne is rounded to a whole number from
//!   10 up, p-values below 0.001 print as `< 0.001`, shares print as percentages.
//!
//! The CSV tables and `results.json` keep full precision through
//! [`popgauge_abi::format_number`]; these helpers are for reading only.

use popgauge_abi::Cell;

/// What an undefined value prints as.
pub const UNDEFINED: &str = "—";
/// What an infinite estimate prints as.
pub const INFINITE: &str = "∞";

/// How a column's numbers are shown.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum NumberStyle {
    /// Counts, years and other whole numbers, as they are.
    Whole,
    /// A fixed number of decimals (proportions: 3).
    Fixed(usize),
    /// Effective sizes: whole numbers from 10 up, one decimal below.
    EffectiveSize,
    /// p- and q-values: three decimals, `< 0.001` below that.
    PValue,
    /// Shares in [0, 1] as percentages with one decimal.
    Percent,
    /// A number of significant digits (slopes).
    Significant(usize),
    /// At most this many significant digits, trailing zeros dropped (Pcrit 0.05, 1.5
    /// generations, plugin columns of unknown kind).
    Short(usize),
}

/// Replaces a leading hyphen-minus with a true minus sign and avoids `-0`.
fn signed(text: String) -> String {
    match text.strip_prefix('-') {
        Some(rest) if rest.chars().all(|c| c == '0' || c == '.') => rest.to_string(),
        Some(rest) => format!("−{rest}"),
        None => text,
    }
}

/// `value` with `decimals` decimals; `∞` for +∞, `—` for NaN.
pub fn fixed(value: f64, decimals: usize) -> String {
    if let Some(special) = special(value) {
        return special;
    }
    signed(format!("{value:.decimals$}"))
}

/// `value` with `digits` significant digits (at least 1), in plain notation from 0.00001 to
/// 10⁹ and `1.23e-6` style outside that range.
pub fn significant(value: f64, digits: usize) -> String {
    if let Some(special) = special(value) {
        return special;
    }
    let digits = digits.max(1);
    if value == 0.0 {
        return "0".into();
    }
    let magnitude = value.abs().log10().floor() as i32;
    if !(-5..9).contains(&magnitude) {
        return signed(format!("{value:.prec$e}", prec = digits - 1));
    }
    let decimals = (digits as i32 - 1 - magnitude).max(0) as usize;
    signed(format!("{value:.decimals$}"))
}

/// [`significant`] without trailing zeros after the decimal point.
pub fn short(value: f64, digits: usize) -> String {
    let text = significant(value, digits);
    if text.contains('.') && !text.contains('e') {
        text.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        text
    }
}

/// An effective size: `∞`, a whole number from 10 up, one decimal below 10.
pub fn effective_size(value: f64) -> String {
    if let Some(special) = special(value) {
        return special;
    }
    if value.abs() >= 10.0 { fixed(value, 0) } else { fixed(value, 1) }
}

/// A count with a comma between groups of three digits (`239,500`).
pub fn count(value: usize) -> String {
    let digits = value.to_string();
    let mut out = String::with_capacity(digits.len() + digits.len() / 3);
    for (index, digit) in digits.chars().enumerate() {
        if index > 0 && (digits.len() - index).is_multiple_of(3) {
            out.push(',');
        }
        out.push(digit);
    }
    out
}

/// A p- or q-value: three decimals, or `< 0.001`.
pub fn p_value(value: f64) -> String {
    if let Some(special) = special(value) {
        return special;
    }
    if value < 0.001 { "< 0.001".into() } else { fixed(value, 3) }
}

/// A share in [0, 1] as a percentage with one decimal, e.g. `87.3 %`.
pub fn percent(value: f64) -> String {
    if let Some(special) = special(value) {
        return special;
    }
    format!("{} %", fixed(value * 100.0, 1))
}

fn special(value: f64) -> Option<String> {
    if value.is_nan() {
        Some(UNDEFINED.into())
    } else if value == f64::INFINITY {
        Some(INFINITE.into())
    } else if value == f64::NEG_INFINITY {
        Some(format!("−{INFINITE}"))
    } else {
        None
    }
}

/// A number in the given style.
pub fn number(value: f64, style: NumberStyle) -> String {
    match style {
        NumberStyle::Whole => {
            if value.is_finite() && value.fract() == 0.0 {
                signed(format!("{value:.0}"))
            } else {
                significant(value, 4)
            }
        }
        NumberStyle::Fixed(decimals) => fixed(value, decimals),
        NumberStyle::EffectiveSize => effective_size(value),
        NumberStyle::PValue => p_value(value),
        NumberStyle::Percent => percent(value),
        NumberStyle::Significant(digits) => significant(value, digits),
        NumberStyle::Short(digits) => short(value, digits),
    }
}

/// An optional number in the given style, `—` when absent.
pub fn maybe(value: Option<f64>, style: NumberStyle) -> String {
    value.map_or_else(|| UNDEFINED.to_string(), |v| number(v, style))
}

/// A table cell for reading: text as is, numbers in the given style, `null` as `—`.
pub fn cell(value: &Cell, style: NumberStyle) -> String {
    match value {
        Cell::Null => UNDEFINED.into(),
        Cell::Bool(true) => "yes".into(),
        Cell::Bool(false) => "no".into(),
        Cell::Int(i) => match style {
            NumberStyle::Whole | NumberStyle::Significant(_) | NumberStyle::Short(_) => signed(i.to_string()),
            other => number(*i as f64, other),
        },
        Cell::Num(x) => number(*x, style),
        Cell::Inf => INFINITE.into(),
        Cell::Text(t) => t.clone(),
    }
}

/// A confidence interval as `low–high` (en dash), `low to high` when a bound is negative (so
/// the dash cannot be read as a minus sign), or `—` when both ends are undefined.
pub fn interval(low: Option<f64>, high: Option<f64>, style: NumberStyle) -> String {
    let negative = low.is_some_and(|v| v < 0.0) || high.is_some_and(|v| v < 0.0);
    match (low, high) {
        (None, None) => UNDEFINED.into(),
        (low, high) if negative => format!("{} to {}", maybe(low, style), maybe(high, style)),
        (low, high) => format!("{}–{}", maybe(low, style), maybe(high, style)),
    }
}

/// A `status` step's `ne_method` (`ld:0.02`, `ld:singletons`, `temporal`, `hetx`) in words.
pub fn ne_method(method: &str) -> String {
    match method {
        "temporal" => "temporal method (Fs)".into(),
        "hetx" => "heterozygote-excess method".into(),
        "ld" => "linkage-disequilibrium method".into(),
        other => match other.strip_prefix("ld:") {
            Some("singletons") => "linkage-disequilibrium method, alleles seen once left out".into(),
            Some(pcrit) => format!("linkage-disequilibrium method, alleles rarer than Pcrit = {pcrit} left out"),
            None => other.to_string(),
        },
    }
}

/// A `status` step's `ne_method` as a short table label: `LD, Pcrit 0.02`, `LD, no
/// singletons`, `temporal`, `het. excess`.
pub fn ne_method_short(method: &str) -> String {
    match method {
        "temporal" => "temporal".into(),
        "hetx" => "het. excess".into(),
        "ld" => "LD".into(),
        other => match other.strip_prefix("ld:") {
            Some("singletons") => "LD, no singletons".into(),
            Some(pcrit) => format!("LD, Pcrit {pcrit}"),
            None => other.to_string(),
        },
    }
}

/// The `status` step's `prefer` list in words, for the rule stated beside the status table.
pub fn ne_preference(prefer: &[&str]) -> String {
    let words: Vec<String> = prefer
        .iter()
        .map(|p| match *p {
            "ld" => "the linkage-disequilibrium method (alleles seen once left out when the harmonic-mean sample \
                     size S is 25 or less, alleles rarer than Pcrit = 0.02 left out above; Waples & Do 2010)"
                .to_string(),
            "temporal" => "the temporal method (Fs, the standardized variance of the change in allele frequencies \
                           between two samples, corrected for sampling; Jorde & Ryman 2007)"
                .to_string(),
            other => format!("the {}", ne_method(other)),
        })
        .collect();
    match words.as_slice() {
        [] => String::new(),
        [one] => one.clone(),
        [first @ .., last] => format!("{}, then {last}", first.join(", then ")),
    }
}

/// "p = 0.042" or "p < 0.001", for sentences.
pub fn p_phrase(p: f64) -> String {
    let text = p_value(p);
    match text.strip_prefix("< ") {
        Some(bound) => format!("p < {bound}"),
        None => format!("p = {text}"),
    }
}

/// The style a column gets by its contract name (the results contract), for tables the
/// document shows as they are (appendix and plugin tables).
pub fn style_for_column(name: &str) -> NumberStyle {
    let name = name.to_ascii_lowercase();
    let is = |options: &[&str]| options.contains(&name.as_str());
    if is(&[
        "year",
        "year_start",
        "year_end",
        "n",
        "n_total",
        "n_kept",
        "alleles",
        "points",
        "comparisons",
        "typed",
        "bad_cells",
        "loci",
        "census_year",
        "mk_s",
    ]) || name.starts_with("n_")
        || name.starts_with("s_")
    {
        NumberStyle::Whole
    } else if name.ends_with("_se") || name == "se" {
        NumberStyle::Significant(2)
    } else if name == "p" || name.ends_with("_p") || name.starts_with("p_") || name.starts_with("q_") || name == "q" {
        NumberStyle::PValue
    } else if name == "ne" || name.starts_with("ne_") && !name.contains("nc") || name == "census_size" {
        NumberStyle::EffectiveSize
    } else if name.contains("slope") || name.starts_with("ols_") {
        NumberStyle::Significant(3)
    } else if name == "pcrit" || name == "generations" || name == "s" {
        NumberStyle::Short(3)
    } else if name.starts_with("h_retained") || name.starts_with("share") {
        NumberStyle::Percent
    } else if is(&[
        "ho",
        "he",
        "f",
        "fis",
        "fis_low",
        "fis_high",
        "fst",
        "fst_low",
        "fst_high",
        "jost_d",
        "gst_pp",
        "ar",
        "par",
        "alleles_mean",
        "missing",
        "r2",
        "r2_sample",
        "fc",
        "fk",
        "fs",
        "d",
        "mk_tau",
        "f_drift",
        "f_drift_low",
        "f_drift_high",
        "jost_d_low",
        "jost_d_high",
        "gst_pp_low",
        "gst_pp_high",
        "gst",
        "gst_p",
        "hs",
        "ht",
        "fst_linearised",
        "effective_alleles",
        "null_allele_r",
        "ne_nc",
        "null_allele",
    ]) {
        NumberStyle::Fixed(3)
    } else {
        NumberStyle::Short(4)
    }
}

/// A date `YYYY-MM-DD` in words, e.g. `30 November 2026`; the text itself when it is not one.
pub fn long_date(iso: &str) -> String {
    const MONTHS: [&str; 12] = [
        "January",
        "February",
        "March",
        "April",
        "May",
        "June",
        "July",
        "August",
        "September",
        "October",
        "November",
        "December",
    ];
    let parts: Vec<&str> = iso.split('-').collect();
    match parts.as_slice() {
        [year, month, day] => match (month.parse::<usize>(), day.parse::<u32>()) {
            (Ok(m @ 1..=12), Ok(d)) => format!("{d} {} {year}", MONTHS[m - 1]),
            _ => iso.to_string(),
        },
        _ => iso.to_string(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // The expected strings below are the conventions stated in the module doc (common
    // practice for printed tables); each was worked out by hand.

    #[test]
    fn fixed_uses_a_true_minus_and_no_negative_zero() {
        assert_eq!(fixed(0.12345, 3), "0.123");
        assert_eq!(fixed(-0.0123, 3), "−0.012");
        assert_eq!(fixed(-0.0001, 3), "0.000");
        assert_eq!(fixed(-0.0, 2), "0.00");
        assert_eq!(fixed(f64::INFINITY, 3), "∞");
        assert_eq!(fixed(f64::NAN, 3), "—");
    }

    #[test]
    fn counts_group_thousands_with_commas() {
        assert_eq!(count(0), "0");
        assert_eq!(count(999), "999");
        assert_eq!(count(1000), "1,000");
        assert_eq!(count(239_500), "239,500");
        assert_eq!(count(1_234_567), "1,234,567");
    }

    #[test]
    fn significant_digits_across_magnitudes() {
        assert_eq!(significant(0.0021437, 3), "0.00214");
        assert_eq!(significant(-12.3456, 3), "−12.3");
        assert_eq!(significant(123456.0, 3), "123456");
        assert_eq!(significant(0.0, 3), "0");
        assert_eq!(significant(1.5e-5, 3), "0.0000150");
        assert_eq!(significant(1.5e-6, 3), "1.50e-6");
        assert_eq!(short(0.050, 3), "0.05");
        assert_eq!(short(2.0, 3), "2");
        assert_eq!(short(-0.098, 4), "−0.098");
        assert_eq!(significant(2.0, 4), "2.000");
    }

    #[test]
    fn effective_sizes_round_to_whole_numbers_from_ten() {
        assert_eq!(effective_size(46.87), "47");
        assert_eq!(effective_size(2000.0), "2000");
        assert_eq!(effective_size(7.26), "7.3");
        assert_eq!(effective_size(f64::INFINITY), "∞");
    }

    #[test]
    fn p_values_and_percentages() {
        assert_eq!(p_value(0.0004), "< 0.001");
        assert_eq!(p_value(0.0421), "0.042");
        assert_eq!(p_value(1.0), "1.000");
        assert_eq!(percent(0.87349), "87.3 %");
        assert_eq!(percent(1.0), "100.0 %");
    }

    #[test]
    fn cells_and_intervals() {
        assert_eq!(cell(&Cell::Null, NumberStyle::Fixed(3)), "—");
        assert_eq!(cell(&Cell::Inf, NumberStyle::EffectiveSize), "∞");
        assert_eq!(cell(&Cell::Int(2019), NumberStyle::Whole), "2019");
        assert_eq!(cell(&Cell::Num(0.5), NumberStyle::Fixed(3)), "0.500");
        assert_eq!(cell(&Cell::text("North #1"), NumberStyle::Fixed(3)), "North #1");
        assert_eq!(interval(Some(31.2), Some(f64::INFINITY), NumberStyle::EffectiveSize), "31–∞");
        assert_eq!(interval(None, None, NumberStyle::EffectiveSize), "—");
        assert_eq!(interval(Some(0.01), None, NumberStyle::Fixed(2)), "0.01–—");
        assert_eq!(interval(Some(-0.05), Some(0.02), NumberStyle::Fixed(2)), "−0.05 to 0.02");
    }

    #[test]
    fn column_styles_follow_the_contract_names() {
        assert_eq!(style_for_column("year"), NumberStyle::Whole);
        assert_eq!(style_for_column("fst_p"), NumberStyle::PValue);
        assert_eq!(style_for_column("q_value"), NumberStyle::PValue);
        assert_eq!(style_for_column("p_se"), NumberStyle::Significant(2));
        assert_eq!(style_for_column("ne_jack_low"), NumberStyle::EffectiveSize);
        assert_eq!(style_for_column("ne_nc"), NumberStyle::Fixed(3));
        assert_eq!(style_for_column("he"), NumberStyle::Fixed(3));
        assert_eq!(style_for_column("sen_slope"), NumberStyle::Significant(3));
        assert_eq!(style_for_column("h_retained"), NumberStyle::Percent);
        assert_eq!(style_for_column("pcrit"), NumberStyle::Short(3));
        assert_eq!(style_for_column("my_plugin_value"), NumberStyle::Short(4));
    }

    #[test]
    fn long_dates() {
        assert_eq!(long_date("2026-11-30"), "30 November 2026");
        assert_eq!(long_date("2026-01-05"), "5 January 2026");
        assert_eq!(long_date("soon"), "soon");
    }
}
