//! Near-name suggestions ("did you mean ...?") by edit distance.

/// Levenshtein distance between two strings (in characters).
pub fn edit_distance(a: &str, b: &str) -> usize {
    let a: Vec<char> = a.chars().collect();
    let b: Vec<char> = b.chars().collect();
    let mut prev: Vec<usize> = (0..=b.len()).collect();
    let mut cur = vec![0; b.len() + 1];
    for (i, ca) in a.iter().enumerate() {
        cur[0] = i + 1;
        for (j, cb) in b.iter().enumerate() {
            let sub = prev[j] + usize::from(ca != cb);
            cur[j + 1] = sub.min(prev[j + 1] + 1).min(cur[j] + 1);
        }
        std::mem::swap(&mut prev, &mut cur);
    }
    prev[b.len()]
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
    }

    #[test]
    fn suggests_close_names_only() {
        let c = ["collector", "base", "emitter"];
        assert_eq!(nearest("colector", c.iter()), Some("collector".to_string()));
        assert_eq!(nearest("zzz", c.iter()), None);
    }
}
