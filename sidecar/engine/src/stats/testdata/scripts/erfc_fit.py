"""Polynomial fit used for the complementary error function (mpmath 1.3.0).

With t = 2 / (2 + x) and s = 2 t - 1, x >= 0, the function
F(s) = ln(erfc(x) / t) + x^2 is smooth on [-1, 1]; it is fitted by Chebyshev
interpolation (mpmath.chebyfit) and printed as monomial coefficients in s,
highest degree first, for Horner evaluation.
"""
import sys
import mpmath as mp

mp.mp.dps = 40
degree = int(sys.argv[1]) if len(sys.argv) > 1 else 28


def f(s):
    t = (s + 1) / 2
    x = 2 / t - 2
    return mp.log(mp.erfc(x) / t) + x * x


coefficients, error = mp.chebyfit(f, [-1, 1], degree + 1, error=True)
print("# max error", mp.nstr(error, 5), "sum |c|", mp.nstr(sum(abs(c) for c in coefficients), 5))
for c in coefficients:
    print(mp.nstr(c, 20, min_fixed=-1, max_fixed=1) if False else mp.nstr(c, 20))
