//! Rank-based analysis of a one-way layout: mid-ranks, the Kruskal-Wallis H test with
//! the tie correction, Dunn's pairwise z tests, and the Holm and Bonferroni p-value
//! adjustments.
//!
//! Data whose values are all equal carry no rank information; the tests then return
//! [`RankOutcome::AllValuesEqual`] so the caller can report that as a finding.

use super::StatsError;
use crate::stats::dist;

/// Mid-ranks of a sample and its tie summary.
#[derive(Debug, Clone, PartialEq)]
pub struct MidRanks {
    /// Rank of each value, in the input order (ties share the mean of their ranks).
    pub ranks: Vec<f64>,
    /// Σ (t³ - t) over groups of tied values, t being the size of each tie.
    pub tie_sum: f64,
    /// Number of distinct values that occur more than once.
    pub n_tied_values: usize,
}

/// Outcome of a rank test: the test result, or the finding that every value is equal.
#[derive(Debug, Clone, PartialEq)]
pub enum RankOutcome<T> {
    /// The test could be carried out.
    Tested(T),
    /// All values are equal, so the ranks are all tied and the test is undefined.
    AllValuesEqual {
        /// Number of values.
        n_values: usize,
    },
}

impl<T> RankOutcome<T> {
    /// The test result, or `None` when all values were equal.
    pub fn tested(self) -> Option<T> {
        match self {
            RankOutcome::Tested(result) => Some(result),
            RankOutcome::AllValuesEqual { .. } => None,
        }
    }
}

/// Result of the Kruskal-Wallis H test.
#[derive(Debug, Clone, PartialEq)]
pub struct KruskalWallis {
    /// The tie-corrected statistic H / C.
    pub h: f64,
    /// H before the tie correction.
    pub h_uncorrected: f64,
    /// The tie correction C = 1 - Σ(t³ - t)/(N³ - N), in (0, 1].
    pub tie_correction: f64,
    /// Degrees of freedom, k - 1.
    pub df: f64,
    /// Upper-tail chi-square p-value (large-sample approximation).
    pub p_value: f64,
    /// Number of groups k.
    pub n_groups: usize,
    /// Total number of values N.
    pub n_total: usize,
    /// Mean rank of each group, in the input order.
    pub mean_ranks: Vec<f64>,
}

/// One of Dunn's pairwise comparisons.
#[derive(Debug, Clone, PartialEq)]
pub struct DunnComparison {
    /// Index of the first group.
    pub group_a: usize,
    /// Index of the second group.
    pub group_b: usize,
    /// Mean rank of group a minus mean rank of group b.
    pub mean_rank_difference: f64,
    /// Standard error of that difference (tie-corrected).
    pub standard_error: f64,
    /// z = difference / standard error.
    pub z: f64,
    /// Unadjusted two-sided p-value.
    pub p_value: f64,
    /// Holm-adjusted p-value over all k(k - 1)/2 comparisons.
    pub p_holm: f64,
    /// Bonferroni-adjusted p-value over all k(k - 1)/2 comparisons.
    pub p_bonferroni: f64,
}

/// Kruskal-Wallis test and Dunn's comparisons from one ranking.
#[derive(Debug, Clone, PartialEq)]
pub struct RankAnalysis {
    /// The overall test.
    pub kruskal_wallis: KruskalWallis,
    /// All pairs (a, b) with a < b, in the order (0,1), (0,2), ..., (1,2), ...
    pub comparisons: Vec<DunnComparison>,
}

