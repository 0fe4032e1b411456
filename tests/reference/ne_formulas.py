"""Independent reference values for the effective-size steps (ne-ld, ne-temporal, ne-hetx) and
stats/drift.rs, printed once and frozen as constants in the Rust unit tests.

Written directly from the formulas of docs/methods.md ("Expected heterozygosity", "LD-based
Ne", "Temporal Ne", "Heterozygote-excess Nb"), not from the Rust code: the
LD part computes Burrows' composite count n_AB = 2·n_AABB + n_AABb + n_AaBB + ½·n_AaBb and
Δ, D_A, D_B per allele pair from genotype counts (the Rust code uses dosage moments instead).

Libraries: Python 3.11, scipy 1.17.1 (scipy.stats.chi2 and t quantiles), numpy 2.4.6.
Run: python3 tests/reference/ne_formulas.py
"""
import math

from scipy.stats import chi2, t as student_t

# ---------------------------------------------------------------- Waples (2006) formulas


def expected_r2(s):
    return 1 / s + 3.19 / s**2 if s >= 30 else 0.0018 + 0.907 / s + 4.44 / s**2


def ne_from_drift(r2p, s, mating="random"):
    if r2p <= 0:
        return math.inf
    a, b = {("random", True): (1 / 3, 2.76), ("random", False): (0.308, 2.08),
            ("monogamy", True): (2 / 3, 7.2), ("monogamy", False): (0.618, 3.78)}[(mating, s >= 30)]
    return (a + math.sqrt(max(a * a - b * r2p, 0.0))) / (2 * r2p)


def ne_ld(r2, s, mating="random"):
    return ne_from_drift(r2 - expected_r2(s), s, mating)


def chi2_interval(value, df):
    return df * value / chi2.ppf(0.975, df), df * value / chi2.ppf(0.025, df)


def ne_interval(r2, s, df):
    low, high = chi2_interval(r2, df)
    return ne_ld(high, s), ne_ld(low, s)


print("== LD Ne formulas")
for s, r2, n in [(50, 0.030, 300), (50, 0.0215, 300), (20, 0.080, 150)]:
    print(f"S={s} r2={r2} n'={n}: E={expected_r2(s):.6f} r2'={r2 - expected_r2(s):.6f} "
          f"Ne={ne_ld(r2, s):.4f} CI={ne_interval(r2, s, n)}")
print("E at S=30 (large branch) and S=29.999 (small branch):", expected_r2(30), expected_r2(29.999999))
print("monogamy S=50 r2=0.03:", ne_ld(0.03, 50, "monogamy"), " S=20 r2=0.08:", ne_ld(0.08, 20, "monogamy"))
print("negative discriminant, r2'=0.05, S>=30:", ne_from_drift(0.05, 50))

print("== composite r")
A = [2, 2, 1, 1, 1, 0, 0, 1, 2, 0]
B = [2, 1, 1, 2, 0, 0, 1, 0, 2, 0]


def composite_r(gx, gy):
    """Burrows' composite r of allele 'A' (dose gx) and 'B' (dose gy) from genotype counts."""
    s = len(gx)
    pa = sum(gx) / (2 * s)
    pb = sum(gy) / (2 * s)
    n_ab = sum({(2, 2): 2, (2, 1): 1, (1, 2): 1, (1, 1): 0.5}.get((x, y), 0) for x, y in zip(gx, gy))
    delta = n_ab / s - 2 * pa * pb
    d_a = sum(1 for x in gx if x == 2) / s - pa * pa
    d_b = sum(1 for y in gy if y == 2) / s - pb * pb
    denominator = (pa * (1 - pa) + d_a) * (pb * (1 - pb) + d_b)
    if denominator <= 0:
        return None
    return delta / math.sqrt(denominator)


r = composite_r(A, B)
print(f"r={r:.6f} r2={r*r:.6f} Weir r2 = r2*(S/(S-1))^2 = {r*r*(10/9)**2:.6f}")

