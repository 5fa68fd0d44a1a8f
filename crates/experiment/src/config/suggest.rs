//! Nearest-key suggestions for typos, by edit distance.

/// The optimal-string-alignment distance between `a` and `b`: the fewest single-character
/// insertions, deletions, substitutions and swaps of two adjacent characters that turn one into
/// the other (Damerau's 1964 operations, each edit applied at most once per substring).
pub(crate) fn edit_distance(a: &str, b: &str) -> usize {
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
            let mut best = (d[(i - 1) * width + j] + 1)
                .min(d[i * width + j - 1] + 1)
                .min(d[(i - 1) * width + j - 1] + cost);
            if i > 1 && j > 1 && a[i - 1] == b[j - 2] && a[i - 2] == b[j - 1] {
                best = best.min(d[(i - 2) * width + j - 2] + 1);
            }
            d[i * width + j] = best;
        }
    }
    d[a.len() * width + b.len()]
}

/// The candidate nearest to `word`, if it is close enough to be a plausible typo: at most a
/// third of the longer word's length (and at least 2) edits away. Ties go to the first
/// candidate. Case is ignored, and `-`/`_` count as the same character, so `dish-diameter-m`
/// finds `dish_diameter_m`.
pub(crate) fn nearest<'a>(word: &str, candidates: &'a [String]) -> Option<&'a String> {
    let norm = |s: &str| s.to_lowercase().replace('-', "_");
    let w = norm(word);
    candidates
        .iter()
        .map(|c| (edit_distance(&w, &norm(c)), c))
        .filter(|(d, c)| *d <= (w.chars().count().max(c.chars().count()) / 3).max(2))
        .min_by_key(|(d, _)| *d)
        .map(|(_, c)| c)
}

/// The back-quoted words of a serde message, in order (serde lists field and variant names as
/// `` `name` ``).
pub(crate) fn quoted_words(message: &str) -> Vec<String> {
    message.split('`').skip(1).step_by(2).map(str::to_string).collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn distances_match_textbook_examples() {
        // "kitten" → "sitting" needs 3 edits: the standard Levenshtein example (Wikipedia,
        // "Levenshtein distance").
        assert_eq!(edit_distance("kitten", "sitting"), 3);
        // Restricted (optimal string alignment) distance of "CA" and "ABC" is 3, where the
        // unrestricted Damerau–Levenshtein distance is 2 (Wikipedia, "Damerau–Levenshtein
        // distance", optimal string alignment section).
        assert_eq!(edit_distance("CA", "ABC"), 3);
        // One adjacent swap.
        assert_eq!(edit_distance("robsut", "robust"), 1);
        assert_eq!(edit_distance("", "abc"), 3);
        assert_eq!(edit_distance("same", "same"), 0);
    }

    #[test]
    fn suggests_only_plausible_typos() {
        let keys: Vec<String> = ["dish_diameter_m", "blockage_diameter_m", "legs"]
            .iter()
            .map(|s| s.to_string())
            .collect();
        assert_eq!(nearest("dish_diametre_m", &keys).map(String::as_str), Some("dish_diameter_m"));
        assert_eq!(nearest("dish-diameter-m", &keys).map(String::as_str), Some("dish_diameter_m"));
        assert_eq!(nearest("lgs", &keys).map(String::as_str), Some("legs"));
        assert_eq!(nearest("colour", &keys), None);
    }

    #[test]
    fn reads_backquoted_words() {
        let m = "unknown field `foo`, expected one of `a`, `b`";
        assert_eq!(quoted_words(m), vec!["foo", "a", "b"]);
    }
}
