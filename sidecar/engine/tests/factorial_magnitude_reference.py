"""Reference values for `factorial_magnitude.rs`: three invented factorial trials (a
replicated 2^3, a replicated 3x2 and a 2^(4-1) screen with three centre points), each
written at scale factors 1e-300, 1e-150, 1, 1e150 and 1e300 (the base values with the
exponent appended, e.g. 1.012e300) and at offsets 1e6 and 1e9 (the offset added to the
typed decimal, e.g. 1000000001.012).

Exact rational arithmetic (Python fractions): on the exact doubles of the data for the
scaled trials, on the typed decimals for the offset trials (what the engine reads in both
cases). Sums of squares, F ratios, effects, t ratios, means; upper-tail probabilities
from the regularised incomplete beta function of mpmath 1.3.0 at 50 digits:
P(F > f) = I_{d2/(d2 + d1 f)}(d2/2, d1/2), P(|T| > t) = I_{df/(df + t^2)}(df/2, 1/2).

Run: python3 factorial_magnitude_reference.py > factorial_magnitude/reference_values.rs
"""
from fractions import Fraction
from itertools import product

import mpmath

mpmath.mp.dps = 50

# 2^3 in standard order (A fastest), two replicates: (A, B, C) coded -1/+1.
TWO_CUBED = [
    ["1.012", "1.031", "0.994", "1.044", "1.003", "1.026", "0.978", "1.021"],
    ["1.009", "1.035", "0.991", "1.047", "1.006", "1.022", "0.981", "1.018"],
]
# 3x2, three replicates: P (3 levels) by Q (2 levels).
THREE_BY_TWO = [
    [["1.021", "1.014", "1.027"], ["0.987", "0.995", "0.979"]],
    [["1.048", "1.041", "1.036"], ["1.002", "1.011", "0.996"]],
    [["0.969", "0.981", "0.974"], ["0.958", "0.951", "0.966"]],
]
# 2^(4-1), D = ABC, standard order of A, B, C; then three centre points.
SCREEN = ["1.004", "1.037", "0.989", "1.052", "1.011", "1.029", "0.983", "1.046"]
SCREEN_CENTRE = ["1.031", "1.024", "1.036"]

SCALES = ["-300", "-150", "0", "150", "300"]
OFFSETS = ["1000000", "1000000000"]


def variants():
    for exponent in SCALES:
        name = f"scale 1e{exponent}"
        yield name, lambda text, e=exponent: Fraction(float(text if e == "0" else f"{text}e{e}"))
    for offset in OFFSETS:
        yield f"offset {offset}", lambda text, o=offset: Fraction(o) + Fraction(text)


def f_sf(f, d1, d2):
    if f == 0:
        return mpmath.mpf(1)
    f = mpmath.mpf(f.numerator) / f.denominator
    return mpmath.betainc(mpmath.mpf(d2) / 2, mpmath.mpf(d1) / 2, 0, d2 / (d2 + d1 * f), regularized=True)


def t_two_sided(t2, df):
    """P(|T| > t) from t^2 (an exact fraction)."""
    t2 = mpmath.mpf(t2.numerator) / t2.denominator
    return mpmath.betainc(mpmath.mpf(df) / 2, mpmath.mpf(1) / 2, 0, df / (df + t2), regularized=True)


def sqrt(x):
    return mpmath.sqrt(mpmath.mpf(x.numerator) / x.denominator)


def mean(values):
    return sum(values, Fraction(0)) / len(values)


def centred_ss(values):
    m = mean(values)
    return sum(((v - m) ** 2 for v in values), Fraction(0))


OUT = []


LARGEST = Fraction(2) ** 1024 - Fraction(2) ** 971
SMALLEST_NORMAL = Fraction(2) ** -1022


def emit(trial, variant, figure, value):
    """A figure beyond the largest double is expected infinite, a positive one below the
    smallest normal double NaN (left empty); the exact value is kept in a comment."""
    exact = value if isinstance(value, Fraction) else None
    if isinstance(value, Fraction):
        value = mpmath.mpf(value.numerator) / value.denominator
    text = mpmath.nstr(value, 17, min_fixed=1, max_fixed=0)
    if exact is not None and abs(exact) >= LARGEST:
        text = f"f64::INFINITY /* {mpmath.nstr(value, 6)}, beyond the largest double */"
    elif exact is not None and exact != 0 and abs(exact) < SMALLEST_NORMAL:
        text = f"f64::NAN /* {mpmath.nstr(value, 6)}, below the smallest normal double */"
    OUT.append((trial, variant, figure, text))


WORDS = [(1, "A"), (2, "B"), (3, "A:B"), (4, "C"), (5, "A:C"), (6, "B:C"), (7, "A:B:C")]