print("== LD estimator on the 24-individual, 6-locus example of ne_ld/tests.rs")
LOCI = ["L1", "L2", "L3", "L4", "L5", "L6"]
ROWS = [
    ["1/2", "A/A", "2/4", "x/x", "5/6", "./."], ["1/1", "A/B", "1/1", "x/y", "5/5", "a/b"],
    ["1/1", "A/A", "2/2", "./.", "5/6", "a/c"], ["2/2", "./.", "./.", "x/y", "./.", "./."],
    ["1/2", "A/A", "2/4", "x/x", "5/7", "a/c"], ["1/1", "A/B", "1/1", "x/x", "5/6", "a/a"],
    ["1/2", "A/A", "1/2", "x/y", "5/7", "a/b"], ["1/1", "A/A", "./.", "x/x", "5/6", "a/b"],
    ["1/1", "A/B", "2/2", "x/x", "5/5", "a/a"], ["1/1", "A/B", "1/2", "./.", "5/7", "a/a"],
    ["1/2", "A/A", "2/2", "x/x", "6/7", "a/a"], ["1/1", "A/A", "1/4", "9/x", "5/5", "a/b"],
    ["1/2", "A/A", "1/4", "x/x", "./.", "a/a"], ["1/1", "A/A", "1/2", "./.", "5/6", "a/a"],
    ["1/1", "./.", "2/2", "x/x", "5/6", "a/b"], ["1/1", "A/B", "1/2", "x/x", "5/6", "a/a"],
    ["1/1", "A/B", "1/2", "./.", "5/6", "./."], ["1/1", "A/B", "1/2", "x/x", "5/7", "a/c"],
    ["1/1", "A/B", "./.", "x/y", "5/6", "a/c"], ["1/1", "A/B", "2/9", "./.", "5/5", "a/c"],
    ["1/9", "A/B", "1/2", "x/x", "5/6", "9/a"], ["1/2", "A/A", "1/4", "x/x", "5/7", "a/a"],
    ["1/1", "A/B", "1/2", "x/x", "./.", "a/a"], ["./.", "A/A", "2/4", "x/x", "5/7", "a/a"],
]


def genotype(individual, locus):
    cell = ROWS[individual][locus]
    return None if cell == "./." else cell.split("/")


def retained_alleles(locus, individuals, criterion):
    counts = {}
    typed = [i for i in individuals if genotype(i, locus) is not None]
    for i in typed:
        for allele in genotype(i, locus):
            counts[allele] = counts.get(allele, 0) + 1
    copies = 2 * len(typed)
    if criterion == "singletons":
        kept = [a for a, c in counts.items() if c >= 2]
    else:
        kept = [a for a, c in counts.items() if c / copies >= criterion - 1e-12]
    return {a: counts[a] / copies for a in sorted(kept)}


def pair_r2(i, j, kept_i, kept_j, individuals):
    joint = [k for k in individuals if genotype(k, i) is not None and genotype(k, j) is not None]
    s = len(joint)
    if s < 2:
        return None
    num = den = 0.0
    for u, pu in kept_i.items():
        gx = [genotype(k, i).count(u) for k in joint]
        for v, pv in kept_j.items():
            gy = [genotype(k, j).count(v) for k in joint]
            r = composite_r(gx, gy)
            if r is None:
                continue
            num += pu * pv * (r * s / (s - 1)) ** 2
            den += pu * pv
    return (num / den, s) if den > 0 else None


def summarise(pairs):
    """pairs: list of (r2, S, n_ij) -> (r2bar, harmonic S, n')"""
    w = sum(n * s * s for _, s, n in pairs)
    r2 = sum(n * s * s * r for r, s, n in pairs) / w
    n_total = sum(n for _, _, n in pairs)
    s_h = n_total / sum(n / s for _, s, n in pairs)
    return r2, s_h, n_total


