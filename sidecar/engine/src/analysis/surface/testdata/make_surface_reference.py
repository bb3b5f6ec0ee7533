"""Reference values for the second-order analysis, from statsmodels OLS and
numpy's symmetric eigen-decomposition, on random quadratic surfaces with blocks.

Run from this folder:  python3 make_surface_reference.py > ../reference_values.rs
Made with numpy 2.4.6 and statsmodels 0.15.0 (Python 3.11).
"""
import itertools

import numpy as np
import statsmodels
import statsmodels.api as sm


def composite(k, alpha, centres_cube, centres_axial):
    cube = [list(p) for p in itertools.product([-1.0, 1.0], repeat=k)]
    rows = [(1, p) for p in cube] + [(1, [0.0] * k)] * centres_cube
    for i in range(k):
        for s in (-alpha, alpha):
            p = [0.0] * k
            p[i] = s
            rows.append((2, p))
    rows += [(2, [0.0] * k)] * centres_axial
    return rows


def box_behnken_four():
    rows = []
    pairs = [(0, 1), (2, 3), (0, 3), (1, 2), (0, 2), (1, 3)]
    for index, (a, b) in enumerate(pairs):
        for sa, sb in itertools.product([-1.0, 1.0], repeat=2):
            p = [0.0] * 4
            p[a], p[b] = sa, sb
            rows.append((index // 2 + 1, p))
    for block in (1, 2, 3):
        rows += [(block, [0.0] * 4)] * 2
    return rows


def terms(x):
    k = len(x)
    out = list(x)
    for i in range(k):
        for j in range(i + 1, k):
            out.append(x[i] * x[j])
    out += [v * v for v in x]
    return out


def case(name, rows, centre, half, seed, point):
    rng = np.random.default_rng(seed)
    k = len(centre)
    n_terms = 2 * k + k * (k - 1) // 2
    truth = rng.normal(0, 3, n_terms + 1)
    blocks = sorted({b for b, _ in rows})
    block_shift = {b: rng.normal(0, 2) for b in blocks}
    real = [[c + v * h for v, c, h in zip(p, centre, half)] for _, p in rows]
    y = []
    for (b, p) in rows:
        mean = truth[0] + np.dot(truth[1:], terms(p)) + block_shift[b]
        y.append(round(float(mean + rng.normal(0, 1.0)), 4))
    y = np.array(y)
    # Model matrix built here independently: intercept, sum-to-zero block contrasts, terms.
    nb = len(blocks)
    X = []
    for (b, p) in rows:
        bi = blocks.index(b)
        contrasts = [1.0 if bi == c else (-1.0 if bi == nb - 1 else 0.0) for c in range(nb - 1)]
        X.append([1.0] + contrasts + terms(p))
    X = np.array(X)
    p0 = 1 + nb - 1
    inter = k * (k - 1) // 2
    nested = [p0, p0 + k, p0 + k + inter, p0 + n_terms]
    ssr = [sm.OLS(y, X[:, :m]).fit().ssr for m in nested]
    full = sm.OLS(y, X).fit()
    groups = {}
    for (b, p), v in zip(rows, y):
        groups.setdefault((b, tuple(p)), []).append(v)
    labels = list(groups)
    G = np.array([[1.0 if (b, tuple(p)) == g else 0.0 for g in labels] for b, p in rows])
    pure = sm.OLS(y, G).fit()
    pure_df = len(y) - len(labels)
    lack_ss = full.ssr - pure.ssr
    lack_df = int(full.df_resid) - pure_df
    lack_f = (lack_ss / lack_df) / (pure.ssr / pure_df)
    beta = full.params[p0:]
    bvec = beta[:k]
    B = np.zeros((k, k))
    idx = k
    for i in range(k):
        for j in range(i + 1, k):
            B[i, j] = B[j, i] = beta[idx] / 2
            idx += 1
    for i in range(k):
        B[i, i] = beta[idx + i]
    xs = -0.5 * np.linalg.solve(B, bvec)
    eig = np.linalg.eigh(B)[0][::-1]
    coded_point = [(v - c) / h for v, c, h in zip(point, centre, half)]
    row = np.array([[1.0] + [0.0] * (nb - 1) + terms(coded_point)])
    frame = full.get_prediction(row).summary_frame(alpha=0.05)

    def arr(values):
        return "&[" + ", ".join(repr(float(v)) for v in values) + "]"

    out = []
    out.append(f"/// {name}: seed {seed}.")
    out.append(f"pub const {name}: ReferenceCase = ReferenceCase {{")
    out.append(f"    centre: {arr(centre)},")
    out.append(f"    half_range: {arr(half)},")
    out.append("    settings: &[" + ", ".join(arr(r) for r in real) + "],")
    out.append("    blocks: &[" + ", ".join(str(b) for b, _ in rows) + "],")
    out.append(f"    values: {arr(y)},")
    out.append(f"    intercept: {float(full.params[0])!r},")
    out.append(f"    coefficients: {arr(beta)},")
    out.append(f"    standard_errors: {arr(full.bse[p0:])},")
    out.append(f"    sequential_ss: {arr([ssr[0] - ssr[1], ssr[1] - ssr[2], ssr[2] - ssr[3]])},")
    out.append(f"    blocks_ss: {float(((y - y.mean()) ** 2).sum() - ssr[0])!r},")
    out.append(f"    residual_ss: {float(full.ssr)!r},")
    out.append(f"    residual_df: {int(full.df_resid)},")
    out.append(f"    pure_error_ss: {float(pure.ssr)!r},")
    out.append(f"    pure_error_df: {pure_df},")
    out.append(f"    lack_of_fit_f: {float(lack_f)!r},")
    out.append(f"    stationary_coded: {arr(xs)},")
    out.append(f"    eigenvalues: {arr(eig)},")
    out.append(f"    point: {arr(point)},")
    out.append(
        "    prediction: [" + ", ".join(repr(float(frame[c].iloc[0])) for c in
                                      ["mean", "mean_ci_lower", "mean_ci_upper", "obs_ci_lower", "obs_ci_upper"]) + "],"
    )
    out.append("};")
    return "\n".join(out)


print("//! Reference values made by `testdata/make_surface_reference.py` with")
print(f"//! numpy {np.__version__} and statsmodels {statsmodels.__version__}: OLS fits of the full")
print("//! quadratic model with sum-to-zero block contrasts, nested fits for the")
print("//! sequential sums of squares, a fit on the groups of equal settings for")
print("//! pure error, numpy.linalg.eigh for the eigenvalues. Do not edit by hand.")
print()
print("use super::tests::ReferenceCase;")
print()
print(case("TWO_FACTORS_TWO_BLOCKS", composite(2, 2 ** 0.5, 3, 3), [150.0, 30.0], [20.0, 5.0], 11, [160.0, 33.0]))
print()
print(case("THREE_FACTORS_TWO_BLOCKS", composite(3, 8 ** 0.25, 4, 2), [2.5, 80.0, 0.4], [0.5, 10.0, 0.1], 23, [2.2, 85.0, 0.45]))
print()
print(case("FOUR_FACTORS_THREE_BLOCKS", box_behnken_four(), [10.0, 20.0, 30.0, 40.0], [1.0, 2.0, 3.0, 4.0], 37, [10.5, 19.0, 31.0, 38.0]))
