"""Reference values for the two-level analysis deep in the tail: effects, their t and
p-values from pure error, the centre-point curvature test (difference, sum of squares,
t, p), and Lenth's method (pseudo standard error, t ratios, the individual and
simultaneous t quantiles at fractional df m/3, margins of error), with p from about 0.5
down to 1e-150 and Lenth's quantiles at confidence 0.95 (df 31/3) and 1 - 1e-12 (df 5).

Cell means, effects, pure error, the curvature contrast and Lenth's medians are exact
rational numbers (Python fractions); square roots, t tails and t quantiles are taken in
mpmath 1.3.0 at 50 significant digits (Student t tail by the regularized incomplete beta
I_{df/(df+t^2)}(df/2, 1/2) / 2; quantiles by the secant method on the log of that tail,
started from scipy 1.17.1 `stats.t.isf`).
Formulas: effect = (2 / cells) sum sign x cell mean; SE = sqrt(4 s^2 sum 1/r_c) / cells
with s^2 the pure error (runs at the same coded settings, centre runs included);
curvature d = mean(corners) - mean(centre), w = nF nC / (nF + nC), SS = w d^2,
SE = s / sqrt(w) (Montgomery, Design and Analysis of Experiments, centre points);
Lenth (1989): s0 = 1.5 median|c|, PSE = 1.5 median{|c| < 2.5 s0}, d = m / 3,
ME = t(alpha/2; d) PSE, SME = t((1 - conf^(1/m)) / 2; d) PSE (upper quantiles), with
conf the double nearest the decimal confidence (the value the engine is given; near 1 the
decimal and the double differ in 1 - conf at the fifth digit).

Data: k factors, r replicates of every corner, nc centre runs; responses are integers
    y = scale * sum_w coefficient_w * x_w + noise,  noise = ((7 c + 3 j) mod 5) - 2
for corner c (factor f at +1 when bit f of c is set), replicate j, and
    y = scale * curvature + ((3 i) mod 5) - 2 for centre run i.

Run: python3 two_level_tail_reference.py   (mpmath 1.3.0, scipy 1.17.1; prints Rust rows)
"""
from fractions import Fraction
import mpmath as mp
from scipy import stats

mp.mp.dps = 50

# (k, replicates, centre runs, scale, curvature, {mask: coefficient}, confidence)
CASES = [
    (3, 2, 4, 1, 2, {1: 3, 2: 1, 3: 1}, "0.95"),
    (3, 3, 5, 40, 3, {1: 50, 2: 7, 4: 2, 5: 1}, "0.95"),
    (4, 4, 9, 1000, 7, {1: 90, 2: 30, 4: 5, 8: 2, 3: 1}, "0.95"),
    (5, 1, 0, 100, 0, {1: 40, 2: 25, 4: 9, 16: 1, 3: 5}, "0.95"),
    (4, 1, 0, 100, 0, {1: 40, 2: 25, 4: 9, 8: 1, 3: 5, 12: 2}, "0.999999999999"),
]


def sign(mask, cell):
    return -1 if bin(mask & ~cell).count("1") % 2 else 1


def level(cell, factor):
    return 1 if cell >> factor & 1 else -1


def responses(k, replicates, centre, scale, curvature, coefficients):
    corners = []
    for cell in range(2**k):
        mean = scale * sum(c * sign(mask, cell) for mask, c in coefficients.items())
        corners.append([mean + (7 * cell + 3 * j) % 5 - 2 for j in range(replicates)])
    centres = [scale * curvature + (3 * i) % 5 - 2 for i in range(centre)]
    return corners, centres


def to_mp(x):
    return mp.mpf(x.numerator) / x.denominator


def t_sf(t, df):
    return mp.betainc(df / 2, mp.mpf(1) / 2, 0, df / (df + t * t), regularized=True) / 2


def t_isf(q, df):
    start = mp.mpf(float(stats.t.isf(float(q), float(df))))
    return mp.findroot(lambda x: mp.log(t_sf(x, df)) - mp.log(q), (start, start * (1 + mp.mpf("1e-6"))), solver="secant")


