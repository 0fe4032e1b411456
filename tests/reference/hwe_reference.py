"""Reference values for the Hardy-Weinberg exact tests, Fisher's method and the
Benjamini-Hochberg q-values (docs/methods.md, "Hardy–Weinberg exact tests" and "Multiple tests").

Libraries: scipy (version printed; 1.17.1 when the constants were frozen) for
scipy.stats.false_discovery_control, scipy.stats.combine_pvalues and scipy.stats.chi2;
exact rational arithmetic (fractions, math.factorial) for the exact tests, by direct
enumeration of every genotype table with the observed allele counts and the
Levene (1949) / Haldane (1954) probability
    P = n! prod(n_u!) 2^H / ((2n)! prod(n_uv!)),
independently of the Wigginton et al. (2005) recurrence the Rust code uses.
Run: python3 tests/reference/hwe_reference.py
Frozen in plugins/builtin/src/stats/fdr.rs, plugins/builtin/src/stats/hwe_exact.rs and
plugins/builtin/src/steps/hwe.rs.
"""
from fractions import Fraction
from math import factorial, log

import numpy as np
import scipy
from scipy import stats

print("scipy", scipy.__version__, "numpy", np.__version__)

# --- Benjamini & Hochberg (1995) example, also in the scipy documentation -------------
p = [0.0001, 0.0004, 0.0019, 0.0095, 0.0201, 0.0278, 0.0298, 0.0344, 0.0459, 0.3240,
     0.4262, 0.5719, 0.6528, 0.7590, 1.000]
q = stats.false_discovery_control(p, method="bh")
print("BH q =", [float("%.6g" % x) for x in q])
print("BH rejections at 0.05:", int(np.sum(q <= 0.05)))

# --- Fisher's method ------------------------------------------------------------------
x2, pf = stats.combine_pvalues([0.01, 0.20, 0.50], method="fisher")
print("Fisher: X2 = %.5f df = 6 p = %.6f" % (x2, pf))


# --- Exact test by enumeration --------------------------------------------------------
def tables(counts):
    """Every upper-triangular genotype table {(u, v): n_uv} with allele counts `counts`.

    Row by row: the heterozygote counts n_uv (v > u) are chosen freely within what is left,
    then the homozygote count n_uu takes the remainder of allele u, which must be even."""
    k = len(counts)

    def rec(u, v, remaining, table):
        if u == k:
            yield dict(table)
            return
        if v == k:
            if remaining[u] % 2:
                return
            table[(u, u)] = remaining[u] // 2
            left = remaining[u]
            remaining[u] = 0
            yield from rec(u + 1, min(u + 2, k), remaining, table)
            remaining[u] = left
            del table[(u, u)]
            return
        for m in range(min(remaining[u], remaining[v]) + 1):
            remaining[u] -= m
            remaining[v] -= m
            table[(u, v)] = m
            yield from rec(u, v + 1, remaining, table)
            remaining[u] += m
            remaining[v] += m
        del table[(u, v)]

    yield from rec(0, min(1, k), list(counts), {})


def weight(table):
    """Integer weight 2^H * n! / prod(n_uv!) of a table. The Levene/Haldane probability is
    this weight times prod(n_u!) / (2n)!, a factor shared by every table with the same allele
    counts, so sums of probabilities are exact ratios of integer sums."""
    n = sum(table.values())
    het = sum(m for (u, v), m in table.items() if u != v)
    den = 1
    for m in table.values():
        den *= factorial(m)
    num = factorial(n) * 2 ** het
    assert num % den == 0
    return num // den


def probability(table, counts):
    """The Levene (1949) / Haldane (1954) probability of `table`, as an exact fraction."""
    num = weight(table)
    for c in counts:
        num *= factorial(c)
    return Fraction(num, factorial(sum(counts)))