/// Mid-ranks (1-based) of `values`, from a single sort.
///
/// # Remarks
/// Sorts the indices once, then gives each run of equal values the mean of the ranks it
/// spans and accumulates Σ(t³ - t). Agrees with scipy 1.17.1 `scipy.stats.rankdata`
/// (method 'average').
///
/// # Errors
/// `InvalidParameter` if any value is NaN or infinite.
pub fn mid_ranks(values: &[f64]) -> Result<MidRanks, StatsError> {
    if let Some(bad) = values.iter().find(|v| !v.is_finite()) {
        return Err(StatsError::InvalidParameter {
            name: "value",
            rule: "finite",
            value: *bad,
        });
    }
    let n = values.len();
    let order = crate::stats::sort::sorted_order(values);
    let mut ranks = vec![0.0; n];
    let mut tie_sum = 0.0;
    let mut n_tied_values = 0;
    let mut start = 0;
    while start < n {
        let mut end = start + 1;
        while end < n && values[order[end]] == values[order[start]] {
            end += 1;
        }
        // Positions start..end hold ranks start + 1 ..= end.
        let rank = 0.5 * ((start + 1 + end) as f64);
        for &index in &order[start..end] {
            ranks[index] = rank;
        }
        let tie_size = (end - start) as f64;
        if end - start > 1 {
            n_tied_values += 1;
            tie_sum += tie_size * tie_size * tie_size - tie_size;
        }
        start = end;
    }
    Ok(MidRanks {
        ranks,
        tie_sum,
        n_tied_values,
    })
}

/// Pooled ranking of the groups: (mean rank per group, N, Σ(t³ - t)).
fn pooled_ranking(groups: &[&[f64]]) -> Result<(Vec<f64>, usize, f64), StatsError> {
    if groups.len() < 2 {
        return Err(StatsError::TooFewValues {
            what: "groups for a rank test",
            needed: 2,
            got: groups.len(),
        });
    }
    if let Some(empty) = groups.iter().find(|g| g.is_empty()) {
        return Err(StatsError::TooFewValues {
            what: "values in each group",
            needed: 1,
            got: empty.len(),
        });
    }
    let pooled: Vec<f64> = groups.iter().flat_map(|g| g.iter().copied()).collect();
    let ranking = mid_ranks(&pooled)?;
    let mut mean_ranks = Vec::with_capacity(groups.len());
    let mut offset = 0;
    for group in groups {
        let slice = &ranking.ranks[offset..offset + group.len()];
        mean_ranks.push(slice.iter().sum::<f64>() / group.len() as f64);
        offset += group.len();
    }
    Ok((mean_ranks, pooled.len(), ranking.tie_sum))
}

/// True when every pooled value is equal (all ranks tied).
fn all_tied(n_total: usize, tie_sum: f64) -> bool {
    let n = n_total as f64;
    tie_sum >= n * n * n - n
}

fn kruskal_wallis_from(
    groups: &[&[f64]],
    mean_ranks: Vec<f64>,
    n_total: usize,
    tie_sum: f64,
) -> Result<KruskalWallis, StatsError> {
    let n = n_total as f64;
    let centre = 0.5 * (n + 1.0);
    let between: f64 = groups
        .iter()
        .zip(&mean_ranks)
        .map(|(g, r)| g.len() as f64 * (r - centre) * (r - centre))
        .sum();
    let h_uncorrected = 12.0 / (n * (n + 1.0)) * between;
    let tie_correction = 1.0 - tie_sum / (n * n * n - n);
    let h = h_uncorrected / tie_correction;
    let df = (groups.len() - 1) as f64;
    let p_value = if h <= 0.0 {
        1.0
    } else {
        dist::chi2_sf(h, df).map_err(|_| StatsError::InvalidParameter {
            name: "Kruskal-Wallis H",
            rule: "finite and non-negative",
            value: h,
        })?
    };
    Ok(KruskalWallis {
        h,
        h_uncorrected,
        tie_correction,
        df,
        p_value,
        n_groups: groups.len(),
        n_total,
        mean_ranks,
    })
}

/// Two-sided standard normal p-value P(|Z| > |z|) = 2 P(Z > |z|), from the engine's
/// normal survival function (relative accuracy about 1e-15, no squaring of `z`).
fn two_sided_normal_p(z: f64) -> f64 {
    if z.is_nan() {
        return f64::NAN;
    }
    dist::normal_sf(z.abs()).map_or(f64::NAN, |tail| (2.0 * tail).min(1.0))
}