def median(sorted_values):
    n = len(sorted_values)
    return sorted_values[n // 2] if n % 2 else (sorted_values[n // 2 - 1] + sorted_values[n // 2]) / 2


def analyse(k, replicates, centre, scale, curvature, coefficients, confidence):
    corners, centres = responses(k, replicates, centre, scale, curvature, coefficients)
    cells = 2**k
    means = [Fraction(sum(ys), len(ys)) for ys in corners]
    effects = {mask: Fraction(2, cells) * sum(sign(mask, c) * means[c] for c in range(cells)) for mask in range(1, cells)}
    ss = sum((y - means[c]) ** 2 for c in range(cells) for y in corners[c])
    df = cells * (replicates - 1)
    if centres:
        centre_mean = Fraction(sum(centres), len(centres))
        ss += sum((y - centre_mean) ** 2 for y in centres)
        df += len(centres) - 1
    rows = []
    if df > 0:
        variance = ss / df
        se2 = 4 * variance * Fraction(cells, replicates) / cells**2
        se = mp.sqrt(to_mp(se2))
        for mask in range(1, cells):
            t = to_mp(effects[mask]) / se
            rows.append((mask, effects[mask], t, 2 * t_sf(abs(t), mp.mpf(df))))
    else:
        rows = [(mask, effects[mask], None, None) for mask in range(1, cells)]
    curvature_row = None
    if centres:
        n_f, n_c = cells * replicates, len(centres)
        w = Fraction(n_f * n_c, n_f + n_c)
        d = Fraction(sum(sum(ys) for ys in corners), n_f) - centre_mean
        t = to_mp(d) / mp.sqrt(to_mp(variance / w))
        curvature_row = (d, w * d * d, t, 2 * t_sf(abs(t), mp.mpf(df)))
    lenth_row = None
    if df == 0:
        m = cells - 1
        absolute = sorted(abs(effects[mask]) for mask in range(1, cells))
        s0 = Fraction(3, 2) * median(absolute)
        pse = Fraction(3, 2) * median([a for a in absolute if a < Fraction(5, 2) * s0])
        d = mp.mpf(m) / 3
        conf = mp.mpf(float(confidence))  # the double the engine is given
        t_individual = t_isf((1 - conf) / 2, d)
        t_simultaneous = t_isf(-mp.expm1(mp.log(conf) / m) / 2, d)
        lenth_row = (pse, t_individual, t_simultaneous, t_individual * to_mp(pse), t_simultaneous * to_mp(pse))
        rows = [(mask, e, to_mp(e) / to_mp(pse), None) for mask, e, _, _ in rows]
    return df, rows, curvature_row, lenth_row


def show(x):
    if x is None:
        return "f64::NAN"
    if isinstance(x, Fraction):
        x = to_mp(x)
    return mp.nstr(x, 17, min_fixed=1, max_fixed=0)


for case in CASES:
    k, replicates, centre, scale, curvature, coefficients, confidence = case
    df, rows, curvature_row, lenth_row = analyse(*case)
    coefficient_list = ", ".join(f"({mask}, {c})" for mask, c in coefficients.items())
    print(f"    Case {{ factors: {k}, replicates: {replicates}, centre_runs: {centre}, scale: {scale}, curvature: {curvature},")
    print(f"        coefficients: &[{coefficient_list}], confidence: {confidence}, pure_error_df: {df},")
    print("        effects: &[")
    for mask, effect, t, p in rows:
        print(f"            ({mask}, [{show(effect)}, {show(t)}, {show(p)}]),")
    print("        ],")
    print(f"        curvature_figures: {'None' if curvature_row is None else 'Some([' + ', '.join(show(v) for v in curvature_row) + '])'},")
    print(f"        lenth_figures: {'None' if lenth_row is None else 'Some([' + ', '.join(show(v) for v in lenth_row) + '])'},")
    print("    },")
