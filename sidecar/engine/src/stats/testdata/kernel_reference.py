"""Reference upper tails for the engine's one kernel (src/stats/dist.rs), as the tests
call it for every reported p-value: F (ANOVA, Welch, Levene, Brown-Forsythe, k-way F),
chi-square (Bartlett, Kruskal-Wallis), normal (Dunn, normality tests) and Student t
(two-level effects, curvature). For each df the point is solved so that the upper tail
is about 0.5, 1e-10 or 1e-100 (points rounded to 24 bits, exact doubles), then the
tail at the point is printed to 20 digits. Usage: python3 kernel_reference.py > kernel_reference.txt
(mpmath 1.3.0)."""
import mpmath as mp

mp.mp.dps = 40


def f_sf(f, d1, d2):
    return mp.betainc(d2 / 2, d1 / 2, 0, d2 / (d2 + d1 * f), regularized=True)


def chi2_sf(x, df):
    return mp.gammainc(df / 2, x / 2, mp.inf, regularized=True)


def t_sf(t, df):
    return mp.betainc(df / 2, mp.mpf(1) / 2, 0, df / (df + t * t), regularized=True) / 2


def normal_sf(z):
    return mp.ncdf(-z)


def solve(tail, target, low, high):
    """Point x in [low, high] with tail(x) = target (tail decreasing), by bisection on
    log x to 7 digits, then rounded to 24 significant bits, so that the point is exact
    in binary (the tail is then evaluated at exactly the double the test passes)."""
    lt = mp.log(target)
    low, high = mp.mpf(low), mp.mpf(high)
    while high / low > 1 + mp.mpf('1e-7'):
        middle = mp.sqrt(low * high)
        if mp.log(tail(middle)) > lt:
            low = middle
        else:
            high = middle
    bits = 24 - int(mp.floor(mp.log(low, 2)))
    return mp.floor(low * mp.mpf(2) ** bits) / mp.mpf(2) ** bits


TARGETS = ['0.5', '1e-10', '1e-100']


def main():
    for df in [2, 10, 1000, 1000000, 10000000]:
        nu = mp.mpf(df)
        for target in TARGETS:
            p = mp.mpf(target)
            x = solve(lambda x: chi2_sf(x, nu), p, '1e-3', '1e9')
            print('chi2', mp.nstr(x, 40), df, mp.nstr(chi2_sf(x, nu), 20), flush=True)
            # F with d1 = 19 (19 + 1 conditions) and d2 = df
            fx = solve(lambda f: f_sf(f, 19, nu), p, '1e-3', '1e60')
            print('f19', mp.nstr(fx, 40), df, mp.nstr(f_sf(fx, 19, nu), 20), flush=True)
            if target == '0.5':
                continue
            try:
                tx = solve(lambda t: t_sf(t, nu), p, '1e-6', '1e60')
                print('t', mp.nstr(tx, 40), df, mp.nstr(t_sf(tx, nu), 20), flush=True)
            except mp.libmp.libhyper.NoConvergence:
                # mpmath's betainc does not converge at df 1e6 and beyond; skipped.
                pass
    for target in TARGETS:
        z = solve(normal_sf, mp.mpf(target), '1e-6', '100')
        print('normal', mp.nstr(z, 40), 'inf', mp.nstr(normal_sf(z), 20), flush=True)


if __name__ == '__main__':
    main()