fn dunn_from(groups: &[&[f64]], mean_ranks: &[f64], n_total: usize, tie_sum: f64) -> Vec<DunnComparison> {
    let n = n_total as f64;
    let rank_variance = n * (n + 1.0) / 12.0 - tie_sum / (12.0 * (n - 1.0));
    let mut comparisons = Vec::new();
    for a in 0..groups.len() {
        for b in a + 1..groups.len() {
            let difference = mean_ranks[a] - mean_ranks[b];
            let standard_error = (rank_variance * (1.0 / groups[a].len() as f64 + 1.0 / groups[b].len() as f64)).sqrt();
            let z = difference / standard_error;
            comparisons.push(DunnComparison {
                group_a: a,
                group_b: b,
                mean_rank_difference: difference,
                standard_error,
                z,
                p_value: two_sided_normal_p(z),
                p_holm: 0.0,
                p_bonferroni: 0.0,
            });
        }
    }
    let raw: Vec<f64> = comparisons.iter().map(|c| c.p_value).collect();
    for ((comparison, holm), bonferroni) in comparisons
        .iter_mut()
        .zip(holm_adjust(&raw))
        .zip(bonferroni_adjust(&raw))
    {
        comparison.p_holm = holm;
        comparison.p_bonferroni = bonferroni;
    }
    comparisons
}

/// Kruskal-Wallis H test that k groups come from the same distribution.
///
/// # Remarks
/// Kruskal & Wallis (1952), JASA 47, 583-621. H = 12/(N(N+1)) Σ n_i (R̄_i - (N+1)/2)²
/// from pooled mid-ranks, divided by the tie correction C = 1 - Σ(t³ - t)/(N³ - N), and
/// referred to chi-square with k - 1 degrees of freedom (upper tail from the regularized
/// incomplete gamma function; a large-sample approximation, rough when groups have fewer
/// than about five values). Checked against scipy 1.17.1 `scipy.stats.kruskal`
/// (agreement within 1e-12 relative).
///
/// # Errors
/// `TooFewValues` for fewer than two groups or an empty group; `InvalidParameter` for
/// non-finite values. All values equal gives `Ok(RankOutcome::AllValuesEqual)`.
pub fn kruskal_wallis(groups: &[&[f64]]) -> Result<RankOutcome<KruskalWallis>, StatsError> {
    let (mean_ranks, n_total, tie_sum) = pooled_ranking(groups)?;
    if all_tied(n_total, tie_sum) {
        return Ok(RankOutcome::AllValuesEqual { n_values: n_total });
    }
    Ok(RankOutcome::Tested(kruskal_wallis_from(
        groups, mean_ranks, n_total, tie_sum,
    )?))
}

/// Dunn's (1964) pairwise comparisons of mean ranks, for all pairs of groups.
///
/// # Remarks
/// Dunn (1964), Technometrics 6, 241-252, with the usual tie-corrected variance:
/// z = (R̄_a - R̄_b) / sqrt([N(N+1)/12 - Σ(t³ - t)/(12(N - 1))] (1/n_a + 1/n_b)), the
/// two-sided p-value 2 P(Z > |z|) = Q(1/2, z²/2) from the regularized incomplete gamma
/// function, then Holm and
/// Bonferroni adjustment over the k(k - 1)/2 pairs. For two groups z² equals the
/// tie-corrected Kruskal-Wallis H. Checked by hand on a small case and against z built
/// from scipy 1.17.1 `scipy.stats.rankdata` (agreement within 1e-13 relative).
///
/// # Errors
/// `TooFewValues` for fewer than two groups or an empty group; `InvalidParameter` for
/// non-finite values. All values equal gives `Ok(RankOutcome::AllValuesEqual)`.
pub fn dunn(groups: &[&[f64]]) -> Result<RankOutcome<Vec<DunnComparison>>, StatsError> {
    let (mean_ranks, n_total, tie_sum) = pooled_ranking(groups)?;
    if all_tied(n_total, tie_sum) {
        return Ok(RankOutcome::AllValuesEqual { n_values: n_total });
    }
    Ok(RankOutcome::Tested(dunn_from(groups, &mean_ranks, n_total, tie_sum)))
}

