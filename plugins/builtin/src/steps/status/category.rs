//! Placing an Ne and its confidence interval against the thresholds.
//!
//! With ascending thresholds t₁ < … < t_k there are k + 1 bands: below t₁, [t₁, t₂), …,
//! [t_k, ∞). A value equal to a threshold meets it (Franklin's 1980 rule asks for an Ne of at
//! least 50). The **category** is the band of the point estimate alone:
//!
//! - `unknown` without a point estimate;
//! - `not estimable` when the lower bound of the 95% interval is `"inf"` (an interval ∞–∞ says
//!   nothing about the size);
//! - otherwise the band of the point estimate, by its label.
//!
//! What the interval adds is reported beside it, never folded into the category: the interval
//! **reaches** a threshold t when low < t ≤ high, that is when Ne values on both sides of t
//! are compatible with the data. A point estimate of 30 with the interval 11–∞ is `below 50`,
//! and its interval reaches 50 and 500: the data do not exclude an Ne above either.

use popgauge_abi::format_number;

/// Where a point estimate stands.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Category {
    /// No estimate.
    Unknown,
    /// The interval is ∞–∞.
    NotEstimable,
    /// The point lies in band `i` (0 = below the lowest threshold).
    Band(usize),
}

/// The category of `ne` (see the module doc); `estimable` is false for an interval ∞–∞.
pub fn categorise(ne: Option<f64>, estimable: bool, thresholds: &[f64]) -> Category {
    match ne {
        None => Category::Unknown,
        Some(_) if !estimable => Category::NotEstimable,
        Some(ne) => Category::Band(band_of(ne, thresholds)),
    }
}

/// The band index of a value: the number of thresholds it meets.
pub fn band_of(value: f64, thresholds: &[f64]) -> usize {
    thresholds.iter().filter(|&&t| value >= t).count()
}

/// The indices of the thresholds the interval reaches: low < t ≤ high.
pub fn thresholds_reached(interval: (f64, f64), thresholds: &[f64]) -> Vec<usize> {
    let (low, high) = interval;
    (0..thresholds.len()).filter(|&i| low < thresholds[i] && thresholds[i] <= high).collect()
}

/// The default band labels: `below t₁`, `t₁–t₂`, …, `t_k or more` (a value equal to a threshold
/// meets it, so the top band starts at t_k itself).
pub fn default_labels(thresholds: &[f64]) -> Vec<String> {
    let text: Vec<String> = thresholds.iter().map(|&t| format_number(t)).collect();
    let Some(first) = text.first() else { return vec!["any size".into()] };
    let mut labels = vec![format!("below {first}")];
    labels.extend(text.windows(2).map(|pair| format!("{}–{}", pair[0], pair[1])));
    labels.push(format!("{} or more", text[text.len() - 1]));
    labels
}

impl Category {
    /// The text of the `category` column.
    pub fn label(&self, labels: &[String]) -> String {
        match self {
            Category::Unknown => "unknown".into(),
            Category::NotEstimable => "not estimable".into(),
            Category::Band(i) => labels.get(*i).cloned().unwrap_or_default(),
        }
    }
}

/// The `interval_reaches` cell: the thresholds reached, joined with " and ", or `none`.
pub fn reached_text(reached: &[usize], thresholds: &[f64]) -> String {
    if reached.is_empty() {
        return "none".into();
    }
    let names: Vec<String> = reached.iter().map(|&i| format_number(thresholds[i])).collect();
    names.join(" and ")
}

/// The `interval_note` sentence: what the interval excludes, with the interval as printed.
pub fn interval_note(interval: (f64, f64), thresholds: &[f64]) -> String {
    let shown = format!("the 95 % interval {}–{}", short(interval.0), short(interval.1));
    let reached = thresholds_reached(interval, thresholds);
    if reached.is_empty() {
        return format!("{shown} {}", band_words(band_of(interval.0, thresholds), thresholds));
    }
    let names: Vec<String> = reached.iter().map(|&i| format_number(thresholds[i])).collect();
    format!("{shown} does not exclude {}: Ne may lie on either side", names.join(" or "))
}

/// Where an interval that reaches no threshold lies: "lies below 50", "lies between 50 and
/// 500", "lies at or above 500".
fn band_words(band: usize, thresholds: &[f64]) -> String {
    let name = |i: usize| format_number(thresholds[i]);
    match band {
        0 if thresholds.is_empty() => "reaches no threshold".into(),
        0 => format!("lies below {}", name(0)),
        b if b == thresholds.len() => format!("lies at or above {}", name(b - 1)),
        b => format!("lies between {} and {}", name(b - 1), name(b)),
    }
}

/// A bound as the note prints it, as the document prints an effective size: `∞`, whole numbers
/// from 10 up, one decimal below.
fn short(value: f64) -> String {
    if value.is_infinite() {
        return "∞".into();
    }
    let digits = if value >= 10.0 { 0 } else { 1 };
    let scale = 10f64.powi(digits);
    format_number((value * scale).round() / scale)
}
