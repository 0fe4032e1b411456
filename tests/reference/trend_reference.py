"""Reference values for popgauge's trend statistics (plugins/builtin/src/stats/trend.rs).

Run once with general-purpose libraries; the printed values are frozen as test constants in
stats/trend.rs (compared within 1e-6). Versions used: Python 3.11, numpy 2.4.6, scipy 1.17.1,
pymannkendall 1.4.3.

    pip install numpy==2.4.6 scipy==1.17.1 pymannkendall==1.4.3
    python3 tests/reference/trend_reference.py

Data are an invented eight-year series, ten invented paired loci and one invented tied series.
"""
import itertools
import math

import numpy as np
import pymannkendall
import scipy
from scipy import stats

print(f"numpy {np.__version__}, scipy {scipy.__version__}, pymannkendall {pymannkendall.__version__}")


def mk_s(y):
    return sum(np.sign(y[j] - y[i]) for i in range(len(y)) for j in range(i + 1, len(y)))


# --- Mann–Kendall: exact upper tails P(S >= s) by enumerating all n! orders -------------
print("\n[Mann-Kendall] exact P(S >= s) by enumeration of permutations")
for n, targets in [(4, [6, 4]), (5, [10, 8]), (6, [15, 13, 11]), (8, [20, 16])]:
    counts = {}
    for perm in itertools.permutations(range(n)):
        s = int(mk_s(np.array(perm)))
        counts[s] = counts.get(s, 0) + 1
    total = math.factorial(n)
    for s in targets:
        tail = sum(c for k, c in counts.items() if k >= s) / total
        print(f"n={n} s={s}: P(S>=s) = {tail:.10f}")

# --- trend series 2010-2017 ----------------------------------------------------------------
print("\n[series] 0.62 0.60 0.61 0.57 0.58 0.55 0.56 0.53, years 2010-2017")
years = np.arange(2010, 2018, dtype=float)
y = np.array([0.62, 0.60, 0.61, 0.57, 0.58, 0.55, 0.56, 0.53])
r = pymannkendall.original_test(y)
print(f"pymannkendall.original_test: s={r.s} var_s={r.var_s:.10f} z={r.z:.10f} p={r.p:.10f} tau={r.Tau:.10f} sen={r.slope:.10f}")
kt = stats.kendalltau(years, y)  # no ties, n <= 33: exact p
print(f"scipy.stats.kendalltau: tau={kt.statistic:.10f} p(exact)={kt.pvalue:.10f}")
ts = stats.theilslopes(y, years, alpha=0.95)
print(f"scipy.stats.theilslopes: slope={ts.slope:.10f} low={ts.low_slope:.10f} high={ts.high_slope:.10f}")
lr = stats.linregress(years, y)
tq = stats.t.ppf(0.975, len(y) - 2)
print(f"scipy.stats.linregress: slope={lr.slope:.10f} se={lr.stderr:.10f} t={tq:.10f} "
      f"low={lr.slope - tq * lr.stderr:.10f} high={lr.slope + tq * lr.stderr:.10f}")

# --- A tied series: tie-corrected variance and tau-b ---------------------------------------------
print("\n[tied] y = 5 3 3 4 2 2 2 1 6 1 0 0, years 2001-2012")
years_t = np.arange(2001, 2013, dtype=float)
y_t = np.array([5, 3, 3, 4, 2, 2, 2, 1, 6, 1, 0, 0], dtype=float)
r = pymannkendall.original_test(y_t)
print(f"pymannkendall.original_test: s={r.s} var_s={r.var_s:.10f} z={r.z:.10f} p={r.p:.10f} sen={r.slope:.10f}")
kt = stats.kendalltau(years_t, y_t)  # tau-b
print(f"scipy.stats.kendalltau: tau_b={kt.statistic:.10f}")
ts = stats.theilslopes(y_t, years_t, alpha=0.95)
print(f"scipy.stats.theilslopes: slope={ts.slope:.10f} low={ts.low_slope:.10f} high={ts.high_slope:.10f}")
lr = stats.linregress(years_t, y_t)
tq = stats.t.ppf(0.975, len(y_t) - 2)
print(f"scipy.stats.linregress: slope={lr.slope:.10f} low={lr.slope - tq * lr.stderr:.10f} high={lr.slope + tq * lr.stderr:.10f}")

# --- Wilcoxon signed-rank over 10 loci -----------------------------------------------------
print("\n[paired] paired He over 10 loci")
t1 = np.array([.71, .65, .80, .55, .62, .77, .69, .58, .74, .66])
t2 = np.array([.68, .66, .74, .50, .60, .70, .69, .52, .71, .61])
d = np.round(t2 - t1, 10)  # round so that equal differences tie exactly
w = stats.wilcoxon(d, zero_method="wilcox", correction=True, method="approx")
print(f"scipy.stats.wilcoxon(approx, continuity, tie-corrected): statistic={w.statistic} p={w.pvalue:.10f}")
# Exact null of W+ for m = 9 non-zero differences, ignoring ties: enumerate 2^9 sign patterns.
m = 9
ws = [sum(r for r, s in zip(range(1, m + 1), signs) if s) for signs in itertools.product([0, 1], repeat=m)]
p_exact = min(1.0, 2 * sum(1 for x in ws if x <= 1) / 2**m)
print(f"enumeration, m=9, W+=1: exact two-sided p = {p_exact:.10f}")
# A tie-free pair for the exact branch.
a = np.array([1.83, 0.50, 1.62, 2.48, 1.68, 1.88, 1.55, 3.06, 1.30])
b = np.array([0.878, 0.647, 0.598, 2.05, 1.06, 1.29, 1.06, 3.16, 1.29])
w = stats.wilcoxon(a - b, method="exact")
print(f"scipy.stats.wilcoxon(exact) tie-free x-y: statistic={w.statistic} p={w.pvalue:.10f}")