/// Kruskal-Wallis test and Dunn's comparisons from a single pooled ranking.
///
/// # Errors
/// As [`kruskal_wallis`].
pub fn rank_analysis(groups: &[&[f64]]) -> Result<RankOutcome<RankAnalysis>, StatsError> {
    let (mean_ranks, n_total, tie_sum) = pooled_ranking(groups)?;
    if all_tied(n_total, tie_sum) {
        return Ok(RankOutcome::AllValuesEqual { n_values: n_total });
    }
    let comparisons = dunn_from(groups, &mean_ranks, n_total, tie_sum);
    let kruskal_wallis = kruskal_wallis_from(groups, mean_ranks, n_total, tie_sum)?;
    Ok(RankOutcome::Tested(RankAnalysis {
        kruskal_wallis,
        comparisons,
    }))
}

/// Holm's (1979) step-down adjustment of m p-values, returned in the input order.
///
/// # Remarks
/// Holm (1979), Scandinavian Journal of Statistics 6, 65-70. With p_(1) <= ... <= p_(m),
/// the adjusted value is max over j <= i of min(1, (m - j + 1) p_(j)). Each adjusted value
/// is at least its raw value and adjusted values keep the order of the raw ones. A NaN
/// entry gives NaN in its place and does not affect the others. Checked against
/// statsmodels 0.15.0 `multipletests(method='holm')`.
pub fn holm_adjust(p_values: &[f64]) -> Vec<f64> {
    let m = p_values.len();
    let mut order: Vec<usize> = (0..m).filter(|&i| !p_values[i].is_nan()).collect();
    order.sort_by(|&a, &b| p_values[a].total_cmp(&p_values[b]));
    let m_valid = order.len();
    let mut adjusted = vec![f64::NAN; m];
    let mut running = 0.0_f64;
    for (step, &index) in order.iter().enumerate() {
        let scaled = ((m_valid - step) as f64 * p_values[index]).min(1.0);
        running = running.max(scaled);
        adjusted[index] = running;
    }
    adjusted
}

