"""Reference values for `best_tail.rs`: the adjusted p-values that each condition is not
the best (multiple comparisons with the best, higher is better) of an invented trial whose
conditions trail the best by gaps from a few standard errors to tens of thousands.

The values are the decimals below; their means, the pooled SD (exact fractions) and each
condition's largest studentized lead of another condition over it,
t_i = max_{j != i} (m_j - m_i) / (s sqrt(1/n_i + 1/n_j)), are computed at 50 digits; the
adjusted p-value is the one-sided upper tail of the product-correlation family with
condition i as the control (lambda_j = sqrt(n_j / (n_j + n_i)), df = N - k) at t_i:

    P = integral over s of chi_df(s) T(t_i s) ds,  T(x) = 1 - integral phi(z) prod_j F_j(x, z) dz,

the inner tail T by `inner_tail` of `src/stats/testdata/dunnett_reference.py` (the
complement integrand, nothing cancels; the method of the Dunnett tail test), mpmath 1.3.0
at 25 digits. The outer integral is taken over u = ln s, where the integrand's mass lies
within [u* - 2.4, u* + 1] about u* = ln sqrt(df / (df + t^2)) (outside it the integrand is
below 1e-19 of its peak at df 31), by fixed Gauss-Legendre panels; the same sum with half
as many nodes is printed beside it, and their agreement is the accuracy claimed.

Run: python3 best_tail_reference.py [condition numbers]   (mpmath 1.3.0; minutes per condition)
"""
import os
import sys
from fractions import Fraction

import mpmath as mp

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "src", "stats", "testdata"))
from dunnett_reference import inner_tail  # noqa: E402
from mpmath.calculus.quadrature import GaussLegendre  # noqa: E402

# The spread every condition shares, in thousandths (its own size), and each condition's
# mean as a decimal.
PATTERN = ["-1.2", "0.7", "0.4", "-0.3", "1.1", "-0.9", "0.2", "0.5"]
SIZES = [5, 6, 8, 6, 7, 5]
MEANS = ["0.003", "0.0002", "-0.0104", "-0.1718", "-12.297", "-56999.997"]


def trial():
    groups = []
    for size, centre in zip(SIZES, MEANS):
        groups.append([Fraction(centre) + Fraction(PATTERN[j]) / 1000 for j in range(size)])
    return groups


PANELS = [-2.4, -1.6, -1.0, -0.6, -0.3, 0.0, 0.25, 0.5, 1.0]


def outer_tail(t, lambdas, df, degree):
    """P(max_j T_j > t) by Gauss-Legendre panels over u = ln s (3 * 2^(degree - 1) nodes each)."""
    nu = mp.mpf(df)
    logk = mp.log(2) + (nu / 2) * mp.log(nu / 2) - mp.loggamma(nu / 2)
    centre = mp.log(mp.sqrt(nu / (nu + t * t)))
    nodes = GaussLegendre(mp.mp).calc_nodes(degree, mp.mp.prec)
    total = mp.mpf(0)
    for a, b in zip(PANELS, PANELS[1:]):
        lo, hi = centre + a, centre + b
        half = (hi - lo) / 2
        for x, w in nodes:
            u = lo + half * (x + 1)
            s = mp.exp(u)
            # chi density of s times ds/du = s
            density = mp.exp(logk + nu * u - nu * s * s / 2)
            total += w * half * density * inner_tail(t * s, lambdas, 1)
    return total


def main():
    mp.mp.dps = 50
    groups = trial()
    k = len(groups)
    n = sum(len(g) for g in groups)
    means = [sum(g, Fraction(0)) / len(g) for g in groups]
    within = sum((sum(((x - m) ** 2 for x in g), Fraction(0)) for g, m in zip(groups, means)), Fraction(0))
    df = n - k
    s = mp.sqrt(mp.mpf(within.numerator) / within.denominator / df)
    which = [int(a) for a in sys.argv[1:]] or list(range(2, k + 1))
    # The first condition is the best: its p-value lies near 1, not in the tail, and is
    # not computed here.
    for number in which:
        i = number - 1
        leads = []
        for j in range(k):
            if j != i:
                gap = means[j] - means[i]
                leads.append(mp.mpf(gap.numerator) / gap.denominator / (s * mp.sqrt(mp.mpf(1) / SIZES[i] + mp.mpf(1) / SIZES[j])))
        t = max(leads)
        lambdas = [mp.sqrt(mp.mpf(SIZES[j]) / (SIZES[j] + SIZES[i])) for j in range(k) if j != i]
        mp.mp.dps = 25
        fine = outer_tail(t, lambdas, df, 4)
        coarse = outer_tail(t, lambdas, df, 3)
        agree = -mp.log10(abs(fine - coarse) / fine) if fine != coarse else mp.inf
        mp.mp.dps = 50
        print(f"condition {number}: lead {mp.nstr(t, 17)} p {mp.nstr(fine, 17)} "
              f"(half the nodes: {mp.nstr(coarse, 17)}, digits in agreement {mp.nstr(agree, 3)})", flush=True)


if __name__ == "__main__":
    main()
