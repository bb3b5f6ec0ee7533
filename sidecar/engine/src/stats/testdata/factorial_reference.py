"""Makes the reference values for the factorial linear-model tests.

Run from this folder: python3 factorial_reference.py > factorial_reference.txt
The input data sets (*.csv beside this script) were invented for these tests;
level columns hold 0-based level indices, y holds the response.
Reference library: statsmodels (ols with Sum coding, anova_lm typ=1/2/3,
t_test for least-squares means and effects), scipy for one-way ANOVA.
"""
import itertools

import numpy as np
import pandas as pd
import scipy
import scipy.stats
import statsmodels
from patsy import build_design_matrices
from statsmodels.formula.api import ols
from statsmodels.stats.anova import anova_lm


def out(*fields):
    print(" ".join(repr(f) if isinstance(f, float) else str(f) for f in fields))


def term_name(statsmodels_term):
    # "C(a, Sum):C(b, Sum)" -> "a:b"
    return ":".join(part[2:].split(",")[0] for part in statsmodels_term.split(":"))


def full_factorial(name, factors, blocks=()):
    df = pd.read_csv(name + ".csv")
    rhs = " * ".join("C(%s, Sum)" % f for f in factors)
    if blocks:
        rhs = " + ".join("C(%s, Sum)" % b for b in blocks) + " + " + rhs
    formula = "y ~ " + rhs
    res = ols(formula, df).fit()
    for typ in (1, 2, 3):
        call = "anova_lm(ols('%s', %s).fit(), typ=%d)" % (formula, name, typ)
        print("# " + call)
        table = anova_lm(res, typ=typ)
        for term, row in table.iterrows():
            if term in ("Residual", "Intercept"):
                continue
            out("anova", name, typ, term_name(term), int(round(row["df"])),
                float(row["sum_sq"]), float(row["F"]), float(row["PR(>F)"]))
    out("resid", name, int(round(res.df_resid)), float(res.ssr))
    out("rsquared", name, float(res.rsquared))
    # least-squares means and effects: linear functions of the design rows
    # of the complete grid of level combinations, estimated with t_test.
    all_factors = list(blocks) + list(factors)
    levels = [sorted(df[f].unique()) for f in all_factors]
    grid = pd.DataFrame(list(itertools.product(*levels)), columns=all_factors)
    grid["y"] = 0.0
    design = np.asarray(build_design_matrices([res.model.data.model_spec], grid)[0])
    print("# grand mean, least-squares means and effects: res.t_test(L) with L "
          "averaging the design rows of the full level grid of %s" % name)
    t = res.t_test(design.mean(axis=0))
    out("grand", name, float(t.effect[0]), float(t.sd[0, 0]))
    for f, lv in zip(all_factors, levels):
        for level in lv:
            t = res.t_test(design[(grid[f] == level).to_numpy()].mean(axis=0))
            out("lsmean", name, f, level, float(t.effect[0]), float(t.sd[0, 0]))
    terms = [(b,) for b in blocks]
    for order in range(1, len(factors) + 1):
        terms += list(itertools.combinations(factors, order))
    for term in terms:
        term_levels = [sorted(df[f].unique()) for f in term]
        for combo in itertools.product(*term_levels):
            contrast = np.zeros(design.shape[1])
            for size in range(len(term) + 1):
                for subset in itertools.combinations(range(len(term)), size):
                    mask = np.ones(len(grid), dtype=bool)
                    for i in subset:
                        mask &= (grid[term[i]] == combo[i]).to_numpy()
                    sign = (-1) ** (len(term) - size)
                    contrast += sign * design[mask].mean(axis=0)
            t = res.t_test(contrast)
            out("effect", name, ":".join(term), ",".join(str(c) for c in combo),
                float(t.effect[0]), float(t.sd[0, 0]))


def missing_cell(name):
    """Two factors with one empty cell: Type I and II from nested model fits."""
    import warnings
    warnings.simplefilter("ignore")  # rank-deficient full model is intended here
    df = pd.read_csv(name + ".csv")
    fits = {}
    for key, formula in [("1", "y ~ 1"), ("a", "y ~ C(a, Sum)"), ("b", "y ~ C(b, Sum)"),
                         ("a+b", "y ~ C(a, Sum) + C(b, Sum)"),
                         ("a*b", "y ~ C(a, Sum) * C(b, Sum)")]:
        fits[key] = ols(formula, df).fit()
    print("# anova_lm(ols('y ~ 1'), ols('y ~ C(a, Sum)'), ols('y ~ C(a, Sum) + C(b, Sum)'), "
          "ols('y ~ C(a, Sum) * C(b, Sum)')) on %s: Type I rows" % name)
    t1 = anova_lm(fits["1"], fits["a"], fits["a+b"], fits["a*b"])
    # anova_lm takes F against the largest model's scale but its Pr(>F) with each row's
    # own df_resid; the p-values here use the largest model's df_resid, as F does:
    # scipy.stats.f.sf(F, df_diff, df_resid of 'y ~ C(a, Sum) * C(b, Sum)')
    df_resid = fits["a*b"].df_resid

    def row_out(typ, term, r):
        out("anova", name, typ, term, int(round(r["df_diff"])), float(r["ss_diff"]),
            float(r["F"]), float(scipy.stats.f.sf(r["F"], r["df_diff"], df_resid)))

    for term, i in (("a", 1), ("b", 2), ("a:b", 3)):
        row_out(1, term, t1.iloc[i])
    print("# anova_lm(ols('y ~ C(b, Sum)'), ols('y ~ C(a, Sum) + C(b, Sum)'), "
          "ols('y ~ C(a, Sum) * C(b, Sum)')) row 1 and the same with a first: "
          "Type II rows; the a:b row is the Type I one")
    for term, small in (("a", "b"), ("b", "a")):
        row_out(2, term, anova_lm(fits[small], fits["a+b"], fits["a*b"]).iloc[1])
    row_out(2, "a:b", t1.iloc[3])
    out("resid", name, int(round(fits["a*b"].df_resid)), float(fits["a*b"].ssr))
    out("rsquared", name, float(fits["a*b"].rsquared))


def one_way(name):
    df = pd.read_csv(name + ".csv")
    groups = [g["y"].to_numpy() for _, g in df.groupby("a")]
    f, p = scipy.stats.f_oneway(*groups)
    grand = df["y"].mean()
    between = float(sum(len(g) * (g.mean() - grand) ** 2 for g in groups))
    within = float(sum(((g - g.mean()) ** 2).sum() for g in groups))
    print("# scipy.stats.f_oneway on the groups of %s; SS by numpy two-pass sums" % name)
    out("anova", name, 1, "a", len(groups) - 1, between, float(f), float(p))
    out("resid", name, len(df) - len(groups), within)


print("# statsmodels %s, scipy %s, pandas %s, numpy %s"
      % (statsmodels.__version__, scipy.__version__, pd.__version__, np.__version__))
full_factorial("two_factor", ["a", "b"])
full_factorial("three_factor", ["a", "b", "c"])
full_factorial("block_factor", ["a", "b"], blocks=["block"])
missing_cell("missing_cell")
one_way("one_way")
