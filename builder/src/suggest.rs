//! "Did you mean …?" suggestions for misspelt keys and column names.

/// Up to `max` candidates closest to `wanted`, best first; only reasonably close ones.
pub fn nearest<'a>(
    wanted: &str,
    candidates: impl IntoIterator<Item = &'a str>,
    max: usize,
) -> Vec<String> {
    let wanted_lower = wanted.to_lowercase();
    let mut scored: Vec<(usize, &str)> = candidates
        .into_iter()
        .map(|c| (strsim::levenshtein(&wanted_lower, &c.to_lowercase()), c))
        .filter(|(d, c)| {
            let longest = wanted.chars().count().max(c.chars().count()).max(1);
            *d <= 1 || *d * 5 <= longest * 2 // one edit, or at most 40 % of the characters
        })
        .collect();
    scored.sort_by(|a, b| a.0.cmp(&b.0).then_with(|| a.1.cmp(b.1)));
    scored.dedup_by(|a, b| a.1 == b.1);
    scored
        .into_iter()
        .take(max)
        .map(|(_, c)| c.to_string())
        .collect()
}

#[cfg(test)]
mod tests {
    use super::nearest;

    #[test]
    fn finds_close_names_best_first() {
        let names = ["TI-1040", "TI-1041", "FI-2000", "timestamp"];
        assert_eq!(nearest("TI-1004", names, 2), vec!["TI-1040", "TI-1041"]);
        assert_eq!(nearest("ti-1041", names, 1), vec!["TI-1041"]);
        assert!(nearest("pressure", names, 3).is_empty());
    }
}
