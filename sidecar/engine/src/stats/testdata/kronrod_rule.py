"""Nodes and weights of the 10-point Gauss-Legendre rule and its 21-point Kronrod
extension on [-1, 1], computed from the definitions with mpmath 1.3.0 at 50 digits:
the Stieltjes polynomial E_11 (orthogonal to P_10 * P_j, j < 11) gives the 11 new nodes,
weights follow from exactness on P_0..P_20; exactness to degree 31 is then checked.
Usage: python3 kronrod_rule.py   (prints the Rust constants)
"""
import mpmath as mp

mp.mp.dps = 50
n = 10


def legendre(k, x):
    return mp.legendre(k, x)


def roots(f):
    grid = [mp.mpf(-1) + mp.mpf(2) * i / 4000 for i in range(4001)]
    found = []
    for a, b in zip(grid[:-1], grid[1:]):
        if f(a) == 0:
            found.append(a)
        elif f(a) * f(b) < 0:
            found.append(mp.findroot(f, (a, b), solver='illinois'))
    return found


gauss_nodes = roots(lambda x: legendre(n, x))
assert len(gauss_nodes) == n
gauss_weights = [2 / ((1 - x * x) * mp.diff(lambda t: legendre(n, t), x) ** 2) for x in gauss_nodes]



def integral(f):
    return mp.quad(f, [-1, 0, 1], method='gauss-legendre')


unknown_k = [k for k in range(n + 1) if (k - (n + 1)) % 2 == 0]
equations_j = [j for j in range(n + 1) if (n + j + n + 1) % 2 == 0]
assert len(unknown_k) == len(equations_j)
M = mp.matrix(len(equations_j), len(unknown_k))
rhs = mp.matrix(len(equations_j), 1)
for r, j in enumerate(equations_j):
    for col, k in enumerate(unknown_k):
        M[r, col] = integral(lambda x: legendre(n, x) * legendre(k, x) * legendre(j, x))
    rhs[r] = -integral(lambda x: legendre(n, x) * legendre(n + 1, x) * legendre(j, x))
coeffs = mp.lu_solve(M, rhs)


def stieltjes(x):
    return legendre(n + 1, x) + mp.fsum(coeffs[i] * legendre(k, x) for i, k in enumerate(unknown_k))


new_nodes = roots(stieltjes)
assert len(new_nodes) == n + 1
nodes = sorted(gauss_nodes + new_nodes)
A = mp.matrix(2 * n + 1, 2 * n + 1)
b = mp.matrix(2 * n + 1, 1)
for j in range(2 * n + 1):
    for i, x in enumerate(nodes):
        A[j, i] = legendre(j, x)
    b[j] = 2 if j == 0 else 0
weights = mp.lu_solve(A, b)
for degree in range(3 * n + 2):
    exact = mp.mpf(2) / (degree + 1) if degree % 2 == 0 else 0
    assert abs(mp.fsum(w * x ** degree for w, x in zip(weights, nodes)) - exact) < mp.mpf(10) ** -40, degree

gauss_of = []
for x in nodes:
    match = [gw for g, gw in zip(gauss_nodes, gauss_weights) if abs(x - g) < mp.mpf(10) ** -30]
    gauss_of.append(match[0] if match else mp.mpf(0))
for name, values in (('KRONROD_NODES', nodes), ('KRONROD_WEIGHTS', weights), ('GAUSS_WEIGHTS', gauss_of)):
    print('const %s: [f64; 21] = [' % name)
    for v in values:
        print('    %r,' % float(v))
    print('];')
