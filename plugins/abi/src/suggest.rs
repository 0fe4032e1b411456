//! "Did you mean" suggestions for misspelt names.

/// The candidate closest to `given` by edit distance, when it is close enough to be a typo.
///
/// Close enough means at most a third of the longer name's characters differ (at least one),
/// so `max_mising_locus` suggests `max_missing_locus` but `colour` suggests nothing from
/// `["sample", "year"]`.
pub fn did_you_mean<'c>(given: &str, candidates: impl IntoIterator<Item = &'c str>) -> Option<&'c str> {
    let given_lower = given.to_lowercase();
    candidates
        .into_iter()
        .map(|c| (edit_distance(&given_lower, &c.to_lowercase()), c))
        .filter(|(d, c)| *d <= (given.chars().count().max(c.chars().count()) / 3).max(1))
        .min_by_key(|(d, _)| *d)
        .map(|(_, c)| c)
}

/// Optimal string alignment distance: insertions, deletions, substitutions and transpositions
/// of neighbours each cost 1 (so `titel` is one edit from `title`).
fn edit_distance(a: &str, b: &str) -> usize {
    let a: Vec<char> = a.chars().collect();
    let b: Vec<char> = b.chars().collect();
    let width = b.len() + 1;
    let mut d = vec![0usize; (a.len() + 1) * width];
    for i in 0..=a.len() {
        d[i * width] = i;
    }
    for (j, cell) in d.iter_mut().enumerate().take(width) {
        *cell = j;
    }
    for i in 1..=a.len() {
        for j in 1..=b.len() {
            let cost = usize::from(a[i - 1] != b[j - 1]);
            let mut best = (d[(i - 1) * width + j] + 1).min(d[i * width + j - 1] + 1).min(d[(i - 1) * width + j - 1] + cost);
            if i > 1 && j > 1 && a[i - 1] == b[j - 2] && a[i - 2] == b[j - 1] {
                best = best.min(d[(i - 2) * width + j - 2] + 1);
            }
            d[i * width + j] = best;
        }
    }
    d[a.len() * width + b.len()]
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn suggests_near_names_only() {
        let known = ["max_missing_locus", "max_missing_sample", "min_group_size"];
        assert_eq!(did_you_mean("max_mising_locus", known), Some("max_missing_locus"));
        assert_eq!(did_you_mean("MIN_GROUP_SIZE", known), Some("min_group_size"));
        assert_eq!(did_you_mean("colour", known), None);
        assert_eq!(edit_distance("kitten", "sitting"), 3);
        assert_eq!(edit_distance("titel", "title"), 1);
    }
}
