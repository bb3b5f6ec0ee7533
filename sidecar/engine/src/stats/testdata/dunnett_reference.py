"""Reference values for src/stats/dunnett.rs, by nested mpmath quadrature.

P(c) = E_S  integral phi(z) prod_i F_i(c S, z) dz,  S = chi_df / sqrt(df),
one-sided  F_i = Phi((x + l_i z) / sqrt(1 - l_i^2)),
two-sided  F_i = Phi((x + l_i z) / sqrt(1 - l_i^2)) - Phi((-x + l_i z) / sqrt(1 - l_i^2)).
The inner integral is split at every steep transition z = -x/l_i (one-sided) or
z = +-x/l_i (two-sided); the outer integral over s is split around the mode.
Usage: python3 dunnett_reference.py cdf | secant | secant_inf | tail | far_tail
(prints the values stored in the Rust tests; finite-df cases take minutes each).

`tail` gives the upper tail 1 - P(c) at 30 digits from the complement integrand
phi(z) (1 - prod F_i), with 1 - prod F_i = -expm1(sum log1p(-(1 - F_i))) and each
1 - F_i a normal tail, so nothing cancels however small the tail is.
"""
import mpmath as mp

mp.mp.dps = 20


def factor(x, lam, z, sides):
    w = mp.sqrt((1 - lam) * (1 + lam))
    upper = mp.ncdf((x + lam * z) / w)
    if sides == 1:
        return upper
    return upper - mp.ncdf((-x + lam * z) / w)


def inner(x, lams, sides):
    if sides == 2 and x <= 0:
        return mp.mpf(0)
    pts = set([mp.mpf(-9), mp.mpf(0), mp.mpf(9)])
    for lam in lams:
        if lam > 0:
            w = mp.sqrt((1 - lam) * (1 + lam)) / lam
            centers = [-x / lam] if sides == 1 else [-x / lam, x / lam]
            for t in centers:
                for k in (-8, -3, 0, 3, 8):
                    p = t + k * w
                    if -9 < p < 9:
                        pts.add(p)
    pts = sorted(pts)
    pts = [mp.mpf('-inf')] + pts + [mp.mpf('inf')]

    groups = {}
    for lam in lams:
        groups[lam] = groups.get(lam, 0) + 1

    def f(z):
        v = mp.npdf(z)
        for lam, count in groups.items():
            v *= factor(x, lam, z, sides) ** count
        return v

    return mp.quad(f, pts, method='gauss-legendre')


def cdf(c, lams, df, sides):
    c = mp.mpf(c)
    lams = [mp.mpf(l) for l in lams]
    if df == 'inf':
        return inner(c, lams, sides)
    nu = mp.mpf(df)
    logk = mp.log(2) + (nu / 2) * mp.log(nu / 2) - mp.loggamma(nu / 2)

    def g(s):
        if s == 0:
            return mp.mpf(0)
        dens = mp.exp(logk + (nu - 1) * mp.log(s) - nu * s * s / 2)
        return dens * inner(c * s, lams, sides)

    sd = 1 / mp.sqrt(2 * nu)
    pts = [mp.mpf(0)] + [1 + k * sd for k in (-9, -5, -2, 0, 2, 5, 9) if 1 + k * sd > 0] + [mp.mpf('inf')]
    return mp.quad(g, sorted(set(pts)), method='gauss-legendre')


def dunnett_lambdas(n0, ns):
    return [mp.sqrt(mp.mpf(n) / (mp.mpf(n) + n0)) for n in ns]



def quantile_by_secant(p, lams, df, sides, start):
    """Root of cdf(c) = p by one secant step from start (within 1e-9 of the root) and
    start + 1e-6; the step's error is of order 1e-9 * 1e-6 * |P''/P'|, far below 1e-13."""
    p = mp.mpf(p)
    c0 = mp.mpf(start)
    c1 = c0 + mp.mpf('1e-6')
    p0 = cdf(c0, lams, df, sides)
    p1 = cdf(c1, lams, df, sides)
    return c0 + (p - p0) * (c1 - c0) / (p1 - p0), p0


