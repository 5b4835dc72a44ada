//! Near-name suggestions ("did you mean ...?") by edit distance.

/// Edit distance between two strings (in characters): insertions, deletions,
/// substitutions and transpositions of neighbours each count 1.
///
/// This is the restricted Damerau–Levenshtein distance, also called the
/// optimal string alignment (OSA) distance: insertions, deletions and
/// substitutions as in V. I. Levenshtein, "Binary codes capable of correcting
/// deletions, insertions, and reversals", Soviet Physics Doklady 10(8), 1966;
/// the transposition of two neighbours as one edit after F. J. Damerau, "A
/// technique for computer detection and correction of spelling errors",
/// Communications of the ACM 7(3), 1964 (both from memory). "Restricted"
/// means no substring is edited more than once: a transposed pair is not
/// edited again, so `edit_distance("ca", "abc")` is 3, where the unrestricted
/// Damerau–Levenshtein distance (ca → ac → abc) is 2. OSA is therefore not a
/// metric (the triangle inequality fails on that example), which does not
/// matter for ranking typo suggestions.
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
        // The distance meant is the restricted Damerau–Levenshtein (optimal
        // string alignment) distance: Levenshtein's insertions, deletions and
        // substitutions (V. I. Levenshtein, Soviet Physics Doklady 10(8), 1966)
        // plus Damerau's transposition of neighbours (F. J. Damerau, CACM 7(3),
        // 1964), each costing 1 (both from memory).
        //
        // kitten -> sitting is 3 (k->s, e->i, insert g): the usual worked example
        // (common practice). No transposition helps here, so plain Levenshtein
        // and OSA agree.
        assert_eq!(edit_distance("kitten", "sitting"), 3);
        assert_eq!(edit_distance("", "abc"), 3);
        assert_eq!(edit_distance("same", "same"), 0);
        // A swap of neighbours counts once (Damerau): 1 here, where plain
        // Levenshtein needs two substitutions.
        assert_eq!(edit_distance("rlaod", "rload"), 1);
        assert_eq!(edit_distance("ab", "ba"), 1);
        // Restricted, not full, Damerau–Levenshtein: OSA edits no substring
        // twice, so ca -> abc costs 3 (e.g. delete c, insert b, insert c), while the
        // unrestricted distance is 2 (transpose to ac, then insert b between
        // the swapped letters). Since d(ca, ac) = 1 and d(ac, abc) = 1, the 3 also
        // shows that OSA breaks the triangle inequality (from memory; the
        // values follow by hand from the definitions above).
        assert_eq!(edit_distance("ca", "ac"), 1);
        assert_eq!(edit_distance("ac", "abc"), 1);
        assert_eq!(edit_distance("ca", "abc"), 3);
    }

    #[test]
    fn suggests_close_names_only() {
        let c = ["collector", "base", "emitter"];
        assert_eq!(nearest("colector", c.iter()), Some("collector".to_string()));
        assert_eq!(nearest("zzz", c.iter()), None);
    }
}
