"""Reference values for the blocked one-way analysis of one invented trial at extreme
magnitudes and at a large offset.

The trial: four conditions run in four blocks, unbalanced (one empty cell, some cells
with two runs), about 1 % spread. It is written at the decimal magnitudes 1e-300,
1e-170, 1e160 and 1e300 (each value the double nearest the decimal; mpmath works on
those doubles exactly, as mpf of a float is exact) and at an offset of 1e9 (the value
1e9 + x, taken as the decimal it is typed as, which is what the engine reads from a
workbook). mpmath 1.3.0 at 50 significant digits fits the additive model
value = condition + block + error by least squares (normal equations solved by LU in
50-digit arithmetic) and prints, for each case:

- F for the conditions adjusted for blocks (sequential sums of squares: blocks first)
  and its p-value (regularized incomplete beta);
- the pooled SD (root of the error mean square);
- each condition's least-squares mean (blocks weighted equally);
- the SE of each difference of least-squares means (pairs in the order 1-2, 1-3, 1-4,
  2-3, 2-4, 3-4);
- the sums of squares (blocks, conditions, error) at scale 1 and at the offset only.

Run: python3 blocked_magnitude_reference.py   (mpmath 1.3.0)
"""
import mpmath as mp

mp.mp.dps = 50

# (condition, block, value in thousandths)
TRIAL = [
    (0, 0, 1012), (0, 0, 1006), (0, 1, 1021), (0, 2, 998), (0, 3, 1009),
    (1, 0, 1031), (1, 1, 1044), (1, 1, 1039), (1, 2, 1018),
    (2, 0, 978), (2, 1, 995), (2, 2, 969), (2, 2, 974), (2, 3, 985),
    (3, 0, 1052), (3, 1, 1060), (3, 2, 1041), (3, 3, 1055), (3, 3, 1049),
]
K, B = 4, 4


def text(thousandths, exponent):
    return f"{thousandths // 1000}.{thousandths % 1000:03d}e{exponent}"


def values_at(case):
    if case == "offset 1e9":
        return [mp.mpf(10) ** 9 + mp.mpf(t) / 1000 for _, _, t in TRIAL]
    return [mp.mpf(float(text(t, case))) for _, _, t in TRIAL]


def design(columns):
    rows = []
    for condition, block, _ in TRIAL:
        row = [mp.mpf(1)]
        if "conditions" in columns:
            row += [mp.mpf(1 if condition == c else 0) for c in range(1, K)]
        if "blocks" in columns:
            row += [mp.mpf(1 if block == b else 0) for b in range(1, B)]
        rows.append(row)
    return mp.matrix(rows)


def least_squares(x, y):
    xtx = x.T * x
    theta = mp.lu_solve(xtx, x.T * y)
    residual = y - x * theta
    rss = mp.fsum(r * r for r in residual)
    return theta, rss, mp.inverse(xtx)


def f_sf(f, d1, d2):
    # P(F > f) = I_{d2/(d2+d1 f)}(d2/2, d1/2)
    return mp.betainc(mp.mpf(d2) / 2, mp.mpf(d1) / 2, 0, d2 / (d2 + d1 * f), regularized=True)


def analyse(values):
    y = mp.matrix(values)
    n = len(values)
    _, rss_mean, _ = least_squares(design(()), y)
    _, rss_blocks, _ = least_squares(design(("blocks",)), y)
    theta, rss_full, inverse = least_squares(design(("conditions", "blocks")), y)
    df_error = n - K - (B - 1)
    ss_blocks = rss_mean - rss_blocks
    ss_conditions = rss_blocks - rss_full
    ms_error = rss_full / df_error
    f = (ss_conditions / (K - 1)) / ms_error
    p = f_sf(f, K - 1, df_error)
    block_average = mp.fsum(theta[K - 1 + b] for b in range(1, B)) / B
    means = [theta[0] + (theta[c] if c > 0 else 0) + block_average for c in range(K)]
    ses = []
    for first in range(K):
        for second in range(first + 1, K):
            contrast = mp.matrix(1 + (K - 1) + (B - 1), 1)
            if first > 0:
                contrast[first] = 1
            if second > 0:
                contrast[second] = -1
            ses.append(mp.sqrt(ms_error * (contrast.T * inverse * contrast)[0]))
    return f, p, mp.sqrt(ms_error), means, ses, (ss_blocks, ss_conditions, rss_full)


def show(x):
    return mp.nstr(x, 17, min_fixed=1, max_fixed=0)


for case in ["0", "-300", "-170", "160", "300", "offset 1e9"]:
    f, p, pooled, means, ses, sums = analyse(values_at(case))
    print(f"// {case}")
    print(f"f {show(f)} p {show(p)} pooled_sd {show(pooled)}")
    print("means " + " ".join(show(m) for m in means))
    print("ses " + " ".join(show(s) for s in ses))
    if case in ("0", "offset 1e9"):
        print("ss " + " ".join(show(s) for s in sums))
