"""Reference values for `spread_kway_tail.rs`: Levene's test (deviations from means), the
Brown-Forsythe test (deviations from medians), Bartlett's test and the F tests of a
two-factor model, on invented trials whose p-values lie deep in the tail.

The values are made by the same formula, in the same order of binary operations, as the
Rust test (IEEE 754 doubles in both, no fused operations), so both read the same
doubles. Sums and statistics are computed from the exact rational value of each double
(Python fractions; the decimals a cell would hold where the engine reads those); only the logarithms of Bartlett's statistic and the tail
probabilities are done in mpmath 1.3.0 at 50 significant digits:
P(F > f) = I_{d2/(d2 + d1 f)}(d2/2, d1/2) (regularized incomplete beta) and
P(chi-square_k > x) = Q(k/2, x/2) (regularized upper incomplete gamma).

Run: python3 spread_kway_tail_reference.py   (mpmath 1.3.0, Python 3)
"""
from fractions import Fraction

import mpmath as mp

mp.mp.dps = 50


def spread_trial(centre, scales, runs, step):
    """Condition i: centre + scale_i * u_j, u_j = +-(1 + step * j^2 / runs), signs
    alternating (an even number of runs: the mean and the median differ, and no value
    lies at either)."""
    groups = []
    for scale in scales:
        group = []
        for j in range(runs):
            sign = 1.0 if j % 2 == 0 else -1.0
            group.append(centre + scale * (sign * (1.0 + step * float(j * j) / runs)))
        groups.append(group)
    return groups


def as_read(groups):
    """The values as the engine reads them: the decimal a cell would hold when every value
    of the trial has one of at most 15 significant digits that reads back as its double
    (the engine then differences the decimals exactly); otherwise the exact doubles."""
    short = [["%.15g" % x for x in g] for g in groups]
    if all(float(text) == x for g, texts in zip(groups, short) for x, text in zip(g, texts)):
        return [[Fraction(text) for text in texts] for texts in short]
    return [[Fraction(x) for x in g] for g in groups]


def mean(g):
    return sum(g, Fraction(0)) / len(g)


