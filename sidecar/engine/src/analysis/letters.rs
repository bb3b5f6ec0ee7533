//! Grouping letters for pairwise results (compact letter display).
//!
//! Remarks: the insert-and-absorb algorithm of Piepho (2004), "An algorithm
//! for a letter-based representation of all-pairwise comparisons", Journal
//! of Computational and Graphical Statistics 13(2), 456-466. Start with one
//! letter shared by all conditions; for every pair found different, split
//! each letter column that holds both into two (one without each member),
//! then absorb columns that are subsets of others. Conditions that share a
//! letter were not found different. Letters are assigned in order of the
//! first condition (by mean, highest first) that carries each column.

/// Letters per condition, in the order of `means`.
///
/// `different[i][j]` is true when conditions i and j were found different.
pub fn grouping_letters(means: &[f64], different: &[Vec<bool>]) -> Vec<String> {
    let mut letters = vec![String::new(); means.len()];
    for (index, set) in alike_sets(means, different).iter().enumerate() {
        let letter = letter_name(index);
        for &condition in set {
            letters[condition].push_str(&letter);
        }
    }
    letters
}

/// The sets behind the letters, in letter order: each set lists (by index
/// into `means`, in that order) conditions none of which were found
/// different from one another; every pair not found different shares at
/// least one set. A condition alone in its only set differs from all others.
pub fn alike_sets(means: &[f64], different: &[Vec<bool>]) -> Vec<Vec<usize>> {
    let n = means.len();
    if n == 0 {
        return Vec::new();
    }
    // Each column is a bit set of conditions, 64 to a word.
    let words = n.div_ceil(64);
    let has = |column: &[u64], condition: usize| column[condition / 64] >> (condition % 64) & 1 == 1;
    let mut full = vec![u64::MAX; words];
    if !n.is_multiple_of(64) {
        full[words - 1] = (1u64 << (n % 64)) - 1;
    }
    let mut columns: Vec<Vec<u64>> = vec![full];
    for first in 0..n {
        for second in first + 1..n {
            if !different[first][second] {
                continue;
            }
            // Most pairs found different are already apart in every column: nothing to
            // split, and nothing is copied.
            if !columns.iter().any(|column| has(column, first) && has(column, second)) {
                continue;
            }
            let mut next = Vec::with_capacity(columns.len() + 1);
            let mut split = Vec::new();
            for column in std::mem::take(&mut columns) {
                if has(&column, first) && has(&column, second) {
                    let mut without_first = column.clone();
                    without_first[first / 64] &= !(1u64 << (first % 64));
                    let mut without_second = column;
                    without_second[second / 64] &= !(1u64 << (second % 64));
                    split.extend([next.len(), next.len() + 1]);
                    next.push(without_first);
                    next.push(without_second);
                } else {
                    next.push(column);
                }
            }
            // Absorb: drop columns contained in another (and duplicates). The columns
            // were already free of such before this split, and a column left whole
            // cannot lie inside a split one (it would have lain inside the column split),
            // so only the split ones need the test.
            let contained = |inner: &[u64], outer: &[u64]| inner.iter().zip(outer).all(|(a, b)| a & !b == 0);
            let mut dropped = vec![false; next.len()];
            for &index in &split {
                let column = &next[index];
                dropped[index] = next.iter().enumerate().any(|(other_index, other)| {
                    other_index != index && contained(column, other) && (column != other || other_index < index)
                });
            }
            columns = next
                .into_iter()
                .zip(dropped)
                .filter_map(|(column, dropped)| (!dropped).then_some(column))
                .collect();
        }
    }
    // Order columns by the best-ranked condition they hold.
    let mut order: Vec<usize> = (0..n).collect();
    order.sort_by(|a, b| means[*b].total_cmp(&means[*a]));
    let rank_of: Vec<usize> = {
        let mut rank = vec![0; n];
        for (position, &condition) in order.iter().enumerate() {
            rank[condition] = position;
        }
        rank
    };
    columns.sort_by_key(|column| {
        let first_rank = (0..n)
            .filter(|&i| has(column, i))
            .map(|i| rank_of[i])
            .min()
            .unwrap_or(usize::MAX);
        let size: u32 = column.iter().map(|word| word.count_ones()).sum();
        (first_rank, usize::MAX - size as usize)
    });
    columns
        .iter()
        .map(|column| (0..n).filter(|&condition| has(column, condition)).collect())
        .collect()
}

