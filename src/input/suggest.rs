//! "Did you mean …?" for misspelt keys and names.

/// The candidate closest to `typed` by edit distance, if it is close enough to be a likely
/// misspelling (at most a third of the typed length, and at least 2 edits allowed).
pub(crate) fn nearest<'a>(typed: &str, candidates: impl IntoIterator<Item = &'a str>) -> Option<&'a str> {
    let allowed = (typed.chars().count() / 3).max(2);
    candidates
        .into_iter()
        .map(|c| (edit_distance(typed, c), c))
        .filter(|&(distance, _)| distance <= allowed)
        .min_by_key(|&(distance, _)| distance)
        .map(|(_, c)| c)
}

/// ", did you mean `x`?" or a list of what is valid, to append to an "unknown …" rule.
pub(crate) fn hint(typed: &str, candidates: &[&str]) -> String {
    match nearest(typed, candidates.iter().copied()) {
        Some(best) => format!("; did you mean `{best}`?"),
        None if candidates.is_empty() => String::new(),
        None => {
            let listed: Vec<String> = candidates.iter().map(|c| format!("`{c}`")).collect();
            format!("; expected one of {}", listed.join(", "))
        }
    }
}

/// Levenshtein distance over characters.
pub(crate) fn edit_distance(a: &str, b: &str) -> usize {
    let b: Vec<char> = b.chars().collect();
    let mut previous: Vec<usize> = (0..=b.len()).collect();
    let mut current = vec![0; b.len() + 1];
    for (i, ca) in a.chars().enumerate() {
        current[0] = i + 1;
        for (j, &cb) in b.iter().enumerate() {
            let substitution = previous[j] + usize::from(ca != cb);
            current[j + 1] = substitution.min(previous[j + 1] + 1).min(current[j] + 1);
        }
        std::mem::swap(&mut previous, &mut current);
    }
    previous[b.len()]
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn distances() {
        assert_eq!(edit_distance("", "abc"), 3);
        assert_eq!(edit_distance("kitten", "sitting"), 3);
        assert_eq!(edit_distance("same", "same"), 0);
    }

    #[test]
    fn suggests_only_close_names() {
        let keys = ["particle_radius_um", "thickness_um", "area_m2"];
        assert_eq!(nearest("partical_radius_um", keys), Some("particle_radius_um"));
        assert_eq!(nearest("thickness", keys), Some("thickness_um"));
        assert_eq!(nearest("colour", keys), None);
        assert!(hint("colour", &keys).contains("expected one of `particle_radius_um`"));
    }
}
