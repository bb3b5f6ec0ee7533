"""Reference values for the one-way analysis of one invented trial at extreme magnitudes.

The same 3 x 5 trial (about 1 % spread) is written at the decimal magnitudes 1e-300,
1e-170, 1e160 and 1e300; each value is the double nearest the decimal, and mpmath 1.3.0
works on those doubles exactly (mpf of a float is exact) at 50 significant digits.
Printed for each magnitude: the ANOVA F and its p-value, the pooled SD, each condition's
SD, Welch's F and p, Levene's F (deviations from means), Bartlett's statistic.

Run: python3 magnitude_reference.py   (mpmath 1.3.0)
"""
import mpmath as mp

mp.mp.dps = 50

BASE = [
    ["1.012", "0.994", "1.003", "1.021", "0.987"],
    ["1.031", "1.018", "1.044", "1.026", "1.009"],
    ["0.978", "1.002", "0.969", "0.991", "0.985"],
]
MAGNITUDES = ["1e-300", "1e-170", "1e160", "1e300"]


def data_at(magnitude):
    exponent = magnitude[2:]
    return [[mp.mpf(float(v + "e" + exponent)) for v in group] for group in BASE]


def mean(g):
    return mp.fsum(g) / len(g)


def var(g):
    m = mean(g)
    return mp.fsum((x - m) ** 2 for x in g) / (len(g) - 1)


def f_sf(f, d1, d2):
    # P(F > f) = I_{d2/(d2+d1 f)}(d2/2, d1/2)
    x = d2 / (d2 + d1 * f)
    return mp.betainc(d2 / 2, d1 / 2, 0, x, regularized=True)


def oneway(groups):
    k = len(groups)
    n = sum(len(g) for g in groups)
    grand = mp.fsum(mp.fsum(g) for g in groups) / n
    between = mp.fsum(len(g) * (mean(g) - grand) ** 2 for g in groups)
    within = mp.fsum(mp.fsum((x - mean(g)) ** 2 for x in g) for g in groups)
    f = (between / (k - 1)) / (within / (n - k))
    return f, f_sf(f, k - 1, n - k), mp.sqrt(within / (n - k))


def welch(groups):
    k = len(groups)
    w = [len(g) / var(g) for g in groups]
    tw = mp.fsum(w)
    mw = mp.fsum(wi * mean(g) for wi, g in zip(w, groups)) / tw
    a = mp.fsum(wi * (mean(g) - mw) ** 2 for wi, g in zip(w, groups)) / (k - 1)
    lam = mp.fsum((1 - wi / tw) ** 2 / (len(g) - 1) for wi, g in zip(w, groups))
    f = a / (1 + 2 * (k - 2) * lam / (k * k - 1))
    df2 = (k * k - 1) / (3 * lam)
    return f, f_sf(f, k - 1, df2)


def levene(groups):
    dev = [[abs(x - mean(g)) for x in g] for g in groups]
    return oneway(dev)[0]


def bartlett(groups):
    k = len(groups)
    n = sum(len(g) for g in groups)
    v = [var(g) for g in groups]
    sp = mp.fsum((len(g) - 1) * vi for g, vi in zip(groups, v)) / (n - k)
    c = 1 + (mp.fsum(mp.mpf(1) / (len(g) - 1) for g in groups) - mp.mpf(1) / (n - k)) / (3 * (k - 1))
    return ((n - k) * mp.log(sp) - mp.fsum((len(g) - 1) * mp.log(vi) for g, vi in zip(groups, v))) / c


def show(x):
    return mp.nstr(x, 17, min_fixed=1, max_fixed=0)


def main():
    for magnitude in ["1"] + MAGNITUDES:
        groups = data_at("1e0") if magnitude == "1" else data_at(magnitude)
        f, p, pooled = oneway(groups)
        wf, wp = welch(groups)
        print(f"// magnitude {magnitude}")
        print(f"f {show(f)} p {show(p)} pooled_sd {show(pooled)}")
        print("sds " + " ".join(show(mp.sqrt(var(g))) for g in groups))
        print(f"welch_f {show(wf)} welch_p {show(wp)} levene_f {show(levene(groups))} bartlett {show(bartlett(groups))}")


if __name__ == "__main__":
    main()