def ld_estimate(criterion, individuals=None):
    everyone = list(range(len(ROWS))) if individuals is None else list(range(individuals))
    kept = {l: retained_alleles(l, everyone, criterion) for l in range(len(LOCI))}
    panel = [l for l in range(len(LOCI)) if len(kept[l]) >= 2]
    pairs = {}
    for a in range(len(panel)):
        for b in range(a + 1, len(panel)):
            i, j = panel[a], panel[b]
            value = pair_r2(i, j, kept[i], kept[j], everyone)
            if value is not None:
                pairs[(i, j)] = (value[0], value[1], (len(kept[i]) - 1) * (len(kept[j]) - 1))
    r2, s_h, n_total = summarise(list(pairs.values()))
    # jackknife over loci
    loo = []
    for l in panel:
        rest = [v for (i, j), v in pairs.items() if l not in (i, j)]
        if len(rest) < len(pairs):
            loo.append(summarise(rest)[0])
    m = sum(loo) / len(loo)
    v_loci = (len(loo) - 1) / len(loo) * sum((x - m) ** 2 for x in loo)
    # delete-one-individual jackknife of the drift signal (retained alleles and weights fixed)
    drift = []
    for out in everyone:
        rest = [k for k in everyone if k != out]
        values = []
        for (i, j), (_, _, n) in pairs.items():
            value = pair_r2(i, j, kept[i], kept[j], rest)
            if value is not None:
                values.append((value[0], value[1], n))
        rr, ss, _ = summarise(values)
        drift.append(rr - expected_r2(ss))
    m = sum(drift) / len(drift)
    v_ind = (len(drift) - 1) / len(drift) * sum((x - m) ** 2 for x in drift)
    df_jack = min(2 * r2 * r2 / v_loci, n_total)
    df_res = min(2 * r2 * r2 / max(v_loci, v_ind), n_total)
    return dict(loci=len(panel), pairs=len(pairs), s=s_h, comparisons=n_total, r2=r2, r2_sample=expected_r2(s_h),
                ne=ne_ld(r2, s_h), param=ne_interval(r2, s_h, n_total), jack_df=df_jack,
                jack=ne_interval(r2, s_h, df_jack), resample_df=df_res, resample=ne_interval(r2, s_h, df_res))


for criterion in [0.15, 0.05, 0.0, "singletons"]:
    print(criterion, {k: (round(v, 9) if isinstance(v, float) else v) for k, v in ld_estimate(criterion).items()})
print("first 16 individuals only (16 jackknife groups of one individual: delete-one, order-free)")
for criterion in [0.05, 0.0]:
    print(criterion, {k: (round(v, 9) if isinstance(v, float) else v) for k, v in ld_estimate(criterion, 16).items()})

print("== temporal")
X = [[.5, .3, .2], [.6, .4], [.25, .25, .25, .25]]
Y = [[.4, .35, .25], [.7, .3], [.3, .2, .35, .15]]
S0 = St = 50
T = 4
fc_num = fc_den = fk_num = fk_den = 0.0
ft_num = ft_den = 0.0
for xs, ys in zip(X, Y):
    k = len(xs)
    fc_l = sum((x - y) ** 2 / ((x + y) / 2 - x * y) for x, y in zip(xs, ys)) / k
    fk_l = sum((x - y) ** 2 / ((x + y) / 2) for x, y in zip(xs, ys)) / (k - 1)
    fc_num += k * fc_l
    fc_den += k
    fk_num += (k - 1) * fk_l
    fk_den += k - 1
    ft_num += sum((x - y) ** 2 for x, y in zip(xs, ys))
    ft_den += sum((x + y) / 2 * (1 - (x + y) / 2) for x, y in zip(xs, ys))
fc, fk, ftilde = fc_num / fc_den, fk_num / fk_den, ft_num / ft_den
n_h = 2 / (1 / S0 + 1 / St)
fs = (ftilde * (1 - 1 / (4 * n_h)) - 1 / n_h) / ((1 + ftilde / 4) * (1 - 1 / (2 * St)))


def ne_temporal(f, plan_n=None):
    corrected = f - 1 / (2 * S0) - 1 / (2 * St) + (1 / plan_n if plan_n else 0)
    return math.inf if corrected <= 0 else T / (2 * corrected)