/// Bonferroni adjustment: min(1, m p) for each of m p-values, in the input order.
/// NaN entries stay NaN and are not counted in m.
pub fn bonferroni_adjust(p_values: &[f64]) -> Vec<f64> {
    let m_valid = p_values.iter().filter(|p| !p.is_nan()).count() as f64;
    p_values
        .iter()
        .map(|&p| if p.is_nan() { p } else { (m_valid * p).min(1.0) })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn assert_close(actual: f64, expected: f64, relative: f64, label: &str) {
        let scale = expected.abs().max(f64::MIN_POSITIVE);
        assert!(
            (actual - expected).abs() <= relative * scale,
            "{label}: got {actual:e}, expected {expected:e}, relative error {:e}",
            (actual - expected).abs() / scale
        );
    }

    const THREE: [&[f64]; 3] = [
        &[4.2, 4.8, 5.1, 3.9, 4.4],
        &[5.9, 6.3, 5.2, 6.8, 7.1, 5.5],
        &[4.9, 5.0, 4.1, 5.6],
    ];
    const TIES: [&[f64]; 4] = [
        &[3., 4., 4., 5., 6., 6.],
        &[5., 6., 6., 7., 8.],
        &[2., 3., 3., 4., 4., 4., 5.],
        &[6., 7., 7., 8., 9.],
    ];

    /// Small deterministic generator for property tests (xorshift64*).
    struct Generator(u64);
    impl Generator {
        fn uniform(&mut self) -> f64 {
            self.0 ^= self.0 >> 12;
            self.0 ^= self.0 << 25;
            self.0 ^= self.0 >> 27;
            (self.0.wrapping_mul(0x2545_F491_4F6C_DD1D) >> 11) as f64 / (1u64 << 53) as f64
        }
    }

    #[test]
    fn mid_ranks_match_scipy() {
        // scipy 1.17.1: scipy.stats.rankdata([3, 1, 4, 1, 5, 9, 2, 6, 5, 3, 5])
        //   -> [4.5, 1.5, 6, 1.5, 8, 11, 3, 10, 8, 4.5, 8]
        let result = mid_ranks(&[3., 1., 4., 1., 5., 9., 2., 6., 5., 3., 5.]).expect("finite");
        assert_eq!(
            result.ranks,
            vec![4.5, 1.5, 6.0, 1.5, 8.0, 11.0, 3.0, 10.0, 8.0, 4.5, 8.0]
        );
        // Ties of sizes 2, 2, 3: Σ(t³ - t) = 6 + 6 + 24 (hand count).
        assert_eq!(result.tie_sum, 36.0);
        assert_eq!(result.n_tied_values, 3);
        assert!(mid_ranks(&[1.0, f64::NAN]).is_err());
        assert!(mid_ranks(&[]).expect("empty is fine").ranks.is_empty());
    }

    #[test]
    fn kruskal_wallis_matches_scipy() {
        // scipy 1.17.1: scipy.stats.kruskal(*THREE)
        let result = kruskal_wallis(&THREE).expect("valid").tested().expect("not tied");
        assert_close(result.h, 9.268333333333345, 1e-13, "H");
        assert_close(result.p_value, 0.009714198831993906, 1e-12, "p");
        assert_eq!(result.tie_correction, 1.0);
        assert_eq!(result.df, 2.0);
        // scipy 1.17.1: scipy.stats.kruskal(*TIES)
        let result = kruskal_wallis(&TIES).expect("valid").tested().expect("not tied");
        assert_close(result.h, 15.529530574279429, 1e-13, "H ties");
        assert_close(result.p_value, 0.0014157446085138097, 1e-12, "p ties");
        assert!(result.tie_correction < 1.0 && result.h > result.h_uncorrected);
        // scipy 1.17.1: scipy.stats.kruskal([1, 2, 3], [4, 5, 6])
        let two: [&[f64]; 2] = [&[1.0, 2.0, 3.0], &[4.0, 5.0, 6.0]];
        let result = kruskal_wallis(&two).expect("valid").tested().expect("not tied");
        assert_close(result.h, 3.857142857142854, 1e-13, "H two");
        assert_close(result.p_value, 0.049534613435626915, 1e-12, "p two");
        assert_eq!(result.mean_ranks, vec![2.0, 5.0]);
    }

    #[test]
    fn dunn_hand_case() {
        // Hand derivation: ranks 1..6, mean ranks 2 and 5, N = 6, no ties, so
        // SE = sqrt(6·7/12 · (1/3 + 1/3)) = sqrt(7/3) and z = -3 / sqrt(7/3).
        let two: [&[f64]; 2] = [&[1.0, 2.0, 3.0], &[4.0, 5.0, 6.0]];
        let comparisons = dunn(&two).expect("valid").tested().expect("not tied");
        assert_eq!(comparisons.len(), 1);
        let only = &comparisons[0];
        assert_close(only.standard_error, (7.0_f64 / 3.0).sqrt(), 1e-15, "SE");
        assert_close(only.z, -3.0 / (7.0_f64 / 3.0).sqrt(), 1e-15, "z");
        // scipy 1.17.1: 2 * scipy.stats.norm.sf(3 / sqrt(7/3)) = 0.04953461343562668
        assert_close(only.p_value, 0.04953461343562668, 1e-13, "p");
        assert_eq!(only.p_holm, only.p_value);
    }

    #[test]
    fn dunn_matches_scipy_built_z() {
        // z and p from scipy 1.17.1: r = scipy.stats.rankdata(pooled); tie sum from
        // numpy.unique counts; z = (mean r_a - mean r_b) / sqrt((N(N+1)/12
        //   - Σ(t³-t)/(12(N-1))) (1/n_a + 1/n_b)); p = 2 * scipy.stats.norm.sf(|z|).
        // Holm and Bonferroni: statsmodels 0.15.0 multipletests(p, method='holm') and
        // method='bonferroni'.
        let expected = [
            (
                0,
                1,
                -1.636737875881372,
                0.10168525130055713,
                0.3050557539016714,
                0.6101115078033428,
            ),
            (0, 2, 1.099803637299981, 0.2714176872162679, 0.5428353744325358, 1.0),
            (
                0,
                3,
                -2.4263199667588173,
                0.015252815967332117,
                0.061011263869328466,
                0.09151689580399269,
            ),
            (
                1,
                2,
                2.73758947338008,
                0.006189128172020633,
                0.030945640860103166,
                0.0371347690321238,
            ),
            (1, 3, -0.7559672976049947, 0.4496688029927626, 0.5428353744325358, 1.0),
            (
                2,
                3,
                -3.554127478755763,
                0.0003792353435127817,
                0.0022754120610766902,
                0.0022754120610766902,
            ),
        ];
        let comparisons = dunn(&TIES).expect("valid").tested().expect("not tied");
        assert_eq!(comparisons.len(), expected.len());
        for (c, (a, b, z, p, holm, bonferroni)) in comparisons.iter().zip(expected) {
            assert_eq!((c.group_a, c.group_b), (a, b));
            assert_close(c.z, z, 1e-13, "z");
            assert_close(c.p_value, p, 1e-12, "p");
            assert_close(c.p_holm, holm, 1e-12, "Holm");
            assert_close(c.p_bonferroni, bonferroni, 1e-12, "Bonferroni");
        }
        // Same z for the untied set: scipy-built z for THREE, pairs (0,1), (0,2), (1,2).
        let comparisons = dunn(&THREE).expect("valid").tested().expect("not tied");
        for (c, z) in comparisons
            .iter()
            .zip([-2.941886634406052, -0.7666666666666666, 1.9629909152447276])
        {
            assert_close(c.z, z, 1e-13, "z three");
        }
        // rank_analysis gives the same answers from one ranking.
        let both = rank_analysis(&TIES).expect("valid").tested().expect("not tied");
        assert_eq!(both.comparisons, comparisons_for(&TIES));
        assert_close(both.kruskal_wallis.h, 15.529530574279429, 1e-13, "H");
    }

    fn comparisons_for(groups: &[&[f64]]) -> Vec<DunnComparison> {
        dunn(groups).expect("valid").tested().expect("not tied")
    }

    #[test]
    fn all_equal_values_are_a_finding() {
        let equal: [&[f64]; 3] = [&[7.0, 7.0], &[7.0], &[7.0, 7.0, 7.0]];
        assert_eq!(
            kruskal_wallis(&equal).expect("valid"),
            RankOutcome::AllValuesEqual { n_values: 6 }
        );
        assert_eq!(
            dunn(&equal).expect("valid"),
            RankOutcome::AllValuesEqual { n_values: 6 }
        );
        assert!(rank_analysis(&equal).expect("valid").tested().is_none());
        let one_group: [&[f64]; 1] = [&[1.0, 2.0]];
        assert!(kruskal_wallis(&one_group).is_err());
        let with_empty: [&[f64]; 2] = [&[1.0, 2.0], &[]];
        assert!(dunn(&with_empty).is_err());
        let with_nan: [&[f64]; 2] = [&[1.0, 2.0], &[f64::NAN]];
        assert!(kruskal_wallis(&with_nan).is_err());
    }

    #[test]
    fn adjustments_match_statsmodels_and_keep_order() {
        // statsmodels 0.15.0: multipletests([0.01, 0.04, 0.03, 0.005], method='holm')[1]
        let holm = holm_adjust(&[0.01, 0.04, 0.03, 0.005]);
        for (got, expected) in holm.iter().zip([0.03, 0.06, 0.06, 0.02]) {
            assert_close(*got, expected, 1e-15, "Holm");
        }
        // statsmodels 0.15.0: multipletests([0.01, 0.3, 0.2, 0.5], method='bonferroni')[1]
        //   -> [0.04, 1.0, 0.8, 1.0]
        let bonferroni = bonferroni_adjust(&[0.01, 0.3, 0.2, 0.5]);
        for (got, expected) in bonferroni.iter().zip([0.04, 1.0, 0.8, 1.0]) {
            assert_close(*got, expected, 1e-15, "Bonferroni");
        }
        assert!(holm_adjust(&[]).is_empty());
        let with_nan = holm_adjust(&[0.02, f64::NAN, 0.01]);
        assert!(with_nan[1].is_nan());
        assert_close(with_nan[0], 0.02, 1e-15, "Holm with NaN");
        assert!(bonferroni_adjust(&[f64::NAN])[0].is_nan());

        // Properties (common practice): raw <= Holm <= Bonferroni <= 1, and Holm keeps
        // the order of the raw p-values.
        let mut generator = Generator(0x2545_F491_4F6C_DD1D);
        for trial in 0..200 {
            let m = 1 + trial % 25;
            let raw: Vec<f64> = (0..m).map(|_| generator.uniform().powi(3)).collect();
            let holm = holm_adjust(&raw);
            let bonferroni = bonferroni_adjust(&raw);
            for i in 0..m {
                assert!(raw[i] <= holm[i] && holm[i] <= bonferroni[i] && bonferroni[i] <= 1.0);
                for j in 0..m {
                    if raw[i] <= raw[j] {
                        assert!(holm[i] <= holm[j], "trial {trial}");
                    }
                }
            }
        }
    }

    #[test]
    fn rank_properties_on_random_groups() {
        let mut generator = Generator(0x9E37_79B9_7F4A_7C15);
        for trial in 0..100 {
            let n_groups = 2 + trial % 4;
            let groups: Vec<Vec<f64>> = (0..n_groups)
                .map(|g| {
                    (0..2 + (trial + g) % 7)
                        .map(|_| (generator.uniform() * 6.0).floor() + g as f64 * 0.5)
                        .collect()
                })
                .collect();
            let slices: Vec<&[f64]> = groups.iter().map(|g| g.as_slice()).collect();
            let Some(analysis) = rank_analysis(&slices).expect("valid").tested() else {
                continue;
            };
            let n_total: usize = groups.iter().map(|g| g.len()).sum();
            let n = n_total as f64;
            // Ranks sum to N(N+1)/2 (common practice).
            let rank_sum: f64 = analysis
                .kruskal_wallis
                .mean_ranks
                .iter()
                .zip(&groups)
                .map(|(r, g)| r * g.len() as f64)
                .sum();
            assert!((rank_sum - n * (n + 1.0) / 2.0).abs() < 1e-9);
            let h = analysis.kruskal_wallis.h;
            assert!(h >= 0.0 && (0.0..=1.0).contains(&analysis.kruskal_wallis.p_value));
            // A strictly increasing transform leaves every rank statistic unchanged.
            let transformed: Vec<Vec<f64>> = groups
                .iter()
                .map(|g| g.iter().map(|v| (0.7 * v).exp() - 3.0).collect())
                .collect();
            let transformed: Vec<&[f64]> = transformed.iter().map(|g| g.as_slice()).collect();
            let again = kruskal_wallis(&transformed).expect("valid").tested().expect("same");
            assert!((again.h - h).abs() <= 1e-12 * h.max(1.0));
            // For two groups Dunn's z² equals the tie-corrected H (algebraic identity).
            if n_groups == 2 {
                let z = analysis.comparisons[0].z;
                assert!((z * z - h).abs() <= 1e-10 * h.max(1.0), "z² {} H {h}", z * z);
                assert!((analysis.comparisons[0].p_value - analysis.kruskal_wallis.p_value).abs() < 1e-12);
            }
        }
    }
}
