"""Reference values for the rank-based analysis deep in the tail: Kruskal-Wallis H and
its p-value, and Dunn's z, p, Holm and Bonferroni adjusted p for every pair, with p from
about 0.5 down to 1e-160.

Ranks, mean ranks, the tie sum and H are exact rational numbers (Python fractions);
square roots and tails are taken in mpmath 1.3.0 at 50 significant digits:
- Kruskal (1952) / Kruskal & Wallis: H = 12 / (N (N + 1)) sum n_g (R_g - (N + 1) / 2)^2,
  divided by 1 - sum (t^3 - t) / (N^3 - N); p = upper chi-square tail with k - 1 df.
- Dunn (1964): z = (R_a - R_b) / sqrt((N (N + 1) / 12 - sum (t^3 - t) / (12 (N - 1)))
  (1 / n_a + 1 / n_b)); p = 2 Q(|z|); Bonferroni min(1, m p); Holm's step-down with the
  running maximum.

Data: each group is (n, low, high), its values low + (i mod (high - low + 1)) for
i = 0..n - 1 (integers, so ties abound).

Run: python3 rank_tail_reference.py   (mpmath 1.3.0; prints the Rust table rows)
"""
from fractions import Fraction
import mpmath as mp

mp.mp.dps = 50

CASES = [
    [(10, 0, 9), (12, 0, 10), (8, 1, 9)],
    [(30, 0, 20), (30, 10, 30), (25, 5, 25)],
    [(200, 0, 99), (200, 100, 199), (150, 50, 149)],
    [(400, 0, 399), (400, 400, 799)],
    [(800, 0, 199), (700, 100, 299), (900, 150, 349), (50, 0, 499)],
]


def values(group):
    n, low, high = group
    return [low + i % (high - low + 1) for i in range(n)]


def analyse(groups):
    data = [values(g) for g in groups]
    pooled = sorted(v for d in data for v in d)
    n_total = len(pooled)
    rank_of = {}
    tie_sum = 0
    i = 0
    while i < n_total:
        j = i
        while j < n_total and pooled[j] == pooled[i]:
            j += 1
        t = j - i
        rank_of[pooled[i]] = Fraction(i + 1 + j, 2)  # mean of ranks i+1..j
        tie_sum += t**3 - t
        i = j
    mean_ranks = [sum(rank_of[v] for v in d) / len(d) for d in data]
    n = Fraction(n_total)
    centre = (n + 1) / 2
    between = sum(len(d) * (r - centre) ** 2 for d, r in zip(data, mean_ranks))
    h = Fraction(12) / (n * (n + 1)) * between / (1 - Fraction(tie_sum) / (n**3 - n))
    h_mp = mp.mpf(h.numerator) / h.denominator
    df = len(groups) - 1
    p_kw = mp.gammainc(mp.mpf(df) / 2, h_mp / 2, mp.inf, regularized=True)
    variance = n * (n + 1) / 12 - Fraction(tie_sum) / (12 * (n - 1))
    pairs = []
    for a in range(len(groups)):
        for b in range(a + 1, len(groups)):
            difference = mean_ranks[a] - mean_ranks[b]
            z2 = difference**2 / (variance * (Fraction(1, len(data[a])) + Fraction(1, len(data[b]))))
            z = mp.sqrt(mp.mpf(z2.numerator) / z2.denominator)
            if difference < 0:
                z = -z
            pairs.append([z, mp.erfc(abs(z) / mp.sqrt(2))])
    m = len(pairs)
    for pair in pairs:
        pair.append(min(1, m * pair[1]))
    running = mp.mpf(0)
    order = sorted(range(m), key=lambda index: pairs[index][1])
    holm = [None] * m
    for step, index in enumerate(order):
        running = max(running, min(1, (m - step) * pairs[index][1]))
        holm[index] = running
    return h_mp, p_kw, [(z, p, holm[index], bonferroni) for index, (z, p, bonferroni) in enumerate(pairs)]


def show(x):
    return mp.nstr(mp.mpf(x), 17, min_fixed=1, max_fixed=0)


for groups in CASES:
    h, p, pairs = analyse(groups)
    rows = ", ".join(f"[{show(z)}, {show(q)}, {show(holm)}, {show(bon)}]" for z, q, holm, bon in pairs)
    print(f"    (&{groups}, [{show(h)}, {show(p)}], &[{rows}]),".replace("[(", "[(").replace("), (", "), ("))
