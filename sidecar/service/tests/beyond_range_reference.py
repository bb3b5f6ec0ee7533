"""Reference values for the trial near the top of the range of doubles in
beyond_range.rs: three recipes, three runs each, values near +-1.7e308.

mpmath 1.3.0 works on the exact doubles (mpf of a float is exact) at 50 significant
digits, where no figure overflows. Printed: the one-way ANOVA F and its p-value, the
pooled SD, the difference A - B of means and its pooled t statistic.

Run: python3 beyond_range_reference.py   (mpmath 1.3.0)
"""
import mpmath as mp

mp.mp.dps = 50

GROUPS = {
    "A": [1.70e308, 1.62e308, 1.66e308],
    "B": [-1.70e308, -1.61e308, -1.67e308],
    "C": [1.50e308, -1.55e308, 1.52e308],
}


def show(x):
    return mp.nstr(x, 17, min_fixed=1, max_fixed=0)


groups = {name: [mp.mpf(v) for v in values] for name, values in GROUPS.items()}
means = {name: mp.fsum(g) / len(g) for name, g in groups.items()}
n = sum(len(g) for g in groups.values())
k = len(groups)
grand = mp.fsum(mp.fsum(g) for g in groups.values()) / n
between = mp.fsum(len(g) * (means[name] - grand) ** 2 for name, g in groups.items())
within = mp.fsum(mp.fsum((x - means[name]) ** 2 for x in g) for name, g in groups.items())
ms_within = within / (n - k)
f = (between / (k - 1)) / ms_within
p = mp.betainc(mp.mpf(n - k) / 2, mp.mpf(k - 1) / 2, 0, (n - k) / ((n - k) + (k - 1) * f), regularized=True)
difference = means["A"] - means["B"]
t = difference / mp.sqrt(ms_within * (mp.mpf(1) / 3 + mp.mpf(1) / 3))
print(f"f {show(f)} p {show(p)} pooled_sd {show(mp.sqrt(ms_within))}")
print(f"difference A-B {show(difference)} t {show(t)}")
print(f"ss between {show(between)} within {show(within)}")
