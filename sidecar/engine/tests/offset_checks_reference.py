"""Reference values for the model checks of a one-way trial at a large offset: an
invented 4 x 6 trial (about 1 % spread) typed as offset + value, e.g. 1000000002.314 at
the offset 1e9. Every check is unchanged by the offset, so one row serves all offsets
(the script checks that each offset gives the same values).

mpmath 1.3.0 works on the typed decimals themselves at 50 significant digits (every
value here is exact at that precision). Printed per offset: Levene's F (deviations from
means) and p, the Brown-Forsythe F (deviations from medians) and p, Bartlett's
statistic and p, the ratio of the largest SD to the smallest, and the Shapiro-Wilk W and
p of the residuals about each condition's mean (Royston's published formula, as
`normality_tail_reference.py` evaluates it).

Run: python3 offset_checks_reference.py   (mpmath 1.3.0)
"""
import mpmath as mp

from magnitude_reference import bartlett, f_sf, mean, oneway, var
from normality_tail_reference import shapiro_wilk

mp.mp.dps = 50

TRIAL = [
    ["2.314", "2.297", "2.331", "2.305", "2.322", "2.289"],
    ["2.351", "2.338", "2.366", "2.342", "2.359", "2.347"],
    ["2.301", "2.318", "2.296", "2.327", "2.309", "2.313"],
    ["2.336", "2.329", "2.344", "2.321", "2.352", "2.333"],
]
OFFSETS = ["1000000", "1000000000", "100000000000"]


def median(values):
    ordered = sorted(values)
    n = len(ordered)
    return ordered[n // 2] if n % 2 else (ordered[n // 2 - 1] + ordered[n // 2]) / 2


def spread_f(groups, centre):
    deviations = [[abs(x - centre(g)) for x in g] for g in groups]
    f = oneway(deviations)[0]
    n = sum(len(g) for g in groups)
    return f, f_sf(f, len(groups) - 1, n - len(groups))


def show(x):
    return mp.nstr(x, 17, min_fixed=1, max_fixed=0)


rows = []
for offset in OFFSETS:
    groups = [[mp.mpf(offset) + mp.mpf(v) for v in g] for g in TRIAL]
    levene_f, levene_p = spread_f(groups, mean)
    bf_f, bf_p = spread_f(groups, median)
    t = bartlett(groups)
    t_p = mp.gammainc(mp.mpf(len(groups) - 1) / 2, t / 2, mp.inf, regularized=True)
    sds = [mp.sqrt(var(g)) for g in groups]
    residuals = [x - mean(g) for g in groups for x in g]
    w, w_p = shapiro_wilk(residuals)
    values = [levene_f, levene_p, bf_f, bf_p, t, t_p, max(sds) / min(sds), w, w_p]
    rows.append(", ".join(show(v) for v in values))
assert all(row == rows[0] for row in rows)
print(f"    {rows[0]},")
