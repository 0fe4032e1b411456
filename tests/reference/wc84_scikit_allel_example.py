"""Reference values for the Weir & Cockerham (1984) variance components and FIS.

Library: scikit-allel (version printed below; 1.3.13 when the test constants were frozen),
numpy. Run: python3 tests/reference/wc84_scikit_allel_example.py

1. The documentation example of allel.weir_cockerham_fst (five variants, four samples in
   subpopulations [[0,1],[2,3]]): per-allele a, b, c from scikit-allel, and the overall
   theta, F = 1 - sum c / sum(a+b+c) and f = 1 - sum c / sum(b+c) (ratio of sums).
   Frozen in plugins/builtin/src/stats/weir_cockerham.rs.
2. The r = 1 case (one group): f = 1 - sum Ho / sum He* with the Nei-Chesser He*, computed
   here in pure Python, for the heterozygosity documentation example (variant 2: 0.5) and
   for the same five variants with all four samples in one group.
"""
import allel
import numpy as np

print("scikit-allel", allel.__version__, "numpy", np.__version__)

g = allel.GenotypeArray([
    [[0, 0], [0, 0], [1, 1], [1, 1]],
    [[0, 1], [0, 1], [0, 1], [0, 1]],
    [[0, 0], [0, 0], [0, 0], [0, 0]],
    [[0, 1], [1, 2], [1, 1], [2, 2]],
    [[0, 0], [1, 1], [0, 1], [-1, -1]],
])
a, b, c = allel.weir_cockerham_fst(g, subpops=[[0, 1], [2, 3]], max_allele=2)
np.set_printoptions(precision=8, suppress=True)
print("a =", a.tolist())
print("b =", b.tolist())
print("c =", c.tolist())
A, B, C = np.nansum(a), np.nansum(b), np.nansum(c)
print("overall theta = %.10g" % (A / (A + B + C)))
print("overall F (FIT) = %.8f" % (1 - C / (A + B + C)))
print("overall f (FIS) = %.8f" % (1 - C / (B + C)))


def one_group_components(genotypes):
    """(sum over alleles of b + c, sum of c) for one group, r = 1 (pure Python)."""
    typed = [gt for gt in genotypes if gt[0] >= 0 and gt[1] >= 0]
    n = len(typed)
    alleles = sorted({x for gt in typed for x in gt})
    ho = sum(1 for x, y in typed if x != y) / n
    sum_p2 = sum((sum(gt.count(u) for gt in typed) / (2 * n)) ** 2 for u in alleles)
    he_star = n / (n - 1) * (1 - sum_p2 - ho / (2 * n))
    return he_star, ho


v2 = [(0, 0), (0, 1), (1, 1)]
he_star, ho = one_group_components(v2)
print("heterozygosity example variant 2: He* = %.6f Ho = %.6f f = %.6f" % (he_star, ho, 1 - ho / he_star))

sums = [0.0, 0.0]
for variant in g.tolist():
    gts = [tuple(x) for x in variant]
    typed = [gt for gt in gts if gt[0] >= 0]
    if len({x for gt in typed for x in gt}) < 2:
        continue
    he_star, ho = one_group_components(gts)
    print("  one group, variant:", gts, "He* = %.6f Ho = %.6f" % (he_star, ho))
    sums[0] += he_star
    sums[1] += ho
print("five variants as one group: f = 1 - sum Ho / sum He* = %.8f" % (1 - sums[1] / sums[0]))
