"""Reference values for `surface_offset.rs`: the second-order model of an invented central
composite trial (two factors, four corner runs, four axial runs at 1.5, five centre runs)
typed at offsets of 1e6 and 1e9, e.g. 1000000002.297.

Exact rational arithmetic (Python fractions) on the typed decimals: the least-squares
coefficients from the normal equations solved exactly, the sequential sums of squares of
the linear, interaction and square terms (differences of exact residual sums of squares),
the residual, pure error and lack-of-fit sums of squares, and the F ratios of the terms
against the residual mean square. Python 3; no rounding anywhere but the printing.

Run: python3 surface_offset_reference.py
"""
from fractions import Fraction

# Coded settings (x1, x2) and the response in thousandths above the offset.
RUNS = [
    ((-1, -1), 1523), ((1, -1), 2416), ((-1, 1), 1284), ((1, 1), 2617),
    (("-3/2", 0), 1158), (("3/2", 0), 2371), ((0, "-3/2"), 2297), ((0, "3/2"), 1779),
    ((0, 0), 2318), ((0, 0), 2296), ((0, 0), 2331), ((0, 0), 2305), ((0, 0), 2322),
]
OFFSETS = ["1000000", "1000000000"]


def row(x1, x2):
    return [Fraction(1), x1, x2, x1 * x2, x1 * x1, x2 * x2]


def solve(a, b):
    """Gauss-Jordan elimination in exact fractions."""
    n = len(a)
    m = [list(r) + [v] for r, v in zip(a, b)]
    for c in range(n):
        pivot = next(r for r in range(c, n) if m[r][c] != 0)
        m[c], m[pivot] = m[pivot], m[c]
        for r in range(n):
            if r != c and m[r][c] != 0:
                f = m[r][c] / m[c][c]
                m[r] = [x - f * y for x, y in zip(m[r], m[c])]
    return [m[i][n] / m[i][i] for i in range(n)]


def rss(columns, xs, ys):
    x = [[r[c] for c in columns] for r in xs]
    xtx = [[sum(r[i] * r[j] for r in x) for j in range(len(columns))] for i in range(len(columns))]
    xty = [sum(r[i] * y for r, y in zip(x, ys)) for i in range(len(columns))]
    beta = solve(xtx, xty)
    residual = sum((y - sum(b * v for b, v in zip(beta, r))) ** 2 for r, y in zip(x, ys))
    return beta, residual


def show(q):
    # 17 significant digits of an exact fraction.
    from decimal import Decimal, getcontext
    getcontext().prec = 17
    return format(Decimal(q.numerator) / Decimal(q.denominator), ".16e")


def main():
    xs = [row(Fraction(a), Fraction(b)) for (a, b), _ in RUNS]
    for offset in OFFSETS:
        ys = [Fraction(offset) + Fraction(t, 1000) for _, t in RUNS]
        beta, residual = rss(range(6), xs, ys)
        _, after_intercept = rss([0], xs, ys)
        _, after_linear = rss([0, 1, 2], xs, ys)
        _, after_interaction = rss([0, 1, 2, 3], xs, ys)
        n, p = len(ys), 6
        residual_ms = residual / (n - p)
        ss = {
            "Linear": (after_intercept - after_linear, 2),
            "Interaction": (after_linear - after_interaction, 1),
            "Square": (after_interaction - residual, 2),
        }
        centre = [y for ((a, b), _), y in zip(RUNS, ys) if a == 0 and b == 0]
        centre_mean = sum(centre) / len(centre)
        pure = sum((y - centre_mean) ** 2 for y in centre)
        print(f"offset {offset}")
        print("coefficients " + " ".join(show(b) for b in beta))
        for name, (value, df) in ss.items():
            print(f"{name}: SS {show(value)} F {show(value / df / residual_ms)}")
        print(f"Residual: SS {show(residual)}; Pure error: SS {show(pure)}; Lack of fit: SS {show(residual - pure)}")


if __name__ == "__main__":
    main()