def secant_cases():
    h = mp.sqrt(mp.mpf(1) / 2)
    une = dunnett_lambdas(10, [5, 8, 12, 20])
    cases = [
        ('two_95_equal4_df20', 0.95, [h] * 4, 20, 2, '2.651029589573'),
        ('one_95_unequal_df15', 0.95, une, 15, 1, '2.358265730629'),
        ('two_99_equal9_inf', 0.99, [h] * 9, 'inf', 2, '3.218952828203'),
    ]
    ns = [4, 6, 9]
    starts = ['2.025482326385', '2.058723632784', '2.079365426002']
    for i, ni in enumerate(ns):
        lams = [mp.sqrt(mp.mpf(nj) / (nj + ni)) for j, nj in enumerate(ns) if j != i]
        cases.append(('mcb_4_6_9_df16_condition%d' % i, 0.95, lams, 16, 1, starts[i]))
    for name, p, lams, df, sides, start in cases:
        root, p0 = quantile_by_secant(p, lams, df, sides, start)
        print(name, 'start', start, 'cdf(start)', mp.nstr(p0, 17), 'root', mp.nstr(root, 17), flush=True)


def infinite_df_secant_cases():
    h = mp.sqrt(mp.mpf(1) / 2)
    print('two_99_equal9_inf', mp.nstr(quantile_by_secant(0.99, [h] * 9, 'inf', 2, '3.218952828203')[0], 17))
    ns = [4, 6, 9]
    starts = ['1.890556536341', '1.917769048020', '1.933957347101']
    for i, ni in enumerate(ns):
        lams = [mp.sqrt(mp.mpf(nj) / (nj + ni)) for j, nj in enumerate(ns) if j != i]
        print('mcb_4_6_9_inf_condition%d' % i, mp.nstr(quantile_by_secant(0.95, lams, 'inf', 1, starts[i])[0], 17))



def cdf_cases():
    h = mp.sqrt(mp.mpf(1) / 2)
    une = dunnett_lambdas(10, [5, 8, 12, 20])
    cases = [
        ('equal3_inf_one', 2.0, [h] * 3, 'inf', 1),
        ('equal4_df10_two', 2.5, [h] * 4, 10, 2),
        ('unequal_df15_two', 2.3, une, 15, 2),
        ('unequal_inf_one', 2.1, une, 'inf', 1),
        ('near_one_df7_two', 2.0, ['0.999', '0.9999', '0.5'], 7, 2),
        ('near_one_df7_one', 2.0, ['0.999', '0.9999', '0.5'], 7, 1),
        ('with_zero_df5_one', 1.8, [0, '0.6', '0.8'], 5, 1),
        ('zeros_df12_two', 2.2, [0, 0, 0], 12, 2),
        ('equal2_df1_two', 10.0, [h] * 2, 1, 2),
        ('equal3_df2p5_one', 3.0, [h] * 3, 2.5, 1),
        ('equal5_df1e6_one', 2.2, [h] * 5, 1000000, 1),
        ('negative_c_inf_one', -0.5, ['0.7', '0.7'], 'inf', 1),
    ]
    for name, c, lams, df, sides in cases:
        print(name, mp.nstr(cdf(c, lams, df, sides), 17), flush=True)
    infinite = [
        ('near_one_inf_two', 2.0, ['0.999', '0.9999', '0.5'], 2),
        ('near_one_inf_one', 2.0, ['0.999', '0.9999', '0.5'], 1),
        ('with_zero_inf_one', 1.8, [0, '0.6', '0.8'], 1),
        ('equal9_inf_two_c3', 3.0, [h] * 9, 2),
    ]
    for name, c, lams, sides in infinite:
        print(name, mp.nstr(cdf(c, lams, 'inf', sides), 17), flush=True)


def inner_tail(x, lams, sides):
    """1 - (normal-theory probability) at x, without cancellation."""
    groups = {}
    for lam in lams:
        groups[lam] = groups.get(lam, 0) + 1

    def f(z):
        total = mp.mpf(0)
        for lam, count in groups.items():
            w = mp.sqrt((1 - lam) * (1 + lam))
            u = mp.ncdf(-(x + lam * z) / w)
            if sides == 2:
                u += mp.ncdf((-x + lam * z) / w)
            total += count * mp.log1p(-u)
        return mp.npdf(z) * -mp.expm1(total)

    pts = set([mp.mpf(0)])
    for lam in groups:
        w = mp.sqrt((1 - lam) * (1 + lam))
        centres = [-lam * x] if sides == 1 else [-lam * x, lam * x]
        for t in centres:
            for k in (-12, -6, -3, -1, 0, 1, 3, 6, 12):
                pts.add(t + k * w)
    pts = sorted(pts)
    return mp.quad(f, [mp.mpf('-inf')] + pts + [mp.mpf('inf')], method='gauss-legendre')