def median(g):
    s = sorted(g)
    n = len(s)
    return s[n // 2] if n % 2 else (s[n // 2 - 1] + s[n // 2]) / 2


def oneway_f(groups):
    k = len(groups)
    n = sum(len(g) for g in groups)
    grand = sum((sum(g, Fraction(0)) for g in groups), Fraction(0)) / n
    between = sum((len(g) * (mean(g) - grand) ** 2 for g in groups), Fraction(0))
    within = sum((sum(((x - mean(g)) ** 2 for x in g), Fraction(0)) for g in groups), Fraction(0))
    return (between / (k - 1)) / (within / (n - k)), k - 1, n - k


def f_sf(f, d1, d2):
    f = mp.mpf(f.numerator) / f.denominator
    x = mp.mpf(d2) / (d2 + d1 * f)
    return mp.betainc(mp.mpf(d2) / 2, mp.mpf(d1) / 2, 0, x, regularized=True)


def spread_f(groups, centre):
    return oneway_f([[abs(x - centre(g)) for x in g] for g in groups])


def variance(g):
    m = mean(g)
    return sum(((x - m) ** 2 for x in g), Fraction(0)) / (len(g) - 1)


def bartlett(groups):
    k = len(groups)
    n = sum(len(g) for g in groups)
    v = [variance(g) for g in groups]
    pooled = sum(((len(g) - 1) * vi for g, vi in zip(groups, v)), Fraction(0)) / (n - k)
    c = 1 + (sum((Fraction(1, len(g) - 1) for g in groups), Fraction(0)) - Fraction(1, n - k)) / (3 * (k - 1))
    mpf = lambda q: mp.mpf(q.numerator) / q.denominator
    # (n - k) ln(pooled) - sum (n_i - 1) ln(v_i) = sum (n_i - 1) ln(pooled / v_i), each ratio exact.
    stat = mp.fsum((len(g) - 1) * mp.log(mpf(pooled / vi)) for g, vi in zip(groups, v)) / mpf(c)
    return stat, mp.gammainc(mp.mpf(k - 1) / 2, stat / 2, mp.inf, regularized=True)


def two_factor_trial(centre, a_effects, b_effects, ab_scale, replicates, step):
    """Cell (i, j), copy r: centre + a_i + b_j + ab_scale * (i + 1) * (j - 1) + noise,
    noise = step * (r - (replicates - 1) / 2) * (1 + 0.25 * ((i + j) % 3))."""
    cells = []
    for i, a in enumerate(a_effects):
        for j, b in enumerate(b_effects):
            cell = []
            for r in range(replicates):
                noise = step * (r - (replicates - 1) / 2.0) * (1.0 + 0.25 * ((i + j) % 3))
                cell.append(centre + a + b + ab_scale * ((i + 1) * (j - 1)) + noise)
            cells.append(cell)
    return cells


def two_factor_anova(cells, levels_a, levels_b, replicates):
    """Balanced two-factor model: Type I, II and III sums of squares coincide."""
    c = as_read(cells)
    cell_mean = [[mean(c[i * levels_b + j]) for j in range(levels_b)] for i in range(levels_a)]
    grand = sum((sum(row, Fraction(0)) for row in cell_mean), Fraction(0)) / (levels_a * levels_b)
    a_mean = [sum(row, Fraction(0)) / levels_b for row in cell_mean]
    b_mean = [sum((cell_mean[i][j] for i in range(levels_a)), Fraction(0)) / levels_a for j in range(levels_b)]
    ss_a = levels_b * replicates * sum(((m - grand) ** 2 for m in a_mean), Fraction(0))
    ss_b = levels_a * replicates * sum(((m - grand) ** 2 for m in b_mean), Fraction(0))
    ss_ab = replicates * sum(
        ((cell_mean[i][j] - a_mean[i] - b_mean[j] + grand) ** 2 for i in range(levels_a) for j in range(levels_b)),
        Fraction(0),
    )
    ss_e = sum(
        ((x - cell_mean[i][j]) ** 2 for i in range(levels_a) for j in range(levels_b) for x in c[i * levels_b + j]),
        Fraction(0),
    )
    df_e = levels_a * levels_b * (replicates - 1)
    rows = []
    for name, ss, df in [("A", ss_a, levels_a - 1), ("B", ss_b, levels_b - 1), ("A x B", ss_ab, (levels_a - 1) * (levels_b - 1))]:
        f = (ss / df) / (ss_e / df_e)
        rows.append((name, ss, f, f_sf(f, df, df_e)))
    return rows, ss_e


def show(x):
    if isinstance(x, Fraction):
        x = mp.mpf(x.numerator) / x.denominator
    return mp.nstr(x, 17, min_fixed=1, max_fixed=0)


SPREAD_CASES = [
    # (label, centre, scales, runs, step)
    ("p near 1e-6", 10.0, [1.0, 1.5, 2.0], 14, 0.1),
    ("p near 1e-36", 250.0, [1.0, 2.0, 3.0], 24, 0.02),
    ("p near 1e-97", 1000.0, [0.5, 1.0, 2.0, 3.0], 32, 0.01),
    ("p near 1e-205", 40.0, [0.25, 1.0, 4.0], 74, 0.004),
]

BARTLETT_CASES = [
    ("p near 1e-19", 10.0, [1.0, 4.0, 16.0], 18, 0.5),
    ("p near 1e-46", 250.0, [1.0, 8.0, 64.0], 24, 0.2),
    ("p near 1e-112", 1000.0, [0.5, 8.0, 128.0], 40, 0.1),
    ("p near 1e-299", 40.0, [0.25, 8.0, 256.0], 80, 0.04),
]

KWAY_CASES = [
    # (label, centre, a effects, b effects, interaction scale, replicates, noise step)
    ("p near 1e-19", 50.0, [-0.5, 0.5], [-0.4, 0.1, 0.3], 0.15, 5, 0.05),
    ("p near 1e-54", 120.0, [-0.8, 0.8], [-0.6, 0.2, 0.4], 0.3, 9, 0.02),
    ("p near 1e-141", 300.0, [-1.0, 1.0], [-0.9, 0.3, 0.6], 0.5, 20, 0.01),
]


def main():
    for label, centre, scales, runs, step in SPREAD_CASES:
        groups = as_read(spread_trial(centre, scales, runs, step))
        f, d1, d2 = spread_f(groups, mean)
        bf, _, _ = spread_f(groups, median)
        print(f"spread {label}: levene F {show(f)} p {show(f_sf(f, d1, d2))} "
              f"brown-forsythe F {show(bf)} p {show(f_sf(bf, d1, d2))}")
    for label, centre, scales, runs, step in BARTLETT_CASES:
        stat, p = bartlett(as_read(spread_trial(centre, scales, runs, step)))
        print(f"bartlett {label}: statistic {show(stat)} p {show(p)}")
    for label, centre, a, b, ab, replicates, step in KWAY_CASES:
        rows, ss_e = two_factor_anova(two_factor_trial(centre, a, b, ab, replicates, step), len(a), len(b), replicates)
        print(f"two-factor {label}: residual SS {show(ss_e)}")
        for name, ss, f, p in rows:
            print(f"    {name}: SS {show(ss)} F {show(f)} p {show(p)}")


if __name__ == "__main__":
    main()