fn letter_name(index: usize) -> String {
    const ALPHABET: &[u8] = b"abcdefghijklmnopqrstuvwxyz";
    if index < 26 {
        (ALPHABET[index] as char).to_string()
    } else {
        format!(
            "{}{}",
            (ALPHABET[(index / 26 - 1) % 26] as char),
            ALPHABET[index % 26] as char
        )
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn matrix(n: usize, pairs: &[(usize, usize)]) -> Vec<Vec<bool>> {
        let mut different = vec![vec![false; n]; n];
        for &(a, b) in pairs {
            different[a][b] = true;
            different[b][a] = true;
        }
        different
    }

    /// The pairs (a, b), a < b, that `different` keeps, given each a draw from a fixed
    /// linear congruential stream.
    fn drawn_pairs(n: usize, state: &mut u64, different: impl Fn(usize, usize, u64) -> bool) -> Vec<(usize, usize)> {
        let mut pairs = Vec::new();
        for a in 0..n {
            for b in a + 1..n {
                *state = state
                    .wrapping_mul(6364136223846793005)
                    .wrapping_add(1442695040888963407);
                if different(a, b, *state >> 33) {
                    pairs.push((a, b));
                }
            }
        }
        pairs
    }

    /// Checks the defining property: two conditions share a letter exactly
    /// when they were not found different.
    fn check(means: &[f64], pairs: &[(usize, usize)]) -> Vec<String> {
        let different = matrix(means.len(), pairs);
        let letters = grouping_letters(means, &different);
        for a in 0..means.len() {
            for b in a + 1..means.len() {
                let share = letters[a].chars().any(|letter| letters[b].contains(letter));
                assert_eq!(share, !different[a][b], "{a} {b}: {letters:?}");
            }
        }
        letters
    }

    #[test]
    fn all_alike_and_all_different() {
        assert_eq!(check(&[3.0, 2.0, 1.0], &[]), vec!["a", "a", "a"]);
        assert_eq!(check(&[3.0, 2.0, 1.0], &[(0, 1), (0, 2), (1, 2)]), vec!["a", "b", "c"]);
    }

    #[test]
    fn overlapping_groups() {
        // A chain: 0~1, 1~2, but 0 differs from 2 — the textbook overlapping case
        // (common practice: the middle condition carries both letters).
        assert_eq!(check(&[3.0, 2.0, 1.0], &[(0, 2)]), vec!["a", "ab", "b"]);
        // Pseudo-random patterns keep the defining property.
        let mut state = 12345u64;
        for _ in 0..200 {
            let n = 6;
            let pairs = drawn_pairs(n, &mut state, |_, _, draw| draw.is_multiple_of(3));
            let means: Vec<f64> = (0..n).map(|i| (n - i) as f64).collect();
            check(&means, &pairs);
        }
    }

    #[test]
    fn many_conditions_over_several_words() {
        // 130 conditions (three 64-bit words) in bands: neighbours by mean alike,
        // conditions far apart different, and a sprinkling of exceptions.
        let n = 130;
        let pairs = drawn_pairs(n, &mut 99u64, |a, b, draw| b - a > 6 || draw.is_multiple_of(5));
        let means: Vec<f64> = (0..n).map(|i| (n - i) as f64).collect();
        let different = matrix(n, &pairs);
        let sets = alike_sets(&means, &different);
        // Two conditions share a set exactly when they were not found different.
        for (a, row) in different.iter().enumerate() {
            for (b, &differ) in row.iter().enumerate().skip(a + 1) {
                let share = sets.iter().any(|set| set.contains(&a) && set.contains(&b));
                assert_eq!(share, !differ, "{a} {b}");
            }
        }
        // No set lies inside another (each was absorbed if it did).
        for (index, set) in sets.iter().enumerate() {
            for (other_index, other) in sets.iter().enumerate() {
                if index != other_index {
                    assert!(!set.iter().all(|member| other.contains(member)), "{set:?} in {other:?}");
                }
            }
        }
        assert!(sets.len() > 20, "{} sets", sets.len());
    }
}
