//! Placing an Ne and its confidence interval against the thresholds.
//!
//! With ascending thresholds t₁ < … < t_k there are k + 1 bands: below t₁, [t₁, t₂), …,
//! [t_k, ∞). A value equal to a threshold meets it (Ne ≥ 50 "keeps inbreeding to about 1% per
//! generation"). The category is:
//!
//! - `unknown` without a point estimate;
//! - `straddles t` when the interval reaches both sides of a threshold t: low < t ≤ high
//!   (`straddles t₁ and t₂` when it crosses several);
//! - otherwise the band of the point estimate, by its label.
//!
//! Without an interval the point decides alone (the step adds a finding saying so).

use popgauge_abi::format_number;

/// Where an estimate stands.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Category {
    /// No estimate.
    Unknown,
    /// The point lies in band `i` (0 = below the lowest threshold) and the interval, if any,
    /// does not cross a threshold.
    Band(usize),
    /// The interval crosses these thresholds (indices, ascending).
    Straddles(Vec<usize>),
}

/// Places `ne` (with its interval, when known) against ascending `thresholds`.
pub fn categorise(ne: Option<f64>, interval: Option<(f64, f64)>, thresholds: &[f64]) -> Category {
    let Some(ne) = ne else { return Category::Unknown };
    if let Some((low, high)) = interval {
        let crossed: Vec<usize> =
            (0..thresholds.len()).filter(|&i| low < thresholds[i] && thresholds[i] <= high).collect();
        if !crossed.is_empty() {
            return Category::Straddles(crossed);
        }
    }
    Category::Band(band_of(ne, thresholds))
}

/// The band index of a value: the number of thresholds it meets.
pub fn band_of(value: f64, thresholds: &[f64]) -> usize {
    thresholds.iter().filter(|&&t| value >= t).count()
}

/// The default band labels: `below t₁`, `t₁–t₂`, …, `above t_k`.
pub fn default_labels(thresholds: &[f64]) -> Vec<String> {
    let text: Vec<String> = thresholds.iter().map(|&t| format_number(t)).collect();
    let Some(first) = text.first() else { return vec!["any size".into()] };
    let mut labels = vec![format!("below {first}")];
    labels.extend(text.windows(2).map(|pair| format!("{}–{}", pair[0], pair[1])));
    labels.push(format!("above {}", text[text.len() - 1]));
    labels
}

impl Category {
    /// The text of the `category` column.
    pub fn label(&self, thresholds: &[f64], labels: &[String]) -> String {
        match self {
            Category::Unknown => "unknown".into(),
            Category::Band(i) => labels.get(*i).cloned().unwrap_or_default(),
            Category::Straddles(crossed) => {
                let names: Vec<String> = crossed.iter().map(|&i| format_number(thresholds[i])).collect();
                format!("straddles {}", names.join(" and "))
            }
        }
    }
}
