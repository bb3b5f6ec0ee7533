"""Chebyshev coefficients for the complementary error function used in dunnett.rs.

For x >= 0 write t = 2 / (2 + x) in (0, 1] and
    y(t) = ln(erfc(x) / t) + x^2,
a smooth function of t (erfc(x) ~ exp(-x^2) / (x sqrt(pi)) as x -> oo). y is expanded in
Chebyshev polynomials of s = 2 t - 1 by interpolation at Chebyshev points with mpmath 1.3.0
at 40 digits. The Chebyshev series is then rewritten as a power series in s.
Usage: python3 erfc_coefficients.py  (prints the Rust constant)
"""
import mpmath as mp

mp.mp.dps = 40
N = 60


def y_of_s(s):
    t = (s + 1) / 2
    if t == 0:
        return -mp.log(2 * mp.sqrt(mp.pi))
    x = 2 / t - 2
    return mp.log(mp.erfc(x) / t) + x * x


nodes = [mp.cos(mp.pi * (k + mp.mpf(1) / 2) / N) for k in range(N)]
values = [y_of_s(s) for s in nodes]
coefficients = []
for j in range(N):
    total = mp.fsum(values[k] * mp.cos(mp.pi * j * (k + mp.mpf(1) / 2) / N) for k in range(N))
    coefficients.append(2 * total / N)
keep = [c for c in coefficients]
# drop trailing terms below 1e-18
while abs(keep[-1]) < 1e-18:
    keep.pop()
keep[0] /= 2
# Chebyshev series -> power series in s (well conditioned here: all power coefficients are
# below 0.7 in magnitude and |s| <= 1), at full working precision.
chebyshev_power = [[mp.mpf(1)], [mp.mpf(0), mp.mpf(1)]]
for j in range(2, len(keep)):
    twice = [mp.mpf(0)] + [2 * v for v in chebyshev_power[j - 1]]
    older = chebyshev_power[j - 2] + [mp.mpf(0)] * (len(twice) - len(chebyshev_power[j - 2]))
    chebyshev_power.append([a - b for a, b in zip(twice, older)])
power = [mp.mpf(0)] * len(keep)
for j, cj in enumerate(keep):
    for k, v in enumerate(chebyshev_power[j]):
        power[k] += cj * v
while len(power) % 4:
    power.append(mp.mpf(0))
print('const ERFC_POWER_SERIES: [f64; %d] = [' % len(power))
for c in power:
    print('    %r,' % float(c))
print('];')
