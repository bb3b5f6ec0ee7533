"""Reference values for the normality checks deep in the tail (Shapiro-Wilk and
Anderson-Darling p from about 0.5 down to 1e-190).

Both p-values are published approximations, so the reference is each published formula
itself, evaluated in mpmath 1.3.0 at 50 significant digits on the exact data (integers,
so every value is an exact double):
- Shapiro-Wilk: Royston (1992) coefficients a_i = m_i / sqrt(eps) with
  m_i = Phi^-1((i - 3/8) / (n + 1/4)) and his polynomials in u = 1/sqrt(n) for the two
  extreme coefficients; W = (sum a_i x_(i))^2 / sum (x_i - mean)^2; Royston (1995)
  normalising transformation: for 4 <= n <= 11, z = (-ln(gamma - ln(1 - W)) - mu) / sigma,
  for n >= 12, z = (ln(1 - W) - mu) / sigma, with his polynomials in n or ln n; p = Q(z).
- Anderson-Darling (mean and SD estimated): A^2 = -n - (1/n) sum (2i - 1)
  [ln Phi(z_(i)) + ln Phi(-z_(n+1-i))], A*^2 = A^2 (1 + 0.75/n + 2.25/n^2), and the
  piecewise p formula of D'Agostino & Stephens (1986), Table 4.9 (the last branch held
  at its vertex, A*^2 = 5.709 / 0.0372, beyond which it would rise again).
The polynomial coefficients are the published decimals.

Data: "power n k" is x_i = i^k for i = 1..n; "outlier n b" is 1, 2, ..., n - 1 and b.

Run: python3 normality_tail_reference.py   (mpmath 1.3.0; prints the Rust table rows)
"""
import mpmath as mp

mp.mp.dps = 50


def poly(coefficients, x):
    total = mp.mpf(0)
    for c in reversed(coefficients):
        total = total * x + mp.mpf(c)
    return total


def data(kind, n, k):
    if kind == "power":
        return [mp.mpf(i) ** k for i in range(1, n + 1)]
    return [mp.mpf(i) for i in range(1, n)] + [mp.mpf(k)]


def shapiro_wilk(x):
    x = sorted(x)
    n = len(x)
    half = n // 2
    m = [-mp.sqrt(2) * mp.erfinv(2 * ((j + 1 - mp.mpf(3) / 8) / (n + mp.mpf(1) / 4)) - 1) for j in range(half)]
    msq = 2 * mp.fsum(v * v for v in m)
    u = 1 / mp.sqrt(n)
    root = mp.sqrt(msq)
    largest = ["0", "0.221157", "-0.147981", "-2.071190", "4.434685", "-2.706056"]
    second = ["0", "0.042981", "-0.293762", "-1.752461", "5.682633", "-3.582633"]
    a1 = m[0] / root + poly(largest, u)
    if n > 5:
        a2 = m[1] / root + poly(second, u)
        eps = (msq - 2 * m[0] ** 2 - 2 * m[1] ** 2) / (1 - 2 * a1**2 - 2 * a2**2)
        a = [a1, a2] + [v / mp.sqrt(eps) for v in m[2:]]
    else:
        eps = (msq - 2 * m[0] ** 2) / (1 - 2 * a1**2)
        a = [a1] + [v / mp.sqrt(eps) for v in m[1:]]
    numerator = mp.fsum(a[j] * (x[n - 1 - j] - x[j]) for j in range(half))
    mean = mp.fsum(x) / n
    ssq = mp.fsum((v - mean) ** 2 for v in x)
    w = numerator**2 / ssq
    if n <= 11:
        gamma = poly(["-2.273", "0.459"], n)
        mu = poly(["0.5440", "-0.39978", "0.025054", "-0.0006714"], n)
        sigma = mp.exp(poly(["1.3822", "-0.77857", "0.062767", "-0.0020322"], n))
        z = (-mp.log(gamma - mp.log(1 - w)) - mu) / sigma
    else:
        ln_n = mp.log(n)
        mu = poly(["-1.5861", "-0.31082", "-0.083751", "0.0038915"], ln_n)
        sigma = mp.exp(poly(["-0.4803", "-0.082676", "0.0030302"], ln_n))
        z = (mp.log(1 - w) - mu) / sigma
    return w, mp.ncdf(-z)


def anderson_darling(x):
    x = sorted(x)
    n = len(x)
    mean = mp.fsum(x) / n
    sd = mp.sqrt(mp.fsum((v - mean) ** 2 for v in x) / (n - 1))
    z = [(v - mean) / sd for v in x]
    s = mp.fsum((2 * i + 1) * (mp.log(mp.ncdf(z[i])) + mp.log(mp.ncdf(-z[n - 1 - i]))) for i in range(n))
    a2 = -n - s / n
    a = a2 * (1 + mp.mpf("0.75") / n + mp.mpf("2.25") / n**2)
    c = mp.mpf
    if a < c("0.2"):
        p = -mp.expm1(c("-13.436") + c("101.14") * a - c("223.73") * a**2)
    elif a < c("0.34"):
        p = -mp.expm1(c("-8.318") + c("42.796") * a - c("59.938") * a**2)
    elif a < c("0.6"):
        p = mp.exp(c("0.9177") - c("4.279") * a - c("1.38") * a**2)
    else:
        b = min(a, c("5.709") / (2 * c("0.0186")))
        p = mp.exp(c("1.2937") - c("5.709") * b + c("0.0186") * b**2)
    return a2, p


CASES = [
    ("power", 8, 1),
    ("power", 10, 3),
    ("power", 20, 1),
    ("power", 30, 2),
    ("power", 100, 4),
    ("power", 300, 3),
    ("power", 1000, 4),
    ("power", 5000, 4),
    ("outlier", 30, 200),
    ("outlier", 200, 10**6),
    ("outlier", 5000, 10**12),
    ("power", 12, 1),
    ("power", 15, 2),
    ("outlier", 100, 10**4),
]


def show(x):
    return mp.nstr(x, 17, min_fixed=1, max_fixed=0)


def main():
    for kind, n, k in CASES:
        x = data(kind, n, k)
        w, p_w = shapiro_wilk(x)
        a2, p_a = anderson_darling(x)
        print(f'    ("{kind}", {n}, {k}, [{show(w)}, {show(p_w)}, {show(a2)}, {show(p_a)}]),', flush=True)


if __name__ == "__main__":
    main()