print(f"Fc={fc:.6f} Fk={fk:.6f} Ftilde={ftilde:.6f} Fs={fs:.6f}")
print(f"Ne plan II: Fc {ne_temporal(fc):.4f} Fk {ne_temporal(fk):.4f} Fs {T / (2 * fs):.4f}")
df = fc_den - len(X)
low, high = chi2_interval(fc, df)
print(f"n'={df} Fc CI=({low:.6f}, {high:.6f}) Ne CI=({ne_temporal(high):.4f}, {ne_temporal(low)})")
low, high = chi2_interval(fk, df)
print(f"Fk CI=({low:.6f}, {high:.6f}) Ne CI=({ne_temporal(high):.4f}, {ne_temporal(low)})")
N = 500
fs1 = (ftilde * (1 - 1 / (4 * n_h) + 1 / (4 * N)) - 1 / n_h + 1 / N) / ((1 + ftilde / 4) * (1 - 1 / (2 * St)))
print(f"plan I, N={N}: Ne(Fc)={ne_temporal(fc, N):.4f} Ne(Fk)={ne_temporal(fk, N):.4f} Fs'={fs1:.6f} Ne(Fs')={T/(2*fs1):.4f}")
# jackknife over the three loci of Fs (plan II), t interval on L-1 = 2 df
def fs_of(loci):
    num = sum(sum((x - y) ** 2 for x, y in zip(X[l], Y[l])) for l in loci)
    den = sum(sum((x + y) / 2 * (1 - (x + y) / 2) for x, y in zip(X[l], Y[l])) for l in loci)
    f = num / den
    return (f * (1 - 1 / (4 * n_h)) - 1 / n_h) / ((1 + f / 4) * (1 - 1 / (2 * St)))
loo = [fs_of([m for m in range(3) if m != l]) for l in range(3)]
mean = sum(loo) / 3
se = math.sqrt(2 / 3 * sum((v - mean) ** 2 for v in loo))
tq = student_t.ppf(0.975, 2)
lo, hi = fs - tq * se, fs + tq * se
print(f"Fs jackknife: loo={loo} se={se:.6f} t={tq:.6f} Fs CI=({lo:.6f}, {hi:.6f}) "
      f"Ne CI=({T/(2*hi):.4f}, {T/(2*lo) if lo > 0 else math.inf})")

print("== heterozygote excess, Wright")
for d in (0.05, 0.01):
    print(f"D={d}: Nb={1 / (2 * d) + 1 / (2 * (d + 1)):.6f}")
print(f"Wright: Ne=50, t=10: H_t/H_0={(1 - 1 / 100) ** 10:.6f}")
print("quantiles:", chi2.ppf(0.975, 300), chi2.ppf(0.025, 300), chi2.ppf(0.975, 6), chi2.ppf(0.025, 6),
      chi2.ppf(0.975, 2e5), chi2.ppf(0.025, 2e5), student_t.ppf(0.975, 9))

print("== ne-hetx constructed cohort (ne_hetx.rs tests)")
COHORT = {
    "L1": ["A/B"] * 6 + ["A/A"] * 2 + ["B/B"] * 2,
    "L2": ["A/B"] * 5 + ["A/A"] * 3 + ["B/B"] * 2,
    "L3": ["A/B"] * 4 + ["A/C"] * 2 + ["B/C"] * 2 + ["A/A", "C/C"],
    "L4": ["Z/Z"] * 10,
}
excess = []
for name, cells in COHORT.items():
    n = len(cells)
    alleles = [a for c in cells for a in c.split("/")]
    he = 2 * n / (2 * n - 1) * (1 - sum((alleles.count(a) / (2 * n)) ** 2 for a in set(alleles)))
    ho = sum(1 for c in cells if c.split("/")[0] != c.split("/")[1]) / n
    if he > 0:
        excess.append((ho - he) / he)
        print(f"{name}: Ho={ho:.6f} He={he:.6f} D={(ho - he) / he:.6f}")
d = sum(excess) / len(excess)
nb = 1 / (2 * d) + 1 / (2 * (d + 1))
L = len(excess)
se = (sum((x - d) ** 2 for x in excess) / (L - 1) / L) ** 0.5
tq = student_t.ppf(0.975, L - 1)
lo, hi = d - tq * se, d + tq * se
nb_of = lambda x: math.inf if x <= 0 else 1 / (2 * x) + 1 / (2 * (x + 1))
print(f"Dbar={d:.6f} Nb={nb:.6f} SE={se:.6f} t={tq:.6f} D CI=({lo:.6f}, {hi:.6f}) Nb CI=({nb_of(hi):.6f}, {nb_of(lo)})")