def tail(c, lams, df, sides):
    c = mp.mpf(c)
    lams = [mp.mpf(l) for l in lams]
    if df == 'inf':
        return inner_tail(c, lams, sides)
    nu = mp.mpf(df)
    logk = mp.log(2) + (nu / 2) * mp.log(nu / 2) - mp.loggamma(nu / 2)

    def g(s):
        if s == 0:
            return mp.mpf(0)
        return mp.exp(logk + (nu - 1) * mp.log(s) - nu * s * s / 2) * inner_tail(c * s, lams, sides)

    # The integrand's mass lies between the chi mode (s = 1) and the tail's peak
    # s* = sqrt(nu / (nu + c^2)); both are split points, with their widths.
    sd = 1 / mp.sqrt(2 * nu)
    star = mp.sqrt(nu / (nu + c * c))
    pts = set([mp.mpf(0), mp.mpf('inf')])
    for centre in (star, mp.mpf(1)):
        for k in (-12, -8, -5, -3, -2, -1, 0, 1, 2, 3, 5, 8, 12):
            p = centre * mp.exp(k * sd)
            pts.add(p)
    return mp.quad(g, sorted(pts), method='gauss-legendre')


TAIL_CASES = [
    # name, c, lambdas, df, sides
    ('half4_inf_two_c6', 6.0, ['0.5'] * 4, 'inf', 2),
    ('half4_inf_two_c21', 21.0, ['0.5'] * 4, 'inf', 2),
    ('half4_inf_one_c37', 37.0, ['0.5'] * 4, 'inf', 1),
    ('unequal_df20_two_c5', 5.0, 'unequal', 20, 2),
    ('unequal_df20_two_c9', 9.0, 'unequal', 20, 2),
    ('half3_df10_one_c40', 40.0, ['0.5'] * 3, 10, 1),
    ('half3_df10_two_c1e10', 1e10, ['0.5'] * 3, 10, 2),
    ('half5_df1e6_two_c7', 7.0, ['0.5'] * 5, 1000000, 2),
    ('half5_df1e7_two_c12', 12.0, ['0.5'] * 5, 10000000, 2),
    ('near_one_df7_two_c8', 8.0, ['0.999', '0.9999', '0.5'], 7, 2),
]


def far_tail_cases():
    """Far in the tail the first Bonferroni term is the tail: m Q(c) (one side) or
    2 m Q(c) (two sides). With correlation rho = lambda^2 the joint exceedance of two
    comparisons is about exp(-c^2 (1 - rho) / (2 (1 + rho))) times Q(c), for lambda = 1/2
    exp(-0.3 c^2): 5e-58 at c = 21, below 1e-170 at c = 37, far below 30 digits. (The
    nested quadrature of `tail` is not resolved that far out and is not used there.)"""
    mp.mp.dps = 30
    for name, c, m, sides in [('half4_inf_two_c21', 21, 4, 2), ('half4_inf_one_c37', 37, 4, 1)]:
        print(name, mp.nstr(sides * m * mp.ncdf(-mp.mpf(c)), 20))


def tail_cases():
    mp.mp.dps = 30
    une = dunnett_lambdas(10, [5, 8, 12, 20])
    for name, c, lams, df, sides in TAIL_CASES:
        lams = une if lams == 'unequal' else lams
        print(name, mp.nstr(tail(c, lams, df, sides), 20), flush=True)


if __name__ == '__main__':
    import sys
    which = sys.argv[1] if len(sys.argv) > 1 else 'cdf'
    if which == 'cdf':
        cdf_cases()
    elif which == 'secant':
        mp.mp.dps = 18
        secant_cases()
    elif which == 'secant_inf':
        infinite_df_secant_cases()
    elif which == 'tail':
        tail_cases()
    elif which == 'far_tail':
        far_tail_cases()
