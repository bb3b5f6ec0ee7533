//! Sorting of floating-point samples for the rank-based and normality checks, which sort
//! up to millions of values.
//!
//! # Remarks
//!
//! Algorithm: least-significant-digit radix sort (common practice; see Knuth, *The Art of
//! Computer Programming* vol. 3, section 5.2.5) on a 64-bit key that orders as
//! `f64::total_cmp` does: the bits of a non-negative number with the sign bit set, the
//! complemented bits of a negative one. Six passes of 11-bit digits, all digit counts taken
//! in one read; a pass whose digit is the same for every value (typically the exponent
//! bits of data of one magnitude) is skipped. Stable, so equal values keep their order.
//! Below [`RADIX_MIN_LEN`] values the standard library's comparison sort is used.
//! Checked against `sort_unstable_by(f64::total_cmp)` on random, tied, signed, zero and
//! infinite values (unit tests).

/// Shorter slices are sorted by comparison (the radix passes' fixed cost dominates there).
pub const RADIX_MIN_LEN: usize = 2_048;
const DIGIT_BITS: u32 = 11;
const BUCKETS: usize = 1 << DIGIT_BITS;
const PASSES: usize = 6;

/// Key of `value` whose unsigned order is `f64::total_cmp`'s order.
#[inline]
pub fn order_key(value: f64) -> u64 {
    let bits = value.to_bits();
    if bits >> 63 == 1 {
        !bits
    } else {
        bits | (1 << 63)
    }
}

/// Sorts `values` into `f64::total_cmp` order (NaNs last by sign, as that order has them).
pub fn sort_floats(values: &mut [f64]) {
    if values.len() < RADIX_MIN_LEN {
        values.sort_unstable_by(f64::total_cmp);
        return;
    }
    radix_sort(values, |value| order_key(*value));
}

/// The positions of `values` in `f64::total_cmp` order (ties in position order).
pub fn sorted_order(values: &[f64]) -> Vec<usize> {
    if values.len() < RADIX_MIN_LEN || u32::try_from(values.len()).is_err() {
        let mut order: Vec<usize> = (0..values.len()).collect();
        order.sort_by(|&a, &b| values[a].total_cmp(&values[b]));
        return order;
    }
    let mut pairs: Vec<(u64, u32)> = values
        .iter()
        .enumerate()
        .map(|(index, &value)| (order_key(value), index as u32))
        .collect();
    radix_sort(&mut pairs, |pair| pair.0);
    pairs.into_iter().map(|(_, index)| index as usize).collect()
}

/// Stable LSD radix sort of `items` by `key`.
fn radix_sort<T: Copy, K: Fn(&T) -> u64>(items: &mut [T], key: K) {
    let n = items.len();
    if n < 2 {
        return;
    }
    let mut counts = vec![[0usize; BUCKETS]; PASSES];
    for item in items.iter() {
        let k = key(item);
        for (pass, count) in counts.iter_mut().enumerate() {
            count[((k >> (pass as u32 * DIGIT_BITS)) as usize) & (BUCKETS - 1)] += 1;
        }
    }
    let mut buffer: Vec<T> = items.to_vec();
    // Which of the two holds the current order: false = items, true = buffer.
    let mut in_buffer = false;
    for (pass, count) in counts.iter().enumerate() {
        if count.contains(&n) {
            continue;
        }
        let mut offsets = [0usize; BUCKETS];
        let mut running = 0;
        for (offset, &c) in offsets.iter_mut().zip(count.iter()) {
            *offset = running;
            running += c;
        }
        let shift = pass as u32 * DIGIT_BITS;
        let (source, target): (&[T], &mut [T]) = if in_buffer {
            (&buffer, items)
        } else {
            (items, &mut buffer)
        };
        for item in source {
            let digit = ((key(item) >> shift) as usize) & (BUCKETS - 1);
            target[offsets[digit]] = *item;
            offsets[digit] += 1;
        }
        in_buffer = !in_buffer;
    }
    if in_buffer {
        items.copy_from_slice(&buffer);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn pseudo_random(n: usize, seed: u64) -> Vec<f64> {
        let mut state = seed;
        (0..n)
            .map(|_| {
                state = state
                    .wrapping_mul(6364136223846793005)
                    .wrapping_add(1442695040888963407);
                let unit = (state >> 11) as f64 / (1u64 << 53) as f64;
                // Signed, several magnitudes, and many ties (rounded to 2 decimals).
                ((unit - 0.4) * 10f64.powi((state % 7) as i32 - 3) * 100.0).round() / 100.0
            })
            .collect()
    }

    #[test]
    fn radix_order_equals_comparison_order() {
        // common practice: the comparison sort of the standard library is the reference.
        for (n, seed) in [(0, 1), (1, 2), (100, 3), (5_000, 4), (70_001, 5)] {
            let mut values = pseudo_random(n, seed);
            values.extend([0.0, -0.0, f64::INFINITY, f64::NEG_INFINITY, f64::MIN_POSITIVE, -1e300]);
            let mut expected = values.clone();
            expected.sort_by(f64::total_cmp);
            let mut actual = values.clone();
            sort_floats(&mut actual);
            let same = expected.iter().zip(&actual).all(|(a, b)| a.to_bits() == b.to_bits());
            assert!(same, "n {n}");
            let order = sorted_order(&values);
            let mut stable: Vec<usize> = (0..values.len()).collect();
            stable.sort_by(|&a, &b| values[a].total_cmp(&values[b]));
            assert_eq!(order, stable, "n {n}");
        }
    }

    #[test]
    fn key_order_is_total_order() {
        let values = [-f64::INFINITY, -2.5, -1e-300, -0.0, 0.0, 1e-300, 3.0, f64::INFINITY];
        for pair in values.windows(2) {
            assert!(order_key(pair[0]) < order_key(pair[1]), "{pair:?}");
        }
    }
}
