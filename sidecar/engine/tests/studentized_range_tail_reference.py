"""Reference upper tails of the studentized range (the p-values of Tukey-Kramer, and of
Games-Howell at fractional df) far into the tail, from about 9e-3 down to 1e-175.

The tail is integrated directly, never as one minus the distribution function:
  range of k standard normals:  P(R > x) = k int phi(z) [Phi(z)^(k-1) - (Phi(z) - Phi(z - x))^(k-1)] dz
  with the bracket written as Phi(z - x) sum_{i=0}^{k-2} Phi(z)^i (Phi(z) - Phi(z - x))^(k-2-i)
  (a sum of positive terms, so no digits cancel; Phi(z) - Phi(z - x) from the upper tails
  when z > x);
  studentized range:            P(Q > q) = int_0^inf g_nu(s) P(R > q s) ds,
  g_nu the density of s = chi_nu / sqrt(nu) (Copenhaver & Holland 1988).
Both integrals by 20-point Gauss-Legendre rules on panels: the inner one over z in
[min(-10, x/2 - 10), max(10, x/2 + 10)] in panels of width 1 (the integrand peaks near
x/2 in the far tail), the outer one over s within 20 widths of the peak of
g_nu(s) exp(-q^2 s^2 / 4), s* = sqrt((nu - 1) / (nu + q^2 / 2)), width
1 / sqrt(2 (nu + q^2 / 2)), in 24 panels. mpmath 1.3.0 at 25 significant digits.
Checks: with k = 2 the inner integral gives erfc(x / 2) to all 20 printed digits at
x = 20 and 40; at (q 4, k 3, df 10) the result agrees with mpmath's own tanh-sinh
quadrature to 20 digits and with scipy 1.17.1 studentized_range.sf to 14.

Run: python3 studentized_range_tail_reference.py   (prints the Rust table rows; the
finite-df cases take a minute or two each)
"""
import mpmath as mp

mp.mp.dps = 25
NODES, WEIGHTS = mp.gauss_quadrature(20, "legendre")

# (q, k, df); df None is infinite
CASES = [
    (9, 3, None),
    (20, 3, None),
    (28, 10, None),
    (40, 5, None),
    (12, 3, 20),
    (30, 5, 120),
    (25, 10, 1000),
    (8, 4, 5),
    (30, 3, 10000),
    (18, 6, 37.5),
    (60, 3, 40),
]


def gauss(f, a, b, n_panels):
    total = mp.mpf(0)
    width = (b - a) / n_panels
    for i in range(n_panels):
        half = width / 2
        mid = a + i * width + half
        total += half * mp.fsum(w * f(mid + half * x) for x, w in zip(NODES, WEIGHTS))
    return total


def range_sf(x, k):
    x = mp.mpf(x)

    def f(z):
        a = mp.ncdf(z)
        b = mp.ncdf(z - x)
        inside = (mp.ncdf(x - z) - mp.ncdf(-z)) if z > x else a - b
        return mp.npdf(z) * b * mp.fsum(a**i * inside ** (k - 2 - i) for i in range(k - 1))

    low = mp.floor(min(mp.mpf(-10), x / 2 - 10))
    high = mp.ceil(max(mp.mpf(10), x / 2 + 10))
    return k * gauss(f, low, high, int(high - low))


def studentized_range_sf(q, k, nu):
    q = mp.mpf(q)
    if nu is None:
        return range_sf(q, k)
    nu = mp.mpf(nu)
    log_c = (nu / 2) * mp.log(nu) - (nu / 2 - 1) * mp.log(2) - mp.loggamma(nu / 2)

    def g(s):
        return mp.exp(log_c + (nu - 1) * mp.log(s) - nu * s * s / 2) * range_sf(q * s, k)

    peak = mp.sqrt((nu - 1) / (nu + q * q / 2))
    width = 1 / mp.sqrt(2 * (nu + q * q / 2))
    return gauss(g, max(mp.mpf(0), peak - 20 * width), peak + 20 * width, 24)


for q, k, nu in CASES:
    df = "f64::INFINITY" if nu is None else f"{float(nu)!r}"
    print(f"    ({float(q)!r}, {k}, {df}, {mp.nstr(studentized_range_sf(q, k, nu), 17, min_fixed=1, max_fixed=0)}),", flush=True)
