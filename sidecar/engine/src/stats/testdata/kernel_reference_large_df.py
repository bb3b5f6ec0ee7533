"""Upper tails for the cases `kernel_reference.py` could not finish (mpmath 1.3.0
betainc raised NoConvergence for the F and t tails at df 1e6 and beyond): F with 19
numerator df at d2 = 1e6 near 1e-100, Student t at df 1e6, chi-square, F and t at df
1e7, and the normal, each near 0.5, 1e-10 and 1e-100 (the normal also near 1e-300).

The regularized incomplete beta comes from its continued fraction (DLMF 8.17.22, in
the modified Lentz form) evaluated in mpmath 1.3.0 at 40 significant digits, with the
prefactor x^a (1 - x)^b / (a B(a, b)) from mpmath's log-gamma; where x is beyond
(a + 1) / (a + b + 2) the symmetry I_x(a, b) = 1 - I_{1-x}(b, a) is used. At the points
where mpmath's own betainc converges (df 1000 and 1e6, tail 1e-10) the fraction agrees
with it to every one of 20 printed digits. Chi-square and the normal are mpmath's
gammainc and ncdf, as in `kernel_reference.py`, whose bisection `solve` picks each point
(an exact double). Usage: python3 kernel_reference_large_df.py > kernel_reference_large_df.txt
"""
import mpmath as mp

from kernel_reference import chi2_sf, normal_sf, solve

mp.mp.dps = 40


def beta_fraction(a, b, x):
    """I_x(a, b) by the continued fraction, for x below (a + 1) / (a + b + 2)."""
    tiny = mp.mpf(10) ** (-3 * mp.mp.dps)
    eps = mp.mpf(10) ** (2 - mp.mp.dps)

    def guard(v):
        return tiny if abs(v) < tiny else v

    c = mp.mpf(1)
    d = 1 / guard(1 - (a + b) * x / (a + 1))
    h = d
    m = 1
    while True:
        for numerator in (
            m * (b - m) * x / ((a + 2 * m - 1) * (a + 2 * m)),
            -(a + m) * (a + b + m) * x / ((a + 2 * m) * (a + 2 * m + 1)),
        ):
            d = 1 / guard(1 + numerator * d)
            c = guard(1 + numerator / c)
            delta = d * c
            h *= delta
        if abs(delta - 1) < eps:
            break
        m += 1
        if m > 10**7:
            raise RuntimeError("continued fraction did not converge")
    log_front = a * mp.log(x) + b * mp.log1p(-x) - mp.log(a) - (mp.loggamma(a) + mp.loggamma(b) - mp.loggamma(a + b))
    return mp.exp(log_front) * h


def beta_reg(a, b, x):
    a, b, x = mp.mpf(a), mp.mpf(b), mp.mpf(x)
    if x < (a + 1) / (a + b + 2):
        return beta_fraction(a, b, x)
    return 1 - beta_fraction(b, a, 1 - x)


def f_sf(f, d1, d2):
    return beta_reg(d2 / 2, mp.mpf(d1) / 2, d2 / (d2 + d1 * f))


def t_sf(t, df):
    return beta_reg(df / 2, mp.mpf(1) / 2, df / (df + t * t)) / 2


def main():
    print('# Upper tails by kernel_reference_large_df.py (mpmath 1.3.0, 40 digits; incomplete beta by')
    print('# its continued fraction): kind, point (an exact double), df, tail.')
    for df, targets in [(1000000, []), (10000000, ['0.5', '1e-10', '1e-100'])]:
        nu = mp.mpf(df)
        for target in targets:
            p = mp.mpf(target)
            x = solve(lambda x: chi2_sf(x, nu), p, '1e-3', '1e9')
            print('chi2', mp.nstr(x, 40), df, mp.nstr(chi2_sf(x, nu), 20), flush=True)
        for target in targets or ['1e-100']:
            p = mp.mpf(target)
            fx = solve(lambda f: f_sf(f, 19, nu), p, '1e-3', '1e60')
            print('f19', mp.nstr(fx, 40), df, mp.nstr(f_sf(fx, 19, nu), 20), flush=True)
        for target in ['1e-10', '1e-100']:
            p = mp.mpf(target)
            tx = solve(lambda t: t_sf(t, nu), p, '1e-6', '1e60')
            print('t', mp.nstr(tx, 40), df, mp.nstr(t_sf(tx, nu), 20), flush=True)
    for target in ['0.5', '1e-10', '1e-100', '1e-300']:
        z = solve(normal_sf, mp.mpf(target), '1e-6', '100')
        print('normal', mp.nstr(z, 40), 'inf', mp.nstr(normal_sf(z), 20), flush=True)


if __name__ == '__main__':
    main()