def exact(table, counts):
    all_tables = list(tables(counts))
    weights = [weight(t) for t in all_tables]
    total = sum(weights)
    w_obs = weight(table)
    # Ties within a relative tolerance of 1e-7, compared in exact integer arithmetic.
    at_most = sum(w for w in weights if w * 10 ** 7 <= w_obs * (10 ** 7 + 1))
    lower = sum(w for w in weights if w * 10 ** 7 < w_obs * (10 ** 7 - 1))
    het_obs = sum(m for (u, v), m in table.items() if u != v)
    het = [sum(m for (u, v), m in t.items() if u != v) for t in all_tables]
    deficit = sum(w for w, h in zip(weights, het) if h <= het_obs)
    excess = sum(w for w, h in zip(weights, het) if h >= het_obs)
    return dict(tables=len(all_tables),
                total_probability=probability(table, counts) * Fraction(total, w_obs),
                p_obs=probability(table, counts), p=Fraction(at_most, total),
                mid=Fraction(2 * lower + (at_most - lower), 2 * total),
                deficit=Fraction(deficit, total), excess=Fraction(excess, total))


def biallelic(aa, ab, bb):
    counts = [2 * aa + ab, 2 * bb + ab]
    return exact({(0, 0): aa, (0, 1): ab, (1, 1): bb}, counts)


for obs in [(68, 28, 4), (57, 14, 29), (10, 0, 10), (0, 10, 0), (25, 50, 25), (6, 3, 1), (1787, 3039, 1303)]:
    r = biallelic(*obs)
    assert r["total_probability"] == 1
    print("biallelic %s: P(obs) = %.6g p = %.6g mid-p = %.6g p_deficit = %.6g p_excess = %.6g" % (
        obs, float(r["p_obs"]), float(r["p"]), float(r["mid"]), float(r["deficit"]), float(r["excess"])))

# MN blood groups (from memory, textbook example): chi-square for comparison.
mm, mn, nn = 1787, 3039, 1303
n = mm + mn + nn
pm = (2 * mm + mn) / (2 * n)
exp = [n * pm ** 2, 2 * n * pm * (1 - pm), n * (1 - pm) ** 2]
chi = sum((o - e) ** 2 / e for o, e in zip([mm, mn, nn], exp))
print("MN: p(M) = %.6f expected %s chi2 = %.5f p = %.4f" % (pm, [round(e, 2) for e in exp], chi, stats.chi2.sf(chi, 1)))

# Levene 3-allele example: A:6, B:5, C:5; n = 8 with AA 3, BB 2, BC 1, CC 2.
lev = exact({(0, 0): 3, (1, 1): 2, (1, 2): 1, (2, 2): 2}, [6, 5, 5])
assert lev["total_probability"] == 1
print("Levene: tables = %d P(obs) = %.6g p = %.6g ln P(obs) = %.10f" % (
    lev["tables"], float(lev["p_obs"]), float(lev["p"]), log(lev["p_obs"])))

# Four-allele table of the hwe step test `multiallelic_exact_by_enumeration_in_step`:
# 1/1 x2, 1/2 x3, 2/3 x2, 3/4 x1, 4/4 x1, 1/3 x1 (n = 10); allele counts 1:8, 2:5, 3:4, 4:3.
t4 = {(0, 0): 2, (0, 1): 3, (1, 2): 2, (2, 3): 1, (3, 3): 1, (0, 2): 1}
r4 = exact(t4, [8, 5, 4, 3])
assert r4["total_probability"] == 1
print("four alleles: tables = %d P(obs) = %.6g p = %.8f" % (r4["tables"], float(r4["p_obs"]), float(r4["p"])))

# Fisher's combination and BH q-values of the three tests of the hwe step test
# `fisher_and_q_values_through_the_step`: (68, 28, 4), (0, 10, 0) and the Levene table in
# one group.
three = [float(biallelic(68, 28, 4)["p"]), float(biallelic(0, 10, 0)["p"]), float(lev["p"])]
x2, pf = stats.combine_pvalues(three, method="fisher")
print("step test: p = %s X2 = %.6f df = 6 p = %.8f" % (["%.9g" % x for x in three], x2, pf))
print("step test: BH q =", ["%.9g" % x for x in stats.false_discovery_control(three, method="bh")])
