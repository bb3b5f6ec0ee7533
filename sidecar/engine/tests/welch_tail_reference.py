"""Reference values for Welch's ANOVA deep in the tail (p from about 1e-30 to 1e-100).

Each case is given by its condition summaries (count, mean, SD as short decimals); mpmath
1.3.0 works at 60 significant digits on the doubles nearest those decimals (mpf of a
float is exact). Welch's F and its denominator df follow Welch (1951); the p-value is
the regularized incomplete beta I_x(df2/2, df1/2) with x = df2 / (df2 + df1 F). With two
conditions Welch's F is the square of Welch's t and the p-value is also printed through
the t distribution, P(|T| > t) = I_{df/(df + t^2)}(df/2, 1/2), as a cross-check.

Run: python3 welch_tail_reference.py   (mpmath 1.3.0)
"""
import mpmath as mp

mp.mp.dps = 60

# (name, [(n, mean, sd), ...])
CASES = [
    ("two, df 33, p near 1e-30", [(20, "10.0", "1.0"), (20, "27.45", "1.5")]),
    ("two, df 33, p near 1e-60", [(20, "10.0", "1.0"), (20, "151.8", "1.5")]),
    ("two, df 33, p near 1e-100", [(20, "10.0", "1.0"), (20, "2302.0", "1.5")]),
    ("two, df 6, p near 1e-30", [(4, "5.0", "0.01"), (5, "1744.0", "0.02")]),
    ("two, df 1853, p near 1e-100", [(1000, "100.0", "3.0"), (1000, "103.59", "4.0")]),
    ("three, p near 1e-50", [(12, "3.0", "0.2"), (15, "95.94", "0.3"), (10, "3.2", "0.25")]),
    ("three, p near 1e-100", [(30, "3.0", "0.2"), (40, "26.46", "0.3"), (25, "3.2", "0.25")]),
]

def welch(summaries):
    k = len(summaries)
    n = [mp.mpf(c) for c, _, _ in summaries]
    mean = [mp.mpf(float(m)) for _, m, _ in summaries]
    sd = [mp.mpf(float(s)) for _, _, s in summaries]
    w = [ni / si**2 for ni, si in zip(n, sd)]
    tw = mp.fsum(w)
    mw = mp.fsum(wi * mi for wi, mi in zip(w, mean)) / tw
    a = mp.fsum(wi * (mi - mw) ** 2 for wi, mi in zip(w, mean)) / (k - 1)
    lam = mp.fsum((1 - wi / tw) ** 2 / (ni - 1) for wi, ni in zip(w, n))
    f = a / (1 + 2 * (k - 2) * lam / (k * k - 1))
    df2 = (k * k - 1) / (3 * lam)
    p = mp.betainc(df2 / 2, mp.mpf(k - 1) / 2, 0, df2 / (df2 + (k - 1) * f), regularized=True)
    return f, df2, p


def welch_t_p(summaries):
    (n1, m1, s1), (n2, m2, s2) = summaries
    v1 = mp.mpf(float(s1)) ** 2 / n1
    v2 = mp.mpf(float(s2)) ** 2 / n2
    t = (mp.mpf(float(m1)) - mp.mpf(float(m2))) / mp.sqrt(v1 + v2)
    df = (v1 + v2) ** 2 / (v1**2 / (n1 - 1) + v2**2 / (n2 - 1))
    return mp.betainc(df / 2, mp.mpf(1) / 2, 0, df / (df + t * t), regularized=True)


def show(x):
    return mp.nstr(x, 17, min_fixed=1, max_fixed=0)


for name, summaries in CASES:
    f, df2, p = welch(summaries)
    line = f"// {name}: f {show(f)} df2 {show(df2)} p {show(p)}"
    if len(summaries) == 2:
        line += f" p_by_t {show(welch_t_p(summaries))}"
    print(line)
