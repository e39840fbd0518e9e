//! "Did you mean" for unknown names and keys: the nearest candidate by edit distance.

/// Edit distance between `a` and `b` over chars: insertions, deletions,
/// substitutions and swaps of two neighbours each cost 1 (the "optimal string
/// alignment" form of the Damerau–Levenshtein distance), so `sfr` is one edit from
/// `srf`.
pub fn distance(a: &str, b: &str) -> usize {
    let a: Vec<char> = a.chars().collect();
    let b: Vec<char> = b.chars().collect();
    // names and keys are short: a full table is clearest
    let mut d = vec![vec![0usize; b.len() + 1]; a.len() + 1];
    for (i, row) in d.iter_mut().enumerate() {
        row[0] = i;
    }
    for (j, x) in d[0].iter_mut().enumerate() {
        *x = j;
    }
    for i in 1..=a.len() {
        for j in 1..=b.len() {
            let cost = usize::from(a[i - 1] != b[j - 1]);
            let mut v = (d[i - 1][j] + 1)
                .min(d[i][j - 1] + 1)
                .min(d[i - 1][j - 1] + cost);
            if i > 1 && j > 1 && a[i - 1] == b[j - 2] && a[i - 2] == b[j - 1] {
                v = v.min(d[i - 2][j - 2] + 1);
            }
            d[i][j] = v;
        }
    }
    d[a.len()][b.len()]
}

/// The candidate nearest to `word`, if it is near enough to be a likely typo: at
/// most a third of the word's length away (at least 1, at most 3 edits). Ties go to
/// the earlier candidate.
pub fn nearest<'a>(word: &str, candidates: impl IntoIterator<Item = &'a str>) -> Option<&'a str> {
    let n = word.chars().count();
    let limit = (n / 3).clamp(1, 3);
    let mut best: Option<(usize, &str)> = None;
    for c in candidates {
        if c == word {
            continue;
        }
        // case slips count as one edit at most
        let d = if c.eq_ignore_ascii_case(word) {
            1
        } else {
            distance(word, c)
        };
        if d <= limit && best.is_none_or(|(bd, _)| d < bd) {
            best = Some((d, c));
        }
    }
    best.map(|(_, c)| c)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn distances() {
        // textbook values: kitten → sitting is 3 (common practice, no source)
        assert_eq!(distance("kitten", "sitting"), 3);
        assert_eq!(distance("", "abc"), 3);
        assert_eq!(distance("abc", ""), 3);
        assert_eq!(distance("srf", "sfr"), 1);
        assert_eq!(distance("ca", "abc"), 3);
        assert_eq!(distance("same", "same"), 0);
        assert_eq!(distance("µH", "uH"), 1);
    }

    #[test]
    fn suggestions() {
        let keys = [
            "select", "kind", "view", "ports", "windings", "band", "values", "checks",
        ];
        assert_eq!(nearest("chekcs", keys), Some("checks"));
        assert_eq!(nearest("slect", keys), Some("select"));
        assert_eq!(nearest("Band", keys), Some("band"));
        assert_eq!(nearest("zzzzzz", keys), None);
        assert_eq!(nearest("sfr", ["srf", "l", "q"]), Some("srf"));
    }
}