def sign(run, word):
    s = 1
    for bit in range(3):
        if word >> bit & 1 and not run >> bit & 1:
            s = -s
    return s


def two_cubed(variant, read):
    cells = [[read(TWO_CUBED[r][c]) for r in range(2)] for c in range(8)]
    means = [mean(cell) for cell in cells]
    within = sum((centred_ss(cell) for cell in cells), Fraction(0))
    ms_error = within / 8
    emit("2^3", variant, "residual SS", within)
    emit("2^3", variant, "grand mean", mean(means))
    for word, name in WORDS:
        effect = sum((sign(c, word) * means[c] for c in range(8)), Fraction(0)) / 4
        ss = 16 * effect * effect / 4
        f = ss / ms_error
        emit("2^3", variant, f"{name} effect", effect)
        emit("2^3", variant, f"{name} SS", ss)
        emit("2^3", variant, f"{name} F", f)
        emit("2^3", variant, f"{name} p", f_sf(f, 1, 8))
        se = sqrt(ms_error / 4)
        emit("2^3", variant, f"{name} t", (mpmath.mpf(effect.numerator) / effect.denominator) / se)
        emit("2^3", variant, f"{name} t p", t_two_sided(f, 8))


def three_by_two(variant, read):
    cells = [[[read(t) for t in cell] for cell in row] for row in THREE_BY_TWO]
    cm = [[mean(cell) for cell in row] for row in cells]
    r = 3
    grand = mean([m for row in cm for m in row])
    p_means = [mean(row) for row in cm]
    q_means = [mean([cm[i][j] for i in range(3)]) for j in range(2)]
    ss_p = r * 2 * sum(((m - grand) ** 2 for m in p_means), Fraction(0))
    ss_q = r * 3 * sum(((m - grand) ** 2 for m in q_means), Fraction(0))
    ss_pq = r * sum(
        ((cm[i][j] - p_means[i] - q_means[j] + grand) ** 2 for i in range(3) for j in range(2)), Fraction(0)
    )
    within = sum((centred_ss(cell) for row in cells for cell in row), Fraction(0))
    ms_error = within / 12
    emit("3x2", variant, "residual SS", within)
    for name, ss, df in [("P", ss_p, 2), ("Q", ss_q, 1), ("P:Q", ss_pq, 2)]:
        f = (ss / df) / ms_error
        emit("3x2", variant, f"{name} SS", ss)
        emit("3x2", variant, f"{name} F", f)
        emit("3x2", variant, f"{name} p", f_sf(f, df, 12))
    for level, m in enumerate(p_means):
        emit("3x2", variant, f"P mean {level}", m)


SCREEN_WORDS = [(1, "A"), (2, "B"), (3, "A:B"), (4, "C"), (5, "A:C"), (6, "B:C"), (7, "A:B:C")]
# Leaders of the chains of D = ABC: ABC reads as D, AB = CD, AC = BD, BC = AD.
SCREEN_LEADER = {"A": "A", "B": "B", "A:B": "A:B", "C": "C", "A:C": "A:C", "B:C": "A:D", "A:B:C": "D"}


def screen(variant, read):
    corners = [read(t) for t in SCREEN]
    centre = [read(t) for t in SCREEN_CENTRE]
    s2 = centred_ss(centre) / 2
    se = sqrt(s2 / 2)
    emit("2^(4-1)", variant, "grand mean", mean(corners))
    for word, name in SCREEN_WORDS:
        effect = sum((sign(c, word) * corners[c] for c in range(8)), Fraction(0)) / 4
        t2 = effect * effect / (s2 / 2)
        leader = SCREEN_LEADER[name]
        emit("2^(4-1)", variant, f"{leader} effect", effect)
        emit("2^(4-1)", variant, f"{leader} t", (mpmath.mpf(effect.numerator) / effect.denominator) / se)
        emit("2^(4-1)", variant, f"{leader} p", t_two_sided(t2, 2))
    d = mean(corners) - mean(centre)
    w = Fraction(8 * 3, 11)
    t2 = d * d * w / s2
    emit("2^(4-1)", variant, "curvature difference", d)
    emit("2^(4-1)", variant, "curvature t", (mpmath.mpf(d.numerator) / d.denominator) / sqrt(s2 / w))
    emit("2^(4-1)", variant, "curvature p", t_two_sided(t2, 2))


for variant, read in variants():
    two_cubed(variant, read)
    three_by_two(variant, read)
    screen(variant, read)

print("// Generated by factorial_magnitude_reference.py (Python fractions; mpmath 1.3.0,")
print("// 50 digits): (trial, variant, figure, reference value).")
print("pub const REFERENCE: &[(&str, &str, &str, f64)] = &[")
for trial, variant, figure, value in OUT:
    print(f'    ("{trial}", "{variant}", "{figure}", {value}),')
print("];")
