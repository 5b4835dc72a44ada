//! Near-name suggestions ("did you mean ...?") by edit distance.

/// Edit distance between two strings (in characters): insertions, deletions,
/// substitutions and transpositions of neighbours each count 1 (the
/// "optimal string alignment" variant of the Damerau–Levenshtein distance).
pub fn edit_distance(a: &str, b: &str) -> usize {
    let a: Vec<char> = a.chars().collect();
    let b: Vec<char> = b.chars().collect();
    let w = b.len() + 1;
    let mut d = vec![0usize; (a.len() + 1) * w];
    for i in 0..=a.len() {
        d[i * w] = i;
    }
    for (j, x) in d.iter_mut().enumerate().take(w) {
        *x = j;
    }
    for i in 1..=a.len() {
        for j in 1..=b.len() {
            let cost = usize::from(a[i - 1] != b[j - 1]);
            let mut v = (d[(i - 1) * w + j] + 1)
                .min(d[i * w + j - 1] + 1)
                .min(d[(i - 1) * w + j - 1] + cost);
            if i > 1 && j > 1 && a[i - 1] == b[j - 2] && a[i - 2] == b[j - 1] {
                v = v.min(d[(i - 2) * w + j - 2] + 1);
            }
            d[i * w + j] = v;
        }
    }
    d[a.len() * w + b.len()]
}

/// The closest candidate to `name`, if close enough to be a likely typo
/// (distance at most 1 for short names, about a third of the length for longer ones).
pub fn nearest<'a, I, S>(name: &str, candidates: I) -> Option<String>
where
    I: IntoIterator<Item = &'a S>,
    S: AsRef<str> + 'a + ?Sized,
{
    let limit = (name.chars().count() / 3).max(1);
    let mut best: Option<(usize, &str)> = None;
    for c in candidates {
        let c = c.as_ref();
        if c == name {
            continue;
        }
        let d = edit_distance(name, c);
        if d <= limit && best.is_none_or(|(bd, _)| d < bd) {
            best = Some((d, c));
        }
    }
    best.map(|(_, c)| c.to_string())
}

/// "did you mean 'x'?" for the nearest candidate, if any.
pub fn did_you_mean<'a, I, S>(name: &str, candidates: I) -> Option<String>
where
    I: IntoIterator<Item = &'a S>,
    S: AsRef<str> + 'a + ?Sized,
{
    nearest(name, candidates).map(|c| format!("did you mean '{c}'?"))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn distance_of_classic_pairs() {
        // Textbook example of Levenshtein distance: kitten -> sitting is 3.
        assert_eq!(edit_distance("kitten", "sitting"), 3);
        assert_eq!(edit_distance("", "abc"), 3);
        assert_eq!(edit_distance("same", "same"), 0);
        // A swap of neighbours counts once.
        assert_eq!(edit_distance("rlaod", "rload"), 1);
    }

    #[test]
    fn suggests_close_names_only() {
        let c = ["collector", "base", "emitter"];
        assert_eq!(nearest("colector", c.iter()), Some("collector".to_string()));
        assert_eq!(nearest("zzz", c.iter()), None);
    }
}
