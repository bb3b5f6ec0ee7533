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
    let mut columns: Vec<Vec<bool>> = vec![vec![true; n]];
    for first in 0..n {
        for second in first + 1..n {
            if !different[first][second] {
                continue;
            }
            let mut next = Vec::with_capacity(columns.len() + 1);
            for column in &columns {
                if column[first] && column[second] {
                    let mut without_first = column.clone();
                    without_first[first] = false;
                    let mut without_second = column.clone();
                    without_second[second] = false;
                    next.push(without_first);
                    next.push(without_second);
                } else {
                    next.push(column.clone());
                }
            }
            // Absorb: drop columns contained in another (and duplicates).
            let mut kept: Vec<Vec<bool>> = Vec::new();
            for (index, column) in next.iter().enumerate() {
                let absorbed = next.iter().enumerate().any(|(other_index, other)| {
                    other_index != index
                        && column.iter().zip(other).all(|(a, b)| !*a || *b)
                        && (column != other || other_index < index)
                });
                if !absorbed {
                    kept.push(column.clone());
                }
            }
            columns = kept;
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
            .filter(|&i| column[i])
            .map(|i| rank_of[i])
            .min()
            .unwrap_or(usize::MAX);
        let size = column.iter().filter(|&&held| held).count();
        (first_rank, usize::MAX - size)
    });
    columns
        .iter()
        .map(|column| (0..n).filter(|&condition| column[condition]).collect())
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
            let mut pairs = Vec::new();
            for a in 0..n {
                for b in a + 1..n {
                    state = state
                        .wrapping_mul(6364136223846793005)
                        .wrapping_add(1442695040888963407);
                    if (state >> 33).is_multiple_of(3) {
                        pairs.push((a, b));
                    }
                }
            }
            let means: Vec<f64> = (0..n).map(|i| (n - i) as f64).collect();
            check(&means, &pairs);
        }
    }
}
