"""Reference values for the power of the second-order tests of response-surface plans.

Builds each plan's coded runs here with numpy (independently of the program), the model
matrix of the full second-order model (intercept, block contrasts, linear, interaction
and square terms), and for square terms of size c (coded units) and SD s:

  one square term j:  lambda = c^2 / (s^2 [(X'X)^-1]_jj),       F(1, n - p)
  all k squares:      lambda = c^2 1' ([(X'X)^-1]_SS)^-1 1 / s^2, F(k, n - p)

power = scipy.stats.ncf.sf(scipy.stats.f.isf(alpha, q, n - p), q, n - p, lambda).
Run with: python3 make_surface_power_reference.py
"""

import itertools

import numpy as np
import scipy
from scipy import stats


def cube(k):
    return [list(signs) for signs in itertools.product([-1.0, 1.0], repeat=k)]


def axial(k, alpha):
    runs = []
    for factor in range(k):
        for sign in (-1.0, 1.0):
            run = [0.0] * k
            run[factor] = sign * alpha
            runs.append(run)
    return runs


def centre(k, count):
    return [[0.0] * k for _ in range(count)]


def box_behnken_three():
    runs = []
    for pair in ((0, 1), (0, 2), (1, 2)):
        for a, b in itertools.product([-1.0, 1.0], repeat=2):
            run = [0.0, 0.0, 0.0]
            run[pair[0]] = a
            run[pair[1]] = b
            runs.append(run)
    return runs


def model_matrix(runs, blocks):
    runs = np.asarray(runs, dtype=float)
    n, k = runs.shape
    labels = sorted(set(blocks)) if blocks else [0]
    columns = [np.ones(n)]
    for index in range(len(labels) - 1):
        column = np.zeros(n)
        for row, block in enumerate(blocks):
            position = labels.index(block)
            column[row] = 1.0 if position == index else (-1.0 if position == len(labels) - 1 else 0.0)
        columns.append(column)
    columns.extend(runs[:, i] for i in range(k))
    columns.extend(runs[:, i] * runs[:, j] for i in range(k) for j in range(i + 1, k))
    columns.extend(runs[:, i] ** 2 for i in range(k))
    return np.column_stack(columns), len(labels), k


def powers(name, runs, blocks, curvature, sd, alpha):
    x, n_blocks, k = model_matrix(runs, blocks)
    n, p = x.shape
    df = n - p
    inverse = np.linalg.inv(x.T @ x)
    first = n_blocks + k + k * (k - 1) // 2
    squares = []
    for j in range(first, first + k):
        lam = curvature**2 / (sd**2 * inverse[j, j])
        power = stats.ncf.sf(stats.f.isf(alpha, 1, df), 1, df, lam)
        squares.append((lam, power))
    block = inverse[first:first + k, first:first + k]
    beta = np.full(k, curvature)
    lam_group = beta @ np.linalg.inv(block) @ beta / sd**2
    power_group = stats.ncf.sf(stats.f.isf(alpha, k, df), k, df, lam_group)
    print(f"{name}: n={n} df={df}")
    for j, (lam, power) in enumerate(squares):
        print(f"  square {j}: lambda={float(lam)!r} power={float(power)!r}")
    print(f"  group: lambda={float(lam_group)!r} power={float(power_group)!r}")


print(f"scipy {scipy.__version__}, numpy {np.__version__}")
alpha2 = 4 ** 0.25
powers("composite k=2 rotatable, 5 centre", cube(2) + axial(2, alpha2) + centre(2, 5), [], 1.0, 1.5, 0.05)
alpha3 = 8 ** 0.25
powers("composite k=3 rotatable, 6 centre", cube(3) + axial(3, alpha3) + centre(3, 6), [], 0.8, 1.0, 0.05)
powers("composite k=3 faces, 3 centre", cube(3) + axial(3, 1.0) + centre(3, 3), [], 0.8, 1.0, 0.05)
twice = (cube(2) + axial(2, alpha2) + centre(2, 5)) * 2
powers("composite k=2 rotatable, 5 centre, two replicates", twice, [], 1.0, 1.5, 0.05)
powers("Box-Behnken k=3, 3 centre", box_behnken_three() + centre(3, 3), [], 1.0, 1.2, 0.05)
blocked = cube(2) + centre(2, 3) + axial(2, 2 ** 0.5) + centre(2, 3)
powers("composite k=2 in two blocks, 3 centre each", blocked, [1] * 7 + [2] * 7, 1.0, 1.5, 0.01)
